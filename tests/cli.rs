//! The command-line contract: exit codes, files written, messages.
//!
//! Every test runs the built `tautline` binary in its own scratch folder under
//! the system temp dir, removed when the test ends.

use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::atomic::{AtomicUsize, Ordering};

// ---------------------------------------------------------------------------
// Helpers

const BIN: &str = env!("CARGO_BIN_EXE_tautline");

/// A scratch folder, unique per test and process, removed on drop.
struct Scratch {
    dir: PathBuf,
}

impl Scratch {
    fn new(name: &str) -> Scratch {
        static COUNTER: AtomicUsize = AtomicUsize::new(0);
        let n = COUNTER.fetch_add(1, Ordering::Relaxed);
        let dir = std::env::temp_dir().join(format!("tautline-cli-{name}-{}-{n}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).expect("create scratch folder");
        Scratch { dir }
    }

    fn path(&self, rel: &str) -> PathBuf {
        self.dir.join(rel)
    }

    /// Writes `text` to `rel` in the folder and returns its path.
    fn write(&self, rel: &str, text: &str) -> PathBuf {
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

/// What one run of the binary did.
struct Run {
    code: i32,
    stdout: String,
    stderr: String,
}

impl std::fmt::Display for Run {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "exit {}\n--- stdout\n{}--- stderr\n{}", self.code, self.stdout, self.stderr)
    }
}

fn tautline(args: &[&str]) -> Run {
    let out = Command::new(BIN).args(args).output().expect("run tautline");
    Run {
        // Killed by a signal: no code, never a valid one.
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}

fn s(p: &Path) -> &str {
    p.to_str().expect("scratch paths are utf-8")
}

/// `tautline solve MODEL -o OUT EXTRA...`
fn solve(model: &Path, out: &Path, extra: &[&str]) -> Run {
    let mut args = vec!["solve", s(model), "-o", s(out)];
    args.extend_from_slice(extra);
    tautline(&args)
}

/// `text` with `from` replaced by `to`; panics if `from` is absent, so a
/// stale edit cannot silently test the unedited model.
fn edit(text: &str, from: &str, to: &str) -> String {
    assert!(text.contains(from), "edit target {from:?} not in the model");
    text.replacen(from, to, 1)
}

/// 1-based line of the first line containing `needle`.
fn line_of(text: &str, needle: &str) -> usize {
    text.lines()
        .position(|l| l.contains(needle))
        .unwrap_or_else(|| panic!("{needle:?} not in the text"))
        + 1
}

/// 1-based line of the `n`-th (0-based) line containing `needle`.
fn nth_line_of(text: &str, needle: &str, n: usize) -> usize {
    text.lines()
        .enumerate()
        .filter(|(_, l)| l.contains(needle))
        .nth(n)
        .unwrap_or_else(|| panic!("{needle:?} occurs fewer than {} times", n + 1))
        .0
        + 1
}

/// Whether `stderr` has `FILE:LINE` followed by `:` (the column, or the
/// separator before the item).
fn has_place(stderr: &str, file: &Path, line: usize) -> bool {
    let place = format!("{}:{line}:", file.display());
    stderr.contains(&place)
}

fn json(path: &Path) -> Value {
    let text = std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("{}: not json: {e}", path.display()))
}

/// Header cells and data rows of a small CSV file (no quoted cells).
fn csv(path: &Path) -> (Vec<String>, Vec<Vec<String>>) {
    let text = std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    let mut lines = text.lines().map(|l| l.split(',').map(str::to_string).collect::<Vec<_>>());
    let header = lines.next().unwrap_or_else(|| panic!("{}: empty", path.display()));
    (header, lines.collect())
}

fn num(cell: &str) -> f64 {
    cell.parse().unwrap_or_else(|_| panic!("not a number: {cell:?}"))
}

fn rel_diff(a: f64, b: f64) -> f64 {
    (a - b).abs() / a.abs().max(b.abs()).max(1e-300)
}

/// A straight, pretensioned cable of two segments between fixed ends, with
/// a vertical load at midspan. N and m.
const CABLE: &str = r#"title = "two-segment cable"

[[section]]
name = "strand"
EA = 1.0e5

[[node]]
id = "A"
at = [0.0, 0.0, 0.0]
fix = "xyz"

[[node]]
id = "M"
at = [1.0, 0.0, 0.0]

[[node]]
id = "B"
at = [2.0, 0.0, 0.0]
fix = "xyz"

[[member]]
id = "c1"
kind = "cable"
ends = ["A", "M"]
section = "strand"
prestress = 100.0

[[member]]
id = "c2"
kind = "cable"
ends = ["M", "B"]
section = "strand"
prestress = 100.0

[[load]]
node = "M"
force = [0.0, 0.0, -10.0]

[analysis]
steps = 4
tolerance = 1e-12
watch = ["M.z"]
"#;

/// Runs `solve` (and, for problems in the file, `check`) on a bad model
/// written as `model.toml`, and checks the bad-input contract: exit 2, every
/// `wants` text in stderr, no panic, no output folder. Returns the model path
/// and the stderr of `solve`.
fn bad_model(scratch: &Scratch, text: &str, extra: &[&str], wants: &[&str]) -> (PathBuf, String) {
    let model = scratch.write("model.toml", text);
    let out = scratch.path("out");
    let r = solve(&model, &out, extra);
    assert_bad_input(&r, &out, wants);
    if extra.is_empty() {
        let c = tautline(&["check", s(&model)]);
        assert_eq!(c.code, 2, "check:\n{c}");
        for w in wants {
            assert!(c.stderr.contains(w), "check stderr lacks {w:?}:\n{c}");
        }
    }
    (model, r.stderr)
}

fn assert_bad_input(r: &Run, out: &Path, wants: &[&str]) {
    assert_eq!(r.code, 2, "expected exit 2 (bad input):\n{r}");
    for w in wants {
        assert!(r.stderr.contains(w), "stderr lacks {w:?}:\n{r}");
    }
    assert!(!r.stderr.contains("panicked"), "{r}");
    assert!(!out.exists(), "bad input must write nothing, but {} exists:\n{r}", out.display());
}

/// The example models shipped in `models/`.
fn example_models() -> Vec<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("models");
    let mut v: Vec<PathBuf> = std::fs::read_dir(&dir)
        .expect("models folder")
        .map(|e| e.expect("dir entry").path())
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .collect();
    v.sort();
    assert!(!v.is_empty(), "no models/*.toml");
    v
}

/// Entries of `[[table]]` in a model file, plus the data rows of the CSV
/// table named by `csv_key` if the model has one.
fn count_entries(model: &Path, table: &str, csv_key: &str) -> usize {
    let text = std::fs::read_to_string(model).unwrap();
    let header = format!("[[{table}]]");
    let mut n = text.lines().filter(|l| l.trim() == header).count();
    let csv_name = text.lines().find_map(|l| {
        let (k, v) = l.split_once('=')?;
        (k.trim() == csv_key).then(|| v.trim().trim_matches('"').to_string())
    });
    if let Some(name) = csv_name {
        let t = std::fs::read_to_string(model.parent().unwrap().join(name)).unwrap();
        let rows = t.lines().filter(|l| !l.trim().is_empty() && !l.trim_start().starts_with('#'));
        n += rows.count().saturating_sub(1);
    }
    n
}

fn assert_caution_last(r: &Run) {
    let last = r.stdout.trim_end().lines().last().unwrap_or("");
    assert!(last.contains("SAFETY.md"), "stdout must end with the caution line:\n{r}");
}

// ---------------------------------------------------------------------------
// Bad input: exit 2, a located message, nothing written

#[test]
fn toml_syntax_error_is_located() {
    let sc = Scratch::new("syntax");
    let text = edit(CABLE, "at = [1.0, 0.0, 0.0]", "at = [1.0, 0.0 0.0]");
    let (model, err) = bad_model(&sc, &text, &[], &["invalid toml"]);
    // A syntax error names no item (the parser cannot know one); the line
    // is the place to fix.
    assert!(has_place(&err, &model, line_of(&text, "0.0 0.0]")), "{err}");
}

#[test]
fn unknown_key_suggests_the_meant_one() {
    let sc = Scratch::new("unknown-key");
    let text = edit(CABLE, "at = [1.0, 0.0, 0.0]\n", "at = [1.0, 0.0, 0.0]\nfxi = \"y\"\n");
    let (model, err) = bad_model(&sc, &text, &[], &["node \"M\"", "unknown key `fxi`", "did you mean \"fix\"?"]);
    assert!(has_place(&err, &model, line_of(&text, "fxi")), "{err}");
}

#[test]
fn unknown_node_in_a_member() {
    let sc = Scratch::new("unknown-node");
    let text = edit(CABLE, "ends = [\"M\", \"B\"]", "ends = [\"M\", \"Q\"]");
    let (model, err) = bad_model(&sc, &text, &[], &["member \"c2\"", "unknown node \"Q\""]);
    assert!(has_place(&err, &model, line_of(&text, "\"Q\"")), "{err}");
}

#[test]
fn unknown_section() {
    let sc = Scratch::new("unknown-section");
    let text = edit(
        CABLE,
        "ends = [\"A\", \"M\"]\nsection = \"strand\"",
        "ends = [\"A\", \"M\"]\nsection = \"strnad\"",
    );
    let (model, err) = bad_model(&sc, &text, &[], &["member \"c1\"", "unknown section \"strnad\""]);
    assert!(has_place(&err, &model, line_of(&text, "strnad")), "{err}");
    assert!(err.contains("did you mean \"strand\"?"), "{err}");
}

#[test]
fn duplicate_node_id() {
    let sc = Scratch::new("duplicate-node");
    let text = edit(
        CABLE,
        "[[member]]",
        "[[node]]\nid = \"M\"\nat = [1.0, 1.0, 0.0]\nfix = \"xyz\"\n\n[[member]]",
    );
    let (model, err) = bad_model(&sc, &text, &[], &["node \"M\"", "duplicate node id \"M\""]);
    // The repeat is reported at its own entry (its header or its id line)...
    let id_line = nth_line_of(&text, "id = \"M\"", 1);
    assert!(has_place(&err, &model, id_line - 1) || has_place(&err, &model, id_line), "{err}");
    // ...and names where the first one is.
    let first = nth_line_of(&text, "id = \"M\"", 0);
    let first_place = [first - 1, first].map(|l| format!("{}:{l}", model.display()));
    assert!(first_place.iter().any(|p| err.contains(&format!("the first is at {p}"))), "{err}");
}

#[test]
fn zero_length_member() {
    let sc = Scratch::new("zero-length");
    let text = edit(CABLE, "at = [2.0, 0.0, 0.0]", "at = [1.0, 0.0, 0.0]");
    let (model, err) = bad_model(&sc, &text, &[], &["member \"c2\"", "zero length"]);
    let id_line = line_of(&text, "id = \"c2\"");
    assert!(has_place(&err, &model, id_line - 1) || has_place(&err, &model, id_line), "{err}");
}

#[test]
fn non_positive_ea() {
    let sc = Scratch::new("ea");
    for ea in ["0.0", "-2.0e4"] {
        let text = edit(CABLE, "EA = 1.0e5", &format!("EA = {ea}"));
        let (model, err) = bad_model(&sc, &text, &[], &["section \"strand\"", "`EA` must be greater than zero"]);
        assert!(has_place(&err, &model, line_of(&text, "EA =")), "{err}");
    }
}

#[test]
fn nan_value() {
    let sc = Scratch::new("nan");
    let text = edit(CABLE, "at = [1.0, 0.0, 0.0]", "at = [1.0, nan, 0.0]");
    let (model, err) = bad_model(&sc, &text, &[], &["node \"M\"", "finite", "nan"]);
    assert!(has_place(&err, &model, line_of(&text, "nan")), "{err}");
}

#[test]
fn load_on_a_fixed_direction() {
    let sc = Scratch::new("load-fixed");
    let text = edit(CABLE, "[[load]]\nnode = \"M\"", "[[load]]\nnode = \"A\"");
    let (model, err) = bad_model(&sc, &text, &[], &["load 1", "node \"A\"", "supported"]);
    assert!(has_place(&err, &model, line_of(&text, "force = [0.0, 0.0, -10.0]")), "{err}");
}

#[test]
fn model_without_a_free_dof() {
    let sc = Scratch::new("no-free-dof");
    let text = edit(CABLE, "at = [1.0, 0.0, 0.0]\n", "at = [1.0, 0.0, 0.0]\nfix = \"xyz\"\n");
    let text = edit(&text, "[[load]]\nnode = \"M\"\nforce = [0.0, 0.0, -10.0]\n", "");
    let (model, err) = bad_model(&sc, &text, &[], &["nothing can move"]);
    // A model-wide problem: no one line or item is at fault, but the file is named.
    assert!(err.contains(&format!("{}: ", model.display())), "{err}");
}

#[test]
fn invalid_method_option() {
    let sc = Scratch::new("method");
    let (_, err) = bad_model(&sc, CABLE, &["--method", "newtn"], &["--method newtn", "newton", "bfgs"]);
    assert!(!err.contains("error: model.toml"), "the model itself is fine:\n{err}");
}

#[test]
fn bad_watch_option() {
    let sc = Scratch::new("watch");
    bad_model(&sc, CABLE, &["--watch", "M.q"], &["--watch M.q", "x, y or z"]);
    bad_model(&sc, CABLE, &["--watch", "Q.z"], &["--watch Q.z", "no node \"Q\""]);
    bad_model(&sc, CABLE, &["--watch", "Mz"], &["--watch Mz", "NODE.DIR"]);
}

#[test]
fn missing_model_file() {
    let sc = Scratch::new("missing");
    let model = sc.path("no-such-model.toml");
    let out = sc.path("out");
    let r = solve(&model, &out, &[]);
    assert_bad_input(&r, &out, &[s(&model), "cannot read the model file"]);
    let c = tautline(&["check", s(&model)]);
    assert_eq!(c.code, 2, "{c}");
    assert!(c.stderr.contains(s(&model)), "{c}");
}

#[test]
fn csv_table_with_an_unknown_column() {
    let sc = Scratch::new("csv-column");
    let nodes = sc.write("nodes.csv", "id,x,y,z,fixx\nD,3.0,0.0,0.0,xyz\n");
    let text = format!("nodes_csv = \"nodes.csv\"\n{CABLE}");
    let (_, err) = bad_model(&sc, &text, &[], &["header", "unknown column `fixx`", "did you mean \"fix\"?"]);
    assert!(has_place(&err, &nodes, 1), "{err}");
}

// ---------------------------------------------------------------------------
// check and solve on the example models

#[test]
fn check_reports_the_counts_of_every_example() {
    for model in example_models() {
        let r = tautline(&["check", s(&model)]);
        assert_eq!(r.code, 0, "{}:\n{r}", model.display());
        let nodes = count_entries(&model, "node", "nodes_csv");
        let members = count_entries(&model, "member", "members_csv");
        assert!(nodes > 0 && members > 0, "{}", model.display());
        assert!(r.stdout.contains(&format!("nodes: {nodes} (")), "{}: want {nodes} nodes:\n{r}", model.display());
        assert!(r.stdout.contains(&format!("members: {members} (")), "{}: want {members} members:\n{r}", model.display());
        assert!(r.stdout.contains("model is valid"), "{r}");
    }
}

/// The parts of results.json, path.csv and members.csv every finished run has.
fn assert_outputs(out: &Path, n_members: usize) -> Value {
    for f in ["results.json", "path.csv", "members.csv"] {
        assert!(out.join(f).is_file(), "{} missing", out.join(f).display());
    }
    let res = json(&out.join("results.json"));
    let steps = res["steps"].as_array().expect("steps is an array");
    assert!(!steps.is_empty());
    for st in steps {
        for key in ["load_factor", "iterations", "factorizations", "residual", "negative_pivots", "point"] {
            assert!(st[key].is_number(), "step lacks numeric {key}: {st}");
        }
    }
    for key in ["iterations", "factorizations", "seconds"] {
        assert!(res["totals"][key].is_number(), "totals lack {key}: {}", res["totals"]);
    }

    let (header, rows) = csv(&out.join("path.csv"));
    assert_eq!(header[..2], ["step", "load_factor"]);
    let watch: Vec<String> = res["watch"].as_array().unwrap().iter().map(|w| w.as_str().unwrap().to_string()).collect();
    assert_eq!(header[2..], watch[..], "path.csv columns follow results.json watch");
    assert_eq!(rows.len(), steps.len(), "one path.csv row per step");
    for (row, st) in rows.iter().zip(steps) {
        assert_eq!(row.len(), header.len());
        assert_eq!(num(&row[0]), st["step"].as_f64().unwrap());
        // serde_json's default float parser may be off by an ulp or so.
        let (a, b) = (num(&row[1]), st["load_factor"].as_f64().unwrap());
        assert!(a == b || rel_diff(a, b) < 1e-15, "path.csv {a} and results.json {b} agree");
    }

    let (mheader, mrows) = csv(&out.join("members.csv"));
    assert_eq!(mheader[0], "id");
    assert_eq!(mrows.len(), n_members, "one members.csv row per member");
    res
}

#[test]
fn solve_finishes_every_example() {
    let sc = Scratch::new("solve-examples");
    for (k, model) in example_models().iter().enumerate() {
        let out = sc.path(&format!("out{k}"));
        let r = solve(model, &out, &[]);
        assert_eq!(r.code, 0, "{}:\n{r}", model.display());
        let res = assert_outputs(&out, count_entries(model, "member", "members_csv"));
        assert_eq!(res["converged"], true, "{}", model.display());
        assert_eq!(res["stop_reason"], "target_reached", "{}", model.display());
        assert!(r.stdout.contains("done: reached the target"), "{r}");
        assert_caution_last(&r);
    }
}

// ---------------------------------------------------------------------------
// Overrides

#[test]
fn method_and_steps_overrides_are_used() {
    let sc = Scratch::new("overrides");
    let model = sc.write("cable.toml", CABLE);
    let newton = sc.path("newton");
    let r = solve(&model, &newton, &[]);
    assert_eq!(r.code, 0, "{r}");
    let base = json(&newton.join("results.json"));
    assert_eq!(base["analysis"]["method"], "newton");
    assert_eq!(base["steps"].as_array().unwrap().len(), 5, "4 steps and step 0");

    let bfgs = sc.path("bfgs");
    let r = solve(&model, &bfgs, &["--method", "bfgs", "--steps", "5"]);
    assert_eq!(r.code, 0, "{r}");
    let res = assert_outputs(&bfgs, 2);
    assert_eq!(res["analysis"]["method"], "bfgs");
    assert_eq!(res["analysis"]["steps"], 5);
    let steps = res["steps"].as_array().unwrap();
    assert_eq!(steps.len(), 6, "5 steps and step 0");
    assert_eq!(steps.last().unwrap()["load_factor"].as_f64().unwrap(), 1.0);
    assert!(r.stdout.contains("bfgs / load control"), "{r}");
    // The same equilibrium, found another way.
    let z = |v: &Value| v["steps"].as_array().unwrap().last().unwrap()["watched"][0].as_f64().unwrap();
    assert!(z(&base) < 0.0);
    assert!(rel_diff(z(&res), z(&base)) < 1e-8, "bfgs {} vs newton {}", z(&res), z(&base));
}

#[test]
fn watch_override_replaces_the_path_columns() {
    let sc = Scratch::new("watch-override");
    let model = sc.write("cable.toml", CABLE);
    let out = sc.path("out");
    let r = solve(&model, &out, &["--watch", "M.x", "--watch", "M.z"]);
    assert_eq!(r.code, 0, "{r}");
    let res = assert_outputs(&out, 2);
    let (header, rows) = csv(&out.join("path.csv"));
    assert_eq!(header, ["step", "load_factor", "M.x", "M.z"]);
    assert_eq!(res["watch"], serde_json::json!(["M.x", "M.z"]));
    let last = rows.last().unwrap();
    // A downward load pulls the midspan node down, and by symmetry not sideways.
    assert!(num(&last[3]) < 0.0, "{last:?}");
    assert!(num(&last[2]).abs() < 1e-9 * num(&last[3]).abs(), "{last:?}");
}

// ---------------------------------------------------------------------------
// Stopped before the target: exit 3, what was found is written

#[test]
fn load_control_past_the_limit_point_stops_with_exit_3() {
    let sc = Scratch::new("limit");
    let model = Path::new(env!("CARGO_MANIFEST_DIR")).join("models/roof_arch.toml");
    let out = sc.path("out");
    let r = solve(&model, &out, &["--control", "load", "--target", "10"]);
    assert_eq!(r.code, 3, "{r}");
    assert!(r.stdout.contains("stopped before the target"), "{r}");
    assert_caution_last(&r);
    let res = assert_outputs(&out, 2);
    assert_eq!(res["converged"], false);
    assert_eq!(
        res["stop_reason"], "limit_point",
        "the limit load (about 3.79) cannot be passed under load control: {}",
        res["stop_message"]
    );
    assert!(res["stop_message"].as_str().unwrap().contains("arc-length"), "{}", res["stop_message"]);
    let limit = res["critical_points"].as_array().unwrap().last().unwrap();
    assert_eq!(limit["kind"], "limit");
    let lim = limit["load_factor"].as_f64().unwrap();
    assert!(lim > 3.7 && lim < 3.8, "the limit is where the run stopped: {lim}");
    let steps = res["steps"].as_array().unwrap();
    assert!(steps.len() > 1, "the converged steps before the limit are kept");
    let lambdas: Vec<f64> = steps.iter().map(|st| st["load_factor"].as_f64().unwrap()).collect();
    assert!(lambdas.windows(2).all(|w| w[1] > w[0]), "every load-control step raises the load: {lambdas:?}");
    let last = *lambdas.last().unwrap();
    assert!(last > 3.0 && last < 3.8, "last converged load factor {last}");
}

#[test]
fn max_steps_reached_stops_with_exit_3() {
    let sc = Scratch::new("max-steps");
    let model = sc.write("cable.toml", CABLE);
    let out = sc.path("out");
    let r = solve(&model, &out, &["--max-steps", "2"]);
    assert_eq!(r.code, 3, "{r}");
    assert!(r.stdout.contains("stopped before the target"), "{r}");
    let res = assert_outputs(&out, 2);
    assert_eq!(res["converged"], false);
    assert_eq!(res["stop_reason"], "max_steps");
    let (_, rows) = csv(&out.join("path.csv"));
    assert_eq!(rows.len(), 3, "steps 0, 1 and 2");
    assert_eq!(num(&rows[2][1]), 0.5);
}

// ---------------------------------------------------------------------------
// demo

#[test]
fn demo_writes_its_files() {
    let sc = Scratch::new("demo");
    let out = sc.path("demo-out");
    let r = tautline(&["demo", "-o", s(&out)]);
    assert_eq!(r.code, 0, "{r}");
    assert!(r.stdout.starts_with("demo: "), "{r}");
    assert_caution_last(&r);
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("models/courtyard_net.toml");
    let res = assert_outputs(&out, count_entries(&demo, "member", "members_csv"));
    assert_eq!(res["converged"], true);
    assert_eq!(res["stop_reason"], "target_reached");
}

// ---------------------------------------------------------------------------
// Units

/// The cable of [`CABLE`] written in kN and mm.
const CABLE_KN_MM: &str = r#"title = "two-segment cable, kN and mm"

[units]
force = "kN"
length = "mm"

[[section]]
name = "strand"
EA = 100.0

[[node]]
id = "A"
at = [0.0, 0.0, 0.0]
fix = "xyz"

[[node]]
id = "M"
at = [1000.0, 0.0, 0.0]

[[node]]
id = "B"
at = [2000.0, 0.0, 0.0]
fix = "xyz"

[[member]]
id = "c1"
kind = "cable"
ends = ["A", "M"]
section = "strand"
prestress = 0.1

[[member]]
id = "c2"
kind = "cable"
ends = ["M", "B"]
section = "strand"
prestress = 0.1

[[load]]
node = "M"
force = [0.0, 0.0, -0.01]

[analysis]
steps = 4
tolerance = 1e-12
watch = ["M.z"]
"#;

#[test]
fn displacements_are_written_in_model_units() {
    let sc = Scratch::new("units");
    let si = sc.write("si.toml", CABLE);
    let mm = sc.write("mm.toml", CABLE_KN_MM);
    let (out_si, out_mm) = (sc.path("out-si"), sc.path("out-mm"));
    for (model, out) in [(&si, &out_si), (&mm, &out_mm)] {
        let r = solve(model, out, &[]);
        assert_eq!(r.code, 0, "{r}");
        assert_outputs(out, 2);
    }
    let (h_si, rows_si) = csv(&out_si.join("path.csv"));
    let (h_mm, rows_mm) = csv(&out_mm.join("path.csv"));
    assert_eq!(h_si, h_mm);
    assert_eq!(rows_si.len(), rows_mm.len());
    for (a, b) in rows_si.iter().zip(&rows_mm) {
        assert_eq!(num(&a[1]), num(&b[1]), "same load factors");
        let (z_m, z_mm) = (num(&a[2]), num(&b[2]));
        if z_m == 0.0 {
            assert_eq!(z_mm, 0.0);
        } else {
            assert!(rel_diff(z_mm, 1000.0 * z_m) < 1e-9, "{z_mm} mm vs {z_m} m");
        }
    }
    let z_last = num(&rows_si.last().unwrap()[2]);
    assert!(z_last < -1e-3, "the load moves the midspan visibly: {z_last} m");

    // Member forces in kN are 1/1000 of those in N; lengths in mm 1000×.
    let (mh_si, m_si) = csv(&out_si.join("members.csv"));
    let (mh_mm, m_mm) = csv(&out_mm.join("members.csv"));
    let col = |h: &[String], name: &str| h.iter().position(|c| c == name).unwrap_or_else(|| panic!("no {name} in {h:?}"));
    let (f_si, l_si) = (col(&mh_si, "force_N"), col(&mh_si, "length_m"));
    let (f_mm, l_mm) = (col(&mh_mm, "force_kN"), col(&mh_mm, "length_mm"));
    for (a, b) in m_si.iter().zip(&m_mm) {
        assert_eq!(a[0], b[0]);
        assert!(rel_diff(num(&b[f_mm]), 1e-3 * num(&a[f_si])) < 1e-9, "{a:?} vs {b:?}");
        assert!(rel_diff(num(&b[l_mm]), 1e3 * num(&a[l_si])) < 1e-9, "{a:?} vs {b:?}");
    }
}

// -- generators --------------------------------------------------------------

/// `generate net` writes a model that `check` accepts and that every corrector
/// solves to the same centre deflection; above the CSV threshold the tables
/// go to CSV files beside the TOML.
#[test]
fn generated_net_solves_with_every_method() {
    let sc = Scratch::new("gen-net");
    let model = sc.path("net.toml");
    let r = tautline(&["generate", "net", "--nx", "7", "--ny", "6", "--node-load", "300", "--csv-threshold", "10", "-o", s(&model)]);
    assert_eq!(r.code, 0, "{r}");
    assert!(sc.path("net_nodes.csv").exists() && sc.path("net_members.csv").exists());
    let r = tautline(&["check", s(&model)]);
    assert_eq!(r.code, 0, "{r}");
    assert!(r.stdout.contains("nodes: 42"), "{r}");
    let mut centre = Vec::new();
    for method in ["newton", "modified-newton", "broyden", "broyden-bad", "bfgs"] {
        let out = sc.path(&format!("out-{method}"));
        let r = solve(&model, &out, &["--method", method]);
        assert_eq!(r.code, 0, "{method}: {r}");
        let res = json(&out.join("results.json"));
        assert_eq!(res["analysis"]["method"], method);
        let steps = res["steps"].as_array().unwrap();
        centre.push(steps.last().unwrap()["point"].as_f64().unwrap());
    }
    assert!(centre[0] < 0.0, "the centre sinks: {centre:?}");
    for c in &centre {
        assert!(rel_diff(*c, centre[0]) < 1e-6, "{centre:?}");
    }
}

/// A generated net keeps its loads in `net_loads.csv`; the same loads
/// written as `[[load]]` tables give the same results.json (timing and model
/// path removed), and `check` on one of the tables names the model file
/// that reads it.
#[test]
fn loads_from_csv_solve_like_load_tables() {
    let sc = Scratch::new("loads-csv");
    std::fs::create_dir_all(sc.path("csv")).unwrap();
    std::fs::create_dir_all(sc.path("toml")).unwrap();
    let model = sc.path("csv/net.toml");
    let r = tautline(&["generate", "net", "--nx", "7", "--ny", "6", "--node-load", "300", "--csv-threshold", "10", "-o", s(&model)]);
    assert_eq!(r.code, 0, "{r}");
    let text = std::fs::read_to_string(&model).unwrap();
    assert!(text.contains("loads_csv = \"net_loads.csv\"") && !text.contains("[[load]]"), "{text}");
    let loads = std::fs::read_to_string(sc.path("csv/net_loads.csv")).unwrap();
    let mut rows = loads.lines();
    assert_eq!(rows.next(), Some("node,fx,fy,fz"));
    let mut tables = String::new();
    for row in rows {
        let c: Vec<&str> = row.split(',').collect();
        tables += &format!("\n[[load]]\nnode = \"{}\"\nforce = [{}, {}, {}]\n", c[0], c[1], c[2], c[3]);
    }
    assert_eq!(tables.matches("[[load]]").count(), 5 * 4);
    let inline = sc.path("toml/net.toml");
    std::fs::write(&inline, text.replace("loads_csv = \"net_loads.csv\"\n", "") + &tables).unwrap();
    for table in ["net_nodes.csv", "net_members.csv"] {
        std::fs::copy(sc.path(&format!("csv/{table}")), sc.path(&format!("toml/{table}"))).unwrap();
    }
    let mut results = Vec::new();
    for m in [&model, &inline] {
        let r = tautline(&["check", s(m), "--format", "json"]);
        assert_eq!(r.code, 0, "{r}");
        let counts: Value = serde_json::from_str(&r.stdout).unwrap();
        assert_eq!(counts["loads"], 20, "{r}");
        let out = m.parent().unwrap().join("out");
        let r = solve(m, &out, &[]);
        assert_eq!(r.code, 0, "{r}");
        let mut v = json(&out.join("results.json"));
        assert!(v["totals"].as_object_mut().unwrap().remove("seconds").is_some());
        assert!(v.as_object_mut().unwrap().remove("model_file").is_some());
        results.push(v);
    }
    assert!(results[0]["steps"].as_array().unwrap().len() > 1);
    assert_eq!(results[0], results[1]);

    // A table given to check, solve or form by mistake.
    let table = sc.path("csv/net_loads.csv");
    for cmd in [vec!["check", s(&table)], vec!["solve", s(&table), "-o", s(&sc.path("o1"))], vec!["form", s(&table), "-o", s(&sc.path("o2"))]] {
        let r = tautline(&cmd);
        assert_eq!(r.code, 2, "{r}");
        assert!(r.stderr.contains("this looks like a CSV table; pass the model's .toml file"), "{r}");
        assert!(r.stderr.contains(&format!("{} names this table", s(&model))), "{r}");
        assert_eq!(r.stderr.matches("error:").count(), 1, "{r}");
    }
    assert!(!sc.path("o1").exists() && !sc.path("o2").exists());
}

/// `generate dome` writes a model whose crown is watched, and bad options are
/// bad input (exit 2, nothing written).
#[test]
fn generated_dome_and_bad_generator_options() {
    let sc = Scratch::new("gen-dome");
    let model = sc.path("dome.toml");
    let r = tautline(&["generate", "dome", "--rings", "2", "--sectors", "6", "-o", s(&model)]);
    assert_eq!(r.code, 0, "{r}");
    let out = sc.path("out");
    let r = solve(&model, &out, &["--steps", "2"]);
    assert_eq!(r.code, 0, "{r}");
    let res = json(&out.join("results.json"));
    assert_eq!(res["watch"][0], "C.z");
    let bad = sc.path("bad.toml");
    let r = tautline(&["generate", "net", "--nx", "2", "--ny", "5", "-o", s(&bad)]);
    assert_eq!(r.code, 2, "{r}");
    assert!(r.stderr.contains("nx"), "{r}");
    assert!(!bad.exists());
}

/// `generate net --load P` is a plan load in N/m² spread by tributary area
/// (default 600), `--node-load N` a force per free node; not both. Derived:
/// an 11 × 11 net on 20 m × 20 m has 81 free nodes with 2 m × 2 m each, so
/// the default total is 600·81·4 = 194 400 N; with `--node-load 250` it is
/// 81·250 N. The dome's `--crown-load` adds to its plan load.
#[test]
fn generated_loads_are_plan_loads_by_default() {
    let sc = Scratch::new("gen-loads");
    let total = |args: &[&str]| -> f64 {
        let model = sc.path("m.toml");
        let mut all = vec!["generate"];
        all.extend_from_slice(args);
        all.extend_from_slice(&["-o", s(&model)]);
        let r = tautline(&all);
        assert_eq!(r.code, 0, "{r}");
        let r = tautline(&["check", s(&model), "--format", "json"]);
        assert_eq!(r.code, 0, "{r}");
        let v: Value = serde_json::from_str(&r.stdout).unwrap();
        let t = v["total_reference_load"].as_array().unwrap();
        assert_eq!((t[0].as_f64(), t[1].as_f64()), (Some(0.0), Some(0.0)));
        -t[2].as_f64().unwrap()
    };
    let close = |a: f64, b: f64| (a - b).abs() <= 1e-9 * b.abs();
    assert!(close(total(&["net", "--nx", "11", "--ny", "11"]), 194_400.0));
    assert!(close(total(&["net", "--nx", "11", "--ny", "11", "--load", "100"]), 32_400.0));
    assert!(close(total(&["net", "--nx", "11", "--ny", "11", "--node-load", "250"]), 81.0 * 250.0));
    let dome = total(&["dome", "--rings", "2", "--sectors", "6"]);
    let with_crown = total(&["dome", "--rings", "2", "--sectors", "6", "--crown-load", "1000"]);
    assert!(dome > 0.0 && close(with_crown - dome, 1000.0), "{dome} {with_crown}");
    assert!(close(total(&["dome", "--rings", "2", "--sectors", "6", "--node-load", "0", "--crown-load", "1000"]), 1000.0));
    let bad = sc.path("bad.toml");
    let r = tautline(&["generate", "net", "--nx", "5", "--ny", "5", "--load", "600", "--node-load", "3", "-o", s(&bad)]);
    assert_eq!(r.code, 2, "{r}");
    assert!(r.stderr.contains("--node-load"), "{r}");
    assert!(!bad.exists());
}

// -- runs that are interrupted or would overwrite --------------------------

/// An observer that answers Stop at its `stop_at`-th corrector iteration,
/// as the binary's Ctrl-C flag does once set, and records the steps it saw
/// converge.
struct StopAfter {
    stop_at: usize,
    iterations: usize,
    steps: Vec<(usize, f64)>,
}

impl tautline::observe::Observer for StopAfter {
    fn on_iteration(&mut self, _: &tautline::observe::IterEvent) -> tautline::observe::Answer {
        self.iterations += 1;
        if self.iterations >= self.stop_at { tautline::observe::Answer::Stop } else { tautline::observe::Answer::Continue }
    }
    fn on_step(&mut self, ev: &tautline::observe::StepEvent) -> tautline::observe::Answer {
        self.steps.push((ev.step, ev.lambda));
        tautline::observe::Answer::Continue
    }
}

/// The roof arch traced with an observer that stops it in the middle of a
/// step (at its 7th corrector iteration: deterministic, no signal, no
/// sleep): the run ends `interrupted`, keeps exactly the steps that had
/// converged before (the half-done step is dropped), and those agree to
/// 1e-12 with the same steps of the uninterrupted run; results.json's data
/// says interrupted, not converged, with the kept steps.
#[test]
fn interrupted_solve_keeps_what_it_found() {
    use tautline::path::StopReason;
    let text = std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("models/roof_arch.toml")).unwrap();
    let trace = |obs: &mut dyn tautline::observe::Observer| {
        let m = tautline::model::load_str(&text, "roof_arch.toml", None).expect("model");
        let run = tautline::Solver::with_parallelism(&m, faer::Par::Seq).expect("setup").trace(obs);
        let results = tautline::results::build(&m, &run.system, &run.path, &run.wasted, 0.0);
        let path = run.path;
        (path, results)
    };
    let (full, _) = trace(&mut tautline::observe::Silent);
    assert_eq!(full.stop, StopReason::TargetReached);
    let mut obs = StopAfter { stop_at: 7, iterations: 0, steps: Vec::new() };
    let (cut, results) = trace(&mut obs);
    assert_eq!(cut.stop, StopReason::Interrupted);
    assert_eq!(obs.iterations, 7, "the run went on after Stop");
    // Stopped inside a step, after at least one step had converged.
    assert!(!obs.steps.is_empty() && obs.steps.len() + 1 < full.points.len(), "{:?}", obs.steps);
    assert_eq!(cut.points.len(), obs.steps.len() + 1, "kept points: the start and each converged step");
    for (pt, (step, lambda)) in cut.points[1..].iter().zip(&obs.steps) {
        assert_eq!((pt.step, pt.lambda), (*step, *lambda));
    }
    for (a, b) in cut.points.iter().zip(&full.points) {
        assert!((a.lambda - b.lambda).abs() < 1e-12 && (a.point - b.point).abs() < 1e-12, "step {}: {} vs {}", a.step, a.point, b.point);
        assert!(a.relative_residual <= 1e-10, "step {} kept unconverged: {:e}", a.step, a.relative_residual);
    }
    let last = cut.points.last().unwrap();
    assert_eq!(cut.final_state.lambda, last.lambda, "the final state is the last converged one");
    let v = serde_json::to_value(&results).unwrap();
    assert_eq!(v["stop_reason"], "interrupted");
    assert_eq!(v["converged"], false);
    assert_eq!(v["steps"].as_array().unwrap().len(), cut.points.len());
}

/// `-o DIR` holding another model's results is refused (exit 2, files
/// untouched) unless `--force`; the same model may be run again into it.
#[test]
fn output_folder_of_another_model_needs_force() {
    let sc = Scratch::new("overwrite");
    let arch = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("models/roof_arch.toml");
    let net = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("models/courtyard_net.toml");
    let out = sc.path("out");
    assert_eq!(solve(&arch, &out, &[]).code, 0);
    let before = std::fs::read_to_string(out.join("results.json")).unwrap();
    let r = solve(&net, &out, &[]);
    assert_eq!(r.code, 2, "{r}");
    assert!(r.stderr.contains("--force"), "{r}");
    assert_eq!(std::fs::read_to_string(out.join("results.json")).unwrap(), before);
    assert_eq!(solve(&arch, &out, &[]).code, 0, "the same model may rerun into its folder");
    let r = solve(&net, &out, &["--force"]);
    assert_eq!(r.code, 0, "{r}");
    assert!(json(&out.join("results.json"))["model_file"].as_str().unwrap().ends_with("courtyard_net.toml"));
}

// -- form finding ------------------------------------------------------------

/// `form` on a generated saddle net writes formed.toml and form.csv; `solve`
/// on formed.toml starts in equilibrium (first residual below 1e-9 relative,
/// no iteration at step 0) at λ = 1, where the form-finding loads act.
#[test]
fn formed_net_solves_from_equilibrium() {
    let sc = Scratch::new("form");
    let model = sc.path("net.toml");
    let r = tautline(&["generate", "net", "--nx", "9", "--ny", "9", "-o", s(&model)]);
    assert_eq!(r.code, 0, "{r}");
    let text = std::fs::read_to_string(&model).unwrap().replace("[analysis]", "[form]\nforce_density = 2000.0\n\n[analysis]");
    std::fs::write(&model, text).unwrap();
    let out = sc.path("formed");
    let r = tautline(&["form", s(&model), "-o", s(&out)]);
    assert_eq!(r.code, 0, "{r}");
    let (header, rows) = csv(&out.join("form.csv"));
    assert_eq!(header, ["id", "force_N", "length_m", "force_density_N/m"]);
    assert_eq!(rows.len(), 144);
    // The found shape is drawn: one line per member in each view, shaded by force.
    let shape = std::fs::read_to_string(out.join("shape.svg")).expect("form writes shape.svg");
    assert!(shape.starts_with("<svg") || shape.starts_with("<?xml"), "not an SVG");
    assert!(shape.contains("axial force"), "no force legend");
    // The found shape only: one line per member, no undeformed layer and
    // no displacement scale (nothing was analysed).
    assert!(shape.matches("<line class=\"member").count() >= 144, "members missing from the shape plot");
    assert!(!shape.contains("undeformed") && !shape.contains("displacements ×"), "analysis entries in the form plot");
    let run = out.join("run");
    let r = solve(&out.join("formed.toml"), &run, &["--target", "2"]);
    assert_eq!(r.code, 0, "{r}");
    let res = json(&run.join("results.json"));
    let first = &res["steps"][0];
    assert_eq!(first["load_factor"].as_f64().unwrap(), 1.0);
    assert!(first["residual"].as_f64().unwrap() < 1e-9, "{first}");
    assert_eq!(first["iterations"].as_u64().unwrap(), 0);
    // A model without any force density is bad input.
    let bare = sc.write("bare.toml", &std::fs::read_to_string(&model).unwrap().replace("force_density = 2000.0", ""));
    let r = tautline(&["form", s(&bare), "-o", s(&sc.path("no"))]);
    assert_eq!(r.code, 2, "{r}");
    assert!(!sc.path("no").exists());
}

/// A cable that goes slack is named in the summary with its step and load
/// factor, and listed in results.json `slack_events`.
#[test]
fn slack_cables_are_reported_in_summary_and_results() {
    let dir = Scratch::new("slack_events");
    let model = dir.write(
        "slack.toml",
        &crate::common::slackening_pair(""),
    );
    let out = dir.path("out");
    let r = solve(&model, &out, &[]);
    assert_eq!(r.code, 0, "{r}");
    assert!(r.stdout.contains("1 cable went slack: right at step 5 (λ=0.5000)"), "{r}");
    let json: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(out.join("results.json")).unwrap()).unwrap();
    let events = json["slack_events"].as_array().expect("slack_events list");
    assert_eq!(events.len(), 1);
    assert_eq!(events[0]["member"], "right");
    assert_eq!(events[0]["step"], 5);
    assert!(events[0]["tensioned_step"].is_null());
}

// -- threads -------------------------------------------------------------------

/// `results.json` without its wall-clock fields.
fn results_without_times(path: &Path) -> Value {
    let mut v = json(path);
    v["totals"]["seconds"] = Value::Null;
    v
}

/// `--threads 1` and `TAUTLINE_THREADS=3` give byte-identical path and member
/// tables and the same results.json (but for the wall time) on a net large
/// enough that assembly runs on many parallel tasks; a bad thread count is
/// bad input.
#[test]
fn results_do_not_depend_on_the_thread_count() {
    let sc = Scratch::new("threads");
    let model = sc.path("net.toml");
    let r = tautline(&["generate", "net", "--nx", "70", "--ny", "70", "--node-load", "5", "-o", s(&model)]);
    assert_eq!(r.code, 0, "{r}");
    let (one, three) = (sc.path("one"), sc.path("three"));
    let r = solve(&model, &one, &["--method", "bfgs", "--steps", "3", "--threads", "1"]);
    assert_eq!(r.code, 0, "{r}");
    let out = Command::new(BIN)
        .args(["solve", s(&model), "-o", s(&three), "--method", "bfgs", "--steps", "3"])
        .env("TAUTLINE_THREADS", "3")
        .output()
        .expect("run tautline");
    assert_eq!(out.status.code(), Some(0), "{}", String::from_utf8_lossy(&out.stderr));
    for f in ["path.csv", "members.csv"] {
        let (a, b) = (std::fs::read(one.join(f)).unwrap(), std::fs::read(three.join(f)).unwrap());
        assert!(a == b, "{f} differs between 1 and 3 threads");
    }
    let res = results_without_times(&one.join("results.json"));
    assert!(res["steps"].as_array().unwrap().len() >= 3, "{res}");
    assert_eq!(res, results_without_times(&three.join("results.json")));

    let bad = sc.path("bad");
    let r = solve(&model, &bad, &["--threads", "0"]);
    assert_eq!(r.code, 2, "{r}");
    assert!(r.stderr.contains("--threads"), "{r}");
    let out = Command::new(BIN)
        .args(["solve", s(&model), "-o", s(&bad)])
        .env("TAUTLINE_THREADS", "many")
        .output()
        .expect("run tautline");
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("TAUTLINE_THREADS"));
    assert!(!bad.exists(), "nothing written");
}

// ---------------------------------------------------------------------------
// Critical points (issue 13): exit codes, critical_modes.csv, stable_at_end

/// The steep two-bar arch (closed forms in `tautline::verify`) under load
/// control: past its limit the run stops there with exit 3 and the advice
/// to use arc-length; to a load between its bifurcation and its limit it
/// exits 0, writes `stable_at_end: false` and prints a line with
/// "unstable"; `critical_modes.csv` is named in results.json, has the
/// contract's header, one row per node per mode, each mode of unit norm
/// over the free DOFs (C.x and C.z here) with fixed directions 0, and every
/// critical point carries `mode_converged` and `multiplicity`.
#[test]
fn limit_stops_load_control_and_an_unstable_end_is_flagged() {
    let sc = Scratch::new("critical");
    let lim = tautline::verify::steep_limit_load(2) / tautline::verify::STEEP_LOAD;
    let bif = tautline::verify::steep_bifurcation_loads(2)[0] / tautline::verify::STEEP_LOAD;
    let past = sc.write("past.toml", &tautline::verify::steep_crown(2, "load", 1.9 * lim, 8, ""));
    let r = solve(&past, &sc.path("past"), &["--plot-mode", "1"]);
    assert_eq!(r.code, 3, "{r}");
    assert!(r.stdout.contains("limit point") && r.stdout.contains("arc-length"), "{r}");
    let j = json(&sc.path("past/results.json"));
    assert_eq!(j["stop_reason"], "limit_point");
    let kinds: Vec<&str> = j["critical_points"].as_array().unwrap().iter().map(|c| c["kind"].as_str().unwrap()).collect();
    assert_eq!(kinds, ["bifurcation", "limit"], "{j}");
    assert!(sc.path("past/mode.svg").exists());

    let mid = sc.write("mid.toml", &tautline::verify::steep_crown(2, "load", 0.5 * (bif + lim), 8, ""));
    let r = solve(&mid, &sc.path("mid"), &[]);
    assert_eq!(r.code, 0, "{r}");
    assert!(r.stdout.lines().any(|l| l.contains("unstable")), "{r}");
    let j = json(&sc.path("mid/results.json"));
    assert_eq!(j["stable_at_end"], false);
    assert_eq!(j["critical_modes_file"], "critical_modes.csv");
    let c = &j["critical_points"][0];
    assert_eq!((c["kind"].as_str(), c["multiplicity"].as_u64(), c["mode_converged"].as_bool(), c["pinpointed"].as_bool()), (Some("bifurcation"), Some(1), Some(true), Some(true)), "{c}");
    let (header, rows) = csv(&sc.path("mid/critical_modes.csv"));
    assert_eq!(header.join(","), "critical,load_factor,node,ux,uy,uz");
    assert_eq!(rows.len(), 3, "one row per node (A, B, C) for the one mode");
    let norm: f64 = rows.iter().flat_map(|r| r[3..6].iter().map(|v| num(v).powi(2))).sum::<f64>().sqrt();
    assert!((norm - 1.0).abs() < 1e-12, "{norm}");
    let c_row = rows.iter().find(|r| r[2] == "C").unwrap();
    assert!((num(&c_row[3]).abs() - 1.0).abs() < 1e-9 && num(&c_row[4]) == 0.0, "the sway is C.x: {c_row:?}");
    assert!(rows.iter().filter(|r| r[2] != "C").all(|r| r[3..6].iter().all(|v| num(v) == 0.0)));

    // A stable end: below the bifurcation.
    let low = sc.write("low.toml", &tautline::verify::steep_crown(2, "load", 0.5 * bif, 4, ""));
    let r = solve(&low, &sc.path("low"), &[]);
    assert_eq!(r.code, 0, "{r}");
    assert!(!r.stdout.contains("unstable"), "{r}");
    assert_eq!(json(&sc.path("low/results.json"))["stable_at_end"], true);
}

/// The run summary says when a quasi-Newton run was finished by Newton
/// iterations in most steps (4 in 5 or more), pointing to `--method newton`:
/// a 61 × 61 net at 1600 N per node in 10 steps (9 of them finished by
/// Newton; Newton alone the faster there, README "Hard paths"). No note for
/// Newton itself, nor for BFGS on the same net at the default 600 N/m²,
/// where its iterations finish every step.
#[test]
fn the_summary_points_to_newton_when_newton_finished_the_steps() {
    let sc = Scratch::new("newton-note");
    let hard = sc.path("hard.toml");
    let r = tautline(&["generate", "net", "--nx", "61", "--ny", "61", "--node-load", "1600", "-o", s(&hard)]);
    assert_eq!(r.code, 0, "{r}");
    let easy = sc.path("easy.toml");
    let r = tautline(&["generate", "net", "--nx", "61", "--ny", "61", "-o", s(&easy)]);
    assert_eq!(r.code, 0, "{r}");
    let note = "steps were finished by Newton iterations";
    let r = solve(&hard, &sc.path("bfgs"), &["--method", "bfgs", "--steps", "10", "--tolerance", "1e-8"]);
    assert_eq!(r.code, 0, "{r}");
    assert!(r.stdout.contains(note) && r.stdout.contains("`--method newton`"), "{r}");
    let res = json(&sc.path("bfgs").join("results.json"));
    assert!(res["totals"]["newton_fallback_steps"].as_u64().unwrap() >= 8, "{}", res["totals"]);
    let r = solve(&hard, &sc.path("newton"), &["--method", "newton", "--steps", "10", "--tolerance", "1e-8"]);
    assert_eq!(r.code, 0, "{r}");
    assert!(!r.stdout.contains(note), "{r}");
    let r = solve(&easy, &sc.path("easy"), &["--method", "bfgs"]);
    assert_eq!(r.code, 0, "{r}");
    assert!(!r.stdout.contains(note), "{r}");
}
