//! `retinue tree`: writes a readable HDF5 file with documented columns and units, prints a
//! summary, and rejects bad input with exit code 2 and no file.

use crate::common::run_cli;

#[test]
fn tree_file_schema_and_summary() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("tree.h5");
    // a tree of seed `seed` into `out`, with `extra` arguments
    let tree = |seed: &str, extra: &[&str]| {
        let mut a = vec![
            "tree",
            "--preset",
            "planck18",
            "--mass",
            "1.2e12",
            "--resolution",
            "3e8",
            "--seed",
            seed,
            "--out",
            out.to_str().unwrap(),
        ];
        a.extend_from_slice(extra);
        run_cli(&a)
    };
    let (code, stdout, err) = tree("7", &[]);
    assert_eq!(code, 0, "{err}");
    for key in [
        "nodes:",
        "accretions above the resolution",
        "z_half:",
        "time:",
    ] {
        assert!(stdout.contains(key), "{stdout}");
    }
    // no temporary file left behind
    assert_eq!(
        crate::common::dir_names(dir.path()),
        vec!["tree.h5".to_string()]
    );
    // an existing file is not replaced without --overwrite (review: `--out` once replaced a
    // run store and a configuration file without asking)
    let before = std::fs::read(&out).unwrap();
    let (code, _, err) = tree("8", &[]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("exists") && err.contains("--overwrite"),
        "{err}"
    );
    assert_eq!(std::fs::read(&out).unwrap(), before);
    let (code, _, err) = tree("8", &["--overwrite"]);
    assert_eq!(code, 0, "{err}");
    assert_ne!(std::fs::read(&out).unwrap(), before);

    let f = hdf5::File::open(&out).unwrap();
    let nodes = f.group("nodes").unwrap();
    let mass: Vec<f64> = nodes.dataset("mass_msun").unwrap().read_raw().unwrap();
    let desc: Vec<i64> = nodes.dataset("descendant").unwrap().read_raw().unwrap();
    let t: Vec<f64> = nodes.dataset("t_gyr").unwrap().read_raw().unwrap();
    assert_eq!(mass.len(), desc.len());
    assert_eq!(mass[0], 1.2e12);
    assert_eq!(desc[0], -1);
    for i in 1..mass.len() {
        let d = desc[i] as usize;
        assert!(t[d] > t[i]);
    }
    let units =
        retinue::io::h5::get_str_attr(&nodes.dataset("mass_msun").unwrap(), "units").unwrap();
    assert_eq!(units, "Msun");
    let acc = f.group("accretions").unwrap();
    for col in [
        "branch",
        "order",
        "into_branch",
        "t_infall_gyr",
        "z_infall",
        "m_infall_msun",
        "m_host_at_infall_msun",
        "m_peak_msun",
        "t_peak_gyr",
        "group",
        "t_host_infall_gyr",
        "z_host_infall",
        "z_oldest_resolved",
        "m_oldest_resolved_msun",
    ] {
        let ds = acc
            .dataset(col)
            .unwrap_or_else(|_| panic!("missing accretions/{col}"));
        retinue::io::h5::get_str_attr(&ds, "units").unwrap();
    }
    // each branch's oldest resolved state: no later than its merger, above the resolution
    // and no heavier than its peak (a branch only loses mass going back)
    let col = |c: &str| -> Vec<f64> { acc.dataset(c).unwrap().read_raw().unwrap() };
    let res: f64 = f.attr("resolution_msun").unwrap().read_scalar().unwrap();
    let (zo, mo) = (col("z_oldest_resolved"), col("m_oldest_resolved_msun"));
    let (zi, mp) = (col("z_infall"), col("m_peak_msun"));
    assert!(!zo.is_empty());
    for k in 0..zo.len() {
        assert!(zo[k] > zi[k] && mo[k] >= res && mo[k] <= mp[k], "row {k}");
    }
    let mb = f.group("main_branch").unwrap();
    let mah: Vec<f64> = mb.dataset("mass_msun").unwrap().read_raw().unwrap();
    assert_eq!(mah[0], 1.2e12);
    assert!(mah.windows(2).all(|w| w[1] <= w[0]));
    assert_eq!(
        retinue::io::h5::get_str_attr(&f, "mass_definition").unwrap(),
        "vir (Bryan & Norman 1998)"
    );
}

#[test]
fn tree_same_seed_same_file_content() {
    let dir = tempfile::tempdir().unwrap();
    let read = |name: &str, seed: &str, idx: &str| -> Vec<f64> {
        let out = dir.path().join(name);
        let (code, _, err) = run_cli(&[
            "tree",
            "--preset",
            "planck18",
            "--mass",
            "1e12",
            "--resolution",
            "1e9",
            "--seed",
            seed,
            "--host-index",
            idx,
            "--out",
            out.to_str().unwrap(),
            "--overwrite",
        ]);
        assert_eq!(code, 0, "{err}");
        let f = hdf5::File::open(&out).unwrap();
        f.dataset("nodes/mass_msun").unwrap().read_raw().unwrap()
    };
    assert_eq!(read("a.h5", "3", "0"), read("b.h5", "3", "0"));
    assert_ne!(read("a.h5", "3", "0"), read("c.h5", "3", "1"));
}

#[test]
fn tree_mass_definition_is_converted() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("t.h5");
    let (code, stdout, err) = run_cli(&[
        "tree",
        "--preset",
        "planck18",
        "--mass",
        "1e12",
        "--mass-definition",
        "200c",
        "--resolution",
        "1e9",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(stdout.contains("(200c)"), "{stdout}");
    let f = hdf5::File::open(&out).unwrap();
    let m: f64 = f.attr("host_mass_msun").unwrap().read_scalar().unwrap();
    // M200c = 1e12 with c200c ~ 8 converts to Mvir ~ 1.17e12 (colossus-validated conversion)
    assert!(m > 1.1e12 && m < 1.25e12, "{m}");
}

#[test]
fn tree_bad_input() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("t.h5");
    let o = out.to_str().unwrap();
    let cases: &[(&[&str], &str)] = &[
        (&["--mass", "1e12", "--resolution", "6e11"], "--resolution"),
        (&["--mass", "-1e12", "--resolution", "1e8"], "--mass"),
        (
            &["--mass", "1e12", "--resolution", "1e8", "--z-max", "0"],
            "--z-max",
        ),
        (
            &[
                "--mass",
                "1e12",
                "--resolution",
                "1e8",
                "--mass-definition",
                "300x",
            ],
            "--mass-definition",
        ),
        (
            &["--mass", "1e12", "--resolution", "1e8", "--gamma1", "2"],
            "--gamma1",
        ),
        (
            &["--mass", "1e12", "--resolution", "1e8", "--outputs", "1"],
            "--outputs",
        ),
        (&["--mass", "1e12", "--resolution", "1e-3"], "--resolution"),
    ];
    for (extra, flag) in cases {
        let mut args = vec!["tree", "--preset", "planck18", "--out", o];
        args.extend_from_slice(extra);
        let (code, _, err) = run_cli(&args);
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(err.contains(flag), "{args:?}: {err}");
        assert!(!out.exists(), "{args:?} left a file");
    }
}

/// A tree file says how its linear theory was made (walkthrough: a warm-dark-matter tree's
/// attributes were those of a cold one), `--filter` chooses the window, and warm dark matter
/// through the top-hat window is warned about.
#[test]
fn tree_file_records_warm_dark_matter_and_its_filter() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("wdm.h5");
    let args = |filter: Option<&str>| {
        let mut a = vec![
            "tree",
            "--preset",
            "planck18",
            "--m-wdm-kev",
            "3",
            "--mass",
            "1.2e12",
            "--resolution",
            "1e9",
            "--overwrite",
            "--out",
            out.to_str().unwrap(),
        ];
        if let Some(f) = filter {
            a.extend_from_slice(&["--filter", f]);
        }
        run_cli(&a)
    };
    let (code, _, err) = args(None);
    assert_eq!(code, 0, "{err}");
    assert!(
        err.contains("warm dark matter with the top-hat filter"),
        "{err}"
    );
    let (code, _, err) = args(Some("sharp-k"));
    assert_eq!(code, 0, "{err}");
    assert!(!err.contains("top-hat"), "{err}");
    let f = hdf5::File::open(&out).unwrap();
    let lin: hdf5::types::VarLenUnicode = f.attr("linear").unwrap().read_scalar().unwrap();
    let lin = lin.as_str();
    assert!(
        lin.contains("m_wdm_kev = 3.0") && lin.contains("sharp-k"),
        "{lin}"
    );
}

/// `--config` with several cosmologies names the one it reads, and `--cosmology LABEL`
/// chooses another (walkthrough: a sweep's first cosmology was taken without a word).
#[test]
fn linear_from_a_sweep_names_its_cosmology() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = crate::common::write(
        dir.path(),
        "two.toml",
        "[[cosmology]]\nlabel = \"cold\"\npreset = \"planck18\"\n\n[[cosmology]]\nlabel = \
         \"warm\"\npreset = \"planck18\"\nm_wdm_kev = 3.0\nfilter = \"sharp-k\"\n",
    );
    let c = cfg.to_str().unwrap();
    let sigma = |extra: &[&str]| {
        let mut a = vec!["linear", "sigma", "--config", c, "--masses", "1e8"];
        a.extend_from_slice(extra);
        let (code, out, err) = run_cli(&a);
        assert_eq!(code, 0, "{err}");
        let s: f64 = out
            .lines()
            .nth(1)
            .unwrap()
            .split(',')
            .nth(2)
            .unwrap()
            .parse()
            .unwrap();
        (s, err)
    };
    let (cold, err) = sigma(&[]);
    assert!(
        err.contains("2 cosmologies (\"cold\", \"warm\"); this uses the first, \"cold\""),
        "{err}"
    );
    let (cold2, err) = sigma(&["--cosmology", "cold"]);
    assert_eq!(cold, cold2);
    assert!(!err.contains("note"), "{err}");
    let (warm, _) = sigma(&["--cosmology", "warm"]);
    // the other table was read: warm dark matter has less power at 1e8 Msun (how much less is
    // checked against the published transfer function in the linear-theory validation)
    assert!(warm < cold, "{warm} vs {cold}");
    let (code, _, err) = run_cli(&[
        "linear",
        "sigma",
        "--config",
        c,
        "--cosmology",
        "tepid",
        "--masses",
        "1e8",
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("tepid") && err.contains("\"warm\""), "{err}");
    // --filter top-hat on a configuration whose sharp-k cell sets sharp_k_c: the file's
    // sharp_k_c is dropped with a note, not refused as if the file were wrong (review)
    let sk = crate::common::write(
        dir.path(),
        "sk.toml",
        "[cosmology]\npreset = \"planck18\"\nfilter = \"sharp-k\"\nsharp_k_c = 2.7\n",
    );
    let (code, _, err) = run_cli(&[
        "linear",
        "sigma",
        "--config",
        sk.to_str().unwrap(),
        "--filter",
        "top-hat",
        "--masses",
        "1e9",
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(err.contains("sharp_k_c is not used"), "{err}");
}
