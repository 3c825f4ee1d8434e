//! The start of a path: stepping the dead load (self-weight) in from zero
//! at the start load factor, and, when the prestressed start has no
//! equilibrium, the `StartFailure` that says why. Split from the stepping
//! loop in `path/mod.rs`, whose private helpers it uses as a child module.

use super::*;

/// The prestressed start could not be brought into balance: what the
/// corrector met, which members lost the tension they were given and where
/// the given geometry is most out of balance.
#[derive(Clone, Debug)]
pub struct StartFailure {
    pub termination: Termination,
    /// Relative residual of the given geometry (before any correction).
    pub given_residual: f64,
    /// Members in tension in the given geometry that are slack, or keep less
    /// than [`LOST_PRESTRESS`] of that tension, at the last state the
    /// corrector reached (or at the singular state it converged to), by
    /// index, ascending: the prestress they cannot hold.
    pub lost_prestress: Vec<u32>,
    /// Nodes with the largest out-of-balance force in the given geometry,
    /// largest first (node index, force in N), at most five.
    pub out_of_balance: Vec<(usize, f64)>,
    /// Node directions free to move at the last state, when its tangent was singular.
    pub free_dirs: Vec<NodeDir>,
}

/// A member that keeps less than this share of its given tension at a failed
/// start has lost its prestress (a cable run back to its rest length).
pub const LOST_PRESTRESS: f64 = 1e-6;

/// Steps and successive halvings allowed while stepping in the dead load.
const DEAD_LOAD_MAX_STEPS: usize = 400;
const DEAD_LOAD_HALVINGS: usize = 12;

impl<'a> Tracer<'a> {
    /// Finds the equilibrium under the full dead load (self-weight) at the
    /// start load factor by stepping its share μ from 0 to 1, each step a
    /// load-control corrector from the last converged state, halved on
    /// failure (at most `DEAD_LOAD_HALVINGS` times in a row) and grown by
    /// half after a success. The state at μ = 0 is solved first when it is
    /// out of balance (prestress). Ends on the real system, μ = 1.
    pub(super) fn step_in_dead_load(&mut self, ws: &mut Workspace, state: &mut State, rec0: &mut StepRecord, observer: &mut dyn Observer) -> Termination {
        let mut mu = 0.0f64;
        let mut d_mu = 0.25f64;
        let mut halvings = 0;
        let mut first = true;
        for _ in 0..DEAD_LOAD_MAX_STEPS {
            let target = if first { 0.0 } else { (mu + d_mu).min(1.0) };
            let partial = self.system.with_dead_factor(target);
            let start_u = state.u.clone();
            ws.set_factor_fresh(false);
            let (term, rec) = solve::drive(&partial, ws, state, &start_u, state.lambda, &FixedLoad, &self.corrector, 0, observer);
            if term == Termination::Converged {
                add_records(rec0, &rec);
                let was_first = std::mem::replace(&mut first, false);
                mu = target;
                halvings = 0;
                if mu >= 1.0 {
                    return Termination::Converged;
                }
                if !was_first {
                    d_mu *= 1.5;
                }
                d_mu = d_mu.min(1.0 - mu);
            } else {
                add_records(&mut self.wasted, &rec);
                let lambda = state.lambda;
                restore(state, start_u, lambda);
                if term == Termination::Stopped || first {
                    return term;
                }
                halvings += 1;
                if halvings > DEAD_LOAD_HALVINGS {
                    return term;
                }
                d_mu *= 0.5;
            }
        }
        Termination::MaxIterations
    }

    /// The members in tension at `given_u` (the given geometry) that are
    /// slack at `reached_u`, or keep at most `LOST_PRESTRESS` of that tension.
    pub(super) fn lost_prestress(&self, given_u: &[f64], reached_u: &[f64]) -> Vec<u32> {
        let sys = self.system;
        let given = sys.member_results(given_u);
        let now = sys.member_results(reached_u);
        given
            .iter()
            .zip(&now)
            .enumerate()
            .filter(|(_, (g, n))| g.force > 0.0 && (n.slack || n.force <= LOST_PRESTRESS * g.force))
            .map(|(m, _)| m as u32)
            .collect()
    }

    /// What is known when the start has no equilibrium: the given
    /// geometry's imbalance (at `given_u`, the start displacements), the
    /// members in tension there that are slack at `reached` (the last state
    /// the corrector reached), and the free directions of a singular end.
    pub(super) fn start_failure(&self, given_u: &[f64], reached: &State, termination: Termination) -> StartFailure {
        let sys = self.system;
        let mut r = vec![0.0; sys.n_free()];
        let mut react = vec![0.0; reached.reactions.len()];
        let norms = sys.residual(given_u, reached.lambda, &mut r, &mut react);
        let mut per_node = vec![0.0f64; self.model.n_nodes()];
        for (d, v) in r.iter().enumerate() {
            per_node[sys.dofs.owner(d).node] += v * v;
        }
        let mut out_of_balance: Vec<(usize, f64)> =
            per_node.iter().enumerate().filter(|(_, f)| **f > 0.0).map(|(n, f)| (n, f.sqrt())).collect();
        out_of_balance.sort_by(|a, b| b.1.total_cmp(&a.1));
        out_of_balance.truncate(5);
        let lost_prestress = self.lost_prestress(given_u, &reached.u);
        let free_dirs = match &termination {
            Termination::SingularTangent { dofs } => dofs.iter().take(8).map(|d| sys.dofs.owner(*d)).collect(),
            _ => Vec::new(),
        };
        StartFailure { termination, given_residual: sys.relative_residual(norms), lost_prestress, out_of_balance, free_dirs }
    }
}
