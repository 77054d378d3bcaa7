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

/// Every line of a problem list, prefixed with the file.
fn prefix_lines(path: &Path, problems: &str) -> String {
    problems
        .lines()
        .map(|l| format!("{}: {l}", path.display()))
        .collect::<Vec<_>>()
        .join("\n")
}

impl ObservedSample {
    pub fn from_file(path: &Path) -> Result<Self, String> {
        let text = std::fs::read_to_string(path).map_err(|e| format!("{}: {e}", path.display()))?;
        let is_toml = path.extension().map(|e| e == "toml").unwrap_or(false);
        if !is_toml {
            // parse_csv checks the ranges too
            return Self::parse_csv(&text).map_err(|e| prefix_lines(path, &e));
        }
        // the TOML form through the configuration's parser: every bad key at once, then the
        // ranges of what could be read
        let (s, problems) =
            crate::config::parse_collecting::<ObservedSample>(&text, &path.display().to_string());
        let mut lines: Vec<String> = problems.iter().map(|p| p.to_string()).collect();
        if let Some(s) = &s {
            if let Err(e) = s.check() {
                lines.extend(e.lines().map(str::to_string));
            }
        }
        match s {
            Some(s) if lines.is_empty() => Ok(s),
            _ => Err(prefix_lines(path, &lines.join("\n"))),
        }
    }

    /// Parse the CSV form and check it. Every problem is reported, one per line.
    pub fn parse_csv(text: &str) -> Result<Self, String> {
        let (s, mut problems) = Self::read_csv(text)?;
        // (no objects because every line was unreadable: those lines are the problems)
        if !s.objects.is_empty() || problems.is_empty() {
            if let Err(e) = s.check() {
                problems.extend(e.lines().map(str::to_string));
            }
        }
        if problems.is_empty() {
            Ok(s)
        } else {
            Err(problems.join("\n"))
        }
    }

    /// The objects of the CSV form, and the problems of the lines that could not be read
    /// (a header that cannot be read is an error at once).
    fn read_csv(text: &str) -> Result<(Self, Vec<String>), String> {
        let mut lines = text
            .lines()
            .enumerate()
            .filter(|(_, l)| !l.trim().is_empty() && !l.trim_start().starts_with('#'));
        let (_, header) = lines.next().ok_or("the file is empty")?;
        let cols: Vec<String> = header.split(',').map(|s| s.trim().to_string()).collect();
        let mut problems = Vec::new();
        if !cols.iter().any(|c| COLUMNS.contains(&c.as_str())) {
            return Err(format!(
                "the first line (`{}`) names none of the sample's columns: is this the observed \
                 sample? expected a CSV file with the header {}",
                crate::error::excerpt(header),
                COLUMNS.join(",")
            ));
        }
        for c in &cols {
            if !COLUMNS.contains(&c.as_str()) {
                problems.push(format!(
                    "unknown column `{}`; expected {}",
                    crate::error::excerpt(c),
                    COLUMNS.join(",")
                ));
            }
        }
        for name in COLUMNS {
            if !cols.iter().any(|c| c == name) {
                problems.push(format!(
                    "missing column `{name}`; expected {}",
                    COLUMNS.join(",")
                ));
            }
        }
        if !problems.is_empty() {
            return Err(problems.join("\n"));
        }
        let p: Vec<usize> = COLUMNS
            .iter()
            .map(|name| cols.iter().position(|c| c == name).expect("checked above"))
            .collect();
        let mut objects = Vec::new();
        for (lineno, line) in lines {
            let f: Vec<&str> = line.split(',').map(|s| s.trim()).collect();
            if f.len() != cols.len() {
                problems.push(format!(
                    "line {}: {} fields, the header has {}",
                    lineno + 1,
                    f.len(),
                    cols.len()
                ));
                continue;
            }
            let mut unreadable = false;
            let mut num = |k: usize| -> f64 {
                f[p[k]].parse::<f64>().unwrap_or_else(|_| {
                    problems.push(format!(
                        "line {}: {} = `{}` is not a number",
                        lineno + 1,
                        COLUMNS[k],
                        crate::error::excerpt(f[p[k]])
                    ));
                    unreadable = true;
                    f64::NAN
                })
            };
            let o = ObservedObject {
                id: String::new(),
                mstar_msun: num(1),
                r_gc_kpc: num(2),
                v_r_kms: num(3),
                t_quench_lookback_gyr: num(4),
                t_quench_err_gyr: num(5),
            };
            // a line with a value that could not be read is reported above, not range-checked
            if !unreadable {
                objects.push(ObservedObject {
                    id: f[p[0]].to_string(),
                    ..o
                });
            }
        }
        Ok((Self { objects }, problems))
    }

    /// Range checks, naming the object and field; every problem, one per line (NaN, which
    /// CSV and TOML both accept as a number, is out of every range).
    pub fn check(&self) -> Result<(), String> {
        if self.objects.is_empty() {
            return Err("the sample has no objects".into());
        }
        let mut problems = Vec::new();
        for o in &self.objects {
            let mut bad = |k: &str, v: f64, ok: bool, allowed: &str| {
                if !ok {
                    problems.push(format!(
                        "object `{}`: {k} = {v} is not allowed: {allowed}",
                        crate::error::excerpt(&o.id)
                    ));
                }
            };
            bad(
                "mstar_msun",
                o.mstar_msun,
                o.mstar_msun > 0.0 && o.mstar_msun < 1e13,
                "must be in (0, 1e13) Msun",
            );
            bad(
                "r_gc_kpc",
                o.r_gc_kpc,
                o.r_gc_kpc >= 0.0 && o.r_gc_kpc < 5000.0,
                "must be in [0, 5000) kpc",
            );
            bad(
                "v_r_kms",
                o.v_r_kms,
                o.v_r_kms > -2000.0 && o.v_r_kms < 2000.0,
                "must be in (-2000, 2000) km/s",
            );
            bad(
                "t_quench_lookback_gyr",
                o.t_quench_lookback_gyr,
                o.t_quench_lookback_gyr >= 0.0 && o.t_quench_lookback_gyr <= 14.0,
                "must be in [0, 14] Gyr",
            );
            bad(
                "t_quench_err_gyr",
                o.t_quench_err_gyr,
                o.t_quench_err_gyr >= 0.0 && o.t_quench_err_gyr <= 10.0,
                "must be in [0, 10] Gyr",
            );
        }
        if problems.is_empty() {
            Ok(())
        } else {
            Err(problems.join("\n"))
        }
    }
}
