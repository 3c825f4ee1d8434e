//! The whole conversion: file → `Model` table by table (title, units,
//! sections, nodes, members, springs, loads, analysis, form) and the checks
//! of the model as a whole.

use std::collections::HashSet;

use crate::model::file::{LostItems, ModelFile};
use crate::model::{Member, Model, Section};
use super::context::*;
use super::analysis::analysis;
use super::form::form;
use super::loads::toml_loads;
use super::members::{add_member, section, toml_member, unused_sections};
use super::nodes::{add_node, index_labels, model_size, toml_node};
use super::refs::Refs;
use super::springs::springs;
use super::units::units;
use super::{MAX_ITEMS, MAX_MEMBERS, MAX_NODES, MAX_TITLE_BYTES, Tables, tables};

/// Turn the file into a model, reporting every problem into `cx`. The
/// result is only meaningful if no error was reported.
pub(super) fn build(
    cx: &mut Ctx,
    t: &Toml,
    file: &ModelFile,
    lost: &LostItems,
    tables: &Tables,
) -> Model {
    cx.units = units(cx, t, file.units.as_ref());
    let title = file
        .title
        .as_ref()
        .map(|s| s.get_ref().clone())
        .unwrap_or_default();
    if let Some(t_) = &file.title
        && t_.get_ref().len() > MAX_TITLE_BYTES
    {
        cx.error(
            t.at(t_),
            Item::Plain("title"),
            format!("the title is {} bytes long, more than the {MAX_TITLE_BYTES} allowed", t_.get_ref().len()),
            "shorten the title; notes belong in comments",
        );
    }

    let sections: Vec<Section> = file.section.iter().map(|s| section(cx, t, s)).collect();

    let mut nodes = Vec::with_capacity(file.node.len());
    for n in &file.node {
        add_node(cx, toml_node(t, n), &mut nodes);
    }
    // A table whose rows could not be read is reported once; checks that
    // would only repeat it (unknown nodes, free nodes, no members) are skipped.
    let mut nodes_unread = false;
    if let Some(name) = &file.nodes_csv {
        nodes_unread = !match tables::read_csv(cx, t, name, "nodes_csv", tables) {
            Some((idx, text)) => tables::csv_nodes(cx, idx, &text, &mut nodes),
            None => false,
        };
    }
    check_size(cx, nodes.len(), MAX_NODES, "nodes");

    let lost_nodes: HashSet<&str> = lost.nodes.iter().map(String::as_str).collect();
    let lost_sections: HashSet<&str> = lost.sections.iter().map(String::as_str).collect();
    let refs = Refs {
        nodes: &nodes,
        node_map: index_labels(
            cx,
            nodes.iter().map(|n| (n.label.as_str(), n.place)),
            "node",
        ),
        lost_nodes,
        sections: &sections,
        section_map: index_labels(
            cx,
            sections.iter().map(|s| (s.name.as_str(), s.place)),
            "section",
        ),
        lost_sections,
        size: model_size(&nodes),
        nodes_unread,
    };

    let mut attached = vec![false; nodes.len()];
    let mut section_used = vec![false; sections.len()];
    let mut members = Vec::with_capacity(file.member.len());
    // Entries seen, read or not: "no members" must not follow from errors.
    let mut member_entries = file.member.len() + lost.members.len();
    for m in &file.member {
        let raw = toml_member(t, m);
        add_member(
            cx,
            &raw,
            &refs,
            &mut members,
            &mut attached,
            &mut section_used,
        );
    }
    let mut members_unread = false;
    if let Some(name) = &file.members_csv {
        members_unread = true;
        if let Some((idx, text)) = tables::read_csv(cx, t, name, "members_csv", tables) {
            let (rows, read) = tables::csv_members(
                cx,
                idx,
                &text,
                &refs,
                &mut members,
                &mut attached,
                &mut section_used,
            );
            member_entries += rows;
            members_unread = !read;
        }
    }
    check_size(cx, members.len(), MAX_MEMBERS, "members");
    let member_places = members.iter().map(|m: &Member| (m.label.as_str(), m.place));
    index_labels(cx, member_places, "member");

    let springs = springs(cx, t, file, &refs, &mut attached);
    let mut loads = toml_loads(cx, t, file, &refs);
    let mut loads_unread = false;
    if let Some(name) = &file.loads_csv {
        loads_unread = !match tables::read_csv(cx, t, name, "loads_csv", tables) {
            Some((idx, text)) => tables::csv_loads(cx, idx, &text, &refs, &mut loads),
            None => false,
        };
    }
    check_size(cx, loads.len(), MAX_ITEMS, "loads");
    let analysis = analysis(cx, t, file.analysis.as_ref(), &refs, &loads);
    let form = form(cx, t, file.form.as_ref());

    if !lost.structure && !nodes_unread && !members_unread {
        model_checks(cx, &refs, member_entries, &attached);
    }
    if !members_unread {
        unused_sections(cx, &sections, &section_used);
    }
    if loads.is_empty() && !loads_unread && sections.iter().all(|s| s.weight.is_none_or(|w| w == 0.0)) {
        cx.warn(
            Src::default(),
            Item::Model,
            "the model has no loads",
            "add [[load]] tables, a loads_csv table or a section `weight`, or the analysis has nothing to do",
        );
    }
    drop(refs);

    Model {
        title,
        files: Vec::new(),
        units: cx.units,
        nodes,
        sections,
        members,
        springs,
        loads,
        dead_loads: Vec::new(),
        analysis,
        form,
        warnings: Vec::new(),
    }
}

/// Checks of the model as a whole.
pub(super) fn model_checks(cx: &mut Ctx, refs: &Refs, member_entries: usize, attached: &[bool]) {
    let nodes = refs.nodes;
    if nodes.is_empty() {
        cx.error(
            Src::default(),
            Item::Model,
            "the model has no nodes",
            "add [[node]] tables or a nodes_csv table",
        );
    }
    if member_entries == 0 {
        cx.error(
            Src::default(),
            Item::Model,
            "the model has no members",
            "add [[member]] tables or a members_csv table",
        );
    }
    if !nodes.is_empty() && nodes.iter().all(|n| n.fixed == [true; 3]) {
        cx.error(
            Src::default(),
            Item::Model,
            "every node is supported in x, y and z: nothing can move",
            "free some directions with `fix`, e.g. fix = \"z\" or fix = \"\"",
        );
    }
    for (n, _) in nodes.iter().zip(attached).filter(|(_, a)| !**a) {
        let src = Src {
            file: n.place.file,
            line: n.place.line,
            col: 0,
        };
        let item = Item::Named("node", &n.label);
        if n.fixed == [true; 3] {
            cx.warn(
                src,
                item,
                "node is attached to nothing",
                "remove it if it is not needed",
            );
        } else {
            cx.error(
                src,
                item,
                "free node has no member or spring attached, so nothing holds it",
                "connect it with a member or spring, support it with fix = \"xyz\", or remove it",
            );
        }
    }
}
