//! Helpers shared by the tests: fixture loading and tolerance checks.

#![allow(dead_code)]

use std::path::PathBuf;

use serde_json::Value;

/// Path of a file in tests/reference.
pub fn reference_path(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests")
        .join("reference")
        .join(name)
}

/// Load a JSON fixture from tests/reference.
pub fn fixture(name: &str) -> Value {
    let p = reference_path(name);
    let text = std::fs::read_to_string(&p).unwrap_or_else(|e| panic!("{}: {e}", p.display()));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("{}: {e}", p.display()))
}

/// A JSON array of numbers (null -> NaN).
pub fn floats(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap_or_else(|| panic!("not an array: {v}"))
        .iter()
        .map(|x| x.as_f64().unwrap_or(f64::NAN))
        .collect()
}

pub fn num(v: &Value) -> f64 {
    v.as_f64().unwrap_or_else(|| panic!("not a number: {v}"))
}

/// Assert |a/b - 1| <= tol, with a message naming what is compared.
#[track_caller]
pub fn assert_rel(what: &str, got: f64, want: f64, tol: f64) {
    let rel = (got / want - 1.0).abs();
    assert!(
        rel <= tol,
        "{what}: got {got:.8e}, reference {want:.8e}, relative difference {rel:.2e} > {tol:.1e}"
    );
}

/// Assert |a - b| <= tol.
#[track_caller]
pub fn assert_abs(what: &str, got: f64, want: f64, tol: f64) {
    let d = (got - want).abs();
    assert!(
        d <= tol,
        "{what}: got {got:.8e}, reference {want:.8e}, difference {d:.2e} > {tol:.1e}"
    );
}

/// Run the retinue binary; returns (exit code, stdout, stderr).
///
/// Every retinue started by the tests runs with HDF5's own file locking off
/// (`HDF5_USE_FILE_LOCKING=FALSE`): HDF5 opens files without close-on-exec and locks them with
/// flock, so a child started by one test thread inherits the descriptor, and the lock, of a
/// store another test thread has open in-process at that moment, and holds it until it ends.
/// A retinue of that other test then failed to open its own store now and then in the full
/// suite (seen twice on 2026-12-04). The tool's own writer lock files are unaffected.
pub fn run_cli(args: &[&str]) -> (i32, String, String) {
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_retinue"))
        .env("HDF5_USE_FILE_LOCKING", "FALSE")
        .args(args)
        .output()
        .expect("run retinue");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// Write `text` to `dir/name` and return its path.
pub fn write(dir: &std::path::Path, name: &str, text: &str) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p
}

/// Run the CLI and insist that it succeeds; its standard output.
/// The names of the entries of directory `dir`, sorted.
pub fn dir_names(dir: &std::path::Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

pub fn run_ok(args: &[&str]) -> String {
    let (code, out, err) = run_cli(args);
    assert_eq!(code, 0, "{args:?}: {err}");
    out
}

/// Every column of /hosts and /subhalos and every table of /histories of a run store, as f64
/// bit patterns (integers convert exactly): for comparing stores bit for bit.
pub fn store_tables(path: &std::path::Path) -> Vec<(String, Vec<u64>)> {
    let f = hdf5::File::open(path).unwrap();
    let mut out = Vec::new();
    for g in ["hosts", "subhalos", "histories"] {
        let grp = f.group(g).unwrap();
        let mut names = grp.member_names().unwrap();
        names.sort();
        for n in names {
            let v: Vec<f64> = grp.dataset(&n).unwrap().read_raw().unwrap();
            out.push((format!("{g}/{n}"), v.iter().map(|x| x.to_bits()).collect()));
        }
    }
    out
}

/// A small two-cell run (3 hosts each, coarse trees, quick tests) for the CLI tests of whole
/// runs (`cli_run`, `cli_safety`).
pub const TINY: &str = r#"
[run]
master_seed = 11
hosts_per_cell = 3
batch_hosts = 2
output = "tiny.h5"

[cosmology]
preset = "planck18"

[host]
mass_msun = [8e11, 1.2e12]

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
"#;
