//! Path constraints that close the corrector system for δλ.

use crate::solve::Constraint;

/// Displacement control: the controlled DOF keeps the value the predictor gave
/// it, so each correction has δu_c = 0, i.e. δλ = −δu_r[c] / δu_f[c]
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
