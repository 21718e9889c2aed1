//! `stackup-lint report`: the files it writes, the reviewed Markdown of both
//! demo boards, drawings that are well-formed SVG, a cross-section whose
//! to-scale heights follow the YAML thicknesses, numbers that agree with the
//! `impedance` command, and no file at all on bad input.

use crate::common;
use std::path::Path;

fn run(args: &[&str], cache: &Path) -> (Option<i32>, String, String) {
    common::text(common::output(
        common::command(common::root())
            .env("STACKUP_LINT_CACHE_DIR", cache)
            .args(args),
    ))
}

fn report(board: &str, extra: &[&str]) -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let mut args = vec!["report", board, "-o", out.to_str().unwrap()];
    args.extend_from_slice(extra);
    let (code, stdout, stderr) = run(&args, &dir.path().join("cache"));
    assert_eq!(code, Some(0), "{stdout}{stderr}");
    dir
}

fn names(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

#[test]
fn line_card_report_files_and_markdown() {
    let dir = report(
        "examples/line-card-10l/board.stackup.yaml",
        &["--length", "150 mm"],
    );
    let out = dir.path().join("out");
    assert_eq!(
        names(&out),
        [
            "board-coupon-cal-line.svg",
            "board-cross-section-to-scale.svg",
            "board-cross-section.svg",
            "board-loss.svg",
            "board-material-low-loss-core.svg",
            "board-material-low-loss-prepreg.svg",
            "board-material-mask.svg",
            "board.html",
            "board.md",
        ]
    );
    let md = std::fs::read_to_string(out.join("board.md")).unwrap();
    insta::assert_snapshot!("report_line_card_md", md);
}

#[test]
fn radar_report_markdown() {
    let dir = report(
        "examples/radar-sensor-6l/board.stackup.yaml",
        &["--to-scale"],
    );
    let md = std::fs::read_to_string(dir.path().join("out/board.md")).unwrap();
    // With --to-scale the Markdown shows the to-scale drawing first.
    assert!(
        md.contains("(board-cross-section-to-scale.svg)\n\nAlso drawn"),
        "{md}"
    );
    insta::assert_snapshot!("report_radar_md", md);
}

/// Every `<svg>…</svg>` in a text.
fn inline_svgs(text: &str) -> Vec<&str> {
    let mut out = Vec::new();
    let mut rest = text;
    while let Some(start) = rest.find("<svg") {
        let end = rest[start..].find("</svg>").expect("closed svg") + start + "</svg>".len();
        out.push(&rest[start..end]);
        rest = &rest[end..];
    }
    out
}

#[test]
fn drawings_are_well_formed_and_the_page_is_self_contained() {
    let dir = report("examples/line-card-10l/board.stackup.yaml", &[]);
    let out = dir.path().join("out");
    for n in names(&out).iter().filter(|n| n.ends_with(".svg")) {
        let text = std::fs::read_to_string(out.join(n)).unwrap();
        let doc = roxmltree::Document::parse(&text)
            .unwrap_or_else(|e| panic!("{n} is not well-formed XML: {e}"));
        assert_eq!(doc.root_element().tag_name().name(), "svg", "{n}");
        // Something is drawn: text and shapes.
        assert!(
            doc.descendants().filter(|d| d.has_tag_name("text")).count() > 5,
            "{n}"
        );
    }
    let html = std::fs::read_to_string(out.join("board.html")).unwrap();
    // Both cross-sections, the loss plot, three material plots and the
    // coupon's plot, inline.
    let svgs = inline_svgs(&html);
    assert_eq!(svgs.len(), 7);
    for svg in svgs {
        roxmltree::Document::parse(svg).expect("inline svg is well-formed");
    }
    for needle in [
        "<script",
        "src=\"http",
        "href=\"http",
        "@import",
        "url(http",
    ] {
        assert!(!html.contains(needle), "the page must not load `{needle}`");
    }
    assert!(
        html.contains("Engineering aid"),
        "the caution is on the page"
    );
}

/// Heights of the layer rectangles of a cross-section, by layer name.
fn layer_heights(svg: &str) -> Vec<(String, f64)> {
    let doc = roxmltree::Document::parse(svg).unwrap();
    doc.descendants()
        .filter(|n| n.has_tag_name("rect"))
        .filter_map(|n| {
            let title = n.children().find(|c| c.has_tag_name("title"))?.text()?;
            Some((title.to_string(), n.attribute("height")?.parse().ok()?))
        })
        .collect()
}

#[test]
fn to_scale_drawing_follows_the_yaml_thicknesses() {
    let dir = report("examples/line-card-10l/board.stackup.yaml", &[]);
    let svg =
        std::fs::read_to_string(dir.path().join("out/board-cross-section-to-scale.svg")).unwrap();
    let h = layer_heights(&svg);
    let get = |name: &str| h.iter().find(|(n, _)| n == name).unwrap().1;
    // From the demo YAML: pp3 0.20 mm, core1 0.13 mm, pp5 0.075 mm, L5 1 oz
    // (34.8 um, the project's ounce) against L2 0.5 oz.
    assert!((get("pp3") / get("core1") - 0.20 / 0.13).abs() < 0.01);
    assert!((get("pp5") / get("core1") - 0.075 / 0.13).abs() < 0.01);
    assert!((get("L5") / get("L2") - 2.0).abs() < 0.02);
    // The whole board is 900 px tall.
    let total: f64 = h.iter().map(|(_, v)| v).sum();
    assert!((total - 900.0).abs() < 0.5, "{total}");

    // Exaggerated: still ordered by thickness, but no layer thinner than 10 px.
    let svg = std::fs::read_to_string(dir.path().join("out/board-cross-section.svg")).unwrap();
    let h = layer_heights(&svg);
    assert_eq!(h.len(), 21, "one rectangle per layer");
    assert!(h.iter().all(|(_, v)| *v >= 10.0), "{h:?}");
    let get = |name: &str| h.iter().find(|(n, _)| n == name).unwrap().1;
    assert!(get("pp3") > get("core1") && get("core1") > get("pp5"));
}

#[test]
fn report_numbers_agree_with_the_impedance_command() {
    let dir = report("examples/line-card-10l/board.stackup.yaml", &[]);
    let md = std::fs::read_to_string(dir.path().join("out/board.md")).unwrap();
    let (code, json, _) = run(
        &["impedance", "--format", "json", "examples/line-card-10l"],
        &dir.path().join("cache"),
    );
    assert_eq!(code, Some(0));
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let classes = v[0]["net_classes"].as_array().unwrap();
    assert_eq!(classes.len(), 5);
    let header: Vec<&str> = md
        .lines()
        .find(|l| l.starts_with("| net class |"))
        .unwrap()
        .split(" | ")
        .collect();
    let col = |name: &str| {
        header
            .iter()
            .position(|h| h.trim_matches(['|', ' ']) == name)
            .unwrap()
    };
    for c in classes {
        let name = c["net_class"].as_str().unwrap();
        let row: Vec<&str> = md
            .lines()
            .find(|l| l.starts_with(&format!("| {name} |")))
            .unwrap_or_else(|| panic!("no row for {name}"))
            .split(" | ")
            .collect();
        let cell = |h: &str| -> f64 { row[col(h)].trim_matches(['|', ' ']).parse().unwrap() };
        // Each within half a unit of the report's last printed digit plus
        // half a unit of the JSON's.
        let checks = [
            ("Z smooth Ω", c["smooth"]["z_ohm"].as_f64().unwrap(), 0.055),
            (
                "delay ps/mm",
                c["rough_worst"]["delay_ps_per_mm"].as_f64().unwrap(),
                0.0055,
            ),
            (
                "loss dB/mm",
                c["loss_db_per_mm"].as_f64().unwrap(),
                0.000055,
            ),
            (
                "W for target µm",
                c["width_for_target_um"].as_f64().unwrap(),
                0.05,
            ),
        ];
        for (h, want, half_unit) in checks {
            let got = cell(h);
            assert!(
                (got - want).abs() <= half_unit + 1e-9,
                "{name}: {h} {got} in the report, {want} from `impedance`"
            );
        }
        // The reference column is the planes the `impedance` JSON names.
        let refs: Vec<&str> = c["reference_layers"]
            .as_array()
            .unwrap()
            .iter()
            .map(|r| r.as_str().unwrap())
            .collect();
        assert_eq!(
            row[col("reference")].trim_matches(['|', ' ']),
            refs.join("/"),
            "{name}"
        );
        // Read off the board's layer roles by hand: L2, L5, L6, L8 are the
        // planes; `mgmt-se` on L9 has none below (L10 is a signal layer),
        // `refclk` names the signal layer L3 and is solved over L2.
        let want = match name {
            "host-56g-pam4" => "L2/L5",
            "line-56g-pam4" => "L6/L8",
            "mgmt-se" => "L8",
            "cal-line-28g" | "refclk" => "L2",
            other => panic!("unexpected class {other}"),
        };
        assert_eq!(refs.join("/"), want, "{name}");
        // A pair's common-mode impedance is half its even-mode impedance.
        if let Some(ze) = c["smooth"]["z_even_ohm"].as_f64() {
            let zc = c["smooth"]["z_common_ohm"].as_f64().unwrap();
            assert!((zc - ze / 2.0).abs() <= 0.01, "{name}: {zc} vs {ze}/2");
        }
    }
    // The plies' apparent Dk in the JSON is the one the report prints.
    let plies = v[0]["dielectrics"].as_array().unwrap();
    assert!(!plies.is_empty());
    for p in plies {
        let name = p["layer"].as_str().unwrap();
        let row = md
            .lines()
            .find(|l| l.starts_with(&format!("| {name} |")))
            .unwrap_or_else(|| panic!("no dielectric row for {name}"));
        let cell = row.split(" | ").nth(7).unwrap().trim();
        let (best, worst) = (
            p["apparent_dk_best"].as_f64().unwrap(),
            p["apparent_dk_worst"].as_f64().unwrap(),
        );
        let want = if format!("{best:.2}") == format!("{worst:.2}") {
            format!("{best:.2}")
        } else {
            format!("{best:.2}..{worst:.2}")
        };
        assert_eq!(cell, want, "{name}: report vs `impedance` JSON");
    }
}

#[test]
fn bad_input_writes_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let (code, stdout, stderr) = run(
        &[
            "report",
            "tests/bad-input/thickness-negative.stackup.yaml",
            "-o",
            out.to_str().unwrap(),
        ],
        &dir.path().join("cache"),
    );
    assert_eq!(code, Some(2), "{stdout}{stderr}");
    assert!(
        stdout.contains("thickness-negative.stackup.yaml"),
        "{stdout}"
    );
    assert!(stderr.contains("no report written"), "{stderr}");
    assert!(!out.exists(), "nothing may be written on bad input");

    // A directory or a materials library is not one stackup.
    let (code, _, stderr) = run(
        &["report", "examples", "-o", out.to_str().unwrap()],
        &dir.path().join("cache"),
    );
    assert_eq!(code, Some(2));
    assert!(stderr.contains("takes one stackup file"), "{stderr}");
    let (code, _, stderr) = run(
        &[
            "report",
            "examples/materials/demo-generic.materials.yaml",
            "-o",
            out.to_str().unwrap(),
        ],
        &dir.path().join("cache"),
    );
    assert_eq!(code, Some(2));
    assert!(stderr.contains("is a materials library"), "{stderr}");
    assert!(!out.exists());
}

#[test]
fn a_200_layer_board_gives_a_complete_readable_drawing() {
    // 100 copper layers (planes and signal layers alternating in pairs) and
    // 99 dielectrics with 25 um and 400 um plies mixed, so labels of thin
    // layers must be pushed apart; a stripline class every 10th signal layer.
    let mut y = String::from(
        "stackup-lint: 1\nboard: 199-layer drawing test\nmaterials:\n  fr4: {dk: 4.2, df: 0.018, frequency: 1 GHz}\nlayers:\n",
    );
    let mut classes = String::from("net-classes:\n");
    for k in 0..100 {
        let role = if k % 2 == 0 { "plane" } else { "signal" };
        y.push_str(&format!(
            "  - name: C{k}\n    copper: {{role: {role}, thickness: 17.5 um}}\n"
        ));
        if k % 20 == 1 {
            classes.push_str(&format!(
                "  - {{name: s{k}, structure: stripline, layer: C{k}, width: 0.1 mm}}\n"
            ));
        }
        if k < 99 {
            let (kind, t) = if k % 3 == 0 {
                ("core", "400 um")
            } else {
                ("prepreg", "25 um")
            };
            y.push_str(&format!(
                "  - name: D{k}\n    dielectric: {{kind: {kind}, material: fr4, thickness: {t}}}\n"
            ));
        }
    }
    y.push_str(&classes);
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("tall.stackup.yaml");
    std::fs::write(&file, y).unwrap();
    let out = dir.path().join("out");
    let (code, stdout, stderr) = run(
        &[
            "report",
            file.to_str().unwrap(),
            "-o",
            out.to_str().unwrap(),
        ],
        &dir.path().join("cache"),
    );
    assert_eq!(code, Some(0), "{stdout}{stderr}");
    for name in ["tall-cross-section.svg", "tall-cross-section-to-scale.svg"] {
        let svg = std::fs::read_to_string(out.join(name)).unwrap();
        assert_eq!(
            layer_heights(&svg).len(),
            199,
            "{name}: one rectangle per layer"
        );
        // Labels never overlap: their baselines are at least one line apart.
        let doc = roxmltree::Document::parse(&svg).unwrap();
        let mut ys: Vec<f64> = doc
            .descendants()
            .filter(|n| n.attribute("class") == Some("label"))
            .map(|n| n.attribute("y").unwrap().parse().unwrap())
            .collect();
        assert_eq!(ys.len(), 199);
        let sorted = ys.windows(2).all(|w| w[1] > w[0]);
        assert!(sorted, "{name}: labels out of layer order");
        ys.dedup();
        assert!(
            ys.windows(2).all(|w| w[1] - w[0] >= 14.9),
            "{name}: overlapping labels"
        );
    }
}
