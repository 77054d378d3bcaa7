//! Friedmann background: E(z), cosmic time t(z) and its inverse, densities.
//!
//! E(z)^2 = Om (1+z)^3 + Or (1+z)^4 + Ok (1+z)^2 + Ode (1+z)^(3(1+w))   (Friedmann; e.g.
//! Peebles 1993, eq. 13.3). Age t(a) = (1/H0) \int_0^a da' / (a' E(a')).
//!
//! The age is integrated on a uniform grid in ln a from a = 1e-6 (where the closed form for
//! matter + radiation, H0 t = 2/(3 Om^2) [sqrt(Or + Om a)(Om a - 2 Or) + 2 Or^1.5], is exact
//! to ~1e-15) to a = 1, with the trapezoid rule corrected by end-point derivatives.

use crate::constants::{HUBBLE_TIME_GYR_FOR_H0_1, RHO_CRIT0_MSUN_KPC3_PER_H2};
use crate::error::CosmologyError;
use crate::interp::{cumulative_hermite, UniformHermite};

use super::CosmologyParams;

/// ln a of the first table node.
pub(crate) const LN_A_MIN: f64 = -13.815_510_557_964_274; // ln(1e-6)
/// Step of the ln a tables.
pub(crate) const D_LN_A: f64 = 0.004;

/// Energy densities and the age tables of one cosmology.
#[derive(Debug, Clone)]
pub struct Background {
    om: f64,
    or: f64,
    ok: f64,
    ode: f64,
    /// 3 (1 + w)
    de_exp: f64,
    hubble_time_gyr: f64,
    rho_crit0: f64,
    /// t(ln a), Gyr.
    age: UniformHermite,
    /// ln a (ln t).
    inverse: UniformHermite,
}

impl Background {
    pub fn new(p: &CosmologyParams) -> Result<Self, CosmologyError> {
        let or = p.omega_r();
        let mut b = Self {
            om: p.omega_m,
            or,
            ok: p.omega_k,
            ode: p.omega_de(),
            de_exp: 3.0 * (1.0 + p.w),
            hubble_time_gyr: HUBBLE_TIME_GYR_FOR_H0_1 / p.h0_km_s_mpc(),
            rho_crit0: RHO_CRIT0_MSUN_KPC3_PER_H2 * p.h * p.h,
            age: UniformHermite::new(0.0, 1.0, vec![0.0; 2], vec![0.0; 2]),
            inverse: UniformHermite::new(0.0, 1.0, vec![0.0; 2], vec![0.0; 2]),
        };
        let n = ((0.0 - LN_A_MIN) / D_LN_A).round() as usize + 1;
        let h = -LN_A_MIN / (n - 1) as f64;
        let mut f = Vec::with_capacity(n);
        let mut df = Vec::with_capacity(n);
        for i in 0..n {
            let ln_a = LN_A_MIN + h * i as f64;
            let e2 = b.e2_a(ln_a.exp());
            if e2 <= 0.0 || !e2.is_finite() {
                return Err(CosmologyError::NonPhysical {
                    z: (-ln_a).exp() - 1.0,
                });
            }
            let e = e2.sqrt();
            // d(1/E)/dln a = -(1/(2 E^3)) dE^2/dln a
            f.push(1.0 / e);
            df.push(-0.5 * b.de2_dlna(ln_a.exp()) / (e2 * e));
        }
        // Also reject a recollapse in the future half-e-fold (keeps z slightly < 0 usable).
        for k in 1..=50 {
            let a = 1.0 + 0.02 * k as f64;
            if b.e2_a(a) <= 0.0 {
                return Err(CosmologyError::NonPhysical { z: 1.0 / a - 1.0 });
            }
        }
        let t0 = b.early_age_h0(LN_A_MIN.exp());
        let cum = cumulative_hermite(&f, &df, h);
        let th = b.hubble_time_gyr;
        let t: Vec<f64> = cum.iter().map(|c| (t0 + c) * th).collect();
        let dt: Vec<f64> = f.iter().map(|v| v * th).collect();
        b.age = UniformHermite::new(LN_A_MIN, h, t.clone(), dt);

        // Inverse table: ln a as a function of ln t, uniform in ln t. Nodes found by Newton
        // iterations on the forward table.
        let lt0 = t[0].ln();
        let lt1 = t[n - 1].ln();
        let m = n;
        let hl = (lt1 - lt0) / (m - 1) as f64;
        let mut y = Vec::with_capacity(m);
        let mut dy = Vec::with_capacity(m);
        let mut ln_a = LN_A_MIN;
        for j in 0..m {
            let target = lt0 + hl * j as f64;
            for _ in 0..50 {
                let tt = b.age.eval(ln_a);
                let g = tt.ln() - target;
                // d ln t / d ln a = (dt/dln a) / t
                let slope = b.age.derivative(ln_a) / tt;
                let step = g / slope;
                ln_a = (ln_a - step).clamp(LN_A_MIN, 0.0);
                if step.abs() < 1e-14 {
                    break;
                }
            }
            let a = ln_a.exp();
            let tt = target.exp();
            y.push(ln_a);
            // d ln a / d ln t = t H(a) = t E(a) / t_H
            dy.push(tt * b.e2_a(a).sqrt() / th);
        }
        b.inverse = UniformHermite::new(lt0, hl, y, dy);
        Ok(b)
    }

    /// Age in units of 1/H0 for a -> 0 with matter + radiation only (exact closed form).
    fn early_age_h0(&self, a: f64) -> f64 {
        let (om, or) = (self.om, self.or);
        if or <= 0.0 {
            return 2.0 / 3.0 * a.powf(1.5) / om.sqrt();
        }
        // 2/(3 Om^2) [sqrt(Or + Om a)(Om a - 2 Or) + 2 Or^1.5]; cancellation is mild at
        // a = 1e-6 (terms ~1e-7 vs result ~1e-8), so use the series when Om a << Or.
        let x = om * a / or;
        if x < 1e-2 {
            // t = a^2/(2 sqrt(Or)) (1 - x/3 + 3x^2/16 - x^3/8 + ...), x = Om a / Or
            // (Taylor expansion of the closed form; next term O(x^4) < 1e-8).
            a * a / (2.0 * or.sqrt()) * (1.0 - x / 3.0 + 3.0 * x * x / 16.0 - x * x * x / 8.0)
        } else {
            2.0 / (3.0 * om * om)
                * ((or + om * a).sqrt() * (om * a - 2.0 * or) + 2.0 * or.powf(1.5))
        }
    }

    #[inline]
    pub(crate) fn e2_a(&self, a: f64) -> f64 {
        let ia = 1.0 / a;
        let ia2 = ia * ia;
        let de = if self.de_exp == 0.0 {
            self.ode
        } else {
            self.ode * ia.powf(self.de_exp)
        };
        self.om * ia2 * ia + self.or * ia2 * ia2 + self.ok * ia2 + de
    }

    /// E^2 of the same universe without radiation, its energy given to dark energy so that
    /// E(0) = 1 still holds (used by the growth factor; this is the convention of colossus
    /// 1.4.0, whose growth factor agrees with it to 1e-9, see tests/reference).
    #[inline]
    pub(crate) fn e2_a_no_rad(&self, a: f64) -> f64 {
        let ia = 1.0 / a;
        let ia2 = ia * ia;
        let ode = self.ode + self.or;
        let de = if self.de_exp == 0.0 {
            ode
        } else {
            ode * ia.powf(self.de_exp)
        };
        self.om * ia2 * ia + self.ok * ia2 + de
    }

    /// dE^2/dln a.
    #[inline]
    pub(crate) fn de2_dlna(&self, a: f64) -> f64 {
        let ia = 1.0 / a;
        let ia2 = ia * ia;
        let de = if self.de_exp == 0.0 {
            0.0
        } else {
            -self.de_exp * self.ode * ia.powf(self.de_exp)
        };
        -3.0 * self.om * ia2 * ia - 4.0 * self.or * ia2 * ia2 - 2.0 * self.ok * ia2 + de
    }

    /// dE^2/dln a of the radiation-free model of `e2_a_no_rad`.
    #[inline]
    pub(crate) fn de2_dlna_no_rad(&self, a: f64) -> f64 {
        let ia = 1.0 / a;
        let ia2 = ia * ia;
        let de = if self.de_exp == 0.0 {
            0.0
        } else {
            -self.de_exp * (self.ode + self.or) * ia.powf(self.de_exp)
        };
        -3.0 * self.om * ia2 * ia - 2.0 * self.ok * ia2 + de
    }

    pub(crate) fn omega_m0(&self) -> f64 {
        self.om
    }

    /// E(z) = H(z)/H0.
    #[inline]
    pub fn e_z(&self, z: f64) -> f64 {
        self.e2_a(1.0 / (1.0 + z)).sqrt()
    }

    /// 1/H0 in Gyr.
    pub fn hubble_time_gyr(&self) -> f64 {
        self.hubble_time_gyr
    }

    /// Omega_r today (photons + massless neutrinos; zero if radiation is off).
    pub fn omega_r0(&self) -> f64 {
        self.or
    }

    /// Omega_de today.
    pub fn omega_de0(&self) -> f64 {
        self.ode
    }

    /// Critical density today, physical M_sun/kpc^3.
    pub fn rho_crit0_msun_kpc3(&self) -> f64 {
        self.rho_crit0
    }

    /// Critical density at z, physical M_sun/kpc^3: rho_crit0 E(z)^2.
    pub fn rho_crit_msun_kpc3(&self, z: f64) -> f64 {
        self.rho_crit0 * self.e2_a(1.0 / (1.0 + z))
    }

    /// Omega_m(z).
    pub fn omega_m_z(&self, z: f64) -> f64 {
        let a = 1.0 / (1.0 + z);
        self.om / (a * a * a * self.e2_a(a))
    }

    /// Cosmic time at redshift z, Gyr (z > 1e6 uses the early-universe closed form).
    pub fn age_gyr(&self, z: f64) -> f64 {
        let ln_a = -(1.0 + z).ln();
        if ln_a < LN_A_MIN {
            return self.early_age_h0(ln_a.exp()) * self.hubble_time_gyr;
        }
        self.age.eval(ln_a.min(0.0))
            + if ln_a > 0.0 {
                // slightly in the future (round-off of z ~ -1e-12): linear extension
                ln_a * self.age.derivative(0.0)
            } else {
                0.0
            }
    }

    /// Cosmic time as a function of ln a (Gyr).
    pub fn age_gyr_ln_a(&self, ln_a: f64) -> f64 {
        self.age.eval(ln_a)
    }

    /// Redshift at cosmic time t (Gyr); clamps to z = 0 for t >= age today.
    pub fn z_at_age(&self, t_gyr: f64) -> f64 {
        let lt = t_gyr.ln();
        if lt >= self.inverse.x_max() {
            return 0.0;
        }
        if lt < self.inverse.x_min() {
            // radiation era: t ~ a^2/(2 sqrt(Or)) or matter: t ~ (2/3) a^1.5/sqrt(Om)
            let th = t_gyr / self.hubble_time_gyr;
            let a = if self.or > 0.0 {
                (2.0 * self.or.sqrt() * th).sqrt()
            } else {
                (1.5 * self.om.sqrt() * th).powf(2.0 / 3.0)
            };
            return 1.0 / a - 1.0;
        }
        (-self.inverse.eval(lt)).exp() - 1.0
    }
}
