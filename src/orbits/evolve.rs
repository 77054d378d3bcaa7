//! Evolving every accreted subhalo of one host, of every order: its infall orbit drawn
//! relative to the halo it falls into (the host, or its parent), then its life followed by
//! `follow` (integration with dynamical friction and tidal stripping in the halo it orbits,
//! `in_parent` for satellites of satellites, the events of `events`), and what became of it.
//!
//! Order of work: each first-order subhalo is followed from its infall to the end, then each
//! of its children (depth first, lowest branch first), so that every halo a subhalo orbits is
//! complete before the subhalo is followed; a subhalo's trajectory is kept (as the dense
//! output its children are integrated against) only while its group is being followed.
//! Random numbers: every accretion's infall orbit is drawn first, in branch order, from the
//! host's orbit stream.

use rand::Rng;

use super::follow::{follow, new_result, Ctx, Start};
use super::in_parent::{Body, FieldPoint, Frame};
use super::initial::initial_state;
use super::integrate::State;
use super::stripping::{Stripping, SubhaloStructure};
use super::OrbitOptions;
use crate::constants::{G_KPC3_PER_MSUN_GYR2 as G, KMS_IN_KPC_PER_GYR as KMS};
use crate::halo::concentration::{concentration, ConcentrationModel};
use crate::halo::nfw::mu;
use crate::halo::MassDefinition;
use crate::host::EvolvingHost;
use crate::linear::LinearTheory;
use crate::trees::{Accretion, HostHistory};

#[cfg(feature = "orbit-profile")]
pub use super::follow::profile;
pub use super::test_particle::{integrate_point_mass, integrate_test_particle, Track};

/// What became of a subhalo by the end of the run.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[repr(u8)]
pub enum SubhaloStatus {
    /// Bound, orbiting the host on its own (inside R_vir, or outside it as a backsplash
    /// object).
    InHost = 0,
    /// Stripped below the physical threshold (bound fraction, or tidal radius).
    Disrupted = 1,
    /// Bound, inside another subhalo (a satellite of a satellite), at its own position.
    InSubhalo = 2,
    /// Sank under friction into the core of the subhalo it orbited (inside its scale radius)
    /// and was dissolved there, or until that subhalo's centre lay inside its own bound body:
    /// merged with it.
    MergedWithParent = 3,
    /// Sank to the host's centre and merged with the central galaxy.
    MergedWithCentral = 4,
}

impl SubhaloStatus {
    /// Still a distinct bound object at the end (in the host or inside another subhalo).
    pub fn alive(self) -> bool {
        matches!(self, SubhaloStatus::InHost | SubhaloStatus::InSubhalo)
    }

    /// The status with this code (None for an unknown code).
    pub fn from_code(code: u8) -> Option<Self> {
        Some(match code {
            0 => SubhaloStatus::InHost,
            1 => SubhaloStatus::Disrupted,
            2 => SubhaloStatus::InSubhalo,
            3 => SubhaloStatus::MergedWithParent,
            4 => SubhaloStatus::MergedWithCentral,
            _ => return None,
        })
    }
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
    /// Last crossing of the host's evolving virial radius made while moving inward.
    pub t_last_host_infall_gyr: f64,
    /// When it left its parent (NaN for order 1, or if it never did).
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
    /// Mass of its branch (main progenitor) at the reionisation redshift
    /// (`galaxies.reionization_z`), Msun; 0 if the branch was not yet resolved then. Set by
    /// `synth` from the tree.
    pub m_reion_msun: f64,
    /// The pericentre at which the tide of the host's disc and bulge destroyed it (NaN: never;
    /// `OrbitOptions::disc_tide_ratio`); `t_disrupt_physical_gyr` is then the same time.
    pub t_disrupt_disc_gyr: f64,
    pub t_disrupt_pericentre_gyr: f64,
    /// When it merged with the centre of the subhalo it orbited or with the central galaxy
    /// (NaN unless status 3 or 4).
    pub t_merge_gyr: f64,
    /// The branch of the halo it orbits at the end, or merged with (0: the host).
    pub bound_to_branch: u32,
    pub pos_kpc: [f64; 3],
    pub vel_kms: [f64; 3],
    pub r_kpc: f64,
    pub m_bound_msun: f64,
    pub vmax_kms: f64,
    pub rmax_kpc: f64,
    pub vmax_infall_kms: f64,
    /// Bound mass (Msun) and distance from the host's centre (kpc) at the epoch asked for
    /// with `evolve_host_subhaloes_recording` (`synth::synthesize_host_recording`), each
    /// interpolated linearly inside the integration step that spans it. NaN when no epoch was
    /// asked for, when the subhalo had not fallen into its first halo yet or had already ended
    /// then; the distance is also NaN while its group was still outside the host. Not written
    /// to stores.
    pub m_bound_at_epoch_msun: f64,
    pub r_at_epoch_kpc: f64,
    pub backsplash: bool,
    pub status: SubhaloStatus,
    /// For a host of a pair, its events about the partner (measured like those about the
    /// host, on the position relative to the partner's centre; NaN / 0 for isolated hosts):
    /// the first inward crossing of the partner's virial radius (NaN: never inside it),
    pub t_first_partner_infall_gyr: f64,
    /// crossings of the partner's virial radius in either direction (odd: inside it at the
    /// end),
    pub n_partner_crossings: u32,
    /// pericentres about the partner and the smallest of them (kpc),
    pub n_partner_pericentres: u32,
    pub r_peri_min_partner_kpc: f64,
    /// and the distance from the partner's centre at the end (kpc).
    pub r_partner_kpc: f64,
}

/// The field profile of a halo with children, at the times they fell in and at its own
/// infall: virial mass from the tree (the mass each child merged into, and its own infall
/// mass; non-decreasing), Bryan & Norman R_vir and the Dutton & Maccio 2014 concentration
/// (times the warm-dark-matter factor of the cosmology, `halo::concentration::wdm_factor`).
fn field_profile(lt: &LinearTheory, own: &Accretion, kids: &[&Accretion]) -> Vec<FieldPoint> {
    let cosmo = lt.cosmology();
    let mut pts: Vec<(f64, f64, f64)> = kids
        .iter()
        .map(|k| (k.t_infall_gyr, k.z_infall, k.m_host_at_infall_msun))
        .collect();
    pts.push((own.t_infall_gyr, own.z_infall, own.m_infall_msun));
    pts.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut m_run = 0.0f64;
    pts.into_iter()
        .map(|(t, z, m)| {
            m_run = m_run.max(m);
            let r_vir = MassDefinition::Vir.radius_kpc(cosmo, m_run, z);
            let c = concentration(
                lt,
                ConcentrationModel::DuttonMaccio14,
                m_run,
                z,
                MassDefinition::Vir,
            );
            FieldPoint {
                t,
                m_vir: m_run,
                r_vir,
                m_s: m_run / mu(c),
                r_s: r_vir / c,
            }
        })
        .collect()
}

/// Evolve every accretion of a host. `rng` is the host's orbit stream; results come in the
/// order of `hist.accretions` (branch order), so they are reproducible bit for bit.
pub fn evolve_host_subhaloes<R: Rng>(
    lt: &LinearTheory,
    hist: &HostHistory,
    host: &EvolvingHost,
    options: &OrbitOptions,
    t_end: f64,
    rng: &mut R,
) -> Vec<SubhaloResult> {
    evolve_host_subhaloes_recording(lt, hist, host, options, t_end, f64::NAN, rng)
}

/// `evolve_host_subhaloes`, also recording each subhalo's bound mass and distance from the
/// host's centre at the cosmic time `t_epoch` (Gyr; NaN: none), in
/// `SubhaloResult::m_bound_at_epoch_msun` and `r_at_epoch_kpc`. Recording changes nothing
/// else: the orbits and every other result are the same bit for bit.
pub fn evolve_host_subhaloes_recording<R: Rng>(
    lt: &LinearTheory,
    hist: &HostHistory,
    host: &EvolvingHost,
    options: &OrbitOptions,
    t_end: f64,
    t_epoch: f64,
    rng: &mut R,
) -> Vec<SubhaloResult> {
    let cosmo = lt.cosmology();
    let accs = &hist.accretions;
    let n = accs.len();
    // parent of each accretion and the children of each
    let mut parent: Vec<Option<usize>> = vec![None; n];
    let mut children: Vec<Vec<usize>> = vec![Vec::new(); n];
    for (i, a) in accs.iter().enumerate() {
        if a.order > 1 {
            if let Some(p) = hist.accretion_index(a.into_branch) {
                parent[i] = Some(p);
                children[p].push(i);
            }
        }
    }
    // infall orbits, drawn in branch order: relative to the host for first-order subhaloes,
    // to the parent (its virial quantities from the tree at the child's infall) for the rest
    let starts: Vec<Start> = accs
        .iter()
        .enumerate()
        .map(|(i, a)| {
            let z = a.z_infall;
            let (m_c, r_c, frame) = match parent[i] {
                None => {
                    let s = host.snapshot(a.t_infall_gyr);
                    (s.m_vir, s.r_vir, Frame::Host)
                }
                Some(p) => {
                    let m = a.m_host_at_infall_msun;
                    (
                        m,
                        MassDefinition::Vir.radius_kpc(cosmo, m, z),
                        Frame::Sub(p),
                    )
                }
            };
            let v_c = (G * m_c / r_c).sqrt();
            // peak height as the infall-orbit fits were calibrated: top-hat window, CDM
            let nu = lt.top_hat_cdm().nu(m_c, z);
            let (u, x) = options.infall_orbits.sample(nu, a.m_infall_msun / m_c, rng);
            Start {
                frame,
                t: a.t_infall_gyr,
                y: initial_state(r_c, v_c, u, x, rng),
                scale: (r_c, v_c),
            }
        })
        .collect();
    let ctx = Ctx {
        host,
        options,
        strip: Stripping {
            alpha: options.stripping_alpha,
            c_slope: options.stripping_alpha_c_slope,
        },
        t_end,
        t_epoch,
    };
    let branch_of: Vec<u32> = accs.iter().map(|a| a.branch).collect();
    let mut bodies: Vec<Option<Body>> = vec![None; n];
    let mut out: Vec<Option<SubhaloResult>> = vec![None; n];
    let mut stack: Vec<usize> = Vec::new();
    let mut group: Vec<usize> = Vec::new();
    for (root, p) in parent.iter().enumerate() {
        if p.is_some() {
            continue; // followed with its group
        }
        stack.push(root);
        while let Some(i) = stack.pop() {
            group.push(i);
            let a = &accs[i];
            // Dutton & Maccio 2014 at infall, suppressed under warm dark matter (Bose et al.
            // 2016, `halo::concentration::wdm_factor`)
            let c_acc = concentration(
                lt,
                ConcentrationModel::DuttonMaccio14,
                a.m_infall_msun,
                a.z_infall,
                MassDefinition::Vir,
            );
            let r_vir_acc = MassDefinition::Vir.radius_kpc(cosmo, a.m_infall_msun, a.z_infall);
            let structure = SubhaloStructure::nfw(a.m_infall_msun, r_vir_acc, c_acc);
            let mut res = new_result(a, &structure);
            let keep = !children[i].is_empty();
            #[cfg(feature = "orbit-profile")]
            let rhs_before = profile::RHS_COUNT.with(|c| c.get());
            let traj = follow(
                &ctx,
                &bodies,
                &branch_of,
                &structure,
                &starts[i],
                keep,
                a.order == 1,
                &mut res,
            );
            #[cfg(feature = "orbit-profile")]
            {
                let n = profile::RHS_COUNT.with(|c| c.get()) - rhs_before;
                profile::PER_SUBHALO.with(|p| p.borrow_mut().push((n, res.clone())));
            }
            if let Some(mut body) = traj {
                let kids: Vec<&Accretion> = children[i].iter().map(|&k| &accs[k]).collect();
                body.field = field_profile(lt, a, &kids);
                bodies[i] = Some(body);
            }
            out[i] = Some(res);
            // children next, lowest index first
            stack.extend(children[i].iter().rev());
        }
        // the group is done: its trajectories are no longer needed
        for &i in &group {
            bodies[i] = None;
        }
        group.clear();
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
    a: &Accretion,
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

/// A subhalo in an isolated (field) halo that does not change: the parent's virial mass
/// (Msun), radius (kpc) and concentration; the child's infall mass (Msun), virial radius (kpc)
/// and concentration; its state relative to the parent at `t0` (kpc, km/s). Followed to `t1`
/// with the options' friction, stripping and merger rules (no host: for checks of the
/// parent–child dynamics against published merging times).
#[allow(clippy::too_many_arguments)]
pub fn evolve_in_isolated_halo(
    options: &OrbitOptions,
    parent: (f64, f64, f64),
    child: (f64, f64, f64),
    x0_kpc: [f64; 3],
    v0_kms: [f64; 3],
    t0: f64,
    t1: f64,
) -> SubhaloResult {
    use crate::host::{DiscBulgeParams, HostSnapshot};
    let (m_p, r_p, c_p) = parent;
    let fp = |t: f64| FieldPoint {
        t,
        m_vir: m_p,
        r_vir: r_p,
        m_s: m_p / mu(c_p),
        r_s: r_p / c_p,
    };
    let body = Body {
        field: vec![fp(t0), fp(t1)],
        // never falls into anything
        t_start: f64::INFINITY,
        segs: Vec::new(),
        dead: false,
    };
    let bodies = vec![Some(body), None];
    // a host far away that plays no part (the chain never reaches it)
    let b0 = DiscBulgeParams::none();
    let host = EvolvingHost::fixed(HostSnapshot {
        m_s: m_p,
        r_s: r_p,
        r_vir: 10.0 * r_p,
        m_vir: m_p,
        m_disc: b0.disc_mass_msun,
        a_disc: b0.disc_a_kpc,
        b_disc: b0.disc_b_kpc,
        m_bulge: b0.bulge_mass_msun,
        a_bulge: b0.bulge_a_kpc,
        de_k: 0.0,
    });
    let (m_c, r_c, c_c) = child;
    let structure = SubhaloStructure::nfw(m_c, r_c, c_c);
    let a = Accretion {
        branch: 2,
        order: 2,
        into_branch: 1,
        t_infall_gyr: t0,
        z_infall: f64::NAN,
        m_infall_msun: m_c,
        m_host_at_infall_msun: m_p,
        m_peak_msun: m_c,
        t_peak_gyr: t0,
        group: 1,
        t_host_infall_gyr: t1,
        z_host_infall: f64::NAN,
    };
    let mut res = new_result(&a, &structure);
    let ctx = Ctx {
        host: &host,
        options,
        strip: Stripping {
            alpha: options.stripping_alpha,
            c_slope: options.stripping_alpha_c_slope,
        },
        t_end: t1,
        t_epoch: f64::NAN,
    };
    let v_vir = (G * m_p / r_p).sqrt();
    let start = Start {
        frame: Frame::Sub(0),
        t: t0,
        y: [
            x0_kpc[0],
            x0_kpc[1],
            x0_kpc[2],
            v0_kms[0] * KMS,
            v0_kms[1] * KMS,
            v0_kms[2] * KMS,
        ],
        scale: (r_p, v_vir),
    };
    follow(
        &ctx,
        &bodies,
        &[1, 2],
        &structure,
        &start,
        false,
        false,
        &mut res,
    );
    res
}

/// A subhalo (the parent) and a satellite of it (the child) in a host, both starting at `t0`:
/// the parent at `parent_state` in the host frame, the child at `child_state` relative to the
/// parent (positions kpc, velocities km/s); structures as (infall mass Msun, virial radius kpc,
/// concentration). Followed to `t1` with the options (for checks of the parent–child frames
/// against a direct integration in the host frame). Returns (parent, child).
#[allow(clippy::too_many_arguments)]
pub fn evolve_pair_in_host(
    options: &OrbitOptions,
    host: &EvolvingHost,
    parent: (f64, f64, f64),
    parent_state: ([f64; 3], [f64; 3]),
    child: (f64, f64, f64),
    child_state: ([f64; 3], [f64; 3]),
    t0: f64,
    t1: f64,
) -> (SubhaloResult, SubhaloResult) {
    let ctx = Ctx {
        host,
        options,
        strip: Stripping {
            alpha: options.stripping_alpha,
            c_slope: options.stripping_alpha_c_slope,
        },
        t_end: t1,
        t_epoch: f64::NAN,
    };
    let kms = |x: [f64; 3], v: [f64; 3]| -> State {
        [x[0], x[1], x[2], v[0] * KMS, v[1] * KMS, v[2] * KMS]
    };
    let acc = |branch: u32, order: u16, into: u32, m: f64, m_host: f64| Accretion {
        branch,
        order,
        into_branch: into,
        t_infall_gyr: t0,
        z_infall: f64::NAN,
        m_infall_msun: m,
        m_host_at_infall_msun: m_host,
        m_peak_msun: m,
        t_peak_gyr: t0,
        group: 1,
        t_host_infall_gyr: t0,
        z_host_infall: f64::NAN,
    };
    let (m_p, r_p, c_p) = parent;
    let s_p = SubhaloStructure::nfw(m_p, r_p, c_p);
    let snap = host.snapshot(t0);
    let mut res_p = new_result(&acc(1, 1, 0, m_p, snap.m_vir), &s_p);
    let start_p = Start {
        frame: Frame::Host,
        t: t0,
        y: kms(parent_state.0, parent_state.1),
        scale: (snap.r_vir, (G * snap.m_vir / snap.r_vir).sqrt()),
    };
    let mut body =
        follow(&ctx, &[], &[1], &s_p, &start_p, true, true, &mut res_p).expect("a kept trajectory");
    body.field = vec![FieldPoint {
        t: t0,
        m_vir: m_p,
        r_vir: r_p,
        m_s: m_p / mu(c_p),
        r_s: r_p / c_p,
    }];
    let bodies = vec![Some(body), None];
    let (m_c, r_c, c_c) = child;
    let s_c = SubhaloStructure::nfw(m_c, r_c, c_c);
    let mut res_c = new_result(&acc(2, 2, 1, m_c, m_p), &s_c);
    let start_c = Start {
        frame: Frame::Sub(0),
        t: t0,
        y: kms(child_state.0, child_state.1),
        scale: (r_p, (G * m_p / r_p).sqrt()),
    };
    follow(
        &ctx,
        &bodies,
        &[1, 2],
        &s_c,
        &start_c,
        false,
        false,
        &mut res_c,
    );
    (res_p, res_c)
}
