//! Analyses of a store, for the command line and for library users alike: the tests run on
//! a store's hosts (pooled and per grid cell), the analysis written into the store under its
//! name with its settings and sample, the report's tables and figures; the run's
//! configuration read back from a store; the selection of grid cells; and the overlay of
//! re-test settings on the stored ones. Nothing here prints: notes are returned.

use std::path::{Path, PathBuf};

use crate::config::RunConfig;
use crate::io::store::StoreMeta;
use crate::report::{write_analysis_to_store, write_tables, AnalysisRecord, CellLabels};
use crate::run::Grid;
use crate::stats::battery::{run_tests_raw, Merger};
use crate::stats::cells::{CellMergers, CellResults};
use crate::stats::compact::{for_each_chunk_where, FigureData};
use crate::stats::pairs::PairMerger;
use crate::stats::{AnalysisResults, ObservedSample};
use crate::Cosmology;

/// What can go wrong in an analysis: bad input (a selection, a stored configuration) or a
/// failure reading or writing.
#[derive(Debug, thiserror::Error)]
pub enum AnalysisError {
    #[error("{0}")]
    Input(String),
    #[error("{0}")]
    Failed(String),
}

/// What an analysis produced: pooled and per-cell results, the report directory, the tables
/// and figures written, and notes for the user (e.g. an n_draw that differs from the sample).
pub struct Outcome {
    pub results: AnalysisResults,
    pub cells: Vec<CellResults>,
    pub report_dir: PathBuf,
    pub files: Vec<PathBuf>,
    pub figures: Vec<PathBuf>,
    pub notes: Vec<String>,
}

/// A run's configuration read back from its store, the run's sample if it can be found, and
/// notes about where it was found.
pub struct StoredConfig {
    pub config: RunConfig,
    pub sample: Option<PathBuf>,
    pub notes: Vec<String>,
}

/// What a store's tests return: pooled results, per-cell results (empty for a one-cell
/// grid), the figure data and the number of hosts tested.
pub struct Computed {
    pub results: AnalysisResults,
    pub cells: Vec<CellResults>,
    pub figure_data: FigureData,
    pub n_hosts: usize,
}

/// Run the tests on a store, streaming it in host chunks, for the cells `cells` selects
/// (None: all); with more than one cell in the grid, per cell as well as pooled.
pub fn compute(
    grid: &Grid,
    store: &Path,
    sample: Option<&ObservedSample>,
    cells: Option<&[(u16, u16)]>,
) -> Result<Computed, AnalysisError> {
    if let Some(why) = tests_unsupported(grid) {
        return Err(AnalysisError::Input(why));
    }
    let cfg = &grid.config;
    // stream the store in chunks of hosts, test each chunk and fold it into running summaries:
    // memory stays flat in the number of hosts
    // each host is read on its own cosmology's clock (the store's hosts carry its index)
    let cosmos: Vec<&Cosmology> = grid.theories.iter().map(|t| t.cosmology()).collect();
    let mut merger = Merger::new(&cfg.file.tests, cfg.file.run.master_seed, false);
    let n_cells = cells
        .map(|c| c.len())
        .unwrap_or_else(|| cell_labels(grid).n_cells());
    let mut per_cell = CellMergers::new(&cfg.file.tests, cfg.file.run.master_seed);
    let mut pairs = PairMerger::new(&cfg.file.tests, cfg.file.run.master_seed);
    let keep = |c: u16, m: u16| cells.is_none_or(|s| s.contains(&(c, m)));
    let fig = for_each_chunk_where(
        store,
        &cfg.file.tests,
        sample,
        &cosmos,
        &cfg.file.galaxies,
        64,
        &keep,
        &mut |cat| {
            merger.add(run_tests_raw(
                &grid.theories,
                &cfg.file.galaxies,
                &cat,
                &cfg.file.tests,
                sample,
                cfg.file.run.master_seed,
            ));
            if n_cells > 1 {
                per_cell.add(&grid.theories, &cfg.file.galaxies, &cat, sample);
            }
            pairs.add(&grid.theories, &cat);
        },
    )
    .map_err(|e| AnalysisError::Failed(e.to_string()))?;
    let n_hosts = fig.n_hosts;
    let mut res = merger.finish().ok_or_else(|| {
        AnalysisError::Failed(format!(
            "{}: the store has no hosts{}",
            store.display(),
            if cells.is_some() {
                " in the selected cells"
            } else {
                ""
            }
        ))
    })?;
    res.pairs = pairs.finish(&fig.pairs);
    Ok(Computed {
        results: res,
        cells: per_cell.finish(),
        figure_data: fig,
        n_hosts,
    })
}

/// Names of the grid's cells.
pub fn cell_labels(grid: &Grid) -> CellLabels {
    CellLabels {
        cosmologies: grid.config.cosmology_labels.clone(),
        masses: grid.config.mass_bins.iter().map(|m| m.label()).collect(),
        environments: grid
            .config
            .environments
            .iter()
            .map(|e| (e.label.clone(), e.pair.is_some()))
            .collect(),
        wdm_kev: grid
            .config
            .cosmologies
            .iter()
            .map(|(_, lin)| lin.m_wdm_kev)
            .collect(),
        sharp_k: grid
            .config
            .cosmologies
            .iter()
            .map(|(_, lin)| lin.filter == crate::linear::variance::Filter::SharpK)
            .collect(),
    }
}

/// The cells `--cell` selects: each spec is `cosmology=LABEL`, `mass=MASS`, `env=LABEL` or
/// several of them, comma-separated; a host mass matches a fixed mass within 1% or a range's
/// label exactly; a pair environment selects its primaries and its partners. Cells are
/// (cosmology, `stats::cells::cell_code`). None: every cell.
pub fn select_cells(
    grid: &Grid,
    specs: &[String],
) -> Result<Option<Vec<(u16, u16)>>, AnalysisError> {
    if specs.is_empty() {
        return Ok(None);
    }
    let labels = cell_labels(grid);
    let mut out: Vec<(u16, u16)> = Vec::new();
    for spec in specs {
        let (mut cos, mut mass, mut env) = (None, None, None);
        for part in spec.split(',') {
            match part.split_once('=') {
                Some(("cosmology", v)) if !v.trim().is_empty() => cos = Some(v.trim().to_string()),
                Some(("mass", v)) if !v.trim().is_empty() => mass = Some(v.trim().to_string()),
                Some(("env", v)) if !v.trim().is_empty() => env = Some(v.trim().to_string()),
                _ => {
                    return Err(AnalysisError::Input(format!(
                        "--cell {spec:?}: expected cosmology=LABEL, mass=MASS, env=LABEL or several, comma-separated (e.g. --cell cosmology=planck18,mass=1.2e12)"
                    )))
                }
            }
        }
        let mass_ok = |mi: usize| match &mass {
            None => true,
            Some(v) => {
                labels.masses[mi] == *v
                    || match (v.parse::<f64>(), grid.config.mass_bins[mi]) {
                        (Ok(x), crate::config::MassBin::Fixed(m)) => (x / m - 1.0).abs() < 0.01,
                        _ => false,
                    }
            }
        };
        let before = out.len();
        for (ci, cl) in labels.cosmologies.iter().enumerate() {
            if cos.as_ref().is_some_and(|c| c != cl) {
                continue;
            }
            for mi in 0..labels.masses.len() {
                if !mass_ok(mi) {
                    continue;
                }
                for (ei, e) in grid.config.environments.iter().enumerate() {
                    if env.as_ref().is_some_and(|l| *l != e.label) {
                        continue;
                    }
                    for member in 0..e.members() as u8 {
                        let code = crate::stats::cells::cell_code(mi as u16, ei as u8, member);
                        if !out.contains(&(ci as u16, code)) {
                            out.push((ci as u16, code));
                        }
                    }
                }
            }
        }
        if out.len() == before {
            return Err(AnalysisError::Input(format!(
                "--cell {spec:?} matches no cell of this run; cosmologies: {}; host masses: {}; environments: {}",
                labels
                    .cosmologies
                    .iter()
                    .map(|l| format!("{l:?}"))
                    .collect::<Vec<_>>()
                    .join(", "),
                labels.masses.join(", "),
                grid.config
                    .environments
                    .iter()
                    .map(|e| format!("{:?}", e.label))
                    .collect::<Vec<_>>()
                    .join(", ")
            )));
        }
    }
    Ok(Some(out))
}

/// Where an analysis goes: its name in the store (`/analysis/NAME`) and its report directory.
pub struct Target {
    pub name: String,
    pub dir: PathBuf,
    /// What an interrupt from the moment the analysis is stored until its report is written
    /// should say (None: leave the command's note as it is).
    pub stored_note: Option<String>,
}

impl Target {
    /// The run's own analysis: `/analysis/run`, report in NAME-report next to the store.
    pub fn of_run(store: &Path) -> Self {
        Self {
            name: "run".into(),
            dir: report_dir(store),
            stored_note: None,
        }
    }
}

/// `base` with the keys of `over` put in, recursively through tables (values of other types,
/// arrays included, are replaced whole).
pub fn merge_toml(base: &mut toml::Value, over: &toml::Value) {
    match (base, over) {
        (toml::Value::Table(b), toml::Value::Table(o)) => {
            for (k, v) in o {
                match b.get_mut(k) {
                    Some(bv) => merge_toml(bv, v),
                    None => {
                        b.insert(k.clone(), v.clone());
                    }
                }
            }
        }
        (b, o) => *b = o.clone(),
    }
}

/// Settings `current` with the keys given in `over` replaced (see `merge_toml`).
pub fn overlay<T>(current: &T, over: Option<&toml::Value>) -> Result<T, String>
where
    T: serde::Serialize + serde::de::DeserializeOwned,
{
    let mut v = toml::Value::try_from(current).map_err(|e| e.to_string())?;
    if let Some(o) = over {
        merge_toml(&mut v, o);
    }
    v.try_into().map_err(|e: toml::de::Error| e.to_string())
}

/// Seconds since 1970 as YYYYMMDD-HHMMSS (UTC; the civil-from-days algorithm of H. Hinnant,
/// "chrono-Compatible Low-Level Date Algorithms").
pub fn utc_stamp(secs: u64) -> String {
    let days = (secs / 86_400) as i64;
    let rem = secs % 86_400;
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + i64::from(m <= 2);
    format!(
        "{y:04}{m:02}{d:02}-{:02}{:02}{:02}",
        rem / 3600,
        (rem / 60) % 60,
        rem % 60
    )
}

/// Run every test on a store (pooled and, for a grid of several cells, per cell), store the
/// analysis as `/analysis/NAME`, and write the report's tables and figures into the target's
/// directory.
pub fn analyse(
    grid: &Grid,
    store: &Path,
    sample: Option<&ObservedSample>,
    sample_path: Option<&Path>,
    cells: Option<&[(u16, u16)]>,
    target: &Target,
) -> Result<Outcome, AnalysisError> {
    // (`compute` refuses hosts the tests cannot read, `tests_unsupported`, before any work)
    let cfg = &grid.config;
    let mut notes = Vec::new();
    // N follows the sample unless the configuration sets it
    let n_note = match (cfg.file.tests.n_draw, sample) {
        (Some(n), Some(s)) if n != s.objects.len() => Some(format!(
            "tests.n_draw = {n} is set in the configuration and differs from the sample's {} objects: the all-of-N and fraction-of-N tests draw {n}",
            s.objects.len()
        )),
        _ => None,
    };
    if let Some(n) = &n_note {
        notes.push(n.clone());
    }
    let Computed {
        results: res,
        cells: per_cell,
        figure_data: fig,
        n_hosts,
    } = compute(grid, store, sample, cells)?;
    let tests_toml = toml::to_string(&cfg.file.tests).unwrap_or_default();
    write_analysis_to_store(
        store,
        &res,
        &AnalysisRecord {
            name: &target.name,
            tests_toml: &tests_toml,
            sample: sample.zip(sample_path),
        },
    )
    .map_err(|e| AnalysisError::Failed(e.to_string()))?;
    if let Some(n) = &target.stored_note {
        crate::io::set_interrupt_note(n.clone());
    }
    let dir = target.dir.clone();
    let n_sub = crate::io::store::n_subhaloes_in(store)
        .map_err(|e| AnalysisError::Failed(e.to_string()))?;
    let mut summary = format!(
        "Store `{}`: {} hosts, {} subhaloes; master seed {}.",
        store.display(),
        n_hosts,
        n_sub,
        cfg.file.run.master_seed
    );
    summary.push_str(&format!(
        "\n\nAnalysis `{}` (stored as `/analysis/{}`, with the settings below{}): sample {}.",
        target.name,
        target.name,
        if sample.is_some() {
            " and the sample's rows"
        } else {
            ""
        },
        match (sample, sample_path) {
            (Some(s), Some(p)) => format!("`{}` ({} objects)", p.display(), s.objects.len()),
            _ => "none (N = tests.n_draw; the quenching and matching tests are skipped)".into(),
        }
    ));
    if let Some(n) = &n_note {
        summary.push_str(&format!("\n\n**Note:** {n}."));
    }
    let g = &cfg.file.galaxies;
    summary.push_str(&if g.strip_stars {
        format!(
            "\n\nStars: stripped by tides (`galaxies.strip_stars = true`; galaxy sizes {} R_200c \
             with {} dex scatter); stellar masses in the selection, the matching and the tables \
             are today's, after stripping (`mstar_peak_msun` in the store holds what each galaxy \
             formed).",
            g.size_to_r200c, g.size_scatter_dex
        )
    } else {
        "\n\nStars: every galaxy keeps the stars it formed (`galaxies.strip_stars = false`)."
            .to_string()
    });
    if let Some(d) = disc_words(&cfg.file.orbits) {
        summary.push_str(&format!("\n\n{d}"));
    }
    if let Some(w) = resolution_warning(grid) {
        summary.push_str(&format!("\n\n**Warning:** {w}."));
    }
    if let Some(c) = cells {
        let labels = cell_labels(grid);
        summary.push_str(&format!(
            "\n\nOnly the selected cells are tested (`--cell`): {}.",
            c.iter()
                .map(|&(ci, mi)| {
                    let (a, b) = labels.of(ci, mi);
                    format!("{a} at {b} Msun")
                })
                .collect::<Vec<_>>()
                .join("; ")
        ));
    }
    // the warm-dark-matter caveat names only the cosmologies tested
    let mut labels = cell_labels(grid);
    if let Some(c) = cells {
        for (i, k) in labels.wdm_kev.iter_mut().enumerate() {
            if !c.iter().any(|&(ci, _)| ci as usize == i) {
                *k = None;
            }
        }
    }
    // the marker first: a report cut short is still recognised as retinue's
    crate::report::directory::mark(&dir, store, &format!("analysis {}", target.name))
        .map_err(|e| AnalysisError::Failed(e.to_string()))?;
    let files = write_tables(
        &dir,
        &res,
        &per_cell,
        &labels,
        &cfg.file.tests,
        sample,
        &summary,
    )
    .map_err(|e| AnalysisError::Failed(e.to_string()))?;
    let figures = figures(grid, &dir, &res, &fig, sample, &per_cell)?;
    // an earlier analysis's tables and figures that this one does not have
    let written: Vec<PathBuf> = files.iter().chain(&figures).cloned().collect();
    crate::report::remove_stale(&dir, &written, true)
        .map_err(|e| AnalysisError::Failed(e.to_string()))?;
    Ok(Outcome {
        results: res,
        cells: per_cell,
        report_dir: dir,
        files,
        figures,
        notes,
    })
}

/// Draw the figures of a run (PNG and SVG) with what they need from its configuration and
/// sample; returns the files written.
pub fn figures(
    grid: &Grid,
    dir: &Path,
    res: &AnalysisResults,
    fig: &FigureData,
    sample: Option<&ObservedSample>,
    cells: &[CellResults],
) -> Result<Vec<PathBuf>, AnalysisError> {
    let cfg = &grid.config.file;
    let labels = cell_labels(grid);
    let inputs = crate::report::figures::FigureInputs {
        theories: &grid.theories,
        cells,
        labels: Some(&labels),
        sample,
        tests: &cfg.tests,
        orbits: &cfg.orbits,
        resolution_msun: cfg.trees.resolution_msun,
    };
    crate::report::figures::write_figures(dir, res, fig, &inputs).map_err(AnalysisError::Failed)
}

/// Whether the files that `grid` was read from besides its configuration (its transfer
/// tables, `io::inputs`) are those the store's run read: a re-test on a table changed since
/// would compute the field counts and clocks with a power spectrum the hosts were not grown
/// with (review: `infall` read the table at its path again without a word). A changed file
/// is an error naming it; Ok(Some(note)) when the store recorded no hashes (written before
/// they were) and the grid reads a table, so that nothing can be compared.
pub fn check_input_files(
    meta: &StoreMeta,
    store: &Path,
    grid: &Grid,
) -> Result<Option<String>, AnalysisError> {
    use crate::io::inputs::InputFiles;
    let now = grid.input_files();
    let recorded = InputFiles::parse(&meta.input_files);
    if recorded.is_empty() && !now.is_empty() {
        return Ok(Some(format!(
            "{} records no hash of the files its run read (written before they were \
             recorded): {} cannot be checked to be what its hosts were grown with",
            store.display(),
            now.0
                .iter()
                .map(|f| format!("{} = {}", f.key, f.path))
                .collect::<Vec<_>>()
                .join(", ")
        )));
    }
    let diffs = InputFiles::differences(&recorded, &now, "the store's run");
    if diffs.is_empty() {
        return Ok(None);
    }
    Err(AnalysisError::Input(format!(
        "{}: {}; the tests would use a linear theory the hosts were not grown with: put the \
         file the run read back at that path, or run `retinue run` again with the new one",
        store.display(),
        diffs.join("; ")
    )))
}

/// The run's own report directory: NAME-report next to the store NAME.h5.
pub fn report_dir(store: &Path) -> PathBuf {
    let stem = store
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "run".into());
    store.with_file_name(format!("{stem}-report"))
}

/// The galaxy model's warning about the trees' resolution (`GalaxyOptions::resolution_warning`,
/// magnitudes in the first cosmology).
/// Why the tests cannot run on this grid's hosts (None: they can). The tests read the
/// satellites as observed today: infall clocks count back from the present age, and the
/// field counts of the backsplash test use today's mass function, bias and correlation at
/// today's radii. Hosts synthesised to another `host.z_final` are stored, but not tested.
pub fn tests_unsupported(grid: &Grid) -> Option<String> {
    let z = grid.config.file.host.z_final;
    (z != 0.0).then(|| {
        format!(
            "host.z_final = {z}: the infall-time tests and the report read the satellites as \
             observed today (z_final = 0); these hosts are stored, but not tested"
        )
    })
}

pub fn resolution_warning(grid: &Grid) -> Option<String> {
    let cfg = &grid.config;
    let res = cfg
        .file
        .galaxies
        .resolution_warning(grid.theories[0].cosmology(), cfg.file.trees.resolution_msun);
    let wdm = wdm_filter_warning(grid);
    let window = grid.backsplash_floor_raised_from_msun.map(|was| {
        format!(
            "tests.backsplash.m_peak_msun starts at {was:e} Msun, below trees.resolution_msun = \
             {:e} Msun: the backsplash test counts haloes from the resolution up (backsplash \
             haloes below it are not in the trees, while the field count would include them)",
            cfg.file.trees.resolution_msun
        )
    });
    let all: Vec<String> = [res, wdm, window].into_iter().flatten().collect();
    (!all.is_empty()).then(|| all.join(". Also: "))
}

/// Warm-dark-matter cosmologies grown with the top-hat filter (the default filter): their
/// trees keep the spurious small haloes that the sharp-k filter avoids (physics reference
/// sheet, sec. on filters; Benson et al. 2013), and the report's warm-dark-matter caveat
/// assumes sharp-k.
pub fn wdm_filter_warning(grid: &Grid) -> Option<String> {
    let cfg = &grid.config;
    let names: Vec<String> = cfg
        .cosmologies
        .iter()
        .zip(&cfg.cosmology_labels)
        .filter(|((_, lin), _)| {
            lin.m_wdm_kev.is_some() && lin.filter == crate::linear::Filter::TopHat
        })
        .map(|(_, l)| l.clone())
        .collect();
    (!names.is_empty()).then(|| {
        format!(
            "warm dark matter with the top-hat filter in {}: its trees keep spurious small \
             haloes below the half-mode mass; set `filter = \"sharp-k\"` in that [cosmology] \
             (with a sharp-k cold-dark-matter cell to compare with)",
            names.join(", ")
        )
    })
}

/// A note naming the objects of the sample that lie outside `[tests.selection]`: stellar mass,
/// M_V (from the stellar mass, as the galaxies are painted) or distance from the centre
/// against `r_over_rvir` times the virial radii of the configured host masses (first
/// cosmology). The tests compare a sample with mock satellites chosen by the selection, so an
/// object outside it is compared with satellites unlike it (a walkthrough's sample had 4 of 6
/// objects below the selection's stellar mass and `check` said nothing). None: all inside.
pub fn sample_outside_selection(grid: &Grid, sample: &ObservedSample) -> Option<String> {
    let cfg = &grid.config;
    let sel = &cfg.file.tests.selection;
    let lt = grid.theories.first()?;
    let (mut r_lo, mut r_hi) = (f64::INFINITY, 0.0f64);
    for bin in &cfg.mass_bins {
        let ends = match *bin {
            crate::config::run::MassBin::Fixed(m) => [m, m],
            crate::config::run::MassBin::LogUniform(a, b) => [a, b],
        };
        for m in ends {
            let r = crate::halo::MassDefinition::Vir.radius_kpc(
                lt.cosmology(),
                grid.virial_mass(lt, m),
                cfg.file.host.z_final,
            );
            r_lo = r_lo.min(r);
            r_hi = r_hi.max(r);
        }
    }
    let ml = cfg.file.galaxies.mass_to_light_v;
    let outside: Vec<String> = sample
        .objects
        .iter()
        .filter_map(|o| {
            let mut why = Vec::new();
            if !(sel.mstar_msun[0]..=sel.mstar_msun[1]).contains(&o.mstar_msun) {
                why.push(format!("M* = {:.3e} Msun", o.mstar_msun));
            }
            let mv = crate::galaxies::absolute_mv(o.mstar_msun, ml);
            if !(sel.m_v[0]..=sel.m_v[1]).contains(&mv) {
                why.push(format!("M_V = {mv:.2}"));
            }
            if o.r_gc_kpc.is_finite()
                && (o.r_gc_kpc < sel.r_over_rvir[0] * r_lo
                    || o.r_gc_kpc > sel.r_over_rvir[1] * r_hi)
            {
                why.push(format!("r_gc = {:.1} kpc", o.r_gc_kpc));
            }
            (!why.is_empty()).then(|| format!("{} ({})", o.id, why.join(", ")))
        })
        .collect();
    if outside.is_empty() {
        return None;
    }
    Some(format!(
        "{} of the sample's {} objects lie outside [tests.selection] (stellar mass [{:e}, {:e}] \
         Msun, M_V [{}, {}], r_over_rvir [{}, {}] of R_vir = {}): {}; the tests \
         compare the sample with mock satellites of the selection, so match it to how the \
         sample was chosen",
        outside.len(),
        sample.objects.len(),
        sel.mstar_msun[0],
        sel.mstar_msun[1],
        sel.m_v[0],
        sel.m_v[1],
        sel.r_over_rvir[0],
        sel.r_over_rvir[1],
        if (r_hi - r_lo).abs() < 0.5 {
            format!("{r_lo:.0} kpc")
        } else {
            format!("{r_lo:.0}-{r_hi:.0} kpc")
        },
        outside.join("; ")
    ))
}

/// How far, in dex, `[tests.selection]`'s stellar-mass window may reach beyond the sample's own
/// range before `check` says so (this tool's choice: the infall times of satellites change
/// markedly over a decade in stellar mass, common practice rather than a published rule).
pub const SELECTION_REACH_DEX: f64 = 1.0;

/// A note when the selection's stellar-mass window reaches more than `SELECTION_REACH_DEX`
/// beyond the sample's range on either side: the all-of-N, fraction and delay tests draw mock
/// satellites from the whole window, so a window much wider than the sample compares the
/// sample with satellites of other masses, whose infall times differ (a sample of objects of
/// 1e4-3e4 Msun with the default window 5e3-1e7 draws mostly heavier ones). None: within reach,
/// or no object with a stellar mass.
pub fn selection_wider_than_sample(grid: &Grid, sample: &ObservedSample) -> Option<String> {
    let sel = &grid.config.file.tests.selection;
    let (lo, hi) = sample
        .objects
        .iter()
        .map(|o| o.mstar_msun)
        .filter(|m| m.is_finite() && *m > 0.0)
        .fold((f64::INFINITY, 0.0f64), |(a, b), m| (a.min(m), b.max(m)));
    if !(lo.is_finite() && hi > 0.0) {
        return None;
    }
    let below = (lo / sel.mstar_msun[0]).log10();
    let above = (sel.mstar_msun[1] / hi).log10();
    let mut reach = Vec::new();
    if below > SELECTION_REACH_DEX {
        reach.push(format!("{below:.1} dex below"));
    }
    if above > SELECTION_REACH_DEX {
        reach.push(format!("{above:.1} dex above"));
    }
    if reach.is_empty() {
        return None;
    }
    Some(format!(
        "[tests.selection] mstar_msun = [{:e}, {:e}] reaches {} the sample's stellar masses          ({lo:.3e}-{hi:.3e} Msun): the all-of-N, fraction and delay tests draw mock satellites          from the whole window, and satellites of other masses fell in at other times; narrow          the window to the sample's range unless the sample was chosen from such a window",
        sel.mstar_msun[0],
        sel.mstar_msun[1],
        reach.join(" and ")
    ))
}

/// The report's paragraph on the disc model the store's hosts were grown with, when it is not
/// the default (None at the defaults): the caveats quote numbers measured at the defaults, so
/// a store grown otherwise says so (the figures' label names the settings too).
fn disc_words(o: &crate::orbits::OrbitOptions) -> Option<String> {
    let d = crate::orbits::OrbitOptions::default();
    let same = o.stripping == d.stripping
        && o.disc_tide_ratio == d.disc_tide_ratio
        && o.disc_tide_loss_power == d.disc_tide_loss_power;
    if same {
        return None;
    }
    let what = if !o.stripping || o.disc_tide_ratio <= 0.0 {
        "no disc-tide model".to_string()
    } else if o.disc_tide_loss_power == 0.0 {
        "all or nothing: destroyed where the tide exceeds the threshold, nothing lost below it"
            .to_string()
    } else {
        format!(
            "below the threshold a pericentre strips (tide / threshold)^{} of the bound mass",
            o.disc_tide_loss_power
        )
    };
    Some(format!(
        "Disc: these hosts were grown with `orbits.disc_tide_ratio` = {} and \
         `orbits.disc_tide_loss_power` = {}{} ({what}), not the defaults ({} and {}); the \
         caveats below that quote measured numbers describe the defaults.",
        o.disc_tide_ratio,
        o.disc_tide_loss_power,
        if o.stripping {
            ""
        } else {
            " without stripping"
        },
        d.disc_tide_ratio,
        d.disc_tide_loss_power
    ))
}

/// The configuration stored in a run's store, and the run's observed sample if it can still
/// be found. Relative paths in the stored configuration are relative to the directory of the
/// configuration file the run started from; the store records that directory, and they are
/// resolved there first, then next to the store, then in the working directory. A sample
/// found anywhere but its original place is named in a note; one found nowhere is reported
/// and the tests that need it are skipped. With `want_sample` false (the caller has its own
/// sample) the stored one is not looked for.
pub fn stored_config(
    meta: &StoreMeta,
    store: &Path,
    want_sample: bool,
) -> Result<StoredConfig, AnalysisError> {
    let mut notes = Vec::new();
    let store_dir = store
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let recorded = Some(PathBuf::from(&meta.config_dir)).filter(|d| d.is_dir());
    let mut bases: Vec<PathBuf> = recorded.iter().cloned().collect();
    for d in [store_dir, Path::new(".")] {
        if !bases.iter().any(|b| b == d) {
            bases.push(d.to_path_buf());
        }
    }
    let mut table: toml::Table = meta.config_toml.parse().map_err(|e| {
        AnalysisError::Input(format!(
            "{}: the stored configuration is not valid TOML: {e}",
            store.display()
        ))
    })?;
    let stored_sample = table
        .get_mut("run")
        .and_then(|r| r.as_table_mut())
        .and_then(|r| r.remove("sample"))
        .and_then(|v| v.as_str().map(PathBuf::from));
    // a run given --out could be made from a configuration with `run.output = ""`, refused
    // since: its store is read as if the key were not there (a re-test writes no store of
    // its own)
    if let Some(r) = table.get_mut("run").and_then(|r| r.as_table_mut()) {
        if r.get("output").and_then(|v| v.as_str()) == Some("") {
            r.remove("output");
        }
    }
    notes.extend(read_as_written(&mut table));
    let text = table.to_string();
    let mut first_err = None;
    let mut cfg = None;
    for base in &bases {
        match RunConfig::parse_str(&text, Some(base)) {
            Ok(c) => {
                cfg = Some(c);
                break;
            }
            Err(e) => {
                first_err.get_or_insert(e);
            }
        }
    }
    let mut cfg = match (cfg, first_err) {
        (Some(c), _) => c,
        (None, Some(e)) => return Err(AnalysisError::Input(e.to_string())),
        (None, None) => unreachable!("there is always a base to try"),
    };
    // the orbit options as the run resolved them (a later version's defaults may differ: a
    // review found figures of an older store labelled with today's disc_tide_ratio)
    // (keys added since take the values that reproduce that version's behaviour)
    match crate::orbits::OrbitOptions::from_recorded(&meta.orbit_options) {
        Ok(o) if !meta.orbit_options.trim().is_empty() => cfg.file.orbits = o,
        _ => {
            // a store without recorded options predates every key added since
            cfg.file.orbits = cfg.file.orbits.with_later_keys_as_before();
            let set = table
                .get("orbits")
                .and_then(|o| o.as_table())
                .is_some_and(|o| o.contains_key("disc_tide_ratio"));
            if !set {
                notes.push(format!(
                    "{} does not record its orbit options (written before they were): the \
                     keys its configuration leaves out are read at this version's defaults \
                     (those added since, such as orbits.disc_tide_loss_power, as the code was \
                     before them), which label the figures (orbits.disc_tide_ratio = {}; it was 1.6 before \
                     2026-12-04, then 1.2, then 0.8, and 1.1 with gradual losses since a \
                     later change of 2026-12-05)",
                    store.display(),
                    cfg.file.orbits.disc_tide_ratio
                ));
            }
        }
    }
    // stores written before stars were stripped by tides keep every star their galaxies
    // formed, whatever this version's default
    if crate::io::store::predates_stellar_stripping(store) {
        cfg.file.galaxies.strip_stars = false;
        notes.push(format!(
            "{} was written before stars were stripped by tides (2026-12-04): its galaxies \
             keep every star they formed (read as galaxies.strip_stars = false; its \
             mstar_msun is also the mass they formed)",
            store.display()
        ));
    }
    let sample = stored_sample.filter(|_| want_sample).and_then(|rel| {
        let places: Vec<PathBuf> = if rel.is_relative() {
            bases.iter().map(|b| b.join(&rel)).collect()
        } else {
            vec![rel.clone()]
        };
        match places.iter().position(|p| p.is_file()) {
            Some(k) => {
                if k > 0 || recorded.is_none() {
                    notes.push(format!(
                        "using the observed sample {} (the run's `run.sample = {}`; the \
                         run's configuration directory is {})",
                        places[k].display(),
                        rel.display(),
                        match (&recorded, meta.config_dir.is_empty()) {
                            (Some(d), _) => d.display().to_string(),
                            (None, true) => "not recorded in this store".to_string(),
                            (None, false) => format!("{}, which no longer exists", meta.config_dir),
                        }
                    ));
                }
                Some(places[k].clone())
            }
            None => {
                notes.push(format!(
                    "the run's observed sample ({}) is not at {}; the tests that need a \
                     sample are skipped, and all-of-N uses tests.n_draw or else N = 11 instead \
                     of the sample's size (give the sample with --sample)",
                    rel.display(),
                    places
                        .iter()
                        .map(|p| p.display().to_string())
                        .collect::<Vec<_>>()
                        .join(" or ")
                ));
                None
            }
        }
    });
    Ok(StoredConfig {
        config: cfg,
        sample,
        notes,
    })
}

/// A stored configuration as the run that wrote it read it, in today's forms: a store from
/// before 2026-12-04 may hold forms refused since (review of that day), and its hosts and
/// analyses were made with what the older version took from them, so they are rewritten to
/// that rather than refused (which would leave the store impossible to re-test or plot):
/// a `[lo, hi]` key with more values keeps its first two (the rest were dropped then); a
/// redshift or delay grid is sorted and its repeats dropped (only the order of the report's
/// rows depended on it); an empty `[tests.preprocessing]` (every halo counted) becomes the
/// lowest threshold allowed, 1e6 Msun (the same unless the trees were resolved below it).
/// Each rewrite is a note.
fn read_as_written(table: &mut toml::Table) -> Vec<String> {
    let mut notes = Vec::new();
    fn at<'a>(t: &'a mut toml::Table, path: &[&str]) -> Option<&'a mut toml::Value> {
        let (last, head) = path.split_last()?;
        let mut cur = t;
        for k in head {
            cur = cur.get_mut(*k)?.as_table_mut()?;
        }
        cur.get_mut(*last)
    }
    for path in [
        &["host", "mass_log_uniform_msun"][..],
        &["tests", "n_range"],
        &["tests", "selection", "m_peak_msun"],
        &["tests", "selection", "mstar_msun"],
        &["tests", "selection", "m_v"],
        &["tests", "selection", "r_over_rvir"],
        &["tests", "backsplash", "m_peak_msun"],
    ] {
        if let Some(toml::Value::Array(a)) = at(table, path) {
            if a.len() > 2 {
                notes.push(format!(
                    "the stored configuration's {} has {} values; the run used the first two, \
                     and so does this",
                    path.join("."),
                    a.len()
                ));
                a.truncate(2);
            }
        }
    }
    for path in [&["tests", "z_grid"][..], &["tests", "delay_grid_gyr"]] {
        if let Some(toml::Value::Array(a)) = at(table, path) {
            let mut v: Vec<f64> = a
                .iter()
                .filter_map(|x| x.as_float().or(x.as_integer().map(|i| i as f64)))
                .collect();
            if v.len() == a.len() && v.windows(2).any(|w| w[0] >= w[1]) {
                v.sort_by(f64::total_cmp);
                v.dedup();
                notes.push(format!(
                    "the stored configuration's {} is not increasing; it is read sorted, \
                     without repeats",
                    path.join(".")
                ));
                *a = v.into_iter().map(toml::Value::Float).collect();
            }
        }
    }
    // keys refused since 2026-12-04 because they changed nothing: the run ignored them
    let mut cosmologies: Vec<&mut toml::Table> = match table.get_mut("cosmology") {
        Some(toml::Value::Table(t)) => vec![t],
        Some(toml::Value::Array(a)) => a.iter_mut().filter_map(|v| v.as_table_mut()).collect(),
        _ => Vec::new(),
    };
    for c in cosmologies.iter_mut() {
        let is = |c: &toml::Table, key: &str, parse: &dyn Fn(&str) -> bool| {
            c.get(key).and_then(|v| v.as_str()).is_some_and(parse)
        };
        let sharp = is(c, "filter", &|f| {
            crate::linear::Filter::parse(f) == Some(crate::linear::Filter::SharpK)
        });
        let table_transfer = is(c, "transfer", &|t| {
            crate::linear::TransferKind::parse(t) == Some(crate::linear::TransferKind::Table)
        });
        for (key, used) in [
            ("sharp_k_c", sharp),
            ("transfer_table_k_unit", table_transfer),
        ] {
            if !used && c.remove(key).is_some() {
                notes.push(format!(
                    "the stored configuration sets cosmology {key}, which the run did not use \
                     (it is refused now); it is read without it"
                ));
            }
        }
        // cells are labelled with each choice's canonical name since 2026-12-04: an older
        // store's cell may have another name now (review)
        if !c.contains_key("label") {
            for key in ["filter", "transfer", "delta_c"] {
                let Some(raw) = c.get(key).and_then(|v| v.as_str()) else {
                    continue;
                };
                let canon = crate::config::cosmology::canonical_choice(key, raw);
                if let Some(canon) = canon.filter(|k| k != raw) {
                    notes.push(format!(
                        "the stored configuration spells cosmology {key} \"{raw}\"; its cell \
                         is now labelled with \"{canon}\" (as `--cell` names it)"
                    ));
                }
            }
        }
    }
    if let Some(toml::Value::Table(t)) = at(table, &["tests", "preprocessing"]) {
        if t.is_empty() {
            notes.push(
                "the stored configuration's [tests.preprocessing] is empty (the run counted a \
                 halo of any mass); it is read as halo_mass_msun = 1e6, the lowest threshold \
                 allowed"
                    .to_string(),
            );
            t.insert("halo_mass_msun".into(), toml::Value::Float(1e6));
        }
    }
    notes
}

/// What `infall --config FILE` takes from FILE; the other tables of a whole configuration
/// are accepted and ignored (a table name that is not one of them is an error).
#[derive(serde::Deserialize)]
#[serde(deny_unknown_fields)]
#[allow(dead_code)]
struct RetestTables {
    tests: Option<crate::stats::battery::TestOptions>,
    galaxies: Option<crate::galaxies::GalaxyOptions>,
    /// Read as a whole run table, so that a misspelled key is refused as in `run` (a review
    /// found `sampel = ...` ignored and the store's own sample used); only `sample` and
    /// `sample_columns` are taken, the other keys are the run's and stay the store's.
    run: Option<crate::config::RunSection>,
    cosmology: Option<toml::Value>,
    host: Option<toml::Value>,
    trees: Option<toml::Value>,
    orbits: Option<toml::Value>,
    survey: Option<toml::Value>,
}

/// A stored configuration with re-test settings put in, and the sample FILE names.
pub struct Retest {
    pub config: RunConfig,
    /// FILE's `run.sample` (relative to FILE), when `sample_given` is false.
    pub sample: Option<PathBuf>,
    /// FILE's `run.sample_columns` (empty if none): the mapping of FILE's sample.
    pub sample_columns: std::collections::BTreeMap<String, String>,
}

/// Put the re-test settings of `text`, the text of a file `file` (`infall --config`, with
/// `--set`'s keys written in; `file` names it in messages and resolves its relative
/// `run.sample`), into a run's stored configuration `cfg`: the keys of its [tests] and
/// [galaxies] tables replace the stored ones key by key (a partial [tests.selection] changes
/// only its keys), and its `run.sample` (unless the caller has a sample of its own,
/// `sample_given`) and `run.sample_columns` are returned. Everything else that made the store
/// stays the run's. Every problem is reported at once.
pub fn retest_config(
    mut cfg: RunConfig,
    text: &str,
    file: &Path,
    sample_given: bool,
) -> Result<Retest, AnalysisError> {
    use crate::config::ConfigProblems;
    use crate::error::InvalidValue;
    let p = file;
    let (retest, mut problems) =
        crate::config::parse_collecting::<RetestTables>(text, &p.display().to_string());
    let Some(retest) = retest else {
        return Err(AnalysisError::Input(ConfigProblems(problems).to_string()));
    };
    let given: toml::Table = toml::from_str(text).unwrap_or_default();
    let read_problems = !problems.is_empty();
    // FILE's keys of `table` over the stored table; a line the reading above set aside (an
    // unknown key, a wrong type) is already named in dotted form, `tests.drawz`, and
    // reported with every other problem, so the stored table stays
    fn overlay_table<T>(
        stored: T,
        given: &toml::Table,
        table: &str,
        read_problems: bool,
        file: &Path,
    ) -> Result<T, AnalysisError>
    where
        T: serde::Serialize + serde::de::DeserializeOwned,
    {
        match overlay(&stored, given.get(table)) {
            Ok(t) => Ok(t),
            Err(_) if read_problems => Ok(stored),
            Err(e) => Err(AnalysisError::Input(format!(
                "{}: [{table}]: {e}",
                file.display()
            ))),
        }
    }
    if retest.tests.is_some() {
        // the two pre-processing thresholds exclude each other, so FILE's [tests.preprocessing]
        // replaces the stored table whole (merged key by key, a stellar-mass threshold met the
        // stored halo-mass default and was refused, as a review found)
        let mut stored = cfg.file.tests.clone();
        if given
            .get("tests")
            .and_then(|t| t.get("preprocessing"))
            .is_some()
        {
            stored.preprocessing = crate::stats::clocks::PreprocessingThreshold {
                halo_mass_msun: None,
                stellar_mass_msun: None,
            };
        }
        cfg.file.tests = overlay_table(stored, &given, "tests", read_problems, p)?;
    }
    if retest.galaxies.is_some() {
        let stored = cfg.file.galaxies;
        cfg.file.galaxies = overlay_table(stored, &given, "galaxies", read_problems, p)?;
        // the store's galaxies were painted with the stored keys: a changed key would convert
        // the sample's magnitudes or a stellar-mass threshold with a model the mock galaxies do
        // not follow, so it is refused (a whole configuration with the same keys is fine)
        let (old, new) = (
            toml::Table::try_from(stored).unwrap_or_default(),
            toml::Table::try_from(cfg.file.galaxies).unwrap_or_default(),
        );
        for (key, value) in &new {
            if old.get(key) != Some(value) {
                problems.push(InvalidValue::new(
                    format!("galaxies.{key}"),
                    value,
                    format!(
                        "differs from the store's {} (in {}): the store's galaxies were painted \
                         with it, and `infall` does not repaint them; run `retinue run` with the \
                         new value instead",
                        old.get(key)
                            .map_or("(unset)".to_string(), |v| v.to_string()),
                        p.display()
                    ),
                ));
            }
        }
    }
    problems.extend(cfg.file.tests.problems("tests."));
    problems.extend(cfg.file.galaxies.problems("galaxies."));
    let (file_sample, file_columns) = match retest.run {
        Some(r) => (r.sample, Some(r.sample_columns)),
        None => (None, None),
    };
    let columns = file_columns.unwrap_or_default();
    for (name, col, why) in crate::stats::sample::column_map_problems(&columns) {
        problems.push(InvalidValue::new(
            format!("run.sample_columns.{name}"),
            format!("{col:?}"),
            format!("{why} (in {})", p.display()),
        ));
    }
    // (a sample given by the caller replaces FILE's: FILE's need not exist then)
    let mut sample = None;
    if let Some(sp) = file_sample.filter(|_| !sample_given) {
        let sp = if sp.is_relative() {
            p.parent().unwrap_or(Path::new(".")).join(sp)
        } else {
            sp
        };
        if !sp.is_file() {
            problems.push(InvalidValue::new(
                "run.sample",
                sp.display(),
                format!("file not found (named in {})", p.display()),
            ));
        }
        sample = Some(sp);
    }
    if !problems.is_empty() {
        return Err(AnalysisError::Input(ConfigProblems(problems).to_string()));
    }
    Ok(Retest {
        config: cfg,
        sample,
        sample_columns: columns,
    })
}
