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

use super::{FormError, FormResult};
use crate::assembly::System;
use crate::model::{FormTarget, MemberKind, Model};

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
    /// The motion stayed unstable (the residual grew without bound or
    /// turned non-finite) even with the masses raised by the stability
    /// guard; the state returned is the last one at rest, which is finite.
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
    /// Restarts of the stability guard: an unstable stretch taken back to
    /// the last state at rest with heavier masses.
    pub restarts: usize,
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

/// A problem relaxed by kinetic damping: a residual and lumped masses.
trait Dynamics {
    /// r(u) into `r`; returns ‖r‖ / force scale.
    fn residual(&mut self, u: &[f64], r: &mut [f64]) -> f64;
    /// Row stiffness Σⱼ|Kᵢⱼ| at u into `row`.
    fn row_stiffness(&mut self, u: &[f64], row: &mut [f64]);
}

/// The central-difference loop with kinetic-energy resets shared by the
/// analysis and the form finding. `v`, `r`, `mass` have the length of `u`.
///
/// Stability guard. The masses bound the tangent at the reset where they
/// were taken; a member that stiffens a lot before the next reset (a slack
/// cable that tightens and is not covered by [`Dynamics::row_stiffness`], a
/// bar driven far into strain) can push ω_max·Δt past 2, and the
/// central-difference scheme then grows without bound. A run whose relative
/// residual rises above `BLOWUP` times the value at its last reset (or turns
/// non-finite) is therefore taken back to that reset, at rest, with every
/// mass multiplied by `MASS_BOOST` (the same as dividing Δt by 2); after
/// `MAX_BOOSTS` such restarts it gives up and returns the last state at rest,
/// which is finite. A stable oscillation from rest cannot trip the guard:
/// for a linear system ‖r‖ stays below √κ(K)·‖r₀‖ (energy is conserved
/// between resets), far below `BLOWUP` for any net or truss here.
fn kinetic_damping(
    dynamics: &mut impl Dynamics,
    u: &mut [f64],
    v: &mut [f64],
    r: &mut [f64],
    mass: &mut [f64],
    cfg: &RelaxConfig,
) -> RelaxReport {
    let mut report = RelaxReport {
        stop: RelaxStop::StepCap,
        steps: 0,
        peaks: 0,
        mass_updates: 0,
        restarts: 0,
        relative_residual: f64::INFINITY,
    };
    v.fill(0.0);
    // The state at the last reset (finite) and its relative residual: where
    // an unstable run is taken back to. One copy per run, not per step.
    let mut u_rest = u.to_vec();
    let mut rest_residual = f64::INFINITY;
    // Mass multiplier of the stability guard.
    let mut boost = 1.0;
    // Kinetic energies at the last two half steps; 0 at rest.
    let (mut e0, mut e1) = (0.0, 0.0);
    let mut from_rest = true;
    loop {
        if from_rest {
            dynamics.row_stiffness(u, mass);
            lumped_masses(mass, boost);
            report.mass_updates += 1;
        }
        let rel = dynamics.residual(u, r);
        if from_rest && rel.is_finite() {
            u_rest.copy_from_slice(u);
            rest_residual = rel;
        }
        if !rel.is_finite() || rel > BLOWUP * rest_residual {
            if !rest_residual.is_finite() || report.restarts >= MAX_BOOSTS {
                // Nothing finite to go back to, or the guard is spent: keep
                // the last state at rest.
                u.copy_from_slice(&u_rest);
                report.relative_residual = rest_residual;
                report.stop = RelaxStop::NotFinite;
                return report;
            }
            u.copy_from_slice(&u_rest);
            v.fill(0.0);
            boost *= MASS_BOOST;
            report.restarts += 1;
            e0 = 0.0;
            e1 = 0.0;
            from_rest = true;
            continue;
        }
        report.relative_residual = rel;
        if rel <= cfg.tolerance {
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
        for ((vi, ri), m) in v.iter().zip(r.iter()).zip(mass.iter()) {
            let vn = vi - h * ri / m;
            e2 += 0.5 * m * vn * vn;
        }
        if !from_rest && e2 < e1 {
            // Peak passed: back to the interpolated peak, at rest.
            let den = e0 - 2.0 * e1 + e2;
            let s = if den < 0.0 { ((e0 - e2) / (2.0 * den)).clamp(-0.5, 0.5) } else { 0.0 };
            let back = (0.5 - s) * DT;
            for (ui, vi) in u.iter_mut().zip(v.iter()) {
                *ui -= back * vi;
            }
            v.fill(0.0);
            e0 = 0.0;
            e1 = 0.0;
            from_rest = true;
            report.peaks += 1;
            continue;
        }
        for ((vi, ri), m) in v.iter_mut().zip(r.iter()).zip(mass.iter()) {
            *vi -= h * ri / m;
        }
        for (ui, vi) in u.iter_mut().zip(v.iter()) {
            *ui += DT * vi;
        }
        e0 = e1;
        e1 = e2;
        from_rest = false;
    }
}

/// Growth of the relative residual over its value at the last reset taken
/// as instability (see [`kinetic_damping`]).
const BLOWUP: f64 = 1e6;

/// Mass multiplier after an unstable stretch: 4 halves the effective time
/// step (ω·Δt scales with Δt/√m).
const MASS_BOOST: f64 = 4.0;

/// Restarts of the stability guard before the run gives up (Δt effectively
/// divided by 2^30 by then).
const MAX_BOOSTS: usize = 30;

/// mᵢ = boost·(Δt²/2)·Σⱼ|Kᵢⱼ| in place of the row sums, with a floor.
fn lumped_masses(row: &mut [f64], boost: f64) {
    let largest = row.iter().fold(0.0f64, |a, &b| a.max(b));
    let floor = if largest > 0.0 { MASS_FLOOR * largest } else { 1.0 };
    for m in row {
        *m = boost * (0.5 * DT * DT * *m).max(floor);
    }
}

/// The buffers of a relaxation run on one [`System`], allocated once.
pub struct Relaxation {
    v: Vec<f64>,
    r: Vec<f64>,
    mass: Vec<f64>,
    reactions: Vec<f64>,
    k_values: Vec<f64>,
}

struct Analysis<'a> {
    system: &'a System,
    lambda: f64,
    reactions: &'a mut [f64],
    k_values: &'a mut [f64],
}

impl Dynamics for Analysis<'_> {
    fn residual(&mut self, u: &[f64], r: &mut [f64]) -> f64 {
        let n = self.system.residual(u, self.lambda, r, self.reactions);
        self.system.relative_residual(n)
    }

    /// Row sums of |K| from the tangent (upper triangle, so each
    /// off-diagonal entry counts for its row and its column).
    fn row_stiffness(&mut self, u: &[f64], row: &mut [f64]) {
        // `row` doubles as the residual scratch: it is overwritten below.
        self.system.residual_and_tangent(u, self.lambda, row, self.reactions, self.k_values);
        let p = &self.system.pattern;
        row.fill(0.0);
        for c in 0..p.n {
            for s in p.column(c) {
                let i = p.row_idx[s] as usize;
                let a = self.k_values[s].abs();
                row[i] += a;
                if i != c {
                    row[c] += a;
                }
            }
        }
        self.system.add_slack_taut_rows(u, row);
    }
}

impl Relaxation {
    pub fn new(system: &System, n_nodes: usize) -> Relaxation {
        let n = system.n_free();
        Relaxation {
            v: vec![0.0; n],
            r: vec![0.0; n],
            mass: vec![0.0; n],
            reactions: vec![0.0; 3 * n_nodes],
            k_values: system.new_tangent_values(),
        }
    }

    /// Relaxes the free displacements `u` (start values in, the state found
    /// out) to static equilibrium at load factor `lambda`.
    pub fn equilibrium(&mut self, system: &System, lambda: f64, u: &mut [f64], cfg: &RelaxConfig) -> RelaxReport {
        let mut a = Analysis { system, lambda, reactions: &mut self.reactions, k_values: &mut self.k_values };
        kinetic_damping(&mut a, u, &mut self.v, &mut self.r, &mut self.mass, cfg)
    }
}


// ---------------------------------------------------------------------------
// Form finding

/// How a member pulls in the form finding by relaxation.
#[derive(Clone, Copy, Debug)]
enum Pull {
    /// N = q·l: the force density method's member, solved dynamically.
    Density(f64),
    /// N = T whatever the length: a member with `target_force`.
    Force(f64),
}

/// Node positions relaxed under member pulls and the form-finding loads.
struct Shape<'a> {
    model: &'a Model,
    pulls: &'a [Pull],
    /// Flat index 3·node + axis of each unknown.
    owner: &'a [usize],
    /// Position of every node, flat; free entries follow `u`.
    x: &'a mut [f64],
    /// Internal force minus load at every node, flat.
    f: &'a mut [f64],
    load_norm: f64,
}

impl Shape<'_> {
    fn set_positions(&mut self, u: &[f64]) {
        for (&k, &ui) in self.owner.iter().zip(u) {
            self.x[k] = ui;
        }
    }

    /// Unit vector i → j, length, and the member force there.
    fn member(&self, m: usize) -> ([f64; 3], f64, f64) {
        let [i, j] = self.model.members[m].ends;
        let d: [f64; 3] = std::array::from_fn(|a| self.x[3 * j + a] - self.x[3 * i + a]);
        let l = (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt();
        let n = match self.pulls[m] {
            Pull::Density(q) => q * l,
            Pull::Force(t) => t,
        };
        let e = if l > 0.0 { d.map(|c| c / l) } else { [0.0; 3] };
        (e, l, n)
    }
}

impl Dynamics for Shape<'_> {
    fn residual(&mut self, u: &[f64], r: &mut [f64]) -> f64 {
        self.set_positions(u);
        self.f.fill(0.0);
        for l in &self.model.loads {
            for a in 0..3 {
                self.f[3 * l.node + a] -= l.force[a];
            }
        }
        for m in 0..self.model.members.len() {
            let [i, j] = self.model.members[m].ends;
            let (e, _, n) = self.member(m);
            for (a, ea) in e.iter().enumerate() {
                self.f[3 * i + a] -= n * ea;
                self.f[3 * j + a] += n * ea;
            }
        }
        let mut free2 = 0.0;
        for (ri, &k) in r.iter_mut().zip(self.owner) {
            *ri = self.f[k];
            free2 += *ri * *ri;
            // What remains at the supports is their reaction.
            self.f[k] = 0.0;
        }
        let reactions = self.f.iter().map(|v| v * v).sum::<f64>().sqrt();
        let scale = (self.load_norm + reactions).max(f64::MIN_POSITIVE);
        free2.sqrt() / scale
    }

    /// Tangent of N·e at each end: q·I for a force density member,
    /// (T/l)(I − e eᵀ) for a fixed force; the block sits on the diagonal of
    /// both ends and, negated, between them, so each end's row sum gets twice
    /// the block's row sum.
    fn row_stiffness(&mut self, u: &[f64], row: &mut [f64]) {
        self.set_positions(u);
        self.f.fill(0.0);
        for m in 0..self.model.members.len() {
            let [i, j] = self.model.members[m].ends;
            let (e, l, _) = self.member(m);
            for a in 0..3 {
                let sum: f64 = match self.pulls[m] {
                    Pull::Density(q) => q.abs(),
                    Pull::Force(t) if l > 0.0 => {
                        (0..3).map(|b| (t / l * (f64::from(u8::from(a == b)) - e[a] * e[b])).abs()).sum()
                    }
                    Pull::Force(_) => 0.0,
                };
                self.f[3 * i + a] += 2.0 * sum;
                self.f[3 * j + a] += 2.0 * sum;
            }
        }
        for (ri, &k) in row.iter_mut().zip(self.owner) {
            *ri = self.f[k];
        }
    }
}

/// Form finding by dynamic relaxation: members with `target_force` pull
/// with that force whatever their length, the others with their force
/// density (N = q·l); supported coordinates stay, the model's loads are the
/// form-finding loads. Starts from the drawn geometry. A run that stops
/// before `cfg.tolerance` returns the shape it reached with its report.
pub fn relax_form(model: &Model, cfg: &RelaxConfig) -> Result<(FormResult, RelaxReport), FormError> {
    let mut pulls = Vec::with_capacity(model.n_members());
    for member in &model.members {
        pulls.push(match member.target {
            Some(FormTarget::Force(t)) => Pull::Force(t),
            Some(FormTarget::Length(_)) => {
                return Err(FormError::Unsupported {
                    member: member.label.clone(),
                    reason: "`target_length` is met by the force density method; set \
                             [form] method = \"force-density\""
                        .into(),
                });
            }
            None => {
                let q = member.force_density.or(model.form.force_density).ok_or_else(|| {
                    FormError::NoForceDensity { member: member.label.clone() }
                })?;
                if !q.is_finite() {
                    return Err(FormError::BadForceDensity { member: member.label.clone(), value: q });
                }
                Pull::Density(q)
            }
        });
    }
    let mut x: Vec<f64> = model.nodes.iter().flat_map(|n| n.at).collect();
    let owner: Vec<usize> = (0..3 * model.n_nodes()).filter(|&k| !model.nodes[k / 3].fixed[k % 3]).collect();
    let mut attached = vec![false; model.n_nodes()];
    for m in &model.members {
        attached[m.ends[0]] = true;
        attached[m.ends[1]] = true;
    }
    if let Some(&k) = owner.iter().find(|&&k| !attached[k / 3]) {
        return Err(FormError::Singular {
            node: model.nodes[k / 3].label.clone(),
            axis: ['x', 'y', 'z'][k % 3],
            reason: "the node is free but no member is attached to it".into(),
        });
    }
    let mut u: Vec<f64> = owner.iter().map(|&k| x[k]).collect();
    let n = u.len();
    let (mut v, mut r, mut mass) = (vec![0.0; n], vec![0.0; n], vec![0.0; n]);
    let mut f = vec![0.0; x.len()];
    let t = model.total_reference_load();
    let load_norm = model
        .loads
        .iter()
        .map(|l| l.force.iter().map(|c| c * c).sum::<f64>())
        .sum::<f64>()
        .sqrt()
        .max(1e-300 * (t[0].abs() + t[1].abs() + t[2].abs()));
    let mut shape = Shape { model, pulls: &pulls, owner: &owner, x: &mut x, f: &mut f, load_norm };
    let report = kinetic_damping(&mut shape, &mut u, &mut v, &mut r, &mut mass, cfg);
    shape.set_positions(&u);
    let positions: Vec<[f64; 3]> = (0..model.n_nodes()).map(|k| [x[3 * k], x[3 * k + 1], x[3 * k + 2]]).collect();
    if let Some(k) = positions.iter().position(|p| p.iter().any(|c| !c.is_finite())) {
        return Err(FormError::NotFinite { node: model.nodes[k].label.clone() });
    }
    let mut form = FormResult {
        positions,
        forces: Vec::with_capacity(model.n_members()),
        lengths: Vec::with_capacity(model.n_members()),
        force_densities: Vec::with_capacity(model.n_members()),
        warnings: Vec::new(),
    };
    for (m, member) in model.members.iter().enumerate() {
        let [i, j] = member.ends;
        let (a, b) = (form.positions[i], form.positions[j]);
        let l = ((b[0] - a[0]).powi(2) + (b[1] - a[1]).powi(2) + (b[2] - a[2]).powi(2)).sqrt();
        let (force, q) = match pulls[m] {
            Pull::Density(q) => (q * l, q),
            Pull::Force(t) => (t, if l > 0.0 { t / l } else { f64::INFINITY }),
        };
        form.lengths.push(l);
        form.forces.push(force);
        form.force_densities.push(q);
        if member.kind == MemberKind::Cable && force < 0.0 {
            form.warnings.push(format!(
                "member {:?} would carry compression ({force} N), which a cable cannot",
                member.label
            ));
        }
        if l == 0.0 {
            form.warnings.push(format!("member {:?} has zero length in the found shape", member.label));
        }
    }
    Ok((form, report))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// r(u) = K·u − f for a 2-DOF chain of springs k₁ (to ground) and k₂,
    /// with row stiffnesses understated by `under`: the masses then violate
    /// the stability bound ω²Δt² ≤ 4 and the central-difference motion grows
    /// until the guard restarts it with heavier masses.
    struct Chain {
        k1: f64,
        k2: f64,
        f: [f64; 2],
        under: f64,
    }

    impl Dynamics for Chain {
        fn residual(&mut self, u: &[f64], r: &mut [f64]) -> f64 {
            r[0] = (self.k1 + self.k2) * u[0] - self.k2 * u[1] - self.f[0];
            r[1] = -self.k2 * u[0] + self.k2 * u[1] - self.f[1];
            (r[0] * r[0] + r[1] * r[1]).sqrt() / (self.f[0].hypot(self.f[1]))
        }
        fn row_stiffness(&mut self, _: &[f64], row: &mut [f64]) {
            row[0] = (self.k1 + 2.0 * self.k2) * self.under;
            row[1] = 2.0 * self.k2 * self.under;
        }
    }

    fn run(d: &mut impl Dynamics, n: usize) -> (Vec<f64>, RelaxReport) {
        let mut u = vec![0.0; n];
        let (mut v, mut r, mut m) = (vec![0.0; n], vec![0.0; n], vec![0.0; n]);
        let cfg = RelaxConfig { tolerance: 1e-12, max_steps: 20_000 };
        let rep = kinetic_damping(d, &mut u, &mut v, &mut r, &mut m, &cfg);
        (u, rep)
    }

    /// With the Gershgorin masses the chain converges without a restart; with
    /// masses 1000× too light (ω²Δt² ≈ 2000, far past 4) the guard restarts
    /// and still converges to the exact solution u = K⁻¹f (derived: u₁ =
    /// (f₁ + f₂)/k₁, u₂ = u₁ + f₂/k₂).
    #[test]
    fn the_guard_rescues_masses_below_the_stability_bound() {
        let (k1, k2, f) = (1.0e3, 1.0e6, [2.0, 5.0]);
        let exact = [(f[0] + f[1]) / k1, (f[0] + f[1]) / k1 + f[1] / k2];
        for (under, restarts) in [(1.0, false), (1.0e-3, true)] {
            let (u, rep) = run(&mut Chain { k1, k2, f, under }, 2);
            assert_eq!(rep.stop, RelaxStop::Converged, "under = {under}: {rep:?}");
            assert_eq!(rep.restarts > 0, restarts, "under = {under}: {rep:?}");
            for (a, b) in u.iter().zip(exact) {
                assert!((a - b).abs() <= 1e-9 * b.abs(), "under = {under}: {u:?} against {exact:?}");
            }
        }
    }

    /// A problem with no stable equilibrium (r = −k·u − f: the motion grows
    /// from any state) does not converge and returns a finite state with a
    /// finite residual, never a diverged one: the guard restarts the growing
    /// motion with heavier masses, which slows it, until the step cap.
    #[test]
    fn an_unstable_problem_returns_the_last_state_at_rest() {
        struct Repelling;
        impl Dynamics for Repelling {
            fn residual(&mut self, u: &[f64], r: &mut [f64]) -> f64 {
                r[0] = -1.0e3 * u[0] - 1.0;
                r[0].abs()
            }
            fn row_stiffness(&mut self, _: &[f64], row: &mut [f64]) {
                row[0] = 1.0e3;
            }
        }
        let (u, rep) = run(&mut Repelling, 1);
        assert_ne!(rep.stop, RelaxStop::Converged, "{rep:?}");
        assert!(u[0].is_finite() && rep.relative_residual.is_finite(), "{u:?} {rep:?}");
        assert!(rep.restarts > 0, "{rep:?}");
        let mut r = [0.0];
        assert_eq!(Repelling.residual(&u, &mut r), rep.relative_residual, "the residual reported is the state's");
    }
}
