//! Transfer functions, P(k), sigma(M), warm dark matter against colossus 1.4.0
//! (tests/reference/linear.json) and published / physics-reference values.

use std::f64::consts::PI;

use retinue::linear::transfer::{Bbks86, EisensteinHu98, WarmDarkMatter};
use retinue::linear::{CorrelationTable, Filter, LinearOptions, LinearTheory, TransferKind};
use retinue::massfunction::bias;
use retinue::Cosmology;

use super::params_from_colossus;
use crate::common::{assert_rel, fixture, floats, num};

fn theory(name: &str, options: LinearOptions) -> (LinearTheory, serde_json::Value) {
    let lin = fixture("linear.json");
    let c = lin["cosmologies"][name].clone();
    let p = params_from_colossus(name, &c["colossus_params"], true);
    (
        LinearTheory::new(Cosmology::new(p).unwrap(), options).unwrap(),
        c,
    )
}

const NAMES: [&str; 4] = ["planck18", "wmap9", "high_om", "low_s8"];

/// EH98 with wiggles and the no-wiggle form against colossus
/// `power_spectrum.transferFunction(k, h, Om0, Ob0, Tcmb0, model='eisenstein98'|'eisenstein98_zb')`.
/// Same equations: tolerance 1e-6.
#[test]
fn val_eh98_transfer_functions() {
    for name in NAMES {
        let (lt, c) = theory(name, LinearOptions::default());
        let p = &lt.cosmology().params;
        let eh = EisensteinHu98::new(p.h, p.omega_m, p.omega_b, p.t_cmb_k);
        let nw = retinue::linear::transfer::EisensteinHu98NoWiggle::new(
            p.h, p.omega_m, p.omega_b, p.t_cmb_k,
        );
        let k = floats(&c["transfer"]["k_mpc"]);
        let t = floats(&c["transfer"]["t_eh98"]);
        let tn = floats(&c["transfer"]["t_eh98_nowiggle"]);
        for i in 0..k.len() {
            assert_rel(
                &format!("{name} EH98 T(k={})", k[i]),
                eh.transfer(k[i]),
                t[i],
                1e-6,
            );
            assert_rel(
                &format!("{name} EH98nw T(k={})", k[i]),
                nw.transfer(k[i]),
                tn[i],
                1e-6,
            );
        }
    }
}

/// EH98 intermediate quantities for Planck 2018 as listed in the physics reference sheet
/// (own transcription, identical to colossus `modelEisenstein98`): z_eq, k_eq, z_d, s,
/// k_silk, alpha_c, beta_c, alpha_b, beta_b, beta_node. Printed to 6 digits: tolerance 1e-5.
#[test]
fn val_eh98_intermediate_quantities() {
    let eh = EisensteinHu98::new(0.6766, 0.3111, 0.0490, 2.7255);
    let cases = [
        ("z_eq", eh.z_eq, 3429.05),
        ("k_eq", eh.k_eq, 0.0104265),
        ("z_d", eh.z_d, 1020.80),
        ("s", eh.s, 151.020),
        ("k_silk", eh.k_silk, 0.090403),
        ("alpha_c", eh.alpha_c, 0.77069),
        ("beta_c", eh.beta_c, 1.17867),
        ("alpha_b", eh.alpha_b, 0.54398),
        ("beta_b", eh.beta_b, 7.76155),
        ("beta_node", eh.beta_node, 3.60244),
    ];
    for (what, got, want) in cases {
        assert_rel(what, got, want, 1.5e-5);
    }
}

/// sigma(M) at z = 0 and 1, EH98, top hat, 1e6 - 1e15 Msun, against colossus
/// `co.sigma(peaks.lagrangianR(M h), z)` with interpolation=False. The issue asks 5e-3;
/// the quadratures agree to 2e-4 (colossus itself differs from the fixture script's
/// high-accuracy quadrature by up to 6e-5), so 5e-4 is asserted.
#[test]
fn val_sigma_top_hat() {
    for name in NAMES {
        let (lt, c) = theory(name, LinearOptions::default());
        let s = &c["sigma"];
        let m = floats(&s["mass_msun"]);
        let s0 = floats(&s["sigma_z0"]);
        let s1 = floats(&s["sigma_z1"]);
        for i in 0..m.len() {
            assert_rel(
                &format!("{name} sigma(M={:e}, z=0)", m[i]),
                lt.sigma(m[i], 0.0),
                s0[i],
                5e-4,
            );
            assert_rel(
                &format!("{name} sigma(M={:e}, z=1)", m[i]),
                lt.sigma(m[i], 1.0),
                s1[i],
                5e-4,
            );
        }
    }
}

/// dln sigma/dln M against the fixture script's high-accuracy quadrature of the analytic
/// derivative (colossus' own derivative comes from its interpolation table and is good to
/// 3e-3 only). Tolerance 1e-3.
#[test]
fn val_sigma_slope() {
    for name in NAMES {
        let (lt, c) = theory(name, LinearOptions::default());
        let m = floats(&c["sigma"]["mass_msun"]);
        let d = floats(&c["sigma"]["dlnsigma_dlnm_hiacc"]);
        let dc = floats(&c["sigma"]["dlnsigma_dlnm"]);
        for i in 0..m.len() {
            assert_rel(
                &format!("{name} slope M={:e}", m[i]),
                lt.dln_sigma_dln_m(m[i]),
                d[i],
                1e-3,
            );
            assert_rel(
                &format!("{name} slope vs colossus M={:e}", m[i]),
                lt.dln_sigma_dln_m(m[i]),
                dc[i],
                5e-3,
            );
        }
    }
}

/// The no-wiggle EH98 sigma(M) against colossus with ps_args model 'eisenstein98_zb'
/// (normalised to the same sigma8). Tolerance 5e-4 as for the full form.
#[test]
fn val_sigma_no_wiggle() {
    for name in NAMES {
        let o = LinearOptions {
            transfer: TransferKind::Eh98NoWiggle,
            ..Default::default()
        };
        let (lt, c) = theory(name, o);
        let m = floats(&c["sigma"]["mass_msun"]);
        let s = floats(&c["sigma"]["sigma_nowiggle_z0"]);
        for i in 0..m.len() {
            assert_rel(
                &format!("{name} nowiggle sigma M={:e}", m[i]),
                lt.sigma(m[i], 0.0),
                s[i],
                5e-4,
            );
        }
    }
}

/// sigma8 is reproduced by the table at R = 8 Mpc/h to 1e-6 (issue requirement).
#[test]
fn val_sigma8_reproduced() {
    for name in NAMES {
        let (lt, c) = theory(name, LinearOptions::default());
        let r = num(&c["sigma8_check"]["radius_mpc"]);
        let m = 4.0 * PI / 3.0 * lt.rho_m0_msun_mpc3() * r.powi(3);
        assert_rel(
            &format!("{name} sigma8"),
            lt.sigma(m, 0.0),
            num(&c["sigma8_check"]["sigma8_input"]),
            1e-6,
        );
    }
}

/// The linear power spectrum at z = 0 (Mpc^3) against colossus `co.matterPowerSpectrum(k)`
/// converted from (Mpc/h)^3. Tolerance 3e-4: colossus' normalisation differs from an exact
/// quadrature by 1.1e-5 (fixture: norm_colossus vs norm_hiacc) and ours by less than 1e-4.
#[test]
fn val_power_spectrum() {
    for name in NAMES {
        let (lt, c) = theory(name, LinearOptions::default());
        let k = floats(&c["power_spectrum"]["k_mpc"]);
        let p = floats(&c["power_spectrum"]["pk_mpc3"]);
        for i in 0..k.len() {
            assert_rel(
                &format!("{name} P(k={})", k[i]),
                lt.power().p_mpc3(k[i]),
                p[i],
                3e-4,
            );
        }
    }
}

/// Sharp-k sigma(R) against colossus `co.sigma(R, 0, filt='sharp-k')`. Tolerance 1e-3
/// (colossus integrates to the sharp edge with its own quadrature).
#[test]
fn val_sigma_sharp_k() {
    for name in NAMES {
        let o = LinearOptions {
            filter: Filter::SharpK,
            ..Default::default()
        };
        let (lt, c) = theory(name, o);
        let r = floats(&c["sharp_k"]["radius_mpc"]);
        let s = floats(&c["sharp_k"]["sigma_z0"]);
        for i in 0..r.len() {
            // table look-up at the mass of that radius, M = (4 pi/3) rho (c R)^3
            let m = 4.0 * PI / 3.0 * lt.rho_m0_msun_mpc3() * (2.5 * r[i]).powi(3);
            assert_rel(
                &format!("{name} sharp-k sigma(R={})", r[i]),
                lt.sigma(m, 0.0),
                s[i],
                1e-3,
            );
            assert_rel(
                &format!("{name} sharp-k direct R={}", r[i]),
                lt.power().sigma2_sharp_k_direct(r[i]).sqrt(),
                s[i],
                1e-3,
            );
        }
    }
}

/// BBKS (Bardeen et al. 1986 eq. G3) with Sugiyama 1995 Gamma: sigma values of the physics
/// reference sheet ("sigma BBKS+Sugiyama", own quadrature, Planck 2018, masses in Msun/h)
/// and Gamma = 0.16687. Tolerance 1e-3 (quadrature agreement).
#[test]
fn val_bbks_sigma() {
    let o = LinearOptions {
        transfer: TransferKind::Bbks,
        ..Default::default()
    };
    let (lt, _) = theory("planck18", o);
    let h = 0.6766;
    assert_rel(
        "Gamma",
        Bbks86::new(h, 0.3111, 0.049).gamma(),
        0.16687,
        1e-4,
    );
    for (mh, want) in [
        (1e15, 0.53394),
        (1e12, 2.06568),
        (1e10, 3.58837),
        (1e8, 5.39758),
    ] {
        assert_rel(
            &format!("BBKS sigma({mh:e} Msun/h)"),
            lt.sigma(mh / h, 0.0),
            want,
            1e-3,
        );
    }
}

/// EH98 against a Boltzmann code: CAMB 2.0.5 sigma(M) for Planck 2018 (massless
/// neutrinos), from the physics reference sheet. EH98 is a fit good to ~1% (EH98 sec. 3.3);
/// the sheet's ratios are within 0.6%, so 1% is asserted.
#[test]
fn val_eh98_close_to_boltzmann_code() {
    let (lt, _) = theory("planck18", LinearOptions::default());
    let h = 0.6766;
    for (mh, camb) in [
        (1e15, 0.53223),
        (1e12, 2.11682),
        (1e10, 3.74691),
        (1e8, 5.71371),
    ] {
        assert_rel(
            &format!("EH98 vs CAMB sigma({mh:e} Msun/h)"),
            lt.sigma(mh / h, 0.0),
            camb,
            1e-2,
        );
    }
}

/// Warm dark matter, Viel et al. 2005 alpha and the Schneider et al. 2012 half-mode mass:
/// physics reference sheet table for Planck 2018 (own evaluation of the formulae; alpha
/// also as in hmf 3.5.2 `Viel05`). Printed to 3-4 digits: tolerance 2e-3.
#[test]
fn val_wdm_half_mode() {
    let (h, om, ob) = (0.6766, 0.3111, 0.0490);
    for (m, alpha_mpc_h, m_hm_msun) in [
        (1.0, 0.04725, 1.907e10),
        (2.0, 0.02189, 1.897e9),
        (3.0, 0.01396, 4.916e8),
        (3.5, 0.01176, 2.942e8),
        (5.0, 0.00792, 8.971e7),
        (7.0, 0.00545, 2.926e7),
    ] {
        let w = WarmDarkMatter::new(m, h, om, ob);
        assert_rel(
            &format!("alpha {m} keV"),
            w.alpha_mpc * h,
            alpha_mpc_h,
            2e-3,
        );
        assert_rel(
            &format!("M_hm {m} keV"),
            w.m_half_mode_msun(),
            m_hm_msun,
            2e-3,
        );
        // the suppression is exactly 1/2 at k_hm
        assert_rel(
            "T ratio at k_hm",
            w.suppression(w.k_half_mode_mpc()),
            0.5,
            1e-12,
        );
    }
}

/// Half-mode scale of the WDM transfer function against hmf 3.7.2 (fixture `wdm.json`,
/// `scripts/make_wdm_fixtures.py`): Viel et al. 2005 break scale alpha (`Viel05.lam_eff_fs`),
/// the half-mode wavenumber found numerically where hmf's WDM/CDM transfer-function ratio falls
/// to 1/2 (a root of the actual transfer function, not of our closed form), and the
/// Schneider et al. 2012 half-mode mass from that k with hmf's mean density, for 1-5 keV in
/// Planck 2018. Same formulae, hmf's mean density from astropy's critical density (agrees
/// with our constant to 1e-9): tolerance 1e-6.
///
/// Published value: Schneider et al. 2012 (MNRAS 424, 684) quote M_hm of about 1.3e10 Msun/h
/// for a 1 keV thermal relic in their (WMAP7-like) cosmology: recalled, not re-read. Band
/// 10%: two recalled digits (4%) and their cosmology (the same formula gives 1.25e10 Msun/h
/// for Omega_m = 0.2726, h = 0.704 against 1.29e10 for Planck 2018).
#[test]
fn val_wdm_half_mode_vs_hmf() {
    let f = fixture("wdm.json");
    let h = 0.6766;
    for row in f["half_mode"].as_array().unwrap() {
        let m = num(&row["m_wdm_kev"]);
        let w = WarmDarkMatter::new(m, h, 0.3111, 0.0490);
        assert_rel(
            &format!("alpha {m} keV"),
            w.alpha_mpc * h,
            num(&row["alpha_mpc_h"]),
            1e-6,
        );
        assert_rel(
            &format!("k_hm {m} keV (numerical root of hmf's transfer ratio)"),
            w.k_half_mode_mpc() / h,
            num(&row["k_hm_h_mpc_numerical"]),
            1e-6,
        );
        assert_rel(
            &format!("M_hm {m} keV (hmf Viel05.m_hm)"),
            w.m_half_mode_msun() * h,
            num(&row["m_hm_msun_h"]),
            1e-6,
        );
        assert_rel(
            &format!("M_hm {m} keV (from the numerical k_hm)"),
            w.m_half_mode_msun() * h,
            num(&row["m_hm_msun_h_from_numerical_k"]),
            1e-6,
        );
    }
    let w1 = WarmDarkMatter::new(1.0, h, 0.3111, 0.0490);
    let m1 = w1.m_half_mode_msun() * h;
    eprintln!(
        "M_hm(1 keV, Planck 2018) = {m1:.4e} Msun/h; Schneider et al. 2012 (recalled): ~1.3e10"
    );
    assert_rel(
        "M_hm 1 keV vs Schneider et al. 2012 (recalled)",
        m1,
        1.3e10,
        0.1,
    );
}

/// WDM sigma(M): equal to CDM far above the half-mode mass, suppressed below it, and with
/// the sharp-k filter sigma flattens (dln sigma/dln M -> 0) well below it.
#[test]
fn wdm_sigma_behaviour() {
    let cdm = theory("planck18", LinearOptions::default()).0;
    let wdm = theory(
        "planck18",
        LinearOptions {
            m_wdm_kev: Some(3.0),
            ..Default::default()
        },
    )
    .0;
    let mhm = wdm.m_half_mode_msun().unwrap();
    assert_rel(
        "WDM = CDM at 1e4 M_hm",
        wdm.sigma(1e4 * mhm, 0.0),
        cdm.sigma(1e4 * mhm, 0.0),
        2e-3,
    );
    assert!(wdm.sigma(mhm / 100.0, 0.0) < 0.8 * cdm.sigma(mhm / 100.0, 0.0));
    let sk = theory(
        "planck18",
        LinearOptions {
            m_wdm_kev: Some(3.0),
            filter: Filter::SharpK,
            ..Default::default()
        },
    )
    .0;
    assert!(sk.dln_sigma_dln_m(mhm / 1e3).abs() < 1e-3);
}

/// A user table of EH98 T(k) (k in h/Mpc) reproduces the built-in EH98 sigma(M); the same
/// table given as P(k) in 1/Mpc does too. Tolerance 1e-3 (log-linear interpolation of a
/// 40-per-decade table).
#[test]
fn tabulated_transfer_reproduces_eh98() {
    let (lt, _) = theory("planck18", LinearOptions::default());
    let p = lt.cosmology().params.clone();
    let eh = EisensteinHu98::new(p.h, p.omega_m, p.omega_b, p.t_cmb_k);
    let dir = tempfile::tempdir().unwrap();
    let mut t_text = String::from("# made from EH98\n# k_unit: h/Mpc\n# columns: k,T\n");
    let mut p_text = String::from("# k_unit: 1/Mpc\n# columns: k, P\n");
    for i in 0..=400 {
        let kh = 10f64.powf(-5.0 + 10.0 * i as f64 / 400.0);
        let t = eh.transfer(kh * p.h);
        t_text.push_str(&format!("{kh:.10e} {t:.10e}\n"));
        let k = kh * p.h;
        p_text.push_str(&format!(
            "{k:.10e},{:.10e}\n",
            k.powf(p.n_s) * t * t * 123.0
        ));
    }
    for (file, text) in [("t.txt", t_text), ("p.txt", p_text)] {
        let path = dir.path().join(file);
        std::fs::write(&path, text).unwrap();
        let o = LinearOptions {
            transfer: TransferKind::Table,
            transfer_table: Some(path),
            ..Default::default()
        };
        let tab = LinearTheory::new(lt.cosmology().clone(), o).unwrap();
        for m in [1e7, 1e9, 1e12, 1e14] {
            assert_rel(
                &format!("{file} sigma({m:e})"),
                tab.sigma(m, 0.0),
                lt.sigma(m, 0.0),
                1e-3,
            );
        }
    }
}

/// Malformed tables give errors that say what is wrong.
#[test]
fn tabulated_transfer_errors() {
    use retinue::linear::transfer::TabulatedTransfer;
    let cases = [
        ("1 1\n2 1\n3 1\n4 1\n5 1\n", "unit of k"),
        ("# k_unit: parsec\n", "k_unit"),
        ("# k_unit: h/Mpc\n1 1\n2 x\n", "not a number"),
        ("# k_unit: h/Mpc\n1 1\n1 1\n", "increase"),
        ("# k_unit: h/Mpc\n1 1\n2 -1\n", "positive"),
        ("# k_unit: h/Mpc\n1 1\n2 1\n", "at least 5"),
        ("# k_unit: h/Mpc\n# columns: a,b\n", "columns"),
    ];
    for (text, want) in cases {
        let e = TabulatedTransfer::parse(text, "t.txt", None, 0.7, 0.96)
            .unwrap_err()
            .to_string();
        assert!(e.contains(want) && e.contains("t.txt"), "{text:?}: {e}");
    }
}

/// M(sigma) inverts sigma(M) (sigma to 1e-8, M to 1e-7) across the table, for CDM and for WDM + sharp-k.
#[test]
fn inverse_round_trip() {
    for o in [
        LinearOptions::default(),
        LinearOptions {
            m_wdm_kev: Some(2.0),
            filter: Filter::SharpK,
            ..Default::default()
        },
    ] {
        let (lt, _) = theory("planck18", o);
        let t = lt.sigma_table();
        let (lo, hi) = t.mass_range_msun();
        for i in 0..=60 {
            let m = lo * 1.001 * (hi / lo / 1.002).powf(i as f64 / 60.0);
            let back = t.mass_at_sigma(t.sigma(m));
            let rel_sigma = t.sigma(back) / t.sigma(m) - 1.0;
            assert!(
                rel_sigma.abs() < 1e-8,
                "M={m:e}: sigma mismatch {rel_sigma:e}"
            );
            if t.dln_sigma_dln_m(m).abs() > 1e-2 {
                assert_rel(&format!("M(sigma(M)) at {m:e}"), back, m, 1e-7);
            }
        }
    }
}

/// The table agrees with direct quadrature between its nodes (interpolation error).
#[test]
fn table_matches_direct_quadrature() {
    let (lt, _) = theory("planck18", LinearOptions::default());
    for i in 0..40 {
        let m = 10f64.powf(4.03 + 0.29 * i as f64);
        let r = lt.sigma_table().radius_mpc(m);
        let direct = lt.power().sigma2_top_hat_direct(r).sqrt();
        assert_rel(
            &format!("table vs direct M={m:e}"),
            lt.sigma(m, 0.0),
            direct,
            1e-6,
        );
    }
}

/// The linear matter correlation function xi(r) at z = 0 against colossus 1.4.0
/// `co.correlationFunction(R h, 0)` (tests/reference/field.json,
/// make_field_fixtures.py) at 0.1-20 Mpc: tolerance 2e-3 (colossus integrates the oscillating
/// integrand with its own quadrature; our power spectra agree to 3e-4, `val_power_spectrum`).
/// And the table used for the field counts reproduces the direct integral to 1e-3.
#[test]
fn val_correlation_function() {
    let field = fixture("field.json");
    for name in ["planck18", "wmap9"] {
        let (lt, _) = theory(name, LinearOptions::default());
        let c = &field["cosmologies"][name];
        let r = floats(&c["r_mpc"]);
        let xi = floats(&c["xi_lin"]);
        let table = CorrelationTable::new(lt.power());
        for i in 0..r.len() {
            let ours = lt.power().xi_lin(r[i]);
            println!("{name} xi({}) = {ours:.6} (colossus {:.6})", r[i], xi[i]);
            assert_rel(&format!("{name} xi({} Mpc)", r[i]), ours, xi[i], 2e-3);
            assert_rel(
                &format!("{name} table({})", r[i]),
                table.xi(r[i]),
                ours,
                1e-3,
            );
        }
    }
}

/// Tinker et al. 2010 halo bias (eq. 6, Table 2; Delta = 200 m) against colossus 1.4.0
/// `bias.haloBias(M h, z, '200m', model='tinker10')` at colossus's own peak height and
/// delta_c = 1.68647 (field.json): the same formula, tolerance 1e-6; and through our own
/// sigma(M) (`halo_bias`), within 2e-3 (sigma agrees to ~1e-4, delta_c models differ by <1e-3).
#[test]
fn val_tinker10_bias() {
    let field = fixture("field.json");
    for name in ["planck18", "wmap9"] {
        let (lt, _) = theory(name, LinearOptions::default());
        for e in field["cosmologies"][name]["bias"].as_array().unwrap() {
            let (m, z, nu, b) = (
                num(&e["m_msun"]),
                num(&e["z"]),
                num(&e["nu"]),
                num(&e["b_tinker10"]),
            );
            assert_rel(
                &format!("{name} b(nu = {nu})"),
                bias::tinker10(nu, 1.68647, 200.0),
                b,
                1e-6,
            );
            assert_rel(
                &format!("{name} b(M = {m:e}, z = {z})"),
                bias::halo_bias(&lt, m, z),
                b,
                2e-3,
            );
        }
    }
}

/// The host–matter correlation of the default field model (`field = "nonlinear"`), Hayashi &
/// White 2008 (MNRAS 388, 2): xi_hm = max(xi_1h, xi_2h), xi_1h = rho_NFW(r)/rho_bar_m - 1 with
/// the host's NFW profile continued beyond R_vir, xi_2h = b_host xi_lin(r). Against the same
/// construction from colossus 1.4.0 pieces (tests/reference/field.json, `hayashi_white08`,
/// make_field_fixtures.py): `concentration.concentration(M h, 'vir', 0, model='dutton14')`,
/// `mass_so.M_to_R(M h, 0, 'vir')`, `profile_nfw.NFWProfile(M=M h, c, z=0,
/// mdef='vir').density(r h) / co.rho_m(0)`, `bias.haloBias(M h, 0, '200m', 'tinker10')` and
/// `co.correlationFunction(r h, 0)`, for hosts of 1.2e12 and 3e12 Msun at 1-10 R_vir.
/// Tolerances: c_vir and R_vir 1e-4 (same formulas and constants); 1 + xi_1h with colossus's
/// c_vir 1e-4 (same NFW formula, rho_m to 1e-6); xi_2h and xi_hm with our own pieces 4e-3
/// (the sum of the tolerances of xi_lin, 2e-3, and of the bias through our sigma(M), 2e-3,
/// `val_correlation_function`, `val_tinker10_bias`).
#[test]
fn val_hayashi_white08_host_matter_correlation() {
    use retinue::halo::MassDefinition;
    use retinue::stats::backsplash::HostMatterCorrelation;
    let field = fixture("field.json");
    let (lt, _) = theory("planck18", LinearOptions::default());
    let table = CorrelationTable::new(lt.power());
    for host in field["cosmologies"]["planck18"]["hayashi_white08"]
        .as_array()
        .unwrap()
    {
        let m = num(&host["m_vir_msun"]);
        let r_vir = MassDefinition::Vir.radius_kpc(lt.cosmology(), m, 0.0);
        assert_rel(
            &format!("R_vir({m:e})"),
            r_vir,
            num(&host["r_vir_kpc"]),
            1e-4,
        );
        let ours = HostMatterCorrelation::new(&lt, m, r_vir);
        let c_ours = r_vir / ours.nfw.r_s_kpc;
        let c_col = num(&host["c_vir_dutton14"]);
        assert_rel(&format!("c_vir({m:e})"), c_ours, c_col, 1e-4);
        assert_rel(
            &format!("b_host({m:e})"),
            ours.b_host,
            num(&host["b_tinker10"]),
            2e-3,
        );
        let same_c = HostMatterCorrelation::with_concentration(&lt, m, r_vir, c_col);
        for row in host["radii"].as_array().unwrap() {
            let x = num(&row["r_over_rvir"]);
            let r = x * r_vir * 1e-3;
            let (one, two, hm) = (num(&row["xi_1h"]), num(&row["xi_2h"]), num(&row["xi_hm"]));
            println!(
                "M {m:e}, {x} R_vir: xi_1h {:.4} (colossus {one:.4}), xi_2h {:.4} ({two:.4}), xi_hm {:.4} ({hm:.4})",
                ours.one_halo(r),
                ours.b_host * table.xi(r),
                ours.xi(r, table.xi(r)),
            );
            assert_rel(
                &format!("1 + xi_1h({m:e}, {x} R_vir)"),
                1.0 + same_c.one_halo(r),
                1.0 + one,
                1e-4,
            );
            assert_rel(
                &format!("xi_2h({m:e}, {x} R_vir)"),
                ours.b_host * lt.power().xi_lin(r),
                two,
                4e-3,
            );
            assert_rel(
                &format!("xi_hm({m:e}, {x} R_vir)"),
                ours.xi(r, lt.power().xi_lin(r)),
                hm,
                4e-3,
            );
        }
    }
}
