//! Where the orbit integration's work goes: every accretion of a few Milky-Way-mass hosts
//! (1.2e12 Msun, resolution 10^7.5 Msun, Planck 2018, default orbit options) evolved with the
//! integrator's right-hand sides counted per subhalo, then the counts split by order, fate,
//! pericentre, number of pericentres, remaining bound fraction and infall time; and the
//! integrator's steps split by where they were taken (distance from the centre, at the disc
//! plane or not, with friction, inside a subhalo in the field or in the host), with the
//! right-hand sides per accepted step (rejected attempts included; a friction kick counts as
//! one).
//! The numbers are quoted in docs/performance.md.
//!
//! Run: `cargo run --release --features orbit-profile --example orbit_cost [N_HOSTS]`
//! (default 4 hosts, the same as `examples/orbit_tolerance.rs`).

#[path = "common/hosts.rs"]
mod hosts;

use std::collections::BTreeMap;

use retinue::orbits::evolve::profile::{BY_STEP, PER_SUBHALO, STEP_KINDS};
use retinue::orbits::{evolve_host_subhaloes, OrbitOptions, SubhaloResult};

fn radius_bin(r: f64) -> &'static str {
    match r {
        r if r.is_nan() => "none yet",
        r if r < 5.0 => "< 5 kpc",
        r if r < 10.0 => "5-10 kpc",
        r if r < 20.0 => "10-20 kpc",
        r if r < 50.0 => "20-50 kpc",
        _ => ">= 50 kpc",
    }
}

fn main() {
    let n_hosts: u32 = std::env::args()
        .nth(1)
        .and_then(|s| s.parse().ok())
        .unwrap_or(4);
    let (lt, hosts) = hosts::milky_way_hosts(n_hosts);
    let t0 = lt.cosmology().age0_gyr();
    let opts = OrbitOptions::default();
    for (h, (hist, host)) in hosts.iter().enumerate() {
        let mut rng = hosts::orbit_rng(h as u32);
        evolve_host_subhaloes(&lt, hist, host, &opts, t0, &mut rng);
    }
    let subs = PER_SUBHALO.with(|p| p.take());
    let by_step = BY_STEP.with(|w| *w.borrow());
    let all_rhs: u64 = by_step.iter().map(|x| x.0).sum();
    println!(
        "{:<32} {:>8} {:>10} {:>9} {:>12}",
        "steps", "work", "steps/host", "rhs/step", "mean h (Gyr)"
    );
    for (name, (rhs, steps, len)) in STEP_KINDS.iter().zip(by_step) {
        let per = |x: f64| x / steps.max(1) as f64;
        println!(
            "{name:<32} {:>7.1}% {:>10.0} {:>9.2} {:>12.2e}",
            100.0 * rhs as f64 / all_rhs as f64,
            steps as f64 / n_hosts as f64,
            per(rhs as f64),
            per(len)
        );
    }
    println!();
    let total: u64 = subs.iter().map(|p| p.0).sum();
    println!(
        "{} subhaloes in {n_hosts} hosts; {:.3e} right-hand sides per host",
        subs.len(),
        total as f64 / n_hosts as f64
    );
    let split = |title: &str, key: &dyn Fn(&SubhaloResult) -> (u32, String)| {
        let mut bins: BTreeMap<(u32, String), (u64, u64)> = BTreeMap::new();
        for (c, r) in &subs {
            let e = bins.entry(key(r)).or_default();
            e.0 += 1;
            e.1 += c;
        }
        println!(
            "\n{title:<32} {:>16} {:>10} {:>12}",
            "subhaloes", "work", "work/sub"
        );
        for ((_, label), (n, c)) in bins {
            println!(
                "  {label:<30} {n:>7} ({:>5.1}%) {:>9.1}% {:>12.0}",
                100.0 * n as f64 / subs.len() as f64,
                100.0 * c as f64 / total as f64,
                c as f64 / n as f64
            );
        }
    };
    split("order", &|r| {
        let o = r.order.min(3) as u32;
        (
            o,
            if o == 3 {
                "3 and above".into()
            } else {
                o.to_string()
            },
        )
    });
    split("fate", &|r| (r.status as u32, format!("{:?}", r.status)));
    split("smallest pericentre", &|r| {
        let b = radius_bin(r.r_peri_min_kpc);
        (
            [
                "< 5 kpc",
                "5-10 kpc",
                "10-20 kpc",
                "20-50 kpc",
                ">= 50 kpc",
                "none yet",
            ]
            .iter()
            .position(|x| *x == b)
            .unwrap_or(9) as u32,
            b.into(),
        )
    });
    split("pericentres", &|r| match r.n_pericentres {
        0..=2 => (0, "0-2".into()),
        3..=9 => (1, "3-9".into()),
        10..=29 => (2, "10-29".into()),
        _ => (3, "30 and more".into()),
    });
    split("bound fraction at the end", &|r| {
        let lf = (r.m_bound_msun / r.m_infall_msun)
            .log10()
            .floor()
            .clamp(-4.0, 0.0) as i32;
        ((-lf) as u32, format!("1e{lf} to 1e{}", lf + 1))
    });
    split("first infall into the host", &|r| {
        let b = (r.t_first_host_infall_gyr / 2.0).floor().clamp(0.0, 6.0) as u32;
        (b, format!("{}-{} Gyr", 2 * b, 2 * b + 2))
    });
    let mut counts: Vec<u64> = subs.iter().map(|p| p.0).collect();
    counts.sort_unstable_by(|a, b| b.cmp(a));
    println!();
    for q in [0.01, 0.1, 0.25, 0.5] {
        let k = (q * counts.len() as f64) as usize;
        let s: u64 = counts[..k].iter().sum();
        println!(
            "costliest {:>3.0}% of subhaloes: {:>5.1}% of the work",
            100.0 * q,
            100.0 * s as f64 / total as f64
        );
    }
}
