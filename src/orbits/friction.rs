//! Chandrasekhar (1943, ApJ 97, 255) dynamical friction on a satellite of bound mass m moving
//! with velocity v through the host halo (Binney & Tremaine 2008, eq. 8.7):
//!   a = -4 pi G^2 m rho(r) ln(Lambda) [erf(X) - (2X/sqrt(pi)) exp(-X^2)] v/|v|^3,
//!   X = |v| / (sqrt(2) sigma(r)),
//! with rho the host halo density, sigma its one-dimensional dispersion from the Jeans
//! equation of the actual potential, and ln Lambda = ln(1 + M_host(<r)/m) (a common choice,
//! physics reference sheet sec. 9).

use crate::constants::G_KPC3_PER_MSUN_GYR2 as G;
use crate::special::erf;

/// Coulomb logarithm ln(1 + M_host(<r)/m).
#[inline]
pub fn coulomb_log(m_host_enclosed: f64, m_sat: f64) -> f64 {
    (m_host_enclosed / m_sat).ln_1p()
}

/// Friction acceleration (kpc/Gyr^2) for velocity v (kpc/Gyr), density rho (Msun/kpc^3),
/// dispersion sigma (kpc/Gyr), satellite mass m (Msun) and Coulomb logarithm.
#[inline]
pub fn acceleration(v: [f64; 3], rho: f64, sigma: f64, m: f64, ln_lambda: f64) -> [f64; 3] {
    let v2 = v[0] * v[0] + v[1] * v[1] + v[2] * v[2];
    if v2 <= 0.0 || ln_lambda <= 0.0 || m <= 0.0 {
        return [0.0; 3];
    }
    let vmag = v2.sqrt();
    let xx = vmag / (std::f64::consts::SQRT_2 * sigma);
    let bracket = erf(xx) - 2.0 * xx / std::f64::consts::PI.sqrt() * (-xx * xx).exp();
    let k = -4.0 * std::f64::consts::PI * G * G * m * rho * ln_lambda * bracket / (v2 * vmag);
    [k * v[0], k * v[1], k * v[2]]
}
