//! `retinue orbit`: one test-particle orbit in the configured host potential, as CSV.

use std::io::Write;
use std::path::PathBuf;

use clap::Args;

use super::format::{parse_list, sig7};
use super::CliError;
use retinue::config::RunConfig;
use retinue::host::median::median_host;
use retinue::host::EvolvingHost;
use retinue::orbits::{integrate_test_particle, Tolerances};
use retinue::{Cosmology, LinearTheory};

#[derive(Debug, Args)]
#[command(
    after_help = "Example:\n  retinue orbit --config configs/milky-way.toml --pos 50,0,10 --vel 0,120,40 --gyr 8\n\n\
The host is the configured halo (mass history: the median of Correa et al. 2015 ending at\n\
[host] mass_msun) with its disc and bulge. Without --static the orbit runs from --gyr before\n\
z_final to z_final in the evolving host and t_gyr is cosmic time; with --static the potential\n\
is frozen at z_final and t_gyr counts from 0. Pericentres and apocentres go to stderr."
)]
pub struct OrbitArgs {
    /// Run configuration (TOML) defining [cosmology] and [host].
    #[arg(long)]
    pub config: PathBuf,
    /// Initial position x,y,z in kpc (host-centred, disc in the x-y plane).
    #[arg(long, allow_hyphen_values = true)]
    pub pos: String,
    /// Initial velocity vx,vy,vz in km/s.
    #[arg(long, allow_hyphen_values = true)]
    pub vel: String,
    /// Duration in Gyr.
    #[arg(long, allow_negative_numbers = true)]
    pub gyr: f64,
    /// Freeze the potential at z_final.
    #[arg(long = "static")]
    pub fixed: bool,
    /// Output interval in Gyr.
    #[arg(long, default_value_t = 0.01, allow_negative_numbers = true)]
    pub dt: f64,
    /// Relative tolerance of the integrator.
    #[arg(long, default_value_t = 1e-10, allow_negative_numbers = true)]
    pub rtol: f64,
}

fn vec3(flag: &str, s: &str) -> Result<[f64; 3], CliError> {
    let v = parse_list(flag, s).map_err(CliError::Usage)?;
    if v.len() != 3 {
        return Err(CliError::Usage(format!(
            "{flag} = {s} is not allowed: expected three comma-separated numbers"
        )));
    }
    Ok([v[0], v[1], v[2]])
}

pub fn run(a: OrbitArgs) -> Result<(), CliError> {
    let cfg = RunConfig::from_file(&a.config).map_err(|e| CliError::Usage(e.to_string()))?;
    let x0 = vec3("--pos", &a.pos)?;
    let v0 = vec3("--vel", &a.vel)?;
    if x0 == [0.0; 3] {
        return Err(CliError::Usage(
            "--pos = 0,0,0 is not allowed: the host centre is singular".into(),
        ));
    }
    let cosmo =
        Cosmology::new(cfg.cosmology.clone()).map_err(|e| CliError::Usage(e.to_string()))?;
    let lt =
        LinearTheory::new(cosmo, cfg.linear.clone()).map_err(|e| CliError::Usage(e.to_string()))?;
    let z_final = cfg.file.host.z_final;
    let t_final = lt.cosmology().age_gyr(z_final);
    let max_gyr = if a.fixed { 100.0 } else { t_final - 0.2 };
    if !(a.gyr > 0.0 && a.gyr <= max_gyr) {
        return Err(CliError::Usage(format!(
            "--gyr = {} is not allowed: must be in (0, {max_gyr:.2}] Gyr{}",
            a.gyr,
            if a.fixed {
                ""
            } else {
                " (from the universe's age at 0.2 Gyr to z_final)"
            }
        )));
    }
    if !(a.dt > 0.0 && a.dt <= a.gyr) {
        return Err(CliError::Usage(format!(
            "--dt = {} is not allowed: must be in (0, --gyr]",
            a.dt
        )));
    }
    if !(1e-14..=1e-3).contains(&a.rtol) {
        return Err(CliError::Usage(format!(
            "--rtol = {} is not allowed: must be in [1e-14, 1e-3]",
            a.rtol
        )));
    }
    let t_start = t_final - a.gyr;
    let evolving = median_host(
        &lt,
        cfg.host_mass_msun,
        cfg.host_mass_definition,
        z_final,
        &cfg.host,
        t_start.min(t_final - 1e-3),
    );
    let (host, t0, t1) = if a.fixed {
        (EvolvingHost::fixed(evolving.snapshot(t_final)), 0.0, a.gyr)
    } else {
        (evolving, t_start, t_final)
    };
    let tol = Tolerances {
        rtol: a.rtol,
        atol_pos_kpc: a.rtol * 1e-2,
        atol_vel_kpc_gyr: a.rtol * 1e-2,
    };
    let (track, peri, apo) = integrate_test_particle(&host, x0, v0, t0, t1, a.dt, tol);
    let mut out = std::io::stdout().lock();
    let mut w = |s: String| writeln!(out, "{s}").map_err(|e| CliError::Failed(e.into()));
    w("t_gyr,x_kpc,y_kpc,z_kpc,vx_kms,vy_kms,vz_kms".into())?;
    for (t, y) in &track {
        w(std::iter::once(sig7(*t))
            .chain(y.iter().map(|v| sig7(*v)))
            .collect::<Vec<_>>()
            .join(","))?;
    }
    let s = host.snapshot(t1);
    eprintln!(
        "host at the end: M_vir = {:.4e} Msun, R_vir = {:.1} kpc, v_c(8 kpc) = {:.1} km/s",
        s.m_vir,
        s.r_vir,
        s.v_circ_kms(8.0)
    );
    eprintln!("pericentres (t_gyr, r_kpc): {}", fmt_events(&peri));
    eprintln!("apocentres (t_gyr, r_kpc): {}", fmt_events(&apo));
    Ok(())
}

fn fmt_events(e: &[(f64, f64)]) -> String {
    if e.is_empty() {
        return "none".into();
    }
    e.iter()
        .map(|(t, r)| format!("({:.3}, {:.2})", t, r))
        .collect::<Vec<_>>()
        .join(" ")
}
