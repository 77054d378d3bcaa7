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
use crate::constants::G_KPC3_PER_MSUN_GYR2 as G;
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
    /// The partner's pull at the host's centre at each node of `orbit` (the inertial term;
    /// it depends on time alone, so it is tabulated once and interpolated, `indirect_loc`).
    indirect: Vec<Vec3>,
    /// What the pull beyond `FAR_KPC` needs of the partner, at each node of `orbit` (linear
    /// in time between nodes, as the partner's own table is between its coarser nodes).
    far: Vec<Far>,
}

/// Beyond this distance from the partner's centre (kpc) its disc and bulge pull as the
/// spheres of their masses (`pull`).
const FAR_KPC: f64 = 100.0;

/// The partner's pull at d from its centre (kpc): its potential's exact acceleration within
/// `FAR_KPC`, and beyond it the disc taken as a point mass. The Miyamoto–Nagai potential
/// differs from a point mass there at first order, by a relative a|z|/r^2 < a/r (a the disc's
/// scale length: 3e-2 at 100 kpc) of the disc's pull, which is itself at most a tenth of the
/// partner's; and the partner's tide on the host's subhaloes is about a hundredth of the
/// host's pull: below 3e-5 of the force.
#[inline]
pub fn pull(s: &HostSnapshot, d: Vec3) -> Vec3 {
    let r2 = d[0] * d[0] + d[1] * d[1] + d[2] * d[2];
    if r2 <= FAR_KPC * FAR_KPC {
        return s.accel(d);
    }
    Far::of(s).pull(d, r2)
}

/// What the partner's pull and tide beyond `FAR_KPC` need of it: NFW M_s and r_s, disc
/// mass (a point there), bulge mass and scale.
#[derive(Debug, Clone, Copy)]
struct Far {
    m_s: f64,
    r_s: f64,
    m_disc: f64,
    m_bulge: f64,
    a_bulge: f64,
}

impl Far {
    fn of(s: &HostSnapshot) -> Self {
        Self {
            m_s: s.m_s,
            r_s: s.r_s,
            m_disc: s.m_disc,
            m_bulge: s.m_bulge,
            a_bulge: s.a_bulge,
        }
    }

    /// Linear interpolation (weight f of `other`).
    #[inline]
    fn lerp(&self, other: &Self, f: f64) -> Self {
        let l = |a: f64, b: f64| a + f * (b - a);
        Self {
            m_s: l(self.m_s, other.m_s),
            r_s: l(self.r_s, other.r_s),
            m_disc: l(self.m_disc, other.m_disc),
            m_bulge: l(self.m_bulge, other.m_bulge),
            a_bulge: l(self.a_bulge, other.a_bulge),
        }
    }

    /// The mass inside r > `FAR_KPC` as the forces beyond it see it: halo, disc as a point,
    /// bulge. The logarithm of the NFW mass is taken in single precision (relative error
    /// below 1e-6 of the mass for r / r_s > 0.3, in a term a hundredth of the host's pull: it
    /// saves a third of the partner's cost per evaluation).
    #[inline]
    fn mass(&self, r: f64) -> f64 {
        let x = r / self.r_s;
        let ln1x = ((1.0 + x) as f32).ln() as f64;
        let ab = r + self.a_bulge;
        self.m_s * (ln1x - x / (1.0 + x)) + self.m_disc + self.m_bulge * r * r / (ab * ab)
    }

    /// 4 pi G rho at r of the NFW halo (M_s = 4 pi rho_s r_s^3) and the Hernquist bulge,
    /// Gyr^-2.
    #[inline]
    fn four_pi_g_rho(&self, r: f64) -> f64 {
        let x = r / self.r_s;
        let ab = r + self.a_bulge;
        G * self.m_s / (r * self.r_s * self.r_s * (1.0 + x) * (1.0 + x))
            + 2.0 * G * self.m_bulge * self.a_bulge / (r * ab * ab * ab)
    }

    /// The pull at d, |d| = sqrt(r2) > `FAR_KPC`.
    #[inline]
    fn pull(&self, d: Vec3, r2: f64) -> Vec3 {
        let r = r2.sqrt();
        let k = -G * self.mass(r) / (r2 * r);
        [k * d[0], k * d[1], k * d[2]]
    }
}

#[inline]
fn sub(a: Vec3, b: Vec3) -> Vec3 {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}

impl Partner {
    /// The partner `host` moving relative to this host along `orbit`.
    pub fn new(host: EvolvingHost, orbit: PairOrbit) -> Self {
        let indirect = orbit
            .nodes()
            .map(|(t, x, _)| {
                let mut s = host.snapshot(t);
                s.de_k = 0.0;
                pull(&s, [-x[0], -x[1], -x[2]])
            })
            .collect();
        let far = orbit
            .nodes()
            .map(|(t, _, _)| Far::of(&host.snapshot(t)))
            .collect();
        Self {
            host,
            orbit,
            indirect,
            far,
        }
    }

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
        let (i, f) = self.orbit.locate(t);
        let xp = self.orbit.position_at(i, f);
        let d = sub(x, xp);
        let r2 = d[0] * d[0] + d[1] * d[1] + d[2] * d[2];
        let a1 = if r2 <= FAR_KPC * FAR_KPC {
            self.snapshot(t).accel(d)
        } else {
            // (`pull` beyond FAR_KPC, from the node table)
            self.far_at(i, f).pull(d, r2)
        };
        let a0 = self.indirect_loc(i, f);
        [a1[0] - a0[0], a1[1] - a0[1], a1[2] - a0[2]]
    }

    /// The far-field parameters a fraction f of the way through node interval i.
    #[inline]
    fn far_at(&self, i: usize, f: f64) -> Far {
        self.far[i].lerp(&self.far[i + 1], f)
    }

    /// The partner's pull at the host's centre a fraction f of the way through node interval
    /// i of the orbit (`PairOrbit::locate`): cubic (Catmull–Rom) interpolation
    /// of the tabulated values, error of order (Omega dt)^4 of the term (Omega the mutual
    /// orbit's angular speed; below 1e-9 of it for dt = 0.025 Gyr and Omega < 1 / Gyr).
    #[inline]
    fn indirect_loc(&self, i: usize, f: f64) -> Vec3 {
        let n = self.indirect.len();
        let p1 = self.indirect[i];
        let p2 = self.indirect[i + 1];
        // end intervals: the missing neighbour extrapolated linearly
        let p0 = if i > 0 {
            self.indirect[i - 1]
        } else {
            [
                2.0 * p1[0] - p2[0],
                2.0 * p1[1] - p2[1],
                2.0 * p1[2] - p2[2],
            ]
        };
        let p3 = if i + 2 < n {
            self.indirect[i + 2]
        } else {
            [
                2.0 * p2[0] - p1[0],
                2.0 * p2[1] - p1[1],
                2.0 * p2[2] - p1[2],
            ]
        };
        let f2 = f * f;
        let f3 = f2 * f;
        let w0 = -0.5 * f3 + f2 - 0.5 * f;
        let w1 = 1.5 * f3 - 2.5 * f2 + 1.0;
        let w2 = -1.5 * f3 + 2.0 * f2 + 0.5 * f;
        let w3 = 0.5 * f3 - 0.5 * f2;
        [
            w0 * p0[0] + w1 * p1[0] + w2 * p2[0] + w3 * p3[0],
            w0 * p0[1] + w1 * p1[1] + w2 * p2[1] + w3 * p3[1],
            w0 * p0[2] + w1 * p1[2] + w2 * p2[2] + w3 * p3[2],
        ]
    }

    /// The partner's tide across an offset x from a point at s (host frame, kpc): its pull at
    /// s + x minus its pull at s (`orbits::in_parent::Chain` adds it to a child's motion
    /// relative to its container). Where |x| is below 1/20 of the distance D from the
    /// partner's centre and D > 100 kpc, the linear term of the expansion,
    /// -G M(<D)/D^3 (x - 3 (x.n) n) - 4 pi G rho(D) (x.n) n (n = D/|D|, the partner as a
    /// sphere: `pull`), which is within 1/20 of the exact difference (the next term is of
    /// relative order |x|/D) at one evaluation of M(<D) instead of two; otherwise the
    /// difference itself.
    #[inline]
    pub fn tide_across(&self, t: f64, s: Vec3, x: Vec3) -> Vec3 {
        let (i, f) = self.orbit.locate(t);
        let d = sub(s, self.orbit.position_at(i, f));
        let r2 = d[0] * d[0] + d[1] * d[1] + d[2] * d[2];
        let x2 = x[0] * x[0] + x[1] * x[1] + x[2] * x[2];
        if r2 > FAR_KPC * FAR_KPC && x2 * 400.0 < r2 {
            // (the far-field parameters from the node table, as in `accel`)
            let far = self.far_at(i, f);
            let r = r2.sqrt();
            let n = [d[0] / r, d[1] / r, d[2] / r];
            let xn = x[0] * n[0] + x[1] * n[1] + x[2] * n[2];
            let k = -G * far.mass(r) / (r2 * r);
            let q = -far.four_pi_g_rho(r) * xn;
            return [
                k * (x[0] - 3.0 * xn * n[0]) + q * n[0],
                k * (x[1] - 3.0 * xn * n[1]) + q * n[1],
                k * (x[2] - 3.0 * xn * n[2]) + q * n[2],
            ];
        }
        let snap = self.snapshot(t);
        let a1 = pull(&snap, [d[0] + x[0], d[1] + x[1], d[2] + x[2]]);
        let a0 = pull(&snap, d);
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
    /// state y inside the partner's virial radius (Chandrasekhar's formula with the partner's
    /// density and dispersion and the velocity relative to it); none outside it, where the
    /// subhalo does not sit in the partner's halo.
    #[inline]
    pub fn friction(&self, t: f64, y: &State, m: f64, ll: f64) -> Vec3 {
        if ll <= 0.0 || m <= 0.0 {
            return [0.0; 3];
        }
        let xp = self.position(t);
        let s = self.snapshot(t);
        let d2 = (y[0] - xp[0]).powi(2) + (y[1] - xp[1]).powi(2) + (y[2] - xp[2]).powi(2);
        if d2 > s.r_vir * s.r_vir {
            return [0.0; 3];
        }
        let rel = self.relative(t, y);
        let r = (rel[0] * rel[0] + rel[1] * rel[1] + rel[2] * rel[2]).sqrt();
        let rho = s.friction_density(r);
        friction::acceleration([rel[3], rel[4], rel[5]], rho, self.host.sigma(r, t), m, ll)
    }

    /// The partner's tide on a subhalo at host-frame state y: (Omega^2 - d^2 Phi/dr^2 about
    /// the partner's centre, distance from it, the partner's mass inside that distance).
    pub fn tide(&self, t: f64, y: &State) -> (f64, f64, f64) {
        self.tide_relative(t, &self.relative(t, y))
    }

    /// As `tide`, from the state relative to the partner (`relative`); beyond `FAR_KPC` with
    /// the partner as a sphere (as its pull is computed there).
    pub fn tide_relative(&self, t: f64, rel: &State) -> (f64, f64, f64) {
        let x = [rel[0], rel[1], rel[2]];
        let v = [rel[3], rel[4], rel[5]];
        let s = self.snapshot(t);
        let r2 = (x[0] * x[0] + x[1] * x[1] + x[2] * x[2]).max(1e-300);
        let (m_enc, d2phi) = if r2 > FAR_KPC * FAR_KPC {
            let r = r2.sqrt();
            let far = Far::of(&s);
            let m = far.mass(r);
            (m, -2.0 * G * m / (r2 * r) + far.four_pi_g_rho(r))
        } else {
            s.tidal_terms(x)
        };
        let l = [
            x[1] * v[2] - x[2] * v[1],
            x[2] * v[0] - x[0] * v[2],
            x[0] * v[1] - x[1] * v[0],
        ];
        let l2 = l[0] * l[0] + l[1] * l[1] + l[2] * l[2];
        (l2 / (r2 * r2) - d2phi, r2.sqrt(), m_enc)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::orbits::integrate::Tolerances;

    fn partner_at(xp: Vec3) -> Partner {
        let s = HostSnapshot {
            m_s: 7e11,
            r_s: 25.0,
            r_vir: 300.0,
            m_vir: 1.3e12,
            m_disc: 6e10,
            a_disc: 3.0,
            b_disc: 0.3,
            m_bulge: 1e10,
            a_bulge: 0.5,
            de_k: 0.0,
        };
        // a partner at rest at xp
        let orbit = PairOrbit::integrate_back(
            |_, _| [0.0; 3],
            10.0,
            xp,
            [0.0; 3],
            0.0,
            50,
            Tolerances::default(),
        );
        Partner::new(EvolvingHost::fixed(s), orbit)
    }

    /// The partner's pull minus the inertial term vanishes at the host's centre, and beyond
    /// 100 kpc equals the exact pull of its potential to the disc's departure from a point
    /// mass, a|z|/r^2 of the disc's pull (`pull`): asserted at 2 a/r x M_disc / M(<r) of the
    /// exact pull at each end.
    #[test]
    fn pull_matches_the_exact_potential() {
        let xp = [600.0, 100.0, -50.0];
        let p = partner_at(xp);
        let a = p.accel(5.0, [0.0; 3]);
        assert!(a.iter().all(|c| c.abs() < 1e-12), "{a:?}");
        let s = p.snapshot(5.0);
        let norm = |v: Vec3| (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt();
        let bound = |d: Vec3| {
            let r = norm(d);
            2.0 * s.a_disc / r * s.m_disc / s.mass_enclosed(r) * norm(s.accel(d))
        };
        for x in [
            [100.0, 0.0, 0.0],
            [350.0, 90.0, 10.0],
            [520.0, 100.0, -50.0],
        ] {
            let got = p.accel(5.0, x);
            let (d1, d0) = (sub(x, xp), [-xp[0], -xp[1], -xp[2]]);
            let want = sub(s.accel(d1), s.accel(d0));
            let err = norm(sub(got, want));
            assert!(err < bound(d1) + bound(d0), "{x:?}: {err:e}");
            // and far below the tide itself
            assert!(
                err < 1e-3 * norm(want),
                "{x:?}: {err:e} against {:e}",
                norm(want)
            );
        }
    }

    /// The linear tidal expansion across a small offset agrees with the difference of two
    /// pulls to the next order, |x| / D (< 1/20 by construction; asserted at 1/10 of the term
    /// for |x| / D = 1/25 and 1/100, and the error must shrink with |x|).
    #[test]
    fn tide_across_is_the_linear_term() {
        let p = partner_at([700.0, 0.0, 0.0]);
        let snap = p.snapshot(2.0);
        let s = [100.0, 50.0, 20.0];
        let d = sub(s, [700.0, 0.0, 0.0]);
        let dn = (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt();
        let mut last = f64::INFINITY;
        for frac in [1.0 / 25.0, 1.0 / 100.0] {
            let x = [0.6 * frac * dn, -0.48 * frac * dn, 0.64 * frac * dn];
            let got = p.tide_across(2.0, s, x);
            let e = sub(
                pull(&snap, [d[0] + x[0], d[1] + x[1], d[2] + x[2]]),
                pull(&snap, d),
            );
            let n = (e[0] * e[0] + e[1] * e[1] + e[2] * e[2]).sqrt();
            let err = (0..3).map(|k| (got[k] - e[k]).abs()).fold(0.0, f64::max) / n;
            assert!(err < 0.1, "{frac}: {err}");
            assert!(err < last, "{frac}: {err} not below {last}");
            last = err;
        }
    }
}
