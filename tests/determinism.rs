//! The same input gives byte-identical output across runs and across the
//! number of field-solver threads (terminal without colour, JSON, SARIF).

use std::process::Command;

fn run(threads: &str, format: &str, sarif: &std::path::Path) -> Vec<u8> {
    let o = Command::new(env!("CARGO_BIN_EXE_stackup-lint"))
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .env("NO_COLOR", "1")
        .args([
            "check",
            "examples/",
            "--color",
            "never",
            "--format",
            format,
            "--threads",
            threads,
            "--sarif",
        ])
        .arg(sarif)
        .output()
        .expect("binary runs");
    assert_eq!(
        o.status.code(),
        Some(1),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let mut out = o.stdout;
    out.extend(std::fs::read(sarif).unwrap());
    out
}

#[test]
fn output_is_identical_across_thread_counts() {
    let dir = tempfile::tempdir().unwrap();
    for format in ["human", "json"] {
        let one = run("1", format, &dir.path().join("a.sarif"));
        let two = run("2", format, &dir.path().join("b.sarif"));
        let four = run("4", format, &dir.path().join("c.sarif"));
        assert!(
            one == two && two == four,
            "{format} output differs with the thread count"
        );
    }
}
