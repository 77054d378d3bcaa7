//! Median mass accretion history of Correa et al. 2015 (MNRAS 450, 1521, "paper II"), used to
//! validate the trees: M(z) = M0 (1+z)^alpha exp(beta z) with M0 = M200c(z=0) in Msun,
//! beta = -f(M0), alpha = [1.686 sqrt(2/pi) dD/dz|_0 + 1] f(M0),
//! f(M0) = [S(M0/q) - S(M0)]^(-1/2), S = sigma^2 at z = 0,
//! q = 4.137 zf^-0.9476, zf = -0.0064 (log10 M0)^2 + 0.0237 log10 M0 + 1.8837.
//! (Coefficients recalled from memory, as in the physics reference sheet; its evaluation for
//! Planck 2018 gives alpha = 0.2123, beta = -0.7178 at M0 = 1e12 Msun, checked in the tests.)

use std::f64::consts::PI;

use crate::linear::LinearTheory;

/// (alpha, beta) of the Correa et al. 2015 MAH for M0 = M200c today (Msun).
pub fn alpha_beta(lt: &LinearTheory, m0_200c_msun: f64) -> (f64, f64) {
    let lm = m0_200c_msun.log10();
    let zf = -0.0064 * lm * lm + 0.0237 * lm + 1.8837;
    let q = 4.137 * zf.powf(-0.9476);
    // the fit is in S = sigma^2 of the top-hat window and cold dark matter (a sharp-k run's
    // own sigma moved f(M0) by 10% at 1e12 Msun: review 2026-12-04)
    let t = lt.top_hat_cdm().sigma_table();
    let s1 = t.sigma(m0_200c_msun / q).powi(2);
    let s0 = t.sigma(m0_200c_msun).powi(2);
    let f = (s1 - s0).powf(-0.5);
    let dddz = lt.cosmology().growth_dz(0.0);
    let alpha = (1.686 * (2.0 / PI).sqrt() * dddz + 1.0) * f;
    (alpha, -f)
}

/// M(z)/M0 of the Correa et al. 2015 median history.
pub fn mass_ratio(alpha: f64, beta: f64, z: f64) -> f64 {
    (1.0 + z).powf(alpha) * (beta * z).exp()
}
