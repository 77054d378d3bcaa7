//! Painting galaxies on subhaloes: stellar mass at peak mass and the time of the peak
//! (by default the relation evaluated at the redshift of the peak, as Behroozi et al. 2013
//! define it for satellites; `smhm_epoch = "today"` reads the relation at the hosts' final redshift instead),
//! log-normal scatter from the host's galaxy stream, occupation, V-band magnitude and
//! observability today.

use rand::Rng;
use rand_distr::{Distribution, StandardNormal};

use super::observability::SurveyOptions;
use super::stellar_stripping::kept_star_fraction;
use super::{absolute_mv, GalaxyOptions};
use crate::cosmology::Cosmology;
use crate::orbits::tidal_track::rmax_ratio;
use crate::orbits::SubhaloResult;

/// A galaxy on one subhalo.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GalaxyRecord {
    /// Whether the halo hosts a galaxy at all.
    pub occupied: bool,
    /// Stellar mass today (Msun), after tidal stripping of stars; 0 when not occupied.
    pub mstar_msun: f64,
    /// Stellar mass it formed (Msun; the relation at the peak mass, with scatter), before any
    /// stars were stripped; 0 when not occupied.
    pub mstar_peak_msun: f64,
    /// Absolute V magnitude (NaN when not occupied).
    pub m_v: f64,
    /// Heliocentric distance today (kpc; NaN if disrupted).
    pub d_helio_kpc: f64,
    /// Detectable by the configured survey today.
    pub observable: bool,
}

/// Paint every subhalo. Draws, in order for each subhalo: one normal (stellar-mass scatter),
/// one uniform (occupation) and one normal (size scatter), so the stream stays aligned
/// whatever the options. A surviving galaxy keeps the fraction of its stars that the tidal
/// stripping of its subhalo leaves (`stellar_stripping`; `GalaxyOptions::strip_stars`).
/// `z_final`: the hosts' final redshift ("today" of `smhm_epoch`).
pub fn paint<R: Rng>(
    cosmo: &Cosmology,
    z_final: f64,
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
            let h: f64 = StandardNormal.sample(rng);
            let z_peak = cosmo.z_at_age(s.t_peak_gyr);
            let occupied = u < options.occupied_probability(
                s.m_peak_msun,
                s.m_reion_msun,
                s.vmax_infall_kms,
                m_cool,
            );
            let log_ms = options.log10_mstar_of_peak(cosmo, s.m_peak_msun, z_peak, z_final)
                + options.scatter_at(s.m_peak_msun) * g;
            let alive = s.status.alive() && s.pos_kpc[0].is_finite();
            let formed = if occupied { 10f64.powf(log_ms) } else { 0.0 };
            let x = s.m_bound_msun / s.m_infall_msun;
            let kept = if occupied && alive && options.strip_stars && x < 1.0 {
                let rmax0 = s.rmax_kpc / rmax_ratio(x);
                let r_half = options.half_mass_radius_kpc(cosmo, s.m_peak_msun, z_peak)
                    * 10f64.powf(options.size_scatter_dex * h);
                kept_star_fraction(r_half / rmax0, x)
            } else {
                1.0
            };
            let mstar = formed * kept;
            let m_v = if occupied && mstar > 0.0 {
                absolute_mv(mstar, options.mass_to_light_v)
            } else {
                f64::NAN
            };
            let d = if alive {
                survey.helio(s.pos_kpc).0
            } else {
                f64::NAN
            };
            GalaxyRecord {
                occupied,
                mstar_msun: mstar,
                mstar_peak_msun: formed,
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
