//! MPI runs (cargo feature `mpi`). These tests need an MPI-enabled binary and `mpirun`:
//! scripts/test builds one and sets RETINUE_MPI_BIN; without it they print that they were
//! skipped. The shard-recovery test runs everywhere.

use std::path::{Path, PathBuf};

use crate::common::{run_cli, store_tables};

fn tiny(dir: &Path) -> PathBuf {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/tiny.toml");
    let p = dir.join("tiny.toml");
    std::fs::copy(src, &p).unwrap();
    p
}

fn mpirun(n: u32, bin: &str, args: &[&str], env: &[(&str, &str)]) -> std::process::Output {
    let mut c = std::process::Command::new("mpirun");
    c.env("HDF5_USE_FILE_LOCKING", "FALSE");
    c.args([
        "--allow-run-as-root",
        "--oversubscribe",
        "-n",
        &n.to_string(),
    ]);
    for (k, v) in env {
        c.arg("-x").arg(k).env(k, v);
    }
    c.arg(bin).args(args);
    c.output().expect("mpirun")
}

/// Runs `cfg` in one process and with `mpirun -n ranks`; returns the two stores.
fn single_and_mpi(d: &Path, cfg: &Path, ranks: u32, bin: &str) -> (PathBuf, PathBuf) {
    let single = d.join("single.h5");
    let (code, _, err) = run_cli(&[
        "run",
        cfg.to_str().unwrap(),
        "--out",
        single.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    let m = d.join("mpi.h5");
    let o = mpirun(
        ranks,
        bin,
        &["run", cfg.to_str().unwrap(), "--out", m.to_str().unwrap()],
        &[],
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert_eq!(store_tables(&single), store_tables(&m));
    (single, m)
}

/// The MPI build of the binary (`RETINUE_MPI_BIN`, set by scripts/test when MPI is
/// installed); None, with a note, when it is not set (the MPI tests are then skipped).
fn mpi_bin() -> Option<String> {
    let bin = std::env::var("RETINUE_MPI_BIN").ok();
    if bin.is_none() {
        eprintln!(
            "skipped: RETINUE_MPI_BIN is not set (scripts/test sets it when MPI is installed)"
        );
    }
    bin
}

/// `mpirun -n 2` gives the same subhalo and host tables, bit for bit, as one process.
#[test]
fn mpi_two_ranks_match_a_single_process() {
    let Some(bin) = mpi_bin() else {
        return;
    };
    let d = tempfile::tempdir().unwrap();
    let cfg = tiny(d.path());
    let (single, _) = single_and_mpi(d.path(), &cfg, 2, &bin);
    assert!(d.path().join("mpi-report").join("report.md").exists());
    // the rank shards were merged and removed
    assert!(!d.path().join("mpi.shard-1-of-2.h5").exists());

    // a failing rank is named; the other shard stays usable; re-running the missing shard and
    // merging completes the run
    let f = d.path().join("fail.h5");
    let o = mpirun(
        2,
        &bin,
        &["run", cfg.to_str().unwrap(), "--out", f.to_str().unwrap()],
        &[("RETINUE_FAULT_HOST", "3")],
    );
    assert!(!o.status.success());
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("shards [2] of 2 failed"), "{err}");
    let s1 = d.path().join("fail.shard-1-of-2.h5");
    let s2 = d.path().join("fail.shard-2-of-2.h5");
    assert!(s1.exists() && !s2.exists());
    let (code, _, err) = run_cli(&[
        "run",
        cfg.to_str().unwrap(),
        "--shard",
        "2/2",
        "--out",
        s2.to_str().unwrap(),
        "--resume",
    ]);
    assert_eq!(code, 0, "{err}");
    let (code, _, err) = run_cli(&[
        "merge",
        s1.to_str().unwrap(),
        s2.to_str().unwrap(),
        "--out",
        f.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(store_tables(&single), store_tables(&f));
}

/// A rank's shard file replaces an existing file only as the output would (review: the MPI
/// path skipped the overwrite guard and replaced a user's file of that name, then removed it
/// after the merge): without --overwrite the rank fails naming the file, which is left as it
/// was; with --overwrite the run completes.
#[test]
fn mpi_shard_files_replace_nothing_without_overwrite() {
    let Some(bin) = mpi_bin() else {
        return;
    };
    let d = tempfile::tempdir().unwrap();
    let cfg = tiny(d.path());
    let m = d.path().join("mpi.h5");
    let theirs = d.path().join("mpi.shard-2-of-2.h5");
    std::fs::write(&theirs, "someone else's notes\n").unwrap();
    let args = ["run", cfg.to_str().unwrap(), "--out", m.to_str().unwrap()];
    let o = mpirun(2, &bin, &args, &[]);
    assert!(!o.status.success());
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains(&theirs.display().to_string())
            && err.contains("is not a retinue store")
            && err.contains("--overwrite"),
        "{err}"
    );
    // rank 0's summary points at the ranks' own reasons, not only at re-running the shard
    assert!(
        err.contains("shards [2] of 2 failed")
            && err.contains("a file in the way of its shard file"),
        "{err}"
    );
    assert_eq!(
        std::fs::read_to_string(&theirs).unwrap(),
        "someone else's notes\n"
    );
    assert!(!m.exists());
    let o = mpirun(2, &bin, &[&args[..], &["--overwrite"]].concat(), &[]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(m.exists() && !theirs.exists());
}

/// Without MPI: a failed host is reported with its index and seed, the shard's finished parts
/// survive, and `--resume` completes it to the same tables.
#[test]
fn failed_shard_is_named_and_recovers() {
    let d = tempfile::tempdir().unwrap();
    let cfg = tiny(d.path());
    let c = cfg.to_str().unwrap();
    let whole = d.path().join("whole.h5");
    let (code, _, err) = run_cli(&["run", c, "--out", whole.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    let s = d.path().join("s.h5");
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_retinue"))
        .env("HDF5_USE_FILE_LOCKING", "FALSE")
        .args(["run", c, "--threads", "1", "--out", s.to_str().unwrap()])
        .env("RETINUE_FAULT_HOST", "2")
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(1));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("host 2") && err.contains("master seed 3"),
        "{err}"
    );
    assert!(!s.exists());
    let (code, _, err) = run_cli(&["run", c, "--resume", "--out", s.to_str().unwrap()]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(store_tables(&whole), store_tables(&s));
}

/// Paired hosts under MPI: `mpirun -n 3` (three ranks, so that a pair's two hosts can fall to
/// different ranks, as with `--shard`) gives the same tables, bit for bit, as one process.
#[test]
fn mpi_ranks_keep_pairs_identical() {
    let Some(bin) = mpi_bin() else {
        return;
    };
    let d = tempfile::tempdir().unwrap();
    let cfg = crate::common::write(d.path(), "pairs.toml", super::cli_pairs::PAIRS);
    single_and_mpi(d.path(), &cfg, 3, &bin);
    assert!(d.path().join("mpi-report").join("pairs.csv").exists());
}
