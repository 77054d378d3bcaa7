//! Zhao et al. 2009 (ApJ 707, 354, eq. 25): concentration from the halo's own accretion
//! history, c = 4 [1 + (t / (3.75 t_0.04))^8.4]^(1/8), with t the cosmic time of observation
//! and t_0.04 the time its main progenitor first reached 4% of the mass it has at t. The
//! paper states it for virial masses and finds it holds for other definitions too.

/// c from the observation time and t_0.04 (both Gyr, cosmic time).
pub fn concentration(t_gyr: f64, t_004_gyr: f64) -> f64 {
    4.0 * (1.0 + (t_gyr / (3.75 * t_004_gyr)).powf(8.4)).powf(0.125)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Check values of the physics reference sheet (formula evaluation): c(t = t_0.04) = 4.0000,
    /// c(3.75 t_0.04) = 4.3620, c(10 t_0.04) = 11.2032.
    #[test]
    fn val_zhao09_formula_values() {
        assert!((concentration(1.0, 1.0) - 4.0000).abs() < 1e-4);
        assert!((concentration(3.75, 1.0) - 4.3620).abs() < 1e-4);
        assert!((concentration(10.0, 1.0) - 11.2032).abs() < 1e-4);
    }
}
