//! Background and growth against colossus 1.4.0 and astropy 8.0.2
//! (tests/reference/background.json, made by tests/reference/scripts/make_fixtures.py), and
//! against published values.

use retinue::cosmology::{Cosmology, CosmologyParams};
use retinue::linear::{delta_c_nfw97, delta_vir_crit};

use super::params_from_colossus;
use crate::common::{assert_abs, assert_rel, fixture, floats, num};

fn each_variant(mut f: impl FnMut(&str, &str, &Cosmology, &serde_json::Value)) {
    let bg = fixture("background.json");
    for (name, c) in bg["cosmologies"].as_object().unwrap() {
        for (variant, v) in c["variants"].as_object().unwrap() {
            let radiation = variant == "rad";
            let p = params_from_colossus(name, &v["colossus_params"], radiation);
            let cosmo = Cosmology::new(p).unwrap();
            f(name, variant, &cosmo, v);
        }
    }
}

/// Omega_r, Omega_de and the curvature equal colossus' own (same constants: Omega_gamma h^2 =
/// 4.4814665e-7 T^4, neutrinos (7/8)(4/11)^(4/3) N_eff). Tolerance 1e-6: constants agree.
#[test]
fn val_density_parameters_match_colossus() {
    each_variant(|name, variant, c, v| {
        let cp = &v["colossus_params"];
        let or = num(&cp["Or0"]);
        if or > 0.0 {
            assert_rel(
                &format!("{name}/{variant} Or0"),
                c.background().omega_r0(),
                or,
                1e-6,
            );
        } else {
            assert_eq!(c.background().omega_r0(), 0.0);
        }
        assert_rel(
            &format!("{name}/{variant} Ode0"),
            c.background().omega_de0(),
            num(&cp["Ode0"]),
            1e-6,
        );
    });
}

/// E(z) and Omega_m(z): colossus `co.Ez(z)`, `co.Om(z)`; astropy `cosmo.efunc(z)`.
/// Tolerance 1e-6 vs colossus (identical model); 1e-5 vs astropy (astropy's photon density
/// constant differs from colossus' by 3e-5, which moves E(z=20) by ~2e-7).
#[test]
fn val_expansion_rate() {
    let z = floats(&fixture("background.json")["z"]);
    each_variant(|name, variant, c, v| {
        let e = floats(&v["e_z"]);
        let ea = floats(&v["e_z_astropy"]);
        let om = floats(&v["omega_m_z"]);
        for i in 0..z.len() {
            let what = format!("{name}/{variant} z={}", z[i]);
            assert_rel(&format!("E {what}"), c.e_z(z[i]), e[i], 1e-6);
            assert_rel(&format!("E astropy {what}"), c.e_z(z[i]), ea[i], 1e-5);
            assert_rel(&format!("Om(z) {what}"), c.omega_m_z(z[i]), om[i], 1e-6);
        }
    });
}

/// Cosmic time and lookback time. astropy `cosmo.age(z)`, `cosmo.lookback_time(z)` (Julian
/// year, as here): tolerance 1e-6 (the issue asks 1e-4). colossus `co.age(z)`: 1e-4, because
/// colossus' Gyr is 3.15569252e16 s (a 365.2422-day year), 2.1e-5 shorter than the Julian
/// Gyr used here and by astropy.
#[test]
fn val_ages() {
    let z = floats(&fixture("background.json")["z"]);
    each_variant(|name, variant, c, v| {
        let t = floats(&v["age_gyr"]);
        let ta = floats(&v["age_gyr_astropy"]);
        let lb = floats(&v["lookback_gyr_astropy"]);
        for i in 0..z.len() {
            let what = format!("{name}/{variant} z={}", z[i]);
            assert_rel(&format!("age astropy {what}"), c.age_gyr(z[i]), ta[i], 1e-6);
            assert_rel(&format!("age colossus {what}"), c.age_gyr(z[i]), t[i], 1e-4);
            if z[i] > 0.0 {
                assert_rel(
                    &format!("lookback {what}"),
                    c.lookback_gyr(z[i]),
                    lb[i],
                    1e-6,
                );
            }
            // the inverse table returns the redshift
            assert_abs(
                &format!("z(t) {what}"),
                c.z_at_age(c.age_gyr(z[i])),
                z[i],
                1e-7 * (1.0 + z[i]),
            );
        }
    });
}

/// Critical density: colossus `co.rho_c(z) h^2` and astropy `critical_density(z)`, in
/// physical Msun/kpc^3. Tolerance 1e-6 (same G and constants to 9 digits).
#[test]
fn val_critical_density() {
    let z = floats(&fixture("background.json")["z"]);
    each_variant(|name, variant, c, v| {
        let r = floats(&v["rho_crit_msun_kpc3"]);
        let ra = floats(&v["rho_crit_msun_kpc3_astropy"]);
        for i in 0..z.len() {
            let what = format!("rho_crit {name}/{variant} z={}", z[i]);
            assert_rel(&what, c.rho_crit_msun_kpc3(z[i]), r[i], 1e-6);
            assert_rel(&what, c.rho_crit_msun_kpc3(z[i]), ra[i], 1e-5);
        }
    });
}

/// Linear growth D(z)/D(0). Flat Lambda CDM: colossus `co.growthFactor(z)` (Heath 1977
/// integral), tolerance 1e-5 (the issue asks 1e-4); with radiation only up to z = 5. For the open wCDM case colossus ignores
/// curvature in its ODE, so the reference is the fixture script's own scipy `solve_ivp`
/// (rtol 1e-10) of the growth equation with curvature; tolerance 1e-4. dD/dz at z = 0:
/// tolerance 1e-4 (the tolerance for D).
#[test]
fn val_growth() {
    let z = floats(&fixture("background.json")["z"]);
    each_variant(|name, variant, c, v| {
        let key = if name == "open_w" {
            "growth_scipy_ode"
        } else {
            "growth"
        };
        let d = floats(&v[key]);
        let tol = if name == "open_w" { 1e-4 } else { 1e-5 };
        for i in 0..z.len() {
            // Our D neglects radiation (documented in cosmology::growth); colossus blends in a
            // matter+radiation solution above z = 5, and the open_w ODE reference includes
            // radiation, which changes D by ~1e-3 at z = 10. Compare there only without it.
            if variant == "rad" && (z[i] > 5.0 || name == "open_w") {
                continue;
            }
            assert_rel(
                &format!("D {name}/{variant} z={}", z[i]),
                c.growth(z[i]),
                d[i],
                tol,
            );
        }
        // colossus cannot differentiate with interpolation=False; the fixture's finite
        // difference of colossus' D(z) (and for open_w the scipy ODE) is the reference.
        let dk = if name == "open_w" {
            "dgrowth_dz_z0_scipy_ode"
        } else {
            "dgrowth_dz_z0_fd"
        };
        if !(name == "open_w" && variant == "rad") {
            assert_rel(
                &format!("dD/dz(0) {name}/{variant}"),
                c.growth_dz(0.0),
                num(&v[dk]),
                1e-4,
            );
        }
    });
}

/// delta_c(z) with the NFW97 Omega_m dependence and Bryan & Norman 1998 Delta_vir against
/// colossus `peaks.collapseOverdensity(corrections=True, z)` and `mass_so.deltaVir(z)` (flat
/// cosmologies only). Same formulae: tolerance 1e-6.
#[test]
fn val_collapse_and_virial_overdensity() {
    let z = floats(&fixture("background.json")["z"]);
    each_variant(|name, variant, c, v| {
        if name == "open_w" {
            return;
        }
        let dc = floats(&v["delta_c"]);
        let dv = floats(&v["delta_vir_crit"]);
        for i in 0..z.len() {
            let what = format!("{name}/{variant} z={}", z[i]);
            assert_rel(
                &format!("delta_c {what}"),
                delta_c_nfw97(c.omega_m_z(z[i])),
                dc[i],
                1e-6,
            );
            assert_rel(
                &format!("Delta_vir {what}"),
                delta_vir_crit(c, z[i]),
                dv[i],
                1e-6,
            );
        }
    });
}

/// The Heath integral (w = -1) and the ODE solver agree, for a flat and a curved model.
/// Internal consistency of two independent methods; tolerance 1e-6.
#[test]
fn growth_ode_agrees_with_heath_integral() {
    for ok in [0.0, 0.08, -0.05] {
        let mut p = retinue::cosmology::preset("planck18").unwrap();
        p.omega_k = ok;
        let c = Cosmology::new(p).unwrap();
        let heath = retinue::cosmology::Growth::heath(c.background());
        let ode = retinue::cosmology::Growth::ode(c.background());
        for z in [0.3, 1.0, 3.0, 10.0] {
            assert_rel(&format!("Omega_k={ok} z={z}"), ode.d(z), heath.d(z), 1e-6);
        }
    }
}

/// Published: Planck 2018 (A&A 641, A6, Table 2, TT,TE,EE+lowE+lensing+BAO) age of the
/// universe 13.787 +- 0.020 Gyr. Our Planck 2018 preset (massless neutrinos) must fall
/// within the quoted 1 sigma.
#[test]
fn val_planck18_age_published() {
    let c = Cosmology::from_preset("planck18").unwrap();
    assert_abs("Planck 2018 age", c.age0_gyr(), 13.787, 0.020);
}

/// Closed form without radiation: t(a) = 2/(3 H0 sqrt(Ode)) asinh(sqrt(Ode/Om) a^1.5)
/// (the standard closed form for flat Lambda CDM, e.g. Peebles 1993, Principles of Physical
/// Cosmology, ch. 13; equation number not checked). Planck 2018: 13.79150 Gyr.
#[test]
fn val_closed_form_age_flat_lcdm() {
    let mut p: CosmologyParams = retinue::cosmology::preset("planck18").unwrap();
    p.radiation = false;
    let c = Cosmology::new(p.clone()).unwrap();
    let th = c.background().hubble_time_gyr();
    let ode = 1.0 - p.omega_m;
    for z in [0.0, 0.5, 2.0, 8.0] {
        let a: f64 = 1.0 / (1.0 + z);
        let t = 2.0 * th / (3.0 * ode.sqrt()) * ((ode / p.omega_m).sqrt() * a.powf(1.5)).asinh();
        assert_rel(&format!("closed-form age z={z}"), c.age_gyr(z), t, 1e-8);
    }
}

/// Bryan & Norman 1998 (ApJ 495, 80, eq. 6): Delta_vir = 18 pi^2 + 82 x - 39 x^2 evaluated by
/// hand for Omega_m = 0.3, flat, z = 0 (x = -0.7): 101.1 (the value commonly quoted as
/// "about 100 times critical").
#[test]
fn val_bryan_norman_omega_03() {
    let mut p = retinue::cosmology::preset("planck18").unwrap();
    p.omega_m = 0.3;
    p.radiation = false;
    let c = Cosmology::new(p).unwrap();
    assert_abs("Delta_vir(Om=0.3)", delta_vir_crit(&c, 0.0), 101.1, 0.05);
}

/// Non-physical parameter sets give errors, not NaNs.
#[test]
fn bad_parameters_are_rejected() {
    let mut p = retinue::cosmology::preset("planck18").unwrap();
    p.omega_m = 1.2;
    p.omega_k = 0.0; // Ode < 0
    let e = Cosmology::new(p).unwrap_err().to_string();
    assert!(e.contains("omega_k"), "{e}");
    let mut p = retinue::cosmology::preset("planck18").unwrap();
    p.h = f64::NAN;
    assert!(Cosmology::new(p)
        .unwrap_err()
        .to_string()
        .contains("h = NaN"));
}

/// Dark energy's acceleration on orbits (`Cosmology::dark_energy_accel_per_kpc`, k in a = k x).
/// (1) Planck 2018, z = 0: k = H0^2 Omega_Lambda with the physics reference sheet's 1/H0 =
/// 14.45156 Gyr and colossus' Ode0 = 0.688809: 3.2981e-3 Gyr^-2 (1e-5, the sheet's digits).
/// (2) For every cosmology of the fixtures (flat and open, w = -1 and -0.9), the Newtonian sum
/// of accelerations per unit distance, k - H0^2 [Omega_m (1+z)^3 / 2 + Omega_r (1+z)^4] (the
/// second Friedmann equation, matter pressureless and radiation with p = rho/3), equals a''/a
/// from the expansion history that `val_expansion_rate` checks against colossus:
/// H0^2 [E^2 - (1+z) E dE/dz], dE/dz by central differences (step 1e-4): 1e-6 of H0^2 at
/// z = 0 ... 5 (curvature exerts no force).
#[test]
fn val_dark_energy_acceleration() {
    let p18 = Cosmology::from_preset("planck18").unwrap();
    let want = 0.688809 / (14.45156f64 * 14.45156);
    assert_rel("k(z = 0)", p18.dark_energy_accel_per_kpc(0.0), want, 1e-5);
    each_variant(|name, var, co, _| {
        let h0 = 1.0 / co.background().hubble_time_gyr();
        let om = co.params.omega_m;
        let or = co.background().omega_r0();
        for z in [0.0, 0.3, 1.0, 2.0, 5.0] {
            let d = 1e-4;
            // (E(z) is the closed form in (1+z), defined just below z = 0 too)
            let dedz = (co.e_z(z + d) - co.e_z(z - d)) / (2.0 * d);
            let e = co.e_z(z);
            let addot = h0 * h0 * (e * e - (1.0 + z) * e * dedz);
            let newton = co.dark_energy_accel_per_kpc(z)
                - h0 * h0 * (0.5 * om * (1.0 + z).powi(3) + or * (1.0 + z).powi(4));
            assert_abs(
                &format!("{name}/{var} a''/a at z = {z}"),
                newton,
                addot,
                1e-6 * h0 * h0,
            );
        }
    });
}
