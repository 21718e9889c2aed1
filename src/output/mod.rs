//! Emitters: they consume the finished list of findings and rule metadata.

pub mod escape;
pub mod github;
pub mod gitlab;
pub mod human;
pub mod impedance;
pub mod json;
pub mod report;
pub mod sarif;

use std::collections::HashSet;
use std::path::{Path, PathBuf};

use crate::finding::{Finding, Severity};
use crate::source::SourceDb;

/// Counts for the closing summary line.
#[derive(Debug, Default, Clone, Copy, PartialEq, Eq)]
pub struct Summary {
    pub errors: usize,
    pub warnings: usize,
    pub notes: usize,
    pub suppressed: usize,
    /// Findings in the `--baseline` file: not counted above.
    pub baselined: usize,
    pub files: usize,
}

impl Summary {
    pub fn of(findings: &[Finding], files: usize) -> Summary {
        let mut s = Summary {
            files,
            ..Summary::default()
        };
        for f in findings {
            if f.suppressed.is_some() {
                s.suppressed += 1;
                continue;
            }
            if f.baselined == Some(true) {
                s.baselined += 1;
                continue;
            }
            match f.severity {
                Severity::Error => s.errors += 1,
                Severity::Warning => s.warnings += 1,
                Severity::Note => s.notes += 1,
            }
        }
        s
    }

    /// The closing line, with what the walk skipped.
    pub fn line_with(&self, skipped: &crate::walk::Skipped) -> String {
        match skipped.phrase() {
            Some(p) => format!("{}; {p}", self.line()),
            None => self.line(),
        }
    }

    pub fn line(&self) -> String {
        let plural = |n: usize, w: &str| format!("{n} {w}{}", if n == 1 { "" } else { "s" });
        let mut line = format!(
            "{}, {}, {} in {}",
            plural(self.errors, "error"),
            plural(self.warnings, "warning"),
            plural(self.notes, "note"),
            plural(self.files, "file")
        );
        let mut extra = Vec::new();
        if self.suppressed > 0 {
            extra.push(format!("{} suppressed", self.suppressed));
        }
        if self.baselined > 0 {
            extra.push(format!("{} baselined", self.baselined));
        }
        if !extra.is_empty() {
            line.push_str(&format!(" ({})", extra.join(", ")));
        }
        line
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
        let what = crate::input::files::kind_of(&ft).unwrap_or("a special file");
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
            let what = crate::input::files::kind_of(&m.file_type()).unwrap_or("a file");
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
