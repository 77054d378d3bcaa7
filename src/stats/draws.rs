//! Drawing N satellites from a host without replacement: Monte Carlo and exact
//! hypergeometric probabilities.
//!
//! A host has N candidates, K of which had fallen in (by a clock) before a given time. Drawing
//! n distinct satellites at random, P(all n early) = C(K, n)/C(N, n) and
//! P(at least k early) = sum_{j>=k} C(K, j) C(N-K, n-j) / C(N, n) (hypergeometric).

use rand::Rng;

/// ln C(n, k) by log-gamma.
fn ln_choose(n: u64, k: u64) -> f64 {
    if k > n {
        return f64::NEG_INFINITY;
    }
    libm::lgamma((n + 1) as f64) - libm::lgamma((k + 1) as f64) - libm::lgamma((n - k + 1) as f64)
}

/// P(all n drawn are among the K early ones) = C(K, n)/C(N, n) = prod_{j<n} (K-j)/(N-j).
pub fn p_all_exact(big_n: u64, k: u64, n: u64) -> f64 {
    if n > big_n {
        return f64::NAN;
    }
    if k < n {
        return 0.0;
    }
    (0..n)
        .map(|j| (k - j) as f64 / (big_n - j) as f64)
        .product()
}

/// P(at least k_min of the n drawn are early).
pub fn p_at_least_exact(big_n: u64, k: u64, n: u64, k_min: u64) -> f64 {
    if n > big_n {
        return f64::NAN;
    }
    let denom = ln_choose(big_n, n);
    let mut s = 0.0;
    for j in k_min..=n.min(k) {
        if n - j > big_n - k {
            continue;
        }
        s += (ln_choose(k, j) + ln_choose(big_n - k, n - j) - denom).exp();
    }
    s.min(1.0)
}

/// Monte Carlo: `draws` random subsets of size n from `times` (infall times, NaN = never);
/// returns, for each threshold time in `t_grid`, the fraction of subsets whose members all
/// fell in before it. Each draw is reduced to its latest infall time, so the whole grid costs
/// one sort.
pub fn p_all_mc<R: Rng>(
    times: &[f64],
    n: usize,
    draws: usize,
    t_grid: &[f64],
    rng: &mut R,
) -> Vec<f64> {
    let big_n = times.len();
    if n > big_n || n == 0 {
        return vec![f64::NAN; t_grid.len()];
    }
    let mut idx: Vec<usize> = (0..big_n).collect();
    let mut latest = Vec::with_capacity(draws);
    for _ in 0..draws {
        // partial Fisher–Yates: the first n entries become a uniform random subset
        let mut m = f64::NEG_INFINITY;
        for j in 0..n {
            let r = rng.random_range(j..big_n);
            idx.swap(j, r);
            let t = times[idx[j]];
            m = m.max(if t.is_nan() { f64::INFINITY } else { t });
        }
        latest.push(m);
    }
    latest.sort_by(|a, b| a.partial_cmp(b).unwrap());
    t_grid
        .iter()
        .map(|&tz| latest.partition_point(|&v| v < tz) as f64 / draws as f64)
        .collect()
}

/// Monte Carlo "at least k_min of n": each draw reduced to its k_min-th earliest time.
pub fn p_at_least_mc<R: Rng>(
    times: &[f64],
    n: usize,
    k_min: usize,
    draws: usize,
    t_grid: &[f64],
    rng: &mut R,
) -> Vec<f64> {
    let big_n = times.len();
    if n > big_n || n == 0 || k_min == 0 || k_min > n {
        return vec![f64::NAN; t_grid.len()];
    }
    let mut idx: Vec<usize> = (0..big_n).collect();
    let mut kth = Vec::with_capacity(draws);
    let mut buf = vec![0.0; n];
    for _ in 0..draws {
        for j in 0..n {
            let r = rng.random_range(j..big_n);
            idx.swap(j, r);
            let t = times[idx[j]];
            buf[j] = if t.is_nan() { f64::INFINITY } else { t };
        }
        buf.sort_by(|a, b| a.partial_cmp(b).unwrap());
        kth.push(buf[k_min - 1]);
    }
    kth.sort_by(|a, b| a.partial_cmp(b).unwrap());
    t_grid
        .iter()
        .map(|&tz| kth.partition_point(|&v| v < tz) as f64 / draws as f64)
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// scipy 1.17.1 `stats.hypergeom` values from the physics reference sheet: N = 30, K = 20,
    /// n = 11: P(all 11) = 0.003075 (pmf(11, 30, 20, 11)); P(>= 8 of 11) = 0.451974
    /// (sf(7, 30, 20, 11)). Tolerance 1e-6 (printed digits).
    #[test]
    fn val_hypergeometric_scipy_values() {
        assert!((p_all_exact(30, 20, 11) - 0.003075).abs() < 1e-6);
        assert!((p_at_least_exact(30, 20, 11, 11) - 0.003075).abs() < 1e-6);
        assert!((p_at_least_exact(30, 20, 11, 8) - 0.451974).abs() < 1e-6);
        assert_eq!(p_all_exact(30, 10, 11), 0.0);
        assert!(p_all_exact(5, 5, 6).is_nan());
    }
}
