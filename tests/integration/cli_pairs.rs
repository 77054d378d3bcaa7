//! Paired hosts end to end: determinism of pair cells across threads and shards, the pair
//! columns' consistency between the two hosts of a pair, and clear errors for malformed
//! `[[environment]]` tables.

use crate::common::{run_cli, run_ok, store_tables, write};

pub(crate) const PAIRS: &str = r#"
[run]
master_seed = 5
hosts_per_cell = 2
batch_hosts = 2
output = "pairs.h5"

[cosmology]
preset = "planck18"

[host]
mass_msun = 1.0e12

[trees]
resolution_msun = 1e9
z_max = 10.0
output_steps = 16

[tests]
n_draw = 3
draws = 500
bootstrap = 50
n_range = [3, 4]
z_grid = [0.0, 0.5, 1.0, 2.0]

[[environment]]
kind = "isolated"

[[environment]]
kind = "pair"
label = "pair"
partner_mass_ratio = 1.2
partner_mass_scatter_dex = 0.1
separation_kpc = 750.0
separation_scatter_kpc = 60.0
radial_velocity_kms = -110.0
radial_velocity_scatter_kms = 15.0
tangential_velocity_kms = 40.0
tangential_velocity_scatter_kms = 25.0
"#;

fn col(f: &hdf5::File, name: &str) -> Vec<f64> {
    f.dataset(name).unwrap().read_raw().unwrap()
}

#[test]
fn pair_cells_are_the_same_for_threads_and_shards_and_consistent_between_partners() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "pairs.toml", PAIRS);
    let c = cfg.to_str().unwrap();
    let o = |n: &str| d.path().join(n).to_str().unwrap().to_string();
    run_ok(&["run", c, "--threads", "1", "--out", &o("t1.h5")]);
    run_ok(&["run", c, "--threads", "2", "--out", &o("t2.h5")]);
    let a = store_tables(&d.path().join("t1.h5"));
    assert_eq!(a, store_tables(&d.path().join("t2.h5")), "1 vs 2 threads");
    // three shards: one of them splits a pair between two shards
    for k in 1..=3 {
        run_ok(&[
            "run",
            c,
            "--threads",
            "2",
            "--shard",
            &format!("{k}/3"),
            "--out",
            &o(&format!("s{k}.h5")),
        ]);
    }
    run_ok(&[
        "merge",
        &o("s2.h5"),
        &o("s3.h5"),
        &o("s1.h5"),
        "--out",
        &o("merged.h5"),
    ]);
    assert_eq!(
        a,
        store_tables(&d.path().join("merged.h5")),
        "single vs 3 shards"
    );

    // 2 isolated hosts, then 2 pairs (primary, partner)
    let f = hdf5::File::open(d.path().join("t1.h5")).unwrap();
    let env = col(&f, "hosts/environment");
    let member = col(&f, "hosts/pair_member");
    assert_eq!(env, vec![0.0, 0.0, 1.0, 1.0, 1.0, 1.0]);
    assert_eq!(member, vec![0.0, 0.0, 0.0, 1.0, 0.0, 1.0]);
    let idx = col(&f, "hosts/host_index");
    let partner: Vec<u64> = f
        .dataset("hosts/partner_host_index")
        .unwrap()
        .read_raw()
        .unwrap();
    let m_vir = col(&f, "hosts/m_vir_msun");
    let pm = col(&f, "hosts/partner_m_vir_msun");
    let sep = col(&f, "hosts/pair_separation_kpc");
    let dmin = col(&f, "hosts/pair_min_separation_kpc");
    let px = col(&f, "hosts/partner_x_kpc");
    assert_eq!(partner[0], u64::MAX);
    assert!(sep[0].is_nan() && pm[1].is_nan());
    let hist: ndarray::Array2<f64> = f
        .dataset("histories/pair_separation_kpc")
        .unwrap()
        .read_2d()
        .unwrap();
    assert!(hist.row(0).iter().all(|x| x.is_nan()));
    for (p, q) in [(2usize, 3usize), (4, 5)] {
        // each host names the other, and both record the same pair
        let row_of = |g: u64| idx.iter().position(|&x| x as u64 == g).unwrap();
        assert_eq!(row_of(partner[p]), q);
        assert_eq!(row_of(partner[q]), p);
        assert_eq!(pm[p], m_vir[q]);
        assert_eq!(pm[q], m_vir[p]);
        assert_eq!(sep[p], sep[q]);
        assert_eq!(dmin[p], dmin[q]);
        assert!(dmin[p] <= sep[p] + 1e-9);
        // seen from the partner, the primary is at minus the partner's position
        assert!((px[p] + px[q]).abs() < 1e-9 * sep[p], "{} {}", px[p], px[q]);
        for k in 0..hist.ncols() {
            assert_eq!(hist[[p, k]], hist[[q, k]]);
        }
        // today's separation is the history's first column (z = z_final)
        assert!((hist[[p, 0]] / sep[p] - 1.0).abs() < 1e-9);
    }
    // the report compares isolated, primary and partner cells side by side
    let out = run_ok(&["infall", &o("t1.h5"), "--name", "check"]);
    assert!(out.contains("P(all 3 fell in before z)"), "{out}");
    let report =
        std::fs::read_to_string(d.path().join("t1-check-report").join("report.md")).unwrap();
    for cell in ["1e12 isolated", "1e12 pair |", "1e12 pair partner"] {
        assert!(report.contains(cell), "{cell} missing from the comparison");
    }
    // --cell env=pair selects the pair's two cells only
    let out = run_ok(&[
        "infall",
        &o("t1.h5"),
        "--name",
        "pairs",
        "--cell",
        "env=pair",
    ]);
    assert!(out.contains("P(all 3"), "{out}");
    let (code, _, err) = run_cli(&["infall", &o("t1.h5"), "--cell", "env=triple"]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("environments: \"isolated\", \"pair\""),
        "{err}"
    );
}

/// Each bad environment is reported with its key, value and allowed range, all at once.
#[test]
fn bad_environment_tables_name_the_key() {
    let d = tempfile::tempdir().unwrap();
    let base = PAIRS.split("[[environment]]").next().unwrap().to_string();
    let cases: [(&str, &[&str]); 5] = [
        (
            "[[environment]]\nkind = \"isolated\"\nseparation_kpc = 700.0\n",
            &["environment.separation_kpc", "kind = \"pair\" only"],
        ),
        (
            "[[environment]]\nkind = \"pair\"\npartner_mass_ratio = 1.0\nradial_velocity_kms = -100.0\ntangential_velocity_kms = 0.0\n",
            &["environment.separation_kpc is missing", "a pair needs it"],
        ),
        (
            "[[environment]]\nkind = \"triple\"\n",
            &["environment.kind", "\"triple\"", "\"isolated\" or \"pair\""],
        ),
        (
            "[[environment]]\nkind = \"pair\"\npartner_mass_ratio = -1.0\nseparation_kpc = 700.0\nradial_velocity_kms = -100.0\ntangential_velocity_kms = -5.0\nspin = 3\n",
            &[
                "environment.partner_mass_ratio",
                "environment.tangential_velocity_kms",
                "spin",
            ],
        ),
        (
            "[[environment]]\nkind = \"pair\"\npartner_mass_msun = 1e12\nseparation_kpc = 300.0\nradial_velocity_kms = -100.0\ntangential_velocity_kms = 10.0\nregion_radius_kpc = 1000.0\n",
            &["environment.separation_kpc = 300", "overlap", "allowed: above"],
        ),
    ];
    for (k, (env, wants)) in cases.iter().enumerate() {
        let cfg = write(d.path(), &format!("bad{k}.toml"), &format!("{base}{env}"));
        let (code, _, err) = run_cli(&["check", cfg.to_str().unwrap()]);
        assert_eq!(code, 2, "case {k}: {err}");
        for w in *wants {
            assert!(err.contains(w), "case {k}: {w:?} not in {err}");
        }
    }
}
