//! Streaming a run store into the compact catalogue the tests need, host chunk by host chunk,
//! so memory stays flat in the number of hosts: only rows that some test uses are kept
//! (selected satellites and phase-space-match candidates), the pre-processing clock is
//! computed while each host's full table is at hand, backsplash counts (and a pair host's
//! field dwarfs of the pair region) are reduced per host, and the figure distributions (the
//! pairs' separations among them) are accumulated in fixed bins.

use std::path::Path;

use super::battery::TestOptions;
use super::catalog::Catalog;
use super::clocks::{check_cosmology_indices, clock_times};
use super::intervals::Binned;
use super::pairs::{region_counts, PairGeometry};
use super::sample::ObservedSample;
use super::selection::Selection;
use crate::cosmology::Cosmology;
use crate::galaxies::GalaxyOptions;
use crate::io::store::{n_hosts_in, read_catalog_range, read_pair_rows};
use crate::io::IoError;

/// Fixed-bin distributions for the figures.
#[derive(Debug, Clone)]
pub struct FigureData {
    /// Smallest pericentres of the satellites the tests select (`[tests.selection]`, its
    /// survival model included): 60 bins over 0–300 kpc.
    pub peri_kpc: Binned,
    /// Surviving subhaloes inside R_vir per bin of log10(m_bound/M_host): 70 bins over
    /// [-7, 0].
    pub log_mass_ratio: Binned,
    /// The same per cosmology (indexed by the hosts' cosmology index), with its number of
    /// hosts: a sweep's curves apart (a walkthrough saw warm dark matter's suppression vanish
    /// in the pooled curve).
    pub log_mass_ratio_by_cosmology: Vec<(Binned, usize)>,
    /// The selected satellites per bin of r/R_vir: 50 bins over [0, 1], or over the
    /// selection's radius range when that reaches beyond R_vir (`for_selection`).
    pub r_over_rvir: Binned,
    pub n_hosts: usize,
    /// The hosts' virial masses (Msun) and radii (kpc) today: smallest, largest and the sum of
    /// log10 (for the geometric mean), to put the tree resolution on the mass function and
    /// the observed distances on the radial distribution.
    pub host_m_vir_msun: HostRange,
    pub host_r_vir_kpc: HostRange,
    /// The pairs' separations today, smallest and over time, per pair cell (empty without
    /// pairs).
    pub pairs: PairGeometry,
}

/// Smallest, largest and geometric mean of a positive quantity over hosts, accumulated one
/// host at a time (memory does not grow with the number of hosts).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HostRange {
    pub min: f64,
    pub max: f64,
    pub log10_sum: f64,
    pub n: usize,
}

impl Default for HostRange {
    fn default() -> Self {
        Self {
            min: f64::INFINITY,
            max: f64::NEG_INFINITY,
            log10_sum: 0.0,
            n: 0,
        }
    }
}

impl HostRange {
    pub fn add(&mut self, v: f64) {
        if v > 0.0 && v.is_finite() {
            self.min = self.min.min(v);
            self.max = self.max.max(v);
            self.log10_sum += v.log10();
            self.n += 1;
        }
    }

    /// The geometric mean; NaN without hosts.
    pub fn geometric_mean(&self) -> f64 {
        if self.n == 0 {
            f64::NAN
        } else {
            10f64.powf(self.log10_sum / self.n as f64)
        }
    }
}

impl Default for FigureData {
    fn default() -> Self {
        Self {
            peri_kpc: Binned::new(0.0, 300.0, 60),
            log_mass_ratio: Binned::new(-7.0, 0.0, 70),
            log_mass_ratio_by_cosmology: Vec::new(),
            r_over_rvir: Binned::new(0.0, 1.0, 50),
            n_hosts: 0,
            host_m_vir_msun: HostRange::default(),
            host_r_vir_kpc: HostRange::default(),
            pairs: PairGeometry::default(),
        }
    }
}

impl FigureData {
    /// Bins for the satellites `selection` picks: the radial bins reach its outer radius.
    pub fn for_selection(selection: &Selection) -> Self {
        let hi = selection.r_over_rvir[1].clamp(1.0, 100.0);
        Self {
            r_over_rvir: Binned::new(0.0, hi, 50),
            ..Self::default()
        }
    }

    /// The per-cosmology mass function of cosmology `k`, made when first needed.
    fn by_cosmology(&mut self, k: u16) -> &mut (Binned, usize) {
        let k = k as usize;
        if self.log_mass_ratio_by_cosmology.len() <= k {
            self.log_mass_ratio_by_cosmology
                .resize(k + 1, (Binned::new(-7.0, 0.0, 70), 0));
        }
        &mut self.log_mass_ratio_by_cosmology[k]
    }

    fn add(&mut self, c: &Catalog, h: usize, i: usize, selection: &Selection) {
        if !c.alive(i) {
            return;
        }
        let rv = c.host_r_vir_kpc[h];
        if c.r_kpc[i] < rv {
            let x = (c.m_bound_msun[i] / c.host_m_vir_msun[h]).log10();
            self.log_mass_ratio.add(x);
            self.by_cosmology(c.host_cosmology[h]).0.add(x);
        }
        if selection.passes(c, h, i) {
            self.peri_kpc.add(c.r_peri_min_kpc[i]);
            self.r_over_rvir.add(c.r_kpc[i] / rv);
        }
    }
}

/// Read a store in chunks of `chunk` hosts and keep what the tests need.
pub fn compact_from_store(
    path: &Path,
    options: &TestOptions,
    sample: Option<&ObservedSample>,
    cosmos: &[&Cosmology],
    galaxies: &GalaxyOptions,
    chunk: usize,
) -> Result<(Catalog, FigureData), IoError> {
    let mut all = Catalog {
        offset: vec![0],
        ..Default::default()
    };
    let fig = for_each_chunk(path, options, sample, cosmos, galaxies, chunk, &mut |c| {
        let base = all.branch.len();
        all.host_id.extend(&c.host_id);
        all.host_cosmology.extend(&c.host_cosmology);
        all.host_cell.extend(&c.host_cell);
        all.host_m_vir_msun.extend(&c.host_m_vir_msun);
        all.host_r_vir_kpc.extend(&c.host_r_vir_kpc);
        all.host_pair_separation_kpc
            .extend(&c.host_pair_separation_kpc);
        all.host_partner_r_vir_kpc.extend(&c.host_partner_r_vir_kpc);
        all.host_region_radius_kpc.extend(&c.host_region_radius_kpc);
        all.host_partner_m_vir_msun
            .extend(&c.host_partner_m_vir_msun);
        all.host_backsplash_count
            .extend(c.host_backsplash_count.iter().cloned());
        all.host_pair_region_count
            .extend(c.host_pair_region_count.iter().cloned());
        all.host_census.extend(c.host_census.iter().copied());
        for i in 0..c.n_subhaloes() {
            all.push_row_from(&c, i, c.t_pre_gyr[i]);
        }
        all.offset.extend(c.offset[1..].iter().map(|o| o + base));
    })?;
    Ok((all, fig))
}

/// Stream a store chunk by chunk: each chunk's compact catalogue is handed to `f` and
/// dropped; returns the figure distributions of every host. Memory: one chunk. `cosmos`:
/// the run's cosmologies, indexed by the hosts' cosmology index (a host outside the list is
/// an error).
pub fn for_each_chunk(
    path: &Path,
    options: &TestOptions,
    sample: Option<&ObservedSample>,
    cosmos: &[&Cosmology],
    galaxies: &GalaxyOptions,
    chunk: usize,
    f: &mut dyn FnMut(Catalog),
) -> Result<FigureData, IoError> {
    for_each_chunk_where(
        path,
        options,
        sample,
        cosmos,
        galaxies,
        chunk,
        &|_, _| true,
        f,
    )
}

/// As `for_each_chunk`, for the hosts of the grid cells `keep(cosmology, mass_bin)` accepts
/// only (the others are neither tested nor drawn).
#[allow(clippy::too_many_arguments)]
pub fn for_each_chunk_where(
    path: &Path,
    options: &TestOptions,
    sample: Option<&ObservedSample>,
    cosmos: &[&Cosmology],
    galaxies: &GalaxyOptions,
    chunk: usize,
    keep: &dyn Fn(u16, u16) -> bool,
    f: &mut dyn FnMut(Catalog),
) -> Result<FigureData, IoError> {
    let n = n_hosts_in(path)?;
    let mut fig = FigureData::for_selection(&options.selection);
    let w = options.match_windows;
    let b = &options.backsplash;
    let mut h0 = 0;
    while h0 < n {
        let h1 = (h0 + chunk.max(1)).min(n);
        let mut out = Catalog {
            offset: vec![0],
            ..Default::default()
        };
        let c = read_catalog_range(path, h0, h1)?;
        check_cosmology_indices(&c, cosmos.len()).map_err(|reason| IoError::Format {
            path: path.display().to_string(),
            reason,
        })?;
        let clocks = clock_times(&c, cosmos, galaxies, &options.preprocessing);
        // the pairs' separations (each pair once, on its primary's row)
        let primaries: Vec<usize> = (0..c.n_hosts())
            .filter(|&h| {
                keep(c.host_cosmology[h], c.host_cell[h])
                    && super::pairs::is_pair_host(&c, h)
                    && super::cells::split_cell(c.host_cell[h]).2 == 0
            })
            .collect();
        if !primaries.is_empty() {
            let rows = read_pair_rows(path, h0, h1)?;
            for h in primaries {
                fig.pairs.add(
                    (c.host_cosmology[h], c.host_cell[h]),
                    c.host_pair_separation_kpc[h],
                    rows.min_separation_kpc[h],
                    c.host_region_radius_kpc[h],
                    &rows.z,
                    rows.separation_kpc
                        .row(h)
                        .as_slice()
                        .expect("a row of a standard-layout array"),
                );
            }
        }
        for h in 0..c.n_hosts() {
            if !keep(c.host_cosmology[h], c.host_cell[h]) {
                continue;
            }
            out.host_id.push(c.host_id[h]);
            out.host_cosmology.push(c.host_cosmology[h]);
            out.host_cell.push(c.host_cell[h]);
            out.host_m_vir_msun.push(c.host_m_vir_msun[h]);
            out.host_r_vir_kpc.push(c.host_r_vir_kpc[h]);
            out.push_pair_host_from(&c, h);
            let mut n_bs = vec![0.0; b.n_shells()];
            for i in c.rows(h) {
                fig.add(&c, h, i, &options.selection);
                if let Some(k) = b.backsplash_shell(&c, h, i) {
                    n_bs[k] += 1.0;
                }
                let keep = options.selection.passes(&c, h, i)
                    || sample.is_some_and(|s| {
                        options.selection.counts_status(&c, i)
                            && c.occupied[i]
                            && s.objects.iter().any(|o| {
                                (c.r_kpc[i] - o.r_gc_kpc).abs() <= w.dr_kpc
                                    && (c.v_r_kms[i] - o.v_r_kms).abs() <= w.dv_kms
                                    && (c.mstar_msun[i].log10() - o.mstar_msun.log10()).abs()
                                        <= w.dlog_mstar
                            })
                    });
                if keep {
                    out.push_row_from(&c, i, clocks.pre[i]);
                }
            }
            out.host_backsplash_count.push(n_bs);
            out.host_census.push(c.census_from_rows(h));
            out.host_pair_region_count
                .push(region_counts(b, &c, h).unwrap_or_default());
            out.offset.push(out.branch.len());
            fig.n_hosts += 1;
            fig.by_cosmology(c.host_cosmology[h]).1 += 1;
            fig.host_m_vir_msun.add(c.host_m_vir_msun[h]);
            fig.host_r_vir_kpc.add(c.host_r_vir_kpc[h]);
        }
        if out.n_hosts() > 0 {
            f(out);
        }
        h0 = h1;
    }
    Ok(fig)
}
