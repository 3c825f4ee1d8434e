//! Plain, serializable results, in the model's units: the only `Serialize`
//! outputs of the library. Built from an [`EquilibriumPath`], the [`Model`] and its
//! [`System`]; writers in `report` read nothing else.

use crate::assembly::System;
use crate::model::{Model, Section};
use crate::path::branch::SwitchOutcome;
use crate::path::{EquilibriumPath, StopReason};
use serde::Serialize;

mod fields;
pub(crate) mod sag;
mod stop;

pub use fields::{
    CRITICAL_FIELDS_FILE, CRITICAL_MODES_FILE, CriticalState, Dofs, FIELDS_FILE, Fields, FieldsOut, MemberState, State, fields_out,
};
pub use stop::{lost_at_start_warning, moving_away, stop_message, unstable_chord_warning};

/// The one-line caution every output carries (see SAFETY.md).
pub const CAUTION: &str = "tautline screens and informs; it checks no design code. \
Engineering sign-off follows local codes and licensed practice (see SAFETY.md).";

#[derive(Clone, Debug, Serialize)]
pub struct Results {
    pub tool: String,
    pub title: String,
    pub model_file: String,
    pub units: UnitsOut,
    pub caution: String,
    pub converged: bool,
    pub stop_reason: String,
    pub stop_message: String,
    pub analysis: AnalysisOut,
    pub watch: Vec<String>,
    pub steps: Vec<StepOut>,
    pub critical_points: Vec<CriticalPoint>,
    /// Turning points of the controlled displacement (snap-back) along an
    /// arc-length path: not critical points (the tangent stays regular).
    pub turning_points: Vec<TurningPointOut>,
    /// `critical_modes.csv`: the critical modes, one row per node per mode.
    pub critical_modes_file: String,
    /// False when the last converged state's tangent has negative pivots
    /// (the state is in equilibrium but unstable); None when its pivots were
    /// not counted (`stability_check = "on-refactor"` carried an older count
    /// over), or when no state converged.
    pub stable_at_end: Option<bool>,
    /// Negative pivots of the last converged state, and whether they were
    /// counted at that state.
    pub negative_pivots_at_end: usize,
    pub pivots_checked_at_end: bool,
    pub reactions: Vec<ReactionOut>,
    pub equilibrium: EquilibriumOut,
    pub slack_members: Vec<String>,
    /// The node that moved most at the last converged state (None: no node).
    pub largest_displacement: Option<NodeDisplacementOut>,
    /// Every time a member went slack along the path, in step order.
    pub slack_events: Vec<SlackEvent>,
    pub mechanism: Option<MechanismOut>,
    /// Where the whole displacement fields are (never inline here).
    pub fields: FieldsOut,
    pub totals: Totals,
    /// Where the path left its primary branch (`switch_at`); absent when no
    /// switch was asked for or it was not made.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub switched: Option<SwitchedOut>,
    /// A switch asked for and not made, and why.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub switch_not_made: Option<SwitchNotMadeOut>,
    /// The mode seeded onto the geometry before the run (`imperfection`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub imperfection: Option<ImperfectionOut>,
}

#[derive(Clone, Debug, Serialize)]
pub struct SwitchedOut {
    /// Index into `critical_points` of the bifurcation left (0-based).
    pub at_critical: usize,
    /// Load factor of that bifurcation.
    pub load_factor: f64,
    /// Mode left along (1-based) of the point's `multiplicity` modes.
    pub mode: usize,
    pub multiplicity: usize,
    /// Step number of the first state on the secondary branch.
    pub step: usize,
    /// Distance moved along the mode by the switch predictor, model length units.
    pub amplitude: f64,
    /// Load factor at the first secondary state.
    pub load_factor_after: f64,
}

#[derive(Clone, Debug, Serialize)]
pub struct SwitchNotMadeOut {
    pub requested_at: usize,
    pub bifurcations_met: usize,
    pub reason: String,
}

#[derive(Clone, Debug, Serialize)]
pub struct ImperfectionOut {
    /// Critical point of the perfect path whose mode was seeded (1-based).
    pub mode: usize,
    /// Its kind and load factor on the perfect path.
    pub kind: String,
    pub load_factor: f64,
    /// Largest nodal offset, model length units (signed), and its node.
    pub amplitude: f64,
    pub node: String,
}

#[derive(Clone, Debug, Serialize)]
pub struct UnitsOut {
    pub force: String,
    pub length: String,
}

#[derive(Clone, Debug, Serialize)]
pub struct AnalysisOut {
    pub strain: String,
    pub method: String,
    pub control: String,
    pub steps: usize,
    pub target: f64,
    pub tolerance: f64,
    pub point: Option<String>,
}

#[derive(Clone, Debug, Serialize)]
pub struct StepOut {
    pub step: usize,
    pub load_factor: f64,
    pub iterations: usize,
    pub factorizations: usize,
    pub residual_evaluations: usize,
    pub line_search_trials: usize,
    /// Relative residual at convergence.
    pub residual: f64,
    pub negative_pivots: usize,
    /// False when the pivot count was carried over from an earlier
    /// factorization (`stability_check = "on-refactor"`).
    pub pivots_checked: bool,
    /// Arc-length: the step joins two stable states across states whose
    /// tangent is not positive along its chord, even at the smallest arc
    /// (see `unstable_chord_warning`); false otherwise.
    pub unstable_chord: bool,
    /// Displacement of the controlled point, model length units.
    pub point: f64,
    /// Displacements of the watched DOFs, in `watch` order, model length units.
    pub watched: Vec<f64>,
    /// Relative residual before each iteration and after the last.
    pub residual_history: Vec<f64>,
    /// Iterations at which the tangent was refactored.
    pub refactored_at: Vec<usize>,
    /// Of `iterations`: quasi-Newton ones (modified Newton, Broyden, BFGS)
    /// and full Newton ones (all of a Newton run; a quasi-Newton run's
    /// Newton fallback).
    pub quasi_newton_iterations: usize,
    pub newton_iterations: usize,
    /// How far the corrector escalated in this step: "none", "refactored"
    /// (a stall answered by refactoring) or "newton" (finished with Newton).
    pub escalation: &'static str,
    /// Stalls, escalation and slack restarts of the converged attempt.
    pub corrector_events: Vec<CorrectorEventOut>,
}

#[derive(Clone, Debug, Serialize)]
pub struct CorrectorEventOut {
    /// Iterations done before the event.
    pub iteration: usize,
    /// "stall-refactor", "newton-fallback", "newton-from-best",
    /// "slack-restart" or "slack-refactor".
    pub event: &'static str,
}

#[derive(Clone, Debug, Serialize)]
pub struct CriticalPoint {
    /// "limit" or "bifurcation".
    pub kind: String,
    pub load_factor: f64,
    /// First converged step past the point.
    pub step: usize,
    pub negative_pivots_before: usize,
    pub negative_pivots_after: usize,
    /// Whether the point was pinpointed by bisection (else: between two steps).
    pub pinpointed: bool,
    /// Watched displacements at the point, model length units.
    pub watched: Vec<f64>,
    /// "NODE.DIR" entries with the largest share of the critical mode.
    pub mode: Vec<String>,
    /// The critical mode at the watched DOFs, scaled to a largest component of 1.
    pub mode_watched: Vec<f64>,
    /// ‖Φᵀf_ref‖/‖f_ref‖ over the orthonormal null space Φ: near 1 at a
    /// limit point, 0 at a bifurcation.
    pub mode_load_alignment: Option<f64>,
    /// Number of pivots that changed sign across the point (the dimension of
    /// the null space there).
    pub multiplicity: usize,
    /// Every mode passed the residual check ‖Kφ − μφ‖ ≤ 1e-8·max|K_ii|.
    pub mode_converged: bool,
    /// The displacement norm still bracketing the point, model length units
    /// (None: not bisected).
    pub bracket: Option<f64>,
    /// The largest bracket accepted as pinpointed: 1e-8 of the larger of the
    /// step's displacement increment and the displacement norm at the point
    /// (the bisection aims for 1e-9 of the increment), model length units
    /// (None: not bisected).
    pub pinpoint_tolerance: Option<f64>,
    /// The load factors at the two ends of the bracket.
    pub load_factor_bracket: [f64; 2],
    /// Eigenvalues of the tangent for the modes in `critical_modes.csv`,
    /// model force per length units.
    pub mode_eigenvalues: Vec<f64>,
}

#[derive(Clone, Debug, Serialize)]
pub struct TurningPointOut {
    pub load_factor: f64,
    /// First converged step past the point.
    pub step: usize,
    /// The controlled displacement at its extremum, model length units.
    pub point: f64,
    pub watched: Vec<f64>,
    /// Whether the bisection met its tolerance (as for critical points).
    pub pinpointed: bool,
    pub bracket: f64,
    pub pinpoint_tolerance: f64,
}

#[derive(Clone, Debug, Serialize)]
pub struct ReactionOut {
    pub node: String,
    pub dir: String,
    /// Force the support (or ground spring) exerts on the structure, model force units.
    pub value: f64,
    /// "support" or "spring".
    pub by: String,
}

#[derive(Clone, Debug, Serialize)]
pub struct EquilibriumOut {
    /// Applied load, dead load (self-weight) plus λ·f_ref, summed over the
    /// structure, model force units.
    pub applied: [f64; 3],
    pub reactions: [f64; 3],
    /// applied + reactions: zero at equilibrium.
    pub imbalance: [f64; 3],
    /// |imbalance| / max(|applied| + |reactions|, |total reference load|).
    pub relative_imbalance: f64,
    /// Of `applied`: the dead load (self-weight, as applied at the end) and
    /// the reference load before scaling by `load_factor`, model force units.
    pub dead_load: [f64; 3],
    pub reference_load: [f64; 3],
    pub load_factor: f64,
}

/// One node's displacement, model length units.
#[derive(Clone, Debug, Serialize)]
pub struct NodeDisplacementOut {
    pub node: String,
    /// |u|.
    pub magnitude: f64,
    /// [ux, uy, uz].
    pub components: [f64; 3],
}

/// A member that carried no tension over a run of converged steps.
#[derive(Clone, Debug, Serialize)]
pub struct SlackEvent {
    pub member: String,
    /// First converged step at which it was slack (0: the initial state).
    pub step: usize,
    pub load_factor: f64,
    /// First later step at which it carried tension again; None: slack to the end.
    pub tensioned_step: Option<usize>,
    pub tensioned_load_factor: Option<f64>,
}

/// The slack episodes of every member along the path: each starts at the
/// first converged step where the member is slack and ends at the next one
/// where it is not.
pub fn slack_events(model: &Model, path: &EquilibriumPath) -> Vec<SlackEvent> {
    let mut open: Vec<Option<usize>> = vec![None; model.n_members()];
    let mut events: Vec<SlackEvent> = Vec::new();
    let mut before: &[u32] = &[];
    for p in &path.points {
        for &m in &p.slack {
            if before.binary_search(&m).is_err() {
                open[m as usize] = Some(events.len());
                events.push(SlackEvent {
                    member: model.members[m as usize].label.clone(),
                    step: p.step,
                    load_factor: p.lambda,
                    tensioned_step: None,
                    tensioned_load_factor: None,
                });
            }
        }
        for &m in before {
            let tensioned = p.slack.binary_search(&m).is_err();
            if let Some(e) = open[m as usize].take_if(|_| tensioned) {
                events[e].tensioned_step = Some(p.step);
                events[e].tensioned_load_factor = Some(p.lambda);
            }
        }
        before = &p.slack;
    }
    events
}

#[derive(Clone, Debug, Serialize)]
pub struct MechanismOut {
    pub load_factor: f64,
    /// "NODE.DIR" entries free to move.
    pub moving: Vec<String>,
}

#[derive(Clone, Debug, Serialize)]
pub struct Totals {
    pub iterations: usize,
    pub factorizations: usize,
    pub residual_evaluations: usize,
    pub cutbacks: usize,
    /// Work spent in attempts that were cut back, included above.
    pub wasted_iterations: usize,
    /// Over the converged steps: full Newton iterations, steps a
    /// quasi-Newton corrector finished with Newton, slack restarts of the
    /// quasi-Newton memory.
    pub newton_iterations: usize,
    pub newton_fallback_steps: usize,
    pub slack_restarts: usize,
    pub seconds: f64,
}

/// One member's final state, model units.
#[derive(Clone, Debug, Serialize)]
pub struct MemberOut {
    pub id: String,
    pub kind: String,
    pub force: f64,
    pub strain: f64,
    pub length: f64,
    pub utilisation: Option<f64>,
    pub slack: bool,
}

fn norm3(v: [f64; 3]) -> f64 {
    (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt()
}

/// Critical points seen as changes of the tangent's negative pivot count
/// between converged steps: a limit point when the load factor turns back
/// (or the count changes where λ has an extremum), a bifurcation when the
/// count changes while λ keeps rising.
pub fn critical_points(path: &EquilibriumPath) -> Vec<CriticalPoint> {
    let pts = &path.points;
    let mut out = Vec::new();
    for k in 1..pts.len() {
        let (a, b) = (&pts[k - 1], &pts[k]);
        if a.negative_pivots == b.negative_pivots {
            continue;
        }
        let d_before = b.lambda - a.lambda;
        let d_after = pts.get(k + 1).map(|c| c.lambda - b.lambda);
        let previous = if k >= 2 { Some(a.lambda - pts[k - 2].lambda) } else { None };
        let turns = |x: Option<f64>| x.is_some_and(|x| x * d_before < 0.0);
        let kind = if turns(d_after) || turns(previous) { "limit" } else { "bifurcation" };
        out.push(CriticalPoint {
            pinpointed: false,
            multiplicity: a.negative_pivots.abs_diff(b.negative_pivots),
            mode_converged: false,
            bracket: None,
            pinpoint_tolerance: None,
            load_factor_bracket: [a.lambda, b.lambda],
            mode_eigenvalues: Vec::new(),
            watched: b.watched.clone(),
            mode: Vec::new(),
            mode_watched: Vec::new(),
            mode_load_alignment: None,
            kind: kind.into(),
            load_factor: if kind == "limit" { a.lambda.abs().max(b.lambda.abs()) * b.lambda.signum() } else { 0.5 * (a.lambda + b.lambda) },
            step: b.step,
            negative_pivots_before: a.negative_pivots,
            negative_pivots_after: b.negative_pivots,
        });
    }
    out
}

/// `wasted` is the work of attempts that were cut back; it is added to the totals.
pub fn build(model: &Model, system: &System, path: &EquilibriumPath, wasted: &crate::solve::StepRecord, seconds: f64) -> Results {
    let units = model.units;
    let a = &model.analysis;
    let len = |v: f64| units.length_out(v);
    let steps: Vec<StepOut> = path
        .points
        .iter()
        .map(|p| StepOut {
            step: p.step,
            load_factor: p.lambda,
            iterations: p.record.iterations,
            factorizations: p.record.factorizations,
            residual_evaluations: p.record.residual_evaluations,
            line_search_trials: p.record.line_search_trials,
            residual: p.relative_residual,
            negative_pivots: p.negative_pivots,
            pivots_checked: p.pivots_checked,
            unstable_chord: p.unstable_chord,
            point: len(p.point),
            watched: p.watched.iter().map(|v| len(*v)).collect(),
            residual_history: p.record.residual_history.clone(),
            refactored_at: p.record.refactored_at.clone(),
            quasi_newton_iterations: p.record.iterations - p.record.newton_iterations,
            newton_iterations: p.record.newton_iterations,
            escalation: p.record.escalation(),
            corrector_events: p
                .record
                .events
                .iter()
                .map(|e| CorrectorEventOut { iteration: e.iteration, event: e.kind.name() })
                .collect(),
        })
        .collect();

    let newton_iterations = steps.iter().map(|s| s.newton_iterations).sum();
    let newton_fallback_steps = steps.iter().filter(|s| s.escalation == "newton").count();
    let slack_restarts =
        path.points.iter().map(|p| p.record.count(crate::solve::CorrectorEventKind::SlackRestart)).sum();
    let st = &path.final_state;
    let mut reactions = Vec::new();
    let mut react_sum = [0.0; 3];
    for (node, n) in model.nodes.iter().enumerate() {
        for ax in 0..3 {
            if n.fixed[ax] {
                // Node equilibrium f_ext + R = f_int with no load on a
                // support: the reaction is the internal force there.
                let v = st.reactions[3 * node + ax];
                react_sum[ax] += v;
                reactions.push(ReactionOut {
                    node: n.label.clone(),
                    dir: ["x", "y", "z"][ax].into(),
                    value: units.force_out(v),
                    by: "support".into(),
                });
            }
        }
    }
    for (dof, f) in system.spring_forces(&st.u) {
        let nd = system.dofs.owner(dof);
        react_sum[nd.axis.index()] += f;
        reactions.push(ReactionOut {
            node: model.nodes[nd.node].label.clone(),
            dir: nd.axis.to_string(),
            value: units.force_out(f),
            by: "spring".into(),
        });
    }
    // Dead load (self-weight) in full plus λ times the reference load.
    let applied = system.applied_total(st.lambda);
    let imbalance = [applied[0] + react_sum[0], applied[1] + react_sum[1], applied[2] + react_sum[2]];
    // The same absolute floor as the convergence test: at a stress-free
    // state (λ = 0, nothing loaded) the reference load sets the scale, so
    // rounding is not reported as a 100 % imbalance.
    let denom = (norm3(applied) + norm3(react_sum)).max(norm3(system.total_reference_load()));
    let equilibrium = EquilibriumOut {
        applied: applied.map(|v| units.force_out(v)),
        reactions: react_sum.map(|v| units.force_out(v)),
        imbalance: imbalance.map(|v| units.force_out(v)),
        relative_imbalance: if denom > 0.0 { norm3(imbalance) / denom } else { 0.0 },
        dead_load: system.applied_total(0.0).map(|v| units.force_out(v)),
        reference_load: system.total_reference_load().map(|v| units.force_out(v)),
        load_factor: st.lambda,
    };
    let largest_displacement = (0..model.n_nodes())
        .map(|n| [0, 1, 2].map(|a| system.dofs.displacement(&st.u, n, a)))
        .enumerate()
        .max_by(|a, b| norm3(a.1).total_cmp(&norm3(b.1)))
        .map(|(n, d)| NodeDisplacementOut {
            node: model.nodes[n].label.clone(),
            magnitude: len(norm3(d)),
            components: d.map(len),
        });
    let members = system.member_results(&st.u);
    let slack_members = model
        .members
        .iter()
        .zip(&members)
        .filter(|(_, r)| r.slack)
        .map(|(m, _)| m.label.clone())
        .collect();
    let (iterations, factorizations, residual_evaluations) = path.totals();
    Results {
        tool: format!("tautline {}", env!("CARGO_PKG_VERSION")),
        title: model.title.clone(),
        model_file: model.files.first().cloned().unwrap_or_default(),
        units: UnitsOut { force: units.force.name().into(), length: units.length.name().into() },
        caution: CAUTION.into(),
        converged: path.stop.is_complete(),
        stop_reason: path.stop.name().into(),
        stop_message: match (&path.switch, path.stop) {
            // A switch asked for and never met is said in the message too.
            (Some(SwitchOutcome::NotMet { .. }), _) => {
                format!("{}; {}", stop_message(model, path), switch_not_made(path).map(|n| n.reason).unwrap_or_default())
            }
            _ => stop_message(model, path),
        },
        analysis: AnalysisOut {
            strain: match a.strain {
                crate::model::StrainMeasure::Green => "green".into(),
                crate::model::StrainMeasure::Engineering => "engineering".into(),
            },
            method: a.method.name().into(),
            control: a.control.name().into(),
            steps: a.steps,
            target: if a.control == crate::model::Control::Displacement { len(a.target) } else { a.target },
            tolerance: a.tolerance,
            point: a.point.map(|p| model.node_dir_label(p)),
        },
        watch: a.watch.iter().map(|w| model.node_dir_label(*w)).collect(),
        steps,
        critical_points: if path.critical.is_empty() {
            critical_points(path).into_iter().map(|mut c| {
                c.watched.iter_mut().for_each(|v| *v = len(*v));
                c
            }).collect()
        } else {
            path.critical
                .iter()
                .map(|c| CriticalPoint {
                    kind: match c.kind {
                        crate::path::CriticalKind::Limit => "limit".into(),
                        crate::path::CriticalKind::Bifurcation => "bifurcation".into(),
                    },
                    load_factor: c.lambda,
                    step: c.step,
                    negative_pivots_before: c.pivots.0,
                    negative_pivots_after: c.pivots.1,
                    pinpointed: c.pinpointed,
                    watched: c.watched.iter().map(|v| len(*v)).collect(),
                    mode: c.mode.iter().map(|nd| model.node_dir_label(*nd)).collect(),
                    mode_watched: c.mode_watched.clone(),
                    mode_load_alignment: Some(c.mode_load_alignment),
                    multiplicity: c.multiplicity,
                    mode_converged: c.mode_converged,
                    bracket: Some(len(c.bracket)),
                    pinpoint_tolerance: Some(len(c.tolerance)),
                    load_factor_bracket: [c.lambda_bracket.0, c.lambda_bracket.1],
                    mode_eigenvalues: c.mode_eigenvalues.iter().map(|k| units.force_per_length_out(*k)).collect(),
                })
                .collect()
        },
        turning_points: path
            .turning
            .iter()
            .map(|t| TurningPointOut {
                load_factor: t.lambda,
                step: t.step,
                point: len(t.point),
                watched: t.watched.iter().map(|v| len(*v)).collect(),
                pinpointed: t.pinpointed,
                bracket: len(t.bracket),
                pinpoint_tolerance: len(t.tolerance),
            })
            .collect(),
        critical_modes_file: CRITICAL_MODES_FILE.into(),
        stable_at_end: if path.stop == StopReason::Mechanism {
            Some(false)
        } else {
            path.points.last().and_then(|p| p.pivots_checked.then_some(p.negative_pivots == 0))
        },
        negative_pivots_at_end: path.points.last().map_or(0, |p| p.negative_pivots),
        pivots_checked_at_end: path.points.last().is_some_and(|p| p.pivots_checked),
        reactions,
        equilibrium,
        slack_members,
        largest_displacement,
        slack_events: slack_events(model, path),
        mechanism: path.mechanism.as_ref().map(|m| MechanismOut {
            load_factor: m.lambda,
            moving: m.moving.iter().map(|nd| model.node_dir_label(*nd)).collect(),
        }),
        switched: match &path.switch {
            Some(SwitchOutcome::Switched(s)) => Some(SwitchedOut {
                at_critical: s.at_critical,
                load_factor: s.lambda,
                mode: s.mode,
                multiplicity: s.multiplicity,
                step: s.step,
                amplitude: len(s.amplitude),
                load_factor_after: s.lambda_after,
            }),
            _ => None,
        },
        switch_not_made: switch_not_made(path),
        imperfection: path.imperfection.as_ref().map(|s| ImperfectionOut {
            mode: s.mode,
            kind: kind_name(s.kind).into(),
            load_factor: s.lambda,
            amplitude: len(s.amplitude),
            node: model.nodes[s.node].label.clone(),
        }),
        fields: fields_out(model, path),
        totals: Totals {
            iterations: iterations + wasted.iterations,
            factorizations: factorizations + wasted.factorizations,
            residual_evaluations: residual_evaluations + wasted.residual_evaluations,
            cutbacks: path.n_cutbacks,
            wasted_iterations: wasted.iterations,
            newton_iterations,
            newton_fallback_steps,
            slack_restarts,
            seconds,
        },
    }
}

fn kind_name(k: crate::path::CriticalKind) -> &'static str {
    match k {
        crate::path::CriticalKind::Limit => "limit",
        crate::path::CriticalKind::Bifurcation => "bifurcation",
    }
}

/// A requested switch that was not made, in words.
pub fn switch_not_made(path: &EquilibriumPath) -> Option<SwitchNotMadeOut> {
    let bifurcations = |upto: usize| {
        path.critical.iter().take(upto).filter(|c| c.kind == crate::path::CriticalKind::Bifurcation).count()
    };
    match path.switch.as_ref()? {
        SwitchOutcome::Switched(_) => None,
        SwitchOutcome::NotMet { requested, met } => Some(SwitchNotMadeOut {
            requested_at: *requested,
            bifurcations_met: *met,
            reason: if met >= requested {
                // The switch was due, but the run ended first (a limit point
                // in the same load step, or another stop).
                format!(
                    "the path met bifurcation {requested} but stopped ({}) before it could leave there: no switch was made; \
                     under load control a limit point in the same step ends the run first, so use control = \"arc-length\"",
                    path.stop.name()
                )
            } else {
                format!(
                    "the path met {met} bifurcation(s), fewer than switch_at = {requested}: no switch was made and the whole path is the primary one"
                )
            },
        }),
        SwitchOutcome::ModeOutOfRange { at_critical, lambda, requested, multiplicity, .. } => Some(SwitchNotMadeOut {
            requested_at: bifurcations(at_critical + 1),
            bifurcations_met: bifurcations(at_critical + 1),
            reason: format!(
                "switch_mode = {requested}, but the bifurcation at load factor {lambda:.6} has {multiplicity} mode(s): choose switch_mode from 1 to {multiplicity}"
            ),
        }),
        SwitchOutcome::Failed { at_critical, lambda } => Some(SwitchNotMadeOut {
            requested_at: bifurcations(at_critical + 1),
            bifurcations_met: bifurcations(at_critical + 1),
            reason: format!(
                "no equilibrium was found along the bifurcation mode at load factor {lambda:.6} after {} halvings of the switch step; \
                 try a smaller arc (or more steps), or method = \"newton\"",
                crate::path::branch::SWITCH_HALVINGS
            ),
        }),
    }
}

/// Final member states, model units.
pub fn members(model: &Model, system: &System, path: &EquilibriumPath) -> Vec<MemberOut> {
    let units = model.units;
    system
        .member_results(&path.final_state.u)
        .iter()
        .zip(&model.members)
        .map(|(r, m)| {
            let utilisation = utilisation(&model.sections[m.section], r.force);
            MemberOut {
                id: m.label.clone(),
                kind: m.kind.name().into(),
                force: units.force_out(r.force),
                strain: r.strain,
                length: units.length_out(r.length),
                utilisation,
                slack: r.slack,
            }
        })
        .collect()
}

/// Force over the section's capacity in its sense (tension or compression);
/// None when the section has no capacity in that sense.
pub fn utilisation(section: &Section, force: f64) -> Option<f64> {
    if force >= 0.0 {
        section.tension_capacity.map(|c| force / c)
    } else {
        section.compression_capacity.map(|c| -force / c)
    }
}
