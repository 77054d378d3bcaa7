//! Bardeen, Bond, Kaiser & Szalay 1986 (ApJ 304, 15, eq. G3) CDM transfer function with
//! the baryon-corrected shape parameter of Sugiyama 1995 (ApJS 100, 281, eq. 3.9):
//! Gamma = Omega_m h exp(-Omega_b - sqrt(2h) Omega_b / Omega_m).

/// BBKS transfer function with Sugiyama's shape parameter.
#[derive(Debug, Clone)]
pub struct Bbks86 {
    h: f64,
    gamma: f64,
}

impl Bbks86 {
    pub fn new(h: f64, omega_m: f64, omega_b: f64) -> Self {
        let gamma = omega_m * h * (-omega_b - (2.0 * h).sqrt() * omega_b / omega_m).exp();
        Self { h, gamma }
    }

    /// Shape parameter Gamma.
    pub fn gamma(&self) -> f64 {
        self.gamma
    }

    /// T(k) at k in 1/Mpc; q = k / (Gamma h) with k in 1/Mpc.
    pub fn transfer(&self, k_mpc: f64) -> f64 {
        let q = k_mpc / (self.gamma * self.h);
        if q < 1e-8 {
            return 1.0;
        }
        let poly = 1.0 + 3.89 * q + (16.1 * q).powi(2) + (5.46 * q).powi(3) + (6.71 * q).powi(4);
        (1.0 + 2.34 * q).ln() / (2.34 * q) * poly.powf(-0.25)
    }
}
