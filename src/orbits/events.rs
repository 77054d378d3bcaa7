//! Events along an orbit in the host, measured on the subhalo's position relative to the
//! host's centre (its own orbit for a subhalo of the host, its parent's orbit plus its own
//! offset for a satellite of a satellite): pericentres and apocentres (cubic Hermite
//! interpolation of r(t) between accepted steps), crossings of the host's evolving virial
//! radius, the last infall (the last crossing of R_vir made while moving inward, v_r < 0: the
//! virial radius growing outward past a subhalo is not an infall), and the first pericentre
//! inside the disc cut of the pericentre model.

use super::integrate::State;

#[inline]
fn norm(a: [f64; 3]) -> f64 {
    (a[0] * a[0] + a[1] * a[1] + a[2] * a[2]).sqrt()
}

#[inline]
fn radial_velocity(y: &State) -> f64 {
    let r = norm([y[0], y[1], y[2]]);
    (y[0] * y[3] + y[1] * y[4] + y[2] * y[5]) / r
}

/// Cubic Hermite interpolation of r(s), s in [0, 1], from end values and derivatives
/// (dr/ds = h v_r); returns the extremum inside (s, r) if there is one, its radius kept within
/// what an extremum between the two ends can be: a minimum in [0, min(r0, r1)], a maximum at
/// least max(r0, r1). (With loose tolerances the cubic can dip below zero on a nearly radial
/// orbit through the centre.)
pub(crate) fn hermite_extremum(r0: f64, r1: f64, d0: f64, d1: f64) -> Option<(f64, f64)> {
    let (lo, hi) = (r0.min(r1), r0.max(r1));
    hermite_extremum_raw(r0, r1, d0, d1).map(|(s, r)| {
        // a minimum where dr/ds turns from negative to positive
        if d0 < 0.0 {
            (s, r.clamp(0.0, lo))
        } else {
            (s, r.max(hi))
        }
    })
}

/// When no extremum is found inside a step whose radial velocity changes sign (v_r exactly 0
/// at an end, rounding): the end that is the extremum sought, as (s, r) with s = 0 or 1: the
/// smaller radius for a pericentre (`vr0` < 0), the larger for an apocentre.
fn extremum_at_an_end(r0: f64, r1: f64, vr0: f64) -> (f64, f64) {
    if (vr0 < 0.0) == (r0 < r1) {
        (0.0, r0)
    } else {
        (1.0, r1)
    }
}

/// The cubic's extremum itself.
fn hermite_extremum_raw(r0: f64, r1: f64, d0: f64, d1: f64) -> Option<(f64, f64)> {
    // r(s) = a s^3 + b s^2 + c s + d
    let a = 2.0 * r0 - 2.0 * r1 + d0 + d1;
    let b = -3.0 * r0 + 3.0 * r1 - 2.0 * d0 - d1;
    let c = d0;
    let eval = |s: f64| ((a * s + b) * s + c) * s + r0;
    // r'(s) = 3a s^2 + 2b s + c = 0
    let roots: Vec<f64> = if a.abs() < 1e-14 * (b.abs() + c.abs()) {
        if b.abs() > 0.0 {
            vec![-c / (2.0 * b)]
        } else {
            vec![]
        }
    } else {
        let disc = 4.0 * b * b - 12.0 * a * c;
        if disc < 0.0 {
            vec![]
        } else {
            let q = disc.sqrt();
            vec![(-2.0 * b - q) / (6.0 * a), (-2.0 * b + q) / (6.0 * a)]
        }
    };
    roots
        .into_iter()
        .filter(|s| (0.0..=1.0).contains(s))
        .map(|s| (s, eval(s)))
        .next()
}

/// Events of one subhalo in the host, from the time it (or its group) entered the host.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Tracker {
    pub n_peri: u32,
    pub t_peri_first: f64,
    pub r_peri_first: f64,
    pub r_peri_min: f64,
    pub t_peri_last: f64,
    pub r_peri_last: f64,
    pub r_apo_last: f64,
    /// Last crossing of R_vir made while moving inward (NaN: none yet).
    pub t_last_infall: f64,
    /// The first such crossing (or the start, when it starts inside).
    pub t_first_infall: f64,
    /// Crossings of R_vir in either direction, the entry counted as the first when the
    /// subhalo starts inside: odd means inside at the end.
    pub n_cross: u32,
    pub been_inside: bool,
    pub t_disrupt_peri: f64,
    /// The next step is the first after the infall at the virial radius.
    at_start: bool,
}

impl Tracker {
    fn empty() -> Self {
        Self {
            n_peri: 0,
            t_peri_first: f64::NAN,
            r_peri_first: f64::NAN,
            r_peri_min: f64::NAN,
            t_peri_last: f64::NAN,
            r_peri_last: f64::NAN,
            r_apo_last: f64::NAN,
            t_last_infall: f64::NAN,
            t_first_infall: f64::NAN,
            n_cross: 0,
            been_inside: false,
            t_disrupt_peri: f64::NAN,
            at_start: false,
        }
    }

    /// A subhalo of the host at its infall through the host's virial radius at `t_start`,
    /// moving inward: that is the first crossing (counted here, not left to the round-off of
    /// r - R_vir = 0 at the start).
    pub fn at_infall(t_start: f64) -> Self {
        Self {
            t_last_infall: t_start,
            t_first_infall: t_start,
            n_cross: 1,
            at_start: true,
            ..Self::empty()
        }
    }

    /// A satellite of a satellite when its group enters the host at `t`, at distance `r` from
    /// the host's centre (R_vir = `r_vir` then): inside, the group's entry is its first
    /// crossing and infall; outside, it has not crossed yet.
    pub fn with_group(t: f64, r: f64, r_vir: f64) -> Self {
        if r < r_vir {
            Self {
                t_last_infall: t,
                t_first_infall: t,
                n_cross: 1,
                been_inside: true,
                ..Self::empty()
            }
        } else {
            Self::empty()
        }
    }

    /// The last infall into the host: the last inward crossing of its evolving R_vir; for a
    /// satellite of a satellite that was inside R_vir when its group entered, or was engulfed
    /// by R_vir's growth, and has not crossed inward since, the group's entry (`t_first`, the
    /// tree's first infall); NaN for one that has never been inside R_vir (it has not fallen
    /// into the host, whatever its group did).
    pub fn last_infall(&self, t_first: f64) -> f64 {
        if !self.t_last_infall.is_nan() {
            self.t_last_infall.max(t_first)
        } else if self.been_inside {
            t_first
        } else {
            f64::NAN
        }
    }

    /// Look for events between two accepted steps, from the host-centred states y0 at t0 and
    /// y1 at t1 (rv0, rv1: the host's R_vir at t0 and t1; r_cut: the disc cut, kpc).
    #[allow(clippy::too_many_arguments)]
    pub fn step(
        &mut self,
        t0: f64,
        y0: &State,
        t1: f64,
        y1: &State,
        rv0: f64,
        rv1: f64,
        r_cut: f64,
    ) {
        let h = t1 - t0;
        let r0 = norm([y0[0], y0[1], y0[2]]);
        let r1 = norm([y1[0], y1[1], y1[2]]);
        let vr0 = radial_velocity(y0);
        let vr1 = radial_velocity(y1);
        if (vr0 < 0.0 && vr1 >= 0.0) || (vr0 > 0.0 && vr1 <= 0.0) {
            let (s, r) = hermite_extremum(r0, r1, vr0 * h, vr1 * h)
                .unwrap_or_else(|| extremum_at_an_end(r0, r1, vr0));
            let t = t0 + s * h;
            if vr0 < 0.0 {
                self.n_peri += 1;
                if self.n_peri == 1 {
                    self.t_peri_first = t;
                    self.r_peri_first = r;
                }
                self.r_peri_min = if self.r_peri_min.is_nan() {
                    r
                } else {
                    self.r_peri_min.min(r)
                };
                self.t_peri_last = t;
                self.r_peri_last = r;
                if r < r_cut && self.t_disrupt_peri.is_nan() {
                    self.t_disrupt_peri = t;
                }
            } else {
                self.r_apo_last = r;
            }
        }
        let (d0, d1) = (r0 - rv0, r1 - rv1);
        if std::mem::take(&mut self.at_start) {
            // leaving the infall point: its crossing is already counted, unless the first
            // step ends outside again (the virial radius was only touched)
            if d1 < 0.0 {
                self.been_inside = true;
            } else {
                self.n_cross = 0;
            }
            return;
        }
        if d1 < 0.0 || d0 < 0.0 {
            self.been_inside = true;
        }
        if d0 >= 0.0 && d1 < 0.0 {
            // inward crossing of R_vir (linear interpolation of r - R_vir); an infall only if
            // the subhalo moved inward there (interpolated v_r < 0), not if R_vir grew past it
            self.n_cross += 1;
            let f = d0 / (d0 - d1);
            if vr0 + f * (vr1 - vr0) < 0.0 {
                self.t_last_infall = t0 + h * f;
                if self.t_first_infall.is_nan() {
                    self.t_first_infall = self.t_last_infall;
                }
            }
        } else if d0 < 0.0 && d1 >= 0.0 {
            self.n_cross += 1;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A subhalo just outside R_vir, still moving outward, while R_vir grows past it: a
    /// crossing (the parity of the count stays right), not an infall.
    /// The fallback end: a pericentre takes the smaller radius, an apocentre the larger
    /// (review 2026-12-04: an apocentre took the smaller one).
    #[test]
    fn extremum_at_an_end_picks_the_right_end() {
        assert_eq!(extremum_at_an_end(10.0, 12.0, -1.0), (0.0, 10.0));
        assert_eq!(extremum_at_an_end(12.0, 10.0, -1.0), (1.0, 10.0));
        assert_eq!(extremum_at_an_end(10.0, 12.0, 1.0), (1.0, 12.0));
        assert_eq!(extremum_at_an_end(12.0, 10.0, 1.0), (0.0, 12.0));
    }

    #[test]
    fn growing_virial_radius_is_not_an_infall() {
        let mut tr = Tracker::at_infall(1.0);
        // first step: inside (moving in)
        let y0 = [99.0, 0.0, 0.0, -10.0, 0.0, 0.0];
        let y1 = [95.0, 0.0, 0.0, -5.0, 0.0, 0.0];
        tr.step(1.0, &y0, 1.1, &y1, 100.0, 100.0, 20.0);
        // out through R_vir at apocentre-ish speed
        let y2 = [105.0, 0.0, 0.0, 5.0, 0.0, 0.0];
        tr.step(1.1, &y1, 1.3, &y2, 100.0, 100.0, 20.0);
        assert_eq!(tr.n_cross, 2);
        // still moving outward, but R_vir grows past it: crossing counted, infall unchanged
        let y3 = [106.0, 0.0, 0.0, 1.0, 0.0, 0.0];
        tr.step(1.3, &y2, 1.5, &y3, 100.0, 110.0, 20.0);
        assert_eq!(tr.n_cross, 3);
        assert_eq!(tr.t_last_infall, 1.0);
        // out again, then a real infall: moving inward through a fixed R_vir
        let y4 = [115.0, 0.0, 0.0, 1.0, 0.0, 0.0];
        tr.step(1.5, &y3, 1.7, &y4, 110.0, 110.0, 20.0);
        let y5 = [100.0, 0.0, 0.0, -20.0, 0.0, 0.0];
        tr.step(1.7, &y4, 1.9, &y5, 110.0, 110.0, 20.0);
        assert_eq!(tr.n_cross, 5);
        assert!(tr.t_last_infall > 1.7 && tr.t_last_infall < 1.9);
    }

    /// A nearly radial passage through the centre with a coarse step: the cubic through the
    /// ends dips below zero, the pericentre radius stays in [0, min(r0, r1)].
    #[test]
    fn pericentre_radius_is_never_negative() {
        // r from 1 to 1 over a step in which it plunges: steep inward and outward slopes
        let (s, r) = hermite_extremum(1.0, 1.0, -8.0, 8.0).expect("a minimum");
        assert!((0.0..=1.0).contains(&s));
        assert!(hermite_extremum_raw(1.0, 1.0, -8.0, 8.0).unwrap().1 < 0.0);
        assert!((0.0..=1.0).contains(&r), "{r}");
        let (_, r) = hermite_extremum(1.0, 2.0, 3.0, -1.0).expect("a maximum");
        assert!(r >= 2.0);
    }

    #[test]
    fn group_member_outside_has_not_crossed() {
        let mut tr = Tracker::with_group(2.0, 320.0, 300.0);
        assert_eq!(tr.n_cross, 0);
        assert!(tr.t_last_infall.is_nan() && !tr.been_inside);
        // never inside R_vir: it has not fallen into the host, whatever its group did
        let y0 = [320.0, 0.0, 0.0, 0.0, 30.0, 0.0];
        let y1 = [330.0, 0.0, 0.0, 5.0, 30.0, 0.0];
        tr.step(2.0, &y0, 2.2, &y1, 300.0, 305.0, 20.0);
        assert!(tr.last_infall(2.0).is_nan());
        // engulfed by R_vir's growth while moving outward: inside, but no inward crossing; the
        // group's entry stands for its infall
        let y2 = [331.0, 0.0, 0.0, 1.0, 30.0, 0.0];
        tr.step(2.2, &y1, 2.4, &y2, 305.0, 340.0, 20.0);
        assert_eq!(tr.n_cross, 1);
        assert_eq!(tr.last_infall(2.0), 2.0);
        // out again and back in, moving inward: that crossing is the last infall
        let y3 = [360.0, 0.0, 0.0, 5.0, 30.0, 0.0];
        tr.step(2.4, &y2, 2.6, &y3, 340.0, 340.0, 20.0);
        let y4 = [330.0, 0.0, 0.0, -20.0, 30.0, 0.0];
        tr.step(2.6, &y3, 2.8, &y4, 340.0, 340.0, 20.0);
        let last = tr.last_infall(2.0);
        assert!(last > 2.6 && last < 2.8, "{last}");
        let tr = Tracker::with_group(2.0, 280.0, 300.0);
        assert_eq!(tr.n_cross, 1);
        assert_eq!(tr.t_last_infall, 2.0);
    }
}
