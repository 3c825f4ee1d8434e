//! Every example in README.md runs as written (issue 17).
//!
//! - The model file example (the first ```toml block) passes `check` and
//!   `solve` reaches its target (exit 0).
//! - Every line of a ```sh block is run: `tautline …`, and `cargo run
//!   --release -- …` as the same command on the built binary (`cargo test`
//!   itself is skipped: this is it). Each must exit 0.
//! - In other fenced blocks, a line `$ tautline …` is a command whose output
//!   follows it: the command is run and each following line (up to the next
//!   `$` line or the block's end, except lines holding "…" or "...") must
//!   appear in what it prints, so the README's sample output stays true.
//!
//! Commands run in a scratch folder where `docs` and `models` link to this
//! repository's folders, so outputs land in the scratch folder.

use crate::workflow::{Scratch, tautline_in};
use std::path::Path;

/// A fenced block of the README: its info string and lines.
struct Block {
    info: String,
    lines: Vec<String>,
    /// Line of the opening fence, 1-based.
    at: usize,
}

fn blocks(text: &str) -> Vec<Block> {
    let mut out = Vec::new();
    let mut open: Option<Block> = None;
    for (n, line) in text.lines().enumerate() {
        if let Some(rest) = line.strip_prefix("```") {
            match open.take() {
                Some(b) => out.push(b),
                None => open = Some(Block { info: rest.trim().to_string(), lines: Vec::new(), at: n + 1 }),
            }
        } else if let Some(b) = open.as_mut() {
            b.lines.push(line.to_string());
        }
    }
    out
}

fn readme() -> String {
    std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("README.md")).expect("README.md")
}

/// A scratch folder with `docs` and `models` linked from the repository.
fn workspace(name: &str) -> Scratch {
    let dir = Scratch::new(name);
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    for sub in ["docs", "models"] {
        #[cfg(unix)]
        std::os::unix::fs::symlink(root.join(sub), dir.path(sub)).expect("link");
    }
    dir
}

/// Splits a command line into words (the README's commands need no quoting).
fn words(line: &str) -> Vec<String> {
    let line = line.split(" #").next().unwrap_or(line);
    line.split_whitespace().map(str::to_string).collect()
}

#[test]
fn the_readme_model_example_checks_and_solves() {
    let text = readme();
    let b = blocks(&text).into_iter().find(|b| b.info == "toml").expect("a ```toml block");
    let dir = workspace("readme-model");
    dir.write("example.toml", &b.lines.join("\n"));
    let r = tautline_in(&dir.dir, &["check", "example.toml"]);
    assert_eq!(r.code, 0, "README line {}: {r}", b.at);
    assert!(!r.stderr.contains("warning"), "README line {}: the example should be clean: {r}", b.at);
    let r = tautline_in(&dir.dir, &["solve", "example.toml", "-o", "out"]);
    assert_eq!(r.code, 0, "README line {}: {r}", b.at);
    assert!(r.stdout.contains("done: reached the target"), "{r}");
}

#[test]
fn every_readme_command_runs_as_written() {
    let text = readme();
    let dir = workspace("readme-commands");
    let mut ran = 0;
    for b in blocks(&text) {
        if b.info == "sh" {
            for line in &b.lines {
                let w = words(line);
                let args: Vec<&str> = match w.iter().map(String::as_str).collect::<Vec<_>>().as_slice() {
                    ["tautline", rest @ ..] => rest.to_vec(),
                    ["cargo", "run", "--release", "--", rest @ ..] => rest.to_vec(),
                    ["cargo", "test", ..] | [] => continue,
                    other => panic!("README line {}: a ```sh line this test cannot run: {other:?}", b.at),
                };
                let r = tautline_in(&dir.dir, &args);
                assert_eq!(r.code, 0, "README block at line {}: `{line}`:\n{r}", b.at);
                ran += 1;
            }
        } else {
            let mut i = 0;
            while i < b.lines.len() {
                let Some(cmd) = b.lines[i].strip_prefix("$ tautline ") else {
                    i += 1;
                    continue;
                };
                let args = words(cmd);
                let args: Vec<&str> = args.iter().map(String::as_str).collect();
                let r = tautline_in(&dir.dir, &args);
                let printed = format!("{}{}", r.stdout, r.stderr);
                i += 1;
                while i < b.lines.len() && !b.lines[i].starts_with("$ ") {
                    let expect = b.lines[i].trim_end();
                    if !expect.is_empty() && !expect.contains('…') && !expect.contains("...") {
                        assert!(
                            printed.contains(expect),
                            "README block at line {}: `tautline {cmd}` did not print\n  {expect}\n{r}",
                            b.at
                        );
                    }
                    i += 1;
                }
                ran += 1;
            }
        }
    }
    // The set-up line, the walk-through's four, the shoring prop, the
    // lantern and the misspelt method at least.
    assert!(ran >= 8, "only {ran} README commands found");
}
