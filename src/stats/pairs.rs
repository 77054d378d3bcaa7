//! Tests for hosts in pairs (issue 19): satellites once inside the partner, and the field
//! dwarfs of the pair region with the fraction that have been inside either host.
//!
//! 1. **Once inside the partner.** Among each pair host's candidate satellites (the battery's
//!    selection, `tests.selection`), the fraction that were ever inside the partner's virial
//!    radius; the mean over hosts with a bootstrap interval, per grid cell (primaries and
//!    partners are cells of their own) and over every pair host.
//! 2. **Field dwarfs of the pair region.** Haloes inside the sphere of radius
//!    `environment.region_radius_kpc` about the pair's barycentre (of the two virial masses)
//!    and outside both virial radii, with the backsplash test's peak-mass window and
//!    distinct-halo rule (`tests.backsplash`), binned in shells of distance from the nearer
//!    host (nearer in kpc) in units of that host's R_vir (`tests.backsplash.shells_over_rvir`),
//!    plus the whole region. Each host contributes its own subhaloes (they are in its tree):
//!    those once inside either host (the host's backsplash flag, or once inside the partner)
//!    are backsplash haloes; the few tree haloes that were never inside either (released from
//!    a group before it fell in) are counted apart and not in the fraction. Haloes that never
//!    fell into either tree are expected numbers, as in the isolated test: the field model of
//!    `tests.backsplash`, here with both hosts,
//!    n(x) = n_bar [1 + b_field (b_A xi(r_A) + b_B xi(r_B))], integrated over the part of each
//!    shell inside the sphere and outside both R_vir. The region is split by which host is
//!    nearer and each host integrates its own half, so a pair counts its volume once. The
//!    integral is a fixed Gauss–Legendre quadrature in the pair's axisymmetric coordinates
//!    (distance r from the host and the cosine of the angle to the partner), with the
//!    partner's correlation term integrated in closed form over the angle through a
//!    tabulated integral of xi: deterministic, no random numbers. Per pair, the backsplash
//!    fraction N_bs / (N_bs + N_field) in each shell; the mean over pairs with a bootstrap
//!    interval. Linear theory undercounts the field near the hosts, so the fractions are
//!    upper limits.
//! 3. **Separations.** Today's and the smallest separation of each pair and the separation
//!    history (the figure), accumulated in fixed bins in the chunk pass (`PairGeometry`).

use std::collections::BTreeMap;

use super::backsplash::{BacksplashOptions, FieldCounter, FieldModel};
use super::catalog::{pair_value, Catalog};
use super::cells::{cell_code, split_cell};
use super::intervals::{spread, Binned, Spread};
use super::TestOptions;
use crate::linear::{CorrelationTable, LinearTheory};
use crate::massfunction::bias::halo_bias;
use crate::rng::{host_rng, HostId, Stream};

/// Per host of a pair, from its full rows (`region_counts`): per shell of
/// `tests.backsplash.shells_over_rvir`, then the whole region, the haloes of its tree in the
/// pair region outside both virial radii that were once inside either host (`backsplash`)
/// and that were never inside either (`never_inside`).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RegionCounts {
    pub backsplash: Vec<f64>,
    pub never_inside: Vec<f64>,
}

/// Whether host h of `cat` is a host of a pair.
pub fn is_pair_host(cat: &Catalog, h: usize) -> bool {
    cat.host_pair_separation_kpc
        .get(h)
        .is_some_and(|s| s.is_finite())
}

/// The shell (index into `shells_over_rvir`) of row i of pair host h counted among the field
/// dwarfs of the pair region, with whether it was once inside either host, or None when it
/// is not counted. `Some((None, once))`: inside the region but outside the shells.
pub fn region_shell(
    b: &BacksplashOptions,
    cat: &Catalog,
    h: usize,
    i: usize,
) -> Option<(Option<usize>, bool)> {
    let rv = cat.host_r_vir_kpc[h];
    let rv_p = pair_value(&cat.host_partner_r_vir_kpc, h);
    let region = pair_value(&cat.host_region_radius_kpc, h);
    let r = cat.r_kpc[i];
    let r_p = pair_value(&cat.r_partner_kpc, i);
    let r_b = pair_value(&cat.r_bary_kpc, i);
    let inside = cat.alive(i)
        && !cat.in_subhalo(i)
        && cat.m_peak_msun[i] >= b.m_peak_msun[0]
        && cat.m_peak_msun[i] <= b.m_peak_msun[1]
        && r_b <= region
        && r > rv
        && r_p > rv_p;
    if !inside {
        return None;
    }
    let x = if r <= r_p { r / rv } else { r_p / rv_p };
    let once = cat.backsplash[i] || cat.once_in_partner.get(i).copied().unwrap_or(false);
    Some((b.shell_of(x), once))
}

/// Count host h's field dwarfs of the pair region (None for an isolated host).
pub fn region_counts(b: &BacksplashOptions, cat: &Catalog, h: usize) -> Option<RegionCounts> {
    if !is_pair_host(cat, h) {
        return None;
    }
    let n = b.n_shells() + 1;
    let mut out = RegionCounts {
        backsplash: vec![0.0; n],
        never_inside: vec![0.0; n],
    };
    for i in cat.rows(h) {
        if let Some((shell, once)) = region_shell(b, cat, h, i) {
            let v = if once {
                &mut out.backsplash
            } else {
                &mut out.never_inside
            };
            if let Some(k) = shell {
                v[k] += 1.0;
            }
            v[n - 1] += 1.0;
        }
    }
    Some(out)
}

// ---------------------------------------------------------------------------------------
// The field volume integral

/// 8-point Gauss–Legendre nodes and weights on [-1, 1] (exact for polynomials of degree 15).
const GL8: [(f64, f64); 8] = [
    (-0.960_289_856_497_536_3, 0.101_228_536_290_376_26),
    (-0.796_666_477_413_626_7, 0.222_381_034_453_374_47),
    (-0.525_532_409_916_329, 0.313_706_645_877_887_3),
    (-0.183_434_642_495_649_8, 0.362_683_783_378_362),
    (0.183_434_642_495_649_8, 0.362_683_783_378_362),
    (0.525_532_409_916_329, 0.313_706_645_877_887_3),
    (0.796_666_477_413_626_7, 0.222_381_034_453_374_47),
    (0.960_289_856_497_536_3, 0.101_228_536_290_376_26),
];

/// The integral J(s) = \int_{s_min}^{s} xi(t) t dt (Mpc^2) of a correlation table, tabulated
/// on a uniform grid in ln s (64 points per factor of e, each step by 8-point Gauss–Legendre
/// in ln t) and interpolated by cubic Hermite with the exact derivative xi(s) s: the angular
/// integral of the partner's correlation term is a difference of two values.
#[derive(Debug, Clone)]
pub struct XiIntegral {
    xi: CorrelationTable,
    ln_s0: f64,
    step: f64,
    j: Vec<f64>,
}

impl XiIntegral {
    const S_MIN_MPC: f64 = 1e-3;
    const S_MAX_MPC: f64 = 100.0;

    pub fn new(xi: &CorrelationTable) -> Self {
        let ln_s0 = Self::S_MIN_MPC.ln();
        let span = (Self::S_MAX_MPC / Self::S_MIN_MPC).ln();
        let n = (span * 64.0).ceil() as usize;
        let step = span / n as f64;
        let mut j = Vec::with_capacity(n + 1);
        j.push(0.0);
        let mut acc = 0.0;
        for k in 0..n {
            let (a, b) = (ln_s0 + step * k as f64, ln_s0 + step * (k + 1) as f64);
            let (mid, half) = (0.5 * (a + b), 0.5 * (b - a));
            acc += GL8
                .iter()
                .map(|(x, w)| {
                    let s = (mid + half * x).exp();
                    w * half * xi.xi(s) * s * s
                })
                .sum::<f64>();
            j.push(acc);
        }
        Self {
            xi: xi.clone(),
            ln_s0,
            step,
            j,
        }
    }

    /// xi_lin(s), s in Mpc.
    pub fn xi(&self, s_mpc: f64) -> f64 {
        self.xi.xi(s_mpc)
    }

    /// J(s), s in Mpc (clamped to the table's range).
    pub fn j(&self, s_mpc: f64) -> f64 {
        let n = self.j.len() - 1;
        let u = ((s_mpc.max(1e-300).ln() - self.ln_s0) / self.step).clamp(0.0, n as f64);
        let k = (u.floor() as usize).min(n - 1);
        let t = u - k as f64;
        // derivatives in u: dJ/du = xi(s) s^2 * step
        let d = |kk: usize| {
            let s = (self.ln_s0 + self.step * kk as f64).exp();
            self.xi.xi(s) * s * s * self.step
        };
        let (p0, p1, m0, m1) = (self.j[k], self.j[k + 1], d(k), d(k + 1));
        let (t2, t3) = (t * t, t * t * t);
        (2.0 * t3 - 3.0 * t2 + 1.0) * p0
            + (t3 - 2.0 * t2 + t) * m0
            + (-2.0 * t3 + 3.0 * t2) * p1
            + (t3 - t2) * m1
    }
}

/// One host's half of a pair region, in the host's frame (kpc): the partner at distance
/// `separation`, the barycentre at `barycentre` from the host on the same line, the region's
/// sphere of radius `region` about it, and both virial radii; the linear biases of both hosts.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HalfGeometry {
    pub separation_kpc: f64,
    pub r_vir_kpc: f64,
    pub partner_r_vir_kpc: f64,
    pub barycentre_kpc: f64,
    pub region_kpc: f64,
    pub bias: f64,
    pub partner_bias: f64,
}

/// The density model the integral weights the volume with: n_bar [1 + b_field (b_A xi(r_A) +
/// b_B xi(r_B))] (no correlation term without a table).
#[derive(Debug, Clone, Copy)]
pub struct FieldDensity<'a> {
    pub n_bar_mpc3: f64,
    pub b_field: f64,
    pub xi: Option<&'a XiIntegral>,
}

impl HalfGeometry {
    /// The allowed range of mu = cos(angle to the partner) at distance r (Mpc) from the host
    /// (all lengths in Mpc): nearer this host than the partner, outside the partner's R_vir,
    /// inside the sphere. (lo, hi); empty when hi <= lo.
    fn mu_range(&self, r: f64, mpc: &[f64; 4]) -> (f64, f64) {
        let [d, rb, zb, big_r] = *mpc;
        let nearer = d / (2.0 * r);
        let outside_partner = (r * r + d * d - rb * rb) / (2.0 * r * d);
        let hi = 1f64.min(nearer).min(outside_partner);
        let lo = if zb > 1e-12 * big_r {
            (-1f64).max((r * r + zb * zb - big_r * big_r) / (2.0 * r * zb))
        } else if r <= big_r {
            -1.0
        } else {
            f64::INFINITY
        };
        (lo, hi)
    }

    /// Radii (Mpc) where a bound of the mu range changes form or the range opens or closes:
    /// between them the integrand of a uniform density is a polynomial of degree 3 in r.
    fn breakpoints(&self, mpc: &[f64; 4]) -> Vec<f64> {
        let [d, rb, zb, big_r] = *mpc;
        let mut v = vec![
            d / 2.0,
            d - rb,
            d + rb,
            rb,
            big_r - zb,
            big_r + zb,
            zb - big_r,
            big_r,
        ];
        let a = big_r * big_r - zb * zb + d * zb;
        if a > 0.0 {
            v.push(a.sqrt());
        }
        if (d - zb).abs() > 1e-12 * d {
            let b = (zb * (d * d - rb * rb) - d * zb * zb + d * big_r * big_r) / (d - zb);
            if b > 0.0 {
                v.push(b.sqrt());
            }
        }
        v.retain(|x| x.is_finite() && *x > 0.0);
        v
    }

    /// The expected number of field haloes in the part of the shell r_lo <= r < r_hi (kpc,
    /// distance from this host) that is nearer this host than the partner, inside the
    /// region's sphere and outside both virial radii.
    pub fn expected(&self, density: &FieldDensity, r_lo_kpc: f64, r_hi_kpc: f64) -> f64 {
        let k = 1e-3;
        let mpc = [
            self.separation_kpc * k,
            self.partner_r_vir_kpc * k,
            self.barycentre_kpc * k,
            self.region_kpc * k,
        ];
        let d = mpc[0];
        let lo = r_lo_kpc.max(self.r_vir_kpc) * k;
        // nothing of the sphere lies beyond its far edge
        let hi = r_hi_kpc.min(self.region_kpc + self.barycentre_kpc) * k;
        if hi.is_nan() || lo.is_nan() || hi <= lo {
            return 0.0;
        }
        let mut edges = vec![lo, hi];
        edges.extend(
            self.breakpoints(&mpc)
                .into_iter()
                .filter(|&x| x > lo && x < hi),
        );
        edges.sort_by(|a, b| a.total_cmp(b));
        let (bf, xi) = (density.b_field, density.xi);
        let mut total = 0.0;
        for w in edges.windows(2) {
            let (a, b) = (w[0], w[1]);
            if b <= a {
                continue;
            }
            // pieces no wider than 0.1 in ln r (the correlation terms vary as power laws)
            let n = ((b / a).ln() / 0.1).ceil().max(1.0) as usize;
            for p in 0..n {
                let a1 = a + (b - a) * p as f64 / n as f64;
                let b1 = a + (b - a) * (p + 1) as f64 / n as f64;
                let (mid, half) = (0.5 * (a1 + b1), 0.5 * (b1 - a1));
                for (x, wt) in GL8 {
                    let r = mid + half * x;
                    let (mu_lo, mu_hi) = self.mu_range(r, &mpc);
                    if mu_hi.is_nan() || mu_lo.is_nan() || mu_hi <= mu_lo {
                        continue;
                    }
                    let mut f = mu_hi - mu_lo;
                    if let Some(t) = xi {
                        f += bf * self.bias * t.xi(r) * (mu_hi - mu_lo);
                        // \int xi(r_B) dmu = [J(s(mu_lo)) - J(s(mu_hi))] / (r d),
                        // s(mu) = sqrt(r^2 + d^2 - 2 r d mu)
                        let s = |mu: f64| (r * r + d * d - 2.0 * r * d * mu).max(0.0).sqrt();
                        f += bf * self.partner_bias * (t.j(s(mu_lo)) - t.j(s(mu_hi))) / (r * d);
                    }
                    total += wt * half * 2.0 * std::f64::consts::PI * r * r * f;
                }
            }
        }
        density.n_bar_mpc3 * total
    }
}

/// Expected field haloes of the pair region per host half, for hosts of one cosmology.
#[derive(Debug, Clone)]
pub struct PairFieldCounter {
    n_bar: f64,
    b_field: f64,
    xi: Option<XiIntegral>,
    model: FieldModel,
}

impl PairFieldCounter {
    pub fn new(options: &BacksplashOptions, lt: &LinearTheory) -> Self {
        let f = FieldCounter::new(options, lt);
        let (n_bar, b_field, xi) = f.density_parts();
        Self {
            n_bar,
            b_field,
            xi: xi.map(XiIntegral::new),
            model: options.field,
        }
    }

    pub fn density(&self) -> FieldDensity<'_> {
        FieldDensity {
            n_bar_mpc3: self.n_bar,
            b_field: self.b_field,
            xi: self.xi.as_ref(),
        }
    }

    /// The half of host h of `cat` (its partner's mass from `host_partner_m_vir_msun`).
    pub fn geometry(&self, lt: &LinearTheory, cat: &Catalog, h: usize) -> HalfGeometry {
        let m = cat.host_m_vir_msun[h];
        let mp = pair_value(&cat.host_partner_m_vir_msun, h);
        let d = cat.host_pair_separation_kpc[h];
        // "nonlinear" keeps the linear two-halo term of both hosts here (the one-halo term of
        // two overlapping hosts is not modelled): see `backsplash` and docs/methods.md
        let correlated = self.model != FieldModel::Region;
        HalfGeometry {
            separation_kpc: d,
            r_vir_kpc: cat.host_r_vir_kpc[h],
            partner_r_vir_kpc: cat.host_partner_r_vir_kpc[h],
            barycentre_kpc: mp / (m + mp) * d,
            region_kpc: cat.host_region_radius_kpc[h],
            bias: if correlated {
                halo_bias(lt, m, 0.0)
            } else {
                0.0
            },
            partner_bias: if correlated {
                halo_bias(lt, mp, 0.0)
            } else {
                0.0
            },
        }
    }

    /// Expected field haloes in host h's half: per shell of `shells_over_rvir` (in units of
    /// this host's R_vir), then the whole half.
    pub fn counts(&self, b: &BacksplashOptions, g: &HalfGeometry) -> Vec<f64> {
        let dens = self.density();
        let mut v: Vec<f64> = b
            .shells_over_rvir
            .windows(2)
            .map(|w| g.expected(&dens, w[0] * g.r_vir_kpc, w[1] * g.r_vir_kpc))
            .collect();
        v.push(g.expected(&dens, g.r_vir_kpc, f64::INFINITY));
        v
    }
}

// ---------------------------------------------------------------------------------------
// Separations (the chunk pass)

/// Bins of log10(separation / kpc): 1 kpc to 10 Mpc in steps of 0.002 dex (quantiles good to
/// 0.5%).
pub fn separation_bins() -> Binned {
    Binned::new(0.0, 4.0, 2000)
}

/// Separations of the pairs of one pair cell, in fixed bins of log10 kpc (each pair once,
/// from its primary's row).
#[derive(Debug, Clone)]
pub struct CellSeparations {
    /// (cosmology index, cell code of the primaries).
    pub key: (u16, u16),
    pub n_pairs: usize,
    /// Smallest and largest radius (kpc) of the pair region (`environment.region_radius_kpc`).
    pub region_kpc: [f64; 2],
    pub today: Binned,
    pub smallest: Binned,
    /// One per column of /histories/z.
    pub history: Vec<Binned>,
}

/// The pairs' separations, per pair cell (cells in order of first appearance).
#[derive(Debug, Clone, Default)]
pub struct PairGeometry {
    /// Redshifts of the history columns.
    pub z: Vec<f64>,
    pub cells: Vec<CellSeparations>,
}

impl PairGeometry {
    /// Add one pair (its primary's row): today's and the smallest separation (kpc), the
    /// radius of its region (kpc) and the separation history at redshifts `z`.
    #[allow(clippy::too_many_arguments)]
    pub fn add(
        &mut self,
        key: (u16, u16),
        today: f64,
        smallest: f64,
        region_kpc: f64,
        z: &[f64],
        history: &[f64],
    ) {
        if self.z.is_empty() {
            self.z = z.to_vec();
        }
        let i = match self.cells.iter().position(|c| c.key == key) {
            Some(i) => i,
            None => {
                self.cells.push(CellSeparations {
                    key,
                    n_pairs: 0,
                    region_kpc: [f64::INFINITY, f64::NEG_INFINITY],
                    today: separation_bins(),
                    smallest: separation_bins(),
                    history: vec![separation_bins(); self.z.len()],
                });
                self.cells.len() - 1
            }
        };
        let c = &mut self.cells[i];
        c.n_pairs += 1;
        c.region_kpc = [
            c.region_kpc[0].min(region_kpc),
            c.region_kpc[1].max(region_kpc),
        ];
        c.today.add(today.log10());
        c.smallest.add(smallest.log10());
        for (b, s) in c.history.iter_mut().zip(history) {
            b.add(s.log10());
        }
    }

    /// All cells together (None without pairs).
    pub fn pooled(&self) -> Option<CellSeparations> {
        let mut it = self.cells.iter();
        let mut p = it.next()?.clone();
        for c in it {
            p.n_pairs += c.n_pairs;
            p.region_kpc = [
                p.region_kpc[0].min(c.region_kpc[0]),
                p.region_kpc[1].max(c.region_kpc[1]),
            ];
            p.today.merge(&c.today);
            p.smallest.merge(&c.smallest);
            for (a, b) in p.history.iter_mut().zip(&c.history) {
                a.merge(b);
            }
        }
        Some(p)
    }
}

/// (16%, 50%, 84%) of a distribution binned in log10 kpc, in kpc.
pub fn separation_quantiles(b: &Binned) -> [f64; 3] {
    [0.16, 0.5, 0.84].map(|q| 10f64.powf(b.quantile(q)))
}

// ---------------------------------------------------------------------------------------
// Results

/// The fraction of candidate satellites once inside the partner, for one cell (or pooled).
#[derive(Debug, Clone)]
pub struct PartnerFraction {
    /// (cosmology index, cell code); None: every pair host.
    pub cell: Option<(u16, u16)>,
    pub n_hosts: usize,
    /// Candidate satellites, and those once inside the partner, summed over hosts.
    pub n_satellites: usize,
    pub n_once: usize,
    /// Per-host fractions: mean over hosts, bootstrap and host-to-host ranges.
    pub fraction: Spread,
}

/// The field dwarfs of the pair region in one shell of distance from the nearer host (or the
/// whole region: `hi_over_rvir` infinite), per pair.
#[derive(Debug, Clone)]
pub struct RegionShell {
    pub lo_over_rvir: f64,
    pub hi_over_rvir: f64,
    /// Means over pairs: backsplash haloes (once inside either host), expected field haloes,
    /// and tree haloes never inside either host (not in the fraction).
    pub backsplash_per_pair: f64,
    pub field_per_pair: f64,
    pub never_inside_per_pair: f64,
    /// Per-pair N_bs / (N_bs + N_field): mean over pairs, bootstrap and pair-to-pair ranges.
    pub fraction: Spread,
}

/// The field dwarfs of the pair regions of one pair cell (or pooled).
#[derive(Debug, Clone)]
pub struct RegionResult {
    /// (cosmology index, cell code of the primaries); None: every pair.
    pub cell: Option<(u16, u16)>,
    pub n_pairs: usize,
    /// Per shell, then the whole region.
    pub shells: Vec<RegionShell>,
}

/// Today's and the smallest separation of the pairs of one pair cell (or pooled): (16%,
/// median, 84%) in kpc.
#[derive(Debug, Clone)]
pub struct SeparationSummary {
    pub cell: Option<(u16, u16)>,
    pub n_pairs: usize,
    /// Smallest and largest radius of the pair region (kpc).
    pub region_kpc: [f64; 2],
    pub today_kpc: [f64; 3],
    pub smallest_kpc: [f64; 3],
}

/// Everything the pair tests found: pooled first (cell None), then per cell.
#[derive(Debug, Clone)]
pub struct PairResults {
    pub partner_fraction: Vec<PartnerFraction>,
    pub region: Vec<RegionResult>,
    pub separations: Vec<SeparationSummary>,
    pub field: FieldModel,
    /// Pairs with one host only among the hosts tested (a shard's store that split a pair),
    /// left out of the region test: one half's subhaloes range over the whole region while
    /// its field covers its own half.
    pub incomplete_pairs: usize,
}

/// One pair host's contribution to its pair: its half's counts and expected field.
#[derive(Debug, Clone)]
struct Half {
    cell: (u16, u16),
    counts: RegionCounts,
    field: Vec<f64>,
}

/// Per pair: backsplash, expected field and never-inside per shell (then the whole region).
#[derive(Debug, Clone)]
struct PairValues {
    backsplash: Vec<f64>,
    field: Vec<f64>,
    never: Vec<f64>,
}

impl PairValues {
    fn from_half(h: &Half) -> Self {
        Self {
            backsplash: h.counts.backsplash.clone(),
            field: h.field.clone(),
            never: h.counts.never_inside.clone(),
        }
    }

    fn add(&mut self, h: &Half) {
        let add = |a: &mut Vec<f64>, b: &[f64]| a.iter_mut().zip(b).for_each(|(x, y)| *x += y);
        add(&mut self.backsplash, &h.counts.backsplash);
        add(&mut self.field, &h.field);
        add(&mut self.never, &h.counts.never_inside);
    }
}

/// One member cell's hosts for the fraction once inside the partner.
#[derive(Debug, Clone)]
struct CellFraction {
    cell: (u16, u16),
    /// Per host.
    fractions: Vec<f64>,
    /// Candidates and those once inside the partner, summed over hosts.
    n_satellites: usize,
    n_once: usize,
}

/// Folds the pair hosts of consecutive chunks (in store order) into the pair tests. Holds a
/// few numbers per pair host (as the battery holds per-host backsplash counts), no rows. A
/// pair is complete when both its hosts have been seen (they are neighbours in the store);
/// the result does not depend on the chunking.
pub struct PairMerger<'a> {
    options: &'a TestOptions,
    master_seed: u64,
    counters: Vec<Option<PairFieldCounter>>,
    /// Per member cell.
    fractions: Vec<CellFraction>,
    /// Complete pairs per pair cell, in order of completion.
    pairs: Vec<((u16, u16), Vec<PairValues>)>,
    /// Pairs with one host seen, by the primary's global host index.
    pending: BTreeMap<u64, Half>,
}

impl<'a> PairMerger<'a> {
    pub fn new(options: &'a TestOptions, master_seed: u64) -> Self {
        Self {
            options,
            master_seed,
            counters: Vec::new(),
            fractions: Vec::new(),
            pairs: Vec::new(),
            pending: BTreeMap::new(),
        }
    }

    /// Fold in a chunk's pair hosts (isolated hosts are skipped). `cat` may be compacted
    /// (`host_pair_region_count` filled in the chunk pass from the full rows) or whole.
    pub fn add(&mut self, theories: &[LinearTheory], cat: &Catalog) {
        let b = &self.options.backsplash;
        let precounted = cat.host_pair_region_count.len() == cat.n_hosts();
        for h in 0..cat.n_hosts() {
            if !is_pair_host(cat, h) {
                continue;
            }
            let cos = cat.host_cosmology[h];
            let code = cat.host_cell[h];
            let (mass_bin, env, member) = split_cell(code);
            // 1. once inside the partner
            let rows = self.options.selection.rows(cat, h);
            let once = rows
                .iter()
                .filter(|&&i| cat.once_in_partner.get(i).copied().unwrap_or(false))
                .count();
            let frac = if rows.is_empty() {
                f64::NAN
            } else {
                once as f64 / rows.len() as f64
            };
            let i = match self.fractions.iter().position(|f| f.cell == (cos, code)) {
                Some(i) => i,
                None => {
                    self.fractions.push(CellFraction {
                        cell: (cos, code),
                        fractions: Vec::new(),
                        n_satellites: 0,
                        n_once: 0,
                    });
                    self.fractions.len() - 1
                }
            };
            let f = &mut self.fractions[i];
            f.fractions.push(frac);
            f.n_satellites += rows.len();
            f.n_once += once;
            // 2. field dwarfs of the region: this host's half
            let counts = if precounted && !cat.host_pair_region_count[h].backsplash.is_empty() {
                cat.host_pair_region_count[h].clone()
            } else {
                region_counts(b, cat, h).expect("a pair host")
            };
            let ci = cos as usize;
            if self.counters.len() <= ci {
                self.counters.resize(ci + 1, None);
            }
            let lt = &theories[ci];
            let counter = self.counters[ci].get_or_insert_with(|| PairFieldCounter::new(b, lt));
            let g = counter.geometry(lt, cat, h);
            let field = counter.counts(b, &g);
            let half = Half {
                cell: (cos, cell_code(mass_bin, env, 0)),
                counts,
                field,
            };
            let key = cat.host_id[h] - member as u64;
            match self.pending.remove(&key) {
                Some(other) => {
                    let mut v = PairValues::from_half(&other);
                    v.add(&half);
                    self.push_pair(other.cell, v);
                }
                None => {
                    self.pending.insert(key, half);
                }
            }
        }
    }

    fn push_pair(&mut self, cell: (u16, u16), v: PairValues) {
        match self.pairs.iter_mut().find(|p| p.0 == cell) {
            Some(p) => p.1.push(v),
            None => self.pairs.push((cell, vec![v])),
        }
    }

    /// The results (None when no pair host was added), with the separations of `geometry`.
    pub fn finish(mut self, geometry: &PairGeometry) -> Option<PairResults> {
        if self.fractions.is_empty() {
            return None;
        }
        // a pair whose other host is not here (a shard's store that split it) is left out of
        // the region test: its half's subhaloes range over the whole region, its field over
        // its own half only (review; it was counted as a whole pair)
        let incomplete_pairs = std::mem::take(&mut self.pending).len();
        let o = self.options;
        let mut rng = host_rng(
            self.master_seed,
            HostId::new(u16::MAX, u16::MAX, u32::MAX - 1),
            Stream::Statistics,
        );
        self.fractions.sort_by_key(|f| f.cell);
        self.pairs.sort_by_key(|p| p.0);
        let mut partner_fraction = Vec::new();
        let all: Vec<f64> = self
            .fractions
            .iter()
            .flat_map(|f| f.fractions.iter().copied())
            .collect();
        partner_fraction.push(PartnerFraction {
            cell: None,
            n_hosts: all.len(),
            n_satellites: self.fractions.iter().map(|f| f.n_satellites).sum(),
            n_once: self.fractions.iter().map(|f| f.n_once).sum(),
            fraction: spread(&all, o.bootstrap, &mut rng),
        });
        for f in &self.fractions {
            partner_fraction.push(PartnerFraction {
                cell: Some(f.cell),
                n_hosts: f.fractions.len(),
                n_satellites: f.n_satellites,
                n_once: f.n_once,
                fraction: spread(&f.fractions, o.bootstrap, &mut rng),
            });
        }
        let b = &o.backsplash;
        let edges = &b.shells_over_rvir;
        let mut region_of = |cell: Option<(u16, u16)>, pairs: &[&PairValues]| {
            // per-pair means (NaN without a pair)
            let n = pairs.len() as f64;
            let shells = (0..=b.n_shells())
                .map(|k| {
                    let (lo, hi) = if k < b.n_shells() {
                        (edges[k], edges[k + 1])
                    } else {
                        (1.0, f64::INFINITY)
                    };
                    let per: Vec<f64> = pairs
                        .iter()
                        .map(|p| ratio(p.backsplash[k], p.field[k]))
                        .collect();
                    RegionShell {
                        lo_over_rvir: lo,
                        hi_over_rvir: hi,
                        backsplash_per_pair: pairs.iter().map(|p| p.backsplash[k]).sum::<f64>() / n,
                        field_per_pair: pairs.iter().map(|p| p.field[k]).sum::<f64>() / n,
                        never_inside_per_pair: pairs.iter().map(|p| p.never[k]).sum::<f64>() / n,
                        fraction: spread(&per, o.bootstrap, &mut rng),
                    }
                })
                .collect();
            RegionResult {
                cell,
                n_pairs: pairs.len(),
                shells,
            }
        };
        let all: Vec<&PairValues> = self.pairs.iter().flat_map(|p| p.1.iter()).collect();
        let mut region = vec![region_of(None, &all)];
        for (cell, v) in &self.pairs {
            let v: Vec<&PairValues> = v.iter().collect();
            region.push(region_of(Some(*cell), &v));
        }
        let summary = |cell: Option<(u16, u16)>, c: &CellSeparations| SeparationSummary {
            cell,
            n_pairs: c.n_pairs,
            region_kpc: c.region_kpc,
            today_kpc: separation_quantiles(&c.today),
            smallest_kpc: separation_quantiles(&c.smallest),
        };
        let mut separations = Vec::new();
        if let Some(p) = geometry.pooled() {
            separations.push(summary(None, &p));
        }
        let mut cells: Vec<&CellSeparations> = geometry.cells.iter().collect();
        cells.sort_by_key(|c| c.key);
        for c in cells {
            separations.push(summary(Some(c.key), c));
        }
        Some(PairResults {
            partner_fraction,
            region,
            separations,
            field: b.field,
            incomplete_pairs,
        })
    }
}

/// n / (n + f), NaN when both are zero.
fn ratio(n: f64, f: f64) -> f64 {
    if n + f > 0.0 {
        n / (n + f)
    } else {
        f64::NAN
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{Rng, SeedableRng};
    use std::f64::consts::PI;

    fn ball(r: f64) -> f64 {
        4.0 / 3.0 * PI * r.powi(3)
    }

    /// Unit density (per Mpc^3) and no correlation: the expected count is the volume in Mpc^3.
    fn uniform() -> FieldDensity<'static> {
        FieldDensity {
            n_bar_mpc3: 1.0,
            b_field: 0.0,
            xi: None,
        }
    }

    fn halves(d: f64, ra: f64, rb: f64, ma: f64, mb: f64, region: f64) -> [HalfGeometry; 2] {
        let g = |r1: f64, r2: f64, m1: f64, m2: f64| HalfGeometry {
            separation_kpc: d,
            r_vir_kpc: r1,
            partner_r_vir_kpc: r2,
            barycentre_kpc: m2 / (m1 + m2) * d,
            region_kpc: region,
            bias: 1.0,
            partner_bias: 1.0,
        };
        [g(ra, rb, ma, mb), g(rb, ra, mb, ma)]
    }

    /// The two halves of a pair together cover the region's sphere minus both virial balls
    /// (both inside the sphere), a closed form: for a uniform density the quadrature is exact
    /// (the integrand is a cubic in r between breakpoints), so to rounding, 1e-12. Equal and
    /// unequal masses, the barycentre anywhere on the axis.
    #[test]
    fn halves_cover_the_region_once() {
        for (d, ra, rb, ma, mb, region) in [
            (800.0, 280.0, 280.0, 1.0, 1.0, 1500.0),
            (760.0, 300.0, 220.0, 2.4, 0.9, 1500.0),
            (600.0, 250.0, 120.0, 1.0, 0.1, 1000.0),
            (900.0, 200.0, 200.0, 1.0, 1.0, 700.0),
        ] {
            let [a, b] = halves(d, ra, rb, ma, mb, region);
            let v = a.expected(&uniform(), ra, f64::INFINITY)
                + b.expected(&uniform(), rb, f64::INFINITY);
            let want = (ball(region) - ball(ra) - ball(rb)) * 1e-9;
            assert!(
                (v / want - 1.0).abs() < 1e-12,
                "{d} {ra} {rb}: {v} vs {want}"
            );
            // the halves' shells add up to the whole half
            let edges = [1.0, 1.5, 2.0, 3.0, 100.0];
            for g in [a, b] {
                let sum: f64 = edges
                    .windows(2)
                    .map(|w| g.expected(&uniform(), w[0] * g.r_vir_kpc, w[1] * g.r_vir_kpc))
                    .sum();
                let whole = g.expected(&uniform(), g.r_vir_kpc, f64::INFINITY);
                assert!((sum / whole - 1.0).abs() < 1e-12, "{sum} vs {whole}");
            }
        }
    }

    /// A host with a partner of negligible mass far away (the barycentre on the host, the
    /// partner beyond the sphere): each shell's volume is the spherical shell's,
    /// 4 pi/3 (r2^3 - r1^3), cut at the sphere's radius, to rounding.
    #[test]
    fn lone_host_shells_are_spherical_shells() {
        let (ra, region) = (250.0, 1000.0);
        let g = HalfGeometry {
            separation_kpc: 5000.0,
            r_vir_kpc: ra,
            partner_r_vir_kpc: 100.0,
            barycentre_kpc: 0.0,
            region_kpc: region,
            bias: 1.0,
            partner_bias: 1.0,
        };
        for (x1, x2) in [(1.0, 1.5), (1.5, 2.0), (2.0, 3.0), (3.0, 5.0), (1.0, 100.0)] {
            let got = g.expected(&uniform(), x1 * ra, x2 * ra);
            let want = (ball((x2 * ra).min(region)) - ball(x1 * ra)) * 1e-9;
            assert!(
                (got / want - 1.0).abs() < 1e-12,
                "{x1}-{x2}: {got} vs {want}"
            );
        }
    }

    /// Points drawn uniformly in a box about the sphere (fixed seed, 4 million) classified
    /// one by one: nearer host, outside both virial radii, inside the sphere, shell of
    /// distance from the nearer host. Each half's shell volume from the quadrature agrees
    /// with the hit fraction times the box volume within 4 binomial standard errors (the
    /// test fails by chance with probability about 1e-4 per shell; the seed is fixed). An
    /// unequal pair whose partner ball pokes out of the sphere.
    #[test]
    fn shell_volumes_match_monte_carlo() {
        let (d, ra, rb, ma, mb, region) = (700.0, 300.0, 200.0, 3.0, 1.0, 800.0);
        let [a, b] = halves(d, ra, rb, ma, mb, region);
        let zb = a.barycentre_kpc;
        let edges = [1.0, 1.5, 2.0, 3.0];
        let n = 4_000_000usize;
        let mut hits = [[0usize; 3]; 2];
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
        for _ in 0..n {
            let p = [
                rng.random_range(-region..region),
                rng.random_range(-region..region),
                rng.random_range(zb - region..zb + region),
            ];
            let ra_ = (p[0] * p[0] + p[1] * p[1] + p[2] * p[2]).sqrt();
            let rb_ = (p[0] * p[0] + p[1] * p[1] + (p[2] - d).powi(2)).sqrt();
            let rbary = (p[0] * p[0] + p[1] * p[1] + (p[2] - zb).powi(2)).sqrt();
            if rbary > region || ra_ <= ra || rb_ <= rb {
                continue;
            }
            let (which, x) = if ra_ <= rb_ {
                (0, ra_ / ra)
            } else {
                (1, rb_ / rb)
            };
            for k in 0..3 {
                if x >= edges[k] && x < edges[k + 1] {
                    hits[which][k] += 1;
                }
            }
        }
        let box_v = (2.0 * region).powi(3) * 1e-9;
        for (which, g) in [a, b].iter().enumerate() {
            for k in 0..3 {
                let q = g.expected(
                    &uniform(),
                    edges[k] * g.r_vir_kpc,
                    edges[k + 1] * g.r_vir_kpc,
                );
                let p = hits[which][k] as f64 / n as f64;
                let se = (p * (1.0 - p) / n as f64).sqrt() * box_v;
                assert!(
                    (q - p * box_v).abs() < 4.0 * se,
                    "half {which} shell {k}: {q} vs {} ± {se}",
                    p * box_v
                );
                assert!(q > 0.0);
            }
        }
    }

    /// With the correlation terms: the quadrature against a Monte Carlo estimate of the same
    /// weighted volume, the points of the test above weighted by
    /// 1 + b_f (b_A xi(r_A) + b_B xi(r_B)) evaluated directly from the correlation table
    /// (independent of the angular closed form and of the tabulated integral J). Agreement
    /// within 4 standard errors of the Monte Carlo mean (its sample variance), and the
    /// correlation raises the count well above the uniform one.
    #[test]
    fn correlated_count_matches_monte_carlo() {
        let lt = LinearTheory::new(
            crate::Cosmology::from_preset("planck18").unwrap(),
            crate::LinearOptions::default(),
        )
        .unwrap();
        let table = CorrelationTable::new(lt.power());
        let xi = XiIntegral::new(&table);
        let dens = FieldDensity {
            n_bar_mpc3: 1.0,
            b_field: 0.9,
            xi: Some(&xi),
        };
        let (d, ra, rb, ma, mb, region) = (760.0, 290.0, 250.0, 1.5, 1.0, 1200.0);
        let [mut a, _] = halves(d, ra, rb, ma, mb, region);
        a.bias = 1.1;
        a.partner_bias = 0.95;
        let zb = a.barycentre_kpc;
        let (lo, hi) = (1.5 * ra, 3.0 * ra);
        let n = 2_000_000usize;
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(11);
        let (mut s1, mut s2) = (0.0, 0.0);
        for _ in 0..n {
            // a box about this host's shell
            let p = [
                rng.random_range(-hi..hi),
                rng.random_range(-hi..hi),
                rng.random_range(-hi..hi),
            ];
            let ra_ = (p[0] * p[0] + p[1] * p[1] + p[2] * p[2]).sqrt();
            let rb_ = (p[0] * p[0] + p[1] * p[1] + (p[2] - d).powi(2)).sqrt();
            let rbary = (p[0] * p[0] + p[1] * p[1] + (p[2] - zb).powi(2)).sqrt();
            let w =
                if rbary <= region && ra_ > ra && rb_ > rb && ra_ <= rb_ && ra_ >= lo && ra_ < hi {
                    1.0 + 0.9 * (1.1 * table.xi(ra_ * 1e-3) + 0.95 * table.xi(rb_ * 1e-3))
                } else {
                    0.0
                };
            s1 += w;
            s2 += w * w;
        }
        let box_v = (2.0 * hi).powi(3) * 1e-9;
        let mean = s1 / n as f64;
        let se = ((s2 / n as f64 - mean * mean) / n as f64).sqrt() * box_v;
        let mc = mean * box_v;
        let q = a.expected(&dens, lo, hi);
        assert!((q - mc).abs() < 4.0 * se, "{q} vs {mc} ± {se}");
        assert!(se / mc < 2e-3, "the check is tight: {}", se / mc);
        let flat = a.expected(&uniform(), lo, hi);
        assert!(q > 1.5 * flat, "{q} vs uniform {flat}");
    }

    /// J(s) = \int xi(t) t dt from the table against a direct fine midpoint sum between two
    /// radii (10^5 steps in ln t; its error is below 1e-8 relative), 1e-6.
    #[test]
    fn xi_integral_table() {
        let lt = LinearTheory::new(
            crate::Cosmology::from_preset("planck18").unwrap(),
            crate::LinearOptions::default(),
        )
        .unwrap();
        let table = CorrelationTable::new(lt.power());
        let xi = XiIntegral::new(&table);
        for (a, b) in [(0.15f64, 0.4f64), (0.3, 2.1), (1.0, 5.0)] {
            let n = 100_000;
            let h = (b / a).ln() / n as f64;
            let direct: f64 = (0..n)
                .map(|k| {
                    let t = a * (h * (k as f64 + 0.5)).exp();
                    table.xi(t) * t * t * h
                })
                .sum();
            let got = xi.j(b) - xi.j(a);
            assert!(
                (got / direct - 1.0).abs() < 1e-6,
                "{a}-{b}: {got} vs {direct}"
            );
        }
    }
}
