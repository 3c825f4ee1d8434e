//! `keep_fields`, `fields.csv` and `critical_fields.csv`, through the binary:
//! the kept fields agree with path.csv, members.csv and results.json, each
//! policy keeps exactly its steps, and bad values are refused with a place.

use crate::report::{Scratch, tautline};
use serde_json::Value;
use std::collections::BTreeSet;
use std::path::{Path, PathBuf};

fn model_file(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("models").join(name)
}

fn s(p: &Path) -> &str {
    p.to_str().expect("utf-8 paths")
}

fn json(path: &Path) -> Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

/// Header and rows of a CSV file without quoted cells.
fn csv(path: &Path) -> (String, Vec<Vec<String>>) {
    let text = std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    let mut lines = text.lines();
    let header = lines.next().unwrap_or_else(|| panic!("{}: empty", path.display())).to_string();
    (header, lines.map(|l| l.split(',').map(str::to_string).collect()).collect())
}

fn num(cell: &str) -> f64 {
    cell.parse().unwrap_or_else(|_| panic!("not a number: {cell:?}"))
}

fn steps_of(v: &Value) -> Vec<u64> {
    v.as_array().unwrap().iter().map(|x| x.as_u64().unwrap()).collect()
}

/// The distinct steps of fields.csv in file order, checking that they
/// ascend and that each holds every node once, in model order.
fn file_steps(rows: &[Vec<String>], nodes: &[String]) -> Vec<u64> {
    let mut steps: Vec<u64> = Vec::new();
    for (i, chunk) in rows.chunks(nodes.len()).enumerate() {
        let step: u64 = chunk[0][0].parse().unwrap();
        assert!(steps.last().is_none_or(|&l| l < step), "steps ascend: {step} after {steps:?}");
        for (row, node) in chunk.iter().zip(nodes) {
            assert_eq!(row.len(), 6, "row {i}: {row:?}");
            assert_eq!(row[0], chunk[0][0], "one step per block of node rows");
            assert_eq!(&row[2], node, "nodes in model order");
        }
        steps.push(step);
    }
    assert_eq!(rows.len(), steps.len() * nodes.len(), "whole blocks of node rows");
    steps
}

#[test]
fn demo_fields_agree_with_path_and_members() {
    let sc = Scratch::new("fields-demo");
    let out = sc.0.join("demo");
    let (code, stdout, stderr) = tautline(&["demo", "-q", "-o", s(&out)]);
    assert_eq!(code, 0, "{stdout}{stderr}");
    assert!(stdout.contains("fields.csv"), "{stdout}");
    let m = tautline::model::load(&model_file("courtyard_net.toml")).expect("demo model");
    let nodes: Vec<String> = m.nodes.iter().map(|n| n.label.clone()).collect();
    let res = json(&out.join("results.json"));
    let f = &res["fields"];
    assert_eq!(f["file"], "fields.csv");
    // 7×7 nodes: far below the "auto" threshold, so every step is kept.
    assert_eq!(f["keep"], "all");
    let all: Vec<u64> = res["steps"].as_array().unwrap().iter().map(|s| s["step"].as_u64().unwrap()).collect();
    assert_eq!(steps_of(&f["steps"]), all);

    let (header, rows) = csv(&out.join("fields.csv"));
    assert_eq!(header, "step,load_factor,node,ux,uy,uz");
    assert_eq!(f["rows"].as_u64().unwrap() as usize, rows.len());
    assert_eq!(file_steps(&rows, &nodes), all);

    // Supported directions are written as 0.
    for row in &rows {
        let node = &m.nodes[nodes.iter().position(|n| *n == row[2]).unwrap()];
        for a in 0..3 {
            if node.fixed[a] {
                assert_eq!(num(&row[3 + a]), 0.0, "{row:?}");
            }
        }
    }

    // Every kept step's watched displacement is path.csv's, to the bit.
    let (path_header, path_rows) = csv(&out.join("path.csv"));
    let watch: Vec<&str> = path_header.split(',').skip(2).collect();
    assert!(!watch.is_empty());
    for (prow, block) in path_rows.iter().zip(rows.chunks(nodes.len())) {
        assert_eq!(prow[0], block[0][0], "same step");
        assert_eq!(num(&prow[1]), num(&block[0][1]), "same load factor at step {}", prow[0]);
        for (w, cell) in watch.iter().zip(&prow[2..]) {
            let (node, dir) = w.rsplit_once('.').unwrap();
            let row = block.iter().find(|r| r[2] == node).unwrap();
            let col = 3 + "xyz".find(dir).unwrap();
            assert_eq!(num(&row[col]), num(cell), "{w} at step {}", prow[0]);
        }
    }

    // The final shape: member lengths from node positions plus the last
    // field's displacements are members.csv's lengths.
    let last = &rows[rows.len() - nodes.len()..];
    let pos: Vec<[f64; 3]> = m
        .nodes
        .iter()
        .zip(last)
        .map(|(n, r)| std::array::from_fn(|a| m.units.length_out(n.at[a]) + num(&r[3 + a])))
        .collect();
    let (mheader, mrows) = csv(&out.join("members.csv"));
    let col = mheader.split(',').position(|c| c == "length_m").expect("length_m column");
    assert_eq!(mrows.len(), m.members.len());
    for (mem, row) in m.members.iter().zip(&mrows) {
        assert_eq!(row[0], mem.label);
        let [a, b] = mem.ends.map(|e| pos[e]);
        let l = ((a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2) + (a[2] - b[2]).powi(2)).sqrt();
        let want = num(&row[col]);
        assert!((l - want).abs() <= 1e-12 * want, "member {}: {l} from fields.csv, {want} in members.csv", mem.label);
    }
    // No pinpointed critical point on this path: a header only.
    let (cheader, crows) = csv(&out.join("critical_fields.csv"));
    assert_eq!(cheader, "critical,step,load_factor,node,ux,uy,uz");
    assert!(crows.is_empty());
    assert_eq!(f["critical_rows"], 0);
}

#[test]
fn ends_keep_the_first_last_and_critical_steps_and_the_critical_states() {
    let sc = Scratch::new("fields-ends");
    let out = sc.0.join("arch");
    let arch = model_file("roof_arch.toml");
    let (code, stdout, stderr) = tautline(&["solve", s(&arch), "-q", "-o", s(&out), "--keep-fields", "ends"]);
    assert_eq!(code, 0, "{stdout}{stderr}");
    let m = tautline::model::load(&arch).unwrap();
    let nodes: Vec<String> = m.nodes.iter().map(|n| n.label.clone()).collect();
    let res = json(&out.join("results.json"));
    let f = &res["fields"];
    assert_eq!(f["keep"], "ends");
    let cps = res["critical_points"].as_array().unwrap();
    // The arch snaps through: two limit points.
    assert_eq!(cps.len(), 2, "{cps:?}");
    let last = res["steps"].as_array().unwrap().last().unwrap()["step"].as_u64().unwrap();
    let mut want: BTreeSet<u64> = cps.iter().map(|c| c["step"].as_u64().unwrap()).collect();
    want.insert(0);
    want.insert(last);
    let want: Vec<u64> = want.into_iter().collect();
    assert_eq!(steps_of(&f["steps"]), want);
    let (_, rows) = csv(&out.join("fields.csv"));
    assert_eq!(file_steps(&rows, &nodes), want);

    // The pinpointed states: their watched C.z is results.json's.
    assert_eq!(steps_of(&f["critical"]), vec![0, 1]);
    let (_, crows) = csv(&out.join("critical_fields.csv"));
    assert_eq!(crows.len(), 2 * nodes.len());
    assert_eq!(f["critical_rows"].as_u64().unwrap() as usize, crows.len());
    assert_eq!(res["watch"][0], "C.z");
    for (i, cp) in cps.iter().enumerate() {
        let row = crows.iter().find(|r| r[0] == i.to_string() && r[3] == "C").expect("node C of each critical state");
        assert_eq!(num(&row[1]), cp["step"].as_f64().unwrap());
        assert_eq!(num(&row[2]), cp["load_factor"].as_f64().unwrap());
        assert_eq!(num(&row[6]), cp["watched"][0].as_f64().unwrap());
    }
}

#[test]
fn a_list_keeps_exactly_the_steps_reached_and_the_option_overrides_it() {
    let sc = Scratch::new("fields-list");
    let text = std::fs::read_to_string(model_file("roof_arch.toml")).unwrap();
    assert!(text.contains("watch = [\"C.z\"]\n"));
    // Step 500 is never reached (max_steps = 100).
    let text = text.replacen("watch = [\"C.z\"]\n", "watch = [\"C.z\"]\nkeep_fields = [7, 0, 2, 500, 2]\n", 1);
    let model = sc.0.join("arch.toml");
    std::fs::write(&model, text).unwrap();
    let nodes = 3;
    for (extra, keep, want) in [
        (None, "list", vec![0, 2, 7]),
        (Some("12,3"), "list", vec![3, 12]),
        (Some("none"), "none", vec![]),
        (Some("all"), "all", (0..=44).collect()),
    ] {
        let out = sc.0.join(format!("out-{}", extra.unwrap_or("file")));
        let mut args = vec!["solve", s(&model), "-q", "-o", s(&out)];
        if let Some(e) = extra {
            args.extend(["--keep-fields", e]);
        }
        let (code, stdout, stderr) = tautline(&args);
        assert_eq!(code, 0, "{args:?}\n{stdout}{stderr}");
        let f = &json(&out.join("results.json"))["fields"];
        assert_eq!(f["keep"], keep, "{args:?}");
        assert_eq!(steps_of(&f["steps"]), want, "{args:?}");
        let (_, rows) = csv(&out.join("fields.csv"));
        let labels: Vec<String> = ["L", "R", "C"].map(String::from).to_vec();
        assert_eq!(file_steps(&rows, &labels), want, "{args:?}");
        assert_eq!(f["rows"].as_u64().unwrap() as usize, want.len() * nodes);
        // Only "all" and "ends" keep the pinpointed states.
        let (_, crows) = csv(&out.join("critical_fields.csv"));
        assert_eq!(crows.is_empty(), keep != "all", "{args:?}");
    }
}

#[test]
fn auto_keeps_only_the_ends_above_the_threshold() {
    let sc = Scratch::new("fields-auto");
    let model = sc.0.join("net.toml");
    // 103 × 103 nodes with fixed edges: 3 · 101² = 30,603 free DOFs, just
    // above tautline::model::AUTO_ALL_FIELDS_MAX_DOFS.
    let (code, stdout, stderr) = tautline(&["generate", "net", "--nx", "103", "--ny", "103", "-o", s(&model)]);
    assert_eq!(code, 0, "{stdout}{stderr}");
    let (code, stdout, _) = tautline(&["check", s(&model)]);
    assert_eq!(code, 0);
    let free: usize = stdout.lines().find_map(|l| l.strip_prefix("free DOFs: ")).unwrap().trim().parse().unwrap();
    assert_eq!(free, 3 * 101 * 101);
    assert!(free > tautline::model::AUTO_ALL_FIELDS_MAX_DOFS, "{free} free DOFs");
    let out = sc.0.join("out");
    // Two small load steps keep the run short.
    let args = ["solve", s(&model), "-q", "-o", s(&out), "--steps", "2", "--target", "0.02"];
    let (code, stdout, stderr) = tautline(&args);
    assert_eq!(code, 0, "{stdout}{stderr}");
    let f = &json(&out.join("results.json"))["fields"];
    assert_eq!(f["keep"], "ends");
    assert_eq!(steps_of(&f["steps"]), vec![0, 2]);
    assert_eq!(f["rows"], 2 * 103 * 103);
}

#[test]
fn bad_keep_fields_values_are_refused_with_their_place() {
    let sc = Scratch::new("fields-bad");
    let text = std::fs::read_to_string(model_file("roof_arch.toml")).unwrap();
    let line = text.lines().position(|l| l.starts_with("watch = ")).unwrap() + 2;
    for (value, wants) in [
        ("\"end\"", vec!["unknown keep_fields \"end\"", "did you mean \"ends\"?"]),
        ("[0, -1]", vec!["`keep_fields` must be at least 0, found -1"]),
        ("[0, 2.5]", vec!["`keep_fields`: wrong type", "expected a whole number"]),
        ("true", vec!["`keep_fields`: wrong type", "an array of step numbers"]),
    ] {
        let model = sc.0.join("bad.toml");
        std::fs::write(&model, text.replacen("watch = [\"C.z\"]\n", &format!("watch = [\"C.z\"]\nkeep_fields = {value}\n"), 1)).unwrap();
        let out = sc.0.join("out");
        let (code, stdout, stderr) = tautline(&["solve", s(&model), "-o", s(&out)]);
        assert_eq!(code, 2, "{value}: {stdout}{stderr}");
        assert!(stderr.contains(&format!("{}:{line}:", model.display())), "{value}: place in {stderr}");
        assert!(stderr.contains("[analysis]"), "{value}: item in {stderr}");
        for w in wants {
            assert!(stderr.contains(w), "{value}: {w:?} in {stderr}");
        }
        assert!(!out.exists(), "nothing written");
    }
    let out = sc.0.join("out");
    for bad in ["sometimes", "1,x", "3,-1", "1e3"] {
        let (code, _, stderr) = tautline(&["solve", s(&model_file("roof_arch.toml")), "-o", s(&out), "--keep-fields", bad]);
        assert_eq!(code, 2, "--keep-fields {bad}: {stderr}");
        assert!(stderr.contains("--keep-fields"), "{stderr}");
        assert!(!out.exists(), "nothing written");
    }
}
