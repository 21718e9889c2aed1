//! The `stackup-lint` command line: parse arguments, call the library, map
//! the result to an exit code (0 clean, 1 findings, 2 bad input or usage).

use std::io::{IsTerminal, Write};
use std::path::PathBuf;
use std::process::ExitCode;

use clap::{Args, Parser, Subcommand, ValueEnum};

use stackup_lint::baseline::Baseline;

/// A warm run is mostly small allocations on two or more threads (YAML
/// trees, findings, report text); mimalloc serves them with less work than
/// the C library's allocator (see DEVELOPERS.md, "Warm path").
#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;
use stackup_lint::engine::{self, CheckOptions};
use stackup_lint::finding::Severity;
use stackup_lint::input::yaml::YamlLimits;
use stackup_lint::load::InputLimits;
use stackup_lint::output::{self, github, gitlab, human, json, sarif, Summary};
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
    /// Do not read or write the on-disk cache of field-solver results
    #[arg(long, global = true)]
    no_cache: bool,
}

#[derive(Clone, Copy, ValueEnum)]
enum FailOn {
    Error,
    Warning,
    Note,
}

#[derive(Clone, Copy, ValueEnum)]
enum Format {
    /// Diagnostics with source excerpts (default).
    Human,
    /// The stable JSON report (see README).
    Json,
    /// GitHub Actions annotations (workflow commands); `check` only.
    Github,
    /// GitLab code quality report (JSON); `check` only.
    Gitlab,
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
        format: Format,
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
        /// Threads for field solves (0 = one per core); output does not depend on it
        #[arg(long, default_value_t = 0, value_name = "N")]
        threads: usize,
        /// Largest field-solver mesh (nodes of one grid); bigger sections are reported, not solved
        #[arg(long, default_value_t = stackup_lint::analysis::DEFAULT_MAX_MESH_NODES, value_name = "NODES")]
        max_mesh_nodes: usize,
        /// Base address of the rule pages linked from SARIF
        #[arg(long, default_value = sarif::DEFAULT_DOCS_URL, value_name = "URL")]
        rule_docs_url: String,
        /// Findings recorded in this baseline file (`baseline write`) are
        /// shown as baselined and do not fail the run
        #[arg(long, value_name = "FILE")]
        baseline: Option<PathBuf>,
    },
    /// Record today's findings so that `check --baseline` fails only on new ones
    Baseline {
        #[command(subcommand)]
        action: BaselineAction,
    },
    /// Print a rule's page: what it checks, the physics, how to fix it
    Explain {
        /// Rule name, as printed in brackets by `check`
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
        format: Format,
        /// Also give the total loss over this routed length, e.g. "150 mm"
        #[arg(long, value_name = "LENGTH")]
        length: Option<String>,
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
    },
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
    },
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    stackup_lint::analysis::cache::from_env(cli.no_cache);
    match cli.command {
        Command::Baseline {
            action:
                BaselineAction::Write {
                    paths,
                    output,
                    walk,
                },
        } => baseline_write(paths, &output, walk.options()),
        Command::Impedance {
            paths,
            format,
            length,
        } => {
            let length = match parse_length(length.as_deref()) {
                Ok(l) => l,
                Err(code) => return code,
            };
            impedance(paths, format, length)
        }
        Command::Report {
            file,
            output,
            to_scale,
            length,
        } => {
            let length = match parse_length(length.as_deref()) {
                Ok(l) => l,
                Err(code) => return code,
            };
            report(
                &file,
                &output,
                output::report::ReportOptions { to_scale, length },
            )
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
            print(&out);
            ExitCode::SUCCESS
        }
        Command::Explain { rule } => match rules::find_meta(&rule) {
            Some(m) => {
                print(m.doc);
                ExitCode::SUCCESS
            }
            None => {
                let names: Vec<_> = rules::all_meta().iter().map(|m| m.name).collect();
                eprintln!(
                    "error: there is no rule named `{rule}`; rules: {}",
                    names.join(", ")
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
            rule_docs_url,
            baseline,
            threads,
            max_mesh_nodes,
        } => {
            stackup_lint::analysis::set_solver_threads(threads);
            stackup_lint::analysis::set_max_mesh_nodes(max_mesh_nodes);
            let baseline = match baseline.as_deref().map(Baseline::read) {
                None => None,
                Some(Ok(b)) => Some(b),
                Some(Err(e)) => {
                    eprintln!("error: {e}");
                    return ExitCode::from(2);
                }
            };
            let paths = if paths.is_empty() {
                vec![PathBuf::from(".")]
            } else {
                paths
            };
            let opts = CheckOptions {
                walk: walk.options(),
                limits: InputLimits {
                    max_file_bytes: max_file_size,
                    yaml: YamlLimits {
                        max_depth: max_yaml_depth,
                        max_nodes: max_yaml_nodes,
                    },
                },
            };
            let base = std::env::current_dir().unwrap_or_else(|_| PathBuf::from("."));
            let mut outcome = match engine::check_paths(&paths, &base, &opts) {
                Ok(o) => o,
                Err(e) => {
                    eprintln!("error: {e}");
                    return ExitCode::from(2);
                }
            };
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
                if let Err(e) = output::write_atomic(path, log.as_bytes()) {
                    eprintln!(
                        "error: cannot write the SARIF log to {}: {e}",
                        path.display()
                    );
                    return ExitCode::from(2);
                }
            }
            let summary = Summary::of(&outcome.findings, outcome.files);
            match format {
                Format::Json => print(&json::render(&outcome.findings, &outcome.db, outcome.files)),
                Format::Github => print(&github::render(&outcome.findings, &outcome.db)),
                Format::Gitlab => print(&gitlab::render(&outcome.findings, &outcome.db)),
                Format::Human => {
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
                        },
                    );
                    text.push_str(&summary.line());
                    text.push('\n');
                    print(&text);
                }
            }
            if outcome.has_input_errors() {
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

fn impedance(paths: Vec<PathBuf>, format: Format, length: Option<f64>) -> ExitCode {
    let paths = if paths.is_empty() {
        vec![PathBuf::from(".")]
    } else {
        paths
    };
    let base = std::env::current_dir().unwrap_or_else(|_| PathBuf::from("."));
    let (files, _) = match stackup_lint::walk::collect(&paths, &WalkOptions::default()) {
        Ok(x) => x,
        Err(e) => {
            eprintln!("error: {}", e.message);
            return ExitCode::from(2);
        }
    };
    let loaded = stackup_lint::load::load(&files, &base, &InputLimits::default());
    if !loaded.problems.is_empty() {
        let mut problems = loaded.problems.clone();
        engine::sort_findings(&mut problems, &loaded.db);
        print(&human::render(
            &problems,
            &loaded.db,
            human::HumanOptions {
                color: false,
                width: 100,
            },
        ));
        return ExitCode::from(2);
    }
    let analyses: Vec<_> = loaded
        .stackups
        .iter()
        .map(stackup_lint::analysis::analyze)
        .collect();
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
    match format {
        Format::Json => print(&output::impedance::json(&items, length)),
        Format::Github | Format::Gitlab => {
            eprintln!("error: --format github and gitlab apply to `check` only");
            return ExitCode::from(2);
        }
        Format::Human => {
            let text: Vec<String> = items
                .iter()
                .map(|(n, s, a)| output::impedance::table(n, s, a, length))
                .collect();
            print(&text.join("\n"));
        }
    }
    ExitCode::SUCCESS
}

/// `baseline write`: check with default options, record the findings.
/// Input errors are never baselined: they are printed and nothing is written.
fn baseline_write(paths: Vec<PathBuf>, output: &std::path::Path, walk: WalkOptions) -> ExitCode {
    let paths = if paths.is_empty() {
        vec![PathBuf::from(".")]
    } else {
        paths
    };
    let base = std::env::current_dir().unwrap_or_else(|_| PathBuf::from("."));
    let opts = CheckOptions {
        walk,
        ..CheckOptions::default()
    };
    let outcome = match engine::check_paths(&paths, &base, &opts) {
        Ok(o) => o,
        Err(e) => {
            eprintln!("error: {e}");
            return ExitCode::from(2);
        }
    };
    if outcome.has_input_errors() {
        print_input_errors(&outcome);
        eprintln!("error: input errors are never baselined; fix them first (nothing written)");
        return ExitCode::from(2);
    }
    let b = Baseline::record(&outcome);
    if let Err(e) = output::write_atomic(output, b.to_json().as_bytes()) {
        eprintln!(
            "error: cannot write the baseline to {}: {e}",
            output.display()
        );
        return ExitCode::from(2);
    }
    eprintln!(
        "wrote {} finding(s) from {} file(s) to {}",
        b.findings.len(),
        outcome.files,
        output.display()
    );
    ExitCode::SUCCESS
}

/// Print a run's input errors (plain text) to standard output.
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
    };
    print(&human::render(&errors, &outcome.db, opts));
}

/// `--length`: a positive length with its unit.
fn parse_length(text: Option<&str>) -> Result<Option<f64>, ExitCode> {
    use stackup_lint::input::units::{parse_quantity, Dimension};
    match text.map(|l| parse_quantity(l, Dimension::Length)) {
        None => Ok(None),
        Some(Ok(v)) if v > 0.0 && v.is_finite() => Ok(Some(v)),
        Some(Ok(_)) => {
            eprintln!("error: --length must be positive");
            Err(ExitCode::from(2))
        }
        Some(Err(e)) => {
            eprintln!("error: --length: {e}");
            Err(ExitCode::from(2))
        }
    }
}

/// `report`: check one stackup, then write its report files (each one
/// atomically). Input errors are printed and nothing is written.
fn report(
    file: &std::path::Path,
    dir: &std::path::Path,
    opts: output::report::ReportOptions,
) -> ExitCode {
    if !file.is_file() {
        eprintln!(
            "error: {} is not a file; `report` takes one stackup file",
            file.display()
        );
        return ExitCode::from(2);
    }
    let name = file.file_name().map(|n| n.to_string_lossy().into_owned());
    if name.is_some_and(|n| n.ends_with(".materials.yaml") || n.ends_with(".materials.yml")) {
        eprintln!(
            "error: {} is a materials library; `report` takes one stackup file",
            file.display()
        );
        return ExitCode::from(2);
    }
    let base = std::env::current_dir().unwrap_or_else(|_| PathBuf::from("."));
    let (outcome, kept) = match engine::check_paths_analysed(
        &[file.to_path_buf()],
        &base,
        &CheckOptions::default(),
    ) {
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
            file.display()
        );
        return ExitCode::from(2);
    };
    let display = outcome.db.get(s.file).display.clone();
    let doc = output::report::document(&display, s, a, &outcome.findings, &outcome.db, &opts);
    let files = output::report::render(&doc);
    if let Err(e) = std::fs::create_dir_all(dir) {
        eprintln!("error: cannot create {}: {e}", dir.display());
        return ExitCode::from(2);
    }
    for f in &files {
        let path = dir.join(&f.name);
        if let Err(e) = output::write_atomic(&path, f.contents.as_bytes()) {
            eprintln!("error: cannot write {}: {e}", path.display());
            return ExitCode::from(2);
        }
    }
    eprintln!(
        "wrote {} and {} with {} drawing(s) to {}",
        files[0].name,
        files[1].name,
        files.len() - 2,
        dir.display()
    );
    ExitCode::SUCCESS
}

/// Print to standard output, ignoring a closed pipe (`| head`).
fn print(text: &str) {
    let mut out = std::io::stdout().lock();
    let _ = out.write_all(text.as_bytes());
    let _ = out.flush();
}
