//! Leaving the primary path at a bifurcation (branch switching), and seeding
//! the geometry with a critical mode (imperfection).
//!
//! ## Branch switching: the mode-injection predictor
//! At a bifurcation point C (u_c, λ_c), pinpointed by `Tracer::pinpoint` (in `critical`),
//! the tangent is singular and its null space holds, besides the primary
//! path's direction, the secondary path's. The path leaves C along the
//! bifurcation mode φ made orthogonal to the primary path's tangent t,
//!
//! ```text
//! ψ = (φ − (φ·t̂) t̂) / ‖φ − (φ·t̂) t̂‖,   predictor  u = u_c + ξ ψ,  λ = λ_c,
//! ```
//!
//! and the first corrector holds the component along ψ fixed,
//! ψ·(u − u_c) = ξ: a displacement control (Batoz & Dhatt 1979) of the
//! generalized coordinate ψ. The primary path near C stays within O(s²) of
//! the hyperplane ψ·(u − u_c) = 0, so the corrector cannot fall back onto it
//! for ξ > 0, and λ is left free, so a secondary branch that falls (λ
//! decreasing away from C) is found as readily as one that rises. This is
//! the perturbation of the displacements along the eigenvector at the
//! bifurcation point described by P. Wriggers and J. C. Simo, "A general
//! procedure for the direct computation of turning and bifurcation points",
//! Int. J. Numer. Meth. Eng. 30 (1990), who add ξ·φ to u_c and correct
//! with the usual path constraint (from memory; the scale of ξ there is a
//! fraction of ‖u_c‖, also from memory). Here ξ is one step of the run: the
//! arc length under arc-length control, the length of the step that crossed
//! the point otherwise; the hyperplane constraint for the first step is our
//! choice, made so that the step cannot return to the primary path.
//! Under displacement control ξ is then doubled (secant predictor from C,
//! each a converged state) until the controlled displacement has moved by
//! half a step: near a symmetric bifurcation it moves only as ξ², and the
//! next displacement step's tangent predictor would otherwise overshoot.
//!
//! t is not available at C itself (the tangent stiffness is singular there):
//! the chord of the step that bracketed C is used, whose angle with the
//! tangent is of the order of the path's curvature times the step. φ is
//! made orthogonal to the chord, not to the exact tangent; that only tilts
//! the predictor, the corrector still lands on the secondary path.
//!
//! The sign of ψ is fixed by making its largest component positive (any
//! sign is a valid branch of a symmetric bifurcation; the rule keeps runs
//! repeatable). Of the modes of a multiple bifurcation, `switch_mode = K`
//! picks the Kth; without it the mode of largest projection onto the uniform
//! vector (1, …, 1)/√n is taken, i.e. the mode most excited by an equal small
//! offset of every free DOF (a choice of ours, documented, not from a source).
//!
//! After the switch the run carries on with its own control. Under load
//! control λ only rises towards the target: when the secondary branch falls
//! (λ at the first secondary state below λ_c for a rising target), load
//! control cannot follow it and the run stops there with
//! [`StopReason::BranchSwitch`] and advice to use arc-length or displacement
//! control.
//!
//! ## Imperfection seeding
//! "Computed mode N" is the mode of the Nth critical point (limit or
//! bifurcation, in path order) of a preliminary trace of the perfect model
//! with the same `[analysis]` settings: the shape in which the structure,
//! with its pre-buckling deformation, first loses stability (common design
//! practice to seed the lowest such modes, no source). The mode is scaled so
//! that its largest nodal displacement (Euclidean over x, y, z of a node) is
//! the amplitude, and added to the node positions; the run then traces the
//! imperfect model from its unloaded, seeded geometry (the members' rest
//! lengths follow the seeded geometry, as if built that way).

use super::{dot, Critical, CriticalKind, PathPoint, StopReason, Tracer};
use crate::assembly::System;
use crate::model::{BranchSettings, Control, Model};
use crate::observe::Observer;
use crate::linalg::Ldlt;
use crate::solve::{self, Constraint, CorrectorConfig, State, Termination, Workspace};

/// How many times the switch step is halved before the switch is given up.
pub const SWITCH_HALVINGS: usize = 4;
/// Under displacement control, how many times ξ may be doubled so that the
/// controlled displacement moves by half a step (see `leave_along_mode`).
pub const MAX_MODE_DOUBLINGS: usize = 20;

/// Where the path left the primary branch.
#[derive(Clone, Debug, PartialEq)]
pub struct Switched {
    /// Index into `EquilibriumPath::critical` of the bifurcation left.
    pub at_critical: usize,
    /// Load factor of the bifurcation.
    pub lambda: f64,
    /// Mode left along (1-based) and the multiplicity of the point.
    pub mode: usize,
    pub multiplicity: usize,
    /// Step number of the first state on the secondary branch.
    pub step: usize,
    /// ξ: the distance moved along the mode by the predictor, m.
    pub amplitude: f64,
    /// Load factor at the first secondary state.
    pub lambda_after: f64,
}

/// What became of a requested switch.
#[derive(Clone, Debug, PartialEq)]
pub enum SwitchOutcome {
    Switched(Switched),
    /// The run ended having met fewer bifurcations than `switch_at`.
    NotMet { requested: usize, met: usize },
    /// `switch_mode` is larger than the multiplicity of the point met: the
    /// run stops there (bad input found at run time).
    ModeOutOfRange { at_critical: usize, lambda: f64, requested: usize, multiplicity: usize, line: Option<u32> },
    /// No equilibrium was found along the mode after the halvings.
    Failed { at_critical: usize, lambda: f64 },
}

/// The seeded imperfection, for the results.
#[derive(Clone, Debug, PartialEq)]
pub struct Seed {
    /// Critical point of the perfect path whose mode was seeded (1-based).
    pub mode: usize,
    /// Largest nodal offset, m (signed).
    pub amplitude: f64,
    pub kind: CriticalKind,
    /// Load factor of that critical point on the perfect path.
    pub lambda: f64,
    /// Node with the largest offset.
    pub node: usize,
}

/// Why a model could not be seeded.
#[derive(Clone, Debug, PartialEq)]
pub enum SeedError {
    /// The perfect path met fewer critical points than `mode`.
    NotMet { requested: usize, met: usize, stop: StopReason, last_lambda: f64 },
    /// The perfect model cannot be assembled.
    Model(String),
}

impl std::fmt::Display for SeedError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            SeedError::NotMet { requested, met, stop, last_lambda } => write!(
                f,
                "imperfection.mode = {requested}: the perfect path met {met} critical point(s) before it ended \
                 ({}, load factor {last_lambda:.6}); choose a mode from 1 to {met}, or raise target/max_steps so the perfect path reaches it",
                stop.name()
            ),
            SeedError::Model(m) => write!(f, "{m}"),
        }
    }
}

/// Keeps ψ·(u − u_c) at the value the predictor gave it: each correction has
/// ψ·(δu_r + δλ·δu_f) = 0 (a generalized displacement control).
struct AlongMode<'m> {
    psi: &'m [f64],
}

impl Constraint for AlongMode<'_> {
    fn load_correction(&self, du_r: &[f64], du_f: &[f64], _: &[f64], _: f64) -> Option<f64> {
        let den = dot(self.psi, du_f);
        let dl = -dot(self.psi, du_r) / den;
        (den != 0.0 && dl.is_finite()).then_some(dl)
    }
}

/// The bookkeeping of a requested switch inside [`Tracer::run`].
pub struct Switcher {
    settings: BranchSettings,
    bifurcations: usize,
    /// The point to leave: (index into critical, state u_c, λ_c, modes, chord).
    due: Option<Due>,
    pub outcome: Option<SwitchOutcome>,
}

struct Due {
    at_critical: usize,
    u: Vec<f64>,
    lambda: f64,
    modes: Vec<Vec<f64>>,
    chord: Vec<f64>,
}

impl Switcher {
    pub fn new(settings: &BranchSettings) -> Switcher {
        Switcher { settings: settings.clone(), bifurcations: 0, due: None, outcome: None }
    }

    /// Whether the next pinpointed point may be the one to leave at, so its
    /// state must be kept.
    pub fn wants_field(&self) -> bool {
        self.settings.switch_at.is_some() && self.outcome.is_none()
    }

    /// Counts a pinpointed critical point (index `index` into the path's
    /// list); the `switch_at`th bifurcation becomes due. `a` and `b` are the
    /// ends of the step that crossed it (for the primary tangent).
    pub fn note(&mut self, index: usize, c: &Critical, a: &[f64], b: &[f64]) {
        let Some(n) = self.settings.switch_at else { return };
        if self.outcome.is_some() || c.kind != CriticalKind::Bifurcation {
            return;
        }
        self.bifurcations += 1;
        if self.bifurcations != n {
            return;
        }
        let Some(u) = c.field.clone() else { return };
        let chord = b.iter().zip(a).map(|(p, q)| p - q).collect();
        self.due = Some(Due { at_critical: index, u, lambda: c.lambda, modes: c.modes.clone(), chord });
    }

    /// Whether the path is on the secondary branch.
    pub fn has_switched(&self) -> bool {
        matches!(self.outcome, Some(SwitchOutcome::Switched(_)))
    }

    pub fn is_due(&self) -> bool {
        self.due.is_some()
    }

    /// The outcome at the end of the run: a switch never made says so.
    pub fn finish(mut self) -> Option<SwitchOutcome> {
        match (self.settings.switch_at, self.outcome.take()) {
            (None, _) => None,
            (Some(_), Some(o)) => Some(o),
            (Some(n), None) => Some(SwitchOutcome::NotMet { requested: n, met: self.bifurcations }),
        }
    }
}

/// The first state on the secondary branch, as [`Tracer::run`] records it.
pub struct Left {
    pub point: PathPoint,
    pub state: State,
    /// u − u_c and λ − λ_c: the "last increment" that orients the next step.
    pub increment: Vec<f64>,
    pub load_increment: f64,
    /// Whether the factor in the workspace is that of `state`.
    pub fresh: bool,
}

fn unit(v: &[f64]) -> Option<Vec<f64>> {
    let n = dot(v, v).sqrt();
    (n > 0.0 && n.is_finite()).then(|| v.iter().map(|x| x / n).collect())
}

/// The mode to leave along: `switch_mode` (1-based) if given, else the one of
/// largest |φ·1|/√n. Err(multiplicity) when `switch_mode` is out of range.
pub fn pick_mode(modes: &[Vec<f64>], switch_mode: Option<usize>) -> Result<usize, usize> {
    match switch_mode {
        Some(k) if k >= 1 && k <= modes.len() => Ok(k - 1),
        Some(_) => Err(modes.len()),
        None if modes.is_empty() => Err(0),
        None => {
            let proj = |m: &Vec<f64>| m.iter().sum::<f64>().abs() / (m.len().max(1) as f64).sqrt();
            let mut best = 0;
            for (i, m) in modes.iter().enumerate() {
                // Strictly larger: ties keep the first mode.
                if proj(m) > proj(&modes[best]) * (1.0 + 1e-9) {
                    best = i;
                }
            }
            Ok(best)
        }
    }
}

/// ψ: the mode made orthogonal to the primary chord, unit length, its
/// largest component positive.
pub fn injected_direction(mode: &[f64], chord: &[f64]) -> Option<Vec<f64>> {
    let mut psi = mode.to_vec();
    if let Some(t) = unit(chord) {
        let c = dot(&psi, &t);
        psi.iter_mut().zip(&t).for_each(|(p, t)| *p -= c * t);
    }
    let mut psi = unit(&psi)?;
    let big = psi.iter().copied().fold(0.0f64, |m, v| if v.abs() > m.abs() { v } else { m });
    if big < 0.0 {
        psi.iter_mut().for_each(|v| *v = -*v);
    }
    Some(psi)
}

impl Tracer<'_> {
    /// Leaves the due bifurcation along its mode: predictor u_c + ξψ at λ_c,
    /// corrector with ψ·(u − u_c) = ξ, halving ξ up to [`SWITCH_HALVINGS`]
    /// times. `control_step` (displacement control: the controlled DOF and
    /// the step size) lets ξ grow until that DOF has moved by half a step. `step` numbers the new state. None: the run stops here (the
    /// outcome says why); Some with `stop`: recorded, then stop (a falling
    /// branch under load control).
    pub(super) fn leave_along_mode(
        &mut self,
        ws: &mut Workspace,
        switcher: &mut Switcher,
        xi: f64,
        control_step: Option<(usize, f64)>,
        step: usize,
        observer: &mut dyn Observer,
    ) -> Option<(Left, bool)> {
        let due = switcher.due.take()?;
        let sys = self.system;
        let mode = match pick_mode(&due.modes, switcher.settings.switch_mode) {
            Ok(k) => k,
            Err(multiplicity) => {
                switcher.outcome = Some(SwitchOutcome::ModeOutOfRange {
                    at_critical: due.at_critical,
                    lambda: due.lambda,
                    requested: switcher.settings.switch_mode.unwrap_or(1),
                    multiplicity,
                    line: switcher.settings.switch_mode_line,
                });
                return None;
            }
        };
        let failed = |switcher: &mut Switcher| {
            switcher.outcome = Some(SwitchOutcome::Failed { at_critical: due.at_critical, lambda: due.lambda });
        };
        let Some(psi) = injected_direction(&due.modes[mode], &due.chord) else {
            failed(switcher);
            return None;
        };
        let mut xi = xi.abs();
        if !(xi > 0.0 && xi.is_finite()) {
            failed(switcher);
            return None;
        }
        let mut state = State::at_rest(sys, self.model.n_nodes());
        for attempt in 0..=SWITCH_HALVINGS {
            if attempt > 0 {
                xi *= 0.5;
            }
            state.u = due.u.iter().zip(&psi).map(|(u, p)| u + xi * p).collect();
            state.lambda = due.lambda;
            ws.set_factor_fresh(false);
            let c = AlongMode { psi: &psi };
            let (term, rec) = solve::drive(sys, ws, &mut state, &due.u, due.lambda, &c, &self.corrector, step, observer);
            if term == Termination::Stopped {
                super::add_records(&mut self.wasted, &rec);
                failed(switcher);
                return None;
            }
            if term != Termination::Converged {
                super::add_records(&mut self.wasted, &rec);
                continue;
            }
            let mut record = rec;
            // Displacement control: near a symmetric bifurcation the
            // controlled displacement moves only at second order along the
            // branch, so a first state at ξ leaves the next displacement step
            // far too long for its tangent predictor. ξ is doubled (each time
            // a converged state, predicted by the secant from C) until the
            // controlled displacement has moved by half a step.
            if let Some((dof, size)) = control_step {
                let moved = |u: &[f64]| (u[dof] - due.u[dof]).abs();
                let mut doublings = 0;
                while moved(&state.u) < 0.5 * size.abs() && doublings < MAX_MODE_DOUBLINGS {
                    doublings += 1;
                    let mut next = state.clone();
                    next.u = due.u.iter().zip(&state.u).map(|(c, u)| c + 2.0 * (u - c)).collect();
                    next.lambda = due.lambda + 2.0 * (state.lambda - due.lambda);
                    ws.set_factor_fresh(false);
                    let c = AlongMode { psi: &psi };
                    let (term, rec) = solve::drive(sys, ws, &mut next, &due.u, due.lambda, &c, &self.corrector, step, observer);
                    if term != Termination::Converged {
                        super::add_records(&mut self.wasted, &rec);
                        break;
                    }
                    super::add_records(&mut record, &rec);
                    state = next;
                    xi *= 2.0;
                }
            }
            let singular = ws.refactor_at(sys, &mut state, &mut record).is_some();
            let neg = ws.negative_pivots();
            let mut point = self.make_point(&state, step, record, neg);
            point.pivots_checked = !singular;
            let increment: Vec<f64> = state.u.iter().zip(&due.u).map(|(a, b)| a - b).collect();
            let load_increment = state.lambda - due.lambda;
            switcher.outcome = Some(SwitchOutcome::Switched(Switched {
                at_critical: due.at_critical,
                lambda: due.lambda,
                mode: mode + 1,
                multiplicity: due.modes.len(),
                step,
                amplitude: xi,
                lambda_after: state.lambda,
            }));
            let a = &self.model.analysis;
            // Load control only raises λ towards the target: a branch on
            // which λ moves away from the target cannot be followed.
            let falls = a.control == Control::Load && load_increment * (a.target - due.lambda) < 0.0;
            return Some((Left { point, state, increment, load_increment, fresh: !singular }, falls));
        }
        // Back to a factor of a converged state is the caller's business.
        failed(switcher);
        None
    }
}

/// Seeds `model` with the mode of the `imperfection.mode`th critical point
/// of its perfect path (see the module notes). The returned model is the
/// imperfect one; its `branch.imperfection` is cleared so that it is not
/// seeded twice, and `switch_at` is kept.
pub fn seed(model: &Model, observer: &mut dyn Observer) -> Result<Option<(Model, Seed)>, SeedError> {
    let Some(imp) = model.analysis.branch.imperfection else { return Ok(None) };
    let mut perfect = model.clone();
    perfect.analysis.branch = BranchSettings::default();
    // Not through `crate::Solver`, which sits above `path`: the same steps
    // with the tracer's own `trace_whole`.
    let system = System::new(&perfect).map_err(|e| SeedError::Model(format!("member \"{}\": {}", e.member, e.message)))?;
    let ldlt = Ldlt::new(&system.pattern, faer::get_global_parallelism()).map_err(|e| SeedError::Model(e.to_string()))?;
    let corrector = CorrectorConfig::from_analysis(&perfect.analysis);
    let (path, _) = super::trace_whole(&system, &perfect, ldlt, corrector, observer);
    let Some(c) = path.critical.get(imp.mode - 1) else {
        return Err(SeedError::NotMet {
            requested: imp.mode,
            met: path.critical.len(),
            stop: path.stop,
            last_lambda: path.points.last().map_or(0.0, |p| p.lambda),
        });
    };
    let phi = c.modes.first().cloned().unwrap_or_default();
    let offsets = seed_offsets(&system, model.n_nodes(), &phi, imp.amplitude)
        .ok_or_else(|| SeedError::Model("the critical mode is zero; it cannot be seeded".into()))?;
    let mut seeded = model.clone();
    seeded.analysis.branch.imperfection = None;
    for (node, d) in seeded.nodes.iter_mut().zip(&offsets.0) {
        for (x, dx) in node.at.iter_mut().zip(d) {
            *x += dx;
        }
    }
    Ok(Some((seeded, Seed { mode: imp.mode, amplitude: imp.amplitude, kind: c.kind, lambda: c.lambda, node: offsets.1 })))
}

/// Node offsets of the mode φ (free DOFs) scaled so that the largest nodal
/// displacement is |amplitude|, its largest component signed like
/// `amplitude`; and the node with the largest offset.
pub fn seed_offsets(system: &System, n_nodes: usize, phi: &[f64], amplitude: f64) -> Option<(Vec<[f64; 3]>, usize)> {
    let node_u: Vec<[f64; 3]> =
        (0..n_nodes).map(|n| std::array::from_fn(|a| system.dofs.displacement(phi, n, a))).collect();
    let norm = |d: &[f64; 3]| (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt();
    let (node, largest) = node_u.iter().enumerate().map(|(i, d)| (i, norm(d))).fold((0, 0.0), |b, x| if x.1 > b.1 { x } else { b });
    if !(largest > 0.0 && largest.is_finite()) {
        return None;
    }
    let big = phi.iter().copied().fold(0.0f64, |m, v| if v.abs() > m.abs() { v } else { m });
    let scale = amplitude / largest * if big < 0.0 { -1.0 } else { 1.0 };
    Some((node_u.iter().map(|d| d.map(|v| v * scale)).collect(), node))
}
