//! One writer per store: an advisory lock held by whoever writes a store (a run, its tests, a
//! re-test with `infall`, a merge), so that two processes never write the same file, its
//! parts or its temporary files at once.
//!
//! The lock is an operating-system file lock (`std::fs::File::try_lock`: `flock` on Unix,
//! `LockFileEx` on Windows) on `.NAME.lock` beside the store NAME, holding the process id and
//! the command of the holder. It is released when the holder exits, even if it is killed, so
//! a stale lock file never blocks a later run; a second writer stops at once with a one-line
//! message that names the holder. The holder removes the file on release (on Unix), while
//! still holding the lock; whoever then locks a file checks that it is still the one at the
//! path (device and inode), and opens the path again if not, so a file removed between its
//! opening and its locking never gives a second writer.

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
        loop {
            let file = OpenOptions::new()
                .read(true)
                .write(true)
                .create(true)
                .truncate(false)
                .open(&path)
                .map_err(|e| IoError::fs(&path, e))?;
            if let Some(lock) = Self::lock_opened(file, &path, target, command)? {
                return Ok(lock);
            }
            // the holder removed the file between our opening and locking it: open the path
            // again (a new file, or the one a newer holder made)
        }
    }

    /// Lock `file`, opened at `path`. The holder removes the lock file on release (`Drop`),
    /// and a process that opened it just before then locks a file that is no longer at the
    /// path while a third process creates and locks a new one: two writers. So a lock is
    /// held only if, once locked, `file` is still the file at `path`; otherwise `None` (the
    /// caller opens the path again).
    fn lock_opened(
        mut file: File,
        path: &Path,
        target: &Path,
        command: &str,
    ) -> Result<Option<Self>, IoError> {
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
            Err(TryLockError::Error(e)) => return Err(IoError::fs(path, e)),
        }
        if !is_at(&file, path) {
            // released when `file` closes
            return Ok(None);
        }
        // ours now: say who holds it
        let _ = file.set_len(0);
        let _ = file.seek(SeekFrom::Start(0));
        let _ = write!(file, "{command}, process {}", std::process::id());
        let _ = file.flush();
        Ok(Some(Self {
            file,
            path: path.to_path_buf(),
        }))
    }

    /// The lock file's path.
    pub fn path(&self) -> &Path {
        &self.path
    }
}

/// Whether the open `file` is the file now at `path` (same device and inode).
#[cfg(unix)]
fn is_at(file: &File, path: &Path) -> bool {
    use std::os::unix::fs::MetadataExt;
    match (file.metadata(), std::fs::metadata(path)) {
        (Ok(a), Ok(b)) => a.dev() == b.dev() && a.ino() == b.ino(),
        _ => false,
    }
}

/// Elsewhere the lock file is never removed (`Drop`), so the file opened is the one at the path.
#[cfg(not(unix))]
fn is_at(_file: &File, _path: &Path) -> bool {
    true
}

impl Drop for WriterLock {
    fn drop(&mut self) {
        // remove the file while still holding the lock, then release it: a process that
        // opened it before the removal finds, once it has the lock, that the file is no longer
        // at the path, and opens the path again (`lock_opened`)
        #[cfg(unix)]
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
        #[cfg(unix)]
        assert!(!lock_path(&store).exists());
        let b = WriterLock::acquire(&store, "retinue infall").unwrap();
        drop(b);
    }

    /// The race on release: B opens the lock file while A holds it, A removes the file and
    /// releases, then B locks the file it opened. B must not count as holding the lock: C,
    /// opening the path after the removal, makes and locks a new file, and there would be two
    /// writers. B opens the path again instead and then holds the one lock; C is refused.
    #[cfg(unix)]
    #[test]
    fn a_lock_on_a_removed_lock_file_is_not_held() {
        let d = tempfile::tempdir().unwrap();
        let store = d.path().join("s.h5");
        let path = lock_path(&store);
        let a = WriterLock::acquire(&store, "retinue run").unwrap();
        let opened_by_b = OpenOptions::new()
            .read(true)
            .write(true)
            .open(&path)
            .unwrap();
        drop(a);
        assert!(!path.exists());
        // the file B opened is unlocked now, but it is not the store's lock any more
        let stale = WriterLock::lock_opened(opened_by_b, &path, &store, "retinue infall");
        assert!(stale.unwrap().is_none());
        // what `acquire` does next: open the path again, and hold the lock
        let b = WriterLock::acquire(&store, "retinue infall").unwrap();
        assert!(path.exists());
        let c = WriterLock::acquire(&store, "retinue merge").unwrap_err();
        assert!(c.to_string().contains("retinue infall, process"), "{c}");
        drop(b);
    }
}
