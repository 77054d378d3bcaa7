//! How the subhalo results depend on the orbit integrator's tolerance: every accretion of a
//! few Milky-Way-mass hosts (1.2e12 Msun, resolution 10^7.5 Msun, Planck 2018) evolved at
//! several tolerances and compared with the tightest one. The numbers are quoted in
//! docs/performance.md.
//!
//! Run: `cargo run --release --example orbit_tolerance [N_HOSTS] [RTOL,RTOL,...]`
//! (default: 4 hosts; 1e-8,1e-6,1e-5,1e-4; the first tolerance is the reference).

use retinue::host::{EvolvingHost, HostOptions};
use retinue::orbits::{evolve_host_subhaloes, OrbitOptions, SubhaloResult, SubhaloStatus};
use retinue::rng::{host_rng, HostId, Stream};
use retinue::trees::{HostHistory, TreeBuilder, TreeSpec};
use retinue::{Cosmology, LinearOptions, LinearTheory};

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let n_hosts: u32 = args.get(1).and_then(|s| s.parse().ok()).unwrap_or(4);
    let rtols: Vec<f64> = args
        .get(2)
        .map(|s| s.split(',').filter_map(|x| x.parse().ok()).collect())
        .unwrap_or_else(|| vec![1e-8, 1e-6, 1e-5, 1e-4]);
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
    let t0 = lt.cosmology().age0_gyr();
    let hosts: Vec<(HostHistory, EvolvingHost)> = (0..n_hosts)
        .map(|h| {
            let mut rng = host_rng(3, HostId::new(0, 0, h), Stream::Tree);
            let hist = HostHistory::from_tree(builder.build(&lt, &spec, &mut rng).expect("tree"));
            let host = EvolvingHost::from_history(&lt, &hist, &HostOptions::default(), 0.5);
            (hist, host)
        })
        .collect();
    let mut reference: Option<Vec<SubhaloResult>> = None;
    println!("rtol      s/host  survivors  mean log10 m_bound  mean first r_peri (kpc)  vs reference: lost  gained  mean dlog m  median dlog m");
    for rtol in rtols {
        let opts = OrbitOptions {
            rtol,
            ..OrbitOptions::default()
        };
        let start = std::time::Instant::now();
        let mut all = Vec::new();
        for (h, (hist, host)) in hosts.iter().enumerate() {
            let mut rng = host_rng(5, HostId::new(0, 0, h as u32), Stream::Orbits);
            all.extend(evolve_host_subhaloes(&lt, hist, host, &opts, t0, &mut rng));
        }
        let secs = start.elapsed().as_secs_f64() / n_hosts as f64;
        let alive: Vec<&SubhaloResult> = all
            .iter()
            .filter(|s| s.status == SubhaloStatus::Surviving)
            .collect();
        let mean_lm =
            alive.iter().map(|s| s.m_bound_msun.log10()).sum::<f64>() / alive.len() as f64;
        let peri: Vec<f64> = all
            .iter()
            .map(|s| s.r_peri_first_kpc)
            .filter(|r| r.is_finite())
            .collect();
        let mean_peri = peri.iter().sum::<f64>() / peri.len() as f64;
        print!(
            "{rtol:<8.0e}  {secs:6.3}  {:9}  {mean_lm:18.4}  {mean_peri:23.3}",
            alive.len()
        );
        match &reference {
            None => {
                println!("  (reference)");
                reference = Some(all);
            }
            Some(r) => {
                let (mut lost, mut gained) = (0, 0);
                let mut dl = Vec::new();
                for (a, b) in r.iter().zip(&all) {
                    let (sa, sb) = (
                        a.status == SubhaloStatus::Surviving,
                        b.status == SubhaloStatus::Surviving,
                    );
                    lost += (sa && !sb) as usize;
                    gained += (!sa && sb) as usize;
                    if sa && sb {
                        dl.push((b.m_bound_msun / a.m_bound_msun).log10());
                    }
                }
                dl.sort_by(|a, b| a.partial_cmp(b).expect("finite"));
                let mean = dl.iter().sum::<f64>() / dl.len() as f64;
                println!(
                    "  {lost:18}  {gained:6}  {mean:11.4}  {:13.4}",
                    dl[dl.len() / 2]
                );
            }
        }
    }
}
