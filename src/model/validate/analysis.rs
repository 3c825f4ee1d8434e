//! The `[analysis]` table: method and control, counts, path options,
//! corrector settings, target and limits, the controlled and watched points,
//! and branch switching.

use toml::Spanned;

use crate::model::file::{AnalysisEntry, KeepFieldsEntry};
use crate::model::{Analysis, Axis, Control, KeepFields, Method, NodalLoad, Node, NodeDir, SelfWeight, StrainMeasure, Units};
use super::context::*;
use super::nodes::{DIR_HELP, parse_dir};
use super::refs::Refs;
use super::{MAX_CUTBACKS, MAX_ITERATIONS, MAX_LINE_SEARCH, MAX_REFACTOR_AFTER, MAX_STEPS, suggest};

pub(super) fn choice<T>(
    cx: &mut Ctx,
    t: &Toml,
    v: &Option<Spanned<String>>,
    key: &str,
    names: &[&str],
    parse: impl Fn(&str) -> Option<T>,
) -> Option<T> {
    let v = v.as_ref()?;
    let parsed = parse(v.get_ref());
    if parsed.is_none() {
        cx.error(
            t.at(v),
            Item::Plain("[analysis]"),
            format!("unknown {key} {:?}", v.get_ref()),
            suggest::choice_help(v.get_ref(), names),
        );
    }
    parsed
}

/// `keep_fields`: a policy name, or step numbers from 0 to [`MAX_STEPS`].
pub(super) fn keep_fields(cx: &mut Ctx, t: &Toml, v: &Spanned<KeepFieldsEntry>) -> Option<KeepFields> {
    match v.get_ref() {
        KeepFieldsEntry::Name(name) => {
            let parsed = KeepFields::parse(name);
            if parsed.is_none() {
                cx.error(
                    t.at(v),
                    Item::Plain("[analysis]"),
                    format!("unknown keep_fields {name:?}"),
                    format!(
                        "{}, or an array of step numbers such as [0, 5, 10]",
                        suggest::choice_help(name, &KeepFields::NAMES)
                    ),
                );
            }
            parsed
        }
        KeepFieldsEntry::Steps(list) => {
            let help = "write step numbers, 0 being the initial state, e.g. keep_fields = [0, 5, 10]";
            let steps: Vec<Option<usize>> =
                list.iter().map(|s| check_count(cx, t, s, "keep_fields", 0, MAX_STEPS, help)).collect();
            steps.into_iter().collect::<Option<Vec<usize>>>().map(KeepFields::steps)
        }
    }
}

/// The names `strain` takes, in the order they are listed in messages.
pub(super) const STRAIN_NAMES: [&str; 2] = ["green", "engineering"];

/// `strain = "green"` / `"engineering"`.
pub(super) fn parse_strain(s: &str) -> Option<StrainMeasure> {
    match s {
        "green" => Some(StrainMeasure::Green),
        "engineering" => Some(StrainMeasure::Engineering),
        _ => None,
    }
}

/// `tolerance`: a relative residual above 0 and at most 0.1 (also what
/// `--tolerance` is held to).
pub(super) fn tolerance_in_range(x: f64) -> bool {
    x > 0.0 && x <= 0.1
}

/// `target` in SI: a length under displacement control, else a load factor.
pub(super) fn target_in(control: Control, units: Units, x: f64) -> f64 {
    if control == Control::Displacement { units.length_in(x) } else { x }
}

/// The `[analysis]` table, read in the order its keys are checked (each
/// step below is one group of keys).
pub(super) fn analysis(
    cx: &mut Ctx,
    t: &Toml,
    entry: Option<&Spanned<AnalysisEntry>>,
    refs: &Refs,
    loads: &[NodalLoad],
) -> Analysis {
    let mut a = Analysis::default();
    let empty = AnalysisEntry::default();
    let (e, header) = match entry {
        Some(s) => (s.get_ref(), t.at(s)),
        None => (&empty, Src::default()),
    };
    modes(cx, t, e, &mut a);
    counts(cx, t, e, &mut a);
    path_options(cx, t, e, &mut a);
    corrector(cx, t, e, &mut a);
    // After the control mode: `target` is a length under displacement
    // control, and `arc` is only used by arc-length control.
    targets(cx, t, e, &mut a);
    points(cx, t, e, header, refs, loads, &mut a);
    a.branch = branch_settings(cx, t, e, &a);
    a
}

/// `strain`, `method` and `control`.
fn modes(cx: &mut Ctx, t: &Toml, e: &AnalysisEntry, a: &mut Analysis) {
    a.strain = choice(cx, t, &e.strain, "strain measure", &STRAIN_NAMES, parse_strain).unwrap_or(a.strain);
    a.method = choice(cx, t, &e.method, "method", &Method::NAMES, Method::parse).unwrap_or(a.method);
    a.control = choice(cx, t, &e.control, "control", &Control::NAMES, Control::parse).unwrap_or(a.control);
}

/// `steps`, `max_steps`, `max_iterations` and `max_cutbacks`.
fn counts(cx: &mut Ctx, t: &Toml, e: &AnalysisEntry, a: &mut Analysis) {
    let count_help = "write a whole number of at least 1";
    if let Some(v) = &e.steps {
        a.steps = check_count(cx, t, v, "steps", 1, MAX_STEPS, count_help).unwrap_or(a.steps);
    }
    if let Some(v) = &e.max_steps {
        a.max_steps = check_count(cx, t, v, "max_steps", 1, MAX_STEPS, count_help).unwrap_or(a.max_steps);
    }
    if let Some(v) = &e.max_iterations {
        a.max_iterations =
            check_count(cx, t, v, "max_iterations", 1, MAX_ITERATIONS, count_help).unwrap_or(a.max_iterations);
    }
    if let Some(v) = &e.max_cutbacks {
        a.max_cutbacks =
            check_count(cx, t, v, "max_cutbacks", 0, MAX_CUTBACKS, "write a whole number, 0 for no step halving")
                .unwrap_or(a.max_cutbacks);
    }
}

/// How the path is followed: `start_load_factor`, `pinpoint`,
/// `stability_check`, `self_weight`, `load_predictor`, `keep_fields` and
/// `arc_variant`.
fn path_options(cx: &mut Ctx, t: &Toml, e: &AnalysisEntry, a: &mut Analysis) {
    let item = Item::Plain("[analysis]");
    if let Some(v) = &e.start_load_factor {
        let x = *v.get_ref();
        if check_number(cx, x, t.at(v), item, "start_load_factor", Rule::Finite, "") {
            a.start_load_factor = x;
        }
    }
    if let Some(v) = &e.pinpoint {
        a.pinpoint = *v.get_ref();
    }
    let checks = ["every-step", "on-refactor"];
    if let Some(each) = choice(cx, t, &e.stability_check, "stability_check", &checks, |s| match s {
        "every-step" => Some(true),
        "on-refactor" => Some(false),
        _ => None,
    }) {
        a.stability_each_step = each;
    }
    if let Some(sw) = choice(cx, t, &e.self_weight, "self_weight", &SelfWeight::NAMES, |s| {
        SelfWeight::NAMES.iter().position(|n| *n == s).map(|i| [SelfWeight::Dead, SelfWeight::Reference, SelfWeight::None][i])
    }) {
        a.self_weight = sw;
    }
    let predictors = ["secant", "none"];
    if let Some(on) = choice(cx, t, &e.load_predictor, "load_predictor", &predictors, |s| match s {
        "secant" => Some(true),
        "none" => Some(false),
        _ => None,
    }) {
        a.load_predictor = on;
    }
    if let Some(k) = e.keep_fields.as_ref().and_then(|v| keep_fields(cx, t, v)) {
        a.keep_fields = k;
    }
    let variants = ["cylindrical", "normal-plane"];
    if let Some(normal) = choice(cx, t, &e.arc_variant, "arc_variant", &variants, |s| match s {
        "cylindrical" => Some(false),
        "normal-plane" => Some(true),
        _ => None,
    }) {
        a.arc_variant_normal_plane = normal;
    }
}

/// The corrector: `refactor_after`, `refactor_each_step`, `line_search`,
/// `stall_ratio`, `energy_tolerance` and `displacement_tolerance`.
fn corrector(cx: &mut Ctx, t: &Toml, e: &AnalysisEntry, a: &mut Analysis) {
    let item = Item::Plain("[analysis]");
    if let Some(v) = &e.refactor_after {
        a.refactor_after = check_count(cx, t, v, "refactor_after", 1, MAX_REFACTOR_AFTER, "write the number of quasi-Newton updates kept before refactoring, at least 1")
            .unwrap_or(a.refactor_after);
    }
    if let Some(v) = &e.refactor_each_step {
        a.refactor_each_step = *v.get_ref();
    }
    if let Some(v) = &e.line_search {
        a.line_search = check_count(cx, t, v, "line_search", 0, MAX_LINE_SEARCH, "write the number of line-search trials, 0 to switch it off");
    }
    if let Some(v) = &e.stall_ratio {
        let x = *v.get_ref();
        if check_number(cx, x, t.at(v), item, "stall_ratio", Rule::Positive, "a ratio between 0 and 1, e.g. 0.9") {
            if x > 1.0 {
                cx.error(t.at(v), item, format!("`stall_ratio` must be at most 1, found {}", fmt_num(x)), "a ratio between 0 and 1, e.g. 0.9");
            } else {
                a.stall_ratio = x;
            }
        }
    }
    if let Some(v) = &e.energy_tolerance {
        let x = *v.get_ref();
        if check_number(cx, x, t.at(v), item, "energy_tolerance", Rule::Positive, "a small positive ratio, e.g. 1e-12") {
            a.energy_tolerance = Some(x);
        }
    }
    if let Some(v) = &e.displacement_tolerance {
        let x = *v.get_ref();
        if check_number(cx, x, t.at(v), item, "displacement_tolerance", Rule::Positive, "a small positive ratio, e.g. 1e-6") {
            a.displacement_tolerance = Some(x);
        }
    }
}

/// Where the path goes and how far: `target`, `max_displacement`, `arc` and
/// `tolerance`.
fn targets(cx: &mut Ctx, t: &Toml, e: &AnalysisEntry, a: &mut Analysis) {
    let item = Item::Plain("[analysis]");
    let u = cx.units;
    if let Some(v) = &e.target {
        let x = *v.get_ref();
        if check_number(cx, x, t.at(v), item, "target", Rule::Finite, "") {
            a.target = target_in(a.control, u, x);
            if x == 0.0 {
                cx.warn(
                    t.at(v),
                    item,
                    "`target` is 0: the analysis will not move",
                    "set the load factor or displacement to reach",
                );
            }
        }
    }
    if let Some(v) = &e.max_displacement {
        let x = *v.get_ref();
        if check_number(cx, x, t.at(v), item, "max_displacement", Rule::Positive, "the displacement limit is a positive length") {
            a.max_displacement = Some(u.length_in(x));
        }
    }
    if let Some(v) = &e.arc {
        let x = *v.get_ref();
        if check_number(cx, x, t.at(v), item, "arc", Rule::Positive, "the first arc length is a positive length") {
            a.arc = Some(u.length_in(x));
        }
        if a.control != Control::ArcLength {
            cx.warn(
                t.at(v),
                item,
                "`arc` is only used by arc-length control",
                "remove it, or set control = \"arc-length\"",
            );
        }
    }
    if let Some(v) = &e.tolerance {
        let x = *v.get_ref();
        if check_number(cx, x, t.at(v), item, "tolerance", Rule::Finite, "") {
            if tolerance_in_range(x) {
                a.tolerance = x;
            } else {
                cx.error(
                    t.at(v),
                    item,
                    format!("`tolerance` must be above 0 and at most 0.1, found {}", fmt_num(x)),
                    "it is a relative residual; 1e-9 is a common choice",
                );
            }
        }
    }
}

/// The controlled point (`node`, `dir`) and the watched ones (`watch`;
/// by default the controlled point, else the largest free load component).
fn points(cx: &mut Ctx, t: &Toml, e: &AnalysisEntry, header: Src, refs: &Refs, loads: &[NodalLoad], a: &mut Analysis) {
    let item = Item::Plain("[analysis]");
    let point = control_point(cx, t, e, refs);
    a.watch = watch_list(cx, t, e, refs);
    if let (Control::Displacement, None) = (a.control, point) {
        // Only complain if node/dir were not simply misspelt (already reported).
        if e.node.is_none() && e.dir.is_none() {
            let src = e.control.as_ref().map(|c| t.at(c)).unwrap_or(header);
            cx.error(
                src,
                item,
                "displacement control needs `node` and `dir`",
                "name the displacement to control, e.g. node = \"A2\" and dir = \"z\"",
            );
        }
    }
    if let (Control::Displacement, Some(p)) = (a.control, point)
        && refs.nodes[p.node].fixed[p.axis.index()]
    {
        cx.error(
            e.node.as_ref().map(|n| t.at(n)).unwrap_or(header),
            item,
            format!(
                "cannot control node {:?} in {}: that direction is supported",
                refs.nodes[p.node].label, p.axis
            ),
            "control a free direction, or remove the support",
        );
    }
    if a.watch.is_empty() {
        a.watch = match point {
            Some(p) => vec![p],
            None => largest_load(refs.nodes, loads).into_iter().collect(),
        };
    }
    a.point_given = point.is_some();
    a.point = point.or_else(|| a.watch.first().copied());
}

/// `switch_at`, `switch_mode` and `imperfection` (see `path::branch`). The
/// upper bound of `switch_mode` depends on the point met, so it is checked at
/// run time; here only what the file alone can get wrong.
pub(super) fn branch_settings(cx: &mut Ctx, t: &Toml, e: &AnalysisEntry, a: &Analysis) -> crate::model::BranchSettings {
    let mut b = crate::model::BranchSettings::default();
    let item = Item::Plain("[analysis]");
    if let Some(v) = &e.switch_at {
        b.switch_at = check_count(cx, t, v, "switch_at", 1, MAX_STEPS, "write N to leave the path at its Nth bifurcation, counting from 1");
        if b.switch_at.is_some() && !a.pinpoint {
            cx.error(
                t.at(v),
                item,
                "`switch_at` needs the bifurcation pinpointed, but `pinpoint = false`",
                "remove `pinpoint = false`, or remove `switch_at`",
            );
        }
    }
    if let Some(v) = &e.switch_mode {
        b.switch_mode = check_count(cx, t, v, "switch_mode", 1, MAX_STEPS, "write K to leave along the Kth mode of a multiple bifurcation, counting from 1");
        b.switch_mode_line = Some(t.at(v).line);
        if e.switch_at.is_none() {
            cx.error(
                t.at(v),
                item,
                "`switch_mode` is given without `switch_at`",
                "add `switch_at = N` (the bifurcation to leave the path at), or remove `switch_mode`",
            );
        }
    }
    if let Some(v) = &e.imperfection {
        let entry = v.get_ref();
        let mode = check_count(cx, t, &entry.mode, "imperfection.mode", 1, MAX_STEPS, "write N to seed the mode of the perfect path's Nth critical point, counting from 1");
        let x = *entry.amplitude.get_ref();
        let amplitude_ok = if x == 0.0 || !x.is_finite() {
            cx.error(
                t.at(&entry.amplitude),
                item,
                format!("`imperfection.amplitude` must be a finite, non-zero length, found {x}"),
                "write the largest nodal offset of the seeded mode in model length units, e.g. amplitude = 0.01 (a negative value flips the shape)",
            );
            false
        } else {
            true
        };
        if let (Some(mode), true) = (mode, amplitude_ok) {
            b.imperfection = Some(crate::model::Imperfection { mode, amplitude: cx.units.length_in(x) });
        }
        if !a.pinpoint {
            cx.error(
                t.at(v),
                item,
                "`imperfection` takes its mode from a pinpointed critical point, but `pinpoint = false`",
                "remove `pinpoint = false`, or remove `imperfection`",
            );
        }
    }
    b
}

/// `node` and `dir` of `[analysis]`: both or neither.
pub(super) fn control_point(cx: &mut Ctx, t: &Toml, e: &AnalysisEntry, refs: &Refs) -> Option<NodeDir> {
    let item = Item::Plain("[analysis]");
    let node = e
        .node
        .as_ref()
        .and_then(|n| refs.node(cx, n.get_ref(), t.at(n), item, "node"));
    let axis = e.dir.as_ref().and_then(|d| {
        let axis = parse_dir(d.get_ref());
        if axis.is_none() {
            cx.error(
                t.at(d),
                item,
                format!("invalid `dir` {:?}", d.get_ref()),
                DIR_HELP,
            );
        }
        axis
    });
    match (&e.node, &e.dir) {
        (Some(n), None) => cx.error(
            t.at(n),
            item,
            "`node` is given without `dir`",
            "add e.g. dir = \"z\", or remove `node`",
        ),
        (None, Some(d)) => cx.error(
            t.at(d),
            item,
            "`dir` is given without `node`",
            "add e.g. node = \"A2\", or remove `dir`",
        ),
        _ => {}
    }
    Some(NodeDir {
        node: node?,
        axis: axis?,
    })
}

/// `watch = ["A2.z", …]`.
pub(super) fn watch_list(cx: &mut Ctx, t: &Toml, e: &AnalysisEntry, refs: &Refs) -> Vec<NodeDir> {
    let item = Item::Plain("[analysis]");
    let Some(list) = &e.watch else {
        return Vec::new();
    };
    let mut out = Vec::with_capacity(list.get_ref().len());
    for w in list.get_ref() {
        let text = w.get_ref();
        let parts = text
            .rsplit_once('.')
            .and_then(|(n, d)| Some((n, parse_dir(d)?)));
        let Some((label, axis)) = parts.filter(|(n, _)| !n.is_empty()) else {
            cx.error(
                t.at(w),
                item,
                format!("watch entry {text:?} is not of the form NODE.DIR"),
                "write entries like \"A2.z\": a node id, a dot and one of x, y, z",
            );
            continue;
        };
        if let Some(node) = refs.node(cx, label, t.at(w), item, "watch") {
            out.push(NodeDir { node, axis });
        }
    }
    out
}

/// The free direction with the largest reference load component; the first
/// in file order wins ties.
pub(super) fn largest_load(nodes: &[Node], loads: &[NodalLoad]) -> Option<NodeDir> {
    let mut best: Option<(f64, NodeDir)> = None;
    for l in loads {
        for axis in Axis::ALL {
            let v = l.force[axis.index()].abs();
            if v > 0.0 && !nodes[l.node].fixed[axis.index()] && best.is_none_or(|(b, _)| v > b) {
                best = Some((v, NodeDir { node: l.node, axis }));
            }
        }
    }
    best.map(|(_, p)| p)
}
