//! Galaxies: the dwarf extension, scatter, occupation, and satellite counts of whole mocks.

use rand::SeedableRng;
use retinue::galaxies::{paint, GalaxyOptions, SmhmModel};
use retinue::orbits::{SubhaloResult, SubhaloStatus};
use retinue::rng::HostId;
use retinue::synth::{synthesize_host, SynthOptions};
use retinue::trees::{TreeBuilder, TreeSpec};
use retinue::Cosmology;

use super::planck18;

/// The default synthesis of a Milky-Way-mass host (1.2e12 Msun, resolution 10^7.5 Msun).
fn milky_way() -> SynthOptions {
    SynthOptions {
        tree: TreeSpec::milky_way_default(),
        host: Default::default(),
        orbits: Default::default(),
        galaxies: Default::default(),
        survey: Default::default(),
    }
}

/// The dwarf extension joins each relation continuously in value and slope at the pivot
/// (one-sided finite differences over 1e-5 dex agree to 1e-3), and its slope tends to the set
/// value far below (within 1e-3 at 6 transition widths).
#[test]
fn dwarf_extension_is_continuous() {
    let c = Cosmology::from_preset("planck18").unwrap();
    for smhm in [SmhmModel::Behroozi13, SmhmModel::Moster13] {
        for z in [0.0, 1.5] {
            let o = GalaxyOptions {
                smhm,
                ..Default::default()
            };
            let xp = o.dwarf_pivot_msun.log10();
            let f = |x: f64| o.log10_mstar_median(&c, 10f64.powf(x), z);
            let h = 1e-5;
            assert!(
                (f(xp - 1e-12) - f(xp + 1e-12)).abs() < 1e-9,
                "{smhm:?} value jump"
            );
            let left = (f(xp) - f(xp - h)) / h;
            let right = (f(xp + h) - f(xp)) / h;
            assert!(
                (left - right).abs() < 1e-3,
                "{smhm:?} z={z}: slopes {left} vs {right}"
            );
            let x = xp - 6.0 * o.dwarf_transition_dex;
            let far = (f(x) - f(x - h)) / h;
            assert!(
                (far - o.dwarf_slope).abs() < 0.01 * (right - o.dwarf_slope).abs().max(0.1),
                "{smhm:?}: slope {far}"
            );
        }
    }
}

fn fake_subhaloes(n: usize, m_peak: f64, t_peak: f64) -> Vec<SubhaloResult> {
    let proto = SubhaloResult {
        branch: 1,
        order: 1,
        group: 1,
        parent_branch: 0,
        m_infall_msun: m_peak,
        m_peak_msun: m_peak,
        t_peak_gyr: t_peak,
        t_infall_gyr: t_peak,
        m_host_at_infall_msun: 1e12,
        t_first_host_infall_gyr: t_peak,
        t_last_host_infall_gyr: t_peak,
        t_release_gyr: f64::NAN,
        n_pericentres: 0,
        t_peri_first_gyr: f64::NAN,
        r_peri_first_kpc: f64::NAN,
        r_peri_min_kpc: f64::NAN,
        t_peri_last_gyr: f64::NAN,
        r_peri_last_kpc: f64::NAN,
        r_apo_last_kpc: f64::NAN,
        n_host_crossings: 1,
        t_disrupt_physical_gyr: f64::NAN,
        m_reion_msun: 0.0,
        t_disrupt_disc_gyr: f64::NAN,
        t_disrupt_pericentre_gyr: f64::NAN,
        t_merge_gyr: f64::NAN,
        bound_to_branch: 0,
        pos_kpc: [50.0, 0.0, 0.0],
        vel_kms: [0.0; 3],
        r_kpc: 50.0,
        m_bound_msun: m_peak,
        vmax_kms: 20.0,
        rmax_kpc: 2.0,
        vmax_infall_kms: 20.0,
        m_bound_at_epoch_msun: f64::NAN,
        r_at_epoch_kpc: f64::NAN,
        backsplash: false,
        status: SubhaloStatus::InHost,
        t_first_partner_infall_gyr: f64::NAN,
        n_partner_crossings: 0,
        n_partner_pericentres: 0,
        r_peri_min_partner_kpc: f64::NAN,
        r_partner_kpc: f64::NAN,
    };
    vec![proto; n]
}

/// Scatter: 20,000 haloes at fixed peak mass; the sample standard deviation of log M* equals
/// the set width within 4 standard errors (SE of a normal sample's SD = sigma/sqrt(2N) ≈
/// 0.001 dex), for a constant 0.2 dex above the pivot and a width growing by 0.1 dex/dex
/// below it (expected 0.2 + 0.1 x 3 = 0.5 dex at 1e8 Msun); the sample mean is the median
/// relation within 4 SE (sigma/sqrt(N)). Seed fixed.
#[test]
fn scatter_has_the_set_width() {
    let c = Cosmology::from_preset("planck18").unwrap();
    let n = 20_000;
    let t = c.age_gyr(1.0);
    for (m, growth, want) in [(3e11, 0.0, 0.2), (1e8, 0.1, 0.5)] {
        let o = GalaxyOptions {
            scatter_growth: growth,
            occupation: retinue::galaxies::Occupation::All,
            ..Default::default()
        };
        let subs = fake_subhaloes(n, m, t);
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(9);
        let g = paint(&c, 0.0, &o, &Default::default(), &subs, &mut rng);
        let v: Vec<f64> = g.iter().map(|x| x.mstar_msun.log10()).collect();
        let mean = v.iter().sum::<f64>() / n as f64;
        let sd = (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n as f64 - 1.0)).sqrt();
        let se_sd = want / (2.0 * n as f64).sqrt();
        assert!(
            (sd - want).abs() < 4.0 * se_sd,
            "M={m:e}: sd {sd} vs {want}"
        );
        let median = o.log10_mstar_median(&c, m, 1.0);
        assert!(
            (mean - median).abs() < 4.0 * want / (n as f64).sqrt(),
            "M={m:e}: mean {mean} vs {median}"
        );
    }
}

/// Occupation: the erf form is 1/2 at M_50 and its Monte Carlo fraction matches it within
/// 4 binomial errors at three masses.
#[test]
fn occupation_fraction() {
    let c = Cosmology::from_preset("planck18").unwrap();
    let o = GalaxyOptions {
        occupation: retinue::galaxies::Occupation::Erf,
        ..Default::default()
    };
    assert!((o.occupation_fraction(o.occupation_m50_msun) - 0.5).abs() < 1e-12);
    let n = 20_000;
    for m in [10f64.powf(7.2), 10f64.powf(7.5), 10f64.powf(7.9)] {
        let subs = fake_subhaloes(n, m, 10.0);
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(4);
        let g = paint(&c, 0.0, &o, &Default::default(), &subs, &mut rng);
        let frac = g.iter().filter(|x| x.occupied).count() as f64 / n as f64;
        let p = o.occupation_fraction(m);
        assert!(
            (frac - p).abs() < 4.0 * (p * (1.0 - p) / n as f64).sqrt(),
            "M={m:e}: {frac} vs {p}"
        );
    }
}

/// The reionisation occupation (the default): haloes whose main progenitor had reached the
/// atomic-cooling mass by the reionisation redshift, or with V_max above the filtering
/// velocity, host a galaxy. The cooling mass for T_vir = 1e4 K and neutral gas (mu = 1.22) at
/// z = 7.7 in Planck 2018 against Barkana & Loeb 2001 eq. 26 (their 1.98e4 K normalisation,
/// with the same Bryan & Norman Delta_c): within 1.5% (their constant is rounded to three
/// digits, so 1.5% in mass); the Monte Carlo fraction of painted haloes matches the
/// probability within 4 binomial errors at masses around the threshold and for a halo above
/// the filtering velocity that formed late.
#[test]
fn reionization_occupation() {
    let c = Cosmology::from_preset("planck18").unwrap();
    let o = GalaxyOptions::default();
    assert_eq!(o.occupation, retinue::galaxies::Occupation::Reionization);
    let m_cool = o.reionization_mass_msun(&c);
    let z = o.reionization_z;
    let om_z = c.omega_m_z(z);
    let d = om_z - 1.0;
    let pi2 = std::f64::consts::PI.powi(2);
    let delta_c = 18.0 * pi2 + 82.0 * d - 39.0 * d * d;
    let bl = 1e8 / c.h()
        * (1e4
            / (1.98e4
                * (1.22 / 0.6)
                * (c.omega_m_z(0.0) / om_z * delta_c / (18.0 * pi2)).powf(1.0 / 3.0)
                * ((1.0 + z) / 10.0)))
            .powf(1.5);
    assert!((m_cool / bl - 1.0).abs() < 0.015, "{m_cool:e} vs {bl:e}");
    let n = 20_000;
    for (m_re, vmax) in [
        (0.9 * m_cool, 10.0),
        (m_cool, 10.0),
        (1.1 * m_cool, 10.0),
        (0.0, 26.0),
    ] {
        let mut subs = fake_subhaloes(n, 1e9, 10.0);
        for s in &mut subs {
            s.m_reion_msun = m_re;
            s.vmax_infall_kms = vmax;
        }
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(6);
        let g = paint(&c, 0.0, &o, &Default::default(), &subs, &mut rng);
        let frac = g.iter().filter(|x| x.occupied).count() as f64 / n as f64;
        let p = o.occupied_probability(1e9, m_re, vmax, m_cool);
        assert!(
            (frac - p).abs() < 4.0 * (p * (1.0 - p) / n as f64).sqrt() + 1e-9,
            "M_re={m_re:e}, vmax={vmax}: {frac} vs {p}"
        );
        assert!(p > 0.0 && p < 1.0 || m_re == 0.0);
    }
}

/// Satellite counts of Milky-Way-mass mocks (1.2e12 Msun, resolution 10^7.5 Msun, 8 hosts,
/// seed 5): luminous satellites inside R_vir that survive both disruption models. Band
/// (common practice, with the reason): the Milky Way has about 11 satellites brighter than
/// M_V = -8 and about 13 with M* > 1e5 Msun within 300 kpc (McConnachie 2012, AJ 144, 4;
/// recalled), its large neighbour about twice as many, and LCDM mocks of Milky-Way-mass hosts with
/// abundance-matched dwarfs scatter by factors of 2-3 from host to host; we require the median
/// mock count in [8, 45] for M_V < -8 and in [10, 90] for M* > 1e5 Msun.
#[test]
fn val_satellite_counts_in_literature_band() {
    let lt = planck18();
    let opts = milky_way();
    let mut b = TreeBuilder::new(opts.tree.pch08).unwrap();
    let (mut bright, mut massive) = (Vec::new(), Vec::new());
    for i in 0..8 {
        let rec = synthesize_host(&lt, &opts, 5, HostId::new(0, 0, i), &mut b).unwrap();
        let rv = rec.summary.r_vir_kpc;
        let sel = rec.subhaloes.iter().zip(&rec.galaxies).filter(|(s, g)| {
            s.status.alive() && s.r_kpc < rv && s.t_disrupt_pericentre_gyr.is_nan() && g.occupied
        });
        let (mut n8, mut n5) = (0, 0);
        for (_, g) in sel {
            n8 += (g.m_v < -8.0) as u32;
            n5 += (g.mstar_msun > 1e5) as u32;
        }
        bright.push(n8);
        massive.push(n5);
    }
    bright.sort();
    massive.sort();
    let (mb, mm) = (bright[bright.len() / 2], massive[massive.len() / 2]);
    // the values docs/validation.md quotes (shown with --nocapture)
    eprintln!("median N(M_V < -8) = {mb} {bright:?}; median N(M* > 1e5) = {mm} {massive:?}");
    assert!(
        (8..=45).contains(&mb),
        "median N(M_V < -8) = {mb}: {bright:?}"
    );
    assert!(
        (10..=90).contains(&mm),
        "median N(M* > 1e5) = {mm}: {massive:?}"
    );
}

/// Each stellar-mass–halo-mass relation is evaluated only within the redshifts it was fitted
/// to (Behroozi et al. 2013 to z = 8, Moster et al. 2013 to z = 4): beyond, the value is the
/// one at that limit, for the relation alone and with the dwarf extension; within, it follows
/// the relation's own redshift dependence (Behroozi's log M* = 6.636 for 1e10 Msun at z = 2,
/// physics reference sheet, 3 decimals).
#[test]
fn smhm_evaluated_within_its_redshift_range() {
    use retinue::galaxies::{GalaxyOptions, SmhmModel};
    let lt = planck18();
    let co = lt.cosmology();
    let b = GalaxyOptions::default();
    assert!((b.log10_mstar_relation(co, 1e10, 2.0) - 6.636).abs() < 1.5e-3);
    for (smhm, z_max) in [(SmhmModel::Behroozi13, 8.0), (SmhmModel::Moster13, 4.0)] {
        let o = GalaxyOptions {
            smhm,
            ..GalaxyOptions::default()
        };
        for m in [1e8, 1e10, 1e12] {
            let at_max = o.log10_mstar_relation(co, m, z_max);
            for z in [z_max + 0.5, 10.0, 20.0] {
                // Behroozi's relation is in virial masses: the same value. Moster's is in
                // M_200c, converted at the halo's own redshift (only the relation is held),
                // so it differs by the change of M_200c/M_vir beyond z = 4, under 0.01 dex
                // (Omega_m(z) is near 1 there)
                let tol = if smhm == SmhmModel::Behroozi13 {
                    0.0
                } else {
                    0.01
                };
                let v = o.log10_mstar_relation(co, m, z);
                assert!(
                    (v - at_max).abs() <= tol,
                    "{smhm:?} {m:e} z={z}: {v} {at_max}"
                );
                let d = o.log10_mstar_median(co, m, z) - o.log10_mstar_median(co, m, z_max);
                assert!(d.abs() <= tol, "{smhm:?} {m:e} z={z}: {d}");
            }
            assert_ne!(o.log10_mstar_relation(co, m, z_max - 1.0), at_max);
        }
    }
}

/// `smhm_epoch`: "peak" reads the relation at the peak's redshift (capped as above), "today"
/// at z = 0 whatever the peak's redshift. Behroozi et al. 2013 for a peak mass of 1e12 Msun
/// (above the dwarf pivot, so the relation itself): log M* = 10.428 at z = 0 and 10.337 at
/// z = 2 (physics reference sheet, section 10, computed check values; 3 decimals).
#[test]
fn smhm_epoch_chooses_the_redshift_of_the_relation() {
    use retinue::galaxies::{GalaxyOptions, SmhmEpoch};
    let lt = planck18();
    let co = lt.cosmology();
    let peak = GalaxyOptions::default();
    assert_eq!(peak.smhm_epoch, SmhmEpoch::Peak);
    let today = GalaxyOptions {
        smhm_epoch: SmhmEpoch::Today,
        ..GalaxyOptions::default()
    };
    assert!((peak.log10_mstar_of_peak(co, 1e12, 2.0, 0.0) - 10.337).abs() < 1.5e-3);
    assert!((today.log10_mstar_of_peak(co, 1e12, 2.0, 0.0) - 10.428).abs() < 1.5e-3);
    for z in [0.0, 1.0, 7.0, 12.0] {
        assert_eq!(
            today.log10_mstar_of_peak(co, 1e8, z, 0.0),
            peak.log10_mstar_of_peak(co, 1e8, 0.0, 0.0)
        );
    }
    // "today" is the hosts' final redshift: hosts that end at z = 2 read the z = 2 relation
    // (a review found z = 0 read whatever the hosts' final redshift)
    assert_eq!(
        today.log10_mstar_of_peak(co, 1e12, 0.5, 2.0),
        peak.log10_mstar_of_peak(co, 1e12, 2.0, 0.0)
    );
}

/// The resolution warning: with the erf occupation (M50 = 10^7.5 Msun, width 0.25
/// dex) a tree resolution of 10^7.5 Msun leaves haloes unresolved where half host a galaxy
/// (warned, naming the key and the faint limit); at 5e6 Msun, below the 2% point
/// (10^(7.5 - 2.054 x 0.25) = 9.7e6 Msun: the erf occupation is the normal distribution
/// function of (log M - log M50)/width, whose 2% quantile is -2.054), none; with every halo
/// occupied, always. With the default reionisation occupation the resolution is judged at the
/// reionisation redshift against the atomic-cooling mass (4.0e7 Msun at z = 7.7, width 0.04
/// dex: the 2% point is 3.3e7 Msun): none at the default 10^7.5 Msun, one at 3.5e7.
#[test]
fn resolution_warning_when_galaxies_are_unresolved() {
    use retinue::galaxies::{GalaxyOptions, Occupation};
    let lt = planck18();
    let co = lt.cosmology();
    let reion = GalaxyOptions::default();
    assert!(reion.resolution_warning(co, 10f64.powf(7.5)).is_none());
    let w = reion.resolution_warning(co, 3.5e7).expect("a warning");
    assert!(w.contains("reionisation redshift"), "{w}");
    let o = GalaxyOptions {
        occupation: Occupation::Erf,
        ..GalaxyOptions::default()
    };
    let w = o
        .resolution_warning(co, 10f64.powf(7.5))
        .expect("a warning");
    assert!(
        w.contains("trees.resolution_msun") && w.contains("50%"),
        "{w}"
    );
    assert!(o.resolution_warning(co, 5e6).is_none());
    let m2 = o.resolution_for_occupation(0.02);
    assert!((m2.log10() - (7.5 - 2.0537 * 0.25)).abs() < 1e-3, "{m2:e}");
    let all = GalaxyOptions {
        occupation: Occupation::All,
        ..o
    };
    assert!(all.resolution_warning(co, 1e5).is_some());
}

/// Tidal stripping of stars (`galaxies::stellar_stripping`) against scipy 1.18.1
/// (`tests/reference/stellar_stripping.json`, made by
/// `tests/reference/scripts/make_stellar_stripping_fixtures.py`):
/// * the fraction of Errani et al. 2022's eq. 13 tracer that their eq. 9 and 10 keep,
///   integrated with `scipy.integrate.quad` (relative 1e-5, or 1e-8 absolute for the
///   smallest fractions; the crate's grid of 481 energies agrees to 1e-6);
/// * the tracer's 3D and projected half-light radii over r_max, which the script computes by
///   another route (the distribution function, the density and its projection) and the crate
///   from the phase-space volume energy by energy: both are right only if they agree (2e-3;
///   they agree to 5e-4, the script interpolating the density on 641 radii).
#[test]
fn val_stellar_stripping_vs_scipy() {
    use retinue::galaxies::stellar_stripping::{
        half_light_radius_over_rmax, projected_half_light_radius_over_rmax, truncated_fraction,
    };
    let fx = crate::common::fixture("stellar_stripping.json");
    for row in fx["bound_fraction"].as_array().unwrap() {
        let es = 10f64.powf(row["log10_es"].as_f64().unwrap());
        let m = row["mmx_ratio"].as_f64().unwrap();
        let want = row["bound_fraction"].as_f64().unwrap();
        let got = truncated_fraction(es, m);
        assert!(
            (got - want).abs() < (1e-5 * want).max(1e-8),
            "e_s = {es:.4}, M_mx/M_mx0 = {m}: {got} against scipy's {want}"
        );
    }
    for row in fx["half_light_radius"].as_array().unwrap() {
        let es = 10f64.powf(row["log10_es"].as_f64().unwrap());
        let r3 = row["r_half_3d_over_rmax"].as_f64().unwrap();
        let g3 = half_light_radius_over_rmax(es);
        assert!((g3 / r3 - 1.0).abs() < 2e-3, "3D: {g3} against {r3}");
        // the script gives no projected radius for its most compact tracer
        let Some(r2) = row["r_half_2d_over_rmax"].as_f64() else {
            continue;
        };
        let g2 = projected_half_light_radius_over_rmax(es);
        println!("e_s = {es:.4}: r_1/2 / r_max {g3:.4} (scipy {r3:.4}), projected {g2:.4} (scipy {r2:.4})");
        assert!((g2 / r2 - 1.0).abs() < 2e-3, "projected: {g2} against {r2}");
    }
}

/// Stars against dark matter, a bound rather than an agreement: Smith et al. 2016 (ApJ 833,
/// 109, abstract; hydrodynamic cosmological simulations): "galaxies that lose ~80% of their
/// dark matter typically lose only 10% of their stars", and the stellar-to-halo size ratio
/// controls it. At bound fraction x = 0.2, galaxies of the sizes this model gives (Kravtsov
/// 2013's r_1/2 = 0.015 R_200c is 0.0069 c_200c r_max, so r_1/2 / r_max = 0.03-0.3 for
/// c_200c = 4-40) keep at least 80% of their stars (the abstract's typical 10% lost, with a
/// factor 2 for "typically"), and more the smaller they are. The model loses 0-5% there, less
/// than the abstract's 10%: the sizes of their galaxies are not in the abstract, so this
/// checks only that the model does not strip stars faster than the simulations. The last two
/// lines hold the model's own scale (a galaxy of r_1/2 / r_max = 0.07 loses most of its stars
/// between x = 0.01 and 1e-3) against an accidental change.
#[test]
fn val_stars_outlast_dark_matter_vs_smith16() {
    use retinue::galaxies::stellar_stripping::kept_star_fraction;
    let mut last = 1.0f64;
    for r in [0.03, 0.07, 0.15, 0.3] {
        let k = kept_star_fraction(r, 0.2);
        println!("r_1/2 / r_max0 = {r}: stars kept at x = 0.2: {k:.3}; at x = 0.01: {:.3}; at x = 1e-3: {:.3}",
            kept_star_fraction(r, 0.01), kept_star_fraction(r, 1e-3));
        assert!(k >= 0.8 && k <= last + 1e-12, "{r}: {k}");
        last = k;
    }
    assert!(kept_star_fraction(0.07, 0.01) > 0.5);
    assert!(kept_star_fraction(0.07, 1e-3) < 0.5);
}

/// How `paint` applies the stripping of stars (a review of 2026-12-04): on one host's
/// subhaloes, painted twice from the same draws, with and without `strip_stars`: the formed
/// masses are the same; without stripping every galaxy keeps what it formed; with it only
/// surviving galaxies (status 0 or 2) lose stars, none gains any, and each magnitude is that
/// of the mass kept. (Losing most of them is rare: none in this host; in 24 hosts the
/// smallest kept fractions were 0.12 and 0.011.)
#[test]
fn paint_strips_only_surviving_galaxies() {
    let lt = planck18();
    let opts = milky_way();
    let mut b = TreeBuilder::new(opts.tree.pch08).unwrap();
    let rec = synthesize_host(&lt, &opts, 5, HostId::new(0, 0, 3), &mut b).unwrap();
    let c = lt.cosmology();
    let on = GalaxyOptions::default();
    let off = GalaxyOptions {
        strip_stars: false,
        ..on
    };
    let paint_with = |o: &GalaxyOptions| {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(11);
        paint(c, 0.0, o, &Default::default(), &rec.subhaloes, &mut rng)
    };
    let (gs, g0) = (paint_with(&on), paint_with(&off));
    let (mut stripped, mut least) = (0, 1.0f64);
    for ((s, a), z) in rec.subhaloes.iter().zip(&gs).zip(&g0) {
        assert_eq!(a.occupied, z.occupied);
        assert_eq!(a.mstar_peak_msun, z.mstar_peak_msun);
        assert_eq!(z.mstar_msun, z.mstar_peak_msun);
        assert!(a.mstar_msun <= a.mstar_peak_msun);
        let alive = s.status.alive() && s.pos_kpc[0].is_finite();
        if !alive {
            assert_eq!(a.mstar_msun, a.mstar_peak_msun, "{:?}", s.status);
        } else if a.occupied && a.mstar_msun < a.mstar_peak_msun {
            stripped += 1;
            least = least.min(a.mstar_msun / a.mstar_peak_msun);
            let mv = retinue::galaxies::absolute_mv(a.mstar_msun, on.mass_to_light_v);
            assert!((a.m_v - mv).abs() < 1e-9);
        }
    }
    println!("stripped {stripped}; smallest fraction kept {least}");
    assert!(stripped > 0, "no galaxy lost stars");
}
