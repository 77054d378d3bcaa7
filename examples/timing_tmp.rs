use retinue::rng::HostId;
use retinue::synth::{synthesize_host, SynthOptions};
use retinue::trees::{TreeBuilder, TreeSpec};
use retinue::{Cosmology, LinearOptions, LinearTheory};
fn main() {
    let n: u32 = std::env::args().nth(1).and_then(|s| s.parse().ok()).unwrap_or(8);
    let lt = LinearTheory::new(Cosmology::from_preset("planck18").unwrap(), LinearOptions::default()).unwrap();
    let opts = SynthOptions { tree: TreeSpec::milky_way_default(), host: Default::default(), orbits: Default::default(), galaxies: Default::default(), survey: Default::default() };
    let mut b = TreeBuilder::new(opts.tree.pch08).unwrap();
    let start = std::time::Instant::now();
    let mut ns = 0;
    for i in 0..n { let r = synthesize_host(&lt, &opts, 5, HostId::new(0, 0, i), &mut b).unwrap(); ns += r.subhaloes.len(); }
    println!("{n} hosts, {ns} subhaloes, {:.3} s per host (one thread)", start.elapsed().as_secs_f64() / n as f64);
}
