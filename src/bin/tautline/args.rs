//! Command-line arguments as written (the "low" arguments).

use clap::{Args, Parser, Subcommand};
use std::path::PathBuf;

#[derive(Parser, Debug)]
#[command(name = "tautline", version, about = "Large-displacement equilibrium of cable nets and pin-jointed trusses")]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Subcommand, Debug)]
pub enum Command {
    /// Read and validate a model; print its summary or every problem found
    Check {
        /// Model file (TOML)
        model: PathBuf,
    },
    /// Trace the load-deflection path of a model and write results to DIR
    Solve {
        /// Model file (TOML)
        model: PathBuf,
        /// Output folder (created if missing)
        #[arg(short = 'o', long = "out", value_name = "DIR")]
        out: PathBuf,
        #[command(flatten)]
        overrides: Overrides,
    },
    /// Solve the embedded demo model (a prestressed saddle net under snow)
    Demo {
        /// Output folder
        #[arg(short = 'o', long = "out", value_name = "DIR", default_value = "tautline-demo")]
        out: PathBuf,
    },
}

/// Overrides of the model's `[analysis]` table.
#[derive(Args, Debug, Default, Clone)]
pub struct Overrides {
    /// Corrector: newton | modified-newton | broyden | broyden-bad | bfgs
    #[arg(long)]
    pub method: Option<String>,
    /// Path control: load | displacement | arc-length
    #[arg(long)]
    pub control: Option<String>,
    /// Number of equal increments to the target
    #[arg(long)]
    pub steps: Option<usize>,
    /// Target load factor (or controlled displacement, model length units)
    #[arg(long, allow_negative_numbers = true)]
    pub target: Option<f64>,
    /// First arc length (arc-length control), model length units
    #[arg(long)]
    pub arc: Option<f64>,
    /// Strain measure: green | engineering
    #[arg(long)]
    pub strain: Option<String>,
    /// Relative residual tolerance
    #[arg(long)]
    pub tolerance: Option<f64>,
    /// Largest number of steps
    #[arg(long = "max-steps")]
    pub max_steps: Option<usize>,
    /// Watched displacement NODE.DIR (repeatable; replaces the model's watch list)
    #[arg(long = "watch", value_name = "NODE.DIR")]
    pub watch: Vec<String>,
}
