//! The satellite population of Milky-Way-mass hosts (1.2e12 Msun, resolution 10^7.5 Msun,
//! Planck 2018, default options, master seed 5): the census numbers that docs/validation.md
//! quotes and `tests/validation/val_subhaloes.rs` checks, as medians (or sums) over hosts.
//!
//! Run: `cargo run --release --example population [N_HOSTS] [RTOL_IN_SUBHALO] [nodisc]
//! [KEY=VALUE ...]` (default 32 hosts and the default tolerance; `nodisc`: a host without disc
//! and bulge; `-` keeps a default). KEY=VALUE changes one option: `occupation=erf|all|reionization`,
//! `resolution=MSUN`, `disc_tide_ratio=X`, `disc_tide_loss_power=K`, `stripping_alpha=X`, `stripping_alpha_c_slope=P`, `friction_mass_infall_weight=W`, `reionization_z=Z`, `sigma=DEX` (the reionisation occupation's width, `reionization_sigma_dex`), `v_filter=KMS`, `t_vir=K`, `infall_orbits=NAME`, `smhm_epoch=peak|today`, `pericentre_cut=1` (the fixed
//! 20 kpc cut on top), `strip_stars=0` (galaxies keep every star they formed), `size_to_r200c=X`,
//! `size_scatter=DEX` (galaxy sizes, which set how deeply stars sit in their subhaloes),
//! `seed=N` (the master seed; 5 by default, as the validation tests).

use rayon::prelude::*;

use retinue::rng::HostId;
use retinue::stats::census::{census, HostCensus, SHMF_PSI};
use retinue::synth::{synthesize_host, SynthOptions};
use retinue::trees::{TreeBuilder, TreeSpec};
use retinue::{Cosmology, LinearOptions, LinearTheory};

fn median(mut v: Vec<f64>) -> f64 {
    if v.is_empty() {
        return f64::NAN;
    }
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}

fn quantiles(mut v: Vec<f64>) -> String {
    v.retain(|x| x.is_finite());
    if v.is_empty() {
        return "-".into();
    }
    v.sort_by(f64::total_cmp);
    let n = v.len();
    format!(
        "{:.3} ({:.3}-{:.3})",
        v[n / 2],
        v[n * 16 / 100],
        v[n * 84 / 100]
    )
}

/// A faint satellite (M* < 1e6 Msun, alive inside R_vir) that was inside another halo at
/// z > 6: how its group came together.
struct EarlyChild {
    t_infall: f64,
    ratio: f64,
    m_parent: f64,
    parent_delay: f64,
    release_delay: f64,
    m_grandparent: f64,
    bound_fraction: f64,
    order: f64,
}

fn early_children(rec: &retinue::synth::HostRecord, t6: f64) -> Vec<EarlyChild> {
    let rv = rec.summary.r_vir_kpc;
    let row: std::collections::HashMap<u32, usize> = rec
        .subhaloes
        .iter()
        .enumerate()
        .map(|(i, s)| (s.branch, i))
        .collect();
    rec.subhaloes
        .iter()
        .zip(&rec.galaxies)
        .filter(|(s, g)| {
            g.occupied
                && s.status.alive()
                && s.r_kpc < rv
                && g.mstar_msun > 5e3
                && g.mstar_msun < 1e6
                && s.order > 1
                && s.t_infall_gyr < t6
        })
        .map(|(s, _)| {
            let parent = row.get(&s.parent_branch).map(|&p| &rec.subhaloes[p]);
            EarlyChild {
                t_infall: s.t_infall_gyr,
                ratio: s.m_infall_msun / s.m_host_at_infall_msun,
                m_parent: s.m_host_at_infall_msun,
                parent_delay: parent.map_or(f64::NAN, |p| p.t_infall_gyr - s.t_infall_gyr),
                release_delay: s.t_release_gyr - s.t_infall_gyr,
                m_grandparent: parent.map_or(f64::NAN, |p| p.m_host_at_infall_msun),
                bound_fraction: s.m_bound_msun / s.m_infall_msun,
                order: s.order as f64,
            }
        })
        .collect()
}

fn main() {
    let n_hosts: u32 = std::env::args()
        .nth(1)
        .and_then(|s| s.parse().ok())
        .unwrap_or(32);
    let lt = LinearTheory::new(
        Cosmology::from_preset("planck18").expect("preset"),
        LinearOptions::default(),
    )
    .expect("linear theory");
    let mut orbits = retinue::orbits::OrbitOptions::default();
    // positions 2 and 3 take a value or `-`; a KEY=VALUE there would be silently ignored
    let arg = |i: usize| std::env::args().nth(i).filter(|s| s != "-");
    if let Some(a) = arg(2) {
        orbits.rtol_in_subhalo = a
            .parse()
            .unwrap_or_else(|_| panic!("argument 2 is RTOL_IN_SUBHALO or `-`, not {a:?}"));
    }
    let mut host = retinue::host::HostOptions::default();
    match arg(3).as_deref() {
        None => {}
        Some("nodisc") => host.baryons = retinue::host::DiscBulgeParams::none(),
        Some(a) => {
            panic!("argument 3 is `nodisc` or `-`, not {a:?} (KEY=VALUE goes from the 4th on)")
        }
    }
    let mut galaxies = retinue::galaxies::GalaxyOptions::default();
    let mut tree = TreeSpec::milky_way_default();
    let mut cut = false;
    let mut seed = 5u64;
    for kv in std::env::args().skip(4) {
        let (k, v) = kv.split_once('=').expect("KEY=VALUE");
        let x = || v.parse::<f64>().expect("a number");
        match k {
            "occupation" => {
                galaxies.occupation = serde_json::from_str(&format!("\"{v}\"")).expect("occupation")
            }
            "resolution" => tree.m_resolution_msun = x(),
            "disc_tide_ratio" => orbits.disc_tide_ratio = x(),
            "disc_tide_loss_power" => orbits.disc_tide_loss_power = x(),
            "stripping_alpha" => orbits.stripping_alpha = x(),
            "stripping_alpha_c_slope" => orbits.stripping_alpha_c_slope = x(),
            "friction_mass_infall_weight" => orbits.friction_mass_infall_weight = x(),
            "reionization_z" => galaxies.reionization_z = x(),
            "sigma" => galaxies.reionization_sigma_dex = x(),
            "v_filter" => galaxies.reionization_vmax_kms = x(),
            "t_vir" => galaxies.reionization_t_vir_k = x(),
            "pericentre_cut" => cut = x() > 0.0,
            "strip_stars" => galaxies.strip_stars = x() > 0.0,
            "seed" => seed = x() as u64,
            "size_to_r200c" => galaxies.size_to_r200c = x(),
            "size_scatter" => galaxies.size_scatter_dex = x(),
            "smhm_epoch" => {
                galaxies.smhm_epoch = serde_json::from_str(&format!("\"{v}\"")).expect("smhm_epoch")
            }
            "infall_orbits" => {
                orbits.infall_orbits =
                    serde_json::from_str(&format!("\"{v}\"")).expect("infall_orbits")
            }
            _ => panic!("unknown option {k}"),
        }
    }
    let opts = SynthOptions {
        tree,
        host,
        orbits,
        galaxies,
        survey: Default::default(),
    };
    let t6 = lt.cosmology().age_gyr(6.0);
    let t0 = lt.cosmology().age0_gyr();
    let start = std::time::Instant::now();
    let cs: Vec<(HostCensus, f64, Vec<EarlyChild>)> = (0..n_hosts)
        .into_par_iter()
        .map_init(
            || TreeBuilder::new(opts.tree.pch08).expect("builder"),
            |b, i| {
                let rec = synthesize_host(&lt, &opts, seed, HostId::new(0, 0, i), b).expect("host");
                let mut rec = rec;
                if cut {
                    // the fixed pericentre cut on top: those with a pericentre inside it count as
                    // disrupted
                    for s in &mut rec.subhaloes {
                        if s.t_disrupt_pericentre_gyr.is_finite() && s.status.alive() {
                            s.status = retinue::orbits::SubhaloStatus::Disrupted;
                        }
                    }
                }
                (
                    census(&rec, t6),
                    rec.summary.m_vir_msun,
                    early_children(&rec, t6),
                )
            },
        )
        .collect();
    let secs = start.elapsed().as_secs_f64();
    let med = |f: &dyn Fn(&HostCensus) -> f64| median(cs.iter().map(|(c, _, _)| f(c)).collect());
    let sum =
        |f: &dyn Fn(&HostCensus) -> usize| cs.iter().map(|(c, _, _)| f(c)).sum::<usize>() as f64;
    println!(
        "{n_hosts} hosts in {secs:.1} s ({:.2} s per host on this machine's threads)",
        secs / n_hosts as f64
    );
    println!(
        "faint satellites (5e3 < M* < 1e7 inside R_vir), median per host: {} (order >= 2: {}, inside another subhalo: {}, first order: {})",
        med(&|c| c.faint as f64),
        med(&|c| c.faint_higher_order as f64),
        med(&|c| c.faint_in_subhalo as f64),
        med(&|c| c.faint_first_order as f64)
    );
    println!(
        "M_V < 0 within 300 kpc: median {}; M_V < -8 within 300 kpc: {}, inside R_vir: {}",
        med(&|c| c.mv0_within_300kpc as f64),
        med(&|c| c.mv8_r_kpc.len() as f64),
        med(&|c| c.mv8_inside_rvir as f64)
    );
    println!(
        "M_V < -8 within 300 kpc: median distance per host (hosts with 3 or more) {:.0} kpc; \
         pooled fraction within 100 kpc {:.2}",
        median(
            cs.iter()
                .filter(|(c, _, _)| c.mv8_r_kpc.len() >= 3)
                .map(|(c, _, _)| median(c.mv8_r_kpc.clone()))
                .collect()
        ),
        cs.iter()
            .flat_map(|(c, _, _)| c.mv8_r_kpc.iter())
            .filter(|&&r| r < 100.0)
            .count() as f64
            / sum(&|c| c.mv8_r_kpc.len())
    );
    // the fraction of hosts whose count `f` is n
    let with_n = |f: &dyn Fn(&HostCensus) -> usize, n: usize| {
        cs.iter().filter(|(c, _, _)| f(c) == n).count() as f64 / cs.len() as f64
    };
    let within = |c: &HostCensus| c.bright_pair_like_within_150kpc;
    let projected = |c: &HostCensus| c.bright_pair_like_projected_150kpc;
    println!(
        "hosts with 0, 1, 2 satellites of M_V <= -16.8 within 150 kpc: {:.3} {:.3} {:.3}; \
         projected: {:.3} {:.3} {:.3}",
        with_n(&within, 0),
        with_n(&within, 1),
        with_n(&within, 2),
        with_n(&projected, 0),
        with_n(&projected, 1),
        with_n(&projected, 2)
    );
    let mut all: Vec<f64> = cs
        .iter()
        .map(|(c, _, _)| c.mv0_within_300kpc as f64)
        .collect();
    all.sort_by(f64::total_cmp);
    println!("  M_V < 0 per host: {all:?}");
    println!(
        "stacked faint satellites: {:.4} of all; pre-processed (M* < 1e6): {:.3}; in a halo at z > 6: {:.3}",
        sum(&|c| c.faint_stacked) / sum(&|c| c.faint),
        sum(&|c| c.faint_dwarfs_preprocessed) / sum(&|c| c.faint_dwarfs),
        sum(&|c| c.faint_dwarfs_in_halo_at_z6) / sum(&|c| c.faint_dwarfs)
    );
    println!(
        "like with like, the faint dwarfs a simulation would still track (bound mass > {:.0e} Msun): {}; pre-processed {:.3}; in a halo at z > 6: {:.3}",
        retinue::stats::census::TRACKED_MASS_MSUN,
        sum(&|c| c.faint_dwarfs_tracked),
        sum(&|c| c.faint_dwarfs_tracked_preprocessed) / sum(&|c| c.faint_dwarfs_tracked),
        sum(&|c| c.faint_dwarfs_tracked_in_halo_at_z6) / sum(&|c| c.faint_dwarfs_tracked)
    );
    println!(
        "first-order faint satellites that fell back in: {:.3}; with >= 2 pericentres whose last is larger than the smallest: {:.3} of {} (first order {:.3} of {})",
        sum(&|c| c.faint_refallen) / sum(&|c| c.faint_first_order),
        sum(&|c| c.faint_last_peri_larger) / sum(&|c| c.faint_multi_peri),
        sum(&|c| c.faint_multi_peri),
        sum(&|c| c.faint_last_peri_larger_first) / sum(&|c| c.faint_multi_peri_first),
        sum(&|c| c.faint_multi_peri_first)
    );
    let early: Vec<&EarlyChild> = cs.iter().flat_map(|(_, _, e)| e.iter()).collect();
    let q = |f: &dyn Fn(&EarlyChild) -> f64| quantiles(early.iter().map(|e| f(e)).collect());
    let z_of = |t: f64| lt.cosmology().z_at_age(t);
    println!(
        "faint dwarfs (M* < 1e6) inside another halo at z > 6: {}; median (16-84%): infall z {}, \
         mass ratio to the parent {}, log10 parent mass {}, parent's own infall after theirs \
         {} Gyr, release after infall {} Gyr, log10 mass of the parent's container {}, bound \
         fraction today {}, order {}",
        early.len(),
        q(&|e| z_of(e.t_infall)),
        q(&|e| e.ratio),
        q(&|e| e.m_parent.log10()),
        q(&|e| e.parent_delay),
        q(&|e| e.release_delay),
        q(&|e| e.m_grandparent.log10()),
        q(&|e| e.bound_fraction),
        q(&|e| e.order),
    );
    let k = cs.len() as f64;
    for (j, psi) in SHMF_PSI.iter().enumerate() {
        println!(
            "N(m_bound > {psi:e} M_vir) inside R_vir, mean per host: all {:.1}, first order {:.1}",
            cs.iter().map(|(c, _, _)| c.shmf_all[j] as f64).sum::<f64>() / k,
            cs.iter()
                .map(|(c, _, _)| c.shmf_first[j] as f64)
                .sum::<f64>()
                / k
        );
    }
    let comps: Vec<_> = cs
        .iter()
        .flat_map(|(c, _, _)| c.companions.iter().copied())
        .collect();
    let recent: Vec<_> = comps
        .iter()
        .filter(|x| x.alive && x.t_infall_gyr > t0 - 4.0)
        .collect();
    println!(
        "massive (1-3e11 Msun) first-order subhaloes: {} ({} alive); members with M* > 1e4 alive anywhere: median {}; of those alive that fell in within 4 Gyr ({}): bound to it {}, alive anywhere {}",
        comps.len(),
        comps.iter().filter(|x| x.alive).count(),
        median(comps.iter().map(|x| x.alive_anywhere as f64).collect()),
        recent.len(),
        median(recent.iter().map(|x| x.bound as f64).collect()),
        median(recent.iter().map(|x| x.alive_anywhere as f64).collect()),
    );
    let names = [
        "in host",
        "disrupted",
        "in subhalo",
        "merged w/ parent",
        "merged w/ central",
    ];
    for (kk, name) in names.iter().enumerate() {
        println!(
            "status {kk} ({name}): first order {:.1}, higher order {:.1} per host",
            cs.iter()
                .map(|(c, _, _)| c.status_first[kk] as f64)
                .sum::<f64>()
                / k,
            cs.iter()
                .map(|(c, _, _)| c.status_higher[kk] as f64)
                .sum::<f64>()
                / k
        );
    }
}
