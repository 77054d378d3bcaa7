//! Reports: CSV tables, a Markdown summary, the `analysis` group of the store, and figures.

pub mod directory;
pub mod figures;

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use crate::io::h5::{set_num_attr, set_str_attr};
use crate::io::{AtomicPath, IoError};
use crate::stats::backsplash::FieldModel;
use crate::stats::battery::Curve;
use crate::stats::intervals::Spread;
use crate::stats::{AnalysisResults, ObservedSample, TestOptions};

/// Rows of fewer hosts than this are flagged in the report (a bootstrap over fewer values
/// understates the uncertainty: common practice).
const FEW_HOSTS: u64 = 20;

fn spread_header() -> &'static str {
    "mean,median,p16,p84,boot16,boot84,boot025,boot975"
}

fn spread_row(s: &Spread) -> String {
    format!(
        "{:.6},{:.6},{:.6},{:.6},{:.6},{:.6},{:.6},{:.6}",
        s.mean, s.median, s.p16, s.p84, s.boot16, s.boot84, s.boot025, s.boot975
    )
}

fn write_atomic(path: &Path, text: &str) -> Result<(), IoError> {
    let a = AtomicPath::new(path);
    std::fs::write(&a.temp_path, text).map_err(|e| IoError::fs(&a.temp_path, e))?;
    a.commit().map(|_| ())
}

/// Names of a grid cell in tables and the report.
#[derive(Debug, Clone)]
pub struct CellLabels {
    /// Cosmology label per cosmology index.
    pub cosmologies: Vec<String>,
    /// Host mass (or range) label per mass bin.
    pub masses: Vec<String>,
    /// Environment label per environment, and whether each is a pair (empty: isolated
    /// hosts only).
    pub environments: Vec<(String, bool)>,
    /// The thermal-relic mass per cosmology tested (keV; None: cold dark matter, or a
    /// cosmology whose cells are not tested). Empty: not known (no caveat on warm dark
    /// matter).
    pub wdm_kev: Vec<Option<f64>>,
    /// Whether each cosmology's trees use the sharp-k filter (aligned with `wdm_kev`).
    pub sharp_k: Vec<bool>,
}

impl CellLabels {
    /// (cosmology, host mass) of a cell (`code`: `stats::cells::cell_code`); indices outside
    /// the lists get their number. When the run has more than one environment or a pair, the
    /// host-mass name carries the environment's label, and " partner" for the partners of a
    /// pair: e.g. "1.2e12 pair partner".
    pub fn of(&self, cosmology: u16, code: u16) -> (String, String) {
        let (mass_bin, env, member) = crate::stats::cells::split_cell(code);
        let mut mass = self
            .masses
            .get(mass_bin as usize)
            .cloned()
            .unwrap_or_else(|| format!("mass bin {mass_bin}"));
        let named = self.environments.len() > 1 || self.environments.iter().any(|e| e.1);
        if named || env > 0 {
            let label = self
                .environments
                .get(env as usize)
                .map(|e| e.0.clone())
                .unwrap_or_else(|| format!("environment {env}"));
            mass = format!("{mass} {label}");
            if member == 1 {
                mass.push_str(" partner");
            }
        }
        (
            self.cosmologies
                .get(cosmology as usize)
                .cloned()
                .unwrap_or_else(|| format!("cosmology {cosmology}")),
            mass,
        )
    }

    /// Number of cells of the grid (the partners of a pair cell are a cell of their own).
    pub fn n_cells(&self) -> usize {
        let members: usize = self
            .environments
            .iter()
            .map(|e| if e.1 { 2 } else { 1 })
            .sum();
        self.cosmologies.len().max(1) * self.masses.len().max(1) * members.max(1)
    }
}

/// Rows of every table for one set of results, each row led by the cell's columns.
fn table_rows(
    res: &AnalysisResults,
    options: &TestOptions,
    options_backsplash: &crate::stats::backsplash::BacksplashOptions,
    cell: &str,
    out: &mut [String; 5],
) {
    for ((clock, mc), (_, ex)) in res.all_of_n_mc.iter().zip(&res.all_of_n_exact) {
        for k in 0..mc.x.len() {
            let _ = writeln!(
                out[0],
                "{cell},{},{},{},{},{:.6},{}",
                clock.name(),
                res.n_draw,
                mc.x[k],
                spread_row(&mc.spread[k]),
                ex.spread[k].mean,
                mc.spread[k].hosts
            );
        }
    }
    for (clock, n, c) in &res.fraction_of_n {
        for k in 0..c.x.len() {
            let _ = writeln!(
                out[1],
                "{cell},{},{},{},{},{},{}",
                clock.name(),
                n,
                options.fraction,
                c.x[k],
                spread_row(&c.spread[k]),
                c.spread[k].hosts
            );
        }
    }
    for (clock, c, lim) in &res.quench {
        for k in 0..c.x.len() {
            let _ = writeln!(
                out[2],
                "{cell},{},{},{},{},{},{},{},{},{},{},{}",
                clock.name(),
                c.x[k],
                spread_row(&c.spread[k]),
                lim.tau,
                lim.boot16,
                lim.boot84,
                lim.boot025,
                lim.boot975,
                lim.host_median,
                lim.hosts_reaching,
                c.spread[k].hosts
            );
        }
    }
    for (id, clock, lbs, sp, n) in &res.matches {
        let mut v = lbs.clone();
        v.sort_by(|a, b| a.partial_cmp(b).unwrap());
        let med = crate::stats::intervals::percentile(&v, 0.5);
        let _ = writeln!(
            out[3],
            "{cell},{},{},{},{:.4},{},{}",
            id,
            clock.name(),
            n,
            med,
            spread_row(sp),
            sp.hosts
        );
    }
    for sh in &res.backsplash_shells {
        let _ = writeln!(
            out[4],
            "{cell},{},{},{:.3},{:.3},{},{}",
            sh.lo_over_rvir,
            sh.hi_over_rvir,
            sh.count_mean,
            sh.field_mean,
            spread_row(&sh.fraction),
            sh.fraction.hosts
        );
    }
    let [lo, hi] = options_backsplash.range_over_rvir();
    let _ = writeln!(
        out[4],
        "{cell},{lo},{hi},{:.3},{:.3},{},{}",
        res.backsplash_count_mean,
        res.field_count_expected,
        spread_row(&res.backsplash_fraction),
        res.backsplash_fraction.hosts
    );
}

/// CSV field: quoted when it holds a comma or a quote.
fn csv_field(s: &str) -> String {
    if s.contains(',') || s.contains('"') {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// Every table a report may hold, and its text (`write_tables` refuses any other name, so that
/// `remove_stale` knows them all).
pub const TABLE_NAMES: [&str; 9] = [
    "all_of_n.csv",
    "fraction_of_n.csv",
    "quenching_delay.csv",
    "phase_space_matches.csv",
    "dependence.csv",
    "milky_way_census.csv",
    "backsplash.csv",
    "pairs.csv",
    "report.md",
];

/// Remove from `dir` the report files that an earlier analysis wrote there and this one did
/// not (`written`): a table or figure drawn only with a sample or only for pairs would
/// otherwise stay beside the new report as if it were part of it. Only the names a report
/// writes are touched (`TABLE_NAMES` when `tables`, and the figures' PNG and SVG); returns the
/// files removed.
pub fn remove_stale(
    dir: &Path,
    written: &[PathBuf],
    tables: bool,
) -> Result<Vec<PathBuf>, IoError> {
    let mut names: Vec<String> = figures::FIGURE_NAMES
        .iter()
        .flat_map(|n| [format!("{n}.png"), format!("{n}.svg")])
        .collect();
    if tables {
        names.extend(TABLE_NAMES.iter().map(|n| n.to_string()));
    }
    let mut removed = Vec::new();
    for n in names {
        let p = dir.join(&n);
        if written.iter().any(|w| w.file_name() == p.file_name()) || !p.is_file() {
            continue;
        }
        std::fs::remove_file(&p).map_err(|e| IoError::fs(&p, e))?;
        removed.push(p);
    }
    Ok(removed)
}

/// Write the CSV tables and the Markdown report into `dir`; returns the files written. Every
/// table starts with the cell's columns (`cosmology`, `host_mass_msun`): with one cell, its
/// names; with several, first the pooled rows (`all`, `all`), then each cell's rows.
pub fn write_tables(
    dir: &Path,
    res: &AnalysisResults,
    cells: &[crate::stats::cells::CellResults],
    labels: &CellLabels,
    options: &TestOptions,
    sample: Option<&ObservedSample>,
    run_summary: &str,
) -> Result<Vec<PathBuf>, IoError> {
    std::fs::create_dir_all(dir).map_err(|e| IoError::fs(dir, e))?;
    let mut files = Vec::new();
    let mut put = |name: &str, text: String| -> Result<(), IoError> {
        let p = dir.join(name);
        if !TABLE_NAMES.contains(&name) {
            return Err(IoError::fs(
                &p,
                std::io::Error::other("not in TABLE_NAMES (a report's tables)"),
            ));
        }
        write_atomic(&p, &text)?;
        files.push(p);
        Ok(())
    };
    let mut rows: [String; 5] = Default::default();
    let pooled_cell = if cells.len() > 1 {
        "all,all".to_string()
    } else {
        // the one cell tested (the dependence table has a row per cell)
        let (c, m) = cells
            .first()
            .map(|c| labels.of(c.cosmology, c.mass_bin))
            .or_else(|| res.dependence.first().map(|d| labels.of(d.0, d.1)))
            .unwrap_or_else(|| labels.of(0, 0));
        format!("{},{}", csv_field(&c), csv_field(&m))
    };
    table_rows(res, options, &options.backsplash, &pooled_cell, &mut rows);
    if cells.len() > 1 {
        for c in cells {
            let (cl, ml) = labels.of(c.cosmology, c.mass_bin);
            let cell = format!("{},{}", csv_field(&cl), csv_field(&ml));
            table_rows(&c.results, options, &options.backsplash, &cell, &mut rows);
        }
    }
    let [r0, r1, r2, r3, r4] = rows;
    let head = "cosmology,host_mass_msun";
    put(
        "all_of_n.csv",
        format!(
            "{head},clock,n,z,{},exact_mean,hosts\n{r0}",
            spread_header()
        ),
    )?;
    put(
        "fraction_of_n.csv",
        format!("{head},clock,n,fraction,z,{},hosts\n{r1}", spread_header()),
    )?;
    if !res.quench.is_empty() {
        put(
            "quenching_delay.csv",
            format!(
                "{head},clock,delay_gyr,{},largest_delay_allowed_gyr,largest_delay_boot16_gyr,largest_delay_boot84_gyr,largest_delay_boot025_gyr,largest_delay_boot975_gyr,largest_delay_host_median_gyr,hosts_reaching_largest_delay,hosts\n{r2}",
                spread_header()
            ),
        )?;
        put(
            "phase_space_matches.csv",
            format!(
                "{head},object,clock,n_matches,median_infall_lookback_gyr,p_infall_before_quench_{},hosts\n{r3}",
                spread_header().replace(',', ",p_")
            ),
        )?;
    }
    let mut t =
        format!("{head},n_hosts,median_host_mass_msun,median_first_infall_z,mean_p_all_at_z2\n");
    for (c, m, n, mm, z, p) in &res.dependence {
        let (cl, ml) = labels.of(*c, *m);
        let _ = writeln!(
            t,
            "{},{},{n},{mm:.4e},{z:.4},{p:.6}",
            csv_field(&cl),
            csv_field(&ml)
        );
    }
    put("dependence.csv", t)?;
    let census_rows = census_rows_with_all(res);
    let shell_names: Vec<String> = crate::stats::catalog::ANISOTROPY_SHELLS_KPC
        .iter()
        .map(|(r0, r1)| format!("{r0:.0}_{r1:.0}kpc"))
        .collect();
    let beta_head: String = shell_names
        .iter()
        .map(|s| format!(",beta_mv_below_0_{s},beta_mv_below_0_{s}_err,n_mv_below_0_{s}"))
        .collect();
    let mut t = format!(
        "{head},n_hosts,median_n_mv_below_0_within_300kpc,median_n_mv_below_minus8_within_300kpc,median_distance_mv_below_minus8_kpc,hosts_with_3_or_more_mv_below_minus8,fraction_hosts_bright_pair_within_150kpc{beta_head}\n"
    );
    for (r, all) in &census_rows {
        let (cl, ml) = if *all {
            ("all".to_string(), "all".to_string())
        } else {
            labels.of(r.cell.0, r.cell.1)
        };
        let _ = write!(
            t,
            "{},{},{},{},{},{:.2},{},{:.4}",
            csv_field(&cl),
            csv_field(&ml),
            r.hosts,
            r.mv0_median,
            r.mv8_median,
            r.mv8_median_r_kpc,
            r.mv8_r_hosts,
            r.bright_pair_fraction
        );
        for k in 0..crate::stats::catalog::N_SHELLS {
            let _ = write!(t, ",{:.4},{:.4},{}", r.beta[k], r.beta_err[k], r.beta_n[k]);
        }
        t.push('\n');
    }
    put("milky_way_census.csv", t)?;
    put(
        "backsplash.csv",
        format!(
            "{head},shell_lo_over_rvir,shell_hi_over_rvir,backsplash_per_host,field_expected_per_host,{},hosts\n{r4}",
            spread_header()
        ),
    )?;
    if let Some(p) = &res.pairs {
        put("pairs.csv", pairs_csv(p, labels))?;
    }
    put(
        "report.md",
        markdown(res, cells, labels, options, sample, run_summary),
    )?;
    Ok(files)
}

/// One row of the pair tests (`pairs.csv` and `/analysis/NAME/pairs`): which statistic, for
/// which cell (None: pooled), and the numbers that apply to it (NaN: not applicable).
struct PairRow {
    statistic: &'static str,
    cell: Option<(u16, u16)>,
    shell: [f64; 2],
    n_hosts: f64,
    n_pairs: f64,
    n_satellites: f64,
    n_once: f64,
    per_pair: [f64; 3],
    spread: Spread,
}

/// A numeric column of the stored pair rows.
type PairColumn = fn(&PairRow) -> f64;

/// Header of `pairs.csv` after the cell's columns.
const PAIR_COLUMNS: [&str; 10] = [
    "statistic",
    "shell_lo_over_rvir",
    "shell_hi_over_rvir",
    "n_hosts",
    "n_pairs",
    "n_satellites",
    "n_once_in_partner",
    "backsplash_per_pair",
    "field_expected_per_pair",
    "tree_never_inside_per_pair",
];

fn pair_rows(p: &crate::stats::pairs::PairResults) -> Vec<PairRow> {
    let nan = f64::NAN;
    let mut out = Vec::new();
    for f in &p.partner_fraction {
        out.push(PairRow {
            statistic: "once_in_partner",
            cell: f.cell,
            shell: [nan, nan],
            n_hosts: f.n_hosts as f64,
            n_pairs: nan,
            n_satellites: f.n_satellites as f64,
            n_once: f.n_once as f64,
            per_pair: [nan; 3],
            spread: f.fraction,
        });
    }
    for r in &p.region {
        for sh in &r.shells {
            out.push(PairRow {
                statistic: "region_backsplash_fraction",
                cell: r.cell,
                shell: [sh.lo_over_rvir, sh.hi_over_rvir],
                n_hosts: nan,
                n_pairs: r.n_pairs as f64,
                n_satellites: nan,
                n_once: nan,
                per_pair: [
                    sh.backsplash_per_pair,
                    sh.field_per_pair,
                    sh.never_inside_per_pair,
                ],
                spread: sh.fraction,
            });
        }
    }
    for s in &p.separations {
        for (statistic, q) in [
            ("separation_today_kpc", s.today_kpc),
            ("separation_smallest_kpc", s.smallest_kpc),
        ] {
            out.push(PairRow {
                statistic,
                cell: s.cell,
                shell: [nan, nan],
                n_hosts: nan,
                n_pairs: s.n_pairs as f64,
                n_satellites: nan,
                n_once: nan,
                per_pair: [nan; 3],
                spread: Spread {
                    median: q[1],
                    p16: q[0],
                    p84: q[2],
                    ..Spread::NAN
                },
            });
        }
    }
    out
}

/// `pairs.csv`: the pair tests, pooled rows (`all,all`: every pair host, or every pair)
/// first, then per cell (a pair's region is named by its primaries' cell). Numbers that do
/// not apply to a row are empty.
fn pairs_csv(p: &crate::stats::pairs::PairResults, labels: &CellLabels) -> String {
    let num = |v: f64| {
        if v.is_nan() {
            String::new()
        } else if v.is_infinite() {
            "inf".to_string()
        } else {
            format!("{v}")
        }
    };
    let fix = |v: f64| {
        if v.is_nan() {
            String::new()
        } else {
            format!("{v:.6}")
        }
    };
    let mut t = format!(
        "cosmology,host_mass_msun,{},{}\n",
        PAIR_COLUMNS.join(","),
        spread_header()
    );
    for r in pair_rows(p) {
        let (cl, ml) = match r.cell {
            Some((c, m)) => labels.of(c, m),
            None => ("all".into(), "all".into()),
        };
        let s = &r.spread;
        let _ = writeln!(
            t,
            "{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{}",
            csv_field(&cl),
            csv_field(&ml),
            r.statistic,
            num(r.shell[0]),
            num(r.shell[1]),
            num(r.n_hosts),
            num(r.n_pairs),
            num(r.n_satellites),
            num(r.n_once),
            fix(r.per_pair[0]),
            fix(r.per_pair[1]),
            fix(r.per_pair[2]),
            fix(s.mean),
            fix(s.median),
            fix(s.p16),
            fix(s.p84),
            fix(s.boot16),
            fix(s.boot84),
            fix(s.boot025),
            fix(s.boot975)
        );
    }
    t
}

/// The report's section on pairs.
fn pairs_section(
    m: &mut String,
    p: &crate::stats::pairs::PairResults,
    labels: &CellLabels,
    o: &TestOptions,
    several_cells: bool,
) {
    let name = |cell: Option<(u16, u16)>, all: &str| match cell {
        Some((c, k)) => {
            let (a, b) = labels.of(c, k);
            format!("{a}, {b}")
        }
        None => all.to_string(),
    };
    let n_pairs = p.region.first().map_or(0, |r| r.n_pairs);
    let n_hosts = p.partner_fraction.first().map_or(0, |f| f.n_hosts);
    let _ = writeln!(m, "\n## Pairs\n");
    let _ = writeln!(
        m,
        "{n_pairs} pairs ({n_hosts} hosts). Each pair's mutual orbit is integrated backwards from today's drawn separation and relative velocity, in the two hosts' evolving potentials (each host's mass follows its own main branch) with the dark-energy acceleration; dynamical friction between the two hosts is left out. Each host's subhaloes are integrated in that host's frame and feel the partner's pull (less its pull on the host's centre), its dynamical friction and its tide; their crossings of the partner's virial radius and pericentres about it are recorded.\n"
    );
    let _ = writeln!(
        m,
        "### Satellites once inside the partner\n\nAmong each pair host's candidate satellites (the selection above), the fraction that were ever inside the partner's virial radius: mean over hosts with its bootstrap 16–84% interval, and the host-to-host 16–84% range.\n"
    );
    let _ = writeln!(
        m,
        "| hosts | n | candidates | once inside the partner | fraction | bootstrap 16–84% | hosts 16–84% |\n|---|---|---|---|---|---|---|"
    );
    for f in &p.partner_fraction {
        let s = &f.fraction;
        let _ = writeln!(
            m,
            "| {} | {} | {} | {} | {:.3} | {:.3}–{:.3} | {:.3}–{:.3} |",
            name(f.cell, "all pair hosts"),
            f.n_hosts,
            f.n_satellites,
            f.n_once,
            s.mean,
            s.boot16,
            s.boot84,
            s.p16,
            s.p84
        );
    }
    let b = &o.backsplash;
    let field_text = match p.field {
        crate::stats::backsplash::FieldModel::Correlation => "the mean density of haloes in that mass range (Sheth & Tormen 1999) weighted by their linear correlation with both hosts, n = n̄ [1 + b_field (b_A ξ_lin(r_A) + b_B ξ_lin(r_B))] (Tinker et al. 2010 bias), integrated over each shell's part of the region by a fixed quadrature",
        crate::stats::backsplash::FieldModel::Nonlinear => "the mean density of haloes in that mass range (Sheth & Tormen 1999) weighted by their linear correlation with both hosts, n = n̄ [1 + b_field (b_A ξ_lin(r_A) + b_B ξ_lin(r_B))] (Tinker et al. 2010 bias), integrated over each shell's part of the region by a fixed quadrature (the pair region keeps this linear term: the Hayashi & White 2008 one-halo term of `field = \"nonlinear\"` is applied to single hosts only, not to two overlapping hosts)",
        crate::stats::backsplash::FieldModel::Region => "the uniform density of `tests.backsplash.field = \"region\"` (a Local-Group-like region's Mo & White 1996 mass function), over each shell's part of the region",
    };
    // the region's radius, as configured per environment
    let region_text = p
        .separations
        .iter()
        .find(|s| s.cell.is_none())
        .map(|s| {
            let [lo, hi] = s.region_kpc;
            if !(lo.is_finite() && hi.is_finite()) {
                "not recorded".to_string()
            } else if hi > lo * (1.0 + 1e-9) {
                format!(
                    "{}–{} kpc over the pair cells",
                    short_number(lo),
                    short_number(hi)
                )
            } else {
                format!("{} kpc", short_number(lo))
            }
        })
        .unwrap_or_else(|| "not recorded".to_string());
    let _ = writeln!(
        m,
        "\n### Field dwarfs of the pair region\n\nHaloes with peak mass {}–{} Msun (distinct haloes, as in the backsplash test) inside the sphere of radius `region_radius_kpc` ({region_text}) about the pair's barycentre (of the two virial masses) and outside both virial radii, by distance from the nearer host in units of that host's R_vir (the last row: the whole region). Backsplash haloes are the hosts' own subhaloes there that were once inside either host (from the orbits; each host counts its own). The haloes that never fell in are not in the trees: their expected number is {field_text}; the region is split by which host is nearer and each host counts the field in its own half, so each pair's volume is counted once. Tree haloes in the region that were never inside either host (mostly satellites of satellites released from their group before it fell in) are listed apart and left out of the fraction: they are part of the field the expected number counts. Per pair, the fraction N_bs / (N_bs + N_field); mean over pairs with its bootstrap 16–84% interval and the pair-to-pair 16–84% range. Linear theory undercounts the field near the hosts, so the fractions are upper limits, the more so in the inner shells.{}\n",
        short_number(b.m_peak_msun[0]),
        short_number(b.m_peak_msun[1]),
        if p.incomplete_pairs > 0 {
            format!(" {} pairs have only one host in this store (a shard's store splits pairs at its edges) and are left out of this test; merge the shards for all of them.", p.incomplete_pairs)
        } else {
            String::new()
        },
    );
    if n_pairs == 0 {
        let _ = writeln!(m, "No pair has both its hosts here: nothing to count.");
    } else {
        let _ = writeln!(
        m,
        "| pairs | n | shell (R_vir of the nearer host) | backsplash per pair | field expected per pair | tree haloes never inside, per pair | fraction once inside either host | bootstrap 16–84% | pairs 16–84% |\n|---|---|---|---|---|---|---|---|---|"
    );
        let per_cell = p.region.len() > 2;
        for r in p.region.iter().filter(|r| r.cell.is_none() || per_cell) {
            for sh in &r.shells {
                let f = &sh.fraction;
                let shell = if sh.hi_over_rvir.is_finite() {
                    format!(
                        "{}–{}",
                        short_number(sh.lo_over_rvir),
                        short_number(sh.hi_over_rvir)
                    )
                } else {
                    "whole region".to_string()
                };
                let _ = writeln!(
                m,
                "| {} | {} | {shell} | {:.2} | {:.2} | {:.2} | {:.3} | {:.3}–{:.3} | {:.3}–{:.3} |",
                name(r.cell, "all pairs"),
                r.n_pairs,
                sh.backsplash_per_pair,
                sh.field_per_pair,
                sh.never_inside_per_pair,
                f.mean,
                f.boot16,
                f.boot84,
                f.p16,
                f.p84
            );
            }
        }
    }
    let _ = writeln!(
        m,
        "\n### Separations\n\nToday's separation (drawn) and the smallest separation of the mutual orbit, over pairs (figure `pair_separation`: the separation against lookback time, median and 16–84% over pairs, one colour per pair cell).\n"
    );
    let _ = writeln!(
        m,
        "| pairs | n | today: median (kpc) | today: 16–84% | smallest: median (kpc) | smallest: 16–84% |\n|---|---|---|---|---|---|"
    );
    let q = |v: f64| short_number(v.round());
    for s in p
        .separations
        .iter()
        .filter(|s| s.cell.is_none() || p.separations.len() > 2)
    {
        let _ = writeln!(
            m,
            "| {} | {} | {} | {}–{} | {} | {}–{} |",
            name(s.cell, "all pairs"),
            s.n_pairs,
            q(s.today_kpc[1]),
            q(s.today_kpc[0]),
            q(s.today_kpc[2]),
            q(s.smallest_kpc[1]),
            q(s.smallest_kpc[0]),
            q(s.smallest_kpc[2])
        );
    }
    let _ = writeln!(
        m,
        "\nIsolated and paired hosts of the same mass are compared side by side {}: P(all of N), the median first-infall redshift and the backsplash fraction around each host, per cell (a pair's primaries and partners are cells of their own); every table (`all_of_n.csv`, `fraction_of_n.csv`, `backsplash.csv`, `dependence.csv`) has the same rows per cell. The numbers above are in `pairs.csv`.",
        if several_cells {
            "in the comparison of the grid's cells above"
        } else {
            "when the run's grid holds both (the comparison of the grid's cells)"
        }
    );
}

/// The comparison of grid cells: the headline numbers side by side.
fn comparison(
    m: &mut String,
    cells: &[crate::stats::cells::CellResults],
    labels: &CellLabels,
    pooled: &AnalysisResults,
) {
    let n_hosts: usize = cells.iter().map(|c| c.n_hosts).sum();
    let _ = writeln!(
        m,
        "## Comparison of the grid's cells\n\n{} cells, {n_hosts} hosts. Every test below and in the tables is computed per cell (rows with the cell's cosmology and host mass) as well as over all hosts (rows `all`); each host is read on its own cosmology's clock. P: all {n} drawn satellites fell in before z (first host infall; mean over the cell's hosts with at least N = {n} candidates, counted in the column \"hosts with ≥ N\", bootstrap 16–84%).{}\n",
        cells.len(),
        if pooled.quench.is_empty() {
            ""
        } else {
            " The largest delay τ rests on the hosts with at least as many candidates as the sample has objects (the `hosts` column of quenching_delay.csv)."
        },
        n = pooled.n_draw
    );
    let has_quench = !pooled.quench.is_empty();
    let _ = writeln!(
        m,
        "| cosmology | host mass (Msun) | hosts | candidates (median) | hosts with ≥ N | P at z = 1 | P at z = 2 | P at z = 3 | median first-infall z |{} backsplash fraction |",
        if has_quench { " largest delay τ (first infall) |" } else { "" }
    );
    let _ = writeln!(
        m,
        "|---|---|---|---|---|---|---|---|---|{}---|",
        if has_quench { "---|" } else { "" }
    );
    let mut few_rich = false;
    for c in cells {
        let r = &c.results;
        let (cl, ml) = labels.of(c.cosmology, c.mass_bin);
        let first = r
            .all_of_n_mc
            .iter()
            .find(|(k, _)| k.name() == "first_host_infall")
            .map(|(_, cv)| cv);
        let p = |z: f64| {
            first
                .and_then(|cv| at_z(cv, z))
                .map(|s| mean_and_interval(s, 3))
                .unwrap_or_else(|| "–".into())
        };
        let zmed = pooled
            .dependence
            .iter()
            .find(|d| d.0 == c.cosmology && d.1 == c.mass_bin)
            .map(|d| format!("{:.2}", d.4))
            .unwrap_or_else(|| "–".into());
        let tau = if has_quench {
            let q = r
                .quench
                .iter()
                .find(|(k, _, _)| k.name() == "first_host_infall");
            match q {
                Some((_, cv, lim)) if cv.spread.iter().any(|s| s.hosts > 0) => {
                    format!(" {} |", delay_with_range(lim, &cv.x))
                }
                _ => " not tested |".to_string(),
            }
        } else {
            String::new()
        };
        let bs = &r.backsplash_fraction;
        let bs = if bs.hosts == 0 {
            "– (hosts of pairs: see Pairs)".to_string()
        } else {
            mean_and_interval(bs, 3)
        };
        // most of the cell's hosts hold fewer candidates than N: the cell rarely makes a
        // system like the sample (a walkthrough: 37 of 100 warm-dark-matter hosts had the
        // sample's 12, and their P, from the richest hosts, read as the cell's)
        let rich = first.and_then(|cv| at_z(cv, 1.0)).map_or(0, |s| s.hosts);
        let mark = if 2 * (rich as usize) < c.n_hosts {
            few_rich = true;
            " ‡"
        } else {
            ""
        };
        let _ = writeln!(
            m,
            "| {cl} | {ml} | {} | {} | {rich}{mark} | {} | {} | {} | {zmed} |{tau} {bs} |",
            c.n_hosts,
            median_count(&r.candidates),
            p(1.0),
            p(2.0),
            p(3.0),
        );
    }
    if few_rich {
        let _ = writeln!(
            m,
            "\n‡ Fewer than half of this cell's hosts have N = {} candidates: a host of this cell rarely holds a system like the sample (itself a result), and the cell's probabilities rest on its richest hosts, which are not typical of it.",
            pooled.n_draw
        );
    }
    let _ = writeln!(m);
}

/// Fewer hosts than this: a mean's bootstrap interval is not printed (a percentile bootstrap
/// over a handful of values collapses to nearly nothing; common practice puts the limit of a
/// usable one near 20, and the tables' `hosts` column says how many there were).
pub(crate) const FEW_HOSTS_FOR_INTERVAL: u64 = 5;

/// A mean over hosts with its bootstrap 16–84% interval, `d` decimals: "0.036 [0.034, 0.046]";
/// "0 (every one of 20 hosts)" when every host gave 0, whose percentile bootstrap would read
/// as certainty; "1.000 (1 host)" when too few hosts gave a value for an interval (a review
/// and a walkthrough found both printed as "[0.000, 0.000]" and "[1.000, 1.000]").
pub fn mean_and_interval(s: &crate::stats::Spread, d: usize) -> String {
    if s.hosts == 0 {
        "– (no host)".to_string()
    } else if s.mean == 0.0 && s.p84 == 0.0 {
        format!("0 (every one of {} hosts)", s.hosts)
    } else if s.hosts < FEW_HOSTS_FOR_INTERVAL {
        format!(
            "{:.d$} ({} host{}: no interval)",
            s.mean,
            s.hosts,
            if s.hosts == 1 { "" } else { "s" }
        )
    } else {
        format!("{:.d$} [{:.d$}, {:.d$}]", s.mean, s.boot16, s.boot84)
    }
}

/// A probability as a percentage with two significant digits below 10% (0.0004 → "0.040%",
/// 0 → "0%").
fn percent(p: f64) -> String {
    let v = 100.0 * p;
    if v == 0.0 {
        "0%".into()
    } else if v < 10.0 {
        let decimals = (1.0 - v.log10().floor()).max(1.0) as usize;
        format!("{v:.decimals$}%")
    } else {
        format!("{v:.0}%")
    }
}

/// A delay of the grid in Gyr, or "none".
fn delay_gyr(t: f64) -> String {
    if t.is_nan() {
        "none".into()
    } else {
        format!("{t:.2}")
    }
}

/// The largest allowed delay with its bootstrap 16–84% range over hosts, e.g.
/// "2.25 Gyr [2.00–2.50]", "none [none–0.25]", "≥ 5.00 Gyr (grid end) [...]".
fn delay_with_range(lim: &crate::stats::DelayLimit, grid: &[f64]) -> String {
    let end = grid.last().copied().unwrap_or(f64::NAN);
    let head = if lim.tau.is_nan() {
        "none".to_string()
    } else if (lim.tau - end).abs() < 1e-9 {
        format!("≥ {:.2} Gyr (grid end)", lim.tau)
    } else {
        format!("{:.2} Gyr", lim.tau)
    };
    if lim.hosts() < FEW_HOSTS_FOR_INTERVAL {
        return format!("{head} ({} hosts: no range)", lim.hosts());
    }
    format!(
        "{head} [{}–{}]",
        delay_gyr(lim.boot16),
        delay_gyr(lim.boot84)
    )
}

/// The answer in words, one line per clock, from the quenching-delay test (needs a sample):
/// whether infall by that clock is excluded as the cause of every observed object's
/// quenching, and if not, up to what delay, with the spread of that delay over bootstrap
/// resamples of the hosts and how many hosts allow it on their own (a review found "can
/// explain ... up to 2.25 Gyr" read as firmer than the numbers: resampling the hosts moved it
/// by ±0.25 Gyr, and a tenth of the hosts carried most of the mean).
pub fn conclusion_lines(res: &AnalysisResults, o: &TestOptions) -> Vec<String> {
    let floor = 1.0 - o.confidence;
    res.quench
        .iter()
        .map(|(clock, curve, lim)| {
            let what = match clock.name() {
                "first_host_infall" => "first infall into the host",
                "last_host_infall" => "the last infall into the host",
                _ => "infall into any massive halo",
            };
            let hosts = curve.spread.iter().map(|s| s.hosts).max().unwrap_or(0);
            let first = curve.x.first().copied().unwrap_or(f64::NAN);
            let last = curve.x.last().copied().unwrap_or(f64::NAN);
            let boot = if lim.hosts() < FEW_HOSTS_FOR_INTERVAL {
                format!("{} hosts only: no bootstrap range", lim.hosts())
            } else {
                format!(
                    "bootstrap over hosts: {}–{} Gyr (16–84%), {}–{} Gyr (2.5–97.5%)",
                    delay_gyr(lim.boot16),
                    delay_gyr(lim.boot84),
                    delay_gyr(lim.boot025),
                    delay_gyr(lim.boot975)
                )
            };
            let alone = format!(
                "{} of the {} hosts allow it on their own; the median host's largest delay is {}",
                lim.hosts_reaching,
                lim.hosts(),
                match lim.host_median {
                    t if t.is_nan() => "none".to_string(),
                    t => format!("{t:.2} Gyr"),
                }
            );
            if hosts == 0 {
                format!(
                    "{} ({}): not tested: no host has as many candidates of the selection as the sample has objects",
                    what,
                    clock.name()
                )
            } else if lim.tau.is_nan() {
                let at0 = curve.spread.first();
                let least = if first > 0.0 {
                    format!("the smallest delay of the grid (`delay_grid_gyr`), {first:.2} Gyr")
                } else {
                    "no delay".to_string()
                };
                format!(
                    "{} ({}): excluded by these mocks: even with {least}, {} of the draws (bootstrap over hosts, 97.5th percentile: {}) have every object falling in before it stopped forming stars, below the {:.0}% that 1 − confidence asks for{}",
                    what,
                    clock.name(),
                    percent(at0.map_or(f64::NAN, |s| s.mean)),
                    percent(at0.map_or(f64::NAN, |s| s.boot975)),
                    100.0 * floor,
                    if lim.boot975.is_nan() {
                        String::new()
                    } else {
                        format!(
                            "; in a few bootstrap resamples of the hosts a delay up to {:.2} Gyr is not excluded",
                            lim.boot975
                        )
                    }
                )
            } else if (lim.tau - last).abs() < 1e-9 {
                format!(
                    "{} ({}): not excluded, with a quenching delay (from infall to the end of star formation) of at least {:.2} Gyr, the end of the delay grid (`delay_grid_gyr`): at that delay {:.0}% of the draws still have every object falling in that long before it stopped forming stars, so no upper limit is set ({boot}; {alone})",
                    what,
                    clock.name(),
                    lim.tau,
                    100.0 * curve.spread.last().map_or(f64::NAN, |s| s.mean)
                )
            } else {
                format!(
                    "{} ({}): not excluded, with a quenching delay (from infall to the end of star formation) of up to {:.2} Gyr ({boot}): with that delay at least {:.0}% of the draws have every object falling in that long before it stopped forming stars; with longer delays, fewer do. The mean over hosts sets this: {alone}",
                    what,
                    clock.name(),
                    lim.tau,
                    100.0 * floor
                )
            }
        })
        .collect()
}

/// The census rows: with several cells, the pooled row over all hosts first (flagged `true`),
/// as in the other tables, then each cell's.
fn census_rows_with_all(res: &AnalysisResults) -> Vec<(crate::stats::battery::CensusRow, bool)> {
    let mut out = Vec::new();
    if res.census_raw.len() > 1 {
        let mut pooled = crate::stats::battery::CensusRaw::default();
        for d in &res.census_raw {
            pooled.append(d.clone());
        }
        out.push((crate::stats::battery::census_row(&pooled), true));
    }
    out.extend(res.census.iter().map(|r| (r.clone(), false)));
    out
}

/// The run's hosts against the Milky Way's satellite census, per grid cell
/// (`milky_way_census.csv`).
fn milky_way_census(m: &mut String, res: &AnalysisResults, labels: &CellLabels) {
    if res.census.is_empty() {
        return;
    }
    let _ = writeln!(m, "## The hosts against the Milky Way's satellites\n");
    // each row with its cell's name in the tables
    let rows: Vec<_> = census_rows_with_all(res)
        .into_iter()
        .map(|(r, all)| {
            let cell = if all {
                "all hosts".to_string()
            } else {
                let (cl, ml) = labels.of(r.cell.0, r.cell.1);
                format!("{cl}, {ml}")
            };
            (r, cell)
        })
        .collect();
    let _ = writeln!(
        m,
        "Every satellite of the hosts (galaxy-hosting subhaloes alive today, satellites of satellites included, whatever the selection above), per grid cell: medians over hosts. Is a cell's satellite population like the Milky Way's? The last row gives the Milky Way's numbers (`docs/validation.md`, \"Subhalo populations\", where the default hosts of 1.2e12 Msun are compared with them).\n"
    );
    let _ = writeln!(
        m,
        "| cell | hosts | N(M_V < 0) within 300 kpc | N(M_V < -8) within 300 kpc | median distance of those, kpc (hosts with ≥ 3) | hosts with a satellite of M_V ≤ {} within 150 kpc |\n|---|---|---|---|---|---|",
        crate::stats::catalog::MW_SECOND_BRIGHTEST_M_V
    );
    for (r, cell) in &rows {
        let _ = writeln!(
            m,
            "| {cell} | {} | {} | {} | {} ({}) | {} |",
            r.hosts,
            r.mv0_median,
            r.mv8_median,
            if r.mv8_median_r_kpc.is_finite() {
                format!("{:.0}", r.mv8_median_r_kpc)
            } else {
                "—".into()
            },
            r.mv8_r_hosts,
            percent(r.bright_pair_fraction)
        );
    }
    let _ = writeln!(
        m,
        "| the Milky Way | 1 | 124 (+40/−27) to about 220 ± 50, completeness-corrected (Newton et al. 2018; Drlica-Wagner et al. 2020) | about 14 | 95 (heliocentric) | its second brightest lies at about 61 kpc; 19% of Milky-Way-like galaxies have one or more such satellites (Liu et al. 2011) |\n"
    );
    let _ = writeln!(
        m,
        "The Milky Way's bright satellites are more concentrated than those of most mock hosts (94% of the default hosts), as Carlsten et al. 2020 find for simulated hosts; the counts are those of the hosts' virial volume and do not apply a survey's completeness.\n"
    );
    let shells = crate::stats::catalog::ANISOTROPY_SHELLS_KPC;
    let _ = writeln!(
        m,
        "How the satellites brighter than M_V = 0 move, by distance from the host's centre: the velocity anisotropy β = 1 − σ_t²/(2σ_r²) of all the hosts' satellites in each shell together (σ_r about the shell's mean radial velocity; ± a jackknife error over hosts; the number of satellites in brackets). β < 0: tangential orbits, β > 0: radial.\n"
    );
    let _ = writeln!(
        m,
        "| cell |{}\n|---|{}",
        shells
            .iter()
            .map(|(r0, r1)| format!(" β, {r0:.0}–{r1:.0} kpc |"))
            .collect::<String>(),
        "---|".repeat(shells.len())
    );
    for (r, cell) in &rows {
        let cols: String = (0..shells.len())
            .map(|k| {
                if r.beta[k].is_finite() && r.beta_err[k].is_finite() {
                    format!(
                        " {:.2} ± {:.2} ({}) |",
                        r.beta[k], r.beta_err[k], r.beta_n[k]
                    )
                } else if r.beta[k].is_finite() {
                    format!(" {:.2} ({}) |", r.beta[k], r.beta_n[k])
                } else {
                    format!(" — ({}) |", r.beta_n[k])
                }
            })
            .collect();
        let _ = writeln!(m, "| {cell} |{cols}");
    }
    let _ = writeln!(
        m,
        "| the Milky Way (Riley et al. 2019) | about −2 at 20 kpc | rising with distance | rising with distance | about 0.5 at 200 kpc |\n"
    );
    let _ = writeln!(
        m,
        "Inside 30 kpc the default hosts' satellites move on tangential orbits like the Milky Way's (about −2.6, 64 hosts), which the disc's tide makes by destroying those on radial orbits (about −0.6 without disc and bulge; `docs/validation.md`); further out they are less radial than the Milky Way's. With few hosts the inner shell holds few satellites: read its error.\n"
    );
}

/// The median of per-host counts (the mean of the two middle values for an even number;
/// 0 for none), printed as an integer or with one decimal.
fn median_count(counts: &[usize]) -> String {
    let mut c = counts.to_vec();
    c.sort_unstable();
    let n = c.len();
    if n == 0 {
        return "0".into();
    }
    let twice = if n % 2 == 1 {
        2 * c[n / 2]
    } else {
        c[n / 2 - 1] + c[n / 2]
    };
    if twice % 2 == 0 {
        format!("{}", twice / 2)
    } else {
        format!("{:.1}", twice as f64 / 2.0)
    }
}

fn at_z(c: &Curve, z: f64) -> Option<&Spread> {
    c.x.iter()
        .position(|&x| (x - z).abs() < 1e-9)
        .map(|k| &c.spread[k])
}

/// The Markdown report: selection, clocks, models and caveats in words, and the headline
/// numbers.
pub fn markdown(
    res: &AnalysisResults,
    cells: &[crate::stats::cells::CellResults],
    labels: &CellLabels,
    o: &TestOptions,
    sample: Option<&ObservedSample>,
    run_summary: &str,
) -> String {
    let mut m = String::new();
    let sel = &res.selection;
    let _ = writeln!(m, "{}\n", directory::REPORT_HEADING);
    let _ = writeln!(m, "{run_summary}\n");
    let lines = conclusion_lines(res, o);
    if !lines.is_empty() {
        let _ = writeln!(m, "## Conclusion\n");
        for l in lines {
            let _ = writeln!(m, "- Environment by {l}.");
        }
        let _ = writeln!(
            m,
            "\n(From the quenching-delay test below, confidence {:.2}; it pairs the observed objects at random with satellites drawn from one host at a time.{})\n",
            o.confidence,
            if cells.len() > 1 {
                format!(" These lines pool the hosts of all {} cells of the run, every cosmology and host mass together; each cell's own largest delay is in the comparison below, and a question between cells (warm against cold dark matter, one host mass against another) is answered there.", cells.len())
            } else {
                String::new()
            }
        );
    }
    if cells.len() > 1 {
        comparison(&mut m, cells, labels, res);
    }
    let _ = writeln!(m, "## Selection: {}\n", sel.name);
    let _ = writeln!(
        m,
        "Mock satellites with peak mass {}–{} Msun, stellar mass today {}–{} Msun, M_V between {} and {}, \
         at {}–{} R_vir today, hosting a galaxy, surviving tidal stripping{}{}; {}.",
        short_number(sel.m_peak_msun[0]), short_number(sel.m_peak_msun[1]),
        short_number(sel.mstar_msun[0]), short_number(sel.mstar_msun[1]),
        short_number(sel.m_v[0]), short_number(sel.m_v[1]),
        short_number(sel.r_over_rvir[0]), short_number(sel.r_over_rvir[1]),
        if sel.survival == crate::stats::Survival::Pericentre { " and never passing a pericentre inside the disc cut" } else { "" },
        if sel.observable_only { ", and detectable by the configured survey" } else { "" },
        if sel.include_satellites_of_satellites {
            "satellites of satellites (still bound to another subhalo) count as the host's, as observers count the companions of a large satellite"
        } else {
            "only satellites orbiting the host on their own (satellites of satellites left out)"
        }
    );
    let n_h = res.candidates.len();
    let mut c = res.candidates.clone();
    c.sort();
    let quench_hosts = res
        .quench
        .first()
        .map(|(_, cv, _)| cv.spread.iter().map(|s| s.hosts).max().unwrap_or(0));
    let _ = writeln!(
        m,
        "\n{n_h} hosts; candidates per host: median {}, range {}–{}. {} hosts have fewer than N = {} candidates and are \
         left out of the all-of-N test{}. Each test uses only the hosts with enough candidates: the fraction-of-N test, for each N, \
         the hosts with at least N{}; the `hosts` column of each table says how many.\n",
        median_count(&c),
        c.first().copied().unwrap_or(0),
        c.last().copied().unwrap_or(0),
        res.hosts_too_few.len(),
        res.n_draw,
        if res.hosts_too_few.is_empty() { "" } else { " (their indices are in the store's analysis group)" },
        match quench_hosts {
            Some(k) => format!("; the quenching-delay test, the {k} hosts with at least as many as the sample has objects"),
            None => String::new(),
        }
    );
    milky_way_census(&mut m, res, labels);
    let _ = writeln!(m, "## Clocks\n");
    let _ = writeln!(m, "- **first_host_infall**: the first crossing of the host's virial radius (the merger with the host's main branch in the tree).");
    let _ = writeln!(m, "- **last_host_infall**: the last inward crossing of the host's evolving virial radius (later for objects that went back out).");
    let thr = match (
        o.preprocessing.halo_mass_msun,
        o.preprocessing.stellar_mass_msun,
    ) {
        (Some(h), _) => format!("a halo of at least {} Msun", short_number(h)),
        (None, Some(s)) => format!(
            "a halo whose median galaxy has at least {} Msun of stars",
            short_number(s)
        ),
        _ => "any halo".into(),
    };
    let _ = writeln!(
        m,
        "- **preprocessing**: the first time the object was inside {thr}, the host included: its merger into a halo already that massive, or the time a halo it was in grew past that mass while it was inside (read off the halo's later accretions, so late by at most one accretion).\n"
    );
    let _ = writeln!(m, "## All of N = {}\n", res.n_draw);
    let _ = writeln!(m, "Probability that all {} satellites drawn at random from one host ({} draws per host) had fallen in before redshift z: mean over hosts with its bootstrap 16–84% interval ({} resamples), and the host-to-host 16–84% range.\n", res.n_draw, o.draws, o.bootstrap);
    let _ = writeln!(
        m,
        "| clock | z | mean | bootstrap 16–84% | hosts 16–84% |\n|---|---|---|---|---|"
    );
    let mut carried_by_few = false;
    for (clock, cv) in &res.all_of_n_mc {
        for z in [1.0, 2.0, 3.0, 4.0] {
            if let Some(s) = at_z(cv, z) {
                let boot = if s.hosts > 0 && s.mean == 0.0 && s.p84 == 0.0 {
                    format!("– (0 in every one of {} hosts)", s.hosts)
                } else if s.hosts < FEW_HOSTS_FOR_INTERVAL {
                    format!("– ({} hosts)", s.hosts)
                } else {
                    format!("{:.4}–{:.4}", s.boot16, s.boot84)
                };
                carried_by_few |= s.mean > s.p84;
                let _ = writeln!(
                    m,
                    "| {} | {z} | {:.4} | {boot} | {:.4}–{:.4}{} |",
                    clock.name(),
                    s.mean,
                    s.p16,
                    s.p84,
                    if s.mean > s.p84 { " †" } else { "" }
                );
            }
        }
    }
    // (review: a mean above the hosts' 84th percentile read as typical of the hosts)
    if carried_by_few {
        let _ = writeln!(
            m,
            "\n† The mean lies above the hosts' 84th percentile: fewer than one host in six gives as much, and those few carry the mean; most hosts give less."
        );
    }
    // rows of the fraction-of-N table whose mean rests on few hosts (those with at least N
    // candidates): a bootstrap over fewer than about 20 values understates the uncertainty
    // (common practice)
    let mut few: Vec<usize> = std::iter::once(res)
        .chain(cells.iter().map(|c| &c.results))
        .flat_map(|r| r.fraction_of_n.iter())
        .filter(|(_, _, c)| c.spread.iter().map(|s| s.hosts).max().unwrap_or(0) < FEW_HOSTS)
        .map(|(_, n, _)| *n)
        .collect();
    few.sort_unstable();
    few.dedup();
    let _ = writeln!(
        m,
        "\nThe last column of `all_of_n.csv`, `fraction_of_n.csv`, `quenching_delay.csv`, `phase_space_matches.csv` and `backsplash.csv`, `hosts`, counts the hosts a row's mean rests on (for N drawn satellites, those with at least N candidates). Hosts with more candidates are the more massive ones, so as N grows the rows of `fraction_of_n.csv` (and the tests of a larger sample) rest on an ever heavier mix of hosts: compare rows of different N within one cell (the cell rows), not only over all hosts.{}",
        match (few.first(), few.last()) {
            (Some(a), Some(b)) => format!(
                " In `fraction_of_n.csv` rows of N = {} rest on fewer than {FEW_HOSTS} hosts (over all hosts or in a cell): their bootstrap intervals understate the uncertainty, and they move most with the orbit tolerance (caveats).",
                if a == b { format!("{a}") } else { format!("{a}–{b}") }
            ),
            _ => String::new(),
        }
    );
    if !res.quench.is_empty() {
        let n = sample.map(|s| s.objects.len()).unwrap_or(0);
        let _ = writeln!(m, "\n## Quenching delay ({n} observed objects)\n");
        let _ = writeln!(m, "With an environmental quenching delay τ, a draw of {n} mock satellites paired at random with the observed objects explains them all if every object's infall lookback time minus τ is at least its quenching lookback time (perturbed by its error). The largest τ of the grid at which the mean of that probability over hosts is at least {:.2} (1 − confidence, confidence = {:.2}), with the same largest τ in bootstrap resamples of the hosts (16–84% and 2.5–97.5%), and each host's own largest τ (its median, and how many hosts reach the pooled value). The mean over hosts can rest on a minority of them: compare the median host.\n", 1.0 - o.confidence, o.confidence);
        let _ = writeln!(m, "| clock | largest τ | bootstrap 16–84% | bootstrap 2.5–97.5% | median host | hosts reaching it |\n|---|---|---|---|---|---|");
        for (clock, curve, lim) in &res.quench {
            // (review: with no host tested the table said "excluded" where the conclusion
            // said "not tested")
            if !curve.spread.iter().any(|s| s.hosts > 0) {
                let _ = writeln!(
                    m,
                    "| {} | not tested: no host has {n} candidates | – | – | – | – |",
                    clock.name()
                );
                continue;
            }
            let start = curve.x.first().copied().unwrap_or(0.0);
            let txt = if lim.tau.is_nan() {
                format!("none on the grid (even τ = {start:.2} Gyr is excluded)")
            } else {
                format!("{:.2} Gyr", lim.tau)
            };
            let few = lim.hosts() < FEW_HOSTS_FOR_INTERVAL;
            let range = |a: f64, b: f64| {
                if few {
                    "–".to_string()
                } else if a.is_nan() && b.is_nan() {
                    "none".to_string()
                } else {
                    format!("{}–{} Gyr", delay_gyr(a), delay_gyr(b))
                }
            };
            let _ = writeln!(
                m,
                "| {} | {txt} | {} | {} | {} | {} of {} |",
                clock.name(),
                range(lim.boot16, lim.boot84),
                range(lim.boot025, lim.boot975),
                delay_gyr(lim.host_median),
                lim.hosts_reaching,
                lim.hosts()
            );
        }
    }
    if !res.matches.is_empty() {
        let _ = writeln!(m, "\n## Phase-space-matched objects\n\nMock satellites of the selection within ±{} kpc, ±{} km/s and ±{} dex of each object; probability that the match fell in before the object quenched (first host infall; the object's quenching time uncertain by its error, as in the delay test):\n", o.match_windows.dr_kpc, o.match_windows.dv_kms, o.match_windows.dlog_mstar);
        let _ = writeln!(
            m,
            "| object | matches | P(infall before quenching) | hosts 16–84% |\n|---|---|---|---|"
        );
        for (id, clock, _, s, n) in &res.matches {
            if *clock == crate::stats::Clock::FirstHostInfall {
                let _ = writeln!(
                    m,
                    "| {id} | {n} | {:.3} | {:.3}–{:.3} |",
                    s.mean, s.p16, s.p84
                );
            }
        }
    }
    let b = &o.backsplash;
    let [lo, hi] = b.range_over_rvir();
    let field_text = match b.field {
        FieldModel::Nonlinear => "the mean density of haloes (Sheth & Tormen 1999) weighted by their correlation with the host, 1 + b_field ξ_hm(r), with the non-linear host–matter correlation of Hayashi & White 2008, ξ_hm = max(ρ_NFW(r)/ρ̄_m − 1, b_host ξ_lin(r)) (the host's NFW profile continued beyond R_vir; Tinker et al. 2010 bias). The one-halo term counts all the matter beyond R_vir, the orbiting matter of the backsplash haloes included, which lowers the fractions; the linear bias of the small haloes applied there is an assumption that raises them".to_string(),
        FieldModel::Correlation => "the mean density of haloes (Sheth & Tormen 1999) weighted by their linear correlation with the host, 1 + b_host b_field ξ_lin(r) (Tinker et al. 2010 bias). Linear theory undercounts the field near the host, so the fractions are upper limits, the more so in the inner shells".to_string(),
        FieldModel::Region => format!("the Mo & White 1996 mass function of a region of {} Msun within {} Mpc, spread uniformly over it (an estimate, not a prediction of the infall-region profile)", short_number(b.region_mass_msun), b.region_radius_mpc),
    };
    let tested = res.backsplash_fraction.hosts;
    let whose = if res.pairs.is_some() {
        format!(
            " Isolated hosts only ({tested} here): the field model knows one host, so the hosts of pairs are left out of this test and counted in the pair region (Pairs)."
        )
    } else {
        String::new()
    };
    if tested == 0 {
        let _ = writeln!(m, "\n## Backsplash\n\nNot computed: every host here belongs to a pair, and this test's field model knows one host only; the pair-region test (Pairs) counts the field dwarfs around pairs.");
    } else {
        let _ = writeln!(m, "\n## Backsplash\n\nAmong haloes with peak mass {}–{} Msun at {lo}–{hi} R_vir today (distinct haloes), the fraction that were once inside the host, the mean over hosts of each host's backsplash count over its count of backsplash plus field haloes: {:.3} (hosts 16–84%: {:.3}–{:.3}); {:.1} backsplash haloes per host from the orbits against {:.1} field haloes expected from {field_text}.{whose} The hosts' spread covers only the scatter of their backsplash counts: the field count is one expectation per cell, and the choice of field model moves the fractions more than that spread (in 1–2 R_vir 0.49–0.70 between the models and assumptions of `docs/validation.md`, against 0.59 at the default).\n",
        short_number(b.m_peak_msun[0]), short_number(b.m_peak_msun[1]), res.backsplash_fraction.mean, res.backsplash_fraction.p16, res.backsplash_fraction.p84, res.backsplash_count_mean, res.field_count_expected);
        let _ = writeln!(m, "| shell (R_vir) | fraction once inside | hosts 16–84% | backsplash per host | field expected per host |\n|---|---|---|---|---|");
        for sh in &res.backsplash_shells {
            let _ = writeln!(
                m,
                "| {}–{} | {:.3} | {:.3}–{:.3} | {:.1} | {:.1} |",
                sh.lo_over_rvir,
                sh.hi_over_rvir,
                sh.fraction.mean,
                sh.fraction.p16,
                sh.fraction.p84,
                sh.count_mean,
                sh.field_mean
            );
        }
    }
    if let Some(p) = &res.pairs {
        pairs_section(&mut m, p, labels, o, cells.len() > 1);
    }
    let _ = writeln!(m, "\n## Caveats\n");
    let _ = writeln!(m, "- The draws treat the observed satellites as a random subset of the selection; bright and nearby satellites are not a random subset in infall time, so match the selection (stellar mass, distance, survey) to how the sample was chosen.");
    let _ = writeln!(m, "- Infall times come from extended Press–Schechter trees (Parkinson, Cole & Helly 2008) and semi-analytic orbits. The disc is not simulated: at each pericentre where the tide of the disc and bulge (at their mass and size then) is a fraction s of `orbits.disc_tide_ratio` × the subhalo's own V_max²/R_max², the subhalo loses the fraction s of its bound mass (by default; `orbits.disc_tide_loss_power` = 1), and where s exceeds 1 it is destroyed; calibrated so that 40% of the subhaloes whose pericentres lie inside 25 kpc survive the disc, as in disc-embedded simulations of Webb & Bovy 2020; or, with `survival = \"pericentre\"`, by a fixed pericentre cut on top. The disc destroys subhaloes only at pericentres inside about 30 kpc and strips those passing within about 50 kpc. Measured on Milky-Way-mass hosts at the default settings: the count of subhaloes above 1e7 Msun within 50 kpc (19 per host) matches the hydrodynamic simulations of Barry et al. 2023 (about 16), but the disc removes more of them (68%) than the hydrodynamic simulations of Sawala et al. 2017 find (at most a half), and the survivors there move on more circular orbits (velocity anisotropy −0.76 against nearly isotropic; `docs/validation.md`): read conclusions about satellites within about 50 kpc of the centre with that in mind. To see how a conclusion rests on the disc model, re-run with the all-or-nothing closure (`orbits.disc_tide_ratio = 0.8`, `orbits.disc_tide_loss_power = 0`, the previous default), which meets Sawala et al.'s reduction but keeps twice Barry et al.'s count (`docs/methods.md`). When satellites fell in: the luminous survivors of Milky-Way-mass hosts (M* > 1e5 Msun) first crossed the host's virial radius a median 7.5 Gyr ago (16–84%: 2.0–10.1), as in the hydrodynamic zoom-ins of Santistevan et al. 2023 (3.4–9.7 Gyr), and about half of all accreted subhaloes were in another halo first, as in the dark-matter-only simulation of Bakels et al. 2021; but only 10% of the subhaloes inside r200 are on their first infall, half that simulation's 21%: the model keeps more subhaloes that fell in long ago (`docs/validation.md`).");
    let _ = writeln!(m, "- Tidal stripping removes the matter beyond the tidal radius at a rate per local dynamical time of the host that falls with the subhalo's concentration at infall, α_s = `orbits.stripping_alpha` × (c/10)^−`orbits.stripping_alpha_c_slope` (defaults 1.15 and 0.5, c held within 5–15), calibrated for this tool against an idealised N-body experiment run with REBOUND: six subhaloes (c = 5, 8 and 15, 1e9 and 1e10 Msun, two orbits) whose bound mass it follows within 0.73–1.23 through two pericentres (`docs/validation.md`). Satellites of satellites then sink into their parents on the published merging-time fit only because dynamical friction acts on more than the bound mass (m^0.65 m_infall^0.35, `orbits.friction_mass_infall_weight` = 0.35, our closure for the stripped matter that still drags). The model loses mass at pericentres only, where the N-body also loses some between them; over five pericentres it strips a c = 15 subhalo faster than the N-body, whose remnant grows harder to strip with each orbit (the model keeps 0.65 of the N-body's bound mass at the fifth apocentre), so such old satellites are, if anything, too light in the model. One rate for every subhalo (the defaults until 2026-12-05: `stripping_alpha` 0.75, `stripping_alpha_c_slope` 0, `friction_mass_infall_weight` 0, `disc_tide_ratio` 1.2, `disc_tide_loss_power` 0) kept up to 2.3 times the bound mass of the less concentrated N-body subhaloes (c = 5 and 8); re-run with those five settings to see how a conclusion rests on the concentration dependence: with them the bright demo sample's largest quenching delay after first infall was 1.75 Gyr instead of 1.00, and the count of M_V < 0 satellites 134.5 instead of 109.5 per host (medians of 64 hosts). At the defaults, in a Milky-Way-mass halo without disc a typical subhalo keeps about 82% of its mass through its first pericentre (it falls in on a wide orbit), where stripping at once to the tidal radius would leave about half.");
    let _ = writeln!(m, "- Which haloes host a galaxy is a model choice (`galaxies.occupation`): by default those whose main progenitor had reached the atomic-cooling mass by reionisation (z = 7.7) or whose V_max exceeds 25 km/s. Faint counts depend on it (and on the tree resolution near the cooling mass); the host's own stellar mass is its disc and bulge.");
    let _ = writeln!(m, "- Outside the host's virial radius the potential is still the host's own (untruncated NFW halo, disc and bulge) with dark energy's push, but without the matter of the surroundings (neighbouring haloes, the infall region), and the few subhaloes that entered faster than the escape speed (the tail of the infall-velocity distribution) leave for good: positions beyond about 3 R_vir are rough. The backsplash fractions use the shells set in `[tests.backsplash]` (1–1.5, 1.5–2 and 2–3 R_vir by default); haloes that never fell in are not in the trees, and their expected number comes from {}.", match o.backsplash.field {
        FieldModel::Nonlinear => "the non-linear host–matter correlation (`field = \"nonlinear\"`), whose one-halo term counts the orbiting matter beyond R_vir too, so it may overcount them near the host and the fractions there are then lower limits (see the Backsplash section)",
        FieldModel::Correlation => "the linear two-halo term (`field = \"correlation\"`), which undercounts them near the host, so the fractions there are upper limits",
        FieldModel::Region => "a uniform density over a region (`field = \"region\"`), which ignores the rise of the density towards the host",
    });
    let _ = writeln!(m, "- Orbits are integrated to the tolerance `orbits.rtol` (default 1e-4) in the host and `orbits.rtol_in_subhalo` (default 3e-4) inside subhaloes. Against 1e-8 for both, the demo's probabilities move by 0.004 (median; at most 0.04) for its twelve faint satellites and by 0.007 (at most 0.11) for its six bright ones (with the selections of 5e3–1e7 and 1e6–1e9 Msun then); the median row moves by about a sixth of its own bootstrap half-width; rows resting on fewer than 20 hosts (column `hosts`) move by up to 0.5, many times their bootstrap interval, which is unreliable there. The demo's conclusions are the same at both tolerances. The shift comes from subhaloes near the disruption threshold and shrinks slowly with the tolerance; where it matters, rerun a subset of hosts at tighter tolerances (`docs/performance.md`).");
    let warm_with = |sharp: bool| -> Vec<String> {
        labels
            .cosmologies
            .iter()
            .zip(&labels.wdm_kev)
            .zip(labels.sharp_k.iter().chain(std::iter::repeat(&true)))
            .filter(|(_, &s)| s == sharp)
            .filter_map(|((l, k), _)| k.map(|k| format!("{l}: {} keV", short_number(k))))
            .collect()
    };
    // (a walkthrough's top-hat WDM run was told its trees followed the sharp-k set)
    let warm_top_hat = warm_with(false);
    if !warm_top_hat.is_empty() {
        let _ = writeln!(m, "- Warm dark matter through the top-hat filter ({}): the top-hat filter keeps σ(M) growing below the half-mode mass, so the trees keep spurious small haloes there and the suppression of small subhaloes is far too weak; use `filter = \"sharp-k\"` for warm dark matter, with a cold-dark-matter cell through the same filter to compare with.", warm_top_hat.join(", "));
    }
    let warm = warm_with(true);
    if !warm.is_empty() {
        let _ = writeln!(m, "- Warm dark matter ({}): the trees follow the sharp-k excursion set with the flat collapse barrier of cold dark matter. At the half-mode mass M_hm the surviving WDM/CDM subhalo ratio of Milky-Way-mass hosts (0.50 at 2.5 keV) matches the halo-level fit of Schneider et al. 2012 but is about twice the subhalo fit of Lovell et al. 2014: subhaloes near M_hm are suppressed too little, so limits on the particle mass drawn from counts near M_hm are conservative. Compare with cold dark matter through the same sharp-k filter (`docs/validation.md`, `docs/tutorial.md`).", warm.join(", "));
    }
    let _ = writeln!(m, "- Satellites of satellites are followed inside their parents (friction, stripping, mergers with the parent's centre; they leave a parent once beyond both its tidal radius and its bound matter). At the default settings, for hosts of 1.2e12 Msun in the Planck 2018 cosmology (measured on 64 hosts for `docs/validation.md`, not on this run's), the numbers of bright satellites (M_V < -8: about 15 within 300 kpc), of faint ones (M_V < 0: about 110 within 300 kpc; about 125 with trees resolved to 1e7 Msun) and of companions still bound to a satellite of 1-3e11 Msun (about 2-7, by host sample) agree with the Milky Way's completeness-corrected census (`docs/validation.md`). About 61% of the faintest satellites were inside a halo of at least 1e10 Msun before the host (simulations that give stars by peak mass find up to about half, and this model with the peak-mass occupation 47%; the reionisation occupation favours early-forming, grouped haloes), and about 10% were already inside another halo at z > 6 (6% with the peak-mass occupation; a zoom-in result recalled in `docs/validation.md` puts it below a tenth; counting only the satellites a dark-matter-only zoom-in simulation still finds, bound mass above 4e6 Msun, the fractions are 4% and 2%, and 55% pre-processed: much of it is in heavily stripped satellites below such a simulation's reach; read pre-processing probabilities with that in mind). By default (`galaxies.strip_stars`) stars are stripped by tides once a subhalo has lost most of the mass inside its r_max (Errani et al. 2022); the faint satellites' galaxies sit deep in their haloes and rarely lose many. Against the Milky Way's own satellites (same 64 hosts): inside 30 kpc they move on tangential orbits as the Milky Way's do (β about −2.6 against about −2, Riley et al. 2019), which the disc's tide makes (−0.6 without it); but the bright ones (M_V < -8) lie further out, with a median distance of about 143 kpc per host against the Milky Way's 95 kpc, which is more concentrated than 94% of the hosts (73% without the disc), as Carlsten et al. 2020 find for simulated hosts. Where an observed object's distance matters, prefer the phase-space matches, which compare it with mock satellites at its own distance.");
    let _ = writeln!(m, "- Host-to-host scatter is large; the bootstrap interval describes the uncertainty of the host-averaged value, the 16–84% range the spread of single hosts like the Milky Way.");
    let _ = writeln!(m, "- The model's choices move the numbers more than the conclusions. On the demo's configuration with 600 hosts (`docs/tutorial.md`, section 5), the alternatives of the disc (all or nothing; its tide off), the stripping rate (one rate), the infall orbits, the occupation, the reionisation redshift, the stellar-mass–halo-mass relation, stellar stripping and the trees' resolution left every conclusion about its two samples as it was, and moved the bright sample's largest quenching delay after first infall within 1.50–2.25 Gyr, as much as a second, independent set of 600 hosts did (1.50 and 2.25 Gyr). To see how yours rests on them, run the configuration again with one key changed and the same hosts otherwise: `retinue run CONFIG --set TABLE.KEY=VALUE --out OTHER.h5`.");
    m
}

/// Write the results into an analysis group `a` (`/analysis/NAME`).
pub fn write_analysis(
    a: &hdf5::Group,
    res: &AnalysisResults,
    options_toml: &str,
) -> hdf5::Result<()> {
    set_str_attr(a, "tests", options_toml)?;
    set_num_attr(a, "n_draw", res.n_draw as u64)?;
    let col = |g: &hdf5::Group, name: &str, v: &[f64], units: &str| -> hdf5::Result<()> {
        let d = g.new_dataset_builder().with_data(v).create(name)?;
        set_str_attr(&d, "units", units)
    };
    // the grid's units: a redshift is dimensionless, a delay is in Gyr
    let write_curve = |g: &hdf5::Group, c: &Curve, xname: &str| -> hdf5::Result<()> {
        col(
            g,
            xname,
            &c.x,
            if xname.ends_with("_gyr") { "Gyr" } else { "" },
        )?;
        col(
            g,
            "mean",
            &c.spread.iter().map(|s| s.mean).collect::<Vec<_>>(),
            "",
        )?;
        col(
            g,
            "median",
            &c.spread.iter().map(|s| s.median).collect::<Vec<_>>(),
            "",
        )?;
        col(
            g,
            "p16",
            &c.spread.iter().map(|s| s.p16).collect::<Vec<_>>(),
            "",
        )?;
        col(
            g,
            "p84",
            &c.spread.iter().map(|s| s.p84).collect::<Vec<_>>(),
            "",
        )?;
        col(
            g,
            "boot16",
            &c.spread.iter().map(|s| s.boot16).collect::<Vec<_>>(),
            "",
        )?;
        col(
            g,
            "boot84",
            &c.spread.iter().map(|s| s.boot84).collect::<Vec<_>>(),
            "",
        )?;
        col(
            g,
            "boot025",
            &c.spread.iter().map(|s| s.boot025).collect::<Vec<_>>(),
            "",
        )?;
        col(
            g,
            "boot975",
            &c.spread.iter().map(|s| s.boot975).collect::<Vec<_>>(),
            "",
        )?;
        let hosts: Vec<u64> = c.spread.iter().map(|s| s.hosts).collect();
        let d = g.new_dataset_builder().with_data(&hosts).create("hosts")?;
        set_str_attr(&d, "units", "count")
    };
    let g = a.create_group("all_of_n")?;
    for ((clock, mc), (_, ex)) in res.all_of_n_mc.iter().zip(&res.all_of_n_exact) {
        let cg = g.create_group(clock.name())?;
        write_curve(&cg, mc, "z")?;
        col(
            &cg,
            "exact_mean",
            &ex.spread.iter().map(|s| s.mean).collect::<Vec<_>>(),
            "",
        )?;
    }
    let g = a.create_group("fraction_of_n")?;
    for (clock, n, c) in &res.fraction_of_n {
        let cg = if g.link_exists(clock.name()) {
            g.group(clock.name())?
        } else {
            g.create_group(clock.name())?
        };
        let ng = cg.create_group(&format!("n{n}"))?;
        write_curve(&ng, c, "z")?;
    }
    let g = a.create_group("quenching_delay")?;
    for (clock, c, lim) in &res.quench {
        let cg = g.create_group(clock.name())?;
        write_curve(&cg, c, "delay_gyr")?;
        set_num_attr(&cg, "largest_delay_allowed_gyr", lim.tau)?;
        for (name, v) in [
            ("largest_delay_boot16_gyr", lim.boot16),
            ("largest_delay_boot84_gyr", lim.boot84),
            ("largest_delay_boot025_gyr", lim.boot025),
            ("largest_delay_boot975_gyr", lim.boot975),
            ("largest_delay_host_median_gyr", lim.host_median),
        ] {
            set_num_attr(&cg, name, v)?;
        }
        set_num_attr(
            &cg,
            "hosts_reaching_largest_delay",
            lim.hosts_reaching as f64,
        )?;
    }
    let hosts_too_few = a
        .new_dataset_builder()
        .with_data(&res.hosts_too_few)
        .create("hosts_too_few")?;
    set_str_attr(&hosts_too_few, "units", "index")?;
    let cand: Vec<u64> = res.candidates.iter().map(|&c| c as u64).collect();
    let cand = a
        .new_dataset_builder()
        .with_data(&cand)
        .create("candidates_per_host")?;
    set_str_attr(&cand, "units", "count")?;
    let cand_hosts = a
        .new_dataset_builder()
        .with_data(&res.candidate_hosts)
        .create("candidates_host_index")?;
    set_str_attr(&cand_hosts, "units", "index")?;
    let bg = a.create_group("backsplash")?;
    set_num_attr(&bg, "fraction_mean", res.backsplash_fraction.mean)?;
    set_num_attr(&bg, "fraction_boot16", res.backsplash_fraction.boot16)?;
    set_num_attr(&bg, "fraction_boot84", res.backsplash_fraction.boot84)?;
    set_num_attr(&bg, "hosts", res.backsplash_fraction.hosts)?;
    set_num_attr(&bg, "backsplash_per_host", res.backsplash_count_mean)?;
    set_num_attr(&bg, "field_expected_per_host", res.field_count_expected)?;
    let col = |f: &dyn Fn(&crate::stats::battery::ShellResult) -> f64| -> Vec<f64> {
        res.backsplash_shells.iter().map(f).collect()
    };
    for (name, v) in [
        ("shell_lo_over_rvir", col(&|s| s.lo_over_rvir)),
        ("shell_hi_over_rvir", col(&|s| s.hi_over_rvir)),
        ("shell_fraction_mean", col(&|s| s.fraction.mean)),
        ("shell_fraction_boot16", col(&|s| s.fraction.boot16)),
        ("shell_fraction_boot84", col(&|s| s.fraction.boot84)),
        ("shell_backsplash_per_host", col(&|s| s.count_mean)),
        ("shell_field_expected_per_host", col(&|s| s.field_mean)),
    ] {
        bg.new_dataset_builder().with_data(&v).create(name)?;
    }
    let hosts: Vec<u64> = res
        .backsplash_shells
        .iter()
        .map(|s| s.fraction.hosts)
        .collect();
    bg.new_dataset_builder()
        .with_data(&hosts)
        .create("shell_hosts")?;
    if let Some(p) = &res.pairs {
        write_pairs(a, p)?;
    }
    Ok(())
}

/// The pair tests as the group `pairs` of an analysis: one entry per row of `pairs.csv`, as
/// columns (`statistic`; `cosmology_index` and `cell_code`, 65535 for pooled rows; the
/// numbers, NaN where they do not apply).
fn write_pairs(a: &hdf5::Group, p: &crate::stats::pairs::PairResults) -> hdf5::Result<()> {
    use hdf5::types::VarLenUnicode;
    use std::str::FromStr;
    let g = a.create_group("pairs")?;
    set_str_attr(
        &g,
        "field",
        match p.field {
            FieldModel::Nonlinear => "nonlinear",
            FieldModel::Correlation => "correlation",
            FieldModel::Region => "region",
        },
    )?;
    let rows = pair_rows(p);
    let stat: Vec<VarLenUnicode> = rows
        .iter()
        .map(|r| VarLenUnicode::from_str(r.statistic).unwrap_or_default())
        .collect();
    g.new_dataset_builder()
        .with_data(&stat)
        .create("statistic")?;
    let cos: Vec<u16> = rows
        .iter()
        .map(|r| r.cell.map_or(u16::MAX, |c| c.0))
        .collect();
    let d = g
        .new_dataset_builder()
        .with_data(&cos)
        .create("cosmology_index")?;
    set_str_attr(&d, "units", "index")?;
    let code: Vec<u16> = rows
        .iter()
        .map(|r| r.cell.map_or(u16::MAX, |c| c.1))
        .collect();
    let d = g
        .new_dataset_builder()
        .with_data(&code)
        .create("cell_code")?;
    set_str_attr(&d, "units", "index")?;
    let cols: [(&str, PairColumn); 17] = [
        ("shell_lo_over_rvir", |r| r.shell[0]),
        ("shell_hi_over_rvir", |r| r.shell[1]),
        ("n_hosts", |r| r.n_hosts),
        ("n_pairs", |r| r.n_pairs),
        ("n_satellites", |r| r.n_satellites),
        ("n_once_in_partner", |r| r.n_once),
        ("backsplash_per_pair", |r| r.per_pair[0]),
        ("field_expected_per_pair", |r| r.per_pair[1]),
        ("tree_never_inside_per_pair", |r| r.per_pair[2]),
        ("mean", |r| r.spread.mean),
        ("median", |r| r.spread.median),
        ("p16", |r| r.spread.p16),
        ("p84", |r| r.spread.p84),
        ("boot16", |r| r.spread.boot16),
        ("boot84", |r| r.spread.boot84),
        ("boot025", |r| r.spread.boot025),
        ("boot975", |r| r.spread.boot975),
    ];
    for (name, f) in cols {
        let v: Vec<f64> = rows.iter().map(f).collect();
        g.new_dataset_builder().with_data(&v).create(name)?;
    }
    Ok(())
}

/// A number for a figure's tick or a line of the report: at most four significant digits,
/// trailing zeros dropped, and scientific notation outside [1e-3, 1e4) (log axes put ticks
/// at values like 9.99...e-5, whose full digits overlap).
pub(crate) fn short_number(v: f64) -> String {
    if v == 0.0 {
        return "0".into(); // also -0
    }
    if !v.is_finite() {
        return format!("{v}");
    }
    let trim = |s: &str| s.trim_end_matches('0').trim_end_matches('.').to_string();
    let a = v.abs();
    if !(1e-3..1e4).contains(&a) {
        let s = format!("{v:.3e}");
        let (m, e) = s
            .split_once('e')
            .expect("scientific notation has an exponent");
        format!("{}e{e}", trim(m))
    } else {
        let digits = (3 - a.log10().floor() as i32).max(0) as usize;
        let s = format!("{v:.digits$}");
        if s.contains('.') {
            trim(&s)
        } else {
            s
        }
    }
}

/// What an analysis records besides its results: its name, the tests' settings (TOML) and
/// the observed sample with the file it came from.
pub struct AnalysisRecord<'a> {
    pub name: &'a str,
    pub tests_toml: &'a str,
    pub sample: Option<(&'a ObservedSample, &'a Path)>,
}

/// Characters allowed in an analysis name (it names an HDF5 group and a directory).
pub fn analysis_name_problem(name: &str) -> Option<String> {
    let ok = !name.is_empty()
        && name.len() <= 64
        && name
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || matches!(c, '-' | '_' | '.'))
        && !name.starts_with('.');
    (!ok).then(|| {
        format!(
            "--name = {name:?} is not allowed: 1 to 64 characters of letters, digits, '-', '_' \
             and '.', not starting with '.'"
        )
    })
}

/// Names of the analyses a store holds (sorted), and the latest one written.
pub fn analyses_in(store: &Path) -> Result<(Vec<String>, Option<String>), IoError> {
    let r = (|| -> hdf5::Result<(Vec<String>, Option<String>)> {
        let f = hdf5::File::open(store)?;
        if !f.link_exists("analysis") {
            return Ok((Vec::new(), None));
        }
        let a = f.group("analysis")?;
        let mut names: Vec<String> = a
            .groups()?
            .iter()
            .map(|g| g.name().rsplit('/').next().unwrap_or("").to_string())
            .collect();
        names.sort();
        let latest = crate::io::h5::get_str_attr(&a, "latest").ok();
        Ok((names, latest))
    })();
    r.map_err(|e| IoError::hdf5(store, e))
}

/// Write an analysis into the store as `/analysis/NAME` (replacing one of that name only),
/// through a copy renamed into place, and mark it as the latest.
pub fn write_analysis_to_store(
    store: &Path,
    res: &AnalysisResults,
    record: &AnalysisRecord,
) -> Result<(), IoError> {
    let a = AtomicPath::new(store);
    // on a full disk: the copy needs about the store's size
    let needed = std::fs::metadata(store).map(|m| m.len()).unwrap_or(0);
    std::fs::copy(store, &a.temp_path).map_err(|e| IoError::fs(&a.temp_path, e).needing(needed))?;
    let r = (|| -> hdf5::Result<()> {
        let f = hdf5::File::open_rw(&a.temp_path)?;
        let top = if f.link_exists("analysis") {
            f.group("analysis")?
        } else {
            f.create_group("analysis")?
        };
        if top.link_exists(record.name) {
            top.unlink(record.name)?;
        }
        let g = top.create_group(record.name)?;
        write_analysis(&g, res, record.tests_toml)?;
        if let Some((sample, path)) = record.sample {
            write_sample(&g, sample, path)?;
        }
        if top.attr_names()?.iter().any(|n| n == "latest") {
            top.delete_attr("latest")?;
        }
        set_str_attr(&top, "latest", record.name)?;
        f.flush()
    })();
    match r {
        Ok(()) => a.commit().map(|_| ()),
        Err(e) => {
            a.discard();
            Err(IoError::hdf5(store, e).needing(needed))
        }
    }
}

/// The observed sample as the analysis used it: one row per object.
fn write_sample(g: &hdf5::Group, sample: &ObservedSample, path: &Path) -> hdf5::Result<()> {
    use hdf5::types::VarLenUnicode;
    use std::str::FromStr;
    let s = g.create_group("sample")?;
    set_str_attr(&s, "file", &path.display().to_string())?;
    let ids: Vec<VarLenUnicode> = sample
        .objects
        .iter()
        .map(|o| VarLenUnicode::from_str(&o.id).unwrap_or_default())
        .collect();
    s.new_dataset_builder().with_data(&ids).create("id")?;
    let col = |name: &str, units: &str, f: &dyn Fn(&crate::stats::ObservedObject) -> f64| {
        let v: Vec<f64> = sample.objects.iter().map(f).collect();
        let d = s.new_dataset_builder().with_data(&v).create(name)?;
        set_str_attr(&d, "units", units)
    };
    col("mstar_msun", "Msun", &|o| o.mstar_msun)?;
    col("r_gc_kpc", "kpc", &|o| o.r_gc_kpc)?;
    col("v_r_kms", "km/s", &|o| o.v_r_kms)?;
    col("t_quench_lookback_gyr", "Gyr", &|o| o.t_quench_lookback_gyr)?;
    col("t_quench_err_gyr", "Gyr", &|o| o.t_quench_err_gyr)?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::{delay_gyr, mean_and_interval, percent};

    #[test]
    fn probabilities_and_delays_in_words() {
        assert_eq!(percent(0.0), "0%");
        assert_eq!(percent(0.0004), "0.040%");
        assert_eq!(percent(0.032), "3.2%");
        assert_eq!(percent(0.005), "0.50%");
        assert_eq!(percent(0.25), "25%");
        assert_eq!(delay_gyr(f64::NAN), "none");
        assert_eq!(delay_gyr(2.25), "2.25");
    }

    /// All-zero means and means over too few hosts print no interval (review, walkthrough).
    #[test]
    fn intervals_only_where_they_mean_something() {
        let s = |mean: f64, p84: f64, hosts: u64| crate::stats::Spread {
            mean,
            p84,
            hosts,
            boot16: mean * 0.9,
            boot84: mean * 1.1,
            ..crate::stats::Spread::NAN
        };
        assert_eq!(
            mean_and_interval(&s(0.0, 0.0, 20), 3),
            "0 (every one of 20 hosts)"
        );
        assert_eq!(
            mean_and_interval(&s(1.0, 1.0, 1), 3),
            "1.000 (1 host: no interval)"
        );
        assert_eq!(
            mean_and_interval(&s(0.5, 0.6, 4), 2),
            "0.50 (4 hosts: no interval)"
        );
        assert_eq!(mean_and_interval(&s(0.5, 0.6, 40), 2), "0.50 [0.45, 0.55]");
        assert_eq!(
            mean_and_interval(&s(f64::NAN, f64::NAN, 0), 2),
            "– (no host)"
        );
    }
}
