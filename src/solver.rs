//! The library's entry point: one model in, one traced equilibrium path out.
//!
//! Every caller (the binary's `solve` and `bench`, `verify`, the tests and
//! the fuzz target) used to repeat the same set-up: assemble the [`System`],
//! analyse the pattern of its tangent once ([`Ldlt`]), wrap the factor in the
//! corrector's inverse tangent, size a [`crate::solve::Workspace`] and run a
//! [`crate::path::Tracer`]. [`Solver`] holds that set-up in one place (the
//! last three steps are [`crate::path::trace_whole`], which branch seeding
//! inside `path` calls directly) so the order of its pieces cannot drift
//! between callers.

use std::time::Instant;

use crate::assembly::{BuildError, System};
use crate::linalg::{Ldlt, LinalgError};
use crate::model::Model;
use crate::observe::Observer;
use crate::path::EquilibriumPath;
use crate::solve::{CorrectorConfig, StepRecord};

/// Why a model could not be set up for tracing.
#[derive(Debug, Clone, PartialEq)]
pub enum SetupError {
    /// A member could not be assembled (zero length, a prestress the section
    /// cannot carry, …): the model needs changing.
    Member(BuildError),
    /// The symbolic analysis of the tangent's pattern failed (memory, index
    /// range): nothing the model's author did wrong in the usual sense.
    Factor(LinalgError),
}

impl std::fmt::Display for SetupError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            SetupError::Member(e) if e.member.is_empty() => write!(f, "{}", e.message),
            SetupError::Member(e) => write!(f, "member \"{}\": {}", e.member, e.message),
            SetupError::Factor(e) => write!(f, "{e}"),
        }
    }
}

impl std::error::Error for SetupError {}

/// One model made ready to trace: its assembled system, the symbolic
/// factorization of its tangent and its corrector settings.
pub struct Solver<'m> {
    model: &'m Model,
    system: System,
    ldlt: Ldlt,
    corrector: CorrectorConfig,
    symbolic_seconds: f64,
}

/// A traced path together with the system it was traced on, which the
/// results and the report need to read member forces and node numbers.
pub struct Run {
    pub system: System,
    pub path: EquilibriumPath,
    /// Work done in attempts that were cut back, so totals stay honest.
    pub wasted: StepRecord,
}

impl<'m> Solver<'m> {
    /// Sets a model up with faer's global parallelism (what the binary uses;
    /// the thread count is set by `--threads`).
    pub fn new(model: &'m Model) -> Result<Self, SetupError> {
        Self::with_parallelism(model, faer::get_global_parallelism())
    }

    /// Sets a model up with the given parallelism for the factorization;
    /// `faer::Par::Seq` keeps a run on one thread.
    pub fn with_parallelism(model: &'m Model, par: faer::Par) -> Result<Self, SetupError> {
        let system = System::new(model).map_err(SetupError::Member)?;
        let started = Instant::now();
        let ldlt = Ldlt::new(&system.pattern, par).map_err(SetupError::Factor)?;
        let symbolic_seconds = started.elapsed().as_secs_f64();
        let corrector = CorrectorConfig::from_analysis(&model.analysis);
        Ok(Solver { model, system, ldlt, corrector, symbolic_seconds })
    }

    /// The assembled system (degrees of freedom, members, tangent pattern).
    pub fn system(&self) -> &System {
        &self.system
    }

    /// The model being solved.
    pub fn model(&self) -> &'m Model {
        self.model
    }

    /// Wall time of the symbolic analysis, s (for `bench`).
    pub fn symbolic_seconds(&self) -> f64 {
        self.symbolic_seconds
    }

    /// The system and the factor, for callers that time factorizations
    /// before the trace (`bench`); what they leave in the factor is
    /// overwritten by the trace's first factorization.
    pub fn system_and_factor(&mut self) -> (&System, &mut Ldlt) {
        (&self.system, &mut self.ldlt)
    }

    /// The corrector settings taken from the model's `[analysis]` table,
    /// for callers that study one setting against another.
    pub fn corrector_mut(&mut self) -> &mut CorrectorConfig {
        &mut self.corrector
    }

    /// Traces the path to the model's target (or to where it stops; see
    /// [`EquilibriumPath::stop`]). The observer sees every iteration and
    /// step and may stop the run, which keeps what it found.
    pub fn trace(self, observer: &mut dyn Observer) -> Run {
        let Solver { model, system, ldlt, corrector, .. } = self;
        let (path, wasted) = crate::path::trace_whole(&system, model, ldlt, corrector, observer);
        Run { system, path, wasted }
    }
}
