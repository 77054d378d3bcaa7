//! Dutton & Maccio 2014 (MNRAS 441, 3359; their fits for the Planck cosmology, 0 < z < 5;
//! equation numbers not checked):
//! log10 c = a + b log10(M / 1e12 Msun/h);
//! 200c: a = 0.520 + (0.905 - 0.520) exp(-0.617 z^1.21), b = -0.101 + 0.026 z;
//! vir:  a = 0.537 + (1.025 - 0.537) exp(-0.718 z^1.08), b = -0.097 + 0.024 z.

use crate::halo::MassDefinition;

/// Concentration for mass in Msun/h; None for a definition the paper does not fit.
pub fn concentration(m_msun_h: f64, z: f64, mdef: MassDefinition) -> Option<f64> {
    // a redshift a rounding error below zero (z of the age of the universe today computed
    // back from that age, -3e-15) is today: z^1.08 of a negative z would be NaN
    let z = z.max(0.0);
    let (a, b) = match mdef {
        MassDefinition::C200 => (
            0.520 + 0.385 * (-0.617 * z.powf(1.21)).exp(),
            -0.101 + 0.026 * z,
        ),
        MassDefinition::Vir => (
            0.537 + 0.488 * (-0.718 * z.powf(1.08)).exp(),
            -0.097 + 0.024 * z,
        ),
        _ => return None,
    };
    Some(10f64.powf(a + b * (m_msun_h / 1e12).log10()))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A redshift rounded just below zero is today (it gave a NaN concentration, and with it
    /// NaN potentials for hosts without a Zhao et al. 2009 history).
    #[test]
    fn z_rounded_below_zero_is_today() {
        for mdef in [MassDefinition::Vir, MassDefinition::C200] {
            let c = concentration(3e9, -3e-15, mdef).unwrap();
            assert_eq!(c, concentration(3e9, 0.0, mdef).unwrap());
            assert!(c.is_finite() && c > 1.0);
        }
    }
}
