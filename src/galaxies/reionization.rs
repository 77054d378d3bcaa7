//! Which haloes could form stars, judged at reionisation: the occupation of
//! `occupation = "reionization"`.
//!
//! * Before reionisation, gas cools by atomic hydrogen only in haloes whose virial
//!   temperature exceeds about 10^4 K (the atomic-cooling limit). The virial temperature of a
//!   halo of virial mass M at z is T_vir = mu m_p V_c^2 / (2 k_B), V_c^2 = G M / R_vir
//!   (Barkana & Loeb 2001, Phys. Rep. 349, 125, eq. 26, which writes it as
//!   T_vir = 1.98e4 K (mu/0.6) (M / 1e8 h^-1 Msun)^(2/3) [Omega_m Delta_c / (Omega_m^z 18 pi^2)]^(1/3)
//!   ((1+z)/10)), with mu = 1.22 for neutral primordial gas (same paper) and R_vir from
//!   Bryan & Norman 1998's Delta_c, as everywhere in this crate.
//! * After reionisation the photo-heated gas is kept out of small haloes: only haloes with
//!   circular velocities above about 25 km/s keep half their baryons (Okamoto, Gao & Theuns
//!   2008, MNRAS 390, 920: a characteristic mass that "corresponds to a circular velocity of
//!   25 km/s"; recalled values in other studies reach 30 km/s).
//! * So a halo hosts a galaxy if its main progenitor had reached the atomic-cooling mass by
//!   the reionisation redshift, or if it later grew a V_max above the filtering velocity
//!   (the filtering-mass picture of Gnedin 2000, ApJ 542, 535, with these two thresholds). Each
//!   threshold is smoothed by an error function of width `reionization_sigma_dex` in log mass
//!   (a third of it in log V_max, since M scales as V^3), for the scatter of real haloes about
//!   them: P = 1 - (1 - P_mass)(1 - P_vmax).

use crate::cosmology::Cosmology;
use crate::halo::MassDefinition;

/// Proton mass (kg), CODATA 2018.
const M_P_KG: f64 = 1.672_621_923_69e-27;
/// Boltzmann constant (J/K), exact in the 2019 SI.
const K_B_J_PER_K: f64 = 1.380_649e-23;
/// Mean molecular weight of neutral primordial gas (Barkana & Loeb 2001).
pub const MU_NEUTRAL: f64 = 1.22;

/// Virial temperature (K) of a halo of virial mass m (Msun) at z with mean molecular weight mu.
pub fn virial_temperature_k(cosmo: &Cosmology, m_msun: f64, z: f64, mu: f64) -> f64 {
    use crate::constants::G_KPC_KMS2_PER_MSUN as G;
    let r = MassDefinition::Vir.radius_kpc(cosmo, m_msun, z);
    let v2_kms = G * m_msun / r;
    mu * M_P_KG * v2_kms * 1e6 / (2.0 * K_B_J_PER_K)
}

/// The virial mass (Msun) with virial temperature `t_k` at z (mu as above): T_vir scales as
/// M^(2/3) at fixed z, so one evaluation fixes it.
pub fn mass_for_virial_temperature(cosmo: &Cosmology, t_k: f64, z: f64, mu: f64) -> f64 {
    let m1 = 1e8;
    m1 * (t_k / virial_temperature_k(cosmo, m1, z, mu)).powf(1.5)
}

/// The standard normal distribution function of u / sigma (an error-function step).
#[inline]
fn step(u: f64, sigma: f64) -> f64 {
    0.5 * (1.0 + crate::special::erf(u / (std::f64::consts::SQRT_2 * sigma)))
}

/// Probability that a halo hosts a galaxy: its main progenitor's mass `m_reion_msun` at the
/// reionisation redshift against the atomic-cooling mass `m_cool_msun` there, or its V_max
/// `vmax_kms` against the filtering velocity `v_filter_kms`; `sigma_dex` the width in log mass.
pub fn occupied_probability(
    m_reion_msun: f64,
    m_cool_msun: f64,
    vmax_kms: f64,
    v_filter_kms: f64,
    sigma_dex: f64,
) -> f64 {
    let p_mass = if m_reion_msun > 0.0 {
        step((m_reion_msun / m_cool_msun).log10(), sigma_dex)
    } else {
        0.0
    };
    let p_v = if vmax_kms > 0.0 {
        step((vmax_kms / v_filter_kms).log10(), sigma_dex / 3.0)
    } else {
        0.0
    };
    1.0 - (1.0 - p_mass) * (1.0 - p_v)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The virial temperature against Barkana & Loeb 2001, eq. 26, evaluated here with the
    /// same Bryan & Norman Delta_c: agreement to the rounding of their 1.98e4 K.
    #[test]
    fn virial_temperature_matches_barkana_loeb_eq26() {
        let c = Cosmology::from_preset("planck18").unwrap();
        let h = c.h();
        for &(m, z, mu) in &[(1e8, 9.0, 0.6), (3e7, 7.7, 1.22), (1e10, 3.0, 0.6)] {
            let om_z = c.omega_m_z(z);
            let d = om_z - 1.0;
            let pi2 = std::f64::consts::PI.powi(2);
            let delta_c = 18.0 * pi2 + 82.0 * d - 39.0 * d * d;
            let bl = 1.98e4
                * (mu / 0.6)
                * (m * h / 1e8).powf(2.0 / 3.0)
                * (c.omega_m_z(0.0) / om_z * delta_c / (18.0 * pi2)).powf(1.0 / 3.0)
                * ((1.0 + z) / 10.0);
            let ours = virial_temperature_k(&c, m, z, mu);
            assert!((ours / bl - 1.0).abs() < 0.01, "{m} {z}: {ours} vs {bl}");
            let back = mass_for_virial_temperature(&c, ours, z, mu);
            assert!((back / m - 1.0).abs() < 1e-12);
        }
    }

    #[test]
    fn probability_limits() {
        assert!(occupied_probability(1e10, 4e7, 5.0, 25.0, 0.2) > 0.999);
        assert!(occupied_probability(1e6, 4e7, 5.0, 25.0, 0.2) < 1e-6);
        assert!(occupied_probability(0.0, 4e7, 60.0, 25.0, 0.2) > 0.999);
        assert!((occupied_probability(4e7, 4e7, 1.0, 25.0, 0.2) - 0.5).abs() < 1e-7);
    }
}
