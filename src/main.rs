//! The `stackup-lint` command line: parse arguments, call the library, map
//! the result to an exit code (0 clean, 1 findings, 2 bad input or usage).

use std::io::{IsTerminal, Write};
use std::path::PathBuf;
use std::process::ExitCode;

use clap::{Args, Parser, Subcommand, ValueEnum};

use stackup_lint::analysis::AnalysisOptions;
use stackup_lint::baseline::Baseline;

/// A warm run is mostly small allocations on two or more threads (YAML
/// trees, findings, report text); mimalloc serves them with less work than
/// the C library's allocator (measured in bench/RESULTS.md).
#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;
use stackup_lint::engine::{self, CheckOptions};
use stackup_lint::finding::Severity;
use stackup_lint::input::yaml::YamlLimits;
use stackup_lint::load::InputLimits;
use stackup_lint::output::{self, concise, github, gitlab, human, json, sarif, Summary};
use stackup_lint::pool::Pool;
use stackup_lint::rules;
use stackup_lint::walk::WalkOptions;

#[derive(Parser)]
#[command(
    name = "stackup-lint",
    version,
    about = "Check PCB layer stackups and impedance-controlled net classes kept as YAML",
    long_about = "Check PCB layer stackups and impedance-controlled net classes kept as YAML.\n\n\
Reads *.stackup.yaml files (layers top to bottom, materials, copper foils, net classes), \
validates them, computes what the stackup really does electrically and reports where the \
stated design assumptions are wrong, pointing at the YAML line.\n\n\
Results are an engineering aid: confirm final stackups with your fabricator's impedance \
modelling and test coupons, and follow the applicable IPC standards."
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

/// Where the commands that read stackups may read, and their solve cache
/// (`check`, `baseline write`, `impedance`, `coupons`, `report`).
#[derive(Args)]
struct InputArgs {
    /// Do not read or write the on-disk cache of field-solver results
    #[arg(long)]
    no_cache: bool,
    /// Project root: every file read (stackups, libraries) must lie inside
    /// it, links followed [default: each file's enclosing git work tree]
    #[arg(long, value_name = "DIR")]
    root: Option<PathBuf>,
}

impl InputArgs {
    /// The project root and what every solve starts from: the disk cache
    /// (if any) with the default mesh budget and threads.
    fn split(self) -> (Option<PathBuf>, AnalysisOptions) {
        let run = AnalysisOptions {
            cache: stackup_lint::analysis::cache::from_env(self.no_cache),
            ..AnalysisOptions::default()
        };
        (self.root, run)
    }
}

#[derive(Clone, Copy, ValueEnum)]
enum FailOn {
    Error,
    Warning,
    Note,
}

/// `check`'s output formats.
#[derive(Clone, Copy, ValueEnum)]
enum CheckFormat {
    /// Diagnostics with source excerpts (default).
    Human,
    /// One line per finding: `path:line:col: severity rule-name message`.
    Concise,
    /// The stable JSON report (see README).
    Json,
    /// GitHub Actions annotations (workflow commands).
    Github,
    /// GitLab code quality report (JSON).
    Gitlab,
}

/// The output formats of the commands that print numbers (`impedance`,
/// `coupons`).
#[derive(Clone, Copy, ValueEnum)]
enum TableFormat {
    /// Tables for reading (default).
    Human,
    /// The same numbers as JSON.
    Json,
}

#[derive(Clone, Copy, ValueEnum)]
enum Color {
    Auto,
    Always,
    Never,
}

#[derive(Subcommand)]
enum Command {
    /// Lint stackup files (directories are searched for *.stackup.yaml)
    Check {
        /// Files or directories to check [default: .]
        paths: Vec<PathBuf>,
        #[command(flatten)]
        walk: WalkArgs,
        /// Lowest severity that makes the run fail (exit code 1)
        #[arg(long, value_enum, default_value = "error")]
        fail_on: FailOn,
        /// Output format on standard output
        #[arg(long, value_enum, default_value = "human")]
        format: CheckFormat,
        /// Also write a SARIF 2.1.0 log for code review tools to this path
        #[arg(long, value_name = "PATH")]
        sarif: Option<PathBuf>,
        /// Colour in terminal output
        #[arg(long, value_enum, default_value = "auto")]
        color: Color,
        /// Largest input file accepted, in bytes
        #[arg(long, default_value_t = 4 * 1024 * 1024, value_name = "BYTES")]
        max_file_size: u64,
        /// Deepest YAML nesting accepted
        #[arg(long, default_value_t = 64, value_name = "LEVELS")]
        max_yaml_depth: usize,
        /// Most YAML nodes a file may expand to (aliases included)
        #[arg(long, default_value_t = 200_000, value_name = "NODES")]
        max_yaml_nodes: usize,
        /// Most bytes of text a file's YAML may expand to (aliases included)
        #[arg(long, default_value_t = stackup_lint::input::yaml::DEFAULT_MAX_YAML_BYTES, value_name = "BYTES")]
        max_yaml_bytes: usize,
        /// Exit 0 instead of 2 when the paths hold no stackup file
        #[arg(long)]
        allow_empty: bool,
        #[command(flatten)]
        solve: SolveArgs,
        /// Base address of the rule pages linked from SARIF
        #[arg(long, default_value = sarif::DEFAULT_DOCS_URL, value_name = "URL")]
        rule_docs_url: String,
        /// Findings recorded in this baseline file (`baseline write`) are
        /// shown as baselined and do not fail the run
        #[arg(long, value_name = "FILE")]
        baseline: Option<PathBuf>,
        #[command(flatten)]
        input: InputArgs,
    },
    /// Record today's findings so that `check --baseline` fails only on new ones
    Baseline {
        #[command(subcommand)]
        action: BaselineAction,
    },
    /// Print a rule's page: what it checks, the physics, how to fix it
    Explain {
        /// Rule name, as `check` prints it above each finding (and after the
        /// severity in `--format concise`)
        rule: String,
    },
    /// List every rule with its default severity
    Rules,
    /// Print, per net class, the field-solved impedance, effective Dk, delay
    /// and loss with smooth and with rough copper
    Impedance {
        /// Stackup files or directories
        paths: Vec<PathBuf>,
        /// Output format
        #[arg(long, value_enum, default_value = "human")]
        format: TableFormat,
        /// Also give the total loss over this routed length, e.g. "150 mm"
        #[arg(long, value_name = "LENGTH")]
        length: Option<String>,
        /// Print each class's numbers across frequency instead, e.g.
        /// "1GHz..110GHz" or "1GHz..110GHz:201" (points; default 101)
        #[arg(long, value_name = "RANGE")]
        sweep: Option<String>,
        /// With --sweep: also write the sweep as CSV to this file
        #[arg(long, value_name = "FILE", requires = "sweep")]
        csv: Option<PathBuf>,
        /// With --sweep and --length: write a Touchstone two-port of that
        /// length of each class's line into this directory
        #[arg(long, value_name = "DIR", requires_all = ["sweep", "length"])]
        touchstone: Option<PathBuf>,
        #[command(flatten)]
        solve: SolveArgs,
        #[command(flatten)]
        input: InputArgs,
    },
    /// Apply the fixes that need no judgement (a solved width, a modelled
    /// Dk to record, matched-group lengths) to the YAML at their values,
    /// leaving everything else as written
    Fix {
        /// Files or directories to fix [default: .]
        paths: Vec<PathBuf>,
        #[command(flatten)]
        walk: WalkArgs,
        /// Print the changes as a unified diff and write nothing
        #[arg(long)]
        dry_run: bool,
        /// Apply only this rule's fixes (repeatable)
        #[arg(long = "rule", value_name = "NAME")]
        rules: Vec<String>,
        #[command(flatten)]
        solve: SolveArgs,
        #[command(flatten)]
        input: InputArgs,
    },
    /// Serve the Language Server Protocol on standard input and output:
    /// findings while typing, hover, completion, go to definition and
    /// quick fixes (see the README for editor set-up)
    Lsp {
        /// Base address of the rule pages linked from diagnostics
        #[arg(long, default_value = sarif::DEFAULT_DOCS_URL, value_name = "URL")]
        rule_docs_url: String,
        #[command(flatten)]
        solve: SolveArgs,
        #[command(flatten)]
        input: InputArgs,
    },
    /// Hold each measured test coupon (`coupons:`) against the stackup's
    /// model of its structure: effective Dk and loss across frequency, the
    /// range the data are valid over, the Dk they imply
    Coupons {
        /// Stackup files or directories
        paths: Vec<PathBuf>,
        /// Output format
        #[arg(long, value_enum, default_value = "human")]
        format: TableFormat,
        #[command(flatten)]
        solve: SolveArgs,
        #[command(flatten)]
        input: InputArgs,
    },
    /// Write the fabrication-note report of one stackup: a self-contained
    /// HTML page, a Markdown file and the SVG drawings it links to
    Report {
        /// The stackup file
        file: PathBuf,
        /// Directory to write into (created if missing)
        #[arg(short, long, value_name = "DIR")]
        output: PathBuf,
        /// Draw the cross-section with heights to scale (default:
        /// exaggerated for reading; the HTML page has a switch)
        #[arg(long)]
        to_scale: bool,
        /// Also give the total loss over this routed length, e.g. "150 mm"
        #[arg(long, value_name = "LENGTH")]
        length: Option<String>,
        #[command(flatten)]
        solve: SolveArgs,
        #[command(flatten)]
        input: InputArgs,
    },
}

/// How field solves run (`check`, `impedance`, `report`).
#[derive(Args)]
struct SolveArgs {
    /// Threads for field solves (0 = one per core); output does not depend on it
    #[arg(long, default_value_t = 0, value_name = "N")]
    threads: usize,
    /// Largest field-solver mesh (nodes of one grid); bigger sections are reported, not solved
    #[arg(long, default_value_t = stackup_lint::analysis::DEFAULT_MAX_MESH_NODES, value_name = "NODES")]
    max_mesh_nodes: usize,
}

impl SolveArgs {
    fn options(self, run: AnalysisOptions) -> AnalysisOptions {
        AnalysisOptions {
            max_mesh_nodes: self.max_mesh_nodes,
            pool: Pool::new(clamp_threads(self.threads)),
            ..run
        }
    }
}

/// Which files a directory walk picks.
#[derive(Args)]
struct WalkArgs {
    /// File-name suffix that marks a stackup file when walking directories
    #[arg(long, default_value = ".stackup.yaml")]
    suffix: String,
    /// Only check files matching this glob (repeatable)
    #[arg(long, value_name = "GLOB")]
    include: Vec<String>,
    /// Skip files matching this glob (repeatable)
    #[arg(long, value_name = "GLOB")]
    exclude: Vec<String>,
}

impl WalkArgs {
    fn options(self) -> WalkOptions {
        WalkOptions {
            suffix: self.suffix,
            include: self.include,
            exclude: self.exclude,
            ..WalkOptions::default()
        }
    }
}

#[derive(Subcommand)]
enum BaselineAction {
    /// Check the stackups and write their findings to a baseline file
    Write {
        /// Files or directories to check [default: .]
        paths: Vec<PathBuf>,
        /// The baseline file to write
        #[arg(short, long, value_name = "FILE")]
        output: PathBuf,
        #[command(flatten)]
        walk: WalkArgs,
        #[command(flatten)]
        input: InputArgs,
    },
}

/// Most solver threads accepted per available core; more only costs
/// memory and scheduling.
const THREADS_PER_CORE: usize = 4;

/// `--threads`, clamped to a sane maximum (said on standard error).
fn clamp_threads(n: usize) -> usize {
    let cores = std::thread::available_parallelism().map_or(1, |c| c.get());
    let max = (cores * THREADS_PER_CORE).max(THREADS_PER_CORE);
    if n > max {
        eprintln!(
            "note: --threads {n} is more than this machine can use; using {max} ({THREADS_PER_CORE} per core)"
        );
        max
    } else {
        n
    }
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    match cli.command {
        Command::Baseline {
            action:
                BaselineAction::Write {
                    paths,
                    output,
                    walk,
                    input,
                },
        } => {
            let (root, run) = input.split();
            baseline_write(paths, &output, walk.options(), root, run)
        }
        Command::Impedance {
            paths,
            format,
            length,
            sweep,
            csv,
            touchstone,
            solve,
            input,
        } => {
            let (root, run) = input.split();
            let run = solve.options(run);
            let length = match parse_length(length.as_deref()) {
                Ok(l) => l,
                Err(code) => return code,
            };
            let sweep = match sweep
                .as_deref()
                .map(stackup_lint::analysis::sweep::parse_sweep)
            {
                None => None,
                Some(Ok(f)) => Some(SweepArgs {
                    freqs: f,
                    csv,
                    touchstone,
                }),
                Some(Err(e)) => {
                    eprintln!("error: --sweep: {e}");
                    return ExitCode::from(2);
                }
            };
            impedance(paths, format, length, sweep, root, run)
        }
        Command::Coupons {
            paths,
            format,
            solve,
            input,
        } => {
            let (root, run) = input.split();
            coupons(paths, format, root, solve.options(run))
        }
        Command::Report {
            file,
            output,
            to_scale,
            length,
            solve,
            input,
        } => {
            let (root, run) = input.split();
            let run = solve.options(run);
            let length = match parse_length(length.as_deref()) {
                Ok(l) => l,
                Err(code) => return code,
            };
            report(
                &file,
                &output,
                output::report::ReportOptions { to_scale, length },
                root,
                run,
            )
        }
        Command::Fix {
            paths,
            walk,
            dry_run,
            rules: only,
            solve,
            input,
        } => {
            let (root, run) = input.split();
            fix_command(
                paths,
                walk.options(),
                root,
                solve.options(run),
                dry_run,
                &only,
            )
        }
        Command::Lsp {
            rule_docs_url,
            solve,
            input,
        } => {
            let (root, run) = input.split();
            let opts = stackup_lint::lsp::ServerOptions {
                analysis: solve.options(run),
                root,
                limits: InputLimits::default(),
                docs_url: rule_docs_url,
            };
            match stackup_lint::lsp::run(opts) {
                Ok(()) => ExitCode::SUCCESS,
                Err(e) => {
                    eprintln!("error: language server: {}", output::escape::controls(&e));
                    ExitCode::from(1)
                }
            }
        }
        Command::Rules => {
            let mut out = String::new();
            for m in rules::all_meta() {
                out.push_str(&format!(
                    "{:<28} {:<8} {}\n",
                    m.name,
                    m.default_severity.as_str(),
                    m.summary
                ));
            }
            print_or(&out, ExitCode::SUCCESS)
        }
        Command::Explain { rule } => match rules::find_meta(&rule) {
            Some(m) => print_or(m.doc, ExitCode::SUCCESS),
            None => {
                let names: Vec<_> = rules::all_meta().iter().map(|m| m.name).collect();
                let help = stackup_lint::suggest::help_for(&rule, names.clone(), || {
                    format!("rules: {}", names.join(", "))
                });
                eprintln!(
                    "error: there is no rule named `{}`; {help}",
                    output::escape::controls(&rule),
                );
                ExitCode::from(2)
            }
        },
        Command::Check {
            paths,
            walk,
            fail_on,
            format,
            sarif: sarif_path,
            color,
            max_file_size,
            max_yaml_depth,
            max_yaml_nodes,
            max_yaml_bytes,
            allow_empty,
            rule_docs_url,
            baseline,
            solve,
            input,
        } => {
            let (root, run) = input.split();
            let run = solve.options(run);
            let baseline = match baseline.as_deref().map(Baseline::read) {
                None => None,
                Some(Ok(b)) => Some(b),
                Some(Err(e)) => {
                    eprintln!("error: {e}");
                    return ExitCode::from(2);
                }
            };
            let (paths, base) = paths_and_base(paths);
            let opts = CheckOptions {
                walk: walk.options(),
                limits: InputLimits {
                    max_file_bytes: max_file_size,
                    yaml: YamlLimits {
                        max_depth: max_yaml_depth,
                        max_nodes: max_yaml_nodes,
                        max_bytes: max_yaml_bytes,
                    },
                },
                root,
                analysis: run,
            };
            let mut outcome = match engine::check_paths(&paths, &base, &opts) {
                Ok(o) => o,
                Err(e) => {
                    eprintln!("error: {e}");
                    return ExitCode::from(2);
                }
            };
            let empty = outcome.files == 0 && !outcome.has_input_errors();
            if let Some(b) = &baseline {
                b.apply(&mut outcome);
            }
            if let Some(path) = &sarif_path {
                let log = sarif::render(
                    &outcome.findings,
                    &outcome.db,
                    &rules::all_meta(),
                    &rule_docs_url,
                );
                let inputs = stackup_lint::files::input_paths(&outcome.db);
                let log = output::escape::json_text(&log);
                if let Err(e) = stackup_lint::files::write_output(path, log.as_bytes(), &inputs) {
                    eprintln!(
                        "error: cannot write the SARIF log to {}: {e}",
                        output::escape::controls(&path.to_string_lossy())
                    );
                    return ExitCode::from(2);
                }
            }
            let summary = Summary::of(&outcome.findings, outcome.files);
            let text = match format {
                CheckFormat::Json => output::escape::json_text(&json::render(
                    &outcome.findings,
                    &outcome.db,
                    outcome.files,
                ))
                .into_owned(),
                CheckFormat::Github => github::render(&outcome.findings, &outcome.db),
                CheckFormat::Concise => {
                    let mut text = concise::render(&outcome.findings, &outcome.db);
                    text.push_str(&summary.line_with(&outcome.skipped));
                    text.push('\n');
                    text
                }
                CheckFormat::Gitlab => {
                    output::escape::json_text(&gitlab::render(&outcome.findings, &outcome.db))
                        .into_owned()
                }
                CheckFormat::Human => {
                    let use_color = match color {
                        Color::Always => true,
                        Color::Never => false,
                        Color::Auto => {
                            std::io::stdout().is_terminal()
                                && std::env::var_os("NO_COLOR").is_none()
                        }
                    };
                    let width = 100;
                    let mut text = human::render(
                        &outcome.findings,
                        &outcome.db,
                        human::HumanOptions {
                            color: use_color,
                            width,
                            pool: opts.analysis.pool,
                        },
                    );
                    text.push_str(&summary.line_with(&outcome.skipped));
                    text.push('\n');
                    text
                }
            };
            if let Err(code) = print(&text) {
                return code;
            }
            if !matches!(format, CheckFormat::Human | CheckFormat::Concise) {
                if let Some(p) = outcome.skipped.phrase() {
                    eprintln!("note: {p}");
                }
            }
            if outcome.has_input_errors() {
                return ExitCode::from(2);
            }
            if empty && !allow_empty {
                eprintln!(
                    "warning: no stackup file found (files ending in {} and .yml); pass --allow-empty if that is expected",
                    opts.walk.suffix
                );
                return ExitCode::from(2);
            }
            let threshold = match fail_on {
                FailOn::Error => Severity::Error,
                FailOn::Warning => Severity::Warning,
                FailOn::Note => Severity::Note,
            };
            let failing = outcome.findings.iter().any(|f| {
                f.suppressed.is_none() && f.baselined != Some(true) && f.severity >= threshold
            });
            if failing {
                ExitCode::from(1)
            } else {
                ExitCode::SUCCESS
            }
        }
    }
}

/// `fix`: check, plan the edits the findings carry, then print them as a
/// diff (`--dry-run`) or write them. Exit 0 when done or nothing to fix,
/// 1 when the plan is refused (nothing written), 2 on input errors.
fn fix_command(
    paths: Vec<PathBuf>,
    walk: WalkOptions,
    root: Option<PathBuf>,
    run: AnalysisOptions,
    dry_run: bool,
    only: &[String],
) -> ExitCode {
    if let Some(bad) = only.iter().find(|r| rules::find_meta(r).is_none()) {
        let names: Vec<_> = rules::all_meta().iter().map(|m| m.name).collect();
        let help = stackup_lint::suggest::help_for(bad, names, || {
            "`stackup-lint rules` lists them".to_string()
        });
        eprintln!(
            "error: no rule named `{}`; {help}",
            output::escape::controls(bad)
        );
        return ExitCode::from(2);
    }
    let outcome = match check_for_writing(
        paths,
        walk,
        root,
        run,
        "the input has errors; fix them first (nothing was changed)",
    ) {
        Ok(o) => o,
        Err(code) => return code,
    };
    let plan = match stackup_lint::fix::plan(&outcome.findings, &outcome.db, only) {
        Ok(p) => p,
        Err(why) => {
            for w in why {
                eprintln!("refused: {}", output::escape::controls(&w));
            }
            eprintln!("nothing was changed");
            return ExitCode::from(1);
        }
    };
    let left = outcome
        .findings
        .iter()
        .filter(|f| f.suppressed.is_none() && f.fix.is_none())
        .count();
    let mut text = String::new();
    if dry_run {
        text.push_str(&plan.diff());
    }
    for c in &plan.changes {
        for a in &c.applied {
            text.push_str(&format!(
                "{}:{}:{}: {}: {}\n",
                c.display, a.line, a.column, a.rule, a.description
            ));
        }
    }
    let verb = if dry_run { "would apply" } else { "applied" };
    text.push_str(&format!(
        "{verb} {} fix{} in {} file{}; {left} finding{} need{} a judgement and {} left as help (`stackup-lint check` shows {})\n",
        plan.fixes(),
        if plan.fixes() == 1 { "" } else { "es" },
        plan.changes.len(),
        if plan.changes.len() == 1 { "" } else { "s" },
        if left == 1 { "" } else { "s" },
        if left == 1 { "s" } else { "" },
        if left == 1 { "is" } else { "are" },
        if left == 1 { "it" } else { "them" },
    ));
    if !dry_run {
        if let Err(e) = stackup_lint::fix::write(&plan, InputLimits::default().max_file_bytes) {
            eprintln!("refused: {}", output::escape::controls(&e));
            return ExitCode::from(1);
        }
    }
    let text = output::escape::controls_keep_lines(&text);
    match print(&text) {
        Ok(()) => ExitCode::SUCCESS,
        Err(code) => code,
    }
}

/// What `impedance --sweep` asks for.
struct SweepArgs {
    freqs: Vec<f64>,
    csv: Option<PathBuf>,
    touchstone: Option<PathBuf>,
}

/// Load and analyse the stackups of `paths` for the commands that print
/// numbers (`impedance`, `coupons`): input errors are printed and end the
/// run with code 2.
fn load_analysed(
    paths: Vec<PathBuf>,
    root: Option<PathBuf>,
    run: AnalysisOptions,
) -> Result<
    (
        stackup_lint::load::Loaded,
        Vec<stackup_lint::analysis::Analysis>,
    ),
    ExitCode,
> {
    let (paths, base) = paths_and_base(paths);
    let opts = CheckOptions {
        root,
        analysis: run,
        ..CheckOptions::default()
    };
    let (loaded, files, _) = match engine::load_paths(&paths, &base, &opts) {
        Ok(x) => x,
        Err(e) => {
            eprintln!("error: {e}");
            return Err(ExitCode::from(2));
        }
    };
    if !loaded.problems.is_empty() {
        let mut outcome = engine::CheckOutcome {
            findings: loaded.problems,
            db: loaded.db,
            files,
            ..engine::CheckOutcome::default()
        };
        engine::sort_findings(&mut outcome.findings, &outcome.db);
        engine::escape_outcome(&mut outcome);
        let text = human::render(
            &outcome.findings,
            &outcome.db,
            human::HumanOptions {
                color: false,
                width: 100,
                pool: opts.analysis.pool,
            },
        );
        let _ = print(&text);
        eprintln!("error: the stackups have input errors; no numbers printed");
        return Err(ExitCode::from(2));
    }
    if loaded.stackups.is_empty() {
        eprintln!("error: no stackup file found in the paths given");
        return Err(ExitCode::from(2));
    }
    let analyses: Vec<_> = loaded
        .stackups
        .iter()
        .map(|s| stackup_lint::analysis::analyze(s, &opts.analysis))
        .collect();
    Ok((loaded, analyses))
}

fn impedance(
    paths: Vec<PathBuf>,
    format: TableFormat,
    length: Option<f64>,
    sweep: Option<SweepArgs>,
    root: Option<PathBuf>,
    run: AnalysisOptions,
) -> ExitCode {
    let (loaded, analyses) = match load_analysed(paths, root, run) {
        Ok(x) => x,
        Err(code) => return code,
    };
    let items: Vec<(
        &str,
        &stackup_lint::model::Stackup,
        &stackup_lint::analysis::Analysis,
    )> = loaded
        .stackups
        .iter()
        .zip(&analyses)
        .map(|(s, a)| (loaded.db.get(s.file).display.as_str(), s, a))
        .collect();
    if let Some(sw) = sweep {
        return impedance_sweep(&items, &sw, format, length, &loaded.db);
    }
    // Names come from the stackups: nothing raw reaches the terminal.
    let text = match format {
        TableFormat::Json => {
            output::escape::json_text(&output::impedance::json(&items, length)).into_owned()
        }
        _ => {
            let text: Vec<String> = items
                .iter()
                .map(|(n, s, a)| output::impedance::table(n, s, a, length))
                .collect();
            output::escape::controls_keep_lines(&text.join("\n")).into_owned()
        }
    };
    print_or(&text, ExitCode::SUCCESS)
}

/// `coupons`: every measured coupon against the stackup's model.
fn coupons(
    paths: Vec<PathBuf>,
    format: TableFormat,
    root: Option<PathBuf>,
    run: AnalysisOptions,
) -> ExitCode {
    let (loaded, analyses) = match load_analysed(paths, root, run) {
        Ok(x) => x,
        Err(code) => return code,
    };
    let items: Vec<output::coupons::FileCoupons> = loaded
        .stackups
        .iter()
        .zip(&analyses)
        .map(|(s, a)| (loaded.db.get(s.file).display.as_str(), s, a))
        .collect();
    // Names come from the stackups: nothing raw reaches the terminal.
    let text = match format {
        TableFormat::Json => output::escape::json_text(&output::coupons::json(&items)).into_owned(),
        _ => output::escape::controls_keep_lines(&output::coupons::table(&items)).into_owned(),
    };
    print_or(&text, ExitCode::SUCCESS)
}

/// `baseline write`: check with default options, record the findings.
/// Input errors are never baselined: they are printed and nothing is written.
fn baseline_write(
    paths: Vec<PathBuf>,
    output: &std::path::Path,
    walk: WalkOptions,
    root: Option<PathBuf>,
    run: AnalysisOptions,
) -> ExitCode {
    let outcome = match check_for_writing(
        paths,
        walk,
        root,
        run,
        "input errors are never baselined; fix them first (nothing written)",
    ) {
        Ok(o) => o,
        Err(code) => return code,
    };
    let b = Baseline::record(&outcome);
    let inputs = stackup_lint::files::input_paths(&outcome.db);
    let shown = output::escape::controls(&output.to_string_lossy()).into_owned();
    if let Err(e) = stackup_lint::files::write_output(output, b.to_json().as_bytes(), &inputs) {
        eprintln!("error: cannot write the baseline to {shown}: {e}");
        return ExitCode::from(2);
    }
    eprintln!(
        "wrote {} finding(s) from {} file(s) to {shown}",
        b.findings.len(),
        outcome.files,
    );
    ExitCode::SUCCESS
}

/// Print a run's input errors (plain text) to standard output.
/// The paths a command was given (the working directory when none), and
/// the working directory that displayed paths are relative to.
fn paths_and_base(paths: Vec<PathBuf>) -> (Vec<PathBuf>, PathBuf) {
    let paths = if paths.is_empty() {
        vec![PathBuf::from(".")]
    } else {
        paths
    };
    let base = std::env::current_dir().unwrap_or_else(|_| PathBuf::from("."));
    (paths, base)
}

/// Check `paths` for a command that writes from the findings (`baseline
/// write`, `fix`): input errors are printed, then `why`, and end the run
/// with code 2.
fn check_for_writing(
    paths: Vec<PathBuf>,
    walk: WalkOptions,
    root: Option<PathBuf>,
    run: AnalysisOptions,
    why: &str,
) -> Result<engine::CheckOutcome, ExitCode> {
    let (paths, base) = paths_and_base(paths);
    let opts = CheckOptions {
        walk,
        root,
        analysis: run,
        ..CheckOptions::default()
    };
    let outcome = engine::check_paths(&paths, &base, &opts).map_err(|e| {
        eprintln!("error: {e}");
        ExitCode::from(2)
    })?;
    if outcome.has_input_errors() {
        print_input_errors(&outcome);
        eprintln!("error: {why}");
        return Err(ExitCode::from(2));
    }
    Ok(outcome)
}

fn print_input_errors(outcome: &engine::CheckOutcome) {
    let errors: Vec<_> = outcome
        .findings
        .iter()
        .filter(|f| f.rule == stackup_lint::finding::INVALID_INPUT)
        .cloned()
        .collect();
    let opts = human::HumanOptions {
        color: false,
        width: 100,
        pool: Pool::default(),
    };
    let _ = print(&human::render(&errors, &outcome.db, opts));
}

/// Longest `--length` accepted, m: longer than any board trace (a
/// backplane run is about a metre), short enough that no loss overflows.
const MAX_LENGTH: f64 = 10.0;

/// `--length`: a positive length with its unit.
fn parse_length(text: Option<&str>) -> Result<Option<f64>, ExitCode> {
    use stackup_lint::units::{parse_quantity, Dimension};
    match text.map(|l| parse_quantity(l, Dimension::Length)) {
        None => Ok(None),
        Some(Ok(v)) if v > 0.0 && v <= MAX_LENGTH => Ok(Some(v)),
        Some(Ok(v)) if v > MAX_LENGTH => {
            eprintln!(
                "error: --length {} is longer than any board trace (the limit is {MAX_LENGTH} m); check the unit",
                output::escape::controls(text.unwrap_or_default())
            );
            Err(ExitCode::from(2))
        }
        Some(Ok(_)) => {
            eprintln!("error: --length must be positive");
            Err(ExitCode::from(2))
        }
        Some(Err(e)) => {
            eprintln!(
                "error: --length: {}",
                output::escape::controls(&e.to_string())
            );
            Err(ExitCode::from(2))
        }
    }
}

/// `report`: check one stackup, then write its report files, all or
/// nothing. Input errors are printed and nothing is written.
/// `impedance --sweep`: print the sweep, write the CSV and the Touchstone
/// files (all outputs or none: every file is built before any is written).
fn impedance_sweep(
    items: &[(
        &str,
        &stackup_lint::model::Stackup,
        &stackup_lint::analysis::Analysis,
    )],
    sw: &SweepArgs,
    format: TableFormat,
    length: Option<f64>,
    db: &stackup_lint::source::SourceDb,
) -> ExitCode {
    use stackup_lint::analysis::sweep::sweep;
    let shown = |p: &std::path::Path| output::escape::controls(&p.to_string_lossy()).into_owned();
    let files: Vec<output::sweep::FileSweep> = items
        .iter()
        .map(|(n, s, a)| {
            let per_class = (0..s.net_classes.len())
                .map(|i| sweep(s, a, i, &sw.freqs))
                .collect();
            (*n, *s, per_class)
        })
        .collect();
    let inputs = stackup_lint::files::input_paths(db);
    let mut touchstones: Vec<(String, Vec<u8>)> = Vec::new();
    if let (Some(_), Some(len)) = (&sw.touchstone, length) {
        for (n, s, per_class) in &files {
            let base: String = std::path::Path::new(n)
                .file_name()
                .map_or("stackup".into(), |f| {
                    f.to_string_lossy().replace(".stackup.yaml", "")
                });
            let stem = output::report::slug(&base);
            for (nc, pts) in s.net_classes.iter().zip(per_class) {
                let Some(pts) = pts else { continue };
                let pair = nc.spacing.is_some();
                let file = if pair {
                    output::sweep::touchstone_pair(n, &nc.name, len, pts)
                } else {
                    output::sweep::touchstone(n, &nc.name, len, pts)
                };
                match file {
                    Ok(t) => touchstones.push((
                        format!(
                            "{stem}-{}.{}",
                            output::report::slug(&nc.name),
                            if pair { "s4p" } else { "s2p" }
                        ),
                        t.into_bytes(),
                    )),
                    Err(e) => {
                        eprintln!("error: net class `{}`: {e}; nothing written", nc.name);
                        return ExitCode::from(2);
                    }
                }
            }
        }
    }
    if let Some(path) = &sw.csv {
        let text = output::sweep::csv(&files);
        if let Err(e) = stackup_lint::files::write_output(path, text.as_bytes(), &inputs) {
            eprintln!("error: cannot write {}: {e}", shown(path));
            return ExitCode::from(2);
        }
    }
    if let Some(dir) = &sw.touchstone {
        if let Err(e) = stackup_lint::files::write_dir_atomic(dir, &touchstones, &inputs) {
            eprintln!(
                "error: cannot write into {}: {e} (nothing written)",
                shown(dir)
            );
            return ExitCode::from(2);
        }
        eprintln!(
            "wrote {} Touchstone file(s) to {}",
            touchstones.len(),
            shown(dir)
        );
    }
    let text = match format {
        TableFormat::Json => output::escape::json_text(&output::sweep::json(&files)).into_owned(),
        _ => output::escape::controls_keep_lines(&output::sweep::table(&files)).into_owned(),
    };
    print_or(&text, ExitCode::SUCCESS)
}

fn report(
    file: &std::path::Path,
    dir: &std::path::Path,
    opts: output::report::ReportOptions,
    root: Option<PathBuf>,
    run: AnalysisOptions,
) -> ExitCode {
    let shown = |p: &std::path::Path| output::escape::controls(&p.to_string_lossy()).into_owned();
    if !file.exists() {
        eprintln!("error: {} does not exist", shown(file));
        return ExitCode::from(2);
    }
    if !file.is_file() {
        eprintln!(
            "error: {} is not a file; `report` takes one stackup file",
            shown(file)
        );
        return ExitCode::from(2);
    }
    let name = file.file_name().map(|n| n.to_string_lossy().into_owned());
    if name.is_some_and(|n| n.ends_with(".materials.yaml") || n.ends_with(".materials.yml")) {
        eprintln!(
            "error: {} is a materials library; `report` takes one stackup file",
            shown(file)
        );
        return ExitCode::from(2);
    }
    let base = std::env::current_dir().unwrap_or_else(|_| PathBuf::from("."));
    let check = CheckOptions {
        root,
        analysis: run,
        ..CheckOptions::default()
    };
    let (outcome, kept) = match engine::check_paths_analysed(&[file.to_path_buf()], &base, &check) {
        Ok(x) => x,
        Err(e) => {
            eprintln!("error: {e}");
            return ExitCode::from(2);
        }
    };
    if outcome.has_input_errors() {
        print_input_errors(&outcome);
        eprintln!("error: the stackup has input errors; no report written");
        return ExitCode::from(2);
    }
    let Some((s, a)) = kept.first() else {
        eprintln!(
            "error: {} holds no stackup (a materials library?); no report written",
            shown(file)
        );
        return ExitCode::from(2);
    };
    let display = outcome.db.get(s.file).display.clone();
    let doc = output::report::document(&display, s, a, &outcome.findings, &outcome.db, &opts);
    let files = output::report::render(&doc);
    let contents: Vec<(String, Vec<u8>)> = files
        .iter()
        .map(|f| (f.name.clone(), f.contents.clone().into_bytes()))
        .collect();
    let inputs = stackup_lint::files::input_paths(&outcome.db);
    if let Err(e) = stackup_lint::files::write_dir_atomic(dir, &contents, &inputs) {
        eprintln!(
            "error: cannot write the report into {}: {e} (nothing written)",
            shown(dir)
        );
        return ExitCode::from(2);
    }
    eprintln!(
        "wrote {} and {} with {} drawing(s) to {}",
        files[0].name,
        files[1].name,
        files.len() - 2,
        shown(dir)
    );
    ExitCode::SUCCESS
}

/// Print to standard output. A reader that stops early (`| head`) is the
/// ordinary end of a pipe, not an error; any other failure to write (a
/// full disk, `/dev/full`) is exit code 2 with a message.
fn print(text: &str) -> Result<(), ExitCode> {
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|()| out.flush()) {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(()),
        Err(e) => {
            eprintln!("error: cannot write to standard output: {e}");
            Err(ExitCode::from(2))
        }
    }
}

/// Print, then exit with `code` (or 2 when the write failed).
fn print_or(text: &str, code: ExitCode) -> ExitCode {
    match print(text) {
        Ok(()) => code,
        Err(c) => c,
    }
}
