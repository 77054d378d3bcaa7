//! The observed sample: a small set of faint satellites with star-formation histories.
//!
//! CSV with a header naming the columns (any order; units in the names):
//! `id,mstar_msun,r_gc_kpc,v_r_kms,t_quench_lookback_gyr,t_quench_err_gyr`
//! (`#` lines are comments), or TOML with one `[[object]]` table per object and the same keys.
//! Lookback times in Gyr; `v_r_kms` is the galactocentric radial velocity.

use std::path::Path;

use serde::{Deserialize, Serialize};

/// One observed satellite.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ObservedObject {
    pub id: String,
    pub mstar_msun: f64,
    pub r_gc_kpc: f64,
    pub v_r_kms: f64,
    pub t_quench_lookback_gyr: f64,
    pub t_quench_err_gyr: f64,
}

#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
pub struct ObservedSample {
    #[serde(rename = "object")]
    pub objects: Vec<ObservedObject>,
}

const COLUMNS: [&str; 6] = [
    "id",
    "mstar_msun",
    "r_gc_kpc",
    "v_r_kms",
    "t_quench_lookback_gyr",
    "t_quench_err_gyr",
];

impl ObservedSample {
    pub fn from_file(path: &Path) -> Result<Self, String> {
        let text = std::fs::read_to_string(path).map_err(|e| format!("{}: {e}", path.display()))?;
        let is_toml = path.extension().map(|e| e == "toml").unwrap_or(false);
        let s = if is_toml {
            toml::from_str::<ObservedSample>(&text).map_err(|e| {
                format!(
                    "{}: {}",
                    path.display(),
                    crate::config::one_line(&e.to_string())
                )
            })?
        } else {
            Self::parse_csv(&text).map_err(|e| format!("{}: {e}", path.display()))?
        };
        s.check().map_err(|e| format!("{}: {e}", path.display()))?;
        Ok(s)
    }

    /// Parse the CSV form.
    pub fn parse_csv(text: &str) -> Result<Self, String> {
        let mut lines = text
            .lines()
            .enumerate()
            .filter(|(_, l)| !l.trim().is_empty() && !l.trim_start().starts_with('#'));
        let (_, header) = lines.next().ok_or("the file is empty")?;
        let cols: Vec<String> = header.split(',').map(|s| s.trim().to_string()).collect();
        for c in &cols {
            if !COLUMNS.contains(&c.as_str()) {
                return Err(format!(
                    "unknown column `{c}`; expected {}",
                    COLUMNS.join(",")
                ));
            }
        }
        let pos = |name: &str| -> Result<usize, String> {
            cols.iter().position(|c| c == name).ok_or(format!(
                "missing column `{name}`; expected {}",
                COLUMNS.join(",")
            ))
        };
        let p: Vec<usize> = COLUMNS.iter().map(|c| pos(c)).collect::<Result<_, _>>()?;
        let mut objects = Vec::new();
        for (lineno, line) in lines {
            let f: Vec<&str> = line.split(',').map(|s| s.trim()).collect();
            if f.len() != cols.len() {
                return Err(format!(
                    "line {}: {} fields, the header has {}",
                    lineno + 1,
                    f.len(),
                    cols.len()
                ));
            }
            let num = |k: usize| -> Result<f64, String> {
                f[p[k]].parse::<f64>().map_err(|_| {
                    format!(
                        "line {}: {} = `{}` is not a number",
                        lineno + 1,
                        COLUMNS[k],
                        f[p[k]]
                    )
                })
            };
            objects.push(ObservedObject {
                id: f[p[0]].to_string(),
                mstar_msun: num(1)?,
                r_gc_kpc: num(2)?,
                v_r_kms: num(3)?,
                t_quench_lookback_gyr: num(4)?,
                t_quench_err_gyr: num(5)?,
            });
        }
        Ok(Self { objects })
    }

    /// Range checks, naming the object and field.
    pub fn check(&self) -> Result<(), String> {
        if self.objects.is_empty() {
            return Err("the sample has no objects".into());
        }
        for o in &self.objects {
            let bad = |k: &str, v: f64, allowed: &str| {
                Err(format!(
                    "object `{}`: {k} = {v} is not allowed: {allowed}",
                    o.id
                ))
            };
            if !(o.mstar_msun > 0.0 && o.mstar_msun < 1e13) {
                return bad("mstar_msun", o.mstar_msun, "must be in (0, 1e13) Msun");
            }
            if !(o.r_gc_kpc >= 0.0 && o.r_gc_kpc < 5000.0) {
                return bad("r_gc_kpc", o.r_gc_kpc, "must be in [0, 5000) kpc");
            }
            if !(o.v_r_kms > -2000.0 && o.v_r_kms < 2000.0) {
                return bad("v_r_kms", o.v_r_kms, "must be in (-2000, 2000) km/s");
            }
            if !(o.t_quench_lookback_gyr >= 0.0 && o.t_quench_lookback_gyr <= 14.0) {
                return bad(
                    "t_quench_lookback_gyr",
                    o.t_quench_lookback_gyr,
                    "must be in [0, 14] Gyr",
                );
            }
            if !(o.t_quench_err_gyr >= 0.0 && o.t_quench_err_gyr <= 10.0) {
                return bad(
                    "t_quench_err_gyr",
                    o.t_quench_err_gyr,
                    "must be in [0, 10] Gyr",
                );
            }
        }
        Ok(())
    }
}
