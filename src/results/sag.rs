//! The sag of a catenary member between two drawn end points: the elastic
//! catenary profile of Irvine 1981, ch. 1, found with the element's own
//! kernel, so the report draws the curve the analysis used.

use crate::element::Catenary;
use crate::model::{MemberKind, Model, RestSpec, SelfWeight};

/// Points along a drawn catenary.
pub const CATENARY_POINTS: usize = 17;

/// Sag offsets (m, vertical, downward negative) of a weighted catenary
/// member between the given end positions, at the chord fractions returned
/// with them; None for a member drawn straight.
pub fn catenary_sag(model: &Model, k: usize, a: [f64; 3], b: [f64; 3]) -> Option<Vec<(f64, f64)>> {
    let m = &model.members[k];
    if m.kind != MemberKind::Catenary || model.analysis.self_weight == SelfWeight::None {
        return None;
    }
    let RestSpec::Length(rest) = m.rest else { return None };
    let sec = &model.sections[m.section];
    sag_offsets(rest, sec.ea, sec.weight.unwrap_or(0.0), a, b)
}

/// Sag offsets of an elastic catenary of unstretched length `rest`, axial
/// rigidity `ea` and weight `w` per unstretched length hanging between the
/// points `a` and `b` (m): (chord fraction along the plan, vertical offset
/// from the chord) at `CATENARY_POINTS` points, from a to b.
pub fn sag_offsets(rest: f64, ea: f64, w: f64, a: [f64; 3], b: [f64; 3]) -> Option<Vec<(f64, f64)>> {
    if !(w > 0.0 && rest > 0.0 && ea > 0.0) {
        return None;
    }
    // A is the lower end (the kernel's frame).
    let (lo, hi, flipped) = if a[2] <= b[2] { (a, b, false) } else { (b, a, true) };
    let span = (hi[0] - lo[0]).hypot(hi[1] - lo[1]);
    let rise = hi[2] - lo[2];
    // Also true for a NaN span: drawn straight.
    if span.is_nan() || span <= 1e-9 * rest {
        return None;
    }
    let d = [b[0] - a[0], b[1] - a[1], b[2] - a[2]];
    let f = Catenary::new(d, rest, ea, w).solve(span, rise);
    if !f.converged || f.h.is_nan() || f.h <= 0.0 {
        return None;
    }
    let hh = f.h;
    let t1 = f.p - 0.5 * w * rest;
    let t1_abs = hh.hypot(t1);
    // Irvine (1981), ch. 1: x(s) = H·s/EA + (H/w)[asinh(t(s)/H) − asinh(t1/H)],
    // z(s) = (t1·s + w·s²/2)/EA + (1/w)[√(H² + t(s)²) − √(H² + t1²)], t(s) = t1 + w·s.
    let pts = (0..CATENARY_POINTS).map(|i| {
        let s = rest * i as f64 / (CATENARY_POINTS - 1) as f64;
        let t = t1 + w * s;
        let x = hh * s / ea + hh / w * ((t / hh).asinh() - (t1 / hh).asinh());
        let z = (t1 * s + 0.5 * w * s * s) / ea + (hh.hypot(t) - t1_abs) / w;
        let phi = (x / span).clamp(0.0, 1.0);
        (phi, z - phi * rise)
    });
    let mut out: Vec<(f64, f64)> = pts.collect();
    if flipped {
        out = out.into_iter().rev().map(|(phi, dz)| (1.0 - phi, dz)).collect();
    }
    Some(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A level, nearly inextensible catenary: the sag at midspan is
    /// (H/w)·(cosh(w·l/(2H)) − 1) (Irvine 1981, ch. 1, the inextensible
    /// catenary, at x = l/2; derived from z(x) = (H/w)[cosh(w·l/(2H)) −
    /// cosh(w·(l/2 − x)/H)]), H from the kernel's solution.
    #[test]
    fn level_catenary_sags_as_the_closed_form() {
        let (l, rest, w, ea) = (10.0, 10.5, 20.0, 1e12);
        let a = [0.0, 0.0, 5.0];
        let b = [l, 0.0, 5.0];
        let off = sag_offsets(rest, ea, w, a, b).expect("a hanging cable");
        assert_eq!(off.len(), CATENARY_POINTS);
        let mid = off[CATENARY_POINTS / 2];
        assert!((mid.0 - 0.5).abs() < 1e-9, "the middle point is at midspan: {}", mid.0);
        let hh = Catenary::new([l, 0.0, 0.0], rest, ea, w).solve(l, 0.0).h;
        let sag = hh / w * ((w * l / (2.0 * hh)).cosh() - 1.0);
        assert!((-mid.1 - sag).abs() < 1e-6 * sag, "sag {} against {sag}", -mid.1);
        // Ends on the chord, and the profile mirrored when the ends swap.
        assert!(off[0].1.abs() < 1e-9 && off[CATENARY_POINTS - 1].1.abs() < 1e-9);
        let back = sag_offsets(rest, ea, w, b, a).unwrap();
        assert!((back[CATENARY_POINTS / 2].1 - mid.1).abs() < 1e-9);
        // Weightless: drawn straight.
        assert!(sag_offsets(rest, ea, 0.0, a, b).is_none());
    }
}
