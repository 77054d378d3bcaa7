//! Cosmology flags shared by the commands that need a cosmology.

use std::path::PathBuf;

use clap::Args;

use super::CliError;
use retinue::config::{cosmology_from_file_labelled, CosmologySection};
use retinue::cosmology::PRESET_NAMES;
use retinue::{Cosmology, LinearTheory};

#[derive(Debug, Clone, Args)]
pub struct CosmoArgs {
    /// Named parameter set: planck18, planck18-cmb, planck15, planck13, wmap9, wmap7, wmap5.
    #[arg(long, value_name = "NAME")]
    pub preset: Option<String>,
    /// Read the [cosmology] table of a run config (TOML).
    #[arg(long, value_name = "FILE", conflicts_with = "preset")]
    pub config: Option<PathBuf>,
    /// With --config holding several [[cosmology]] tables: the label of the one to read (as
    /// the run names its cells, e.g. "planck18 m_wdm_kev=3 filter=sharp-k"); default the first.
    #[arg(long, value_name = "LABEL", requires = "config")]
    pub cosmology: Option<String>,
    /// H0 / (100 km/s/Mpc), in (0.2, 1.5].
    #[arg(long, allow_negative_numbers = true)]
    pub h: Option<f64>,
    /// Matter density today (includes baryons), in (0, 1.5].
    #[arg(long = "omega-m", allow_negative_numbers = true)]
    pub omega_m: Option<f64>,
    /// Baryon density today, in (0, omega_m).
    #[arg(long = "omega-b", allow_negative_numbers = true)]
    pub omega_b: Option<f64>,
    /// Power-spectrum amplitude in 8 Mpc/h spheres, in (0, 3].
    #[arg(long, allow_negative_numbers = true)]
    pub sigma8: Option<f64>,
    /// Primordial spectral index, in [0.5, 1.5].
    #[arg(long = "ns", allow_negative_numbers = true)]
    pub n_s: Option<f64>,
    /// Curvature density today (default 0: flat), in [-0.5, 0.5].
    #[arg(long = "omega-k", allow_negative_numbers = true)]
    pub omega_k: Option<f64>,
    /// Dark-energy equation of state (default -1), in [-3, -1/3).
    #[arg(long, allow_negative_numbers = true)]
    pub w: Option<f64>,
    /// Thermal-relic warm-dark-matter mass in keV, in [0.1, 100] (default: cold dark matter).
    #[arg(long = "m-wdm-kev", allow_negative_numbers = true)]
    pub m_wdm_kev: Option<f64>,
    /// Leave photons and neutrinos out of E(z) and ages.
    #[arg(long = "no-radiation")]
    pub no_radiation: bool,
}

/// Map a configuration key to the flag that sets it.
fn flag_for(key: &str) -> String {
    match key {
        "n_s" => "--ns".into(),
        k => format!("--{}", k.replace('_', "-")),
    }
}

impl CosmoArgs {
    /// The section these flags describe (flags override a config file's values).
    pub fn section(
        &self,
        transfer: Option<&str>,
        transfer_table: Option<&PathBuf>,
        filter: Option<&str>,
    ) -> Result<(CosmologySection, bool), CliError> {
        let mut s = match &self.config {
            Some(path) => {
                let (s, note) = cosmology_from_file_labelled(path, self.cosmology.as_deref())
                    .map_err(|e| CliError::Usage(e.to_string()))?;
                if let Some(n) = note {
                    eprintln!("note: {n}");
                }
                s
            }
            None => CosmologySection::default(),
        };
        let from_file = self.config.is_some();
        let flag_params = self.h.is_some()
            || self.omega_m.is_some()
            || self.omega_b.is_some()
            || self.sigma8.is_some()
            || self.n_s.is_some();
        if !from_file && self.preset.is_none() && !flag_params {
            return Err(CliError::Usage(format!(
                "no cosmology given: use --preset NAME (one of {}), --config FILE, or --h --omega-m --omega-b --sigma8 --ns",
                PRESET_NAMES.join(", ")
            )));
        }
        if self.preset.is_some() {
            s.preset = self.preset.clone();
        }
        macro_rules! over {
            ($f:ident) => {
                if self.$f.is_some() {
                    s.$f = self.$f;
                }
            };
        }
        over!(h);
        over!(omega_m);
        over!(omega_b);
        over!(sigma8);
        over!(n_s);
        over!(omega_k);
        over!(w);
        over!(m_wdm_kev);
        if self.no_radiation {
            s.radiation = Some(false);
        }
        if let Some(t) = transfer {
            s.transfer = Some(t.to_string());
        }
        if let Some(t) = transfer_table {
            s.transfer_table = Some(t.clone());
        }
        if let Some(f) = filter {
            s.filter = Some(f.to_string());
            // the file's sharp_k_c belongs to its own sharp-k filter: with another window
            // chosen here it is dropped, not refused as if the file were wrong (review)
            if retinue::linear::Filter::parse(f) != Some(retinue::linear::Filter::SharpK)
                && s.sharp_k_c.take().is_some()
            {
                eprintln!("note: --filter {f}: the configuration's sharp_k_c is not used");
            }
        }
        Ok((s, from_file))
    }

    /// Build the linear theory these flags describe.
    pub fn linear_theory(
        &self,
        transfer: Option<&str>,
        transfer_table: Option<&PathBuf>,
        filter: Option<&str>,
    ) -> Result<LinearTheory, CliError> {
        let (section, from_file) = self.section(transfer, transfer_table, filter)?;
        let base_dir = self
            .config
            .as_ref()
            .and_then(|p| p.parent().map(|d| d.to_path_buf()));
        let prefix = if from_file { "cosmology." } else { "" };
        let (params, options) =
            section
                .resolve(prefix, base_dir.as_deref())
                .map_err(|problems| {
                    CliError::Usage(
                        problems
                            .into_iter()
                            .map(|mut p| {
                                if !from_file {
                                    p.key = flag_for(&p.key);
                                }
                                p.to_string()
                            })
                            .collect::<Vec<_>>()
                            .join("\n"),
                    )
                })?;
        let cosmo = Cosmology::new(params).map_err(|e| CliError::Usage(e.to_string()))?;
        LinearTheory::new(cosmo, options).map_err(|e| CliError::Usage(e.to_string()))
    }
}
