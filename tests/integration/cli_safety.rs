//! Nothing of the user's is replaced by surprise, and nothing stale is left looking current
//! (findings of a review, one test each).

use std::path::Path;

use crate::common::{dir_names, run_cli, run_ok, write, TINY};

/// Every file under `dir` with its contents (names sorted).
/// `infall STORE --name NAME` succeeds and says `note` (on either stream).
fn infall_says(store: &str, name: &str, note: &str) {
    let (code, out, err) = run_cli(&["infall", store, "--name", name]);
    assert_eq!(code, 0, "{err}");
    assert!(format!("{out}{err}").contains(note), "{out}{err}");
}

fn contents(dir: &Path) -> Vec<(String, Vec<u8>)> {
    dir_names(dir)
        .into_iter()
        .map(|n| {
            let b = std::fs::read(dir.join(&n)).unwrap();
            (n, b)
        })
        .collect()
}

/// `infall --out DIR` and `plot --out DIR` write into a directory of a user's files only with
/// --overwrite (review: report.md, backsplash.csv and all_of_n.csv there were replaced and a
/// quenching_delay.csv deleted as a stale report file); `run` does not write its report into
/// a NAME-report directory of a user's files either. A directory retinue wrote is re-used
/// without --overwrite, and so is a report directory from before the marker file.
#[test]
fn reports_never_replace_a_users_files() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "tiny.toml", TINY);
    let c = cfg.to_str().unwrap();
    let store = d.path().join("s.h5");
    let s = store.to_str().unwrap();
    run_ok(&["run", c, "--out", s]);
    // a directory of the user's own files, some with a report's names
    let mine = d.path().join("mine");
    std::fs::create_dir(&mine).unwrap();
    for (n, t) in [
        ("report.md", "# my notes\n"),
        ("backsplash.csv", "my,data\n"),
        ("all_of_n.csv", "mine\n"),
        ("quenching_delay.csv", "mine too\n"),
        ("notes.txt", "keep\n"),
    ] {
        write(&mine, n, t);
    }
    let before = contents(&mine);
    let m = mine.to_str().unwrap();
    for args in [
        vec!["infall", s, "--name", "x", "--out", m],
        vec!["plot", s, "--out", m],
    ] {
        let (code, _, err) = run_cli(&args);
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(
            err.contains(m) && err.contains("--overwrite") && err.contains("report.md"),
            "{args:?}: {err}"
        );
        assert_eq!(contents(&mine), before, "{args:?} changed the user's files");
    }
    // nothing was stored under the refused name
    let (code, _, err) = run_cli(&["infall", s, "--name", "x", "--out", m]);
    assert_eq!(code, 2, "{err}");
    assert!(!err.contains("already holds an analysis"), "{err}");
    // the default report directory of an analysis, when it holds a user's files
    let named = d.path().join("s-y-report");
    std::fs::create_dir(&named).unwrap();
    write(&named, "report.md", "# mine\n");
    let (code, _, err) = run_cli(&["infall", s, "--name", "y"]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("s-y-report"), "{err}");
    assert_eq!(
        std::fs::read_to_string(named.join("report.md")).unwrap(),
        "# mine\n"
    );
    // with --overwrite: written there, the user's other files kept
    run_ok(&["infall", s, "--name", "x", "--out", m, "--overwrite"]);
    assert_eq!(
        std::fs::read_to_string(mine.join("notes.txt")).unwrap(),
        "keep\n"
    );
    assert!(std::fs::read_to_string(mine.join("report.md"))
        .unwrap()
        .starts_with("# Infall-time tests"));
    // a report directory retinue wrote is written again without --overwrite, by `infall`,
    // `plot` and `run` alike
    let fresh = d.path().join("fresh");
    let f = fresh.to_str().unwrap();
    run_ok(&["infall", s, "--name", "a", "--out", f]);
    assert!(fresh.join(".retinue-report").is_file());
    run_ok(&["infall", s, "--name", "b", "--out", f]);
    run_ok(&["plot", s, "--out", f]);
    run_ok(&["infall", s, "--name", "a", "--overwrite"]);
    run_ok(&["infall", s, "--name", "a", "--overwrite"]);
    run_ok(&["run", c, "--out", s, "--overwrite"]);
    run_ok(&["run", c, "--resume", "--out", s]);
    run_ok(&["plot", s]);
    // ... and so is a report directory from before the marker (recognised by report.md)
    std::fs::remove_file(fresh.join(".retinue-report")).unwrap();
    run_ok(&["infall", s, "--name", "c", "--out", f]);
    // `plot` into a new directory marks it, so that it can draw there again
    let figs = d.path().join("figs");
    run_ok(&["plot", s, "--out", figs.to_str().unwrap()]);
    run_ok(&["plot", s, "--out", figs.to_str().unwrap()]);
    // `run`: the report directory NAME-report next to the store, when it holds a user's
    // files, is refused before the first host
    let other = d.path().join("o-report");
    std::fs::create_dir(&other).unwrap();
    write(&other, "report.md", "# mine\n");
    let o = d.path().join("o.h5");
    let (code, _, err) = run_cli(&["run", c, "--out", o.to_str().unwrap()]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("o-report") && err.contains("--overwrite"),
        "{err}"
    );
    assert!(!o.exists());
    assert!(!d.path().join(".o.h5.parts").exists());
    assert_eq!(
        std::fs::read_to_string(other.join("report.md")).unwrap(),
        "# mine\n"
    );
}

/// A `run --overwrite` killed (SIGKILL) after its store is in place and before its report is
/// written leaves no report of the earlier run beside the new store (review: the old
/// `NAME-report/`, of another seed, stayed and looked complete); `--resume` then writes the
/// new run's report. The reports of `retinue infall` on the earlier store go too; a user's
/// file in the report directory stays.
#[test]
fn a_replaced_store_takes_its_reports_with_it() {
    use std::os::unix::fs::MetadataExt;
    use std::os::unix::process::ExitStatusExt;
    let d = tempfile::tempdir().unwrap();
    let old = write(d.path(), "old.toml", TINY);
    // tests long enough (seconds) for the kill to land between the store and the report
    let heavy = TINY
        .replace("master_seed = 11", "master_seed = 5")
        .replace("draws = 500", "draws = 3000000")
        .replace("bootstrap = 50", "bootstrap = 100000");
    let new = write(d.path(), "new.toml", &heavy);
    let store = d.path().join("s.h5");
    let s = store.to_str().unwrap();
    run_ok(&["run", old.to_str().unwrap(), "--out", s]);
    run_ok(&["infall", s, "--name", "mine"]);
    let report = d.path().join("s-report");
    let md = report.join("report.md");
    assert!(std::fs::read_to_string(&md)
        .unwrap()
        .contains("master seed 11"));
    write(&report, "my-notes.txt", "keep\n");
    assert!(d.path().join("s-mine-report/report.md").is_file());
    // a store of another name beginning the same way keeps its report
    let cousin = d.path().join("s-x.h5");
    run_ok(&[
        "run",
        old.to_str().unwrap(),
        "--out",
        cousin.to_str().unwrap(),
    ]);
    let inode = std::fs::metadata(&store).unwrap().ino();
    let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_retinue"))
        .env("HDF5_USE_FILE_LOCKING", "FALSE")
        .args(["run", new.to_str().unwrap(), "--overwrite", "--out", s])
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .unwrap();
    let t0 = std::time::Instant::now();
    while std::fs::metadata(&store).map(|m| m.ino()).ok() == Some(inode) {
        if let Some(st) = child.try_wait().unwrap() {
            panic!("run ended ({st}) before its store was seen");
        }
        assert!(t0.elapsed().as_secs() < 120, "no new store after 120 s");
        std::thread::sleep(std::time::Duration::from_micros(500));
    }
    // SAFETY: a signal to our own child, which has not been waited for yet
    assert_eq!(unsafe { libc::kill(child.id() as i32, libc::SIGKILL) }, 0);
    let st = child.wait().unwrap();
    assert_eq!(
        st.signal(),
        Some(libc::SIGKILL),
        "the run ended first: {st}"
    );
    // the new store, and no report of the old one beside it
    let text = std::fs::read_to_string(&md).unwrap_or_default();
    assert!(
        !text.contains("master seed 11"),
        "the earlier run's report stayed beside the new store"
    );
    assert!(!d.path().join("s-mine-report/report.md").exists());
    assert!(!d.path().join("s-mine-report").exists());
    assert_eq!(
        std::fs::read_to_string(report.join("my-notes.txt")).unwrap(),
        "keep\n"
    );
    assert!(d.path().join("s-x-report/report.md").is_file());
    // --resume writes the new run's report
    run_ok(&["run", new.to_str().unwrap(), "--resume", "--out", s]);
    assert!(std::fs::read_to_string(&md)
        .unwrap()
        .contains("master seed 5"));
    // `merge --overwrite` over a store with a report removes it too
    for k in 1..=2 {
        run_ok(&[
            "run",
            old.to_str().unwrap(),
            "--shard",
            &format!("{k}/2"),
            "--out",
            d.path().join(format!("p{k}.h5")).to_str().unwrap(),
        ]);
    }
    run_ok(&[
        "merge",
        d.path().join("p1.h5").to_str().unwrap(),
        d.path().join("p2.h5").to_str().unwrap(),
        "--out",
        s,
        "--overwrite",
    ]);
    assert!(!md.exists(), "merge left the earlier store's report");
}

/// A transfer-function table made from the BBKS fit (k in h/Mpc), its T scaled by `f` above
/// k = 1 h/Mpc: two tables of different contents.
fn table(f: f64) -> String {
    let mut t = String::from("# k_unit: h/Mpc\n");
    for i in 0..=400 {
        let k = 10f64.powf(-5.0 + 10.0 * i as f64 / 400.0);
        let q = k / 0.21;
        let tk = (1.0 + 2.34 * q).ln() / (2.34 * q)
            * (1.0 + 3.89 * q + (16.1 * q).powi(2) + (5.46 * q).powi(3) + (6.71 * q).powi(4))
                .powf(-0.25);
        let tk = if k > 1.0 { tk * f } else { tk };
        t.push_str(&format!("{k:.10e} {tk:.10e}\n"));
    }
    t
}

/// A transfer table replaced with other contents is noticed by `run --resume` (parts made
/// with the first), by `merge` (shards made with each), by `infall` and `plot` (a store made
/// with the first) and by `run --resume` on a finished store, each naming the key and the
/// file (review: the store's first hosts were grown from one table and the rest from the
/// other, and only the configuration's text was compared).
#[test]
fn a_changed_transfer_table_is_noticed() {
    let d = tempfile::tempdir().unwrap();
    let text = TINY
        .replace(
            "preset = \"planck18\"",
            "preset = \"planck18\"\ntransfer = \"table\"\ntransfer_table = \"t.dat\"",
        )
        .replace("batch_hosts = 2", "batch_hosts = 1");
    let cfg = write(d.path(), "t.toml", &text);
    let c = cfg.to_str().unwrap();
    let (a, b) = (table(1.0), table(1.03));
    let t = d.path().join("t.dat");
    std::fs::write(&t, &a).unwrap();
    let out = d.path().join("r.h5");
    let o = out.to_str().unwrap();
    // an interrupted run: host 3 fails, parts 0-2 are kept
    let st = std::process::Command::new(env!("CARGO_BIN_EXE_retinue"))
        .env("HDF5_USE_FILE_LOCKING", "FALSE")
        .args(["run", c, "--threads", "1", "--out", o])
        .env("RETINUE_FAULT_HOST", "3")
        .output()
        .unwrap();
    assert_eq!(st.status.code(), Some(1));
    let parts = d.path().join(".r.h5.parts");
    assert!(parts.join("part-00000.h5").exists());
    std::fs::write(&t, &b).unwrap();
    let (code, _, err) = run_cli(&["run", c, "--resume", "--out", o]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("cosmology.transfer_table")
            && err.contains("t.dat")
            && err.contains(&format!("rm -r {}", parts.display())),
        "{err}"
    );
    assert!(!out.exists());
    // with the table the run started with, it resumes
    std::fs::write(&t, &a).unwrap();
    run_ok(&["run", c, "--resume", "--out", o]);
    // a re-test with the table changed since
    std::fs::write(&t, &b).unwrap();
    for args in [
        vec!["infall", o, "--name", "later"],
        vec!["plot", o],
        vec!["run", c, "--resume", "--out", o],
    ] {
        let (code, _, err) = run_cli(&args);
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(
            err.contains("cosmology.transfer_table") && err.contains("t.dat"),
            "{args:?}: {err}"
        );
    }
    std::fs::write(&t, &a).unwrap();
    run_ok(&["infall", o, "--name", "later"]);
    // a store from before the hashes were recorded resumes with a note (it was refused as
    // grown from other files; review of the change)
    {
        let f = hdf5::File::open_rw(&out).unwrap();
        f.delete_attr("input_files").unwrap();
    }
    let (code, _, err) = run_cli(&["run", c, "--resume", "--out", o]);
    assert_eq!(code, 0, "{err}");
    assert!(
        err.contains("records no hash of the files its run read"),
        "{err}"
    );
    // shards grown from different tables are not merged
    let shard = |k: u32, table: &str| {
        std::fs::write(&t, table).unwrap();
        let p = d.path().join(format!("s{k}.h5"));
        run_ok(&[
            "run",
            c,
            "--shard",
            &format!("{k}/2"),
            "--out",
            p.to_str().unwrap(),
        ]);
        p
    };
    let (s1, s2) = (shard(1, &a), shard(2, &b));
    let m = d.path().join("m.h5");
    let (code, _, err) = run_cli(&[
        "merge",
        s1.to_str().unwrap(),
        s2.to_str().unwrap(),
        "--out",
        m.to_str().unwrap(),
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("cosmology.transfer_table") && err.contains("different files"),
        "{err}"
    );
    assert!(!m.exists());
}

/// Lesser problems of the review: an output in a missing directory is bad input (exit 2,
/// the directory named; it failed on the lock file with exit 1); `check` refuses an empty
/// `run.output` (which `run` refuses) and an empty or directory `run.sample`, naming the key;
/// the demo replaces only its own store.
#[test]
fn outputs_and_paths_are_checked_up_front() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "tiny.toml", TINY);
    let c = cfg.to_str().unwrap();
    let missing = d.path().join("nodir").join("x.h5");
    let (code, _, err) = run_cli(&["run", c, "--out", missing.to_str().unwrap()]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains(&d.path().join("nodir").display().to_string())
            && err.contains("does not exist"),
        "{err}"
    );
    assert!(!d.path().join("nodir").exists());
    for (line, key) in [
        ("output = \"\"", "run.output"),
        ("output = \"tiny.h5\"\nsample = \"\"", "run.sample"),
        ("output = \"tiny.h5\"\nsample = \"sub\"", "run.sample"),
    ] {
        std::fs::create_dir_all(d.path().join("sub")).unwrap();
        let bad = write(
            d.path(),
            "bad.toml",
            &TINY.replace("output = \"tiny.h5\"", line),
        );
        let (code, _, err) = run_cli(&["check", bad.to_str().unwrap()]);
        assert_eq!(code, 2, "{line}: {err}");
        assert!(err.contains(key), "{line}: {err}");
    }
    // the demo over a store of another configuration named demo.h5
    let demo = d.path().join("demo");
    std::fs::create_dir(&demo).unwrap();
    let store = demo.join("demo.h5");
    run_ok(&["run", c, "--out", store.to_str().unwrap()]);
    let before = std::fs::read(&store).unwrap();
    let (code, _, err) = run_cli(&["demo", "--out", demo.to_str().unwrap()]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("demo.h5") && err.contains("--overwrite"),
        "{err}"
    );
    assert_eq!(std::fs::read(&store).unwrap(), before);
}

/// A store written before 2026-12-04 may hold configuration forms refused since (a third
/// value in a [lo, hi] key, a grid out of order, an empty [tests.preprocessing]); `infall`
/// and `plot` read them as that version did, with a note each, instead of refusing the store
/// (review of the change: such stores could no longer be re-tested or plotted).
#[test]
fn stores_with_configuration_forms_refused_since_still_open() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "tiny.toml", TINY);
    let store = d.path().join("old.h5");
    run_ok(&[
        "run",
        cfg.to_str().unwrap(),
        "--out",
        store.to_str().unwrap(),
    ]);
    // the stored configuration as an older version would have kept it
    let old_text = TINY
        .replace("n_range = [3, 4]", "n_range = [3, 4, 99]")
        .replace(
            "z_grid = [0.0, 0.5, 1.0, 2.0]",
            "z_grid = [2.0, 1.0, 0.5, 0.5, 0.0]",
        )
        .replace(
            "preset = \"planck18\"",
            "preset = \"planck18\"\nsharp_k_c = 3.0\ntransfer_table_k_unit = \"h/Mpc\"\n\
             transfer = \"EH98\"",
        )
        + "\n[tests.preprocessing]\n";
    {
        let f = hdf5::File::open_rw(&store).unwrap();
        f.delete_attr("config").unwrap();
        retinue::io::h5::set_str_attr(&f, "config", &old_text).unwrap();
    }
    let (code, out, err) = run_cli(&["infall", store.to_str().unwrap(), "--name", "again"]);
    assert_eq!(code, 0, "{err}");
    let all = format!("{out}{err}");
    assert!(
        all.contains("tests.n_range has 3 values")
            && all.contains("tests.z_grid is not increasing")
            && all.contains("[tests.preprocessing] is empty")
            && all.contains("cosmology sharp_k_c, which the run did not use")
            && all.contains("cosmology transfer_table_k_unit, which the run did not use")
            && all.contains(
                "spells cosmology transfer \"EH98\"; its cell is now labelled with \"eh98\""
            ),
        "{all}"
    );
    let (code, _, err) = run_cli(&["plot", store.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
}

/// The review of the change: (1) a report is retired with its store only when its marker
/// names that store by its full path, so the report of `a/run.h5` written with --out next
/// to another `run.h5` stays when that one is made; (2) a directory holding only figures of
/// the names `plot` writes (what `plot` left before the marker) is a report directory.
#[test]
fn reports_of_a_store_of_the_same_name_elsewhere_stay() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "tiny.toml", TINY);
    let c = cfg.to_str().unwrap();
    std::fs::create_dir(d.path().join("a")).unwrap();
    let a = d.path().join("a").join("run.h5");
    run_ok(&["run", c, "--out", a.to_str().unwrap()]);
    let theirs = d.path().join("run-x-report");
    run_ok(&[
        "infall",
        a.to_str().unwrap(),
        "--name",
        "x",
        "--out",
        theirs.to_str().unwrap(),
    ]);
    assert!(theirs.join("report.md").is_file());
    let here = d.path().join("run.h5");
    let (code, _, err) = run_cli(&["run", c, "--out", here.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(!err.contains("run-x-report"), "{err}");
    assert!(theirs.join("report.md").is_file());
    // (2) figures only, no marker
    std::fs::create_dir(d.path().join("b")).unwrap();
    let m = d.path().join("b").join("m.h5");
    std::fs::copy(&a, &m).unwrap();
    let old_figures = d.path().join("b").join("m-report");
    std::fs::create_dir(&old_figures).unwrap();
    std::fs::write(old_figures.join("pericentres.png"), b"an older plot").unwrap();
    let (code, _, err) = run_cli(&["plot", m.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert_ne!(
        std::fs::read(old_figures.join("pericentres.png")).unwrap(),
        b"an older plot"
    );
}

/// A store records the orbit options its hosts were grown with, every key resolved, and
/// `plot` labels the figures with those, not with a later version's defaults (review of
/// 2026-12-04: an older store's figures named today's disc_tide_ratio); a store that does not
/// record them is read at this version's defaults, with a note saying so.
#[test]
fn figures_name_the_orbit_options_the_hosts_were_grown_with() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "tiny.toml", TINY);
    let store = d.path().join("o.h5");
    let s = store.to_str().unwrap();
    run_ok(&["run", cfg.to_str().unwrap(), "--out", s]);
    let recorded = {
        let f = hdf5::File::open_rw(&store).unwrap();
        let text = retinue::io::h5::get_str_attr(&f, "orbit_options").unwrap();
        assert!(text.contains("disc_tide_ratio = 1.1"), "{text}");
        // as a version with another default would have recorded it
        f.delete_attr("orbit_options").unwrap();
        let other = text.replace("disc_tide_ratio = 1.1", "disc_tide_ratio = 1.6");
        retinue::io::h5::set_str_attr(&f, "orbit_options", &other).unwrap();
        text
    };
    assert!(!recorded.is_empty());
    // the report says when the hosts were grown with another disc model than the defaults
    let report =
        |name: &str| std::fs::read_to_string(d.path().join(name).join("report.md")).unwrap();
    let grown = "Disc: these hosts were grown with";
    assert!(!report("o-report").contains(grown));
    run_ok(&["plot", s]);
    let svg = std::fs::read_to_string(d.path().join("o-report").join("pericentres.svg")).unwrap();
    assert!(
        svg.contains("disc_tide_ratio = 1.6"),
        "label not the recorded one"
    );
    run_ok(&["infall", s, "--name", "other"]);
    assert!(report("o-other-report").contains(
        "Disc: these hosts were grown with `orbits.disc_tide_ratio` = 1.6 and \
         `orbits.disc_tide_loss_power` = 1 (below the threshold"
    ));
    {
        let f = hdf5::File::open_rw(&store).unwrap();
        f.delete_attr("orbit_options").unwrap();
    }
    infall_says(s, "later", "does not record its orbit options");
    assert!(report("o-later-report").contains(
        "`orbits.disc_tide_loss_power` = 0 (all or nothing: destroyed where the tide exceeds"
    ));
    // such a store predates every key added since: they are read as the code was before
    // them (`orbits::KEYS_ADDED_LATER`), so the gradual disc losses are off in its label
    run_ok(&["plot", s]);
    let svg = std::fs::read_to_string(d.path().join("o-report").join("pericentres.svg")).unwrap();
    assert!(
        svg.contains("disc_tide_ratio = 1.1)") && !svg.contains("disc_tide_loss_power"),
        "a store without recorded options read with today's disc power"
    );
}

/// Stores written before stars were stripped by tides (2026-12-04) lack the subhalo column
/// `mstar_peak_msun`: a review found that `infall`, `plot` and `export` then stopped with
/// "damaged store", and that such a store would be read as stripped (this version's default).
/// They open, with a note; they are read with `galaxies.strip_stars = false`; export and merge
/// fill the column from `mstar_msun`, which held the same quantity then.
#[test]
fn stores_from_before_stellar_stripping_still_open() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "tiny.toml", TINY);
    let c = cfg.to_str().unwrap();
    let old = |p: &Path| {
        let f = hdf5::File::open_rw(p).unwrap();
        f.group("subhalos")
            .unwrap()
            .unlink("mstar_peak_msun")
            .unwrap();
    };
    let store = d.path().join("old.h5");
    run_ok(&["run", c, "--out", store.to_str().unwrap()]);
    old(&store);
    let st = store.to_str().unwrap();
    infall_says(st, "again", "written before stars were stripped by tides");
    // the same resolved option as the store's hosts had: a configuration saying so is accepted
    let again = write(d.path(), "again.toml", "[galaxies]\nstrip_stars = false\n");
    let (code, _, err) = run_cli(&[
        "infall",
        st,
        "--name",
        "third",
        "--config",
        again.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    let (code, _, err) = run_cli(&["plot", st]);
    assert_eq!(code, 0, "{err}");
    let csv = d.path().join("old.csv");
    run_ok(&["export", st, "--out", csv.to_str().unwrap()]);
    let text = std::fs::read_to_string(&csv).unwrap();
    let mut lines = text.lines();
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    let (a, b) = (
        header.iter().position(|h| *h == "mstar_msun").unwrap(),
        header.iter().position(|h| *h == "mstar_peak_msun").unwrap(),
    );
    let mut n = 0;
    for l in lines {
        let v: Vec<&str> = l.split(',').collect();
        assert_eq!(v[a], v[b]);
        n += 1;
    }
    assert!(n > 0);
    // shards of an older run merge into a store of their kind: without the column, read as
    // unstripped (a merged store that had it would be read with this version's default)
    let mut shards = Vec::new();
    for k in 1..=2 {
        let p = d.path().join(format!("s{k}.h5"));
        run_ok(&[
            "run",
            c,
            "--shard",
            &format!("{k}/2"),
            "--out",
            p.to_str().unwrap(),
        ]);
        old(&p);
        shards.push(p);
    }
    let merged = d.path().join("merged.h5");
    run_ok(&[
        "merge",
        shards[0].to_str().unwrap(),
        shards[1].to_str().unwrap(),
        "--out",
        merged.to_str().unwrap(),
    ]);
    {
        let f = hdf5::File::open(&merged).unwrap();
        assert!(!f.group("subhalos").unwrap().link_exists("mstar_peak_msun"));
    }
    infall_says(
        merged.to_str().unwrap(),
        "m",
        "written before stars were stripped by tides",
    );
}

/// `infall STORE --config FILE` where FILE has no sample of its own keeps the run's sample
/// with the run's column mapping (a walkthrough found a tests-only FILE dropping
/// `run.sample_columns`, so the run's own mapped sample failed with "missing column").
#[test]
fn retest_config_without_a_sample_keeps_the_runs_column_mapping() {
    let d = tempfile::tempdir().unwrap();
    write(
        d.path(),
        "mapped.csv",
        "name,mass,r_gc_kpc,v_r_kms,t_quench_lookback_gyr,t_quench_err_gyr\n\
         W-1,3.2e6,78,-41,9.4,0.4\nW-2,8.5e5,112,26,10.3,0.5\nW-3,1.4e7,55,-73,11.1,0.5\n",
    );
    let cfg = write(
        d.path(),
        "tiny.toml",
        &TINY.replace(
            "[run]",
            "[run]\nsample = \"mapped.csv\"\nsample_columns = { id = \"name\", mstar_msun = \"mass\" }",
        ),
    );
    let store = d.path().join("m.h5");
    run_ok(&[
        "run",
        cfg.to_str().unwrap(),
        "--out",
        store.to_str().unwrap(),
    ]);
    let other = write(d.path(), "other.toml", "[tests]\nbootstrap = 60\n");
    let (code, out, err) = run_cli(&[
        "infall",
        store.to_str().unwrap(),
        "--config",
        other.to_str().unwrap(),
        "--name",
        "again",
    ]);
    assert_eq!(code, 0, "{out}{err}");
    let f = hdf5::File::open(&store).unwrap();
    assert!(f.link_exists("analysis/again"));
}

/// An `infall` stopped after its analysis was stored and before its report was written: the
/// same command again is refused (the name exists), and the refusal says that no report of it
/// is there and how to write one (a walkthrough met this after a Ctrl-C).
#[test]
fn an_analysis_without_its_report_is_named_as_such() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "tiny.toml", TINY);
    let store = d.path().join("r.h5");
    let st = store.to_str().unwrap();
    run_ok(&["run", cfg.to_str().unwrap(), "--out", st]);
    run_ok(&["infall", st, "--name", "x"]);
    let report = d.path().join("r-x-report");
    assert!(report.join("report.md").is_file());
    let (code, _, err) = run_cli(&["infall", st, "--name", "x"]);
    assert_eq!(code, 2);
    assert!(!err.contains("holds no report"), "{err}");
    std::fs::remove_dir_all(&report).unwrap();
    let (code, _, err) = run_cli(&["infall", st, "--name", "x"]);
    assert_eq!(code, 2);
    assert!(err.contains("holds no report of it"), "{err}");
    run_ok(&["infall", st, "--name", "x", "--overwrite"]);
    assert!(report.join("report.md").is_file());
}

/// An analysis names the hosts its `candidates_per_host` are for (`candidates_host_index`): all
/// of them, or with `infall --cell` those of its cells (a walkthrough's pandas check failed on
/// a `--cell` analysis, which stored fewer counts than /hosts has rows and nothing said whose).
#[test]
fn candidates_name_their_hosts() {
    let d = tempfile::tempdir().unwrap();
    let cfg = write(d.path(), "tiny.toml", TINY);
    let store = d.path().join("c.h5");
    let st = store.to_str().unwrap();
    run_ok(&["run", cfg.to_str().unwrap(), "--out", st]);
    run_ok(&["infall", st, "--cell", "mass=1.2e12", "--name", "one"]);
    let f = hdf5::File::open(&store).unwrap();
    let index: Vec<u64> = f.dataset("hosts/host_index").unwrap().read_raw().unwrap();
    let bin: Vec<u16> = f.dataset("hosts/mass_bin").unwrap().read_raw().unwrap();
    for (name, want_bins) in [("run", vec![0u16, 1]), ("one", vec![1u16])] {
        let a = f.group(&format!("analysis/{name}")).unwrap();
        let counts: Vec<u64> = a
            .dataset("candidates_per_host")
            .unwrap()
            .read_raw()
            .unwrap();
        let hosts: Vec<u64> = a
            .dataset("candidates_host_index")
            .unwrap()
            .read_raw()
            .unwrap();
        assert_eq!(counts.len(), hosts.len(), "{name}");
        let expect: Vec<u64> = index
            .iter()
            .zip(&bin)
            .filter(|(_, b)| want_bins.contains(b))
            .map(|(i, _)| *i)
            .collect();
        assert_eq!(hosts, expect, "{name}");
    }
}

/// `check` names the sample's objects that lie outside `[tests.selection]` (stellar mass,
/// M_V, distance against r_over_rvir times the hosts' R_vir), and says nothing when all are
/// inside (a walkthrough's sample had 4 of 6 objects below the selection's stellar mass).
#[test]
fn check_names_sample_objects_outside_the_selection() {
    let d = tempfile::tempdir().unwrap();
    write(
        d.path(),
        "s.csv",
        "id,mstar_msun,r_gc_kpc,v_r_kms,t_quench_lookback_gyr,t_quench_err_gyr\n\
         W-1,3.2e6,78,-41,9.4,0.4\nW-2,2.9e3,112,26,10.3,0.5\nW-3,1.4e7,450,-73,11.1,0.5\n",
    );
    let with = |sel: &str| {
        TINY.replace("[run]", "[run]\nsample = \"s.csv\"") + "\n[tests.selection]\n" + sel
    };
    let cfg = write(d.path(), "a.toml", &with("mstar_msun = [1e4, 1e8]\n"));
    let (code, _, err) = run_cli(&["check", cfg.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(
        err.contains("2 of the sample's 3 objects lie outside [tests.selection]")
            && err.contains("W-2 (M* = 2.900e3 Msun")
            && err.contains("W-3 (r_gc = 450.0 kpc)")
            && !err.contains("W-1 ("),
        "{err}"
    );
    let cfg = write(
        d.path(),
        "b.toml",
        &with("mstar_msun = [1e3, 1e8]\nr_over_rvir = [0.0, 2.0]\n"),
    );
    let (code, _, err) = run_cli(&["check", cfg.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert!(!err.contains("outside [tests.selection]"), "{err}");
}

/// `check` notes a `[tests.selection]` stellar-mass window that reaches more than a decade
/// beyond the sample's own stellar masses (the tests draw mock satellites from the whole
/// window), naming the side and by how much, and says nothing for a window within a decade.
#[test]
fn check_notes_a_selection_much_wider_than_the_sample() {
    let d = tempfile::tempdir().unwrap();
    write(
        d.path(),
        "s.csv",
        "id,mstar_msun,r_gc_kpc,v_r_kms,t_quench_lookback_gyr,t_quench_err_gyr\n\
         W-1,1.0e4,78,-41,9.4,0.4\nW-2,3.0e4,112,26,10.3,0.5\n",
    );
    let with = |sel: &str| {
        TINY.replace("[run]", "[run]\nsample = \"s.csv\"") + "\n[tests.selection]\n" + sel
    };
    let note = "the all-of-N, fraction and delay tests draw mock satellites";
    for (sel, expect) in [
        // log10(1e7 / 3e4) = 2.52 above; log10(1e4 / 5e3) = 0.30 below
        ("mstar_msun = [5e3, 1e7]\n", Some("reaches 2.5 dex above")),
        // log10(1e4 / 1e2) = 2.0 below and log10(1e6 / 3e4) = 1.52 above
        (
            "mstar_msun = [1e2, 1e6]\n",
            Some("reaches 2.0 dex below and 1.5 dex above"),
        ),
        // within a decade on both sides
        ("mstar_msun = [2e3, 2e5]\n", None),
    ] {
        let cfg = write(d.path(), "w.toml", &with(sel));
        let (code, _, err) = run_cli(&["check", cfg.to_str().unwrap()]);
        assert_eq!(code, 0, "{err}");
        match expect {
            Some(part) => assert!(err.contains(note) && err.contains(part), "{sel}: {err}"),
            None => assert!(!err.contains(note), "{sel}: {err}"),
        }
    }
}

/// `check` notes settings that mix the calibrated sets (`orbits::BY_CONCENTRATION`, the
/// defaults, and `orbits::SINGLE_RATE`, the defaults before 2026-12-05; docs/methods.md): a
/// concentration-dependent rate without the friction mass, the friction mass with one rate,
/// a disc pair calibrated for the other rate, and a disc ratio with a power it was not
/// calibrated with; and says nothing for either set whole, nor for the all-or-nothing pair
/// calibrated with the concentration-dependent rate (0.8, power 0).
#[test]
fn check_notes_settings_calibrated_for_another_stripping_rate() {
    let d = tempfile::tempdir().unwrap();
    let friction = "sink into their parents 1.2-1.6 times slower";
    let friction_single = "was calibrated with the concentration-dependent stripping rate";
    let disc = " is calibrated for ";
    let pair = "was calibrated with orbits.disc_tide_loss_power = ";
    let single_disc = "disc_tide_ratio = 1.2\ndisc_tide_loss_power = 0\n";
    for (orbits, expect) in [
        // the defaults (the concentration-dependent set)
        ("".to_string(), (false, false, false, false)),
        (
            "friction_mass_infall_weight = 0\n".into(),
            (true, false, false, false),
        ),
        (single_disc.into(), (false, false, true, false)),
        // the all-or-nothing pair of the concentration-dependent rate
        (
            "disc_tide_ratio = 0.8\ndisc_tide_loss_power = 0\n".into(),
            (false, false, false, false),
        ),
        // a ratio of one pair with the power of another
        ("disc_tide_ratio = 0.8\n".into(), (false, false, false, true)),
        ("disc_tide_loss_power = 0\n".into(), (false, false, false, true)),
        ("disc_tide_ratio = 1.2\n".into(), (false, false, false, true)),
        ("disc_tide_ratio = 3\n".into(), (false, false, false, false)),
        // the single-rate set of 2026-12-04, whole and in part
        (
            format!(
                "stripping_alpha = 0.75\nstripping_alpha_c_slope = 0\nfriction_mass_infall_weight = 0\n{single_disc}"
            ),
            (false, false, false, false),
        ),
        (
            "stripping_alpha = 0.75\nstripping_alpha_c_slope = 0\n".into(),
            (false, true, true, false),
        ),
        (
            "stripping_alpha = 0.75\nstripping_alpha_c_slope = 0\nfriction_mass_infall_weight = 0\n"
                .into(),
            (false, false, true, false),
        ),
        // without friction nothing is said of the rates
        (
            format!("friction = false\n{single_disc}"),
            (false, false, false, false),
        ),
    ] {
        // TINY has no [orbits] table
        let cfg = write(d.path(), "o.toml", &format!("{TINY}\n[orbits]\n{orbits}"));
        let (code, _, err) = run_cli(&["check", cfg.to_str().unwrap()]);
        assert_eq!(code, 0, "{orbits}: {err}");
        assert_eq!(
            (
                err.contains(friction),
                err.contains(friction_single),
                err.contains(disc),
                err.contains(pair)
            ),
            expect,
            "{orbits}: {err}"
        );
        // one line each, its words single-spaced
        for l in err.lines().filter(|l| l.contains("docs/methods.md)")) {
            assert!(l.starts_with("note: ") && !l.contains("  "), "{l}");
        }
    }
    // gradual disc losses with a power below 1 strip at every pericentre, however far out
    let tail = "strips at every pericentre however far out";
    for (orbits, expect) in [
        ("disc_tide_ratio = 50\ndisc_tide_loss_power = 0.3\n", true),
        ("disc_tide_ratio = 3\ndisc_tide_loss_power = 1\n", false),
        ("disc_tide_ratio = 0\ndisc_tide_loss_power = 0.3\n", false),
    ] {
        let cfg = write(d.path(), "o.toml", &format!("{TINY}\n[orbits]\n{orbits}"));
        let (code, _, err) = run_cli(&["check", cfg.to_str().unwrap()]);
        assert_eq!(code, 0, "{orbits}: {err}");
        assert_eq!(err.contains(tail), expect, "{orbits}: {err}");
    }
}

/// `check` notes galaxy-size keys that change nothing because stars are not stripped (a
/// walkthrough set them with `strip_stars = false` and was told nothing).
#[test]
fn check_notes_size_keys_without_stripping() {
    let d = tempfile::tempdir().unwrap();
    let note = "with galaxies.strip_stars = false they change nothing";
    for (galaxies, expect) in [
        ("strip_stars = false\nsize_to_r200c = 0.05\n", true),
        ("strip_stars = false\n", false),
        ("size_to_r200c = 0.05\n", false),
    ] {
        let cfg = write(
            d.path(),
            "g.toml",
            &format!("{TINY}\n[galaxies]\n{galaxies}"),
        );
        let (code, _, err) = run_cli(&["check", cfg.to_str().unwrap()]);
        assert_eq!(code, 0, "{err}");
        assert_eq!(err.contains(note), expect, "{galaxies}: {err}");
    }
}
