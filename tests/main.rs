//! One test binary (faster to link): validation against outside references (`val_*`),
//! integration tests of the command line, and shared helpers.

mod common;
mod integration;
mod validation;
