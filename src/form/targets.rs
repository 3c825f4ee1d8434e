//! Form finding to member targets the linear force density method cannot
//! meet in one solve: a force T or a length L* for chosen members.
//!
//! The force densities are iterated around linear solves (Schek 1974's
//! equations, [`force_density_with`](super::force_density_with)). After each solve, with l the member's
//! length there:
//!
//! - target force: q ← T / l, so that q·l = T at the current length (the
//!   classic update; a fixed point is exactly a shape with N = T);
//! - target length: q ← q · l / L*, which raises the force density of a
//!   member that came out too long and lowers that of one too short; at a
//!   fixed point l = L*.
//!
//! Both are fixed-point iterations: each converges when the shape responds
//! to one member's q less strongly than in proportion, which holds for the
//! usual prestressed nets; the run stops at `max_iterations` otherwise and
//! returns the best shape seen. The error of a member is |N − T|/T or
//! |l − L*|/L*; the run converges when the largest is ≤ `[form] tolerance`.
//!
//! The fixed point converges only linearly, at a rate near 1 when many
//! target members share nodes (a net with half its members on target forces
//! gains about 6 % a step and stops at `max_iterations` far above a 1e-9
//! tolerance). So the target force densities are found by Newton's method
//! on the target equations instead, g_m(q) = q_m·l_m(q) − T_m (or
//! l_m(q) − L*_m), whose Jacobian the factored system gives exactly: with
//! D(q)·x = b(q) the force density equations, ∂x/∂q_k = −D⁻¹·C_kᵀC_k·x
//! (one solve with the factor per target member), and
//! ∂l_m/∂q_k = e_m·(∂x_j − ∂x_i) for member m from node i to j with unit
//! vector e_m. ∂g_m/∂q_k = δ_mk·l_m + q_m·∂l_m/∂q_k for a force target and
//! ∂l_m/∂q_k for a length target (the sensitivity analysis of the force
//! density equations; derived here, not from a source). Each Newton step is
//! halved until the sum of squared relative target errors falls; a step
//! that does not fall after `MAX_HALVINGS` halvings is replaced by one
//! fixed-point update. Above `NEWTON_MAX_TARGETS` targets (a dense Jacobian
//! of that order per iteration) only the fixed point runs.

use super::{FdSystem, FormError, FormResult, NONE, member_force_densities, solve_with};
use crate::model::{FormTarget, Model};
use nalgebra::{DMatrix, DVector};

/// Most target members solved for by Newton's method (its Jacobian is dense).
pub const NEWTON_MAX_TARGETS: usize = 2000;

/// Halvings of a Newton step before the fixed-point update replaces it.
const MAX_HALVINGS: usize = 12;

/// One linear solve of the iteration.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct TargetIteration {
    /// 0 for the solve with the starting force densities.
    pub iteration: usize,
    /// Largest relative target error after this solve.
    pub max_error: f64,
    /// Member with that error.
    pub worst_member: usize,
}

/// What the iteration found.
#[derive(Clone, Debug)]
pub struct TargetRun {
    /// The shape with the smallest largest error seen.
    pub form: FormResult,
    /// Every solve, in order.
    pub log: Vec<TargetIteration>,
    pub converged: bool,
    /// Largest relative target error of `form` and its member.
    pub max_error: f64,
    pub worst_member: usize,
    /// Why the iteration ended early, when a later solve failed (e.g. the
    /// updated force densities made the equations singular, the sign of
    /// targets no shape can meet).
    pub broke_off: Option<FormError>,
}

/// True if any member has a form-finding target.
pub fn has_targets(model: &Model) -> bool {
    model.members.iter().any(|m| m.target.is_some())
}

/// Relative target error of every member (0 without a target) and the worst.
fn worst_error(model: &Model, form: &FormResult) -> (f64, usize) {
    let mut worst = (0.0, 0);
    for (m, member) in model.members.iter().enumerate() {
        let e = match member.target {
            Some(FormTarget::Force(t)) => (form.forces[m] - t).abs() / t,
            Some(FormTarget::Length(l)) => (form.lengths[m] - l).abs() / l,
            None => continue,
        };
        let e = if e.is_finite() { e } else { f64::INFINITY };
        if e > worst.0 || (e.is_infinite() && worst.0.is_finite()) {
            worst = (e, m);
        }
    }
    worst
}

/// The fixed-point update of every target member's force density.
fn fixed_point(model: &Model, form: &FormResult, q: &mut [f64]) {
    for (m, member) in model.members.iter().enumerate() {
        let l = form.lengths[m];
        match member.target {
            Some(FormTarget::Force(t)) if l > 0.0 => q[m] = t / l,
            Some(FormTarget::Length(target)) if l > 0.0 => q[m] *= l / target,
            _ => {}
        }
    }
}

/// Relative target errors g_m / T_m (or / L*_m) of the target members, in
/// the order of `targets`.
fn target_residuals(model: &Model, targets: &[usize], form: &FormResult) -> Vec<f64> {
    targets
        .iter()
        .map(|&m| match model.members[m].target {
            Some(FormTarget::Force(t)) => (form.forces[m] - t) / t,
            Some(FormTarget::Length(l)) => (form.lengths[m] - l) / l,
            None => 0.0,
        })
        .collect()
}

/// The Newton step Δq of the target members (see the module docs), with
/// the factored system of the solve that gave `form`; None if the Jacobian
/// is singular or not finite.
fn newton_step(model: &Model, targets: &[usize], form: &FormResult, q: &[f64], sys: &mut FdSystem) -> Option<Vec<f64>> {
    let t = targets.len();
    let x = &form.positions;
    let unit = |m: usize| -> [f64; 3] {
        let [i, j] = model.members[m].ends;
        let l = form.lengths[m];
        std::array::from_fn(|a| if l > 0.0 { (x[j][a] - x[i][a]) / l } else { 0.0 })
    };
    let units: Vec<[f64; 3]> = targets.iter().map(|&m| unit(m)).collect();
    // Scale of each equation: the residuals are relative (g_m / T_m).
    let scale: Vec<f64> = targets
        .iter()
        .map(|&m| match model.members[m].target {
            Some(FormTarget::Force(v)) | Some(FormTarget::Length(v)) => v,
            None => 1.0,
        })
        .collect();
    let mut jac = DMatrix::<f64>::zeros(t, t);
    let mut dx = vec![0.0; sys.n];
    for (col, &k) in targets.iter().enumerate() {
        let [i, j] = model.members[k].ends;
        dx.iter_mut().for_each(|v| *v = 0.0);
        for (a, (xj, xi)) in x[j].iter().zip(&x[i]).enumerate() {
            let d = xj - xi;
            let (di, dj) = (sys.index[3 * i + a], sys.index[3 * j + a]);
            // −∂R/∂q_k: R_i = Σ q (x_i − x_j) at node i, the opposite at j.
            if di != NONE {
                dx[di] += d;
            }
            if dj != NONE {
                dx[dj] -= d;
            }
        }
        sys.solve_in_place(&mut dx);
        let at = |node: usize, a: usize| {
            let d = sys.index[3 * node + a];
            if d == NONE { 0.0 } else { dx[d] }
        };
        for (row, &m) in targets.iter().enumerate() {
            let [mi, mj] = model.members[m].ends;
            let e = units[row];
            let dl: f64 = (0..3).map(|a| e[a] * (at(mj, a) - at(mi, a))).sum();
            let dg = match model.members[m].target {
                Some(FormTarget::Force(_)) => q[m] * dl + if m == k { form.lengths[m] } else { 0.0 },
                _ => dl,
            };
            jac[(row, col)] = dg / scale[row];
        }
    }
    let g = DVector::from_vec(target_residuals(model, targets, form));
    let step = jac.lu().solve(&(-g))?;
    step.iter().all(|v| v.is_finite()).then(|| step.iter().copied().collect())
}

/// Iterates the force densities until every target is met within
/// `model.form.tolerance`, or `model.form.max_iterations` updates were made:
/// Newton's method on the targets (see the module docs), the fixed point
/// above `NEWTON_MAX_TARGETS` targets or where a Newton step fails.
pub fn force_density_to_targets(model: &Model) -> Result<TargetRun, FormError> {
    let tol = model.form.tolerance;
    let mut q = member_force_densities(model)?;
    let targets: Vec<usize> = (0..model.n_members()).filter(|&m| model.members[m].target.is_some()).collect();
    let newton = targets.len() <= NEWTON_MAX_TARGETS;
    let mut log = Vec::new();
    let mut best: Option<(FormResult, f64, usize)> = None;
    let mut broke_off = None;
    // The solve of the current q (from the line search, when it made one).
    let mut current: Option<(FormResult, FdSystem)> = None;
    for iteration in 0..=model.form.max_iterations {
        let (form, mut sys) = match current.take() {
            Some(c) => c,
            None => match solve_with(model, q.clone()) {
                Ok(f) => f,
                // The starting densities are the user's: their failure is an input error.
                Err(e) if best.is_none() => return Err(e),
                Err(e) => {
                    broke_off = Some(e);
                    break;
                }
            },
        };
        let (max_error, worst_member) = worst_error(model, &form);
        log.push(TargetIteration { iteration, max_error, worst_member });
        let improved = best.as_ref().is_none_or(|b| max_error < b.1);
        if max_error <= tol || iteration == model.form.max_iterations {
            if improved {
                best = Some((form, max_error, worst_member));
            }
            break;
        }
        let mut stepped = false;
        if newton && let Some(dq) = newton_step(model, &targets, &form, &q, &mut sys) {
            let merit = |f: &FormResult| target_residuals(model, &targets, f).iter().map(|r| r * r).sum::<f64>();
            let now = merit(&form);
            let mut alpha = 1.0;
            for _ in 0..=MAX_HALVINGS {
                let mut trial = q.clone();
                for (&m, d) in targets.iter().zip(&dq) {
                    trial[m] += alpha * d;
                }
                if let Ok((f, s)) = solve_with(model, trial.clone())
                    && merit(&f) < now
                {
                    q = trial;
                    current = Some((f, s));
                    stepped = true;
                    break;
                }
                alpha *= 0.5;
            }
        }
        if !stepped {
            fixed_point(model, &form, &mut q);
        }
        if improved {
            best = Some((form, max_error, worst_member));
        }
    }
    let (form, max_error, worst_member) = best.expect("at least one solve");
    Ok(TargetRun { converged: max_error <= tol && broke_off.is_none(), form, log, max_error, worst_member, broke_off })
}
