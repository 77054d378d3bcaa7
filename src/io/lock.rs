//! One writer per store: an advisory lock held by whoever writes a store (a run, its tests, a
//! re-test with `infall`, a merge), so that two processes never write the same file, its
//! parts or its temporary files at once.
//!
//! The lock is an operating-system file lock (`std::fs::File::try_lock`: `flock` on Unix,
//! `LockFileEx` on Windows) on `.NAME.lock` beside the store NAME, holding the process id and
//! the command of the holder. It is released when the holder exits, even if it is killed, so
//! a stale lock file never blocks a later run; a second writer stops at once with a one-line
//! message that names the holder.

use std::fs::{File, OpenOptions, TryLockError};
use std::io::{Read, Seek, SeekFrom, Write};
use std::path::{Path, PathBuf};

use super::IoError;

/// The lock on one store, held until dropped.
#[derive(Debug)]
pub struct WriterLock {
    file: File,
    path: PathBuf,
}

/// `.NAME.lock` beside `target`.
pub fn lock_path(target: &Path) -> PathBuf {
    let name = target
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "out".into());
    target.with_file_name(format!(".{name}.lock"))
}

impl WriterLock {
    /// Take the lock on `target` for `command` (e.g. "retinue infall"), or fail at once if
    /// another process holds it, naming that process.
    pub fn acquire(target: &Path, command: &str) -> Result<Self, IoError> {
        let path = lock_path(target);
        let mut file = OpenOptions::new()
            .read(true)
            .write(true)
            .create(true)
            .truncate(false)
            .open(&path)
            .map_err(|e| IoError::fs(&path, e))?;
        match file.try_lock() {
            Ok(()) => {}
            Err(TryLockError::WouldBlock) => {
                let mut holder = String::new();
                let _ = file.read_to_string(&mut holder);
                let holder = holder.trim();
                return Err(IoError::Format {
                    path: target.display().to_string(),
                    reason: format!(
                        "another process is writing it ({}); wait for it to finish, or stop it",
                        if holder.is_empty() {
                            "its lock is in ".to_string() + &path.display().to_string()
                        } else {
                            holder.to_string()
                        }
                    ),
                });
            }
            Err(TryLockError::Error(e)) => return Err(IoError::fs(&path, e)),
        }
        // ours now: say who holds it
        let _ = file.set_len(0);
        let _ = file.seek(SeekFrom::Start(0));
        let _ = write!(file, "{command}, process {}", std::process::id());
        let _ = file.flush();
        Ok(Self { file, path })
    }

    /// The lock file's path.
    pub fn path(&self) -> &Path {
        &self.path
    }
}

impl Drop for WriterLock {
    fn drop(&mut self) {
        // remove the file while still holding the lock, then release it
        let _ = std::fs::remove_file(&self.path);
        let _ = self.file.unlock();
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A second lock on the same store fails while the first is held and names the holder;
    /// after the first is dropped the lock can be taken again and its file is gone.
    #[test]
    fn one_writer_at_a_time() {
        let d = tempfile::tempdir().unwrap();
        let store = d.path().join("s.h5");
        let a = WriterLock::acquire(&store, "retinue run").unwrap();
        assert!(a.path().exists());
        let e = WriterLock::acquire(&store, "retinue infall").unwrap_err();
        let msg = e.to_string();
        assert!(
            msg.contains("another process is writing it") && msg.contains("retinue run, process"),
            "{msg}"
        );
        drop(a);
        assert!(!lock_path(&store).exists());
        let b = WriterLock::acquire(&store, "retinue infall").unwrap();
        drop(b);
    }
}
