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

/// The growth of one halo that others fell into, read off its accretions: the times of the
/// infalls into it (sorted) and, for each, the first accretion at or after it made when the
/// halo was at or above the threshold (`usize::MAX`: none).
struct Growth {
    t: Vec<f64>,
    next_above: Vec<usize>,
}

impl Growth {
    /// The first time in [t_lo, t_hi] at which the halo is seen at or above the threshold.
    fn first_above(&self, t_lo: f64, t_hi: f64) -> Option<f64> {
        let k = self.t.partition_point(|&t| t < t_lo);
        let j = *self.next_above.get(k)?;
        (j != usize::MAX && self.t[j] <= t_hi).then(|| self.t[j])
    }
}

/// Compute every clock for every row. The pre-processing walk follows each subhalo up the
/// chain of haloes it fell into (its own merger, then its parent's, ...; the last link is the
/// merger into the host's main branch) and returns the first time it was inside a halo at or
/// above the threshold: the merger into a halo already above it, or else the time the halo it
/// was in grew past it while it was there (before that halo's own infall; for the host, at
/// any time), read off the masses of the halo's later accretions (`m_host_at_infall` of the
/// rows that fell into it; the tree's accretions are dense, so this is within one accretion
/// of the crossing). NaN: never inside such a halo. `cosmos`: the run's cosmologies, indexed
/// by the hosts' cosmology index.
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
        let host_pre = preprocessing_times(
            &c.branch[rows.clone()],
            &c.parent_branch[rows.clone()],
            &c.t_infall_gyr[rows.clone()],
            &c.m_host_at_infall_msun[rows.clone()],
            thr,
        );
        pre[rows].copy_from_slice(&host_pre);
    }
    ClockTimes {
        first: c.t_first_host_infall_gyr.clone(),
        last: c.t_last_host_infall_gyr.clone(),
        pre,
    }
}

/// The pre-processing time of every subhalo of one host (the rule of `clock_times`), from its
/// columns: branch, the branch it fell into (0: the host's main branch), infall time (Gyr) and
/// the mass of the halo it fell into then (Msun); `thr(t)` is the threshold halo mass at time t.
/// The census (`census::census`) uses the same walk.
pub(crate) fn preprocessing_times(
    branch: &[u32],
    parent_branch: &[u32],
    t_infall_gyr: &[f64],
    m_into_msun: &[f64],
    thr: impl Fn(f64) -> f64,
) -> Vec<f64> {
    let n = branch.len();
    let by_branch: HashMap<u32, usize> = (0..n).map(|i| (branch[i], i)).collect();
    // whether each row's merger was into a halo at or above the threshold, and the growth of
    // every halo that others fell into (0: the host's main branch)
    let above: Vec<bool> = (0..n)
        .map(|i| m_into_msun[i] >= thr(t_infall_gyr[i]))
        .collect();
    let mut points: HashMap<u32, Vec<(f64, bool)>> = HashMap::new();
    for i in 0..n {
        points
            .entry(parent_branch[i])
            .or_default()
            .push((t_infall_gyr[i], above[i]));
    }
    let growth: HashMap<u32, Growth> = points
        .into_iter()
        .map(|(b, mut p)| {
            p.sort_by(|x, y| x.0.total_cmp(&y.0));
            let mut next_above = vec![usize::MAX; p.len()];
            let mut next = usize::MAX;
            for k in (0..p.len()).rev() {
                if p[k].1 {
                    next = k;
                }
                next_above[k] = next;
            }
            let t = p.into_iter().map(|x| x.0).collect();
            (b, Growth { t, next_above })
        })
        .collect();
    let mut pre = vec![f64::NAN; n];
    for (i, slot) in pre.iter_mut().enumerate() {
        let mut cur = i;
        for _ in 0..64 {
            let t = t_infall_gyr[cur];
            if above[cur] {
                *slot = t;
                break;
            }
            let container = parent_branch[cur];
            let next = if container == 0 {
                None
            } else {
                by_branch.get(&container).copied()
            };
            // until the container's own infall (the host: no end)
            let t_leave = next.map_or(f64::INFINITY, |p| t_infall_gyr[p]);
            if let Some(tc) = growth
                .get(&container)
                .and_then(|g| g.first_above(t, t_leave))
            {
                *slot = tc;
                break;
            }
            match next {
                Some(p) => cur = p,
                None => break,
            }
        }
    }
    pre
}

#[cfg(test)]
mod tests {
    use super::*;

    /// One host; rows (branch, parent, t_infall, mass of the halo it fell into then).
    fn catalog(rows: &[(u32, u32, f64, f64)]) -> Catalog {
        let mut c = Catalog {
            host_id: vec![0],
            host_cosmology: vec![0],
            host_cell: vec![0],
            host_m_vir_msun: vec![1e12],
            host_r_vir_kpc: vec![280.0],
            offset: vec![0, rows.len()],
            ..Default::default()
        };
        for &(b, p, t, m) in rows {
            c.branch.push(b);
            c.parent_branch.push(p);
            c.order.push(if p == 0 { 1 } else { 2 });
            c.t_infall_gyr.push(t);
            c.m_host_at_infall_msun.push(m);
            c.t_first_host_infall_gyr.push(t);
            c.t_last_host_infall_gyr.push(t);
        }
        c
    }

    /// The pre-processing clock is the first time the subhalo was inside a halo at or above
    /// the threshold, also when that halo grew past it after the subhalo fell in: hand-made
    /// chains with the answer known by construction.
    #[test]
    fn preprocessing_follows_the_growth_of_the_halo_it_is_in() {
        let cosmo = Cosmology::from_preset("planck18").unwrap();
        let thr = PreprocessingThreshold {
            halo_mass_msun: Some(1e11),
            stellar_mass_msun: None,
        };
        let c = catalog(&[
            // the host grows through 1e11 between t = 2 and t = 3 (seen at its accretions)
            (1, 0, 1.0, 3e10),
            (2, 0, 2.0, 8e10),
            (3, 0, 3.0, 2e11),
            (4, 0, 6.0, 5e11),
            // branch 5: a group that fell in at t = 5; it grew through 1e11 at t = 4
            (5, 0, 5.0, 4e11),
            (6, 5, 1.5, 2e10),
            (7, 5, 4.0, 1.2e11),
            // branch 8: a group below the threshold all along, fell in at t = 7
            (8, 0, 7.0, 6e11),
            (9, 8, 2.5, 1e10),
            (10, 8, 6.5, 3e10),
        ]);
        let g = GalaxyOptions::default();
        let ct = clock_times(&c, &[&cosmo], &g, &thr);
        let pre = |b: u32| ct.pre[c.branch.iter().position(|&x| x == b).unwrap()];
        // fell into the host before it reached the threshold: when the host reached it
        assert_eq!(pre(1), 3.0);
        assert_eq!(pre(2), 3.0);
        // fell into a halo already above it
        assert_eq!(pre(3), 3.0);
        assert_eq!(pre(4), 6.0);
        assert_eq!(pre(7), 4.0);
        // inside group 5 when it grew past the threshold (t = 4, before its infall at t = 5)
        assert_eq!(pre(6), 4.0);
        // group 8 never reached it: the host's crossing counts only from the group's entry
        assert_eq!(pre(9), 7.0);
        assert_eq!(pre(10), 7.0);
        // a threshold no halo reaches: never
        let high = PreprocessingThreshold {
            halo_mass_msun: Some(1e13),
            stellar_mass_msun: None,
        };
        assert!(clock_times(&c, &[&cosmo], &g, &high)
            .pre
            .iter()
            .all(|t| t.is_nan()));
    }
}
