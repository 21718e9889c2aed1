//! The bad-input corpus (tests/bad-input/): every file is the valid baseline
//! in tests/common/ with exactly one deliberate problem. Each is checked
//! through the real binary, as JSON and as human output: exit code 2, no
//! panic, exactly one `invalid-input` finding, its message and its place.
//!
//! The expectations are written out by hand in `CASES`, one row per file,
//! so each message and span is reviewed rather than recorded. Line and
//! column are 1-based, columns count Unicode scalar values (the JSON report
//! convention, which SARIF's `unicodeCodePoints` column kind shares).

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use serde_json::Value;

/// One corpus file and the finding it must produce.
struct Case {
    /// File name under tests/bad-input/.
    file: &'static str,
    /// A fragment of the finding's message.
    message: &'static str,
    line: usize,
    column: usize,
    /// The exact source text under the span, when the span is one line.
    span: Option<&'static str>,
    /// The file the finding is in, when it is not the stackup itself
    /// (a broken library).
    in_file: Option<&'static str>,
    /// The finding's help text, exactly, where it matters (the "did you
    /// mean" of a misspelt name, or that none is guessed).
    help: Option<&'static str>,
}

const fn case(
    file: &'static str,
    message: &'static str,
    line: usize,
    column: usize,
    span: Option<&'static str>,
) -> Case {
    Case {
        file,
        message,
        line,
        column,
        span,
        in_file: None,
        help: None,
    }
}

/// A case whose help text is given exactly.
const fn with_help(c: Case, help: &'static str) -> Case {
    Case {
        help: Some(help),
        ..c
    }
}

#[rustfmt::skip]
const CASES: &[Case] = &[
    // Malformed YAML: the place the author must edit, not where the parser gave up.
    case("yaml-unclosed-flow-list.stackup.yaml", "this `[` is never closed with `]`", 34, 17, Some("[")),
    case("yaml-bad-indentation.stackup.yaml", "did not find expected key (check the indentation", 22, 6, None),
    case("yaml-tab-indentation.stackup.yaml", "a tab character is used for indentation", 22, 1, Some("\t")),
    case("yaml-duplicate-key.stackup.yaml", "key `role` appears twice in the same mapping (first at line 26)", 28, 7, Some("role")),
    case("second-document.stackup.yaml", "found a second `---` document", 34, 1, Some("---")),
    case("empty.stackup.yaml", "the file is empty", 1, 1, None),
    case("comment-only.stackup.yaml", "the file is empty", 1, 1, None),
    case("top-level-list.stackup.yaml", "the file should be a mapping, found a list", 2, 1, None),
    case("non-utf8.stackup.yaml", "not valid UTF-8 (byte 0xb5 at offset 147)", 4, 12, Some("\u{FFFD}")),
    // Input budgets: these must stop early, at the node that crosses the limit.
    case("alias-bomb.stackup.yaml", "expands to more than 200000 nodes", 9, 10, Some("*a4")),
    case("nesting-100.stackup.yaml", "nests deeper than 64 levels", 5, 72, Some("[")),
    // Units and numbers.
    // No unit is near `furlong`: the help names the units instead of guessing.
    with_help(case("unit-unknown.stackup.yaml", "unknown unit `furlong`", 23, 18, Some("4 furlong")), "write dielectric thickness as a length (mm, um, mil, in, m)"),
    case("unit-wrong-dimension.stackup.yaml", "`GHz` is not a unit of a length", 23, 18, Some("4 GHz")),
    case("unit-bare-number.stackup.yaml", "`thickness` is the bare number 0.2", 23, 18, Some("0.2")),
    case("unit-missing-copper.stackup.yaml", "copper thickness: a bare number is ambiguous here", 17, 18, Some("\"35\"")),
    case("thickness-negative.stackup.yaml", "dielectric thickness must be greater than 0", 23, 18, Some("-0.2 mm")),
    case("thickness-zero.stackup.yaml", "copper thickness must be greater than 0", 27, 18, Some("0 um")),
    case("thickness-nan-text.stackup.yaml", "copper thickness: the number is not finite", 17, 18, Some("NaN mm")),
    case("thickness-overflow.stackup.yaml", "dielectric thickness: the number is not finite", 23, 18, Some("1e999 mm")),
    case("dk-below-one.stackup.yaml", "material `fr4` has Dk 0.8, which is not physical", 7, 9, Some("0.8")),
    case("df-one.stackup.yaml", "material `fr4` has Df 1, outside 0 to 1", 8, 9, Some("1.0")),
    case("dk-nan.stackup.yaml", "`dk` is `.nan`, which is not a finite number", 7, 9, Some(".nan")),
    case("df-neg-inf.stackup.yaml", "`df` is `-.inf`, which is not a finite number", 8, 9, Some("-.inf")),
    case("dk-quoted.stackup.yaml", "`dk` should be a number, found the text \"4.2\"", 7, 9, Some("\"4.2\"")),
    // Contradictory or impossible data is reported, never silently replaced.
    case("dk-above-any-board.stackup.yaml", "material `fr4` has Dk 1000, above any board dielectric", 7, 9, Some("1000")),
    case("df-above-limit.stackup.yaml", "material `fr4` has Df 0.9, above 0.1: no board dielectric is that lossy", 8, 9, Some("0.9")),
    case("dk-tolerance-negative.stackup.yaml", "material `fr4` has a negative Dk tolerance (-0.1)", 10, 19, Some("-0.1")),
    case("points-not-causal.stackup.yaml", "no causal dielectric model fits its points; the best (Djordjevic-Sarkar) fit gives Dk 4.29 / Df 0.0288 at 3 GHz where the data say Dk 1 / Df 0.01", 10, 9, Some("{frequency: 3 GHz, dk: 1.0, df: 0.01}")),
    case("points-same-frequency.stackup.yaml", "material `fr4` gives two different points at 1 GHz: Dk 4.2 / Df 0.018 and Dk 4.4 / Df 0.018", 9, 21, Some("1 GHz")),
    case("modelled-dk-above-any-board.stackup.yaml", "modelled Dk 500 is above any board dielectric", 24, 20, Some("500")),
    case("impedance-tolerance-60-percent.stackup.yaml", "impedance tolerance ±30.0 Ω is 60 % of the 50.0 Ω target", 33, 44, Some("60 %")),
    case("fill-150-percent.stackup.yaml", "copper fill must lie between 0 and 1 (0 % to 100 %), got 150 %", 28, 13, Some("150 %")),
    // Names that do not resolve.
    case("material-missing.stackup.yaml", "material `fr5` is not defined", 22, 17, Some("fr5")),
    // Too far from `std-ed` for a guess: the help lists the foils.
    with_help(case("foil-unknown.stackup.yaml", "foil `std-rtf` is not defined", 18, 35, Some("std-rtf")), "defined foils: std-ed"),
    // Measured coupons: every bad Touchstone file is named at the stackup's
    // entry for it, with the file's line, and nothing is analysed.
    case("coupon-one-port-in-s2p.stackup.yaml", "line 3: frequency point 1 (line 3) holds 3 values, expected 9", 38, 13, Some("coupons/one-port-in-s2p.s2p")),
    case("coupon-frequency-falls.stackup.yaml", "line 5: frequency '2.0' GHz (line 5) is below the previous point's '3.0' GHz", 38, 13, Some("coupons/frequency-falls.s2p")),
    case("coupon-nan-value.stackup.yaml", "line 4: real part 'nan' is not a finite number", 38, 13, Some("coupons/nan-value.s2p")),
    case("coupon-truncated.stackup.yaml", "line 5: frequency point 3 (line 5) holds 4 values, expected 9", 38, 13, Some("coupons/truncated.s2p")),
    case("coupon-y-parameters.stackup.yaml", "line 1: the option line declares Y parameters (admittance): only S parameters are read", 38, 13, Some("coupons/y-parameters.s2p")),
    case("coupon-data-before-option-line.stackup.yaml", "line 1: data before the option line", 38, 13, Some("coupons/data-before-option-line.s2p")),
    case("coupon-v2-count-mismatch.stackup.yaml", "line 9: [Number of Frequencies] is 3 (line 5) but the network data holds 2 frequency points", 38, 13, Some("coupons/v2-count-mismatch.s2p")),
    case("coupon-v2-unknown-keyword.stackup.yaml", "line 4: unknown keyword [Colour]", 38, 13, Some("coupons/v2-unknown-keyword.s2p")),
    case("coupon-negative-magnitude.stackup.yaml", "line 2: magnitude '-0.9' is negative", 38, 13, Some("coupons/negative-magnitude.s2p")),
    case("coupon-empty.stackup.yaml", "line 1: empty file: no option line and no data", 38, 13, Some("coupons/empty.s2p")),
    case("coupon-not-text.stackup.yaml", "the file is not text (Touchstone files are ASCII)", 38, 13, Some("coupons/not-text.s2p")),
    case("coupon-missing.stackup.yaml", "file `coupons/no-such-file.s2p`", 38, 13, Some("coupons/no-such-file.s2p")),
    case("coupon-ports-for-class.stackup.yaml", "does not fit: it has 4 ports, and a coupon of a single line needs 2", 38, 13, Some("coupons/four-port.s4p")),
    case("coupon-different-sweeps.stackup.yaml", "its sweep differs from the coupon's first file's (2.500 GHz where that has 2 GHz)", 38, 33, Some("coupons/grid-b.s2p")),
    case("coupon-outside-project.stackup.yaml", "the path resolves outside the project root", 38, 13, Some("../../../../../../../etc/hostname")),
    case("coupon-absolute-path.stackup.yaml", "an absolute path; coupon files are relative to the stackup file", 38, 13, Some("/etc/hostname.s2p")),
    case("huray-half-sphere-data.stackup.yaml", "a fitted Huray model needs both sphere keys; `huray-surface-ratio` is missing", 14, 19, Some("0.5 um")),
    case("huray-data-without-huray.stackup.yaml", "sphere data of a Huray model without `loss-model: huray`", 13, 19, Some("0.5 um")),
    case("layer-name-duplicate.stackup.yaml", "layer name `L1` is used twice (first at line 14)", 24, 11, Some("L1")),
    // `L1` and `L2` are equally near `L7`: no guess between them.
    with_help(case("netclass-layer-unknown.stackup.yaml", "there is no layer named `L7`", 31, 12, Some("L7")), "copper layers: L1, L2"),
    case("netclass-layer-dielectric.stackup.yaml", "layer `core` is a dielectric", 31, 12, Some("core")),
    case("reference-unknown.stackup.yaml", "there is no layer named `L9`", 34, 22, Some("L9")),
    case("library-missing.stackup.yaml", "material library `no-such.materials.yaml` does not exist", 6, 5, Some("no-such.materials.yaml")),
    Case { in_file: Some("broken.materials.yaml"), ..case("library-broken.stackup.yaml", "material `airy-foam` has Dk 0.95, which is not physical", 11, 9, Some("0.95")) },
    Case { in_file: Some("typo.materials.yaml"), ..case("library-schema-error.stackup.yaml", "unknown key `frequncy` in `fr4`", 8, 5, Some("frequncy")) },
    // Structure (JSON Schema).
    case("missing-layers.stackup.yaml", "the file is missing the required key `layers`", 3, 1, None),
    case("missing-width.stackup.yaml", "the `net-classes` entry named `se50` is missing the required key `width`", 29, 5, None),
    case("missing-role.stackup.yaml", "`copper` is missing the required key `role`", 25, 5, Some("copper")),
    with_help(case("unknown-key-typo.stackup.yaml", "unknown key `thicknes` in `dielectric`", 23, 7, Some("thicknes")), "did you mean `thickness`?"),
    with_help(case("unknown-key-optional.stackup.yaml", "unknown key `platted` in `copper`", 19, 7, Some("platted")), "did you mean `plated`?"),
    with_help(case("structure-enum.stackup.yaml", "the text \"strip-line\", which is not one of", 30, 16, Some("strip-line")), "did you mean `stripline`?"),
    case("version-2.stackup.yaml", "`stackup-lint` must be 1, found the number 2", 3, 15, Some("2")),
    // No version key: not read as a stackup at all, and not quoted beyond
    // a short excerpt of its first line (it could be any file).
    case("version-missing.stackup.yaml", "this is not a stackup: it has no `stackup-lint:` key (it starts with \"board…\")", 1, 1, None),
    case("layer-both-kinds.stackup.yaml", "the `layers` entry named `L2` must be either a copper layer", 24, 5, None),
    case("layer-neither-kind.stackup.yaml", "the `layers` entry named `core` must be either a copper layer", 19, 5, Some("name: core")),
    case("dielectric-no-thickness.stackup.yaml", "needs `thickness` (pressed) or `nominal-thickness`", 21, 7, None),
    // Net classes.
    case("diff-no-spacing.stackup.yaml", "differential net class `se50` needs `spacing`", 29, 5, None),
    case("coplanar-no-gap.stackup.yaml", "coplanar net class `se50` needs `gap`", 29, 5, None),
    case("etch-factor-etched-away.stackup.yaml", "etch factor 0.1 on 35.0 µm copper leaves no top width", 34, 18, Some("0.1")),
    case("top-width-wider.stackup.yaml", "top width 350.0 µm is wider than the base width 300.0 µm", 34, 16, Some("0.35 mm")),
    // Settings.
    case("settings-unknown-rule.stackup.yaml", "there is no rule named `no-such-rule`", 36, 5, Some("no-such-rule")),
    case("suppress-no-reason.stackup.yaml", "entry 1 of `suppress` is missing the required key `reason`", 36, 7, None),
    case("suppress-unknown-rule.stackup.yaml", "suppression names `no-such-rule`, which is not a rule", 36, 13, Some("no-such-rule")),
    // Positions survive CRLF line ends and multi-byte characters.
    case("crlf-line-endings.stackup.yaml", "unknown unit `furlong`", 32, 12, Some("0.3 furlong")),
    case("non-ascii-before-error.stackup.yaml", "foil `stöd` is not defined", 15, 74, Some("stöd")),
    // Suggestions: a misspelt or habitual name gets the one it most likely
    // means (src/suggest.rs), one case per kind of name.
    with_help(case("suggest-key-alias.stackup.yaml", "unknown key `diff-spacing` in the `net-classes` entry named `se50`", 33, 5, Some("diff-spacing")), "did you mean `spacing`?"),
    with_help(case("suggest-settings-rule.stackup.yaml", "there is no rule named `impedance-of-target`", 36, 5, Some("impedance-of-target")), "did you mean `impedance-off-target`?"),
    with_help(case("suggest-suppress-rule.stackup.yaml", "suppression names `broadside-signal-layer`, which is not a rule", 36, 13, Some("broadside-signal-layer")), "did you mean `broadside-signal-layers`?"),
    with_help(case("suggest-material.stackup.yaml", "material `fr-4` is not defined in this file or its libraries", 22, 17, Some("fr-4")), "did you mean `fr4`?"),
    with_help(case("suggest-foil.stackup.yaml", "foil `std-edd` is not defined", 18, 35, Some("std-edd")), "did you mean `std-ed`?"),
    with_help(case("suggest-layer.stackup.yaml", "there is no layer named `l1`", 31, 12, Some("l1")), "did you mean `L1`?"),
    with_help(case("suggest-net-class.stackup.yaml", "there is no net class named `se5`", 40, 51, Some("se5")), "did you mean `se50`?"),
    with_help(case("suggest-unit.stackup.yaml", "dielectric thickness: unknown unit `mill`", 23, 18, Some("8 mill")), "did you mean `8 mil`?"),
    with_help(case("suggest-unit-word.stackup.yaml", "dielectric thickness: unknown unit `millimetres`", 23, 18, Some("0.2 millimetres")), "did you mean `0.2 mm`?"),
    with_help(case("settings-unknown-option.stackup.yaml", "rule `broadside-signal-layers` has no option `min-separation`", 38, 7, Some("min-separation")), "did you mean `min-separation-ratio`?"),
];

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn corpus() -> PathBuf {
    root().join("tests/bad-input")
}

/// Run the binary in `dir` with `args`.
fn run(dir: &Path, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_stackup-lint"))
        .args(args)
        .current_dir(dir)
        .env_remove("NO_COLOR")
        .output()
        .expect("the stackup-lint binary runs")
}

fn no_panic(out: &Output) -> Result<(), String> {
    let stderr = String::from_utf8_lossy(&out.stderr);
    if stderr.contains("panicked") {
        Err(format!("panicked: {stderr}"))
    } else {
        Ok(())
    }
}

/// The text of a 1-based (line, column) .. (end line, end column) span, in
/// Unicode scalar values, with CRLF line ends taken as LF.
fn span_text(
    text: &str,
    line: usize,
    col: usize,
    end_line: usize,
    end_col: usize,
) -> Option<String> {
    if line != end_line {
        return None;
    }
    let l = text.split('\n').nth(line - 1)?.trim_end_matches('\r');
    Some(
        l.chars()
            .skip(col - 1)
            .take(end_col.saturating_sub(col))
            .collect(),
    )
}

/// Human output with miette's frame characters and line wrapping removed,
/// so a message fragment can be found even when it was wrapped.
fn flatten(human: &str) -> String {
    human
        .split_whitespace()
        .filter(|w| *w != "│")
        .collect::<Vec<_>>()
        .join(" ")
}

fn check_case(c: &Case) -> Result<(), String> {
    let dir = corpus();
    // JSON report.
    let out = run(&dir, &["check", c.file, "--format", "json"]);
    no_panic(&out)?;
    if out.status.code() != Some(2) {
        return Err(format!(
            "JSON run: exit code {:?}, expected 2",
            out.status.code()
        ));
    }
    let report: Value = serde_json::from_slice(&out.stdout)
        .map_err(|e| format!("JSON run: stdout is not JSON ({e})"))?;
    let findings: Vec<&Value> = report["findings"]
        .as_array()
        .ok_or("JSON run: no findings array")?
        .iter()
        .filter(|f| f["rule"] == "invalid-input")
        .collect();
    let messages: Vec<&str> = findings
        .iter()
        .filter_map(|f| f["message"].as_str())
        .collect();
    if findings.len() != 1 {
        return Err(format!(
            "expected exactly one invalid-input finding (one problem, no follow-on noise), got {}: {messages:#?}",
            findings.len()
        ));
    }
    let f = findings[0];
    let message = f["message"].as_str().unwrap_or_default();
    if !message.contains(c.message) {
        return Err(format!("message {message:?} lacks {:?}", c.message));
    }
    if let Some(want) = c.help {
        if f["help"].as_str() != Some(want) {
            return Err(format!("help {}, expected {want:?}", f["help"]));
        }
    }
    if message.starts_with(|ch: char| ch.is_uppercase()) || message.ends_with('.') {
        return Err(format!(
            "message {message:?} should start lowercase and have no trailing period"
        ));
    }
    let file = c.in_file.unwrap_or(c.file);
    if f["file"] != file {
        return Err(format!("finding is in {}, expected {file}", f["file"]));
    }
    let at = |k: &str| f[k].as_u64().unwrap_or(0) as usize;
    let (line, column) = (at("line"), at("column"));
    if (line, column) != (c.line, c.column) {
        return Err(format!(
            "finding at {line}:{column}, expected {}:{} ({message})",
            c.line, c.column
        ));
    }
    if let Some(want) = c.span {
        let bytes = std::fs::read(dir.join(file)).map_err(|e| e.to_string())?;
        let text = String::from_utf8_lossy(&bytes);
        let got = span_text(&text, line, column, at("end_line"), at("end_column"));
        if got.as_deref() != Some(want) {
            return Err(format!("span text {got:?}, expected {want:?}"));
        }
    }
    // Human output, no colour.
    let out = run(&dir, &["check", c.file, "--color", "never"]);
    no_panic(&out)?;
    if out.status.code() != Some(2) {
        return Err(format!(
            "human run: exit code {:?}, expected 2",
            out.status.code()
        ));
    }
    let human = String::from_utf8_lossy(&out.stdout);
    if human.contains("\u{1b}[") {
        return Err("human run: colour codes despite --color never".into());
    }
    let flat = flatten(&human);
    if !flat.contains(&flatten(c.message)) {
        return Err(format!("human output lacks {:?}:\n{human}", c.message));
    }
    // The terminal header must name the same place as the JSON report. Its
    // column is compared only on ASCII lines: the terminal renderer counts
    // bytes, not characters, before a multi-byte character (a known
    // discrepancy in the human output, not in the input stage).
    let source =
        String::from_utf8_lossy(&std::fs::read(dir.join(file)).map_err(|e| e.to_string())?)
            .into_owned();
    let ascii_line = source
        .split('\n')
        .nth(c.line - 1)
        .is_some_and(str::is_ascii);
    let place = if ascii_line {
        format!("[{file}:{}:{}]", c.line, c.column)
    } else {
        format!("[{file}:{}:", c.line)
    };
    if !human.contains(&place) {
        return Err(format!("human output lacks {place}:\n{human}"));
    }
    Ok(())
}

#[test]
fn every_corpus_file_has_one_row() {
    let mut files: Vec<String> = std::fs::read_dir(corpus())
        .expect("tests/bad-input exists")
        .map(|e| {
            e.expect("readable entry")
                .file_name()
                .to_string_lossy()
                .into_owned()
        })
        .filter(|n| n.ends_with(".stackup.yaml"))
        .collect();
    files.sort();
    let mut rows: Vec<String> = CASES.iter().map(|c| c.file.to_string()).collect();
    rows.sort();
    let mut unique = rows.clone();
    unique.dedup();
    assert_eq!(rows, unique, "a file has two rows");
    assert_eq!(files, rows, "corpus files and table rows differ");
    assert!(
        files.len() >= 30,
        "the corpus has only {} files",
        files.len()
    );
}

#[test]
fn every_bad_input_fails_with_its_finding() {
    let failures: Vec<String> = CASES
        .iter()
        .filter_map(|c| check_case(c).err().map(|e| format!("{}: {e}", c.file)))
        .collect();
    assert!(
        failures.is_empty(),
        "{} of {} cases failed:\n{}",
        failures.len(),
        CASES.len(),
        failures.join("\n")
    );
}

/// The corpus files are this baseline with one change each, so the
/// baseline itself must load with no input finding (rules may still have
/// something to say about its electrical design).
#[test]
fn baseline_loads_cleanly() {
    let out = run(
        &root(),
        &[
            "check",
            "tests/common/baseline.stackup.yaml",
            "--format",
            "json",
        ],
    );
    no_panic(&out).unwrap();
    let report: Value = serde_json::from_slice(&out.stdout).expect("JSON report");
    let input: Vec<&Value> = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["rule"] == "invalid-input")
        .collect();
    assert!(input.is_empty(), "{input:#?}");
    assert!(matches!(out.status.code(), Some(0 | 1)));
}

/// A layer may carry `notes:` (free text such as the ply construction):
/// the baseline with notes loads as cleanly as without, and notes that are
/// not text are a schema error at the value.
#[test]
fn layer_notes_are_free_text() {
    let baseline = std::fs::read_to_string(root().join("tests/common/baseline.stackup.yaml"))
        .expect("the baseline exists");
    let with_notes = |notes: &str| {
        baseline.replacen(
            "  - name: core\n",
            &format!("  - name: core\n    notes: {notes}\n"),
            1,
        )
    };
    let dir = tempfile::tempdir().expect("temporary directory");
    let input = |name: &str, text: &str| -> Vec<Value> {
        std::fs::write(dir.path().join(name), text).unwrap();
        let out = run(
            dir.path(),
            &["check", "--root", ".", name, "--format", "json"],
        );
        no_panic(&out).unwrap();
        let report: Value = serde_json::from_slice(&out.stdout).expect("JSON report");
        report["findings"]
            .as_array()
            .unwrap()
            .iter()
            .filter(|f| f["rule"] == "invalid-input")
            .cloned()
            .collect()
    };
    let text = with_notes("2 plies of 1080-style glass, resin rich (demo note)");
    assert!(text.contains("notes:"));
    assert_eq!(input("notes.stackup.yaml", &text), Vec::<Value>::new());
    let errors = input("list.stackup.yaml", &with_notes("[two plies]"));
    assert_eq!(errors.len(), 1, "{errors:#?}");
    assert_eq!(errors[0]["message"], "`notes` should be text, found a list");
    assert_eq!(errors[0]["line"], 20);
}

#[test]
fn sarif_is_complete_on_bad_input_and_leaves_no_temporary_files() {
    let out_dir = tempfile::tempdir().expect("temporary directory");
    let sarif = out_dir.path().join("out.sarif");
    // A stale log from an earlier run must be replaced whole.
    std::fs::write(&sarif, "stale, not JSON").unwrap();
    let sarif_arg = sarif.to_string_lossy().into_owned();
    let out = run(
        &corpus(),
        &[
            "check",
            "unit-unknown.stackup.yaml",
            "--color",
            "never",
            "--sarif",
            &sarif_arg,
        ],
    );
    no_panic(&out).unwrap();
    assert_eq!(out.status.code(), Some(2));
    let log: Value = serde_json::from_str(&std::fs::read_to_string(&sarif).unwrap())
        .expect("the SARIF log is complete JSON");
    // SARIF 2.1.0 (OASIS): version, one run, results with a rule id, a
    // message and a physical location with a region.
    assert_eq!(log["version"], "2.1.0");
    let results = log["runs"][0]["results"].as_array().expect("results array");
    assert_eq!(results.len(), 1, "{results:#?}");
    let r = &results[0];
    assert_eq!(r["ruleId"], "invalid-input");
    assert!(r["message"]["text"]
        .as_str()
        .unwrap()
        .contains("unknown unit `furlong`"));
    let loc = &r["locations"][0]["physicalLocation"];
    assert_eq!(loc["artifactLocation"]["uri"], "unit-unknown.stackup.yaml");
    assert_eq!(loc["region"]["startLine"], 23);
    assert_eq!(loc["region"]["startColumn"], 18);
    let mut left: Vec<String> = std::fs::read_dir(out_dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    left.sort();
    assert_eq!(
        left,
        vec!["out.sarif".to_string()],
        "temporary files left behind"
    );
}

#[test]
fn examples_never_fail_as_bad_input() {
    let examples = root().join("examples");
    let mut boards = Vec::new();
    for entry in std::fs::read_dir(&examples).unwrap() {
        let dir = entry.unwrap().path();
        for file in std::fs::read_dir(&dir).into_iter().flatten() {
            let p = file.unwrap().path();
            if p.to_string_lossy().ends_with(".stackup.yaml") {
                boards.push(p);
            }
        }
    }
    boards.sort();
    assert!(boards.len() >= 2, "examples: {boards:?}");
    let mut radar_seen = false;
    for b in &boards {
        let out = run(
            &root(),
            &["check", &b.to_string_lossy(), "--color", "never"],
        );
        no_panic(&out).unwrap();
        let code = out.status.code();
        let shown = String::from_utf8_lossy(&out.stdout);
        assert!(
            matches!(code, Some(0 | 1)),
            "{}: exit code {code:?}\n{shown}",
            b.display()
        );
        // The radar demo board is documented to lint clean.
        if b.starts_with(examples.join("radar-sensor-6l")) {
            radar_seen = true;
            assert_eq!(code, Some(0), "{}\n{shown}", b.display());
        }
    }
    assert!(radar_seen, "examples/radar-sensor-6l has no stackup file");
}

/// A mapping with 99 000 keys (1 MB, inside the default size and node
/// limits) once took minutes: duplicate keys were found by a linear search
/// per key and every unknown key got its own finding. It must now end, with
/// exit code 2 and a bounded number of findings.
#[test]
fn huge_mapping_ends_with_few_findings() {
    let dir = tempfile::tempdir().unwrap();
    let mut text = String::from("stackup-lint: 1\n");
    for i in 0..99_000 {
        text.push_str(&format!("k{i}: 0\n"));
    }
    std::fs::write(dir.path().join("many.stackup.yaml"), text).unwrap();
    let out = run(
        dir.path(),
        &["check", "many.stackup.yaml", "--format", "json"],
    );
    no_panic(&out).unwrap();
    assert_eq!(out.status.code(), Some(2));
    let report: Value = serde_json::from_slice(&out.stdout).unwrap();
    let n = report["findings"].as_array().unwrap().len();
    assert!((1..=50).contains(&n), "{n} findings");
}

/// Limits given on the command line apply: a genuine file deeper than a
/// lowered limit is refused, and the default limit accepts it.
#[test]
fn yaml_limits_follow_the_command_line() {
    let dir = corpus();
    let out = run(
        &dir,
        &[
            "check",
            "../common/baseline.stackup.yaml",
            "--max-yaml-depth",
            "3",
            "--format",
            "json",
        ],
    );
    no_panic(&out).unwrap();
    assert_eq!(out.status.code(), Some(2));
    let report: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert!(report["findings"][0]["message"]
        .as_str()
        .unwrap()
        .contains("nests deeper than 3 levels"));
    let out = run(
        &dir,
        &[
            "check",
            "../common/baseline.stackup.yaml",
            "--max-yaml-nodes",
            "20",
            "--format",
            "json",
        ],
    );
    assert_eq!(out.status.code(), Some(2));
    let report: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert!(report["findings"][0]["message"]
        .as_str()
        .unwrap()
        .contains("more than 20 nodes"));
}
