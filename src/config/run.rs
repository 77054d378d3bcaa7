//! The run configuration file: one TOML document with a table per stage. Every table rejects
//! unknown keys; `RunConfig::from_file` reports every problem at once.
//!
//! ```toml
//! [cosmology]   # see cosmology.rs
//! [host]        # host mass, concentration, disc and bulge
//! [trees]       # merger-tree resolution and sampler
//! [orbits]      # integration, friction, stripping, disruption
//! [galaxies]    # stellar-mass–halo-mass relation, scatter, occupation, luminosity
//! [survey]      # observer position and survey completeness
//! ```

use std::collections::BTreeMap;
use std::path::Path;

use serde::{Deserialize, Serialize};

use super::cosmology::CosmologySection;
use super::environment::{Environment, EnvironmentSection, MAX_ENVIRONMENTS};
use super::ConfigProblems;
use crate::cosmology::CosmologyParams;
use crate::error::InvalidValue;
use crate::galaxies::observability::SurveyOptions;
use crate::galaxies::GalaxyOptions;
use crate::halo::concentration::ConcentrationModel;
use crate::halo::MassDefinition;
use crate::host::{DiscBulgeParams, HostOptions};
use crate::linear::LinearOptions;
use crate::orbits::OrbitOptions;
use crate::stats::TestOptions;
use crate::trees::Pch08Params;
use std::path::PathBuf;

/// One value or a list of values.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(untagged)]
pub enum OneOrMany<T> {
    One(T),
    Many(Vec<T>),
}

/// A list is `Many`, anything else is `One`. Written out (instead of serde's untagged
/// enum) so that a problem inside the value (an unknown key, a wrong type) is reported as
/// itself, not as "did not match any variant".
impl<'de, T: Deserialize<'de>> Deserialize<'de> for OneOrMany<T> {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        use serde::de::value::{MapAccessDeserializer, SeqAccessDeserializer};
        use serde::de::{IntoDeserializer, MapAccess, SeqAccess, Visitor};
        struct V<T>(std::marker::PhantomData<T>);
        impl<'de, T: Deserialize<'de>> Visitor<'de> for V<T> {
            type Value = OneOrMany<T>;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("one value or a list of values")
            }
            fn visit_seq<A: SeqAccess<'de>>(self, a: A) -> Result<Self::Value, A::Error> {
                Vec::<T>::deserialize(SeqAccessDeserializer::new(a)).map(OneOrMany::Many)
            }
            fn visit_map<A: MapAccess<'de>>(self, a: A) -> Result<Self::Value, A::Error> {
                T::deserialize(MapAccessDeserializer::new(a)).map(OneOrMany::One)
            }
            fn visit_f64<E: serde::de::Error>(self, v: f64) -> Result<Self::Value, E> {
                T::deserialize(v.into_deserializer()).map(OneOrMany::One)
            }
            fn visit_i64<E: serde::de::Error>(self, v: i64) -> Result<Self::Value, E> {
                T::deserialize(v.into_deserializer()).map(OneOrMany::One)
            }
            fn visit_u64<E: serde::de::Error>(self, v: u64) -> Result<Self::Value, E> {
                T::deserialize(v.into_deserializer()).map(OneOrMany::One)
            }
            fn visit_bool<E: serde::de::Error>(self, v: bool) -> Result<Self::Value, E> {
                T::deserialize(v.into_deserializer()).map(OneOrMany::One)
            }
            fn visit_str<E: serde::de::Error>(self, v: &str) -> Result<Self::Value, E> {
                T::deserialize(v.into_deserializer()).map(OneOrMany::One)
            }
        }
        d.deserialize_any(V(std::marker::PhantomData))
    }
}

impl<T: Clone> OneOrMany<T> {
    pub fn to_vec(&self) -> Vec<T> {
        match self {
            OneOrMany::One(v) => vec![v.clone()],
            OneOrMany::Many(v) => v.clone(),
        }
    }
}

/// `[host]`: the host halo today and its baryons.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct HostSection {
    /// Host mass at z_final, Msun, in `mass_definition`: one value or a list (a sweep);
    /// 1.2e12 when neither this nor `mass_log_uniform_msun` is given.
    pub mass_msun: Option<OneOrMany<f64>>,
    /// Instead of fixed masses: draw each host's mass log-uniformly in [lo, hi] Msun.
    #[serde(default, deserialize_with = "crate::config::pair::optional")]
    pub mass_log_uniform_msun: Option<[f64; 2]>,
    pub mass_definition: String,
    pub z_final: f64,
    /// zhao09 (from the host's own history) | duffy08 | dutton14.
    pub concentration: String,
    pub disc_mass_msun: f64,
    pub disc_a_kpc: f64,
    pub disc_b_kpc: f64,
    pub bulge_mass_msun: f64,
    pub bulge_a_kpc: f64,
    /// Grow disc and bulge with the host's stellar mass.
    pub baryons_grow: bool,
    /// Scale today's disc and bulge masses with the host's mass: a host of mass M gets them
    /// times M*(M) / M*(`baryons_reference_mass_msun`) (Behroozi et al. 2013 at z_final), so
    /// that the values above describe a host of the reference mass.
    pub baryons_scale_with_mass: bool,
    /// The host mass (in `mass_definition`) whose disc and bulge the values above describe.
    pub baryons_reference_mass_msun: f64,
}

impl Default for HostSection {
    fn default() -> Self {
        let b = DiscBulgeParams::default();
        Self {
            mass_msun: None,
            mass_log_uniform_msun: None,
            mass_definition: "vir".into(),
            z_final: 0.0,
            concentration: "zhao09".into(),
            disc_mass_msun: b.disc_mass_msun,
            disc_a_kpc: b.disc_a_kpc,
            disc_b_kpc: b.disc_b_kpc,
            bulge_mass_msun: b.bulge_mass_msun,
            bulge_a_kpc: b.bulge_a_kpc,
            baryons_grow: b.grow,
            baryons_scale_with_mass: true,
            baryons_reference_mass_msun: 1.2e12,
        }
    }
}

/// `[trees]`: resolution, depth, outputs and PCH08 parameters.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct TreesSection {
    pub resolution_msun: f64,
    pub z_max: f64,
    pub output_steps: usize,
    pub g0: f64,
    pub gamma1: f64,
    pub gamma2: f64,
    pub eps1: f64,
    pub eps2: f64,
}

impl Default for TreesSection {
    fn default() -> Self {
        let p = Pch08Params::default();
        Self {
            resolution_msun: 10f64.powf(7.5),
            z_max: 20.0,
            output_steps: 64,
            g0: p.g0,
            gamma1: p.gamma1,
            gamma2: p.gamma2,
            eps1: p.eps1,
            eps2: p.eps2,
        }
    }
}

/// `[run]`: the grid size, seed, output and parallelism.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct RunSection {
    pub master_seed: u64,
    /// Hosts per (cosmology, host mass) cell.
    pub hosts_per_cell: usize,
    /// Worker threads (0 = all cores).
    pub threads: usize,
    /// Hosts per part file (the unit of crash-safe progress).
    pub batch_hosts: usize,
    /// Output store (relative to the working directory).
    pub output: PathBuf,
    /// Observed sample (CSV or TOML), relative to the config file.
    pub sample: Option<PathBuf>,
    /// Columns of a CSV `sample` read as the sample's names: name -> the file's column, e.g.
    /// `sample_columns = { mstar_msun = "stellar_mass", r_gc_kpc = "dist" }`.
    pub sample_columns: BTreeMap<String, String>,
}

impl Default for RunSection {
    fn default() -> Self {
        Self {
            master_seed: 1,
            hosts_per_cell: 100,
            threads: 0,
            batch_hosts: 16,
            output: PathBuf::from("retinue-run.h5"),
            sample: None,
            sample_columns: BTreeMap::new(),
        }
    }
}

/// How a grid cell's host masses are chosen.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum MassBin {
    Fixed(f64),
    LogUniform(f64, f64),
}

impl MassBin {
    /// The host mass (Msun) or range in reports, e.g. "1.2e12" or "8e11-2e12".
    pub fn label(&self) -> String {
        let f = |m: f64| {
            let e = m.log10().floor();
            let c = m / 10f64.powf(e);
            let c = (c * 100.0).round() / 100.0;
            format!("{c}e{e}")
        };
        match self {
            MassBin::Fixed(m) => f(*m),
            MassBin::LogUniform(lo, hi) => format!("{}-{}", f(*lo), f(*hi)),
        }
    }

    /// A representative mass (Msun): the fixed mass, or the geometric mean of the range.
    pub fn typical_msun(&self) -> f64 {
        match self {
            MassBin::Fixed(m) => *m,
            MassBin::LogUniform(lo, hi) => (lo * hi).sqrt(),
        }
    }
}

/// The whole file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RunConfigFile {
    #[serde(default)]
    pub run: RunSection,
    pub cosmology: OneOrMany<CosmologySection>,
    #[serde(default)]
    pub host: HostSection,
    #[serde(default)]
    pub trees: TreesSection,
    #[serde(default)]
    pub orbits: OrbitOptions,
    #[serde(default)]
    pub galaxies: GalaxyOptions,
    #[serde(default)]
    pub survey: SurveyOptions,
    #[serde(default)]
    pub tests: TestOptions,
    /// Where the hosts live: one table or a list (`[[environment]]`); isolated when absent.
    #[serde(default = "default_environment")]
    pub environment: Option<OneOrMany<EnvironmentSection>>,
}

/// The environment of a file without one: a single isolated environment.
fn default_environment() -> Option<OneOrMany<EnvironmentSection>> {
    Some(OneOrMany::One(EnvironmentSection::default()))
}

/// A validated configuration.
#[derive(Debug, Clone, PartialEq)]
pub struct RunConfig {
    pub file: RunConfigFile,
    /// The first cosmology (commands that need one).
    pub cosmology: CosmologyParams,
    pub linear: LinearOptions,
    /// Every cosmology of the sweep.
    pub cosmologies: Vec<(CosmologyParams, LinearOptions)>,
    /// Their names in reports (`label`, or the preset and its overrides), distinct.
    pub cosmology_labels: Vec<String>,
    pub mass_bins: Vec<MassBin>,
    /// Every environment of the sweep (at least one; isolated when none is configured).
    pub environments: Vec<Environment>,
    /// The first fixed host mass (commands that need one).
    pub host_mass_msun: f64,
    pub host_mass_definition: MassDefinition,
    pub host: HostOptions,
    pub pch08: Pch08Params,
    /// Directory of the config file (resolves relative paths).
    pub base_dir: Option<PathBuf>,
}

impl RunConfig {
    /// Parse and validate TOML text; `base_dir` resolves relative paths.
    pub fn parse_str(text: &str, base_dir: Option<&Path>) -> Result<Self, ConfigProblems> {
        Self::parse_named(text, base_dir, "(the configuration)")
    }

    /// As `parse_str`, naming the file `source` in messages. Every unknown key and every
    /// value of the wrong type is reported, together with every out-of-range value of what
    /// could be read.
    pub fn parse_named(
        text: &str,
        base_dir: Option<&Path>,
        source: &str,
    ) -> Result<Self, ConfigProblems> {
        let (file, mut problems) = super::parse_collecting::<RunConfigFile>(text, source);
        // a number written with a unit or in quotes: its key's allowed range too (a
        // walkthrough got the fix without the range)
        for p in problems.iter_mut().filter(|p| super::is_written_number(p)) {
            if let Some(range) = Self::allowed_range(text, base_dir, p) {
                p.allowed = format!("{}; the number {range}", p.allowed);
            }
        }
        let Some(file) = file else {
            return Err(ConfigProblems(problems));
        };
        match Self::validate(file, base_dir) {
            Ok(cfg) if problems.is_empty() => Ok(cfg),
            Ok(_) => Err(ConfigProblems(problems)),
            Err(ConfigProblems(more)) => {
                // a key missing from a table that had a line set aside as unreadable is most
                // likely that line's key (an unterminated string, a preset that could not be
                // read): the set-aside line is the problem reported, not its consequences
                let table = |key: &str| key.rsplit_once('.').map(|(t, _)| t.to_string());
                let unreadable: Vec<Option<String>> =
                    problems.iter().map(|p| table(&p.key)).collect();
                problems.extend(more.into_iter().filter(|p| {
                    p.value != crate::error::MISSING || !unreadable.contains(&table(&p.key))
                }));
                Err(ConfigProblems(problems))
            }
        }
    }

    /// The allowed range of the numeric key of `p` (a value that could not be read): what
    /// validation says of an out-of-range stand-in in the value's place (a float or a whole
    /// number, far below or far above), or None when no stand-in is refused by that key.
    fn allowed_range(text: &str, base_dir: Option<&Path>, p: &InvalidValue) -> Option<String> {
        const STAND_INS: [&str; 4] = [
            "-1e300",
            "1e300",
            "-9000000000000000000",
            "9000000000000000000",
        ];
        // a single [[cosmology]] is validated under the prefix "cosmology."
        let same = |k: &str| k == p.key || k == p.key.replace("[0].", ".");
        STAND_INS.iter().find_map(|s| {
            let t = super::with_stand_in(text, &p.key, &p.value, s);
            let (file, read) = super::parse_collecting::<RunConfigFile>(&t, "");
            if read.iter().any(|q| same(&q.key)) {
                return None;
            }
            match Self::validate(file?, base_dir) {
                Err(ConfigProblems(found)) => found.into_iter().find(|q| same(&q.key)),
                Ok(_) => None,
            }
            .map(|q| q.allowed)
        })
    }

    pub fn from_file(path: &Path) -> Result<Self, ConfigProblems> {
        let text = std::fs::read_to_string(path).map_err(|e| {
            ConfigProblems(vec![InvalidValue::new(
                "config file",
                path.display(),
                format!("cannot be read: {e}"),
            )])
        })?;
        Self::parse_named(&text, path.parent(), &path.display().to_string())
    }

    /// Check every table; all problems at once.
    pub fn validate(file: RunConfigFile, base_dir: Option<&Path>) -> Result<Self, ConfigProblems> {
        let mut problems = Vec::new();
        let sections = file.cosmology.to_vec();
        let mut cosmologies = Vec::new();
        if sections.is_empty() {
            problems.push(InvalidValue::new(
                "cosmology",
                "[]",
                "at least one cosmology is required",
            ));
        }
        for (i, sec) in sections.iter().enumerate() {
            let prefix = if sections.len() == 1 {
                "cosmology.".to_string()
            } else {
                format!("cosmology[{i}].")
            };
            problems.extend(sec.label_problems(&prefix));
            match sec.resolve(&prefix, base_dir) {
                Ok(v) => cosmologies.push(v),
                Err(p) => problems.extend(p),
            }
        }
        let cosmology_labels: Vec<String> = sections.iter().map(|s| s.display_label()).collect();
        for (i, l) in cosmology_labels.iter().enumerate() {
            if let Some(j) = cosmology_labels[..i].iter().position(|x| x == l) {
                problems.push(InvalidValue::new(
                    format!("cosmology[{i}].label"),
                    format!("{l:?}"),
                    format!("names the same cell as cosmology[{j}]; give each a distinct label"),
                ));
            }
        }
        let h = &file.host;
        // without either key: one host mass, the Milky-Way-mass default
        let masses = h
            .mass_msun
            .as_ref()
            .map_or_else(|| vec![1.2e12], OneOrMany::to_vec);
        let mut mass_bins = Vec::new();
        if let (Some(m), Some(lu)) = (&h.mass_msun, h.mass_log_uniform_msun) {
            problems.push(InvalidValue::new(
                "host.mass_msun",
                format!("{:?}", m.to_vec()),
                format!(
                    "give either mass_msun or mass_log_uniform_msun (here [{}, {}]), not both",
                    lu[0], lu[1]
                ),
            ));
        }
        if let Some([lo, hi]) = h.mass_log_uniform_msun {
            if !(lo >= 1e8 && lo < hi && hi <= 1e16) {
                problems.push(InvalidValue::new(
                    "host.mass_log_uniform_msun",
                    format!("[{lo}, {hi}]"),
                    "must be [lo, hi] with 1e8 <= lo < hi <= 1e16 Msun",
                ));
            } else {
                mass_bins.push(MassBin::LogUniform(lo, hi));
            }
        } else {
            if masses.is_empty() {
                problems.push(InvalidValue::new(
                    "host.mass_msun",
                    "[]",
                    "give at least one host mass",
                ));
            }
            for m in &masses {
                if !(*m >= 1e8 && *m <= 1e16) {
                    problems.push(InvalidValue::new(
                        "host.mass_msun",
                        m,
                        format!("must be in [1e8, 1e16] Msun{}", log_mass_hint(*m)),
                    ));
                } else {
                    mass_bins.push(MassBin::Fixed(*m));
                }
            }
            // reports, tables and `--cell mass=...` name a cell by its label (3 significant
            // figures): two masses with one label would be cells no one can tell apart
            let mut seen = std::collections::BTreeMap::new();
            for b in &mass_bins {
                if let Some(first) = seen.insert(b.label(), b) {
                    let (MassBin::Fixed(a) | MassBin::LogUniform(a, _)) = *first;
                    let (MassBin::Fixed(m) | MassBin::LogUniform(m, _)) = *b;
                    problems.push(InvalidValue::new(
                        "host.mass_msun",
                        m,
                        format!(
                            "repeats {a} to 3 significant figures ({}), the precision cells are \
                             named with; give distinct masses",
                            b.label()
                        ),
                    ));
                }
            }
        }
        let m_first = masses.first().copied().unwrap_or(1.2e12);
        let m_min = match h.mass_log_uniform_msun {
            Some([lo, _]) => lo,
            None => masses.iter().copied().fold(f64::INFINITY, f64::min),
        };
        let r = &file.run;
        if !(1..=10_000_000).contains(&r.hosts_per_cell) {
            problems.push(InvalidValue::new(
                "run.hosts_per_cell",
                r.hosts_per_cell,
                "must be in [1, 1e7]",
            ));
        }
        if r.threads > 1024 {
            problems.push(InvalidValue::new(
                "run.threads",
                r.threads,
                "must be in [0, 1024] (0 = all cores)",
            ));
        }
        if !(1..=100_000).contains(&r.batch_hosts) {
            problems.push(InvalidValue::new(
                "run.batch_hosts",
                r.batch_hosts,
                "must be in [1, 100000]",
            ));
        }
        if cosmologies.len() > 1000 || mass_bins.len() > 1000 {
            problems.push(InvalidValue::new(
                "cosmology / host.mass_msun",
                format!("{} x {}", cosmologies.len(), mass_bins.len()),
                "at most 1000 cosmologies and 1000 host masses",
            ));
        }
        // an empty output is refused here, not only by `run` (review: `check` accepted it)
        let out = r.output.to_string_lossy();
        if out.trim().is_empty() || out.ends_with('/') {
            problems.push(InvalidValue::new(
                "run.output",
                format!("{out:?}"),
                "must name the store's file, e.g. \"run.h5\" (relative to the working \
                 directory), not a directory",
            ));
        }
        if let Some(sp) = &r.sample {
            let p = match base_dir {
                Some(d) if sp.is_relative() => d.join(sp),
                _ => sp.clone(),
            };
            // (an empty path is the configuration's directory: refused here, naming the key,
            // rather than when the sample is read)
            if sp.as_os_str().is_empty() {
                problems.push(InvalidValue::new(
                    "run.sample",
                    "\"\"",
                    "must name the sample's file (CSV or TOML, relative to the configuration \
                     file); leave the key out to run without a sample",
                ));
            } else if p.is_dir() {
                problems.push(InvalidValue::new(
                    "run.sample",
                    p.display(),
                    "is a directory; give the sample's file (CSV or TOML) in it",
                ));
            } else if !p.exists() {
                problems.push(InvalidValue::new(
                    "run.sample",
                    p.display(),
                    "file not found",
                ));
            }
        }
        for (name, col, why) in crate::stats::sample::column_map_problems(&r.sample_columns) {
            problems.push(InvalidValue::new(
                format!("run.sample_columns.{name}"),
                format!("{col:?}"),
                why,
            ));
        }
        problems.extend(file.tests.problems("tests."));
        let mdef = MassDefinition::parse(&h.mass_definition);
        if mdef.is_none() {
            problems.push(InvalidValue::new(
                "host.mass_definition",
                &h.mass_definition,
                format!("expected one of {}", MassDefinition::NAMES.join(", ")),
            ));
        }
        if !(0.0..20.0).contains(&h.z_final) {
            problems.push(InvalidValue::new(
                "host.z_final",
                h.z_final,
                "must be in [0, 20)",
            ));
        }
        let conc = ConcentrationModel::parse(&h.concentration);
        if conc.is_none() {
            problems.push(InvalidValue::new(
                "host.concentration",
                &h.concentration,
                format!("expected one of {}", ConcentrationModel::NAMES.join(", ")),
            ));
        }
        let baryons = DiscBulgeParams {
            disc_mass_msun: h.disc_mass_msun,
            disc_a_kpc: h.disc_a_kpc,
            disc_b_kpc: h.disc_b_kpc,
            bulge_mass_msun: h.bulge_mass_msun,
            bulge_a_kpc: h.bulge_a_kpc,
            grow: h.baryons_grow,
        };
        problems.extend(baryons.problems("host."));
        if !(1e10..=1e15).contains(&h.baryons_reference_mass_msun) {
            problems.push(InvalidValue::new(
                "host.baryons_reference_mass_msun",
                h.baryons_reference_mass_msun,
                "must be in [1e10, 1e15] Msun (the stellar-mass relation's range)",
            ));
        }
        let t = &file.trees;
        let pch08 = Pch08Params {
            g0: t.g0,
            gamma1: t.gamma1,
            gamma2: t.gamma2,
            eps1: t.eps1,
            eps2: t.eps2,
        };
        problems.extend(pch08.problems("trees."));
        // (against host masses that are themselves allowed: a log-mass typo in host.mass_msun
        // gave "below half the smallest host mass (6.04e0 Msun)" here too)
        if m_min >= 1e8 && !(t.resolution_msun > 0.0 && t.resolution_msun < 0.5 * m_min) {
            problems.push(InvalidValue::new(
                "trees.resolution_msun",
                t.resolution_msun,
                format!(
                    "must be positive and below half the smallest host mass ({:e} Msun)",
                    0.5 * m_min
                ),
            ));
        }
        if !(t.z_max > h.z_final && t.z_max <= 100.0) {
            problems.push(InvalidValue::new(
                "trees.z_max",
                t.z_max,
                format!("must be in (host.z_final = {}, 100]", h.z_final),
            ));
        }
        // the reionisation occupation reads each halo's mass at z_re from its tree: the trees
        // must reach at least one output step (uniform in ln a) beyond z_re, and the hosts'
        // final redshift must come after it (review: with z_max below z_re every mass at z_re
        // was 0 and only the V_max test could occupy a halo, without a word)
        let g = &file.galaxies;
        if g.occupation == crate::galaxies::Occupation::Reionization
            && t.z_max > h.z_final
            && (2..=10_000).contains(&t.output_steps)
        {
            let step = ((1.0 + t.z_max) / (1.0 + h.z_final)).ln() / t.output_steps as f64;
            let z_needed = (1.0 + g.reionization_z) * step.exp() - 1.0;
            // rounded up, so that the value named is itself enough (8.004 reads 8.01)
            let z_named = (z_needed * 100.0).ceil() / 100.0;
            if h.z_final >= g.reionization_z {
                problems.push(InvalidValue::new(
                    "host.z_final",
                    h.z_final,
                    format!(
                        "must be below galaxies.reionization_z = {} with the reionization \
                         occupation (galaxies.occupation)",
                        g.reionization_z
                    ),
                ));
            } else if t.z_max < z_needed {
                problems.push(InvalidValue::new(
                    "trees.z_max",
                    t.z_max,
                    format!(
                        "must reach one output step beyond galaxies.reionization_z = {}, at \
                         least {z_named:.2}, with the reionization occupation (it reads each \
                         halo's mass at z_re from the trees; or set galaxies.occupation)",
                        g.reionization_z
                    ),
                ));
            }
        }
        if !(2..=10_000).contains(&t.output_steps) {
            problems.push(InvalidValue::new(
                "trees.output_steps",
                t.output_steps,
                "must be in [2, 10000]",
            ));
        }
        let env_sections = file
            .environment
            .as_ref()
            .map_or_else(|| vec![EnvironmentSection::default()], OneOrMany::to_vec);
        let mut environments = Vec::new();
        if env_sections.is_empty() {
            problems.push(InvalidValue::new(
                "environment",
                "[]",
                "give at least one environment (or leave the table out: isolated hosts)",
            ));
        }
        if env_sections.len() > MAX_ENVIRONMENTS {
            problems.push(InvalidValue::new(
                "environment",
                format!("{} tables", env_sections.len()),
                format!("at most {MAX_ENVIRONMENTS} environments"),
            ));
        }
        for (i, sec) in env_sections.iter().enumerate() {
            let prefix = if env_sections.len() == 1 {
                "environment.".to_string()
            } else {
                format!("environment[{i}].")
            };
            match sec.validate(&prefix) {
                Ok(e) => {
                    if let Some(j) = environments
                        .iter()
                        .position(|x: &Environment| x.label == e.label)
                    {
                        problems.push(InvalidValue::new(
                            format!("{prefix}label"),
                            format!("{:?}", e.label),
                            format!("names the same cell as environment[{j}]; give each a distinct label"),
                        ));
                    }
                    environments.push(e);
                }
                Err(p) => problems.extend(p),
            }
        }
        problems.extend(file.orbits.problems("orbits."));
        problems.extend(file.galaxies.problems("galaxies."));
        problems.extend(file.survey.problems("survey."));
        // the grid as a whole: a plain upper limit (a store of 1e8 Milky-Way-mass hosts at the
        // default resolution would take about 100 TB; `size_warning` speaks below it)
        let members: u128 = environments.iter().map(|e| e.members() as u128).sum();
        let total = (sections.len() * mass_bins.len().max(1)) as u128
            * members.max(1)
            * r.hosts_per_cell as u128;
        if total > MAX_HOSTS as u128 {
            problems.push(InvalidValue::new(
                "run.hosts_per_cell",
                r.hosts_per_cell,
                format!(
                    "the grid would hold {total} hosts ({} cosmologies x {} host masses x \
                     {} hosts per cell); at most {MAX_HOSTS:.0e} hosts in one run",
                    sections.len(),
                    mass_bins.len().max(1),
                    r.hosts_per_cell
                ),
            ));
        }
        if !problems.is_empty() {
            return Err(ConfigProblems(problems));
        }
        Ok(Self {
            cosmology: cosmologies[0].0.clone(),
            linear: cosmologies[0].1.clone(),
            cosmologies,
            cosmology_labels,
            mass_bins,
            environments,
            host_mass_msun: m_first,
            host_mass_definition: mdef.unwrap(),
            host: HostOptions {
                concentration: conc.unwrap(),
                baryons,
            },
            pch08,
            base_dir: base_dir.map(|d| d.to_path_buf()),
            file,
        })
    }
}

impl RunConfig {
    /// Path of the observed sample, resolved against the config's directory.
    pub fn sample_path(&self) -> Option<PathBuf> {
        self.file.run.sample.as_ref().map(|p| match &self.base_dir {
            Some(d) if p.is_relative() => d.join(p),
            _ => p.clone(),
        })
    }

    /// How to read the configuration's sample: its column mapping (`run.sample_columns`), Υ
    /// (`galaxies.mass_to_light_v`) and the Sun's position (`survey`).
    pub fn sample_options(&self) -> crate::stats::SampleOptions {
        crate::stats::SampleOptions::new(&self.file.galaxies, &self.file.survey)
            .with_columns(self.file.run.sample_columns.clone(), "run.sample_columns")
    }

    /// Number of hosts in the whole grid (a pair counts its two hosts).
    pub fn n_hosts(&self) -> u64 {
        let members: u64 = self.environments.iter().map(Environment::members).sum();
        (self.cosmologies.len() * self.mass_bins.len()) as u64
            * members
            * self.file.run.hosts_per_cell as u64
    }

    /// Rough size of the run, scaled from measurements of the default host (`SizeEstimate`).
    pub fn size_estimate(&self) -> SizeEstimate {
        let members: u64 = self.environments.iter().map(Environment::members).sum();
        let per_cell =
            self.file.run.hosts_per_cell as f64 * self.cosmologies.len() as f64 * members as f64;
        let res = self.file.trees.resolution_msun;
        let scale: f64 = self
            .mass_bins
            .iter()
            .map(|bin| ((bin.typical_msun() / res) / (1.2e12 / 10f64.powf(7.5))).powf(0.9))
            .sum();
        let default_hosts = per_cell * scale;
        // a host of a pair costs more CPU than an isolated one (the partner's tree, potential
        // and pull: `SizeEstimate::PAIR_HOST_CPU`), and the same store
        let pair_share = self
            .environments
            .iter()
            .filter(|e| e.pair.is_some())
            .map(Environment::members)
            .sum::<u64>() as f64
            / members as f64;
        let cpu_hosts = default_hosts * (1.0 + pair_share * (SizeEstimate::PAIR_HOST_CPU - 1.0));
        SizeEstimate {
            hosts: self.n_hosts(),
            default_hosts,
            cpu_s: cpu_hosts * SizeEstimate::CPU_S_PER_HOST,
            store_bytes: SizeEstimate::STORE_BYTES_FIXED
                + default_hosts * SizeEstimate::STORE_BYTES_PER_HOST,
            parts_bytes: default_hosts * SizeEstimate::PART_BYTES_PER_HOST,
        }
    }

    /// A warning for a run whose store would exceed 50 GB: its size and CPU time, so that a
    /// mistyped host count is caught before the machine is busy for weeks.
    pub fn size_warning(&self) -> Option<String> {
        let e = self.size_estimate();
        (e.store_bytes > 5e10).then(|| {
            format!(
                "this run has {} hosts: its store will take about {:.0} GB and about {:.0} \
                 CPU-hours to synthesise (rough estimate; check run.hosts_per_cell, \
                 host.mass_msun and trees.resolution_msun)",
                e.hosts,
                e.store_bytes / 1e9,
                e.cpu_s / 3600.0
            )
        })
    }
}

/// The rough size of a run, scaled from the default host (1.2e12 Msun at trees.resolution_msun
/// = 10^7.5 Msun, Planck 2018) as measured on the project's 2-core development machine
/// (docs/performance.md). Other hosts count as (host mass / resolution)^0.9 default hosts: the
/// number of subhaloes, and with it the work and the rows, grows so (the slope of the subhalo
/// mass function, common practice). Rough: the cost of a host scatters by tens of percent
/// around its mean, and other machines are faster or slower.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SizeEstimate {
    /// Hosts of the whole grid.
    pub hosts: u64,
    /// The same in default hosts.
    pub default_hosts: f64,
    /// CPU time, seconds of one core: synthesis, store, tests and report.
    pub cpu_s: f64,
    /// The store, bytes.
    pub store_bytes: f64,
    /// The part files (uncompressed) that are on disk beside the store until the run ends.
    pub parts_bytes: f64,
}

impl SizeEstimate {
    /// One core's time per default host, end to end (tests and store included): 0.18–0.23 s
    /// measured (`scripts/bench-run.sh 100 2`, and `synth/host_end_to_end_mw` 0.23 s), rounded
    /// up.
    pub const CPU_S_PER_HOST: f64 = 0.25;
    /// A host of a pair over an isolated host in CPU time, end to end: 1.28 measured
    /// (`scripts/bench-run.sh 100 2 pair` against `scripts/bench-run.sh 100 2`: a pair run goes
    /// at 0.78 of the isolated rate per host; docs/performance.md), rounded up; 1.17–1.23 since
    /// both hosts of a pair share their trees on one thread (2026-12-03), within that noise.
    pub const PAIR_HOST_CPU: f64 = 1.3;
    /// Store bytes per default host, compressed (`io::store::col_filters`): stores of 20 and
    /// 100 default hosts took 18.9 and 85.9 MB, 0.84 MB per host and 2.2 MB fixed (the
    /// analysis, and the last chunk of each uncompressed column).
    pub const STORE_BYTES_PER_HOST: f64 = 0.84e6;
    pub const STORE_BYTES_FIXED: f64 = 2.2e6;
    /// Part-file bytes per default host (uncompressed: 100 hosts, 117 MB).
    pub const PART_BYTES_PER_HOST: f64 = 1.17e6;

    /// Wall time, seconds, on `threads` threads (hosts spread evenly over them).
    pub fn wall_s(&self, threads: usize) -> f64 {
        self.cpu_s / (threads.max(1) as f64).min(self.hosts.max(1) as f64)
    }
}

/// The most hosts one run may hold (run.hosts_per_cell x cosmologies x host masses).
pub const MAX_HOSTS: u64 = 100_000_000;

/// For a mass that looks like the log10 of one (5 to 17), the reading it suggests: a
/// walkthrough wrote `mass_msun = 12.08` (the sample reader already says as much).
pub(crate) fn log_mass_hint(m: f64) -> String {
    if (5.0..=17.0).contains(&m) {
        format!(
            " (if it is log10 of the mass, give the mass itself: 10^{m} = {:.3e})",
            10f64.powf(m)
        )
    } else {
        String::new()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// With the reionisation occupation the trees must reach beyond z_re by an output step,
    /// and the hosts end after it (review: z_max = 6 silently gave every halo a mass of 0
    /// at z_re); with another occupation z_max is free.
    #[test]
    fn trees_reach_beyond_reionisation() {
        let cfg = |extra: &str| {
            RunConfig::parse_str(
                &format!("[cosmology]\npreset = \"planck18\"\n{extra}"),
                None,
            )
        };
        let e = cfg("[trees]\nz_max = 6.0\n").unwrap_err().to_string();
        assert!(
            e.contains("trees.z_max = 6 is not allowed")
                && e.contains("galaxies.reionization_z = 7.7"),
            "{e}"
        );
        // 64 steps from 0 to 8: one step is ln(9)/64, so z_re = 7.7 needs 8.004
        let need = 8.7 * (9f64.ln() / 64.0).exp() - 1.0;
        assert!(need > 8.0 && need < 8.01, "{need}");
        let e = cfg("[trees]\nz_max = 8.0\n").unwrap_err().to_string();
        assert!(e.contains("at least 8.01"), "{e}");
        assert!(cfg("[trees]\nz_max = 8.01\n").is_ok());
        assert!(cfg("[trees]\nz_max = 8.2\n").is_ok());
        assert!(cfg("[trees]\nz_max = 6.0\n[galaxies]\noccupation = \"erf\"\n").is_ok());
        let e = cfg("[host]\nz_final = 8.0\n[trees]\nz_max = 20.0\n")
            .unwrap_err()
            .to_string();
        assert!(e.contains("host.z_final = 8 is not allowed"), "{e}");
        // the stripping rate's concentration slope: [0, 2], named with its value and range
        let e = cfg("[orbits]\nstripping_alpha_c_slope = 2.5\n")
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("orbits.stripping_alpha_c_slope = 2.5") && e.contains("[0, 2]"),
            "{e}"
        );
        assert!(cfg("[orbits]\nstripping_alpha = 1.15\nstripping_alpha_c_slope = 0.5\n").is_ok());
        let e = cfg("[orbits]\nfriction_mass_infall_weight = -0.1\n")
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("orbits.friction_mass_infall_weight = -0.1") && e.contains("[0, 1]"),
            "{e}"
        );
    }

    /// A number written with a unit or in quotes is told its key's allowed range too, for a
    /// float key, a whole-number key and a key of a [[cosmology]] table (a walkthrough got
    /// the fix without the range); a range that depends on another key is the validator's.
    #[test]
    fn a_number_with_a_unit_is_told_its_range() {
        let cases = [
            (
                "[galaxies]\nsize_scatter_dex = \"0.2 dex\"\n[cosmology]\npreset = \"planck18\"\n",
                "galaxies.size_scatter_dex = \"0.2 dex\" is not allowed: a number with a unit",
                "the number must be in [0, 1] dex",
            ),
            (
                "[galaxies]\nsize_scatter_dex = \"0.2\"\n[cosmology]\npreset = \"planck18\"\n",
                "a number in quotes",
                "the number must be in [0, 1] dex",
            ),
            (
                "[orbits]\ndisc_tide_ratio = 1.5 x\n[cosmology]\npreset = \"planck18\"\n",
                "orbits.disc_tide_ratio = 1.5 x is not allowed: a number with a unit",
                "the number must",
            ),
            (
                "[run]\nhosts_per_cell = \"12\"\n[cosmology]\npreset = \"planck18\"\n",
                "run.hosts_per_cell = \"12\" is not allowed: a number in quotes",
                "the number must",
            ),
            (
                "[[cosmology]]\npreset = \"planck18\"\nsigma8 = \"0.81\"\n",
                "a number in quotes",
                "the number must",
            ),
        ];
        for (text, first, range) in cases {
            let e = RunConfig::parse_str(text, None).unwrap_err().to_string();
            assert!(e.contains(first) && e.contains(range), "{text}: {e}");
            assert_eq!(e.matches("is not allowed").count(), 1, "{text}: {e}");
        }
        // a key that takes a word gets no range
        let e = RunConfig::parse_str(
            "[galaxies]\nsmhm = \"1.5\"\n[cosmology]\npreset = \"planck18\"\n",
            None,
        )
        .unwrap_err()
        .to_string();
        assert!(!e.contains("the number"), "{e}");
    }

    /// A host mass written as its log10 is named as such, and the resolution is not then
    /// compared with it (walkthrough: "below half the smallest host mass (6.04e0 Msun)").
    #[test]
    fn a_log_host_mass_is_named_and_not_cascaded() {
        let e = RunConfig::parse_str(
            "[cosmology]\npreset = \"planck18\"\n[host]\nmass_msun = 12.08\n",
            None,
        )
        .unwrap_err()
        .to_string();
        assert!(
            e.contains("host.mass_msun = 12.08 is not allowed")
                && e.contains("10^12.08 = 1.202e12")
                && !e.contains("trees.resolution_msun"),
            "{e}"
        );
        assert_eq!(log_mass_hint(1e12), "");
    }

    /// The default host is one default host; a sweep scales by (mass / resolution)^0.9; the
    /// wall time divides the CPU time among the threads, never among more than the hosts.
    #[test]
    fn size_estimate_scales_from_the_default_host() {
        let one = RunConfig::parse_str("[cosmology]\npreset = \"planck18\"\n", None).unwrap();
        let e = one.size_estimate();
        assert_eq!(e.hosts, 100);
        assert!((e.default_hosts - 100.0).abs() < 1e-9, "{e:?}");
        assert!((e.cpu_s - 25.0).abs() < 1e-9);
        assert!((e.store_bytes - (2.2e6 + 84e6)).abs() < 1.0);
        assert!((e.wall_s(2) - 12.5).abs() < 1e-9);
        let text = "[run]\nhosts_per_cell = 3\n[cosmology]\npreset = \"planck18\"\n\
                    [host]\nmass_msun = [1.2e12, 2.4e12]\n[trees]\nresolution_msun = 1e8\n";
        let e = RunConfig::parse_str(text, None).unwrap().size_estimate();
        let r = 1.2e12 / 10f64.powf(7.5);
        let want = 3.0 * ((1.2e12 / 1e8 / r).powf(0.9) + (2.4e12 / 1e8 / r).powf(0.9));
        assert_eq!(e.hosts, 6);
        assert!((e.default_hosts - want).abs() < 1e-9, "{e:?}");
        assert!((e.wall_s(64) - e.cpu_s / 6.0).abs() < 1e-9);
    }
}
