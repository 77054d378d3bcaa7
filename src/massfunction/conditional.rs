//! The extended Press–Schechter progenitor (conditional) mass function, Lacey & Cole 1993
//! (MNRAS 262, 627, eqs. 2.11-2.16; Bond et al. 1991).
//!
//! With S = sigma^2(M) at z = 0 and the clock w(z) = delta_c(z)/D(z), the fraction of the mass
//! of a halo (M0, z0) that was in progenitors of mass in [M1, M1 + dM1] at z1 > z0 is
//! f(S1, w1 | S0, w0) |dS1/dM1| dM1 with
//! f = (1/sqrt(2 pi)) (w1 - w0) / (S1 - S0)^(3/2) exp[-(w1 - w0)^2 / (2 (S1 - S0))].
//! The number of progenitors is (M0/M1) times that.

use std::f64::consts::PI;

use crate::linear::LinearTheory;

/// Progenitor statistics of a parent halo of mass M0 at z0, seen at z1.
#[derive(Debug, Clone, Copy)]
pub struct LaceyCole93<'a> {
    lt: &'a LinearTheory,
    m0_msun: f64,
    s0: f64,
    w0: f64,
}

impl<'a> LaceyCole93<'a> {
    pub fn new(lt: &'a LinearTheory, m0_msun: f64, z0: f64) -> Self {
        let s = lt.sigma_table().sigma(m0_msun);
        Self {
            lt,
            m0_msun,
            s0: s * s,
            w0: lt.w_of_z(z0),
        }
    }

    /// First-crossing density f(S1, w1 | S0, w0) per unit S1.
    pub fn first_crossing(&self, s1: f64, w1: f64) -> f64 {
        let ds = s1 - self.s0;
        let dw = w1 - self.w0;
        if ds <= 0.0 || dw <= 0.0 {
            return 0.0;
        }
        dw / (2.0 * PI).sqrt() / ds.powf(1.5) * (-dw * dw / (2.0 * ds)).exp()
    }

    /// dN/dln M1: expected number of progenitors per unit ln M1 at z1.
    pub fn dn_dlnm1(&self, m1_msun: f64, z1: f64) -> f64 {
        if m1_msun >= self.m0_msun {
            return 0.0;
        }
        let (sig, slope) = self.lt.sigma_table().sigma_and_slope(m1_msun);
        let s1 = sig * sig;
        // |dS/dlnM| = 2 S |dln sigma/dln M|
        let ds_dlnm = 2.0 * s1 * slope.abs();
        self.m0_msun / m1_msun * self.first_crossing(s1, self.lt.w_of_z(z1)) * ds_dlnm
    }

    /// Fraction of M0 in progenitors more massive than M1 at z1:
    /// erfc[(w1 - w0) / sqrt(2 (S1 - S0))].
    pub fn mass_fraction_above(&self, m1_msun: f64, z1: f64) -> f64 {
        if m1_msun >= self.m0_msun {
            return 0.0;
        }
        let s1 = self.lt.sigma_table().sigma(m1_msun).powi(2);
        let dw = self.lt.w_of_z(z1) - self.w0;
        crate::special::erfc(dw / (2.0 * (s1 - self.s0)).sqrt())
    }

    /// Expected number of progenitors more massive than M1 at z1 (adaptive quadrature in ln M).
    pub fn n_above(&self, m1_msun: f64, z1: f64) -> f64 {
        if m1_msun >= self.m0_msun {
            return 0.0;
        }
        let a = m1_msun.ln();
        let b = self.m0_msun.ln();
        // the integrand vanishes exponentially as M -> M0; split at a few points for accuracy
        let mut total = 0.0;
        let cuts = [0.0, 0.5, 0.8, 0.9, 0.97, 0.995, 1.0];
        for k in 0..cuts.len() - 1 {
            let lo = a + (b - a) * cuts[k];
            let hi = a + (b - a) * cuts[k + 1];
            let r = quadrature::integrate(|x: f64| self.dn_dlnm1(x.exp(), z1), lo, hi, 1e-10);
            total += r.integral;
        }
        total
    }

    /// Probability that the main progenitor had at least half the mass M0 at z1, i.e. the
    /// cumulative distribution of half-mass formation redshift P(z_f > z1) (LC93 eq. 2.26).
    pub fn prob_formed_before(&self, z1: f64) -> f64 {
        let a = (0.5 * self.m0_msun).ln();
        let b = self.m0_msun.ln();
        let mut total = 0.0;
        let cuts = [0.0, 0.5, 0.8, 0.9, 0.97, 0.995, 1.0];
        for k in 0..cuts.len() - 1 {
            let lo = a + (b - a) * cuts[k];
            let hi = a + (b - a) * cuts[k + 1];
            total +=
                quadrature::integrate(|x: f64| self.dn_dlnm1(x.exp(), z1), lo, hi, 1e-11).integral;
        }
        total
    }

    /// Median half-mass formation redshift (bisection on `prob_formed_before` = 1/2).
    pub fn median_formation_redshift(&self, z0: f64) -> f64 {
        let (mut lo, mut hi) = (z0 + 1e-6, z0 + 20.0);
        for _ in 0..60 {
            let mid = 0.5 * (lo + hi);
            if self.prob_formed_before(mid) > 0.5 {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        0.5 * (lo + hi)
    }
}
