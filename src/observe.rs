//! Typed events from the solver and the path tracer. The library never
//! prints: a terminal progress display, a recorder or a Ctrl-C flag are
//! observers, and any of them may answer [`Answer::Stop`].

/// An observer's answer.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Answer {
    Continue,
    Stop,
}

/// One corrector iteration.
#[derive(Clone, Copy, Debug)]
pub struct IterEvent {
    pub step: usize,
    pub iteration: usize,
    pub lambda: f64,
    /// ‖r‖ / force scale.
    pub relative_residual: f64,
    pub refactored: bool,
    pub line_search_trials: usize,
}

/// One converged step.
#[derive(Clone, Copy, Debug)]
pub struct StepEvent {
    pub step: usize,
    pub lambda: f64,
    pub iterations: usize,
    /// The controlled displacement, m.
    pub point_displacement: f64,
    pub negative_pivots: usize,
}

pub trait Observer {
    fn on_iteration(&mut self, _ev: &IterEvent) -> Answer {
        Answer::Continue
    }
    fn on_step(&mut self, _ev: &StepEvent) -> Answer {
        Answer::Continue
    }
}

/// Observes nothing.
pub struct Silent;
impl Observer for Silent {}
