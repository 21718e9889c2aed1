//! The cache directory: one file per entry in 256 shard directories,
//! written by rename, read without following links or blocking, private to
//! the user, bounded in disk blocks with least-recently-used eviction.

use std::io::Write as _;
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::time::{Duration, SystemTime};

use sha2::digest::Output;
use sha2::{Digest, Sha256};
use stackup_physics::fieldsolver::SolvedLine;

use super::codec::*;
use super::config::debug;

/// Disk space charged for an entry of `len` bytes before the directory is
/// scanned (then the file system's own block count is used): whole 4 KiB
/// blocks.
pub(super) const BLOCK: u64 = 4096;

/// Larger files in the cache directory are not entries (one is about 500
/// bytes; a cached error message is short too) and are not read.
pub(super) const MAX_ENTRY: u64 = 1 << 20;

pub(super) const USAGE_FILE: &str = "usage";
/// Temporary files older than this are left-overs of a killed run.
pub(super) const STALE_TEMP: Duration = Duration::from_secs(3600);
/// A hit refreshes the entry's modification time when it is older than this.
pub(super) const TOUCH_AFTER: Duration = Duration::from_secs(600);

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
pub(super) fn owner_of(meta: &std::fs::Metadata) -> Option<u32> {
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
pub(super) fn private(dir: &std::fs::Metadata, mine: &std::fs::Metadata) -> Result<(), String> {
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
pub(super) fn make_private_dir(dir: &Path) -> std::io::Result<()> {
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
pub(super) fn open_regular(path: &Path) -> Option<(std::fs::File, std::fs::Metadata)> {
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
    pub(super) fn digest(&self, section_key: &str) -> Output<Sha256> {
        let mut h = self.engine.clone();
        h.update(section_key.as_bytes());
        h.finalize()
    }

    pub(super) fn path_of(&self, digest: &[u8]) -> PathBuf {
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

pub(super) fn write_small(dir: &Path, path: &Path, bytes: &[u8]) -> std::io::Result<()> {
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
pub(super) fn touch(file: &std::fs::File, meta: &std::fs::Metadata, path: &Path) {
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
