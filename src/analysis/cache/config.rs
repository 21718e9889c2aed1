//! Which cache a run uses: the directory (`STACKUP_LINT_CACHE_DIR`, the
//! XDG cache, `~/.cache`), its bound (`STACKUP_LINT_CACHE_SIZE`), whether
//! it is off (`--no-cache`, `STACKUP_LINT_NO_CACHE`) or talks
//! (`STACKUP_LINT_CACHE_DEBUG`), and the engine identity every key starts
//! with.

use std::path::PathBuf;
use std::sync::Arc;
use std::time::SystemTime;

use stackup_physics::fieldsolver::SolverOptions;

use super::DiskCache;

/// Bump when the field solver, its default options or the entry layout
/// change in a way that changes results (the executable's identity is in
/// the key as well, but an explicit version keeps installed builds honest).
pub const FORMAT: u32 = 3;

/// Default bound on the disk space of the cache directory: 1 GiB. One
/// entry (a solved section, or a class's width for target) takes one 4 KiB
/// block; a repository of 1,000 boards (`bench/synth-monorepo.py --files
/// 1000`, 4 to 24 layers, 10 to 40 net classes) needs about 51,700 of them,
/// about 210 MB (bench/RESULTS.md), so 1 GiB holds it with room to spare
/// (eviction goes down to 3/4 of the bound, 768 MiB).
pub const DEFAULT_MAX_BYTES: u64 = 1 << 30;

/// The engine identity of this build: what a cached result depends on.
pub fn engine_identity() -> String {
    let exe = std::env::current_exe()
        .and_then(std::fs::metadata)
        .map(|m| {
            let t = m
                .modified()
                .ok()
                .and_then(|t| t.duration_since(SystemTime::UNIX_EPOCH).ok())
                .map_or(0, |d| d.as_nanos());
            format!("{}:{t}", m.len())
        })
        .unwrap_or_else(|_| "unknown".into());
    format!(
        "stackup-lint {} format {FORMAT} options {:?} exe {exe}",
        env!("CARGO_PKG_VERSION"),
        SolverOptions::default()
    )
}

/// True when `STACKUP_LINT_CACHE_DEBUG` asks for notes on standard error.
pub fn debug() -> bool {
    std::env::var_os("STACKUP_LINT_CACHE_DEBUG").is_some_and(|v| !v.is_empty() && v != "0")
}

/// Parse a size such as `64 MiB`, `500K`, `1G` or a plain byte count
/// (binary multiples).
pub fn parse_size(text: &str) -> Option<u64> {
    let t = text.trim();
    let split = t.find(|c: char| !c.is_ascii_digit()).unwrap_or(t.len());
    let (num, unit) = t.split_at(split);
    let n: u64 = num.parse().ok()?;
    let mult: u64 = match unit.trim().to_ascii_lowercase().as_str() {
        "" | "b" => 1,
        "k" | "kb" | "kib" => 1 << 10,
        "m" | "mb" | "mib" => 1 << 20,
        "g" | "gb" | "gib" => 1 << 30,
        _ => return None,
    };
    n.checked_mul(mult)
}

/// The cache directory from the environment: `STACKUP_LINT_CACHE_DIR`,
/// else `$XDG_CACHE_HOME/stackup-lint`, else `$HOME/.cache/stackup-lint`.
pub fn default_dir() -> Option<PathBuf> {
    let var = |name: &str| {
        std::env::var_os(name)
            .filter(|v| !v.is_empty())
            .map(PathBuf::from)
    };
    if let Some(d) = var("STACKUP_LINT_CACHE_DIR") {
        return Some(d);
    }
    if let Some(x) = var("XDG_CACHE_HOME").filter(|p| p.is_absolute()) {
        return Some(x.join("stackup-lint"));
    }
    var("HOME").map(|h| h.join(".cache").join("stackup-lint"))
}

/// The cache the command line uses: none when `no_cache` or
/// `STACKUP_LINT_NO_CACHE` is set (non-empty, not `0`), else the default
/// directory bounded by `STACKUP_LINT_CACHE_SIZE` (default 1 GiB). Any
/// problem leaves the cache off; the run goes on.
pub fn from_env(no_cache: bool) -> Option<Arc<DiskCache>> {
    let off = no_cache
        || std::env::var_os("STACKUP_LINT_NO_CACHE").is_some_and(|v| !v.is_empty() && v != "0");
    if off {
        return None;
    }
    let max_bytes = match std::env::var("STACKUP_LINT_CACHE_SIZE") {
        Ok(t) => match parse_size(&t) {
            Some(n) => n,
            None => {
                eprintln!(
                    "warning: STACKUP_LINT_CACHE_SIZE `{t}` is not a size such as `64 MiB`; using {} MiB",
                    DEFAULT_MAX_BYTES >> 20
                );
                DEFAULT_MAX_BYTES
            }
        },
        Err(_) => DEFAULT_MAX_BYTES,
    };
    let Some(dir) = default_dir() else {
        if debug() {
            eprintln!(
                "cache: no cache directory (set STACKUP_LINT_CACHE_DIR or HOME); running without"
            );
        }
        return None;
    };
    match DiskCache::open(&dir, max_bytes, engine_identity()) {
        Ok(c) => Some(Arc::new(c)),
        Err(e) => {
            if debug() {
                eprintln!(
                    "cache: {} is not usable ({e}); running without",
                    dir.display()
                );
            }
            None
        }
    }
}
