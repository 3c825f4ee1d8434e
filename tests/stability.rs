//! Path following through snap-back and bifurcation, and the limit load of a
//! lattice dome: the stability side of the tracer.

use crate::common::*;
use tautline::model::Method;
use tautline::path::{CriticalKind, StopReason};
// The two-bar arch with a linear spring in series under the crown, shared
// with `tautline verify`.
use tautline::verify::spring_arch;

const EA: f64 = 1.28e9;
const K: f64 = 2.0e6;

/// Crown load of the two-bar arch, engineering strain (Bažant & Cedolin,
/// *Stability of Structures*, 1991, §4.4; derived from crown equilibrium).
fn arch_load(w: f64) -> f64 {
    let (b, h) = (5.0f64, 1.0f64);
    let z = h - w;
    let (l0, l) = ((b * b + h * h).sqrt(), (b * b + z * z).sqrt());
    2.0 * EA * (l0 - l) / l0 * z / l
}

/// Snap-back: with the spring in series the spring end's deflection is
/// v = w + P(w)/k; since dP/dw reaches −9.9 MN/m near inversion, below −k,
/// v turns back while w goes on (M. A. Crisfield, *Non-linear Finite Element
/// Analysis of Solids and Structures*, vol. 1, 1991, ch. 1, from memory;
/// closed form derived from case 1 plus the spring's compatibility).
/// Arc-length traces it: every point satisfies P = P_arch(w) and
/// v − w = P/k within 1e-8 relative, v moves down, back up and down again
/// while w goes on, both limit points (±P_lim = ±3789.4625 kN) are
/// pinpointed within 1e-6, and the path ends on the inverted branch at the
/// target λ.
#[test]
fn arc_length_traces_snap_back() {
    let run = solve_text(&spring_arch("arc-length", 1.2 * 3.7894625, 10, "arc = 0.05"));
    assert_eq!(run.path.stop, StopReason::TargetReached, "{:?}", run.path.last_failure);
    let mut v_series = Vec::new();
    for pt in &run.path.points {
        let (v, w) = (-pt.watched[0], -pt.watched[1]);
        let p = pt.lambda * 1.0e6;
        assert!((p - arch_load(w)).abs() < 1e-8 * 3.79e6, "w = {w}: {p} vs {}", arch_load(w));
        assert!((v - w - p / K).abs() < 1e-8 * (p.abs() / K).max(1e-3), "spring compatibility at w = {w}");
        v_series.push(v);
    }
    let turns = v_series.windows(3).filter(|t| (t[1] - t[0]) * (t[2] - t[1]) < 0.0).count();
    assert!(turns >= 2, "the spring end should move down, back up, and down again: {v_series:?}");
    let last = run.path.points.last().unwrap();
    assert!((last.lambda - 1.2 * 3.7894625).abs() < 1e-9 && -last.watched[1] > 2.0);
    let limits: Vec<f64> = run.path.critical.iter().filter(|c| c.kind == CriticalKind::Limit).map(|c| c.lambda).collect();
    assert_eq!(limits.len(), 2, "{:?}", run.path.critical);
    assert!(rel_err(limits[0], 3.7894625, 1.0) < 1e-6 && rel_err(limits[1], -3.7894625, 1.0) < 1e-6, "{limits:?}");
}

/// Load control cannot pass the limit point of the same system: it stops
/// cleanly short of the target (exit 3 in the CLI), with the last converged
/// load below the limit load P_lim = 3789.4625 kN (Bažant & Cedolin 1991,
/// eq. 4.4.5) and above 90 % of it.
#[test]
fn load_control_stops_at_the_snap_back_limit() {
    let run = solve_text(&spring_arch("load", 1.2 * 3.7894625, 12, ""));
    assert_eq!(run.path.stop, StopReason::NoConvergence);
    let last = run.path.points.last().unwrap().lambda;
    assert!(last < 3.7894626 && last > 0.9 * 3.7894625, "last converged λ = {last}");
    let msg = tautline::results::stop_message(&run.model, &run.path);
    assert!(msg.contains("arc-length"), "{msg}");
}

/// A straight vertical strut of two bars (each L = 2 m, EA = 1e8 N),
/// pinned at the base and held laterally at the top, braced at mid-height by
/// a lateral spring k = 1e5 N/m. On the perfect path the bars shorten to
/// l = L(1 − P/EA) and the mid-height node's lateral stiffness is
/// k − 2P/l (geometric stiffness N/l of each compressed bar), so the path
/// bifurcates at P_cr = (kL/2)/(1 + kL/(2EA)) = 99 900.0999 N (derived;
/// the braced strut is the classic example of e.g. Bažant & Cedolin 1991,
/// ch. 1, from memory). The load keeps rising through it, the mode is the
/// lateral sway, orthogonal to the load: a bifurcation, pinpointed within
/// 1e-6 of the closed form, with every corrector.
#[test]
fn braced_strut_bifurcates_at_closed_form_load() {
    let text = tautline::verify::BRACED_STRUT;
    let (k, l, ea) = (1.0e5f64, 2.0f64, 1.0e8f64);
    let p_cr = (k * l / 2.0) / (1.0 + k * l / (2.0 * ea));
    for method in ALL_METHODS {
        let run = trace(model(text), method);
        assert_eq!(run.path.stop, StopReason::TargetReached, "{method:?}");
        assert_eq!(run.path.critical.len(), 1, "{method:?}: {:?}", run.path.critical);
        let c = &run.path.critical[0];
        assert_eq!(c.kind, CriticalKind::Bifurcation, "{method:?}: alignment {}", c.mode_load_alignment);
        assert!(rel_err(c.lambda * 1.0e5, p_cr, 1.0) < 1e-6, "{method:?}: {} vs {p_cr}", c.lambda * 1.0e5);
        let labels: Vec<String> = c.mode.iter().map(|nd| run.model.node_dir_label(*nd)).collect();
        assert_eq!(labels, ["M.x"], "{method:?}");
        // watch = [T.z, M.x]: the sway carries no axial shortening.
        assert!(c.mode_watched[0].abs() < 1e-6 && (c.mode_watched[1].abs() - 1.0).abs() < 1e-9, "{:?}", c.mode_watched);
    }
}

/// The generator's shallow lattice dome (2 rings × 6 sectors, radius 10 m,
/// rise 1 m) under its crown load: the first critical point found by
/// arc-length is pinpointed, so its load factor does not depend on the arc
/// length (1e-6 between arcs a, a/2, a/4) nor on the corrector (1e-6). The
/// value itself is this project's own; no literature value is claimed.
#[test]
fn dome_first_critical_load_is_independent_of_arc_and_corrector() {
    let g = tautline::generate::lattice_dome(
        &tautline::generate::DomeOptions { rings: 2, sectors: 6, ..Default::default() },
        "dome",
    )
    .unwrap();
    let base = g.toml.replace("control = \"load\"", "control = \"arc-length\"").replace("target = 1.0", "target = 1.0e9");
    let first = |arc: f64, method: Method| {
        let text = base.replace("[analysis]", &format!("[analysis]\narc = {arc:?}\nmax_steps = 400"));
        let mut m = model(&text);
        m.analysis.max_displacement = Some(2.5);
        let run = trace(m, method);
        let c = run.path.critical.first().unwrap_or_else(|| panic!("{method:?} arc {arc}: no critical point, {:?}", run.path.stop)).clone();
        c
    };
    let reference = first(0.05, Method::Newton);
    assert!(reference.lambda > 0.0);
    for arc in [0.025, 0.0125] {
        let c = first(arc, Method::Newton);
        assert_eq!(c.kind, reference.kind);
        assert!(rel_err(c.lambda, reference.lambda, 1e-12) < 1e-6, "arc {arc}: {} vs {}", c.lambda, reference.lambda);
    }
    for method in ALL_METHODS {
        let c = first(0.05, method);
        assert!(rel_err(c.lambda, reference.lambda, 1e-12) < 1e-6, "{method:?}: {} vs {}", c.lambda, reference.lambda);
    }
}
