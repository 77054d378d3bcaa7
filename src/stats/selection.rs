//! Which mock satellites a test uses, chosen the way observers choose theirs.

use serde::{Deserialize, Serialize};

use super::catalog::Catalog;
use crate::error::InvalidValue;

/// Which disruption model decides survival.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
pub enum Survival {
    /// Alive at the end of its integration: not dissolved by tides, not destroyed by the
    /// disc's tide at a pericentre (`orbits.disc_tide_ratio`), not merged.
    #[default]
    #[serde(rename = "physical")]
    Physical,
    /// Also no pericentre ever inside the fixed disc cut `orbits.pericentre_cut_kpc` (the
    /// older model, for comparison; with `orbits.disc_tide_ratio = 0` it alone stands for
    /// the disc).
    #[serde(rename = "pericentre")]
    Pericentre,
}

/// A named selection of mock satellites.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Selection {
    pub name: String,
    /// Peak halo mass range, Msun.
    #[serde(deserialize_with = "crate::config::pair::exact")]
    pub m_peak_msun: [f64; 2],
    /// Stellar-mass range, Msun.
    #[serde(deserialize_with = "crate::config::pair::exact")]
    pub mstar_msun: [f64; 2],
    /// Absolute V magnitude range [bright, faint].
    #[serde(deserialize_with = "crate::config::pair::exact")]
    pub m_v: [f64; 2],
    /// Galactocentric radius today in units of the host's R_vir.
    #[serde(deserialize_with = "crate::config::pair::exact")]
    pub r_over_rvir: [f64; 2],
    pub survival: Survival,
    /// Keep only satellites the configured survey would detect.
    pub observable_only: bool,
    /// Count satellites of satellites (bound to another subhalo at the end) that lie inside
    /// the radius range as the host's satellites, as observers count the companions of a
    /// large satellite (default); false keeps only those orbiting the host on their own.
    pub include_satellites_of_satellites: bool,
}

impl Default for Selection {
    fn default() -> Self {
        Self {
            name: "luminous satellites inside R_vir".into(),
            m_peak_msun: [0.0, 1e16],
            mstar_msun: [1e2, 1e13],
            m_v: [-30.0, 0.0],
            r_over_rvir: [0.0, 1.0],
            survival: Survival::Physical,
            observable_only: false,
            include_satellites_of_satellites: true,
        }
    }
}

impl Selection {
    pub fn problems(&self, prefix: &str) -> Vec<InvalidValue> {
        let mut out = Vec::new();
        let mut range = |k: &str, r: [f64; 2], lo: f64| {
            if !(r[0].is_finite() && r[1].is_finite() && r[0] < r[1] && r[0] >= lo) {
                out.push(InvalidValue::new(
                    format!("{prefix}{k}"),
                    format!("[{}, {}]", r[0], r[1]),
                    format!("must be an increasing pair of finite numbers >= {lo}"),
                ));
            }
        };
        range("m_peak_msun", self.m_peak_msun, 0.0);
        range("mstar_msun", self.mstar_msun, 0.0);
        range("m_v", self.m_v, -40.0);
        range("r_over_rvir", self.r_over_rvir, 0.0);
        out
    }

    /// Whether row i is a bound object this selection counts: alive at the end (in the host,
    /// or inside another subhalo unless `include_satellites_of_satellites` is off).
    pub fn counts_status(&self, c: &Catalog, i: usize) -> bool {
        c.alive(i) && (self.include_satellites_of_satellites || !c.in_subhalo(i))
    }

    /// Whether row i passes (needs the host index for R_vir).
    pub fn passes(&self, c: &Catalog, h: usize, i: usize) -> bool {
        if !self.counts_status(c, i) || !c.occupied[i] {
            return false;
        }
        if self.survival == Survival::Pericentre && c.t_disrupt_pericentre_gyr[i].is_finite() {
            return false;
        }
        let x = c.r_kpc[i] / c.host_r_vir_kpc[h];
        let inr = |v: f64, r: [f64; 2]| v >= r[0] && v <= r[1];
        inr(c.m_peak_msun[i], self.m_peak_msun)
            && inr(c.mstar_msun[i], self.mstar_msun)
            && inr(c.m_v[i], self.m_v)
            && x.is_finite()
            && inr(x, self.r_over_rvir)
            && (!self.observable_only || c.observable[i])
    }

    /// Selected rows of host h.
    pub fn rows(&self, c: &Catalog, h: usize) -> Vec<usize> {
        c.rows(h).filter(|&i| self.passes(c, h, i)).collect()
    }
}
