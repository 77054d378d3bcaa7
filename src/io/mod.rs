//! Files: the HDF5 writers and readers. Only this module touches files.

pub mod export;
pub mod h5;
pub mod inputs;
pub mod lock;
pub mod store;
pub mod tree_file;

use std::path::{Path, PathBuf};
use std::sync::Mutex;

use thiserror::Error;

#[derive(Debug, Error)]
pub enum IoError {
    // the cause is part of the message, not a separate source: printed once
    #[error("{path}: {cause}")]
    Hdf5 { path: String, cause: hdf5::Error },
    #[error("{path}: {cause}")]
    Fs { path: String, cause: std::io::Error },
    #[error("{path}: {reason}")]
    Format { path: String, reason: String },
    /// The disk (or quota) filled while writing: one line, with what is known of the space
    /// needed; the temporary file is removed by its `AtomicPath`.
    #[error("no space left on {device} while writing {path}; {}", match needed {
        Some(n) => format!("about {} needed (free some space and run again)", human_bytes(*n)),
        None => "free some space and run again (with --resume, a run keeps its finished parts)".into(),
    })]
    NoSpace {
        device: String,
        path: String,
        needed: Option<u64>,
    },
}

/// "53.2 MB (53,200,000 bytes)"-style sizes for messages.
fn human_bytes(n: u64) -> String {
    let (v, unit) = match n {
        0..1_000_000 => (n as f64 / 1e3, "kB"),
        1_000_000..1_000_000_000 => (n as f64 / 1e6, "MB"),
        _ => (n as f64 / 1e9, "GB"),
    };
    format!("{v:.1} {unit} ({n} bytes)")
}

/// Whether an error message of the operating system or the HDF5 library says the device or
/// the quota is full (ENOSPC, EDQUOT).
fn says_no_space(text: &str) -> bool {
    text.contains("No space left on device")
        || text.contains("errno = 28,")
        || text.contains("Disk quota exceeded")
}

/// The file a user knows: `.NAME.partial` is written for NAME.
fn user_facing(path: &Path) -> PathBuf {
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    match name
        .strip_prefix('.')
        .and_then(|n| n.strip_suffix(".partial"))
    {
        Some(final_name) => path.with_file_name(final_name),
        None => path.to_path_buf(),
    }
}

/// The device that holds `path`, for messages: "DEVICE (mounted on DIR)" from the mount
/// table where there is one (Linux), else "the device of DIR".
fn device_of(path: &Path) -> String {
    let dir = path
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let dir = dir.canonicalize().unwrap_or_else(|_| dir.to_path_buf());
    let best = std::fs::read_to_string("/proc/self/mounts")
        .ok()
        .and_then(|table| {
            table
                .lines()
                .filter_map(|l| {
                    let mut w = l.split_whitespace();
                    let dev = w.next()?;
                    // the mount table escapes spaces as \040
                    let at = PathBuf::from(w.next()?.replace("\\040", " "));
                    dir.starts_with(&at).then_some((dev.to_string(), at))
                })
                .max_by_key(|(_, at)| at.as_os_str().len())
        });
    match best {
        Some((dev, at)) => format!("{dev} (mounted on {})", at.display()),
        None => format!("the device of {}", dir.display()),
    }
}

impl IoError {
    /// Before opening `path` as HDF5: a clear error if it is missing or is not an HDF5 file
    /// (the library would say "file signature not found").
    pub fn check_hdf5(path: &Path) -> Result<(), IoError> {
        use std::io::{Read, Seek, SeekFrom};
        const SIGNATURE: [u8; 8] = [0x89, b'H', b'D', b'F', b'\r', b'\n', 0x1a, b'\n'];
        let mut f = std::fs::File::open(path).map_err(|e| IoError::fs(path, e))?;
        let len = f.metadata().map(|m| m.len()).unwrap_or(0);
        // the signature sits at 0 or, after a user block, at 512, 1024, 2048, ...
        let mut at = 0u64;
        while at + 8 <= len {
            let mut buf = [0u8; 8];
            if f.seek(SeekFrom::Start(at)).is_ok()
                && f.read_exact(&mut buf).is_ok()
                && buf == SIGNATURE
            {
                return Ok(());
            }
            at = if at == 0 { 512 } else { at * 2 };
        }
        Err(IoError::Format {
            path: path.display().to_string(),
            reason:
                "not an HDF5 file (stores are written by `retinue run`, trees by `retinue tree`)"
                    .into(),
        })
    }

    pub fn hdf5(path: &Path, source: hdf5::Error) -> Self {
        if says_no_space(&source.to_string()) {
            return Self::no_space(path);
        }
        Self::Hdf5 {
            path: path.display().to_string(),
            cause: source,
        }
    }

    pub fn fs(path: &Path, source: std::io::Error) -> Self {
        if source.kind() == std::io::ErrorKind::StorageFull
            || source.kind() == std::io::ErrorKind::QuotaExceeded
            || says_no_space(&source.to_string())
        {
            return Self::no_space(path);
        }
        Self::Fs {
            path: path.display().to_string(),
            cause: source,
        }
    }

    fn no_space(path: &Path) -> Self {
        Self::NoSpace {
            device: device_of(path),
            path: user_facing(path).display().to_string(),
            needed: None,
        }
    }

    /// With the space the write needed, where the caller knows it (a no-space error only).
    pub fn needing(self, bytes: u64) -> Self {
        match self {
            Self::NoSpace { device, path, .. } => Self::NoSpace {
                device,
                path,
                needed: Some(bytes),
            },
            other => other,
        }
    }
}

/// Flush a closed file's data and metadata to the disk (fsync).
pub fn sync_file(path: &Path) -> Result<(), IoError> {
    std::fs::File::open(path)
        .and_then(|f| f.sync_all())
        .map_err(|e| IoError::fs(path, e))
}

/// Flush the directory holding `path` (its entries: a rename into it), where the platform
/// allows it; a failure here is not an error (some file systems refuse to sync directories).
pub fn sync_parent_dir(path: &Path) {
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    if let Ok(d) = std::fs::File::open(dir) {
        let _ = d.sync_all();
    }
}

/// The temporary files of the `AtomicPath`s alive now: what an interrupted command removes
/// (`remove_temporary_files`).
static TEMPORARY_FILES: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());

fn temporary_files() -> std::sync::MutexGuard<'static, Vec<PathBuf>> {
    TEMPORARY_FILES.lock().unwrap_or_else(|p| p.into_inner())
}

/// What an interrupted command says before it ends: what it kept and how to go on (set by
/// the command as it starts its work; empty: nothing to say).
static INTERRUPT_NOTE: Mutex<String> = Mutex::new(String::new());

/// Set what an interrupted command prints (`interrupt_note`).
pub fn set_interrupt_note(note: impl Into<String>) {
    *INTERRUPT_NOTE.lock().unwrap_or_else(|p| p.into_inner()) = note.into();
}

/// What an interrupted command prints (empty: nothing).
pub fn interrupt_note() -> String {
    INTERRUPT_NOTE
        .lock()
        .unwrap_or_else(|p| p.into_inner())
        .clone()
}

/// Remove the temporary file of every `AtomicPath` alive now, for a command interrupted by a
/// signal (the command line calls it from its SIGINT/SIGTERM handler, then ends): nothing
/// that looks like a store (`.NAME.partial`, a copy of the store being re-tested) stays.
/// Finished files and a run's part files are kept.
pub fn remove_temporary_files() {
    for p in temporary_files().iter() {
        let _ = std::fs::remove_file(p);
    }
}

/// A file written under a temporary name and renamed into place only when complete, so an
/// interrupted write never leaves a file that looks finished: a failed write removes it
/// (`Drop`), and so does an interrupted command (`remove_temporary_files`).
#[derive(Debug)]
pub struct AtomicPath {
    pub final_path: PathBuf,
    pub temp_path: PathBuf,
}

impl AtomicPath {
    pub fn new(final_path: &Path) -> Self {
        let name = final_path
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_else(|| "out".into());
        let temp_path = final_path.with_file_name(format!(".{name}.partial"));
        temporary_files().push(temp_path.clone());
        Self {
            final_path: final_path.to_path_buf(),
            temp_path,
        }
    }

    /// Move the finished temporary file into place: its data are flushed to the disk first
    /// (fsync) and the directory entry after the rename, so that after a power cut or a
    /// system crash the final name holds the whole file or is absent, never an empty or
    /// partly written file under the final name.
    pub fn commit(self) -> Result<PathBuf, IoError> {
        sync_file(&self.temp_path)?;
        std::fs::rename(&self.temp_path, &self.final_path)
            .map_err(|e| IoError::fs(&self.final_path, e))?;
        sync_parent_dir(&self.final_path);
        Ok(self.final_path.clone())
    }

    /// Remove the temporary file (after a failure).
    pub fn discard(&self) {
        let _ = std::fs::remove_file(&self.temp_path);
    }
}

/// A write that fails on any path (an error returned with `?`, a full disk) removes its
/// temporary file; after `commit` there is none left to remove.
impl Drop for AtomicPath {
    fn drop(&mut self) {
        if self.temp_path.exists() {
            let _ = std::fs::remove_file(&self.temp_path);
        }
        let mut list = temporary_files();
        if let Some(k) = list.iter().position(|p| *p == self.temp_path) {
            list.swap_remove(k);
        }
    }
}
