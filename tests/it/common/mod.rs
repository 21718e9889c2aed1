//! Helpers shared by the integration tests that run the `stackup-lint`
//! binary. Each test file uses some of them.
#![allow(dead_code)]

pub mod board;

use std::path::Path;
use std::process::{Command, Output};

/// The repository root (examples, schema, bench fixtures).
pub fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

/// Copies the line card's coupon files (`examples/line-card-10l/coupons`)
/// into `dir/coupons`, beside a copy of its board written to `dir`.
pub fn copy_line_card_coupons(dir: &Path) {
    let from = root().join("examples/line-card-10l/coupons");
    let to = dir.join("coupons");
    std::fs::create_dir_all(&to).unwrap();
    for f in std::fs::read_dir(from).unwrap() {
        let f = f.unwrap().path();
        std::fs::copy(&f, to.join(f.file_name().unwrap())).unwrap();
    }
}

/// Copies directory `from` into `to`, recursively.
pub fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).unwrap();
    for e in std::fs::read_dir(from).unwrap() {
        let p = e.unwrap().path();
        let target = to.join(p.file_name().unwrap());
        if p.is_dir() {
            copy_dir(&p, &target);
        } else {
            std::fs::copy(&p, &target).unwrap();
        }
    }
}

/// The binary, to be run in `dir` with colour off.
pub fn command(dir: &Path) -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_stackup-lint"));
    c.current_dir(dir).env("NO_COLOR", "1");
    c
}

/// Runs `c` and fails the test if the binary panicked.
pub fn output(c: &mut Command) -> Output {
    let o = c.output().expect("the stackup-lint binary runs");
    let stderr = String::from_utf8_lossy(&o.stderr);
    assert!(!stderr.contains("panicked"), "{stderr}");
    o
}

/// Runs the binary in `dir` with `args`.
pub fn output_in(dir: &Path, args: &[&str]) -> Output {
    output(command(dir).args(args))
}

/// Exit code, standard output and standard error of `o`, as text.
pub fn text(o: Output) -> (Option<i32>, String, String) {
    (
        o.status.code(),
        String::from_utf8_lossy(&o.stdout).into_owned(),
        String::from_utf8_lossy(&o.stderr).into_owned(),
    )
}

/// Runs the binary in `dir` with `args`: exit code, stdout, stderr.
pub fn run_in(dir: &Path, args: &[&str]) -> (Option<i32>, String, String) {
    text(output_in(dir, args))
}
