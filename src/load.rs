//! Reading files: bytes → text → YAML tree → schema check → model.
//!
//! Any problem becomes an `invalid-input` finding at its span; nothing here
//! panics on bad input.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use crate::finding::{Finding, INVALID_INPUT};
use crate::input::schema::{self, FileKind};
use crate::input::yaml::{self, YamlLimits};
use crate::model::{self, LibraryData, Stackup};
use crate::source::{FileId, Location, SourceDb, SourceFile};

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

/// Read a file into the database; on failure the problem is recorded and
/// the file is kept with empty text so findings can still name it.
fn read_file(
    loaded: &mut Loaded,
    path: &Path,
    base: &Path,
    limits: &InputLimits,
    kind: FileKind,
) -> Option<FileId> {
    let display = display_path(path, base);
    let mut file = SourceFile {
        path: path.to_path_buf(),
        display,
        text: String::new(),
        tree: None,
    };
    let problem = |msg: String, help: &str| (msg, help.to_string());
    let bytes = match std::fs::metadata(path) {
        Ok(m) if m.len() > limits.max_file_bytes => Err(problem(
            format!(
                "the file is {} bytes, above the {} byte limit for one stackup",
                m.len(),
                limits.max_file_bytes
            ),
            "raise the limit with --max-file-size if this file is genuine",
        )),
        Ok(_) => std::fs::read(path).map_err(|e| {
            problem(
                format!("cannot read the file: {e}"),
                "check the path and its permissions",
            )
        }),
        Err(e) => Err(problem(
            format!("cannot read the file: {e}"),
            "check the path and its permissions",
        )),
    };
    // For text that is not UTF-8, keep a lossy copy so the finding can
    // point at the bad byte (shown as U+FFFD) instead of the file start.
    let mut bad_span = 0..0;
    let text = bytes.and_then(|b| {
        String::from_utf8(b).map_err(|e| {
            let at = e.utf8_error().valid_up_to();
            let byte = e.as_bytes().get(at).copied().unwrap_or(0);
            let lossy = String::from_utf8_lossy(e.as_bytes()).into_owned();
            // The text before `at` is valid, so it is the same in the lossy copy.
            bad_span = at..at + char::REPLACEMENT_CHARACTER.len_utf8();
            file.text = lossy;
            problem(
                format!("the file is not valid UTF-8 (byte 0x{byte:02x} at offset {at})"),
                "save the file as UTF-8",
            )
        })
    });
    match text {
        Ok(t) => file.text = t,
        Err((msg, help)) => {
            let id = loaded.db.add(file);
            let mut at = whole_file(id);
            at.span = bad_span;
            loaded.problems.push(
                Finding::new(INVALID_INPUT, at, msg)
                    .label("unreadable")
                    .with_help(help),
            );
            return None;
        }
    }
    ingest(loaded, file, limits, kind)
}

/// The built-in library of generic material classes (typical values, not
/// vendor data), referenced as `libraries: [builtin:generic]`.
pub const BUILTIN_GENERIC: &str = include_str!("../materials/generic.materials.yaml");

/// Name by which stackups reference the built-in library.
pub const BUILTIN_GENERIC_NAME: &str = "builtin:generic";

/// Parse and schema-check a file whose text is already read.
fn ingest(
    loaded: &mut Loaded,
    mut file: SourceFile,
    limits: &InputLimits,
    kind: FileKind,
) -> Option<FileId> {
    let parsed = yaml::parse(&file.text, limits.yaml);
    let id = match parsed {
        Ok(tree) => {
            file.tree = Some(tree);
            loaded.db.add(file)
        }
        Err(e) => {
            let id = loaded.db.add(file);
            loaded.problems.push(
                Finding::new(
                    INVALID_INPUT,
                    Location {
                        file: id,
                        pointer: String::new(),
                        span: e.span,
                    },
                    e.message,
                )
                .label("YAML error here"),
            );
            return None;
        }
    };
    let errors = schema::validate(&loaded.db, id, kind);
    if !errors.is_empty() {
        loaded.problems.extend(errors);
        return None;
    }
    Some(id)
}

/// Load stackup files (and the libraries they reference).
pub fn load(paths: &[PathBuf], base: &Path, limits: &InputLimits) -> Loaded {
    let mut loaded = Loaded::default();
    let mut libraries: BTreeMap<PathBuf, Option<LibraryData>> = BTreeMap::new();
    for path in paths {
        let Some(id) = read_file(&mut loaded, path, base, limits, FileKind::Stackup) else {
            continue;
        };
        let mut libs = Vec::new();
        let mut libs_ok = true;
        let lib_entries: Vec<(usize, String)> = loaded
            .db
            .get(id)
            .tree
            .as_ref()
            .and_then(|t| t.get("libraries"))
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
            if !builtin && !lib_path.is_file() {
                loaded.problems.push(
                    Finding::new(
                        INVALID_INPUT,
                        loaded.db.locate(id, &format!("/libraries/{i}")),
                        format!(
                            "material library `{rel}` does not exist (looked for {})",
                            display_path(&lib_path, base)
                        ),
                    )
                    .label("no such file")
                    .with_help(format!(
                        "library paths are relative to the stackup file; `{BUILTIN_GENERIC_NAME}` is the built-in generic library"
                    )),
                );
                libs_ok = false;
                continue;
            }
            let key = std::fs::canonicalize(&lib_path).unwrap_or(lib_path.clone());
            if !libraries.contains_key(&key) {
                let lid = if builtin {
                    let file = SourceFile {
                        path: lib_path.clone(),
                        display: BUILTIN_GENERIC_NAME.to_string(),
                        text: BUILTIN_GENERIC.to_string(),
                        tree: None,
                    };
                    ingest(&mut loaded, file, limits, FileKind::Library)
                } else {
                    read_file(&mut loaded, &lib_path, base, limits, FileKind::Library)
                };
                let data = lid.and_then(|lid| {
                    let (data, errors) = model::load_library(&loaded.db, lid);
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
        if !libs_ok {
            continue;
        }
        match model::build_stackup(&loaded.db, id, &libs) {
            Ok(s) => loaded.stackups.push(s),
            Err(errors) => loaded.problems.extend(errors),
        }
    }
    loaded
}

/// Load one stackup from text (tests and fuzzing); `name` is its display path.
pub fn load_text(name: &str, text: &str, limits: &InputLimits) -> Loaded {
    let mut loaded = Loaded::default();
    let file = SourceFile {
        path: PathBuf::from(name),
        display: name.to_string(),
        text: text.to_string(),
        tree: None,
    };
    if let Some(id) = ingest(&mut loaded, file, limits, FileKind::Stackup) {
        match model::build_stackup(&loaded.db, id, &[]) {
            Ok(s) => loaded.stackups.push(s),
            Err(errors) => loaded.problems.extend(errors),
        }
    }
    loaded
}
