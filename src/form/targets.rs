//! Form finding to member targets the linear force density method cannot
//! meet in one solve: a force T or a length L* for chosen members.
//!
//! The force densities are iterated around linear solves (Schek 1974's
//! equations, [`force_density_with`]). After each solve, with l the member's
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

use super::{FormError, FormResult, force_density_with, member_force_densities};
use crate::model::{FormTarget, Model};

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

/// Iterates the force densities until every target is met within
/// `model.form.tolerance`, or `model.form.max_iterations` updates were made.
pub fn force_density_to_targets(model: &Model) -> Result<TargetRun, FormError> {
    let tol = model.form.tolerance;
    let mut q = member_force_densities(model)?;
    let mut log = Vec::new();
    let mut best: Option<(FormResult, f64, usize)> = None;
    let mut broke_off = None;
    for iteration in 0..=model.form.max_iterations {
        let form = match force_density_with(model, q.clone()) {
            Ok(f) => f,
            // The starting densities are the user's: their failure is an input error.
            Err(e) if best.is_none() => return Err(e),
            Err(e) => {
                broke_off = Some(e);
                break;
            }
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
        for (m, member) in model.members.iter().enumerate() {
            let l = form.lengths[m];
            match member.target {
                Some(FormTarget::Force(t)) if l > 0.0 => q[m] = t / l,
                Some(FormTarget::Length(target)) if l > 0.0 => q[m] *= l / target,
                _ => {}
            }
        }
        if improved {
            best = Some((form, max_error, worst_member));
        }
    }
    let (form, max_error, worst_member) = best.expect("at least one solve");
    Ok(TargetRun { converged: max_error <= tol && broke_off.is_none(), form, log, max_error, worst_member, broke_off })
}
