//! The stripping-rate scan of `val_stripping_rate_vs_nbody`: retinue's bound fraction over the
//! N-body's (N = 20000, `tests/reference/stripping_nbody.json`) at each setup's three comparison
//! times, friction, disc and pericentre cut off as in that test, for pairs of
//! (`stripping_alpha`, `stripping_alpha_c_slope`), with the mean, rms and largest |ln ratio|.
//!
//! Also the shape over time: the rms ln ratio over every N-body output after the first
//! pericentre (t > 2.3 Gyr; every second output), which the three comparison times sample
//! only coarsely (at the defaults the model loses too much just after each pericentre and
//! nothing between them, where the N-body keeps losing mass: docs/methods.md).
//!
//! Run: `cargo run --release --example stripping_scan 0.75,0 1.15,0.5 ...`
use retinue::orbits::{evolve_in_isolated_halo, OrbitOptions};
fn main() {
    let f: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string("tests/reference/stripping_nbody.json").unwrap(),
    )
    .unwrap();
    let num = |v: &serde_json::Value| v.as_f64().unwrap();
    let fl = |v: &serde_json::Value| -> Vec<f64> {
        v.as_array()
            .unwrap()
            .iter()
            .map(|x| x.as_f64().unwrap())
            .collect()
    };
    let s = &f["setup"];
    let h = &s["host"];
    let parent = (num(&h["m_vir_msun"]), num(&h["r_vir_kpc"]), num(&h["c"]));
    for arg in std::env::args().skip(1) {
        let ap: Vec<f64> = arg.split(',').map(|x| x.parse().unwrap()).collect();
        let opts = OrbitOptions {
            friction: false,
            pericentre_cut_kpc: 0.0,
            disc_tide_ratio: 0.0,
            central_merge_kpc: 0.0,
            stripping_alpha: ap[0],
            stripping_alpha_c_slope: ap[1],
            ..Default::default()
        };
        let mut all = Vec::new();
        let mut series = Vec::new();
        let mut txt = String::new();
        for (name, o) in f["orbits"].as_object().unwrap() {
            let sub = o.get("subhalo").unwrap_or(&s["subhalo"]);
            let child = (
                num(&sub["m_vir_msun"]),
                num(&sub["r_vir_kpc"]),
                num(&sub["c"]),
            );
            let x0 = fl(&o["x0_kpc"]);
            let v0 = fl(&o["v0_kms"]);
            let hi = &o["runs"]["n20000"];
            let t = fl(&hi["t_gyr"]);
            let fb = fl(&hi["f_bound"]);
            txt += &format!(" {name}");
            // the model's bound fraction at time tt over the N-body's f
            let ratio = |tt: f64, f: f64| {
                let r = evolve_in_isolated_halo(
                    &opts,
                    parent,
                    child,
                    [x0[0], x0[1], x0[2]],
                    [v0[0], v0[1], v0[2]],
                    0.0,
                    tt,
                );
                r.m_bound_msun / child.0 / f
            };
            for (k, (&tk, &fk)) in t.iter().zip(&fb).enumerate() {
                if tk > 2.3 && k % 2 == 0 {
                    series.push(ratio(tk, fk).ln());
                }
            }
            for tc in fl(&o["compare_t_gyr"]) {
                let k = t.iter().position(|&tt| (tt - tc).abs() < 0.01).unwrap();
                let q = ratio(tc, fb[k]);
                all.push(q.ln());
                txt += &format!(" {q:.2}");
            }
        }
        let n = all.len() as f64;
        let mean = all.iter().sum::<f64>() / n;
        let rms = (all.iter().map(|x| x * x).sum::<f64>() / n).sqrt();
        let maxd = all.iter().fold(0f64, |a, &x| a.max(x.abs()));
        let rms_t = (series.iter().map(|x| x * x).sum::<f64>() / series.len() as f64).sqrt();
        println!(
            "a {} p {}: mean ln {mean:+.3} rms {rms:.3} max {maxd:.3}; every output after the \
             first pericentre rms {rms_t:.3} ({} outputs) |{txt}",
            ap[0],
            ap[1],
            series.len()
        );
    }
}
