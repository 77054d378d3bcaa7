//! The `retinue` command line: parses arguments, calls the library, prints results.
//! Exit codes: 0 success; 1 a run failed; 2 bad usage, configuration or input.

mod cli;

use std::process::ExitCode;

use clap::Parser;

fn main() -> ExitCode {
    restore_sigpipe();
    clean_up_on_interrupt();
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

/// On SIGINT (Ctrl-C) or SIGTERM, remove the temporary files being written
/// (`retinue::io::remove_temporary_files`: a store's `.NAME.partial`, the copy `infall` writes
/// its analysis into), then end by that signal as before. The two signals are blocked in every
/// thread and taken by one thread that waits for them, so the removal runs as ordinary code,
/// not inside a signal handler.
#[cfg(unix)]
fn clean_up_on_interrupt() {
    // SAFETY: called in main before any other thread exists, so every thread started later
    // inherits the blocked mask; the set is initialised by sigemptyset before use.
    let set = unsafe {
        let mut set: libc::sigset_t = std::mem::zeroed();
        libc::sigemptyset(&mut set);
        libc::sigaddset(&mut set, libc::SIGINT);
        libc::sigaddset(&mut set, libc::SIGTERM);
        if libc::pthread_sigmask(libc::SIG_BLOCK, &set, std::ptr::null_mut()) != 0 {
            return;
        }
        set
    };
    let spawned = std::thread::Builder::new()
        .name("interrupt".into())
        .spawn(move || {
            let mut sig: libc::c_int = 0;
            // SAFETY: `set` is a valid signal set and `sig` a valid place for the result.
            if unsafe { libc::sigwait(&set, &mut sig) } != 0 {
                return;
            }
            retinue::io::remove_temporary_files();
            let note = retinue::io::interrupt_note();
            if !note.is_empty() {
                eprintln!("\ninterrupted: {note}");
            }
            // end by the signal itself (exit status as before): its default action, unblocked
            // in this thread
            // SAFETY: plain calls on a valid signal number and signal set.
            unsafe {
                libc::signal(sig, libc::SIG_DFL);
                libc::pthread_sigmask(libc::SIG_UNBLOCK, &set, std::ptr::null_mut());
                libc::raise(sig);
            }
            std::process::exit(128 + sig);
        });
    if spawned.is_err() {
        // no thread to take them: the signals end the program as before
        // SAFETY: as above.
        unsafe {
            libc::pthread_sigmask(libc::SIG_UNBLOCK, &set, std::ptr::null_mut());
        }
    }
}

#[cfg(not(unix))]
fn clean_up_on_interrupt() {}
