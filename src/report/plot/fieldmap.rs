//! Plan maps of a nodal quantity (the vertical displacement of a step, the
//! vertical part of a critical mode) on a grid of cells over the plan, each
//! cell the inverse-distance-weighted mean of the nodes near it, drawn in a
//! few colour bands at round values: a filled-contour reading that prints
//! in grey. The number of cells is fixed (`CELLS` along the longer side), so
//! a map's size does not grow with the model; equal cells in a row are
//! merged into one rectangle.

use super::colour::{ColourScale, DOWN_RGB, UP_RGB};
use super::svg::{Anchor, Shape, Svg, INK};
use super::{axes, extent, frame_box, no_data, ticks, title, Frame, Scale};
use crate::model::Model;
use crate::report::numbers::sig4;

pub const MAP_W: f64 = 900.0;
pub const MAP_H: f64 = 560.0;
/// Cells along the longer plan side (the map's size does not grow with the model).
pub const CELLS: usize = 72;
/// About this many colour bands on a map (at round values).
pub const BANDS: usize = 8;

/// One map: a value per node (in the units named by `unit`).
pub struct MapInput<'a> {
    pub model: &'a Model,
    pub values: &'a [f64],
    /// Second title line: what is mapped, the load case and the step.
    pub subtitle: String,
    /// Legend heading without the unit, e.g. "vertical displacement uz".
    pub quantity: String,
    /// Unit of the values ("" for a shape).
    pub unit: String,
}

/// The plan map. Errors when the values do not match the nodes.
pub fn plan_map_svg(input: &MapInput) -> Result<String, String> {
    let model = input.model;
    let heading = if model.title.trim().is_empty() { "plan map" } else { model.title.as_str() };
    if input.values.len() != model.nodes.len() {
        return Err(format!("{} values given for {} nodes", input.values.len(), model.nodes.len()));
    }
    let len = |v: f64| model.units.length_out(v);
    let (Some((x0, x1)), Some((y0, y1))) =
        (extent(model.nodes.iter().map(|n| len(n.at[0]))), extent(model.nodes.iter().map(|n| len(n.at[1]))))
    else {
        return Ok(no_data(MAP_W, MAP_H, heading, "no finite node positions"));
    };
    if !(x1 > x0 && y1 > y0) {
        return Ok(no_data(MAP_W, MAP_H, heading, "the model has no extent in plan"));
    }
    if !input.values.iter().any(|v| v.is_finite()) {
        return Ok(no_data(MAP_W, MAP_H, heading, "no finite values"));
    }
    // Grid: CELLS cells along the longer side. A cell takes the
    // inverse-distance-weighted mean (weights 1/d², Shepard 1968) of the
    // nodes within 1.5 node spacings of its centre, the spacing being that
    // of an even spread of the nodes over the plan; a cell with no node
    // that near is left blank (outside the structure).
    let (nx, ny) = if x1 - x0 >= y1 - y0 {
        (CELLS, ((CELLS as f64) * (y1 - y0) / (x1 - x0)).round().max(1.0) as usize)
    } else {
        (((CELLS as f64) * (x1 - x0) / (y1 - y0)).round().max(1.0) as usize, CELLS)
    };
    let spacing = ((x1 - x0) * (y1 - y0) / model.nodes.len() as f64).sqrt();
    let radius = 1.5 * spacing.max((x1 - x0).max(y1 - y0) / CELLS as f64);
    // Nodes in buckets of the search radius.
    let (bx, by) = (((x1 - x0) / radius).ceil().max(1.0) as usize, ((y1 - y0) / radius).ceil().max(1.0) as usize);
    let bucket_of = |x: f64, y: f64| {
        let i = (((x - x0) / radius).floor().max(0.0) as usize).min(bx - 1);
        let j = (((y - y0) / radius).floor().max(0.0) as usize).min(by - 1);
        (i, j)
    };
    let mut buckets: Vec<Vec<usize>> = vec![Vec::new(); bx * by];
    for (k, (n, v)) in model.nodes.iter().zip(input.values).enumerate() {
        if v.is_finite() && n.at[0].is_finite() && n.at[1].is_finite() {
            let (i, j) = bucket_of(len(n.at[0]), len(n.at[1]));
            buckets[j * bx + i].push(k);
        }
    }
    let (cw_m, ch_m) = ((x1 - x0) / nx as f64, (y1 - y0) / ny as f64);
    let mut value: Vec<Option<f64>> = vec![None; nx * ny];
    for j in 0..ny {
        for i in 0..nx {
            let (cx, cy) = (x0 + (i as f64 + 0.5) * cw_m, y0 + (j as f64 + 0.5) * ch_m);
            let (bi, bj) = bucket_of(cx, cy);
            let (mut wsum, mut vsum) = (0.0, 0.0);
            let mut exact = None;
            for b in bj.saturating_sub(1)..(bj + 2).min(by) {
                for a in bi.saturating_sub(1)..(bi + 2).min(bx) {
                    for &k in &buckets[b * bx + a] {
                        let n = &model.nodes[k];
                        let d2 = (len(n.at[0]) - cx).powi(2) + (len(n.at[1]) - cy).powi(2);
                        if d2 > radius * radius {
                            continue;
                        }
                        if d2 < 1e-24 * radius * radius {
                            exact = Some(input.values[k]);
                        }
                        wsum += 1.0 / d2.max(1e-24 * radius * radius);
                        vsum += input.values[k] / d2.max(1e-24 * radius * radius);
                    }
                }
            }
            value[j * nx + i] = exact.or((wsum > 0.0).then(|| vsum / wsum));
        }
    }
    let unit_part = if input.unit.is_empty() { String::new() } else { format!(" [{}]", input.unit) };
    let scale = ColourScale::fit(input.values.iter().copied(), UP_RGB, DOWN_RGB, format!("{}{unit_part}", input.quantity)).banded(BANDS);

    let mut svg = Svg::new(MAP_W, MAP_H);
    title(&mut svg, heading, "plan map");
    svg.text(MAP_W / 2.0, 46.0, &input.subtitle, 12.0, Anchor::Middle, "caption");
    let avail = Frame { left: 84.0, top: 80.0, width: MAP_W - 84.0 - 300.0, height: MAP_H - 80.0 - 74.0 };
    // Equal scales on both axes.
    let ppu = (avail.width / (x1 - x0)).min(avail.height / (y1 - y0));
    let f = Frame { left: avail.left, top: avail.top, width: ppu * (x1 - x0), height: ppu * (y1 - y0) };
    let x = Scale::new(x0, x1, f.left, f.right());
    let y = Scale::new(y0, y1, f.bottom(), f.top);
    let (_, _, xt) = ticks(x0, x1, 5.0);
    let (_, _, yt) = ticks(y0, y1, 5.0);
    let xt: Vec<f64> = xt.into_iter().filter(|t| (x0..=x1).contains(t)).collect();
    let yt: Vec<f64> = yt.into_iter().filter(|t| (y0..=y1).contains(t)).collect();
    let lu = model.units.length.name();
    axes(&mut svg, f, &x, &xt, &y, &yt, &format!("x [{lu}]"), &format!("y [{lu}]"));
    let (cw, ch) = (f.width / nx as f64, f.height / ny as f64);
    svg.open_crisp_group("map");
    for j in 0..ny {
        let mut i = 0;
        while i < nx {
            let Some(v) = value[j * nx + i] else {
                i += 1;
                continue;
            };
            let band = scale.band(v);
            let start = i;
            while i < nx && value[j * nx + i].is_some_and(|w| scale.band(w) == band) {
                i += 1;
            }
            // A hair of overlap hides the seams between cells.
            let top = f.bottom() - (j + 1) as f64 * ch;
            svg.rect(f.left + start as f64 * cw, top, (i - start) as f64 * cw + 0.4, ch + 0.4, &scale.hex(v), None, "cell");
        }
    }
    svg.close_group();
    frame_box(&mut svg, f);
    // The largest magnitude, ringed and named.
    if let Some((k, v)) = input.values.iter().enumerate().filter(|(_, v)| v.is_finite()).max_by(|a, b| a.1.abs().total_cmp(&b.1.abs())) {
        let n = &model.nodes[k];
        let (px, py) = (x.at(len(n.at[0])), y.at(len(n.at[1])));
        svg.marker(Shape::Circle, px, py, 7.0, INK, false, "extreme");
        let unit = if input.unit.is_empty() { String::new() } else { format!(" {}", input.unit) };
        svg.text_halo(px + 10.0, py - 8.0, &format!("{}{unit} at node {}", sig4(*v), n.label), 11.0, Anchor::Start, "extreme-label");
    }
    let lx = MAP_W - 280.0;
    let below = scale.legend(&mut svg, lx, 90.0, 240.0, &input.unit);
    svg.text(lx, below + 10.0, &format!("{nx} × {ny} cells, each a distance-weighted"), 11.0, Anchor::Start, "legend-note");
    svg.text(lx, below + 24.0, "mean of the nodes near it", 11.0, Anchor::Start, "legend-note");
    svg.text(lx, below + 38.0, "ring: largest magnitude", 11.0, Anchor::Start, "legend-note");
    Ok(svg.finish())
}
