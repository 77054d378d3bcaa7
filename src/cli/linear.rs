//! `retinue linear background|sigma`: CSV tables of the background and of sigma(M).

use std::io::Write;
use std::path::PathBuf;

use clap::{Args, Subcommand};

use super::cosmo_args::CosmoArgs;
use super::format::{parse_list, sig7};
use super::CliError;
use retinue::linear::{delta_c_nfw97, delta_vir_crit};
use retinue::massfunction::{dn_dlnm_mpc3, PressSchechter, ShethTormen};

#[derive(Debug, Subcommand)]
pub enum LinearCommand {
    /// Background quantities at a list of redshifts.
    #[command(
        after_help = "Example:\n  retinue linear background --preset planck18 --redshifts 0,0.5,1,2\n\n\
Columns: z, e_z = H(z)/H0, age_gyr (cosmic time), lookback_gyr, rho_crit_msun_kpc3 (physical),\n\
omega_m, growth (D normalised to 1 today), delta_c (with the weak Omega_m dependence of\n\
Navarro, Frenk & White 1997), delta_vir_crit (Bryan & Norman 1998, w.r.t. critical)."
    )]
    Background(BackgroundArgs),
    /// sigma(M), its slope and the Press–Schechter and Sheth–Tormen mass functions.
    #[command(
        after_help = "Example:\n  retinue linear sigma --preset planck18 --masses 1e8,1e10,1e12 --transfer eh98 --z 0\n\n\
Columns: mass_msun (physical Msun), radius_kpc (comoving Lagrangian radius of the window),\n\
sigma (at --z), dlnsigma_dlnm, dndlnm_ps_mpc3 and dndlnm_st_mpc3 (per comoving Mpc^3, with the\n\
constant delta_c = 1.68647 unless the config sets delta_c = \"nfw97\")."
    )]
    Sigma(SigmaArgs),
}

#[derive(Debug, Args)]
pub struct BackgroundArgs {
    #[command(flatten)]
    pub cosmo: CosmoArgs,
    /// Comma-separated redshifts, each > -1.
    #[arg(long, value_name = "LIST", allow_hyphen_values = true)]
    pub redshifts: String,
}

#[derive(Debug, Args)]
pub struct SigmaArgs {
    #[command(flatten)]
    pub cosmo: CosmoArgs,
    /// Comma-separated masses in physical Msun.
    #[arg(long, value_name = "LIST", allow_hyphen_values = true)]
    pub masses: String,
    /// Transfer function: eh98, eh98-nowiggle, bbks, or table (with --transfer-table).
    #[arg(long)]
    pub transfer: Option<String>,
    /// Two-column file of k and T(k) or P(k) (header `# k_unit: h/Mpc` and `# columns: k,T`).
    #[arg(long = "transfer-table", value_name = "FILE")]
    pub transfer_table: Option<PathBuf>,
    /// Window of sigma(M): top-hat or sharp-k.
    #[arg(long)]
    pub filter: Option<String>,
    /// Redshift of sigma and of the mass functions.
    #[arg(long, default_value_t = 0.0, allow_negative_numbers = true)]
    pub z: f64,
}

pub fn run(cmd: LinearCommand) -> Result<(), CliError> {
    match cmd {
        LinearCommand::Background(a) => background(a),
        LinearCommand::Sigma(a) => sigma(a),
    }
}

fn check_z(flag: &str, z: f64) -> Result<(), CliError> {
    if !(z > -1.0 && z <= 1e4) {
        return Err(CliError::Usage(format!(
            "{flag} = {z} is not allowed: redshifts must be in (-1, 1e4]"
        )));
    }
    if z < 0.0 {
        return Err(CliError::Usage(format!(
            "{flag} = {z} is not allowed: tables cover z >= 0 (the past) only"
        )));
    }
    Ok(())
}

fn background(a: BackgroundArgs) -> Result<(), CliError> {
    let zs = parse_list("--redshifts", &a.redshifts).map_err(CliError::Usage)?;
    for &z in &zs {
        check_z("--redshifts", z)?;
    }
    let lt = a.cosmo.linear_theory(None, None, None)?;
    let c = lt.cosmology();
    let mut out = std::io::stdout().lock();
    let mut w = |s: String| writeln!(out, "{s}").map_err(|e| CliError::Failed(e.into()));
    w(
        "z,e_z,age_gyr,lookback_gyr,rho_crit_msun_kpc3,omega_m,growth,delta_c,delta_vir_crit"
            .into(),
    )?;
    for z in zs {
        w([
            sig7(z),
            sig7(c.e_z(z)),
            sig7(c.age_gyr(z)),
            sig7(c.lookback_gyr(z)),
            sig7(c.rho_crit_msun_kpc3(z)),
            sig7(c.omega_m_z(z)),
            sig7(c.growth(z)),
            sig7(delta_c_nfw97(c.omega_m_z(z))),
            sig7(delta_vir_crit(c, z)),
        ]
        .join(","))?;
    }
    Ok(())
}

fn sigma(a: SigmaArgs) -> Result<(), CliError> {
    let ms = parse_list("--masses", &a.masses).map_err(CliError::Usage)?;
    check_z("--z", a.z)?;
    let lt = a.cosmo.linear_theory(
        a.transfer.as_deref(),
        a.transfer_table.as_ref(),
        a.filter.as_deref(),
    )?;
    let (lo, hi) = lt.sigma_table().mass_range_msun();
    for &m in &ms {
        if !(m >= lo && m <= hi) {
            return Err(CliError::Usage(format!(
                "--masses: {m:e} is not allowed: masses must be in [{lo:.1e}, {hi:.1e}] Msun"
            )));
        }
    }
    let mut out = std::io::stdout().lock();
    let mut w = |s: String| writeln!(out, "{s}").map_err(|e| CliError::Failed(e.into()));
    w("mass_msun,radius_kpc,sigma,dlnsigma_dlnm,dndlnm_ps_mpc3,dndlnm_st_mpc3".into())?;
    for m in ms {
        w([
            sig7(m),
            sig7(lt.sigma_table().radius_mpc(m) * 1e3),
            sig7(lt.sigma(m, a.z)),
            sig7(lt.dln_sigma_dln_m(m)),
            sig7(dn_dlnm_mpc3(&lt, &PressSchechter, m, a.z)),
            sig7(dn_dlnm_mpc3(&lt, &ShethTormen::default(), m, a.z)),
        ]
        .join(","))?;
    }
    Ok(())
}
