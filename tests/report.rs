//! `report.html`, `tautline verify` and `--quiet`, through the binary.

use serde_json::Value;
use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::process::Command;
use tautline::report::numbers::sig4;

const BIN: &str = env!("CARGO_BIN_EXE_tautline");

/// A scratch folder removed on drop.
pub struct Scratch(pub PathBuf);

impl Scratch {
    pub fn new(name: &str) -> Scratch {
        let dir = std::env::temp_dir().join(format!("tautline-report-{name}-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).expect("scratch folder");
        Scratch(dir)
    }
}

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

pub fn tautline(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(BIN).args(args).output().expect("run tautline");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

pub fn model_path(name: &str) -> String {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("models").join(name).to_string_lossy().into_owned()
}

pub fn read(p: &Path) -> String {
    std::fs::read_to_string(p).unwrap_or_else(|e| panic!("{}: {e}", p.display()))
}

/// The text of every `<td>` of a row.
fn cells(row: &str) -> Vec<String> {
    row.split("<td").skip(1).map(|c| {
        let start = c.find('>').map_or(0, |i| i + 1);
        let end = c.find("</td>").unwrap_or(c.len());
        c[start..end].to_string()
    }).collect()
}

/// Rows of the table with this id: (the row's opening tag, its cells).
pub fn table_rows(html: &str, id: &str) -> Vec<(String, Vec<String>)> {
    let start = html.find(&format!("<table id=\"{id}\">")).unwrap_or_else(|| panic!("no table {id}"));
    let body = &html[start..];
    let body = &body[..body.find("</table>").expect("table ends")];
    let body = &body[body.find("<tbody>").expect("tbody")..];
    body.split("<tr").skip(1).map(|r| {
        let tag = r[..r.find('>').unwrap_or(0)].to_string();
        (tag, cells(r))
    }).collect()
}

/// The member id of a row's `data-member` attribute (escaped as written).
fn data_member(tag: &str) -> String {
    let a = tag.find("data-member=\"").expect("data-member") + "data-member=\"".len();
    tag[a..a + tag[a..].find('"').unwrap()].to_string()
}

pub fn unescape(s: &str) -> String {
    s.replace("&lt;", "<").replace("&gt;", ">").replace("&quot;", "\"").replace("&#39;", "'").replace("&amp;", "&")
}

/// Every member row of the report (largest tension, compression,
/// utilisation, slack) shows the values of members.csv at 4 significant
/// figures.
pub fn assert_member_rows_match_csv(out: &Path) -> usize {
    let html = read(&out.join("report.html"));
    let csv = read(&out.join("members.csv"));
    let by_id: HashMap<String, Vec<String>> = csv
        .lines()
        .skip(1)
        .map(|l| {
            let c: Vec<String> = l.split(',').map(str::to_string).collect();
            (c[0].clone(), c)
        })
        .collect();
    let four = |s: &str| sig4(s.parse::<f64>().unwrap_or_else(|_| panic!("not a number {s:?}")));
    let mut checked = 0;
    for table in ["max-tension", "max-compression", "utilisation", "slack"] {
        if !html.contains(&format!("<table id=\"{table}\">")) {
            continue;
        }
        for (tag, c) in table_rows(&html, table) {
            let id = unescape(&data_member(&tag));
            let row = by_id.get(&id).unwrap_or_else(|| panic!("{table}: member {id} not in members.csv"));
            assert_eq!(unescape(&c[0]), id);
            assert_eq!(c[1], row[1], "{id} kind");
            assert_eq!(c[2], four(&row[2]), "{id} force");
            assert_eq!(c[3], four(&row[3]), "{id} strain");
            assert_eq!(c[4], four(&row[4]), "{id} length");
            let util = if row[5].is_empty() { "–".to_string() } else { four(&row[5]) };
            assert_eq!(c[5], util, "{id} utilisation");
            assert_eq!(c[6] == "slack", row[6] == "true", "{id} slack");
            checked += 1;
        }
    }
    // Units in the headers.
    let head = &html[html.find("<table id=\"max-tension\">").unwrap_or(0)..];
    let head = &head[..head.find("</thead>").unwrap_or(0)];
    let res: Value = serde_json::from_str(&read(&out.join("results.json"))).unwrap();
    if !head.is_empty() {
        assert!(head.contains(&format!("force [{}]", res["units"]["force"].as_str().unwrap())), "{head}");
        assert!(head.contains(&format!("length [{}]", res["units"]["length"].as_str().unwrap())), "{head}");
        assert!(head.contains("strain [–]") && head.contains("utilisation [–]"), "{head}");
    }
    checked
}

/// A number from the page at 4 significant figures: within half a unit of
/// its 4th digit of the value in results.json.
#[derive(Debug)]
struct Four(f64);

impl PartialEq<f64> for Four {
    fn eq(&self, other: &f64) -> bool {
        (self.0 - other).abs() <= 5e-4 * other.abs() * (1.0 + 1e-12) || (self.0 == 0.0 && *other == 0.0)
    }
}

/// The reactions (one row per node), equilibrium, steps and critical points
/// tables hold the numbers of results.json at 4 significant figures.
pub fn assert_tables_match_json(out: &Path) {
    let html = read(&out.join("report.html"));
    let res: Value = serde_json::from_str(&read(&out.join("results.json"))).unwrap();
    let f = |s: &str| Four(s.parse::<f64>().unwrap_or_else(|_| panic!("not a number {s:?}")));
    let reactions = res["reactions"].as_array().unwrap();
    let rows = table_rows(&html, "reactions");
    let mut nodes: Vec<&str> = Vec::new();
    for r in reactions {
        let n = r["node"].as_str().unwrap();
        if !nodes.contains(&n) {
            nodes.push(n);
        }
    }
    assert_eq!(rows.len(), nodes.len().min(500), "one row per node");
    for ((_, c), node) in rows.iter().zip(&nodes) {
        assert_eq!(unescape(&c[0]), *node);
        for (k, dir) in ["x", "y", "z"].iter().enumerate() {
            let here: Vec<f64> = reactions.iter().filter(|r| r["node"] == *node && r["dir"] == *dir).map(|r| r["value"].as_f64().unwrap()).collect();
            if here.is_empty() {
                assert_eq!(c[k + 1], "–", "{node}.{dir} has no reaction");
            } else {
                assert_eq!(f(&c[k + 1]), here.iter().sum::<f64>(), "{node}.{dir}");
            }
        }
    }
    let eq = &res["equilibrium"];
    let rows = table_rows(&html, "equilibrium");
    let lf = eq["load_factor"].as_f64().unwrap();
    let named = |k: &str| [0, 1, 2].map(|a| eq[k][a].as_f64().unwrap());
    let want = [
        ("dead load", named("dead_load")),
        ("λ × reference load", named("reference_load").map(|v| v * lf)),
        ("applied", named("applied")),
        ("reactions", named("reactions")),
        ("imbalance", named("imbalance")),
    ];
    assert_eq!(rows.len(), want.len());
    for ((_, c), (key, v)) in rows.iter().zip(want) {
        assert_eq!(c[0], key);
        for k in 0..3 {
            // The imbalance is round-off: compared against the applied scale.
            if key == "imbalance" {
                assert!(c[k + 1].parse::<f64>().unwrap().abs() <= 1e-6 * (1.0 + named("applied")[k].abs()) + v[k].abs() * 1.001, "{key}[{k}]");
            } else {
                assert_eq!(f(&c[k + 1]), v[k], "{key}[{k}]");
            }
        }
    }
    let steps = res["steps"].as_array().unwrap();
    let rows = table_rows(&html, "steps");
    assert_eq!(rows.len(), steps.len().min(500));
    for ((_, c), s) in rows.iter().zip(steps) {
        assert_eq!(c[0].parse::<f64>().unwrap(), s["step"].as_f64().unwrap());
        assert_eq!(f(&c[1]), s["load_factor"].as_f64().unwrap());
        assert_eq!(c[2].parse::<f64>().unwrap(), s["iterations"].as_f64().unwrap());
        assert_eq!(f(&c[4]), s["residual"].as_f64().unwrap());
    }
    let cps = res["critical_points"].as_array().unwrap();
    if !cps.is_empty() {
        let rows = table_rows(&html, "critical-points");
        assert_eq!(rows.len(), cps.len());
        for (i, ((_, c), cp)) in rows.iter().zip(cps).enumerate() {
            assert_eq!(c[0], (i + 1).to_string(), "numbered as on the path plot");
            assert_eq!(c[1], cp["kind"].as_str().unwrap());
            assert_eq!(f(&c[2]), cp["load_factor"].as_f64().unwrap());
        }
    }
}

/// The page is self-contained: the caution first, three inline plots, no
/// script, no external reference.
fn assert_self_contained(out: &Path) {
    let html = read(&out.join("report.html"));
    let body = &html[html.find("<body>").expect("body")..];
    assert!(body.trim_start_matches("<body>").trim_start().starts_with("<div id=\"caution\""), "caution first");
    assert!(html.contains(tautline::results::CAUTION));
    assert!(html.matches("<svg ").count() >= 3, "at least the path, shape and convergence plots inline");
    for svg in ["path.svg", "shape.svg", "convergence.svg"] {
        let file = read(&out.join(svg));
        assert!(html.contains(file.trim_end()), "{svg} embedded as written");
    }
    assert!(!html.contains("<script"));
    // Raster panels are embedded as data URIs; nothing else is referenced.
    let outside = html.replace("href=\"data:image/png;base64,", "");
    assert!(!outside.contains("src=") && !outside.contains("href=") && !html.contains("@import") && !html.contains("url("));
    assert!(html.contains("@media print") && html.contains("table-header-group") && html.contains("page-break-inside: avoid"));
}

#[test]
fn report_of_each_example_matches_its_results() {
    for (name, expect_critical) in [("courtyard_net.toml", false), ("roof_arch.toml", true)] {
        let sc = Scratch::new(&format!("ex-{name}"));
        let out = sc.0.join("out");
        let (code, stdout, stderr) = tautline(&["solve", &model_path(name), "-o", out.to_str().unwrap()]);
        assert_eq!(code, 0, "{name}: exit {code}\n{stdout}{stderr}");
        assert!(stdout.contains(&format!("report: {}", out.join("report.html").display())), "{stdout}");
        let checked = assert_member_rows_match_csv(&out);
        assert!(checked > 0, "{name}: no member row checked");
        assert_tables_match_json(&out);
        assert_self_contained(&out);
        let html = read(&out.join("report.html"));
        assert_eq!(html.contains("<table id=\"critical-points\">"), expect_critical, "{name}");
    }
}

#[test]
fn demo_writes_the_report_and_says_where() {
    let sc = Scratch::new("demo");
    let out = sc.0.join("demo");
    let (code, stdout, _) = tautline(&["demo", "-o", out.to_str().unwrap()]);
    assert_eq!(code, 0, "{stdout}");
    let report = out.join("report.html");
    assert!(stdout.contains(&format!("report: {}", report.display())), "{stdout}");
    assert_self_contained(&out);
    // The demo net gives its cables a tension capacity: the utilisation table is there.
    assert!(!table_rows(&read(&report), "utilisation").is_empty());
}

#[test]
fn model_strings_are_escaped() {
    let sc = Scratch::new("escape");
    let text = read(Path::new(&model_path("roof_arch.toml")));
    let title_line = text.lines().find(|l| l.starts_with("title")).expect("title line").to_string();
    let text = text.replacen(&title_line, r#"title = "<b>A & B's \"arch\"</b>""#, 1);
    let model = sc.0.join("m.toml");
    std::fs::write(&model, text).unwrap();
    let out = sc.0.join("out");
    let (code, stdout, stderr) = tautline(&["solve", model.to_str().unwrap(), "-o", out.to_str().unwrap()]);
    assert_eq!(code, 0, "{stdout}{stderr}");
    let html = read(&out.join("report.html"));
    assert!(!html.contains("<b>A"), "raw title leaked into the page");
    assert!(html.contains("<title>&lt;b&gt;A &amp; B&#39;s &quot;arch&quot;&lt;/b&gt;</title>"));
}

#[test]
fn large_model_member_tables_are_capped_and_say_so() {
    let sc = Scratch::new("large");
    let model = sc.0.join("net.toml");
    let (code, o, e) = tautline(&["generate", "net", "--nx", "12", "--ny", "12", "-o", model.to_str().unwrap()]);
    assert_eq!(code, 0, "{o}{e}");
    let out = sc.0.join("out");
    let (code, o, e) = tautline(&["solve", model.to_str().unwrap(), "-o", out.to_str().unwrap(), "--steps", "2"]);
    assert_eq!(code, 0, "{o}{e}");
    let html = read(&out.join("report.html"));
    let n_members = read(&out.join("members.csv")).lines().count() - 1;
    let rows = table_rows(&html, "max-tension");
    assert_eq!(rows.len(), tautline::report::html::TOP_MEMBERS);
    assert!(html.contains(&format!("Showing {} of", tautline::report::html::TOP_MEMBERS)), "the cap is stated");
    assert!(n_members > tautline::report::html::TOP_MEMBERS);
    // Largest tension first, and the largest of members.csv at the top.
    let forces: Vec<f64> = rows.iter().map(|(_, c)| c[2].parse().unwrap()).collect();
    assert!(forces.windows(2).all(|w| w[0] >= w[1]));
    let max_csv = read(&out.join("members.csv")).lines().skip(1).map(|l| l.split(',').nth(2).unwrap().parse::<f64>().unwrap()).fold(f64::MIN, f64::max);
    assert_eq!(rows[0].1[2], sig4(max_csv));
    assert_member_rows_match_csv(&out);
}

#[test]
fn quiet_solve_prints_only_the_outcome_files_and_caution() {
    let sc = Scratch::new("quiet");
    let out = sc.0.join("out");
    let (code, stdout, stderr) = tautline(&["solve", &model_path("courtyard_net.toml"), "-o", out.to_str().unwrap(), "--quiet"]);
    assert_eq!(code, 0, "{stdout}{stderr}");
    let lines: Vec<&str> = stdout.lines().collect();
    assert_eq!(lines.len(), 4, "{stdout}");
    assert!(lines[0].starts_with("done: "), "{stdout}");
    assert!(lines[1].starts_with("wrote ") && lines[2].starts_with("report: ") && lines[3].contains("SAFETY.md"));
    assert!(!stdout.contains("totals:"));
    assert!(stderr.is_empty(), "no progress output on a non-terminal stderr: {stderr}");
    assert!(out.join("report.html").is_file());
    // Without --quiet the summary is there, and stderr (not a terminal here)
    // still carries no progress bar.
    let (code, stdout, stderr) = tautline(&["solve", &model_path("courtyard_net.toml"), "-o", out.to_str().unwrap()]);
    assert_eq!(code, 0);
    assert!(stdout.contains("totals:"));
    assert!(stderr.is_empty(), "{stderr}");
}

#[test]
fn verify_passes_and_cites_a_source_for_every_case() {
    let (code, stdout, stderr) = tautline(&["verify"]);
    assert_eq!(code, 0, "{stdout}{stderr}");
    let n = tautline::verify::CASES.len();
    assert!(n >= 7);
    assert!(stdout.contains(&format!("{n} of {n} cases pass")), "{stdout}");
    let lines: Vec<&str> = stdout.lines().collect();
    let results: Vec<usize> = (0..lines.len()).filter(|&i| lines[i].trim_end().ends_with("  pass")).collect();
    assert_eq!(results.len(), n, "{stdout}");
    for i in results {
        let src = lines[i + 1].trim_start().strip_prefix("source:").unwrap_or_else(|| panic!("no source under {}", lines[i]));
        assert!(src.trim().len() > 10, "{}", lines[i]);
    }
    let (code, json, _) = tautline(&["verify", "--format", "json"]);
    assert_eq!(code, 0);
    let v: Value = serde_json::from_str(&json).expect("json");
    let cases = v.as_array().unwrap();
    assert_eq!(cases.len(), n);
    for c in cases {
        assert_eq!(c["pass"], true, "{c}");
        assert!(!c["source"].as_str().unwrap().trim().is_empty());
        let (r, x, t) = (c["reference"].as_f64().unwrap(), c["computed"].as_f64().unwrap(), c["tolerance"].as_f64().unwrap());
        assert!((x - r).abs() <= t * r.abs(), "{c}");
    }
    let (code, _, stderr) = tautline(&["verify", "--format", "xml"]);
    assert_eq!(code, 2, "{stderr}");
}

/// Every library case passes on this machine (the failure path, a wrong
/// value and a NaN failing their case, is unit-tested in `src/verify/tests.rs`
/// and end to end below).
#[test]
fn verify_cases_each_pass_in_the_library() {
    for case in tautline::verify::run_all() {
        assert!(case.pass, "{case:?}");
        assert!(case.relative_error <= case.tolerance && case.computed.is_finite());
    }
}

/// `tautline verify` with one case made wrong (computed × 1.01) or NaN
/// through `TAUTLINE_VERIFY_FAULT`: exit 4, the case shown as FAIL, one
/// case fewer passing, and `pass: false` in the JSON. A misspelt spec
/// fails too.
#[test]
fn verify_reports_a_wrong_or_nan_value_with_exit_4() {
    let n = tautline::verify::CASES.len();
    let case = "two-bar arch, engineering strain";
    let run = |spec: &str, format: &str| {
        let out = Command::new(BIN).args(["verify", "--format", format]).env(tautline::verify::FAULT_VAR, spec).output().expect("run tautline");
        (out.status.code().unwrap_or(-1), String::from_utf8_lossy(&out.stdout).into_owned())
    };
    for fault in ["wrong", "nan"] {
        let (code, stdout) = run(&format!("{case}={fault}"), "text");
        assert_eq!(code, 4, "{fault}: {stdout}");
        assert!(stdout.contains(&format!("{} of {n} cases pass", n - 1)), "{fault}: {stdout}");
        let row = stdout.lines().find(|l| l.starts_with(case)).expect("the case's row");
        assert!(row.contains("FAIL") && row.contains(tautline::verify::FAULT_VAR), "{fault}: {row}");
        let (code, json) = run(&format!("{case}={fault}"), "json");
        assert_eq!(code, 4);
        let v: Value = serde_json::from_str(&json).expect("json");
        let failed: Vec<&str> = v.as_array().unwrap().iter().filter(|c| c["pass"] == false).map(|c| c["name"].as_str().unwrap()).collect();
        assert_eq!(failed, [case], "{fault}");
    }
    let (code, stdout) = run("no such case=wrong", "text");
    assert_eq!(code, 4, "{stdout}");
}

/// `--png`: each plot also as a PNG of the SVG's pixel size, decodable and
/// not blank; without `--png` none is written.
#[test]
fn png_plots_on_request() {
    let sc = Scratch::new("png");
    let out = sc.0.join("out");
    let (code, o, e) = tautline(&["solve", &model_path("roof_arch.toml"), "-o", out.to_str().unwrap(), "--png", "-q"]);
    assert_eq!(code, 0, "{o}{e}");
    for name in ["path", "shape", "convergence"] {
        let svg = read(&out.join(format!("{name}.svg")));
        let attr = |a: &str| -> u32 {
            let i = svg.find(&format!(" {a}=\"")).unwrap() + a.len() + 3;
            svg[i..i + svg[i..].find('"').unwrap()].parse::<f64>().unwrap().round() as u32
        };
        let (w, h, colours) = crate::browser::distinct_colours(&out.join(format!("{name}.png")));
        assert_eq!((w, h), (attr("width"), attr("height")), "{name}.png size");
        assert!(colours > 20, "{name}.png looks blank: {colours} colours");
    }
    let out2 = sc.0.join("out2");
    let (code, _, _) = tautline(&["solve", &model_path("roof_arch.toml"), "-o", out2.to_str().unwrap(), "-q"]);
    assert_eq!(code, 0);
    assert!(!out2.join("path.png").exists());
}
