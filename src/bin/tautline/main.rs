//! The command-line front end: clap arguments → run settings → library calls
//! → exit code. It knows nothing of mechanics.

mod args;
mod bench;
mod json;
mod progress;
mod relax;
mod run;
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
}

fn main() -> ExitCode {
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
        Err(run::Failure::BadInput(msg)) => {
            eprintln!("{msg}");
            if !msg.contains("nothing was written") {
                eprintln!("nothing was written");
            }
            exit::BAD_INPUT
        }
        Err(run::Failure::Model(errors)) => {
            let msg = errors.to_string();
            eprintln!("{msg}");
            if !msg.contains("nothing was written") {
                eprintln!("nothing was written");
            }
            exit::BAD_INPUT
        }
        Err(run::Failure::Internal(e)) => {
            eprintln!("internal error: {e:#}");
            exit::INTERNAL
        }
    };
    ExitCode::from(code)
}
