//! Host potential, Jeans dispersion and orbits against galpy 1.12.1 (tests/reference/
//! orbits.json, made by tests/reference/scripts/make_orbit_fixtures.py).

use retinue::constants::KMS_IN_KPC_PER_GYR as KMS;
use retinue::host::{EvolvingHost, HostSnapshot, Potential};
use retinue::orbits::{integrate_test_particle, Tolerances};

use crate::common::{assert_abs, assert_rel, fixture, floats, num};

fn snapshot(with_baryons: bool) -> HostSnapshot {
    let f = fixture("orbits.json");
    let c = &f["components"];
    let h = &c["halo"];
    HostSnapshot {
        m_s: num(&h["m_scale_msun"]),
        r_s: num(&h["r_s_kpc"]),
        r_vir: num(&h["r_vir_kpc"]),
        m_vir: num(&h["m_vir_msun"]),
        m_disc: if with_baryons {
            num(&c["disc"]["m_d_msun"])
        } else {
            0.0
        },
        a_disc: num(&c["disc"]["a_kpc"]),
        b_disc: num(&c["disc"]["b_kpc"]),
        m_bulge: if with_baryons {
            num(&c["bulge"]["m_b_msun"])
        } else {
            0.0
        },
        a_bulge: num(&c["bulge"]["a_kpc"]),
    }
}

fn each(mut f: impl FnMut(&str, HostSnapshot, &serde_json::Value)) {
    let fx = fixture("orbits.json");
    for (name, baryons) in [("nfw", false), ("nfw_disc_bulge", true)] {
        f(name, snapshot(baryons), &fx["potentials"][name]);
    }
}

/// Potential, forces and circular velocity: galpy `evaluatePotentials`, `evaluateRforces`,
/// `evaluatezforces`, `vcirc` (NFW amp = 4 pi rho_s r_s^3, Hernquist amp = 2 M_b, MN amp = M_d;
/// galpy's G equals ours to 1e-11). Same formulae: tolerance 1e-9.
#[test]
fn val_potential_forces_vcirc_vs_galpy() {
    each(|name, s, p| {
        for part in ["plane", "offplane"] {
            let b = &p[part];
            let (rr, zz) = (floats(&b["R_kpc"]), floats(&b["z_kpc"]));
            let phi = floats(&b["phi_kms2"]);
            let fr = floats(&b["force_R_kms2_per_kpc"]);
            let fz = floats(&b["force_z_kms2_per_kpc"]);
            for i in 0..rr.len() {
                let x = [rr[i], 0.0, zz[i]];
                let what = format!("{name} {part} R={} z={}", rr[i], zz[i]);
                assert_rel(&format!("phi {what}"), s.phi(x) / (KMS * KMS), phi[i], 1e-9);
                let a = s.accel(x);
                assert_rel(&format!("F_R {what}"), a[0] / (KMS * KMS), fr[i], 1e-9);
                if zz[i] != 0.0 {
                    assert_rel(&format!("F_z {what}"), a[2] / (KMS * KMS), fz[i], 1e-9);
                } else {
                    assert_abs(&format!("F_z {what}"), a[2], 0.0, 1e-12);
                }
            }
            if part == "plane" {
                let vc = floats(&b["vcirc_kms"]);
                for i in 0..rr.len() {
                    assert_rel(
                        &format!("{name} vcirc({})", rr[i]),
                        s.v_circ_kms(rr[i]),
                        vc[i],
                        1e-9,
                    );
                }
            }
        }
    });
}

/// Spherical enclosed mass of each component (the disc by Gauss's theorem, tabulated) against
/// the fixture's quadrature of the galpy densities. Tolerance 2e-4 (bilinear table).
#[test]
fn val_enclosed_masses() {
    let fx = fixture("orbits.json");
    let j = &fx["potentials"]["nfw_disc_bulge"]["jeans"];
    let s = snapshot(true);
    let r = floats(&j["r_kpc"]);
    let (mh, md, mb) = (
        floats(&j["m_halo_msun"]),
        floats(&j["m_disc_msun"]),
        floats(&j["m_bulge_msun"]),
    );
    for i in 0..r.len() {
        assert_rel(
            &format!("halo M(<{})", r[i]),
            s.halo_mass(r[i]),
            mh[i],
            1e-12,
        );
        assert_rel(
            &format!("bulge M(<{})", r[i]),
            s.bulge_mass(r[i]),
            mb[i],
            1e-12,
        );
        assert_rel(
            &format!("disc M(<{})", r[i]),
            s.disc_mass_spherical(r[i]),
            md[i],
            2e-4,
        );
    }
}

/// Isotropic Jeans dispersion of the NFW tracer: galpy `df.jeans.sigmar(pot, r, beta=0)` for
/// the halo alone, and the fixture's quadrature with the exact spherical disc mass for halo +
/// disc + bulge. Our table: 64 radii in ln(r/R_vir), trapezoid integral on 1024 points;
/// tolerance 2e-3 (interpolation between nodes).
#[test]
fn val_jeans_dispersion() {
    each(|name, s, p| {
        let host = EvolvingHost::fixed(s);
        let j = &p["jeans"];
        let r = floats(&j["r_kpc"]);
        let sig = floats(&j["sigma_r_kms"]);
        for i in 0..r.len() {
            assert_rel(
                &format!("{name} sigma_r({})", r[i]),
                host.sigma(r[i], 0.0) / KMS,
                sig[i],
                2e-3,
            );
        }
    });
}

/// Orbits in the static potentials against galpy's dop853_c at 1e-14 (self-checked by the
/// script to 4e-10). Our DOPRI5 at rtol 1e-11: positions and velocities at t = 1, 2, 4, 8 Gyr
/// within 1e-6 of the orbit's size (|r| or |v|), pericentre and apocentre radii within 1e-6
/// relative, energy conserved to 1e-8 over 10 Gyr.
#[test]
fn val_orbits_vs_galpy() {
    each(|name, s, p| {
        let host = EvolvingHost::fixed(s);
        let o = &p["orbits"];
        let t = floats(&o["t_gyr"]);
        for (oname, orb) in o["orbits"].as_object().unwrap() {
            let x0 = floats(&orb["ic_pos_kpc"]);
            let v0 = floats(&orb["ic_vel_kms"]);
            let tol = Tolerances {
                rtol: 1e-11,
                atol_pos_kpc: 1e-11,
                atol_vel_kpc_gyr: 1e-11,
            };
            let (track, peri, apo) = integrate_test_particle(
                &host,
                [x0[0], x0[1], x0[2]],
                [v0[0], v0[1], v0[2]],
                0.0,
                10.0,
                1.0,
                tol,
            );
            let cols: Vec<Vec<f64>> = ["x_kpc", "y_kpc", "z_kpc", "vx_kms", "vy_kms", "vz_kms"]
                .iter()
                .map(|k| floats(&orb[*k]))
                .collect();
            let en = floats(&orb["energy_kms2"]);
            for (k, &tk) in t.iter().enumerate() {
                let (tt, y) = track
                    .iter()
                    .find(|(tt, _)| (tt - tk).abs() < 1e-9)
                    .unwrap_or_else(|| panic!("no output at {tk}"));
                let rscale = (y[0] * y[0] + y[1] * y[1] + y[2] * y[2]).sqrt();
                let vscale = (y[3] * y[3] + y[4] * y[4] + y[5] * y[5]).sqrt();
                for c in 0..6 {
                    let scale = if c < 3 { rscale } else { vscale };
                    assert_abs(
                        &format!("{name}/{oname} t={tt} component {c}"),
                        y[c],
                        cols[c][k],
                        1e-6 * scale,
                    );
                }
                let e = s.phi([y[0], y[1], y[2]]) / (KMS * KMS)
                    + 0.5 * (y[3] * y[3] + y[4] * y[4] + y[5] * y[5]);
                assert_rel(&format!("{name}/{oname} energy t={tt}"), e, en[k], 1e-8);
            }
            if oname != "circular_8" {
                let rp = num(&orb["rperi_kpc"]);
                let ra = num(&orb["rap_kpc"]);
                let min_peri = peri.iter().map(|p| p.1).fold(f64::INFINITY, f64::min);
                let max_apo = apo.iter().map(|p| p.1).fold(0.0, f64::max);
                assert_rel(&format!("{name}/{oname} pericentre"), min_peri, rp, 1e-6);
                assert_rel(
                    &format!("{name}/{oname} apocentre"),
                    max_apo.max(track[0].1[0].hypot(track[0].1[1]).hypot(track[0].1[2])),
                    ra,
                    1e-6,
                );
            }
        }
    });
}

/// The integrator in a static potential (halo + disc + bulge): relative energy drift over
/// 10 Gyr below 1e-6 for five orbits at rtol = 1e-8 (the requirement for validating
/// the integrator; production runs use orbits.rtol, default 1e-4, whose drift is reported in
/// docs/validation.md).
#[test]
fn val_energy_conservation_static() {
    let s = snapshot(true);
    let host = EvolvingHost::fixed(s);
    let tol = Tolerances {
        rtol: 1e-8,
        atol_pos_kpc: 1e-7,
        atol_vel_kpc_gyr: 1e-7,
    };
    for (x, v) in [
        ([8.0, 0.0, 0.0], [0.0, 211.7, 0.0]),
        ([100.0, 0.0, 0.0], [0.0, 60.0, 0.0]),
        ([50.0, 0.0, 20.0], [10.0, 120.0, 60.0]),
        ([300.0, 0.0, 0.0], [-100.0, 20.0, 0.0]),
        ([30.0, 0.0, 0.0], [0.0, 0.0, 150.0]),
    ] {
        let e = |y: &[f64; 6]| {
            s.phi([y[0], y[1], y[2]]) / (KMS * KMS)
                + 0.5 * (y[3] * y[3] + y[4] * y[4] + y[5] * y[5])
        };
        let drift_at = |tol: Tolerances| {
            let (tr, _, _) = integrate_test_particle(&host, x, v, 0.0, 10.0, 10.0, tol);
            (e(&tr.last().unwrap().1) / e(&tr[0].1) - 1.0).abs()
        };
        let drift = drift_at(tol);
        // the production tolerance (orbits.rtol = 1e-4, absolute 10 rtol as in the subhalo
        // orbits): reported in docs/validation.md, not asserted
        let production = drift_at(Tolerances {
            rtol: 1e-4,
            atol_pos_kpc: 1e-3,
            atol_vel_kpc_gyr: 1e-3,
        });
        eprintln!("{x:?} {v:?}: drift {drift:.1e} at rtol 1e-8, {production:.1e} at rtol 1e-4");
        assert!(drift < 1e-6, "{x:?}: drift {drift:e}");
    }
}

/// Dynamical friction against the classical estimate. For a circular orbit, dL/dt = -r F_df
/// with L = r v_c gives dr/dt = -r F_df / (d(r v_c)/dr), F_df the Chandrasekhar force at
/// |v| = v_c. (a) For a singular isothermal sphere this integrates to Binney & Tremaine 2008
/// eq. 8.13, t = 1.17 r_i^2 v_c / (G M ln Lambda): checked analytically through B(1) =
/// erf(1) - 2 e^-1/sqrt(pi). (b) A 5e10 Msun satellite started on a circular orbit at 60 kpc in
/// the NFW halo (no disc, static, fixed mass): the time for the full orbit integration to
/// reach 10 kpc agrees with the quadrature of the classical equation (same rho, sigma,
/// ln Lambda) within 15% — the orbit turns eccentric as it sinks, which the circular-orbit
/// estimate ignores (Binney & Tremaine discuss this approximation alongside eq. 8.13).
#[test]
fn val_dynamical_friction_sinking_time() {
    use retinue::constants::G_KPC3_PER_MSUN_GYR2 as G3;
    use retinue::orbits::friction;
    use retinue::orbits::integrate_point_mass;
    use retinue::special::erf;
    // (a) the 1.17 of BT08 eq. 8.13 is 1 / (2 B(1))
    let b1 = erf(1.0) - 2.0 / std::f64::consts::PI.sqrt() * (-1.0f64).exp();
    assert_abs("1/(2 B(1))", 1.0 / (2.0 * b1), 1.17, 0.005);

    // (b)
    let s = snapshot(false);
    let host = EvolvingHost::fixed(s);
    let m = 5e10;
    let r_i = 60.0;
    let vc = |r: f64| s.v_circ_kms(r) * KMS;
    // classical equation integrated with RK4 in r
    let drdt = |r: f64| {
        let v = vc(r);
        let sig = host.sigma(r, 0.0);
        let ll = friction::coulomb_log(s.mass_enclosed(r), m);
        let xx = v / (std::f64::consts::SQRT_2 * sig);
        let b = erf(xx) - 2.0 * xx / std::f64::consts::PI.sqrt() * (-xx * xx).exp();
        let f = 4.0 * std::f64::consts::PI * G3 * G3 * m * s.friction_density(r) * ll * b / (v * v);
        let h = 1e-4 * r;
        let dlv = ((r + h) * vc(r + h) - (r - h) * vc(r - h)) / (2.0 * h);
        -r * f / dlv
    };
    let (mut r, mut t, dt) = (r_i, 0.0, 1e-3);
    while r > 10.0 {
        let k1 = drdt(r);
        let k2 = drdt(r + 0.5 * dt * k1);
        let k3 = drdt(r + 0.5 * dt * k2);
        let k4 = drdt(r + dt * k3);
        r += dt / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4);
        t += dt;
    }
    let t_classical = t;
    let tol = Tolerances {
        rtol: 1e-8,
        atol_pos_kpc: 1e-7,
        atol_vel_kpc_gyr: 1e-7,
    };
    let (track, _, _) = integrate_point_mass(
        &host,
        [r_i, 0.0, 0.0],
        [0.0, s.v_circ_kms(r_i), 0.0],
        m,
        0.0,
        3.0 * t_classical,
        0.005,
        tol,
    );
    let t_orbit = track
        .iter()
        .find(|(_, y)| (y[0] * y[0] + y[1] * y[1] + y[2] * y[2]).sqrt() < 10.0)
        .map(|(t, _)| *t)
        .expect("the satellite sinks");
    // the values docs/validation.md quotes (shown with --nocapture)
    eprintln!("sinking 60 -> 10 kpc: orbit {t_orbit:.3} Gyr, classical {t_classical:.3} Gyr");
    assert!(
        (t_orbit / t_classical - 1.0).abs() < 0.15,
        "orbit {t_orbit:.3} Gyr vs classical {t_classical:.3} Gyr"
    );
}

/// A subhalo massive enough to feel friction, with stripping switched off, keeps its mass,
/// sinks and is merged with the central galaxy once inside `central_merge_kpc` (the check
/// used to sit inside the stripping step, so without stripping such a subhalo circled the
/// centre on ever shorter orbits and the run seemed to hang). 3e11 Msun falling into the
/// 1.2e12 Msun fixture halo with its disc and bulge 10 Gyr before the end (with this seed it
/// reaches 1 kpc after about 8 Gyr; 1e11 Msun on its wide orbit does not sink in 10 Gyr).
#[test]
fn friction_without_stripping_merges_at_the_centre() {
    use retinue::orbits::{evolve_subhalo, OrbitOptions, SubhaloStatus};
    use retinue::rng::{host_rng, HostId, Stream};
    use retinue::trees::Accretion;
    use retinue::{Cosmology, LinearOptions, LinearTheory};
    let lt = LinearTheory::new(
        Cosmology::from_preset("planck18").unwrap(),
        LinearOptions::default(),
    )
    .unwrap();
    let host = EvolvingHost::fixed(snapshot(true));
    let t0 = lt.cosmology().age0_gyr();
    let t_in = t0 - 10.0;
    let z_in = lt.cosmology().z_at_age(t_in);
    let a = Accretion {
        branch: 1,
        order: 1,
        into_branch: 0,
        t_infall_gyr: t_in,
        z_infall: z_in,
        m_infall_msun: 3e11,
        m_host_at_infall_msun: host.snapshot(t_in).m_vir,
        m_peak_msun: 3e11,
        t_peak_gyr: t_in,
        group: 1,
        t_host_infall_gyr: t_in,
        z_host_infall: z_in,
    };
    let opts = OrbitOptions {
        stripping: false,
        ..OrbitOptions::default()
    };
    let mut rng = host_rng(1, HostId::new(0, 0, 0), Stream::Orbits);
    let res = evolve_subhalo(&lt, &host, &opts, &a, t0, &mut rng);
    assert_eq!(res.status, SubhaloStatus::DisruptedPhysical);
    assert!(res.t_disrupt_physical_gyr > t_in && res.t_disrupt_physical_gyr < t0);
    assert!(res.r_kpc < opts.central_merge_kpc, "{}", res.r_kpc);
    assert_eq!(res.m_bound_msun, 3e11);
}
