//! `[[load]]` entries and `loads_csv` rows (one `RawLoad` shape); load files
//! for `solve --loads` are read in `load_file`.


use crate::model::file::ModelFile;
use crate::model::{Axis, NodalLoad};
use super::context::*;
use super::refs::Refs;

/// A nodal load as read from either source, before checks.
pub(super) struct RawLoad<'a> {
    pub(super) node: (&'a str, Src),
    pub(super) item: Item<'a>,
    pub(super) place: Src,
    /// `None`: the value was missing or unreadable and is already reported.
    pub(super) force: [Option<f64>; 3],
    pub(super) force_src: [Src; 3],
    pub(super) force_keys: [&'static str; 3],
}

/// The `[[load]]` tables; `loads_csv` rows are added after them.
pub(super) fn toml_loads(cx: &mut Ctx, t: &Toml, file: &ModelFile, refs: &Refs) -> Vec<NodalLoad> {
    let mut out = Vec::with_capacity(file.load.len());
    for (n, l) in file.load.iter().enumerate() {
        let e = l.get_ref();
        let f = *e.force.get_ref();
        let raw = RawLoad {
            node: (e.node.get_ref(), t.at(&e.node)),
            item: Item::Numbered("load", n + 1),
            place: t.at(l),
            force: f.map(Some),
            force_src: [t.at(&e.force); 3],
            force_keys: ["force"; 3],
        };
        add_load(cx, &raw, refs, &mut out);
    }
    out
}

pub(super) fn add_load(cx: &mut Ctx, raw: &RawLoad, refs: &Refs, out: &mut Vec<NodalLoad>) {
    let item = raw.item;
    let node = refs.node(cx, raw.node.0, raw.node.1, item, "node");
    // One report per place: the three components of a TOML `force` share it.
    let mut finite = true;
    let mut bad_at = None;
    for a in 0..3 {
        let ok = match raw.force[a] {
            Some(_) if bad_at == Some(raw.force_src[a]) => false,
            Some(v) => check_number(cx, v, raw.force_src[a], item, raw.force_keys[a], Rule::Finite, ""),
            None => false,
        };
        if !ok {
            bad_at = Some(raw.force_src[a]);
        }
        finite &= ok;
    }
    let Some(node) = node else { return };
    let target = &refs.nodes[node];
    for a in Axis::ALL {
        let v = raw.force[a.index()].unwrap_or(0.0);
        if v != 0.0 && target.fixed[a.index()] {
            cx.error(
                raw.force_src[a.index()],
                item,
                format!(
                    "load has a {a} component of {} on node {:?}, whose {a} direction is supported",
                    fmt_num(v),
                    target.label
                ),
                "remove the load or the support; a load on a support goes straight into the ground",
            );
        }
    }
    if finite {
        let u = cx.units;
        out.push(NodalLoad {
            node,
            force: raw.force.map(|v| u.force_in(v.unwrap_or(0.0))),
            place: raw.place.place(),
        });
    }
}
