//! Navarro, Frenk & White (1996, ApJ 462, 563; 1997, ApJ 490, 493) profile:
//! rho(r) = rho_s / [x (1+x)^2], x = r / r_s; M(<r) = 4 pi rho_s r_s^3 m(x),
//! m(x) = ln(1+x) - x/(1+x); Phi(r) = -4 pi G rho_s r_s^3 ln(1+x) / r (untruncated).
//! Units: Msun, physical kpc, km/s.

use std::f64::consts::PI;

use crate::constants::G_KPC_KMS2_PER_MSUN as G;

/// Radius of the maximum circular velocity in units of r_s: the root of
/// x^2/(1+x)^2 = m(x) (scipy brentq, tests/reference/halo.json).
pub const X_MAX: f64 = 2.162_581_587_064_61;
/// m(X_MAX)/X_MAX.
pub const M_OVER_X_AT_MAX: f64 = 0.216_216_595_501_873;

/// m(x) = ln(1+x) - x/(1+x), with a series for small x (no cancellation).
#[inline]
pub fn mu(x: f64) -> f64 {
    if x < 1e-3 {
        // x^2/2 - 2x^3/3 + 3x^4/4 - 4x^5/5
        let x2 = x * x;
        x2 * (0.5 - x * (2.0 / 3.0) + x2 * 0.75 - x2 * x * 0.8)
    } else {
        // ln(1+x) directly: for x >= 1e-3 the rounding of 1+x costs < 1e-12 relative in m(x),
        // and ln is about twice as fast as ln_1p in the orbit integrator's inner loop
        let y = 1.0 + x;
        y.ln() - x / y
    }
}

/// An NFW halo: scale density (Msun/kpc^3) and scale radius (physical kpc).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Nfw {
    pub rho_s_msun_kpc3: f64,
    pub r_s_kpc: f64,
}

impl Nfw {
    /// From a mass M_Delta (Msun) inside radius R_Delta (kpc) and concentration c = R/r_s.
    pub fn from_mass_radius(m_msun: f64, r_kpc: f64, c: f64) -> Self {
        let r_s = r_kpc / c;
        let rho_s = m_msun / (4.0 * PI * r_s.powi(3) * mu(c));
        Self {
            rho_s_msun_kpc3: rho_s,
            r_s_kpc: r_s,
        }
    }

    /// 4 pi rho_s r_s^3 (Msun), the mass scale of M(<r).
    #[inline]
    pub fn m_scale_msun(&self) -> f64 {
        4.0 * PI * self.rho_s_msun_kpc3 * self.r_s_kpc.powi(3)
    }

    #[inline]
    pub fn density_msun_kpc3(&self, r_kpc: f64) -> f64 {
        let x = r_kpc / self.r_s_kpc;
        self.rho_s_msun_kpc3 / (x * (1.0 + x) * (1.0 + x))
    }

    #[inline]
    pub fn mass_enclosed_msun(&self, r_kpc: f64) -> f64 {
        self.m_scale_msun() * mu(r_kpc / self.r_s_kpc)
    }

    /// Circular velocity sqrt(G M(<r)/r), km/s.
    #[inline]
    pub fn v_circ_kms(&self, r_kpc: f64) -> f64 {
        (G * self.mass_enclosed_msun(r_kpc) / r_kpc).sqrt()
    }

    /// Potential of the untruncated profile, (km/s)^2.
    #[inline]
    pub fn potential_kms2(&self, r_kpc: f64) -> f64 {
        let x = r_kpc / self.r_s_kpc;
        let f = if x < 1e-6 {
            1.0 - 0.5 * x
        } else {
            x.ln_1p() / x
        };
        -G * self.m_scale_msun() / self.r_s_kpc * f
    }

    /// (Vmax km/s, Rmax kpc).
    pub fn vmax_rmax(&self) -> (f64, f64) {
        let rmax = X_MAX * self.r_s_kpc;
        (self.v_circ_kms(rmax), rmax)
    }
}

/// Isotropic Jeans velocity dispersion of an NFW halo that is its own tracer, in units of
/// sqrt(G M_s / r_s) (M_s = 4 pi rho_s r_s^3), at x = r/r_s:
/// sigma_r^2(x) = x (1+x)^2 \int_x^inf m(y) / (y^3 (1+y)^2) dy
/// (the Jeans equation with zero anisotropy, e.g. Binney & Tremaine 2008 eq. 4.216, for
/// rho = rho_s/(x(1+x)^2) and M = M_s m(x); untruncated). Used for dynamical friction inside
/// subhaloes, at every stage of the orbit integrator, so it is tabulated once per process on a
/// grid uniform in u = x^(1/4) over [0, 10] (x <= 1e4; two square roots and no logarithm per
/// look-up), cubic Hermite with the exact derivative; the integral at each node by
/// double-exponential quadrature in ln y. Within 1e-7 of the direct quadrature for
/// 1e-4 <= x <= 1e4 (unit test); clamped beyond x = 1e4.
pub fn jeans_sigma_dimensionless(x: f64) -> f64 {
    use std::sync::OnceLock;
    static TABLE: OnceLock<crate::interp::UniformHermite> = OnceLock::new();
    let t = TABLE.get_or_init(|| {
        crate::interp::UniformHermite::from_fn(0.0, 10.0, 4001, |u| {
            if u == 0.0 {
                return (0.0, 0.0);
            }
            let x = u.powi(4);
            let (s2, ds2dx) = jeans_sigma2_direct(x);
            let s = s2.sqrt();
            // d sigma/du = (d sigma^2/dx) (dx/du) / (2 sigma), dx/du = 4 u^3
            (s, ds2dx * 4.0 * u * u * u / (2.0 * s))
        })
    });
    t.eval(x.clamp(0.0, 1e4).sqrt().sqrt())
}

/// sigma_r^2 (units G M_s / r_s) and its derivative in x by direct quadrature (the table's
/// nodes and its test).
pub fn jeans_sigma2_direct(x: f64) -> (f64, f64) {
    // integrand in ln y: m(y) / (y^2 (1+y)^2); the tail beyond y = 1e7 is below 1e-27
    let g = |ly: f64| {
        let y = ly.exp();
        mu(y) / (y * y * (1.0 + y) * (1.0 + y))
    };
    let i = quadrature::integrate(g, x.ln(), (1e7f64).ln(), 1e-13).integral;
    let s2 = x * (1.0 + x) * (1.0 + x) * i;
    // d sigma^2/dx = (1+x)(1+3x) I - x (1+x)^2 m(x)/(x^3 (1+x)^2) = (1+x)(1+3x) I - m(x)/x^2
    let ds2 = (1.0 + x) * (1.0 + 3.0 * x) * i - mu(x) / (x * x);
    (s2, ds2)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// x_max is the root of x^2/(1+x)^2 = m(x) (definition of the circular-velocity peak).
    #[test]
    fn x_max_is_the_root() {
        let f = X_MAX * X_MAX / (1.0 + X_MAX).powi(2) - mu(X_MAX);
        assert!(f.abs() < 1e-14);
        assert!((mu(X_MAX) / X_MAX - M_OVER_X_AT_MAX).abs() < 1e-14);
    }

    #[test]
    fn series_matches_closed_form() {
        for x in [1e-4f64, 5e-4, 9.9e-4] {
            let exact = x.ln_1p() - x / (1.0 + x);
            assert!((mu(x) / exact - 1.0).abs() < 1e-9);
        }
    }

    /// The sigma table against the direct quadrature it is built from, between its nodes.
    #[test]
    fn jeans_table_matches_quadrature() {
        for k in 0..=80 {
            let x = 10f64.powf(-4.0 + 7.9 * k as f64 / 80.0 + 0.0123);
            let want = jeans_sigma2_direct(x).0.sqrt();
            let got = jeans_sigma_dimensionless(x);
            assert!((got / want - 1.0).abs() < 1e-7, "x = {x}: {got} vs {want}");
        }
    }

    /// Force = -dPhi/dr by finite differences.
    #[test]
    fn potential_gradient_is_the_force() {
        let h = Nfw::from_mass_radius(1e12, 250.0, 10.0);
        for r in [0.5, 5.0, 50.0, 500.0] {
            let d = 1e-5 * r;
            let g = -(h.potential_kms2(r + d) - h.potential_kms2(r - d)) / (2.0 * d);
            let want = -G * h.mass_enclosed_msun(r) / (r * r);
            assert!((g / want - 1.0).abs() < 1e-7, "r={r}");
        }
    }
}
