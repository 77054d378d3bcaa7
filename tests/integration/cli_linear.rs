//! `retinue linear`: exact columns, values, and one-line errors with exit code 2.

use crate::common::{assert_rel, run_cli};

fn rows(stdout: &str) -> Vec<Vec<f64>> {
    stdout
        .lines()
        .skip(1)
        .map(|l| l.split(',').map(|v| v.parse::<f64>().unwrap()).collect())
        .collect()
}

#[test]
fn background_columns_and_values() {
    let (code, out, err) = run_cli(&[
        "linear",
        "background",
        "--preset",
        "planck18",
        "--redshifts",
        "0,0.5,1,2",
    ]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(
        out.lines().next().unwrap(),
        "z,e_z,age_gyr,lookback_gyr,rho_crit_msun_kpc3,omega_m,growth,delta_c,delta_vir_crit"
    );
    let r = rows(&out);
    assert_eq!(r.len(), 4);
    // astropy 8.0.2 FlatLambdaCDM(H0=67.66, Om0=0.3111, Tcmb0=2.7255, Neff=3.046, m_nu=0):
    // age(1) = 5.850576 Gyr (tests/reference/background.json); printed to 7 digits.
    assert_rel("age(z=1)", r[2][2], 5.850576, 2e-6);
    // Bryan & Norman 1998 Delta_vir at z = 0 for Omega_m = 0.3111: 102.6543 (colossus 1.4.0
    // mass_so.deltaVir(0), physics reference sheet).
    assert_rel("Delta_vir(0)", r[0][8], 102.6543, 1e-6);
    assert_eq!(r[0][6], 1.0);
}

#[test]
fn sigma_columns_and_values() {
    let (code, out, err) = run_cli(&[
        "linear",
        "sigma",
        "--preset",
        "planck18",
        "--masses",
        "1e8,1e10,1e12",
        "--transfer",
        "eh98",
        "--z",
        "0",
    ]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(
        out.lines().next().unwrap(),
        "mass_msun,radius_kpc,sigma,dlnsigma_dlnm,dndlnm_ps_mpc3,dndlnm_st_mpc3"
    );
    let r = rows(&out);
    assert_eq!(r.len(), 3);
    // sigma(1e12 Msun) vs colossus 1.4.0 (tests/reference/linear.json, planck18, z=0): 2.227...
    let lin = crate::common::fixture("linear.json");
    let want = crate::common::floats(&lin["cosmologies"]["planck18"]["sigma"]["sigma_z0"]);
    let masses = crate::common::floats(&lin["cosmologies"]["planck18"]["sigma"]["mass_msun"]);
    let i = masses.iter().position(|&m| m == 1e12).unwrap();
    assert_rel("sigma(1e12)", r[2][2], want[i], 5e-3);
}

#[test]
fn flags_give_the_same_as_the_preset() {
    let a = run_cli(&["linear", "sigma", "--preset", "wmap9", "--masses", "1e9"]);
    let b = run_cli(&[
        "linear",
        "sigma",
        "--h",
        "0.6932",
        "--omega-m",
        "0.2865",
        "--omega-b",
        "0.0463",
        "--sigma8",
        "0.82",
        "--ns",
        "0.9608",
        "--masses",
        "1e9",
    ]);
    assert_eq!(a.0, 0);
    assert_eq!(a.1, b.1);
}

#[test]
fn config_file_cosmology_table() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("run.toml");
    let sigma_of = |p: &std::path::Path| {
        run_cli(&[
            "linear",
            "sigma",
            "--config",
            p.to_str().unwrap(),
            "--masses",
            "1e12",
        ])
    };
    std::fs::write(
        &p,
        "[cosmology]\npreset = \"planck18\"\nsigma8 = 0.75\n\n[other]\nanything = 1\n",
    )
    .unwrap();
    let (code, out, err) = sigma_of(&p);
    assert_eq!(code, 0, "{err}");
    let (_, base, _) = run_cli(&[
        "linear", "sigma", "--preset", "planck18", "--masses", "1e12",
    ]);
    let s_mod = rows(&out)[0][2];
    let s_base = rows(&base)[0][2];
    // sigma scales linearly with sigma8
    assert_rel("sigma ratio", s_mod / s_base, 0.75 / 0.8102, 1e-6);

    std::fs::write(&p, "[cosmology]\npreset = \"planck18\"\nsigma_8 = 0.75\n").unwrap();
    let (code, _, err) = sigma_of(&p);
    assert_eq!(code, 2);
    assert!(err.contains("sigma_8"), "{err}");

    // every bad key of the table at once, one line each
    std::fs::write(
        &p,
        "[run]\nhosts_per_cell = 2\n\n[cosmology]\npreset = \"planck18\"\nsigma_8 = 0.75\n\
         omega_m = \"0.3\"\nh = 0.7 km\n",
    )
    .unwrap();
    let (code, _, err) = sigma_of(&p);
    assert_eq!(code, 2);
    for key in ["cosmology.sigma_8", "cosmology.omega_m", "cosmology.h"] {
        assert_eq!(
            err.lines().filter(|l| l.contains(key)).count(),
            1,
            "{key}: {err}"
        );
    }
    // a sweep's list of cosmologies: the first one is used
    std::fs::write(
        &p,
        "[[cosmology]]\npreset = \"planck18\"\nsigma8 = 0.75\n\n[[cosmology]]\npreset = \"wmap9\"\n",
    )
    .unwrap();
    let (code, out, err) = sigma_of(&p);
    assert_eq!(code, 0, "{err}");
    assert_rel("first of a sweep", rows(&out)[0][2], s_mod, 1e-12);
}

/// Each bad input: exit code 2, and an error line that names the flag and the allowed range.
#[test]
fn bad_values_are_named() {
    let base = ["linear", "sigma", "--masses", "1e10"];
    let cases: &[(&[&str], &str, &str)] = &[
        (
            &[
                "--h",
                "0.7",
                "--omega-m",
                "0",
                "--omega-b",
                "0.04",
                "--sigma8",
                "0.8",
                "--ns",
                "0.96",
            ],
            "--omega-m",
            "(0, 1.5]",
        ),
        (
            &[
                "--h",
                "0.7",
                "--omega-m",
                "0.3",
                "--omega-b",
                "0.04",
                "--sigma8",
                "-0.8",
                "--ns",
                "0.96",
            ],
            "--sigma8",
            "(0, 3]",
        ),
        (
            &[
                "--h",
                "1.7",
                "--omega-m",
                "0.3",
                "--omega-b",
                "0.04",
                "--sigma8",
                "0.8",
                "--ns",
                "0.96",
            ],
            "--h",
            "(0.2, 1.5]",
        ),
        (
            &[
                "--h",
                "0.2",
                "--omega-m",
                "0.3",
                "--omega-b",
                "0.04",
                "--sigma8",
                "0.8",
                "--ns",
                "0.96",
            ],
            "--h",
            "(0.2, 1.5]",
        ),
        (&["--preset", "nonesuch"], "--preset", "planck18"),
        (
            &["--preset", "planck18", "--m-wdm-kev", "0.01"],
            "--m-wdm-kev",
            "[0.1, 100]",
        ),
        (&["--preset", "planck18", "--w", "0"], "--w", "[-3, -1/3)"),
        (
            &["--preset", "planck18", "--transfer", "magic"],
            "--transfer",
            "eh98",
        ),
        (&["--h", "0.7"], "--omega-m", "required"),
        (&[], "no cosmology given", "--preset"),
    ];
    for (extra, flag, range) in cases {
        let mut args: Vec<&str> = base.to_vec();
        args.extend_from_slice(extra);
        let (code, out, err) = run_cli(&args);
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(out.is_empty(), "{args:?} printed {out}");
        assert!(err.contains(flag) && err.contains(range), "{args:?}: {err}");
        assert!(!err.contains("panicked"), "{args:?}: {err}");
    }
}

#[test]
fn bad_lists_are_named() {
    let (code, _, err) = run_cli(&[
        "linear",
        "background",
        "--preset",
        "planck18",
        "--redshifts",
        "0,abc",
    ]);
    assert_eq!(code, 2);
    assert!(err.contains("--redshifts") && err.contains("abc"), "{err}");
    assert_eq!(err.lines().count(), 1, "{err}");
    let (code, _, err) = run_cli(&[
        "linear", "sigma", "--preset", "planck18", "--masses", "1e30",
    ]);
    assert_eq!(code, 2);
    assert!(err.contains("--masses"), "{err}");
    let (code, _, err) = run_cli(&[
        "linear",
        "background",
        "--preset",
        "planck18",
        "--redshifts",
        "-1.5",
    ]);
    assert_eq!(code, 2);
    assert!(err.contains("--redshifts"), "{err}");
}

/// The example config shipped in configs/ is accepted as it is.
#[test]
fn shipped_example_config_is_valid() {
    let p = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/configs/cosmology-example.toml"
    );
    let (code, out, err) = run_cli(&["linear", "sigma", "--config", p, "--masses", "1e9"]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(out.lines().count(), 2);
}

/// `retinue orbit`: a circular orbit at 8 kpc in the static shipped host stays at 8 kpc, the
/// CSV columns are exact, and bad vectors are named.
#[test]
fn orbit_command() {
    let cfg = concat!(env!("CARGO_MANIFEST_DIR"), "/configs/milky-way.toml");
    // circular speed at 8 kpc in the static potential, from a first short run's stderr
    let (code, _, err) = run_cli(&[
        "orbit", "--config", cfg, "--pos", "8,0,0", "--vel", "0,200,0", "--gyr", "0.1", "--static",
    ]);
    assert_eq!(code, 0, "{err}");
    let vc: f64 = err
        .split("v_c(8 kpc) = ")
        .nth(1)
        .and_then(|s| s.split_whitespace().next())
        .and_then(|s| s.parse().ok())
        .expect("v_c printed");
    let v = format!("0,{vc},0");
    let (code, out, err) = run_cli(&[
        "orbit", "--config", cfg, "--pos", "8,0,0", "--vel", &v, "--gyr", "2", "--static", "--dt",
        "0.25",
    ]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(
        out.lines().next().unwrap(),
        "t_gyr,x_kpc,y_kpc,z_kpc,vx_kms,vy_kms,vz_kms"
    );
    for row in rows(&out) {
        let r = (row[1] * row[1] + row[2] * row[2] + row[3] * row[3]).sqrt();
        // v_c is printed to 0.1 km/s, so the orbit is circular to ~1e-3
        assert!((r - 8.0).abs() < 0.05, "r = {r}");
    }
    let (code, _, err) = run_cli(&[
        "orbit", "--config", cfg, "--pos", "8,0", "--vel", "0,200,0", "--gyr", "1",
    ]);
    assert_eq!(code, 2);
    assert!(err.contains("--pos"), "{err}");
    let (code, _, err) = run_cli(&[
        "orbit", "--config", cfg, "--pos", "8,0,0", "--vel", "0,200,0", "--gyr", "20",
    ]);
    assert_eq!(code, 2);
    assert!(err.contains("--gyr"), "{err}");
}

/// A reader that stops early (`retinue orbit ... | head -1`): the command ends quietly when its
/// output pipe closes (SIGPIPE's default action), without the panic "failed printing to
/// stdout" of the Rust runtime's default. The orbit writes ~10 MB, far more than a pipe holds,
/// so it is still writing when the pipe closes.
#[test]
fn closed_output_pipe_ends_quietly() {
    use std::io::{BufRead, BufReader};
    use std::process::{Command, Stdio};
    let cfg = concat!(env!("CARGO_MANIFEST_DIR"), "/configs/milky-way.toml");
    let mut child = Command::new(env!("CARGO_BIN_EXE_retinue"))
        .env("HDF5_USE_FILE_LOCKING", "FALSE")
        .args([
            "orbit", "--config", cfg, "--pos", "8,0,0", "--vel", "0,200,0", "--gyr", "10",
            "--static", "--dt", "0.0001",
        ])
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let mut first = String::new();
    BufReader::new(child.stdout.take().unwrap())
        .read_line(&mut first)
        .unwrap();
    assert!(first.contains("t_gyr"), "{first}");
    // the reader is dropped here: the pipe closes while the command still writes
    let out = child.wait_with_output().unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(!err.contains("panicked"), "{err}");
    assert_ne!(out.status.code(), Some(101), "{err}");
}
