//! Issue 17, the engineer's workflow end to end: dynamic relaxation that
//! converges wherever `solve` does, an arc-length run that heads for its
//! target, a load file added to a formed model, `check`'s screening and the
//! warnings of `solve`, command-line values with suggestions.
//!
//! CLI tests run the built binary in a scratch folder under the system temp
//! dir, removed when the test ends.

use crate::common::{model, trace};
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::atomic::{AtomicUsize, Ordering};
use tautline::assembly::System;
use tautline::form::relax::{RelaxConfig, RelaxStop, Relaxation};
use tautline::generate::{NetOptions, saddle_net};
use tautline::model::{self as tmodel, Method, Model};
use tautline::path::StopReason;

// ---------------------------------------------------------------------------
// Helpers

const BIN: &str = env!("CARGO_BIN_EXE_tautline");

/// A scratch folder, unique per test and process, removed on drop.
pub struct Scratch {
    pub dir: PathBuf,
}

impl Scratch {
    pub fn new(name: &str) -> Scratch {
        static COUNTER: AtomicUsize = AtomicUsize::new(0);
        let n = COUNTER.fetch_add(1, Ordering::Relaxed);
        let dir = std::env::temp_dir().join(format!("tautline-wf-{name}-{}-{n}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).expect("create scratch folder");
        Scratch { dir }
    }

    pub fn path(&self, rel: &str) -> PathBuf {
        self.dir.join(rel)
    }

    pub fn write(&self, rel: &str, text: &str) -> PathBuf {
        let p = self.path(rel);
        std::fs::write(&p, text).expect("write scratch file");
        p
    }
}

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.dir);
    }
}

pub struct Run {
    pub code: i32,
    pub stdout: String,
    pub stderr: String,
}

impl std::fmt::Display for Run {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "exit {}\n--- stdout\n{}--- stderr\n{}", self.code, self.stdout, self.stderr)
    }
}

/// Runs the binary with `args` in the folder `cwd`.
pub fn tautline_in(cwd: &Path, args: &[&str]) -> Run {
    let out = Command::new(BIN).current_dir(cwd).args(args).output().expect("run tautline");
    Run {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}

fn json(path: &Path) -> Value {
    serde_json::from_str(&std::fs::read_to_string(path).expect("read json")).expect("valid json")
}

fn norm(v: &[f64]) -> f64 {
    v.iter().map(|x| x * x).sum::<f64>().sqrt()
}

fn repo(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join(rel)
}

// ---------------------------------------------------------------------------
// 1. Dynamic relaxation converges where `solve` does, to the same state

/// Relaxes `m` at load factor `lambda` from rest and traces it with Newton
/// to the same load factor, both to a relative residual of 1e-11; returns
/// the relative difference of the displacement fields and the relaxation's
/// report. Two independent methods sharing only the residual: a difference
/// of 1e-7 of ‖u‖ is far below any engineering use and far above the
/// residual tolerance's effect on u (the condition numbers here are below
/// 1e4).
fn relax_against_newton(mut m: Model, lambda: f64) -> (f64, tautline::form::relax::RelaxReport) {
    m.analysis.tolerance = 1e-11;
    m.analysis.target = lambda;
    let newton = trace(m.clone(), Method::Newton);
    assert!(newton.path.stop.is_complete(), "Newton: {:?}", newton.path.stop);
    let sys = System::new(&m).expect("system");
    let mut u = vec![0.0; sys.n_free()];
    let mut dr = Relaxation::new(&sys, m.n_nodes());
    let rep = dr.equilibrium(&sys, lambda, &mut u, &RelaxConfig { tolerance: 1e-11, max_steps: 1_000_000 });
    assert_eq!(rep.stop, RelaxStop::Converged, "{rep:?}");
    let un = &newton.path.final_state.u;
    assert!(norm(un) > 1e-4, "the load should move the structure");
    let diff: Vec<f64> = u.iter().zip(un).map(|(a, b)| a - b).collect();
    (norm(&diff) / norm(un), rep)
}

/// The courtyard demo net at load factor 1: some hogging cables go slack
/// under the full snow load at once, and relaxation used to diverge (their
/// directions had almost no mass when they tightened again).
#[test]
fn relax_meets_newton_on_the_courtyard_net_at_full_load() {
    let m = tmodel::load(&repo("models/courtyard_net.toml")).expect("demo model");
    let (e, rep) = relax_against_newton(m, 1.0);
    assert!(e < 1e-7, "relative difference {e:e} ({rep:?})");
}

/// A generated 9 × 9 saddle net under its default 600 N/m² (arching edge
/// cables go slack).
#[test]
fn relax_meets_newton_on_a_generated_9x9_net() {
    let g = saddle_net(&NetOptions { nx: 9, ny: 9, ..Default::default() }, "n").unwrap();
    let m = tmodel::load_str(&g.toml, "net.toml", None).expect("net");
    let (e, rep) = relax_against_newton(m, 1.0);
    assert!(e < 1e-7, "relative difference {e:e} ({rep:?})");
}

/// A net form-found under its snow load (force density method, the formed
/// model starts at load factor 1 in equilibrium), relaxed at twice the snow.
#[test]
fn relax_meets_newton_on_a_formed_snow_net() {
    let g = saddle_net(&NetOptions { nx: 9, ny: 9, ..Default::default() }, "n").unwrap();
    let text = format!("{}\n[form]\nforce_density = 2000.0\n", g.toml);
    let m = tmodel::load_str(&text, "net.toml", None).expect("net");
    let found = tautline::form::force_density(&m).expect("form");
    let formed = tautline::form::formed_model(&m, &found);
    assert_eq!(formed.analysis.start_load_factor, 1.0);
    let (e, rep) = relax_against_newton(formed, 2.0);
    assert!(e < 1e-7, "relative difference {e:e} ({rep:?})");
}

/// `tautline relax` on the demo net: exit 0 and relax.csv holding `solve`'s
/// displacement of the watched centre node.
#[test]
fn relax_command_converges_on_the_demo_net() {
    let dir = Scratch::new("relax-demo");
    let model = repo("models/courtyard_net.toml");
    let r = tautline_in(&dir.dir, &["relax", model.to_str().unwrap(), "-o", "r"]);
    assert_eq!(r.code, 0, "{r}");
    assert!(r.stdout.contains("done: relative residual"), "{r}");
    let s = tautline_in(&dir.dir, &["solve", model.to_str().unwrap(), "-o", "s"]);
    assert_eq!(s.code, 0, "{s}");
    let relax = std::fs::read_to_string(dir.path("r/relax.csv")).unwrap();
    let uz = relax.lines().find(|l| l.starts_with("N33,")).unwrap().split(',').nth(3).unwrap().parse::<f64>().unwrap();
    let path = std::fs::read_to_string(dir.path("s/path.csv")).unwrap();
    let last = path.lines().last().unwrap().split(',').nth(2).unwrap().parse::<f64>().unwrap();
    assert!((uz - last).abs() <= 1e-6 * last.abs(), "relax {uz} against solve {last}");
    for v in relax.lines().skip(1).flat_map(|l| l.split(',').skip(1).map(|c| c.parse::<f64>().unwrap())) {
        assert!(v.is_finite() && v.abs() < 1.0, "relax.csv holds {v}");
    }
}

// ---------------------------------------------------------------------------
// 2. Arc-length heads for its target

/// A stayed entrance canopy (invented scenario): a roof frame of bars hinged
/// to a wall, hung from two wall anchors by four catenary stays with
/// weight; the frame's weight is a dead load found at step 0, snow on the
/// free nodes is the reference load. Uplift (λ < 0) lets the stays go slack,
/// so the path behind the start is much softer than ahead of it.
pub const STAYED_CANOPY: &str = r#"
title = "Stayed canopy, dead load at step 0"
[units]
force = "kN"
length = "m"
[[section]]
name = "frame"
EA = 2.0e5
weight = 0.5
[[section]]
name = "stay"
EA = 3.0e4
weight = 0.05
[[node]]
id = "W1"
at = [0.0, 0.0, 0.0]
fix = "xyz"
[[node]]
id = "W2"
at = [0.0, 4.0, 0.0]
fix = "xyz"
[[node]]
id = "A1"
at = [0.0, 0.0, 4.0]
fix = "xyz"
[[node]]
id = "A2"
at = [0.0, 4.0, 4.0]
fix = "xyz"
[[node]]
id = "M1"
at = [2.5, 0.0, 0.0]
[[node]]
id = "M2"
at = [2.5, 4.0, 0.0]
[[node]]
id = "T1"
at = [5.0, 0.0, 0.0]
[[node]]
id = "T2"
at = [5.0, 4.0, 0.0]
[[member]]
id = "b1"
kind = "bar"
ends = ["W1", "M1"]
section = "frame"
[[member]]
id = "b2"
kind = "bar"
ends = ["M1", "T1"]
section = "frame"
[[member]]
id = "b3"
kind = "bar"
ends = ["W2", "M2"]
section = "frame"
[[member]]
id = "b4"
kind = "bar"
ends = ["M2", "T2"]
section = "frame"
[[member]]
id = "b5"
kind = "bar"
ends = ["M1", "M2"]
section = "frame"
[[member]]
id = "b6"
kind = "bar"
ends = ["T1", "T2"]
section = "frame"
[[member]]
id = "b7"
kind = "bar"
ends = ["W1", "M2"]
section = "frame"
[[member]]
id = "b8"
kind = "bar"
ends = ["M1", "T2"]
section = "frame"
[[member]]
id = "s1"
kind = "catenary"
ends = ["A1", "M1"]
section = "stay"
rest_length = 4.712284
[[member]]
id = "s2"
kind = "catenary"
ends = ["A1", "T1"]
section = "stay"
rest_length = 6.396048
[[member]]
id = "s3"
kind = "catenary"
ends = ["A2", "M2"]
section = "stay"
rest_length = 4.712284
[[member]]
id = "s4"
kind = "catenary"
ends = ["A2", "T2"]
section = "stay"
rest_length = 6.396048
[[load]]
node = "M1"
force = [0.0, 0.0, -5.0]
[[load]]
node = "M2"
force = [0.0, 0.0, -5.0]
[[load]]
node = "T1"
force = [0.0, 0.0, -2.5]
[[load]]
node = "T2"
force = [0.0, 0.0, -2.5]
[analysis]
method = "newton"
control = "arc-length"
steps = 10
target = 1.0
node = "T1"
dir = "z"
max_steps = 60
"#;

/// With no arc, and with arcs of 0.1 m and 0.5 m (far longer than the
/// tip's whole movement to λ = 1, about 4 mm), the first step goes towards
/// the target and the run reaches it with λ rising at every step. Before,
/// the long arcs' first step converged at λ ≈ −0.58 (stays slack) and the
/// run walked away until max_steps.
#[test]
fn arc_length_first_step_heads_for_the_target() {
    for arc in [None, Some(0.1), Some(0.5)] {
        let mut m = model(STAYED_CANOPY);
        m.analysis.arc = arc;
        let run = trace(m, Method::Newton);
        let lambdas: Vec<f64> = run.path.points.iter().map(|p| p.lambda).collect();
        assert_eq!(run.path.stop, StopReason::TargetReached, "arc {arc:?}: {lambdas:?}");
        assert!(lambdas.windows(2).all(|w| w[1] > w[0]), "arc {arc:?}: {lambdas:?}");
        assert!((lambdas.last().unwrap() - 1.0).abs() < 1e-12, "arc {arc:?}: {lambdas:?}");
    }
}

/// A run that stops at max_steps while its load factor moves away from the
/// target says so, instead of advising more steps: the roof arch demo under
/// arc-length control past its limit point (λ falls after step 2), stopped
/// at step 4.
#[test]
fn a_run_moving_away_from_its_target_says_so() {
    let dir = Scratch::new("away");
    let model = repo("models/roof_arch.toml");
    let m = model.to_str().unwrap();
    let r = tautline_in(&dir.dir, &["solve", m, "-o", "a", "--control", "arc-length", "--target", "10", "--arc", "0.2", "--max-steps", "4", "-q"]);
    assert_eq!(r.code, 3, "{r}");
    assert!(r.stdout.contains("moving away from the target 10"), "{r}");
    assert!(!r.stdout.contains("raise max_steps"), "{r}");
    // The same run with room to go on reaches the target: the message is
    // about this run's end, not a property of the model.
    let r = tautline_in(&dir.dir, &["solve", m, "-o", "b", "--control", "arc-length", "--target", "10", "--arc", "0.2", "-q"]);
    assert_eq!(r.code, 0, "{r}");
    let res = json(&dir.path("b/results.json"));
    assert_eq!(res["stop_reason"], "target_reached", "{res}");
}

// ---------------------------------------------------------------------------
// 4. Form finding with many target forces converges

/// A generated 7 × 7 net (84 members) with 42 target forces (every second
/// member, 3000–3900 N) and the rest at 2000 N/m. The fixed-point update
/// q ← T/l gained about 6 % a step here and stopped at 200 updates with an
/// error of 4e-7; Newton's method on the targets meets 1e-9 in a handful
/// of updates, and the shape is the one dynamic relaxation finds with the
/// target members pulling exactly T (an independent method): member forces
/// agree within 1e-6.
#[test]
fn form_meets_many_target_forces_and_agrees_with_relaxation() {
    use tautline::form::{relax, targets};
    use tautline::model::FormTarget;
    let g = saddle_net(&NetOptions { nx: 7, ny: 7, ..Default::default() }, "n").unwrap();
    let text = format!("{}\n[form]\nforce_density = 2000.0\n", g.toml);
    let mut m = tmodel::load_str(&text, "net.toml", None).expect("net");
    let mut n_targets = 0;
    for (k, member) in m.members.iter_mut().enumerate() {
        if k % 2 == 1 {
            member.target = Some(FormTarget::Force(3000.0 + 150.0 * (k % 7) as f64));
            n_targets += 1;
        }
    }
    assert_eq!(n_targets, 42);
    let run = targets::force_density_to_targets(&m).expect("form");
    assert!(run.converged, "error {:e} after {} solves", run.max_error, run.log.len());
    assert!(run.max_error <= 1e-9 && run.log.len() <= 20, "{:?}", run.log);
    let cfg = relax::RelaxConfig { tolerance: 1e-12, max_steps: 2_000_000 };
    let (dr, rep) = relax::relax_form(&m, &cfg).expect("relax");
    assert!(rep.converged(), "{rep:?}");
    for (k, (a, b)) in run.form.forces.iter().zip(&dr.forces).enumerate() {
        assert!((a - b).abs() <= 1e-6 * b.abs(), "member {k}: {a} against {b}");
    }
}

// ---------------------------------------------------------------------------
// 5. `--control displacement` needs its target and point

/// The README's two-cable example without `node` and `dir` (its watched
/// point is A2.z).
const NO_POINT: &str = r#"
title = "two cables, no controlled point"
[units]
force = "kN"
length = "m"
[[section]]
name = "strand"
EA = 2.0e4
[[node]]
id = "A1"
at = [0.0, 0.0, 2.5]
fix = "xyz"
[[node]]
id = "A2"
at = [2.0, 0.0, 2.5]
[[node]]
id = "A3"
at = [4.0, 0.0, 2.5]
fix = "xyz"
[[member]]
id = "c1"
kind = "cable"
ends = ["A1", "A2"]
section = "strand"
prestress = 20.0
[[member]]
id = "c2"
kind = "cable"
ends = ["A2", "A3"]
section = "strand"
prestress = 20.0
[[load]]
node = "A2"
force = [0.0, 0.0, -3.0]
[analysis]
steps = 4
target = 1.5
"#;

#[test]
fn control_displacement_needs_its_target_and_point() {
    let dir = Scratch::new("ctrl");
    dir.write("m.toml", NO_POINT);
    let run = |args: &[&str]| tautline_in(&dir.dir, args);
    // No --target: the model's 1.5 is a load factor, not 1.5 m.
    let r = run(&["solve", "m.toml", "-o", "a", "--control", "displacement"]);
    assert_eq!(r.code, 2, "{r}");
    assert!(r.stderr.contains("needs --target") && r.stderr.contains("target = 1.5 is a load factor"), "{r}");
    assert!(!dir.path("a/results.json").exists());
    // A target but no point in the model and no --watch.
    let r = run(&["solve", "m.toml", "-o", "a", "--control", "displacement", "--target", "-0.02"]);
    assert_eq!(r.code, 2, "{r}");
    assert!(r.stderr.contains("needs the controlled point"), "{r}");
    // Both given: the point taken is named, and the run controls it.
    let r = run(&["solve", "m.toml", "-o", "a", "--control", "displacement", "--target", "-0.02", "--watch", "A2.z"]);
    assert_eq!(r.code, 0, "{r}");
    assert!(r.stderr.contains("controls A2.z"), "{r}");
    let res = json(&dir.path("a/results.json"));
    let last = res["steps"].as_array().unwrap().last().unwrap().clone();
    assert!((last["point"].as_f64().unwrap() + 0.02).abs() < 1e-12, "{last}");
}

// ---------------------------------------------------------------------------
// 6. Misspelt values; `check` finds every mechanism at once

#[test]
fn misspelt_command_line_values_get_a_suggestion() {
    let dir = Scratch::new("misspelt");
    dir.write("m.toml", NO_POINT);
    for (args, flag, near) in [
        (vec!["solve", "m.toml", "-o", "a", "--method", "newtn"], "--method newtn", "newton"),
        (vec!["solve", "m.toml", "-o", "a", "--control", "arc-lenght"], "--control arc-lenght", "arc-length"),
        (vec!["solve", "m.toml", "-o", "a", "--strain", "grene"], "--strain grene", "green"),
        (vec!["form", "m.toml", "-o", "a", "--method", "relx"], "--method relx", "relax"),
    ] {
        let r = tautline_in(&dir.dir, &args);
        assert_eq!(r.code, 2, "{r}");
        assert!(r.stderr.starts_with(&format!("error: {flag}: not a valid value")), "{r}");
        assert!(r.stderr.contains(&format!("help: did you mean \"{near}\"?")), "{r}");
        assert!(!dir.path("a").exists(), "{r}");
    }
}

/// A plane frame of five bars in z = 0 (invented): A and B fixed, C and D
/// held in z, E free. Counting (Maxwell's rule; derived): in the plane, 3
/// free nodes × 2 DOF against 5 independent bars leave 1 mechanism (the
/// sway of C, D and E in x, no diagonal); out of the plane E.z has no
/// stiffness at all (no prestress): 2 independent mechanisms. `solve` stops
/// at the first; `check` names both at once. Member DE has a force density
/// and no prestress, which `solve` ignores.
const TWO_MECHANISMS: &str = r#"
title = "frame with two mechanisms"
[[section]]
name = "s"
EA = 1.0e6
[[node]]
id = "A"
at = [0.0, 0.0, 0.0]
fix = "xyz"
[[node]]
id = "B"
at = [2.0, 0.0, 0.0]
fix = "xyz"
[[node]]
id = "C"
at = [0.0, 2.0, 0.0]
fix = "z"
[[node]]
id = "D"
at = [2.0, 2.0, 0.0]
fix = "z"
[[node]]
id = "E"
at = [1.0, 3.0, 0.0]
[[member]]
id = "AC"
kind = "bar"
ends = ["A", "C"]
section = "s"
[[member]]
id = "BD"
kind = "bar"
ends = ["B", "D"]
section = "s"
[[member]]
id = "CD"
kind = "bar"
ends = ["C", "D"]
section = "s"
[[member]]
id = "CE"
kind = "bar"
ends = ["C", "E"]
section = "s"
[[member]]
id = "DE"
kind = "bar"
ends = ["D", "E"]
section = "s"
force_density = 10.0
[[load]]
node = "E"
force = [0.0, -1.0, 0.0]
"#;

#[test]
fn check_finds_every_mechanism_at_once_and_the_ignored_force_density() {
    let dir = Scratch::new("mech");
    dir.write("m.toml", TWO_MECHANISMS);
    let r = tautline_in(&dir.dir, &["check", "m.toml"]);
    assert_eq!(r.code, 0, "{r}");
    assert!(r.stderr.contains("2 independent mechanism(s)"), "{r}");
    assert!(r.stderr.contains("1. moves E.z"), "{r}");
    let sway = r.stderr.lines().find(|l| l.contains("2. moves")).unwrap_or_default();
    for d in ["C.x", "D.x", "E.x"] {
        assert!(sway.contains(d), "{r}");
    }
    assert!(r.stderr.contains("no stiffness at all in the drawn geometry") && r.stderr.contains(": E.z;"), "{r}");
    assert!(r.stderr.contains("(first: \"DE\") have a force density but no `prestress`"), "{r}");
    // The library count, independently of the text.
    let m = model(TWO_MECHANISMS);
    let sys = System::new(&m).unwrap();
    let mech = tautline::screen::mechanisms(&sys, &m).unwrap();
    assert_eq!(mech.count, 2);
    assert_eq!(mech.modes.len(), 2);
    // JSON carries the same warnings.
    let r = tautline_in(&dir.dir, &["check", "m.toml", "--format", "json"]);
    let v: Value = serde_json::from_str(&r.stdout).unwrap();
    let w = v["warnings"].to_string();
    assert!(w.contains("2 independent mechanism(s)") && w.contains("force density"), "{v}");
    // A sound model gets none of these.
    let r = tautline_in(&dir.dir, &["check", repo("models/courtyard_net.toml").to_str().unwrap()]);
    assert_eq!(r.code, 0, "{r}");
    assert!(!r.stderr.contains("warning"), "{r}");
}

/// A cable pulled sideways by its prestress alone (the README's old model
/// example): `check` says the drawn geometry does not balance it.
#[test]
fn check_warns_of_a_prestress_out_of_balance() {
    let dir = Scratch::new("imbalance");
    let text = NO_POINT.replace("ends = [\"A2\", \"A3\"]\nsection = \"strand\"\nprestress = 20.0", "ends = [\"A2\", \"A3\"]\nsection = \"strand\"\nprestress = 5.0");
    assert_ne!(text, NO_POINT);
    dir.write("m.toml", &text);
    let r = tautline_in(&dir.dir, &["check", "m.toml"]);
    assert_eq!(r.code, 0, "{r}");
    assert!(r.stderr.contains("the prestress is not in balance") && r.stderr.contains("node \"A2\""), "{r}");
}

// ---------------------------------------------------------------------------
// 7. Warnings for utilisation above 1 and large strains

#[test]
fn solve_warns_of_overloaded_and_overstrained_members() {
    let dir = Scratch::new("warn");
    let demo = std::fs::read_to_string(repo("models/courtyard_net.toml")).unwrap();
    // EA entered 1000 times too small: the net strains by tens of percent.
    dir.write("soft.toml", &demo.replace("EA = 2.0e4", "EA = 20.0"));
    let r = tautline_in(&dir.dir, &["solve", "soft.toml", "-o", "soft", "-q"]);
    assert_eq!(r.code, 0, "{r}");
    assert!(r.stderr.contains("strain by more than 3 %"), "{r}");
    // A capacity below the forces: utilisation above 1.
    dir.write("weak.toml", &demo.replace("tension_capacity = 180.0", "tension_capacity = 11.0"));
    let r = tautline_in(&dir.dir, &["solve", "weak.toml", "-o", "weak", "-q"]);
    assert_eq!(r.code, 0, "{r}");
    assert!(r.stderr.contains("have a utilisation above 1"), "{r}");
    assert!(!r.stderr.contains("strain by more"), "{r}");
    // The largest utilisation named is members.csv's.
    let members = std::fs::read_to_string(dir.path("weak/members.csv")).unwrap();
    let header: Vec<&str> = members.lines().next().unwrap().split(',').collect();
    let col = header.iter().position(|h| h.starts_with("utilisation")).unwrap();
    let max = members.lines().skip(1).filter_map(|l| l.split(',').nth(col)?.parse::<f64>().ok()).fold(0.0, f64::max);
    assert!(max > 1.0 && r.stderr.contains(&format!("{max:.3}")), "largest {max}: {r}");
    // The demo as it is: neither warning.
    let r = tautline_in(&dir.dir, &["solve", repo("models/courtyard_net.toml").to_str().unwrap(), "-o", "demo", "-q"]);
    assert_eq!(r.code, 0, "{r}");
    assert!(!r.stderr.contains("warning"), "{r}");
}

// ---------------------------------------------------------------------------
// 8. A formed model with a separate load file

/// A 7 × 7 net form-found under its own (generated) snow loads, then a
/// point load at the centre from a load file: the form-finding loads are
/// held as a dead load, the file's load is stepped. The end state must be
/// the equilibrium under both (derived: an elastic net's equilibrium under
/// given loads does not depend on the order they came in), which the same
/// formed model with the point load added to its own loads reaches in its
/// start solve at load factor 1.
#[test]
fn a_load_file_adds_a_load_case_to_a_formed_model() {
    let dir = Scratch::new("loadcase");
    let g = saddle_net(&NetOptions { nx: 7, ny: 7, ..Default::default() }, "n").unwrap();
    dir.write("net.toml", &format!("{}\n[form]\nforce_density = 2000.0\n", g.toml));
    let r = tautline_in(&dir.dir, &["form", "net.toml", "-o", "f"]);
    assert_eq!(r.code, 0, "{r}");
    dir.write("point.toml", "[[load]]\nnode = \"N003_003\"\nforce = [0.0, 0.0, -5000.0]\n");
    let r = tautline_in(&dir.dir, &["solve", "f/formed.toml", "--loads", "point.toml", "-o", "a", "--tolerance", "1e-11"]);
    assert_eq!(r.code, 0, "{r}");
    assert!(r.stderr.contains("1 load(s) stepped from load factor 0") && r.stderr.contains("held constant at load factor 1"), "{r}");
    let a = json(&dir.path("a/results.json"));
    // Step 0 is the formed equilibrium itself: no movement.
    assert_eq!(a["steps"][0]["point"].as_f64().unwrap(), 0.0, "{a}");
    // The same loads in one reference load.
    let formed = std::fs::read_to_string(dir.path("f/formed.toml")).unwrap();
    assert!(formed.contains("start_load_factor = 1.0"));
    let both = formed + "\n[[load]]\nnode = \"N003_003\"\nforce = [0.0, 0.0, -5000.0]\n";
    dir.write("both.toml", &both);
    let r = tautline_in(&dir.dir, &["solve", "both.toml", "-o", "b", "--tolerance", "1e-11"]);
    assert_eq!(r.code, 0, "{r}");
    let b = json(&dir.path("b/results.json"));
    let end = |v: &Value| v["steps"].as_array().unwrap().last().unwrap()["point"].as_f64().unwrap();
    assert!(end(&a) < -1e-3, "the point load moves the centre: {}", end(&a));
    assert!((end(&a) - end(&b)).abs() <= 1e-8 * end(&b).abs(), "{} against {}", end(&a), end(&b));
}

#[test]
fn a_bad_load_file_is_refused_with_its_place() {
    let dir = Scratch::new("badloads");
    dir.write("m.toml", NO_POINT);
    dir.write("l.toml", "[[load]]\nnode = \"A22\"\nforce = [0.0, 0.0, -1.0]\n\n[[node]]\nid = \"X\"\nat = [0.0, 0.0, 0.0]\n");
    let r = tautline_in(&dir.dir, &["solve", "m.toml", "--loads", "l.toml", "-o", "a"]);
    assert_eq!(r.code, 2, "{r}");
    assert!(r.stderr.contains("l.toml:2") && r.stderr.contains("did you mean \"A2\"?"), "{r}");
    assert!(r.stderr.contains("l.toml:5") && r.stderr.contains("a load file holds loads only"), "{r}");
    assert!(!dir.path("a").exists(), "{r}");
}
