//! Shared helpers: load a model from text, trace its path, read results.
#![allow(dead_code)]

use tautline::assembly::System;
use tautline::model::{self, Method, Model};
use tautline::observe::Silent;
use tautline::path::EquilibriumPath;
use tautline::solve::StepRecord;
use tautline::Solver;

pub struct Run {
    pub model: Model,
    pub system: System,
    pub path: EquilibriumPath,
    pub wasted: StepRecord,
}

/// Loads a model from TOML text; panics with the diagnostics if invalid.
pub fn model(text: &str) -> Model {
    match model::load_str(text, "test.toml", None) {
        Ok(m) => m,
        Err(e) => panic!("test model is invalid:\n{e}"),
    }
}

/// Traces the path of a model with the given corrector.
pub fn trace(m: Model, method: Method) -> Run {
    let mut m = m;
    m.analysis.method = method;
    let solver = Solver::with_parallelism(&m, faer::Par::Seq).expect("model sets up");
    let tautline::Run { system, path, wasted } = solver.trace(&mut Silent);
    Run { model: m, system, path, wasted }
}

pub fn solve_text(text: &str) -> Run {
    let m = model(text);
    let method = m.analysis.method;
    trace(m, method)
}

/// Relative difference with a floor, so values near zero compare absolutely.
pub fn rel_err(actual: f64, expected: f64, floor: f64) -> f64 {
    (actual - expected).abs() / expected.abs().max(floor)
}

pub const ALL_METHODS: [Method; 5] =
    [Method::Newton, Method::ModifiedNewton, Method::Broyden, Method::BroydenBad, Method::Bfgs];

/// VERIFICATION case 4: a straight cable of two 5 m halves (EA = 1e6 N,
/// pretension 1e4 N, engineering strain) with a 1000 N midspan load, in 4
/// load steps at a relative tolerance of 1e-13.
pub use tautline::verify::PRETENSIONED_CABLE;

/// Two cables A–C–B on a line, prestressed to 1 kN, pulled sideways at C by
/// 4.4 kN per unit load factor: the left cable goes slack during the path
/// (invented for the tests). `watch` is the `[analysis]` line that follows
/// the steps (empty for none).
pub fn slackening_pair(watch: &str) -> String {
    format!(
        "[[section]]\nname = \"r\"\nEA = 1.0e5\n\
         [[node]]\nid = \"A\"\nat = [0.0, 0.0, 0.0]\nfix = \"xyz\"\n\
         [[node]]\nid = \"C\"\nat = [2.0, 0.0, 0.0]\nfix = \"yz\"\n\
         [[node]]\nid = \"B\"\nat = [4.0, 0.0, 0.0]\nfix = \"xyz\"\n\
         [[member]]\nid = \"left\"\nkind = \"cable\"\nends = [\"A\", \"C\"]\nsection = \"r\"\nprestress = 1000.0\n\
         [[member]]\nid = \"right\"\nkind = \"cable\"\nends = [\"C\", \"B\"]\nsection = \"r\"\nprestress = 1000.0\n\
         [[load]]\nnode = \"C\"\nforce = [4400.0, 0.0, 0.0]\n\
         [analysis]\nstrain = \"engineering\"\nsteps = 10\n{watch}"
    )
}
