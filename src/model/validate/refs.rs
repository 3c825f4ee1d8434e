//! References between items: node and section labels resolved to indices,
//! with a suggestion for an unknown one.

use std::collections::HashSet;

use crate::model::{Node, Section};
use super::context::*;
use super::suggest;
use super::nodes::LabelMap;

pub(super) struct Refs<'m> {
    pub(super) nodes: &'m [Node],
    pub(super) node_map: LabelMap<'m>,
    /// Labels of node entries that could not be read (already reported).
    pub(super) lost_nodes: HashSet<&'m str>,
    pub(super) sections: &'m [Section],
    pub(super) section_map: LabelMap<'m>,
    pub(super) lost_sections: HashSet<&'m str>,
    /// Model size, m, for the zero-length test.
    pub(super) size: f64,
    /// The nodes table was named but its rows could not be read (reported):
    /// any node may be missing, so unknown nodes are not reported.
    pub(super) nodes_unread: bool,
}

impl Refs<'_> {
    /// Resolve a node label; unknown labels are reported with a suggestion.
    pub(super) fn node(&self, cx: &mut Ctx, label: &str, src: Src, item: Item, key: &str) -> Option<usize> {
        if let Some(&i) = self.node_map.get(label) {
            return Some(i);
        }
        if !self.nodes_unread && !self.lost_nodes.contains(label) {
            let hint = if cx.full() {
                None
            } else {
                suggest::did_you_mean(label, self.nodes.iter().map(|n| n.label.as_str()))
            };
            let help = hint
                .unwrap_or_else(|| "define the node in a [[node]] table or the nodes table".into());
            cx.error(
                src,
                item,
                format!("unknown node {label:?} in `{key}`"),
                help,
            );
        }
        None
    }

    pub(super) fn section(&self, cx: &mut Ctx, name: &str, src: Src, item: Item, key: &str) -> Option<usize> {
        if let Some(&i) = self.section_map.get(name) {
            return Some(i);
        }
        if !self.lost_sections.contains(name) {
            let hint = suggest::did_you_mean(name, self.sections.iter().map(|s| s.name.as_str()));
            let help = hint.unwrap_or_else(|| {
                if self.sections.is_empty() {
                    "define it in a [[section]] table".to_string()
                } else {
                    format!(
                        "defined sections: {}",
                        suggest::list(self.sections.iter().take(20).map(|s| s.name.as_str()))
                    )
                }
            });
            cx.error(
                src,
                item,
                format!("unknown section {name:?} in `{key}`"),
                help,
            );
        }
        None
    }
}
