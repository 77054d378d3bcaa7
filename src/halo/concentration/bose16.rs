//! Warm-dark-matter suppression of halo concentrations: Bose et al. 2016 (MNRAS 455, 318,
//! arXiv:1507.01998, eq. 17), fitted to the COCO-WARM / COCO-COLD simulations:
//!
//! c_WDM / c_CDM = (1 + gamma1 M_hm / M)^(-gamma2) (1 + z)^beta(z),
//! gamma1 = 60, gamma2 = 0.17, beta(z) = 0.026 z - 0.04,
//!
//! with M the halo's mass (their M_200, critical) and M_hm the half-mode mass of the WDM
//! transfer function (where T_WDM/T_CDM = 1/2; `linear::WarmDarkMatter::m_half_mode_msun`).
//! The paper's text was not read here: the form and the four numbers are as implemented in
//! halomod 2.2.3 (`halomod.wdm.CMRelationWDMRescaled`: g1 = 60, g2 = 0.17, beta0 = 0.026,
//! beta1 = 0.04) and in an independent public script labelled "Eq. 17 of Bose et al. 2016"
//! (same numbers).
//!
//! Two limits are ours, not the paper's:
//! * the redshift term is evaluated at min(z, 3): the fit was made to the simulations'
//!   low-redshift outputs (range recalled as z <= 3-4, not re-read), and (1 + z)^beta(z)
//!   grows without bound beyond (1.69 at z = 10, 4.3 at z = 20);
//! * the ratio is capped at 1: for z > 1.54, beta(z) > 0 and the bare fit would make haloes
//!   far above M_hm (where WDM and CDM are the same) more concentrated than in CDM (by 5% at
//!   z = 3), which is the fit's residual, not a prediction.

/// gamma1 of Bose et al. 2016, eq. 17.
pub const GAMMA1: f64 = 60.0;
/// gamma2 of Bose et al. 2016, eq. 17.
pub const GAMMA2: f64 = 0.17;
/// beta(z) = BETA_SLOPE z + BETA_ZERO (Bose et al. 2016, eq. 17).
pub const BETA_SLOPE: f64 = 0.026;
pub const BETA_ZERO: f64 = -0.04;
/// Highest redshift at which the redshift term is evaluated (our limit, see the module doc).
pub const Z_MAX_FIT: f64 = 3.0;

/// The bare fit, c_WDM / c_CDM, at mass ratio M / M_hm and redshift z (no limits applied).
pub fn ratio_fit(m_over_m_hm: f64, z: f64) -> f64 {
    (1.0 + GAMMA1 / m_over_m_hm).powf(-GAMMA2) * (1.0 + z).powf(BETA_SLOPE * z + BETA_ZERO)
}

/// c_WDM / c_CDM as applied: the fit with its redshift term held at `Z_MAX_FIT` beyond it,
/// capped at 1. `m_msun` is the halo's 200c mass, `m_hm_msun` the half-mode mass (same unit).
pub fn ratio(m_msun: f64, m_hm_msun: f64, z: f64) -> f64 {
    ratio_fit(m_msun / m_hm_msun, z.clamp(0.0, Z_MAX_FIT)).min(1.0)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The formula at its simplest points: (1 + 60)^-0.17 = 0.49716 at M = M_hm, z = 0;
    /// (1 + 6)^-0.17 = 0.71835 at 10 M_hm; the redshift term 2^-0.014 = 0.99034 at z = 1 and
    /// 4^0.038 = 1.05409 at z = 3 (hand evaluation).
    #[test]
    fn formula_values() {
        assert!((ratio_fit(1.0, 0.0) - 61f64.powf(-0.17)).abs() < 1e-15);
        assert!((ratio_fit(1.0, 0.0) - 0.49716).abs() < 1e-5);
        assert!((ratio_fit(10.0, 0.0) - 0.71835).abs() < 1e-5);
        assert!((ratio_fit(1.0, 1.0) / ratio_fit(1.0, 0.0) - 0.99034).abs() < 1e-5);
        assert!((ratio_fit(1.0, 3.0) / ratio_fit(1.0, 0.0) - 1.05409).abs() < 1e-5);
    }

    /// The limits: never above 1; constant beyond Z_MAX_FIT; equal to the bare fit inside.
    #[test]
    fn limits() {
        assert_eq!(ratio(1e6, 1.0, 3.0), 1.0);
        assert!(ratio_fit(1e6, 3.0) > 1.0);
        assert_eq!(ratio(5.0, 1.0, 10.0), ratio(5.0, 1.0, 3.0));
        assert_eq!(ratio(5.0, 1.0, 0.7), ratio_fit(5.0, 0.7));
        // monotone in mass at fixed z
        let mut last = 0.0;
        for i in 0..60 {
            let r = ratio(10f64.powf(-2.0 + 0.1 * i as f64), 1.0, 0.5);
            assert!(r >= last);
            last = r;
        }
    }
}
