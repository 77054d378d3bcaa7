//! Galaxies on haloes: stellar-mass–halo-mass relations (one file per published relation), a
//! dwarf-scale extension with scatter, occupation, luminosity and observability.

pub mod behroozi13;
pub mod moster13;
pub mod observability;
pub mod paint;
pub mod reionization;
pub mod stellar_stripping;

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

/// At which redshift the stellar-mass–halo-mass relation is read for a halo's peak mass.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
pub enum SmhmEpoch {
    /// At the redshift of the peak mass (capped at the relation's highest fitted redshift,
    /// `SmhmModel::z_max`): the stellar mass a central of that mass had then, kept since.
    #[default]
    #[serde(rename = "peak")]
    Peak,
    /// At z = 0 for every halo: the present-day relation applied to the peak mass.
    #[serde(rename = "today")]
    Today,
}

/// Which haloes host a galaxy.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
pub enum Occupation {
    /// f = [1 + erf((log M_peak - log M_50)/(sqrt(2) sigma))]/2 (the form of Nadler et al.
    /// 2020, ApJ 893, 48).
    #[serde(rename = "erf")]
    Erf,
    /// Every halo hosts a galaxy.
    #[serde(rename = "all")]
    All,
    /// Judged at reionisation (`reionization`): the main progenitor had reached the
    /// atomic-cooling mass by `reionization_z`, or the halo's V_max at infall exceeds
    /// `reionization_vmax_kms`.
    #[default]
    #[serde(rename = "reionization")]
    Reionization,
}

/// The stellar-mass–halo-mass model with its dwarf extension and scatter.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct GalaxyOptions {
    pub smhm: SmhmModel,
    /// The redshift the relation is read at: the peak's (default) or today's.
    pub smhm_epoch: SmhmEpoch,
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
    /// Occupation: reionization (default), erf (Nadler et al. 2020 form) or all.
    pub occupation: Occupation,
    /// Peak mass at which half the haloes host a galaxy, Msun.
    pub occupation_m50_msun: f64,
    /// Width of the occupation transition, dex.
    pub occupation_sigma_dex: f64,
    /// Redshift of reionisation (the `reionization` occupation; the mass of every branch
    /// then is stored as `m_reion_msun`).
    pub reionization_z: f64,
    /// Virial temperature (K) a halo must have reached by `reionization_z` to have cooled
    /// gas by atomic hydrogen (mean molecular weight of neutral gas, 1.22).
    pub reionization_t_vir_k: f64,
    /// V_max (km/s) above which a halo keeps gas after reionisation.
    pub reionization_vmax_kms: f64,
    /// Width (dex in mass) of the atomic-cooling threshold (a third of it in log V_max for
    /// the filtering velocity).
    pub reionization_sigma_dex: f64,
    /// Stellar V-band mass-to-light ratio, Msun/Lsun.
    pub mass_to_light_v: f64,
    /// Whether tides strip stars as well as dark matter (`stellar_stripping`: Errani et al.
    /// 2022). Off, every surviving satellite keeps the stellar mass it formed.
    pub strip_stars: bool,
    /// 3D half-mass radius of a galaxy over its halo's R_200c at the peak mass (Kravtsov 2013:
    /// 0.015); sets how deeply its stars sit in the subhalo.
    pub size_to_r200c: f64,
    /// Log-normal scatter of that size, dex (Kravtsov 2013: about 0.2).
    pub size_scatter_dex: f64,
}

impl Default for GalaxyOptions {
    fn default() -> Self {
        Self {
            smhm: SmhmModel::Behroozi13,
            smhm_epoch: SmhmEpoch::Peak,
            dwarf_pivot_msun: 1e11,
            dwarf_slope: 1.9,
            dwarf_transition_dex: 0.5,
            scatter_dex: 0.2,
            scatter_growth: 0.0,
            scatter_max_dex: 1.0,
            occupation: Occupation::Reionization,
            occupation_m50_msun: 10f64.powf(7.5),
            occupation_sigma_dex: 0.25,
            reionization_z: 7.7,
            reionization_t_vir_k: 1e4,
            reionization_vmax_kms: 25.0,
            reionization_sigma_dex: 0.04,
            mass_to_light_v: 2.0,
            strip_stars: true,
            size_to_r200c: 0.015,
            size_scatter_dex: 0.2,
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
            "reionization_z",
            self.reionization_z,
            (3.0..=20.0).contains(&self.reionization_z),
            "must be in [3, 20]",
        );
        ck.num(
            "reionization_t_vir_k",
            self.reionization_t_vir_k,
            (1e3..=1e6).contains(&self.reionization_t_vir_k),
            "must be in [1e3, 1e6] K",
        );
        ck.num(
            "reionization_vmax_kms",
            self.reionization_vmax_kms,
            (1.0..=200.0).contains(&self.reionization_vmax_kms),
            "must be in [1, 200] km/s",
        );
        ck.num(
            "reionization_sigma_dex",
            self.reionization_sigma_dex,
            self.reionization_sigma_dex > 0.0 && self.reionization_sigma_dex <= 1.0,
            "must be in (0, 1] dex",
        );
        ck.num(
            "mass_to_light_v",
            self.mass_to_light_v,
            self.mass_to_light_v > 0.0 && self.mass_to_light_v <= 20.0,
            "must be in (0, 20] Msun/Lsun",
        );
        ck.num(
            "size_to_r200c",
            self.size_to_r200c,
            self.size_to_r200c > 0.0 && self.size_to_r200c <= 0.2,
            "must be in (0, 0.2]",
        );
        ck.num(
            "size_scatter_dex",
            self.size_scatter_dex,
            (0.0..=1.0).contains(&self.size_scatter_dex),
            "must be in [0, 1] dex",
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
        let z_rel = z.min(self.smhm.z_max());
        match self.smhm {
            SmhmModel::Behroozi13 => behroozi13::log10_mstar(m_vir_msun, z_rel),
            // the halo's M_200c at its own redshift; only the relation is held (review: the
            // conversion was done at the capped redshift, under 1% off beyond z = 4)
            SmhmModel::Moster13 => moster13::log10_mstar(m200c_of_vir(cosmo, m_vir_msun, z), z_rel),
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

    /// Median log10 M* of a halo whose peak mass `m_peak_msun` was reached at `z_peak`, at
    /// the redshift `smhm_epoch` chooses: the peak's, or "today", the hosts' final redshift
    /// `z_final` (review: it read z = 0 for hosts that end at z_final > 0).
    pub fn log10_mstar_of_peak(
        &self,
        cosmo: &Cosmology,
        m_peak_msun: f64,
        z_peak: f64,
        z_final: f64,
    ) -> f64 {
        let z = match self.smhm_epoch {
            SmhmEpoch::Peak => z_peak,
            SmhmEpoch::Today => z_final,
        };
        self.log10_mstar_median(cosmo, m_peak_msun, z)
    }

    /// Median 3D half-mass radius (kpc) of the galaxy of a halo of virial mass `m_vir_msun` at
    /// z: `size_to_r200c` R_200c (Kravtsov 2013), R_200c from the virial mass with the Dutton
    /// & Maccio 2014 concentration (held at z = 5 beyond the fit's range).
    pub fn half_mass_radius_kpc(&self, cosmo: &Cosmology, m_vir_msun: f64, z: f64) -> f64 {
        let m200 = m200c_of_vir(cosmo, m_vir_msun, z);
        self.size_to_r200c * MassDefinition::C200.radius_kpc(cosmo, m200, z)
    }

    /// Scatter (dex) at a virial peak mass.
    pub fn scatter_at(&self, m_vir_msun: f64) -> f64 {
        let below = (self.dwarf_pivot_msun.log10() - m_vir_msun.log10()).max(0.0);
        (self.scatter_dex + self.scatter_growth * below).min(self.scatter_max_dex)
    }

    /// The atomic-cooling mass (Msun) at `reionization_z` (`reionization`).
    pub fn reionization_mass_msun(&self, cosmo: &Cosmology) -> f64 {
        reionization::mass_for_virial_temperature(
            cosmo,
            self.reionization_t_vir_k,
            self.reionization_z,
            reionization::MU_NEUTRAL,
        )
    }

    /// Probability that a halo hosts a galaxy: by its peak mass (erf, all), or by its main
    /// progenitor's mass at reionisation and its V_max at infall (reionization; `m_cool` from
    /// `reionization_mass_msun`).
    pub fn occupied_probability(
        &self,
        m_peak_msun: f64,
        m_reion_msun: f64,
        vmax_kms: f64,
        m_cool_msun: f64,
    ) -> f64 {
        match self.occupation {
            Occupation::Reionization => reionization::occupied_probability(
                m_reion_msun,
                m_cool_msun,
                vmax_kms,
                self.reionization_vmax_kms,
                self.reionization_sigma_dex,
            ),
            _ => self.occupation_fraction(m_peak_msun),
        }
    }

    /// Fraction of haloes of this peak mass that host a galaxy (erf or all; for
    /// `reionization` the erf with its mass threshold at peak mass is not used:
    /// `occupied_probability`).
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
        if self.occupation == Occupation::Reionization {
            // a branch below the resolution at the reionisation redshift is not in the tree
            // then: its galaxy is missing if it would have reached the cooling mass
            let m_cool = self.reionization_mass_msun(cosmo);
            let f = self.occupied_probability(0.0, resolution_msun, 0.0, m_cool);
            if f <= 0.02 {
                return None;
            }
            let m_ok = m_cool * 10f64.powf(-2.054 * self.reionization_sigma_dex);
            return Some(format!(
                "trees.resolution_msun = {resolution_msun:.3e} Msun: {:.0}% of haloes of that \
                 mass at the reionisation redshift z = {} host a galaxy (galaxies.occupation = \
                 \"reionization\", atomic-cooling mass {m_cool:.2e} Msun), so galaxies of \
                 haloes unresolved then are missing and the faintest counts depend on the \
                 resolution (lower trees.resolution_msun below {m_ok:.1e} Msun, where 2% are \
                 occupied, to avoid it)",
                100.0 * f,
                self.reionization_z
            ));
        }
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

/// M_200c (Msun) of an NFW halo of virial mass `m_vir_msun` at z, with the Dutton & Maccio 2014
/// concentration (held at z = 5 beyond the fit's range): for the relations and sizes given in
/// R_200c terms.
fn m200c_of_vir(cosmo: &Cosmology, m_vir_msun: f64, z: f64) -> f64 {
    let c = c_of_m(
        ConcentrationModel::DuttonMaccio14,
        cosmo,
        m_vir_msun,
        z,
        MassDefinition::Vir,
    );
    convert_nfw(
        cosmo,
        m_vir_msun,
        c,
        z,
        MassDefinition::Vir,
        MassDefinition::C200,
    )
    .0
}

/// Absolute V magnitude of the Sun (Willmer 2018, ApJS 236, 47, gives 4.81; 4.83 is the value in
/// common use for V — common practice).
pub const M_V_SUN: f64 = 4.83;

/// Absolute V magnitude of a population of stellar mass M* with V-band mass-to-light ratio.
pub fn absolute_mv(mstar_msun: f64, mass_to_light_v: f64) -> f64 {
    M_V_SUN - 2.5 * (mstar_msun / mass_to_light_v).log10()
}
