//! Linear growth factor D(z), normalised to D(0) = 1.
//!
//! * w = -1 (any curvature): the exact integral of Heath (1977, MNRAS 179, 351, eq. 7),
//!   D(a) ∝ (5 Om / 2) E(a) \int_0^a da' / (a' E(a'))^3.
//! * w != -1: the linear growth equation in x = ln a,
//!   D'' + (2 + dlnE/dln a) D' - (3/2) Omega_m(a) D = 0   (e.g. Linder & Jenkins 2003,
//!   MNRAS 346, 573, eq. 1 rewritten in ln a), integrated by fourth-order Runge–Kutta from
//!   a = 1e-6 with the growing mode D = a, D' = a of matter domination.
//!
//! Radiation is neglected in the growth factor in both cases: D is computed for the same
//! universe with Omega_r moved into dark energy (so E(0) = 1), as colossus 1.4.0 does. The
//! effect of radiation on D is below 1e-4 at z <= 5 for Planck 2018.

use crate::error::CosmologyError;
use crate::interp::{cumulative_hermite, UniformHermite};

use super::background::{Background, D_LN_A, LN_A_MIN};
use super::CosmologyParams;

/// D(ln a) normalised to D(0) = 1, with dD/dln a at the nodes.
#[derive(Debug, Clone)]
pub struct Growth {
    table: UniformHermite,
    method: GrowthMethod,
}

/// How the growth table was computed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum GrowthMethod {
    HeathIntegral,
    Ode,
}

impl Growth {
    pub fn new(p: &CosmologyParams, bg: &Background) -> Result<Self, CosmologyError> {
        if p.w == -1.0 {
            Ok(Self::heath(bg))
        } else {
            Ok(Self::ode(bg))
        }
    }

    /// Heath (1977) integral; exact for a cosmological constant and any curvature.
    pub fn heath(bg: &Background) -> Self {
        let n = ((0.0 - LN_A_MIN) / D_LN_A).round() as usize + 1;
        let h = -LN_A_MIN / (n - 1) as f64;
        let om = bg.omega_m0();
        // integrand in ln a: g = 1/(a^2 E^3); dg/dln a = g (-2 - 3 dlnE/dln a)
        let mut g = Vec::with_capacity(n);
        let mut dg = Vec::with_capacity(n);
        let mut e = Vec::with_capacity(n);
        let mut dlne = Vec::with_capacity(n);
        for i in 0..n {
            let a = (LN_A_MIN + h * i as f64).exp();
            let e2 = bg.e2_a_no_rad(a);
            let ei = e2.sqrt();
            let dl = 0.5 * bg.de2_dlna_no_rad(a) / e2;
            let gi = 1.0 / (a * a * e2 * ei);
            g.push(gi);
            dg.push(gi * (-2.0 - 3.0 * dl));
            e.push(ei);
            dlne.push(dl);
        }
        let a0 = LN_A_MIN.exp();
        // \int_0^a0 (a E)^-3 da with E = sqrt(Om) a^-1.5: Om^-1.5 a0^2.5 / 2.5
        let i0 = om.powf(-1.5) * a0.powf(2.5) / 2.5;
        let cum = cumulative_hermite(&g, &dg, h);
        let mut d = Vec::with_capacity(n);
        let mut dd = Vec::with_capacity(n);
        for i in 0..n {
            let integral = i0 + cum[i];
            let di = 2.5 * om * e[i] * integral;
            // dD/dln a = 2.5 Om [E dlnE/dln a * I + E * g]
            let ddi = 2.5 * om * e[i] * (dlne[i] * integral + g[i]);
            d.push(di);
            dd.push(ddi);
        }
        Self::normalised(h, d, dd, GrowthMethod::HeathIntegral)
    }

    /// Growth ODE integrated with RK4 on the table grid.
    pub fn ode(bg: &Background) -> Self {
        let n = ((0.0 - LN_A_MIN) / D_LN_A).round() as usize + 1;
        let h = -LN_A_MIN / (n - 1) as f64;
        let om = bg.omega_m0();
        let rhs = |x: f64, d: f64, dp: f64| -> (f64, f64) {
            let a = x.exp();
            let e2 = bg.e2_a_no_rad(a);
            let dlne = 0.5 * bg.de2_dlna_no_rad(a) / e2;
            let omz = om / (a * a * a * e2);
            (dp, -(2.0 + dlne) * dp + 1.5 * omz * d)
        };
        let mut d = Vec::with_capacity(n);
        let mut dd = Vec::with_capacity(n);
        let a0 = LN_A_MIN.exp();
        let (mut y, mut yp) = (a0, a0);
        d.push(y);
        dd.push(yp);
        for i in 1..n {
            let x = LN_A_MIN + h * (i - 1) as f64;
            let (k1, l1) = rhs(x, y, yp);
            let (k2, l2) = rhs(x + 0.5 * h, y + 0.5 * h * k1, yp + 0.5 * h * l1);
            let (k3, l3) = rhs(x + 0.5 * h, y + 0.5 * h * k2, yp + 0.5 * h * l2);
            let (k4, l4) = rhs(x + h, y + h * k3, yp + h * l3);
            y += h / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4);
            yp += h / 6.0 * (l1 + 2.0 * l2 + 2.0 * l3 + l4);
            d.push(y);
            dd.push(yp);
        }
        Self::normalised(h, d, dd, GrowthMethod::Ode)
    }

    fn normalised(h: f64, mut d: Vec<f64>, mut dd: Vec<f64>, method: GrowthMethod) -> Self {
        let norm = *d.last().expect("non-empty table");
        for v in d.iter_mut().chain(dd.iter_mut()) {
            *v /= norm;
        }
        Self {
            table: UniformHermite::new(LN_A_MIN, h, d, dd),
            method,
        }
    }

    pub fn method(&self) -> GrowthMethod {
        self.method
    }

    /// D(z), normalised to 1 today. Above z = 1e6 uses D ∝ a of matter domination.
    #[inline]
    pub fn d(&self, z: f64) -> f64 {
        let ln_a = -(1.0 + z).ln();
        self.d_ln_a(ln_a)
    }

    /// D as a function of ln a.
    #[inline]
    pub fn d_ln_a(&self, ln_a: f64) -> f64 {
        if ln_a < LN_A_MIN {
            let (y, _) = self.table.nodes();
            return y[0] * (ln_a - LN_A_MIN).exp();
        }
        self.table.eval(ln_a)
    }

    /// dD/dln a.
    pub fn dd_dln_a(&self, ln_a: f64) -> f64 {
        if ln_a < LN_A_MIN {
            return self.d_ln_a(ln_a);
        }
        self.table.derivative(ln_a)
    }

    /// dD/dz = -a dD/dln a.
    pub fn dd_dz(&self, z: f64) -> f64 {
        let ln_a = -(1.0 + z).ln();
        -ln_a.exp() * self.dd_dln_a(ln_a)
    }

    /// Logarithmic growth rate f = dln D / dln a.
    pub fn growth_rate(&self, z: f64) -> f64 {
        let ln_a = -(1.0 + z).ln();
        self.dd_dln_a(ln_a) / self.d_ln_a(ln_a)
    }
}
