//! Facts that hold on any model: balance of reactions and loads, agreement of
//! the correctors, a tangent that is the derivative of the residual, slack
//! cables and mechanisms reported in words (common practice, no source).

use crate::common::*;
use tautline::model::Method;
use tautline::path::StopReason;

fn demo_models() -> Vec<(String, String)> {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("models");
    let mut out = Vec::new();
    for e in std::fs::read_dir(&dir).unwrap() {
        let p = e.unwrap().path();
        if p.extension().is_some_and(|x| x == "toml") {
            out.push((p.display().to_string(), std::fs::read_to_string(&p).unwrap()));
        }
    }
    assert!(out.len() >= 2, "models/ holds at least two demo models");
    out
}

/// Reactions balance the applied loads to 1e-9 relative on every demo model,
/// and each demo model reaches its target.
#[test]
fn demo_models_balance_reactions_and_loads() {
    for (name, text) in demo_models() {
        let m = tautline::model::load_str(&text, &name, None).unwrap();
        let method = m.analysis.method;
        let run = trace(m, method);
        assert_eq!(run.path.stop, StopReason::TargetReached, "{name}");
        let res = tautline::results::build(&run.model, &run.system, &run.path, &run.wasted, 0.0);
        assert!(res.equilibrium.relative_imbalance < 1e-9, "{name}: {:?}", res.equilibrium);
        assert!(res.converged);
    }
}

/// Every corrector reaches the same equilibrium of the prestressed demo net.
#[test]
fn correctors_agree_on_the_demo_net() {
    let text = std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/models/courtyard_net.toml")).unwrap();
    let reference = trace(model(&text), Method::Newton);
    let u_ref = &reference.path.final_state.u;
    let scale = u_ref.iter().map(|v| v.abs()).fold(0.0, f64::max);
    for method in ALL_METHODS {
        let run = trace(model(&text), method);
        assert_eq!(run.path.stop, StopReason::TargetReached, "{method:?}");
        let diff = run.path.final_state.u.iter().zip(u_ref).map(|(a, b)| (a - b).abs()).fold(0.0, f64::max);
        assert!(diff <= 1e-8 * scale, "{method:?}: max difference {diff:e} of {scale:e}");
    }
}

/// The assembled tangent is the derivative of the assembled residual: a
/// central difference along a random direction matches K·v, and K is stored
/// as one symmetric triangle (the product uses it both ways).
#[test]
fn assembled_tangent_is_derivative_of_residual() {
    let text = std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/models/courtyard_net.toml")).unwrap();
    let run = trace(model(&text), Method::Newton);
    let sys = &run.system;
    let n = sys.n_free();
    let u = &run.path.final_state.u;
    let v: Vec<f64> = (0..n).map(|i| ((i * 37 % 11) as f64 - 5.0) / 5.0).collect();
    let mut k = sys.new_tangent_values();
    let mut r = vec![0.0; n];
    let mut react = vec![0.0; 3 * run.model.n_nodes()];
    sys.residual_and_tangent(u, 1.0, &mut r, &mut react, &mut k);
    let mut kv = vec![0.0; n];
    sys.tangent_times(&k, &v, &mut kv);
    let h = 1e-6;
    let (mut rp, mut rm) = (vec![0.0; n], vec![0.0; n]);
    let up: Vec<f64> = u.iter().zip(&v).map(|(a, b)| a + h * b).collect();
    let um: Vec<f64> = u.iter().zip(&v).map(|(a, b)| a - h * b).collect();
    sys.residual(&up, 1.0, &mut rp, &mut react);
    sys.residual(&um, 1.0, &mut rm, &mut react);
    let kmax = kv.iter().map(|x| x.abs()).fold(0.0, f64::max);
    for i in 0..n {
        let fd = (rp[i] - rm[i]) / (2.0 * h);
        assert!((fd - kv[i]).abs() < 1e-6 * kmax, "dof {i}: fd {fd} vs K·v {}", kv[i]);
    }
}

const HANGER: &str = r#"
[[section]]
name = "s"
EA = 1.0e5
[[node]]
id = "top"
at = [0.0, 0.0, 0.0]
fix = "xyz"
[[node]]
id = "N"
at = [0.0, 0.0, -1.0]
fix = "xy"
[[node]]
id = "foot"
at = [0.0, 0.0, -2.0]
fix = "xyz"
[[member]]
id = "hanger"
kind = "cable"
ends = ["top", "N"]
section = "s"
[[member]]
id = "post"
kind = "bar"
ends = ["N", "foot"]
section = "s"
[[load]]
node = "N"
force = [0.0, 0.0, 100.0]
[analysis]
steps = 2
tolerance = 1e-12
"#;

/// A cable pushed towards its support by a reversed (upward) load goes slack:
/// zero force, flagged slack, and the post below carries the whole load in
/// tension.
#[test]
fn reversed_load_slackens_cable() {
    let run = solve_text(HANGER);
    assert_eq!(run.path.stop, StopReason::TargetReached);
    let res = tautline::results::build(&run.model, &run.system, &run.path, &run.wasted, 0.0);
    assert_eq!(res.slack_members, vec!["hanger".to_string()]);
    let f = run.system.member_results(&run.path.final_state.u);
    assert_eq!(f[0].force, 0.0);
    assert!(f[0].slack);
    assert!(rel_err(f[1].force, 100.0, 1.0) < 1e-6, "post force {}", f[1].force);
}

/// Without the post, the slack cable leaves node N free to move in z: the run
/// stops cleanly and the message names that node and direction.
#[test]
fn slack_cable_alone_is_a_mechanism_named_in_words() {
    let text = HANGER.replace(
        "[[member]]\nid = \"post\"\nkind = \"bar\"\nends = [\"N\", \"foot\"]\nsection = \"s\"\n",
        "",
    );
    let run = solve_text(&text);
    assert!(matches!(run.path.stop, StopReason::NoConvergence | StopReason::Mechanism), "{:?}", run.path.stop);
    let msg = tautline::results::stop_message(&run.model, &run.path);
    println!("{msg}");
    assert!(msg.contains("N.z"), "{msg}");
    assert!(msg.contains("without resistance"), "{msg}");
}

/// A node held by a single bar can swing sideways: the unloaded structure is
/// a mechanism from the start, reported with the node that moves.
#[test]
fn unbraced_node_is_reported_as_mechanism() {
    let text = r#"
[[section]]
name = "s"
EA = 1.0e5
[[node]]
id = "base"
at = [0.0, 0.0, 0.0]
fix = "xyz"
[[node]]
id = "tip"
at = [1.0, 0.0, 0.0]
[[member]]
id = "arm"
kind = "bar"
ends = ["base", "tip"]
section = "s"
[[load]]
node = "tip"
force = [1.0, 0.0, 0.0]
"#;
    let run = solve_text(text);
    assert_eq!(run.path.stop, StopReason::Mechanism);
    let mech = run.path.mechanism.as_ref().unwrap();
    let labels: Vec<String> = mech.moving.iter().map(|nd| run.model.node_dir_label(*nd)).collect();
    assert!(labels.iter().any(|l| l == "tip.y" || l == "tip.z"), "{labels:?}");
    let msg = tautline::results::stop_message(&run.model, &run.path);
    assert!(msg.contains("mechanism") && msg.contains("tip."), "{msg}");
}

/// A step that runs out of iterations is never reported as converged: the
/// run stops with the step, the load factor tried, the residual, the cause
/// and what to try (common practice, no source).
#[test]
fn iteration_cap_is_reported_with_its_cause_and_remedy() {
    let text = PRETENSIONED_CABLE
        .replace("steps = 4", "steps = 1\nmax_iterations = 1\nmax_cutbacks = 0")
        .replace("tolerance = 1e-13", "tolerance = 1e-14");
    for method in [Method::Newton, Method::Bfgs] {
        let run = trace(model(&text), method);
        assert_eq!(run.path.stop, StopReason::NoConvergence, "{method:?}");
        assert_eq!(run.path.points.len(), 1, "only the unloaded state converged");
        let msg = tautline::results::stop_message(&run.model, &run.path);
        assert!(msg.contains("step 1 did not converge"), "{msg}");
        assert!(msg.contains("relative residual"), "{msg}");
        assert!(msg.contains("last converged load factor is 0.000000"), "{msg}");
        assert!(msg.contains("ran out of iterations") || msg.contains("diverged"), "{msg}");
        assert!(msg.contains("max_iterations") || msg.contains("smaller steps"), "{msg}");
        let res = tautline::results::build(&run.model, &run.system, &run.path, &run.wasted, 0.0);
        assert!(!res.converged);
    }
}
