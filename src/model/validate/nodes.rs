//! `[[node]]` entries and `nodes_csv` rows (one `RawNode` shape), label
//! indexing with duplicate reports, and the `fix` / `dir` letters.

use std::collections::HashMap;

use toml::Spanned;

use crate::model::file::NodeEntry;
use crate::model::{Axis, Node, Place};
use super::context::*;

/// Label → index.
pub(super) type LabelMap<'a> = HashMap<&'a str, usize>;

pub(super) fn parse_dir(s: &str) -> Option<Axis> {
    let mut chars = s.chars();
    match (chars.next(), chars.next()) {
        (Some(c), None) => Axis::from_letter(c),
        _ => None,
    }
}

pub(super) const DIR_HELP: &str = "a direction is one of the letters x, y, z";
pub(super) const FIX_HELP: &str =
    "`fix` takes any of the letters x, y, z, each at most once; \"\" leaves the node free";

/// `"xz"` → supported directions.
pub(super) fn parse_fix(s: &str) -> Result<[bool; 3], String> {
    let mut fixed = [false; 3];
    for c in s.chars() {
        let Some(a) = Axis::from_letter(c) else {
            return Err(format!("invalid letter {c:?} in `fix` {s:?}"));
        };
        if fixed[a.index()] {
            return Err(format!("letter '{a}' appears twice in `fix` {s:?}"));
        }
        fixed[a.index()] = true;
    }
    Ok(fixed)
}

/// A node as read from either source, before checks.
pub(super) struct RawNode<'a> {
    pub(super) label: &'a str,
    pub(super) place: Src,
    /// Where the id itself was written.
    pub(super) label_src: Src,
    /// `None`: the value was missing or unreadable and is already reported.
    pub(super) at: [Option<f64>; 3],
    pub(super) at_src: [Src; 3],
    pub(super) at_keys: [&'static str; 3],
    pub(super) fix: Option<(&'a str, Src)>,
}

pub(super) fn toml_node<'a>(t: &Toml, n: &'a Spanned<NodeEntry>) -> RawNode<'a> {
    let e = n.get_ref();
    let at_src = t.at(&e.at);
    let at = e.at.get_ref();
    RawNode {
        label: e.id.get_ref(),
        place: t.at(n),
        label_src: t.at(&e.id),
        at: [Some(at[0]), Some(at[1]), Some(at[2])],
        at_src: [at_src; 3],
        at_keys: ["at", "at", "at"],
        fix: e.fix.as_ref().map(|f| (f.get_ref().as_str(), t.at(f))),
    }
}

pub(super) fn add_node(cx: &mut Ctx, raw: RawNode, nodes: &mut Vec<Node>) {
    let item = Item::Named("node", raw.label);
    check_label(cx, raw.label_src, item, "id", raw.label);
    if raw.label.is_empty() {
        cx.error(
            raw.place,
            item,
            "node id is empty",
            "give the node an id, e.g. id = \"A1\"",
        );
    }
    let mut at = [f64::NAN; 3];
    for (a, slot) in at.iter_mut().enumerate() {
        if let Some(v) = raw.at[a]
            && check_number(cx, v, raw.at_src[a], item, raw.at_keys[a], Rule::Finite, "")
        {
            *slot = cx.units.length_in(v);
        }
    }
    let mut fixed = [false; 3];
    if let Some((s, src)) = raw.fix {
        match parse_fix(s) {
            Ok(f) => fixed = f,
            Err(msg) => cx.error(src, item, msg, FIX_HELP),
        }
    }
    nodes.push(Node {
        label: raw.label.to_string(),
        at,
        fixed,
        place: raw.place.place(),
    });
}

/// Map labels to indices, reporting every repeat at the repeat and naming
/// where the label was first used.
pub(super) fn index_labels<'a>(
    cx: &mut Ctx,
    items: impl ExactSizeIterator<Item = (&'a str, Place)>,
    kind: &'static str,
) -> LabelMap<'a> {
    let mut map: LabelMap<'a> = HashMap::with_capacity(items.len());
    let mut firsts: Vec<Place> = Vec::with_capacity(items.len());
    for (i, (label, place)) in items.enumerate() {
        firsts.push(place);
        match map.entry(label) {
            std::collections::hash_map::Entry::Vacant(v) => {
                v.insert(i);
            }
            std::collections::hash_map::Entry::Occupied(o) => {
                let first = firsts[*o.get()];
                let where_first = describe(cx, first);
                let key = if kind == "section" { "name" } else { "id" };
                cx.error(
                    Src {
                        file: place.file,
                        line: place.line,
                        col: 0,
                    },
                    Item::Named(kind, label),
                    format!("duplicate {kind} {key} {label:?}; the first is at {where_first}"),
                    format!("give each {kind} its own {key}"),
                );
            }
        }
    }
    map
}

pub(super) fn describe(cx: &Ctx, p: Place) -> String {
    let file = cx
        .files
        .get(usize::from(p.file))
        .map(String::as_str)
        .unwrap_or("?");
    if p.line > 0 {
        format!("{file}:{}", p.line)
    } else {
        file.to_string()
    }
}

/// Bounding-box diagonal of the finite node positions, m.
pub(super) fn model_size(nodes: &[Node]) -> f64 {
    let mut lo = [f64::INFINITY; 3];
    let mut hi = [f64::NEG_INFINITY; 3];
    for n in nodes.iter().filter(|n| n.at.iter().all(|v| v.is_finite())) {
        for a in 0..3 {
            lo[a] = lo[a].min(n.at[a]);
            hi[a] = hi[a].max(n.at[a]);
        }
    }
    if lo[0] > hi[0] {
        return 0.0;
    }
    (0..3).map(|a| (hi[a] - lo[a]).powi(2)).sum::<f64>().sqrt()
}
