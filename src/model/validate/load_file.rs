//! Load files for `solve --loads`: `[[load]]` tables and a `loads_csv`
//! table naming a model's nodes, and nothing else.

use std::collections::HashSet;
use std::path::Path;

use crate::model::file::{LineIndex, ModelFile, lower_first};
use crate::model::{Diagnostic, Model, ModelErrors, NodalLoad};
use super::context::*;
use super::nodes::model_size;
use super::refs::Refs;
use super::units::units;
use super::{MAX_ITEMS, MAX_MODEL_BYTES, Tables, tables, utf8_text};
use super::loads::toml_loads;

/// Reads a load file for `model` (`solve --loads FILE`): `[[load]]` tables
/// and/or a `loads_csv` table naming the model's nodes, in the model's units
/// unless the file has a `[units]` table of its own. Anything else in it
/// (nodes, members, `[analysis]`, …) is an error: a load file holds loads
/// only. Every problem is reported with the load file's name and line.
pub fn load_case(model: &Model, path: &Path) -> Result<LoadCase, ModelErrors> {
    let name = path.display().to_string();
    let bytes = std::fs::read(path).map_err(|e| {
        Diagnostic::new(&name, format!("cannot read the load file: {}", lower_first(&e.to_string())))
            .help("check that the path is right and that the file is readable")
    })?;
    if bytes.len() as u64 > MAX_MODEL_BYTES {
        return Err(Diagnostic::new(&name, format!("the load file is larger than {} MiB", MAX_MODEL_BYTES >> 20))
            .help("keep a long load list in a CSV table named by loads_csv")
            .into());
    }
    let text = utf8_text(bytes).map_err(|bad| bad.diagnostic(&name, "load file"))?;
    let toml = Toml { text: &text, index: LineIndex::new(&text) };
    let mut cx = Ctx::new(&name);
    let parsed = ModelFile::parse(&text);
    for p in &parsed.problems {
        let src = p.span.as_ref().map(|s| toml.src(s)).unwrap_or_default();
        let d = cx.diagnostic(src, p.item.clone(), p.message.clone(), p.help.clone());
        cx.push_error(src, d);
    }
    if parsed.syntax_error {
        return Err(cx.into_errors());
    }
    let file = &parsed.file;
    let not_loads: [(&str, Option<Src>); 7] = [
        ("title", file.title.as_ref().map(|x| toml.at(x))),
        ("nodes_csv", file.nodes_csv.as_ref().map(|x| toml.at(x))),
        ("members_csv", file.members_csv.as_ref().map(|x| toml.at(x))),
        ("[[section]]", file.section.first().map(|x| toml.at(x))),
        ("[[node]]", file.node.first().map(|x| toml.at(x))),
        ("[[member]]", file.member.first().map(|x| toml.at(x))),
        ("[analysis]", file.analysis.as_ref().map(|x| toml.at(x))),
    ];
    for (what, at) in not_loads {
        if let Some(src) = at {
            cx.error(
                src,
                Item::Plain("load file"),
                format!("a load file holds loads only, but it has {what}"),
                "keep [[load]] tables (and [units] or loads_csv) here; the structure and its analysis belong in the model file",
            );
        }
    }
    for (what, at) in [
        ("[[spring]]", file.spring.first().map(|x| toml.at(x))),
        ("[form]", file.form.as_ref().map(|x| toml.at(x))),
    ] {
        if let Some(src) = at {
            cx.error(
                src,
                Item::Plain("load file"),
                format!("a load file holds loads only, but it has {what}"),
                "keep [[load]] tables (and [units] or loads_csv) here",
            );
        }
    }
    cx.units = match &file.units {
        Some(entry) => units(&mut cx, &toml, Some(entry)),
        None => model.units,
    };
    let refs = Refs {
        nodes: &model.nodes,
        node_map: model.nodes.iter().enumerate().map(|(i, n)| (n.label.as_str(), i)).collect(),
        lost_nodes: HashSet::new(),
        sections: &model.sections,
        section_map: model.sections.iter().enumerate().map(|(i, s)| (s.name.as_str(), i)).collect(),
        lost_sections: HashSet::new(),
        size: model_size(&model.nodes),
        nodes_unread: false,
    };
    let mut loads = toml_loads(&mut cx, &toml, file, &refs);
    if let Some(csv) = &file.loads_csv {
        let base = path.parent().map(Path::to_path_buf).unwrap_or_default();
        if let Some((idx, text)) = tables::read_csv(&mut cx, &toml, csv, "loads_csv", &Tables::Folder(&base)) {
            tables::csv_loads(&mut cx, idx, &text, &refs, &mut loads);
        }
    }
    check_size(&mut cx, loads.len(), MAX_ITEMS, "loads");
    if loads.is_empty() && cx.errors.is_empty() {
        cx.error(
            Src::default(),
            Item::Plain("load file"),
            "the load file has no loads",
            "add [[load]] tables such as: [[load]] node = \"A2\" force = [0.0, 0.0, -3.0]",
        );
    }
    if cx.errors.is_empty() { Ok(LoadCase { loads, files: std::mem::take(&mut cx.files) }) } else { Err(cx.into_errors()) }
}

/// The loads of a load file, as [`load_case`] read them.
#[derive(Clone, Debug)]
pub struct LoadCase {
    /// SI; each `place.file` indexes `files`.
    pub loads: Vec<NodalLoad>,
    /// The load file, then any CSV table it names.
    pub files: Vec<String>,
}
