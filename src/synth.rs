//! One host, end to end: merger tree -> main-branch history -> evolving host potential ->
//! subhalo orbits -> galaxies -> a record. The only place where the stages are strung
//! together. Every random draw comes from the host's own streams (tree, orbits, galaxies),
//! so a host's record depends only on (master seed, host id) and the options.

use crate::error::InvalidValue;
use crate::galaxies::observability::SurveyOptions;
use crate::galaxies::{paint, GalaxyOptions, GalaxyRecord};
use crate::host::{EvolvingHost, HostOptions};
use crate::linear::LinearTheory;
use crate::orbits::{evolve_host_subhaloes, OrbitOptions, SubhaloResult};
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

/// One synthesised host.
#[derive(Debug, Clone)]
pub struct HostRecord {
    pub summary: HostSummary,
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
    let cosmo = lt.cosmology();
    let mut trng = host_rng(master_seed, id, Stream::Tree);
    let tree = builder.build(lt, &options.tree, &mut trng)?;
    let n_nodes = tree.n_nodes() as u64;
    let hist = HostHistory::from_tree(tree);
    let t_end = cosmo.age_gyr(options.tree.z_final);
    let t_first = hist
        .accretions
        .iter()
        .map(|a| a.t_infall_gyr)
        .fold(t_end - 1e-3, f64::min);
    let host = EvolvingHost::from_history(lt, &hist, &options.host, t_first);
    let mut orng = host_rng(master_seed, id, Stream::Orbits);
    let mut subhaloes = evolve_host_subhaloes(lt, &hist, &host, &options.orbits, t_end, &mut orng);
    // each branch's mass at reionisation (the `reionization` occupation; stored for all)
    for s in &mut subhaloes {
        s.m_reion_msun = branch_mass_at_z(tree, s.branch, options.galaxies.reionization_z);
    }
    let mut grng = host_rng(master_seed, id, Stream::Galaxies);
    let galaxies = paint(
        cosmo,
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
        mah_msun: hist.mah_msun,
        mah_z: hist.output_z,
        subhaloes,
        galaxies,
    })
}
