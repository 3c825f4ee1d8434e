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
//! and per-member buffers owned by the system: no allocation per iteration.
//!
//! Assembly runs in two parallel passes on the current rayon pool: every
//! member's force and tangent block into its own buffer entry, then every
//! node force and tangent value slot summed from its fixed-order gather list
//! ([`super::gather`]); then the loads are taken off on the free DOFs and the
//! norms summed per fixed chunk of DOFs, the chunk sums added in chunk order.
//! Each output is a serial sum in a fixed order, so the result is
//! bit-identical on any number of threads. (Left serial, the load and norm
//! loops held the two-thread assembly at about 1.4× one thread at 300k DOF;
//! in parallel it measured 1.6–2.2×.)

use super::dofs::{DofMap, FIXED};
use super::gather::{Gather, sym_index};
use super::member_table::MemberTable;
use super::pattern::Pattern;
use crate::element::{AxialState, Bar, Catenary};
use crate::model::{MemberKind, Model, RestSpec, SelfWeight, StrainMeasure};
use rayon::prelude::*;
use std::sync::{Mutex, PoisonError};

// Work per parallel task. The results do not depend on these sizes; unit
// tests use small ones so that small models still run on many tasks.
/// Members per parallel task of the kernel pass.
const MEMBER_CHUNK: usize = if cfg!(test) { 16 } else { 2048 };
/// Nodes per parallel task of the force gather.
const NODE_CHUNK: usize = if cfg!(test) { 16 } else { 2048 };
/// Tangent value slots per parallel task of the tangent gather.
const SLOT_CHUNK: usize = if cfg!(test) { 64 } else { 8192 };
/// Free DOFs (or node directions) per parallel task of the load and norm pass.
const DOF_CHUNK: usize = if cfg!(test) { 16 } else { 8192 };

/// Per-member results of the latest assembly and the partial sums of its
/// norms, reused across calls.
#[derive(Debug, Default)]
struct MemberBuffers {
    /// Internal force on node j.
    f: Vec<[f64; 3]>,
    /// Tangent block, upper triangle (see [`sym_index`]).
    k: Vec<[f64; 6]>,
    /// Per chunk of free DOFs: Σ r², Σ load².
    dof_sums: Vec<[f64; 2]>,
    /// Per chunk of node directions: Σ reaction².
    raw_sums: Vec<f64>,
    /// Per chunk of members: slack count and key (see [`ResidualNorms`]).
    slack_sums: Vec<(u32, u64)>,
}

impl MemberBuffers {
    fn new(n_members: usize, n_free: usize, n_raw: usize) -> MemberBuffers {
        MemberBuffers {
            f: vec![[0.0; 3]; n_members],
            k: vec![[0.0; 6]; n_members],
            dof_sums: vec![[0.0; 2]; n_free.div_ceil(DOF_CHUNK)],
            raw_sums: vec![0.0; n_raw.div_ceil(DOF_CHUNK)],
            slack_sums: vec![(0, 0); n_members.div_ceil(MEMBER_CHUNK)],
        }
    }
}

/// A well-mixed 64-bit value of a member index (the splitmix64 finalizer,
/// Steele, Lea & Flood 2014), summed over the slack members into an
/// order-independent key of the slack set.
#[inline]
fn slack_mix(m: usize) -> u64 {
    let mut z = (m as u64).wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// The member buffers behind a lock, so assembly can keep `&self`; a clone of
/// the system gets fresh buffers of its own. One system assembles one state
/// at a time: do not call its assembly from several rayon tasks at once (a
/// task waiting on the lock could be the one holding it).
#[derive(Debug, Default)]
struct Scratch(Mutex<MemberBuffers>);

impl Clone for Scratch {
    fn clone(&self) -> Self {
        let b = self.0.lock().unwrap_or_else(PoisonError::into_inner);
        Scratch(Mutex::new(MemberBuffers {
            f: vec![[0.0; 3]; b.f.len()],
            k: vec![[0.0; 6]; b.k.len()],
            dof_sums: vec![[0.0; 2]; b.dof_sums.len()],
            raw_sums: vec![0.0; b.raw_sums.len()],
            slack_sums: vec![(0, 0); b.slack_sums.len()],
        }))
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

/// Bytes of a system's arrays, by what they hold (see [`System::memory`]).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct SystemMemory {
    pub pattern: usize,
    pub gather: usize,
    pub members: usize,
    pub buffers: usize,
}

impl SystemMemory {
    pub fn total(&self) -> usize {
        self.pattern + self.gather + self.members + self.buffers
    }
}

/// Norms that come with a residual evaluation.
#[derive(Clone, Copy, Debug, Default)]
pub struct ResidualNorms {
    /// ‖r‖ over the free DOFs.
    pub residual: f64,
    /// ‖λ·f_ref‖ + ‖reactions‖: the force level the residual is judged against.
    pub force_scale: f64,
    /// Number of slack members at u, counted in the same pass.
    pub slack: u32,
    /// Order-independent key of the slack set (wrapping sum of a mix of the
    /// slack members' indices): equal sets give equal keys; a different set
    /// gives a different key except with probability about 2⁻⁶⁴. The
    /// quasi-Newton correctors compare it between iterations (`solve`).
    pub slack_key: u64,
}

#[derive(Clone, Debug)]
pub struct System {
    pub dofs: DofMap,
    pub pattern: Pattern,
    pub strain: StrainMeasure,
    /// The member kernels' data, one row per member.
    members: MemberTable,
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
    gather: Gather,
    scratch: Scratch,
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
        let pattern = Pattern::new(model, &dofs)
            .map_err(|e| BuildError { member: String::new(), message: e.to_string() })?;
        let strain = model.analysis.strain;
        let mut members = MemberTable::with_capacity(model.n_members());
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
            if member.kind == MemberKind::Catenary {
                members.push_catenary(Catenary::new(d, rest, ea, weight));
            } else {
                members.push_bar(Bar::with_rest_length(d, rest, ea, cable));
            }
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
        // Constant nodal loads (a formed model's form-finding loads held
        // while a separate load case is stepped): dead load like self-weight.
        for load in &model.dead_loads {
            for a in 0..3 {
                dead_nodal[3 * load.node + a] += load.force[a];
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
        let gather = Gather::new(&ends, model.n_nodes(), &pattern).map_err(|_| BuildError {
            member: String::new(),
            message: "the model is too large for the 32-bit assembly lists (over 350 million members)".into(),
        })?;
        let n = members.len();
        let scratch = Scratch(Mutex::new(MemberBuffers::new(n, dofs.n_free(), dofs.raw().len())));
        Ok(System {
            dofs,
            pattern,
            strain,
            members,
            ends,
            springs,
            f_ref,
            f_ref_norm,
            f_dead,
            dead_factor: 1.0,
            support_loads,
            total_ref,
            total_dead,
            gather,
            scratch,
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

    /// The relative residual every solver judges convergence by:
    /// ‖r‖ / max(‖λ·f_ref + f_dead‖ + ‖reactions‖, ‖f_ref‖).
    ///
    /// The first term is the force level of the state. The second is an
    /// absolute floor, the reference load itself: without it a stress-free
    /// state (λ = 0 on a displacement-controlled path, or an unloaded,
    /// unstressed start) has a force level of 0 and no residual, however
    /// small, would ever pass. With it, ‖r‖ ≤ tol·‖f_ref‖ always converges
    /// (common practice, no source). Models with no reference load keep a
    /// tiny positive scale so the ratio stays finite.
    pub fn relative_residual(&self, norms: ResidualNorms) -> f64 {
        let scale = norms.force_scale.max(self.f_ref_norm).max(f64::MIN_POSITIVE);
        norms.residual / scale
    }

    pub fn n_free(&self) -> usize {
        self.dofs.n_free()
    }

    pub fn n_members(&self) -> usize {
        self.members.len()
    }

    /// Unstressed length of each member, m.
    pub fn rest_lengths(&self) -> impl Iterator<Item = f64> + '_ {
        self.members.rest_lengths().iter().copied()
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
        self.members.state(m, &self.end_difference(u, m), self.strain)
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
        k_values: Option<&mut [f64]>,
    ) -> ResidualNorms {
        debug_assert_eq!(u.len(), self.n_free());
        debug_assert_eq!(reactions.len(), self.dofs.raw().len());
        let mut guard = self.scratch.0.lock().unwrap_or_else(PoisonError::into_inner);
        let MemberBuffers { f: member_f, k: member_k, dof_sums, raw_sums, slack_sums } = &mut *guard;
        let with_k = k_values.is_some();
        // Pass 1: each member's end force and tangent block, independently,
        // and per chunk the slack count and key.
        member_f.par_chunks_mut(MEMBER_CHUNK).zip(member_k.par_chunks_mut(MEMBER_CHUNK)).zip(slack_sums.par_iter_mut()).enumerate().for_each(
            |(c, ((fs, ks), slack_sum))| {
                let (mut count, mut key) = (0u32, 0u64);
                for (l, (f, k)) in fs.iter_mut().zip(ks.iter_mut()).enumerate() {
                    let m = c * MEMBER_CHUNK + l;
                    let st = self.member_state(u, m);
                    if st.slack {
                        count += 1;
                        key = key.wrapping_add(slack_mix(m));
                    }
                    *f = st.f;
                    if with_k {
                        for a in 0..3 {
                            for b in a..3 {
                                k[sym_index(a, b)] = st.k[a][b];
                            }
                        }
                    }
                }
                *slack_sum = (count, key);
            },
        );
        // Pass 2a: node forces, summed in member order, into the per-node
        // array `reactions`.
        let member_f = &*member_f;
        reactions.par_chunks_mut(3 * NODE_CHUNK).enumerate().for_each(|(c, chunk)| {
            for (l, nf) in chunk.chunks_exact_mut(3).enumerate() {
                nf.copy_from_slice(&self.gather.node_force(c * NODE_CHUNK + l, member_f));
            }
        });
        // Ground springs on free directions, before those are moved into r.
        for s in &self.springs {
            reactions[self.dofs.raw_index()[s.dof] as usize] += s.k * u[s.dof];
        }
        // Pass 3: r = f_int + springs − dead − λ·f_ref on the free DOFs, and
        // the sums of squares per fixed chunk; the chunk sums are added in
        // chunk order below, so the norms do not depend on the thread count.
        let mu = self.dead_factor;
        let (raw, raw_index, reactions_in) = (self.dofs.raw(), self.dofs.raw_index(), &*reactions);
        r.par_chunks_mut(DOF_CHUNK).zip(dof_sums.par_iter_mut()).enumerate().for_each(|(c, (rc, sums))| {
            let (mut r2, mut load2) = (0.0, 0.0);
            for (l, rd) in rc.iter_mut().enumerate() {
                let d = c * DOF_CHUNK + l;
                let load = lambda * self.f_ref[d] + mu * self.f_dead[d];
                *rd = reactions_in[raw_index[d] as usize] - load;
                r2 += *rd * *rd;
                load2 += load * load;
            }
            *sums = [r2, load2];
        });
        // Reactions: the internal forces at the supports are what the
        // supports must supply (reaction = f_int − f_ext there, f_ext: loads
        // on supports); zero on free directions.
        reactions.par_chunks_mut(DOF_CHUNK).enumerate().for_each(|(c, chunk)| {
            for (l, v) in chunk.iter_mut().enumerate() {
                if raw[c * DOF_CHUNK + l] != FIXED {
                    *v = 0.0;
                }
            }
        });
        for s in &self.support_loads {
            reactions[s.k] -= mu * s.dead + lambda * s.reference;
        }
        reactions.par_chunks(DOF_CHUNK).zip(raw_sums.par_iter_mut()).for_each(|(chunk, sum)| {
            *sum = chunk.iter().map(|v| v * v).sum();
        });
        // Pass 2b: tangent values, each slot summed in member order.
        if let Some(kv) = k_values {
            let member_k = &*member_k;
            kv.par_chunks_mut(SLOT_CHUNK).enumerate().for_each(|(c, chunk)| {
                for (l, v) in chunk.iter_mut().enumerate() {
                    *v = self.gather.slot_value(c * SLOT_CHUNK + l, member_k);
                }
            });
            for s in &self.springs {
                kv[self.pattern.diag_slot[s.dof] as usize] += s.k;
            }
        }
        let residual = dof_sums.iter().map(|s| s[0]).sum::<f64>().sqrt();
        let load2 = dof_sums.iter().map(|s| s[1]).sum::<f64>();
        let react = raw_sums.iter().sum::<f64>().sqrt();
        let (slack, slack_key) =
            slack_sums.iter().fold((0u32, 0u64), |(n, k), &(cn, ck)| (n + cn, k.wrapping_add(ck)));
        drop(guard);
        ResidualNorms { residual, force_scale: load2.sqrt() + react, slack, slack_key }
    }

    /// Bytes of the system's index and member arrays: the pattern with its
    /// scatter map, the gather lists, the member table with the member ends,
    /// and the per-member result buffers (what grows with the model besides
    /// the vectors of length n and the factor).
    pub fn memory(&self) -> SystemMemory {
        SystemMemory {
            pattern: self.pattern.bytes(),
            gather: self.gather.bytes(),
            members: self.members.bytes() + std::mem::size_of_val(self.ends.as_slice()),
            buffers: self.members.len() * (3 + 6) * 8,
        }
    }

    /// Force, strain, length and slack state of every member at `u`.
    pub fn member_results(&self, u: &[f64]) -> Vec<MemberResult> {
        (0..self.members.len())
            .into_par_iter()
            .map(|m| {
                let st = self.member_state(u, m);
                MemberResult { force: st.force, strain: st.strain, length: st.length, slack: st.slack }
            })
            .collect()
    }

    /// Adds to `row` (one entry per free DOF) the row sums of |K_m| of every
    /// member that is slack at `u`, as if it were taut: (EA/Lr)·e eᵀ with e
    /// its current direction, on the diagonal block of both ends and, negated,
    /// between them. Dynamic relaxation adds this to the tangent's row sums
    /// so that its masses bound the stiffness a slack cable regains when it
    /// tightens (Barnes 1999 takes the masses from the members' elastic
    /// stiffness for the same reason).
    pub fn add_slack_taut_rows(&self, u: &[f64], row: &mut [f64]) {
        let raw = self.dofs.raw();
        for m in 0..self.members.len() {
            let du = self.end_difference(u, m);
            if !self.members.state(m, &du, self.strain).slack {
                continue;
            }
            let (d, k) = self.members.taut_axial(m);
            let x: [f64; 3] = std::array::from_fn(|a| d[a] + du[a]);
            let l = (x[0] * x[0] + x[1] * x[1] + x[2] * x[2]).sqrt();
            if !(l > 0.0 && k.is_finite()) {
                continue;
            }
            let e = x.map(|c| c / l);
            let sum_e: f64 = e.iter().map(|c| c.abs()).sum();
            for node in self.ends[m] {
                for a in 0..3 {
                    let dof = raw[3 * node as usize + a];
                    if dof != FIXED {
                        // Diagonal block and the coupling block to the other end.
                        row[dof as usize] += 2.0 * k * e[a].abs() * sum_e;
                    }
                }
            }
        }
    }

    /// Indices of the members that carry no tension at `u` (slack cables).
    pub fn slack_members(&self, u: &[f64]) -> Vec<u32> {
        let mut out = Vec::new();
        self.slack_members_into(u, &mut out);
        out
    }

    /// [`Self::slack_members`] into a reused vector (cleared first).
    pub fn slack_members_into(&self, u: &[f64], out: &mut Vec<u32>) {
        out.clear();
        out.extend((0..self.members.len()).filter(|&m| self.member_state(u, m).slack).map(|m| m as u32));
    }

    /// Force each spring exerts on the structure, N (−k·u), with its node DOF.
    pub fn spring_forces(&self, u: &[f64]) -> Vec<(usize, f64)> {
        self.springs.iter().map(|s| (s.dof, -s.k * u[s.dof])).collect()
    }

    /// x·K·x for the tangent values `k_values` on the upper-triangle pattern.
    pub fn quadratic_form(&self, k_values: &[f64], x: &[f64]) -> f64 {
        let p = &self.pattern;
        let mut sum = 0.0;
        for c in 0..p.n {
            for s in p.column(c) {
                let r = p.row_idx[s] as usize;
                let v = k_values[s] * x[r] * x[c];
                sum += if r != c { 2.0 * v } else { v };
            }
        }
        sum
    }

    /// Product y = K·x with the symmetric upper-triangle values `k_values`.
    pub fn tangent_times(&self, k_values: &[f64], x: &[f64], y: &mut [f64]) {
        y.fill(0.0);
        let p = &self.pattern;
        for c in 0..p.n {
            for s in p.column(c) {
                let r = p.row_idx[s] as usize;
                let v = k_values[s];
                y[r] += v * x[c];
                if r != c {
                    y[c] += v * x[r];
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::generate::{DomeOptions, Loading, NetOptions, lattice_dome, saddle_net};
    use crate::model::Method;
    use crate::observe::Silent;

    fn pool(threads: usize) -> rayon::ThreadPool {
        rayon::ThreadPoolBuilder::new().num_threads(threads).build().unwrap()
    }

    fn net(n: usize, load: f64) -> Model {
        let g = saddle_net(&NetOptions { nx: n, ny: n, load: Loading::PerNode(load), ..NetOptions::default() }, "net").unwrap();
        crate::model::load_str(&g.toml, "net.toml", None).unwrap()
    }

    fn dome() -> Model {
        let g = lattice_dome(&DomeOptions { rings: 6, sectors: 16, ..DomeOptions::default() }, "dome").unwrap();
        crate::model::load_str(&g.toml, "dome.toml", None).unwrap()
    }

    /// The net with every seventh member an elastic catenary (1.002 times
    /// its chord, weighted), so catenary rows sit between cable rows.
    fn net_with_catenaries() -> Model {
        let mut m = net(14, 500.0);
        m.analysis.self_weight = SelfWeight::Dead;
        for s in &mut m.sections {
            s.weight = Some(40.0);
        }
        for k in (3..m.members.len()).step_by(7) {
            let l = m.member_length(k);
            m.members[k].kind = MemberKind::Catenary;
            m.members[k].rest = RestSpec::Length(1.002 * l);
        }
        m
    }

    /// A displacement with no symmetry, large enough to stretch and slacken members.
    fn wobble(n: usize, amp: f64) -> Vec<f64> {
        (0..n).map(|i| amp * (((i * 7919) % 101) as f64 / 50.0 - 1.0)).collect()
    }

    struct Assembled {
        r: Vec<f64>,
        reactions: Vec<f64>,
        k: Vec<f64>,
    }

    fn assemble_on(threads: usize, sys: &System, n_nodes: usize, u: &[f64]) -> Assembled {
        pool(threads).install(|| {
            let mut a = Assembled {
                r: vec![0.0; sys.n_free()],
                reactions: vec![0.0; 3 * n_nodes],
                k: sys.new_tangent_values(),
            };
            sys.residual_and_tangent(u, 0.7, &mut a.r, &mut a.reactions, &mut a.k);
            a
        })
    }

    fn bits(v: &[f64]) -> Vec<u64> {
        v.iter().map(|x| x.to_bits()).collect()
    }

    /// The member-by-member scatter that parallel assembly replaced, reading
    /// each member block's upper triangle as the gather does: the order of
    /// additions the gather lists must reproduce exactly.
    fn serial_scatter(sys: &System, u: &[f64]) -> (Vec<f64>, Vec<f64>) {
        use crate::assembly::pattern::{NO_SLOT, UPPER_6};
        let mut r = vec![0.0; sys.n_free()];
        let mut k = sys.new_tangent_values();
        let raw = sys.dofs.raw();
        for m in 0..sys.n_members() {
            let st = sys.member_state(u, m);
            let [i, j] = sys.ends[m];
            for a in 0..3 {
                for (node, sign) in [(i as usize, -1.0), (j as usize, 1.0)] {
                    let d = raw[3 * node + a];
                    if d != FIXED {
                        r[d as usize] += sign * st.f[a];
                    }
                }
            }
            for (&(a, b), &slot) in UPPER_6.iter().zip(&sys.pattern.member_slots[21 * m..21 * m + 21]) {
                if slot != NO_SLOT {
                    let (p, q) = ((a % 3).min(b % 3) as usize, (a % 3).max(b % 3) as usize);
                    let v = st.k[p][q];
                    k[slot as usize] += if (a < 3) == (b < 3) { v } else { -v };
                }
            }
        }
        for s in &sys.springs {
            r[s.dof] += s.k * u[s.dof];
            k[sys.pattern.diag_slot[s.dof] as usize] += s.k;
        }
        for ((ri, fi), fd) in r.iter_mut().zip(&sys.f_ref).zip(&sys.f_dead) {
            *ri -= 0.7 * fi + sys.dead_factor * fd;
        }
        (r, k)
    }

    /// Residual, reactions and tangent values are bit-identical on 1, 2 and 3
    /// threads, and equal to the serial member-by-member scatter, for a cable
    /// net (some cables slack at this displacement), the net with catenaries
    /// among its cables, and a bar dome.
    #[test]
    fn assembly_is_bit_identical_on_any_thread_count() {
        for m in [net(14, 500.0), net_with_catenaries(), dome()] {
            let sys = System::new(&m).unwrap();
            let u = wobble(sys.n_free(), 0.05);
            let one = assemble_on(1, &sys, m.n_nodes(), &u);
            assert!(one.k.iter().any(|v| *v != 0.0) && one.reactions.iter().any(|v| *v != 0.0));
            for threads in [2, 3] {
                let many = assemble_on(threads, &sys, m.n_nodes(), &u);
                assert_eq!(bits(&one.r), bits(&many.r), "residual, {threads} threads");
                assert_eq!(bits(&one.reactions), bits(&many.reactions), "reactions, {threads} threads");
                assert_eq!(bits(&one.k), bits(&many.k), "tangent, {threads} threads");
            }
            let (r, k) = serial_scatter(&sys, &u);
            assert_eq!(bits(&one.r), bits(&r), "residual vs serial scatter");
            assert_eq!(bits(&one.k), bits(&k), "tangent vs serial scatter");
        }
    }

    /// A whole BFGS path on a strongly loaded net gives bit-identical
    /// displacements, load factors and counts on 1, 2 and 3 threads.
    #[test]
    fn whole_solve_is_bit_identical_on_any_thread_count() {
        let mut m = net(16, 120.0);
        m.analysis.method = Method::Bfgs;
        m.analysis.steps = 5;
        let run = |threads: usize| {
            pool(threads).install(|| {
                let path = crate::Solver::with_parallelism(&m, faer::Par::Seq).unwrap().trace(&mut Silent).path;
                let lambdas: Vec<f64> = path.points.iter().map(|p| p.lambda).collect();
                assert_eq!(path.stop, crate::path::StopReason::TargetReached, "{threads} threads");
                (bits(&path.final_state.u), bits(&lambdas), path.totals())
            })
        };
        let one = run(1);
        assert!(one.1.len() >= 5, "the path has its steps");
        assert!(one.0.iter().any(|&b| f64::from_bits(b).abs() > 1e-3), "the net moved");
        for threads in [2, 3] {
            assert_eq!(one, run(threads), "{threads} threads");
        }
    }
}
