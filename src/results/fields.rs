//! Whole displacement fields of a run: where `results.json` says they are
//! (`FieldsOut`), and the states themselves as the writers read them
//! (`Fields`: the last state, the kept steps and the critical states and
//! modes, with per-node displacements and member forces at any of them), so
//! `report` reads a run through `results` only.

use super::utilisation;
use crate::assembly::{DofMap, System};
use crate::model::Model;
use crate::path::fields::Field;
use crate::path::{Critical, CriticalKind, EquilibriumPath};
use serde::Serialize;

/// The sidecar files of whole displacement fields (`keep_fields`).
#[derive(Clone, Debug, Serialize)]
pub struct FieldsOut {
    /// `fields.csv`: one row per node and kept step.
    pub file: String,
    /// The policy as resolved: "all", "ends", "none" or "list".
    pub keep: String,
    /// The steps in `file`, ascending.
    pub steps: Vec<usize>,
    /// Data rows of `file` (the header not counted).
    pub rows: usize,
    /// `critical_fields.csv`: the pinpointed critical states.
    pub critical_file: String,
    /// Indices into `critical_points` of the states in `critical_file`.
    pub critical: Vec<usize>,
    /// Data rows of `critical_file`.
    pub critical_rows: usize,
}

/// Names of the two field files.
pub const FIELDS_FILE: &str = "fields.csv";
pub const CRITICAL_FIELDS_FILE: &str = "critical_fields.csv";
/// Name of the critical modes file.
pub const CRITICAL_MODES_FILE: &str = "critical_modes.csv";

/// What the field files of `path` hold.
pub fn fields_out(model: &Model, path: &EquilibriumPath) -> FieldsOut {
    let critical: Vec<usize> =
        path.critical.iter().enumerate().filter(|(_, c)| c.field.is_some()).map(|(i, _)| i).collect();
    FieldsOut {
        file: FIELDS_FILE.into(),
        keep: path.keep.name().into(),
        steps: path.fields.iter().map(|f| f.step).collect(),
        rows: path.fields.len() * model.n_nodes(),
        critical_file: CRITICAL_FIELDS_FILE.into(),
        critical_rows: critical.len() * model.n_nodes(),
        critical,
    }
}

/// A converged state: its step, load factor and free-DOF displacements (SI).
#[derive(Clone, Copy, Debug)]
pub struct State<'a> {
    pub step: usize,
    pub lambda: f64,
    pub u: &'a [f64],
}

impl<'a> From<&'a Field> for State<'a> {
    fn from(f: &'a Field) -> State<'a> {
        State { step: f.step, lambda: f.lambda, u: &f.u }
    }
}

/// A pinpointed critical point as the writers need it (its index into
/// `critical_points` is its place in [`Fields::critical`]).
#[derive(Clone, Copy, Debug)]
pub struct CriticalState<'a> {
    /// The first converged step past it.
    pub step: usize,
    pub lambda: f64,
    /// A limit point (else a bifurcation).
    pub limit: bool,
    /// The critical state's free-DOF displacements, when kept.
    pub field: Option<&'a [f64]>,
    /// Its critical modes over the free DOFs, each of unit norm.
    pub modes: &'a [Vec<f64>],
}

impl<'a> From<&'a Critical> for CriticalState<'a> {
    fn from(c: &'a Critical) -> CriticalState<'a> {
        CriticalState {
            step: c.step,
            lambda: c.lambda,
            limit: c.kind == CriticalKind::Limit,
            field: c.field.as_deref(),
            modes: &c.modes,
        }
    }
}

/// Where each node direction is in a free-DOF vector: what the field
/// writers need of a run's numbering (a [`Fields`] view, or the system's
/// own `DofMap`).
pub trait Dofs {
    /// The free DOF of `node` in `axis` (0 = x), if not supported.
    fn dof(&self, node: usize, axis: usize) -> Option<usize>;
}

impl Dofs for DofMap {
    fn dof(&self, node: usize, axis: usize) -> Option<usize> {
        DofMap::dof(self, node, axis)
    }
}

impl Dofs for Fields<'_> {
    fn dof(&self, node: usize, axis: usize) -> Option<usize> {
        self.system.dofs.dof(node, axis)
    }
}

impl CriticalState<'_> {
    /// "limit" or "bifurcation", as in captions.
    pub fn kind_name(&self) -> &'static str {
        if self.limit { "limit" } else { "bifurcation" }
    }
}

/// A member's force at a state, SI, with its slack flag and utilisation.
#[derive(Clone, Copy, Debug)]
pub struct MemberState {
    pub force: f64,
    pub slack: bool,
    /// Force over the section's capacity in that sense (None: no capacity).
    pub utilisation: Option<f64>,
}

/// The states of a traced run, read through the system they were traced on:
/// what `report` draws and streams (fields, critical states and modes).
pub struct Fields<'a> {
    model: &'a Model,
    system: &'a System,
    path: &'a EquilibriumPath,
}

impl<'a> Fields<'a> {
    pub fn new(model: &'a Model, system: &'a System, path: &'a EquilibriumPath) -> Fields<'a> {
        Fields { model, system, path }
    }

    /// The displacement of `node` in `axis` in the free-DOF vector `u` (0 in
    /// a supported direction), SI.
    pub fn displacement(&self, u: &[f64], node: usize, axis: usize) -> f64 {
        self.system.dofs.displacement(u, node, axis)
    }

    /// Whether the run carries a dead load (self-weight or a held load case).
    pub fn has_dead_load(&self) -> bool {
        self.system.applied_total(0.0).iter().any(|v| *v != 0.0)
    }

    /// Every member's force, slack flag and utilisation at state `u`.
    pub fn members_at(&self, u: &[f64]) -> Vec<MemberState> {
        self.system
            .member_results(u)
            .iter()
            .zip(&self.model.members)
            .map(|(r, m)| MemberState {
                force: r.force,
                slack: r.slack,
                utilisation: utilisation(&self.model.sections[m.section], r.force),
            })
            .collect()
    }

    /// The last converged state (step 0 when none converged past the start).
    pub fn end(&self) -> State<'a> {
        let p = self.path;
        State { step: p.points.last().map_or(0, |x| x.step), lambda: p.final_state.lambda, u: &p.final_state.u }
    }

    /// The kept steps' fields (`keep_fields`), ascending.
    pub fn kept(&self) -> impl Iterator<Item = State<'a>> + 'a {
        self.path.fields.iter().map(State::from)
    }

    /// Every pinpointed critical point, in `critical_points` order.
    pub fn critical(&self) -> impl Iterator<Item = CriticalState<'a>> + 'a {
        self.path.critical.iter().map(CriticalState::from)
    }
}
