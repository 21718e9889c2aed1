//! Finding stackup files: walk directories, filter by suffix and globs,
//! count what the walk leaves out, and take each file once.

use std::cell::Cell;
use std::collections::HashSet;
use std::path::{Path, PathBuf};

use globset::{Glob, GlobSet, GlobSetBuilder};
use walkdir::WalkDir;

use crate::files::Confinement;

/// How to pick files out of directories.
#[derive(Debug, Clone)]
pub struct WalkOptions {
    /// File-name suffix of stackup files. A suffix ending in `.yaml` also
    /// matches the same name ending in `.yml`.
    pub suffix: String,
    pub include: Vec<String>,
    pub exclude: Vec<String>,
    /// Deepest directory level walked.
    pub max_depth: usize,
}

impl Default for WalkOptions {
    fn default() -> Self {
        WalkOptions {
            suffix: ".stackup.yaml".into(),
            include: Vec::new(),
            exclude: Vec::new(),
            max_depth: 32,
        }
    }
}

impl WalkOptions {
    /// True when the file name `name` carries the stackup suffix.
    pub fn matches_suffix(&self, name: &str) -> bool {
        if name.ends_with(&self.suffix) {
            return true;
        }
        match self.suffix.strip_suffix(".yaml") {
            Some(stem) => name
                .strip_suffix(".yml")
                .is_some_and(|n| n.ends_with(stem) || stem.is_empty()),
            None => false,
        }
    }
}

/// A problem met while walking (unreadable directory, symlink loop, bad glob).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct WalkError {
    pub path: Option<PathBuf>,
    pub message: String,
}

/// What a walk left out, for the summary line.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct Skipped {
    /// Hidden directories (`.git`, `.cache`) and build output (`target`)
    /// not searched.
    pub ignored_dirs: usize,
    /// Directories at the depth limit, not searched.
    pub too_deep: usize,
    /// Stackup files left out by `--include` / `--exclude`.
    pub excluded: usize,
    /// Links to directories outside the project root, not followed.
    pub outside_links: usize,
    /// Files reached a second time (another spelling or a link), checked once.
    pub duplicates: usize,
}

impl Skipped {
    /// The counts as a phrase (`None` when nothing was skipped).
    pub fn phrase(&self) -> Option<String> {
        let plural =
            |n: usize, one: &str, many: &str| format!("{n} {}", if n == 1 { one } else { many });
        let mut parts = Vec::new();
        if self.ignored_dirs > 0 {
            parts.push(plural(
                self.ignored_dirs,
                "hidden or build directory",
                "hidden or build directories",
            ));
        }
        if self.too_deep > 0 {
            parts.push(plural(
                self.too_deep,
                "directory below the depth limit",
                "directories below the depth limit",
            ));
        }
        if self.excluded > 0 {
            parts.push(plural(
                self.excluded,
                "file excluded by --include/--exclude",
                "files excluded by --include/--exclude",
            ));
        }
        if self.outside_links > 0 {
            parts.push(plural(
                self.outside_links,
                "link leading outside the project root",
                "links leading outside the project root",
            ));
        }
        if self.duplicates > 0 {
            parts.push(plural(
                self.duplicates,
                "file reached twice",
                "files reached twice",
            ));
        }
        (!parts.is_empty()).then(|| format!("skipped {}", parts.join(", ")))
    }
}

/// The files a walk found, in order, each once.
#[derive(Debug, Clone, Default)]
pub struct Walked {
    pub files: Vec<PathBuf>,
    pub problems: Vec<WalkError>,
    pub skipped: Skipped,
}

fn globset(patterns: &[String]) -> Result<Option<GlobSet>, WalkError> {
    if patterns.is_empty() {
        return Ok(None);
    }
    let mut b = GlobSetBuilder::new();
    for p in patterns {
        b.add(Glob::new(p).map_err(|e| WalkError {
            path: None,
            message: format!("bad glob `{p}`: {e}"),
        })?);
    }
    b.build().map(Some).map_err(|e| WalkError {
        path: None,
        message: e.to_string(),
    })
}

/// Expand `paths` (files are taken as given; directories are walked for
/// files ending in the suffix). Results are sorted; a file reached under
/// two spellings (or through a link) is kept once, under the first.
pub fn collect(
    paths: &[PathBuf],
    opts: &WalkOptions,
    conf: &Confinement,
) -> Result<Walked, WalkError> {
    let include = globset(&opts.include)?;
    let exclude = globset(&opts.exclude)?;
    let mut out = Walked::default();
    let mut files = Vec::new();
    let selected = |p: &Path| {
        let rel = p.strip_prefix(".").unwrap_or(p);
        include.as_ref().is_none_or(|g| g.is_match(rel))
            && !exclude.as_ref().is_some_and(|g| g.is_match(rel))
    };
    for start in paths {
        if start.is_file() {
            files.push(start.clone());
            continue;
        }
        if !start.exists() {
            out.problems.push(WalkError {
                path: Some(start.clone()),
                message: "no such file or directory".into(),
            });
            continue;
        }
        let root = conf.root_of(start);
        let ignored_dirs = Cell::new(0);
        let outside_links = Cell::new(0);
        let too_deep = Cell::new(0);
        let mut excluded = 0;
        let walker = WalkDir::new(start)
            .follow_links(true)
            .max_depth(opts.max_depth)
            .sort_by_file_name()
            .into_iter()
            .filter_entry(|e| {
                if e.depth() == 0 || !e.file_type().is_dir() {
                    return true;
                }
                let name = e.file_name().to_string_lossy();
                if name.starts_with('.') || name == "target" {
                    ignored_dirs.set(ignored_dirs.get() + 1);
                    return false;
                }
                // A link to a directory is followed only inside the root.
                if e.path_is_symlink()
                    && !std::fs::canonicalize(e.path()).is_ok_and(|c| c.starts_with(&root))
                {
                    outside_links.set(outside_links.get() + 1);
                    return false;
                }
                if e.depth() == opts.max_depth {
                    too_deep.set(too_deep.get() + 1);
                }
                true
            });
        for entry in walker {
            match entry {
                Ok(e) => {
                    let p = e.path();
                    // Anything but a directory: a FIFO or device named like
                    // a stackup is refused by the reader with a message.
                    if !e.file_type().is_dir()
                        && p.file_name()
                            .is_some_and(|n| opts.matches_suffix(&n.to_string_lossy()))
                    {
                        if selected(p) {
                            files.push(p.to_path_buf());
                        } else {
                            excluded += 1;
                        }
                    }
                }
                Err(err) => {
                    let message = if err.loop_ancestor().is_some() {
                        "symbolic link loop; skipped".to_string()
                    } else {
                        err.to_string()
                    };
                    out.problems.push(WalkError {
                        path: err.path().map(Path::to_path_buf),
                        message,
                    });
                }
            }
        }
        let s = &mut out.skipped;
        s.ignored_dirs += ignored_dirs.get();
        s.too_deep += too_deep.get();
        s.excluded += excluded;
        s.outside_links += outside_links.get();
    }
    files.sort();
    let named = files.len();
    files.dedup();
    out.skipped.duplicates += named - files.len();
    // The same file under two spellings (`a/../b.yaml`, a link): once.
    let mut seen = HashSet::new();
    for f in files {
        let abs = crate::files::lexical_absolute(&f, conf.cwd());
        let id = std::fs::canonicalize(&abs).unwrap_or(abs);
        if seen.insert(id) {
            out.files.push(f);
        } else {
            out.skipped.duplicates += 1;
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn yml_and_yaml_suffixes_match() {
        let o = WalkOptions::default();
        assert!(o.matches_suffix("a.stackup.yaml"));
        assert!(o.matches_suffix("a.stackup.yml"));
        assert!(!o.matches_suffix("a.materials.yaml"));
        assert!(!o.matches_suffix("a.yml"));
        let custom = WalkOptions {
            suffix: ".board".into(),
            ..WalkOptions::default()
        };
        assert!(custom.matches_suffix("x.board"));
        assert!(!custom.matches_suffix("x.board.yml"));
    }
}
