//! Behroozi, Wechsler & Conroy 2013 (ApJ 770, 57, eqs. 3-4 and sec. 5) stellar-mass–halo-mass
//! relation for peak virial mass (Bryan & Norman), Chabrier IMF, masses for h = 0.7:
//! log10 M* = log10(eps M1) + f(log10(Mh/M1)) - f(0),
//! f(x) = -log10(10^(alpha x) + 1) + delta [log10(1 + e^x)]^gamma / (1 + exp(10^-x)),
//! with nu = exp(-4 a^2) and
//! log10 M1 = 11.514 + [-1.793 (a-1) - 0.251 z] nu,
//! log10 eps = -1.777 + [-0.006 (a-1) - 0.000 z] nu - 0.119 (a-1),
//! alpha = -1.412 + 0.731 (a-1) nu, delta = 3.508 + [2.608 (a-1) - 0.043 z] nu,
//! gamma = 0.316 + [1.319 (a-1) + 0.279 z] nu; scatter 0.218 - 0.023 (a-1) dex.

/// log10 of the stellar mass (Msun) of a halo of peak mass `m_halo_msun` at redshift z.
pub fn log10_mstar(m_halo_msun: f64, z: f64) -> f64 {
    let a = 1.0 / (1.0 + z);
    let nu = (-4.0 * a * a).exp();
    let am1 = a - 1.0;
    let log_m1 = 11.514 + (-1.793 * am1 - 0.251 * z) * nu;
    let log_eps = -1.777 + (-0.006 * am1 - 0.000 * z) * nu - 0.119 * am1;
    let alpha = -1.412 + 0.731 * am1 * nu;
    let delta = 3.508 + (2.608 * am1 - 0.043 * z) * nu;
    let gamma = 0.316 + (1.319 * am1 + 0.279 * z) * nu;
    let f = |x: f64| {
        -(10f64.powf(alpha * x) + 1.0).log10()
            + delta * (x.exp().ln_1p() / std::f64::consts::LN_10).powf(gamma)
                / (1.0 + (10f64.powf(-x)).exp())
    };
    log_eps + log_m1 + f(m_halo_msun.log10() - log_m1) - f(0.0)
}

/// Log-normal scatter (dex) at redshift z.
pub fn scatter_dex(z: f64) -> f64 {
    let a = 1.0 / (1.0 + z);
    0.218 - 0.023 * (a - 1.0)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Physics reference sheet check values (own evaluation of eq. 3): z = 0: Mh = 1e9 ... 1e13
    /// -> 5.843, 7.252, 8.670, 10.428, 10.954; z = 1: 5.425, 6.971, 8.497, 10.442, 11.033;
    /// z = 2: 4.912, 6.636, 8.351, 10.337, 11.058. Printed to 3 decimals: tolerance 1e-3.
    #[test]
    fn val_behroozi13_reference_values() {
        let want = [
            (0.0, [5.843, 7.252, 8.670, 10.428, 10.954]),
            (1.0, [5.425, 6.971, 8.497, 10.442, 11.033]),
            (2.0, [4.912, 6.636, 8.351, 10.337, 11.058]),
        ];
        for (z, vals) in want {
            for (i, v) in vals.iter().enumerate() {
                let m = 10f64.powi(9 + i as i32);
                let got = log10_mstar(m, z);
                assert!((got - v).abs() < 1.5e-3, "z={z} Mh={m:e}: {got} vs {v}");
            }
        }
    }
}
