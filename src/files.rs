//! Files on disk, for a tool that runs on untrusted pull requests.
//!
//! Reading: every path resolves (symbolic links followed) inside the
//! project root, only regular files are opened, and no read takes more
//! than its byte budget. Writing: outputs are written atomically, never
//! replace a device, a link or an input file, and a set of report files
//! lands all or nothing.
//!
//! The project root of a file is `--root DIR` when given, else the nearest
//! enclosing git work tree (a directory holding `.git`, a directory or the
//! file a linked work tree or submodule has), else the working directory
//! when the file lies inside it, else the file's own directory. A pull
//! request cannot widen it: git refuses to track a path named `.git`.

use std::collections::{HashMap, HashSet};
use std::io::Read;
use std::path::{Component, Path, PathBuf};
use std::sync::Mutex;

use crate::source::SourceDb;

/// Why a file was not read.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum ReadError {
    /// No such file (or a dangling link).
    Missing,
    /// Not a regular file: what it is ("a directory", "a FIFO", ...).
    NotRegular(&'static str),
    /// More bytes than the budget (`size` as reported, or as read).
    TooLarge { size: u64, limit: u64 },
    /// The file system reports one size and reading gives more bytes: a
    /// special file (`/proc`-style) or a file being written.
    SizeMismatch { reported: u64 },
    /// Any other I/O error, as text.
    Io(String),
}

impl ReadError {
    /// The problem as a sentence (no file content, no absolute path).
    pub fn message(&self) -> String {
        match self {
            ReadError::Missing => "the file does not exist".into(),
            ReadError::NotRegular(what) => {
                format!("this is {what}, not a regular file; only regular files are read")
            }
            ReadError::TooLarge { size, limit } => {
                format!("the file is {size} bytes, above the {limit} byte limit for one stackup")
            }
            ReadError::SizeMismatch { reported } => format!(
                "the file system reports {reported} bytes but reading gives more: a special or changing file, not read"
            ),
            ReadError::Io(e) => format!("cannot read the file: {e}"),
        }
    }
}

/// What a file-system entry is, in words, when it is not a regular file.
pub(crate) fn kind_of(ft: &std::fs::FileType) -> Option<&'static str> {
    if ft.is_file() {
        return None;
    }
    if ft.is_dir() {
        return Some("a directory");
    }
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        if ft.is_fifo() {
            return Some("a FIFO (named pipe)");
        }
        if ft.is_socket() {
            return Some("a socket");
        }
        if ft.is_char_device() {
            return Some("a character device");
        }
        if ft.is_block_device() {
            return Some("a block device");
        }
    }
    if ft.is_symlink() {
        return Some("a symbolic link");
    }
    Some("a special file")
}

/// Open `path` for reading without blocking on a FIFO and without making
/// a terminal the controlling one.
fn open_nonblocking(path: &Path) -> std::io::Result<std::fs::File> {
    let mut o = std::fs::OpenOptions::new();
    o.read(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        o.custom_flags(libc::O_NONBLOCK | libc::O_NOCTTY);
    }
    o.open(path)
}

/// Read a regular file of at most `limit` bytes.
///
/// The path is checked with `stat` first (a clear message for a FIFO,
/// socket, device or directory), then opened non-blocking and checked
/// again on the open handle with `fstat`, so a file swapped in between is
/// caught too. The limit holds on the bytes actually read: a file that
/// reports 0 bytes (`/proc`-style) and then gives more is refused.
pub fn read_regular(path: &Path, limit: u64) -> Result<Vec<u8>, ReadError> {
    let io = |e: std::io::Error| match e.kind() {
        std::io::ErrorKind::NotFound => ReadError::Missing,
        _ => ReadError::Io(e.to_string()),
    };
    let meta = std::fs::metadata(path).map_err(io)?;
    if let Some(what) = kind_of(&meta.file_type()) {
        return Err(ReadError::NotRegular(what));
    }
    if meta.len() > limit {
        return Err(ReadError::TooLarge {
            size: meta.len(),
            limit,
        });
    }
    let file = open_nonblocking(path).map_err(io)?;
    let meta = file.metadata().map_err(io)?;
    if let Some(what) = kind_of(&meta.file_type()) {
        return Err(ReadError::NotRegular(what));
    }
    let reported = meta.len();
    if reported > limit {
        return Err(ReadError::TooLarge {
            size: reported,
            limit,
        });
    }
    let mut bytes = Vec::with_capacity(usize::try_from(reported).unwrap_or(0));
    file.take(limit.saturating_add(1))
        .read_to_end(&mut bytes)
        .map_err(io)?;
    let read = bytes.len() as u64;
    if read > limit {
        return Err(ReadError::TooLarge { size: read, limit });
    }
    if read > reported {
        return Err(ReadError::SizeMismatch { reported });
    }
    Ok(bytes)
}

/// `path` made absolute against `cwd` with `.` and `..` removed by text
/// alone (no link followed), so the project root of a link is found where
/// the link is.
pub fn lexical_absolute(path: &Path, cwd: &Path) -> PathBuf {
    let joined = if path.is_absolute() {
        path.to_path_buf()
    } else {
        cwd.join(path)
    };
    let mut out = PathBuf::new();
    for c in joined.components() {
        match c {
            Component::CurDir => {}
            Component::ParentDir => {
                out.pop();
            }
            other => out.push(other.as_os_str()),
        }
    }
    out
}

/// Why a path is not read.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Refusal {
    /// It resolves outside the root; `through_link` when a symbolic link
    /// takes it there.
    Outside { through_link: bool },
    /// It does not resolve (missing, dangling link, link loop).
    Missing,
}

/// The project roots of a run.
#[derive(Debug)]
pub struct Confinement {
    /// `--root`, canonical.
    explicit: Option<PathBuf>,
    /// The working directory, as given and canonical.
    cwd: PathBuf,
    cwd_canonical: PathBuf,
    /// Root found for each directory already asked about.
    found: Mutex<HashMap<PathBuf, PathBuf>>,
}

impl Confinement {
    /// Roots for a run in `cwd`; `explicit` is `--root` (must be a
    /// directory).
    pub fn new(explicit: Option<&Path>, cwd: &Path) -> Result<Confinement, String> {
        let explicit = match explicit {
            None => None,
            Some(dir) => {
                let abs = lexical_absolute(dir, cwd);
                match std::fs::canonicalize(&abs) {
                    Ok(c) if c.is_dir() => Some(c),
                    Ok(_) => return Err(format!("--root {} is not a directory", dir.display())),
                    Err(e) => return Err(format!("--root {}: {e}", dir.display())),
                }
            }
        };
        let cwd_canonical = std::fs::canonicalize(cwd).unwrap_or_else(|_| cwd.to_path_buf());
        Ok(Confinement {
            explicit,
            cwd: cwd.to_path_buf(),
            cwd_canonical,
            found: Mutex::new(HashMap::new()),
        })
    }

    /// The working directory the run resolves relative paths against.
    pub fn cwd(&self) -> &Path {
        &self.cwd
    }

    /// True when `--root` was given.
    pub fn is_explicit(&self) -> bool {
        self.explicit.is_some()
    }

    /// The canonical project root of the file or directory at `path`.
    pub fn root_of(&self, path: &Path) -> PathBuf {
        if let Some(r) = &self.explicit {
            return r.clone();
        }
        let abs = lexical_absolute(path, &self.cwd);
        // The directory the search starts in: the path itself when it is a
        // directory (not through a link), else its parent.
        let start = match std::fs::symlink_metadata(&abs) {
            Ok(m) if m.is_dir() => abs.clone(),
            _ => abs.parent().map_or(abs.clone(), Path::to_path_buf),
        };
        if let Ok(found) = self.found.lock() {
            if let Some(r) = found.get(&start) {
                return r.clone();
            }
        }
        let git = start
            .ancestors()
            .find(|d| std::fs::symlink_metadata(d.join(".git")).is_ok());
        let root = match git {
            Some(d) => d.to_path_buf(),
            None if start.starts_with(&self.cwd) || abs.starts_with(&self.cwd) => self.cwd.clone(),
            None => start.clone(),
        };
        let root = std::fs::canonicalize(&root).unwrap_or(root);
        if let Ok(mut found) = self.found.lock() {
            found.insert(start, root.clone());
        }
        root
    }

    /// The canonical path of `path` when it resolves inside `root`.
    pub fn resolve(&self, path: &Path, root: &Path) -> Result<PathBuf, Refusal> {
        let abs = lexical_absolute(path, &self.cwd);
        let canonical = std::fs::canonicalize(&abs).map_err(|_| Refusal::Missing)?;
        if canonical.starts_with(root) {
            Ok(canonical)
        } else {
            // Outside by its text, or only once links are followed?
            let lexical_root = if self.explicit.is_none() && abs.starts_with(&self.cwd) {
                root.strip_prefix(&self.cwd_canonical)
                    .map_or(root.to_path_buf(), |r| self.cwd.join(r))
            } else {
                root.to_path_buf()
            };
            let through_link = abs.starts_with(&lexical_root) || abs.starts_with(root);
            Err(Refusal::Outside { through_link })
        }
    }

    /// A root for messages: relative to the working directory when inside
    /// it, else its last component (no full path of the machine is shown).
    pub fn shown(&self, root: &Path) -> String {
        if root == self.cwd_canonical {
            return "the working directory".into();
        }
        match root.strip_prefix(&self.cwd_canonical) {
            Ok(rel) => format!("`{}`", rel.display()),
            Err(_) => format!(
                "`…/{}`",
                root.file_name().map_or_else(
                    || root.display().to_string(),
                    |n| n.to_string_lossy().into_owned()
                )
            ),
        }
    }
}

/// Write `contents` to `path` atomically: a temporary file in the same
/// directory, then a rename, so no half-written file is ever left behind.
pub fn write_atomic(path: &Path, contents: &[u8]) -> std::io::Result<()> {
    use std::io::Write;
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let mut tmp = tempfile::NamedTempFile::new_in(dir)?;
    // Temporary files are created private (0600); the result is an ordinary
    // report that other users and CI upload steps may read.
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        tmp.as_file()
            .set_permissions(std::fs::Permissions::from_mode(0o644))?;
    }
    tmp.write_all(contents)?;
    tmp.as_file().sync_all()?;
    tmp.persist(path).map_err(|e| e.error)?;
    Ok(())
}

/// The canonical paths of every file a run read (stackups and libraries):
/// outputs never overwrite them.
pub fn input_paths(db: &SourceDb) -> HashSet<PathBuf> {
    db.files
        .iter()
        .filter_map(|f| std::fs::canonicalize(&f.path).ok())
        .collect()
}

/// Refuse `target` when it is one of the run's inputs.
fn not_an_input(target: &Path, inputs: &HashSet<PathBuf>) -> Result<(), String> {
    let canonical = std::fs::canonicalize(target).unwrap_or_else(|_| target.to_path_buf());
    if inputs.contains(&canonical) {
        return Err("it is one of the input files of this run; refusing to overwrite it".into());
    }
    Ok(())
}

/// Write an output file (`--sarif`, `baseline write -o`) safely:
///
/// - a new path or a regular file is written atomically (temporary file
///   and rename);
/// - a symbolic link is written through: the file it points to is
///   replaced atomically, the link stays;
/// - a character device or FIFO (`/dev/null`, `/dev/stdout`) is written
///   through, never replaced (a FIFO without a reader is an error, not a
///   hang);
/// - a directory, a socket or one of the run's input files is refused.
///
/// The error is a sentence without the path (the caller names it).
pub fn write_output(path: &Path, contents: &[u8], inputs: &HashSet<PathBuf>) -> Result<(), String> {
    let meta = match std::fs::symlink_metadata(path) {
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
            return write_atomic(path, contents).map_err(|e| e.to_string());
        }
        Err(e) => return Err(e.to_string()),
        Ok(m) => m,
    };
    // The type of what the path leads to (links followed).
    let ft = std::fs::metadata(path)
        .map_err(|_| {
            "it is a symbolic link that leads nowhere; refusing to replace it".to_string()
        })?
        .file_type();
    if ft.is_file() {
        let target = if meta.file_type().is_symlink() {
            std::fs::canonicalize(path).map_err(|e| e.to_string())?
        } else {
            path.to_path_buf()
        };
        not_an_input(&target, inputs)?;
        return write_atomic(&target, contents).map_err(|e| e.to_string());
    }
    let writable_through = {
        #[cfg(unix)]
        {
            use std::os::unix::fs::FileTypeExt;
            ft.is_char_device() || ft.is_fifo()
        }
        #[cfg(not(unix))]
        {
            false
        }
    };
    if !writable_through {
        let what = kind_of(&ft).unwrap_or("a special file");
        return Err(format!("it is {what}; refusing to write there"));
    }
    // A FIFO without a reader would block the open: probe without
    // blocking first (ENXIO then), and write through a blocking handle.
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        std::fs::OpenOptions::new()
            .write(true)
            .custom_flags(libc::O_NONBLOCK | libc::O_NOCTTY)
            .open(path)
            .map_err(|e| match e.raw_os_error() {
                Some(libc::ENXIO) => "it is a FIFO with no reader".to_string(),
                _ => e.to_string(),
            })?;
    }
    let mut f = std::fs::OpenOptions::new()
        .write(true)
        .open(path)
        .map_err(|e| e.to_string())?;
    std::io::Write::write_all(&mut f, contents).map_err(|e| e.to_string())?;
    Ok(())
}

/// Write a set of files into `dir` all or nothing: they are built in a
/// temporary directory beside it, then moved into place (the directory
/// renamed when it is new; file by file, with the old files kept until
/// every new one is in, when it exists). On any failure, nothing new is
/// left and the old files are back.
pub fn write_dir_atomic(
    dir: &Path,
    files: &[(String, Vec<u8>)],
    inputs: &HashSet<PathBuf>,
) -> Result<(), String> {
    let io = |e: std::io::Error| e.to_string();
    let exists = match std::fs::metadata(dir) {
        Ok(m) if m.is_dir() => true,
        Ok(m) => {
            let what = kind_of(&m.file_type()).unwrap_or("a file");
            return Err(format!("it is {what}, not a directory"));
        }
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => false,
        Err(e) => return Err(e.to_string()),
    };
    let dir = if exists {
        std::fs::canonicalize(dir).map_err(io)?
    } else {
        dir.to_path_buf()
    };
    let parent = dir
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."))
        .to_path_buf();
    // Parents made here are removed again on failure (only when empty).
    let mut made: Vec<PathBuf> = Vec::new();
    for a in parent.ancestors() {
        if a.as_os_str().is_empty() || a.exists() {
            break;
        }
        made.push(a.to_path_buf());
    }
    let undo_parents = |made: &[PathBuf]| {
        for d in made {
            let _ = std::fs::remove_dir(d);
        }
    };
    if !made.is_empty() {
        std::fs::create_dir_all(&parent).map_err(io)?;
    }
    let result = (|| -> Result<(), String> {
        let tmp = tempfile::Builder::new()
            .prefix(".stackup-lint-report-")
            .tempdir_in(&parent)
            .map_err(io)?;
        for (name, contents) in files {
            if name.contains('/') || name.contains('\\') || name.starts_with('.') {
                return Err(format!("`{name}` is not a plain file name"));
            }
            let p = tmp.path().join(name);
            std::fs::write(&p, contents).map_err(io)?;
            #[cfg(unix)]
            {
                use std::os::unix::fs::PermissionsExt;
                std::fs::set_permissions(&p, std::fs::Permissions::from_mode(0o644)).map_err(io)?;
            }
        }
        if !exists {
            #[cfg(unix)]
            {
                use std::os::unix::fs::PermissionsExt;
                std::fs::set_permissions(tmp.path(), std::fs::Permissions::from_mode(0o755))
                    .map_err(io)?;
            }
            let kept = tmp.keep();
            return std::fs::rename(&kept, &dir).map_err(|e| {
                let _ = std::fs::remove_dir_all(&kept);
                e.to_string()
            });
        }
        // Into an existing directory: move the old files aside (into the
        // temporary directory), the new ones in; undo on failure.
        for (name, _) in files {
            let target = dir.join(name);
            if let Ok(m) = std::fs::symlink_metadata(&target) {
                if m.is_dir() {
                    return Err(format!("`{name}` is a directory there"));
                }
                not_an_input(&target, inputs)?;
            }
        }
        let mut done: Vec<(PathBuf, Option<PathBuf>)> = Vec::new();
        let mut failure = None;
        for (name, _) in files {
            let target = dir.join(name);
            let backup = tmp.path().join(format!(".old-{name}"));
            let had_old = std::fs::symlink_metadata(&target).is_ok();
            if had_old {
                if let Err(e) = std::fs::rename(&target, &backup) {
                    failure = Some(e.to_string());
                    break;
                }
            }
            if let Err(e) = std::fs::rename(tmp.path().join(name), &target) {
                if had_old {
                    let _ = std::fs::rename(&backup, &target);
                }
                failure = Some(e.to_string());
                break;
            }
            done.push((target, had_old.then_some(backup)));
        }
        if let Some(e) = failure {
            for (target, backup) in done.into_iter().rev() {
                let _ = std::fs::remove_file(&target);
                if let Some(b) = backup {
                    let _ = std::fs::rename(b, &target);
                }
            }
            return Err(e);
        }
        Ok(())
    })();
    if result.is_err() {
        undo_parents(&made);
    }
    result
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lexical_paths_drop_dots_without_following_links() {
        let cwd = Path::new("/work/repo");
        assert_eq!(
            lexical_absolute(Path::new("a/./b/../c.yaml"), cwd),
            PathBuf::from("/work/repo/a/c.yaml")
        );
        assert_eq!(
            lexical_absolute(Path::new("../../../etc/passwd"), cwd),
            PathBuf::from("/etc/passwd")
        );
        assert_eq!(
            lexical_absolute(Path::new("/x/y"), cwd),
            PathBuf::from("/x/y")
        );
    }

    #[test]
    fn reads_are_bounded_and_regular_only() {
        let dir = tempfile::tempdir().unwrap();
        let f = dir.path().join("a.yaml");
        std::fs::write(&f, "0123456789").unwrap();
        assert_eq!(read_regular(&f, 10).unwrap(), b"0123456789");
        assert_eq!(
            read_regular(&f, 9),
            Err(ReadError::TooLarge { size: 10, limit: 9 })
        );
        assert_eq!(
            read_regular(dir.path(), 100),
            Err(ReadError::NotRegular("a directory"))
        );
        assert_eq!(
            read_regular(&dir.path().join("none"), 100),
            Err(ReadError::Missing)
        );
    }

    /// `/proc/self/status` reports 0 bytes and reads as text: refused.
    #[cfg(target_os = "linux")]
    #[test]
    fn proc_style_files_are_refused() {
        let p = Path::new("/proc/self/status");
        if p.exists() {
            assert_eq!(
                read_regular(p, 1 << 20),
                Err(ReadError::SizeMismatch { reported: 0 })
            );
        }
    }

    #[test]
    fn roots_confine_paths() {
        let dir = tempfile::tempdir().unwrap();
        let repo = dir.path().join("repo");
        std::fs::create_dir_all(repo.join(".git")).unwrap();
        std::fs::create_dir_all(repo.join("boards")).unwrap();
        std::fs::write(repo.join("boards/a.stackup.yaml"), "x").unwrap();
        std::fs::write(dir.path().join("secret.txt"), "s").unwrap();
        let c = Confinement::new(None, &repo.join("boards")).unwrap();
        let root = c.root_of(Path::new("a.stackup.yaml"));
        assert_eq!(root, std::fs::canonicalize(&repo).unwrap());
        assert!(c.resolve(Path::new("a.stackup.yaml"), &root).is_ok());
        assert_eq!(
            c.resolve(Path::new("../../secret.txt"), &root),
            Err(Refusal::Outside {
                through_link: false
            })
        );
        assert_eq!(
            c.resolve(Path::new("nothing.yaml"), &root),
            Err(Refusal::Missing)
        );
        #[cfg(unix)]
        {
            std::os::unix::fs::symlink(dir.path().join("secret.txt"), repo.join("boards/l.yaml"))
                .unwrap();
            assert_eq!(
                c.resolve(Path::new("l.yaml"), &root),
                Err(Refusal::Outside { through_link: true })
            );
        }
    }
}
