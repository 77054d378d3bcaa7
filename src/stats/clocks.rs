//! Infall clocks: first infall into the host, last infall into the host (last inward crossing
//! of its evolving virial radius), and first infall into any halo above a threshold
//! (pre-processing), each as cosmic time (Gyr); lookback time and redshift follow from the
//! cosmology.

use std::collections::HashMap;

use serde::{Deserialize, Serialize};

use super::catalog::Catalog;
use crate::cosmology::Cosmology;
use crate::galaxies::paint::halo_mass_for_mstar;
use crate::galaxies::GalaxyOptions;

/// Which infall time.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default, Hash)]
pub enum Clock {
    #[default]
    #[serde(rename = "first_host_infall")]
    FirstHostInfall,
    #[serde(rename = "last_host_infall")]
    LastHostInfall,
    /// First infall into any halo above the pre-processing threshold.
    #[serde(rename = "preprocessing")]
    Preprocessing,
}

impl Clock {
    pub const ALL: [Clock; 3] = [
        Clock::FirstHostInfall,
        Clock::LastHostInfall,
        Clock::Preprocessing,
    ];

    pub fn name(self) -> &'static str {
        match self {
            Clock::FirstHostInfall => "first_host_infall",
            Clock::LastHostInfall => "last_host_infall",
            Clock::Preprocessing => "preprocessing",
        }
    }
}

/// The pre-processing threshold: a halo mass, or the stellar mass of the halo's galaxy
/// (converted to a halo mass at each infall's redshift with the median relation).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PreprocessingThreshold {
    pub halo_mass_msun: Option<f64>,
    pub stellar_mass_msun: Option<f64>,
}

impl Default for PreprocessingThreshold {
    fn default() -> Self {
        Self {
            halo_mass_msun: Some(1e10),
            stellar_mass_msun: None,
        }
    }
}

/// Infall times of every catalogue row under each clock (cosmic time, Gyr; NaN: never).
#[derive(Debug, Clone)]
pub struct ClockTimes {
    pub first: Vec<f64>,
    pub last: Vec<f64>,
    pub pre: Vec<f64>,
}

impl ClockTimes {
    pub fn get(&self, clock: Clock) -> &[f64] {
        match clock {
            Clock::FirstHostInfall => &self.first,
            Clock::LastHostInfall => &self.last,
            Clock::Preprocessing => &self.pre,
        }
    }
}

/// The cosmology of host h: hosts carry the index of their cosmology in the run's grid, and
/// `cosmos` lists the grid's cosmologies in that order. Cosmic times of a host are on its own
/// cosmology's clock, so every conversion between time and redshift goes through it.
pub fn host_cosmology<'a>(cosmos: &[&'a Cosmology], c: &Catalog, h: usize) -> &'a Cosmology {
    let ci = c.host_cosmology[h] as usize;
    cosmos.get(ci).copied().unwrap_or_else(|| {
        panic!(
            "host {} belongs to cosmology {ci}, but the run has {} (check_cosmology_indices first)",
            c.host_id[h],
            cosmos.len()
        )
    })
}

/// An error naming the first host whose cosmology index lies outside the run's list of
/// `n_cosmologies` (a store written by another configuration).
pub fn check_cosmology_indices(c: &Catalog, n_cosmologies: usize) -> Result<(), String> {
    match (0..c.n_hosts()).find(|&h| c.host_cosmology[h] as usize >= n_cosmologies) {
        None => Ok(()),
        Some(h) => Err(format!(
            "host {} belongs to cosmology index {}, but the configuration lists {} cosmologies \
             (index 0..{})",
            c.host_id[h],
            c.host_cosmology[h],
            n_cosmologies,
            n_cosmologies.saturating_sub(1)
        )),
    }
}

/// Compute every clock for every row. The pre-processing walk follows each subhalo up the
/// chain of haloes it fell into (its own merger, then its parent's, ...) and returns the first
/// merger into a halo at or above the threshold; the last link is the merger into the host's
/// main branch. `cosmos`: the run's cosmologies, indexed by the hosts' cosmology index.
pub fn clock_times(
    c: &Catalog,
    cosmos: &[&Cosmology],
    galaxies: &GalaxyOptions,
    threshold: &PreprocessingThreshold,
) -> ClockTimes {
    let n = c.n_subhaloes();
    if c.t_pre_gyr.len() == n && n > 0 {
        return ClockTimes {
            first: c.t_first_host_infall_gyr.clone(),
            last: c.t_last_host_infall_gyr.clone(),
            pre: c.t_pre_gyr.clone(),
        };
    }
    let mut pre = vec![f64::NAN; n];
    for h in 0..c.n_hosts() {
        let cosmo = host_cosmology(cosmos, c, h);
        let thr = |t: f64| -> f64 {
            match (threshold.halo_mass_msun, threshold.stellar_mass_msun) {
                (Some(m), _) => m,
                (None, Some(ms)) => halo_mass_for_mstar(cosmo, galaxies, ms, cosmo.z_at_age(t)),
                (None, None) => 0.0,
            }
        };
        let rows = c.rows(h);
        let by_branch: HashMap<u32, usize> = rows.clone().map(|i| (c.branch[i], i)).collect();
        for i in rows {
            let mut cur = i;
            for _ in 0..64 {
                let t = c.t_infall_gyr[cur];
                if c.m_host_at_infall_msun[cur] >= thr(t) {
                    pre[i] = t;
                    break;
                }
                if c.parent_branch[cur] == 0 {
                    break;
                }
                match by_branch.get(&c.parent_branch[cur]) {
                    Some(&p) => cur = p,
                    None => break,
                }
            }
        }
    }
    ClockTimes {
        first: c.t_first_host_infall_gyr.clone(),
        last: c.t_last_host_infall_gyr.clone(),
        pre,
    }
}
