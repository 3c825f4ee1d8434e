//! The figures of a `solve` run, drawn from the traced path: the load path,
//! the deformed shape at the last converged state (coloured by utilisation
//! where every member has a capacity, else by force), the shape at steps
//! asked for (`--shape-at`), plan maps of the vertical displacement at the
//! last state and at each critical state kept, the critical modes' vertical
//! parts, the requested mode drawing and the convergence history. Each
//! figure's caption names the load case and the step.

use super::plot::{self, fieldmap, ColourBy, ShapeInput, ShapeOptions};
use crate::model::Model;
use crate::report::numbers::sig4;
use crate::results::{CriticalState, Fields, MemberOut, Results};

/// Plan maps drawn at most for the critical states (and again for their
/// modes); the rest are in `critical_fields.csv` and `critical_modes.csv`.
pub(crate) const MAX_CRITICAL_MAPS: usize = 6;

/// Bytes of vector shape drawings a report may hold (the shapes past it
/// are drawn as raster panels), so several shapes of a model just under the
/// raster threshold keep `report.html` well under 10 MB.
pub const VECTOR_BUDGET: usize = 6_000_000;
/// SVG bytes per member of a vector shape drawing (two panels, undeformed
/// and deformed; measured: 555 on a 40 × 40 net).
pub const VECTOR_BYTES_PER_MEMBER: usize = 560;

/// A shape drawn besides the last state's.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ShapeAt {
    /// A converged step whose field was kept (`keep_fields`).
    Step(usize),
    /// A critical point, 1-based in `critical_points` order.
    Critical(usize),
}

impl ShapeAt {
    /// Reads `12` (a step) or `critical:2` (a critical point).
    pub fn parse(s: &str) -> Result<ShapeAt, String> {
        let s = s.trim();
        if let Some(k) = s.strip_prefix("critical:") {
            return match k.trim().parse::<usize>() {
                Ok(k) if k >= 1 => Ok(ShapeAt::Critical(k)),
                _ => Err(format!("{s:?}: write critical:N with N the critical point's number, from 1")),
            };
        }
        s.parse::<usize>().map(ShapeAt::Step).map_err(|_| format!("{s:?}: write a step number (e.g. 12) or critical:N (e.g. critical:1)"))
    }
}

#[derive(Clone, Debug)]
pub struct FigureOptions {
    /// Raster shape panels above this many members.
    pub raster_above: usize,
    /// None: by utilisation where every member has a capacity, else by force.
    pub colour_by: Option<ColourBy>,
    pub shape_at: Vec<ShapeAt>,
    /// Critical point (1-based) whose first mode `mode.svg` draws.
    pub plot_mode: Option<usize>,
}

impl Default for FigureOptions {
    fn default() -> Self {
        FigureOptions { raster_above: plot::RASTER_ABOVE_MEMBERS, colour_by: None, shape_at: Vec::new(), plot_mode: None }
    }
}

/// One figure: the file it is also written to (None: report only), its
/// caption, and its SVG or why it could not be drawn.
pub(crate) struct Plot {
    pub file: Option<String>,
    pub caption: String,
    pub svg: Result<String, String>,
}

/// "dead load + 1.000 × reference load" at load factor `lambda`.
pub(crate) fn load_case(fields: &Fields, lambda: f64) -> String {
    format!("{}{} × reference load", if fields.has_dead_load() { "dead load + " } else { "" }, sig4(lambda))
}

fn node_values(model: &Model, fields: &Fields, u: &[f64], axis: usize) -> Vec<f64> {
    (0..model.n_nodes()).map(|n| fields.displacement(u, n, axis)).collect()
}

/// The colouring in force: by utilisation only when asked, or by default
/// when every member has a capacity.
pub(crate) fn resolved_colour(members: &[MemberOut], asked: Option<ColourBy>) -> ColourBy {
    asked.unwrap_or(if !members.is_empty() && members.iter().all(|m| m.utilisation.is_some()) {
        ColourBy::Utilisation
    } else {
        ColourBy::Force
    })
}

/// Whether the model spreads in plan (both x and y): plan maps are drawn
/// only then.
fn has_plan(model: &Model) -> bool {
    let spread = |a: usize| {
        let (lo, hi) = model.nodes.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), n| (l.min(n.at[a]), h.max(n.at[a])));
        hi > lo
    };
    model.n_nodes() >= 4 && spread(0) && spread(1)
}

/// Every figure of a run, in report order, and warnings for what was asked
/// and cannot be drawn.
pub(crate) fn solve_plots(
    m: &Model,
    fields: &Fields,
    res: &Results,
    members: &[MemberOut],
    opts: &FigureOptions,
) -> (Vec<Plot>, Vec<String>) {
    let mut plots = Vec::new();
    let mut warnings = Vec::new();
    let len_unit = m.units.length.name();
    let end = fields.end();
    let (last_step, last_lambda) = (end.step, end.lambda);
    let kept: Vec<_> = fields.kept().collect();
    let critical: Vec<CriticalState> = fields.critical().collect();
    let colour_by = resolved_colour(members, opts.colour_by);
    if colour_by == ColourBy::Utilisation && members.iter().all(|x| x.utilisation.is_none()) {
        warnings.push("colouring by utilisation: no member has a capacity (tension_capacity, compression_capacity); coloured by force".into());
    }
    let colour_by = if members.iter().all(|x| x.utilisation.is_none()) { ColourBy::Force } else { colour_by };

    let vector_bytes = std::cell::Cell::new(0usize);
    // The shape at a state u (free DOFs), with its member forces.
    let shape_of = |drawn: &[f64], u: &[f64], colour: ColourBy, subtitle: String| -> Result<String, String> {
        let disp: Vec<[f64; 3]> = (0..m.n_nodes()).map(|n| std::array::from_fn(|a| fields.displacement(drawn, n, a))).collect();
        let st = fields.members_at(u);
        let forces: Vec<f64> = st.iter().map(|r| r.force).collect();
        let slack: Vec<bool> = st.iter().map(|r| r.slack).collect();
        // Utilisation of this state (the members' capacities over its forces).
        let util: Vec<Option<f64>> = st.iter().map(|r| r.utilisation).collect();
        let input = ShapeInput { model: m, displacements: &disp, forces: &forces, slack: &slack, utilisation: Some(&util) };
        // Vector shapes share a budget: one that would take the report's
        // vector drawings past it is drawn as raster panels instead.
        let vector = m.n_members() <= opts.raster_above && vector_bytes.get() + VECTOR_BYTES_PER_MEMBER * m.n_members() <= VECTOR_BUDGET;
        let options = ShapeOptions { colour_by: colour, raster_above: if vector { opts.raster_above } else { 0 }, form: false, subtitle: Some(subtitle) };
        let svg = plot::shape_svg_with(&input, &options);
        if let Ok(text) = &svg {
            vector_bytes.set(vector_bytes.get() + if vector { text.len() } else { 0 });
        }
        svg
    };
    let shape_at = |u: &[f64], colour: ColourBy, subtitle: String| shape_of(u, u, colour, subtitle);

    plots.push(Plot {
        file: Some("path.svg".into()),
        caption: format!(
            "Load path: load factor λ against the watched displacements (load case: {}){}{}",
            load_case(fields, 1.0).replace("1.000 × ", "λ × "),
            if res.critical_points.is_empty() { "" } else { "; numbered rings are the critical points of the table below" },
            if res.slack_events.is_empty() { "" } else { "; triangles mark the steps at which cables went slack" }
        ),
        svg: plot::path_svg(res),
    });
    let by = if colour_by == ColourBy::Utilisation { "utilisation (force ÷ capacity; over capacity heavy black)" } else { "axial force" };
    let case = load_case(fields, last_lambda);
    plots.push(Plot {
        file: Some("shape.svg".into()),
        caption: format!("Deformed shape at step {last_step}, the last converged state ({case}), members coloured by {by}"),
        svg: shape_at(end.u, colour_by, format!("step {last_step}, {case}")),
    });
    if colour_by == ColourBy::Utilisation {
        plots.push(Plot {
            file: Some("forces.svg".into()),
            caption: format!("Deformed shape at step {last_step} ({case}), members coloured by axial force"),
            svg: shape_at(end.u, ColourBy::Force, format!("step {last_step}, {case}")),
        });
    }
    for at in &opts.shape_at {
        match *at {
            ShapeAt::Step(s) => match kept.iter().find(|f| f.step == s) {
                Some(fl) => {
                    let case = load_case(fields, fl.lambda);
                    plots.push(Plot {
                        file: Some(format!("shape_step{s}.svg")),
                        caption: format!("Deformed shape at step {s} ({case}), members coloured by {by}"),
                        svg: shape_at(fl.u, colour_by, format!("step {s}, {case}")),
                    });
                }
                None => warnings.push(format!(
                    "shape_step{s}.svg not drawn: the field of step {s} was not kept (kept: {}); add --keep-fields {s} (or all)",
                    if kept.is_empty() { "none".to_string() } else { kept.iter().map(|f| f.step.to_string()).collect::<Vec<_>>().join(", ") }
                )),
            },
            ShapeAt::Critical(k) => match critical.get(k - 1).and_then(|c| c.field.map(|u| (c, u))) {
                Some((c, u)) => {
                    let case = load_case(fields, c.lambda);
                    let kind = c.kind_name();
                    plots.push(Plot {
                        file: Some(format!("shape_critical{k}.svg")),
                        caption: format!("Deformed shape at critical point {k} ({kind}, {case}), members coloured by {by}"),
                        svg: shape_at(u, colour_by, format!("critical point {k} ({kind}), {case}")),
                    });
                }
                None => warnings.push(format!(
                    "shape_critical{k}.svg not drawn: the run kept the state of {} critical point(s) (keep_fields \"all\" or \"ends\" keeps them), not of number {k}",
                    critical.iter().filter(|c| c.field.is_some()).count()
                )),
            },
        }
    }
    if has_plan(m) {
        let map = |values: Vec<f64>, subtitle: String, quantity: &str, unit: &str| {
            fieldmap::plan_map_svg(&fieldmap::MapInput { model: m, values: &values, subtitle, quantity: quantity.into(), unit: unit.into() })
        };
        let uz: Vec<f64> = node_values(m, fields, end.u, 2).into_iter().map(|v| m.units.length_out(v)).collect();
        plots.push(Plot {
            file: Some("displacement.svg".into()),
            caption: format!("Vertical displacement uz in plan at step {last_step}, the last converged state ({case})"),
            svg: map(uz, format!("vertical displacement at step {last_step}, {case}"), "uz, upward positive", len_unit),
        });
        let kept: Vec<(usize, &CriticalState)> = critical.iter().enumerate().filter(|(_, c)| c.field.is_some()).collect();
        for (i, c) in kept.iter().take(MAX_CRITICAL_MAPS) {
            let u = c.field.unwrap_or(&[]);
            let kind = c.kind_name();
            let case = load_case(fields, c.lambda);
            let uz: Vec<f64> = node_values(m, fields, u, 2).into_iter().map(|v| m.units.length_out(v)).collect();
            plots.push(Plot {
                file: None,
                caption: format!("Vertical displacement uz in plan at critical point {} ({kind}, {case}, first step past it: {})", i + 1, c.step),
                svg: map(uz, format!("critical point {} ({kind}), {case}", i + 1), "uz, upward positive", len_unit),
            });
        }
        if let Some(p) = plots.last_mut().filter(|_| kept.len() > MAX_CRITICAL_MAPS) {
            p.caption.push_str(&format!(
                "; maps are drawn for the first {MAX_CRITICAL_MAPS} of {} critical states, all are in {}",
                kept.len(),
                crate::results::CRITICAL_FIELDS_FILE
            ));
        }
        let with_modes: Vec<(usize, &CriticalState)> = critical.iter().enumerate().filter(|(_, c)| !c.modes.is_empty()).collect();
        for (i, c) in with_modes.iter().take(MAX_CRITICAL_MAPS) {
            let kind = c.kind_name();
            let phi = node_values(m, fields, &c.modes[0], 2);
            plots.push(Plot {
                file: None,
                caption: format!(
                    "Critical mode {} of {} at critical point {} ({kind}, load factor {}): its vertical part in plan (a unit-norm shape, sign arbitrary)",
                    1,
                    c.modes.len(),
                    i + 1,
                    sig4(c.lambda)
                ),
                svg: map(phi, format!("first mode of critical point {} ({kind}), vertical part", i + 1), "mode, z part", ""),
            });
        }
    }
    if let Some(k) = opts.plot_mode {
        match critical.get(k - 1).filter(|c| !c.modes.is_empty()) {
            Some(c) => {
                // The mode (unit norm, a shape) drawn on the structure at the
                // critical state, scaled so its largest node movement is a
                // tenth of the structure's largest extent.
                let at = c.field.unwrap_or(end.u);
                let phi = &c.modes[0];
                let span = plot::model_extent(m);
                let big = (0..m.n_nodes())
                    .map(|n| (0..3).map(|a| fields.displacement(phi, n, a).powi(2)).sum::<f64>().sqrt())
                    .fold(0.0, f64::max);
                let scale = if big > 0.0 { 0.1 * span / big } else { 0.0 };
                let shown: Vec<f64> = at.iter().zip(phi).map(|(u, p)| u + scale * p).collect();
                let kind = c.kind_name();
                plots.push(Plot {
                    file: Some("mode.svg".into()),
                    caption: format!("Critical point {k} ({kind} at load factor {:.6}): its first mode, largest movement drawn at a tenth of the structure's extent", c.lambda),
                    svg: shape_of(&shown, at, ColourBy::Force, format!("critical point {k} ({kind}) plus its first mode")),
                });
            }
            None => warnings.push(format!("mode.svg not drawn: the run found {} critical point(s) with modes, not {k}", critical.len())),
        }
    }
    plots.push(Plot {
        file: Some("convergence.svg".into()),
        caption: format!("Convergence: relative residual of every iteration of every step (load case: {})", load_case(fields, 1.0).replace("1.000 × ", "λ × ")),
        svg: plot::convergence_svg(res),
    });
    (plots, warnings)
}
