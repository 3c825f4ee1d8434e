//! The malformed-model corpus (tests/malformed/, indexed in its README):
//! every file is refused by `check` and `solve` with exit 2, its place and
//! item, no panic and nothing written. Besides the `.toml` models it lists
//! `.csv` tables given as the model.

use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::Command;

const BIN: &str = env!("CARGO_BIN_EXE_tautline");

struct Expected {
    file: String,
    place: String,
    item: String,
}

/// The README table: file, class, place, item (each cell in backticks).
fn index(dir: &Path) -> Vec<Expected> {
    let text = std::fs::read_to_string(dir.join("README.md")).expect("tests/malformed/README.md");
    text.lines()
        .filter(|l| l.starts_with("| `"))
        .map(|l| {
            let cells: Vec<&str> = l.split('|').map(|c| c.trim().trim_matches('`')).collect();
            Expected { file: cells[1].into(), place: cells[3].into(), item: cells[4].into() }
        })
        .collect()
}

fn run(args: &[&str]) -> (i32, String, String) {
    let o = Command::new(BIN).args(args).output().expect("run tautline");
    (o.status.code().unwrap_or(-1), String::from_utf8_lossy(&o.stdout).into(), String::from_utf8_lossy(&o.stderr).into())
}

#[test]
fn every_malformed_model_is_refused_with_place_and_item() {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/malformed");
    let expected = index(&dir);
    let mut on_disk: Vec<String> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        .filter(|n| n.ends_with(".toml"))
        .collect();
    on_disk.sort();
    let mut listed: Vec<String> =
        expected.iter().map(|e| e.file.clone()).filter(|f| f.ends_with(".toml")).collect();
    listed.sort();
    assert_eq!(on_disk, listed, "README index and corpus differ");
    // The other entries are tables given as the model by mistake.
    for e in expected.iter().filter(|e| !e.file.ends_with(".toml")) {
        assert!(e.file.ends_with(".csv") && dir.join(&e.file).is_file(), "{} is listed but not there", e.file);
    }
    assert!(expected.len() >= 30, "only {} malformed models", expected.len());

    let scratch = std::env::temp_dir().join(format!("tautline-malformed-{}", std::process::id()));
    std::fs::create_dir_all(&scratch).unwrap();
    for e in &expected {
        let model = dir.join(&e.file);
        let model = model.to_str().unwrap();
        let out = scratch.join(e.file.replace(".toml", "").replace(".csv", "")).join("out");
        let out_s = out.to_str().unwrap();
        for args in [vec!["check", model], vec!["solve", model, "-o", out_s]] {
            let (code, _, stderr) = run(&args);
            let what = format!("{} {}:\n{stderr}", args[0], e.file);
            assert_eq!(code, 2, "{what}");
            assert!(stderr.contains(&format!("{}:", e.place)), "place {} missing in {what}", e.place);
            assert!(stderr.contains(&e.item), "item {} missing in {what}", e.item);
            assert!(!stderr.contains("panicked") && !stderr.contains("RUST_BACKTRACE"), "{what}");
            assert!(stderr.contains("nothing was written"), "{what}");
            assert!(!out.exists(), "{what}: {} was created", out.display());
        }
        // The same errors for scripts: one JSON object on stdout.
        let (code, stdout, _) = run(&["check", model, "--format", "json"]);
        assert_eq!(code, 2, "{}", e.file);
        let v: Value = serde_json::from_str(&stdout).unwrap_or_else(|err| panic!("{}: {err}: {stdout}", e.file));
        assert_eq!(v["ok"], false);
        assert_eq!(v["exit_code"], 2);
        let errors = v["errors"].as_array().expect("errors array");
        let (file, line) = e.place.rsplit_once(':').unwrap();
        let line: u64 = line.parse().unwrap();
        assert!(
            errors.iter().any(|d| d["file"].as_str().is_some_and(|f| f.ends_with(file))
                && d["line"].as_u64() == Some(line)
                && (d["item"].as_str().is_some_and(|i| i.contains(&e.item))
                    || d["message"].as_str().is_some_and(|m| m.contains(&e.item)))
                && d["message"].as_str().is_some_and(|m| !m.is_empty())),
            "{}: {stdout}",
            e.file
        );
    }
    let _ = std::fs::remove_dir_all(&scratch);
}
