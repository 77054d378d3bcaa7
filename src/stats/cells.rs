//! Results per grid cell (cosmology x host mass): every test of `tests` run on each cell's
//! hosts alone, folded chunk by chunk like the pooled results, so that a sweep answers per
//! cosmology and per host mass as well as over all hosts. Each host is read on its own
//! cosmology's clock (as in the pooled tests).

use super::battery::{run_tests_raw, Merger};
use super::catalog::Catalog;
use super::{AnalysisResults, ObservedSample, TestOptions};
use crate::galaxies::GalaxyOptions;
use crate::linear::LinearTheory;

/// The code of a grid cell beside its cosmology: the host-mass bin (10 bits), the environment
/// (5 bits) and, in a pair, which host (1 bit: the partners of a pair cell form a cell of
/// their own). Equal to the mass bin for isolated hosts of the first environment.
pub fn cell_code(mass_bin: u16, environment: u8, member: u8) -> u16 {
    (mass_bin & 0x3ff) | ((environment as u16 & 0x1f) << 10) | ((member as u16 & 1) << 15)
}

/// (mass bin, environment, member) of a cell code.
pub fn split_cell(code: u16) -> (u16, u8, u8) {
    (
        code & 0x3ff,
        ((code >> 10) & 0x1f) as u8,
        (code >> 15) as u8,
    )
}

/// One cell's results.
#[derive(Debug, Clone)]
pub struct CellResults {
    pub cosmology: u16,
    /// The cell's code (`cell_code`: host mass, environment, pair member).
    pub mass_bin: u16,
    pub n_hosts: usize,
    pub results: AnalysisResults,
}

/// Per-cell accumulators (cells in order of first appearance; stores hold the hosts cell by
/// cell, so that is grid order).
pub struct CellMergers<'a> {
    options: &'a TestOptions,
    master_seed: u64,
    cells: Vec<((u16, u16), Merger<'a>, usize)>,
}

impl<'a> CellMergers<'a> {
    pub fn new(options: &'a TestOptions, master_seed: u64) -> Self {
        Self {
            options,
            master_seed,
            cells: Vec::new(),
        }
    }

    /// Test a chunk's hosts cell by cell and fold each cell's results into its accumulator.
    pub fn add(
        &mut self,
        theories: &[LinearTheory],
        galaxies: &GalaxyOptions,
        cat: &Catalog,
        sample: Option<&ObservedSample>,
    ) {
        let mut keys: Vec<(u16, u16)> = (0..cat.n_hosts())
            .map(|h| (cat.host_cosmology[h], cat.host_cell[h]))
            .collect();
        keys.dedup();
        let mut seen: Vec<(u16, u16)> = Vec::new();
        for key in keys {
            if seen.contains(&key) {
                continue;
            }
            seen.push(key);
            let hosts: Vec<usize> = (0..cat.n_hosts())
                .filter(|&h| (cat.host_cosmology[h], cat.host_cell[h]) == key)
                .collect();
            let n = hosts.len();
            let sub = cat.select_hosts(hosts);
            let part = run_tests_raw(
                theories,
                galaxies,
                &sub,
                self.options,
                sample,
                self.master_seed,
            );
            let i = match self.cells.iter().position(|c| c.0 == key) {
                Some(i) => i,
                None => {
                    self.cells
                        .push((key, Merger::new(self.options, self.master_seed, false), 0));
                    self.cells.len() - 1
                }
            };
            self.cells[i].1.add(part);
            self.cells[i].2 += n;
        }
    }

    /// Every cell's summaries, sorted by (cosmology, mass bin).
    pub fn finish(self) -> Vec<CellResults> {
        let mut out: Vec<CellResults> = self
            .cells
            .into_iter()
            .filter_map(|(key, m, n)| {
                m.finish().map(|results| CellResults {
                    cosmology: key.0,
                    mass_bin: key.1,
                    n_hosts: n,
                    results,
                })
            })
            .collect();
        out.sort_by_key(|c| (c.cosmology, c.mass_bin));
        out
    }
}
