//! One merger tree in an HDF5 file (`retinue tree --out`). Layout and columns are documented
//! in docs/output-format.md.

use std::path::{Path, PathBuf};

use super::h5::{links_to_i64, set_num_attr, set_str_attr, write_column};
use super::{AtomicPath, IoError};
use crate::trees::{HostHistory, MergerTree};

/// Provenance written as root attributes.
#[derive(Debug, Clone)]
pub struct TreeMeta {
    pub cosmology_toml: String,
    /// The linear theory's choices (transfer function, filter, warm dark matter, collapse
    /// threshold) as TOML.
    pub linear_toml: String,
    pub pch08_toml: String,
    pub seed: u64,
    pub host_index: u32,
    pub generator: String,
    pub mass_definition: String,
    pub z_max: f64,
}

/// Write a tree and its derived history, atomically (temporary name, then rename).
pub fn write_tree(
    path: &Path,
    tree: &MergerTree,
    hist: &HostHistory,
    meta: &TreeMeta,
) -> Result<PathBuf, IoError> {
    // like `retinue run`, create the directory the file goes to
    if let Some(dir) = path.parent().filter(|d| !d.as_os_str().is_empty()) {
        std::fs::create_dir_all(dir).map_err(|e| IoError::fs(dir, e))?;
    }
    let atomic = AtomicPath::new(path);
    let r = write_inner(&atomic.temp_path, tree, hist, meta)
        .map_err(|e| IoError::hdf5(&atomic.temp_path, e));
    match r {
        Ok(()) => atomic.commit(),
        Err(e) => {
            atomic.discard();
            Err(e)
        }
    }
}

fn write_inner(
    path: &Path,
    tree: &MergerTree,
    hist: &HostHistory,
    meta: &TreeMeta,
) -> hdf5::Result<()> {
    let f = hdf5::File::create(path)?;
    set_str_attr(&f, "format", "retinue merger tree, version 1")?;
    set_str_attr(&f, "crate_version", env!("CARGO_PKG_VERSION"))?;
    set_str_attr(&f, "cosmology", &meta.cosmology_toml)?;
    set_str_attr(&f, "linear", &meta.linear_toml)?;
    set_str_attr(&f, "pch08", &meta.pch08_toml)?;
    set_str_attr(&f, "generator", &meta.generator)?;
    set_str_attr(&f, "mass_definition", &meta.mass_definition)?;
    set_num_attr(&f, "master_seed", meta.seed)?;
    set_num_attr(&f, "host_index", meta.host_index)?;
    set_num_attr(&f, "host_mass_msun", tree.mass_msun[0])?;
    set_num_attr(&f, "resolution_msun", tree.m_resolution_msun)?;
    set_num_attr(&f, "z_max", meta.z_max)?;
    set_num_attr(&f, "z_half", hist.z_half)?;
    set_num_attr(&f, "t_half_gyr", hist.t_half_gyr)?;
    set_num_attr(&f, "bound_violations", tree.bound_violations)?;

    let g = f.create_group("nodes")?;
    write_column(
        &g,
        "mass_msun",
        &tree.mass_msun,
        "Msun",
        "bound (virial) mass of the node",
    )?;
    write_column(
        &g,
        "t_gyr",
        &tree.t_gyr,
        "Gyr",
        "cosmic time since the Big Bang",
    )?;
    write_column(&g, "z", &tree.z, "", "redshift")?;
    write_column(&g, "w", &tree.w, "", "excursion-set clock delta_c/D")?;
    write_column(
        &g,
        "descendant",
        &links_to_i64(&tree.descendant),
        "index",
        "node it becomes (-1 for the root)",
    )?;
    write_column(
        &g,
        "main_progenitor",
        &links_to_i64(&tree.main_progenitor),
        "index",
        "most massive progenitor; head of the progenitor list (-1: none)",
    )?;
    write_column(
        &g,
        "next_sibling",
        &links_to_i64(&tree.next_sibling),
        "index",
        "next progenitor of the same descendant (-1: none)",
    )?;
    write_column(
        &g,
        "branch",
        &tree.branch,
        "index",
        "branch (chain of main progenitors) the node belongs to; 0 = main branch",
    )?;
    write_column(
        &g,
        "smooth_accretion_msun",
        &tree.smooth_msun,
        "Msun",
        "mass gained below the resolution since the node's progenitors",
    )?;

    let g = f.create_group("main_branch")?;
    write_column(&g, "z", &hist.output_z, "", "output redshift")?;
    write_column(
        &g,
        "t_gyr",
        &hist.output_t_gyr,
        "Gyr",
        "cosmic time of the output",
    )?;
    write_column(
        &g,
        "mass_msun",
        &hist.mah_msun,
        "Msun",
        "main-branch mass (0 once below resolution)",
    )?;

    let a = &hist.accretions;
    let g = f.create_group("accretions")?;
    let col_u32 =
        |f: &dyn Fn(&crate::trees::Accretion) -> u32| a.iter().map(f).collect::<Vec<u32>>();
    let col_f64 =
        |f: &dyn Fn(&crate::trees::Accretion) -> f64| a.iter().map(f).collect::<Vec<f64>>();
    write_column(
        &g,
        "branch",
        &col_u32(&|x| x.branch),
        "index",
        "branch id in /nodes/branch",
    )?;
    write_column(
        &g,
        "order",
        &a.iter().map(|x| x.order).collect::<Vec<u16>>(),
        "",
        "1: fell into the main branch; 2: into a first-order branch; ...",
    )?;
    write_column(
        &g,
        "into_branch",
        &col_u32(&|x| x.into_branch),
        "index",
        "branch it merged into",
    )?;
    write_column(
        &g,
        "t_infall_gyr",
        &col_f64(&|x| x.t_infall_gyr),
        "Gyr",
        "merger time (midpoint in delta_c/D between the two nodes)",
    )?;
    write_column(
        &g,
        "z_infall",
        &col_f64(&|x| x.z_infall),
        "",
        "merger redshift",
    )?;
    write_column(
        &g,
        "m_infall_msun",
        &col_f64(&|x| x.m_infall_msun),
        "Msun",
        "mass just before the merger",
    )?;
    write_column(
        &g,
        "m_host_at_infall_msun",
        &col_f64(&|x| x.m_host_at_infall_msun),
        "Msun",
        "mass of the halo it fell into, at the merger",
    )?;
    write_column(
        &g,
        "m_peak_msun",
        &col_f64(&|x| x.m_peak_msun),
        "Msun",
        "largest mass along the branch",
    )?;
    write_column(
        &g,
        "t_peak_gyr",
        &col_f64(&|x| x.t_peak_gyr),
        "Gyr",
        "time of the peak mass",
    )?;
    write_column(
        &g,
        "group",
        &col_u32(&|x| x.group),
        "index",
        "first-order branch through which it reached the main branch",
    )?;
    write_column(
        &g,
        "t_host_infall_gyr",
        &col_f64(&|x| x.t_host_infall_gyr),
        "Gyr",
        "when its group entered the main branch",
    )?;
    write_column(
        &g,
        "z_host_infall",
        &col_f64(&|x| x.z_host_infall),
        "",
        "redshift of t_host_infall_gyr",
    )?;
    write_column(
        &g,
        "z_oldest_resolved",
        &col_f64(&|x| tree.branch_oldest_z[x.branch as usize]),
        "",
        "redshift of the branch's oldest state above the resolution (can lie beyond its earliest node)",
    )?;
    write_column(
        &g,
        "m_oldest_resolved_msun",
        &col_f64(&|x| tree.branch_oldest_msun[x.branch as usize]),
        "Msun",
        "mass of the branch at z_oldest_resolved",
    )?;
    f.flush()?;
    Ok(())
}
