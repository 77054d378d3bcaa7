//! Warm dark matter: thermal-relic suppression of the CDM transfer function.
//!
//! T_WDM(k) = T_CDM(k) [1 + (alpha k)^(2 nu)]^(-5/nu), nu = 1.12,
//! alpha = 0.049 (m/keV)^-1.11 (Omega_WDM/0.25)^0.11 (h/0.7)^1.22 Mpc/h for a relic with
//! g_x = 1.5 (Viel et al. 2005, PRD 71, 063534, eq. 7), Omega_WDM = Omega_m - Omega_b.
//!
//! Half-mode scale (where T_WDM/T_CDM = 1/2, i.e. the power ratio is 1/4): Schneider et al.
//! 2012 (MNRAS 424, 684, eqs. 7-8): lambda_hm = 2 pi alpha (2^(nu/5) - 1)^(-1/(2 nu)),
//! M_hm = (4 pi/3) rho_m (lambda_hm / 2)^3.

use std::f64::consts::PI;

use crate::constants::RHO_CRIT0_MSUN_MPC3_PER_H2;

/// nu of Viel et al. 2005.
pub const VIEL05_NU: f64 = 1.12;

/// Thermal-relic WDM suppression.
#[derive(Debug, Clone, Copy)]
pub struct WarmDarkMatter {
    pub m_wdm_kev: f64,
    /// alpha in comoving Mpc (no h).
    pub alpha_mpc: f64,
    nu: f64,
    rho_m0_msun_mpc3: f64,
}

impl WarmDarkMatter {
    pub fn new(m_wdm_kev: f64, h: f64, omega_m: f64, omega_b: f64) -> Self {
        let omega_wdm = omega_m - omega_b;
        let alpha_mpc_h =
            0.049 * m_wdm_kev.powf(-1.11) * (omega_wdm / 0.25).powf(0.11) * (h / 0.7).powf(1.22);
        Self {
            m_wdm_kev,
            alpha_mpc: alpha_mpc_h / h,
            nu: VIEL05_NU,
            rho_m0_msun_mpc3: RHO_CRIT0_MSUN_MPC3_PER_H2 * h * h * omega_m,
        }
    }

    /// Ratio T_WDM / T_CDM at k in 1/Mpc.
    #[inline]
    pub fn suppression(&self, k_mpc: f64) -> f64 {
        (1.0 + (self.alpha_mpc * k_mpc).powf(2.0 * self.nu)).powf(-5.0 / self.nu)
    }

    /// Half-mode wavenumber, 1/Mpc (where the suppression is 1/2).
    pub fn k_half_mode_mpc(&self) -> f64 {
        (2f64.powf(self.nu / 5.0) - 1.0).powf(1.0 / (2.0 * self.nu)) / self.alpha_mpc
    }

    /// Half-mode length lambda_hm = 2 pi / k_hm, comoving Mpc.
    pub fn lambda_half_mode_mpc(&self) -> f64 {
        2.0 * PI / self.k_half_mode_mpc()
    }

    /// Half-mode mass, M_sun: (4 pi / 3) rho_m (lambda_hm / 2)^3.
    pub fn m_half_mode_msun(&self) -> f64 {
        4.0 * PI / 3.0 * self.rho_m0_msun_mpc3 * (0.5 * self.lambda_half_mode_mpc()).powi(3)
    }
}
