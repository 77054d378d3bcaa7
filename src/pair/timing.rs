//! The timing argument (Kahn & Woltjer 1959, ApJ 130, 705): the total mass of a pair of
//! point masses that were at zero separation at the Big Bang (t = 0) and are today, at
//! t = age, at separation r approaching each other with radial velocity v_r < 0, having
//! turned around once (one passage through apocentre, none through pericentre: the pair is
//! on its first approach). The relative separation obeys
//!
//!   d^2 r / dt^2 = -G M / r^2 + k r,
//!
//! where k r is the acceleration a cosmological constant (or any dark energy, taken at its
//! value today) gives a test particle at distance r: k = H0^2 Omega_Lambda for a cosmological
//! constant (`Cosmology::dark_energy_accel_per_kpc(0.0)`). With k = 0 this is the radial Kepler
//! problem, with the closed form r = a (1 - cos eta), t = sqrt(a^3 / G M) (eta - sin eta); with
//! k != 0 there is none and the orbit is integrated.
//!
//! Method. For a trial mass the orbit is followed backwards in time from today's (r, v_r) with
//! the Runge–Kutta–Nyström pair of the subhalo orbits (`orbits::integrate::Rkn6`, the
//! integrator of `PairOrbit::integrate_back`) until the separation falls below a small
//! fraction of today's; the rest of the way to r = 0 is the radial Kepler fall time in closed
//! form (below). The result is T(M), the time since r = 0. The mass is the root of
//! T(M) = age, found by bisection in ln M to a relative width of 1e-13. The integration is
//! done here rather than through `PairOrbit::integrate_back` because it must stop on an event
//! (r small) rather than at a fixed time, and needs the step cap described next.
//!
//! Near r -> 0 the radial orbit is singular (the speed grows as r^(-1/2)). Each step is capped
//! at 0.2 min(r / |v|, sqrt(r^3 / G M), 1 / sqrt(-k) if k < 0). The fall time from r to 0 is at
//! least min(r / (3 |v|), 0.236 sqrt(r^3 / G M)) for the Kepler part of the force (split the
//! path where the infall speed sqrt(2 G M / r') equals |v| and bound 1 / (|v| + sqrt(2 G M /
//! r')) below on each side); an outward k r only slows the infall, and an inward one acts on
//! the time-scale 1 / sqrt(-k). So no step can jump across r = 0. The integration stops at the
//! first step that ends at r < r_s = 1e-3 r_today with |eps| <= 0.1, eps = E_K r / (G M) and
//! E_K = v^2 / 2 - G M / r (otherwise r_s is lowered tenfold and it goes on). From there the
//! time to r = 0 is that of the radial Kepler orbit of energy E_K,
//!
//!   t_fall = sqrt(r^3 / (2 G M)) int_0^1 s^(1/2) (1 + eps s)^(-1/2) ds
//!          = sqrt(r^3 / (2 G M)) sum_n binom(-1/2, n) eps^n / (n + 3/2),
//!
//! (substitute r' = r s in int_0^r dr' / sqrt(2 (E_K + G M / r'))), summed to round-off. The
//! k r term is left out of this last piece: relative to G M / r^2 it is k r^3 / (G M) <= k r_s^3
//! / (G M), about 1e-10 for Local-Group values, on a piece that is itself ~1e-5 of the age.
//!
//! Uniqueness. For k >= 0 the force f(r) = -G M / r^2 + k r increases with r and decreases with
//! M, so by comparison of the two backward orbits from the same (r, v) a heavier pair is at
//! every earlier time at smaller separation and reaches r = 0 sooner: T(M) decreases with M and
//! the root is unique. (For k < 0 this is assumed, not proved.) Masses too small to turn the
//! pair around within the age (an unbound past) count as "T > age".
//!
//! Accuracy. The integration runs at rtol 1e-12 (absolute tolerances 1e-12 r_today and 1e-12
//! (sqrt(G M / r_today) + |v_r|)); T(M) should then be good to ~1e-10 relative and, since T
//! scales roughly as M^(-1/2), M to a few 1e-10. Against the closed form at k = 0 (tests/
//! validation/val_pair_orbit.rs) both agree to ~1e-13.

use crate::constants::{G_KPC3_PER_MSUN_GYR2 as G, KMS_IN_KPC_PER_GYR as KMS};
use crate::orbits::integrate::{Rkn6, State, Tolerances, Vec3};

/// Relative tolerance of the backward integration.
const RTOL: f64 = 1e-12;
/// The integration hands over to the closed-form Kepler fall below this fraction of today's
/// separation...
const R_STOP_FRACTION: f64 = 1e-3;
/// ...once |E_K r / G M| is at most this (the series then converges like 0.1^n).
const EPS_MAX: f64 = 0.1;
/// Fraction of the local fall-time bound allowed per step (below 0.236 and 1/3; see the module
/// documentation).
const STEP_CAP: f64 = 0.2;
/// Relative width of the final mass bracket.
const MASS_RTOL: f64 = 1e-13;
/// Most factor-of-4 expansions of the initial mass bracket (4^60 ~ 1e36).
const MAX_EXPANSIONS: usize = 60;

/// Time (Gyr) from r = 0 to the radial Kepler orbit's point at separation r (kpc), moving
/// inwards or outwards, with eps = E_K r / (G M) (|eps| < 1) and gm = G M (kpc^3 / Gyr^2).
fn kepler_fall_time(r: f64, eps: f64, gm: f64) -> f64 {
    let mut c = 1.0; // binom(-1/2, n)
    let mut eps_n = 1.0;
    let mut sum = 0.0;
    for n in 0..200 {
        let term = c * eps_n / (n as f64 + 1.5);
        sum += term;
        if term.abs() <= 1e-17 * sum.abs() {
            break;
        }
        let m = (n + 1) as f64;
        c *= -(2.0 * m - 1.0) / (2.0 * m);
        eps_n *= eps;
    }
    (r * r * r / (2.0 * gm)).sqrt() * sum
}

/// The time back to r = 0 from separation r0 (kpc) and radial velocity v0 (kpc/Gyr), for
/// gm = G M and dark-energy k (Gyr^-2): `None` if r = 0 is not reached within `tau_max` Gyr.
fn time_back_to_zero(r0: f64, v0: f64, gm: f64, k: f64, tau_max: f64) -> Option<f64> {
    // X(tau) = r(t_now - tau) along the x axis: d^2X/dtau^2 = a(X), dX/dtau = -v
    let v_scale = (gm / r0).sqrt() + v0.abs();
    let tol = Tolerances {
        rtol: RTOL,
        atol_pos_kpc: RTOL * r0,
        atol_vel_kpc_gyr: RTOL * v_scale,
    };
    let t_dyn = (r0 * r0 * r0 / gm).sqrt();
    let mut rkn = Rkn6::new(tol, 1e-3 * t_dyn.min(tau_max), tau_max);
    let mut f = |_tau: f64, x: &Vec3| -> Vec3 {
        let r2 = x[0] * x[0] + x[1] * x[1] + x[2] * x[2];
        let r = r2.sqrt();
        let s = -gm / (r2 * r) + k;
        [s * x[0], s * x[1], s * x[2]]
    };
    let mut y: State = [r0, 0.0, 0.0, -v0, 0.0, 0.0];
    let mut tau = 0.0;
    let mut r_stop = R_STOP_FRACTION * r0;
    loop {
        let (r, u) = (y[0], y[3]);
        if !(r > 0.0 && r.is_finite() && u.is_finite()) {
            return None;
        }
        if r < r_stop && u < 0.0 {
            let eps = (0.5 * u * u - gm / r) * r / gm;
            if eps.abs() <= EPS_MAX {
                return Some(tau + kepler_fall_time(r, eps, gm));
            }
            r_stop *= 0.1;
        }
        if tau >= tau_max {
            return None;
        }
        let mut cap = (r * r * r / gm).sqrt();
        if u != 0.0 {
            cap = cap.min(r / u.abs());
        }
        if k < 0.0 {
            cap = cap.min(1.0 / (-k).sqrt());
        }
        rkn.ctl.h_max = STEP_CAP * cap;
        let (t1, y1) = rkn.step(&mut f, tau, &y, tau_max);
        tau = t1;
        y = y1;
    }
}

/// Time (Gyr) since zero separation of a purely radial two-point-mass orbit now at separation
/// `r_kpc` with radial velocity `v_r_kms` (negative: approaching), total mass `mass_msun` and
/// dark-energy acceleration k r (k = `de_k_per_gyr2`), traced backwards to its first zero
/// (through apocentre if the pair is approaching). `None` if zero separation is not reached
/// within `t_max_gyr` (e.g. the pair is unbound going back) or an input is not positive and
/// finite (v_r and k need only be finite).
pub fn time_since_zero_separation(
    r_kpc: f64,
    v_r_kms: f64,
    mass_msun: f64,
    de_k_per_gyr2: f64,
    t_max_gyr: f64,
) -> Option<f64> {
    let ok = r_kpc > 0.0
        && r_kpc.is_finite()
        && v_r_kms.is_finite()
        && mass_msun > 0.0
        && mass_msun.is_finite()
        && de_k_per_gyr2.is_finite()
        && t_max_gyr > 0.0;
    if !ok {
        return None;
    }
    time_back_to_zero(
        r_kpc,
        v_r_kms * KMS,
        G * mass_msun,
        de_k_per_gyr2,
        t_max_gyr,
    )
}

/// The timing-argument mass (Msun): the total point mass for which a purely radial orbit
/// leaving zero separation at t = 0 is at separation `r_kpc` with radial velocity `v_r_kms`
/// (km/s, <= 0: approaching) at t = `age_gyr`, on its first approach, under the relative
/// acceleration -G M / r^2 + k r with k = `de_k_per_gyr2` (Gyr^-2; 0 for the classical
/// argument, H0^2 Omega_Lambda for a cosmological constant). See the module documentation for
/// the method and its accuracy.
///
/// `None` if r or the age is not positive and finite, if v_r > 0 (the pair is still receding:
/// no first-approach solution) or is not finite, or if no mass in the bracket search (a factor
/// 4^60 either side of a first guess) works.
pub fn timing_argument_mass(
    r_kpc: f64,
    v_r_kms: f64,
    age_gyr: f64,
    de_k_per_gyr2: f64,
) -> Option<f64> {
    let ok = r_kpc > 0.0
        && r_kpc.is_finite()
        && v_r_kms <= 0.0
        && v_r_kms.is_finite()
        && age_gyr > 0.0
        && age_gyr.is_finite()
        && de_k_per_gyr2.is_finite();
    if !ok {
        return None;
    }
    let v = v_r_kms * KMS;
    // reaches r = 0 going back within the age: the mass is at least the root (the
    // integration may hand over to the closed-form fall just before the age and still arrive
    // after it, hence the comparison)
    let heavy_enough = |m: f64| {
        time_back_to_zero(r_kpc, v, G * m, de_k_per_gyr2, age_gyr).is_some_and(|t| t <= age_gyr)
    };
    // first guess: the larger of the escape mass r v^2 / 2G and r^3 / (G t^2)
    let guess = (0.5 * r_kpc * v * v).max(r_kpc.powi(3) / (age_gyr * age_gyr)) / G;
    let (mut lo, mut hi);
    if heavy_enough(guess) {
        hi = guess;
        lo = 0.25 * guess;
        let mut n = 0;
        while heavy_enough(lo) {
            n += 1;
            if n > MAX_EXPANSIONS {
                return None;
            }
            hi = lo;
            lo *= 0.25;
        }
    } else {
        lo = guess;
        hi = 4.0 * guess;
        let mut n = 0;
        while !heavy_enough(hi) {
            n += 1;
            if n > MAX_EXPANSIONS {
                return None;
            }
            lo = hi;
            hi *= 4.0;
        }
    }
    while hi / lo - 1.0 > MASS_RTOL {
        let mid = (lo * hi).sqrt();
        if heavy_enough(mid) {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    Some((lo * hi).sqrt())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The series against the closed form of the bound radial Kepler orbit (textbook:
    /// r = a (1 - cos eta), t = sqrt(a^3 / G M) (eta - sin eta), E = -G M / 2a): the time from
    /// r = 0 to eta = 0.3 (eps = E r / G M = -(1 - cos 0.3) / 2 = -0.0223). Both are evaluated
    /// to round-off; eta - sin eta loses ~3 digits to cancellation at eta = 0.3, hence 1e-12.
    #[test]
    fn fall_time_series_is_the_kepler_closed_form() {
        let (gm, a, eta) = (1.8e7_f64, 500.0_f64, 0.3_f64);
        let r = a * (1.0 - eta.cos());
        let want = (a.powi(3) / gm).sqrt() * (eta - eta.sin());
        let eps = -r / (2.0 * a);
        let got = kepler_fall_time(r, eps, gm);
        assert!((got / want - 1.0).abs() < 1e-12, "{got} vs {want}");
        // eps = 0: the parabolic fall, (2/3) r^(3/2) / sqrt(2 G M)
        let par = kepler_fall_time(r, 0.0, gm);
        let want_par = 2.0 / 3.0 * r.powf(1.5) / (2.0 * gm).sqrt();
        assert!((par / want_par - 1.0).abs() < 1e-15);
    }

    /// No first-approach solution for a receding pair or unphysical inputs.
    #[test]
    fn invalid_inputs_have_no_mass() {
        assert!(timing_argument_mass(770.0, 10.0, 13.8, 0.0).is_none());
        assert!(timing_argument_mass(0.0, -100.0, 13.8, 0.0).is_none());
        assert!(timing_argument_mass(770.0, -100.0, 0.0, 0.0).is_none());
        assert!(timing_argument_mass(770.0, f64::NAN, 13.8, 0.0).is_none());
        assert!(time_since_zero_separation(770.0, -100.0, -1.0, 0.0, 20.0).is_none());
    }
}
