//! Why a path stopped, in words an engineer can act on: the stop message of
//! `results.json` and the summary, with the prestressed start's failure
//! spelled out.

use crate::model::Model;
use super::{norm3, switch_not_made};
use crate::path::branch::SwitchOutcome;
use crate::path::{EquilibriumPath, StopReason};
use crate::solve::Termination;

/// Whether a path that stopped short is moving away from its target: its
/// last load factor is farther from the target than an earlier converged
/// step was (and than its start). Returns that closest step and load factor.
pub fn moving_away(model: &Model, path: &EquilibriumPath) -> Option<(usize, f64)> {
    let target = model.analysis.target;
    if model.analysis.control == crate::model::Control::Displacement {
        return None;
    }
    let last = path.points.last()?;
    let closest = path.points.iter().min_by(|a, b| (target - a.lambda).abs().total_cmp(&(target - b.lambda).abs()))?;
    let first = path.points.first()?;
    let away = (target - last.lambda).abs();
    (away > (target - closest.lambda).abs() && away >= (target - first.lambda).abs() && closest.step != last.step)
        .then_some((closest.step, closest.lambda))
}

/// A failed step whose relative residual is this many times the tolerance
/// ended far from any equilibrium state (common practice, no source).
const ITERATE_FAR: f64 = 1e3;

/// Describes why the path stopped, in words an engineer can act on.
pub fn stop_message(model: &Model, path: &EquilibriumPath) -> String {
    let units = &model.units;
    let last = path.points.last().map_or(0.0, |p| p.lambda);
    match path.stop {
        StopReason::TargetReached => format!("reached the target at load factor {last:.6}"),
        StopReason::MaxDisplacement => format!("stopped at max_displacement, load factor {last:.6}"),
        StopReason::MaxSteps => match moving_away(model, path) {
            Some((step, closest)) => format!(
                "stopped after max_steps = {} steps at load factor {last:.6}, moving away from the target {}: the load factor \
                 was closest to it at step {step} ({closest:.6}) and has moved away since, so more steps would not reach it; \
                 see critical_points in results.json for a limit point on the way, check the sign of the loads and of target, \
                 or follow the path with a smaller arc",
                model.analysis.max_steps, model.analysis.target
            ),
            None => format!(
                "stopped after max_steps = {} steps at load factor {last:.6}, before the target; raise max_steps or steps",
                model.analysis.max_steps
            ),
        },
        StopReason::Interrupted => format!("interrupted at load factor {last:.6}; converged steps are kept"),
        StopReason::NoStartEquilibrium => start_failure_message(model, path),
        StopReason::BranchSwitch => match &path.switch {
            Some(SwitchOutcome::Switched(s)) => format!(
                "left the primary path at the bifurcation at load factor {:.6}; the secondary branch falls (load factor {last:.6} at its first state, step {}): \
                 load control only raises the load factor and cannot follow it; use control = \"arc-length\" (or \"displacement\") to trace it",
                s.lambda, s.step
            ),
            _ => match switch_not_made(path) {
                Some(n) => format!("stopped at the requested branch switch, load factor {last:.6}: {}", n.reason),
                None => format!("stopped at the requested branch switch, load factor {last:.6}"),
            },
        },
        StopReason::LimitPoint => {
            let lim = path.critical.iter().rev().find(|c| c.kind == crate::path::CriticalKind::Limit);
            let at = lim.map_or(String::new(), |c| {
                format!(
                    " at load factor {:.6}{}",
                    c.lambda,
                    if c.pinpointed { " (pinpointed)" } else { " (not pinpointed: between two states)" }
                )
            });
            format!(
                "stopped at a limit point{at}: past it the load factor falls and the structure snaps through, \
                 which load control cannot follow; the last converged load factor is {last:.6}; \
                 use control = \"arc-length\" to follow the path through it"
            )
        }
        StopReason::Mechanism => {
            let moving = path.mechanism.as_ref().map(|m| {
                m.moving.iter().map(|nd| model.node_dir_label(*nd)).collect::<Vec<_>>().join(", ")
            });
            format!(
                "the structure is a mechanism at load factor {last:.6}: {} can move without resistance; \
                 add a support, a bracing member or prestress in the cables there",
                moving.unwrap_or_else(|| "some node".into())
            )
        }
        StopReason::NoConvergence => {
            let Some(f) = &path.last_failure else { return "no convergence".into() };
            let cause = match &f.termination {
                Termination::SingularTangent { .. } => {
                    let dirs: Vec<String> = f.zero_pivot_dirs.iter().map(|nd| model.node_dir_label(*nd)).collect();
                    format!(
                        "the tangent became singular: {} can move without resistance (a mechanism, cables gone slack, or a limit point)",
                        if dirs.is_empty() { "some node".to_string() } else { dirs.join(", ") }
                    )
                }
                Termination::MaxIterations => "the corrector ran out of iterations".into(),
                Termination::Diverged => "the iterations diverged".into(),
                Termination::ConstraintFailed => "the path constraint had no solution".into(),
                Termination::Jumped
                    if f.step == 1
                        && model.analysis.control == crate::model::Control::ArcLength
                        && !f.left_branch =>
                {
                    "the first step converged only behind the start, away from the target, at every arc length tried \
                     (the path from the start state heads away from the target for this load direction, or it turns \
                     back at a limit point closer to the start than the shortest arc tried: give a shorter `arc`)"
                        .into()
                }
                Termination::Jumped if f.step == 1 && model.analysis.control == crate::model::Control::ArcLength => {
                    "the first step converged behind the start or off the branch its tangent pointed along at every arc length tried (the first arc, \
                     the tangent displacement of one load increment, is far longer than this path's features): \
                     give a shorter `arc` or more `steps`"
                        .into()
                }
                Termination::Jumped => "the step jumped to a distant part of the path (the structure snaps through here) or turned back on it".into(),
                Termination::Converged | Termination::Stopped => "unknown".into(),
            };
            // What to try follows from the cause first, then the control.
            let load_control = model.analysis.control == crate::model::Control::Load;
            let slack: Vec<String> = path
                .points
                .last()
                .map(|p| p.slack.iter().take(5).map(|&m| format!("{:?}", model.members[m as usize].label)).collect())
                .unwrap_or_default();
            let after_switch = matches!(path.switch, Some(SwitchOutcome::Switched(_)))
                && model.analysis.control == crate::model::Control::Displacement;
            // Each hint says whether it already advises arc-length control,
            // so the snap-back advice below is not given twice.
            let (hint, advises_arc_length): (String, bool) = match &f.termination {
                // Near a symmetric bifurcation the controlled displacement
                // moves only at second order along the secondary branch.
                Termination::Jumped if after_switch => (
                    "after the branch switch, displacement control could not move on along the secondary branch \
                     (near the bifurcation the controlled displacement changes only slowly along it): use control = \"arc-length\""
                        .into(),
                    true,
                ),
                Termination::SingularTangent { .. } if !slack.is_empty() => (
                    format!(
                        "cables were slack at the last converged state ({}): raise their prestress, or model them as bars if they may carry compression",
                        slack.join(", ")
                    ),
                    false,
                ),
                _ if (f.termination == Termination::Jumped || f.jumped_before)
                    && model.analysis.control == crate::model::Control::Displacement =>
                {
                    (
                        "displacement control cannot pass a snap-back, where the controlled displacement itself turns back \
                         (the path reached here only by a jump): use control = \"arc-length\""
                            .into(),
                        true,
                    )
                }
                Termination::SingularTangent { .. } | Termination::Jumped if load_control => (
                    "if the load has passed a limit point, load control cannot follow it: try control = \"arc-length\" (or \"displacement\")".into(),
                    true,
                ),
                Termination::SingularTangent { .. } => (
                    "if this is a limit or bifurcation point, a smaller arc crosses it; otherwise add a support or bracing member".into(),
                    false,
                ),
                Termination::MaxIterations => (
                    format!(
                        "raise max_iterations (now {}) or take smaller steps (more steps{})",
                        model.analysis.max_iterations,
                        if load_control { "" } else { " or a smaller arc" }
                    ),
                    false,
                ),
                Termination::Diverged => (
                    "take smaller steps (a quasi-Newton corrector has already finished the step with Newton iterations before giving up)".into(),
                    false,
                ),
                Termination::ConstraintFailed | Termination::Jumped => ("try a smaller arc, or arc_variant = \"normal-plane\"".into(), false),
                Termination::Converged | Termination::Stopped => {
                    if load_control {
                        ("try more steps or control = \"arc-length\"".into(), true)
                    } else {
                        ("try a smaller step (more steps or a smaller arc) or more max_iterations".into(), false)
                    }
                }
            };
            // A Newton run without a line search whose tangent turned
            // singular far from equilibrium met the singular tangent at an
            // iterate, not at a state of the path (on the nets, cables the
            // full Newton step threw slack). The energy line search (or a quasi-Newton
            // corrector, which has it) keeps such steps in bounds: a flat
            // 26 × 31 net at 5000 N per node in two load steps stopped this
            // way with Newton and reached λ = 1 with `line_search = 5` and
            // with BFGS.
            let no_search = crate::solve::LineSearch::for_run(model.analysis.method, model.analysis.line_search).max_trials == 0;
            let hint = if matches!(f.termination, Termination::SingularTangent { .. })
                && model.analysis.method == crate::model::Method::Newton
                && no_search
                && f.relative_residual > ITERATE_FAR * model.analysis.tolerance
            {
                format!(
                    "the singular tangent was met at an iterate far from equilibrium, not at an equilibrium state \
                     (a full Newton step can throw cables slack or carry the iterate far past the path): \
                     set line_search = 5 in [analysis] (the energy line search) or use --method bfgs, which has it; \
                     else {hint}"
                )
            } else {
                hint
            };
            // Near a snap-back there is no equilibrium with the controlled
            // displacement a little further on: every corrector fails there,
            // whatever the cause it reports.
            let hint: String = if model.analysis.control == crate::model::Control::Displacement && !advises_arc_length {
                format!(
                    "{hint}; if the controlled displacement turns back here (a snap-back), displacement control cannot pass it: \
                     use control = \"arc-length\""
                )
            } else {
                hint
            };
            format!(
                "step {} did not converge after {} halvings: {cause} while going to load factor {:.6} \
                 (relative residual {:.3e}); the last converged load factor is {last:.6}, a total load of {:.6e} {}; {hint}",
                f.step,
                model.analysis.max_cutbacks,
                f.lambda_tried,
                f.relative_residual,
                units.force_out(last * norm3(model.total_reference_load())),
                units.force.name()
            )
        }
    }
}

/// The first `max` of `ids`, comma-separated, and how many more there are.
fn names(ids: &mut dyn Iterator<Item = String>, max: usize) -> String {
    let all: Vec<String> = ids.collect();
    let more = all.len().saturating_sub(max);
    let mut s = all.into_iter().take(max).collect::<Vec<_>>().join(", ");
    if more > 0 {
        s.push_str(&format!(" and {more} more"));
    }
    s
}

/// The warning for a start equilibrium that was found but left members
/// given a prestress at their rest length (`EquilibriumPath::lost_at_start`):
/// nothing holds that prestress, and the state is on the kink of the
/// members' law. None when no member lost its prestress.
pub fn lost_at_start_warning(model: &Model, path: &EquilibriumPath) -> Option<String> {
    let lost = &path.lost_at_start;
    if lost.is_empty() {
        return None;
    }
    let mut ids = lost.iter().map(|&m| format!("{:?}", model.members[m as usize].label));
    Some(format!(
        "{} member(s) lost the tension given to them on the way to the start equilibrium ({}): nothing in the structure \
         holds that prestress, so the path starts with them at their rest length, on the edge of going slack, and the \
         stiffness there depends on which way they are pushed; give the structure what holds the prestress (form finding: \
         tautline form, or the supports or members it needs), or give these members rest lengths instead of a prestress",
        lost.len(),
        names(&mut ids, 5)
    ))
}

/// The warning for arc-length steps kept although their chord, between two
/// stable states, passed through states whose tangent is not positive along
/// it even at the smallest arc (`PathPoint::unstable_chord`). None when no
/// step was kept so.
pub fn unstable_chord_warning(path: &EquilibriumPath) -> Option<String> {
    let steps: Vec<&crate::path::PathPoint> = path.points.iter().filter(|p| p.unstable_chord).collect();
    let first = steps.first()?;
    let mut ids = steps.iter().map(|p| p.step.to_string());
    Some(format!(
        "arc-length step(s) {} (the first ending at load factor {:.6}) join two stable states, but the tangent along the \
         step's chord is not positive somewhere between them even at the smallest arc allowed: the path may pass through \
         an unstable stretch there (limit points, bifurcations, a snap) that was not traced and whose critical points are \
         not reported; trace it with a shorter `arc` or a larger `max_cutbacks`",
        names(&mut ids, 8),
        first.lambda
    ))
}

/// Why the prestressed start has no equilibrium, in the model's words:
/// the members that cannot hold their tension, what is then free to move,
/// where the given geometry is out of balance, and what to do.
fn start_failure_message(model: &Model, path: &EquilibriumPath) -> String {
    let lambda = model.analysis.start_load_factor;
    let Some(f) = &path.start_failure else {
        return format!("no equilibrium was found at the start load factor {lambda:.6}");
    };
    let units = &model.units;
    let how = match &f.termination {
        Termination::SingularTangent { .. } => "the corrector came to rest on a singular tangent",
        Termination::MaxIterations => "the corrector ran out of iterations",
        Termination::Diverged => "the iterations diverged",
        _ => "the corrector found none",
    };
    let mut msg = format!("no equilibrium at the start load factor {lambda:.6}: {how}");
    if !f.lost_prestress.is_empty() {
        let mut ids = f.lost_prestress.iter().map(|&m| format!("{:?}", model.members[m as usize].label));
        let (noun, verb) = if f.lost_prestress.len() == 1 { ("member", "is") } else { ("members", "are") };
        msg.push_str(&format!(
            "; {noun} {} {verb} in tension in the given geometry but lose that tension: nothing holds the prestress",
            names(&mut ids, 8)
        ));
    }
    if !f.free_dirs.is_empty() {
        let mut dirs = f.free_dirs.iter().map(|nd| model.node_dir_label(*nd));
        msg.push_str(&format!("; then {} can move without resistance", names(&mut dirs, 8)));
    }
    if let Some(&(node, force)) = f.out_of_balance.first() {
        msg.push_str(&format!(
            "; the given geometry is out of balance by up to {:.4e} {} at node {:?} (relative residual {:.3e})",
            units.force_out(force),
            units.force.name(),
            model.nodes[node].label,
            f.given_residual
        ));
    }
    msg.push_str(
        "; find a shape in which the prestress is in balance first (tautline form), \
         or add the supports or members that hold it, or give rest lengths instead of prestress",
    );
    msg
}

