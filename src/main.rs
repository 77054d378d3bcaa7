//! The `retinue` command line: parses arguments, calls the library, prints results.
//! Exit codes: 0 success; 1 a run failed; 2 bad usage, configuration or input.

mod cli;

use std::process::ExitCode;

use clap::Parser;

fn main() -> ExitCode {
    restore_sigpipe();
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

/// The Rust runtime ignores SIGPIPE, so printing into a closed pipe (`retinue check | head`)
/// would panic; restore the default action (end quietly, as other command-line tools do).
#[cfg(unix)]
fn restore_sigpipe() {
    // SAFETY: called first thing in main, before any other thread exists; setting a signal's
    // disposition to its default has no other effect on the program's state.
    unsafe {
        libc::signal(libc::SIGPIPE, libc::SIG_DFL);
    }
}

#[cfg(not(unix))]
fn restore_sigpipe() {}
