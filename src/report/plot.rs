//! SVG plots of a run: the load path, the deformed shape and the convergence
//! history. Every function returns the whole SVG text, or an error when its
//! inputs contradict each other; missing data gives a plot that says so.
//! All plots read in black-and-white print: series differ by marker shape and
//! line pattern, not by colour alone.
//!
//! Marked elements carry a class, for tests and for styling:
//! `pt stable` / `pt unstable` (path points), `crit` (critical points),
//! `it` / `refactor` (convergence iterations), `step-boundary`, `member`.

pub(crate) mod colour;
pub(crate) mod fieldmap;
pub(crate) mod raster;
pub mod shape;
mod svg;

pub use shape::{shape_svg_with, ColourBy, ShapeInput, ShapeOptions, RASTER_ABOVE_MEMBERS};

use crate::model::Model;
use crate::results::Results;
use svg::{Anchor, Shape, Stroke, Svg, GRID, INK, MUTED, SHAPES, TITLE_SIZE};

/// Size of the path and convergence plots, px.
const PLOT_W: f64 = 800.0;
const PLOT_H: f64 = 520.0;
/// Space around the plotting area, px.
const MARGIN_L: f64 = 84.0;
const MARGIN_R: f64 = 220.0;
const MARGIN_T: f64 = 62.0;
const MARGIN_B: f64 = 74.0;
const MARKER_R: f64 = 4.0;
/// Above this many critical points the path plot numbers its rings and lists them.
pub const NUMBERED_ABOVE: usize = 4;
/// Above this many steps the convergence plot marks step boundaries by ticks.
pub const MANY_STEPS: usize = 40;
/// Row height of that list, px.
const LIST_ROW: f64 = 13.0;

/// Series colours: dark enough to print as distinct greys.
const SERIES_COLORS: [&str; 6] = ["#1b3a6b", "#7a2e0e", "#2f5d34", "#5b2a6e", "#6b5a12", "#2b5f66"];
/// Stroke patterns of the stable part of each series.
const SERIES_DASH: [Option<&str>; 6] = [None, Some("9 4"), Some("2 3 9 3"), Some("14 4 3 4"), Some("5 5"), Some("1 3")];
/// Stroke pattern of every unstable segment.
const UNSTABLE_DASH: &str = "3 4";

/// Where the data go on the page.
#[derive(Clone, Copy, Debug)]
struct Frame {
    left: f64,
    top: f64,
    width: f64,
    height: f64,
}

impl Frame {
    fn right(&self) -> f64 {
        self.left + self.width
    }
    fn bottom(&self) -> f64 {
        self.top + self.height
    }
}

/// A linear map from data values to pixels.
#[derive(Clone, Copy, Debug)]
struct Scale {
    lo: f64,
    hi: f64,
    p0: f64,
    p1: f64,
}

impl Scale {
    fn new(lo: f64, hi: f64, p0: f64, p1: f64) -> Scale {
        let (lo, hi) = widen(lo, hi);
        Scale { lo, hi, p0, p1 }
    }
    fn at(&self, v: f64) -> f64 {
        self.p0 + (v - self.lo) / (self.hi - self.lo) * (self.p1 - self.p0)
    }
}

/// A range with non-zero, finite width.
fn widen(lo: f64, hi: f64) -> (f64, f64) {
    let (lo, hi) = if lo.is_finite() && hi.is_finite() { (lo.min(hi), lo.max(hi)) } else { (0.0, 1.0) };
    if hi - lo > 1e-300 * (1.0 + lo.abs().max(hi.abs())) && hi - lo > 0.0 {
        (lo, hi)
    } else {
        let d = if lo.abs() > 0.0 { 0.1 * lo.abs() } else { 1.0 };
        (lo - d, hi + d)
    }
}

/// Finite minimum and maximum of some values, if any.
fn extent(values: impl IntoIterator<Item = f64>) -> Option<(f64, f64)> {
    values
        .into_iter()
        .filter(|v| v.is_finite())
        .fold(None, |acc, v| Some(acc.map_or((v, v), |(a, b): (f64, f64)| (a.min(v), b.max(v)))))
}

/// A "nice" tick step (1, 2 or 5 × 10^k) giving about `n` ticks over the range.
fn nice_step(lo: f64, hi: f64, n: f64) -> f64 {
    let raw = (hi - lo).abs() / n.max(1.0);
    if !raw.is_finite() || raw <= 0.0 {
        return 1.0;
    }
    let mag = 10f64.powf(raw.log10().floor());
    let f = raw / mag;
    let nice = if f <= 1.0 { 1.0 } else if f <= 2.0 { 2.0 } else if f <= 5.0 { 5.0 } else { 10.0 };
    nice * mag
}

/// Ticks of a range, widened outward to whole steps.
fn ticks(lo: f64, hi: f64, n: f64) -> (f64, f64, Vec<f64>) {
    let (lo, hi) = widen(lo, hi);
    let step = nice_step(lo, hi, n);
    let a = (lo / step).floor() * step;
    let b = (hi / step).ceil() * step;
    let count = ((b - a) / step).round();
    if !count.is_finite() || !(1.0..=100.0).contains(&count) {
        return (lo, hi, vec![lo, hi]);
    }
    let t = (0..=count as usize).map(|i| a + i as f64 * step).map(|v| if v.abs() < 1e-12 * step { 0.0 } else { v }).collect();
    (a, b, t)
}

/// Whether the path turns back upwards at limit point `c` (a minimum of λ,
/// as the lower limit of a snap-through): the first step past the point
/// carries a larger load factor than the point itself.
fn crit_below(results: &Results, c: &crate::results::CriticalPoint) -> bool {
    c.kind == "limit" && results.steps.iter().find(|s| s.step == c.step).is_some_and(|s| s.load_factor > c.load_factor)
}

/// A tick label with as many decimals as the step needs.
fn tick_label(v: f64, step: f64) -> String {
    if v == 0.0 {
        return "0".into();
    }
    let big = v.abs().max(step.abs());
    if !(1e-4..1e6).contains(&big) {
        return format!("{v:.1e}");
    }
    let decimals = if step > 0.0 && step.is_finite() { (-step.log10().floor()).clamp(0.0, 8.0) as usize } else { 2 };
    format!("{v:.decimals$}")
}

/// Draws the frame, grid, ticks and labels of a linear x–y chart.
// Both axes' scale, ticks and label, as plain values (see `Svg::rect`).
#[allow(clippy::too_many_arguments)]
fn axes(svg: &mut Svg, f: Frame, x: &Scale, xt: &[f64], y: &Scale, yt: &[f64], xlabel: &str, ylabel: &str) {
    let xs = if xt.len() > 1 { xt[1] - xt[0] } else { 1.0 };
    let ys = if yt.len() > 1 { yt[1] - yt[0] } else { 1.0 };
    for &t in xt {
        let px = x.at(t);
        svg.line(px, f.top, px, f.bottom(), Stroke::solid(GRID, 0.6), "grid");
        svg.line(px, f.bottom(), px, f.bottom() + 5.0, Stroke::solid(INK, 1.0), "tick");
        svg.text(px, f.bottom() + 19.0, &tick_label(t, xs), 11.0, Anchor::Middle, "tick-label");
    }
    for &t in yt {
        let py = y.at(t);
        svg.line(f.left, py, f.right(), py, Stroke::solid(GRID, 0.6), "grid");
        svg.line(f.left - 5.0, py, f.left, py, Stroke::solid(INK, 1.0), "tick");
        svg.text(f.left - 8.0, py + 4.0, &tick_label(t, ys), 11.0, Anchor::End, "tick-label");
    }
    frame_box(svg, f);
    svg.text(f.left + f.width / 2.0, f.bottom() + 42.0, xlabel, 13.0, Anchor::Middle, "axis-label");
    svg.text_vertical(f.left - 58.0, f.top + f.height / 2.0, ylabel, 13.0, "axis-label");
}

fn frame_box(svg: &mut Svg, f: Frame) {
    svg.rect(f.left, f.top, f.width, f.height, "none", Some(Stroke::solid(INK, 1.0)), "frame");
}

fn title(svg: &mut Svg, text: &str, fallback: &str) {
    let t = if text.trim().is_empty() { fallback } else { text };
    let w = svg.width;
    svg.text(w / 2.0, 26.0, t, TITLE_SIZE, Anchor::Middle, "title");
}

/// A plot with a title and a "no data" note, for runs with nothing to draw.
fn no_data(width: f64, height: f64, heading: &str, why: &str) -> String {
    let mut svg = Svg::new(width, height);
    title(&mut svg, heading, "plot");
    svg.text(width / 2.0, height / 2.0, &format!("no data: {why}"), 16.0, Anchor::Middle, "no-data");
    svg.finish()
}

/// One row of a legend: a line sample with an optional marker, then text.
struct LegendRow<'a> {
    stroke: Option<Stroke<'a>>,
    marker: Option<(Shape, bool)>,
    color: &'a str,
    label: String,
}

/// Draws legend rows in a box starting at (x, y).
fn legend(svg: &mut Svg, x: f64, y: f64, rows: &[LegendRow]) {
    const ROW: f64 = 18.0;
    const SAMPLE: f64 = 30.0;
    let longest = rows.iter().map(|r| r.label.chars().count()).max().unwrap_or(0) as f64;
    let w = SAMPLE + 16.0 + 6.4 * longest;
    svg.rect(x - 6.0, y - 12.0, w, ROW * rows.len() as f64 + 8.0, "#ffffff", Some(Stroke::solid(MUTED, 0.8)), "legend");
    for (i, r) in rows.iter().enumerate() {
        let yy = y + i as f64 * ROW;
        if let Some(s) = r.stroke {
            svg.line(x, yy - 4.0, x + SAMPLE, yy - 4.0, s, "legend-line");
        }
        if let Some((shape, filled)) = r.marker {
            svg.marker(shape, x + SAMPLE / 2.0, yy - 4.0, MARKER_R, r.color, filled, "legend-marker");
        }
        svg.text(x + SAMPLE + 8.0, yy, &r.label, 11.0, Anchor::Start, "legend-text");
    }
}

fn series_stroke(i: usize, unstable: bool) -> Stroke<'static> {
    let color = SERIES_COLORS[i % SERIES_COLORS.len()];
    if unstable {
        Stroke::dashed(color, 1.4, UNSTABLE_DASH)
    } else {
        Stroke { color, width: 2.0, dash: SERIES_DASH[i % SERIES_DASH.len()] }
    }
}

/// Load factor against each watched displacement: one series per watch entry,
/// every converged step marked (filled: stable, hollow on a dotted line:
/// unstable, `negative_pivots > 0`), critical points annotated.
pub fn path_svg(results: &Results) -> Result<String, String> {
    let heading = if results.title.trim().is_empty() { "load path" } else { results.title.as_str() };
    if results.steps.is_empty() {
        return Ok(no_data(PLOT_W, PLOT_H, heading, "the run has no converged steps"));
    }
    if results.watch.is_empty() {
        return Ok(no_data(PLOT_W, PLOT_H, heading, "no watched displacements (set analysis.watch)"));
    }
    let n_series = results.watch.len();
    if let Some(s) = results.steps.iter().find(|s| s.watched.len() != n_series) {
        return Err(format!(
            "step {} has {} watched values but {} watch entries",
            s.step,
            s.watched.len(),
            n_series
        ));
    }
    let point_ok = |x: f64, y: f64| x.is_finite() && y.is_finite();
    let xs = results.steps.iter().flat_map(|s| s.watched.iter().copied().filter(|_| s.load_factor.is_finite()));
    let crit_x = results.critical_points.iter().filter(|c| c.load_factor.is_finite()).flat_map(|c| c.watched.iter().copied());
    let Some((x0, x1)) = extent(xs.chain(crit_x).chain([0.0])) else {
        return Ok(no_data(PLOT_W, PLOT_H, heading, "no finite points"));
    };
    let ys = results.steps.iter().map(|s| s.load_factor);
    let crit_y = results.critical_points.iter().map(|c| c.load_factor);
    let Some((y0, y1)) = extent(ys.chain(crit_y).chain([0.0])) else {
        return Ok(no_data(PLOT_W, PLOT_H, heading, "no finite points"));
    };
    // A critical point's label goes on the outer side of its turn (below a
    // minimum of λ, above a maximum), where the path leaves the space free:
    // leave room for it there.
    let room = 0.1 * (y1 - y0);
    let outward = |c: &crate::results::CriticalPoint| crit_below(results, c);
    let y0 = if results.critical_points.iter().any(|c| c.load_factor.is_finite() && outward(c)) { y0 - room } else { y0 };
    let y1 = if results.critical_points.iter().any(|c| c.load_factor.is_finite() && !outward(c)) { y1 + room } else { y1 };
    let turn = |c: &crate::results::CriticalPoint| c.kind == "limit";
    let any_finite = results.steps.iter().any(|s| s.watched.iter().any(|x| point_ok(*x, s.load_factor)));
    if !any_finite {
        return Ok(no_data(PLOT_W, PLOT_H, heading, "no finite points"));
    }

    let f = Frame { left: MARGIN_L, top: MARGIN_T, width: PLOT_W - MARGIN_L - MARGIN_R, height: PLOT_H - MARGIN_T - MARGIN_B };
    let (xa, xb, xt) = ticks(x0, x1, 6.0);
    let (ya, yb, yt) = ticks(y0, y1, 6.0);
    let x = Scale::new(xa, xb, f.left, f.right());
    let y = Scale::new(ya, yb, f.bottom(), f.top);

    // A numbered list of many critical points makes the plot taller.
    let list_rows = if results.critical_points.len() > NUMBERED_ABOVE { results.critical_points.len() + 1 } else { 0 };
    let height = PLOT_H.max(f.top + 10.0 + 18.0 * (n_series + 4) as f64 + 22.0 + LIST_ROW * list_rows as f64 + 20.0);
    let mut svg = Svg::new(PLOT_W, height);
    title(&mut svg, heading, "load path");
    let len = &results.units.length;
    let force = &results.units.force;
    svg.text(
        PLOT_W / 2.0,
        44.0,
        &format!("applied load = λ × reference load (loads as given in the model, {force})"),
        11.0,
        Anchor::Middle,
        "caption",
    );
    axes(
        &mut svg,
        f,
        &x,
        &xt,
        &y,
        &yt,
        &format!("watched displacement [{len}]"),
        "load factor λ  (total load = λ × reference)",
    );

    for i in 0..n_series {
        let color = SERIES_COLORS[i % SERIES_COLORS.len()];
        let shape = SHAPES[i % SHAPES.len()];
        svg.open_group(&format!("series s{i}"));
        // Segments, each drawn in the style of the step it arrives at.
        for w in results.steps.windows(2) {
            let (a, b) = (&w[0], &w[1]);
            let (xa, xb) = (a.watched[i], b.watched[i]);
            if point_ok(xa, a.load_factor) && point_ok(xb, b.load_factor) {
                let unstable = b.negative_pivots > 0;
                let class = if unstable { "seg unstable" } else { "seg stable" };
                svg.line(x.at(xa), y.at(a.load_factor), x.at(xb), y.at(b.load_factor), series_stroke(i, unstable), class);
            }
        }
        for s in &results.steps {
            let xv = s.watched[i];
            if point_ok(xv, s.load_factor) {
                let stable = s.negative_pivots == 0;
                let class = if stable { "pt stable" } else { "pt unstable" };
                svg.marker(shape, x.at(xv), y.at(s.load_factor), MARKER_R, color, stable, class);
            }
        }
        svg.close_group();
    }

    // Steps at which cables went slack: a hollow downward triangle under
    // the point on each series.
    let slack_steps: std::collections::BTreeSet<usize> = results.slack_events.iter().map(|e| e.step).collect();
    for st in results.steps.iter().filter(|s| slack_steps.contains(&s.step)) {
        for xv in st.watched.iter().take(n_series) {
            if point_ok(*xv, st.load_factor) {
                svg.marker(Shape::TriangleDown, x.at(*xv), y.at(st.load_factor) + 11.0, 4.0, INK, false, "slack-mark");
            }
        }
    }

    // Critical points: a ring around the point on each series, text once.
    // Up to NUMBERED_ABOVE points the label says kind and load factor;
    // beyond, each ring gets its number, placed clear of the markers and of
    // the other numbers, and the list of numbers goes in the margin.
    let numbered = results.critical_points.len() > NUMBERED_ABOVE;
    let mut taken: Vec<[f64; 4]> = Vec::new();
    if numbered {
        for st in &results.steps {
            for xv in st.watched.iter().take(n_series).filter(|v| point_ok(**v, st.load_factor)) {
                let (px, py) = (x.at(*xv), y.at(st.load_factor));
                taken.push([px - MARKER_R, py - MARKER_R, px + MARKER_R, py + MARKER_R]);
            }
        }
    }
    for (k, c) in results.critical_points.iter().enumerate() {
        if !c.load_factor.is_finite() {
            continue;
        }
        let mut labelled = false;
        for xv in c.watched.iter().take(n_series) {
            if !xv.is_finite() {
                continue;
            }
            let (px, py) = (x.at(*xv), y.at(c.load_factor));
            svg.marker(Shape::Circle, px, py, 8.0, INK, false, "crit");
            if labelled {
                continue;
            }
            labelled = true;
            if numbered {
                let text = (k + 1).to_string();
                let (w, hgt) = (0.62 * 11.0 * text.len() as f64 + 2.0, 11.0);
                // Candidate places on rings of growing radius around the
                // point, twelve directions each, nearest first; the first
                // clear of the markers and of the numbers placed so far,
                // inside the frame, is taken (a leader line joins a far one).
                let mut pick = None;
                'search: for radius in [11.0, 18.0, 26.0, 35.0, 45.0, 56.0, 68.0, 82.0, 98.0] {
                    for dir in 0..12 {
                        let th = -std::f64::consts::FRAC_PI_4 + dir as f64 * std::f64::consts::PI / 6.0;
                        let (c, sn) = (th.cos(), th.sin());
                        let cx = px + radius * c + c.signum() * (w / 2.0) * (c.abs() > 0.3) as u8 as f64;
                        let cy = py + radius * sn;
                        let b = [cx - w / 2.0, cy - hgt / 2.0, cx + w / 2.0, cy + hgt / 2.0];
                        let inside = b[0] >= f.left && b[2] <= f.right() && b[1] >= f.top && b[3] <= f.bottom();
                        let free = taken.iter().all(|t| b[2] < t[0] || b[0] > t[2] || b[3] < t[1] || b[1] > t[3]);
                        if inside && free {
                            pick = Some((b, radius));
                            break 'search;
                        }
                    }
                }
                let (pick, radius) = pick.unwrap_or(([px + 10.0, py - 9.0 - hgt, px + 10.0 + w, py - 9.0], 11.0));
                taken.push(pick);
                if radius > 20.0 {
                    let (cx, cy) = ((pick[0] + pick[2]) / 2.0, (pick[1] + pick[3]) / 2.0);
                    let d = ((cx - px).powi(2) + (cy - py).powi(2)).sqrt().max(1e-9);
                    svg.line(px + 8.0 * (cx - px) / d, py + 8.0 * (cy - py) / d, cx - 6.0 * (cx - px) / d, cy - 6.0 * (cy - py) / d, Stroke::solid(MUTED, 0.7), "crit-leader");
                }
                svg.text_halo(pick[0], pick[3] - 2.0, &text, 11.0, Anchor::Start, "crit-label");
            } else {
                // Centred on the outer side of the turn (room was left
                // there), unless that leaves the frame.
                let below = crit_below(results, c);
                let dy = match below {
                    true if py + 22.0 < f.bottom() - 4.0 => 22.0,
                    false if py - 14.0 > f.top + 12.0 => -14.0,
                    true => -14.0,
                    false => 22.0,
                };
                // A path that goes on through the point (a bifurcation)
                // keeps its label beside the ring instead.
                let (anchor, dx) = if px > f.left + 0.85 * f.width || (!turn(c) && px > f.left + 0.7 * f.width) {
                    (Anchor::End, -10.0)
                } else if px < f.left + 0.15 * f.width || !turn(c) {
                    (Anchor::Start, 10.0)
                } else {
                    (Anchor::Middle, 0.0)
                };
                let text = format!("{} {} λ = {:.4}", k + 1, c.kind, c.load_factor);
                svg.text_halo(px + dx, py + dy, &text, 11.5, anchor, "crit-label");
            }
        }
    }

    let mut rows: Vec<LegendRow> = results
        .watch
        .iter()
        .enumerate()
        .map(|(i, w)| LegendRow {
            stroke: Some(series_stroke(i, false)),
            marker: Some((SHAPES[i % SHAPES.len()], true)),
            color: SERIES_COLORS[i % SERIES_COLORS.len()],
            label: format!("{w} [{len}]"),
        })
        .collect();
    rows.push(LegendRow { stroke: None, marker: Some((Shape::Circle, true)), color: INK, label: "filled, solid: stable".into() });
    rows.push(LegendRow {
        stroke: Some(Stroke::dashed(INK, 1.4, UNSTABLE_DASH)),
        marker: Some((Shape::Circle, false)),
        color: INK,
        label: "hollow, dotted: unstable".into(),
    });
    if !results.critical_points.is_empty() {
        rows.push(LegendRow { stroke: None, marker: Some((Shape::Circle, false)), color: INK, label: "ring: critical point".into() });
    }
    if !slack_steps.is_empty() {
        rows.push(LegendRow { stroke: None, marker: Some((Shape::TriangleDown, false)), color: INK, label: "under a point: cables went slack".into() });
    }
    let lx = f.right() + 18.0;
    legend(&mut svg, lx, f.top + 10.0, &rows);
    if numbered {
        // The legend table of the numbered rings.
        let mut ly = f.top + 10.0 + 18.0 * rows.len() as f64 + 22.0;
        svg.text(lx - 6.0, ly, "critical points", 12.0, Anchor::Start, "crit-table-head");
        ly += LIST_ROW;
        for (k, c) in results.critical_points.iter().enumerate() {
            svg.text(lx - 6.0, ly, &format!("{:>2}  {} λ = {:.4}", k + 1, c.kind, c.load_factor), 10.5, Anchor::Start, "crit-table");
            ly += LIST_ROW;
        }
    }
    Ok(svg.finish())
}

/// Residual norm per corrector iteration on a log axis, the iterations of
/// all steps one after another; refactorizations marked with squares, step
/// boundaries as thin vertical lines, the tolerance as a dashed line.
pub fn convergence_svg(results: &Results) -> Result<String, String> {
    const HEADING: &str = "convergence history";
    let heading = if results.title.trim().is_empty() { HEADING.to_string() } else { format!("{} — {HEADING}", results.title) };
    // (global index, value, refactored, step start)
    let mut pts: Vec<(usize, f64, bool)> = Vec::new();
    let mut starts: Vec<(usize, usize)> = Vec::new();
    let mut idx = 0usize;
    for s in &results.steps {
        starts.push((idx, s.step));
        for (k, r) in s.residual_history.iter().enumerate() {
            pts.push((idx, *r, s.refactored_at.contains(&k)));
            idx += 1;
        }
    }
    let positive = |v: f64| v.is_finite() && v > 0.0;
    let tol = results.analysis.tolerance;
    let Some((lo, hi)) = extent(pts.iter().filter(|p| positive(p.1)).map(|p| p.1.log10())) else {
        return Ok(no_data(PLOT_W, PLOT_H, &heading, "no positive residuals recorded"));
    };
    let (lo, hi) = if positive(tol) { (lo.min(tol.log10()), hi.max(tol.log10())) } else { (lo, hi) };
    let (mut d0, mut d1) = (lo.floor(), hi.ceil());
    if d1 <= d0 {
        d0 -= 1.0;
        d1 += 1.0;
    }
    let f = Frame { left: MARGIN_L, top: MARGIN_T, width: PLOT_W - MARGIN_L - MARGIN_R, height: PLOT_H - MARGIN_T - MARGIN_B };
    let n = idx.max(2) - 1;
    let (xa, xb, xt) = ticks(0.0, n as f64, 8.0);
    let xt: Vec<f64> = xt.into_iter().filter(|t| t.fract() == 0.0).collect();
    let x = Scale::new(xa, xb, f.left, f.right());
    let y = Scale::new(d0, d1, f.bottom(), f.top);

    let mut svg = Svg::new(PLOT_W, PLOT_H);
    title(&mut svg, &heading, HEADING);
    // Log y axis: a grid line and label at each decade.
    let decades = (d1 - d0) as usize;
    let every = decades.div_ceil(10).max(1);
    for (i, d) in (0..=decades).map(|i| (i, d0 + i as f64)) {
        let py = y.at(d);
        svg.line(f.left, py, f.right(), py, Stroke::solid(GRID, 0.6), "grid");
        if i % every == 0 {
            svg.line(f.left - 5.0, py, f.left, py, Stroke::solid(INK, 1.0), "tick");
            svg.text(f.left - 8.0, py + 4.0, &format!("1e{}", d as i64), 11.0, Anchor::End, "tick-label");
        }
    }
    let xs = if xt.len() > 1 { xt[1] - xt[0] } else { 1.0 };
    for &t in &xt {
        let px = x.at(t);
        svg.line(px, f.bottom(), px, f.bottom() + 5.0, Stroke::solid(INK, 1.0), "tick");
        svg.text(px, f.bottom() + 19.0, &tick_label(t, xs.max(1.0)), 11.0, Anchor::Middle, "tick-label");
    }
    // Many steps: full-height boundaries would grey the plot over, so they
    // shrink to ticks along the top edge, with step numbers at round
    // intervals above them.
    let many = starts.len() > MANY_STEPS;
    for (k, (start, _step)) in starts.iter().enumerate() {
        if k > 0 {
            let px = x.at(*start as f64 - 0.5);
            let bottom = if many { f.top + 6.0 } else { f.bottom() };
            svg.line(px, f.top, px, bottom, Stroke::solid(MUTED, 0.6), "step-boundary");
        }
    }
    if many {
        let every = nice_step(0.0, starts.len() as f64, 8.0).max(1.0) as usize;
        for (start, step) in starts.iter().filter(|(_, st)| st % every == 0) {
            svg.text(x.at(*start as f64), f.top - 4.0, &format!("{step}"), 10.0, Anchor::Middle, "step-label");
        }
        svg.text(f.left, f.top - 16.0, "step:", 10.0, Anchor::Start, "step-label");
    }
    if positive(tol) {
        let py = y.at(tol.log10());
        svg.line(f.left, py, f.right(), py, Stroke::dashed(INK, 1.0, "6 4"), "tolerance");
        svg.text(f.right() - 4.0, py - 5.0, &format!("tolerance {tol:.0e}"), 10.5, Anchor::End, "tolerance-label");
    }
    frame_box(&mut svg, f);
    svg.text(f.left + f.width / 2.0, f.bottom() + 42.0, "iteration (all steps in order)", 13.0, Anchor::Middle, "axis-label");
    svg.text_vertical(f.left - 58.0, f.top + f.height / 2.0, "relative residual norm (log scale)", 13.0, "axis-label");

    let color = SERIES_COLORS[0];
    // Many steps: the histories are drawn thin and pale, only each step's
    // converged residual (its last) is marked, so the run's trend reads
    // along the bottom of the sawtooth; refactorizations stay marked.
    let (line_colour, line_width) = if many { ("#9aa7bd", 0.6) } else { (color, 1.3) };
    let mut offset = 0usize;
    let mut last: Vec<(f64, f64)> = Vec::new();
    for s in &results.steps {
        let line: Vec<(f64, f64)> = s
            .residual_history
            .iter()
            .enumerate()
            .filter(|(_, r)| positive(**r))
            .map(|(k, r)| (x.at((offset + k) as f64), y.at(r.log10())))
            .collect();
        svg.polyline(&line, Stroke::solid(line_colour, line_width), "history");
        if let Some(p) = line.last() {
            last.push(*p);
        }
        offset += s.residual_history.len();
    }
    let crowd = (0.5 * f.width / idx.max(1) as f64).clamp(0.35, 1.0);
    for (i, r, refactored) in &pts {
        if !positive(*r) {
            continue;
        }
        let (px, py) = (x.at(*i as f64), y.at(r.log10()));
        // Markers shrink as the iterations crowd the axis.
        if *refactored {
            svg.marker(Shape::Square, px, py, (MARKER_R + 1.0) * crowd.max(0.6), INK, false, "refactor");
        } else if !many {
            svg.marker(Shape::Circle, px, py, 2.6 * crowd, color, true, "it");
        }
    }
    if many {
        for (px, py) in &last {
            svg.marker(Shape::Diamond, *px, *py, 2.4, color, true, "converged");
        }
    }
    let mut rows = vec![
        LegendRow { stroke: Some(Stroke::solid(line_colour, line_width.max(1.0))), marker: (!many).then_some((Shape::Circle, true)), color, label: "residual".into() },
        LegendRow { stroke: None, marker: Some((Shape::Square, false)), color: INK, label: "tangent refactored".into() },
        LegendRow { stroke: Some(Stroke::solid(MUTED, 0.6)), marker: None, color: MUTED, label: if many { "step boundary (top ticks)".into() } else { "step boundary".into() } },
        LegendRow { stroke: Some(Stroke::dashed(INK, 1.0, "6 4")), marker: None, color: INK, label: "tolerance".into() },
    ];
    if many {
        rows.insert(1, LegendRow { stroke: None, marker: Some((Shape::Diamond, true)), color, label: "converged (a step's last)".into() });
    }
    legend(&mut svg, f.right() + 18.0, f.top + 10.0, &rows);
    Ok(svg.finish())
}

/// A displacement scale of 1, 2 or 5 × 10^k, close to `raw` and not above it.
fn nice_factor(raw: f64) -> f64 {
    if !raw.is_finite() || raw <= 0.0 {
        return 1.0;
    }
    let mag = 10f64.powf(raw.log10().floor());
    let f = raw / mag;
    let nice = if f >= 5.0 { 5.0 } else if f >= 2.0 { 2.0 } else { 1.0 };
    nice * mag
}

fn factor_text(v: f64) -> String {
    if (1e-3..1e7).contains(&v) {
        let s = format!("{v:.3}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        format!("{v:.0e}")
    }
}

/// Undeformed (grey, dashed) and deformed shape in plan (x–y) and elevation
/// (x–z), displacements magnified so the largest is about a tenth of the
/// model size, members coloured by axial force on a scale fitted to the
/// forces (see [`shape::shape_svg_with`] for the options).
/// `final_displacements` per node in m, `member_forces` in N.
pub fn shape_svg(
    model: &Model,
    final_displacements: &[[f64; 3]],
    member_forces: &[f64],
    member_slack: &[bool],
) -> Result<String, String> {
    let input = ShapeInput { model, displacements: final_displacements, forces: member_forces, slack: member_slack, utilisation: None };
    shape_svg_with(&input, &ShapeOptions::default())
}

/// The largest side of the nodes' bounding box, m (1 when the model has no
/// extent), the length a mode drawing is scaled to.
pub fn model_extent(model: &Model) -> f64 {
    let side = (0..3)
        .map(|a| extent(model.nodes.iter().map(|n| n.at[a])).map_or(0.0, |(lo, hi)| hi - lo))
        .fold(0.0, f64::max);
    if side > 0.0 && side.is_finite() { side } else { 1.0 }
}
