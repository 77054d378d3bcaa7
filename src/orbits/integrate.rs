//! Adaptive Runge–Kutta integration with error control: the Dormand & Prince 1980 (J. Comput.
//! Appl. Math. 6, 19) 5(4) pair, first-same-as-last, for any right-hand side (orbits with
//! dynamical friction), and the Runge–Kutta–Nyström 6(4) pair of Dormand, El-Mikkawy & Prince
//! 1987 (IMA J. Numer. Anal. 7, 235) for accelerations that depend on time and position only.
//! Both use the step-size controller of Hairer, Norsett & Wanner 1993 (Solving ODEs I,
//! sec. II.4; factor 0.9, a change of the step by a factor 0.1–5) with the PI stabilisation of Gustafsson 1991, and
//! scale each proposal by the change of |x|/|v| over the step. Fixed-size state, no
//! allocation.

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

/// The next attempt after a step whose error is not finite (a right-hand side that returned
/// NaN or infinity somewhere along it): a fifth of the step, down to the smallest step; a
/// non-finite error at the smallest step is a bug in the right-hand side and stops the run
/// with a message instead of looping.
fn shrink_after_non_finite(h: f64, h_min: f64, t: f64) -> f64 {
    assert!(
        h > h_min,
        "orbit integration: the right-hand side is not finite near t = {t} Gyr even at the \
         smallest step {h_min:e} Gyr"
    );
    (0.2 * h).max(h_min)
}

/// (|x1|/|v1|) / (|x0|/|v0|) from squared lengths; 1 where it is not defined (a particle at
/// the origin or at rest).
#[inline(always)]
fn time_scale_ratio(x0_sq: f64, v0_sq: f64, x1_sq: f64, v1_sq: f64) -> f64 {
    let q = (x1_sq * v0_sq) / (x0_sq * v1_sq);
    if q.is_finite() && q > 0.0 {
        q.sqrt()
    } else {
        1.0
    }
}

/// Step-size control shared by both integrators: the step limits, the current proposal, the
/// PI controller's memory and the counts of accepted and rejected attempts.
#[derive(Debug, Clone)]
pub struct StepControl {
    pub tol: Tolerances,
    /// Current step proposal (Gyr).
    pub h: f64,
    pub h_min: f64,
    pub h_max: f64,
    /// ln of the error norm of the last accepted step (PI controller), at least ln 1e-4.
    ln_err_old: f64,
    pub rejected: u64,
    pub accepted: u64,
}

impl StepControl {
    fn new(tol: Tolerances, h0: f64, h_max: f64) -> Self {
        Self {
            tol,
            h: h0,
            h_min: 1e-12,
            h_max,
            ln_err_old: LN_1EM4,
            rejected: 0,
            accepted: 0,
        }
    }

    /// The step to attempt from t, and whether it ends at `t_stop`.
    #[inline(always)]
    fn attempt(&self, t: f64, t_stop: f64) -> (f64, bool) {
        let h = self.h.min(self.h_max).max(self.h_min);
        if t + h >= t_stop {
            (t_stop - t, true)
        } else {
            (h, false)
        }
    }

    /// Judge an attempt of step h from t with error norm `err`: true if it is accepted. On a
    /// rejection the next proposal is set; on an acceptance `accepted` must follow.
    #[inline(always)]
    fn judge(&mut self, err: f64, h: f64, t: f64) -> Option<f64> {
        if !err.is_finite() {
            self.rejected += 1;
            self.h = shrink_after_non_finite(h, self.h_min, t);
            return None;
        }
        // ln err: err^(-0.17) is the proportional part of the controller
        let ln_err = err.max(1e-10).ln();
        if err <= 1.0 || h <= self.h_min {
            return Some(ln_err);
        }
        self.rejected += 1;
        self.h = h * (SAFETY * (-EXPO_P * ln_err).exp()).clamp(0.2, 1.0);
        None
    }

    /// After an accepted step of size h from y to y_new with ln error `ln_err`: the next
    /// proposal. PI control damps growth after a large error on the previous step, and there
    /// is no growth right after a rejection (Hairer's DOPRI5). The proposal is also scaled by
    /// the change of the local time-scale |x|/|v| over the step: on the way in to pericentre
    /// the error grows quickly, and a proposal from the last error alone is rejected about
    /// one time in four. This anticipates it, as integrating in a time rescaled by |x|/|v|
    /// would (Sundman 1912); the error is still controlled on every step.
    #[inline(always)]
    fn accepted(
        &mut self,
        h: f64,
        ln_err: f64,
        rejected_here: bool,
        last: bool,
        y: &State,
        y_new: &State,
    ) {
        let fac_max = if rejected_here { 1.0 } else { 5.0 };
        let m0x = y[0] * y[0] + y[1] * y[1] + y[2] * y[2];
        let m1x = y_new[0] * y_new[0] + y_new[1] * y_new[1] + y_new[2] * y_new[2];
        let m0v = y[3] * y[3] + y[4] * y[4] + y[5] * y[5];
        let m1v = y_new[3] * y_new[3] + y_new[4] * y_new[4] + y_new[5] * y_new[5];
        let tau_ratio = time_scale_ratio(m0x, m0v, m1x, m1v);
        let fac = (SAFETY * (BETA * self.ln_err_old - EXPO_P * ln_err).exp() * tau_ratio)
            .clamp(0.1, fac_max);
        self.ln_err_old = ln_err.max(LN_1EM4);
        if !last {
            self.h = h * fac;
        }
        self.accepted += 1;
    }
}

/// An adaptive integrator that advances one accepted step at a time. The state is an orbit's
/// position and velocity: the error norm and the step proposals use their lengths.
#[derive(Debug, Clone)]
pub struct Dopri5 {
    pub ctl: StepControl,
    /// Derivative at the current point (first-same-as-last), if known.
    k1: Option<State>,
}

impl Dopri5 {
    pub fn new(tol: Tolerances, h0: f64, h_max: f64) -> Self {
        Self {
            ctl: StepControl::new(tol, h0, h_max),
            k1: None,
        }
    }

    /// Forget the stored derivative (call after changing the right-hand side, e.g. the mass).
    pub fn reset_derivative(&mut self) {
        self.k1 = None;
    }

    /// The stored derivative at the current point (after a step: at its end), if any.
    pub fn derivative(&self) -> Option<State> {
        self.k1
    }

    /// Add `factor` times `part` to components `first..first + 3` of the stored derivative
    /// (for a right-hand side that changed by a known amount). False if none is stored.
    pub fn add_to_derivative(&mut self, first: usize, part: &[f64; 3], factor: f64) -> bool {
        match &mut self.k1 {
            Some(k) => {
                for i in 0..3 {
                    k[first + i] += factor * part[i];
                }
                true
            }
            None => false,
        }
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
            let (h, last) = self.ctl.attempt(t, t_stop);
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
            let sc_pos = self.ctl.tol.atol_pos_kpc + self.ctl.tol.rtol * mag(0);
            let sc_vel = self.ctl.tol.atol_vel_kpc_gyr + self.ctl.tol.rtol * mag(3);
            let mut err2 = 0.0;
            for i in 0..6 {
                let e = h
                    * (E1 * k1[i] + E3 * k3[i] + E4 * k4[i] + E5 * k5[i] + E6 * k6[i] + E7 * k7[i]);
                let sc = if i < 3 { sc_pos } else { sc_vel };
                err2 += (e / sc) * (e / sc);
            }
            let err = (err2 / 6.0).sqrt();
            match self.ctl.judge(err, h, t) {
                Some(ln_err) => {
                    self.ctl.accepted(h, ln_err, rejected_here, last, y, &y_new);
                    self.k1 = Some(k7);
                    return (if last { t_stop } else { t + h }, y_new);
                }
                None => rejected_here = true,
            }
        }
    }
}

// Runge–Kutta–Nyström 6(4) pair "RKN6(4)6FM" of Dormand, El-Mikkawy & Prince 1987 (IMA J.
// Numer. Anal. 7, 235), for x'' = a(t, x): stage positions X_i = x + c_i h v + h^2 sum_j
// a_ij k_j, x' = x + h v + h^2 sum_i b_i k_i, v' = v + h sum_i bp_i k_i. The last stage sits
// at the new position (a_6j = b_j), so its acceleration starts the next step.
const N_C2: f64 = 1.0 / 10.0;
const N_C3: f64 = 3.0 / 10.0;
const N_C4: f64 = 7.0 / 10.0;
const N_C5: f64 = 17.0 / 25.0;
const N_A21: f64 = 1.0 / 200.0;
const N_A31: f64 = -1.0 / 2200.0;
const N_A32: f64 = 1.0 / 22.0;
const N_A41: f64 = 637.0 / 6600.0;
const N_A42: f64 = -7.0 / 110.0;
const N_A43: f64 = 7.0 / 33.0;
const N_A51: f64 = 225437.0 / 1968750.0;
const N_A52: f64 = -30073.0 / 281250.0;
const N_A53: f64 = 65569.0 / 281250.0;
const N_A54: f64 = -9367.0 / 984375.0;
const N_B1: f64 = 151.0 / 2142.0;
const N_B2: f64 = 5.0 / 116.0;
const N_B3: f64 = 385.0 / 1368.0;
const N_B4: f64 = 55.0 / 168.0;
const N_B5: f64 = -6250.0 / 28101.0;
const N_BP1: f64 = 151.0 / 2142.0;
const N_BP2: f64 = 25.0 / 522.0;
const N_BP3: f64 = 275.0 / 684.0;
const N_BP4: f64 = 275.0 / 252.0;
const N_BP5: f64 = -78125.0 / 112404.0;
const N_BP6: f64 = 1.0 / 12.0;
// the embedded fourth-order pair (position and velocity weights)
const N_BH: [f64; 5] = [
    1349.0 / 157500.0,
    7873.0 / 50000.0,
    192199.0 / 900000.0,
    521683.0 / 2100000.0,
    -16.0 / 125.0,
];
const N_BPH: [f64; 5] = [
    1349.0 / 157500.0,
    7873.0 / 45000.0,
    27457.0 / 90000.0,
    521683.0 / 630000.0,
    -2.0 / 5.0,
];

/// Acceleration of a position (3-vector).
pub type Vec3 = [f64; 3];

#[inline(always)]
fn nystrom_stage<const N: usize>(y: &State, c: f64, h: f64, a: [f64; N], k: [&Vec3; N]) -> Vec3 {
    let h2 = h * h;
    let mut out = [0.0; 3];
    for i in 0..3 {
        let mut s = 0.0;
        for j in 0..N {
            s += a[j] * k[j][i];
        }
        out[i] = y[i] + c * h * y[i + 3] + h2 * s;
    }
    out
}

/// An adaptive Runge–Kutta–Nyström integrator for accelerations that depend on time and
/// position only (no friction): five accelerations per accepted step, four per rejected one,
/// sixth order with a fourth-order error estimate. The error norm and step-size controller of
/// `Dopri5` (velocities measured against their speed at the start of the step).
#[derive(Debug, Clone)]
pub struct Rkn6 {
    pub ctl: StepControl,
    /// Acceleration at the current point (first-same-as-last), if known.
    k1: Option<Vec3>,
}

impl Rkn6 {
    pub fn new(tol: Tolerances, h0: f64, h_max: f64) -> Self {
        Self {
            ctl: StepControl::new(tol, h0, h_max),
            k1: None,
        }
    }

    /// Forget the stored acceleration.
    pub fn reset_derivative(&mut self) {
        self.k1 = None;
    }

    /// The stored acceleration at the current point (after a step: at its end), if any.
    pub fn derivative(&self) -> Option<Vec3> {
        self.k1
    }

    /// Take one accepted step from (t, y) (y = position and velocity), at most to `t_stop`.
    pub fn step<F: FnMut(f64, &Vec3) -> Vec3>(
        &mut self,
        f: &mut F,
        t: f64,
        y: &State,
        t_stop: f64,
    ) -> (f64, State) {
        let k1 = match self.k1 {
            Some(k) => k,
            None => f(t, &[y[0], y[1], y[2]]),
        };
        let mut rejected_here = false;
        loop {
            let (h, last) = self.ctl.attempt(t, t_stop);
            let k2 = f(t + N_C2 * h, &nystrom_stage(y, N_C2, h, [N_A21], [&k1]));
            let k3 = f(
                t + N_C3 * h,
                &nystrom_stage(y, N_C3, h, [N_A31, N_A32], [&k1, &k2]),
            );
            let k4 = f(
                t + N_C4 * h,
                &nystrom_stage(y, N_C4, h, [N_A41, N_A42, N_A43], [&k1, &k2, &k3]),
            );
            let k5 = f(
                t + N_C5 * h,
                &nystrom_stage(
                    y,
                    N_C5,
                    h,
                    [N_A51, N_A52, N_A53, N_A54],
                    [&k1, &k2, &k3, &k4],
                ),
            );
            let ks = [&k1, &k2, &k3, &k4, &k5];
            let b = [N_B1, N_B2, N_B3, N_B4, N_B5];
            let bp = [N_BP1, N_BP2, N_BP3, N_BP4, N_BP5];
            let h2 = h * h;
            let mut y_new = *y;
            let mut err_x = [0.0; 3];
            let mut err_v = [0.0; 3];
            for i in 0..3 {
                let (mut s, mut ex, mut ev) = (0.0, 0.0, 0.0);
                for j in 0..5 {
                    s += b[j] * ks[j][i];
                    ex += (b[j] - N_BH[j]) * ks[j][i];
                }
                for j in 0..5 {
                    ev += (bp[j] - N_BPH[j]) * ks[j][i];
                }
                y_new[i] = y[i] + h * y[i + 3] + h2 * s;
                err_x[i] = h2 * ex;
                err_v[i] = h * ev;
            }
            // the error norm of `Dopri5`, except that velocities are measured against |v| at
            // the start of the step only (the new velocity is computed once the step is
            // accepted): slightly stricter on the way in to pericentre
            let m0x = y[0] * y[0] + y[1] * y[1] + y[2] * y[2];
            let m1x = y_new[0] * y_new[0] + y_new[1] * y_new[1] + y_new[2] * y_new[2];
            let m0v = y[3] * y[3] + y[4] * y[4] + y[5] * y[5];
            let sc_pos = self.ctl.tol.atol_pos_kpc + self.ctl.tol.rtol * m0x.max(m1x).sqrt();
            let sc_vel = self.ctl.tol.atol_vel_kpc_gyr + self.ctl.tol.rtol * m0v.sqrt();
            let mut err2 = 0.0;
            for i in 0..3 {
                err2 += (err_x[i] / sc_pos) * (err_x[i] / sc_pos)
                    + (err_v[i] / sc_vel) * (err_v[i] / sc_vel);
            }
            let err = (err2 / 6.0).sqrt();
            match self.ctl.judge(err, h, t) {
                Some(ln_err) => {
                    let t_new = if last { t_stop } else { t + h };
                    let k6 = f(t_new, &[y_new[0], y_new[1], y_new[2]]);
                    for i in 0..3 {
                        y_new[i + 3] = y[i + 3]
                            + h * (N_BP1 * k1[i]
                                + N_BP2 * k2[i]
                                + N_BP3 * k3[i]
                                + N_BP4 * k4[i]
                                + N_BP5 * k5[i]
                                + N_BP6 * k6[i]);
                    }
                    self.ctl.accepted(h, ln_err, rejected_here, last, y, &y_new);
                    self.k1 = Some(k6);
                    return (t_new, y_new);
                }
                None => rejected_here = true,
            }
        }
    }

    /// One accepted step with a velocity-dependent acceleration `kick` (dynamical friction)
    /// added by Strang splitting (Strang 1968, SIAM J. Numer. Anal. 5, 506): half a kick
    /// v += (h/2) a_k at the start, the Nyström step under `f` (which sets and controls the
    /// step), half a kick at the end. `kick0` is a_k at the start (the caller keeps the last
    /// step's end value, first-same-as-last). Returns the new (t, y) and a_k at the end of the
    /// step, at the velocity after the closing half kick. The opening half kick is a
    /// forward-Euler step of the friction, the closing one a backward-Euler step (its adjoint,
    /// with the implicit velocity predicted by one forward step), so the step is symmetric
    /// and the splitting second order in h (`friction_splitting_is_second_order`; until
    /// 2026-12-04 both were forward steps with one shared value, first order: merger times
    /// with the central came out 1-4% early at rtol 1e-4, orbit review); the error control
    /// measures the gravitational drift only.
    pub fn step_kicked<F, K>(
        &mut self,
        f: &mut F,
        kick: &mut K,
        kick0: Vec3,
        t: f64,
        y: &State,
        t_stop: f64,
    ) -> (f64, State, Vec3)
    where
        F: FnMut(f64, &Vec3) -> Vec3,
        K: FnMut(f64, &State) -> Vec3,
    {
        let k1 = match self.k1 {
            Some(k) => k,
            None => f(t, &[y[0], y[1], y[2]]),
        };
        let mut rejected_here = false;
        loop {
            let (h, last) = self.ctl.attempt(t, t_stop);
            let mut yh = *y;
            for i in 0..3 {
                yh[i + 3] += 0.5 * h * kick0[i];
            }
            let y = &yh;
            let k2 = f(t + N_C2 * h, &nystrom_stage(y, N_C2, h, [N_A21], [&k1]));
            let k3 = f(
                t + N_C3 * h,
                &nystrom_stage(y, N_C3, h, [N_A31, N_A32], [&k1, &k2]),
            );
            let k4 = f(
                t + N_C4 * h,
                &nystrom_stage(y, N_C4, h, [N_A41, N_A42, N_A43], [&k1, &k2, &k3]),
            );
            let k5 = f(
                t + N_C5 * h,
                &nystrom_stage(
                    y,
                    N_C5,
                    h,
                    [N_A51, N_A52, N_A53, N_A54],
                    [&k1, &k2, &k3, &k4],
                ),
            );
            let ks = [&k1, &k2, &k3, &k4, &k5];
            let b = [N_B1, N_B2, N_B3, N_B4, N_B5];
            let bp = [N_BP1, N_BP2, N_BP3, N_BP4, N_BP5];
            let h2 = h * h;
            let mut y_new = *y;
            let mut err_x = [0.0; 3];
            let mut err_v = [0.0; 3];
            for i in 0..3 {
                let (mut s, mut ex, mut ev) = (0.0, 0.0, 0.0);
                for j in 0..5 {
                    s += b[j] * ks[j][i];
                    ex += (b[j] - N_BH[j]) * ks[j][i];
                }
                for j in 0..5 {
                    ev += (bp[j] - N_BPH[j]) * ks[j][i];
                }
                y_new[i] = y[i] + h * y[i + 3] + h2 * s;
                err_x[i] = h2 * ex;
                err_v[i] = h * ev;
            }
            let m0x = y[0] * y[0] + y[1] * y[1] + y[2] * y[2];
            let m1x = y_new[0] * y_new[0] + y_new[1] * y_new[1] + y_new[2] * y_new[2];
            let m0v = y[3] * y[3] + y[4] * y[4] + y[5] * y[5];
            let sc_pos = self.ctl.tol.atol_pos_kpc + self.ctl.tol.rtol * m0x.max(m1x).sqrt();
            let sc_vel = self.ctl.tol.atol_vel_kpc_gyr + self.ctl.tol.rtol * m0v.sqrt();
            let mut err2 = 0.0;
            for i in 0..3 {
                err2 += (err_x[i] / sc_pos) * (err_x[i] / sc_pos)
                    + (err_v[i] / sc_vel) * (err_v[i] / sc_vel);
            }
            let err = (err2 / 6.0).sqrt();
            match self.ctl.judge(err, h, t) {
                Some(ln_err) => {
                    let t_new = if last { t_stop } else { t + h };
                    let k6 = f(t_new, &[y_new[0], y_new[1], y_new[2]]);
                    for i in 0..3 {
                        y_new[i + 3] = y[i + 3]
                            + h * (N_BP1 * k1[i]
                                + N_BP2 * k2[i]
                                + N_BP3 * k3[i]
                                + N_BP4 * k4[i]
                                + N_BP5 * k5[i]
                                + N_BP6 * k6[i]);
                    }
                    // the closing half kick as a backward-Euler step, v1 = v + (h/2) a(v1),
                    // its implicit velocity predicted by a forward step (error O(h^3)): the
                    // adjoint of the opening forward-Euler half kick, so that the step is
                    // symmetric and the splitting second order; a(v1) is also the next
                    // step's opening kick (one extra evaluation per step)
                    let kick_e = kick(t_new, &y_new);
                    let mut y_pred = y_new;
                    for i in 0..3 {
                        y_pred[i + 3] += 0.5 * h * kick_e[i];
                    }
                    let kick1 = kick(t_new, &y_pred);
                    for i in 0..3 {
                        y_new[i + 3] += 0.5 * h * kick1[i];
                    }
                    self.ctl.accepted(h, ln_err, rejected_here, last, y, &y_new);
                    self.k1 = Some(k6);
                    return (t_new, y_new, kick1);
                }
                None => rejected_here = true,
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The Nyström integrator held at steps of h: tolerances so loose that every step is
    /// accepted, and h its smallest and largest step.
    fn fixed_step_nystrom(h: f64) -> Rkn6 {
        let loose = Tolerances {
            rtol: 1e3,
            atol_pos_kpc: 1e3,
            atol_vel_kpc_gyr: 1e3,
        };
        let mut d = Rkn6::new(loose, h, h);
        d.ctl.h_min = h;
        d
    }

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

    /// Harmonic oscillator x'' = -x with the Nystrom pair: exact solution cos t.
    #[test]
    fn nystrom_harmonic_oscillator() {
        let mut f = |_t: f64, x: &Vec3| [-x[0], -x[1], -x[2]];
        let tol = Tolerances {
            rtol: 1e-10,
            atol_pos_kpc: 1e-12,
            atol_vel_kpc_gyr: 1e-12,
        };
        let mut d = Rkn6::new(tol, 0.01, 1.0);
        let (mut t, mut y) = (0.0, [1.0, 0.0, 0.0, 0.0, 1.0, 0.0]);
        while t < 20.0 {
            (t, y) = d.step(&mut f, t, &y, 20.0);
        }
        assert!((y[0] - 20f64.cos()).abs() < 1e-8, "{}", y[0] - 20f64.cos());
        assert!((y[1] - 20f64.sin()).abs() < 1e-8);
        assert!((y[3] + 20f64.sin()).abs() < 1e-8);
        assert_eq!(t, 20.0);
    }

    /// Kepler orbit of eccentricity 0.5 (GM = 1, a = 1) against the analytic solution through
    /// Kepler's equation, with fixed steps: halving the step divides the error by 2^6 for the
    /// sixth-order Nystrom pair (Dormand, El-Mikkawy & Prince 1987) and by 2^5 for
    /// Dormand & Prince 1980. Accepted range: an order within 0.3 of the nominal one.
    #[test]
    fn convergence_orders_on_a_kepler_orbit() {
        let e: f64 = 0.5;
        // start at pericentre: r = a(1 - e), v = sqrt((1 + e) / (1 - e))
        let y0 = [1.0 - e, 0.0, 0.0, 0.0, ((1.0 + e) / (1.0 - e)).sqrt(), 0.0];
        let t_end: f64 = 2.0;
        let exact = {
            // mean anomaly M = t (n = 1); E - e sin E = M
            let mut ea = t_end;
            for _ in 0..50 {
                ea -= (ea - e * ea.sin() - t_end) / (1.0 - e * ea.cos());
            }
            [ea.cos() - e, (1.0 - e * e).sqrt() * ea.sin()]
        };
        let accel = |x: &Vec3| {
            let r3 = (x[0] * x[0] + x[1] * x[1] + x[2] * x[2]).powf(1.5);
            [-x[0] / r3, -x[1] / r3, -x[2] / r3]
        };
        let loose = Tolerances {
            rtol: 1e3,
            atol_pos_kpc: 1e3,
            atol_vel_kpc_gyr: 1e3,
        };
        let err_nystrom = |n: usize| {
            let mut d = fixed_step_nystrom(t_end / n as f64);
            let mut f = |_t: f64, x: &Vec3| accel(x);
            let (mut t, mut y) = (0.0, y0);
            while t < t_end {
                (t, y) = d.step(&mut f, t, &y, t_end);
            }
            ((y[0] - exact[0]).powi(2) + (y[1] - exact[1]).powi(2)).sqrt()
        };
        let err_dopri = |n: usize| {
            let h = t_end / n as f64;
            let mut d = Dopri5::new(loose, h, h);
            d.ctl.h_min = h;
            let mut f = |_t: f64, y: &State| {
                let a = accel(&[y[0], y[1], y[2]]);
                [y[3], y[4], y[5], a[0], a[1], a[2]]
            };
            let (mut t, mut y) = (0.0, y0);
            while t < t_end {
                (t, y) = d.step(&mut f, t, &y, t_end);
            }
            ((y[0] - exact[0]).powi(2) + (y[1] - exact[1]).powi(2)).sqrt()
        };
        let order = |e1: f64, e2: f64| (e1 / e2).log2();
        // 80 and 160 steps per 2 radians: errors 4.5e-11 and 6.9e-13 (Nystrom; 6.01),
        // 4.7e-9 and 1.3e-10 (Dormand-Prince; 5.22, still approaching 5 from above)
        let p_n = order(err_nystrom(80), err_nystrom(160));
        let p_d = order(err_dopri(80), err_dopri(160));
        assert!((p_n - 6.0).abs() < 0.3, "Nystrom order {p_n}");
        assert!((p_d - 5.0).abs() < 0.3, "Dormand-Prince order {p_d}");
    }

    /// Order of the friction splitting (`step_kicked`): the damped oscillator x'' = -x - g v
    /// (g = 0.2; the -g v part as the kick, as friction is), exact solution
    /// x = e^(-g t/2) (cos w t + g/(2w) sin w t), w = sqrt(1 - g^2/4), to t = 10 with fixed
    /// steps of 10/n: the error falls by 2^p from n = 100 to 200. Strang splitting with
    /// half kicks that are each accurate to second order gives p = 2 (the gravity part is
    /// sixth order, its error negligible here); with forward-Euler half kicks, p = 1 (orbit
    /// review 2026-12-04). Accepted: p within 0.2 of 2.
    #[test]
    fn friction_splitting_is_second_order() {
        let g = 0.2;
        let w = (1.0 - g * g / 4.0f64).sqrt();
        let t_end: f64 = 10.0;
        let exact =
            (-g * t_end / 2.0).exp() * ((w * t_end).cos() + g / (2.0 * w) * (w * t_end).sin());
        let err = |n: usize| {
            let mut d = fixed_step_nystrom(t_end / n as f64);
            let mut f = |_t: f64, x: &Vec3| [-x[0], -x[1], -x[2]];
            let mut kick = |_t: f64, y: &State| [-g * y[3], -g * y[4], -g * y[5]];
            let (mut t, mut y) = (0.0, [1.0, 0.0, 0.0, 0.0, 0.0, 0.0]);
            let mut k0 = kick(t, &y);
            while t < t_end * (1.0 - 1e-12) {
                let (t1, y1, k1) = d.step_kicked(&mut f, &mut kick, k0, t, &y, t_end);
                (t, y, k0) = (t1, y1, k1);
            }
            (y[0] - exact).abs()
        };
        let (e1, e2) = (err(100), err(200));
        let p = (e1 / e2).log2();
        assert!(
            (p - 2.0).abs() < 0.2,
            "order {p}: errors {e1:.2e}, {e2:.2e}"
        );
    }

    /// A stored derivative brought to a changed right-hand side by `add_to_derivative` gives
    /// the step a fresh evaluation would: x'' = -x - c v with c changed from 0.1 to 0.3
    /// between two steps.
    #[test]
    fn rescaled_derivative_matches_a_fresh_one() {
        let tol = Tolerances {
            rtol: 1e-8,
            atol_pos_kpc: 1e-10,
            atol_vel_kpc_gyr: 1e-10,
        };
        let rhs = |c: f64| {
            move |_t: f64, y: &State| {
                [
                    y[3],
                    y[4],
                    y[5],
                    -y[0] - c * y[3],
                    -y[1] - c * y[4],
                    -y[2] - c * y[5],
                ]
            }
        };
        let y0 = [1.0, 0.0, 0.5, 0.0, 1.0, 0.0];
        let mut a = Dopri5::new(tol, 0.05, 1.0);
        let (t1, y1) = a.step(&mut rhs(0.1), 0.0, &y0, 10.0);
        // the damping part of the stored derivative, per unit c, at the new point
        let part = [-y1[3], -y1[4], -y1[5]];
        let mut b = a.clone();
        b.reset_derivative();
        assert!(a.add_to_derivative(3, &part, 0.3 - 0.1));
        let (ta, ya) = a.step(&mut rhs(0.3), t1, &y1, 10.0);
        let (tb, yb) = b.step(&mut rhs(0.3), t1, &y1, 10.0);
        assert_eq!(ta, tb);
        for i in 0..6 {
            assert!((ya[i] - yb[i]).abs() < 1e-14, "{i}: {} vs {}", ya[i], yb[i]);
        }
        // nothing stored: nothing to correct
        let mut c = Dopri5::new(tol, 0.05, 1.0);
        assert!(!c.add_to_derivative(3, &part, 1.0));
    }

    /// A right-hand side that is not finite stops both integrators with a message (it used to
    /// loop for ever), after trying smaller steps; one that is not finite only over a long
    /// step is stepped through with shorter ones.
    #[test]
    fn non_finite_right_hand_sides() {
        let tol = Tolerances::default();
        let nan = std::panic::catch_unwind(|| {
            let mut d = Dopri5::new(tol, 0.1, 1.0);
            d.step(
                &mut |_t: f64, _y: &State| [f64::NAN; 6],
                0.0,
                &[1.0; 6],
                1.0,
            )
        });
        let msg = nan.unwrap_err();
        let text = msg.downcast_ref::<String>().cloned().unwrap_or_default();
        assert!(text.contains("not finite"), "{text}");
        let nan = std::panic::catch_unwind(|| {
            let mut d = Rkn6::new(tol, 0.1, 1.0);
            d.step(&mut |_t: f64, _x: &Vec3| [f64::NAN; 3], 0.0, &[1.0; 6], 1.0)
        });
        assert!(nan.is_err());
        // NaN beyond t = 0.05 only: a first attempt of 0.1 fails, shorter ones go through
        let mut d = Rkn6::new(tol, 0.1, 1.0);
        let mut f = |t: f64, x: &Vec3| {
            if t > 0.05 {
                [f64::NAN; 3]
            } else {
                [-x[0], -x[1], -x[2]]
            }
        };
        let (t1, y1) = d.step(&mut f, 0.0, &[1.0, 0.0, 0.0, 0.0, 1.0, 0.0], 1.0);
        assert!(t1 > 0.0 && t1 <= 0.05 && y1.iter().all(|v| v.is_finite()));
        assert!(d.ctl.rejected >= 1);
    }
}
