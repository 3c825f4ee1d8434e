//! The inverse tangent H ≈ K⁻¹ used by every corrector: the factorized K₀⁻¹
//! followed by stored secant pairs. No dense matrix is ever formed.
//!
//! With s = Δu (the step taken) and y = Δf_int (the change of internal force),
//! and H·y supplied by the caller (see below):
//!
//! - Broyden "good", inverse form by Sherman-Morrison:
//!   H⁺ = H + (s − H·y)·sᵀH / (sᵀH·y) = (I + c·sᵀ)·H with c = (s − H·y)/(sᵀH·y).
//!   Stored in this product form (Kelley 1995, §7.3; Matthies & Strang 1979,
//!   §4): H_k·x = (I + c_{k−1}s_{k−1}ᵀ)…(I + c_0 s_0ᵀ)·K₀⁻¹x, one solve and
//!   k dot products and axpys, O(k·n). The additive form H = K₀⁻¹ + Σ a_i b_iᵀ
//!   needs b = Hᵀs, i.e. a second solve with Hᵀ per update; the product form
//!   does not.
//! - Broyden "bad": H⁺ = H + (s − H·y)·yᵀ / (yᵀy), stored additively:
//!   H_k·x = K₀⁻¹x + Σ a_i (y_i·x), a_i = (s_i − H_i·y_i)/(y_iᵀy_i).
//! - BFGS (Matthies-Strang): H⁺ = (I − ρ s yᵀ) H (I − ρ y sᵀ) + ρ s sᵀ, ρ = 1/(yᵀs),
//!   applied by the two-loop recursion on top of K₀⁻¹; a pair with yᵀs ≤ 0
//!   (no positive curvature, e.g. past a limit point) is not stored.
//!
//! Both Broyden updates need H·y, which would cost a solve. The corrector gets
//! it for free (`solve::drive`): its next direction needs H·r_{k+1} anyway,
//! and with s = α·δu, δu = H·(−r_k + δλ·f_ref), y = r_{k+1} − r_k + α·δλ·f_ref:
//!
//! ```text
//! H·y = H·r_{k+1} + s/α + (α − 1)·δλ·H·f_ref
//! ```
//!
//! so the update is made one iteration late, after H·r_{k+1} is known, and
//! the new pair is folded into that product in O(n) ([`InverseTangent::extend`]).
//! A Broyden iteration thus costs what a BFGS one does: one solve per right
//! hand side and O(k·n) vector work.
//!
//! ## Reference
//! C. G. Broyden, "A class of methods for solving nonlinear simultaneous
//! equations", Math. Comp. 19 (1965). H. Matthies and G. Strang, "The solution
//! of nonlinear finite element equations", Int. J. Numer. Meth. Eng. 14 (1979).
//! C. T. Kelley, *Iterative Methods for Linear and Nonlinear Equations*, SIAM
//! (1995), §7.3 (Broyden's method stored as a product of rank-one factors;
//! section from memory).
//! J. Nocedal and S. J. Wright, *Numerical Optimization* (2006), §7.2 (two-loop
//! recursion).

use crate::linalg::vector::dot;
use crate::assembly::Pattern;
use crate::linalg::{Inertia, Ldlt};
use crate::model::Method;


fn axpy(c: f64, x: &[f64], y: &mut [f64]) {
    for (yi, xi) in y.iter_mut().zip(x) {
        *yi += c * xi;
    }
}

/// A stored update pair: (c, s) for Broyden good, (a, y) for Broyden bad,
/// (s, y) for BFGS.
#[derive(Clone, Debug)]
struct Pair {
    a: Vec<f64>,
    b: Vec<f64>,
    rho: f64,
}

pub struct InverseTangent {
    pub method: Method,
    pub ldlt: Ldlt,
    /// Pair storage, reused after every refactorization: only `pairs[..used]`
    /// is part of H. Vectors are allocated once, the first time a slot is
    /// needed, so iterations do not allocate.
    pairs: Vec<Pair>,
    used: usize,
    /// Per-pair coefficients of one application (b_i·x, or α_i of the
    /// two-loop recursion), reused.
    coeffs: Vec<f64>,
    /// Scratch for [`Self::update`] (H·y when the caller has none).
    scratch: Vec<f64>,
    /// Pairs stored before the memory bound forces a refactorization.
    pub max_pairs: usize,
    /// Inertia of the last factorization.
    pub inertia: Inertia,
}

impl InverseTangent {
    pub fn new(method: Method, ldlt: Ldlt, max_pairs: usize) -> Self {
        InverseTangent {
            method,
            ldlt,
            pairs: Vec::new(),
            used: 0,
            coeffs: Vec::new(),
            scratch: Vec::new(),
            max_pairs,
            inertia: Inertia::default(),
        }
    }

    /// Refactor K₀ := K and forget the stored pairs.
    pub fn refactor(&mut self, pattern: &Pattern, k_values: &[f64]) -> &Inertia {
        self.used = 0;
        self.inertia = self.ldlt.factorize(pattern, k_values);
        &self.inertia
    }

    /// Forget the stored pairs and keep K₀ (a memory restart).
    pub fn restart(&mut self) {
        self.used = 0;
    }

    pub fn n_pairs(&self) -> usize {
        self.used
    }

    pub fn is_full(&self) -> bool {
        self.used >= self.max_pairs
    }

    /// Whether this method stores updates at all.
    pub fn updates(&self) -> bool {
        matches!(self.method, Method::Broyden | Method::BroydenBad | Method::Bfgs)
    }

    /// Whether a new pair can be folded into a product H·x already formed
    /// ([`Self::extend`]): the Broyden forms, whose updates are made one
    /// iteration late with the H·y that comes free.
    pub fn extends(&self) -> bool {
        matches!(self.method, Method::Broyden | Method::BroydenBad)
    }

    /// x := H·x.
    pub fn apply(&mut self, x: &mut [f64]) {
        let pairs = &self.pairs[..self.used];
        match self.method {
            Method::Bfgs => {
                // Two-loop recursion; `a` holds s, `b` holds y.
                let alpha = &mut self.coeffs;
                alpha.clear();
                alpha.resize(pairs.len(), 0.0);
                for (p, ai) in pairs.iter().zip(alpha.iter_mut()).rev() {
                    *ai = p.rho * dot(&p.a, x);
                    axpy(-*ai, &p.b, x);
                }
                self.ldlt.solve_in_place(x);
                for (p, &ai) in pairs.iter().zip(alpha.iter()) {
                    let beta = p.rho * dot(&p.b, x);
                    axpy(ai - beta, &p.a, x);
                }
            }
            Method::Broyden => {
                // Product form: the factors (I + c_i s_iᵀ) in storage order.
                self.ldlt.solve_in_place(x);
                for p in pairs {
                    let c = dot(&p.b, x);
                    axpy(c, &p.a, x);
                }
            }
            _ => {
                // H = K₀⁻¹ + Σ a_i y_iᵀ: the coefficients y_i·x use x as given.
                self.coeffs.clear();
                self.coeffs.extend(pairs.iter().map(|p| dot(&p.b, x)));
                self.ldlt.solve_in_place(x);
                for (p, &c) in pairs.iter().zip(&self.coeffs) {
                    axpy(c, &p.a, x);
                }
            }
        }
    }

    /// With `hx` = H·`x` for H before the last stored pair, makes `hx` the
    /// product with the current H, in O(n). Only for [`Self::extends`] methods.
    pub fn extend(&self, x: &[f64], hx: &mut [f64]) {
        debug_assert!(self.extends() && self.used > 0);
        let p = &self.pairs[self.used - 1];
        let c = match self.method {
            Method::Broyden => dot(&p.b, hx),
            _ => dot(&p.b, x),
        };
        axpy(c, &p.a, hx);
    }

    /// The next free pair slot, allocated the first time it is reached.
    fn next_slot(&mut self, n: usize) -> usize {
        if self.used == self.pairs.len() {
            self.pairs.push(Pair { a: vec![0.0; n], b: vec![0.0; n], rho: 0.0 });
        }
        self.used
    }

    /// Stores the secant pair (s, y), forming H·y itself (one solve; the
    /// corrector uses [`Self::update_with`] and its free H·y instead).
    pub fn update(&mut self, s: &[f64], y: &[f64]) -> bool {
        let mut hy = std::mem::take(&mut self.scratch);
        hy.clear();
        hy.extend_from_slice(y);
        if self.extends() {
            self.apply(&mut hy);
        }
        let stored = self.update_with(s, y, &hy);
        self.scratch = hy;
        stored
    }

    /// Stores the secant pair (s, y) given `hy` = H·y for the current H (BFGS
    /// ignores it). Returns false when the pair was not usable (no
    /// curvature, or a vanishing denominator); H is then unchanged.
    pub fn update_with(&mut self, s: &[f64], y: &[f64], hy: &[f64]) -> bool {
        let ss = dot(s, s).sqrt();
        match self.method {
            Method::Newton | Method::ModifiedNewton => false,
            Method::Bfgs => {
                let ys = dot(y, s);
                let yy = dot(y, y).sqrt();
                if ys.is_nan() || ys <= 1e-12 * ss * yy {
                    return false;
                }
                let i = self.next_slot(s.len());
                let p = &mut self.pairs[i];
                p.a.copy_from_slice(s);
                p.b.copy_from_slice(y);
                p.rho = 1.0 / ys;
                self.used += 1;
                true
            }
            Method::Broyden | Method::BroydenBad => {
                let (denom, scale) = if self.method == Method::Broyden {
                    (dot(s, hy), ss * dot(hy, hy).sqrt())
                } else {
                    let yy = dot(y, y);
                    (yy, yy)
                };
                if !(denom.abs() > 1e-12 * scale && denom.is_finite()) {
                    return false;
                }
                let good = self.method == Method::Broyden;
                let i = self.next_slot(s.len());
                let p = &mut self.pairs[i];
                for ((ai, si), hyi) in p.a.iter_mut().zip(s).zip(hy) {
                    *ai = (si - hyi) / denom;
                }
                p.b.copy_from_slice(if good { s } else { y });
                p.rho = 0.0;
                self.used += 1;
                true
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Reused pair slots carry nothing over: after a refactorization the same
    /// updates give bit-identical products, and for every method H·y = s
    /// holds for the last stored pair (the secant condition).
    #[test]
    fn reused_pair_slots_forget_the_previous_cycle() {
        let k = vec![vec![4.0, 1.0, 0.0], vec![1.0, 3.0, 0.5], vec![0.0, 0.5, 2.0]];
        let (p, v) = Pattern::from_dense_upper(&k);
        let pairs = [([0.3, -0.1, 0.2], [1.5, 0.1, 0.6]), ([0.05, 0.2, -0.1], [0.4, 0.7, -0.05])];
        for method in [Method::Broyden, Method::BroydenBad, Method::Bfgs] {
            let mut h = InverseTangent::new(method, Ldlt::new(&p, faer::Par::Seq).unwrap(), 4);
            let mut cycle = || {
                h.refactor(&p, &v);
                for (s, y) in &pairs {
                    assert!(h.update(s, y), "{method:?}");
                }
                let (s, y) = pairs[1];
                let mut hy = y.to_vec();
                h.apply(&mut hy);
                for (a, b) in hy.iter().zip(s) {
                    assert!((a - b).abs() < 1e-12, "{method:?}: H·y = {hy:?}, s = {s:?}");
                }
                let mut x = vec![1.0, -2.0, 0.5];
                h.apply(&mut x);
                (h.n_pairs(), x.iter().map(|v| v.to_bits()).collect::<Vec<_>>())
            };
            let first = cycle();
            assert_eq!(first.0, 2);
            assert_eq!(first, cycle(), "{method:?}");
        }
    }

    /// The stored forms against the dense updates they stand for (Broyden
    /// 1965 good and bad inverse updates, written out as 3×3 matrices), and
    /// `extend` against a fresh `apply`: H₀ = K⁻¹ of a 3×3 SPD K, two pairs.
    #[test]
    fn stored_broyden_forms_match_the_dense_updates() {
        let k = vec![vec![4.0, 1.0, 0.0], vec![1.0, 3.0, 0.5], vec![0.0, 0.5, 2.0]];
        let (p, v) = Pattern::from_dense_upper(&k);
        let pairs = [([0.3, -0.1, 0.2], [1.5, 0.1, 0.6]), ([0.05, 0.2, -0.1], [0.4, 0.7, -0.05])];
        let mul = |h: &[[f64; 3]; 3], x: &[f64]| -> [f64; 3] { [0, 1, 2].map(|i| (0..3).map(|j| h[i][j] * x[j]).sum()) };
        for method in [Method::Broyden, Method::BroydenBad] {
            let mut it = InverseTangent::new(method, Ldlt::new(&p, faer::Par::Seq).unwrap(), 4);
            it.refactor(&p, &v);
            // Dense H₀ = K⁻¹, column by column.
            let mut h = [[0.0; 3]; 3];
            for j in 0..3 {
                let mut e = vec![0.0; 3];
                e[j] = 1.0;
                it.apply(&mut e);
                for i in 0..3 {
                    h[i][j] = e[i];
                }
            }
            for (s, y) in &pairs {
                let hy = mul(&h, y);
                // Broyden good: H += (s − Hy) sᵀH / (sᵀHy); bad: H += (s − Hy) yᵀ / (yᵀy).
                let row: [f64; 3] = if method == Method::Broyden {
                    let sh = [0, 1, 2].map(|j| (0..3).map(|i| s[i] * h[i][j]).sum::<f64>());
                    let d = dot(s, &hy);
                    sh.map(|x| x / d)
                } else {
                    let d = dot(y, y);
                    y.map(|x| x / d)
                };
                let x_in = [0.7, -0.4, 1.1];
                let mut before = x_in.to_vec();
                it.apply(&mut before);
                assert!(it.update(s, y), "{method:?}");
                for i in 0..3 {
                    for j in 0..3 {
                        h[i][j] += (s[i] - hy[i]) * row[j];
                    }
                }
                let mut x = x_in.to_vec();
                it.apply(&mut x);
                let dense = mul(&h, &x_in);
                it.extend(&x_in, &mut before);
                for i in 0..3 {
                    assert!((x[i] - dense[i]).abs() < 1e-12, "{method:?}: stored {x:?}, dense {dense:?}");
                    assert!((before[i] - x[i]).abs() < 1e-12, "{method:?}: extended {before:?}, applied {x:?}");
                }
            }
        }
    }
}
