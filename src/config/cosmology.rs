//! The `[cosmology]` table: a preset, explicit parameters, or a preset with overrides; plus
//! the linear-theory choices (transfer function, filter, warm dark matter, delta_c).
//!
//! ```toml
//! [cosmology]
//! preset = "planck18"        # optional; explicit keys below override it
//! sigma8 = 0.78              # e.g. a lower-amplitude variant
//! transfer = "eh98"          # eh98 | eh98-nowiggle | bbks | table
//! filter = "top-hat"         # top-hat | sharp-k
//! m_wdm_kev = 3.0            # omit for cold dark matter
//! wdm_concentration = "bose16"  # bose16 | none; only with m_wdm_kev
//! ```

use std::path::PathBuf;

use serde::{Deserialize, Serialize};

use crate::cosmology::{preset, CosmologyParams, PRESET_NAMES};
use crate::error::{InvalidValue, MISSING};
use crate::halo::concentration::WdmConcentration;
use crate::linear::{DeltaCModel, Filter, KUnit, LinearOptions, TransferKind};

/// The `[cosmology]` table as written by the user; every key optional.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CosmologySection {
    /// Name of the cell in reports, tables and figures (default: the preset and the keys
    /// that override it, e.g. "planck18 m_wdm_kev=3 filter=sharp-k").
    pub label: Option<String>,
    pub preset: Option<String>,
    pub h: Option<f64>,
    pub omega_m: Option<f64>,
    pub omega_b: Option<f64>,
    pub sigma8: Option<f64>,
    pub n_s: Option<f64>,
    pub omega_k: Option<f64>,
    pub w: Option<f64>,
    pub t_cmb_k: Option<f64>,
    pub n_eff: Option<f64>,
    pub radiation: Option<bool>,
    pub transfer: Option<String>,
    pub transfer_table: Option<PathBuf>,
    pub transfer_table_k_unit: Option<String>,
    pub filter: Option<String>,
    pub sharp_k_c: Option<f64>,
    pub m_wdm_kev: Option<f64>,
    pub wdm_concentration: Option<String>,
    pub delta_c: Option<String>,
}

/// The canonical name of a spelling of a choice of the `[cosmology]` table (`filter`,
/// `transfer` or `delta_c`): "SHARPK" gives "sharp-k". None: not such a key, or a spelling
/// it does not take.
pub(crate) fn canonical_choice(key: &str, raw: &str) -> Option<String> {
    fn name_of<T: Serialize>(k: Option<T>) -> Option<String> {
        toml::Value::try_from(k?).ok()?.as_str().map(str::to_string)
    }
    match key {
        "filter" => name_of(Filter::parse(raw)),
        "transfer" => name_of(TransferKind::parse(raw)),
        "delta_c" => name_of(DeltaCModel::parse(raw)),
        _ => None,
    }
}

impl CosmologySection {
    /// The cell's name: `label` if given, else the preset (or "custom") followed by every
    /// key set beside it, as key=value.
    pub fn display_label(&self) -> String {
        if let Some(l) = &self.label {
            return l.clone();
        }
        let mut parts = vec![self.preset.clone().unwrap_or_else(|| "custom".into())];
        let num = |k: &str, v: Option<f64>| v.map(|x| format!("{k}={x}"));
        let text = |k: &str, v: &Option<String>| v.as_ref().map(|x| format!("{k}={x}"));
        // a choice under its canonical name, so that two spellings of one choice ("sharpk",
        // "SHARP-K") name one cell (a walkthrough's spellings made two cells, or refused a merge)
        let canonical = |key: &str, raw: &Option<String>| {
            raw.as_ref()
                .map(|x| canonical_choice(key, x).unwrap_or_else(|| x.clone()))
        };
        let transfer = canonical("transfer", &self.transfer);
        let filter = canonical("filter", &self.filter);
        let delta_c = canonical("delta_c", &self.delta_c);
        parts.extend(
            [
                num("h", self.h),
                num("omega_m", self.omega_m),
                num("omega_b", self.omega_b),
                num("sigma8", self.sigma8),
                num("n_s", self.n_s),
                num("omega_k", self.omega_k),
                num("w", self.w),
                num("m_wdm_kev", self.m_wdm_kev),
                text("transfer", &transfer),
                text("filter", &filter),
                num("sharp_k_c", self.sharp_k_c),
                text("delta_c", &delta_c),
            ]
            .into_iter()
            .flatten(),
        );
        parts.join(" ")
    }

    /// Problems of the `label` key.
    pub fn label_problems(&self, prefix: &str) -> Vec<InvalidValue> {
        match &self.label {
            Some(l)
                if l.trim().is_empty()
                    || l.chars().count() > 40
                    || l.chars().any(|c| c.is_control() || c == ',') =>
            {
                vec![InvalidValue::new(
                    format!("{prefix}label"),
                    format!("{l:?}"),
                    "must be 1 to 40 printable characters without commas",
                )]
            }
            _ => Vec::new(),
        }
    }
    /// Resolve into validated parameters and options, or the full list of problems.
    /// `prefix` names the table in messages (e.g. `cosmology.`); `base_dir` resolves a
    /// relative `transfer_table` path.
    pub fn resolve(
        &self,
        prefix: &str,
        base_dir: Option<&std::path::Path>,
    ) -> Result<(CosmologyParams, LinearOptions), Vec<InvalidValue>> {
        let mut problems = Vec::new();
        let base = match &self.preset {
            Some(name) => match preset(name) {
                Ok(p) => Some(p),
                Err(_) => {
                    problems.push(InvalidValue::new(
                        format!("{prefix}preset"),
                        name,
                        format!(
                            "unknown preset; expected one of {}",
                            PRESET_NAMES.join(", ")
                        ),
                    ));
                    None
                }
            },
            None => None,
        };
        let preset_failed = self.preset.is_some() && base.is_none();
        let mut need = |key: &str, v: Option<f64>, from: Option<f64>| -> f64 {
            match v.or(from) {
                Some(x) => x,
                None if preset_failed => f64::NAN,
                None => {
                    problems.push(InvalidValue::new(
                        format!("{prefix}{key}"),
                        MISSING,
                        "required when no preset is given",
                    ));
                    f64::NAN
                }
            }
        };
        let b = base.as_ref();
        let h = need("h", self.h, b.map(|p| p.h));
        let omega_m = need("omega_m", self.omega_m, b.map(|p| p.omega_m));
        let omega_b = need("omega_b", self.omega_b, b.map(|p| p.omega_b));
        let sigma8 = need("sigma8", self.sigma8, b.map(|p| p.sigma8));
        let n_s = need("n_s", self.n_s, b.map(|p| p.n_s));
        let overridden = self.h.is_some()
            || self.omega_m.is_some()
            || self.omega_b.is_some()
            || self.sigma8.is_some()
            || self.n_s.is_some()
            || self.omega_k.is_some()
            || self.w.is_some();
        let name = match (&base, overridden) {
            (Some(p), false) => p.name.clone(),
            (Some(p), true) => format!("{}-modified", p.name),
            (None, _) => "custom".to_string(),
        };
        let params = CosmologyParams {
            name,
            h,
            omega_m,
            omega_b,
            sigma8,
            n_s,
            omega_k: self.omega_k.unwrap_or(0.0),
            w: self.w.unwrap_or(-1.0),
            t_cmb_k: self.t_cmb_k.unwrap_or(2.7255),
            n_eff: self.n_eff.unwrap_or(3.046),
            radiation: self.radiation.unwrap_or(true),
        };
        if problems.is_empty() {
            problems.extend(params.problems(prefix));
        }

        let mut options = LinearOptions::default();
        if let Some(t) = &self.transfer {
            match TransferKind::parse(t) {
                Some(k) => options.transfer = k,
                None => problems.push(InvalidValue::new(
                    format!("{prefix}transfer"),
                    t,
                    format!("expected one of {}", TransferKind::NAMES.join(", ")),
                )),
            }
        }
        options.transfer_table = self.transfer_table.as_ref().map(|p| match base_dir {
            Some(d) if p.is_relative() => d.join(p),
            _ => p.clone(),
        });
        if let Some(u) = &self.transfer_table_k_unit {
            match KUnit::parse(u) {
                Some(k) => options.transfer_table_k_unit = Some(k),
                None => problems.push(InvalidValue::new(
                    format!("{prefix}transfer_table_k_unit"),
                    u,
                    "expected `h/Mpc` or `1/Mpc`",
                )),
            }
        }
        if let (Some(p), true) = (
            &options.transfer_table,
            options.transfer == TransferKind::Table,
        ) {
            if !p.is_file() {
                problems.push(InvalidValue::new(
                    format!("{prefix}transfer_table"),
                    p.display(),
                    "file not found (a relative path is relative to the configuration file)",
                ));
            }
        }
        if let (Some(u), false) = (
            &self.transfer_table_k_unit,
            options.transfer == TransferKind::Table,
        ) {
            problems.push(InvalidValue::new(
                format!("{prefix}transfer_table_k_unit"),
                u,
                "is only used with transfer = \"table\"; set that too, or remove the key",
            ));
        }
        if let (Some(t), false) = (
            &self.transfer_table,
            options.transfer == TransferKind::Table,
        ) {
            problems.push(InvalidValue::new(
                format!("{prefix}transfer_table"),
                t.display(),
                "is only used with transfer = \"table\"; set that too, or remove the key",
            ));
        }
        if let Some(f) = &self.filter {
            match Filter::parse(f) {
                Some(k) => options.filter = k,
                None => problems.push(InvalidValue::new(
                    format!("{prefix}filter"),
                    f,
                    format!("expected one of {}", Filter::NAMES.join(", ")),
                )),
            }
        }
        if let Some(c) = self.sharp_k_c {
            options.sharp_k_c = c;
            // (a walkthrough's sharp_k_c with the top-hat filter changed nothing, silently)
            if options.filter != Filter::SharpK {
                problems.push(InvalidValue::new(
                    format!("{prefix}sharp_k_c"),
                    c,
                    "is only used with filter = \"sharp-k\"; set that too, or remove the key",
                ));
            }
        }
        options.m_wdm_kev = self.m_wdm_kev;
        if let Some(w) = &self.wdm_concentration {
            match WdmConcentration::parse(w) {
                Some(k) if self.m_wdm_kev.is_some() => options.wdm_concentration = k,
                Some(_) => problems.push(InvalidValue::new(
                    format!("{prefix}wdm_concentration"),
                    w,
                    "is only used with warm dark matter; set m_wdm_kev too, or remove the key",
                )),
                None => problems.push(InvalidValue::new(
                    format!("{prefix}wdm_concentration"),
                    w,
                    format!("expected one of {}", WdmConcentration::NAMES.join(", ")),
                )),
            }
        }
        if let Some(d) = &self.delta_c {
            match DeltaCModel::parse(d) {
                Some(k) => options.delta_c = k,
                None => problems.push(InvalidValue::new(
                    format!("{prefix}delta_c"),
                    d,
                    format!("expected one of {}", DeltaCModel::NAMES.join(", ")),
                )),
            }
        }
        problems.extend(options.problems(prefix));
        if problems.is_empty() {
            Ok((params, options))
        } else {
            Err(problems)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn section(wdm: Option<f64>, wc: Option<&str>) -> CosmologySection {
        CosmologySection {
            preset: Some("planck18".into()),
            m_wdm_kev: wdm,
            wdm_concentration: wc.map(str::to_string),
            ..Default::default()
        }
    }

    /// Two spellings of a choice name one cell; keys that would change nothing are refused
    /// (walkthrough: `sharp_k_c` with the top-hat filter and `transfer_table_k_unit` without
    /// a table passed silently, and "sharpk" made a cell of its own).
    #[test]
    fn labels_use_canonical_names_and_idle_keys_are_refused() {
        let s = |filter: &str, transfer: &str| CosmologySection {
            preset: Some("planck18".into()),
            filter: Some(filter.into()),
            transfer: Some(transfer.into()),
            ..Default::default()
        };
        assert_eq!(
            s("SHARPK", "EH98").display_label(),
            s("sharp-k", "eh98").display_label()
        );
        assert_eq!(
            s("tophat", "eh98").display_label(),
            "planck18 transfer=eh98 filter=top-hat"
        );
        let with_c = CosmologySection {
            sharp_k_c: Some(2.7),
            ..s("sharp-k", "eh98")
        };
        assert!(with_c
            .display_label()
            .ends_with("filter=sharp-k sharp_k_c=2.7"));
        assert!(with_c.resolve("cosmology.", None).is_ok());
        let e = CosmologySection {
            sharp_k_c: Some(2.7),
            ..s("top-hat", "eh98")
        }
        .resolve("cosmology.", None)
        .unwrap_err();
        assert_eq!(
            e[0].to_string(),
            "cosmology.sharp_k_c = 2.7 is not allowed: is only used with filter = \"sharp-k\"; \
             set that too, or remove the key"
        );
        let e = CosmologySection {
            transfer_table_k_unit: Some("h/Mpc".into()),
            ..s("top-hat", "eh98")
        }
        .resolve("cosmology.", None)
        .unwrap_err();
        assert!(
            e[0].to_string()
                .starts_with("cosmology.transfer_table_k_unit = h/Mpc"),
            "{e:?}"
        );
    }

    /// `wdm_concentration`: bose16 by default under WDM; an unknown value names the key, the
    /// value and the allowed values; given without `m_wdm_kev` it is an error that says so.
    #[test]
    fn wdm_concentration_key() {
        let (_, o) = section(Some(3.0), None)
            .resolve("cosmology.", None)
            .unwrap();
        assert_eq!(o.wdm_concentration, WdmConcentration::Bose16);
        let (_, o) = section(Some(3.0), Some("none"))
            .resolve("cosmology.", None)
            .unwrap();
        assert_eq!(o.wdm_concentration, WdmConcentration::None);
        let e = section(Some(3.0), Some("lovell14"))
            .resolve("cosmology.", None)
            .unwrap_err();
        assert_eq!(
            e[0].to_string(),
            "cosmology.wdm_concentration = lovell14 is not allowed: expected one of bose16, none"
        );
        let e = section(None, Some("bose16"))
            .resolve("cosmology.", None)
            .unwrap_err();
        assert_eq!(
            e[0].to_string(),
            "cosmology.wdm_concentration = bose16 is not allowed: is only used with warm dark \
             matter; set m_wdm_kev too, or remove the key"
        );
    }
}
