//! The host through time. The halo follows the main branch of the host's own merger tree:
//! virial mass M(t) interpolated in ln M along the tree's output grid, R_vir(t) from
//! Delta_vir(z) rho_crit(z) (Bryan & Norman 1998), concentration from the same history (Zhao
//! et al. 2009, t_0.04 read off the main branch) or from a c(M, z) relation. Under warm dark
//! matter each of these is multiplied by the factor of Bose et al. 2016 (eq. 17,
//! `halo::concentration::wdm_factor`). For zhao09 the history is already the WDM tree's, so
//! the factor may count part of the effect twice; for a Milky-Way-mass host both are small
//! (the factor is 0.98 for M_hm = 2e9 Msun, 2 keV, and 0.99 at 2.5 keV; docs/methods.md).
//!
//! Disc and bulge: present-day values default to the disc of the MWPotential2014 model of
//! Bovy 2015 (ApJS 216, 29): Miyamoto–Nagai M_d = 6.8e10 Msun, a = 3 kpc, b = 0.28 kpc; its
//! bulge (a cut-off power law of 5e9 Msun) is replaced by a Hernquist sphere of the same mass
//! with a = 0.5 kpc (our choice). Growth (our prescription, following the physics reference
//! sheet, sec. 6): masses scale with the host's stellar mass from the Behroozi et al. 2013
//! relation applied to M(t), M_d(t) = M_d,0 M*(M(t), z)/M*(M(t0), z0); scale lengths scale with
//! R_vir(t)/R_vir(t0) at fixed b/a.
//!
//! The velocity dispersion of the halo (for dynamical friction) solves the isotropic Jeans
//! equation in the spherically averaged potential of all components, with the NFW halo as
//! tracer: sigma^2(r) = (1/rho(r)) \int_r^inf rho(r') G M(<r')/r'^2 dr'. Everything is
//! tabulated on 128 times (and 64 radii in r/R_vir for sigma); look-ups interpolate linearly.

use serde::{Deserialize, Serialize};

use super::potential::{HostSnapshot, Potential};
use crate::constants::G_KPC3_PER_MSUN_GYR2 as G;
use crate::error::InvalidValue;
use crate::galaxies::behroozi13;
use crate::halo::concentration::{c_of_m, wdm_factor, zhao09, ConcentrationModel};
use crate::halo::nfw::mu;
use crate::halo::MassDefinition;
use crate::linear::LinearTheory;
use crate::trees::HostHistory;

/// Present-day disc and bulge and how they grow.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DiscBulgeParams {
    pub disc_mass_msun: f64,
    pub disc_a_kpc: f64,
    pub disc_b_kpc: f64,
    pub bulge_mass_msun: f64,
    pub bulge_a_kpc: f64,
    /// Scale disc and bulge with the host's stellar mass (true) or keep them fixed.
    pub grow: bool,
}

impl Default for DiscBulgeParams {
    fn default() -> Self {
        Self {
            disc_mass_msun: 6.8e10,
            disc_a_kpc: 3.0,
            disc_b_kpc: 0.28,
            bulge_mass_msun: 5e9,
            bulge_a_kpc: 0.5,
            grow: true,
        }
    }
}

impl DiscBulgeParams {
    /// No disc, no bulge.
    pub fn none() -> Self {
        Self {
            disc_mass_msun: 0.0,
            bulge_mass_msun: 0.0,
            ..Self::default()
        }
    }

    pub fn problems(&self, prefix: &str) -> Vec<InvalidValue> {
        let mut ck = crate::error::Checker::new(prefix);
        ck.num(
            "disc_mass_msun",
            self.disc_mass_msun,
            (0.0..=1e12).contains(&self.disc_mass_msun),
            "must be in [0, 1e12] Msun",
        );
        ck.num(
            "disc_a_kpc",
            self.disc_a_kpc,
            self.disc_a_kpc > 0.0 && self.disc_a_kpc <= 50.0,
            "must be in (0, 50] kpc",
        );
        ck.num(
            "disc_b_kpc",
            self.disc_b_kpc,
            self.disc_b_kpc > 0.0 && self.disc_b_kpc <= 10.0,
            "must be in (0, 10] kpc",
        );
        ck.num(
            "bulge_mass_msun",
            self.bulge_mass_msun,
            (0.0..=1e12).contains(&self.bulge_mass_msun),
            "must be in [0, 1e12] Msun",
        );
        ck.num(
            "bulge_a_kpc",
            self.bulge_a_kpc,
            self.bulge_a_kpc > 0.0 && self.bulge_a_kpc <= 20.0,
            "must be in (0, 20] kpc",
        );
        ck.problems
    }
}

/// How the host is modelled.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct HostOptions {
    pub concentration: ConcentrationModel,
    pub baryons: DiscBulgeParams,
}

impl Default for HostOptions {
    fn default() -> Self {
        Self {
            concentration: ConcentrationModel::Zhao09,
            baryons: DiscBulgeParams::default(),
        }
    }
}

const N_T: usize = 128;
const N_R: usize = 64;
const LNX_MIN: f64 = -9.210_340_371_976_182; // ln 1e-4
const LNX_MAX: f64 = std::f64::consts::LN_10;

/// The host's potential and velocity dispersion as functions of cosmic time.
#[derive(Debug, Clone)]
pub struct EvolvingHost {
    t0: f64,
    dt: f64,
    snaps: Vec<HostSnapshot>,
    /// sigma (kpc/Gyr) on N_T x N_R, radius grid uniform in ln(r / R_vir(t)) (linear
    /// interpolation in sigma: no exponential in the friction inner loop).
    sigma_tab: Vec<f64>,
    /// Concentration at each node (for output).
    conc: Vec<f64>,
    /// The partner halo of a pair (None: an isolated host).
    partner: Option<std::sync::Arc<super::partner::Partner>>,
}

impl EvolvingHost {
    /// Build from a tree's main branch (times in Gyr). `t_start` is the earliest time needed.
    pub fn from_history(
        lt: &LinearTheory,
        hist: &HostHistory,
        options: &HostOptions,
        t_start: f64,
    ) -> Self {
        // main-branch points with mass > 0, in increasing time
        let mut pts: Vec<(f64, f64)> = hist
            .output_t_gyr
            .iter()
            .zip(&hist.mah_msun)
            .filter(|(_, &m)| m > 0.0)
            .map(|(&t, &m)| (t, m.ln()))
            .collect();
        pts.sort_by(|a, b| a.0.partial_cmp(&b.0).unwrap());
        Self::from_mah(lt, &pts, options, t_start)
    }

    /// Build from (t, ln M_vir) points sorted by t (at least one point).
    pub fn from_mah(
        lt: &LinearTheory,
        mah: &[(f64, f64)],
        options: &HostOptions,
        t_start: f64,
    ) -> Self {
        let cosmo = lt.cosmology();
        let t_end = mah.last().map(|p| p.0).unwrap_or(cosmo.age0_gyr());
        let t_lo = t_start.min(t_end).max(1e-3);
        let dt = ((t_end - t_lo) / (N_T - 1) as f64).max(1e-9);
        let ln_m_at = |t: f64| -> f64 {
            if mah.len() == 1 || t <= mah[0].0 {
                return mah[0].1;
            }
            let i = mah.partition_point(|p| p.0 <= t);
            if i >= mah.len() {
                return mah[mah.len() - 1].1;
            }
            let (a, b) = (mah[i - 1], mah[i]);
            a.1 + (b.1 - a.1) * (t - a.0) / (b.0 - a.0)
        };
        // time at which the main branch had mass m (inverse of the monotone MAH), or None
        let t_at_ln_m = |lm: f64| -> Option<f64> {
            if lm < mah[0].1 {
                return None;
            }
            let i = mah.partition_point(|p| p.1 < lm);
            if i == 0 {
                return Some(mah[0].0);
            }
            if i >= mah.len() {
                return Some(mah[mah.len() - 1].0);
            }
            let (a, b) = (mah[i - 1], mah[i]);
            if b.1 == a.1 {
                return Some(a.0);
            }
            Some(a.0 + (b.0 - a.0) * (lm - a.1) / (b.1 - a.1))
        };
        let b0 = options.baryons;
        let m_end = ln_m_at(t_end).exp();
        let z_end = cosmo.z_at_age(t_end);
        let r_vir_end = MassDefinition::Vir.radius_kpc(cosmo, m_end, z_end);
        let mstar_end = 10f64.powf(behroozi13::log10_mstar(m_end, z_end));
        let mut snaps = Vec::with_capacity(N_T);
        let mut conc = Vec::with_capacity(N_T);
        for i in 0..N_T {
            let t = t_lo + dt * i as f64;
            let z = cosmo.z_at_age(t);
            let m = ln_m_at(t).exp();
            let r_vir = MassDefinition::Vir.radius_kpc(cosmo, m, z);
            let c_cdm = match options.concentration {
                ConcentrationModel::Zhao09 => match t_at_ln_m((0.04 * m).ln()) {
                    Some(t04) if t04 > 0.0 => zhao09::concentration(t, t04),
                    _ => c_of_m(
                        ConcentrationModel::DuttonMaccio14,
                        cosmo,
                        m,
                        z,
                        MassDefinition::Vir,
                    ),
                },
                other => c_of_m(other, cosmo, m, z, MassDefinition::Vir),
            };
            // warm dark matter: every model times the Bose et al. 2016 factor (1 for CDM)
            let c = c_cdm * wdm_factor(lt, m, c_cdm, z, MassDefinition::Vir);
            let r_s = r_vir / c;
            let m_s = m / mu(c);
            let (fm, fr) = if b0.grow {
                // within the relation's calibrated range, as for the satellites (z <= 8)
                let z_fit = z.min(crate::galaxies::SmhmModel::Behroozi13.z_max());
                let ms = 10f64.powf(behroozi13::log10_mstar(m, z_fit));
                (ms / mstar_end, r_vir / r_vir_end)
            } else {
                (1.0, 1.0)
            };
            snaps.push(HostSnapshot {
                m_s,
                r_s,
                r_vir,
                m_vir: m,
                m_disc: b0.disc_mass_msun * fm,
                a_disc: b0.disc_a_kpc * fr,
                b_disc: b0.disc_b_kpc * fr,
                m_bulge: b0.bulge_mass_msun * fm,
                a_bulge: b0.bulge_a_kpc * fr,
                de_k: cosmo.dark_energy_accel_per_kpc(z),
            });
            conc.push(c);
        }
        let mut sigma_tab = Vec::with_capacity(N_T * N_R);
        for s in &snaps {
            sigma_tab.extend(jeans_sigma(s));
        }
        Self {
            t0: t_lo,
            dt,
            snaps,
            sigma_tab,
            conc,
            partner: None,
        }
    }

    /// A host that does not change (for tests and `retinue orbit --static`).
    pub fn fixed(s: HostSnapshot) -> Self {
        let sig = jeans_sigma(&s);
        let mut sigma_tab = sig.clone();
        sigma_tab.extend(sig);
        Self {
            t0: 0.0,
            dt: 1e6,
            snaps: vec![s, s],
            sigma_tab,
            conc: vec![s.r_vir / s.r_s; 2],
            partner: None,
        }
    }

    /// Time range covered (Gyr).
    pub fn time_range(&self) -> (f64, f64) {
        (self.t0, self.t0 + self.dt * (self.snaps.len() - 1) as f64)
    }

    #[inline]
    fn locate(&self, t: f64) -> (usize, f64) {
        let u = ((t - self.t0) / self.dt).max(0.0);
        let i = (u as usize).min(self.snaps.len() - 2);
        (i, (u - i as f64).min(1.0))
    }

    /// The host at time t (clamped to the table).
    #[inline]
    pub fn snapshot(&self, t: f64) -> HostSnapshot {
        let (i, f) = self.locate(t);
        self.snaps[i].lerp(&self.snaps[i + 1], f)
    }

    /// Concentration at time t.
    pub fn concentration(&self, t: f64) -> f64 {
        let (i, f) = self.locate(t);
        self.conc[i] + f * (self.conc[i + 1] - self.conc[i])
    }

    /// One-dimensional velocity dispersion of the halo at radius r (kpc), time t; kpc/Gyr.
    #[inline]
    pub fn sigma(&self, r: f64, t: f64) -> f64 {
        let (i, f) = self.locate(t);
        let r_vir = self.snaps[i].r_vir + f * (self.snaps[i + 1].r_vir - self.snaps[i].r_vir);
        let u = ((r / r_vir).ln() - LNX_MIN) / (LNX_MAX - LNX_MIN) * (N_R - 1) as f64;
        let u = u.clamp(0.0, (N_R - 1) as f64 - 1e-9);
        let j = u as usize;
        let g = u - j as f64;
        let at = |ti: usize| {
            let row = &self.sigma_tab[ti * N_R..(ti + 1) * N_R];
            row[j] + g * (row[j + 1] - row[j])
        };
        at(i) + f * (at(i + 1) - at(i))
    }

    /// This host with a partner in its field (a host of a pair).
    pub fn with_partner(mut self, partner: super::partner::Partner) -> Self {
        self.partner = Some(std::sync::Arc::new(partner));
        self
    }

    /// The partner, for a host of a pair.
    #[inline]
    pub fn partner(&self) -> Option<&super::partner::Partner> {
        self.partner.as_deref()
    }

    /// Gravitational acceleration at x (host frame, kpc) at time t, kpc/Gyr^2: the host's
    /// own, plus for a host of a pair the partner's pull relative to the host's centre
    /// (`Partner::accel`).
    #[inline]
    pub fn accel_at(&self, t: f64, x: [f64; 3]) -> [f64; 3] {
        let a = self.snapshot(t).accel(x);
        match &self.partner {
            None => a,
            Some(p) => {
                let b = p.accel(t, x);
                [a[0] + b[0], a[1] + b[1], a[2] + b[2]]
            }
        }
    }

    /// The tide across an offset x from a point at s (host frame, kpc) at time t: the pull at
    /// s + x minus the pull at s, the host's exactly and the partner's of a pair by
    /// `Partner::tide_across` (its inertial term cancels in the difference).
    #[inline]
    pub fn tide_across(&self, t: f64, s: [f64; 3], x: [f64; 3]) -> [f64; 3] {
        let snap = self.snapshot(t);
        let g1 = snap.accel([s[0] + x[0], s[1] + x[1], s[2] + x[2]]);
        let g0 = snap.accel(s);
        let mut a = [g1[0] - g0[0], g1[1] - g0[1], g1[2] - g0[2]];
        if let Some(p) = &self.partner {
            let b = p.tide_across(t, s, x);
            for i in 0..3 {
                a[i] += b[i];
            }
        }
        a
    }

    /// The snapshot nodes (for output).
    pub fn snapshots(&self) -> &[HostSnapshot] {
        &self.snaps
    }
}

/// sigma_r (kpc/Gyr) of the NFW tracer in the spherical potential of all components, on
/// the grid ln(r/R_vir) in [ln 1e-4, ln 10]; the integral in ln r out to 100 R_vir by
/// composite Simpson's rule on four sub-intervals of each table interval, summed from the
/// outside in, so that every table node gets its integral directly. Against direct
/// quadrature (review 2026-12-04, an independent Python implementation): 6e-5 in sigma at
/// 10 R_vir (the neglected tail beyond 100 R_vir) and at most 3e-4 elsewhere.
fn jeans_sigma(s: &HostSnapshot) -> Vec<f64> {
    let dl = (LNX_MAX - LNX_MIN) / (N_R - 1) as f64;
    let ln_rv = s.r_vir.ln();
    // table intervals beyond the table out to 100 R_vir
    let n_out = (((100.0f64).ln() - LNX_MIN) / dl).ceil() as usize;
    // integrand in ln r: rho G M / r^2 * r
    let f = |lx: f64| {
        let r = (lx + ln_rv).exp();
        s.halo_density(r) * G * s.mass_enclosed(r) / r
    };
    let h = 0.25 * dl;
    let mut cum = vec![0.0; n_out + 1]; // \int_{x_j}^{x_max}
    let mut f_hi = f(LNX_MIN + dl * n_out as f64);
    for j in (0..n_out).rev() {
        let a = LNX_MIN + dl * j as f64;
        let f_lo = f(a);
        let simpson =
            h / 3.0 * (f_lo + 4.0 * f(a + h) + 2.0 * f(a + 2.0 * h) + 4.0 * f(a + 3.0 * h) + f_hi);
        cum[j] = cum[j + 1] + simpson;
        f_hi = f_lo;
    }
    (0..N_R)
        .map(|j| {
            let r = (LNX_MIN + dl * j as f64 + ln_rv).exp();
            (cum[j] / s.halo_density(r)).max(0.0).sqrt()
        })
        .collect()
}
