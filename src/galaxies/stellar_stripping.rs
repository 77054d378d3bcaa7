//! Tidal stripping of a satellite's stars.
//!
//! Stars sit deep in their subhalo's potential, so tides remove dark matter long before they
//! reach the stars; once the subhalo has lost nearly everything, they take the stars too.
//! The model is that of Errani et al. 2022 (MNRAS 511, 6001; journal reference recalled):
//!
//! * the stars are a massless tracer of the NFW subhalo at infall, with the distribution of
//!   binding energies dN/de = e^3 exp[-(e/e_s)^3] (their eq. 13 with alpha = beta = 3, a
//!   profile close to exponential), e = 1 - E/Phi_0, Phi_0 the potential at the centre
//!   (e = 0: the most bound, e = 1: unbound);
//! * tides keep the stars with f(e) = 1/[1 + (0.85 e/e_mxt)^12] (their eq. 9), where the
//!   truncation energy follows the mass left inside r_max: e_mxt = 0.77 (M_mx/M_mx0)^0.43
//!   (their eq. 10; fitted for M_mx/M_mx0 < 1/3, eq. 9 for < 1/10).
//!
//! The equations were read from the authors' public worked example of them. The fraction of
//! stars kept is the integral of f dN/de over that of dN/de (`bound_star_fraction`). Above
//! M_mx/M_mx0 = 1/3 the fit is used beyond its range, divided by its value at no mass loss
//! so that an unstripped galaxy keeps all its stars (for galaxies of half-light radius below
//! r_max/4 that value is above 0.995, so the division changes nothing that matters).
//!
//! The scale energy e_s is set by the galaxy's size: the 3D half-light radius of the tracer
//! in units of r_max (`half_light_radius_over_rmax`) is computed here from the isotropic
//! distribution function that has this dN/de in the NFW potential, by summing, energy by
//! energy, the fraction of that energy's phase-space volume inside a radius, and inverted by
//! table (`scale_energy_for_size`). Tested against a second route (the distribution function,
//! the density and its projection with scipy; `tests/reference/stellar_stripping.json`).
//! The authors' worked example says that e_s = 10^-0.32 gives R_h0/r_mx0 = 1/4; both routes
//! here give 0.50 projected (0.67 in 3D) for it, and 1/4 projected at e_s = 10^-0.48. We use
//! our own computation.
//!
//! The galaxy's size at formation is r_1/2 = 0.015 R_200c (3D half-mass radius; Kravtsov 2013,
//! ApJ 764, L31, abstract: scatter about 0.2 dex over eight decades in stellar mass) of its
//! halo at the peak mass, with log-normal scatter. The mass left inside r_max follows the
//! subhalo's tidal track: M_mx/M_mx0 = (V_max/V_max0)^2 (r_max/r_max0) = 2^0.5 x (1 + x)^-0.5
//! at bound fraction x (Penarrubia et al. 2010; `orbits::tidal_track`).

use std::sync::OnceLock;

use crate::orbits::tidal_track::vmax_rmax_ratio;

/// r_max / r_s of an NFW profile (the root of x^2/(1+x)^2 = mu(x)).
pub const NFW_X_MAX: f64 = 2.162_581_587_064_61;

/// Energies of the grid, from `E_MIN` to 1 (the tracer below carries a negligible count for
/// every scale energy the table holds: < 1e-9 of it for e_s >= 10^-2.6).
const E_MIN: f64 = 1e-5;
const N_E: usize = 481;

/// Errani et al. 2022 eq. 10: the truncation energy at the fraction of the mass inside r_max
/// that is left.
pub fn truncation_energy(mmx_ratio: f64) -> f64 {
    0.77 * mmx_ratio.powf(0.43)
}

/// Errani et al. 2022 eq. 13 (alpha = beta = 3), unnormalised.
#[inline]
fn energy_distribution(e: f64, e_s: f64) -> f64 {
    let u = e / e_s;
    e * e * e * (-(u * u * u)).exp()
}

/// The grid: ln e uniform from ln E_MIN to 0, with Simpson weights for integrals over e
/// (weights include the Jacobian de = e d ln e).
fn energy_grid() -> &'static (Vec<f64>, Vec<f64>) {
    static GRID: OnceLock<(Vec<f64>, Vec<f64>)> = OnceLock::new();
    GRID.get_or_init(|| {
        let (a, b) = (E_MIN.ln(), 0.0);
        let h = (b - a) / (N_E - 1) as f64;
        let e: Vec<f64> = (0..N_E).map(|i| (a + h * i as f64).exp()).collect();
        let w = (0..N_E)
            .map(|i| {
                let s = if i == 0 || i == N_E - 1 {
                    1.0
                } else if i % 2 == 1 {
                    4.0
                } else {
                    2.0
                };
                s * h / 3.0 * e[i]
            })
            .collect();
        (e, w)
    })
}

/// The fraction of eq. 9 as published: the integral of f dN/de over that of dN/de, 0 < e < 1,
/// without the normalisation at no mass loss of `bound_star_fraction`.
pub fn truncated_fraction(e_s: f64, mmx_ratio: f64) -> f64 {
    let (e, w) = energy_grid();
    let emxt = truncation_energy(mmx_ratio);
    let (mut kept, mut total) = (0.0, 0.0);
    for (&ei, &wi) in e.iter().zip(w) {
        let n = energy_distribution(ei, e_s) * wi;
        let q = 0.85 * ei / emxt;
        let q2 = q * q;
        let q4 = q2 * q2;
        kept += n / (1.0 + q4 * q4 * q4);
        total += n;
    }
    kept / total
}

/// Fraction of the stars still bound once the mass inside r_max has fallen to `mmx_ratio`
/// of its value at infall, for the scale energy `e_s` (Errani et al. 2022 eqs. 9, 10, 13;
/// normalised to 1 at no mass loss, module notes). 1 for `mmx_ratio` >= 1.
pub fn bound_star_fraction(e_s: f64, mmx_ratio: f64) -> f64 {
    if mmx_ratio >= 1.0 {
        return 1.0;
    }
    if mmx_ratio <= 0.0 {
        return 0.0;
    }
    (truncated_fraction(e_s, mmx_ratio) / truncated_fraction(e_s, 1.0)).min(1.0)
}

/// -Phi(r)/|Phi_0| of an NFW profile at r/r_s = x.
#[inline]
fn psi(x: f64) -> f64 {
    if x < 1e-6 {
        1.0 - 0.5 * x + x * x / 3.0
    } else {
        x.ln_1p() / x
    }
}

/// Apocentre (r/r_s) at energy e: psi(x) = 1 - e.
fn apocentre(e: f64) -> f64 {
    let target = 1.0 - e;
    let (mut lo, mut hi) = ((1e-12f64).ln(), (1e12f64).ln());
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if psi(mid.exp()) > target {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    (0.5 * (lo + hi)).exp()
}

/// Phase-space volume per unit s at energy e (apocentre `xe`), x = xe (1 - s^2): the radial
/// weight x^2 sqrt(psi(x) - 1 + e) dx/ds, smooth at the apocentre (s = 0).
#[inline]
fn phase_volume_density(xe: f64, e: f64, s: f64) -> f64 {
    let x = xe * (1.0 - s * s);
    x * x * (psi(x) - 1.0 + e).max(0.0).sqrt() * 2.0 * xe * s
}

/// Number of nodes in s along each energy's radial range (x = x_E (1 - s^2)).
const N_S: usize = 129;

/// For each energy of the grid: its apocentre and the cumulative phase-space volume inside
/// x = x_E (1 - s^2) from the apocentre inwards, on a uniform grid in s (s = 0 at the
/// apocentre), normalised to 1 at the centre. With this substitution the integrand
/// x^2 sqrt(psi(x) - 1 + e) dx is smooth at the apocentre.
struct PhaseVolume {
    apo: Vec<f64>,
    /// cum[i][j]: fraction of energy i's phase volume at s < s_j, i.e. beyond x_j.
    cum: Vec<Vec<f64>>,
}

fn phase_volume() -> &'static PhaseVolume {
    static PV: OnceLock<PhaseVolume> = OnceLock::new();
    PV.get_or_init(|| {
        let (e, _) = energy_grid();
        let mut apo = Vec::with_capacity(e.len());
        let mut cum = Vec::with_capacity(e.len());
        let ds = 1.0 / (N_S - 1) as f64;
        for &ei in e {
            // the last node (e = 1) is unbound: keep its apocentre finite (its stars lie beyond
            // any half-light radius the table holds)
            let ee = ei.min(1.0 - 1e-9);
            let xe = apocentre(ee);
            let f = |s: f64| phase_volume_density(xe, ee, s);
            let mut c = vec![0.0; N_S];
            let mut prev = f(0.0);
            for j in 1..N_S {
                // Simpson on each interval with its midpoint
                let (s0, s1) = ((j - 1) as f64 * ds, j as f64 * ds);
                let mid = f(0.5 * (s0 + s1));
                let next = f(s1);
                c[j] = c[j - 1] + ds / 6.0 * (prev + 4.0 * mid + next);
                prev = next;
            }
            let total = c[N_S - 1];
            for v in &mut c {
                *v /= total;
            }
            apo.push(xe);
            cum.push(c);
        }
        PhaseVolume { apo, cum }
    })
}

/// Fraction of the tracer of scale energy `e_s` inside radius x (units of r_s), 3D.
fn fraction_inside(e_s: f64, x: f64) -> f64 {
    let (e, w) = energy_grid();
    let pv = phase_volume();
    let ds = 1.0 / (N_S - 1) as f64;
    let (mut inside, mut total) = (0.0, 0.0);
    for i in 0..e.len() {
        let n = energy_distribution(e[i], e_s) * w[i];
        total += n;
        let xe = pv.apo[i];
        if x >= xe {
            inside += n;
            continue;
        }
        // x = xe (1 - s^2): the part inside x is beyond s_x
        let s = (1.0 - x / xe).sqrt();
        let t = s / ds;
        let j = (t.floor() as usize).min(N_S - 2);
        let fr = t - j as f64;
        let beyond = pv.cum[i][j] * (1.0 - fr) + pv.cum[i][j + 1] * fr;
        inside += n * (1.0 - beyond);
    }
    inside / total
}

/// 3D half-light radius of the tracer of scale energy `e_s` in units of the NFW's r_max.
pub fn half_light_radius_over_rmax(e_s: f64) -> f64 {
    let (mut lo, mut hi) = ((1e-5f64).ln(), (1e3f64).ln());
    for _ in 0..60 {
        let mid = 0.5 * (lo + hi);
        if fraction_inside(e_s, mid.exp()) < 0.5 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    (0.5 * (lo + hi)).exp() / NFW_X_MAX
}

/// Projected (on the sky) half-light radius of the tracer in units of r_max, by integrating
/// each energy's radial distribution against the fraction of a shell inside a cylinder.
/// Slower than the 3D radius; for tests and documentation.
pub fn projected_half_light_radius_over_rmax(e_s: f64) -> f64 {
    let (e, w) = energy_grid();
    let fine = 2049;
    let ds = 1.0 / (fine - 1) as f64;
    // (weight, radius) nodes of the whole tracer
    let mut nodes: Vec<(f64, f64)> = Vec::with_capacity(e.len() * fine);
    for i in 0..e.len() {
        let n = energy_distribution(e[i], e_s) * w[i];
        if n <= 0.0 {
            continue;
        }
        let ee = e[i].min(1.0 - 1e-9);
        let xe = apocentre(ee);
        let f = |s: f64| phase_volume_density(xe, ee, s);
        let vals: Vec<f64> = (0..fine).map(|j| f(j as f64 * ds)).collect();
        let norm: f64 = vals.iter().sum::<f64>() - 0.5 * (vals[0] + vals[fine - 1]);
        for (j, v) in vals.iter().enumerate() {
            let s = j as f64 * ds;
            let wt = if j == 0 || j == fine - 1 { 0.5 } else { 1.0 };
            nodes.push((n * wt * v / norm, xe * (1.0 - s * s)));
        }
    }
    let total: f64 = nodes.iter().map(|p| p.0).sum();
    let inside = |r: f64| -> f64 {
        nodes
            .iter()
            .map(|&(m, x)| {
                if x <= r {
                    m
                } else {
                    m * (1.0 - (1.0 - (r / x) * (r / x)).sqrt())
                }
            })
            .sum::<f64>()
            / total
    };
    let (mut lo, mut hi) = ((1e-5f64).ln(), (1e3f64).ln());
    for _ in 0..50 {
        let mid = 0.5 * (lo + hi);
        if inside(mid.exp()) < 0.5 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    (0.5 * (lo + hi)).exp() / NFW_X_MAX
}

/// The table log10 e_s -> log10 (r_1/2 / r_max), increasing.
const LOG_ES_LO: f64 = -2.6;
const LOG_ES_HI: f64 = -0.1;
const N_TABLE: usize = 126;

fn size_table() -> &'static Vec<(f64, f64)> {
    static T: OnceLock<Vec<(f64, f64)>> = OnceLock::new();
    T.get_or_init(|| {
        (0..N_TABLE)
            .map(|k| {
                let les = LOG_ES_LO + (LOG_ES_HI - LOG_ES_LO) * k as f64 / (N_TABLE - 1) as f64;
                (les, half_light_radius_over_rmax(10f64.powf(les)).log10())
            })
            .collect()
    })
}

/// The scale energy e_s whose tracer has the 3D half-light radius `r_half_over_rmax` (in
/// units of r_max), by linear interpolation in the logarithms of the table; held at the
/// table's ends (r_1/2 from 0.0015 r_max, about r_max/660, to 2.3 r_max: a larger galaxy is
/// stripped as one of 2.3 r_max, so too little).
pub fn scale_energy_for_size(r_half_over_rmax: f64) -> f64 {
    let t = size_table();
    let y = r_half_over_rmax.log10();
    if y <= t[0].1 {
        return 10f64.powf(t[0].0);
    }
    if y >= t[t.len() - 1].1 {
        return 10f64.powf(t[t.len() - 1].0);
    }
    let k = t.partition_point(|p| p.1 < y).clamp(1, t.len() - 1);
    let (a, b) = (t[k - 1], t[k]);
    10f64.powf(a.0 + (b.0 - a.0) * (y - a.1) / (b.1 - a.1))
}

/// M_mx/M_mx0 on the tidal track at bound fraction x = m_bound/m_infall.
pub fn mass_inside_rmax_ratio(x: f64) -> f64 {
    let (v, r) = vmax_rmax_ratio(x.clamp(1e-12, 1.0));
    v * v * r
}

/// Fraction of its stars a galaxy of 3D half-light radius `r_half_over_rmax0` (in units of
/// its subhalo's r_max at infall) keeps at bound fraction x = m_bound/m_infall.
pub fn kept_star_fraction(r_half_over_rmax0: f64, x: f64) -> f64 {
    if x >= 1.0 {
        return 1.0;
    }
    bound_star_fraction(
        scale_energy_for_size(r_half_over_rmax0),
        mass_inside_rmax_ratio(x),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nfw_x_max_is_the_peak_of_the_circular_velocity() {
        let mu = |x: f64| x.ln_1p() - x / (1.0 + x);
        let g = |x: f64| x * x / ((1.0 + x) * (1.0 + x)) - mu(x);
        assert!(g(NFW_X_MAX).abs() < 1e-12);
    }

    #[test]
    fn more_stars_are_kept_when_less_mass_is_lost_or_the_galaxy_is_smaller() {
        let es = scale_energy_for_size(0.1);
        let mut last = 0.0;
        for m in [1e-4, 1e-3, 1e-2, 0.1, 0.3, 0.9] {
            let f = bound_star_fraction(es, m);
            assert!(f > last && f <= 1.0, "{m}: {f}");
            last = f;
        }
        assert!(
            kept_star_fraction(0.03, 0.01) > kept_star_fraction(0.1, 0.01),
            "a smaller galaxy is more deeply embedded"
        );
        assert_eq!(kept_star_fraction(0.1, 1.0), 1.0);
    }

    #[test]
    fn the_size_table_inverts() {
        for r in [0.01, 0.05, 0.2, 0.6] {
            let es = scale_energy_for_size(r);
            let back = half_light_radius_over_rmax(es);
            assert!((back / r - 1.0).abs() < 2e-3, "{r}: {back}");
        }
    }
}
