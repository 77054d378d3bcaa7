//! The excursion-set clock w(z) = delta_c(z) / D(z) and its inverse.
//!
//! Merger trees step in w (it grows toward the past); outputs and merger times are converted
//! back to redshift and cosmic time with this table: ln a as a function of ln w on a uniform
//! grid, cubic Hermite with exact node slopes, covering 0 <= z <= 999.

use crate::cosmology::Cosmology;
use crate::interp::UniformHermite;

use super::collapse::{delta_c, DeltaCModel};

/// Highest redshift the clock covers.
pub const CLOCK_Z_MAX: f64 = 999.0;

#[derive(Debug, Clone)]
pub struct Clock {
    model: DeltaCModel,
    /// ln a (ln w)
    inverse: UniformHermite,
    w0: f64,
}

impl Clock {
    pub fn new(cosmo: &Cosmology, model: DeltaCModel) -> Self {
        let w_of_ln_a = |ln_a: f64| {
            let z = (-ln_a).exp() - 1.0;
            delta_c(model, cosmo, z.max(0.0)) / cosmo.growth_table().d_ln_a(ln_a)
        };
        // d ln w / d ln a = d ln delta_c / d ln a - d ln D / d ln a
        let dlnw_dlna = |ln_a: f64| {
            let z = ((-ln_a).exp() - 1.0).max(0.0);
            let g = cosmo.growth_table();
            let dlnd = g.dd_dln_a(ln_a) / g.d_ln_a(ln_a);
            let dlndc = match model {
                DeltaCModel::Constant => 0.0,
                DeltaCModel::Nfw97 => {
                    // Omega_m(a) = Om a^-3 / E^2: dln Om/dln a = -3 - dln E^2/dln a
                    let a = ln_a.exp();
                    let e2 = cosmo.e_z(z).powi(2);
                    let de2 = (cosmo.e_z(1.0 / (a * (1.0 + 1e-6)) - 1.0).powi(2)
                        - cosmo.e_z(1.0 / (a * (1.0 - 1e-6)) - 1.0).powi(2))
                        / (2e-6);
                    0.0055 * (-3.0 - de2 / e2)
                }
            };
            dlndc - dlnd
        };
        let ln_a_min = -(1.0 + CLOCK_Z_MAX).ln();
        let w0 = w_of_ln_a(0.0);
        let w1 = w_of_ln_a(ln_a_min);
        let (lw0, lw1) = (w0.ln(), w1.ln());
        let n = 4001;
        let h = (lw1 - lw0) / (n - 1) as f64;
        let mut y = Vec::with_capacity(n);
        let mut dy = Vec::with_capacity(n);
        let mut ln_a = 0.0f64;
        for i in 0..n {
            let target = lw0 + h * i as f64;
            // Newton in ln a (w is monotonic in a), started from the previous node
            for _ in 0..60 {
                let g = w_of_ln_a(ln_a).ln() - target;
                let s = dlnw_dlna(ln_a);
                let step = g / s;
                ln_a = (ln_a - step).clamp(ln_a_min, 0.0);
                if step.abs() < 1e-13 {
                    break;
                }
            }
            y.push(ln_a);
            dy.push(1.0 / dlnw_dlna(ln_a));
        }
        Self {
            model,
            inverse: UniformHermite::new(lw0, h, y, dy),
            w0,
        }
    }

    pub fn model(&self) -> DeltaCModel {
        self.model
    }

    /// w today.
    pub fn w_today(&self) -> f64 {
        self.w0
    }

    /// Largest w covered (z = 999).
    pub fn w_max(&self) -> f64 {
        self.inverse.x_max().exp()
    }

    /// ln a at clock value w.
    #[inline]
    pub fn ln_a(&self, w: f64) -> f64 {
        self.inverse.eval(w.ln()).min(0.0)
    }

    /// Redshift at clock value w.
    #[inline]
    pub fn z(&self, w: f64) -> f64 {
        ((-self.ln_a(w)).exp() - 1.0).max(0.0)
    }
}
