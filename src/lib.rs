//! tautline: large-displacement equilibrium of pin-jointed trusses and cable nets.
//!
//! # A tour
//!
//! A [`model::Model`] is read from TOML ([`model::load`] for a file,
//! [`model::load_str`] for text) and validated on the way in. A [`Solver`]
//! assembles its [`assembly::System`] (free degrees of freedom, members,
//! the sparsity pattern of the tangent) and analyses that pattern once;
//! [`Solver::trace`] then follows the equilibrium path with the corrector
//! and the control the model's `[analysis]` table names, and returns a
//! [`Run`]: the [`path::EquilibriumPath`] (converged points, critical points,
//! why it stopped) with the system it was traced on. [`results::build`]
//! turns a run into the numbers the binary writes, and [`report`] writes
//! them. The library does no I/O while solving: progress and Ctrl-C reach
//! the tracer through an [`observe::Observer`], which may stop a run.
//!
//! A pretensioned cable of two 5 m halves with a point load at midspan,
//! checked for vertical equilibrium at the midspan node (derived: each half
//! carries its force F along its chord of length l, so 2·F·|w|/l = P):
//!
//! ```
//! use tautline::{model, observe::Silent, path::StopReason, Solver};
//!
//! let text = r#"
//! [[section]]
//! name = "rope"
//! EA = 1.0e6
//! [[node]]
//! id = "A"
//! at = [0.0, 0.0, 0.0]
//! fix = "xyz"
//! [[node]]
//! id = "M"
//! at = [5.0, 0.0, 0.0]
//! fix = "y"
//! [[node]]
//! id = "B"
//! at = [10.0, 0.0, 0.0]
//! fix = "xyz"
//! [[member]]
//! id = "a"
//! kind = "cable"
//! ends = ["A", "M"]
//! section = "rope"
//! prestress = 1.0e4
//! [[member]]
//! id = "b"
//! kind = "cable"
//! ends = ["M", "B"]
//! section = "rope"
//! prestress = 1.0e4
//! [[load]]
//! node = "M"
//! force = [0.0, 0.0, -1000.0]
//! [analysis]
//! steps = 4
//! "#;
//! let m = model::load_str(text, "cable.toml", None).expect("a valid model");
//! let run = Solver::new(&m).expect("the model sets up").trace(&mut Silent);
//! assert_eq!(run.path.stop, StopReason::TargetReached);
//!
//! let u = &run.path.final_state.u;
//! let w = run.system.dofs.displacement(u, 1, 2); // node M, z
//! let force = run.system.member_results(u)[0].force;
//! let chord = (25.0 + w * w).sqrt();
//! assert!(w < 0.0, "the load pulls M down");
//! assert!((2.0 * force * w.abs() / chord - 1000.0).abs() < 1e-6 * 1000.0);
//! ```
pub mod assembly;
pub mod element;
pub mod model;
pub mod linalg;
pub mod observe;
pub mod solve;
pub mod path;
pub mod generate;
pub mod results;
pub mod report;
pub mod form;
pub mod verify;
pub mod screen;
pub mod solver;

pub use solver::{Run, SetupError, Solver};
pub mod csv;
