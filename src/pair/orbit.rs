//! The mutual orbit of a pair of hosts: the partner's position and velocity relative to the
//! primary, integrated backwards in time from today's separation and velocity under a
//! relative acceleration the caller gives (in a run: each host's evolving potential pulling
//! the other's centre, plus the dark-energy term; see `host::partner`), and kept on a uniform
//! time grid for cubic Hermite interpolation.
//!
//! Backwards integration: with tau = t_end - t, X(tau) = x(t_end - tau) obeys
//! d^2X/dtau^2 = a(t_end - tau, X) with dX/dtau = -v, so the forward Runge–Kutta–Nyström pair
//! of the subhalo orbits (`orbits::integrate::Rkn6`) integrates it unchanged.

use crate::orbits::integrate::{Rkn6, State, Tolerances, Vec3};

/// The partner's state relative to the primary on a uniform grid of cosmic times.
#[derive(Debug, Clone, PartialEq)]
pub struct PairOrbit {
    /// First node (Gyr) and spacing (Gyr).
    t0: f64,
    dt: f64,
    /// Position (kpc) and velocity (kpc/Gyr) at each node.
    x: Vec<Vec3>,
    v: Vec<Vec3>,
}

impl PairOrbit {
    /// Integrate the relative orbit backwards from `t_end` (position `x_end`, kpc; velocity
    /// `v_end`, kpc/Gyr) to `t_start` under the relative acceleration `accel(t, x)` (kpc/Gyr^2),
    /// keeping `n_nodes` (>= 2) states evenly spaced in time.
    pub fn integrate_back<F: FnMut(f64, &Vec3) -> Vec3>(
        mut accel: F,
        t_end: f64,
        x_end: Vec3,
        v_end: Vec3,
        t_start: f64,
        n_nodes: usize,
        tol: Tolerances,
    ) -> Self {
        let n = n_nodes.max(2);
        let span = (t_end - t_start).max(1e-9);
        let dt = span / (n - 1) as f64;
        let mut rkn = Rkn6::new(tol, 1e-3 * dt.min(0.1), dt);
        let mut f = |tau: f64, x: &Vec3| accel(t_end - tau, x);
        let mut y: State = [
            x_end[0], x_end[1], x_end[2], -v_end[0], -v_end[1], -v_end[2],
        ];
        let mut tau = 0.0;
        let mut xs = vec![[0.0; 3]; n];
        let mut vs = vec![[0.0; 3]; n];
        xs[n - 1] = x_end;
        vs[n - 1] = v_end;
        for k in 1..n {
            let tau_k = if k == n - 1 { span } else { dt * k as f64 };
            while tau < tau_k {
                let (t1, y1) = rkn.step(&mut f, tau, &y, tau_k);
                tau = t1;
                y = y1;
            }
            xs[n - 1 - k] = [y[0], y[1], y[2]];
            vs[n - 1 - k] = [-y[3], -y[4], -y[5]];
        }
        Self {
            t0: t_end - span,
            dt,
            x: xs,
            v: vs,
        }
    }

    /// Times of the first and last node, Gyr.
    pub fn time_range(&self) -> (f64, f64) {
        (self.t0, self.t0 + self.dt * (self.x.len() - 1) as f64)
    }

    /// The nodes: (t, position kpc, velocity kpc/Gyr).
    pub fn nodes(&self) -> impl Iterator<Item = (f64, Vec3, Vec3)> + '_ {
        (0..self.x.len()).map(|k| (self.t0 + self.dt * k as f64, self.x[k], self.v[k]))
    }

    /// Position (kpc) and velocity (kpc/Gyr) at time t by cubic Hermite interpolation
    /// between nodes (clamped to the first and last node outside the range).
    #[inline]
    pub fn state(&self, t: f64) -> (Vec3, Vec3) {
        let n = self.x.len();
        let u = ((t - self.t0) / self.dt).clamp(0.0, (n - 1) as f64);
        let i = (u as usize).min(n - 2);
        let s = u - i as f64;
        let h = self.dt;
        let (x0, x1, v0, v1) = (self.x[i], self.x[i + 1], self.v[i], self.v[i + 1]);
        let s2 = s * s;
        let s3 = s2 * s;
        let h00 = 2.0 * s3 - 3.0 * s2 + 1.0;
        let h10 = s3 - 2.0 * s2 + s;
        let h01 = -2.0 * s3 + 3.0 * s2;
        let h11 = s3 - s2;
        // derivatives of the basis with respect to s
        let d00 = 6.0 * s2 - 6.0 * s;
        let d10 = 3.0 * s2 - 4.0 * s + 1.0;
        let d01 = -6.0 * s2 + 6.0 * s;
        let d11 = 3.0 * s2 - 2.0 * s;
        let mut x = [0.0; 3];
        let mut v = [0.0; 3];
        for j in 0..3 {
            x[j] = h00 * x0[j] + h10 * h * v0[j] + h01 * x1[j] + h11 * h * v1[j];
            v[j] = (d00 * x0[j] + d01 * x1[j]) / h + d10 * v0[j] + d11 * v1[j];
        }
        (x, v)
    }

    /// The interval of t between nodes and the fraction of the way through it (clamped).
    #[inline]
    pub fn locate(&self, t: f64) -> (usize, f64) {
        let n = self.x.len();
        let u = ((t - self.t0) / self.dt).clamp(0.0, (n - 1) as f64);
        let i = (u as usize).min(n - 2);
        (i, u - i as f64)
    }

    /// Position (kpc) at time t (`state` without the velocity).
    #[inline]
    pub fn position(&self, t: f64) -> Vec3 {
        let (i, s) = self.locate(t);
        self.position_at(i, s)
    }

    /// Position (kpc) a fraction s of the way through node interval i (`locate`).
    #[inline]
    pub fn position_at(&self, i: usize, s: f64) -> Vec3 {
        let h = self.dt;
        let (x0, x1, v0, v1) = (self.x[i], self.x[i + 1], self.v[i], self.v[i + 1]);
        let s2 = s * s;
        let s3 = s2 * s;
        let h00 = 2.0 * s3 - 3.0 * s2 + 1.0;
        let h10 = (s3 - 2.0 * s2 + s) * h;
        let h01 = -2.0 * s3 + 3.0 * s2;
        let h11 = (s3 - s2) * h;
        [
            h00 * x0[0] + h10 * v0[0] + h01 * x1[0] + h11 * v1[0],
            h00 * x0[1] + h10 * v0[1] + h01 * x1[1] + h11 * v1[1],
            h00 * x0[2] + h10 * v0[2] + h01 * x1[2] + h11 * v1[2],
        ]
    }

    /// The same orbit seen from the partner (the primary relative to the partner).
    pub fn reversed(&self) -> Self {
        let neg = |a: &Vec3| [-a[0], -a[1], -a[2]];
        Self {
            t0: self.t0,
            dt: self.dt,
            x: self.x.iter().map(neg).collect(),
            v: self.v.iter().map(neg).collect(),
        }
    }

    /// Separation (kpc) at time t.
    pub fn separation(&self, t: f64) -> f64 {
        let (x, _) = self.state(t);
        (x[0] * x[0] + x[1] * x[1] + x[2] * x[2]).sqrt()
    }
}
