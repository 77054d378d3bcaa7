//! The `retinue` command line: parses arguments, calls the library, prints results.
//! Exit codes: 0 success; 1 a run failed; 2 bad usage, configuration or input.

mod cli;

use std::process::ExitCode;

use clap::Parser;

fn main() -> ExitCode {
    let args = cli::Cli::parse();
    match cli::run(args) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            let code = e.exit_code();
            for line in e.to_string().lines() {
                eprintln!("error: {line}");
            }
            ExitCode::from(code)
        }
    }
}
