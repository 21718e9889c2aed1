//! `stackup-lint fix`: apply the edits the findings carry (see
//! [`crate::edit`]) to the YAML text at their spans, so comments, key
//! order, quoting and formatting outside the edited values stay as written.
//!
//! A plan is all or nothing. It refuses, and nothing is written, when two
//! edits overlap, when an edit falls inside an anchored node (an alias
//! elsewhere would change with it, unseen), when the edited text would not
//! read back as the value the edit meant, or (at [`write`]) when a file
//! changed on disk since it was read.

use std::collections::BTreeMap;
use std::ops::Range;
use std::path::{Path, PathBuf};

use crate::finding::{Edit, Finding};
use crate::input::yaml::{parse, parse_with_anchors, YamlLimits};
use crate::source::{line_col, FileId, SourceDb};

/// One fix as applied: the rule, what it does and where.
#[derive(Debug, Clone, PartialEq)]
pub struct Applied {
    pub rule: &'static str,
    pub description: String,
    /// 1-based line and column of the first edit, in the original text.
    pub line: usize,
    pub column: usize,
}

/// The new text of one file.
#[derive(Debug, Clone)]
pub struct FileChange {
    pub file: FileId,
    pub path: PathBuf,
    pub display: String,
    pub before: String,
    pub after: String,
    pub applied: Vec<Applied>,
}

/// What `fix` would change.
#[derive(Debug, Clone, Default)]
pub struct Plan {
    pub changes: Vec<FileChange>,
}

impl Plan {
    pub fn fixes(&self) -> usize {
        self.changes.iter().map(|c| c.applied.len()).sum()
    }

    /// The unified diff of every change (`a/` and `b/` prefixes, three
    /// lines of context).
    pub fn diff(&self) -> String {
        let mut out = String::new();
        for c in &self.changes {
            let diff = similar::TextDiff::from_lines(&c.before, &c.after);
            out.push_str(
                &diff
                    .unified_diff()
                    .context_radius(3)
                    .header(&format!("a/{}", c.display), &format!("b/{}", c.display))
                    .to_string(),
            );
        }
        out
    }
}

/// One edit with the finding it comes from.
struct Pending<'f> {
    edit: &'f Edit,
    finding: usize,
}

/// Plan the fixes of the findings that carry one: not suppressed, and of
/// `rules` when that is not empty. `Err` holds why the plan is refused.
pub fn plan(findings: &[Finding], db: &SourceDb, rules: &[String]) -> Result<Plan, Vec<String>> {
    let mut by_file: BTreeMap<FileId, Vec<Pending<'_>>> = BTreeMap::new();
    for (i, f) in findings.iter().enumerate() {
        let Some(fix) = &f.fix else { continue };
        if f.suppressed.is_some() || !(rules.is_empty() || rules.iter().any(|r| r == f.rule)) {
            continue;
        }
        for edit in &fix.edits {
            by_file
                .entry(edit.location.file)
                .or_default()
                .push(Pending { edit, finding: i });
        }
    }
    let mut plan = Plan::default();
    let mut refusals = Vec::new();
    for (file, mut pending) in by_file {
        let src = db.get(file);
        let key = |p: &Pending<'_>| {
            let l = &p.edit.location;
            (l.span.start, l.span.end, l.pointer.clone())
        };
        pending.sort_by_cached_key(key);
        // The same edit proposed by two findings is made once.
        pending.dedup_by(|b, a| {
            a.edit.location.span == b.edit.location.span && a.edit.text == b.edit.text
        });
        let at = |span: &Range<usize>| {
            let (l, c) = line_col(&src.text, span.start);
            format!("{}:{l}:{c}", src.display)
        };
        let rule_of = |p: &Pending<'_>| findings[p.finding].rule;
        for w in pending.windows(2) {
            let (a, b) = (&w[0].edit.location.span, &w[1].edit.location.span);
            // Two insertions at one place do not overlap; anything else
            // that touches the same bytes does.
            let both_inserts = a.is_empty() && b.is_empty();
            if !both_inserts && (b.start < a.end || a == b) {
                refusals.push(format!(
                    "{}: the fixes of `{}` and `{}` edit the same text; fix one with --rule, then run again",
                    at(b),
                    rule_of(&w[0]),
                    rule_of(&w[1])
                ));
            }
        }
        let anchored = match parse_with_anchors(&src.text, YamlLimits::default()) {
            Ok((_, a)) => a,
            Err(e) => {
                refusals.push(format!(
                    "{}: cannot read the YAML again: {}",
                    at(&e.span),
                    e.message
                ));
                continue;
            }
        };
        for p in &pending {
            let s = &p.edit.location.span;
            // An insertion changes the mapping it goes into.
            let changed = if s.is_empty() {
                p.edit
                    .location
                    .pointer
                    .rsplit_once('/')
                    .and_then(|(parent, _)| src.spans.node(parent))
                    .map_or(s.clone(), |n| n.span.clone())
            } else {
                s.clone()
            };
            let inside = |a: &Range<usize>| a.start <= changed.start && changed.end <= a.end;
            if anchored.iter().any(inside) {
                refusals.push(format!(
                    "{}: the fix of `{}` changes a value inside a YAML anchor (`&name`) or alias (`*name`), which share their text; edit it by hand",
                    at(s),
                    rule_of(p)
                ));
            }
        }
        // Back to front, so earlier spans stay valid.
        let mut after = src.text.clone();
        for p in pending.iter().rev() {
            let s = &p.edit.location.span;
            if s.end > after.len()
                || !after.is_char_boundary(s.start)
                || !after.is_char_boundary(s.end)
            {
                refusals.push(format!(
                    "{}: the fix of `{}` does not fit the file",
                    at(s),
                    rule_of(p)
                ));
                continue;
            }
            after.replace_range(s.clone(), &p.edit.text);
        }
        if let Err(why) = verify(&after, &pending) {
            refusals.push(format!(
                "{}: the edited file would not read back as intended ({why}); nothing changed",
                src.display
            ));
        }
        let mut applied: Vec<Applied> = Vec::new();
        let mut seen: Vec<usize> = Vec::new();
        for p in &pending {
            if seen.contains(&p.finding) {
                continue;
            }
            seen.push(p.finding);
            let f = &findings[p.finding];
            let (line, column) = line_col(&src.text, p.edit.location.span.start);
            applied.push(Applied {
                rule: f.rule,
                description: f
                    .fix
                    .as_ref()
                    .map(|x| x.description.clone())
                    .unwrap_or_default(),
                line,
                column,
            });
        }
        plan.changes.push(FileChange {
            file,
            path: src.path.clone(),
            display: src.display.clone(),
            before: src.text.clone(),
            after,
            applied,
        });
    }
    if refusals.is_empty() {
        Ok(plan)
    } else {
        Err(refusals)
    }
}

/// The edited text parses, and each edited node reads the value its edit
/// meant.
fn verify(after: &str, pending: &[Pending<'_>]) -> Result<(), String> {
    let root = parse(after, YamlLimits::default()).map_err(|e| e.message)?;
    for p in pending {
        let ptr = &p.edit.location.pointer;
        let node = root
            .pointer(ptr)
            .ok_or_else(|| format!("`{ptr}` is missing after the edit"))?;
        let got = after.get(node.span.clone()).unwrap_or_default();
        if got != p.edit.value {
            return Err(format!("`{ptr}` reads `{got}`, not `{}`", p.edit.value));
        }
    }
    Ok(())
}

/// Write the plan's files, all or nothing as far as the file system allows:
/// every file is first checked to be unchanged since it was read (refused
/// otherwise, before anything is written), then each is replaced
/// atomically (a temporary file beside it, its permissions kept, renamed
/// over it).
pub fn write(plan: &Plan, max_file_bytes: u64) -> Result<(), String> {
    for c in &plan.changes {
        let now = crate::files::read_regular(&c.path, max_file_bytes)
            .map_err(|e| format!("{}: cannot read it again: {}", c.display, e.message()))?;
        if now != c.before.as_bytes() {
            return Err(format!(
                "{} changed since it was read; nothing was written (run fix again)",
                c.display
            ));
        }
    }
    for c in &plan.changes {
        replace(&c.path, c.after.as_bytes())
            .map_err(|e| format!("{}: cannot write it: {e}", c.display))?;
    }
    Ok(())
}

/// Replace `path`'s content atomically, keeping its permissions.
fn replace(path: &Path, contents: &[u8]) -> std::io::Result<()> {
    use std::io::Write;
    let perms = std::fs::metadata(path)?.permissions();
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let mut tmp = tempfile::NamedTempFile::new_in(dir)?;
    tmp.write_all(contents)?;
    tmp.as_file().sync_all()?;
    tmp.as_file().set_permissions(perms)?;
    tmp.persist(path).map_err(|e| e.error)?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::finding::Finding;
    use crate::input::yaml::parse;
    use crate::source::{SourceFile, Spans};

    fn db(path: PathBuf, text: &str) -> SourceDb {
        let node = parse(text, YamlLimits::default()).unwrap();
        let mut db = SourceDb::default();
        db.add(SourceFile {
            path,
            display: "t.yaml".into(),
            text: text.into(),
            spans: Spans::new(node.spans()),
        });
        db
    }

    fn finding(rule: &'static str, db: &SourceDb, edit: Option<Edit>) -> Finding {
        Finding::new(rule, db.locate(0, ""), "m").with_fix("d", [edit])
    }

    const TEXT: &str = "# a comment\nw: 0.2 mm  # drawn\ns: 0.1 mm\nd: {material: m}\n";

    #[test]
    fn edits_apply_and_keep_everything_else() {
        let d = db("t.yaml".into(), TEXT);
        let f = vec![
            finding(
                "a",
                &d,
                crate::edit::quantity(&d, 0, "/w", 0.21e-3, 1e-7, crate::units::Dimension::Length),
            ),
            finding(
                "b",
                &d,
                crate::edit::set_key(&d, 0, "/d", "modelled-dk", "3.5"),
            ),
            // The same edit from a second finding is made once.
            finding(
                "c",
                &d,
                crate::edit::set_key(&d, 0, "/d", "modelled-dk", "3.5"),
            ),
        ];
        let p = plan(&f, &d, &[]).unwrap();
        assert_eq!(
            p.changes[0].after,
            "# a comment\nw: 0.21 mm  # drawn\ns: 0.1 mm\nd: {material: m, modelled-dk: 3.5}\n"
        );
        assert_eq!(p.fixes(), 2);
        assert!(p
            .diff()
            .contains("-w: 0.2 mm  # drawn\n+w: 0.21 mm  # drawn\n"));
        // Only the named rule's.
        let p = plan(&f, &d, &["b".to_string()]).unwrap();
        assert_eq!(
            p.changes[0].after,
            TEXT.replace("{material: m}", "{material: m, modelled-dk: 3.5}")
        );
    }

    #[test]
    fn overlapping_edits_are_refused() {
        let d = db("t.yaml".into(), TEXT);
        let f = vec![
            finding("a", &d, crate::edit::set_key(&d, 0, "", "w", "0.3 mm")),
            finding("b", &d, crate::edit::set_key(&d, 0, "", "w", "0.4 mm")),
        ];
        let why = plan(&f, &d, &[]).unwrap_err();
        assert!(why[0].contains("`a` and `b` edit the same text"), "{why:?}");
    }

    #[test]
    fn a_value_in_an_anchor_is_refused() {
        let text = "w: &width 0.2 mm\ns: *width\n";
        let d = db("t.yaml".into(), text);
        // The anchored value, and the alias of it.
        for ptr in ["/w", "/s"] {
            let e = crate::edit::set_key(&d, 0, "", &ptr[1..], "0.3 mm");
            assert!(e.is_some());
            let why = plan(&[finding("a", &d, e)], &d, &[]).unwrap_err();
            assert!(why[0].contains("inside a YAML anchor"), "{why:?}");
        }
        // Into an anchored mapping, and through an alias of it (whose
        // children's spans are the anchor's).
        let text = "d: &m {material: m, t: 1 mm}\ne: *m\nf: &n\n  material: m\n";
        let d = db("t.yaml".into(), text);
        for e in [
            crate::edit::set_key(&d, 0, "/f", "modelled-dk", "3.5"),
            crate::edit::set_key(&d, 0, "/d", "modelled-dk", "3.5"),
            crate::edit::quantity(&d, 0, "/e/t", 2e-3, 1e-7, crate::units::Dimension::Length),
        ] {
            assert!(e.is_some());
            let why = plan(&[finding("a", &d, e)], &d, &[]).unwrap_err();
            assert!(why[0].contains("inside a YAML anchor"), "{why:?}");
        }
    }

    #[test]
    fn a_file_changed_since_it_was_read_is_not_written() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("t.yaml");
        std::fs::write(&path, TEXT).unwrap();
        let d = db(path.clone(), TEXT);
        let e = crate::edit::quantity(&d, 0, "/s", 0.12e-3, 1e-7, crate::units::Dimension::Length);
        let p = plan(&[finding("a", &d, e)], &d, &[]).unwrap();
        std::fs::write(&path, format!("{TEXT}# edited meanwhile\n")).unwrap();
        let why = write(&p, 1 << 20).unwrap_err();
        assert!(why.contains("changed since it was read"), "{why}");
        assert!(std::fs::read_to_string(&path)
            .unwrap()
            .ends_with("meanwhile\n"));
        // Unchanged: written, permissions kept.
        std::fs::write(&path, TEXT).unwrap();
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            std::fs::set_permissions(&path, std::fs::Permissions::from_mode(0o640)).unwrap();
        }
        write(&p, 1 << 20).unwrap();
        assert!(std::fs::read_to_string(&path)
            .unwrap()
            .contains("s: 0.12 mm\n"));
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            let mode = std::fs::metadata(&path).unwrap().permissions().mode();
            assert_eq!(mode & 0o777, 0o640);
        }
    }

    #[test]
    fn an_edit_that_would_not_read_back_is_refused() {
        let d = db("t.yaml".into(), TEXT);
        // A hand-made edit whose text breaks the mapping.
        let bad = Edit {
            location: d.locate(0, "/s"),
            text: "0.1 mm\nx".into(),
            value: "0.1 mm".into(),
        };
        let why = plan(&[finding("a", &d, Some(bad))], &d, &[]).unwrap_err();
        assert!(why[0].contains("would not read back"), "{why:?}");
    }
}
