//! The progress bar of a long run, on stderr: step, load factor, iterations
//! and elapsed time. indicatif draws nothing when stderr is not a terminal
//! (`ProgressDrawTarget::stderr` checks), and `--quiet` hides it outright.
//! It observes the tracer and passes every event on to the next observer
//! (the Ctrl-C flag), whose answer it returns.

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use tautline::model::{Analysis, Control};
use tautline::observe::{Answer, IterEvent, Observer, StepEvent};

/// Bar positions per whole run.
const TICKS: u64 = 1000;

pub struct Progress<'a, O: Observer> {
    bar: ProgressBar,
    control: Control,
    /// Target load factor, or target displacement (m) under displacement control.
    target: f64,
    iterations: usize,
    next: &'a mut O,
}

impl<'a, O: Observer> Progress<'a, O> {
    pub fn new(analysis: &Analysis, quiet: bool, next: &'a mut O) -> Self {
        let target = if quiet { ProgressDrawTarget::hidden() } else { ProgressDrawTarget::stderr() };
        let bar = ProgressBar::with_draw_target(Some(TICKS), target);
        let style = ProgressStyle::with_template("{elapsed_precise} [{bar:30}] {msg}")
            .unwrap_or_else(|_| ProgressStyle::default_bar())
            .progress_chars("=> ");
        bar.set_style(style);
        Progress { bar, control: analysis.control, target: analysis.target, iterations: 0, next }
    }

    /// Share of the way to the target, 0..1.
    fn share(&self, lambda: f64, point: f64) -> f64 {
        let done = if self.control == Control::Displacement { point } else { lambda };
        let s = done / self.target;
        if s.is_finite() { s.clamp(0.0, 1.0) } else { 0.0 }
    }

    /// Clears the bar from the terminal.
    pub fn finish(&self) {
        self.bar.finish_and_clear();
    }
}

impl<O: Observer> Observer for Progress<'_, O> {
    fn on_iteration(&mut self, ev: &IterEvent) -> Answer {
        self.iterations += 1;
        self.bar.set_message(format!(
            "step {}  λ = {:.6}  iteration {}  residual {:.1e}  ({} iterations)",
            ev.step, ev.lambda, ev.iteration, ev.relative_residual, self.iterations
        ));
        self.next.on_iteration(ev)
    }

    fn on_step(&mut self, ev: &StepEvent) -> Answer {
        self.bar.set_position((self.share(ev.lambda, ev.point_displacement) * TICKS as f64) as u64);
        self.bar.set_message(format!(
            "step {} converged  λ = {:.6}  {} iterations  ({} in all)",
            ev.step, ev.lambda, ev.iterations, self.iterations
        ));
        self.next.on_step(ev)
    }
}
