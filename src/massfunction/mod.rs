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

/// dn/dlnM (comoving Mpc^-3) of a fit calibrated on simulations of cold dark matter with a
/// top-hat sigma(M) (Sheth & Tormen 1999 and the like), evaluated as it was calibrated:
/// through the top-hat window without warm dark matter, times the WDM/CDM ratio of the same
/// function through the theory's own window when warm dark matter is on (the sharp-k window
/// is the one whose WDM mass function follows simulations: physics reference sheet). With
/// the sharp-k window under cold dark matter, sigma(M) alone would move the Sheth & Tormen
/// counts by 9-10% at 1e10-1e12 Msun (Planck 2018, c = 2.5) although the cosmology is the same.
pub fn dn_dlnm_field_mpc3(lt: &LinearTheory, f: &impl Multiplicity, m_msun: f64, z: f64) -> f64 {
    let base = dn_dlnm_mpc3(lt.top_hat_cdm(), f, m_msun, z);
    if lt.options().m_wdm_kev.is_some() {
        let cdm = dn_dlnm_mpc3(lt.cdm_same_window(), f, m_msun, z);
        if cdm > 0.0 {
            return base * dn_dlnm_mpc3(lt, f, m_msun, z) / cdm;
        }
    }
    base
}

pub use press_schechter::PressSchechter;
pub use sheth_tormen::ShethTormen;
