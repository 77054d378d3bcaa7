//! `[[environment]]`: where the hosts of a cell live. `isolated` (the default, one host alone)
//! or `pair` (each host with a partner halo in its field, like a Local-Group-like pair). A
//! list of tables makes environments a grid dimension beside cosmology and host mass:
//!
//! ```toml
//! [[environment]]
//! kind = "isolated"
//!
//! [[environment]]
//! kind = "pair"
//! label = "pair"
//! partner_mass_ratio = 1.0          # or partner_mass_msun (host.mass_definition)
//! partner_mass_scatter_dex = 0.15
//! separation_kpc = 800.0            # today, between the two centres
//! separation_scatter_kpc = 50.0
//! radial_velocity_kms = -100.0      # today; negative: approaching
//! radial_velocity_scatter_kms = 15.0
//! tangential_velocity_kms = 50.0
//! tangential_velocity_scatter_kms = 30.0
//! region_radius_kpc = 1500.0        # the pair region's sphere about the barycentre
//! ```
//!
//! Each pair draws its partner mass (log-normal), separation (normal, redrawn until it exceeds
//! the sum of the two virial radii), radial velocity (normal), tangential speed (the absolute
//! value of a normal draw) and orientation (isotropic direction, tangential direction uniform
//! about it) from its own stream; see `pair::geometry`.

use serde::{Deserialize, Serialize};

use crate::error::{Checker, InvalidValue, MISSING};

/// One `[[environment]]` table as written.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct EnvironmentSection {
    /// `isolated` or `pair`.
    pub kind: String,
    /// Name in reports and in `--cell env=LABEL`; default the kind.
    pub label: Option<String>,
    pub partner_mass_msun: Option<f64>,
    pub partner_mass_ratio: Option<f64>,
    pub partner_mass_scatter_dex: f64,
    pub separation_kpc: Option<f64>,
    pub separation_scatter_kpc: f64,
    pub radial_velocity_kms: Option<f64>,
    pub radial_velocity_scatter_kms: f64,
    pub tangential_velocity_kms: Option<f64>,
    pub tangential_velocity_scatter_kms: f64,
    pub region_radius_kpc: f64,
}

impl Default for EnvironmentSection {
    fn default() -> Self {
        Self {
            kind: "isolated".into(),
            label: None,
            partner_mass_msun: None,
            partner_mass_ratio: None,
            partner_mass_scatter_dex: 0.0,
            separation_kpc: None,
            separation_scatter_kpc: 0.0,
            radial_velocity_kms: None,
            radial_velocity_scatter_kms: 0.0,
            tangential_velocity_kms: None,
            tangential_velocity_scatter_kms: 0.0,
            region_radius_kpc: 1500.0,
        }
    }
}

/// The partner's mass: fixed (Msun, in the host's mass definition) or a ratio to the
/// primary's mass.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PartnerMass {
    Msun(f64),
    Ratio(f64),
}

/// A pair's distributions (central value and spread of each quantity).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PairSpec {
    pub partner_mass: PartnerMass,
    pub partner_mass_scatter_dex: f64,
    pub separation_kpc: f64,
    pub separation_scatter_kpc: f64,
    pub radial_velocity_kms: f64,
    pub radial_velocity_scatter_kms: f64,
    pub tangential_velocity_kms: f64,
    pub tangential_velocity_scatter_kms: f64,
    /// Radius of the pair region about the barycentre (field dwarfs of the pair), kpc.
    pub region_radius_kpc: f64,
}

/// A validated environment.
#[derive(Debug, Clone, PartialEq)]
pub struct Environment {
    pub label: String,
    /// None: isolated.
    pub pair: Option<PairSpec>,
}

impl Environment {
    pub fn isolated() -> Self {
        Self {
            label: "isolated".into(),
            pair: None,
        }
    }

    /// Host records per pair or host (2 for a pair).
    pub fn members(&self) -> u64 {
        if self.pair.is_some() {
            2
        } else {
            1
        }
    }
}

/// The most environments one run may hold (5 bits of a host's stream number).
pub const MAX_ENVIRONMENTS: usize = 32;

const PAIR_KEYS: [&str; 10] = [
    "partner_mass_msun",
    "partner_mass_ratio",
    "partner_mass_scatter_dex",
    "separation_kpc",
    "separation_scatter_kpc",
    "radial_velocity_kms",
    "radial_velocity_scatter_kms",
    "tangential_velocity_kms",
    "tangential_velocity_scatter_kms",
    "region_radius_kpc",
];

impl EnvironmentSection {
    /// Keys of a pair that differ from their defaults (given to an isolated environment,
    /// they are a mistake).
    fn pair_keys_given(&self) -> Vec<&'static str> {
        let d = Self::default();
        let given = [
            self.partner_mass_msun.is_some(),
            self.partner_mass_ratio.is_some(),
            self.partner_mass_scatter_dex != d.partner_mass_scatter_dex,
            self.separation_kpc.is_some(),
            self.separation_scatter_kpc != d.separation_scatter_kpc,
            self.radial_velocity_kms.is_some(),
            self.radial_velocity_scatter_kms != d.radial_velocity_scatter_kms,
            self.tangential_velocity_kms.is_some(),
            self.tangential_velocity_scatter_kms != d.tangential_velocity_scatter_kms,
            self.region_radius_kpc != d.region_radius_kpc,
        ];
        PAIR_KEYS
            .iter()
            .zip(given)
            .filter(|(_, g)| *g)
            .map(|(k, _)| *k)
            .collect()
    }

    /// Validate one table (`prefix` e.g. "environment[1]."); every problem at once.
    pub fn validate(&self, prefix: &str) -> Result<Environment, Vec<InvalidValue>> {
        let mut problems = Vec::new();
        let label = self.label.clone().unwrap_or_else(|| self.kind.clone());
        if let Some(l) = &self.label {
            if l.trim().is_empty() || l.contains([',', '=']) {
                problems.push(InvalidValue::new(
                    format!("{prefix}label"),
                    format!("{l:?}"),
                    "must be a non-empty name without ',' or '='",
                ));
            }
        }
        match self.kind.as_str() {
            "isolated" => {
                for k in self.pair_keys_given() {
                    problems.push(InvalidValue::new(
                        format!("{prefix}{k}"),
                        "(given)",
                        "belongs to kind = \"pair\" only; remove it or set kind = \"pair\"",
                    ));
                }
                if problems.is_empty() {
                    return Ok(Environment { label, pair: None });
                }
                Err(problems)
            }
            "pair" => {
                let mut ck = Checker::new(prefix);
                let partner_mass = match (self.partner_mass_msun, self.partner_mass_ratio) {
                    (Some(m), None) => {
                        ck.num(
                            "partner_mass_msun",
                            m,
                            (1e8..=1e16).contains(&m),
                            &format!(
                                "must be in [1e8, 1e16] Msun (host.mass_definition){}",
                                super::run::log_mass_hint(m)
                            ),
                        );
                        Some(PartnerMass::Msun(m))
                    }
                    (None, Some(q)) => {
                        ck.num(
                            "partner_mass_ratio",
                            q,
                            q > 0.0 && q <= 100.0,
                            "must be in (0, 100] (partner mass / host mass)",
                        );
                        Some(PartnerMass::Ratio(q))
                    }
                    (Some(m), Some(q)) => {
                        problems.push(InvalidValue::new(
                            format!("{prefix}partner_mass_msun"),
                            m,
                            format!("give either partner_mass_msun or partner_mass_ratio (here {q}), not both"),
                        ));
                        None
                    }
                    (None, None) => {
                        problems.push(InvalidValue::new(
                            format!("{prefix}partner_mass_msun"),
                            MISSING,
                            "a pair needs partner_mass_msun (Msun) or partner_mass_ratio",
                        ));
                        None
                    }
                };
                ck.num(
                    "partner_mass_scatter_dex",
                    self.partner_mass_scatter_dex,
                    (0.0..=1.0).contains(&self.partner_mass_scatter_dex),
                    "must be in [0, 1] dex",
                );
                let mut need = |key: &str, v: Option<f64>, ok: fn(f64) -> bool, allowed: &str| {
                    match v {
                        Some(x) => ck.num(key, x, ok(x), allowed),
                        None => problems.push(InvalidValue::new(
                            format!("{prefix}{key}"),
                            MISSING,
                            format!("a pair needs it: {allowed}"),
                        )),
                    }
                    v.unwrap_or(f64::NAN)
                };
                let sep = need(
                    "separation_kpc",
                    self.separation_kpc,
                    |x| x > 0.0 && x <= 1e4,
                    "the separation today, in (0, 10000] kpc (and beyond the sum of the two virial radii)",
                );
                let vr = need(
                    "radial_velocity_kms",
                    self.radial_velocity_kms,
                    |x| x.abs() <= 2000.0,
                    "the relative radial velocity today, in [-2000, 2000] km/s (negative: approaching)",
                );
                let vt = need(
                    "tangential_velocity_kms",
                    self.tangential_velocity_kms,
                    |x| (0.0..=2000.0).contains(&x),
                    "the relative tangential speed today, in [0, 2000] km/s",
                );
                for (k, v, hi) in [
                    (
                        "separation_scatter_kpc",
                        self.separation_scatter_kpc,
                        5000.0,
                    ),
                    (
                        "radial_velocity_scatter_kms",
                        self.radial_velocity_scatter_kms,
                        1000.0,
                    ),
                    (
                        "tangential_velocity_scatter_kms",
                        self.tangential_velocity_scatter_kms,
                        1000.0,
                    ),
                ] {
                    ck.num(
                        k,
                        v,
                        (0.0..=hi).contains(&v),
                        &format!("must be in [0, {hi}]"),
                    );
                }
                let rr = self.region_radius_kpc;
                ck.num(
                    "region_radius_kpc",
                    rr,
                    rr > 0.0 && rr <= 2e4,
                    "must be in (0, 20000] kpc",
                );
                if sep.is_finite() && rr.is_finite() && rr <= 0.5 * sep {
                    problems.push(InvalidValue::new(
                        format!("{prefix}region_radius_kpc"),
                        rr,
                        format!(
                            "must exceed half the separation ({} kpc) so that the region holds both hosts",
                            0.5 * sep
                        ),
                    ));
                }
                problems.extend(ck.problems);
                if !problems.is_empty() {
                    return Err(problems);
                }
                Ok(Environment {
                    label,
                    pair: Some(PairSpec {
                        partner_mass: partner_mass.expect("checked"),
                        partner_mass_scatter_dex: self.partner_mass_scatter_dex,
                        separation_kpc: sep,
                        separation_scatter_kpc: self.separation_scatter_kpc,
                        radial_velocity_kms: vr,
                        radial_velocity_scatter_kms: self.radial_velocity_scatter_kms,
                        tangential_velocity_kms: vt,
                        tangential_velocity_scatter_kms: self.tangential_velocity_scatter_kms,
                        region_radius_kpc: rr,
                    }),
                })
            }
            other => {
                problems.push(InvalidValue::new(
                    format!("{prefix}kind"),
                    format!("{other:?}"),
                    "expected \"isolated\" or \"pair\"",
                ));
                Err(problems)
            }
        }
    }
}
