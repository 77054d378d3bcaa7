//! Chandrasekhar (1943, ApJ 97, 255) dynamical friction on a satellite of bound mass m moving
//! with velocity v through the host halo (Binney & Tremaine 2008, eq. 8.7):
//!   a = -4 pi G^2 m rho(r) ln(Lambda) [erf(X) - (2X/sqrt(pi)) exp(-X^2)] v/|v|^3,
//!   X = |v| / (sqrt(2) sigma(r)),
//! with rho the host halo density, sigma its one-dimensional dispersion from the Jeans
//! equation of the actual potential, and ln Lambda = ln(1 + M_host(<r)/m) (a common choice,
//! physics reference sheet sec. 9).

use crate::constants::G_KPC3_PER_MSUN_GYR2 as G;
use crate::special::erf;

/// The mass friction acts on: the bound mass m raised toward the infall mass, m^(1-w) m_acc^w
/// (w = `orbits.friction_mass_infall_weight`, default 0.35; 0 is the bound mass). A stripped
/// satellite drags the matter it has just lost along for a while, and N-body satellites sink
/// faster than Chandrasekhar's formula with their bound mass says (Fujii, Funato & Makino 2006,
/// PASJ 58, 743; recalled); this closure of ours stands for that, calibrated on the merging-time
/// fit of `val_merging_times_vs_the_z0_fit` (docs/methods.md).
#[inline]
pub fn friction_mass(m: f64, m_acc: f64, w: f64) -> f64 {
    if w == 0.0 || m >= m_acc {
        m
    } else {
        m * (m_acc / m).powf(w)
    }
}

/// Coulomb logarithm ln(1 + M_host(<r)/m).
#[inline]
pub fn coulomb_log(m_host_enclosed: f64, m_sat: f64) -> f64 {
    (m_host_enclosed / m_sat).ln_1p()
}

/// The velocity factor B(X) = erf(X) - (2X/sqrt(pi)) exp(-X^2), tabulated once on [0, 8]
/// (cubic Hermite with the exact slope dB/dX = (4/sqrt(pi)) X^2 exp(-X^2); error < 1e-10) and 1
/// beyond, which is 1 - B < 1e-27.
#[inline]
pub fn velocity_factor(x: f64) -> f64 {
    use std::sync::OnceLock;
    static TABLE: OnceLock<crate::interp::UniformHermite> = OnceLock::new();
    if x >= 8.0 {
        return 1.0;
    }
    let t = TABLE.get_or_init(|| {
        let sp = std::f64::consts::PI.sqrt();
        crate::interp::UniformHermite::from_fn(0.0, 8.0, 4001, |x| {
            let e = (-x * x).exp();
            (erf(x) - 2.0 * x / sp * e, 4.0 / sp * x * x * e)
        })
    });
    t.eval(x.max(0.0))
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
    let bracket = velocity_factor(xx);
    let k = -4.0 * std::f64::consts::PI * G * G * m * rho * ln_lambda * bracket / (v2 * vmag);
    [k * v[0], k * v[1], k * v[2]]
}

#[cfg(test)]
mod tests {
    use super::*;

    /// m^(1-w) m_acc^w: the bound mass at w = 0, the infall mass at w = 1, their geometric
    /// mean at 0.5; never below the bound mass.
    #[test]
    fn friction_mass_between_bound_and_infall() {
        assert_eq!(friction_mass(2e8, 1e9, 0.0), 2e8);
        assert!((friction_mass(2e8, 1e9, 1.0) / 1e9 - 1.0).abs() < 1e-14);
        assert!((friction_mass(1e8, 1e10, 0.5) / 1e9 - 1.0).abs() < 1e-14);
        // 1e8 * 100^0.3 = 3.981e8
        assert!((friction_mass(1e8, 1e10, 0.3) / 3.981_071_7e8 - 1.0).abs() < 1e-7);
        assert_eq!(friction_mass(1e9, 1e9, 0.3), 1e9);
    }

    /// The tabulated B(X) equals erf(X) - 2X exp(-X^2)/sqrt(pi) (Binney & Tremaine 2008,
    /// eq. 8.7 bracket) to 1e-10.
    #[test]
    fn velocity_factor_table() {
        for i in 0..2000 {
            let x = 9.0 * i as f64 / 1999.0;
            let exact = erf(x) - 2.0 * x / std::f64::consts::PI.sqrt() * (-x * x).exp();
            assert!((velocity_factor(x) - exact).abs() < 1e-10, "{x}");
        }
    }
}
