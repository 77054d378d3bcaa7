//! Sheth & Tormen 1999 (MNRAS 308, 119, eq. 10):
//! f(nu) = A sqrt(2a/pi) [1 + (a nu^2)^-p] nu exp(-a nu^2 / 2), A = 0.3222, a = 0.707, p = 0.3.

use std::f64::consts::PI;

use super::Multiplicity;

#[derive(Debug, Clone, Copy)]
pub struct ShethTormen {
    pub big_a: f64,
    pub a: f64,
    pub p: f64,
}

impl Default for ShethTormen {
    fn default() -> Self {
        Self {
            big_a: 0.3222,
            a: 0.707,
            p: 0.3,
        }
    }
}

impl Multiplicity for ShethTormen {
    fn f_nu(&self, nu: f64) -> f64 {
        let an2 = self.a * nu * nu;
        self.big_a
            * (2.0 * self.a / PI).sqrt()
            * (1.0 + an2.powf(-self.p))
            * nu
            * (-0.5 * an2).exp()
    }
}
