//! The Milky-Way-mass hosts the orbit examples share: 1.2e12 Msun, resolution 10^7.5 Msun,
//! Planck 2018; trees from master seed 3, orbits from master seed 5 (`orbit_rng`).

use retinue::host::{EvolvingHost, HostOptions};
use retinue::rng::{host_rng, HostId, Stream};
use retinue::trees::{HostHistory, TreeBuilder, TreeSpec};
use retinue::{Cosmology, LinearOptions, LinearTheory};

/// The linear theory and `n` hosts (history and evolving potential).
pub fn milky_way_hosts(n: u32) -> (LinearTheory, Vec<(HostHistory, EvolvingHost)>) {
    let lt = LinearTheory::new(
        Cosmology::from_preset("planck18").expect("preset"),
        LinearOptions::default(),
    )
    .expect("linear theory");
    let spec = TreeSpec {
        m_resolution_msun: 10f64.powf(7.5),
        ..TreeSpec::milky_way_default()
    };
    let mut builder = TreeBuilder::new(spec.pch08).expect("tree builder");
    let hosts = (0..n)
        .map(|h| {
            let mut rng = host_rng(3, HostId::new(0, 0, h), Stream::Tree);
            let hist = HostHistory::from_tree(builder.build(&lt, &spec, &mut rng).expect("tree"));
            let host = EvolvingHost::from_history(&lt, &hist, &HostOptions::default(), 0.5);
            (hist, host)
        })
        .collect();
    (lt, hosts)
}

/// The orbit stream of host `h`.
pub fn orbit_rng(h: u32) -> rand_chacha::ChaCha8Rng {
    host_rng(5, HostId::new(0, 0, h), Stream::Orbits)
}
