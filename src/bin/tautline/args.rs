//! Command-line arguments as written (the "low" arguments).

use clap::{Args, Parser, Subcommand};
use std::path::PathBuf;

#[derive(Parser, Debug)]
#[command(name = "tautline", version, about = "Large-displacement equilibrium of cable nets and pin-jointed trusses")]
pub struct Cli {
    /// No progress bar; `solve` and `demo` print only the outcome line, the
    /// files written and the caution (the other commands print as usual)
    #[arg(short, long, global = true)]
    pub quiet: bool,
    /// Threads that assemble the residual and tangent (default: TAUTLINE_THREADS,
    /// else every core); the sparse factorization always runs on one thread
    #[arg(long, global = true, value_name = "N")]
    pub threads: Option<usize>,
    #[command(subcommand)]
    pub command: Command,
}

// One value per process, parsed once: the size of its largest variant
// (`solve`'s options) costs nothing worth boxing for.
#[allow(clippy::large_enum_variant)]
#[derive(Subcommand, Debug)]
pub enum Command {
    /// Read and validate a model; print its summary or every problem found
    Check {
        /// Model file (TOML)
        model: PathBuf,
        /// Print the summary or the errors as text or as one JSON object on stdout
        #[arg(long, value_enum, default_value_t = Format::Text)]
        format: Format,
    },
    /// Trace the load-deflection path of a model and write results to DIR
    Solve {
        /// Model file (TOML)
        model: PathBuf,
        /// Output folder (created if missing)
        #[arg(short = 'o', long = "out", value_name = "DIR")]
        out: PathBuf,
        /// Overwrite DIR even if it holds the results of another model
        #[arg(long)]
        force: bool,
        /// Print the summary or the errors as text or as one JSON object on stdout
        #[arg(long, value_enum, default_value_t = Format::Text)]
        format: Format,
        /// Also write path.png, shape.png and convergence.png
        #[arg(long)]
        png: bool,
        /// Also draw mode.svg: the first mode of critical point N (1-based,
        /// in results.json order) on the shape at that point
        #[arg(long, value_name = "N")]
        plot_mode: Option<usize>,
        /// Load file ([[load]] tables, optionally [units] and loads_csv) whose
        /// loads become the reference load, stepped from load factor 0 to the
        /// target; the model's own loads are held constant at their
        /// start_load_factor value (a formed model's form-finding loads)
        #[arg(long = "loads", value_name = "FILE")]
        loads: Option<PathBuf>,
        #[command(flatten)]
        report: ReportArgs,
        #[command(flatten)]
        overrides: Overrides,
    },
    /// Find the shape of a prestressed cable net by the force density method;
    /// write DIR/formed.toml (ready to solve) and DIR/form.csv
    Form {
        /// Model file (TOML) with force densities per member or in [form]
        model: PathBuf,
        /// Output folder (created if missing)
        #[arg(short = 'o', long = "out", value_name = "DIR")]
        out: PathBuf,
        /// force-density | relax (overrides [form] method)
        #[arg(long)]
        method: Option<String>,
    },
    /// Find the static equilibrium at one load factor by dynamic relaxation
    /// (an independent check of `solve`); write DIR/relax.csv
    Relax {
        /// Model file (TOML)
        model: PathBuf,
        /// Output folder (created if missing)
        #[arg(short = 'o', long = "out", value_name = "DIR")]
        out: PathBuf,
        /// Load factor (default: [analysis] target under load control, else 1)
        #[arg(long = "load-factor", allow_negative_numbers = true)]
        load_factor: Option<f64>,
        /// Relative residual tolerance (default: [analysis] tolerance)
        #[arg(long)]
        tolerance: Option<f64>,
        /// Largest number of time steps
        #[arg(long = "max-steps", default_value_t = 1_000_000)]
        max_steps: usize,
    },
    /// Write a parametric model file (saddle cable net or shallow lattice dome)
    Generate {
        #[command(subcommand)]
        what: Generate,
    },
    /// Compare the correctors on generated saddle nets (wall time, factorizations, memory)
    Bench(BenchArgs),
    #[command(hide = true)]
    BenchRun(BenchRunArgs),
    /// Solve the embedded demo model (a prestressed saddle net under snow)
    Demo {
        /// Output folder
        #[arg(short = 'o', long = "out", value_name = "DIR", default_value = "tautline-demo")]
        out: PathBuf,
        /// Also write path.png, shape.png and convergence.png
        #[arg(long)]
        png: bool,
        #[command(flatten)]
        report: ReportArgs,
    },
    /// Run the built-in textbook cases against their closed forms; print the
    /// table (exit 4 if any case fails)
    Verify {
        /// Output format: text | json
        #[arg(long, default_value = "text")]
        format: String,
    },
}

/// What the report's pictures draw.
#[derive(Args, Debug, Clone)]
pub struct ReportArgs {
    /// Colour the shape by force or by utilisation (force ÷ capacity);
    /// default: utilisation when every member has a capacity, else force
    #[arg(long = "colour-by", value_enum, value_name = "WHAT")]
    pub colour_by: Option<ColourByArg>,
    /// Draw the shape panels as raster images above this many members
    /// (vector lines up to it)
    #[arg(long = "raster-above", value_name = "MEMBERS", default_value_t = tautline::report::plot::RASTER_ABOVE_MEMBERS)]
    pub raster_above: usize,
    /// Also draw the shape at a kept step (e.g. 12) or at a critical point
    /// (critical:N); repeatable; writes shape_stepN.svg or shape_criticalN.svg
    #[arg(long = "shape-at", value_name = "STEP|critical:N", value_parser = parse_shape_at)]
    pub shape_at: Vec<tautline::report::figures::ShapeAt>,
}

fn parse_shape_at(s: &str) -> Result<tautline::report::figures::ShapeAt, String> {
    tautline::report::figures::ShapeAt::parse(s)
}

#[derive(clap::ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum ColourByArg {
    /// Axial force, on a scale spanning the forces present
    Force,
    /// Force ÷ capacity; over-capacity members heavy black
    Utilisation,
}

impl ReportArgs {
    /// The figure options, with the mode drawing of `--plot-mode`.
    pub fn figures(&self, plot_mode: Option<usize>) -> tautline::report::figures::FigureOptions {
        use tautline::report::plot::ColourBy;
        tautline::report::figures::FigureOptions {
            raster_above: self.raster_above,
            colour_by: self.colour_by.map(|c| match c {
                ColourByArg::Force => ColourBy::Force,
                ColourByArg::Utilisation => ColourBy::Utilisation,
            }),
            shape_at: self.shape_at.clone(),
            plot_mode,
        }
    }
}

/// How `check` and `solve` print their summary or errors.
#[derive(clap::ValueEnum, Clone, Copy, Debug, Default, PartialEq, Eq)]
pub enum Format {
    /// Lines for people (errors on stderr)
    #[default]
    Text,
    /// One JSON object on stdout, for scripts
    Json,
}

impl Command {
    /// The output format asked for (text for the commands without the option).
    pub fn format(&self) -> Format {
        match self {
            Command::Check { format, .. } | Command::Solve { format, .. } => *format,
            _ => Format::Text,
        }
    }
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
    /// Steps whose whole displacement field goes to fields.csv: auto | all |
    /// ends | none, or step numbers separated by commas (e.g. 0,5,10)
    #[arg(long = "keep-fields", value_name = "POLICY")]
    pub keep_fields: Option<String>,
    /// Watched displacement NODE.DIR (repeatable; replaces the model's watch list)
    #[arg(long = "watch", value_name = "NODE.DIR")]
    pub watch: Vec<String>,
    /// Leave the path at its Nth bifurcation (1-based) along the bifurcation
    /// mode and follow the secondary branch (overrides [analysis] switch_at)
    #[arg(long = "switch-at", value_name = "N")]
    pub switch_at: Option<usize>,
}

#[derive(Subcommand, Debug)]
pub enum Generate {
    /// A pretensioned hyperbolic-paraboloid cable net; edge nodes fixed (or on springs),
    /// a downward reference load on every free node, watching the centre node's z
    Net {
        /// Nodes along x
        #[arg(long)]
        nx: usize,
        /// Nodes along y
        #[arg(long)]
        ny: usize,
        /// Plan size along x, m
        #[arg(long, default_value_t = 20.0)]
        span_x: f64,
        /// Plan size along y, m
        #[arg(long, default_value_t = 20.0)]
        span_y: f64,
        /// Saddle height parameter, m
        #[arg(long, default_value_t = 2.0)]
        rise: f64,
        /// Cable force density of the prestress, N/m
        #[arg(long, default_value_t = 2000.0)]
        force_density: f64,
        /// Cable axial rigidity EA, N
        #[arg(long, default_value_t = 2.0e7)]
        ea: f64,
        /// Downward reference load on the plan, N/m², spread to the free nodes by
        /// tributary plan area (600: a light snow load)
        #[arg(long, value_name = "P", default_value_t = 600.0, allow_negative_numbers = true)]
        load: f64,
        /// Instead of --load: this downward reference load on every free node, N
        #[arg(long, value_name = "N", allow_negative_numbers = true, conflicts_with = "load")]
        node_load: Option<f64>,
        /// Hold the edge nodes by springs of this stiffness (N/m) instead of supports
        #[arg(long, value_name = "K")]
        elastic_edge: Option<f64>,
        /// Write node, member and load tables to CSV files above this many nodes
        #[arg(long, default_value_t = 2000)]
        csv_threshold: usize,
        /// Model file to write (CSV tables go beside it)
        #[arg(short = 'o', long = "out", value_name = "FILE")]
        out: PathBuf,
    },
    /// A shallow lattice dome of triangulated bars with a crown load, watching the crown's z
    Dome {
        /// Rings of nodes around the crown
        #[arg(long)]
        rings: usize,
        /// Nodes per ring
        #[arg(long)]
        sectors: usize,
        /// Plan radius, m
        #[arg(long, default_value_t = 10.0)]
        radius: f64,
        /// Crown height above the supported ring, m
        #[arg(long, default_value_t = 1.0)]
        rise: f64,
        /// Bar axial rigidity EA, N
        #[arg(long, default_value_t = 1.0e8)]
        ea: f64,
        /// Downward reference load on the plan, N/m², spread to the free nodes by
        /// tributary plan area (600: a light snow load)
        #[arg(long, value_name = "P", default_value_t = 600.0, allow_negative_numbers = true)]
        load: f64,
        /// Instead of --load: this downward reference load on every free node, N
        #[arg(long, value_name = "N", allow_negative_numbers = true, conflicts_with = "load")]
        node_load: Option<f64>,
        /// Downward reference load at the crown, N, added to the other loads
        #[arg(long, value_name = "N", default_value_t = 0.0, allow_negative_numbers = true)]
        crown_load: f64,
        /// Write node, member and load tables to CSV files above this many nodes
        #[arg(long, default_value_t = 2000)]
        csv_threshold: usize,
        /// Model file to write (CSV tables go beside it)
        #[arg(short = 'o', long = "out", value_name = "FILE")]
        out: PathBuf,
    },
}

/// `bench --case`: how hard the nets are loaded.
#[derive(clap::ValueEnum, Clone, Copy, Debug, PartialEq)]
pub enum BenchCase {
    /// 60 N/m² on the plan: cable forces change by well over 50 % and no
    /// cable of the default net slackens
    Easy,
    /// A heavy plan load under which the arching cables next to the edges
    /// go slack along the path
    Hard,
}

impl BenchCase {
    /// The plan pressure of the case, N/m².
    pub fn pressure(self) -> f64 {
        match self {
            BenchCase::Easy => 60.0,
            BenchCase::Hard => HARD_PRESSURE,
        }
    }
}

/// The hard bench case's plan load, N/m².
pub const HARD_PRESSURE: f64 = 600.0;

#[derive(Args, Debug, Clone)]
pub struct BenchArgs {
    /// Approximate free DOF counts of the nets to run
    #[arg(long, value_delimiter = ',', default_values_t = vec![10_000usize, 100_000, 300_000])]
    pub dofs: Vec<usize>,
    /// Correctors to compare
    #[arg(long, value_delimiter = ',', default_values_t = vec!["newton".to_string(), "modified-newton".into(), "broyden".into(), "bfgs".into()])]
    pub methods: Vec<String>,
    /// Load steps of each path
    #[arg(long, default_value_t = 10)]
    pub steps: usize,
    /// Relative residual tolerance
    #[arg(long, default_value_t = 1e-8)]
    pub tolerance: f64,
    /// Keep the quasi-Newton correctors' step-start refactorization and
    /// per-step stability check (by default they carry their factor across
    /// steps and count pivots only when they refactor)
    #[arg(long)]
    pub check_every_step: bool,
    /// The loading: easy (60 N/m² on the plan, every cable taut) or hard
    /// (HARD_PRESSURE on the plan: the edge cables go slack)
    #[arg(long, value_enum, default_value_t = BenchCase::Easy)]
    pub case: BenchCase,
    /// Reference load as a pressure on the plan, N/m² (each free node carries
    /// its tributary area), instead of the case's
    #[arg(long)]
    pub pressure: Option<f64>,
    /// Steps whose fields the timed fields.csv holds: all | ends | none
    #[arg(long = "keep-fields", default_value = "ends")]
    pub keep_fields: String,
}

#[derive(Args, Debug, Clone)]
pub struct BenchRunArgs {
    pub model: PathBuf,
    pub method: String,
    pub steps: usize,
    pub tolerance: f64,
    pub u_out: PathBuf,
    #[arg(long)]
    pub check_every_step: bool,
    #[arg(long = "keep-fields", default_value = "ends")]
    pub keep_fields: String,
}
