//! Backsplash haloes: among haloes of a given mass in a shell around the host today, the
//! fraction that were once inside the host (Gill, Knebe & Gibson 2005 definition, with the
//! host's evolving virial radius as the boundary).
//!
//! Backsplash counts come from the orbits (subhaloes outside R_vir today that were inside;
//! distinct haloes only), per shell of distance. Field counts (haloes that were never inside)
//! are not followed by the trees, which hold only the host's progenitors; they are expected
//! numbers, n(r) = n_bar [1 + b_field xi_hm(r)] integrated over each shell, with n_bar the mean
//! comoving density of haloes in the peak-mass range (Sheth & Tormen 1999 mass function),
//! b_field their number-weighted mean Tinker et al. (2010) bias, and xi_hm(r) the host–matter
//! correlation at distance r. The `field` key chooses xi_hm:
//!
//! * `"nonlinear"` (default): the halo–matter correlation of Hayashi & White 2008 (MNRAS 388,
//!   2), the larger of a one-halo and a two-halo term,
//!
//!   xi_hm(r) = max(xi_1h, xi_2h),  xi_1h = rho_NFW(r) / rho_bar_m - 1,  xi_2h = b_host xi_lin(r),
//!
//!   with the host's NFW profile continued beyond R_vir (virial mass and radius of the host;
//!   concentration from the Dutton & Maccio 2014 c_vir(M) relation at z = 0, with the
//!   cosmology's WDM factor: the mean profile of haloes of that mass, as Hayashi & White
//!   compare with stacked haloes), b_host the Tinker et al. 2010 bias of the host and xi_lin
//!   the linear matter correlation function of the run's own power spectrum. Why this one:
//!   it is the simplest published form that follows the non-linear matter density near a
//!   halo (several tens of times the mean at R_vir, where xi_lin is about 15) and becomes the
//!   linear two-halo term far away, it has no parameter beyond those the host already has,
//!   and its pieces can be checked against an outside library (tests/reference/field.json).
//!   The infall-region profile of Diemer & Kravtsov 2014 would separate infalling from
//!   orbiting matter, but its outer-term amplitude and slope are fitted per sample and could
//!   not be read here from the paper.
//!
//!   Assumption (stated, not derived): the small field haloes trace the matter around the
//!   host with their own linear bias, n = n_bar (1 + b_field xi_hm), in the one-halo region
//!   too, as they do in the two-halo region (where this is exactly the `"correlation"`
//!   model). Two known errors go in opposite directions: the one-halo term is a fit to all
//!   the matter beyond R_vir, including the orbiting matter that carries the backsplash
//!   haloes, so as a count of never-inside haloes it is too high (fractions too low); and
//!   b_field (about 0.6) applied to a density many times the mean is an extrapolation —
//!   haloes tracing the matter one for one (unit bias) would count more.
//!   `val_backsplash_shells` prints both alternatives.
//! * `"correlation"`: the linear two-halo term alone, xi_hm = b_host xi_lin (the previous
//!   default). Linear theory underestimates the correlation within about 1 Mpc, where the
//!   matter around a host is non-linear, so these counts are lower limits there and the
//!   backsplash fractions upper limits.
//! * `"region"` keeps the earliest estimate: the Mo & White 1996 mass function of a
//!   Local-Group-like region spread uniformly over it.
//!
//! The pair tests (`super::pairs`) use the linear two-halo term of both hosts for
//! `"nonlinear"` as for `"correlation"` (the one-halo term of two overlapping hosts is not
//! modelled there).

use serde::{Deserialize, Serialize};

use super::catalog::Catalog;
use crate::error::InvalidValue;
use crate::halo::concentration::{concentration, ConcentrationModel};
use crate::halo::{MassDefinition, Nfw};
use crate::linear::{CorrelationTable, LinearTheory};
use crate::massfunction::bias::halo_bias;
use crate::massfunction::{dn_dlnm_field_mpc3, Region, ShethTormen};

/// How the expected number of field haloes around a host is counted.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum FieldModel {
    /// The mean density of haloes (Sheth & Tormen 1999) weighted by the non-linear
    /// host–matter correlation of Hayashi & White 2008, n(r) = n_bar [1 + b_field xi_hm(r)],
    /// xi_hm = max(rho_NFW(r)/rho_bar_m - 1, b_host xi_lin(r)) (`HostMatterCorrelation`).
    #[default]
    Nonlinear,
    /// The mean density of haloes (Sheth & Tormen 1999) weighted by the linear host–halo
    /// correlation, n(r) = n_bar [1 + b_host b_field xi_lin(r)] (linear halo bias of Tinker
    /// et al. 2010, linear matter correlation function).
    Correlation,
    /// The Mo & White 1996 mass function of a region of given radius and mass, spread
    /// uniformly over it (the earlier estimate).
    Region,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct BacksplashOptions {
    /// Peak-mass range of the haloes counted, Msun.
    #[serde(deserialize_with = "crate::config::pair::exact")]
    pub m_peak_msun: [f64; 2],
    /// Edges of the shells in units of the host's R_vir today (increasing; each pair of
    /// neighbours is one shell, and the whole range is reported too).
    pub shells_over_rvir: Vec<f64>,
    /// The field count: "nonlinear" (default), "correlation" or "region".
    pub field: FieldModel,
    /// For `field = "region"`: radius (comoving Mpc) and mass of the region around the host
    /// (default: a Local-Group-like region, 5e12 Msun within 1.5 Mpc, our stated scenario).
    pub region_radius_mpc: f64,
    pub region_mass_msun: f64,
}

impl Default for BacksplashOptions {
    fn default() -> Self {
        Self {
            m_peak_msun: [1e8, 1e10],
            shells_over_rvir: vec![1.0, 1.5, 2.0, 3.0],
            field: FieldModel::Nonlinear,
            region_radius_mpc: 1.5,
            region_mass_msun: 5e12,
        }
    }
}

/// Largest number of shell edges.
pub const MAX_SHELL_EDGES: usize = 21;

impl BacksplashOptions {
    pub fn problems(&self, prefix: &str) -> Vec<InvalidValue> {
        let mut out = Vec::new();
        let m = self.m_peak_msun;
        if !(m[0] > 0.0 && m[0] < m[1] && m[1].is_finite()) {
            out.push(InvalidValue::new(
                format!("{prefix}m_peak_msun"),
                format!("[{}, {}]", m[0], m[1]),
                "must be an increasing pair of positive masses in Msun",
            ));
        }
        let e = &self.shells_over_rvir;
        let ok = e.len() >= 2
            && e.len() <= MAX_SHELL_EDGES
            && e.iter().all(|x| x.is_finite() && *x >= 1.0 && *x <= 100.0)
            && e.windows(2).all(|w| w[0] < w[1]);
        if !ok {
            out.push(InvalidValue::new(
                format!("{prefix}shells_over_rvir"),
                format!("{e:?}"),
                format!(
                    "must be 2 to {MAX_SHELL_EDGES} increasing shell edges in [1, 100] R_vir (inside R_vir no halo is a backsplash halo), e.g. [1.0, 1.5, 2.0, 3.0]"
                ),
            ));
        }
        if !(self.region_radius_mpc > 0.05 && self.region_radius_mpc <= 50.0) {
            out.push(InvalidValue::new(
                format!("{prefix}region_radius_mpc"),
                self.region_radius_mpc,
                "must be in (0.05, 50] Mpc",
            ));
        }
        if !(self.region_mass_msun > 0.0 && self.region_mass_msun.is_finite()) {
            out.push(InvalidValue::new(
                format!("{prefix}region_mass_msun"),
                self.region_mass_msun,
                "must be a positive mass in Msun",
            ));
        }
        out
    }

    /// Number of shells (edges - 1).
    pub fn n_shells(&self) -> usize {
        self.shells_over_rvir.len().saturating_sub(1)
    }

    /// The whole range [first edge, last edge] in R_vir.
    pub fn range_over_rvir(&self) -> [f64; 2] {
        let e = &self.shells_over_rvir;
        [e[0], e[e.len() - 1]]
    }

    /// Shell index of a distance x = r/R_vir (shells are [lo, hi), the last one closed).
    pub fn shell_of(&self, x: f64) -> Option<usize> {
        let e = &self.shells_over_rvir;
        if !(x >= e[0] && x <= e[e.len() - 1]) {
            return None;
        }
        Some(e.partition_point(|&edge| edge <= x).clamp(1, e.len() - 1) - 1)
    }

    /// The shell of row i of host h when it counts as a backsplash halo: alive, once inside
    /// the host, a distinct halo today (a satellite of a satellite still inside another
    /// subhalo is part of that subhalo, and the field count counts distinct haloes), peak mass
    /// in range.
    pub fn backsplash_shell(&self, cat: &Catalog, h: usize, i: usize) -> Option<usize> {
        if cat.backsplash[i]
            && cat.alive(i)
            && !cat.in_subhalo(i)
            && cat.m_peak_msun[i] >= self.m_peak_msun[0]
            && cat.m_peak_msun[i] <= self.m_peak_msun[1]
        {
            self.shell_of(cat.r_kpc[i] / cat.host_r_vir_kpc[h])
        } else {
            None
        }
    }

    /// Non-linear overdensity of the region: M / (rho_m V) - 1.
    pub fn region_delta(&self, lt: &LinearTheory) -> f64 {
        let v = 4.0 * std::f64::consts::PI / 3.0 * self.region_radius_mpc.powi(3);
        self.region_mass_msun / (lt.rho_m0_msun_mpc3() * v) - 1.0
    }

    /// Mean number density (comoving Mpc^-3) of field haloes in the peak-mass range inside
    /// the region, from the Mo & White 1996 mass function of the region.
    pub fn region_density_mpc3(&self, lt: &LinearTheory) -> f64 {
        let delta = self.region_delta(lt).max(-0.99);
        let region = Region::new(lt, self.region_radius_mpc, delta, 0.0);
        let n = region.n_between(self.m_peak_msun[0], self.m_peak_msun[1]);
        let v_region = 4.0 * std::f64::consts::PI / 3.0 * self.region_radius_mpc.powi(3);
        n / v_region
    }
}

/// The host–matter correlation of Hayashi & White 2008 (MNRAS 388, 2): the larger of the
/// one-halo term, the host's NFW profile continued beyond R_vir over the mean matter density
/// minus one, and the two-halo term b_host xi_lin(r). z = 0, comoving = physical.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HostMatterCorrelation {
    /// The host's NFW profile (virial mass and radius, Dutton & Maccio 2014 c_vir).
    pub nfw: Nfw,
    /// Mean matter density today, Msun/kpc^3.
    pub rho_m_msun_kpc3: f64,
    /// Tinker et al. 2010 bias of the host (`halo_bias`).
    pub b_host: f64,
}

impl HostMatterCorrelation {
    /// For a host of virial mass `m_vir_msun` and radius `r_vir_kpc` today: concentration
    /// from the Dutton & Maccio 2014 c_vir(M, z = 0) relation with the cosmology's WDM factor.
    pub fn new(lt: &LinearTheory, m_vir_msun: f64, r_vir_kpc: f64) -> Self {
        let c = concentration(
            lt,
            ConcentrationModel::DuttonMaccio14,
            m_vir_msun,
            0.0,
            MassDefinition::Vir,
        );
        Self::with_concentration(lt, m_vir_msun, r_vir_kpc, c)
    }

    /// The same with a given virial concentration.
    pub fn with_concentration(lt: &LinearTheory, m_vir_msun: f64, r_vir_kpc: f64, c: f64) -> Self {
        Self {
            nfw: Nfw::from_mass_radius(m_vir_msun, r_vir_kpc, c),
            rho_m_msun_kpc3: lt.rho_m0_msun_mpc3() * 1e-9,
            b_host: halo_bias(lt, m_vir_msun, 0.0),
        }
    }

    /// xi_1h(r) = rho_NFW(r) / rho_bar_m - 1, r in Mpc.
    pub fn one_halo(&self, r_mpc: f64) -> f64 {
        self.nfw.density_msun_kpc3(r_mpc * 1e3) / self.rho_m_msun_kpc3 - 1.0
    }

    /// xi_hm(r) = max(xi_1h(r), b_host xi_lin(r)), given xi_lin(r); r in Mpc.
    pub fn xi(&self, r_mpc: f64, xi_lin: f64) -> f64 {
        self.one_halo(r_mpc).max(self.b_host * xi_lin)
    }
}

/// Expected field counts around hosts of one cosmology (build once per cosmology).
#[derive(Debug, Clone)]
pub struct FieldCounter {
    options: BacksplashOptions,
    model: Model,
}

#[derive(Debug, Clone)]
enum Model {
    Correlation {
        /// Mean comoving density of haloes in the mass range (Mpc^-3).
        n_bar: f64,
        /// Their number-weighted mean bias.
        b_field: f64,
        xi: CorrelationTable,
        /// With the Hayashi & White 2008 one-halo term (`field = "nonlinear"`).
        one_halo: bool,
    },
    Region {
        density: f64,
    },
}

/// Simpson intervals in ln r per shell, and in ln m over the mass range.
const SHELL_STEPS: usize = 32;
const MASS_STEPS: usize = 64;

impl FieldCounter {
    pub fn new(options: &BacksplashOptions, lt: &LinearTheory) -> Self {
        let model = match options.field {
            FieldModel::Region => Model::Region {
                density: options.region_density_mpc3(lt),
            },
            FieldModel::Correlation | FieldModel::Nonlinear => {
                let (l0, l1) = (options.m_peak_msun[0].ln(), options.m_peak_msun[1].ln());
                let h = (l1 - l0) / MASS_STEPS as f64;
                let w = crate::interp::simpson_weights(MASS_STEPS + 1, h);
                let st = ShethTormen::default();
                let (mut n, mut nb) = (0.0, 0.0);
                for (j, wj) in w.iter().enumerate() {
                    let m = (l0 + h * j as f64).exp();
                    let dn = dn_dlnm_field_mpc3(lt, &st, m, 0.0);
                    n += wj * dn;
                    nb += wj * dn * halo_bias(lt, m, 0.0);
                }
                Model::Correlation {
                    n_bar: n,
                    b_field: nb / n,
                    xi: lt.correlation_table().clone(),
                    one_halo: options.field == FieldModel::Nonlinear,
                }
            }
        };
        Self {
            options: options.clone(),
            model,
        }
    }

    /// The field's linear density model: (n_bar in comoving Mpc^-3, b_field, the correlation
    /// table), so that n(r) = n_bar [1 + b_host b_field xi(r)] (for `"nonlinear"` too: its
    /// two-halo term; the pair tests use these parts); for `field = "region"` the region's
    /// uniform density, no bias and no table.
    pub fn density_parts(&self) -> (f64, f64, Option<&CorrelationTable>) {
        match &self.model {
            Model::Correlation {
                n_bar, b_field, xi, ..
            } => (*n_bar, *b_field, Some(xi)),
            Model::Region { density } => (*density, 0.0, None),
        }
    }

    /// Expected field haloes (z = 0, comoving) in each shell around a host of virial mass
    /// m_host_msun and radius r_vir_kpc. For `region` the shells are cut at the region's
    /// radius.
    pub fn counts(&self, lt: &LinearTheory, m_host_msun: f64, r_vir_kpc: f64) -> Vec<f64> {
        let e = &self.options.shells_over_rvir;
        let four_pi = 4.0 * std::f64::consts::PI;
        let host = match &self.model {
            Model::Correlation { .. } => HostMatterCorrelation::new(lt, m_host_msun, r_vir_kpc),
            Model::Region { .. } => HostMatterCorrelation {
                nfw: Nfw::from_mass_radius(1.0, 1.0, 1.0),
                rho_m_msun_kpc3: 1.0,
                b_host: 0.0,
            },
        };
        let b_host = host.b_host;
        e.windows(2)
            .map(|w| {
                let (r1, r2) = (w[0] * r_vir_kpc * 1e-3, w[1] * r_vir_kpc * 1e-3);
                match &self.model {
                    Model::Region { density } => {
                        let r2 = r2.min(self.options.region_radius_mpc);
                        density * four_pi / 3.0 * (r2.powi(3) - r1.powi(3)).max(0.0)
                    }
                    Model::Correlation {
                        n_bar,
                        b_field,
                        xi,
                        one_halo,
                    } => {
                        // n_bar \int 4 pi r^3 [1 + b_f xi_hm(r)] dln r, xi_hm = b_h xi_lin
                        // (linear) or max(xi_1h, b_h xi_lin) (Hayashi & White 2008)
                        let h = (r2 / r1).ln() / SHELL_STEPS as f64;
                        let wt = crate::interp::simpson_weights(SHELL_STEPS + 1, h);
                        let s: f64 = wt
                            .iter()
                            .enumerate()
                            .map(|(j, wj)| {
                                let r = r1 * (h * j as f64).exp();
                                let two = b_host * xi.xi(r);
                                let x = if *one_halo {
                                    two.max(host.one_halo(r))
                                } else {
                                    two
                                };
                                wj * r.powi(3) * (1.0 + b_field * x)
                            })
                            .sum();
                        n_bar * four_pi * s
                    }
                }
            })
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::{Cosmology, LinearOptions};

    fn planck() -> LinearTheory {
        LinearTheory::new(
            Cosmology::from_preset("planck18").unwrap(),
            LinearOptions::default(),
        )
        .unwrap()
    }

    /// \int_{r1}^{r2} 4 pi r^2 w(r) dr by the midpoint rule on 400 cells (an independent
    /// quadrature for the counts' checks).
    fn shell_integral(r1: f64, r2: f64, w: impl Fn(f64) -> f64) -> f64 {
        let n = 400;
        let dr = (r2 - r1) / n as f64;
        (0..n)
            .map(|j| {
                let r = r1 + dr * (j as f64 + 0.5);
                4.0 * std::f64::consts::PI * r * r * dr * w(r)
            })
            .sum()
    }

    /// The region model: the region's Mo & White 1996 count (validated against the
    /// unconditional mass function in tests/validation) per unit volume times each shell's
    /// volume 4 pi/3 (r2^3 - r1^3), r = edge x R_vir, cut at the region's radius.
    #[test]
    fn region_count_is_density_times_shell_volume() {
        let lt = planck();
        let b = BacksplashOptions {
            field: FieldModel::Region,
            shells_over_rvir: vec![1.0, 3.0, 4.0],
            ..Default::default()
        };
        let region = Region::new(&lt, 1.5, b.region_delta(&lt), 0.0);
        let n = region.n_between(1e8, 1e10);
        let v_region = 4.0 * std::f64::consts::PI / 3.0 * 1.5f64.powi(3);
        let vol = |a: f64, c: f64| 4.0 * std::f64::consts::PI / 3.0 * (c.powi(3) - a.powi(3));
        let f = FieldCounter::new(&b, &lt);
        // R_vir = 250 kpc: shells 0.25-0.75 and 0.75-1.0 Mpc
        let c = f.counts(&lt, 1.2e12, 250.0);
        assert!((c[0] / (n / v_region * vol(0.25, 0.75)) - 1.0).abs() < 1e-12);
        assert!((c[1] / (n / v_region * vol(0.75, 1.0)) - 1.0).abs() < 1e-12);
        // R_vir = 450 kpc: the second shell (1.35-1.8 Mpc) is cut at the region's 1.5 Mpc
        let c = f.counts(&lt, 1.2e12, 450.0);
        assert!((c[1] / (n / v_region * vol(1.35, 1.5)) - 1.0).abs() < 1e-12);
    }

    /// The correlation model: the mean density times the volume weighted by 1 + b_h b_f xi,
    /// several times the mean near the host (xi_lin and the bias are checked against colossus
    /// in tests/validation/val_linear.rs). Checked
    /// against an independent quadrature (midpoint rule in r, 400 cells) of the same
    /// integrand with the bias and xi evaluated directly; 1e-4.
    #[test]
    fn correlation_count_is_weighted_volume() {
        let lt = planck();
        let b = BacksplashOptions {
            shells_over_rvir: vec![1.0, 2.0, 80.0, 100.0],
            field: FieldModel::Correlation,
            ..Default::default()
        };
        let f = FieldCounter::new(&b, &lt);
        let c = f.counts(&lt, 1.2e12, 250.0);
        let Model::Correlation { n_bar, b_field, .. } = f.model else {
            panic!()
        };
        let bh = halo_bias(&lt, 1.2e12, 0.0);
        let direct = |r1: f64, r2: f64| {
            n_bar * shell_integral(r1, r2, |r| 1.0 + bh * b_field * lt.power().xi_lin(r))
        };
        let want = direct(0.25, 0.5);
        assert!((c[0] / want - 1.0).abs() < 1e-4, "{} vs {want}", c[0]);
        // 20-25 Mpc, where xi is small: the same quadrature
        let want = direct(20.0, 25.0);
        assert!((c[2] / want - 1.0).abs() < 1e-4, "{} vs {want}", c[2]);
        // near the host the density is several times the mean
        let vol0 = 4.0 * std::f64::consts::PI / 3.0 * (0.5f64.powi(3) - 0.25f64.powi(3));
        assert!(c[0] / (n_bar * vol0) > 3.0);
    }

    /// The non-linear model (Hayashi & White 2008): the same mean density times the volume
    /// weighted by 1 + b_f max(rho_NFW/rho_m - 1, b_h xi_lin), checked against an independent
    /// midpoint quadrature (400 cells) with the NFW density written out from its definition
    /// (rho_s = M / [4 pi r_s^3 m(c)], Dutton & Maccio 2014 c_vir) and xi evaluated directly;
    /// 1e-4. Near the host it counts more than the linear model, far away the same.
    #[test]
    fn nonlinear_count_is_weighted_volume() {
        let lt = planck();
        let b = BacksplashOptions {
            shells_over_rvir: vec![1.0, 2.0, 80.0, 100.0],
            ..Default::default()
        };
        assert_eq!(b.field, FieldModel::Nonlinear);
        let f = FieldCounter::new(&b, &lt);
        let lin = FieldCounter::new(
            &BacksplashOptions {
                field: FieldModel::Correlation,
                ..b.clone()
            },
            &lt,
        );
        let (m, rv) = (1.2e12, 250.0);
        let c = f.counts(&lt, m, rv);
        let cl = lin.counts(&lt, m, rv);
        let (n_bar, b_field, _) = f.density_parts();
        let bh = halo_bias(&lt, m, 0.0);
        let cv = crate::halo::concentration::dutton_maccio14::concentration(
            m * lt.cosmology().h(),
            0.0,
            MassDefinition::Vir,
        )
        .unwrap();
        let rs = rv / cv;
        let mu = (1.0 + cv).ln() - cv / (1.0 + cv);
        let rho_s = m / (4.0 * std::f64::consts::PI * rs.powi(3) * mu);
        let rho_m = lt.cosmology().rho_m_msun_kpc3(0.0);
        let direct = |r1: f64, r2: f64| {
            n_bar
                * shell_integral(r1, r2, |r| {
                    let x = r * 1e3 / rs;
                    let one = rho_s / (x * (1.0 + x) * (1.0 + x)) / rho_m - 1.0;
                    let two = bh * lt.power().xi_lin(r);
                    1.0 + b_field * one.max(two)
                })
        };
        let want = direct(0.25, 0.5);
        assert!((c[0] / want - 1.0).abs() < 1e-4, "{} vs {want}", c[0]);
        let want = direct(20.0, 25.0);
        assert!((c[2] / want - 1.0).abs() < 1e-4, "{} vs {want}", c[2]);
        // near the host the one-halo term wins; at 20-25 Mpc the two-halo term (same as linear)
        assert!(c[0] > 1.5 * cl[0], "{c:?} {cl:?}");
        assert!((c[2] / cl[2] - 1.0).abs() < 1e-12);
    }

    #[test]
    fn shells_and_their_validation() {
        let b = BacksplashOptions::default();
        assert_eq!(b.n_shells(), 3);
        assert_eq!(b.shell_of(0.99), None);
        assert_eq!(b.shell_of(1.0), Some(0));
        assert_eq!(b.shell_of(1.49), Some(0));
        assert_eq!(b.shell_of(1.5), Some(1));
        assert_eq!(b.shell_of(2.5), Some(2));
        assert_eq!(b.shell_of(3.0), Some(2));
        assert_eq!(b.shell_of(3.01), None);
        for bad in [
            vec![1.0],
            vec![2.0, 1.0],
            vec![0.0, 1.0],
            vec![1.0, f64::NAN],
        ] {
            let o = BacksplashOptions {
                shells_over_rvir: bad.clone(),
                ..Default::default()
            };
            let p = o.problems("tests.backsplash.");
            assert_eq!(p.len(), 1, "{bad:?}");
            assert!(p[0]
                .to_string()
                .contains("tests.backsplash.shells_over_rvir"));
        }
    }
}
