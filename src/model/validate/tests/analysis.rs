//! `[analysis]` settings and the model as a whole.

use super::super::*;
use super::{BASE, errors, expect, line_of, with};

// -- analysis ---------------------------------------------------------

#[test]
fn bad_analysis_numbers() {
    let text = with(
        "[analysis]\nsteps = 0\nmax_steps = -2\ntolerance = 0.5\nmax_iterations = 0\ntarget = nan\nwatch = [\"Bz\", \"B.q\"]\n",
    );
    let ds = errors(&text);
    expect(
        &ds,
        "m.toml",
        line_of(&text, "steps = 0"),
        "[analysis]",
        "`steps` must be at least 1",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "max_steps"),
        "[analysis]",
        "`max_steps` must be at least 1",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "tolerance"),
        "[analysis]",
        "`tolerance` must be above 0",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "max_iterations"),
        "[analysis]",
        "`max_iterations` must be at least 1",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "target"),
        "[analysis]",
        "`target` must be a finite number",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "watch"),
        "[analysis]",
        "\"Bz\" is not of the form NODE.DIR",
    );
    expect(
        &ds,
        "m.toml",
        line_of(&text, "watch"),
        "[analysis]",
        "\"B.q\" is not of the form NODE.DIR",
    );
}

#[test]
fn control_point_rules() {
    let text = with("[analysis]\nnode = \"B\"\n");
    expect(
        &errors(&text),
        "m.toml",
        line_of(&text, "[analysis]") + 1,
        "[analysis]",
        "`node` is given without `dir`",
    );
    let text = with("[analysis]\ndir = \"x\"\n");
    expect(
        &errors(&text),
        "m.toml",
        line_of(&text, "dir = \"x\""),
        "[analysis]",
        "`dir` is given without `node`",
    );
    let text = with("[analysis]\ncontrol = \"displacement\"\n");
    expect(
        &errors(&text),
        "m.toml",
        line_of(&text, "control"),
        "[analysis]",
        "displacement control needs `node` and `dir`",
    );
    let text = with("[analysis]\ncontrol = \"displacement\"\nnode = \"B\"\ndir = \"z\"\n");
    expect(
        &errors(&text),
        "m.toml",
        line_of(&text, "[analysis]") + 2,
        "[analysis]",
        "that direction is supported",
    );
    let text = with("[analysis]\ncontrol = \"arc-length\"\narc = -0.1\n");
    expect(
        &errors(&text),
        "m.toml",
        line_of(&text, "arc = -0.1"),
        "[analysis]",
        "`arc` must be greater than zero",
    );
}

// -- the model as a whole ---------------------------------------------

#[test]
fn model_wide_problems() {
    let text = BASE
        .replace("fix = \"yz\"", "fix = \"zyx\"")
        .replace("[[load]]\nnode = \"B\"\nforce = [1, 0, 0]\n", "");
    let ds = errors(&text);
    assert!(
        ds.iter()
            .any(|d| d.message.contains("nothing can move") && d.line.is_none()),
        "{ds:?}"
    );

    let text = "[[node]]\nid = \"A\"\nat = [0, 0, 0]\n";
    let ds = errors(text);
    assert!(
        ds.iter().any(|d| d.message == "the model has no members"),
        "{ds:?}"
    );

    let text = with("[[node]]\nid = \"lonely\"\nat = [5, 5, 5]\nfix = \"z\"\n");
    let ds = errors(&text);
    expect(
        &ds,
        "m.toml",
        line_of(&text, "id = \"lonely\"") - 1,
        "node \"lonely\"",
        "free node has no member or spring",
    );
}

#[test]
fn diagnostics_are_capped() {
    let mut text = BASE.to_string();
    for i in 0..80 {
        text.push_str(&format!(
            "[[load]]\nnode = \"nope{i}\"\nforce = [1, 0, 0]\n"
        ));
    }
    let ds = errors(&text);
    assert_eq!(ds.len(), MAX_DIAGNOSTICS + 1);
    assert!(
        ds.last().unwrap().message.contains("30 more"),
        "{:?}",
        ds.last()
    );
    // Sorted in file order.
    assert!(
        ds[..MAX_DIAGNOSTICS]
            .windows(2)
            .all(|w| w[0].line <= w[1].line)
    );
}

#[test]
fn counts_above_their_caps_are_refused() {
    for (key, v) in [("steps", MAX_STEPS + 1), ("max_iterations", MAX_ITERATIONS + 1), ("max_cutbacks", MAX_CUTBACKS + 1)] {
        let text = with(&format!("[analysis]\n{key} = {v}\n"));
        let ds = errors(&text);
        expect(&ds, "m.toml", line_of(&text, key), "[analysis]", "must be at most");
    }
}

#[test]
fn no_panic_on_truncated_or_mangled_input() {
    let full = with(
        "[[spring]]\nnode = \"B\"\ndir = \"x\"\nk = 2.0\n[analysis]\ncontrol = \"arc-length\"\n\
         arc = 0.1\nwatch = [\"B.x\"]\n[form]\nforce_density = 1.0\n",
    );
    for (i, _) in full.char_indices() {
        let _ = load_str(&full[..i], "m.toml", None);
        let mangled: String = full
            .chars()
            .enumerate()
            .map(|(k, c)| {
                if k == i {
                    ['"', '[', '=', '\n', 'µ', ','][k % 6]
                } else {
                    c
                }
            })
            .collect();
        let _ = load_str(&mangled, "m.toml", None);
    }
    let deep = format!("a = {}{}", "[".repeat(200), "]".repeat(200));
    assert!(load_str(&deep, "m.toml", None).is_err());
    assert!(load_str("", "m.toml", None).is_err());
    assert!(load_str("\u{feff}\0\u{7}", "m.toml", None).is_err());
}
