//! The inverse tangent H ≈ K⁻¹ used by every corrector: the factorized K₀⁻¹
//! followed by stored secant pairs. No dense matrix is ever formed.
//!
//! With s = Δu (the step taken) and y = Δf_int (the change of internal force):
//!
//! - Broyden "good", inverse form by Sherman-Morrison:
//!   H⁺ = H + (s − H·y)·sᵀH / (sᵀH·y), stored as H⁺x = Hx + a·(b·x) with
//!   a = (s − H·y)/(sᵀH·y), b = Hᵀs.
//! - Broyden "bad": H⁺ = H + (s − H·y)·yᵀ / (yᵀy), a = (s − H·y)/(yᵀy), b = y.
//! - BFGS (Matthies-Strang): H⁺ = (I − ρ s yᵀ) H (I − ρ y sᵀ) + ρ s sᵀ, ρ = 1/(yᵀs),
//!   applied by the two-loop recursion on top of K₀⁻¹; a pair with yᵀs ≤ 0
//!   (no positive curvature, e.g. past a limit point) is not stored.
//!
//! ## Reference
//! C. G. Broyden, "A class of methods for solving nonlinear simultaneous
//! equations", Math. Comp. 19 (1965). H. Matthies and G. Strang, "The solution
//! of nonlinear finite element equations", Int. J. Numer. Meth. Eng. 14 (1979).
//! J. Nocedal and S. J. Wright, *Numerical Optimization* (2006), §7.2 (two-loop
//! recursion).

use crate::assembly::Pattern;
use crate::linalg::{Inertia, Ldlt};
use crate::model::Method;

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// A stored update pair.
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

    /// x := H·x.
    pub fn apply(&mut self, x: &mut [f64]) {
        match self.method {
            Method::Bfgs => self.apply_bfgs(x),
            _ => {
                // H = K₀⁻¹ + Σ a_i b_iᵀ: the coefficients b_i·x use x as given.
                let pairs = &self.pairs[..self.used];
                self.coeffs.clear();
                self.coeffs.extend(pairs.iter().map(|p| dot(&p.b, x)));
                self.ldlt.solve_in_place(x);
                for (p, &c) in pairs.iter().zip(&self.coeffs) {
                    for (xi, ai) in x.iter_mut().zip(&p.a) {
                        *xi += c * ai;
                    }
                }
            }
        }
    }

    /// x := Hᵀ·x for the Broyden forms.
    fn apply_transpose(&mut self, x: &mut [f64]) {
        // Hᵀ = K₀⁻¹ + Σ b_i a_iᵀ (K₀ is symmetric).
        let pairs = &self.pairs[..self.used];
        self.coeffs.clear();
        self.coeffs.extend(pairs.iter().map(|p| dot(&p.a, x)));
        self.ldlt.solve_in_place(x);
        for (p, &c) in pairs.iter().zip(&self.coeffs) {
            for (xi, bi) in x.iter_mut().zip(&p.b) {
                *xi += c * bi;
            }
        }
    }

    fn apply_bfgs(&mut self, x: &mut [f64]) {
        // Two-loop recursion; `a` holds s, `b` holds y.
        let pairs = &self.pairs[..self.used];
        let alpha = &mut self.coeffs;
        alpha.clear();
        alpha.resize(pairs.len(), 0.0);
        for (p, ai) in pairs.iter().zip(alpha.iter_mut()).rev() {
            *ai = p.rho * dot(&p.a, x);
            for (xi, yi) in x.iter_mut().zip(&p.b) {
                *xi -= *ai * yi;
            }
        }
        self.ldlt.solve_in_place(x);
        for (p, &ai) in pairs.iter().zip(alpha.iter()) {
            let beta = p.rho * dot(&p.b, x);
            for (xi, si) in x.iter_mut().zip(&p.a) {
                *xi += (ai - beta) * si;
            }
        }
    }

    /// The next free pair slot, allocated the first time it is reached.
    fn next_slot(&mut self, n: usize) -> usize {
        if self.used == self.pairs.len() {
            self.pairs.push(Pair { a: vec![0.0; n], b: vec![0.0; n], rho: 0.0 });
        }
        self.used
    }

    /// Stores the secant pair (s, y). Returns false when the pair was not
    /// usable (no curvature, or a vanishing denominator).
    pub fn update(&mut self, s: &[f64], y: &[f64]) -> bool {
        match self.method {
            Method::Newton | Method::ModifiedNewton => false,
            Method::Bfgs => {
                let ys = dot(y, s);
                let ss = dot(s, s).sqrt();
                let yy = dot(y, y).sqrt();
                if !(ys > 1e-12 * ss * yy) {
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
                // The slot's vectors are taken out while H (pairs[..used],
                // which excludes this slot) is applied, then put back.
                let i = self.next_slot(s.len());
                let mut a = std::mem::take(&mut self.pairs[i].a);
                let mut b = std::mem::take(&mut self.pairs[i].b);
                a.copy_from_slice(y);
                self.apply(&mut a); // a = H·y
                let denom = if self.method == Method::Broyden {
                    b.copy_from_slice(s);
                    self.apply_transpose(&mut b); // b = Hᵀ·s
                    dot(&b, y)
                } else {
                    b.copy_from_slice(y);
                    dot(y, y)
                };
                let scale = dot(s, s).sqrt() * dot(&b, &b).sqrt();
                let usable = denom.abs() > 1e-12 * scale && denom.is_finite();
                if usable {
                    for (ai, si) in a.iter_mut().zip(s) {
                        *ai = (si - *ai) / denom;
                    }
                }
                let p = &mut self.pairs[i];
                p.a = a;
                p.b = b;
                p.rho = 0.0;
                if usable {
                    self.used += 1;
                }
                usable
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
}
