//! Two-node axial bar and tension-only cable, for two strain measures.
//!
//! Green-Lagrange (total Lagrangian, reference = unstressed state):
//!   E = (l² − Lr²)/(2·Lr²),  S·A = EA·E,
//!   f_j = (S·A/Lr)·x = −f_i,
//!   K_block = (EA/Lr³)·x·xᵀ + (S·A/Lr)·I.
//! The true axial force is N = S·A·l/Lr.
//!
//! Engineering strain, corotational:
//!   ε = (l − Lr)/Lr,  N = EA·ε,  n = x/l,
//!   f_j = N·n = −f_i,
//!   K_block = (EA/Lr)·n·nᵀ + (N/l)·(I − n·nᵀ).
//!
//! The element tangent is [[K, −K], [−K, K]] in the 6 end displacements, so a
//! kernel returns only the 3×3 block K.
//!
//! Both measures agree to first order in strain; they differ at large strain
//! (Green-Lagrange stiffens in tension and softens in compression).
//! Reference: M. A. Crisfield, *Non-linear Finite Element Analysis of Solids
//! and Structures*, vol. 1 (1991), ch. 3 (from memory).

use crate::model::StrainMeasure;

/// The data of one member that the kernel needs, precomputed once.
#[derive(Clone, Copy, Debug)]
pub struct Bar {
    /// Initial chord, node j − node i, m.
    pub d: [f64; 3],
    /// Unstressed length, m.
    pub rest: f64,
    /// L² − Lr², computed without cancellation where the rest length was derived.
    pub c0: f64,
    /// Axial rigidity, N.
    pub ea: f64,
    /// Tension only.
    pub cable: bool,
}

/// Internal force and tangent of one member in its current configuration.
#[derive(Clone, Copy, Debug, Default)]
pub struct AxialState {
    /// True axial force, N, tension positive.
    pub force: f64,
    /// Strain of the chosen measure.
    pub strain: f64,
    /// Current length, m.
    pub length: f64,
    /// A cable that carries no tension.
    pub slack: bool,
    /// Internal force on node j (node i gets −f).
    pub f: [f64; 3],
    /// Tangent block K (symmetric, row major).
    pub k: [[f64; 3]; 3],
}

impl AxialState {
    /// A member that carries no tension (a slack cable or catenary): zero
    /// force and a zero tangent block. Its matrix slots stay in the pattern
    /// as explicit zeros.
    pub fn slack(length: f64, strain: f64) -> AxialState {
        AxialState { length, strain, slack: true, ..AxialState::default() }
    }
}

fn dot(a: &[f64; 3], b: &[f64; 3]) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

impl Bar {
    /// A member unstressed at the rest length `rest`, with initial chord `d`.
    pub fn with_rest_length(d: [f64; 3], rest: f64, ea: f64, cable: bool) -> Bar {
        let l = dot(&d, &d).sqrt();
        Bar { d, rest, c0: (l - rest) * (l + rest), ea, cable }
    }

    /// Initial length, m.
    pub fn initial_length(&self) -> f64 {
        dot(&self.d, &self.d).sqrt()
    }

    /// The rest length at which the member carries axial force `n` in its
    /// initial geometry, for the given strain measure.
    ///
    /// Engineering: N = EA (L − Lr)/Lr gives Lr = L·EA/(EA + N) in closed form.
    /// Green-Lagrange: N = EA (L² − Lr²) L / (2 Lr³) is solved for Lr by Newton
    /// iteration on g(s) = EA (L² − s²) L − 2 N s³, which is monotone in s.
    /// Returns None when no positive rest length gives that force (compression
    /// beyond what the strain measure can produce).
    pub fn rest_length_for_force(l: f64, ea: f64, n: f64, strain: StrainMeasure) -> Option<f64> {
        match strain {
            StrainMeasure::Engineering => {
                if ea + n <= 0.0 {
                    return None;
                }
                Some(l * ea / (ea + n))
            }
            StrainMeasure::Green => {
                // Start from the engineering answer; for |N| ≪ EA the two agree.
                let mut s = if ea + n > 0.0 { l * ea / (ea + n) } else { 2.0 * l };
                for _ in 0..100 {
                    let g = ea * (l * l - s * s) * l - 2.0 * n * s * s * s;
                    let dg = -2.0 * ea * s * l - 6.0 * n * s * s;
                    if dg == 0.0 || !dg.is_finite() {
                        return None;
                    }
                    let step = g / dg;
                    s -= step;
                    if s <= 0.0 {
                        s = 1e-6 * l;
                    }
                    if step.abs() <= 1e-15 * l {
                        break;
                    }
                }
                let check = ea * (l * l - s * s) * l / (2.0 * s * s * s);
                (s > 0.0 && s.is_finite() && (check - n).abs() <= 1e-9 * (n.abs() + ea))
                    .then_some(s)
            }
        }
    }

    /// Internal force and tangent for the end displacement difference `du`
    /// (displacement of node j minus that of node i).
    #[inline]
    pub fn state(&self, du: &[f64; 3], strain: StrainMeasure) -> AxialState {
        let x = [self.d[0] + du[0], self.d[1] + du[1], self.d[2] + du[2]];
        // l² − Lr², without cancellation (see the module docs).
        let stretch2 = self.c0 + 2.0 * dot(&self.d, du) + dot(du, du);
        let l2 = dot(&x, &x);
        let l = l2.sqrt();
        let lr = self.rest;
        if self.cable && stretch2 <= 0.0 {
            return AxialState::slack(
                l,
                match strain {
                    StrainMeasure::Green => stretch2 / (2.0 * lr * lr),
                    StrainMeasure::Engineering => stretch2 / ((l + lr) * lr),
                },
            );
        }
        let mut st = AxialState { length: l, ..AxialState::default() };
        match strain {
            StrainMeasure::Green => {
                let e = stretch2 / (2.0 * lr * lr);
                let sa = self.ea * e;
                let a = sa / lr;
                let b = self.ea / (lr * lr * lr);
                st.strain = e;
                st.force = sa * l / lr;
                for r in 0..3 {
                    st.f[r] = a * x[r];
                    for c in 0..3 {
                        st.k[r][c] = b * x[r] * x[c] + if r == c { a } else { 0.0 };
                    }
                }
            }
            StrainMeasure::Engineering => {
                if l == 0.0 {
                    // Both ends at one point: the direction is undefined. Give
                    // the force of total shortening with no stiffness; the
                    // solver sees a singular tangent and says so.
                    st.strain = -1.0;
                    st.force = -self.ea;
                    return st;
                }
                let eps = stretch2 / ((l + lr) * lr);
                let n = self.ea * eps;
                let inv_l = 1.0 / l;
                let nv = [x[0] * inv_l, x[1] * inv_l, x[2] * inv_l];
                let km = self.ea / lr;
                let kg = n * inv_l;
                st.strain = eps;
                st.force = n;
                for r in 0..3 {
                    st.f[r] = n * nv[r];
                    for c in 0..3 {
                        let nn = nv[r] * nv[c];
                        st.k[r][c] = km * nn + kg * (if r == c { 1.0 } else { 0.0 } - nn);
                    }
                }
            }
        }
        st
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const MEASURES: [StrainMeasure; 2] = [StrainMeasure::Green, StrainMeasure::Engineering];

    /// A small deterministic generator, so the tests need no extra crate.
    struct Lcg(u64);
    impl Lcg {
        fn next(&mut self) -> f64 {
            self.0 = self.0.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            ((self.0 >> 11) as f64) / ((1u64 << 53) as f64) * 2.0 - 1.0
        }
    }

    /// The tangent block equals a central finite difference of the internal
    /// force, for both strain measures, in random configurations (common
    /// practice, no source).
    #[test]
    fn tangent_matches_finite_difference_of_force() {
        let mut rng = Lcg(7);
        for case in 0..200 {
            let strain = MEASURES[case % 2];
            let d = [rng.next() * 3.0, rng.next() * 3.0, rng.next() * 3.0 + 0.1];
            let l = dot(&d, &d).sqrt();
            let bar = Bar::with_rest_length(d, l * (1.0 + 0.05 * rng.next()), 1.0e5, false);
            let du = [rng.next() * 0.3, rng.next() * 0.3, rng.next() * 0.3];
            let st = bar.state(&du, strain);
            let h = 1e-6;
            for c in 0..3 {
                let mut up = du;
                let mut dn = du;
                up[c] += h;
                dn[c] -= h;
                let fu = bar.state(&up, strain).f;
                let fd = bar.state(&dn, strain).f;
                for r in 0..3 {
                    let fd_k = (fu[r] - fd[r]) / (2.0 * h);
                    let scale = 1.0e5 / l;
                    assert!(
                        (fd_k - st.k[r][c]).abs() <= 1e-5 * scale,
                        "case {case} {strain:?}: K[{r}][{c}] = {} but finite difference {fd_k}",
                        st.k[r][c]
                    );
                }
            }
        }
    }

    /// A rigid rotation of a prestressed member leaves its axial force
    /// unchanged (objectivity; common practice, no source).
    #[test]
    fn rigid_rotation_keeps_axial_force() {
        for strain in MEASURES {
            let d = [2.0, 1.0, 0.5];
            let l = dot(&d, &d).sqrt();
            let rest = Bar::rest_length_for_force(l, 1.0e6, 1.0e3, strain).unwrap();
            let bar = Bar::with_rest_length(d, rest, 1.0e6, true);
            let n0 = bar.state(&[0.0; 3], strain).force;
            assert!((n0 - 1.0e3).abs() < 1e-8, "{strain:?}: {n0}");
            // Rotate the chord by 70 degrees about z: node i fixed, node j moves.
            let (s, c) = (70f64.to_radians().sin(), 70f64.to_radians().cos());
            let xr = [c * d[0] - s * d[1], s * d[0] + c * d[1], d[2]];
            let du = [xr[0] - d[0], xr[1] - d[1], xr[2] - d[2]];
            let n1 = bar.state(&du, strain).force;
            assert!((n1 - n0).abs() < 1e-9 * n0.abs().max(1.0), "{strain:?}: {n0} vs {n1}");
        }
    }

    #[test]
    fn slack_cable_has_no_force_or_stiffness() {
        let bar = Bar::with_rest_length([1.0, 0.0, 0.0], 1.0, 1.0e4, true);
        let st = bar.state(&[-0.01, 0.0, 0.0], StrainMeasure::Green);
        assert!(st.slack);
        assert_eq!(st.force, 0.0);
        assert!(st.k.iter().flatten().all(|v| *v == 0.0));
        let taut = bar.state(&[0.01, 0.0, 0.0], StrainMeasure::Green);
        assert!(!taut.slack && taut.force > 0.0);
    }

    #[test]
    fn rest_length_reproduces_prestress() {
        for strain in MEASURES {
            for n in [-500.0, 0.0, 10.0, 2.0e4] {
                let l = 4.0;
                let rest = Bar::rest_length_for_force(l, 1.0e5, n, strain).unwrap();
                let bar = Bar::with_rest_length([0.0, 0.0, l], rest, 1.0e5, false);
                let f = bar.state(&[0.0; 3], strain).force;
                assert!((f - n).abs() <= 1e-9 * 1.0e5, "{strain:?} n={n}: got {f}");
            }
        }
    }
}
