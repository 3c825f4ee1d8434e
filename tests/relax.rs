//! Dynamic relaxation with kinetic damping (Barnes 1999) against the static
//! solver and closed forms; form finding to target forces and lengths.

use crate::common::{PRETENSIONED_CABLE, model, rel_err, trace};
use tautline::assembly::System;
use tautline::form::relax::{RelaxConfig, RelaxStop, Relaxation};
use tautline::generate::{Loading, NetOptions, saddle_net};
use tautline::model::{self as tmodel, Method};

fn norm(v: &[f64]) -> f64 {
    v.iter().map(|x| x * x).sum::<f64>().sqrt()
}

/// Relaxes a model's system at load factor `lambda` from u = 0.
fn relax(m: &tmodel::Model, lambda: f64, cfg: &RelaxConfig) -> (System, Vec<f64>, tautline::form::relax::RelaxReport) {
    let sys = System::new(m).expect("system");
    let mut u = vec![0.0; sys.n_free()];
    let mut dr = Relaxation::new(&sys, m.n_nodes());
    let rep = dr.equilibrium(&sys, lambda, &mut u, cfg);
    (sys, u, rep)
}

/// Two independent methods on one problem: a 7×7 pretensioned saddle net
/// (`generate::saddle_net`, prestress from its force densities) with a point
/// load at the centre node, solved by Newton-Raphson through the path tracer
/// (5 load steps, tolerance 1e-12) and by dynamic relaxation from rest with
/// the full load (tolerance 1e-12). They share only the residual; the
/// displacement fields agree within 1e-6 of ‖u‖ (the acceptance
/// figure).
#[test]
fn relaxation_and_newton_agree_on_a_loaded_saddle_net() {
    let g = saddle_net(&NetOptions { nx: 7, ny: 7, ..Default::default() }, "n").unwrap();
    let mut m = tmodel::load_str(&g.toml, "net.toml", None).expect("net loads");
    let centre = m.node_index("N003_003").expect("centre node");
    // Only a point load: 20 kN down at the centre.
    m.loads.retain(|l| l.node == centre);
    m.loads[0].force = [0.0, 0.0, -2.0e4];
    m.analysis.steps = 5;
    m.analysis.tolerance = 1e-12;
    let newton = trace(m.clone(), Method::Newton);
    assert!(newton.path.stop.is_complete(), "{:?}", newton.path.stop);
    let cfg = RelaxConfig { tolerance: 1e-12, max_steps: 500_000 };
    let (_, u, rep) = relax(&m, 1.0, &cfg);
    assert_eq!(rep.stop, RelaxStop::Converged, "{rep:?}");
    assert!(rep.peaks > 0, "kinetic damping never reset: {rep:?}");
    let un = &newton.path.final_state.u;
    let diff: Vec<f64> = u.iter().zip(un).map(|(a, b)| a - b).collect();
    let e = norm(&diff) / norm(un);
    assert!(norm(un) > 1e-3, "the load should move the net");
    assert!(e < 1e-6, "relative displacement difference {e:e} ({rep:?})");
    eprintln!("saddle net: relative difference {e:e}, {rep:?}");
}

/// VERIFICATION case 4 by dynamic relaxation: P = 2·EA(l_c − L_r)/L_r · w/l_c
/// with l_c = √(l² + w²), L_r = l·EA/(EA + T) (equilibrium of the loaded
/// node, engineering strain), solved for w by `verify`'s closed form; w ≈ 0.226726 m
/// for l = 5 m, EA = 1e6 N, T = 1e4 N, P = 1000 N. DR from rest with the full
/// load reaches it within 1e-6 relative.
#[test]
fn relaxation_finds_the_pretensioned_cable_deflection() {
    let (l, ea, t, p) = (5.0f64, 1.0e6, 1.0e4, 1000.0);
    let w = tautline::verify::pretensioned_cable_deflection_closed_form(l, ea, t, p);
    assert!((w - 0.226726).abs() < 1e-6, "closed form w = {w}");
    let m = model(PRETENSIONED_CABLE);
    let (sys, u, rep) = relax(&m, 1.0, &RelaxConfig { tolerance: 1e-12, max_steps: 500_000 });
    assert_eq!(rep.stop, RelaxStop::Converged, "{rep:?}");
    let mid = m.node_index("M").unwrap();
    let uz = sys.dofs.displacement(&u, mid, 2);
    assert!(rel_err(-uz, w, 1e-12) < 1e-6, "w = {} vs {w} ({rep:?})", -uz);
    eprintln!("cable: w = {} vs {w}, {rep:?}", -uz);
}

/// A run capped before it can converge says so: the cap, not convergence.
#[test]
fn relaxation_cap_is_reported_not_hidden() {
    // 500 N per free node: the generator's per-node load before its loads
    // became plan loads (issue 14).
    let g = saddle_net(&NetOptions { nx: 7, ny: 7, load: Loading::PerNode(500.0), ..Default::default() }, "n").unwrap();
    let m = tmodel::load_str(&g.toml, "net.toml", None).expect("net loads");
    let (_, _, rep) = relax(&m, 1.0, &RelaxConfig { tolerance: 1e-12, max_steps: 20 });
    assert_eq!(rep.stop, RelaxStop::StepCap);
    assert_eq!(rep.steps, 20);
    assert!(rep.relative_residual > 1e-12 && rep.relative_residual.is_finite());
}

// ---------------------------------------------------------------------------
// Form finding to targets

/// A chain of `n` unit segments between supports at z = 0, −`p` in z on every
/// inner node, force density `q`; `extra` is appended to member `c{mid}`.
fn chain(n: usize, p: f64, q: f64, mid: usize, extra: &str, form: &str) -> String {
    let mut s = format!("[form]\nforce_density = {q:?}\n{form}\n[[section]]\nname = \"s\"\nEA = 1.0e7\n");
    for i in 0..=n {
        let fix = if i == 0 || i == n { "fix = \"xyz\"\n" } else { "fix = \"y\"\n" };
        s += &format!("[[node]]\nid = \"N{i}\"\nat = [{:?}, 0.0, 0.0]\n{fix}", i as f64);
    }
    for i in 0..n {
        let e = if i == mid { extra } else { "" };
        s += &format!(
            "[[member]]\nid = \"c{i}\"\nkind = \"cable\"\nends = [\"N{i}\", \"N{}\"]\nsection = \"s\"\n{e}\n",
            i + 1
        );
    }
    for i in 1..n {
        s += &format!("[[load]]\nnode = \"N{i}\"\nforce = [0.0, 0.0, {:?}]\n", -p);
    }
    s
}

/// Relative residual of a formed model at its start (load factor 1), by the
/// analysis `System`: the found shape must be in equilibrium with the rest
/// lengths `formed_model` chose.
fn formed_residual(m: &tmodel::Model, form: &tautline::form::FormResult) -> f64 {
    let formed = tautline::form::formed_model(m, form);
    let text = tmodel::write::to_toml(&formed);
    let m2 = tmodel::load_str(&text, "formed.toml", None).unwrap_or_else(|e| panic!("{e}\n{text}"));
    assert!(m2.members.iter().all(|mb| mb.target.is_none()), "formed.toml carries targets");
    let sys = System::new(&m2).expect("system");
    let u = vec![0.0; sys.n_free()];
    let mut r = vec![0.0; sys.n_free()];
    let mut reactions = vec![0.0; 3 * m2.n_nodes()];
    let n = sys.residual(&u, 1.0, &mut r, &mut reactions);
    n.residual / n.force_scale
}

/// Target force on the middle member of a loaded chain: the iteration
/// q ← T/l meets it to the tolerance, the log falls to below it, and the
/// shape is in equilibrium (Schek 1974: the force density equations are nodal
/// equilibrium with N = q·l). Dynamic relaxation with that member pulling at
/// a fixed T must find the same shape: two independent routes.
#[test]
fn target_force_is_met_and_the_shape_balances() {
    let t = 2000.0;
    let m = model(&chain(6, 1000.0, 2500.0, 3, &format!("target_force = {t:?}"), "tolerance = 1e-10"));
    let run = tautline::form::targets::force_density_to_targets(&m).expect("targets");
    assert!(run.converged, "{:?}", run.log);
    assert!(run.log.len() > 2, "one update cannot meet a target that moves the shape");
    assert!(run.log.last().unwrap().max_error <= 1e-10);
    assert!(run.log[0].max_error > 1e-3, "the start is off the target: {:?}", run.log[0]);
    // The member's force read off the shape, not the force the iteration
    // assigns it: the loads are vertical, so every node balances the
    // horizontal pulls and H = q·Δx is one value along the chain; member 0
    // keeps the model's q = 2500 N/m, so H = 2500·Δx₀ and the target member
    // carries N₃ = H·l₃/Δx₃ (derived).
    let x = |i: usize| run.form.positions[i];
    let span = |i: usize| (x(i + 1)[0] - x(i)[0], ((0..3).map(|k| (x(i + 1)[k] - x(i)[k]).powi(2)).sum::<f64>()).sqrt());
    let h = 2500.0 * span(0).0;
    let (dx3, l3) = span(3);
    let n3 = h * l3 / dx3;
    assert!(rel_err(n3, t, 1.0) <= 1e-9, "force from the shape {n3} vs target {t}");
    let res = formed_residual(&m, &run.form);
    assert!(res <= 1e-9, "relative residual of the formed model {res:e}");

    let cfg = RelaxConfig { tolerance: 1e-13, max_steps: 500_000 };
    let (dr, rep) = tautline::form::relax::relax_form(&m, &cfg).expect("relax form");
    assert!(rep.converged(), "{rep:?}");
    for (a, b) in dr.positions.iter().zip(&run.form.positions) {
        for k in 0..3 {
            assert!((a[k] - b[k]).abs() < 1e-7, "{a:?} vs {b:?} ({rep:?})");
        }
    }
}

/// Target length of the middle member: q ← q·l/L* meets it; equilibrium holds.
#[test]
fn target_length_is_met() {
    let target = 1.08;
    let m = model(&chain(6, 1000.0, 2500.0, 3, &format!("target_length = {target:?}"), ""));
    let plain = tautline::form::force_density(&m).expect("plain form");
    assert!((plain.lengths[3] - target).abs() > 0.05, "target too close to the plain shape");
    let run = tautline::form::targets::force_density_to_targets(&m).expect("targets");
    assert!(run.converged, "{:?}", run.log);
    assert!(rel_err(run.form.lengths[3], target, 1.0) <= m.form.tolerance);
    let res = formed_residual(&m, &run.form);
    assert!(res <= 1e-9, "relative residual of the formed model {res:e}");
}

/// Force density form finding by dynamic relaxation reproduces the linear
/// solve (Schek 1974) on a saddle net: the same equations, solved two ways.
#[test]
fn relaxed_form_matches_the_linear_force_density_solve() {
    let g = saddle_net(&NetOptions { nx: 7, ny: 7, ..Default::default() }, "n").unwrap();
    let mut m = tmodel::load_str(&g.toml, "net.toml", None).expect("net loads");
    m.form.force_density = Some(2000.0);
    let lin = tautline::form::force_density(&m).expect("linear");
    let (dr, rep) = tautline::form::relax::relax_form(&m, &RelaxConfig { tolerance: 1e-13, max_steps: 500_000 })
        .expect("relax");
    assert!(rep.converged(), "{rep:?}");
    let worst = dr
        .positions
        .iter()
        .zip(&lin.positions)
        .map(|(a, b)| (0..3).map(|k| (a[k] - b[k]).abs()).fold(0.0, f64::max))
        .fold(0.0, f64::max);
    assert!(worst < 1e-8, "largest position difference {worst:e} m ({rep:?})");
}

fn load_err(text: &str) -> String {
    match tmodel::load_str(text, "test.toml", None) {
        Ok(_) => panic!("model should be rejected"),
        Err(e) => e.to_string(),
    }
}

#[test]
fn bad_targets_are_reported_with_file_line_and_item() {
    let e = load_err(&chain(4, 1.0, 1.0, 1, "target_force = 0.0", ""));
    assert!(e.contains("test.toml:") && e.contains("member \"c1\"") && e.contains("`target_force` must be greater than zero"), "{e}");
    let e = load_err(&chain(4, 1.0, 1.0, 1, "target_force = -3.0", ""));
    assert!(e.contains("`target_force` must be greater than zero"), "{e}");
    let e = load_err(&chain(4, 1.0, 1.0, 2, "target_force = 3.0\ntarget_length = 1.0", ""));
    assert!(e.contains("member \"c2\"") && e.contains("both `target_force` and `target_length`"), "{e}");
    let e = load_err(&chain(4, 1.0, 1.0, 2, "target_lenght = 1.0", ""));
    assert!(e.contains("did you mean \"target_length\"?"), "{e}");
    let e = load_err(&chain(4, 1.0, 1.0, 2, "", "max_iterations = 0"));
    assert!(e.contains("[form]") && e.contains("`max_iterations` must be at least 1"), "{e}");
    let e = load_err(&chain(4, 1.0, 1.0, 2, "", "method = \"relx\""));
    assert!(e.contains("unknown method \"relx\""), "{e}");

    // A member between two fully supported nodes keeps its drawn length.
    let fixed_pair = |extra: &str| {
        let mut s = chain(3, 1.0, 1.0, 9, "", "");
        s += &format!(
            "[[node]]\nid = \"P\"\nat = [0.0, 2.0, 0.0]\nfix = \"xyz\"\n[[member]]\nid = \"tie\"\nkind = \"cable\"\n\
             ends = [\"N0\", \"P\"]\nsection = \"s\"\n{extra}\n"
        );
        s
    };
    let e = load_err(&fixed_pair("target_length = 2.5"));
    assert!(e.contains("member \"tie\"") && e.contains("cannot make it 2.5"), "{e}");
    let m = tmodel::load_str(&fixed_pair("target_force = 5.0"), "test.toml", None).expect("a warning, not an error");
    assert!(
        m.warnings.iter().any(|w| w.to_string().contains("does not shape the form")),
        "{:?}",
        m.warnings
    );
    // Dynamic relaxation leaves length targets to the force density method.
    let m = model(&chain(4, 1.0, 1.0, 1, "target_length = 1.1", ""));
    let e = tautline::form::relax::relax_form(&m, &RelaxConfig::default()).unwrap_err();
    assert!(e.to_string().contains("force-density"), "{e}");
}

// ---------------------------------------------------------------------------
// Command line

fn cli(args: &[&str]) -> (i32, String) {
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_tautline")).args(args).output().expect("runs");
    let text = String::from_utf8_lossy(&out.stdout).to_string() + &String::from_utf8_lossy(&out.stderr);
    (out.status.code().unwrap_or(-1), text)
}

fn temp_dir(name: &str) -> std::path::PathBuf {
    let d = std::env::temp_dir().join(format!("tautline-relax-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// `relax` capped before convergence: exit 3, says where it stopped, and
/// writes the state reached; uncapped: exit 0 with the same watch point as
/// `solve`.
#[test]
fn relax_command_reports_its_cap_and_agrees_with_solve() {
    let d = temp_dir("cli");
    let model = d.join("cable.toml");
    std::fs::write(&model, PRETENSIONED_CABLE).unwrap();
    let m = model.to_str().unwrap();
    let capped = d.join("capped");
    let (code, text) = cli(&["relax", m, "-o", capped.to_str().unwrap(), "--max-steps", "2"]);
    assert_eq!(code, 3, "{text}");
    assert!(text.contains("stopped before the target") && text.contains("2 time steps"), "{text}");
    assert!(capped.join("relax.csv").is_file());
    let full = d.join("full");
    let (code, text) = cli(&["relax", m, "-o", full.to_str().unwrap()]);
    assert_eq!(code, 0, "{text}");
    let csv = std::fs::read_to_string(full.join("relax.csv")).unwrap();
    let row = csv.lines().find(|l| l.starts_with("M,")).expect("row of M");
    let uz: f64 = row.split(',').nth(3).unwrap().parse().unwrap();
    let run = trace(crate::common::model(PRETENSIONED_CABLE), Method::Newton);
    let mid = run.model.node_index("M").unwrap();
    let w = run.system.dofs.displacement(&run.path.final_state.u, mid, 2);
    assert!(rel_err(uz, w, 1e-12) < 1e-9, "relax {uz} vs solve {w}");
    let _ = std::fs::remove_dir_all(&d);
}

/// `form` with targets it cannot meet within `max_iterations`: exit 3, names
/// the member furthest off, still writes the best shape and the log; met:
/// exit 0 and the log ends below the tolerance.
#[test]
fn form_command_with_targets_writes_a_convergence_log() {
    let d = temp_dir("form");
    let model = d.join("chain.toml");
    std::fs::write(&model, chain(6, 1000.0, 2500.0, 3, "target_force = 2000.0", "max_iterations = 1")).unwrap();
    let out = d.join("stopped");
    let (code, text) = cli(&["form", model.to_str().unwrap(), "-o", out.to_str().unwrap()]);
    assert_eq!(code, 3, "{text}");
    assert!(text.contains("member \"c3\" is furthest off"), "{text}");
    assert!(out.join("formed.toml").is_file() && out.join("form.csv").is_file());
    let log = std::fs::read_to_string(out.join("form_log.csv")).unwrap();
    assert_eq!(log.lines().next(), Some("iteration,max_error,member"));
    assert_eq!(log.lines().count(), 3, "{log}");

    std::fs::write(&model, chain(6, 1000.0, 2500.0, 3, "target_force = 2000.0", "")).unwrap();
    let out = d.join("met");
    let (code, text) = cli(&["form", model.to_str().unwrap(), "-o", out.to_str().unwrap()]);
    assert_eq!(code, 0, "{text}");
    let log = std::fs::read_to_string(out.join("form_log.csv")).unwrap();
    let last: f64 = log.lines().last().unwrap().split(',').nth(1).unwrap().parse().unwrap();
    assert!(last <= 1e-9, "{log}");
    let formed = std::fs::read_to_string(out.join("formed.toml")).unwrap();
    assert!(!formed.contains("target_force"), "{formed}");
    // The same model by dynamic relaxation: met, no log (no force density
    // updates), and the middle member carries its target force.
    let out = d.join("relax");
    let (code, text) = cli(&["form", model.to_str().unwrap(), "-o", out.to_str().unwrap(), "--method", "relax"]);
    assert_eq!(code, 0, "{text}");
    let csv = std::fs::read_to_string(out.join("form.csv")).unwrap();
    let f: f64 = csv.lines().find(|l| l.starts_with("c3,")).unwrap().split(',').nth(1).unwrap().parse().unwrap();
    assert!(rel_err(f, 2000.0, 1.0) < 1e-12, "{csv}");
    // Out of reach: with the other members at q = 2500 N/m the horizontal
    // force is below 2500·6/5 = 3000 N, so no shape gives the middle member
    // 4000 N. Exit 3, the member named, the best shape still written.
    std::fs::write(&model, chain(6, 1000.0, 2500.0, 3, "target_force = 4000.0", "")).unwrap();
    let out = d.join("unreachable");
    let (code, text) = cli(&["form", model.to_str().unwrap(), "-o", out.to_str().unwrap()]);
    assert_eq!(code, 3, "{text}");
    assert!(text.contains("member \"c3\" is furthest off"), "{text}");
    assert!(out.join("formed.toml").is_file() && out.join("form_log.csv").is_file());
    let _ = std::fs::remove_dir_all(&d);
}
