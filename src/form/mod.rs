//! Form finding by the force density method (H.-J. Schek, "The force density
//! method for form finding and computation of general networks", Comput.
//! Methods Appl. Mech. Eng. 3, 1974).
//!
//! With a force density q = N/l given for every member, nodal equilibrium is
//! linear in the coordinates: for each axis, Cᵀ Q C x = p, where C is the
//! branch-node incidence matrix and Q = diag(q). Splitting the nodes into free
//! and supported ones for that axis gives D x_free = p − D_f x_fixed with
//! D = C_freeᵀ Q C_free. The axes decouple; here one block system over all
//! free (node, axis) unknowns is assembled and factored once.

pub mod relax;
mod table;
pub mod targets;

pub use table::form_csv;

use crate::assembly::Pattern;
use crate::element::Bar;
use crate::linalg::Ldlt;
use crate::model::{Diagnostic, FormTarget, MemberKind, Model, RestSpec, SelfWeight};
use std::fmt;

/// Geometry and forces found by [`force_density`].
#[derive(Clone, Debug, PartialEq)]
pub struct FormResult {
    /// Position of every node, m (supported coordinates unchanged).
    pub positions: Vec<[f64; 3]>,
    /// Member forces q·l, N, tension positive.
    pub forces: Vec<f64>,
    /// Member lengths in the found geometry, m.
    pub lengths: Vec<f64>,
    /// Force density used for each member, N/m.
    pub force_densities: Vec<f64>,
    /// Things worth knowing that did not stop the form finding.
    pub warnings: Vec<String>,
}

/// Why no form could be found.
#[derive(Clone, Debug, PartialEq)]
pub enum FormError {
    /// A member has no force density and `[form] force_density` is not set.
    NoForceDensity { member: String },
    /// A force density is not a finite number.
    BadForceDensity { member: String, value: f64 },
    /// The equilibrium equations do not fix this node's coordinate.
    Singular {
        node: String,
        axis: char,
        reason: String,
    },
    /// The sparse factorization could not be set up.
    Linalg(String),
    /// The solution is not finite.
    NotFinite { node: String },
    /// The member asks for something this method does not do.
    Unsupported { member: String, reason: String },
}

impl fmt::Display for FormError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            FormError::NoForceDensity { member } => write!(
                f,
                "member {member:?} has no force density; give it `force_density` or set \
                 `force_density` in [form]"
            ),
            FormError::BadForceDensity { member, value } => {
                write!(
                    f,
                    "member {member:?} has a force density of {value}, which is not a finite number"
                )
            }
            FormError::Singular { node, axis, reason } => write!(
                f,
                "the force density equations do not determine the {axis} coordinate of node \
                 {node:?}: {reason}"
            ),
            FormError::Linalg(s) => write!(f, "form finding failed: {s}"),
            FormError::NotFinite { node } => write!(
                f,
                "form finding gave a position of node {node:?} that is not finite; the force \
                 densities are close to a singular combination"
            ),
            FormError::Unsupported { member, reason } => write!(f, "member {member:?}: {reason}"),
        }
    }
}

impl std::error::Error for FormError {}

/// Force density of each member, N/m: its own, else the `[form]` default,
/// else (a member with `target_force` T only) T over its drawn length.
pub fn member_force_densities(model: &Model) -> Result<Vec<f64>, FormError> {
    model
        .members
        .iter()
        .enumerate()
        .map(|(k, m)| {
            let from_target = match m.target {
                Some(FormTarget::Force(t)) => Some(t / model.member_length(k)),
                _ => None,
            };
            let q = m
                .force_density
                .or(model.form.force_density)
                .or(from_target)
                .ok_or_else(|| FormError::NoForceDensity {
                    member: m.label.clone(),
                })?;
            if q.is_finite() {
                Ok(q)
            } else {
                Err(FormError::BadForceDensity {
                    member: m.label.clone(),
                    value: q,
                })
            }
        })
        .collect()
}

pub(crate) const NONE: usize = usize::MAX;

/// Finds the equilibrium shape of the model's members under its nodal loads
/// (at load factor 1) for the given force densities.
pub fn force_density(model: &Model) -> Result<FormResult, FormError> {
    force_density_with(model, member_force_densities(model)?)
}

/// [`force_density`] with the force densities `q` (N/m, one per member).
pub fn force_density_with(model: &Model, q: Vec<f64>) -> Result<FormResult, FormError> {
    solve_with(model, q).map(|(form, _)| form)
}

/// The factored force density system of one solve, kept for the
/// sensitivities of the target iteration ([`targets`]).
pub(crate) struct FdSystem {
    /// Unknown of each (node, axis), 3·node + axis; `NONE` if supported.
    pub index: Vec<usize>,
    /// D factored (None when every coordinate is supported).
    pub ldlt: Option<Ldlt>,
    pub n: usize,
}

impl FdSystem {
    /// Solves D·x = rhs in place.
    pub fn solve_in_place(&mut self, rhs: &mut [f64]) {
        if let Some(l) = &mut self.ldlt {
            l.solve_in_place(rhs);
        }
    }
}

/// The force density solve, returning the factored system as well.
pub(crate) fn solve_with(model: &Model, q: Vec<f64>) -> Result<(FormResult, FdSystem), FormError> {
    let n_nodes = model.n_nodes();
    let mut kept = None;

    // Unknowns: free (node, axis) pairs, node by node.
    let mut index = vec![NONE; 3 * n_nodes];
    let mut owner = Vec::new();
    for (k, node) in model.nodes.iter().enumerate() {
        for a in 0..3 {
            if !node.fixed[a] {
                index[3 * k + a] = owner.len();
                owner.push((k, a));
            }
        }
    }
    let n = owner.len();

    let mut attached = vec![false; n_nodes];
    let mut adj: Vec<Vec<usize>> = vec![Vec::new(); n_nodes];
    for m in &model.members {
        let [i, j] = m.ends;
        attached[i] = true;
        attached[j] = true;
        adj[i].push(j);
        adj[j].push(i);
    }
    for &(k, a) in &owner {
        if !attached[k] {
            return Err(FormError::Singular {
                node: model.nodes[k].label.clone(),
                axis: axis_letter(a),
                reason: "the node is free but no member is attached to it".into(),
            });
        }
    }

    let mut positions: Vec<[f64; 3]> = model.nodes.iter().map(|n| n.at).collect();
    if n > 0 {
        // Pattern of D: the same axis of neighbouring nodes, upper triangle.
        let mut col_ptr = Vec::with_capacity(n + 1);
        let mut row_idx = Vec::new();
        col_ptr.push(0);
        let mut rows = Vec::new();
        for (col, &(k, a)) in owner.iter().enumerate() {
            rows.clear();
            rows.push(col);
            for &nb in &adj[k] {
                let r = index[3 * nb + a];
                if r != NONE && r < col {
                    rows.push(r);
                }
            }
            rows.sort_unstable();
            rows.dedup();
            row_idx.extend_from_slice(&rows);
            col_ptr.push(row_idx.len());
        }
        let pattern =
            Pattern::from_upper_csc(n, &col_ptr, &row_idx).map_err(|e| FormError::Linalg(e.to_string()))?;
        let diag_slot = |d: usize| pattern.diag_slot[d] as usize;
        let mut values = vec![0.0; pattern.nnz()];
        let mut rhs = vec![0.0; n];
        for l in &model.loads {
            for a in 0..3 {
                let d = index[3 * l.node + a];
                if d != NONE {
                    rhs[d] += l.force[a];
                }
            }
        }
        for (m, member) in model.members.iter().enumerate() {
            let [i, j] = member.ends;
            if i == j {
                continue;
            }
            let qm = q[m];
            for a in 0..3 {
                let (di, dj) = (index[3 * i + a], index[3 * j + a]);
                if di != NONE {
                    values[diag_slot(di)] += qm;
                }
                if dj != NONE {
                    values[diag_slot(dj)] += qm;
                }
                match (di != NONE, dj != NONE) {
                    (true, true) => {
                        if let Some(s) = pattern.slot(di, dj) {
                            values[s as usize] -= qm;
                        }
                    }
                    (true, false) => rhs[di] += qm * model.nodes[j].at[a],
                    (false, true) => rhs[dj] += qm * model.nodes[i].at[a],
                    (false, false) => {}
                }
            }
        }
        let mut ldlt =
            Ldlt::new(&pattern, faer::Par::Seq).map_err(|e| FormError::Linalg(e.to_string()))?;
        let inertia = ldlt.factorize(&pattern, &values);
        if let Some(&d) = inertia.zero_dofs.first() {
            let (k, a) = owner[d];
            let reason = if values[diag_slot(d)] == 0.0 {
                "the force densities of its members add up to zero"
            } else {
                "the force densities leave it (or a part of the net around it) without a \
                 unique position; check for zero or cancelling force densities and for parts \
                 not connected to any support"
            };
            return Err(FormError::Singular {
                node: model.nodes[k].label.clone(),
                axis: axis_letter(a),
                reason: reason.into(),
            });
        }
        if !ldlt.is_factored() {
            return Err(FormError::Linalg(
                "the factorization did not complete".into(),
            ));
        }
        ldlt.solve_in_place(&mut rhs);
        for (d, &(k, a)) in owner.iter().enumerate() {
            if !rhs[d].is_finite() {
                return Err(FormError::NotFinite {
                    node: model.nodes[k].label.clone(),
                });
            }
            positions[k][a] = rhs[d];
        }
        kept = Some(ldlt);
    }

    let mut lengths = Vec::with_capacity(model.n_members());
    let mut forces = Vec::with_capacity(model.n_members());
    let mut warnings = Vec::new();
    for (m, member) in model.members.iter().enumerate() {
        let [i, j] = member.ends;
        let (p, r) = (positions[i], positions[j]);
        let l = ((r[0] - p[0]).powi(2) + (r[1] - p[1]).powi(2) + (r[2] - p[2]).powi(2)).sqrt();
        lengths.push(l);
        forces.push(q[m] * l);
        if member.kind.tension_only() && q[m] < 0.0 {
            warnings.push(format!(
                "member {:?} would carry compression (force density {} N/m), which a cable cannot",
                member.label, q[m]
            ));
        }
        if l == 0.0 {
            warnings.push(format!(
                "member {:?} has zero length in the found shape",
                member.label
            ));
        }
    }
    Ok((
        FormResult {
            positions,
            forces,
            lengths,
            force_densities: q,
            warnings,
        },
        FdSystem { index, ldlt: kept, n },
    ))
}

fn axis_letter(a: usize) -> char {
    ['x', 'y', 'z'][a.min(2)]
}

/// The model at the found shape: node coordinates replaced and every
/// member's unstressed length chosen so that it carries the found force
/// there, so an analysis starts in equilibrium. Where no unstressed length
/// gives that force, the member gets the force as a prestress instead and the
/// model a warning.
pub fn formed_model(model: &Model, form: &FormResult) -> Model {
    let mut out = model.clone();
    for (node, p) in out.nodes.iter_mut().zip(&form.positions) {
        node.at = *p;
    }
    let file = model.files.first().cloned().unwrap_or_default();
    let strain = model.analysis.strain;
    for (m, member) in out.members.iter_mut().enumerate() {
        // A target is met (or not) once: the formed model carries the found
        // state, its force density included, not the target.
        if member.target.take().is_some() {
            member.force_density = form.force_densities.get(m).copied().filter(|q| q.is_finite());
        }
        let (Some(&l), Some(&n)) = (form.lengths.get(m), form.forces.get(m)) else {
            continue;
        };
        let ea = model.sections.get(member.section).map_or(0.0, |s| s.ea);
        let rest = if l > 0.0 && ea > 0.0 {
            Bar::rest_length_for_force(l, ea, n, strain).filter(|r| r.is_finite() && *r > 0.0)
        } else {
            None
        };
        match rest {
            Some(r) => member.rest = RestSpec::Length(r),
            None => {
                member.rest = RestSpec::Prestress(n);
                out.warnings.push(
                    Diagnostic::new(
                        file.clone(),
                        format!(
                            "no unstressed length gives the found force of {n} N; the force is \
                         given as a prestress instead"
                        ),
                    )
                    .item(format!("member {:?}", member.label)),
                );
            }
        }
    }
    // Form finding balances the given loads only. Section weights and
    // catenary sag are not part of it, so the formed model leaves them out:
    // otherwise `solve` would not start in equilibrium.
    let mut turned = Vec::new();
    for member in out.members.iter_mut().filter(|m| m.kind == MemberKind::Catenary) {
        member.kind = MemberKind::Cable;
        turned.push(member.label.clone());
    }
    if !turned.is_empty() {
        let shown: Vec<String> = turned.iter().take(5).map(|l| format!("{l:?}")).collect();
        out.warnings.push(Diagnostic::new(
            file.clone(),
            format!(
                "{} catenary member(s) ({}{}) were form-found as straight members and are written as \
                 `kind = \"cable\"` in formed.toml; change them back by hand to analyse their sag",
                turned.len(),
                shown.join(", "),
                if turned.len() > 5 { ", ..." } else { "" }
            ),
        ));
    }
    let weighted = out.sections.iter().any(|s| s.weight.is_some_and(|w| w > 0.0));
    if weighted && out.analysis.self_weight != SelfWeight::None {
        out.analysis.self_weight = SelfWeight::None;
        out.warnings.push(Diagnostic::new(
            file.clone(),
            "section weights are not part of form finding: formed.toml sets `self_weight = \"none\"` \
             so that `solve` starts in equilibrium; set it to \"dead\" to analyse the formed shape \
             under its own weight as well"
                .to_string(),
        ));
    }
    if !out.loads.is_empty() {
        // The found shape balances the form-finding loads at full value:
        // the analysis of the formed model starts there.
        out.analysis.start_load_factor = 1.0;
        if out.analysis.control != crate::model::Control::Displacement && out.analysis.target < 1.0 {
            out.analysis.target = 1.0;
        }
    }
    out
}
