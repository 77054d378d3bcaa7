//! Tidal tracks: how Vmax and Rmax of a stripped NFW subhalo follow its bound fraction
//! x = m_bound/m_infall. Penarrubia et al. 2010 (MNRAS 406, 1290) form
//! g(x) = 2^alpha x^beta / (1 + x)^alpha with (alpha, beta) = (0.40, 0.30) for Vmax and
//! (-0.30, 0.40) for Rmax, the values for NFW cusps (Penarrubia, Navarro & McConnachie 2008);
//! recalled from memory (physics reference sheet, sec. 9).

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

#[cfg(test)]
mod tests {
    use super::*;

    /// Physics reference sheet check values (evaluation of the quoted parameters):
    /// x = 0.1 -> 0.6366, 0.3327; x = 0.01 -> 0.3301, 0.1291; and g(1) = 1.
    #[test]
    fn val_penarrubia10_values() {
        assert!((vmax_ratio(0.1) - 0.6366).abs() < 1e-4);
        assert!((rmax_ratio(0.1) - 0.3327).abs() < 1e-4);
        assert!((vmax_ratio(0.01) - 0.3301).abs() < 1e-4);
        assert!((rmax_ratio(0.01) - 0.1291).abs() < 1e-4);
        assert!((vmax_ratio(1.0) - 1.0).abs() < 1e-12 && (rmax_ratio(1.0) - 1.0).abs() < 1e-12);
    }
}
