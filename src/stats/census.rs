//! A census of one synthesised host: the numbers that say whether its satellite population is
//! believable, for comparison with published simulations and the Milky Way's satellites
//! (tests in `tests/validation/val_subhaloes.rs`, `examples/population.rs`, docs/validation.md).
//!
//! Conventions: a *satellite* is an occupied subhalo alive at the end (in the host, or inside
//! another subhalo: status 0 or 2), at its own position relative to the host's centre. The
//! disc acts through its tide at each pericentre (`orbits.disc_tide_ratio`, already in the
//! status); the fixed pericentre cut (`t_disrupt_pericentre_gyr`) is not applied here (it was
//! until the disc-tide model replaced it as the default).

use super::catalog::{CensusClass, MW_SECOND_BRIGHTEST_M_V};
use crate::orbits::SubhaloStatus;
use crate::synth::HostRecord;

/// Counts of one host.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct HostCensus {
    /// The redshift at which the host's main branch first held half its mass today.
    pub z_half: f64,
    /// Satellites with 5e3 < M* < 1e7 Msun inside R_vir (the demo's selection), and of them:
    /// order >= 2, inside another subhalo at the end (status 2), order 1.
    pub faint: usize,
    pub faint_higher_order: usize,
    pub faint_in_subhalo: usize,
    pub faint_first_order: usize,
    /// Satellites brighter than M_V = 0 within 300 kpc of the host's centre.
    pub mv0_within_300kpc: usize,
    /// The same satellites' distance (kpc), radial velocity (km/s) and squared tangential
    /// speed ((km/s)^2) relative to the host's centre, for their velocity anisotropy.
    pub mv0_r_vr_vt2: Vec<[f64; 3]>,
    /// Satellites brighter than M_V = -8 inside R_vir (those within 300 kpc: `mv8_r_kpc`).
    pub mv8_inside_rvir: usize,
    /// Satellites as bright as the fainter of the Milky Way's two brightest (M_V <= -16.8)
    /// within 150 kpc.
    pub bright_pair_like_within_150kpc: usize,
    /// The same within 150 kpc projected along the host frame's x axis (and 300 kpc in 3D), as
    /// a survey counts them.
    pub bright_pair_like_projected_150kpc: usize,
    /// The distances from the host's centre (kpc) of the satellites brighter than M_V = -8
    /// within 300 kpc, for their radial distribution.
    pub mv8_r_kpc: Vec<f64>,
    /// Of the faint satellites: how many share their exact position with another satellite.
    pub faint_stacked: usize,
    /// Of the faint satellites with M* < 1e6 Msun: how many fell into a halo of at least
    /// 1e10 Msun (at the time) before their group entered the host (pre-processed), and how
    /// many were inside a halo other than the host at z > 6.
    pub faint_dwarfs: usize,
    pub faint_dwarfs_preprocessed: usize,
    pub faint_dwarfs_in_halo_at_z6: usize,
    /// The same three counts for those whose bound mass today exceeds `TRACKED_MASS_MSUN`:
    /// the satellites a zoom-in simulation would still find, to compare with one like with
    /// like.
    pub faint_dwarfs_tracked: usize,
    pub faint_dwarfs_tracked_preprocessed: usize,
    pub faint_dwarfs_tracked_in_halo_at_z6: usize,
    /// Of the faint satellites of first order: how many have a last host infall later than
    /// the first (they left R_vir and fell back).
    pub faint_refallen: usize,
    /// Of the faint satellites with two or more pericentres: how many have their last
    /// pericentre more than 5% larger than their smallest (beyond integration noise).
    pub faint_multi_peri: usize,
    pub faint_last_peri_larger: usize,
    /// The same two counts for the faint satellites of first order.
    pub faint_multi_peri_first: usize,
    pub faint_last_peri_larger_first: usize,
    /// Bound objects alive inside R_vir, all orders and first order, with bound mass above
    /// each of `SHMF_PSI` x M_vir (host's virial mass at the end).
    pub shmf_all: [usize; 5],
    pub shmf_first: [usize; 5],
    /// Each first-order subhalo with 1e11 <= m_peak < 3e11 Msun (a massive satellite, the mass
    /// of the largest companions of Milky-Way-mass hosts).
    pub companions: Vec<Companions>,
    /// Statuses of every subhalo (counts by code 0-4), first order and higher order.
    pub status_first: [usize; 5],
    pub status_higher: [usize; 5],
}

/// The satellites that fell into the host with a massive subhalo (first order,
/// 1e11 <= m_peak < 3e11 Msun) as members of its group, with M* > 1e4 Msun.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Companions {
    /// When the subhalo fell into the host (Gyr) and whether it is still alive.
    pub t_infall_gyr: f64,
    pub alive: bool,
    /// Members alive anywhere at the end (dispersed through the host or not).
    pub alive_anywhere: usize,
    /// Members still bound to it at the end (directly, or to one of its own satellites that is
    /// bound to it): its associated satellites, as observers count them.
    pub bound: usize,
}

/// The smallest bound mass (Msun) a dark-matter-only zoom-in simulation of Milky-Way-mass
/// hosts follows a subhalo down to: about 20 particles (common practice for halo finders) of
/// about 2e5 Msun (a typical particle mass of such simulations; recalled).
pub const TRACKED_MASS_MSUN: f64 = 4e6;

/// The bound-mass thresholds of the cumulative mass functions, in units of the host's M_vir.
pub const SHMF_PSI: [f64; 5] = [1e-5, 3e-5, 1e-4, 3e-4, 1e-3];

/// The census of one host; `t_z6_gyr` is the cosmic time at z = 6 in the host's cosmology.
pub fn census(rec: &HostRecord, t_z6_gyr: f64) -> HostCensus {
    let rv = rec.summary.r_vir_kpc;
    let m_vir = rec.summary.m_vir_msun;
    let subs = &rec.subhaloes;
    let gals = &rec.galaxies;
    let mut c = HostCensus {
        z_half: rec.summary.z_half,
        ..Default::default()
    };
    // branch -> row, for the chain of haloes each object fell into
    let row_of: std::collections::HashMap<u32, usize> = subs
        .iter()
        .enumerate()
        .map(|(i, s)| (s.branch, i))
        .collect();
    // pre-processing: inside a halo of at least 1e10 Msun before its group entered the host,
    // by the infall clocks' own walk (`clocks::preprocessing_times`)
    let pre_t = super::clocks::preprocessing_times(
        &subs.iter().map(|s| s.branch).collect::<Vec<_>>(),
        &subs.iter().map(|s| s.parent_branch).collect::<Vec<_>>(),
        &subs.iter().map(|s| s.t_infall_gyr).collect::<Vec<_>>(),
        &subs
            .iter()
            .map(|s| s.m_host_at_infall_msun)
            .collect::<Vec<_>>(),
        |_| 1e10,
    );
    let mut faint_pos: Vec<[u64; 3]> = Vec::new();
    for (k, (s, g)) in subs.iter().zip(gals).enumerate() {
        let code = s.status as usize;
        if s.order == 1 {
            c.status_first[code] += 1;
        } else {
            c.status_higher[code] += 1;
        }
        if s.status.alive() && s.r_kpc < rv {
            for (k, &psi) in SHMF_PSI.iter().enumerate() {
                if s.m_bound_msun > psi * m_vir {
                    c.shmf_all[k] += 1;
                    if s.order == 1 {
                        c.shmf_first[k] += 1;
                    }
                }
            }
        }
        let Some(class) = CensusClass::of(g.occupied, s.status.alive(), s.r_kpc, g.m_v) else {
            continue;
        };
        if class.mv0_within_300kpc {
            c.mv0_within_300kpc += 1;
            let v_r: f64 = (0..3).map(|k| s.vel_kms[k] * s.pos_kpc[k]).sum::<f64>() / s.r_kpc;
            let v2: f64 = s.vel_kms.iter().map(|v| v * v).sum();
            c.mv0_r_vr_vt2
                .push([s.r_kpc, v_r, (v2 - v_r * v_r).max(0.0)]);
        }
        if class.second_brightest_within_150kpc {
            c.bright_pair_like_within_150kpc += 1;
        }
        if g.m_v <= MW_SECOND_BRIGHTEST_M_V
            && s.r_kpc < 300.0
            && s.pos_kpc[1].hypot(s.pos_kpc[2]) < 150.0
        {
            c.bright_pair_like_projected_150kpc += 1;
        }
        if g.m_v < -8.0 {
            if class.mv8_within_300kpc {
                c.mv8_r_kpc.push(s.r_kpc);
            }
            c.mv8_inside_rvir += (s.r_kpc < rv) as usize;
        }
        if !(s.r_kpc < rv && g.mstar_msun > 5e3 && g.mstar_msun < 1e7) {
            continue;
        }
        c.faint += 1;
        if s.order == 1 {
            c.faint_first_order += 1;
            if s.t_last_host_infall_gyr > s.t_first_host_infall_gyr + 1e-9 {
                c.faint_refallen += 1;
            }
        } else {
            c.faint_higher_order += 1;
        }
        if s.status == SubhaloStatus::InSubhalo {
            c.faint_in_subhalo += 1;
        }
        if s.n_pericentres >= 2 {
            let larger = s.r_peri_last_kpc > 1.05 * s.r_peri_min_kpc;
            c.faint_multi_peri += 1;
            c.faint_last_peri_larger += larger as usize;
            if s.order == 1 {
                c.faint_multi_peri_first += 1;
                c.faint_last_peri_larger_first += larger as usize;
            }
        }
        faint_pos.push(s.pos_kpc.map(f64::to_bits));
        if g.mstar_msun < 1e6 {
            c.faint_dwarfs += 1;
            if s.order > 1 && s.t_infall_gyr < t_z6_gyr {
                c.faint_dwarfs_in_halo_at_z6 += 1;
            }
            let pre = pre_t[k] < s.t_first_host_infall_gyr - 1e-9;
            c.faint_dwarfs_preprocessed += pre as usize;
            if s.m_bound_msun > TRACKED_MASS_MSUN {
                c.faint_dwarfs_tracked += 1;
                c.faint_dwarfs_tracked_preprocessed += pre as usize;
                if s.order > 1 && s.t_infall_gyr < t_z6_gyr {
                    c.faint_dwarfs_tracked_in_halo_at_z6 += 1;
                }
            }
        }
    }
    let mut sorted = faint_pos.clone();
    sorted.sort_unstable();
    for p in &faint_pos {
        let lo = sorted.partition_point(|q| q < p);
        let hi = sorted.partition_point(|q| q <= p);
        if hi - lo > 1 {
            c.faint_stacked += 1;
        }
    }
    for s in subs
        .iter()
        .filter(|s| s.order == 1 && s.m_peak_msun >= 1e11 && s.m_peak_msun < 3e11)
    {
        let mut comp = Companions {
            t_infall_gyr: s.t_infall_gyr,
            alive: s.status.alive(),
            ..Default::default()
        };
        for (o, g) in subs.iter().zip(gals) {
            if !(o.group == s.branch && o.order > 1 && o.status.alive() && g.mstar_msun > 1e4) {
                continue;
            }
            comp.alive_anywhere += 1;
            // bound to it, or to a chain of its satellites that ends at it
            let mut b = o.bound_to_branch;
            let mut hops = 0;
            while b != 0 && b != s.branch && hops < 64 {
                b = row_of
                    .get(&b)
                    .map(|&k| subs[k].bound_to_branch)
                    .unwrap_or(0);
                hops += 1;
            }
            comp.bound += (b != 0 && b == s.branch) as usize;
        }
        c.companions.push(comp);
    }
    c
}
