//! Tidal stripping of an NFW subhalo.
//!
//! * Structure: NFW at infall (virial mass m_acc, concentration c_acc). After stripping to a
//!   bound fraction x, Vmax and Rmax follow the tidal track (`tidal_track`) and the enclosed
//!   mass is that of the NFW profile with the same Vmax and Rmax, capped at the bound mass
//!   (our closure of the track).
//! * Tidal radius with the centrifugal term (King 1962, AJ 67, 471):
//!   r_t^3 = G m(<r_t) / (Omega^2 - d^2 Phi/dr^2), Omega = |r x v| / r^2, with d^2 Phi/dr^2
//!   along the satellite–host line from the full potential (disc included).
//! * Mass loss (instantaneous-stripping model of Taylor & Babul 2001, in the form of Green,
//!   van den Bosch & Jiang 2021): dm/dt = -alpha_s [m - m(<r_t)] / t_dyn(r), with
//!   t_dyn = sqrt(3 pi / (16 G rho_mean_host(<r))), integrated over a step with m_t the
//!   average of m(<r_t) at the two ends of the step (`follow`),
//!   m -> m_t + (m - m_t) exp(-alpha_s h / t_dyn). No mass is gained back.
//! * alpha_s depends on the concentration at infall (`orbits.stripping_alpha_c_slope` = p,
//!   default 0.5): alpha_s(c) = alpha (c/10)^-p with c held within 5-15 and alpha = 1.15 by
//!   default. An idealised N-body experiment with this tidal radius (six setups,
//!   `val_stripping_rate_vs_nbody`) shows that a c = 8 subhalo loses its mass much faster than
//!   a c = 15 one on the same orbit, whatever its mass, and a c = 5 one faster still;
//!   (1.15, 0.5), fitted on the five of c = 8 and 15 (within 0.82-1.15), predicts the c = 5
//!   one within 0.73-1.23, where one alpha_s for every subhalo (0.75, p = 0: the default
//!   from 2026-12-04 to 2026-12-05, `orbits::SINGLE_RATE`) keeps up to 2.3 times the c = 5
//!   and 8 subhaloes' bound mass, and the physics reference sheet's 0.55 (recalled for that paper's calibration)
//!   kept 1.3-1.7 times the c = 15 subhalo's. The merging times of children stay within their
//!   band with this rate when friction acts on part of the infall mass
//!   (`orbits.friction_mass_infall_weight` 0.35, `friction::friction_mass`; docs/methods.md).

use crate::constants::G_KPC3_PER_MSUN_GYR2 as G;
use crate::halo::nfw::{mu, M_OVER_X_AT_MAX, X_MAX};

use super::tidal_track::vmax_rmax_ratio;

/// The internal structure of one subhalo.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SubhaloStructure {
    pub m_acc: f64,
    /// NFW scale radius at infall, kpc.
    pub r_s_acc: f64,
    /// Concentration at infall (it sets the stripping rate's coefficient, `Stripping`).
    pub c_acc: f64,
    /// Vmax (kpc/Gyr) and Rmax (kpc) at infall.
    pub vmax_acc: f64,
    pub rmax_acc: f64,
}

impl SubhaloStructure {
    /// From virial mass, virial radius (kpc) and concentration at infall.
    pub fn nfw(m_acc: f64, r_vir: f64, c: f64) -> Self {
        let r_s = r_vir / c;
        let m_s = m_acc / mu(c);
        let rmax = X_MAX * r_s;
        let vmax = (G * m_s * mu(X_MAX) / rmax).sqrt();
        Self {
            m_acc,
            r_s_acc: r_s,
            c_acc: c,
            vmax_acc: vmax,
            rmax_acc: rmax,
        }
    }

    /// (Vmax kpc/Gyr, Rmax kpc) at bound mass m.
    #[inline]
    pub fn vmax_rmax(&self, m: f64) -> (f64, f64) {
        let x = (m / self.m_acc).clamp(1e-12, 1.0);
        let (v, r) = vmax_rmax_ratio(x);
        (self.vmax_acc * v, self.rmax_acc * r)
    }

    /// The NFW profile (M_s = 4 pi rho_s r_s^3, r_s) with the Vmax and Rmax of bound mass m.
    /// With Vmax^2 = G M_s m(x_max)/Rmax and the track of `tidal_track`, at bound fraction x
    /// M_s / M_s,acc = (v_ratio^2 r_ratio) = 2^0.5 x (1+x)^-0.5 and r_s / r_s,acc = r_ratio =
    /// 2^-0.3 [x^4 (1+x)^3]^0.1: one logarithm and one exponential (this runs every step).
    #[inline]
    pub fn profile(&self, m: f64) -> (f64, f64) {
        let x = (m / self.m_acc).clamp(1e-12, 1.0);
        let y = 1.0 + x;
        let x2 = x * x;
        let r_ratio = 2f64.powf(-0.3) * (0.1 * (x2 * x2 * y * y * y).ln()).exp();
        let m_ratio = std::f64::consts::SQRT_2 * x / y.sqrt();
        let r_s0 = self.rmax_acc / X_MAX;
        // Vmax^2 = G M_s m(x_max)/Rmax = G M_s M_OVER_X_AT_MAX / r_s
        let m_s0 = self.vmax_acc * self.vmax_acc * r_s0 / (G * M_OVER_X_AT_MAX);
        (m_s0 * m_ratio, r_s0 * r_ratio)
    }

    /// Enclosed bound mass at radius r for bound mass m, and d ln m / d ln r there.
    #[inline]
    pub fn enclosed(&self, r: f64, m: f64) -> (f64, f64) {
        enclosed_in(self.profile(m), r, m)
    }

    /// Tidal radius (kpc) for bound mass m given the denominator Omega^2 - d2Phi/dr2 (Gyr^-2);
    /// Halley iterations in ln r from `guess`. Infinite when the denominator is not positive.
    pub fn tidal_radius(&self, m: f64, denom: f64, guess: f64) -> f64 {
        self.tidal_radius_and_mass(self.profile(m), m, denom, guess)
            .0
    }

    /// Tidal radius (kpc) and the bound mass inside it (Msun), with the profile of bound mass
    /// m already computed. Halley's method on F(u) = ln[r^3 denom / (G m(<r))], u = ln r,
    /// F' = 3 - s, F'' = -ds/du (s = d ln m / d ln r; for NFW ds/d ln x = s (2/(1+x) - s),
    /// zero where the mass is capped), from `guess` (the previous step's radius). The mean
    /// density inside r falls with r, so there is one root and F increases with slope in
    /// (1, 3]. Where the whole bound mass lies inside the root (no stripping now) the root is
    /// r_cap = (G m / denom)^(1/3), which one step from any capped point reaches exactly
    /// (s = 0 there). It stops after a step in u below 0.05 from a point inside the
    /// truncation radius (Halley's error after a step d is of order d^3, so the radius is
    /// good to about 1e-4, far below what the stripping model resolves: one iteration in most
    /// steps, the radius moving by a few per cent from one step to the next; the mass is
    /// corrected to the new radius to second order), or after a step from a capped point that
    /// lands on a capped point (then r_cap is the exact root). A step that crosses the
    /// truncation radius goes on: from a capped point inward r_cap is not the root (before
    /// 2026-12-04 it stopped there, about 1% high in radius and 3-4% in mass, once per
    /// passage through that radius; found by the orbit review), and from an uncapped point
    /// outward Halley's slope 3 - s is not the capped profile's 3 (stopping there left the
    /// radius up to 0.9% high; found by the review of that fix). Tests below. The update
    /// r -> r exp(-d) takes a Taylor series for the exponential when the step is small.
    pub fn tidal_radius_and_mass(
        &self,
        prof: (f64, f64),
        m: f64,
        denom: f64,
        guess: f64,
    ) -> (f64, f64) {
        if denom <= 0.0 {
            return (f64::INFINITY, m);
        }
        let target = denom / G;
        let mut r = if guess.is_finite() && guess > 0.0 {
            guess
        } else {
            (m / target).cbrt()
        };
        let mut at = enclosed_in_x(prof, r, m);
        for _ in 0..60 {
            let (me, s, xr) = at;
            // ln q, by its series near q = 1 (where the iterations end) and exactly otherwise
            let q = r * r * r * target / me;
            let d = q - 1.0;
            let f = if d.abs() < 0.01 {
                d * (1.0 - d * (0.5 - d * (1.0 / 3.0 - d * 0.25)))
            } else {
                q.ln()
            };
            let f1 = 3.0 - s;
            let f2 = -s * (2.0 / (1.0 + xr) - s);
            let newton = f / f1;
            // Halley's correction, bounded so that a far start falls back to Newton's step
            let den = 1.0 - 0.5 * newton * f2 / f1;
            let step = if den > 0.5 { newton / den } else { newton };
            r *= if step.abs() < 0.05 {
                1.0 - step * (1.0 - step * (0.5 - step * (1.0 / 6.0 - step / 24.0)))
            } else {
                (-step).exp()
            };
            // s is zero exactly where, and only where, the mass is capped. ln m(<r) is concave
            // in ln r, so me (1 + x + x^2), x = -s step, bounds the mass at the new radius from
            // above: below m, the new point is surely uncapped and the step's error is Halley's.
            // The mass there to second order in the step: d ln m = s du + ds/du du^2 / 2 with
            // du = -step and ds/du = s (2/(1+x_r) - s), so m = me (1 + x + s step^2/(1+x_r))
            // (the O(step^3) remainder reaches about 1.2e-4 for steps under 0.05; first order,
            // before 2026-12-04's second session, left up to 4e-3: test below).
            if step.abs() < 0.05 && s > 0.0 {
                let x = -s * step;
                if me * (1.0 + x + x * x) < m {
                    return (r, me * (1.0 + x + s * step * step / (1.0 + xr)));
                }
            }
            at = enclosed_in_x(prof, r, m);
            if step.abs() < 0.05 && s > 0.0 && at.1 > 0.0 {
                return (r, at.0);
            }
            if s == 0.0 && at.1 == 0.0 {
                return (r, m);
            }
        }
        (r, at.0)
    }
}

/// Enclosed mass of the profile (M_s, r_s) capped at m, and its logarithmic slope.
#[inline]
fn enclosed_in(prof: (f64, f64), r: f64, m: f64) -> (f64, f64) {
    let (me, s, _) = enclosed_in_x(prof, r, m);
    (me, s)
}

/// `enclosed_in` and x = r/r_s.
#[inline]
fn enclosed_in_x(prof: (f64, f64), r: f64, m: f64) -> (f64, f64, f64) {
    let (m_s, r_s) = prof;
    let x = r / r_s;
    let mu_x = mu(x);
    let me = m_s * mu_x;
    if me >= m {
        (m, 0.0, x)
    } else {
        // d ln mu / d ln x = x^2 / ((1+x)^2 mu)
        (me, x * x / ((1.0 + x) * (1.0 + x) * mu_x.max(1e-300)), x)
    }
}

/// Stripping parameter and time-scale model.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Stripping {
    /// alpha_s of a subhalo whose concentration at infall is `C_REF` (of every subhalo when
    /// `c_slope` = 0).
    pub alpha: f64,
    /// p in alpha_s(c_acc) = alpha (c_acc / C_REF)^(-p) (0: one alpha_s for all).
    pub c_slope: f64,
}

/// The concentration at which `Stripping::alpha` applies as given.
pub const C_REF: f64 = 10.0;

/// The concentrations the N-body setups span (5, 8 and 15): outside them alpha_s(c) is held
/// at its value at the nearer end rather than extrapolated. The range was 8-15 until setup F
/// (c = 5, 2026-12-05): fitted on 8 and 15 only, (1.15, 0.5) predicted F within its band when
/// extrapolated (0.73, 0.95, 1.23 of the N-body's bound mass) and missed it when held at 8
/// (1.00, 1.28, 1.88); docs/methods.md.
pub const C_CALIBRATED: (f64, f64) = (5.0, 15.0);

impl Stripping {
    /// alpha_s for a subhalo of concentration c_acc at infall: alpha (c / C_REF)^(-p), with
    /// c = c_acc held inside `C_CALIBRATED`.
    /// Less concentrated subhaloes are less dense inside, are heated more by each tidal
    /// shock and lose mass faster at the same bound fraction (the N-body setups C and D
    /// against A, B and E, `val_stripping_rate_vs_nbody`).
    #[inline]
    pub fn alpha_for(&self, c_acc: f64) -> f64 {
        if self.c_slope == 0.0 {
            self.alpha
        } else {
            let c = c_acc.clamp(C_CALIBRATED.0, C_CALIBRATED.1);
            self.alpha * (c / C_REF).powf(-self.c_slope)
        }
    }

    /// Host dynamical time at r for host mass M(<r): sqrt(3 pi / (16 G rho_mean)), Gyr.
    #[inline]
    pub fn t_dyn(r: f64, m_host_enclosed: f64) -> f64 {
        let rho = 3.0 * m_host_enclosed / (4.0 * std::f64::consts::PI * r * r * r);
        (3.0 * std::f64::consts::PI / (16.0 * G * rho)).sqrt()
    }

    /// Bound mass after a step of length h with tidal mass m_t held fixed, for the subhalo's
    /// alpha_s (`alpha_for`).
    #[inline]
    pub fn step(alpha: f64, m: f64, m_t: f64, h: f64, t_dyn: f64) -> f64 {
        if m_t >= m {
            return m;
        }
        // exp(-z), by its series where z is small (most steps)
        let z = alpha * h / t_dyn;
        let e = if z < 0.02 {
            1.0 - z * (1.0 - z * (0.5 - z * (1.0 / 6.0 - z / 24.0)))
        } else {
            (-z).exp()
        };
        m_t + (m - m_t) * e
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// For a point-mass host on a circular orbit (Omega^2 = GM/r^3, d2Phi/dr2 = -2GM/r^3) and a
    /// satellite whose mass lies inside r_t, the tidal radius is the Jacobi radius
    /// r (m/3M)^(1/3) (physics reference sheet, sec. 9).
    #[test]
    fn jacobi_radius_for_point_masses() {
        // a satellite whose mass is all inside r_t: structure with a tiny scale radius
        let s = SubhaloStructure::nfw(1e9, 0.01, 10.0);
        let (big_m, r) = (1e12f64, 100.0f64);
        let denom = 3.0 * G * big_m / r.powi(3);
        let rt = s.tidal_radius(1e9, denom, 1.0);
        let want = r * (1e9 / (3.0 * big_m)).cbrt();
        assert!((rt / want - 1.0).abs() < 1e-8, "{rt} vs {want}");
    }

    /// The profile from the closed form equals the one from Vmax and Rmax on the track.
    #[test]
    fn profile_closed_form() {
        let s = SubhaloStructure::nfw(1e9, 20.0, 12.0);
        for x in [1.0, 0.5, 0.1, 1e-2, 1e-3] {
            let (vmax, rmax) = s.vmax_rmax(x * 1e9);
            let r_s = rmax / X_MAX;
            let m_s = vmax * vmax * r_s / (G * M_OVER_X_AT_MAX);
            let (a, b) = s.profile(x * 1e9);
            assert!(
                (a / m_s - 1.0).abs() < 1e-13 && (b / r_s - 1.0).abs() < 1e-13,
                "{x}"
            );
        }
    }

    /// The radius (kpc, 1e-6 to 1e6) where `above` turns true, by bisection in ln r to
    /// round-off (200 halvings).
    fn bisect_ln_r(above: impl Fn(f64) -> bool) -> f64 {
        let (mut a, mut b) = (1e-6f64, 1e6f64);
        for _ in 0..200 {
            let c = (a * b).sqrt();
            if above(c) {
                b = c
            } else {
                a = c
            }
        }
        (a * b).sqrt()
    }

    /// The solver's (radius, mass) against the root: 2e-4 in radius, 5e-4 in the enclosed
    /// mass (the documented precision).
    fn assert_root(got: (f64, f64), prof: (f64, f64), m: f64, root: f64, what: &str) {
        let (rt, mt) = got;
        assert!((rt / root - 1.0).abs() < 2e-4, "{what}: {rt} vs {root}");
        let want = enclosed_in(prof, root, m).0;
        assert!(
            (mt / want - 1.0).abs() < 5e-4,
            "{what}: mass {mt} vs {want}"
        );
    }

    /// The tidal radius from the previous step's radius against bisection to 1e-12 (the
    /// root of r^3 denom = G m(<r)), for guesses off by up to a factor 2 and profiles from
    /// unstripped to stripped: within 2e-4 (the documented precision).
    #[test]
    fn tidal_radius_against_bisection() {
        let s = SubhaloStructure::nfw(1e9, 25.0, 10.0);
        for fb in [1.0, 0.3, 0.03] {
            let m = fb * 1e9;
            let prof = s.profile(m);
            for denom in [1e-3, 1e-1, 10.0, 1e3] {
                let root = bisect_ln_r(|r| r.powi(3) * denom / G > enclosed_in(prof, r, m).0);
                for g in [0.5, 0.9, 1.0, 1.1, 2.0] {
                    let got = s.tidal_radius_and_mass(prof, m, denom, g * root);
                    assert_root(got, prof, m, root, &format!("fb {fb} denom {denom} g {g}"));
                }
            }
        }
    }

    /// The mass returned with the radius is the enclosed mass at that radius: for guesses
    /// within 5% of the root (where one Halley step ends the iterations and the mass is
    /// extrapolated from the start, not recomputed) within 3e-4 of `enclosed_in` at the
    /// returned radius (the second-order extrapolation's O(step^3) remainder: measured
    /// 1.2e-4; to first order, as before, it reached 4.2e-3 here).
    #[test]
    fn tidal_mass_matches_the_returned_radius() {
        let s = SubhaloStructure::nfw(1e9, 25.0, 10.0);
        let mut worst = 0f64;
        for fb in [1.0, 0.3, 0.03] {
            let m = fb * 1e9;
            let prof = s.profile(m);
            for denom in [1e-3, 1e-1, 10.0, 1e3] {
                let root = bisect_ln_r(|r| r.powi(3) * denom / G > enclosed_in(prof, r, m).0);
                for k in 0..=20 {
                    let g = 0.951 + 0.0049 * k as f64;
                    let (rt, mt) = s.tidal_radius_and_mass(prof, m, denom, g * root);
                    worst = worst.max((mt / enclosed_in(prof, rt, m).0 - 1.0).abs());
                }
            }
        }
        assert!(worst < 3e-4, "worst relative mass error {worst:e}");
    }

    /// A guess just outside the truncation radius of the stripped profile (where the
    /// enclosed mass reaches the bound mass) with the root just inside it: the first step
    /// lands on r_cap = (G m / denom)^(1/3), which lies inside the truncation radius and is
    /// not the root there. The solver must go on from it, not stop (before the fix of
    /// 2026-12-04 it returned r_cap, about 1% high in radius and 3-4% high in mass, as the
    /// orbit review found). Against bisection, as above.
    #[test]
    fn tidal_radius_with_the_root_just_inside_the_truncation_radius() {
        let s = SubhaloStructure::nfw(1e9, 25.0, 10.0);
        for fb in [0.5, 0.1, 0.01] {
            let m = fb * 1e9;
            let prof = s.profile(m);
            // truncation radius: enclosed NFW mass of the stripped profile equals m
            let r_trunc = bisect_ln_r(|r| prof.0 * mu(r / prof.1) > m);
            for (inside, outside) in [(0.99, 1.01), (0.97, 1.002), (0.995, 1.04)] {
                let root = inside * r_trunc;
                let denom = G * enclosed_in(prof, root, m).0 / root.powi(3);
                let got = s.tidal_radius_and_mass(prof, m, denom, outside * r_trunc);
                assert_root(
                    got,
                    prof,
                    m,
                    root,
                    &format!("fb {fb} root {inside} guess {outside}"),
                );
            }
        }
    }

    /// The mirror case: the root just outside the truncation radius (where the mass is capped
    /// and the root is r_cap) and the guess just inside. A short Halley step with the
    /// uncapped slope overshoots into the capped region; the solver must go on from there
    /// (before the second fix of 2026-12-04 it stopped, 0.25-0.6% high in radius here).
    #[test]
    fn tidal_radius_with_the_root_just_outside_the_truncation_radius() {
        let s = SubhaloStructure::nfw(1e9, 25.0, 10.0);
        for fb in [0.5, 0.1, 0.01] {
            let m = fb * 1e9;
            let prof = s.profile(m);
            let r_trunc = bisect_ln_r(|r| prof.0 * mu(r / prof.1) > m);
            for (outside, inside) in [(1.01, 0.99), (1.03, 0.97), (1.02, 0.98)] {
                let root = outside * r_trunc;
                let denom = G * m / root.powi(3);
                let got = s.tidal_radius_and_mass(prof, m, denom, inside * r_trunc);
                assert_root(
                    got,
                    prof,
                    m,
                    root,
                    &format!("fb {fb} root {outside} guess {inside}"),
                );
            }
        }
    }

    #[test]
    fn mass_loss_relaxes_to_the_tidal_mass() {
        assert_eq!(Stripping::step(0.75, 1.0, 2.0, 1.0, 1.0), 1.0);
        let m = Stripping::step(0.75, 1.0, 0.5, 100.0, 1.0);
        assert!((m - 0.5).abs() < 1e-12);
        let m = Stripping::step(0.75, 1.0, 0.5, 1.0, 1.0);
        assert!((m - (0.5 + 0.5 * (-0.75f64).exp())).abs() < 1e-12);
    }

    /// alpha_s(c) = alpha (c/10)^-p inside the calibrated range, held at its ends outside;
    /// p = 0 gives alpha for every c.
    #[test]
    fn alpha_follows_the_concentration_inside_the_calibrated_range() {
        let s = Stripping {
            alpha: 1.15,
            c_slope: 0.5,
        };
        assert!((s.alpha_for(10.0) - 1.15).abs() < 1e-15);
        // (8/10)^-0.5 = 1.118034, (15/10)^-0.5 = 0.816497, (5/10)^-0.5 = sqrt(2)
        assert!((s.alpha_for(8.0) - 1.15 * 1.118_034).abs() < 1e-6);
        assert!((s.alpha_for(15.0) - 1.15 * 0.816_497).abs() < 1e-6);
        assert!((s.alpha_for(5.0) - 1.15 * std::f64::consts::SQRT_2).abs() < 1e-12);
        assert_eq!(s.alpha_for(3.0), s.alpha_for(5.0));
        assert_eq!(s.alpha_for(40.0), s.alpha_for(15.0));
        assert!(s.alpha_for(9.0) < s.alpha_for(8.5));
        let flat = Stripping {
            alpha: 0.9,
            c_slope: 0.0,
        };
        assert_eq!(flat.alpha_for(4.0), 0.9);
    }
}
