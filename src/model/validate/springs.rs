//! `[[spring]]` entries: a node, a direction and a stiffness.

use crate::model::file::ModelFile;
use crate::model::Spring;
use super::context::*;
use super::nodes::{DIR_HELP, parse_dir};
use super::refs::Refs;
use super::MAX_ITEMS;

pub(super) fn springs(
    cx: &mut Ctx,
    t: &Toml,
    file: &ModelFile,
    refs: &Refs,
    attached: &mut [bool],
) -> Vec<Spring> {
    let mut out = Vec::with_capacity(file.spring.len());
    for (n, s) in file.spring.iter().enumerate() {
        let e = s.get_ref();
        let item = Item::Numbered("spring", n + 1);
        let node = refs.node(cx, e.node.get_ref(), t.at(&e.node), item, "node");
        let axis = parse_dir(e.dir.get_ref());
        if axis.is_none() {
            cx.error(
                t.at(&e.dir),
                item,
                format!("invalid `dir` {:?}", e.dir.get_ref()),
                DIR_HELP,
            );
        }
        let k = *e.k.get_ref();
        let k_ok = check_number(
            cx,
            k,
            t.at(&e.k),
            item,
            "k",
            Rule::Positive,
            "a spring stiffness is a positive force per length",
        );
        if let Some(i) = node {
            attached[i] = true;
        }
        let (Some(node), Some(axis)) = (node, axis) else {
            continue;
        };
        if refs.nodes[node].fixed[axis.index()] {
            cx.warn(
                t.at(s),
                item,
                format!(
                    "spring acts on node {:?} in {axis}, which is supported: it has no effect",
                    refs.nodes[node].label
                ),
                "remove the spring or the support",
            );
        }
        if k_ok {
            out.push(Spring {
                node,
                axis,
                k: cx.units.force_per_length_in(k),
                place: t.at(s).place(),
            });
        }
    }
    check_size(cx, out.len(), MAX_ITEMS, "springs");
    out
}
