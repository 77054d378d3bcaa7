//! Report directories: how retinue recognises one it wrote, so that it replaces and removes
//! only its own files.
//!
//! Every report directory holds a marker file, `.retinue-report`, written before any table
//! or figure: it names the store the report is of. A directory is a report directory when it
//! holds the marker, or (reports written before the marker was) when its `report.md` starts
//! with the report's heading. `run`, `infall` and `plot` write into a directory that exists
//! and holds anything only when it is a report directory (or with `--overwrite`).

use std::path::Path;

use crate::io::IoError;

/// The marker file of a report directory.
pub const MARKER: &str = ".retinue-report";

/// The first line of every `report.md` (`super::markdown`).
pub const REPORT_HEADING: &str = "# Infall-time tests";

/// Write the marker into `dir` (created if needed), naming the store by its file name and
/// what wrote the directory (e.g. `analysis "run"`, `figures`).
pub fn mark(dir: &Path, store: &Path, what: &str) -> Result<(), IoError> {
    std::fs::create_dir_all(dir).map_err(|e| IoError::fs(dir, e))?;
    let store_name = store
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let text = format!(
        "# A report directory written by retinue. `retinue run`, `infall` and `plot` replace and\n\
         # remove only their own files here (report.md, the CSV tables, the figures). Delete\n\
         # this file to keep the directory as it is: retinue then writes into it only with\n\
         # --overwrite.\n\
         store = {}\n\
         written_by = {}\n",
        toml_string(&store_name),
        toml_string(what),
    );
    let p = dir.join(MARKER);
    // unchanged: not rewritten (the marker of a directory re-used by the same store)
    if std::fs::read_to_string(&p).ok().as_deref() == Some(text.as_str()) {
        return Ok(());
    }
    std::fs::write(&p, text).map_err(|e| IoError::fs(&p, e))
}

fn toml_string(s: &str) -> String {
    toml::Value::String(s.to_string()).to_string()
}

/// The store a marked report directory names (its file name); None without a readable
/// marker.
pub fn marked_store(dir: &Path) -> Option<String> {
    let text = std::fs::read_to_string(dir.join(MARKER)).ok()?;
    let t: toml::Table = text.parse().ok()?;
    t.get("store")?.as_str().map(str::to_string)
}

/// Whether `dir` is a report directory retinue wrote: it holds the marker, or its
/// `report.md` starts with the report's heading (a report from before the marker).
pub fn is_report_dir(dir: &Path) -> bool {
    if dir.join(MARKER).is_file() {
        return true;
    }
    std::fs::read_to_string(dir.join("report.md"))
        .ok()
        .and_then(|t| t.lines().next().map(|l| l.trim_end() == REPORT_HEADING))
        .unwrap_or(false)
}

/// Why a report cannot be written into `dir` without `--overwrite` (None: it can): `dir` is
/// a directory that holds anything and is not a report directory. The phrase follows the
/// directory's name ("DIR holds files that ..."), naming some of what it holds; the caller
/// adds what to do. (A file at `dir` is the caller's to refuse.)
pub fn foreign_dir_problem(dir: &Path) -> Option<String> {
    let entries = std::fs::read_dir(dir).ok()?;
    let mut names: Vec<String> = entries
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .collect();
    if names.is_empty() || is_report_dir(dir) {
        return None;
    }
    names.sort();
    let n = names.len();
    let shown: Vec<String> = names.iter().take(4).cloned().collect();
    Some(format!(
        "holds files that retinue did not write ({}{}) and is not a report directory (it has \
         no {MARKER} file): files there of the names a report writes (report.md, the CSV \
         tables, the figures) would be replaced",
        shown.join(", "),
        if n > shown.len() {
            format!(" and {} more", n - shown.len())
        } else {
            String::new()
        }
    ))
}
