//! One host, end to end: merger tree -> main-branch history -> evolving host potential ->
//! subhalo orbits -> galaxies -> a record. The only place where the stages are strung
//! together. Every random draw comes from the host's own streams (tree, orbits, galaxies),
//! so a host's record depends only on (master seed, host id) and the options.

use crate::error::InvalidValue;
use crate::galaxies::observability::SurveyOptions;
use crate::galaxies::{paint, GalaxyOptions, GalaxyRecord};
use crate::host::{EvolvingHost, HostOptions};
use crate::linear::LinearTheory;
use crate::orbits::{evolve_host_subhaloes_recording, OrbitOptions, SubhaloResult};
use crate::rng::{host_rng, HostId, Stream};
use crate::trees::history::branch_mass_at_z;
use crate::trees::{HostHistory, TreeBuilder, TreeSpec};

/// Everything that defines how one host is synthesised.
#[derive(Debug, Clone, PartialEq)]
pub struct SynthOptions {
    pub tree: TreeSpec,
    pub host: HostOptions,
    pub orbits: OrbitOptions,
    pub galaxies: GalaxyOptions,
    pub survey: SurveyOptions,
}

/// Host-level summary.
#[derive(Debug, Clone, PartialEq)]
pub struct HostSummary {
    pub id: HostId,
    pub m_vir_msun: f64,
    pub r_vir_kpc: f64,
    pub concentration: f64,
    pub z_half: f64,
    pub t_half_gyr: f64,
    pub t_04_gyr: f64,
    /// Stellar mass of the host's own galaxy: its disc and bulge at the end, Msun.
    pub mstar_msun: f64,
    pub n_tree_nodes: u64,
    pub disc_mass_msun: f64,
}

/// What a host of a pair records about its pair.
#[derive(Debug, Clone, PartialEq)]
pub struct PairRecord {
    /// The partner's host id (stream number).
    pub partner_id: u64,
    /// 0: the primary (the cell's host mass), 1: the partner.
    pub member: u8,
    /// The other host's virial mass today, Msun.
    pub partner_m_vir_msun: f64,
    /// Today's separation (kpc), relative radial velocity and tangential speed (km/s).
    pub separation_kpc: f64,
    pub radial_velocity_kms: f64,
    pub tangential_velocity_kms: f64,
    /// Separation at each z of `HostRecord::mah_z` (kpc; the earliest node of the mutual
    /// orbit's integration for earlier times).
    pub separation_history_kpc: Vec<f64>,
    /// The smallest separation of the mutual orbit and its time (Gyr).
    pub min_separation_kpc: f64,
    pub t_min_separation_gyr: f64,
    /// The region sphere's radius about the barycentre (kpc; `environment.region_radius_kpc`).
    pub region_radius_kpc: f64,
    /// The partner's position relative to this host today (kpc), and its virial radius (kpc).
    pub partner_pos_kpc: [f64; 3],
    pub partner_r_vir_kpc: f64,
}

/// A host of a pair: the partner's options (its tree's mass) and the pair's draw.
#[derive(Debug, Clone)]
pub struct PairInput {
    pub partner_options: SynthOptions,
    pub geometry: crate::pair::PairGeometry,
    pub region_radius_kpc: f64,
}

/// One synthesised host.
#[derive(Debug, Clone)]
pub struct HostRecord {
    pub summary: HostSummary,
    /// For a host of a pair (None: isolated).
    pub pair: Option<PairRecord>,
    /// Main-branch mass on the tree's output grid (z in `mah_z`).
    pub mah_msun: Vec<f64>,
    pub mah_z: Vec<f64>,
    pub subhaloes: Vec<SubhaloResult>,
    pub galaxies: Vec<GalaxyRecord>,
}

/// Synthesise host `id`. `builder` is the calling thread's reusable tree arena.
pub fn synthesize_host(
    lt: &LinearTheory,
    options: &SynthOptions,
    master_seed: u64,
    id: HostId,
    builder: &mut TreeBuilder,
) -> Result<HostRecord, InvalidValue> {
    synthesize(lt, options, None, master_seed, id, builder, f64::NAN)
}

/// `synthesize_host`, also recording each subhalo's bound mass and distance from the host's
/// centre at cosmic time `t_epoch_gyr` (`SubhaloResult::m_bound_at_epoch_msun`,
/// `r_at_epoch_kpc`): to compare the population at an earlier epoch with simulations. The
/// record is otherwise the same bit for bit.
pub fn synthesize_host_recording(
    lt: &LinearTheory,
    options: &SynthOptions,
    master_seed: u64,
    id: HostId,
    builder: &mut TreeBuilder,
    t_epoch_gyr: f64,
) -> Result<HostRecord, InvalidValue> {
    synthesize(lt, options, None, master_seed, id, builder, t_epoch_gyr)
}

/// Spacing of the mutual orbit's nodes, Gyr (cubic Hermite between them: position error of
/// order (dt / T)^4 of the separation for an orbit of time scale T >= 1 Gyr, below 1e-6).
const PAIR_NODE_GYR: f64 = 0.025;

/// Synthesise host `id` of a pair: both hosts' trees are grown (the partner's on its own
/// stream, `HostId::partner`), their mutual orbit is integrated backwards from today's draw,
/// and this host's subhaloes orbit in its potential with the partner's pull added
/// (`host::Partner`). Both hosts of a pair compute the same pair, so each is reproducible on
/// its own (whatever the shard or thread).
pub fn synthesize_pair_host(
    lt: &LinearTheory,
    options: &SynthOptions,
    pair: &PairInput,
    master_seed: u64,
    id: HostId,
    builder: &mut TreeBuilder,
) -> Result<HostRecord, InvalidValue> {
    synthesize(lt, options, Some(pair), master_seed, id, builder, f64::NAN)
}

/// The mutual orbit of a pair, as the partner's position relative to the primary, from
/// today back to `t_first`: each host's centre moves in the other's potential (halo, disc and
/// bulge at that time, their masses following each main branch), with dark energy's term on
/// the separation; mutual dynamical friction is not included.
pub fn mutual_orbit(
    primary: &EvolvingHost,
    partner: &EvolvingHost,
    geometry: &crate::pair::PairGeometry,
    t_first: f64,
    t_end: f64,
) -> crate::pair::PairOrbit {
    let (x0, v0) = geometry.relative_state();
    let accel = |t: f64, d: &[f64; 3]| -> [f64; 3] {
        // the primary's pull on the partner (with dark energy's term k d) minus the
        // partner's pull on the primary
        // (each pull computed as the subhaloes feel it, `host::partner::pull`, so that the
        // host's centre moves exactly as the subhaloes' inertial term assumes)
        let mut sa = primary.snapshot(t);
        let k = sa.de_k;
        sa.de_k = 0.0;
        let a = crate::host::partner::pull(&sa, *d);
        let a = [a[0] + k * d[0], a[1] + k * d[1], a[2] + k * d[2]];
        let mut sb = partner.snapshot(t);
        sb.de_k = 0.0;
        let b = crate::host::partner::pull(&sb, [-d[0], -d[1], -d[2]]);
        [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
    };
    let n = ((t_end - t_first) / PAIR_NODE_GYR).ceil().max(1.0) as usize + 1;
    let tol = crate::orbits::integrate::Tolerances {
        rtol: 1e-9,
        atol_pos_kpc: 1e-6,
        atol_vel_kpc_gyr: 1e-6,
    };
    crate::pair::PairOrbit::integrate_back(accel, t_end, x0, v0, t_first, n, tol)
}

/// What identifies a grown tree: the master seed, the host's stream number, the tree's
/// specification and the cosmology and linear-theory choices it was grown in.
type TreeKey = (
    u64,
    u64,
    TreeSpec,
    crate::cosmology::CosmologyParams,
    crate::linear::LinearOptions,
);

/// What identifies a pair's potentials and mutual orbit: (primary's tree and host options,
/// partner's tree and host options, the pair's draw).
type PairKey = (
    (TreeKey, crate::host::HostOptions),
    (TreeKey, crate::host::HostOptions),
    crate::pair::PairGeometry,
);

thread_local! {
    /// The last pair's two evolving potentials (primary, partner) and mutual orbit (in the
    /// primary's frame) on this thread, for the other host of the pair.
    #[allow(clippy::type_complexity)]
    static PAIR_FIELDS: std::cell::RefCell<
        Option<(PairKey, std::rc::Rc<(EvolvingHost, EvolvingHost, crate::pair::PairOrbit)>)>,
    > = const { std::cell::RefCell::new(None) };
    /// The grown trees of the last pair synthesised on this thread (both hosts'): the other
    /// host of a pair, usually the next host on the same thread, reuses them instead of
    /// growing either tree again. Keyed by everything the tree depends on, so a hit is the
    /// same tree bit for bit.
    static PAIR_TREES: std::cell::RefCell<Vec<(TreeKey, std::rc::Rc<GrownTree>)>> =
        const { std::cell::RefCell::new(Vec::new()) };
}

/// What the stages after the tree need of it: its history, its node count, and each
/// branch's mass at a reionisation redshift (`branch_mass_at_z`), so that a cached tree can
/// stand in for the tree itself.
struct GrownTree {
    hist: std::rc::Rc<HostHistory>,
    n_nodes: u64,
    /// The redshift `m_reion_msun` is for.
    reionization_z: f64,
    /// Mass of each branch (by branch id) at `reionization_z`, Msun.
    m_reion_msun: Vec<f64>,
}

impl GrownTree {
    fn new(tree: &crate::trees::MergerTree, reionization_z: f64) -> Self {
        GrownTree {
            hist: std::rc::Rc::new(HostHistory::from_tree(tree)),
            n_nodes: tree.n_nodes() as u64,
            reionization_z,
            m_reion_msun: (0..tree.n_branches() as u32)
                .map(|b| branch_mass_at_z(tree, b, reionization_z))
                .collect(),
        }
    }
}

/// Host `id`'s tree grown with `spec` (its branch masses at `reionization_z`), from this
/// thread's cache of the last pair if it is there with the same reionisation redshift, else
/// grown and put in the cache.
fn pair_tree(
    lt: &LinearTheory,
    spec: &TreeSpec,
    reionization_z: f64,
    master_seed: u64,
    id: HostId,
    builder: &mut TreeBuilder,
) -> Result<std::rc::Rc<GrownTree>, InvalidValue> {
    let key = tree_key(lt, spec, master_seed, id);
    if let Some(g) = PAIR_TREES.with(|c| {
        c.borrow()
            .iter()
            .find(|(k, g)| *k == key && g.reionization_z.to_bits() == reionization_z.to_bits())
            .map(|(_, g)| g.clone())
    }) {
        return Ok(g);
    }
    let mut rng = host_rng(master_seed, id, Stream::Tree);
    let tree = builder.build(lt, spec, &mut rng)?;
    let g = std::rc::Rc::new(GrownTree::new(tree, reionization_z));
    remember_tree(key, g.clone());
    Ok(g)
}

/// What identifies host `id`'s tree grown with `spec` (`TreeKey`).
fn tree_key(lt: &LinearTheory, spec: &TreeSpec, master_seed: u64, id: HostId) -> TreeKey {
    (
        master_seed,
        id.stream(),
        spec.clone(),
        lt.cosmology().params.clone(),
        lt.options().clone(),
    )
}

/// Keep a grown tree in this thread's cache of the last pair's two (`PAIR_TREES`).
fn remember_tree(key: TreeKey, h: std::rc::Rc<GrownTree>) {
    PAIR_TREES.with(|c| {
        let mut c = c.borrow_mut();
        if c.len() >= 2 {
            c.remove(0);
        }
        c.push((key, h));
    });
}

fn synthesize(
    lt: &LinearTheory,
    options: &SynthOptions,
    pair: Option<&PairInput>,
    master_seed: u64,
    id: HostId,
    builder: &mut TreeBuilder,
    t_epoch: f64,
) -> Result<HostRecord, InvalidValue> {
    let cosmo = lt.cosmology();
    let t_end = cosmo.age_gyr(options.tree.z_final);
    let first_infall = |h: &HostHistory| {
        h.accretions
            .iter()
            .map(|a| a.t_infall_gyr)
            .fold(t_end - 1e-3, f64::min)
    };
    let z_reion = options.galaxies.reionization_z;
    // this host's tree: for a host of a pair through the pair cache (the partner's tree
    // first, then this host's, so the other host of the pair finds both), grown here for an
    // isolated host
    let (grown, partner_hist) = match pair {
        Some(p) => {
            let partner = pair_tree(
                lt,
                &p.partner_options.tree,
                p.partner_options.galaxies.reionization_z,
                master_seed,
                id.partner(),
                builder,
            )?;
            let own = pair_tree(lt, &options.tree, z_reion, master_seed, id, builder)?;
            (own, Some(partner.hist.clone()))
        }
        None => {
            let mut trng = host_rng(master_seed, id, Stream::Tree);
            let tree = builder.build(lt, &options.tree, &mut trng)?;
            (std::rc::Rc::new(GrownTree::new(tree, z_reion)), None)
        }
    };
    let n_nodes = grown.n_nodes;
    let hist = grown.hist.clone();
    let mut t_first = first_infall(&hist);
    if let Some(ph) = &partner_hist {
        t_first = t_first.min(first_infall(ph));
    }
    let mut host;
    let mut pair_record = None;
    if let (Some(p), Some(ph)) = (pair, &partner_hist) {
        // the pair's two potentials and mutual orbit (in the primary's frame), computed by
        // whichever host of the pair comes first on this thread and reused by the other
        let own_key = (tree_key(lt, &options.tree, master_seed, id), options.host);
        let other_key = (
            tree_key(lt, &p.partner_options.tree, master_seed, id.partner()),
            p.partner_options.host,
        );
        let key: PairKey = if id.member == 0 {
            (own_key, other_key, p.geometry)
        } else {
            (other_key, own_key, p.geometry)
        };
        let cached = PAIR_FIELDS.with(|c| {
            c.borrow()
                .as_ref()
                .filter(|(k, _)| *k == key)
                .map(|(_, v)| v.clone())
        });
        let fields = match cached {
            Some(v) => v,
            None => {
                let own = EvolvingHost::from_history(lt, &hist, &options.host, t_first);
                let other = EvolvingHost::from_history(lt, ph, &p.partner_options.host, t_first);
                let (a, b) = if id.member == 0 {
                    (own, other)
                } else {
                    (other, own)
                };
                let orbit = mutual_orbit(&a, &b, &p.geometry, t_first, t_end);
                let v = std::rc::Rc::new((a, b, orbit));
                PAIR_FIELDS.with(|c| *c.borrow_mut() = Some((key, v.clone())));
                v
            }
        };
        let (a, b, primary_orbit) = &*fields;
        // this host, its partner, and the partner's orbit about it (bit-identical for both)
        let (own, other, orbit) = if id.member == 0 {
            (a.clone(), b.clone(), primary_orbit.clone())
        } else {
            (b.clone(), a.clone(), primary_orbit.reversed())
        };
        host = own;
        let (t_min, d_min) = orbit
            .nodes()
            .map(|(t, x, _)| (t, (x[0] * x[0] + x[1] * x[1] + x[2] * x[2]).sqrt()))
            .fold(
                (f64::NAN, f64::INFINITY),
                |a, b| if b.1 < a.1 { b } else { a },
            );
        let so = other.snapshot(t_end);
        pair_record = Some(PairRecord {
            partner_id: id.partner().stream(),
            member: id.member,
            partner_m_vir_msun: so.m_vir,
            separation_kpc: p.geometry.separation_kpc,
            radial_velocity_kms: p.geometry.radial_velocity_kms,
            tangential_velocity_kms: p.geometry.tangential_velocity_kms,
            separation_history_kpc: hist
                .output_z
                .iter()
                .map(|&z| orbit.separation(cosmo.age_gyr(z)))
                .collect(),
            min_separation_kpc: d_min,
            t_min_separation_gyr: t_min,
            region_radius_kpc: p.region_radius_kpc,
            partner_pos_kpc: orbit.position(t_end),
            partner_r_vir_kpc: so.r_vir,
        });
        host = host.with_partner(crate::host::Partner::new(other, orbit));
    } else {
        host = EvolvingHost::from_history(lt, &hist, &options.host, t_first);
    }
    let mut orng = host_rng(master_seed, id, Stream::Orbits);
    let mut subhaloes = evolve_host_subhaloes_recording(
        lt,
        &hist,
        &host,
        &options.orbits,
        t_end,
        t_epoch,
        &mut orng,
    );
    // each branch's mass at reionisation (the `reionization` occupation; stored for all)
    for s in &mut subhaloes {
        s.m_reion_msun = grown.m_reion_msun[s.branch as usize];
    }
    let mut grng = host_rng(master_seed, id, Stream::Galaxies);
    let galaxies = paint(
        cosmo,
        options.tree.z_final,
        &options.galaxies,
        &options.survey,
        &subhaloes,
        &mut grng,
    );
    let s = host.snapshot(t_end);
    let summary = HostSummary {
        id,
        m_vir_msun: s.m_vir,
        r_vir_kpc: s.r_vir,
        concentration: host.concentration(t_end),
        z_half: hist.z_half,
        t_half_gyr: hist.t_half_gyr,
        t_04_gyr: hist.t_04_gyr,
        // the host's galaxy is its disc and bulge, as in the potential its satellites orbit
        // (one quantity: the stellar-mass-halo-mass relation paints only the satellites)
        mstar_msun: s.m_disc + s.m_bulge,
        n_tree_nodes: n_nodes,
        disc_mass_msun: s.m_disc,
    };
    Ok(HostRecord {
        summary,
        pair: pair_record,
        mah_msun: hist.mah_msun.clone(),
        mah_z: hist.output_z.clone(),
        subhaloes,
        galaxies,
    })
}
