//! Linear-theory benches: building every table for one cosmology (target <= 20 ms) and the
//! sigma(M) / M(sigma) look-ups (target <= 50 ns each). Run: `cargo bench --bench linear`.

use criterion::{criterion_group, criterion_main, Criterion};
use std::hint::black_box;

use retinue::{Cosmology, LinearOptions, LinearTheory};

fn build_tables(c: &mut Criterion) {
    let params = retinue::cosmology::preset("planck18").unwrap();
    c.bench_function("linear/build_all_tables_planck18", |b| {
        b.iter(|| {
            let cosmo = Cosmology::new(black_box(params.clone())).unwrap();
            LinearTheory::new(cosmo, LinearOptions::default()).unwrap()
        })
    });
}

fn lookups(c: &mut Criterion) {
    let lt = LinearTheory::new(
        Cosmology::from_preset("planck18").unwrap(),
        LinearOptions::default(),
    )
    .unwrap();
    let table = lt.sigma_table();
    // 1024 masses spread over 1e6-1e15 Msun so branch prediction cannot memorise one cell
    let masses: Vec<f64> = (0..1024)
        .map(|i| 10f64.powf(6.0 + 9.0 * ((i * 389) % 1024) as f64 / 1024.0))
        .collect();
    let sigmas: Vec<f64> = masses.iter().map(|&m| table.sigma(m)).collect();
    let mut group = c.benchmark_group("linear/lookup");
    group.throughput(criterion::Throughput::Elements(masses.len() as u64));
    group.bench_function("sigma_of_m", |b| {
        b.iter(|| {
            let mut s = 0.0;
            for &m in &masses {
                s += table.sigma(black_box(m));
            }
            s
        })
    });
    group.bench_function("m_of_sigma", |b| {
        b.iter(|| {
            let mut s = 0.0;
            for &v in &sigmas {
                s += table.mass_at_sigma(black_box(v));
            }
            s
        })
    });
    group.bench_function("sigma_and_slope", |b| {
        b.iter(|| {
            let mut s = 0.0;
            for &m in &masses {
                let (a, d) = table.sigma_and_slope(black_box(m));
                s += a + d;
            }
            s
        })
    });
    group.finish();
}

criterion_group!(benches, build_tables, lookups);
criterion_main!(benches);
