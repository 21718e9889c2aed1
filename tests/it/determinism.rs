//! The same input gives byte-identical output across runs and across the
//! number of field-solver threads, and with a cold, a warm or no field-solver
//! cache (terminal without colour, JSON, SARIF).

use crate::common;
fn run(threads: &str, format: &str, sarif: &std::path::Path) -> Vec<u8> {
    let o = common::command(common::root())
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
    terminal_and_sarif(o, sarif)
}

/// A finished `check` of the demo boards (exit 1: findings): its standard
/// output followed by its SARIF log.
fn terminal_and_sarif(o: std::process::Output, sarif: &std::path::Path) -> Vec<u8> {
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

/// `impedance` takes `--threads` too (as the README says), with the same
/// numbers whatever the count.
#[test]
fn impedance_takes_threads_and_gives_the_same_numbers() {
    let run = |threads: &str| {
        let o = common::command(common::root())
            .args([
                "impedance",
                "--format",
                "json",
                "--threads",
                threads,
                "examples/",
            ])
            .output()
            .expect("binary runs");
        assert_eq!(
            o.status.code(),
            Some(0),
            "{}",
            String::from_utf8_lossy(&o.stderr)
        );
        o.stdout
    };
    assert_eq!(run("1"), run("3"));
}

/// `check examples/` with the field-solver cache in `cache` (or `--no-cache`).
fn run_cached(cache: Option<&std::path::Path>, format: &str, sarif: &std::path::Path) -> Vec<u8> {
    let mut c = common::command(common::root());
    c.env_remove("STACKUP_LINT_NO_CACHE")
        .args([
            "check",
            "examples/",
            "--color",
            "never",
            "--format",
            format,
            "--sarif",
        ])
        .arg(sarif);
    match cache {
        Some(dir) => c.env("STACKUP_LINT_CACHE_DIR", dir),
        None => c
            .env("STACKUP_LINT_CACHE_DIR", "/nonexistent")
            .arg("--no-cache"),
    };
    terminal_and_sarif(c.output().expect("binary runs"), sarif)
}

#[test]
fn output_is_identical_cold_warm_and_without_cache() {
    let dir = tempfile::tempdir().unwrap();
    for format in ["human", "json"] {
        let cache = dir.path().join(format!("cache-{format}"));
        let cold = run_cached(Some(&cache), format, &dir.path().join("cold.sarif"));
        let warm = run_cached(Some(&cache), format, &dir.path().join("warm.sarif"));
        let none = run_cached(None, format, &dir.path().join("none.sarif"));
        assert!(cold == none, "{format}: a cold cache changes the output");
        assert!(warm == none, "{format}: a warm cache changes the output");
    }
}
