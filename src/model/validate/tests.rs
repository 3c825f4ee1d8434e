//! Unit tests of validation: good models, reading errors; the per-table
//! error tests are in `tests/`.

use super::*;
use crate::model::*;
use std::path::PathBuf;
use std::sync::atomic::{AtomicUsize, Ordering};

/// A small valid model the error tests add to.
pub(super) const BASE: &str = r#"title = "base"
[[section]]
name = "strand"
EA = 1000.0
[[node]]
id = "A"
at = [0, 0, 0]
fix = "xyz"
[[node]]
id = "B"
at = [1, 0, 0]
fix = "yz"
[[member]]
id = "m1"
kind = "bar"
ends = ["A", "B"]
section = "strand"
[[load]]
node = "B"
force = [1, 0, 0]
"#;

pub(super) fn errors(text: &str) -> Vec<Diagnostic> {
    match load_str(text, "m.toml", None) {
        Ok(_) => panic!("model should be rejected:\n{text}"),
        Err(e) => e.diagnostics,
    }
}

fn ok(text: &str) -> Model {
    match load_str(text, "m.toml", None) {
        Ok(m) => m,
        Err(e) => panic!("model should load:\n{e}"),
    }
}

/// 1-based line of the first occurrence of `needle`.
pub(super) fn line_of(text: &str, needle: &str) -> usize {
    let at = text
        .find(needle)
        .unwrap_or_else(|| panic!("{needle:?} not in text"));
    text[..at].matches('\n').count() + 1
}

/// Find the diagnostic at `file:line` whose text mentions `item` and
/// `words`; fail with every diagnostic shown.
pub(super) fn expect(ds: &[Diagnostic], file: &str, line: usize, item: &str, words: &str) -> Diagnostic {
    let place = format!("{file}:{line}");
    let found = ds.iter().find(|d| {
        let s = d.to_string();
        (s.starts_with(&format!("{place}:")) || s.starts_with(&format!("{place}: ")))
            && s.contains(item)
            && s.contains(words)
    });
    match found {
        Some(d) => d.clone(),
        None => panic!(
            "no diagnostic at {place} with {item:?} and {words:?}; got:\n{}",
            ds.iter()
                .map(|d| d.to_string())
                .collect::<Vec<_>>()
                .join("\n")
        ),
    }
}

fn with(extra: &str) -> String {
    format!("{BASE}{extra}")
}

pub(super) fn temp_dir() -> PathBuf {
    static N: AtomicUsize = AtomicUsize::new(0);
    let dir = std::env::temp_dir().join(format!(
        "tautline-model-{}-{}",
        std::process::id(),
        N.fetch_add(1, Ordering::Relaxed)
    ));
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

// -- good models ------------------------------------------------------

#[test]
fn base_model_loads_with_defaults() {
    let m = ok(BASE);
    assert_eq!(m.title, "base");
    assert_eq!(m.files, vec!["m.toml".to_string()]);
    assert_eq!(m.n_nodes(), 2);
    assert_eq!(m.members[0].ends, [0, 1]);
    assert_eq!(m.members[0].rest, RestSpec::Geometry);
    assert_eq!(m.nodes[1].fixed, [false, true, true]);
    assert_eq!(
        m.nodes[1].place,
        Place {
            file: 0,
            line: line_of(BASE, "id = \"B\"") as u32 - 1
        }
    );
    let a = &m.analysis;
    let d = Analysis::default();
    assert_eq!(
        (a.steps, a.max_steps, a.max_iterations, a.max_cutbacks),
        (d.steps, d.max_steps, d.max_iterations, d.max_cutbacks)
    );
    assert_eq!(a.method, Method::Newton);
    // No watch given: the largest free load component is watched.
    assert_eq!(
        a.watch,
        vec![NodeDir {
            node: 1,
            axis: Axis::X
        }]
    );
    assert_eq!(
        a.point,
        Some(NodeDir {
            node: 1,
            axis: Axis::X
        })
    );
    assert!(m.warnings.is_empty(), "{:?}", m.warnings);
}

/// Ids written as TOML integers are the strings of their digits, in
/// every place an id is written or referred to (issue 14).
#[test]
fn integer_ids_are_the_strings_of_their_digits() {
    let text = r#"
[[section]]
name = 7
EA = 1.0e6

[[node]]
id = 1
at = [0.0, 0.0, 0.0]
fix = "xyz"

[[node]]
id = 0x10
at = [4.0, 0.0, 1.0]
fix = "y"

[[node]]
id = "C"
at = [8.0, 0.0, 0.0]
fix = "xyz"

[[member]]
id = 100
kind = "bar"
ends = [1, "16"]
section = 7

[[member]]
id = "101"
kind = "bar"
ends = [16, "C"]
section = "7"

[[spring]]
node = 16
dir = "x"
k = 10.0

[[load]]
node = 16
force = [0.0, 0.0, -100.0]

[analysis]
node = 16
dir = "z"
watch = ["16.z"]
"#;
    let m = ok(text);
    let labels: Vec<&str> = m.nodes.iter().map(|n| n.label.as_str()).collect();
    assert_eq!(labels, ["1", "16", "C"]);
    let members: Vec<&str> = m.members.iter().map(|x| x.label.as_str()).collect();
    assert_eq!(members, ["100", "101"]);
    assert_eq!(m.sections[0].name, "7");
    assert_eq!(m.members[0].ends, [0, 1]);
    assert_eq!(m.members[1].ends, [1, 2]);
    assert_eq!(m.loads[0].node, 1);
    assert_eq!(m.springs[0].node, 1);
    assert_eq!(m.analysis.point.map(|p| p.node), Some(1));
    // An integer id and the string of its digits are the same id.
    let dup = text.replacen("id = \"C\"", "id = \"1\"", 1);
    let ds = errors(&dup);
    assert!(ds.iter().any(|d| d.to_string().contains("duplicate node id \"1\"")), "{ds:?}");
    // A float or a boolean id names the place and says how ids are written.
    let bad = text.replacen("id = 100", "id = 100.0", 1).replacen("ends = [16, \"C\"]", "ends = [true, \"C\"]", 1);
    let ds = errors(&bad);
    expect(&ds, "m.toml", line_of(&bad, "id = 100.0"), "member", "a whole number");
    expect(&ds, "m.toml", line_of(&bad, "ends = [true"), "member \"101\"", "found boolean");
}

#[test]
fn units_are_converted_to_si() {
    let text = r#"
[units]
force = "kN"
length = "cm"
[[section]]
name = "s"
EA = 2.0
weight = 0.5
tension_capacity = 3.0
compression_capacity = 4.0
[[node]]
id = "A"
at = [0, 0, 0]
fix = "xyz"
[[node]]
id = "B"
at = [100, 0, 50]
[[member]]
id = "c"
kind = "cable"
ends = ["A", "B"]
section = "s"
rest_length = 110.0
force_density = 2.0
[[member]]
id = "d"
kind = "cable"
ends = ["B", "A"]
section = "s"
prestress = 1.5
[[spring]]
node = "B"
dir = "y"
k = 3.0
[[load]]
node = "B"
force = [0, 0, -2]
[analysis]
control = "displacement"
node = "B"
dir = "z"
target = -20.0
max_displacement = 30.0
[form]
force_density = 4.0
"#;
    let m = ok(text);
    let close = |a: f64, b: f64| approx::assert_relative_eq!(a, b, max_relative = 1e-12);
    close(m.nodes[1].at[0], 1.0);
    close(m.nodes[1].at[2], 0.5);
    let s = &m.sections[0];
    close(s.ea, 2000.0);
    close(s.weight.unwrap(), 0.5e3 / 0.01);
    close(s.tension_capacity.unwrap(), 3000.0);
    close(s.compression_capacity.unwrap(), 4000.0);
    match m.members[0].rest {
        RestSpec::Length(l) => close(l, 1.1),
        other => panic!("{other:?}"),
    }
    close(m.members[0].force_density.unwrap(), 2.0e3 / 0.01);
    match m.members[1].rest {
        RestSpec::Prestress(p) => close(p, 1500.0),
        other => panic!("{other:?}"),
    }
    close(m.springs[0].k, 3.0e3 / 0.01);
    close(m.loads[0].force[2], -2000.0);
    close(m.analysis.target, -0.2);
    close(m.analysis.max_displacement.unwrap(), 0.3);
    close(m.form.force_density.unwrap(), 4.0e3 / 0.01);
    let p = NodeDir {
        node: 1,
        axis: Axis::Z,
    };
    assert_eq!(m.analysis.point, Some(p));
    assert_eq!(m.analysis.watch, vec![p]);
    assert_eq!(
        m.units,
        Units {
            force: ForceUnit::KN,
            length: LengthUnit::Cm
        }
    );
}

#[test]
fn analysis_settings_are_read() {
    let m = ok(&with(
        r#"[analysis]
strain = "engineering"
method = "bfgs"
control = "arc-length"
steps = 5
target = 2.5
arc = 0.2
max_steps = 90
tolerance = 1e-6
max_iterations = 12
max_cutbacks = 0
watch = ["B.x", "A.z"]
"#,
    ));
    let a = &m.analysis;
    assert_eq!(a.strain, StrainMeasure::Engineering);
    assert_eq!(a.method, Method::Bfgs);
    assert_eq!(a.control, Control::ArcLength);
    assert_eq!(
        (a.steps, a.max_steps, a.max_iterations, a.max_cutbacks),
        (5, 90, 12, 0)
    );
    assert_eq!((a.target, a.arc, a.tolerance), (2.5, Some(0.2), 1e-6));
    assert_eq!(a.watch.len(), 2);
    assert_eq!(
        a.point,
        Some(NodeDir {
            node: 1,
            axis: Axis::X
        })
    );
}

#[test]
fn csv_tables_are_appended_and_checked_like_toml() {
    let dir = temp_dir();
    std::fs::write(
        dir.join("nodes.csv"),
        "# generated\nz, id ,x,y,fix\n\n0,\"C\",2,0,yz\n0, D ,3,0,\n",
    )
    .unwrap();
    std::fs::write(
        dir.join("members.csv"),
        "id,end1,end2,kind,section,prestress,rest_length,force_density\n\
         m2,B,C,cable,strand,5,,\n\"m,3\",C,D,bar,strand,,2.5,\n",
    )
    .unwrap();
    let text = format!("nodes_csv = \"nodes.csv\"\nmembers_csv = \"members.csv\"\n{BASE}");
    let m = load_str(&text, "m.toml", Some(&dir)).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(m.files.len(), 3);
    assert!(m.files[1].ends_with("nodes.csv"));
    let labels: Vec<&str> = m.nodes.iter().map(|n| n.label.as_str()).collect();
    assert_eq!(labels, ["A", "B", "C", "D"]);
    assert_eq!(m.nodes[2].place, Place { file: 1, line: 4 });
    assert_eq!(m.nodes[3].fixed, [false; 3]);
    assert_eq!(m.members.len(), 3);
    assert_eq!(m.members[1].rest, RestSpec::Prestress(5.0));
    assert_eq!(m.members[2].label, "m,3");
    assert_eq!(m.members[2].ends, [2, 3]);
    assert_eq!(m.members[2].rest, RestSpec::Length(2.5));
    assert_eq!(m.members[2].place, Place { file: 2, line: 3 });
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn load_reads_a_file_and_its_tables() {
    let dir = temp_dir();
    std::fs::write(dir.join("n.csv"), "id,x,y,z\nC,2,0,0\n").unwrap();
    let text = BASE.replace(
        "[[node]]\nid = \"A\"",
        "nodes_csv = \"n.csv\"\n[[node]]\nid = \"A\"",
    );
    // nodes_csv must come before the first table.
    let text = format!(
        "nodes_csv = \"n.csv\"\n{}",
        text.replace("nodes_csv = \"n.csv\"\n[[node]]", "[[node]]")
    );
    let text = text.replace("[[load]]", "[[member]]\nid = \"m2\"\nkind = \"bar\"\nends = [\"B\", \"C\"]\nsection = \"strand\"\n[[load]]");
    let path = dir.join("model.toml");
    std::fs::write(&path, &text).unwrap();
    let m = load(&path).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(m.files[0], path.display().to_string());
    assert_eq!(m.n_nodes(), 3);
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn unreadable_file_is_named() {
    let e = load(Path::new("/no/such/dir/model.toml")).unwrap_err();
    assert_eq!(e.diagnostics.len(), 1);
    assert!(e.to_string().contains("/no/such/dir/model.toml"), "{e}");
    assert!(e.to_string().contains("cannot read"), "{e}");
}

#[test]
fn warnings_for_unloaded_model_and_prestressed_bar() {
    let text = BASE.replace("[[load]]\nnode = \"B\"\nforce = [1, 0, 0]\n", "");
    let text = text.replace(
        "section = \"strand\"\n",
        "section = \"strand\"\nprestress = 2.0\n",
    );
    let m = ok(&text);
    let all = m
        .warnings
        .iter()
        .map(|w| w.to_string())
        .collect::<Vec<_>>()
        .join("\n");
    assert!(all.contains("no loads"), "{all}");
    let line = line_of(&text, "prestress = 2.0");
    assert!(
        all.contains(&format!("m.toml:{line}:"))
            && all.contains("member \"m1\": bar has a prestress"),
        "{all}"
    );
    assert!(m.analysis.watch.is_empty());
}

// -- reading errors ---------------------------------------------------

#[test]
fn toml_syntax_error_has_line_and_column() {
    let text = with("[[node]]\nid = \"C\nat = [0, 0, 0]\n");
    let ds = errors(&text);
    let d = expect(
        &ds,
        "m.toml",
        line_of(&text, "id = \"C"),
        "",
        "invalid toml",
    );
    assert!(d.column.is_some());
}

#[test]
fn wrong_type_names_the_key_and_item() {
    let text = with("[[node]]\nid = \"C\"\nat = [0, 0, \"x\"]\n");
    let ds = errors(&text);
    let d = expect(
        &ds,
        "m.toml",
        line_of(&text, "\"x\""),
        "node \"C\"",
        "`at`: wrong type",
    );
    assert!(d.help.unwrap().contains("at = ["));
}

#[test]
fn missing_key_is_reported_at_the_entry() {
    let text = with("[[member]]\nid = \"m9\"\nkind = \"bar\"\nends = [\"A\", \"B\"]\n");
    let ds = errors(&text);
    let d = expect(
        &ds,
        "m.toml",
        line_of(&text, "[[member]]\nid = \"m9\""),
        "member \"m9\"",
        "missing required key `section`",
    );
    assert!(d.help.unwrap().contains("section = "));
}

#[test]
fn unknown_key_suggests_the_nearest() {
    let text = with("[analysis]\ntolerence = 1e-6\nwibble = 3\n");
    let ds = errors(&text);
    let d = expect(
        &ds,
        "m.toml",
        line_of(&text, "tolerence"),
        "[analysis]",
        "unknown key `tolerence`",
    );
    assert_eq!(d.help.as_deref(), Some("did you mean \"tolerance\"?"));
    let d = expect(
        &ds,
        "m.toml",
        line_of(&text, "wibble"),
        "[analysis]",
        "unknown key `wibble`",
    );
    assert!(d.help.unwrap().contains("valid keys here: strain, method"));
}

#[test]
fn top_level_key_after_a_table_is_explained() {
    let text = with("nodes_csv = \"n.csv\"\n");
    let ds = errors(&text);
    let d = expect(
        &ds,
        "m.toml",
        line_of(&text, "nodes_csv"),
        "load 1",
        "unknown key `nodes_csv`",
    );
    assert!(d.help.unwrap().contains("top-level key"));
}

#[test]
fn errors_in_separate_entries_are_all_reported() {
    let text = with(
        "[[node]]\nid = \"C\"\nat = [0, 0]\n[[node]]\nid = \"D\"\nat = [0, 0, 1]\nfxi = \"\"\n[[member]]\nid = \"m2\"\nkind = \"bar\"\nends = [\"C\", \"D\"]\nsection = \"strand\"\n",
    );
    let ds = errors(&text);
    expect(
        &ds,
        "m.toml",
        line_of(&text, "at = [0, 0]"),
        "node \"C\"",
        "invalid length 2",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "fxi"),
        "node \"D\"",
        "did you mean \"fix\"?",
    );
    // The member refers to nodes that could not be read: no extra noise.
    assert_eq!(ds.len(), 2, "{ds:?}");
}

mod analysis;
mod items;
mod overrides;
