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
    pairs: Vec<Pair>,
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
            max_pairs,
            inertia: Inertia::default(),
        }
    }

    /// Refactor K₀ := K and forget the stored pairs.
    pub fn refactor(&mut self, pattern: &Pattern, k_values: &[f64]) -> &Inertia {
        self.pairs.clear();
        self.inertia = self.ldlt.factorize(pattern, k_values);
        &self.inertia
    }

    pub fn n_pairs(&self) -> usize {
        self.pairs.len()
    }

    pub fn is_full(&self) -> bool {
        self.pairs.len() >= self.max_pairs
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
                let coeffs: Vec<f64> = self.pairs.iter().map(|p| dot(&p.b, x)).collect();
                self.ldlt.solve_in_place(x);
                for (p, c) in self.pairs.iter().zip(coeffs) {
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
        let coeffs: Vec<f64> = self.pairs.iter().map(|p| dot(&p.a, x)).collect();
        self.ldlt.solve_in_place(x);
        for (p, c) in self.pairs.iter().zip(coeffs) {
            for (xi, bi) in x.iter_mut().zip(&p.b) {
                *xi += c * bi;
            }
        }
    }

    fn apply_bfgs(&mut self, x: &mut [f64]) {
        // Two-loop recursion; `a` holds s, `b` holds y.
        let n = self.pairs.len();
        let mut alpha = vec![0.0; n];
        for i in (0..n).rev() {
            let p = &self.pairs[i];
            alpha[i] = p.rho * dot(&p.a, x);
            for (xi, yi) in x.iter_mut().zip(&p.b) {
                *xi -= alpha[i] * yi;
            }
        }
        self.ldlt.solve_in_place(x);
        for (i, p) in self.pairs.iter().enumerate() {
            let beta = p.rho * dot(&p.b, x);
            for (xi, si) in x.iter_mut().zip(&p.a) {
                *xi += (alpha[i] - beta) * si;
            }
        }
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
                self.pairs.push(Pair { a: s.to_vec(), b: y.to_vec(), rho: 1.0 / ys });
                true
            }
            Method::Broyden | Method::BroydenBad => {
                let mut hy = y.to_vec();
                self.apply(&mut hy);
                let (b, denom) = if self.method == Method::Broyden {
                    let mut hts = s.to_vec();
                    self.apply_transpose(&mut hts);
                    let d = dot(&hts, y);
                    (hts, d)
                } else {
                    (y.to_vec(), dot(y, y))
                };
                let scale = dot(s, s).sqrt() * dot(&b, &b).sqrt();
                if !(denom.abs() > 1e-12 * scale) || !denom.is_finite() {
                    return false;
                }
                let a: Vec<f64> = s.iter().zip(&hy).map(|(si, hi)| (si - hi) / denom).collect();
                self.pairs.push(Pair { a, b, rho: 0.0 });
                true
            }
        }
    }
}
