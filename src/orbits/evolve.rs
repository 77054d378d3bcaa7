//! Evolving every accreted subhalo of one host: initial orbit at the host's virial radius,
//! integration with dynamical friction and tidal stripping, disruption under two models, and
//! the events along the orbit. Higher-order subhaloes ride with their parent until the
//! parent's tidal radius shrinks inside their orbit (or the parent is disrupted); then they
//! orbit the host from the parent's position and velocity.

use std::cell::RefCell;
use std::rc::Rc;

use rand::Rng;

use super::friction;
use super::initial::{initial_state, Li20};
use super::integrate::{Dopri5, Rkn6, State, Tolerances, Vec3};
use super::stripping::{Stripping, SubhaloStructure};
use super::OrbitOptions;
use crate::constants::{G_KPC3_PER_MSUN_GYR2 as G, KMS_IN_KPC_PER_GYR as KMS};
use crate::halo::concentration::{c_of_m, ConcentrationModel};
use crate::halo::MassDefinition;
use crate::host::{EvolvingHost, Potential};
use crate::linear::LinearTheory;
use crate::trees::HostHistory;

/// What became of a subhalo by the end of the run.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[repr(u8)]
pub enum SubhaloStatus {
    /// Bound and orbiting the host (or outside it as a backsplash object).
    Surviving = 0,
    /// Bound fraction (or tidal radius) fell below the physical threshold.
    DisruptedPhysical = 1,
    /// Still inside its parent subhalo at the end (never released).
    InParent = 2,
}

/// One subhalo's history and final state.
#[derive(Debug, Clone, PartialEq)]
pub struct SubhaloResult {
    pub branch: u32,
    pub order: u16,
    pub group: u32,
    /// Branch it fell into (0 = host main branch).
    pub parent_branch: u32,
    pub m_infall_msun: f64,
    pub m_peak_msun: f64,
    pub t_peak_gyr: f64,
    /// Merger time into whatever halo it fell into first (tree).
    pub t_infall_gyr: f64,
    /// Mass of the halo it fell into then (the host's main branch for order 1), Msun.
    pub m_host_at_infall_msun: f64,
    /// First crossing of the host's virial radius (its group's merger with the main branch).
    pub t_first_host_infall_gyr: f64,
    /// Last inward crossing of the evolving virial radius.
    pub t_last_host_infall_gyr: f64,
    /// When it left its parent to orbit the host (NaN for order 1 or if never).
    pub t_release_gyr: f64,
    pub n_pericentres: u32,
    pub t_peri_first_gyr: f64,
    pub r_peri_first_kpc: f64,
    pub r_peri_min_kpc: f64,
    pub t_peri_last_gyr: f64,
    pub r_peri_last_kpc: f64,
    pub r_apo_last_kpc: f64,
    pub n_host_crossings: u32,
    pub t_disrupt_physical_gyr: f64,
    pub t_disrupt_pericentre_gyr: f64,
    pub pos_kpc: [f64; 3],
    pub vel_kms: [f64; 3],
    pub r_kpc: f64,
    pub m_bound_msun: f64,
    pub vmax_kms: f64,
    pub rmax_kpc: f64,
    pub vmax_infall_kms: f64,
    pub backsplash: bool,
    pub status: SubhaloStatus,
}

#[inline]
fn norm(a: [f64; 3]) -> f64 {
    (a[0] * a[0] + a[1] * a[1] + a[2] * a[2]).sqrt()
}

#[inline]
fn dot(a: [f64; 3], b: [f64; 3]) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

#[inline]
fn pos(y: &State) -> [f64; 3] {
    [y[0], y[1], y[2]]
}

#[inline]
fn vel(y: &State) -> [f64; 3] {
    [y[3], y[4], y[5]]
}

/// Coulomb logarithm at the satellite's position (held fixed over one integrator step: it
/// changes only logarithmically with radius).
#[inline]
fn coulomb_log_at(host: &EvolvingHost, t: f64, y: &State, m: f64) -> f64 {
    let s = host.snapshot(t);
    friction::coulomb_log(s.mass_enclosed(norm(pos(y))), m)
}

/// Cost accounting for `examples/orbit_cost.rs` (feature `orbit-profile`): right-hand sides
/// evaluated on this thread, and each subhalo's share with its result.
#[cfg(feature = "orbit-profile")]
pub mod profile {
    use std::cell::{Cell, RefCell};
    /// Kinds of step, by the smaller distance from the host's centre at its two ends and by
    /// whether it crossed the disc plane or ended within 0.5 kpc of it.
    pub const STEP_KINDS: [&str; 7] = [
        "r < 10 kpc, at the disc plane",
        "r < 10 kpc, away from it",
        "10-30 kpc, at the disc plane",
        "10-30 kpc, away from it",
        "30-100 kpc",
        ">= 100 kpc",
        "with friction",
    ];
    /// The kind of a step from y0 to y1 (`STEP_KINDS`).
    pub fn step_kind(y0: &super::State, y1: &super::State, friction: bool) -> usize {
        let r = super::norm(super::pos(y0)).min(super::norm(super::pos(y1)));
        let plane = (y0[2] < 0.0) != (y1[2] < 0.0) || y0[2].abs().min(y1[2].abs()) < 0.5;
        match () {
            _ if friction => 6,
            _ if r < 10.0 => usize::from(!plane),
            _ if r < 30.0 => 2 + usize::from(!plane),
            _ if r < 100.0 => 4,
            _ => 5,
        }
    }
    thread_local! {
        pub static RHS_COUNT: Cell<u64> = const { Cell::new(0) };
        pub static PER_SUBHALO: RefCell<Vec<(u64, super::SubhaloResult)>> =
            const { RefCell::new(Vec::new()) };
        /// Per kind of step (`STEP_KINDS`): right-hand sides, accepted steps, summed length.
        pub static BY_STEP: RefCell<[(u64, u64, f64); 7]> =
            const { RefCell::new([(0, 0, 0.0); 7]) };
    }
}

/// Right-hand side: host gravity plus friction on mass m with Coulomb logarithm `ll`
/// (friction off when `ll` <= 0).
#[inline]
fn rhs(host: &EvolvingHost, ll: f64, m: f64, t: f64, y: &State) -> State {
    rhs_parts(host, ll, m, t, y).0
}

/// `rhs` and its friction part.
#[inline]
fn rhs_parts(host: &EvolvingHost, ll: f64, m: f64, t: f64, y: &State) -> (State, Vec3) {
    #[cfg(feature = "orbit-profile")]
    profile::RHS_COUNT.with(|c| c.set(c.get() + 1));
    let s = host.snapshot(t);
    let x = pos(y);
    let mut a = s.accel(x);
    let mut af = [0.0; 3];
    if ll > 0.0 && m > 0.0 {
        let r = norm(x);
        let rho = s.friction_density(r);
        let sig = host.sigma(r, t);
        af = friction::acceleration(vel(y), rho, sig, m, ll);
        a[0] += af[0];
        a[1] += af[1];
        a[2] += af[2];
    }
    ([y[3], y[4], y[5], a[0], a[1], a[2]], af)
}

/// The host's acceleration alone (the right-hand side of a test particle for `Rkn6`).
#[inline]
fn accel_free(host: &EvolvingHost, t: f64, x: &Vec3) -> Vec3 {
    #[cfg(feature = "orbit-profile")]
    profile::RHS_COUNT.with(|c| c.set(c.get() + 1));
    host.snapshot(t).accel(*x)
}

/// Cubic Hermite interpolation of r(s), s in [0, 1], from end values and derivatives
/// (dr/ds = h v_r); returns the extremum inside (s, r) if there is one.
fn hermite_extremum(r0: f64, r1: f64, d0: f64, d1: f64) -> Option<(f64, f64)> {
    // r(s) = a s^3 + b s^2 + c s + d
    let a = 2.0 * r0 - 2.0 * r1 + d0 + d1;
    let b = -3.0 * r0 + 3.0 * r1 - 2.0 * d0 - d1;
    let c = d0;
    let eval = |s: f64| ((a * s + b) * s + c) * s + r0;
    // r'(s) = 3a s^2 + 2b s + c = 0
    let roots: Vec<f64> = if a.abs() < 1e-14 * (b.abs() + c.abs()) {
        if b.abs() > 0.0 {
            vec![-c / (2.0 * b)]
        } else {
            vec![]
        }
    } else {
        let disc = 4.0 * b * b - 12.0 * a * c;
        if disc < 0.0 {
            vec![]
        } else {
            let q = disc.sqrt();
            vec![(-2.0 * b - q) / (6.0 * a), (-2.0 * b + q) / (6.0 * a)]
        }
    };
    roots
        .into_iter()
        .filter(|s| (0.0..=1.0).contains(s))
        .map(|s| (s, eval(s)))
        .next()
}

/// Events and state of one orbit while it is integrated. A subhalo released from its parent
/// starts with a copy of its parent's tracker: the pericentres and crossings it made inside
/// its parent are its own too.
#[derive(Debug, Clone, Copy)]
struct Tracker {
    n_peri: u32,
    t_peri_first: f64,
    r_peri_first: f64,
    r_peri_min: f64,
    t_peri_last: f64,
    r_peri_last: f64,
    r_apo_last: f64,
    t_last_infall: f64,
    n_cross: u32,
    been_inside: bool,
    t_disrupt_peri: f64,
    /// The next step is the first after the infall at the virial radius.
    at_start: bool,
}

impl Tracker {
    /// At the infall through the host's virial radius at `t_start`: that is the first
    /// crossing (counted here, not left to the round-off of r - R_vir = 0 at the start).
    fn new(t_start: f64) -> Self {
        Self {
            n_peri: 0,
            t_peri_first: f64::NAN,
            r_peri_first: f64::NAN,
            r_peri_min: f64::NAN,
            t_peri_last: f64::NAN,
            r_peri_last: f64::NAN,
            r_apo_last: f64::NAN,
            t_last_infall: t_start,
            n_cross: 1,
            been_inside: false,
            t_disrupt_peri: f64::NAN,
            at_start: true,
        }
    }

    /// Look for events between two accepted steps (rv0, rv1: the host's R_vir at t0 and t1).
    #[allow(clippy::too_many_arguments)]
    fn step(&mut self, t0: f64, y0: &State, t1: f64, y1: &State, rv0: f64, rv1: f64, r_cut: f64) {
        let h = t1 - t0;
        let (x0, x1) = (pos(y0), pos(y1));
        let (r0, r1) = (norm(x0), norm(x1));
        let vr0 = dot(x0, vel(y0)) / r0;
        let vr1 = dot(x1, vel(y1)) / r1;
        if (vr0 < 0.0 && vr1 >= 0.0) || (vr0 > 0.0 && vr1 <= 0.0) {
            let (s, r) = hermite_extremum(r0, r1, vr0 * h, vr1 * h).unwrap_or(if r0 < r1 {
                (0.0, r0)
            } else {
                (1.0, r1)
            });
            let t = t0 + s * h;
            if vr0 < 0.0 {
                self.n_peri += 1;
                if self.n_peri == 1 {
                    self.t_peri_first = t;
                    self.r_peri_first = r;
                }
                self.r_peri_min = if self.r_peri_min.is_nan() {
                    r
                } else {
                    self.r_peri_min.min(r)
                };
                self.t_peri_last = t;
                self.r_peri_last = r;
                if r < r_cut && self.t_disrupt_peri.is_nan() {
                    self.t_disrupt_peri = t;
                }
            } else {
                self.r_apo_last = r;
            }
        }
        let (d0, d1) = (r0 - rv0, r1 - rv1);
        if std::mem::take(&mut self.at_start) {
            // leaving the infall point: its crossing is already counted, unless the first
            // step ends outside again (the virial radius was only touched)
            if d1 < 0.0 {
                self.been_inside = true;
            } else {
                self.n_cross = 0;
            }
            return;
        }
        if d1 < 0.0 || d0 < 0.0 {
            self.been_inside = true;
        }
        if d0 >= 0.0 && d1 < 0.0 {
            // inward crossing: linear interpolation of r - R_vir
            self.n_cross += 1;
            self.t_last_infall = t0 + h * d0 / (d0 - d1);
        } else if d0 < 0.0 && d1 >= 0.0 {
            self.n_cross += 1;
        }
    }
}

/// One accepted point of an orbit and the host quantities there, computed once and shared by
/// every subhalo that follows this orbit.
#[derive(Debug, Clone, Copy)]
struct Record {
    t: f64,
    y: State,
    r_vir: f64,
    m_vir: f64,
    /// The host's spherical mass inside |x| (Msun).
    m_enc: f64,
    /// Omega^2 - d^2 Phi/dr^2 (Gyr^-2), the denominator of the tidal radius.
    denom: f64,
    /// The step that ended here was taken without dynamical friction.
    free: bool,
}

impl Record {
    fn at(host: &EvolvingHost, t: f64, y: State, free: bool) -> Self {
        let s = host.snapshot(t);
        let x = pos(&y);
        let v = vel(&y);
        let (m_enc, d2phi) = s.tidal_terms(x);
        let r2 = dot(x, x).max(1e-300);
        let l = [
            x[1] * v[2] - x[2] * v[1],
            x[2] * v[0] - x[0] * v[2],
            x[0] * v[1] - x[1] * v[0],
        ];
        Self {
            t,
            y,
            r_vir: s.r_vir,
            m_vir: s.m_vir,
            m_enc,
            denom: dot(l, l) / (r2 * r2) - d2phi,
            free,
        }
    }
}

/// An orbit through the host as a list of accepted integrator steps. A sub-subhalo leaves its
/// parent at the parent's position and velocity, so while neither feels dynamical friction
/// their orbits are the same test-particle orbit: it is integrated once and every member of
/// the group walks it, each with its own stripping, disruption and events. A member that feels
/// friction leaves the shared orbit and integrates its own.
#[derive(Debug)]
struct Path {
    recs: Vec<Record>,
    /// Steps with friction (the acceleration depends on the velocity).
    dopri: Dopri5,
    /// Steps without friction.
    rkn: Rkn6,
    /// The last step was taken without friction (by `rkn`).
    k1_free: bool,
    /// Mass and Coulomb logarithm of the last friction step.
    last_m: f64,
    last_ll: f64,
    /// The friction part of the integrator's stored derivative.
    last_friction: Vec3,
    /// Friction-free continuations branched off at a record whose next step had friction.
    branches: Vec<(usize, PathRef)>,
}

type PathRef = Rc<RefCell<Path>>;

impl Path {
    /// A path from `rec`, with tolerances `tol` and steps of at most `h_max` (Gyr).
    fn start(rec: Record, tol: Tolerances, h_max: f64) -> PathRef {
        Rc::new(RefCell::new(Self {
            recs: vec![Record { free: true, ..rec }],
            dopri: Dopri5::new(tol, 1e-3, h_max),
            rkn: Rkn6::new(tol, 1e-3, h_max),
            k1_free: false,
            last_m: f64::NAN,
            last_ll: f64::NAN,
            last_friction: [0.0; 3],
            branches: Vec::new(),
        }))
    }

    /// The friction-free continuation from record `idx` (created on first use).
    fn branch_at(&mut self, idx: usize) -> PathRef {
        if let Some((_, b)) = self.branches.iter().find(|(i, _)| *i == idx) {
            return b.clone();
        }
        let b = Self::start(self.recs[idx], self.dopri.ctl.tol, self.dopri.ctl.h_max);
        self.branches.push((idx, b.clone()));
        b
    }

    /// Append one step, without friction (`None`) or with friction on mass m and Coulomb
    /// logarithm ll (`Some((m, ll))`).
    #[inline(always)]
    fn extend(&mut self, host: &EvolvingHost, friction: Option<(f64, f64)>, t_end: f64) -> Record {
        let stale = match friction {
            None => !self.k1_free,
            Some((m, ll)) => {
                let fresh = self.k1_free || self.last_m.is_nan();
                let changed = fresh
                    || (m / self.last_m - 1.0).abs() > 1e-3
                    || (ll / self.last_ll - 1.0).abs() > 1e-3;
                let mut stale = fresh;
                if changed && !fresh {
                    // the friction force is proportional to m ln(Lambda): the stored
                    // derivative is brought to the new values by rescaling its friction part
                    // (no new evaluation)
                    let factor = (m * ll) / (self.last_m * self.last_ll);
                    // (a reset if the old values were degenerate)
                    stale = !(factor.is_finite()
                        && self
                            .dopri
                            .add_to_derivative(3, &self.last_friction, factor - 1.0));
                    for a in &mut self.last_friction {
                        *a *= factor;
                    }
                }
                if changed {
                    self.last_m = m;
                    self.last_ll = ll;
                }
                stale
            }
        };
        if stale {
            // the right-hand side changed, or the other integrator took the last step: the
            // stored first-stage derivative is stale; the step size carries over
            match friction {
                None => {
                    self.rkn.reset_derivative();
                    if self.recs.len() > 1 {
                        self.rkn.ctl.h = self.dopri.ctl.h;
                    }
                }
                Some(_) => {
                    self.dopri.reset_derivative();
                    if self.k1_free && self.recs.len() > 1 {
                        self.dopri.ctl.h = self.rkn.ctl.h;
                    }
                }
            }
        }
        let last = *self.recs.last().expect("a path has a first record");
        #[cfg(feature = "orbit-profile")]
        let before = profile::RHS_COUNT.with(|c| c.get());
        let (t1, y1) = match friction {
            None => {
                let mut f = |tt: f64, x: &Vec3| accel_free(host, tt, x);
                self.rkn.step(&mut f, last.t, &last.y, t_end)
            }
            Some(_) => {
                let (ll, m) = (self.last_ll, self.last_m);
                // the friction part of the last evaluation, that of the new point
                let mut fric = [0.0; 3];
                let mut f = |tt: f64, yy: &State| {
                    let (d, a_f) = rhs_parts(host, ll, m, tt, yy);
                    fric = a_f;
                    d
                };
                let out = self.dopri.step(&mut f, last.t, &last.y, t_end);
                self.last_friction = fric;
                out
            }
        };
        #[cfg(feature = "orbit-profile")]
        profile::BY_STEP.with(|w| {
            let n = profile::RHS_COUNT.with(|c| c.get()) - before;
            let e = &mut w.borrow_mut()[profile::step_kind(&last.y, &y1, friction.is_some())];
            e.0 += n;
            e.1 += 1;
            e.2 += t1 - last.t;
        });
        self.k1_free = friction.is_none();
        let rec = Record::at(host, t1, y1, friction.is_none());
        self.recs.push(rec);
        rec
    }
}

/// Where a sub-subhalo starts when it leaves its parent: a record of the parent's path.
#[derive(Debug, Clone)]
struct Release {
    path: PathRef,
    idx: usize,
    /// The carrier's events so far (the released subhalo was inside it for all of them).
    tracker: Tracker,
}

/// Evolve every accretion of a host. `rng` is the host's orbit stream; results come in the
/// order of `hist.accretions` (branch order), so they are reproducible bit for bit. Each
/// first-order subhalo is followed by all its descendants (depth first), so the orbits they
/// share are freed as soon as the group is done; only first-order subhaloes draw random
/// numbers, and they do so in branch order.
pub fn evolve_host_subhaloes<R: Rng>(
    lt: &LinearTheory,
    hist: &HostHistory,
    host: &EvolvingHost,
    options: &OrbitOptions,
    t_end: f64,
    rng: &mut R,
) -> Vec<SubhaloResult> {
    let cosmo = lt.cosmology();
    let accs = &hist.accretions;
    let n = accs.len();
    let li = Li20::default();
    let strip = Stripping {
        alpha: options.stripping_alpha,
    };
    let tol = Tolerances {
        rtol: options.rtol,
        atol_pos_kpc: options.rtol * 10.0,
        atol_vel_kpc_gyr: options.rtol * 10.0,
    };
    // children of each accretion (by index) and their orbit radius inside the parent
    let mut children: Vec<Vec<(usize, f64)>> = vec![Vec::new(); n];
    let mut parent: Vec<Option<usize>> = vec![None; n];
    for (i, a) in accs.iter().enumerate() {
        if a.order > 1 {
            if let Some(pi) = hist.accretion_index(a.into_branch) {
                let r_vir_p =
                    MassDefinition::Vir.radius_kpc(cosmo, a.m_host_at_infall_msun, a.z_infall);
                children[pi].push((i, options.suborbit_fraction * r_vir_p));
                parent[i] = Some(pi);
            }
        }
    }
    let mut release: Vec<Option<Release>> = vec![None; n];
    let mut out: Vec<Option<SubhaloResult>> = vec![None; n];
    let mut stack: Vec<usize> = Vec::new();
    for root in 0..n {
        if accs[root].order > 1 && parent[root].is_some() {
            continue; // visited from its parent
        }
        stack.push(root);
        while let Some(i) = stack.pop() {
            let a = &accs[i];
            let z_acc = a.z_infall;
            let c_acc = c_of_m(
                ConcentrationModel::DuttonMaccio14,
                cosmo,
                a.m_infall_msun,
                z_acc,
                MassDefinition::Vir,
            );
            let r_vir_acc = MassDefinition::Vir.radius_kpc(cosmo, a.m_infall_msun, z_acc);
            let structure = SubhaloStructure::nfw(a.m_infall_msun, r_vir_acc, c_acc);
            let mut res = SubhaloResult {
                branch: a.branch,
                order: a.order,
                group: a.group,
                parent_branch: a.into_branch,
                m_infall_msun: a.m_infall_msun,
                m_peak_msun: a.m_peak_msun,
                t_peak_gyr: a.t_peak_gyr,
                t_infall_gyr: a.t_infall_gyr,
                m_host_at_infall_msun: a.m_host_at_infall_msun,
                t_first_host_infall_gyr: a.t_host_infall_gyr,
                t_last_host_infall_gyr: a.t_host_infall_gyr,
                t_release_gyr: f64::NAN,
                n_pericentres: 0,
                t_peri_first_gyr: f64::NAN,
                r_peri_first_kpc: f64::NAN,
                r_peri_min_kpc: f64::NAN,
                t_peri_last_gyr: f64::NAN,
                r_peri_last_kpc: f64::NAN,
                r_apo_last_kpc: f64::NAN,
                n_host_crossings: 0,
                t_disrupt_physical_gyr: f64::NAN,
                t_disrupt_pericentre_gyr: f64::NAN,
                pos_kpc: [f64::NAN; 3],
                vel_kms: [f64::NAN; 3],
                r_kpc: f64::NAN,
                m_bound_msun: a.m_infall_msun,
                vmax_kms: structure.vmax_acc / KMS,
                rmax_kpc: structure.rmax_acc,
                vmax_infall_kms: structure.vmax_acc / KMS,
                backsplash: false,
                status: SubhaloStatus::Surviving,
            };
            // starting point
            let start = if a.order == 1 {
                let t_acc = a.t_infall_gyr;
                let s = host.snapshot(t_acc);
                let v_vir = (G * s.m_vir / s.r_vir).sqrt();
                let nu = lt.delta_c(z_acc) / lt.sigma(s.m_vir, z_acc);
                let zeta = a.m_infall_msun / s.m_vir;
                let (u, x) = li.sample(nu, zeta, rng);
                let y0 = initial_state(s.r_vir, v_vir, u, x, rng);
                Some(Release {
                    path: Path::start(Record::at(host, t_acc, y0, true), tol, options.max_step_gyr),
                    idx: 0,
                    tracker: Tracker::new(t_acc),
                })
            } else {
                release[i].take()
            };
            match start {
                None => {
                    // never left its parent: it sits where the parent ended, and it was
                    // inside the parent at every pericentre and crossing of the parent's
                    // orbit (a subhalo falls into its parent before the parent falls into the
                    // host), so those events are its own, the pericentre model's verdict
                    // included
                    if let Some(p) = parent[i].and_then(|p| out[p].as_ref()) {
                        res.pos_kpc = p.pos_kpc;
                        res.vel_kms = p.vel_kms;
                        res.r_kpc = p.r_kpc;
                        res.backsplash = p.backsplash;
                        res.t_last_host_infall_gyr = p.t_last_host_infall_gyr;
                        res.n_pericentres = p.n_pericentres;
                        res.t_peri_first_gyr = p.t_peri_first_gyr;
                        res.r_peri_first_kpc = p.r_peri_first_kpc;
                        res.r_peri_min_kpc = p.r_peri_min_kpc;
                        res.t_peri_last_gyr = p.t_peri_last_gyr;
                        res.r_peri_last_kpc = p.r_peri_last_kpc;
                        res.r_apo_last_kpc = p.r_apo_last_kpc;
                        res.n_host_crossings = p.n_host_crossings;
                        res.t_disrupt_pericentre_gyr = p.t_disrupt_pericentre_gyr;
                    }
                    res.status = SubhaloStatus::InParent;
                    // its children stay inside it too
                }
                Some(rel) => {
                    if a.order > 1 {
                        res.t_release_gyr = rel.path.borrow().recs[rel.idx].t;
                    }
                    #[cfg(feature = "orbit-profile")]
                    let rhs_before = profile::RHS_COUNT.with(|c| c.get());
                    let released = integrate_subhalo(
                        host,
                        options,
                        &strip,
                        &structure,
                        rel,
                        t_end,
                        &children[i],
                        &mut res,
                    );
                    for (k, r) in released {
                        release[k] = Some(r);
                    }
                    #[cfg(feature = "orbit-profile")]
                    {
                        let n = profile::RHS_COUNT.with(|c| c.get()) - rhs_before;
                        profile::PER_SUBHALO.with(|p| p.borrow_mut().push((n, res.clone())));
                    }
                }
            }
            out[i] = Some(res);
            // children next, lowest index first
            stack.extend(children[i].iter().rev().map(|&(k, _)| k));
        }
    }
    out.into_iter()
        .map(|r| r.expect("every accretion is visited once"))
        .collect()
}

/// Evolve one first-order accretion (no sub-subhaloes) from its infall to `t_end`.
pub fn evolve_subhalo<R: Rng>(
    lt: &LinearTheory,
    host: &EvolvingHost,
    options: &OrbitOptions,
    a: &crate::trees::Accretion,
    t_end: f64,
    rng: &mut R,
) -> SubhaloResult {
    let mut h = HostHistory::default();
    let mut a1 = a.clone();
    a1.order = 1;
    a1.into_branch = 0;
    a1.branch = 1;
    a1.group = 1;
    h.accretions.push(a1);
    h.set_branch_index(vec![usize::MAX, 0]);
    evolve_host_subhaloes(lt, &h, host, options, t_end, rng)
        .pop()
        .expect("one result")
}

/// Follow one subhalo from its release to t_end along its (possibly shared) path; fill `res`;
/// return the releases of its children (accretion index, where they start).
#[allow(clippy::too_many_arguments)]
fn integrate_subhalo(
    host: &EvolvingHost,
    options: &OrbitOptions,
    strip: &Stripping,
    structure: &SubhaloStructure,
    start: Release,
    t_end: f64,
    kids: &[(usize, f64)],
    res: &mut SubhaloResult,
) -> Vec<(usize, Release)> {
    let mut released = Vec::new();
    let mut pending: Vec<(usize, f64)> = kids.to_vec();
    let mut path = start.path;
    let mut idx = start.idx;
    let mut cur = path.borrow().recs[idx];
    let mut m = res.m_infall_msun;
    let mut r_t = f64::INFINITY;
    let mut prof_m = m;
    let mut prof = structure.profile(m);
    let mut tracker = start.tracker;
    let mut physical_end = false;
    // tidal mass and stripping rate at the end of the previous step
    let mut prev_tide: Option<(f64, f64)> = None;
    while cur.t < t_end {
        // Friction is negligible for m < 1e-4 M_vir (sinking times > 1e3 host dynamical times;
        // physics reference sheet sec. 9: negligible below 1e-3 within a Hubble time); below
        // that the subhalo is a test particle and can share its orbit.
        let fr = options.friction && m > 1e-4 * cur.m_vir;
        let next = if fr {
            let ll = friction::coulomb_log(cur.m_enc, m);
            if idx + 1 < path.borrow().recs.len() {
                // others walk on from here without friction: continue on a private path
                let (tol, h_max) = {
                    let p = path.borrow();
                    (p.dopri.ctl.tol, p.dopri.ctl.h_max)
                };
                path = Path::start(cur, tol, h_max);
                idx = 0;
            }
            let rec = path.borrow_mut().extend(host, Some((m, ll)), t_end);
            rec
        } else {
            let mut p = path.borrow_mut();
            if idx + 1 == p.recs.len() {
                p.extend(host, None, t_end)
            } else if p.recs[idx + 1].free {
                p.recs[idx + 1]
            } else {
                // the path's owner felt friction after this point: take the shared
                // friction-free branch
                let b = p.branch_at(idx);
                drop(p);
                path = b;
                idx = 0;
                continue;
            }
        };
        idx += 1;
        tracker.step(
            cur.t,
            &cur.y,
            next.t,
            &next.y,
            cur.r_vir,
            next.r_vir,
            options.pericentre_cut_kpc,
        );
        let h = next.t - cur.t;
        cur = next;
        if options.stripping {
            let r = norm(pos(&cur.y));
            if m != prof_m {
                prof = structure.profile(m);
                prof_m = m;
            }
            let (rt, m_t) = structure.tidal_radius_and_mass(prof, m, cur.denom, r_t);
            r_t = rt;
            let rate = 1.0 / Stripping::t_dyn(r, cur.m_enc);
            // trapezoid rule over the step for the tidal mass and the rate (second order in h)
            let (m_t_step, rate_step) = match prev_tide {
                Some((m_t0, rate0)) => (0.5 * (m_t0 + m_t), 0.5 * (rate0 + rate)),
                None => (m_t, rate),
            };
            prev_tide = Some((m_t, rate));
            m = strip.step(m, m_t_step, h, 1.0 / rate_step);
            // release children whose orbit now lies outside the tidal radius
            pending.retain(|&(k, r_orb)| {
                if r_orb > r_t {
                    released.push((
                        k,
                        Release {
                            path: path.clone(),
                            idx,
                            tracker,
                        },
                    ));
                    false
                } else {
                    true
                }
            });
            let x_b = m / structure.m_acc;
            if x_b < options.disrupt_bound_fraction
                || r_t < options.disrupt_tidal_radius_over_rs * structure.r_s_acc
            {
                res.t_disrupt_physical_gyr = cur.t;
                physical_end = true;
                break;
            }
        }
        // sunk by friction to the centre: merged with the central galaxy (with or without
        // stripping; without this check a subhalo that keeps its mass would circle the
        // centre on ever shorter orbits)
        if fr && norm(pos(&cur.y)) < options.central_merge_kpc {
            res.t_disrupt_physical_gyr = cur.t;
            physical_end = true;
            break;
        }
    }
    // remaining children leave at the end of the parent's life (if it was disrupted)
    if physical_end {
        for (k, _) in pending.drain(..) {
            released.push((
                k,
                Release {
                    path: path.clone(),
                    idx,
                    tracker,
                },
            ));
        }
    }
    let x = pos(&cur.y);
    let v = vel(&cur.y);
    let r = norm(x);
    let (vmax, rmax) = structure.vmax_rmax(m);
    res.n_pericentres = tracker.n_peri;
    res.t_peri_first_gyr = tracker.t_peri_first;
    res.r_peri_first_kpc = tracker.r_peri_first;
    res.r_peri_min_kpc = tracker.r_peri_min;
    res.t_peri_last_gyr = tracker.t_peri_last;
    res.r_peri_last_kpc = tracker.r_peri_last;
    res.r_apo_last_kpc = tracker.r_apo_last;
    res.n_host_crossings = tracker.n_cross;
    res.t_last_host_infall_gyr = tracker.t_last_infall.max(res.t_first_host_infall_gyr);
    res.t_disrupt_pericentre_gyr = tracker.t_disrupt_peri;
    res.pos_kpc = x;
    res.vel_kms = [v[0] / KMS, v[1] / KMS, v[2] / KMS];
    res.r_kpc = r;
    res.m_bound_msun = m;
    res.vmax_kms = vmax / KMS;
    res.rmax_kpc = rmax;
    res.backsplash = !physical_end && tracker.been_inside && r > cur.r_vir;
    res.status = if physical_end {
        SubhaloStatus::DisruptedPhysical
    } else {
        SubhaloStatus::Surviving
    };
    released
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
