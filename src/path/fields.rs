//! Whole displacement fields of chosen steps, for `fields.csv`.
//!
//! The choice is made while the path is traced, step by step: a field is
//! copied when its step converges and the policy wants it, and never
//! otherwise, so a run of a million DOFs does not hold fields it would drop
//! afterwards (issue 7). Only the last converged state is taken at the end,
//! from the state the tracer keeps anyway.

use crate::model::KeepFields;

/// The free-DOF displacements of one converged step, m.
#[derive(Clone, Debug, PartialEq)]
pub struct Field {
    pub step: usize,
    pub lambda: f64,
    pub u: Vec<f64>,
}

/// Collects the fields a resolved policy asks for.
pub(super) struct Keeper {
    policy: KeepFields,
    fields: Vec<Field>,
}

impl Keeper {
    /// `policy` is already resolved (not `Auto`).
    pub(super) fn new(policy: KeepFields) -> Keeper {
        Keeper { policy, fields: Vec::new() }
    }

    pub(super) fn policy(&self) -> &KeepFields {
        &self.policy
    }

    /// Whether the converged step `step` is kept; `pivots_changed` says its
    /// negative pivot count differs from the previous step's, which is how
    /// `results` finds critical points too.
    fn wants(&self, step: usize, pivots_changed: bool) -> bool {
        match &self.policy {
            KeepFields::All => true,
            KeepFields::Ends => step == 0 || pivots_changed,
            KeepFields::Steps(steps) => steps.binary_search(&step).is_ok(),
            KeepFields::None | KeepFields::Auto => false,
        }
    }

    /// Offers a converged step; copies `u` only if the policy wants it.
    pub(super) fn offer(&mut self, step: usize, lambda: f64, u: &[f64], pivots_changed: bool) {
        if self.wants(step, pivots_changed) {
            self.fields.push(Field { step, lambda, u: u.to_vec() });
        }
    }

    /// Whether pinpointed critical states keep their field.
    pub(super) fn keeps_critical(&self) -> bool {
        matches!(self.policy, KeepFields::All | KeepFields::Ends)
    }

    /// The kept fields, steps ascending; under `Ends` the last converged
    /// state (`last`: its step, λ and displacements) is added unless it is
    /// already there.
    pub(super) fn finish(mut self, last: Option<(usize, f64, &[f64])>) -> (KeepFields, Vec<Field>) {
        if let (KeepFields::Ends, Some((step, lambda, u))) = (&self.policy, last)
            && self.fields.last().is_none_or(|f| f.step != step)
        {
            self.fields.push(Field { step, lambda, u: u.to_vec() });
        }
        (self.policy, self.fields)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Offers steps 0..=n with the pivot count changing at `change`, ends at n.
    fn kept(policy: KeepFields, n: usize, change: Option<usize>) -> Vec<usize> {
        let mut k = Keeper::new(policy);
        for step in 0..=n {
            k.offer(step, step as f64, &[step as f64], Some(step) == change);
        }
        let last = [n as f64];
        let (_, fields) = k.finish(Some((n, n as f64, &last)));
        for f in &fields {
            assert_eq!(f.u, vec![f.step as f64], "the field of step {} is its own", f.step);
        }
        fields.iter().map(|f| f.step).collect()
    }

    #[test]
    fn each_policy_keeps_its_steps() {
        assert_eq!(kept(KeepFields::All, 4, None), vec![0, 1, 2, 3, 4]);
        assert_eq!(kept(KeepFields::None, 4, Some(2)), Vec::<usize>::new());
        assert_eq!(kept(KeepFields::Ends, 6, Some(3)), vec![0, 3, 6]);
        assert_eq!(kept(KeepFields::Ends, 6, None), vec![0, 6]);
        // A critical last step is kept once.
        assert_eq!(kept(KeepFields::Ends, 5, Some(5)), vec![0, 5]);
        // A path of step 0 alone.
        assert_eq!(kept(KeepFields::Ends, 0, None), vec![0]);
        // Steps past the end are absent, the others kept in order.
        assert_eq!(kept(KeepFields::steps(vec![10, 0, 3, 3, 99]), 12, None), vec![0, 3, 10]);
        assert_eq!(kept(KeepFields::steps(vec![99]), 12, None), Vec::<usize>::new());
    }

    #[test]
    fn only_all_and_ends_keep_critical_states() {
        assert!(Keeper::new(KeepFields::All).keeps_critical());
        assert!(Keeper::new(KeepFields::Ends).keeps_critical());
        assert!(!Keeper::new(KeepFields::None).keeps_critical());
        assert!(!Keeper::new(KeepFields::steps(vec![1])).keeps_critical());
    }
}
