//! Mass functions and extended Press–Schechter against colossus 1.4.0
//! (tests/reference/linear.json, eps.json).

use retinue::massfunction::{
    dn_dlnm_mpc3, mo_white96, LaceyCole93, Multiplicity, PressSchechter, Region, ShethTormen,
};
use retinue::{Cosmology, LinearOptions, LinearTheory};

use super::params_from_colossus;
use crate::common::{assert_abs, assert_rel, fixture, floats, num};

fn theory(name: &str) -> (LinearTheory, serde_json::Value) {
    let lin = fixture("linear.json");
    let c = lin["cosmologies"][name].clone();
    let p = params_from_colossus(name, &c["colossus_params"], true);
    (
        LinearTheory::new(Cosmology::new(p).unwrap(), LinearOptions::default()).unwrap(),
        c,
    )
}

/// f(nu) for PS and ST at colossus' own nu: colossus `massFunction(..., q_out='f')`
/// (models press74, sheth99). Same formulae: tolerance 1e-9.
#[test]
fn val_multiplicity_functions() {
    let (_, c) = theory("planck18");
    for b in c["mass_function"]["by_z"].as_array().unwrap() {
        let nu = floats(&b["nu"]);
        let fp = floats(&b["f_ps"]);
        let fs = floats(&b["f_st"]);
        for i in 0..nu.len() {
            assert_rel("f_PS", PressSchechter.f_nu(nu[i]), fp[i], 1e-9);
            assert_rel("f_ST", ShethTormen::default().f_nu(nu[i]), fs[i], 1e-9);
        }
    }
}

/// dn/dlnM (comoving Mpc^-3) at z = 0, 1, 2, 1e6-1e15 Msun, four cosmologies.
/// Against the fixture script's high-accuracy quadrature of the same colossus EH98 spectrum:
/// tolerance 2e-3 (our sigma and slope are good to 1e-4 and 1e-3; at nu ~ 4 the
/// exponential amplifies sigma errors by nu^2). Against colossus itself: 1e-2 (the issue's
/// tolerance; colossus' own dlnsigma/dlnM is good to ~3e-3 only).
#[test]
fn val_mass_functions() {
    for name in ["planck18", "wmap9", "high_om", "low_s8"] {
        let (lt, c) = theory(name);
        let m = floats(&c["sigma"]["mass_msun"]);
        for b in c["mass_function"]["by_z"].as_array().unwrap() {
            let z = num(&b["z"]);
            let ps = floats(&b["dndlnm_ps_mpc3"]);
            let st = floats(&b["dndlnm_st_mpc3"]);
            let ps_h = floats(&b["dndlnm_ps_mpc3_hiacc"]);
            let st_h = floats(&b["dndlnm_st_mpc3_hiacc"]);
            for i in 0..m.len() {
                let what = format!("{name} z={z} M={:e}", m[i]);
                let got_ps = dn_dlnm_mpc3(&lt, &PressSchechter, m[i], z);
                let got_st = dn_dlnm_mpc3(&lt, &ShethTormen::default(), m[i], z);
                if ps_h[i] > 1e-30 {
                    assert_rel(&format!("PS hiacc {what}"), got_ps, ps_h[i], 2e-3);
                    assert_rel(&format!("ST hiacc {what}"), got_st, st_h[i], 2e-3);
                    assert_rel(&format!("PS colossus {what}"), got_ps, ps[i], 1e-2);
                    assert_rel(&format!("ST colossus {what}"), got_st, st[i], 1e-2);
                }
            }
        }
    }
}

/// Lacey & Cole 1993 progenitor statistics of a 1e12 Msun (and a 1e12 Msun/h) parent, seen
/// at z = 0.5, 1, 2, 4, against the fixture script's quadrature (scipy, high-accuracy sigma):
/// mass fractions (erfc form) to 2e-3 absolute, numbers of progenitors N(>M1) and dN/dlnM1
/// to 1% (our sigma differs by <1e-4, amplified by the exponential at z = 4), median
/// half-mass formation redshift to 0.01. The physics reference sheet's independent values
/// for 1e12 Msun/h (mass fraction > 1e11 Msun/h at z = 1: 0.5780; N > 1e10: 6.587;
/// median z_half 0.872) are checked too.
#[test]
fn val_lacey_cole_progenitors() {
    let eps = fixture("eps.json");
    let (lt, _) = theory("planck18");
    for parent in eps["parents"].as_array().unwrap() {
        let m0 = num(&parent["m0_msun"]);
        let lc = LaceyCole93::new(&lt, m0, 0.0);
        for prog in parent["progenitors"].as_array().unwrap() {
            let z1 = num(&prog["z1"]);
            let m1 = floats(&prog["m1_msun"]);
            let fr = floats(&prog["mass_fraction_gt_m1"]);
            let n = floats(&prog["n_gt_m1"]);
            let dn = floats(&prog["dn_dlnm1"]);
            for i in 0..m1.len() {
                let what = format!("M0={m0:e} z1={z1} M1={:e}", m1[i]);
                assert_abs(
                    &format!("fraction {what}"),
                    lc.mass_fraction_above(m1[i], z1),
                    fr[i],
                    2e-3,
                );
                if n[i] > 1e-3 {
                    assert_rel(&format!("N {what}"), lc.n_above(m1[i], z1), n[i], 1e-2);
                }
                if dn[i] > 1e-4 {
                    assert_rel(
                        &format!("dN/dlnM {what}"),
                        lc.dn_dlnm1(m1[i], z1),
                        dn[i],
                        1e-2,
                    );
                }
            }
        }
        assert_abs(
            "median z_half",
            lc.median_formation_redshift(0.0),
            num(&parent["z_half_median"]),
            0.01,
        );
    }
    let h = 0.6766;
    let lc = LaceyCole93::new(&lt, 1e12 / h, 0.0);
    assert_abs(
        "sheet: fraction > 1e11/h at z=1",
        lc.mass_fraction_above(1e11 / h, 1.0),
        0.5780,
        2e-3,
    );
    assert_rel(
        "sheet: N > 1e10/h at z=1",
        lc.n_above(1e10 / h, 1.0),
        6.587,
        1e-2,
    );
    assert_abs(
        "sheet: median z_half",
        lc.median_formation_redshift(0.0),
        0.872,
        0.01,
    );
}

/// The progenitor mass function conserves mass: \int (M1/M0) dN/dlnM1 dlnM1 over all M1
/// equals 1 - (fraction below the lowest mass) (Lacey & Cole 1993 eq. 2.15 is normalised).
#[test]
fn conditional_mass_function_integrates_to_the_erfc_fraction() {
    let (lt, _) = theory("planck18");
    let m0 = 1.3e12;
    let lc = LaceyCole93::new(&lt, m0, 0.0);
    for z1 in [0.5, 2.0] {
        let lo = 1e5f64;
        let r = quadrature::integrate(
            |x: f64| x.exp() / m0 * lc.dn_dlnm1(x.exp(), z1),
            lo.ln(),
            m0.ln(),
            1e-10,
        );
        assert_rel(
            &format!("mass integral z1={z1}"),
            r.integral,
            lc.mass_fraction_above(lo, z1),
            1e-4,
        );
    }
}

/// Mo & White 1996 eq. 18 limits: delta_0(0) = 0 and d delta_0/d delta = 1 at 0 (linear
/// theory), delta_0 -> 1.68647 for delta -> infinity (collapse). Tolerances: the published
/// coefficients are given to 5-6 digits, so 1e-4.
#[test]
fn val_mo_white_linear_overdensity_limits() {
    assert_abs("delta0(0)", mo_white96::linear_overdensity(0.0), 0.0, 1e-4);
    let eps = 1e-4;
    let slope =
        (mo_white96::linear_overdensity(eps) - mo_white96::linear_overdensity(-eps)) / (2.0 * eps);
    assert_abs("slope at 0", slope, 1.0, 1e-4);
    assert_abs(
        "delta0(1e12)",
        mo_white96::linear_overdensity(1e12),
        1.68647,
        1e-3,
    );
    // a region at the virial overdensity (~178 w.r.t. mean in EdS) is near collapse
    assert!(mo_white96::linear_overdensity(177.0) > 1.5);
}

/// A very large region at mean density has the unconditional Press–Schechter mass function
/// (Bond et al. 1991: the conditional first-crossing distribution tends to the unconditional
/// one as S0 -> 0, delta_0 -> 0). Region of comoving radius 300 Mpc: S0 ~ 1e-4, tolerance 2%.
#[test]
fn mo_white_large_region_tends_to_press_schechter() {
    let (lt, _) = theory("planck18");
    let region = Region::new(&lt, 300.0, 0.0, 0.0);
    let vol = region.volume_mpc3(0.0);
    for m in [1e8, 1e10, 1e12] {
        let n_region = region.dn_dlnm(m) / vol;
        let n_ps = dn_dlnm_mpc3(&lt, &PressSchechter, m, 0.0);
        assert_rel(&format!("region vs PS M={m:e}"), n_region, n_ps, 2e-2);
    }
    // an overdense region holds more haloes per volume than the mean
    let dense = Region::new(&lt, 2.0, 3.0, 0.0);
    let n_dense = dense.n_between(1e8, 1e11) / dense.volume_mpc3(3.0);
    let mean = Region::new(&lt, 2.0, 0.0, 0.0);
    let n_mean = mean.n_between(1e8, 1e11) / mean.volume_mpc3(0.0);
    assert!(n_dense > 1.5 * n_mean, "{n_dense} vs {n_mean}");
}

fn planck18(filter: retinue::linear::Filter, m_wdm_kev: Option<f64>) -> LinearTheory {
    LinearTheory::new(
        Cosmology::from_preset("planck18").unwrap(),
        LinearOptions {
            filter,
            m_wdm_kev,
            ..LinearOptions::default()
        },
    )
    .unwrap()
}

/// The field counts' fits (Sheth & Tormen 1999 mass function, Tinker et al. 2010 bias) were
/// calibrated with a top-hat sigma(M) of cold dark matter, so a run whose trees use the
/// sharp-k window evaluates them through the top-hat window: the same numbers as a top-hat
/// run (1e-12). Through the sharp-k window itself they would differ by more than 5% at
/// 1e10-1e12 Msun (asserted, so that the test fails if the window leaks back in).
#[test]
fn field_fits_use_the_sigma_they_were_calibrated_with() {
    use retinue::linear::Filter;
    use retinue::massfunction::bias::halo_bias;
    use retinue::massfunction::dn_dlnm_field_mpc3;
    let th = planck18(Filter::TopHat, None);
    let sk = planck18(Filter::SharpK, None);
    let st = ShethTormen::default();
    for m in [1e8, 1e10, 1e11, 1.2e12] {
        let want = dn_dlnm_mpc3(&th, &st, m, 0.0);
        assert_rel(
            "ST through sharp-k run",
            dn_dlnm_field_mpc3(&sk, &st, m, 0.0),
            want,
            1e-12,
        );
        assert_rel(
            "bias",
            halo_bias(&sk, m, 0.0),
            halo_bias(&th, m, 0.0),
            1e-12,
        );
        if m >= 1e10 {
            let raw = dn_dlnm_mpc3(&sk, &st, m, 0.0);
            assert!((raw / want - 1.0).abs() > 0.05, "{m}: {raw} vs {want}");
        }
    }
}

/// Under warm dark matter the field's mass function is the top-hat CDM one times the WDM/CDM
/// ratio through the run's own window. With the sharp-k window that ratio, at 2.5 keV,
/// against Schneider et al. 2012's fit to WDM simulations (MNRAS 424, 684; (1 + M_hm/M)^-1.16
/// as hmf 3.7.2 `Schneider12_vCDM` evaluates it, fixture `wdm.json`) at 1, 3, 10 and 30 M_hm:
/// within 40%, twice the 0.2 scatter of simulated WDM counts about such fits (Lovell et al.
/// 2020, abstract) that the subhalo checks use too.
#[test]
fn val_field_wdm_suppression_vs_schneider12() {
    use retinue::linear::Filter;
    use retinue::massfunction::dn_dlnm_field_mpc3;
    let f = fixture("wdm.json");
    let fits = &f["mass_function_fits"];
    let kev = num(&fits["m_wdm_kev"]);
    let cdm = planck18(Filter::TopHat, None);
    let wdm = planck18(Filter::SharpK, Some(kev));
    let m_hm = wdm.m_half_mode_msun().unwrap();
    let st = ShethTormen::default();
    let xs = floats(&fits["m_over_m_hm"]);
    let want = floats(&fits["schneider12_vcdm"]);
    for (x, w) in xs.iter().zip(&want) {
        if *x < 1.0 {
            continue;
        }
        let m = x * m_hm;
        let r = dn_dlnm_field_mpc3(&wdm, &st, m, 0.0) / dn_dlnm_mpc3(&cdm, &st, m, 0.0);
        eprintln!("field WDM/CDM at {x} M_hm: {r:.3} against Schneider et al. 2012 {w:.3}");
        assert_rel(&format!("{x} M_hm"), r, *w, 0.4);
    }
}
