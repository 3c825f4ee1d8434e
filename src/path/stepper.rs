//! Predictors and step size: the load-control predictor (secant from the
//! second step on, tangent on the first), the tangent direction K⁻¹·f_ref,
//! and the `Stepper` that adapts and halves the step. Split from the
//! stepping loop in `path/mod.rs`, whose private helpers it uses as a child
//! module.

use super::*;

/// δu_f = K⁻¹·f_ref with the current factor: the tangent direction of the path.
/// The displacement increment expected for a load increment `inc` under load
/// control. From the second step on: the last converged increment scaled by
/// the ratio of the load increments, a secant (first-order extrapolation)
/// predictor that costs nothing; its error is of the order of the path's
/// curvature times the step squared, where keeping the last state (no
/// predictor) errs by the whole increment. On the first step: the tangent
/// solution K⁻¹·f_ref·inc with the factor of the start state, one solve.
/// Either way only the corrector's starting point changes, not the state it
/// converges to.
pub(super) fn load_predictor(sys: &System, ws: &mut Workspace, inc: f64, last_u: &[f64], last_lambda: f64) -> Vec<f64> {
    if last_u.is_empty() || last_lambda == 0.0 {
        let mut du = tangent_direction(sys, ws);
        du.iter_mut().for_each(|d| *d *= inc);
        return du;
    }
    let ratio = inc / last_lambda;
    last_u.iter().map(|d| ratio * d).collect()
}

pub(super) fn tangent_direction(sys: &System, ws: &mut Workspace) -> Vec<f64> {
    let mut du_f = sys.f_ref.clone();
    ws.apply_inverse(&mut du_f);
    du_f
}

/// Iterations a step should take; the next step length is scaled by the
/// square root of desired over actual (Crisfield 1981), within bounds.
pub const DESIRED_ITERATIONS: f64 = 4.0;

/// The size of the next step (a load increment, a displacement increment or
/// an arc length) and its adaptation.
pub(super) struct Stepper {
    /// Current step size.
    pub(super) size: f64,
    /// Smallest size allowed: the nominal size halved `max_cutbacks` times.
    pub(super) min_size: f64,
    /// Largest size allowed.
    pub(super) max_size: f64,
    pub(super) adaptive: bool,
    pub(super) successes_since_cut: usize,
    pub(super) nominal: f64,
    pub(super) control_dof: Option<usize>,
    pub(super) normal_plane: bool,
    /// Arc-length: the tangent displacement of the whole way from the start
    /// to the target, ‖K⁻¹f‖·|target − λ₀| (infinite otherwise). A first
    /// step longer than that overshoots the target in the predictor and can
    /// hand the corrector a cylinder that meets the path only behind the
    /// start (a stiff start with a soft reverse branch, such as stays that
    /// go slack under uplift); it is retried at this length.
    pub(super) first_cap: f64,
    /// No step has converged yet.
    pub(super) on_first: bool,
    /// The factor of the smallest step, 2^−max_cutbacks.
    pub(super) cut: f64,
}

impl Stepper {
    pub(super) fn new(a: &crate::model::Analysis, sys: &System, ws: &mut Workspace) -> Stepper {
        let control_dof = a.point.and_then(|p| sys.dofs.dof(p.node, p.axis.index()));
        let mut first_cap = f64::INFINITY;
        let nominal = match a.control {
            Control::Load => (a.target - a.start_load_factor) / a.steps.max(1) as f64,
            Control::Displacement => a.target / a.steps.max(1) as f64,
            Control::ArcLength => {
                // No arc given: the displacement of the first load increment
                // along the tangent. The cap of a failed first step: see
                // `first_cap`.
                let du_f = tangent_direction(sys, ws);
                let tangent = dot(&du_f, &du_f).sqrt();
                first_cap = (a.target - a.start_load_factor).abs() * tangent;
                a.arc.unwrap_or((a.target / a.steps.max(1) as f64).abs() * tangent)
            }
        };
        let cut = 0.5f64.powi(a.max_cutbacks as i32);
        Stepper {
            size: nominal,
            first_cap: if first_cap > 0.0 && first_cap.is_finite() { first_cap } else { f64::INFINITY },
            on_first: true,
            cut,
            min_size: nominal.abs() * cut * (1.0 - 1e-12),
            max_size: if a.control == Control::ArcLength { 2.0 * nominal.abs() } else { nominal.abs() },
            adaptive: a.control == Control::ArcLength,
            successes_since_cut: 0,
            nominal,
            control_dof,
            normal_plane: a.arc_variant_normal_plane,
        }
    }

    /// The next increment, shortened so as not to step past the target when
    /// `remaining` is left to go.
    pub(super) fn towards(&self, remaining: f64) -> f64 {
        if self.size.abs() >= remaining.abs() * (1.0 - 1e-12) { remaining } else { self.size }
    }

    /// Halves the step; false when it would fall below the smallest size.
    /// A first arc-length step that failed (or converged behind the start)
    /// and is longer than the tangent displacement of the whole way to the
    /// target is retried at that length instead, and may be halved from
    /// there as often as any step.
    pub(super) fn cut_back(&mut self) -> bool {
        self.successes_since_cut = 0;
        if self.on_first && 0.5 * self.size.abs() > self.first_cap {
            self.size = self.first_cap * self.size.signum();
            self.min_size = self.min_size.min(self.first_cap * self.cut * (1.0 - 1e-12));
            return true;
        }
        // A step of zero length cannot be halved into anything new.
        if !self.can_cut_back() {
            return false;
        }
        self.size *= 0.5;
        true
    }

    /// Whether [`Self::cut_back`] would give a new step size.
    pub(super) fn can_cut_back(&self) -> bool {
        if self.on_first && 0.5 * self.size.abs() > self.first_cap {
            return true;
        }
        let next = 0.5 * self.size;
        next.abs() >= self.min_size && next != 0.0
    }

    pub(super) fn converged(&mut self, iterations: usize) {
        self.on_first = false;
        self.successes_since_cut += 1;
        if self.adaptive {
            let ratio = (DESIRED_ITERATIONS / iterations.max(1) as f64).sqrt().clamp(0.5, 2.0);
            let next = (self.size * ratio).abs().clamp(self.min_size, self.max_size);
            self.size = next * self.size.signum();
        } else if self.successes_since_cut >= 2 && self.size.abs() < self.nominal.abs() {
            // Regrow a halved step after two good steps.
            self.size = (2.0 * self.size).abs().min(self.nominal.abs()) * self.nominal.signum();
            self.successes_since_cut = 0;
        }
    }
}

