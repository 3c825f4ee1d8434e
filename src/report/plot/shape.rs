//! The deformed shape in plan (x–y) and elevation (x–z), members coloured
//! by axial force on a scale that fits the forces (`colour::ColourScale`) or
//! by utilisation (force ÷ capacity, over-capacity members drawn heavy black
//! with a white core, so they are seen in black and white too).
//!
//! Up to `raster_above` members each member is an SVG line (class `member
//! …`); above it both panels are drawn into a pixel canvas and embedded as
//! one PNG each (`raster::Canvas`), so the file size is bounded by the
//! pixel count whatever the member count. Catenary members with weight are
//! drawn with their sag (the elastic catenary profile of Irvine 1981, ch. 1,
//! at the drawn state).

use super::colour::{hex, ColourScale, COMPRESSION_RGB, TENSION_RGB};
use super::raster::Canvas;
use super::svg::{Anchor, Stroke, Svg, INK, MUTED};
use super::{axes, extent, factor_text, legend, nice_factor, no_data, ticks, title, Frame, LegendRow, Scale};
use crate::model::{MemberKind, Model};
use crate::results::sag::catenary_sag;
use crate::report::numbers::sig4;

/// Size of the shape plot (two panels side by side), px.
pub const SHAPE_W: f64 = 1100.0;
pub const SHAPE_H: f64 = 560.0;
const MARGIN_L: f64 = 84.0;
const MARGIN_T: f64 = 62.0;
const MARGIN_B: f64 = 74.0;
/// Largest drawn displacement as a share of the model size.
const DISPLACEMENT_SHARE: f64 = 0.10;
/// Stroke patterns of the deformed members (black-and-white reading).
const COMPRESSION_DASH: &str = "10 3";
const SLACK_DASH: &str = "1.5 3";
const UNDEFORMED_GREY: [u8; 3] = [200, 200, 200];
const SLACK_GREY: [u8; 3] = [150, 150, 150];
/// Colour levels of a rasterised drawing (one stroke pass each).
const RASTER_LEVELS: f64 = 48.0;

/// Above this many members the panels are drawn as raster images: at about
/// 530 bytes of SVG per member (two panels, undeformed and deformed) 5 000
/// members make a 2.7 MB vector drawing, still quick to open; the raster
/// panels are under 1 MB at any member count.
pub const RASTER_ABOVE_MEMBERS: usize = 5000;

/// What the members are coloured by.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ColourBy {
    Force,
    /// Force ÷ capacity (members without a capacity drawn grey).
    Utilisation,
}

/// The state to draw, SI units.
pub struct ShapeInput<'a> {
    pub model: &'a Model,
    /// Displacement per node, m.
    pub displacements: &'a [[f64; 3]],
    /// Axial force per member, N.
    pub forces: &'a [f64],
    pub slack: &'a [bool],
    /// Utilisation per member (None: no capacity); needed for `ColourBy::Utilisation`.
    pub utilisation: Option<&'a [Option<f64>]>,
}

#[derive(Clone, Debug)]
pub struct ShapeOptions {
    pub colour_by: ColourBy,
    /// Raster panels above this many members.
    pub raster_above: usize,
    /// The found shape of form finding: no undeformed layer and no
    /// displacement scale.
    pub form: bool,
    /// A line under the title: the load case and step drawn.
    pub subtitle: Option<String>,
}

impl Default for ShapeOptions {
    fn default() -> Self {
        ShapeOptions { colour_by: ColourBy::Force, raster_above: RASTER_ABOVE_MEMBERS, form: false, subtitle: None }
    }
}

/// How one member is drawn.
#[derive(Clone, Copy, PartialEq)]
enum Look {
    Tension,
    Compression,
    Slack,
    Over,
    NoCapacity,
    Utilised,
}

impl Look {
    fn class(self) -> &'static str {
        match self {
            Look::Tension => "member tension",
            Look::Compression => "member compression",
            Look::Slack => "member slack",
            Look::Over => "member over",
            Look::NoCapacity => "member no-capacity",
            Look::Utilised => "member utilised",
        }
    }
}

/// The deformed shape. Errors when the inputs do not match the model.
pub fn shape_svg_with(input: &ShapeInput, opts: &ShapeOptions) -> Result<String, String> {
    let model = input.model;
    let heading = if model.title.trim().is_empty() { "deformed shape" } else { model.title.as_str() };
    if model.nodes.is_empty() {
        return Ok(no_data(SHAPE_W, SHAPE_H, heading, "the model has no nodes"));
    }
    let (disp, forces, slack) = (input.displacements, input.forces, input.slack);
    if disp.len() != model.nodes.len() {
        return Err(format!("{} displacements given for {} nodes", disp.len(), model.nodes.len()));
    }
    if forces.len() != model.members.len() || slack.len() != model.members.len() {
        return Err(format!("{} forces and {} slack flags given for {} members", forces.len(), slack.len(), model.members.len()));
    }
    if let Some(u) = input.utilisation.filter(|u| u.len() != model.members.len()) {
        return Err(format!("{} utilisations given for {} members", u.len(), model.members.len()));
    }
    if let Some((i, _)) = disp.iter().enumerate().find(|(_, d)| d.iter().any(|v| !v.is_finite())) {
        return Err(format!("the displacement of node {} is not finite", model.nodes[i].label));
    }
    if let Some(m) = model.members.iter().find(|m| m.ends.iter().any(|e| *e >= model.nodes.len())) {
        return Err(format!("member {} refers to a node that does not exist", m.label));
    }
    if model.nodes.iter().any(|n| n.at.iter().any(|v| !v.is_finite())) {
        return Err("a node position is not finite".into());
    }
    let units = model.units;
    let len = |v: f64| units.length_out(v);
    let force_unit = units.force.name();

    // Model size and the magnification.
    let size = (0..3)
        .filter_map(|a| extent(model.nodes.iter().map(|n| n.at[a])).map(|(lo, hi)| hi - lo))
        .fold(0.0f64, f64::max);
    let size = if size > 0.0 { size } else { 1.0 };
    let dmax = disp.iter().map(|d| (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt()).fold(0.0f64, f64::max);
    let factor = if dmax > 0.0 { nice_factor(DISPLACEMENT_SHARE * size / dmax) } else { 1.0 };
    let actual: Vec<[f64; 3]> =
        model.nodes.iter().zip(disp).map(|(n, d)| [n.at[0] + d[0], n.at[1] + d[1], n.at[2] + d[2]]).collect();
    let drawn: Vec<[f64; 3]> =
        model.nodes.iter().zip(disp).map(|(n, d)| [0, 1, 2].map(|a| n.at[a] + factor * d[a])).collect();

    // Colours and looks.
    let forces_out: Vec<f64> = forces.iter().map(|f| units.force_out(*f)).collect();
    let utilisation = match (opts.colour_by, input.utilisation) {
        (ColourBy::Utilisation, Some(u)) => Some(u),
        (ColourBy::Utilisation, None) => return Err("colouring by utilisation needs the members' utilisations".into()),
        _ => None,
    };
    let scale = match utilisation {
        Some(_) => {
            // From 0 to the largest utilisation, or to 1 when some member
            // is over capacity (those are drawn black, off the scale).
            let top = utilisation.map_or(1.0, |u| u.iter().flatten().copied().filter(|v| v.is_finite()).fold(0.0, f64::max));
            let top = if top > 0.0 { top.min(1.0) } else { 1.0 };
            let mut s = ColourScale::fit([0.0, top], TENSION_RGB, TENSION_RGB, "utilisation, force ÷ capacity [–]".into());
            s.hi_note = if top >= 1.0 { "(at capacity)".into() } else { "(largest)".into() };
            s
        }
        None => {
            // Slack cables carry nothing and are drawn apart: they do not
            // stretch the scale down to zero.
            let live = forces_out.iter().zip(slack).filter(|(_, s)| !**s).map(|(f, _)| *f);
            let mut s = ColourScale::fit(live, TENSION_RGB, COMPRESSION_RGB, format!("axial force [{force_unit}]"));
            let (lo, hi) = s.range();
            s.hi_note = if hi > 0.0 { "tension".into() } else { "compression".into() };
            s.lo_note = if lo < 0.0 { "compression".into() } else { "tension".into() };
            s
        }
    };
    let n_members = model.members.len();
    let looks: Vec<Look> = (0..n_members)
        .map(|k| match utilisation {
            Some(u) => match u[k] {
                _ if slack[k] => Look::Slack,
                Some(x) if x > 1.0 => Look::Over,
                Some(_) => Look::Utilised,
                None => Look::NoCapacity,
            },
            None if slack[k] => Look::Slack,
            None if forces_out[k] < 0.0 => Look::Compression,
            None => Look::Tension,
        })
        .collect();
    let value = |k: usize| match utilisation {
        Some(u) => u[k].unwrap_or(0.0),
        None => forces_out[k],
    };
    let (lo, hi) = scale.range();
    let strength = |k: usize| {
        let v = value(k);
        if !v.is_finite() { 0.0 } else if v >= 0.0 { if hi > 0.0 { (v / hi).min(1.0) } else { 0.0 } } else if lo < 0.0 { (v / lo).min(1.0) } else { 0.0 }
    };
    let raster = n_members > opts.raster_above;

    let mut svg = Svg::new(SHAPE_W, SHAPE_H);
    title(&mut svg, heading, "deformed shape");
    let mut line2 = if opts.form {
        "the found shape, members shaded by their found force".to_string()
    } else if dmax > 0.0 {
        format!("displacements ×{} (largest {} {})", factor_text(factor), sig4(len(dmax)), units.length.name())
    } else {
        "displacements ×1 (all displacements are zero)".to_string()
    };
    if let Some(s) = &opts.subtitle {
        line2 = format!("{s}; {line2}");
    }
    svg.text(SHAPE_W / 2.0, 46.0, &line2, 12.0, Anchor::Middle, "scale");

    const LEGEND_W: f64 = 210.0;
    const GAP: f64 = 84.0;
    let panel_w = (SHAPE_W - MARGIN_L - LEGEND_W - GAP - 30.0) / 2.0;
    let panels = [(0usize, 1usize, "plan (x–y)"), (0usize, 2usize, "elevation (x–z)")];
    // Sag offsets of the catenaries, at the actual state.
    let sags: Vec<Option<Vec<(f64, f64)>>> = model
        .members
        .iter()
        .enumerate()
        .map(|(k, m)| if m.kind == MemberKind::Catenary { catenary_sag(model, k, actual[m.ends[0]], actual[m.ends[1]]) } else { None })
        .collect();
    let n_sagging = sags.iter().filter(|s| s.is_some()).count();
    for (p, (ax, ay, name)) in panels.iter().enumerate() {
        let f = Frame {
            left: MARGIN_L + p as f64 * (panel_w + GAP),
            top: MARGIN_T + 18.0,
            width: panel_w,
            height: SHAPE_H - MARGIN_T - 18.0 - MARGIN_B,
        };
        let pts: Vec<[f64; 3]> = model.nodes.iter().map(|n| n.at).chain(drawn.iter().copied()).collect();
        let (x0, x1) = extent(pts.iter().map(|q| len(q[*ax]))).unwrap_or((0.0, 1.0));
        let (y0, y1) = extent(pts.iter().map(|q| len(q[*ay]))).unwrap_or((0.0, 1.0));
        // Equal scales on both axes, with a little room.
        let span = (x1 - x0).max(y1 - y0);
        let span = if span > 0.0 { span * 1.1 } else { len(size) * 1.1 };
        let ppu = (f.width / span).min(f.height / span);
        let (cx, cy) = ((x0 + x1) / 2.0, (y0 + y1) / 2.0);
        let hx = f.width / ppu / 2.0;
        let hy = f.height / ppu / 2.0;
        let (_, _, xt) = ticks(cx - hx, cx + hx, 5.0);
        let (_, _, yt) = ticks(cy - hy, cy + hy, 5.0);
        let xt: Vec<f64> = xt.into_iter().filter(|t| *t >= cx - hx && *t <= cx + hx).collect();
        let yt: Vec<f64> = yt.into_iter().filter(|t| *t >= cy - hy && *t <= cy + hy).collect();
        let x = Scale::new(cx - hx, cx + hx, f.left, f.right());
        let y = Scale::new(cy - hy, cy + hy, f.bottom(), f.top);
        let axis = |a: usize| ['x', 'y', 'z'][a];
        svg.text(f.left + f.width / 2.0, f.top - 8.0, name, 13.0, Anchor::Middle, "panel-title");
        axes(&mut svg, f, &x, &xt, &y, &yt, &format!("{} [{}]", axis(*ax), units.length.name()), &format!("{} [{}]", axis(*ay), units.length.name()));
        let at = |q: [f64; 3]| (x.at(len(q[*ax])), y.at(len(q[*ay])));
        // The drawn polyline of member k on `nodes` (with its sag).
        let member_points = |k: usize, nodes: &[[f64; 3]]| -> Vec<(f64, f64)> {
            let [i, j] = model.members[k].ends;
            let (a, b) = (nodes[i], nodes[j]);
            match &sags[k] {
                Some(offsets) => offsets
                    .iter()
                    .map(|(phi, dz)| at([a[0] + phi * (b[0] - a[0]), a[1] + phi * (b[1] - a[1]), a[2] + phi * (b[2] - a[2]) + dz]))
                    .collect(),
                None => vec![at(a), at(b)],
            }
        };
        let undeformed: Vec<[f64; 3]> = model.nodes.iter().map(|n| n.at).collect();
        if raster {
            let Some(mut canvas) = Canvas::new(f.width, f.height) else { return Err("the shape plot has no area".into()) };
            let local = |pts: Vec<(f64, f64)>| -> Vec<[f64; 4]> {
                pts.windows(2).map(|w| [w[0].0 - f.left, w[0].1 - f.top, w[1].0 - f.left, w[1].1 - f.top]).collect()
            };
            // Thin lines for a dense drawing: about half a bay wide.
            let width = (0.5 * f.width / (n_members as f64).sqrt()).clamp(0.35, 1.6);
            if !opts.form {
                let segs: Vec<[f64; 4]> = (0..n_members).flat_map(|k| local(member_points(k, &undeformed))).collect();
                canvas.lines(&segs, UNDEFORMED_GREY, width);
            }
            // One stroke pass per colour level, the weakest first so the
            // strongest members stay on top; slack first, over-capacity last.
            let level_value = |l: i64| lo + (hi - lo) * l as f64 / RASTER_LEVELS;
            let mut levels: std::collections::BTreeMap<(u8, i64), Vec<[f64; 4]>> = Default::default();
            for (k, look) in looks.iter().enumerate() {
                let key = match look {
                    Look::Slack | Look::NoCapacity => (0, 0),
                    Look::Over => (2, 0),
                    _ => {
                        let v = value(k);
                        let l = if hi > lo && v.is_finite() { ((v - lo) / (hi - lo) * RASTER_LEVELS).round() as i64 } else { RASTER_LEVELS as i64 };
                        (1, l.clamp(0, RASTER_LEVELS as i64))
                    }
                };
                levels.entry(key).or_default().extend(local(member_points(k, &drawn)));
            }
            // Pale levels (near zero force) under dark ones.
            let weight = |v: f64| if v >= 0.0 { if hi > 0.0 { v / hi } else { 0.0 } } else if lo < 0.0 { v / lo } else { 0.0 };
            let mut keys: Vec<(u8, i64)> = levels.keys().copied().collect();
            keys.sort_by(|a, b| a.0.cmp(&b.0).then(weight(level_value(a.1)).total_cmp(&weight(level_value(b.1)))));
            for key in keys {
                let segs = &levels[&key];
                match key.0 {
                    0 => canvas.lines(segs, SLACK_GREY, width),
                    2 => canvas.lines(segs, [0, 0, 0], (2.5 * width).max(1.2)),
                    _ => canvas.lines(segs, scale.rgb(level_value(key.1)), width),
                }
            }
            svg.image(f.left, f.top, f.width, f.height, &canvas.data_uri()?, "raster");
            super::frame_box(&mut svg, f);
        } else {
            if !opts.form {
                svg.open_group("undeformed");
                for k in 0..n_members {
                    let pts = member_points(k, &undeformed);
                    let st = Stroke::dashed(MUTED, 0.8, "4 3");
                    if pts.len() == 2 {
                        svg.line(pts[0].0, pts[0].1, pts[1].0, pts[1].1, st, "undeformed");
                    } else {
                        svg.polyline(&pts, st, "undeformed catenary");
                    }
                }
                svg.close_group();
            }
            svg.open_group("deformed");
            for k in 0..n_members {
                let look = looks[k];
                let t = strength(k);
                let colour = match look {
                    Look::Slack | Look::NoCapacity => MUTED.to_string(),
                    Look::Over => "#000000".to_string(),
                    _ => scale.hex(value(k)),
                };
                let (width, dash) = match look {
                    Look::Slack => (1.6, Some(SLACK_DASH)),
                    Look::NoCapacity => (1.2, Some("4 2")),
                    Look::Over => (4.0, None),
                    Look::Compression => (1.6 + 1.8 * t, Some(COMPRESSION_DASH)),
                    _ => (1.6 + 1.8 * t, None),
                };
                let pts = member_points(k, &drawn);
                let st = Stroke { color: &colour, width, dash };
                let class = if sags[k].is_some() { format!("{} catenary", look.class()) } else { look.class().to_string() };
                if pts.len() == 2 {
                    svg.line(pts[0].0, pts[0].1, pts[1].0, pts[1].1, st, &class);
                } else {
                    svg.polyline(&pts, st, &class);
                }
                if look == Look::Over {
                    // A white core: a cased line, told apart from a dark
                    // colour in black-and-white print.
                    let core = Stroke::solid("#ffffff", 1.2);
                    if pts.len() == 2 {
                        svg.line(pts[0].0, pts[0].1, pts[1].0, pts[1].1, core, "over-core");
                    } else {
                        svg.polyline(&pts, core, "over-core");
                    }
                }
            }
            svg.close_group();
        }
    }

    // Legend: the colour bar, then the line-style key of what is present.
    let lx = SHAPE_W - LEGEND_W - 10.0;
    let mut ly = scale.legend(&mut svg, lx, MARGIN_T + 30.0, 170.0, if utilisation.is_some() { "" } else { force_unit }) + 20.0;
    let mut rows: Vec<LegendRow> = Vec::new();
    let dark_t = hex(super::colour::ColourScale::fit([1.0], TENSION_RGB, COMPRESSION_RGB, String::new()).rgb(1.0));
    let dark_c = hex(super::colour::ColourScale::fit([-1.0], TENSION_RGB, COMPRESSION_RGB, String::new()).rgb(-1.0));
    let has = |l: Look| looks.contains(&l);
    if !opts.form {
        rows.push(LegendRow { stroke: Some(Stroke::dashed(MUTED, 0.8, "4 3")), marker: None, color: MUTED, label: "undeformed".into() });
    }
    if utilisation.is_some() {
        rows.push(LegendRow { stroke: Some(Stroke::solid(&dark_t, 2.6)), marker: None, color: INK, label: "utilisation ≤ 1".into() });
        if has(Look::Over) {
            rows.push(LegendRow { stroke: Some(Stroke::solid("#000000", 4.0)), marker: None, color: INK, label: "over capacity (heavy, white core)".into() });
        }
        if has(Look::NoCapacity) {
            rows.push(LegendRow { stroke: Some(Stroke::dashed(MUTED, 1.2, "4 2")), marker: None, color: INK, label: "no capacity given".into() });
        }
    } else {
        if has(Look::Tension) {
            rows.push(LegendRow { stroke: Some(Stroke::solid(&dark_t, 2.6)), marker: None, color: INK, label: "tension (solid)".into() });
        }
        if has(Look::Compression) {
            rows.push(LegendRow { stroke: Some(Stroke::dashed(&dark_c, 2.6, COMPRESSION_DASH)), marker: None, color: INK, label: "compression (dashed)".into() });
        }
    }
    if has(Look::Slack) {
        rows.push(LegendRow { stroke: Some(Stroke::dashed(MUTED, 1.6, SLACK_DASH)), marker: None, color: INK, label: "slack cable (dotted)".into() });
    }
    if !rows.is_empty() {
        legend(&mut svg, lx + 6.0, ly, &rows);
        ly += 18.0 * rows.len() as f64 + 16.0;
    }
    let mut notes = Vec::new();
    if n_sagging > 0 {
        notes.push(format!("{n_sagging} catenar{} drawn with sag", if n_sagging == 1 { "y" } else { "ies" }));
    }
    if raster {
        notes.push(format!("{n_members} members drawn as"));
        notes.push("a raster image (line styles".into());
        notes.push(format!("not shown above {} members)", opts.raster_above));
    }
    if utilisation.is_some() {
        let over = looks.iter().filter(|l| **l == Look::Over).count();
        notes.insert(0, format!("{over} member{} over capacity", if over == 1 { "" } else { "s" }));
    }
    for (i, n) in notes.iter().enumerate() {
        svg.text(lx, ly + 14.0 * i as f64, n, 11.0, Anchor::Start, "legend-note");
    }
    Ok(svg.finish())
}
