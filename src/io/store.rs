//! The run store (HDF5): flat columnar tables `hosts` and `subhalos`, main-branch histories,
//! provenance attributes, and an `analysis` group. Documented column by column in
//! docs/output-format.md.
//!
//! Crash safety: a run writes each batch of hosts to its own part file
//! (`.NAME.parts/part-KKKKK.h5`), under a temporary name renamed when complete, so a killed run
//! leaves only whole parts. `--resume` skips the parts that exist. The parts are joined in
//! order (streaming, one part at a time) into `.NAME.partial` while the run goes on, and the
//! store is renamed to NAME when every host is in it. Parts are written uncompressed; the
//! joined store has its integer and mostly-NaN columns shuffled and deflated (`col_filters`). Shards of a split run are complete stores of their host ranges; `merge` joins
//! stores in global host order with the same code.

use std::path::{Path, PathBuf};

use hdf5::{Extent, Group, H5Type};

use super::h5::{get_str_attr, set_num_attr, set_str_attr};
use super::{AtomicPath, IoError};
use crate::stats::Catalog;
use crate::synth::HostRecord;

/// Provenance written as root attributes.
#[derive(Debug, Clone, PartialEq)]
pub struct StoreMeta {
    pub config_toml: String,
    pub master_seed: u64,
    pub generator: String,
    pub crate_version: String,
    pub build_info: String,
    /// `crate::BUILD_FINGERPRINT` of the build that wrote the store; empty if not recorded
    /// (stores written before it was).
    pub build_fingerprint: String,
    /// Total hosts of the whole run (all shards).
    pub n_hosts_total: u64,
    /// Shard k of n (0 of 1 for an unsplit run).
    pub shard: (u32, u32),
    /// Absolute directory of the configuration file the run was started from (relative
    /// paths in `config_toml` are relative to it); empty if unknown (older stores).
    pub config_dir: String,
    /// The files the run read besides its configuration, with the SHA-256 of each
    /// (`io::inputs::InputFiles::to_text`); empty if the run read none, or for older stores
    /// (written before it was recorded).
    pub input_files: String,
    /// The orbit options the hosts were grown with, every key resolved (TOML of
    /// `orbits::OrbitOptions`), so that a later version with other defaults labels them as
    /// they were; empty for older stores (written before it was recorded).
    pub orbit_options: String,
}

/// One column of values.
#[derive(Debug, Clone)]
pub enum Col {
    F64(Vec<f64>),
    U64(Vec<u64>),
    U32(Vec<u32>),
    U16(Vec<u16>),
    U8(Vec<u8>),
}

impl Col {
    fn len(&self) -> usize {
        match self {
            Col::F64(v) => v.len(),
            Col::U64(v) => v.len(),
            Col::U32(v) => v.len(),
            Col::U16(v) => v.len(),
            Col::U8(v) => v.len(),
        }
    }
}

/// (name, units, description)
type Spec = (&'static str, &'static str, &'static str);

/// Columns of the `hosts` table.
pub const HOST_COLUMNS: &[Spec] = &[
    (
        "host_index",
        "index",
        "global host index: hosts numbered cell by cell, cells in the order (cosmology, host mass, environment), hosts_per_cell hosts or pairs (primary, then partner) per cell",
    ),
    (
        "cosmology_index",
        "index",
        "position in the run's list of cosmologies",
    ),
    (
        "mass_bin",
        "index",
        "position in the run's list of host masses",
    ),
    (
        "k",
        "index",
        "host number within its grid cell (selects its random streams)",
    ),
    ("m_vir_msun", "Msun", "virial mass today (z_final)"),
    ("r_vir_kpc", "kpc", "virial radius today"),
    ("concentration", "", "NFW concentration today"),
    (
        "z_half",
        "",
        "half-mass formation redshift of the main branch",
    ),
    ("t_half_gyr", "Gyr", "half-mass formation time"),
    (
        "t_04_gyr",
        "Gyr",
        "time the main branch first held 4% of its final mass",
    ),
    (
        "mstar_msun",
        "Msun",
        "stellar mass of the host's galaxy: its disc and bulge in the potential",
    ),
    ("disc_mass_msun", "Msun", "disc mass today"),
    ("n_tree_nodes", "", "nodes in the host's merger tree"),
    ("sub_offset", "index", "first row of this host in /subhalos"),
    ("sub_count", "", "number of rows of this host in /subhalos"),
    (
        "environment",
        "index",
        "position in the run's list of environments ([[environment]]; 0 when none is configured: isolated)",
    ),
    (
        "pair_member",
        "",
        "0: an isolated host or the primary of a pair (the cell's host mass); 1: the partner of a pair",
    ),
    (
        "partner_host_index",
        "index",
        "global host index of the other host of the pair (18446744073709551615: isolated)",
    ),
    (
        "partner_m_vir_msun",
        "Msun",
        "the other host's virial mass today (NaN: isolated)",
    ),
    (
        "pair_separation_kpc",
        "kpc",
        "separation of the pair today (drawn; NaN: isolated)",
    ),
    (
        "pair_radial_velocity_kms",
        "km/s",
        "relative radial velocity of the pair today (negative: approaching)",
    ),
    (
        "pair_tangential_velocity_kms",
        "km/s",
        "relative tangential speed of the pair today",
    ),
    (
        "pair_min_separation_kpc",
        "kpc",
        "smallest separation of the mutual orbit since the earliest infall",
    ),
    (
        "pair_t_min_separation_gyr",
        "Gyr",
        "cosmic time of that smallest separation",
    ),
    (
        "partner_x_kpc",
        "kpc",
        "the partner's position relative to this host today, x (this host's frame)",
    ),
    ("partner_y_kpc", "kpc", "... y"),
    ("partner_z_kpc", "kpc", "... z"),
    (
        "partner_r_vir_kpc",
        "kpc",
        "the other host's virial radius today",
    ),
    (
        "pair_region_radius_kpc",
        "kpc",
        "radius of the pair region about the barycentre (environment.region_radius_kpc)",
    ),
];

/// Columns of the `subhalos` table.
pub const SUB_COLUMNS: &[Spec] = &[
    ("host_row", "index", "row of the host in /hosts"),
    ("host_index", "index", "global host index"),
    ("branch", "index", "branch id in the host's merger tree"),
    (
        "parent_branch",
        "index",
        "branch it fell into (0 = the host's main branch)",
    ),
    (
        "order",
        "",
        "1: fell straight into the host; 2: into a first-order subhalo; ...",
    ),
    (
        "group",
        "index",
        "first-order branch with which it entered the host",
    ),
    (
        "m_infall_msun",
        "Msun",
        "mass when it fell into its first halo (tree merger)",
    ),
    ("m_peak_msun", "Msun", "peak virial mass"),
    ("t_peak_gyr", "Gyr", "cosmic time of the peak mass"),
    (
        "t_infall_gyr",
        "Gyr",
        "merger time into the halo it fell into first",
    ),
    (
        "m_host_at_infall_msun",
        "Msun",
        "mass of that halo at that time",
    ),
    (
        "t_first_host_infall_gyr",
        "Gyr",
        "first crossing of the host's virial radius",
    ),
    (
        "t_last_host_infall_gyr",
        "Gyr",
        "last inward crossing of the host's evolving virial radius",
    ),
    (
        "t_release_gyr",
        "Gyr",
        "when it left its parent subhalo (NaN: order 1 or never)",
    ),
    ("n_pericentres", "", "pericentres passed"),
    ("t_peri_first_gyr", "Gyr", "first pericentre time"),
    ("r_peri_first_kpc", "kpc", "first pericentre radius"),
    ("r_peri_min_kpc", "kpc", "smallest pericentre radius"),
    ("t_peri_last_gyr", "Gyr", "last pericentre time"),
    ("r_peri_last_kpc", "kpc", "last pericentre radius"),
    ("r_apo_last_kpc", "kpc", "last apocentre radius"),
    (
        "n_host_crossings",
        "",
        "crossings of the host's virial radius after infall",
    ),
    (
        "t_disrupt_physical_gyr",
        "Gyr",
        "disruption by stripping or by the disc (NaN: survived)",
    ),
    (
        "m_reion_msun",
        "Msun",
        "mass of its branch at galaxies.reionization_z (0: not yet resolved then)",
    ),
    (
        "t_disrupt_disc_gyr",
        "Gyr",
        "pericentre at which the disc and bulge destroyed it (NaN: never)",
    ),
    (
        "t_disrupt_pericentre_gyr",
        "Gyr",
        "first pericentre inside the disc cut (NaN: none)",
    ),
    (
        "t_merge_gyr",
        "Gyr",
        "merger with the centre of the halo it orbited (status 3, 4; NaN otherwise)",
    ),
    (
        "bound_to_branch",
        "index",
        "branch of the halo it orbits at the end or merged with (0: the host)",
    ),
    (
        "x_kpc",
        "kpc",
        "position today (host frame, disc in the x-y plane)",
    ),
    ("y_kpc", "kpc", "position today"),
    ("z_kpc", "kpc", "position today"),
    ("vx_kms", "km/s", "velocity today"),
    ("vy_kms", "km/s", "velocity today"),
    ("vz_kms", "km/s", "velocity today"),
    ("r_kpc", "kpc", "galactocentric radius today"),
    ("m_bound_msun", "Msun", "bound mass today"),
    ("vmax_kms", "km/s", "Vmax today (tidal track)"),
    ("rmax_kpc", "kpc", "Rmax today"),
    ("vmax_infall_kms", "km/s", "Vmax at infall"),
    (
        "backsplash",
        "flag",
        "1: outside R_vir today after having been inside",
    ),
    (
        "status",
        "code",
        "0 in the host, 1 disrupted by stripping, 2 inside another subhalo, 3 merged with \
         its parent's centre, 4 merged with the central galaxy",
    ),
    ("occupied", "flag", "1: hosts a galaxy"),
    (
        "mstar_msun",
        "Msun",
        "stellar mass today, after tidal stripping of stars (0 if dark)",
    ),
    (
        "mstar_peak_msun",
        "Msun",
        "stellar mass it formed, before any stars were stripped (0 if dark)",
    ),
    ("m_v", "mag", "absolute V magnitude (NaN if dark)"),
    ("d_helio_kpc", "kpc", "heliocentric distance today"),
    (
        "observable",
        "flag",
        "1: the configured survey would detect it",
    ),
    (
        "t_first_partner_infall_gyr",
        "Gyr",
        "hosts of a pair: first inward crossing of the partner's virial radius (NaN: never inside it)",
    ),
    (
        "n_partner_crossings",
        "",
        "hosts of a pair: crossings of the partner's virial radius (odd: inside it today)",
    ),
    (
        "n_partner_pericentres",
        "",
        "hosts of a pair: pericentres about the partner",
    ),
    (
        "r_peri_min_partner_kpc",
        "kpc",
        "hosts of a pair: smallest pericentre about the partner (NaN: none)",
    ),
    (
        "r_partner_kpc",
        "kpc",
        "hosts of a pair: distance from the partner's centre today (NaN: isolated)",
    ),
];

fn host_cols(recs: &[(u64, &HostRecord)], first_row: u64, first_sub: u64) -> Vec<Col> {
    let f = |g: &dyn Fn(&HostRecord) -> f64| Col::F64(recs.iter().map(|(_, r)| g(r)).collect());
    let pf = |g: &dyn Fn(&crate::synth::PairRecord) -> f64| {
        Col::F64(
            recs.iter()
                .map(|(_, r)| r.pair.as_ref().map_or(f64::NAN, g))
                .collect(),
        )
    };
    let mut offsets = Vec::with_capacity(recs.len());
    let mut off = first_sub;
    for (_, r) in recs {
        offsets.push(off);
        off += r.subhaloes.len() as u64;
    }
    let _ = first_row;
    vec![
        Col::U64(recs.iter().map(|(g, _)| *g).collect()),
        Col::U16(recs.iter().map(|(_, r)| r.summary.id.cosmology).collect()),
        Col::U16(recs.iter().map(|(_, r)| r.summary.id.mass_bin).collect()),
        Col::U32(recs.iter().map(|(_, r)| r.summary.id.index).collect()),
        f(&|r| r.summary.m_vir_msun),
        f(&|r| r.summary.r_vir_kpc),
        f(&|r| r.summary.concentration),
        f(&|r| r.summary.z_half),
        f(&|r| r.summary.t_half_gyr),
        f(&|r| r.summary.t_04_gyr),
        f(&|r| r.summary.mstar_msun),
        f(&|r| r.summary.disc_mass_msun),
        Col::U64(recs.iter().map(|(_, r)| r.summary.n_tree_nodes).collect()),
        Col::U64(offsets),
        Col::U64(recs.iter().map(|(_, r)| r.subhaloes.len() as u64).collect()),
        Col::U8(recs.iter().map(|(_, r)| r.summary.id.environment).collect()),
        Col::U8(recs.iter().map(|(_, r)| r.summary.id.member).collect()),
        // the other host of a pair is the next row (primary) or the previous (partner)
        Col::U64(
            recs.iter()
                .map(|(g, r)| match &r.pair {
                    None => u64::MAX,
                    Some(p) if p.member == 0 => g + 1,
                    Some(_) => g - 1,
                })
                .collect(),
        ),
        pf(&|p| p.partner_m_vir_msun),
        pf(&|p| p.separation_kpc),
        pf(&|p| p.radial_velocity_kms),
        pf(&|p| p.tangential_velocity_kms),
        pf(&|p| p.min_separation_kpc),
        pf(&|p| p.t_min_separation_gyr),
        pf(&|p| p.partner_pos_kpc[0]),
        pf(&|p| p.partner_pos_kpc[1]),
        pf(&|p| p.partner_pos_kpc[2]),
        pf(&|p| p.partner_r_vir_kpc),
        pf(&|p| p.region_radius_kpc),
    ]
}

fn sub_cols(recs: &[(u64, &HostRecord)], first_row: u64) -> Vec<Col> {
    let rows: Vec<(
        u64,
        u64,
        &crate::orbits::SubhaloResult,
        &crate::galaxies::GalaxyRecord,
    )> = recs
        .iter()
        .enumerate()
        .flat_map(|(k, (g, r))| {
            r.subhaloes
                .iter()
                .zip(&r.galaxies)
                .map(move |(s, gal)| (first_row + k as u64, *g, s, gal))
        })
        .collect();
    let f = |get: &dyn Fn(&crate::orbits::SubhaloResult) -> f64| {
        Col::F64(rows.iter().map(|x| get(x.2)).collect())
    };
    let fg = |get: &dyn Fn(&crate::galaxies::GalaxyRecord) -> f64| {
        Col::F64(rows.iter().map(|x| get(x.3)).collect())
    };
    vec![
        Col::U64(rows.iter().map(|x| x.0).collect()),
        Col::U64(rows.iter().map(|x| x.1).collect()),
        Col::U32(rows.iter().map(|x| x.2.branch).collect()),
        Col::U32(rows.iter().map(|x| x.2.parent_branch).collect()),
        Col::U16(rows.iter().map(|x| x.2.order).collect()),
        Col::U32(rows.iter().map(|x| x.2.group).collect()),
        f(&|s| s.m_infall_msun),
        f(&|s| s.m_peak_msun),
        f(&|s| s.t_peak_gyr),
        f(&|s| s.t_infall_gyr),
        f(&|s| s.m_host_at_infall_msun),
        f(&|s| s.t_first_host_infall_gyr),
        f(&|s| s.t_last_host_infall_gyr),
        f(&|s| s.t_release_gyr),
        Col::U32(rows.iter().map(|x| x.2.n_pericentres).collect()),
        f(&|s| s.t_peri_first_gyr),
        f(&|s| s.r_peri_first_kpc),
        f(&|s| s.r_peri_min_kpc),
        f(&|s| s.t_peri_last_gyr),
        f(&|s| s.r_peri_last_kpc),
        f(&|s| s.r_apo_last_kpc),
        Col::U32(rows.iter().map(|x| x.2.n_host_crossings).collect()),
        f(&|s| s.t_disrupt_physical_gyr),
        f(&|s| s.m_reion_msun),
        f(&|s| s.t_disrupt_disc_gyr),
        f(&|s| s.t_disrupt_pericentre_gyr),
        f(&|s| s.t_merge_gyr),
        Col::U32(rows.iter().map(|x| x.2.bound_to_branch).collect()),
        f(&|s| s.pos_kpc[0]),
        f(&|s| s.pos_kpc[1]),
        f(&|s| s.pos_kpc[2]),
        f(&|s| s.vel_kms[0]),
        f(&|s| s.vel_kms[1]),
        f(&|s| s.vel_kms[2]),
        f(&|s| s.r_kpc),
        f(&|s| s.m_bound_msun),
        f(&|s| s.vmax_kms),
        f(&|s| s.rmax_kpc),
        f(&|s| s.vmax_infall_kms),
        Col::U8(rows.iter().map(|x| x.2.backsplash as u8).collect()),
        Col::U8(rows.iter().map(|x| x.2.status as u8).collect()),
        Col::U8(rows.iter().map(|x| x.3.occupied as u8).collect()),
        fg(&|g| g.mstar_msun),
        fg(&|g| g.mstar_peak_msun),
        fg(&|g| g.m_v),
        fg(&|g| g.d_helio_kpc),
        Col::U8(rows.iter().map(|x| x.3.observable as u8).collect()),
        f(&|s| s.t_first_partner_infall_gyr),
        Col::U32(rows.iter().map(|x| x.2.n_partner_crossings).collect()),
        Col::U32(rows.iter().map(|x| x.2.n_partner_pericentres).collect()),
        f(&|s| s.r_peri_min_partner_kpc),
        f(&|s| s.r_partner_kpc),
    ]
}

/// Deflate (gzip) level of the store's compressed columns, after a byte shuffle.
pub const DEFLATE_LEVEL: u8 = 1;

/// Floating-point columns of `/subhalos` stored compressed: those NaN or zero for most rows
/// (events most subhaloes never have, quantities of subhaloes outside the host or without a
/// galaxy: 55-79% of the rows of the default run), and the first infall into the host (shared
/// by the members of a group). On the default run they shrink to 28-56% of their size; the
/// other floating-point columns only to 73-90%, at three quarters of the compression time of
/// the whole store: they are stored as they are (docs/performance.md, "Store compression").
const DEFLATED_F64: &[&str] = &[
    "t_first_host_infall_gyr",
    "t_release_gyr",
    "r_apo_last_kpc",
    "t_disrupt_physical_gyr",
    "m_reion_msun",
    "t_disrupt_disc_gyr",
    "t_disrupt_pericentre_gyr",
    "t_merge_gyr",
    "d_helio_kpc",
    "t_first_partner_infall_gyr",
    "r_peri_min_partner_kpc",
    "r_partner_kpc",
];

/// Filters of a column: byte shuffle, then deflate at `DEFLATE_LEVEL`, for the integer columns
/// and `DEFLATED_F64`, when `compressed` and the HDF5 library has zlib (else none; a reader
/// needs nothing either way: HDF5 decompresses on reading).
fn col_filters(name: &str, template: &Col, compressed: bool) -> Vec<hdf5::filters::Filter> {
    use hdf5::filters::{deflate_available, Filter};
    let wanted = !matches!(template, Col::F64(_)) || DEFLATED_F64.contains(&name);
    if compressed && wanted && deflate_available() {
        vec![Filter::Shuffle, Filter::Deflate(DEFLATE_LEVEL)]
    } else {
        Vec::new()
    }
}

fn create_col(
    g: &Group,
    spec: &Spec,
    template: &Col,
    chunk: usize,
    compressed: bool,
) -> hdf5::Result<()> {
    let filters = col_filters(spec.0, template, compressed);
    macro_rules! mk {
        ($t:ty) => {{
            let ds = g
                .new_dataset::<$t>()
                .chunk(chunk)
                .set_filters(&filters)
                .shape(Extent::resizable(0))
                .create(spec.0)?;
            set_str_attr(&ds, "units", spec.1)?;
            set_str_attr(&ds, "description", spec.2)?;
        }};
    }
    match template {
        Col::F64(_) => mk!(f64),
        Col::U64(_) => mk!(u64),
        Col::U32(_) => mk!(u32),
        Col::U16(_) => mk!(u16),
        Col::U8(_) => mk!(u8),
    }
    Ok(())
}

fn append<T: H5Type>(ds: &hdf5::Dataset, v: &[T]) -> hdf5::Result<()> {
    let n = ds.size();
    ds.resize(n + v.len())?;
    ds.write_slice(v, n..n + v.len())
}

fn append_col(g: &Group, name: &str, c: &Col) -> hdf5::Result<()> {
    let ds = g.dataset(name)?;
    match c {
        Col::F64(v) => append(&ds, v),
        Col::U64(v) => append(&ds, v),
        Col::U32(v) => append(&ds, v),
        Col::U16(v) => append(&ds, v),
        Col::U8(v) => append(&ds, v),
    }
}

/// Subhalo columns added to format version 4 after its first stores were written, each with
/// the column that holds its value in those older stores: before stars were stripped by
/// tides (2026-12-04), the stellar mass a galaxy formed was its stellar mass today.
pub const LATER_SUB_COLUMNS: &[(&str, &str)] = &[("mstar_peak_msun", "mstar_msun")];

/// The name under which `name` is stored in the subhalo table `g`: itself, or for a column
/// of `LATER_SUB_COLUMNS` missing from an older store, the column that holds its value there.
pub fn stored_sub_column<'a>(g: &Group, name: &'a str) -> &'a str {
    if g.link_exists(name) {
        return name;
    }
    LATER_SUB_COLUMNS
        .iter()
        .find(|(later, _)| *later == name)
        .map_or(name, |(_, older)| older)
}

/// Whether the store at `path` was written before stars were stripped by tides (its subhalo
/// table lacks `mstar_peak_msun`). False if it cannot be read.
pub fn predates_stellar_stripping(path: &Path) -> bool {
    hdf5::File::open(path)
        .and_then(|f| f.group("subhalos"))
        .is_ok_and(|g| !g.link_exists("mstar_peak_msun"))
}

fn read_col(g: &Group, name: &str) -> hdf5::Result<Col> {
    let ds = g.dataset(name)?;
    let dt = ds.dtype()?;
    Ok(if dt.is::<f64>() {
        Col::F64(ds.read_raw()?)
    } else if dt.is::<u64>() {
        Col::U64(ds.read_raw()?)
    } else if dt.is::<u32>() {
        Col::U32(ds.read_raw()?)
    } else if dt.is::<u16>() {
        Col::U16(ds.read_raw()?)
    } else {
        Col::U8(ds.read_raw()?)
    })
}

/// A store being written (one file).
pub struct StoreWriter {
    file: hdf5::File,
    path: PathBuf,
    n_hosts: u64,
    n_subs: u64,
    mah_len: Option<usize>,
    /// Rows per chunk of the host histories.
    hist_chunk: usize,
}

/// Rows per chunk of the columns of a large store.
const CHUNK_ROWS: usize = 8192;

/// Host and subhalo rows of a store (for sizing the chunks of a store that joins it).
pub fn store_rows(path: &Path) -> hdf5::Result<(u64, u64)> {
    let f = hdf5::File::open(path)?;
    let n = |name: &str| -> hdf5::Result<u64> { Ok(f.dataset(name)?.shape()[0] as u64) };
    Ok((
        n("hosts/host_index")?,
        n(&format!("subhalos/{}", SUB_COLUMNS[0].0))?,
    ))
}

impl StoreWriter {
    /// Create a new store file with its tables, chunked for a large store, compressed.
    pub fn create(path: &Path, meta: &StoreMeta) -> hdf5::Result<Self> {
        Self::create_for(path, meta, (u64::MAX, u64::MAX), true)
    }

    /// Create a new store file for about `rows` = (hosts, subhaloes) rows: chunks are no
    /// larger than the tables (each column of a part file would otherwise take a whole
    /// 8192-row chunk, tripling the parts' size on disk). `compressed`: the integer columns
    /// and the mostly-NaN ones are shuffled and deflated (`col_filters`) — for stores that are
    /// kept; part files, written once and read once by the join, are not, so that the run
    /// compresses each value only once.
    pub fn create_for(
        path: &Path,
        meta: &StoreMeta,
        rows: (u64, u64),
        compressed: bool,
    ) -> hdf5::Result<Self> {
        let fit = |n: u64, cap: usize| n.clamp(1, cap as u64) as usize;
        let (chunk_h, chunk_s) = (fit(rows.0, CHUNK_ROWS), fit(rows.1, CHUNK_ROWS));
        let f = hdf5::File::create(path)?;
        set_str_attr(&f, "format", STORE_FORMAT)?;
        set_str_attr(&f, "config", &meta.config_toml)?;
        set_num_attr(&f, "master_seed", meta.master_seed)?;
        set_str_attr(&f, "generator", &meta.generator)?;
        set_str_attr(&f, "crate_version", &meta.crate_version)?;
        set_str_attr(&f, "build_info", &meta.build_info)?;
        set_str_attr(&f, "build_fingerprint", &meta.build_fingerprint)?;
        set_num_attr(&f, "n_hosts_total", meta.n_hosts_total)?;
        set_num_attr(&f, "shard_index", meta.shard.0)?;
        set_num_attr(&f, "shard_count", meta.shard.1)?;
        set_str_attr(&f, "config_dir", &meta.config_dir)?;
        set_str_attr(&f, "input_files", &meta.input_files)?;
        set_str_attr(&f, "orbit_options", &meta.orbit_options)?;
        let h = f.create_group("hosts")?;
        let s = f.create_group("subhalos")?;
        let templ_h = host_cols(&[], 0, 0);
        for (spec, c) in HOST_COLUMNS.iter().zip(&templ_h) {
            create_col(&h, spec, c, chunk_h, compressed)?;
        }
        let templ_s = sub_cols(&[], 0);
        for (spec, c) in SUB_COLUMNS.iter().zip(&templ_s) {
            create_col(&s, spec, c, chunk_s, compressed)?;
        }
        f.create_group("histories")?;
        f.create_group("analysis")?;
        Ok(Self {
            file: f,
            path: path.to_path_buf(),
            n_hosts: 0,
            n_subs: 0,
            mah_len: None,
            hist_chunk: fit(rows.0, 64),
        })
    }

    /// Append hosts (global index, record) in order.
    pub fn append(&mut self, recs: &[(u64, &HostRecord)]) -> hdf5::Result<()> {
        if recs.is_empty() {
            return Ok(());
        }
        let h = self.file.group("hosts")?;
        for (spec, c) in HOST_COLUMNS
            .iter()
            .zip(host_cols(recs, self.n_hosts, self.n_subs))
        {
            append_col(&h, spec.0, &c)?;
        }
        let s = self.file.group("subhalos")?;
        let cols = sub_cols(recs, self.n_hosts);
        let n_new = cols[0].len() as u64;
        for (spec, c) in SUB_COLUMNS.iter().zip(cols) {
            append_col(&s, spec.0, &c)?;
        }
        // histories: 2-D tables, one row per host, on the tree's output grid
        let len = recs[0].1.mah_msun.len();
        let mass: Vec<f64> = recs
            .iter()
            .flat_map(|(_, r)| r.mah_msun.iter().copied())
            .collect();
        let sep: Vec<f64> = recs
            .iter()
            .flat_map(|(_, r)| match &r.pair {
                Some(p) => p.separation_history_kpc.clone(),
                None => vec![f64::NAN; len],
            })
            .collect();
        let to2 = |v: Vec<f64>| {
            ndarray::Array2::from_shape_vec((recs.len(), len), v)
                .map_err(|e| hdf5::Error::from(e.to_string()))
        };
        let z = recs[0].1.mah_z.clone();
        self.append_histories(&to2(mass)?, &to2(sep)?, &z)?;
        self.mah_len = Some(len);
        self.n_hosts += recs.len() as u64;
        self.n_subs += n_new;
        Ok(())
    }

    /// Append the rows of another store (a part or a shard), in order.
    pub fn append_store(&mut self, other: &Path) -> Result<(), IoError> {
        let e = |x| IoError::hdf5(other, x);
        let f = hdf5::File::open(other).map_err(e)?;
        let h = f.group("hosts").map_err(e)?;
        let s = f.group("subhalos").map_err(e)?;
        let mut hcols: Vec<Col> = HOST_COLUMNS
            .iter()
            .map(|c| read_col(&h, c.0))
            .collect::<hdf5::Result<_>>()
            .map_err(e)?;
        let mut scols: Vec<Col> = SUB_COLUMNS
            .iter()
            .map(|c| read_col(&s, stored_sub_column(&s, c.0)))
            .collect::<hdf5::Result<_>>()
            .map_err(e)?;
        let nh = hcols[0].len() as u64;
        // renumber host rows and subhalo offsets
        if let Col::U64(v) = &mut hcols[13] {
            for x in v.iter_mut() {
                *x += self.n_subs;
            }
        }
        if let Col::U64(v) = &mut scols[0] {
            for x in v.iter_mut() {
                *x += self.n_hosts;
            }
        }
        let out = self.path.clone();
        let me = |x| IoError::hdf5(&out, x);
        let hh = self.file.group("hosts").map_err(me)?;
        for (spec, c) in HOST_COLUMNS.iter().zip(&hcols) {
            append_col(&hh, spec.0, c).map_err(me)?;
        }
        let ss = self.file.group("subhalos").map_err(me)?;
        let ns = scols[0].len() as u64;
        for (spec, c) in SUB_COLUMNS.iter().zip(&scols) {
            append_col(&ss, spec.0, c).map_err(me)?;
        }
        let hist = f.group("histories").map_err(e)?;
        if let Ok(ds) = hist.dataset("mass_msun") {
            let arr: ndarray::Array2<f64> = ds.read_2d().map_err(e)?;
            let sep: ndarray::Array2<f64> = hist
                .dataset("pair_separation_kpc")
                .and_then(|d| d.read_2d())
                .map_err(e)?;
            let z: Vec<f64> = hist.dataset("z").map_err(e)?.read_raw().map_err(e)?;
            self.append_histories(&arr, &sep, &z).map_err(me)?;
            self.mah_len = Some(arr.ncols());
        }
        self.n_hosts += nh;
        self.n_subs += ns;
        Ok(())
    }

    /// Append rows to the history tables (created with the first rows): main-branch mass
    /// and pair separation, columns at redshifts `z`.
    fn append_histories(
        &mut self,
        mass: &ndarray::Array2<f64>,
        sep: &ndarray::Array2<f64>,
        z: &[f64],
    ) -> hdf5::Result<()> {
        let hist = self.file.group("histories")?;
        let len = mass.ncols();
        if self.mah_len.is_none() {
            for (name, units, desc) in [
                (
                    "mass_msun",
                    "Msun",
                    "main-branch virial mass, one row per host, columns at /histories/z",
                ),
                (
                    "pair_separation_kpc",
                    "kpc",
                    "hosts of a pair: separation from the partner, one row per host, columns at /histories/z (NaN: isolated)",
                ),
            ] {
                let ds = hist
                    .new_dataset::<f64>()
                    .chunk((self.hist_chunk, len.max(1)))
                    .shape((Extent::resizable(0), Extent::fixed(len)))
                    .create(name)?;
                set_str_attr(&ds, "units", units)?;
                set_str_attr(&ds, "description", desc)?;
            }
            let zd = hist.new_dataset_builder().with_data(z).create("z")?;
            set_str_attr(&zd, "units", "")?;
            set_str_attr(&zd, "description", "redshifts of the history columns")?;
        }
        for (name, arr) in [("mass_msun", mass), ("pair_separation_kpc", sep)] {
            let ds = hist.dataset(name)?;
            let n = ds.shape()[0];
            ds.resize((n + arr.nrows(), len))?;
            ds.write_slice(arr, (n..n + arr.nrows(), ..))?;
        }
        Ok(())
    }

    pub fn file(&self) -> &hdf5::File {
        &self.file
    }

    pub fn n_hosts(&self) -> u64 {
        self.n_hosts
    }

    pub fn flush(&self) -> hdf5::Result<()> {
        self.file.flush()
    }
}

/// The `format` attribute of the stores this version writes. Version 2: satellites of
/// satellites evolve inside their parents, with status codes 0-4 and the columns
/// `t_merge_gyr` and `bound_to_branch`.
pub const STORE_FORMAT: &str = "retinue run store, version 4";

/// Whether `path` is a run store of this tool, of any format version (for deciding what an
/// output may replace).
pub fn is_run_store(path: &Path) -> bool {
    IoError::check_hdf5(path).is_ok()
        && hdf5::File::open(path)
            .ok()
            .and_then(|f| get_str_attr(&f, "format").ok())
            .is_some_and(|fmt| fmt.starts_with("retinue run store"))
}

/// The configuration text a run store of any format version was made with (None: not a run
/// store, or none recorded); for telling whose a store is without reading it all.
pub fn config_text_of(path: &Path) -> Option<String> {
    if !is_run_store(path) {
        return None;
    }
    let f = hdf5::File::open(path).ok()?;
    get_str_attr(&f, "config").ok()
}

/// Metadata of an existing store.
pub fn read_meta(path: &Path) -> Result<StoreMeta, IoError> {
    let e = |x| IoError::hdf5(path, x);
    IoError::check_hdf5(path)?;
    let f = hdf5::File::open(path).map_err(e)?;
    let fmt = get_str_attr(&f, "format").map_err(|_| IoError::Format {
        path: path.display().to_string(),
        reason: "not a retinue run store (no `format` attribute)".into(),
    })?;
    if !fmt.starts_with("retinue run store") {
        return Err(IoError::Format {
            path: path.display().to_string(),
            reason: format!("not a retinue run store (format `{fmt}`)"),
        });
    }
    if fmt != STORE_FORMAT {
        return Err(IoError::Format {
            path: path.display().to_string(),
            reason: format!(
                "written by another version of retinue (`{fmt}`; this version reads \
                 `{STORE_FORMAT}`, which adds paired hosts (environments) and their columns to \
                 the disc destroying subhaloes at pericentres and galaxies placed by \
                 reionisation: columns that older stores lack); \
                 run `retinue run` again to rebuild it"
            ),
        });
    }
    Ok(StoreMeta {
        config_toml: get_str_attr(&f, "config").map_err(e)?,
        master_seed: f
            .attr("master_seed")
            .and_then(|a| a.read_scalar())
            .map_err(e)?,
        generator: get_str_attr(&f, "generator").map_err(e)?,
        crate_version: get_str_attr(&f, "crate_version").map_err(e)?,
        build_info: get_str_attr(&f, "build_info").map_err(e)?,
        // absent from stores written before it was recorded
        build_fingerprint: get_str_attr(&f, "build_fingerprint").unwrap_or_default(),
        n_hosts_total: f
            .attr("n_hosts_total")
            .and_then(|a| a.read_scalar())
            .map_err(e)?,
        shard: (
            f.attr("shard_index")
                .and_then(|a| a.read_scalar())
                .map_err(e)?,
            f.attr("shard_count")
                .and_then(|a| a.read_scalar())
                .map_err(e)?,
        ),
        // absent from stores written before it was recorded
        config_dir: get_str_attr(&f, "config_dir").unwrap_or_default(),
        // absent from stores written before it was recorded
        input_files: get_str_attr(&f, "input_files").unwrap_or_default(),
        // absent from stores written before it was recorded
        orbit_options: get_str_attr(&f, "orbit_options").unwrap_or_default(),
    })
}

/// Check that a store holds every host of its run (or of its shard) exactly once: its
/// `host_index` column is exactly the shard's block [lo, hi) of `n_hosts_total` (the split of
/// `run::Shard::range`), in order. An error names how many hosts are there, how many should be,
/// and the first missing and doubled indices. Returns the store's metadata.
pub fn check_complete(path: &Path) -> Result<StoreMeta, IoError> {
    let meta = read_meta(path)?;
    let e = |x| IoError::hdf5(path, x);
    let f = hdf5::File::open(path).map_err(e)?;
    check_tables(&f, path)?;
    let idx: Vec<u64> = f
        .dataset("hosts/host_index")
        .and_then(|d| d.read_raw::<u64>())
        .map_err(e)?;
    let (k, n) = (meta.shard.0 as u64, meta.shard.1.max(1) as u64);
    let total = meta.n_hosts_total;
    let (lo, hi) = (total * k / n, total * (k + 1) / n);
    if idx.iter().copied().eq(lo..hi) {
        return Ok(meta);
    }
    let mut seen = std::collections::BTreeMap::<u64, u32>::new();
    for &i in &idx {
        *seen.entry(i).or_default() += 1;
    }
    let list = |v: Vec<u64>| -> String {
        let more = if v.len() > 8 { ", ..." } else { "" };
        let head: Vec<String> = v.iter().take(8).map(|i| i.to_string()).collect();
        format!("{}{more}", head.join(", "))
    };
    let missing: Vec<u64> = (lo..hi).filter(|i| !seen.contains_key(i)).collect();
    let doubled: Vec<u64> = seen
        .iter()
        .filter(|&(_, &c)| c > 1)
        .map(|(&i, _)| i)
        .collect();
    let outside: Vec<u64> = seen
        .keys()
        .copied()
        .filter(|&i| i < lo || i >= hi)
        .collect();
    let mut what = vec![format!(
        "holds {} host rows where shard {}/{} of a {total}-host run has {} (hosts {lo}..{hi})",
        idx.len(),
        k + 1,
        n,
        hi - lo
    )];
    if !missing.is_empty() {
        what.push(format!("missing: {}", list(missing)));
    }
    if !doubled.is_empty() {
        what.push(format!("doubled: {}", list(doubled)));
    }
    if !outside.is_empty() {
        what.push(format!("not of this shard: {}", list(outside)));
    }
    if only_out_of_order(&idx, lo, hi) {
        what.push("hosts out of order".into());
    }
    Err(IoError::Format {
        path: path.display().to_string(),
        reason: format!(
            "incomplete or damaged store: {}; run it again (or resume it) to complete it",
            what.join("; ")
        ),
    })
}

/// The tables of a store are whole: every column is there with as many rows as its table,
/// and the subhalo rows of each host are where `/hosts/sub_offset` and `sub_count` say (their
/// `host_row` read in blocks, so memory stays flat). An error names the first problem.
fn check_tables(f: &hdf5::File, path: &Path) -> Result<(), IoError> {
    let damaged = |what: String| IoError::Format {
        path: path.display().to_string(),
        reason: format!("damaged store: {what}; run it again to rebuild it"),
    };
    let e = |x| IoError::hdf5(path, x);
    let mut rows = [0usize; 2];
    for (t, (table, cols)) in [("hosts", HOST_COLUMNS), ("subhalos", SUB_COLUMNS)]
        .into_iter()
        .enumerate()
    {
        let g = f
            .group(table)
            .map_err(|_| damaged(format!("the table /{table} is missing")))?;
        for (i, (name, _, _)) in cols.iter().enumerate() {
            let name = &stored_sub_column(&g, name);
            let ds = g
                .dataset(name)
                .map_err(|_| damaged(format!("the column /{table}/{name} is missing")))?;
            let n = ds.shape().first().copied().unwrap_or(0);
            if i == 0 {
                rows[t] = n;
            } else if n != rows[t] {
                return Err(damaged(format!(
                    "the column /{table}/{name} has {n} rows where /{table}/{} has {}",
                    cols[0].0, rows[t]
                )));
            }
        }
    }
    let hosts = f.group("hosts").map_err(e)?;
    let read = |name: &str| -> Result<Vec<u64>, IoError> {
        hosts
            .dataset(name)
            .and_then(|d| d.read_raw::<u64>())
            .map_err(e)
    };
    let (offset, count) = (read("sub_offset")?, read("sub_count")?);
    let mut expect = 0u64;
    for (row, (&o, &c)) in offset.iter().zip(&count).enumerate() {
        if o != expect {
            return Err(damaged(format!(
                "host row {row}: sub_offset = {o} where the counts before it give {expect}"
            )));
        }
        expect = expect.saturating_add(c);
    }
    if expect != rows[1] as u64 {
        return Err(damaged(format!(
            "the hosts' sub_count add up to {expect} subhalo rows where /subhalos has {}",
            rows[1]
        )));
    }
    // each host's rows point back at it
    let host_row = f.dataset("subhalos/host_row").map_err(e)?;
    const BLOCK: usize = 1 << 20;
    let mut host = 0usize;
    let mut start = 0usize;
    while start < rows[1] {
        let end = (start + BLOCK).min(rows[1]);
        let block: Vec<u64> = host_row
            .read_slice_1d::<u64, _>(start..end)
            .map_err(e)?
            .to_vec();
        for (j, &hr) in block.iter().enumerate() {
            let r = (start + j) as u64;
            while host < offset.len() && r >= offset[host] + count[host] {
                host += 1;
            }
            if hr != host as u64 {
                return Err(damaged(format!(
                    "subhalo row {r} belongs to host row {hr} but lies in the rows of host row \
                     {host} (sub_offset/sub_count)"
                )));
            }
        }
        start = end;
    }
    Ok(())
}

/// Every index of [lo, hi) present once but not in order.
fn only_out_of_order(idx: &[u64], lo: u64, hi: u64) -> bool {
    let mut v = idx.to_vec();
    v.sort_unstable();
    v.iter().copied().eq(lo..hi)
}

/// Number of hosts in a store.
pub fn n_hosts_in(path: &Path) -> Result<usize, IoError> {
    let e = |x| IoError::hdf5(path, x);
    let f = hdf5::File::open(path).map_err(e)?;
    let n = f.dataset("hosts/host_index").map_err(e)?.size();
    Ok(n)
}

/// Number of subhalo rows in a store.
pub fn n_subhaloes_in(path: &Path) -> Result<usize, IoError> {
    let e = |x| IoError::hdf5(path, x);
    let f = hdf5::File::open(path).map_err(e)?;
    let n = f.dataset("subhalos/branch").map_err(e)?.size();
    Ok(n)
}

/// Read the columns the statistics need into a catalogue (every host).
pub fn read_catalog(path: &Path) -> Result<Catalog, IoError> {
    let n = n_hosts_in(path)?;
    read_catalog_range(path, 0, n)
}

/// Read hosts [h0, h1) and their subhaloes.
pub fn read_catalog_range(path: &Path, h0: usize, h1: usize) -> Result<Catalog, IoError> {
    let e = |x| IoError::hdf5(path, x);
    let f = hdf5::File::open(path).map_err(e)?;
    let h = f.group("hosts").map_err(e)?;
    let s = f.group("subhalos").map_err(e)?;
    fn sl<T: H5Type + Clone>(
        g: &Group,
        n: &str,
        r: std::ops::Range<usize>,
    ) -> hdf5::Result<Vec<T>> {
        Ok(g.dataset(n)?.read_slice_1d::<T, _>(r)?.to_vec())
    }
    let hr = h0..h1;
    let offs: Vec<u64> = sl(&h, "sub_offset", hr.clone()).map_err(e)?;
    let counts: Vec<u64> = sl(&h, "sub_count", hr.clone()).map_err(e)?;
    let n_sub_total = s.dataset("branch").map_err(e)?.size();
    let (s0, s1) = match (offs.first(), offs.last(), counts.last()) {
        (Some(&a), Some(&b), Some(&c)) => (a as usize, (b + c) as usize),
        _ => (0, 0),
    };
    if s1 > n_sub_total || s0 > s1 {
        return Err(IoError::Format {
            path: path.display().to_string(),
            reason: "host offsets point past the subhalo table (truncated or damaged store)".into(),
        });
    }
    let sr = s0..s1;
    let mut c = Catalog {
        host_id: sl(&h, "host_index", hr.clone()).map_err(e)?,
        host_cosmology: sl(&h, "cosmology_index", hr.clone()).map_err(e)?,
        host_cell: {
            let m: Vec<u16> = sl(&h, "mass_bin", hr.clone()).map_err(e)?;
            let env: Vec<u8> = sl(&h, "environment", hr.clone()).map_err(e)?;
            let mem: Vec<u8> = sl(&h, "pair_member", hr.clone()).map_err(e)?;
            (0..m.len())
                .map(|k| crate::stats::cells::cell_code(m[k], env[k], mem[k]))
                .collect()
        },
        host_m_vir_msun: sl(&h, "m_vir_msun", hr.clone()).map_err(e)?,
        host_r_vir_kpc: sl(&h, "r_vir_kpc", hr.clone()).map_err(e)?,
        ..Default::default()
    };
    c.host_pair_separation_kpc = sl(&h, "pair_separation_kpc", hr.clone()).map_err(e)?;
    c.host_partner_r_vir_kpc = sl(&h, "partner_r_vir_kpc", hr.clone()).map_err(e)?;
    c.host_region_radius_kpc = sl(&h, "pair_region_radius_kpc", hr.clone()).map_err(e)?;
    let p_m: Vec<f64> = sl(&h, "partner_m_vir_msun", hr.clone()).map_err(e)?;
    c.host_partner_m_vir_msun = p_m.clone();
    let p_x: Vec<f64> = sl(&h, "partner_x_kpc", hr.clone()).map_err(e)?;
    let p_y: Vec<f64> = sl(&h, "partner_y_kpc", hr.clone()).map_err(e)?;
    let p_z: Vec<f64> = sl(&h, "partner_z_kpc", hr.clone()).map_err(e)?;
    c.offset = offs.iter().map(|&o| o as usize - s0).collect();
    c.offset.push(s1 - s0);
    let rf = |n: &str| -> Result<Vec<f64>, IoError> { sl(&s, n, sr.clone()).map_err(e) };
    c.branch = sl(&s, "branch", sr.clone()).map_err(e)?;
    c.parent_branch = sl(&s, "parent_branch", sr.clone()).map_err(e)?;
    c.order = sl(&s, "order", sr.clone()).map_err(e)?;
    c.m_peak_msun = rf("m_peak_msun")?;
    c.m_bound_msun = rf("m_bound_msun")?;
    c.t_infall_gyr = rf("t_infall_gyr")?;
    c.m_host_at_infall_msun = rf("m_host_at_infall_msun")?;
    c.t_first_host_infall_gyr = rf("t_first_host_infall_gyr")?;
    c.t_last_host_infall_gyr = rf("t_last_host_infall_gyr")?;
    c.r_kpc = rf("r_kpc")?;
    let (x, y, z) = (rf("x_kpc")?, rf("y_kpc")?, rf("z_kpc")?);
    let (vx, vy, vz) = (rf("vx_kms")?, rf("vy_kms")?, rf("vz_kms")?);
    c.v_r_kms = (0..x.len())
        .map(|i| (x[i] * vx[i] + y[i] * vy[i] + z[i] * vz[i]) / c.r_kpc[i])
        .collect();
    c.v_t_kms = (0..x.len())
        .map(|i| {
            let (v2, v_r) = (vx[i] * vx[i] + vy[i] * vy[i] + vz[i] * vz[i], c.v_r_kms[i]);
            // (NaN stays NaN: f64::max would turn it into 0)
            if v_r.is_finite() {
                (v2 - v_r * v_r).max(0.0).sqrt()
            } else {
                f64::NAN
            }
        })
        .collect();
    c.status = sl(&s, "status", sr.clone()).map_err(e)?;
    c.t_disrupt_pericentre_gyr = rf("t_disrupt_pericentre_gyr")?;
    c.r_peri_min_kpc = rf("r_peri_min_kpc")?;
    let b: Vec<u8> = sl(&s, "backsplash", sr.clone()).map_err(e)?;
    c.backsplash = b.into_iter().map(|v| v != 0).collect();
    let o: Vec<u8> = sl(&s, "occupied", sr.clone()).map_err(e)?;
    c.occupied = o.into_iter().map(|v| v != 0).collect();
    c.mstar_msun = rf("mstar_msun")?;
    c.m_v = rf("m_v")?;
    let ob: Vec<u8> = sl(&s, "observable", sr.clone()).map_err(e)?;
    c.observable = ob.into_iter().map(|v| v != 0).collect();
    c.r_partner_kpc = rf("r_partner_kpc")?;
    c.once_in_partner = rf("t_first_partner_infall_gyr")?
        .into_iter()
        .map(f64::is_finite)
        .collect();
    // distance from the pair's barycentre (of the two virial masses), in the host's frame
    c.r_bary_kpc = vec![f64::NAN; x.len()];
    for k in 0..c.host_id.len() {
        if !p_m[k].is_finite() {
            continue;
        }
        let w = p_m[k] / (p_m[k] + c.host_m_vir_msun[k]);
        let b = [w * p_x[k], w * p_y[k], w * p_z[k]];
        for i in c.offset[k]..c.offset[k + 1] {
            c.r_bary_kpc[i] =
                ((x[i] - b[0]).powi(2) + (y[i] - b[1]).powi(2) + (z[i] - b[2]).powi(2)).sqrt();
        }
    }
    if c.offset.windows(2).any(|w| w[1] < w[0]) {
        return Err(IoError::Format {
            path: path.display().to_string(),
            reason: "host offsets are not increasing (damaged store)".into(),
        });
    }
    Ok(c)
}

/// The pair columns of hosts [h0, h1) that the report and figures need beside the catalogue:
/// the smallest separation of each mutual orbit (kpc; NaN for isolated hosts), the
/// redshifts of the history columns and the separation histories (one row per host).
pub struct PairRows {
    pub min_separation_kpc: Vec<f64>,
    pub z: Vec<f64>,
    pub separation_kpc: ndarray::Array2<f64>,
}

/// Read `PairRows` for hosts [h0, h1).
pub fn read_pair_rows(path: &Path, h0: usize, h1: usize) -> Result<PairRows, IoError> {
    let e = |x| IoError::hdf5(path, x);
    let f = hdf5::File::open(path).map_err(e)?;
    let h = f.group("hosts").map_err(e)?;
    let min_separation_kpc = h
        .dataset("pair_min_separation_kpc")
        .and_then(|d| d.read_slice_1d::<f64, _>(h0..h1))
        .map_err(e)?
        .to_vec();
    let hist = f.group("histories").map_err(e)?;
    let z: Vec<f64> = hist.dataset("z").and_then(|d| d.read_raw()).map_err(e)?;
    let separation_kpc = hist
        .dataset("pair_separation_kpc")
        .and_then(|d| d.read_slice_2d::<f64, _>((h0..h1, ..)))
        .map_err(e)?;
    Ok(PairRows {
        min_separation_kpc,
        z,
        separation_kpc,
    })
}

/// Directory of the part files of a run writing `final_path`.
pub fn parts_dir(final_path: &Path) -> PathBuf {
    let name = final_path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "run.h5".into());
    final_path.with_file_name(format!(".{name}.parts"))
}

/// Path of part `k`.
pub fn part_path(dir: &Path, k: usize) -> PathBuf {
    dir.join(format!("part-{k:05}.h5"))
}

/// Write one part atomically.
pub fn write_part(
    path: &Path,
    meta: &StoreMeta,
    recs: &[(u64, &HostRecord)],
) -> Result<(), IoError> {
    let atomic = AtomicPath::new(path);
    let r = (|| -> hdf5::Result<()> {
        let n_subs: usize = recs.iter().map(|(_, r)| r.subhaloes.len()).sum();
        let rows = (recs.len() as u64, n_subs as u64);
        let mut w = StoreWriter::create_for(&atomic.temp_path, meta, rows, false)?;
        w.append(recs)?;
        w.flush()
    })();
    match r {
        Ok(()) => atomic.commit().map(|_| ()),
        Err(e) => {
            atomic.discard();
            Err(IoError::hdf5(path, e))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use hdf5::filters::{deflate_available, Filter};

    /// Kept stores: integer columns and the mostly-NaN floating-point ones are shuffled and
    /// deflated, the other floating-point columns not; part files (`compressed` false): none.
    #[test]
    fn which_columns_are_compressed() {
        let z = vec![Filter::Shuffle, Filter::Deflate(DEFLATE_LEVEL)];
        let want = |on: bool| {
            if on && deflate_available() {
                z.clone()
            } else {
                vec![]
            }
        };
        let templ = sub_cols(&[], 0);
        let mut deflated_f64 = Vec::new();
        for ((name, _, _), c) in SUB_COLUMNS.iter().zip(&templ) {
            let int = !matches!(c, Col::F64(_));
            let on = int || DEFLATED_F64.contains(name);
            assert_eq!(col_filters(name, c, true), want(on), "{name}");
            assert!(col_filters(name, c, false).is_empty(), "{name}");
            if on && !int {
                deflated_f64.push(*name);
            }
        }
        // every listed name is a floating-point column of the table
        assert_eq!(deflated_f64.len(), DEFLATED_F64.len(), "{deflated_f64:?}");
        assert_eq!(col_filters("x_kpc", &Col::F64(vec![]), true), vec![]);
    }
}
