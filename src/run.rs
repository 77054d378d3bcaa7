//! A whole run: the grid of (cosmology × host mass × hosts per cell), hosts synthesised in
//! parallel in order, each batch of hosts written to a crash-safe part file as soon as it is
//! complete (while the next hosts are synthesised), the parts joined into the (compressed)
//! store as they complete, then the tests and the report. Host g of the grid is
//! (cosmology c, mass bin m, k) with g = (c * n_mass + m) * hosts_per_cell + k; its random
//! streams depend only on (master seed, c, m, k), so threads, shards and resumes never change
//! a host's output.

use std::path::{Path, PathBuf};

use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::{Condvar, Mutex};

use rand::Rng;

use crate::config::{MassBin, RunConfig};
use crate::cosmology::Cosmology;
use crate::error::InvalidValue;
use crate::halo::concentration::{concentration, ConcentrationModel};
use crate::halo::definitions::convert_nfw;
use crate::halo::MassDefinition;
use crate::io::inputs::{InputFile, InputFiles};
use crate::io::store::{part_path, parts_dir, store_rows, write_part, StoreMeta, StoreWriter};
use crate::io::{AtomicPath, IoError};
use crate::linear::LinearTheory;
use crate::pair::PairGeometry;
use crate::rng::{host_rng, HostId, Stream, GENERATOR};
use crate::synth::{synthesize_host, synthesize_pair_host, HostRecord, PairInput, SynthOptions};
use crate::trees::{OutputTimes, TreeBuilder, TreeSpec};

/// Errors of a run.
#[derive(Debug, thiserror::Error)]
pub enum RunError {
    #[error("{0}")]
    Invalid(#[from] InvalidValue),
    #[error("{0}")]
    Io(#[from] IoError),
    #[error("host {index} (cosmology {cosmology}, mass bin {mass_bin}, k = {k}, master seed {seed}): {reason}")]
    Host {
        index: u64,
        cosmology: u16,
        mass_bin: u16,
        k: u32,
        seed: u64,
        reason: String,
    },
    /// A problem with what the user gave (a configuration, shards, an interrupted run's
    /// directory): the command line exits with code 2.
    #[error("{0}")]
    Input(String),
    #[error("{0}")]
    Other(String),
}

/// Which slice of the grid this process runs.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Shard {
    pub index: u32,
    pub count: u32,
}

impl Shard {
    pub const WHOLE: Shard = Shard { index: 0, count: 1 };

    /// Contiguous block of global host indices [lo, hi).
    pub fn range(&self, n_hosts: u64) -> (u64, u64) {
        let n = self.count as u64;
        let k = self.index as u64;
        (n_hosts * k / n, n_hosts * (k + 1) / n)
    }
}

/// Everything needed to synthesise any host of the grid.
pub struct Grid {
    pub config: RunConfig,
    pub theories: Vec<LinearTheory>,
    /// The configured lower edge of the backsplash test's peak-mass window when it lay below
    /// the trees' resolution (Msun; None: it did not). The window then starts at the
    /// resolution: backsplash haloes below it are not in the trees, while the field count
    /// would include them (`analysis::resolution_warning` says so).
    pub backsplash_floor_raised_from_msun: Option<f64>,
}

impl Grid {
    pub fn new(config: RunConfig) -> Result<Self, RunError> {
        let theories = config
            .cosmologies
            .iter()
            .map(|(p, o)| {
                let c = Cosmology::new(p.clone()).map_err(|e| RunError::Input(e.to_string()))?;
                LinearTheory::new(c, o.clone()).map_err(|e| RunError::Input(e.to_string()))
            })
            .collect::<Result<Vec<_>, _>>()?;
        let mut config = config;
        let res = config.file.trees.resolution_msun;
        let window = &mut config.file.tests.backsplash.m_peak_msun;
        if window[1] <= res {
            return Err(RunError::Input(
                InvalidValue::new(
                    "tests.backsplash.m_peak_msun",
                    format!("[{:e}, {:e}]", window[0], window[1]),
                    format!(
                        "its upper edge must lie above trees.resolution_msun = {res:e} Msun \
                         (the trees hold no halo below it)"
                    ),
                )
                .to_string(),
            ));
        }
        let backsplash_floor_raised_from_msun = (window[0] < res).then(|| {
            let was = window[0];
            window[0] = res;
            was
        });
        let grid = Self {
            config,
            theories,
            backsplash_floor_raised_from_msun,
        };
        grid.check_masses()?;
        grid.check_pairs()?;
        Ok(grid)
    }

    /// Every pair's central separation lies beyond the sum of the two hosts' virial radii
    /// today (at the central partner mass, for every cosmology and host mass of the grid).
    fn check_pairs(&self) -> Result<(), RunError> {
        let z = self.config.file.host.z_final;
        for (ei, env) in self.config.environments.iter().enumerate() {
            let Some(spec) = &env.pair else { continue };
            let key = if self.config.environments.len() > 1 {
                format!("environment[{ei}].separation_kpc")
            } else {
                "environment.separation_kpc".into()
            };
            for lt in &self.theories {
                for bin in &self.config.mass_bins {
                    let ends = match *bin {
                        MassBin::Fixed(m) => [m, m],
                        MassBin::LogUniform(a, b) => [a, b],
                    };
                    for m in ends {
                        let mp = match spec.partner_mass {
                            crate::config::PartnerMass::Msun(x) => x,
                            crate::config::PartnerMass::Ratio(q) => q * m,
                        };
                        let r = |mm: f64| {
                            MassDefinition::Vir.radius_kpc(
                                lt.cosmology(),
                                self.virial_mass(lt, mm),
                                z,
                            )
                        };
                        let res = self.config.file.trees.resolution_msun;
                        if mp <= 2.0 * res {
                            let key = key.replace("separation_kpc", "partner_mass_msun");
                            return Err(RunError::Input(format!(
                                "{key}: a partner of {mp:.3e} Msun (for host {m:.3e} Msun) must \
                                 be more than twice trees.resolution_msun = {res:.3e} Msun, like \
                                 every host; allowed: above {:.3e} Msun",
                                2.0 * res
                            )));
                        }
                        let sum = r(m) + r(mp);
                        if spec.separation_kpc <= sum {
                            return Err(RunError::Input(format!(
                                "{key} = {} kpc: the two hosts would overlap (host {m:.3e} Msun \
                                 and partner {mp:.3e} Msun have virial radii summing to \
                                 {sum:.0} kpc); allowed: above {sum:.0} kpc",
                                spec.separation_kpc
                            )));
                        }
                    }
                }
            }
        }
        Ok(())
    }

    /// Every cell's tree resolution and host masses lie inside its cosmology's sigma(M) table
    /// (what growing a tree needs): found here, before the first host, rather than by the
    /// first tree of a run.
    fn check_masses(&self) -> Result<(), RunError> {
        let f = &self.config.file;
        let res = f.trees.resolution_msun;
        for (ci, lt) in self.theories.iter().enumerate() {
            let (lo, hi) = lt.sigma_table().mass_range_msun();
            let cell = if self.theories.len() > 1 {
                format!(
                    " of cosmology \"{}\" ([[cosmology]] table {} of {})",
                    self.config.cosmology_labels[ci],
                    ci + 1,
                    self.theories.len()
                )
            } else {
                String::new()
            };
            if res < lo {
                let why = if lt.m_half_mode_msun().is_some() {
                    " (warm dark matter: sigma(M) flattens toward small masses and the table ends where it stops changing)"
                } else {
                    ""
                };
                return Err(RunError::Input(format!(
                    "trees.resolution_msun = {res:.3e} Msun lies below the sigma(M) table{cell}, \
                     which starts at {lo:.3e} Msun{why}: allowed [{lo:.3e}, {hi:.3e}] Msun; \
                     raise trees.resolution_msun to at least {lo:.3e}"
                )));
            }
            for (bi, bin) in self.config.mass_bins.iter().enumerate() {
                let ends = match *bin {
                    MassBin::Fixed(m) => [m, m],
                    MassBin::LogUniform(a, b) => [a, b],
                };
                for m in ends {
                    let m_vir = self.virial_mass(lt, m);
                    if m_vir > hi || m_vir <= res {
                        return Err(RunError::Input(format!(
                            "host.mass_msun = {m:.3e} Msun (mass bin {bi}; {m_vir:.3e} Msun \
                             virial) must lie above trees.resolution_msun = {res:.3e} Msun and \
                             inside the sigma(M) table{cell}: allowed ({res:.3e}, {hi:.3e}] Msun"
                        )));
                    }
                }
            }
        }
        Ok(())
    }

    /// Virial mass (Msun) of a host of mass m in the configured definition.
    pub fn virial_mass(&self, lt: &LinearTheory, m: f64) -> f64 {
        let cfg = &self.config;
        let z = cfg.file.host.z_final;
        if cfg.host_mass_definition == MassDefinition::Vir {
            return m;
        }
        let c = concentration(
            lt,
            ConcentrationModel::DuttonMaccio14,
            m,
            z,
            cfg.host_mass_definition,
        );
        convert_nfw(
            lt.cosmology(),
            m,
            c,
            z,
            cfg.host_mass_definition,
            MassDefinition::Vir,
        )
        .0
    }

    pub fn n_hosts(&self) -> u64 {
        self.config.n_hosts()
    }

    /// The identity of global host g. Hosts are numbered cell by cell, cells in the order
    /// (cosmology, host mass, environment); a cell holds `run.hosts_per_cell` hosts, or as many
    /// pairs (two consecutive hosts each: the primary, then its partner).
    pub fn host_id(&self, g: u64) -> HostId {
        let per = self.config.file.run.hosts_per_cell as u64;
        let envs = &self.config.environments;
        let per_mass: u64 = envs.iter().map(|e| e.members() * per).sum();
        let nm = self.config.mass_bins.len() as u64;
        let (c, rest) = (g / (nm * per_mass), g % (nm * per_mass));
        let (m, mut k) = (rest / per_mass, rest % per_mass);
        let mut e = 0;
        while k >= envs[e].members() * per {
            k -= envs[e].members() * per;
            e += 1;
        }
        let n = envs[e].members();
        HostId::new(c as u16, m as u16, (k / n) as u32).in_environment(e as u8, (k % n) as u8)
    }

    /// Host mass (Msun, config definition) of host id.
    fn host_mass(&self, id: HostId) -> f64 {
        match self.config.mass_bins[id.mass_bin as usize] {
            MassBin::Fixed(m) => m,
            MassBin::LogUniform(lo, hi) => {
                let mut r = host_rng(self.config.file.run.master_seed, id, Stream::HostDraw);
                (lo.ln() + (hi.ln() - lo.ln()) * r.random::<f64>()).exp()
            }
        }
    }

    /// The draw of the pair of host id (None for an isolated host): on the stream of the
    /// pair's primary, so both hosts of a pair draw the same.
    pub fn pair_geometry(&self, id: HostId) -> Result<Option<PairGeometry>, String> {
        let Some(spec) = &self.config.environments[id.environment as usize].pair else {
            return Ok(None);
        };
        let primary = id.in_environment(id.environment, 0);
        let lt = &self.theories[id.cosmology as usize];
        let cosmo = lt.cosmology();
        let z = self.config.file.host.z_final;
        let m_primary = self.host_mass(primary);
        let r_primary = MassDefinition::Vir.radius_kpc(cosmo, self.virial_mass(lt, m_primary), z);
        let mut rng = host_rng(self.config.file.run.master_seed, primary, Stream::PairDraw);
        let min_sep = |m_partner: f64| {
            r_primary + MassDefinition::Vir.radius_kpc(cosmo, self.virial_mass(lt, m_partner), z)
        };
        PairGeometry::draw(spec, m_primary, min_sep, &mut rng).map(Some)
    }

    /// Synthesis options of host id (for a partner, `pair_geometry` gives its mass).
    pub fn options(&self, id: HostId) -> SynthOptions {
        let mass = match self.pair_geometry(id) {
            Ok(Some(g)) if id.member == 1 => g.partner_mass_msun,
            _ => self.host_mass(id),
        };
        self.options_for_mass(id, mass)
    }

    /// Synthesis options of host id with host mass `mass` (config definition).
    fn options_for_mass(&self, id: HostId, mass: f64) -> SynthOptions {
        let cfg = &self.config;
        let lt = &self.theories[id.cosmology as usize];
        let f = &cfg.file;
        let m_vir = self.virial_mass(lt, mass);
        let z = f.host.z_final;
        // today's disc and bulge for this host's mass: the configured ones describe a host of
        // the reference mass, and scale with the stellar mass of the Behroozi et al. 2013
        // relation (a host of exactly the reference mass keeps them bit for bit)
        let mut host = cfg.host;
        if f.host.baryons_scale_with_mass {
            let m_ref = self.virial_mass(lt, f.host.baryons_reference_mass_msun);
            let s = 10f64.powf(
                crate::galaxies::behroozi13::log10_mstar(m_vir, z)
                    - crate::galaxies::behroozi13::log10_mstar(m_ref, z),
            );
            host.baryons.disc_mass_msun *= s;
            host.baryons.bulge_mass_msun *= s;
        }
        SynthOptions {
            tree: TreeSpec {
                m_host_msun: m_vir,
                z_final: z,
                m_resolution_msun: f.trees.resolution_msun,
                z_max: f.trees.z_max,
                outputs: OutputTimes::UniformLnA(f.trees.output_steps),
                pch08: cfg.pch08,
            },
            host,
            orbits: f.orbits,
            galaxies: f.galaxies,
            survey: f.survey,
        }
    }

    /// Synthesise global host g. For testing the recovery of failed shards, the environment
    /// variable RETINUE_FAULT_HOST=g makes host g fail (fault injection; never set it in
    /// production).
    pub fn synthesize(&self, g: u64, builder: &mut TreeBuilder) -> Result<HostRecord, RunError> {
        let id = self.host_id(g);
        if std::env::var("RETINUE_FAULT_HOST")
            .ok()
            .and_then(|v| v.parse::<u64>().ok())
            == Some(g)
        {
            return Err(RunError::Host {
                index: g,
                cosmology: id.cosmology,
                mass_bin: id.mass_bin,
                k: id.index,
                seed: self.config.file.run.master_seed,
                reason: "injected fault (RETINUE_FAULT_HOST)".into(),
            });
        }
        let seed = self.config.file.run.master_seed;
        let lt = &self.theories[id.cosmology as usize];
        let fail = |reason: String| RunError::Host {
            index: g,
            cosmology: id.cosmology,
            mass_bin: id.mass_bin,
            k: id.index,
            seed,
            reason,
        };
        let geometry = self.pair_geometry(id).map_err(fail)?;
        let result = match geometry {
            None => synthesize_host(lt, &self.options(id), seed, id, builder),
            Some(geometry) => {
                let primary_mass = self.host_mass(id.in_environment(id.environment, 0));
                let (own, other) = if id.member == 0 {
                    (primary_mass, geometry.partner_mass_msun)
                } else {
                    (geometry.partner_mass_msun, primary_mass)
                };
                let spec = self.config.environments[id.environment as usize]
                    .pair
                    .expect("a pair");
                let pair = PairInput {
                    partner_options: self.options_for_mass(id.partner(), other),
                    geometry,
                    region_radius_kpc: spec.region_radius_kpc,
                };
                synthesize_pair_host(
                    lt,
                    &self.options_for_mass(id, own),
                    &pair,
                    seed,
                    id,
                    builder,
                )
            }
        };
        result.map_err(|e| RunError::Host {
            index: g,
            cosmology: id.cosmology,
            mass_bin: id.mass_bin,
            k: id.index,
            seed,
            reason: e.to_string(),
        })
    }

    /// The files this grid was read from besides its configuration, with the SHA-256 of what
    /// was read (`io::inputs`): the transfer-function tables of its cosmologies.
    pub fn input_files(&self) -> InputFiles {
        let n = self.config.cosmologies.len();
        InputFiles(
            self.config
                .cosmologies
                .iter()
                .zip(&self.theories)
                .enumerate()
                .filter_map(|(i, ((_, lin), lt))| {
                    let path = lin.transfer_table.as_ref()?;
                    let sha256 = lt.transfer_table_sha256()?.to_string();
                    let key = if n == 1 {
                        "cosmology.transfer_table".to_string()
                    } else {
                        format!("cosmology[{i}].transfer_table")
                    };
                    // (absolute, as `config_dir` is: a relative path says little once the
                    // working directory is another)
                    let path = path.canonicalize().unwrap_or_else(|_| path.clone());
                    Some(InputFile {
                        key,
                        path: path.display().to_string(),
                        sha256,
                    })
                })
                .collect(),
        )
    }

    pub fn meta(&self, config_text: &str, shard: Shard) -> StoreMeta {
        StoreMeta {
            input_files: self.input_files().to_text(),
            orbit_options: toml::to_string(&self.config.file.orbits).unwrap_or_default(),
            config_toml: config_text.to_string(),
            master_seed: self.config.file.run.master_seed,
            generator: GENERATOR.to_string(),
            crate_version: env!("CARGO_PKG_VERSION").to_string(),
            build_info: format!("{} {}", std::env::consts::OS, std::env::consts::ARCH),
            build_fingerprint: crate::BUILD_FINGERPRINT.to_string(),
            n_hosts_total: self.n_hosts(),
            shard: (shard.index, shard.count),
            config_dir: self
                .config
                .base_dir
                .as_ref()
                .map(|d| {
                    let d = if d.as_os_str().is_empty() {
                        Path::new(".")
                    } else {
                        d.as_path()
                    };
                    d.canonicalize()
                        .unwrap_or_else(|_| d.to_path_buf())
                        .display()
                        .to_string()
                })
                .unwrap_or_default(),
        }
    }
}

/// Progress reports: (hosts done, hosts total).
pub type Progress<'a> = &'a (dyn Fn(u64, u64) + Sync);

/// What the stamp file `path` of a parts directory holds (None: it did not exist, and
/// `this` is written to it now): a resumed run compares it with its own value.
fn read_or_stamp(path: &Path, this: &str) -> Result<Option<String>, IoError> {
    if path.exists() {
        std::fs::read_to_string(path)
            .map(Some)
            .map_err(|e| IoError::fs(path, e))
    } else {
        std::fs::write(path, this).map_err(|e| IoError::fs(path, e))?;
        Ok(None)
    }
}

/// Synthesise this shard's hosts into `out` (crash-safe; resumable). Returns the path.
pub fn synthesize_to_store(
    grid: &Grid,
    config_text: &str,
    out: &Path,
    shard: Shard,
    resume: bool,
    progress: Progress,
) -> Result<PathBuf, RunError> {
    let (lo, hi) = shard.range(grid.n_hosts());
    let batch = grid.config.file.run.batch_hosts as u64;
    let dir = parts_dir(out);
    if dir.exists() && !resume {
        return Err(RunError::Input(format!(
            "{} holds parts of an interrupted run; add --resume to continue it, or clear them \
             with `rm -r {}`",
            dir.display(),
            dir.display()
        )));
    }
    std::fs::create_dir_all(&dir).map_err(|e| IoError::fs(&dir, e))?;
    let stamp = dir.join("config.toml");
    // parts of an interrupted run (its stamps are there): what it recorded is compared below
    let interrupted = stamp.exists();
    // a resumed run must be of the same build: one store would otherwise hold hosts
    // synthesised by different code (the crate version does not change between builds);
    // parts with a configuration but no build stamp were written by a build from before it
    // was recorded
    let this_build = crate::BUILD_FINGERPRINT;
    let old_build = if stamp.exists() && !dir.join("build").exists() {
        Some(String::new())
    } else {
        read_or_stamp(&dir.join("build"), this_build)?
    };
    if let Some(old) = old_build.filter(|old| old.trim() != this_build) {
        return Err(RunError::Input(format!(
            "--resume: the parts in {} were written by build {} of retinue, and this is \
             build {this_build}: a store must not mix hosts synthesised by different code; \
             finish the run with the build that started it, or clear the parts with \
             `rm -r {}` to start again with this build",
            dir.display(),
            fingerprint_name(old.trim()),
            dir.display()
        )));
    }
    // ... have the same configuration
    if read_or_stamp(&stamp, config_text)?.is_some_and(|old| old != config_text) {
        return Err(RunError::Input(format!(
            "--resume: the configuration differs from the one of the interrupted run in {} \
             (kept there as config.toml); resume with that configuration, or clear the \
             stale parts with `rm -r {}`",
            dir.display(),
            dir.display()
        )));
    }
    // ... read the same files besides the configuration (review: a transfer table replaced
    // between a kill and the resume gave a store whose first hosts were grown from one table
    // and the rest from the other); parts from before the files were recorded have none
    let inputs = grid.input_files();
    let inputs_stamp = dir.join("inputs");
    let old_inputs = if interrupted && !inputs_stamp.exists() {
        Some(String::new())
    } else {
        read_or_stamp(&inputs_stamp, &inputs.to_text())?
    };
    if let Some(old) = old_inputs {
        let what = format!("the interrupted run in {}", dir.display());
        let diffs = InputFiles::differences(&InputFiles::parse(&old), &inputs, &what);
        if !diffs.is_empty() {
            return Err(RunError::Input(format!(
                "--resume: {}; a store must not mix hosts grown from different files: put the \
                 original file back and resume, or clear the parts with `rm -r {}` to start \
                 again with the file as it is now",
                diffs.join("; "),
                dir.display()
            )));
        }
    }
    // ... and be the same shard: parts hold the hosts of the shard that wrote them
    let this = format!("{}/{}", shard.index + 1, shard.count);
    if let Some(old) = read_or_stamp(&dir.join("shard"), &this)?.filter(|old| old.trim() != this) {
        let old = old.trim();
        return Err(RunError::Input(format!(
            "--resume: the parts in {} are of shard {old}, not {this}; resume with --shard \
             {old}, or clear them with `rm -r {}` to start shard {this}",
            dir.display(),
            dir.display()
        )));
    }
    let meta = grid.meta(config_text, shard);
    let n_parts = (hi - lo).div_ceil(batch) as usize;
    let bounds = |k: usize| {
        let a = lo + k as u64 * batch;
        (a, (a + batch).min(hi))
    };
    // Every worker takes the next host in order, keeps its record until the host's batch is
    // complete, and the worker that completes a batch writes the batch's part file. Hosts of at
    // most WINDOW batches are in memory at once: a worker that would start a host further
    // ahead waits until the oldest batch in memory has been written. There is no barrier
    // between batches, so no thread waits for the slowest host of a batch.
    const WINDOW: usize = 3;
    // a part is done if it opens as HDF5: one left empty or cut short by a system crash
    // (before parts were flushed to disk) is removed and made again
    let todo: Vec<usize> = (0..n_parts)
        .filter(|&k| {
            let p = part_path(&dir, k);
            if !p.exists() {
                return true;
            }
            let readable = hdf5::File::open(&p).is_ok();
            if !readable {
                eprintln!(
                    "{} cannot be read (damaged by an earlier crash?): making it again",
                    p.display()
                );
                let _ = std::fs::remove_file(&p);
            }
            !readable
        })
        .collect();
    let size = |b: usize| {
        let (a, e) = bounds(todo[b]);
        (e - a) as usize
    };
    let n_todo: u64 = (0..todo.len()).map(|b| size(b) as u64).sum();
    let total = hi - lo;
    let done = AtomicU64::new(total - n_todo);
    progress(done.load(Ordering::Relaxed), total);
    struct State {
        /// The next host to start: offset `i` in batch `b` of `todo`.
        b: usize,
        i: usize,
        /// Records of each batch of `todo` (by offset; allocated when the batch starts, freed
        /// when it is written).
        slots: Vec<Vec<Option<HostRecord>>>,
        filled: Vec<usize>,
        written: Vec<bool>,
        /// First batch of `todo` not yet written.
        low: usize,
        error: Option<RunError>,
    }
    let state = Mutex::new(State {
        b: 0,
        i: 0,
        slots: todo.iter().map(|_| Vec::new()).collect(),
        filled: vec![0; todo.len()],
        written: vec![false; todo.len()],
        low: 0,
        error: None,
    });
    let wake = Condvar::new();
    // a worker that panics is caught below; the state stays usable
    let lock = || state.lock().unwrap_or_else(|p| p.into_inner());
    // The parts are joined into the store while hosts are still being synthesised: a worker
    // that has written a part appends every part that now follows the joined ones without a
    // gap (one worker at a time; the others go on synthesising). The join compresses the
    // store (`io::store::col_filters`), which as one step after the last host would leave
    // the other cores idle. What is left is joined after the last part.
    let atomic = AtomicPath::new(out);
    let _ = std::fs::remove_file(&atomic.temp_path);
    let joiner: Mutex<(Option<StoreWriter>, usize)> = Mutex::new((None, 0));
    let join_ready = |j: &mut (Option<StoreWriter>, usize)| -> Result<(), IoError> {
        while j.1 < n_parts && part_path(&dir, j.1).exists() {
            let p = part_path(&dir, j.1);
            let w = match &mut j.0 {
                Some(w) => w,
                None => {
                    // chunks sized for the whole store, from its first part
                    let (_, s) = store_rows(&p).map_err(|e| IoError::hdf5(&p, e))?;
                    let rows = (hi - lo, s.saturating_mul(n_parts as u64));
                    let w = StoreWriter::create_for(&atomic.temp_path, &meta, rows, true)
                        .map_err(|e| IoError::hdf5(&atomic.temp_path, e))?;
                    j.0.insert(w)
                }
            };
            w.append_store(&p)?;
            j.1 += 1;
        }
        Ok(())
    };
    // the space a failed join needed: about the parts' size (the store is smaller)
    let parts_bytes = || -> u64 {
        let sizes: Vec<u64> = (0..n_parts)
            .filter_map(|k| std::fs::metadata(part_path(&dir, k)).ok())
            .map(|m| m.len())
            .collect();
        let per = sizes.iter().sum::<u64>() / (sizes.len().max(1) as u64);
        per * n_parts as u64
    };
    let fail = |st: &mut State, e: RunError| {
        if st.error.is_none() {
            st.error = Some(e);
        }
        wake.notify_all();
    };
    // the next host in order: (batch of `todo`, offset in it, global host)
    let take_next = |st: &mut State| -> (usize, usize, u64) {
        let (b, i) = (st.b, st.i);
        if i == 0 {
            st.slots[b] = (0..size(b)).map(|_| None).collect();
        }
        st.i += 1;
        if st.i == size(b) {
            st.b += 1;
            st.i = 0;
        }
        (b, i, bounds(todo[b]).0 + i as u64)
    };
    let worker = || {
        let mut builder = TreeBuilder::new(grid.config.pch08).expect("validated");
        // the hosts this worker has taken and not yet synthesised
        let mut mine: Vec<(usize, usize, u64)> = Vec::with_capacity(2);
        loop {
            if mine.is_empty() {
                let mut st = lock();
                loop {
                    if st.error.is_some() || st.b >= todo.len() {
                        return;
                    }
                    if st.b < st.low + WINDOW {
                        break;
                    }
                    st = wake.wait(st).unwrap_or_else(|p| p.into_inner());
                }
                let first = take_next(&mut st);
                mine.push(first);
                // The primary of a pair takes its partner (the next host) with it when that is
                // free to start without waiting: the partner's synthesis then finds both trees
                // and the pair's fields in this thread's cache (`synth`) instead of another
                // thread growing them again at the same time. Records do not depend on it.
                let g = first.2;
                if st.b < todo.len()
                    && st.b < st.low + WINDOW
                    && bounds(todo[st.b]).0 + st.i as u64 == g + 1
                    && grid.host_id(g + 1) == grid.host_id(g).partner()
                {
                    mine.push(take_next(&mut st));
                }
                mine.reverse();
            } else if lock().error.is_some() {
                return;
            }
            let (b, i, g) = mine.pop().expect("a host taken");
            let k = todo[b];
            // a panic would leave its batch incomplete and the other workers waiting for it:
            // it ends the run with an error instead
            let synth = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
                grid.synthesize(g, &mut builder)
            }));
            let rec = match synth {
                Ok(Ok(r)) => r,
                Ok(Err(e)) => return fail(&mut lock(), e),
                Err(_) => {
                    let e = RunError::Other(format!(
                        "host {g}: internal error (panic) while synthesising it; please report \
                         it with the configuration and the master seed"
                    ));
                    return fail(&mut lock(), e);
                }
            };
            let full = {
                let mut st = lock();
                st.slots[b][i] = Some(rec);
                st.filled[b] += 1;
                if st.filled[b] == st.slots[b].len() {
                    Some(std::mem::take(&mut st.slots[b]))
                } else {
                    None
                }
            };
            progress(done.fetch_add(1, Ordering::Relaxed) + 1, total);
            if let Some(recs) = full {
                let a = bounds(k).0;
                let refs: Vec<(u64, &HostRecord)> = recs
                    .iter()
                    .enumerate()
                    .map(|(i, r)| (a + i as u64, r.as_ref().expect("a full batch")))
                    .collect();
                let result = write_part(&part_path(&dir, k), &meta, &refs);
                drop(refs);
                drop(recs);
                let mut st = lock();
                if let Err(e) = result {
                    return fail(&mut st, e.into());
                }
                st.written[b] = true;
                while st.low < todo.len() && st.written[st.low] {
                    st.low += 1;
                }
                wake.notify_all();
                drop(st);
                // join what is ready, unless another worker is at it
                if let Ok(mut j) = joiner.try_lock() {
                    if let Err(e) = join_ready(&mut j) {
                        return fail(&mut lock(), e.needing(parts_bytes()).into());
                    }
                }
            }
        }
    };
    rayon::scope(|s| {
        for _ in 0..rayon::current_num_threads() {
            s.spawn(|_| {
                // a panic anywhere in a worker (writing a part, reporting progress) would
                // leave its batch unwritten and the others waiting: it ends the run instead
                if std::panic::catch_unwind(std::panic::AssertUnwindSafe(&worker)).is_err() {
                    fail(
                        &mut lock(),
                        RunError::Other(
                            "internal error (panic) in a worker thread; please report it with \
                             the configuration and the master seed"
                                .into(),
                        ),
                    );
                }
            });
        }
    });
    if let Some(e) = state.into_inner().unwrap_or_else(|p| p.into_inner()).error {
        // keep finished parts for --resume; a run that finished none (it failed on its first
        // hosts, as on a configuration problem) leaves nothing that would block the next run
        if (0..n_parts).all(|k| !part_path(&dir, k).exists()) {
            let _ = std::fs::remove_dir_all(&dir);
        }
        return Err(e);
    }
    // join the parts not joined yet
    let mut j = joiner.into_inner().unwrap_or_else(|p| p.into_inner());
    join_ready(&mut j).map_err(|e| e.needing(parts_bytes()))?;
    let w = match j.0 {
        Some(w) => w,
        // no hosts (an empty shard): an empty store
        None => StoreWriter::create_for(&atomic.temp_path, &meta, (0, 0), true)
            .map_err(|e| IoError::hdf5(&atomic.temp_path, e))?,
    };
    if j.1 < n_parts {
        return Err(RunError::Other(format!(
            "part {} of {} is missing from {} after the run; run again with --resume",
            j.1 + 1,
            n_parts,
            dir.display()
        )));
    }
    w.flush()
        .map_err(|e| IoError::hdf5(&atomic.temp_path, e).needing(parts_bytes()))?;
    drop(w);
    retire_reports(out)?;
    let path = atomic.commit()?;
    let _ = std::fs::remove_dir_all(&dir);
    Ok(path)
}

/// Configuration keys (dotted; a table stands for everything in it) that do not change the
/// hosts a run grows: the tests, the observed sample, and how the work is spread.
const HOST_NEUTRAL_KEYS: [&str; 6] = [
    "tests",
    "run.sample",
    "run.sample_columns",
    "run.threads",
    "run.batch_hosts",
    "run.output",
];

/// Whether dotted key `k` is `table` or lies inside it.
fn key_under(k: &str, table: &str) -> bool {
    k == table
        || k.strip_prefix(table)
            .is_some_and(|r| r.starts_with('.') || r.starts_with('['))
}

/// The dotted keys whose values differ between two configuration texts (comments and layout
/// do not count; a text that does not parse counts as one difference, "(the whole file)").
/// Texts that this version reads as configurations are compared as read, defaults filled
/// in, so that a key written at its default equals the key left out, and a list of one
/// value (`mass_msun = [1.2e12]`, one `[[cosmology]]`) equals the value alone.
fn config_differences(a: &str, b: &str) -> Vec<String> {
    // as read by this version (None: a store's text from a version that read other keys)
    fn as_read(text: &str) -> Option<String> {
        let f: crate::config::RunConfigFile = toml::from_str(text).ok()?;
        toml::to_string(&f).ok()
    }
    let (a, b) = match (as_read(a), as_read(b)) {
        (Some(x), Some(y)) => (x, y),
        _ => (a.to_string(), b.to_string()),
    };
    fn walk(path: &str, a: Option<&toml::Value>, b: Option<&toml::Value>, out: &mut Vec<String>) {
        use toml::Value;
        match (a, b) {
            (Some(Value::Table(x)), Some(Value::Table(y))) => {
                let mut keys: Vec<&String> = x.keys().chain(y.keys()).collect();
                keys.sort();
                keys.dedup();
                for k in keys {
                    let p = if path.is_empty() {
                        k.clone()
                    } else {
                        format!("{path}.{k}")
                    };
                    walk(&p, x.get(k), y.get(k), out);
                }
            }
            (Some(Value::Array(x)), Some(Value::Array(y)))
                if x.len() == y.len() && x.iter().all(|v| v.is_table()) =>
            {
                for (i, (u, v)) in x.iter().zip(y).enumerate() {
                    walk(&format!("{path}[{i}]"), Some(u), Some(v), out);
                }
            }
            (x, y) if x == y => {}
            // a list of one value and the value alone
            (Some(Value::Array(x)), Some(v)) | (Some(v), Some(Value::Array(x)))
                if x.len() == 1 && !v.is_array() =>
            {
                walk(path, x.first(), Some(v), out)
            }
            // 1e9 and 1000000000 are one number (review)
            (Some(Value::Integer(i)), Some(Value::Float(f)))
            | (Some(Value::Float(f)), Some(Value::Integer(i)))
                if *i as f64 == *f => {}
            _ => out.push(path.to_string()),
        }
    }
    match (
        toml::from_str::<toml::Table>(&a),
        toml::from_str::<toml::Table>(&b),
    ) {
        (Ok(x), Ok(y)) => {
            let mut out = Vec::new();
            let (x, y) = (toml::Value::Table(x), toml::Value::Table(y));
            walk("", Some(&x), Some(&y), &mut out);
            out
        }
        _ => vec!["(the whole file)".to_string()],
    }
}

/// Join shard stores (in any order) into one store ordered by global host index.
pub fn merge_stores(inputs: &[PathBuf], out: &Path) -> Result<PathBuf, RunError> {
    use crate::io::store::check_complete;
    let mut metas = Vec::new();
    for p in inputs {
        // every shard must hold each of its hosts exactly once
        // (a shard that cannot be read is bad input, like any other file given)
        metas.push((
            check_complete(p).map_err(|e| RunError::Input(e.to_string()))?,
            p.clone(),
        ));
    }
    // in shard order from here, so that what the merged store keeps of differing host-neutral
    // settings is the first shard's whatever the order of the arguments (review)
    metas.sort_by_key(|(m, _)| m.shard.0);
    let first = metas
        .first()
        .ok_or_else(|| RunError::Input("no stores to merge".into()))?
        .0
        .clone();
    for (m, p) in &metas {
        if m.master_seed != first.master_seed {
            return Err(RunError::Input(format!(
                "{}: master seed {} differs from {}'s ({}): shards of one run share its seed",
                p.display(),
                m.master_seed,
                metas[0].1.display(),
                first.master_seed
            )));
        }
        if m.config_toml == first.config_toml {
            continue;
        }
        // configurations that differ in comments or layout, or only in settings that do not
        // change the hosts, are the same run (a walkthrough's comment added between two
        // shards' jobs refused the merge without saying why); anything else is named
        let keys = config_differences(&first.config_toml, &m.config_toml);
        let grows_hosts = |k: &String| !HOST_NEUTRAL_KEYS.iter().any(|n| key_under(k, n));
        let shown = |ks: &[String]| {
            let mut s = ks.iter().take(6).cloned().collect::<Vec<_>>().join(", ");
            if ks.len() > 6 {
                s += &format!(" and {} more", ks.len() - 6);
            }
            s
        };
        if keys.iter().any(grows_hosts) {
            let hosts: Vec<String> = keys.iter().filter(|k| grows_hosts(k)).cloned().collect();
            return Err(RunError::Input(format!(
                "{}: a different configuration than {}: {} differ{}; shards of one run must \
                 grow their hosts from the same configuration: re-run this shard with the \
                 other's",
                p.display(),
                metas[0].1.display(),
                shown(&hosts),
                if hosts.len() == 1 { "s" } else { "" }
            )));
        }
        if !keys.is_empty() {
            eprintln!(
                "note: {} differs from {} only in settings that do not change the hosts ({}); \
                 the merged store keeps those of {} (shard {}/{}; test with others through \
                 `retinue infall --config FILE`)",
                p.display(),
                metas[0].1.display(),
                shown(&keys),
                metas[0].1.display(),
                first.shard.0 + 1,
                first.shard.1
            );
        }
    }
    // ... from the same input files (the same configuration may name a transfer table whose
    // contents changed between the shards' runs)
    let first_inputs = InputFiles::parse(&first.input_files);
    for (m, p) in &metas {
        let inputs = InputFiles::parse(&m.input_files);
        if let Some((key, a, b)) = first_inputs.first_difference(&inputs) {
            return Err(RunError::Input(format!(
                "{} and {} were grown from different files at {key} ({}: {}; {}: {}); a \
                 merged store must not mix hosts grown from different files: re-run the shards \
                 made with the other file (`retinue run CONFIG --shard K/N`), then merge again",
                p.display(),
                metas[0].1.display(),
                metas[0].1.display(),
                a,
                p.display(),
                b,
            )));
        }
    }
    // ... and be synthesised by the same build (the crate version does not change between
    // development builds)
    for (m, p) in &metas {
        if m.build_fingerprint != first.build_fingerprint {
            return Err(RunError::Input(format!(
                "{} was written by build {} of retinue and {} by build {}: a merged store must \
                 not mix hosts synthesised by different code; re-run the shards of one build \
                 with the other (`retinue run CONFIG --shard K/N`), then merge again",
                p.display(),
                fingerprint_name(&m.build_fingerprint),
                metas[0].1.display(),
                fingerprint_name(&first.build_fingerprint)
            )));
        }
    }
    metas.sort_by_key(|(m, _)| m.shard.0);
    for w in metas.windows(2) {
        if w[0].0.shard == w[1].0.shard {
            return Err(RunError::Input(format!(
                "shard {}/{} is given twice ({} and {})",
                w[0].0.shard.0 + 1,
                w[0].0.shard.1,
                w[0].1.display(),
                w[1].1.display()
            )));
        }
    }
    let count = first.shard.1;
    let have: Vec<u32> = metas.iter().map(|(m, _)| m.shard.0).collect();
    // shards are numbered from 1 on the command line (--shard K/N) and from 0 in the store
    let missing: Vec<String> = (0..count)
        .filter(|k| !have.contains(k))
        .map(|k| format!("{}/{count}", k + 1))
        .collect();
    if metas.iter().any(|(m, _)| m.shard.1 != count) {
        return Err(RunError::Input(format!(
            "the stores come from splits into different numbers of shards ({})",
            metas
                .iter()
                .map(|(m, p)| format!("{}: shard {}/{}", p.display(), m.shard.0 + 1, m.shard.1))
                .collect::<Vec<_>>()
                .join(", ")
        )));
    }
    if !missing.is_empty() {
        let (what, verb) = if missing.len() == 1 {
            ("shard", "is")
        } else {
            ("shards", "are")
        };
        return Err(RunError::Input(format!(
            "{what} {} of the {count}-way split {verb} missing (run with --shard K/{count}, then merge again)",
            missing.join(", ")
        )));
    }
    let mut meta = metas[0].0.clone();
    meta.shard = (0, 1);
    let atomic = AtomicPath::new(out);
    let shards: Vec<PathBuf> = metas.iter().map(|(_, p)| p.clone()).collect();
    join_stores(&atomic, &meta, &shards)?;
    retire_reports(out)?;
    Ok(atomic.commit()?)
}

/// Just before a new store takes its place at `out`: remove the reports of what was there
/// (`report::directory::retire_reports_of`), so that a store never sits next to a report of
/// another run, even when the command is killed after the store is in place and before its
/// own report is written (review: a killed `run --overwrite` left the earlier run's report,
/// of another seed, beside the new store). Each directory is named on stderr.
fn retire_reports(out: &Path) -> Result<(), IoError> {
    for d in crate::report::directory::retire_reports_of(out)? {
        eprintln!(
            "removed the earlier report in {} before writing {} (a report of another run must \
             not sit next to it)",
            d.display(),
            out.display()
        );
    }
    Ok(())
}

/// A build fingerprint for messages: stores and parts from before fingerprints were
/// recorded have none.
fn fingerprint_name(f: &str) -> String {
    if f.is_empty() {
        "(not recorded: an older build)".into()
    } else {
        f.to_string()
    }
}

/// Append stores (parts or shards, in the given order) into the temporary file of `atomic`.
/// On a full disk the error says about how much the joined store needs (the sum of the
/// inputs); the temporary file goes with `atomic`.
fn join_stores(atomic: &AtomicPath, meta: &StoreMeta, inputs: &[PathBuf]) -> Result<(), IoError> {
    let needed: u64 = inputs
        .iter()
        .filter_map(|p| std::fs::metadata(p).ok())
        .map(|m| m.len())
        .sum();
    let mut rows = (0, 0);
    for p in inputs {
        let (h, s) = crate::io::store::store_rows(p).map_err(|e| IoError::hdf5(p, e))?;
        rows = (rows.0 + h, rows.1 + s);
    }
    let mut w = StoreWriter::create_for(&atomic.temp_path, meta, rows, true)
        .map_err(|e| IoError::hdf5(&atomic.temp_path, e).needing(needed))?;
    for p in inputs {
        w.append_store(p).map_err(|e| e.needing(needed))?;
    }
    w.flush()
        .map_err(|e| IoError::hdf5(&atomic.temp_path, e).needing(needed))?;
    drop(w);
    // shards written before stars were stripped by tides lack `mstar_peak_msun` (the join
    // filled it from `mstar_msun`): the merged store is one of theirs and goes without it, so
    // that it is read as they are, with `galaxies.strip_stars = false`
    if inputs
        .iter()
        .any(|p| crate::io::store::predates_stellar_stripping(p))
    {
        let e = |x| IoError::hdf5(&atomic.temp_path, x);
        let f = hdf5::File::open_rw(&atomic.temp_path).map_err(e)?;
        f.group("subhalos")
            .and_then(|g| g.unlink("mstar_peak_msun"))
            .map_err(e)?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::{config_differences, key_under};

    /// The keys two configurations differ in, through tables and arrays of tables; comments
    /// and layout do not count.
    #[test]
    fn configuration_differences_by_key() {
        let a = "[run]\nmaster_seed = 1 # one\n\n[[cosmology]]\npreset = \"planck18\"\n\n\
                 [[cosmology]]\npreset = \"planck18\"\nm_wdm_kev = 3.0\n";
        let b = "[run]\nmaster_seed   =   1\n[[cosmology]]\npreset = \"planck18\"\n\
                 [[cosmology]]\npreset = \"planck18\"\nm_wdm_kev = 2.5\n[tests]\ndraws = 9\n";
        assert_eq!(
            config_differences(a, b),
            vec![
                "cosmology[1].m_wdm_kev".to_string(),
                "tests.draws".to_string()
            ]
        );
        // as read: a default written out equals one left out, a list of one value the value
        // (merge refused shards of `mass_msun = 1.2e12` and `[1.2e12]`), one [[cosmology]]
        // the [cosmology] table; a real difference inside a list is still one
        let c = "[cosmology]\npreset = \"planck18\"\n[host]\nmass_msun = 1.2e12\n";
        let d = "[[cosmology]]\npreset = \"planck18\"\n[host]\nmass_msun = [1.2e12]\n\
                 [orbits]\nstripping_alpha = 1.15\n";
        assert!(
            config_differences(c, d).is_empty(),
            "{:?}",
            config_differences(c, d)
        );
        assert_eq!(
            config_differences(c, &d.replace("[1.2e12]", "[1.2e12, 2e12]")),
            vec!["host.mass_msun".to_string()]
        );
        assert_eq!(
            config_differences(c, &d.replace("1.15", "1.1")),
            vec!["orbits.stripping_alpha".to_string()]
        );
        assert!(config_differences(a, &format!("{a}\n# later\n")).is_empty());
        assert_eq!(config_differences(a, "[run"), vec!["(the whole file)"]);
        assert!(config_differences("[t]\nr = 1e9\n", "[t]\nr = 1000000000\n").is_empty());
        assert!(key_under("tests", "tests") && key_under("tests.draws", "tests"));
        assert!(!key_under("tests_x", "tests") && !key_under("run.samples", "run.sample"));
        assert!(key_under("run.sample_columns", "run.sample_columns"));
    }
}
