//! The mass function of haloes inside a region of given Lagrangian mass and non-linear
//! overdensity (Mo & White 1996, MNRAS 282, 347, sec. 2-3), used for the counts of field
//! haloes around a host.
//!
//! A spherical region of comoving radius R (Eulerian) and non-linear matter overdensity delta
//! at redshift z has Lagrangian mass M0 = (4 pi/3) rho_m0 R^3 (1 + delta) and a linear
//! overdensity delta_0(delta) from spherical collapse, approximated by Mo & White 1996,
//! eq. 18 (recalled from memory; checked here by its limits delta_0(0) = 0,
//! d delta_0/d delta = 1 at 0 and delta_0 -> delta_c as delta -> infinity):
//!   delta_0 = 1.68647 - 1.35 (1+delta)^(-2/3) - 1.12431 (1+delta)^(-1/2)
//!             + 0.78785 (1+delta)^(-0.58661).
//! The number of haloes of mass M < M0 collapsed by z inside it is the progenitor function
//!   dN/dlnM = (M0/M) f(S, delta_c/D(z) | S0, delta_0/D(z)) |dS/dlnM|.

use std::f64::consts::PI;

use crate::linear::LinearTheory;

/// Mo & White 1996 eq. 18: linear overdensity of a region of non-linear overdensity delta.
pub fn linear_overdensity(delta_nl: f64) -> f64 {
    let y = 1.0 + delta_nl;
    1.68647 - 1.35 * y.powf(-2.0 / 3.0) - 1.12431 * y.powf(-0.5) + 0.78785 * y.powf(-0.58661)
}

/// A spherical region around a host.
#[derive(Debug, Clone, Copy)]
pub struct Region<'a> {
    lt: &'a LinearTheory,
    /// Lagrangian mass, M_sun.
    pub m0_msun: f64,
    /// Linear overdensity (at z) of the region.
    pub delta0: f64,
    /// Redshift at which the region is seen.
    pub z: f64,
    s0: f64,
}

impl<'a> Region<'a> {
    /// Region of comoving Eulerian radius R (Mpc) and non-linear overdensity delta at z.
    pub fn new(lt: &'a LinearTheory, radius_mpc: f64, delta_nl: f64, z: f64) -> Self {
        let m0 = 4.0 * PI / 3.0 * lt.rho_m0_msun_mpc3() * radius_mpc.powi(3) * (1.0 + delta_nl);
        let s = lt.sigma_table().sigma(m0);
        Self {
            lt,
            m0_msun: m0,
            delta0: linear_overdensity(delta_nl),
            z,
            s0: s * s,
        }
    }

    /// Comoving volume of the region (Mpc^3) implied by its mass and overdensity.
    pub fn volume_mpc3(&self, delta_nl: f64) -> f64 {
        self.m0_msun / (self.lt.rho_m0_msun_mpc3() * (1.0 + delta_nl))
    }

    /// Expected number of haloes per ln M inside the region.
    pub fn dn_dlnm(&self, m_msun: f64) -> f64 {
        if m_msun >= self.m0_msun {
            return 0.0;
        }
        let d = self.lt.cosmology().growth(self.z);
        let w1 = self.lt.delta_c(self.z) / d;
        let w0 = self.delta0 / d;
        let (sig, slope) = self.lt.sigma_table().sigma_and_slope(m_msun);
        let s1 = sig * sig;
        let ds = s1 - self.s0;
        let dw = w1 - w0;
        if ds <= 0.0 || dw <= 0.0 {
            return 0.0;
        }
        let f = dw / (2.0 * PI).sqrt() / ds.powf(1.5) * (-dw * dw / (2.0 * ds)).exp();
        self.m0_msun / m_msun * f * 2.0 * s1 * slope.abs()
    }

    /// Expected number of haloes with M in [m_lo, m_hi] inside the region.
    pub fn n_between(&self, m_lo_msun: f64, m_hi_msun: f64) -> f64 {
        let hi = m_hi_msun.min(self.m0_msun);
        if hi <= m_lo_msun {
            return 0.0;
        }
        quadrature::integrate(
            |x: f64| self.dn_dlnm(x.exp()),
            m_lo_msun.ln(),
            hi.ln(),
            1e-9,
        )
        .integral
    }
}
