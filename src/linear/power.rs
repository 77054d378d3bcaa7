//! The linear matter power spectrum at z = 0, normalised to sigma8:
//! P(k) = A k^n_s T(k)^2 [T_WDM/T_CDM]^2, with A fixed by sigma(R = 8 Mpc/h) = sigma8 for the
//! top-hat window. P in Mpc^3, k in 1/Mpc (comoving, no h).
//!
//! The spectrum is sampled once on a uniform grid in ln k, 1e-6 <= k <= 1e5 1/Mpc, step
//! 0.01; every sigma(R) is a weighted sum over that grid (see `variance`).

use std::f64::consts::PI;

use super::transfer::{Transfer, WarmDarkMatter};
use super::variance::{top_hat_w, LN_K_MAX, LN_K_MIN, LN_K_STEP};
use crate::interp::simpson_weights;

/// Normalised linear power spectrum at z = 0.
#[derive(Debug, Clone)]
pub struct PowerSpectrum {
    transfer: Transfer,
    wdm: Option<WarmDarkMatter>,
    n_s: f64,
    /// ln A: P(k) = exp(ln_a + ln_shape(k)).
    ln_amp: f64,
    /// Dimensionless Delta^2(k) = k^3 P / (2 pi^2) on the ln k grid.
    pub(crate) delta2: Vec<f64>,
}

impl PowerSpectrum {
    pub fn new(
        transfer: Transfer,
        wdm: Option<WarmDarkMatter>,
        n_s: f64,
        sigma8: f64,
        h: f64,
    ) -> Self {
        let n = grid_len();
        let mut delta2 = Vec::with_capacity(n);
        let mut s = Self {
            transfer,
            wdm,
            n_s,
            ln_amp: 0.0,
            delta2: Vec::new(),
        };
        for j in 0..n {
            let ln_k = LN_K_MIN + LN_K_STEP * j as f64;
            delta2.push((3.0 * ln_k + s.ln_shape(ln_k.exp())).exp() / (2.0 * PI * PI));
        }
        s.delta2 = delta2;
        let r8 = 8.0 / h;
        let s2 = s.sigma2_top_hat_direct(r8);
        let amp = sigma8 * sigma8 / s2;
        for v in &mut s.delta2 {
            *v *= amp;
        }
        s.ln_amp = amp.ln();
        s
    }

    fn ln_shape(&self, k_mpc: f64) -> f64 {
        let mut v = self.transfer.ln_shape(k_mpc, self.n_s);
        if let Some(w) = &self.wdm {
            v += 2.0 * w.suppression(k_mpc).max(1e-300).ln();
        }
        v
    }

    /// P(k) in Mpc^3 at z = 0, k in 1/Mpc.
    pub fn p_mpc3(&self, k_mpc: f64) -> f64 {
        (self.ln_amp + self.ln_shape(k_mpc)).exp()
    }

    /// Delta^2(k) = k^3 P(k) / (2 pi^2), dimensionless.
    pub fn delta2(&self, k_mpc: f64) -> f64 {
        k_mpc.powi(3) * self.p_mpc3(k_mpc) / (2.0 * PI * PI)
    }

    pub fn transfer(&self) -> &Transfer {
        &self.transfer
    }

    pub fn wdm(&self) -> Option<&WarmDarkMatter> {
        self.wdm.as_ref()
    }

    /// sigma^2 for a top-hat of comoving radius R (Mpc), summed directly over the k grid
    /// (Simpson in ln k, up to kR = 200). Slow path used for normalisation and checks.
    pub fn sigma2_top_hat_direct(&self, r_mpc: f64) -> f64 {
        let n = grid_len();
        let cut = (200.0f64 / r_mpc).ln().min(LN_K_MAX);
        let mut last = (((cut - LN_K_MIN) / LN_K_STEP).floor() as usize).min(n - 1);
        if last % 2 == 1 {
            last -= 1;
        }
        let w = simpson_weights(last + 1, LN_K_STEP);
        (0..=last)
            .map(|j| {
                let k = (LN_K_MIN + LN_K_STEP * j as f64).exp();
                let wt = top_hat_w(k * r_mpc);
                w[j] * self.delta2[j] * wt * wt
            })
            .sum()
    }

    /// sigma^2 for a sharp-k filter of radius R (Mpc): \int_0^{1/R} Delta^2 dln k (direct).
    pub fn sigma2_sharp_k_direct(&self, r_mpc: f64) -> f64 {
        let ln_kc = (1.0 / r_mpc).ln();
        let n = ((ln_kc - LN_K_MIN) / LN_K_STEP).floor() as usize;
        let n = n.min(grid_len() - 1);
        let mut last = n;
        if last % 2 == 1 {
            last -= 1;
        }
        let w = simpson_weights(last + 1, LN_K_STEP);
        let mut s: f64 = (0..=last).map(|j| w[j] * self.delta2[j]).sum();
        // remaining partial interval up to ln kc, trapezoid on the exact integrand
        let x0 = LN_K_MIN + LN_K_STEP * last as f64;
        let steps = 8;
        let hh = (ln_kc - x0) / steps as f64;
        if hh > 0.0 {
            for i in 0..steps {
                let a = x0 + hh * i as f64;
                let b = a + hh;
                s += 0.5 * hh * (self.delta2(a.exp()) + self.delta2(b.exp()));
            }
        }
        s
    }
}

/// Number of points of the ln k grid.
pub(crate) fn grid_len() -> usize {
    ((LN_K_MAX - LN_K_MIN) / LN_K_STEP).round() as usize + 1
}
