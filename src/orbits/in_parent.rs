//! Satellites of satellites: a subhalo that fell into another halo (its parent) is integrated
//! in its parent's frame, in the parent's own potential, with the tides of every halo the
//! parent sits in (up to the host) acting on the pair.
//!
//! * **Frames.** Every subhalo orbits one halo at a time, its *container*: the host, or
//!   another subhalo. Its trajectory is a list of segments, each a list of accepted points
//!   (time, position and velocity relative to the container, acceleration, bound mass,
//!   stripped profile, tidal radius) in one container's frame. A child starts in its parent's
//!   frame; when it leaves the parent it continues in the frame of the halo the parent then
//!   orbits (x = x_p + x_c, v = v_p + v_c).
//! * **Equation of motion in the container's frame.** With x the position relative to the
//!   container A_0, A_1 ... A_K the chain of haloes that contain it at time t (each orbiting
//!   the next) and s_j the position of A_0 relative to A_j,
//!   a = g_0(x) + sum_{j >= 1} [g_j(x + s_j) - g_j(s_j)] + [g_host(x + S) - g_host(S)]
//!   (the last term once the chain reaches the host; S = position of A_0 in the host): the
//!   exact differential accelerations, not a tidal tensor (physics reference sheet, sec. 9b).
//!   The container's dynamical friction on itself is not applied to the child (the wake pulls
//!   on the container's bound system as a whole).
//! * **A subhalo's potential.** Before its own infall the parent is a field halo whose virial
//!   mass follows its branch of the merger tree (read off the masses at which its children and
//!   it merged), with the Dutton & Maccio 2014 concentration; untruncated NFW (matter beyond
//!   R_vir is bound to an isolated halo too). Between the branch's points its virial radius
//!   and velocity are interpolated in ln M against time (`field_virial`), its NFW mass scale
//!   M_s, scale radius r_s and virial mass linearly in time (`field_profile_from`,
//!   `container_mass`); the points are the tree's steps, so the two differ little.
//!   After its infall: the NFW with the Vmax and Rmax of its bound mass on the tidal track,
//!   with the enclosed mass capped at the bound mass (truncated at about its tidal radius).
//! * **Friction** from the container's halo: Chandrasekhar with the container's density, the
//!   isotropic Jeans dispersion of its NFW profile (`halo::nfw::jeans_sigma_dimensionless`) and
//!   ln Lambda = ln(1 + M_container(<r)/m).
//! * **Tides and stripping.** The tidal radius uses the strongest tide along the chain: the
//!   largest Omega^2 - d^2 Phi/dr^2 among the container, the haloes around it and the host, each
//!   measured from that halo's centre; the stripping time-scale is that halo's local
//!   dynamical time.
//! * **Leaving the parent.** When the child lies beyond the container's tidal radius and
//!   beyond the container's bound matter (the truncation radius of its stripped profile, where
//!   the enclosed mass reaches the bound mass), once the container is itself inside another
//!   halo; or when the container is disrupted or merges. The container's own matter beyond its
//!   tidal radius is removed over the local dynamical time (the stripping model), not at once;
//!   a child orbiting in that matter leaves with it, not before. (Releasing children the
//!   moment they crossed the instantaneous tidal radius, as this model first did, freed groups
//!   as soon as they entered a larger halo, so children of mass ratio ~0.2 that would have
//!   merged with their parent survived on their own: 20% of the faint satellites had been
//!   inside another halo at z > 6, against 11% now; docs/validation.md.)
//! * **Merging with the parent's centre.** A child heavy enough to feel friction whose
//!   distance from its container's centre falls below its own tidal (bound) radius: the
//!   container's centre lies inside the child's bound body, and the two are one object.

use std::cell::Cell;

use super::friction;
use super::integrate::{State, Vec3};
use crate::constants::G_KPC3_PER_MSUN_GYR2 as G;
use crate::halo::nfw::{jeans_sigma_dimensionless, mu};
use crate::host::EvolvingHost;

/// The halo a subhalo orbits.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Frame {
    Host,
    /// Another subhalo, by its index in the host's accretion list.
    Sub(usize),
}

/// One accepted point of a trajectory.
#[derive(Debug, Clone, Copy)]
pub struct Point {
    pub t: f64,
    /// Position (kpc) and velocity (kpc/Gyr) relative to the container.
    pub y: State,
    /// Acceleration there (kpc/Gyr^2).
    pub a: Vec3,
    /// Bound mass (Msun) and its NFW profile (M_s = 4 pi rho_s r_s^3, r_s).
    pub m: f64,
    pub m_s: f64,
    pub r_s: f64,
    /// Tidal radius (kpc); infinite before the first step.
    pub r_t: f64,
}

/// Points in one container's frame.
#[derive(Debug, Clone)]
pub struct Segment {
    pub frame: Frame,
    pub pts: Vec<Point>,
}

/// A field halo's profile at one time (before it fell into anything).
#[derive(Debug, Clone, Copy)]
pub struct FieldPoint {
    pub t: f64,
    pub m_vir: f64,
    pub r_vir: f64,
    pub m_s: f64,
    pub r_s: f64,
}

/// What children need of a subhalo that has been followed: its profile before its infall
/// and its trajectory after.
#[derive(Debug, Clone, Default)]
pub struct Body {
    /// Field profile at the times its children fell in and at its own infall, in time order.
    pub field: Vec<FieldPoint>,
    /// Its infall into its first container (start of the trajectory).
    pub t_start: f64,
    pub segs: Vec<Segment>,
    /// Disrupted or merged at the end of its trajectory (otherwise it lasts to the end).
    pub dead: bool,
}

/// The profile of a halo at one time: NFW (M_s, r_s), enclosed mass capped at `m_cap`.
#[derive(Debug, Clone, Copy)]
pub struct Profile {
    pub m_s: f64,
    pub r_s: f64,
    pub m_cap: f64,
    /// Tidal radius (kpc), infinite in the field.
    pub r_t: f64,
}

impl Profile {
    /// Enclosed mass at r (Msun).
    #[inline]
    pub fn mass(&self, r: f64) -> f64 {
        (self.m_s * mu(r / self.r_s)).min(self.m_cap)
    }

    /// Acceleration at x relative to the centre, kpc/Gyr^2 (finite at the centre).
    #[inline]
    pub fn accel(&self, x: Vec3) -> Vec3 {
        let r2 = x[0] * x[0] + x[1] * x[1] + x[2] * x[2];
        let r = r2.sqrt().max(1e-12);
        let g = -G * self.mass(r) / (r2.max(1e-24) * r);
        [g * x[0], g * x[1], g * x[2]]
    }

    /// Whether r lies beyond the bound matter: the NFW mass inside r has reached the cap (the
    /// truncation radius of the stripped profile).
    #[inline]
    pub fn beyond_bound_matter(&self, r: f64) -> bool {
        self.m_s * mu(r / self.r_s) >= self.m_cap
    }

    /// Density at r (zero where the mass has reached the cap), Msun/kpc^3.
    #[inline]
    pub fn density(&self, r: f64) -> f64 {
        let x = r / self.r_s;
        if self.m_s * mu(x) >= self.m_cap {
            return 0.0;
        }
        self.m_s / (4.0 * std::f64::consts::PI * self.r_s.powi(3)) / (x * (1.0 + x) * (1.0 + x))
    }

    /// One-dimensional velocity dispersion at r (kpc/Gyr), of the untruncated profile.
    #[inline]
    pub fn sigma(&self, r: f64) -> f64 {
        (G * self.m_s / self.r_s).sqrt() * jeans_sigma_dimensionless(r / self.r_s)
    }

    /// (M(<r), Omega^2 - d^2 Phi/dr^2) for relative position x and velocity v: the spherical
    /// d^2 Phi/dr^2 = 4 pi G rho - 2 G M/r^3.
    #[inline]
    pub fn tidal_terms(&self, x: Vec3, v: Vec3) -> (f64, f64) {
        let r2 = dot(x, x).max(1e-24);
        let r = r2.sqrt();
        // one evaluation of m(x) for the mass and the density (zero beyond the cap)
        let xs = r / self.r_s;
        let m_nfw = self.m_s * mu(xs);
        let (m, four_pi_rho) = if m_nfw >= self.m_cap {
            (self.m_cap, 0.0)
        } else {
            (
                m_nfw,
                self.m_s / (self.r_s.powi(3) * xs * (1.0 + xs) * (1.0 + xs)),
            )
        };
        let d2phi = G * four_pi_rho - 2.0 * G * m / (r2 * r);
        let l = cross(x, v);
        (m, dot(l, l) / (r2 * r2) - d2phi)
    }
}

#[inline]
pub(crate) fn dot(a: Vec3, b: Vec3) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

#[inline]
pub(crate) fn cross(a: Vec3, b: Vec3) -> Vec3 {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}

#[inline]
fn add(a: Vec3, b: Vec3) -> Vec3 {
    [a[0] + b[0], a[1] + b[1], a[2] + b[2]]
}

/// Quintic Hermite interpolation between two points from positions, velocities and
/// accelerations at both ends: position to O(h^6), velocity to O(h^5). Returns the state at t.
#[inline]
pub fn interpolate(p0: &Point, p1: &Point, t: f64) -> State {
    let h = p1.t - p0.t;
    if h <= 0.0 {
        return p1.y;
    }
    let s = ((t - p0.t) / h).clamp(0.0, 1.0);
    let (s2, s3) = (s * s, s * s * s);
    let (s4, s5) = (s3 * s, s3 * s2);
    // basis (value) and derivatives d/ds
    let h0 = 1.0 - 10.0 * s3 + 15.0 * s4 - 6.0 * s5;
    let h1 = s - 6.0 * s3 + 8.0 * s4 - 3.0 * s5;
    let h2 = 0.5 * (s2 - 3.0 * s3 + 3.0 * s4 - s5);
    let h3 = 0.5 * (s3 - 2.0 * s4 + s5);
    let h4 = -4.0 * s3 + 7.0 * s4 - 3.0 * s5;
    let h5 = 10.0 * s3 - 15.0 * s4 + 6.0 * s5;
    let d0 = -30.0 * s2 + 60.0 * s3 - 30.0 * s4;
    let d1 = 1.0 - 18.0 * s2 + 32.0 * s3 - 15.0 * s4;
    let d2 = 0.5 * (2.0 * s - 9.0 * s2 + 12.0 * s3 - 5.0 * s4);
    let d3 = 0.5 * (3.0 * s2 - 8.0 * s3 + 5.0 * s4);
    let d4 = -12.0 * s2 + 28.0 * s3 - 15.0 * s4;
    let d5 = -d0;
    let hh = h * h;
    let mut out = [0.0; 6];
    for i in 0..3 {
        let (x0, v0, a0) = (p0.y[i], p0.y[i + 3], p0.a[i]);
        let (x1, v1, a1) = (p1.y[i], p1.y[i + 3], p1.a[i]);
        out[i] = h0 * x0 + h1 * h * v0 + h2 * hh * a0 + h5 * x1 + h4 * h * v1 + h3 * hh * a1;
        out[i + 3] =
            (d0 * x0 + d1 * h * v0 + d2 * hh * a0 + d5 * x1 + d4 * h * v1 + d3 * hh * a1) / h;
    }
    out
}

/// Position only (the right-hand sides of children need no velocities).
#[inline]
pub fn interpolate_pos(p0: &Point, p1: &Point, t: f64) -> Vec3 {
    let h = p1.t - p0.t;
    if h <= 0.0 {
        return [p1.y[0], p1.y[1], p1.y[2]];
    }
    let s = ((t - p0.t) / h).clamp(0.0, 1.0);
    let (s2, s3) = (s * s, s * s * s);
    let (s4, s5) = (s3 * s, s3 * s2);
    let h0 = 1.0 - 10.0 * s3 + 15.0 * s4 - 6.0 * s5;
    let h1 = s - 6.0 * s3 + 8.0 * s4 - 3.0 * s5;
    let h2 = 0.5 * (s2 - 3.0 * s3 + 3.0 * s4 - s5);
    let h3 = 0.5 * (s3 - 2.0 * s4 + s5);
    let h4 = -4.0 * s3 + 7.0 * s4 - 3.0 * s5;
    let h5 = 10.0 * s3 - 15.0 * s4 + 6.0 * s5;
    let hh = h * h;
    std::array::from_fn(|i| {
        h0 * p0.y[i]
            + h1 * h * p0.y[i + 3]
            + h2 * hh * p0.a[i]
            + h5 * p1.y[i]
            + h4 * h * p1.y[i + 3]
            + h3 * hh * p1.a[i]
    })
}

impl Body {
    /// Field profile at time t (interpolated linearly between the field points; clamped).
    pub fn field_profile(&self, t: f64) -> Profile {
        self.field_profile_from(&Cell::new(0), t)
    }

    /// `field_profile` with a cursor into the field points (amortised O(1) look-ups).
    #[inline]
    fn field_profile_from(&self, cursor: &Cell<usize>, t: f64) -> Profile {
        let f = &self.field;
        let n = f.len();
        let mut k = cursor.get().min(n);
        while k < n && f[k].t <= t {
            k += 1;
        }
        while k > 0 && f[k - 1].t > t {
            k -= 1;
        }
        cursor.set(k);
        let (m_s, r_s) = if k == 0 {
            (f[0].m_s, f[0].r_s)
        } else if k >= f.len() {
            (f[f.len() - 1].m_s, f[f.len() - 1].r_s)
        } else {
            let (a, b) = (f[k - 1], f[k]);
            let w = if b.t > a.t {
                (t - a.t) / (b.t - a.t)
            } else {
                1.0
            };
            (a.m_s + w * (b.m_s - a.m_s), a.r_s + w * (b.r_s - a.r_s))
        };
        Profile {
            m_s,
            r_s,
            m_cap: f64::INFINITY,
            r_t: f64::INFINITY,
        }
    }

    /// Virial mass and radius of the field halo at time t (for a child's infall orbit).
    pub fn field_virial(&self, t: f64) -> (f64, f64) {
        let f = &self.field;
        let k = f.partition_point(|p| p.t <= t);
        if k == 0 {
            return (f[0].m_vir, f[0].r_vir);
        }
        if k >= f.len() {
            let p = f[f.len() - 1];
            return (p.m_vir, p.r_vir);
        }
        let (a, b) = (f[k - 1], f[k]);
        let w = if b.t > a.t {
            (t - a.t) / (b.t - a.t)
        } else {
            1.0
        };
        (
            (a.m_vir.ln() + w * (b.m_vir.ln() - a.m_vir.ln())).exp(),
            a.r_vir + w * (b.r_vir - a.r_vir),
        )
    }

    /// Time of its last point (death, or the end of the run).
    pub fn t_last(&self) -> f64 {
        self.segs
            .last()
            .and_then(|s| s.pts.last())
            .map(|p| p.t)
            .unwrap_or(self.t_start)
    }

    /// The segment that continues after t (first.t <= t < last.t, or the last segment at its
    /// end).
    pub fn segment_after(&self, t: f64) -> Option<usize> {
        if t < self.t_start || self.segs.is_empty() {
            return None;
        }
        for (k, s) in self.segs.iter().enumerate() {
            let (a, b) = (s.pts[0].t, s.pts[s.pts.len() - 1].t);
            if t >= a && t < b {
                return Some(k);
            }
        }
        let k = self.segs.len() - 1;
        (t <= self.t_last()).then_some(k)
    }
}

/// One halo of a chain: a body, the points of the segment of its trajectory in use (None:
/// in the field) and that segment's frame, and the index of the point interval (or field
/// point) last used.
#[derive(Debug)]
struct Link<'a> {
    index: usize,
    body: &'a Body,
    seg: Option<(&'a [Point], Frame)>,
    cursor: Cell<usize>,
}

/// The haloes around a subhalo's container while none of them changes frame: links[0] is
/// the container; each link with a segment orbits the next; the last is in the field or
/// orbits the host (`host`).
#[derive(Debug)]
pub struct Chain<'a> {
    links: Vec<Link<'a>>,
    pub host: bool,
    /// The chain is valid up to this time (the first change of frame, infall or end of one
    /// of its haloes).
    pub valid_until: f64,
    /// The container's profile at the last time asked (the right-hand side and the per-step
    /// work ask for the same time several times).
    cache: Cell<(f64, Profile)>,
}

/// Locate the point interval of `pts` containing t from a cursor (amortised O(1) for
/// nearly monotone look-ups).
#[inline]
fn locate(pts: &[Point], cursor: &Cell<usize>, t: f64) -> usize {
    let n = pts.len();
    if n < 2 {
        return 0;
    }
    let mut k = cursor.get().min(n - 2);
    while k + 2 < n && pts[k + 1].t < t {
        k += 1;
    }
    while k > 0 && pts[k].t > t {
        k -= 1;
    }
    cursor.set(k);
    k
}

impl<'a> Chain<'a> {
    /// The chain of haloes around `container` at time t (bodies: every subhalo followed so
    /// far; the container and all haloes around it are complete).
    pub fn build(bodies: &'a [Option<Body>], container: usize, t: f64) -> Self {
        let mut links = Vec::with_capacity(4);
        let mut valid = f64::INFINITY;
        let mut cur = container;
        let mut host = false;
        loop {
            let b = bodies[cur]
                .as_ref()
                .expect("a container is followed before what it contains");
            match b.segment_after(t) {
                None => {
                    valid = valid.min(b.t_start);
                    links.push(Link {
                        index: cur,
                        body: b,
                        seg: None,
                        cursor: Cell::new(0),
                    });
                    break;
                }
                Some(k) => {
                    let seg = &b.segs[k];
                    valid = valid.min(seg.pts[seg.pts.len() - 1].t);
                    let c = seg.pts.partition_point(|p| p.t <= t).saturating_sub(1);
                    links.push(Link {
                        index: cur,
                        body: b,
                        seg: Some((&seg.pts, seg.frame)),
                        cursor: Cell::new(c),
                    });
                    match seg.frame {
                        Frame::Host => {
                            host = true;
                            break;
                        }
                        Frame::Sub(d) => cur = d,
                    }
                }
            }
        }
        let nan = Profile {
            m_s: f64::NAN,
            r_s: f64::NAN,
            m_cap: f64::NAN,
            r_t: f64::NAN,
        };
        Self {
            links,
            host,
            valid_until: valid,
            cache: Cell::new((f64::NAN, nan)),
        }
    }

    /// The container's index.
    pub fn container(&self) -> usize {
        self.links[0].index
    }

    /// The container is itself inside another halo (it has a tidal radius).
    pub fn container_inside(&self) -> bool {
        self.links[0].seg.is_some()
    }

    /// End of the container's point interval that contains t (children's steps stop there,
    /// so that they resolve the container's own orbit); infinite for a field container.
    pub fn container_next_point(&self, t: f64) -> f64 {
        let l = &self.links[0];
        match l.seg {
            None => f64::INFINITY,
            Some((pts, _)) => {
                let i = locate(pts, &l.cursor, t);
                if pts.len() < 2 {
                    return f64::INFINITY;
                }
                if pts[i + 1].t > t {
                    pts[i + 1].t
                } else {
                    // t is the interval's end: the next one's
                    pts.get(i + 2).map(|p| p.t).unwrap_or(f64::INFINITY)
                }
            }
        }
    }

    /// Profile of link j at time t.
    #[inline]
    fn profile(&self, j: usize, t: f64) -> Profile {
        if j == 0 {
            let (tc, p) = self.cache.get();
            if tc == t {
                return p;
            }
        }
        let l = &self.links[j];
        let p = match l.seg {
            None => l.body.field_profile_from(&l.cursor, t),
            Some((pts, _)) => {
                let i = locate(pts, &l.cursor, t);
                if pts.len() < 2 {
                    let p = pts[0];
                    Profile {
                        m_s: p.m_s,
                        r_s: p.r_s,
                        m_cap: p.m,
                        r_t: p.r_t,
                    }
                } else {
                    let (p0, p1) = (&pts[i], &pts[i + 1]);
                    let w = ((t - p0.t) / (p1.t - p0.t)).clamp(0.0, 1.0);
                    Profile {
                        m_s: p0.m_s + w * (p1.m_s - p0.m_s),
                        r_s: p0.r_s + w * (p1.r_s - p0.r_s),
                        m_cap: p0.m + w * (p1.m - p0.m),
                        r_t: p1.r_t,
                    }
                }
            }
        };
        if j == 0 {
            self.cache.set((t, p));
        }
        p
    }

    /// Position of link j relative to link j+1 (or the host) at time t.
    #[inline]
    fn rel_pos(&self, j: usize, t: f64) -> Vec3 {
        let l = &self.links[j];
        let pts = l.seg.expect("a link in a frame").0;
        let i = locate(pts, &l.cursor, t);
        if pts.len() < 2 {
            return [pts[0].y[0], pts[0].y[1], pts[0].y[2]];
        }
        interpolate_pos(&pts[i], &pts[i + 1], t)
    }

    /// State of link j relative to link j+1 (or the host) at time t.
    #[inline]
    fn rel_state(&self, j: usize, t: f64) -> State {
        let l = &self.links[j];
        let pts = l.seg.expect("a link in a frame").0;
        let i = locate(pts, &l.cursor, t);
        if pts.len() < 2 {
            return pts[0].y;
        }
        interpolate(&pts[i], &pts[i + 1], t)
    }

    /// The container's mass at t: its virial mass in the field (interpolated linearly), its
    /// bound mass inside another halo.
    pub fn container_mass(&self, t: f64) -> f64 {
        let l = &self.links[0];
        match l.seg {
            Some(_) => self.profile(0, t).m_cap,
            None => {
                let f = &l.body.field;
                // the cursor is kept by `profile` (the first point after t)
                let _ = self.profile(0, t);
                let k = l.cursor.get();
                if k == 0 {
                    f[0].m_vir
                } else if k >= f.len() {
                    f[f.len() - 1].m_vir
                } else {
                    let (a, b) = (f[k - 1], f[k]);
                    let w = if b.t > a.t {
                        (t - a.t) / (b.t - a.t)
                    } else {
                        1.0
                    };
                    a.m_vir + w * (b.m_vir - a.m_vir)
                }
            }
        }
    }

    /// The container's profile at t.
    pub fn container_profile(&self, t: f64) -> Profile {
        self.profile(0, t)
    }

    /// Gravitational acceleration of a child at position x relative to the container at time
    /// t (container's pull plus the differential pull of every halo around it and the host).
    pub fn accel(&self, host: &EvolvingHost, t: f64, x: Vec3) -> Vec3 {
        let a = self.profile(0, t).accel(x);
        self.add_tides(host, t, x, a)
    }

    /// Dynamical friction of the container's halo on a child of mass m at relative state y
    /// (Coulomb logarithm ll; zero when ll <= 0 or beyond the container's truncation).
    #[inline]
    pub fn friction(&self, t: f64, y: &State, m: f64, ll: f64) -> Vec3 {
        if ll <= 0.0 || m <= 0.0 {
            return [0.0; 3];
        }
        let p = self.profile(0, t);
        let r = (y[0] * y[0] + y[1] * y[1] + y[2] * y[2]).sqrt();
        let rho = p.density(r);
        if rho <= 0.0 {
            return [0.0; 3];
        }
        friction::acceleration([y[3], y[4], y[5]], rho, p.sigma(r), m, ll)
    }

    /// Add the differential pull of the haloes around the container and of the host.
    #[inline]
    fn add_tides(&self, host: &EvolvingHost, t: f64, x: Vec3, mut a: Vec3) -> Vec3 {
        let mut s = [0.0; 3];
        let n = self.links.len();
        for j in 1..n {
            s = add(s, self.rel_pos(j - 1, t));
            let p = self.profile(j, t);
            let g1 = p.accel(add(x, s));
            let g0 = p.accel(s);
            for i in 0..3 {
                a[i] += g1[i] - g0[i];
            }
        }
        if self.host {
            s = add(s, self.rel_pos(n - 1, t));
            let g = host.tide_across(t, s, x);
            for i in 0..3 {
                a[i] += g[i];
            }
        }
        a
    }

    /// The container's state in the host frame at time t (None before the chain reaches the
    /// host), summed along the chain.
    pub fn container_in_host(&self, t: f64) -> Option<State> {
        if !self.host {
            return None;
        }
        let mut s = [0.0; 6];
        for j in 0..self.links.len() {
            let y = self.rel_state(j, t);
            for i in 0..6 {
                s[i] += y[i];
            }
        }
        Some(s)
    }

    /// The container's state relative to the halo it orbits at t (None in the field), and
    /// that halo.
    pub fn container_state(&self, t: f64) -> Option<(State, Frame)> {
        let frame = self.links[0].seg?.1;
        Some((self.rel_state(0, t), frame))
    }

    /// The strongest tide on a child at relative state y (position, velocity relative to the
    /// container) among the container and the haloes around it (the host is handled by the
    /// caller): (Omega^2 - d^2 Phi/dr^2, distance from that halo's centre, that halo's mass
    /// inside that distance), and the container's mass inside |x|.
    pub fn strongest_tide(&self, t: f64, y: &State) -> Tide {
        let x = [y[0], y[1], y[2]];
        let v = [y[3], y[4], y[5]];
        let p0 = self.profile(0, t);
        let (m0, d0) = p0.tidal_terms(x, v);
        let mut best = Tide {
            denom: d0,
            r: dot(x, x).sqrt(),
            m_enc: m0,
            m_container: m0,
        };
        let mut s = [0.0; 6];
        for j in 1..self.links.len() {
            let rel = self.rel_state(j - 1, t);
            for i in 0..6 {
                s[i] += rel[i];
            }
            let xs = [x[0] + s[0], x[1] + s[1], x[2] + s[2]];
            let vs = [v[0] + s[3], v[1] + s[4], v[2] + s[5]];
            let (m, d) = self.profile(j, t).tidal_terms(xs, vs);
            if d > best.denom {
                best.denom = d;
                best.r = dot(xs, xs).sqrt();
                best.m_enc = m;
            }
        }
        best
    }
}

/// The strongest tide on a subhalo (see `Chain::strongest_tide`).
#[derive(Debug, Clone, Copy)]
pub struct Tide {
    pub denom: f64,
    pub r: f64,
    pub m_enc: f64,
    pub m_container: f64,
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The quintic Hermite interpolant reproduces a quintic polynomial exactly (its degree),
    /// position and velocity.
    #[test]
    fn quintic_hermite_is_exact_for_quintics() {
        let x = |t: f64| {
            1.0 + 2.0 * t - 0.5 * t * t + 0.3 * t.powi(3) - 0.2 * t.powi(4) + 0.1 * t.powi(5)
        };
        let v = |t: f64| 2.0 - t + 0.9 * t * t - 0.8 * t.powi(3) + 0.5 * t.powi(4);
        let a = |t: f64| -1.0 + 1.8 * t - 2.4 * t * t + 2.0 * t.powi(3);
        let pt = |t: f64| Point {
            t,
            y: [x(t), 0.0, 0.0, v(t), 0.0, 0.0],
            a: [a(t), 0.0, 0.0],
            m: 1.0,
            m_s: 1.0,
            r_s: 1.0,
            r_t: 1.0,
        };
        let (p0, p1) = (pt(0.3), pt(1.7));
        for k in 0..=10 {
            let t = 0.3 + 1.4 * k as f64 / 10.0;
            let y = interpolate(&p0, &p1, t);
            assert!((y[0] - x(t)).abs() < 1e-12, "x at {t}");
            assert!((y[3] - v(t)).abs() < 1e-11, "v at {t}");
            assert!((interpolate_pos(&p0, &p1, t)[0] - x(t)).abs() < 1e-12);
        }
    }

    /// The truncated profile: M(<r) = M_s m(r/r_s) up to the cap, density zero beyond; the
    /// tidal denominator for a point mass on a circular orbit (a profile whose cap lies well
    /// inside r) is Omega^2 + 2GM/r^3 = 3GM/r^3 (King 1962 / Jacobi).
    #[test]
    fn truncated_profile() {
        let p = Profile {
            m_s: 1e10,
            r_s: 1.0,
            m_cap: 5e9,
            r_t: 10.0,
        };
        assert!((p.mass(0.5) / (1e10 * mu(0.5)) - 1.0).abs() < 1e-14);
        assert_eq!(p.mass(100.0), 5e9);
        assert_eq!(p.density(100.0), 0.0);
        let r = 50.0;
        let vc = (G * 5e9 / r).sqrt();
        let (m, d) = p.tidal_terms([r, 0.0, 0.0], [0.0, vc, 0.0]);
        assert_eq!(m, 5e9);
        assert!((d / (3.0 * G * 5e9 / r.powi(3)) - 1.0).abs() < 1e-12);
    }
}
