//! Pictures that scale and say something (issue 15) and the report's
//! engineering tables (issue 17): raster panels above a member count with
//! bounded file sizes, colour scales fitted to the forces, the utilisation
//! picture, numbered critical points, a long convergence history, shapes at
//! chosen steps, slack events, dead load apart, catenaries with their sag,
//! and the governing results first.

use crate::common::solve_text;
use crate::report::{model_path, read, table_rows, tautline, unescape, Scratch};
use std::path::Path;
use tautline::report::numbers::sig4;
use tautline::report::plot::{self, ColourBy, ShapeInput, ShapeOptions};
use tautline::results;

/// The `<tag ...>` openings of elements with this class (prefix).
fn tags(s: &str, class: &str) -> Vec<String> {
    s.split('<').filter(|t| t.contains(&format!(r#"class="{class}"#))).map(str::to_string).collect()
}

fn attr(tag: &str, name: &str) -> f64 {
    let k = format!(r#" {name}=""#);
    let i = tag.find(&k).unwrap_or_else(|| panic!("{name} in {tag}")) + k.len();
    tag[i..tag[i..].find('"').unwrap() + i].parse().unwrap_or(f64::NAN)
}

fn text_of(tag: &str) -> &str {
    &tag[tag.find('>').unwrap() + 1..]
}

/// Decodes standard base64 (test helper; the writer is checked against
/// RFC 4648 in the library's unit tests).
fn unbase64(s: &str) -> Vec<u8> {
    let val = |c: u8| match c {
        b'A'..=b'Z' => c - b'A',
        b'a'..=b'z' => c - b'a' + 26,
        b'0'..=b'9' => c - b'0' + 52,
        b'+' => 62,
        b'/' => 63,
        _ => panic!("not base64: {c}"),
    };
    let bytes: Vec<u8> = s.bytes().filter(|c| *c != b'=').collect();
    let mut out = Vec::new();
    for chunk in bytes.chunks(4) {
        let n = chunk.iter().enumerate().fold(0u32, |n, (i, c)| n | (u32::from(val(*c)) << (18 - 6 * i)));
        for k in 0..chunk.len() - 1 {
            out.push((n >> (16 - 8 * k)) as u8);
        }
    }
    out
}

/// The embedded raster images of an SVG: (width, height, distinct colours).
fn rasters(svg: &str) -> Vec<(u32, u32, usize)> {
    tags(svg, "raster")
        .iter()
        .map(|t| {
            let a = t.find("base64,").expect("a data URI") + "base64,".len();
            let bytes = unbase64(&t[a..a + t[a..].find('"').unwrap()]);
            let mut reader = png::Decoder::new(std::io::Cursor::new(bytes)).read_info().expect("png header");
            let mut buf = vec![0; reader.output_buffer_size().unwrap()];
            let info = reader.next_frame(&mut buf).expect("png frame");
            let px = info.color_type.samples();
            let colours: std::collections::HashSet<&[u8]> = buf[..info.buffer_size()].chunks(px).collect();
            (info.width, info.height, colours.len())
        })
        .collect()
}

fn generate_and_solve(sc: &Scratch, n: usize, name: &str, extra: &[&str]) -> std::path::PathBuf {
    let model = sc.0.join(format!("net{n}.toml"));
    if !model.exists() {
        let (code, o, e) = tautline(&["generate", "net", "--nx", &n.to_string(), "--ny", &n.to_string(), "-o", model.to_str().unwrap()]);
        assert_eq!(code, 0, "{o}{e}");
    }
    let out = sc.0.join(name);
    let mut args = vec!["solve", model.to_str().unwrap(), "-o", out.to_str().unwrap(), "--steps", "2", "-q"];
    args.extend_from_slice(extra);
    let (code, o, e) = tautline(&args);
    assert_eq!(code, 0, "{o}{e}");
    out
}

/// With TAUTLINE_PLOT_DUMP=<dir>, writes a plot there to look at.
fn dump(name: &str, s: &str) {
    if let Ok(dir) = std::env::var("TAUTLINE_PLOT_DUMP") {
        let _ = std::fs::write(Path::new(&dir).join(name), s);
    }
}

fn size(p: &Path) -> u64 {
    std::fs::metadata(p).unwrap_or_else(|e| panic!("{}: {e}", p.display())).len()
}

/// Above the member threshold the panels are PNG images: the shape plot's
/// size no longer grows with the members, and the images decode and are
/// not blank. Below it, vector lines. Switched low on a small net with
/// `--raster-above`, and by the default threshold on a 60 × 60 net.
#[test]
fn raster_panels_bound_the_shape_and_report_size() {
    let sc = Scratch::new("raster");
    let vector = generate_and_solve(&sc, 40, "vector", &[]);
    let raster = generate_and_solve(&sc, 40, "raster", &["--raster-above", "100"]);
    let n_members = read(&vector.join("members.csv")).lines().count() - 1;
    assert!(n_members > 100 && n_members < plot::RASTER_ABOVE_MEMBERS, "{n_members}");
    let v = read(&vector.join("shape.svg"));
    assert_eq!(v.matches(r#"<line class="member "#).count(), 2 * n_members);
    assert!(rasters(&v).is_empty());
    let r = read(&raster.join("shape.svg"));
    assert_eq!(r.matches(r#"<line class="member "#).count(), 0, "no vector member in a raster plot");
    let images = rasters(&r);
    assert_eq!(images.len(), 2, "plan and elevation");
    for (w, h, colours) in images {
        assert!(w >= 400 && h >= 400, "{w} × {h}");
        assert!(colours > 20, "a blank raster: {colours} colours");
    }
    assert!(r.contains(&format!("{n_members} members drawn as")));
    assert!(size(&raster.join("shape.svg")) < size(&vector.join("shape.svg")));
    // The report embeds the raster plot as written.
    let html = read(&raster.join("report.html"));
    assert!(html.contains(r.trim_end()));

    // --png draws the embedded panels too: the plan panel of shape.png is
    // mostly not paper white.
    let pngs = generate_and_solve(&sc, 40, "raster-png", &["--raster-above", "100", "--png"]);
    let svg = read(&pngs.join("shape.svg"));
    let plan = tags(&svg, "raster")[0].clone();
    let (x, y, w, h) = (attr(&plan, "x") as usize, attr(&plan, "y") as usize, attr(&plan, "width") as usize, attr(&plan, "height") as usize);
    let mut reader = png::Decoder::new(std::io::BufReader::new(std::fs::File::open(pngs.join("shape.png")).unwrap())).read_info().unwrap();
    let mut buf = vec![0; reader.output_buffer_size().unwrap()];
    let info = reader.next_frame(&mut buf).unwrap();
    let px = info.color_type.samples();
    let stride = info.width as usize * px;
    let inked = (y + h / 4..y + 3 * h / 4)
        .flat_map(|r| (x + w / 4..x + 3 * w / 4).map(move |c| (r, c)))
        .filter(|(r, c)| buf[r * stride + c * px..r * stride + c * px + 3].iter().any(|v| *v < 235))
        .count();
    assert!(inked * 4 > (w / 2) * (h / 2), "the plan panel of shape.png is blank: {inked} inked pixels");

    // Several shapes of one model share the vector budget: past it they
    // are raster panels, so the report stays bounded.
    let many = generate_and_solve(&sc, 40, "budget", &["--keep-fields", "all", "--shape-at", "0", "--shape-at", "1", "--shape-at", "2"]);
    let html = read(&many.join("report.html"));
    let per = tautline::report::figures::VECTOR_BYTES_PER_MEMBER * n_members;
    let vector_shapes = tautline::report::figures::VECTOR_BUDGET / per;
    assert!(vector_shapes < 4, "the test needs the budget to bind: {vector_shapes}");
    assert_eq!(html.matches("<image class=\"raster\"").count(), 2 * (4 - vector_shapes), "shapes past the budget are rasters");
    assert!(html.len() < 10_000_000);

    // Past the default threshold, with no option.
    let big = generate_and_solve(&sc, 60, "big", &[]);
    let members = read(&big.join("members.csv")).lines().count() - 1;
    assert!(members > plot::RASTER_ABOVE_MEMBERS, "{members}");
    let s = read(&big.join("shape.svg"));
    assert_eq!(rasters(&s).len(), 2);
    assert!(size(&big.join("shape.svg")) < 2_000_000, "shape.svg {} bytes", size(&big.join("shape.svg")));
    assert!(size(&big.join("report.html")) < 4_000_000, "report.html {} bytes", size(&big.join("report.html")));
}

/// A cable net in tension: a sequential force scale from the smallest to
/// the largest force of the members that carry any, labelled at 4
/// significant figures in the model's force unit, and no compression range.
#[test]
fn tension_only_net_has_a_sequential_force_scale() {
    let run = solve_text(&read(Path::new(&model_path("courtyard_net.toml"))));
    let u = &run.path.final_state.u;
    let d: Vec<[f64; 3]> = (0..run.model.n_nodes()).map(|n| [0, 1, 2].map(|a| run.system.dofs.displacement(u, n, a))).collect();
    let st = run.system.member_results(u);
    let f: Vec<f64> = st.iter().map(|r| r.force).collect();
    let slack: Vec<bool> = st.iter().map(|r| r.slack).collect();
    let live: Vec<f64> = f.iter().zip(&slack).filter(|(_, s)| !**s).map(|(v, _)| v / 1e3).collect();
    assert!(live.iter().all(|v| *v > 0.0), "the courtyard net stays in tension");
    let s = plot::shape_svg(&run.model, &d, &f, &slack).unwrap();
    let values: Vec<String> = tags(&s, "legend-value").iter().map(|t| text_of(t).to_string()).collect();
    let (lo, hi) = (live.iter().copied().fold(f64::INFINITY, f64::min), live.iter().copied().fold(0.0, f64::max));
    assert_eq!(values, vec![format!("{} kN tension", sig4(hi)), format!("{} kN tension", sig4(lo))]);
    assert!(!s.contains("compression"));
    assert!(lo > 0.0 && lo < hi);
}

/// Coloured by utilisation: members over their capacity are drawn heavy
/// black with a white core (seen in black and white), counted in the
/// legend; the scale runs from 0 to 1. The demo's shape.svg is coloured by
/// utilisation by default (every member has a capacity).
#[test]
fn utilisation_picture_marks_the_members_over_capacity() {
    let text = read(Path::new(&model_path("courtyard_net.toml"))).replace("tension_capacity = 180.0", "tension_capacity = 15.0");
    let run = solve_text(&text);
    let members = results::members(&run.model, &run.system, &run.path);
    let over = members.iter().filter(|m| m.utilisation.is_some_and(|u| u > 1.0)).count();
    assert!(over > 0 && over < members.len(), "some but not all members over capacity: {over}");
    let u = &run.path.final_state.u;
    let d: Vec<[f64; 3]> = (0..run.model.n_nodes()).map(|n| [0, 1, 2].map(|a| run.system.dofs.displacement(u, n, a))).collect();
    let st = run.system.member_results(u);
    let f: Vec<f64> = st.iter().map(|r| r.force).collect();
    let slack: Vec<bool> = st.iter().map(|r| r.slack).collect();
    let util: Vec<Option<f64>> = members.iter().map(|m| m.utilisation).collect();
    let input = ShapeInput { model: &run.model, displacements: &d, forces: &f, slack: &slack, utilisation: Some(&util) };
    let s = plot::shape_svg_with(&input, &ShapeOptions { colour_by: ColourBy::Utilisation, ..Default::default() }).unwrap();
    assert_eq!(s.matches(r#"class="member over""#).count(), 2 * over, "over-capacity members, both panels");
    assert_eq!(s.matches(r#"class="over-core""#).count(), 2 * over);
    assert!(s.matches(r#"class="member over" x1"#).count() > 0 && s.contains(r##"stroke="#000000""##));
    assert!(s.contains("utilisation, force ÷ capacity [–]") && s.contains(&format!("{over} members over capacity")));
    let values: Vec<String> = tags(&s, "legend-value").iter().map(|t| text_of(t).to_string()).collect();
    assert_eq!(values, ["1.000 (at capacity)", "0"]);

    let sc = Scratch::new("util-demo");
    let out = sc.0.join("demo");
    let (code, o, _) = tautline(&["demo", "-o", out.to_str().unwrap()]);
    assert_eq!(code, 0, "{o}");
    assert!(read(&out.join("shape.svg")).contains("utilisation, force ÷ capacity"));
    assert!(read(&out.join("forces.svg")).contains("axial force [kN]"));
    // --colour-by force overrides the default.
    let out2 = sc.0.join("force");
    let (code, o, _) = tautline(&["demo", "-o", out2.to_str().unwrap(), "--colour-by", "force"]);
    assert_eq!(code, 0, "{o}");
    assert!(read(&out2.join("shape.svg")).contains("axial force [kN]"));
    assert!(!out2.join("forces.svg").exists());
}

/// 40 critical points: each ring gets its number, the numbers do not
/// overlap each other, and the plot lists them (number, kind, load factor).
#[test]
fn forty_critical_points_are_numbered_and_listed() {
    let run = solve_text(&read(Path::new(&model_path("roof_arch.toml"))));
    let mut r = results::build(&run.model, &run.system, &run.path, &run.wasted, 0.0);
    let proto = r.critical_points[0].clone();
    let n = r.steps.len();
    r.critical_points = (0..40)
        .map(|k| {
            let st = &r.steps[(k * 7) % n];
            let mut c = proto.clone();
            c.load_factor = st.load_factor;
            c.watched = st.watched.clone();
            c.step = st.step;
            c
        })
        .collect();
    let s = plot::path_svg(&r).unwrap();
    dump("forty_critical.svg", &s);
    let labels = tags(&s, "crit-label");
    assert_eq!(labels.len(), 40);
    let mut boxes = Vec::new();
    for (k, l) in labels.iter().enumerate() {
        assert_eq!(text_of(l), (k + 1).to_string());
        let (x, y, size) = (attr(l, "x"), attr(l, "y"), attr(l, "font-size"));
        boxes.push([x, y - size, x + 0.6 * size * text_of(l).len() as f64, y]);
    }
    let mut overlaps = 0;
    for i in 0..boxes.len() {
        for j in 0..i {
            let (a, b) = (boxes[i], boxes[j]);
            if !(a[2] <= b[0] || a[0] >= b[2] || a[3] <= b[1] || a[1] >= b[3]) {
                overlaps += 1;
            }
        }
    }
    assert_eq!(overlaps, 0, "overlapping critical point numbers");
    let list = tags(&s, "crit-table\"");
    assert_eq!(list.len(), 40);
    assert!(text_of(&list[39]).contains(&format!("40  {} λ = {:.4}", proto.kind, r.critical_points[39].load_factor)));
    // The list fits in the picture.
    let height = attr(&s[..s.find('>').unwrap()], "height");
    assert!(list.iter().all(|t| attr(t, "y") < height), "list cut off");
}

/// 150 steps: the step boundaries become short ticks on the top edge with
/// step numbers at round intervals, the histories are drawn thin and only
/// each step's converged residual is marked.
#[test]
fn a_long_convergence_history_stays_readable() {
    let run = solve_text(&read(Path::new(&model_path("courtyard_net.toml"))));
    let mut r = results::build(&run.model, &run.system, &run.path, &run.wasted, 0.0);
    let proto = r.steps[1].clone();
    r.steps = (0..150).map(|k| { let mut s = proto.clone(); s.step = k; s }).collect();
    let s = plot::convergence_svg(&r).unwrap();
    dump("long_convergence.svg", &s);
    let bounds = tags(&s, "step-boundary");
    assert_eq!(bounds.len(), 149);
    assert!(bounds.iter().all(|b| attr(b, "y2") - attr(b, "y1") <= 6.5), "full-height boundaries");
    let labels: Vec<String> = tags(&s, "step-label").iter().map(|t| text_of(t).to_string()).collect();
    assert!(labels.len() >= 5 && labels.len() <= 20, "{labels:?}");
    // Only each step's converged residual is marked.
    assert_eq!(tags(&s, "it\"").len(), 0);
    assert_eq!(tags(&s, "converged\"").len(), 150);
    // Few steps: full-height boundaries as before.
    r.steps.truncate(5);
    let s = plot::convergence_svg(&r).unwrap();
    assert!(tags(&s, "step-boundary").iter().all(|b| attr(b, "y2") - attr(b, "y1") > 100.0));
}

/// `--shape-at`: the shape at a kept step and at a critical point, with
/// captions naming them; a step whose field was not kept is a warning that
/// says how to keep it.
#[test]
fn shape_at_a_chosen_step_and_at_a_critical_point() {
    let sc = Scratch::new("shape-at");
    let out = sc.0.join("out");
    let arch = model_path("roof_arch.toml");
    let (code, o, e) = tautline(&["solve", &arch, "-o", out.to_str().unwrap(), "--keep-fields", "all", "--shape-at", "3", "--shape-at", "critical:1", "-q"]);
    assert_eq!(code, 0, "{o}{e}");
    let step3 = read(&out.join("shape_step3.svg"));
    assert!(step3.contains("step 3, "), "subtitle names the step");
    assert_ne!(step3, read(&out.join("shape.svg")));
    let crit = read(&out.join("shape_critical1.svg"));
    assert!(crit.contains("critical point 1 (limit)"));
    let html = read(&out.join("report.html"));
    assert!(html.contains("Deformed shape at step 3 (") && html.contains("Deformed shape at critical point 1 ("));

    let out2 = sc.0.join("none");
    let (code, o, e) = tautline(&["solve", &arch, "-o", out2.to_str().unwrap(), "--keep-fields", "none", "--shape-at", "3", "-q"]);
    assert_eq!(code, 0, "{o}{e}");
    assert!(e.contains("shape_step3.svg not drawn") && e.contains("--keep-fields 3"), "{e}");
    assert!(!out2.join("shape_step3.svg").exists());
    let (code, _, e) = tautline(&["solve", &arch, "-o", sc.0.join("bad").to_str().unwrap(), "--shape-at", "critical:0"]);
    assert_eq!(code, 2, "{e}");
    assert!(e.contains("critical:N"), "{e}");
}

/// Slack events: a table by step in the report and a triangle under the
/// path point of that step.
#[test]
fn slack_events_are_tabled_and_marked_on_the_path() {
    let sc = Scratch::new("slack");
    let model = sc.0.join("slack.toml");
    std::fs::write(
        &model,
        crate::common::slackening_pair("watch = [\"C.x\"]\n"),
    )
    .unwrap();
    let out = sc.0.join("out");
    let (code, o, e) = tautline(&["solve", model.to_str().unwrap(), "-o", out.to_str().unwrap(), "-q"]);
    assert_eq!(code, 0, "{o}{e}");
    let html = read(&out.join("report.html"));
    let rows = table_rows(&html, "slack-events");
    assert_eq!(rows.len(), 1);
    let c = &rows[0].1;
    assert_eq!((c[0].as_str(), c[1].as_str(), c[2].as_str(), c[3].as_str()), ("5", "0.5000", "1", "right"));
    let path = read(&out.join("path.svg"));
    let marks = tags(&path, "slack-mark");
    assert_eq!(marks.len(), 1, "one slack step, one series");
    // Under the point of step 5.
    let pts = tags(&path, "pt ");
    let p5 = &pts[5];
    let cx = attr(p5, "cx");
    let mark_x: f64 = marks[0].split("points=\"").nth(1).unwrap().split(' ').next().unwrap().split(',').next().unwrap().parse().unwrap();
    assert!((mark_x - cx).abs() < 0.01, "mark at x {mark_x}, point at {cx}");
    assert!(html.contains("cables went slack") || html.contains("went slack"));
}

/// One catenary hanging under its weight: counted as a catenary, its weight
/// shown as dead load apart from the reference load, and drawn with its sag.
#[test]
fn catenary_is_counted_its_weight_shown_as_dead_load_and_its_sag_drawn() {
    let (l0, ea, w, span, rise) = (100.0, 2.0e7, 50.0, 80.0, 40.0);
    let h0 = tautline::element::Catenary::new([span, 0.0, rise], l0, ea, w).solve(span, rise).h;
    let text = format!(
        "title = \"stay\"\n[[section]]\nname = \"rope\"\nEA = {ea:?}\nweight = {w:?}\n\
         [[node]]\nid = \"A\"\nat = [0.0, 0.0, 0.0]\nfix = \"xyz\"\n\
         [[node]]\nid = \"B\"\nat = [{span:?}, 0.0, {rise:?}]\nfix = \"yz\"\n\
         [[member]]\nid = \"stay\"\nkind = \"catenary\"\nends = [\"A\", \"B\"]\nsection = \"rope\"\nrest_length = {l0:?}\n\
         [[load]]\nnode = \"B\"\nforce = [{h0:?}, 0.0, 0.0]\n\
         [analysis]\nstrain = \"engineering\"\nstart_load_factor = 1.0\ntarget = 1.2\nsteps = 2\nwatch = [\"B.x\"]\n"
    );
    let sc = Scratch::new("catenary");
    let model = sc.0.join("stay.toml");
    std::fs::write(&model, text).unwrap();
    let out = sc.0.join("out");
    let (code, o, e) = tautline(&["solve", model.to_str().unwrap(), "-o", out.to_str().unwrap(), "-q"]);
    assert_eq!(code, 0, "{o}{e}");
    let html = read(&out.join("report.html"));
    assert!(html.contains("<dd>1 (1 catenary)</dd>"), "members by kind");
    let res: serde_json::Value = serde_json::from_str(&read(&out.join("results.json"))).unwrap();
    let dead = res["equilibrium"]["dead_load"][2].as_f64().unwrap();
    assert!((dead + w * l0).abs() < 1e-9 * w * l0, "dead load {dead}");
    assert_eq!(res["equilibrium"]["reference_load"][0].as_f64().unwrap(), h0);
    let rows = table_rows(&html, "equilibrium");
    assert_eq!(rows[0].1[0], "dead load");
    assert_eq!(rows[0].1[3], sig4(-w * l0));
    assert_eq!(rows[1].1[1], sig4(1.2 * h0));
    assert!(html.contains(&format!("total [0, 0, {}] N (self-weight", sig4(-w * l0))));
    let shape = read(&out.join("shape.svg"));
    let drawn = tags(&shape, "member tension catenary");
    assert_eq!(drawn.len(), 2, "plan and elevation");
    assert!(shape.contains("1 catenary drawn with sag"));
    // In elevation the middle of the curve hangs below its chord (SVG y
    // grows downwards).
    let pts: Vec<(f64, f64)> = drawn[1].split("points=\"").nth(1).unwrap().split('"').next().unwrap().split(' ').map(|p| {
        let (a, b) = p.split_once(',').unwrap();
        (a.parse().unwrap(), b.parse().unwrap())
    }).collect();
    let (first, last, mid) = (pts[0], pts[pts.len() - 1], pts[pts.len() / 2]);
    let chord_y = first.1 + (mid.0 - first.0) / (last.0 - first.0) * (last.1 - first.1);
    assert!(mid.1 > chord_y + 3.0, "mid {mid:?}, chord y {chord_y}");
}

/// The governing results come first (before the figures) and name the node
/// that moved most, which fields.csv confirms.
#[test]
fn governing_results_come_first_and_are_right() {
    let sc = Scratch::new("governing");
    let out = sc.0.join("out");
    let (code, o, e) = tautline(&["solve", &model_path("courtyard_net.toml"), "-o", out.to_str().unwrap(), "-q"]);
    assert_eq!(code, 0, "{o}{e}");
    let html = read(&out.join("report.html"));
    let g = html.find("<table id=\"governing\">").expect("governing table");
    assert!(g < html.find("<figure").unwrap() && g < html.find("id=\"model\"").unwrap());
    let res: serde_json::Value = serde_json::from_str(&read(&out.join("results.json"))).unwrap();
    let node = res["largest_displacement"]["node"].as_str().unwrap();
    let last = res["steps"].as_array().unwrap().last().unwrap()["step"].as_u64().unwrap().to_string();
    let (mut best, mut best_node) = (0.0f64, String::new());
    for l in read(&out.join("fields.csv")).lines().skip(1) {
        let c: Vec<&str> = l.split(',').collect();
        if c[0] == last {
            let m = c[3..6].iter().map(|v| v.parse::<f64>().unwrap().powi(2)).sum::<f64>().sqrt();
            if m > best {
                best = m;
                best_node = c[2].to_string();
            }
        }
    }
    assert_eq!(node, best_node);
    let row = html[g..].split("</tr>").find(|r| r.contains("largest displacement")).unwrap();
    assert!(unescape(row).contains(&format!("{} at node {node}", sig4(best))), "{row}");
    // The displacement map is in the report, with its caption.
    assert!(html.contains("Vertical displacement uz in plan at step"));
}
