//! Duffy et al. 2008 (MNRAS 390, L64, Table 1, "full" sample, 0 < z < 2):
//! c = A (M / 2e12 Msun/h)^B (1+z)^C, with (A, B, C) = (5.71, -0.084, -0.47) for 200c,
//! (7.85, -0.081, -0.71) for vir, (10.14, -0.081, -1.01) for 200m. Calibrated on WMAP5
//! simulations over 1e11 - 1e15 Msun/h; values outside are extrapolations.

use crate::halo::MassDefinition;

/// Concentration for mass in Msun/h; None for a definition the paper does not fit.
pub fn concentration(m_msun_h: f64, z: f64, mdef: MassDefinition) -> Option<f64> {
    let (a, b, c) = match mdef {
        MassDefinition::C200 => (5.71, -0.084, -0.47),
        MassDefinition::Vir => (7.85, -0.081, -0.71),
        MassDefinition::M200 => (10.14, -0.081, -1.01),
        MassDefinition::C500 => return None,
    };
    Some(a * (m_msun_h / 2e12).powf(b) * (1.0 + z).powf(c))
}
