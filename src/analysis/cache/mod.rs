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

mod codec;
mod config;
mod store;

#[cfg(test)]
use codec::*;
pub use config::{
    debug, default_dir, engine_identity, from_env, parse_size, DEFAULT_MAX_BYTES, FORMAT,
};
#[cfg(test)]
use store::*;
pub use store::{on_disk, DiskCache, Stats};

#[cfg(test)]
mod tests {
    use super::*;
    use sha2::{Digest, Sha256};
    use stackup_physics::fieldsolver::{Pair, SingleEnded, SolvedLine};
    use std::path::{Path, PathBuf};
    use std::time::{Duration, SystemTime};

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
                eps_eff_even: 3.1,
                eps_eff_odd: 2.9,
            }),
            filling: vec![
                vec![1.0e-11, -2.0e-13, -2.0e-13, 1.0e-11],
                vec![f64::MIN_POSITIVE, 0.0, -0.0, 1.0 / 7.0],
            ],
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
            filling: vec![vec![1.0e-11], vec![2.0e-12], vec![0.0]],
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
