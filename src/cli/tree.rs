//! `retinue tree`: grow one merger tree, write it to HDF5 and print a summary.

use std::path::PathBuf;
use std::time::Instant;

use clap::Args;

use super::cosmo_args::CosmoArgs;
use super::format::parse_list;
use super::CliError;
use retinue::halo::concentration::{concentration, ConcentrationModel};
use retinue::halo::definitions::convert_nfw;
use retinue::halo::MassDefinition;
use retinue::io::tree_file::{write_tree, TreeMeta};
use retinue::rng::{host_rng, HostId, Stream, GENERATOR};
use retinue::trees::{HostHistory, OutputTimes, Pch08Params, TreeBuilder, TreeSpec};

#[derive(Debug, Args)]
#[command(
    after_help = "Example:\n  retinue tree --preset planck18 --mass 1.2e12 --resolution 3e7 --seed 7 --out tree.h5\n\n\
The file holds /nodes, /main_branch and /accretions (columns in docs/output-format.md)."
)]
pub struct TreeArgs {
    #[command(flatten)]
    pub cosmo: CosmoArgs,
    /// Window of sigma(M) the trees are grown with: top-hat (default) or sharp-k (for warm dark
    /// matter).
    #[arg(long)]
    pub filter: Option<String>,
    /// Host mass at --z-final, Msun (physical), in the definition of --mass-definition.
    #[arg(long, allow_negative_numbers = true)]
    pub mass: f64,
    /// Mass definition of --mass: vir (Bryan & Norman 1998), 200c, 200m, 500c. Trees are in
    /// virial mass; other definitions are converted with an NFW profile and the Dutton &
    /// Maccio 2014 concentration.
    #[arg(long = "mass-definition", default_value = "vir")]
    pub mass_definition: String,
    /// Mass resolution, Msun: smaller progenitors are smooth accretion.
    #[arg(long, allow_negative_numbers = true)]
    pub resolution: f64,
    /// Master seed.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Host index (selects the random stream; trees for different indices differ).
    #[arg(long = "host-index", default_value_t = 0)]
    pub host_index: u32,
    /// Redshift of the host mass.
    #[arg(long = "z-final", default_value_t = 0.0, allow_negative_numbers = true)]
    pub z_final: f64,
    /// Follow branches back to this redshift.
    #[arg(long = "z-max", default_value_t = 20.0, allow_negative_numbers = true)]
    pub z_max: f64,
    /// Number of steps between z-final and z-max, uniform in ln a (steps + 1 output times,
    /// both ends included).
    #[arg(long, default_value_t = 64, conflicts_with = "output_redshifts")]
    pub outputs: usize,
    /// Output redshifts instead of --outputs (comma-separated).
    #[arg(long = "output-redshifts", value_name = "LIST")]
    pub output_redshifts: Option<String>,
    /// Plain extended Press–Schechter (G0 = 1, gamma1 = gamma2 = 0) instead of PCH08.
    #[arg(long)]
    pub eps: bool,
    /// PCH08 G0 (default 0.57).
    #[arg(long, allow_negative_numbers = true)]
    pub g0: Option<f64>,
    /// PCH08 gamma1 (default 0.38).
    #[arg(long, allow_negative_numbers = true)]
    pub gamma1: Option<f64>,
    /// PCH08 gamma2 (default -0.01).
    #[arg(long, allow_negative_numbers = true)]
    pub gamma2: Option<f64>,
    /// Output HDF5 file.
    #[arg(long)]
    pub out: PathBuf,
    /// Replace the output file if it exists.
    #[arg(long)]
    pub overwrite: bool,
}

pub fn run(a: TreeArgs) -> Result<(), CliError> {
    if a.out.is_dir() {
        return Err(CliError::Usage(format!(
            "--out {} is a directory, not a file: give a file name (e.g. tree.h5)",
            a.out.display()
        )));
    }
    if let Some(p) = super::run::missing_parent(&a.out) {
        return Err(CliError::Usage(format!("--out {}: {p}", a.out.display())));
    }
    if a.out.exists() && !a.overwrite {
        return Err(CliError::Usage(format!(
            "--out {} exists: refusing to replace it (add --overwrite to replace it)",
            a.out.display()
        )));
    }
    let lt = a.cosmo.linear_theory(None, None, a.filter.as_deref())?;
    if lt.options().m_wdm_kev.is_some() && lt.options().filter == retinue::linear::Filter::TopHat {
        eprintln!(
            "warning: warm dark matter with the top-hat filter: the tree keeps spurious small \
             haloes below the half-mode mass; add --filter sharp-k"
        );
    }
    let mdef = MassDefinition::parse(&a.mass_definition).ok_or_else(|| {
        CliError::Usage(format!(
            "--mass-definition = {} is not allowed: expected one of {}",
            a.mass_definition,
            MassDefinition::NAMES.join(", ")
        ))
    })?;
    if !(a.mass > 0.0 && a.mass.is_finite()) {
        return Err(CliError::Usage(format!(
            "--mass = {} is not allowed: must be a positive mass in Msun",
            a.mass
        )));
    }
    let m_vir = if mdef == MassDefinition::Vir {
        a.mass
    } else {
        let c = concentration(
            &lt,
            ConcentrationModel::DuttonMaccio14,
            a.mass,
            a.z_final,
            mdef,
        );
        convert_nfw(
            lt.cosmology(),
            a.mass,
            c,
            a.z_final,
            mdef,
            MassDefinition::Vir,
        )
        .0
    };
    let mut p = if a.eps {
        Pch08Params::eps()
    } else {
        Pch08Params::default()
    };
    if let Some(v) = a.g0 {
        p.g0 = v;
    }
    if let Some(v) = a.gamma1 {
        p.gamma1 = v;
    }
    if let Some(v) = a.gamma2 {
        p.gamma2 = v;
    }
    let outputs = match &a.output_redshifts {
        Some(s) => {
            OutputTimes::Redshifts(parse_list("--output-redshifts", s).map_err(CliError::Usage)?)
        }
        None => OutputTimes::UniformLnA(a.outputs),
    };
    let spec = TreeSpec {
        m_host_msun: m_vir,
        z_final: a.z_final,
        m_resolution_msun: a.resolution,
        z_max: a.z_max,
        outputs,
        pch08: p,
    };
    let flag = |key: &str| match key {
        "trees.host_mass_msun" => "--mass".to_string(),
        "trees.resolution_msun" => "--resolution".to_string(),
        "trees.output_steps" => "--outputs".to_string(),
        k => format!("--{}", k.trim_start_matches("trees.").replace('_', "-")),
    };
    let problems = spec.problems("trees.");
    if !problems.is_empty() {
        return Err(CliError::Usage(
            problems
                .into_iter()
                .map(|mut p| {
                    p.key = flag(&p.key);
                    p.to_string()
                })
                .collect::<Vec<_>>()
                .join("\n"),
        ));
    }
    let t0 = Instant::now();
    let mut builder = TreeBuilder::new(p).map_err(|e| CliError::Usage(e.to_string()))?;
    let mut rng = host_rng(a.seed, HostId::new(0, 0, a.host_index), Stream::Tree);
    let tree = builder.build(&lt, &spec, &mut rng).map_err(|mut e| {
        e.key = flag(&e.key);
        CliError::Usage(e.to_string())
    })?;
    let hist = HostHistory::from_tree(tree);
    let elapsed = t0.elapsed();
    let meta = TreeMeta {
        cosmology_toml: toml::to_string(&lt.cosmology().params).unwrap_or_default(),
        linear_toml: toml::to_string(lt.options()).unwrap_or_default(),
        pch08_toml: toml::to_string(&p).unwrap_or_default(),
        seed: a.seed,
        host_index: a.host_index,
        generator: GENERATOR.to_string(),
        mass_definition: "vir (Bryan & Norman 1998)".to_string(),
        z_max: a.z_max,
    };
    let path = write_tree(&a.out, tree, &hist, &meta).map_err(|e| CliError::Failed(e.into()))?;
    let n1 = hist.first_order().count();
    println!("tree written to {}", path.display());
    if mdef != MassDefinition::Vir {
        println!(
            "host mass: {:.4e} Msun ({}) = {:.4e} Msun (vir)",
            a.mass,
            mdef.name(),
            m_vir
        );
    } else {
        println!("host mass: {:.4e} Msun (vir)", m_vir);
    }
    println!("nodes: {}, branches: {}", tree.n_nodes(), tree.n_branches());
    println!(
        "accretions above the resolution ({:.3e} Msun): {} of all orders, {} first-order",
        a.resolution,
        hist.accretions.len(),
        n1
    );
    println!(
        "z_half: {:.3} (t = {:.3} Gyr)",
        hist.z_half, hist.t_half_gyr
    );
    println!("time: {:.1} ms", elapsed.as_secs_f64() * 1e3);
    Ok(())
}
