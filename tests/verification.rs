//! The main job checked against closed forms from outside the project.
//! Each test names its source, the quantity compared and why the tolerance.

use crate::common::*;
use tautline::path::StopReason;

/// Two-bar arch of VERIFICATION case 1: half-span b = 5 m, rise h = 1 m,
/// EA = 1280 MN, crown load P_ref (N) in −z, crown held out of plane.
fn arch_model(strain: &str, control: &str, p_ref: f64, steps: usize, target: f64) -> String {
    format!(
        r#"
title = "two-bar arch"
[[section]]
name = "s"
EA = 1.28e9
[[node]]
id = "L"
at = [-5.0, 0.0, 0.0]
fix = "xyz"
[[node]]
id = "R"
at = [5.0, 0.0, 0.0]
fix = "xyz"
[[node]]
id = "C"
at = [0.0, 0.0, 1.0]
fix = "y"
[[member]]
id = "left"
kind = "bar"
ends = ["L", "C"]
section = "s"
[[member]]
id = "right"
kind = "bar"
ends = ["C", "R"]
section = "s"
[[load]]
node = "C"
force = [0.0, 0.0, {neg_p:?}]
[analysis]
strain = "{strain}"
control = "{control}"
steps = {steps}
target = {target:?}
node = "C"
dir = "z"
max_steps = 400
tolerance = 1e-13
watch = ["C.z"]
"#,
        neg_p = -p_ref
    )
}

// The arch of `arch_model` (EA = 1.28e9 N there) is `tautline::verify::ARCH`.
const B: f64 = tautline::verify::ARCH.b;
const H: f64 = tautline::verify::ARCH.h;

/// Crown load P(w) of the two-bar arch for a crown deflection w (down
/// positive): the closed form of `tautline::verify::Arch::load`, from
/// equilibrium of the deformed crown (Z. P. Bažant and L. Cedolin,
/// *Stability of Structures* (1991), §4.4), written once there.
fn arch_load(w: f64, green: bool) -> f64 {
    tautline::verify::ARCH.load(w, green)
}

/// Limit load and crown deflection at it (Bažant & Cedolin 1991, eq. 4.4.5;
/// Green-Lagrange derived from dP/dz = 0): `tautline::verify::Arch::limit`.
fn arch_limit(green: bool) -> (f64, f64) {
    tautline::verify::ARCH.limit(green)
}

/// Crown deflection for a load below the limit, by bisection on [0, w_lim].
fn arch_deflection(p: f64, green: bool) -> f64 {
    tautline::verify::ARCH.deflection(p, green)
}

/// The closed-form limit point reproduces the published rounded figures of
/// VERIFICATION case 1 (3790 kN at about 426.4 mm, engineering strain): a
/// check that the reference formula used below is the published one.
#[test]
fn arch_closed_form_matches_published_figures() {
    let (p, w) = arch_limit(false);
    assert!((p / 1e3 - 3790.0).abs() < 1.0, "P_lim = {p}");
    assert!((w * 1e3 - 426.4).abs() < 0.05, "w_lim = {w}");
}

/// Load control to 90 % of the limit load, both strain measures, every
/// corrector: the crown deflection at every step equals the closed form
/// within 1e-8 relative (solver tolerance 1e-13, no discretisation error).
#[test]
fn arch_load_control_follows_closed_form() {
    for green in [true, false] {
        let (p_lim, _) = arch_limit(green);
        let strain = if green { "green" } else { "engineering" };
        for method in ALL_METHODS {
            let m = model(&arch_model(strain, "load", 1.0e6, 9, 0.9 * p_lim / 1.0e6));
            let run = trace(m, method);
            assert_eq!(run.path.stop, StopReason::TargetReached, "{strain} {method:?}");
            assert_eq!(run.path.points.len(), 10);
            for pt in &run.path.points[1..] {
                let w_tool = -pt.point;
                let w_ref = arch_deflection(pt.lambda * 1.0e6, green);
                let e = rel_err(w_tool, w_ref, 1e-12);
                assert!(e < 1e-8, "{strain} {method:?} λ={}: w = {w_tool}, closed form {w_ref}, rel {e:e}", pt.lambda);
            }
        }
    }
}

/// Displacement control (Batoz & Dhatt 1979) drives the crown through the
/// limit point and past inversion: every converged point satisfies the closed
/// form within 1e-8 relative of the limit load, the tangent has one negative
/// pivot exactly between the two limit points, and the Green-Lagrange path is
/// antisymmetric, P(w) = −P(2h − w), with P = 0 at w = h (derived).
#[test]
fn arch_displacement_control_passes_the_limit_point() {
    for green in [true, false] {
        let strain = if green { "green" } else { "engineering" };
        let run = solve_text(&arch_model(strain, "displacement", 1.0e6, 44, -2.2));
        assert_eq!(run.path.stop, StopReason::TargetReached);
        let (p_lim, w_lim) = arch_limit(green);
        let l0 = (B * B + H * H).sqrt();
        for pt in &run.path.points {
            let w = -pt.point;
            let p_ref = arch_load(w, green);
            let e = (pt.lambda * 1.0e6 - p_ref).abs() / p_lim;
            assert!(e < 1e-8, "{strain} w={w}: λ·P = {}, closed form {p_ref}", pt.lambda * 1.0e6);
            // Unstable between the limit points: w_lim < w < 2h − w_lim.
            let inside = w > w_lim + 1e-9 && w < 2.0 * H - w_lim - 1e-9;
            let outside = w < w_lim - 1e-9 || w > 2.0 * H - w_lim + 1e-9;
            if inside {
                assert_eq!(pt.negative_pivots, 1, "{strain} w={w}");
            } else if outside {
                assert_eq!(pt.negative_pivots, 0, "{strain} w={w}");
            }
        }
        if green {
            // The solver's own points, not the formula: the point at w = h
            // carries no load, and each point at w pairs with one at 2h − w
            // (the steps are 0.05 m, so both are on the path) with the
            // opposite load.
            let _ = l0;
            let load_at = |w: f64| run.path.points.iter().find(|pt| (-pt.point - w).abs() < 1e-9).map(|pt| pt.lambda * 1.0e6);
            let at_h = load_at(H).expect("a point at w = h");
            assert!(at_h.abs() < 1e-8 * p_lim, "P(h) = {at_h}");
            let mut pairs = 0;
            for pt in &run.path.points {
                let w = -pt.point;
                if let Some(mirror) = load_at(2.0 * H - w) {
                    let p = pt.lambda * 1.0e6;
                    assert!((p + mirror).abs() < 1e-8 * p_lim, "P({w}) = {p}, P({}) = {mirror}", 2.0 * H - w);
                    pairs += 1;
                }
            }
            assert!(pairs >= 40, "only {pairs} mirrored points");
        }
        let kinds: Vec<_> = tautline::results::critical_points(&run.path).into_iter().map(|c| c.kind).collect();
        assert_eq!(kinds, ["limit", "limit"], "{strain}");
    }
}

/// Pretensioned straight cable with a midspan point load, engineering strain:
/// P = 2·EA(l_c − L_r)/L_r · w/l_c with l_c = √(l² + w²) and L_r the rest length
/// of each half (VERIFICATION case 4, derived from equilibrium of the loaded
/// node; cubic-type relation in w). Worked numbers l = 5 m, EA = 1e6 N,
/// pretension 1e4 N, P = 1000 N give w ≈ 0.226726 m and a cable force
/// ≈ 11037.84 N (computed from that closed form: a cross-check, not a
/// literature value). Several load levels; 1e-8 relative.
#[test]
fn pretensioned_cable_midspan_load() {
    let text = PRETENSIONED_CABLE;
    let (l, ea, t) = (5.0f64, 1.0e6, 1.0e4);
    let lr = l * ea / (ea + t);
    // The one closed form, in `verify` (the `verify` table's case 4 too).
    let deflection = |p: f64| tautline::verify::pretensioned_cable_deflection_closed_form(l, ea, t, p);
    let w1 = deflection(1000.0);
    assert!((w1 - 0.226726).abs() < 1e-6, "closed form w = {w1}");
    for method in ALL_METHODS {
        let run = trace(model(text), method);
        assert_eq!(run.path.stop, StopReason::TargetReached, "{method:?}");
        for pt in &run.path.points[1..] {
            let w = -pt.point;
            let e = rel_err(w, deflection(pt.lambda * 1000.0), 1e-12);
            assert!(e < 1e-8, "{method:?} λ = {}: w = {w}, rel {e:e}", pt.lambda);
        }
        let forces = run.system.member_results(&run.path.final_state.u);
        let lc = (l * l + w1 * w1).sqrt();
        let n_ref = ea * (lc - lr) / lr;
        assert!((n_ref - 11037.84).abs() < 0.01);
        for f in forces {
            assert!(rel_err(f.force, n_ref, 1.0) < 1e-8, "{method:?}: {} vs {n_ref}", f.force);
        }
    }
}

/// A statically determinate plane truss under a small load: member forces
/// equal the method-of-joints values (derived below; common practice, no
/// source). Nodes
/// A(0,0) pinned, B(3,0), C(6,0) on a roller, D(3,4); load P down at B.
/// Joints B and D give BD = P, AD = DC = −5P/8; joint A gives AB = BC = 3P/8.
/// P = 1 N with EA = 1e9 N keeps strains near 1e-9, so geometric
/// nonlinearity changes the forces by far less than the 1e-6 tolerance.
#[test]
fn determinate_truss_method_of_joints() {
    let text = tautline::verify::DETERMINATE_TRUSS;
    let run = solve_text(text);
    assert_eq!(run.path.stop, StopReason::TargetReached);
    let expected = [("AB", 3.0 / 8.0), ("BC", 3.0 / 8.0), ("AD", -5.0 / 8.0), ("DC", -5.0 / 8.0), ("BD", 1.0)];
    let forces = run.system.member_results(&run.path.final_state.u);
    for (id, f_ref) in expected {
        let m = run.model.members.iter().position(|m| m.label == id).unwrap();
        let e = rel_err(forces[m].force, f_ref, 1.0);
        assert!(e < 1e-6, "{id}: {} vs {f_ref}", forces[m].force);
    }
}

/// Arc-length control (Crisfield 1981, cylindrical; and the Riks/Ramm
/// normal-plane variant) traces the arch from rest through the limit point,
/// down the unstable branch and back up the inverted branch to λ = 1.2·P_lim
/// beyond inversion. Every converged point satisfies the closed form within
/// 1e-8 of the limit load; the pinpointed limit load and crown deflection
/// equal the closed form (Bažant & Cedolin 1991, eq. 4.4.5; Green-Lagrange
/// derived) within 1e-6; both strain measures, every corrector.
#[test]
fn arch_arc_length_through_snap_through() {
    for green in [true, false] {
        let strain = if green { "green" } else { "engineering" };
        let (p_lim, w_lim) = arch_limit(green);
        for variant in ["cylindrical", "normal-plane"] {
            for method in ALL_METHODS {
                let text = arch_model(strain, "arc-length", p_lim, 10, 1.2)
                    .replace("[analysis]", &format!("[analysis]\narc = 0.05\narc_variant = \"{variant}\""));
                let run = trace(model(&text), method);
                let tag = format!("{strain} {variant} {method:?}");
                assert_eq!(run.path.stop, StopReason::TargetReached, "{tag}: {:?}", run.path.last_failure);
                let last = run.path.points.last().unwrap();
                assert!((last.lambda - 1.2).abs() < 1e-9, "{tag}: ended at λ = {}", last.lambda);
                assert!(-last.point > 2.0 * H, "{tag}: ends past inversion, w = {}", -last.point);
                for pt in &run.path.points {
                    let w = -pt.point;
                    let e = (pt.lambda * p_lim - arch_load(w, green)).abs() / p_lim;
                    assert!(e < 1e-8, "{tag} w = {w}: error {e:e}");
                }
                let limits: Vec<_> = run.path.critical.iter().filter(|c| c.kind == tautline::path::CriticalKind::Limit).collect();
                assert_eq!(limits.len(), 2, "{tag}: {:?}", run.path.critical);
                let first = limits[0];
                assert!(rel_err(first.lambda, 1.0, 1.0) < 1e-6, "{tag}: limit λ = {}", first.lambda);
                assert!(rel_err(-first.watched[0], w_lim, 1.0) < 1e-6, "{tag}: limit w = {}", -first.watched[0]);
                // The second limit point is the minimum of the unstable branch: −P_lim.
                assert!(rel_err(limits[1].lambda, -1.0, 1.0) < 1e-6, "{tag}: {}", limits[1].lambda);
            }
        }
    }
}

/// Under load control the arch cannot pass its limit point: loaded towards
/// 1.5·P_lim, the run stops at it (`LimitPoint`) short of the target, the
/// limit reported within 1e-6 of P_lim and the last converged load below it
/// (Bažant & Cedolin 1991, §4.4).
#[test]
fn arch_load_control_stops_at_the_limit_point() {
    let (p_lim, _) = arch_limit(false);
    let run = solve_text(&arch_model("engineering", "load", p_lim, 10, 1.5));
    assert_eq!(run.path.stop, StopReason::LimitPoint);
    let limit = run.path.critical.last().unwrap();
    assert!(limit.kind == tautline::path::CriticalKind::Limit && rel_err(limit.lambda, 1.0, 1.0) < 1e-6, "{limit:?}");
    let last = run.path.points.last().unwrap().lambda;
    assert!(last <= 1.0 + 1e-9 && last > 0.9, "last converged λ = {last}");
}
