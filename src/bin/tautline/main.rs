//! The command-line front end: clap arguments → run settings → library calls
//! → exit code. It knows nothing of mechanics.

mod args;
mod bench;
mod json;
mod progress;
mod relax;
mod run;
mod shared;
mod threads;

use clap::Parser;
use std::process::ExitCode;

/// Exit codes of the contract.
pub mod exit {
    pub const DONE: u8 = 0;
    pub const INTERNAL: u8 = 1;
    pub const BAD_INPUT: u8 = 2;
    pub const STOPPED: u8 = 3;
    /// `verify`: a built-in case did not match its closed form.
    pub const VERIFY_FAILED: u8 = 4;
    pub const INTERRUPTED: u8 = 130;
    /// The reader of stdout went away (`tautline solve … | head`): 128 +
    /// SIGPIPE, what a shell reports for a writer stopped by a closed pipe.
    pub const BROKEN_PIPE: u8 = 141;
}

/// Whether a panic payload is the standard library's report of a write to a
/// closed stdout or stderr pipe (`println!` panics on it, since Rust ignores
/// SIGPIPE).
fn is_broken_pipe(payload: &str) -> bool {
    payload.starts_with("failed printing to std") && payload.contains("Broken pipe")
}

fn panic_text(info: &(dyn std::any::Any + Send)) -> &str {
    info.downcast_ref::<String>().map(String::as_str).or_else(|| info.downcast_ref::<&str>().copied()).unwrap_or("")
}

/// A closed pipe ends the program quietly: every output file is committed
/// before the summary is printed, so nothing is lost but the lines no one
/// reads. Any other panic keeps the default report.
fn quiet_on_broken_pipe() {
    let default = std::panic::take_hook();
    std::panic::set_hook(Box::new(move |info| {
        if !is_broken_pipe(panic_text(info.payload())) {
            default(info);
        }
    }));
}

fn main() -> ExitCode {
    quiet_on_broken_pipe();
    match std::panic::catch_unwind(run_cli) {
        Ok(code) => code,
        Err(payload) if is_broken_pipe(panic_text(payload.as_ref())) => ExitCode::from(exit::BROKEN_PIPE),
        Err(_) => ExitCode::from(exit::INTERNAL),
    }
}

fn run_cli() -> ExitCode {
    let cli = args::Cli::parse();
    if let Err(msg) = threads::configure(cli.threads) {
        eprintln!("{msg}\nnothing was written");
        return ExitCode::from(exit::BAD_INPUT);
    }
    let format = cli.command.format();
    let code = match run::run(cli) {
        Ok(code) => code,
        Err(failure) if format == args::Format::Json => {
            let code = failure.exit_code();
            println!("{}", json::failure(&failure, code));
            code
        }
        Err(shared::Failure::BadInput(msg)) => {
            // The same "error: …" start as a model file's problems.
            if msg.starts_with("error:") {
                eprintln!("{msg}");
            } else {
                eprintln!("error: {msg}");
            }
            if !msg.contains("nothing was written") {
                eprintln!("nothing was written");
            }
            exit::BAD_INPUT
        }
        Err(shared::Failure::Model(errors)) => {
            let msg = errors.to_string();
            eprintln!("{msg}");
            if !msg.contains("nothing was written") {
                eprintln!("nothing was written");
            }
            exit::BAD_INPUT
        }
        Err(shared::Failure::Internal(e)) => {
            eprintln!("internal error: {e:#}");
            exit::INTERNAL
        }
    };
    ExitCode::from(code)
}
