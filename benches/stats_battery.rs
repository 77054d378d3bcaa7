//! The full infall-test battery on 1,000 synthetic hosts with 150 selected satellites each
//! (10,000 draws per host and clock, N = 12, fraction-of-N for N = 6..20, 1,000 bootstrap
//! resamples, 12 observed objects). Target: under 10 s on 2 cores.
//! Run: `cargo bench --bench stats_battery`.

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use retinue::galaxies::GalaxyOptions;
use retinue::stats::{run_tests, Catalog, ObservedObject, ObservedSample, TestOptions};
use retinue::{Cosmology, LinearOptions, LinearTheory};

fn main() {
    let lt = LinearTheory::new(
        Cosmology::from_preset("planck18").unwrap(),
        LinearOptions::default(),
    )
    .unwrap();
    let mut rng = ChaCha8Rng::seed_from_u64(1);
    let mut c = Catalog {
        offset: vec![0],
        ..Default::default()
    };
    for h in 0..1000u64 {
        c.host_id.push(h);
        c.host_cosmology.push(0);
        c.host_cell.push((h % 4) as u16);
        c.host_m_vir_msun.push(1.2e12);
        c.host_r_vir_kpc.push(280.0);
        for j in 0..150u32 {
            let t = 1.0 + 12.5 * rng.random::<f64>();
            c.branch.push(j + 1);
            c.parent_branch.push(0);
            c.order.push(1);
            c.m_peak_msun.push(1e9);
            c.m_bound_msun.push(1e8);
            c.t_infall_gyr.push(t);
            c.m_host_at_infall_msun.push(5e11);
            c.t_first_host_infall_gyr.push(t);
            c.t_last_host_infall_gyr.push(t + 0.5 * rng.random::<f64>());
            c.r_kpc.push(20.0 + 260.0 * rng.random::<f64>());
            c.v_r_kms.push(200.0 * (rng.random::<f64>() - 0.5));
            c.status.push(0);
            c.t_disrupt_pericentre_gyr.push(f64::NAN);
            c.r_peri_min_kpc.push(30.0);
            c.backsplash.push(false);
            c.occupied.push(true);
            c.mstar_msun
                .push(10f64.powf(4.0 + 2.0 * rng.random::<f64>()));
            c.m_v.push(-6.0);
            c.observable.push(true);
        }
        c.offset.push(c.branch.len());
    }
    let objects = (0..12)
        .map(|i| ObservedObject {
            id: format!("obj{i}"),
            mstar_msun: 1e5,
            r_gc_kpc: 50.0 + 15.0 * i as f64,
            v_r_kms: 0.0,
            t_quench_lookback_gyr: 11.0,
            t_quench_err_gyr: 0.7,
        })
        .collect();
    let sample = ObservedSample { objects };
    let opts = TestOptions {
        n_draw: Some(12),
        ..Default::default()
    };
    let t0 = std::time::Instant::now();
    let res = run_tests(
        std::slice::from_ref(&lt),
        &GalaxyOptions::default(),
        &c,
        &opts,
        Some(&sample),
        1,
    );
    let el = t0.elapsed().as_secs_f64();
    println!(
        "stats battery: 1000 hosts x 150 selected satellites, {} threads: {el:.2} s (all-of-N at z = 1: {:.4})",
        rayon::current_num_threads(),
        res.all_of_n_mc[0].1.spread[4].mean
    );
}
