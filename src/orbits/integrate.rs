//! Adaptive Runge–Kutta integration with error control: the Dormand & Prince 1980 (J. Comput.
//! Appl. Math. 6, 19) 5(4) pair, first-same-as-last, with the standard step-size controller
//! (Hairer, Norsett & Wanner 1993, Solving ODEs I, sec. II.4; factor 0.9, limits 0.2–5).
//! Fixed-size state, no allocation.

/// State of an orbit: position (kpc) and velocity (kpc/Gyr).
pub type State = [f64; 6];

/// Tolerances: error per step <= atol + rtol |y| in every component.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tolerances {
    pub rtol: f64,
    pub atol_pos_kpc: f64,
    pub atol_vel_kpc_gyr: f64,
}

impl Default for Tolerances {
    fn default() -> Self {
        Self {
            rtol: 1e-6,
            atol_pos_kpc: 1e-4,
            atol_vel_kpc_gyr: 1e-4,
        }
    }
}

// Dormand–Prince coefficients
const C2: f64 = 1.0 / 5.0;
const C3: f64 = 3.0 / 10.0;
const C4: f64 = 4.0 / 5.0;
const C5: f64 = 8.0 / 9.0;
const A21: f64 = 1.0 / 5.0;
const A31: f64 = 3.0 / 40.0;
const A32: f64 = 9.0 / 40.0;
const A41: f64 = 44.0 / 45.0;
const A42: f64 = -56.0 / 15.0;
const A43: f64 = 32.0 / 9.0;
const A51: f64 = 19372.0 / 6561.0;
const A52: f64 = -25360.0 / 2187.0;
const A53: f64 = 64448.0 / 6561.0;
const A54: f64 = -212.0 / 729.0;
const A61: f64 = 9017.0 / 3168.0;
const A62: f64 = -355.0 / 33.0;
const A63: f64 = 46732.0 / 5247.0;
const A64: f64 = 49.0 / 176.0;
const A65: f64 = -5103.0 / 18656.0;
const A71: f64 = 35.0 / 384.0;
const A73: f64 = 500.0 / 1113.0;
const A74: f64 = 125.0 / 192.0;
const A75: f64 = -2187.0 / 6784.0;
const A76: f64 = 11.0 / 84.0;
// error coefficients: b5 - b4
const E1: f64 = 71.0 / 57600.0;
const E3: f64 = -71.0 / 16695.0;
const E4: f64 = 71.0 / 1920.0;
const E5: f64 = -17253.0 / 339200.0;
const E6: f64 = 22.0 / 525.0;
const E7: f64 = -1.0 / 40.0;

// step-size control (Hairer, Norsett & Wanner 1993, sec. II.4, and the PI stabilisation of
// Gustafsson 1991 as used in Hairer's DOPRI5 code: beta = 0.04, exponent 0.2 - 0.75 beta)
const SAFETY: f64 = 0.9;
const BETA: f64 = 0.04;
const EXPO_P: f64 = 0.2 - 0.75 * BETA;
const LN_1EM4: f64 = -9.210_340_371_976_182;

/// y + h sum_j c_j k_j, with the number of stages known at compile time (unrolled).
#[inline(always)]
fn axpy<const N: usize>(y: &State, h: f64, c: [f64; N], k: [&State; N]) -> State {
    let mut out = *y;
    for i in 0..6 {
        let mut s = 0.0;
        for j in 0..N {
            s += c[j] * k[j][i];
        }
        out[i] += h * s;
    }
    out
}

/// An adaptive integrator that advances one accepted step at a time.
#[derive(Debug, Clone)]
pub struct Dopri5 {
    pub tol: Tolerances,
    /// Current step proposal (Gyr).
    pub h: f64,
    pub h_min: f64,
    pub h_max: f64,
    /// Derivative at the current point (first-same-as-last), if known.
    k1: Option<State>,
    /// ln of the error norm of the last accepted step (PI controller), at least ln 1e-4.
    ln_err_old: f64,
    pub rejected: u64,
    pub accepted: u64,
}

impl Dopri5 {
    pub fn new(tol: Tolerances, h0: f64, h_max: f64) -> Self {
        Self {
            tol,
            h: h0,
            h_min: 1e-12,
            h_max,
            k1: None,
            ln_err_old: LN_1EM4,
            rejected: 0,
            accepted: 0,
        }
    }

    /// Forget the stored derivative (call after changing the right-hand side, e.g. the mass).
    pub fn reset_derivative(&mut self) {
        self.k1 = None;
    }

    /// Take one accepted step from (t, y), at most to `t_stop`. Returns the new (t, y).
    pub fn step<F: FnMut(f64, &State) -> State>(
        &mut self,
        f: &mut F,
        t: f64,
        y: &State,
        t_stop: f64,
    ) -> (f64, State) {
        let k1 = match self.k1 {
            Some(k) => k,
            None => f(t, y),
        };
        let mut rejected_here = false;
        loop {
            let mut h = self.h.min(self.h_max).max(self.h_min);
            let last = t + h >= t_stop;
            if last {
                h = t_stop - t;
            }
            let k2 = f(t + C2 * h, &axpy(y, h, [A21], [&k1]));
            let k3 = f(t + C3 * h, &axpy(y, h, [A31, A32], [&k1, &k2]));
            let k4 = f(t + C4 * h, &axpy(y, h, [A41, A42, A43], [&k1, &k2, &k3]));
            let k5 = f(
                t + C5 * h,
                &axpy(y, h, [A51, A52, A53, A54], [&k1, &k2, &k3, &k4]),
            );
            let k6 = f(
                t + h,
                &axpy(y, h, [A61, A62, A63, A64, A65], [&k1, &k2, &k3, &k4, &k5]),
            );
            let y_new = axpy(y, h, [A71, A73, A74, A75, A76], [&k1, &k3, &k4, &k5, &k6]);
            let k7 = f(t + h, &y_new);
            // error estimate: RMS over components, each position component scaled by the
            // length of the position vector and each velocity component by the speed, so the
            // control does not depend on the orientation of the axes
            // (sqrt is monotone and correctly rounded: one root of the larger square)
            let mag = |a: usize| {
                let m0 = y[a] * y[a] + y[a + 1] * y[a + 1] + y[a + 2] * y[a + 2];
                let m1 =
                    y_new[a] * y_new[a] + y_new[a + 1] * y_new[a + 1] + y_new[a + 2] * y_new[a + 2];
                m0.max(m1).sqrt()
            };
            let sc_pos = self.tol.atol_pos_kpc + self.tol.rtol * mag(0);
            let sc_vel = self.tol.atol_vel_kpc_gyr + self.tol.rtol * mag(3);
            let mut err2 = 0.0;
            for i in 0..6 {
                let e = h
                    * (E1 * k1[i] + E3 * k3[i] + E4 * k4[i] + E5 * k5[i] + E6 * k6[i] + E7 * k7[i]);
                let sc = if i < 3 { sc_pos } else { sc_vel };
                err2 += (e / sc) * (e / sc);
            }
            let err = (err2 / 6.0).sqrt();
            // ln err: err^(-0.17) is the proportional part of the controller
            let ln_err = err.max(1e-10).ln();
            if err <= 1.0 || h <= self.h_min {
                // PI control: damp growth after a large error on the previous step
                // no growth right after a rejection (Hairer's DOPRI5)
                let fac_max = if rejected_here { 1.0 } else { 5.0 };
                let fac =
                    (SAFETY * (BETA * self.ln_err_old - EXPO_P * ln_err).exp()).clamp(0.1, fac_max);
                self.ln_err_old = ln_err.max(LN_1EM4);
                if !last {
                    self.h = h * fac;
                }
                self.k1 = Some(k7);
                self.accepted += 1;
                return (if last { t_stop } else { t + h }, y_new);
            }
            self.rejected += 1;
            rejected_here = true;
            self.h = h * (SAFETY * (-EXPO_P * ln_err).exp()).clamp(0.2, 1.0);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Harmonic oscillator x'' = -x: exact solution cos t; error controlled by rtol.
    #[test]
    fn harmonic_oscillator() {
        let mut f = |_t: f64, y: &State| [y[3], y[4], y[5], -y[0], -y[1], -y[2]];
        let tol = Tolerances {
            rtol: 1e-10,
            atol_pos_kpc: 1e-12,
            atol_vel_kpc_gyr: 1e-12,
        };
        let mut d = Dopri5::new(tol, 0.01, 1.0);
        let (mut t, mut y) = (0.0, [1.0, 0.0, 0.0, 0.0, 1.0, 0.0]);
        while t < 20.0 {
            (t, y) = d.step(&mut f, t, &y, 20.0);
        }
        assert!((y[0] - 20f64.cos()).abs() < 1e-8, "{}", y[0] - 20f64.cos());
        assert!((y[1] - 20f64.sin()).abs() < 1e-8);
        assert_eq!(t, 20.0);
    }
}
