//! Static potentials: one snapshot of the host (NFW + Miyamoto–Nagai disc + Hernquist
//! bulge), evaluated without allocation or quadrature. Internal units: kpc, kpc/Gyr, Gyr,
//! Msun (G = G_KPC3_PER_MSUN_GYR2); potentials in kpc^2/Gyr^2.
//!
//! * NFW (Navarro, Frenk & White 1997): Phi = -G M_s ln(1 + r/r_s)/r, M_s = 4 pi rho_s r_s^3.
//! * Miyamoto & Nagai 1975 (PASJ 27, 533): Phi = -G M_d / sqrt(R^2 + (a + sqrt(z^2 + b^2))^2).
//! * Hernquist 1990 (ApJ 356, 359): Phi = -G M_b / (r + a), M(<r) = M_b r^2 / (r + a)^2.

use std::f64::consts::PI;

use crate::constants::G_KPC3_PER_MSUN_GYR2 as G;
use crate::halo::nfw::mu;

/// Anything orbits can be integrated in.
pub trait Potential {
    /// Potential at position x (kpc), kpc^2/Gyr^2.
    fn phi(&self, x: [f64; 3]) -> f64;
    /// Acceleration at x, kpc/Gyr^2.
    fn accel(&self, x: [f64; 3]) -> [f64; 3];
    /// Mass inside a sphere of radius r (Msun), spherical approximation for flattened parts.
    fn mass_enclosed(&self, r: f64) -> f64;
    /// Density of the dark-matter background that causes dynamical friction, Msun/kpc^3.
    fn friction_density(&self, r: f64) -> f64;
}

/// Host components at one instant.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HostSnapshot {
    /// NFW: M_s = 4 pi rho_s r_s^3 (Msun) and r_s (kpc).
    pub m_s: f64,
    pub r_s: f64,
    /// Virial radius (kpc) and mass (Msun) of the halo at this instant.
    pub r_vir: f64,
    pub m_vir: f64,
    /// Miyamoto–Nagai disc mass (Msun) and scale lengths a, b (kpc).
    pub m_disc: f64,
    pub a_disc: f64,
    pub b_disc: f64,
    /// Hernquist bulge mass (Msun) and scale length (kpc).
    pub m_bulge: f64,
    pub a_bulge: f64,
    /// Dark energy's acceleration per unit distance, a = k x (Gyr^-2, outward when positive;
    /// `Cosmology::dark_energy_accel_per_kpc`); zero for a static test host.
    pub de_k: f64,
}

impl HostSnapshot {
    /// Linear interpolation between two snapshots (weight f of `other`).
    #[inline]
    pub fn lerp(&self, other: &Self, f: f64) -> Self {
        let l = |a: f64, b: f64| a + f * (b - a);
        Self {
            m_s: l(self.m_s, other.m_s),
            r_s: l(self.r_s, other.r_s),
            r_vir: l(self.r_vir, other.r_vir),
            m_vir: l(self.m_vir, other.m_vir),
            m_disc: l(self.m_disc, other.m_disc),
            a_disc: l(self.a_disc, other.a_disc),
            b_disc: l(self.b_disc, other.b_disc),
            m_bulge: l(self.m_bulge, other.m_bulge),
            a_bulge: l(self.a_bulge, other.a_bulge),
            de_k: l(self.de_k, other.de_k),
        }
    }

    /// NFW density, Msun/kpc^3.
    #[inline]
    pub fn halo_density(&self, r: f64) -> f64 {
        let x = r / self.r_s;
        self.m_s / (4.0 * PI * self.r_s.powi(3)) / (x * (1.0 + x) * (1.0 + x))
    }

    /// NFW enclosed mass.
    #[inline]
    pub fn halo_mass(&self, r: f64) -> f64 {
        self.m_s * mu(r / self.r_s)
    }

    /// Mass of the Miyamoto–Nagai disc inside a sphere of radius r, exact (Gauss's theorem on
    /// the sphere, tabulated once per process in r/a and b/a; see `disc_sphere_fraction`).
    /// Used where a spherical mass is needed: tidal time-scale, Jeans dispersion, Coulomb
    /// logarithm. Forces always use the exact disc.
    #[inline]
    pub fn disc_mass_spherical(&self, r: f64) -> f64 {
        if self.m_disc == 0.0 {
            return 0.0;
        }
        self.m_disc * disc_sphere_fraction(r / self.a_disc, self.b_disc / self.a_disc)
    }

    #[inline]
    pub fn bulge_mass(&self, r: f64) -> f64 {
        self.m_bulge * r * r / ((r + self.a_bulge) * (r + self.a_bulge))
    }

    /// Circular velocity in the disc plane (exact for every component), km/s.
    pub fn v_circ_kms(&self, r: f64) -> f64 {
        let a = self.accel([r, 0.0, 0.0]);
        (-a[0] * r).sqrt() / crate::constants::KMS_IN_KPC_PER_GYR
    }

    /// d^2 Phi / dr^2 along the direction of x (Gyr^-2). Analytic for every component: for
    /// the spherical parts Phi'' = -2 G M(<r)/r^3 + 4 pi G rho(r); for the Miyamoto–Nagai disc
    /// the Hessian of -G M_d q^(-1/2), q = R^2 + (a + zeta)^2, zeta = sqrt(z^2 + b^2), projected on
    /// the unit vector u = x/r:
    /// u.H.u = (G M_d / 2) [ -(3/2) q^(-5/2) (u.grad q)^2 + q^(-3/2) (2 u_x^2 + 2 u_y^2 + q_zz u_z^2) ],
    /// q_zz = 2 [z^2/zeta^2 + (a + zeta) b^2 / zeta^3].
    ///
    /// Returns the spherical mass inside |x| (halo, disc by Gauss's theorem, bulge; Msun) and
    /// d^2 Phi / dr^2 along x (Gyr^-2), sharing the work: what stripping needs once per step.
    #[inline]
    pub fn tidal_terms(&self, x: [f64; 3]) -> (f64, f64) {
        let r2 = x[0] * x[0] + x[1] * x[1] + x[2] * x[2];
        let r = r2.sqrt().max(1e-12);
        let xs = r / self.r_s;
        let m_halo = self.m_s * mu(xs);
        let ab = r + self.a_bulge;
        let m_bulge = self.m_bulge * r2 / (ab * ab);
        // 4 pi G rho for NFW (M_s = 4 pi rho_s r_s^3) and Hernquist
        let four_pi_g_rho = G * self.m_s / (r * self.r_s * self.r_s * (1.0 + xs) * (1.0 + xs))
            + 2.0 * G * self.m_bulge * self.a_bulge / (r * ab * ab * ab);
        let sph = -2.0 * G * (m_halo + m_bulge) / (r2 * r) + four_pi_g_rho;
        let disc = self.disc_d2phi_radial(x, r);
        // dark energy: Phi = -k r^2/2, d^2 Phi/dr^2 = -k
        (
            m_halo + self.disc_mass_spherical(r) + m_bulge,
            sph + disc - self.de_k,
        )
    }

    /// The disc's d^2 Phi / dr^2 along x (|x| = r), Gyr^-2 (`tidal_terms`).
    #[inline]
    fn disc_d2phi_radial(&self, x: [f64; 3], r: f64) -> f64 {
        if self.m_disc <= 0.0 {
            return 0.0;
        }
        let u = [x[0] / r, x[1] / r, x[2] / r];
        let zeta = (x[2] * x[2] + self.b_disc * self.b_disc).sqrt();
        let az = self.a_disc + zeta;
        let q = x[0] * x[0] + x[1] * x[1] + az * az;
        let gq = 2.0 * (x[0] * u[0] + x[1] * u[1] + az * x[2] / zeta * u[2]);
        let qzz = 2.0
            * (x[2] * x[2] / (zeta * zeta) + az * self.b_disc * self.b_disc / (zeta * zeta * zeta));
        let q32 = q * q.sqrt();
        0.5 * G
            * self.m_disc
            * (-1.5 * gq * gq / (q32 * q)
                + (2.0 * (u[0] * u[0] + u[1] * u[1]) + qzz * u[2] * u[2]) / q32)
    }

    /// The tide of the disc and bulge alone at x on a circular orbit through x:
    /// G M_b(<r) / r^3 - d^2 Phi_b / dr^2 along x (Gyr^-2), with M_b the spherical baryonic
    /// mass inside r (disc by Gauss's theorem, bulge exact) and Phi_b the disc's and bulge's
    /// potential (the King 1962 denominator with the baryons' share of Omega^2). For a point
    /// mass it is 3 G M / r^3. Zero without disc and bulge.
    pub fn baryon_tide(&self, x: [f64; 3]) -> f64 {
        let r2 = x[0] * x[0] + x[1] * x[1] + x[2] * x[2];
        let r = r2.sqrt().max(1e-12);
        let ab = r + self.a_bulge;
        let m_bulge = self.m_bulge * r2 / (ab * ab);
        // Hernquist: d^2 Phi/dr^2 = -2 G M(<r)/r^3 + 4 pi G rho
        let bulge_d2 = if self.m_bulge > 0.0 {
            -2.0 * G * m_bulge / (r2 * r)
                + 2.0 * G * self.m_bulge * self.a_bulge / (r * ab * ab * ab)
        } else {
            0.0
        };
        let m_b = m_bulge + self.disc_mass_spherical(r);
        G * m_b / (r2 * r) - bulge_d2 - self.disc_d2phi_radial(x, r)
    }
}

impl HostSnapshot {
    /// Acceleration at x together with the spherical (halo + bulge) mass inside |x| that the
    /// force used, so callers that need M(<r) do not recompute it.
    #[inline]
    pub fn accel_and_spherical_mass(&self, x: [f64; 3]) -> ([f64; 3], f64) {
        let r2 = x[0] * x[0] + x[1] * x[1] + x[2] * x[2];
        let r = r2.sqrt().max(1e-12);
        let m_sph = self.m_s * mu(r / self.r_s)
            + self.m_bulge * r2 / ((r + self.a_bulge) * (r + self.a_bulge));
        // (floored like r: finite at the centre itself, where the force is zero)
        let gs = -G * m_sph / (r2.max(1e-24) * r);
        let big_r2 = x[0] * x[0] + x[1] * x[1];
        let zeta = (x[2] * x[2] + self.b_disc * self.b_disc).sqrt();
        let az = self.a_disc + zeta;
        let d2 = big_r2 + az * az;
        let d3 = d2 * d2.sqrt();
        let gd = -G * self.m_disc / d3;
        // dark energy: a = k x
        let k = self.de_k;
        (
            [
                gs * x[0] + gd * x[0] + k * x[0],
                gs * x[1] + gd * x[1] + k * x[1],
                gs * x[2] + gd * x[2] * az / zeta + k * x[2],
            ],
            m_sph,
        )
    }
}

impl Potential for HostSnapshot {
    #[inline]
    fn phi(&self, x: [f64; 3]) -> f64 {
        let r2 = x[0] * x[0] + x[1] * x[1] + x[2] * x[2];
        let r = r2.sqrt();
        let xs = r / self.r_s;
        let nfw = if xs < 1e-6 {
            -G * self.m_s / self.r_s * (1.0 - 0.5 * xs)
        } else {
            -G * self.m_s * (1.0 + xs).ln() / r
        };
        let big_r2 = x[0] * x[0] + x[1] * x[1];
        let zeta = (x[2] * x[2] + self.b_disc * self.b_disc).sqrt();
        let disc = -G * self.m_disc / (big_r2 + (self.a_disc + zeta).powi(2)).sqrt();
        let bulge = -G * self.m_bulge / (r + self.a_bulge);
        nfw + disc + bulge - 0.5 * self.de_k * r2
    }

    #[inline]
    fn accel(&self, x: [f64; 3]) -> [f64; 3] {
        // spherical parts g = -G M(<r)/r^3 x; Miyamoto–Nagai exact
        self.accel_and_spherical_mass(x).0
    }

    #[inline]
    fn mass_enclosed(&self, r: f64) -> f64 {
        self.halo_mass(r) + self.disc_mass_spherical(r) + self.bulge_mass(r)
    }

    #[inline]
    fn friction_density(&self, r: f64) -> f64 {
        self.halo_density(r)
    }
}

/// Fraction of a Miyamoto–Nagai disc's mass (scale lengths a, b) inside a sphere of radius
/// r, as a function of x = r/a and beta = b/a. By Gauss's theorem,
/// M(<r)/M_d = (r^2/(G M_d)) <dPhi/dr>_sphere = (x/2) \int_{-1}^{1} [s^2 + mu^2 (1 + zeta)/zeta] / D^3 dmu
/// with s^2 = x^2 (1 - mu^2), zeta = sqrt(x^2 mu^2 + beta^2), D^2 = s^2 + (1 + zeta)^2 (lengths in
/// units of a). Tabulated on 161 x 41 nodes in (ln x, ln beta) by double-exponential quadrature
/// (split at |mu| = beta/x, where the integrand turns over), bicubic in between (cubic in beta
/// first, cached per thread for the last beta, then cubic in x).
pub fn disc_sphere_fraction(x: f64, beta: f64) -> f64 {
    use std::sync::OnceLock;
    const NX: usize = 161;
    const NB: usize = 41;
    const LX0: f64 = -6.907_755_278_982_137; // ln 1e-3
    const LX1: f64 = 9.210_340_371_976_184; // ln 1e4
    const LB0: f64 = -4.605_170_185_988_091; // ln 1e-2
    const LB1: f64 = 4.605_170_185_988_091; // ln 1e2
    static TABLE: OnceLock<Vec<f64>> = OnceLock::new();
    let table = TABLE.get_or_init(|| {
        let mut t = Vec::with_capacity(NX * NB);
        for j in 0..NB {
            let beta = (LB0 + (LB1 - LB0) * j as f64 / (NB - 1) as f64).exp();
            for i in 0..NX {
                let x = (LX0 + (LX1 - LX0) * i as f64 / (NX - 1) as f64).exp();
                t.push(disc_sphere_fraction_exact(x, beta));
            }
        }
        t
    });
    let u =
        ((x.max(1e-300).ln() - LX0) / (LX1 - LX0) * (NX - 1) as f64).clamp(0.0, (NX - 1) as f64);
    // 4-point Lagrange weights (cubic) in each direction, stencil kept inside the table
    let stencil = |w: f64, n: usize| -> (usize, [f64; 4]) {
        let i = (w.floor() as usize).clamp(1, n - 3);
        let t = w - i as f64; // nodes at -1, 0, 1, 2
        (
            i - 1,
            [
                -t * (t - 1.0) * (t - 2.0) / 6.0,
                (t + 1.0) * (t - 1.0) * (t - 2.0) / 2.0,
                -(t + 1.0) * t * (t - 2.0) / 2.0,
                (t + 1.0) * t * (t - 1.0) / 6.0,
            ],
        )
    };
    // The orbit integrator calls this with one b/a for a whole host (disc and bulge grow at
    // fixed b/a), so the interpolation in b/a is done once per b/a and kept per thread: the
    // row holds the table interpolated to this b/a at every node in x.
    thread_local! {
        static ROW: std::cell::RefCell<(f64, Vec<f64>)> = const { std::cell::RefCell::new((f64::NAN, Vec::new())) };
    }
    let (i0, wx) = stencil(u, NX);
    let f = ROW.with(|row| {
        let mut row = row.borrow_mut();
        // (b/a from interpolated snapshots differs from the host's fixed ratio only by
        // rounding, so a relative match to 1e-12 reuses the row)
        if row.0.is_nan() || (beta / row.0 - 1.0).abs() > 1e-12 {
            let v = ((beta.ln() - LB0) / (LB1 - LB0) * (NB - 1) as f64).clamp(0.0, (NB - 1) as f64);
            let (j0, wb) = stencil(v, NB);
            let vals = (0..NX)
                .map(|i| {
                    wb.iter()
                        .enumerate()
                        .map(|(jj, wj)| wj * table[(j0 + jj) * NX + i])
                        .sum::<f64>()
                })
                .collect();
            *row = (beta, vals);
        }
        let r = &row.1[i0..i0 + 4];
        wx[0] * r[0] + wx[1] * r[1] + wx[2] * r[2] + wx[3] * r[3]
    });
    if x < 1e-3 {
        // inside the first node the enclosed mass grows as r^3 (finite central density)
        f * (x / 1e-3).powi(3)
    } else {
        f
    }
}

/// The quadrature behind `disc_sphere_fraction`.
pub fn disc_sphere_fraction_exact(x: f64, beta: f64) -> f64 {
    let g = |mu: f64| {
        let s2 = x * x * (1.0 - mu * mu);
        let zeta = (x * x * mu * mu + beta * beta).sqrt();
        let d2 = s2 + (1.0 + zeta) * (1.0 + zeta);
        (s2 + x * x * mu * mu * (1.0 + zeta) / zeta) / (d2 * d2.sqrt())
    };
    // the integrand is even in mu: (x/2) times the integral over [-1, 1] = x times [0, 1]
    let split = (beta / x).min(1.0);
    let mut total = 0.0;
    for (lo, hi) in [(0.0, split), (split, 1.0)] {
        if hi > lo {
            total += quadrature::integrate(g, lo, hi, 1e-12).integral;
        }
    }
    x * total
}

#[cfg(test)]
mod tests {
    use super::*;

    fn mw() -> HostSnapshot {
        HostSnapshot {
            m_s: 4.4e11,
            r_s: 20.0,
            r_vir: 280.0,
            m_vir: 1.2e12,
            m_disc: 6.8e10,
            a_disc: 3.0,
            b_disc: 0.28,
            m_bulge: 1e10,
            a_bulge: 0.6,
            de_k: 0.0048,
        }
    }

    /// Acceleration = -grad Phi by central differences, at points off every symmetry plane.
    #[test]
    fn force_is_finite_at_the_centre() {
        // at the centre itself the force vanishes by symmetry (it was 0 * inf = NaN)
        let (a, m) = mw().accel_and_spherical_mass([0.0; 3]);
        assert!(a.iter().all(|v| *v == 0.0), "{a:?}");
        assert!(m.is_finite() && m >= 0.0);
    }

    #[test]
    fn force_is_minus_gradient() {
        let p = mw();
        for x in [
            [5.0, 1.0, 0.3],
            [-20.0, 7.0, 4.0],
            [120.0, -80.0, 60.0],
            [0.7, 0.2, -0.1],
        ] {
            let a = p.accel(x);
            for k in 0..3 {
                let h = 1e-5 * (x[0] * x[0] + x[1] * x[1] + x[2] * x[2]).sqrt();
                let mut xp = x;
                let mut xm = x;
                xp[k] += h;
                xm[k] -= h;
                let g = -(p.phi(xp) - p.phi(xm)) / (2.0 * h);
                assert!(
                    (g - a[k]).abs() < 1e-6 * a[k].abs().max(1e-3 * g.abs().max(1.0)),
                    "{x:?} {k}: {g} vs {}",
                    a[k]
                );
            }
        }
    }

    /// The analytic d^2 Phi/dr^2 equals central differences of the radial force (which is
    /// checked against galpy in tests/validation), for points in and off the disc plane.
    #[test]
    fn second_derivative_matches_differenced_force() {
        let p = mw();
        for x in [
            [5.0, 1.0, 0.3],
            [-20.0, 7.0, 4.0],
            [120.0, -80.0, 60.0],
            [0.7, 0.2, -0.1],
            [3.0, 0.0, 0.0],
            [0.0, 0.0, 8.0],
        ] {
            let x: [f64; 3] = x;
            let r = (x[0] * x[0] + x[1] * x[1] + x[2] * x[2]).sqrt();
            let u = [x[0] / r, x[1] / r, x[2] / r];
            let h = 1e-4 * r;
            let g = |s: f64| {
                let a = p.accel([u[0] * s, u[1] * s, u[2] * s]);
                a[0] * u[0] + a[1] * u[1] + a[2] * u[2]
            };
            let fd = -(g(r + h) - g(r - h)) / (2.0 * h);
            let (m, d2) = p.tidal_terms(x);
            assert!((d2 / fd - 1.0).abs() < 1e-6, "{x:?}: {d2} vs {fd}");
            assert!((m / p.mass_enclosed(r) - 1.0).abs() < 1e-14);
        }
    }

    /// Poisson's equation for the NFW + bulge part and dark energy: Laplacian of Phi =
    /// 4 pi G rho - 3 k (dark energy as a uniform background of density rho_de (1 + 3w),
    /// Phi = -k r^2/2).
    #[test]
    fn laplacian_is_density_for_spherical_parts() {
        let mut p = mw();
        p.m_disc = 0.0;
        p.m_bulge = 0.0;
        for r in [2.0, 15.0, 90.0] {
            let x = [r / 3f64.sqrt(); 3];
            let h = 1e-3 * r;
            let mut lap = 0.0;
            for k in 0..3 {
                let mut xp = x;
                let mut xm = x;
                xp[k] += h;
                xm[k] -= h;
                lap += (p.phi(xp) - 2.0 * p.phi(x) + p.phi(xm)) / (h * h);
            }
            let want = 4.0 * PI * G * p.halo_density(r) - 3.0 * p.de_k;
            assert!((lap / want - 1.0).abs() < 1e-4, "r={r}: {lap} vs {want}");
        }
    }
}
