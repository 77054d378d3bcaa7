//! Backsplash haloes: among haloes of a given mass in a shell around the host today, the
//! fraction that were once inside the host (Gill, Knebe & Gibson 2005 definition, with the
//! host's evolving virial radius as the boundary).
//!
//! Backsplash counts come from the orbits (subhaloes outside R_vir today that were inside).
//! Field counts come from the Mo & White 1996 mass function of the region around the host
//! (comoving radius and non-linear overdensity configurable), spread uniformly over the
//! region's volume and counted in the shell — a linear-theory estimate that ignores the
//! host's own exclusion zone and the infall-region profile, reported as such.

use serde::{Deserialize, Serialize};

use crate::error::InvalidValue;
use crate::linear::LinearTheory;
use crate::massfunction::Region;

#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct BacksplashOptions {
    /// Peak-mass range of the haloes counted, Msun.
    pub m_peak_msun: [f64; 2],
    /// Shell in units of the host's R_vir today.
    pub shell_over_rvir: [f64; 2],
    /// Radius (comoving Mpc) and non-linear matter overdensity of the region around the host
    /// (default: a Local-Group-like region, 5e12 Msun within 1.5 Mpc, our stated scenario).
    pub region_radius_mpc: f64,
    pub region_mass_msun: f64,
}

impl Default for BacksplashOptions {
    fn default() -> Self {
        Self {
            m_peak_msun: [1e8, 1e10],
            shell_over_rvir: [1.0, 3.0],
            region_radius_mpc: 1.5,
            region_mass_msun: 5e12,
        }
    }
}

impl BacksplashOptions {
    pub fn problems(&self, prefix: &str) -> Vec<InvalidValue> {
        let mut out = Vec::new();
        let mut pair = |k: &str, r: [f64; 2]| {
            if !(r[0] > 0.0 && r[0] < r[1] && r[1].is_finite()) {
                out.push(InvalidValue::new(
                    format!("{prefix}{k}"),
                    format!("[{}, {}]", r[0], r[1]),
                    "must be an increasing pair of positive numbers",
                ));
            }
        };
        pair("m_peak_msun", self.m_peak_msun);
        pair("shell_over_rvir", self.shell_over_rvir);
        if !(self.region_radius_mpc > 0.05 && self.region_radius_mpc <= 50.0) {
            out.push(InvalidValue::new(
                format!("{prefix}region_radius_mpc"),
                self.region_radius_mpc,
                "must be in (0.05, 50] Mpc",
            ));
        }
        if !(self.region_mass_msun > 0.0 && self.region_mass_msun.is_finite()) {
            out.push(InvalidValue::new(
                format!("{prefix}region_mass_msun"),
                self.region_mass_msun,
                "must be a positive mass in Msun",
            ));
        }
        out
    }

    /// Non-linear overdensity of the region: M / (rho_m V) - 1.
    pub fn region_delta(&self, lt: &LinearTheory) -> f64 {
        let v = 4.0 * std::f64::consts::PI / 3.0 * self.region_radius_mpc.powi(3);
        self.region_mass_msun / (lt.rho_m0_msun_mpc3() * v) - 1.0
    }

    /// Expected number of field haloes in the shell (comoving; z = 0) around a host of virial
    /// radius r_vir_kpc.
    pub fn field_count(&self, lt: &LinearTheory, r_vir_kpc: f64) -> f64 {
        self.field_density_mpc3(lt) * self.shell_volume_mpc3(r_vir_kpc)
    }

    /// Mean number density (comoving Mpc^-3) of field haloes in the peak-mass range inside
    /// the region, from the Mo & White 1996 mass function of the region. The same for every
    /// host of a cosmology: compute it once and scale by `shell_volume_mpc3`.
    pub fn field_density_mpc3(&self, lt: &LinearTheory) -> f64 {
        let delta = self.region_delta(lt).max(-0.99);
        let region = Region::new(lt, self.region_radius_mpc, delta, 0.0);
        let n = region.n_between(self.m_peak_msun[0], self.m_peak_msun[1]);
        let v_region = 4.0 * std::f64::consts::PI / 3.0 * self.region_radius_mpc.powi(3);
        n / v_region
    }

    /// Volume (comoving Mpc^3) of the shell around a host of virial radius r_vir_kpc, cut at
    /// the region's radius.
    pub fn shell_volume_mpc3(&self, r_vir_kpc: f64) -> f64 {
        let (r1, r2) = (
            self.shell_over_rvir[0] * r_vir_kpc * 1e-3,
            (self.shell_over_rvir[1] * r_vir_kpc * 1e-3).min(self.region_radius_mpc),
        );
        4.0 * std::f64::consts::PI / 3.0 * (r2.powi(3) - r1.powi(3)).max(0.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::{Cosmology, LinearOptions};

    /// The expected field count is the region's Mo & White 1996 count (validated against the
    /// unconditional mass function in tests/validation) per unit volume times the shell's
    /// volume: 4 pi/3 (r2^3 - r1^3) with r = shell x R_vir, cut at the region's radius.
    #[test]
    fn field_count_is_density_times_shell_volume() {
        let lt = LinearTheory::new(
            Cosmology::from_preset("planck18").unwrap(),
            LinearOptions::default(),
        )
        .unwrap();
        let b = BacksplashOptions::default(); // shell 1-3 R_vir, region 1.5 Mpc of 5e12 Msun
        let region = Region::new(&lt, 1.5, b.region_delta(&lt), 0.0);
        let n = region.n_between(1e8, 1e10);
        let v_region = 4.0 * std::f64::consts::PI / 3.0 * 1.5f64.powi(3);
        // R_vir = 250 kpc: shell from 0.25 to 0.75 Mpc
        let v_shell = 4.0 * std::f64::consts::PI / 3.0 * (0.75f64.powi(3) - 0.25f64.powi(3));
        let want = n / v_region * v_shell;
        assert!(want > 0.0);
        assert!((b.field_count(&lt, 250.0) / want - 1.0).abs() < 1e-12);
        // R_vir = 600 kpc: the outer edge (1.8 Mpc) is cut at the region's 1.5 Mpc
        let v_cut = 4.0 * std::f64::consts::PI / 3.0 * (1.5f64.powi(3) - 0.6f64.powi(3));
        assert!((b.field_count(&lt, 600.0) / (n / v_region * v_cut) - 1.0).abs() < 1e-12);
    }
}
