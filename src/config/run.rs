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

use std::path::Path;

use serde::{Deserialize, Serialize};

use super::cosmology::CosmologySection;
use super::{one_line, ConfigProblems};
use crate::cosmology::CosmologyParams;
use crate::error::InvalidValue;
use crate::galaxies::observability::SurveyOptions;
use crate::galaxies::GalaxyOptions;
use crate::halo::concentration::ConcentrationModel;
use crate::halo::MassDefinition;
use crate::host::{DiscBulgeParams, HostOptions};
use crate::linear::LinearOptions;
use crate::orbits::OrbitOptions;
use crate::trees::Pch08Params;

/// `[host]`: the host halo today and its baryons.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct HostSection {
    /// Host mass at z_final, Msun, in `mass_definition`.
    pub mass_msun: f64,
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
}

impl Default for HostSection {
    fn default() -> Self {
        let b = DiscBulgeParams::default();
        Self {
            mass_msun: 1.2e12,
            mass_definition: "vir".into(),
            z_final: 0.0,
            concentration: "zhao09".into(),
            disc_mass_msun: b.disc_mass_msun,
            disc_a_kpc: b.disc_a_kpc,
            disc_b_kpc: b.disc_b_kpc,
            bulge_mass_msun: b.bulge_mass_msun,
            bulge_a_kpc: b.bulge_a_kpc,
            baryons_grow: b.grow,
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

/// The whole file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RunConfigFile {
    pub cosmology: CosmologySection,
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
}

/// A validated configuration.
#[derive(Debug, Clone, PartialEq)]
pub struct RunConfig {
    pub file: RunConfigFile,
    pub cosmology: CosmologyParams,
    pub linear: LinearOptions,
    pub host_mass_msun: f64,
    pub host_mass_definition: MassDefinition,
    pub host: HostOptions,
    pub pch08: Pch08Params,
}

impl RunConfig {
    /// Parse and validate TOML text; `base_dir` resolves relative paths.
    pub fn parse_str(text: &str, base_dir: Option<&Path>) -> Result<Self, ConfigProblems> {
        let file: RunConfigFile = toml::from_str(text).map_err(|e| {
            ConfigProblems(vec![InvalidValue::new(
                "config",
                "(file)",
                one_line(&e.to_string()),
            )])
        })?;
        Self::validate(file, base_dir)
    }

    pub fn from_file(path: &Path) -> Result<Self, ConfigProblems> {
        let text = std::fs::read_to_string(path).map_err(|e| {
            ConfigProblems(vec![InvalidValue::new(
                "config file",
                path.display(),
                format!("cannot be read: {e}"),
            )])
        })?;
        Self::parse_str(&text, path.parent())
    }

    /// Check every table; all problems at once.
    pub fn validate(file: RunConfigFile, base_dir: Option<&Path>) -> Result<Self, ConfigProblems> {
        let mut problems = Vec::new();
        let (cosmology, linear) = match file.cosmology.resolve("cosmology.", base_dir) {
            Ok(v) => (Some(v.0), Some(v.1)),
            Err(p) => {
                problems.extend(p);
                (None, None)
            }
        };
        let h = &file.host;
        let mdef = MassDefinition::parse(&h.mass_definition);
        if mdef.is_none() {
            problems.push(InvalidValue::new(
                "host.mass_definition",
                &h.mass_definition,
                format!("expected one of {}", MassDefinition::NAMES.join(", ")),
            ));
        }
        if !(h.mass_msun >= 1e8 && h.mass_msun <= 1e16) {
            problems.push(InvalidValue::new(
                "host.mass_msun",
                h.mass_msun,
                "must be in [1e8, 1e16] Msun",
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
        let t = &file.trees;
        let pch08 = Pch08Params {
            g0: t.g0,
            gamma1: t.gamma1,
            gamma2: t.gamma2,
            eps1: t.eps1,
            eps2: t.eps2,
        };
        problems.extend(pch08.problems("trees."));
        if !(t.resolution_msun > 0.0 && t.resolution_msun < 0.5 * h.mass_msun) {
            problems.push(InvalidValue::new(
                "trees.resolution_msun",
                t.resolution_msun,
                format!(
                    "must be positive and below half the host mass ({:e} Msun)",
                    0.5 * h.mass_msun
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
        if !(2..=10_000).contains(&t.output_steps) {
            problems.push(InvalidValue::new(
                "trees.output_steps",
                t.output_steps,
                "must be in [2, 10000]",
            ));
        }
        problems.extend(file.orbits.problems("orbits."));
        problems.extend(file.galaxies.problems("galaxies."));
        problems.extend(file.survey.problems("survey."));
        if !problems.is_empty() {
            return Err(ConfigProblems(problems));
        }
        Ok(Self {
            cosmology: cosmology.unwrap(),
            linear: linear.unwrap(),
            host_mass_msun: h.mass_msun,
            host_mass_definition: mdef.unwrap(),
            host: HostOptions {
                concentration: conc.unwrap(),
                baryons,
            },
            pch08,
            file,
        })
    }
}
