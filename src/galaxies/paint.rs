//! Painting galaxies on subhaloes: stellar mass at peak mass and the time of the peak
//! (by default the relation evaluated at the redshift of the peak, as Behroozi et al. 2013
//! define it for satellites; `smhm_epoch = "today"` reads the z = 0 relation instead),
//! log-normal scatter from the host's galaxy stream, occupation, V-band magnitude and
//! observability today.

use rand::Rng;
use rand_distr::{Distribution, StandardNormal};

use super::observability::SurveyOptions;
use super::{absolute_mv, GalaxyOptions};
use crate::cosmology::Cosmology;
use crate::orbits::SubhaloResult;

/// A galaxy on one subhalo.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GalaxyRecord {
    /// Whether the halo hosts a galaxy at all.
    pub occupied: bool,
    /// Stellar mass (Msun); 0 when not occupied.
    pub mstar_msun: f64,
    /// Absolute V magnitude (NaN when not occupied).
    pub m_v: f64,
    /// Heliocentric distance today (kpc; NaN if disrupted).
    pub d_helio_kpc: f64,
    /// Detectable by the configured survey today.
    pub observable: bool,
}

/// Paint every subhalo. Draws, in order for each subhalo: one normal (scatter) and one
/// uniform (occupation), so the stream stays aligned whatever the options.
pub fn paint<R: Rng>(
    cosmo: &Cosmology,
    options: &GalaxyOptions,
    survey: &SurveyOptions,
    subhaloes: &[SubhaloResult],
    rng: &mut R,
) -> Vec<GalaxyRecord> {
    let m_cool = options.reionization_mass_msun(cosmo);
    subhaloes
        .iter()
        .map(|s| {
            let g: f64 = StandardNormal.sample(rng);
            let u: f64 = rng.random();
            let z_peak = cosmo.z_at_age(s.t_peak_gyr);
            let occupied = u < options.occupied_probability(
                s.m_peak_msun,
                s.m_reion_msun,
                s.vmax_infall_kms,
                m_cool,
            );
            let log_ms = options.log10_mstar_of_peak(cosmo, s.m_peak_msun, z_peak)
                + options.scatter_at(s.m_peak_msun) * g;
            let mstar = if occupied { 10f64.powf(log_ms) } else { 0.0 };
            let m_v = if occupied {
                absolute_mv(mstar, options.mass_to_light_v)
            } else {
                f64::NAN
            };
            let alive = s.status.alive() && s.pos_kpc[0].is_finite();
            let d = if alive {
                survey.helio(s.pos_kpc).0
            } else {
                f64::NAN
            };
            GalaxyRecord {
                occupied,
                mstar_msun: mstar,
                m_v,
                d_helio_kpc: d,
                observable: alive && occupied && survey.observable(s.pos_kpc, m_v),
            }
        })
        .collect()
}

/// Virial halo mass (Msun) whose median stellar mass at z equals `mstar_msun` (bisection on
/// the monotonic median relation); for pre-processing thresholds given in stellar mass.
pub fn halo_mass_for_mstar(
    cosmo: &Cosmology,
    options: &GalaxyOptions,
    mstar_msun: f64,
    z: f64,
) -> f64 {
    let target = mstar_msun.log10();
    let (mut a, mut b) = (4.0f64, 16.0f64);
    for _ in 0..80 {
        let m = 0.5 * (a + b);
        if options.log10_mstar_median(cosmo, 10f64.powf(m), z) < target {
            a = m;
        } else {
            b = m;
        }
    }
    10f64.powf(0.5 * (a + b))
}
