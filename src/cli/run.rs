//! `retinue run | demo | check | merge | infall`.

use std::collections::BTreeMap;
use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::time::Instant;

use clap::Args;

use super::CliError;
use retinue::analysis::{self, report_dir, resolution_warning, AnalysisError, Target};
use retinue::config::{apply_overrides, ConfigProblems, RunConfig};
use retinue::error::InvalidValue;
use retinue::io::inputs::InputFiles;
use retinue::io::store::{read_meta, StoreMeta};
use retinue::run::{merge_stores, synthesize_to_store, Grid, RunError, Shard};
use retinue::stats::{AnalysisResults, ObservedSample, SampleOptions};

const DEMO_CONFIG: &str = include_str!("../../configs/demo.toml");
const DEMO_SAMPLE: &str = include_str!("../../demo-data/sample.csv");
const DEMO_BRIGHT_SAMPLE: &str = include_str!("../../demo-data/bright-sample.csv");
const DEMO_BRIGHT_TESTS: &str = include_str!("../../demo-data/bright-tests.toml");

#[derive(Debug, Args)]
#[command(
    after_help = "Examples:\n  retinue run configs/milky-way.toml\n  retinue run sweep.toml --threads 2 --out sweep.h5\n  retinue run sweep.toml --shard 1/4 --out shard-1.h5     (then: retinue merge shard-*.h5 --out sweep.h5)\n  retinue run sweep.toml --resume                         (continue an interrupted run)"
)]
pub struct RunArgs {
    /// Run configuration (TOML).
    pub config: PathBuf,
    /// Output store (default: [run] output).
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Worker threads, 0 to 1024 (default: [run] threads; 0 = all cores).
    #[arg(long, value_parser = parse_threads)]
    pub threads: Option<usize>,
    /// Run only shard K of N (1-based, e.g. 2/4): a contiguous block of hosts.
    #[arg(long, value_name = "K/N")]
    pub shard: Option<String>,
    /// Continue an interrupted run (its finished parts are kept).
    #[arg(long)]
    pub resume: bool,
    /// Replace an existing file at the output (a store of an earlier run, or any other file),
    /// and write the report into a NAME-report directory that holds files retinue did not
    /// write. The reports of a store that is replaced (NAME-report/, and the
    /// NAME-ANALYSIS-report/ directories of `retinue infall`) are removed just before the new
    /// store takes its place.
    #[arg(long)]
    pub overwrite: bool,
    /// Change one key of the configuration without editing it, e.g. `--set
    /// orbits.disc_tide_ratio=0.8` (repeat for several; a word such as `erf` is read as a
    /// string). The store keeps the configuration with the change written in; give the same
    /// --set again to --resume or to run another shard.
    #[arg(long = "set", value_name = "TABLE.KEY=VALUE")]
    pub sets: Vec<String>,
}

#[derive(Debug, Args)]
pub struct DemoArgs {
    /// Directory for the demo's store, report and inputs.
    #[arg(long, default_value = "retinue-demo")]
    pub out: PathBuf,
    /// Worker threads, 0 to 1024 (0 = all cores).
    #[arg(long, default_value_t = 0, value_parser = parse_threads)]
    pub threads: usize,
    /// Replace files in the directory that the demo did not write (e.g. your own sample.csv,
    /// a store named demo.h5 of another configuration or holding your own analyses, files in
    /// demo-report/). Without it the demo replaces only an earlier demo's files.
    #[arg(long)]
    pub overwrite: bool,
}

#[derive(Debug, Args)]
pub struct CheckArgs {
    /// Run configuration (TOML).
    pub config: PathBuf,
    /// Change one key of the configuration, as `retinue run --set` (repeat for several).
    #[arg(long = "set", value_name = "TABLE.KEY=VALUE")]
    pub sets: Vec<String>,
}

#[derive(Debug, Args)]
pub struct MergeArgs {
    /// Shard stores to join (any order; each shard of the split exactly once).
    #[arg(required = true)]
    pub shards: Vec<PathBuf>,
    /// The joined store (written under a temporary name, renamed when complete).
    #[arg(long)]
    pub out: PathBuf,
    /// Replace an existing file at --out (the reports of a store it replaces are removed,
    /// as with `run --overwrite`).
    #[arg(long)]
    pub overwrite: bool,
}

#[derive(Debug, Args)]
#[command(
    after_help = "Examples:\n  retinue infall run.h5 --sample my-satellites.csv --config tests.toml\n  retinue infall run.h5 --sample export.csv --columns id=name,mstar_msun=stellar_mass,r_gc_kpc=dist\n\nRe-runs the tests on an existing store with the [tests] (and [galaxies]) tables of --config\n(default: the configuration stored in the file)."
)]
pub struct InfallArgs {
    /// A run store.
    pub store: PathBuf,
    /// Observed sample (CSV or TOML); default: the one named by --config's run.sample, else
    /// the run's own (looked for in the run's configuration directory, next to the store,
    /// then here).
    #[arg(long)]
    pub sample: Option<PathBuf>,
    /// Read the sample's CSV columns under the sample's names: NAME=COLUMN pairs, e.g.
    /// mstar_msun=stellar_mass,r_gc_kpc=dist. Replaces run.sample_columns; a sample given with
    /// --sample is read with these only.
    #[arg(long, value_name = "NAME=COLUMN,...", value_parser = parse_columns)]
    pub columns: Option<BTreeMap<String, String>>,
    /// A file with a [tests] table (or a whole configuration): its [tests], [galaxies],
    /// run.sample and run.sample_columns replace the stored ones; everything else stays the
    /// run's. (Galaxies are painted when a store is written: [galaxies] keys that differ from
    /// the store's are refused; the table converts a
    /// stellar-mass pre-processing threshold and a sample's m_v.)
    #[arg(long)]
    pub config: Option<PathBuf>,
    /// Test only some grid cells: `cosmology=LABEL`, `mass=MASS`, `env=LABEL` or several,
    /// comma-separated;
    /// repeat for several (default: every cell).
    #[arg(long = "cell")]
    pub cells: Vec<String>,
    /// Name of this analysis in the store (`/analysis/NAME`; default: the sample file's name
    /// and the time, e.g. `sample-20261203-101500`).
    #[arg(long)]
    pub name: Option<String>,
    /// Report directory (default: STORE-NAME-report next to the store). A directory that
    /// holds files is written into only when it is a report directory retinue wrote (it has
    /// a .retinue-report file), or with --overwrite.
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Replace an analysis of the same name, and write the report into a directory that
    /// holds files retinue did not write (replacing those of a report's names).
    #[arg(long)]
    pub overwrite: bool,
    /// Change one test setting without a file, e.g. `--set "tests.selection.r_over_rvir=[0,
    /// 0.5]"` (repeat for several; on top of --config's keys when both are given). Only
    /// `tests.` keys: the rest made the store (change those with `retinue run --set`).
    #[arg(long = "set", value_name = "tests.KEY=VALUE")]
    pub sets: Vec<String>,
}

/// `--columns NAME=COLUMN,...`
fn parse_columns(s: &str) -> Result<BTreeMap<String, String>, String> {
    retinue::stats::sample::parse_column_map(s)
}

/// Read an observed sample, its notes (columns ignored) on stderr.
fn read_sample(path: &Path, opts: &SampleOptions) -> Result<ObservedSample, CliError> {
    let r = ObservedSample::read(path, opts).map_err(usage)?;
    for n in &r.notes {
        eprintln!("note: {n}");
    }
    Ok(r.sample)
}

/// The sample a stored run is tested or drawn with. A sample given with --sample is read
/// with --columns alone (a configuration's run.sample_columns describe its own run.sample);
/// the run's sample (or --config's) with --columns if given, else with `run_columns`. Υ and
/// the Sun's position come from `cfg`.
fn retest_sample(
    cfg: &RunConfig,
    cli_sample: Option<&PathBuf>,
    cli_columns: Option<&BTreeMap<String, String>>,
    run_sample: Option<PathBuf>,
    run_columns: BTreeMap<String, String>,
) -> Result<Option<(ObservedSample, PathBuf)>, CliError> {
    let base = SampleOptions::new(&cfg.file.galaxies, &cfg.file.survey);
    let cli =
        |b: SampleOptions| b.with_columns(cli_columns.cloned().unwrap_or_default(), "--columns");
    let (path, opts) = match (cli_sample, run_sample) {
        (Some(p), _) => (p.clone(), cli(base)),
        (None, Some(p)) if cli_columns.is_some() => (p, cli(base)),
        (None, Some(p)) => (p, base.with_columns(run_columns, "run.sample_columns")),
        (None, None) => {
            if cli_columns.is_some() {
                return Err(usage(
                    "--columns is given but there is no observed sample to read (give one with --sample)",
                ));
            }
            return Ok(None);
        }
    };
    read_sample(&path, &opts).map(|s| Some((s, path)))
}

fn usage(e: impl std::fmt::Display) -> CliError {
    CliError::Usage(e.to_string())
}

fn run_err(e: RunError) -> CliError {
    match e {
        RunError::Invalid(_) | RunError::Input(_) => CliError::Usage(e.to_string()),
        other => CliError::Failed(anyhow::anyhow!(other.to_string())),
    }
}

fn parse_shard(s: &str) -> Result<Shard, CliError> {
    let bad = || {
        usage(format!(
            "--shard = {s} is not allowed: expected K/N with 1 <= K <= N, e.g. 2/4"
        ))
    };
    let (k, n) = s.split_once('/').ok_or_else(bad)?;
    let k: u32 = k.trim().parse().map_err(|_| bad())?;
    let n: u32 = n.trim().parse().map_err(|_| bad())?;
    if !(n >= 1 && k >= 1 && k <= n) {
        return Err(bad());
    }
    Ok(Shard {
        index: k - 1,
        count: n,
    })
}

/// The configuration at `path` with the `--set` overrides written in, and that text.
fn load(path: &Path, sets: &[String]) -> Result<(RunConfig, String), CliError> {
    let text = std::fs::read_to_string(path).map_err(|e| {
        usage(format!(
            "config file {}: cannot be read: {e}",
            path.display()
        ))
    })?;
    let text = apply_overrides(&text, sets).map_err(usage)?;
    let source = if sets.is_empty() {
        path.display().to_string()
    } else {
        format!("{} with --set {}", path.display(), sets.join(" --set "))
    };
    let cfg = RunConfig::parse_named(&text, path.parent(), &source).map_err(usage)?;
    Ok((cfg, text))
}

/// Progress on stderr: a bar on a terminal, plain lines otherwise.
struct Reporter {
    bar: Option<indicatif::ProgressBar>,
    start: Instant,
    last: std::sync::Mutex<f64>,
    /// Hosts already done when the run started (a resumed run): not counted in the rate.
    base: std::sync::OnceLock<u64>,
}

impl Reporter {
    fn new(total: u64) -> Self {
        let bar = if std::io::stderr().is_terminal() {
            let b = indicatif::ProgressBar::new(total);
            b.set_style(
                indicatif::ProgressStyle::with_template(
                    "{bar:40} {pos}/{len} hosts  {per_sec}  ETA {eta}",
                )
                .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
            );
            Some(b)
        } else {
            None
        };
        Self {
            bar,
            start: Instant::now(),
            last: std::sync::Mutex::new(-1e9),
            base: std::sync::OnceLock::new(),
        }
    }

    fn update(&self, done: u64, total: u64) {
        let mut first = false;
        let base = *self.base.get_or_init(|| {
            first = true;
            done
        });
        if let Some(b) = &self.bar {
            b.set_position(done);
            if first {
                b.reset_eta();
            }
            return;
        }
        if done == base && done < total {
            // nothing synthesised yet by this process: no rate to show
            return;
        }
        let el = self.start.elapsed().as_secs_f64();
        let mut last = self.last.lock().unwrap();
        if done == total || el - *last >= 10.0 {
            *last = el;
            let rate = done.saturating_sub(base) as f64 / el.max(1e-9);
            let eta = (total - done) as f64 / rate.max(1e-9);
            eprintln!("hosts {done}/{total}  {rate:.2} hosts/s  ETA {eta:.0} s");
        }
    }

    fn finish(&self) {
        if let Some(b) = &self.bar {
            b.finish_and_clear();
        }
    }
}

/// `--threads`: the range of `[run] threads`, [0, 1024] (0 = all cores).
pub(crate) fn parse_threads(s: &str) -> Result<usize, String> {
    let n: usize = s
        .parse()
        .map_err(|_| format!("`{s}` is not a whole number; allowed [0, 1024] (0 = all cores)"))?;
    if n > 1024 {
        return Err(format!(
            "{n} is more than 1024; allowed [0, 1024] (0 = all cores)"
        ));
    }
    Ok(n)
}

fn pool(threads: usize) -> Result<rayon::ThreadPool, CliError> {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .map_err(|e| CliError::Failed(anyhow::anyhow!("thread pool: {e}")))
}

/// The whole job: synthesise, store, test, report. Returns the store path.
/// What `execute` may do with a store already at its output.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Existing {
    /// Keep it: a store of another configuration is an error (with `--resume`), and a
    /// complete one of this configuration gets only its tests and report again.
    Keep,
    /// Replace a store of another configuration (`--overwrite`; with `--resume` the run's
    /// parts are used, so a run killed after `--overwrite` can be resumed).
    ReplaceOther,
    /// Remove it once the store's lock is held (the demo always synthesises afresh).
    Remove,
}

#[allow(clippy::too_many_arguments)]
fn execute(
    cfg: RunConfig,
    text: &str,
    out: PathBuf,
    threads: usize,
    shard: Shard,
    resume: bool,
    existing: Existing,
    sample_override: Option<PathBuf>,
    tests_note: Option<String>,
) -> Result<PathBuf, CliError> {
    // a sample given here is read without the configuration's column mapping (which
    // describes run.sample)
    let sample_path = sample_override.clone().or(cfg.sample_path());
    let sample = match (sample_override, cfg.sample_path()) {
        (Some(p), _) => Some(read_sample(
            &p,
            &SampleOptions::new(&cfg.file.galaxies, &cfg.file.survey),
        )?),
        (None, Some(p)) => Some(read_sample(&p, &cfg.sample_options())?),
        (None, None) => None,
    };
    let grid = Grid::new(cfg).map_err(run_err)?;
    if let Some(w) = resolution_warning(&grid) {
        eprintln!("warning: {w}");
    }
    if let Some(w) = grid.config.size_warning() {
        eprintln!("warning: {w}");
    }
    // one writer per store: held through synthesis, tests and report
    let _lock = writer_lock(&out, "retinue run")?;
    if existing == Existing::Remove && out.exists() {
        std::fs::remove_file(&out)
            .map_err(|e| CliError::Failed(anyhow::anyhow!("{}: {e}", out.display())))?;
    }
    let (lo, hi) = shard.range(grid.n_hosts());
    eprintln!(
        "retinue run: {} = {} hosts{}; writing {}",
        grid_shape(&grid.config),
        grid.n_hosts(),
        if shard.count > 1 {
            format!(
                " (shard {}/{}: hosts {lo}..{hi})",
                shard.index + 1,
                shard.count
            )
        } else {
            String::new()
        },
        out.display()
    );
    let pool = pool(threads)?;
    // --resume on a store that was published but whose tests or report were interrupted:
    // the hosts are all there, so only the tests and the report are run again
    // (a store of this configuration whose transfer tables were other files is another
    // run's too)
    let other_store = |meta: &retinue::io::store::StoreMeta| -> Option<String> {
        if meta.config_toml != text || meta.shard != (shard.index, shard.count) {
            // a store grown with --set is this run's only with the same overrides
            let mark = retinue::config::overrides::SET_MARK;
            let set = if meta.config_toml.contains(mark) {
                format!(
                    "; its configuration has keys set on the command line, marked `# {mark}` \
                     in the store's `config` attribute: give the same --set again"
                )
            } else {
                String::new()
            };
            return Some(format!(
                "a store of another configuration or shard (shard {}/{}{set})",
                meta.shard.0 + 1,
                meta.shard.1
            ));
        }
        let recorded = InputFiles::parse(&meta.input_files);
        // a store from before the hashes were recorded has nothing to compare: it is taken
        // as this run's, with a note (below), as `infall` and `plot` take it (review: it was
        // refused as grown from other files, though the file was the same)
        if recorded.is_empty() {
            return None;
        }
        let diffs = InputFiles::differences(&recorded, &grid.input_files(), "its run");
        (!diffs.is_empty()).then(|| {
            format!(
                "a store of this configuration grown from other input files ({})",
                diffs.join("; ")
            )
        })
    };
    let replace_other = existing == Existing::ReplaceOther
        && retinue::io::store::check_complete(&out).is_ok_and(|m| other_store(&m).is_some());
    if resume && !replace_other && retinue::io::store::is_run_store(&out) {
        let meta = retinue::io::store::check_complete(&out)
            .map_err(|e| usage(format!("--resume: {e}")))?;
        if let Some(why) = other_store(&meta) {
            return Err(usage(format!(
                "--resume: {} is {why}; give another --out, or add --overwrite to replace it",
                out.display(),
            )));
        }
        // (the same note as `infall` and `plot` give for a store without hashes)
        if let Some(n) = analysis::check_input_files(&meta, &out, &grid).map_err(analysis_err)? {
            eprintln!("note: {n}");
        }
        eprintln!(
            "{} already holds all {} hosts of this run: running only the tests and the report",
            out.display(),
            hi - lo
        );
        if shard.count > 1 {
            return Ok(out);
        }
        if let Some(why) = analysis::tests_unsupported(&grid) {
            eprintln!("note: {why}");
            return Ok(out);
        }
        if let Some(n) = &tests_note {
            retinue::io::set_interrupt_note(n.clone());
        }
        pool.install(|| {
            analyse(
                &grid,
                &out,
                sample.as_ref(),
                sample_path.as_deref(),
                None,
                &Target::of_run(&out),
            )
        })?;
        return Ok(out);
    }
    let t0 = Instant::now();
    let rep = Reporter::new(hi - lo);
    let path = pool
        .install(|| synthesize_to_store(&grid, text, &out, shard, resume, &|d, t| rep.update(d, t)))
        .map_err(run_err)?;
    rep.finish();
    let el = t0.elapsed().as_secs_f64();
    // a resumed run counts only the hosts it synthesised itself
    let before = rep.base.get().copied().unwrap_or(0);
    let fresh = (hi - lo) - before;
    eprintln!(
        "synthesised {fresh} hosts in {el:.1} s ({:.2} hosts/s){}",
        fresh as f64 / el.max(1e-9),
        if before > 0 {
            format!("; {before} were done by the interrupted run")
        } else {
            String::new()
        }
    );
    if shard.count > 1 {
        eprintln!("shard written to {}; when every shard is done: retinue merge <shards...> --out FILE, then retinue infall FILE", path.display());
        return Ok(path);
    }
    if let Some(why) = analysis::tests_unsupported(&grid) {
        eprintln!("note: {why}");
        println!("store:   {}", path.display());
        return Ok(path);
    }
    // interrupted from here on, the store is complete and only the tests are lost (a
    // walkthrough was told its hosts were kept in a parts directory that no longer existed)
    if let Some(n) = &tests_note {
        retinue::io::set_interrupt_note(n.clone());
    }
    pool.install(|| {
        analyse(
            &grid,
            &path,
            sample.as_ref(),
            sample_path.as_deref(),
            None,
            &Target::of_run(&path),
        )
    })?;
    Ok(path)
}

fn analysis_err(e: AnalysisError) -> CliError {
    match e {
        AnalysisError::Input(m) => CliError::Usage(m),
        AnalysisError::Failed(m) => CliError::Failed(anyhow::anyhow!(m)),
    }
}

/// The run's stored configuration and sample (`retinue::analysis::stored_config`), its notes
/// printed.
fn stored_config(
    meta: &StoreMeta,
    store: &Path,
    want_sample: bool,
) -> Result<(RunConfig, Option<PathBuf>), CliError> {
    let s = analysis::stored_config(meta, store, want_sample).map_err(analysis_err)?;
    for n in &s.notes {
        eprintln!("note: {n}");
    }
    Ok((s.config, s.sample))
}

/// Run an analysis (`retinue::analysis::analyse`) and print where it went and its headline.
fn analyse(
    grid: &Grid,
    store: &Path,
    sample: Option<&ObservedSample>,
    sample_path: Option<&Path>,
    cells: Option<&[(u16, u16)]>,
    target: &Target,
) -> Result<AnalysisResults, CliError> {
    let t0 = Instant::now();
    let out =
        analysis::analyse(grid, store, sample, sample_path, cells, target).map_err(analysis_err)?;
    for n in &out.notes {
        eprintln!("note: {n}");
    }
    eprintln!("tests done in {:.1} s", t0.elapsed().as_secs_f64());
    println!("store:   {}", store.display());
    println!("report:  {}", out.report_dir.join("report.md").display());
    println!(
        "tables:  {}",
        out.files
            .iter()
            .filter(|p| p.extension().map(|e| e == "csv").unwrap_or(false))
            .map(|p| p.file_name().unwrap().to_string_lossy().into_owned())
            .collect::<Vec<_>>()
            .join(", ")
    );
    println!(
        "figures: {}",
        retinue::report::figures::listing(&out.figures)
    );
    headline(&out.results, &grid.config.file.tests);
    Ok(out.results)
}

fn headline(res: &AnalysisResults, o: &retinue::stats::TestOptions) {
    println!();
    println!(
        "P(all {} fell in before z), mean over hosts [bootstrap 16-84%]",
        res.n_draw
    );
    // the cells first, so that the columns are as wide as their widest cell ("0 (every one
    // of 144 hosts)" ran into the next column)
    let rows: Vec<(&str, Vec<String>)> = res
        .all_of_n_mc
        .iter()
        .map(|(clock, c)| {
            let cells = [1.0, 2.0, 3.0]
                .iter()
                .map(|&z| {
                    c.x.iter()
                        .position(|&x| (x - z).abs() < 1e-9)
                        .map(|k| retinue::report::mean_and_interval(&c.spread[k], 3))
                        .unwrap_or_else(|| "-".into())
                })
                .collect();
            (clock.name(), cells)
        })
        .collect();
    let w = rows
        .iter()
        .flat_map(|r| r.1.iter().map(|c| c.chars().count()))
        .fold(22, usize::max);
    println!(
        "{:<20} {:>w$} {:>w$} {:>w$}",
        "clock", "z = 1", "z = 2", "z = 3"
    );
    for (name, c) in &rows {
        println!("{name:<20} {:>w$} {:>w$} {:>w$}", c[0], c[1], c[2]);
    }
    for (clock, curve, lim) in &res.quench {
        let tested = curve.spread.iter().any(|s| s.hosts > 0);
        let end = curve.x.last().copied().unwrap_or(f64::NAN);
        let gyr = |t: f64| {
            if t.is_nan() {
                "none".to_string()
            } else {
                format!("{t:.2}")
            }
        };
        let range = if lim.boot84.is_nan() {
            " (none in most bootstrap resamples of the hosts either)".to_string()
        } else {
            format!(
                " (bootstrap over hosts 16–84%: {}–{} Gyr)",
                gyr(lim.boot16),
                gyr(lim.boot84)
            )
        };
        println!(
            "largest quenching delay allowed ({}): {}",
            clock.name(),
            if !tested {
                "not tested (no host has as many candidates as the sample has objects)".into()
            } else if lim.tau.is_nan() {
                format!("none{range}")
            } else if (lim.tau - end).abs() < 1e-9 {
                format!(
                    "at least {:.2} Gyr (the end of the delay grid){range}",
                    lim.tau
                )
            } else {
                format!("{:.2} Gyr{range}", lim.tau)
            }
        );
    }
    let lines = retinue::report::conclusion_lines(res, o);
    if !lines.is_empty() {
        if res.dependence.len() > 1 {
            println!(
                "conclusion, all {} cells pooled (each cell's own in the report's comparison \
                 of the cells): environment by",
                res.dependence.len()
            );
        } else {
            println!("conclusion: environment by");
        }
        for l in lines {
            println!("  - {l}");
        }
    }
    if !res.hosts_too_few.is_empty() {
        println!(
            "{} host{} had fewer than {} candidates (listed in the store)",
            res.hosts_too_few.len(),
            if res.hosts_too_few.len() == 1 {
                ""
            } else {
                "s"
            },
            res.n_draw
        );
    }
}

/// The store of shard k (0-based) of r of a run whose output is `out`:
/// `STEM.shard-(k+1)-of-R.h5` beside it.
pub fn shard_path(out: &Path, k: u32, r: u32) -> PathBuf {
    let stem = out
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "run".into());
    out.with_file_name(format!("{stem}.shard-{}-of-{r}.h5", k + 1))
}

pub fn run(a: RunArgs) -> Result<(), CliError> {
    let (cfg, text) = load(&a.config, &a.sets)?;
    let shard = match &a.shard {
        Some(s) => parse_shard(s)?,
        None => Shard::WHOLE,
    };
    // a shard without --out gets a shard's name beside the run's output (a walkthrough's
    // first shard took the whole run's name, and the second was then told to overwrite it)
    let out = a.out.clone().unwrap_or_else(|| {
        if shard.count > 1 {
            shard_path(&cfg.file.run.output, shard.index, shard.count)
        } else {
            cfg.file.run.output.clone()
        }
    });
    let mut inputs = vec![a.config.clone()];
    inputs.extend(cfg.sample_path());
    // with --resume an existing store of this run is completed (tests and report), not replaced
    guard_output(&out, &inputs, a.overwrite, a.resume)?;
    // the report goes to NAME-report next to the store (a run split into shards, or of hosts
    // the tests do not read, writes none)
    if a.shard.is_none() && cfg.file.host.z_final == 0.0 {
        guard_report_dir(
            &report_dir(&out),
            a.overwrite,
            "the run's report directory",
            "give the store another name with --out (its report goes to NAME-report next to \
             it), or move those files",
        )?;
    }
    let existing = if a.overwrite {
        Existing::ReplaceOther
    } else {
        Existing::Keep
    };
    #[cfg(feature = "mpi")]
    if a.shard.is_none() {
        // under mpirun: one shard per rank; one thread per rank unless told otherwise
        let threads = a.threads.unwrap_or(1);
        // each rank's shard file replaces an existing file only as the output would: with
        // --overwrite (or, with --resume, a store of this run)
        let go = |s: Shard, p: PathBuf| {
            guard_output(&p, &inputs, a.overwrite, a.resume)?;
            execute(
                cfg.clone(),
                &text,
                p,
                threads,
                s,
                a.resume,
                existing,
                None,
                None,
            )
        };
        let finish = |shards: &[PathBuf], out: &Path| -> Result<(), CliError> {
            let _lock = writer_lock(out, "retinue run (merging MPI ranks)")?;
            let p = merge_stores(shards, out).map_err(run_err)?;
            for s in shards {
                let _ = std::fs::remove_file(s);
            }
            eprintln!("merged {} rank shards into {}", shards.len(), p.display());
            let grid = Grid::new(cfg.clone()).map_err(run_err)?;
            let sample_path = cfg.sample_path();
            let sample = match &sample_path {
                Some(sp) => Some(read_sample(sp, &cfg.sample_options())?),
                None => None,
            };
            pool(0)?
                .install(|| {
                    analyse(
                        &grid,
                        &p,
                        sample.as_ref(),
                        sample_path.as_deref(),
                        None,
                        &Target::of_run(&p),
                    )
                })
                .map(|_| ())
        };
        if let Some(r) = super::mpi_run::run_mpi(&go, &finish, &out) {
            return r;
        }
    }
    let threads = a.threads.unwrap_or(cfg.file.run.threads);
    let mut again = format!("retinue run {}", a.config.display());
    if let Some(o) = &a.out {
        again += &format!(" --out {}", o.display());
    }
    if let Some(s) = &a.shard {
        again += &format!(" --shard {s}");
    }
    retinue::io::set_interrupt_note(format!(
        "the hosts finished so far are kept in {}; continue with: {again} --resume",
        retinue::io::store::parts_dir(&out).display()
    ));
    let tests_note = format!(
        "{} holds every host of the run; only its tests and report were interrupted: \
         `{again} --resume` runs them",
        out.display()
    );
    execute(
        cfg,
        &text,
        out,
        threads,
        shard,
        a.resume,
        existing,
        None,
        Some(tests_note),
    )
    .map(|_| ())
}

pub fn demo(a: DemoArgs) -> Result<(), CliError> {
    std::fs::create_dir_all(&a.out)
        .map_err(|e| CliError::Failed(anyhow::anyhow!("{}: {e}", a.out.display())))?;
    let cfg_path = a.out.join("demo.toml");
    let text = DEMO_CONFIG.replace("\"../demo-data/sample.csv\"", "\"sample.csv\"");
    let sample_path = a.out.join("sample.csv");
    let bright_path = a.out.join("bright-sample.csv");
    let bright_tests = a.out.join("bright-tests.toml");
    let inputs = [
        (&cfg_path, text.as_str()),
        (&sample_path, DEMO_SAMPLE),
        (&bright_path, DEMO_BRIGHT_SAMPLE),
        (&bright_tests, DEMO_BRIGHT_TESTS),
    ];
    // the demo's inputs replace only themselves (an earlier demo's), never a user's file of
    // the same name, unless --overwrite
    for (p, content) in inputs {
        if p.exists() && !a.overwrite && std::fs::read_to_string(p).ok().as_deref() != Some(content)
        {
            return Err(usage(format!(
                "{} exists and is not the demo's: refusing to replace it (use another --out, \
                 or add --overwrite)",
                p.display()
            )));
        }
    }
    let out = a.out.join("demo.h5");
    // an earlier demo's store is replaced, and nothing else: a store of another configuration,
    // or one holding analyses the demo does not make, only with --overwrite (review: `demo
    // --out .` replaced any store named demo.h5)
    if !a.overwrite {
        if let Some(why) = not_the_demos_store(&out, &text) {
            return Err(usage(format!(
                "{} {why}: refusing to replace it (use another --out, or add --overwrite)",
                out.display()
            )));
        }
    }
    guard_output(&out, &[], a.overwrite, true)?;
    for rep in ["demo-report", "demo-bright-report"] {
        guard_report_dir(
            &a.out.join(rep),
            a.overwrite,
            "the demo's report directory",
            "use another --out, or move those files",
        )?;
    }
    for (p, content) in inputs {
        std::fs::write(p, content)
            .map_err(|e| CliError::Failed(anyhow::anyhow!("{}: {e}", p.display())))?;
    }
    let cfg = RunConfig::parse_str(&text, Some(&a.out)).map_err(usage)?;
    println!(
        "demo: inputs in {} (demo.toml, sample.csv, bright-sample.csv, bright-tests.toml)",
        a.out.display()
    );
    println!("\n== 1. twelve faint satellites that stopped forming stars 10.6-12.9 Gyr ago ==");
    retinue::io::set_interrupt_note(format!(
        "the hosts finished so far are kept; `retinue demo --out {}` again continues where \
         this one stopped",
        a.out.display()
    ));
    // (an earlier demo store is removed only once its lock is held: review, a demo started
    // while another command used the store deleted it first)
    let out = execute(
        cfg,
        &text,
        out,
        a.threads,
        Shard::WHOLE,
        true,
        Existing::Remove,
        None,
        None,
    )?;
    // the same hosts against the second sample, as `retinue infall` would test them
    println!(
        "\n== 2. six brighter satellites that stopped forming stars 1.4-5.7 Gyr ago \
         (retinue infall {} --sample bright-sample.csv --config bright-tests.toml) ==",
        out.display()
    );
    // (an earlier demo's "bright" analysis is replaced; its report directory was checked
    // above)
    infall_into(
        InfallArgs {
            store: out,
            sample: Some(bright_path),
            columns: None,
            config: Some(bright_tests),
            cells: Vec::new(),
            name: Some("bright".into()),
            out: Some(a.out.join("demo-bright-report")),
            overwrite: true,
            sets: Vec::new(),
        },
        a.overwrite,
    )
}

/// The analyses the demo writes into its store.
const DEMO_ANALYSES: [&str; 2] = ["run", "bright"];

/// Why the file at the demo's store `out` is not an earlier demo's store, which the demo
/// replaces without --overwrite (None: it is, or there is none): a store of another
/// configuration than `demo_text`, or one that holds analyses the demo does not make (a
/// user's `retinue infall` on it). A file that is not a store is left to `guard_output`.
fn not_the_demos_store(out: &Path, demo_text: &str) -> Option<String> {
    let config = retinue::io::store::config_text_of(out)?;
    if config != demo_text {
        return Some(
            "is a retinue store of another configuration than the demo's (not an earlier \
             demo's store)"
                .into(),
        );
    }
    let (names, _) = retinue::report::analyses_in(out).ok()?;
    let extra: Vec<&str> = names
        .iter()
        .map(String::as_str)
        .filter(|n| !DEMO_ANALYSES.contains(n))
        .collect();
    (!extra.is_empty()).then(|| {
        format!(
            "is an earlier demo's store that holds analyses the demo did not make ({}; \
             replacing the store would lose them)",
            extra.join(", ")
        )
    })
}

pub fn check(a: CheckArgs) -> Result<(), CliError> {
    let (cfg, _) = load(&a.config, &a.sets)?;
    let sample = match cfg.sample_path() {
        Some(p) => Some(read_sample(&p, &cfg.sample_options())?),
        None => None,
    };
    // the linear theory of every cosmology (reads transfer tables): what a run needs first
    let grid = Grid::new(cfg.clone()).map_err(run_err)?;
    if let Some(n) = sample
        .as_ref()
        .and_then(|s| analysis::sample_outside_selection(&grid, s))
    {
        eprintln!("note: {n}");
    }
    if let Some(n) = sample
        .as_ref()
        .and_then(|s| analysis::selection_wider_than_sample(&grid, s))
    {
        eprintln!("note: {n}");
    }
    if let Some(w) = resolution_warning(&grid) {
        eprintln!("warning: {w}");
    }
    if let Some(w) = cfg.size_warning() {
        eprintln!("warning: {w}");
    }
    if let Some(w) = analysis::tests_unsupported(&grid) {
        eprintln!("warning: {w}");
    }
    for n in cfg.file.orbits.calibration_notes() {
        eprintln!("note: {n}");
    }
    let (g, d) = (
        &cfg.file.galaxies,
        retinue::galaxies::GalaxyOptions::default(),
    );
    if !g.strip_stars
        && (g.size_to_r200c != d.size_to_r200c || g.size_scatter_dex != d.size_scatter_dex)
    {
        eprintln!(
            "note: galaxies.size_to_r200c and galaxies.size_scatter_dex set how deeply stars \
             sit in their subhaloes, which matters only for stripping them: with \
             galaxies.strip_stars = false they change nothing"
        );
    }
    println!(
        "{}: valid ({} = {} hosts)",
        a.config.display(),
        grid_shape(&cfg),
        cfg.n_hosts()
    );
    println!("{}", size_lines(&cfg));
    Ok(())
}

/// What `check` says of a run's size: CPU time, wall time on this machine's threads, store and
/// part files, with the rates they are scaled from.
fn size_lines(cfg: &RunConfig) -> String {
    use retinue::config::run::SizeEstimate as S;
    let e = cfg.size_estimate();
    let cores = std::thread::available_parallelism().map_or(1, |n| n.get());
    let (threads, whose) = match cfg.file.run.threads {
        0 => (
            cores,
            "all cores of this machine, run.threads = 0".to_string(),
        ),
        t => (t, format!("run.threads; this machine has {cores} cores")),
    };
    let per = if (e.default_hosts / e.hosts.max(1) as f64 - 1.0).abs() < 0.005 {
        String::new()
    } else {
        format!(
            "; a host here counts as {:.2} default hosts, (host mass / resolution)^0.9",
            e.default_hosts / e.hosts.max(1) as f64
        )
    };
    format!(
        "size (rough: scaled from the default host, 1.2e12 Msun at resolution 10^7.5 Msun, as \
         measured on a 2-core development machine{per}):\n  \
         CPU time   about {} ({} s of one core per default host)\n  \
         wall time  about {} on {threads} threads ({whose}; --threads overrides)\n  \
         store      about {} ({:.2} MB per default host, compressed); the part files take \
         about {} more until the run ends",
        duration(e.cpu_s),
        S::CPU_S_PER_HOST,
        duration(e.wall_s(threads)),
        bytes(e.store_bytes),
        S::STORE_BYTES_PER_HOST / 1e6,
        bytes(e.parts_bytes),
    )
}

/// "40 s", "12 min", "3.5 h", "2.1 days".
fn duration(s: f64) -> String {
    if s < 90.0 {
        format!("{:.0} s", s.max(1.0))
    } else if s < 5400.0 {
        format!("{:.0} min", s / 60.0)
    } else if s < 172_800.0 {
        format!("{:.1} h", s / 3600.0)
    } else {
        format!("{:.1} days", s / 86400.0)
    }
}

/// "86 MB", "1.2 GB", "3.4 TB".
fn bytes(b: f64) -> String {
    if b < 1e9 {
        format!("{:.0} MB", (b / 1e6).max(1.0))
    } else if b < 1e12 {
        format!("{:.1} GB", b / 1e9)
    } else {
        format!("{:.1} TB", b / 1e12)
    }
}

/// Whether two paths name the same file (the output need not exist yet: its directory is
/// resolved and its name compared).
fn same_file(a: &Path, b: &Path) -> bool {
    let resolve = |p: &Path| -> Option<PathBuf> {
        if let Ok(c) = p.canonicalize() {
            return Some(c);
        }
        let parent = match p.parent() {
            Some(d) if !d.as_os_str().is_empty() => d.canonicalize().ok()?,
            _ => std::env::current_dir().ok()?,
        };
        Some(parent.join(p.file_name()?))
    };
    matches!((resolve(a), resolve(b)), (Some(x), Some(y)) if x == y)
}

/// Before anything is written: the output is a file path (not a directory), is none of the
/// inputs, and replaces an existing file only if allowed: a store of this tool when
/// `replace_store` (the demo's own) or with `--overwrite`, any other file only with
/// `--overwrite`.
fn guard_output(
    out: &Path,
    inputs: &[PathBuf],
    overwrite: bool,
    replace_store: bool,
) -> Result<(), CliError> {
    let name = out.display();
    if out.as_os_str().is_empty() || out.is_dir() || out.to_string_lossy().ends_with('/') {
        return Err(usage(format!(
            "output {name:?} is a directory, not a file: give a file name (e.g. run.h5)"
        )));
    }
    if let Some(p) = missing_parent(out) {
        return Err(usage(format!("output {name}: {p}")));
    }
    if let Some(i) = inputs.iter().find(|i| same_file(out, i)) {
        return Err(usage(format!(
            "output {name} is one of the inputs ({}): choose another output",
            i.display()
        )));
    }
    if out.exists() && !overwrite {
        if !retinue::io::store::is_run_store(out) {
            return Err(usage(format!(
                "{name} exists and is not a retinue store: refusing to replace it (add \
                 --overwrite to replace it anyway)"
            )));
        }
        if !replace_store {
            return Err(usage(format!(
                "{name} already exists (a store of an earlier run): add --overwrite to replace \
                 it, give another --out, re-test it with `retinue infall {name}`, or add \
                 --resume if its run stopped during the tests or the report"
            )));
        }
    }
    Ok(())
}

/// Why the directory an output file goes into cannot take it (None: it can): it does not
/// exist, or is not a directory. (Review: `--out nodir/x.h5` failed on the store's lock file
/// with a bare operating-system error and exit code 1.)
pub(crate) fn missing_parent(out: &Path) -> Option<String> {
    let parent = out.parent().filter(|p| !p.as_os_str().is_empty())?;
    if parent.is_dir() {
        return None;
    }
    let d = parent.display();
    Some(if parent.exists() {
        format!("{d} is not a directory; give an output in a directory")
    } else {
        format!("the directory {d} does not exist; create it first (mkdir -p {d}) or give an output in another directory")
    })
}

/// Before anything is written: a report may go into `dir` when it is absent, empty or a
/// report directory retinue wrote (`report::directory`), or with `overwrite`; never when it
/// is a file. `what` names the directory in messages (e.g. "--out DIR"), `remedy` says what
/// to do instead of `--overwrite`. (Review: `infall --out DIR` replaced a user's report.md and
/// CSV files there, and its clean-up deleted other files of a report's names.)
fn guard_report_dir(dir: &Path, overwrite: bool, what: &str, remedy: &str) -> Result<(), CliError> {
    if dir.is_file() {
        return Err(usage(format!(
            "{what} {} is a file, and the report needs a directory; {remedy}",
            dir.display()
        )));
    }
    if overwrite {
        return Ok(());
    }
    match retinue::report::directory::foreign_dir_problem(dir) {
        Some(p) => Err(usage(format!(
            "{what} {} {p}; {remedy}, or add --overwrite to write there anyway",
            dir.display()
        ))),
        None => Ok(()),
    }
}

/// The lock on a store for one writer (`io::lock`); a second writer fails at once, naming the
/// holder.
fn writer_lock(target: &Path, command: &str) -> Result<retinue::io::lock::WriterLock, CliError> {
    retinue::io::lock::WriterLock::acquire(target, command)
        .map_err(|e| CliError::Failed(anyhow::anyhow!("{e}")))
}

/// "2 cosmologies x 1 host mass x 150 hosts" (the grid of a run).
fn grid_shape(cfg: &RunConfig) -> String {
    let n = |k: usize, one: &str, many: &str| format!("{k} {}", if k == 1 { one } else { many });
    let envs = &cfg.environments;
    if envs.len() == 1 && envs[0].pair.is_none() {
        return format!(
            "{} x {} x {}",
            n(cfg.cosmologies.len(), "cosmology", "cosmologies"),
            n(cfg.mass_bins.len(), "host mass", "host masses"),
            n(cfg.file.run.hosts_per_cell, "host", "hosts")
        );
    }
    // hosts per cell, or pairs (two hosts each) in a pair environment
    let kinds: Vec<String> = envs
        .iter()
        .map(|e| {
            let k = cfg.file.run.hosts_per_cell;
            match e.pair {
                None => format!("{} ({})", e.label, n(k, "host", "hosts")),
                Some(_) => format!("{} ({}, {} hosts)", e.label, n(k, "pair", "pairs"), 2 * k),
            }
        })
        .collect();
    format!(
        "{} x {} x [{}]",
        n(cfg.cosmologies.len(), "cosmology", "cosmologies"),
        n(cfg.mass_bins.len(), "host mass", "host masses"),
        kinds.join(", ")
    )
}

pub fn merge(a: MergeArgs) -> Result<(), CliError> {
    guard_output(&a.out, &a.shards, a.overwrite, false)?;
    let _lock = writer_lock(&a.out, "retinue merge")?;
    // (a walkthrough's Ctrl-C during merge printed nothing)
    retinue::io::set_interrupt_note(format!(
        "{} was not written (a merged store is put in place only once complete; a store \
         already there stays as it was) and the shards are unchanged; run the same command \
         again",
        a.out.display()
    ));
    let p = merge_stores(&a.shards, &a.out).map_err(run_err)?;
    println!(
        "merged {} shard{} into {}",
        a.shards.len(),
        if a.shards.len() == 1 { "" } else { "s" },
        p.display()
    );
    Ok(())
}

#[derive(Debug, Args)]
#[command(
    after_help = "Example:\n  retinue plot run.h5 --out figures/\n\nDraws the figures of a store as PNG and SVG (probability curves with bands, fraction-of-N,\nquenching delay and phase-space matches against the sample, infall-time distributions,\npericentres, subhalo mass function, radial distribution, backsplash by shell, the pairs'\nseparation history when the run has pairs, dependence on host mass) with the stored\nconfiguration."
)]
pub struct PlotArgs {
    /// A run store.
    pub store: PathBuf,
    /// Directory for the PNG and SVG files (default: NAME-report next to the store). A
    /// directory that holds files is written into only when it is a report directory retinue
    /// wrote (it has a .retinue-report file), or with --overwrite.
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Write into a directory that holds files retinue did not write (replacing those of a
    /// figure's name).
    #[arg(long)]
    pub overwrite: bool,
    /// Observed sample (CSV or TOML), for the sample's N, its tests and its markers on the
    /// figures; default: the run's sample (looked
    /// for in the run's configuration directory, next to the store, then here).
    #[arg(long)]
    pub sample: Option<PathBuf>,
    /// Draw only some grid cells: `cosmology=LABEL`, `mass=MASS`, `env=LABEL` or several,
    /// comma-separated;
    /// repeat for several (default: every cell).
    #[arg(long = "cell")]
    pub cells: Vec<String>,
    /// Read the sample's CSV columns under the sample's names: NAME=COLUMN pairs, e.g.
    /// mstar_msun=stellar_mass,r_gc_kpc=dist. Replaces run.sample_columns; a sample given with
    /// --sample is read with these only.
    #[arg(long, value_name = "NAME=COLUMN,...", value_parser = parse_columns)]
    pub columns: Option<BTreeMap<String, String>>,
}

#[derive(Debug, Args)]
pub struct ExportArgs {
    /// A run store.
    pub store: PathBuf,
    /// The CSV file to write.
    #[arg(long)]
    pub out: PathBuf,
    /// Export only some grid cells: `cosmology=LABEL`, `mass=MASS`, `env=LABEL` or several,
    /// comma-separated;
    /// repeat for several (default: every cell).
    #[arg(long = "cell")]
    pub cells: Vec<String>,
    /// Replace an existing file.
    #[arg(long)]
    pub overwrite: bool,
}

/// `retinue export`: the subhalo table joined with its hosts, as CSV.
pub fn export(a: ExportArgs) -> Result<(), CliError> {
    let meta = read_meta(&a.store).map_err(usage)?;
    let (cfg, _) = stored_config(&meta, &a.store, false)?;
    let grid = Grid::new(cfg).map_err(run_err)?;
    retinue::io::store::check_complete(&a.store).map_err(usage)?;
    guard_output(&a.out, std::slice::from_ref(&a.store), a.overwrite, false)?;
    let cells = analysis::select_cells(&grid, &a.cells).map_err(analysis_err)?;
    let labels = analysis::cell_labels(&grid);
    let of = |c: u16, m: u16| labels.of(c, m);
    let names = retinue::io::export::CellNames { of: &of };
    let keep = |c: u16, m: u16| cells.as_ref().is_none_or(|s| s.contains(&(c, m)));
    let rows = retinue::io::export::export_subhalos_csv(&a.store, &a.out, &names, &keep, 64)
        .map_err(|e| CliError::Failed(e.into()))?;
    println!("{} rows written to {}", rows, a.out.display());
    Ok(())
}

pub fn plot(a: PlotArgs) -> Result<(), CliError> {
    let meta = read_meta(&a.store).map_err(usage)?;
    let (cfg, run_sample) = stored_config(&meta, &a.store, a.sample.is_none())?;
    let run_columns = cfg.file.run.sample_columns.clone();
    let sample = retest_sample(
        &cfg,
        a.sample.as_ref(),
        a.columns.as_ref(),
        run_sample,
        run_columns,
    )?;
    let grid = Grid::new(cfg).map_err(run_err)?;
    if let Some(n) = analysis::check_input_files(&meta, &a.store, &grid).map_err(analysis_err)? {
        eprintln!("note: {n}");
    }
    // whole tables, each host once (a shard is drawn as it is)
    retinue::io::store::check_complete(&a.store).map_err(usage)?;
    let dir = a.out.clone().unwrap_or_else(|| report_dir(&a.store));
    guard_report_dir(
        &dir,
        a.overwrite,
        if a.out.is_some() {
            "--out"
        } else {
            "the store's report directory"
        },
        "give another --out, or move those files",
    )?;
    let cells = analysis::select_cells(&grid, &a.cells).map_err(analysis_err)?;
    let sample = sample.map(|(s, _)| s);
    let c = analysis::compute(&grid, &a.store, sample.as_ref(), cells.as_deref())
        .map_err(analysis_err)?;
    // the marker first (`report::directory`), creating the directory
    retinue::report::directory::mark(&dir, &a.store, "figures")
        .map_err(|e| CliError::Failed(anyhow::anyhow!("{e}")))?;
    let figs = analysis::figures(
        &grid,
        &dir,
        &c.results,
        &c.figure_data,
        sample.as_ref(),
        &c.cells,
    )
    .map_err(analysis_err)?;
    // figures of an earlier drawing that this one does not have (tables are left alone)
    retinue::report::remove_stale(&dir, &figs, false)
        .map_err(|e| CliError::Failed(anyhow::anyhow!("{e}")))?;
    for f in figs {
        println!("{}", f.display());
    }
    Ok(())
}

pub fn infall(a: InfallArgs) -> Result<(), CliError> {
    let replace_files = a.overwrite;
    infall_into(a, replace_files)
}

/// `retinue infall`; `replace_files`: the report may go into a directory that is not a
/// report directory (`guard_report_dir`; for the command line, `--overwrite`).
fn infall_into(mut a: InfallArgs, replace_files: bool) -> Result<(), CliError> {
    // a store named through a symbolic link is written where it lives (review: the link was
    // replaced by a copy holding the new analysis, and two names gave two locks)
    if a.store.is_symlink() {
        if let Ok(real) = std::fs::canonicalize(&a.store) {
            a.store = real;
        }
    }
    let meta = read_meta(&a.store).map_err(usage)?;
    // the run's own sample unless one is given: `--config` overlays only the keys it gives,
    // so without `run.sample` in it the run's sample stays
    let (mut cfg, mut run_sample) = stored_config(&meta, &a.store, a.sample.is_none())?;
    let mut run_columns = cfg.file.run.sample_columns.clone();
    // --set changes test settings only: every other key made the store (a key of another
    // table would otherwise be dropped without a word, as --config's other tables are)
    let not_tests: Vec<InvalidValue> = a
        .sets
        .iter()
        .filter(|s| !s.trim_start().starts_with("tests."))
        .map(|s| {
            InvalidValue::new(
                "--set",
                s,
                "`retinue infall` re-runs the tests only: give tests.KEY=VALUE; the other \
                 keys made the store's hosts and galaxies (run `retinue run CONFIG --set ...` \
                 to change those)",
            )
        })
        .collect();
    if !not_tests.is_empty() {
        return Err(usage(ConfigProblems(not_tests)));
    }
    // only the [tests] and [galaxies] tables (and run.sample, run.sample_columns) come from
    // --config, key by key, with --set's keys written over them; everything that made the
    // store stays the run's
    let retest_text = match &a.config {
        Some(p) => {
            let text =
                std::fs::read_to_string(p).map_err(|e| usage(format!("{}: {e}", p.display())))?;
            Some((text, p.clone()))
        }
        None => (!a.sets.is_empty()).then(|| (String::new(), PathBuf::from("(--set)"))),
    };
    if let Some((text, p)) = retest_text {
        let text = apply_overrides(&text, &a.sets).map_err(usage)?;
        let r =
            analysis::retest_config(cfg, &text, &p, a.sample.is_some()).map_err(analysis_err)?;
        cfg = r.config;
        // FILE's column mapping describes FILE's own sample; without one the run's sample
        // keeps the run's mapping (a walkthrough found a tests-only FILE losing it)
        if r.sample.is_some() {
            run_sample = r.sample;
            run_columns = r.sample_columns;
        }
    }
    let read = retest_sample(
        &cfg,
        a.sample.as_ref(),
        a.columns.as_ref(),
        run_sample,
        run_columns,
    )?;
    let (sample, sample_path) = match read {
        Some((s, p)) => (Some(s), Some(p)),
        None => (None, None),
    };
    let grid = Grid::new(cfg).map_err(run_err)?;
    // the transfer tables read now must be those the hosts were grown with
    if let Some(n) = analysis::check_input_files(&meta, &a.store, &grid).map_err(analysis_err)? {
        eprintln!("note: {n}");
    }
    let _lock = writer_lock(&a.store, "retinue infall")?;
    // the copy an infall writes its analysis into, left by one that was killed (SIGKILL: no
    // handler could remove it) is stale now that the lock is held: removed, so that nothing
    // that looks like a store stays beside it
    {
        let stale = retinue::io::AtomicPath::new(&a.store);
        if stale.temp_path.exists() {
            eprintln!(
                "note: removing {}, left by an interrupted command",
                stale.temp_path.display()
            );
            stale.discard();
        }
    }
    // each analysis under its own name: an earlier one is replaced only when asked
    let name = match &a.name {
        Some(n) => n.clone(),
        None => {
            let stem = sample_path
                .as_ref()
                .and_then(|p| p.file_stem())
                .map(|s| {
                    s.to_string_lossy()
                        .chars()
                        .map(|c| {
                            if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                                c
                            } else {
                                '_'
                            }
                        })
                        .collect::<String>()
                })
                .filter(|s| !s.is_empty())
                .unwrap_or_else(|| "tests".into());
            let secs = std::time::SystemTime::now()
                .duration_since(std::time::UNIX_EPOCH)
                .map(|d| d.as_secs())
                .unwrap_or(0);
            format!(
                "{}-{}",
                stem.chars().take(40).collect::<String>(),
                analysis::utc_stamp(secs)
            )
        }
    };
    if let Some(p) = retinue::report::analysis_name_problem(&name) {
        return Err(usage(p));
    }
    let (existing, _) = retinue::report::analyses_in(&a.store).map_err(|e| usage(e.to_string()))?;
    // a name made here never replaces an earlier analysis: -2, -3, ... within one second
    let name = if a.name.is_none() {
        let mut k = 1;
        let mut n = name.clone();
        while existing.contains(&n) {
            k += 1;
            n = format!("{name}-{k}");
        }
        n
    } else {
        name
    };
    let dir = a.out.clone().unwrap_or_else(|| {
        let stem = a
            .store
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_else(|| "run".into());
        a.store.with_file_name(format!("{stem}-{name}-report"))
    });
    if existing.contains(&name) && !a.overwrite {
        // an `infall` interrupted after its analysis was stored and before its report was
        // written leaves exactly this: say so (a walkthrough met it)
        let unreported = if dir.join("report.md").is_file() {
            String::new()
        } else {
            format!(
                " ({} holds no report of it: an interrupted `infall`? --overwrite tests again \
                 and writes it)",
                dir.display()
            )
        };
        return Err(usage(format!(
            "{} already holds an analysis named {name:?}{unreported}: give another --name, or add --overwrite to replace it",
            a.store.display()
        )));
    }
    if dir.is_file() {
        return Err(usage(format!(
            "--out {}: a file of that name exists; the report needs a directory",
            dir.display()
        )));
    }
    if a.out.is_some() {
        guard_report_dir(
            &dir,
            replace_files,
            "--out",
            "give another --out, or move those files",
        )?;
    } else {
        guard_report_dir(
            &dir,
            replace_files,
            "the analysis's report directory",
            "give the report another directory with --out (or the analysis another --name), \
             or move those files",
        )?;
    }
    // the store must hold every host of its run (or of its shard) exactly once
    retinue::io::store::check_complete(&a.store).map_err(usage)?;
    if meta.shard.1 > 1 {
        let (lo, hi) = Shard {
            index: meta.shard.0,
            count: meta.shard.1,
        }
        .range(meta.n_hosts_total);
        eprintln!(
            "warning: {} is shard {}/{} of a split run (hosts {lo}..{hi} of {}): the tests use \
             only its hosts; merge the shards (`retinue merge`) to test the whole run",
            a.store.display(),
            meta.shard.0 + 1,
            meta.shard.1,
            meta.n_hosts_total
        );
    }
    let cells = analysis::select_cells(&grid, &a.cells).map_err(analysis_err)?;
    // (a walkthrough was told the store held the analysis "only if it was complete")
    retinue::io::set_interrupt_note(format!(
        "analysis {name:?} was not stored: {} is as it was; run the same command again",
        a.store.display()
    ));
    let stored_note = Some(format!(
        "analysis {name:?} is stored in {}, but its report was not finished: the same \
         command with --overwrite writes it",
        a.store.display()
    ));
    analyse(
        &grid,
        &a.store,
        sample.as_ref(),
        sample_path.as_deref(),
        cells.as_deref(),
        &Target {
            name,
            dir,
            stored_note,
        },
    )
    .map(|_| ())
}
