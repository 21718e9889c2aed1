//! The project stays consistent with itself: every rule has exactly one page
//! in rules/, the page has the required sections, and its YAML examples
//! behave as labelled (the "fires" one fires the rule, the "passes" one does not).

use stackup_lint::engine::load_text;
use stackup_lint::finding::INVALID_INPUT;
use stackup_lint::load::InputLimits;
use stackup_lint::{engine, rules};

/// Fenced code blocks whose info string is `yaml <label>`.
fn blocks<'a>(doc: &'a str, label: &str) -> Vec<&'a str> {
    let fence = format!("```yaml {label}\n");
    let mut out = Vec::new();
    let mut rest = doc;
    while let Some(i) = rest.find(&fence) {
        let body = &rest[i + fence.len()..];
        let end = body.find("```").expect("closed fence");
        out.push(&body[..end]);
        rest = &body[end..];
    }
    out
}

/// Load a page example: from text, or, when it names measured coupons,
/// as a file in a scratch project beside a copy of the demo boards'
/// coupon files (`coupons/<name>`), so that the loader reads them.
fn load_example(text: &str) -> stackup_lint::load::Loaded {
    if !text.contains("\ncoupons:") {
        return load_text("example.stackup.yaml", text, &InputLimits::default());
    }
    let dir = tempfile::tempdir().unwrap();
    let coupons = dir.path().join("coupons");
    std::fs::create_dir(&coupons).unwrap();
    let examples = concat!(env!("CARGO_MANIFEST_DIR"), "/examples");
    for board in std::fs::read_dir(examples).unwrap() {
        let from = board.unwrap().path().join("coupons");
        for f in std::fs::read_dir(&from).into_iter().flatten() {
            let f = f.unwrap().path();
            std::fs::copy(&f, coupons.join(f.file_name().unwrap())).unwrap();
        }
    }
    let file = dir.path().join("example.stackup.yaml");
    std::fs::write(&file, text).unwrap();
    let opts = stackup_lint::engine::CheckOptions {
        root: Some(dir.path().to_path_buf()),
        ..Default::default()
    };
    let (mut loaded, _, _) =
        engine::load_paths(std::slice::from_ref(&file), dir.path(), &opts).unwrap();
    // Show the example under the same name as the text-only ones.
    for f in loaded.db.files.iter_mut() {
        if f.path == file {
            f.display = "example.stackup.yaml".into();
        }
    }
    loaded
}

fn rules_fired(text: &str) -> Vec<&'static str> {
    let loaded = load_example(text);
    let outcome = engine::lint(loaded, &Default::default());
    outcome
        .findings
        .iter()
        .filter(|f| f.suppressed.is_none())
        .map(|f| f.rule)
        .collect()
}

#[test]
fn every_rule_has_one_page_with_the_sections() {
    let metas = rules::all_meta();
    for m in &metas {
        assert!(
            m.doc.starts_with(&format!("# {}\n", m.name)),
            "rules/{}.md must start with its title",
            m.name
        );
        for section in [
            "## Why it matters",
            "## Example that fires",
            "## Fixed example",
            "## How to fix",
        ] {
            assert!(
                m.doc.contains(section),
                "rules/{}.md lacks `{section}`",
                m.name
            );
        }
        assert!(
            m.summary.chars().next().is_some_and(|c| c.is_lowercase()),
            "{}: summary starts lowercase",
            m.name
        );
        assert!(
            !m.summary.ends_with('.'),
            "{}: summary has no trailing period",
            m.name
        );
    }
    // No orphan pages.
    let dir = concat!(env!("CARGO_MANIFEST_DIR"), "/rules");
    for entry in std::fs::read_dir(dir).unwrap() {
        let name = entry.unwrap().file_name().to_string_lossy().into_owned();
        let stem = name.trim_end_matches(".md");
        assert!(
            metas.iter().any(|m| m.name == stem),
            "rules/{name} documents no registered rule"
        );
    }
}

/// Each rule's page example that fires, rendered as the terminal shows it
/// (no colour, 100 columns): one reviewed snapshot per rule, the rule's
/// own test of its message, labels and help.
#[test]
fn fires_examples_render_as_reviewed() {
    use stackup_lint::output::human::{render, HumanOptions};
    for m in rules::all_meta() {
        for (i, text) in blocks(m.doc, "fires").into_iter().enumerate() {
            let loaded = load_example(text);
            let outcome = engine::lint(loaded, &Default::default());
            let out = render(
                &outcome.findings,
                &outcome.db,
                HumanOptions {
                    color: false,
                    width: 100,
                    pool: stackup_lint::pool::Pool::single(),
                },
            );
            let name = if i == 0 {
                format!("fires_{}", m.name)
            } else {
                format!("fires_{}_{i}", m.name)
            };
            insta::assert_snapshot!(name, out);
        }
    }
}

#[test]
fn page_examples_behave_as_labelled() {
    for m in rules::all_meta() {
        let fires = blocks(m.doc, "fires");
        let passes = blocks(m.doc, "passes");
        assert!(
            !fires.is_empty() && !passes.is_empty(),
            "{} needs both examples",
            m.name
        );
        for text in fires {
            let fired = rules_fired(text);
            assert!(
                fired.contains(&m.name),
                "{}: the firing example gave {fired:?}",
                m.name
            );
        }
        for text in passes {
            let fired = rules_fired(text);
            assert!(
                !fired.contains(&m.name),
                "{}: the fixed example still fires: {fired:?}",
                m.name
            );
            if m.name != INVALID_INPUT {
                assert!(
                    !fired.contains(&INVALID_INPUT),
                    "{}: the fixed example is not valid input",
                    m.name
                );
            }
        }
    }
}

#[test]
fn rule_names_are_kebab_case_and_unique() {
    let metas = rules::all_meta();
    for m in &metas {
        assert!(
            m.name.bytes().all(|b| b.is_ascii_lowercase() || b == b'-'),
            "{}",
            m.name
        );
        assert_eq!(
            metas.iter().filter(|n| n.name == m.name).count(),
            1,
            "{}",
            m.name
        );
    }
}

/// The Options section of every rule page says what the rule's declared
/// options say (key, default, purpose), in that order: the defaults live
/// in one place, the `OptionSpec`s, and this keeps the pages true to them.
/// Each written default also reads back as the default value.
#[test]
fn options_sections_agree_with_the_declared_options() {
    use stackup_lint::model::OptionKind;
    use stackup_lint::units::{parse_quantity, Dimension};
    for m in rules::all_meta() {
        let section: Vec<&str> = m
            .doc
            .split("\n## Options\n")
            .nth(1)
            .map(|rest| rest.split("\n## ").next().unwrap_or(""))
            .unwrap_or("")
            .lines()
            .filter(|l| !l.trim().is_empty())
            .collect();
        if m.options.is_empty() {
            if !section.is_empty() {
                assert!(
                    section[0].starts_with("None besides `severity`."),
                    "rules/{}.md: {section:?}",
                    m.name
                );
            }
            continue;
        }
        let want: Vec<String> = m
            .options
            .iter()
            .map(|o| format!("- `{}` (default {}): {}.", o.key, o.default_text, o.doc))
            .collect();
        let bullets: Vec<&str> = section
            .iter()
            .copied()
            .filter(|l| l.starts_with("- "))
            .collect();
        assert_eq!(bullets, want, "rules/{}.md, Options", m.name);
        for o in m.options {
            let dim = match o.kind {
                OptionKind::Ratio { .. } => Dimension::Fraction,
                OptionKind::Quantity(d) => d,
            };
            // "0.01 ps per mm of coupled length": the quantity before "per".
            let text = o.default_text.split(" per ").next().unwrap();
            let v = parse_quantity(text, dim).unwrap_or_else(|e| {
                panic!(
                    "{}: default `{}` does not read: {e}",
                    m.name, o.default_text
                )
            });
            assert!(
                (v - o.default).abs() <= 1e-12 * o.default.abs().max(1e-30),
                "{}: `{}` reads {v}, declared {}",
                m.name,
                o.default_text,
                o.default
            );
        }
    }
}

/// The README's rule table, as the rules describe themselves: name,
/// default severity and summary of every rule (pseudo-rules included), in
/// the order `stackup-lint rules` lists them. On failure the message holds
/// the table to paste.
#[test]
fn readme_rule_table_is_the_registry() {
    let readme =
        std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/README.md")).unwrap();
    let mut want = String::from("| rule | default | checks |\n|---|---|---|\n");
    for m in rules::all_meta() {
        want.push_str(&format!(
            "| `{}` | {} | {} |\n",
            m.name,
            m.default_severity.as_str(),
            m.summary
        ));
    }
    let start = readme
        .find("| rule | default | checks |")
        .expect("README has the rule table");
    let table: String = readme[start..]
        .lines()
        .take_while(|l| l.starts_with('|'))
        .map(|l| format!("{l}\n"))
        .collect();
    assert_eq!(table, want, "README's rule table should be:\n{want}");
}
