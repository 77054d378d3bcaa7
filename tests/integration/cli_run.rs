//! Whole runs: determinism across threads and shards, crash and resume, the store's schema,
//! and clear errors for malformed configurations, samples and stores.

use std::path::{Path, PathBuf};

use crate::common::{dir_names, run_cli, run_ok, store_tables, write, TINY};

#[test]
fn same_tables_for_1_and_2_threads_and_for_3_shards_merged() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "tiny.toml", TINY);
    let c = cfg.to_str().unwrap();
    let o = |n: &str| d.path().join(n).to_str().unwrap().to_string();
    run_ok(&["run", c, "--threads", "1", "--out", &o("t1.h5")]);
    run_ok(&["run", c, "--threads", "2", "--out", &o("t2.h5")]);
    let a = store_tables(&d.path().join("t1.h5"));
    assert_eq!(a, store_tables(&d.path().join("t2.h5")), "1 vs 2 threads");
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
    // shards in any order
    run_ok(&[
        "merge",
        &o("s3.h5"),
        &o("s1.h5"),
        &o("s2.h5"),
        "--out",
        &o("merged.h5"),
    ]);
    assert_eq!(
        a,
        store_tables(&d.path().join("merged.h5")),
        "single run vs 3 shards merged"
    );
    // without --out a shard is named after the run's output and its place in the split
    // (walkthrough: shard 1/2 took the run's own name, tiny.h5, and shard 2/2 was refused)
    // (run.output is relative to the working directory)
    for k in 1..=2 {
        let st = std::process::Command::new(env!("CARGO_BIN_EXE_retinue"))
            .env("HDF5_USE_FILE_LOCKING", "FALSE")
            .current_dir(d.path())
            .args(["run", c, "--shard", &format!("{k}/2")])
            .output()
            .unwrap();
        assert!(
            st.status.success(),
            "{}",
            String::from_utf8_lossy(&st.stderr)
        );
    }
    assert!(!d.path().join("tiny.h5").exists());
    run_ok(&[
        "merge",
        &o("tiny.shard-1-of-2.h5"),
        &o("tiny.shard-2-of-2.h5"),
        "--out",
        &o("merged2.h5"),
    ]);
    assert_eq!(a, store_tables(&d.path().join("merged2.h5")), "2 shards");
    // a shard whose stored configuration differs from the others' (walkthrough: a comment
    // added between two array jobs refused the merge without saying why): comments and
    // layout do not count; settings that do not change the hosts give a note; anything else
    // is refused with the keys named
    let tiny = std::fs::read_to_string(&cfg).unwrap();
    for (text, ok, says) in [
        (format!("{tiny}\n# a comment added later\n"), true, ""),
        (
            tiny.replace("draws = 500", "draws = 400"),
            true,
            "only in settings that do not change the hosts (tests.draws)",
        ),
        (
            tiny.replace("resolution_msun = 1e9", "resolution_msun = 2e9"),
            false,
            "trees.resolution_msun differs",
        ),
    ] {
        assert_ne!(text, tiny);
        let s2x = d.path().join("s2x.h5");
        std::fs::copy(d.path().join("s2.h5"), &s2x).unwrap();
        {
            let f = hdf5::File::open_rw(&s2x).unwrap();
            f.delete_attr("config").unwrap();
            retinue::io::h5::set_str_attr(&f, "config", &text).unwrap();
        }
        let out = d.path().join("m.h5");
        let _ = std::fs::remove_file(&out);
        // the edited shard first: the merged store keeps shard 1's configuration whatever the
        // order of the arguments (review: it kept the first argument's)
        let (code, _, err) = run_cli(&[
            "merge",
            s2x.to_str().unwrap(),
            &o("s1.h5"),
            &o("s3.h5"),
            "--out",
            out.to_str().unwrap(),
        ]);
        assert_eq!(code == 0, ok, "{err}");
        assert!(err.contains(says), "{err}");
        if ok {
            assert_eq!(a, store_tables(&out), "merged with an edited configuration");
            let config = |p: &std::path::Path| -> String {
                let f = hdf5::File::open(p).unwrap();
                let s: hdf5::types::VarLenUnicode =
                    f.attr("config").unwrap().read_scalar().unwrap();
                s.as_str().to_string()
            };
            assert_eq!(config(&out), config(&d.path().join("s1.h5")));
        }
    }
    // a missing shard is named
    let (code, _, err) = run_cli(&["merge", &o("s1.h5"), &o("s3.h5"), "--out", &o("bad.h5")]);
    assert_eq!(code, 2, "{err}");
    // numbered as on the command line (--shard 2/3), not from 0
    assert!(
        err.contains("shard 2/3") && err.contains("missing"),
        "{err}"
    );
    // a shard given twice
    let (code, _, err) = run_cli(&[
        "merge",
        &o("s1.h5"),
        &o("s1.h5"),
        &o("s2.h5"),
        &o("s3.h5"),
        "--out",
        &o("bad.h5"),
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("shard 1/3 is given twice"), "{err}");
    // a shard synthesised by another build of the code (or by one from before builds were
    // recorded) is refused, naming both builds: the merged store would mix hosts of both
    for (other, named) in [
        (Some("0123456789abcdef"), "0123456789abcdef"),
        (None, "not recorded"),
    ] {
        let s2x = d.path().join("s2x.h5");
        std::fs::copy(d.path().join("s2.h5"), &s2x).unwrap();
        {
            let f = hdf5::File::open_rw(&s2x).unwrap();
            f.delete_attr("build_fingerprint").unwrap();
            if let Some(b) = other {
                retinue::io::h5::set_str_attr(&f, "build_fingerprint", b).unwrap();
            }
        }
        let (code, _, err) = run_cli(&[
            "merge",
            &o("s1.h5"),
            s2x.to_str().unwrap(),
            &o("s3.h5"),
            "--out",
            &o("bad.h5"),
        ]);
        assert_eq!(code, 2, "{err}");
        assert!(
            err.contains(named)
                && err.contains(retinue::BUILD_FINGERPRINT)
                && err.contains("re-run the shards"),
            "{err}"
        );
        assert!(!d.path().join("bad.h5").exists());
    }
    // the tests run on the merged store without re-synthesising
    let out = run_ok(&["infall", &o("merged.h5"), "--name", "check"]);
    assert!(out.contains("P(all 3 fell in before z)"), "{out}");
    let report =
        std::fs::read_to_string(d.path().join("merged-check-report").join("report.md")).unwrap();
    assert!(report.contains("## Clocks") && report.contains("## Caveats"));
    for fig in [
        "all_of_n_vs_redshift.png",
        "infall_times.png",
        "pericentres.png",
        "subhalo_mass_function.png",
        "radial_distribution.png",
    ] {
        let p = d.path().join("merged-check-report").join(fig);
        assert!(
            std::fs::metadata(&p)
                .map(|m| m.len() > 1000)
                .unwrap_or(false),
            "{fig}"
        );
    }
}

#[test]
fn store_schema_units_and_provenance() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "tiny.toml", TINY);
    let out = d.path().join("s.h5");
    run_ok(&["run", cfg.to_str().unwrap(), "--out", out.to_str().unwrap()]);
    let f = hdf5::File::open(&out).unwrap();
    for (g, cols) in [
        ("hosts", retinue::io::store::HOST_COLUMNS),
        ("subhalos", retinue::io::store::SUB_COLUMNS),
    ] {
        let grp = f.group(g).unwrap();
        for (name, units, _) in cols {
            let ds = grp.dataset(name).unwrap_or_else(|_| panic!("{g}/{name}"));
            assert_eq!(retinue::io::h5::get_str_attr(&ds, "units").unwrap(), *units);
        }
    }
    let cfg_text = retinue::io::h5::get_str_attr(&f, "config").unwrap();
    assert!(cfg_text.contains("hosts_per_cell = 3"));
    let seed: u64 = f.attr("master_seed").unwrap().read_scalar().unwrap();
    assert_eq!(seed, 11);
    // the build that synthesised the hosts: 16 hex digits, as `retinue::BUILD_FINGERPRINT`
    let build = retinue::io::h5::get_str_attr(&f, "build_fingerprint").unwrap();
    assert_eq!(build, retinue::BUILD_FINGERPRINT);
    assert!(
        build.len() == 16 && build.chars().all(|c| c.is_ascii_hexdigit()),
        "{build}"
    );
    assert!(f.group("analysis/run").unwrap().group("all_of_n").is_ok());
    let n: Vec<u64> = f.dataset("hosts/host_index").unwrap().read_raw().unwrap();
    assert_eq!(n, vec![0, 1, 2, 3, 4, 5]);
    // compressed: integer and mostly-NaN columns shuffled and deflated, the others not
    if hdf5::filters::deflate_available() {
        use hdf5::filters::Filter;
        let z = vec![Filter::Shuffle, Filter::Deflate(1)];
        for c in [
            "subhalos/branch",
            "subhalos/status",
            "subhalos/t_merge_gyr",
            "hosts/k",
        ] {
            assert_eq!(f.dataset(c).unwrap().filters(), z, "{c}");
        }
        for c in ["subhalos/x_kpc", "subhalos/m_peak_msun", "hosts/m_vir_msun"] {
            assert!(f.dataset(c).unwrap().filters().is_empty(), "{c}");
        }
    }
    // nothing but the store and its report
    assert_eq!(dir_names(d.path()), vec!["s-report", "s.h5", "tiny.toml"]);
}

/// Kill a running `retinue run` (SIGKILL on Unix) once `n` part files are in `parts` (or
/// after 60 s).
fn kill_once_parts_are_written(mut child: std::process::Child, parts: &Path, n: usize) {
    let t0 = std::time::Instant::now();
    loop {
        let k = std::fs::read_dir(parts)
            .map(|r| {
                r.filter(|e| {
                    e.as_ref()
                        .map(|e| e.file_name().to_string_lossy().starts_with("part-"))
                        .unwrap_or(false)
                })
                .count()
            })
            .unwrap_or(0);
        if k >= n || t0.elapsed().as_secs() > 60 {
            break;
        }
        std::thread::sleep(std::time::Duration::from_millis(20));
    }
    child.kill().unwrap();
    child.wait().unwrap();
}

/// Kill a run part-way (SIGKILL), resume it, and get the tables of an uninterrupted run.
#[test]
fn killed_run_resumes_to_identical_tables() {
    let d = tempfile::tempdir().unwrap();
    let text = TINY
        .replace("hosts_per_cell = 3", "hosts_per_cell = 12")
        .replace("batch_hosts = 2", "batch_hosts = 1");
    let cfg = write(d.path(), "k.toml", &text);
    let c = cfg.to_str().unwrap();
    let full = d.path().join("full.h5");
    run_ok(&["run", c, "--threads", "1", "--out", full.to_str().unwrap()]);
    let out = d.path().join("killed.h5");
    let child = std::process::Command::new(env!("CARGO_BIN_EXE_retinue"))
        .env("HDF5_USE_FILE_LOCKING", "FALSE")
        .args(["run", c, "--threads", "1", "--out", out.to_str().unwrap()])
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .unwrap();
    let parts = d.path().join(".killed.h5.parts");
    kill_once_parts_are_written(child, &parts, 3);
    assert!(
        !out.exists(),
        "a killed run must not leave a finished-looking store"
    );
    // without --resume the leftover parts are refused with a clear message
    let (code, _, err) = run_cli(&["run", c, "--out", out.to_str().unwrap()]);
    assert_ne!(code, 0);
    assert!(err.contains("--resume"), "{err}");
    // resuming as another shard is refused: the parts hold shard 1/1's hosts (issue 18, item 3:
    // a store labelled 2/2 once held hosts of the other shard)
    let (code, _, err) = run_cli(&[
        "run",
        c,
        "--resume",
        "--shard",
        "2/2",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("shard 1/1") && err.contains("not 2/2"),
        "{err}"
    );
    // ... as is resuming with another configuration: the stale parts are named with the
    // command that clears them
    let other = write(
        d.path(),
        "other.toml",
        &text.replace("master_seed = 11", "master_seed = 5"),
    );
    let (code, _, err) = run_cli(&[
        "run",
        other.to_str().unwrap(),
        "--resume",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("configuration differs")
            && err.contains(&format!("rm -r {}", parts.display())),
        "{err}"
    );
    // ... as is resuming with another build of the code (the crate version alone would not
    // tell development builds apart), or parts of a build that did not record its own
    let stamp = parts.join("build");
    assert_eq!(
        std::fs::read_to_string(&stamp).unwrap(),
        retinue::BUILD_FINGERPRINT
    );
    for (other, named) in [
        (Some("0123456789abcdef"), "0123456789abcdef"),
        (None, "not recorded"),
    ] {
        match other {
            Some(b) => std::fs::write(&stamp, b).unwrap(),
            None => std::fs::remove_file(&stamp).unwrap(),
        }
        let (code, _, err) = run_cli(&["run", c, "--resume", "--out", out.to_str().unwrap()]);
        assert_eq!(code, 2, "{err}");
        assert!(
            err.contains(named)
                && err.contains(retinue::BUILD_FINGERPRINT)
                && err.contains("with the build that started it")
                && err.contains(&format!("rm -r {}", parts.display())),
            "{err}"
        );
        assert!(!out.exists());
    }
    std::fs::write(&stamp, retinue::BUILD_FINGERPRINT).unwrap();
    // a part emptied by a system crash (renamed into place before its data reached the disk;
    // review: every later resume failed on it) is made again
    let first_part = std::fs::read_dir(&parts)
        .unwrap()
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| {
            p.file_name()
                .is_some_and(|n| n.to_string_lossy().starts_with("part-"))
        })
        .min()
        .unwrap();
    std::fs::write(&first_part, b"").unwrap();
    let (code, _, err) = run_cli(&[
        "run",
        c,
        "--threads",
        "2",
        "--resume",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(
        err.contains("cannot be read") && err.contains("making it again"),
        "{err}"
    );
    assert_eq!(store_tables(&full), store_tables(&out));
    assert!(!parts.exists());
}

/// A run killed during its tests or report leaves a complete store without `/analysis`;
/// `--resume` then runs only the tests and the report on it, with the same results as an
/// uninterrupted run (issue 18, item 7: it re-synthesised every host).
#[test]
fn resume_after_the_hosts_runs_only_the_tests() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "r.toml", TINY);
    let c = cfg.to_str().unwrap();
    let out = d.path().join("r.h5");
    run_ok(&["run", c, "--out", out.to_str().unwrap()]);
    let full = store_tables(&out);
    let read_analysis = |p: &Path| -> Vec<f64> {
        let f = hdf5::File::open(p).unwrap();
        f.dataset("analysis/run/all_of_n/last_host_infall/mean")
            .unwrap()
            .read_raw::<f64>()
            .unwrap()
    };
    let analysis = read_analysis(&out);
    // what a kill during the tests leaves: the hosts without /analysis, and no report
    {
        let f = hdf5::File::open_rw(&out).unwrap();
        f.unlink("analysis").unwrap();
    }
    std::fs::remove_dir_all(d.path().join("r-report")).unwrap();
    let (code, _, err) = run_cli(&["run", c, "--resume", "--out", out.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(err.contains("running only the tests"), "{err}");
    assert!(!err.contains("synthesised"), "{err}");
    assert_eq!(store_tables(&out), full);
    assert_eq!(read_analysis(&out), analysis);
    assert!(d.path().join("r-report/report.md").exists());
    // a store of another configuration is not taken for this run's
    let other = write(
        d.path(),
        "o.toml",
        &TINY.replace("master_seed = 11", "master_seed = 12"),
    );
    let (code, _, err) = run_cli(&[
        "run",
        other.to_str().unwrap(),
        "--resume",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("another configuration"), "{err}");
}

/// `--set TABLE.KEY=VALUE` changes a key as editing the file would: the same hosts bit for
/// bit, and the store's configuration says what was set (and on the command line). A resume
/// needs the same overrides, and a bad override is reported like a bad key in a file, with
/// nothing written.
#[test]
fn set_on_the_command_line_is_the_same_as_editing_the_file() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "s.toml", TINY);
    let c = cfg.to_str().unwrap();
    let edited = write(
        d.path(),
        "e.toml",
        &format!(
            "{}\n[orbits]\ndisc_tide_ratio = 0.8\ndisc_tide_loss_power = 0\n",
            TINY.replace("master_seed = 11", "master_seed = 12")
        ),
    );
    let (a, b) = (d.path().join("a.h5"), d.path().join("b.h5"));
    let sets = [
        "--set",
        "run.master_seed=12",
        "--set",
        "orbits.disc_tide_ratio=0.8",
        "--set",
        "orbits.disc_tide_loss_power = 0",
    ];
    let mut args = vec!["run", c, "--out", a.to_str().unwrap()];
    args.extend(sets);
    run_ok(&args);
    run_ok(&[
        "run",
        edited.to_str().unwrap(),
        "--out",
        b.to_str().unwrap(),
    ]);
    assert_eq!(store_tables(&a), store_tables(&b));
    let f = hdf5::File::open(&a).unwrap();
    let seed: u64 = f.attr("master_seed").unwrap().read_scalar().unwrap();
    assert_eq!(seed, 12);
    let text = retinue::io::h5::get_str_attr(&f, "config").unwrap();
    drop(f);
    let stored: toml::Table = toml::from_str(&text).unwrap();
    assert_eq!(stored["orbits"]["disc_tide_ratio"].as_float(), Some(0.8));
    assert_eq!(stored["run"]["master_seed"].as_integer(), Some(12));
    assert_eq!(
        text.matches(retinue::config::overrides::SET_MARK).count(),
        3,
        "{text}"
    );
    // resuming the complete store: with the same overrides it is this run's; without them it
    // is another configuration's
    args.push("--resume");
    run_ok(&args);
    let (code, _, err) = run_cli(&["run", c, "--resume", "--out", a.to_str().unwrap()]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("another configuration"), "{err}");
    assert!(err.contains("give the same --set again"), "{err}");
    // bad overrides: every one named, exit code 2, nothing written
    let before = dir_names(d.path());
    for (set, named) in [
        ("orbits.disc_tide_rati=0.8", "orbits.disc_tide_rati"),
        ("galaxies.occupation=erff", "galaxies.occupation"),
        ("host.mass_msun=1e12 Msun", "host.mass_msun"),
        ("trees.resolution_msun=-1", "trees.resolution_msun"),
        ("master_seed=3", "--set"),
    ] {
        let out = d.path().join("bad.h5");
        let (code, _, err) = run_cli(&["run", c, "--out", out.to_str().unwrap(), "--set", set]);
        assert_eq!(code, 2, "{set}: {err}");
        assert!(err.contains(named), "{set}: {err}");
        let (code, _, err) = run_cli(&["check", c, "--set", set]);
        assert_eq!(code, 2, "{set}: {err}");
        assert!(err.contains(named), "{set}: {err}");
    }
    assert_eq!(dir_names(d.path()), before);
}

/// `infall --set tests.KEY=VALUE` re-tests with a test setting changed as a `--config` file
/// with that key would (and over such a file's own value); keys of other tables, which made
/// the store, are refused.
#[test]
fn infall_set_is_the_same_as_a_tests_file() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "t.toml", TINY);
    let store = d.path().join("t.h5");
    let st = store.to_str().unwrap();
    run_ok(&["run", cfg.to_str().unwrap(), "--out", st]);
    let tests = write(
        d.path(),
        "inner.toml",
        "[tests.selection]\nr_over_rvir = [0.0, 0.5]\n",
    );
    let other = write(
        d.path(),
        "outer.toml",
        "[tests.selection]\nr_over_rvir = [0.5, 1.0]\n",
    );
    let set = "tests.selection.r_over_rvir=[0.0, 0.5]";
    run_ok(&[
        "infall",
        st,
        "--config",
        tests.to_str().unwrap(),
        "--name",
        "file",
    ]);
    run_ok(&["infall", st, "--set", set, "--name", "set"]);
    // --set writes over the file's value of the same key
    run_ok(&[
        "infall",
        st,
        "--config",
        other.to_str().unwrap(),
        "--set",
        set,
        "--name",
        "both",
    ]);
    run_ok(&["infall", st, "--name", "stored"]);
    let read = |name: &str| -> Vec<u64> {
        let f = hdf5::File::open(&store).unwrap();
        let v: Vec<f64> = f
            .dataset(&format!("analysis/{name}/all_of_n/first_host_infall/mean"))
            .unwrap()
            .read_raw()
            .unwrap();
        v.iter().map(|x| x.to_bits()).collect()
    };
    assert_eq!(read("set"), read("file"));
    assert_eq!(read("both"), read("file"));
    assert_ne!(read("set"), read("stored"));
    // a key that made the store: refused, naming it, and nothing written
    for bad in ["orbits.disc_tide_ratio=0.8", "run.master_seed=3"] {
        let (code, _, err) = run_cli(&["infall", st, "--set", bad, "--name", "bad"]);
        assert_eq!(code, 2, "{bad}: {err}");
        assert!(
            err.contains(bad) && err.contains("re-runs the tests only"),
            "{err}"
        );
    }
    // a bad test key or value is named as in a file
    let (code, _, err) = run_cli(&["infall", st, "--set", "tests.drawz=5", "--name", "bad"]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("tests.drawz = 5"), "{err}");
    let f = hdf5::File::open(&store).unwrap();
    assert!(f.group("analysis/bad").is_err());
}

/// At least 30 malformed configurations and inputs: each gives exit code 2, a message that
/// names the problem, no panic, and no files.
#[test]
fn malformed_configs_are_reported() {
    let d = tempfile::tempdir().unwrap();
    let base = TINY.to_string();
    let cases: Vec<(String, &str)> = vec![
        (
            base.replace("preset = \"planck18\"", "preset = \"planck99\""),
            "cosmology.preset",
        ),
        (
            base.replace("hosts_per_cell = 3", "hosts_per_cell = 0"),
            "run.hosts_per_cell",
        ),
        (
            base.replace("hosts_per_cell = 3", "hosts_per_cell = -3"),
            "hosts_per_cell",
        ),
        (
            base.replace("hosts_per_cell = 3", "hosts_per_cell = \"many\""),
            "hosts_per_cell",
        ),
        (
            base.replace("master_seed = 11", "master_sead = 11"),
            "master_sead",
        ),
        (base.replace("[trees]", "[tree]"), "tree"),
        (
            base.replace("resolution_msun = 1e9", "resolution_msun = 1e12"),
            "trees.resolution_msun",
        ),
        (
            base.replace("resolution_msun = 1e9", "resolution_msun = -1"),
            "trees.resolution_msun",
        ),
        (base.replace("z_max = 10.0", "z_max = 0.0"), "trees.z_max"),
        (base.replace("z_max = 10.0", "z_max = 500.0"), "trees.z_max"),
        (
            base.replace("output_steps = 16", "output_steps = 1"),
            "trees.output_steps",
        ),
        (
            base.replace("mass_msun = [8e11, 1.2e12]", "mass_msun = []"),
            "host.mass_msun",
        ),
        (
            base.replace("mass_msun = [8e11, 1.2e12]", "mass_msun = [8e11, 1e20]"),
            "host.mass_msun",
        ),
        (
            base.replace("mass_msun = [8e11, 1.2e12]", "mass_msun = \"heavy\""),
            "mass_msun",
        ),
        (
            base.replace("[host]", "[host]\nmass_definition = \"300c\""),
            "host.mass_definition",
        ),
        (
            base.replace("[host]", "[host]\nconcentration = \"random\""),
            "host.concentration",
        ),
        (
            base.replace("[host]", "[host]\ndisc_mass_msun = -5"),
            "host.disc_mass_msun",
        ),
        (
            base.replace("[host]", "[host]\nz_final = 25"),
            "host.z_final",
        ),
        (
            base.replace("[host]", "[host]\nbaryons_reference_mass_msun = 1e9"),
            "host.baryons_reference_mass_msun",
        ),
        (
            base.replace("[host]", "[host]\nmass_log_uniform_msun = [2e12, 1e12]"),
            "host.mass_log_uniform_msun",
        ),
        (
            base.replace("[tests]", "[orbits]\nrtol = 0.5\n\n[tests]"),
            "orbits.rtol",
        ),
        (
            base.replace("[tests]", "[orbits]\nmax_step_gyr = 0\n\n[tests]"),
            "orbits.max_step_gyr",
        ),
        (
            base.replace("[tests]", "[orbits]\npericentre_cut_kpc = -1\n\n[tests]"),
            "orbits.pericentre_cut_kpc",
        ),
        (
            base.replace(
                "[tests]",
                "[orbits]\nstripping = false\ncentral_merge_kpc = 0\n\n[tests]",
            ),
            "orbits.central_merge_kpc = 0 is not allowed: must be > 0 when friction",
        ),
        (
            base.replace("[tests]", "[orbits]\nfriction = \"yes\"\n\n[tests]"),
            "friction",
        ),
        (
            base.replace("[tests]", "[galaxies]\nsmhm = \"other\"\n\n[tests]"),
            "smhm",
        ),
        (
            format!("{base}\n[tests.backsplash]\nshells_over_rvir = [0.5, 1.0, 2.0]\n"),
            "tests.backsplash.shells_over_rvir = [0.5, 1.0, 2.0] is not allowed: must be 2 to 21 increasing shell edges in [1, 100] R_vir",
        ),
        (
            format!("{base}\n[tests.backsplash]\nm_peak_msun = [1e8, 5e8]\n"),
            "tests.backsplash.m_peak_msun = [1e8, 5e8] is not allowed: its upper edge must lie above trees.resolution_msun = 1e9 Msun",
        ),
        (
            base.replace("[tests]", "[galaxies]\nsmhm_epoch = \"now\"\n\n[tests]"),
            "galaxies.smhm_epoch = \"now\" is not allowed: unknown variant `now`, expected `peak` or `today`",
        ),
        (
            base.replace("[tests]", "[galaxies]\ndwarf_slope = 9\n\n[tests]"),
            "galaxies.dwarf_slope",
        ),
        (
            base.replace("[tests]", "[galaxies]\nscatter_dex = 3\n\n[tests]"),
            "galaxies.scatter_dex",
        ),
        (
            base.replace("[tests]", "[survey]\nsky_fraction = 0\n\n[tests]"),
            "survey.sky_fraction",
        ),
        (base.replace("draws = 500", "draws = 5"), "tests.draws"),
        (
            base.replace("bootstrap = 50", "bootstrap = 1"),
            "tests.bootstrap",
        ),
        (
            base.replace("n_range = [3, 4]", "n_range = [5, 4]"),
            "tests.n_range",
        ),
        (
            base.replace("z_grid = [0.0, 0.5, 1.0, 2.0]", "z_grid = [-1.0]"),
            "tests.z_grid",
        ),
        (
            format!("{base}\n[tests.selection]\nm_v = [0.0, -5.0]\n"),
            "tests.selection.m_v",
        ),
        (
            format!("{base}\n[tests.selection]\nsurvival = \"sometimes\"\n"),
            "survival",
        ),
        (
            base.replace("[cosmology]\npreset = \"planck18\"", "[cosmology]\nh = 0.7"),
            "cosmology.omega_m",
        ),
        (
            base.replace("preset = \"planck18\"", "preset = \"planck18\"\nsigma8 = 0"),
            "cosmology.sigma8",
        ),
        (
            base.replace("[run]", "[run]\nsample = \"nowhere.csv\""),
            "run.sample",
        ),
        (
            base.replace("[run]", "[run]\nsample_columns = { stellar_mass = \"mass\" }"),
            "run.sample_columns.stellar_mass = \"mass\" is not allowed: `stellar_mass` is not a name of the sample",
        ),
        (
            base.replace(
                "[run]",
                "[run]\nsample_columns = { id = \"name\", m_v = \"name\" }",
            ),
            "run.sample_columns.m_v = \"name\" is not allowed: column `name` is already read as `id`",
        ),
        (
            base.replace("[run]", "[run]\nsample_columns = { id = 3 }"),
            "run.sample_columns",
        ),
        // found by the review of 2026-12-04: a [low, high] key with a third value (its
        // third was dropped), grids out of order or repeated (a descending delay grid was
        // reported as an upper limit), an empty [tests.preprocessing] (it counted haloes of
        // any mass), host masses that name one cell
        (
            format!("{base}\n[tests.selection]\nr_over_rvir = [0.0, 0.3, 1.0]\n"),
            "tests.selection.r_over_rvir = [0.0, 0.3, 1.0] is not allowed: invalid length 3, expected exactly two values, [low, high]",
        ),
        (
            base.replace("n_range = [3, 4]", "n_range = [3, 4, 99]"),
            "tests.n_range = [3, 4, 99] is not allowed: invalid length 3",
        ),
        (
            base.replace("[tests]", "[tests]\ndelay_grid_gyr = [2.0, 1.0, 0.0]"),
            "tests.delay_grid_gyr = [2.0, 1.0, 0.0] is not allowed: must be a non-empty, increasing list",
        ),
        (
            base.replace("z_grid = [0.0, 0.5, 1.0, 2.0]", "z_grid = [0.0, 0.5, 0.5, 2.0]"),
            "tests.z_grid = [0.0, 0.5, 0.5, 2.0] is not allowed: must be a non-empty, increasing list",
        ),
        (
            format!("{base}\n[tests.preprocessing]\n"),
            "tests.preprocessing = (a table with neither key) is not allowed: give halo_mass_msun or stellar_mass_msun",
        ),
        (
            base.replace("mass_msun = [8e11, 1.2e12]", "mass_msun = [1.2e12, 1.201e12]"),
            "host.mass_msun = 1201000000000 is not allowed: repeats 1200000000000 to 3 significant figures (1.2e12)",
        ),
        ("[run\nhosts_per_cell = 3".to_string(), "TOML"),
        ("".to_string(), "cosmology"),
        // a unit written after a number
        (
            base.replace("resolution_msun = 1e9", "resolution_msun = 1e9 Msun"),
            "trees.resolution_msun = 1e9 Msun is not allowed: a number with a unit",
        ),
        // a misspelt table
        (format!("{base}\n[orbit]\nrtol = 1e-6\n"), "orbit = (table)"),
        // either/or keys given together
        (
            format!("{base}\n[tests.preprocessing]\nhalo_mass_msun = 1e10\nstellar_mass_msun = 1e6\n"),
            "tests.preprocessing.stellar_mass_msun",
        ),
        (
            base.replace("[host]", "[host]\nmass_log_uniform_msun = [1e12, 2e12]"),
            "not both",
        ),
        // a tree resolution below a warm-dark-matter sigma(M) table (issue 18, item 5: `check`
        // passed it and `run` failed at its first tree, leaving parts that blocked the next run)
        (
            base.replace(
                "preset = \"planck18\"",
                "preset = \"planck18\"\nm_wdm_kev = 1.0\nfilter = \"sharp-k\"",
            )
            .replace("resolution_msun = 1e9", "resolution_msun = 3e7"),
            "trees.resolution_msun = 3.000e7 Msun lies below the sigma(M) table",
        ),
        // the warm-dark-matter concentration model: an unknown value, and the key without WDM
        (
            base.replace(
                "preset = \"planck18\"",
                "preset = \"planck18\"\nm_wdm_kev = 3.0\nfilter = \"sharp-k\"\nwdm_concentration = \"lovell14\"",
            ),
            "cosmology.wdm_concentration = lovell14 is not allowed: expected one of bose16, none",
        ),
        (
            base.replace(
                "preset = \"planck18\"",
                "preset = \"planck18\"\nwdm_concentration = \"none\"",
            ),
            "cosmology.wdm_concentration = none is not allowed: is only used with warm dark matter",
        ),
        // a transfer table that is not there
        (
            base.replace(
                "preset = \"planck18\"",
                "preset = \"planck18\"\ntransfer = \"table\"\ntransfer_table = \"no-such-table.txt\"",
            ),
            "cosmology.transfer_table",
        ),
    ];
    assert!(cases.len() >= 30);
    for (i, (text, key)) in cases.iter().enumerate() {
        let p = write(d.path(), &format!("bad{i}.toml"), text);
        let (code, out, err) = run_cli(&["check", p.to_str().unwrap()]);
        assert_eq!(code, 2, "case {i} ({key}): {out} {err}");
        assert!(err.contains(key), "case {i}: expected `{key}` in: {err}");
        assert!(!err.contains("panicked"), "case {i}: {err}");
        let (code, _, err) = run_cli(&[
            "run",
            p.to_str().unwrap(),
            "--out",
            d.path().join("never.h5").to_str().unwrap(),
        ]);
        assert_eq!(code, 2, "run case {i}: {err}");
    }
    // all problems at once, one line each: out-of-range values, unknown keys and values of
    // the wrong type, in several tables
    let many = base
        .replace("draws = 500", "draws = 5")
        .replace("bootstrap = 50", "bootstrap = 1")
        .replace("master_seed = 11", "master_seed = 11\nthreds = 2")
        .replace("z_max = 10.0", "z_max = \"ten\"")
        .replace(
            "preset = \"planck18\"",
            "preset = \"planck18\"\nsigma_8 = 0.8",
        );
    let p = write(d.path(), "many.toml", &many);
    let (code, _, err) = run_cli(&["check", p.to_str().unwrap()]);
    assert_eq!(code, 2, "{err}");
    for key in [
        "tests.draws",
        "tests.bootstrap",
        "run.threds = 2 is not allowed: unknown key",
        "trees.z_max",
        "cosmology.sigma_8",
    ] {
        assert!(err.contains(key), "{key}: {err}");
    }
    assert_eq!(err.lines().count(), 5, "{err}");
    assert!(!d.path().join("never.h5").exists());
    let leftovers: Vec<_> = std::fs::read_dir(d.path())
        .unwrap()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().starts_with('.'))
        .collect();
    assert!(leftovers.is_empty(), "temporary files left: {leftovers:?}");
    // an unterminated string: its line is the one problem reported (it gave five bogus
    // "missing" lines after it)
    let p = write(
        d.path(),
        "unterminated.toml",
        &base.replace("preset = \"planck18\"", "preset = \"planck18"),
    );
    let (code, _, err) = run_cli(&["check", p.to_str().unwrap()]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("cosmology.preset"), "{err}");
    assert_eq!(err.lines().count(), 1, "{err}");
    // more threads than the cap of run.threads
    let good = write(d.path(), "good.toml", TINY);
    let (code, _, err) = run_cli(&["run", good.to_str().unwrap(), "--threads", "2000"]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("1024"), "{err}");
    // a grid of more than 1e8 hosts is refused; a large one is accepted with its size
    let masses = format!("mass_msun = [{}]", vec!["1e12"; 20].join(", "));
    let huge = write(
        d.path(),
        "huge.toml",
        &base
            .replace("hosts_per_cell = 3", "hosts_per_cell = 10000000")
            .replace("mass_msun = [8e11, 1.2e12]", &masses),
    );
    let (code, _, err) = run_cli(&["check", huge.to_str().unwrap()]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("200000000 hosts") && err.contains("at most 1e8"),
        "{err}"
    );
    let large = write(
        d.path(),
        "large.toml",
        &base.replace("hosts_per_cell = 3", "hosts_per_cell = 10000000"),
    );
    let (code, _, err) = run_cli(&["check", large.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(
        err.contains("20000000 hosts: its store will take about"),
        "{err}"
    );
    // bad shard specs
    for s in ["0/3", "4/3", "x/3", "3"] {
        let (code, _, err) = run_cli(&["run", good.to_str().unwrap(), "--shard", s]);
        assert_eq!(code, 2, "{s}");
        assert!(err.contains("--shard"), "{err}");
    }
}

/// A run that fails before finishing any part (here an injected fault on its first host)
/// leaves nothing behind that would block the next run (issue 18, item 5); a run that
/// finished some parts keeps them for --resume.
#[test]
fn failed_run_without_parts_leaves_nothing() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "f.toml", TINY);
    let out = d.path().join("f.h5");
    let fail_at = |host: &str| {
        std::process::Command::new(env!("CARGO_BIN_EXE_retinue"))
            .env("HDF5_USE_FILE_LOCKING", "FALSE")
            .args(["run", cfg.to_str().unwrap(), "--threads", "1"])
            .args(["--out", out.to_str().unwrap()])
            .env("RETINUE_FAULT_HOST", host)
            .output()
            .unwrap()
    };
    let o = fail_at("0");
    assert_ne!(o.status.code(), Some(0));
    let parts = d.path().join(".f.h5.parts");
    assert!(
        !parts.exists(),
        "parts left after a failure on the first host"
    );
    // a failure after the first batch (2 hosts) keeps that batch
    let o = fail_at("3");
    assert_ne!(o.status.code(), Some(0));
    assert!(
        parts.join("part-00000.h5").exists(),
        "the finished batch was not kept"
    );
    run_ok(&[
        "run",
        cfg.to_str().unwrap(),
        "--resume",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert!(out.exists() && !parts.exists());
}

/// A full disk (a 600 kB tmpfs, mounted where the test may mount: as root on Linux, as in CI;
/// elsewhere it says so and checks nothing) gives one line naming the device and the file,
/// exit code 1, and leaves no temporary file (issue 18, item 9: two raw HDF5 lines and a
/// hidden `.partial` were left on the full disk).
#[test]
fn full_disk_gives_one_line_and_leaves_no_partial_file() {
    let d = tempfile::tempdir().unwrap();
    let mnt = d.path().join("small");
    std::fs::create_dir(&mnt).unwrap();
    let mounted = std::process::Command::new("mount")
        .args([
            "-t",
            "tmpfs",
            "-o",
            "size=600k",
            "tmpfs",
            mnt.to_str().unwrap(),
        ])
        .stderr(std::process::Stdio::null())
        .status()
        .map(|s| s.success())
        .unwrap_or(false);
    if !mounted {
        eprintln!("full-disk test skipped: cannot mount a tmpfs here (needs root on Linux)");
        return;
    }
    struct Unmount(PathBuf);
    impl Drop for Unmount {
        fn drop(&mut self) {
            let _ = std::process::Command::new("umount").arg(&self.0).status();
        }
    }
    let _guard = Unmount(mnt.clone());
    let cfg = write(d.path(), "d.toml", TINY);
    let out = mnt.join("d.h5");
    let (code, _, err) = run_cli(&["run", cfg.to_str().unwrap(), "--out", out.to_str().unwrap()]);
    assert_eq!(code, 1, "{err}");
    let errors: Vec<&str> = err.lines().filter(|l| l.starts_with("error")).collect();
    assert_eq!(errors.len(), 1, "{err}");
    assert!(
        errors[0].starts_with("error: no space left on tmpfs (mounted on ")
            && errors[0].contains("while writing"),
        "{err}"
    );
    assert!(!err.contains("H5F") && !err.contains("errno"), "{err}");
    assert!(!out.exists());
    // no temporary file anywhere on the full disk (finished parts may stay for --resume)
    fn partials(dir: &Path, found: &mut Vec<PathBuf>) {
        for e in std::fs::read_dir(dir).unwrap().flatten() {
            let p = e.path();
            if p.is_dir() {
                partials(&p, found);
            } else if p.to_string_lossy().ends_with(".partial") {
                found.push(p);
            }
        }
    }
    let mut found = Vec::new();
    partials(&mnt, &mut found);
    assert!(found.is_empty(), "temporary files left: {found:?}");
}

/// A truncated store and malformed observed samples give clear errors.
#[test]
fn damaged_store_and_bad_sample() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "tiny.toml", TINY);
    let store = d.path().join("ok.h5");
    run_ok(&[
        "run",
        cfg.to_str().unwrap(),
        "--out",
        store.to_str().unwrap(),
    ]);
    let bytes = std::fs::read(&store).unwrap();
    let cut = d.path().join("cut.h5");
    std::fs::write(&cut, &bytes[..bytes.len() / 3]).unwrap();
    let (code, _, err) = run_cli(&["infall", cut.to_str().unwrap()]);
    assert!(code == 1 || code == 2, "{err}");
    assert!(err.contains("cut.h5"), "{err}");
    assert!(!err.contains("panicked"), "{err}");
    let not_store = write(d.path(), "not.h5", "plain text");
    let (code, _, err) = run_cli(&["infall", not_store.to_str().unwrap()]);
    assert_ne!(code, 0);
    assert!(err.contains("not.h5"), "{err}");
    // a store whose hosts name a cosmology its configuration does not have
    let odd = d.path().join("odd.h5");
    std::fs::write(&odd, &bytes).unwrap();
    {
        let f = hdf5::File::open_rw(&odd).unwrap();
        let ds = f.dataset("hosts/cosmology_index").unwrap();
        let v: Vec<f64> = ds.read_raw().unwrap();
        ds.write_raw(&vec![7.0f64; v.len()]).unwrap();
    }
    let (code, _, err) = run_cli(&["infall", odd.to_str().unwrap()]);
    assert!(code == 1 || code == 2, "{err}");
    assert!(
        err.contains("odd.h5") && err.contains("cosmology index 7"),
        "{err}"
    );
    assert!(!err.contains("panicked"), "{err}");
    // a deleted column and a corrupted sub_count are named, with exit code 2 (issue 18, item
    // 10: a raw H5Dopen message with exit 1, and a silently ignored sub_count)
    let damage = |name: &str, how: &dyn Fn(&hdf5::File)| -> PathBuf {
        let p = d.path().join(name);
        std::fs::write(&p, &bytes).unwrap();
        how(&hdf5::File::open_rw(&p).unwrap());
        p
    };
    let no_col = damage("nocol.h5", &|f| f.unlink("subhalos/vx_kms").unwrap());
    let bad_count = damage("count.h5", &|f| {
        let ds = f.dataset("hosts/sub_count").unwrap();
        let mut v: Vec<u64> = ds.read_raw().unwrap();
        v[0] += 1;
        ds.write_raw(&v).unwrap();
    });
    for (p, want) in [
        (&no_col, "the column /subhalos/vx_kms is missing"),
        (&bad_count, "sub_offset"),
    ] {
        for cmd in ["infall", "plot"] {
            let (code, _, err) = run_cli(&[cmd, p.to_str().unwrap()]);
            assert_eq!(code, 2, "{cmd}: {err}");
            assert!(
                err.contains("damaged store") && err.contains(want),
                "{cmd}: {err}"
            );
        }
    }
    // merge: a zero-byte or text shard is bad input (exit 2), as for infall
    let empty = write(d.path(), "empty.h5", "");
    for bad in [&empty, &not_store] {
        let (code, _, err) = run_cli(&[
            "merge",
            store.to_str().unwrap(),
            bad.to_str().unwrap(),
            "--out",
            d.path().join("m.h5").to_str().unwrap(),
        ]);
        assert_eq!(code, 2, "{err}");
        assert!(
            err.contains(bad.file_name().unwrap().to_str().unwrap()),
            "{err}"
        );
    }
    // a file that is not a sample: quoted only in a short excerpt (a whole line of a file
    // given by mistake was echoed)
    let secret = write(
        d.path(),
        "secret.txt",
        "admin:x:0:0:a line that must not be echoed whole\n",
    );
    let (code, _, err) = run_cli(&[
        "infall",
        store.to_str().unwrap(),
        "--sample",
        secret.to_str().unwrap(),
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("names none of the sample's columns"), "{err}");
    assert!(!err.contains("echoed whole"), "{err}");
    assert_eq!(err.lines().count(), 1, "{err}");
    for (text, want) in [
        ("id,mstar_msun\nA,1\n", "missing column"),
        ("id,mstar_msun,r_gc_kpc,v_r_kms,t_quench_lookback_gyr,t_quench_err_gyr\nA,1e5,60,0,99,1\n", "t_quench_lookback_gyr = 99"),
        ("", "empty"),
    ] {
        let s = write(d.path(), "s.csv", text);
        let (code, _, err) = run_cli(&["infall", store.to_str().unwrap(), "--sample", s.to_str().unwrap()]);
        assert_eq!(code, 2, "{err}");
        assert!(err.contains(want), "{text:?}: {err}");
    }
}

/// A user's sample file (issue: the hand-written reader broke on them): RFC 4180 quoting, a
/// byte-order mark, CRLF, extra and index columns, columns of other names mapped with
/// `run.sample_columns` (config) or `--columns` (infall, plot), magnitudes and heliocentric
/// distances. Notes and errors: one line each, naming file, line, column and value.
#[test]
fn users_sample_files() {
    let d = tempfile::tempdir().unwrap();
    // a data-frame export: index column, quoted names with commas, BOM, CRLF, sky position
    let export = "\u{feff},name,ra_deg,dec_deg,stellar_mass,dist,v_r_kms,t_quench_lookback_gyr,t_quench_err_gyr\r\n\
                  0,\"Lantern-I, north\",150.0,22.0,2.4e5,62,-38,11.8,0.6\r\n\
                  1,Lantern-II,160.0,67.0,8.1e4,97,54,12.2,0.7\r\n\
                  2,\"Lantern \"\"III\"\"\",227.0,67.2,3.3e4,41,-112,12.6,0.5\r\n";
    write(d.path(), "export.csv", export);
    let cfg_text = TINY.replace(
        "[run]\n",
        "[run]\nsample = \"export.csv\"\nsample_columns = { id = \"name\", mstar_msun = \"stellar_mass\", r_gc_kpc = \"dist\" }\n",
    );
    let cfg = write(d.path(), "tiny.toml", &cfg_text);
    let (code, out, err) = run_cli(&["check", cfg.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("valid"), "{out}");
    let export_name = d.path().join("export.csv").display().to_string();
    assert!(
        err.contains(&format!(
            "note: {export_name}: ignoring columns ra_deg, dec_deg"
        )),
        "{err}"
    );
    let store = d.path().join("run.h5");
    let (code, out, err) = run_cli(&[
        "run",
        cfg.to_str().unwrap(),
        "--out",
        store.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("largest quenching delay"), "{out}");
    assert!(err.contains("ignoring columns ra_deg, dec_deg"), "{err}");
    // the run's sample with its stored mapping, found from another working directory
    let (code, out, err) = run_cli(&["infall", store.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("P(all 3 fell in before z)"), "{out}");
    // another file given with --sample: read with --columns (not the run's mapping); here
    // with magnitudes and heliocentric distances with a sky position
    let other = write(
        d.path(),
        "other.csv",
        "# invented\nobject,M_V,d_kpc,l_deg,b_deg,v_r_kms,t_quench_lookback_gyr,t_quench_err_gyr\n\
         A,-8.0,70,60,30,10,11,1\nB,-6.5,100,200,-40,-20,10,1\nC,-9.1,40,300,80,5,12,0.5\nD,-7,50,10,50,0,11,1\n",
    );
    let sample = other.to_str().unwrap();
    let (code, _, err) = run_cli(&["infall", store.to_str().unwrap(), "--sample", sample]);
    assert_eq!(code, 2, "{err}");
    let other_name = other.display().to_string();
    assert!(
        err.contains(&format!(
            "{other_name}: line 2 (header): missing column `id`"
        )),
        "{err}"
    );
    let columns = "id=object,m_v=M_V,d_helio_kpc=d_kpc";
    let (code, out, err) = run_cli(&[
        "infall",
        store.to_str().unwrap(),
        "--sample",
        sample,
        "--columns",
        columns,
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("largest quenching delay"), "{out}");
    // no note from the sample reader (the run's n_draw differs from this sample: that note)
    assert!(
        !err.lines()
            .any(|l| l.starts_with("note:") && !l.contains("tests.n_draw")),
        "{err}"
    );
    let (code, out, err) = run_cli(&[
        "plot",
        store.to_str().unwrap(),
        "--sample",
        sample,
        "--columns",
        columns,
        "--out",
        d.path().join("figs").to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains(".png"), "{out}");
    // the mapping's problems: an unknown name (at parsing), a column the file lacks, a
    // heliocentric distance without its sky position
    let (code, _, err) = run_cli(&[
        "infall",
        store.to_str().unwrap(),
        "--sample",
        sample,
        "--columns",
        "stellar=M_V",
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("stellar=M_V: `stellar` is not a name of the sample"),
        "{err}"
    );
    let (code, _, err) = run_cli(&[
        "infall",
        store.to_str().unwrap(),
        "--sample",
        sample,
        "--columns",
        "id=object,m_v=M_V,d_helio_kpc=distance",
    ]);
    assert_eq!(code, 2, "{err}");
    assert_eq!(
        err.trim_end(),
        format!(
            "error: {other_name}: line 2 (header): column `distance` (--columns d_helio_kpc=distance) is \
             not in the header, which has `object`, `M_V`, `d_kpc`, `l_deg`, `b_deg`, `v_r_kms`, \
             `t_quench_lookback_gyr`, `t_quench_err_gyr`"
        )
    );
    let no_sky = write(
        d.path(),
        "no-sky.csv",
        "id,mstar_msun,d_helio_kpc,v_r_kms,t_quench_lookback_gyr,t_quench_err_gyr\nA,1e5,70,10,11,1\n",
    );
    let (code, _, err) = run_cli(&[
        "infall",
        store.to_str().unwrap(),
        "--sample",
        no_sky.to_str().unwrap(),
    ]);
    assert_eq!(code, 2, "{err}");
    assert_eq!(err.lines().count(), 1, "{err}");
    assert!(
        err.contains("column `d_helio_kpc` is given without a sky position: a heliocentric distance alone does not give the galactocentric distance"),
        "{err}"
    );
    // a duplicate id, in the run's configuration: `check` names the id and both lines
    write(
        d.path(),
        "export.csv",
        &format!("{export}3,Lantern-II,1,2,1e5,50,0,11,1\r\n"),
    );
    let (code, _, err) = run_cli(&["check", cfg.to_str().unwrap()]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains(&format!(
            "{export_name}: line 5: id `Lantern-II` is given twice (lines 3 and 5)"
        )),
        "{err}"
    );
    // --config FILE with its own sample and mapping
    write(
        d.path(),
        "retest.toml",
        &format!(
            "[run]\nsample = \"other.csv\"\nsample_columns = {{ {} }}\n[tests]\nn_draw = 2\ndraws = 500\nbootstrap = 50\nn_range = [2, 3]\nz_grid = [0.0, 1.0]\n",
            "id = \"object\", m_v = \"M_V\", d_helio_kpc = \"d_kpc\""
        ),
    );
    let (code, out, err) = run_cli(&[
        "infall",
        store.to_str().unwrap(),
        "--config",
        d.path().join("retest.toml").to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("P(all 2 fell in before z)"), "{out}");
}

/// The demo config shipped in configs/ is valid.
#[test]
fn shipped_configs_are_valid() {
    for c in [
        "configs/demo.toml",
        "configs/milky-way.toml",
        "configs/host-mass-sweep.toml",
        "configs/cosmology-sweep.toml",
        "configs/paired-hosts.toml",
    ] {
        let p = Path::new(env!("CARGO_MANIFEST_DIR")).join(c);
        let (code, out, err) = run_cli(&["check", p.to_str().unwrap()]);
        assert_eq!(code, 0, "{c}: {err}");
        assert!(out.contains("valid"), "{out}");
        // and draws no warning of the tool's own (walkthrough: the sweep's resolution did)
        assert!(!err.contains("warning"), "{c}: {err}");
        // and the run's rough size
        for what in [
            "size (rough",
            "CPU time   about",
            "wall time  about",
            "store      about",
        ] {
            assert!(out.contains(what), "{c}: {out}");
        }
    }
    // the default run: 100 default hosts, 25 CPU-seconds, 86 MB
    let p = Path::new(env!("CARGO_MANIFEST_DIR")).join("configs/milky-way.toml");
    let out = run_ok(&["check", p.to_str().unwrap()]);
    assert!(
        out.contains("CPU time   about 25 s (0.25 s of one core per default host)")
            && out.contains("store      about 86 MB (0.84 MB per default host, compressed)"),
        "{out}"
    );
}

/// Dotted key paths of a TOML table and their values (arrays and empty tables are leaves).
fn flatten(prefix: &str, t: &toml::Table, out: &mut std::collections::BTreeMap<String, String>) {
    for (k, v) in t {
        let path = format!("{prefix}{k}");
        match v {
            toml::Value::Table(sub) if !sub.is_empty() => flatten(&format!("{path}."), sub, out),
            _ => {
                out.insert(path, v.to_string());
            }
        }
    }
}

/// The keys a table of the run configuration accepts, as serde lists them when it meets an
/// unknown one (`None`: the table takes any key, as `run.sample_columns` does).
fn accepted_keys(table: &str) -> Option<Vec<String>> {
    let probe = match table {
        "" => "[cosmology]\npreset = \"planck18\"\n[zz_unknown]\nx = 1\n".to_string(),
        "cosmology" => "[cosmology]\nzz_unknown = 1\n".to_string(),
        t => format!("[cosmology]\npreset = \"planck18\"\n[{t}]\nzz_unknown = 1\n"),
    };
    let err = toml::from_str::<retinue::config::RunConfigFile>(&probe).unwrap_err();
    let msg = err.message();
    let rest = msg.strip_prefix("unknown field `zz_unknown`, expected")?;
    Some(
        rest.split('`')
            .skip(1)
            .step_by(2)
            .map(str::to_string)
            .collect(),
    )
}

/// `configs/milky-way.toml` says it shows every key at its default, and it does: parsed, it
/// equals the configuration of a file that gives only the preset (plus the host mass that an
/// absent `host.mass_msun` stands for); every key each table accepts is in it, set or
/// commented out in its table; and each commented-out key, uncommented alone, is a key of the
/// right type. So a new key or a changed default cannot leave the file behind.
#[test]
fn milky_way_config_lists_every_default() {
    use retinue::config::{OneOrMany, RunConfigFile};
    use std::collections::BTreeMap;
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("configs/milky-way.toml");
    let text = std::fs::read_to_string(&path).unwrap();
    let file: RunConfigFile = toml::from_str(&text).unwrap();
    let mut defaults: RunConfigFile =
        toml::from_str("[cosmology]\npreset = \"planck18\"\n").unwrap();
    defaults.host.mass_msun = Some(OneOrMany::One(1.2e12));
    // the values, key by key (a readable message), then the whole
    let flat = |c: &RunConfigFile| {
        let t: toml::Table = toml::from_str(&toml::to_string(c).unwrap()).unwrap();
        let mut m = BTreeMap::new();
        flatten("", &t, &mut m);
        m
    };
    let (got, want) = (flat(&file), flat(&defaults));
    let differ: Vec<String> = want
        .iter()
        .filter(|(k, v)| got.get(*k) != Some(v))
        .map(|(k, v)| format!("{k}: file {:?}, default {v}", got.get(k)))
        .chain(
            got.keys()
                .filter(|k| !want.contains_key(*k))
                .map(|k| format!("{k}: set in the file, no default")),
        )
        .collect();
    assert!(
        differ.is_empty(),
        "milky-way.toml differs from the defaults:\n{}",
        differ.join("\n")
    );
    assert_eq!(file, defaults);

    // keys set or commented out, per table: `# key = value` lines belong to the table above
    let parsed: toml::Table = toml::from_str(&text).unwrap();
    let mut commented: Vec<(String, usize)> = Vec::new();
    let mut table = String::new();
    for (i, line) in text.lines().enumerate() {
        let l = line.trim();
        if let Some(h) = l.strip_prefix('[') {
            table = h.split(']').next().unwrap().trim().to_string();
        } else if let Some(c) = l.strip_prefix('#') {
            let c = c.trim_start();
            let key: String = c
                .chars()
                .take_while(|ch| ch.is_ascii_lowercase() || ch.is_ascii_digit() || *ch == '_')
                .collect();
            if !key.is_empty() && c[key.len()..].trim_start().starts_with('=') {
                commented.push((format!("{table}.{key}"), i));
            }
        }
    }
    let has = |path: &str| {
        let mut t = &parsed;
        let parts: Vec<&str> = path.split('.').collect();
        for (j, p) in parts.iter().enumerate() {
            match t.get(*p) {
                Some(toml::Value::Table(sub)) => t = sub,
                Some(_) => return j + 1 == parts.len(),
                None => return false,
            }
        }
        true
    };
    let mut missing = Vec::new();
    let mut tables = vec![String::new()];
    while let Some(t) = tables.pop() {
        let Some(keys) = accepted_keys(&t) else {
            continue;
        };
        for k in keys {
            let p = if t.is_empty() { k } else { format!("{t}.{k}") };
            if !has(&p) && !commented.iter().any(|(c, _)| *c == p) {
                missing.push(p.clone());
            }
            // a table of its own (a map such as run.sample_columns takes any key)
            if want.keys().any(|w| w.starts_with(&format!("{p}."))) {
                tables.push(p);
            }
        }
    }
    assert!(
        missing.is_empty(),
        "milky-way.toml lacks the keys {missing:?}"
    );
    assert!(commented.len() >= 20, "{commented:?}");
    let lines: Vec<&str> = text.lines().collect();
    for (key, i) in &commented {
        let mut l = lines.clone();
        let uncommented = l[*i].trim_start().trim_start_matches('#').to_string();
        l[*i] = &uncommented;
        let r = toml::from_str::<RunConfigFile>(&l.join("\n"));
        assert!(
            r.is_ok(),
            "{key} (line {}), uncommented: {}",
            i + 1,
            r.unwrap_err()
        );
    }
}

/// The figures on a run's `figures:` line ("a, b (each as .png and .svg)"): each exists in
/// `dir` as a PNG and an SVG of more than a few kilobytes; the SVG is an `<svg>` document whose
/// tags balance and whose text is SVG text (no font file needed to show it); no partial file
/// is left in `dir`. Returns the names in order.
pub(crate) fn check_listed_figures(out: &str, dir: &Path) -> Vec<String> {
    let line = out
        .lines()
        .find_map(|l| l.strip_prefix("figures: "))
        .unwrap_or_else(|| panic!("no figures line: {out}"));
    let list = line
        .strip_suffix(" (each as .png and .svg)")
        .unwrap_or_else(|| panic!("{line}"));
    let names: Vec<String> = list.split(", ").map(str::to_string).collect();
    for n in &names {
        let png = std::fs::read(dir.join(format!("{n}.png"))).unwrap();
        assert!(png.starts_with(b"\x89PNG") && png.len() > 10_000, "{n}.png");
        let svg = std::fs::read_to_string(dir.join(format!("{n}.svg"))).unwrap();
        assert!(svg.len() > 3000, "{n}.svg: {} bytes", svg.len());
        assert!(svg.trim_start().starts_with("<svg"), "{n}.svg");
        assert!(svg.trim_end().ends_with("</svg>"), "{n}.svg");
        assert!(svg.contains("<text"), "{n}.svg has no text");
        // every element closed, in order (attribute values hold no '<' or '>')
        let mut open: Vec<&str> = Vec::new();
        let mut rest = svg.as_str();
        while let Some(i) = rest.find('<') {
            let j = rest[i..]
                .find('>')
                .unwrap_or_else(|| panic!("{n}.svg: unclosed tag"))
                + i;
            let tag = &rest[i + 1..j];
            if let Some(name) = tag.strip_prefix('/') {
                assert_eq!(open.pop(), Some(name.trim()), "{n}.svg");
            } else if !tag.ends_with('/') && !tag.starts_with('?') && !tag.starts_with('!') {
                open.push(tag.split_whitespace().next().unwrap_or(""));
            }
            rest = &rest[j + 1..];
        }
        assert!(open.is_empty(), "{n}.svg: unclosed {open:?}");
    }
    // each figure is drawn into a hidden partial file and renamed: none is left behind
    let partial: Vec<_> = std::fs::read_dir(dir)
        .unwrap()
        .filter_map(|e| e.ok())
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|f| f.contains(".partial"))
        .collect();
    assert!(partial.is_empty(), "left behind: {partial:?}");
    names
}

/// `infall` and `plot` on a store find the run's observed sample from any working directory:
/// the store records the directory of the run's configuration, against which the stored
/// relative paths are resolved (they used to stop with "run.sample ... file not found"
/// unless started from that directory). A sample found only next to the store is used with a
/// note naming it; one found nowhere is reported and the tests that need it are skipped.
#[test]
fn retest_a_store_from_anywhere() {
    let d = tempfile::tempdir().unwrap();
    let cfg_text = TINY.replace("[run]\n", "[run]\nsample = \"sample.csv\"\n");
    let cfg = write(d.path(), "tiny.toml", &cfg_text);
    let sample_text = "id,mstar_msun,r_gc_kpc,v_r_kms,t_quench_lookback_gyr,t_quench_err_gyr\n\
                       A,3e5,60,10,11,1\nB,1e6,90,-20,10,1\nC,2e5,120,5,12,0.5\n";
    let sample = write(d.path(), "sample.csv", sample_text);
    let runs = d.path().join("runs");
    std::fs::create_dir_all(&runs).unwrap();
    let store = runs.join("out.h5");
    let out = run_ok(&[
        "run",
        cfg.to_str().unwrap(),
        "--out",
        store.to_str().unwrap(),
    ]);
    // with a sample every figure is drawn, each as PNG and SVG
    let names = check_listed_figures(&out, &runs.join("out-report"));
    assert_eq!(
        names,
        [
            "all_of_n_vs_redshift",
            "all_of_n_vs_lookback",
            "fraction_of_n",
            "quenching_delay",
            "phase_space_matches",
            "infall_times",
            "pericentres",
            "subhalo_mass_function",
            "radial_distribution",
            "backsplash_shells",
            "dependence_on_host_mass",
            // two host masses: the cells overlaid
            "all_of_n_by_cell",
        ],
        "{out}"
    );
    // the working directory of the tests is the crate, neither the store's nor the config's
    let (code, out, err) = run_cli(&["infall", store.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("largest quenching delay"), "{out}");
    // a --config that changes only the tests keeps the run's own sample (it overlays only
    // the keys it gives)
    let tests_only = write(
        d.path(),
        "tests-only.toml",
        "[tests]\ndraws = 500\nbootstrap = 50\n",
    );
    let (code, out, err) = run_cli(&[
        "infall",
        store.to_str().unwrap(),
        "--config",
        tests_only.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("largest quenching delay"), "{out}");
    // no note from the sample reader (the run's n_draw differs from this sample: that note)
    assert!(
        !err.lines()
            .any(|l| l.starts_with("note:") && !l.contains("tests.n_draw")),
        "{err}"
    );
    let figs = d.path().join("figs");
    let (code, out, err) = run_cli(&[
        "plot",
        store.to_str().unwrap(),
        "--out",
        figs.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("all_of_n_vs_redshift.png"), "{out}");
    // `plot` prints every file it wrote: both forms of each figure
    for n in &names {
        for ext in ["png", "svg"] {
            let p = figs.join(format!("{n}.{ext}"));
            assert!(out.lines().any(|l| Path::new(l) == p), "{n}.{ext}: {out}");
            assert!(
                std::fs::metadata(&p).unwrap().len() > 3000,
                "{}",
                p.display()
            );
        }
    }
    // the sample moved next to the store: used, with a note naming it
    std::fs::rename(&sample, runs.join("sample.csv")).unwrap();
    let (code, out, err) = run_cli(&["infall", store.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(err.contains("note: using the observed sample"), "{err}");
    assert!(err.contains("runs"), "{err}");
    assert!(out.contains("largest quenching delay"), "{out}");
    // and gone: a note, and the sample tests are skipped
    std::fs::remove_file(runs.join("sample.csv")).unwrap();
    let (code, out, err) = run_cli(&["infall", store.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(
        err.contains("note: the run's observed sample (sample.csv) is not at"),
        "{err}"
    );
    assert!(!out.contains("largest quenching delay"), "{out}");
    // a sample given on the command line: no note about the run's own
    let mine = write(d.path(), "mine.csv", sample_text);
    let (code, out, err) = run_cli(&[
        "infall",
        store.to_str().unwrap(),
        "--sample",
        mine.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(!err.contains("note:"), "{err}");
    assert!(out.contains("largest quenching delay"), "{out}");
    // re-tested without a sample into the run's report directory, which holds the sample's
    // tables and figures: those go (they belonged to the earlier report), the rest is new,
    // and a file of the user's own there is left alone
    let rep = runs.join("out-report");
    assert!(rep.join("quenching_delay.csv").is_file());
    write(&rep, "my-notes.txt", "mine");
    let (code, _, err) = run_cli(&[
        "infall",
        store.to_str().unwrap(),
        "--out",
        rep.to_str().unwrap(),
        "--overwrite",
    ]);
    assert_eq!(code, 0, "{err}");
    for gone in [
        "quenching_delay.csv",
        "phase_space_matches.csv",
        "quenching_delay.png",
        "quenching_delay.svg",
        "phase_space_matches.png",
    ] {
        assert!(
            !rep.join(gone).exists(),
            "{gone} left from the earlier report"
        );
    }
    for kept in [
        "all_of_n.csv",
        "report.md",
        "infall_times.png",
        "my-notes.txt",
    ] {
        assert!(rep.join(kept).is_file(), "{kept}");
    }
}

/// `infall --config` takes only the [tests] and [galaxies] tables from the new file: the
/// cosmologies stay those the store was made with, so a sweep store can be re-tested with a
/// configuration that lists a single cosmology (it used to stop with "host 2 belongs to
/// cosmology index 1").
#[test]
fn retest_a_sweep_with_other_tests() {
    let d = tempfile::tempdir().unwrap();
    let sweep = TINY
        .replace(
            "[cosmology]\npreset = \"planck18\"",
            "[[cosmology]]\npreset = \"planck18\"\n\n[[cosmology]]\npreset = \"wmap9\"",
        )
        .replace("hosts_per_cell = 3", "hosts_per_cell = 2")
        .replace("mass_msun = [8e11, 1.2e12]", "mass_msun = 1.2e12");
    let cfg = write(d.path(), "sweep.toml", &sweep);
    let store = d.path().join("sweep.h5");
    run_ok(&[
        "run",
        cfg.to_str().unwrap(),
        "--out",
        store.to_str().unwrap(),
    ]);
    let other = write(
        d.path(),
        "other.toml",
        &TINY.replace("n_draw = 3", "n_draw = 2"),
    );
    let (code, out, err) = run_cli(&[
        "infall",
        store.to_str().unwrap(),
        "--config",
        other.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("P(all 2 fell in before z)"), "{out}");
    // a file with nothing but the [tests] table will do
    let tests_only = write(
        d.path(),
        "tests-only.toml",
        "[tests]\nn_draw = 4\ndraws = 500\nbootstrap = 50\nn_range = [3, 4]\nz_grid = [0.0, 1.0]\n",
    );
    let (code, out, err) = run_cli(&[
        "infall",
        store.to_str().unwrap(),
        "--config",
        tests_only.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("P(all 4 fell in before z)"), "{out}");
    // and its problems are named (a misspelt table, a value out of range)
    let bad = write(
        d.path(),
        "bad-tests.toml",
        "[test]\nn_draw = 4\n[tests]\ndraws = 5\n",
    );
    let (code, _, err) = run_cli(&[
        "infall",
        store.to_str().unwrap(),
        "--config",
        bad.to_str().unwrap(),
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("test = (table)") && err.contains("tests.draws"),
        "{err}"
    );
    // a misspelt key of [run] is refused as `run` refuses it (it was ignored, and the
    // store's own sample used; review of 2026-12-04)
    let misspelt = write(d.path(), "misspelt.toml", "[run]\nsampel = \"s.csv\"\n");
    let (code, _, err) = run_cli(&[
        "infall",
        store.to_str().unwrap(),
        "--config",
        misspelt.to_str().unwrap(),
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("run.sampel") && err.contains("unknown key"),
        "{err}"
    );
    // FILE's [tests.preprocessing] replaces the stored one whole: a stellar-mass threshold
    // is taken (it met the stored halo-mass default and was refused), an empty table is not
    let stellar = write(
        d.path(),
        "stellar.toml",
        "[tests.preprocessing]\nstellar_mass_msun = 1e7\n",
    );
    let (code, _, err) = run_cli(&[
        "infall",
        store.to_str().unwrap(),
        "--config",
        stellar.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    let empty = write(d.path(), "empty-pre.toml", "[tests.preprocessing]\n");
    let (code, _, err) = run_cli(&[
        "infall",
        store.to_str().unwrap(),
        "--config",
        empty.to_str().unwrap(),
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("tests.preprocessing"), "{err}");
    // a sample given with --sample replaces the file's, which then need not exist
    let gone = write(
        d.path(),
        "gone-sample.toml",
        "[run]\nsample = \"nowhere.csv\"\n[tests]\nn_draw = 2\ndraws = 500\nbootstrap = 50\nn_range = [3, 4]\nz_grid = [0.0, 1.0]\n",
    );
    let sample = write(
        d.path(),
        "s.csv",
        "id,mstar_msun,r_gc_kpc,v_r_kms,t_quench_lookback_gyr,t_quench_err_gyr\nA,1e6,50,10,8,1\nB,1e6,80,-20,10,1\n",
    );
    let (code, _, err) = run_cli(&[
        "infall",
        store.to_str().unwrap(),
        "--config",
        gone.to_str().unwrap(),
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("run.sample"), "{err}");
    let (code, _, err) = run_cli(&[
        "infall",
        store.to_str().unwrap(),
        "--config",
        gone.to_str().unwrap(),
        "--sample",
        sample.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
}

/// `check` warns (on stderr, exit 0) when the trees' resolution cuts into the haloes that
/// host galaxies, as the Milky-Way configuration does with the occupation by peak mass (erf),
/// and not when it is well below.
#[test]
fn check_warns_about_unresolved_galaxies() {
    let d = tempfile::tempdir().unwrap();
    let base = std::fs::read_to_string(
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("configs/milky-way.toml"),
    )
    .unwrap()
    .replace("occupation = \"reionization\"", "occupation = \"erf\"");
    let p = write(d.path(), "mw.toml", &base);
    let (code, _, err) = run_cli(&["check", p.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(
        err.contains("warning: trees.resolution_msun") && err.contains("incomplete"),
        "{err}"
    );
    let fine = base.replace(
        "resolution_msun = 31622776.60168379",
        "resolution_msun = 5e6",
    );
    assert_ne!(fine, base);
    let p = write(d.path(), "fine.toml", &fine);
    let (code, _, err) = run_cli(&["check", p.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(!err.contains("warning"), "{err}");
}

/// One writer per store (issue: two `infall` runs on one store corrupted its analysis group;
/// two `run --resume` on one output published a partial store). While another process holds
/// a store's lock, `infall` on it and `run --resume` into it stop at once with a message that
/// names the holder and change nothing; once the lock is released both work, and the lock
/// file is gone.
#[test]
fn one_writer_per_store() {
    use retinue::io::lock::{lock_path, WriterLock};
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "tiny.toml", TINY);
    let store = d.path().join("s.h5");
    run_ok(&[
        "run",
        cfg.to_str().unwrap(),
        "--out",
        store.to_str().unwrap(),
    ]);
    let before = std::fs::read(&store).unwrap();
    // another writer holds the store (this test process stands for it)
    let held = WriterLock::acquire(&store, "retinue infall").unwrap();
    let (code, _, err) = run_cli(&["infall", store.to_str().unwrap()]);
    assert_ne!(code, 0, "{err}");
    assert!(
        err.contains("another process is writing it")
            && err.contains(&format!("retinue infall, process {}", std::process::id())),
        "{err}"
    );
    // a second run into an output another process is writing (its parts included)
    let other = d.path().join("t.h5");
    let held_t = WriterLock::acquire(&other, "retinue run").unwrap();
    let (code, _, err) = run_cli(&[
        "run",
        cfg.to_str().unwrap(),
        "--out",
        other.to_str().unwrap(),
        "--resume",
    ]);
    assert_ne!(code, 0, "{err}");
    assert!(err.contains("another process is writing it"), "{err}");
    assert!(!other.exists() && !d.path().join(".t.h5.parts").exists());
    drop(held_t);
    assert_eq!(std::fs::read(&store).unwrap(), before, "the store changed");
    drop(held);
    assert!(!lock_path(&store).exists());
    run_ok(&["infall", store.to_str().unwrap()]);
    assert!(
        !lock_path(&store).exists(),
        "a finished writer leaves no lock file"
    );
}

/// Readers check that a store is complete (issue: a partial store whose `n_hosts_total` said 40
/// while it held 16 hosts was accepted by `infall` and `merge`): a store that claims more hosts
/// than it holds is refused by both, naming what is missing; the complete one is accepted.
#[test]
fn incomplete_stores_are_refused() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "tiny.toml", TINY);
    let store = d.path().join("s.h5");
    run_ok(&[
        "run",
        cfg.to_str().unwrap(),
        "--out",
        store.to_str().unwrap(),
    ]);
    let n: u64 = {
        let f = hdf5::File::open(&store).unwrap();
        f.attr("n_hosts_total").unwrap().read_scalar().unwrap()
    };
    {
        let f = hdf5::File::open_rw(&store).unwrap();
        f.attr("n_hosts_total")
            .unwrap()
            .write_scalar(&(n + 3))
            .unwrap();
    }
    let (code, _, err) = run_cli(&["infall", store.to_str().unwrap()]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("incomplete or damaged store")
            && err.contains(&format!("missing: {}, {}, {}", n, n + 1, n + 2)),
        "{err}"
    );
    let out = d.path().join("m.h5");
    let (code, _, err) = run_cli(&[
        "merge",
        store.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_ne!(code, 0, "{err}");
    assert!(err.contains("incomplete or damaged store"), "{err}");
    assert!(!out.exists());
    {
        let f = hdf5::File::open_rw(&store).unwrap();
        f.attr("n_hosts_total").unwrap().write_scalar(&n).unwrap();
    }
    run_ok(&["infall", store.to_str().unwrap()]);
}

/// Inputs are never overwritten (issue: `run --out` onto the run's own configuration or
/// sample, `merge --out` onto a shard, `demo` over a user's sample.csv each replaced the file):
/// an output that is one of the inputs is refused, an existing file that is not a store of this
/// tool is replaced only with --overwrite, and an existing store only with --overwrite; the
/// demo replaces only its own earlier files. Each refusal leaves the file as it was.
#[test]
fn outputs_never_replace_inputs_or_foreign_files() {
    let d = tempfile::tempdir().unwrap();
    let sample = write(d.path(), "sample.csv", "my own data\n");
    let cfg_text = TINY.to_string();
    let cfg = write(d.path(), "tiny.toml", &cfg_text);
    let refuse = |args: &[&str], file: &Path, what: &str| {
        let before = std::fs::read(file).unwrap();
        let (code, _, err) = run_cli(args);
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(err.contains(what), "{args:?}: {err}");
        assert_eq!(
            std::fs::read(file).unwrap(),
            before,
            "{args:?} changed {file:?}"
        );
    };
    // the run's own configuration as its output
    refuse(
        &["run", cfg.to_str().unwrap(), "--out", cfg.to_str().unwrap()],
        &cfg,
        "is one of the inputs",
    );
    // a file that is not a store
    refuse(
        &[
            "run",
            cfg.to_str().unwrap(),
            "--out",
            sample.to_str().unwrap(),
        ],
        &sample,
        "exists and is not a retinue store",
    );
    // an existing store: only with --overwrite
    let s1 = d.path().join("s1.h5");
    run_ok(&["run", cfg.to_str().unwrap(), "--out", s1.to_str().unwrap()]);
    refuse(
        &["run", cfg.to_str().unwrap(), "--out", s1.to_str().unwrap()],
        &s1,
        "already exists",
    );
    run_ok(&[
        "run",
        cfg.to_str().unwrap(),
        "--out",
        s1.to_str().unwrap(),
        "--overwrite",
    ]);
    // a merge onto one of its shards
    refuse(
        &["merge", s1.to_str().unwrap(), "--out", s1.to_str().unwrap()],
        &s1,
        "is one of the inputs",
    );
    // the demo over a user's own sample.csv; its own earlier files are fine
    let demo_dir = d.path().join("demo");
    std::fs::create_dir(&demo_dir).unwrap();
    let mine = write(&demo_dir, "sample.csv", "my own data\n");
    refuse(
        &["demo", "--out", demo_dir.to_str().unwrap()],
        &mine,
        "is not the demo's",
    );
    // an output that is a directory, empty, "." or ends in '/' is refused before the first host
    // (issue 18, item 6: they failed after synthesis with raw OS errors, leaving hidden files)
    let listing = || dir_names(d.path());
    let before = listing();
    let trailing = format!("{}/", d.path().join("newdir").display());
    for bad in [d.path().to_str().unwrap(), ".", trailing.as_str()] {
        let (code, _, err) = run_cli(&["run", cfg.to_str().unwrap(), "--out", bad]);
        assert_eq!(code, 2, "{bad:?}: {err}");
        assert!(err.contains("is a directory"), "{bad:?}: {err}");
        assert_eq!(listing(), before, "{bad:?} left files behind");
    }
    // an empty run.output in the configuration (clap itself refuses an empty --out)
    let sub = d.path().join("empty-output");
    std::fs::create_dir(&sub).unwrap();
    let c2 = write(
        &sub,
        "e.toml",
        &cfg_text.replace("output = \"tiny.h5\"", "output = \"\""),
    );
    let (code, _, err) = run_cli(&["run", c2.to_str().unwrap()]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("output"), "{err}");
    assert_eq!(
        std::fs::read_dir(&sub).unwrap().count(),
        1,
        "files left behind"
    );
}

/// A sweep answers per cell: two cosmologies (one labelled) x two host masses. Every table
/// leads with the cell's columns and holds the pooled rows (`all,all`) and each cell's rows;
/// the report compares the cells side by side; each cell's all-of-N equals a run of that cell
/// alone; `--cell` tests a subset, and a spec that matches nothing names the cells there are.
#[test]
fn sweeps_answer_per_cell() {
    let d = tempfile::tempdir().unwrap();
    let sweep = TINY
        .replace(
            "[cosmology]\npreset = \"planck18\"",
            "[[cosmology]]\npreset = \"planck18\"\n\n[[cosmology]]\nlabel = \"low s8\"\npreset = \"planck18\"\nsigma8 = 0.74",
        )
        .replace("hosts_per_cell = 3", "hosts_per_cell = 2");
    let cfg = write(d.path(), "sweep.toml", &sweep);
    let store = d.path().join("sweep.h5");
    run_ok(&[
        "run",
        cfg.to_str().unwrap(),
        "--out",
        store.to_str().unwrap(),
    ]);
    let rep = d.path().join("sweep-report");
    let all = std::fs::read_to_string(rep.join("all_of_n.csv")).unwrap();
    let head = all.lines().next().unwrap();
    assert!(
        head.starts_with("cosmology,host_mass_msun,clock,n,z,"),
        "{head}"
    );
    for cell in [
        "all,all,",
        "planck18,8e11,",
        "planck18,1.2e12,",
        "low s8,8e11,",
        "low s8,1.2e12,",
    ] {
        assert!(
            all.lines().any(|l| l.starts_with(cell)),
            "{cell} missing:\n{all}"
        );
    }
    // the last column counts the hosts of each row: a host is in one cell, so the pooled
    // row's count is the sum of the cells' counts (clock and z alike), none above a cell's 2
    assert!(head.ends_with(",exact_mean,hosts"), "{head}");
    let hosts_of = |prefix: &str, clock_z: &str| -> Vec<u64> {
        all.lines()
            .filter(|l| l.starts_with(prefix))
            .filter(|l| l.split(',').skip(2).take(3).collect::<Vec<_>>().join(",") == clock_z)
            .map(|l| l.rsplit(',').next().unwrap().parse().unwrap())
            .collect()
    };
    for clock_z in ["first_host_infall,3,1", "preprocessing,3,0.5"] {
        let at = |cell: &str| hosts_of(cell, clock_z);
        let pooled = at("all,all,");
        let cells: Vec<u64> = [
            "planck18,8e11,",
            "planck18,1.2e12,",
            "low s8,8e11,",
            "low s8,1.2e12,",
        ]
        .iter()
        .flat_map(|c| at(c))
        .collect();
        assert_eq!((pooled.len(), cells.len()), (1, 4), "{clock_z}\n{all}");
        assert_eq!(pooled[0], cells.iter().sum::<u64>(), "{clock_z}\n{all}");
        assert!(pooled[0] > 0, "{clock_z}\n{all}");
        assert!(cells.iter().all(|&h| h <= 2), "{cells:?}");
    }
    // the store's analysis holds the same counts: the pooled first-infall curve (z = 1 is the
    // third point of z_grid) and the backsplash range (the last row of backsplash.csv)
    {
        let f = hdf5::File::open(&store).unwrap();
        let curve: Vec<u64> = f
            .dataset("analysis/run/all_of_n/first_host_infall/hosts")
            .unwrap()
            .read_raw()
            .unwrap();
        assert_eq!(curve[2], hosts_of("all,all,", "first_host_infall,3,1")[0]);
        let bs = std::fs::read_to_string(rep.join("backsplash.csv")).unwrap();
        let pooled_range: u64 = bs
            .lines()
            .rfind(|l| l.starts_with("all,all,"))
            .unwrap()
            .rsplit(',')
            .next()
            .unwrap()
            .parse()
            .unwrap();
        let attr: u64 = f
            .group("analysis/run/backsplash")
            .unwrap()
            .attr("hosts")
            .unwrap()
            .read_scalar()
            .unwrap();
        assert_eq!(attr, pooled_range);
        let shells: Vec<u64> = f
            .dataset("analysis/run/backsplash/shell_hosts")
            .unwrap()
            .read_raw()
            .unwrap();
        assert!(
            !shells.is_empty() && shells.iter().all(|&h| h <= 8),
            "{shells:?}"
        );
    }
    for t in ["fraction_of_n.csv", "backsplash.csv", "dependence.csv"] {
        let text = std::fs::read_to_string(rep.join(t)).unwrap();
        assert!(text.starts_with("cosmology,host_mass_msun,"), "{t}: {text}");
        assert!(text.contains("low s8,1.2e12,"), "{t}: {text}");
    }
    let md = std::fs::read_to_string(rep.join("report.md")).unwrap();
    assert!(md.contains("## Comparison of the grid's cells"), "{md}");
    assert!(
        md.contains("The last column of `all_of_n.csv`")
            && md.contains("`hosts`, counts the hosts"),
        "{md}"
    );
    // the cells overlaid in figures, named by their labels
    for fig in ["all_of_n_by_cell.svg", "dependence_on_host_mass.svg"] {
        let svg = std::fs::read_to_string(rep.join(fig)).unwrap();
        assert!(svg.contains("low s8"), "{fig} does not name the cell");
    }
    // every cell has 2 hosts: drawn open, and the legend says why
    let svg = std::fs::read_to_string(rep.join("dependence_on_host_mass.svg")).unwrap();
    assert!(
        svg.contains("open: fewer than 5 hosts (no interval)"),
        "few-host cells not marked"
    );
    assert!(md.contains("4 cells, 8 hosts"), "{md}");
    // a cell where fewer than half of the hosts (2 each) have N candidates is marked ‡, with
    // the footnote, and no other cell is: N = 3 (every cell rich enough here) and N = 15 (the
    // 8e11 Msun cells have about 10-13 candidates a host)
    let marked_cells = |md: &str, all: &str, n: u64| -> usize {
        let mut marked = 0;
        for (cos, mass) in [
            ("planck18", "8e11"),
            ("planck18", "1.2e12"),
            ("low s8", "8e11"),
            ("low s8", "1.2e12"),
        ] {
            let rich: u64 = all
                .lines()
                .find(|l| l.starts_with(&format!("{cos},{mass},first_host_infall,{n},1,")))
                .map(|l| l.rsplit(',').next().unwrap().parse().unwrap())
                .unwrap();
            let row = md
                .lines()
                .find(|l| l.starts_with(&format!("| {cos} | {mass} | 2 |")))
                .unwrap();
            assert_eq!(row.contains(" ‡ |"), 2 * rich < 2, "N = {n}, {rich}: {row}");
            marked += usize::from(2 * rich < 2);
        }
        let note = "‡ Fewer than half of this cell's hosts have N = ";
        assert_eq!(md.contains(note), marked > 0, "{md}");
        marked
    };
    assert_eq!(marked_cells(&md, &all, 3), 0);
    let retest = write(
        d.path(),
        "n15.toml",
        "[tests]\nn_draw = 15\ndraws = 500\nbootstrap = 50\nn_range = [3, 4]\n\
         z_grid = [0.0, 0.5, 1.0, 2.0]\n",
    );
    let rep15 = d.path().join("n15-report");
    run_ok(&[
        "infall",
        store.to_str().unwrap(),
        "--config",
        retest.to_str().unwrap(),
        "--out",
        rep15.to_str().unwrap(),
    ]);
    let md15 = std::fs::read_to_string(rep15.join("report.md")).unwrap();
    let all15 = std::fs::read_to_string(rep15.join("all_of_n.csv")).unwrap();
    assert!(marked_cells(&md15, &all15, 15) > 0, "{md15}");
    assert!(md.contains("| low s8 | 8e11 | 2 |"), "{md}");
    // the per-cell rows equal a test of that cell alone (first clock, exact mean column)
    let row = |text: &str, cell: &str| -> Vec<String> {
        text.lines()
            .filter(|l| l.starts_with(cell))
            .map(|l| l.splitn(3, ',').nth(2).unwrap().to_string())
            .collect()
    };
    let per_cell = row(&all, "low s8,1.2e12,");
    let (code, _, err) = crate::common::run_cli(&[
        "infall",
        store.to_str().unwrap(),
        "--cell",
        "cosmology=low s8,mass=1.2e12",
        "--out",
        rep.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    let alone = std::fs::read_to_string(rep.join("all_of_n.csv")).unwrap();
    assert_eq!(row(&alone, "low s8,1.2e12,"), per_cell, "{alone}");
    assert!(
        !alone.contains("all,all,"),
        "one cell: no pooled rows\n{alone}"
    );
    let md = std::fs::read_to_string(rep.join("report.md")).unwrap();
    assert!(md.contains("Only the selected cells are tested"), "{md}");
    // two specs select a union; a spec matching nothing names what there is
    run_ok(&[
        "infall",
        store.to_str().unwrap(),
        "--cell",
        "mass=8e11",
        "--cell",
        "cosmology=planck18,mass=1.2e12",
        "--out",
        rep.to_str().unwrap(),
    ]);
    let three = std::fs::read_to_string(rep.join("all_of_n.csv")).unwrap();
    assert!(three.contains("planck18,1.2e12,") && three.contains("low s8,8e11,"));
    assert!(!three.contains("low s8,1.2e12,"), "{three}");
    let (code, _, err) =
        crate::common::run_cli(&["infall", store.to_str().unwrap(), "--cell", "cosmology=wdm"]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("\"low s8\"") && err.contains("1.2e12"),
        "{err}"
    );
    assert_eq!(err.trim().lines().count(), 1, "{err}");
}

/// Re-testing never loses an earlier answer: each `infall` is stored under its own name
/// (`/analysis/NAME`, with the sample's rows and the tests' settings) and reported in its own
/// directory; a name is replaced only with --overwrite; `--out` chooses the directory; a set
/// n_draw that differs from the sample is said on the terminal and in the report; and a
/// partial [tests.selection] in --config changes only the keys it gives.
#[test]
fn retests_keep_every_analysis() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "tiny.toml", TINY);
    let store = d.path().join("s.h5");
    let st = store.to_str().unwrap();
    run_ok(&["run", cfg.to_str().unwrap(), "--out", st]);
    let sample = write(
        d.path(),
        "mine.csv",
        "id,mstar_msun,r_gc_kpc,v_r_kms,t_quench_lookback_gyr,t_quench_err_gyr\nA,1e6,50,10,8,1\nB,1e6,80,-20,10,1\n",
    );
    let sp = sample.to_str().unwrap();
    let (code, _, err) = run_cli(&["infall", st, "--sample", sp, "--name", "first"]);
    assert_eq!(code, 0, "{err}");
    // n_draw = 3 is set and the sample has 2 objects
    assert!(
        err.contains("tests.n_draw = 3") && err.contains("2 objects"),
        "{err}"
    );
    let rep1 = d.path().join("s-first-report");
    let md = std::fs::read_to_string(rep1.join("report.md")).unwrap();
    assert!(
        md.contains("Analysis `first`") && md.contains("mine.csv") && md.contains("(2 objects)"),
        "{md}"
    );
    assert!(md.contains("tests.n_draw = 3"), "{md}");
    // the same name again: refused (exit 2, one line), then replaced with --overwrite
    let (code, _, err) = run_cli(&["infall", st, "--sample", sp, "--name", "first"]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("\"first\"") && err.contains("--overwrite"),
        "{err}"
    );
    run_ok(&[
        "infall",
        st,
        "--sample",
        sp,
        "--name",
        "first",
        "--overwrite",
    ]);
    // default names never collide; --out chooses the directory
    let own = d.path().join("my-report");
    run_ok(&["infall", st, "--sample", sp, "--out", own.to_str().unwrap()]);
    assert!(own.join("report.md").is_file());
    run_ok(&["infall", st, "--sample", sp]);
    // a partial [tests.selection]: only its key changes; draws = 500 and n_draw = 3 stay
    let part = write(
        d.path(),
        "part.toml",
        "[tests.selection]\nr_over_rvir = [0.0, 0.5]\n",
    );
    let (code, out, err) = run_cli(&[
        "infall",
        st,
        "--config",
        part.to_str().unwrap(),
        "--name",
        "inner",
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("P(all 3 fell in before z)"), "{out}");
    let f = hdf5::File::open(&store).unwrap();
    let a = f.group("analysis").unwrap();
    let mut names: Vec<String> = a
        .groups()
        .unwrap()
        .iter()
        .map(|g| g.name().rsplit('/').next().unwrap().to_string())
        .collect();
    names.sort();
    assert_eq!(names.len(), 5, "{names:?}");
    assert!(names.contains(&"run".to_string()) && names.contains(&"first".to_string()));
    assert_eq!(
        names.iter().filter(|n| n.starts_with("mine-")).count(),
        2,
        "{names:?}"
    );
    let latest: hdf5::types::VarLenUnicode = a.attr("latest").unwrap().read_scalar().unwrap();
    assert_eq!(latest.as_str(), "inner");
    let ids: Vec<hdf5::types::VarLenUnicode> = f
        .dataset("analysis/first/sample/id")
        .unwrap()
        .read_raw()
        .unwrap();
    assert_eq!(
        ids.iter().map(|s| s.as_str()).collect::<Vec<_>>(),
        ["A", "B"]
    );
    let tests: hdf5::types::VarLenUnicode = f
        .group("analysis/inner")
        .unwrap()
        .attr("tests")
        .unwrap()
        .read_scalar()
        .unwrap();
    let t = tests.as_str();
    assert!(
        t.contains("draws = 500") && t.contains("r_over_rvir = [0.0, 0.5]"),
        "{t}"
    );
    assert!(t.contains("n_draw = 3"), "{t}");
    // a name that cannot name a group or a directory
    let (code, _, err) = run_cli(&["infall", st, "--name", "../x"]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("--name"), "{err}");
}

/// The demo answers both ways (issue: a newcomer could not tell a working tool from a broken
/// one when every answer was "none"): three host masses, the faint ancient sample cannot be
/// explained by infall into the host, the bright recent one can with a delay of a few Gyr;
/// both reports state their conclusion and the store keeps both analyses.
#[test]
fn demo_answers_both_ways() {
    let d = tempfile::tempdir().unwrap();
    let dir = d.path().join("demo");
    let out = run_ok(&["demo", "--out", dir.to_str().unwrap(), "--threads", "2"]);
    let (faint, bright) = out.split_once("== 2.").expect("two parts");
    let first = |text: &str| -> String {
        text.lines()
            .find(|l| l.contains("(first_host_infall):") && l.contains("excluded"))
            .unwrap_or_default()
            .to_string()
    };
    assert!(first(faint).contains("excluded by these mocks"), "{faint}");
    let b = first(bright);
    assert!(
        b.contains("not excluded") && b.contains("up to") && b.contains("bootstrap over hosts"),
        "{bright}"
    );
    // the delay found lies within the sample's quenching times (1.4-5.7 Gyr ago)
    let tau: f64 = b
        .split("up to ")
        .nth(1)
        .and_then(|r| r.split(' ').next())
        .and_then(|x| x.parse().ok())
        .unwrap();
    assert!(tau > 0.0 && tau < 6.0, "{b}");
    for rep in ["demo-report", "demo-bright-report"] {
        let md = std::fs::read_to_string(dir.join(rep).join("report.md")).unwrap();
        assert!(md.contains("## Conclusion"), "{rep}");
        assert!(md.contains("## Comparison of the grid's cells"), "{rep}");
        assert!(md.contains("3 cells, 144 hosts"), "{rep}");
    }
    let f = hdf5::File::open(dir.join("demo.h5")).unwrap();
    assert!(f.group("analysis/run/sample").is_ok());
    assert!(f.group("analysis/bright/sample").is_ok());
}

/// `retinue export`: the subhalo table joined with its hosts as CSV, every row of the store
/// once with the store's values exactly (shortest round-trip decimals), a cell at a time with
/// `--cell`, and an existing file replaced only with --overwrite.
#[test]
fn export_writes_the_subhalo_table_as_csv() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "tiny.toml", TINY);
    let store = d.path().join("s.h5");
    let st = store.to_str().unwrap();
    run_ok(&["run", cfg.to_str().unwrap(), "--out", st]);
    let out = d.path().join("subs.csv");
    run_ok(&["export", st, "--out", out.to_str().unwrap()]);
    let f = hdf5::File::open(&store).unwrap();
    let m_bound: Vec<f64> = f
        .dataset("subhalos/m_bound_msun")
        .unwrap()
        .read_raw()
        .unwrap();
    let status: Vec<f64> = f.dataset("subhalos/status").unwrap().read_raw().unwrap();
    let mass_bin: Vec<f64> = f.dataset("hosts/mass_bin").unwrap().read_raw().unwrap();
    let counts: Vec<f64> = f.dataset("hosts/sub_count").unwrap().read_raw().unwrap();
    let mut r = csv::Reader::from_path(&out).unwrap();
    let head = r.headers().unwrap().clone();
    assert_eq!(&head[0], "cosmology");
    assert_eq!(&head[1], "host_mass_msun");
    assert_eq!(&head[2], "host_index");
    let col = |n: &str| head.iter().position(|h| h == n).unwrap();
    let (im, is, ih) = (col("m_bound_msun"), col("status"), col("host_mass_bin"));
    let rows: Vec<csv::StringRecord> = r.records().map(|x| x.unwrap()).collect();
    assert_eq!(rows.len(), m_bound.len());
    for (k, row) in rows.iter().enumerate() {
        let v: f64 = row[im].parse().unwrap();
        assert!(
            v == m_bound[k] || (v.is_nan() && m_bound[k].is_nan()),
            "row {k}"
        );
        assert_eq!(row[is].parse::<f64>().unwrap(), status[k]);
    }
    assert!(rows.iter().all(|r| &r[0] == "planck18"));
    assert!(rows.iter().any(|r| &r[1] == "8e11") && rows.iter().any(|r| &r[1] == "1.2e12"));
    // one cell
    let (code, _, err) = run_cli(&[
        "export",
        st,
        "--out",
        out.to_str().unwrap(),
        "--cell",
        "mass=8e11",
    ]);
    assert_eq!(code, 2, "an existing file needs --overwrite: {err}");
    assert!(err.contains("--overwrite"), "{err}");
    run_ok(&[
        "export",
        st,
        "--out",
        out.to_str().unwrap(),
        "--cell",
        "mass=8e11",
        "--overwrite",
    ]);
    let want: f64 = (0..counts.len())
        .filter(|&h| mass_bin[h] == 0.0)
        .map(|h| counts[h])
        .sum();
    let mut r = csv::Reader::from_path(&out).unwrap();
    let rows: Vec<csv::StringRecord> = r.records().map(|x| x.unwrap()).collect();
    assert_eq!(rows.len() as f64, want);
    assert!(rows.iter().all(|r| &r[1] == "8e11" && &r[ih] == "0"));
}

/// Today's disc and bulge follow the host's mass (`host.baryons_scale_with_mass`, default):
/// the configured values describe a host of `baryons_reference_mass_msun` (1.2e12 Msun), which
/// keeps them exactly; a host of 8e11 or 2e12 Msun gets them times M*(M)/M*(1.2e12) of the
/// Behroozi et al. 2013 relation at z = 0: 0.6741 and 1.4418 (the relation's eq. 3 evaluated
/// separately with Python's math module; `galaxies::behroozi13`'s own values are checked
/// against the physics reference sheet), to 1e-4; the scale lengths stay. With the key off
/// every host has the same disc.
#[test]
fn disc_and_bulge_scale_with_host_mass() {
    use retinue::config::RunConfig;
    use retinue::rng::HostId;
    use retinue::run::Grid;
    let text = TINY.replace(
        "mass_msun = [8e11, 1.2e12]",
        "mass_msun = [8e11, 1.2e12, 2e12]",
    );
    let grid = Grid::new(RunConfig::parse_str(&text, None).unwrap()).unwrap();
    let disc = |g: &Grid, bin: u16| g.options(HostId::new(0, bin, 0)).host.baryons;
    assert_eq!(disc(&grid, 1).disc_mass_msun, 6.8e10);
    assert_eq!(disc(&grid, 1).bulge_mass_msun, 5e9);
    for (bin, want) in [(0u16, 0.6741), (2, 1.4418)] {
        let b = disc(&grid, bin);
        assert!(
            (b.disc_mass_msun / 6.8e10 / want - 1.0).abs() < 1e-4,
            "bin {bin}: {}",
            b.disc_mass_msun
        );
        assert!((b.bulge_mass_msun / 5e9 / want - 1.0).abs() < 1e-4);
        assert_eq!((b.disc_a_kpc, b.disc_b_kpc), (3.0, 0.28));
    }
    let off = TINY
        .replace(
            "mass_msun = [8e11, 1.2e12]",
            "mass_msun = [8e11, 1.2e12, 2e12]",
        )
        .replace("[host]", "[host]\nbaryons_scale_with_mass = false");
    let grid_off = Grid::new(RunConfig::parse_str(&off, None).unwrap()).unwrap();
    for bin in 0..3u16 {
        assert_eq!(disc(&grid_off, bin).disc_mass_msun, 6.8e10);
    }
}

/// A run with a warm-dark-matter cosmology says in its report's caveats what the suppression
/// near the half-mode mass rests on (docs/validation.md: matched to Schneider et al. 2012's
/// halo-level fit, about twice Lovell et al. 2014's subhalo fit), naming the WDM cosmology
/// and not the cold one, also when one warm cell is tested alone; a cold-dark-matter cell
/// tested alone has no such caveat.
#[test]
fn warm_dark_matter_runs_carry_their_caveat() {
    let d = tempfile::tempdir().unwrap();
    let sweep = TINY
        .replace(
            "[cosmology]\npreset = \"planck18\"",
            "[[cosmology]]\nlabel = \"cold\"\npreset = \"planck18\"\nfilter = \"sharp-k\"\n\n\
             [[cosmology]]\nlabel = \"warm\"\npreset = \"planck18\"\nfilter = \"sharp-k\"\nm_wdm_kev = 3.0",
        )
        .replace("hosts_per_cell = 3", "hosts_per_cell = 1");
    let cfg = write(d.path(), "wdm.toml", &sweep);
    let store = d.path().join("wdm.h5");
    run_ok(&[
        "run",
        cfg.to_str().unwrap(),
        "--out",
        store.to_str().unwrap(),
    ]);
    let md = std::fs::read_to_string(d.path().join("wdm-report/report.md")).unwrap();
    let caveat = md
        .lines()
        .find(|l| l.starts_with("- Warm dark matter"))
        .unwrap_or_else(|| panic!("no warm-dark-matter caveat:\n{md}"));
    assert!(caveat.contains("(warm: 3 keV)"), "{caveat}");
    assert!(!caveat.contains("cold:"), "{caveat}");
    assert!(caveat.contains("Schneider et al. 2012") && caveat.contains("Lovell et al. 2014"));
    // the subhalo mass function figure has a line per cosmology beside the pooled one
    // (walkthrough: the pooled curve hid the suppression): its data, cosmology by cosmology,
    // add up to the pooled data, and the warm cosmology has fewer small subhaloes
    let cosmo = retinue::Cosmology::from_preset("planck18").unwrap();
    let (_, fig) = retinue::stats::compact::compact_from_store(
        &store,
        &retinue::stats::TestOptions::default(),
        None,
        &[&cosmo, &cosmo],
        &retinue::galaxies::GalaxyOptions::default(),
        1,
    )
    .unwrap();
    let per = &fig.log_mass_ratio_by_cosmology;
    assert_eq!(per.iter().map(|p| p.1).collect::<Vec<_>>(), vec![2, 2]);
    let total = |b: &retinue::stats::intervals::Binned| b.counts.iter().sum::<f64>();
    assert_eq!(
        total(&per[0].0) + total(&per[1].0),
        total(&fig.log_mass_ratio)
    );
    assert!(total(&per[1].0) < total(&per[0].0), "warm {:?}", per);
    // one cell tested alone (`--cell`), reported under its own name
    let alone = |spec: &str, name: &str| -> String {
        let (code, _, err) = run_cli(&[
            "infall",
            store.to_str().unwrap(),
            "--cell",
            spec,
            "--name",
            name,
        ]);
        assert_eq!(code, 0, "{err}");
        std::fs::read_to_string(d.path().join(format!("wdm-{name}-report/report.md"))).unwrap()
    };
    let cold = alone("cosmology=cold", "cold");
    assert!(!cold.contains("- Warm dark matter"), "{cold}");
    let warm = alone("cosmology=warm,mass=8e11", "warm");
    assert!(warm.contains("- Warm dark matter (warm: 3 keV)"), "{warm}");
}

/// The conclusion says what the delay test could not decide (review findings): a sample with
/// more objects than any host has candidates is "not tested" (it had read "cannot explain"),
/// and a delay still allowed at the end of the delay grid is a lower limit ("at least"), not an
/// upper one.
#[test]
fn conclusions_say_when_untested_or_unbounded() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "tiny.toml", TINY);
    let store = d.path().join("s.h5");
    let st = store.to_str().unwrap();
    run_ok(&["run", cfg.to_str().unwrap(), "--out", st]);
    // 400 objects: no host of this coarse run has that many candidates
    let mut many =
        String::from("id,mstar_msun,r_gc_kpc,v_r_kms,t_quench_lookback_gyr,t_quench_err_gyr\n");
    for i in 0..400 {
        many.push_str(&format!("O{i},1e6,50,10,8,1\n"));
    }
    let sample = write(d.path(), "many.csv", &many);
    let out = run_ok(&[
        "infall",
        st,
        "--sample",
        sample.to_str().unwrap(),
        "--name",
        "many",
    ]);
    let line = out
        .lines()
        .find(|l| l.starts_with("  - ") && l.contains("(first_host_infall):"))
        .unwrap_or_default();
    assert!(line.contains("not tested"), "{out}");
    assert!(!out.contains("excluded"), "{out}");
    let md = std::fs::read_to_string(d.path().join("s-many-report").join("report.md")).unwrap();
    assert!(
        md.contains("not tested: no host has as many candidates"),
        "{md}"
    );
    // two objects that stopped forming stars 0.1 Gyr ago, delays up to 1 Gyr: satellites fell
    // in long before, so every delay on the grid is allowed
    let recent = write(
        d.path(),
        "recent.csv",
        "id,mstar_msun,r_gc_kpc,v_r_kms,t_quench_lookback_gyr,t_quench_err_gyr\nA,1e6,50,10,0.1,0.05\nB,1e6,80,-20,0.1,0.05\n",
    );
    // the sample tested with delay grid `grid` as analysis `name`: the first-infall line of
    // the conclusion, and the whole output
    let with_grid = |name: &str, grid: &str| -> (String, String) {
        let tests = write(
            d.path(),
            &format!("{name}.toml"),
            &format!("[tests]\ndelay_grid_gyr = {grid}\n"),
        );
        let out = run_ok(&[
            "infall",
            st,
            "--sample",
            recent.to_str().unwrap(),
            "--config",
            tests.to_str().unwrap(),
            "--name",
            name,
        ]);
        let line = out
            .lines()
            .find(|l| l.starts_with("  - ") && l.contains("(first_host_infall):"))
            .unwrap_or_default()
            .to_string();
        (line, out)
    };
    let (line, out) = with_grid("recent", "[0.0, 0.5, 1.0]");
    assert!(
        line.contains("at least 1.00 Gyr, the end of the delay grid") && !line.contains("up to"),
        "{out}"
    );
    // a grid that does not start at 0 (review: "even with no delay" was printed although
    // P(0) was 0.175): the conclusion names the grid's smallest delay
    let (line, out) = with_grid("late", "[13.0, 13.5]");
    assert!(
        line.contains("excluded by these mocks")
            && line.contains("the smallest delay of the grid (`delay_grid_gyr`), 13.00 Gyr")
            && !line.contains("no delay"),
        "{out}"
    );
    // a [galaxies] key other than the store's would convert the sample with a model the mock
    // galaxies were not painted with: refused, both values named; the same value is fine
    let other = write(d.path(), "ml.toml", "[galaxies]\nmass_to_light_v = 3.5\n");
    let (code, _, err) = run_cli(&[
        "infall",
        st,
        "--sample",
        recent.to_str().unwrap(),
        "--config",
        other.to_str().unwrap(),
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("galaxies.mass_to_light_v")
            && err.contains("3.5")
            && err.contains("differs from the store's"),
        "{err}"
    );
    let same = write(d.path(), "same.toml", "[galaxies]\nmass_to_light_v = 2.0\n");
    run_ok(&[
        "infall",
        st,
        "--sample",
        recent.to_str().unwrap(),
        "--config",
        same.to_str().unwrap(),
        "--name",
        "same",
    ]);
}

/// A run started with `--overwrite` over a store of another configuration and killed part-way
/// can be resumed with `--resume --overwrite` (review: every combination of flags was refused,
/// the old store pointing to --overwrite and the parts to --resume); the result equals an
/// uninterrupted run.
#[test]
fn overwriting_run_killed_part_way_resumes() {
    let d = tempfile::tempdir().unwrap();
    let old = write(d.path(), "old.toml", TINY);
    let text = TINY
        .replace("master_seed = 11", "master_seed = 5")
        .replace("hosts_per_cell = 3", "hosts_per_cell = 12")
        .replace("batch_hosts = 2", "batch_hosts = 1");
    let new = write(d.path(), "new.toml", &text);
    let full = d.path().join("full.h5");
    run_ok(&[
        "run",
        new.to_str().unwrap(),
        "--threads",
        "1",
        "--out",
        full.to_str().unwrap(),
    ]);
    let out = d.path().join("s.h5");
    let o = out.to_str().unwrap();
    run_ok(&["run", old.to_str().unwrap(), "--out", o]);
    let child = std::process::Command::new(env!("CARGO_BIN_EXE_retinue"))
        .env("HDF5_USE_FILE_LOCKING", "FALSE")
        .args([
            "run",
            new.to_str().unwrap(),
            "--threads",
            "1",
            "--overwrite",
            "--out",
            o,
        ])
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .unwrap();
    let parts = d.path().join(".s.h5.parts");
    kill_once_parts_are_written(child, &parts, 2);
    assert!(parts.exists(), "killed before its parts were written");
    // the old store is still there until the new one is complete
    let (code, _, err) = run_cli(&["run", new.to_str().unwrap(), "--resume", "--out", o]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("--overwrite"), "{err}");
    run_ok(&[
        "run",
        new.to_str().unwrap(),
        "--resume",
        "--overwrite",
        "--out",
        o,
    ]);
    assert_eq!(store_tables(&full), store_tables(&out));
    assert!(!parts.exists());
}

/// `check` warns when a warm-dark-matter cosmology is grown with the top-hat filter (the
/// default filter; review: the report then said the trees followed the sharp-k excursion set),
/// and not with sharp-k.
#[test]
fn check_warns_about_warm_dark_matter_with_top_hat() {
    let d = tempfile::tempdir().unwrap();
    let warm = TINY.replace(
        "[cosmology]\npreset = \"planck18\"",
        "[cosmology]\npreset = \"planck18\"\nm_wdm_kev = 3.0",
    );
    assert_ne!(warm, TINY);
    let p = write(d.path(), "warm.toml", &warm);
    let (code, _, err) = run_cli(&["check", p.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(
        err.contains("warm dark matter with the top-hat filter") && err.contains("sharp-k"),
        "{err}"
    );
    let sharp = write(
        d.path(),
        "sharp.toml",
        &warm.replace("m_wdm_kev = 3.0", "m_wdm_kev = 3.0\nfilter = \"sharp-k\""),
    );
    let (code, _, err) = run_cli(&["check", sharp.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(!err.contains("top-hat filter"), "{err}");
    // the report's caveat names the filter the trees used (walkthrough: a top-hat run's
    // report said they followed the sharp-k excursion set)
    let store = d.path().join("warm.h5");
    run_ok(&["run", p.to_str().unwrap(), "--out", store.to_str().unwrap()]);
    let md = std::fs::read_to_string(d.path().join("warm-report").join("report.md")).unwrap();
    assert!(
        md.contains("- Warm dark matter through the top-hat filter (")
            && !md.contains("the trees follow the sharp-k excursion set"),
        "{md}"
    );
}

/// `infall` on a store named through a symbolic link writes the store the link points to and
/// leaves the link a link (review: the link was replaced by a full copy holding the new
/// analysis, while the store itself kept the old ones).
#[test]
fn infall_through_a_symlink_writes_the_store_itself() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "tiny.toml", TINY);
    let data = d.path().join("data");
    let home = d.path().join("home");
    std::fs::create_dir_all(&data).unwrap();
    std::fs::create_dir_all(&home).unwrap();
    let store = data.join("s.h5");
    run_ok(&[
        "run",
        cfg.to_str().unwrap(),
        "--out",
        store.to_str().unwrap(),
    ]);
    let link = home.join("run.h5");
    std::os::unix::fs::symlink(&store, &link).unwrap();
    run_ok(&["infall", link.to_str().unwrap(), "--name", "via-link"]);
    assert!(link.is_symlink(), "the link was replaced");
    let (names, _) = retinue::report::analyses_in(&store).unwrap();
    assert!(names.iter().any(|n| n == "via-link"), "{names:?}");
}

/// Hosts synthesised to another redshift (`host.z_final` > 0) are stored but not tested: the
/// tests read the satellites as observed today (infall clocks from the present age, field
/// counts at z = 0; review: they ran on such hosts and gave numbers several times off).
/// `check` warns, `run` writes the store and says why there is no report, `infall` refuses.
#[test]
fn hosts_at_another_redshift_are_stored_but_not_tested() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(
        d.path(),
        "high.toml",
        &TINY
            .replace("[host]", "[host]\nz_final = 0.5")
            .replace("hosts_per_cell = 3", "hosts_per_cell = 1"),
    );
    let c = cfg.to_str().unwrap();
    let (code, _, err) = run_cli(&["check", c]);
    assert_eq!(code, 0, "{err}");
    assert!(err.contains("host.z_final = 0.5"), "{err}");
    let store = d.path().join("high.h5");
    let s = store.to_str().unwrap();
    let (code, out, err) = run_cli(&["run", c, "--out", s]);
    assert_eq!(code, 0, "{err}");
    assert!(err.contains("not tested"), "{err}");
    assert!(!out.contains("report:"), "{out}");
    assert_eq!(dir_names(d.path()), vec!["high.h5", "high.toml"]);
    let (code, _, err) = run_cli(&["infall", s]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("host.z_final = 0.5") && err.contains("not tested"),
        "{err}"
    );
}

/// `infall` writes its analysis into a hidden copy of the store (`.NAME.partial`) renamed into
/// place when complete. Interrupted there (SIGINT, as by Ctrl-C) it removes the copy and
/// leaves the store as it was; a copy left by a killed one (SIGKILL, which nothing can catch)
/// is removed by the next `infall` on the store, even one that then stops on an error
/// (review: both copies stayed, each a full-size file that looks like a store).
#[test]
fn interrupted_infall_leaves_no_partial_copy() {
    use std::os::unix::process::ExitStatusExt;
    let (_d, _, store, partial) = padded_tiny_store();
    let s = store.to_str().unwrap();
    let before = std::fs::read(&store).unwrap();
    let interrupt =
        |signal: i32| interrupt_at_copy(&["infall", s, "--name", "late"], &partial, signal);
    let (st, err) = interrupt(libc::SIGINT);
    assert_eq!(st.signal(), Some(libc::SIGINT), "{st}");
    // it says what happened (walkthrough: "only if it was complete" did not say whether)
    assert!(
        err.contains("analysis \"late\" was not stored") && err.contains("is as it was"),
        "{err}"
    );
    assert!(!partial.exists(), "Ctrl-C left {}", partial.display());
    assert!(
        std::fs::read(&store).unwrap() == before,
        "the store changed"
    );
    let (st, _) = interrupt(libc::SIGKILL);
    assert_eq!(st.signal(), Some(libc::SIGKILL), "{st}");
    assert!(partial.exists());
    // the next infall removes it once it holds the store's lock, before anything else (here
    // it then refuses the name of the run's own analysis)
    let (code, _, err) = run_cli(&["infall", s, "--name", "run"]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("left by an interrupted command"), "{err}");
    assert!(!partial.exists(), "a killed infall's copy stayed");
    assert!(
        std::fs::read(&store).unwrap() == before,
        "the store changed"
    );
    // and the store is usable: an infall completes
    run_ok(&["infall", s, "--name", "late"]);
    let (names, _) = retinue::report::analyses_in(&store).unwrap();
    assert!(names.iter().any(|n| n == "late"), "{names:?}");
    assert!(!partial.exists());
}

/// A TINY run's store `s.h5` in a new directory, padded with 128 MB of zeros so that the copy
/// a command makes of it (`.s.h5.partial`, also returned) takes long enough to be caught;
/// with the directory and the configuration file.
fn padded_tiny_store() -> (tempfile::TempDir, PathBuf, PathBuf, PathBuf) {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "tiny.toml", TINY);
    let store = d.path().join("s.h5");
    run_ok(&[
        "run",
        cfg.to_str().unwrap(),
        "--out",
        store.to_str().unwrap(),
    ]);
    let f = hdf5::File::open_rw(&store).unwrap();
    f.new_dataset_builder()
        .with_data(&vec![0u8; 128 << 20])
        .create("padding")
        .unwrap();
    let partial = d.path().join(".s.h5.partial");
    (d, cfg, store, partial)
}

/// Start retinue with `args`, send `signal` as soon as the copy `partial` appears, and wait
/// for its end: its exit status and its standard error.
fn interrupt_at_copy(
    args: &[&str],
    partial: &Path,
    signal: i32,
) -> (std::process::ExitStatus, String) {
    let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_retinue"))
        .env("HDF5_USE_FILE_LOCKING", "FALSE")
        .args(args)
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    let t0 = std::time::Instant::now();
    while !partial.exists() {
        if let Some(st) = child.try_wait().unwrap() {
            panic!("{args:?} ended ({st}) before its copy was seen");
        }
        assert!(t0.elapsed().as_secs() < 60, "no copy after 60 s");
        std::thread::sleep(std::time::Duration::from_micros(200));
    }
    // SAFETY: a signal to our own child, which has not been waited for yet
    assert_eq!(unsafe { libc::kill(child.id() as i32, signal) }, 0);
    let out = child.wait_with_output().unwrap();
    (
        out.status,
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// Ctrl-C while `run` tests a complete store says so: the store holds every host and the
/// command that runs only the tests (a walkthrough was told its hosts were kept in a parts
/// directory that no longer existed).
#[test]
fn run_interrupted_in_its_tests_says_the_store_is_complete() {
    let (_d, cfg, store, partial) = padded_tiny_store();
    let s = store.to_str().unwrap();
    let (_, err) = interrupt_at_copy(
        &["run", cfg.to_str().unwrap(), "--out", s, "--resume"],
        &partial,
        libc::SIGINT,
    );
    assert!(
        err.contains("holds every host of the run; only its tests and report were interrupted")
            && err.contains("--resume` runs them")
            && !err.contains(".parts"),
        "{err}"
    );
}

/// Positions (kpc) and velocities (km/s) of every subhalo row of a store, read with the HDF5
/// library itself.
#[allow(clippy::type_complexity)]
fn read_xv(store: &std::path::Path) -> (Vec<[f64; 3]>, Vec<[f64; 3]>) {
    let f = hdf5::File::open(store).unwrap();
    let g = f.group("subhalos").unwrap();
    let col = |n: &str| -> Vec<f64> { g.dataset(n).unwrap().read_raw().unwrap() };
    let (x, y, z) = (col("x_kpc"), col("y_kpc"), col("z_kpc"));
    let (vx, vy, vz) = (col("vx_kms"), col("vy_kms"), col("vz_kms"));
    (
        (0..x.len()).map(|i| [x[i], y[i], z[i]]).collect(),
        (0..x.len()).map(|i| [vx[i], vy[i], vz[i]]).collect(),
    )
}

/// The velocity anisotropy by shell of the satellites brighter than M_V = 0 of `hosts`, written
/// out here from the store's positions and velocities (beta = 1 - <v_t^2> / (2 var v_r)),
/// against a row of `milky_way_census.csv`: the counts exactly, beta to 1e-3 (NaN with fewer
/// than two). Returns the number of shells with a beta.
fn check_census_beta(
    cat: &retinue::stats::Catalog,
    x: &[[f64; 3]],
    v: &[[f64; 3]],
    hosts: &[usize],
    row: &[&str],
    csv: &str,
) -> usize {
    let mut compared = 0;
    for (k, (r0, r1)) in [(0.0, 30.0), (30.0, 50.0), (50.0, 100.0), (100.0, 300.0)]
        .into_iter()
        .enumerate()
    {
        let (mut vr, mut vt2) = (Vec::new(), Vec::new());
        for &h in hosts {
            for i in cat.offset[h]..cat.offset[h + 1] {
                let r = (x[i][0].powi(2) + x[i][1].powi(2) + x[i][2].powi(2)).sqrt();
                if cat.occupied[i] && cat.alive(i) && cat.m_v[i] < 0.0 && r >= r0 && r < r1 {
                    let v_r = (0..3).map(|j| x[i][j] * v[i][j]).sum::<f64>() / r;
                    vr.push(v_r);
                    vt2.push((0..3).map(|j| v[i][j] * v[i][j]).sum::<f64>() - v_r * v_r);
                }
            }
        }
        let n = vr.len() as f64;
        assert_eq!(
            row[10 + 3 * k].parse::<f64>().unwrap(),
            n,
            "shell {k}: {csv}"
        );
        let written = row[8 + 3 * k].parse::<f64>().unwrap();
        if n < 2.0 {
            assert!(written.is_nan(), "shell {k}: {csv}");
            continue;
        }
        let mean = vr.iter().sum::<f64>() / n;
        let var = vr.iter().map(|u| (u - mean).powi(2)).sum::<f64>() / n;
        let beta = 1.0 - vt2.iter().sum::<f64>() / n / (2.0 * var);
        assert!(
            (written - beta).abs() < 1e-3,
            "shell {k}: {written} vs {beta}: {csv}"
        );
        compared += 1;
    }
    compared
}

/// Run `config` (TINY-like, written as tiny.toml in `dir`): the store, its catalogue read
/// whole, and the report's `milky_way_census.csv`.
fn census_run(
    dir: &std::path::Path,
    config: &str,
) -> (std::path::PathBuf, retinue::stats::Catalog, String) {
    let cfg = write(dir, "tiny.toml", config);
    let store = dir.join("tiny.h5");
    run_ok(&[
        "run",
        cfg.to_str().unwrap(),
        "--out",
        store.to_str().unwrap(),
    ]);
    let cat = retinue::io::store::read_catalog(&store).unwrap();
    let csv = std::fs::read_to_string(dir.join("tiny-report/milky_way_census.csv")).unwrap();
    (store, cat, csv)
}

/// The rows of a CSV text after its header, split at commas.
fn csv_rows(csv: &str) -> Vec<Vec<&str>> {
    csv.lines()
        .skip(1)
        .map(|l| l.split(',').collect())
        .collect()
}

/// The hosts whose virial mass today is within 20% of `mass` (one cell of TINY's grid).
fn hosts_of_mass(cat: &retinue::stats::Catalog, mass: f64) -> Vec<usize> {
    (0..cat.n_hosts())
        .filter(|&h| (cat.host_m_vir_msun[h] / mass - 1.0).abs() < 0.2)
        .collect()
}

/// The analysis streams a store 64 hosts at a time and merges the chunks: the census's
/// velocity sums must be merged with the counts (they once were not, and beta rested on the
/// first chunk of each cell). 35 hosts per cell (70 in all) put one cell across two chunks;
/// each cell's beta and counts must equal those of the store read whole.
#[test]
fn census_anisotropy_spans_the_analysis_chunks() {
    let d = tempfile::tempdir().unwrap();
    let (store, cat, csv) = census_run(
        d.path(),
        &TINY.replace("hosts_per_cell = 3", "hosts_per_cell = 35"),
    );
    assert_eq!(cat.n_hosts(), 70);
    let (x, v) = read_xv(&store);
    let rows = csv_rows(&csv);
    assert_eq!(rows.len(), 3, "{csv}");
    // the pooled row, then the two cells
    let all: Vec<usize> = (0..70).collect();
    assert!(
        check_census_beta(&cat, &x, &v, &all, &rows[0], &csv) >= 3,
        "{csv}"
    );
    for (row, mass) in rows[1..].iter().zip([8e11, 1.2e12]) {
        let hosts = hosts_of_mass(&cat, mass);
        assert_eq!(hosts.len(), 35, "{mass}");
        assert_eq!(row[2], "35", "{csv}");
        assert!(
            check_census_beta(&cat, &x, &v, &hosts, row, &csv) >= 3,
            "{csv}"
        );
    }
}

/// The report compares each cell's hosts with the Milky Way's satellite census
/// (`milky_way_census.csv` and a section of `report.md`). The tests stream the store in chunks
/// and keep only the rows some test needs, so the census is counted per host while the
/// host's full table is at hand: it must equal the census counted from the store read whole
/// (every satellite, whatever the selection), cell by cell.
#[test]
fn milky_way_census_counts_every_satellite_of_the_hosts() {
    let d = tempfile::tempdir().unwrap();
    // a selection that keeps few rows, so the compacted catalogue differs from the store
    let (store, cat, csv) = census_run(
        d.path(),
        &TINY.replace(
            "[tests]\n",
            "[tests.selection]\nmstar_msun = [1e5, 1e6]\n\n[tests]\n",
        ),
    );
    let rows = csv_rows(&csv);
    // the pooled row over all hosts first, as in the other tables, then each cell's
    assert_eq!(rows.len(), 3, "{csv}");
    assert_eq!(rows[0][..3], ["all", "all", "6"], "{csv}");
    let rows = &rows[1..];
    let median = |mut v: Vec<f64>| {
        v.retain(|x| x.is_finite());
        v.sort_by(f64::total_cmp);
        retinue::stats::intervals::percentile(&v, 0.5)
    };
    for (row, mass) in rows.iter().zip([8e11, 1.2e12]) {
        let hosts = hosts_of_mass(&cat, mass);
        assert_eq!(hosts.len(), 3, "{mass}");
        let census: Vec<_> = hosts.iter().map(|&h| cat.census_from_rows(h)).collect();
        assert!(census.iter().any(|c| c.n_mv0 > 0.0), "{census:?}");
        let mv0 = median(census.iter().map(|c| c.n_mv0).collect());
        let mv8 = median(census.iter().map(|c| c.n_mv8).collect());
        let pair = census.iter().filter(|c| c.bright_pair).count() as f64 / 3.0;
        assert_eq!(row[2], "3", "{csv}");
        assert_eq!(row[3].parse::<f64>().unwrap(), mv0, "{csv}");
        assert_eq!(row[4].parse::<f64>().unwrap(), mv8, "{csv}");
        assert!(
            (row[7].parse::<f64>().unwrap() - pair).abs() < 1e-4,
            "{csv}"
        );
        let (x, v) = read_xv(&store);
        let compared = check_census_beta(&cat, &x, &v, &hosts, row, &csv);
        assert!(compared >= 2, "{csv}");
    }
    let md = std::fs::read_to_string(d.path().join("tiny-report/report.md")).unwrap();
    assert!(
        md.contains("## The hosts against the Milky Way's satellites")
            && md.contains("| the Milky Way | 1 |"),
        "{md}"
    );
}
