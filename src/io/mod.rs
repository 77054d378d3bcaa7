//! Files: the HDF5 writers and readers. Only this module touches files.

pub mod h5;
pub mod lock;
pub mod store;
pub mod tree_file;

use std::path::{Path, PathBuf};

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
        Self::Hdf5 {
            path: path.display().to_string(),
            cause: source,
        }
    }

    pub fn fs(path: &Path, source: std::io::Error) -> Self {
        Self::Fs {
            path: path.display().to_string(),
            cause: source,
        }
    }
}

/// A file written under a temporary name and renamed into place only when complete, so an
/// interrupted write never leaves a file that looks finished.
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
        Self {
            final_path: final_path.to_path_buf(),
            temp_path,
        }
    }

    /// Move the finished temporary file into place.
    pub fn commit(self) -> Result<PathBuf, IoError> {
        std::fs::rename(&self.temp_path, &self.final_path)
            .map_err(|e| IoError::fs(&self.final_path, e))?;
        Ok(self.final_path)
    }

    /// Remove the temporary file (after a failure).
    pub fn discard(&self) {
        let _ = std::fs::remove_file(&self.temp_path);
    }
}
