//! `report.html` in a real browser: headless Chromium opens it from a file
//! URL, renders it to PNG and dumps its DOM. The page must render (not
//! blank), log no console error, and hold the caution banner and the
//! inline plots. Skipped, with the reason printed, only when Chromium is
//! not installed (`.ci/run` installs it).

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

#[test]
fn report_renders_in_headless_chromium() {
    let Some(chromium) = ["chromium", "chromium-browser"].into_iter().find(|c| Command::new(c).arg("--version").output().is_ok_and(|o| o.status.success())) else {
        println!("SKIPPED report_renders_in_headless_chromium: chromium is not installed (.ci/run installs it with apt-get)");
        return;
    };
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
