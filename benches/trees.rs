//! Merger-tree bench: one 1.2e12 Msun host, resolution 3e7 Msun, z <= 20 (target <= 20 ms per
//! tree on one core). Prints nodes per second. Run: `cargo bench --bench trees`.

use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use std::hint::black_box;

use retinue::rng::{host_rng, HostId, Stream};
use retinue::trees::{HostHistory, OutputTimes, TreeBuilder, TreeSpec};
use retinue::{Cosmology, LinearOptions, LinearTheory};

fn tree(c: &mut Criterion) {
    let lt = LinearTheory::new(
        Cosmology::from_preset("planck18").unwrap(),
        LinearOptions::default(),
    )
    .unwrap();
    let spec = TreeSpec {
        m_host_msun: 1.2e12,
        m_resolution_msun: 3e7,
        z_max: 20.0,
        outputs: OutputTimes::UniformLnA(64),
        ..TreeSpec::milky_way_default()
    };
    let mut builder = TreeBuilder::new(spec.pch08).unwrap();
    // nodes per tree, averaged over 20 trees, for the throughput figure
    let mut nodes = 0usize;
    for i in 0..20 {
        let mut rng = host_rng(1, HostId::new(0, 0, i), Stream::Tree);
        nodes += builder.build(&lt, &spec, &mut rng).unwrap().n_nodes();
    }
    let mut group = c.benchmark_group("trees");
    group.throughput(Throughput::Elements((nodes / 20) as u64));
    group.sample_size(30);
    let mut i = 0u32;
    group.bench_function("pch08_mw_1.2e12_res3e7", |b| {
        b.iter(|| {
            i += 1;
            let mut rng = host_rng(1, HostId::new(0, 0, i), Stream::Tree);
            black_box(builder.build(&lt, &spec, &mut rng).unwrap().n_nodes())
        })
    });
    group.bench_function("pch08_mw_plus_history", |b| {
        b.iter(|| {
            i += 1;
            let mut rng = host_rng(1, HostId::new(0, 0, i), Stream::Tree);
            let t = builder.build(&lt, &spec, &mut rng).unwrap();
            black_box(HostHistory::from_tree(t).accretions.len())
        })
    });
    group.finish();
}

criterion_group!(benches, tree);
criterion_main!(benches);
