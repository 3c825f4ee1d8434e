//! The eigenvectors of the tangent nearest zero at a critical state, from a
//! factorization that keeps the signs of its pivots.
//!
//! Subspace (block inverse) iteration with Rayleigh-Ritz projection (Bathe &
//! Wilson, *Numerical Methods in Finite Element Analysis*, 1976, §10.3, from
//! memory): a block X of p = m + 3 vectors is repeatedly replaced by
//! (K − σI)⁻¹X, orthonormalised, and rotated to the eigenvectors of the small
//! projected matrix XᵀKX. With the true LDLᵀ of K − σI (no pivot altered),
//! directions whose eigenvalue is already negative are not amplified like the
//! null direction: the iteration converges to the eigenvalues of K nearest
//! σ, whatever their sign, at the rate |μ_m − σ| / |μ_{p+1} − σ|. A mode is
//! accepted only when its residual ‖Kφ − μφ‖ is below [`MODE_RESIDUAL`]
//! times the largest diagonal entry of K.

use crate::linalg::vector::dot;
use crate::assembly::System;
use crate::linalg::Ldlt;
use nalgebra::{DMatrix, SymmetricEigen};

/// A Ritz pair (μ, φ) counts as converged when ‖Kφ − μφ‖ ≤ this times the
/// largest |K_ii| (φ unit). Round-off in K·φ is of order 1e-15 of that scale.
pub const MODE_RESIDUAL: f64 = 1e-8;

/// Most subspace iterations before giving up (convergence is reported).
pub const MAX_MODE_ITERATIONS: usize = 60;

/// The m eigenpairs of K nearest zero.
#[derive(Clone, Debug, Default)]
pub struct LowModes {
    /// Unit Euclidean norm, mutually orthogonal, free DOFs; nearest zero first.
    pub modes: Vec<Vec<f64>>,
    /// Ritz values μ of K, N/m.
    pub eigenvalues: Vec<f64>,
    /// ‖Kφ − μφ‖ / max|K_ii| of each mode.
    pub residuals: Vec<f64>,
    /// Every residual at most [`MODE_RESIDUAL`].
    pub converged: bool,
    /// max |K_ii|, N/m.
    pub scale: f64,
}


fn norm(a: &[f64]) -> f64 {
    dot(a, a).sqrt()
}

/// Deterministic start vectors with no symmetry of any structure (a linear
/// congruential sequence), so no mode is missed for being orthogonal to them.
fn start_block(n: usize, p: usize) -> Vec<Vec<f64>> {
    let mut seed: u64 = 0x2545_f491_4f6c_dd1d;
    (0..p)
        .map(|_| {
            (0..n)
                .map(|_| {
                    seed = seed.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
                    ((seed >> 11) as f64 / (1u64 << 53) as f64) - 0.5
                })
                .collect()
        })
        .collect()
}

/// Modified Gram-Schmidt, twice (Giraud et al. 2005: "twice is enough").
/// A column that vanishes is replaced by a fresh vector made orthogonal to
/// the rest; false if any entry is not finite.
fn orthonormalise(x: &mut [Vec<f64>]) -> bool {
    for j in 0..x.len() {
        for _ in 0..2 {
            for i in 0..j {
                let (done, rest) = x.split_at_mut(j);
                let c = dot(&done[i], &rest[0]);
                rest[0].iter_mut().zip(&done[i]).for_each(|(v, q)| *v -= c * q);
            }
        }
        let nrm = norm(&x[j]);
        if !nrm.is_finite() {
            return false;
        }
        if nrm <= 1e-300 {
            return false;
        }
        x[j].iter_mut().for_each(|v| *v /= nrm);
    }
    true
}

/// The `m` eigenpairs of the tangent `k` (values on the system's pattern)
/// nearest zero, by shift-invert subspace iteration with `ldlt`. The factor
/// in `ldlt` is overwritten (the caller refactors what it needs next).
pub fn lowest_modes(system: &System, ldlt: &mut Ldlt, k: &[f64], m: usize) -> LowModes {
    let n = system.n_free();
    let m = m.clamp(1, n.max(1));
    let scale = system.pattern.diag_slot.iter().map(|&s| k[s as usize].abs()).fold(0.0, f64::max).max(f64::MIN_POSITIVE);
    if n == 0 {
        return LowModes { scale, ..Default::default() };
    }
    // Unshifted first: a nearly singular but factorable K is the best
    // operator (its null direction is amplified most). An exactly zero pivot
    // stops faer; then shift by a small σ, far from every other eigenvalue
    // of a well-scaled structure.
    ldlt.factorize(&system.pattern, k);
    // A tangent that is all zero (a lone slack cable) has no scale of its
    // own: any shift then separates nothing, 1 N/m is as good as another.
    let unit = if scale > 1e-300 { scale } else { 1.0 };
    for sigma in [1e-8 * unit, -1e-8 * unit, 1e-4 * unit] {
        if ldlt.is_factored() {
            break;
        }
        ldlt.factorize_shifted(&system.pattern, k, sigma);
    }
    if !ldlt.is_factored() {
        return LowModes { scale, ..Default::default() };
    }
    let p = (m + 3).min(n);
    let mut x = start_block(n, p);
    let mut kx = vec![vec![0.0; n]; p];
    let mut out = LowModes { scale, ..Default::default() };
    if !orthonormalise(&mut x) {
        return out;
    }
    for _ in 0..MAX_MODE_ITERATIONS {
        for col in x.iter_mut() {
            ldlt.solve_in_place(col);
        }
        if !orthonormalise(&mut x) {
            return out;
        }
        for (col, kcol) in x.iter().zip(kx.iter_mut()) {
            system.tangent_times(k, col, kcol);
        }
        // Rayleigh-Ritz on span(X).
        let a = DMatrix::from_fn(p, p, |i, j| 0.5 * (dot(&x[i], &kx[j]) + dot(&x[j], &kx[i])));
        let eig = SymmetricEigen::new(a);
        let mut order: Vec<usize> = (0..p).collect();
        order.sort_by(|&i, &j| eig.eigenvalues[i].abs().total_cmp(&eig.eigenvalues[j].abs()));
        let rotate = |cols: &[Vec<f64>]| -> Vec<Vec<f64>> {
            order
                .iter()
                .map(|&c| {
                    let mut v = vec![0.0; n];
                    for (i, col) in cols.iter().enumerate() {
                        let w = eig.eigenvectors[(i, c)];
                        v.iter_mut().zip(col).for_each(|(vi, ci)| *vi += w * ci);
                    }
                    v
                })
                .collect()
        };
        x = rotate(&x);
        kx = rotate(&kx);
        let mu: Vec<f64> = order.iter().map(|&c| eig.eigenvalues[c]).collect();
        let residuals: Vec<f64> = (0..m)
            .map(|j| {
                let r: f64 = kx[j].iter().zip(&x[j]).map(|(kv, v)| (kv - mu[j] * v).powi(2)).sum();
                r.sqrt() / scale
            })
            .collect();
        let converged = residuals.iter().all(|r| *r <= MODE_RESIDUAL);
        out = LowModes { modes: x[..m].to_vec(), eigenvalues: mu[..m].to_vec(), residuals, converged, scale };
        if converged {
            break;
        }
    }
    out
}

/// Splits an orthonormal basis Φ of the null space by the reference load f:
/// returns the alignment ‖Φᵀf‖/‖f‖ (1: f lies in the null space; 0: the null
/// space is orthogonal to f) and the basis rotated so that, when the
/// alignment is not zero, the first vector is f's direction within the null
/// space (with φ·f > 0) and the others are orthogonal to f.
pub fn split_by_load(modes: &[Vec<f64>], f: &[f64]) -> (f64, Vec<Vec<f64>>) {
    let fn_ = norm(f);
    if modes.is_empty() || fn_ == 0.0 {
        return (0.0, modes.to_vec());
    }
    let c: Vec<f64> = modes.iter().map(|phi| dot(phi, f) / fn_).collect();
    let a = norm(&c);
    let m = modes.len();
    // An orthonormal basis of coefficient space whose first vector is c/a.
    let mut q: Vec<Vec<f64>> = Vec::with_capacity(m);
    if a > 0.0 {
        q.push(c.iter().map(|v| v / a).collect());
    }
    for e in 0..m {
        if q.len() == m {
            break;
        }
        let mut v = vec![0.0; m];
        v[e] = 1.0;
        for _ in 0..2 {
            for qi in &q {
                let d = dot(qi, &v);
                v.iter_mut().zip(qi).for_each(|(x, y)| *x -= d * y);
            }
        }
        let nv = norm(&v);
        if nv > 1e-8 {
            v.iter_mut().for_each(|x| *x /= nv);
            q.push(v);
        }
    }
    let n = modes[0].len();
    let mut rotated: Vec<Vec<f64>> = q
        .iter()
        .map(|w| {
            let mut v = vec![0.0; n];
            for (wi, phi) in w.iter().zip(modes) {
                v.iter_mut().zip(phi).for_each(|(x, p)| *x += wi * p);
            }
            let nv = norm(&v);
            v.iter_mut().for_each(|x| *x /= nv);
            v
        })
        .collect();
    // Signs: the load-carrying mode moves with the load; the others have
    // their largest component positive (a convention, so output is stable).
    for (j, v) in rotated.iter_mut().enumerate() {
        let flip = if j == 0 && a > 0.0 {
            dot(v, f) < 0.0
        } else {
            let big = v.iter().copied().fold(0.0f64, |b, x| if x.abs() > b.abs() { x } else { b });
            big < 0.0
        };
        if flip {
            v.iter_mut().for_each(|x| *x = -*x);
        }
    }
    (a, rotated)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn split_puts_the_load_in_the_first_mode() {
        let s = 0.5f64.sqrt();
        let modes = vec![vec![s, s, 0.0], vec![s, -s, 0.0]];
        let (a, r) = split_by_load(&modes, &[1.0, 0.0, 0.0]);
        assert!((a - 1.0).abs() < 1e-12);
        assert!((r[0][0] - 1.0).abs() < 1e-12, "{r:?}");
        assert!(r[1][0].abs() < 1e-12 && (r[1][1].abs() - 1.0).abs() < 1e-12, "{r:?}");
        let (a, _) = split_by_load(&modes, &[0.0, 0.0, 2.0]);
        assert!(a < 1e-15);
    }
}
