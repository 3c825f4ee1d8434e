//! Many equilibrium states: the load-deflection path.
//!
//! The [`Tracer`] steps the load factor λ (load control) or a chosen
//! displacement (displacement control, Batoz & Dhatt 1979), calls the
//! corrector once per step, halves a step that does not converge (a bounded
//! number of times), and records every converged state with the inertia of its
//! tangent. Not reaching the target is a [`StopReason`], never an error.
//!
//! ## Reference
//! J.-L. Batoz and G. Dhatt, "Incremental displacement algorithms for
//! nonlinear problems", Int. J. Numer. Meth. Eng. 14 (1979).

pub mod constraints;

use crate::assembly::System;
use crate::model::{Control, Model, NodeDir};
use crate::observe::{Control as Answer, Observer, StepEvent};
use crate::solve::{self, CorrectorConfig, FixedLoad, State, StepRecord, Termination, Workspace};
use constraints::PrescribedDisplacement;

/// Why the path ended.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum StopReason {
    /// λ (or the controlled displacement) reached the target.
    TargetReached,
    /// |u| at the controlled point reached `max_displacement`.
    MaxDisplacement,
    /// `max_steps` steps were taken.
    MaxSteps,
    /// A step did not converge even after the allowed halvings.
    NoConvergence,
    /// The tangent is singular at a converged state: the structure is a mechanism.
    Mechanism,
    /// An observer (Ctrl-C, a time budget) asked to stop.
    Interrupted,
}

impl StopReason {
    pub fn name(self) -> &'static str {
        match self {
            StopReason::TargetReached => "target_reached",
            StopReason::MaxDisplacement => "max_displacement",
            StopReason::MaxSteps => "max_steps",
            StopReason::NoConvergence => "no_convergence",
            StopReason::Mechanism => "mechanism",
            StopReason::Interrupted => "interrupted",
        }
    }

    /// Whether the run did what was asked.
    pub fn is_complete(self) -> bool {
        matches!(self, StopReason::TargetReached | StopReason::MaxDisplacement)
    }
}

/// One converged state of the path.
#[derive(Clone, Debug)]
pub struct PathPoint {
    pub step: usize,
    pub lambda: f64,
    /// Displacements of the watched DOFs, m.
    pub watched: Vec<f64>,
    /// Displacement of the controlled point, m.
    pub point: f64,
    pub record: StepRecord,
    pub relative_residual: f64,
    /// Negative pivots of the tangent at this state.
    pub negative_pivots: usize,
}

/// Directions free to move without resistance.
#[derive(Clone, Debug, PartialEq)]
pub struct Mechanism {
    /// Node directions with the largest share of the null vector, largest first.
    pub moving: Vec<NodeDir>,
    /// λ at which it was found.
    pub lambda: f64,
}

/// The whole path.
#[derive(Clone, Debug)]
pub struct Path {
    pub points: Vec<PathPoint>,
    pub stop: StopReason,
    /// Displacements at the last converged state, free DOFs, m.
    pub final_state: State,
    pub mechanism: Option<Mechanism>,
    /// What the last failed step was doing, for the stop message.
    pub last_failure: Option<Failure>,
    pub n_cutbacks: usize,
}

/// A step that failed for good.
#[derive(Clone, Debug)]
pub struct Failure {
    pub step: usize,
    /// λ the step was trying to reach.
    pub lambda_tried: f64,
    pub termination: Termination,
    pub relative_residual: f64,
    /// Node directions with zero pivots, when the tangent was singular.
    pub zero_pivot_dirs: Vec<NodeDir>,
}

impl Path {
    pub fn totals(&self) -> (usize, usize, usize) {
        let mut t = (0, 0, 0);
        for p in &self.points {
            t.0 += p.record.iterations;
            t.1 += p.record.factorizations;
            t.2 += p.record.residual_evaluations;
        }
        t
    }
}

/// Follows the path of one model.
pub struct Tracer<'a> {
    pub system: &'a System,
    pub model: &'a Model,
    pub corrector: CorrectorConfig,
    /// Extra work done in failed attempts, so totals stay honest.
    pub wasted: StepRecord,
}

/// Finds the node directions of a mechanism: one solve with the regularized
/// factorization amplifies the null direction of the singular tangent
/// (inverse iteration, one step from a uniform start, then one more).
pub fn find_mechanism(system: &System, ws: &mut Workspace, state: &State) -> Vec<NodeDir> {
    let mut k = system.new_tangent_values();
    let mut r = vec![0.0; system.n_free()];
    let mut react = vec![0.0; state.reactions.len()];
    system.residual_and_tangent(&state.u, state.lambda, &mut r, &mut react, &mut k);
    ws.h.ldlt.factorize_regularized(&system.pattern, &k);
    ws.fresh = false;
    let n = system.n_free();
    // A start vector with no special symmetry.
    let mut x: Vec<f64> = (0..n).map(|i| 1.0 + ((i * 7919) % 13) as f64 * 0.01).collect();
    for _ in 0..2 {
        ws.h.ldlt.solve_in_place(&mut x);
        let norm = x.iter().map(|v| v * v).sum::<f64>().sqrt();
        if !(norm > 0.0 && norm.is_finite()) {
            return Vec::new();
        }
        x.iter_mut().for_each(|v| *v /= norm);
    }
    let max = x.iter().map(|v| v.abs()).fold(0.0, f64::max);
    let mut moving: Vec<(f64, usize)> =
        x.iter().enumerate().filter(|(_, v)| v.abs() >= 0.5 * max).map(|(i, v)| (v.abs(), i)).collect();
    moving.sort_by(|a, b| b.0.total_cmp(&a.0));
    moving.truncate(8);
    moving.into_iter().map(|(_, d)| system.dofs.owner(d)).collect()
}

fn add_records(into: &mut StepRecord, from: &StepRecord) {
    into.iterations += from.iterations;
    into.factorizations += from.factorizations;
    into.residual_evaluations += from.residual_evaluations;
    into.line_search_trials += from.line_search_trials;
}

impl<'a> Tracer<'a> {
    pub fn new(system: &'a System, model: &'a Model, corrector: CorrectorConfig) -> Self {
        Tracer { system, model, corrector, wasted: StepRecord::default() }
    }

    fn displacement_of(&self, u: &[f64], nd: NodeDir) -> f64 {
        self.system.dofs.displacement(u, nd.node, nd.axis.index())
    }

    fn make_point(&self, state: &State, step: usize, record: StepRecord, negative_pivots: usize) -> PathPoint {
        let a = &self.model.analysis;
        PathPoint {
            step,
            lambda: state.lambda,
            watched: a.watch.iter().map(|w| self.displacement_of(&state.u, *w)).collect(),
            point: a.point.map_or(0.0, |p| self.displacement_of(&state.u, p)),
            record,
            relative_residual: state.relative_residual,
            negative_pivots,
        }
    }

    /// Runs the analysis of the model's `[analysis]` table.
    pub fn run(&mut self, ws: &mut Workspace, observer: &mut dyn Observer) -> Path {
        let a = self.model.analysis.clone();
        let sys = self.system;
        let mut state = State::at_rest(sys, self.model.n_nodes());
        let mut points = Vec::new();
        let mut mechanism = None;
        let mut last_failure = None;
        let mut n_cutbacks = 0;

        // Step 0: the initial state, with its inertia. A prestressed structure
        // may be out of balance here only if the model is; the residual says.
        let mut rec0 = StepRecord::default();
        if solve::refactor_at(sys, ws, &mut state, &mut rec0).is_some() {
            let moving = find_mechanism(sys, ws, &state);
            let p = self.make_point(&state, 0, rec0, 0);
            return Path {
                points: vec![p],
                stop: StopReason::Mechanism,
                final_state: state,
                mechanism: Some(Mechanism { moving, lambda: 0.0 }),
                last_failure: None,
                n_cutbacks,
            };
        }
        ws.fresh = true;
        if state.relative_residual > self.corrector.tolerance {
            // The given geometry is not in balance with its prestress: find
            // the prestressed equilibrium at λ = 0 first.
            let start_u = state.u.clone();
            let (term, rec) = solve::drive(sys, ws, &mut state, &start_u, 0.0, &FixedLoad, &self.corrector, 0, observer);
            add_records(&mut rec0, &rec);
            let failed = term != Termination::Converged
                || solve::refactor_at(sys, ws, &mut state, &mut rec0).is_some();
            if failed {
                let failure = Failure {
                    step: 0,
                    lambda_tried: 0.0,
                    termination: term,
                    relative_residual: state.relative_residual,
                    zero_pivot_dirs: Vec::new(),
                };
                add_records(&mut self.wasted, &rec0);
                restore(&mut state, start_u, 0.0);
                return Path {
                    points: Vec::new(),
                    stop: StopReason::NoConvergence,
                    final_state: state,
                    mechanism: None,
                    last_failure: Some(failure),
                    n_cutbacks,
                };
            }
            ws.fresh = true;
        }
        let neg0 = ws.h.inertia.negative;
        points.push(self.make_point(&state, 0, rec0, neg0));

        let displacement_control = a.control == Control::Displacement;
        let nominal = a.target / a.steps.max(1) as f64;
        let mut increment = nominal;
        let mut successes_since_cut = 0;
        let mut cuts_this_step = 0;
        let control_dof = a.point.and_then(|p| sys.dofs.dof(p.node, p.axis.index()));
        let stop = 'path: loop {
            let step = points.len();
            if step > a.max_steps {
                break StopReason::MaxSteps;
            }
            let start_u = state.u.clone();
            let start_lambda = state.lambda;
            let progress = if displacement_control { self.displacement_of(&state.u, a.point.unwrap()) } else { state.lambda };
            // Do not step past the target.
            let remaining = a.target - progress;
            let inc = if increment.abs() >= remaining.abs() * (1.0 - 1e-12) { remaining } else { increment };

            let (term, record) = if displacement_control {
                let dof = control_dof.expect("validated: the controlled point is free");
                // Predictor along the tangent: δu_f = K⁻¹ f_ref scaled so the
                // controlled DOF moves by the increment.
                let mut du_f = sys.f_ref.clone();
                ws.h.apply(&mut du_f);
                if du_f[dof].abs() < 1e-300 || !du_f[dof].is_finite() {
                    last_failure = Some(Failure {
                        step,
                        lambda_tried: state.lambda,
                        termination: Termination::ConstraintFailed,
                        relative_residual: state.relative_residual,
                        zero_pivot_dirs: Vec::new(),
                    });
                    break StopReason::NoConvergence;
                }
                let dl = inc / du_f[dof];
                for (u, d) in state.u.iter_mut().zip(&du_f) {
                    *u += dl * d;
                }
                state.lambda += dl;
                let c = PrescribedDisplacement { dof };
                solve::drive(sys, ws, &mut state, &start_u, start_lambda, &c, &self.corrector, step, observer)
            } else {
                state.lambda += inc;
                solve::drive(sys, ws, &mut state, &start_u, start_lambda, &FixedLoad, &self.corrector, step, observer)
            };

            match term {
                Termination::Converged => {
                    // The tangent at the converged state: its inertia, and the
                    // step-start factor of the next step.
                    let mut record = record;
                    let singular = solve::refactor_at(sys, ws, &mut state, &mut record).is_some();
                    let neg = ws.h.inertia.negative;
                    ws.fresh = !singular;
                    let point = self.make_point(&state, step, record, neg);
                    let ev = StepEvent {
                        step,
                        lambda: state.lambda,
                        iterations: point.record.iterations,
                        point_displacement: point.point,
                        negative_pivots: neg,
                    };
                    points.push(point);
                    cuts_this_step = 0;
                    successes_since_cut += 1;
                    if successes_since_cut >= 2 && increment.abs() < nominal.abs() {
                        increment *= 2.0;
                        successes_since_cut = 0;
                    }
                    if singular {
                        let moving = find_mechanism(sys, ws, &state);
                        mechanism = Some(Mechanism { moving, lambda: state.lambda });
                        break 'path StopReason::Mechanism;
                    }
                    if observer.on_step(&ev) == Answer::Stop {
                        break 'path StopReason::Interrupted;
                    }
                    let progress = if displacement_control { ev.point_displacement } else { state.lambda };
                    if (progress - a.target).abs() <= 1e-12 * a.target.abs().max(1e-300) {
                        break 'path StopReason::TargetReached;
                    }
                    if let (Some(max_d), Some(p)) = (a.max_displacement, a.point) {
                        if self.displacement_of(&state.u, p).abs() >= max_d {
                            break 'path StopReason::MaxDisplacement;
                        }
                    }
                }
                Termination::Stopped => {
                    add_records(&mut self.wasted, &record);
                    restore(&mut state, start_u, start_lambda);
                    break StopReason::Interrupted;
                }
                other => {
                    add_records(&mut self.wasted, &record);
                    let zero_pivot_dirs = match &other {
                        Termination::SingularTangent { dofs } => dofs.iter().take(8).map(|d| sys.dofs.owner(*d)).collect(),
                        _ => Vec::new(),
                    };
                    let failure = Failure {
                        step,
                        lambda_tried: state.lambda,
                        termination: other.clone(),
                        relative_residual: state.relative_residual,
                        zero_pivot_dirs,
                    };
                    restore(&mut state, start_u, start_lambda);
                    // Back to the last converged state and its tangent.
                    let mut rec = StepRecord::default();
                    let singular = solve::refactor_at(sys, ws, &mut state, &mut rec).is_some();
                    add_records(&mut self.wasted, &rec);
                    ws.fresh = !singular;
                    if cuts_this_step >= a.max_cutbacks || singular {
                        last_failure = Some(failure);
                        break StopReason::NoConvergence;
                    }
                    cuts_this_step += 1;
                    n_cutbacks += 1;
                    successes_since_cut = 0;
                    increment *= 0.5;
                }
            }
        };
        Path { points, stop, final_state: state, mechanism, last_failure, n_cutbacks }
    }
}

fn restore(state: &mut State, u: Vec<f64>, lambda: f64) {
    state.u = u;
    state.lambda = lambda;
}
