//! A user-supplied transfer function or power spectrum, for users who run a Boltzmann code.
//!
//! Text file, comma- or whitespace-separated, two columns. Header lines start with `#`;
//! two header keys are read:
//!   `# k_unit: h/Mpc`   (or `1/Mpc`) — the unit of the first column (required, unless the
//!                        caller supplies it);
//!   `# columns: k,T`     (or `k,P`) — second column is T(k) or P(k) (default `k,T`).
//! P(k) may be in any unit: only its shape is used (the amplitude is set by sigma8).
//! Inside the table the shape is interpolated linearly in ln k – ln P. Beyond the ends it is
//! extended as P ∝ k^n_s below k_min (T -> 1 on large scales) and as the power law through
//! the last two points above k_max.

use std::path::Path;

use crate::error::LinearError;

/// Unit of the wavenumber column.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub enum KUnit {
    #[serde(rename = "h/Mpc")]
    HPerMpc,
    #[serde(rename = "1/Mpc")]
    PerMpc,
}

impl KUnit {
    pub fn parse(s: &str) -> Option<Self> {
        match s.trim().to_ascii_lowercase().replace(' ', "").as_str() {
            "h/mpc" | "hmpc^-1" | "h/mpc^1" => Some(Self::HPerMpc),
            "1/mpc" | "mpc^-1" => Some(Self::PerMpc),
            _ => None,
        }
    }
}

/// The tabulated power-spectrum shape P_shape(k) (k in 1/Mpc), up to a constant.
#[derive(Debug, Clone)]
pub struct TabulatedTransfer {
    ln_k: Vec<f64>,
    ln_p: Vec<f64>,
    n_s: f64,
    high_slope: f64,
    /// SHA-256 of the table's text (lowercase hex): what a run records of the file, so that a
    /// resumed run, a merge and a re-test can tell a changed table (`io::inputs`).
    sha256: String,
}

impl TabulatedTransfer {
    /// Read a table. `k_unit` overrides / supplies the header's unit; `h` converts h/Mpc.
    pub fn from_file(
        path: &Path,
        k_unit: Option<KUnit>,
        h: f64,
        n_s: f64,
    ) -> Result<Self, LinearError> {
        let text = std::fs::read_to_string(path).map_err(|e| LinearError::TransferTable {
            path: path.display().to_string(),
            reason: e.to_string(),
        })?;
        Self::parse(&text, &path.display().to_string(), k_unit, h, n_s)
    }

    /// Parse the text of a table (see module docs).
    pub fn parse(
        text: &str,
        path: &str,
        k_unit: Option<KUnit>,
        h: f64,
        n_s: f64,
    ) -> Result<Self, LinearError> {
        let err = |reason: String| LinearError::TransferTable {
            path: path.to_string(),
            reason,
        };
        let mut unit = k_unit;
        let mut is_power = false;
        let mut ks = Vec::new();
        let mut vs = Vec::new();
        for (lineno, line) in text.lines().enumerate() {
            let line = line.trim();
            if line.is_empty() {
                continue;
            }
            if let Some(rest) = line.strip_prefix('#') {
                let rest = rest.trim();
                if let Some(v) = rest.strip_prefix("k_unit:") {
                    let u = KUnit::parse(v).ok_or_else(|| {
                        err(format!(
                            "line {}: k_unit `{}` not understood; expected `h/Mpc` or `1/Mpc`",
                            lineno + 1,
                            crate::error::excerpt(v.trim())
                        ))
                    })?;
                    if k_unit.is_none() {
                        unit = Some(u);
                    }
                } else if let Some(v) = rest.strip_prefix("columns:") {
                    let c: String = v.chars().filter(|c| !c.is_whitespace()).collect();
                    is_power = match c.to_ascii_lowercase().as_str() {
                        "k,t" => false,
                        "k,p" => true,
                        _ => {
                            return Err(err(format!(
                                "line {}: columns `{}` not understood; expected `k,T` or `k,P`",
                                lineno + 1,
                                crate::error::excerpt(v.trim())
                            )))
                        }
                    };
                }
                continue;
            }
            let fields: Vec<&str> = line
                .split(|c: char| c == ',' || c.is_whitespace())
                .filter(|s| !s.is_empty())
                .collect();
            if fields.len() < 2 {
                return Err(err(format!(
                    "line {}: expected two numbers, found `{}`",
                    lineno + 1,
                    crate::error::excerpt(line)
                )));
            }
            let parse = |s: &str| -> Result<f64, LinearError> {
                s.parse::<f64>().map_err(|_| {
                    err(format!(
                        "line {}: `{}` is not a number",
                        lineno + 1,
                        crate::error::excerpt(s)
                    ))
                })
            };
            let k = parse(fields[0])?;
            let v = parse(fields[1])?;
            if !(k > 0.0 && k.is_finite() && v > 0.0 && v.is_finite()) {
                return Err(err(format!(
                    "line {}: k and the second column must be positive and finite (got {k}, {v})",
                    lineno + 1
                )));
            }
            if let Some(&last) = ks.last() {
                if k <= last {
                    return Err(err(format!(
                        "line {}: k must increase strictly (got {k} after {last})",
                        lineno + 1
                    )));
                }
            }
            ks.push(k);
            vs.push(v);
        }
        let unit = unit.ok_or_else(|| {
            err("the unit of k is not stated: add a header line `# k_unit: h/Mpc` (or `1/Mpc`), or set cosmology.transfer_table_k_unit".into())
        })?;
        if ks.len() < 5 {
            return Err(err(format!("need at least 5 rows, found {}", ks.len())));
        }
        let to_mpc = match unit {
            KUnit::HPerMpc => h,
            KUnit::PerMpc => 1.0,
        };
        let ln_k: Vec<f64> = ks.iter().map(|k| (k * to_mpc).ln()).collect();
        let ln_p: Vec<f64> = ks
            .iter()
            .zip(&vs)
            .map(|(k, v)| {
                if is_power {
                    v.ln()
                } else {
                    n_s * (k * to_mpc).ln() + 2.0 * v.ln()
                }
            })
            .collect();
        let n = ln_k.len();
        let high_slope = (ln_p[n - 1] - ln_p[n - 2]) / (ln_k[n - 1] - ln_k[n - 2]);
        Ok(Self {
            ln_k,
            ln_p,
            n_s,
            high_slope,
            sha256: crate::io::inputs::sha256_hex(text.as_bytes()),
        })
    }

    /// SHA-256 of the table's text (lowercase hex), as `sha256sum` prints it for the file.
    pub fn sha256(&self) -> &str {
        &self.sha256
    }

    /// Range of k covered by the table, 1/Mpc.
    pub fn k_range_mpc(&self) -> (f64, f64) {
        (self.ln_k[0].exp(), self.ln_k[self.ln_k.len() - 1].exp())
    }

    /// ln of the power-spectrum shape at k (1/Mpc), up to an additive constant.
    pub fn ln_shape(&self, k_mpc: f64) -> f64 {
        let x = k_mpc.ln();
        let n = self.ln_k.len();
        if x <= self.ln_k[0] {
            return self.ln_p[0] + self.n_s * (x - self.ln_k[0]);
        }
        if x >= self.ln_k[n - 1] {
            return self.ln_p[n - 1] + self.high_slope * (x - self.ln_k[n - 1]);
        }
        let i = self.ln_k.partition_point(|&v| v <= x) - 1;
        let t = (x - self.ln_k[i]) / (self.ln_k[i + 1] - self.ln_k[i]);
        self.ln_p[i] + t * (self.ln_p[i + 1] - self.ln_p[i])
    }
}
