//! The mutual orbit of a pair (`pair::PairOrbit`) and the timing argument (`pair::timing`)
//! against the Kepler closed forms and a published timing-argument mass with a cosmological
//! constant. Units: kpc, Gyr, kpc/Gyr, Msun.

use retinue::constants::{
    G_KPC3_PER_MSUN_GYR2 as G, HUBBLE_TIME_GYR_FOR_H0_1, KMS_IN_KPC_PER_GYR as KMS,
};
use retinue::orbits::integrate::Vec3;
use retinue::orbits::Tolerances;
use retinue::pair::{time_since_zero_separation, timing_argument_mass, PairOrbit};

use crate::common::assert_rel;

use std::f64::consts::PI;

fn norm(x: Vec3) -> f64 {
    (x[0] * x[0] + x[1] * x[1] + x[2] * x[2]).sqrt()
}

fn sub(a: Vec3, b: Vec3) -> Vec3 {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}

fn scale(s: f64, a: Vec3) -> Vec3 {
    [s * a[0], s * a[1], s * a[2]]
}

fn cross(a: Vec3, b: Vec3) -> Vec3 {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}

/// Root of a decreasing or increasing function on [lo, hi] by 200 bisections (to round-off).
fn bisect(f: impl Fn(f64) -> f64, mut lo: f64, mut hi: f64) -> f64 {
    let f_lo = f(lo);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if (f(mid) > 0.0) == (f_lo > 0.0) {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

/// Relative acceleration of two point masses (gm = G M) with dark energy k: -gm x/|x|^3 + k x.
fn point_mass_accel(gm: f64, k: f64) -> impl FnMut(f64, &Vec3) -> Vec3 {
    move |_t, x| {
        let r = norm(*x);
        let s = -gm / (r * r * r) + k;
        scale(s, *x)
    }
}

/// The radial Kepler orbit (closed form, textbook; the orbit of Kahn & Woltjer 1959):
/// r = a (1 - cos eta), t = sqrt(a^3 / G M) (eta - sin eta), dr/dt = sqrt(G M / a) sin eta /
/// (1 - cos eta), along the unit vector `n`.
struct RadialKepler {
    gm: f64,
    a: f64,
    n: Vec3,
}

impl RadialKepler {
    fn t_unit(&self) -> f64 {
        (self.a.powi(3) / self.gm).sqrt()
    }
    fn t_of_eta(&self, eta: f64) -> f64 {
        self.t_unit() * (eta - eta.sin())
    }
    /// eta in [0, 2 pi] at time t (eta - sin eta increases monotonically).
    fn eta_of_t(&self, t: f64) -> f64 {
        let m = t / self.t_unit();
        bisect(|e| e - e.sin() - m, 0.0, 2.0 * PI)
    }
    fn r_rdot(&self, eta: f64) -> (f64, f64) {
        let r = self.a * (1.0 - eta.cos());
        let rdot = (self.gm / self.a).sqrt() * eta.sin() / (1.0 - eta.cos());
        (r, rdot)
    }
    fn state(&self, t: f64) -> (Vec3, Vec3, f64, f64) {
        let (r, rdot) = self.r_rdot(self.eta_of_t(t));
        (scale(r, self.n), scale(rdot, self.n), r, rdot)
    }
    /// |d^4 r / dt^4| from the equation of motion r'' = -G M / r^2: r''' = 2 G M r' / r^3,
    /// r'''' = -2 (G M)^2 / r^5 - 6 G M r'^2 / r^4, with r'^2 = 2 (E + G M / r), E = -G M / 2a.
    fn fourth_derivative(&self, r: f64) -> f64 {
        let rdot2 = 2.0 * (-self.gm / (2.0 * self.a) + self.gm / r);
        2.0 * self.gm * self.gm / r.powi(5) + 6.0 * self.gm * rdot2 / r.powi(4)
    }
}

/// `PairOrbit::integrate_back` on the radial Kepler orbit (closed form, textbook: see
/// `RadialKepler`), M = 4e12 Msun, a = 500 kpc, today at eta = 4.2 (past apocentre,
/// approaching, t = 13.37 Gyr), back to eta = 2.0, 1.0 and 0.6. The issue asks for 1e-6
/// relative; the budget is split in two halves:
/// - nodes: integration at rtol 1e-10 (absolute 1e-10 a and 1e-10 sqrt(G M / a)); a sixth-order
///   pair at that tolerance takes <~ 1e3 steps over this span, so the global error is <~ 1e-7
///   (< 5e-7);
/// - interpolation between nodes: cubic Hermite, whose error is at most h^4/384 max|r''''| in
///   position and sqrt(3)/216 h^3 max|r''''| in velocity (Birkhoff & Priver 1967, optimal
///   bounds for Hermite cubics). |r''''| is largest at the smallest separation of the span, so
///   the node spacing h is chosen here from that bound to keep it below 5e-7 r_min and
///   5e-7 sqrt(G M / a) (the grid is derived from the tolerance, not tuned).
///
/// Position errors are relative to r(t), velocity errors to max(|v(t)|, sqrt(G M / a)) (the
/// velocity vanishes at apocentre).
#[test]
fn val_pair_orbit_radial_kepler_closed_form() {
    let orbit = RadialKepler {
        gm: G * 4e12,
        a: 500.0,
        n: [1.0 / 3.0, 2.0 / 3.0, 2.0 / 3.0],
    };
    let v_a = (orbit.gm / orbit.a).sqrt();
    let eta_end = 4.2;
    let t_end = orbit.t_of_eta(eta_end);
    let (x_end, v_end, _, _) = orbit.state(t_end);
    let tol = Tolerances {
        rtol: 1e-10,
        atol_pos_kpc: 1e-10 * orbit.a,
        atol_vel_kpc_gyr: 1e-10 * v_a,
    };
    let (node_budget, interp_budget) = (5e-7, 5e-7);
    for eta_start in [2.0, 1.0, 0.6] {
        let t_start = orbit.t_of_eta(eta_start);
        let span = t_end - t_start;
        // the smallest separation over [eta_start, eta_end] is at one end
        let r_min = orbit.r_rdot(eta_start).0.min(orbit.r_rdot(eta_end).0);
        let m4 = orbit.fourth_derivative(r_min);
        let h_pos = (384.0 * interp_budget * r_min / m4).powf(0.25);
        let h_vel = (216.0 / 3f64.sqrt() * interp_budget * v_a / m4).cbrt();
        let n_nodes = (span / h_pos.min(h_vel)).ceil() as usize + 1;
        let h = span / (n_nodes - 1) as f64;
        let bound_pos = h.powi(4) / 384.0 * m4;
        let bound_vel = 3f64.sqrt() / 216.0 * h.powi(3) * m4;
        assert!(bound_pos <= interp_budget * r_min && bound_vel <= interp_budget * v_a);

        let po = PairOrbit::integrate_back(
            point_mass_accel(orbit.gm, 0.0),
            t_end,
            x_end,
            v_end,
            t_start,
            n_nodes,
            tol,
        );
        let (t0, t1) = po.time_range();
        assert!((t0 - t_start).abs() < 1e-9 && (t1 - t_end).abs() < 1e-12);
        let worst = std::cell::Cell::new([0.0f64; 2]);
        let check = |what: &str, t: f64, x: Vec3, v: Vec3, tol_rel: f64| {
            let (xw, vw, r, rdot) = orbit.state(t);
            let ex = norm(sub(x, xw)) / r;
            let ev = norm(sub(v, vw)) / rdot.abs().max(v_a);
            let w = worst.get();
            worst.set([w[0].max(ex), w[1].max(ev)]);
            assert!(
                ex <= tol_rel && ev <= tol_rel,
                "{what} eta_start={eta_start} t={t}: position error {ex:.2e}, velocity error \
                 {ev:.2e} (relative) > {tol_rel:.1e}"
            );
        };
        for (t, x, v) in po.nodes() {
            check("node", t, x, v, node_budget);
        }
        let at_nodes = worst.replace([0.0; 2]);
        // interpolated states between nodes
        let nodes: Vec<f64> = po.nodes().map(|(t, _, _)| t).collect();
        for w in nodes.windows(2) {
            for s in [0.25, 0.5, 0.75] {
                let t = w[0] + s * (w[1] - w[0]);
                let (x, v) = po.state(t);
                check("state(t)", t, x, v, node_budget + interp_budget);
            }
        }
        let between = worst.get();
        eprintln!(
            "radial Kepler back to eta = {eta_start}: {n_nodes} nodes; largest relative errors \
             at nodes {:.1e} (x), {:.1e} (v); between nodes {:.1e} (x), {:.1e} (v); Hermite \
             bounds {:.1e}, {:.1e}",
            at_nodes[0],
            at_nodes[1],
            between[0],
            between[1],
            bound_pos / r_min,
            bound_vel / v_a
        );
    }
}

/// A bound non-radial Kepler orbit (closed form, textbook: x = a (cos E - e) P + b sin E Q,
/// E - e sin E = n (t - t_peri), n = sqrt(G M / a^3), b = a sqrt(1 - e^2)), e = 0.6,
/// a = 300 kpc, M = 2e12 Msun (period 10.9 Gyr), in an inclined plane so that all three
/// components move, integrated back over two periods with `PairOrbit::integrate_back` at
/// rtol 1e-10. Tolerances: each step errs by <~ rtol in each component; <~ 1e3 steps a period
/// for a sixth-order pair at this tolerance; so <~ 2e3 x (a few) x 1e-10 <~ 1e-6 relative for
/// positions (against a), velocities (against the local speed), energy E = v^2/2 - G M / r
/// and angular momentum L = x cross v.
#[test]
fn val_pair_orbit_kepler_ellipse() {
    let (m, a, e) = (2e12, 300.0_f64, 0.6_f64);
    let gm = G * m;
    let b = a * (1.0 - e * e).sqrt();
    let n = (gm / a.powi(3)).sqrt();
    let period = 2.0 * PI / n;
    let p_hat = [2.0 / 3.0, 1.0 / 3.0, 2.0 / 3.0];
    let q_hat = [1.0 / 3.0, 2.0 / 3.0, -2.0 / 3.0];
    let t_peri = 1.3;
    let state = |t: f64| -> (Vec3, Vec3) {
        let mean = n * (t - t_peri);
        let ecc = bisect(|ea| ea - e * ea.sin() - mean, mean - e, mean + e);
        let edot = n / (1.0 - e * ecc.cos());
        let mut x = [0.0; 3];
        let mut v = [0.0; 3];
        for i in 0..3 {
            x[i] = a * (ecc.cos() - e) * p_hat[i] + b * ecc.sin() * q_hat[i];
            v[i] = (-a * ecc.sin() * p_hat[i] + b * ecc.cos() * q_hat[i]) * edot;
        }
        (x, v)
    };
    let energy = |x: Vec3, v: Vec3| 0.5 * norm(v).powi(2) - gm / norm(x);
    let t_end = 13.8;
    let t_start = t_end - 2.0 * period;
    let (x_end, v_end) = state(t_end);
    let tol = Tolerances {
        rtol: 1e-10,
        atol_pos_kpc: 1e-10 * a,
        atol_vel_kpc_gyr: 1e-10 * (gm / a).sqrt(),
    };
    let po = PairOrbit::integrate_back(
        point_mass_accel(gm, 0.0),
        t_end,
        x_end,
        v_end,
        t_start,
        801,
        tol,
    );
    let e0 = energy(x_end, v_end);
    let l0 = cross(x_end, v_end);
    let tol_rel = 1e-6;
    let mut worst = [0.0f64; 4];
    for (t, x, v) in po.nodes() {
        let (xw, vw) = state(t);
        let ex = norm(sub(x, xw)) / a;
        let ev = norm(sub(v, vw)) / norm(vw);
        assert!(
            ex <= tol_rel && ev <= tol_rel,
            "t={t}: position error {ex:.2e}, velocity error {ev:.2e}"
        );
        assert_rel("energy", energy(x, v), e0, tol_rel);
        let dl = norm(sub(cross(x, v), l0)) / norm(l0);
        assert!(dl <= tol_rel, "t={t}: angular momentum error {dl:.2e}");
        let de = (energy(x, v) / e0 - 1.0).abs();
        worst = [
            worst[0].max(ex),
            worst[1].max(ev),
            worst[2].max(de),
            worst[3].max(dl),
        ];
    }
    eprintln!(
        "Kepler ellipse, two periods back: largest relative errors {:.1e} (x), {:.1e} (v), \
         {:.1e} (E), {:.1e} (L)",
        worst[0], worst[1], worst[2], worst[3]
    );
}

/// Energy E = v^2/2 - G M / r - k r^2/2 and angular momentum of the mutual orbit with constant
/// masses and a cosmological constant (closed form: both are integrals of motion of
/// x'' = -G M x / r^3 + k x). A Local-Group-like test orbit: r = 770 kpc, v = (-109.3, 60, 0)
/// km/s, M = 4.7e12 Msun, k = H0^2 Omega_Lambda with H0 = 67.3 km/s/Mpc, Omega_Lambda = 0.685,
/// back 20 Gyr (about one period, through a pericentre near 60 kpc). Tolerance as in
/// `val_pair_orbit_kepler_ellipse`: <~ 1e3 steps at rtol 1e-10, so <~ 1e-6 relative.
#[test]
fn val_pair_orbit_energy_with_dark_energy() {
    let gm = G * 4.7e12;
    let h0 = 67.3 / HUBBLE_TIME_GYR_FOR_H0_1;
    let k = h0 * h0 * 0.685;
    let energy = |x: Vec3, v: Vec3| {
        let r = norm(x);
        0.5 * norm(v).powi(2) - gm / r - 0.5 * k * r * r
    };
    let x_end = [770.0, 0.0, 0.0];
    let v_end = [-109.3 * KMS, 60.0 * KMS, 0.0];
    let tol = Tolerances {
        rtol: 1e-10,
        atol_pos_kpc: 1e-10 * 770.0,
        atol_vel_kpc_gyr: 1e-10 * 100.0 * KMS,
    };
    let po = PairOrbit::integrate_back(point_mass_accel(gm, k), 13.8, x_end, v_end, -6.2, 401, tol);
    let e0 = energy(x_end, v_end);
    let l0 = cross(x_end, v_end);
    let mut r_min = f64::INFINITY;
    let mut worst = [0.0f64; 2];
    for (t, x, v) in po.nodes() {
        r_min = r_min.min(norm(x));
        assert_rel(&format!("energy at t={t}"), energy(x, v), e0, 1e-6);
        let dl = norm(sub(cross(x, v), l0)) / norm(l0);
        assert!(dl <= 1e-6, "t={t}: angular momentum error {dl:.2e}");
        worst = [
            worst[0].max((energy(x, v) / e0 - 1.0).abs()),
            worst[1].max(dl),
        ];
    }
    eprintln!(
        "pair orbit with Lambda: r_min {r_min:.1} kpc; largest relative errors {:.1e} (E), \
         {:.1e} (L)",
        worst[0], worst[1]
    );
    // the test orbit does pass a pericentre well inside today's separation
    assert!(r_min < 200.0, "r_min = {r_min}");
}

/// The classical timing argument in closed form (Kahn & Woltjer 1959; closed form, textbook):
/// with r = a (1 - cos eta), t = sqrt(a^3 / G M) (eta - sin eta) and dr/dt as above,
/// v t / r = sin eta (eta - sin eta) / (1 - cos eta)^2, which decreases from 0 at eta = pi
/// (apocentre) to -infinity at eta = 2 pi: one root for the first approach. Then
/// a = r / (1 - cos eta) and G M = a^3 ((eta - sin eta) / t)^2.
fn kepler_timing_mass(r: f64, v_kms: f64, t: f64) -> f64 {
    let q = v_kms * KMS * t / r;
    let eta = bisect(
        |e| e.sin() * (e - e.sin()) / (1.0 - e.cos()).powi(2) - q,
        PI,
        2.0 * PI - 1e-6,
    );
    let a = r / (1.0 - eta.cos());
    a.powi(3) * ((eta - eta.sin()) / t).powi(2) / G
}

/// Timing argument with k = 0 against the closed form (`kepler_timing_mass`), to 1e-6
/// relative as the issue asks (the integration runs at rtol 1e-12, the bisection to 1e-13, so
/// the expected difference is ~1e-9). Inputs: van der Marel et al. 2012 (ApJ 753, 8; V_rad
/// = -109.3 km/s read from the abstract, r = 770 kpc recalled) with t = 13.798 Gyr; the older
/// 784 kpc, -130 km/s; and two made-up pairs, one just past apocentre and one close to
/// pericentre. Also `time_since_zero_separation` against t(eta) on the radial Kepler orbit.
#[test]
fn val_timing_argument_kepler_closed_form() {
    for (r, v, t) in [
        (770.0, -109.3, 13.798),
        (784.0, -130.0, 13.73),
        (300.0, -2.0, 10.0),
        (100.0, -400.0, 5.0),
    ] {
        let want = kepler_timing_mass(r, v, t);
        let got = timing_argument_mass(r, v, t, 0.0).expect("a timing mass");
        eprintln!(
            "timing mass r={r} v={v} t={t}: {got:.6e}, closed form {want:.6e}, relative \
             difference {:.1e}",
            got / want - 1.0
        );
        assert_rel(&format!("timing mass r={r} v={v} t={t}"), got, want, 1e-6);
    }
    // at apocentre today (v_r = 0): eta = pi, a = r/2, G M = (r/2)^3 (pi / t)^2
    let (r, t) = (800.0_f64, 13.8_f64);
    let want = (0.5 * r).powi(3) * (PI / t).powi(2) / G;
    assert_rel(
        "timing mass at apocentre",
        timing_argument_mass(r, 0.0, t, 0.0).unwrap(),
        want,
        1e-6,
    );
    // time since r = 0 on the radial Kepler orbit, M = 4e12, a = 500 kpc, eta = 4.2 and 5.8
    let orbit = RadialKepler {
        gm: G * 4e12,
        a: 500.0,
        n: [1.0, 0.0, 0.0],
    };
    for eta in [4.2, 5.8] {
        let (r, rdot) = orbit.r_rdot(eta);
        let got = time_since_zero_separation(r, rdot / KMS, 4e12, 0.0, 100.0).unwrap();
        assert_rel("time since r = 0", got, orbit.t_of_eta(eta), 1e-8);
    }
}

/// Timing argument with a cosmological constant against Partridge, Lahav & Hoffman 2013
/// (MNRAS 436, L45; arXiv:1308.0970), abstract: "M_TAL = (4.73 +- 1.03) x 10^12 M_sun, which
/// is 13% higher than the classical TA mass estimate", for "the age of the Universe and the
/// Cosmological Constant according to the recent values from the Planck CMB experiment".
/// The value 4.73 and the 13% were read from the abstract (via a stored copy of the arXiv
/// listing); the paper's body, with its exact inputs, could not be read. Inputs used here:
/// - V_rad = -109.3 km/s: van der Marel et al. 2012 (ApJ 753, 8), abstract, read;
/// - r = 770 kpc: the distance to the Milky Way's large neighbour in van der Marel et al. 2012,
///   recalled, not read;
/// - H0 = 67.3 km/s/Mpc, Omega_m = 0.315 (so Omega_Lambda = 0.685, flat): Planck 2013 XVI
///   (A&A 571, A16) abstract, read;
/// - age 13.798 Gyr: Planck 2013 XVI (Planck+WP), recalled, not read.
///
/// That Partridge et al. used exactly these is an assumption (they name Planck; the radial
/// velocity of van der Marel et al. 2012 was the current one in 2013); what supports it is that
/// these inputs give both published numbers (4.7299e12 and +13.34%). Precision: the paper
/// quotes 4.73 (three figures), so |M - 4.73e12| <= 0.005e12; "13%" is rounded to a percent,
/// so the ratio to the k = 0 mass lies in [1.125, 1.135). The check is only as good as the
/// recalled inputs: other Planck 2013 choices move M by up to ~0.005e12 (Omega_Lambda 0.686:
/// 4.7307e12; age 13.817 Gyr: 4.7255e12; H0 = 67.11, Omega_Lambda = 0.6825: 4.7248e12, which
/// would fail). The ratio also checks the qualitative effect (Lambda raises the mass by
/// ~10-15%; also Benisty 2024, A&A 689, L1, arXiv:2401.09546, abstract: "Lambda alone predicts
/// a ~10% higher mass").
#[test]
fn val_timing_argument_lambda_partridge_2013() {
    let (r, v, age) = (770.0, -109.3, 13.798);
    let h0 = 67.3 / HUBBLE_TIME_GYR_FOR_H0_1; // Gyr^-1
    let k = h0 * h0 * (1.0 - 0.315);
    let m_lambda = timing_argument_mass(r, v, age, k).expect("a timing mass with Lambda");
    let m_classic = timing_argument_mass(r, v, age, 0.0).expect("a classical timing mass");
    eprintln!(
        "Partridge et al. 2013 inputs: M(Lambda) = {m_lambda:.5e}, M(k = 0) = {m_classic:.5e}, \
         ratio {:.5}",
        m_lambda / m_classic
    );
    assert!(
        (m_lambda / 1e12 - 4.73).abs() <= 0.005,
        "M_TAL = {m_lambda:.5e}, Partridge et al. 2013: 4.73e12"
    );
    let ratio = m_lambda / m_classic;
    assert!(
        (1.125..1.135).contains(&ratio),
        "M(Lambda)/M(0) = {ratio:.4}, Partridge et al. 2013: 13% higher"
    );
}

/// The timing orbit with Lambda, followed backwards from today with `PairOrbit::integrate_back`
/// (a separate integration, on a fixed time grid), must start at r = 0 at t = 0. Near t = 0
/// the radial orbit is r = (9 G M t^2 / 2)^(1/3) (1 - eta^2/20 + O(eta^4)) with
/// eta^2 ~ (6 t / T)^(2/3), T = sqrt(a^3 / G M), a = G M / 2|E| (expand r = a (1 - cos eta),
/// t = T (eta - sin eta): r/r_lead = (1 - eta^2/12)/(1 - eta^2/30); closed form, textbook;
/// k r is ~1e-9 of G M / r^2 there). At t = 1e-3 Gyr (eta^2 ~ 0.017) the first correction is
/// ~8e-4 and the check allows eta^4 (~3e-4) for the next order. A mass error dM/M shifts the
/// zero of r(t) by ~(age/2) dM/M and so r(1e-3 Gyr) by ~(age/3e-3) dM/M ~ 5e3 dM/M: this
/// would see dM/M >~ 1e-7.
#[test]
fn val_timing_orbit_starts_at_zero_separation() {
    let h0 = 67.3 / HUBBLE_TIME_GYR_FOR_H0_1;
    for k in [0.0, h0 * h0 * 0.685] {
        let (r, v, age) = (770.0, -109.3, 13.798);
        let m = timing_argument_mass(r, v, age, k).unwrap();
        let gm = G * m;
        let tol = Tolerances {
            rtol: 1e-12,
            atol_pos_kpc: 1e-12 * r,
            atol_vel_kpc_gyr: 1e-12 * (gm / r).sqrt(),
        };
        let t_small = 1e-3;
        let po = PairOrbit::integrate_back(
            point_mass_accel(gm, k),
            age,
            [r, 0.0, 0.0],
            [v * KMS, 0.0, 0.0],
            t_small,
            2,
            tol,
        );
        let (t0, x0, v0) = po.nodes().next().unwrap();
        let (r0, u0) = (norm(x0), norm(v0));
        let e_k = 0.5 * u0 * u0 - gm / r0;
        let a = gm / (2.0 * e_k.abs());
        let t_unit = (a.powi(3) / gm).sqrt();
        let eta2 = (6.0 * t0 / t_unit).powf(2.0 / 3.0);
        let lead = (4.5 * gm * t0 * t0).cbrt();
        let dev = r0 / lead - 1.0;
        eprintln!(
            "timing orbit (k = {k:.3e}) at t = {t0:.0e} Gyr: r / (9GMt^2/2)^(1/3) - 1 = \
             {dev:.2e}, first correction -eta^2/20 = {:.2e}",
            -eta2 / 20.0
        );
        assert!(
            (dev + eta2 / 20.0).abs() <= eta2 * eta2,
            "k={k}: r({t0}) = {r0}, (9GMt^2/2)^(1/3) = {lead}, deviation {dev:.3e}, expected \
             {:.3e} +- {:.1e}",
            -eta2 / 20.0,
            eta2 * eta2
        );
    }
}

/// A cross-check against an independent implementation, not a publication: the public script
/// `d_mass_d_cosmo_params.py` of GitHub LorneWhiteway/local_group_mass (a timing argument with
/// Lambda "for details see arXiv:1308.0970", i.e. Partridge et al. 2013), whose
/// `regression_test` expects M = 5.950378614313688e12 Msun for r = 0.784 Mpc, v_r = -130 km/s,
/// t = 13.81 Gyr, Omega_Lambda = 0.69, H0 = 67.4 km/s/Mpc (read from the file). That script
/// integrates with a fixed-step leapfrog (5000 steps from apocentre to r = 0), uses its own
/// constants (a 365.2422-day year: 2.8e-5 in the time unit) and checks itself to 1e-3 x 1e12
/// Msun; that is the tolerance here.
#[test]
fn val_timing_argument_lambda_independent_script() {
    let h0 = 67.4 / HUBBLE_TIME_GYR_FOR_H0_1;
    let m = timing_argument_mass(784.0, -130.0, 13.81, h0 * h0 * 0.69).unwrap();
    eprintln!("independent script's inputs: M = {m:.10e} (script: 5.950378614313688e12)");
    assert!(
        (m - 5.950378614313688e12).abs() <= 1e-3 * 1e12,
        "M = {m:.6e}"
    );
}
