//! Merger trees: the Parkinson, Cole & Helly 2008 sampler, the flat tree store, and the
//! quantities derived from a tree (main branch, formation time, accretions of every order).

pub mod correa15;
pub mod history;
pub mod pch08;
pub mod tree;

use serde::{Deserialize, Serialize};

use crate::error::InvalidValue;

pub use history::{Accretion, HostHistory};
pub use pch08::TreeBuilder;
pub use tree::{MergerTree, NONE};

/// Parameters of the PCH08 sampler. With `g0 = 1`, `gamma1 = gamma2 = 0` it is the plain
/// extended Press–Schechter binary split of Cole et al. (2000).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Pch08Params {
    /// G0 of the correction factor G = G0 (sigma1/sigma2)^gamma1 (w/sigma2)^gamma2.
    pub g0: f64,
    pub gamma1: f64,
    pub gamma2: f64,
    /// Step-size parameter: dw <= eps1 sqrt(2 (sigma^2(M/2) - sigma^2(M))).
    pub eps1: f64,
    /// Step-size parameter: expected number of proposed splits per step <= eps2.
    pub eps2: f64,
}

impl Default for Pch08Params {
    /// PCH08's fit to N-body progenitor mass functions (their sec. 2.3):
    /// G0 = 0.57, gamma1 = 0.38, gamma2 = -0.01; eps1 = eps2 = 0.1.
    fn default() -> Self {
        Self {
            g0: 0.57,
            gamma1: 0.38,
            gamma2: -0.01,
            eps1: 0.1,
            eps2: 0.1,
        }
    }
}

impl Pch08Params {
    /// The plain EPS binary split (G = 1).
    pub fn eps() -> Self {
        Self {
            g0: 1.0,
            gamma1: 0.0,
            gamma2: 0.0,
            ..Self::default()
        }
    }

    pub fn problems(&self, prefix: &str) -> Vec<InvalidValue> {
        let mut ck = crate::error::Checker::new(prefix);
        ck.num(
            "g0",
            self.g0,
            self.g0 > 0.0 && self.g0 <= 5.0,
            "must be in (0, 5]",
        );
        ck.num(
            "gamma1",
            self.gamma1,
            (-1.0..1.0).contains(&self.gamma1),
            "must be in [-1, 1)",
        );
        ck.num(
            "gamma2",
            self.gamma2,
            (-1.0..=1.0).contains(&self.gamma2),
            "must be in [-1, 1]",
        );
        ck.num(
            "eps1",
            self.eps1,
            self.eps1 > 0.0 && self.eps1 <= 0.5,
            "must be in (0, 0.5]",
        );
        ck.num(
            "eps2",
            self.eps2,
            self.eps2 > 0.0 && self.eps2 <= 0.5,
            "must be in (0, 0.5]",
        );
        ck.problems
    }
}

/// Where nodes are written besides merger events.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub enum OutputTimes {
    /// These redshifts (any order; z_final and z_max are added).
    Redshifts(Vec<f64>),
    /// N steps uniform in ln a between z_final and z_max.
    UniformLnA(usize),
}

/// What tree to grow.
#[derive(Debug, Clone, PartialEq)]
pub struct TreeSpec {
    /// Host mass at `z_final` (virial mass, Bryan & Norman 1998), Msun.
    pub m_host_msun: f64,
    pub z_final: f64,
    /// Progenitors below this mass are smooth accretion, Msun.
    pub m_resolution_msun: f64,
    /// Branches are followed back to this redshift.
    pub z_max: f64,
    pub outputs: OutputTimes,
    pub pch08: Pch08Params,
}

impl TreeSpec {
    /// A Milky-Way-mass default: 1.2e12 Msun, resolution 10^7.5 Msun, z <= 20, 64 outputs.
    pub fn milky_way_default() -> Self {
        Self {
            m_host_msun: 1.2e12,
            z_final: 0.0,
            m_resolution_msun: 10f64.powf(7.5),
            z_max: 20.0,
            outputs: OutputTimes::UniformLnA(64),
            pch08: Pch08Params::default(),
        }
    }

    /// All problems with this specification (keys prefixed by `prefix`).
    pub fn problems(&self, prefix: &str) -> Vec<InvalidValue> {
        let mut out = self.pch08.problems(prefix);
        if !(self.m_host_msun > 0.0 && self.m_host_msun.is_finite()) {
            out.push(InvalidValue::new(
                format!("{prefix}host_mass_msun"),
                self.m_host_msun,
                "must be a positive mass in Msun",
            ));
        }
        if !(self.m_resolution_msun > 0.0 && self.m_resolution_msun < 0.5 * self.m_host_msun) {
            out.push(InvalidValue::new(
                format!("{prefix}resolution_msun"),
                self.m_resolution_msun,
                format!(
                    "must be positive and below half the host mass ({:e} Msun)",
                    0.5 * self.m_host_msun
                ),
            ));
        }
        if !(self.z_final >= 0.0 && self.z_final < 20.0) {
            out.push(InvalidValue::new(
                format!("{prefix}z_final"),
                self.z_final,
                "must be in [0, 20)",
            ));
        }
        if !(self.z_max > self.z_final && self.z_max <= 100.0) {
            out.push(InvalidValue::new(
                format!("{prefix}z_max"),
                self.z_max,
                format!("must be in ({}, 100]", self.z_final),
            ));
        }
        match &self.outputs {
            OutputTimes::UniformLnA(n) => {
                if !(2..=10_000).contains(n) {
                    out.push(InvalidValue::new(
                        format!("{prefix}output_steps"),
                        n,
                        "must be in [2, 10000]",
                    ));
                }
            }
            OutputTimes::Redshifts(zs) => {
                for z in zs {
                    if !(*z >= self.z_final && *z <= self.z_max) {
                        out.push(InvalidValue::new(
                            format!("{prefix}output_redshifts"),
                            z,
                            format!(
                                "each must be in [z_final, z_max] = [{}, {}]",
                                self.z_final, self.z_max
                            ),
                        ));
                    }
                }
            }
        }
        out
    }
}
