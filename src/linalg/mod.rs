//! Sparse symmetric LDLᵀ factorization of the tangent: the only place that
//! talks to faer. The symbolic analysis (ordering, elimination tree,
//! supernodes) runs once per pattern; each refactorization is numeric only.
//! The ordering is faer's AMD or the nested dissection of [`ordering`],
//! whichever gives the factor fewer entries.
//!
//! Indices go to faer as u32, as the pattern stores them (faer's symbolic
//! and numeric LDLᵀ are generic over the index type): no usize copy of the
//! pattern is made, and the symbolic factor's own index arrays are u32 too.
//! A factor with more entries than u32 indices hold is refused at the
//! symbolic analysis with [`LinalgError::Analysis`].
//!
//! Every factorization reports its inertia (the number of negative pivots of
//! D, by Sylvester's law of inertia the number of negative eigenvalues of K):
//! it is how limit points and bifurcations are seen.

pub(crate) mod ordering;
pub(crate) mod vector;

use crate::assembly::Pattern;
use faer::Par;
use faer::dyn_stack::{MemBuffer, MemStack};
use faer::linalg::cholesky::ldlt::factor::{LdltParams, LdltRegularization};
use faer::sparse::linalg::cholesky::{
    CholeskySymbolicParams, LdltRef, SymbolicCholesky, SymbolicCholeskyRaw, SymmetricOrdering,
    factorize_symbolic_cholesky,
};
use faer::sparse::linalg::cholesky::simplicial::SimplicialLdltRef;
use faer::sparse::linalg::cholesky::supernodal::SupernodalLdltRef;
use faer::sparse::{SparseColMatRef, SymbolicSparseColMatRef};
use faer::perm::PermRef;
use faer::{Conj, MatMut, Side, Spec};

/// A pivot is taken as zero when |d| falls below this fraction of the
/// matching diagonal entry of K (or of the largest diagonal entry, when that
/// entry is itself zero). Round-off in a factorization of a well-posed
/// stiffness leaves pivots many orders above it.
pub const ZERO_PIVOT_RATIO: f64 = 1e-11;

/// What a numeric factorization found.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Inertia {
    /// Number of negative pivots of D.
    pub negative: usize,
    /// Free DOFs (original numbering) whose pivot is numerically zero.
    pub zero_dofs: Vec<usize>,
}

impl Inertia {
    pub fn is_singular(&self) -> bool {
        !self.zero_dofs.is_empty()
    }
}

#[derive(Debug, Clone, PartialEq, Eq)]
pub enum LinalgError {
    /// faer could not allocate or analyse the pattern.
    Analysis(String),
}

impl std::fmt::Display for LinalgError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            LinalgError::Analysis(s) => write!(f, "sparse factorization failed: {s}"),
        }
    }
}

impl std::error::Error for LinalgError {}

/// Which elimination orderings `Ldlt` analyses.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Ordering {
    /// Both; the one with fewer factor entries is kept.
    Smaller,
    /// faer's approximate minimum degree only.
    #[cfg_attr(not(test), allow(dead_code))]
    Amd,
    /// tautline's nested dissection only.
    #[cfg_attr(not(test), allow(dead_code))]
    Dissection,
}

/// Symbolic analysis of one pattern plus the numeric factor of the latest
/// tangent.
pub struct Ldlt {
    n: usize,
    symbolic: SymbolicCholesky<u32>,
    l_values: Vec<f64>,
    factor_mem: MemBuffer,
    solve_mem: MemBuffer,
    par: Par,
    /// Whether `l_values` holds a usable factorization.
    factored: bool,
    /// Number of numeric factorizations done.
    pub n_factorizations: usize,
}

fn symbolic_view(p: &Pattern) -> SymbolicSparseColMatRef<'_, u32> {
    SymbolicSparseColMatRef::new_checked(p.n, p.n, &p.col_ptr, None, &p.row_idx)
}

impl Ldlt {
    /// Symbolic analysis of the pattern (once per structure), under the
    /// ordering that gives the smaller factor.
    pub fn new(pattern: &Pattern, par: Par) -> Result<Ldlt, LinalgError> {
        Ldlt::with_ordering(pattern, par, Ordering::Smaller)
    }

    fn with_ordering(pattern: &Pattern, par: Par, choice: Ordering) -> Result<Ldlt, LinalgError> {
        let analyse = |ordering: SymmetricOrdering<'_, u32>| {
            factorize_symbolic_cholesky(symbolic_view(pattern), Side::Upper, ordering, CholeskySymbolicParams::default())
                .map_err(|e| match e {
                    faer::sparse::FaerError::IndexOverflow => LinalgError::Analysis(
                        "the factor of this tangent needs more entries than 32-bit indices hold; \
                         the model is too large for tautline's factorization"
                            .into(),
                    ),
                    e => LinalgError::Analysis(format!("{e:?}")),
                })
        };
        let amd = (choice != Ordering::Dissection).then(|| analyse(SymmetricOrdering::Amd));
        let dissected = (choice != Ordering::Amd).then(|| {
            let order = ordering::nested_dissection(pattern);
            analyse(SymmetricOrdering::Custom(PermRef::new_checked(&order.fwd, &order.inv, pattern.n)))
        });
        // The factor with fewer entries: less memory, and on the meshes
        // here fewer operations too.
        let symbolic = match (amd, dissected) {
            (Some(Ok(a)), Some(Ok(d))) => {
                if d.len_val() < a.len_val() { d } else { a }
            }
            (Some(Ok(a)), _) => a,
            (_, Some(Ok(d))) => d,
            (Some(Err(e)), _) | (None, Some(Err(e))) => return Err(e),
            (None, None) => unreachable!("at least one ordering is analysed"),
        };
        let factor_mem = MemBuffer::try_new(
            symbolic.factorize_numeric_ldlt_scratch::<f64>(par, Spec::<LdltParams, f64>::default()),
        )
        .map_err(|_| LinalgError::Analysis("out of memory for the factorization workspace".into()))?;
        let solve_mem = MemBuffer::try_new(symbolic.solve_in_place_scratch::<f64>(1, par))
            .map_err(|_| LinalgError::Analysis("out of memory for the solve workspace".into()))?;
        let l_values = vec![0.0; symbolic.len_val()];
        Ok(Ldlt {
            n: pattern.n,
            symbolic,
            l_values,
            factor_mem,
            solve_mem,
            par,
            factored: false,
            n_factorizations: 0,
        })
    }

    pub fn dimension(&self) -> usize {
        self.n
    }

    /// Number of stored entries of L (fill), a measure of memory use.
    pub fn factor_nnz(&self) -> usize {
        self.l_values.len()
    }

    /// Numeric LDLᵀ of the tangent with values `k_values` on `pattern`.
    pub fn factorize(&mut self, pattern: &Pattern, k_values: &[f64]) -> Inertia {
        self.factorize_with(pattern, k_values, None)
    }

    /// Numeric LDLᵀ of K − σ·I (the diagonal shifted by `sigma`), with every
    /// pivot kept as it is: the factor of the true shifted matrix, whose
    /// inertia counts the eigenvalues of K below σ. Shift-invert iteration
    /// with it converges to the eigenvalues of K nearest σ with their signs
    /// (Parlett, *The Symmetric Eigenvalue Problem*, 1980, §4.6, from memory).
    pub fn factorize_shifted(&mut self, pattern: &Pattern, k_values: &[f64], sigma: f64) -> Inertia {
        let mut shifted = k_values.to_vec();
        for &s in &pattern.diag_slot {
            shifted[s as usize] -= sigma;
        }
        self.factorize_with(pattern, &shifted, None)
    }

    /// As [`Ldlt::factorize`], but pivots below the zero threshold, and
    /// negative ones, are replaced by a tiny positive value (faer's dynamic
    /// regularization with all signs +1). The factor is not that of K when K
    /// is indefinite: use it only to get *a* usable factor of a singular
    /// tangent (the fuzz target does); modes come from
    /// [`Ldlt::factorize_shifted`], which keeps the signs.
    pub fn factorize_regularized(&mut self, pattern: &Pattern, k_values: &[f64]) -> Inertia {
        let max_diag = pattern.diag_slot.iter().map(|&s| k_values[s as usize].abs()).fold(0.0, f64::max);
        let signs = vec![1i8; self.n];
        self.factorize_with(pattern, k_values, Some((signs, max_diag)))
    }

    fn factorize_with(
        &mut self,
        pattern: &Pattern,
        k_values: &[f64],
        regularize: Option<(Vec<i8>, f64)>,
    ) -> Inertia {
        let a = SparseColMatRef::new(symbolic_view(pattern), k_values);
        let reg = match &regularize {
            Some((signs, max_diag)) => LdltRegularization {
                dynamic_regularization_signs: Some(signs),
                dynamic_regularization_delta: max_diag.max(1.0) * 1e-12,
                dynamic_regularization_epsilon: max_diag.max(1.0) * 1e-13,
            },
            None => LdltRegularization::default(),
        };
        let stack = MemStack::new(&mut self.factor_mem);
        let result = self.symbolic.factorize_numeric_ldlt(
            &mut self.l_values,
            a,
            Side::Upper,
            reg,
            self.par,
            stack,
            Spec::<LdltParams, f64>::default(),
        );
        self.n_factorizations += 1;
        match result {
            Ok(_) => {
                self.factored = true;
                self.inertia(pattern, k_values)
            }
            Err(e) => {
                // faer stops at an exactly zero pivot: report that DOF.
                self.factored = false;
                let faer::linalg::cholesky::ldlt::factor::LdltError::ZeroPivot { index } = e;
                // The simplicial kernel counts from one, the supernodal one
                // from zero.
                let permuted = match self.symbolic.raw() {
                    SymbolicCholeskyRaw::Simplicial(_) => index.saturating_sub(1),
                    SymbolicCholeskyRaw::Supernodal(_) => index,
                };
                let dof = self.original_index(permuted.min(self.n.saturating_sub(1)));
                Inertia { negative: 0, zero_dofs: vec![dof] }
            }
        }
    }

    fn original_index(&self, permuted: usize) -> usize {
        match self.symbolic.perm() {
            Some(p) => p.arrays().0[permuted] as usize,
            None => permuted,
        }
    }

    /// The pivots d_j of D in elimination order.
    fn pivots(&self) -> Vec<f64> {
        let mut d = vec![0.0; self.n];
        match self.symbolic.raw() {
            SymbolicCholeskyRaw::Simplicial(s) => {
                let f = SimplicialLdltRef::new(s, &self.l_values);
                let col_ptr = s.col_ptr();
                let vals = f.values();
                for (j, dj) in d.iter_mut().enumerate() {
                    // The first entry of each column of L is its diagonal, which
                    // holds d_j (L has a unit diagonal that is not stored).
                    *dj = vals[col_ptr[j] as usize];
                }
            }
            SymbolicCholeskyRaw::Supernodal(s) => {
                let f = SupernodalLdltRef::new(s, &self.l_values);
                for sn in 0..s.n_supernodes() {
                    let node = f.supernode(sn);
                    let start = node.start();
                    let v = node.val();
                    for k in 0..v.ncols() {
                        d[start + k] = v[(k, k)];
                    }
                }
            }
        }
        d
    }

    fn inertia(&self, pattern: &Pattern, k_values: &[f64]) -> Inertia {
        let max_diag = pattern.diag_slot.iter().map(|&s| k_values[s as usize].abs()).fold(0.0, f64::max);
        let mut inertia = Inertia::default();
        for (j, dj) in self.pivots().into_iter().enumerate() {
            let dof = self.original_index(j);
            let kjj = k_values[pattern.diag_slot[dof] as usize].abs();
            let scale = if kjj > ZERO_PIVOT_RATIO * max_diag { kjj } else { max_diag };
            // A NaN pivot counts as zero: only a clearly larger |d| is not.
            if dj.abs().partial_cmp(&(ZERO_PIVOT_RATIO * scale)) != Some(std::cmp::Ordering::Greater) {
                inertia.zero_dofs.push(dof);
            } else if dj < 0.0 {
                inertia.negative += 1;
            }
        }
        inertia
    }

    /// Whether the last factorization succeeded.
    pub fn is_factored(&self) -> bool {
        self.factored
    }

    /// Solves K·x = rhs in place with the last factorization.
    pub fn solve_in_place(&mut self, rhs: &mut [f64]) {
        debug_assert!(self.factored);
        let ldlt = LdltRef::new(&self.symbolic, &self.l_values);
        let n = rhs.len();
        let mat = MatMut::from_column_major_slice_mut(rhs, n, 1);
        ldlt.solve_in_place_with_conj(Conj::No, mat, self.par, MemStack::new(&mut self.solve_mem));
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn dense_pattern(a: &[Vec<f64>]) -> (Pattern, Vec<f64>) {
        Pattern::from_dense_upper(a)
    }

    #[test]
    fn solves_and_counts_negative_pivots() {
        // Eigenvalues of this matrix: 3, 1 and −2 (diagonal in a rotated basis).
        let a = vec![vec![2.0, 1.0, 0.0], vec![1.0, 2.0, 0.0], vec![0.0, 0.0, -2.0]];
        let (p, v) = dense_pattern(&a);
        let mut f = Ldlt::new(&p, Par::Seq).unwrap();
        let inertia = f.factorize(&p, &v);
        assert_eq!(inertia.negative, 1);
        assert!(!inertia.is_singular());
        let mut x = vec![3.0, 3.0, -4.0];
        f.solve_in_place(&mut x);
        for (xi, ei) in x.iter().zip([1.0, 1.0, 2.0]) {
            assert!((xi - ei).abs() < 1e-14, "{x:?}");
        }
    }

    #[test]
    fn flags_a_zero_pivot() {
        let a = vec![vec![1.0, 1.0], vec![1.0, 1.0]];
        let (p, v) = dense_pattern(&a);
        let mut f = Ldlt::new(&p, Par::Seq).unwrap();
        let inertia = f.factorize(&p, &v);
        assert!(inertia.is_singular(), "{inertia:?}");
    }

    /// A random sparse symmetric matrix on a random node graph (1–3 DOFs a
    /// node, several components, isolated nodes), strictly diagonally
    /// dominant with diagonal signs drawn at random: its inertia is that of
    /// its diagonal (A(t) = D + t·(A − D) stays strictly dominant, so
    /// nonsingular, for t in [0, 1]: no eigenvalue crosses zero).
    #[allow(clippy::needless_range_loop)] // a[r][c] and a[c][r] together
    fn random_dominant(seed: u64) -> (Pattern, Vec<f64>, usize) {
        let mut state = seed.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
        let mut next = move || {
            state = state.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            (state >> 11) as f64 / (1u64 << 53) as f64
        };
        let n_nodes = 1 + (next() * 40.0) as usize;
        let mut first = vec![0usize];
        for _ in 0..n_nodes {
            first.push(first.last().unwrap() + 1 + (next() * 3.0) as usize);
        }
        let n = first[n_nodes];
        let mut a = vec![vec![0.0f64; n]; n];
        // Edges only inside blocks of nodes, so the graph has components.
        let block = 1 + (next() * 12.0) as usize;
        let p_edge = 0.1 + 0.4 * next();
        for i in 0..n_nodes {
            for j in i..n_nodes {
                if i != j && (i / block != j / block || next() > p_edge) {
                    continue;
                }
                for r in first[i]..first[i + 1] {
                    for c in first[j]..first[j + 1] {
                        if r != c {
                            let v = 2.0 * next() - 1.0;
                            a[r][c] = v;
                            a[c][r] = v;
                        }
                    }
                }
            }
        }
        let mut negative = 0;
        for r in 0..n {
            let off: f64 = a[r].iter().map(|v| v.abs()).sum();
            let sign = if next() < 0.3 { -1.0 } else { 1.0 };
            negative += (sign < 0.0) as usize;
            a[r][r] = sign * (off + 0.5 + next());
        }
        let (mut col_ptr, mut row_idx, mut vals) = (vec![0usize], Vec::new(), Vec::new());
        for c in 0..n {
            for (r, row) in a.iter().enumerate().take(c + 1) {
                if row[c] != 0.0 {
                    row_idx.push(r);
                    vals.push(row[c]);
                }
            }
            col_ptr.push(row_idx.len());
        }
        let p = Pattern::from_upper_csc(n, &col_ptr, &row_idx).unwrap();
        (p, vals, negative)
    }

    #[test]
    fn both_orderings_solve_and_count_on_random_graphs() {
        for seed in 0..200 {
            let (p, v, negative) = random_dominant(seed);
            for choice in [Ordering::Amd, Ordering::Dissection, Ordering::Smaller] {
                let mut f = Ldlt::with_ordering(&p, Par::Seq, choice).unwrap();
                let inertia = f.factorize(&p, &v);
                assert_eq!(inertia.negative, negative, "seed {seed}, {choice:?}");
                assert!(!inertia.is_singular(), "seed {seed}, {choice:?}");
                // b = A·1, so x must come back as ones.
                let mut x = vec![0.0; p.n];
                for c in 0..p.n {
                    let col = p.col_ptr[c] as usize..p.col_ptr[c + 1] as usize;
                    for (&r, &a) in p.row_idx[col.clone()].iter().zip(&v[col]) {
                        x[r as usize] += a;
                        if r as usize != c {
                            x[c] += a;
                        }
                    }
                }
                f.solve_in_place(&mut x);
                let err = x.iter().map(|xi| (xi - 1.0).abs()).fold(0.0, f64::max);
                assert!(err < 1e-10, "seed {seed}, {choice:?}: error {err:e}");
            }
        }
    }
}
