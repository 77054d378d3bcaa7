//! What a survey would see: heliocentric distances and the luminosity-dependent completeness
//! radius of a wide-field survey.
//!
//! * Sun: galactocentric distance R0 = 8.178 kpc (GRAVITY Collaboration 2019, A&A 625, L10),
//!   20.8 pc above the disc plane (Bennett & Bovy 2019, MNRAS 482, 1417), placed at
//!   (-R0, 0, z_sun) in the host frame (disc in the x-y plane).
//! * Completeness: R_comp(M_V) = 10^(-a M_V - b) Mpc with (a, b) = (0.205, 1.72)
//!   (Tollerud et al. 2008, ApJ 688, 277, eq. 2, built on the detection limits of Koposov et
//!   al. 2008; recalled from memory, physics reference sheet sec. 11).
//! * Footprint: a cap around the north Galactic pole covering the survey's sky fraction f:
//!   sin(b) > 1 - 2 f, b the heliocentric Galactic latitude (our idealisation of a
//!   high-latitude survey; f = 1 is the whole sky).

use serde::{Deserialize, Serialize};

use crate::error::InvalidValue;

/// Survey and observer settings.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct SurveyOptions {
    pub sun_r0_kpc: f64,
    pub sun_z_kpc: f64,
    /// (a, b) of R_comp = 10^(-a M_V - b) Mpc.
    pub completeness_a: f64,
    pub completeness_b: f64,
    /// Fraction of the sky covered.
    pub sky_fraction: f64,
}

impl Default for SurveyOptions {
    fn default() -> Self {
        Self {
            sun_r0_kpc: 8.178,
            sun_z_kpc: 0.0208,
            completeness_a: 0.205,
            completeness_b: 1.72,
            sky_fraction: 1.0,
        }
    }
}

impl SurveyOptions {
    pub fn problems(&self, prefix: &str) -> Vec<InvalidValue> {
        let mut ck = crate::error::Checker::new(prefix);
        ck.num(
            "sun_r0_kpc",
            self.sun_r0_kpc,
            (0.0..=30.0).contains(&self.sun_r0_kpc),
            "must be in [0, 30] kpc",
        );
        ck.num(
            "sun_z_kpc",
            self.sun_z_kpc,
            self.sun_z_kpc.abs() <= 1.0,
            "must be in [-1, 1] kpc",
        );
        ck.num(
            "completeness_a",
            self.completeness_a,
            self.completeness_a > 0.0 && self.completeness_a <= 1.0,
            "must be in (0, 1]",
        );
        ck.num(
            "completeness_b",
            self.completeness_b,
            self.completeness_b.abs() <= 10.0,
            "must be in [-10, 10]",
        );
        ck.num(
            "sky_fraction",
            self.sky_fraction,
            self.sky_fraction > 0.0 && self.sky_fraction <= 1.0,
            "must be in (0, 1]",
        );
        ck.problems
    }

    /// Sun's position in the host frame, kpc.
    pub fn sun(&self) -> [f64; 3] {
        [-self.sun_r0_kpc, 0.0, self.sun_z_kpc]
    }

    /// Heliocentric distance (kpc) and sin(Galactic latitude) of a galactocentric position.
    pub fn helio(&self, x: [f64; 3]) -> (f64, f64) {
        let s = self.sun();
        let d = [x[0] - s[0], x[1] - s[1], x[2] - s[2]];
        let r = (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt();
        (r, if r > 0.0 { d[2] / r } else { 0.0 })
    }

    /// Completeness radius for absolute magnitude M_V, kpc.
    pub fn completeness_radius_kpc(&self, m_v: f64) -> f64 {
        1e3 * 10f64.powf(-self.completeness_a * m_v - self.completeness_b)
    }

    /// Whether a satellite at x (kpc) with absolute magnitude M_V would be detected.
    pub fn observable(&self, x: [f64; 3], m_v: f64) -> bool {
        let (d, sin_b) = self.helio(x);
        d < self.completeness_radius_kpc(m_v) && sin_b > 1.0 - 2.0 * self.sky_fraction
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Completeness radii for (a, b) = (0.205, 1.72): M_V = 0, -2, -4, -6, -8 ->
    /// 19.1, 49.0, 125.9, 323.6, 831.8 kpc (physics reference sheet, formula evaluation),
    /// printed to 0.1 kpc: tolerance 0.05 kpc.
    #[test]
    fn val_completeness_radius() {
        let s = SurveyOptions::default();
        for (mv, want) in [
            (0.0, 19.1),
            (-2.0, 49.0),
            (-4.0, 125.9),
            (-6.0, 323.6),
            (-8.0, 831.8),
        ] {
            let r = s.completeness_radius_kpc(mv);
            assert!((r - want).abs() <= 0.05 + 1e-9, "{mv}: {r}");
        }
    }

    /// Heliocentric distance of an isotropic satellite: d^2 = r^2 + R0^2 - 2 r R0 cos(theta)
    /// (law of cosines; physics reference sheet sec. 11), the Sun in the plane here.
    #[test]
    fn heliocentric_distance_law_of_cosines() {
        let s = SurveyOptions {
            sun_z_kpc: 0.0,
            ..Default::default()
        };
        let x = [30.0, 40.0, 0.0];
        let r: f64 = 50.0;
        let cos_t = -30.0 / 50.0; // angle between x and the Sun's direction (-1, 0, 0)
        let want = (r * r + s.sun_r0_kpc.powi(2) - 2.0 * r * s.sun_r0_kpc * cos_t).sqrt();
        assert!((s.helio(x).0 - want).abs() < 1e-12);
    }

    /// The footprint cap covers the stated sky fraction of isotropic directions (Monte Carlo,
    /// 200,000 directions: binomial error 1e-3; tolerance 5e-3).
    #[test]
    fn footprint_covers_its_fraction() {
        use rand::SeedableRng;
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(1);
        for f in [0.194, 0.5, 1.0] {
            let s = SurveyOptions {
                sky_fraction: f,
                sun_r0_kpc: 0.0,
                sun_z_kpc: 0.0,
                ..Default::default()
            };
            let n = 200_000;
            let inside = (0..n)
                .filter(|_| {
                    let u = crate::orbits::initial::random_unit(&mut rng);
                    s.observable([u[0] * 10.0, u[1] * 10.0, u[2] * 10.0], -20.0)
                })
                .count();
            assert!(
                (inside as f64 / n as f64 - f).abs() < 5e-3,
                "{f}: {}",
                inside as f64 / n as f64
            );
        }
    }
}
