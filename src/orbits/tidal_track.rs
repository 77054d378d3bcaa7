//! Tidal tracks: how Vmax and Rmax of a stripped NFW subhalo follow its bound fraction
//! x = m_bound/m_infall. Penarrubia et al. 2010 (MNRAS 406, 1290) form
//! g(x) = 2^alpha x^beta / (1 + x)^alpha with (alpha, beta) = (0.40, 0.30) for Vmax and
//! (-0.30, 0.40) for Rmax, the values for NFW cusps (Penarrubia, Navarro & McConnachie 2008);
//! recalled from memory (physics reference sheet, sec. 9).

/// (Vmax ratio, Rmax ratio) together: two logarithms and two exponentials instead of four
/// powers (the inner loop calls this every step).
#[inline]
pub fn vmax_rmax_ratio(x: f64) -> (f64, f64) {
    let (lx, l1) = (x.ln(), x.ln_1p());
    let ln2 = std::f64::consts::LN_2;
    (
        (0.40 * ln2 + 0.30 * lx - 0.40 * l1).exp(),
        (-0.30 * ln2 + 0.40 * lx + 0.30 * l1).exp(),
    )
}

/// Vmax / Vmax(infall) at bound fraction x.
#[inline]
pub fn vmax_ratio(x: f64) -> f64 {
    2f64.powf(0.40) * x.powf(0.30) / (1.0 + x).powf(0.40)
}

/// Rmax / Rmax(infall) at bound fraction x.
#[inline]
pub fn rmax_ratio(x: f64) -> f64 {
    2f64.powf(-0.30) * x.powf(0.40) / (1.0 + x).powf(-0.30)
}

/// Green & van den Bosch 2019 (MNRAS 490, 2091) stripped-NFW transfer function
/// rho(r) = H(r | f_b, c_s) rho_NFW,infall(r), H = f_te / [1 + (x (c_s - x_te)/(c_s x_te))^delta],
/// x = r/r_s, with (physics reference sheet, sec. 9, transcription checked against a
/// general-purpose lensing library)
/// f_te = f_b^(0.338 (c_s/10)^0) c_s^(0.157 (1 - f_b)^1.337),
/// x_te = c_s f_b^(0.448 (c_s/10)^0.272) c_s^(-0.199 (1 - f_b)^0.011) exp[-1.119 (c_s/10)^0.093 (1 - f_b)],
/// delta = 2.779 f_b^(-0.035 (c_s/10)^-0.337) c_s^(-0.099 (1 - f_b)^0.415).
/// Returns (f_te, x_te, delta). Used to cross-check the Penarrubia et al. 2010 track.
pub fn green_vdb19_params(f_b: f64, c_s: f64) -> (f64, f64, f64) {
    let q = c_s / 10.0;
    let f_te = f_b.powf(0.338 * q.powf(0.0)) * c_s.powf(0.157 * (1.0 - f_b).powf(1.337));
    let x_te = c_s
        * f_b.powf(0.448 * q.powf(0.272))
        * c_s.powf(-0.199 * (1.0 - f_b).powf(0.011))
        * (-1.119 * q.powf(0.093) * (1.0 - f_b)).exp();
    let delta =
        2.779 * f_b.powf(-0.035 * q.powf(-0.337)) * c_s.powf(-0.099 * (1.0 - f_b).powf(0.415));
    (f_te, x_te, delta)
}

/// Mass inside x = r / r_s,acc of the Green & van den Bosch 2019 stripped profile with bound
/// fraction f_b and infall concentration c_s, in units of M_s = 4 pi rho_s r_s^3 of the infall
/// NFW: \int_0^x y H(y) / (1 + y)^2 dy by quadrature (at f_b = 1, H = 1: the NFW's mu(x)).
/// Divide by mu(c_s) for the fraction of the infall mass.
pub fn green_vdb19_enclosed(f_b: f64, c_s: f64, x: f64) -> f64 {
    let (f_te, x_te, d) = green_vdb19_params(f_b.min(1.0), c_s);
    let h = |y: f64| f_te / (1.0 + (y * (c_s - x_te) / (c_s * x_te)).powf(d));
    quadrature::integrate(|y: f64| y * h(y) / ((1.0 + y) * (1.0 + y)), 0.0, x, 1e-11).integral
}

/// (Vmax ratio, Rmax ratio) to the infall NFW for the Green & van den Bosch 2019 stripped
/// profile, by quadrature of the density and a golden-section search for the peak of v_c.
pub fn green_vdb19_vmax_rmax_ratio(f_b: f64, c_s: f64) -> (f64, f64) {
    let peak = |fb: f64| -> (f64, f64) {
        let v2 = |lx: f64| {
            let x = lx.exp();
            green_vdb19_enclosed(fb, c_s, x) / x
        };
        let (mut a, mut b) = ((0.01f64).ln(), (10.0 * c_s).ln());
        let g = 0.618_033_988_749_895;
        for _ in 0..80 {
            let c = b - g * (b - a);
            let e = a + g * (b - a);
            if v2(c) > v2(e) {
                b = e;
            } else {
                a = c;
            }
        }
        let lx = 0.5 * (a + b);
        (v2(lx).sqrt(), lx.exp())
    };
    let (v0, r0) = peak(1.0);
    let (v, r) = peak(f_b);
    (v / v0, r / r0)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Physics reference sheet check values (evaluation of the quoted parameters):
    /// x = 0.1 -> 0.6366, 0.3327; x = 0.01 -> 0.3301, 0.1291; and g(1) = 1.
    #[test]
    fn val_penarrubia10_values() {
        // the sheet's 0.6366 (close to, but not, 2/pi), written as a ratio
        assert!((vmax_ratio(0.1) - 6366.0 / 10000.0).abs() < 1e-4);
        assert!((rmax_ratio(0.1) - 0.3327).abs() < 1e-4);
        assert!((vmax_ratio(0.01) - 0.3301).abs() < 1e-4);
        assert!((rmax_ratio(0.01) - 0.1291).abs() < 1e-4);
        assert!((vmax_ratio(1.0) - 1.0).abs() < 1e-12 && (rmax_ratio(1.0) - 1.0).abs() < 1e-12);
        for x in [1e-3, 0.1, 0.7] {
            let (v, r) = vmax_rmax_ratio(x);
            assert!(
                (v / vmax_ratio(x) - 1.0).abs() < 1e-13 && (r / rmax_ratio(x) - 1.0).abs() < 1e-13
            );
        }
    }

    /// Green & van den Bosch 2019 parameters: physics reference sheet check values for
    /// c_s = 10: f_b = 0.5 -> (0.9128, 2.6587, 2.3998); 0.1 -> (0.6286, 0.8239, 2.4217);
    /// 0.01 -> (0.3012, 0.2654, 2.6020). Printed to 4-5 digits: tolerance 1e-4.
    #[test]
    fn val_green_vdb19_parameters() {
        for (fb, want) in [
            (0.5, (0.9128, 2.6587, 2.3998)),
            (0.1, (0.6286, 0.8239, 2.4217)),
            (0.01, (0.3012, 0.2654, 2.6020)),
        ] {
            let (a, b, c) = green_vdb19_params(fb, 10.0);
            assert!(
                (a - want.0).abs() < 1e-4 && (b - want.1).abs() < 1e-4 && (c - want.2).abs() < 1e-4,
                "{fb}: {a} {b} {c}"
            );
        }
    }

    /// The enclosed mass of the Green & van den Bosch 2019 profile: at f_b = 1 the fit's
    /// parameters give f_te = 1 and x_te = c_s (physics reference sheet, sec. 9), H = 1, so the
    /// quadrature must give the NFW's closed form mu(x) (to the quadrature's 1e-11); at f_b < 1
    /// it lies below mu(x) at every radius (f_te < 1 and H falls outward).
    #[test]
    fn green_vdb19_enclosed_mass_limits() {
        for c in [4.0, 8.0, 15.0] {
            for x in [0.01, 0.5, 1.0, 3.0, c] {
                let (f_te, x_te, _) = green_vdb19_params(1.0, c);
                assert!(
                    f_te == 1.0 && (x_te / c - 1.0).abs() < 1e-15,
                    "c {c}: {f_te} {x_te}"
                );
                let m = green_vdb19_enclosed(1.0, c, x);
                let want = crate::halo::nfw::mu(x);
                assert!((m / want - 1.0).abs() < 1e-8, "c {c} x {x}: {m} vs {want}");
                for fb in [0.5, 0.1] {
                    assert!(
                        green_vdb19_enclosed(fb, c, x) < want,
                        "c {c} x {x} f_b {fb}"
                    );
                }
            }
        }
    }

    /// The Penarrubia et al. 2010 track used here against the stripped profiles of Green &
    /// van den Bosch 2019 (an independent fit to a different simulation set), c_s = 10,
    /// bound fractions 0.5 to 0.03: Vmax within 5%, Rmax within 15% (the two published fits
    /// differ by this much; measured 2% and 10%).
    #[test]
    fn val_penarrubia_track_vs_green_vdb19() {
        for fb in [0.5, 0.3, 0.1, 0.03] {
            let (v, r) = green_vdb19_vmax_rmax_ratio(fb, 10.0);
            assert!(
                (vmax_ratio(fb) / v - 1.0).abs() < 0.05,
                "f_b={fb}: Vmax {} vs {v}",
                vmax_ratio(fb)
            );
            assert!(
                (rmax_ratio(fb) / r - 1.0).abs() < 0.15,
                "f_b={fb}: Rmax {} vs {r}",
                rmax_ratio(fb)
            );
        }
    }
}
