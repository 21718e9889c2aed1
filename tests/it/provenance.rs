//! The provenance table (`crates/stackup-physics/PROVENANCE.md`) lists every
//! named number: each `pub const` of the physics crate and of
//! `src/analysis/`, and each rule option's default. These tests keep the
//! table complete and well-formed as constants and options are added.

use std::collections::BTreeSet;
use std::path::Path;

use super::common::root;

const TABLE: &str = "crates/stackup-physics/PROVENANCE.md";
const KINDS: [&str; 5] = [
    "published",
    "common practice",
    "from memory",
    "calibrated",
    "definition",
];

/// One row of the table: its six cells, trimmed.
struct Row {
    line: usize,
    cells: Vec<String>,
}

/// The data rows of every table in `text` (header and separator rows left out).
fn rows(text: &str) -> Vec<Row> {
    text.lines()
        .enumerate()
        .filter(|(_, l)| l.starts_with('|'))
        .map(|(i, l)| Row {
            line: i + 1,
            cells: l
                .trim()
                .trim_start_matches('|')
                .trim_end_matches('|')
                .split('|')
                .map(|c| c.trim().to_string())
                .collect(),
        })
        .filter(|r| r.cells[0] != "name" && !r.cells[0].starts_with("---"))
        .collect()
}

/// Every `pub const NAME` (at any indentation, so associated constants too)
/// in the `.rs` files under `dir`, with the file it is in.
fn pub_consts(dir: &Path, out: &mut Vec<(String, String)>) {
    let mut entries: Vec<_> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .collect();
    entries.sort();
    for p in entries {
        if p.is_dir() {
            pub_consts(&p, out);
        } else if p.extension().is_some_and(|e| e == "rs") {
            for line in std::fs::read_to_string(&p).unwrap().lines() {
                if let Some(rest) = line.trim_start().strip_prefix("pub const ") {
                    let name: String = rest
                        .chars()
                        .take_while(|c| c.is_ascii_alphanumeric() || *c == '_')
                        .collect();
                    let file = p.strip_prefix(root()).unwrap_or(&p);
                    out.push((name, file.display().to_string()));
                }
            }
        }
    }
}

/// A constant's name and the file it is in.
type Const = (String, String);
/// `rule:<name>/<key>` and the option's default as its page writes it.
type RuleOption = (String, &'static str);

/// What the table must list: the constants and every rule option.
fn required() -> (Vec<Const>, Vec<RuleOption>) {
    let mut consts = Vec::new();
    pub_consts(&root().join("crates/stackup-physics/src"), &mut consts);
    pub_consts(&root().join("src/analysis"), &mut consts);
    pub_consts(&root().join("src/model"), &mut consts);
    let options = stackup_lint::rules::all_meta()
        .into_iter()
        .flat_map(|m| {
            m.options
                .iter()
                .map(move |o| (format!("rule:{}/{}", m.name, o.key), o.default_text))
        })
        .collect();
    (consts, options)
}

fn missing(table: &str) -> Vec<String> {
    let listed: BTreeSet<String> = rows(table)
        .into_iter()
        .map(|r| r.cells[0].clone())
        .collect();
    let (consts, options) = required();
    let mut missing: Vec<String> = consts
        .into_iter()
        .filter(|(n, _)| !listed.contains(n))
        .map(|(n, f)| format!("{n} ({f})"))
        .collect();
    missing.extend(
        options
            .into_iter()
            .filter(|(n, _)| !listed.contains(n))
            .map(|(n, _)| n),
    );
    missing
}

#[test]
fn every_constant_and_rule_option_is_in_the_table() {
    let table = std::fs::read_to_string(root().join(TABLE)).unwrap();
    let missing = missing(&table);
    assert!(
        missing.is_empty(),
        "{TABLE} lacks a row for: {}",
        missing.join(", ")
    );
}

#[test]
fn the_check_sees_a_missing_row() {
    // The completeness check must fail when a row goes: drop one constant's
    // row and one rule option's row from the real table.
    let table = std::fs::read_to_string(root().join(TABLE)).unwrap();
    let cut: String = table
        .lines()
        .filter(|l| {
            !l.starts_with("| ETA0 |") && !l.starts_with("| rule:via-stub-resonance/margin |")
        })
        .map(|l| format!("{l}\n"))
        .collect();
    assert_eq!(cut.lines().count() + 2, table.lines().count());
    let m = missing(&cut);
    assert_eq!(m.len(), 2, "{m:?}");
    assert!(m[0].starts_with("ETA0 ("), "{m:?}");
    assert_eq!(m[1], "rule:via-stub-resonance/margin");
}

#[test]
fn every_row_is_well_formed_and_current() {
    let table = std::fs::read_to_string(root().join(TABLE)).unwrap();
    let (consts, options) = required();
    let known: BTreeSet<&str> = consts
        .iter()
        .map(|(n, _)| n.as_str())
        .chain(options.iter().map(|(n, _)| n.as_str()))
        .collect();
    // Test function names, to check the "checked by" column.
    let mut sources = Vec::new();
    for dir in ["crates/stackup-physics", "src", "tests"] {
        rs_files(&root().join(dir), &mut sources);
    }
    let all_tests: String = sources
        .iter()
        .map(|p| std::fs::read_to_string(p).unwrap())
        .collect();
    let rows = rows(&table);
    assert!(rows.len() >= known.len(), "{} rows", rows.len());
    for r in &rows {
        let at = format!("{TABLE}:{}", r.line);
        assert_eq!(r.cells.len(), 6, "{at}: six columns expected");
        let [name, value, used, source, kind, checked] = [0, 1, 2, 3, 4, 5].map(|i| &r.cells[i]);
        assert!(
            known.contains(name.as_str()),
            "{at}: `{name}` is no longer a constant or rule option"
        );
        assert!(
            KINDS.contains(&kind.as_str()),
            "{at}: kind `{kind}` is not one of {KINDS:?}"
        );
        for (col, v) in [("value", value), ("used in", used), ("source", source)] {
            assert!(!v.is_empty(), "{at}: empty {col}");
        }
        if checked != "—" {
            for test in checked.split("; ") {
                assert!(
                    all_tests.contains(&format!("fn {test}(")),
                    "{at}: no test function `{test}`"
                );
            }
        }
    }
    // A rule option's value is its default as the rule page writes it.
    for (name, default_text) in &options {
        let row = rows.iter().find(|r| &r.cells[0] == name).unwrap();
        assert_eq!(&row.cells[1], default_text, "{TABLE}:{}: {name}", row.line);
    }
}

fn rs_files(dir: &Path, out: &mut Vec<std::path::PathBuf>) {
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        if p.is_dir() {
            if p.file_name().is_some_and(|n| n != "target") {
                rs_files(&p, out);
            }
        } else if p.extension().is_some_and(|e| e == "rs") {
            out.push(p);
        }
    }
}
