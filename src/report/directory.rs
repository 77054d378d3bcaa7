//! Report directories: how retinue recognises one it wrote, so that it replaces and removes
//! only its own files.
//!
//! Every report directory holds a marker file, `.retinue-report`, written before any table
//! or figure: it names the store the report is of. A directory is a report directory when it
//! holds the marker, or (reports written before the marker was) when its `report.md` starts
//! with the report's heading. `run`, `infall` and `plot` write into a directory that exists
//! and holds anything only when it is a report directory (or with `--overwrite`), and a store
//! that replaces another retires the reports of the one it replaces (`retire_reports_of`).

use std::path::{Path, PathBuf};

use crate::io::IoError;

/// The marker file of a report directory.
pub const MARKER: &str = ".retinue-report";

/// The first line of every `report.md` (`super::markdown`).
pub const REPORT_HEADING: &str = "# Infall-time tests";

/// The store's path as the marker records it: its directory resolved (symbolic links, `.`
/// and `..`), joined with its file name; the path as given when the directory cannot be
/// resolved.
fn store_path(store: &Path) -> String {
    let dir = match store.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    match (dir.canonicalize(), store.file_name()) {
        (Ok(d), Some(n)) => d.join(n),
        _ => store.to_path_buf(),
    }
    .to_string_lossy()
    .into_owned()
}

/// Write the marker into `dir` (created if needed), naming the store by its file name and
/// its full path (`store_path`: a store of the same name elsewhere is another store) and
/// what wrote the directory (e.g. `analysis "run"`, `figures`).
pub fn mark(dir: &Path, store: &Path, what: &str) -> Result<(), IoError> {
    std::fs::create_dir_all(dir).map_err(|e| IoError::fs(dir, e))?;
    let store_name = store
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let text = format!(
        "# A report directory written by retinue. `retinue run`, `infall` and `plot` replace and\n\
         # remove only their own files here (report.md, the CSV tables, the figures); a run\n\
         # that replaces the store named below removes them, and the directory when nothing\n\
         # else is left in it. Delete this file to keep the directory as it is: retinue then\n\
         # writes into it only with --overwrite.\n\
         store = {}\n\
         store_path = {}\n\
         written_by = {}\n",
        toml_string(&store_name),
        toml_string(&store_path(store)),
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

/// The full path of the store a marked report directory names (`store_path`); None without
/// a readable marker or without that key.
pub fn marked_store_path(dir: &Path) -> Option<String> {
    let text = std::fs::read_to_string(dir.join(MARKER)).ok()?;
    let t: toml::Table = text.parse().ok()?;
    t.get("store_path")?.as_str().map(str::to_string)
}

/// Whether `dir` is a report directory retinue wrote: it holds the marker, or (reports from
/// before the marker) its `report.md` starts with the report's heading, or it holds only
/// figures of the names `plot` writes (a review found a figure-only directory of `plot` taken
/// for a user's).
pub fn is_report_dir(dir: &Path) -> bool {
    if dir.join(MARKER).is_file() {
        return true;
    }
    let heading = std::fs::read_to_string(dir.join("report.md"))
        .ok()
        .and_then(|t| t.lines().next().map(|l| l.trim_end() == REPORT_HEADING))
        .unwrap_or(false);
    heading || only_figures(dir)
}

/// `dir` holds at least one file and nothing but figures of the report's names.
fn only_figures(dir: &Path) -> bool {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return false;
    };
    let figures: Vec<String> = super::figures::FIGURE_NAMES
        .iter()
        .flat_map(|n| [format!("{n}.png"), format!("{n}.svg")])
        .collect();
    let names: Vec<String> = entries
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .collect();
    !names.is_empty() && names.iter().all(|n| figures.contains(n))
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

/// The names of the files a report may hold (tables, `report.md`, figures), without the
/// marker.
fn report_file_names() -> Vec<String> {
    let mut names: Vec<String> = super::TABLE_NAMES.iter().map(|n| n.to_string()).collect();
    names.extend(
        super::figures::FIGURE_NAMES
            .iter()
            .flat_map(|n| [format!("{n}.png"), format!("{n}.svg")]),
    );
    names
}

/// Remove the report in `dir` (a report directory of `store`): `report.md` first (what makes
/// it look complete), then the tables, the figures and their hidden partial files. Files of
/// other names are left alone; when there are any, the marker stays (written if the report
/// was from before it), so that the directory is still taken for a report directory and the
/// new store's report may go there; otherwise the marker goes and the directory with it.
fn retire(dir: &Path, store: &Path) -> Result<(), IoError> {
    let mut names = vec!["report.md".to_string()];
    names.extend(report_file_names().into_iter().filter(|n| n != "report.md"));
    for n in &names {
        let mut paths = vec![dir.join(n), dir.join(format!(".{n}.partial"))];
        // a figure's partial file is `.NAME.partial.EXT`
        if let Some((stem, ext)) = n.rsplit_once('.') {
            paths.push(dir.join(format!(".{stem}.partial.{ext}")));
        }
        for p in paths {
            if p.is_file() {
                std::fs::remove_file(&p).map_err(|e| IoError::fs(&p, e))?;
            }
        }
    }
    let others = std::fs::read_dir(dir)
        .map_err(|e| IoError::fs(dir, e))?
        .flatten()
        .any(|e| e.file_name() != MARKER);
    let m = dir.join(MARKER);
    if others {
        if !m.is_file() {
            mark(dir, store, "a report, removed with the store it was of")?;
        }
    } else {
        if m.is_file() {
            std::fs::remove_file(&m).map_err(|e| IoError::fs(&m, e))?;
        }
        let _ = std::fs::remove_dir(dir);
    }
    Ok(())
}

/// Before a new store is put at `store` (over an earlier one, or where one was): remove the
/// reports that describe what was there, so that a store never sits next to a report of
/// another run. These are the run's report directory (`analysis::report_dir`: NAME-report
/// next to the store) when it is a report directory whose marker, if any, names this store,
/// and the default directories of `retinue infall` (NAME-ANALYSIS-report next to it) whose
/// marker names this store by its full path (`store_path`). Only
/// the report's files go (`retire`); a directory left with nothing else goes too. Reports written
/// elsewhere (`--out DIR`) are not looked for. Returns the directories whose report was
/// removed.
pub fn retire_reports_of(store: &Path) -> Result<Vec<PathBuf>, IoError> {
    if store.file_name().is_none() {
        return Ok(Vec::new());
    }
    let stem = store
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "run".into());
    let parent = match store.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let mut retired = Vec::new();
    let this = store_path(store);
    let own = crate::analysis::report_dir(store);
    // the run's own report directory, unless its marker names another store (one of the
    // same name elsewhere that wrote its report here with --out)
    if own.is_dir() && is_report_dir(&own) && marked_store_path(&own).is_none_or(|p| p == this) {
        retire(&own, store)?;
        retired.push(own.clone());
    }
    let prefix = format!("{stem}-");
    if let Ok(entries) = std::fs::read_dir(&parent) {
        // (named as the store is: `x-a-report` for `x.h5`, not `./x-a-report`)
        let mut dirs: Vec<PathBuf> = entries
            .flatten()
            .map(|e| store.with_file_name(e.file_name()))
            .filter(|p| {
                p.file_name().is_some_and(|n| {
                    let n = n.to_string_lossy();
                    n.starts_with(&prefix) && n.ends_with("-report")
                }) && p.is_dir()
                    && p.file_name() != own.file_name()
            })
            .collect();
        dirs.sort();
        for d in dirs {
            // by full path: a store of the same file name elsewhere is another store (a
            // review found the report of `a/run.h5`, written to `run-x-report` with --out,
            // removed when a new `run.h5` was made next to it)
            if marked_store_path(&d).as_deref() == Some(this.as_str()) {
                retire(&d, store)?;
                retired.push(d);
            }
        }
    }
    Ok(retired)
}
