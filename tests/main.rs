//! One test binary (faster to link): validation against outside references (`val_*`),
//! integration tests of the command line, and shared helpers.

// Index loops over aligned reference arrays read more clearly than zipped iterators here.
#![allow(clippy::needless_range_loop)]

mod common;
mod integration;
mod validation;
