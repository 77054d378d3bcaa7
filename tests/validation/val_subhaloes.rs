//! Whole hosts: every accretion of a Milky-Way-mass tree evolved in its own host. Checks the
//! surviving population against published fits and the bookkeeping of every orbit.

use retinue::host::{EvolvingHost, HostOptions};
use retinue::orbits::{evolve_host_subhaloes, OrbitOptions, SubhaloResult, SubhaloStatus};
use retinue::rng::{host_rng, HostId, Stream};
use retinue::trees::{HostHistory, TreeBuilder, TreeSpec};
use retinue::{Cosmology, LinearOptions, LinearTheory};

/// `n` hosts of 1.2e12 Msun at resolution 1e8 Msun, seed 21; returns (results, R_vir today).
fn hosts(n: u32, options: &OrbitOptions) -> Vec<(Vec<SubhaloResult>, f64)> {
    let lt = super::planck18();
    let spec = TreeSpec {
        m_resolution_msun: 1e8,
        ..TreeSpec::milky_way_default()
    };
    let mut b = TreeBuilder::new(spec.pch08).unwrap();
    let t_end = lt.cosmology().age0_gyr();
    (0..n)
        .map(|i| {
            let mut rng = host_rng(21, HostId::new(0, 0, i), Stream::Tree);
            let h = HostHistory::from_tree(b.build(&lt, &spec, &mut rng).unwrap());
            let tmin = h
                .accretions
                .iter()
                .map(|a| a.t_infall_gyr)
                .fold(f64::INFINITY, f64::min);
            let host = EvolvingHost::from_history(&lt, &h, &HostOptions::default(), tmin);
            let mut orng = host_rng(21, HostId::new(0, 0, i), Stream::Orbits);
            let res = evolve_host_subhaloes(&lt, &h, &host, options, t_end, &mut orng);
            (res, host.snapshot(t_end).r_vir)
        })
        .collect()
}

/// Censuses of `n` synthesised Milky-Way-mass hosts (1.2e12 Msun, Planck 2018, default
/// options) at tree resolution `res_msun`, master seed 5, two threads; the cosmic time at
/// z = 6 is the clock of the pre-processing check.
fn censuses(n: u32, res_msun: f64) -> Vec<retinue::stats::HostCensus> {
    censuses_with(n, res_msun, HostOptions::default(), None)
        .into_iter()
        .map(|c| c.0)
        .collect()
}

/// `censuses` with these host options; each host's census with its galaxies as painted, and
/// with them painted again with `repaint` (same galaxy random stream; the first again
/// without).
fn censuses_with(
    n: u32,
    res_msun: f64,
    host: HostOptions,
    repaint: Option<retinue::galaxies::GalaxyOptions>,
) -> Vec<(retinue::stats::HostCensus, retinue::stats::HostCensus)> {
    use rayon::prelude::*;
    use retinue::stats::census;
    use retinue::synth::{synthesize_host, SynthOptions};
    let lt = super::planck18();
    let opts = SynthOptions {
        tree: TreeSpec {
            m_resolution_msun: res_msun,
            ..TreeSpec::milky_way_default()
        },
        host,
        orbits: Default::default(),
        galaxies: Default::default(),
        survey: Default::default(),
    };
    let t6 = lt.cosmology().age_gyr(6.0);
    (0..n)
        .into_par_iter()
        .map_init(
            || TreeBuilder::new(opts.tree.pch08).unwrap(),
            |b, i| {
                let id = HostId::new(0, 0, i);
                let mut rec = synthesize_host(&lt, &opts, 5, id, b).unwrap();
                let first = census(&rec, t6);
                if let Some(g) = &repaint {
                    let mut rng = host_rng(5, id, Stream::Galaxies);
                    rec.galaxies = retinue::galaxies::paint(
                        lt.cosmology(),
                        opts.tree.z_final,
                        g,
                        &opts.survey,
                        &rec.subhaloes,
                        &mut rng,
                    );
                }
                (first, census(&rec, t6))
            },
        )
        .collect()
}

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}

/// Evolved subhalo mass function of every bound object inside R_vir today (subhaloes of the
/// host and satellites of satellites alike, bound mass m, psi = m/M_vir), six hosts at a tree
/// resolution of 3e6 Msun (2.5e-6 of the host, so that N(> 1e-5) is complete), against two
/// published fits of dark-matter-only simulations, so the hosts here are the default host
/// without its disc and bulge (like with like; the same six hosts with the disc are printed:
/// the disc's depletion is checked on its own in `val_disc_depletion`):
/// * Springel et al. 2008 (MNRAS 391, 1685), the fit to their highest-resolution halo (A-1), dN/dM = a0
///   (M/m0)^-1.9 inside r50, rescaled self-similarly to R_vir of a 1.2e12 Msun host with the
///   paper's Einasto subhalo profile (fixture `population.json`,
///   `scripts/make_population_fixtures.py`; the paper's values recalled, not re-read). Band
///   (issue): within a factor 1.5 at psi = 1e-5 ... 1e-3; sampling error at 1e-3 (10 objects a
///   host) about 13%, host-to-host scatter of the fit's normalisation about 20% (common
///   practice). Measured: 0.87, 0.81, 0.80, 0.79, 0.76 from 1e-5 to 1e-3 (printed with
///   --nocapture); with the disc 0.75, 0.70, 0.68, 0.71, 0.58 (the disc's tide destroys
///   subhaloes with pericentres inside about 20 kpc, the massive ones most, which sink
///   deepest).
/// * Jiang & van den Bosch 2016 (MNRAS 458, 2848), the universal model of all orders, each
///   host's own expectation from its own z_half (`massfunction::evolved_subhaloes`, checked
///   against `jvdb16.json` in `val_jvdb16_universal_model_vs_astropy`), averaged over the
///   hosts. This fit lies 1.3-1.85 times below the Springel et al. 2008 one at psi = 1e-5 ...
///   1e-3 for these hosts (the two simulation analyses count subhaloes differently), so a
///   factor 1.5 about either fit cannot hold for both. Asserted: the mocks lie inside the
///   band spanned by the two fits, widened by the same factor 1.5 on each side
///   ([JvdB16 / 1.5, Springel08 x 1.5]); the ratio to the universal model alone is printed
///   (measured 1.61, 1.38, 1.23, 1.12, 0.98 from 1e-5 to 1e-3; first order alone 1.00-0.74)
///   and reported in docs/validation.md as not within 1.5 at psi = 1e-5.
#[test]
fn val_evolved_mass_function_vs_published_fits() {
    use retinue::massfunction::evolved_subhaloes as jvdb;
    let f = crate::common::fixture("population.json");
    let psi = crate::common::floats(&f["springel08_rescaled"]["psi_over_m_vir"]);
    let want = crate::common::floats(&f["springel08_rescaled"]["n_greater_inside_r_vir"]);
    assert_eq!(psi, retinue::stats::census::SHMF_PSI.to_vec());
    let cosmo = Cosmology::from_preset("planck18").unwrap();
    let dark = HostOptions {
        baryons: retinue::host::DiscBulgeParams::none(),
        ..HostOptions::default()
    };
    let cs: Vec<_> = censuses_with(6, 3e6, dark, None)
        .into_iter()
        .map(|c| c.0)
        .collect();
    let with_disc = censuses(6, 3e6);
    let k = cs.len() as f64;
    let mean = |cs: &[retinue::stats::HostCensus], j: usize, first: bool| {
        cs.iter()
            .map(|c| if first { c.shmf_first[j] } else { c.shmf_all[j] } as f64)
            .sum::<f64>()
            / cs.len() as f64
    };
    for j in 0..psi.len() {
        let all = mean(&cs, j, false);
        let first = mean(&cs, j, true);
        let universal = cs
            .iter()
            .map(|c| {
                let f_sub = jvdb::subhalo_mass_fraction(jvdb::dynamical_age(&cosmo, c.z_half));
                jvdb::n_greater(psi[j], f_sub)
            })
            .sum::<f64>()
            / k;
        let ratio = all / want[j];
        eprintln!(
            "N(> {:e} M_vir) = {all:.1} (first order {first:.1}; with the disc {:.1}, ratio \
             {:.2}); Springel et al. 2008 rescaled: {:.1}, ratio {ratio:.2}; Jiang & van den \
             Bosch 2016 universal: {universal:.1}, ratio {:.2} (first order {:.2})",
            psi[j],
            mean(&with_disc, j, false),
            mean(&with_disc, j, false) / want[j],
            want[j],
            all / universal,
            first / universal
        );
        assert!(
            (1.0 / 1.5..=1.5).contains(&ratio),
            "psi = {}: {all} against {}",
            psi[j],
            want[j]
        );
        assert!(
            all >= universal.min(want[j]) / 1.5 && all <= universal.max(want[j]) * 1.5,
            "psi = {}: {all} outside [{universal:.1}, {:.1}] widened by 1.5",
            psi[j],
            want[j]
        );
    }
}

/// The universal model of Jiang & van den Bosch 2016 as implemented
/// (`massfunction::evolved_subhaloes`) against the same formulas evaluated with astropy 8.0.2
/// (FlatLambdaCDM with this tool's planck18 parameters) and scipy 1.18.1 quadrature
/// (`tests/reference/scripts/make_jvdb16_fixtures.py`, fixture `jvdb16.json`): dynamical age,
/// subhalo mass fraction and N(> psi) at z_half = 0.5 ... 2. Tolerance 1e-6 relative (both
/// quadratures converge to 1e-10; the only difference is the route, over z here and over t
/// there).
#[test]
fn val_jvdb16_universal_model_vs_astropy() {
    use retinue::massfunction::evolved_subhaloes as jvdb;
    let f = crate::common::fixture("jvdb16.json");
    let psi = crate::common::floats(&f["psi"]);
    let cosmo = Cosmology::from_preset("planck18").unwrap();
    for h in f["hosts"].as_array().unwrap() {
        let zh = h["z_half"].as_f64().unwrap();
        let n = jvdb::dynamical_age(&cosmo, zh);
        let want_n = h["n_tau"].as_f64().unwrap();
        assert!(
            (n / want_n - 1.0).abs() < 1e-6,
            "z_half {zh}: N_tau {n} vs {want_n}"
        );
        let fs = jvdb::subhalo_mass_fraction(n);
        let want_f = h["f_sub"].as_f64().unwrap();
        assert!(
            (fs / want_f - 1.0).abs() < 1e-6,
            "z_half {zh}: f_sub {fs} vs {want_f}"
        );
        let want = crate::common::floats(&h["n_greater"]);
        for (p, w) in psi.iter().zip(&want) {
            let got = jvdb::n_greater(*p, fs);
            assert!(
                (got / w - 1.0).abs() < 1e-6,
                "z_half {zh}, psi {p}: {got} vs {w}"
            );
        }
    }
}

/// Distances (kpc, heliocentric) of the Milky Way's satellites brighter than M_V = -8 within
/// 300 kpc: fourteen, from the compilation table of the Milky Way's satellites (distances and
/// M_V from McConnachie 2012, AJ 144, 4, and the discovery papers of the later ones) on a
/// public encyclopedia page, read 2026-12-05; the 76 kpc entry is recalled (that row of the
/// page was cut off; McConnachie 2012 gives 76 kpc and M_V = -8.8, recalled). Left out: the
/// object at 8 kpc (M_V = -14.4), whose nature as a satellite is disputed (common practice).
/// Names are left out on purpose (this repository names no real object).
const MW_MV8_DISTANCES_KPC: [f64; 14] = [
    20.0, 48.5, 61.0, 76.0, 80.0, 90.0, 90.0, 100.0, 117.5, 130.0, 140.0, 210.0, 220.0, 250.0,
];

/// Heliocentric against galactocentric distance: they differ by at most the Sun's distance
/// from the centre, 8.2 kpc (rounded up; the crate's sky conversions use 8.178 kpc).
const MW_DISTANCE_OFFSET_KPC: f64 = 8.2;

/// The satellite population of the default Milky-Way-mass host (64 hosts at the default
/// resolution of 10^7.5 Msun), against published numbers:
/// * satellites brighter than M_V = 0 within 300 kpc: median in [80, 350], spanning the
///   completeness-corrected Milky Way estimates of 124 (+40/-27) (Newton et al. 2018, MNRAS
///   479, 2853) and about 220 +- 50 (Drlica-Wagner et al. 2020, ApJ 893, 47) (both as quoted
///   in the issue, not re-read); host-to-host scatter of the mocks about 25%;
/// * satellites brighter than M_V = -8 within 300 kpc: median in [8, 25] (the Milky Way has
///   about 14, common practice: a count of the known satellites; host-to-host factors of 2 in
///   simulations);
/// * satellites with M* < 1e6 Msun inside R_vir that were inside a halo of at least 1e10 Msun
///   (fell into one, or were in one that grew past it) before their group entered the host
///   (pre-processed): fraction in [0.15, 0.6] (about a
///   third of all subhaloes accreted in groups, Li & Helmi 2008, MNRAS 385, 1365, abstract;
///   zoom-in studies of faint dwarfs report up to about a half, recalled). Those simulations
///   give dwarfs their stars by peak halo mass (abundance matching), so this check paints the
///   same
///   subhaloes again with the
///   peak-mass (erf) occupation: it tests the trees and orbits, not the choice of occupation.
///   With the default reionisation occupation, which favours haloes that formed early, the
///   fraction is higher (0.607, printed, just above the band; 0.469 with the peak-mass occupation);
/// * the same faint satellites that were already inside another halo at z > 6 (their infall
///   into their first parent): below 0.1 (the issue's target), with the peak-mass occupation
///   for the same reason (the issue's source, a zoom-in study recalled there, is not named
///   here); measured 0.057, and 0.105 with the default occupation (printed, not asserted;
///   docs/validation.md, "Not met yet");
/// * the same two fractions for the dwarfs such a simulation would still find today (bound
///   mass above `census::TRACKED_MASS_MSUN`, about 20 particles of its ~2e5 Msun, recalled):
///   the early children are the most stripped (median bound fraction 1.2%), and a simulation
///   loses them first. Both occupations: the issue's targets (below 0.1; [0.15, 0.6]);
///   measured 0.019 and 0.417 with the peak-mass occupation, 0.037 and 0.545 with the default
///   (the census itself: N(M_V < 0) 109.5, N(M_V < -8) 15.5, companions 2; the gradual disc
///   default, 2026-12-05);
/// * the radial distribution of the satellites brighter than M_V = -8 within 300 kpc: the
///   Milky Way's median distance (95 kpc, `MW_MV8_DISTANCES_KPC`) inside the range of the
///   mock hosts' medians (Samuel et al. 2020, MNRAS 491, 1471; arXiv:1904.11508, abstract:
///   baryonic zoom-in simulations of Milky-Way-mass hosts broadly agree with the observed
///   Local Group, spanning the radial profiles around the Milky Way and its large neighbour)
///   and more concentrated
///   than half of them (Carlsten et al. 2020, ApJ 902, 124, abstract: observed hosts, the Milky
///   Way among them, are "~2 sigma outliers relative to the simulated hosts in being too
///   concentrated, while none of the observed hosts are less centrally concentrated than the
///   simulations"); each bound is taken at the side of 95 +- 8.2 kpc that favours it
///   (heliocentric against galactocentric);
/// * the velocity anisotropy beta = 1 - sigma_t^2 / (2 sigma_r^2) of the satellites brighter
///   than M_V = 0 by shell: Riley et al. 2019 (MNRAS 486, 2679, abstract; 38 Milky Way
///   satellites with proper motions) find the Milky Way's rising "from beta ~ -2 at r ~ 20 kpc
///   to beta ~ 0.5 at r ~ 200 kpc", tangential inside and radial outside, as in simulated hosts
///   with massive baryonic discs, and attribute it perhaps to "the central stellar disc
///   preferentially destroying satellites on radial orbits". Asserted, with two errors of a
///   bootstrap over the hosts (400 resamples, fixed seed): beta between -4 and -1 within 30 kpc
///   (tangential, "~ -2" read as a rough value, within a factor of 2), above 0 at 100-300 kpc,
///   and the same 64 hosts without disc and bulge less tangential within 30 kpc;
/// * satellites sharing their exact position with another: below 1% (the issue's check: each
///   satellite of a satellite has its own orbit);
/// * companions of a massive subhalo (first order, 1e11-3e11 Msun, alive, fell in
///   within the last 4 Gyr): members of its group with M* > 1e4 Msun still bound to it, median
///   in [2, 20] (observed associations of the Milky Way's largest satellite: 4 long-term and 2
///   recently captured, Patel et al. 2020, ApJ 893, 121; 6 ultra-faints and the second
///   largest satellite, Erkal &
///   Belokurov 2020; predictions 4-8 with M* > 1e4 Msun within 50 kpc, Dooley et al. 2017,
///   arXiv:1703.05321; all from the papers' abstracts).
///
/// Binomial error of the pooled fractions (about 4,000 dwarfs): 0.005-0.008; about 10 such
/// analogues.
#[test]
fn val_satellite_population_census() {
    use rand::{Rng, SeedableRng};
    let erf = retinue::galaxies::GalaxyOptions {
        occupation: retinue::galaxies::Occupation::Erf,
        ..Default::default()
    };
    let pairs = censuses_with(64, 10f64.powf(7.5), HostOptions::default(), Some(erf));
    let cs: Vec<_> = pairs.iter().map(|p| p.0.clone()).collect();
    let by_peak: Vec<_> = pairs.iter().map(|p| p.1.clone()).collect();
    let sum_of = |v: &[retinue::stats::HostCensus],
                  f: &dyn Fn(&retinue::stats::HostCensus) -> usize| {
        v.iter().map(f).sum::<usize>() as f64
    };
    let sum = |f: &dyn Fn(&retinue::stats::HostCensus) -> usize| sum_of(&cs, f);
    let mv8 = median(cs.iter().map(|c| c.mv8_r_kpc.len() as f64).collect());
    let mv0 = median(cs.iter().map(|c| c.mv0_within_300kpc as f64).collect());
    let pre =
        sum_of(&by_peak, &|c| c.faint_dwarfs_preprocessed) / sum_of(&by_peak, &|c| c.faint_dwarfs);
    let pre_default = sum(&|c| c.faint_dwarfs_preprocessed) / sum(&|c| c.faint_dwarfs);
    let z6 = sum(&|c| c.faint_dwarfs_in_halo_at_z6) / sum(&|c| c.faint_dwarfs);
    let z6_peak =
        sum_of(&by_peak, &|c| c.faint_dwarfs_in_halo_at_z6) / sum_of(&by_peak, &|c| c.faint_dwarfs);
    let stacked = sum(&|c| c.faint_stacked) / sum(&|c| c.faint);
    // like with like: only the dwarfs a zoom-in simulation would still track
    // (`TRACKED_MASS_MSUN`), stars by peak mass as in such simulations
    let tracked = sum_of(&by_peak, &|c| c.faint_dwarfs_tracked);
    let z6_tracked = sum_of(&by_peak, &|c| c.faint_dwarfs_tracked_in_halo_at_z6) / tracked;
    let pre_tracked = sum_of(&by_peak, &|c| c.faint_dwarfs_tracked_preprocessed) / tracked;
    let z6_tracked_default =
        sum(&|c| c.faint_dwarfs_tracked_in_halo_at_z6) / sum(&|c| c.faint_dwarfs_tracked);
    let pre_tracked_default =
        sum(&|c| c.faint_dwarfs_tracked_preprocessed) / sum(&|c| c.faint_dwarfs_tracked);
    eprintln!(
        "dwarfs a simulation would track (bound mass > {:.0e} Msun), peak-mass occupation: \
         {tracked}; inside another halo at z > 6: {z6_tracked:.3} ({z6_tracked_default:.3} \
         with the default occupation); pre-processed {pre_tracked:.3} ({pre_tracked_default:.3})",
        retinue::stats::census::TRACKED_MASS_MSUN
    );
    eprintln!(
        "median N(M_V < 0, < 300 kpc) = {mv0}; median N(M_V < -8, < 300 kpc) = {mv8}; \
         pre-processed {pre:.3} with the peak-mass occupation, {pre_default:.3} with the \
         default; inside another halo at z > 6: {z6_peak:.3} and {z6:.3}; stacked \
         {stacked:.4}; median faint satellites {} (in another subhalo {})",
        median(cs.iter().map(|c| c.faint as f64).collect()),
        median(cs.iter().map(|c| c.faint_in_subhalo as f64).collect()),
    );
    assert!((80.0..=350.0).contains(&mv0), "median N(M_V < 0) = {mv0}");
    let t0 = Cosmology::from_preset("planck18").unwrap().age0_gyr();
    let recent: Vec<&retinue::stats::Companions> = cs
        .iter()
        .flat_map(|c| c.companions.iter())
        .filter(|m| m.alive && m.t_infall_gyr > t0 - 4.0)
        .collect();
    let bound = median(recent.iter().map(|m| m.bound as f64).collect());
    eprintln!(
        "massive subhaloes (1e11-3e11 Msun) that fell in within 4 Gyr: {}; companions still bound: median \
         {bound}; members alive anywhere: median {}",
        recent.len(),
        median(recent.iter().map(|m| m.alive_anywhere as f64).collect())
    );
    assert!(recent.len() >= 5, "{} analogues", recent.len());
    assert!((2.0..=20.0).contains(&bound), "companions {bound}");
    assert!((8.0..=25.0).contains(&mv8), "median N(M_V < -8) = {mv8}");
    assert!((0.15..=0.6).contains(&pre), "pre-processed fraction {pre}");
    assert!(stacked < 0.01, "stacked fraction {stacked}");
    assert!(z6_peak < 0.1, "inside another halo at z > 6: {z6_peak}");
    // the issue's targets, like with like (error of the pooled fraction 0.003, a bootstrap
    // over the 64 hosts: dwarfs cluster by host and group)
    assert!(
        z6_tracked < 0.1,
        "tracked, inside another halo at z > 6: {z6_tracked}"
    );
    assert!(
        (0.15..=0.6).contains(&pre_tracked),
        "tracked, pre-processed {pre_tracked}"
    );
    // and the issue's targets, like with like, at the default occupation
    assert!(
        z6_tracked_default < 0.1,
        "tracked, default occupation, inside another halo at z > 6: {z6_tracked_default}"
    );
    assert!(
        (0.15..=0.6).contains(&pre_tracked_default),
        "tracked, default occupation, pre-processed {pre_tracked_default}"
    );
    // the same 64 hosts without disc and bulge, for the two checks below
    let no_disc: Vec<_> = censuses_with(
        64,
        10f64.powf(7.5),
        HostOptions {
            baryons: retinue::host::DiscBulgeParams::none(),
            ..HostOptions::default()
        },
        None,
    )
    .into_iter()
    .map(|p| p.0)
    .collect();
    // the radial distribution of the bright satellites against the Milky Way's: each host's
    // median distance (hosts with 3 or more), sorted
    let host_medians = |set: &[retinue::stats::HostCensus]| {
        let mut m: Vec<f64> = set
            .iter()
            .filter(|c| c.mv8_r_kpc.len() >= 3)
            .map(|c| median(c.mv8_r_kpc.clone()))
            .collect();
        m.sort_by(|a, b| a.total_cmp(b));
        m
    };
    let (medians, medians_none) = (host_medians(&cs), host_medians(&no_disc));
    let mw = median(MW_MV8_DISTANCES_KPC.to_vec());
    let below = |m: &[f64], x: f64| m.iter().filter(|&&v| v < x).count();
    let inner = |v: &[f64]| v.iter().filter(|&&r| r < 100.0).count() as f64 / v.len() as f64;
    for (label, set, m) in [
        ("with the disc", &cs, &medians),
        ("without it", &no_disc, &medians_none),
    ] {
        let pooled: Vec<f64> = set
            .iter()
            .flat_map(|c| c.mv8_r_kpc.iter().copied())
            .collect();
        eprintln!(
            "satellites brighter than M_V = -8 within 300 kpc, {label}: median distance per \
             host {:.0} kpc (hosts' 5-95%: {:.0}-{:.0}; {} hosts with 3 or more), pooled \
             fraction within 100 kpc {:.2}; the Milky Way {mw:.0} kpc (+-{MW_DISTANCE_OFFSET_KPC} \
             kpc), {} of {} hosts more concentrated ({}-{} for {:.0}-{:.0} kpc), fraction within \
             100 kpc {:.2}",
            median(m.to_vec()),
            m[m.len() / 20],
            m[m.len() * 19 / 20],
            m.len(),
            inner(&pooled),
            below(m, mw),
            m.len(),
            below(m, mw - MW_DISTANCE_OFFSET_KPC),
            below(m, mw + MW_DISTANCE_OFFSET_KPC),
            mw - MW_DISTANCE_OFFSET_KPC,
            mw + MW_DISTANCE_OFFSET_KPC,
            inner(&MW_MV8_DISTANCES_KPC)
        );
    }
    assert!(
        medians.len() >= 48,
        "{} hosts with 3 or more",
        medians.len()
    );
    assert!(
        below(&medians, mw + MW_DISTANCE_OFFSET_KPC) >= 1
            && below(&medians, mw - MW_DISTANCE_OFFSET_KPC) < medians.len() / 2,
        "the Milky Way's median distance {mw} kpc against the hosts' {medians:?}"
    );
    // the velocity anisotropy of the satellites brighter than M_V = 0, by shell, against the
    // Milky Way's: sigma_r^2 about the shell's mean v_r; sigma_t^2 is the mean of v_t^2 (a
    // net rotation, if any, counts as dispersion); errors from a bootstrap over the hosts
    // (the report's census uses the same sums and shells: `catalog::VelocitySums`)
    let beta = |set: &[&retinue::stats::HostCensus], r0: f64, r1: f64| {
        let mut sums = retinue::stats::catalog::VelocitySums::default();
        for v in set.iter().flat_map(|c| c.mv0_r_vr_vt2.iter()) {
            if v[0] >= r0 && v[0] < r1 {
                sums.add(v[1], v[2].sqrt());
            }
        }
        (sums.beta(), sums.n)
    };
    let shells = retinue::stats::catalog::ANISOTROPY_SHELLS_KPC;
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(11);
    // per shell: beta, its bootstrap error and the number of satellites
    let mut with_errors = |set: &[retinue::stats::HostCensus]| -> Vec<(f64, f64, f64)> {
        let all: Vec<&retinue::stats::HostCensus> = set.iter().collect();
        let mut boot = vec![Vec::new(); shells.len()];
        for _ in 0..400 {
            let sample: Vec<&retinue::stats::HostCensus> = (0..all.len())
                .map(|_| all[rng.random_range(0..all.len())])
                .collect();
            for (k, &(r0, r1)) in shells.iter().enumerate() {
                boot[k].push(beta(&sample, r0, r1).0);
            }
        }
        shells
            .iter()
            .zip(&boot)
            .map(|(&(r0, r1), b)| {
                let m = b.iter().sum::<f64>() / b.len() as f64;
                let sd = (b.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / (b.len() - 1) as f64)
                    .sqrt();
                let (value, n) = beta(&all, r0, r1);
                (value, sd, n)
            })
            .collect()
    };
    let (b_disc, b_none) = (with_errors(&cs), with_errors(&no_disc));
    for (label, b) in [("with the disc", &b_disc), ("without it", &b_none)] {
        eprintln!(
            "velocity anisotropy of the satellites brighter than M_V = 0, {label}: \
             beta = {:.2} +- {:.2}, {:.2} +- {:.2}, {:.2} +- {:.2}, {:.2} +- {:.2} in 0-30, \
             30-50, 50-100, 100-300 kpc ({}, {}, {}, {} satellites over the hosts; the Milky \
             Way: about -2 at 20 kpc rising to about 0.5 at 200 kpc, Riley et al. 2019)",
            b[0].0,
            b[0].1,
            b[1].0,
            b[1].1,
            b[2].0,
            b[2].1,
            b[3].0,
            b[3].1,
            b[0].2,
            b[1].2,
            b[2].2,
            b[3].2
        );
    }
    assert!(
        b_disc[0].0 + 2.0 * b_disc[0].1 < -1.0 && b_disc[0].0 - 2.0 * b_disc[0].1 > -4.0,
        "inner satellites not tangential like the Milky Way's (about -2, read as -4 to -1): {:?}",
        b_disc[0]
    );
    assert!(
        b_disc[3].0 - 2.0 * b_disc[3].1 > 0.0,
        "outer satellites not radial like the Milky Way's: {:?}",
        b_disc[3]
    );
    assert!(
        b_disc[0].0 + 2.0 * (b_disc[0].1.powi(2) + b_none[0].1.powi(2)).sqrt() < b_none[0].0,
        "the disc does not make the inner satellites more tangential: {:?} against {:?}",
        b_disc[0],
        b_none[0]
    );
}

/// Radial distribution of surviving first-order subhaloes (bound mass > 1e-4 M0) inside
/// R_vir, 12 hosts (about 850 objects) against the Einasto fit to the subhalo number-density profiles of Springel et al.
/// 2008 (MNRAS 391, 1685): n ∝ exp[-(2/alpha)((r/r_-2)^alpha - 1)], alpha = 0.678,
/// r_-2 = 0.81 r_200 (recalled from memory), with r_200c = 0.73 R_vir: cumulative fractions
/// 0.101, 0.383, 0.708 inside 0.25, 0.5, 0.75 R_vir (scipy quadrature). The
/// binomial error sqrt(f(1-f)/N) of a fraction is about 0.017; tolerance 4 such errors
/// (computed from the actual N), since the fit is for a differently selected population.
#[test]
fn val_radial_distribution() {
    let m0 = 1.2e12;
    let hs = hosts(12, &OrbitOptions::default());
    let xs = [0.25, 0.5, 0.75];
    let want = [0.101, 0.383, 0.708];
    let mut inside = [0.0; 3];
    let mut total = 0.0;
    for (res, rv) in &hs {
        for r in res.iter().filter(|r| {
            r.status.alive() && r.order == 1 && r.m_bound_msun > 1e-4 * m0 && r.r_kpc < *rv
        }) {
            total += 1.0;
            for k in 0..3 {
                inside[k] += (r.r_kpc < xs[k] * rv) as u32 as f64;
            }
        }
    }
    assert!(total > 500.0, "{total}");
    eprintln!(
        "fractions inside 0.25, 0.5, 0.75 R_vir: {:.3}, {:.3}, {:.3} (N = {total})",
        inside[0] / total,
        inside[1] / total,
        inside[2] / total
    );
    for k in 0..3 {
        let f = inside[k] / total;
        let tol = 4.0 * (want[k] * (1.0 - want[k]) / total).sqrt();
        assert!(
            (f - want[k]).abs() < tol,
            "N(<{} R_vir)/N = {f:.3} vs {} (tol {tol:.3}, N = {total})",
            xs[k],
            want[k]
        );
    }
}

/// Survival of subhaloes in dark-matter-only hosts against two simulations.
///
/// The subhaloes a dark-matter-only simulation had inside its host at z = 1, today: Diemand,
/// Kuhlen & Madau 2007 (ApJ 667, 859; abstract, read here) followed them in one Milky-Way-mass
/// halo: "97% of the z=1 subhalos have a surviving bound remnant at the present epoch", and
/// "satellites with maximum circular velocities Vmax=10 km/s at z=1 have today about 40% of
/// their mass back then", the retained fraction being "larger for initially lighter
/// subhalos". Like with like: 16 hosts without disc and bulge of their halo's mass, 1.77e12
/// Msun, in their cosmology, WMAP3 (Omega_m 0.238, Omega_b 0.042, h 0.73, sigma_8 0.74,
/// n_s 0.951; both recalled, not read), tree resolution 3e6 Msun. Each subhalo's bound mass
/// and distance at z = 1 come from `synthesize_host_recording`; V_max then from the tidal
/// track. "Subhaloes at z = 1": every order inside R_vir of the main branch then, with at
/// least 4.2e6 Msun bound (200 particles of that simulation's 2.1e4 Msun, recalled: a
/// well-resolved subhalo, common practice; above the tree resolution, so the sample is
/// complete). "A surviving bound remnant": alive today with at least 10 such particles
/// (2.1e5 Msun, common practice for the smallest bound group a finder keeps; 20 printed).
/// Tolerances:
/// * survival: the published number is one halo, so it is compared with the spread of the
///   model's hosts, not with their mean: it must lie within the range of the 16 hosts' own
///   fractions (a 17th host of the same distribution falls outside that range with
///   probability 2/17);
/// * retained mass: "about 40%" read as one significant figure, 0.35-0.45, widened by twice
///   the error of the model's pooled median (bootstrap over hosts, 400 resamples, fixed
///   seed); the median over objects, dead ones counting 0 (printed with the mean);
/// * "lighter retain more": the pooled median at V_max 5-8 km/s above that at 20-40 km/s by
///   more than twice their combined bootstrap errors.
///
/// The same hosts against He, Han & Li 2024 (arXiv:2408.04470; abstract, read here), who
/// followed the subhaloes of six dark-matter-only Milky-Way-mass haloes: "all of the
/// first-order subhalos accreted after redshift 2 survive to the present time", and "most of
/// the disrupted subhalos are sub-subhalos accreted at high redshift". Here: first-order
/// subhaloes that fell in after z = 2 with less than 1% of the host's mass then (heavier ones
/// sink by friction and merge, which a simulation counts as a merger; printed), at most 0.5%
/// of them ended ("all" in a sample of a few hundred per halo bounds the rate near 0.5%, as in
/// `val_mass_lost_in_the_first_radial_orbit`); and of every subhalo that ended (disrupted, or
/// merged with the halo it orbited: a halo finder loses both), more than half are satellites
/// of satellites that fell into their first halo before z = 2.
///
/// Printed, not met (docs/validation.md, "Not met yet"): when today's subhaloes (inside
/// R_vir, bound mass at least 1e-5 M_vir) first fell in, against Gao et al. 2004; also above
/// 1e-4 and 1e-3 M_vir, as a coarser simulation would count them.
///
/// Also: recording at an epoch changes nothing else (one host with and without, every
/// field compared).
#[test]
fn val_subhalo_survival_vs_dmo_simulations() {
    use rand::{Rng, SeedableRng};
    use rayon::prelude::*;
    use retinue::synth::{synthesize_host, synthesize_host_recording, SynthOptions};
    let mut p = Cosmology::from_preset("wmap5").unwrap().params.clone();
    p.name = "wmap3 (recalled)".into();
    (p.h, p.omega_m, p.omega_b, p.sigma8, p.n_s) = (0.73, 0.238, 0.042, 0.74, 0.951);
    let lt = LinearTheory::new(Cosmology::new(p).unwrap(), LinearOptions::default()).unwrap();
    let cosmo = lt.cosmology().clone();
    let opts = SynthOptions {
        tree: TreeSpec {
            m_host_msun: 1.77e12,
            m_resolution_msun: 3e6,
            ..TreeSpec::milky_way_default()
        },
        host: HostOptions {
            baryons: retinue::host::DiscBulgeParams::none(),
            ..HostOptions::default()
        },
        orbits: Default::default(),
        galaxies: Default::default(),
        survey: Default::default(),
    };
    let z1 = 1.0;
    let t1 = cosmo.age_gyr(z1);
    let t2 = cosmo.age_gyr(2.0);
    const N_HOSTS: u32 = 16;
    // per host, the z = 1 subhaloes (bound mass at z = 1, V_max at z = 1 in km/s, bound mass
    // today or 0) and the counts of He, Han & Li's two statements
    type AtZ1 = (f64, f64, f64);
    // and when today's subhaloes first fell into the host
    // today's subhaloes: (first infall time, bound mass / M_vir)
    type Today = (f64, f64);
    let per_host: Vec<(Vec<AtZ1>, [usize; 5], Vec<Today>)> = (0..N_HOSTS)
        .into_par_iter()
        .map_init(
            || TreeBuilder::new(opts.tree.pch08).unwrap(),
            |b, i| {
                let id = HostId::new(0, 0, i);
                let rec = synthesize_host_recording(&lt, &opts, 5, id, b, t1).unwrap();
                if i == 0 {
                    let plain = synthesize_host(&lt, &opts, 5, id, b).unwrap();
                    assert_eq!(plain.subhaloes.len(), rec.subhaloes.len());
                    for (a, r) in plain.subhaloes.iter().zip(&rec.subhaloes) {
                        let mut r = r.clone();
                        r.m_bound_at_epoch_msun = f64::NAN;
                        r.r_at_epoch_kpc = f64::NAN;
                        assert_eq!(format!("{a:?}"), format!("{r:?}"));
                    }
                }
                // R_vir of the main branch at z = 1 (its mass interpolated in ln M)
                let k = rec.mah_z.iter().position(|&z| z >= z1).unwrap();
                let f = (z1 - rec.mah_z[k - 1]) / (rec.mah_z[k] - rec.mah_z[k - 1]);
                let ln_m = rec.mah_msun[k - 1].ln() * (1.0 - f) + rec.mah_msun[k].ln() * f;
                let rv = retinue::halo::MassDefinition::Vir.radius_kpc(&cosmo, ln_m.exp(), z1);
                // [first order fallen in after z = 2 below 1% of the host then, of them ended,
                //  all ended (disrupted or merged), of them satellites of satellites that fell
                //  into their first halo before z = 2, first order after z = 2 of any mass ended]
                let mut counts = [0usize; 5];
                for s in &rec.subhaloes {
                    let late = s.order == 1 && s.t_first_host_infall_gyr > t2;
                    if late && s.m_infall_msun < 0.01 * s.m_host_at_infall_msun {
                        counts[0] += 1;
                        counts[1] += usize::from(!s.status.alive());
                    }
                    if !s.status.alive() {
                        counts[2] += 1;
                        counts[3] += usize::from(s.order > 1 && s.t_infall_gyr < t2);
                        counts[4] += usize::from(late);
                    }
                }
                let z1_subs = rec
                    .subhaloes
                    .iter()
                    .filter(|s| s.r_at_epoch_kpc < rv && s.m_bound_at_epoch_msun >= 4.2e6)
                    .map(|s| {
                        let x = s.m_bound_at_epoch_msun / s.m_infall_msun;
                        let v =
                            s.vmax_infall_kms * retinue::orbits::tidal_track::vmax_rmax_ratio(x).0;
                        let today = if s.status.alive() {
                            s.m_bound_msun
                        } else {
                            0.0
                        };
                        (s.m_bound_at_epoch_msun, v, today)
                    })
                    .collect();
                let h = &rec.summary;
                let today = rec
                    .subhaloes
                    .iter()
                    .filter(|s| {
                        s.status.alive()
                            && s.r_kpc < h.r_vir_kpc
                            && s.m_bound_msun >= 1e-5 * h.m_vir_msun
                    })
                    .map(|s| (s.t_first_host_infall_gyr, s.m_bound_msun / h.m_vir_msun))
                    .collect();
                (z1_subs, counts, today)
            },
        )
        .collect();
    let hosts: Vec<&Vec<AtZ1>> = per_host.iter().map(|h| &h.0).collect();
    let count = |k: usize| per_host.iter().map(|h| h.1[k]).sum::<usize>();
    let n_z1: usize = hosts.iter().map(|h| h.len()).sum();
    assert!(n_z1 > 10_000, "{n_z1} subhaloes at z = 1");
    // survival, per host
    let survival = |h: &Vec<AtZ1>, m_min: f64| {
        h.iter().filter(|r| r.2 >= m_min).count() as f64 / h.len() as f64
    };
    let survivals: Vec<f64> = hosts.iter().map(|h| survival(h, 2.1e5)).collect();
    let (lo, hi) = survivals
        .iter()
        .fold((1.0f64, 0.0f64), |(a, b), &x| (a.min(x), b.max(x)));
    let pooled = |m_min: f64| {
        hosts
            .iter()
            .flat_map(|h| h.iter())
            .filter(|r| r.2 >= m_min)
            .count() as f64
            / n_z1 as f64
    };
    eprintln!(
        "z = 1 subhaloes ({:.0} per host) alive today with >= 10 particles: pooled {:.3}, \
         median host {:.3}, range {lo:.3}-{hi:.3}; with >= 20 particles pooled {:.3}; \
         published 0.97 (one halo)",
        n_z1 as f64 / N_HOSTS as f64,
        pooled(2.1e5),
        median(survivals.clone()),
        pooled(4.2e5)
    );
    assert!(
        (lo..=hi).contains(&0.97),
        "0.97 outside the hosts' survival fractions {lo:.3}-{hi:.3}"
    );
    // retained mass by V_max at z = 1, with its bootstrap error over hosts
    let retained = |sel: &[&Vec<AtZ1>], v0: f64, v1: f64| {
        median(
            sel.iter()
                .flat_map(|h| h.iter())
                .filter(|r| r.1 >= v0 && r.1 < v1)
                .map(|r| r.2 / r.0)
                .collect(),
        )
    };
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
    let bins = [(5.0, 8.0), (8.0, 12.0), (20.0, 40.0)];
    let mut boot = vec![Vec::new(); bins.len()];
    for _ in 0..400 {
        let sample: Vec<&Vec<AtZ1>> = (0..N_HOSTS)
            .map(|_| hosts[rng.random_range(0..hosts.len())])
            .collect();
        for (k, &(v0, v1)) in bins.iter().enumerate() {
            boot[k].push(retained(&sample, v0, v1));
        }
    }
    let sd = |v: &Vec<f64>| {
        let m = v.iter().sum::<f64>() / v.len() as f64;
        (v.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / (v.len() - 1) as f64).sqrt()
    };
    let got: Vec<(f64, f64)> = bins
        .iter()
        .zip(&boot)
        .map(|(&(v0, v1), b)| (retained(&hosts, v0, v1), sd(b)))
        .collect();
    let ten: Vec<f64> = hosts
        .iter()
        .flat_map(|h| h.iter())
        .filter(|r| r.1 >= 8.0 && r.1 < 12.0)
        .map(|r| r.2 / r.0)
        .collect();
    eprintln!(
        "mass today / mass at z = 1, median (bootstrap error): V_max 5-8 km/s {:.3} ({:.3}), \
         8-12 {:.3} ({:.3}; mean {:.3}, {} objects), 20-40 {:.3} ({:.3}); published about 0.40 \
         at 10 km/s",
        got[0].0,
        got[0].1,
        got[1].0,
        got[1].1,
        ten.iter().sum::<f64>() / ten.len() as f64,
        ten.len(),
        got[2].0,
        got[2].1
    );
    let tol = 0.05 + 2.0 * got[1].1;
    assert!(
        (got[1].0 - 0.40).abs() <= tol,
        "V_max 10 km/s at z = 1 keeps {:.3} today, published about 0.40 (tolerance {tol:.3})",
        got[1].0
    );
    let gap = 2.0 * (got[0].1.powi(2) + got[2].1.powi(2)).sqrt();
    assert!(
        got[0].0 - got[2].0 > gap,
        "lighter subhaloes should keep more: {:.3} at 5-8 km/s, {:.3} at 20-40 (2 sigma {gap:.3})",
        got[0].0,
        got[2].0
    );
    // He, Han & Li 2024
    let (late, late_ended) = (count(0), count(1));
    let (ended, early_children) = (count(2), count(3));
    eprintln!(
        "first order fallen in after z = 2 below 1% of the host: {late_ended} of {late} ended; \
         of any mass {} ended (those above sink by friction); ended in all: {ended}, of them \
         satellites of satellites that fell in before z = 2: {:.3}",
        count(4),
        early_children as f64 / ended as f64
    );
    assert!(late > 5_000, "{late}");
    assert!(
        (late_ended as f64) < 0.005 * late as f64,
        "{late_ended} of {late} first-order subhaloes fallen in after z = 2 ended"
    );
    assert!(
        2 * early_children > ended,
        "{early_children} of {ended} ended subhaloes are early satellites of satellites"
    );
    let today: Vec<Today> = per_host.iter().flat_map(|h| h.2.iter().copied()).collect();
    // Gao et al. 2004 (printed; see docs/validation.md, "Not met yet"), and how the answer
    // moves when only heavier subhaloes count, as a coarser simulation would see them
    let after = |z: f64, psi_min: f64| {
        let t = cosmo.age_gyr(z);
        let kept: Vec<f64> = today
            .iter()
            .filter(|r| r.1 >= psi_min)
            .map(|r| r.0)
            .collect();
        let n = kept.len();
        (
            kept.iter().filter(|&&t_in| t_in > t).count() as f64 / n as f64,
            n,
        )
    };
    for psi_min in [1e-5, 1e-4, 1e-3] {
        let ((a1, n), (a05, _)) = (after(1.0, psi_min), after(0.5, psi_min));
        eprintln!(
            "today's subhaloes above {psi_min:.0e} M_vir ({n}) that first fell in after z = 1: \
             {a1:.3}, after z = 0.5: {a05:.3} (Gao et al. 2004: about 0.9 and 0.7)"
        );
    }
    assert!(today.len() > 5_000, "{}", today.len());
}

/// Subhaloes within 50 kpc of a Milky-Way-mass galaxy against Barry et al. 2023
/// (arXiv:2303.05527; abstract, read here), eleven hydrodynamic zoom-in simulations of
/// Milky-Way-mass haloes with their galaxies: "A typical MW-mass halo contains ≈16
/// subhaloes >1e7 Msun (≈1 subhalo >1e8 Msun) within 50 kpc at z ≈ 0"; dark-matter-only versions
/// "overpredict subhalo counts by 2-10x, more so at smaller distances"; counts "≈10x higher
/// at z = 1 than at z ≈ 0"; "nearly isotropic orbital velocity distributions at z ≈ 0".
/// 16 default hosts (1.2e12 Msun, Planck 2018, disc and bulge) and the same 16 without disc
/// and bulge, tree resolution 3e6 Msun (complete above 1e7 Msun bound); bound mass and
/// distance at z = 1 from `synthesize_host_recording`.
/// Asserted, what the model meets: the count within 50 kpc, about 16 per host, within two
/// standard errors (below); the dark-matter-only excess grows inward (the count ratio within
/// 30 kpc above that within 50 kpc, and that above the ratio within 100 kpc, each by more than
/// twice the combined Poisson error: conservative, since the two runs share their subhaloes),
/// and within 50 kpc it reaches the published lower end, 2, within two Poisson errors.
/// Printed, not met (docs/validation.md, "Not met yet"): the count above 1e8 Msun, the
/// decline since z = 1 and the velocity anisotropy.
/// Sawala et al. 2017 (MNRAS 467, 4383; arXiv:1609.01718; abstract, read here), hydrodynamic
/// simulations of Local-Group-like pairs of 1e12 Msun haloes against their dark-matter-only
/// versions, subhaloes of 10^6.5-10^8.5 Msun: baryons "reduce the number of subhaloes by ~1/4
/// to 1/2, independently of subhalo mass, but increasingly towards the host halo centre".
/// Asserted: the reduction 1 - N_disc / N_dark-matter-only within 100 kpc lies in [1/4, 1/2]
/// within two Poisson errors; within 50 kpc the default's reduction exceeds 1/2 (printed, not
/// met), which the all-or-nothing disc pair (0.8, power 0, the default before 2026-12-05's
/// change) meets. Within 30 and 300 kpc printed. Part of their reduction is the subhaloes' own
/// loss of baryons, which lowers their masses and is not in this model, so the model's
/// reduction may fall short of theirs, not exceed it.
/// The all-or-nothing pair is run as a third set: asserted that it meets Sawala et al. within
/// 50 and 100 kpc and keeps more than 16 within 50 kpc (the reason the default changed).
#[test]
fn val_inner_subhaloes_vs_hydrodynamic_simulations() {
    use rayon::prelude::*;
    use retinue::synth::{synthesize_host_recording, SynthOptions};
    let lt = super::planck18();
    let t1 = lt.cosmology().age_gyr(1.0);
    // per host: counts above 1e7 Msun within 30, 50, 100 kpc today; above 1e8 within 50 kpc;
    // above 1e7 within 50 kpc at z = 1; and (v_r^2, v_t^2) of those within 50 kpc today
    type Counts = ([f64; 6], Vec<(f64, f64)>);
    let run = |baryons: bool, orbits: OrbitOptions| -> Vec<Counts> {
        let opts = SynthOptions {
            tree: TreeSpec {
                m_resolution_msun: 3e6,
                ..TreeSpec::milky_way_default()
            },
            host: if baryons {
                HostOptions::default()
            } else {
                HostOptions {
                    baryons: retinue::host::DiscBulgeParams::none(),
                    ..HostOptions::default()
                }
            },
            orbits,
            galaxies: Default::default(),
            survey: Default::default(),
        };
        (0..16u32)
            .into_par_iter()
            .map_init(
                || TreeBuilder::new(opts.tree.pch08).unwrap(),
                |b, i| {
                    let rec = synthesize_host_recording(&lt, &opts, 5, HostId::new(0, 0, i), b, t1)
                        .unwrap();
                    let mut c = [0.0; 6];
                    let mut vel = Vec::new();
                    for s in &rec.subhaloes {
                        let alive = s.status.alive();
                        if alive && s.m_bound_msun > 1e7 && s.r_kpc < 300.0 {
                            c[5] += 1.0;
                        }
                        for (k, r) in [30.0, 50.0, 100.0].iter().enumerate() {
                            if alive && s.m_bound_msun > 1e7 && s.r_kpc < *r {
                                c[k] += 1.0;
                            }
                        }
                        if alive && s.m_bound_msun > 1e8 && s.r_kpc < 50.0 {
                            c[3] += 1.0;
                        }
                        if s.m_bound_at_epoch_msun > 1e7 && s.r_at_epoch_kpc < 50.0 {
                            c[4] += 1.0;
                        }
                        if alive && s.m_bound_msun > 1e7 && s.r_kpc < 50.0 {
                            let vr: f64 =
                                (0..3).map(|k| s.vel_kms[k] * s.pos_kpc[k] / s.r_kpc).sum();
                            let v2: f64 = s.vel_kms.iter().map(|v| v * v).sum();
                            vel.push((vr * vr, v2 - vr * vr));
                        }
                    }
                    (c, vel)
                },
            )
            .collect()
    };
    let with = run(true, OrbitOptions::default());
    let without = run(false, OrbitOptions::default());
    let total = |hs: &[Counts], k: usize| hs.iter().map(|h| h.0[k]).sum::<f64>();
    let beta = |hs: &[Counts]| {
        let v: Vec<&(f64, f64)> = hs.iter().flat_map(|h| h.1.iter()).collect();
        let vr2 = v.iter().map(|x| x.0).sum::<f64>();
        let vt2 = v.iter().map(|x| x.1).sum::<f64>();
        1.0 - vt2 / (2.0 * vr2)
    };
    let per_host = |hs: &[Counts], k: usize| total(hs, k) / hs.len() as f64;
    // the count within 50 kpc per host, and the error of its difference from Barry et al.'s
    // 16: two standard errors of the difference of the two means, ours from the spread of our
    // 16 hosts, theirs (eleven haloes) taken with the same relative spread
    let within_50 = |hs: &[Counts]| {
        let per: Vec<f64> = hs.iter().map(|h| h.0[1]).collect();
        let mean = per.iter().sum::<f64>() / per.len() as f64;
        let sd =
            (per.iter().map(|c| (c - mean).powi(2)).sum::<f64>() / (per.len() - 1) as f64).sqrt();
        let err = ((sd / (per.len() as f64).sqrt()).powi(2)
            + (sd / mean * 16.0 / 11f64.sqrt()).powi(2))
        .sqrt();
        (mean, err)
    };
    let (mean, err) = within_50(&with);
    eprintln!(
        "with disc, per host: N(>1e7 Msun, <50 kpc) {mean:.1} +- {err:.1} (published about 16), \
         N(>1e8, <50) {:.2} (about 1); N(<50) at z = 1 over today {:.2} (about 10); anisotropy \
         beta within 50 kpc {:.2} (nearly isotropic; {:.2} without the disc)",
        per_host(&with, 3),
        total(&with, 4) / total(&with, 1),
        beta(&with),
        beta(&without)
    );
    assert!(
        (mean - 16.0).abs() < 2.0 * err,
        "{mean:.1} +- {err:.1} subhaloes within 50 kpc, not about 16"
    );
    // dark matter only over disc, with Poisson errors
    let ratio_of = |hs: &[Counts], k: usize| {
        let (a, b) = (total(&without, k), total(hs, k));
        (a / b, a / b * (1.0 / a + 1.0 / b).sqrt())
    };
    let ratio = |k: usize| ratio_of(&with, k);
    let (r30, r50, r100) = (ratio(0), ratio(1), ratio(2));
    eprintln!(
        "dark matter only over disc, above 1e7 Msun: within 30 kpc {:.2} +- {:.2}, 50 kpc {:.2} \
         +- {:.2}, 100 kpc {:.2} +- {:.2} (published 2-10, more so at smaller distances)",
        r30.0, r30.1, r50.0, r50.1, r100.0, r100.1
    );
    assert!(total(&with, 1) > 200.0, "{}", total(&with, 1));
    assert!(
        r30.0 - r50.0 > 2.0 * r30.1.hypot(r50.1),
        "excess within 30 kpc {r30:?} not above that within 50 kpc {r50:?}"
    );
    assert!(
        r50.0 - r100.0 > 2.0 * r50.1.hypot(r100.1),
        "excess within 50 kpc {r50:?} not above that within 100 kpc {r100:?}"
    );
    assert!(
        r50.0 + 2.0 * r50.1 >= 2.0,
        "dark-matter-only excess within 50 kpc {r50:?} below the published 2"
    );
    // Sawala et al. 2017: the reduction 1 - 1/ratio, its error from the ratio's
    let reduction = |r: (f64, f64)| (1.0 - 1.0 / r.0, r.1 / (r.0 * r.0));
    let in_band = |(f, e): (f64, f64)| f + 2.0 * e >= 0.25 && f - 2.0 * e <= 0.5;
    eprintln!(
        "reduction by the disc within 30, 50, 100, 300 kpc: {:.2}, {:.2}, {:.2}, {:.2} \
         (Sawala et al. 2017: 1/4 to 1/2, increasingly towards the centre)",
        reduction(r30).0,
        reduction(r50).0,
        reduction(r100).0,
        reduction(ratio(5)).0
    );
    assert!(
        in_band(reduction(r100)),
        "reduction within 100 kpc {:?} outside [1/4, 1/2]",
        reduction(r100)
    );
    // the all-or-nothing disc pair (0.8, power 0; the default before 2026-12-05's change):
    // it meets Sawala et al. within 50 kpc, which the default does not (docs/validation.md,
    // "Not met yet"), and keeps too many within 50 kpc (31.6 per host on these hosts when it
    // was the default): if either fails, the trade the default was chosen on has changed
    let (d, k) = retinue::orbits::BY_CONCENTRATION_ALL_OR_NOTHING_DISC;
    let all_or_nothing = run(
        true,
        OrbitOptions {
            disc_tide_ratio: d,
            disc_tide_loss_power: k,
            ..OrbitOptions::default()
        },
    );
    let (mean_aon, err_aon) = within_50(&all_or_nothing);
    let ra = |k: usize| ratio_of(&all_or_nothing, k);
    eprintln!(
        "all-or-nothing disc (disc_tide_ratio {d}, power {k}), per host: N(>1e7 Msun, <50 kpc) \
         {mean_aon:.1} +- {err_aon:.1} (published about 16), N(>1e8, <50) {:.2} (about 1); \
         N(<50) at z = 1 over today {:.2} (about 10); beta within 50 kpc {:.2}; dark matter \
         only over disc within 30, 50, 100, 300 kpc: {:.2}, {:.2}, {:.2}, {:.2}",
        per_host(&all_or_nothing, 3),
        total(&all_or_nothing, 4) / total(&all_or_nothing, 1),
        beta(&all_or_nothing),
        ra(0).0,
        ra(1).0,
        ra(2).0,
        ra(5).0
    );
    for (within, r) in [(50, ra(1)), (100, ra(2))] {
        assert!(
            in_band(reduction(r)),
            "all-or-nothing disc: reduction within {within} kpc {:?} outside [1/4, 1/2]",
            reduction(r)
        );
    }
    assert!(
        mean_aon - 16.0 > 2.0 * err_aon,
        "the all-or-nothing disc's {mean_aon:.1} within 50 kpc now meets about 16: re-measure"
    );
}

/// Bookkeeping on every subhalo: infall clocks ordered (infall anywhere <= first infall into
/// the host <= last infall), a release after the infall into the parent, bound mass never
/// above the infall mass, pericentres inside apocentres, statuses consistent with their times
/// and the halo each is bound to, satellites of satellites at their own positions; and the
/// results do not depend on anything but the seed (two runs identical).
#[test]
fn subhalo_bookkeeping_and_reproducibility() {
    let a = hosts(2, &OrbitOptions::default());
    let b = hosts(2, &OrbitOptions::default());
    assert_eq!(a.len(), b.len());
    for ((ra, _), (rb, _)) in a.iter().zip(&b) {
        // Debug output round-trips every f64 exactly (and prints NaN alike)
        assert!(format!("{ra:?}") == format!("{rb:?}"), "two runs differ");
    }
    for (res, _) in &a {
        let by_branch: std::collections::HashMap<u32, &SubhaloResult> =
            res.iter().map(|r| (r.branch, r)).collect();
        let mut counts = [0usize; 5];
        let mut n_released = 0;
        let mut n_never_inside = 0;
        for r in res {
            counts[r.status as usize] += 1;
            let eps = 1e-9;
            assert!(r.t_infall_gyr <= r.t_first_host_infall_gyr + eps, "{r:?}");
            if r.t_last_host_infall_gyr.is_nan() {
                // never inside the host's R_vir: only a satellite of a satellite whose group
                // entered while it stayed outside (a subhalo of the host falls in through R_vir)
                assert!(
                    r.order > 1 && r.n_host_crossings == 0 && !r.backsplash,
                    "{r:?}"
                );
                n_never_inside += 1;
            } else {
                assert!(
                    r.t_first_host_infall_gyr <= r.t_last_host_infall_gyr + eps,
                    "{r:?}"
                );
            }
            assert!(r.m_bound_msun <= r.m_infall_msun * (1.0 + 1e-12));
            if r.order == 1 {
                assert!(r.t_release_gyr.is_nan());
            } else if !r.t_release_gyr.is_nan() {
                n_released += 1;
                assert!(r.t_release_gyr >= r.t_infall_gyr - eps, "{r:?}");
            }
            match r.status {
                SubhaloStatus::Disrupted => {
                    assert!(r.t_disrupt_physical_gyr.is_finite() && r.t_merge_gyr.is_nan())
                }
                SubhaloStatus::MergedWithParent => {
                    assert!(r.order > 1 && r.bound_to_branch != 0, "{r:?}");
                    assert!(r.t_merge_gyr.is_finite() && r.t_merge_gyr >= r.t_infall_gyr);
                }
                SubhaloStatus::MergedWithCentral => {
                    assert!(r.bound_to_branch == 0 && r.t_merge_gyr.is_finite(), "{r:?}");
                }
                SubhaloStatus::InHost => {
                    assert!(r.t_disrupt_physical_gyr.is_nan() && r.t_merge_gyr.is_nan());
                    assert!(r.bound_to_branch == 0);
                    assert!(r.pos_kpc.iter().all(|x| x.is_finite()));
                }
                SubhaloStatus::InSubhalo => {
                    assert!(r.order > 1 && r.bound_to_branch != 0, "{r:?}");
                    assert!(r.pos_kpc.iter().all(|x| x.is_finite()));
                    // at its own position, near (not on) the subhalo it is bound to, which
                    // is alive at the end
                    let c = by_branch[&r.bound_to_branch];
                    assert!(c.status.alive(), "{r:?}\n{c:?}");
                    let d = ((r.pos_kpc[0] - c.pos_kpc[0]).powi(2)
                        + (r.pos_kpc[1] - c.pos_kpc[1]).powi(2)
                        + (r.pos_kpc[2] - c.pos_kpc[2]).powi(2))
                    .sqrt();
                    assert!(d > 0.0 && d < 300.0, "{d} kpc from its container: {r:?}");
                }
            }
            if r.n_pericentres > 0 && r.r_apo_last_kpc.is_finite() {
                assert!(r.r_peri_min_kpc <= r.r_apo_last_kpc);
            }
            if r.t_disrupt_pericentre_gyr.is_finite() {
                assert!(r.r_peri_min_kpc < OrbitOptions::default().pericentre_cut_kpc);
            }
        }
        // status 4 (an orbit confined inside 1 kpc by friction) is rare, 0.4 per host: it is
        // exercised by `val_orbits::friction_without_stripping_merges_at_the_centre`
        assert!(
            n_released > 0 && counts[..4].iter().all(|&c| c > 0),
            "statuses 0-3 occur and some subhaloes leave their parents: {counts:?}"
        );
        println!("never inside R_vir (last host infall NaN): {n_never_inside}");
        assert!(n_never_inside > 0, "the case is exercised");
        // the infall at the virial radius is the first crossing: a first-order subhalo inside
        // R_vir at the end has crossed an odd number of times
        for r in res.iter().filter(|r| r.order == 1) {
            assert!(r.n_host_crossings >= 1, "{r:?}");
        }
    }
}

/// Clocks on real mock hosts: first infall <= last infall into the host for every subhalo;
/// pre-processing infall (threshold 1e10 Msun) <= first host infall wherever the object was
/// pre-processed (fell into a halo other than the host); equal to the host infall when it
/// was not and the host was above the threshold; and, for a subhalo whose group entered the
/// host while the host was below the threshold and was not pre-processed, the time the host
/// reached it (never NaN: every host ends above 1e10 Msun).
#[test]
fn clocks_are_consistent_on_mock_hosts() {
    use retinue::galaxies::GalaxyOptions;
    use retinue::stats::{clock_times, Catalog, PreprocessingThreshold};
    use retinue::synth::{synthesize_host, SynthOptions};
    let lt = super::planck18();
    let opts = SynthOptions {
        tree: TreeSpec {
            m_resolution_msun: 1e8,
            ..TreeSpec::milky_way_default()
        },
        host: Default::default(),
        orbits: Default::default(),
        galaxies: Default::default(),
        survey: Default::default(),
    };
    let mut b = TreeBuilder::new(opts.tree.pch08).unwrap();
    let mut cat = Catalog::default();
    for i in 0..3 {
        let rec = synthesize_host(&lt, &opts, 8, HostId::new(0, 0, i), &mut b).unwrap();
        cat.push_host(i as u64, &rec);
    }
    let thr = PreprocessingThreshold {
        halo_mass_msun: Some(1e10),
        stellar_mass_msun: None,
    };
    let c = clock_times(&cat, &[lt.cosmology()], &GalaxyOptions::default(), &thr);
    let mut pre_processed = 0;
    let mut host_below = 0;
    let host_of: Vec<usize> = (0..cat.n_hosts())
        .flat_map(|h| cat.rows(h).map(move |_| h))
        .collect();
    let row_of: std::collections::HashMap<(usize, u32), usize> = (0..cat.n_subhaloes())
        .map(|j| ((host_of[j], cat.branch[j]), j))
        .collect();
    for i in 0..cat.n_subhaloes() {
        // (last NaN: a satellite of a satellite never inside R_vir)
        assert!(
            c.last[i].is_nan() || c.first[i] <= c.last[i] + 1e-9,
            "row {i}"
        );
        // the host's mass when this subhalo's group entered it (its first-order ancestor's)
        let mut a = i;
        while cat.order[a] > 1 {
            a = row_of[&(host_of[a], cat.parent_branch[a])];
        }
        let entered_below = cat.m_host_at_infall_msun[a] < 1e10;
        if c.pre[i].is_finite() && !(entered_below && c.pre[i] > c.first[i]) {
            assert!(
                c.pre[i] <= c.first[i] + 1e-9,
                "row {i}: pre {} first {}",
                c.pre[i],
                c.first[i]
            );
            if c.pre[i] < c.first[i] - 1e-9 {
                pre_processed += 1;
                assert!(cat.order[i] > 1);
            }
        }
        if cat.order[i] == 1 && cat.m_host_at_infall_msun[i] >= 1e10 {
            assert_eq!(c.pre[i], c.first[i]);
        }
        if cat.order[i] == 1 && cat.m_host_at_infall_msun[i] < 1e10 {
            // the host's crossing, read off its later accretions: the first first-order
            // infall (of this host) into a host of at least 1e10 Msun
            let t_cross = cat
                .rows(host_of[i])
                .filter(|&j| cat.order[j] == 1 && cat.m_host_at_infall_msun[j] >= 1e10)
                .map(|j| cat.t_infall_gyr[j])
                .fold(f64::INFINITY, f64::min);
            assert!(t_cross.is_finite() && t_cross > c.first[i]);
            assert_eq!(c.pre[i], t_cross, "row {i}");
            host_below += 1;
        }
    }
    assert!(
        host_below > 0,
        "some subhaloes fell in while the host was below 1e10 Msun"
    );
    assert!(
        pre_processed > 10,
        "some subhaloes are pre-processed ({pre_processed})"
    );
}

/// Every orbit key at the ends of its allowed range gives sane events (issue: negative
/// pericentre radii at rtol = 1e-2): on a 1.2e12 Msun host at a coarse resolution of 3e9 Msun
/// (a few dozen subhaloes of all orders), for each key set to its smallest and largest
/// allowed value (the other keys at their defaults; the smallest tolerance 1e-9 rather than
/// 1e-12 to keep the test short, which the first case covers at 1e-12 for the first two
/// subhaloes): radii and masses non-negative and finite where set, pericentres inside
/// apocentres, event times within [infall, end], bound mass at most the infall mass, alive
/// subhaloes at finite positions.
#[test]
fn orbit_keys_give_sane_events_over_their_allowed_range() {
    let lt = super::planck18();
    let spec = TreeSpec {
        m_resolution_msun: 3e9,
        ..TreeSpec::milky_way_default()
    };
    let mut b = TreeBuilder::new(spec.pch08).unwrap();
    let mut rng = host_rng(4, HostId::new(0, 0, 0), Stream::Tree);
    let h = HostHistory::from_tree(b.build(&lt, &spec, &mut rng).unwrap());
    let t_end = lt.cosmology().age0_gyr();
    let host = EvolvingHost::from_history(&lt, &h, &HostOptions::default(), 0.5);
    let d = OrbitOptions::default();
    let cases: Vec<(&str, OrbitOptions)> = vec![
        ("rtol = 1e-2", OrbitOptions { rtol: 1e-2, ..d }),
        ("rtol = 1e-9", OrbitOptions { rtol: 1e-9, ..d }),
        (
            "rtol_in_subhalo = 1e-2",
            OrbitOptions {
                rtol_in_subhalo: 1e-2,
                ..d
            },
        ),
        (
            "rtol_in_subhalo = 1e-9",
            OrbitOptions {
                rtol_in_subhalo: 1e-9,
                ..d
            },
        ),
        (
            "both 1e-2",
            OrbitOptions {
                rtol: 1e-2,
                rtol_in_subhalo: 1e-2,
                ..d
            },
        ),
        (
            "max_step_gyr = 1e-3",
            OrbitOptions {
                max_step_gyr: 1e-3,
                ..d
            },
        ),
        (
            "max_step_gyr = 1",
            OrbitOptions {
                max_step_gyr: 1.0,
                ..d
            },
        ),
        (
            "stripping_alpha = 1e-3",
            OrbitOptions {
                stripping_alpha: 1e-3,
                ..d
            },
        ),
        (
            "stripping_alpha = 20",
            OrbitOptions {
                stripping_alpha: 20.0,
                ..d
            },
        ),
        (
            "disrupt_bound_fraction = 0",
            OrbitOptions {
                disrupt_bound_fraction: 0.0,
                ..d
            },
        ),
        (
            "disrupt_bound_fraction = 0.99",
            OrbitOptions {
                disrupt_bound_fraction: 0.99,
                ..d
            },
        ),
        (
            "disrupt_tidal_radius_over_rs = 9.9",
            OrbitOptions {
                disrupt_tidal_radius_over_rs: 9.9,
                ..d
            },
        ),
        (
            "pericentre_cut_kpc = 0",
            OrbitOptions {
                pericentre_cut_kpc: 0.0,
                ..d
            },
        ),
        (
            "pericentre_cut_kpc = 200",
            OrbitOptions {
                pericentre_cut_kpc: 200.0,
                ..d
            },
        ),
        (
            "central_merge_kpc = 0",
            OrbitOptions {
                central_merge_kpc: 0.0,
                ..d
            },
        ),
        (
            "central_merge_kpc = 50",
            OrbitOptions {
                central_merge_kpc: 50.0,
                ..d
            },
        ),
        (
            "friction_mass_infall_weight = 0",
            OrbitOptions {
                friction_mass_infall_weight: 0.0,
                ..d
            },
        ),
        (
            "friction_mass_infall_weight = 1",
            OrbitOptions {
                friction_mass_infall_weight: 1.0,
                ..d
            },
        ),
        (
            "stripping_alpha_c_slope = 0",
            OrbitOptions {
                stripping_alpha_c_slope: 0.0,
                ..d
            },
        ),
        (
            "stripping_alpha_c_slope = 2",
            OrbitOptions {
                stripping_alpha_c_slope: 2.0,
                ..d
            },
        ),
        (
            "infall_orbits = li2020",
            OrbitOptions {
                infall_orbits: retinue::orbits::initial::InfallOrbits::Li2020,
                ..d
            },
        ),
        (
            "disc_tide_ratio = 0",
            OrbitOptions {
                disc_tide_ratio: 0.0,
                ..d
            },
        ),
        (
            "disc_tide_ratio = 1000",
            OrbitOptions {
                disc_tide_ratio: 1000.0,
                ..d
            },
        ),
        (
            "disc_tide_loss_power = 100",
            OrbitOptions {
                disc_tide_loss_power: 100.0,
                ..d
            },
        ),
        (
            "disc_tide_loss_power = 0.01, disc_tide_ratio = 1000",
            OrbitOptions {
                disc_tide_loss_power: 0.01,
                disc_tide_ratio: 1000.0,
                ..d
            },
        ),
        (
            "friction off",
            OrbitOptions {
                friction: false,
                ..d
            },
        ),
        (
            "stripping off",
            OrbitOptions {
                stripping: false,
                ..d
            },
        ),
        (
            "both off",
            OrbitOptions {
                friction: false,
                stripping: false,
                central_merge_kpc: 1.0,
                ..d
            },
        ),
    ];
    assert!(
        h.accretions.len() >= 20,
        "{} accretions",
        h.accretions.len()
    );
    for (name, o) in cases {
        assert!(o.problems("orbits.").is_empty(), "{name} is allowed");
        let mut orng = host_rng(4, HostId::new(0, 0, 0), Stream::Orbits);
        let res = evolve_host_subhaloes(&lt, &h, &host, &o, t_end, &mut orng);
        for r in &res {
            let ctx = || format!("{name}: {r:?}");
            let eps = 1e-9;
            for x in [
                r.r_peri_first_kpc,
                r.r_peri_min_kpc,
                r.r_peri_last_kpc,
                r.r_apo_last_kpc,
            ] {
                assert!(x.is_nan() || (x.is_finite() && x >= 0.0), "{}", ctx());
            }
            if r.n_pericentres > 0 {
                assert!(r.r_peri_min_kpc <= r.r_peri_first_kpc + eps, "{}", ctx());
                assert!(r.r_peri_min_kpc <= r.r_peri_last_kpc + eps, "{}", ctx());
            }
            if r.n_pericentres > 0 && r.r_apo_last_kpc.is_finite() {
                assert!(r.r_peri_min_kpc <= r.r_apo_last_kpc + eps, "{}", ctx());
            }
            for t in [
                r.t_peri_first_gyr,
                r.t_peri_last_gyr,
                r.t_release_gyr,
                r.t_merge_gyr,
                r.t_disrupt_physical_gyr,
                r.t_disrupt_pericentre_gyr,
                r.t_last_host_infall_gyr,
            ] {
                assert!(
                    t.is_nan() || (t >= r.t_infall_gyr - eps && t <= t_end + eps),
                    "{}",
                    ctx()
                );
            }
            assert!(
                r.m_bound_msun > 0.0 && r.m_bound_msun <= r.m_infall_msun * (1.0 + 1e-12),
                "{}",
                ctx()
            );
            if r.status.alive() {
                assert!(r.pos_kpc.iter().all(|x| x.is_finite()), "{}", ctx());
            }
        }
    }
    // the regression: at rtol = 1e-2 this host (resolution 1e8 Msun, 1,271 subhaloes) had a
    // pericentre at -0.02 kpc (a cubic through the step's ends dipping below zero)
    let spec = TreeSpec {
        m_resolution_msun: 1e8,
        ..TreeSpec::milky_way_default()
    };
    let mut b = TreeBuilder::new(spec.pch08).unwrap();
    let mut rng = host_rng(4, HostId::new(0, 0, 0), Stream::Tree);
    let h1 = HostHistory::from_tree(b.build(&lt, &spec, &mut rng).unwrap());
    let host1 = EvolvingHost::from_history(&lt, &h1, &HostOptions::default(), 0.5);
    let o = OrbitOptions {
        rtol: 1e-2,
        rtol_in_subhalo: 1e-2,
        ..d
    };
    let mut orng = host_rng(4, HostId::new(0, 0, 0), Stream::Orbits);
    let res = evolve_host_subhaloes(&lt, &h1, &host1, &o, t_end, &mut orng);
    assert!(res.len() > 1000);
    for r in &res {
        assert!(
            r.r_peri_min_kpc.is_nan() || r.r_peri_min_kpc >= 0.0,
            "{r:?}"
        );
    }
    // the smallest tolerance of all, on the first two subhaloes
    let mut h2 = h.clone();
    h2.accretions.truncate(2);
    let o = OrbitOptions {
        rtol: 1e-12,
        rtol_in_subhalo: 1e-12,
        ..d
    };
    let mut orng = host_rng(4, HostId::new(0, 0, 0), Stream::Orbits);
    for r in evolve_host_subhaloes(&lt, &h2, &host, &o, t_end, &mut orng) {
        assert!(r.r_peri_min_kpc.is_nan() || r.r_peri_min_kpc >= 0.0);
        assert!(r.m_bound_msun > 0.0);
    }
}

/// Subhaloes of `n` default Milky-Way-mass hosts (1.2e12 Msun, resolution 10^7.5 Msun, master
/// seed 5) with these host options, and each host's R_vir today.
fn synthesised(n: u32, host: HostOptions) -> Vec<(Vec<SubhaloResult>, f64, f64)> {
    synthesised_records(n, host)
        .into_iter()
        .map(|rec| (rec.subhaloes, rec.summary.r_vir_kpc, rec.summary.m_vir_msun))
        .collect()
}

/// `n` default Milky-Way-mass hosts (1.2e12 Msun, resolution 10^7.5 Msun, Planck 2018,
/// master seed 5) with these host options, whole.
fn synthesised_records(n: u32, host: HostOptions) -> Vec<retinue::synth::HostRecord> {
    use rayon::prelude::*;
    use retinue::synth::{synthesize_host, SynthOptions};
    let lt = super::planck18();
    let opts = SynthOptions {
        tree: TreeSpec::milky_way_default(),
        host,
        orbits: Default::default(),
        galaxies: Default::default(),
        survey: Default::default(),
    };
    (0..n)
        .into_par_iter()
        .map_init(
            || TreeBuilder::new(opts.tree.pch08).unwrap(),
            |b, i| synthesize_host(&lt, &opts, 5, HostId::new(0, 0, i), b).unwrap(),
        )
        .collect()
}

/// The disc's depletion of subhaloes (`orbits.disc_tide_ratio`), 32 hosts with the default
/// disc and bulge against the same 32 without (dark matter only): the same trees and infall
/// orbits, so the subhaloes are the same row by row, as in a simulation of one population in
/// two tidal fields. Subhaloes alive today within 300 kpc with V_max > 4.5 km/s in the run
/// without the disc, grouped by their smallest pericentre there:
/// * the calibration: of those with pericentres inside 25 kpc, 40% are alive with the disc
///   (Webb & Bovy 2020, MNRAS 499, 116, abstract: "for subhalos with small pericentres
///   (r_p <~ 25 kpc), the subhalo abundance is reduced further to 40%"); band [0.3, 0.5]:
///   the abstract's round number, and a calibration made on 64 + 64 other-seeded hosts (0.399
///   and 0.408 at the default pair, `disc_tide_ratio` 1.1 with `disc_tide_loss_power` 1,
///   2026-12-05; measured here 0.407) moves by about 0.01-0.02 between host samples
///   (binomial error on 15,000 subhaloes is 0.004, host-to-host scatter about twice that);
/// * all of them together: 50-80% survive (the same abstract: 65% of the dark-matter-only
///   count; band +-15%, their subhaloes are drawn from one simulated host, ours from 32);
/// * with larger pericentres almost all survive here (0.98, printed), where the abstract gives
///   about 75%: this closure acts only at pericentres near the disc; what thins the outer
///   subhaloes in their runs is not in the model (docs/validation.md);
/// * within 100 kpc the dark-matter-only hosts hold 1.6-2.5 times as many (cosmological
///   zoom-in simulations with a disc report about twice as many, recalled, that study not
///   named here; the band allows for their hosts' spread, about 25%, common practice).
///   Asserted again since the gradual disc losses became the default (2026-12-05): 1.97 here,
///   1.95 and 1.90 on 64 hosts of each of seeds 17 and 23 (scratch runs); the all-or-nothing
///   pair before it sat just below the band (1.55 here, 1.52 and 1.53 there). Not a
///   calibration target: the high-resolution runs above find the cosmological ones' depletion
///   partly numerical, which pushes their ratio up;
/// * printed only: the median numbers within 20 kpc with and without the disc, and the ratio
///   within 30 kpc (D'Onghia et al. 2010, ApJ 709, 1138: disc shocking depletes the inner halo
///   by a factor 2-3 within 30 kpc, from a summary of the paper).
///
/// The depleted fraction by smallest pericentre and by peak mass is printed (docs/validation.md).
#[test]
fn val_disc_depletion() {
    let with = synthesised(32, HostOptions::default());
    let without = synthesised(
        32,
        HostOptions {
            baryons: retinue::host::DiscBulgeParams::none(),
            ..HostOptions::default()
        },
    );
    let count = |hs: &[(Vec<SubhaloResult>, f64, f64)], r: f64| -> Vec<f64> {
        hs.iter()
            .map(|(s, _, _)| {
                s.iter()
                    .filter(|x| x.status.alive() && x.r_kpc < r && x.vmax_kms > 4.5)
                    .count() as f64
            })
            .collect()
    };
    let total = |v: Vec<f64>| v.iter().sum::<f64>();
    let ratio100 = total(count(&without, 100.0)) / total(count(&with, 100.0));
    let ratio30 = total(count(&without, 30.0)) / total(count(&with, 30.0));
    println!("N(<30 kpc) without/with disc: {ratio30:.2}");
    let survive300 = total(count(&with, 300.0)) / total(count(&without, 300.0));
    let med20 = median(count(&with, 20.0));
    let med20_dmo = median(count(&without, 20.0));
    eprintln!(
        "N(<100 kpc) without/with disc: {ratio100:.2}; median N(<20 kpc): {med20} with, \
         {med20_dmo} without; counts within 300 kpc, with over without: {survive300:.2}"
    );
    // what the disc destroyed, by smallest pericentre and by peak mass
    let all: Vec<&SubhaloResult> = with.iter().flat_map(|(s, _, _)| s.iter()).collect();
    for (lo, hi) in [
        (0.0, 10.0),
        (10.0, 20.0),
        (20.0, 30.0),
        (30.0, 50.0),
        (50.0, 100.0),
    ] {
        let inbin: Vec<_> = all
            .iter()
            .filter(|x| x.r_peri_min_kpc >= lo && x.r_peri_min_kpc < hi)
            .collect();
        let gone = inbin
            .iter()
            .filter(|x| x.t_disrupt_disc_gyr.is_finite())
            .count();
        eprintln!(
            "smallest pericentre {lo}-{hi} kpc: {gone} of {} destroyed by the disc ({:.2})",
            inbin.len(),
            gone as f64 / inbin.len().max(1) as f64
        );
    }
    for (lo, hi) in [(3e7, 1e8), (1e8, 1e9), (1e9, 1e10), (1e10, 1e12)] {
        let inbin: Vec<_> = all
            .iter()
            .filter(|x| x.m_peak_msun >= lo && x.m_peak_msun < hi && x.n_pericentres > 0)
            .collect();
        let gone = inbin
            .iter()
            .filter(|x| x.t_disrupt_disc_gyr.is_finite())
            .count();
        eprintln!(
            "peak mass {lo:e}-{hi:e} Msun, with a pericentre: {:.3} destroyed by the disc",
            gone as f64 / inbin.len().max(1) as f64
        );
    }
    // the same subhaloes with and without the disc (same trees and infall orbits, row by row):
    // alive with the disc over alive without it, by the smallest pericentre without it; and
    // (printed) alive with V_max > 4.5 km/s on the disc's side too, as a simulation that
    // counts resolved subhaloes in both runs would see it (docs/methods.md)
    let matched_both = |lo: f64, hi: f64| -> (f64, f64) {
        let (mut n_with, mut n_without, mut n_resolved) = (0usize, 0usize, 0usize);
        for ((sw, _, _), (so, _, _)) in with.iter().zip(&without) {
            assert_eq!(sw.len(), so.len());
            for (a, b) in sw.iter().zip(so) {
                assert_eq!(a.branch, b.branch);
                if b.status.alive()
                    && b.r_kpc < 300.0
                    && b.vmax_kms > 4.5
                    && b.r_peri_min_kpc >= lo
                    && b.r_peri_min_kpc < hi
                {
                    n_without += 1;
                    let alive = a.status.alive() && a.r_kpc < 300.0;
                    n_with += alive as usize;
                    n_resolved += (alive && a.vmax_kms > 4.5) as usize;
                }
            }
        }
        assert!(n_without > 1000, "{n_without} subhaloes");
        (
            n_with as f64 / n_without as f64,
            n_resolved as f64 / n_without as f64,
        )
    };
    let (inner_b, outer_b, every_b) = (
        matched_both(0.0, 25.0),
        matched_both(25.0, f64::INFINITY),
        matched_both(0.0, f64::INFINITY),
    );
    let (inner, outer, every) = (inner_b.0, outer_b.0, every_b.0);
    eprintln!(
        "same subhaloes alive with the disc: pericentre < 25 kpc {inner:.3}, beyond {outer:.3}, \
         all {every:.3}; with V_max > 4.5 km/s there too {:.3}, {:.3}, {:.3}",
        inner_b.1, outer_b.1, every_b.1
    );
    assert!(
        (0.3..=0.5).contains(&inner),
        "pericentres < 25 kpc: {inner}"
    );
    assert!((0.5..=0.8).contains(&every), "all: {every}");
    assert!(
        (1.6..=2.5).contains(&ratio100),
        "N(<100 kpc) without/with disc: {ratio100}"
    );
    // the disc destroys only at pericentres, and only with disc and bulge
    for (s, _, _) in &without {
        assert!(s.iter().all(|x| x.t_disrupt_disc_gyr.is_nan()));
    }
    for x in &all {
        if x.t_disrupt_disc_gyr.is_finite() {
            assert_eq!(x.status, SubhaloStatus::Disrupted);
            assert_eq!(x.t_disrupt_disc_gyr, x.t_disrupt_physical_gyr);
            assert!(x.n_pericentres > 0);
        }
    }
}

/// Backsplash haloes by shell around the host (`tests.backsplash`, defaults: peak mass
/// 1e8-1e10 Msun, distinct haloes alive today), 32 default hosts, against the expected field
/// count of the default model (`field = "nonlinear"`: mean Sheth & Tormen density weighted by
/// 1 + b_field xi_hm, xi_hm the Hayashi & White 2008 host-matter correlation). Pooled over
/// hosts, the fraction once inside the host:
/// * asserted: the fraction falls outward shell by shell (1-1.5, 1.5-2, 2-3 R_vir), and in
///   2-3 R_vir it is below a half (Gill, Knebe & Gibson 2005, MNRAS 356, 1327: backsplash
///   galaxies reach out to about 2.5 R_vir; abstract);
/// * asserted: in 1-2 R_vir about a half (Gill et al. 2005, abstract: about half of the
///   galaxies in the outskirts of clusters, 1-2 R_vir, are backsplash; Mamon et al. 2004,
///   A&A 414, 445, about half, recalled), band [0.3, 0.7] (host-to-host range, common
///   practice); measured 0.606 (the linear model gives 0.710; 0.726 before satellites of
///   satellites left their parents only with their parents' matter, outside the band: linear
///   theory undercounts the field near the host);
/// * printed: the same with the linear model (`field = "correlation"`, the previous default),
///   and two bounds on the non-linear model's assumptions: haloes tracing the matter one for
///   one where the one-halo term wins (n = n_bar (1 + xi_1h) there instead of
///   n_bar (1 + b_field xi_1h)), and the model's count read as all haloes in the shell
///   (backsplash included), fraction N_bs / N_model.
///
/// Sampling error: about 100 backsplash haloes per host in 1-3 R_vir, so the pooled fraction's
/// Poisson error over 32 hosts is below 0.01.
#[test]
fn val_backsplash_shells() {
    use retinue::stats::backsplash::{
        BacksplashOptions, FieldCounter, FieldModel, HostMatterCorrelation,
    };
    let lt = super::planck18();
    let hosts = synthesised(32, HostOptions::default());
    let b = BacksplashOptions::default();
    assert_eq!(b.field, FieldModel::Nonlinear);
    let counter = FieldCounter::new(&b, &lt);
    let linear = FieldCounter::new(
        &BacksplashOptions {
            field: FieldModel::Correlation,
            ..b.clone()
        },
        &lt,
    );
    let (n_bar, b_field, xi) = counter.density_parts();
    let xi = xi.unwrap();
    // unit bias where the one-halo term wins: midpoint quadrature in ln r, 400 cells a shell
    let unit_bias = |m_vir: f64, r_vir: f64| -> Vec<f64> {
        let host = HostMatterCorrelation::new(&lt, m_vir, r_vir);
        b.shells_over_rvir
            .windows(2)
            .map(|w| {
                let (r1, r2) = (w[0] * r_vir * 1e-3, w[1] * r_vir * 1e-3);
                let n = 400;
                let h = (r2 / r1).ln() / n as f64;
                (0..n)
                    .map(|j| {
                        let r = r1 * (h * (j as f64 + 0.5)).exp();
                        let (one, two) = (host.one_halo(r), host.b_host * xi.xi(r));
                        let d = if one > two { one } else { b_field * two };
                        4.0 * std::f64::consts::PI * r.powi(3) * h * (1.0 + d)
                    })
                    .sum::<f64>()
                    * n_bar
            })
            .collect()
    };
    let ns = b.n_shells();
    let (mut n_bs, mut n_field) = (vec![0.0; ns], vec![0.0; ns]);
    let (mut n_lin, mut n_unit) = (vec![0.0; ns], vec![0.0; ns]);
    for (subs, r_vir, m_vir) in &hosts {
        for (k, f) in counter.counts(&lt, *m_vir, *r_vir).into_iter().enumerate() {
            n_field[k] += f;
        }
        for (k, f) in linear.counts(&lt, *m_vir, *r_vir).into_iter().enumerate() {
            n_lin[k] += f;
        }
        for (k, f) in unit_bias(*m_vir, *r_vir).into_iter().enumerate() {
            n_unit[k] += f;
        }
        for s in subs {
            if s.backsplash
                && s.status == SubhaloStatus::InHost
                && s.m_peak_msun >= b.m_peak_msun[0]
                && s.m_peak_msun <= b.m_peak_msun[1]
            {
                if let Some(k) = b.shell_of(s.r_kpc / r_vir) {
                    n_bs[k] += 1.0;
                }
            }
        }
    }
    let fraction =
        |field: &[f64]| -> Vec<f64> { (0..ns).map(|k| n_bs[k] / (n_bs[k] + field[k])).collect() };
    let f12_of = |field: &[f64]| (n_bs[0] + n_bs[1]) / (n_bs[0] + n_bs[1] + field[0] + field[1]);
    let frac = fraction(&n_field);
    let (frac_lin, frac_unit) = (fraction(&n_lin), fraction(&n_unit));
    let nh = hosts.len() as f64;
    for k in 0..ns {
        println!(
            "{}-{} R_vir: backsplash {:.1}, field {:.1} per host, fraction {:.3} \
             (linear: field {:.1}, fraction {:.3}; unit bias: field {:.1}, fraction {:.3}; \
             model as all haloes: N_bs/N_model {:.3})",
            b.shells_over_rvir[k],
            b.shells_over_rvir[k + 1],
            n_bs[k] / nh,
            n_field[k] / nh,
            frac[k],
            n_lin[k] / nh,
            frac_lin[k],
            n_unit[k] / nh,
            frac_unit[k],
            n_bs[k] / n_field[k],
        );
    }
    let f12 = f12_of(&n_field);
    println!(
        "1-2 R_vir: fraction {f12:.3} (linear {:.3}, unit bias {:.3}, as all haloes {:.3}; \
         Gill et al. 2005: about a half)",
        f12_of(&n_lin),
        f12_of(&n_unit),
        (n_bs[0] + n_bs[1]) / (n_field[0] + n_field[1]),
    );
    assert!(frac[0] > frac[1] && frac[1] > frac[2], "{frac:?}");
    assert!(frac[2] < 0.5, "{frac:?}");
    assert!((0.3..=0.7).contains(&f12), "1-2 R_vir: {f12}");
}

/// One synthesised host, reduced: its subhaloes, R_vir and concentration today.
type Reduced = (Vec<SubhaloResult>, f64, f64);

/// `n` default Milky-Way-mass hosts (1.2e12 Msun, resolution 10^7.5 Msun, master seed 5, the
/// sharp-k filter) in Planck 2018 with cold dark matter (`m_wdm_kev = None`) or a thermal
/// relic of that mass, with the given WDM concentration model.
fn synthesised_dm(
    n: u32,
    m_wdm_kev: Option<f64>,
    wdm_concentration: retinue::halo::concentration::WdmConcentration,
) -> (LinearTheory, Vec<Reduced>) {
    use rayon::prelude::*;
    use retinue::synth::{synthesize_host, SynthOptions};
    let lt = LinearTheory::new(
        Cosmology::from_preset("planck18").unwrap(),
        LinearOptions {
            m_wdm_kev,
            wdm_concentration,
            filter: retinue::linear::Filter::SharpK,
            ..Default::default()
        },
    )
    .unwrap();
    let opts = SynthOptions {
        tree: TreeSpec::milky_way_default(),
        host: HostOptions::default(),
        orbits: Default::default(),
        galaxies: Default::default(),
        survey: Default::default(),
    };
    let out = (0..n)
        .into_par_iter()
        .map_init(
            || TreeBuilder::new(opts.tree.pch08).unwrap(),
            |b, i| {
                let rec = synthesize_host(&lt, &opts, 5, HostId::new(0, 0, i), b).unwrap();
                (
                    rec.subhaloes,
                    rec.summary.r_vir_kpc,
                    rec.summary.concentration,
                )
            },
        )
        .collect();
    (lt, out)
}

/// WDM-to-CDM count ratio in one mass bin, with the fit averaged over the bin.
struct BinRatio {
    n_cdm: f64,
    n_wdm: f64,
    ratio: f64,
    /// Poisson error of the ratio, relative: sqrt(1/N_WDM + 1/N_CDM).
    rel_poisson: f64,
    /// Jackknife error of the ratio over host pairs (absolute).
    jackknife: f64,
    /// The fit averaged over the CDM objects of the bin, with our M_hm and with `m_hm_alt`.
    fit: f64,
    fit_alt: f64,
}

/// Ratio of the masses `pick` selects from each host in [lo, hi), WDM over CDM (hosts paired
/// by index), against `fit(m, m_hm)`.
fn bin_ratio(
    cdm: &[Reduced],
    wdm: &[Reduced],
    pick: &dyn Fn(&Reduced) -> Vec<f64>,
    (lo, hi): (f64, f64),
    fit: &dyn Fn(f64, f64) -> f64,
    m_hm: f64,
    m_hm_alt: f64,
) -> BinRatio {
    let inbin =
        |h: &Reduced| -> Vec<f64> { pick(h).into_iter().filter(|&m| m >= lo && m < hi).collect() };
    let mc: Vec<Vec<f64>> = cdm.iter().map(inbin).collect();
    let nc: Vec<f64> = mc.iter().map(|v| v.len() as f64).collect();
    let nw: Vec<f64> = wdm.iter().map(|h| inbin(h).len() as f64).collect();
    let (sc, sw) = (nc.iter().sum::<f64>(), nw.iter().sum::<f64>());
    let avg = |m_hm: f64| mc.iter().flatten().map(|&m| fit(m, m_hm)).sum::<f64>() / sc;
    let nh = nc.len() as f64;
    let jk: Vec<f64> = (0..nc.len()).map(|i| (sw - nw[i]) / (sc - nc[i])).collect();
    let jm = jk.iter().sum::<f64>() / nh;
    let jackknife = ((nh - 1.0) / nh * jk.iter().map(|x| (x - jm) * (x - jm)).sum::<f64>()).sqrt();
    BinRatio {
        n_cdm: sc,
        n_wdm: sw,
        ratio: sw / sc,
        rel_poisson: (1.0 / sw + 1.0 / sc).sqrt(),
        jackknife,
        fit: avg(m_hm),
        fit_alt: avg(m_hm_alt),
    }
}

/// Warm-dark-matter subhalo mass function against the fit of Lovell et al. 2014 (MNRAS 439,
/// 300) to their WDM haloes: n_WDM/n_CDM = (1 + gamma M_hm/M)^-beta, gamma = 2.7,
/// beta = 0.99 (the numbers read in hmf 3.7.2, `hmf.alternatives.wdm.Lovell14`; that the fit
/// is to the evolved z = 0 subhalo mass function is recalled, not re-read).
/// Setup: a 2.5 keV thermal relic (M_hm = 9.0e8 Msun from our Viel et al. 2005 transfer
/// function; the tree resolution 10^7.5 Msun is M_hm/28) against cold dark matter, both with
/// the sharp-k filter (as trees for WDM must be), 64 Milky-Way-mass hosts each, same seeds.
/// Evolved: bound subhaloes of every order inside R_vir today, by bound mass, in bins of
/// +-0.15 dex around M_hm, 3 M_hm and 10 M_hm; the fit averaged over the CDM objects of each
/// bin.
/// Band: 2 sigma, sigma^2 = 1/N_WDM + 1/N_CDM (Poisson, relative; the two runs share seeds
/// but not trees, so treating the counts as independent errs wide) + 0.2^2 (the scatter about
/// such fits: about 20% in Lovell et al. 2020, ApJ 897, 147, abstract, for their later fits;
/// taken for the 2014 fit).
/// Met at 3 and 10 M_hm; NOT met at M_hm, where the mocks keep about twice the fit's
/// fraction (0.5 against 0.27; docs/validation.md, "Not met yet"): the trees follow the
/// sharp-k excursion set (its Press-Schechter ratio at M_hm is 0.53), which Lovell et al. 2020
/// also find less steep than their simulations. At M_hm the test asserts only that the
/// suppression is there (ratio below 1 by more than 3 Poisson errors, and below the ratio at
/// 10 M_hm); at 3 M_hm too, 2 Poisson errors below 1, because the 2-sigma band alone passes
/// a ratio of 1 against Schneider et al. there.
/// Also against Schneider et al. 2012 (MNRAS 424, 684), the halo-level fit
/// n_WDM/n_CDM = (1 + M_hm/M)^-1.16 (beta and the form as hmf 3.7.2 `Schneider12_vCDM`
/// evaluates them, `wdm.json`; their M_hm convention, Viel et al. 2005, is ours): the evolved
/// ratio asserted within the same 2 sigma band at 1, 3 and 10 M_hm (measured 1.24, 0.97, 0.94
/// times the fit), the unevolved one printed (1.44, 1.21, 1.05). The two published fits differ
/// by 1.6 at M_hm; what the model misses against Lovell's is the stronger loss of subhaloes
/// near M_hm in their simulations.
/// Both fit closures are checked against hmf's values at 0.3-30 M_hm to 1e-12.
/// Printed, not asserted: the unevolved ratio (every accretion by its mass at infall), a
/// jackknife error over hosts, the fit with Lovell's own M_hm convention (hmf's `Bode01` with
/// nu = 1: 1.45 times ours at 2.5 keV; fixture `wdm.json`), the evolved ratio without the
/// concentration suppression (`wdm_concentration = "none"`, same trees and orbits), and the
/// hosts' mean concentrations.
#[test]
fn val_wdm_subhalo_mass_function_vs_lovell14() {
    use retinue::halo::concentration::WdmConcentration;
    let n = 64;
    let (_, cdm) = synthesised_dm(n, None, WdmConcentration::Bose16);
    let (lt, wdm) = synthesised_dm(n, Some(2.5), WdmConcentration::Bose16);
    let (_, wdm_cdm_c) = synthesised_dm(n, Some(2.5), WdmConcentration::None);
    let m_hm = lt.m_half_mode_msun().unwrap();
    let lovell14 = |m: f64, m_hm: f64| (1.0 + 2.7 * m_hm / m).powf(-0.99);
    let schneider12 = |m: f64, m_hm: f64| (1.0 + m_hm / m).powf(-1.16);
    // both fits as hmf 3.7.2 evaluates them (fixture wdm.json, make_wdm_fixtures.py)
    let fits = &crate::common::fixture("wdm.json")["mass_function_fits"];
    let xs = crate::common::floats(&fits["m_over_m_hm"]);
    for (name, fit) in [
        ("schneider12_vcdm", &schneider12 as &dyn Fn(f64, f64) -> f64),
        ("lovell14", &lovell14),
    ] {
        for (x, want) in xs.iter().zip(crate::common::floats(&fits[name])) {
            assert!(
                (fit(*x, 1.0) / want - 1.0).abs() < 1e-12,
                "{name} at {x} M_hm"
            );
        }
    }
    let f = crate::common::fixture("wdm.json");
    let row = f["half_mode"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["m_wdm_kev"].as_f64() == Some(2.5))
        .unwrap()
        .clone();
    let m_hm_lovell = m_hm * row["m_hm_msun_h_bode01_nu1"].as_f64().unwrap()
        / row["m_hm_msun_h"].as_f64().unwrap();
    let mean_c = |hs: &[Reduced]| hs.iter().map(|h| h.2).sum::<f64>() / hs.len() as f64;
    eprintln!(
        "M_hm = {m_hm:.3e} Msun (2.5 keV; {m_hm_lovell:.3e} in Lovell's convention); hosts' mean \
         c_vir today: CDM {:.3}, WDM {:.3}, WDM without the suppression {:.3}",
        mean_c(&cdm),
        mean_c(&wdm),
        mean_c(&wdm_cdm_c)
    );
    let evolved = |h: &Reduced| -> Vec<f64> {
        h.0.iter()
            .filter(|x| x.status.alive() && x.r_kpc < h.1)
            .map(|x| x.m_bound_msun)
            .collect()
    };
    let infall = |h: &Reduced| -> Vec<f64> { h.0.iter().map(|x| x.m_infall_msun).collect() };
    let mut ev = Vec::new();
    let mut ev_s = Vec::new();
    for k in [1.0, 3.0, 10.0] {
        let bin = (k * m_hm * 10f64.powf(-0.15), k * m_hm * 10f64.powf(0.15));
        let e = bin_ratio(&cdm, &wdm, &evolved, bin, &lovell14, m_hm, m_hm_lovell);
        let e_none = bin_ratio(
            &cdm,
            &wdm_cdm_c,
            &evolved,
            bin,
            &lovell14,
            m_hm,
            m_hm_lovell,
        );
        let u = bin_ratio(&cdm, &wdm, &infall, bin, &lovell14, m_hm, m_hm_lovell);
        let band = 2.0 * (e.rel_poisson.powi(2) + 0.2f64.powi(2)).sqrt();
        eprintln!(
            "{k} M_hm, evolved: N_CDM = {}, N_WDM = {}, ratio {:.3} +- {:.3} (Poisson; \
             jackknife {:.3}); Lovell et al. 2014 {:.3} ({:.3} with their M_hm); measured/fit \
             {:.2}, band +-{band:.2}; without the concentration suppression {:.3}",
            e.n_cdm,
            e.n_wdm,
            e.ratio,
            e.ratio * e.rel_poisson,
            e.jackknife,
            e.fit,
            e.fit_alt,
            e.ratio / e.fit,
            e_none.ratio
        );
        eprintln!(
            "{k} M_hm, unevolved (mass at infall): N_CDM = {}, N_WDM = {}, ratio {:.3} +- {:.3}; \
             the fit {:.3}",
            u.n_cdm,
            u.n_wdm,
            u.ratio,
            u.ratio * u.rel_poisson,
            u.fit
        );
        let sch = bin_ratio(&cdm, &wdm, &evolved, bin, &schneider12, m_hm, m_hm);
        let sch_u = bin_ratio(&cdm, &wdm, &infall, bin, &schneider12, m_hm, m_hm);
        let band_s = 2.0 * (sch.rel_poisson.powi(2) + 0.2f64.powi(2)).sqrt();
        eprintln!(
            "{k} M_hm against Schneider et al. 2012 ({:.3}): evolved {:.3} (measured/fit {:.2}, \
             band +-{band_s:.2}); unevolved {:.3} (measured/fit {:.2})",
            sch.fit,
            sch.ratio,
            sch.ratio / sch.fit,
            sch_u.ratio,
            sch_u.ratio / sch_u.fit
        );
        ev_s.push((k, sch, band_s));
        ev.push((k, e, band));
    }
    for (k, e, band) in &ev_s {
        assert!(
            (e.ratio / e.fit - 1.0).abs() <= *band,
            "{k} M_hm: ratio {:.3} against Schneider et al. 2012's {:.3} (band +-{band:.2})",
            e.ratio,
            e.fit
        );
    }
    for (k, e, band) in &ev[1..] {
        assert!(
            (e.ratio / e.fit - 1.0).abs() <= *band,
            "{k} M_hm: ratio {:.3} against the fit's {:.3} (band +-{band:.2})",
            e.ratio,
            e.fit
        );
    }
    let at_hm = &ev[0].1;
    assert!(
        at_hm.ratio < 1.0 - 3.0 * at_hm.rel_poisson * at_hm.ratio,
        "no suppression at M_hm: {:.3}",
        at_hm.ratio
    );
    assert!(at_hm.ratio < ev[2].1.ratio);
    // the bands above are wide enough to pass a ratio of 1 at 10 M_hm (and Schneider et al.'s
    // at 3 M_hm): that the suppression is there at 3 M_hm is asserted on its own, 2 Poisson
    // errors below 1 (review of 2026-12-04)
    let at_3 = &ev[1].1;
    assert!(
        at_3.ratio < 1.0 - 2.0 * at_3.rel_poisson * at_3.ratio,
        "no suppression at 3 M_hm: {:.3}",
        at_3.ratio
    );
}

/// Where today's subhaloes are on their orbits, whether they were in another halo first, and
/// when they fell in, against two published simulation studies (abstracts, read through
/// `search`, 2026-12-05):
/// * Bakels, Ludlow & Power 2021 (MNRAS 501, 5948; arXiv:2008.05475), a dark-matter-only
///   cosmological simulation of isolated hosts (so 32 hosts here without disc and bulge;
///   subhaloes with bound mass above 1e-5 of the host's today, our choice for "resolved"):
///   "roughly half of all accreted systems were pre-processed prior to infall", and of the
///   accreted subhaloes "roughly half currently residing at distances that exceed ≈ 1.2 ×
///   r200". Accreted here: alive, and its group crossed the host's virial radius; pre-processed:
///   it fell into another halo first (any mass). Band [0.35, 0.65] for "roughly half" (our
///   reading of the round number, ±0.15, common practice): the binomial errors (about 0.005
///   on 20,000 subhaloes) are far smaller than the abstract's rounding. r200 (mean density
///   200 times critical) from each host's NFW profile. Printed, not asserted (not met,
///   docs/validation.md): "roughly 21 per cent of resolved subhaloes within a host's virial
///   radius are currently on first infall, and have not yet reached their first orbital
///   pericentre; roughly 44 per cent are still approaching their first apocentre", with the
///   fractions at other mass thresholds (above 1e-3 M_vir they are met, but the pre-processed
///   fraction there is not).
/// * Santistevan et al. 2023 (arXiv:2309.05708), hydrodynamic zoom-ins of Milky-Way-mass
///   hosts (so 32 default hosts, with disc): "When a typical surviving satellite fell in
///   (3.4−9.7 Gyr ago), the host halo mass and radius were typically 26−86 per cent of their
///   values today". The abstract does not say which quantiles bound "typical", so the median
///   lookback time to the first crossing of the host's virial radius of luminous survivors
///   inside it (M* > 1e5 Msun, our choice for a galaxy such a simulation resolves) must lie in
///   [3.4, 9.7] Gyr, and the host's mass then over today's, at the median, in [0.26, 0.86];
///   the 16-84% ranges are printed.
#[test]
fn val_orbital_phase_and_infall_times_vs_simulations() {
    let lt = super::planck18();
    let cosmo = lt.cosmology();
    // r200 (mean density 200 times critical) of an NFW host of virial mass m and concentration
    // c today, by the library's conversion between mass definitions (`halo::definitions`)
    let r200 = |m: f64, c: f64| {
        use retinue::halo::definitions::{convert_nfw, MassDefinition};
        let (m200, _) = convert_nfw(cosmo, m, c, 0.0, MassDefinition::Vir, MassDefinition::C200);
        MassDefinition::C200.radius_kpc(cosmo, m200, 0.0)
    };
    let dmo = synthesised_records(
        32,
        HostOptions {
            baryons: retinue::host::DiscBulgeParams::none(),
            ..HostOptions::default()
        },
    );
    // fractions at bound mass above psi M_vir: (inside r200: no pericentre yet, no apocentre
    // yet; accreted: pre-processed, beyond 1.2 r200)
    let phase = |psi: f64, floor: f64| -> [f64; 4] {
        let (mut n_in, mut no_peri, mut no_apo) = (0.0, 0.0, 0.0);
        let (mut n_acc, mut pre, mut beyond) = (0.0, 0.0, 0.0);
        for rec in &dmo {
            let s = &rec.summary;
            let r2 = r200(s.m_vir_msun, s.concentration);
            for x in &rec.subhaloes {
                if !x.status.alive() || x.m_bound_msun < psi * s.m_vir_msun {
                    continue;
                }
                if x.t_first_host_infall_gyr.is_finite() {
                    n_acc += 1.0;
                    pre += (x.t_infall_gyr < x.t_first_host_infall_gyr - 1e-9) as u8 as f64;
                    beyond += (x.r_kpc > 1.2 * r2) as u8 as f64;
                }
                if x.r_kpc < r2 {
                    n_in += 1.0;
                    no_peri += (x.n_pericentres == 0) as u8 as f64;
                    no_apo += x.r_apo_last_kpc.is_nan() as u8 as f64;
                }
            }
        }
        assert!(n_in > floor && n_acc > floor, "{n_in} {n_acc}");
        [no_peri / n_in, no_apo / n_in, pre / n_acc, beyond / n_acc]
    };
    // at least 1,000 objects in each count (100 above 1e-3 M_vir, where they are fewer)
    for (psi, floor) in [(1e-6, 1000.0), (1e-4, 1000.0), (1e-3, 100.0)] {
        let f = phase(psi, floor);
        eprintln!(
            "bound mass > {psi:e} M_vir: inside r200 on first infall {:.3}, before the first \
             apocentre {:.3}; accreted, pre-processed {:.3}, beyond 1.2 r200 {:.3}",
            f[0], f[1], f[2], f[3]
        );
    }
    let [first_infall, before_apo, pre, beyond] = phase(1e-5, 1000.0);
    eprintln!(
        "bound mass > 1e-5 M_vir: inside r200 on first infall {first_infall:.3} (Bakels et al. \
         2021: roughly 0.21), before the first apocentre {before_apo:.3} (0.44); accreted, \
         pre-processed {pre:.3} (roughly half), beyond 1.2 r200 {beyond:.3} (roughly half)"
    );
    for (what, f) in [("pre-processed", pre), ("beyond 1.2 r200", beyond)] {
        assert!(
            (0.35..=0.65).contains(&f),
            "{what}: {f:.3}, not roughly half"
        );
    }

    // Santistevan et al. 2023: luminous survivors of hosts with a disc
    let with_disc = synthesised_records(32, HostOptions::default());
    let t0 = cosmo.age0_gyr();
    let (mut lookback, mut host_fraction) = (Vec::new(), Vec::new());
    for rec in &with_disc {
        let s = &rec.summary;
        // the host's main-branch mass at redshift z, linear in ln(1 + z) on the tree's grid
        let mah = |z: f64| {
            let lz = (1.0 + z).ln();
            let k = rec
                .mah_z
                .windows(2)
                .position(|w| (1.0 + w[0]).ln() <= lz && lz <= (1.0 + w[1]).ln())
                .expect("infall inside the tree's output grid");
            let (a, b) = ((1.0 + rec.mah_z[k]).ln(), (1.0 + rec.mah_z[k + 1]).ln());
            let f = (lz - a) / (b - a);
            rec.mah_msun[k] + f * (rec.mah_msun[k + 1] - rec.mah_msun[k])
        };
        for (x, g) in rec.subhaloes.iter().zip(&rec.galaxies) {
            if x.status.alive() && x.r_kpc < s.r_vir_kpc && g.occupied && g.mstar_msun > 1e5 {
                lookback.push(t0 - x.t_first_host_infall_gyr);
                host_fraction.push(mah(cosmo.z_at_age(x.t_first_host_infall_gyr)) / mah(0.0));
            }
        }
    }
    let q = |v: &mut Vec<f64>, p: f64| {
        v.sort_by(f64::total_cmp);
        v[((v.len() - 1) as f64 * p).round() as usize]
    };
    let (lb16, lb50, lb84) = (
        q(&mut lookback, 0.16),
        q(&mut lookback, 0.5),
        q(&mut lookback, 0.84),
    );
    let (hf16, hf50, hf84) = (
        q(&mut host_fraction, 0.16),
        q(&mut host_fraction, 0.5),
        q(&mut host_fraction, 0.84),
    );
    eprintln!(
        "{} luminous survivors (M* > 1e5 Msun) inside R_vir: first infall {lb50:.2} Gyr ago \
         (16-84%: {lb16:.2}-{lb84:.2}; Santistevan et al. 2023: typically 3.4-9.7); the host's \
         mass then over today's {hf50:.2} ({hf16:.2}-{hf84:.2}; typically 0.26-0.86)",
        lookback.len()
    );
    assert!(lookback.len() > 300, "{}", lookback.len());
    assert!((3.4..=9.7).contains(&lb50), "median lookback {lb50:.2} Gyr");
    assert!(
        (0.26..=0.86).contains(&hf50),
        "median host fraction {hf50:.2}"
    );
}
