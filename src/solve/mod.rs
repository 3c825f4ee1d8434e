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

use crate::assembly::System;
use crate::model::Method;
use crate::observe::{Control, IterEvent, Observer};

/// When the tangent is refactored.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct RefactorPolicy {
    /// Refactor at the start of each load step.
    pub at_step_start: bool,
    /// Refactor after this many stored quasi-Newton updates (memory bound).
    pub max_updates: usize,
    /// Refactor when ‖r_new‖ > ratio·‖r_old‖ (divergence guard).
    pub stall_ratio: f64,
}

impl Default for RefactorPolicy {
    fn default() -> Self {
        RefactorPolicy { at_step_start: true, max_updates: 20, stall_ratio: 0.9 }
    }
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
}

impl CorrectorConfig {
    /// The corrector settings of a model's `[analysis]` table.
    pub fn from_analysis(a: &crate::model::Analysis) -> Self {
        let mut c = CorrectorConfig::for_method(a.method, a.tolerance, a.max_iterations);
        c.refactor = RefactorPolicy {
            at_step_start: a.refactor_each_step,
            max_updates: a.refactor_after,
            stall_ratio: a.stall_ratio,
        };
        if let Some(trials) = a.line_search {
            c.line_search.max_trials = trials;
        }
        c.displacement_tolerance = a.displacement_tolerance;
        c.energy_tolerance = a.energy_tolerance;
        c
    }

    /// Defaults for a method: line search on for the quasi-Newton correctors,
    /// off for Newton (whose full step is already well scaled near a solution).
    pub fn for_method(method: Method, tolerance: f64, max_iterations: usize) -> Self {
        let line_search = match method {
            Method::Newton => LineSearch::OFF,
            _ => LineSearch::DEFAULT,
        };
        CorrectorConfig {
            method,
            max_iterations,
            tolerance,
            displacement_tolerance: None,
            energy_tolerance: None,
            refactor: RefactorPolicy::default(),
            line_search,
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

/// The record of one corrector run.
#[derive(Clone, Debug, Default)]
pub struct StepRecord {
    pub iterations: usize,
    pub factorizations: usize,
    pub residual_evaluations: usize,
    pub line_search_trials: usize,
    /// Relative residual before each iteration and after the last.
    pub residual_history: Vec<f64>,
    /// Iterations (0-based, into `residual_history`) at which K was refactored.
    pub refactored_at: Vec<usize>,
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
/// iteration except the quasi-Newton pairs.
pub struct Workspace {
    pub k_values: Vec<f64>,
    pub h: InverseTangent,
    du_r: Vec<f64>,
    du_f: Vec<f64>,
    trial_u: Vec<f64>,
    trial_r: Vec<f64>,
    trial_reactions: Vec<f64>,
    r_prev: Vec<f64>,
    /// The factor in `h` is of the tangent at the last converged state, so a
    /// new step may start from it without refactoring.
    pub fresh: bool,
}

impl Workspace {
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
            fresh: false,
        }
    }
}

/// The relative residual with its absolute floor ([`System::relative_residual`]).
fn relative(system: &System, norms: crate::assembly::system::ResidualNorms) -> f64 {
    system.relative_residual(norms)
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// Residual at u + α·δu, λ + α·δλ into the workspace's trial buffers;
/// returns the relative residual.
fn trial_residual(system: &System, ws: &mut Workspace, state: &State, alpha: f64, dl: f64) -> f64 {
    for ((t, u), d) in ws.trial_u.iter_mut().zip(&state.u).zip(&ws.du_r) {
        *t = u + alpha * d;
    }
    let norms = system.residual(&ws.trial_u, state.lambda + alpha * dl, &mut ws.trial_r, &mut ws.trial_reactions);
    relative(system, norms)
}

/// Evaluates residual and tangent at `state` and factorizes; returns the
/// zero-pivot DOFs if the tangent is singular.
pub fn refactor_at(system: &System, ws: &mut Workspace, state: &mut State, rec: &mut StepRecord) -> Option<Vec<usize>> {
    let norms = system.residual_and_tangent(&state.u, state.lambda, &mut state.r, &mut state.reactions, &mut ws.k_values);
    state.relative_residual = relative(system, norms);
    rec.residual_evaluations += 1;
    rec.factorizations += 1;
    rec.refactored_at.push(rec.iterations);
    let inertia = ws.h.refactor(&system.pattern, &ws.k_values);
    inertia.is_singular().then(|| inertia.zero_dofs.clone())
}

/// Corrector iterations from `state` (already holding the predictor) until
/// equilibrium with the constraint. `step_start_u`/`step_start_lambda` are the
/// last converged state, from which the constraint measures the increments.
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
    let mut rec = StepRecord::default();
    let newton = config.method == Method::Newton;
    let mut delta_u: Vec<f64> = state.u.iter().zip(step_start_u).map(|(a, b)| a - b).collect();
    let mut energy_scale: Option<f64> = None;
    // The tangent at the last converged state is the step-start tangent.
    let mut need_factor = !ws.h.ldlt.is_factored() || (config.refactor.at_step_start && !ws.fresh);
    ws.fresh = false;
    if !need_factor {
        let norms = system.residual(&state.u, state.lambda, &mut state.r, &mut state.reactions);
        state.relative_residual = relative(system, norms);
        rec.residual_evaluations += 1;
    }
    loop {
        if need_factor {
            if let Some(dofs) = refactor_at(system, ws, state, &mut rec) {
                rec.residual_history.push(state.relative_residual);
                return (Termination::SingularTangent { dofs }, rec);
            }
            need_factor = false;
        }
        if !state.relative_residual.is_finite() {
            return (Termination::Diverged, rec);
        }
        rec.residual_history.push(state.relative_residual);
        // The predictor satisfies the constraint by construction, so a
        // residual already below tolerance ends the step at once.
        if rec.iterations == 0 && state.relative_residual <= config.tolerance {
            return (Termination::Converged, rec);
        }
        if rec.iterations >= config.max_iterations {
            return (Termination::MaxIterations, rec);
        }

        // δu_r = −H r, δu_f = H f_ref.
        ws.du_r.iter_mut().zip(&state.r).for_each(|(d, r)| *d = -r);
        ws.h.apply(&mut ws.du_r);
        if constraint.needs_load_direction() {
            ws.du_f.copy_from_slice(&system.f_ref);
            ws.h.apply(&mut ws.du_f);
        }
        let Some(dl) = constraint.load_correction(&ws.du_r, &ws.du_f, &delta_u, state.lambda - step_start_lambda) else {
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
        ws.r_prev.copy_from_slice(&state.r);
        let g0 = dot(&ws.du_r, &state.r);
        let mut alpha = 1.0;
        let mut trials = 0;
        let mut best: Option<(f64, f64, f64)> = None; // (α, |g|, relative residual)
        let mut prev = (0.0, g0);
        loop {
            let rel = trial_residual(system, ws, state, alpha, dl);
            rec.residual_evaluations += 1;
            let g = dot(&ws.du_r, &ws.trial_r);
            if rel.is_finite() && best.is_none_or(|(_, bg, _)| g.abs() < bg) {
                best = Some((alpha, g.abs(), rel));
            }
            let searching = config.line_search.max_trials > 0 && g0 < 0.0 && state.relative_residual > config.tolerance;
            let good = rel.is_finite() && g.abs() <= config.line_search.energy_ratio * g0.abs();
            if !searching || good || trials >= config.line_search.max_trials {
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
        let Some((alpha_best, _, rel_best)) = best else {
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

        // Secant pair: s = α·δu, y = Δf_int = Δr + Δλ·f_ref.
        if newton {
            need_factor = true;
        } else if ws.h.updates() && state.relative_residual > config.tolerance {
            let s: Vec<f64> = ws.du_r.iter().map(|d| alpha * d).collect();
            let y: Vec<f64> = state
                .r
                .iter()
                .zip(&ws.r_prev)
                .zip(&system.f_ref)
                .map(|((rn, ro), f)| rn - ro + lambda_change * f)
                .collect();
            ws.h.update(&s, &y);
        }
        if !newton {
            let stalled = state.relative_residual > config.refactor.stall_ratio * previous;
            if stalled || (ws.h.updates() && ws.h.n_pairs() >= config.refactor.max_updates) {
                need_factor = state.relative_residual > config.tolerance;
            }
        }
        let ev = IterEvent {
            step,
            iteration: rec.iterations,
            lambda: state.lambda,
            relative_residual: state.relative_residual,
            refactored: need_factor,
            line_search_trials: trials,
        };
        if observer.on_iteration(&ev) == Control::Stop {
            rec.residual_history.push(state.relative_residual);
            return (Termination::Stopped, rec);
        }
        if state.relative_residual <= config.tolerance && disp_ok && energy_ok {
            rec.residual_history.push(state.relative_residual);
            return (Termination::Converged, rec);
        }
        if state.relative_residual > 1e8 * rec.residual_history[0].max(1.0) {
            rec.residual_history.push(state.relative_residual);
            return (Termination::Diverged, rec);
        }
    }
}
