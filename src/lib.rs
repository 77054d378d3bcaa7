//! # retinue
//!
//! Mock satellite systems of Milky-Way-mass host haloes, built from extended Press–Schechter
//! merger trees without any N-body run, and infall-time statistics on them.
//!
//! ## Module map
//! | module | what |
//! |---|---|
//! | [`cosmology`] | background: E(z), cosmic time, densities, growth; presets |
//! | [`linear`] | transfer functions, P(k), sigma(M) and inverse, delta_c, Delta_vir |
//! | [`massfunction`] | Press–Schechter, Sheth–Tormen, Lacey–Cole conditional, Mo–White region |
//!
//! ## Units (one system everywhere inside)
//! | quantity | unit | name suffix |
//! |---|---|---|
//! | mass | M_sun (no h) | `_msun` |
//! | halo and orbit lengths | physical kpc | `_kpc` |
//! | linear-theory lengths and wavenumbers | comoving Mpc, 1/Mpc | `_mpc` |
//! | velocity | km/s | `_kms` |
//! | time | Gyr; cosmic time since the Big Bang is the clock | `_gyr` |
//! | density | M_sun / kpc^3 (physical) or M_sun / Mpc^3 (comoving) | `_msun_kpc3`, `_msun_mpc3` |
//!
//! `h` appears only in cosmological parameters and in conversions whose names say so.
//! Redshift is for input and output.

pub mod analysis;
pub mod config;
pub mod constants;
pub mod cosmology;
pub mod error;
pub mod galaxies;
pub mod halo;
pub mod host;
pub mod interp;
pub mod io;
pub mod linear;
pub mod massfunction;
pub mod orbits;
pub mod pair;
pub mod report;
pub mod rng;
pub mod run;
pub mod special;
pub mod stats;
pub mod synth;
pub mod trees;

pub use cosmology::{Cosmology, CosmologyParams};
pub use error::{Error, Result};
pub use linear::{LinearOptions, LinearTheory};

/// Fingerprint of this build: 16 hex digits of an FNV-1a hash of every file under `src/`, of
/// `Cargo.lock`, `Cargo.toml` and `build.rs` (`build.rs`; files compiled in from elsewhere, the
/// demo's config and data and the font, are not hashed). Stores record it
/// (`build_fingerprint`); `--resume` and `merge` refuse parts or shards of another build, which the crate version alone would not tell apart.
pub const BUILD_FINGERPRINT: &str = env!("RETINUE_BUILD_FINGERPRINT");
