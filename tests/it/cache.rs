//! The on-disk cache of field-solver results, through the command line:
//! concurrent runs against one cache directory, damaged entries, the size
//! bound, an unusable directory. Output must never depend on the cache
//! (`determinism.rs` compares cold, warm and `--no-cache` output).

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// `check examples/` in JSON with the cache in `cache_dir`.
fn check(cache_dir: &Path, extra_env: &[(&str, &str)]) -> Output {
    let mut c = Command::new(env!("CARGO_BIN_EXE_stackup-lint"));
    c.current_dir(env!("CARGO_MANIFEST_DIR"))
        .env_remove("STACKUP_LINT_NO_CACHE")
        .env_remove("STACKUP_LINT_CACHE_SIZE")
        .env("STACKUP_LINT_CACHE_DIR", cache_dir)
        .env("STACKUP_LINT_CACHE_DEBUG", "1")
        .args(["check", "examples/", "--format", "json"]);
    for (k, v) in extra_env {
        c.env(k, v);
    }
    let o = c.output().expect("binary runs");
    assert_eq!(
        o.status.code(),
        Some(1),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    o
}

/// Entry files of a cache directory (`<2 hex>/<62 hex>`), sorted.
fn entries(dir: &Path) -> Vec<PathBuf> {
    let mut out = Vec::new();
    for shard in std::fs::read_dir(dir).unwrap().flatten() {
        if shard.file_name().len() != 2 {
            continue;
        }
        for f in std::fs::read_dir(shard.path()).unwrap().flatten() {
            if f.file_name().len() == 62 {
                out.push(f.path());
            }
        }
    }
    out.sort();
    out
}

/// Disk space of a cache's entries, in the blocks the files take (what
/// the size bound counts).
fn disk_space(dir: &Path) -> u64 {
    entries(dir)
        .iter()
        .map(|f| stackup_lint::analysis::cache::on_disk(&f.metadata().unwrap()))
        .sum()
}

/// Field solves a run reported (from `STACKUP_LINT_CACHE_DEBUG` notes).
fn solved(o: &Output) -> (usize, usize) {
    let (mut hits, mut solved) = (0, 0);
    for line in String::from_utf8_lossy(&o.stderr).lines() {
        let Some(rest) = line.split(": ").nth(2) else {
            continue;
        };
        let words: Vec<&str> = rest.split(' ').collect();
        if let [h, "hits,", s, "solved", ..] = words.as_slice() {
            hits += h.parse::<usize>().unwrap();
            solved += s.parse::<usize>().unwrap();
        }
    }
    (hits, solved)
}

#[test]
fn a_warm_run_solves_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let cold = check(dir.path(), &[]);
    let (hits, misses) = solved(&cold);
    assert!(misses > 0, "cold run: {hits} hits, {misses} solved");
    let stored = entries(dir.path()).len();
    assert!(stored >= misses, "{stored} entries for {misses} solves");
    let warm = check(dir.path(), &[]);
    assert_eq!(solved(&warm), (hits + misses, 0));
    assert_eq!(warm.stdout, cold.stdout);
    assert_eq!(
        entries(dir.path()).len(),
        stored,
        "a warm run stores nothing"
    );
}

#[test]
fn concurrent_runs_agree_and_leave_a_readable_cache() {
    let dir = tempfile::tempdir().unwrap();
    let reference = {
        let other = tempfile::tempdir().unwrap();
        check(other.path(), &[]).stdout
    };
    let outputs: Vec<Output> = std::thread::scope(|s| {
        let handles: Vec<_> = (0..8)
            .map(|_| s.spawn(|| check(dir.path(), &[("STACKUP_LINT_CACHE_DEBUG", "")])))
            .collect();
        handles.into_iter().map(|h| h.join().unwrap()).collect()
    });
    for o in &outputs {
        assert_eq!(o.stdout, reference, "a concurrent run printed other output");
    }
    // Every entry is whole: a warm run reads them all and solves nothing.
    let warm = check(dir.path(), &[]);
    assert_eq!(warm.stdout, reference);
    let (hits, misses) = solved(&warm);
    assert!(
        hits > 0 && misses == 0,
        "warm run: {hits} hits, {misses} solved"
    );
    // No temporary files are left behind.
    for shard in std::fs::read_dir(dir.path()).unwrap().flatten() {
        if shard.path().is_dir() {
            for f in std::fs::read_dir(shard.path()).unwrap().flatten() {
                assert_eq!(f.file_name().len(), 62, "left over: {:?}", f.path());
            }
        }
    }
}

#[test]
fn damaged_entries_are_ignored_and_rewritten() {
    let dir = tempfile::tempdir().unwrap();
    let cold = check(dir.path(), &[]);
    let files = entries(dir.path());
    let good: Vec<Vec<u8>> = files.iter().map(|f| std::fs::read(f).unwrap()).collect();
    // Truncate one, flip a byte in the numbers of another, empty a third,
    // fill a fourth with other text.
    assert!(files.len() >= 4);
    std::fs::write(&files[0], &good[0][..good[0].len() / 2]).unwrap();
    let mut flipped = good[1].clone();
    let at = flipped.len() - 100;
    flipped[at] = if flipped[at] == b'0' { b'1' } else { b'0' };
    std::fs::write(&files[1], &flipped).unwrap();
    std::fs::write(&files[2], b"").unwrap();
    std::fs::write(
        &files[3],
        b"stackup-lint field-solver cache entry\nkey 3\nabc\n",
    )
    .unwrap();
    let again = check(dir.path(), &[]);
    assert_eq!(again.stdout, cold.stdout);
    for (f, g) in files.iter().zip(&good) {
        assert_eq!(&std::fs::read(f).unwrap(), g, "{f:?} was not rewritten");
    }
}

#[test]
fn the_size_bound_holds() {
    let dir = tempfile::tempdir().unwrap();
    let unbounded = tempfile::tempdir().unwrap();
    let full = check(unbounded.path(), &[]);
    let total = disk_space(unbounded.path());
    // A bound of a third of what the demo boards need: each run ends at or
    // below it, and the output is the same.
    let bound = total / 3;
    let bound_text = bound.to_string();
    for _ in 0..2 {
        let o = check(dir.path(), &[("STACKUP_LINT_CACHE_SIZE", &bound_text)]);
        assert_eq!(o.stdout, full.stdout);
        let kept = disk_space(dir.path());
        assert!(
            kept <= bound && kept > 0,
            "{kept} bytes kept, bound {bound}"
        );
    }
}

#[test]
fn an_unusable_cache_directory_is_no_error() {
    let dir = tempfile::tempdir().unwrap();
    let reference = check(dir.path(), &[]).stdout;
    // A regular file where the directory should be.
    let file = dir.path().join("not-a-directory");
    std::fs::write(&file, b"x").unwrap();
    let o = check(&file, &[]);
    assert_eq!(o.stdout, reference);
    assert!(String::from_utf8_lossy(&o.stderr).contains("running without"));
}

#[test]
fn no_cache_flag_and_variable_leave_the_directory_alone() {
    for (flag, var) in [(true, ""), (false, "1")] {
        let dir = tempfile::tempdir().unwrap();
        let cache = dir.path().join("cache");
        let mut c = Command::new(env!("CARGO_BIN_EXE_stackup-lint"));
        c.current_dir(env!("CARGO_MANIFEST_DIR"))
            .env("STACKUP_LINT_CACHE_DIR", &cache)
            .env("STACKUP_LINT_NO_CACHE", var)
            .args(["impedance", "examples/radar-sensor-6l"]);
        if flag {
            c.arg("--no-cache");
        }
        let o = c.output().unwrap();
        assert_eq!(
            o.status.code(),
            Some(0),
            "{}",
            String::from_utf8_lossy(&o.stderr)
        );
        assert!(!cache.exists(), "--no-cache {flag}, variable `{var}`");
    }
}
