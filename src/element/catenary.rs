//! The elastic catenary: one element for a whole cable hanging under its own
//! weight between two nodes (H. M. Irvine, *Cable Structures*, MIT Press,
//! 1981, ch. 1, the elastic catenary).
//!
//! Frame: end A is the lower node, end B the upper; `l` is the horizontal
//! span of the chord, `h ≥ 0` the rise from A to B, `L0` the unstretched
//! length, `w` the weight per unstretched length, `W = w·L0`. With `s` the
//! unstretched arc length from A, the horizontal tension component `H` is
//! constant and the vertical one is `t(s) = t1 + w·s` (t1 = −V, with V the
//! upward force the support at A gives; t2 = t1 + W at B). Hooke's law on
//! the stretched length, dp = ds·(1 + T/EA), integrated along the cable:
//!
//! ```text
//! l = H·L0/EA + (H/w)·[asinh(t2/H) − asinh(t1/H)]
//! h = (t1 + t2)·L0/(2·EA) + (1/w)·[√(H² + t2²) − √(H² + t1²)]
//! ```
//!
//! These two compatibility equations are solved for (H, P) by Newton
//! iteration, with P = (t1 + t2)/2 = W/2 − V. Their Jacobian is the 2×2
//! flexibility matrix ∂(l, h)/∂(H, P), symmetric in this choice of unknowns;
//! its inverse is the stiffness of the end force on B, (H, P), against the
//! chord (l, h).
//!
//! The 1/w of the published form cancels a difference that vanishes with w;
//! here both terms are rewritten without it (see `Terms`), so w → 0 gives the
//! tension-only engineering-strain bar with no loss of digits:
//! `asinh(t2/H) − asinh(t1/H) = ln1p(W·q)` with
//! `q = (s1 + s2)/((T1 + T2)·s1)`, `s = T + t` computed as `H²/(T − t)` when
//! t < 0, and `√(H²+t2²) − √(H²+t1²) = W·(t1 + t2)/(T1 + T2)`.
//!
//! Node forces: the cable pulls node A with (H·e, t1) and node B with
//! (−H·e, −t2) (e the plan direction A → B); they sum to the weight, −W·ẑ.
//! The internal force f_int is their negative. Its constant part, W/2·ẑ at
//! each end, is the member's lumped self-weight, applied with the other
//! self-weight loads (`assembly::System`); the kernel returns the
//! antisymmetric remainder f = H·e + P·ẑ on node j (−f on node i), so the
//! tangent keeps the [[K, −K], [−K, K]] structure of the bar, with
//!
//! ```text
//! K = K11·g·gᵀ + K12·(g·ẑᵀ + ẑ·gᵀ) + K22·ẑ·ẑᵀ + (H/l)·(I − g·gᵀ − ẑ·ẑᵀ)
//! ```
//!
//! (g the horizontal unit vector along the plan chord; the last term is the
//! turning of the plan direction). Reported force: the tension at the upper
//! end, the largest in the cable, √(H² + t2²); strain: that tension over EA.
//! A cable with weight always hangs in tension for any chord; it is slack
//! only when weightless and shorter than L0, or vertical and too short to
//! hang straight.

use super::{AxialState, Bar};
use crate::model::StrainMeasure;

/// The data of one catenary member, precomputed once.
#[derive(Clone, Copy, Debug)]
pub struct Catenary {
    /// Initial chord, node j − node i, m.
    pub d: [f64; 3],
    /// Unstretched length L0, m.
    pub rest: f64,
    /// L² − L0², computed once, for a weightless cable's stretch.
    c0: f64,
    /// Axial rigidity, N.
    pub ea: f64,
    /// Weight per unstretched length, N/m (0: a tension-only bar).
    pub w: f64,
}

/// End forces and flexibility of the catenary in its own (l, h) frame.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct CatenaryForces {
    /// Horizontal tension component, N.
    pub h: f64,
    /// P = W/2 − V, N (V: upward force of the support at the lower end A).
    pub p: f64,
    /// Flexibility ∂(l, h)/∂(H, P), m/N, symmetric.
    pub flex: [[f64; 2]; 2],
    /// Newton iterations used.
    pub iterations: usize,
    /// The compatibility equations were met to round-off.
    pub converged: bool,
}

impl CatenaryForces {
    /// Upward force of the support at the lower end A, N.
    pub fn v_lower(&self, weight: f64) -> f64 {
        0.5 * weight - self.p
    }
}

/// Horizontal spans below this fraction of the cable length count as vertical.
const VERTICAL: f64 = 1e-12;
const MAX_NEWTON: usize = 100;

/// `T + t` with T = √(H² + t²), without cancellation when t < 0.
#[inline]
fn plus(hh: f64, t_abs: f64, t: f64) -> f64 {
    if t >= 0.0 { t_abs + t } else { hh * hh / (t_abs - t) }
}

/// ln(1 + x)/x, 1 at x = 0.
#[inline]
fn ln1p_over(x: f64) -> f64 {
    if x == 0.0 { 1.0 } else { x.ln_1p() / x }
}

/// Residuals (computed minus given chord) and flexibility at (H, P).
struct Terms {
    r: [f64; 2],
    flex: [[f64; 2]; 2],
}

impl Catenary {
    /// A catenary member of unstretched length `rest`, initial chord `d`.
    pub fn new(d: [f64; 3], rest: f64, ea: f64, w: f64) -> Catenary {
        let l2 = d[0] * d[0] + d[1] * d[1] + d[2] * d[2];
        Catenary { d, rest, c0: (l2.sqrt() - rest) * (l2.sqrt() + rest), ea, w }
    }

    /// Total weight W = w·L0, N.
    pub fn weight(&self) -> f64 {
        self.w * self.rest
    }

    fn terms(&self, span: f64, rise: f64, hh: f64, p: f64) -> Terms {
        let (l0, ea) = (self.rest, self.ea);
        let big_w = self.weight();
        let t1 = p - 0.5 * big_w;
        let t2 = p + 0.5 * big_w;
        let ta = hh.hypot(t1);
        let tb = hh.hypot(t2);
        let (s1, s2) = (plus(hh, ta, t1), plus(hh, tb, t2));
        let sum = ta + tb;
        let q = (s1 + s2) / (sum * s1);
        let sigma_over_w = l0 * q * ln1p_over(big_w * q);
        // c = [t2/T2 − t1/T1]/W, the change of the tangent's vertical
        // direction cosine along the cable per unit weight.
        let c = if big_w == 0.0 {
            hh * hh / (ta * ta * ta)
        } else if t1 * t2 > 0.0 {
            hh * hh * (t1 + t2) / ((t2 * ta + t1 * tb) * ta * tb)
        } else {
            (t2 / tb - t1 / ta) / big_w
        };
        let f12 = -hh * l0 * (t1 + t2) / (sum * ta * tb);
        Terms {
            r: [hh * l0 * (1.0 / ea + q * ln1p_over(big_w * q)) - span, p * l0 * (1.0 / ea + 2.0 / sum) - rise],
            flex: [[l0 / ea + sigma_over_w - l0 * c, f12], [f12, l0 / ea + l0 * c]],
        }
    }

    /// Solves the two compatibility equations for the chord with horizontal
    /// span `span ≥ 0` and rise `rise ≥ 0` (A lower). Newton iteration on
    /// (H, P), damped to keep H > 0 and the residual falling, from the
    /// parabolic / taut estimates. Returns the slack flag in `converged`'s
    /// place when no tension state exists (vertical and too short).
    pub fn solve(&self, span: f64, rise: f64) -> CatenaryForces {
        let (l0, ea, w) = (self.rest, self.ea, self.w);
        let big_w = self.weight();
        let chord = span.hypot(rise);
        let scale = l0.max(chord);
        if span <= VERTICAL * scale {
            // Hanging straight: H = 0 and, if taut, t1 = P − W/2 > 0 with
            // h = L0 + P·L0/EA (the mean tension stretches the whole length).
            let p = ea * (rise - l0) / l0;
            let t1 = p - 0.5 * big_w;
            let taut = t1 > 0.0;
            let f11 = if taut { l0 / ea + l0 * ln1p_over(big_w / t1) / t1 } else { 0.0 };
            return CatenaryForces {
                h: 0.0,
                p: if taut { p } else { 0.0 },
                flex: [[f11, 0.0], [0.0, l0 / ea]],
                iterations: 0,
                converged: taut,
            };
        }
        // Start: for a cable hanging with sag, the inextensible parabolic
        // estimate λ0 = √(3((L0² − h²)/l² − 1)), H = w·l/(2λ0),
        // P = (w/2)·h·coth λ0 (W. T. Peyrot and A. M. Goulois, "Analysis of
        // cable structures", Computers & Structures 10, 1979; from memory);
        // for a cable stretched taut, the straight elastic bar.
        let taut_force = ea * (chord - l0) / l0;
        let (mut hh, mut p) = if l0 * l0 > chord * chord {
            let lam = (3.0 * ((l0 * l0 - rise * rise) / (span * span) - 1.0)).sqrt().clamp(0.2, 1e6);
            (w * span / (2.0 * lam), 0.5 * w * rise / lam.tanh())
        } else {
            let lam = 0.2f64;
            let h_sag = w * span / (2.0 * lam);
            let h_taut = taut_force * span / chord;
            let hh = h_sag.max(h_taut);
            (hh, hh * rise / span)
        };
        if !(hh > 0.0 && hh.is_finite()) {
            hh = ea * 1e-6;
        }
        let tol = 1e-14 * scale;
        let mut t = self.terms(span, rise, hh, p);
        let mut norm = t.r[0].abs() + t.r[1].abs();
        let mut iterations = 0;
        let mut converged = norm <= tol;
        while !converged && iterations < MAX_NEWTON {
            iterations += 1;
            let [[a, b], [_, d]] = t.flex;
            let det = a * d - b * b;
            if !(det.is_finite() && det != 0.0) {
                break;
            }
            let dh = -(d * t.r[0] - b * t.r[1]) / det;
            let dp = -(a * t.r[1] - b * t.r[0]) / det;
            // Damping: H stays positive (at most a tenfold fall per step),
            // and the residual must fall.
            let mut alpha = 1.0f64;
            if hh + dh < 0.1 * hh {
                alpha = 0.9 * hh / -dh;
            }
            let mut accepted = false;
            for _ in 0..40 {
                let (h_new, p_new) = (hh + alpha * dh, p + alpha * dp);
                let trial = self.terms(span, rise, h_new, p_new);
                let n_new = trial.r[0].abs() + trial.r[1].abs();
                if n_new.is_finite() && (n_new < norm || n_new <= tol) {
                    hh = h_new;
                    p = p_new;
                    t = trial;
                    accepted = (norm - n_new).abs() > 0.0 || n_new <= tol;
                    norm = n_new;
                    break;
                }
                alpha *= 0.5;
            }
            converged = norm <= tol || (accepted && (dh.abs() <= 1e-15 * hh && dp.abs() <= 1e-15 * p.abs().max(hh)));
            if !accepted {
                // No decrease possible: at round-off level if close enough.
                converged = norm <= 1e-11 * scale;
                break;
            }
        }
        CatenaryForces { h: hh, p, flex: t.flex, iterations, converged }
    }

    /// Internal force (antisymmetric part, on node j) and tangent block for
    /// the end displacement difference `du` (node j minus node i).
    pub fn state(&self, du: &[f64; 3]) -> AxialState {
        let x = [self.d[0] + du[0], self.d[1] + du[1], self.d[2] + du[2]];
        let chord = (x[0] * x[0] + x[1] * x[1] + x[2] * x[2]).sqrt();
        if self.w == 0.0 {
            return self.weightless(du);
        }
        let mut st = AxialState { length: chord, ..Default::default() };
        let span = x[0].hypot(x[1]);
        // A is the lower end: node i when x_z ≥ 0, else node j (then P and
        // the coupling K12 change sign; H and the rest do not).
        let sign = if x[2] >= 0.0 { 1.0 } else { -1.0 };
        let sol = self.solve(span, sign * x[2]);
        let vertical = span <= VERTICAL * self.rest.max(chord);
        if vertical && !sol.converged {
            return AxialState::slack(chord, (chord - self.rest) / self.rest);
        }
        let big_w = self.weight();
        let t_upper = sol.h.hypot(sol.p + 0.5 * big_w);
        st.force = t_upper;
        st.strain = t_upper / self.ea;
        let [[f11, f12], [_, f22]] = sol.flex;
        let (k11, k12, k22, kt) = if vertical {
            (1.0 / f11, 0.0, 1.0 / f22, 1.0 / f11)
        } else {
            let det = f11 * f22 - f12 * f12;
            (f22 / det, -sign * f12 / det, f11 / det, sol.h / span)
        };
        let g = if vertical { [0.0; 3] } else { [x[0] / span, x[1] / span, 0.0] };
        let z = [0.0, 0.0, 1.0];
        let p = sign * sol.p;
        for r in 0..3 {
            st.f[r] = sol.h * g[r] + p * z[r];
            for c in 0..3 {
                let id = if r == c { 1.0 } else { 0.0 };
                st.k[r][c] = k11 * g[r] * g[c]
                    + k12 * (g[r] * z[c] + z[r] * g[c])
                    + k22 * z[r] * z[c]
                    + kt * (id - g[r] * g[c] - z[r] * z[c]);
            }
        }
        st
    }

    /// w = 0: the tension-only bar with engineering strain, T = EA(l − L0)/L0
    /// (the bar kernel itself, so the two cannot drift apart).
    fn weightless(&self, du: &[f64; 3]) -> AxialState {
        let bar = Bar { d: self.d, rest: self.rest, c0: self.c0, ea: self.ea, cable: true };
        bar.state(du, StrainMeasure::Engineering)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    struct Lcg(u64);
    impl Lcg {
        fn next(&mut self) -> f64 {
            self.0 = self.0.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            ((self.0 >> 11) as f64) / ((1u64 << 53) as f64) * 2.0 - 1.0
        }
    }

    /// The published form of the two compatibility equations (module docs),
    /// evaluated directly with its asinh terms.
    fn chord_of(c: &Catenary, hh: f64, p: f64) -> (f64, f64) {
        let (l0, ea, w) = (c.rest, c.ea, c.w);
        let (t1, t2) = (p - 0.5 * w * l0, p + 0.5 * w * l0);
        let l = hh * l0 / ea + hh / w * ((t2 / hh).asinh() - (t1 / hh).asinh());
        let h = (t1 + t2) * l0 / (2.0 * ea) + ((hh * hh + t2 * t2).sqrt() - (hh * hh + t1 * t1).sqrt()) / w;
        (l, h)
    }

    /// The solved forces reproduce the chord through the published form, for
    /// sagging, taut, steep and downhill chords.
    #[test]
    fn solution_meets_the_compatibility_equations() {
        let c = Catenary::new([100.0, 0.0, 30.0], 110.0, 1e8, 20.0);
        for (span, rise) in [(100.0, 30.0), (100.0, 0.0), (10.0, 100.0), (104.0, 3.0), (50.0, 1.0)] {
            let s = c.solve(span, rise);
            assert!(s.converged && s.h > 0.0, "{span} {rise}: {s:?}");
            let (l, h) = chord_of(&c, s.h, s.p);
            assert!((l - span).abs() < 1e-9 * 110.0 && (h - rise).abs() < 1e-9 * 110.0, "{span} {rise}: {l} {h}");
        }
    }

    /// The flexibility is the Jacobian of the chord in (H, P): compared with
    /// central differences of the published form.
    #[test]
    fn flexibility_matches_finite_difference() {
        let c = Catenary::new([80.0, 0.0, 20.0], 95.0, 5e7, 15.0);
        let s = c.solve(80.0, 20.0);
        let (dh, dp) = (1e-5 * s.h, 1e-5 * s.h);
        let (lp, hp) = chord_of(&c, s.h + dh, s.p);
        let (lm, hm) = chord_of(&c, s.h - dh, s.p);
        let (lq, hq) = chord_of(&c, s.h, s.p + dp);
        let (lr, hr) = chord_of(&c, s.h, s.p - dp);
        let fd = [[(lp - lm) / (2.0 * dh), (lq - lr) / (2.0 * dp)], [(hp - hm) / (2.0 * dh), (hq - hr) / (2.0 * dp)]];
        for r in 0..2 {
            for k in 0..2 {
                assert!((fd[r][k] - s.flex[r][k]).abs() < 1e-6 * s.flex[0][0].abs().max(s.flex[1][1].abs()), "{r}{k}: {fd:?} vs {:?}", s.flex);
            }
        }
    }

    /// The tangent block equals a central finite difference of the internal
    /// force in random configurations, uphill and downhill (common practice,
    /// no source).
    #[test]
    fn tangent_matches_finite_difference_of_force() {
        let mut rng = Lcg(11);
        for case in 0..100 {
            let d = [rng.next() * 40.0, rng.next() * 40.0, rng.next() * 30.0];
            let l = (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt();
            let c = Catenary::new(d, l * (1.0 + 0.1 * rng.next()), 1e7, 10.0 + 5.0 * rng.next());
            let du = [rng.next(), rng.next(), rng.next()];
            let st = c.state(&du);
            let scale = st.k.iter().flatten().fold(0.0f64, |m, v| m.max(v.abs()));
            let h = 1e-5;
            for col in 0..3 {
                let (mut up, mut dn) = (du, du);
                up[col] += h;
                dn[col] -= h;
                let (fu, fd) = (c.state(&up).f, c.state(&dn).f);
                for r in 0..3 {
                    let k_fd = (fu[r] - fd[r]) / (2.0 * h);
                    assert!((k_fd - st.k[r][col]).abs() <= 1e-5 * scale, "case {case}: K[{r}][{col}] = {} but {k_fd}", st.k[r][col]);
                }
                for r in 0..3 {
                    assert!((st.k[r][col] - st.k[col][r]).abs() <= 1e-12 * scale);
                }
            }
        }
    }

    /// Rotating the chord about the vertical leaves H, P and the tension
    /// unchanged, and turns the force with it (objectivity; common practice,
    /// no source).
    #[test]
    fn rotation_about_vertical_keeps_forces() {
        let d = [60.0, 10.0, 25.0];
        let c = Catenary::new(d, 70.0, 2e7, 12.0);
        let s0 = c.state(&[0.0; 3]);
        let (sn, cs) = (1.1f64.sin(), 1.1f64.cos());
        let xr = [cs * d[0] - sn * d[1], sn * d[0] + cs * d[1], d[2]];
        let s1 = c.state(&[xr[0] - d[0], xr[1] - d[1], 0.0]);
        assert!((s1.force - s0.force).abs() < 1e-9 * s0.force);
        let rotated = [cs * s0.f[0] - sn * s0.f[1], sn * s0.f[0] + cs * s0.f[1], s0.f[2]];
        for a in 0..3 {
            assert!((s1.f[a] - rotated[a]).abs() < 1e-9 * s0.force, "{a}: {:?} vs {rotated:?}", s1.f);
        }
    }

    /// As w → 0 the catenary becomes the tension-only engineering-strain bar:
    /// the difference in force is of order W (here 1e-7 of the tension).
    #[test]
    fn weightless_limit_is_the_elastic_bar() {
        let d: [f64; 3] = [30.0, -20.0, 12.0];
        let l = (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt();
        let rest = l / 1.001;
        let bar = Bar::with_rest_length(d, rest, 1e7, true);
        let du = [0.3, 0.1, -0.2];
        let b = bar.state(&du, StrainMeasure::Engineering);
        for w in [0.0, 1e-6] {
            let c = Catenary::new(d, rest, 1e7, w).state(&du);
            let tol = if w == 0.0 { 1e-12 } else { 1e-6 };
            for a in 0..3 {
                assert!((c.f[a] - b.f[a]).abs() <= tol * b.force, "w={w} f[{a}]: {} vs {}", c.f[a], b.f[a]);
                for k in 0..3 {
                    assert!((c.k[a][k] - b.k[a][k]).abs() <= 1e3 * tol * 1e7 / rest, "w={w} K[{a}][{k}]: {} vs {}", c.k[a][k], b.k[a][k]);
                }
            }
        }
        // Shorter than L0 and weightless: slack.
        let slack = Catenary::new(d, l * 1.01, 1e7, 0.0).state(&[0.0; 3]);
        assert!(slack.slack && slack.force == 0.0);
    }

    /// A vertical cable hangs straight when taut and is slack when too short;
    /// a near-vertical one agrees with the vertical closed form.
    #[test]
    fn vertical_chord_does_not_fail() {
        let c = Catenary::new([0.0, 0.0, 50.0], 49.9, 1e7, 10.0);
        let s = c.state(&[0.0; 3]);
        let p = 1e7 * (50.0 - 49.9) / 49.9;
        assert!(!s.slack && (s.f[2] - p).abs() < 1e-9 * p && (s.force - (p + 0.5 * 499.0)).abs() < 1e-6 * p);
        let tilted = c.state(&[1e-4, 0.0, 0.0]);
        assert!((tilted.f[2] - s.f[2]).abs() < 1e-5 * p, "{} vs {}", tilted.f[2], s.f[2]);
        assert!((tilted.k[1][1] - s.k[1][1]).abs() < 1e-3 * s.k[1][1], "{} vs {}", tilted.k[1][1], s.k[1][1]);
        let short = Catenary::new([0.0, 0.0, 50.0], 60.0, 1e7, 10.0).state(&[0.0; 3]);
        assert!(short.slack && short.force == 0.0);
        let down = Catenary::new([0.0, 0.0, -50.0], 49.9, 1e7, 10.0).state(&[0.0; 3]);
        assert!((down.f[2] + p).abs() < 1e-9 * p);
    }
}
