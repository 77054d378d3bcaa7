//! Concentration–mass relations, one file per published relation. Masses in physical Msun
//! (relations quoted in Msun/h are converted inside with the cosmology's h). Under warm dark
//! matter, `concentration` and `wdm_factor` apply the cosmology's WDM suppression
//! (`WdmConcentration`, Bose et al. 2016) to the cold-dark-matter relations.

pub mod bose16;
pub mod duffy08;
pub mod dutton_maccio14;
pub mod zhao09;

use serde::{Deserialize, Serialize};

use super::definitions::convert_nfw;
use super::MassDefinition;
use crate::cosmology::Cosmology;
use crate::linear::LinearTheory;

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

    /// The highest redshift the c(M, z) fit was calibrated to (Duffy et al. 2008: 2; Dutton
    /// & Maccio 2014: 5, which also serves hosts without a Zhao et al. 2009 history).
    /// `c_of_m` evaluates the fit at min(z, z_max), the rule the stellar-mass-halo-mass
    /// relation follows: extrapolated, Dutton & Maccio 2014's mass slope turns positive
    /// above z = 4 and gave 1e8 Msun haloes c_vir = 0.87 at z = 10 and 0.28 at z = 15,
    /// where colossus 1.4.0's diemer19 and ludlow16 models give 2.7-3.5 (found by a review
    /// on 2026-12-04; a third of all accretions fall into their parent at z > 5).
    pub fn z_max(self) -> f64 {
        match self {
            Self::Duffy08 => 2.0,
            Self::DuttonMaccio14 | Self::Zhao09 => 5.0,
        }
    }

    pub fn parse(s: &str) -> Option<Self> {
        match s.trim().to_ascii_lowercase().as_str() {
            "zhao09" => Some(Self::Zhao09),
            "duffy08" => Some(Self::Duffy08),
            "dutton14" => Some(Self::DuttonMaccio14),
            _ => None,
        }
    }
}

/// How warm dark matter changes halo concentrations (the `[cosmology]` key
/// `wdm_concentration`; used only when the cosmology has a WDM particle mass).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
pub enum WdmConcentration {
    /// c_WDM = c_CDM x the fit of Bose et al. 2016 (eq. 17) to the COCO simulations.
    #[default]
    #[serde(rename = "bose16")]
    Bose16,
    /// Cold-dark-matter concentrations (only the trees feel the WDM power spectrum).
    #[serde(rename = "none")]
    None,
}

impl WdmConcentration {
    pub const NAMES: &'static [&'static str] = &["bose16", "none"];

    pub fn parse(s: &str) -> Option<Self> {
        match s.trim().to_ascii_lowercase().as_str() {
            "bose16" => Some(Self::Bose16),
            "none" => Some(Self::None),
            _ => None,
        }
    }
}

/// c_WDM / c_CDM for a halo of mass `m_msun` (definition `mdef`) whose cold-dark-matter
/// concentration is `c_cdm`, at z: 1 for cold dark matter or `wdm_concentration = "none"`.
/// Bose et al. 2016 fitted M_200 (critical), so a mass in another definition is first
/// converted to 200c (NFW, with `c_cdm`); the fit is then evaluated with the half-mode mass
/// of the cosmology's WDM transfer function (`bose16::ratio`, which holds its redshift term at
/// z = 3 beyond and caps the ratio at 1).
pub fn wdm_factor(lt: &LinearTheory, m_msun: f64, c_cdm: f64, z: f64, mdef: MassDefinition) -> f64 {
    match (lt.options().wdm_concentration, lt.m_half_mode_msun()) {
        (WdmConcentration::Bose16, Some(m_hm)) => {
            let m200 = convert_nfw(lt.cosmology(), m_msun, c_cdm, z, mdef, MassDefinition::C200).0;
            bose16::ratio(m200, m_hm, z)
        }
        _ => 1.0,
    }
}

/// Concentration of a halo of mass `m_msun` (definition `mdef`) at z in the cosmology of
/// `lt`: the c(M, z) relation `model` (`c_of_m`) times the warm-dark-matter factor
/// (`wdm_factor`; exactly `c_of_m` for cold dark matter).
pub fn concentration(
    lt: &LinearTheory,
    model: ConcentrationModel,
    m_msun: f64,
    z: f64,
    mdef: MassDefinition,
) -> f64 {
    let c = c_of_m(model, lt.cosmology(), m_msun, z, mdef);
    c * wdm_factor(lt, m_msun, c, z, mdef)
}

/// Concentration from a cold-dark-matter c(M, z) relation (Duffy08 or Dutton & Maccio 2014)
/// in the relation's native definition when available; for other definitions the mass is
/// first converted (NFW) from the native `200c`. The fit is evaluated at min(z, z_max)
/// (`ConcentrationModel::z_max`, its calibrated range); the mass definition's radius and
/// the conversion stay at z. `concentration` adds the WDM factor.
pub fn c_of_m(
    model: ConcentrationModel,
    cosmo: &Cosmology,
    m_msun: f64,
    z: f64,
    mdef: MassDefinition,
) -> f64 {
    let h = cosmo.h();
    let z_fit = z.min(model.z_max());
    match model {
        ConcentrationModel::Duffy08 => match mdef {
            MassDefinition::C200 | MassDefinition::Vir | MassDefinition::M200 => {
                duffy08::concentration(m_msun * h, z_fit, mdef).expect("native definition")
            }
            MassDefinition::C500 => from_200c(cosmo, m_msun, z, mdef, |m| {
                duffy08::concentration(m * h, z_fit, MassDefinition::C200).unwrap()
            }),
        },
        ConcentrationModel::DuttonMaccio14 | ConcentrationModel::Zhao09 => match mdef {
            MassDefinition::C200 | MassDefinition::Vir => {
                dutton_maccio14::concentration(m_msun * h, z_fit, mdef).expect("native definition")
            }
            _ => from_200c(cosmo, m_msun, z, mdef, |m| {
                dutton_maccio14::concentration(m * h, z_fit, MassDefinition::C200).unwrap()
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
        let (m2, c2) = convert_nfw(cosmo, m200, c, z, MassDefinition::C200, mdef);
        c_out = c2;
        let next = m200 * m_msun / m2;
        if (next / m200 - 1.0).abs() < 1e-12 {
            break;
        }
        m200 = next;
    }
    c_out
}
