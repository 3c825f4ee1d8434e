//! One equilibrium state: the corrector iterations of a load step.
//!
//! Every corrector solves r(u, λ) = f_int(u) − λ·f_ref = 0 together with a
//! path constraint c(Δu, Δλ) = 0 supplied by the caller (fixed load,
//! prescribed displacement, arc length). Per iteration, with H ≈ K⁻¹:
//!
//! ```text
//! δu_r = −H·r,   δu_f = H·f_ref,   δλ from the constraint,   δu = δu_r + δλ·δu_f
//! ```
//!
//! (two applications of the same operator). H is the factorized tangent for
//! Newton, the step's first tangent for modified Newton, and that factor plus
//! secant updates for Broyden and BFGS ([`inverse`]). A [`RefactorPolicy`]
//! says when the tangent is refactored. An energy line search guards the
//! quasi-Newton steps.
//!
//! Convergence is a result, not an error: [`drive`] returns a
//! [`Termination`]; only a broken invariant panics.
//!
//! Newton's method converges quadratically near a regular solution; Broyden's
//! method converges locally q-superlinearly (Broyden, Dennis & Moré 1973), and
//! on a linear system Broyden's good method terminates in at most 2n steps
//! (Gay 1979); BFGS is q-superlinear too. Neither quasi-Newton method is
//! quadratic.

pub mod inverse;

pub use inverse::InverseTangent;

use crate::linalg::vector::dot;
use crate::assembly::System;
use crate::model::Method;
use crate::observe::{Answer, IterEvent, Observer};

/// When the tangent is refactored.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct RefactorPolicy {
    /// Refactor at the start of each load step.
    pub at_step_start: bool,
    /// Refactor after this many stored quasi-Newton updates (memory bound).
    pub max_updates: usize,
    /// A quasi-Newton iteration stalls when ‖r_new‖ > ratio·‖r_old‖: the
    /// first stall refactors, a second one without a decade of progress
    /// since then escalates to Newton (see [`drive`]).
    pub stall_ratio: f64,
    /// What a change of the slack set does to the quasi-Newton memory.
    pub slack: SlackPolicy,
}

impl Default for RefactorPolicy {
    fn default() -> Self {
        RefactorPolicy { at_step_start: true, max_updates: 20, stall_ratio: 0.9, slack: SlackPolicy::DEFAULT }
    }
}

/// Slack-aware quasi-Newton: a cable that goes slack (or taut again) between
/// two iterations is a kink in f_int(u), so a secant pair taken across it
/// mixes two tangents, and the pairs stored before it describe a tangent the
/// structure no longer has. So the stored pairs are dropped and the pair
/// across the change is not stored: the restart of the secant memory on a
/// change of the active set that secant methods for contact and tension-only
/// members use (common practice, from memory; no source checked).
/// A change is found cheaply: the residual pass counts the slack members and
/// sums an order-independent key of the set (`assembly::system`).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SlackPolicy {
    /// Drop the stored pairs when the slack set changes between iterations.
    pub restart: bool,
    /// Refactor when more than this many members have changed state since
    /// the factorization of K₀ (usize::MAX: never for this reason). A member
    /// going slack removes a rank-1 material block and a rank-2 geometric one
    /// from K, which the pair memory must learn one rank-1 correction per
    /// iteration. Off by default: measured (README "Correctors") it cost
    /// factorizations (a net whose slack set oscillates refactors nearly
    /// every iteration) and saved none.
    pub refactor_members: usize,
}

impl SlackPolicy {
    /// Restart on any change, no refactorization for slack changes
    /// (measured on generated nets, README).
    pub const DEFAULT: SlackPolicy = SlackPolicy { restart: true, refactor_members: usize::MAX };
    /// The memory ignores slack changes (the behaviour before issue 14).
    pub const IGNORE: SlackPolicy = SlackPolicy { restart: false, refactor_members: usize::MAX };
}

/// Energy line search: along the correction δu, make the residual nearly
/// orthogonal to it.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LineSearch {
    /// Trials beyond the full step; 0 switches the search off.
    pub max_trials: usize,
    /// Accept α when |δu·r(α)| ≤ ratio·|δu·r(0)|.
    pub energy_ratio: f64,
}

impl LineSearch {
    pub const OFF: LineSearch = LineSearch { max_trials: 0, energy_ratio: 0.8 };
    /// Matthies & Strang (1979) accept a ratio of 0.5; 0.8 asks for a trial
    /// only where the full step clearly over- or undershoots.
    pub const DEFAULT: LineSearch = LineSearch { max_trials: 5, energy_ratio: 0.8 };

    /// The line search a run of `method` takes with `line_search = trials`
    /// in `[analysis]` (None: the method's default, on for the quasi-Newton
    /// correctors, off for Newton, whose full step is already well scaled
    /// near a solution).
    pub fn for_run(method: Method, trials: Option<usize>) -> LineSearch {
        let mut search = if method == Method::Newton { LineSearch::OFF } else { LineSearch::DEFAULT };
        if let Some(trials) = trials {
            search.max_trials = trials;
        }
        search
    }
}

/// Settings of one corrector.
#[derive(Clone, Copy, Debug)]
pub struct CorrectorConfig {
    pub method: Method,
    pub max_iterations: usize,
    /// Converged when ‖r‖ ≤ tolerance·force scale.
    pub tolerance: f64,
    /// Optional: also require ‖δu‖ ≤ this·‖Δu‖ (displacement criterion).
    pub displacement_tolerance: Option<f64>,
    /// Optional: also require |α·δu·r| ≤ this·|δu₁·r₀| (energy criterion,
    /// relative to the first iteration's work).
    pub energy_tolerance: Option<f64>,
    pub refactor: RefactorPolicy,
    pub line_search: LineSearch,
    /// A quasi-Newton corrector that stalls again after refactoring finishes
    /// the step with Newton iterations (see [`drive`]); off only to show
    /// what the quasi-Newton iterations alone would do.
    pub newton_fallback: bool,
}

impl CorrectorConfig {
    /// The corrector settings of a model's `[analysis]` table.
    pub fn from_analysis(a: &crate::model::Analysis) -> Self {
        let mut c = CorrectorConfig::for_method(a.method, a.tolerance, a.max_iterations);
        c.refactor = RefactorPolicy {
            at_step_start: a.refactor_each_step,
            max_updates: a.refactor_after,
            stall_ratio: a.stall_ratio,
            slack: SlackPolicy::DEFAULT,
        };
        c.line_search = LineSearch::for_run(a.method, a.line_search);
        c.displacement_tolerance = a.displacement_tolerance;
        c.energy_tolerance = a.energy_tolerance;
        c
    }

    /// Defaults for a method: line search on for the quasi-Newton correctors,
    /// off for Newton (whose full step is already well scaled near a solution).
    pub fn for_method(method: Method, tolerance: f64, max_iterations: usize) -> Self {
        let line_search = LineSearch::for_run(method, None);
        CorrectorConfig {
            method,
            max_iterations,
            tolerance,
            displacement_tolerance: None,
            energy_tolerance: None,
            refactor: RefactorPolicy::default(),
            line_search,
            newton_fallback: true,
        }
    }
}

/// The path constraint that closes the system for δλ.
pub trait Constraint {
    /// δλ for this iteration, given the two partial corrections and the
    /// increments of the step so far. None when the constraint cannot be met
    /// (e.g. no real root of the arc-length quadratic).
    fn load_correction(&self, du_r: &[f64], du_f: &[f64], delta_u: &[f64], delta_lambda: f64) -> Option<f64>;

    /// Whether the constraint needs δu_f = H·f_ref; a fixed load does not,
    /// which saves one solve per iteration.
    fn needs_load_direction(&self) -> bool {
        true
    }
}

/// Load control: λ stays where the step put it.
pub struct FixedLoad;

impl Constraint for FixedLoad {
    fn load_correction(&self, _: &[f64], _: &[f64], _: &[f64], _: f64) -> Option<f64> {
        Some(0.0)
    }

    fn needs_load_direction(&self) -> bool {
        false
    }
}

/// How a corrector run ended.
#[derive(Clone, Debug, PartialEq)]
pub enum Termination {
    Converged,
    MaxIterations,
    /// The residual grew without bound or became non-finite.
    Diverged,
    /// The tangent is singular: these free DOFs have zero pivots.
    SingularTangent { dofs: Vec<usize> },
    /// The path constraint had no solution.
    ConstraintFailed,
    /// An observer asked to stop.
    Stopped,
    /// Path level: the step converged on an equilibrium far from where it
    /// started (a snap under load control) or behind it (arc-length turning
    /// back) and was rejected.
    Jumped,
}

/// What happened in a corrector run besides plain iterations.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum CorrectorEventKind {
    /// A quasi-Newton iteration stalled or diverged: K refactored.
    StallRefactor,
    /// The quasi-Newton corrector stalled again (or ran out of its budget, or
    /// its constraint failed): the step goes on with full Newton iterations.
    NewtonFallback,
    /// The Newton fallback started again from the step's best state (lowest
    /// residual so far, or the predictor), the quasi-Newton iterations
    /// having ended further from equilibrium.
    NewtonFromPredictor,
    /// The slack set changed: the stored secant pairs were dropped.
    SlackRestart,
    /// The slack set moved far from K₀'s: K refactored.
    SlackRefactor,
}

impl CorrectorEventKind {
    pub fn name(self) -> &'static str {
        match self {
            CorrectorEventKind::StallRefactor => "stall-refactor",
            CorrectorEventKind::NewtonFallback => "newton-fallback",
            CorrectorEventKind::NewtonFromPredictor => "newton-from-best",
            CorrectorEventKind::SlackRestart => "slack-restart",
            CorrectorEventKind::SlackRefactor => "slack-refactor",
        }
    }
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct CorrectorEvent {
    /// Iterations done before the event (0-based, as `refactored_at`).
    pub iteration: usize,
    pub kind: CorrectorEventKind,
}

/// The record of one corrector run.
#[derive(Clone, Debug, Default)]
pub struct StepRecord {
    pub iterations: usize,
    /// Of `iterations`, those made with a tangent factorized at their own
    /// start: all of a Newton run's, and the Newton fallback's of a
    /// quasi-Newton run. The others are quasi-Newton iterations.
    pub newton_iterations: usize,
    pub factorizations: usize,
    pub residual_evaluations: usize,
    pub line_search_trials: usize,
    /// Relative residual before each iteration and after the last.
    pub residual_history: Vec<f64>,
    /// Iterations (0-based, into `residual_history`) at which K was refactored.
    pub refactored_at: Vec<usize>,
    /// Stalls, escalation and slack restarts, in order.
    pub events: Vec<CorrectorEvent>,
}

impl StepRecord {
    pub fn count(&self, kind: CorrectorEventKind) -> usize {
        self.events.iter().filter(|e| e.kind == kind).count()
    }

    /// How far the escalation went: "none", "refactored" (a stall was
    /// answered by refactoring) or "newton" (the step finished with Newton).
    pub fn escalation(&self) -> &'static str {
        if self.count(CorrectorEventKind::NewtonFallback) > 0 {
            "newton"
        } else if self.count(CorrectorEventKind::StallRefactor) > 0 {
            "refactored"
        } else {
            "none"
        }
    }

    fn event(&mut self, kind: CorrectorEventKind) {
        self.events.push(CorrectorEvent { iteration: self.iterations, kind });
    }
}

/// The equilibrium unknowns and what comes with them.
#[derive(Clone, Debug)]
pub struct State {
    pub u: Vec<f64>,
    pub lambda: f64,
    pub r: Vec<f64>,
    /// Support reactions, 3 per node.
    pub reactions: Vec<f64>,
    pub relative_residual: f64,
}

impl State {
    pub fn at_rest(system: &System, n_nodes: usize) -> State {
        State {
            u: vec![0.0; system.n_free()],
            lambda: 0.0,
            r: vec![0.0; system.n_free()],
            reactions: vec![0.0; 3 * n_nodes],
            relative_residual: 0.0,
        }
    }
}

/// Buffers reused across iterations and steps: nothing is allocated per
/// iteration (pair slots are allocated once, the slack sets only grow).
pub struct Workspace {
    k_values: Vec<f64>,
    h: InverseTangent,
    du_r: Vec<f64>,
    du_f: Vec<f64>,
    trial_u: Vec<f64>,
    trial_r: Vec<f64>,
    trial_reactions: Vec<f64>,
    r_prev: Vec<f64>,
    /// The secant pair s, y and H·y.
    s: Vec<f64>,
    y: Vec<f64>,
    hy: Vec<f64>,
    /// The step's predictor, where a Newton fallback may start again.
    pred_u: Vec<f64>,
    /// Slack set (ascending member indices) and key at the factorization of K₀.
    k0_slack: Vec<u32>,
    k0_slack_key: u64,
    /// Slack set at the current state (filled only when its key changed).
    slack_now: Vec<u32>,
    /// Slack key of the state the stored pairs were last taken at.
    memory_key: u64,
    /// The factor in `h` is of the tangent at the last converged state, so a
    /// new step may start from it without refactoring.
    fresh: bool,
}

impl Workspace {
    /// Evaluates residual and tangent at `state` and factorizes; returns the
    /// zero-pivot DOFs if the tangent is singular. For the quasi-Newton
    /// correctors the slack set at K₀ is kept (slack-aware restarts).
    pub fn refactor_at(&mut self, system: &System, state: &mut State, rec: &mut StepRecord) -> Option<Vec<usize>> {
            let ws = self;
        let norms = system.residual_and_tangent(&state.u, state.lambda, &mut state.r, &mut state.reactions, &mut ws.k_values);
        state.relative_residual = system.relative_residual(norms);
        rec.residual_evaluations += 1;
        rec.factorizations += 1;
        rec.refactored_at.push(rec.iterations);
        ws.k0_slack_key = norms.slack_key;
        ws.memory_key = norms.slack_key;
        if ws.h.method != Method::Newton && norms.slack > 0 {
            system.slack_members_into(&state.u, &mut ws.k0_slack);
        } else {
            ws.k0_slack.clear();
        }
        let inertia = ws.h.refactor(&system.pattern, &ws.k_values);
        inertia.is_singular().then(|| inertia.zero_dofs.clone())
    }

    /// d·K(u)·d: the stiffness of the tangent at `u` along `d`, assembled
    /// without a factorization. It overwrites the tangent values of the last
    /// factorization (the factor does not need them) and the trial buffers.
    pub fn stiffness_along(&mut self, system: &System, u: &[f64], lambda: f64, d: &[f64]) -> f64 {
        system.residual_and_tangent(u, lambda, &mut self.trial_r, &mut self.trial_reactions, &mut self.k_values);
        system.quadratic_form(&self.k_values, d)
    }

    /// Negative pivots of the latest factorization: the number of negative
    /// eigenvalues of that tangent (Sylvester's law of inertia).
    pub fn negative_pivots(&self) -> usize {
        self.h.inertia.negative
    }

    /// Whether the factor is of the tangent at the last converged state, so
    /// that a new step may start from it without refactoring.
    pub fn factor_is_fresh(&self) -> bool {
        self.fresh
    }

    /// Records whether the factor is of the tangent at the last converged
    /// state (the path knows, after a refactorization or a restore).
    pub fn set_factor_fresh(&mut self, fresh: bool) {
        self.fresh = fresh;
    }

    /// Whether the factor holds a usable numeric factorization.
    pub fn is_factored(&self) -> bool {
        self.h.ldlt.is_factored()
    }

    /// x ← H·x with the corrector's current inverse tangent.
    pub fn apply_inverse(&mut self, x: &mut [f64]) {
        self.h.apply(x);
    }

    /// The factor, handed out to be overwritten (eigenmodes of a tangent that
    /// is not the converged state's): it is marked not fresh.
    pub fn overwrite_factor(&mut self) -> &mut crate::linalg::Ldlt {
        self.fresh = false;
        &mut self.h.ldlt
    }

    pub fn new(system: &System, n_nodes: usize, h: InverseTangent) -> Workspace {
        let n = system.n_free();
        Workspace {
            k_values: system.new_tangent_values(),
            h,
            du_r: vec![0.0; n],
            du_f: vec![0.0; n],
            trial_u: vec![0.0; n],
            trial_r: vec![0.0; n],
            trial_reactions: vec![0.0; 3 * n_nodes],
            r_prev: vec![0.0; n],
            s: vec![0.0; n],
            y: vec![0.0; n],
            hy: vec![0.0; n],
            pred_u: vec![0.0; n],
            k0_slack: Vec::new(),
            k0_slack_key: 0,
            slack_now: Vec::new(),
            memory_key: 0,
            fresh: false,
        }
    }
}



/// Number of members in exactly one of two ascending index lists.
fn symmetric_difference(a: &[u32], b: &[u32]) -> usize {
    let (mut i, mut j, mut n) = (0, 0, 0);
    while i < a.len() && j < b.len() {
        match a[i].cmp(&b[j]) {
            std::cmp::Ordering::Less => {
                n += 1;
                i += 1;
            }
            std::cmp::Ordering::Greater => {
                n += 1;
                j += 1;
            }
            std::cmp::Ordering::Equal => {
                i += 1;
                j += 1;
            }
        }
    }
    n + (a.len() - i) + (b.len() - j)
}

/// Residual at u + α·δu, λ + α·δλ into the workspace's trial buffers;
/// returns the relative residual and the slack key there.
fn trial_residual(system: &System, ws: &mut Workspace, state: &State, alpha: f64, dl: f64) -> (f64, u64) {
    for ((t, u), d) in ws.trial_u.iter_mut().zip(&state.u).zip(&ws.du_r) {
        *t = u + alpha * d;
    }
    let norms = system.residual(&ws.trial_u, state.lambda + alpha * dl, &mut ws.trial_r, &mut ws.trial_reactions);
    (system.relative_residual(norms), norms.slack_key)
}

/// A quasi-Newton stall that comes within this factor of the residual at
/// which the previous stall was answered by a refactorization means the
/// refactorization did not buy a decade of progress: the step escalates to
/// Newton instead of refactoring again (common practice, no source: one
/// Newton iteration costs one factorization, the same as a refresh, and
/// converges quadratically where the quasi-Newton cycle did not).
const REFRESH_GAIN: f64 = 0.1;

/// A quasi-Newton residual this many times the predictor's (or not finite)
/// is divergence: the step escalates to Newton at once, from the predictor.
const QN_DIVERGENCE: f64 = 1e3;

/// Corrector iterations from `state` (already holding the predictor) until
/// equilibrium with the constraint. `step_start_u`/`step_start_lambda` are the
/// last converged state, from which the constraint measures the increments.
///
/// Escalation of the quasi-Newton correctors (modified Newton, Broyden,
/// BFGS), before the caller cuts the step back:
/// 1. an iteration *stalls* when ‖r_new‖ > `stall_ratio`·‖r_old‖; the
///    first stall refactors K at the current state (`StallRefactor`);
/// 2. a later stall refactors again only if the residual has fallen by
///    `REFRESH_GAIN` (a decade) since the previous stall-refactor;
///    otherwise, or when the quasi-Newton iterations *diverge* (residual
///    `QN_DIVERGENCE` times the predictor's, or not finite), use up their
///    `max_iterations`, or the path constraint has no solution, the step
///    goes on with full Newton iterations (`NewtonFallback`, a fresh tangent
///    every iteration), from the current state or, if that is worse than
///    the best state of the step (the lowest residual the quasi-Newton
///    iterations reached, or the predictor), from that best state
///    (`NewtonFromPredictor`, "newton-from-best");
/// 3. the Newton fallback has a budget of `max_iterations` of its own; only
///    if it fails too does the run return a failure.
#[allow(clippy::too_many_arguments)]
pub fn drive(
    system: &System,
    ws: &mut Workspace,
    state: &mut State,
    step_start_u: &[f64],
    step_start_lambda: f64,
    constraint: &dyn Constraint,
    config: &CorrectorConfig,
    step: usize,
    observer: &mut dyn Observer,
) -> (Termination, StepRecord) {
    use CorrectorEventKind as Ev;
    let mut rec = StepRecord::default();
    let quasi = config.method != Method::Newton;
    // Full Newton iterations: a Newton run, or a quasi-Newton run escalated.
    let mut newton = !quasi;
    let slack = config.refactor.slack;
    let mut delta_u: Vec<f64> = state.u.iter().zip(step_start_u).map(|(a, b)| a - b).collect();
    let mut energy_scale: Option<f64> = None;
    // The tangent at the last converged state is the step-start tangent.
    let mut need_factor = !ws.h.ldlt.is_factored() || (config.refactor.at_step_start && !ws.fresh);
    ws.fresh = false;
    if !need_factor {
        let norms = system.residual(&state.u, state.lambda, &mut state.r, &mut state.reactions);
        state.relative_residual = system.relative_residual(norms);
        rec.residual_evaluations += 1;
        // Pairs carried over from the last step were taken at another slack set.
        if quasi && slack.restart && norms.slack_key != ws.memory_key && ws.h.n_pairs() > 0 {
            ws.h.restart();
            rec.event(Ev::SlackRestart);
        }
        ws.memory_key = norms.slack_key;
    }
    // The best state of the step so far (lowest residual; the predictor to
    // begin with), where a Newton fallback starts: `ws.pred_u`, its λ and
    // its relative residual.
    ws.pred_u.copy_from_slice(&state.u);
    let mut pred_lambda = state.lambda;
    let mut pred_residual = f64::NAN; // set once the first residual is known
    let mut best_residual = f64::NAN;
    // The next iteration is the first of a Newton fallback.
    let mut fallback_first = false;
    // Iterations done when the current stage (quasi-Newton, Newton) began.
    let mut stage_start = 0;
    // Residual at the last stall-refactor.
    let mut refreshed_at: Option<f64> = None;
    // A Broyden pair waiting for H·r_{k+1}: (α, δλ) of its step; s in ws.s,
    // y is formed from ws.r_prev.
    let mut pending: Option<(f64, f64)> = None;
    // ws.du_f holds H·f_ref for the current H.
    let mut du_f_valid = false;
    // Set when the quasi-Newton iterations give up: the failure to report
    // if the Newton fallback is switched off.
    let mut escalate: Option<Termination> = None;
    // Iterations done when the quasi-Newton corrector refactored at the
    // step's best state (see the fallback's start below).
    let mut factored_at_best: Option<usize> = None;
    loop {
        if let Some(term) = escalate.take() {
            if !config.newton_fallback {
                rec.residual_history.push(state.relative_residual);
                return (term, rec);
            }
            newton = true;
            fallback_first = true;
            stage_start = rec.iterations;
            pending = None;
            rec.event(Ev::NewtonFallback);
            // The first iteration from a stall-refactor made at the best
            // state was already the fallback's first iteration (a fresh
            // tangent and the same line search): starting again from that
            // state would repeat it, factorization and all, to the same
            // result. The fallback goes on from where it landed.
            let repeats = state.relative_residual.is_finite() && factored_at_best.is_some_and(|i| i + 1 == rec.iterations);
            if !repeats && (state.relative_residual.is_nan() || state.relative_residual > best_residual) {
                state.u.copy_from_slice(&ws.pred_u);
                state.lambda = pred_lambda;
                for ((d, u), u0) in delta_u.iter_mut().zip(&state.u).zip(step_start_u) {
                    *d = u - u0;
                }
                energy_scale = None;
                rec.event(Ev::NewtonFromPredictor);
            }
            need_factor = true;
        }
        if need_factor {
            if let Some(dofs) = ws.refactor_at(system, state, &mut rec) {
                rec.residual_history.push(state.relative_residual);
                return (Termination::SingularTangent { dofs }, rec);
            }
            need_factor = false;
            pending = None;
            du_f_valid = false;
            // At the predictor (the first factorization, `best_residual` not
            // set yet) or at the lowest residual so far.
            let at_best = best_residual.is_nan() || state.relative_residual == best_residual;
            factored_at_best = (!newton && at_best).then_some(rec.iterations);
        }
        if pred_residual.is_nan() {
            pred_residual = state.relative_residual;
            best_residual = state.relative_residual;
        }
        if !state.relative_residual.is_finite() {
            if !newton {
                escalate = Some(Termination::Diverged);
                continue;
            }
            return (Termination::Diverged, rec);
        }
        rec.residual_history.push(state.relative_residual);
        // The predictor satisfies the constraint by construction, so a
        // residual already below tolerance ends the step at once.
        if rec.iterations == 0 && state.relative_residual <= config.tolerance {
            return (Termination::Converged, rec);
        }
        if rec.iterations - stage_start >= config.max_iterations {
            if !newton {
                rec.residual_history.pop();
                escalate = Some(Termination::MaxIterations);
                continue;
            }
            return (Termination::MaxIterations, rec);
        }

        // δu_r = −H r, δu_f = H f_ref.
        ws.du_r.iter_mut().zip(&state.r).for_each(|(d, r)| *d = -r);
        ws.h.apply(&mut ws.du_r);
        if let Some((alpha, dl)) = pending.take() {
            // The Broyden update of the last iteration, now that
            // H·r_{k+1} = −du_r is known (see `inverse`):
            // H·y = H·r_{k+1} + s/α + (α − 1)·δλ·H·f_ref.
            for (((hy, du), s), df) in ws.hy.iter_mut().zip(&ws.du_r).zip(&ws.s).zip(&ws.du_f) {
                *hy = -du + s / alpha + if dl != 0.0 { (alpha - 1.0) * dl * df } else { 0.0 };
            }
            for (((y, rn), ro), f) in ws.y.iter_mut().zip(&state.r).zip(&ws.r_prev).zip(&system.f_ref) {
                *y = rn - ro + alpha * dl * f;
            }
            if ws.h.update_with(&ws.s, &ws.y, &ws.hy) {
                // Fold the new pair into the products already formed.
                ws.r_prev.iter_mut().zip(&state.r).for_each(|(p, r)| *p = -r);
                ws.h.extend(&ws.r_prev, &mut ws.du_r);
                if du_f_valid {
                    ws.h.extend(&system.f_ref, &mut ws.du_f);
                }
            }
        }
        if constraint.needs_load_direction() && !du_f_valid {
            ws.du_f.copy_from_slice(&system.f_ref);
            ws.h.apply(&mut ws.du_f);
            // H is fixed between refactorizations for modified Newton and
            // Newton and extended in place for Broyden; BFGS recomputes.
            du_f_valid = ws.h.method != Method::Bfgs || ws.h.n_pairs() == 0;
        }
        let Some(dl) = constraint.load_correction(&ws.du_r, &ws.du_f, &delta_u, state.lambda - step_start_lambda) else {
            if !newton {
                rec.residual_history.pop();
                escalate = Some(Termination::ConstraintFailed);
                continue;
            }
            return (Termination::ConstraintFailed, rec);
        };
        if dl != 0.0 {
            for (dr, df) in ws.du_r.iter_mut().zip(&ws.du_f) {
                *dr += dl * df;
            }
        }
        // ws.du_r now holds the full correction δu.

        // Energy line search along (δu, δλ): find α with the residual
        // orthogonal to the direction, g(α) = δu·r(u + α·δu) ≈ 0, accepting
        // |g(α)| ≤ η·|g(0)| (Matthies & Strang 1979; Crisfield 1991, §9.3).
        // The full step is tried first; secant steps on g follow, bounded,
        // and the trial with the smallest |g| is kept. Where g(0) ≥ 0 the
        // direction does not lower the energy (an unstable state) and the
        // full step is taken.
        // The Newton fallback takes Newton's own full steps, as a Newton run
        // does: on slack cable nets the energy line search was measured to
        // hold Newton to steps of α ≈ 0.1–0.4 and out of its quadratic
        // convergence (183 × 183 net, README), where full steps converge.
        // Newton takes full steps, except the first step of a fallback: it
        // starts near a state where cables are about to go slack or taut,
        // and the full step from the tangent there can overshoot by orders
        // of magnitude; the energy line search of the quasi-Newton settings
        // keeps that one step in bounds.
        // A Newton run takes its own settings (`line_search` of
        // `[analysis]`, off unless set).
        let line_search = if newton && quasi && !fallback_first {
            CorrectorConfig::for_method(Method::Newton, 0.0, 0).line_search
        } else {
            config.line_search
        };
        fallback_first = false;
        ws.r_prev.copy_from_slice(&state.r);
        let g0 = dot(&ws.du_r, &state.r);
        let mut alpha = 1.0;
        let mut trials = 0;
        let mut best: Option<(f64, f64, f64, u64)> = None; // (α, |g|, relative residual, slack key)
        let mut prev = (0.0, g0);
        loop {
            let (rel, key) = trial_residual(system, ws, state, alpha, dl);
            rec.residual_evaluations += 1;
            let g = dot(&ws.du_r, &ws.trial_r);
            if rel.is_finite() && best.is_none_or(|(_, bg, _, _)| g.abs() < bg) {
                best = Some((alpha, g.abs(), rel, key));
            }
            let searching = line_search.max_trials > 0 && g0 < 0.0 && state.relative_residual > config.tolerance;
            let good = rel.is_finite() && g.abs() <= line_search.energy_ratio * g0.abs();
            if !searching || good || trials >= line_search.max_trials {
                if !rel.is_finite() && best.is_none() && alpha > 1e-3 && trials < 8 {
                    // Overflow: shorten until the residual is finite.
                    alpha *= 0.25;
                    trials += 1;
                    continue;
                }
                break;
            }
            trials += 1;
            // Secant on g through the last two trials, kept in [0.1, 2].
            let (a0, ga) = prev;
            let next = if (g - ga).abs() > 0.0 { alpha - g * (alpha - a0) / (g - ga) } else { 0.5 * alpha };
            prev = (alpha, g);
            alpha = if next.is_finite() { next.clamp(0.1, 2.0) } else { 0.5 * alpha };
        }
        rec.line_search_trials += trials;
        let Some((alpha_best, _, rel_best, key)) = best else {
            if !newton {
                rec.residual_history.pop();
                escalate = Some(Termination::Diverged);
                continue;
            }
            return (Termination::Diverged, rec);
        };
        if alpha_best != alpha {
            alpha = alpha_best;
            trial_residual(system, ws, state, alpha, dl);
            rec.residual_evaluations += 1;
        }
        // Accept the step.
        let lambda_new = state.lambda + alpha * dl;
        let step_norm = ws.du_r.iter().map(|v| (alpha * v).powi(2)).sum::<f64>().sqrt();
        for (du, d) in delta_u.iter_mut().zip(&ws.du_r) {
            *du += alpha * d;
        }
        std::mem::swap(&mut state.u, &mut ws.trial_u);
        std::mem::swap(&mut state.r, &mut ws.trial_r);
        std::mem::swap(&mut state.reactions, &mut ws.trial_reactions);
        let lambda_change = lambda_new - state.lambda;
        state.lambda = lambda_new;
        let previous = state.relative_residual;
        state.relative_residual = rel_best;
        rec.iterations += 1;
        if newton {
            rec.newton_iterations += 1;
        } else if state.relative_residual < best_residual && config.newton_fallback {
            // A quasi-Newton cycle that ends in a stall may have passed
            // through a far better state than the one it stops at: the
            // Newton fallback starts from the best (one copy of u).
            best_residual = state.relative_residual;
            ws.pred_u.copy_from_slice(&state.u);
            pred_lambda = state.lambda;
        }
        let converged_residual = state.relative_residual <= config.tolerance;

        let disp_ok = match config.displacement_tolerance {
            Some(tol) => step_norm <= tol * delta_u.iter().map(|v| v * v).sum::<f64>().sqrt().max(f64::MIN_POSITIVE),
            None => true,
        };
        // Work of this correction against the residual it started from.
        let energy = (alpha * g0).abs();
        let first_energy = *energy_scale.get_or_insert(energy);
        let energy_ok = match config.energy_tolerance {
            Some(tol) => energy <= tol * first_energy.max(f64::MIN_POSITIVE),
            None => true,
        };

        if newton {
            need_factor = true;
        } else {
            // Slack-aware memory: a changed slack set makes the stored pairs
            // (and the pair across the change) describe another tangent.
            let slack_changed = key != ws.memory_key;
            if slack_changed && slack.restart && (ws.h.n_pairs() > 0 || pending.is_some()) {
                ws.h.restart();
                pending = None;
                du_f_valid = false;
                rec.event(Ev::SlackRestart);
            }
            if slack_changed {
                ws.memory_key = key;
            }
            let mut far_from_k0 = false;
            if slack_changed && slack.refactor_members != usize::MAX && key != ws.k0_slack_key && !converged_residual {
                system.slack_members_into(&state.u, &mut ws.slack_now);
                far_from_k0 = symmetric_difference(&ws.slack_now, &ws.k0_slack) > slack.refactor_members;
            }
            // Secant pair: s = α·δu, y = Δf_int = Δr + Δλ·f_ref. A pair
            // across a slack change is not stored when restarting.
            if ws.h.updates() && !converged_residual && !(slack_changed && slack.restart) {
                for (s, d) in ws.s.iter_mut().zip(&ws.du_r) {
                    *s = alpha * d;
                }
                if ws.h.extends() {
                    pending = Some((alpha, dl));
                } else {
                    for (((y, rn), ro), f) in ws.y.iter_mut().zip(&state.r).zip(&ws.r_prev).zip(&system.f_ref) {
                        *y = rn - ro + lambda_change * f;
                    }
                    if ws.h.update_with(&ws.s, &ws.y, &ws.y) {
                        du_f_valid = false;
                    }
                }
            }
            let stalled = state.relative_residual > config.refactor.stall_ratio * previous;
            let diverged = state.relative_residual.is_nan() || state.relative_residual > QN_DIVERGENCE * pred_residual;
            let full = ws.h.updates() && ws.h.n_pairs() + pending.is_some() as usize >= config.refactor.max_updates;
            if !converged_residual {
                if diverged {
                    escalate = Some(Termination::Diverged);
                } else if stalled {
                    // Modified Newton with no pairs and a fresh K₀ stalls
                    // the same way a refactor would: count it all the same.
                    match refreshed_at {
                        Some(r) if config.newton_fallback && state.relative_residual > REFRESH_GAIN * r => {
                            escalate = Some(Termination::MaxIterations)
                        }
                        _ => {
                            refreshed_at = Some(state.relative_residual);
                            rec.event(Ev::StallRefactor);
                            need_factor = true;
                        }
                    }
                } else if far_from_k0 {
                    rec.event(Ev::SlackRefactor);
                    need_factor = true;
                } else if full {
                    need_factor = true;
                }
            }
        }
        let ev = IterEvent {
            step,
            iteration: rec.iterations,
            lambda: state.lambda,
            relative_residual: state.relative_residual,
            refactored: need_factor || escalate.is_some(),
            line_search_trials: trials,
        };
        if observer.on_iteration(&ev) == Answer::Stop {
            rec.residual_history.push(state.relative_residual);
            return (Termination::Stopped, rec);
        }
        if converged_residual && disp_ok && energy_ok {
            rec.residual_history.push(state.relative_residual);
            return (Termination::Converged, rec);
        }
        if escalate.is_some() {
            continue;
        }
        if newton && state.relative_residual > 1e8 * rec.residual_history[0].max(1.0) {
            rec.residual_history.push(state.relative_residual);
            return (Termination::Diverged, rec);
        }
    }
}
