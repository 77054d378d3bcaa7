//! One pair's draw: the partner's mass, today's separation and relative velocity, and the
//! orientation of the pair in the primary's frame (whose z axis is the primary's disc axis).

use rand::Rng;
use rand_distr::{Distribution, StandardNormal};

use crate::config::{PairSpec, PartnerMass};
use crate::constants::KMS_IN_KPC_PER_GYR as KMS;
use crate::orbits::integrate::Vec3;

/// A pair today.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PairGeometry {
    /// The partner's mass, Msun, in the configuration's mass definition.
    pub partner_mass_msun: f64,
    pub separation_kpc: f64,
    /// Relative radial velocity (negative: approaching), km/s.
    pub radial_velocity_kms: f64,
    /// Relative tangential speed, km/s (>= 0).
    pub tangential_velocity_kms: f64,
    /// Unit vector from the primary to the partner.
    pub direction: Vec3,
    /// Unit vector of the tangential velocity (perpendicular to `direction`).
    pub tangential_direction: Vec3,
}

/// Redraws of a separation below the sum of the virial radii before giving up.
const MAX_REDRAWS: usize = 1000;

impl PairGeometry {
    /// Draw a pair for a primary of mass `primary_msun` (configuration's definition).
    /// `min_separation(partner_msun)` is the sum of the two virial radii (kpc) today: a
    /// separation at or below it is drawn again. Draw order (fixed: reproducibility): partner
    /// mass, then separation (and its redraws), radial velocity, tangential speed, direction,
    /// tangential direction.
    pub fn draw<R: Rng, F: Fn(f64) -> f64>(
        spec: &PairSpec,
        primary_msun: f64,
        min_separation: F,
        rng: &mut R,
    ) -> Result<Self, String> {
        let mut normal = || -> f64 { StandardNormal.sample(rng) };
        let m0 = match spec.partner_mass {
            PartnerMass::Msun(m) => m,
            PartnerMass::Ratio(q) => q * primary_msun,
        };
        let partner = m0 * 10f64.powf(spec.partner_mass_scatter_dex * normal());
        let d_min = min_separation(partner);
        let mut sep = f64::NAN;
        for _ in 0..MAX_REDRAWS {
            let d = spec.separation_kpc + spec.separation_scatter_kpc * normal();
            if d > d_min {
                sep = d;
                break;
            }
        }
        if !sep.is_finite() {
            return Err(format!(
                "environment: no separation above the sum of the virial radii ({d_min:.0} kpc) \
                 in {MAX_REDRAWS} draws from separation_kpc = {} +- {} kpc; raise \
                 separation_kpc",
                spec.separation_kpc, spec.separation_scatter_kpc
            ));
        }
        let vr = spec.radial_velocity_kms + spec.radial_velocity_scatter_kms * normal();
        let vt =
            (spec.tangential_velocity_kms + spec.tangential_velocity_scatter_kms * normal()).abs();
        // isotropic direction: a normalised Gaussian vector
        let n = unit([normal(), normal(), normal()]);
        // tangential direction: uniform in the plane perpendicular to n
        let a = if n[0].abs() < 0.9 {
            [1.0, 0.0, 0.0]
        } else {
            [0.0, 1.0, 0.0]
        };
        let e1 = unit(cross(n, a));
        let e2 = cross(n, e1);
        let phi = std::f64::consts::TAU * rng.random::<f64>();
        let (s, c) = phi.sin_cos();
        let t = [
            c * e1[0] + s * e2[0],
            c * e1[1] + s * e2[1],
            c * e1[2] + s * e2[2],
        ];
        Ok(Self {
            partner_mass_msun: partner,
            separation_kpc: sep,
            radial_velocity_kms: vr,
            tangential_velocity_kms: vt,
            direction: n,
            tangential_direction: t,
        })
    }

    /// The partner's position (kpc) and velocity (kpc/Gyr) relative to the primary today.
    pub fn relative_state(&self) -> (Vec3, Vec3) {
        let (n, t) = (self.direction, self.tangential_direction);
        let x = n.map(|c| c * self.separation_kpc);
        let vr = self.radial_velocity_kms * KMS;
        let vt = self.tangential_velocity_kms * KMS;
        let v = [
            vr * n[0] + vt * t[0],
            vr * n[1] + vt * t[1],
            vr * n[2] + vt * t[2],
        ];
        (x, v)
    }
}

fn cross(a: Vec3, b: Vec3) -> Vec3 {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}

fn unit(a: Vec3) -> Vec3 {
    let n = (a[0] * a[0] + a[1] * a[1] + a[2] * a[2]).sqrt();
    a.map(|c| c / n)
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;

    fn spec() -> PairSpec {
        PairSpec {
            partner_mass: PartnerMass::Ratio(1.0),
            partner_mass_scatter_dex: 0.2,
            separation_kpc: 800.0,
            separation_scatter_kpc: 300.0,
            radial_velocity_kms: -100.0,
            radial_velocity_scatter_kms: 20.0,
            tangential_velocity_kms: 50.0,
            tangential_velocity_scatter_kms: 30.0,
            region_radius_kpc: 1500.0,
        }
    }

    /// The state today has the drawn separation, radial velocity and tangential speed, and
    /// every separation clears the virial radii.
    #[test]
    fn state_matches_the_draw() {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(5);
        for _ in 0..200 {
            let g = PairGeometry::draw(&spec(), 1.2e12, |_| 600.0, &mut rng).unwrap();
            assert!(g.separation_kpc > 600.0);
            let (x, v) = g.relative_state();
            let r = (x[0] * x[0] + x[1] * x[1] + x[2] * x[2]).sqrt();
            assert!((r - g.separation_kpc).abs() < 1e-9 * r);
            let vr = (x[0] * v[0] + x[1] * v[1] + x[2] * v[2]) / r / KMS;
            assert!((vr - g.radial_velocity_kms).abs() < 1e-9);
            let v2 = (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]) / (KMS * KMS);
            let vt = (v2 - vr * vr).max(0.0).sqrt();
            assert!((vt - g.tangential_velocity_kms).abs() < 1e-6);
        }
    }

    /// The mean of the direction's z component over many draws is zero within its sampling
    /// error (isotropy: <n_z> = 0 with variance 1/3 per draw, so 4 sigma at n = 4000 is
    /// 4 sqrt(1/3/4000) = 0.037), and <n_z^2> = 1/3 (variance of n_z^2 is 4/45: 4 sigma 0.019).
    #[test]
    fn directions_are_isotropic() {
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(11);
        let n = 4000;
        let (mut s1, mut s2) = (0.0, 0.0);
        for _ in 0..n {
            let g = PairGeometry::draw(&spec(), 1.2e12, |_| 0.0, &mut rng).unwrap();
            s1 += g.direction[2];
            s2 += g.direction[2] * g.direction[2];
        }
        assert!((s1 / n as f64).abs() < 0.037, "{}", s1 / n as f64);
        assert!(
            (s2 / n as f64 - 1.0 / 3.0).abs() < 0.019,
            "{}",
            s2 / n as f64
        );
    }

    /// A separation that can never clear the virial radii is an error naming the key.
    #[test]
    fn impossible_separation_is_refused() {
        let mut s = spec();
        s.separation_scatter_kpc = 0.0;
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(1);
        let e = PairGeometry::draw(&s, 1.2e12, |_| 900.0, &mut rng).unwrap_err();
        assert!(e.contains("separation_kpc"), "{e}");
    }
}
