//! Halo mass functions: unconditional (Press–Schechter, Sheth–Tormen), the progenitor
//! (conditional) mass function of Lacey & Cole 1993, and the mass function inside a region of
//! given mass and overdensity (Mo & White 1996).
//!
//! Convention: dn/dlnM = (rho_m0 / M) f(nu) |dln sigma / dln M|, number per comoving Mpc^3,
//! nu = delta_c(z) / sigma(M, z), with delta_c from the `LinearTheory`'s model.

pub mod bias;
pub mod conditional;
pub mod evolved_subhaloes;
pub mod mo_white96;
pub mod press_schechter;
pub mod sheth_tormen;

use crate::linear::LinearTheory;

pub use conditional::LaceyCole93;
pub use mo_white96::Region;

/// Multiplicity function f(nu) of a universal mass function.
pub trait Multiplicity {
    fn f_nu(&self, nu: f64) -> f64;
}

/// dn/dlnM in comoving Mpc^-3 for a multiplicity function.
pub fn dn_dlnm_mpc3(lt: &LinearTheory, f: &impl Multiplicity, m_msun: f64, z: f64) -> f64 {
    let nu = lt.nu(m_msun, z);
    lt.rho_m0_msun_mpc3() / m_msun * f.f_nu(nu) * lt.dln_sigma_dln_m(m_msun).abs()
}

pub use press_schechter::PressSchechter;
pub use sheth_tormen::ShethTormen;
