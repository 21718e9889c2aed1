//! On-disk cache of field-solver results, shared by every run of the
//! program on the machine (a pre-commit hook checks the same boards again
//! and again; a warm run reads its solves instead of meshing them).
//!
//! - **Key**: SHA-256 of the engine identity (crate version, [`FORMAT`],
//!   the solver options, and the size and modification time of the running
//!   executable, so a rebuilt or upgraded program never reads another
//!   build's numbers) and the cross-section's full `Debug` text (every f64
//!   printed in its shortest round-trip form).
//! - **Entry**: one file per key at `<dir>/<2 hex>/<62 hex>`. It holds the
//!   key's full SHA-256 (compared on read: a misplaced file or another
//!   key's entry is a miss, never a wrong result; two key texts with the
//!   same SHA-256 are not known to exist), the result with every f64
//!   stored as its bit pattern (so a warm run prints byte-identical
//!   output), and a SHA-256 of everything before it (a truncated or
//!   damaged file is a miss and is rewritten). The key text itself (about
//!   1.5 KB) is not stored: entries are about 500 bytes, and a hit hashes
//!   the key once and the short entry once. Solver errors are cached too: they are as
//!   deterministic as the numbers (the section is outside what the solver
//!   meshes) and cost a mesh to find.
//! - **Concurrency**: an entry is written to a temporary file in its shard
//!   directory and renamed into place, so a reader sees a whole entry or
//!   none. Two runs that solve the same section write the same bytes.
//! - **Size**: bounded by [`DEFAULT_MAX_BYTES`] (`STACKUP_LINT_CACHE_SIZE`)
//!   of disk space, counted in the blocks the files take (a 500-byte entry
//!   takes a whole 4 KiB block on common file systems, so counting bytes
//!   would let the directory grow to eight times its bound).
//!   Each run that stores entries adds their size to a small usage file;
//!   only when that estimate passes the bound is the directory scanned and
//!   the least recently used entries (oldest modification time; a hit
//!   refreshes it) removed down to 3/4 of the bound.
//! - **Never fatal**: no usable directory, a read-only one, a full disk: the
//!   run goes on without the cache (`STACKUP_LINT_CACHE_DEBUG=1` says why).

use std::fmt::Write as _;
use std::io::Write as _;
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::time::{Duration, SystemTime};

use sha2::digest::Output;
use sha2::{Digest, Sha256};
use stackup_physics::fieldsolver::{Pair, SingleEnded, SolvedLine, SolverOptions};

/// Bump when the field solver, its default options or the entry layout
/// change in a way that changes results (the executable's identity is in
/// the key as well, but an explicit version keeps installed builds honest).
pub const FORMAT: u32 = 2;

/// Default bound on the disk space of the cache directory: 1 GiB. One
/// cached solve takes one 4 KiB block; a repository of 1,000 boards
/// (`bench/synth-monorepo.py --files 1000`, 4 to 24 layers, 10 to 40 net
/// classes) needs about 92,000 of them, 360 MiB, so 1 GiB holds it with
/// room to spare (eviction goes down to 3/4 of the bound, 768 MiB, still
/// twice that), and about 2,800 such boards in all.
pub const DEFAULT_MAX_BYTES: u64 = 1 << 30;

/// Disk space charged for an entry of `len` bytes before the directory is
/// scanned (then the file system's own block count is used): whole 4 KiB
/// blocks.
const BLOCK: u64 = 4096;

/// Larger files in the cache directory are not entries (one is about 500
/// bytes; a cached error message is short too) and are not read.
const MAX_ENTRY: u64 = 1 << 20;

const MAGIC: &str = "stackup-lint field-solver cache entry, format 2";
const USAGE_FILE: &str = "usage";
/// Temporary files older than this are left-overs of a killed run.
const STALE_TEMP: Duration = Duration::from_secs(3600);
/// A hit refreshes the entry's modification time when it is older than this.
const TOUCH_AFTER: Duration = Duration::from_secs(600);

/// A cache directory with its bound and the engine identity of this build.
#[derive(Debug, Clone)]
pub struct DiskCache {
    dir: PathBuf,
    max_bytes: u64,
    /// SHA-256 state after the engine identity and a newline, the prefix
    /// of every key text; a key's digest continues from a copy of it.
    engine: Sha256,
    /// The user the program runs as (owner of files it makes).
    owner: Option<u32>,
    /// Whether each shard directory (`00` to `ff`) may be read: a real
    /// directory of ours that nobody else may write, checked once per run.
    shards: Arc<[std::sync::OnceLock<bool>; 256]>,
}

/// Owner of a file (`None` where the platform has no such notion).
fn owner_of(meta: &std::fs::Metadata) -> Option<u32> {
    #[cfg(unix)]
    {
        Some(std::os::unix::fs::MetadataExt::uid(meta))
    }
    #[cfg(not(unix))]
    {
        let _ = meta;
        None
    }
}

/// `Ok` when `dir` (not followed if a link) is a directory owned by the
/// owner of `mine` and not writable by group or others; else why not.
fn private(dir: &std::fs::Metadata, mine: &std::fs::Metadata) -> Result<(), String> {
    if !dir.is_dir() {
        return Err("is not a directory (a link or a file)".into());
    }
    #[cfg(unix)]
    {
        use std::os::unix::fs::{MetadataExt, PermissionsExt};
        if dir.uid() != mine.uid() {
            return Err(format!(
                "is owned by user {}, not by the user running stackup-lint ({})",
                dir.uid(),
                mine.uid()
            ));
        }
        let mode = dir.permissions().mode();
        if mode & 0o022 != 0 {
            return Err(format!(
                "is writable by its group or by others (mode {:o}); run `chmod go-w` on it",
                mode & 0o7777
            ));
        }
    }
    #[cfg(not(unix))]
    let _ = mine;
    Ok(())
}

/// Create `dir` (and missing parents) private to the user: 0700 on Unix.
fn make_private_dir(dir: &Path) -> std::io::Result<()> {
    let mut b = std::fs::DirBuilder::new();
    b.recursive(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::DirBuilderExt;
        b.mode(0o700);
    }
    b.create(dir)
}

/// Open a cache file for reading if it is a regular file: a link is not
/// followed (O_NOFOLLOW) and a FIFO or device does not block the open
/// (O_NONBLOCK); the handle's own type is checked.
fn open_regular(path: &Path) -> Option<(std::fs::File, std::fs::Metadata)> {
    let mut o = std::fs::OpenOptions::new();
    o.read(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        o.custom_flags(libc::O_NOFOLLOW | libc::O_NONBLOCK | libc::O_NOCTTY);
    }
    let file = o.open(path).ok()?;
    let meta = file.metadata().ok()?;
    meta.is_file().then_some((file, meta))
}

/// What one lookup-and-store pass did (for `STACKUP_LINT_CACHE_DEBUG`).
#[derive(Debug, Default, Clone, Copy, PartialEq, Eq)]
pub struct Stats {
    pub hits: usize,
    pub misses: usize,
    pub stored: usize,
    pub evicted: usize,
}

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

impl DiskCache {
    /// A cache in `dir` (created when missing) bounded by `max_bytes`, for
    /// results of the engine `engine`. Fails when the directory cannot be
    /// created or written.
    ///
    /// The directory must be ours alone: owned by the user running the
    /// program and not writable by its group or by others (a new one is
    /// made so). Anyone else who can write there could plant results.
    pub fn open(dir: &Path, max_bytes: u64, engine: String) -> std::io::Result<DiskCache> {
        make_private_dir(dir)?;
        // Prove it is writable now rather than failing on every store; the
        // probe is ours, so its owner is who we are.
        let probe = tempfile::NamedTempFile::new_in(dir)?;
        let mine = probe.as_file().metadata()?;
        drop(probe);
        private(&std::fs::symlink_metadata(dir)?, &mine)
            .map_err(|why| std::io::Error::other(format!("the directory {why}")))?;
        let mut prefix = Sha256::new();
        prefix.update(engine.as_bytes());
        prefix.update(b"\n");
        Ok(DiskCache {
            dir: dir.to_path_buf(),
            max_bytes,
            engine: prefix,
            owner: owner_of(&mine),
            shards: Arc::new(std::array::from_fn(|_| std::sync::OnceLock::new())),
        })
    }

    pub fn dir(&self) -> &Path {
        &self.dir
    }

    /// True when the shard directory of first digest byte `b` may be
    /// read: missing (nothing to read), or a real directory of ours that
    /// nobody else may write. Checked once per run.
    fn shard_ok(&self, b: u8) -> bool {
        *self.shards[usize::from(b)].get_or_init(|| {
            let shard = self.dir.join(format!("{b:02x}"));
            match std::fs::symlink_metadata(&shard) {
                Err(_) => true,
                Ok(m) => {
                    let ok = m.is_dir()
                        && self.owner.is_none_or(|o| Some(o) == owner_of(&m))
                        && {
                            #[cfg(unix)]
                            {
                                use std::os::unix::fs::PermissionsExt;
                                m.permissions().mode() & 0o022 == 0
                            }
                            #[cfg(not(unix))]
                            {
                                true
                            }
                        };
                    if !ok && debug() {
                        eprintln!(
                            "cache: {} is not a private directory of this user; its entries are not read",
                            shard.display()
                        );
                    }
                    ok
                }
            }
        })
    }

    /// SHA-256 of the key text: the engine identity, a newline, the
    /// section's key.
    fn digest(&self, section_key: &str) -> Output<Sha256> {
        let mut h = self.engine.clone();
        h.update(section_key.as_bytes());
        h.finalize()
    }

    fn path_of(&self, digest: &[u8]) -> PathBuf {
        let hex = hex(digest);
        self.dir.join(&hex[..2]).join(&hex[2..])
    }

    /// The cached result for `section_key`, or `None` (missing, unreadable,
    /// damaged, or written for another key).
    pub fn get(&self, section_key: &str) -> Option<Result<SolvedLine, String>> {
        self.read_entry(section_key, decode)
    }

    /// Read and decode the entry for `key`, refreshing its modification
    /// time on a hit.
    fn read_entry<T>(&self, key: &str, decode: impl Fn(&[u8], &[u8]) -> Option<T>) -> Option<T> {
        let digest = self.digest(key);
        if !self.shard_ok(digest[0]) {
            return None;
        }
        let path = self.path_of(&digest);
        // Open, size, one read: an entry is replaced by renaming a new file
        // over it, never written in place, so the opened file keeps the
        // size it was seen with (a shorter read is a miss). Anything but a
        // regular file is a miss, without blocking.
        let (mut file, meta) = open_regular(&path)?;
        if meta.len() > MAX_ENTRY {
            return None;
        }
        let mut bytes = vec![0; usize::try_from(meta.len()).ok()?];
        std::io::Read::read_exact(&mut file, &mut bytes).ok()?;
        let value = decode(&bytes, &digest)?;
        touch(&file, &meta, &path);
        Some(value)
    }

    /// Store a result; returns the disk space charged for it (whole 4 KiB
    /// blocks; 0 when it failed).
    pub fn put(&self, section_key: &str, value: &Result<SolvedLine, String>) -> u64 {
        let digest = self.digest(section_key);
        let bytes = encode(&digest, value);
        self.write_entry(&digest, bytes)
    }

    /// Numbers derived from solves (such as a width for target) stored
    /// under `key` by [`DiskCache::put_numbers`], or `None` (missing,
    /// damaged, another key's entry, or a solver result).
    pub fn get_numbers(&self, key: &str) -> Option<Vec<f64>> {
        self.read_entry(key, decode_numbers)
    }

    /// Store numbers under `key`; returns the disk space charged (whole
    /// 4 KiB blocks; 0 when it failed).
    pub fn put_numbers(&self, key: &str, value: &[f64]) -> u64 {
        let digest = self.digest(key);
        let mut body = String::new();
        push_floats(&mut body, "num", value);
        self.write_entry(&digest, seal(&digest, body))
    }

    fn write_entry(&self, digest: &[u8], bytes: Vec<u8>) -> u64 {
        let path = self.path_of(digest);
        if !self.shard_ok(digest[0]) {
            return 0;
        }
        let write = || -> std::io::Result<()> {
            let shard = path.parent().unwrap_or(&self.dir);
            make_private_dir(shard)?;
            let mut tmp = tempfile::NamedTempFile::new_in(shard)?;
            tmp.write_all(&bytes)?;
            tmp.persist(&path).map_err(|e| e.error)?;
            Ok(())
        };
        match write() {
            Ok(()) => (bytes.len() as u64).div_ceil(BLOCK) * BLOCK,
            Err(_) => 0,
        }
    }

    /// Add `added` bytes to the usage estimate; when it passes the bound,
    /// scan the directory and remove least recently used entries down to
    /// 3/4 of the bound. Returns the number of entries removed.
    pub fn account(&self, added: u64) -> usize {
        if added == 0 {
            return 0;
        }
        let usage = self.dir.join(USAGE_FILE);
        let estimate = open_regular(&usage)
            .and_then(|(f, _)| {
                let mut t = String::new();
                std::io::Read::read_to_string(&mut std::io::Read::take(f, 32), &mut t).ok()?;
                Some(t)
            })
            .and_then(|t| t.trim().parse::<u64>().ok());
        let (total, evicted) = match estimate {
            Some(e) if e.saturating_add(added) <= self.max_bytes => (e + added, 0),
            // Over the bound, or no estimate yet (first run, or the file was
            // lost): count what is really there.
            _ => self.evict(),
        };
        let _ = write_small(&self.dir, &usage, format!("{total}\n").as_bytes());
        evicted
    }

    /// Scan the cache, remove the least recently used entries until it is
    /// at most 3/4 of the bound (when it is above the bound), remove stale
    /// temporary files. Returns the bytes left and the entries removed.
    pub fn evict(&self) -> (u64, usize) {
        let mut entries: Vec<(SystemTime, u64, PathBuf)> = Vec::new();
        let now = SystemTime::now();
        let Ok(shards) = std::fs::read_dir(&self.dir) else {
            return (0, 0);
        };
        for shard in shards.flatten() {
            let name = shard.file_name();
            let name = name.to_string_lossy();
            if name.len() != 2 || !name.bytes().all(|b| b.is_ascii_hexdigit()) {
                continue;
            }
            let Ok(files) = std::fs::read_dir(shard.path()) else {
                continue;
            };
            for f in files.flatten() {
                // Not followed: a link or a special file is never counted
                // as an entry (removing one only unlinks it).
                let Ok(meta) = f.metadata() else { continue };
                if !meta.is_file() {
                    continue;
                }
                let modified = meta.modified().unwrap_or(SystemTime::UNIX_EPOCH);
                let fname = f.file_name();
                let fname = fname.to_string_lossy();
                if fname.len() == 62 && fname.bytes().all(|b| b.is_ascii_hexdigit()) {
                    entries.push((modified, on_disk(&meta), f.path()));
                } else if fname.starts_with(".tmp")
                    && now.duration_since(modified).unwrap_or_default() > STALE_TEMP
                {
                    let _ = std::fs::remove_file(f.path());
                }
            }
        }
        let mut total: u64 = entries.iter().map(|e| e.1).sum();
        if total <= self.max_bytes {
            return (total, 0);
        }
        // Oldest first; the path breaks ties so the order is fixed.
        entries.sort();
        let goal = self.max_bytes / 4 * 3;
        let mut removed = 0;
        for (_, len, path) in entries {
            if total <= goal {
                break;
            }
            // Another run may have removed it already: it is gone either way.
            let _ = std::fs::remove_file(&path);
            total = total.saturating_sub(len);
            removed += 1;
        }
        (total, removed)
    }
}

fn write_small(dir: &Path, path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let mut tmp = tempfile::NamedTempFile::new_in(dir)?;
    tmp.write_all(bytes)?;
    tmp.persist(path).map_err(|e| e.error)?;
    Ok(())
}

/// Disk space a file takes: its blocks where the platform says, else its
/// length in whole 4 KiB blocks.
pub fn on_disk(meta: &std::fs::Metadata) -> u64 {
    #[cfg(unix)]
    {
        std::os::unix::fs::MetadataExt::blocks(meta) * 512
    }
    #[cfg(not(unix))]
    {
        meta.len().div_ceil(BLOCK) * BLOCK
    }
}

/// Mark an entry as recently used (its modification time), at most once
/// per [`TOUCH_AFTER`], through the handle it was read by (no second
/// lookup of the path); where that handle may not set the time, through
/// one opened for writing. Errors are ignored: a read-only cache still
/// serves.
fn touch(file: &std::fs::File, meta: &std::fs::Metadata, path: &Path) {
    let now = SystemTime::now();
    let fresh = meta
        .modified()
        .ok()
        .and_then(|t| now.duration_since(t).ok())
        .is_some_and(|age| age < TOUCH_AFTER);
    if !fresh && file.set_modified(now).is_err() {
        let mut o = std::fs::OpenOptions::new();
        o.write(true);
        #[cfg(unix)]
        {
            use std::os::unix::fs::OpenOptionsExt;
            o.custom_flags(libc::O_NOFOLLOW | libc::O_NONBLOCK | libc::O_NOCTTY);
        }
        if let Ok(f) = o.open(path) {
            if f.metadata().is_ok_and(|m| m.is_file()) {
                let _ = f.set_modified(now);
            }
        }
    }
}

fn hex(bytes: &[u8]) -> String {
    const DIGITS: &[u8; 16] = b"0123456789abcdef";
    let mut s = String::with_capacity(bytes.len() * 2);
    for b in bytes {
        s.push(DIGITS[usize::from(b >> 4)] as char);
        s.push(DIGITS[usize::from(b & 15)] as char);
    }
    s
}

fn push_floats(out: &mut String, name: &str, v: &[f64]) {
    let _ = write!(out, "{name} {}", v.len());
    for x in v {
        let _ = write!(out, " {:016x}", x.to_bits());
    }
    out.push('\n');
}

/// The entry's bytes: magic line, the key's SHA-256, the result, then the
/// SHA-256 of everything before the checksum line.
fn encode(digest: &[u8], value: &Result<SolvedLine, String>) -> Vec<u8> {
    let mut out = String::with_capacity(1024);
    match value {
        Err(message) => {
            let _ = write!(out, "err {}\n{message}\n", message.len());
        }
        Ok(s) => {
            let _ = writeln!(out, "ok {} {}", s.n, s.unknowns);
            push_floats(&mut out, "z_rel_error", &[s.z_rel_error]);
            push_floats(&mut out, "eps_rel_error", &[s.eps_rel_error]);
            push_floats(&mut out, "capacitance", &s.capacitance);
            push_floats(&mut out, "capacitance_vacuum", &s.capacitance_vacuum);
            push_floats(&mut out, "inductance", &s.inductance);
            push_floats(&mut out, "modal_eps_eff", &s.modal_eps_eff);
            match s.single {
                Some(x) => push_floats(&mut out, "single", &[x.z0, x.eps_eff]),
                None => push_floats(&mut out, "single", &[]),
            }
            match s.pair {
                Some(p) => push_floats(
                    &mut out,
                    "pair",
                    &[
                        p.z_even,
                        p.z_odd,
                        p.z_diff,
                        p.z_common,
                        p.eps_eff_even,
                        p.eps_eff_odd,
                    ],
                ),
                None => push_floats(&mut out, "pair", &[]),
            }
        }
    }
    seal(digest, out)
}

/// The entry's bytes around a result `body`: magic line, the key's
/// SHA-256, the body, then the SHA-256 of everything before that line.
fn seal(digest: &[u8], body: String) -> Vec<u8> {
    let mut out = String::with_capacity(body.len() + 160);
    let _ = write!(out, "{MAGIC}\nkey {}\n", hex(digest));
    out.push_str(&body);
    let sum = hex(&Sha256::digest(out.as_bytes()));
    let _ = writeln!(out, "sha256 {sum}");
    out.into_bytes()
}

/// The result body of a whole, intact entry for the key whose SHA-256 is
/// `digest`; `None` for anything else.
fn unseal<'a>(bytes: &'a [u8], digest: &[u8]) -> Option<&'a str> {
    // Checksum line: the last 72 bytes ("sha256 " + 64 hex + "\n").
    let body_len = bytes.len().checked_sub(72)?;
    let (body, tail) = bytes.split_at(body_len);
    let tail = std::str::from_utf8(tail).ok()?;
    let sum = tail.strip_prefix("sha256 ")?.strip_suffix('\n')?;
    if sum != hex(&Sha256::digest(body)) {
        return None;
    }
    let body = std::str::from_utf8(body).ok()?;
    let rest = body.strip_prefix(MAGIC)?.strip_prefix("\nkey ")?;
    let (key, rest) = rest.split_once('\n')?;
    (key == hex(digest)).then_some(rest)
}

/// Numbers stored by `put_numbers`, from an intact entry for `digest`.
fn decode_numbers(bytes: &[u8], digest: &[u8]) -> Option<Vec<f64>> {
    let line = unseal(bytes, digest)?.strip_suffix('\n')?;
    let mut it = line.strip_prefix("num ")?.split(' ');
    let count: usize = it.next()?.parse().ok()?;
    let v = it
        .map(|h| bits_of(h).map(f64::from_bits))
        .collect::<Option<Vec<f64>>>()?;
    (v.len() == count).then_some(v)
}

/// A 64-bit pattern written as exactly 16 lowercase hex digits.
fn bits_of(hex: &str) -> Option<u64> {
    if hex.len() != 16 {
        return None;
    }
    hex.bytes().try_fold(0u64, |acc, b| {
        let digit = match b {
            b'0'..=b'9' => b - b'0',
            b'a'..=b'f' => b - b'a' + 10,
            _ => return None,
        };
        Some(acc << 4 | u64::from(digit))
    })
}

/// Read an entry back; `None` for anything but a whole, intact entry for
/// the key whose SHA-256 is `digest`.
fn decode(bytes: &[u8], digest: &[u8]) -> Option<Result<SolvedLine, String>> {
    let rest = unseal(bytes, digest)?;
    if let Some(rest) = rest.strip_prefix("err ") {
        let (len, rest) = rest.split_once('\n')?;
        let len: usize = len.parse().ok()?;
        let message = rest.get(..len)?;
        if rest.get(len..)? != "\n" {
            return None;
        }
        return Some(Err(message.to_string()));
    }
    let mut lines = rest.strip_suffix('\n')?.split('\n');
    let mut head = lines.next()?.strip_prefix("ok ")?.split(' ');
    let n: usize = head.next()?.parse().ok()?;
    let unknowns: usize = head.next()?.parse().ok()?;
    if head.next().is_some() {
        return None;
    }
    let mut floats = |name: &str| -> Option<Vec<f64>> {
        let mut it = lines.next()?.split(' ');
        if it.next()? != name {
            return None;
        }
        let count: usize = it.next()?.parse().ok()?;
        let mut v = Vec::with_capacity(count.min(64));
        for h in it {
            v.push(f64::from_bits(bits_of(h)?));
        }
        (v.len() == count).then_some(v)
    };
    let z_rel_error = *floats("z_rel_error")?.first()?;
    let eps_rel_error = *floats("eps_rel_error")?.first()?;
    let capacitance = floats("capacitance")?;
    let capacitance_vacuum = floats("capacitance_vacuum")?;
    let inductance = floats("inductance")?;
    let modal_eps_eff = floats("modal_eps_eff")?;
    let single = match floats("single")?.as_slice() {
        [] => None,
        [z0, eps_eff] => Some(SingleEnded {
            z0: *z0,
            eps_eff: *eps_eff,
        }),
        _ => return None,
    };
    let pair = match floats("pair")?.as_slice() {
        [] => None,
        [z_even, z_odd, z_diff, z_common, eps_eff_even, eps_eff_odd] => Some(Pair {
            z_even: *z_even,
            z_odd: *z_odd,
            z_diff: *z_diff,
            z_common: *z_common,
            eps_eff_even: *eps_eff_even,
            eps_eff_odd: *eps_eff_odd,
        }),
        _ => return None,
    };
    if lines.next().is_some() {
        return None;
    }
    Some(Ok(SolvedLine {
        capacitance,
        capacitance_vacuum,
        inductance,
        n,
        modal_eps_eff,
        single,
        pair,
        z_rel_error,
        eps_rel_error,
        unknowns,
    }))
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

#[cfg(test)]
mod tests {
    use super::*;

    fn sample() -> SolvedLine {
        SolvedLine {
            capacitance: vec![1.234e-10, -3.0e-12, -3.0e-12, 1.234e-10],
            capacitance_vacuum: vec![3.1e-11, -1.0e-12, -1.0e-12, 0.1 + 0.2],
            inductance: vec![f64::MIN_POSITIVE, 4.0e-7, 4.0e-7, 1.0 / 3.0],
            n: 2,
            modal_eps_eff: vec![2.9, 3.1],
            single: None,
            pair: Some(Pair {
                z_even: 55.5,
                z_odd: 45.0000000000001,
                z_diff: 90.0000000000002,
                z_common: 27.75,
                eps_eff_even: 3.1,
                eps_eff_odd: 2.9,
            }),
            z_rel_error: 1e-3,
            eps_rel_error: 5e-17,
            unknowns: 12345,
        }
    }

    fn cache(dir: &Path, max: u64, engine: &str) -> DiskCache {
        DiskCache::open(dir, max, engine.to_string()).unwrap()
    }

    #[test]
    fn entries_round_trip_bit_for_bit() {
        let dir = tempfile::tempdir().unwrap();
        let c = cache(dir.path(), DEFAULT_MAX_BYTES, "engine A");
        let v = Ok(sample());
        assert!(c.put("section 1", &v) > 0);
        let back = c.get("section 1").unwrap().unwrap();
        let s = sample();
        assert_eq!(back, s);
        for (a, b) in back.inductance.iter().zip(&s.inductance) {
            assert_eq!(a.to_bits(), b.to_bits());
        }
        let single = SolvedLine {
            n: 1,
            single: Some(SingleEnded {
                z0: 50.000000000000014,
                eps_eff: 3.3,
            }),
            pair: None,
            ..sample()
        };
        c.put("section 2", &Ok(single.clone()));
        assert_eq!(c.get("section 2"), Some(Ok(single)));
        let err: Result<SolvedLine, String> = Err("no plane\nbelow".into());
        c.put("section 3", &err);
        assert_eq!(c.get("section 3"), Some(err));
        assert_eq!(c.get("section 4"), None);
    }

    /// Derived numbers (a width for target, or none) round trip bit for
    /// bit; a number entry is never read as a solve and the other way
    /// round; a damaged number entry is a miss.
    #[test]
    fn number_entries_round_trip_and_stay_apart() {
        let dir = tempfile::tempdir().unwrap();
        let c = cache(dir.path(), DEFAULT_MAX_BYTES, "engine A");
        let w = [1.0478000000000001e-4];
        assert!(c.put_numbers("width 1", &w) > 0);
        let back = c.get_numbers("width 1").unwrap();
        assert_eq!(back[0].to_bits(), w[0].to_bits());
        c.put_numbers("width 2", &[]);
        assert_eq!(c.get_numbers("width 2"), Some(vec![]));
        assert_eq!(c.get("width 1"), None);
        c.put("section", &Ok(sample()));
        assert_eq!(c.get_numbers("section"), None);
        let path = c.path_of(&c.digest("width 1"));
        let mut bytes = std::fs::read(&path).unwrap();
        let i = bytes.len() - 80;
        bytes[i] ^= 1;
        std::fs::write(&path, bytes).unwrap();
        assert_eq!(c.get_numbers("width 1"), None);
        assert_eq!(
            cache(dir.path(), DEFAULT_MAX_BYTES, "engine B").get_numbers("width 2"),
            None
        );
    }

    #[test]
    fn another_engine_misses() {
        let dir = tempfile::tempdir().unwrap();
        cache(dir.path(), DEFAULT_MAX_BYTES, "engine A").put("s", &Ok(sample()));
        assert!(cache(dir.path(), DEFAULT_MAX_BYTES, "engine A")
            .get("s")
            .is_some());
        assert_eq!(
            cache(dir.path(), DEFAULT_MAX_BYTES, "engine B").get("s"),
            None
        );
    }

    /// A cache in `dir` holding the sample under key "s": the cache, the
    /// entry's path and its bytes.
    fn one_entry(dir: &Path) -> (DiskCache, PathBuf, Vec<u8>) {
        let c = cache(dir, DEFAULT_MAX_BYTES, "e");
        c.put("s", &Ok(sample()));
        let path = c.path_of(&c.digest("s"));
        let good = std::fs::read(&path).unwrap();
        (c, path, good)
    }

    #[test]
    fn damaged_or_foreign_entries_are_misses_and_get_rewritten() {
        let dir = tempfile::tempdir().unwrap();
        let (c, path, good) = one_entry(dir.path());
        // Every truncation, and a flipped byte anywhere, is a miss.
        for cut in [0, 1, 40, good.len() / 2, good.len() - 73, good.len() - 1] {
            std::fs::write(&path, &good[..cut]).unwrap();
            assert_eq!(c.get("s"), None, "truncated at {cut}");
        }
        for i in (0..good.len()).step_by(7) {
            let mut bad = good.clone();
            bad[i] ^= 0x04;
            std::fs::write(&path, &bad).unwrap();
            assert_eq!(c.get("s"), None, "byte {i} flipped");
        }
        // A file larger than any entry is a miss.
        let mut big = good.clone();
        big.resize(MAX_ENTRY as usize + 1, b'\n');
        std::fs::write(&path, &big).unwrap();
        assert_eq!(c.get("s"), None);
        // A whole, valid entry for another key at this path is a miss too.
        std::fs::write(&path, encode(&c.digest("other"), &Ok(sample()))).unwrap();
        assert_eq!(c.get("s"), None);
        c.put("s", &Ok(sample()));
        assert_eq!(c.get("s"), Some(Ok(sample())));
        assert_eq!(std::fs::read(&path).unwrap(), good);
    }

    #[test]
    fn entries_hold_the_key_digest_not_the_key_text() {
        let dir = tempfile::tempdir().unwrap();
        let c = cache(dir.path(), DEFAULT_MAX_BYTES, "engine A");
        // A key as long as a real section's `Debug` text.
        let key = format!("CrossSection {{ {} }}", "slab: 1.27e-4, ".repeat(100));
        let charged = c.put(&key, &Ok(sample()));
        // The digest is the SHA-256 of the whole key text, engine first.
        let whole = Sha256::digest(format!("engine A\n{key}").as_bytes());
        assert_eq!(c.digest(&key), whole);
        let path = c.path_of(&whole);
        let bytes = std::fs::read(&path).unwrap();
        let text = String::from_utf8(bytes.clone()).unwrap();
        assert!(text.contains(&format!("\nkey {}\n", hex(&whole))));
        assert!(!text.contains("slab"), "the key text is not stored");
        assert!(bytes.len() < 1024, "{} bytes", bytes.len());
        // Charged in whole 4 KiB blocks.
        assert_eq!(charged, BLOCK);
        assert_eq!(c.get(&key), Some(Ok(sample())));
    }

    #[test]
    fn an_entry_of_the_previous_layout_is_a_miss_and_gets_rewritten() {
        let dir = tempfile::tempdir().unwrap();
        let (c, path, good) = one_entry(dir.path());
        // Format 1 kept the whole key text, length-prefixed, with its own
        // magic line and a valid checksum.
        let mut old = String::from("stackup-lint field-solver cache entry\nkey 3\ne\ns\n");
        old.push_str("ok 1 10\n");
        old = format!("{old}sha256 {}\n", hex(&Sha256::digest(old.as_bytes())));
        std::fs::write(&path, old).unwrap();
        assert_eq!(c.get("s"), None);
        c.put("s", &Ok(sample()));
        assert_eq!(std::fs::read(&path).unwrap(), good);
    }

    #[test]
    fn the_size_bound_evicts_least_recently_used() {
        let dir = tempfile::tempdir().unwrap();
        let probe = cache(dir.path(), DEFAULT_MAX_BYTES, "e");
        let one = probe.put("probe", &Ok(sample()));
        std::fs::remove_file(probe.path_of(&probe.digest("probe"))).unwrap();
        // Room for ten entries (the keys differ by a digit only).
        let c = cache(dir.path(), one * 10 + one / 2, "e");
        let old = SystemTime::now() - Duration::from_secs(86_400);
        let mut added = 0;
        for i in 0..10 {
            let key = format!("s{i}");
            added += c.put(&key, &Ok(sample()));
            // Entry i was last used i minutes after a day ago.
            let f = std::fs::OpenOptions::new()
                .write(true)
                .open(c.path_of(&c.digest(&key)))
                .unwrap();
            f.set_modified(old + Duration::from_secs(60 * i)).unwrap();
        }
        assert_eq!(c.account(added), 0, "ten entries fit");
        // Using s0 makes it recent; s1 is then the oldest.
        assert!(c.get("s0").is_some());
        let mut more = 0;
        for i in 10..12 {
            more += c.put(&format!("s{i}"), &Ok(sample()));
        }
        let evicted = c.account(more);
        // 12 entries, down to at most 3/4 of 10.5: 7 left, 5 removed.
        assert_eq!(evicted, 5);
        for gone in ["s1", "s2", "s3", "s4", "s5"] {
            assert_eq!(c.get(gone), None, "{gone} should be evicted");
        }
        for kept in ["s0", "s6", "s7", "s8", "s9", "s10", "s11"] {
            assert!(c.get(kept).is_some(), "{kept} should be kept");
        }
        let usage: u64 = std::fs::read_to_string(dir.path().join(USAGE_FILE))
            .unwrap()
            .trim()
            .parse()
            .unwrap();
        let left: u64 = ["s0", "s6", "s7", "s8", "s9", "s10", "s11"]
            .iter()
            .map(|k| on_disk(&std::fs::metadata(c.path_of(&c.digest(k))).unwrap()))
            .sum();
        assert_eq!(usage, left);
    }

    #[test]
    fn bit_patterns_parse_as_written() {
        for x in [
            0.0,
            -0.0,
            1.0 / 3.0,
            f64::MIN_POSITIVE,
            f64::MAX,
            f64::NAN,
            5e-324,
        ] {
            let text = format!("{:016x}", x.to_bits());
            assert_eq!(bits_of(&text), Some(x.to_bits()), "{text}");
        }
        assert_eq!(bits_of("0123456789abcdef"), Some(0x0123_4567_89ab_cdef));
        // Only what `encode` writes: 16 lowercase hex digits.
        for bad in [
            "",
            "0",
            "0123456789abcde",
            "0123456789abcdef0",
            "0123456789ABCDEF",
        ] {
            assert_eq!(bits_of(bad), None, "{bad}");
        }
        assert_eq!(bits_of("+123456789abcdef"), None);
        assert_eq!(bits_of("0123456789abcdeg"), None);
    }

    #[test]
    fn sizes_parse() {
        assert_eq!(parse_size("64 MiB"), Some(64 << 20));
        assert_eq!(parse_size("500k"), Some(500 << 10));
        assert_eq!(parse_size("1G"), Some(1 << 30));
        assert_eq!(parse_size("4096"), Some(4096));
        assert_eq!(parse_size("lots"), None);
        assert_eq!(parse_size("5 parsecs"), None);
    }
}
