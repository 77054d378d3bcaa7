//! The universal evolved subhalo mass function of Jiang & van den Bosch 2016 (MNRAS 458, 2848;
//! arXiv:1403.6827), a published reference for the surviving population of a host (used by
//! the validation checks; the tool's own subhaloes come from its trees and orbits).
//!
//! The model ties a host's substructure to its *dynamical age*, the number of halo dynamical
//! times since its main branch first held half its present mass,
//!   N_tau = integral from t(z_0.5) to t_0 of dt / tau_dyn(t),
//!   tau_dyn = pi / sqrt(2 Delta_vir) / H (free-fall time of a halo of mean density
//!   Delta_vir rho_crit, Bryan & Norman 1998),
//! which with dt = -dz / ((1 + z) H) is N_tau = (sqrt 2 / pi) integral_0^{z_0.5}
//! sqrt(Delta_vir(z)) dz / (1 + z): H cancels. The mass fraction in subhaloes above
//! m/M_0 = 1e-4 is f_sub = 0.3563 N_tau^-0.6 - 0.075, and the evolved mass function of all
//! orders inside R_vir (bound mass m, psi = m / M_0) is
//!   dN / dln psi = 0.31 f_sub psi^-0.82 exp(-50 psi^4).
//! Coefficients: as in the fitting program the authors released with the first arXiv version
//! (version 1.0, 2014); the published paper's text could not be read here. Checked against
//! astropy 8.0.2 / scipy 1.18.1 quadrature of the same formulas
//! (`tests/reference/scripts/make_jvdb16_fixtures.py`).

use crate::linear::collapse::delta_vir_crit;
use crate::Cosmology;

/// Dynamical age N_tau of a host whose main branch reached half its present mass at z_half
/// (observed today, z = 0).
pub fn dynamical_age(cosmo: &Cosmology, z_half: f64) -> f64 {
    if z_half <= 0.0 {
        return 0.0;
    }
    let f = |z: f64| delta_vir_crit(cosmo, z).sqrt() / (1.0 + z);
    quadrature::integrate(f, 0.0, z_half, 1e-12).integral * std::f64::consts::SQRT_2
        / std::f64::consts::PI
}

/// Mass fraction in subhaloes with m/M_0 > 1e-4 at dynamical age `n_tau` (floored at zero:
/// the fit goes negative for N_tau > 12, far older than any host).
pub fn subhalo_mass_fraction(n_tau: f64) -> f64 {
    (0.3563 * n_tau.powf(-0.6) - 0.075).max(0.0)
}

/// dN/dln psi of all orders at psi = m/M_0 for mass fraction `f_sub`.
pub fn dn_dln_psi(psi: f64, f_sub: f64) -> f64 {
    0.31 * f_sub * psi.powf(-0.82) * (-50.0 * psi.powi(4)).exp()
}

/// N(> psi): the number of subhaloes of all orders inside R_vir with m > psi M_0.
pub fn n_greater(psi: f64, f_sub: f64) -> f64 {
    // the cut-off makes the integrand negligible (exp(-50 e^{4 ln 10}) ~ 0) well before psi = 10
    quadrature::integrate(
        |lx: f64| dn_dln_psi(lx.exp(), f_sub),
        psi.ln(),
        10f64.ln(),
        1e-12 * dn_dln_psi(psi, f_sub).max(1e-300),
    )
    .integral
}
