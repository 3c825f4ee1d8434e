//! Path constraints that close the corrector system for δλ.

use crate::linalg::vector::dot;
use crate::solve::Constraint;

/// Displacement control: the controlled DOF keeps the value the predictor gave
/// it, so each correction has δu_c = 0, i.e. δλ = −δu_r\[c\] / δu_f\[c\]
/// (Batoz & Dhatt 1979).
pub struct PrescribedDisplacement {
    pub dof: usize,
}

impl Constraint for PrescribedDisplacement {
    fn load_correction(&self, du_r: &[f64], du_f: &[f64], _: &[f64], _: f64) -> Option<f64> {
        let d = du_f[self.dof];
        let dl = -du_r[self.dof] / d;
        dl.is_finite().then_some(dl)
    }
}


/// Crisfield's cylindrical arc length: the step's displacement increment keeps
/// the length Δl, ‖Δu + δu_r + δλ·δu_f‖ = Δl, a quadratic in δλ,
///
/// ```text
/// a·δλ² + b·δλ + c = 0,  a = δu_f·δu_f,  b = 2·δu_f·(Δu + δu_r),
/// c = (Δu + δu_r)·(Δu + δu_r) − Δl²
/// ```
///
/// Of the two roots the one whose new increment makes the smaller angle with
/// the increment so far is taken (largest Δu·Δu_new), which keeps the path
/// from doubling back. With no real root the closest point is taken.
///
/// M. A. Crisfield, "A fast incremental/iterative solution procedure that
/// handles snap-through", Computers & Structures 13 (1981).
pub struct Cylindrical {
    pub arc: f64,
}

impl Constraint for Cylindrical {
    fn load_correction(&self, du_r: &[f64], du_f: &[f64], delta_u: &[f64], _: f64) -> Option<f64> {
        let w: Vec<f64> = delta_u.iter().zip(du_r).map(|(a, b)| a + b).collect();
        let a = dot(du_f, du_f);
        let b = 2.0 * dot(du_f, &w);
        let c = dot(&w, &w) - self.arc * self.arc;
        let disc = b * b - 4.0 * a * c;
        if a.is_nan() || a <= 0.0 || disc.is_nan() {
            return None;
        }
        if disc < 0.0 {
            // No real root (sharp turns of the path, e.g. snap-back): take
            // the δλ that comes closest to the cylinder, −b/2a; the next
            // iterations restore the constraint (common practice, no source).
            let dl = -b / (2.0 * a);
            return dl.is_finite().then_some(dl);
        }
        // Numerically stable pair of roots.
        let q = -0.5 * (b + b.signum() * disc.sqrt());
        let roots = if q == 0.0 { [0.0, 0.0] } else { [q / a, c / q] };
        let score = |dl: f64| dot(delta_u, &w) + dl * dot(delta_u, du_f);
        let best = if score(roots[0]) >= score(roots[1]) { roots[0] } else { roots[1] };
        best.is_finite().then_some(best)
    }
}

/// The linearised variant (Riks/Ramm, updated normal plane): each correction
/// is orthogonal to the step's increment so far, Δu·(δu_r + δλ·δu_f) = 0.
///
/// E. Ramm, "Strategies for tracing the nonlinear response near limit
/// points", in *Nonlinear Finite Element Analysis in Structural Mechanics*,
/// Springer (1981).
pub struct NormalPlane;

impl Constraint for NormalPlane {
    fn load_correction(&self, du_r: &[f64], du_f: &[f64], delta_u: &[f64], _: f64) -> Option<f64> {
        let den = dot(delta_u, du_f);
        let dl = -dot(delta_u, du_r) / den;
        (den != 0.0 && dl.is_finite()).then_some(dl)
    }
}
