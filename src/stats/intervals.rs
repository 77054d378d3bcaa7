//! Intervals over hosts: the host-to-host spread (median and 16–84% of per-host values) and
//! bootstrap intervals of the host-averaged value (resample hosts with replacement, recompute
//! the mean, take percentiles; Efron & Tibshirani 1993, ch. 13 percentile interval). Curves
//! over many hosts use the streaming form (`StreamingSpread`: Poisson bootstrap weights and
//! binned percentiles), whose memory does not grow with the number of hosts.

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
    /// How many hosts gave a value (NaN values are not counted): what the mean and its
    /// interval rest on.
    pub hosts: u64,
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
        hosts: 0,
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
        hosts: n as u64,
    }
}

/// Counts in fixed, equal-width bins over [lo, hi): pooled distributions whose size does not
/// grow with the number of values (values outside the range are counted in `below`/`above`).
/// Merging two histograms adds their counts exactly, so chunked runs give the same result.
#[derive(Debug, Clone, PartialEq)]
pub struct Binned {
    pub lo: f64,
    pub hi: f64,
    pub counts: Vec<f64>,
    pub below: f64,
    pub above: f64,
    /// NaN values (not counted in `total`).
    pub missing: f64,
}

impl Binned {
    pub fn new(lo: f64, hi: f64, bins: usize) -> Self {
        Self {
            lo,
            hi,
            counts: vec![0.0; bins.max(1)],
            below: 0.0,
            above: 0.0,
            missing: 0.0,
        }
    }

    /// Bin width.
    pub fn width(&self) -> f64 {
        (self.hi - self.lo) / self.counts.len() as f64
    }

    /// Count one value (a NaN only in `missing`).
    pub fn add(&mut self, x: f64) {
        if x.is_nan() {
            self.missing += 1.0;
            return;
        }
        if x < self.lo {
            self.below += 1.0;
        } else if x >= self.hi {
            self.above += 1.0;
        } else {
            let k = (((x - self.lo) / self.width()) as usize).min(self.counts.len() - 1);
            self.counts[k] += 1.0;
        }
    }

    /// Add another histogram with the same bins.
    pub fn merge(&mut self, other: &Binned) {
        debug_assert_eq!(self.counts.len(), other.counts.len());
        for (a, b) in self.counts.iter_mut().zip(&other.counts) {
            *a += b;
        }
        self.below += other.below;
        self.above += other.above;
        self.missing += other.missing;
    }

    /// Number of values counted (in range or not).
    pub fn total(&self) -> f64 {
        self.counts.iter().sum::<f64>() + self.below + self.above
    }

    /// Quantile q by linear interpolation inside the bin that holds it (good to one bin
    /// width); NaN when empty or when the quantile falls outside the range.
    pub fn quantile(&self, q: f64) -> f64 {
        binned_quantile(
            &self.counts,
            self.lo,
            self.width(),
            self.below,
            self.total(),
            q,
        )
    }
}

/// Quantile q of values counted in equal bins of `width` from `lo` (`below` values lie under
/// the range, `total` counts every value): linear inside the bin that holds it; NaN when there
/// are no values or the quantile lies outside the bins.
fn binned_quantile<T: Copy + Into<f64>>(
    counts: &[T],
    lo: f64,
    width: f64,
    below: f64,
    total: f64,
    q: f64,
) -> f64 {
    if total == 0.0 {
        return f64::NAN;
    }
    let target = q * total - below;
    if target < 0.0 {
        return f64::NAN;
    }
    let mut acc = 0.0;
    for (k, &c) in counts.iter().enumerate() {
        let c: f64 = c.into();
        if c > 0.0 && acc + c >= target {
            let f = ((target - acc) / c).clamp(0.0, 1.0);
            return lo + (k as f64 + f) * width;
        }
        acc += c;
    }
    f64::NAN
}

#[cfg(test)]
mod binned_tests {
    use super::*;

    /// Columns of all-0 and all-1 values have median 0 and 1 exactly; a column with half
    /// zeros and half 0.5 has its 16% point at 0 and its 84% point in the bin of 0.5.
    #[test]
    fn streaming_spread_atoms_at_zero_and_one() {
        let mut s = StreamingSpread::new(3, 4);
        for i in 0..10 {
            let v = if i % 2 == 0 { 0.0 } else { 0.5 };
            s.add(&[0.0, 1.0, v], &[1, 1, 1, 1]);
        }
        let sp = s.finish();
        assert_eq!((sp[0].median, sp[0].p16, sp[0].p84), (0.0, 0.0, 0.0));
        assert_eq!((sp[1].median, sp[1].p16, sp[1].p84), (1.0, 1.0, 1.0));
        assert_eq!(sp[2].p16, 0.0);
        assert!((sp[2].p84 - 0.5).abs() <= 1e-3, "{}", sp[2].p84);
        assert!((sp[2].mean - 0.25).abs() < 1e-15);
        // every column counts the hosts that gave a value; NaN is not one
        assert_eq!([sp[0].hosts, sp[1].hosts, sp[2].hosts], [10, 10, 10]);
        s.add(&[f64::NAN, 1.0, f64::NAN], &[1, 1, 1, 1]);
        let sp = s.finish();
        assert_eq!([sp[0].hosts, sp[1].hosts, sp[2].hosts], [10, 11, 10]);
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(1);
        use rand::SeedableRng;
        assert_eq!(spread(&[0.1, f64::NAN, 0.3], 10, &mut rng).hosts, 2);
        assert_eq!(Spread::NAN.hosts, 0);
    }

    /// The branch-free resample sums of `add` equal the entry-by-entry sums that skip NaN
    /// (computed here), bit for bit, on rows with NaN entries and zero weights.
    #[test]
    fn resample_sums_skip_nan_entries() {
        use rand::{Rng, SeedableRng};
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(5);
        let (nc, nb) = (47, 50);
        let mut fast = StreamingSpread::new(nc, nb);
        let (mut bsum, mut bcount) = (vec![0.0f64; nc * nb], vec![0u32; nc * nb]);
        for _ in 0..200 {
            let row: Vec<f64> = (0..nc)
                .map(|_| {
                    if rng.random::<f64>() < 0.2 {
                        f64::NAN
                    } else {
                        rng.random::<f64>()
                    }
                })
                .collect();
            let w: Vec<u32> = (0..nb).map(|_| rng.random_range(0..3)).collect();
            fast.add(&row, &w);
            for (b, &wb) in w.iter().enumerate() {
                for (k, &v) in row.iter().enumerate() {
                    if wb > 0 && v.is_finite() {
                        bsum[b * nc + k] += wb as f64 * v;
                        bcount[b * nc + k] += wb;
                    }
                }
            }
        }
        assert_eq!(fast.bcount, bcount);
        let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
        assert_eq!(bits(&fast.bsum), bits(&bsum));
        assert!(fast.bcount.iter().any(|&c| c > 0));
    }

    /// The binned median of 0.5, 1.5, ..., 99.5 in unit bins is 50 (one value per bin: the
    /// interpolation puts the 50th value at the top of its bin); merging two halves gives the
    /// histogram of the whole.
    #[test]
    fn quantiles_and_merging() {
        let mut a = Binned::new(0.0, 100.0, 100);
        let mut b = Binned::new(0.0, 100.0, 100);
        for i in 0..100 {
            let x = i as f64 + 0.5;
            if i % 2 == 0 {
                a.add(x);
            } else {
                b.add(x);
            }
        }
        a.merge(&b);
        assert_eq!(a.total(), 100.0);
        assert!((a.quantile(0.5) - 50.0).abs() < 1e-12);
        assert!((a.quantile(0.16) - 16.0).abs() < 1e-12);
        a.add(-1.0);
        a.add(1e3);
        assert_eq!((a.below, a.above), (1.0, 1.0));
        // NaN (e.g. no pericentre yet) is counted apart, and merged
        a.add(f64::NAN);
        let mut c = Binned::new(0.0, 100.0, 100);
        c.add(f64::NAN);
        a.merge(&c);
        assert_eq!((a.missing, a.total()), (2.0, 102.0));
    }
}

/// Poisson(1) draws by inverse transform on a cumulative table (exact to rounding; values
/// above 20 have probability below 1e-19 and are cut there).
pub fn poisson1<R: Rng>(rng: &mut R) -> u32 {
    use std::sync::OnceLock;
    static CDF: OnceLock<[f64; 21]> = OnceLock::new();
    let cdf = CDF.get_or_init(|| {
        let mut c = [0.0; 21];
        let mut p = (-1.0f64).exp();
        let mut acc = 0.0;
        for (k, ck) in c.iter_mut().enumerate() {
            acc += p;
            *ck = acc;
            p /= (k + 1) as f64;
        }
        c
    });
    let u: f64 = rng.random();
    cdf.iter().position(|&c| u < c).unwrap_or(20) as u32
}

/// Streaming summary of a per-host table (rows = hosts, columns = grid points) whose values
/// are probabilities, in memory that does not grow with the number of hosts:
/// * the mean over hosts, exact (running sums in host order);
/// * the host-to-host median and 16–84% range from 0.001-wide bins over (0, 1) (linear inside
///   the bin: good to 0.001), with exact 0 and exact 1 counted apart (probabilities of exactly
///   0 or 1 are common, and their quantiles are then exact);
/// * the bootstrap interval of the mean by the Poisson bootstrap (Hanley & MacGibbon 2006,
///   Comput. Methods Programs Biomed. 83, 57; Chamandy et al. 2012): each host enters
///   resample b with an independent Poisson(1) weight drawn from its own stream, the same
///   weights for every column and every curve (a paired bootstrap). It approximates the
///   resampling of hosts with replacement and, unlike it, needs neither the number of hosts
///   in advance nor the rows kept; the result does not depend on how hosts are chunked.
#[derive(Debug, Clone)]
pub struct StreamingSpread {
    ncols: usize,
    resamples: usize,
    sum: Vec<f64>,
    count: Vec<u64>,
    hist: Vec<u32>,
    /// Values of exactly 0 (or below) and exactly 1 (or above), per column.
    zeros: Vec<u64>,
    ones: Vec<u64>,
    bsum: Vec<f64>,
    bcount: Vec<u32>,
    /// Scratch of `add`: the row with NaN as 0, and 1 where it is finite.
    clean: Vec<f64>,
    finite: Vec<u32>,
}

const SPREAD_BINS: usize = 1000;

impl StreamingSpread {
    pub fn new(ncols: usize, resamples: usize) -> Self {
        Self {
            ncols,
            resamples,
            sum: vec![0.0; ncols],
            count: vec![0; ncols],
            hist: vec![0; ncols * SPREAD_BINS],
            zeros: vec![0; ncols],
            ones: vec![0; ncols],
            bsum: vec![0.0; ncols * resamples],
            bcount: vec![0; ncols * resamples],
            clean: vec![0.0; ncols],
            finite: vec![0; ncols],
        }
    }

    /// Add one host's row with its bootstrap weights (`weights.len()` = resamples). NaN
    /// entries are skipped, column by column.
    pub fn add(&mut self, row: &[f64], weights: &[u32]) {
        let nc = self.ncols;
        let m = nc.min(row.len());
        // the row with its NaN entries as 0 and their count weight 0, so that the loop over
        // resamples below has no branch (a skipped entry adds nothing either way)
        self.clean[..m].fill(0.0);
        self.finite[..m].fill(0);
        for (k, &v) in row.iter().enumerate().take(nc) {
            if v.is_finite() {
                self.clean[k] = v;
                self.finite[k] = 1;
                self.sum[k] += v;
                self.count[k] += 1;
                if v <= 0.0 {
                    self.zeros[k] += 1;
                } else if v >= 1.0 {
                    self.ones[k] += 1;
                } else {
                    let bin = ((v * SPREAD_BINS as f64) as usize).min(SPREAD_BINS - 1);
                    self.hist[k * SPREAD_BINS + bin] += 1;
                }
            }
        }
        let (clean, finite) = (&self.clean[..m], &self.finite[..m]);
        for (b, &w) in weights.iter().enumerate().take(self.resamples) {
            if w == 0 {
                continue;
            }
            let wf = w as f64;
            let (bs, bc) = (
                &mut self.bsum[b * nc..b * nc + m],
                &mut self.bcount[b * nc..b * nc + m],
            );
            for k in 0..m {
                bs[k] += wf * clean[k];
                bc[k] += w * finite[k];
            }
        }
    }

    /// Quantile of column k: exact 0 or 1 when it falls among those values, else from the
    /// bins of the values in between.
    fn quantile(&self, k: usize, q: f64) -> f64 {
        let n = self.count[k] as f64;
        let target = q * n;
        if target <= self.zeros[k] as f64 {
            return 0.0;
        }
        if target > n - self.ones[k] as f64 {
            return 1.0;
        }
        binned_quantile(
            &self.hist[k * SPREAD_BINS..(k + 1) * SPREAD_BINS],
            0.0,
            1.0 / SPREAD_BINS as f64,
            self.zeros[k] as f64,
            n,
            q,
        )
    }

    /// The number of bootstrap resamples.
    pub fn resamples(&self) -> usize {
        self.resamples
    }

    /// The mean of column `k` in bootstrap resample `b` (None: no host of the resample has a
    /// value there).
    pub fn resample_mean(&self, b: usize, k: usize) -> Option<f64> {
        let i = b * self.ncols + k;
        (self.bcount[i] > 0).then(|| self.bsum[i] / self.bcount[i] as f64)
    }

    pub fn finish(&self) -> Vec<Spread> {
        let nc = self.ncols;
        (0..nc)
            .map(|k| {
                if self.count[k] == 0 {
                    return Spread::NAN;
                }
                let mut means: Vec<f64> = (0..self.resamples)
                    .filter(|&b| self.bcount[b * nc + k] > 0)
                    .map(|b| self.bsum[b * nc + k] / self.bcount[b * nc + k] as f64)
                    .collect();
                means.sort_by(|a, b| a.partial_cmp(b).unwrap());
                Spread {
                    mean: self.sum[k] / self.count[k] as f64,
                    median: self.quantile(k, 0.5),
                    p16: self.quantile(k, 0.16),
                    p84: self.quantile(k, 0.84),
                    boot16: percentile(&means, 0.16),
                    boot84: percentile(&means, 0.84),
                    boot025: percentile(&means, 0.025),
                    boot975: percentile(&means, 0.975),
                    hosts: self.count[k],
                }
            })
            .collect()
    }
}
