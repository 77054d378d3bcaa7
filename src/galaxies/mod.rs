//! Galaxies on haloes: stellar-mass–halo-mass relations (one file per published relation), a
//! dwarf-scale extension with scatter, occupation, luminosity and observability.

pub mod behroozi13;
pub mod moster13;
pub mod observability;
pub mod paint;

use serde::{Deserialize, Serialize};

use crate::cosmology::Cosmology;
use crate::error::InvalidValue;
use crate::halo::concentration::{c_of_m, ConcentrationModel};
use crate::halo::definitions::convert_nfw;
use crate::halo::MassDefinition;

pub use paint::{paint, GalaxyRecord};

/// Which stellar-mass–halo-mass relation.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
pub enum SmhmModel {
    /// Behroozi, Wechsler & Conroy 2013 (virial peak mass).
    #[default]
    #[serde(rename = "behroozi13")]
    Behroozi13,
    /// Moster, Naab & White 2013 (M200c).
    #[serde(rename = "moster13")]
    Moster13,
}

impl SmhmModel {
    pub const NAMES: &'static [&'static str] = &["behroozi13", "moster13"];

    /// The highest redshift the relation was fitted to.
    pub fn z_max(self) -> f64 {
        match self {
            SmhmModel::Behroozi13 => 8.0,
            SmhmModel::Moster13 => 4.0,
        }
    }

    pub fn parse(s: &str) -> Option<Self> {
        match s.trim().to_ascii_lowercase().as_str() {
            "behroozi13" => Some(Self::Behroozi13),
            "moster13" => Some(Self::Moster13),
            _ => None,
        }
    }
}

/// Which haloes host a galaxy.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
pub enum Occupation {
    /// f = [1 + erf((log M_peak - log M_50)/(sqrt(2) sigma))]/2 (the form of Nadler et al.
    /// 2020, ApJ 893, 48).
    #[default]
    #[serde(rename = "erf")]
    Erf,
    /// Every halo hosts a galaxy.
    #[serde(rename = "all")]
    All,
}

/// The stellar-mass–halo-mass model with its dwarf extension and scatter.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct GalaxyOptions {
    pub smhm: SmhmModel,
    /// Below this peak mass (Msun, virial) the relation turns into a power law.
    pub dwarf_pivot_msun: f64,
    /// Asymptotic logarithmic slope d log M* / d log M_peak of the dwarf power law.
    pub dwarf_slope: f64,
    /// Width (dex) over which the slope changes from the relation's to `dwarf_slope`.
    pub dwarf_transition_dex: f64,
    /// Log-normal scatter in M* at and above the pivot, dex.
    pub scatter_dex: f64,
    /// Growth of the scatter per dex below the pivot (0 = constant), dex/dex.
    pub scatter_growth: f64,
    /// Largest scatter allowed, dex.
    pub scatter_max_dex: f64,
    /// Occupation: erf (Nadler et al. 2020 form) or all.
    pub occupation: Occupation,
    /// Peak mass at which half the haloes host a galaxy, Msun.
    pub occupation_m50_msun: f64,
    /// Width of the occupation transition, dex.
    pub occupation_sigma_dex: f64,
    /// Stellar V-band mass-to-light ratio, Msun/Lsun.
    pub mass_to_light_v: f64,
}

impl Default for GalaxyOptions {
    fn default() -> Self {
        Self {
            smhm: SmhmModel::Behroozi13,
            dwarf_pivot_msun: 1e11,
            dwarf_slope: 1.9,
            dwarf_transition_dex: 0.5,
            scatter_dex: 0.2,
            scatter_growth: 0.0,
            scatter_max_dex: 1.0,
            occupation: Occupation::Erf,
            occupation_m50_msun: 10f64.powf(7.5),
            occupation_sigma_dex: 0.25,
            mass_to_light_v: 2.0,
        }
    }
}

impl GalaxyOptions {
    pub fn problems(&self, prefix: &str) -> Vec<InvalidValue> {
        let mut ck = crate::error::Checker::new(prefix);
        ck.num(
            "dwarf_pivot_msun",
            self.dwarf_pivot_msun,
            (1e8..=1e13).contains(&self.dwarf_pivot_msun),
            "must be in [1e8, 1e13] Msun",
        );
        ck.num(
            "dwarf_slope",
            self.dwarf_slope,
            (0.5..=5.0).contains(&self.dwarf_slope),
            "must be in [0.5, 5]",
        );
        ck.num(
            "dwarf_transition_dex",
            self.dwarf_transition_dex,
            self.dwarf_transition_dex > 0.0 && self.dwarf_transition_dex <= 3.0,
            "must be in (0, 3] dex",
        );
        ck.num(
            "scatter_dex",
            self.scatter_dex,
            (0.0..=1.5).contains(&self.scatter_dex),
            "must be in [0, 1.5] dex",
        );
        ck.num(
            "scatter_growth",
            self.scatter_growth,
            (0.0..=2.0).contains(&self.scatter_growth),
            "must be in [0, 2] dex per dex",
        );
        ck.num(
            "scatter_max_dex",
            self.scatter_max_dex,
            self.scatter_max_dex >= self.scatter_dex && self.scatter_max_dex <= 3.0,
            "must be in [scatter_dex, 3] dex",
        );
        ck.num(
            "occupation_m50_msun",
            self.occupation_m50_msun,
            (1e5..=1e12).contains(&self.occupation_m50_msun),
            "must be in [1e5, 1e12] Msun",
        );
        ck.num(
            "occupation_sigma_dex",
            self.occupation_sigma_dex,
            self.occupation_sigma_dex > 0.0 && self.occupation_sigma_dex <= 2.0,
            "must be in (0, 2] dex",
        );
        ck.num(
            "mass_to_light_v",
            self.mass_to_light_v,
            self.mass_to_light_v > 0.0 && self.mass_to_light_v <= 20.0,
            "must be in (0, 20] Msun/Lsun",
        );
        ck.problems
    }

    /// Median log10 M* of the published relation alone, for a virial peak mass at z. Each
    /// relation is evaluated within the redshifts it was fitted to: at min(z, z_max), with
    /// z_max = 8 for Behroozi et al. 2013 (their data reach z = 8) and 4 for Moster et al. 2013
    /// (stellar mass functions up to z = 4); beyond, the relation's own redshift terms are
    /// extrapolations (at z = 8-10 Behroozi's gives about 1.2 dex more stellar mass for a
    /// dwarf's peak mass).
    pub fn log10_mstar_relation(&self, cosmo: &Cosmology, m_vir_msun: f64, z: f64) -> f64 {
        let z = z.min(self.smhm.z_max());
        match self.smhm {
            SmhmModel::Behroozi13 => behroozi13::log10_mstar(m_vir_msun, z),
            SmhmModel::Moster13 => {
                let c = c_of_m(
                    ConcentrationModel::DuttonMaccio14,
                    cosmo,
                    m_vir_msun,
                    z,
                    MassDefinition::Vir,
                );
                let m200 = convert_nfw(
                    cosmo,
                    m_vir_msun,
                    c,
                    z,
                    MassDefinition::Vir,
                    MassDefinition::C200,
                )
                .0;
                moster13::log10_mstar(m200, z)
            }
        }
    }

    /// Median log10 M* with the dwarf extension: above the pivot the relation; below it
    /// log M* = log M*_p + s (x - x_p) + (s_p - s) w (exp((x - x_p)/w) - 1), x = log M, so value
    /// and slope are continuous at the pivot and the slope tends to `dwarf_slope` (our form).
    pub fn log10_mstar_median(&self, cosmo: &Cosmology, m_vir_msun: f64, z: f64) -> f64 {
        let xp = self.dwarf_pivot_msun.log10();
        let x = m_vir_msun.log10();
        if x >= xp {
            return self.log10_mstar_relation(cosmo, m_vir_msun, z);
        }
        let yp = self.log10_mstar_relation(cosmo, self.dwarf_pivot_msun, z);
        let h = 0.01;
        let sp = (self.log10_mstar_relation(cosmo, 10f64.powf(xp + h), z)
            - self.log10_mstar_relation(cosmo, 10f64.powf(xp - h), z))
            / (2.0 * h);
        let (s, w) = (self.dwarf_slope, self.dwarf_transition_dex);
        yp + s * (x - xp) + (sp - s) * w * (((x - xp) / w).exp() - 1.0)
    }

    /// Scatter (dex) at a virial peak mass.
    pub fn scatter_at(&self, m_vir_msun: f64) -> f64 {
        let below = (self.dwarf_pivot_msun.log10() - m_vir_msun.log10()).max(0.0);
        (self.scatter_dex + self.scatter_growth * below).min(self.scatter_max_dex)
    }

    /// Fraction of haloes of this peak mass that host a galaxy.
    pub fn occupation_fraction(&self, m_peak_msun: f64) -> f64 {
        if self.occupation == Occupation::All {
            return 1.0;
        }
        let u = (m_peak_msun.log10() - self.occupation_m50_msun.log10())
            / (std::f64::consts::SQRT_2 * self.occupation_sigma_dex);
        0.5 * (1.0 + crate::special::erf(u))
    }

    /// A warning when the merger trees' resolution cuts into the haloes that host galaxies:
    /// when more than 2% of haloes at the resolution mass host one (two widths of the erf
    /// occupation above its M50, or every halo with `occupation = "all"`), galaxies in the
    /// unresolved haloes are missing and counts of the faintest satellites depend on the
    /// resolution. Names the resolution, the occupied fraction there and the magnitude below
    /// which satellites are incomplete (the median galaxy of a halo at the resolution today).
    pub fn resolution_warning(&self, cosmo: &Cosmology, resolution_msun: f64) -> Option<String> {
        let f = self.occupation_fraction(resolution_msun);
        if f <= 0.02 {
            return None;
        }
        let mv = absolute_mv(
            10f64.powf(self.log10_mstar_median(cosmo, resolution_msun, 0.0)),
            self.mass_to_light_v,
        );
        Some(format!(
            "trees.resolution_msun = {resolution_msun:.3e} Msun: {:.0}% of haloes of that peak mass \
             host a galaxy (galaxies.occupation), so galaxies in unresolved haloes are missing; \
             satellites fainter than about M_V = {mv:.1} (the median galaxy of a halo at the \
             resolution) are incomplete and their counts depend on the resolution (lower \
             trees.resolution_msun below {:.1e} Msun, where 2% are occupied, to avoid it)",
            100.0 * f,
            self.resolution_for_occupation(0.02),
        ))
    }

    /// The peak mass at which the occupied fraction is f (erf occupation; 0 for "all").
    pub fn resolution_for_occupation(&self, f: f64) -> f64 {
        if self.occupation == Occupation::All {
            return 0.0;
        }
        // bisection in log M on the monotone erf
        let (mut lo, mut hi) = (0.0f64, 16.0f64);
        for _ in 0..100 {
            let mid = 0.5 * (lo + hi);
            if self.occupation_fraction(10f64.powf(mid)) < f {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        10f64.powf(0.5 * (lo + hi))
    }
}

/// Absolute V magnitude of the Sun (Willmer 2018, ApJS 236, 47, gives 4.81; 4.83 is the value in
/// common use for V — common practice).
pub const M_V_SUN: f64 = 4.83;

/// Absolute V magnitude of a population of stellar mass M* with V-band mass-to-light ratio.
pub fn absolute_mv(mstar_msun: f64, mass_to_light_v: f64) -> f64 {
    M_V_SUN - 2.5 * (mstar_msun / mass_to_light_v).log10()
}
