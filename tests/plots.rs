//! SVG plots: well-formed XML, the expected labels, one marker per point,
//! and no panic on empty or degenerate input.

use crate::common::{model, solve_text, Run};
use tautline::report::plot::{convergence_svg, path_svg, shape_svg};
use tautline::results::{self, Results};

fn model_text(name: &str) -> String {
    let p = format!("{}/models/{name}", env!("CARGO_MANIFEST_DIR"));
    std::fs::read_to_string(&p).unwrap_or_else(|e| panic!("{p}: {e}"))
}

fn results_of(run: &Run) -> Results {
    results::build(&run.model, &run.system, &run.path, &run.wasted, 0.0)
}

/// Final displacements per node (m), member forces (N) and slack flags.
fn final_state(run: &Run) -> (Vec<[f64; 3]>, Vec<f64>, Vec<bool>) {
    let u = &run.path.final_state.u;
    let d = (0..run.model.n_nodes())
        .map(|n| [0, 1, 2].map(|a| run.system.dofs.displacement(u, n, a)))
        .collect();
    let m = run.system.member_results(u);
    (d, m.iter().map(|r| r.force).collect(), m.iter().map(|r| r.slack).collect())
}

/// Checks XML well-formedness: one root `<svg>`, balanced and properly nested
/// tags, quoted attributes, no stray `<` or `&` in text. Returns the number
/// of elements.
fn check_well_formed(s: &str) -> Result<usize, String> {
    let mut stack: Vec<String> = Vec::new();
    let mut roots = 0;
    let mut elements = 0;
    let mut rest = s;
    let check_text = |t: &str| -> Result<(), String> {
        for (i, _) in t.match_indices('&') {
            let tail = &t[i..];
            if !["&amp;", "&lt;", "&gt;", "&quot;", "&apos;", "&#"].iter().any(|e| tail.starts_with(e)) {
                return Err(format!("bare '&' in {:?}", &tail[..tail.len().min(20)]));
            }
        }
        if t.contains('>') {
            return Err(format!("bare '>' in text {t:?}"));
        }
        Ok(())
    };
    while let Some(open) = rest.find('<') {
        let text = &rest[..open];
        if stack.is_empty() && !text.trim().is_empty() {
            return Err(format!("text outside the root: {text:?}"));
        }
        check_text(text)?;
        let after = &rest[open..];
        if after.starts_with("<?") {
            let end = after.find("?>").ok_or("unclosed <?")?;
            rest = &after[end + 2..];
            continue;
        }
        if after.starts_with("<!--") {
            let end = after.find("-->").ok_or("unclosed comment")?;
            rest = &after[end + 3..];
            continue;
        }
        // A tag: find its end outside quoted attribute values.
        let mut quote = None;
        let mut end = None;
        for (i, c) in after.char_indices().skip(1) {
            match (quote, c) {
                (None, '"' | '\'') => quote = Some(c),
                (Some(q), c) if c == q => quote = None,
                (None, '<') => return Err("'<' inside a tag".into()),
                (None, '>') => {
                    end = Some(i);
                    break;
                }
                _ => {}
            }
        }
        let end = end.ok_or("unterminated tag")?;
        let tag = &after[1..end];
        rest = &after[end + 1..];
        if let Some(name) = tag.strip_prefix('/') {
            let name = name.trim();
            match stack.pop() {
                Some(top) if top == name => {}
                other => return Err(format!("</{name}> closes {other:?}")),
            }
            continue;
        }
        let self_closing = tag.ends_with('/');
        let body = tag.trim_end_matches('/');
        let name: String = body.chars().take_while(|c| !c.is_whitespace()).collect();
        if name.is_empty() || !name.chars().all(|c| c.is_ascii_alphanumeric() || "-_:.".contains(c)) {
            return Err(format!("bad tag name in <{tag}>"));
        }
        // Attributes: name="value" pairs, all quoted.
        let mut attrs = body[name.len()..].trim();
        while !attrs.is_empty() {
            let eq = attrs.find('=').ok_or_else(|| format!("attribute without value in <{tag}>"))?;
            let q = attrs[eq + 1..].chars().next().ok_or("no value")?;
            if q != '"' && q != '\'' {
                return Err(format!("unquoted attribute in <{tag}>"));
            }
            let close = attrs[eq + 2..].find(q).ok_or("unclosed attribute")?;
            let value = &attrs[eq + 2..eq + 2 + close];
            if value.contains('<') {
                return Err(format!("'<' in attribute of <{tag}>"));
            }
            check_text(value)?;
            attrs = attrs[eq + 2 + close + 1..].trim_start();
        }
        elements += 1;
        if stack.is_empty() {
            roots += 1;
            if roots > 1 {
                return Err("more than one root element".into());
            }
            if name != "svg" {
                return Err(format!("root is <{name}>, not <svg>"));
            }
        }
        if !self_closing {
            stack.push(name);
        }
    }
    if !rest.trim().is_empty() {
        return Err(format!("text after the root: {rest:?}"));
    }
    if !stack.is_empty() {
        return Err(format!("unclosed elements: {stack:?}"));
    }
    if roots != 1 {
        return Err("no root element".into());
    }
    Ok(elements)
}

/// With TAUTLINE_PLOT_DUMP=<dir>, writes a plot there to look at.
fn dump(name: &str, s: &str) {
    if let Ok(dir) = std::env::var("TAUTLINE_PLOT_DUMP") {
        let _ = std::fs::write(std::path::Path::new(&dir).join(name), s);
    }
}

fn well_formed(s: &str) {
    if let Err(e) = check_well_formed(s) {
        panic!("SVG is not well formed: {e}\n{}", &s[..s.len().min(2000)]);
    }
}

fn count(s: &str, needle: &str) -> usize {
    s.matches(needle).count()
}

#[test]
fn checker_rejects_broken_xml() {
    assert!(check_well_formed(r#"<svg a="1"><g><line/></g></svg>"#).is_ok());
    assert!(check_well_formed("<svg><g></svg>").is_err());
    assert!(check_well_formed("<svg></svg><svg></svg>").is_err());
    assert!(check_well_formed("<g></g>").is_err());
    assert!(check_well_formed("<svg><text>a & b</text></svg>").is_err());
    assert!(check_well_formed("<svg><line x=1/></svg>").is_err());
    assert!(check_well_formed("<svg>").is_err());
}

#[test]
fn roof_arch_path_plot() {
    let run = solve_text(&model_text("roof_arch.toml"));
    let r = results_of(&run);
    assert!(r.steps.len() > 5);
    let limits = r.critical_points.iter().filter(|c| c.kind == "limit").count();
    assert!(limits >= 2, "roof arch should have two limit points: {:?}", r.critical_points);
    let s = path_svg(&r).expect("path plot");
    dump("roof_path.svg", &s);
    well_formed(&s);
    assert!(s.contains(&r.title), "title");
    assert!(s.contains("C.z"), "watch label");
    assert!(s.contains("[m]"), "length unit");
    assert!(s.contains("kN"), "force unit");
    assert!(s.contains("λ × reference"), "reference load statement");
    // One marker per converged step and watch entry.
    let stable = r.steps.iter().filter(|s| s.negative_pivots == 0).count();
    let unstable = r.steps.len() - stable;
    assert!(unstable > 0, "the arch passes an unstable branch");
    assert_eq!(count(&s, r#"class="pt stable""#), stable);
    assert_eq!(count(&s, r#"class="pt unstable""#), unstable);
    assert_eq!(count(&s, r#"class="seg unstable""#) + count(&s, r#"class="seg stable""#), r.steps.len() - 1);
    // Critical points annotated with kind and load factor to 4 decimals.
    assert_eq!(count(&s, r#"class="crit""#), r.critical_points.len());
    for c in &r.critical_points {
        let label = format!("{} λ = {:.4}", c.kind, c.load_factor);
        assert!(s.contains(&label), "missing {label}");
    }
    assert!(s.contains("limit λ = "));
    // No step marker lies under a critical point's label (its box estimated
    // as 0.6 em per character by 1 em, from the baseline up).
    let tags = |class: &str| -> Vec<String> {
        s.split('<').filter(|t| t.contains(&format!(r#"class="{class}"#))).map(str::to_string).collect()
    };
    let attr = |tag: &str, name: &str| -> f64 {
        let k = format!(r#" {name}=""#);
        let i = tag.find(&k).unwrap_or_else(|| panic!("{name} in {tag}")) + k.len();
        tag[i..tag[i..].find('"').unwrap() + i].parse().unwrap_or(f64::NAN)
    };
    let labels = tags("crit-label");
    assert_eq!(labels.len(), r.critical_points.len());
    for l in &labels {
        let (x, y, size) = (attr(l, "x"), attr(l, "y"), attr(l, "font-size"));
        let text = &l[l.find('>').unwrap() + 1..];
        let w = 0.6 * size * text.chars().count() as f64;
        let x0 = if l.contains(r#"text-anchor="end""#) { x - w } else if l.contains(r#"text-anchor="middle""#) { x - w / 2.0 } else { x };
        for m in tags("pt ") {
            let (cx, cy, rr) = (attr(&m, "cx"), attr(&m, "cy"), attr(&m, "r"));
            let clear = cx + rr < x0 || cx - rr > x0 + w || cy + rr < y - size || cy - rr > y + 0.25 * size;
            assert!(clear, "label {text:?} at ({x}, {y}) covers the marker at ({cx}, {cy})");
        }
    }
}

#[test]
fn roof_arch_convergence_plot() {
    let run = solve_text(&model_text("roof_arch.toml"));
    let r = results_of(&run);
    let s = convergence_svg(&r).expect("convergence plot");
    dump("roof_convergence.svg", &s);
    well_formed(&s);
    let positive = |v: &f64| v.is_finite() && *v > 0.0;
    let refactored: usize = r
        .steps
        .iter()
        .map(|st| st.residual_history.iter().enumerate().filter(|(k, v)| positive(v) && st.refactored_at.contains(k)).count())
        .sum();
    let all: usize = r.steps.iter().map(|st| st.residual_history.iter().filter(|v| positive(v)).count()).sum();
    assert!(refactored > 0, "Newton refactors every iteration");
    assert_eq!(count(&s, r#"class="refactor""#), refactored);
    if r.steps.len() > tautline::report::plot::MANY_STEPS {
        // Many steps: only each step's converged residual is marked.
        assert_eq!(count(&s, r#"class="it""#), 0);
        assert_eq!(count(&s, r#"class="converged""#), r.steps.iter().filter(|st| st.residual_history.iter().any(positive)).count());
        let _ = all;
    } else {
        assert_eq!(count(&s, r#"class="it""#), all - refactored);
    }
    assert_eq!(count(&s, r#"class="step-boundary""#), r.steps.len() - 1);
    assert!(s.contains("log scale"));
    assert!(s.contains("tangent refactored"));
}

#[test]
fn courtyard_net_plots() {
    let run = solve_text(&model_text("courtyard_net.toml"));
    let r = results_of(&run);
    let s = path_svg(&r).expect("path plot");
    dump("net_path.svg", &s);
    well_formed(&s);
    for w in &r.watch {
        assert!(s.contains(w.as_str()), "watch label {w}");
    }
    assert_eq!(count(&s, r#"class="pt "#), r.steps.len() * r.watch.len());
    // Two series: two different marker shapes in the points.
    assert!(s.contains("<circle class=\"pt") && s.contains("<rect class=\"pt"));

    let (d, f, slack) = final_state(&run);
    let s = shape_svg(&run.model, &d, &f, &slack).expect("shape plot");
    dump("net_shape.svg", &s);
    well_formed(&s);
    assert!(s.contains("displacements ×"), "scale text");
    assert!(s.contains("plan (x–y)") && s.contains("elevation (x–z)"));
    assert!(s.contains(&format!("axial force [{}]", r.units.force)), "legend in model force units");
    // Cables only, all in tension at the end: a sequential scale, no
    // compression anywhere in the legend.
    assert!(s.contains("tension") && !s.contains("compression"));
    assert_eq!(s.contains("slack cable"), slack.iter().any(|s| *s));
    let n = run.model.n_members();
    assert_eq!(count(&s, r#"<line class="undeformed""#), 2 * n);
    assert_eq!(count(&s, r#"<line class="member "#), 2 * n);
    assert_eq!(count(&s, r#"class="member slack""#), 2 * slack.iter().filter(|s| **s).count());
}

#[test]
fn shape_scale_is_a_tenth_of_the_model() {
    let run = solve_text(&model_text("roof_arch.toml"));
    let (d, f, slack) = final_state(&run);
    let s = shape_svg(&run.model, &d, &f, &slack).expect("shape plot");
    dump("roof_shape.svg", &s);
    well_formed(&s);
    let at = s.find("displacements ×").expect("scale text") + "displacements ×".len();
    let factor: f64 = s[at..].split_whitespace().next().unwrap().parse().expect("numeric factor");
    let size = 10.0; // the arch spans 10 m
    let dmax = d.iter().map(|v| (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt()).fold(0.0, f64::max);
    let drawn = factor * dmax / size;
    assert!((0.04..=0.10 + 1e-9).contains(&drawn), "largest drawn displacement {drawn} of the size");
    // The colour bar runs from the smallest to the largest force, in kN at
    // 4 significant figures (the arch's bars are in compression at the end,
    // so its ends are both compressive or span both signs).
    let live: Vec<f64> = f.iter().zip(&slack).filter(|(_, s)| !**s).map(|(v, _)| v / 1e3).collect();
    let (lo, hi) = (live.iter().copied().fold(f64::INFINITY, f64::min), live.iter().copied().fold(f64::NEG_INFINITY, f64::max));
    let four = tautline::report::numbers::sig4;
    assert!(s.contains(&format!(">{} kN", four(lo))), "legend minimum {lo}");
    assert!(s.contains(&format!(">{} kN", four(hi))), "legend maximum {hi}");
    assert_eq!(s.contains("compression"), lo < 0.0);
}

#[test]
fn zero_displacements_and_bad_input() {
    let m = model(crate::common::PRETENSIONED_CABLE);
    let zero = vec![[0.0; 3]; m.n_nodes()];
    let forces = vec![0.0; m.n_members()];
    let slack = vec![false; m.n_members()];
    let s = shape_svg(&m, &zero, &forces, &slack).expect("zero displacements still plot");
    well_formed(&s);
    assert!(s.contains("displacements ×1"));
    // Wrong lengths and NaN: errors, not panics.
    assert!(shape_svg(&m, &zero[..1], &forces, &slack).is_err());
    assert!(shape_svg(&m, &zero, &forces[..1], &slack).is_err());
    let mut nan = zero.clone();
    nan[1][2] = f64::NAN;
    assert!(shape_svg(&m, &nan, &forces, &slack).is_err());
    // NaN forces draw as neutral.
    let s = shape_svg(&m, &zero, &[f64::NAN, 1.0], &[false, true]).expect("NaN force");
    well_formed(&s);
}

#[test]
fn empty_and_degenerate_results() {
    let run = solve_text(crate::common::PRETENSIONED_CABLE);
    let mut r = results_of(&run);
    r.title = "A <b>&</b> \"title\"".into();
    let full = path_svg(&r).expect("path");
    well_formed(&full);
    assert!(full.contains("A &lt;b&gt;&amp;&lt;/b&gt; &quot;title&quot;"), "title escaped");
    if r.watch.is_empty() {
        assert!(full.contains("no data"), "no watch entries: nothing to plot");
    } else {
        assert_eq!(count(&full, r#"class="pt "#), r.steps.len() * r.watch.len());
    }

    let mut empty = r.clone();
    empty.steps.clear();
    empty.critical_points.clear();
    for s in [path_svg(&empty), convergence_svg(&empty)] {
        let s = s.expect("empty results give a 'no data' plot");
        well_formed(&s);
        assert!(s.contains("no data"));
    }

    // One point, NaN values, zero residuals.
    let mut one = r.clone();
    one.watch = vec!["M.z".into()];
    one.steps.truncate(1);
    one.steps[0].watched = vec![0.0];
    one.steps[0].load_factor = 0.0;
    one.steps[0].residual_history = vec![0.0];
    let s = path_svg(&one).expect("one point");
    well_formed(&s);
    assert_eq!(count(&s, r#"class="pt "#), 1);
    let s = convergence_svg(&one).expect("zero residual");
    well_formed(&s);
    assert!(s.contains("no data"));

    let mut nan = one.clone();
    nan.steps[0].watched = vec![f64::NAN];
    nan.steps[0].residual_history = vec![f64::NAN, f64::INFINITY];
    let s = path_svg(&nan).expect("NaN point");
    well_formed(&s);
    assert!(s.contains("no data"));
    well_formed(&convergence_svg(&nan).expect("NaN residuals"));

    // Watched values that do not match the watch list: an error.
    let mut bad = one.clone();
    bad.watch.push("X.y".into());
    assert!(path_svg(&bad).is_err());
}
