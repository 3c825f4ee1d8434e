//! The model file as the user wrote it: a serde mirror of the TOML format that
//! keeps labels as strings and remembers where values were written.
//!
//! [`ModelFile`] can be read in one go with `toml::from_str`, but that stops at
//! the first problem. [`ModelFile::parse`] instead reads each table and each
//! `[[...]]` entry on its own, so one bad node does not hide a bad member
//! further down; it also catches unknown keys itself to suggest the key that
//! was probably meant.

use serde::Deserialize;
use serde::de::DeserializeOwned;
use std::ops::Range;
use toml::Spanned;
use toml::de::{DeTable, DeValue, ValueDeserializer};

use super::validate::suggest;

/// Byte range in the TOML text.
pub type Span = Range<usize>;

/// The whole model file.
#[derive(Clone, Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ModelFile {
    pub title: Option<Spanned<String>>,
    pub units: Option<Spanned<UnitsEntry>>,
    pub nodes_csv: Option<Spanned<String>>,
    pub members_csv: Option<Spanned<String>>,
    pub loads_csv: Option<Spanned<String>>,
    #[serde(default)]
    pub section: Vec<Spanned<SectionEntry>>,
    #[serde(default)]
    pub node: Vec<Spanned<NodeEntry>>,
    #[serde(default)]
    pub member: Vec<Spanned<MemberEntry>>,
    #[serde(default)]
    pub spring: Vec<Spanned<SpringEntry>>,
    #[serde(default)]
    pub load: Vec<Spanned<LoadEntry>>,
    pub analysis: Option<Spanned<AnalysisEntry>>,
    pub form: Option<Spanned<FormEntry>>,
}

#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct UnitsEntry {
    pub force: Option<Spanned<String>>,
    pub length: Option<Spanned<String>>,
}

#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SectionEntry {
    #[serde(deserialize_with = "id")]
    pub name: Spanned<String>,
    #[serde(rename = "EA")]
    pub ea: Spanned<f64>,
    pub weight: Option<Spanned<f64>>,
    pub tension_capacity: Option<Spanned<f64>>,
    pub compression_capacity: Option<Spanned<f64>>,
}

#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct NodeEntry {
    #[serde(deserialize_with = "id")]
    pub id: Spanned<String>,
    pub at: Spanned<[f64; 3]>,
    pub fix: Option<Spanned<String>>,
}

#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MemberEntry {
    #[serde(deserialize_with = "id")]
    pub id: Spanned<String>,
    pub kind: Spanned<String>,
    #[serde(deserialize_with = "ends")]
    pub ends: Spanned<[Spanned<String>; 2]>,
    #[serde(deserialize_with = "id")]
    pub section: Spanned<String>,
    pub prestress: Option<Spanned<f64>>,
    pub rest_length: Option<Spanned<f64>>,
    pub force_density: Option<Spanned<f64>>,
    pub target_force: Option<Spanned<f64>>,
    pub target_length: Option<Spanned<f64>>,
}

#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SpringEntry {
    #[serde(deserialize_with = "id")]
    pub node: Spanned<String>,
    pub dir: Spanned<String>,
    pub k: Spanned<f64>,
}

#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LoadEntry {
    #[serde(deserialize_with = "id")]
    pub node: Spanned<String>,
    pub force: Spanned<[f64; 3]>,
}

/// An id of a node, member or section as written: a string, or a TOML
/// integer standing for the string of its decimal digits (`id = 16745` is the
/// node `"16745"`), as tables exported from spreadsheets and scripts often
/// have. A float or a boolean is refused with a message that says how ids
/// are written. Every reference to an id (member `ends` and `section`, load,
/// spring and `[analysis]` `node`) reads the same way, so `ends = [2, 185]`
/// names the nodes `id = 2` and `id = "185"` alike.
struct Id(String);

impl<'de> Deserialize<'de> for Id {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct Visit;
        impl serde::de::Visitor<'_> for Visit {
            type Value = Id;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("an id: a string such as \"A1\" or a whole number such as 17")
            }
            fn visit_str<E: serde::de::Error>(self, v: &str) -> Result<Id, E> {
                Ok(Id(v.to_string()))
            }
            fn visit_string<E: serde::de::Error>(self, v: String) -> Result<Id, E> {
                Ok(Id(v))
            }
            fn visit_i64<E: serde::de::Error>(self, v: i64) -> Result<Id, E> {
                Ok(Id(v.to_string()))
            }
            fn visit_u64<E: serde::de::Error>(self, v: u64) -> Result<Id, E> {
                Ok(Id(v.to_string()))
            }
        }
        d.deserialize_any(Visit)
    }
}

fn id<'de, D: serde::Deserializer<'de>>(d: D) -> Result<Spanned<String>, D::Error> {
    let s = Spanned::<Id>::deserialize(d)?;
    Ok(Spanned::new(s.span(), s.into_inner().0))
}

fn optional_id<'de, D: serde::Deserializer<'de>>(d: D) -> Result<Option<Spanned<String>>, D::Error> {
    id(d).map(Some)
}

fn ends<'de, D: serde::Deserializer<'de>>(d: D) -> Result<Spanned<[Spanned<String>; 2]>, D::Error> {
    let s = Spanned::<[Spanned<Id>; 2]>::deserialize(d)?;
    let span = s.span();
    let pair = s.into_inner().map(|e| Spanned::new(e.span(), e.into_inner().0));
    Ok(Spanned::new(span, pair))
}

/// Counts are read as signed integers so that `steps = 0` or `-1` gets a
/// clear "must be at least 1" instead of a type error.
#[derive(Clone, Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AnalysisEntry {
    pub strain: Option<Spanned<String>>,
    pub method: Option<Spanned<String>>,
    pub control: Option<Spanned<String>>,
    pub steps: Option<Spanned<i64>>,
    pub target: Option<Spanned<f64>>,
    pub max_displacement: Option<Spanned<f64>>,
    #[serde(default, deserialize_with = "optional_id")]
    pub node: Option<Spanned<String>>,
    pub dir: Option<Spanned<String>>,
    pub arc: Option<Spanned<f64>>,
    pub max_steps: Option<Spanned<i64>>,
    pub tolerance: Option<Spanned<f64>>,
    pub max_iterations: Option<Spanned<i64>>,
    pub max_cutbacks: Option<Spanned<i64>>,
    pub watch: Option<Spanned<Vec<Spanned<String>>>>,
    pub refactor_after: Option<Spanned<i64>>,
    pub refactor_each_step: Option<Spanned<bool>>,
    pub stall_ratio: Option<Spanned<f64>>,
    pub line_search: Option<Spanned<i64>>,
    pub displacement_tolerance: Option<Spanned<f64>>,
    pub energy_tolerance: Option<Spanned<f64>>,
    pub arc_variant: Option<Spanned<String>>,
    pub stability_check: Option<Spanned<String>>,
    pub pinpoint: Option<Spanned<bool>>,
    pub start_load_factor: Option<Spanned<f64>>,
    pub self_weight: Option<Spanned<String>>,
    pub load_predictor: Option<Spanned<String>>,
    pub keep_fields: Option<Spanned<KeepFieldsEntry>>,
    // Branch switching and imperfection seeding (path::branch).
    pub switch_at: Option<Spanned<i64>>,
    pub switch_mode: Option<Spanned<i64>>,
    pub imperfection: Option<Spanned<ImperfectionEntry>>,
}

/// `imperfection = { mode = N, amplitude = a }`; the mode number is read as
/// a signed integer so that `0` or `-1` gets a clear message.
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ImperfectionEntry {
    pub mode: Spanned<i64>,
    pub amplitude: Spanned<f64>,
}

/// `keep_fields`: a policy name or an array of step numbers, as written.
#[derive(Clone, Debug)]
pub enum KeepFieldsEntry {
    Name(String),
    /// Read as signed integers so that `-1` gets a clear message.
    Steps(Vec<Spanned<i64>>),
}

impl<'de> Deserialize<'de> for KeepFieldsEntry {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct Visit;
        impl<'de> serde::de::Visitor<'de> for Visit {
            type Value = KeepFieldsEntry;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("\"auto\", \"all\", \"ends\", \"none\" or an array of step numbers")
            }
            fn visit_str<E: serde::de::Error>(self, v: &str) -> Result<Self::Value, E> {
                Ok(KeepFieldsEntry::Name(v.to_string()))
            }
            fn visit_seq<A: serde::de::SeqAccess<'de>>(self, mut seq: A) -> Result<Self::Value, A::Error> {
                let mut steps = Vec::new();
                while let Some(s) = seq.next_element::<Spanned<i64>>()? {
                    steps.push(s);
                }
                Ok(KeepFieldsEntry::Steps(steps))
            }
        }
        d.deserialize_any(Visit)
    }
}

#[derive(Clone, Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FormEntry {
    pub force_density: Option<Spanned<f64>>,
    pub method: Option<Spanned<String>>,
    pub tolerance: Option<Spanned<f64>>,
    pub max_iterations: Option<Spanned<i64>>,
}

/// A key a table accepts and a short example of how to write it.
#[derive(Clone, Copy, Debug)]
pub struct KeySpec {
    pub key: &'static str,
    pub example: &'static str,
}

/// The keys of one kind of table.
#[derive(Clone, Copy, Debug)]
pub struct TableSpec {
    /// Name used in messages, e.g. `node` or `[analysis]`.
    pub name: &'static str,
    pub keys: &'static [KeySpec],
}

impl TableSpec {
    pub fn key_names(&self) -> impl Iterator<Item = &'static str> + '_ {
        self.keys.iter().map(|k| k.key)
    }

    pub fn example(&self, key: &str) -> Option<&'static str> {
        self.keys.iter().find(|k| k.key == key).map(|k| k.example)
    }

    fn knows(&self, key: &str) -> bool {
        self.keys.iter().any(|k| k.key == key)
    }
}

const fn key(key: &'static str, example: &'static str) -> KeySpec {
    KeySpec { key, example }
}

pub const TOP_SPEC: TableSpec = TableSpec {
    name: "top level",
    keys: &[
        key("title", "title = \"my net\""),
        key("units", "[units]"),
        key("nodes_csv", "nodes_csv = \"nodes.csv\""),
        key("members_csv", "members_csv = \"members.csv\""),
        key("loads_csv", "loads_csv = \"loads.csv\""),
        key("section", "[[section]]"),
        key("node", "[[node]]"),
        key("member", "[[member]]"),
        key("spring", "[[spring]]"),
        key("load", "[[load]]"),
        key("analysis", "[analysis]"),
        key("form", "[form]"),
    ],
};

pub const UNITS_SPEC: TableSpec = TableSpec {
    name: "[units]",
    keys: &[
        key("force", "force = \"kN\""),
        key("length", "length = \"m\""),
    ],
};

pub const SECTION_SPEC: TableSpec = TableSpec {
    name: "section",
    keys: &[
        key("name", "name = \"strand\""),
        key("EA", "EA = 2.0e4"),
        key("weight", "weight = 0.015"),
        key("tension_capacity", "tension_capacity = 180.0"),
        key("compression_capacity", "compression_capacity = 50.0"),
    ],
};

pub const NODE_SPEC: TableSpec = TableSpec {
    name: "node",
    keys: &[
        key("id", "id = \"A1\"` or `id = 1"),
        key("at", "at = [0.0, 0.0, 2.5]"),
        key("fix", "fix = \"xyz\""),
    ],
};

pub const MEMBER_SPEC: TableSpec = TableSpec {
    name: "member",
    keys: &[
        key("id", "id = \"c1\"` or `id = 1"),
        key("kind", "kind = \"cable\""),
        key("ends", "ends = [\"A1\", \"A2\"] (or ends = [1, 2])"),
        key("section", "section = \"strand\""),
        key("prestress", "prestress = 20.0"),
        key("rest_length", "rest_length = 4.98"),
        key("force_density", "force_density = 5.0"),
        key("target_force", "target_force = 20.0"),
        key("target_length", "target_length = 4.9"),
    ],
};

pub const SPRING_SPEC: TableSpec = TableSpec {
    name: "spring",
    keys: &[
        key("node", "node = \"A2\" (or node = 2)"),
        key("dir", "dir = \"z\""),
        key("k", "k = 50.0"),
    ],
};

pub const LOAD_SPEC: TableSpec = TableSpec {
    name: "load",
    keys: &[
        key("node", "node = \"A2\" (or node = 2)"),
        key("force", "force = [0.0, 0.0, -3.0]"),
    ],
};

pub const ANALYSIS_SPEC: TableSpec = TableSpec {
    name: "[analysis]",
    keys: &[
        key("strain", "strain = \"green\""),
        key("method", "method = \"newton\""),
        key("control", "control = \"load\""),
        key("steps", "steps = 20"),
        key("target", "target = 1.0"),
        key("max_displacement", "max_displacement = 2.0"),
        key("node", "node = \"A2\" (or node = 2)"),
        key("dir", "dir = \"z\""),
        key("arc", "arc = 0.05"),
        key("max_steps", "max_steps = 200"),
        key("tolerance", "tolerance = 1e-9"),
        key("max_iterations", "max_iterations = 30"),
        key("max_cutbacks", "max_cutbacks = 6"),
        key("watch", "watch = [\"A2.z\"]"),
        key("refactor_after", "refactor_after = 20"),
        key("refactor_each_step", "refactor_each_step = true"),
        key("stall_ratio", "stall_ratio = 0.9"),
        key("line_search", "line_search = 5"),
        key("displacement_tolerance", "displacement_tolerance = 1e-6"),
        key("energy_tolerance", "energy_tolerance = 1e-12"),
        key("arc_variant", "arc_variant = \"cylindrical\""),
        key("stability_check", "stability_check = \"every-step\""),
        key("pinpoint", "pinpoint = true"),
        key("start_load_factor", "start_load_factor = 0.0"),
        key("self_weight", "self_weight = \"dead\""),
        key("load_predictor", "load_predictor = \"secant\""),
        key("keep_fields", "keep_fields = [0, 5, 10]"),
        key("switch_at", "switch_at = 1"),
        key("switch_mode", "switch_mode = 1"),
        key("imperfection", "imperfection = { mode = 1, amplitude = 0.01 }"),
    ],
};

pub const FORM_SPEC: TableSpec = TableSpec {
    name: "[form]",
    keys: &[
        key("force_density", "force_density = 5.0"),
        key("method", "method = \"force-density\""),
        key("tolerance", "tolerance = 1e-9"),
        key("max_iterations", "max_iterations = 200"),
    ],
};

/// A problem found while reading the TOML text, before any model checks.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct FileProblem {
    pub span: Option<Span>,
    pub item: Option<String>,
    pub message: String,
    pub help: Option<String>,
}

/// Labels of entries that could not be read: later checks must not report
/// references to them as unknown.
#[derive(Clone, Debug, Default)]
pub struct LostItems {
    pub nodes: Vec<String>,
    pub sections: Vec<String>,
    pub members: Vec<String>,
    /// A node, member, section or spring entry was dropped, so model-wide
    /// checks (free nodes, no members) would be unreliable.
    pub structure: bool,
}

/// What [`ModelFile::parse`] found.
#[derive(Clone, Debug, Default)]
pub struct ParsedFile {
    /// Every entry that could be read.
    pub file: ModelFile,
    pub problems: Vec<FileProblem>,
    /// The text is not valid TOML; `file` is empty.
    pub syntax_error: bool,
    pub lost: LostItems,
}

/// Byte offset → 1-based line and column (in characters).
#[derive(Clone, Debug)]
pub struct LineIndex {
    starts: Vec<usize>,
}

impl LineIndex {
    pub fn new(text: &str) -> LineIndex {
        let mut starts = vec![0];
        starts.extend(
            text.bytes()
                .enumerate()
                .filter(|(_, b)| *b == b'\n')
                .map(|(i, _)| i + 1),
        );
        LineIndex { starts }
    }

    pub fn line_col(&self, text: &str, offset: usize) -> (usize, usize) {
        let offset = offset.min(text.len());
        let line = self.starts.partition_point(|s| *s <= offset).max(1);
        let start = self.starts[line - 1];
        // Count characters, not bytes; a span may end inside a character only
        // if it is malformed, so fall back to the byte count then.
        let col = text
            .get(start..offset)
            .map(|s| s.chars().count())
            .unwrap_or(offset - start);
        (line, col + 1)
    }
}

/// Syntax errors often cascade; a handful is enough to start fixing.
const MAX_SYNTAX_PROBLEMS: usize = 10;

impl ModelFile {
    /// Read the TOML text, keeping every entry that can be read and a
    /// problem for each one that cannot.
    pub fn parse(text: &str) -> ParsedFile {
        let (doc, errors) = DeTable::parse_recoverable(text);
        if !errors.is_empty() {
            return ParsedFile {
                problems: syntax_problems(text, &errors),
                syntax_error: true,
                ..ParsedFile::default()
            };
        }
        let mut reader = Reader::default();
        let mut file = ModelFile::default();
        for (key, value) in doc.into_inner() {
            let name: &str = key.get_ref();
            match name {
                "title" => file.title = reader.value(value, &TOP_SPEC, "title", None),
                "nodes_csv" => file.nodes_csv = reader.value(value, &TOP_SPEC, "nodes_csv", None),
                "members_csv" => {
                    file.members_csv = reader.value(value, &TOP_SPEC, "members_csv", None)
                }
                "loads_csv" => file.loads_csv = reader.value(value, &TOP_SPEC, "loads_csv", None),
                "units" => file.units = reader.table(value, &UNITS_SPEC),
                "analysis" => file.analysis = reader.table(value, &ANALYSIS_SPEC),
                "form" => file.form = reader.table(value, &FORM_SPEC),
                "section" => file.section = reader.array(value, &SECTION_SPEC),
                "node" => file.node = reader.array(value, &NODE_SPEC),
                "member" => file.member = reader.array(value, &MEMBER_SPEC),
                "spring" => file.spring = reader.array(value, &SPRING_SPEC),
                "load" => file.load = reader.array(value, &LOAD_SPEC),
                other => reader.unknown_key(other, key.span(), &TOP_SPEC, None),
            }
        }
        ParsedFile {
            file,
            problems: reader.problems,
            syntax_error: false,
            lost: reader.lost,
        }
    }
}

/// One problem per line at most: the parser's follow-up complaints about the
/// same line add nothing.
fn syntax_problems(text: &str, errors: &[toml::de::Error]) -> Vec<FileProblem> {
    let index = LineIndex::new(text);
    let mut seen_lines = Vec::new();
    let mut out = Vec::new();
    for e in errors {
        let line = e.span().map(|s| index.line_col(text, s.start).0);
        if seen_lines.contains(&line) {
            continue;
        }
        seen_lines.push(line);
        out.push(FileProblem {
            span: e.span(),
            item: None,
            message: format!("invalid toml: {}", lower_first(e.message())),
            help: Some(syntax_help(e.message())),
        });
        if out.len() == MAX_SYNTAX_PROBLEMS {
            break;
        }
    }
    out
}

fn syntax_help(message: &str) -> String {
    if message.contains("duplicate key") {
        "each key may appear once per table; remove or rename one of them".into()
    } else if message.contains("quoted") {
        "put text values in double quotes, e.g. kind = \"cable\"".into()
    } else {
        "fix the toml syntax at this place; strings need quotes, arrays need [ ] and commas".into()
    }
}

#[derive(Default)]
struct Reader {
    problems: Vec<FileProblem>,
    lost: LostItems,
}

impl Reader {
    fn problem(&mut self, span: Option<Span>, item: Option<String>, message: String, help: String) {
        self.problems.push(FileProblem {
            span,
            item,
            message,
            help: Some(help),
        });
    }

    fn unknown_key(&mut self, key: &str, span: Span, spec: &TableSpec, item: Option<String>) {
        let help = if spec.name != TOP_SPEC.name && TOP_SPEC.knows(key) && !spec.knows(key) {
            format!(
                "`{key}` is a top-level key; toml puts every key after a table header into \
                 that table, so move it above the first table"
            )
        } else {
            match suggest::nearest(key, spec.key_names()) {
                Some(near) => format!("did you mean \"{near}\"?"),
                None => format!("valid keys here: {}", suggest::list(spec.key_names())),
            }
        };
        let place = match spec.name {
            "top level" => "at the top level".to_string(),
            name if name.starts_with('[') => format!("in {name}"),
            name => format!("in a {name}"),
        };
        self.problem(
            Some(span),
            item,
            format!("unknown key `{key}` {place}"),
            help,
        );
    }

    /// A single value such as `title`.
    fn value<T: DeserializeOwned>(
        &mut self,
        value: Spanned<DeValue<'_>>,
        spec: &TableSpec,
        key: &str,
        item: Option<String>,
    ) -> Option<T> {
        let keys = [(key.to_string(), value.span())];
        match T::deserialize(ValueDeserializer::from(value)) {
            Ok(v) => Some(v),
            Err(e) => {
                self.problems.push(de_problem(&e, &keys, spec, item));
                None
            }
        }
    }

    /// A table such as `[analysis]`.
    fn table<T: DeserializeOwned>(
        &mut self,
        value: Spanned<DeValue<'_>>,
        spec: &TableSpec,
    ) -> Option<Spanned<T>> {
        let span = value.span();
        match value.into_inner() {
            DeValue::Table(table) => self.entry(table, span, spec, spec.name.to_string()),
            _ => {
                let bare = spec.name.trim_matches(['[', ']']);
                self.problem(
                    Some(span),
                    Some(spec.name.to_string()),
                    format!("`{bare}` must be a table"),
                    format!("write it as a {} header followed by its keys", spec.name),
                );
                None
            }
        }
    }

    /// An array of tables such as `[[node]]`: each entry is read on its own.
    fn array<T: DeserializeOwned>(
        &mut self,
        value: Spanned<DeValue<'_>>,
        spec: &TableSpec,
    ) -> Vec<Spanned<T>> {
        let span = value.span();
        let DeValue::Array(entries) = value.into_inner() else {
            self.problem(
                Some(span),
                Some(spec.name.to_string()),
                format!("`{}` must be an array of tables", spec.name),
                format!(
                    "write each entry as a [[{}]] header followed by its keys",
                    spec.name
                ),
            );
            self.lost.structure = true;
            return Vec::new();
        };
        let mut out = Vec::with_capacity(entries.len());
        for (i, entry) in entries.into_iter().enumerate() {
            let span = entry.span();
            let DeValue::Table(table) = entry.into_inner() else {
                self.problem(
                    Some(span),
                    Some(format!("{} {}", spec.name, i + 1)),
                    format!("each `{}` entry must be a table", spec.name),
                    format!(
                        "write each entry as a [[{}]] header followed by its keys",
                        spec.name
                    ),
                );
                self.lost.structure = true;
                continue;
            };
            let label = label_of(&table, spec);
            let item = match &label {
                Some(l) => format!("{} {l:?}", spec.name),
                None => format!("{} {}", spec.name, i + 1),
            };
            match self.entry::<T>(table, span, spec, item) {
                Some(v) => out.push(v),
                None => self.note_lost(spec, label),
            }
        }
        out
    }

    fn note_lost(&mut self, spec: &TableSpec, label: Option<String>) {
        let list = match spec.name {
            "node" => &mut self.lost.nodes,
            "section" => &mut self.lost.sections,
            "member" => &mut self.lost.members,
            "spring" => {
                self.lost.structure = true;
                return;
            }
            _ => return,
        };
        self.lost.structure = true;
        if let Some(l) = label {
            list.push(l);
        }
    }

    /// Check the keys of one table, then deserialize what is left. Unknown
    /// keys are reported here (with a suggestion) and removed, so serde can
    /// still report wrong types and missing keys in the same entry.
    fn entry<T: DeserializeOwned>(
        &mut self,
        table: DeTable<'_>,
        span: Span,
        spec: &TableSpec,
        item: String,
    ) -> Option<Spanned<T>> {
        let mut had_unknown = false;
        for (k, _) in table.iter() {
            if !spec.knows(k.get_ref()) {
                self.unknown_key(k.get_ref(), k.span(), spec, Some(item.clone()));
                had_unknown = true;
            }
        }
        let table: DeTable<'_> = if had_unknown {
            table
                .into_iter()
                .filter(|(k, _)| spec.knows(k.get_ref()))
                .collect()
        } else {
            table
        };
        let keys: Vec<(String, Span)> = table
            .iter()
            .map(|(k, v)| (k.get_ref().to_string(), v.span()))
            .collect();
        let value = Spanned::new(span.clone(), DeValue::Table(table));
        match T::deserialize(ValueDeserializer::from(value)) {
            // An entry with a misspelt key is not trusted: the key it meant
            // to set may be missing from the model.
            Ok(_) if had_unknown => None,
            Ok(v) => Some(Spanned::new(span, v)),
            Err(e) => {
                self.problems.push(de_problem(&e, &keys, spec, Some(item)));
                None
            }
        }
    }
}

/// The `id` (or `name`) of an entry, if it is a string, for messages.
fn label_of(table: &DeTable<'_>, spec: &TableSpec) -> Option<String> {
    let want = if spec.name == SECTION_SPEC.name {
        "name"
    } else {
        "id"
    };
    table
        .iter()
        .find(|(k, _)| k.get_ref() == want)
        .and_then(|(_, v)| match v.get_ref() {
            DeValue::String(s) => Some(s.to_string()),
            // An integer id is the string of its digits (see `Id`).
            DeValue::Integer(i) => i64::from_str_radix(i.as_str(), i.radix()).ok().map(|n| n.to_string()),
            _ => None,
        })
}

/// Turn a serde error into a message that names the key and says how the
/// key is written.
fn de_problem(
    e: &toml::de::Error,
    keys: &[(String, Span)],
    spec: &TableSpec,
    item: Option<String>,
) -> FileProblem {
    let raw = plain_types(e.message());
    let span = e.span();
    // The key whose value contains the error, if the error points inside one.
    let key = span.as_ref().and_then(|s| {
        keys.iter()
            .find(|(_, v)| v.start <= s.start && s.end <= v.end)
            .map(|(k, _)| k.as_str())
    });
    let (message, help) = if let Some(missing) = between(&raw, "missing field `", "`") {
        let help = match spec.example(missing) {
            Some(ex) => format!("add `{ex}`"),
            None => format!("add the `{missing}` key"),
        };
        (format!("missing required key `{missing}`"), help)
    } else if let Some(unknown) = between(&raw, "unknown field `", "`") {
        // Only reached when the mirror is used outside `parse`.
        let help = match suggest::nearest(unknown, spec.key_names()) {
            Some(near) => format!("did you mean \"{near}\"?"),
            None => format!("valid keys here: {}", suggest::list(spec.key_names())),
        };
        (format!("unknown key `{unknown}`"), help)
    } else {
        let message = match key {
            Some(k) => format!(
                "`{k}`: {}",
                raw.replacen("invalid type: ", "wrong type: found ", 1)
            ),
            None => raw.replacen("invalid type: ", "wrong type: found ", 1),
        };
        let help = match key.and_then(|k| spec.example(k)) {
            Some(ex) => format!("write it like `{ex}`"),
            None => format!("valid keys here: {}", suggest::list(spec.key_names())),
        };
        (message, help)
    };
    FileProblem {
        span,
        item,
        message,
        help: Some(help),
    }
}

/// Rust type names mean nothing to a user.
fn plain_types(message: &str) -> String {
    lower_first(message)
        .replace("expected f64", "expected a number")
        .replace("expected i64", "expected a whole number")
        .replace("expected a sequence", "expected an array")
        .replace("expected a map", "expected a table")
        .replace("expected struct ", "expected a table for ")
}

fn between<'a>(s: &'a str, start: &str, end: &str) -> Option<&'a str> {
    let rest = s.strip_prefix(start)?;
    rest.find(end).map(|i| &rest[..i])
}

/// Lower-case the first character, so library messages fit our style.
pub fn lower_first(s: &str) -> String {
    let mut chars = s.chars();
    match chars.next() {
        Some(c) => c
            .to_lowercase()
            .chain(chars)
            .collect::<String>()
            .trim_end_matches('.')
            .to_string(),
        None => String::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn whole_file_reads_with_plain_serde() {
        let text = r#"
title = "t"
[[node]]
id = "A"
at = [0, 0, 1]
[[member]]
id = "m"
kind = "bar"
ends = ["A", "B"]
section = "s"
"#;
        let f: ModelFile = toml::from_str(text).unwrap();
        assert_eq!(f.node[0].get_ref().id.get_ref(), "A");
        assert_eq!(f.member[0].get_ref().ends.get_ref()[1].get_ref(), "B");
    }

    #[test]
    fn every_bad_entry_is_reported() {
        let text = "[[node]]\nid = \"A\"\nat = [0, 0]\n[[node]]\nid = \"B\"\nat = [0, 0, 0]\nfxi = \"x\"\n";
        let p = ModelFile::parse(text);
        assert_eq!(p.problems.len(), 2, "{:?}", p.problems);
        assert!(
            p.problems
                .iter()
                .any(|q| q.help.as_deref() == Some("did you mean \"fix\"?"))
        );
        assert_eq!(p.lost.nodes, vec!["A".to_string(), "B".to_string()]);
    }

    #[test]
    fn line_index_counts_characters() {
        let text = "ab\nµx = 1\n";
        let idx = LineIndex::new(text);
        assert_eq!(idx.line_col(text, 0), (1, 1));
        assert_eq!(idx.line_col(text, 3), (2, 1));
        assert_eq!(idx.line_col(text, 5), (2, 2));
    }
}
