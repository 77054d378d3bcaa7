//! Eisenstein & Hu 1998 (ApJ 496, 605) transfer functions: the full form with baryon
//! acoustic oscillations (section 3, eqs. 2-24) and the zero-baryon / no-wiggle form
//! (section 4.2, eqs. 26-31). Wavenumbers in 1/Mpc (no h), as in the paper.
//! Valid for 0.025 <= Omega_b/Omega_m <= 0.5 and 0.025 <= Omega_m h^2 <= 0.25 to ~1%
//! against Boltzmann codes (paper, sec. 3.3); for other values the formulae still evaluate.

use std::f64::consts::E;

/// Precomputed constants of the full EH98 fit for one cosmology.
#[derive(Debug, Clone)]
pub struct EisensteinHu98 {
    pub h: f64,
    pub z_eq: f64,
    pub k_eq: f64,
    pub z_d: f64,
    pub s: f64,
    pub k_silk: f64,
    pub alpha_c: f64,
    pub beta_c: f64,
    pub alpha_b: f64,
    pub beta_b: f64,
    pub beta_node: f64,
    fb: f64,
    fc: f64,
}

impl EisensteinHu98 {
    pub fn new(h: f64, omega_m: f64, omega_b: f64, t_cmb_k: f64) -> Self {
        let theta = t_cmb_k / 2.7;
        let wm = omega_m * h * h;
        let wb = omega_b * h * h;
        let fb = omega_b / omega_m;
        let fc = 1.0 - fb;
        // eq. 2, 3
        let z_eq = 2.50e4 * wm * theta.powi(-4);
        let k_eq = 7.46e-2 * wm * theta.powi(-2);
        // eq. 4
        let b1 = 0.313 * wm.powf(-0.419) * (1.0 + 0.607 * wm.powf(0.674));
        let b2 = 0.238 * wm.powf(0.223);
        let z_d =
            1291.0 * wm.powf(0.251) / (1.0 + 0.659 * wm.powf(0.828)) * (1.0 + b1 * wb.powf(b2));
        // eq. 5
        let r = |z: f64| 31.5 * wb * theta.powi(-4) * (z / 1000.0).powi(-1);
        let r_d = r(z_d);
        let r_eq = r(z_eq);
        // eq. 6
        let s = 2.0 / (3.0 * k_eq)
            * (6.0 / r_eq).sqrt()
            * (((1.0 + r_d).sqrt() + (r_d + r_eq).sqrt()) / (1.0 + r_eq.sqrt())).ln();
        // eq. 7
        let k_silk = 1.6 * wb.powf(0.52) * wm.powf(0.73) * (1.0 + (10.4 * wm).powf(-0.95));
        // eq. 11
        let a1 = (46.9 * wm).powf(0.670) * (1.0 + (32.1 * wm).powf(-0.532));
        let a2 = (12.0 * wm).powf(0.424) * (1.0 + (45.0 * wm).powf(-0.582));
        let alpha_c = a1.powf(-fb) * a2.powf(-fb * fb * fb);
        // eq. 12
        let bb1 = 0.944 / (1.0 + (458.0 * wm).powf(-0.708));
        let bb2 = (0.395 * wm).powf(-0.0266);
        let beta_c = 1.0 / (1.0 + bb1 * (fc.powf(bb2) - 1.0));
        // eqs. 14-15
        let y = (1.0 + z_eq) / (1.0 + z_d);
        let sq = (1.0 + y).sqrt();
        let g = y * (-6.0 * sq + (2.0 + 3.0 * y) * ((sq + 1.0) / (sq - 1.0)).ln());
        let alpha_b = 2.07 * k_eq * s * (1.0 + r_d).powf(-0.75) * g;
        // eqs. 23-24
        let beta_node = 8.41 * wm.powf(0.435);
        let beta_b = 0.5 + fb + (3.0 - 2.0 * fb) * ((17.2 * wm).powi(2) + 1.0).sqrt();
        Self {
            h,
            z_eq,
            k_eq,
            z_d,
            s,
            k_silk,
            alpha_c,
            beta_c,
            alpha_b,
            beta_b,
            beta_node,
            fb,
            fc,
        }
    }

    /// eq. 19-20: T0~(k; alpha_c, beta_c).
    #[inline]
    fn t0_tilde(&self, q: f64, a: f64, b: f64) -> f64 {
        let l = (E + 1.8 * b * q).ln();
        let c = 14.2 / a + 386.0 / (1.0 + 69.9 * q.powf(1.08));
        l / (l + c * q * q)
    }

    /// Transfer function at k in 1/Mpc (eq. 16).
    pub fn transfer(&self, k_mpc: f64) -> f64 {
        let k = k_mpc;
        let q = k / (13.41 * self.k_eq); // eq. 10
        let ks = k * self.s;
        // eqs. 17-18
        let f = 1.0 / (1.0 + (ks / 5.4).powi(4));
        let t_c = f * self.t0_tilde(q, 1.0, self.beta_c)
            + (1.0 - f) * self.t0_tilde(q, self.alpha_c, self.beta_c);
        // eqs. 21-22
        let s_tilde = self.s / (1.0 + (self.beta_node / ks).powi(3)).cbrt();
        let x = k * s_tilde;
        let j0 = if x.abs() < 1e-4 {
            1.0 - x * x / 6.0
        } else {
            x.sin() / x
        };
        let t_b = (self.t0_tilde(q, 1.0, 1.0) / (1.0 + (ks / 5.2).powi(2))
            + self.alpha_b / (1.0 + (self.beta_b / ks).powi(3))
                * (-(k / self.k_silk).powf(1.4)).exp())
            * j0;
        self.fb * t_b + self.fc * t_c
    }

    /// Sound horizon at the drag epoch, Mpc (eq. 6).
    pub fn sound_horizon_mpc(&self) -> f64 {
        self.s
    }

    /// h of the cosmology these constants belong to.
    pub fn h(&self) -> f64 {
        self.h
    }
}

/// EH98 zero-baryon shape with the baryon suppression of the shape parameter (no wiggles),
/// section 4.2, eqs. 26-31.
#[derive(Debug, Clone)]
pub struct EisensteinHu98NoWiggle {
    h: f64,
    theta2: f64,
    omh: f64,
    alpha_g: f64,
    s: f64,
}

impl EisensteinHu98NoWiggle {
    pub fn new(h: f64, omega_m: f64, omega_b: f64, t_cmb_k: f64) -> Self {
        let theta = t_cmb_k / 2.7;
        let wm = omega_m * h * h;
        let wb = omega_b * h * h;
        let fb = omega_b / omega_m;
        // eq. 26
        let s = 44.5 * (9.83 / wm).ln() / (1.0 + 10.0 * wb.powf(0.75)).sqrt();
        // eq. 31
        let alpha_g = 1.0 - 0.328 * (431.0 * wm).ln() * fb + 0.38 * (22.3 * wm).ln() * fb * fb;
        Self {
            h,
            theta2: theta * theta,
            omh: omega_m * h,
            alpha_g,
            s,
        }
    }

    /// Transfer function at k in 1/Mpc (eqs. 28-30).
    pub fn transfer(&self, k_mpc: f64) -> f64 {
        let gamma_eff = self.omh
            * (self.alpha_g + (1.0 - self.alpha_g) / (1.0 + (0.43 * k_mpc * self.s).powi(4)));
        let q = (k_mpc / self.h) * self.theta2 / gamma_eff;
        let l0 = (2.0 * E + 1.8 * q).ln();
        let c0 = 14.2 + 731.0 / (1.0 + 62.5 * q);
        l0 / (l0 + c0 * q * q)
    }
}
