//! Dynamic relaxation with kinetic damping (M. R. Barnes, "Form finding and
//! analysis of tension structures by dynamic relaxation", International
//! Journal of Space Structures 14, 1999).
//!
//! The static problem r(u) = 0 is traced as the motion of a fictitious
//! undamped system M ü = −r(u), stepped by central differences with a time
//! step Δt = 1 (the masses carry the scale):
//!
//! ```text
//! v^{t+Δt/2} = v^{t−Δt/2} − Δt·M⁻¹ r(u^t)
//! u^{t+Δt}   = u^t + Δt·v^{t+Δt/2}
//! ```
//!
//! Masses. The scheme is stable while Δt ≤ 2/ω_max. By Gershgorin's theorem
//! every eigenvalue of M⁻¹K lies below maxᵢ Σⱼ|Kᵢⱼ|/mᵢ, so the lumped mass
//! mᵢ = (Δt²/2)·Σⱼ|Kᵢⱼ| bounds ω_max² Δt² by 2, a factor two inside the
//! limit 4 (Barnes 1999 chooses masses from the row stiffness in this way).
//! The masses are taken from the tangent at the start and again at every
//! kinetic-energy reset, so a net that stiffens as it deflects stays stable.
//!
//! Kinetic damping. With no viscous damping the total kinetic energy
//! E = ½ Σ mᵢ vᵢ² rises while the structure moves towards equilibrium; when
//! it first falls, its peak, the point of least potential energy along the
//! path, has just been passed. The peak is located by a parabola through the
//! last three half-step energies E₀, E₁, E₂ (times −Δt, 0, +Δt about the
//! middle one): its vertex lies at s·Δt with s = (E₀ − E₂) / (2(E₀ − 2E₁ + E₂)),
//! |s| ≤ ½ when E₁ is the largest. The velocity v^{t−Δt/2} held from t − Δt to
//! t, so the position at the peak is u^t − (½ − s)·Δt·v^{t−Δt/2}. The run steps
//! back there and zeroes all velocities (Barnes 1999 also steps back to an
//! interpolated peak; this parabola is our own derivation of it, not the
//! simpler half-step reset). The restart takes a half step, v = −(Δt/2)·M⁻¹ r,
//! as the first step from rest of the central-difference scheme.
//!
//! Convergence is the static solver's test: ‖r‖ ≤ tolerance · (‖λ f_ref‖ +
//! ‖reactions‖). No allocation per time step: every vector lives in
//! [`Relaxation`].

use crate::assembly::System;

/// Settings of one relaxation run.
#[derive(Clone, Copy, Debug)]
pub struct RelaxConfig {
    /// Relative residual at which the run stops as converged.
    pub tolerance: f64,
    /// Largest number of time steps.
    pub max_steps: usize,
}

impl Default for RelaxConfig {
    fn default() -> Self {
        RelaxConfig { tolerance: 1e-9, max_steps: 200_000 }
    }
}

/// Why a relaxation run ended.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum RelaxStop {
    /// The relative residual reached the tolerance.
    Converged,
    /// `max_steps` time steps were taken first.
    StepCap,
    /// The residual became infinite or NaN.
    NotFinite,
}

/// What a relaxation run did.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct RelaxReport {
    pub stop: RelaxStop,
    /// Time steps taken.
    pub steps: usize,
    /// Kinetic-energy peaks detected (each one a reset to rest).
    pub peaks: usize,
    /// Times the masses were recomputed from the tangent.
    pub mass_updates: usize,
    /// ‖r‖ / force scale at the state returned.
    pub relative_residual: f64,
}

impl RelaxReport {
    pub fn converged(&self) -> bool {
        self.stop == RelaxStop::Converged
    }
}

/// Time step; the masses are scaled to it (common practice, no source).
const DT: f64 = 1.0;

/// A DOF whose row stiffness is zero (say, held only by slack cables) gets
/// this fraction of the largest mass, so it can still move.
const MASS_FLOOR: f64 = 1e-6;

/// The buffers of a relaxation run on one [`System`], allocated once.
pub struct Relaxation {
    v: Vec<f64>,
    r: Vec<f64>,
    reactions: Vec<f64>,
    k_values: Vec<f64>,
    mass: Vec<f64>,
}

impl Relaxation {
    pub fn new(system: &System, n_nodes: usize) -> Relaxation {
        let n = system.n_free();
        Relaxation {
            v: vec![0.0; n],
            r: vec![0.0; n],
            reactions: vec![0.0; 3 * n_nodes],
            k_values: system.new_tangent_values(),
            mass: vec![0.0; n],
        }
    }

    /// Relaxes the free displacements `u` (start values in, the state found
    /// out) to static equilibrium at load factor `lambda`.
    pub fn equilibrium(&mut self, system: &System, lambda: f64, u: &mut [f64], cfg: &RelaxConfig) -> RelaxReport {
        let mut report = RelaxReport {
            stop: RelaxStop::StepCap,
            steps: 0,
            peaks: 0,
            mass_updates: 0,
            relative_residual: f64::INFINITY,
        };
        if u.is_empty() {
            report.stop = RelaxStop::Converged;
            report.relative_residual = 0.0;
            return report;
        }
        self.v.fill(0.0);
        // Kinetic energies at the last two half steps; 0 at rest.
        let (mut e0, mut e1) = (0.0, 0.0);
        let mut from_rest = true;
        loop {
            let norms = if from_rest {
                let n = system.residual_and_tangent(u, lambda, &mut self.r, &mut self.reactions, &mut self.k_values);
                self.update_masses(system);
                report.mass_updates += 1;
                n
            } else {
                system.residual(u, lambda, &mut self.r, &mut self.reactions)
            };
            report.relative_residual = relative(system, norms.residual, norms.force_scale);
            if !report.relative_residual.is_finite() {
                report.stop = RelaxStop::NotFinite;
                return report;
            }
            if report.relative_residual <= cfg.tolerance {
                report.stop = RelaxStop::Converged;
                return report;
            }
            if report.steps >= cfg.max_steps {
                report.stop = RelaxStop::StepCap;
                return report;
            }
            report.steps += 1;
            // v^{t+Δt/2}; from rest the first step is a half step.
            let h = if from_rest { 0.5 * DT } else { DT };
            let mut e2 = 0.0;
            for ((v, r), m) in self.v.iter().zip(&self.r).zip(&self.mass) {
                let vn = v - h * r / m;
                e2 += 0.5 * m * vn * vn;
            }
            if !from_rest && e2 < e1 {
                // Peak passed: back to the interpolated peak, at rest.
                let den = e0 - 2.0 * e1 + e2;
                let s = if den < 0.0 { ((e0 - e2) / (2.0 * den)).clamp(-0.5, 0.5) } else { 0.0 };
                let back = (0.5 - s) * DT;
                for (ui, vi) in u.iter_mut().zip(&self.v) {
                    *ui -= back * vi;
                }
                self.v.fill(0.0);
                e0 = 0.0;
                e1 = 0.0;
                from_rest = true;
                report.peaks += 1;
                continue;
            }
            for ((v, r), m) in self.v.iter_mut().zip(&self.r).zip(&self.mass) {
                *v -= h * r / m;
            }
            for (ui, vi) in u.iter_mut().zip(&self.v) {
                *ui += DT * vi;
            }
            e0 = e1;
            e1 = e2;
            from_rest = false;
        }
    }

    /// mᵢ = (Δt²/2)·Σⱼ|Kᵢⱼ| from the tangent values just assembled (upper
    /// triangle, so each off-diagonal entry counts for its row and column).
    fn update_masses(&mut self, system: &System) {
        let p = &system.pattern;
        self.mass.fill(0.0);
        for c in 0..p.n {
            for s in p.col_ptr[c]..p.col_ptr[c + 1] {
                let r = p.row_idx[s];
                let a = self.k_values[s].abs();
                self.mass[r] += a;
                if r != c {
                    self.mass[c] += a;
                }
            }
        }
        let largest = self.mass.iter().fold(0.0f64, |a, &b| a.max(b));
        let floor = if largest > 0.0 { MASS_FLOOR * largest } else { 1.0 };
        for m in &mut self.mass {
            *m = (0.5 * DT * DT * *m).max(floor);
        }
    }
}

/// Relative residual as the static solver judges it (`solve::drive`).
fn relative(system: &System, residual: f64, force_scale: f64) -> f64 {
    let scale = force_scale.max(1e-12 * system.f_ref_norm()).max(f64::MIN_POSITIVE);
    residual / scale
}
