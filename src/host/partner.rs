//! The partner of a host in a pair, as the host's subhaloes feel it: the partner's own
//! evolving potential (NFW halo + disc + bulge, `EvolvingHost`) centred on its position
//! relative to the host (`pair::PairOrbit`).
//!
//! Subhaloes are integrated in the host's frame, which is accelerated: the partner pulls the
//! host's centre too. The equation of motion relative to the host is therefore
//! x'' = g_host(x) + g_partner(x - x_p) - g_partner(-x_p): the partner's pull at the subhalo
//! minus its pull at the host's centre (the inertial term). This is the motion in the pair's
//! barycentric (inertial) frame, written relative to the host: the two agree exactly as long
//! as the host's centre moves as `pair::PairOrbit` says, which holds by construction (the
//! mutual orbit uses the same two potentials, `synth`). Dark energy's term acts on the
//! relative position alone (it is linear in position), so it is in the host's own snapshot
//! and not repeated for the partner.

use super::evolving::EvolvingHost;
use super::potential::{HostSnapshot, Potential};
use crate::orbits::friction;
use crate::orbits::integrate::{State, Vec3};
use crate::pair::PairOrbit;

/// The partner of a host.
#[derive(Debug, Clone)]
pub struct Partner {
    /// The partner's own potential through time (its dark-energy term is not used).
    pub host: EvolvingHost,
    /// The partner's position and velocity relative to the host.
    pub orbit: PairOrbit,
}

#[inline]
fn sub(a: Vec3, b: Vec3) -> Vec3 {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}

impl Partner {
    /// The partner's halo, disc and bulge at time t (without the dark-energy term).
    #[inline]
    pub fn snapshot(&self, t: f64) -> HostSnapshot {
        let mut s = self.host.snapshot(t);
        s.de_k = 0.0;
        s
    }

    /// The partner's position relative to the host at t, kpc.
    #[inline]
    pub fn position(&self, t: f64) -> Vec3 {
        self.orbit.position(t)
    }

    /// The partner's pull at x (host frame, kpc) minus its pull at the host's centre,
    /// kpc/Gyr^2.
    #[inline]
    pub fn accel(&self, t: f64, x: Vec3) -> Vec3 {
        let s = self.snapshot(t);
        let xp = self.position(t);
        let a1 = s.accel(sub(x, xp));
        let a0 = s.accel([-xp[0], -xp[1], -xp[2]]);
        sub(a1, a0)
    }

    /// A host-frame state relative to the partner (position kpc, velocity kpc/Gyr).
    #[inline]
    pub fn relative(&self, t: f64, y: &State) -> State {
        let (xp, vp) = self.orbit.state(t);
        [
            y[0] - xp[0],
            y[1] - xp[1],
            y[2] - xp[2],
            y[3] - vp[0],
            y[4] - vp[1],
            y[5] - vp[2],
        ]
    }

    /// Dynamical friction of the partner's halo on mass m (Coulomb logarithm ll) at host-frame
    /// state y (Chandrasekhar's formula with the partner's density and dispersion and the
    /// velocity relative to it).
    #[inline]
    pub fn friction(&self, t: f64, y: &State, m: f64, ll: f64) -> Vec3 {
        if ll <= 0.0 || m <= 0.0 {
            return [0.0; 3];
        }
        let rel = self.relative(t, y);
        let r = (rel[0] * rel[0] + rel[1] * rel[1] + rel[2] * rel[2]).sqrt();
        let rho = self.snapshot(t).friction_density(r);
        friction::acceleration([rel[3], rel[4], rel[5]], rho, self.host.sigma(r, t), m, ll)
    }

    /// The partner's tide on a subhalo at host-frame state y: (Omega^2 - d^2 Phi/dr^2 about
    /// the partner's centre, distance from it, the partner's mass inside that distance).
    pub fn tide(&self, t: f64, y: &State) -> (f64, f64, f64) {
        let rel = self.relative(t, y);
        let x = [rel[0], rel[1], rel[2]];
        let v = [rel[3], rel[4], rel[5]];
        let (m_enc, d2phi) = self.snapshot(t).tidal_terms(x);
        let r2 = (x[0] * x[0] + x[1] * x[1] + x[2] * x[2]).max(1e-300);
        let l = [
            x[1] * v[2] - x[2] * v[1],
            x[2] * v[0] - x[0] * v[2],
            x[0] * v[1] - x[1] * v[0],
        ];
        let l2 = l[0] * l[0] + l[1] * l[1] + l[2] * l[2];
        (l2 / (r2 * r2) - d2phi, r2.sqrt(), m_enc)
    }
}
