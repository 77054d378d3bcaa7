//! Argument definitions and dispatch.

pub mod cosmo_args;
pub mod format;
pub mod linear;
#[cfg(feature = "mpi")]
pub mod mpi_run;
pub mod orbit;
pub mod run;
pub mod tree;

use clap::{Parser, Subcommand};

/// Mock satellite systems of Milky-Way-mass haloes from merger trees, and infall-time
/// statistics on them.
#[derive(Debug, Parser)]
#[command(name = "retinue", version, about, long_about = None)]
#[command(
    after_help = "Exit codes: 0 success, 1 a run failed, 2 bad usage, configuration or input."
)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Print linear-theory tables (CSV) to check a cosmology before a long run.
    #[command(subcommand)]
    Linear(linear::LinearCommand),
    /// Grow one merger tree (Parkinson, Cole & Helly 2008) and write it to HDF5.
    Tree(tree::TreeArgs),
    /// Integrate one test-particle orbit in the configured host potential (CSV).
    Orbit(orbit::OrbitArgs),
    /// Synthesise every host of a configuration, store them, run the tests, write the report.
    Run(run::RunArgs),
    /// Run the built-in demo (Milky-Way-mass hosts and an invented observed sample).
    Demo(run::DemoArgs),
    /// Validate a configuration without running it, and print the run's rough size (CPU time,
    /// wall time on this machine, store on disk).
    Check(run::CheckArgs),
    /// Join shard stores into one.
    Merge(run::MergeArgs),
    /// Run the infall tests on an existing store.
    Infall(run::InfallArgs),
    /// Draw the figures of an existing store.
    Plot(run::PlotArgs),
    /// Write a store's subhalo table, joined with its hosts, as one CSV file.
    Export(run::ExportArgs),
}

/// A command failure with its exit code.
#[derive(Debug)]
pub enum CliError {
    /// Bad usage, configuration or input (exit 2).
    Usage(String),
    /// A run failed (exit 1).
    Failed(anyhow::Error),
    /// A run failed and the reason was already printed (exit 1; only the MPI path needs it).
    #[cfg(feature = "mpi")]
    Reported,
}

impl std::fmt::Display for CliError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Self::Usage(s) => write!(f, "{s}"),
            Self::Failed(e) => write!(f, "{e:#}"),
            #[cfg(feature = "mpi")]
            Self::Reported => Ok(()),
        }
    }
}

impl CliError {
    pub fn exit_code(&self) -> u8 {
        match self {
            Self::Usage(_) => 2,
            Self::Failed(_) => 1,
            #[cfg(feature = "mpi")]
            Self::Reported => 1,
        }
    }
}

pub fn run(cli: Cli) -> Result<(), CliError> {
    match cli.command {
        Command::Linear(c) => linear::run(c),
        Command::Tree(a) => tree::run(a),
        Command::Orbit(a) => orbit::run(a),
        Command::Run(a) => run::run(a),
        Command::Demo(a) => run::demo(a),
        Command::Check(a) => run::check(a),
        Command::Merge(a) => run::merge(a),
        Command::Infall(a) => run::infall(a),
        Command::Plot(a) => run::plot(a),
        Command::Export(a) => run::export(a),
    }
}
