//! One Milky-Way-mass host end to end (tree, host, orbits, galaxies), and galaxy painting
//! alone on that host's subhaloes (target: painting < 5% of a host's synthesis time).
//! Run: `cargo bench --bench synth`.

use criterion::{criterion_group, criterion_main, Criterion};
use std::hint::black_box;

use retinue::galaxies::paint;
use retinue::rng::{host_rng, HostId, Stream};
use retinue::synth::{synthesize_host, SynthOptions};
use retinue::trees::{TreeBuilder, TreeSpec};
use retinue::{Cosmology, LinearOptions, LinearTheory};

fn synth(c: &mut Criterion) {
    let lt = LinearTheory::new(
        Cosmology::from_preset("planck18").unwrap(),
        LinearOptions::default(),
    )
    .unwrap();
    let opts = SynthOptions {
        tree: TreeSpec::milky_way_default(),
        host: Default::default(),
        orbits: Default::default(),
        galaxies: Default::default(),
        survey: Default::default(),
    };
    let mut b = TreeBuilder::new(opts.tree.pch08).unwrap();
    let rec = synthesize_host(&lt, &opts, 1, HostId::new(0, 0, 0), &mut b).unwrap();
    let mut group = c.benchmark_group("synth");
    group.sample_size(10);
    let mut i = 0u32;
    group.bench_function("host_end_to_end_mw", |bch| {
        bch.iter(|| {
            i += 1;
            black_box(synthesize_host(&lt, &opts, 1, HostId::new(0, 0, i), &mut b).unwrap())
        })
    });
    group.bench_function("paint_galaxies_one_host", |bch| {
        bch.iter(|| {
            let mut g = host_rng(1, HostId::new(0, 0, 0), Stream::Galaxies);
            black_box(paint(
                lt.cosmology(),
                opts.tree.z_final,
                &opts.galaxies,
                &opts.survey,
                &rec.subhaloes,
                &mut g,
            ))
        })
    });
    group.finish();
}

criterion_group!(benches, synth);
criterion_main!(benches);
