//! Residual r(u, λ) = f_int(u) − λ·f_ref and tangent K(u) of a whole structure.
//!
//! `u` holds the free DOFs only. Re-assembly writes into caller-owned buffers
//! through the precomputed scatter map: no allocation per iteration.

use super::dofs::{DofMap, FIXED};
use super::pattern::{NO_SLOT, Pattern, UPPER_6};
use crate::element::{AxialState, Bar};
use crate::model::{MemberKind, Model, RestSpec, StrainMeasure};

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
    bars: Vec<Bar>,
    ends: Vec<[u32; 2]>,
    springs: Vec<GroundSpring>,
    /// Reference load on the free DOFs, N.
    pub f_ref: Vec<f64>,
    /// ‖f_ref‖, N, computed once.
    f_ref_norm: f64,
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
        let mut ends = Vec::with_capacity(model.n_members());
        for (m, member) in model.members.iter().enumerate() {
            let [i, j] = member.ends;
            let (a, b) = (model.nodes[i].at, model.nodes[j].at);
            let d = [b[0] - a[0], b[1] - a[1], b[2] - a[2]];
            let l = model.member_length(m);
            let ea = model.sections[member.section].ea;
            let cable = member.kind == MemberKind::Cable;
            let rest = match member.rest {
                RestSpec::Geometry => l,
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
            bars.push(Bar::with_rest_length(d, rest, ea, cable));
            ends.push([i as u32, j as u32]);
        }
        let springs = model
            .springs
            .iter()
            .filter_map(|s| dofs.dof(s.node, s.axis.index()).map(|dof| GroundSpring { dof, k: s.k }))
            .collect();
        let mut f_ref = vec![0.0; dofs.n_free()];
        for load in &model.loads {
            for a in 0..3 {
                if let Some(d) = dofs.dof(load.node, a) {
                    f_ref[d] += load.force[a];
                }
            }
        }
        let f_ref_norm = f_ref.iter().map(|v| v * v).sum::<f64>().sqrt();
        Ok(System { dofs, pattern, strain, bars, ends, springs, f_ref, f_ref_norm })
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
        self.bars.iter().map(|b| b.rest)
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
        // supply: reaction = f_int there (no load may act on a support).
        let mut load2 = 0.0;
        for (ri, fi) in r.iter_mut().zip(&self.f_ref) {
            *ri -= lambda * fi;
            load2 += (lambda * fi).powi(2);
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
