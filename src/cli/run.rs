//! `retinue run | demo | check | merge | infall`.

use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::time::Instant;

use clap::Args;

use super::CliError;
use retinue::config::RunConfig;
use retinue::io::store::{read_meta, StoreMeta};
use retinue::report::{write_analysis_to_store, write_tables};
use retinue::run::{merge_stores, synthesize_to_store, Grid, RunError, Shard};
use retinue::stats::tests::{run_tests_raw, Merger};
use retinue::stats::{AnalysisResults, ObservedSample};

const DEMO_CONFIG: &str = include_str!("../../configs/demo.toml");
const DEMO_SAMPLE: &str = include_str!("../../demo-data/sample.csv");

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
    /// Replace an existing file at the output (a store of an earlier run, or any other file).
    #[arg(long)]
    pub overwrite: bool,
}

#[derive(Debug, Args)]
pub struct DemoArgs {
    /// Directory for the demo's store, report and inputs.
    #[arg(long, default_value = "retinue-demo")]
    pub out: PathBuf,
    /// Worker threads, 0 to 1024 (0 = all cores).
    #[arg(long, default_value_t = 0, value_parser = parse_threads)]
    pub threads: usize,
    /// Replace files in the directory that the demo did not write (e.g. your own sample.csv).
    #[arg(long)]
    pub overwrite: bool,
}

#[derive(Debug, Args)]
pub struct CheckArgs {
    /// Run configuration (TOML).
    pub config: PathBuf,
}

#[derive(Debug, Args)]
pub struct MergeArgs {
    /// Shard stores to join (any order; each shard of the split exactly once).
    #[arg(required = true)]
    pub shards: Vec<PathBuf>,
    /// The joined store (written under a temporary name, renamed when complete).
    #[arg(long)]
    pub out: PathBuf,
    /// Replace an existing file at --out.
    #[arg(long)]
    pub overwrite: bool,
}

#[derive(Debug, Args)]
#[command(
    after_help = "Example:\n  retinue infall run.h5 --sample my-satellites.csv --config tests.toml\n\nRe-runs the tests on an existing store with the [tests] (and [galaxies]) tables of --config\n(default: the configuration stored in the file)."
)]
pub struct InfallArgs {
    /// A run store.
    pub store: PathBuf,
    /// Observed sample (CSV or TOML); default: the one named by --config's run.sample, else
    /// the run's own (looked for in the run's configuration directory, next to the store,
    /// then here).
    #[arg(long)]
    pub sample: Option<PathBuf>,
    /// A file with a [tests] table (or a whole configuration): its [tests], [galaxies] and
    /// run.sample replace the stored ones; everything else stays the run's. (Galaxies are
    /// painted when a store is written: [galaxies] here only converts a stellar-mass
    /// pre-processing threshold.)
    #[arg(long)]
    pub config: Option<PathBuf>,
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

fn load(path: &Path) -> Result<(RunConfig, String), CliError> {
    let text = std::fs::read_to_string(path).map_err(|e| {
        usage(format!(
            "config file {}: cannot be read: {e}",
            path.display()
        ))
    })?;
    let cfg =
        RunConfig::parse_named(&text, path.parent(), &path.display().to_string()).map_err(usage)?;
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
fn execute(
    cfg: RunConfig,
    text: &str,
    out: PathBuf,
    threads: usize,
    shard: Shard,
    resume: bool,
    sample_override: Option<PathBuf>,
) -> Result<PathBuf, CliError> {
    let sample_path = sample_override.or(cfg.sample_path());
    let sample = match &sample_path {
        Some(p) => Some(ObservedSample::from_file(p).map_err(usage)?),
        None => None,
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
    if resume && retinue::io::store::is_run_store(&out) {
        let meta = retinue::io::store::check_complete(&out)
            .map_err(|e| usage(format!("--resume: {e}")))?;
        if meta.config_toml != text || meta.shard != (shard.index, shard.count) {
            return Err(usage(format!(
                "--resume: {} is a store of another configuration or shard (shard {}/{}); \
                 give another --out, or add --overwrite to replace it",
                out.display(),
                meta.shard.0 + 1,
                meta.shard.1
            )));
        }
        eprintln!(
            "{} already holds all {} hosts of this run: running only the tests and the report",
            out.display(),
            hi - lo
        );
        if shard.count > 1 {
            return Ok(out);
        }
        pool.install(|| analyse(&grid, &out, sample.as_ref()))?;
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
    pool.install(|| analyse(&grid, &path, sample.as_ref()))?;
    Ok(path)
}

/// Run the tests on a store, streaming it in host chunks; returns the results, the figure
/// data and the number of hosts.
fn compute(
    grid: &Grid,
    store: &Path,
    sample: Option<&ObservedSample>,
) -> Result<(AnalysisResults, retinue::stats::compact::FigureData, usize), CliError> {
    let cfg = &grid.config;
    // stream the store in chunks of hosts, test each chunk and fold it into running summaries:
    // memory stays flat in the number of hosts
    // each host is read on its own cosmology's clock (the store's hosts carry its index)
    let cosmos: Vec<&retinue::Cosmology> = grid.theories.iter().map(|t| t.cosmology()).collect();
    let mut merger = Merger::new(&cfg.file.tests, cfg.file.run.master_seed, false);
    let fig = retinue::stats::compact::for_each_chunk(
        store,
        &cfg.file.tests,
        sample,
        &cosmos,
        &cfg.file.galaxies,
        64,
        &mut |cat| {
            merger.add(run_tests_raw(
                &grid.theories,
                &cfg.file.galaxies,
                &cat,
                &cfg.file.tests,
                sample,
                cfg.file.run.master_seed,
            ));
        },
    )
    .map_err(|e| CliError::Failed(e.into()))?;
    let n_hosts = fig.n_hosts;
    let res = merger.finish().ok_or_else(|| {
        CliError::Failed(anyhow::anyhow!(
            "{}: the store has no hosts",
            store.display()
        ))
    })?;
    Ok((res, fig, n_hosts))
}

fn analyse(
    grid: &Grid,
    store: &Path,
    sample: Option<&ObservedSample>,
) -> Result<AnalysisResults, CliError> {
    let cfg = &grid.config;
    let t0 = Instant::now();
    let (res, fig, n_hosts) = compute(grid, store, sample)?;
    let tests_toml = toml::to_string(&cfg.file.tests).unwrap_or_default();
    write_analysis_to_store(store, &res, &tests_toml).map_err(|e| CliError::Failed(e.into()))?;
    let dir = report_dir(store);
    let n_sub =
        retinue::io::store::n_subhaloes_in(store).map_err(|e| CliError::Failed(e.into()))?;
    let mut summary = format!(
        "Store `{}`: {} hosts, {} subhaloes; master seed {}.",
        store.display(),
        n_hosts,
        n_sub,
        cfg.file.run.master_seed
    );
    if let Some(w) = resolution_warning(grid) {
        summary.push_str(&format!("\n\n**Warning:** {w}."));
    }
    let files = write_tables(&dir, &res, &cfg.file.tests, sample, &summary)
        .map_err(|e| CliError::Failed(e.into()))?;
    let figs = figures(grid, &dir, &res, &fig, sample)?;
    eprintln!("tests done in {:.1} s", t0.elapsed().as_secs_f64());
    println!("store:   {}", store.display());
    println!("report:  {}", dir.join("report.md").display());
    println!(
        "tables:  {}",
        files
            .iter()
            .filter(|p| p.extension().map(|e| e == "csv").unwrap_or(false))
            .map(|p| p.file_name().unwrap().to_string_lossy().into_owned())
            .collect::<Vec<_>>()
            .join(", ")
    );
    println!("figures: {}", retinue::report::figures::listing(&figs));
    headline(&res);
    Ok(res)
}

/// Draw the figures of a run (PNG and SVG) with what they need from its configuration and
/// sample; returns the files written.
fn figures(
    grid: &Grid,
    dir: &Path,
    res: &AnalysisResults,
    fig: &retinue::stats::compact::FigureData,
    sample: Option<&ObservedSample>,
) -> Result<Vec<PathBuf>, CliError> {
    let cfg = &grid.config.file;
    let inputs = retinue::report::figures::FigureInputs {
        theories: &grid.theories,
        sample,
        tests: &cfg.tests,
        orbits: &cfg.orbits,
        resolution_msun: cfg.trees.resolution_msun,
    };
    retinue::report::figures::write_figures(dir, res, fig, &inputs)
        .map_err(|e| CliError::Failed(anyhow::anyhow!(e)))
}

fn report_dir(store: &Path) -> PathBuf {
    let stem = store
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "run".into());
    store.with_file_name(format!("{stem}-report"))
}

fn headline(res: &AnalysisResults) {
    println!();
    println!(
        "P(all {} fell in before z), mean over hosts [bootstrap 16-84%]",
        res.n_draw
    );
    println!(
        "{:<20} {:>22} {:>22} {:>22}",
        "clock", "z = 1", "z = 2", "z = 3"
    );
    for (clock, c) in &res.all_of_n_mc {
        let cell = |z: f64| {
            c.x.iter()
                .position(|&x| (x - z).abs() < 1e-9)
                .map(|k| {
                    format!(
                        "{:.3} [{:.3}, {:.3}]",
                        c.spread[k].mean, c.spread[k].boot16, c.spread[k].boot84
                    )
                })
                .unwrap_or_else(|| "-".into())
        };
        println!(
            "{:<20} {:>22} {:>22} {:>22}",
            clock.name(),
            cell(1.0),
            cell(2.0),
            cell(3.0)
        );
    }
    for (clock, _, tau) in &res.quench {
        println!(
            "largest quenching delay allowed ({}): {}",
            clock.name(),
            if tau.is_nan() {
                "none".into()
            } else {
                format!("{tau:.2} Gyr")
            }
        );
    }
    if !res.hosts_too_few.is_empty() {
        println!(
            "{} hosts had fewer than {} candidates (listed in the store)",
            res.hosts_too_few.len(),
            res.n_draw
        );
    }
}

pub fn run(a: RunArgs) -> Result<(), CliError> {
    let (cfg, text) = load(&a.config)?;
    let shard = match &a.shard {
        Some(s) => parse_shard(s)?,
        None => Shard::WHOLE,
    };
    let out = a.out.clone().unwrap_or_else(|| cfg.file.run.output.clone());
    let mut inputs = vec![a.config.clone()];
    inputs.extend(cfg.sample_path());
    // with --resume an existing store of this run is completed (tests and report), not replaced
    guard_output(&out, &inputs, a.overwrite, a.resume)?;
    #[cfg(feature = "mpi")]
    if a.shard.is_none() {
        // under mpirun: one shard per rank; one thread per rank unless told otherwise
        let threads = a.threads.unwrap_or(1);
        let go = |s: Shard, p: PathBuf| execute(cfg.clone(), &text, p, threads, s, a.resume, None);
        let finish = |shards: &[PathBuf], out: &Path| -> Result<(), CliError> {
            let _lock = writer_lock(out, "retinue run (merging MPI ranks)")?;
            let p = merge_stores(shards, out).map_err(run_err)?;
            for s in shards {
                let _ = std::fs::remove_file(s);
            }
            eprintln!("merged {} rank shards into {}", shards.len(), p.display());
            let grid = Grid::new(cfg.clone()).map_err(run_err)?;
            let sample = match cfg.sample_path() {
                Some(sp) => Some(ObservedSample::from_file(&sp).map_err(usage)?),
                None => None,
            };
            pool(0)?
                .install(|| analyse(&grid, &p, sample.as_ref()))
                .map(|_| ())
        };
        if let Some(r) = super::mpi_run::run_mpi(&go, &finish, &out) {
            return r;
        }
    }
    let threads = a.threads.unwrap_or(cfg.file.run.threads);
    execute(cfg, &text, out, threads, shard, a.resume, None).map(|_| ())
}

pub fn demo(a: DemoArgs) -> Result<(), CliError> {
    std::fs::create_dir_all(&a.out)
        .map_err(|e| CliError::Failed(anyhow::anyhow!("{}: {e}", a.out.display())))?;
    let cfg_path = a.out.join("demo.toml");
    let text = DEMO_CONFIG.replace("\"../demo-data/sample.csv\"", "\"sample.csv\"");
    let sample_path = a.out.join("sample.csv");
    // the demo's inputs replace only themselves (an earlier demo's), never a user's file of
    // the same name, unless --overwrite
    for (p, content) in [(&cfg_path, text.as_str()), (&sample_path, DEMO_SAMPLE)] {
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
    guard_output(&out, &[], a.overwrite, true)?;
    std::fs::write(&cfg_path, &text)
        .map_err(|e| CliError::Failed(anyhow::anyhow!("{}: {e}", cfg_path.display())))?;
    std::fs::write(&sample_path, DEMO_SAMPLE)
        .map_err(|e| CliError::Failed(anyhow::anyhow!("{e}")))?;
    let cfg = RunConfig::parse_str(&text, Some(&a.out)).map_err(usage)?;
    if out.exists() {
        std::fs::remove_file(&out)
            .map_err(|e| CliError::Failed(anyhow::anyhow!("{}: {e}", out.display())))?;
    }
    println!(
        "demo: inputs in {} (demo.toml, sample.csv)",
        a.out.display()
    );
    execute(cfg, &text, out, a.threads, Shard::WHOLE, true, None).map(|_| ())
}

pub fn check(a: CheckArgs) -> Result<(), CliError> {
    let (cfg, _) = load(&a.config)?;
    if let Some(p) = cfg.sample_path() {
        ObservedSample::from_file(&p).map_err(usage)?;
    }
    // the linear theory of every cosmology (reads transfer tables): what a run needs first
    let grid = Grid::new(cfg.clone()).map_err(run_err)?;
    if let Some(w) = resolution_warning(&grid) {
        eprintln!("warning: {w}");
    }
    if let Some(w) = cfg.size_warning() {
        eprintln!("warning: {w}");
    }
    println!(
        "{}: valid ({} = {} hosts)",
        a.config.display(),
        grid_shape(&cfg),
        cfg.n_hosts()
    );
    Ok(())
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

/// The lock on a store for one writer (`io::lock`); a second writer fails at once, naming the
/// holder.
fn writer_lock(target: &Path, command: &str) -> Result<retinue::io::lock::WriterLock, CliError> {
    retinue::io::lock::WriterLock::acquire(target, command)
        .map_err(|e| CliError::Failed(anyhow::anyhow!("{e}")))
}

/// The galaxy model's warning about the trees' resolution (`GalaxyOptions::resolution_warning`,
/// magnitudes in the first cosmology).
fn resolution_warning(grid: &Grid) -> Option<String> {
    let cfg = &grid.config;
    cfg.file
        .galaxies
        .resolution_warning(grid.theories[0].cosmology(), cfg.file.trees.resolution_msun)
}

/// "2 cosmologies x 1 host mass x 150 hosts" (the grid of a run).
fn grid_shape(cfg: &RunConfig) -> String {
    let n = |k: usize, one: &str, many: &str| format!("{k} {}", if k == 1 { one } else { many });
    format!(
        "{} x {} x {}",
        n(cfg.cosmologies.len(), "cosmology", "cosmologies"),
        n(cfg.mass_bins.len(), "host mass", "host masses"),
        n(cfg.file.run.hosts_per_cell, "host", "hosts")
    )
}

pub fn merge(a: MergeArgs) -> Result<(), CliError> {
    guard_output(&a.out, &a.shards, a.overwrite, false)?;
    let _lock = writer_lock(&a.out, "retinue merge")?;
    let p = merge_stores(&a.shards, &a.out).map_err(run_err)?;
    println!("merged {} shards into {}", a.shards.len(), p.display());
    Ok(())
}

#[derive(Debug, Args)]
#[command(
    after_help = "Example:\n  retinue plot run.h5 --out figures/\n\nDraws the figures of a store as PNG and SVG (probability curves with bands, fraction-of-N,\nquenching delay and phase-space matches against the sample, infall-time distributions,\npericentres, subhalo mass function, radial distribution, backsplash by shell, dependence on\nhost mass) with the stored configuration."
)]
pub struct PlotArgs {
    /// A run store.
    pub store: PathBuf,
    /// Directory for the PNG and SVG files (default: NAME-report next to the store).
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Observed sample (CSV or TOML), for the sample's N, its tests and its markers on the
    /// figures; default: the run's sample (looked
    /// for in the run's configuration directory, next to the store, then here).
    #[arg(long)]
    pub sample: Option<PathBuf>,
}

/// What `infall --config FILE` takes from FILE; the other tables of a whole configuration
/// are accepted and ignored (a table name that is not one of them is an error).
#[derive(serde::Deserialize)]
#[serde(deny_unknown_fields)]
#[allow(dead_code)]
struct RetestTables {
    tests: Option<retinue::stats::tests::TestOptions>,
    galaxies: Option<retinue::galaxies::GalaxyOptions>,
    run: Option<RetestRun>,
    cosmology: Option<toml::Value>,
    host: Option<toml::Value>,
    trees: Option<toml::Value>,
    orbits: Option<toml::Value>,
    survey: Option<toml::Value>,
}

#[derive(serde::Deserialize)]
struct RetestRun {
    sample: Option<PathBuf>,
    /// The run's other keys (ignored here).
    #[serde(flatten)]
    _other: toml::Table,
}

/// The configuration stored in a run's store, and the run's observed sample if it can still
/// be found. Relative paths in the stored configuration are relative to the directory of the
/// configuration file the run started from; the store records that directory, and they are
/// resolved there first, then next to the store, then in the working directory. A sample
/// found anywhere but its original place is named in a note; one found nowhere is reported
/// and the tests that need it are skipped. With `want_sample` false (the caller has its own
/// sample) the stored one is not looked for.
fn stored_config(
    meta: &StoreMeta,
    store: &Path,
    want_sample: bool,
) -> Result<(RunConfig, Option<PathBuf>), CliError> {
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
        usage(format!(
            "{}: the stored configuration is not valid TOML: {e}",
            store.display()
        ))
    })?;
    let stored_sample = table
        .get_mut("run")
        .and_then(|r| r.as_table_mut())
        .and_then(|r| r.remove("sample"))
        .and_then(|v| v.as_str().map(PathBuf::from));
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
    let cfg = match (cfg, first_err) {
        (Some(c), _) => c,
        (None, Some(e)) => return Err(usage(e)),
        (None, None) => unreachable!("there is always a base to try"),
    };
    let sample = stored_sample.filter(|_| want_sample).and_then(|rel| {
        let places: Vec<PathBuf> = if rel.is_relative() {
            bases.iter().map(|b| b.join(&rel)).collect()
        } else {
            vec![rel.clone()]
        };
        match places.iter().position(|p| p.is_file()) {
            Some(k) => {
                if k > 0 || recorded.is_none() {
                    eprintln!(
                        "note: using the observed sample {} (the run's `run.sample = {}`; the \
                         run's configuration directory is {})",
                        places[k].display(),
                        rel.display(),
                        match (&recorded, meta.config_dir.is_empty()) {
                            (Some(d), _) => d.display().to_string(),
                            (None, true) => "not recorded in this store".to_string(),
                            (None, false) => format!("{}, which no longer exists", meta.config_dir),
                        }
                    );
                }
                Some(places[k].clone())
            }
            None => {
                eprintln!(
                    "note: the run's observed sample ({}) is not at {}; the tests that need a \
                     sample are skipped, and all-of-N uses tests.n_draw or else N = 11 instead \
                     of the sample's size (give the sample with --sample)",
                    rel.display(),
                    places
                        .iter()
                        .map(|p| p.display().to_string())
                        .collect::<Vec<_>>()
                        .join(" or ")
                );
                None
            }
        }
    });
    Ok((cfg, sample))
}

pub fn plot(a: PlotArgs) -> Result<(), CliError> {
    let meta = read_meta(&a.store).map_err(usage)?;
    let (cfg, run_sample) = stored_config(&meta, &a.store, a.sample.is_none())?;
    let sample = match a.sample.clone().or(run_sample) {
        Some(p) => Some(ObservedSample::from_file(&p).map_err(usage)?),
        None => None,
    };
    let grid = Grid::new(cfg).map_err(run_err)?;
    // whole tables, each host once (a shard is drawn as it is)
    retinue::io::store::check_complete(&a.store).map_err(usage)?;
    let (res, fig, _) = compute(&grid, &a.store, sample.as_ref())?;
    let dir = a.out.clone().unwrap_or_else(|| report_dir(&a.store));
    std::fs::create_dir_all(&dir)
        .map_err(|e| CliError::Failed(anyhow::anyhow!("{}: {e}", dir.display())))?;
    let figs = figures(&grid, &dir, &res, &fig, sample.as_ref())?;
    for f in figs {
        println!("{}", f.display());
    }
    Ok(())
}

pub fn infall(a: InfallArgs) -> Result<(), CliError> {
    let meta = read_meta(&a.store).map_err(usage)?;
    let (mut cfg, mut run_sample) =
        stored_config(&meta, &a.store, a.sample.is_none() && a.config.is_none())?;
    if let Some(p) = &a.config {
        // only the [tests] and [galaxies] tables (and run.sample) come from --config: the
        // cosmologies and everything else that made the store stay those of the run. The file
        // may hold just those tables, or be a whole configuration whose other tables are
        // ignored.
        let text =
            std::fs::read_to_string(p).map_err(|e| usage(format!("{}: {e}", p.display())))?;
        let (retest, mut problems) =
            retinue::config::parse_collecting::<RetestTables>(&text, &p.display().to_string());
        let Some(retest) = retest else {
            return Err(usage(retinue::config::ConfigProblems(problems)));
        };
        if let Some(t) = retest.tests {
            cfg.file.tests = t;
        }
        if let Some(g) = retest.galaxies {
            cfg.file.galaxies = g;
        }
        problems.extend(cfg.file.tests.problems("tests."));
        problems.extend(cfg.file.galaxies.problems("galaxies."));
        // (a sample given with --sample replaces FILE's: FILE's need not exist then)
        if let Some(sp) = retest
            .run
            .and_then(|r| r.sample)
            .filter(|_| a.sample.is_none())
        {
            let sp = if sp.is_relative() {
                p.parent().unwrap_or(Path::new(".")).join(sp)
            } else {
                sp
            };
            if !sp.is_file() {
                problems.push(retinue::error::InvalidValue::new(
                    "run.sample",
                    sp.display(),
                    format!("file not found (named in {})", p.display()),
                ));
            }
            run_sample = Some(sp);
        }
        if !problems.is_empty() {
            return Err(usage(retinue::config::ConfigProblems(problems)));
        }
    }
    let sample = match a.sample.clone().or(run_sample) {
        Some(p) => Some(ObservedSample::from_file(&p).map_err(usage)?),
        None => None,
    };
    let grid = Grid::new(cfg).map_err(run_err)?;
    let _lock = writer_lock(&a.store, "retinue infall")?;
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
    analyse(&grid, &a.store, sample.as_ref()).map(|_| ())
}
