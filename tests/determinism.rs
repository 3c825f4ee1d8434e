//! The same model gives byte-identical `results.json` across runs and
//! thread counts; the only field allowed to differ is the wall time,
//! `totals.seconds`, which is removed before comparing.

use std::path::{Path, PathBuf};
use std::process::Command;

const BIN: &str = env!("CARGO_BIN_EXE_tautline");

/// Runs `tautline` with `TAUTLINE_THREADS` set (honoured or not, the output
/// must not change).
fn tautline(args: &[&str], threads: &str) -> i32 {
    let o = Command::new(BIN).args(args).env("TAUTLINE_THREADS", threads).output().expect("run tautline");
    assert!(o.status.code().is_some(), "killed: {}", String::from_utf8_lossy(&o.stderr));
    o.status.code().unwrap()
}

/// results.json with the timing fields removed, as text.
fn without_timings(out: &Path) -> String {
    let text = std::fs::read_to_string(out.join("results.json")).expect("results.json");
    let mut v: serde_json::Value = serde_json::from_str(&text).expect("results.json is JSON");
    let totals = v["totals"].as_object_mut().expect("totals");
    assert!(totals.remove("seconds").is_some(), "totals.seconds is the timing field");
    // Nothing else in the file may look like a time.
    assert!(!text.contains("\"elapsed") && !text.contains("\"time"), "a timing field outside totals.seconds");
    serde_json::to_string_pretty(&v).unwrap()
}

fn solve_four_times(scratch: &Path, name: &str, model: &Path, extra: &[&str]) -> Vec<String> {
    let mut results = Vec::new();
    for (run, threads) in ["1", "1", "2", "2"].iter().enumerate() {
        let out = scratch.join(format!("{name}-{run}"));
        let mut args = vec!["solve", model.to_str().unwrap(), "-o", out.to_str().unwrap()];
        args.extend_from_slice(extra);
        let code = tautline(&args, threads);
        assert_eq!(code, 0, "{name}: exit {code}");
        results.push(without_timings(&out));
    }
    results
}

#[test]
fn results_are_identical_across_runs_and_thread_counts() {
    let scratch = std::env::temp_dir().join(format!("tautline-determinism-{}", std::process::id()));
    std::fs::create_dir_all(&scratch).unwrap();
    let net = scratch.join("net.toml");
    let code = tautline(&["generate", "net", "--nx", "12", "--ny", "10", "-o", net.to_str().unwrap()], "1");
    assert_eq!(code, 0);
    let arch: PathBuf = [env!("CARGO_MANIFEST_DIR"), "models", "roof_arch.toml"].iter().collect();

    let cases = [
        ("net", net.clone(), vec!["--method", "bfgs", "--steps", "6"]),
        ("arch", arch, vec!["--control", "arc-length", "--max-steps", "60"]),
    ];
    for (name, model, extra) in &cases {
        let r = solve_four_times(&scratch, name, model, extra);
        assert!(r[0].contains("\"steps\""), "{name}: no steps in results");
        for (i, other) in r.iter().enumerate().skip(1) {
            assert!(*other == r[0], "{name}: run {i} differs from run 0");
        }
    }
    let _ = std::fs::remove_dir_all(&scratch);
}
