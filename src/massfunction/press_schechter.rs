//! Press & Schechter 1974 (ApJ 187, 425) with the factor 2 of Bond et al. 1991 (ApJ 379,
//! 440): f(nu) = sqrt(2/pi) nu exp(-nu^2/2).

use std::f64::consts::PI;

use super::Multiplicity;

#[derive(Debug, Clone, Copy, Default)]
pub struct PressSchechter;

impl Multiplicity for PressSchechter {
    fn f_nu(&self, nu: f64) -> f64 {
        (2.0 / PI).sqrt() * nu * (-0.5 * nu * nu).exp()
    }
}
