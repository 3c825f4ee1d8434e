//! Branch switching (`switch_at`) and imperfection seeding (`imperfection`)
//! on a braced strut whose secondary and imperfect paths have closed forms.
//!
//! ## The model
//! Two bars B–M and M–T, each of rest length L = 2 m and EA = 1e6 N
//! (engineering strain, so N = EA·(l − L)/L exactly), B pinned, T held
//! laterally, M braced in x by a linear spring k = 1e5 N/m, a load P = λ·1e5 N
//! down at T. EA is low so that the axial shortening and the sway are of one
//! order and one arc length suits both.
//!
//! ## Derivation of the secondary path (derived)
//! Let M sit at lateral offset w and height h, T at height 2h (both bars
//! alike). Equilibrium of T: the compression C of the upper bar has vertical
//! component P, so C = P·l/h with l = √(w² + h²). Equilibrium of M,
//! vertically: the lower bar carries the same C. Laterally, each bar pushes M
//! outwards by C·w/l = P·w/h and the spring pulls it back by k·w:
//! w·(2P/h − k) = 0. Off the primary path (w ≠ 0): P = k·h/2. The bar law
//! C = −N = EA·(L − l)/L with C = P·l/h = k·l/2 gives
//! l* = L / (1 + kL/(2EA)), a constant: along the secondary branch the bars
//! keep the length they had at the bifurcation and rotate, h = √(l*² − w²),
//! P = k·h/2 falls as w grows (an unstable symmetric bifurcation), and
//! T moves by 2h − 2L.
//!
//! ## Derivation of the imperfect path (derived)
//! With M seeded to x = w0 the bars' rest length is L0 = √(w0² + L²) and the
//! spring is unstressed at w = w0. Laterally at M: 2·P·w/h = k·(w − w0), so
//! P = q·h with q = k(w − w0)/(2w); the bar law C = EA(L0 − l)/L0 = P·l/h
//! = q·l gives l = L0/(1 + q·L0/EA), h = √(l² − w²). As w grows, q → k/2 and
//! the imperfect path approaches the secondary one.

use crate::common::*;
use tautline::model::Method;
use tautline::path::branch::SwitchOutcome;
use tautline::path::{CriticalKind, StopReason};

const K: f64 = 1.0e5;
const L: f64 = 2.0;
const EA: f64 = 1.0e6;
const P_REF: f64 = 1.0e5;

/// The braced strut of `verify` made soft (EA = 1e6 N), so that its bars
/// shorten visibly before the bifurcation.
fn strut(analysis: &str) -> String {
    tautline::verify::braced_strut(EA, &format!("tolerance = 1e-11\n{analysis}"))
}

/// λ on the secondary branch at lateral offset w (derived above).
fn secondary_lambda(w: f64) -> f64 {
    let l = L / (1.0 + K * L / (2.0 * EA));
    K * (l * l - w * w).sqrt() / 2.0 / P_REF
}

/// T.z displacement on the secondary branch at lateral offset w.
fn secondary_top(w: f64) -> f64 {
    let l = L / (1.0 + K * L / (2.0 * EA));
    2.0 * (l * l - w * w).sqrt() - 2.0 * L
}

fn critical_lambda() -> f64 {
    (K * L / 2.0) / (1.0 + K * L / (2.0 * EA)) / P_REF
}

/// Checks every state after the switch against the closed form; returns the
/// lateral offsets in path order.
fn check_secondary(run: &Run, step_after: usize) -> Vec<f64> {
    let mut ws = Vec::new();
    for p in run.path.points.iter().filter(|p| p.step >= step_after) {
        assert!(p.relative_residual <= 1e-11, "step {}: residual {}", p.step, p.relative_residual);
        let (tz, w) = (p.watched[0], p.watched[1]);
        assert!(w > 0.0, "step {}: no sway, M.x = {w}", p.step);
        assert!(rel_err(p.lambda, secondary_lambda(w), 1e-12) < 1e-7, "step {}: λ {} vs {}", p.step, p.lambda, secondary_lambda(w));
        assert!((tz - secondary_top(w)).abs() < 1e-7, "step {}: T.z {tz} vs {}", p.step, secondary_top(w));
        ws.push(w);
    }
    ws
}

fn switched(run: &Run) -> tautline::path::branch::Switched {
    match &run.path.switch {
        Some(SwitchOutcome::Switched(s)) => s.clone(),
        other => panic!("no switch: {other:?}, stop {:?}", run.path.stop),
    }
}

/// Arc-length control leaves at the bifurcation and follows the falling
/// secondary branch, every state on the closed form, the sway growing from 0,
/// with every corrector.
#[test]
fn arc_length_follows_the_secondary_branch_of_the_braced_strut() {
    for method in ALL_METHODS {
        let m = model(&strut(
            "control = \"arc-length\"\narc = 0.05\ntarget = 1.2\nmax_steps = 400\nmax_displacement = 1.2\nswitch_at = 1",
        ));
        let run = trace(m, method);
        assert_eq!(run.path.stop, StopReason::MaxDisplacement, "{method:?}: {}", tautline::results::stop_message(&run.model, &run.path));
        let s = switched(&run);
        let c = &run.path.critical[s.at_critical];
        assert_eq!(c.kind, CriticalKind::Bifurcation);
        assert!(rel_err(s.lambda, critical_lambda(), 1e-12) < 1e-7, "{method:?}: λc {} vs {}", s.lambda, critical_lambda());
        // Primary path before the switch: no sway.
        for p in run.path.points.iter().filter(|p| p.step < s.step) {
            assert!(p.watched[1].abs() < 1e-9, "{method:?} step {}: sway {} on the primary path", p.step, p.watched[1]);
        }
        let ws = check_secondary(&run, s.step);
        assert!(ws.len() >= 8, "{method:?}: only {} secondary states", ws.len());
        assert!(ws.windows(2).all(|p| p[1] > p[0]), "{method:?}: sway not growing: {ws:?}");
        assert!(*ws.last().unwrap() > 1.0, "{method:?}: the branch was not followed far: {ws:?}");
        // The branch falls: λ below λc after the switch.
        assert!(run.path.points.last().unwrap().lambda < 0.9 * critical_lambda());
    }
}

/// Displacement control (T.z) carries on down the secondary branch.
#[test]
fn displacement_control_follows_the_secondary_branch() {
    let m = model(&strut("control = \"displacement\"\ntarget = -1.0\nsteps = 20\nswitch_at = 1"));
    let run = trace(m, Method::Newton);
    assert_eq!(run.path.stop, StopReason::TargetReached, "{}", tautline::results::stop_message(&run.model, &run.path));
    let s = switched(&run);
    let ws = check_secondary(&run, s.step);
    assert!(ws.windows(2).all(|p| p[1] > p[0]), "{ws:?}");
    let last = run.path.points.last().unwrap();
    assert!((last.watched[0] + 1.0).abs() < 1e-9, "T.z at the end {}", last.watched[0]);
}

/// Load control cannot follow a falling branch: it switches, keeps the first
/// secondary state (on the closed form) and stops saying why.
#[test]
fn load_control_stops_on_a_falling_secondary_branch_and_says_so() {
    let m = model(&strut("control = \"load\"\ntarget = 1.2\nsteps = 12\nswitch_at = 1"));
    let run = trace(m, Method::Newton);
    assert_eq!(run.path.stop, StopReason::BranchSwitch);
    let s = switched(&run);
    assert_eq!(s.step, run.path.points.last().unwrap().step);
    let ws = check_secondary(&run, s.step);
    assert_eq!(ws.len(), 1);
    assert!(s.lambda_after < s.lambda);
    let msg = tautline::results::stop_message(&run.model, &run.path);
    assert!(msg.contains("falls") && msg.contains("arc-length"), "{msg}");
}

/// Fewer bifurcations than asked: the path is the primary one and says so.
#[test]
fn a_switch_never_met_is_reported() {
    let m = model(&strut("control = \"load\"\ntarget = 1.2\nsteps = 12\nswitch_at = 2"));
    let run = trace(m, Method::Newton);
    assert_eq!(run.path.stop, StopReason::TargetReached);
    assert_eq!(run.path.switch, Some(SwitchOutcome::NotMet { requested: 2, met: 1 }));
    assert!(run.path.points.iter().all(|p| p.watched[1] == 0.0));
}

/// `switch_mode` beyond the multiplicity (1 here) stops the run at the point.
#[test]
fn switch_mode_out_of_range_stops_at_the_point() {
    let m = model(&strut("control = \"load\"\ntarget = 1.2\nsteps = 12\nswitch_at = 1\nswitch_mode = 2"));
    let run = trace(m, Method::Newton);
    assert_eq!(run.path.stop, StopReason::BranchSwitch);
    assert!(matches!(run.path.switch, Some(SwitchOutcome::ModeOutOfRange { requested: 2, multiplicity: 1, .. })), "{:?}", run.path.switch);
}

/// λ on the imperfect path at lateral position w (derived above).
fn imperfect_lambda(w: f64, w0: f64, l0: f64) -> f64 {
    let q = K * (w - w0) / (2.0 * w);
    let l = l0 / (1.0 + q * l0 / EA);
    q * (l * l - w * w).sqrt() / P_REF
}

/// The seeded strut (mode 1 of the perfect path, the sway, 0.02 m) follows a
/// smooth path with sway from the first step, no bifurcation, every state on
/// the closed form, rising to a limit point below the perfect bifurcation
/// load and then approaching the secondary branch.
#[test]
fn seeded_strut_follows_the_imperfect_closed_form() {
    let w0 = 0.02;
    let perfect = model(&strut(&format!(
        "control = \"arc-length\"\narc = 0.05\ntarget = 1.2\nmax_steps = 400\nmax_displacement = 0.8\nimperfection = {{ mode = 1, amplitude = {w0:?} }}"
    )));
    let (seeded, seed) = tautline::path::branch::seed(&perfect, &mut tautline::observe::Silent).unwrap().unwrap();
    assert_eq!(seed.kind, CriticalKind::Bifurcation);
    assert_eq!(seeded.nodes[seed.node].label, "M");
    let m_at = seeded.nodes[1].at;
    assert!((m_at[0] - w0).abs() < 1e-12 && m_at[2] == 2.0, "M seeded to {m_at:?}");
    assert_eq!(seeded.nodes[2].at, [0.0, 0.0, 4.0]);
    let l0 = (w0 * w0 + L * L).sqrt();
    for method in ALL_METHODS {
        let run = trace(seeded.clone(), method);
        assert_eq!(run.path.stop, StopReason::MaxDisplacement, "{method:?}");
        assert!(run.path.critical.iter().all(|c| c.kind == CriticalKind::Limit), "{method:?}: {:?}", run.path.critical);
        let mut gaps = Vec::new();
        for p in run.path.points.iter().skip(1) {
            let w = w0 + p.watched[1];
            assert!(p.watched[1] > 0.0, "{method:?} step {}: no sway", p.step);
            assert!(rel_err(p.lambda, imperfect_lambda(w, w0, l0), 1e-12) < 1e-7, "{method:?} step {}: {} vs {}", p.step, p.lambda, imperfect_lambda(w, w0, l0));
            if w < L / (1.0 + K * L / (2.0 * EA)) {
                gaps.push(secondary_lambda(w) - p.lambda);
            }
        }
        // Below the perfect bifurcation load everywhere, and closing in on
        // the secondary branch as the sway grows.
        let peak = run.path.points.iter().map(|p| p.lambda).fold(0.0, f64::max);
        assert!(peak < critical_lambda(), "{method:?}: peak {peak}");
        assert!(gaps.iter().all(|g| *g > 0.0), "{method:?}: {gaps:?}");
        assert!(gaps.last().unwrap() < &(0.1 * gaps[0]), "{method:?}: gap {gaps:?}");
    }
}

/// A steep square pyramid: four bars (EA = 1e6 N, engineering strain) from
/// the base corners (±1, ±1, 0) m to the apex T at (0, 0, 3) m, 1e5 N down on
/// T per unit load factor. The apex's lateral stiffness vanishes before its
/// vertical one: a double bifurcation (x and y sway; the pivot count goes
/// from 0 to 2). Leaving it with `switch_at = 1` under arc-length control,
/// the path sways sideways; every state is checked for equilibrium of the
/// apex computed here from the geometry alone (derived: N = EA(l − L)/L
/// along each bar, Σ N·e + λ·f = 0), the sway is 0 before the switch and
/// grows after it.
#[test]
fn pyramid_leaves_its_double_bifurcation_sideways_in_equilibrium() {
    const PYRAMID_MODEL: &str = r#"title = "steep square pyramid"
[[section]]
name = "s"
EA = 1.0e6
[[node]]
id = "A"
at = [1.0, 1.0, 0.0]
fix = "xyz"
[[node]]
id = "B"
at = [-1.0, 1.0, 0.0]
fix = "xyz"
[[node]]
id = "C"
at = [-1.0, -1.0, 0.0]
fix = "xyz"
[[node]]
id = "D"
at = [1.0, -1.0, 0.0]
fix = "xyz"
[[node]]
id = "T"
at = [0.0, 0.0, 3.0]
[[member]]
id = "a"
kind = "bar"
ends = ["A", "T"]
section = "s"
[[member]]
id = "b"
kind = "bar"
ends = ["B", "T"]
section = "s"
[[member]]
id = "c"
kind = "bar"
ends = ["C", "T"]
section = "s"
[[member]]
id = "d"
kind = "bar"
ends = ["D", "T"]
section = "s"
[[load]]
node = "T"
force = [0.0, 0.0, -1.0e5]
[analysis]
strain = "engineering"
control = "arc-length"
arc = 0.05
target = 8.0
max_steps = 300
node = "T"
dir = "z"
max_displacement = 2.5
tolerance = 1e-11
watch = ["T.z", "T.x", "T.y"]
switch_at = 1
"#;
    let run = trace(model(PYRAMID_MODEL), Method::Newton);
    assert_eq!(run.path.stop, StopReason::MaxDisplacement, "{}", tautline::results::stop_message(&run.model, &run.path));
    let s = switched(&run);
    let c = &run.path.critical[s.at_critical];
    assert_eq!((c.kind, c.pivots), (CriticalKind::Bifurcation, (0, 2)));
    let corners = [[1.0, 1.0], [-1.0, 1.0], [-1.0, -1.0], [1.0, -1.0]];
    let l0 = (2.0f64 + 9.0).sqrt();
    let mut sway = Vec::new();
    for p in &run.path.points {
        let (uz, ux, uy) = (p.watched[0], p.watched[1], p.watched[2]);
        let apex = [ux, uy, 3.0 + uz];
        let mut f = [0.0, 0.0, -1.0e5 * p.lambda];
        for c in corners {
            let d = [apex[0] - c[0], apex[1] - c[1], apex[2]];
            let l = (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt();
            let n = 1.0e6 * (l - l0) / l0;
            for (fk, dk) in f.iter_mut().zip(d) {
                *fk -= n * dk / l;
            }
        }
        let imbalance = (f[0] * f[0] + f[1] * f[1] + f[2] * f[2]).sqrt();
        assert!(imbalance <= 1e-8 * 1.0e5 * p.lambda.abs().max(1.0), "step {}: apex imbalance {imbalance} N", p.step);
        let h = (ux * ux + uy * uy).sqrt();
        if p.step < s.step {
            assert!(h < 1e-9, "step {}: sway {h} on the primary path", p.step);
        } else {
            sway.push(h);
        }
    }
    assert!(sway.len() >= 10 && sway.windows(2).all(|w| w[1] > w[0]) && sway[0] > 0.0, "{sway:?}");
}

// ---------------------------------------------------------------------------
// The command line: `--switch-at`, the keys, exit codes, results.json.

mod cli {
    use super::strut;
    use serde_json::Value;
    use std::path::PathBuf;
    use std::process::Command;

    const BIN: &str = env!("CARGO_BIN_EXE_tautline");

    /// A scratch folder for one test, removed on drop.
    struct Scratch(PathBuf);
    impl Scratch {
        fn new(name: &str) -> Scratch {
            let dir = std::env::temp_dir().join(format!("tautline-branch-{name}-{}", std::process::id()));
            let _ = std::fs::remove_dir_all(&dir);
            std::fs::create_dir_all(&dir).unwrap();
            Scratch(dir)
        }
    }
    impl Drop for Scratch {
        fn drop(&mut self) {
            let _ = std::fs::remove_dir_all(&self.0);
        }
    }

    /// Writes the model, solves it into `out`; (exit code, stdout + stderr).
    fn solve(dir: &Scratch, analysis: &str, extra: &[&str]) -> (i32, String, PathBuf) {
        let model = dir.0.join("strut.toml");
        std::fs::write(&model, strut(analysis)).unwrap();
        let out = dir.0.join("out");
        let o = Command::new(BIN).arg("solve").arg(&model).arg("-o").arg(&out).args(extra).output().unwrap();
        let text = format!("{}{}", String::from_utf8_lossy(&o.stdout), String::from_utf8_lossy(&o.stderr));
        (o.status.code().unwrap_or(-1), text, out)
    }

    fn results(out: &std::path::Path) -> Value {
        serde_json::from_str(&std::fs::read_to_string(out.join("results.json")).unwrap()).unwrap()
    }

    #[test]
    fn switch_at_on_the_command_line_switches_and_results_say_where() {
        let dir = Scratch::new("switch");
        let (code, text, out) = solve(
            &dir,
            "control = \"arc-length\"\narc = 0.05\ntarget = 1.2\nmax_steps = 400\nmax_displacement = 1.2",
            &["--switch-at", "1", "-q"],
        );
        assert_eq!(code, 0, "{text}");
        let r = results(&out);
        let s = &r["switched"];
        assert_eq!(s["at_critical"], 0, "{r}");
        assert_eq!(r["critical_points"][0]["kind"], "bifurcation");
        assert_eq!(s["mode"], 1);
        let step = s["step"].as_u64().unwrap() as usize;
        assert!(r["steps"][step]["watched"][1].as_f64().unwrap() > 0.0);
        assert!(r.get("switch_not_made").is_none());
    }

    #[test]
    fn a_switch_not_met_exits_3_and_says_so() {
        let dir = Scratch::new("notmet");
        let (code, text, out) = solve(&dir, "control = \"load\"\ntarget = 1.2\nsteps = 12\nswitch_at = 2", &["-q"]);
        assert_eq!(code, 3, "{text}");
        assert!(text.contains("no switch was made"), "{text}");
        let r = results(&out);
        assert_eq!(r["switch_not_made"]["requested_at"], 2);
        assert_eq!(r["switch_not_made"]["bifurcations_met"], 1);
        assert_eq!(r["converged"], true);
    }

    #[test]
    fn switch_mode_beyond_the_multiplicity_is_bad_input_and_writes_nothing() {
        let dir = Scratch::new("mode");
        let analysis = "control = \"load\"\ntarget = 1.2\nsteps = 12\nswitch_at = 1\nswitch_mode = 2";
        let (code, text, out) = solve(&dir, analysis, &["-q"]);
        assert_eq!(code, 2, "{text}");
        let line = strut(analysis).lines().position(|l| l.starts_with("switch_mode")).unwrap() + 1;
        assert!(text.contains(&format!("strut.toml:{line}: [analysis]: switch_mode = 2")), "{text}");
        assert!(text.contains("1 mode(s)") && text.contains("set switch_mode from 1 to 1"), "{text}");
        assert!(!out.join("results.json").exists());
    }

    #[test]
    fn bad_switch_keys_are_reported_with_line_and_fix() {
        let dir = Scratch::new("keys");
        for (key, needle) in [
            ("switch_at = 0", "`switch_at` must be at least 1"),
            ("switch_at = 1.5", "expected a whole number"),
            ("switch_mode = 1", "`switch_mode` is given without `switch_at`"),
            ("imperfection = { mode = 0, amplitude = 0.01 }", "`imperfection.mode` must be at least 1"),
            ("imperfection = { mode = 1, amplitude = 0.0 }", "`imperfection.amplitude` must be a finite, non-zero length"),
        ] {
            let analysis = format!("control = \"load\"\ntarget = 1.2\nsteps = 12\n{key}");
            let (code, text, out) = solve(&dir, &analysis, &["-q"]);
            let line = strut(&analysis).lines().position(|l| l == key).unwrap() + 1;
            assert_eq!(code, 2, "{key}: {text}");
            assert!(text.contains(&format!("strut.toml:{line}:")) && text.contains(needle), "{key}: {text}");
            assert!(!out.join("results.json").exists());
        }
        let (code, text, _) = solve(&dir, "control = \"load\"\ntarget = 1.2\nsteps = 12", &["--switch-at", "0"]);
        assert_eq!(code, 2, "{text}");
        assert!(text.contains("--switch-at 0: must be from 1"), "{text}");
    }

    #[test]
    fn imperfection_is_seeded_and_reported() {
        let dir = Scratch::new("seed");
        let (code, text, out) = solve(
            &dir,
            "control = \"arc-length\"\narc = 0.05\ntarget = 1.2\nmax_steps = 400\nmax_displacement = 0.8\nimperfection = { mode = 1, amplitude = 0.02 }",
            &["-q"],
        );
        assert_eq!(code, 0, "{text}");
        let r = results(&out);
        let i = &r["imperfection"];
        assert_eq!(i["mode"], 1, "{r}");
        assert_eq!(i["kind"], "bifurcation");
        assert_eq!(i["node"], "M");
        assert!((i["amplitude"].as_f64().unwrap() - 0.02).abs() < 1e-15);
        assert!(r["critical_points"].as_array().unwrap().iter().all(|c| c["kind"] == "limit"), "{r}");
        // A mode the perfect path never meets: bad input, nothing written.
        let dir = Scratch::new("seed3");
        let (code, text, out) = solve(
            &dir,
            "control = \"load\"\ntarget = 1.2\nsteps = 12\nimperfection = { mode = 3, amplitude = 0.02 }",
            &["-q"],
        );
        assert_eq!(code, 2, "{text}");
        assert!(text.contains("imperfection.mode = 3") && text.contains("met 1 critical point"), "{text}");
        assert!(!out.join("results.json").exists());
    }

    /// The keys survive the model writer (`to_toml`) and read back the same.
    #[test]
    fn branch_keys_are_written_back() {
        let text = strut("control = \"load\"\ntarget = 1.2\nsteps = 12\nswitch_at = 2\nswitch_mode = 1\nimperfection = { mode = 1, amplitude = -0.02 }");
        let m = crate::common::model(&text);
        let back = tautline::model::write::to_toml(&m);
        let again = crate::common::model(&back);
        assert_eq!(again.analysis.branch.switch_at, Some(2));
        assert_eq!(again.analysis.branch.switch_mode, Some(1));
        assert_eq!(again.analysis.branch.imperfection, m.analysis.branch.imperfection);
        assert_eq!(m.analysis.branch.imperfection.unwrap().amplitude, -0.02);
    }
}

/// The README's worked example (docs/branch/shoring_prop.toml) switches at
/// its closed-form bifurcation, P = (kL/2)/(1 + kL/(2EA)) with k = 2e5 N/m,
/// L = 3 m, EA = 1.1e8 N (derived above), and sways ever further after it.
#[test]
fn readme_shoring_prop_switches_at_its_closed_form_load() {
    let text = std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/docs/branch/shoring_prop.toml")).unwrap();
    let run = trace(model(&text), Method::Newton);
    assert_eq!(run.path.stop, StopReason::MaxDisplacement);
    let s = switched(&run);
    let (k, l, ea) = (2.0e5, 3.0, 1.1e8);
    let p_cr = (k * l / 2.0) / (1.0 + k * l / (2.0 * ea));
    assert!(rel_err(s.lambda * 1.0e5, p_cr, 1.0) < 1e-7, "{} vs {p_cr}", s.lambda * 1.0e5);
    // The bisection lands on a midpoint already in equilibrium whose tangent
    // is singular: that is the critical state itself, so it is pinpointed
    // (it used to stop there and report the bracket as not pinpointed).
    let first = &run.path.critical[0];
    assert!(first.pinpointed && first.bracket <= first.tolerance, "bracket {} tolerance {}", first.bracket, first.tolerance);
    let sway: Vec<f64> = run.path.points.iter().filter(|p| p.step >= s.step).map(|p| p.watched[0]).collect();
    assert!(sway[0] > 0.0 && sway.windows(2).all(|w| w[1] > w[0]) && *sway.last().unwrap() > 1.5, "{sway:?}");
}

/// The stiff shoring prop under displacement control of its head: the switch
/// lets the mode amplitude grow until the head has moved by half a step
/// (near the bifurcation the head moves only at second order in the sway),
/// and the run reaches its target on the secondary branch, every state on the
/// closed form P = k·h/2, h = √(l*² − w²), l* = L/(1 + kL/(2EA)) (derived
/// above), down to H.z = −1 m where h = 2.5 m and P = 250 kN exactly.
#[test]
fn stiff_prop_under_displacement_control_reaches_its_target_on_the_secondary_branch() {
    let text = std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/docs/branch/shoring_prop.toml"))
        .unwrap()
        .replace("control = \"arc-length\"\narc = 0.02\ntarget = 3.2", "control = \"displacement\"\nsteps = 100\ntarget = -1.0")
        .replace("max_displacement = 1.0\n", "");
    let run = trace(model(&text), Method::Newton);
    assert_eq!(run.path.stop, StopReason::TargetReached, "{}", tautline::results::stop_message(&run.model, &run.path));
    let s = switched(&run);
    let (k, l, ea) = (2.0e5, 3.0, 1.1e8);
    let l_star = l / (1.0 + k * l / (2.0 * ea));
    for p in run.path.points.iter().filter(|p| p.step >= s.step) {
        let (w, hz) = (p.watched[0], p.watched[1]);
        let h = (l_star * l_star - w * w).sqrt();
        assert!(w > 0.0 && rel_err(p.lambda, k * h / 2.0 / 1.0e5, 1e-12) < 1e-7, "step {}: λ {} vs {}", p.step, p.lambda, k * h / 2.0 / 1.0e5);
        assert!((hz - (2.0 * h - 2.0 * l)).abs() < 1e-7, "step {}: H.z {hz}", p.step);
    }
    assert!((run.path.points.last().unwrap().lambda - 2.5).abs() < 1e-7);
}
