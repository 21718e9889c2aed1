//! The pre-commit hook, for real: a temporary virtualenv gets `pre-commit`
//! from PyPI, a temporary hardware repository uses this checkout as its hook
//! source (`.pre-commit-hooks.yaml`, `language: rust`), and `git commit`
//! passes with a clean stackup and is refused with a flawed one.
//!
//! pre-commit builds the hook with `cargo install --bins --path .` in its own
//! cache; the cargo target directory is kept under `CARGO_TARGET_TMPDIR` so
//! that later runs reuse the release build (the first build takes minutes).
//! Skipped, with a message, when python3, git or the network is missing.
//!
//! The first run compiles stackup-lint in release mode inside pre-commit's
//! cache: about 21 minutes on the shared 2-core development machine under
//! load (a rerun with the kept target directory: about 100 s), so the test is
//! `#[ignore]`d in the default run and `.ci/run` runs it
//! explicitly (`cargo test --test it -- --ignored pre_commit::`).

use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use std::time::Instant;

fn run(cmd: &mut Command) -> Output {
    cmd.output()
        .unwrap_or_else(|e| panic!("cannot run {cmd:?}: {e}"))
}

fn ok(cmd: &mut Command) -> Output {
    let shown = format!("{cmd:?}");
    let o = run(cmd);
    assert!(
        o.status.success(),
        "{shown} failed:\n{}\n{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    );
    o
}

fn git(dir: &Path) -> Command {
    let mut c = Command::new("git");
    c.current_dir(dir)
        .args(["-c", "user.name=stackup-lint test"])
        .args(["-c", "user.email=test@invalid"])
        .args(["-c", "commit.gpgsign=false"])
        .args(["-c", "init.defaultBranch=main"])
        .env_remove("GIT_DIR")
        .env_remove("GIT_WORK_TREE")
        .env_remove("GIT_INDEX_FILE");
    c
}

/// Why the test cannot run here, if it cannot.
fn missing_prerequisite() -> Option<String> {
    for (tool, arg) in [("python3", "--version"), ("git", "--version")] {
        match Command::new(tool).arg(arg).output() {
            Ok(o) if o.status.success() => {}
            _ => return Some(format!("{tool} is not available")),
        }
    }
    let probe = Command::new("python3")
        .args([
            "-c",
            "import urllib.request as u; u.urlopen('https://pypi.org/simple/pre-commit/', timeout=15)",
        ])
        .output();
    match probe {
        Ok(o) if o.status.success() => None,
        _ => Some("PyPI (https://pypi.org) cannot be reached".to_string()),
    }
}

/// A git repository holding this checkout's working tree (tracked and
/// untracked, not ignored), committed, so pre-commit can clone it at a rev.
fn hook_repo(root: &Path, dest: &Path) -> String {
    let listed = ok(git(root).args([
        "ls-files",
        "-z",
        "--cached",
        "--others",
        "--exclude-standard",
    ]));
    for name in listed.stdout.split(|&b| b == 0).filter(|n| !n.is_empty()) {
        let rel = PathBuf::from(String::from_utf8_lossy(name).into_owned());
        let from = root.join(&rel);
        if !from.is_file() {
            continue; // deleted in the working tree
        }
        let to = dest.join(&rel);
        std::fs::create_dir_all(to.parent().unwrap()).unwrap();
        std::fs::copy(&from, &to).unwrap();
    }
    ok(git(dest).args(["init", "-q"]));
    ok(git(dest).args(["add", "-A"]));
    ok(git(dest).args(["commit", "-q", "-m", "hook source"]));
    let rev = ok(git(dest).args(["rev-parse", "HEAD"]));
    String::from_utf8(rev.stdout).unwrap().trim().to_string()
}

#[test]
#[ignore = "builds stackup-lint in release inside pre-commit (minutes); .ci/run runs it"]
fn pre_commit_hook_passes_clean_and_refuses_flawed_stackups() {
    if let Some(why) = missing_prerequisite() {
        println!("SKIPPED pre-commit hook test: {why}");
        eprintln!("SKIPPED pre-commit hook test: {why}");
        return;
    }
    let started = Instant::now();
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let tmp = tempfile::tempdir().unwrap();
    let venv = tmp.path().join("venv");
    let hooks = tmp.path().join("hook-repo");
    let hw = tmp.path().join("hardware");
    let home = tmp.path().join("pre-commit-home");
    std::fs::create_dir_all(&hooks).unwrap();
    std::fs::create_dir_all(&hw).unwrap();

    ok(Command::new("python3").args(["-m", "venv"]).arg(&venv));
    let bin = venv.join("bin");
    ok(Command::new(bin.join("python"))
        .args(["-m", "pip", "install", "--quiet", "pre-commit"])
        .env("PIP_DISABLE_PIP_VERSION_CHECK", "1"));

    let rev = hook_repo(root, &hooks);

    // The hardware repository: a clean board with its material library, and
    // its pre-commit configuration pointing at the hook source.
    let stackups = hw.join("boards");
    std::fs::create_dir_all(stackups.join("radar")).unwrap();
    std::fs::create_dir_all(stackups.join("materials")).unwrap();
    std::fs::copy(
        root.join("examples/radar-sensor-6l/board.stackup.yaml"),
        stackups.join("radar/board.stackup.yaml"),
    )
    .unwrap();
    copy_coupons(
        &root.join("examples/radar-sensor-6l"),
        &stackups.join("radar"),
    );
    std::fs::copy(
        root.join("examples/materials/demo-generic.materials.yaml"),
        stackups.join("materials/demo-generic.materials.yaml"),
    )
    .unwrap();
    std::fs::write(
        hw.join(".pre-commit-config.yaml"),
        format!(
            "repos:\n  - repo: {}\n    rev: {rev}\n    hooks:\n      - id: stackup-lint\n",
            hooks.display()
        ),
    )
    .unwrap();
    ok(git(&hw).args(["init", "-q"]));

    // pre-commit's environment: its own cache, cargo on PATH, a persistent
    // cargo target directory for the release build.
    let mut path =
        std::env::split_paths(&std::env::var_os("PATH").unwrap_or_default()).collect::<Vec<_>>();
    path.insert(0, bin.clone());
    if let Some(cargo) = std::env::var_os("CARGO") {
        if let Some(dir) = Path::new(&cargo).parent() {
            path.insert(1, dir.to_path_buf());
        }
    }
    let path = std::env::join_paths(path).unwrap();
    let cargo_target = Path::new(env!("CARGO_TARGET_TMPDIR")).join("pre-commit-cargo-target");
    let with_env = |c: &mut Command| {
        c.env("PATH", &path)
            .env("PRE_COMMIT_HOME", &home)
            .env("CARGO_TARGET_DIR", &cargo_target)
            .env("NO_COLOR", "1")
            .env_remove("CARGO_BUILD_TARGET_DIR");
    };

    let mut install = Command::new(bin.join("pre-commit"));
    install.current_dir(&hw).arg("install");
    with_env(&mut install);
    ok(&mut install);

    // The first hook run builds stackup-lint (cargo install) and checks the
    // clean board: the commit goes through.
    ok(git(&hw).args(["add", "-A"]));
    let built = Instant::now();
    let (o, text) = commit(&hw, "clean board", &with_env);
    assert!(o.status.success(), "clean board refused:\n{text}");
    assert!(text.contains("stackup-lint"), "hook did not run:\n{text}");
    assert!(text.contains("Passed"), "hook did not pass:\n{text}");
    println!(
        "pre-commit: hook environment built and first commit in {:.0} s",
        built.elapsed().as_secs_f64()
    );

    // A flawed board: the hook fails and the commit is refused.
    std::fs::create_dir_all(stackups.join("line-card")).unwrap();
    std::fs::copy(
        root.join("examples/line-card-10l/board.stackup.yaml"),
        stackups.join("line-card/board.stackup.yaml"),
    )
    .unwrap();
    copy_coupons(
        &root.join("examples/line-card-10l"),
        &stackups.join("line-card"),
    );
    let head_before = ok(git(&hw).args(["rev-parse", "HEAD"])).stdout;
    ok(git(&hw).args(["add", "-A"]));
    let (o, text) = commit(&hw, "flawed board", &with_env);
    assert!(!o.status.success(), "flawed board was committed:\n{text}");
    assert!(text.contains("Failed"), "hook did not fail:\n{text}");
    // The hook's own report reaches the user: an error-level rule, the file.
    assert!(
        text.contains("impedance-off-target")
            && text.contains("boards/line-card/board.stackup.yaml"),
        "{text}"
    );
    let head_after = ok(git(&hw).args(["rev-parse", "HEAD"])).stdout;
    assert_eq!(
        head_before, head_after,
        "HEAD moved although the hook failed"
    );

    // The fixing hook on the same staged board: it applies the fixes,
    // fails the commit as fixing hooks do, and the edits are in the file.
    std::fs::write(
        hw.join(".pre-commit-config.yaml"),
        format!(
            "repos:\n  - repo: {}\n    rev: {rev}\n    hooks:\n      - id: stackup-lint-fix\n",
            hooks.display()
        ),
    )
    .unwrap();
    ok(git(&hw).args(["add", "-A"]));
    let (o, text) = commit(&hw, "flawed board, fixed", &with_env);
    assert!(!o.status.success(), "{text}");
    assert!(text.contains("files were modified by this hook"), "{text}");
    let board = std::fs::read_to_string(stackups.join("line-card/board.stackup.yaml")).unwrap();
    assert!(board.contains("modelled-dk: 3.18"), "{board}");
    // Staged again, the fixes have nothing left to do.
    ok(git(&hw).args(["add", "-A"]));
    let (o, text) = commit(&hw, "flawed board, fixed", &with_env);
    assert!(o.status.success(), "{text}");
    println!(
        "pre-commit test took {:.0} s",
        started.elapsed().as_secs_f64()
    );
}

/// `git commit -m msg` in `hw` with pre-commit's environment: the output
/// and its text (stdout then stderr).
fn commit(hw: &Path, msg: &str, with_env: &dyn Fn(&mut Command)) -> (Output, String) {
    let mut c = git(hw);
    c.args(["commit", "-m", msg]);
    with_env(&mut c);
    let o = run(&mut c);
    let text = format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    );
    (o, text)
}

/// Copies a demo board's measured coupon files (`coupons/`) beside its copy.
fn copy_coupons(from: &Path, to: &Path) {
    let (from, to) = (from.join("coupons"), to.join("coupons"));
    std::fs::create_dir_all(&to).unwrap();
    for f in std::fs::read_dir(&from).unwrap() {
        let f = f.unwrap().path();
        std::fs::copy(&f, to.join(f.file_name().unwrap())).unwrap();
    }
}
