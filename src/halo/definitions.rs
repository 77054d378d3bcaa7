//! Spherical-overdensity mass definitions: M_Delta = (4 pi/3) Delta rho_ref(z) R_Delta^3 with
//! rho_ref = rho_crit(z) (`vir` with Delta = Delta_vir of Bryan & Norman 1998; `200c`) or the
//! mean matter density (`200m`). Conversions between definitions for an NFW profile: solve
//! m(c')/c'^3 = (rho'/rho) m(c)/c^3 for c' = R'/r_s (Brent-style bisection on ln c'), then
//! M' = M m(c')/m(c) (e.g. Hu & Kravtsov 2003, ApJ 584, 702, sec. 2).

use std::f64::consts::PI;

use serde::{Deserialize, Serialize};

use super::nfw::mu;
use crate::cosmology::Cosmology;
use crate::linear::delta_vir_crit;

/// A halo mass definition.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
pub enum MassDefinition {
    /// Bryan & Norman 1998 virial overdensity w.r.t. critical.
    #[default]
    #[serde(rename = "vir")]
    Vir,
    #[serde(rename = "200c")]
    C200,
    #[serde(rename = "200m")]
    M200,
    #[serde(rename = "500c")]
    C500,
}

impl MassDefinition {
    pub const NAMES: &'static [&'static str] = &["vir", "200c", "200m", "500c"];

    pub fn parse(s: &str) -> Option<Self> {
        match s.trim().to_ascii_lowercase().as_str() {
            "vir" => Some(Self::Vir),
            "200c" => Some(Self::C200),
            "200m" => Some(Self::M200),
            "500c" => Some(Self::C500),
            _ => None,
        }
    }

    pub fn name(self) -> &'static str {
        match self {
            Self::Vir => "vir",
            Self::C200 => "200c",
            Self::M200 => "200m",
            Self::C500 => "500c",
        }
    }

    /// Mean density inside R_Delta, physical Msun/kpc^3.
    pub fn density_threshold_msun_kpc3(self, cosmo: &Cosmology, z: f64) -> f64 {
        match self {
            Self::Vir => delta_vir_crit(cosmo, z) * cosmo.rho_crit_msun_kpc3(z),
            Self::C200 => 200.0 * cosmo.rho_crit_msun_kpc3(z),
            Self::C500 => 500.0 * cosmo.rho_crit_msun_kpc3(z),
            Self::M200 => 200.0 * cosmo.rho_m_msun_kpc3(z),
        }
    }

    /// R_Delta (physical kpc) of a halo of mass M_Delta (Msun) at z.
    pub fn radius_kpc(self, cosmo: &Cosmology, m_msun: f64, z: f64) -> f64 {
        (3.0 * m_msun / (4.0 * PI * self.density_threshold_msun_kpc3(cosmo, z))).cbrt()
    }

    /// Mass (Msun) inside R_Delta of radius r (kpc) at z.
    pub fn mass_msun(self, cosmo: &Cosmology, r_kpc: f64, z: f64) -> f64 {
        4.0 * PI / 3.0 * self.density_threshold_msun_kpc3(cosmo, z) * r_kpc.powi(3)
    }
}

/// Convert an NFW halo of mass `m_msun` and concentration `c` in definition `from` to
/// definition `to` at redshift z. Returns (mass Msun, concentration).
pub fn convert_nfw(
    cosmo: &Cosmology,
    m_msun: f64,
    c: f64,
    z: f64,
    from: MassDefinition,
    to: MassDefinition,
) -> (f64, f64) {
    if from == to {
        return (m_msun, c);
    }
    let ratio =
        to.density_threshold_msun_kpc3(cosmo, z) / from.density_threshold_msun_kpc3(cosmo, z);
    // m(c')/c'^3 = ratio m(c)/c^3; the left side decreases monotonically in c'
    let target = ratio * mu(c) / (c * c * c);
    let f = |lc: f64| {
        let x = lc.exp();
        (mu(x) / (x * x * x)).ln() - target.ln()
    };
    let (mut a, mut b) = ((c / 100.0).ln(), (c * 100.0).ln());
    for _ in 0..200 {
        let m = 0.5 * (a + b);
        if f(m) > 0.0 {
            a = m;
        } else {
            b = m;
        }
        if b - a < 1e-14 {
            break;
        }
    }
    let c2 = (0.5 * (a + b)).exp();
    (m_msun * mu(c2) / mu(c), c2)
}
