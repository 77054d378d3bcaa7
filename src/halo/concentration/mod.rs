//! Concentration–mass relations, one file per published relation. Masses in physical Msun
//! (relations quoted in Msun/h are converted inside with the cosmology's h).

pub mod duffy08;
pub mod dutton_maccio14;
pub mod zhao09;

use serde::{Deserialize, Serialize};

use super::MassDefinition;
use crate::cosmology::Cosmology;

/// Which concentration model.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
pub enum ConcentrationModel {
    /// From the host's own accretion history (Zhao et al. 2009), for tree hosts.
    #[default]
    #[serde(rename = "zhao09")]
    Zhao09,
    #[serde(rename = "duffy08")]
    Duffy08,
    #[serde(rename = "dutton14")]
    DuttonMaccio14,
}

impl ConcentrationModel {
    pub const NAMES: &'static [&'static str] = &["zhao09", "duffy08", "dutton14"];

    pub fn parse(s: &str) -> Option<Self> {
        match s.trim().to_ascii_lowercase().as_str() {
            "zhao09" => Some(Self::Zhao09),
            "duffy08" => Some(Self::Duffy08),
            "dutton14" => Some(Self::DuttonMaccio14),
            _ => None,
        }
    }
}

/// Concentration from a c(M, z) relation (Duffy08 or Dutton & Maccio 2014) in the
/// relation's native definition when available; for other definitions the mass is first
/// converted (NFW) from the native `200c`.
pub fn c_of_m(
    model: ConcentrationModel,
    cosmo: &Cosmology,
    m_msun: f64,
    z: f64,
    mdef: MassDefinition,
) -> f64 {
    let h = cosmo.h();
    match model {
        ConcentrationModel::Duffy08 => match mdef {
            MassDefinition::C200 | MassDefinition::Vir | MassDefinition::M200 => {
                duffy08::concentration(m_msun * h, z, mdef).expect("native definition")
            }
            MassDefinition::C500 => from_200c(cosmo, m_msun, z, mdef, |m| {
                duffy08::concentration(m * h, z, MassDefinition::C200).unwrap()
            }),
        },
        ConcentrationModel::DuttonMaccio14 | ConcentrationModel::Zhao09 => match mdef {
            MassDefinition::C200 | MassDefinition::Vir => {
                dutton_maccio14::concentration(m_msun * h, z, mdef).expect("native definition")
            }
            _ => from_200c(cosmo, m_msun, z, mdef, |m| {
                dutton_maccio14::concentration(m * h, z, MassDefinition::C200).unwrap()
            }),
        },
    }
}

/// Solve for the 200c mass whose converted mass equals m in `mdef` (fixed point).
fn from_200c(
    cosmo: &Cosmology,
    m_msun: f64,
    z: f64,
    mdef: MassDefinition,
    c200: impl Fn(f64) -> f64,
) -> f64 {
    let mut m200 = m_msun;
    let mut c_out = c200(m200);
    for _ in 0..30 {
        let c = c200(m200);
        let (m2, c2) =
            super::definitions::convert_nfw(cosmo, m200, c, z, MassDefinition::C200, mdef);
        c_out = c2;
        let next = m200 * m_msun / m2;
        if (next / m200 - 1.0).abs() < 1e-12 {
            break;
        }
        m200 = next;
    }
    c_out
}
