//! Spherical collapse: the linear collapse threshold delta_c and the virial overdensity.

use serde::{Deserialize, Serialize};

use crate::constants::DELTA_C_EDS;
use crate::cosmology::Cosmology;

/// How delta_c depends on time.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
pub enum DeltaCModel {
    /// The Einstein–de Sitter constant (3/20)(12 pi)^(2/3) = 1.68647 at every z.
    #[default]
    #[serde(rename = "constant")]
    Constant,
    /// delta_c = 0.15 (12 pi)^(2/3) Omega_m(z)^0.0055 (Navarro, Frenk & White 1997,
    /// ApJ 490, 493, appendix; flat Lambda CDM).
    #[serde(rename = "nfw97")]
    Nfw97,
}

impl DeltaCModel {
    pub const NAMES: &'static [&'static str] = &["constant", "nfw97"];

    pub fn parse(s: &str) -> Option<Self> {
        match s.trim().to_ascii_lowercase().as_str() {
            "constant" | "eds" => Some(Self::Constant),
            "nfw97" => Some(Self::Nfw97),
            _ => None,
        }
    }
}

/// delta_c(z) with the weak Omega_m dependence (NFW97 appendix).
pub fn delta_c_nfw97(omega_m_z: f64) -> f64 {
    DELTA_C_EDS * omega_m_z.powf(0.0055)
}

/// delta_c at z for a model.
pub fn delta_c(model: DeltaCModel, cosmo: &Cosmology, z: f64) -> f64 {
    match model {
        DeltaCModel::Constant => DELTA_C_EDS,
        DeltaCModel::Nfw97 => delta_c_nfw97(cosmo.omega_m_z(z)),
    }
}

/// Virial overdensity with respect to the critical density, Bryan & Norman 1998 (ApJ 495,
/// 80, eq. 6): 18 pi^2 + 82 x - 39 x^2 with x = Omega_m(z) - 1 when dark energy is present;
/// 18 pi^2 + 60 x - 32 x^2 for an open universe without dark energy. (For curved models
/// with dark energy the flat form is used; BN98 give no other.)
pub fn delta_vir_crit(cosmo: &Cosmology, z: f64) -> f64 {
    let x = cosmo.omega_m_z(z) - 1.0;
    let a = 18.0 * std::f64::consts::PI * std::f64::consts::PI;
    if cosmo.background().omega_de0() > 0.0 {
        a + 82.0 * x - 39.0 * x * x
    } else {
        a + 60.0 * x - 32.0 * x * x
    }
}
