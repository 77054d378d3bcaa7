//! Infall statistics against exact combinatorics, synthetic inputs with known answers, and a
//! bootstrap coverage test.

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

use retinue::galaxies::GalaxyOptions;
use retinue::stats::draws::{p_all_exact, p_all_mc, p_at_least_exact, p_at_least_mc};
use retinue::stats::{
    run_tests, spread, Catalog, Clock, ObservedObject, ObservedSample, SampleOptions, Selection,
    TestOptions,
};
use retinue::{Cosmology, LinearOptions, LinearTheory};

use super::planck18;

/// Monte Carlo draws against the exact hypergeometric value, N = 30 candidates with K = 20
/// early for thresholds between them: |MC - exact| < 4 sqrt(P(1-P)/draws) (binomial error of
/// a Monte Carlo fraction), for all-of-n (n = 3, 8, 11) and at-least-k (8 of 11).
#[test]
fn val_monte_carlo_matches_hypergeometric() {
    let times: Vec<f64> = (0..30).map(|i| i as f64).collect(); // 30 distinct infall times
    let t_grid = [5.5, 12.5, 20.5, 25.5, 30.5];
    let draws = 200_000;
    let mut rng = ChaCha8Rng::seed_from_u64(3);
    for n in [3usize, 8, 11] {
        let mc = p_all_mc(&times, n, draws, &t_grid, &mut rng);
        for (k, &tz) in t_grid.iter().enumerate() {
            let kk = times.iter().filter(|&&t| t < tz).count() as u64;
            let ex = p_all_exact(30, kk, n as u64);
            let tol = 4.0 * (ex * (1.0 - ex) / draws as f64).sqrt() + 1e-12;
            assert!(
                (mc[k] - ex).abs() <= tol,
                "n={n} K={kk}: mc {} exact {ex}",
                mc[k]
            );
        }
    }
    let mc = p_at_least_mc(&times, 11, 8, draws, &[19.5], &mut rng); // K = 20 early
    let ex = p_at_least_exact(30, 20, 11, 8);
    assert!((ex - 0.451974).abs() < 1e-6);
    assert!((mc[0] - ex).abs() < 4.0 * (ex * (1.0 - ex) / draws as f64).sqrt());
}

/// A synthetic catalogue of `hosts` hosts, `per` satellites each, infall times drawn
/// independently and uniformly in cosmic time over [t_lo, t_hi].
fn synthetic(hosts: usize, per: usize, t_lo: f64, t_hi: f64, seed: u64) -> Catalog {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut c = Catalog {
        offset: vec![0],
        ..Default::default()
    };
    for h in 0..hosts {
        c.host_id.push(h as u64);
        c.host_cosmology.push(0);
        c.host_cell.push(0);
        c.host_m_vir_msun.push(1.2e12);
        c.host_r_vir_kpc.push(280.0);
        for j in 0..per {
            let t = t_lo + (t_hi - t_lo) * rng.random::<f64>();
            c.branch.push(j as u32 + 1);
            c.parent_branch.push(0);
            c.order.push(1);
            c.m_peak_msun.push(1e9);
            c.m_bound_msun.push(1e8);
            c.t_infall_gyr.push(t);
            c.m_host_at_infall_msun.push(5e11);
            c.t_first_host_infall_gyr.push(t);
            c.t_last_host_infall_gyr.push(t);
            c.r_kpc.push(100.0);
            c.v_r_kms.push(0.0);
            c.status.push(0);
            c.t_disrupt_pericentre_gyr.push(f64::NAN);
            c.r_peri_min_kpc.push(f64::NAN);
            c.backsplash.push(false);
            c.occupied.push(true);
            c.mstar_msun.push(1e6);
            c.m_v.push(-8.0);
            c.observable.push(true);
        }
        c.offset.push(c.branch.len());
    }
    c
}

/// Known answer: if each of a host's N satellites fell in before time t independently with
/// probability p(t), a random n-subset is all early with probability exactly p^n (the
/// hypergeometric average over K ~ Binomial(N, p)). Infall times uniform on [1, 13] Gyr give
/// p = (t - 1)/12. 300 hosts × 40 satellites, n = 4: the pooled Monte Carlo mean must match
/// p^n within 4 standard errors of the mean over hosts (SE from the per-host spread), and the
/// Monte Carlo and exact curves agree within the Monte Carlo error.
#[test]
fn val_synthetic_infall_recovers_analytic_probability() {
    let lt = planck18();
    let cosmo = lt.cosmology();
    let cat = synthetic(300, 40, 1.0, 13.0, 11);
    let opts = TestOptions {
        n_draw: Some(4),
        draws: 4000,
        z_grid: vec![0.3, 0.6, 1.0, 1.5, 2.5],
        bootstrap: 200,
        n_range: [4, 5],
        selection: Selection::default(),
        ..Default::default()
    };
    let res = run_tests(
        std::slice::from_ref(&lt),
        &GalaxyOptions::default(),
        &cat,
        &opts,
        None,
        7,
    );
    let (_, curve) = res
        .all_of_n_mc
        .iter()
        .find(|(c, _)| *c == Clock::FirstHostInfall)
        .unwrap();
    let (_, exact) = res
        .all_of_n_exact
        .iter()
        .find(|(c, _)| *c == Clock::FirstHostInfall)
        .unwrap();
    for (k, &z) in opts.z_grid.iter().enumerate() {
        let t = cosmo.age_gyr(z);
        let p = ((t - 1.0) / 12.0).clamp(0.0, 1.0);
        let want = p.powi(4);
        let col: Vec<f64> = curve.per_host.iter().map(|r| r[k]).collect();
        let mean = col.iter().sum::<f64>() / col.len() as f64;
        let sd =
            (col.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (col.len() - 1) as f64).sqrt();
        let se = sd / (col.len() as f64).sqrt();
        assert!(
            (mean - want).abs() < 4.0 * se + 1e-9,
            "z={z}: {mean} vs {want} (se {se})"
        );
        assert!((curve.spread[k].mean - mean).abs() < 1e-12);
        let ex_mean = exact.spread[k].mean;
        assert!(
            (mean - ex_mean).abs()
                < 4.0 * (0.25 / (opts.draws as f64 * col.len() as f64)).sqrt() + 1e-9
        );
    }
    assert!(res.hosts_too_few.is_empty());
}

/// Per-host values of one synthetic run of the coverage tests: 60 hosts, each the mean of
/// three uniforms scaled to [0, 0.6] (mean 0.3).
fn coverage_hosts(rng: &mut ChaCha8Rng) -> Vec<f64> {
    (0..60)
        .map(|_| 0.2 * (rng.random::<f64>() + rng.random::<f64>() + rng.random::<f64>()))
        .collect()
}

/// Bootstrap intervals cover the true mean at the stated rate: 400 synthetic runs of 60 hosts
/// whose per-host probabilities are Beta-like draws with known mean 0.3; the 16–84% percentile
/// interval of the bootstrap mean (500 resamples) should contain 0.3 in 68% of runs. Binomial
/// error of the coverage over 400 runs: 0.023; tolerance 3 errors (0.07). Seed fixed.
#[test]
fn val_bootstrap_coverage() {
    let mut rng = ChaCha8Rng::seed_from_u64(5);
    let runs = 400;
    let mut covered = 0;
    for _ in 0..runs {
        let v = coverage_hosts(&mut rng);
        let s = spread(&v, 500, &mut rng);
        if s.boot16 <= 0.3 && 0.3 <= s.boot84 {
            covered += 1;
        }
    }
    let c = covered as f64 / runs as f64;
    assert!((c - 0.68).abs() < 0.07, "coverage {c}");
}

/// The streaming (Poisson-weight) bootstrap of the tests covers the true mean at the stated
/// rate, as the resampling bootstrap above: same 400 synthetic runs of 60 hosts, one column,
/// 500 resamples; tolerance 3 binomial errors (0.07). Its binned host-to-host median and
/// 16/84% points agree with the exact order statistics to the bin width (0.001).
#[test]
fn val_streaming_bootstrap_coverage() {
    use retinue::stats::intervals::{percentile, poisson1, StreamingSpread};
    let mut rng = ChaCha8Rng::seed_from_u64(6);
    let runs = 400;
    let mut covered = 0;
    for _ in 0..runs {
        let v = coverage_hosts(&mut rng);
        let mut acc = StreamingSpread::new(1, 500);
        for &x in &v {
            let w: Vec<u32> = (0..500).map(|_| poisson1(&mut rng)).collect();
            acc.add(&[x], &w);
        }
        let s = acc.finish()[0];
        if s.boot16 <= 0.3 && 0.3 <= s.boot84 {
            covered += 1;
        }
        let mut sorted = v.clone();
        sorted.sort_by(|a, b| a.partial_cmp(b).unwrap());
        for (q, got) in [(0.5f64, s.median), (0.16, s.p16), (0.84, s.p84)] {
            // one order statistic apart at most (60 values), plus the bin width
            let lo = percentile(&sorted, (q - 1.0 / 59.0).max(0.0));
            let hi = percentile(&sorted, (q + 1.0 / 59.0).min(1.0));
            assert!(
                got >= lo - 1e-3 && got <= hi + 1e-3,
                "q={q}: {got} not in [{lo}, {hi}]"
            );
        }
        assert!((s.mean - v.iter().sum::<f64>() / 60.0).abs() < 1e-12);
    }
    let c = covered as f64 / runs as f64;
    assert!((c - 0.68).abs() < 0.07, "coverage {c}");
}

/// Quenching comparison with a known answer: every satellite fell in 10 Gyr ago; three
/// objects quenched 8 Gyr ago with no error. Every pairing allows a delay of exactly 2 Gyr, so
/// P(tau) = 1 for tau <= 2 and 0 above, and the largest allowed delay is 2 Gyr.
#[test]
fn quench_comparison_known_answer() {
    let lt = planck18();
    let t0 = lt.cosmology().age0_gyr();
    let mut cat = synthetic(20, 10, 0.0, 1.0, 1);
    for t in cat
        .t_first_host_infall_gyr
        .iter_mut()
        .chain(cat.t_last_host_infall_gyr.iter_mut())
        .chain(cat.t_infall_gyr.iter_mut())
    {
        *t = t0 - 10.0;
    }
    let obj = |id: &str| ObservedObject {
        id: id.into(),
        mstar_msun: 1e6,
        r_gc_kpc: 100.0,
        v_r_kms: 0.0,
        t_quench_lookback_gyr: 8.0,
        t_quench_err_gyr: 0.0,
    };
    let sample = ObservedSample {
        objects: vec![obj("a"), obj("b"), obj("c")],
    };
    let opts = TestOptions {
        draws: 500,
        bootstrap: 50,
        delay_grid_gyr: vec![0.0, 1.0, 1.99, 2.01, 3.0],
        n_range: [3, 3],
        ..Default::default()
    };
    let res = run_tests(
        std::slice::from_ref(&lt),
        &GalaxyOptions::default(),
        &cat,
        &opts,
        Some(&sample),
        3,
    );
    let (_, curve, tau_max) = &res.quench[0];
    let means: Vec<f64> = curve.spread.iter().map(|s| s.mean).collect();
    assert_eq!(means, vec![1.0, 1.0, 1.0, 0.0, 0.0]);
    assert_eq!(tau_max.tau, 1.99);
    // every host allows 1.99 Gyr and no more, so every bootstrap resample does too
    for t in [
        tau_max.boot16,
        tau_max.boot84,
        tau_max.boot025,
        tau_max.boot975,
        tau_max.host_median,
    ] {
        assert_eq!(t, 1.99);
    }
    assert!(tau_max.hosts() > 0);
    assert_eq!(tau_max.hosts_reaching, tau_max.hosts());
    // phase-space matches: every satellite sits at 100 kpc, v_r = 0, 1e6 Msun
    let m = res
        .matches
        .iter()
        .find(|m| m.0 == "a" && m.1 == Clock::FirstHostInfall)
        .unwrap();
    assert_eq!(m.4, 200);
    assert_eq!(m.3.mean, 1.0);
    // matches are satellites of the selection (review: its cuts were not applied): with the
    // satellites at 100 kpc = 0.36 R_vir and a selection beyond 0.5 R_vir, none matches
    let mut outer = opts.clone();
    outer.selection.r_over_rvir = [0.5, 1.0];
    let res = run_tests(
        std::slice::from_ref(&lt),
        &GalaxyOptions::default(),
        &cat,
        &outer,
        Some(&sample),
        3,
    );
    let m = res
        .matches
        .iter()
        .find(|m| m.0 == "a" && m.1 == Clock::FirstHostInfall)
        .unwrap();
    assert_eq!(m.4, 0);
}

/// Hosts with fewer candidates than N are reported, not silently dropped.
#[test]
fn hosts_with_too_few_candidates_are_reported() {
    let lt = planck18();
    let cat = synthetic(5, 3, 1.0, 13.0, 2);
    let opts = TestOptions {
        n_draw: Some(4),
        draws: 200,
        bootstrap: 20,
        n_range: [2, 4],
        ..Default::default()
    };
    let res = run_tests(
        std::slice::from_ref(&lt),
        &GalaxyOptions::default(),
        &cat,
        &opts,
        None,
        1,
    );
    assert_eq!(res.hosts_too_few, vec![0, 1, 2, 3, 4]);
    assert!(res.all_of_n_mc[0].1.per_host.is_empty());
}

/// The observed-sample reader: CSV with named columns in any order and comments; clear errors,
/// each naming the file and the line (src/stats/sample.rs has the detailed cases).
#[test]
fn observed_sample_parsing() {
    let opts = SampleOptions::default();
    let parse = |text: &str| ObservedSample::parse_csv(text, "s.csv", &opts);
    let ok = "# invented\nid,t_quench_lookback_gyr,t_quench_err_gyr,mstar_msun,r_gc_kpc,v_r_kms\nA,10.5,0.8,3e5,60,-40\n";
    let s = parse(ok).unwrap();
    assert_eq!(s.sample.objects.len(), 1);
    assert_eq!(s.sample.objects[0].mstar_msun, 3e5);
    assert!(s.notes.is_empty());
    // an unknown column is ignored with a note
    let extra = ok
        .replace("v_r_kms\n", "v_r_kms,colour\n")
        .replace("-40\n", "-40,red\n");
    assert_eq!(
        parse(&extra).unwrap().notes,
        vec!["s.csv: ignoring column colour".to_string()]
    );
    for (text, want) in [
        (
            "id,mass\nA,1\n",
            "s.csv: line 1 (header): missing column `mstar_msun`",
        ),
        (
            "id,mstar_msun,r_gc_kpc,v_r_kms,t_quench_lookback_gyr\nA,1,2,3,4\n",
            "s.csv: line 1 (header): missing column `t_quench_err_gyr`",
        ),
        (
            "id,mstar_msun,r_gc_kpc,v_r_kms,t_quench_lookback_gyr,t_quench_err_gyr\nA,1,2,x,4,1\n",
            "s.csv: line 2: v_r_kms = `x`",
        ),
        (
            "id,mstar_msun,r_gc_kpc,v_r_kms,t_quench_lookback_gyr,t_quench_err_gyr\nA,1,2,3\n",
            "s.csv: line 2: 4 fields",
        ),
    ] {
        let e = parse(text).unwrap_err();
        assert!(e.contains(want), "{text:?}: {e}");
    }
    // every problem at once: a value that is not a number, a short line and values out of
    // range on other lines
    let e = parse(
        "id,mstar_msun,r_gc_kpc,v_r_kms,t_quench_lookback_gyr,t_quench_err_gyr\nA,1e6,50,10,20,1\nB,1e6,x,10,2,1\nC,1e6,50,10,2,-1\nD,1\n",
    )
    .unwrap_err();
    for want in [
        "s.csv: line 2: object `A`: t_quench_lookback_gyr = 20",
        "s.csv: line 3: r_gc_kpc = `x` is not a number",
        "s.csv: line 4: object `C`: t_quench_err_gyr = -1",
        "s.csv: line 5: 2 fields",
    ] {
        assert!(e.contains(want), "{want}: {e}");
    }
    assert_eq!(e.lines().count(), 4, "{e}");
    // NaN reads as a number in CSV and TOML, and is out of every range
    let e = parse(
        "id,mstar_msun,r_gc_kpc,v_r_kms,t_quench_lookback_gyr,t_quench_err_gyr\nA,1e6,nan,10,2,1\n",
    )
    .unwrap_err();
    assert!(e.contains("`A`: r_gc_kpc = NaN"), "{e}");
    // the TOML form names every bad key at once, each with the file and its line
    let d = tempfile::tempdir().unwrap();
    let f = d.path().join("s.toml");
    std::fs::write(
        &f,
        "[[object]]\nid = \"A\"\nmstar_msun = 1e6\nr_gc_kpc = 5\nv_r_kms = 10\n\
         t_quench_lookback_gyr = 8\nt_quench_err_gyr = 1\ncolour = 3\n\n[[object]]\nid = \"B\"\n\
         mstar_msun = \"big\"\nr_gc_kpc = 50\nv_r_kms = 10\nt_quench_lookback_gyr = 8\n\
         t_quench_err_gyr = 1\n",
    )
    .unwrap();
    let e = ObservedSample::read(&f, &opts).unwrap_err();
    let name = f.display().to_string();
    assert!(
        e.contains(&format!("{name}: line 8: object[0].colour = 3"))
            && e.contains(&format!("{name}: line 12: object[1].mstar_msun")),
        "{e}"
    );
    assert_eq!(e.lines().count(), 2, "{e}");
}

/// Testing hosts in chunks and merging gives exactly the results of testing them all at once
/// (per-host draws are keyed by host; the merge recomputes every summary in the same order).
#[test]
fn chunked_tests_merge_to_the_whole() {
    let lt = planck18();
    let cat = synthetic(30, 25, 1.0, 13.0, 4);
    let obj = |id: &str, q: f64| ObservedObject {
        id: id.into(),
        mstar_msun: 1e6,
        r_gc_kpc: 100.0,
        v_r_kms: 0.0,
        t_quench_lookback_gyr: q,
        t_quench_err_gyr: 0.5,
    };
    let sample = ObservedSample {
        objects: vec![obj("a", 9.0), obj("b", 11.0), obj("c", 10.0)],
    };
    let opts = TestOptions {
        draws: 400,
        bootstrap: 100,
        n_range: [3, 5],
        ..Default::default()
    };
    let whole = run_tests(
        std::slice::from_ref(&lt),
        &GalaxyOptions::default(),
        &cat,
        &opts,
        Some(&sample),
        5,
    );
    let parts: Vec<_> = [(0, 7), (7, 20), (20, 30)]
        .iter()
        .map(|&(a, b)| {
            retinue::stats::battery::run_tests_raw(
                std::slice::from_ref(&lt),
                &GalaxyOptions::default(),
                &cat.slice_hosts(a, b),
                &opts,
                Some(&sample),
                5,
            )
        })
        .collect();
    let merged = retinue::stats::battery::merge_partials(parts, &opts, 5).unwrap();
    let key = |r: &retinue::stats::AnalysisResults| {
        format!(
            "{:?} {:?} {:?} {:?} {:?} {:?} {:?}",
            r.all_of_n_mc
                .iter()
                .map(|(_, c)| &c.spread)
                .collect::<Vec<_>>(),
            r.fraction_of_n
                .iter()
                .map(|(_, _, c)| &c.spread)
                .collect::<Vec<_>>(),
            r.quench
                .iter()
                .map(|(_, c, t)| (&c.spread, t))
                .collect::<Vec<_>>(),
            r.matches.iter().map(|m| (&m.3, m.4)).collect::<Vec<_>>(),
            r.backsplash_fraction,
            r.dependence,
            r.candidates
        )
    };
    assert_eq!(key(&whole), key(&merged));
}

/// In a cosmology sweep each host's cosmic times are on its own cosmology's clock. Two hosts,
/// one in Planck 2018 and one in a cosmology with a very different clock (Omega_m = 0.6,
/// h = 0.9: age 8.5 Gyr against 13.8, and z = 2 at 1.79 Gyr against 3.28), each with 11
/// satellites that fell in at z = 2.2 and 9 at z = 1.8 on their own clock. Known answers: on
/// the grid point z = 2 both hosts have K = 11 of N = 20 early, so both get the exact
/// hypergeometric P(all 5 early) = C(11,5)/C(20,5); each cell's median first-infall redshift
/// is 2.2 (bins of 0.002); and the pooled lookback times are each host's own lookbacks to
/// z = 2.2 and 1.8 (bins of 0.05 Gyr). Read on the first cosmology's clock, the second host
/// would have all 20 early (P = 1) and redshifts near 3.
#[test]
fn val_each_host_reads_its_own_cosmology_clock() {
    let a = planck18();
    let mut p = a.cosmology().params.clone();
    p.omega_m = 0.6;
    p.h = 0.9;
    let b = LinearTheory::new(Cosmology::new(p).unwrap(), LinearOptions::default()).unwrap();
    let theories = [a, b];
    let mut cat = synthetic(2, 20, 1.0, 2.0, 5);
    for h in 0..2 {
        cat.host_cosmology[h] = h as u16;
        let c = theories[h].cosmology();
        for (j, i) in cat.rows(h).enumerate() {
            let t = c.age_gyr(if j < 11 { 2.2 } else { 1.8 });
            cat.t_infall_gyr[i] = t;
            cat.t_first_host_infall_gyr[i] = t;
            cat.t_last_host_infall_gyr[i] = t;
        }
    }
    let (age_a, age_b) = (
        theories[0].cosmology().age0_gyr(),
        theories[1].cosmology().age0_gyr(),
    );
    assert!(age_a - age_b > 5.0, "ages today {age_a} and {age_b} Gyr");
    // the second cosmology's satellites all fell in before z = 2 on the first one's clock
    assert!(theories[1].cosmology().age_gyr(1.8) < theories[0].cosmology().age_gyr(2.0));
    let opts = TestOptions {
        n_draw: Some(5),
        draws: 200,
        z_grid: vec![2.0],
        bootstrap: 20,
        n_range: [5, 5],
        ..Default::default()
    };
    let res = run_tests(&theories, &GalaxyOptions::default(), &cat, &opts, None, 3);
    // C(11,5)/C(20,5) = 462/15504
    let want = 462.0 / 15504.0;
    let (_, ex) = res
        .all_of_n_exact
        .iter()
        .find(|(c, _)| *c == Clock::FirstHostInfall)
        .unwrap();
    assert_eq!(ex.per_host.len(), 2);
    for (h, row) in ex.per_host.iter().enumerate() {
        assert!(
            (row[0] - want).abs() < 1e-12,
            "host {h}: {} vs {want}",
            row[0]
        );
    }
    assert_eq!(res.dependence.len(), 2);
    for d in &res.dependence {
        assert!(
            (d.4 - 2.2).abs() < 0.003,
            "cell {:?}: median z {}",
            (d.0, d.1),
            d.4
        );
    }
    let (_, pooled) = res
        .infall_lookbacks
        .iter()
        .find(|(c, _)| *c == Clock::FirstHostInfall)
        .unwrap();
    // the pooled lookbacks: 11 + 9 per host at the four known values (bins of 0.05 Gyr)
    let mut want_lb: Vec<f64> = Vec::new();
    for lt in &theories {
        let c = lt.cosmology();
        want_lb.extend(std::iter::repeat_n(c.lookback_gyr(2.2), 11));
        want_lb.extend(std::iter::repeat_n(c.lookback_gyr(1.8), 9));
    }
    want_lb.sort_by(|x, y| x.partial_cmp(y).unwrap());
    for q in [0.1, 0.3, 0.6, 0.9] {
        let got = pooled.quantile(q);
        let exact = want_lb[((q * 40.0) as usize).min(39)];
        assert!(
            (got - exact).abs() <= 0.05 + 1e-9,
            "q={q}: {got} vs {exact}"
        );
    }
}

/// Backsplash counts count distinct haloes: in a host whose 40 satellites include 6 backsplash
/// subhaloes of the host (status 0) and 4 backsplash satellites of satellites still inside
/// another subhalo (status 2) at 2 R_vir, all of peak mass 1e9 Msun, the count is 6 (the field
/// count it is compared with counts distinct haloes).
#[test]
fn backsplash_counts_distinct_haloes() {
    let lt = planck18();
    let mut cat = synthetic(1, 40, 1.0, 13.0, 3);
    for i in 0..10 {
        cat.backsplash[i] = true;
        cat.r_kpc[i] = 2.0 * cat.host_r_vir_kpc[0];
        cat.status[i] = if i < 6 { 0 } else { 2 };
    }
    let opts = TestOptions {
        n_draw: Some(4),
        draws: 100,
        z_grid: vec![1.0],
        bootstrap: 10,
        n_range: [4, 4],
        selection: Selection::default(),
        ..Default::default()
    };
    let res = run_tests(
        std::slice::from_ref(&lt),
        &GalaxyOptions::default(),
        &cat,
        &opts,
        None,
        7,
    );
    assert_eq!(res.backsplash_count_mean, 6.0);
}
