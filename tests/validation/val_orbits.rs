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
        m_disc: if with_baryons { num(&c["disc"]["m_d_msun"]) } else { 0.0 },
        a_disc: num(&c["disc"]["a_kpc"]),
        b_disc: num(&c["disc"]["b_kpc"]),
        m_bulge: if with_baryons { num(&c["bulge"]["m_b_msun"]) } else { 0.0 },
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
                    assert_rel(&format!("{name} vcirc({})", rr[i]), s.v_circ_kms(rr[i]), vc[i], 1e-9);
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
    let (mh, md, mb) = (floats(&j["m_halo_msun"]), floats(&j["m_disc_msun"]), floats(&j["m_bulge_msun"]));
    for i in 0..r.len() {
        assert_rel(&format!("halo M(<{})", r[i]), s.halo_mass(r[i]), mh[i], 1e-12);
        assert_rel(&format!("bulge M(<{})", r[i]), s.bulge_mass(r[i]), mb[i], 1e-12);
        assert_rel(&format!("disc M(<{})", r[i]), s.disc_mass_spherical(r[i]), md[i], 2e-4);
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
            assert_rel(&format!("{name} sigma_r({})", r[i]), host.sigma(r[i], 0.0) / KMS, sig[i], 2e-3);
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
            let tol = Tolerances { rtol: 1e-11, atol_pos_kpc: 1e-11, atol_vel_kpc_gyr: 1e-11 };
            let (track, peri, apo) = integrate_test_particle(&host, [x0[0], x0[1], x0[2]], [v0[0], v0[1], v0[2]], 0.0, 10.0, 1.0, tol);
            let cols: Vec<Vec<f64>> = ["x_kpc", "y_kpc", "z_kpc", "vx_kms", "vy_kms", "vz_kms"]
                .iter()
                .map(|k| floats(&orb[*k]))
                .collect();
            let en = floats(&orb["energy_kms2"]);
            for (k, &tk) in t.iter().enumerate() {
                let (tt, y) = track.iter().find(|(tt, _)| (tt - tk).abs() < 1e-9).unwrap_or_else(|| panic!("no output at {tk}"));
                let rscale = (y[0] * y[0] + y[1] * y[1] + y[2] * y[2]).sqrt();
                let vscale = (y[3] * y[3] + y[4] * y[4] + y[5] * y[5]).sqrt();
                for c in 0..6 {
                    let scale = if c < 3 { rscale } else { vscale };
                    assert_abs(&format!("{name}/{oname} t={tt} component {c}"), y[c], cols[c][k], 1e-6 * scale);
                }
                let e = s.phi([y[0], y[1], y[2]]) / (KMS * KMS) + 0.5 * (y[3] * y[3] + y[4] * y[4] + y[5] * y[5]);
                assert_rel(&format!("{name}/{oname} energy t={tt}"), e, en[k], 1e-8);
            }
            if oname != "circular_8" {
                let rp = num(&orb["rperi_kpc"]);
                let ra = num(&orb["rap_kpc"]);
                let min_peri = peri.iter().map(|p| p.1).fold(f64::INFINITY, f64::min);
                let max_apo = apo.iter().map(|p| p.1).fold(0.0, f64::max);
                assert_rel(&format!("{name}/{oname} pericentre"), min_peri, rp, 1e-6);
                assert_rel(&format!("{name}/{oname} apocentre"), max_apo.max(track[0].1[0].hypot(track[0].1[1]).hypot(track[0].1[2])), ra, 1e-6);
            }
        }
    });
}
