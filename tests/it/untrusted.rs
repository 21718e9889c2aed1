//! stackup-lint on untrusted pull requests (SECURITY.md): one test per
//! class of hostile input, through the binary. Each asserts the exit code,
//! that a planted canary of the target file appears in no output, that the
//! run ends in bounded time (and memory, where an allocation is the risk)
//! and that nothing panics.

use crate::common;
use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};
use std::time::{Duration, Instant};

const BASELINE: &str = include_str!("../common/baseline.stackup.yaml");

/// A value no output may ever show.
const CANARY: &str = "CANARY-7f3e9a1c-SECRET";

/// A project: a directory with `.git` (the project root) and the baseline
/// board at `boards/a.stackup.yaml`, plus a secret file beside the project.
struct Project {
    _dir: tempfile::TempDir,
    outer: PathBuf,
    root: PathBuf,
}

impl Project {
    fn new() -> Project {
        let dir = tempfile::tempdir().unwrap();
        let outer = dir.path().to_path_buf();
        let root = outer.join("repo");
        std::fs::create_dir_all(root.join(".git")).unwrap();
        std::fs::create_dir_all(root.join("boards")).unwrap();
        std::fs::write(root.join("boards/a.stackup.yaml"), BASELINE).unwrap();
        std::fs::write(
            outer.join("secret.env"),
            format!("AWS_SECRET_ACCESS_KEY={CANARY}\nTOKEN={CANARY}\n"),
        )
        .unwrap();
        Project {
            _dir: dir,
            outer,
            root,
        }
    }

    fn write(&self, rel: &str, text: &str) -> PathBuf {
        let p = self.root.join(rel);
        std::fs::create_dir_all(p.parent().unwrap()).unwrap();
        std::fs::write(&p, text).unwrap();
        p
    }

    /// The baseline board with `libraries: [lib]` added.
    fn board_with_library(&self, rel: &str, lib: &str) -> PathBuf {
        self.write(
            rel,
            &BASELINE.replace("materials:\n", &format!("libraries: [{lib}]\nmaterials:\n")),
        )
    }
}

/// Run in `dir` with `args`, at most `limit`; fails the test on a hang, a
/// panic or a crash by signal.
fn run_limited(dir: &Path, args: &[&str], limit: Duration, envs: &[(&str, &str)]) -> Output {
    let mut c = common::command(dir);
    c.args(args)
        .envs(envs.iter().copied())
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped());
    let started = Instant::now();
    let mut child = c.spawn().unwrap();
    // Drain both pipes while waiting, so a long output cannot stall it.
    let drain = |mut r: Box<dyn std::io::Read + Send>| {
        std::thread::spawn(move || {
            let mut v = Vec::new();
            let _ = r.read_to_end(&mut v);
            v
        })
    };
    let stdout = drain(Box::new(child.stdout.take().unwrap()));
    let stderr = drain(Box::new(child.stderr.take().unwrap()));
    let status = loop {
        if let Some(s) = child.try_wait().unwrap() {
            break s;
        }
        if started.elapsed() > limit {
            let _ = child.kill();
            panic!("stackup-lint {args:?} did not finish within {limit:?}");
        }
        std::thread::sleep(Duration::from_millis(20));
    };
    let out = Output {
        status,
        stdout: stdout.join().unwrap(),
        stderr: stderr.join().unwrap(),
    };
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(!stderr.contains("panicked"), "{stderr}");
    assert!(out.status.code().is_some(), "killed: {:?}", out.status);
    out
}

fn run(dir: &Path, args: &[&str]) -> Output {
    run_limited(dir, args, Duration::from_secs(60), &[])
}

/// Every output format of `check` on `paths`, plus a SARIF file: the exit
/// code of each, and all their text (stdout, stderr, the SARIF log).
fn all_outputs(dir: &Path, paths: &[&str]) -> (Vec<Option<i32>>, String) {
    let mut codes = Vec::new();
    let mut text = String::new();
    let sarif = dir.join("out.sarif");
    for format in ["human", "json", "github", "gitlab"] {
        let mut args = vec!["check", "--format", format, "--sarif"];
        let s = sarif.to_string_lossy().into_owned();
        args.push(&s);
        args.extend_from_slice(paths);
        let out = run(dir, &args);
        codes.push(out.status.code());
        text.push_str(&String::from_utf8_lossy(&out.stdout));
        text.push_str(&String::from_utf8_lossy(&out.stderr));
        if let Ok(log) = std::fs::read_to_string(&sarif) {
            text.push_str(&log);
        }
    }
    (codes, text)
}

fn assert_no_canary(text: &str) {
    assert!(!text.contains(CANARY), "the canary leaked:\n{text}");
    assert!(
        !text.contains("CANARY"),
        "part of the canary leaked:\n{text}"
    );
}

// ---------------------------------------------------------------- reading

/// `libraries:` entries that escape the project root by `..`, by an
/// absolute path or through a symbolic link are input errors at the entry;
/// the file outside is never read, whatever the output format.
#[test]
fn library_paths_are_confined_to_the_project_root() {
    let p = Project::new();
    let secret = p.outer.join("secret.env");
    let abs = secret.to_string_lossy().into_owned();
    p.board_with_library("boards/dots.stackup.yaml", "../../secret.env");
    p.board_with_library("boards/abs.stackup.yaml", &abs);
    #[cfg(unix)]
    std::os::unix::fs::symlink(&secret, p.root.join("boards/link.materials.yaml")).unwrap();
    #[cfg(unix)]
    p.board_with_library("boards/link.stackup.yaml", "link.materials.yaml");
    for board in [
        "boards/dots.stackup.yaml",
        "boards/abs.stackup.yaml",
        #[cfg(unix)]
        "boards/link.stackup.yaml",
    ] {
        let (codes, text) = all_outputs(&p.root, &[board]);
        assert!(codes.iter().all(|c| *c == Some(2)), "{board}: {codes:?}");
        assert!(
            text.contains("outside the project root") || text.contains("an absolute path"),
            "{board}: {text}"
        );
        assert_no_canary(&text);
    }
    // The message points at the entry.
    let out = run(&p.root, &["check", "boards/dots.stackup.yaml"]);
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("boards/dots.stackup.yaml:5:13"), "{text}");
    // --root widens the root: the same library is then read (and, not
    // being a material library, refused without being quoted).
    let outer = p.outer.to_string_lossy().into_owned();
    let out = run(
        &p.root,
        &["check", "--root", &outer, "boards/dots.stackup.yaml"],
    );
    assert_eq!(out.status.code(), Some(2));
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("this is not a material library"), "{text}");
    assert_no_canary(&text);
}

/// A stackup that is a symbolic link out of the project, found by the
/// directory walk or named on the command line, is refused unread; a link
/// to a directory outside is not followed (and counted as skipped).
#[cfg(unix)]
#[test]
fn links_out_of_the_project_are_not_followed() {
    let p = Project::new();
    std::os::unix::fs::symlink(
        p.outer.join("secret.env"),
        p.root.join("boards/evil.stackup.yaml"),
    )
    .unwrap();
    std::fs::create_dir_all(p.outer.join("elsewhere")).unwrap();
    std::fs::write(
        p.outer.join("elsewhere/x.stackup.yaml"),
        format!("stackup-lint: 1\nboard: {CANARY}\nlayers: []\n"),
    )
    .unwrap();
    std::os::unix::fs::symlink(p.outer.join("elsewhere"), p.root.join("boards/outside")).unwrap();
    for paths in [&["boards"][..], &["boards/evil.stackup.yaml"][..]] {
        let (codes, text) = all_outputs(&p.root, paths);
        assert!(codes.iter().all(|c| *c == Some(2)), "{codes:?}");
        assert!(text.contains("through a symbolic link"), "{text}");
        assert_no_canary(&text);
    }
    let out = run(&p.root, &["check", "boards"]);
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        text.contains("skipped 1 link leading outside the project root"),
        "{text}"
    );
}

/// A FIFO, a directory or a device named as a stackup, a library or a
/// baseline is refused with a clear message, without blocking.
#[cfg(unix)]
#[test]
fn only_regular_files_are_read() {
    let p = Project::new();
    let fifo = p.root.join("boards/pipe.stackup.yaml");
    let made = Command::new("mkfifo").arg(&fifo).status();
    if !made.is_ok_and(|s| s.success()) {
        eprintln!("skipped: mkfifo is not available");
        return;
    }
    Command::new("mkfifo")
        .arg(p.root.join("boards/pipe.materials.yaml"))
        .status()
        .unwrap();
    std::fs::create_dir_all(p.root.join("boards/dir.materials.yaml")).unwrap();
    p.board_with_library("boards/fifo-lib.stackup.yaml", "pipe.materials.yaml");
    p.board_with_library("boards/dir-lib.stackup.yaml", "dir.materials.yaml");
    let limit = Duration::from_secs(20);
    let out = run_limited(
        &p.root,
        &["check", "--format", "json", "boards"],
        limit,
        &[],
    );
    assert_eq!(out.status.code(), Some(2));
    let text = String::from_utf8_lossy(&out.stdout);
    assert_eq!(
        text.matches("a FIFO (named pipe), not a regular file")
            .count(),
        2,
        "{text}"
    );
    assert!(text.contains("a directory, not a regular file"), "{text}");
    for baseline in ["boards/pipe.materials.yaml", "/dev/zero"] {
        let out = run_limited(
            &p.root,
            &["check", "--baseline", baseline, "boards/a.stackup.yaml"],
            limit,
            &[],
        );
        assert_eq!(out.status.code(), Some(2));
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(err.contains("not a regular file"), "{err}");
    }
}

/// A `/proc` file reports 0 bytes and then reads as text: the size limit
/// holds on the bytes read, and the file is refused unquoted.
#[cfg(target_os = "linux")]
#[test]
fn proc_style_files_are_refused_on_the_bytes_read() {
    let p = Project::new();
    let out = run(
        &p.root,
        &[
            "check",
            "--root",
            "/",
            "/proc/self/status",
            "--format",
            "json",
        ],
    );
    assert_eq!(out.status.code(), Some(2));
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("reading gives more"), "{text}");
    assert!(!text.contains("VmRSS") && !text.contains("Name:"), "{text}");
}

/// A file that is not a stackup (or not a library) is quoted in a short,
/// escaped excerpt at most, in every format: a credentials file in the
/// workspace named as a library, or renamed to look like a stackup.
#[test]
fn files_that_are_not_ours_are_not_echoed() {
    let p = Project::new();
    let creds = format!(
        "{{\"type\": \"service_account\", \"private_key\": \"{CANARY}\", \"client_email\": \"{CANARY}@x\"}}\n"
    );
    p.write("ci/gcloud-key.json", &creds);
    p.write(
        "boards/env.stackup.yaml",
        &format!("# deploy keys\nDEPLOY_KEY={CANARY}\n"),
    );
    p.board_with_library("boards/key.stackup.yaml", "../ci/gcloud-key.json");
    let (codes, text) = all_outputs(
        &p.root,
        &["boards/env.stackup.yaml", "boards/key.stackup.yaml"],
    );
    assert!(codes.iter().all(|c| *c == Some(2)), "{codes:?}");
    // The excerpt stops before the first `=`: a key's name, never a value.
    assert!(text.contains("it starts with \"DEPLOY_KEY…\""), "{text}");
    assert!(text.contains("it starts with \"{\"type\"…\""), "{text}");
    assert!(text.contains("this is not a material library"), "{text}");
    assert!(!text.contains("private_key\": \"CANARY-7f3e"), "{text}");
    assert!(!text.contains(CANARY), "{text}");
}

/// One 1 MiB string aliased 3,000 times would materialise 3 GB: refused
/// by the byte budget within seconds and well inside 1 GiB of memory.
#[cfg(unix)]
#[test]
fn alias_expansion_is_bounded_in_bytes() {
    let p = Project::new();
    let mut t = String::from(BASELINE);
    t.push_str(&format!("notes: &big \"{}\"\n", "x".repeat(1 << 20)));
    t.push_str("x-copies: [");
    for _ in 0..3000 {
        t.push_str("*big, ");
    }
    t.push_str("]\n");
    p.write("boards/bomb.stackup.yaml", &t);
    let mut c = common::command(&p.root);
    c.args(["check", "--format", "json", "boards/bomb.stackup.yaml"]);
    // 1 GiB of address space: a 3 GB expansion would abort.
    unsafe {
        use std::os::unix::process::CommandExt;
        c.pre_exec(|| {
            let lim = libc::rlimit {
                rlim_cur: 1 << 30,
                rlim_max: 1 << 30,
            };
            if libc::setrlimit(libc::RLIMIT_AS, &lim) != 0 {
                return Err(std::io::Error::last_os_error());
            }
            Ok(())
        });
    }
    let started = Instant::now();
    let out = common::output(&mut c);
    assert!(started.elapsed() < Duration::from_secs(20));
    assert_eq!(out.status.code(), Some(2), "{out:?}");
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("more than 8388608 bytes of text"), "{text}");
}

/// A `--baseline` that is not a baseline is refused without quoting it.
#[test]
fn baseline_files_are_bounded_and_not_echoed() {
    let p = Project::new();
    p.write(
        "baseline.json",
        &format!("{{\"stackup-lint-baseline\": \"{CANARY}\", \"findings\": 3}}"),
    );
    let out = run(
        &p.root,
        &[
            "check",
            "--baseline",
            "baseline.json",
            "boards/a.stackup.yaml",
        ],
    );
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("not a stackup-lint baseline"), "{err}");
    assert_no_canary(&err);
}

// ------------------------------------------------------------------ cache

/// The cache directory of a project test, and the environment that uses it.
fn cache_env(dir: &Path) -> Vec<(&'static str, String)> {
    vec![
        ("STACKUP_LINT_CACHE_DIR", dir.to_string_lossy().into_owned()),
        ("STACKUP_LINT_CACHE_DEBUG", "1".into()),
    ]
}

fn run_cached(dir: &Path, cache: &Path, args: &[&str]) -> Output {
    let mut c = common::command(dir);
    c.args(args).env_remove("STACKUP_LINT_NO_CACHE");
    for (k, v) in cache_env(cache) {
        c.env(k, v);
    }
    common::output(&mut c)
}

/// Every cache entry file under `cache`.
fn entries(cache: &Path) -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = walkdir::WalkDir::new(cache)
        .into_iter()
        .flatten()
        .filter(|e| e.file_type().is_file() && e.file_name().len() == 62)
        .map(|e| e.path().to_path_buf())
        .collect();
    v.sort();
    v
}

/// Rewrite a cache entry's body with `edit` (on the lines between the key
/// and the checksum) and seal it again, as a forger who knows the format
/// would.
fn forge(path: &Path, edit: impl Fn(&str) -> String) {
    use sha2::{Digest, Sha256};
    let text = std::fs::read_to_string(path).unwrap();
    let body_end = text.rfind("sha256 ").unwrap();
    let (head, _) = text.split_at(body_end);
    let mut lines: Vec<String> = head.lines().map(str::to_string).collect();
    for l in lines.iter_mut().skip(2) {
        *l = edit(l);
    }
    let mut out = lines.join("\n");
    out.push('\n');
    let sum: String = Sha256::digest(out.as_bytes())
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect();
    out.push_str(&format!("sha256 {sum}\n"));
    std::fs::write(path, out).unwrap();
}

fn floats(line: &str) -> (String, Vec<f64>) {
    let mut it = line.split(' ');
    let name = it.next().unwrap().to_string();
    let _count = it.next();
    let v = it
        .map(|h| f64::from_bits(u64::from_str_radix(h, 16).unwrap()))
        .collect();
    (name, v)
}

fn line_of(name: &str, v: &[f64]) -> String {
    let mut s = format!("{name} {}", v.len());
    for x in v {
        s.push_str(&format!(" {:016x}", x.to_bits()));
    }
    s
}

/// A cache restored in CI may hold entries a pull request wrote. Forged,
/// self-consistent results (the board's 55.7 Ω moved to 50.0 Ω, which
/// would pass its target) and a forged width for target fail the
/// closed-form check: they are misses, solved again, counted, and the
/// output is the honest one.
#[test]
fn forged_cache_entries_are_rejected() {
    let p = Project::new();
    let cache = p.outer.join("cache");
    let args = ["check", "--format", "json", "boards/a.stackup.yaml"];
    let honest = run_cached(&p.root, &cache, &args);
    assert_eq!(honest.status.code(), Some(1));
    let found = entries(&cache);
    assert!(found.len() >= 2, "{found:?}");
    // Scale every capacitance by a and the inductance and impedance by
    // 1/a: eps_eff unchanged, Z0 lower by a, all consistent.
    let a = 55.7 / 50.0;
    for e in &found {
        forge(e, |l| {
            let (name, v) = floats(l);
            match name.as_str() {
                "capacitance" | "capacitance_vacuum" => {
                    line_of(&name, &v.iter().map(|x| x * a).collect::<Vec<_>>())
                }
                "inductance" => line_of(&name, &v.iter().map(|x| x / a).collect::<Vec<_>>()),
                "single" if v.len() == 2 => line_of(&name, &[v[0] / a, v[1]]),
                // A width for target ten times the honest one.
                "num" if v.len() == 1 => line_of(&name, &[v[0] * 10.0]),
                _ => l.to_string(),
            }
        });
    }
    let replay = run_cached(&p.root, &cache, &args);
    assert_eq!(replay.status.code(), Some(1));
    assert_eq!(
        String::from_utf8_lossy(&replay.stdout),
        String::from_utf8_lossy(&honest.stdout)
    );
    let err = String::from_utf8_lossy(&replay.stderr);
    // The conductor-loss derivatives and the tolerance stack are not
    // forged here: their entries are hits (a forged one is held against
    // the closed forms, or against `tolerance::plausible`, instead).
    assert!(err.contains(": 2 hits"), "{err}");
    assert!(
        err.contains("2 cached results rejected by the plausibility check"),
        "{err}"
    );
    // The rewritten entries are honest again: the next run hits.
    let again = run_cached(&p.root, &cache, &args);
    let err = String::from_utf8_lossy(&again.stderr);
    assert!(
        err.contains(", 0 solved") && err.contains("0 cached results rejected"),
        "{err}"
    );
}

/// A cache directory others may write, or a FIFO in place of an entry, is
/// not trusted; the run goes on (without the cache, or solving again) and
/// never blocks.
#[cfg(unix)]
#[test]
fn cache_directories_others_can_write_are_not_used() {
    use std::os::unix::fs::PermissionsExt;
    let p = Project::new();
    let cache = p.outer.join("cache");
    let args = ["check", "--format", "json", "boards/a.stackup.yaml"];
    let honest = run_cached(&p.root, &cache, &args);
    std::fs::set_permissions(&cache, std::fs::Permissions::from_mode(0o777)).unwrap();
    let out = run_cached(&p.root, &cache, &args);
    assert_eq!(out.stdout, honest.stdout);
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("writable by its group or by others") && err.contains("running without"),
        "{err}"
    );
    std::fs::set_permissions(&cache, std::fs::Permissions::from_mode(0o700)).unwrap();
    // A FIFO where an entry was: a miss, not a hang.
    let e = entries(&cache)[0].clone();
    std::fs::remove_file(&e).unwrap();
    if Command::new("mkfifo")
        .arg(&e)
        .status()
        .is_ok_and(|s| s.success())
    {
        let mut c = common::command(&p.root);
        c.args(args).env_remove("STACKUP_LINT_NO_CACHE");
        for (k, v) in cache_env(&cache) {
            c.env(k, v);
        }
        let started = Instant::now();
        let out = common::output(&mut c);
        assert!(started.elapsed() < Duration::from_secs(30));
        assert_eq!(out.stdout, honest.stdout);
    }
    // A shard directory others may write is not read either.
    let shard = entries(&cache)[0].parent().unwrap().to_path_buf();
    std::fs::set_permissions(&shard, std::fs::Permissions::from_mode(0o777)).unwrap();
    let out = run_cached(&p.root, &cache, &args);
    assert_eq!(out.stdout, honest.stdout);
    assert!(String::from_utf8_lossy(&out.stderr).contains("is not a private directory"));
}

// ---------------------------------------------------------------- outputs

/// Names carrying terminal escapes, line breaks, bidirectional overrides
/// and HTML reach every output escaped: no raw control character in the
/// terminal text (colour off), no forged annotation line in the GitHub
/// format, nothing raw in GitLab's JSON, and names escaped in the Markdown
/// and HTML report.
#[test]
fn control_characters_and_markup_are_escaped_everywhere() {
    let p = Project::new();
    let board = BASELINE
        .replace(
            "board: bad-input corpus baseline",
            "board: \"<script>alert(1)</script> \\e[2J\"",
        )
        .replace(
            "  - name: se50",
            "  - name: \"se50\\e[31m\\r\\n::error file=x::forged\\u202e\"",
        );
    p.write("boards/esc.stackup.yaml", &board);
    let raw = |s: &str| {
        s.chars()
            .any(|c| (c.is_control() && c != '\n') || c == '\u{202e}')
    };
    for format in ["human", "github", "gitlab", "json"] {
        let out = run(
            &p.root,
            &[
                "check",
                "--color",
                "never",
                "--format",
                format,
                "boards/esc.stackup.yaml",
            ],
        );
        assert_eq!(out.status.code(), Some(1));
        let text = String::from_utf8_lossy(&out.stdout);
        assert!(!raw(&text), "{format}: {text:?}");
        if format == "github" {
            // One annotation per line: the forged command stays inside the
            // message, escaped, never at the start of a line.
            for line in text.lines() {
                assert!(
                    line.starts_with("::error")
                        || line.starts_with("::warning")
                        || line.starts_with("::notice"),
                    "{line}"
                );
                assert!(!line.starts_with("::error file=x"), "{line}");
            }
        }
    }
    for format in ["human", "json"] {
        let out = run(
            &p.root,
            &["impedance", "--format", format, "boards/esc.stackup.yaml"],
        );
        assert_eq!(out.status.code(), Some(0));
        let text = String::from_utf8_lossy(&out.stdout);
        assert!(!raw(&text), "impedance {format}: {text:?}");
    }
    let out = run(
        &p.root,
        &["report", "boards/esc.stackup.yaml", "-o", "report"],
    );
    assert_eq!(out.status.code(), Some(0), "{out:?}");
    for f in std::fs::read_dir(p.root.join("report")).unwrap() {
        let f = f.unwrap().path();
        let text = std::fs::read_to_string(&f).unwrap();
        assert!(!raw(&text), "{}: control character", f.display());
        assert!(!text.contains("<script>"), "{}: raw markup", f.display());
    }
}

/// `--sarif` onto a device writes through it and leaves it a device; onto
/// a link to standard output it writes through the link and keeps it; onto
/// one of the input files it refuses and leaves the file alone.
#[cfg(unix)]
#[test]
fn sarif_targets_are_never_replaced() {
    use std::os::unix::fs::FileTypeExt;
    let p = Project::new();
    // A null device of our own where we may make one (as root: a build
    // that regressed would replace this one, not the machine's /dev/null,
    // as the build before this test did); else /dev/null, which a user
    // who may not make devices cannot replace either.
    let own = p.outer.join("null");
    let device = if Command::new("mknod")
        .args([own.to_str().unwrap(), "c", "1", "3"])
        .stderr(Stdio::null())
        .status()
        .is_ok_and(|s| s.success())
    {
        own
    } else {
        PathBuf::from("/dev/null")
    };
    let out = run(
        &p.root,
        &[
            "check",
            "--sarif",
            device.to_str().unwrap(),
            "boards/a.stackup.yaml",
        ],
    );
    assert_eq!(out.status.code(), Some(1));
    assert!(std::fs::metadata(&device)
        .unwrap()
        .file_type()
        .is_char_device());
    std::os::unix::fs::symlink("/dev/stdout", p.root.join("out.sarif")).unwrap();
    let out = run(
        &p.root,
        &[
            "check",
            "--format",
            "gitlab",
            "--sarif",
            "out.sarif",
            "boards/a.stackup.yaml",
        ],
    );
    assert_eq!(out.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&out.stdout).contains("\"$schema\""));
    assert!(std::fs::symlink_metadata(p.root.join("out.sarif"))
        .unwrap()
        .file_type()
        .is_symlink());
    let before = std::fs::read(p.root.join("boards/a.stackup.yaml")).unwrap();
    let out = run(
        &p.root,
        &[
            "check",
            "--sarif",
            "boards/a.stackup.yaml",
            "boards/a.stackup.yaml",
        ],
    );
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("one of the input files"));
    assert_eq!(
        std::fs::read(p.root.join("boards/a.stackup.yaml")).unwrap(),
        before
    );
}

/// `report -o DIR` is all or nothing: when one file cannot be put in
/// place, none of the new files is left and the old ones are back.
#[test]
fn report_directories_are_written_all_or_nothing() {
    let p = Project::new();
    let dir = p.root.join("report");
    let out = run(
        &p.root,
        &["report", "boards/a.stackup.yaml", "-o", "report"],
    );
    assert_eq!(out.status.code(), Some(0));
    let mut names: Vec<String> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    assert!(names.len() >= 3, "{names:?}");
    // Mark the old files, then block the last one with a directory.
    for n in &names {
        std::fs::write(dir.join(n), "old").unwrap();
    }
    let last = names.iter().find(|n| n.ends_with(".svg")).unwrap().clone();
    std::fs::remove_file(dir.join(&last)).unwrap();
    std::fs::create_dir(dir.join(&last)).unwrap();
    let out = run(
        &p.root,
        &["report", "boards/a.stackup.yaml", "-o", "report"],
    );
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("nothing written"));
    for n in names.iter().filter(|n| **n != last) {
        assert_eq!(std::fs::read_to_string(dir.join(n)).unwrap(), "old", "{n}");
    }
    // No temporary directory is left beside the target.
    let left: Vec<_> = std::fs::read_dir(&p.root)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with(".stackup-lint"))
        .collect();
    assert!(left.is_empty(), "{left:?}");
}

/// A failed write to standard output is exit code 2 with a message.
#[cfg(target_os = "linux")]
#[test]
fn write_errors_are_errors() {
    let p = Project::new();
    let full = std::fs::OpenOptions::new()
        .write(true)
        .open("/dev/full")
        .unwrap();
    let out = common::command(&p.root)
        .args(["check", "boards/a.stackup.yaml"])
        .stdout(full)
        .stderr(Stdio::piped())
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("cannot write to standard output"));
}

/// Missing inputs and empty directories are exit code 2 with a message for
/// every command (`check --allow-empty` accepts an empty directory).
#[test]
fn missing_inputs_and_empty_directories_are_errors() {
    let p = Project::new();
    std::fs::create_dir_all(p.root.join("empty")).unwrap();
    for args in [
        &["impedance", "nothing-here"][..],
        &["impedance", "empty"],
        &["report", "nothing.stackup.yaml", "-o", "r"],
        &["check", "empty"],
        &["check", "nothing-here"],
    ] {
        let out = run(&p.root, args);
        assert_eq!(out.status.code(), Some(2), "{args:?}");
        let all = format!(
            "{}{}",
            String::from_utf8_lossy(&out.stdout),
            String::from_utf8_lossy(&out.stderr)
        );
        assert!(
            all.contains("no stackup file")
                || all.contains("does not exist")
                || all.contains("no such file"),
            "{args:?}: {all}"
        );
    }
    let out = run(&p.root, &["check", "--allow-empty", "empty"]);
    assert_eq!(out.status.code(), Some(0));
    assert!(!p.root.join("r").exists());
}

/// `--threads` far beyond the machine is clamped and said so; when no
/// thread can be spawned (every stack refused), the run still completes
/// with the same output on the calling thread.
#[test]
fn threads_are_bounded_and_spawn_failures_fall_back() {
    let p = Project::new();
    let args = ["check", "--format", "json", "boards/a.stackup.yaml"];
    let normal = run(&p.root, &args);
    let mut many = args.to_vec();
    many.extend(["--threads", "100000"]);
    let out = run(&p.root, &many);
    assert_eq!(out.stdout, normal.stdout);
    assert!(String::from_utf8_lossy(&out.stderr).contains("--threads 100000 is more than"));
    let out = run_limited(
        &p.root,
        &[&args[..], &["--threads", "4"]].concat(),
        Duration::from_secs(60),
        &[("RUST_MIN_STACK", "1000000000000000")],
    );
    assert_eq!(out.status.code(), normal.status.code());
    assert_eq!(out.stdout, normal.stdout);
}

/// A length that would overflow the loss is refused.
#[test]
fn lengths_beyond_any_board_are_refused() {
    let p = Project::new();
    let out = run(
        &p.root,
        &["impedance", "boards/a.stackup.yaml", "--length", "1e300 m"],
    );
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("longer than any board trace"));
}

// ------------------------------------------------------------------ walks

/// The walk counts what it skips (hidden directories, depth, globs), takes
/// `.stackup.yml` too, and checks a file reached twice once.
#[test]
fn walks_count_what_they_skip_and_check_each_file_once() {
    let p = Project::new();
    p.write("boards/.hidden/h.stackup.yaml", BASELINE);
    p.write("boards/b.stackup.yml", BASELINE);
    p.write("boards/skip/c.stackup.yaml", BASELINE);
    let out = run(
        &p.root,
        &[
            "check",
            "boards",
            "boards/a.stackup.yaml",
            "boards/../boards/b.stackup.yml",
            "--exclude",
            "**/skip/**",
        ],
    );
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("in 2 files"), "{text}");
    assert!(
        text.contains(
            "skipped 1 hidden or build directory, 1 file excluded by --include/--exclude, 2 files reached twice"
        ),
        "{text}"
    );
}
