//! Screening a model before and after a run, for `check` and `solve`: what
//! an engineer should hear about without reading the numbers.
//!
//! - [`mechanisms`]: every independent mechanism of the given geometry at
//!   once (the null space of the start tangent), where `solve` stops at the
//!   first and names one, plus the obvious cases a glance at the model shows
//!   (a free direction no member or spring stiffens).
//! - [`ignored_force_densities`]: members whose `force_density` `solve` does
//!   not use (it is a form-finding input).
//! - [`result_warnings`]: utilisation above 1 and strains above
//!   [`STRAIN_WARNING`] in a finished run.

use crate::assembly::System;
use crate::linalg::Ldlt;
use crate::model::{Model, NodeDir, RestSpec};
use crate::path::modes;

/// Eigenvalues of the start tangent within this fraction of its largest
/// diagonal entry count as zero: a mechanism. Round-off in an assembled K is
/// of order 1e-15 of that scale; the softest real stiffness of the nets and
/// trusses here (a prestress N/l against EA/l) is above 1e-7 of it (common
/// practice, no source).
pub const MECHANISM_RATIO: f64 = 1e-9;

/// Largest number of mechanisms whose modes are computed and described.
pub const MAX_MECHANISMS_DESCRIBED: usize = 12;

/// The mechanisms of the drawn geometry.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Mechanisms {
    /// Number of independent mechanisms: eigenvalues of the start tangent
    /// within `MECHANISM_RATIO` of zero.
    pub count: usize,
    /// For each of the first `MAX_MECHANISMS_DESCRIBED` mechanisms, the node
    /// directions that move most in its mode (largest first).
    pub modes: Vec<Vec<NodeDir>>,
    /// Free node directions that no member or spring stiffens at all
    /// (a zero diagonal of the tangent): mechanisms visible at a glance.
    pub obvious: Vec<NodeDir>,
}

/// Finds every independent mechanism of the model in its drawn geometry
/// with its prestress, at load factor 0: the eigenvalues of the tangent K
/// in (−σ, σ), σ = `MECHANISM_RATIO`·max|Kᵢᵢ|, counted by Sylvester's law of
/// inertia as neg(K − σI) − neg(K + σI) (two shifted LDLᵀ factorizations),
/// and their modes by shift-invert subspace iteration
/// ([`modes::lowest_modes`]).
pub fn mechanisms(system: &System, model: &Model) -> Result<Mechanisms, String> {
    let n = system.n_free();
    let mut out = Mechanisms::default();
    if n == 0 {
        return Ok(out);
    }
    let u = vec![0.0; n];
    let mut r = vec![0.0; n];
    let mut reactions = vec![0.0; 3 * model.n_nodes()];
    let mut k = system.new_tangent_values();
    system.residual_and_tangent(&u, 0.0, &mut r, &mut reactions, &mut k);
    let p = &system.pattern;
    let scale = p.diag_slot.iter().map(|&s| k[s as usize].abs()).fold(0.0, f64::max);
    out.obvious = (0..n).filter(|&d| k[p.diag_slot[d] as usize] == 0.0).map(|d| system.dofs.owner(d)).collect();
    if scale == 0.0 || !scale.is_finite() {
        // Nothing stiffens anything: every free direction is a mechanism.
        out.count = n;
        return Ok(out);
    }
    let sigma = MECHANISM_RATIO * scale;
    let mut ldlt = Ldlt::new(p, faer::Par::Seq).map_err(|e| e.to_string())?;
    let below = ldlt.factorize_shifted(p, &k, sigma);
    let below_ok = ldlt.is_factored();
    let above = ldlt.factorize_shifted(p, &k, -sigma);
    if !(below_ok && ldlt.is_factored()) {
        return Err("the shifted tangent could not be factored".into());
    }
    out.count = below.negative.saturating_sub(above.negative);
    if out.count > 0 {
        let m = out.count.min(MAX_MECHANISMS_DESCRIBED);
        let low = modes::lowest_modes(system, &mut ldlt, &k, m);
        out.modes = low.modes.iter().map(|mode| dominant_dirs(system, mode)).collect();
    }
    Ok(out)
}

/// Node directions carrying at least half the largest component of a mode,
/// largest first, at most six.
fn dominant_dirs(system: &System, mode: &[f64]) -> Vec<NodeDir> {
    let max = mode.iter().map(|v| v.abs()).fold(0.0, f64::max);
    let mut big: Vec<(f64, usize)> =
        mode.iter().enumerate().filter(|(_, v)| v.abs() >= 0.5 * max).map(|(i, v)| (v.abs(), i)).collect();
    big.sort_by(|a, b| b.0.total_cmp(&a.0));
    big.truncate(6);
    big.into_iter().map(|(_, d)| system.dofs.owner(d)).collect()
}

/// Out-of-balance force (relative to the largest member force) above which
/// the drawn geometry is reported as not balancing its prestress: well above
/// the round-off of coordinates written with 6–16 digits (common practice,
/// no source).
pub const IMBALANCE_RATIO: f64 = 1e-6;

/// The largest out-of-balance force of the prestress alone (no dead or
/// reference load) at a free node of the drawn geometry, N, and that node,
/// when it exceeds [`IMBALANCE_RATIO`] times the largest member force: such
/// a model does not start in equilibrium, and `solve` first moves it to
/// one at load factor 0 (or finds none).
pub fn prestress_imbalance(system: &System, model: &Model) -> Option<(f64, usize)> {
    let n = system.n_free();
    let u = vec![0.0; n];
    let prestress_only = system.with_dead_factor(0.0);
    let mut r = vec![0.0; n];
    let mut reactions = vec![0.0; 3 * model.n_nodes()];
    prestress_only.residual(&u, 0.0, &mut r, &mut reactions);
    let largest_member = system.member_results(&u).iter().map(|m| m.force.abs()).fold(0.0, f64::max);
    let mut per_node = vec![0.0; model.n_nodes()];
    for (d, v) in r.iter().enumerate() {
        per_node[system.dofs.owner(d).node] += v * v;
    }
    let (node, worst) = per_node.iter().enumerate().map(|(k, v)| (k, v.sqrt())).max_by(|a, b| a.1.total_cmp(&b.1))?;
    (largest_member > 0.0 && worst > IMBALANCE_RATIO * largest_member).then_some((worst, node))
}

/// Members with a `force_density` (their own or the `[form]` default) but no
/// `prestress` or `rest_length`: `solve` takes them as unstressed in the
/// drawn geometry, the force density being a form-finding input only.
pub fn ignored_force_densities(model: &Model) -> Vec<usize> {
    model
        .members
        .iter()
        .enumerate()
        .filter(|(_, m)| {
            m.rest == RestSpec::Geometry && (m.force_density.is_some() || model.form.force_density.is_some())
        })
        .map(|(i, _)| i)
        .collect()
}

/// A strain above this (tension or compression) is flagged: the steel
/// strands and bars these structures are built from yield near 0.2–1 %
/// strain, so a few percent means a wrong EA or a member far beyond its
/// material; the elastic model is then not meaningful (common practice, no
/// source).
pub const STRAIN_WARNING: f64 = 0.03;

/// What a finished run should warn about: members with a utilisation above
/// 1 and strains above [`STRAIN_WARNING`]. `utilisation` and `strain` are
/// per member (None: no capacity given).
pub fn result_warnings(model: &Model, utilisation: &[Option<f64>], strain: &[f64]) -> Vec<String> {
    let mut out = Vec::new();
    let over: Vec<(usize, f64)> = utilisation
        .iter()
        .enumerate()
        .filter_map(|(m, u)| u.filter(|u| *u > 1.0).map(|u| (m, u)))
        .collect();
    if let Some(&(worst, u)) = over.iter().max_by(|a, b| a.1.total_cmp(&b.1)) {
        out.push(format!(
            "{} member(s) have a utilisation above 1 at the last converged state (the largest: member {:?}, {:.3}); \
             their force exceeds the capacity given in their section (members.csv, column utilisation)",
            over.len(),
            model.members[worst].label,
            u
        ));
    }
    let big: Vec<(usize, f64)> =
        strain.iter().enumerate().filter(|(_, e)| e.abs() > STRAIN_WARNING).map(|(m, e)| (m, *e)).collect();
    if let Some(&(worst, e)) = big.iter().max_by(|a, b| a.1.abs().total_cmp(&b.1.abs())) {
        out.push(format!(
            "{} member(s) strain by more than {:.0} % (the largest: member {:?}, {:.2} %): structural steel and strand \
             yield well below that, so check the sections' EA (units?) before using these results",
            big.len(),
            100.0 * STRAIN_WARNING,
            model.members[worst].label,
            100.0 * e
        ));
    }
    out
}
