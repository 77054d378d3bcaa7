//! Background cosmology: expansion rate, cosmic time, densities, linear growth.
//!
//! `Cosmology::new` validates the parameters and builds the age and growth tables once
//! (about 2,300 nodes each, uniform in ln a); every query afterwards is an O(1) look-up.

pub mod background;
pub mod growth;
pub mod presets;

use serde::{Deserialize, Serialize};

use crate::constants::{NEUTRINO_PER_PHOTON, OMEGA_GAMMA_H2_PER_T4};
use crate::error::{CosmologyError, InvalidValue};

pub use background::Background;
pub use growth::Growth;
pub use presets::{preset, PRESET_NAMES};

/// Parameters of a Lambda/wCDM cosmology. Densities are today's values; `omega_m` includes
/// baryons. Flat unless `omega_k` is set; the dark-energy density is what closes the budget:
/// Omega_de = 1 - Omega_m - Omega_r - Omega_k.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CosmologyParams {
    /// A label for output (preset name or "custom").
    pub name: String,
    /// H0 / (100 km/s/Mpc).
    pub h: f64,
    pub omega_m: f64,
    pub omega_b: f64,
    /// rms linear overdensity in spheres of 8 Mpc/h at z = 0.
    pub sigma8: f64,
    /// Primordial spectral index.
    pub n_s: f64,
    /// Curvature density today (positive = open).
    pub omega_k: f64,
    /// Dark-energy equation of state (constant).
    pub w: f64,
    /// CMB temperature today in K (sets the photon density and the EH98 Theta).
    pub t_cmb_k: f64,
    /// Effective number of massless neutrino species.
    pub n_eff: f64,
    /// Include photons + massless neutrinos in E(z) and ages.
    pub radiation: bool,
}

impl CosmologyParams {
    /// Check every parameter; returns all problems at once. `prefix` is prepended to each key
    /// (e.g. `cosmology.`).
    pub fn problems(&self, prefix: &str) -> Vec<InvalidValue> {
        let mut out = Vec::new();
        let mut check = |key: &str, v: f64, ok: bool, allowed: &str| {
            if !ok || !v.is_finite() {
                out.push(InvalidValue::new(format!("{prefix}{key}"), v, allowed));
            }
        };
        check(
            "h",
            self.h,
            self.h > 0.2 && self.h <= 1.5,
            "must be in (0.2, 1.5]",
        );
        check(
            "omega_m",
            self.omega_m,
            self.omega_m > 0.0 && self.omega_m <= 1.5,
            "must be in (0, 1.5]",
        );
        let om_ok = self.omega_m > 0.0 && self.omega_m <= 1.5;
        check(
            "omega_b",
            self.omega_b,
            self.omega_b > 0.0 && (!om_ok || self.omega_b < self.omega_m),
            "must be in (0, omega_m)",
        );
        check(
            "sigma8",
            self.sigma8,
            self.sigma8 > 0.0 && self.sigma8 <= 3.0,
            "must be in (0, 3]",
        );
        check(
            "n_s",
            self.n_s,
            self.n_s >= 0.5 && self.n_s <= 1.5,
            "must be in [0.5, 1.5]",
        );
        check(
            "omega_k",
            self.omega_k,
            self.omega_k.abs() <= 0.5,
            "must be in [-0.5, 0.5]",
        );
        check(
            "w",
            self.w,
            self.w >= -3.0 && self.w < -1.0 / 3.0,
            "must be in [-3, -1/3) (accelerating dark energy)",
        );
        check(
            "t_cmb_k",
            self.t_cmb_k,
            self.t_cmb_k > 0.0 && self.t_cmb_k <= 10.0,
            "must be in (0, 10] K",
        );
        check(
            "n_eff",
            self.n_eff,
            self.n_eff >= 0.0 && self.n_eff <= 10.0,
            "must be in [0, 10]",
        );
        if out.is_empty() {
            let ode = 1.0 - self.omega_m - self.omega_k - self.omega_r();
            if ode < 0.0 {
                out.push(InvalidValue::new(
                    format!("{prefix}omega_k"),
                    self.omega_k,
                    format!(
                        "leaves a negative dark-energy density ({ode:.4}); need omega_m + omega_k <= 1"
                    ),
                ));
            }
        }
        out
    }

    /// Photon density today, Omega_gamma = 4.48131e-7 T^4 / h^2 (zero without radiation).
    pub fn omega_gamma(&self) -> f64 {
        if self.radiation {
            OMEGA_GAMMA_H2_PER_T4 * self.t_cmb_k.powi(4) / (self.h * self.h)
        } else {
            0.0
        }
    }

    /// Radiation density today: photons plus n_eff massless neutrinos.
    pub fn omega_r(&self) -> f64 {
        self.omega_gamma() * (1.0 + NEUTRINO_PER_PHOTON * self.n_eff)
    }

    /// Dark-energy density today, closing the budget.
    pub fn omega_de(&self) -> f64 {
        1.0 - self.omega_m - self.omega_k - self.omega_r()
    }

    /// H0 in km/s/Mpc.
    pub fn h0_km_s_mpc(&self) -> f64 {
        100.0 * self.h
    }
}

/// A validated cosmology with its background and growth tables.
#[derive(Debug, Clone)]
pub struct Cosmology {
    pub params: CosmologyParams,
    background: Background,
    growth: Growth,
}

impl Cosmology {
    pub fn new(params: CosmologyParams) -> Result<Self, CosmologyError> {
        if let Some(p) = params.problems("").into_iter().next() {
            return Err(p.into());
        }
        let background = Background::new(&params)?;
        let growth = Growth::new(&params, &background)?;
        Ok(Self {
            params,
            background,
            growth,
        })
    }

    /// A preset by name (see `PRESET_NAMES`).
    pub fn from_preset(name: &str) -> Result<Self, CosmologyError> {
        Self::new(preset(name)?)
    }

    pub fn background(&self) -> &Background {
        &self.background
    }

    pub fn growth_table(&self) -> &Growth {
        &self.growth
    }

    pub fn h(&self) -> f64 {
        self.params.h
    }

    /// E(z) = H(z)/H0.
    pub fn e_z(&self, z: f64) -> f64 {
        self.background.e_z(z)
    }

    /// Cosmic time since the Big Bang at redshift z, Gyr.
    pub fn age_gyr(&self, z: f64) -> f64 {
        self.background.age_gyr(z)
    }

    /// Lookback time to redshift z, Gyr.
    pub fn lookback_gyr(&self, z: f64) -> f64 {
        self.background.age_gyr(0.0) - self.background.age_gyr(z)
    }

    /// Redshift at cosmic time t (Gyr). Inverse of `age_gyr`.
    pub fn z_at_age(&self, t_gyr: f64) -> f64 {
        self.background.z_at_age(t_gyr)
    }

    /// Critical density at z, physical M_sun/kpc^3.
    pub fn rho_crit_msun_kpc3(&self, z: f64) -> f64 {
        self.background.rho_crit_msun_kpc3(z)
    }

    /// Mean matter density at z, physical M_sun/kpc^3.
    pub fn rho_m_msun_kpc3(&self, z: f64) -> f64 {
        self.background.rho_crit0_msun_kpc3() * self.params.omega_m * (1.0 + z).powi(3)
    }

    /// Omega_m(z) = Omega_m0 (1+z)^3 / E(z)^2.
    pub fn omega_m_z(&self, z: f64) -> f64 {
        self.background.omega_m_z(z)
    }

    /// Linear growth factor normalised to D(0) = 1.
    pub fn growth(&self, z: f64) -> f64 {
        self.growth.d(z)
    }

    /// dD/dz of the normalised growth factor.
    pub fn growth_dz(&self, z: f64) -> f64 {
        self.growth.dd_dz(z)
    }

    /// Age of the universe today, Gyr.
    pub fn age0_gyr(&self) -> f64 {
        self.background.age_gyr(0.0)
    }

    /// The acceleration per unit distance that dark energy gives a test particle at distance r
    /// from a bound system, a = k r (Gyr^-2, outward when positive): from the Newtonian limit
    /// of the second Friedmann equation, a = -(4 pi G / 3)(rho_de + 3 p_de) r with p_de =
    /// w rho_de, so k = -(1 + 3w)/2 H0^2 Omega_de (1+z)^(3(1+w)) (for a cosmological constant,
    /// H0^2 Omega_Lambda: e.g. Peebles 1993, sec. 5; any textbook).
    pub fn dark_energy_accel_per_kpc(&self, z: f64) -> f64 {
        let h0 = 1.0 / self.background.hubble_time_gyr();
        let w = self.params.w;
        -(1.0 + 3.0 * w) / 2.0
            * h0
            * h0
            * self.background.omega_de0()
            * (1.0 + z).powf(3.0 * (1.0 + w))
    }
}
