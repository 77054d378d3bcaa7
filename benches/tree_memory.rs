//! Memory of sequential tree building: one reused `TreeBuilder` grows 10,000 Milky-Way-mass
//! trees (1.2e12 Msun, resolution 3e7 Msun, z <= 20) and the peak resident set size (VmHWM,
//! Linux) is printed after 100, 1,000 and 10,000 trees. Flat memory means the three numbers
//! agree. Run: `cargo bench --bench tree_memory` (about 3 minutes on one core).

use retinue::rng::{host_rng, HostId, Stream};
use retinue::trees::{HostHistory, TreeBuilder, TreeSpec};
use retinue::{Cosmology, LinearOptions, LinearTheory};

fn peak_rss_kib() -> Option<u64> {
    let s = std::fs::read_to_string("/proc/self/status").ok()?;
    s.lines()
        .find(|l| l.starts_with("VmHWM:"))
        .and_then(|l| l.split_whitespace().nth(1))
        .and_then(|v| v.parse().ok())
}

fn main() {
    // `cargo bench` passes --bench; any other argument (e.g. a filter) is ignored.
    let n: u32 = std::env::var("TREE_MEMORY_N")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(10_000);
    let lt = LinearTheory::new(
        Cosmology::from_preset("planck18").unwrap(),
        LinearOptions::default(),
    )
    .unwrap();
    let spec = TreeSpec {
        m_resolution_msun: 3e7,
        ..TreeSpec::milky_way_default()
    };
    let mut builder = TreeBuilder::new(spec.pch08).unwrap();
    let t0 = std::time::Instant::now();
    let mut nodes = 0usize;
    for i in 0..n {
        let mut rng = host_rng(42, HostId::new(0, 0, i), Stream::Tree);
        let tree = builder.build(&lt, &spec, &mut rng).unwrap();
        nodes += tree.n_nodes();
        let h = HostHistory::from_tree(tree);
        std::hint::black_box(h.accretions.len());
        let done = i + 1;
        if done == 100 || done == 1000 || done == 10_000 || done == n {
            println!(
                "trees: {done:>6}  peak RSS: {:>8} KiB  mean time: {:.2} ms/tree  mean nodes: {}",
                peak_rss_kib().unwrap_or(0),
                t0.elapsed().as_secs_f64() * 1e3 / done as f64,
                nodes / done as usize
            );
        }
    }
}
