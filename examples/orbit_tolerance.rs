//! How the subhalo results depend on the orbit integrator's tolerance and longest step: every
//! accretion of a few Milky-Way-mass hosts (1.2e12 Msun, resolution 10^7.5 Msun, Planck 2018)
//! evolved at several settings and compared with the first one. The numbers are quoted in
//! docs/performance.md.
//!
//! Run: `cargo run --release --example orbit_tolerance [N_HOSTS] [RTOL[@MAX_STEP],...]`
//! (default: 4 hosts; 1e-8@0.1,1e-6,2e-5,1e-4; a tolerance without `@` takes the default
//! longest step of 0.2 Gyr; the first setting is the reference).

#[path = "common/hosts.rs"]
mod hosts;

use retinue::orbits::{evolve_host_subhaloes, OrbitOptions, SubhaloResult};

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let n_hosts: u32 = args.get(1).and_then(|s| s.parse().ok()).unwrap_or(4);
    let settings: Vec<(f64, f64)> = args
        .get(2)
        .map(String::as_str)
        .unwrap_or("1e-8@0.1,1e-6,2e-5,1e-4")
        .split(',')
        .filter_map(|x| {
            let mut it = x.split('@');
            let rtol = it.next()?.parse().ok()?;
            let h_max = match it.next() {
                Some(h) => h.parse().ok()?,
                None => OrbitOptions::default().max_step_gyr,
            };
            Some((rtol, h_max))
        })
        .collect();
    let (lt, hosts) = hosts::milky_way_hosts(n_hosts);
    let t0 = lt.cosmology().age0_gyr();
    let mut reference: Option<Vec<SubhaloResult>> = None;
    println!("rtol@max step  s/host  survivors  mean log10 m_bound  mean first r_peri (kpc)  vs reference: lost  gained  mean dlog m  median dlog m");
    for (rtol, max_step_gyr) in settings {
        let opts = OrbitOptions {
            rtol,
            max_step_gyr,
            ..OrbitOptions::default()
        };
        let start = std::time::Instant::now();
        let mut all = Vec::new();
        for (h, (hist, host)) in hosts.iter().enumerate() {
            let mut rng = hosts::orbit_rng(h as u32);
            all.extend(evolve_host_subhaloes(&lt, hist, host, &opts, t0, &mut rng));
        }
        let secs = start.elapsed().as_secs_f64() / n_hosts as f64;
        let alive: Vec<&SubhaloResult> = all.iter().filter(|s| s.status.alive()).collect();
        let mean_lm =
            alive.iter().map(|s| s.m_bound_msun.log10()).sum::<f64>() / alive.len() as f64;
        let peri: Vec<f64> = all
            .iter()
            .map(|s| s.r_peri_first_kpc)
            .filter(|r| r.is_finite())
            .collect();
        let mean_peri = peri.iter().sum::<f64>() / peri.len() as f64;
        print!(
            "{:<13}  {secs:6.3}  {:9}  {mean_lm:18.4}  {mean_peri:23.3}",
            format!("{rtol:.0e}@{max_step_gyr}"),
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
                    let (sa, sb) = (a.status.alive(), b.status.alive());
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
