//! Files: the HDF5 writers and readers. Only this module touches files.

pub mod h5;
pub mod store;
pub mod tree_file;

use std::path::{Path, PathBuf};

use thiserror::Error;

#[derive(Debug, Error)]
pub enum IoError {
    #[error("{path}: {source}")]
    Hdf5 {
        path: String,
        #[source]
        source: hdf5::Error,
    },
    #[error("{path}: {source}")]
    Fs {
        path: String,
        #[source]
        source: std::io::Error,
    },
    #[error("{path}: {reason}")]
    Format { path: String, reason: String },
}

impl IoError {
    pub fn hdf5(path: &Path, source: hdf5::Error) -> Self {
        Self::Hdf5 {
            path: path.display().to_string(),
            source,
        }
    }

    pub fn fs(path: &Path, source: std::io::Error) -> Self {
        Self::Fs {
            path: path.display().to_string(),
            source,
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
