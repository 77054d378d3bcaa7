//! Orbits of a single point in the host: a test particle, or a satellite of fixed mass with
//! dynamical friction (Dormand–Prince for the velocity-dependent force); for
//! `retinue orbit` and the checks against galpy and the classical sinking time.

use super::events::hermite_extremum;
use super::follow::{accel_free, count_rhs, host_friction, norm, pos, vel};
use super::friction;
use super::in_parent::dot;
use super::integrate::{Dopri5, Rkn6, State, Tolerances, Vec3};
use crate::constants::KMS_IN_KPC_PER_GYR as KMS;
use crate::host::{EvolvingHost, Potential};

/// Coulomb logarithm at the satellite's position (held fixed over one integrator step: it
/// changes only logarithmically with radius).
#[inline]
fn coulomb_log_at(host: &EvolvingHost, t: f64, y: &State, m: f64) -> f64 {
    let s = host.snapshot(t);
    friction::coulomb_log(s.mass_enclosed(norm(pos(y))), m)
}

/// Right-hand side in the host: host gravity plus friction on mass m with Coulomb logarithm
/// `ll` (friction off when `ll` <= 0); for `integrate_point_mass`.
#[inline]
fn rhs(host: &EvolvingHost, ll: f64, m: f64, t: f64, y: &State) -> State {
    count_rhs();
    let mut a = host.accel_at(t, pos(y));
    let af = host_friction(host, t, y, m, ll);
    for i in 0..3 {
        a[i] += af[i];
    }
    [y[3], y[4], y[5], a[0], a[1], a[2]]
}

/// A test particle (no friction, no stripping) in the host from `t0` to `t1`; returns the
/// state every `dt_out` (positions kpc, velocities km/s) and (pericentres, apocentres) as
/// (t, r) lists.
pub type Track = (Vec<(f64, [f64; 6])>, Vec<(f64, f64)>, Vec<(f64, f64)>);

pub fn integrate_test_particle(
    host: &EvolvingHost,
    x0_kpc: [f64; 3],
    v0_kms: [f64; 3],
    t0: f64,
    t1: f64,
    dt_out: f64,
    tol: Tolerances,
) -> Track {
    integrate_point_mass(host, x0_kpc, v0_kms, 0.0, t0, t1, dt_out, tol)
}

/// As `integrate_test_particle`, for a satellite of fixed mass `m_msun` that feels
/// dynamical friction (m = 0: no friction).
#[allow(clippy::too_many_arguments)]
pub fn integrate_point_mass(
    host: &EvolvingHost,
    x0_kpc: [f64; 3],
    v0_kms: [f64; 3],
    m_msun: f64,
    t0: f64,
    t1: f64,
    dt_out: f64,
    tol: Tolerances,
) -> Track {
    let mut y: State = [
        x0_kpc[0],
        x0_kpc[1],
        x0_kpc[2],
        v0_kms[0] * KMS,
        v0_kms[1] * KMS,
        v0_kms[2] * KMS,
    ];
    let mut t = t0;
    let to_kms = |y: &State| [y[0], y[1], y[2], y[3] / KMS, y[4] / KMS, y[5] / KMS];
    let mut out = vec![(t, to_kms(&y))];
    let (mut peri, mut apo) = (Vec::new(), Vec::new());
    // a test particle takes the Nystrom integrator of the subhalo orbits, a satellite with
    // friction (velocity-dependent) the general one
    let mut dopri = Dopri5::new(tol, 1e-4, dt_out.max(1e-6));
    let mut rkn = Rkn6::new(tol, 1e-4, dt_out.max(1e-6));
    let mut f = |tt: f64, yy: &State| {
        let ll = coulomb_log_at(host, tt, yy, m_msun);
        rhs(host, ll, m_msun, tt, yy)
    };
    let mut g = |tt: f64, x: &Vec3| accel_free(host, tt, x);
    let n_out = ((t1 - t0) / dt_out).round().max(1.0) as usize;
    for k in 1..=n_out {
        let t_next = if k == n_out {
            t1
        } else {
            t0 + dt_out * k as f64
        };
        while t < t_next {
            let (tn, yn) = if m_msun > 0.0 {
                dopri.step(&mut f, t, &y, t_next)
            } else {
                rkn.step(&mut g, t, &y, t_next)
            };
            let h = tn - t;
            let (x0, x1) = (pos(&y), pos(&yn));
            let (r0, r1) = (norm(x0), norm(x1));
            let vr0 = dot(x0, vel(&y)) / r0;
            let vr1 = dot(x1, vel(&yn)) / r1;
            if (vr0 < 0.0) != (vr1 < 0.0) {
                if let Some((s, r)) = hermite_extremum(r0, r1, vr0 * h, vr1 * h) {
                    if vr0 < 0.0 {
                        peri.push((t + s * h, r));
                    } else {
                        apo.push((t + s * h, r));
                    }
                }
            }
            t = tn;
            y = yn;
        }
        out.push((t, to_kms(&y)));
    }
    (out, peri, apo)
}
