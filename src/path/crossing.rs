//! The tests a converged step must pass before the path believes that no
//! critical point lies between its ends: the load-step crossing checks
//! (Bergan's current stiffness parameter, negative work, the secant
//! compliance, a jump of the stiffness parameter, the tangent along the
//! chord, the first step's mid-chord pivot count) and the constants of the
//! arc-length re-walk's sub-step tests (`Tracer::walk`). A child module of
//! `path`.

use super::*;

/// A load-control step from A to B is suspected of crossing a critical point
/// when the current stiffness parameter changes sign (c = f·K⁻¹f, Bergan et
/// al. 1978), when the work increment Δλ·f·Δu is negative (the load does
/// negative work: the structure has unloaded), or when the secant compliance
/// f·Δu/Δλ exceeds [`SECANT_RATIO`] times both end tangent compliances. On
/// a smooth path with no critical point f·Δu/Δλ is the mean of c over the
/// step, which lies between c's values at the ends unless c has an interior
/// extremum; a snap-through between two stable states leaves c positive at
/// both ends but makes the secant large (derived).
pub(super) fn crossing_suspected(sys: &System, c_a: f64, c_b: f64, start_u: &[f64], start_lambda: f64, b: &State) -> bool {
    let dl = b.lambda - start_lambda;
    let du: Vec<f64> = b.u.iter().zip(start_u).map(|(x, y)| x - y).collect();
    let work = dot(&du, &sys.f_ref) * dl;
    if !c_a.is_finite() || !c_b.is_finite() {
        return work < 0.0;
    }
    let secant = if dl != 0.0 { dot(&du, &sys.f_ref) / dl } else { 0.0 };
    c_a.signum() != c_b.signum() || work < 0.0 || secant > SECANT_RATIO * c_a.abs().max(c_b.abs())
}

/// A load step over which the current stiffness parameter (c = f·K⁻¹f,
/// Bergan et al. 1978) changes by more than [`STIFFNESS_JUMP`] either way is
/// long against the path's own scale: what lies between its ends is not
/// known from them. A 3-ring dome loaded in steps of about 120 times its
/// limit load snapped onto its inverted, stable branch with the same pivot count,
/// positive work and a secant compliance close to the start tangent's; only c
/// (11 times smaller at the end) told. Such a step is walked again by arc
/// length (`probe`). Softening nets changed c by 1.0–1.9 times per step in
/// the first steps of the generated heavy-snow nets.
pub(super) fn stiffness_jumped(c_a: f64, c_b: f64) -> bool {
    c_a.is_finite() && c_b.is_finite() && c_a != 0.0 && c_b != 0.0 && {
        let ratio = (c_b / c_a).abs();
        !(1.0 / STIFFNESS_JUMP..=STIFFNESS_JUMP).contains(&ratio)
    }
}

/// Whether the tangent loses its stiffness along a load step's chord
/// d = u_B − u_A somewhere between the ends: d·K(u_A + t·d)·d ≤ 0 at
/// t = ¼, ½ or ¾ (three tangent assemblies, no factorization). Between two
/// stable states joined by a smooth stable path the chord stays near the path
/// and the tangent along it stiff; a snap-through from a stable state to a
/// stable one on another branch crosses the unstable states in between (the
/// flattened arch with its bars in compression), where the tangent along the
/// snap is negative. An arch with a soft spring in series loaded in one step
/// to five times its limit snapped that way with every other test quiet: the
/// spring's compliance hid the snap in f·K⁻¹f and in the secant.
pub(super) fn chord_softens(sys: &System, ws: &mut Workspace, start_u: &[f64], start_lambda: f64, b: &State) -> bool {
    let d: Vec<f64> = b.u.iter().zip(start_u).map(|(x, y)| x - y).collect();
    if d.iter().all(|&x| x == 0.0) {
        // No chord (a step of zero length, e.g. a start already at the target).
        return false;
    }
    let mut u = vec![0.0; d.len()];
    [0.25, 0.5, 0.75].iter().any(|&t| {
        for ((ui, a), di) in u.iter_mut().zip(start_u).zip(&d) {
            *ui = a + t * di;
        }
        let lambda = start_lambda + t * (b.lambda - start_lambda);
        let k = ws.stiffness_along(sys, &u, lambda, &d);
        k.is_nan() || k <= 0.0
    })
}

impl Tracer<'_> {
    /// The first load step has no previous increment to judge a jump by, so
    /// its chord is examined once more: whether the tangent at the chord's
    /// midpoint has another pivot count than the step's start (one extra
    /// factorization there and one back at B). A snap-through between two
    /// stable states passes the unstable states in between; an arch with a
    /// stiff spring in series, loaded in one step to five times its limit,
    /// kept the tangent along the chord positive (the spring's stiffness
    /// outweighs the flattened arch's negative one) and was caught only here.
    pub(super) fn mid_chord_unstable(&mut self, ws: &mut Workspace, start_u: &[f64], start_lambda: f64, n_start: usize, b: &mut State) -> bool {
        let sys = self.system;
        let mut mid = b.clone();
        for ((m, a), u) in mid.u.iter_mut().zip(start_u).zip(&b.u) {
            *m = 0.5 * (a + u);
        }
        mid.lambda = 0.5 * (start_lambda + b.lambda);
        let mut rec = StepRecord::default();
        let singular = ws.refactor_at(sys, &mut mid, &mut rec).is_some();
        let differs = singular || ws.negative_pivots() != n_start;
        ws.refactor_at(sys, b, &mut rec);
        add_records(&mut self.wasted, &rec);
        differs
    }
}

/// Whether an arc-length (sub-)step from (u_a, λ_a) to `b` has left the
/// branch its tangent predictor δλ·(K⁻¹f) (`du_f`, `dl`) pointed along: its
/// increment turned more than `SUB_STEP_TURN` (about 45°) away from the
/// predictor, or its load increment is not within `SUB_STEP_LOAD_RATIO`
/// (a factor of 2) of the predictor's. The cylinder of an arc meets other
/// branches too; an arc longer than the path's features can converge on
/// one of them (past a limit within the step, or across a snap).
pub(super) fn left_branch(u_a: &[f64], lambda_a: f64, b: &State, du_f: &[f64], dl: f64) -> bool {
    let inc: Vec<f64> = b.u.iter().zip(u_a).map(|(u, p)| u - p).collect();
    let cos = dot(&inc, du_f) * dl.signum() / (dot(&inc, &inc).sqrt() * dot(du_f, du_f).sqrt());
    let ratio = (b.lambda - lambda_a) / dl;
    cos.is_nan() || cos < SUB_STEP_TURN || !(SUB_STEP_LOAD_RATIO..=1.0 / SUB_STEP_LOAD_RATIO).contains(&ratio)
}

/// See `stiffness_jumped`.
pub const STIFFNESS_JUMP: f64 = 4.0;

/// See `crossing_suspected`: a margin for the curvature of c within a step.
pub const SECANT_RATIO: f64 = 1.5;

/// A walk's sub-step that fails the smoothness test is halved down to this
/// fraction of the walk's first arc; below it the sub-step is taken as it is
/// (a limit at the walk's highest load, not bisected, if λ fell).
pub const SMOOTH_ARC_FLOOR: f64 = 1e-3;

/// The least cosine between a walk's sub-step increment and its tangent
/// predictor (about 45°): past it the sub-step is taken to have left its
/// branch (common practice in arc-length step control, no source).
pub const SUB_STEP_TURN: f64 = 0.7;

/// The least ratio of a walk's sub-step load increment to its predictor's
/// (and the inverse of the largest): see `Tracer::walk`.
pub const SUB_STEP_LOAD_RATIO: f64 = 0.5;
