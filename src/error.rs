//! Typed errors. Each module has its own enum; `crate::Error` gathers them.

use thiserror::Error;

/// A parameter with a value outside its allowed range, or otherwise unusable.
/// `key` is the configuration key (e.g. `cosmology.h`); the command line maps it to its flag.
#[derive(Debug, Clone, PartialEq)]
pub struct InvalidValue {
    pub key: String,
    pub value: String,
    pub allowed: String,
}

/// A short, printable excerpt of text read from a user's file, for quoting in a message: at
/// most 24 characters, control characters shown as `?`, "..." when cut. Messages never
/// echo whole lines of a file, which may not be what the user meant to give (a file of
/// secrets given by mistake).
pub fn excerpt(text: &str) -> String {
    const MAX: usize = 24;
    let mut out: String = text
        .chars()
        .take(MAX)
        .map(|c| if c.is_control() { '?' } else { c })
        .collect();
    if text.chars().count() > MAX {
        out.push_str("...");
    }
    out
}

/// The value written for a key that was required but absent.
pub const MISSING: &str = "(missing)";

impl std::fmt::Display for InvalidValue {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        if self.value == MISSING {
            write!(f, "{} is missing: {}", self.key, self.allowed)
        } else if self.value.is_empty() {
            // a problem with no single value (a file that cannot be parsed at all)
            write!(f, "{}: {}", self.key, self.allowed)
        } else {
            write!(
                f,
                "{} = {} is not allowed: {}",
                self.key, self.value, self.allowed
            )
        }
    }
}

impl std::error::Error for InvalidValue {}

impl InvalidValue {
    pub fn new(key: impl Into<String>, value: impl ToString, allowed: impl Into<String>) -> Self {
        Self {
            key: key.into(),
            value: value.to_string(),
            allowed: allowed.into(),
        }
    }
}

/// Collects range problems of numeric parameters: `num(key, value, ok, allowed)` records a
/// problem when `ok` is false or the value is not finite.
#[derive(Debug, Default)]
pub struct Checker {
    prefix: String,
    pub problems: Vec<InvalidValue>,
}

impl Checker {
    pub fn new(prefix: &str) -> Self {
        Self {
            prefix: prefix.to_string(),
            problems: Vec::new(),
        }
    }

    pub fn num(&mut self, key: &str, v: f64, ok: bool, allowed: &str) {
        if !ok || !v.is_finite() {
            self.problems.push(InvalidValue::new(
                format!("{}{key}", self.prefix),
                v,
                allowed,
            ));
        }
    }
}

#[derive(Debug, Error)]
pub enum CosmologyError {
    #[error("{0}")]
    Invalid(#[from] InvalidValue),
    #[error("unknown cosmology preset `{got}`; expected one of {allowed}")]
    UnknownPreset { got: String, allowed: String },
    #[error("{what} did not converge after {iterations} iterations (residual {residual:e})")]
    NoConvergence {
        what: &'static str,
        iterations: usize,
        residual: f64,
    },
    #[error("the universe described by these parameters has E(z)^2 <= 0 at z = {z} (it recollapses or bounces); choose omega_m, omega_k and w so that E(z)^2 stays positive")]
    NonPhysical { z: f64 },
}

#[derive(Debug, Error)]
pub enum LinearError {
    #[error("{0}")]
    Invalid(#[from] InvalidValue),
    #[error("transfer table {path}: {reason}")]
    TransferTable { path: String, reason: String },
    #[error("sigma(M) is not monotonic near M = {mass_msun:e} Msun; the power spectrum must be positive")]
    NotMonotonic { mass_msun: f64 },
    #[error("{quantity} = {value:e} is outside the tabulated range [{min:e}, {max:e}]")]
    OutOfTable {
        quantity: &'static str,
        value: f64,
        min: f64,
        max: f64,
    },
}

/// Everything the library can fail with.
#[derive(Debug, Error)]
pub enum Error {
    #[error(transparent)]
    Cosmology(#[from] CosmologyError),
    #[error(transparent)]
    Linear(#[from] LinearError),
    #[error(transparent)]
    Invalid(#[from] InvalidValue),
}

pub type Result<T, E = Error> = std::result::Result<T, E>;
