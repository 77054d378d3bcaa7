//! One subhalo, from its infall to its end: the integrator of its orbit (gravity by the
//! Runge–Kutta–Nyström pair, dynamical friction by Strang splitting), stripping, the events of
//! its orbit in the host (`events`), release from its parent and the frames it moves through
//! (`in_parent`), disruption and mergers. `evolve` calls it for every accretion of a host.

use super::events::Tracker;
use super::evolve::{SubhaloResult, SubhaloStatus};
use super::friction;
use super::in_parent::{dot, Body, Chain, Frame, Point, Profile};
use super::integrate::{Rkn6, State, Tolerances, Vec3};
use super::stripping::{Stripping, SubhaloStructure};
use super::OrbitOptions;
use crate::constants::{G_KPC3_PER_MSUN_GYR2 as G, KMS_IN_KPC_PER_GYR as KMS};
use crate::host::{EvolvingHost, Potential};
use crate::trees::Accretion;

#[inline]
pub(crate) fn norm(a: [f64; 3]) -> f64 {
    (a[0] * a[0] + a[1] * a[1] + a[2] * a[2]).sqrt()
}

#[inline]
pub(crate) fn pos(y: &State) -> [f64; 3] {
    [y[0], y[1], y[2]]
}

#[inline]
pub(crate) fn vel(y: &State) -> [f64; 3] {
    [y[3], y[4], y[5]]
}

#[inline]
pub(crate) fn add6(a: &State, b: &State) -> State {
    let mut o = *a;
    for i in 0..6 {
        o[i] += b[i];
    }
    o
}

/// Cost accounting for `examples/orbit_cost.rs` (feature `orbit-profile`): right-hand sides
/// evaluated on this thread, and each subhalo's share with its result.
#[cfg(feature = "orbit-profile")]
pub mod profile {
    use std::cell::{Cell, RefCell};
    /// Kinds of step: by the smaller distance from the host's centre at the two ends and by
    /// whether it crossed the disc plane or ended within 0.5 kpc of it, for subhaloes of the
    /// host; steps inside another subhalo apart.
    pub const STEP_KINDS: [&str; 11] = [
        "r < 10 kpc, at the disc plane",
        "r < 10 kpc, away from it",
        "10-30 kpc, at the disc plane",
        "10-30 kpc, away from it",
        "30-100 kpc",
        ">= 100 kpc",
        "in the host, with friction",
        "in a field subhalo, no friction",
        "in a field subhalo, with friction",
        "in a subhalo in the host, no friction",
        "in a subhalo in the host, with friction",
    ];
    /// The kind of a step from y0 to y1 (`STEP_KINDS`); `in_sub`: inside a subhalo (0: no, 1:
    /// its group outside the host, 2: inside the host).
    pub fn step_kind(y0: &super::State, y1: &super::State, friction: bool, in_sub: u8) -> usize {
        if in_sub > 0 {
            return 5 + 2 * in_sub as usize + usize::from(friction);
        }
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
        pub static BY_STEP: RefCell<[(u64, u64, f64); 11]> =
            const { RefCell::new([(0, 0, 0.0); 11]) };
    }
}

#[inline(always)]
pub(crate) fn count_rhs() {
    #[cfg(feature = "orbit-profile")]
    profile::RHS_COUNT.with(|c| c.set(c.get() + 1));
}

/// Dynamical friction of the host's halo on mass m with Coulomb logarithm `ll` (zero when
/// `ll` <= 0).
#[inline]
pub(crate) fn host_friction(host: &EvolvingHost, t: f64, y: &State, m: f64, ll: f64) -> Vec3 {
    if ll <= 0.0 || m <= 0.0 {
        return [0.0; 3];
    }
    let r = norm(pos(y));
    let rho = host.snapshot(t).friction_density(r);
    let a = friction::acceleration(vel(y), rho, host.sigma(r, t), m, ll);
    match host.partner() {
        None => a,
        Some(p) => {
            let b = p.friction(t, y, m, ll);
            [a[0] + b[0], a[1] + b[1], a[2] + b[2]]
        }
    }
}

/// The host's acceleration alone (the right-hand side of a test particle for `Rkn6`).
#[inline]
pub(crate) fn accel_free(host: &EvolvingHost, t: f64, x: &Vec3) -> Vec3 {
    count_rhs();
    host.accel_at(t, *x)
}

/// The integrator of one orbit: the Runge–Kutta–Nyström pair for gravity (which depends on
/// time and position only), with dynamical friction, when it acts, added by Strang splitting
/// (half kicks at both ends of each step; `Rkn6::step_kicked`).
#[derive(Debug)]
struct Mover {
    rkn: Rkn6,
    /// Friction at the end of the last step, if it had friction, with the mass and Coulomb
    /// logarithm it was computed for (the next step starts from it: the force is
    /// proportional to m ln Lambda, so a change of either rescales it).
    kick: Option<(Vec3, f64, f64)>,
}

impl Mover {
    fn new(tol: Tolerances, h_max: f64) -> Self {
        Self {
            rkn: Rkn6::new(tol, 1e-3, h_max),
            kick: None,
        }
    }

    /// Forget the stored derivatives (the right-hand side changed discontinuously: a new
    /// frame, or a change in the haloes around the container); new tolerances.
    fn reset(&mut self, tol: Tolerances) {
        self.rkn.reset_derivative();
        self.rkn.ctl.tol = tol;
        self.kick = None;
    }

    /// One step without friction, acceleration `f`.
    fn step_free<F: FnMut(f64, &Vec3) -> Vec3>(
        &mut self,
        f: &mut F,
        t: f64,
        y: &State,
        t_stop: f64,
    ) -> (f64, State) {
        self.kick = None;
        self.rkn.step(f, t, y, t_stop)
    }

    /// One step with friction `fr(t, y, m, ll)` on mass m (Coulomb logarithm ll), gravity `f`.
    #[allow(clippy::too_many_arguments)]
    fn step_friction<F, K>(
        &mut self,
        f: &mut F,
        fr: &mut K,
        m: f64,
        ll: f64,
        t: f64,
        y: &State,
        t_stop: f64,
    ) -> (f64, State)
    where
        F: FnMut(f64, &Vec3) -> Vec3,
        K: FnMut(f64, &State, f64, f64) -> Vec3,
    {
        let k0 = match self.kick {
            Some((k, m0, l0)) if m0 * l0 > 0.0 => {
                let q = (m * ll) / (m0 * l0);
                [k[0] * q, k[1] * q, k[2] * q]
            }
            _ => fr(t, y, m, ll),
        };
        let mut kick = |tt: f64, yy: &State| {
            count_rhs();
            fr(tt, yy, m, ll)
        };
        let (t1, y1, k1) = self.rkn.step_kicked(f, &mut kick, k0, t, y, t_stop);
        self.kick = Some((k1, m, ll));
        (t1, y1)
    }

    /// The acceleration at the end of the last step (gravity and friction).
    fn acceleration(&self) -> Option<Vec3> {
        let g = self.rkn.derivative()?;
        Some(match self.kick {
            Some((k, _, _)) => [g[0] + k[0], g[1] + k[1], g[2] + k[2]],
            None => g,
        })
    }
}

/// Where and how an accretion starts: its container, its infall time and state relative to
/// the container, and the container's virial radius (kpc) and speed (kpc/Gyr) then.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Start {
    pub frame: Frame,
    pub t: f64,
    pub y: State,
    pub scale: (f64, f64),
}

/// The (R_vir, V_vir) scale of the frame an orbit continues in at time t: a subhalo's field
/// virial radius and speed, or `current` in the host's frame (or for a body that is gone).
fn frame_scale(bodies: &[Option<Body>], frame: Frame, t: f64, current: (f64, f64)) -> (f64, f64) {
    match frame {
        Frame::Sub(d) => bodies[d]
            .as_ref()
            .map(|b| b.field_virial(t))
            .map(|(mv, rv)| (rv, (G * mv / rv).sqrt()))
            .unwrap_or(current),
        Frame::Host => current,
    }
}

/// Integrator tolerances in a frame of virial radius r_vir (kpc) and speed v_vir (kpc/Gyr):
/// in the host, `rtol` with absolute tolerances rtol x 10 kpc and 10 kpc/Gyr (for a
/// Milky-Way-mass host: R_vir/30 and V_vir/13); inside a subhalo, `rtol_in_subhalo` with
/// absolute tolerances that scale in the same way with that subhalo's R_vir and V_vir.
pub(crate) fn tolerances(options: &OrbitOptions, frame: Frame, scale: (f64, f64)) -> Tolerances {
    match frame {
        Frame::Host => Tolerances {
            rtol: options.rtol,
            atol_pos_kpc: options.rtol * 10.0,
            atol_vel_kpc_gyr: options.rtol * 10.0,
        },
        Frame::Sub(_) => {
            let rtol = options.rtol_in_subhalo;
            Tolerances {
                rtol,
                atol_pos_kpc: rtol * scale.0 / 30.0,
                atol_vel_kpc_gyr: rtol * scale.1 / 13.0,
            }
        }
    }
}

/// Settings shared by every subhalo of a host.
pub(crate) struct Ctx<'a> {
    pub host: &'a EvolvingHost,
    pub options: &'a OrbitOptions,
    pub strip: Stripping,
    pub t_end: f64,
    /// The epoch at which each result records its bound mass and distance (NaN: none).
    pub t_epoch: f64,
}

/// A result with the accretion's own quantities and nothing evolved yet.
pub(crate) fn new_result(a: &Accretion, structure: &SubhaloStructure) -> SubhaloResult {
    SubhaloResult {
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
        m_reion_msun: 0.0,
        t_disrupt_disc_gyr: f64::NAN,
        t_disrupt_pericentre_gyr: f64::NAN,
        t_merge_gyr: f64::NAN,
        bound_to_branch: 0,
        pos_kpc: [f64::NAN; 3],
        vel_kms: [f64::NAN; 3],
        r_kpc: f64::NAN,
        m_bound_msun: a.m_infall_msun,
        vmax_kms: structure.vmax_acc / KMS,
        rmax_kpc: structure.rmax_acc,
        vmax_infall_kms: structure.vmax_acc / KMS,
        m_bound_at_epoch_msun: f64::NAN,
        r_at_epoch_kpc: f64::NAN,
        backsplash: false,
        status: SubhaloStatus::InHost,
        t_first_partner_infall_gyr: f64::NAN,
        n_partner_crossings: 0,
        n_partner_pericentres: 0,
        r_peri_min_partner_kpc: f64::NAN,
        r_partner_kpc: f64::NAN,
    }
}

/// The container's mass that sets the friction threshold: the host's virial mass (given), a field
/// halo's virial mass, or a subhalo's bound mass.
fn container_mass(m_vir_host: f64, chain: &Option<Chain>, t: f64) -> f64 {
    match chain {
        None => m_vir_host,
        Some(c) => c.container_mass(t),
    }
}

/// Whether an orbit at y (relative to a halo of profile p) is bound inside radius `r_out`:
/// 1/2 v^2 < Phi(r_out) - Phi(r). For the NFW potential Phi = -G M_s ln(1 + x)/r (x = r/r_s;
/// Navarro, Frenk & White 1997) the difference is G M_s [ln(1 + x)/r - ln(1 + x_out)/r_out];
/// where the stripped profile's mass cap binds, the difference is smaller, and
/// G m_cap (1/r - 1/r_out) bounds it from above, so the smaller of the two is used.
pub(crate) fn confined_within(p: &Profile, y: &State, r_out: f64) -> bool {
    let r = norm(pos(y)).max(1e-12);
    if r.is_nan() || r >= r_out {
        return false;
    }
    let nfw = G * p.m_s * ((r / p.r_s).ln_1p() / r - (r_out / p.r_s).ln_1p() / r_out);
    let capped = G * p.m_cap * (1.0 / r - 1.0 / r_out);
    let v = vel(y);
    0.5 * dot(v, v) < nfw.min(capped)
}

/// The position at time tp in [t0, t1] by cubic Hermite interpolation of the step's end
/// states (positions and velocities), with the velocity left zero: the direction of a
/// pericentre found inside a step (the disc's tide depends on the height above its plane).
fn hermite_state(t0: f64, y0: &State, t1: f64, y1: &State, tp: f64) -> State {
    let h = t1 - t0;
    if h <= 0.0 {
        return *y1;
    }
    let s = ((tp - t0) / h).clamp(0.0, 1.0);
    let (s2, s3) = (s * s, s * s * s);
    let (h00, h10, h01, h11) = (
        2.0 * s3 - 3.0 * s2 + 1.0,
        s3 - 2.0 * s2 + s,
        -2.0 * s3 + 3.0 * s2,
        s3 - s2,
    );
    let mut out = [0.0; 6];
    for k in 0..3 {
        out[k] = h00 * y0[k] + h10 * h * y0[k + 3] + h01 * y1[k] + h11 * h * y1[k + 3];
    }
    out
}

/// Whether a host-centred orbit at y is bound inside radius `r_c` about the host's centre at
/// time t: 1/2 v^2 < Phi(r_c x/|x|) - Phi(x), the potential (halo, disc, bulge, dark energy)
/// evaluated along the line from the centre through the subhalo.
pub fn confined_in_host(host: &EvolvingHost, t: f64, y: &State, r_c: f64) -> bool {
    let x = pos(y);
    let r = norm(x);
    if r.is_nan() || r >= r_c {
        return false;
    }
    let snap = host.snapshot(t);
    let edge = if r > 0.0 {
        [x[0] * r_c / r, x[1] * r_c / r, x[2] * r_c / r]
    } else {
        [r_c, 0.0, 0.0]
    };
    let v = vel(y);
    0.5 * dot(v, v) < snap.phi(edge) - snap.phi(x)
}

/// The host's tide (host at one instant) on a subhalo at host-centred state y: (Omega^2 - d^2 Phi/dr^2, host mass
/// inside |x|).
#[inline]
fn host_tide(snap: &crate::host::HostSnapshot, y: &State) -> (f64, f64) {
    let x = pos(y);
    let v = vel(y);
    let (m_enc, d2phi) = snap.tidal_terms(x);
    let r2 = dot(x, x).max(1e-300);
    let l = super::in_parent::cross(x, v);
    (dot(l, l) / (r2 * r2) - d2phi, m_enc)
}

/// The disc-tide model: at a pericentre of radius `r_p` at time `t_p` (its direction taken
/// from the host-centred state `y` at the end of the step that found it), the tide of the
/// host's disc and bulge there, `HostSnapshot::baryon_tide` (G M_b(<r)/r^3 - d^2 Phi_b/dr^2,
/// at the disc's mass and size at that time), over `disc_tide_ratio` times the subhalo's own
/// V_max^2 / R_max^2 (its mean density inside R_max, in units of 4 pi G / 3, along its tidal
/// track) for bound mass m: s. None when the closure is off or there is no disc. The subhalo
/// is destroyed if s > 1 and, with `disc_tide_loss_power` k > 0, keeps 1 - s^k of its bound
/// mass otherwise (`disc_passage`). Our closure, calibrated on the depletion a disc causes in
/// simulations (docs/methods.md).
fn disc_tide_over_density(
    s: crate::host::HostSnapshot,
    options: &OrbitOptions,
    structure: &SubhaloStructure,
    m: f64,
    r_p: f64,
    y: &State,
) -> Option<f64> {
    // (a disruption by tides: off with stripping, like the other disruptions)
    if options.disc_tide_ratio <= 0.0 || !options.stripping || !r_p.is_finite() {
        return None;
    }
    if s.m_disc <= 0.0 && s.m_bulge <= 0.0 {
        return None;
    }
    let d = pos(y);
    let n = norm(d).max(1e-12);
    let x = [d[0] * r_p / n, d[1] * r_p / n, d[2] * r_p / n];
    let (vmax, rmax) = structure.vmax_rmax(m);
    Some(s.baryon_tide(x) / (options.disc_tide_ratio * vmax * vmax / (rmax * rmax)))
}

/// What a pericentre with disc-tide ratio `s` (`disc_tide_over_density`) does to a subhalo of
/// bound mass m: None if it is destroyed (s > 1, or s = 1 with gradual losses, which would
/// strip all of it), else its bound mass after the passage.
fn disc_passage(options: &OrbitOptions, s: Option<f64>, m: f64) -> Option<f64> {
    match s {
        Some(s) if s > 1.0 => None,
        Some(s) if options.disc_tide_loss_power > 0.0 => {
            // (all of it at s = 1: destroyed there too)
            let keep = 1.0 - s.powf(options.disc_tide_loss_power);
            (keep > 0.0).then_some(m * keep)
        }
        _ => Some(m),
    }
}

/// Follow one subhalo from its infall to the end (or its death): fill `res`; return its
/// trajectory if `keep` (it has children).
#[allow(clippy::too_many_arguments)]
pub(crate) fn follow(
    ctx: &Ctx,
    bodies: &[Option<Body>],
    branch_of: &[u32],
    structure: &SubhaloStructure,
    start: &Start,
    keep: bool,
    first_order: bool,
    res: &mut SubhaloResult,
) -> Option<Body> {
    let host = ctx.host;
    let options = ctx.options;
    let t_end = ctx.t_end;
    let mut frame = start.frame;
    // the frame in which friction last acted on the subhalo (None: not yet)
    let mut friction_frame: Option<Frame> = None;
    let mut scale = start.scale;
    let mut t = start.t;
    let mut y = start.y;
    let mut m = res.m_infall_msun;
    let mut r_t = f64::INFINITY;
    let mut prof_m = m;
    let mut prof = structure.profile(m);
    let alpha_s = ctx.strip.alpha_for(structure.c_acc);
    // the mass friction acts on, from the bound mass (`friction::friction_mass`)
    let (m_acc, w_df) = (res.m_infall_msun, options.friction_mass_infall_weight);
    let df_mass = |m: f64| friction::friction_mass(m, m_acc, w_df);
    let mut mover = Mover::new(tolerances(options, frame, scale), options.max_step_gyr);
    let mut chain: Option<Chain> = match frame {
        Frame::Host => None,
        Frame::Sub(c) => Some(Chain::build(bodies, c, t)),
    };
    // the host-centred state now (None while the group is outside the host)
    let in_host = |chain: &Option<Chain>, t: f64, y: &State| -> Option<State> {
        match chain {
            None => Some(*y),
            Some(c) => c.container_in_host(t).map(|s| add6(&s, y)),
        }
    };
    let mut abs = in_host(&chain, t, &y);
    // the host's virial radius and mass at the current time
    let snap0 = host.snapshot(t);
    let (mut cur_rv, mut cur_mvir) = (snap0.r_vir, snap0.m_vir);
    let mut tracker: Option<Tracker> = if first_order {
        Some(Tracker::at_infall(t))
    } else {
        abs.map(|s| Tracker::with_group(t, norm(pos(&s)), cur_rv))
    };
    let mut segs: Vec<super::in_parent::Segment> = Vec::new();
    // the acceleration at a point where the integrator has none stored (a segment's start)
    let gravity = |chain: &Option<Chain>, t: f64, y: &State| -> Vec3 {
        match chain {
            None => host.accel_at(t, pos(y)),
            Some(c) => c.accel(host, t, pos(y)),
        }
    };
    let push_point =
        |segs: &mut Vec<super::in_parent::Segment>, frame: Frame, p: Point, new_seg: bool| {
            if new_seg || segs.is_empty() {
                segs.push(super::in_parent::Segment {
                    frame,
                    pts: vec![p],
                });
            } else {
                segs.last_mut().expect("a segment").pts.push(p);
            }
        };
    let point = |t: f64, y: State, a: Vec3, m: f64, prof: (f64, f64), r_t: f64| Point {
        t,
        y,
        a,
        m,
        m_s: prof.0,
        r_s: prof.1,
        r_t,
    };
    if keep {
        let a0 = gravity(&chain, t, &y);
        push_point(&mut segs, frame, point(t, y, a0, m, prof, r_t), true);
    }
    let mut ended: Option<SubhaloStatus> = None;
    // events about the partner, for a host of a pair (from the first step in the host)
    let mut ptracker: Option<Tracker> = None;
    // (time, state relative to the partner, its R_vir) at the end of the last step
    let mut pprev: Option<(f64, State, f64)> = None;
    // tidal mass and stripping rate at the end of the previous step
    let mut prev_tide: Option<(f64, f64)> = None;
    // the friction force needs the container's mass inside r: the host's, from the last point
    let mut m_enc_cont = match &chain {
        None => host.snapshot(t).mass_enclosed(norm(pos(&y))),
        Some(c) => c.container_profile(t).mass(norm(pos(&y))),
    };
    while t < t_end && ended.is_none() {
        // the haloes around the container changed (an infall, a release or an end): rebuild
        // the chain; if the container itself has ended, leave it
        if chain.as_ref().is_some_and(|c| t >= c.valid_until) {
            while let Frame::Sub(ci) = frame {
                let cb = bodies[ci].as_ref().expect("followed");
                if !(cb.dead && t >= cb.t_last()) {
                    break;
                }
                // the container was disrupted or merged: continue in the frame it was in
                let last_seg = cb.segs.last().expect("a trajectory");
                let p = last_seg.pts.last().expect("a point");
                y = add6(&y, &p.y);
                frame = last_seg.frame;
                scale = frame_scale(bodies, frame, t, scale);
                if res.t_release_gyr.is_nan() && res.order > 1 {
                    res.t_release_gyr = t;
                }
            }
            chain = match frame {
                Frame::Host => None,
                Frame::Sub(c) => Some(Chain::build(bodies, c, t)),
            };
            mover.reset(tolerances(options, frame, scale));
            abs = in_host(&chain, t, &y);
            if tracker.is_none() {
                tracker = abs.map(|s| Tracker::with_group(t, norm(pos(&s)), cur_rv));
            }
            if keep && segs.last().is_some_and(|s| s.frame != frame) {
                // a new frame: a new segment (the chain around the same container changing
                // needs none)
                let a0 = gravity(&chain, t, &y);
                push_point(&mut segs, frame, point(t, y, a0, m, prof, r_t), true);
            }
            prev_tide = None;
            m_enc_cont = match &chain {
                None => host.snapshot(t).mass_enclosed(norm(pos(&y))),
                Some(c) => c.container_profile(t).mass(norm(pos(&y))),
            };
        }
        let mut t_stop = t_end;
        if let Some(c) = &chain {
            t_stop = t_stop.min(c.valid_until);
            if c.host {
                // inside the host, steps end at the container's points, so that the events of
                // the host-centred orbit (the container's pericentres) are resolved
                t_stop = t_stop.min(c.container_next_point(t));
            }
            if t_stop <= t {
                // (coincident boundaries: never a step of zero length)
                t_stop = t_end.min(c.container_next_point(t)).max(t + 1e-9);
            }
        }
        // Friction is negligible for m < 1e-4 of the container's mass (sinking times > 1e3
        // dynamical times; physics reference sheet sec. 9: negligible below 1e-3 within a
        // Hubble time).
        let fr = options.friction && m > 1e-4 * container_mass(cur_mvir, &chain, t);
        let m_start = m;
        if fr {
            friction_frame = Some(frame);
        }
        #[cfg(feature = "orbit-profile")]
        let before = profile::RHS_COUNT.with(|c| c.get());
        let (t1, y1) = match (&chain, fr) {
            (None, false) => {
                let mut f = |tt: f64, x: &Vec3| accel_free(host, tt, x);
                mover.step_free(&mut f, t, &y, t_stop)
            }
            (None, true) => {
                let mf = df_mass(m);
                let ll = friction::coulomb_log(m_enc_cont, mf);
                let mut f = |tt: f64, x: &Vec3| accel_free(host, tt, x);
                let mut k =
                    |tt: f64, yy: &State, mm: f64, l: f64| host_friction(host, tt, yy, mm, l);
                mover.step_friction(&mut f, &mut k, mf, ll, t, &y, t_stop)
            }
            (Some(c), false) => {
                let mut f = |tt: f64, x: &Vec3| {
                    count_rhs();
                    c.accel(host, tt, *x)
                };
                mover.step_free(&mut f, t, &y, t_stop)
            }
            (Some(c), true) => {
                let mf = df_mass(m);
                let ll = friction::coulomb_log(m_enc_cont, mf);
                let mut f = |tt: f64, x: &Vec3| {
                    count_rhs();
                    c.accel(host, tt, *x)
                };
                let mut k = |tt: f64, yy: &State, mm: f64, l: f64| c.friction(tt, yy, mm, l);
                mover.step_friction(&mut f, &mut k, mf, ll, t, &y, t_stop)
            }
        };
        #[cfg(feature = "orbit-profile")]
        profile::BY_STEP.with(|w| {
            let n = profile::RHS_COUNT.with(|c| c.get()) - before;
            let (a0, a1) = match (&abs, &chain) {
                (Some(a0), None) => (*a0, y1),
                _ => (y, y1),
            };
            let in_sub = match &chain {
                None => 0,
                Some(c) => 1 + u8::from(c.host),
            };
            let e = &mut w.borrow_mut()[profile::step_kind(&a0, &a1, fr, in_sub)];
            e.0 += n;
            e.1 += 1;
            e.2 += t1 - t;
        });
        let h = t1 - t;
        let mut y1 = y1;
        let snap1 = host.snapshot(t1);
        let mut abs1 = in_host(&chain, t1, &y1);
        // the strongest tide and the container's mass inside r
        let (mut denom, mut r_tide, mut m_tide) = match &chain {
            None => {
                let (d, m_enc) = host_tide(&snap1, &y1);
                m_enc_cont = m_enc;
                (d, norm(pos(&y1)), m_enc)
            }
            Some(c) => {
                let tide = c.strongest_tide(t1, &y1);
                m_enc_cont = tide.m_container;
                let mut best = (tide.denom, tide.r, tide.m_enc);
                if let Some(a1) = &abs1 {
                    let (d, m_enc) = host_tide(&snap1, a1);
                    if d > best.0 {
                        best = (d, norm(pos(a1)), m_enc);
                    }
                }
                best
            }
        };
        // the partner's tide, for a host of a pair, where it is the stronger (the state
        // relative to the partner is kept for its events below)
        let mut q1: Option<State> = None;
        if let (Some(p), Some(a1)) = (host.partner(), &abs1) {
            let q = p.relative(t1, a1);
            let (d, r, m_enc) = p.tide_relative(t1, &q);
            if d > denom {
                (denom, r_tide, m_tide) = (d, r, m_enc);
            }
            q1 = Some(q);
        }
        // the tidal radius (also without stripping: it decides mergers with a parent)
        if m != prof_m {
            prof = structure.profile(m);
            prof_m = m;
        }
        let (rt, m_t) = structure.tidal_radius_and_mass(prof, m, denom, r_t);
        r_t = rt;
        if options.stripping {
            let rate = 1.0 / Stripping::t_dyn(r_tide, m_tide);
            // trapezoid rule over the step for the tidal mass and the rate (second order in h)
            let (m_t_step, rate_step) = match prev_tide {
                Some((m_t0, rate0)) => (0.5 * (m_t0 + m_t), 0.5 * (rate0 + rate)),
                None => (m_t, rate),
            };
            prev_tide = Some((m_t, rate));
            m = Stripping::step(alpha_s, m, m_t_step, h, 1.0 / rate_step);
        }
        // the friction step's closing half kick was computed for the mass and Coulomb
        // logarithm at the start of the step: bring it to those at the end (the force is
        // proportional to m ln Lambda), so that each half kick uses the mass of its own end
        // of the step (second order in the step also while the mass drops)
        if fr {
            if let Some((k1, m0, l0)) = mover.kick {
                let mf = df_mass(m);
                let ll1 = friction::coulomb_log(m_enc_cont, mf);
                let q = (mf * ll1) / (m0 * l0) - 1.0;
                if q != 0.0 && q.is_finite() {
                    for i in 0..3 {
                        let dv = 0.5 * h * q * k1[i];
                        y1[i + 3] += dv;
                        if let Some(a) = abs1.as_mut() {
                            a[i + 3] += dv;
                        }
                        if let Some(a) = q1.as_mut() {
                            a[i + 3] += dv;
                        }
                    }
                    mover.kick = Some((k1.map(|k| k * (1.0 + q)), mf, ll1));
                }
            }
        }
        // events in the host
        let mut disc_kill = None;
        if let (Some(a0), Some(a1)) = (&abs, &abs1) {
            let tr = tracker.get_or_insert_with(|| Tracker::with_group(t, norm(pos(a0)), cur_rv));
            let n_peri = tr.n_peri;
            tr.step(
                t,
                a0,
                t1,
                a1,
                cur_rv,
                snap1.r_vir,
                options.pericentre_cut_kpc,
            );
            // a new pericentre: destroyed there if the disc's and bulge's tide beats the
            // subhalo's own density, or loses mass there (`disc_tide_over_density`)
            if tr.n_peri > n_peri {
                let s = disc_tide_over_density(
                    host.snapshot(tr.t_peri_last),
                    options,
                    structure,
                    m,
                    tr.r_peri_last,
                    &hermite_state(t, a0, t1, a1, tr.t_peri_last),
                );
                match disc_passage(options, s, m) {
                    None => disc_kill = Some(tr.t_peri_last),
                    Some(m1) => m = m1,
                }
            }
            // about the partner of a pair: its virial radius, its pericentres and its disc
            if let (Some(p), Some(q1)) = (host.partner(), q1) {
                // the start of the step: the end of the last one, when it was in the host
                let (q0, rv0) = match pprev {
                    Some((tp, q, rv)) if tp == t => (q, rv),
                    _ => (p.relative(t, a0), p.host.snapshot(t).r_vir),
                };
                let rv1 = p.host.snapshot(t1).r_vir;
                pprev = Some((t1, q1, rv1));
                let ptr =
                    ptracker.get_or_insert_with(|| Tracker::with_group(t, norm(pos(&q0)), rv0));
                let n_peri = ptr.n_peri;
                ptr.step(t, &q0, t1, &q1, rv0, rv1, options.pericentre_cut_kpc);
                if ptr.n_peri > n_peri && disc_kill.is_none() {
                    let s = disc_tide_over_density(
                        p.snapshot(ptr.t_peri_last),
                        options,
                        structure,
                        m,
                        ptr.r_peri_last,
                        &hermite_state(t, &q0, t1, &q1, ptr.t_peri_last),
                    );
                    match disc_passage(options, s, m) {
                        None => disc_kill = Some(ptr.t_peri_last),
                        Some(m1) => m = m1,
                    }
                }
            }
        } else if tracker.is_none() {
            if let Some(a1) = &abs1 {
                tracker = Some(Tracker::with_group(t1, norm(pos(a1)), snap1.r_vir));
            }
        }
        // the epoch asked for (`Ctx::t_epoch`) inside this step: bound mass and distance from
        // the host's centre, linear in time between the step's ends
        if t < ctx.t_epoch && ctx.t_epoch <= t1 {
            let f = (ctx.t_epoch - t) / h;
            res.m_bound_at_epoch_msun = m_start + f * (m - m_start);
            res.r_at_epoch_kpc = match (&abs, &abs1) {
                (Some(a0), Some(a1)) => {
                    let r0 = norm(pos(a0));
                    r0 + f * (norm(pos(a1)) - r0)
                }
                _ => f64::NAN,
            };
        }
        cur_rv = snap1.r_vir;
        cur_mvir = snap1.m_vir;
        t = t1;
        y = y1;
        abs = abs1;
        if keep {
            if m != prof_m {
                prof = structure.profile(m);
                prof_m = m;
            }
            let a1 = mover
                .acceleration()
                .unwrap_or_else(|| gravity(&chain, t, &y));
            push_point(&mut segs, frame, point(t, y, a1, m, prof, r_t), false);
        }
        if let Some(tp) = disc_kill {
            res.t_disrupt_disc_gyr = tp;
            res.t_disrupt_physical_gyr = tp;
            ended = Some(SubhaloStatus::Disrupted);
            break;
        }
        // the end of the subhalo: stripped below the thresholds, or merged
        let x_b = m / structure.m_acc;
        if options.stripping
            && (x_b < options.disrupt_bound_fraction
                || r_t < options.disrupt_tidal_radius_over_rs * structure.r_s_acc)
        {
            // dissolved by tides: a merger with the container if friction had sunk it, a
            // disruption otherwise. Sunk: friction acted on it in this container and its orbit
            // is now confined inside half the container's virial radius at its entry
            // (1/2 v^2 < Phi(R/2) - Phi(r) relative to the container, `confined_within`).
            // It entered at about R_vir (an apocentre of at least R_vir) and stripping leaves
            // the orbital energy alone, so friction has at least halved its apocentre; a child
            // dissolved on a wide orbit, even while passing through the core, is disrupted.
            // (Friction is tested over the whole stay: at dissolution the bound mass is ~1e-3
            // of the infall mass, below friction's own threshold, 1e-4 of the container, for
            // every child of m_infall < 0.1 of its container.)
            let sunk = friction_frame == Some(frame)
                && chain
                    .as_ref()
                    .is_some_and(|c| confined_within(&c.container_profile(t), &y, 0.5 * scale.0));
            if sunk {
                res.t_merge_gyr = t;
                ended = Some(SubhaloStatus::MergedWithParent);
            } else {
                res.t_disrupt_physical_gyr = t;
                ended = Some(SubhaloStatus::Disrupted);
            }
            break;
        }
        let r_rel = norm(pos(&y));
        let mut release: Option<(State, Frame)> = None;
        match &chain {
            None => {
                // sunk by friction to the centre: merged with the central galaxy once its orbit
                // is confined inside `central_merge_kpc` (1/2 v^2 < Phi(r_c x/|x|) - Phi(x) in
                // the host at t), with or without stripping; without this check a subhalo that
                // keeps its mass would circle the centre on ever shorter orbits. (Passing
                // inside r_c on a plunging orbit is not a merger: the first rule, r < r_c at
                // the end of a step, ended early radial infalls on their way in.)
                if fr
                    && r_rel < options.central_merge_kpc
                    && confined_in_host(host, t, &y, options.central_merge_kpc)
                {
                    res.t_merge_gyr = t;
                    ended = Some(SubhaloStatus::MergedWithCentral);
                    break;
                }
            }
            Some(c) => {
                // sunk by friction until the container's centre lies inside its bound body
                if fr && r_rel < r_t {
                    res.t_merge_gyr = t;
                    ended = Some(SubhaloStatus::MergedWithParent);
                    break;
                }
                // beyond the container's tidal radius and beyond its bound matter (once the
                // container is itself inside another halo): it leaves for the halo the
                // container orbits, with the container's matter there, which the stripping
                // model removes over a dynamical time rather than at once
                if c.container_inside() {
                    let cp = c.container_profile(t);
                    if r_rel > cp.r_t && cp.beyond_bound_matter(r_rel) {
                        release = c.container_state(t);
                    }
                }
            }
        }
        if let Some((yc, f)) = release {
            y = add6(&y, &yc);
            frame = f;
            scale = frame_scale(bodies, frame, t, scale);
            if res.t_release_gyr.is_nan() && res.order > 1 {
                res.t_release_gyr = t;
            }
            chain = match frame {
                Frame::Host => None,
                Frame::Sub(ci) => Some(Chain::build(bodies, ci, t)),
            };
            mover.reset(tolerances(options, frame, scale));
            abs = in_host(&chain, t, &y);
            prev_tide = None;
            m_enc_cont = match &chain {
                None => host.snapshot(t).mass_enclosed(norm(pos(&y))),
                Some(c) => c.container_profile(t).mass(norm(pos(&y))),
            };
            if keep {
                let a0 = gravity(&chain, t, &y);
                push_point(&mut segs, frame, point(t, y, a0, m, prof, r_t), true);
            }
        }
    }
    // the end state
    let status = ended.unwrap_or(match frame {
        Frame::Host => SubhaloStatus::InHost,
        Frame::Sub(_) => SubhaloStatus::InSubhalo,
    });
    res.status = status;
    res.bound_to_branch = match frame {
        Frame::Host => 0,
        Frame::Sub(c) => branch_of[c],
    };
    if let Some(tr) = &tracker {
        res.n_pericentres = tr.n_peri;
        res.t_peri_first_gyr = tr.t_peri_first;
        res.r_peri_first_kpc = tr.r_peri_first;
        res.r_peri_min_kpc = tr.r_peri_min;
        res.t_peri_last_gyr = tr.t_peri_last;
        res.r_peri_last_kpc = tr.r_peri_last;
        res.r_apo_last_kpc = tr.r_apo_last;
        res.n_host_crossings = tr.n_cross;
        res.t_last_host_infall_gyr = tr.last_infall(res.t_first_host_infall_gyr);
        res.t_disrupt_pericentre_gyr = tr.t_disrupt_peri;
    }
    if let Some(ptr) = &ptracker {
        res.t_first_partner_infall_gyr = ptr.t_first_infall;
        res.n_partner_crossings = ptr.n_cross;
        res.n_partner_pericentres = ptr.n_peri;
        res.r_peri_min_partner_kpc = ptr.r_peri_min;
        // the hard pericentre cut applies about either galaxy
        if ptr.t_disrupt_peri < res.t_disrupt_pericentre_gyr
            || res.t_disrupt_pericentre_gyr.is_nan()
        {
            res.t_disrupt_pericentre_gyr = ptr.t_disrupt_peri;
        }
    }
    let (vmax, rmax) = structure.vmax_rmax(m);
    res.m_bound_msun = m;
    res.vmax_kms = vmax / KMS;
    res.rmax_kpc = rmax;
    if let Some(a) = abs {
        let x = pos(&a);
        let v = vel(&a);
        res.pos_kpc = x;
        res.vel_kms = [v[0] / KMS, v[1] / KMS, v[2] / KMS];
        res.r_kpc = norm(x);
        if let Some(p) = host.partner() {
            res.r_partner_kpc = norm(pos(&p.relative(t, &a)));
        }
        res.backsplash =
            status.alive() && tracker.is_some_and(|tr| tr.been_inside) && res.r_kpc > cur_rv;
    }
    keep.then(|| Body {
        field: Vec::new(),
        t_start: start.t,
        segs,
        dead: ended.is_some(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::halo::nfw::mu;

    /// The host's tidal denominator Omega^2 - d^2 Phi/dr^2 (King 1962) against its closed
    /// form for an NFW halo alone: with Omega = |x x v| / r^2 and d^2 Phi/dr^2 =
    /// -2 G M(<r)/r^3 + 4 pi G rho(r), it is Omega^2 + 2 G M/r^3 - 4 pi G rho; on a circular
    /// orbit, G M/r^3 (3 - dln M/dln r), the physics reference sheet's bracket (sec. 9). M and
    /// rho are written out here from the NFW formulas (M = M_s [ln(1 + x) - x/(1 + x)],
    /// rho = M_s / (4 pi r_s^3 x (1 + x)^2)), not taken from the crate. Agreement to 1e-9
    /// (round-off); a radial velocity adds nothing.
    #[test]
    fn host_tide_matches_the_nfw_closed_form() {
        let snap = crate::host::HostSnapshot {
            m_s: 2e11,
            r_s: 25.0,
            r_vir: 300.0,
            m_vir: 1.2e12,
            m_disc: 0.0,
            a_disc: 3.0,
            b_disc: 0.3,
            m_bulge: 0.0,
            a_bulge: 0.5,
            de_k: 0.0,
        };
        let pi = std::f64::consts::PI;
        for r in [2.0, 10.0, 25.0, 80.0, 250.0] {
            let x = r / snap.r_s;
            let m = snap.m_s * ((1.0 + x).ln() - x / (1.0 + x));
            let rho = snap.m_s / (4.0 * pi * snap.r_s.powi(3) * x * (1.0 + x).powi(2));
            let v_c = (G * m / r).sqrt();
            for (vr, vt) in [(0.0, v_c), (0.7 * v_c, 0.4 * v_c)] {
                // in a tilted plane: x along (1, 1, 0)/sqrt 2, tangential along z
                let e = std::f64::consts::FRAC_1_SQRT_2;
                let y = [r * e, r * e, 0.0, vr * e, vr * e, vt];
                let (denom, m_enc) = host_tide(&snap, &y);
                let omega2 = vt * vt / (r * r);
                let want = omega2 + 2.0 * G * m / r.powi(3) - 4.0 * pi * G * rho;
                assert!(
                    (denom / want - 1.0).abs() < 1e-9,
                    "r {r}: {denom} vs {want}"
                );
                assert!((m_enc / m - 1.0).abs() < 1e-12);
                if vr == 0.0 {
                    let dlnm = 4.0 * pi * r.powi(3) * rho / m;
                    let king = G * m / r.powi(3) * (3.0 - dlnm);
                    assert!((denom / king - 1.0).abs() < 1e-9);
                }
            }
        }
    }

    /// The confinement test against the NFW potential difference integrated directly,
    /// Phi(r_out) - Phi(r) = int_r^{r_out} G M(<r') / r'^2 dr' (Simpson's rule, 2,000
    /// intervals), at r = r_s/2, r_out = 2 r_s: just below that speed it is confined, just
    /// above it is not; beyond r_out never; and a capped (stripped) profile confines less.
    #[test]
    fn confinement_matches_the_potential_difference() {
        let p = Profile {
            m_s: 1e10,
            r_s: 2.0,
            m_cap: f64::INFINITY,
            r_t: f64::INFINITY,
        };
        let (r, r_out) = (1.0, 4.0);
        let n = 2000;
        let h = (r_out - r) / n as f64;
        let f = |q: f64| G * p.m_s * mu(q / p.r_s) / (q * q);
        let mut dphi = f(r) + f(r_out);
        for k in 1..n {
            dphi += f(r + k as f64 * h) * if k % 2 == 1 { 4.0 } else { 2.0 };
        }
        dphi *= h / 3.0;
        // closed form: (G M_s / r_s) [ln(1.5)/0.5 - ln(3)/2] = 0.261624 G M_s / r_s
        assert!((dphi / (G * p.m_s / p.r_s) - 0.261624).abs() < 1e-6);
        let v_edge = (2.0 * dphi).sqrt();
        let at = |v: f64| [r, 0.0, 0.0, 0.0, v, 0.0];
        assert!(confined_within(&p, &at(0.999 * v_edge), r_out));
        assert!(!confined_within(&p, &at(1.001 * v_edge), r_out));
        assert!(!confined_within(&p, &[4.5, 0.0, 0.0, 0.0, 0.0, 0.0], r_out));
        // stripped to 10% of the mass inside r: G m_cap (1/r - 1/r_out) binds first
        // (0.00721 G M_s x 0.75 / kpc = 0.00541 G M_s/kpc against 0.1308 without the cap: the edge
        // speed falls to 0.203 of the uncapped one)
        let capped = Profile {
            m_cap: 0.1 * p.m_s * mu(0.5),
            ..p
        };
        assert!(!confined_within(&capped, &at(0.21 * v_edge), r_out));
        assert!(confined_within(&capped, &at(0.19 * v_edge), r_out));
    }

    /// The pericentre's effect in `disc_passage`: off (None: no disc), the all-or-nothing
    /// closure (power 0: destroyed only above the threshold), and the gradual losses (the
    /// subhalo keeps 1 - s^k, k = `disc_tide_loss_power`).
    #[test]
    fn disc_passage_keeps_one_minus_the_ratio_to_the_power() {
        let mut o = OrbitOptions {
            disc_tide_loss_power: 0.0,
            ..OrbitOptions::default()
        };
        assert_eq!(disc_passage(&o, None, 5.0), Some(5.0));
        assert_eq!(disc_passage(&o, Some(0.99), 5.0), Some(5.0));
        assert_eq!(disc_passage(&o, Some(1.01), 5.0), None);
        o.disc_tide_loss_power = 1.0;
        assert_eq!(disc_passage(&o, Some(0.25), 4.0), Some(3.0));
        assert_eq!(disc_passage(&o, None, 4.0), Some(4.0));
        assert_eq!(disc_passage(&o, Some(1.5), 4.0), None);
        assert_eq!(disc_passage(&o, Some(1.0), 4.0), None);
        o.disc_tide_loss_power = 0.5;
        // 1 - 0.25^0.5 = 0.5
        assert!((disc_passage(&o, Some(0.25), 4.0).unwrap() - 2.0).abs() < 1e-12);
        // a weak passage: 1e-6 of the threshold strips 1e-6^0.5 = 1e-3 of the mass
        assert!((disc_passage(&o, Some(1e-6), 1.0).unwrap() - 0.999).abs() < 1e-12);
    }
}
