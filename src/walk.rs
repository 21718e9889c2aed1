//! Finding stackup files: walk directories, filter by suffix and globs.

use std::path::{Path, PathBuf};

use globset::{Glob, GlobSet, GlobSetBuilder};
use walkdir::WalkDir;

/// How to pick files out of directories.
#[derive(Debug, Clone)]
pub struct WalkOptions {
    /// File-name suffix of stackup files.
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

/// A problem met while walking (unreadable directory, symlink loop, bad glob).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct WalkError {
    pub path: Option<PathBuf>,
    pub message: String,
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
/// files ending in the suffix). Results are sorted, deduplicated.
pub fn collect(
    paths: &[PathBuf],
    opts: &WalkOptions,
) -> Result<(Vec<PathBuf>, Vec<WalkError>), WalkError> {
    let include = globset(&opts.include)?;
    let exclude = globset(&opts.exclude)?;
    let mut files = Vec::new();
    let mut problems = Vec::new();
    let selected = |p: &Path| {
        let rel = p.strip_prefix(".").unwrap_or(p);
        include.as_ref().is_none_or(|g| g.is_match(rel))
            && !exclude.as_ref().is_some_and(|g| g.is_match(rel))
    };
    for root in paths {
        if root.is_file() {
            files.push(root.clone());
            continue;
        }
        if !root.exists() {
            problems.push(WalkError {
                path: Some(root.clone()),
                message: "no such file or directory".into(),
            });
            continue;
        }
        let walker = WalkDir::new(root)
            .follow_links(true)
            .max_depth(opts.max_depth)
            .sort_by_file_name()
            .into_iter()
            .filter_entry(|e| {
                // Skip hidden directories (.git) and build output.
                e.depth() == 0
                    || !(e.file_type().is_dir()
                        && (e.file_name().to_string_lossy().starts_with('.')
                            || e.file_name() == "target"))
            });
        for entry in walker {
            match entry {
                Ok(e) => {
                    let p = e.path();
                    if e.file_type().is_file()
                        && p.file_name()
                            .is_some_and(|n| n.to_string_lossy().ends_with(&opts.suffix))
                        && selected(p)
                    {
                        files.push(p.to_path_buf());
                    }
                }
                Err(err) => {
                    let message = if err.loop_ancestor().is_some() {
                        "symbolic link loop; skipped".to_string()
                    } else {
                        err.to_string()
                    };
                    problems.push(WalkError {
                        path: err.path().map(Path::to_path_buf),
                        message,
                    });
                }
            }
        }
    }
    files.sort();
    files.dedup();
    Ok((files, problems))
}
