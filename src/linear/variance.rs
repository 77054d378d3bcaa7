//! sigma(M): the rms linear overdensity in a window of mass M, tabulated once per
//! cosmology, with its slope and its inverse M(sigma).
//!
//! sigma^2(R) = \int Delta^2(k) W^2(kR) dln k (e.g. Mo, van den Bosch & White 2010, eq. 6.7).
//! * Top-hat: W(x) = 3 (sin x - x cos x)/x^3, M = (4 pi/3) rho_m0 R^3 (comoving).
//! * Sharp-k: W = 1 for kR <= 1, M = (4 pi/3) rho_m0 (c R)^3 with c = 2.5 by default
//!   (Benson et al. 2013, MNRAS 428, 1774, sec. 2.2); the choice for warm dark matter.
//!
//! Table construction: the radii of the table are placed so that every k R lands on one fixed
//! lattice in ln x (step 0.01), so W^2 and its derivative are computed once and each sigma(R)
//! is a plain dot product (Simpson in ln k, truncated at kR = 200 where the neglected tail is
//! below 1e-9 of sigma^2). Nodes every 0.18 in ln M (12.8 per decade), 1e2–1e18 M_sun, with the
//! exact derivative dln sigma/dln M at each node; cubic Hermite in between.

use std::f64::consts::PI;

use serde::{Deserialize, Serialize};

use super::power::{grid_len, PowerSpectrum};
use crate::error::LinearError;
use crate::interp::UniformHermite;

pub(crate) const LN_K_STEP: f64 = 0.01;
pub(crate) const LN_K_MIN: f64 = -13.815_510_557_964_274; // ln 1e-6
pub(crate) const LN_K_MAX: f64 = LN_K_MIN + 2540.0 * LN_K_STEP; // k_max = 1.07e5 / Mpc
/// Stride of the radius lattice in units of the k step (0.06 in ln R, 0.18 in ln M).
const R_STRIDE: usize = 6;
/// Top-hat sums stop at kR = 200.
const X_CUT: f64 = 200.0;
/// Mass range of the table, M_sun.
pub const M_TABLE_MIN_MSUN: f64 = 1e2;
pub const M_TABLE_MAX_MSUN: f64 = 1e18;

/// Window function of sigma(M).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
pub enum Filter {
    /// Real-space top hat.
    #[default]
    #[serde(rename = "top-hat")]
    TopHat,
    /// Sharp cut in k; M = (4 pi / 3) rho_m (c R)^3.
    #[serde(rename = "sharp-k")]
    SharpK,
}

impl Filter {
    pub const NAMES: &'static [&'static str] = &["top-hat", "sharp-k"];

    pub fn parse(s: &str) -> Option<Self> {
        match s.trim().to_ascii_lowercase().as_str() {
            "top-hat" | "tophat" => Some(Self::TopHat),
            "sharp-k" | "sharpk" => Some(Self::SharpK),
            _ => None,
        }
    }
}

/// Top-hat window 3 (sin x - x cos x)/x^3 (series below x = 1e-2).
#[inline]
pub fn top_hat_w(x: f64) -> f64 {
    if x < 1e-2 {
        let x2 = x * x;
        1.0 - x2 / 10.0 + x2 * x2 / 280.0
    } else {
        3.0 * (x.sin() - x * x.cos()) / (x * x * x)
    }
}

/// dW/dx of the top hat: 3 [(x^2 - 3) sin x + 3 x cos x] / x^4.
#[inline]
pub fn top_hat_dw(x: f64) -> f64 {
    if x < 1e-2 {
        -x / 5.0 + x * x * x / 70.0
    } else {
        let (s, c) = x.sin_cos();
        3.0 * ((x * x - 3.0) * s + 3.0 * x * c) / (x * x * x * x)
    }
}

/// sigma(M) at z = 0 and its inverse.
#[derive(Debug, Clone)]
pub struct SigmaTable {
    filter: Filter,
    /// ln sigma as a function of ln M.
    forward: UniformHermite,
    /// ln M as a function of ln sigma.
    inverse: UniformHermite,
    /// (4 pi / 3) rho_m0 c^3 in M_sun / Mpc^3 (c = 1 for the top hat).
    mass_per_r3: f64,
}

impl SigmaTable {
    /// Build the table. `rho_m0_msun_mpc3` is the comoving mean matter density.
    pub fn new(
        power: &PowerSpectrum,
        filter: Filter,
        sharp_k_c: f64,
        rho_m0_msun_mpc3: f64,
    ) -> Result<Self, LinearError> {
        let c = match filter {
            Filter::TopHat => 1.0,
            Filter::SharpK => sharp_k_c,
        };
        let mass_per_r3 = 4.0 * PI / 3.0 * rho_m0_msun_mpc3 * c * c * c;
        let ln_r_of_m = |m: f64| ((m / mass_per_r3).ln()) / 3.0;
        let h = LN_K_STEP;
        let nk = grid_len();
        // smallest radius on the k lattice: ln R_0 = -(LN_K_MIN + J h)
        let ln_r_lo = ln_r_of_m(M_TABLE_MIN_MSUN);
        let ln_r_hi = ln_r_of_m(M_TABLE_MAX_MSUN);
        let big_j = (((-LN_K_MIN - ln_r_lo) / h).ceil() as usize).min(nk - 1);
        let ln_r0 = -(LN_K_MIN + big_j as f64 * h);
        let stride = R_STRIDE as f64 * h;
        let n_r = ((ln_r_hi - ln_r0) / stride).ceil() as usize + 1;
        let delta2 = &power.delta2;

        let mut ln_sig: Vec<f64> = Vec::with_capacity(n_r);
        let mut slope: Vec<f64> = Vec::with_capacity(n_r);
        match filter {
            Filter::TopHat => {
                // x lattice: ln x_n = LN_K_MIN + ln R_0 + n h
                let lnx0 = LN_K_MIN + ln_r0;
                let n_max = ((X_CUT.ln() - lnx0) / h).floor() as usize;
                let mut w2 = Vec::with_capacity(n_max + 1);
                let mut wv = Vec::with_capacity(n_max + 1);
                for n in 0..=n_max {
                    let x = (lnx0 + n as f64 * h).exp();
                    let w = top_hat_w(x);
                    w2.push(w * w);
                    wv.push(w * top_hat_dw(x) * x);
                }
                for i in 0..n_r {
                    let off = i * R_STRIDE;
                    let mut last = (nk - 1).min(n_max.saturating_sub(off));
                    if last % 2 == 1 {
                        last -= 1;
                    }
                    let (mut s2, mut ds2) = (0.0, 0.0);
                    for j in 0..=last {
                        let wt = if j == 0 || j == last {
                            1.0
                        } else if j % 2 == 1 {
                            4.0
                        } else {
                            2.0
                        };
                        let d = wt * delta2[j];
                        s2 += d * w2[j + off];
                        ds2 += d * wv[j + off];
                    }
                    s2 *= h / 3.0;
                    ds2 *= 2.0 * h / 3.0;
                    ln_sig.push(0.5 * s2.ln());
                    // dln sigma/dln M = (1/3) (1/2) dln sigma^2/dln R
                    slope.push(ds2 / (6.0 * s2));
                }
            }
            Filter::SharpK => {
                // cumulative \int Delta^2 dln k with end-point derivative corrections
                let mut d1 = vec![0.0; nk];
                for j in 1..nk - 1 {
                    d1[j] = (delta2[j + 1] - delta2[j - 1]) / (2.0 * h);
                }
                let cum = crate::interp::cumulative_hermite(delta2, &d1, h);
                // below k_min: Delta^2 ∝ k^(3+n_s) approximately -> add Delta^2(k_min)/(3+1)
                let tail = delta2[0] / 4.0;
                for i in 0..n_r {
                    let j = big_j as isize - (i * R_STRIDE) as isize;
                    if j < 1 {
                        return Err(LinearError::OutOfTable {
                            quantity: "sharp-k radius (Mpc)",
                            value: (ln_r0 + stride * i as f64).exp(),
                            min: LN_K_MAX.exp().recip(),
                            max: LN_K_MIN.exp().recip(),
                        });
                    }
                    let j = j as usize;
                    let s2 = cum[j] + tail;
                    ln_sig.push(0.5 * s2.ln());
                    slope.push(-delta2[j] / (6.0 * s2));
                }
            }
        }
        // With a truncated spectrum (warm dark matter) sigma(M) flattens at small M until
        // its increments are lost in round-off. Keep the part of the table where sigma is
        // strictly monotonic with |dln sigma/dln M| > 1e-6: below that, M(sigma) and the
        // excursion-set statistics are meaningless anyway.
        let mut start = n_r - 1;
        while start > 0
            && ln_sig[start - 1] > ln_sig[start]
            && slope[start - 1].abs() > 1e-6
            && ln_sig[start - 1].is_finite()
        {
            start -= 1;
        }
        if n_r - start < 20 {
            let ln_m = mass_per_r3.ln() + 3.0 * (ln_r0 + stride * start as f64);
            return Err(LinearError::NotMonotonic {
                mass_msun: ln_m.exp(),
            });
        }
        let ln_sig = ln_sig.split_off(start);
        let slope = slope.split_off(start);
        let ln_r0 = ln_r0 + stride * start as f64;
        let ln_m0 = mass_per_r3.ln() + 3.0 * ln_r0;
        let forward = UniformHermite::new(ln_m0, 3.0 * stride, ln_sig, slope);
        let inverse = build_inverse(&forward);
        Ok(Self {
            filter,
            forward,
            inverse,
            mass_per_r3,
        })
    }

    pub fn filter(&self) -> Filter {
        self.filter
    }

    /// Range of masses covered, M_sun.
    pub fn mass_range_msun(&self) -> (f64, f64) {
        (self.forward.x_min().exp(), self.forward.x_max().exp())
    }

    /// sigma(M) at z = 0. M in M_sun.
    #[inline]
    pub fn sigma(&self, m_msun: f64) -> f64 {
        self.forward.eval(m_msun.ln()).exp()
    }

    /// ln sigma as a function of ln M.
    #[inline]
    pub fn ln_sigma(&self, ln_m: f64) -> f64 {
        self.forward.eval(ln_m)
    }

    /// dln sigma / dln M at M (M_sun). Negative.
    #[inline]
    pub fn dln_sigma_dln_m(&self, m_msun: f64) -> f64 {
        self.forward.derivative(m_msun.ln())
    }

    /// (sigma, dln sigma/dln M) at M.
    #[inline]
    pub fn sigma_and_slope(&self, m_msun: f64) -> (f64, f64) {
        let (l, d) = self.forward.eval_with_derivative(m_msun.ln());
        (l.exp(), d)
    }

    /// (ln sigma, dln sigma/dln M) at ln M: the cheapest look-up, for inner loops.
    #[inline]
    pub fn ln_sigma_and_slope(&self, ln_m: f64) -> (f64, f64) {
        self.forward.eval_with_derivative(ln_m)
    }

    /// M (M_sun) with sigma(M) = sigma at z = 0. Fast path: the inverse table's guess
    /// polished by one Newton step on the forward table (inverts `sigma` to ~1e-12). Where
    /// sigma(M) is nearly flat (warm dark matter far below the half-mode mass) the guess is
    /// poor and a safeguarded search on the forward table is used instead.
    #[inline]
    pub fn mass_at_sigma(&self, sigma: f64) -> f64 {
        let ls = sigma.ln();
        let x0 = self.inverse.eval(ls);
        let slope = self.forward.derivative(x0);
        if slope.abs() > 1e-3 {
            let step = (ls - self.forward.eval(x0)) / slope;
            if step.abs() < 1e-2 {
                return (x0 + step).exp();
            }
        }
        self.mass_at_sigma_search(ls).exp()
    }

    /// ln M for ln sigma by bisection on the node values, then bisection with Newton steps
    /// inside the cell (robust for any monotone table).
    fn mass_at_sigma_search(&self, ls: f64) -> f64 {
        let (y, _) = self.forward.nodes();
        let n = y.len();
        if ls >= y[0] {
            return self.forward.x_min();
        }
        if ls <= y[n - 1] {
            return self.forward.x_max();
        }
        // y decreases with index: find i with y[i] >= ls > y[i+1]
        let i = y.partition_point(|&v| v >= ls).saturating_sub(1).min(n - 2);
        let dx = (self.forward.x_max() - self.forward.x_min()) / (n - 1) as f64;
        let (mut a, mut b) = (
            self.forward.x_min() + dx * i as f64,
            self.forward.x_min() + dx * (i + 1) as f64,
        );
        let mut x = 0.5 * (a + b);
        for _ in 0..100 {
            let f = self.forward.eval(x) - ls;
            if f > 0.0 {
                a = x;
            } else {
                b = x;
            }
            if b - a < 1e-13 || f == 0.0 {
                break;
            }
            let d = self.forward.derivative(x);
            let xn = x - f / d;
            x = if d < 0.0 && xn > a && xn < b {
                xn
            } else {
                0.5 * (a + b)
            };
        }
        x
    }

    /// Comoving radius (Mpc) of the window holding mass M (top hat: Lagrangian radius;
    /// sharp-k: R = (3M / 4 pi rho)^(1/3) / c).
    pub fn radius_mpc(&self, m_msun: f64) -> f64 {
        (m_msun / self.mass_per_r3).cbrt()
    }

    /// Whether M lies inside the table.
    pub fn contains(&self, m_msun: f64) -> bool {
        self.forward.contains(m_msun.ln())
    }
}

/// Inverse table ln M(ln sigma) on a uniform ln sigma grid, with slopes limited so that the
/// interpolant stays monotonic (Fritsch & Carlson 1980, SIAM J. Numer. Anal. 17, 238).
fn build_inverse(fwd: &UniformHermite) -> UniformHermite {
    let (ys, _) = fwd.nodes();
    let (s_hi, s_lo) = (ys[0], ys[ys.len() - 1]); // ln sigma decreases with M
    let n = 2001;
    let hs = (s_hi - s_lo) / (n - 1) as f64;
    let mut xm = Vec::with_capacity(n);
    let x_lo = fwd.x_min();
    let x_hi = fwd.x_max();
    for i in 0..n {
        let target = s_lo + hs * i as f64;
        // bisection on the monotone forward interpolant, then Newton polish
        let (mut a, mut b) = (x_lo, x_hi);
        for _ in 0..60 {
            let mid = 0.5 * (a + b);
            if fwd.eval(mid) > target {
                a = mid;
            } else {
                b = mid;
            }
            if b - a < 1e-13 {
                break;
            }
        }
        xm.push(0.5 * (a + b));
    }
    let mut d = Vec::with_capacity(n);
    for i in 0..n {
        let s = 1.0 / fwd.derivative(xm[i]);
        let left = if i > 0 {
            (xm[i] - xm[i - 1]) / hs
        } else {
            f64::INFINITY
        };
        let right = if i + 1 < n {
            (xm[i + 1] - xm[i]) / hs
        } else {
            f64::INFINITY
        };
        // all secants are negative (ln M decreases as ln sigma grows); limit |s|
        let lim = 3.0 * left.abs().min(right.abs());
        d.push(if s.abs() > lim { lim * s.signum() } else { s });
    }
    UniformHermite::new(s_lo, hs, xm, d)
}
