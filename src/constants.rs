//! Physical constants and unit conversions, each with its source.
//!
//! Internal units: M_sun, kpc, km/s, Gyr (cosmic time since the Big Bang). Comoving
//! linear-theory quantities use Mpc (no h). `h` appears only in cosmological parameters
//! and in functions whose names say so.

/// Newton's constant in kpc (km/s)^2 / M_sun. Value as used by colossus 1.4.0
/// (`constants.G`), consistent with the IAU 2015 nominal GM_sun.
pub const G_KPC_KMS2_PER_MSUN: f64 = 4.300_917_270e-6;

/// 1 km/s expressed in kpc/Gyr (1 kpc = 3.085677581e16 km, 1 Gyr = 3.15576e16 s, Julian year).
pub const KMS_IN_KPC_PER_GYR: f64 = 1.022_712_165;

/// Hubble time 1/H0 in Gyr for H0 = 1 km/s/Mpc: (1 Mpc / 1 km) / (1 Gyr in s).
/// 977.7922216807891 Gyr (colossus 1.4.0 uses the same conversion).
pub const HUBBLE_TIME_GYR_FOR_H0_1: f64 = 977.792_221_680_789_1;

/// Critical density today per h^2, M_sun / kpc^3: 3 (100 km/s/Mpc)^2 / (8 pi G).
/// 277.536627 h^2 M_sun/kpc^3 (colossus 1.4.0 `constants.RHO_CRIT_0_KPC3`).
pub const RHO_CRIT0_MSUN_KPC3_PER_H2: f64 = 277.536_627;

/// Same in M_sun / Mpc^3 per h^2.
pub const RHO_CRIT0_MSUN_MPC3_PER_H2: f64 = 2.775_366_27e11;

/// Photon density parameter times h^2 per T_cmb^4 (T in K): Omega_gamma h^2 = 4.4814665e-7 T^4,
/// i.e. 4 sigma_SB T^4 / c^3 / rho_crit,100 (the constant colossus 1.4.0 uses in
/// `Cosmology.Ogamma0`, printed in tests/reference/background.json).
pub const OMEGA_GAMMA_H2_PER_T4: f64 = 4.481_466_501_363_648e-7;

/// Energy density of one massless neutrino species relative to photons: (7/8)(4/11)^(4/3).
pub const NEUTRINO_PER_PHOTON: f64 = 0.227_107_317_660_239_4;

/// Linear collapse threshold in an Einstein–de Sitter universe, (3/20)(12 pi)^(2/3).
pub const DELTA_C_EDS: f64 = 1.686_470_199_841_145;

/// G in kpc^3 / (Msun Gyr^2): G_KPC_KMS2_PER_MSUN * KMS_IN_KPC_PER_GYR^2. Orbits are
/// integrated in kpc, kpc/Gyr and Gyr.
pub const G_KPC3_PER_MSUN_GYR2: f64 = G_KPC_KMS2_PER_MSUN * KMS_IN_KPC_PER_GYR * KMS_IN_KPC_PER_GYR;

/// Kiloparsecs per megaparsec.
pub const KPC_PER_MPC: f64 = 1.0e3;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn delta_c_eds_is_the_closed_form() {
        // (3/20)(12 pi)^(2/3), Peebles 1980, sec. 19 (spherical collapse).
        let v = 0.15 * (12.0 * std::f64::consts::PI).powf(2.0 / 3.0);
        assert!((v - DELTA_C_EDS).abs() < 1e-14);
    }

    #[test]
    fn rho_crit_from_g() {
        // 3 H^2 / (8 pi G) with H = 100 km/s/Mpc = 0.1 km/s/kpc.
        let rho = 3.0 * 0.1f64.powi(2) / (8.0 * std::f64::consts::PI * G_KPC_KMS2_PER_MSUN);
        assert!((rho / RHO_CRIT0_MSUN_KPC3_PER_H2 - 1.0).abs() < 1e-6);
    }

    #[test]
    fn neutrino_ratio() {
        let v = 7.0 / 8.0 * (4.0f64 / 11.0).powf(4.0 / 3.0);
        assert!((v - NEUTRINO_PER_PHOTON).abs() < 1e-15);
    }
}
