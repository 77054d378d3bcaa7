//! Intervals over hosts: the host-to-host spread (median and 16–84% of per-host values) and
//! bootstrap intervals of the host-averaged value (resample hosts with replacement, recompute
//! the mean, take percentiles; Efron & Tibshirani 1993, ch. 13 percentile interval).

use rand::Rng;

/// Percentile of sorted data by linear interpolation between order statistics.
pub fn percentile(sorted: &[f64], q: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    let pos = q * (sorted.len() - 1) as f64;
    let i = pos.floor() as usize;
    let f = pos - i as f64;
    if i + 1 < sorted.len() {
        sorted[i] + f * (sorted[i + 1] - sorted[i])
    } else {
        sorted[i]
    }
}

/// Summary of one quantity over hosts.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Spread {
    /// Mean over hosts (pooled value).
    pub mean: f64,
    pub median: f64,
    pub p16: f64,
    pub p84: f64,
    /// Bootstrap percentile interval of the mean: 16–84% and 2.5–97.5%.
    pub boot16: f64,
    pub boot84: f64,
    pub boot025: f64,
    pub boot975: f64,
}

impl Spread {
    /// Nothing to summarise.
    pub const NAN: Spread = Spread {
        mean: f64::NAN,
        median: f64::NAN,
        p16: f64::NAN,
        p84: f64::NAN,
        boot16: f64::NAN,
        boot84: f64::NAN,
        boot025: f64::NAN,
        boot975: f64::NAN,
    };
}

/// Spread and bootstrap of per-host values (NaN values are skipped).
pub fn spread<R: Rng>(values: &[f64], resamples: usize, rng: &mut R) -> Spread {
    let v: Vec<f64> = values.iter().copied().filter(|x| x.is_finite()).collect();
    let n = v.len();
    if n == 0 {
        return Spread::NAN;
    }
    let mut s = v.clone();
    s.sort_by(|a, b| a.partial_cmp(b).unwrap());
    let mean = v.iter().sum::<f64>() / n as f64;
    let mut means: Vec<f64> = (0..resamples)
        .map(|_| (0..n).map(|_| v[rng.random_range(0..n)]).sum::<f64>() / n as f64)
        .collect();
    means.sort_by(|a, b| a.partial_cmp(b).unwrap());
    Spread {
        mean,
        median: percentile(&s, 0.5),
        p16: percentile(&s, 0.16),
        p84: percentile(&s, 0.84),
        boot16: percentile(&means, 0.16),
        boot84: percentile(&means, 0.84),
        boot025: percentile(&means, 0.025),
        boot975: percentile(&means, 0.975),
    }
}

/// Spread of every column of a per-host table (rows = hosts), with one set of bootstrap
/// resamples shared by all columns (a paired bootstrap: the curve's band is coherent, and the
/// cost is one index draw per host and resample instead of one per column). NaN entries are
/// skipped.
pub fn spread_columns<R: Rng>(
    per_host: &[Vec<f64>],
    ncols: usize,
    resamples: usize,
    rng: &mut R,
) -> Vec<Spread> {
    let n = per_host.len();
    if n == 0 {
        return (0..ncols).map(|_| spread(&[], resamples, rng)).collect();
    }
    let mut sums = vec![vec![0.0f64; resamples]; ncols];
    let mut counts = vec![vec![0u32; resamples]; ncols];
    for b in 0..resamples {
        for _ in 0..n {
            let row = &per_host[rng.random_range(0..n)];
            for k in 0..ncols {
                let v = row[k];
                if v.is_finite() {
                    sums[k][b] += v;
                    counts[k][b] += 1;
                }
            }
        }
    }
    (0..ncols)
        .map(|k| {
            let mut col: Vec<f64> = per_host
                .iter()
                .map(|r| r[k])
                .filter(|v| v.is_finite())
                .collect();
            if col.is_empty() {
                return Spread::NAN;
            }
            let mean = col.iter().sum::<f64>() / col.len() as f64;
            col.sort_by(|a, b| a.partial_cmp(b).unwrap());
            let mut means: Vec<f64> = (0..resamples)
                .filter(|&b| counts[k][b] > 0)
                .map(|b| sums[k][b] / counts[k][b] as f64)
                .collect();
            means.sort_by(|a, b| a.partial_cmp(b).unwrap());
            Spread {
                mean,
                median: percentile(&col, 0.5),
                p16: percentile(&col, 0.16),
                p84: percentile(&col, 0.84),
                boot16: percentile(&means, 0.16),
                boot84: percentile(&means, 0.84),
                boot025: percentile(&means, 0.025),
                boot975: percentile(&means, 0.975),
            }
        })
        .collect()
}
