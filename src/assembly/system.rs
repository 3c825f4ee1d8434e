//! Residual r(u, λ) = f_int(u) − f_dead − λ·f_ref and tangent K(u) of a
//! whole structure.
//!
//! Self-weight: a member of unstressed length Lr whose section weighs w per
//! unstressed length puts −w·Lr/2·ẑ on each end node, into the constant dead
//! load f_dead (`self_weight = "dead"`) or into f_ref (`"reference"`). A
//! catenary member's weight is always dead load: it is the W/2 per end that
//! its kernel leaves out of the antisymmetric end force (`element::catenary`).
//!
//! `u` holds the free DOFs only. Re-assembly writes into caller-owned buffers
//! through the precomputed scatter map: no allocation per iteration.

use super::dofs::{DofMap, FIXED};
use super::pattern::{NO_SLOT, Pattern, UPPER_6};
use crate::element::{AxialState, Bar, Catenary};
use crate::model::{MemberKind, Model, RestSpec, SelfWeight, StrainMeasure};

/// One member's kernel.
#[derive(Clone, Copy, Debug)]
enum Element {
    Bar(Bar),
    Catenary(Catenary),
}

impl Element {
    #[inline]
    fn state(&self, du: &[f64; 3], strain: StrainMeasure) -> AxialState {
        match self {
            Element::Bar(b) => b.state(du, strain),
            Element::Catenary(c) => c.state(du),
        }
    }

    fn rest(&self) -> f64 {
        match self {
            Element::Bar(b) => b.rest,
            Element::Catenary(c) => c.rest,
        }
    }
}

/// A load on a supported direction: it goes straight into the reaction.
#[derive(Clone, Copy, Debug)]
struct SupportLoad {
    /// 3·node + axis.
    k: usize,
    dead: f64,
    reference: f64,
}

/// A member's state for the results.
#[derive(Clone, Copy, Debug)]
pub struct MemberResult {
    /// True axial force, N, tension positive.
    pub force: f64,
    pub strain: f64,
    /// Current length, m.
    pub length: f64,
    pub slack: bool,
}

/// A spring to ground on a free DOF.
#[derive(Clone, Copy, Debug)]
struct GroundSpring {
    dof: usize,
    k: f64,
}

/// Norms that come with a residual evaluation.
#[derive(Clone, Copy, Debug, Default)]
pub struct ResidualNorms {
    /// ‖r‖ over the free DOFs.
    pub residual: f64,
    /// ‖λ·f_ref‖ + ‖reactions‖: the force level the residual is judged against.
    pub force_scale: f64,
}

#[derive(Clone, Debug)]
pub struct System {
    pub dofs: DofMap,
    pub pattern: Pattern,
    pub strain: StrainMeasure,
    /// The member kernels.
    bars: Vec<Element>,
    ends: Vec<[u32; 2]>,
    springs: Vec<GroundSpring>,
    /// Reference load on the free DOFs, N.
    pub f_ref: Vec<f64>,
    /// ‖f_ref‖, N, computed once.
    f_ref_norm: f64,
    /// Constant dead load (self-weight) on the free DOFs, N.
    pub f_dead: Vec<f64>,
    /// Share of the dead load applied: 1 except while the dead-load state is
    /// being found by load stepping (`path`).
    dead_factor: f64,
    /// Loads on supported directions.
    support_loads: Vec<SupportLoad>,
    /// Sums over all nodes, supports included, N.
    total_ref: [f64; 3],
    total_dead: [f64; 3],
}

/// Why a system could not be built.
#[derive(Clone, Debug, PartialEq)]
pub struct BuildError {
    pub member: String,
    pub message: String,
}

impl System {
    pub fn new(model: &Model) -> Result<System, BuildError> {
        let dofs = DofMap::new(model);
        let pattern = Pattern::new(model, &dofs);
        let strain = model.analysis.strain;
        let mut bars = Vec::with_capacity(model.n_members());
        // Self-weight lumped to the nodes, 3 per node, before splitting into
        // free and supported directions.
        let mut dead_nodal = vec![0.0; 3 * model.n_nodes()];
        let mut ref_nodal = vec![0.0; 3 * model.n_nodes()];
        let mut ends = Vec::with_capacity(model.n_members());
        for (m, member) in model.members.iter().enumerate() {
            let [i, j] = member.ends;
            let (a, b) = (model.nodes[i].at, model.nodes[j].at);
            let d = [b[0] - a[0], b[1] - a[1], b[2] - a[2]];
            let l = model.member_length(m);
            let section = &model.sections[member.section];
            let ea = section.ea;
            let cable = member.kind == MemberKind::Cable;
            let rest = match member.rest {
                RestSpec::Geometry => l,
                RestSpec::Prestress(_) if member.kind == MemberKind::Catenary => {
                    return Err(BuildError {
                        member: member.label.clone(),
                        message: "a catenary member needs its unstretched length (`rest_length`), not a prestress".into(),
                    });
                }
                RestSpec::Length(r) => r,
                RestSpec::Prestress(n) => {
                    Bar::rest_length_for_force(l, ea, n, strain).ok_or_else(|| BuildError {
                        member: member.label.clone(),
                        message: format!(
                            "no unstressed length gives a prestress of {n} N with EA = {ea} N \
                             under {strain:?} strain"
                        ),
                    })?
                }
            };
            let weight = match model.analysis.self_weight {
                SelfWeight::None => 0.0,
                _ => section.weight.unwrap_or(0.0),
            };
            bars.push(if member.kind == MemberKind::Catenary {
                Element::Catenary(Catenary::new(d, rest, ea, weight))
            } else {
                Element::Bar(Bar::with_rest_length(d, rest, ea, cable))
            });
            ends.push([i as u32, j as u32]);
            let dead = member.kind == MemberKind::Catenary || model.analysis.self_weight == SelfWeight::Dead;
            let lumped = if dead { &mut dead_nodal } else { &mut ref_nodal };
            for node in [i, j] {
                lumped[3 * node + 2] -= 0.5 * weight * rest;
            }
        }
        let springs = model
            .springs
            .iter()
            .filter_map(|s| dofs.dof(s.node, s.axis.index()).map(|dof| GroundSpring { dof, k: s.k }))
            .collect();
        for load in &model.loads {
            for a in 0..3 {
                ref_nodal[3 * load.node + a] += load.force[a];
            }
        }
        let mut f_ref = vec![0.0; dofs.n_free()];
        let mut f_dead = vec![0.0; dofs.n_free()];
        let mut support_loads = Vec::new();
        let (mut total_ref, mut total_dead) = ([0.0; 3], [0.0; 3]);
        for (k, (&dead, &reference)) in dead_nodal.iter().zip(&ref_nodal).enumerate() {
            total_ref[k % 3] += reference;
            total_dead[k % 3] += dead;
            match dofs.dof(k / 3, k % 3) {
                Some(d) => {
                    f_ref[d] += reference;
                    f_dead[d] += dead;
                }
                None if dead != 0.0 || reference != 0.0 => support_loads.push(SupportLoad { k, dead, reference }),
                None => {}
            }
        }
        let f_ref_norm = f_ref.iter().map(|v| v * v).sum::<f64>().sqrt();
        Ok(System {
            dofs,
            pattern,
            strain,
            bars,
            ends,
            springs,
            f_ref,
            f_ref_norm,
            f_dead,
            dead_factor: 1.0,
            support_loads,
            total_ref,
            total_dead,
        })
    }

    /// Whether any dead load acts (self-weight, catenary members).
    pub fn has_dead_load(&self) -> bool {
        self.total_dead.iter().any(|v| *v != 0.0)
    }

    /// This system with only the share `factor` of its dead load: the steps
    /// by which the dead-load state is reached.
    pub fn with_dead_factor(&self, factor: f64) -> System {
        let mut s = self.clone();
        s.dead_factor = factor;
        s
    }

    /// Total applied load at load factor λ (dead load plus λ times the
    /// reference load), summed over all nodes, supports included, N.
    pub fn applied_total(&self, lambda: f64) -> [f64; 3] {
        [0, 1, 2].map(|a| self.dead_factor * self.total_dead[a] + lambda * self.total_ref[a])
    }

    /// Total reference load, supports included, N.
    pub fn total_reference_load(&self) -> [f64; 3] {
        self.total_ref
    }

    /// ‖f_ref‖, N.
    pub fn f_ref_norm(&self) -> f64 {
        self.f_ref_norm
    }

    pub fn n_free(&self) -> usize {
        self.dofs.n_free()
    }

    pub fn n_members(&self) -> usize {
        self.bars.len()
    }

    /// Unstressed length of each member, m.
    pub fn rest_lengths(&self) -> impl Iterator<Item = f64> + '_ {
        self.bars.iter().map(Element::rest)
    }

    /// A fresh value array for the tangent pattern.
    pub fn new_tangent_values(&self) -> Vec<f64> {
        vec![0.0; self.pattern.nnz()]
    }

    #[inline]
    fn end_difference(&self, u: &[f64], m: usize) -> [f64; 3] {
        let [i, j] = self.ends[m];
        let raw = self.dofs.raw();
        let mut du = [0.0; 3];
        for (a, v) in du.iter_mut().enumerate() {
            let dj = raw[3 * j as usize + a];
            let di = raw[3 * i as usize + a];
            let uj = if dj == FIXED { 0.0 } else { u[dj as usize] };
            let ui = if di == FIXED { 0.0 } else { u[di as usize] };
            *v = uj - ui;
        }
        du
    }

    #[inline]
    fn member_state(&self, u: &[f64], m: usize) -> AxialState {
        self.bars[m].state(&self.end_difference(u, m), self.strain)
    }

    /// Adds a member's end forces into the free-DOF vector `r` and, for
    /// supported DOFs, into `reactions` (indexed 3·node + axis).
    #[inline]
    fn scatter_force(&self, m: usize, f: &[f64; 3], r: &mut [f64], reactions: &mut [f64]) {
        let [i, j] = self.ends[m];
        let raw = self.dofs.raw();
        for (a, fa) in f.iter().enumerate() {
            for (node, sign) in [(i as usize, -1.0), (j as usize, 1.0)] {
                let k = 3 * node + a;
                let d = raw[k];
                if d == FIXED {
                    reactions[k] += sign * fa;
                } else {
                    r[d as usize] += sign * fa;
                }
            }
        }
    }

    /// Evaluates r(u, λ) into `r` (free DOFs) and the support reactions into
    /// `reactions` (3 per node, zero at free DOFs). Reactions are the forces
    /// the supports exert on the structure.
    pub fn residual(
        &self,
        u: &[f64],
        lambda: f64,
        r: &mut [f64],
        reactions: &mut [f64],
    ) -> ResidualNorms {
        self.assemble(u, lambda, r, reactions, None)
    }

    /// Evaluates the residual and refills the tangent values in one pass.
    pub fn residual_and_tangent(
        &self,
        u: &[f64],
        lambda: f64,
        r: &mut [f64],
        reactions: &mut [f64],
        k_values: &mut [f64],
    ) -> ResidualNorms {
        self.assemble(u, lambda, r, reactions, Some(k_values))
    }

    fn assemble(
        &self,
        u: &[f64],
        lambda: f64,
        r: &mut [f64],
        reactions: &mut [f64],
        mut k_values: Option<&mut [f64]>,
    ) -> ResidualNorms {
        debug_assert_eq!(u.len(), self.n_free());
        r.fill(0.0);
        reactions.fill(0.0);
        if let Some(k) = k_values.as_deref_mut() {
            k.fill(0.0);
        }
        for m in 0..self.bars.len() {
            let st = self.member_state(u, m);
            self.scatter_force(m, &st.f, r, reactions);
            if let Some(k) = k_values.as_deref_mut() {
                let slots = &self.pattern.member_slots[21 * m..21 * m + 21];
                for (&(a, b), &slot) in UPPER_6.iter().zip(slots) {
                    if slot == NO_SLOT {
                        continue;
                    }
                    let same_node = (a < 3) == (b < 3);
                    let v = st.k[(a % 3) as usize][(b % 3) as usize];
                    k[slot as usize] += if same_node { v } else { -v };
                }
            }
        }
        for s in &self.springs {
            r[s.dof] += s.k * u[s.dof];
            if let Some(k) = k_values.as_deref_mut() {
                k[self.pattern.diag_slot[s.dof]] += s.k;
            }
        }
        // The internal forces at the supports are what the supports must
        // supply: reaction = f_int − f_ext there (f_ext: self-weight only).
        let mut load2 = 0.0;
        let mu = self.dead_factor;
        for ((ri, fi), fd) in r.iter_mut().zip(&self.f_ref).zip(&self.f_dead) {
            let load = lambda * fi + mu * fd;
            *ri -= load;
            load2 += load * load;
        }
        // A load on a support is carried by it directly.
        for s in &self.support_loads {
            reactions[s.k] -= mu * s.dead + lambda * s.reference;
        }
        let residual = r.iter().map(|v| v * v).sum::<f64>().sqrt();
        let react = reactions.iter().map(|v| v * v).sum::<f64>().sqrt();
        ResidualNorms { residual, force_scale: load2.sqrt() + react }
    }

    /// Force, strain, length and slack state of every member at `u`.
    pub fn member_results(&self, u: &[f64]) -> Vec<MemberResult> {
        (0..self.bars.len())
            .map(|m| {
                let st = self.member_state(u, m);
                MemberResult { force: st.force, strain: st.strain, length: st.length, slack: st.slack }
            })
            .collect()
    }

    /// Indices of the members that carry no tension at `u` (slack cables).
    pub fn slack_members(&self, u: &[f64]) -> Vec<u32> {
        (0..self.bars.len()).filter(|&m| self.member_state(u, m).slack).map(|m| m as u32).collect()
    }

    /// Force each spring exerts on the structure, N (−k·u), with its node DOF.
    pub fn spring_forces(&self, u: &[f64]) -> Vec<(usize, f64)> {
        self.springs.iter().map(|s| (s.dof, -s.k * u[s.dof])).collect()
    }

    /// Product y = K·x with the symmetric upper-triangle values `k_values`.
    pub fn tangent_times(&self, k_values: &[f64], x: &[f64], y: &mut [f64]) {
        y.fill(0.0);
        let p = &self.pattern;
        for c in 0..p.n {
            for s in p.col_ptr[c]..p.col_ptr[c + 1] {
                let r = p.row_idx[s];
                let v = k_values[s];
                y[r] += v * x[c];
                if r != c {
                    y[c] += v * x[r];
                }
            }
        }
    }
}
