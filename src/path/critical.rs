//! Critical points along the path: their kinds and records, the bisection
//! that pinpoints them between two converged states whose tangents differ in
//! pivot count (`pinpoint`, several in one step with `pinpoint_all`), the
//! snap-back extrema of the controlled displacement (`pinpoint_turning`),
//! the arc-length re-walk of a load-control step suspected of crossing one
//! (`probe`, `walk`), and the modes of a singular tangent (`null_modes`,
//! mechanism directions). Split from the stepping loop in `path/mod.rs`,
//! whose private helpers it uses as a child module.

use super::*;

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum CriticalKind {
    /// The load factor has an extremum: snap-through under load control.
    Limit,
    /// The path branches while the load can still rise.
    Bifurcation,
}

/// A state where the tangent's negative pivot count changes, found by
/// bisection of the step in which it changed.
#[derive(Clone, Debug)]
pub struct Critical {
    pub kind: CriticalKind,
    pub lambda: f64,
    /// First converged step past the point.
    pub step: usize,
    /// Watched displacements at the point, m.
    pub watched: Vec<f64>,
    /// Node directions with the largest share of the first critical mode.
    pub mode: Vec<NodeDir>,
    /// The first mode at the watched DOFs, scaled to a largest component of 1.
    pub mode_watched: Vec<f64>,
    /// ‖Φᵀf_ref‖ / ‖f_ref‖ over the whole null space Φ (orthonormal): near 1
    /// at a limit point, 0 at a bifurcation.
    pub mode_load_alignment: f64,
    /// The critical modes: unit Euclidean norm over the free DOFs, mutually
    /// orthogonal, one per pivot that changed sign (`multiplicity`). At a
    /// limit point the first is the load's direction within the null space
    /// and the others (a bifurcation coinciding with it) are orthogonal to
    /// f_ref; at a bifurcation all are orthogonal to f_ref.
    pub modes: Vec<Vec<f64>>,
    /// Eigenvalues of the tangent belonging to `modes`, N/m, at the state
    /// the modes were computed (the bracket's far end).
    pub mode_eigenvalues: Vec<f64>,
    /// Every mode passed the residual check ‖Kφ − μφ‖ ≤ 1e-8·max|K_ii|.
    pub mode_converged: bool,
    /// Number of pivots that changed sign across the point.
    pub multiplicity: usize,
    /// Negative pivots before and after.
    pub pivots: (usize, usize),
    /// Bisections done, and the distance (displacement norm) still
    /// bracketing the point, m.
    pub bisections: usize,
    pub bracket: f64,
    /// The load factors at the two ends of the final bracket.
    pub lambda_bracket: (f64, f64),
    /// The bisection met its tolerance: the bracket is at most
    /// [`PINPOINT_TOLERANCE`] times the larger of the displacement increment
    /// of the step it started from and ‖u‖ there (it aims for
    /// [`BISECTION_TARGET`] of the increment).
    pub pinpointed: bool,
    /// The bracket the bisection aimed for, m.
    pub tolerance: f64,
    /// The free-DOF displacements at the point (the middle of the final
    /// bracket), m, when the `keep_fields` policy keeps critical states.
    pub field: Option<Vec<f64>>,
}

/// A turning point of the controlled displacement along the path (the
/// displacement has an extremum while the load factor goes on: snap-back).
/// The tangent stiffness stays regular there, so the pivot count does not
/// see it: it is found where du/ds at the controlled DOF changes sign, with
/// du/ds ∝ (K⁻¹f_ref)·dλ/ds (derived from K·du = f_ref·dλ), and bisected as
/// a critical point is.
#[derive(Clone, Debug)]
pub struct Turning {
    pub lambda: f64,
    /// First converged step past the point.
    pub step: usize,
    /// The controlled displacement at the point (its extremum), m.
    pub point: f64,
    /// Watched displacements at the point, m.
    pub watched: Vec<f64>,
    pub bisections: usize,
    /// Displacement norm still bracketing the point, m.
    pub bracket: f64,
    /// As for [`Critical::pinpointed`].
    pub pinpointed: bool,
    pub tolerance: f64,
}

/// The bisection aims for a bracket of this fraction of the step's
/// displacement increment.
pub const BISECTION_TARGET: f64 = 1e-9;

/// A critical point is reported as pinpointed when its final bracket is at
/// most this fraction of the step's displacement increment or of the
/// displacement itself (‖u‖ at the bracket's end), whichever is larger.
/// Looser than the aim: next to a singular tangent, or in a very short step,
/// a sub-step may fail to converge to a tight tolerance, which ends the
/// bisection early.
pub const PINPOINT_TOLERANCE: f64 = 1e-8;

/// A mode is taken as orthogonal to the load (a bifurcation) below this
/// alignment. The null vector of a limit point carries load; that of a
/// symmetric bifurcation is orthogonal to it (common practice, no source).
pub const BIFURCATION_ALIGNMENT: f64 = 1e-3;

/// Two critical points found one after the other in a step whose load
/// factors agree within this fraction (of max(|λ|, 1)) are one point: a
/// double point whose two eigenvalues reach zero a rounding apart.
pub const COINCIDENT: f64 = 1e-8;

/// Adds `c` to the list, merged into the last point when it is the
/// continuation of the same step's bisection at the same load factor
/// ([`COINCIDENT`]): one point with the summed multiplicity, both sets of
/// modes, the far pivot count of the second, a limit if either is.
pub(super) fn push_critical(list: &mut Vec<Critical>, c: Critical, same_step_as_last: bool) {
    if coincides(list, &c, same_step_as_last) {
        let last = list.last_mut().expect("coincides with the last point");
        last.multiplicity += c.multiplicity;
        last.pivots.1 = c.pivots.1;
        last.modes.extend(c.modes);
        last.mode_eigenvalues.extend(c.mode_eigenvalues);
        last.mode_converged &= c.mode_converged;
        last.pinpointed &= c.pinpointed;
        if c.kind == CriticalKind::Limit {
            last.kind = CriticalKind::Limit;
        }
        last.mode_load_alignment = (last.mode_load_alignment.powi(2) + c.mode_load_alignment.powi(2)).sqrt();
        return;
    }
    list.push(c);
}

/// Whether the critical points of one sub-step, in order, lead the count of
/// negative pivots on from `from`, each pinpointed and each starting at the
/// count the one before it left, to `to` (or, when they `ended` the walk at
/// a limit or past its target, as far as they go).
pub(super) fn accounts_for(points: &[Critical], from: usize, to: usize, ended: bool) -> bool {
    let mut count = from;
    for c in points {
        if !c.pinpointed || c.pivots.0 != count {
            return false;
        }
        count = c.pivots.1;
    }
    ended || count == to
}

/// Whether `c` is the last point of `list` again (see [`push_critical`]).
pub(super) fn coincides(list: &[Critical], c: &Critical, same_step_as_last: bool) -> bool {
    same_step_as_last && list.last().is_some_and(|l| (l.lambda - c.lambda).abs() <= COINCIDENT * l.lambda.abs().max(1.0))
}

/// The largest change of the pivot count a walk's sub-step may make before
/// it is bisected (a double bifurcation's); a larger one is walked again
/// with half the arc (see [`Tracer::walk`]).
pub const WALK_MAX_COUNT_CHANGE: usize = 2;

/// Largest number of critical points pinpointed within one step.
pub const MAX_POINTS_PER_STEP: usize = 16;

/// Largest number of bisections when pinpointing a critical point.
pub const MAX_BISECTIONS: usize = 60;

/// The `m` modes of the tangent at (u, λ) nearest zero, from the true
/// (sign-keeping) factorization: see [`modes::lowest_modes`]. The factor in
/// the workspace is overwritten (and marked not fresh).
pub(super) fn null_modes(system: &System, ws: &mut Workspace, u: &[f64], lambda: f64, n_reactions: usize, m: usize) -> modes::LowModes {
    let mut k = system.new_tangent_values();
    let mut r = vec![0.0; system.n_free()];
    let mut react = vec![0.0; n_reactions];
    system.residual_and_tangent(u, lambda, &mut r, &mut react, &mut k);
    modes::lowest_modes(system, ws.overwrite_factor(), &k, m)
}

/// Node directions carrying at least half the largest component of a mode,
/// largest first, at most eight.
pub(super) fn dominant_dirs(system: &System, mode: &[f64]) -> Vec<NodeDir> {
    let max = mode.iter().map(|v| v.abs()).fold(0.0, f64::max);
    let mut big: Vec<(f64, usize)> =
        mode.iter().enumerate().filter(|(_, v)| v.abs() >= 0.5 * max).map(|(i, v)| (v.abs(), i)).collect();
    big.sort_by(|a, b| b.0.total_cmp(&a.0));
    big.truncate(8);
    big.into_iter().map(|(_, d)| system.dofs.owner(d)).collect()
}

/// Finds the node directions of a mechanism: the mode of the singular
/// tangent nearest zero.
pub fn find_mechanism(system: &System, ws: &mut Workspace, state: &State) -> Vec<NodeDir> {
    let low = null_modes(system, ws, &state.u, state.lambda, state.reactions.len(), 1);
    match low.modes.first() {
        Some(mode) => dominant_dirs(system, mode),
        None => Vec::new(),
    }
}

impl<'a> Tracer<'a> {
    /// The corrector of the bisection and of the load-control walk: Newton,
    /// whatever the run's, with the run's tolerance and budget and the line
    /// search a Newton run of this model takes. Their arcs are short and end
    /// near tangents that change sign, and every state they keep is
    /// factorized for its pivot count anyway, so a quasi-Newton corrector
    /// saves no factorization there and its secant operator may converge on
    /// another branch: a perfect 5-ring × 10-sector dome loaded in three
    /// steps far past its limit, whose walk passes twelve bifurcations,
    /// gave Broyden a limit "at 0.050889, not pinpointed" after six of
    /// them, the count jumping from 10 to 24, where Newton pinpoints all
    /// twelve and the limit at 0.051861. So what a run says about critical
    /// points does not depend on its corrector.
    pub(super) fn critical_corrector(&self) -> solve::CorrectorConfig {
        let mut c = self.corrector;
        c.method = crate::model::Method::Newton;
        c.line_search = solve::LineSearch::for_run(c.method, self.model.analysis.line_search);
        c
    }

    /// Bisects the step from state A (u, λ, negative pivots) to the converged
    /// state B in which the pivot count changed: arc-length sub-steps from A
    /// of half the bracketing length, keeping the half whose ends differ in
    /// count, until the bracket is below 1e-9 of the step (or no sub-step
    /// converges). The critical mode φ comes from inverse iteration with the
    /// factorization at the end of the bracket, and the kind from φ's
    /// alignment with the reference load.
    pub(super) fn pinpoint(&mut self, ws: &mut Workspace, a_state: (&[f64], f64, usize), b: &State, keep_field: bool, observer: &mut dyn Observer) -> Critical {
        self.pinpoint_with_end(ws, a_state, b, keep_field, observer).0
    }

    /// [`Tracer::pinpoint`], also handing back the far end of the final
    /// bracket (u, λ): when the pivot count there (`pivots.1`) is not yet
    /// B's, another critical point lies between it and B.
    pub(super) fn pinpoint_with_end(
        &mut self,
        ws: &mut Workspace,
        a_state: (&[f64], f64, usize),
        b: &State,
        keep_field: bool,
        observer: &mut dyn Observer,
    ) -> (Critical, Vec<f64>, f64) {
        let sys = self.system;
        let (ua, la, na) = a_state;
        let (mut ua, mut la) = (ua.to_vec(), la);
        let (mut ub, mut lb, mut nb) = (b.u.clone(), b.lambda, ws.negative_pivots());
        let full = distance(&ua, &ub);
        let newton = self.critical_corrector();
        let mut bisections = 0;
        let mut st = b.clone();
        while bisections < MAX_BISECTIONS && distance(&ua, &ub) > BISECTION_TARGET * full {
            let width = distance(&ua, &ub);
            // Predictor halfway along the chord, corrected on the cylinder of
            // half the bracket's width around A. The cylinder also meets the
            // path behind A; a state found there is not in the bracket (it is
            // further from B than A is), and bisecting towards it would
            // report the critical points behind A again, in reverse: a perfect
            // 4 × 9 dome whose first load step went 6 times past its limit
            // did that, listing its first three bifurcations twice and a limit
            // at a negative load factor.
            // Such a landing is tried again a quarter of the way from A; if
            // that lands behind A too, the bisection stops there.
            let mut term = Termination::MaxIterations;
            for frac in [0.5, 0.25] {
                for ((u, a), b) in st.u.iter_mut().zip(&ua).zip(&ub) {
                    *u = a + frac * (b - a);
                }
                st.lambda = la + frac * (lb - la);
                ws.set_factor_fresh(false);
                let (t, rec) = solve::drive(sys, ws, &mut st, &ua, la, &Cylindrical { arc: frac * width }, &newton, 0, observer);
                add_records(&mut self.wasted, &rec);
                term = t;
                let behind = term == Termination::Converged && distance(&st.u, &ub) >= width;
                if !behind {
                    break;
                }
                term = Termination::Jumped;
            }
            if matches!(term, Termination::SingularTangent { .. }) && st.relative_residual <= self.corrector.tolerance {
                // The state between the bracket's ends is already in
                // equilibrium and its tangent is singular: exactly on the
                // critical state (the corrector stops there before its
                // first iteration).
                bisections += 1;
                ua.clone_from(&st.u);
                ub.clone_from(&st.u);
                la = st.lambda;
                lb = st.lambda;
                break;
            }
            if term != Termination::Converged {
                break;
            }
            let mut rec = StepRecord::default();
            let singular = ws.refactor_at(sys, &mut st, &mut rec).is_some();
            add_records(&mut self.wasted, &rec);
            bisections += 1;
            if singular {
                // Exactly on the critical state.
                ua.clone_from(&st.u);
                ub.clone_from(&st.u);
                la = st.lambda;
                lb = st.lambda;
                break;
            }
            if ws.negative_pivots() == na {
                ua.clone_from(&st.u);
                la = st.lambda;
            } else {
                ub.clone_from(&st.u);
                lb = st.lambda;
                nb = ws.negative_pivots();
            }
        }
        let bracket = distance(&ua, &ub);
        let tolerance = PINPOINT_TOLERANCE * full.max(dot(&ub, &ub).sqrt());
        let pinpointed = bracket <= tolerance;
        // Modes: the eigenvectors of K nearest zero at B, one per pivot that
        // changed sign, from the sign-keeping factorization.
        let multiplicity = na.abs_diff(nb).max(1);
        let low = null_modes(sys, ws, &ub, lb, b.reactions.len(), multiplicity);
        self.wasted.factorizations += 1;
        // Classified by the whole null space: a limit point when f_ref has a
        // component in it (the load factor has an extremum, Thompson & Hunt,
        // *A General Theory of Elastic Stability*, 1973, ch. 3, from memory),
        // a bifurcation when the null space is orthogonal to f_ref.
        let (alignment, modes) = modes::split_by_load(&low.modes, &sys.f_ref);
        let phi = modes.first().cloned().unwrap_or_else(|| vec![0.0; sys.n_free()]);
        let max = phi.iter().map(|v| v.abs()).fold(0.0, f64::max);
        let mid: Vec<f64> = ua.iter().zip(&ub).map(|(p, q)| 0.5 * (p + q)).collect();
        let c = Critical {
            kind: if alignment < BIFURCATION_ALIGNMENT { CriticalKind::Bifurcation } else { CriticalKind::Limit },
            lambda: 0.5 * (la + lb),
            step: 0,
            watched: self.model.analysis.watch.iter().map(|w| self.displacement_of(&mid, *w)).collect(),
            field: keep_field.then_some(mid),
            mode: dominant_dirs(sys, &phi),
            mode_watched: self
                .model
                .analysis
                .watch
                .iter()
                .map(|w| if max > 0.0 { self.displacement_of(&phi, *w) / max } else { 0.0 })
                .collect(),
            mode_load_alignment: alignment,
            modes,
            mode_eigenvalues: low.eigenvalues.clone(),
            mode_converged: low.converged && !low.modes.is_empty(),
            multiplicity,
            pivots: (na, nb),
            bisections,
            bracket,
            lambda_bracket: (la, lb),
            pinpointed,
            tolerance,
        };
        (c, ub, lb)
    }

    /// Every critical point between A (u, λ, negative pivots) and the
    /// converged state B, whose factor is in the workspace. A step may hold
    /// more than one (the count changes at two loads within it): after each,
    /// the bisection goes on from the far end of its bracket while the count
    /// there is not yet B's; coincident halves of a double point are merged
    /// ([`push_critical`]). B is refactored after each point, for the next
    /// bisection and the caller. With `within = (λ_b, direction)` (the
    /// load-control walk), a point beyond λ_b is dropped and a limit point
    /// kept; either ends the search (`true`), the latter without the refactor.
    pub(super) fn pinpoint_all(
        &mut self,
        ws: &mut Workspace,
        a_state: (&[f64], f64, usize),
        b: &mut State,
        keep_field: bool,
        within: Option<(f64, f64)>,
        observer: &mut dyn Observer,
    ) -> (Vec<Critical>, bool) {
        let end_count = ws.negative_pivots();
        let (mut from_u, mut from_l, mut from_n) = (a_state.0.to_vec(), a_state.1, a_state.2);
        let mut found = Vec::new();
        let mut rounds = 0;
        while from_n != end_count && rounds < MAX_POINTS_PER_STEP {
            rounds += 1;
            let (c, far_u, far_l) = self.pinpoint_with_end(ws, (&from_u, from_l, from_n), b, keep_field, observer);
            // The walk's last sub-step may overshoot B's load factor: a point
            // beyond it belongs to the next load step, which finds it itself.
            let beyond = within.is_some_and(|(lambda_b, direction)| (c.lambda - lambda_b) * direction > 0.0);
            let limit = within.is_some() && c.kind == CriticalKind::Limit;
            let far_n = c.pivots.1;
            let next = c.pinpointed && far_n != from_n;
            if !beyond {
                push_critical(&mut found, c, rounds > 1);
                if limit {
                    return (found, true);
                }
            }
            let mut rec = StepRecord::default();
            ws.refactor_at(self.system, b, &mut rec);
            add_records(&mut self.wasted, &rec);
            if beyond {
                return (found, true);
            }
            if !next {
                break;
            }
            (from_u, from_l, from_n) = (far_u, far_l, far_n);
        }
        (found, false)
    }

    /// Bisects the step from A (u, λ, du/ds at the controlled DOF) to B in
    /// which du/ds at `dof` changed sign, as [`Tracer::pinpoint`] does with
    /// the pivot count; `dir` is the sign of dλ/ds across the step.
    #[allow(clippy::too_many_arguments)]
    pub(super) fn pinpoint_turning(&mut self, ws: &mut Workspace, a_state: (&[f64], f64, f64), b: &State, dir: f64, dof: usize, observer: &mut dyn Observer) -> Turning {
        let sys = self.system;
        let (ua, la, va) = a_state;
        let (mut ua, mut la) = (ua.to_vec(), la);
        let (mut ub, mut lb) = (b.u.clone(), b.lambda);
        let full = distance(&ua, &ub);
        let newton = self.critical_corrector();
        let mut bisections = 0;
        let mut st = b.clone();
        while bisections < MAX_BISECTIONS && distance(&ua, &ub) > BISECTION_TARGET * full {
            for ((u, a), b) in st.u.iter_mut().zip(&ua).zip(&ub) {
                *u = 0.5 * (a + b);
            }
            st.lambda = 0.5 * (la + lb);
            ws.set_factor_fresh(false);
            // λ is monotone through a displacement turning point (the tangent
            // is regular there), so the sub-step is a load-control one.
            let (term, rec) = solve::drive(sys, ws, &mut st, &ua, la, &FixedLoad, &newton, 0, observer);
            add_records(&mut self.wasted, &rec);
            if term != Termination::Converged {
                break;
            }
            let mut rec = StepRecord::default();
            let singular = ws.refactor_at(sys, &mut st, &mut rec).is_some();
            add_records(&mut self.wasted, &rec);
            if singular {
                break;
            }
            bisections += 1;
            let v = tangent_direction(sys, ws)[dof] * dir;
            if v * va > 0.0 {
                ua.clone_from(&st.u);
                la = st.lambda;
            } else {
                ub.clone_from(&st.u);
                lb = st.lambda;
            }
        }
        let bracket = distance(&ua, &ub);
        let tolerance = PINPOINT_TOLERANCE * full.max(dot(&ub, &ub).sqrt());
        let mid: Vec<f64> = ua.iter().zip(&ub).map(|(p, q)| 0.5 * (p + q)).collect();
        Turning {
            lambda: 0.5 * (la + lb),
            step: 0,
            point: mid[dof],
            watched: self.model.analysis.watch.iter().map(|w| self.displacement_of(&mid, *w)).collect(),
            bisections,
            bracket,
            pinpointed: bracket <= tolerance,
            tolerance,
        }
    }

    /// Re-walks a suspect load-control step by arc length from its start A
    /// (u, λ, negative pivots) until λ reaches B's, pinpointing every change
    /// of the pivot count on the way; stops at the first limit point. The arc
    /// is a quarter of the tangent's prediction for the step (or of the
    /// chord to B, if shorter), halved when a sub-step fails or turns back.
    /// Some(list): the critical points met (empty: none, B is on the path);
    /// None: the walk failed (the caller cuts the step back).
    pub(super) fn probe(&mut self, ws: &mut Workspace, a_state: (&[f64], f64, usize), b: &State, keep_field: bool, observer: &mut dyn Observer) -> Option<Vec<Critical>> {
        let chord = distance(&b.u, a_state.0);
        self.walk(ws, a_state, b.lambda, chord, b, keep_field, observer)
    }

    /// The walk of [`Tracer::probe`] towards `lambda_b`; `chord` bounds the
    /// arc (ignored when zero: a step that never converged has no B).
    #[allow(clippy::too_many_arguments)]
    pub(super) fn walk(&mut self, ws: &mut Workspace, a_state: (&[f64], f64, usize), lambda_b: f64, chord: f64, template: &State, keep_field: bool, observer: &mut dyn Observer) -> Option<Vec<Critical>> {
        let sys = self.system;
        let (ua, la, na) = a_state;
        let b = template;
        let mut st = b.clone();
        st.u.copy_from_slice(ua);
        st.lambda = la;
        let mut rec = StepRecord::default();
        let singular = ws.refactor_at(sys, &mut st, &mut rec).is_some();
        add_records(&mut self.wasted, &rec);
        if singular {
            return None;
        }
        let direction = (lambda_b - la).signum();
        let du_a = tangent_direction(sys, ws);
        let predicted = dot(&du_a, &du_a).sqrt() * (lambda_b - la).abs();
        let arc0 = if chord > 0.0 { 0.25 * predicted.min(chord).max(1e-12 * chord) } else { 0.25 * predicted };
        if !(arc0 > 0.0 && arc0.is_finite()) {
            return None;
        }
        let mut arc = arc0;
        let newton = self.critical_corrector();
        self.walked.clear();
        let mut found = Vec::new();
        let mut prev_inc: Vec<f64> = Vec::new();
        let mut neg = na;
        for _ in 0..PROBE_MAX_STEPS {
            if (st.lambda - lambda_b) * direction >= 0.0 {
                return Some(found);
            }
            let (pu, pl) = (st.u.clone(), st.lambda);
            let du_f = tangent_direction(sys, ws);
            let norm = dot(&du_f, &du_f).sqrt();
            // f·K⁻¹f at the sub-step's start, for the smoothness test below.
            let c_start = dot(&du_f, &sys.f_ref);
            let sign = if prev_inc.is_empty() {
                direction
            } else {
                let d = dot(&du_f, &prev_inc);
                if d == 0.0 { direction } else { d.signum() }
            };
            let dl = sign * arc / norm;
            if !dl.is_finite() {
                return None;
            }
            st.u.iter_mut().zip(&du_f).for_each(|(u, d)| *u += dl * d);
            st.lambda += dl;
            let (term, r) = solve::drive(sys, ws, &mut st, &pu, pl, &Cylindrical { arc }, &newton, 0, observer);
            add_records(&mut self.wasted, &r);
            let turned = !prev_inc.is_empty()
                && st.u.iter().zip(&pu).zip(&prev_inc).map(|((u, s), d)| (u - s) * d).sum::<f64>() < 0.0;
            let mut rec = StepRecord::default();
            if term != Termination::Converged || turned {
                if term == Termination::Stopped {
                    return None;
                }
                self.retreat(ws, &mut st, pu, pl);
                arc *= 0.5;
                if arc < arc0 * 1e-4 {
                    return None;
                }
                continue;
            }
            let singular = ws.refactor_at(sys, &mut st, &mut rec).is_some();
            add_records(&mut self.wasted, &rec);
            if singular {
                return None;
            }
            let now = ws.negative_pivots();
            // A sub-step whose increment turned more than `SUB_STEP_TURN`
            // away from its tangent predictor has left the path it started
            // on (the cylinder meets other branches too; a corrector from a
            // long predictor past a limit, a quasi-Newton one before the walk
            // iterated with Newton, converged on the far side of a dome's
            // snap, and the bisection between the two branches then reported
            // critical points that are not there):
            // walked again with half the arc.
            // The same when its load increment is not within a factor of 2
            // of the predictor's: the tangent at the sub-step's start no
            // longer describes it (past a limit within the sub-step, or on
            // another branch).
            let turned_away = left_branch(&pu, pl, &st, &du_f, dl);
            // A sub-step with no change of the pivot count must be smooth
            // to be believed: an arc longer than the path's features can
            // jump over a limit and the snap back below it, landing on a
            // stable state with the same count (a 3-ring dome loaded in one
            // step to 370 times its limit load did exactly that and the
            // walk reported no critical point). The test is the one a load
            // step gets (`crossing_suspected`: Bergan's current stiffness
            // parameter keeps its sign, the load does positive work, the
            // secant compliance lies within the end tangents').
            let rough = now == neg
                && ((st.lambda - pl) * direction <= 0.0
                    || crossing_suspected(sys, c_start, load_compliance(sys, ws), &pu, pl, &st));
            // A sub-step whose pivot count changed by more than a double
            // point holds several critical points, and the longer it is the
            // likelier it has left the path for another branch whose
            // critical points chain just as well: a perfect 5-ring ×
            // 14-sector dome (0.5 m rise, 100 kN/m²) in ten load steps had
            // BFGS's walk take one from 16 to 25 negative pivots onto such a
            // branch and report a limit at λ = 0.00118271, 30 % above the
            // one at 0.00091010 that Newton and a fine arc-length trace find.
            let crowded = now.abs_diff(neg) > WALK_MAX_COUNT_CHANGE;
            // Any of the three: the sub-step is walked again with half the
            // arc, down to `SMOOTH_ARC_FLOOR` of the first, before any
            // bisection.
            if (turned_away || rough || crowded) && arc > arc0 * SMOOTH_ARC_FLOOR {
                self.retreat(ws, &mut st, pu, pl);
                arc *= 0.5;
                continue;
            }
            // λ fell along the path: a limit point lies in this sub-step or
            // at its start (λ has its extremum there).
            let fell = (st.lambda - pl) * direction < 0.0;
            if now != neg {
                let (points, ended) =
                    self.pinpoint_all(ws, (&pu, pl, neg), &mut st, keep_field, Some((lambda_b, direction)), observer);
                // A sub-step is believed only when the critical points
                // pinpointed on the way from its start account for the
                // whole change of the count (or, all pinpointed, end the
                // walk at a limit or past its target): one that
                // jumped to another branch (a 4 × 9 dome's sub-step went from
                // 6 to 17 negative pivots across its snap, still within 45°
                // of its predictor) has bisection states that cannot reach
                // it. Walked again with half the arc.
                if !accounts_for(&points, neg, now, ended) {
                    if arc <= arc0 * SMOOTH_ARC_FLOOR {
                        // Nothing this walk found can be believed: the
                        // caller cuts the load step back.
                        return None;
                    }
                    self.retreat(ws, &mut st, pu, pl);
                    arc *= 0.5;
                    continue;
                }
                found.extend(points);
                if ended {
                    return Some(found);
                }
                neg = now;
            }
            if fell {
                // No pivot changed sign within the sub-step (the walk began
                // on the limit, within the zero-pivot threshold of it): a
                // limit at the walk's highest load, not bisected.
                let mut c = self.pinpoint(ws, (&pu, pl, neg), &st, keep_field, observer);
                c.kind = CriticalKind::Limit;
                c.pinpointed = false;
                c.lambda = if direction > 0.0 { pl.max(st.lambda) } else { pl.min(st.lambda) };
                found.push(c);
                return Some(found);
            }
            // On the path, below any limit (λ still rising, no limit met):
            // a state the run may keep.
            if (st.lambda - pl) * direction > 0.0 && !found.iter().any(|c: &Critical| c.kind == CriticalKind::Limit) {
                if self.walked.len() >= WALK_KEPT {
                    // Thin out: keep every second state, the newest among them.
                    let mut i = 0;
                    self.walked.retain(|_| {
                        i += 1;
                        i % 2 == 0
                    });
                }
                self.walked.push((st.u.clone(), st.lambda, now, r));
            }
            prev_inc = st.u.iter().zip(&pu).map(|(u, p)| u - p).collect();
            arc = (arc * 1.5).min(4.0 * arc0);
        }
        None
    }
}
