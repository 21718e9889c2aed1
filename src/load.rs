//! Reading files: bytes → text → YAML tree → schema check → model.
//!
//! Any problem becomes an `invalid-input` finding at its span; nothing here
//! panics on bad input.

use std::collections::{BTreeMap, BTreeSet, HashMap};
use std::path::{Path, PathBuf};

use crate::files::{self, Confinement, ReadError, Refusal};
use crate::finding::{Finding, INVALID_INPUT};
use crate::input::schema::{self, FileKind};
use crate::input::yaml::Node;
use crate::input::yaml::{self, YamlLimits};
use crate::model::{self, LibraryData, RuleSpec, Stackup};
use crate::pool::Pool;
use crate::source::{FileId, Location, SourceDb, SourceFile, Spans};

/// Budgets for reading input files.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct InputLimits {
    /// Largest file read, bytes.
    pub max_file_bytes: u64,
    pub yaml: YamlLimits,
}

impl Default for InputLimits {
    fn default() -> Self {
        InputLimits {
            max_file_bytes: 4 * 1024 * 1024,
            yaml: YamlLimits::default(),
        }
    }
}

/// Everything loaded in one run.
#[derive(Debug, Default)]
pub struct Loaded {
    pub db: SourceDb,
    /// Stackups that loaded cleanly.
    pub stackups: Vec<Stackup>,
    /// Input problems (`invalid-input`), in file order.
    pub problems: Vec<Finding>,
}

/// Path shown to people and in SARIF: relative to `base` when inside it,
/// with forward slashes.
pub fn display_path(path: &Path, base: &Path) -> String {
    let abs = if path.is_absolute() {
        path.to_path_buf()
    } else {
        base.join(path)
    };
    let shown = abs.strip_prefix(base).map_or(abs.as_path(), |p| p);
    let s = shown.to_string_lossy().replace('\\', "/");
    s.strip_prefix("./").map_or(s.clone(), str::to_string)
}

fn whole_file(file: FileId) -> Location {
    Location {
        file,
        pointer: String::new(),
        span: 0..0,
    }
}

/// A file read, parsed and schema-checked on its own, before it joins the
/// run's database: its problems point at file 0 until [`admit`] gives it
/// its id. Files are prepared on the `--threads` workers, then admitted
/// one after another in the order a sequential load would add them, so
/// file ids, problems and output are the same for any thread count.
#[derive(Debug)]
struct Prepared {
    file: SourceFile,
    /// The YAML tree, when the file parsed.
    tree: Option<Node>,
    problems: Vec<Finding>,
    /// The file parsed and the model can be built from it: the elements
    /// its schema errors leave out (none for a file that passed).
    modelled: Option<BTreeSet<String>>,
}

/// Why a path named by the user or a stackup is not read, as a sentence,
/// or `None` when it resolves inside `root` to a regular file (its
/// canonical path is returned then).
pub(crate) fn refuse(
    conf: &Confinement,
    path: &Path,
    root: &Path,
) -> Result<PathBuf, (String, &'static str)> {
    match conf.resolve(path, root) {
        Ok(canonical) => match std::fs::metadata(&canonical) {
            Ok(m) if m.is_file() => Ok(canonical),
            Ok(m) => Err((
                ReadError::NotRegular(files::kind_of(&m.file_type()).unwrap_or("a special file"))
                    .message(),
                "point it at a regular file inside the project",
            )),
            Err(_) => Err((
                ReadError::Missing.message(),
                "check the path and its permissions",
            )),
        },
        Err(Refusal::Missing) => Err((
            ReadError::Missing.message(),
            "check the path and its permissions",
        )),
        Err(Refusal::Outside { through_link }) => Err((
            format!(
                "the path resolves outside the project root ({}){}; nothing outside it is read",
                conf.shown(root),
                if through_link {
                    " through a symbolic link"
                } else {
                    ""
                }
            ),
            "keep stackups and libraries inside the repository (or widen the root with --root DIR)",
        )),
    }
}

/// Read a file; on failure the problem is recorded and the file is kept
/// with empty text so findings can still name it.
fn prepare(
    path: &Path,
    base: &Path,
    limits: &InputLimits,
    kind: FileKind,
    conf: &Confinement,
    overlay: Option<&str>,
) -> Prepared {
    let display = display_path(path, base);
    let mut file = SourceFile {
        path: path.to_path_buf(),
        display,
        text: String::new(),
        spans: Spans::default(),
    };
    let root = conf.root_of(path);
    let bytes = refuse(conf, path, &root).and_then(|canonical| {
        // An editor's unsaved text of a file inside the project.
        if let Some(text) = overlay {
            if text.len() as u64 > limits.max_file_bytes {
                return Err((
                    ReadError::TooLarge {
                        size: text.len() as u64,
                        limit: limits.max_file_bytes,
                    }
                    .message(),
                    "raise the limit with --max-file-size if this file is genuine",
                ));
            }
            return Ok(text.as_bytes().to_vec());
        }
        files::read_regular(&canonical, limits.max_file_bytes).map_err(|e| {
            let help = match e {
                ReadError::TooLarge { .. } => {
                    "raise the limit with --max-file-size if this file is genuine"
                }
                _ => "check the path and its permissions",
            };
            (e.message(), help)
        })
    });
    // For text that is not UTF-8, keep a lossy copy so the finding can
    // point at the bad byte (shown as U+FFFD) instead of the file start;
    // only when the text before it is ours (a stackup), never for another
    // kind of file.
    let mut bad_span = 0..0;
    let text = bytes.and_then(|b| {
        String::from_utf8(b).map_err(|e| {
            let at = e.utf8_error().valid_up_to();
            let byte = e.as_bytes().get(at).copied().unwrap_or(0);
            let lossy = String::from_utf8_lossy(e.as_bytes()).into_owned();
            if header_line(&lossy[..at], kind) {
                // The text before `at` is valid, so it is the same in the lossy copy.
                bad_span = at..at + char::REPLACEMENT_CHARACTER.len_utf8();
                file.text = lossy;
            }
            (
                format!("the file is not valid UTF-8 (byte 0x{byte:02x} at offset {at})"),
                "save the file as UTF-8",
            )
        })
    });
    match text {
        Ok(t) => {
            file.text = t;
            prepare_text(file, limits, kind)
        }
        Err((msg, help)) => {
            let mut at = whole_file(0);
            at.span = bad_span;
            Prepared {
                file,
                tree: None,
                problems: vec![Finding::new(INVALID_INPUT, at, msg)
                    .label("unreadable")
                    .with_help(help)],
                modelled: None,
            }
        }
    }
}

/// The key that marks a file of `kind` as ours.
fn header_key(kind: FileKind) -> &'static str {
    match kind {
        FileKind::Stackup => "stackup-lint",
        FileKind::Library => "stackup-lint-materials",
    }
}

/// True when some line of `text` starts (after indentation, a list dash,
/// a brace or a quote) with the header key of `kind` followed by a colon:
/// the file means to be a stackup (or library) even if it does not parse.
fn header_line(text: &str, kind: FileKind) -> bool {
    let key = header_key(kind);
    text.lines().any(|line| {
        let l = line.trim_start_matches([' ', '-', '{', '"', '\'', '\u{feff}']);
        l.strip_prefix(key).is_some_and(|rest| {
            rest.trim_start_matches(['"', '\''])
                .trim_start()
                .starts_with(':')
        })
    })
}

/// Longest excerpt of a file that is not ours quoted in a message.
pub const EXCERPT_CHARS: usize = 20;

/// The start of the first line of `text` that is neither blank nor a `#`
/// comment (else of the first non-blank line), up to its first `=`, `:` or
/// space and at most [`EXCERPT_CHARS`] characters, escaped (control and
/// invisible characters as `\u{..}`): enough to recognise the wrong file
/// (`DEPLOY_KEY…`, `{"type"…`, `-----BEGIN…`), never a value.
pub fn excerpt(text: &str) -> String {
    let mut lines = text.lines().map(str::trim).filter(|l| !l.is_empty());
    let line = lines
        .clone()
        .find(|l| !l.starts_with('#'))
        .or_else(|| lines.next())
        .unwrap_or("");
    // Up to the first separator of a key from its value (`=`, `:`) or a
    // space: a key's name identifies the file, its value may be a secret.
    let head: String = line
        .chars()
        .take_while(|c| !matches!(c, '=' | ':' | ' ' | '\t'))
        .take(EXCERPT_CHARS)
        .collect();
    let mut out = head.clone();
    if head.chars().count() < line.chars().count() {
        out.push('…');
    }
    crate::output::escape::controls(&out).into_owned()
}

/// Parse and schema-check a file whose text is already read. A file that
/// is not ours (no `stackup-lint:` or `stackup-lint-materials:` key) gets
/// one finding with a short escaped excerpt, and its text is dropped so no
/// output can show more of it.
fn prepare_text(mut file: SourceFile, limits: &InputLimits, kind: FileKind) -> Prepared {
    let parsed = yaml::parse(&file.text, limits.yaml);
    let is_empty = matches!(&parsed, Ok(t) if t.value == yaml::Value::Null);
    let ours = match &parsed {
        Ok(t) if t.as_map().is_some() => t.get(header_key(kind)).is_some(),
        _ => header_line(&file.text, kind),
    };
    if !ours && !is_empty {
        let what = match kind {
            FileKind::Stackup => "a stackup",
            FileKind::Library => "a material library",
        };
        let quote = excerpt(&file.text);
        file.text = String::new();
        let problem = Finding::new(
            INVALID_INPUT,
            whole_file(0),
            format!(
                "this is not {what}: it has no `{}:` key (it starts with \"{quote}\"); nothing more of it is read or shown",
                header_key(kind)
            ),
        )
        .label("not a stackup-lint file")
        .with_help(format!(
            "a {} file starts with `{}: 1`; if this is one, add that line",
            match kind {
                FileKind::Stackup => "stackup",
                FileKind::Library => "material library",
            },
            header_key(kind)
        ));
        return Prepared {
            file,
            tree: None,
            problems: vec![problem],
            modelled: None,
        };
    }
    let tree = match parsed {
        Ok(tree) => tree,
        Err(e) => {
            let problem = Finding::new(
                INVALID_INPUT,
                Location {
                    file: 0,
                    pointer: String::new(),
                    span: e.span,
                },
                e.message,
            )
            .label("YAML error here");
            return Prepared {
                file,
                tree: None,
                problems: vec![problem],
                modelled: None,
            };
        }
    };
    // Findings in file 0 until the file is admitted.
    let (problems, complete) = schema::validate(
        &schema::Doc {
            text: &file.text,
            tree: &tree,
        },
        kind,
    );
    file.spans = Spans::new(tree.spans());
    Prepared {
        file,
        tree: Some(tree),
        // A library is used whole or not at all; a stackup is modelled
        // without the elements that broke the schema.
        modelled: match kind {
            FileKind::Stackup if complete => schema::left_out(&problems),
            FileKind::Stackup => None,
            FileKind::Library => problems.is_empty().then(BTreeSet::new),
        },
        problems,
    }
}

/// Add a prepared file to the database and its problems to the run;
/// returns its id, its YAML tree and the elements to leave out when a
/// model can be built from it (the model is built from the tree; the
/// database keeps only spans).
fn admit(loaded: &mut Loaded, prepared: Prepared) -> Option<(FileId, Node, BTreeSet<String>)> {
    let id = loaded.db.add(prepared.file);
    for mut f in prepared.problems {
        f.primary.file = id;
        for l in &mut f.labels {
            l.location.file = id;
        }
        loaded.problems.push(f);
    }
    let (tree, skip) = prepared.tree.zip(prepared.modelled)?;
    Some((id, tree, skip))
}

/// The built-in library of generic material classes (typical values, not
/// vendor data), referenced as `libraries: [builtin:generic]`.
pub const BUILTIN_GENERIC: &str = include_str!("../materials/generic.materials.yaml");

/// Name by which stackups reference the built-in library.
pub const BUILTIN_GENERIC_NAME: &str = "builtin:generic";

/// A stackup to model: where its problems so far end, its file, tree and
/// libraries, and the elements to leave out.
type Build = (usize, FileId, Node, Vec<LibraryData>, model::Gaps);

/// Load stackup files (and the libraries they reference).
///
/// Reading, YAML and schema run on the `pool`, then libraries
/// are loaded once each in file order, then the models are built on the
/// workers again; problems keep the order of a one-file-at-a-time load.
/// `rules` are the rules the files' settings may name (the engine hands
/// them down).
pub fn load(
    paths: &[PathBuf],
    limits: &InputLimits,
    conf: &Confinement,
    pool: Pool,
    rules: &[RuleSpec],
) -> Loaded {
    load_with(paths, limits, conf, pool, rules, &HashMap::new())
}

/// As [`load`], with the text of some stackups given (an editor's unsaved
/// buffers, by path) instead of read; they are confined all the same, and
/// libraries and coupon files are read from disk.
pub fn load_with(
    paths: &[PathBuf],
    limits: &InputLimits,
    conf: &Confinement,
    pool: Pool,
    rules: &[RuleSpec],
    overlay: &HashMap<PathBuf, String>,
) -> Loaded {
    let base = conf.cwd();
    let prepared = pool.map(paths, |path| {
        prepare(
            path,
            base,
            limits,
            FileKind::Stackup,
            conf,
            overlay.get(path).map(String::as_str),
        )
    });
    let mut loaded = Loaded::default();
    let mut libraries: BTreeMap<PathBuf, Option<LibraryData>> = BTreeMap::new();
    // Per stackup, in order: where its problems so far end, and the model
    // to build (its file and libraries).
    let mut builds: Vec<Build> = Vec::new();
    for (path, prepared) in paths.iter().zip(prepared) {
        let Some((id, tree, skip)) = admit(&mut loaded, prepared) else {
            continue;
        };
        let root = conf.root_of(path);
        let mut libs = Vec::new();
        let mut libs_ok = true;
        let lib_entries: Vec<(usize, String)> = tree
            .get("libraries")
            .and_then(|n| n.as_seq())
            .map(|items| {
                items
                    .iter()
                    .enumerate()
                    .filter_map(|(i, n)| n.as_str().map(|s| (i, s.to_string())))
                    .collect()
            })
            .unwrap_or_default();
        for (i, rel) in lib_entries {
            let builtin = rel == BUILTIN_GENERIC_NAME;
            let lib_path = if builtin {
                PathBuf::from(BUILTIN_GENERIC_NAME)
            } else {
                path.parent().unwrap_or(Path::new(".")).join(&rel)
            };
            let key = if builtin {
                lib_path.clone()
            } else {
                // Absolute paths, `..` escapes and links leading out of the
                // project root are refused here, at the entry, before any
                // byte of the file is read.
                let refusal = if Path::new(&rel).is_absolute() {
                    Err((
                        "an absolute path; library paths are relative to the stackup file and stay inside the project".to_string(),
                        "give the path relative to the stackup file",
                    ))
                } else {
                    refuse(conf, &lib_path, &root)
                };
                match refusal {
                    Ok(canonical) => canonical,
                    Err((why, help)) => {
                        let missing = why == ReadError::Missing.message();
                        let message = if missing {
                            format!(
                                "material library `{rel}` does not exist (looked for {})",
                                display_path(&lib_path, base)
                            )
                        } else {
                            format!("material library `{rel}` is not read: {why}")
                        };
                        let help = if missing {
                            format!("library paths are relative to the stackup file; `{BUILTIN_GENERIC_NAME}` is the built-in generic library")
                        } else {
                            help.to_string()
                        };
                        loaded.problems.push(
                            Finding::new(
                                INVALID_INPUT,
                                loaded.db.locate(id, &format!("/libraries/{i}")),
                                message,
                            )
                            .label(if missing { "no such file" } else { "not read" })
                            .with_help(help),
                        );
                        libs_ok = false;
                        continue;
                    }
                }
            };
            if !libraries.contains_key(&key) {
                let lid = if builtin {
                    let file = SourceFile {
                        path: lib_path.clone(),
                        display: BUILTIN_GENERIC_NAME.to_string(),
                        text: BUILTIN_GENERIC.to_string(),
                        spans: Spans::default(),
                    };
                    admit(&mut loaded, prepare_text(file, limits, FileKind::Library))
                } else {
                    admit(
                        &mut loaded,
                        prepare(&lib_path, base, limits, FileKind::Library, conf, None),
                    )
                };
                let data = lid.and_then(|(lid, tree, _)| {
                    let (data, errors) = model::load_library(&loaded.db, lid, &tree);
                    let ok = errors.is_empty();
                    loaded.problems.extend(errors);
                    ok.then_some(data)
                });
                libraries.insert(key.clone(), data);
            }
            match libraries.get(&key).cloned().flatten() {
                Some(d) => libs.push(d),
                None => libs_ok = false,
            }
        }
        // Without a library the file is still read, for its own errors.
        let gaps = model::Gaps {
            elements: skip,
            library_failed: !libs_ok,
        };
        builds.push((loaded.problems.len(), id, tree, libs, gaps));
    }
    let db = &loaded.db;
    let built = pool.map(&builds, |(_, id, tree, libs, gaps)| {
        model::build_stackup(db, *id, tree, libs, gaps, rules)
    });
    // Put each model's problems where a sequential load would have.
    let mut problems = Vec::with_capacity(loaded.problems.len());
    let mut earlier = std::mem::take(&mut loaded.problems).into_iter();
    let mut taken = 0;
    for ((at, ..), result) in builds.iter().zip(built) {
        problems.extend(earlier.by_ref().take(at - taken));
        taken = *at;
        loaded.stackups.extend(result.stackup);
        problems.extend(result.errors);
    }
    problems.extend(earlier);
    loaded.problems = problems;
    read_coupon_files(&mut loaded, limits, conf);
    loaded
}

/// Read and parse every coupon's Touchstone files, relative to its
/// stackup and confined to the project root like libraries. A coupon with
/// an unreadable or malformed file is left out of the analysis (its
/// problems say why, at the coupon's entry, with the file's line; no byte
/// of the file is echoed); the rest of its stackup is analysed.
fn read_coupon_files(loaded: &mut Loaded, limits: &InputLimits, conf: &Confinement) {
    let base = conf.cwd().to_path_buf();
    let mut keep = Vec::new();
    for mut s in std::mem::take(&mut loaded.stackups) {
        let path = loaded.db.get(s.file).path.clone();
        let root = conf.root_of(&path);
        let dir = path.parent().unwrap_or(Path::new(".")).to_path_buf();
        let pairs: Vec<bool> = s
            .coupons
            .iter()
            .map(|c| s.net_classes[c.net_class].structure.is_differential())
            .collect();
        let mut usable = Vec::new();
        for (mut c, pair) in std::mem::take(&mut s.coupons).into_iter().zip(pairs) {
            let mut ok = true;
            for f in &mut c.files {
                let rel = Path::new(&f.path);
                let full = dir.join(rel);
                let read = if rel.is_absolute() {
                    Err((
                        "an absolute path; coupon files are relative to the stackup file and stay inside the project".to_string(),
                        "give the path relative to the stackup file",
                    ))
                } else {
                    refuse(conf, &full, &root)
                }
                .and_then(|canonical| {
                    files::read_regular(&canonical, limits.max_file_bytes)
                        .map_err(|e| (e.message(), "check the path, its permissions and its size"))
                })
                .and_then(|bytes| {
                    String::from_utf8(bytes).map_err(|_| {
                        (
                            "the file is not text (Touchstone files are ASCII)".to_string(),
                            "export the coupon as a Touchstone .sNp file",
                        )
                    })
                })
                .and_then(|text| {
                    let ports = crate::input::touchstone::ports_from_extension(&f.path);
                    crate::input::touchstone::parse(&text, ports).map_err(|e| {
                        (
                            format!("line {}: {}", e.line, e.message),
                            "fix the file, or export it again from the instrument",
                        )
                    })
                });
                match read {
                    Ok(net) => f.network = Some(net),
                    Err((why, help)) => {
                        ok = false;
                        loaded.problems.push(
                            Finding::new(
                                INVALID_INPUT,
                                loaded.db.locate(s.file, &f.pointer),
                                format!(
                                    "coupon `{}`: file `{}` ({}) is not used: {why}",
                                    c.name,
                                    f.path,
                                    display_path(&full, &base)
                                ),
                            )
                            .label("coupon file")
                            .with_help(help),
                        );
                    }
                }
            }
            if let Err((i, why)) = c.check_files(pair) {
                ok = false;
                let f = &c.files[i];
                loaded.problems.push(
                    Finding::new(
                        INVALID_INPUT,
                        loaded.db.locate(s.file, &f.pointer),
                        format!("coupon `{}`: file `{}` does not fit: {why}", c.name, f.path),
                    )
                    .label("coupon file")
                    .with_help("a single line's coupon is a two-port (.s2p), a pair's a four-port (.s4p, ports 1-2 one line, 3-4 the other); the files of one coupon share one sweep and one reference impedance"),
                );
            }
            if ok {
                usable.push(c);
            }
        }
        s.coupons = usable;
        keep.push(s);
    }
    loaded.stackups = keep;
}

/// Load one stackup from text (tests and fuzzing); `name` is its display
/// path; no library is read.
pub fn load_text(name: &str, text: &str, limits: &InputLimits, rules: &[RuleSpec]) -> Loaded {
    let mut loaded = Loaded::default();
    let file = SourceFile {
        path: PathBuf::from(name),
        display: name.to_string(),
        text: text.to_string(),
        spans: Spans::default(),
    };
    if let Some((id, tree, skip)) =
        admit(&mut loaded, prepare_text(file, limits, FileKind::Stackup))
    {
        let gaps = model::Gaps {
            elements: skip,
            library_failed: false,
        };
        let built = model::build_stackup(&loaded.db, id, &tree, &[], &gaps, rules);
        loaded.stackups.extend(built.stackup);
        loaded.problems.extend(built.errors);
    }
    loaded
}
