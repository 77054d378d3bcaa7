//! Orbit benches. Targets: one subhalo over 10 Gyr in the evolving host with friction and
//! stripping <= 0.2 ms; a whole Milky-Way-mass host <= 0.3 s for ~10^3 subhaloes (one core).
//! Run: `cargo bench --bench orbits`.

use criterion::{criterion_group, criterion_main, Criterion};
use std::hint::black_box;

use retinue::host::{EvolvingHost, HostOptions};
use retinue::orbits::{evolve_host_subhaloes, evolve_subhalo, OrbitOptions};
use retinue::rng::{host_rng, HostId, Stream};
use retinue::trees::{Accretion, HostHistory, TreeBuilder, TreeSpec};
use retinue::{Cosmology, LinearOptions, LinearTheory};

fn orbits(c: &mut Criterion) {
    let lt = LinearTheory::new(
        Cosmology::from_preset("planck18").unwrap(),
        LinearOptions::default(),
    )
    .unwrap();
    let spec = TreeSpec {
        m_resolution_msun: 10f64.powf(7.5),
        ..TreeSpec::milky_way_default()
    };
    let mut b = TreeBuilder::new(spec.pch08).unwrap();
    let mut rng = host_rng(3, HostId::new(0, 0, 0), Stream::Tree);
    let hist = HostHistory::from_tree(b.build(&lt, &spec, &mut rng).unwrap());
    let t0 = lt.cosmology().age0_gyr();
    let host = EvolvingHost::from_history(&lt, &hist, &HostOptions::default(), 0.5);
    let opts = OrbitOptions::default();
    println!(
        "host: {} accretions ({} first order, {} above 10^7.5 Msun at infall)",
        hist.accretions.len(),
        hist.first_order().count(),
        hist.accretions
            .iter()
            .filter(|a| a.m_infall_msun > 10f64.powf(7.5))
            .count()
    );

    // one massive subhalo (friction on) falling in 10 Gyr ago
    let t_in = t0 - 10.0;
    let z_in = lt.cosmology().z_at_age(t_in);
    let a = Accretion {
        branch: 1,
        order: 1,
        into_branch: 0,
        t_infall_gyr: t_in,
        z_infall: z_in,
        m_infall_msun: 3e10,
        m_host_at_infall_msun: host.snapshot(t_in).m_vir,
        m_peak_msun: 3e10,
        t_peak_gyr: t_in,
        group: 1,
        t_host_infall_gyr: t_in,
        z_host_infall: z_in,
    };
    let mut group = c.benchmark_group("orbits");
    let mut k = 0u32;
    group.bench_function("one_subhalo_10gyr_friction_stripping", |bch| {
        bch.iter(|| {
            k += 1;
            let mut r = host_rng(5, HostId::new(0, 0, k), Stream::Orbits);
            black_box(evolve_subhalo(&lt, &host, &opts, &a, t0, &mut r))
        })
    });
    let small = Accretion {
        m_infall_msun: 1e8,
        m_peak_msun: 1e8,
        ..a.clone()
    };
    group.bench_function("one_subhalo_10gyr_1e8msun", |bch| {
        bch.iter(|| {
            k += 1;
            let mut r = host_rng(5, HostId::new(0, 0, k), Stream::Orbits);
            black_box(evolve_subhalo(&lt, &host, &opts, &small, t0, &mut r))
        })
    });
    group.sample_size(10);
    group.bench_function("whole_host_all_orders", |bch| {
        bch.iter(|| {
            let mut r = host_rng(5, HostId::new(0, 0, 0), Stream::Orbits);
            black_box(evolve_host_subhaloes(&lt, &hist, &host, &opts, t0, &mut r).len())
        })
    });
    group.finish();
}

criterion_group!(benches, orbits);
criterion_main!(benches);
