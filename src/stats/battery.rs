//! The test battery run on a catalogue of mock hosts.
//!
//! 1. All-of-N: per host, draw N satellites without replacement K times and count how often
//!    all N fell in (by a clock) before redshift z, on a grid of z (Monte Carlo; the exact
//!    hypergeometric value is stored beside it). Across hosts: median, 16–84% and the mean,
//!    with bootstrap intervals over hosts.
//! 2. Fraction-of-N: P(at least a fraction f of N fell in before z) for a range of N, exact
//!    hypergeometric per host (the infinite-draw limit of the Monte Carlo), summarised over
//!    hosts.
//! 3. Quenching-time comparison: N mock satellites drawn per host are paired at random with the
//!    N observed objects, whose quenching lookback times are perturbed by their errors; with
//!    an environmental delay tau, the draw is "explained" if every object's infall lookback
//!    minus tau is at least its quenching lookback. P(tau) over draws and hosts; the largest
//!    tau with P(tau) >= 1 - confidence is reported.
//! 4. Phase-space-matched objects: for each observed object, mock satellites within windows in
//!    distance, radial velocity and stellar mass, pooled over hosts: the infall-time
//!    distribution and P(infall lookback >= quenching lookback).
//! 5. Backsplash fraction in a shell outside the host (see `backsplash`).
//! 6. Dependence on host mass and cosmology: the same numbers per grid cell.
//!
//! Random numbers: one stream per host and test (`rng::test_rng` on the host's stored id, so
//! hosts of different cells never share draws), and one for the bootstrap; results do not
//! depend on thread count.

use rand::Rng;
use rand_distr::{Distribution, StandardNormal};
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use super::backsplash::{BacksplashOptions, FieldCounter};
use super::catalog::{Catalog, VelocitySums, N_SHELLS};
use super::clocks::{clock_times, host_cosmology, Clock, ClockTimes, PreprocessingThreshold};
use super::draws::{p_all_exact, p_all_mc, p_at_least_exact};
use super::intervals::{poisson1, spread, Binned, Spread, StreamingSpread};
use super::sample::ObservedSample;
use super::selection::Selection;
use crate::cosmology::Cosmology;
use crate::error::InvalidValue;
use crate::galaxies::GalaxyOptions;
use crate::linear::LinearTheory;
use crate::rng::{host_rng, test_rng, HostId, Stream};

/// Windows for phase-space matching.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct MatchWindows {
    /// Half-width in galactocentric distance, kpc.
    pub dr_kpc: f64,
    /// Half-width in radial velocity, km/s.
    pub dv_kms: f64,
    /// Half-width in log10 stellar mass, dex.
    pub dlog_mstar: f64,
}

impl Default for MatchWindows {
    fn default() -> Self {
        Self {
            dr_kpc: 25.0,
            dv_kms: 40.0,
            dlog_mstar: 0.5,
        }
    }
}

/// Settings of the test battery (`[tests]`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct TestOptions {
    pub selection: Selection,
    pub preprocessing: PreprocessingThreshold,
    /// Redshift grid of the probability curves (default `default_z_grid`: fine at low z,
    /// where a step in z is a long step in lookback time).
    pub z_grid: Vec<f64>,
    /// N of all-of-N (default: the observed sample's size, else 11).
    pub n_draw: Option<usize>,
    /// Monte Carlo draws per host.
    pub draws: usize,
    /// f of fraction-of-N and the range of N.
    pub fraction: f64,
    #[serde(deserialize_with = "crate::config::pair::exact")]
    pub n_range: [usize; 2],
    /// Bootstrap resamples over hosts.
    pub bootstrap: usize,
    /// Environmental quenching delays, Gyr.
    pub delay_grid_gyr: Vec<f64>,
    /// Confidence for the largest allowed delay.
    pub confidence: f64,
    pub match_windows: MatchWindows,
    pub backsplash: BacksplashOptions,
}

/// The default redshift grid of the probability curves: steps of 0.05 below z = 1, 0.1 up to
/// z = 2 and 0.25 up to z = 6 (47 redshifts). A step of 0.05 near z = 0 is 0.7 Gyr of
/// lookback time (the old grid's 0.25 was 3 Gyr, and drew the lookback curve as a straight
/// line over its first 3 Gyr); the steps grow with z as the lookback time flattens. Each
/// value is a ratio of integers, so 0.15 is the double nearest 0.15 and the tables print it
/// as such; 1, 2, 3 and 4 (the report's redshifts) are on the grid.
pub fn default_z_grid() -> Vec<f64> {
    let fine = (0..20).map(|i| i as f64 / 20.0);
    let mid = (10..20).map(|i| i as f64 / 10.0);
    let coarse = (8..=24).map(|i| i as f64 / 4.0);
    fine.chain(mid).chain(coarse).collect()
}

impl Default for TestOptions {
    fn default() -> Self {
        Self {
            selection: Selection::default(),
            preprocessing: PreprocessingThreshold::default(),
            z_grid: default_z_grid(),
            n_draw: None,
            draws: 10_000,
            fraction: 0.75,
            n_range: [6, 20],
            bootstrap: 1000,
            delay_grid_gyr: (0..=24).map(|i| 0.25 * i as f64).collect(),
            confidence: 0.95,
            match_windows: MatchWindows::default(),
            backsplash: BacksplashOptions::default(),
        }
    }
}

/// Strictly increasing.
fn increasing(v: &[f64]) -> bool {
    v.windows(2).all(|w| w[0] < w[1])
}

impl TestOptions {
    pub fn problems(&self, prefix: &str) -> Vec<InvalidValue> {
        let mut out = self.selection.problems(&format!("{prefix}selection."));
        let pre = &self.preprocessing;
        if let Some(h) = pre.halo_mass_msun.filter(|h| !(*h >= 1e6 && *h <= 1e16)) {
            out.push(InvalidValue::new(
                format!("{prefix}preprocessing.halo_mass_msun"),
                h,
                "must be in [1e6, 1e16] Msun",
            ));
        }
        if let Some(m) = pre.stellar_mass_msun.filter(|m| !(*m >= 1.0 && *m <= 1e13)) {
            out.push(InvalidValue::new(
                format!("{prefix}preprocessing.stellar_mass_msun"),
                m,
                "must be in [1, 1e13] Msun",
            ));
        }
        if let PreprocessingThreshold {
            halo_mass_msun: Some(h),
            stellar_mass_msun: Some(m),
        } = self.preprocessing
        {
            out.push(InvalidValue::new(
                format!("{prefix}preprocessing.stellar_mass_msun"),
                m,
                format!("give either halo_mass_msun (here {h}) or stellar_mass_msun, not both"),
            ));
        }
        if let PreprocessingThreshold {
            halo_mass_msun: None,
            stellar_mass_msun: None,
        } = self.preprocessing
        {
            // an empty table would otherwise count a halo of any mass (a review found it)
            out.push(InvalidValue::new(
                format!("{prefix}preprocessing"),
                "(a table with neither key)",
                "give halo_mass_msun or stellar_mass_msun (without the table, halo_mass_msun = \
                 1e10)",
            ));
        }
        out.extend(self.backsplash.problems(&format!("{prefix}backsplash.")));
        if self.z_grid.is_empty()
            || self.z_grid.iter().any(|z| !(*z >= 0.0 && *z <= 20.0))
            || !increasing(&self.z_grid)
        {
            out.push(InvalidValue::new(
                format!("{prefix}z_grid"),
                format!("{:?}", self.z_grid),
                "must be a non-empty, increasing list of redshifts in [0, 20] without repeats",
            ));
        }
        if !(100..=10_000_000).contains(&self.draws) {
            out.push(InvalidValue::new(
                format!("{prefix}draws"),
                self.draws,
                "must be in [100, 1e7]",
            ));
        }
        if let Some(n) = self.n_draw {
            if !(1..=1000).contains(&n) {
                out.push(InvalidValue::new(
                    format!("{prefix}n_draw"),
                    n,
                    "must be in [1, 1000]",
                ));
            }
        }
        if !(self.fraction > 0.0 && self.fraction <= 1.0) {
            out.push(InvalidValue::new(
                format!("{prefix}fraction"),
                self.fraction,
                "must be in (0, 1]",
            ));
        }
        if !(self.n_range[0] >= 1 && self.n_range[0] <= self.n_range[1] && self.n_range[1] <= 1000)
        {
            out.push(InvalidValue::new(
                format!("{prefix}n_range"),
                format!("{:?}", self.n_range),
                "must be [lo, hi] with 1 <= lo <= hi <= 1000",
            ));
        }
        if !(10..=100_000).contains(&self.bootstrap) {
            out.push(InvalidValue::new(
                format!("{prefix}bootstrap"),
                self.bootstrap,
                "must be in [10, 100000]",
            ));
        }
        if self.delay_grid_gyr.is_empty()
            || self
                .delay_grid_gyr
                .iter()
                .any(|t| !(*t >= 0.0 && *t <= 14.0))
            || !increasing(&self.delay_grid_gyr)
        {
            // the report reads the grid's end as its last value (a review found a descending
            // grid reported as an upper limit)
            out.push(InvalidValue::new(
                format!("{prefix}delay_grid_gyr"),
                format!("{:?}", self.delay_grid_gyr),
                "must be a non-empty, increasing list in [0, 14] Gyr without repeats",
            ));
        }
        if !(self.confidence > 0.0 && self.confidence < 1.0) {
            out.push(InvalidValue::new(
                format!("{prefix}confidence"),
                self.confidence,
                "must be in (0, 1)",
            ));
        }
        let w = &self.match_windows;
        if !(w.dr_kpc > 0.0 && w.dv_kms > 0.0 && w.dlog_mstar > 0.0) {
            out.push(InvalidValue::new(
                format!("{prefix}match_windows"),
                format!("{w:?}"),
                "all half-widths must be positive",
            ));
        }
        out
    }
}

/// A probability curve over hosts, on the z (or delay) grid.
#[derive(Debug, Clone)]
pub struct Curve {
    pub x: Vec<f64>,
    /// Per host (rows = included hosts), values on the grid. Kept by `run_tests`; a chunked
    /// run (`Merger` without rows) folds them into the summaries and drops them.
    pub per_host: Vec<Vec<f64>>,
    /// Host id of each row of `per_host`.
    pub hosts: Vec<u64>,
    pub spread: Vec<Spread>,
}

/// Results of the whole battery.
#[derive(Debug, Clone)]
pub struct AnalysisResults {
    pub n_draw: usize,
    pub selection: Selection,
    /// Candidates per host (every host tested), and the `host_index` of each of those hosts.
    pub candidates: Vec<usize>,
    pub candidate_hosts: Vec<u64>,
    /// Hosts with fewer candidates than n_draw (host ids), reported and not used.
    pub hosts_too_few: Vec<u64>,
    /// All-of-N per clock: Monte Carlo and exact.
    pub all_of_n_mc: Vec<(Clock, Curve)>,
    pub all_of_n_exact: Vec<(Clock, Curve)>,
    /// Fraction-of-N per clock and N (exact).
    pub fraction_of_n: Vec<(Clock, usize, Curve)>,
    /// Quenching comparison per clock: P(tau) and the largest allowed tau with its
    /// uncertainty.
    pub quench: Vec<(Clock, Curve, DelayLimit)>,
    /// Phase-space matches per object and clock: (object id, clock, pooled infall lookbacks,
    /// P(infall before quenching) with its spread over hosts, number of matches).
    pub matches: Vec<(String, Clock, Vec<f64>, Spread, usize)>,
    /// Backsplash: per-host fractions, mean backsplash count, expected field count.
    pub backsplash_fraction: Spread,
    pub backsplash_count_mean: f64,
    pub field_count_expected: f64,
    /// The same per shell (`tests.backsplash.shells_over_rvir`).
    pub backsplash_shells: Vec<ShellResult>,
    /// Infall lookback times of every selected satellite, per clock, in fixed bins
    /// (0.05 Gyr over [0, 15) Gyr).
    pub infall_lookbacks: Vec<(Clock, Binned)>,
    /// Per grid cell: (cosmology index, mass bin, number of hosts, median host mass (Msun),
    /// median first-infall redshift of selected satellites, mean all-of-N (first infall) at
    /// z = 2 when 2 is on the grid).
    pub dependence: Vec<(u16, u16, usize, f64, f64, f64)>,
    /// Raw per-host values behind the summaries, so partial results (host chunks) can be
    /// merged: per-host match fractions (aligned with `matches`), backsplash fractions,
    /// counts and expected field counts, and per-cell dependence lists.
    pub matches_per_host: Vec<Vec<f64>>,
    pub backsplash_per_host: Vec<f64>,
    /// Per host, per shell.
    pub backsplash_counts: Vec<Vec<f64>>,
    pub field_per_host: Vec<Vec<f64>>,
    pub dependence_raw: Vec<DependenceRaw>,
    /// Per grid cell: the hosts' satellites against the Milky Way's census (every satellite,
    /// whatever the selection), raw per host and summarised.
    pub census_raw: Vec<CensusRaw>,
    pub census: Vec<CensusRow>,
    /// The pair tests (`stats::pairs`), when the hosts tested include pairs: filled by the
    /// caller that streams the store (`analysis::compute`), None from `run_tests_raw`.
    pub pairs: Option<super::pairs::PairResults>,
}

/// Backsplash fraction in one shell [lo, hi) R_vir: spread of the per-host fractions, mean
/// backsplash and expected field counts per host.
#[derive(Debug, Clone)]
pub struct ShellResult {
    pub lo_over_rvir: f64,
    pub hi_over_rvir: f64,
    pub fraction: Spread,
    pub count_mean: f64,
    pub field_mean: f64,
}

/// n / (n + f), NaN when both are zero.
/// Mean over hosts of a per-host row's sum (None) or of its entry k, skipping the hosts whose
/// rows are NaN (not tested); NaN when none is left.
fn mean_of_rows(rows: &[Vec<f64>], k: Option<usize>) -> f64 {
    let vals: Vec<f64> = rows
        .iter()
        .map(|r| match k {
            Some(k) => r[k],
            None => r.iter().sum(),
        })
        .filter(|v| !v.is_nan())
        .collect();
    if vals.is_empty() {
        f64::NAN
    } else {
        vals.iter().sum::<f64>() / vals.len() as f64
    }
}

fn ratio(n: f64, f: f64) -> f64 {
    if n + f > 0.0 {
        n / (n + f)
    } else {
        f64::NAN
    }
}

/// Per grid cell: host masses, first-infall redshifts of selected satellites (binned: 0.002
/// in z over [0, 20), so the median is good to 0.002), and per-host all-of-N (first infall)
/// at z = 2.
#[derive(Debug, Clone)]
pub struct DependenceRaw {
    pub cell: (u16, u16),
    pub masses: Vec<f64>,
    pub zs: Binned,
    pub p2: Vec<f64>,
}

/// Per host of one grid cell, the numbers the Milky Way's satellite census is compared with
/// (`docs/validation.md`, "Subhalo populations"). A satellite is a galaxy-hosting subhalo
/// alive at the end (orbiting the host or inside another subhalo), at its own distance from
/// the host's centre.
#[derive(Debug, Clone, Default)]
pub struct CensusRaw {
    pub cell: (u16, u16),
    /// Satellites brighter than M_V = 0 and than M_V = -8 within 300 kpc.
    pub mv0: Vec<f64>,
    pub mv8: Vec<f64>,
    /// The median distance (kpc) of the satellites brighter than M_V = -8 within 300 kpc, for
    /// hosts with at least three (NaN otherwise).
    pub mv8_median_r_kpc: Vec<f64>,
    /// 1 if a satellite as bright as the Milky Way's second brightest (M_V <= -16.8) lies
    /// within 150 kpc, else 0.
    pub bright_pair: Vec<f64>,
    /// The velocity sums of the satellites brighter than M_V = 0 in each shell of
    /// `catalog::ANISOTROPY_SHELLS_KPC`.
    pub mv0_shells: Vec<[VelocitySums; N_SHELLS]>,
}

impl CensusRaw {
    /// Append another set of hosts (the next chunk of the same cell, or another cell for a
    /// pooled row); every per-host column, so none is left short.
    pub fn append(&mut self, other: CensusRaw) {
        let CensusRaw {
            cell: _,
            mv0,
            mv8,
            mv8_median_r_kpc,
            bright_pair,
            mv0_shells,
        } = other;
        self.mv0.extend(mv0);
        self.mv8.extend(mv8);
        self.mv8_median_r_kpc.extend(mv8_median_r_kpc);
        self.bright_pair.extend(bright_pair);
        self.mv0_shells.extend(mv0_shells);
    }
}

/// `CensusRaw` summarised over a cell's hosts: medians, and the fraction of hosts with a
/// satellite as bright as the Milky Way's second brightest within 150 kpc.
#[derive(Debug, Clone, PartialEq)]
pub struct CensusRow {
    pub cell: (u16, u16),
    pub hosts: usize,
    pub mv0_median: f64,
    pub mv8_median: f64,
    pub mv8_median_r_kpc: f64,
    /// Hosts with three or more satellites brighter than M_V = -8 within 300 kpc.
    pub mv8_r_hosts: usize,
    pub bright_pair_fraction: f64,
    /// Per shell of `catalog::ANISOTROPY_SHELLS_KPC`: the velocity anisotropy of the
    /// satellites brighter than M_V = 0 of all the hosts together, its jackknife error over
    /// hosts, and the number of satellites.
    pub beta: [f64; N_SHELLS],
    pub beta_err: [f64; N_SHELLS],
    pub beta_n: [f64; N_SHELLS],
}

/// The jackknife standard error from the leave-one-out estimates (Efron & Tibshirani 1993,
/// chapter 11, recalled: sqrt((n - 1)/n sum (x_i - mean)^2)); NaN with fewer than two or any
/// not finite.
fn jackknife_error(leave_one_out: &[f64]) -> f64 {
    let n = leave_one_out.len() as f64;
    if n < 2.0 || leave_one_out.iter().any(|x| !x.is_finite()) {
        return f64::NAN;
    }
    let mean = leave_one_out.iter().sum::<f64>() / n;
    ((n - 1.0) / n
        * leave_one_out
            .iter()
            .map(|x| (x - mean).powi(2))
            .sum::<f64>())
    .sqrt()
}

/// The median of the finite values of `v` (NaN when there are none).
fn median_of_finite(v: &[f64]) -> f64 {
    let mut s: Vec<f64> = v.iter().copied().filter(|x| x.is_finite()).collect();
    s.sort_by(f64::total_cmp);
    super::intervals::percentile(&s, 0.5)
}

/// Summarise one cell's census (or several cells' hosts pooled into one `CensusRaw`).
pub fn census_row(d: &CensusRaw) -> CensusRow {
    // one entry per host in every column (`CensusRaw::append`)
    assert!(
        [
            d.mv8.len(),
            d.mv8_median_r_kpc.len(),
            d.bright_pair.len(),
            d.mv0_shells.len()
        ]
        .iter()
        .all(|&n| n == d.mv0.len()),
        "census columns of unequal length"
    );
    let (mut beta, mut beta_err, mut beta_n) =
        ([f64::NAN; N_SHELLS], [f64::NAN; N_SHELLS], [0.0; N_SHELLS]);
    for k in 0..N_SHELLS {
        let total = d
            .mv0_shells
            .iter()
            .fold(VelocitySums::default(), |a, h| a.combined(h[k], 1.0));
        beta[k] = total.beta();
        beta_n[k] = total.n;
        beta_err[k] = jackknife_error(
            &d.mv0_shells
                .iter()
                .map(|h| total.combined(h[k], -1.0).beta())
                .collect::<Vec<_>>(),
        );
    }
    CensusRow {
        beta,
        beta_err,
        beta_n,
        cell: d.cell,
        hosts: d.mv0.len(),
        mv0_median: median_of_finite(&d.mv0),
        mv8_median: median_of_finite(&d.mv8),
        mv8_median_r_kpc: median_of_finite(&d.mv8_median_r_kpc),
        mv8_r_hosts: d.mv8_median_r_kpc.iter().filter(|x| x.is_finite()).count(),
        bright_pair_fraction: d.bright_pair.iter().sum::<f64>() / d.bright_pair.len().max(1) as f64,
    }
}

/// The bins of the pooled infall lookback times.
pub fn lookback_bins() -> Binned {
    Binned::new(0.0, 15.0, 300)
}

/// The bins of the first-infall redshifts per grid cell.
pub fn redshift_bins() -> Binned {
    Binned::new(0.0, 20.0, 10_000)
}

fn dependence_row(d: &DependenceRaw) -> (u16, u16, usize, f64, f64, f64) {
    let p2 = if d.p2.is_empty() {
        f64::NAN
    } else {
        d.p2.iter().sum::<f64>() / d.p2.len() as f64
    };
    (
        d.cell.0,
        d.cell.1,
        d.masses.len(),
        median_of_finite(&d.masses),
        d.zs.quantile(0.5),
        p2,
    )
}

/// The largest environmental quenching delay the quenching-delay test allows: the largest
/// delay of the grid whose mean probability over hosts is at least 1 - confidence, and how
/// well the hosts fix it (a review found the single value read as firmer than it is: a
/// minority of hosts can carry the mean).
#[derive(Debug, Clone, Default)]
pub struct DelayLimit {
    /// The largest allowed delay, Gyr (NaN: none of the grid's delays).
    pub tau: f64,
    /// The same in bootstrap resamples of the hosts: 16th, 84th, 2.5th and 97.5th
    /// percentiles, each a delay of the grid (NaN: none in at least that share of the
    /// resamples). Resamples that hold no tested host are left out, as in `Spread`.
    pub boot16: f64,
    pub boot84: f64,
    pub boot025: f64,
    pub boot975: f64,
    /// How many tested hosts have each largest allowed delay of their own: entry 0 counts
    /// the hosts that allow none, entry k + 1 those whose largest is the grid's k-th delay
    /// (a count per grid point, so that memory does not grow with the hosts and chunks of
    /// hosts merge by adding).
    pub host_counts: Vec<u64>,
    /// The median host's own largest allowed delay (the lower median for an even number of
    /// hosts; NaN: none for at least half of them).
    pub host_median: f64,
    /// Hosts whose own largest allowed delay is at least `tau` (0 when `tau` is none).
    pub hosts_reaching: u64,
}

impl DelayLimit {
    /// A host's own largest allowed delay: the largest x whose probability is at least
    /// `floor` (NaN: none).
    pub fn largest_allowed(x: &[f64], p: &[f64], floor: f64) -> f64 {
        x.iter()
            .zip(p)
            .filter(|(_, &v)| v >= floor)
            .map(|(t, _)| *t)
            .fold(f64::NAN, f64::max)
    }

    /// The index in `host_counts` of a largest allowed delay: 0 for none, k + 1 for the
    /// grid's k-th delay.
    fn slot(x: &[f64], tau: f64) -> usize {
        x.iter().position(|&t| t == tau).map_or(0, |k| k + 1)
    }

    /// Count the hosts' own largest allowed delays (rows of probabilities on the grid `x`).
    pub fn count_hosts(x: &[f64], rows: &[Vec<f64>], floor: f64) -> Vec<u64> {
        let mut counts = vec![0u64; x.len() + 1];
        for p in rows {
            counts[Self::slot(x, Self::largest_allowed(x, p, floor))] += 1;
        }
        counts
    }

    /// The number of tested hosts.
    pub fn hosts(&self) -> u64 {
        self.host_counts.iter().sum()
    }

    /// The nearest-rank q-quantile of delays of the grid, "none" (NaN) ranking below every
    /// delay.
    fn quantile_of_delays(sorted: &[f64], q: f64) -> f64 {
        if sorted.is_empty() {
            return f64::NAN;
        }
        let v = sorted[((sorted.len() - 1) as f64 * q).round() as usize];
        if v == f64::NEG_INFINITY {
            f64::NAN
        } else {
            v
        }
    }

    /// Sort delays with "none" (NaN) first, as minus infinity.
    fn sorted(v: impl Iterator<Item = f64>) -> Vec<f64> {
        let mut s: Vec<f64> = v
            .map(|t| if t.is_nan() { f64::NEG_INFINITY } else { t })
            .collect();
        s.sort_by(f64::total_cmp);
        s
    }

    /// Fill in the summary from the curve's bootstrap accumulator and the host counts.
    fn summarise(&mut self, x: &[f64], spread: &[Spread], acc: &StreamingSpread, floor: f64) {
        let means: Vec<f64> = spread.iter().map(|s| s.mean).collect();
        self.tau = Self::largest_allowed(x, &means, floor);
        // (a resample that drew no tested host has no mean: it is left out, as `Spread`
        // leaves it out, instead of counting as "none"; review)
        let boot = Self::sorted((0..acc.resamples()).filter_map(|b| {
            let p: Vec<Option<f64>> = (0..x.len()).map(|k| acc.resample_mean(b, k)).collect();
            p.iter().any(Option::is_some).then(|| {
                let p: Vec<f64> = p.into_iter().map(|v| v.unwrap_or(f64::NAN)).collect();
                Self::largest_allowed(x, &p, floor)
            })
        }));
        self.boot16 = Self::quantile_of_delays(&boot, 0.16);
        self.boot84 = Self::quantile_of_delays(&boot, 0.84);
        self.boot025 = Self::quantile_of_delays(&boot, 0.025);
        self.boot975 = Self::quantile_of_delays(&boot, 0.975);
        // the lower median from the counts: the first slot where the running count reaches
        // half of the hosts, rounded up
        let n = self.hosts();
        self.host_median = f64::NAN;
        if n > 0 {
            let mut run = 0;
            for (slot, c) in self.host_counts.iter().enumerate() {
                run += c;
                if 2 * run >= n {
                    self.host_median = if slot == 0 { f64::NAN } else { x[slot - 1] };
                    break;
                }
            }
        }
        self.hosts_reaching = if self.tau.is_nan() {
            0
        } else {
            self.host_counts[Self::slot(x, self.tau)..].iter().sum()
        };
    }
}

/// The curves of a result in a fixed order (all-of-N Monte Carlo, all-of-N exact,
/// fraction-of-N, quenching delay).
fn curves_mut(r: &mut AnalysisResults) -> Vec<&mut Curve> {
    r.all_of_n_mc
        .iter_mut()
        .map(|c| &mut c.1)
        .chain(r.all_of_n_exact.iter_mut().map(|c| &mut c.1))
        .chain(r.fraction_of_n.iter_mut().map(|c| &mut c.2))
        .chain(r.quench.iter_mut().map(|c| &mut c.1))
        .collect()
}

/// The Poisson(1) bootstrap weights of one host (its own stream: independent of chunking).
pub fn bootstrap_weights(master_seed: u64, host_id: u64, resamples: usize) -> Vec<u32> {
    // on the host's whole stream number (its mass bin was read with the environment and
    // pair bits and then masked, so a pair's hosts shared an isolated host's weights)
    let mut rng = test_rng(master_seed, host_id, Stream::Bootstrap, 0);
    (0..resamples).map(|_| poisson1(&mut rng)).collect()
}

/// Folds results computed on consecutive chunks of hosts (in host order) into running
/// summaries; `finish` computes every summary over all hosts. Memory does not grow with the
/// number of hosts unless `keep_rows` asks to keep the per-host curves: the curves are
/// summarised by `StreamingSpread` as they arrive. The result does not depend on the
/// chunking.
pub struct Merger<'a> {
    options: &'a TestOptions,
    master_seed: u64,
    keep_rows: bool,
    acc: Option<AnalysisResults>,
    spreads: Vec<StreamingSpread>,
}

impl<'a> Merger<'a> {
    pub fn new(options: &'a TestOptions, master_seed: u64, keep_rows: bool) -> Self {
        Self {
            options,
            master_seed,
            keep_rows,
            acc: None,
            spreads: Vec::new(),
        }
    }

    /// Fold in the next chunk's results.
    pub fn add(&mut self, mut p: AnalysisResults) {
        let nb = self.options.bootstrap;
        let mut weights: std::collections::HashMap<u64, Vec<u32>> = Default::default();
        {
            let curves = curves_mut(&mut p);
            if self.spreads.is_empty() {
                self.spreads = curves
                    .iter()
                    .map(|c| StreamingSpread::new(c.x.len(), nb))
                    .collect();
            }
            for (c, acc) in curves.into_iter().zip(self.spreads.iter_mut()) {
                for (row, &h) in c.per_host.iter().zip(&c.hosts) {
                    let w = weights
                        .entry(h)
                        .or_insert_with(|| bootstrap_weights(self.master_seed, h, nb));
                    acc.add(row, w);
                }
                if !self.keep_rows {
                    c.per_host = Vec::new();
                    c.hosts = Vec::new();
                }
            }
        }
        let Some(m) = self.acc.as_mut() else {
            self.acc = Some(p);
            return;
        };
        for (a, b) in curves_mut(m).into_iter().zip(curves_mut(&mut p)) {
            a.per_host.append(&mut b.per_host);
            a.hosts.append(&mut b.hosts);
        }
        for (a, b) in m.quench.iter_mut().zip(p.quench.iter()) {
            for (x, y) in a.2.host_counts.iter_mut().zip(&b.2.host_counts) {
                *x += y;
            }
        }
        m.candidates.extend(p.candidates);
        m.candidate_hosts.extend(p.candidate_hosts);
        m.hosts_too_few.extend(p.hosts_too_few);
        for ((a, ah), (b, bh)) in m
            .matches
            .iter_mut()
            .zip(m.matches_per_host.iter_mut())
            .zip(p.matches.into_iter().zip(p.matches_per_host))
        {
            a.2.extend(b.2);
            ah.extend(bh);
        }
        m.backsplash_per_host.extend(p.backsplash_per_host);
        m.backsplash_counts.extend(p.backsplash_counts);
        m.field_per_host.extend(p.field_per_host);
        for (a, b) in m.infall_lookbacks.iter_mut().zip(p.infall_lookbacks) {
            a.1.merge(&b.1);
        }
        for d in p.dependence_raw {
            match m.dependence_raw.iter_mut().find(|x| x.cell == d.cell) {
                Some(x) => {
                    x.masses.extend(d.masses);
                    x.zs.merge(&d.zs);
                    x.p2.extend(d.p2);
                }
                None => m.dependence_raw.push(d),
            }
        }
        for d in p.census_raw {
            match m.census_raw.iter_mut().find(|x| x.cell == d.cell) {
                Some(x) => x.append(d),
                None => m.census_raw.push(d),
            }
        }
    }

    /// Every summary and bootstrap interval over all hosts folded in (None: no chunk).
    pub fn finish(self) -> Option<AnalysisResults> {
        let options = self.options;
        let mut m = self.acc?;
        for (c, acc) in curves_mut(&mut m).into_iter().zip(&self.spreads) {
            c.spread = acc.finish();
        }
        let floor = 1.0 - options.confidence;
        // the quenching curves are the last ones of `curves_mut`
        let first_quench = self.spreads.len() - m.quench.len();
        for (q, acc) in m.quench.iter_mut().zip(&self.spreads[first_quench..]) {
            q.2.summarise(&q.1.x, &q.1.spread, acc, floor);
        }
        let mut boot_rng = host_rng(
            self.master_seed,
            HostId::new(u16::MAX, u16::MAX, u32::MAX),
            Stream::Statistics,
        );
        for (mm, per) in m.matches.iter_mut().zip(&m.matches_per_host) {
            mm.3 = spread(per, options.bootstrap, &mut boot_rng);
            mm.4 = mm.2.len();
        }
        m.backsplash_fraction = spread(&m.backsplash_per_host, options.bootstrap, &mut boot_rng);
        m.backsplash_count_mean = mean_of_rows(&m.backsplash_counts, None);
        m.field_count_expected = mean_of_rows(&m.field_per_host, None);
        let edges = &options.backsplash.shells_over_rvir;
        m.backsplash_shells = (0..options.backsplash.n_shells())
            .map(|k| {
                let per_host: Vec<f64> = m
                    .backsplash_counts
                    .iter()
                    .zip(&m.field_per_host)
                    .map(|(n, f)| ratio(n[k], f[k]))
                    .collect();
                ShellResult {
                    lo_over_rvir: edges[k],
                    hi_over_rvir: edges[k + 1],
                    fraction: spread(&per_host, options.bootstrap, &mut boot_rng),
                    count_mean: mean_of_rows(&m.backsplash_counts, Some(k)),
                    field_mean: mean_of_rows(&m.field_per_host, Some(k)),
                }
            })
            .collect();
        m.dependence_raw.sort_by_key(|d| d.cell);
        m.dependence = m.dependence_raw.iter().map(dependence_row).collect();
        m.census_raw.sort_by_key(|d| d.cell);
        m.census = m.census_raw.iter().map(census_row).collect();
        Some(m)
    }
}

/// Merge results computed on consecutive chunks of hosts (in host order) and compute every
/// summary over all hosts (the per-host curves are dropped; see `Merger`).
pub fn merge_partials(
    parts: Vec<AnalysisResults>,
    options: &TestOptions,
    master_seed: u64,
) -> Option<AnalysisResults> {
    let mut m = Merger::new(options, master_seed, false);
    for p in parts {
        m.add(p);
    }
    m.finish()
}

/// Run every test. `sample` supplies N (its size), the quenching times and the objects to
/// match; without it, tests 3 and 4 are skipped and N = `n_draw` (default 11).
pub fn run_tests(
    theories: &[LinearTheory],
    galaxies: &GalaxyOptions,
    cat: &Catalog,
    options: &TestOptions,
    sample: Option<&ObservedSample>,
    master_seed: u64,
) -> AnalysisResults {
    // summaries and bootstrap intervals exactly as for a chunked run, keeping the rows
    let mut merger = Merger::new(options, master_seed, true);
    merger.add(run_tests_raw(
        theories,
        galaxies,
        cat,
        options,
        sample,
        master_seed,
    ));
    merger.finish().expect("one part was added")
}

/// The per-host results of every test on `cat`, without the summaries over hosts (those
/// come from `Merger`, which folds chunks of hosts). `theories`: the run's cosmologies, in
/// the order of the hosts' cosmology index; each host's times are read on its own
/// cosmology's clock (redshift grid, lookback times) and its field count uses its own
/// linear theory.
pub fn run_tests_raw(
    theories: &[LinearTheory],
    galaxies: &GalaxyOptions,
    cat: &Catalog,
    options: &TestOptions,
    sample: Option<&ObservedSample>,
    master_seed: u64,
) -> AnalysisResults {
    let cosmos: Vec<&Cosmology> = theories.iter().map(|lt| lt.cosmology()).collect();
    let ci = |h: usize| cat.host_cosmology[h] as usize;
    // each host's present age, and the redshift grid on each cosmology's clock
    let t0: Vec<f64> = (0..cat.n_hosts())
        .map(|h| host_cosmology(&cosmos, cat, h).age0_gyr())
        .collect();
    let t_grids: Vec<Vec<f64>> = cosmos
        .iter()
        .map(|c| options.z_grid.iter().map(|&z| c.age_gyr(z)).collect())
        .collect();
    let n_draw = options
        .n_draw
        .or(sample.map(|s| s.objects.len()))
        .unwrap_or(11);
    let clocks: ClockTimes = clock_times(cat, &cosmos, galaxies, &options.preprocessing);
    let n_hosts = cat.n_hosts();
    let selected: Vec<Vec<usize>> = (0..n_hosts)
        .into_par_iter()
        .map(|h| options.selection.rows(cat, h))
        .collect();
    let candidates: Vec<usize> = selected.iter().map(|s| s.len()).collect();
    let usable: Vec<usize> = (0..n_hosts).filter(|&h| candidates[h] >= n_draw).collect();
    let hosts_too_few: Vec<u64> = (0..n_hosts)
        .filter(|&h| candidates[h] < n_draw)
        .map(|h| cat.host_id[h])
        .collect();
    let ids = |hs: &[usize]| -> Vec<u64> { hs.iter().map(|&h| cat.host_id[h]).collect() };

    let mut all_mc = Vec::new();
    let mut all_ex = Vec::new();
    let mut frac = Vec::new();
    let mut quench = Vec::new();
    let mut infall_lookbacks = Vec::new();
    for clock in Clock::ALL {
        let times = clocks.get(clock);
        let host_times = |h: usize| -> Vec<f64> { selected[h].iter().map(|&i| times[i]).collect() };
        // 1. all of N
        let mc: Vec<Vec<f64>> = usable
            .par_iter()
            .map(|&h| {
                let mut rng = test_rng(
                    master_seed,
                    cat.host_id[h],
                    Stream::Statistics,
                    clock as u32,
                );
                p_all_mc(
                    &host_times(h),
                    n_draw,
                    options.draws,
                    &t_grids[ci(h)],
                    &mut rng,
                )
            })
            .collect();
        let ex: Vec<Vec<f64>> = usable
            .iter()
            .map(|&h| {
                let ts = host_times(h);
                t_grids[ci(h)]
                    .iter()
                    .map(|&tz| {
                        let k = ts.iter().filter(|&&t| t < tz).count() as u64;
                        p_all_exact(ts.len() as u64, k, n_draw as u64)
                    })
                    .collect()
            })
            .collect();
        all_mc.push((
            clock,
            Curve {
                x: options.z_grid.clone(),
                per_host: mc,
                hosts: ids(&usable),
                spread: Vec::new(),
            },
        ));
        all_ex.push((
            clock,
            Curve {
                x: options.z_grid.clone(),
                per_host: ex,
                hosts: ids(&usable),
                spread: Vec::new(),
            },
        ));
        // 2. fraction of N, exact
        for n in options.n_range[0]..=options.n_range[1] {
            let k_min = (options.fraction * n as f64 - 1e-9).ceil() as u64;
            let rows: Vec<usize> = (0..n_hosts).filter(|&h| candidates[h] >= n).collect();
            let per: Vec<Vec<f64>> = rows
                .iter()
                .map(|&h| {
                    let ts = host_times(h);
                    t_grids[ci(h)]
                        .iter()
                        .map(|&tz| {
                            let k = ts.iter().filter(|&&t| t < tz).count() as u64;
                            p_at_least_exact(ts.len() as u64, k, n as u64, k_min)
                        })
                        .collect()
                })
                .collect();
            frac.push((
                clock,
                n,
                Curve {
                    x: options.z_grid.clone(),
                    per_host: per,
                    hosts: ids(&rows),
                    spread: Vec::new(),
                },
            ));
        }
        // 3. quenching-time comparison
        if let Some(sample) = sample {
            let n = sample.objects.len();
            let rows: Vec<usize> = (0..n_hosts).filter(|&h| candidates[h] >= n).collect();
            let per: Vec<Vec<f64>> = rows
                .par_iter()
                .map(|&h| {
                    let mut rng = test_rng(
                        master_seed,
                        cat.host_id[h],
                        Stream::Statistics,
                        16 + clock as u32,
                    );
                    let lb: Vec<f64> = host_times(h).iter().map(|&t| t0[h] - t).collect();
                    let draws = options.draws;
                    let mut idx: Vec<usize> = (0..lb.len()).collect();
                    let mut tau_star = Vec::with_capacity(draws);
                    for _ in 0..draws {
                        let mut m = f64::INFINITY;
                        for (j, o) in sample.objects.iter().enumerate() {
                            let r = rng.random_range(j..lb.len());
                            idx.swap(j, r);
                            let q = draw_quench_lookback(
                                o.t_quench_lookback_gyr,
                                o.t_quench_err_gyr,
                                t0[h],
                                &mut rng,
                            );
                            let l = lb[idx[j]];
                            // largest delay this pairing allows: l - tau >= q
                            m = m.min(if l.is_nan() { f64::NEG_INFINITY } else { l - q });
                        }
                        tau_star.push(m);
                    }
                    tau_star.sort_by(|a, b| a.partial_cmp(b).unwrap());
                    options
                        .delay_grid_gyr
                        .iter()
                        .map(|&tau| {
                            1.0 - tau_star.partition_point(|&v| v < tau) as f64 / draws as f64
                        })
                        .collect()
                })
                .collect();
            let floor = 1.0 - options.confidence;
            let limit = DelayLimit {
                host_counts: DelayLimit::count_hosts(&options.delay_grid_gyr, &per, floor),
                tau: f64::NAN,
                ..Default::default()
            };
            quench.push((
                clock,
                Curve {
                    x: options.delay_grid_gyr.clone(),
                    per_host: per,
                    hosts: ids(&rows),
                    spread: Vec::new(),
                },
                limit,
            ));
        }
        let mut pooled = lookback_bins();
        for (h, rows) in selected.iter().enumerate() {
            for &i in rows {
                pooled.add(t0[h] - times[i]);
            }
        }
        infall_lookbacks.push((clock, pooled));
    }

    // 4. phase-space matches
    let mut matches = Vec::new();
    let mut matches_per_host = Vec::new();
    if let Some(sample) = sample {
        let w = options.match_windows;
        for o in &sample.objects {
            for clock in Clock::ALL {
                let times = clocks.get(clock);
                let mut pooled = Vec::new();
                let mut per_host = Vec::new();
                for (h, &t0_h) in t0.iter().enumerate() {
                    let (mut k, mut early) = (0usize, 0.0f64);
                    for i in cat.rows(h) {
                        // a match is a satellite of the selection, like every other test's
                        // (review: its mass, magnitude and radius cuts were not applied, so
                        // an object near R_vir matched mocks beyond it)
                        if options.selection.passes(cat, h, i)
                            && (cat.r_kpc[i] - o.r_gc_kpc).abs() <= w.dr_kpc
                            && (cat.v_r_kms[i] - o.v_r_kms).abs() <= w.dv_kms
                            && (cat.mstar_msun[i].log10() - o.mstar_msun.log10()).abs()
                                <= w.dlog_mstar
                            && times[i].is_finite()
                        {
                            let lb = t0_h - times[i];
                            pooled.push(lb);
                            k += 1;
                            early += p_quenched_after(
                                lb,
                                o.t_quench_lookback_gyr,
                                o.t_quench_err_gyr,
                                t0_h,
                            );
                        }
                    }
                    if k > 0 {
                        per_host.push(early / k as f64);
                    }
                }
                let n = pooled.len();
                matches.push((o.id.clone(), clock, pooled, Spread::NAN, n));
                matches_per_host.push(per_host);
            }
        }
    }

    // 5. backsplash, per shell and over the whole range, for isolated hosts: the field model
    // knows one host only (a host of a pair has the partner's haloes and correlation around
    // it; the pair-region test, `stats::pairs`, counts those). A host of a pair gets NaN rows,
    // which the summaries skip.
    let b = &options.backsplash;
    let isolated = |h: usize| !super::pairs::is_pair_host(cat, h);
    // one field counter for each cosmology that has isolated hosts here (its correlation
    // table and mean density); per host only the host's bias and the shell integrals
    let counters: Vec<Option<FieldCounter>> = theories
        .iter()
        .enumerate()
        .map(|(k, lt)| {
            (0..n_hosts)
                .any(|h| ci(h) == k && isolated(h))
                .then(|| FieldCounter::new(b, lt))
        })
        .collect();
    let field_per_host: Vec<Vec<f64>> = (0..n_hosts)
        .map(|h| {
            if !isolated(h) {
                return vec![f64::NAN; b.n_shells()];
            }
            counters[ci(h)]
                .as_ref()
                .expect("counter of a used cosmology")
                .counts(
                    &theories[ci(h)],
                    cat.host_m_vir_msun[h],
                    cat.host_r_vir_kpc[h],
                )
        })
        .collect();
    let counts: Vec<Vec<f64>> = (0..n_hosts)
        .map(|h| {
            if !isolated(h) {
                vec![f64::NAN; b.n_shells()]
            } else if cat.host_backsplash_count.len() == n_hosts {
                cat.host_backsplash_count[h].clone()
            } else {
                let mut n = vec![0.0; b.n_shells()];
                for i in cat.rows(h) {
                    if let Some(k) = b.backsplash_shell(cat, h, i) {
                        n[k] += 1.0;
                    }
                }
                n
            }
        })
        .collect();
    let fr: Vec<f64> = counts
        .iter()
        .zip(&field_per_host)
        .map(|(n, f)| ratio(n.iter().sum(), f.iter().sum()))
        .collect();

    // 6. dependence on the grid cell
    let mut cells: Vec<(u16, u16)> = (0..n_hosts)
        .map(|h| (cat.host_cosmology[h], cat.host_cell[h]))
        .collect();
    cells.sort();
    cells.dedup();
    let first = &all_mc[0].1;
    let k2 = options.z_grid.iter().position(|&z| (z - 2.0).abs() < 1e-9);
    let dependence_raw: Vec<DependenceRaw> = cells
        .into_iter()
        .map(|(ci, mi)| {
            let hosts: Vec<usize> = (0..n_hosts)
                .filter(|&h| cat.host_cosmology[h] == ci && cat.host_cell[h] == mi)
                .collect();
            let cosmo = cosmos[ci as usize];
            let mut zs = redshift_bins();
            for &i in hosts.iter().flat_map(|&h| selected[h].iter()) {
                if clocks.first[i].is_finite() {
                    zs.add(cosmo.z_at_age(clocks.first[i]));
                }
            }
            let masses: Vec<f64> = hosts.iter().map(|&h| cat.host_m_vir_msun[h]).collect();
            let p2: Vec<f64> = k2
                .map(|k| {
                    usable
                        .iter()
                        .enumerate()
                        .filter(|(_, &h)| hosts.contains(&h))
                        .map(|(row, _)| first.per_host[row][k])
                        .collect()
                })
                .unwrap_or_default();
            DependenceRaw {
                cell: (ci, mi),
                masses,
                zs,
                p2,
            }
        })
        .collect();
    let census_raw: Vec<CensusRaw> = dependence_raw
        .iter()
        .map(|d| {
            let mut c = CensusRaw {
                cell: d.cell,
                ..Default::default()
            };
            for h in (0..n_hosts).filter(|&h| (cat.host_cosmology[h], cat.host_cell[h]) == d.cell) {
                let hc = cat.milky_way_census(h);
                c.mv0.push(hc.n_mv0);
                c.mv8.push(hc.n_mv8);
                c.mv8_median_r_kpc.push(hc.mv8_median_r_kpc);
                c.bright_pair.push(if hc.bright_pair { 1.0 } else { 0.0 });
                c.mv0_shells.push(hc.mv0_shells);
            }
            c
        })
        .collect();
    AnalysisResults {
        n_draw,
        selection: options.selection.clone(),
        candidates,
        candidate_hosts: cat.host_id.clone(),
        hosts_too_few,
        all_of_n_mc: all_mc,
        all_of_n_exact: all_ex,
        fraction_of_n: frac,
        quench,
        matches,
        backsplash_fraction: Spread::NAN,
        backsplash_count_mean: mean_of_rows(&counts, None),
        field_count_expected: mean_of_rows(&field_per_host, None),
        backsplash_shells: Vec::new(),
        infall_lookbacks,
        dependence: Vec::new(),
        matches_per_host,
        backsplash_per_host: fr,
        backsplash_counts: counts,
        field_per_host,
        dependence_raw,
        census_raw,
        census: Vec::new(),
        pairs: None,
    }
}

/// The probability that an object stopped forming stars after a satellite fell in `lb` Gyr
/// ago, P(L_quench <= lb), for L_quench drawn as in the quenching-delay test
/// (`draw_quench_lookback`: Gaussian t ± err truncated at the age, floored at 0):
/// Phi((lb - t)/err) / Phi((age - t)/err) for 0 <= lb < age, 1 at or beyond the age; the
/// indicator lb >= t when err = 0.
pub(crate) fn p_quenched_after(lb: f64, t: f64, err: f64, age: f64) -> f64 {
    if lb >= age {
        return 1.0;
    }
    if err <= 0.0 {
        return if lb >= t { 1.0 } else { 0.0 };
    }
    let phi = |x: f64| 0.5 * crate::special::erfc(-x / std::f64::consts::SQRT_2);
    let norm = phi((age - t) / err);
    if norm <= 0.0 {
        // the whole Gaussian lies beyond the age: every draw is set to the age
        return 0.0;
    }
    (phi((lb - t) / err) / norm).min(1.0)
}

/// One draw of an object's quenching lookback time (Gyr): Gaussian about the measured value
/// with its error, truncated above at the age of the host's universe `age` (no object
/// quenched before the Big Bang: draws beyond it are drawn again, up to 64 times, then set to
/// the age) and floored at 0 (a draw in the future is "quenched now").
fn draw_quench_lookback(t: f64, err: f64, age: f64, rng: &mut impl Rng) -> f64 {
    for _ in 0..64 {
        let g: f64 = StandardNormal.sample(rng);
        let q = t + err * g;
        if q <= age {
            return q.max(0.0);
        }
    }
    age
}

#[cfg(test)]
mod grid_tests {
    use super::default_z_grid;

    /// Fine near z = 0 (no step longer than 0.05 below z = 1, so no lookback step longer than
    /// about 0.7 Gyr there), increasing, from 0 to 6, with the report's redshifts on it and
    /// values that print as typed.
    #[test]
    fn default_z_grid_is_fine_at_low_z() {
        let g = default_z_grid();
        assert_eq!(g.len(), 47);
        assert_eq!((g[0], *g.last().unwrap()), (0.0, 6.0));
        assert!(g.windows(2).all(|w| w[1] > w[0]));
        for w in g.windows(2) {
            let step = w[1] - w[0];
            let most = if w[0] < 1.0 - 1e-9 {
                0.05
            } else if w[0] < 2.0 - 1e-9 {
                0.1
            } else {
                0.25
            };
            assert!(step <= most + 1e-12, "{w:?}");
        }
        for z in [0.5, 1.0, 2.0, 3.0, 4.0] {
            assert!(g.contains(&z), "{z}");
        }
        let printed: Vec<String> = g.iter().map(|z| z.to_string()).collect();
        assert!(printed.iter().all(|s| s.len() <= 4), "{printed:?}");
        // lookback steps near z = 0 in Planck 2018: under 0.7 Gyr
        let c = crate::cosmology::Cosmology::from_preset("planck18").unwrap();
        let lb: Vec<f64> = g.iter().map(|&z| c.lookback_gyr(z)).collect();
        assert!(lb.windows(2).take(20).all(|w| w[1] - w[0] < 0.7), "{lb:?}");
    }
}

#[cfg(test)]
mod quench_draw_tests {
    use super::draw_quench_lookback;
    use rand::SeedableRng;

    /// Draws of a quenching time near the age of the universe follow the normal truncated at
    /// the age: mean 12.87711 Gyr for 13.5 ± 1 Gyr truncated at 13.79 Gyr (scipy 1.18.1
    /// `stats.truncnorm.mean(-13.5, 0.29, loc=13.5, scale=1)`; standard deviation 0.65678).
    /// 20,000 draws: tolerance 4 standard errors (4 × 0.657 / √20000 = 0.019).
    #[test]
    fn quenching_draws_stop_at_the_big_bang() {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(3);
        let n = 20_000;
        let draws: Vec<f64> = (0..n)
            .map(|_| draw_quench_lookback(13.5, 1.0, 13.79, &mut rng))
            .collect();
        assert!(draws.iter().all(|&q| (0.0..=13.79).contains(&q)));
        let mean = draws.iter().sum::<f64>() / n as f64;
        assert!((mean - 12.87711).abs() < 0.019, "{mean}");
        // far from the age, an untruncated normal: 5 ± 1 Gyr
        let mean: f64 = (0..n)
            .map(|_| draw_quench_lookback(5.0, 1.0, 13.79, &mut rng))
            .sum::<f64>()
            / n as f64;
        assert!((mean - 5.0).abs() < 4.0 / (n as f64).sqrt(), "{mean}");
    }

    /// The phase-space matches' probability of quenching after infall agrees with the
    /// fraction of the quenching-delay test's own draws (20,000; binomial tolerance, 4σ),
    /// near the age (truncated) and far from it; and its limits.
    #[test]
    fn match_probability_agrees_with_the_draws() {
        use super::p_quenched_after;
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(5);
        let n = 20_000;
        for (lb, t, err) in [(13.0, 13.5, 1.0), (6.0, 5.0, 1.5), (2.0, 3.0, 0.5)] {
            let hits = (0..n)
                .filter(|_| draw_quench_lookback(t, err, 13.79, &mut rng) <= lb)
                .count() as f64
                / n as f64;
            let p = p_quenched_after(lb, t, err, 13.79);
            let tol = 4.0 * (p * (1.0 - p) / n as f64).sqrt() + 1e-9;
            assert!((hits - p).abs() < tol, "lb {lb}: {hits} vs {p}");
        }
        // scipy 1.18.1: stats.truncnorm.cdf(13.0, -13.5, 0.29, loc=13.5, scale=1) = 0.502429
        assert!((p_quenched_after(13.0, 13.5, 1.0, 13.79) - 0.502429).abs() < 1e-5);
        assert_eq!(p_quenched_after(14.0, 13.5, 1.0, 13.79), 1.0);
        assert_eq!(p_quenched_after(4.0, 5.0, 0.0, 13.79), 0.0);
        assert_eq!(p_quenched_after(5.0, 5.0, 0.0, 13.79), 1.0);
    }
}

#[cfg(test)]
mod delay_limit_tests {
    use super::DelayLimit;

    /// A host's largest allowed delay, and quantiles of delays with "none" ranking lowest
    /// (nearest rank, so every quantile is a delay of the grid or none).
    #[test]
    fn largest_delays_and_their_quantiles() {
        let x = [0.0, 0.5, 1.0, 1.5];
        assert_eq!(
            DelayLimit::largest_allowed(&x, &[0.3, 0.1, 0.06, 0.01], 0.05),
            1.0
        );
        // not monotone: the largest delay that passes counts
        assert_eq!(
            DelayLimit::largest_allowed(&x, &[0.3, 0.01, 0.06, 0.01], 0.05),
            1.0
        );
        assert!(DelayLimit::largest_allowed(&x, &[0.04, 0.01, 0.0, 0.0], 0.05).is_nan());
        let s = DelayLimit::sorted([1.0, f64::NAN, 0.5, f64::NAN, 1.5].into_iter());
        assert!(DelayLimit::quantile_of_delays(&s, 0.0).is_nan());
        // rank round(0.5 * 4) = 2: the third of (none, none, 0.5, 1.0, 1.5)
        assert_eq!(DelayLimit::quantile_of_delays(&s, 0.5), 0.5);
        assert_eq!(DelayLimit::quantile_of_delays(&s, 0.84), 1.0);
        assert_eq!(DelayLimit::quantile_of_delays(&s, 1.0), 1.5);
        assert!(DelayLimit::quantile_of_delays(&[], 0.5).is_nan());
        // host counts: none, none, 0.5, 1.0 -> slots 0, 0, 2, 3
        let rows = vec![
            vec![0.01, 0.0, 0.0, 0.0],
            vec![0.04, 0.0, 0.0, 0.0],
            vec![0.3, 0.2, 0.01, 0.0],
            vec![0.3, 0.2, 0.1, 0.0],
        ];
        assert_eq!(
            DelayLimit::count_hosts(&x, &rows, 0.05),
            vec![2, 0, 1, 1, 0]
        );
    }

    /// A bootstrap resample that drew no host has no largest delay: it is left out, not
    /// counted as "none" (review: with one host, 37% of resamples are empty and the 16% point
    /// was always "none").
    #[test]
    fn empty_resamples_do_not_count_as_none() {
        use crate::stats::intervals::StreamingSpread;
        let x = [0.0, 0.5, 1.0];
        let row = vec![0.3, 0.2, 0.01];
        let weights = [0u32, 1, 0, 2, 1, 0, 1, 1, 3, 0];
        let mut acc = StreamingSpread::new(x.len(), weights.len());
        acc.add(&row, &weights);
        let spread = acc.finish();
        let mut lim = DelayLimit {
            host_counts: DelayLimit::count_hosts(&x, std::slice::from_ref(&row), 0.05),
            ..Default::default()
        };
        lim.summarise(&x, &spread, &acc, 0.05);
        assert_eq!(lim.tau, 0.5);
        for t in [
            lim.boot16,
            lim.boot84,
            lim.boot025,
            lim.boot975,
            lim.host_median,
        ] {
            assert_eq!(t, 0.5);
        }
        assert_eq!((lim.hosts(), lim.hosts_reaching), (1, 1));
    }
}

#[cfg(test)]
mod census_tests {
    use super::{census_row, jackknife_error, CensusRaw};
    use crate::stats::catalog::VelocitySums;

    /// The jackknife error of a mean is the standard error s/sqrt(n) exactly (Efron &
    /// Tibshirani 1993, section 11.2, recalled; the identity is also checked by hand here:
    /// leave-one-out means of 1, 2, 4, 8 are 14/3, 13/3, 11/3, 7/3).
    #[test]
    fn jackknife_error_of_a_mean_is_its_standard_error() {
        let x = [1.0, 2.0, 4.0, 8.0];
        let n = x.len() as f64;
        let total: f64 = x.iter().sum();
        let loo: Vec<f64> = x.iter().map(|v| (total - v) / (n - 1.0)).collect();
        assert!((loo[0] - 14.0 / 3.0).abs() < 1e-12);
        let mean = total / n;
        let s2 = x.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1.0);
        assert!((jackknife_error(&loo) - (s2 / n).sqrt()).abs() < 1e-12);
        assert!(jackknife_error(&[1.0]).is_nan());
        assert!(jackknife_error(&[1.0, f64::NAN]).is_nan());
    }

    /// beta of hand-made shells: isotropic (v_r = ±a, |v_t| = a sqrt 2: sigma_t^2 = 2
    /// sigma_r^2), purely radial (1), tangential (sigma_t^2 = 4 sigma_r^2: -1), a mean infall
    /// removed from sigma_r; and census_row pools hosts' sums.
    #[test]
    fn anisotropy_of_hand_made_shells() {
        let shell = |pairs: &[(f64, f64)]| {
            let mut s = VelocitySums::default();
            for &(v_r, v_t) in pairs {
                s.add(v_r, v_t);
            }
            s
        };
        let a = 30.0;
        let iso = shell(&[(a, a * 2f64.sqrt()), (-a, a * 2f64.sqrt())]);
        assert!(iso.beta().abs() < 1e-12);
        assert!((shell(&[(a, 0.0), (-a, 0.0)]).beta() - 1.0).abs() < 1e-12);
        assert!((shell(&[(a, 2.0 * a), (-a, 2.0 * a)]).beta() + 1.0).abs() < 1e-12);
        // the same shell falling in at 100 km/s: sigma_r unchanged
        let infall = shell(&[(a - 100.0, a * 2f64.sqrt()), (-a - 100.0, a * 2f64.sqrt())]);
        assert!(infall.beta().abs() < 1e-9);
        assert!(shell(&[(a, a)]).beta().is_nan());
        // two hosts, one satellite each in shell 0: pooled they are the isotropic shell; taking
        // either out leaves one satellite, so no jackknife error
        let one = |v_r: f64| {
            let mut h = [VelocitySums::default(); 4];
            h[0].add(v_r, a * 2f64.sqrt());
            h
        };
        let raw = CensusRaw {
            mv0: vec![1.0, 1.0],
            mv8: vec![0.0, 0.0],
            mv8_median_r_kpc: vec![f64::NAN, f64::NAN],
            bright_pair: vec![0.0, 0.0],
            mv0_shells: vec![one(a), one(-a)],
            ..Default::default()
        };
        let row = census_row(&raw);
        assert!(row.beta[0].abs() < 1e-12 && row.beta_n[0] == 2.0);
        assert!(row.beta_err[0].is_nan() && row.beta[1].is_nan() && row.beta_n[1] == 0.0);
        // the same two hosts in two chunks (the analysis streams the store 64 hosts at a
        // time), appended: every column, so the same row
        let half = |k: usize| CensusRaw {
            mv0: vec![raw.mv0[k]],
            mv8: vec![raw.mv8[k]],
            mv8_median_r_kpc: vec![raw.mv8_median_r_kpc[k]],
            bright_pair: vec![raw.bright_pair[k]],
            mv0_shells: vec![raw.mv0_shells[k]],
            ..Default::default()
        };
        let mut joined = half(0);
        joined.append(half(1));
        let again = census_row(&joined);
        assert_eq!(again.hosts, 2);
        assert_eq!(
            (again.beta[0], again.beta_n[0]),
            (row.beta[0], row.beta_n[0])
        );
    }
}
