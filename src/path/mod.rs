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

mod crossing;
use crossing::*;
pub use crossing::{SECANT_RATIO, STIFFNESS_JUMP, SMOOTH_ARC_FLOOR, SUB_STEP_LOAD_RATIO, SUB_STEP_TURN};
pub mod branch;
pub mod constraints;
pub mod critical;
pub mod fields;
pub mod modes;
mod start;
mod stepper;

use crate::linalg::vector::{distance, dot};
use crate::assembly::System;
use crate::model::{Control, KeepFields, Model, NodeDir};
use crate::observe::{Answer, Observer, StepEvent};
use crate::solve::{self, CorrectorConfig, FixedLoad, State, StepRecord, Termination, Workspace};
use constraints::{Cylindrical, NormalPlane, PrescribedDisplacement};
use fields::{Field, Keeper};
pub use start::{StartFailure, LOST_PRESTRESS};
use stepper::{load_predictor, tangent_direction, Stepper};
pub use stepper::DESIRED_ITERATIONS;
pub use critical::{
    find_mechanism, Critical, CriticalKind, Turning, BIFURCATION_ALIGNMENT, BISECTION_TARGET, COINCIDENT, MAX_BISECTIONS,
    MAX_POINTS_PER_STEP, PINPOINT_TOLERANCE,
};

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
    /// The given geometry and its prestress have no equilibrium at the start
    /// load factor that the corrector could find ([`StartFailure`] says why).
    NoStartEquilibrium,
    /// Stopped at a requested branch switch: see `EquilibriumPath::switch` (the mode
    /// asked for does not exist, no secondary state was found, or load
    /// control cannot follow a falling secondary branch).
    BranchSwitch,
    /// Load control met a limit point: past it the load factor falls, so the
    /// path cannot be followed by raising λ (the structure would snap).
    LimitPoint,
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
            StopReason::NoStartEquilibrium => "no_start_equilibrium",
            StopReason::BranchSwitch => "branch_switch",
            StopReason::LimitPoint => "limit_point",
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
    /// Whether `negative_pivots` was counted at this state (false: carried
    /// over from an earlier factorization).
    pub pivots_checked: bool,
    /// Members slack at this state, by index, ascending.
    pub slack: Vec<u32>,
    /// An arc-length step between two stable states whose chord still
    /// passed through states the tangent finds unstable along it at the
    /// smallest arc allowed (`crossing::chord_softens`): an unstable stretch
    /// of the path, and its critical points, may lie between this state and
    /// the last one untraced.
    pub unstable_chord: bool,
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
pub struct EquilibriumPath {
    pub points: Vec<PathPoint>,
    pub stop: StopReason,
    /// Displacements at the last converged state, free DOFs, m.
    pub final_state: State,
    pub mechanism: Option<Mechanism>,
    /// What the last failed step was doing, for the stop message.
    pub last_failure: Option<StepFailure>,
    pub n_cutbacks: usize,
    /// Critical points pinpointed along the path.
    pub critical: Vec<Critical>,
    /// Turning points of the controlled displacement (snap-back) along an
    /// arc-length path.
    pub turning: Vec<Turning>,
    /// The `keep_fields` policy as resolved for this system (never `Auto`).
    pub keep: KeepFields,
    /// Whole displacement fields of the steps the policy keeps, ascending.
    pub fields: Vec<Field>,
    /// Why no equilibrium was found at the start (stop `NoStartEquilibrium`).
    pub start_failure: Option<StartFailure>,
    /// What became of `switch_at`, when it was given.
    pub switch: Option<branch::SwitchOutcome>,
    /// The imperfection seeded before the run (set by the caller of
    /// [`branch::seed`]).
    pub imperfection: Option<branch::Seed>,
    /// Members in tension in the given geometry that hold none of it (slack,
    /// or at most `LOST_PRESTRESS` of it) at the start equilibrium found:
    /// nothing holds their prestress, and the path starts with them at
    /// their rest length, on the edge of going slack. Whether the corrector
    /// then finds a state with such a member just taut or just slack is a
    /// matter of round-off: the tangent has a kink there.
    pub lost_at_start: Vec<u32>,
}

/// A step that failed for good.
#[derive(Clone, Debug)]
pub struct StepFailure {
    pub step: usize,
    /// λ the step was trying to reach.
    pub lambda_tried: f64,
    pub termination: Termination,
    pub relative_residual: f64,
    /// Node directions with zero pivots, when the tangent was singular.
    pub zero_pivot_dirs: Vec<NodeDir>,
    /// An earlier, longer attempt at this step converged only by a jump to
    /// a distant part of the path (the cause may be a snap the control
    /// cannot follow, whatever stopped the last, shortest attempt).
    pub jumped_before: bool,
    /// An attempt at this (first arc-length) step converged off the branch
    /// its tangent predictor pointed along (`crossing::left_branch`).
    pub left_branch: bool,
}

impl EquilibriumPath {
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

/// Traces `model` on its assembled `system` with the symbolic factor `ldlt`
/// of its tangent: the one place where a whole run's inverse tangent,
/// workspace and tracer are made ([`crate::Solver::trace`] and branch
/// seeding call it). Returns the path and the work of cut-back attempts.
pub fn trace_whole(
    system: &System,
    model: &Model,
    ldlt: crate::linalg::Ldlt,
    corrector: CorrectorConfig,
    observer: &mut dyn Observer,
) -> (EquilibriumPath, StepRecord) {
    let h = solve::InverseTangent::new(model.analysis.method, ldlt, corrector.refactor.max_updates);
    let mut ws = Workspace::new(system, model.n_nodes(), h);
    let mut tracer = Tracer::new(system, model, corrector);
    let path = tracer.run(&mut ws, observer);
    (path, tracer.wasted)
}

/// Follows the path of one model.
pub struct Tracer<'a> {
    pub system: &'a System,
    pub model: &'a Model,
    pub corrector: CorrectorConfig,
    /// Extra work done in failed attempts, so totals stay honest.
    pub wasted: StepRecord,
    /// The states on the path that the latest arc-length re-walk of a load
    /// step (`walk`) converged to and kept, in order, before any limit point:
    /// (u, λ, negative pivots, the sub-step's record). When the walk ends
    /// the run at a limit they become path points (`keep_walked`). At most
    /// `WALK_KEPT` states (n numbers each): past that every other one is
    /// dropped, so a long walk on a million-DOF model holds tens of vectors,
    /// not hundreds.
    walked: Vec<(Vec<f64>, f64, usize, StepRecord)>,
}

/// See `Tracer::walked`.
const WALK_KEPT: usize = 32;

/// Takes work counted as wasted back out (it is kept on a path point).
fn take_records(from: &mut StepRecord, rec: &StepRecord) {
    from.iterations = from.iterations.saturating_sub(rec.iterations);
    from.factorizations = from.factorizations.saturating_sub(rec.factorizations);
    from.residual_evaluations = from.residual_evaluations.saturating_sub(rec.residual_evaluations);
    from.line_search_trials = from.line_search_trials.saturating_sub(rec.line_search_trials);
}

fn add_records(into: &mut StepRecord, from: &StepRecord) {
    into.iterations += from.iterations;
    into.factorizations += from.factorizations;
    into.residual_evaluations += from.residual_evaluations;
    into.line_search_trials += from.line_search_trials;
}

impl<'a> Tracer<'a> {
    pub fn new(system: &'a System, model: &'a Model, corrector: CorrectorConfig) -> Self {
        Tracer { system, model, corrector, wasted: StepRecord::default(), walked: Vec::new() }
    }

    fn displacement_of(&self, u: &[f64], nd: NodeDir) -> f64 {
        self.system.dofs.displacement(u, nd.node, nd.axis.index())
    }

    fn make_point(&self, state: &State, step: usize, record: StepRecord, negative_pivots: usize) -> PathPoint {
        self.make_point_with(state, step, record, negative_pivots, self.system.slack_members(&state.u))
    }

    /// A load-control run that stops at a limit its re-walk found keeps the
    /// walk's states below the limit as path points (the load-deflection
    /// curve up to the limit, even when the limit lay inside the first
    /// step), and ends on the last of them with its factor.
    /// Only states strictly between the walk's start and the limit's load
    /// factor are kept (the last sub-steps before a limit can end within
    /// the pinpointing bracket, a rounding above the limit's λ).
    fn keep_walked(&mut self, ws: &mut Workspace, state: &mut State, points: &mut Vec<PathPoint>, keeper: &mut fields::Keeper, limit: f64) {
        let walked = std::mem::take(&mut self.walked);
        let from = state.lambda;
        let direction = (limit - from).signum();
        for (u, lambda, neg, rec) in walked {
            if !((lambda - from) * direction > 0.0 && (limit - lambda) * direction > 0.0) {
                continue;
            }
            let step = points.len();
            restore(state, u, lambda);
            // The sub-step's converged residual; r and the reactions are
            // assembled once, at the last state, by the refactorization below.
            state.relative_residual = rec.residual_history.last().copied().unwrap_or(f64::NAN);
            take_records(&mut self.wasted, &rec);
            keeper.offer(step, state.lambda, &state.u, false);
            points.push(self.make_point(state, step, rec, neg));
        }
        let mut rec = StepRecord::default();
        ws.refactor_at(self.system, state, &mut rec);
        add_records(&mut self.wasted, &rec);
        ws.set_factor_fresh(true);
    }

    /// [`Tracer::make_point`] with the state's slack members already known.
    fn make_point_with(&self, state: &State, step: usize, record: StepRecord, negative_pivots: usize, slack: Vec<u32>) -> PathPoint {
        let a = &self.model.analysis;
        PathPoint {
            step,
            lambda: state.lambda,
            watched: a.watch.iter().map(|w| self.displacement_of(&state.u, *w)).collect(),
            point: a.point.map_or(0.0, |p| self.displacement_of(&state.u, p)),
            record,
            relative_residual: state.relative_residual,
            negative_pivots,
            pivots_checked: true,
            slack,
            unstable_chord: false,
        }
    }

    /// After an arc-length step carried λ across the target, finds the
    /// equilibrium at λ = target on the same branch: start from the linear
    /// interpolation between the two states, correct under load control. If
    /// that fails, the crossing state is kept.
    #[allow(clippy::too_many_arguments)]
    fn land_on_target(
        &self,
        ws: &mut Workspace,
        state: &mut State,
        start_u: &[f64],
        start_lambda: f64,
        target: f64,
        step: usize,
        record: &mut StepRecord,
        observer: &mut dyn Observer,
    ) {
        let t = (target - start_lambda) / (state.lambda - start_lambda);
        let mut trial = state.clone();
        for (u, u0) in trial.u.iter_mut().zip(start_u) {
            *u = u0 + t * (*u - u0);
        }
        trial.lambda = target;
        let (term, rec) = solve::drive(self.system, ws, &mut trial, start_u, start_lambda, &FixedLoad, &self.corrector, step, observer);
        add_records(record, &rec);
        if term == Termination::Converged {
            *state = trial;
        }
    }

    /// Runs the analysis of the model's `[analysis]` table.
    pub fn run(&mut self, ws: &mut Workspace, observer: &mut dyn Observer) -> EquilibriumPath {
        let a = self.model.analysis.clone();
        let sys = self.system;
        let mut state = State::at_rest(sys, self.model.n_nodes());
        state.lambda = a.start_load_factor;
        let mut points = Vec::new();
        let mut mechanism = None;
        let mut last_failure = None;
        // Whether an attempt at the current step was rejected as a jump.
        let mut step_jumped = false;
        // Whether an attempt at the current step left its predictor's branch.
        let mut step_left_branch = false;
        let mut n_cutbacks = 0;
        let mut keeper = Keeper::new(a.keep_fields.resolve(sys.n_free()));

        // Step 0: the initial state, with its inertia. A prestressed structure
        // may be out of balance here only if the model is; the residual says.
        let mut rec0 = StepRecord::default();
        if ws.refactor_at(sys, &mut state, &mut rec0).is_some() {
            let moving = find_mechanism(sys, ws, &state);
            let p = self.make_point(&state, 0, rec0, 0);
            keeper.offer(0, state.lambda, &state.u, false);
            let (keep, fields) = keeper.finish(Some((0, state.lambda, &state.u)));
            return EquilibriumPath {
                points: vec![p],
                stop: StopReason::Mechanism,
                final_state: state,
                mechanism: Some(Mechanism { moving, lambda: 0.0 }),
                last_failure: None,
                n_cutbacks,
                critical: Vec::new(),
                turning: Vec::new(),
                keep,
                fields,
                start_failure: None,
                switch: None,
                imperfection: None,
                lost_at_start: Vec::new(),
            };
        }
        ws.set_factor_fresh(true);
        let mut lost_at_start = Vec::new();
        if state.relative_residual > self.corrector.tolerance {
            // The given geometry is not in balance with its prestress: find
            // the prestressed equilibrium at λ = 0 first.
            let start_u = state.u.clone();
            let (mut term, rec) = solve::drive(sys, ws, &mut state, &start_u, 0.0, &FixedLoad, &self.corrector, 0, observer);
            add_records(&mut rec0, &rec);
            if term != Termination::Converged && sys.has_dead_load() {
                // The dead load in one go was too much: step it in.
                add_records(&mut self.wasted, &rec0);
                rec0 = StepRecord::default();
                restore(&mut state, start_u.clone(), a.start_load_factor);
                term = self.step_in_dead_load(ws, &mut state, &mut rec0, observer);
            }
            let singular_dofs = if term == Termination::Converged {
                ws.refactor_at(sys, &mut state, &mut rec0)
            } else {
                None
            };
            if term != Termination::Converged || singular_dofs.is_some() {
                let termination = match singular_dofs {
                    Some(dofs) => Termination::SingularTangent { dofs },
                    None => term,
                };
                let start_failure = self.start_failure(&start_u, &state, termination);
                add_records(&mut self.wasted, &rec0);
                restore(&mut state, start_u, a.start_load_factor);
                return EquilibriumPath {
                    points: Vec::new(),
                    stop: StopReason::NoStartEquilibrium,
                    final_state: state,
                    mechanism: None,
                    last_failure: None,
                    n_cutbacks,
                    critical: Vec::new(),
                turning: Vec::new(),
                    keep: keeper.policy().clone(),
                    fields: Vec::new(),
                    start_failure: Some(start_failure),
                    switch: None,
                    imperfection: None,
                    lost_at_start: Vec::new(),
                };
            }
            ws.set_factor_fresh(true);
            lost_at_start = self.lost_prestress(&start_u, &state.u);
        }
        let neg0 = ws.negative_pivots();
        points.push(self.make_point(&state, 0, rec0, neg0));
        keeper.offer(0, state.lambda, &state.u, false);

        let mut stepper = Stepper::new(&a, sys, ws);
        let mut last_increment: Vec<f64> = Vec::new();
        let mut critical: Vec<Critical> = Vec::new();
        let mut last_load_increment = 1.0;
        let mut switcher = branch::Switcher::new(&a.branch);
        // f_ref·K⁻¹·f_ref at the last converged state (NaN: not known).
        let mut last_compliance = load_compliance(sys, ws);
        // The same at the last state whose pivots were counted, and the slack
        // members there (`stability_check = "on-refactor"`).
        let mut counted_compliance = last_compliance;
        let mut counted_slack: Vec<u32> = if a.stability_each_step { Vec::new() } else { sys.slack_members(&state.u) };
        // The last state whose pivots were counted (u, λ, negative pivots),
        // kept only under `on-refactor`, where it may lie steps back.
        let mut counted_state: Option<(Vec<f64>, f64, usize)> =
            (!a.stability_each_step).then(|| (state.u.clone(), state.lambda, ws.negative_pivots()));
        // (K⁻¹f_ref) at the controlled DOF at the last converged state (NaN:
        // not known): du/ds there up to the sign of dλ/ds.
        let mut last_tangent_at_dof = match (a.control, stepper.control_dof) {
            (Control::ArcLength, Some(dof)) => tangent_direction(sys, ws)[dof],
            _ => f64::NAN,
        };
        let mut turning: Vec<Turning> = Vec::new();
        // The tangent predictor (K⁻¹f, δλ) of the current step, kept only
        // for the first arc-length step (see the jump tests below).
        let mut first_predictor: Option<(Vec<f64>, f64)> = None;
        let stop = 'path: loop {
            let step = points.len();
            if step > a.max_steps {
                break StopReason::MaxSteps;
            }
            let start_u = state.u.clone();
            let start_lambda = state.lambda;
            let progress = match a.control {
                Control::Displacement => self.displacement_of(&state.u, a.point.expect("validated")),
                _ => state.lambda,
            };

            let (term, record) = match a.control {
                Control::Load => {
                    let inc = stepper.towards(a.target - progress);
                    if a.load_predictor {
                        let du = load_predictor(sys, ws, inc, &last_increment, last_load_increment);
                        let predicted: Vec<f64> = state.u.iter().zip(&du).map(|(u, d)| u + d).collect();
                        // Extrapolation is only as good as the path is smooth:
                        // a member going slack or taut is a kink in it, and the
                        // corrector starts better from the last state.
                        if sys.slack_members(&predicted) == sys.slack_members(&state.u) {
                            state.u = predicted;
                        }
                    }
                    state.lambda += inc;
                    solve::drive(sys, ws, &mut state, &start_u, start_lambda, &FixedLoad, &self.corrector, step, observer)
                }
                Control::Displacement => {
                    let dof = stepper.control_dof.expect("validated: the controlled point is free");
                    let inc = stepper.towards(a.target - progress);
                    // Predictor along the tangent: δu_f = K⁻¹ f_ref scaled so the
                    // controlled DOF moves by the increment.
                    let du_f = tangent_direction(sys, ws);
                    let dl = inc / du_f[dof];
                    if !dl.is_finite() {
                        (Termination::ConstraintFailed, StepRecord::default())
                    } else {
                        for (u, d) in state.u.iter_mut().zip(&du_f) {
                            *u += dl * d;
                        }
                        state.lambda += dl;
                        let c = PrescribedDisplacement { dof };
                        solve::drive(sys, ws, &mut state, &start_u, start_lambda, &c, &self.corrector, step, observer)
                    }
                }
                Control::ArcLength => {
                    // Predictor along the tangent with ‖Δu‖ = Δl; its sign follows
                    // the previous increment (positive work along the path), or
                    // the target's sign on the first step.
                    let du_f = tangent_direction(sys, ws);
                    let norm = dot(&du_f, &du_f).sqrt();
                    // The first step heads for the target: δλ takes the sign
                    // of (target − λ) (from a start beyond the target, back
                    // towards it); its arc is capped in `Stepper::new`.
                    let to_target = a.target - state.lambda;
                    let heading = if to_target != 0.0 { to_target.signum() } else { a.target.signum() };
                    let sign = if last_increment.is_empty() {
                        heading
                    } else {
                        let d = dot(&du_f, &last_increment);
                        if d == 0.0 { heading } else { d.signum() }
                    };
                    let dl = sign * stepper.size / norm;
                    if !dl.is_finite() {
                        (Termination::ConstraintFailed, StepRecord::default())
                    } else {
                        for (u, d) in state.u.iter_mut().zip(&du_f) {
                            *u += dl * d;
                        }
                        state.lambda += dl;
                        first_predictor = last_increment.is_empty().then(|| (du_f.clone(), dl));
                        let arc = stepper.size;
                        let (t, r) = if stepper.normal_plane {
                            solve::drive(sys, ws, &mut state, &start_u, start_lambda, &NormalPlane, &self.corrector, step, observer)
                        } else {
                            let c = Cylindrical { arc };
                            solve::drive(sys, ws, &mut state, &start_u, start_lambda, &c, &self.corrector, step, observer)
                        };
                        (t, r)
                    }
                }
            };

            // Under load control a step past a limit point can converge on a
            // distant branch (the snap itself): an increment far larger than
            // the last one, for the load increment, is rejected as a jump.
            let mut jumped = false;
            let term = match (&term, a.control) {
                (Termination::Converged, Control::Load) if !last_increment.is_empty() => {
                    let now = distance(&state.u, &start_u);
                    let before = dot(&last_increment, &last_increment).sqrt();
                    let load_ratio = ((state.lambda - start_lambda) / last_load_increment).abs();
                    jumped = now > JUMP_RATIO * before * load_ratio.max(1e-3);
                    // With the pivots counted, a jump is examined below (the
                    // path is followed from the step's start by arc length);
                    // without, it is cut back.
                    let counted = a.stability_each_step || a.method == crate::model::Method::Newton;
                    if jumped && !counted { Termination::Jumped } else { term }
                }
                // Under arc-length control the cylinder meets the path behind
                // the start as well as ahead: an increment at an obtuse angle
                // to the last one has turned back and is cut back.
                // After a branch switch (branch.rs) the controlled DOF may move
                // only at second order along the secondary branch near the
                // point, and a displacement step can land on the mirror
                // branch: an increment turned back is cut back there too.
                // Displacement control cannot pass a snap-back (the
                // controlled displacement turning back): the corrector then
                // lands on a distant part of the path, past the load's limit
                // and the turning points, with the pivot count of the start.
                // A step whose increment exceeds `JUMP_RATIO` times the last
                // one (scaled by the controlled increments) is cut back, as
                // under load control; an arch with a spring in series
                // reported "target reached" and no critical point this way.
                (Termination::Converged, Control::Displacement) if !last_increment.is_empty() => {
                    let turned = switcher.has_switched()
                        && state.u.iter().zip(&start_u).zip(&last_increment).map(|((u, s), d)| (u - s) * d).sum::<f64>() < 0.0;
                    let dof = stepper.control_dof.expect("validated: the controlled point is free");
                    let ratio = ((state.u[dof] - start_u[dof]) / last_increment[dof]).abs();
                    let before = dot(&last_increment, &last_increment).sqrt();
                    let jump = distance(&state.u, &start_u) > JUMP_RATIO * before * ratio.max(1e-3);
                    if turned || jump { Termination::Jumped } else { term }
                }
                // The first arc-length step must head for the target: a
                // corrector that converged behind the start (the cylinder
                // meets the path there too) is cut back and retried shorter.
                (Termination::Converged, Control::ArcLength)
                    if last_increment.is_empty() && (state.lambda - start_lambda) * (a.target - start_lambda) < 0.0 =>
                {
                    Termination::Jumped
                }
                // The first arc is the tool's guess (the tangent displacement
                // of one load increment), not one the path has shaped: a first
                // step that left the branch of its predictor (`left_branch`,
                // the test of the load-step re-walk's sub-steps) is cut back.
                // A 6-ring dome traced to 4000 times its limit load in ten
                // arcs jumped from λ = 0 to λ = 10 with 11 negative pivots in
                // its first step, and the bisection then reported critical
                // points at negative load factors.
                (Termination::Converged, Control::ArcLength)
                    if first_predictor.as_ref().is_some_and(|(du_f, dl)| left_branch(&start_u, start_lambda, &state, du_f, *dl)) =>
                {
                    step_left_branch = true;
                    Termination::Jumped
                }
                (Termination::Converged, Control::ArcLength) if !last_increment.is_empty() => {
                    let turned = state.u.iter().zip(&start_u).zip(&last_increment).map(|((u, s), d)| (u - s) * d).sum::<f64>() < 0.0;
                    if turned { Termination::Jumped } else { term }
                }
                _ => term,
            };
            if term == Termination::Jumped {
                step_jumped = true;
            }
            match term {
                Termination::Converged => {
                    step_jumped = false;
                    step_left_branch = false;
                    let mut record = record;
                    let iterations = record.iterations;
                    // Arc-length: λ first reaching the target ends the path on
                    // it: a load-control corrector from the crossing state.
                    let crossed = a.control == Control::ArcLength
                        && (start_lambda - a.target) * (state.lambda - a.target) <= 0.0
                        && state.lambda != start_lambda;
                    if crossed {
                        self.land_on_target(ws, &mut state, &start_u, start_lambda, a.target, step, &mut record, observer);
                    }
                    // The tangent at the converged state: its inertia, and the
                    // step-start factor of the next step.
                    // With `stability_check = "on-refactor"` the quasi-Newton
                    // correctors carry their factor on and count only when a
                    // cheap indicator asks for it (`count_needed`): f·H·f
                    // with the corrector's own operator (`load_compliance`
                    // before any refactor: the step's factor and its pairs),
                    // or a change of the slack set since the last count.
                    let slack_now = sys.slack_members(&state.u);
                    let check = a.stability_each_step
                        || a.method == crate::model::Method::Newton
                        || count_needed(counted_compliance, load_compliance(sys, ws), &counted_slack, &slack_now);
                    let singular = check && ws.refactor_at(sys, &mut state, &mut record).is_some();
                    let neg = ws.negative_pivots();
                    ws.set_factor_fresh(check && !singular);
                    let mut point = self.make_point_with(&state, step, record, neg, slack_now.clone());
                    point.pivots_checked = check;
                    let ev = StepEvent {
                        step,
                        lambda: state.lambda,
                        iterations: point.record.iterations,
                        point_displacement: point.point,
                        negative_pivots: neg,
                    };
                    let before = points.last().map(|p: &PathPoint| (p.negative_pivots, p.pivots_checked));
                    // An arc-length step from a stable state to a stable one
                    // has the same pivot count at its ends even when the arc
                    // spanned a whole loop of the path in between (limit
                    // points and bifurcations there and back): the pivot
                    // count cannot see it, nor can the turn test above (the
                    // increment kept an acute angle to the last one). The
                    // tangent along the chord does: between two stable states
                    // joined by a stable stretch of path the chord stays near
                    // it and d·K·d > 0, across an unstable loop it is not
                    // (three tangent assemblies, no factorization). A perfect
                    // 2 × 6 dome traced to 50 times its load in 30 arcs
                    // jumped from λ = −0.064 to 0.016 this way in one step
                    // (crown −0.86 to −1.20 m, no negative pivot at either
                    // end), past the 18 critical points of its inverting
                    // stretch, and reported 8 critical points in all. Such
                    // a step is cut back; at the smallest arc it is kept
                    // with `unstable_chord` set, which the summary reports.
                    let stable_ends = before == Some((0, true)) && check && !singular && neg == 0;
                    if a.control == Control::ArcLength && stable_ends && chord_softens(sys, ws, &start_u, start_lambda, &state) {
                        if stepper.can_cut_back() {
                            add_records(&mut self.wasted, &point.record);
                            self.retreat(ws, &mut state, start_u.clone(), start_lambda);
                            stepper.cut_back();
                            n_cutbacks += 1;
                            continue 'path;
                        }
                        point.unstable_chord = true;
                    }
                    // Load control never crosses a critical point silently
                    // (see `crossing_suspected`): the step is re-walked from
                    // its start by arc length; a limit point met on the way
                    // ends the run there, bifurcations are recorded.
                    let compliance = if check && !singular { load_compliance(sys, ws) } else { f64::NAN };
                    // (K⁻¹f_ref) at the controlled DOF, for turning points of
                    // the displacement under arc-length control.
                    let dir = (state.lambda - start_lambda).signum();
                    let tangent_at_dof = match (a.control, stepper.control_dof) {
                        (Control::ArcLength, Some(dof)) if check && !singular => tangent_direction(sys, ws)[dof],
                        _ => f64::NAN,
                    };
                    if let (Control::Load, true, Some((n_before, true))) = (a.control, check && !singular, before) {
                        {
                            let suspected = jumped
                                || n_before != neg
                                || crossing_suspected(sys, last_compliance, compliance, &start_u, start_lambda, &state)
                                || stiffness_jumped(last_compliance, compliance)
                                || chord_softens(sys, ws, &start_u, start_lambda, &state)
                                || (last_increment.is_empty() && self.mid_chord_unstable(ws, &start_u, start_lambda, n_before, &mut state));
                            if suspected {
                                let keep_field = keeper.keeps_critical();
                                let a_state = (start_u.as_slice(), start_lambda, n_before);
                                let want = keep_field || switcher.wants_field();
                                let mut outcome = self.probe(ws, a_state, &state, want, observer);
                                // Branch switching (branch.rs) counts the
                                // bifurcations met on the walk; the load
                                // step's chord stands for the primary tangent.
                                for (k, c) in outcome.iter_mut().flatten().enumerate() {
                                    switcher.note(critical.len() + k, c, &start_u, &state.u);
                                    if !keep_field {
                                        c.field = None;
                                    }
                                }
                                let limit = outcome.iter().flatten().any(|c| c.kind == CriticalKind::Limit);
                                if !limit {
                                    // Only a limit keeps the walk's states.
                                    self.walked.clear();
                                }
                                let clear = outcome.as_ref().is_some_and(|v| v.is_empty());
                                let retreat = limit || outcome.is_none() || (clear && jumped);
                                let lambda_tried = state.lambda;
                                for mut c in outcome.into_iter().flatten() {
                                    c.step = step;
                                    critical.push(c);
                                }
                                if retreat {
                                    // Back to the step's start and its factor.
                                    add_records(&mut self.wasted, &point.record);
                                    self.retreat(ws, &mut state, start_u.clone(), start_lambda);
                                    if limit {
                                        let at = critical.iter().rev().find(|c| c.kind == CriticalKind::Limit).map_or(state.lambda, |c| c.lambda);
                                        self.keep_walked(ws, &mut state, &mut points, &mut keeper, at);
                                        break 'path StopReason::LimitPoint;
                                    }
                                    // A jump with no critical point on the
                                    // way, or a walk that failed: cut back.
                                    if !stepper.cut_back() {
                                        last_failure = Some(StepFailure {
                                            step,
                                            lambda_tried,
                                            termination: Termination::Jumped,
                                            relative_residual: 0.0,
                                            zero_pivot_dirs: Vec::new(),
                                            jumped_before: true,
                                            left_branch: false,
                                        });
                                        break 'path StopReason::NoConvergence;
                                    }
                                    n_cutbacks += 1;
                                    continue 'path;
                                }
                                // Bifurcations only: B is on the path; back
                                // to its factor.
                                let mut rec = StepRecord::default();
                                ws.refactor_at(sys, &mut state, &mut rec);
                                add_records(&mut self.wasted, &rec);
                                ws.set_factor_fresh(true);
                            }
                        }
                    }
                    last_compliance = compliance;
                    if check && !singular && !a.stability_each_step {
                        counted_compliance = compliance;
                        counted_slack = slack_now;
                    }
                    let pinpoint = a.pinpoint && check && !singular && a.control != Control::Load;
                    // The bracket starts at the step's start, or (when that
                    // state's pivots were not counted, `on-refactor`) at the
                    // last counted state.
                    let bracket_start = match before {
                        Some((n, true)) => Some((start_u.as_slice(), start_lambda, n)),
                        Some((_, false)) => counted_state.as_ref().map(|(u, l, n)| (u.as_slice(), *l, *n)),
                        None => None,
                    };
                    if let (true, Some((a_u, a_l, n_before))) = (pinpoint, bracket_start) {
                        let keep_field = keeper.keeps_critical();
                        let want = keep_field || switcher.wants_field();
                        let (points, _) = self.pinpoint_all(ws, (a_u, a_l, n_before), &mut state, want, None, observer);
                        ws.set_factor_fresh(true);
                        for mut c in points {
                            c.step = step;
                            // Branch switching (branch.rs) counts the bifurcations.
                            switcher.note(critical.len(), &c, &start_u, &state.u);
                            if !keep_field {
                                c.field = None;
                            }
                            critical.push(c);
                        }
                    }
                    // A turning point of the controlled displacement within
                    // the step (none when a critical point is in it too: the
                    // sign of dλ/ds is then not one across the step).
                    let same_count = before.is_some_and(|(n, c)| c && n == neg);
                    // Both ends' du/ds take this step's sign of dλ/ds: with
                    // the pivot count unchanged no limit point lies in it,
                    // so dλ/ds keeps its sign across it.
                    if a.pinpoint && same_count && tangent_at_dof * last_tangent_at_dof < 0.0 && dir != 0.0 {
                        let dof = stepper.control_dof.expect("the tangent is known only with a controlled DOF");
                        let mut t = self.pinpoint_turning(ws, (&start_u, start_lambda, last_tangent_at_dof * dir), &state, dir, dof, observer);
                        t.step = step;
                        turning.push(t);
                        let mut rec = StepRecord::default();
                        ws.refactor_at(sys, &mut state, &mut rec);
                        add_records(&mut self.wasted, &rec);
                        ws.set_factor_fresh(true);
                    }
                    last_tangent_at_dof = tangent_at_dof;
                    let pivots_changed = before.is_some_and(|(n, _)| n != neg);
                    if check && !singular && !a.stability_each_step {
                        counted_state = Some((state.u.clone(), state.lambda, neg));
                    }
                    keeper.offer(step, state.lambda, &state.u, pivots_changed);
                    points.push(point);
                    last_increment = state.u.iter().zip(&start_u).map(|(a, b)| a - b).collect();
                    last_load_increment = state.lambda - start_lambda;
                    stepper.converged(iterations);
                    if singular {
                        let moving = find_mechanism(sys, ws, &state);
                        mechanism = Some(Mechanism { moving, lambda: state.lambda });
                        break 'path StopReason::Mechanism;
                    }
                    if observer.on_step(&ev) == Answer::Stop {
                        break 'path StopReason::Interrupted;
                    }
                    let progress = match a.control {
                        Control::Displacement => ev.point_displacement,
                        _ => state.lambda,
                    };
                    // (A switch due at this step goes first: branch.rs.)
                    let reached = crossed || (progress - a.target).abs() <= 1e-12 * a.target.abs().max(1e-300);
                    if reached && !switcher.is_due() {
                        break 'path StopReason::TargetReached;
                    }
                    if let (Some(max_d), Some(p)) = (a.max_displacement, a.point)
                        && self.displacement_of(&state.u, p).abs() >= max_d
                    {
                        break 'path StopReason::MaxDisplacement;
                    }
                    // ---- Branch switching (branch.rs): at the `switch_at`th
                    // bifurcation, leave the primary path along the mode.
                    if switcher.is_due() {
                        let xi = if a.control == Control::ArcLength { stepper.size.abs() } else { distance(&state.u, &start_u) };
                        let next = points.len();
                        let control_step = match a.control {
                            Control::Displacement => stepper.control_dof.map(|d| (d, stepper.size)),
                            _ => None,
                        };
                        let Some((left, falls)) = self.leave_along_mode(ws, &mut switcher, xi, control_step, next, observer) else {
                            // Back to the factor of the last converged state.
                            let mut rec = StepRecord::default();
                            ws.refactor_at(sys, &mut state, &mut rec);
                            add_records(&mut self.wasted, &rec);
                            ws.set_factor_fresh(true);
                            break 'path StopReason::BranchSwitch;
                        };
                        state = left.state;
                        ws.set_factor_fresh(left.fresh);
                        keeper.offer(next, state.lambda, &state.u, false);
                        let ev = StepEvent {
                            step: next,
                            lambda: state.lambda,
                            iterations: left.point.record.iterations,
                            point_displacement: left.point.point,
                            negative_pivots: left.point.negative_pivots,
                        };
                        points.push(left.point);
                        last_increment = left.increment;
                        last_load_increment = left.load_increment;
                        if falls {
                            break 'path StopReason::BranchSwitch;
                        }
                        if observer.on_step(&ev) == Answer::Stop {
                            break 'path StopReason::Interrupted;
                        }
                    }
                    // ---- end of branch switching
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
                    let failure = StepFailure {
                        step,
                        lambda_tried: state.lambda,
                        termination: other.clone(),
                        relative_residual: state.relative_residual,
                        zero_pivot_dirs,
                        jumped_before: step_jumped,
                        left_branch: step_left_branch,
                    };
                    // Back to the last converged state and its tangent.
                    let singular = self.retreat(ws, &mut state, start_u, start_lambda);
                    if singular || !stepper.cut_back() {
                        // Load control that cannot go on: is there a limit
                        // point between here and where it tried to go?
                        let counted = a.stability_each_step || a.method == crate::model::Method::Newton;
                        let n_here = points.last().map_or(0, |p: &PathPoint| p.negative_pivots);
                        if a.control == Control::Load && counted && !singular {
                            let keep_field = keeper.keeps_critical();
                            let u0 = state.u.clone();
                            let l0 = state.lambda;
                            let outcome = self.walk(ws, (&u0, l0, n_here), failure.lambda_tried, 0.0, &state, keep_field, observer);
                            let limit = outcome.iter().flatten().any(|c| c.kind == CriticalKind::Limit);
                            if !limit {
                                self.walked.clear();
                            }
                            if limit {
                                for mut c in outcome.into_iter().flatten() {
                                    c.step = step;
                                    critical.push(c);
                                }
                                self.retreat(ws, &mut state, u0, l0);
                                let at = critical.iter().rev().find(|c| c.kind == CriticalKind::Limit).map_or(state.lambda, |c| c.lambda);
                                self.keep_walked(ws, &mut state, &mut points, &mut keeper, at);
                                break StopReason::LimitPoint;
                            }
                            self.retreat(ws, &mut state, u0, l0);
                        }
                        last_failure = Some(failure);
                        break StopReason::NoConvergence;
                    }
                    n_cutbacks += 1;
                }
            }
        };
        // The last converged state is `state` (a failed step restored it).
        let last = points.last().map(|p| (p.step, p.lambda, state.u.as_slice()));
        let (keep, fields) = keeper.finish(last);
        let switch = switcher.finish();
        EquilibriumPath {
            points,
            stop,
            final_state: state,
            mechanism,
            last_failure,
            n_cutbacks,
            critical,
            turning,
            keep,
            fields,
            start_failure: None,
            switch,
            imperfection: None,
            lost_at_start,
        }
    }
}

/// f_ref·H·f_ref with the workspace's operator H: K⁻¹ with the fresh factor
/// of the converged state, or (before a refactor) the corrector's own
/// approximation, its factor and quasi-Newton pairs. With K⁻¹ it is the
/// reciprocal of the current stiffness parameter's denominator (Bergan,
/// Holand & Søreide 1978, S_p = f·δu₁ / f·δuᵢ with δu = K⁻¹f): positive on a
/// stable path, it passes through ±∞ at a limit point and changes sign there.
fn load_compliance(sys: &System, ws: &mut Workspace) -> f64 {
    if !ws.is_factored() || sys.f_ref_norm() == 0.0 {
        return f64::NAN;
    }
    let du = tangent_direction(sys, ws);
    dot(&du, &sys.f_ref)
}

/// Under `stability_check = "on-refactor"`, whether the pivots of a
/// converged quasi-Newton state must be counted (one factorization): when
/// either compliance is unknown, when f·H·f has changed sign since the last
/// count (the current stiffness parameter S_p = f·K₀⁻¹f / f·K⁻¹f of Bergan,
/// Holand & Søreide 1978 has passed through zero or infinity: a limit point),
/// when it has more than doubled (S_p has fallen by half since the last count:
/// the structure is softening towards one), or when the set of slack members
/// has changed (a kink of the path, where the tangent jumps). A bifurcation
/// that leaves the stiffness along the load unchanged (the braced strut's
/// sway) does not show in S_p: only `every-step` counting sees it at once,
/// which is why that is the default.
fn count_needed(counted: f64, now: f64, counted_slack: &[u32], slack_now: &[u32]) -> bool {
    if !(counted.is_finite() && now.is_finite()) || counted == 0.0 {
        return true;
    }
    now.signum() != counted.signum() || now.abs() > COMPLIANCE_GROWTH * counted.abs() || counted_slack != slack_now
}

/// See `count_needed`: the growth of f·K⁻¹f since the last count that asks
/// for a new one (S_p fallen to half).
pub const COMPLIANCE_GROWTH: f64 = 2.0;

/// Arc-length steps allowed when re-walking one load step.
const PROBE_MAX_STEPS: usize = 400;

/// A load-control step whose displacement increment exceeds this multiple of
/// the previous one (scaled by the load increments) is taken as a jump to a
/// distant branch and cut back.
pub const JUMP_RATIO: f64 = 4.0;


impl Tracer<'_> {
    /// Back to (u, λ) and the tangent there: the state restored, its tangent
    /// factorized (work counted as wasted) and the factor marked fresh, so
    /// the next step or sub-step starts from it without factorizing the same
    /// state again. Returns whether that tangent is singular.
    pub(super) fn retreat(&mut self, ws: &mut Workspace, state: &mut State, u: Vec<f64>, lambda: f64) -> bool {
        restore(state, u, lambda);
        let mut rec = StepRecord::default();
        let singular = ws.refactor_at(self.system, state, &mut rec).is_some();
        add_records(&mut self.wasted, &rec);
        ws.set_factor_fresh(!singular);
        singular
    }
}

fn restore(state: &mut State, u: Vec<f64>, lambda: f64) {
    state.u = u;
    state.lambda = lambda;
}
