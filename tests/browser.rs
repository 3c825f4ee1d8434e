//! `report.html` in a real browser: headless Chromium opens it from a file
//! URL, renders it to PNG and dumps its DOM. The page must render (not
//! blank), log no console error, and hold the caution banner and the
//! inline plots. Chromium missing is a failure, not a pass: the test is
//! skipped only when `TAUTLINE_SKIP_BROWSER=1` is set on purpose, and then
//! says so in the output. `.ci/run` installs Chromium and stops if it cannot.

use crate::report::{Scratch, tautline};
use std::process::Command;

/// Distinct colours in an RGBA PNG, from the png crate's decoder.
pub fn distinct_colours(path: &std::path::Path) -> (u32, u32, usize) {
    let file = std::fs::File::open(path).expect("screenshot");
    let decoder = png::Decoder::new(std::io::BufReader::new(file));
    let mut reader = decoder.read_info().expect("png header");
    let mut buf = vec![0; reader.output_buffer_size().expect("buffer size")];
    let info = reader.next_frame(&mut buf).expect("png frame");
    let bytes = &buf[..info.buffer_size()];
    let px = info.color_type.samples();
    let mut seen = std::collections::HashSet::new();
    for p in bytes.chunks(px) {
        seen.insert(p.to_vec());
    }
    (info.width, info.height, seen.len())
}

/// The variable that skips the browser checks on a machine without
/// Chromium. Only an explicit `1` skips; anything else runs them.
pub const SKIP_VAR: &str = "TAUTLINE_SKIP_BROWSER";

/// The Chromium on the PATH. Missing Chromium panics (the check did not
/// run, so it must not pass) unless `TAUTLINE_SKIP_BROWSER=1`; then None
/// after a skip line that stands out (on stdout and stderr, so it shows
/// with or without `--nocapture`).
fn chromium(test: &str) -> Option<&'static str> {
    let found = ["chromium", "chromium-browser"].into_iter().find(|c| Command::new(c).arg("--version").output().is_ok_and(|o| o.status.success()));
    if found.is_none() {
        assert!(
            std::env::var(SKIP_VAR).is_ok_and(|v| v == "1"),
            "{test}: chromium is not installed. Install it (`apt-get install chromium`; .ci/run does) or set {SKIP_VAR}=1 to skip the browser checks on purpose"
        );
        let line = format!("!!!! SKIPPED {test}: {SKIP_VAR}=1 and chromium is not installed; this browser check did NOT run !!!!");
        println!("{line}");
        eprintln!("{line}");
    }
    found
}

/// Flags for a headless run on a closed network (no background traffic).
const FLAGS: [&str; 9] = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--enable-logging=stderr",
];

#[test]
fn report_renders_in_headless_chromium() {
    let Some(chromium) = chromium("report_renders_in_headless_chromium") else { return };
    let sc = Scratch::new("browser");
    let out = sc.0.join("demo");
    let (code, stdout, _) = tautline(&["demo", "-o", out.to_str().unwrap()]);
    assert_eq!(code, 0, "{stdout}");
    let report = out.join("report.html").canonicalize().unwrap();
    let url = format!("file://{}", report.display());
    let shot = sc.0.join("shot.png");
    let profile = sc.0.join("profile");
    let common = ["--headless", "--no-sandbox", "--disable-gpu", "--enable-logging=stderr", "--v=0"];
    let user_dir = format!("--user-data-dir={}", profile.display());
    let run = Command::new(chromium)
        .args(common)
        .arg(&user_dir)
        .arg(format!("--screenshot={}", shot.display()))
        .arg("--window-size=1200,1800")
        .arg(&url)
        .output()
        .expect("run chromium");
    let log = String::from_utf8_lossy(&run.stderr);
    assert!(run.status.success(), "chromium failed:\n{log}");
    for line in log.lines() {
        let l = line.to_lowercase();
        assert!(!(l.contains("console") && (l.contains("error") || l.contains("uncaught"))) && !l.contains("uncaught"), "console error: {line}");
    }
    let (w, h, colours) = distinct_colours(&shot);
    assert_eq!((w, h), (1200, 1800));
    // A blank page is one colour; text, plots and the banner give hundreds.
    assert!(colours > 50, "the page looks blank: {colours} distinct colours");

    let dom = Command::new(chromium).args(common).arg(&user_dir).arg("--dump-dom").arg(&url).output().expect("dump dom");
    let dom = String::from_utf8_lossy(&dom.stdout);
    assert!(dom.contains("id=\"caution\""), "caution banner missing from the DOM");
    assert!(dom.contains(tautline::results::CAUTION.split('.').next().unwrap()));
    assert!(dom.matches("<svg").count() >= 5, "path, shape by utilisation, shape by force, displacement map, convergence in the DOM");
    assert!(dom.contains("class=\"crit\"") || dom.contains("class=\"pt stable\""), "the path plot's points are in the DOM");
}

/// A report whose shape panels are raster images (a 60 × 60 net, 6 960
/// members, past the default threshold) renders in headless Chromium: the
/// page is not blank, the images are in the DOM, and it stays well under
/// the 10 MB bound.
#[test]
fn raster_report_renders_in_headless_chromium() {
    let Some(chromium) = chromium("raster_report_renders_in_headless_chromium") else { return };
    let sc = Scratch::new("browser-raster");
    let model = sc.0.join("net.toml");
    let (code, o, e) = tautline(&["generate", "net", "--nx", "60", "--ny", "60", "-o", model.to_str().unwrap()]);
    assert_eq!(code, 0, "{o}{e}");
    let out = sc.0.join("out");
    let (code, o, e) = tautline(&["solve", model.to_str().unwrap(), "-o", out.to_str().unwrap(), "--steps", "2", "-q"]);
    assert_eq!(code, 0, "{o}{e}");
    let report = out.join("report.html").canonicalize().unwrap();
    assert!(std::fs::metadata(&report).unwrap().len() < 10_000_000);
    let url = format!("file://{}", report.display());
    let shot = sc.0.join("shot.png");
    let user_dir = format!("--user-data-dir={}", sc.0.join("profile").display());
    let run = Command::new(chromium)
        .args(FLAGS)
        .arg(&user_dir)
        .arg(format!("--screenshot={}", shot.display()))
        .arg("--window-size=1200,2400")
        .arg(&url)
        .output()
        .expect("run chromium");
    assert!(run.status.success(), "chromium failed:\n{}", String::from_utf8_lossy(&run.stderr));
    let (w, h, colours) = distinct_colours(&shot);
    assert_eq!((w, h), (1200, 2400));
    assert!(colours > 50, "the page looks blank: {colours} distinct colours");
    let dom = Command::new(chromium).args(FLAGS).arg(&user_dir).arg("--dump-dom").arg(&url).output().expect("dump dom");
    let dom = String::from_utf8_lossy(&dom.stdout);
    // The generated net gives no capacity: one shape, coloured by force.
    assert_eq!(dom.matches("<image class=\"raster\"").count(), 2, "plan and elevation of shape.svg in the DOM");
}
