//! ModelFile → Model: resolve labels to indices, convert to SI and check
//! everything, collecting every problem (up to a cap) before failing.
//!
//! TOML entries and CSV rows are first put into the same raw shape
//! (`RawNode`, `RawMember`, `RawLoad`) and then go through the same
//! checks, so a row of `members.csv` is held to exactly the rules of a
//! `[[member]]` table. The CSV tables themselves are read in `tables`.

mod csv;
mod csv_given;
pub mod suggest;
mod tables;

use std::collections::{HashMap, HashSet};
use std::path::Path;

use toml::Spanned;

use super::file::{
    AnalysisEntry, FormEntry, KeepFieldsEntry, LineIndex, LostItems, MemberEntry, ModelFile, NodeEntry, Span,
    UnitsEntry, lower_first,
};
use super::{
    Analysis, Axis, Control, Diagnostic, ForceUnit, FormMethod, FormSettings, FormTarget, LengthUnit,
    KeepFields, Member, MemberKind, Method, Model, ModelErrors, NodalLoad, Node, NodeDir, Place, RestSpec, Section,
    SelfWeight, Spring, StrainMeasure, Units,
};

/// Past this many errors the rest are mostly consequences of the first ones.
pub const MAX_DIAGNOSTICS: usize = 50;
/// Warnings are capped too, so one repeated remark cannot flood the output.
pub const MAX_WARNINGS: usize = 50;
/// Largest number of springs or loads a model may have.
pub const MAX_ITEMS: usize = 20_000_000;
/// Largest number of nodes: far above a 1M-DOF net (about 340k nodes), low
/// enough that the tables of a model this size still fit in memory.
pub const MAX_NODES: usize = 10_000_000;
/// Largest number of members.
pub const MAX_MEMBERS: usize = 30_000_000;
/// Largest `steps` and `max_steps`: every converged step is kept in memory.
pub const MAX_STEPS: usize = 1_000_000;
/// Largest `max_iterations` per step.
pub const MAX_ITERATIONS: usize = 10_000;
/// Largest `max_cutbacks`: a step halved 60 times is 1e-18 of its size,
/// below the round-off of any load factor.
pub const MAX_CUTBACKS: usize = 60;
/// Largest `refactor_after`: each stored quasi-Newton pair holds two vectors
/// of the model's size.
pub const MAX_REFACTOR_AFTER: usize = 1_000;
/// Largest `line_search` trial count.
pub const MAX_LINE_SEARCH: usize = 100;
/// Largest model (TOML) file; larger models keep nodes and members in CSV.
pub const MAX_MODEL_BYTES: u64 = 256 << 20;
/// Largest CSV table read into memory.
pub const MAX_CSV_BYTES: u64 = 4 << 30;
/// Longest id or section name, in bytes.
pub const MAX_LABEL_BYTES: usize = 256;
/// Longest title, in bytes.
pub const MAX_TITLE_BYTES: usize = 4096;
/// Members shorter than this fraction of the model's size have zero length.
const ZERO_LENGTH: f64 = 1e-12;

/// Label → index.
type LabelMap<'a> = HashMap<&'a str, usize>;

/// Read and check the model file at `path`. CSV tables it names are found
/// next to it.
pub fn load(path: &Path) -> Result<Model, ModelErrors> {
    let name = path.display().to_string();
    if csv_given::has_csv_name(path) {
        return Err(csv_given::diagnostic(&name, 1, csv_given::naming_model(path).as_deref()).into());
    }
    if let Ok(meta) = std::fs::metadata(path)
        && meta.is_file()
        && meta.len() > MAX_MODEL_BYTES
    {
        return Err(Diagnostic::new(
            &name,
            format!(
                "the model file is {} MiB, more than the {} MiB a model file may have",
                meta.len() >> 20,
                MAX_MODEL_BYTES >> 20
            ),
        )
        .help("keep large node, member and load lists in CSV tables (nodes_csv, members_csv, loads_csv)")
        .into());
    }
    let bytes = std::fs::read(path).map_err(|e| {
        Diagnostic::new(
            &name,
            format!(
                "cannot read the model file: {}",
                lower_first(&e.to_string())
            ),
        )
        .help("check that the path is right and that the file is readable")
    })?;
    let text = utf8_text(bytes).map_err(|bad| bad.diagnostic(&name, "model file"))?;
    if let Some(line) = csv_given::csv_header_line(&text) {
        return Err(csv_given::diagnostic(&name, line, csv_given::naming_model(path).as_deref()).into());
    }
    let base = path.parent().map(Path::to_path_buf).unwrap_or_default();
    load_str(&text, &name, Some(&base))
}

/// Check a model given as TOML text. `file_name` is used in messages;
/// `base_dir` is where `nodes_csv` and `members_csv` are looked for (with
/// `None` naming a CSV table is an error).
pub fn load_str(
    text: &str,
    file_name: &str,
    base_dir: Option<&Path>,
) -> Result<Model, ModelErrors> {
    let tables = match base_dir {
        Some(dir) => Tables::Folder(dir),
        None => Tables::None,
    };
    load_with(text, file_name, &tables)
}

/// Check a model given wholly in memory: the TOML text and the CSV tables it
/// names, as `(name written in nodes_csv/members_csv, text)` pairs. Nothing
/// is read from disk (used by the fuzz targets and by callers that hold the
/// files already).
pub fn load_texts(
    text: &str,
    file_name: &str,
    tables: &[(&str, &str)],
) -> Result<Model, ModelErrors> {
    load_with(text, file_name, &Tables::Texts(tables))
}

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

/// The first byte of a file that is not UTF-8, with its place.
struct NotUtf8 {
    line: usize,
    column: usize,
    byte: u8,
}

impl NotUtf8 {
    fn diagnostic(&self, file: &str, what: &str) -> Diagnostic {
        Diagnostic::new(
            file,
            format!("byte 0x{:02x} is not utf-8 text; the file is not a text file or has another encoding", self.byte),
        )
        .at(self.line, Some(self.column))
        .item(what)
        .help("save the file as utf-8 text, and check that this is the file you meant (not a spreadsheet or a binary)")
    }
}

/// Bytes → text, or the place of the first byte that is not UTF-8.
fn utf8_text(bytes: Vec<u8>) -> Result<String, NotUtf8> {
    String::from_utf8(bytes).map_err(|e| {
        let good = e.utf8_error().valid_up_to();
        let bytes = e.as_bytes();
        let before = &bytes[..good];
        let line = before.iter().filter(|b| **b == b'\n').count() + 1;
        let line_start = before.iter().rposition(|b| *b == b'\n').map_or(0, |i| i + 1);
        NotUtf8 { line, column: good - line_start + 1, byte: bytes[good] }
    })
}

/// The table a line of broken TOML is in, for naming the item of a syntax
/// error: the last `[header]` above the line (with its line), or the top level.
fn enclosing_table(text: &str, line: u32) -> String {
    let header = text
        .lines()
        .take(line as usize)
        .enumerate()
        .filter(|(_, l)| l.trim_start().starts_with('['))
        .last();
    match header {
        Some((i, l)) => {
            let l = l.trim();
            let shown: String = l.chars().take(40).collect();
            format!("{shown} (line {})", i + 1)
        }
        None => "top level".to_string(),
    }
}

/// True if the text holds nothing but blank lines and comments.
fn holds_nothing(text: &str) -> bool {
    text.lines().all(|l| {
        let l = l.trim_start_matches(['\u{feff}', ' ', '\t', '\r']);
        l.is_empty() || l.starts_with('#')
    })
}

/// Where the CSV tables named by a model come from.
enum Tables<'a> {
    /// Not available: naming a table is an error.
    None,
    /// Files relative to this folder.
    Folder(&'a Path),
    /// Texts given by the caller, by name.
    Texts(&'a [(&'a str, &'a str)]),
}

fn load_with(text: &str, file_name: &str, tables: &Tables) -> Result<Model, ModelErrors> {
    if text.len() as u64 > MAX_MODEL_BYTES {
        return Err(Diagnostic::new(
            file_name,
            format!("the model text is larger than {} MiB", MAX_MODEL_BYTES >> 20),
        )
        .help("keep large node, member and load lists in CSV tables (nodes_csv, members_csv, loads_csv)")
        .into());
    }
    if holds_nothing(text) {
        let what = if text.trim().is_empty() { "the file is empty" } else { "the file holds only comments and blank lines" };
        return Err(Diagnostic::new(file_name, format!("{what}: there is no model in it"))
            .at(1, None)
            .item("model file")
            .help("a model needs [[section]], [[node]] and [[member]] tables (see the model file section of the README)")
            .into());
    }
    if let Some(line) = csv_given::csv_header_line(text) {
        return Err(csv_given::diagnostic(file_name, line, None).into());
    }
    let toml = Toml {
        text,
        index: LineIndex::new(text),
    };
    let mut cx = Ctx::new(file_name);
    let parsed = ModelFile::parse(text);
    for p in &parsed.problems {
        let src = p.span.as_ref().map(|s| toml.src(s)).unwrap_or_default();
        let item = match &p.item {
            None if parsed.syntax_error && src.line > 0 => Some(enclosing_table(text, src.line)),
            item => item.clone(),
        };
        let d = cx.diagnostic(src, item, p.message.clone(), p.help.clone());
        cx.push_error(src, d);
    }
    if parsed.syntax_error {
        return Err(cx.into_errors());
    }
    let model = build(&mut cx, &toml, &parsed.file, &parsed.lost, tables);
    if cx.errors.is_empty() {
        let mut model = model;
        model.files = std::mem::take(&mut cx.files);
        model.warnings = cx.into_warnings();
        Ok(model)
    } else {
        Err(cx.into_errors())
    }
}

// ---------------------------------------------------------------------------
// Places, items and the diagnostic sink

/// Where a value was written: file index, 1-based line and column (0 = not
/// known).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
struct Src {
    file: u16,
    line: u32,
    col: u32,
}

impl Src {
    fn place(self) -> Place {
        Place {
            file: self.file,
            line: self.line,
        }
    }

    /// Sort key: file order, with model-wide problems (no line) last.
    fn order(self) -> (bool, u16, u32, u32) {
        (self.line == 0, self.file, self.line, self.col)
    }
}

fn to_u32(v: usize) -> u32 {
    u32::try_from(v).unwrap_or(u32::MAX)
}

/// A label as shown in messages: an overlong one is cut (it is reported as
/// too long on its own).
fn shorten(label: &str) -> std::borrow::Cow<'_, str> {
    const SHOWN: usize = 40;
    if label.len() <= MAX_LABEL_BYTES {
        return label.into();
    }
    let mut end = SHOWN;
    while !label.is_char_boundary(end) {
        end -= 1;
    }
    format!("{}…", &label[..end]).into()
}

/// An id or name longer than [`MAX_LABEL_BYTES`] is an error.
fn check_label(cx: &mut Ctx, src: Src, item: Item, key: &str, label: &str) {
    if label.len() > MAX_LABEL_BYTES {
        cx.error(
            src,
            item,
            format!("`{key}` is {} bytes long, more than the {MAX_LABEL_BYTES} allowed", label.len()),
            "use a short id; it only has to be unique",
        );
    }
}

/// The TOML text, for turning byte spans into lines and columns.
struct Toml<'t> {
    text: &'t str,
    index: LineIndex,
}

impl Toml<'_> {
    fn src(&self, span: &Span) -> Src {
        let (line, col) = self.index.line_col(self.text, span.start);
        Src {
            file: 0,
            line: to_u32(line),
            col: to_u32(col),
        }
    }

    fn at<T>(&self, v: &Spanned<T>) -> Src {
        self.src(&v.span())
    }
}

/// The thing a diagnostic is about.
#[derive(Clone, Copy, Debug)]
enum Item<'a> {
    /// `node "A2"`
    Named(&'static str, &'a str),
    /// `spring 3`
    Numbered(&'static str, usize),
    /// `[analysis]`, `header`, …
    Plain(&'static str),
    /// The model as a whole.
    Model,
}

impl Item<'_> {
    fn text(self) -> Option<String> {
        match self {
            Item::Named(kind, label) => Some(format!("{kind} {:?}", shorten(label))),
            Item::Numbered(kind, n) => Some(format!("{kind} {n}")),
            Item::Plain(s) => Some(s.to_string()),
            Item::Model => None,
        }
    }
}

struct Ctx {
    files: Vec<String>,
    units: Units,
    errors: Vec<(Src, Diagnostic)>,
    dropped_errors: usize,
    warnings: Vec<(Src, Diagnostic)>,
    dropped_warnings: usize,
}

impl Ctx {
    fn new(file_name: &str) -> Ctx {
        Ctx {
            files: vec![file_name.to_string()],
            units: Units::default(),
            errors: Vec::new(),
            dropped_errors: 0,
            warnings: Vec::new(),
            dropped_warnings: 0,
        }
    }

    /// No more errors will be kept: skip costly work such as suggestions.
    fn full(&self) -> bool {
        self.errors.len() >= MAX_DIAGNOSTICS
    }

    fn diagnostic(
        &self,
        src: Src,
        item: Option<String>,
        message: String,
        help: Option<String>,
    ) -> Diagnostic {
        let file = self
            .files
            .get(usize::from(src.file))
            .cloned()
            .unwrap_or_default();
        let mut d = Diagnostic::new(file, message);
        if src.line > 0 {
            d = d.at(src.line as usize, (src.col > 0).then_some(src.col as usize));
        }
        d.item = item;
        d.help = help;
        d
    }

    fn push_error(&mut self, src: Src, d: Diagnostic) {
        if self.full() {
            self.dropped_errors += 1;
        } else {
            self.errors.push((src, d));
        }
    }

    fn error_with(&mut self, src: Src, item: Item, message: String, help: Option<String>) {
        if self.full() {
            self.dropped_errors += 1;
            return;
        }
        let d = self.diagnostic(src, item.text(), message, help);
        self.errors.push((src, d));
    }

    fn error(&mut self, src: Src, item: Item, message: impl Into<String>, help: impl Into<String>) {
        self.error_with(src, item, message.into(), Some(help.into()));
    }

    fn warn(&mut self, src: Src, item: Item, message: impl Into<String>, help: impl Into<String>) {
        if self.warnings.len() >= MAX_WARNINGS {
            self.dropped_warnings += 1;
            return;
        }
        let d = self.diagnostic(src, item.text(), message.into(), Some(help.into()));
        self.warnings.push((src, d));
    }

    fn into_errors(self) -> ModelErrors {
        let mut errors = self.errors;
        errors.sort_by_key(|(src, _)| src.order());
        let mut diagnostics: Vec<Diagnostic> = errors.into_iter().map(|(_, d)| d).collect();
        if self.dropped_errors > 0 {
            diagnostics.push(
                Diagnostic::new(
                    self.files[0].clone(),
                    format!(
                        "too many problems: {} more were found and not shown",
                        self.dropped_errors
                    ),
                )
                .help(format!(
                    "fix the {MAX_DIAGNOSTICS} problems above and check again"
                )),
            );
        }
        ModelErrors { diagnostics }
    }

    fn into_warnings(self) -> Vec<Diagnostic> {
        let mut warnings = self.warnings;
        warnings.sort_by_key(|(src, _)| src.order());
        let mut out: Vec<Diagnostic> = warnings.into_iter().map(|(_, d)| d).collect();
        if self.dropped_warnings > 0 {
            out.push(Diagnostic::new(
                self.files[0].clone(),
                format!("{} more warnings were not shown", self.dropped_warnings),
            ));
        }
        out
    }
}

/// A number as written in messages (`nan`, `inf`, `2.5`).
fn fmt_num(v: f64) -> String {
    if v.is_nan() {
        "nan".into()
    } else if v.is_infinite() {
        if v > 0.0 { "inf".into() } else { "-inf".into() }
    } else {
        format!("{v}")
    }
}

#[derive(Clone, Copy, PartialEq, Eq)]
enum Rule {
    Finite,
    Positive,
    NonNegative,
}

/// Check one number from the file; true if it may be used. `help` explains
/// the sign rule.
fn check_number(
    cx: &mut Ctx,
    v: f64,
    src: Src,
    item: Item,
    key: &str,
    rule: Rule,
    help: &str,
) -> bool {
    if !v.is_finite() {
        cx.error(
            src,
            item,
            format!("`{key}` must be a finite number, found {}", fmt_num(v)),
            "nan and inf are valid toml but mean nothing in a model; write a finite number",
        );
        return false;
    }
    let bad = match rule {
        Rule::Finite => None,
        Rule::Positive => (v <= 0.0).then_some("greater than zero"),
        Rule::NonNegative => (v < 0.0).then_some("zero or more"),
    };
    if let Some(want) = bad {
        cx.error(
            src,
            item,
            format!("`{key}` must be {want}, found {}", fmt_num(v)),
            help,
        );
        return false;
    }
    true
}

/// A count such as `steps`: at least `min`, at most `max`.
fn check_count(
    cx: &mut Ctx,
    t: &Toml,
    v: &Spanned<i64>,
    key: &str,
    min: i64,
    max: usize,
    help: &str,
) -> Option<usize> {
    let n = *v.get_ref();
    if n < min {
        cx.error(
            t.at(v),
            Item::Plain("[analysis]"),
            format!("`{key}` must be at least {min}, found {n}"),
            help,
        );
        return None;
    }
    match usize::try_from(n) {
        Ok(n) if n <= max => Some(n),
        _ => {
            cx.error(
                t.at(v),
                Item::Plain("[analysis]"),
                format!("`{key}` must be at most {max}, found {n}"),
                format!("{max} is the largest `{key}` tautline accepts; {help}"),
            );
            None
        }
    }
}

fn parse_dir(s: &str) -> Option<Axis> {
    let mut chars = s.chars();
    match (chars.next(), chars.next()) {
        (Some(c), None) => Axis::from_letter(c),
        _ => None,
    }
}

const DIR_HELP: &str = "a direction is one of the letters x, y, z";
const FIX_HELP: &str =
    "`fix` takes any of the letters x, y, z, each at most once; \"\" leaves the node free";

/// `"xz"` → supported directions.
fn parse_fix(s: &str) -> Result<[bool; 3], String> {
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

// ---------------------------------------------------------------------------
// The conversion

/// Turn the file into a model, reporting every problem into `cx`. The
/// result is only meaningful if no error was reported.
fn build(
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

fn check_size(cx: &mut Ctx, n: usize, max: usize, what: &str) {
    if n > max {
        cx.error(
            Src::default(),
            Item::Model,
            format!("the model has {n} {what}, more than the {max} tautline accepts"),
            "split the model; larger models are not supported",
        );
    }
}

fn units(cx: &mut Ctx, t: &Toml, entry: Option<&Spanned<UnitsEntry>>) -> Units {
    let mut u = Units::default();
    let Some(entry) = entry else { return u };
    let item = Item::Plain("[units]");
    if let Some(f) = &entry.get_ref().force {
        match ForceUnit::parse(f.get_ref()) {
            Some(v) => u.force = v,
            None => cx.error(
                t.at(f),
                item,
                format!("unknown force unit {:?}", f.get_ref()),
                suggest::choice_help(f.get_ref(), &ForceUnit::NAMES),
            ),
        }
    }
    if let Some(l) = &entry.get_ref().length {
        match LengthUnit::parse(l.get_ref()) {
            Some(v) => u.length = v,
            None => cx.error(
                t.at(l),
                item,
                format!("unknown length unit {:?}", l.get_ref()),
                suggest::choice_help(l.get_ref(), &LengthUnit::NAMES),
            ),
        }
    }
    u
}

fn section(cx: &mut Ctx, t: &Toml, s: &Spanned<super::file::SectionEntry>) -> Section {
    let e = s.get_ref();
    let name = e.name.get_ref();
    let item = Item::Named("section", name);
    check_label(cx, t.at(&e.name), item, "name", name);
    if name.is_empty() {
        cx.error(
            t.at(&e.name),
            item,
            "section name is empty",
            "give the section a name, e.g. name = \"strand\"",
        );
    }
    let ea = *e.ea.get_ref();
    check_number(
        cx,
        ea,
        t.at(&e.ea),
        item,
        "EA",
        Rule::Positive,
        "EA is the axial rigidity E·A, a force; it must be positive",
    );
    let u = cx.units;
    let mut optional = |v: &Option<Spanned<f64>>, key: &str, rule: Rule, help: &str| {
        v.as_ref().map(|v| {
            check_number(cx, *v.get_ref(), t.at(v), item, key, rule, help);
            *v.get_ref()
        })
    };
    let weight = optional(
        &e.weight,
        "weight",
        Rule::NonNegative,
        "weight is a force per length acting downwards; write it as a positive number",
    );
    let tension = optional(
        &e.tension_capacity,
        "tension_capacity",
        Rule::Positive,
        "capacities are positive forces; leave the key out for no limit",
    );
    let compression = optional(
        &e.compression_capacity,
        "compression_capacity",
        Rule::Positive,
        "write the compression capacity as a positive force; leave the key out for no limit",
    );
    Section {
        name: name.clone(),
        ea: u.force_in(ea),
        weight: weight.map(|w| u.force_per_length_in(w)),
        tension_capacity: tension.map(|v| u.force_in(v)),
        compression_capacity: compression.map(|v| u.force_in(v)),
        place: t.at(s).place(),
    }
}

// ---------------------------------------------------------------------------
// Nodes

/// A node as read from either source, before checks.
struct RawNode<'a> {
    label: &'a str,
    place: Src,
    /// Where the id itself was written.
    label_src: Src,
    /// `None`: the value was missing or unreadable and is already reported.
    at: [Option<f64>; 3],
    at_src: [Src; 3],
    at_keys: [&'static str; 3],
    fix: Option<(&'a str, Src)>,
}

fn toml_node<'a>(t: &Toml, n: &'a Spanned<NodeEntry>) -> RawNode<'a> {
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

fn add_node(cx: &mut Ctx, raw: RawNode, nodes: &mut Vec<Node>) {
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
fn index_labels<'a>(
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

fn describe(cx: &Ctx, p: Place) -> String {
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
fn model_size(nodes: &[Node]) -> f64 {
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

// ---------------------------------------------------------------------------
// References between items

struct Refs<'m> {
    nodes: &'m [Node],
    node_map: LabelMap<'m>,
    /// Labels of node entries that could not be read (already reported).
    lost_nodes: HashSet<&'m str>,
    sections: &'m [Section],
    section_map: LabelMap<'m>,
    lost_sections: HashSet<&'m str>,
    /// Model size, m, for the zero-length test.
    size: f64,
    /// The nodes table was named but its rows could not be read (reported):
    /// any node may be missing, so unknown nodes are not reported.
    nodes_unread: bool,
}

impl Refs<'_> {
    /// Resolve a node label; unknown labels are reported with a suggestion.
    fn node(&self, cx: &mut Ctx, label: &str, src: Src, item: Item, key: &str) -> Option<usize> {
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

    fn section(&self, cx: &mut Ctx, name: &str, src: Src, item: Item, key: &str) -> Option<usize> {
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

// ---------------------------------------------------------------------------
// Members

/// A member as read from either source, before checks.
struct RawMember<'a> {
    label: &'a str,
    place: Src,
    /// Where the id itself was written.
    label_src: Src,
    kind: (&'a str, Src),
    ends: [(&'a str, Src); 2],
    end_keys: [&'static str; 2],
    section: (&'a str, Src),
    prestress: Option<(f64, Src)>,
    rest_length: Option<(f64, Src)>,
    force_density: Option<(f64, Src)>,
    target_force: Option<(f64, Src)>,
    target_length: Option<(f64, Src)>,
}

fn toml_member<'a>(t: &Toml, m: &'a Spanned<MemberEntry>) -> RawMember<'a> {
    let e = m.get_ref();
    let ends = e.ends.get_ref();
    let opt = |v: &Option<Spanned<f64>>| v.as_ref().map(|v| (*v.get_ref(), t.at(v)));
    RawMember {
        label: e.id.get_ref(),
        place: t.at(m),
        label_src: t.at(&e.id),
        kind: (e.kind.get_ref(), t.at(&e.kind)),
        ends: [
            (ends[0].get_ref(), t.at(&ends[0])),
            (ends[1].get_ref(), t.at(&ends[1])),
        ],
        end_keys: ["ends", "ends"],
        section: (e.section.get_ref(), t.at(&e.section)),
        prestress: opt(&e.prestress),
        rest_length: opt(&e.rest_length),
        force_density: opt(&e.force_density),
        target_force: opt(&e.target_force),
        target_length: opt(&e.target_length),
    }
}

fn add_member(
    cx: &mut Ctx,
    raw: &RawMember,
    refs: &Refs,
    members: &mut Vec<Member>,
    attached: &mut [bool],
    section_used: &mut [bool],
) {
    let item = Item::Named("member", raw.label);
    check_label(cx, raw.label_src, item, "id", raw.label);
    if raw.label.is_empty() {
        cx.error(
            raw.place,
            item,
            "member id is empty",
            "give the member an id, e.g. id = \"c1\"",
        );
    }
    let kind = match raw.kind.0 {
        "bar" => Some(MemberKind::Bar),
        "cable" => Some(MemberKind::Cable),
        "catenary" => Some(MemberKind::Catenary),
        other => {
            cx.error(
                raw.kind.1,
                item,
                format!("unknown member kind {other:?}"),
                suggest::choice_help(other, &MemberKind::NAMES),
            );
            None
        }
    };
    let ends = [0, 1].map(|k| refs.node(cx, raw.ends[k].0, raw.ends[k].1, item, raw.end_keys[k]));
    // Mark ends as attached even if the member is broken, so its nodes are
    // not also reported as free-floating.
    for &i in ends.iter().flatten() {
        attached[i] = true;
    }
    let geometry_ok = match ends {
        [Some(i), Some(j)] => check_ends(cx, raw, refs, i, j, item),
        _ => false,
    };
    let section = refs.section(cx, raw.section.0, raw.section.1, item, "section");
    if let Some(s) = section {
        section_used[s] = true;
    }
    let rest = rest_spec(cx, raw, kind, item);
    let force_density = raw.force_density.and_then(|(v, src)| {
        if !check_number(cx, v, src, item, "force_density", Rule::Finite, "") {
            return None;
        }
        if kind.is_some_and(MemberKind::tension_only) && v < 0.0 {
            cx.error(
                src,
                item,
                format!(
                    "a cable cannot carry compression, but `force_density` is {}",
                    fmt_num(v)
                ),
                "use a positive force density, or make the member a bar",
            );
        }
        Some(cx.units.force_per_length_in(v))
    });
    let target = form_target(cx, raw, refs, ends, item);
    if let (Some(kind), [Some(i), Some(j)], Some(section), true) =
        (kind, ends, section, geometry_ok)
    {
        members.push(Member {
            label: raw.label.to_string(),
            kind,
            ends: [i, j],
            section,
            rest,
            force_density,
            target,
            place: raw.place.place(),
        });
    }
}

/// `target_force` / `target_length` → the member's form-finding target.
fn form_target(
    cx: &mut Ctx,
    raw: &RawMember,
    refs: &Refs,
    ends: [Option<usize>; 2],
    item: Item,
) -> Option<FormTarget> {
    let u = cx.units;
    let held = |k: Option<usize>| k.is_some_and(|k| refs.nodes[k].fixed == [true; 3]);
    let fixed_fixed = held(ends[0]) && held(ends[1]);
    match (raw.target_force, raw.target_length) {
        (Some(_), Some((_, src))) => {
            cx.error(
                src,
                item,
                "both `target_force` and `target_length` are given",
                "give one target per member: the force or the length the found shape must have",
            );
            None
        }
        (Some((t, src)), None) => {
            if !check_number(
                cx,
                t,
                src,
                item,
                "target_force",
                Rule::Positive,
                "a target force is a tension, greater than zero",
            ) {
                return None;
            }
            if fixed_fixed {
                cx.warn(
                    src,
                    item,
                    "both ends are supported in x, y and z: the member does not shape the form",
                    "its force is set directly as target_force / length; remove the target if that is not meant",
                );
            }
            Some(FormTarget::Force(u.force_in(t)))
        }
        (None, Some((l, src))) => {
            if !check_number(
                cx,
                l,
                src,
                item,
                "target_length",
                Rule::Positive,
                "a target length is a positive length",
            ) {
                return None;
            }
            if fixed_fixed {
                let drawn = match ends {
                    [Some(i), Some(j)] => (0..3)
                        .map(|k| (refs.nodes[j].at[k] - refs.nodes[i].at[k]).powi(2))
                        .sum::<f64>()
                        .sqrt(),
                    _ => 0.0,
                };
                let target = u.length_in(l);
                if (drawn - target).abs() > 1e-9 * drawn.max(target) {
                    cx.error(
                        src,
                        item,
                        format!(
                            "both ends are supported in x, y and z, so the length stays {}; \
                             form finding cannot make it {}",
                            fmt_num(u.length_out(drawn)),
                            fmt_num(l)
                        ),
                        "remove `target_length`, or free a direction of one end",
                    );
                    return None;
                }
            }
            Some(FormTarget::Length(u.length_in(l)))
        }
        (None, None) => None,
    }
}

/// Two different nodes at different places.
fn check_ends(cx: &mut Ctx, raw: &RawMember, refs: &Refs, i: usize, j: usize, item: Item) -> bool {
    let (a, b) = (&refs.nodes[i], &refs.nodes[j]);
    if i == j {
        cx.error(
            raw.ends[1].1,
            item,
            format!("both ends are node {:?}", a.label),
            "a member joins two different nodes",
        );
        return false;
    }
    let len = (0..3)
        .map(|k| (b.at[k] - a.at[k]).powi(2))
        .sum::<f64>()
        .sqrt();
    // A non-finite length comes from a coordinate already reported.
    if len.is_finite() && len <= ZERO_LENGTH * refs.size {
        cx.error(
            raw.place,
            item,
            format!(
                "member has zero length: nodes {:?} and {:?} are at the same place",
                a.label, b.label
            ),
            "move one of the nodes, or remove the member",
        );
        return false;
    }
    true
}

/// `prestress` / `rest_length` → how the unstressed length is given.
fn rest_spec(cx: &mut Ctx, raw: &RawMember, kind: Option<MemberKind>, item: Item) -> RestSpec {
    let u = cx.units;
    match (raw.prestress, raw.rest_length) {
        (Some(_), Some((_, src))) => {
            cx.error(
                src,
                item,
                "both `prestress` and `rest_length` are given",
                "give one: `prestress` is the force in the drawn geometry, `rest_length` the unstressed length",
            );
            RestSpec::Geometry
        }
        (Some((p, src)), None) => {
            if !check_number(cx, p, src, item, "prestress", Rule::Finite, "") {
                return RestSpec::Geometry;
            }
            match kind {
                Some(MemberKind::Catenary) => cx.error(
                    src,
                    item,
                    "a catenary member takes its unstressed length from `rest_length`, not `prestress`",
                    "write rest_length = the unstretched cable length (omit both to use the node-to-node distance)",
                ),
                Some(MemberKind::Cable) if p < 0.0 => cx.error(
                    src,
                    item,
                    format!(
                        "a cable cannot carry compression, but `prestress` is {}",
                        fmt_num(p)
                    ),
                    "use a positive prestress, or make the member a bar",
                ),
                Some(MemberKind::Bar) if p != 0.0 => cx.warn(
                    src,
                    item,
                    format!(
                        "bar has a prestress of {} {}: it starts loaded in the drawn geometry",
                        fmt_num(p),
                        u.force.name()
                    ),
                    "remove `prestress` if the bar should start unstressed",
                ),
                _ => {}
            }
            RestSpec::Prestress(u.force_in(p))
        }
        (None, Some((l, src))) => {
            if check_number(
                cx,
                l,
                src,
                item,
                "rest_length",
                Rule::Positive,
                "the unstressed length of a member is a positive length",
            ) {
                RestSpec::Length(u.length_in(l))
            } else {
                RestSpec::Geometry
            }
        }
        (None, None) => RestSpec::Geometry,
    }
}

fn unused_sections(cx: &mut Ctx, sections: &[Section], used: &[bool]) {
    for (s, _) in sections.iter().zip(used).filter(|(_, u)| !**u) {
        cx.warn(
            Src {
                file: s.place.file,
                line: s.place.line,
                col: 0,
            },
            Item::Named("section", &s.name),
            "section is not used by any member",
            "remove it, or check the `section` of your members for a typo",
        );
    }
}

// ---------------------------------------------------------------------------
// Springs, loads, analysis and form settings

fn springs(
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

/// A nodal load as read from either source, before checks.
struct RawLoad<'a> {
    node: (&'a str, Src),
    item: Item<'a>,
    place: Src,
    /// `None`: the value was missing or unreadable and is already reported.
    force: [Option<f64>; 3],
    force_src: [Src; 3],
    force_keys: [&'static str; 3],
}

/// The `[[load]]` tables; `loads_csv` rows are added after them.
fn toml_loads(cx: &mut Ctx, t: &Toml, file: &ModelFile, refs: &Refs) -> Vec<NodalLoad> {
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

fn add_load(cx: &mut Ctx, raw: &RawLoad, refs: &Refs, out: &mut Vec<NodalLoad>) {
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

fn choice<T>(
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
fn keep_fields(cx: &mut Ctx, t: &Toml, v: &Spanned<KeepFieldsEntry>) -> Option<KeepFields> {
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

fn analysis(
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
    let item = Item::Plain("[analysis]");
    let u = cx.units;
    let strain_names = ["green", "engineering"];
    let strain = choice(
        cx,
        t,
        &e.strain,
        "strain measure",
        &strain_names,
        |s| match s {
            "green" => Some(StrainMeasure::Green),
            "engineering" => Some(StrainMeasure::Engineering),
            _ => None,
        },
    );
    a.strain = strain.unwrap_or(a.strain);
    a.method =
        choice(cx, t, &e.method, "method", &Method::NAMES, Method::parse).unwrap_or(a.method);
    a.control = choice(
        cx,
        t,
        &e.control,
        "control",
        &Control::NAMES,
        Control::parse,
    )
    .unwrap_or(a.control);

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
        a.max_cutbacks = check_count(
            cx,
            t,
            v,
            "max_cutbacks",
            0,
            MAX_CUTBACKS,
            "write a whole number, 0 for no step halving",
        )
        .unwrap_or(a.max_cutbacks);
    }
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
    if let Some(v) = &e.target {
        let x = *v.get_ref();
        if check_number(cx, x, t.at(v), item, "target", Rule::Finite, "") {
            a.target = if a.control == Control::Displacement {
                u.length_in(x)
            } else {
                x
            };
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
        if check_number(
            cx,
            x,
            t.at(v),
            item,
            "max_displacement",
            Rule::Positive,
            "the displacement limit is a positive length",
        ) {
            a.max_displacement = Some(u.length_in(x));
        }
    }
    if let Some(v) = &e.arc {
        let x = *v.get_ref();
        if check_number(
            cx,
            x,
            t.at(v),
            item,
            "arc",
            Rule::Positive,
            "the first arc length is a positive length",
        ) {
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
            if x > 0.0 && x <= 0.1 {
                a.tolerance = x;
            } else {
                cx.error(
                    t.at(v),
                    item,
                    format!(
                        "`tolerance` must be above 0 and at most 0.1, found {}",
                        fmt_num(x)
                    ),
                    "it is a relative residual; 1e-9 is a common choice",
                );
            }
        }
    }
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
    a.branch = branch_settings(cx, t, e, &a);
    a
}

/// `switch_at`, `switch_mode` and `imperfection` (see `path::branch`). The
/// upper bound of `switch_mode` depends on the point met, so it is checked at
/// run time; here only what the file alone can get wrong.
fn branch_settings(cx: &mut Ctx, t: &Toml, e: &AnalysisEntry, a: &Analysis) -> super::BranchSettings {
    let mut b = super::BranchSettings::default();
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
            b.imperfection = Some(super::Imperfection { mode, amplitude: cx.units.length_in(x) });
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
fn control_point(cx: &mut Ctx, t: &Toml, e: &AnalysisEntry, refs: &Refs) -> Option<NodeDir> {
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
fn watch_list(cx: &mut Ctx, t: &Toml, e: &AnalysisEntry, refs: &Refs) -> Vec<NodeDir> {
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
fn largest_load(nodes: &[Node], loads: &[NodalLoad]) -> Option<NodeDir> {
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

fn form(cx: &mut Ctx, t: &Toml, entry: Option<&Spanned<FormEntry>>) -> FormSettings {
    let mut f = FormSettings::default();
    let Some(e) = entry.map(|e| e.get_ref()) else {
        return f;
    };
    let item = Item::Plain("[form]");
    if let Some(v) = &e.method {
        match FormMethod::parse(v.get_ref()) {
            Some(m) => f.method = m,
            None => cx.error(
                t.at(v),
                item,
                format!("unknown method {:?}", v.get_ref()),
                suggest::choice_help(v.get_ref(), &FormMethod::NAMES),
            ),
        }
    }
    f.max_iterations = FormSettings::default_max_iterations(f.method);
    if let Some(v) = &e.tolerance {
        let x = *v.get_ref();
        if check_number(cx, x, t.at(v), item, "tolerance", Rule::Positive, "a relative tolerance, e.g. 1e-9")
        {
            if x > 0.1 {
                cx.error(t.at(v), item, format!("`tolerance` must be at most 0.1, found {}", fmt_num(x)), "a relative tolerance, e.g. 1e-9");
            } else {
                f.tolerance = x;
            }
        }
    }
    if let Some(v) = &e.max_iterations {
        let n = *v.get_ref();
        if n < 1 {
            cx.error(t.at(v), item, format!("`max_iterations` must be at least 1, found {n}"), "a whole number of iterations, e.g. 200");
        } else {
            f.max_iterations = usize::try_from(n).unwrap_or(usize::MAX);
        }
    }
    let Some(v) = e.force_density.as_ref() else {
        return f;
    };
    let x = *v.get_ref();
    let help = "the default force density is a positive force per length; give compressed members their own";
    if check_number(
        cx,
        x,
        t.at(v),
        Item::Plain("[form]"),
        "force_density",
        Rule::Positive,
        help,
    ) {
        f.force_density = Some(cx.units.force_per_length_in(x));
    }
    f
}

/// Checks of the model as a whole.
fn model_checks(cx: &mut Ctx, refs: &Refs, member_entries: usize, attached: &[bool]) {
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

#[cfg(test)]
mod tests {
    use super::*;
    use std::path::PathBuf;
    use std::sync::atomic::{AtomicUsize, Ordering};

    /// A small valid model the error tests add to.
    pub(super) const BASE: &str = r#"title = "base"
[[section]]
name = "strand"
EA = 1000.0
[[node]]
id = "A"
at = [0, 0, 0]
fix = "xyz"
[[node]]
id = "B"
at = [1, 0, 0]
fix = "yz"
[[member]]
id = "m1"
kind = "bar"
ends = ["A", "B"]
section = "strand"
[[load]]
node = "B"
force = [1, 0, 0]
"#;

    pub(super) fn errors(text: &str) -> Vec<Diagnostic> {
        match load_str(text, "m.toml", None) {
            Ok(_) => panic!("model should be rejected:\n{text}"),
            Err(e) => e.diagnostics,
        }
    }

    fn ok(text: &str) -> Model {
        match load_str(text, "m.toml", None) {
            Ok(m) => m,
            Err(e) => panic!("model should load:\n{e}"),
        }
    }

    /// 1-based line of the first occurrence of `needle`.
    pub(super) fn line_of(text: &str, needle: &str) -> usize {
        let at = text
            .find(needle)
            .unwrap_or_else(|| panic!("{needle:?} not in text"));
        text[..at].matches('\n').count() + 1
    }

    /// Find the diagnostic at `file:line` whose text mentions `item` and
    /// `words`; fail with every diagnostic shown.
    pub(super) fn expect(ds: &[Diagnostic], file: &str, line: usize, item: &str, words: &str) -> Diagnostic {
        let place = format!("{file}:{line}");
        let found = ds.iter().find(|d| {
            let s = d.to_string();
            (s.starts_with(&format!("{place}:")) || s.starts_with(&format!("{place}: ")))
                && s.contains(item)
                && s.contains(words)
        });
        match found {
            Some(d) => d.clone(),
            None => panic!(
                "no diagnostic at {place} with {item:?} and {words:?}; got:\n{}",
                ds.iter()
                    .map(|d| d.to_string())
                    .collect::<Vec<_>>()
                    .join("\n")
            ),
        }
    }

    fn with(extra: &str) -> String {
        format!("{BASE}{extra}")
    }

    pub(super) fn temp_dir() -> PathBuf {
        static N: AtomicUsize = AtomicUsize::new(0);
        let dir = std::env::temp_dir().join(format!(
            "tautline-model-{}-{}",
            std::process::id(),
            N.fetch_add(1, Ordering::Relaxed)
        ));
        std::fs::create_dir_all(&dir).unwrap();
        dir
    }

    // -- good models ------------------------------------------------------

    #[test]
    fn base_model_loads_with_defaults() {
        let m = ok(BASE);
        assert_eq!(m.title, "base");
        assert_eq!(m.files, vec!["m.toml".to_string()]);
        assert_eq!(m.n_nodes(), 2);
        assert_eq!(m.members[0].ends, [0, 1]);
        assert_eq!(m.members[0].rest, RestSpec::Geometry);
        assert_eq!(m.nodes[1].fixed, [false, true, true]);
        assert_eq!(
            m.nodes[1].place,
            Place {
                file: 0,
                line: line_of(BASE, "id = \"B\"") as u32 - 1
            }
        );
        let a = &m.analysis;
        let d = Analysis::default();
        assert_eq!(
            (a.steps, a.max_steps, a.max_iterations, a.max_cutbacks),
            (d.steps, d.max_steps, d.max_iterations, d.max_cutbacks)
        );
        assert_eq!(a.method, Method::Newton);
        // No watch given: the largest free load component is watched.
        assert_eq!(
            a.watch,
            vec![NodeDir {
                node: 1,
                axis: Axis::X
            }]
        );
        assert_eq!(
            a.point,
            Some(NodeDir {
                node: 1,
                axis: Axis::X
            })
        );
        assert!(m.warnings.is_empty(), "{:?}", m.warnings);
    }

    /// Ids written as TOML integers are the strings of their digits, in
    /// every place an id is written or referred to (issue 14).
    #[test]
    fn integer_ids_are_the_strings_of_their_digits() {
        let text = r#"
[[section]]
name = 7
EA = 1.0e6

[[node]]
id = 1
at = [0.0, 0.0, 0.0]
fix = "xyz"

[[node]]
id = 0x10
at = [4.0, 0.0, 1.0]
fix = "y"

[[node]]
id = "C"
at = [8.0, 0.0, 0.0]
fix = "xyz"

[[member]]
id = 100
kind = "bar"
ends = [1, "16"]
section = 7

[[member]]
id = "101"
kind = "bar"
ends = [16, "C"]
section = "7"

[[spring]]
node = 16
dir = "x"
k = 10.0

[[load]]
node = 16
force = [0.0, 0.0, -100.0]

[analysis]
node = 16
dir = "z"
watch = ["16.z"]
"#;
        let m = ok(text);
        let labels: Vec<&str> = m.nodes.iter().map(|n| n.label.as_str()).collect();
        assert_eq!(labels, ["1", "16", "C"]);
        let members: Vec<&str> = m.members.iter().map(|x| x.label.as_str()).collect();
        assert_eq!(members, ["100", "101"]);
        assert_eq!(m.sections[0].name, "7");
        assert_eq!(m.members[0].ends, [0, 1]);
        assert_eq!(m.members[1].ends, [1, 2]);
        assert_eq!(m.loads[0].node, 1);
        assert_eq!(m.springs[0].node, 1);
        assert_eq!(m.analysis.point.map(|p| p.node), Some(1));
        // An integer id and the string of its digits are the same id.
        let dup = text.replacen("id = \"C\"", "id = \"1\"", 1);
        let ds = errors(&dup);
        assert!(ds.iter().any(|d| d.to_string().contains("duplicate node id \"1\"")), "{ds:?}");
        // A float or a boolean id names the place and says how ids are written.
        let bad = text.replacen("id = 100", "id = 100.0", 1).replacen("ends = [16, \"C\"]", "ends = [true, \"C\"]", 1);
        let ds = errors(&bad);
        expect(&ds, "m.toml", line_of(&bad, "id = 100.0"), "member", "a whole number");
        expect(&ds, "m.toml", line_of(&bad, "ends = [true"), "member \"101\"", "found boolean");
    }

    #[test]
    fn units_are_converted_to_si() {
        let text = r#"
[units]
force = "kN"
length = "cm"
[[section]]
name = "s"
EA = 2.0
weight = 0.5
tension_capacity = 3.0
compression_capacity = 4.0
[[node]]
id = "A"
at = [0, 0, 0]
fix = "xyz"
[[node]]
id = "B"
at = [100, 0, 50]
[[member]]
id = "c"
kind = "cable"
ends = ["A", "B"]
section = "s"
rest_length = 110.0
force_density = 2.0
[[member]]
id = "d"
kind = "cable"
ends = ["B", "A"]
section = "s"
prestress = 1.5
[[spring]]
node = "B"
dir = "y"
k = 3.0
[[load]]
node = "B"
force = [0, 0, -2]
[analysis]
control = "displacement"
node = "B"
dir = "z"
target = -20.0
max_displacement = 30.0
[form]
force_density = 4.0
"#;
        let m = ok(text);
        let close = |a: f64, b: f64| approx::assert_relative_eq!(a, b, max_relative = 1e-12);
        close(m.nodes[1].at[0], 1.0);
        close(m.nodes[1].at[2], 0.5);
        let s = &m.sections[0];
        close(s.ea, 2000.0);
        close(s.weight.unwrap(), 0.5e3 / 0.01);
        close(s.tension_capacity.unwrap(), 3000.0);
        close(s.compression_capacity.unwrap(), 4000.0);
        match m.members[0].rest {
            RestSpec::Length(l) => close(l, 1.1),
            other => panic!("{other:?}"),
        }
        close(m.members[0].force_density.unwrap(), 2.0e3 / 0.01);
        match m.members[1].rest {
            RestSpec::Prestress(p) => close(p, 1500.0),
            other => panic!("{other:?}"),
        }
        close(m.springs[0].k, 3.0e3 / 0.01);
        close(m.loads[0].force[2], -2000.0);
        close(m.analysis.target, -0.2);
        close(m.analysis.max_displacement.unwrap(), 0.3);
        close(m.form.force_density.unwrap(), 4.0e3 / 0.01);
        let p = NodeDir {
            node: 1,
            axis: Axis::Z,
        };
        assert_eq!(m.analysis.point, Some(p));
        assert_eq!(m.analysis.watch, vec![p]);
        assert_eq!(
            m.units,
            Units {
                force: ForceUnit::KN,
                length: LengthUnit::Cm
            }
        );
    }

    #[test]
    fn analysis_settings_are_read() {
        let m = ok(&with(
            r#"[analysis]
strain = "engineering"
method = "bfgs"
control = "arc-length"
steps = 5
target = 2.5
arc = 0.2
max_steps = 90
tolerance = 1e-6
max_iterations = 12
max_cutbacks = 0
watch = ["B.x", "A.z"]
"#,
        ));
        let a = &m.analysis;
        assert_eq!(a.strain, StrainMeasure::Engineering);
        assert_eq!(a.method, Method::Bfgs);
        assert_eq!(a.control, Control::ArcLength);
        assert_eq!(
            (a.steps, a.max_steps, a.max_iterations, a.max_cutbacks),
            (5, 90, 12, 0)
        );
        assert_eq!((a.target, a.arc, a.tolerance), (2.5, Some(0.2), 1e-6));
        assert_eq!(a.watch.len(), 2);
        assert_eq!(
            a.point,
            Some(NodeDir {
                node: 1,
                axis: Axis::X
            })
        );
    }

    #[test]
    fn csv_tables_are_appended_and_checked_like_toml() {
        let dir = temp_dir();
        std::fs::write(
            dir.join("nodes.csv"),
            "# generated\nz, id ,x,y,fix\n\n0,\"C\",2,0,yz\n0, D ,3,0,\n",
        )
        .unwrap();
        std::fs::write(
            dir.join("members.csv"),
            "id,end1,end2,kind,section,prestress,rest_length,force_density\n\
             m2,B,C,cable,strand,5,,\n\"m,3\",C,D,bar,strand,,2.5,\n",
        )
        .unwrap();
        let text = format!("nodes_csv = \"nodes.csv\"\nmembers_csv = \"members.csv\"\n{BASE}");
        let m = load_str(&text, "m.toml", Some(&dir)).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(m.files.len(), 3);
        assert!(m.files[1].ends_with("nodes.csv"));
        let labels: Vec<&str> = m.nodes.iter().map(|n| n.label.as_str()).collect();
        assert_eq!(labels, ["A", "B", "C", "D"]);
        assert_eq!(m.nodes[2].place, Place { file: 1, line: 4 });
        assert_eq!(m.nodes[3].fixed, [false; 3]);
        assert_eq!(m.members.len(), 3);
        assert_eq!(m.members[1].rest, RestSpec::Prestress(5.0));
        assert_eq!(m.members[2].label, "m,3");
        assert_eq!(m.members[2].ends, [2, 3]);
        assert_eq!(m.members[2].rest, RestSpec::Length(2.5));
        assert_eq!(m.members[2].place, Place { file: 2, line: 3 });
        std::fs::remove_dir_all(&dir).ok();
    }

    #[test]
    fn load_reads_a_file_and_its_tables() {
        let dir = temp_dir();
        std::fs::write(dir.join("n.csv"), "id,x,y,z\nC,2,0,0\n").unwrap();
        let text = BASE.replace(
            "[[node]]\nid = \"A\"",
            "nodes_csv = \"n.csv\"\n[[node]]\nid = \"A\"",
        );
        // nodes_csv must come before the first table.
        let text = format!(
            "nodes_csv = \"n.csv\"\n{}",
            text.replace("nodes_csv = \"n.csv\"\n[[node]]", "[[node]]")
        );
        let text = text.replace("[[load]]", "[[member]]\nid = \"m2\"\nkind = \"bar\"\nends = [\"B\", \"C\"]\nsection = \"strand\"\n[[load]]");
        let path = dir.join("model.toml");
        std::fs::write(&path, &text).unwrap();
        let m = load(&path).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(m.files[0], path.display().to_string());
        assert_eq!(m.n_nodes(), 3);
        std::fs::remove_dir_all(&dir).ok();
    }

    #[test]
    fn unreadable_file_is_named() {
        let e = load(Path::new("/no/such/dir/model.toml")).unwrap_err();
        assert_eq!(e.diagnostics.len(), 1);
        assert!(e.to_string().contains("/no/such/dir/model.toml"), "{e}");
        assert!(e.to_string().contains("cannot read"), "{e}");
    }

    #[test]
    fn warnings_for_unloaded_model_and_prestressed_bar() {
        let text = BASE.replace("[[load]]\nnode = \"B\"\nforce = [1, 0, 0]\n", "");
        let text = text.replace(
            "section = \"strand\"\n",
            "section = \"strand\"\nprestress = 2.0\n",
        );
        let m = ok(&text);
        let all = m
            .warnings
            .iter()
            .map(|w| w.to_string())
            .collect::<Vec<_>>()
            .join("\n");
        assert!(all.contains("no loads"), "{all}");
        let line = line_of(&text, "prestress = 2.0");
        assert!(
            all.contains(&format!("m.toml:{line}:"))
                && all.contains("member \"m1\": bar has a prestress"),
            "{all}"
        );
        assert!(m.analysis.watch.is_empty());
    }

    // -- reading errors ---------------------------------------------------

    #[test]
    fn toml_syntax_error_has_line_and_column() {
        let text = with("[[node]]\nid = \"C\nat = [0, 0, 0]\n");
        let ds = errors(&text);
        let d = expect(
            &ds,
            "m.toml",
            line_of(&text, "id = \"C"),
            "",
            "invalid toml",
        );
        assert!(d.column.is_some());
    }

    #[test]
    fn wrong_type_names_the_key_and_item() {
        let text = with("[[node]]\nid = \"C\"\nat = [0, 0, \"x\"]\n");
        let ds = errors(&text);
        let d = expect(
            &ds,
            "m.toml",
            line_of(&text, "\"x\""),
            "node \"C\"",
            "`at`: wrong type",
        );
        assert!(d.help.unwrap().contains("at = ["));
    }

    #[test]
    fn missing_key_is_reported_at_the_entry() {
        let text = with("[[member]]\nid = \"m9\"\nkind = \"bar\"\nends = [\"A\", \"B\"]\n");
        let ds = errors(&text);
        let d = expect(
            &ds,
            "m.toml",
            line_of(&text, "[[member]]\nid = \"m9\""),
            "member \"m9\"",
            "missing required key `section`",
        );
        assert!(d.help.unwrap().contains("section = "));
    }

    #[test]
    fn unknown_key_suggests_the_nearest() {
        let text = with("[analysis]\ntolerence = 1e-6\nwibble = 3\n");
        let ds = errors(&text);
        let d = expect(
            &ds,
            "m.toml",
            line_of(&text, "tolerence"),
            "[analysis]",
            "unknown key `tolerence`",
        );
        assert_eq!(d.help.as_deref(), Some("did you mean \"tolerance\"?"));
        let d = expect(
            &ds,
            "m.toml",
            line_of(&text, "wibble"),
            "[analysis]",
            "unknown key `wibble`",
        );
        assert!(d.help.unwrap().contains("valid keys here: strain, method"));
    }

    #[test]
    fn top_level_key_after_a_table_is_explained() {
        let text = with("nodes_csv = \"n.csv\"\n");
        let ds = errors(&text);
        let d = expect(
            &ds,
            "m.toml",
            line_of(&text, "nodes_csv"),
            "load 1",
            "unknown key `nodes_csv`",
        );
        assert!(d.help.unwrap().contains("top-level key"));
    }

    #[test]
    fn errors_in_separate_entries_are_all_reported() {
        let text = with(
            "[[node]]\nid = \"C\"\nat = [0, 0]\n[[node]]\nid = \"D\"\nat = [0, 0, 1]\nfxi = \"\"\n[[member]]\nid = \"m2\"\nkind = \"bar\"\nends = [\"C\", \"D\"]\nsection = \"strand\"\n",
        );
        let ds = errors(&text);
        expect(
            &ds,
            "m.toml",
            line_of(&text, "at = [0, 0]"),
            "node \"C\"",
            "invalid length 2",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "fxi"),
            "node \"D\"",
            "did you mean \"fix\"?",
        );
        // The member refers to nodes that could not be read: no extra noise.
        assert_eq!(ds.len(), 2, "{ds:?}");
    }

    // -- references -------------------------------------------------------

    #[test]
    fn unknown_nodes_everywhere_suggest_a_near_id() {
        let text = with(
            "[[member]]\nid = \"m2\"\nkind = \"bar\"\nends = [\"A\", \"Bx\"]\nsection = \"strand\"\n\
             [[spring]]\nnode = \"Q\"\ndir = \"x\"\nk = 1.0\n\
             [[load]]\nnode = \"R\"\nforce = [1, 0, 0]\n\
             [analysis]\nnode = \"S\"\ndir = \"x\"\nwatch = [\"T.x\"]\n",
        );
        let ds = errors(&text);
        let d = expect(
            &ds,
            "m.toml",
            line_of(&text, "\"Bx\""),
            "member \"m2\"",
            "unknown node \"Bx\" in `ends`",
        );
        assert_eq!(d.help.as_deref(), Some("did you mean \"B\"?"));
        expect(
            &ds,
            "m.toml",
            line_of(&text, "\"Q\""),
            "spring 1",
            "unknown node \"Q\"",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "\"R\""),
            "load 2",
            "unknown node \"R\"",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "\"S\""),
            "[analysis]",
            "unknown node \"S\" in `node`",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "\"T.x\""),
            "[analysis]",
            "unknown node \"T\" in `watch`",
        );
    }

    #[test]
    fn unknown_section_suggests_a_near_name() {
        let text = BASE.replace("section = \"strand\"", "section = \"strnad\"");
        let ds = errors(&text);
        let d = expect(
            &ds,
            "m.toml",
            line_of(&text, "strnad"),
            "member \"m1\"",
            "unknown section \"strnad\"",
        );
        assert_eq!(d.help.as_deref(), Some("did you mean \"strand\"?"));
    }

    #[test]
    fn duplicates_point_at_the_second_and_name_the_first() {
        let text = with(
            "[[section]]\nname = \"strand\"\nEA = 5.0\n\
             [[node]]\nid = \"B\"\nat = [2, 0, 0]\n\
             [[member]]\nid = \"m1\"\nkind = \"bar\"\nends = [\"A\", \"B\"]\nsection = \"strand\"\n",
        );
        let ds = errors(&text);
        let first_sec = line_of(&text, "[[section]]");
        let second_sec = line_of(&text, "[[section]]\nname = \"strand\"\nEA = 5.0");
        let d = expect(
            &ds,
            "m.toml",
            second_sec,
            "section \"strand\"",
            "duplicate section name",
        );
        assert!(d.message.contains(&format!("m.toml:{first_sec}")), "{d}");
        let second_node = line_of(&text, "[[node]]\nid = \"B\"\nat = [2");
        let d = expect(
            &ds,
            "m.toml",
            second_node,
            "node \"B\"",
            "duplicate node id",
        );
        assert!(
            d.message
                .contains(&format!("m.toml:{}", line_of(&text, "id = \"B\"") - 1)),
            "{d}"
        );
        let last_member = text.rfind("[[member]]").unwrap();
        let line = text[..last_member].matches('\n').count() + 1;
        expect(&ds, "m.toml", line, "member \"m1\"", "duplicate member id");
    }

    // -- members ----------------------------------------------------------

    #[test]
    fn member_on_one_node_and_zero_length_member() {
        let text = with(
            "[[node]]\nid = \"C\"\nat = [1, 0, 0]\n\
             [[member]]\nid = \"same\"\nkind = \"bar\"\nends = [\"B\", \"B\"]\nsection = \"strand\"\n\
             [[member]]\nid = \"short\"\nkind = \"bar\"\nends = [\"B\", \"C\"]\nsection = \"strand\"\n",
        );
        let ds = errors(&text);
        expect(
            &ds,
            "m.toml",
            line_of(&text, "[\"B\", \"B\"]"),
            "member \"same\"",
            "both ends are node \"B\"",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "id = \"short\"") - 1,
            "member \"short\"",
            "zero length",
        );
    }

    #[test]
    fn bad_numbers_in_sections_members_and_springs() {
        let text = with(
            "[[section]]\nname = \"bad\"\nEA = -1.0\nweight = -0.1\ntension_capacity = 0.0\ncompression_capacity = nan\n\
             [[section]]\nname = \"inf\"\nEA = inf\n\
             [[member]]\nid = \"both\"\nkind = \"bar\"\nends = [\"A\", \"B\"]\nsection = \"bad\"\nprestress = 1.0\nrest_length = 2.0\n\
             [[member]]\nid = \"slack\"\nkind = \"cable\"\nends = [\"A\", \"B\"]\nsection = \"inf\"\nprestress = -3.0\n\
             [[member]]\nid = \"short\"\nkind = \"cable\"\nends = [\"A\", \"B\"]\nsection = \"strand\"\nrest_length = 0.0\n\
             [[spring]]\nnode = \"B\"\ndir = \"x\"\nk = 0.0\n",
        );
        let ds = errors(&text);
        expect(
            &ds,
            "m.toml",
            line_of(&text, "EA = -1.0"),
            "section \"bad\"",
            "`EA` must be greater than zero",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "EA = inf"),
            "section \"inf\"",
            "`EA` must be a finite number, found inf",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "weight = -0.1"),
            "section \"bad\"",
            "`weight` must be zero or more",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "tension_capacity"),
            "section \"bad\"",
            "`tension_capacity` must be greater than zero",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "compression_capacity"),
            "section \"bad\"",
            "found nan",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "rest_length = 2.0"),
            "member \"both\"",
            "both `prestress` and `rest_length`",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "prestress = -3.0"),
            "member \"slack\"",
            "a cable cannot carry compression",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "rest_length = 0.0"),
            "member \"short\"",
            "`rest_length` must be greater than zero",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "k = 0.0"),
            "spring 1",
            "`k` must be greater than zero",
        );
    }

    #[test]
    fn nan_coordinates_and_loads_are_rejected() {
        let text = with(
            "[[node]]\nid = \"C\"\nat = [0, nan, 0]\n[[load]]\nnode = \"B\"\nforce = [-inf, 0, 0]\n",
        );
        let ds = errors(&text);
        expect(
            &ds,
            "m.toml",
            line_of(&text, "nan"),
            "node \"C\"",
            "`at` must be a finite number",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "-inf"),
            "load 2",
            "`force` must be a finite number",
        );
    }

    // -- names and letters ------------------------------------------------

    #[test]
    fn invalid_fix_dir_and_kind() {
        let text = with(
            "[[node]]\nid = \"C\"\nat = [0, 0, 1]\nfix = \"xw\"\n\
             [[node]]\nid = \"D\"\nat = [0, 0, 2]\nfix = \"zz\"\n\
             [[spring]]\nnode = \"C\"\ndir = \"up\"\nk = 1.0\n\
             [[member]]\nid = \"m2\"\nkind = \"rope\"\nends = [\"A\", \"B\"]\nsection = \"strand\"\n",
        );
        let ds = errors(&text);
        expect(
            &ds,
            "m.toml",
            line_of(&text, "\"xw\""),
            "node \"C\"",
            "invalid letter 'w'",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "\"zz\""),
            "node \"D\"",
            "appears twice",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "\"up\""),
            "spring 1",
            "invalid `dir` \"up\"",
        );
        let d = expect(
            &ds,
            "m.toml",
            line_of(&text, "\"rope\""),
            "member \"m2\"",
            "unknown member kind",
        );
        assert!(d.help.unwrap().contains("bar, cable"));
    }

    #[test]
    fn invalid_names_list_the_valid_ones() {
        let text = format!(
            "[units]\nforce = \"kn\"\nlength = \"yd\"\n{}",
            with("[analysis]\nstrain = \"log\"\nmethod = \"newtn\"\ncontrol = \"force\"\n")
                .replace("title = \"base\"\n", "")
        );
        let ds = errors(&text);
        let d = expect(&ds, "m.toml", 2, "[units]", "unknown force unit \"kn\"");
        assert!(d.help.unwrap().starts_with("did you mean \"kN\"?"));
        let d = expect(&ds, "m.toml", 3, "[units]", "unknown length unit \"yd\"");
        assert!(d.help.unwrap().contains("m, cm, mm, ft, in"));
        let d = expect(
            &ds,
            "m.toml",
            line_of(&text, "\"log\""),
            "[analysis]",
            "unknown strain measure",
        );
        assert!(d.help.unwrap().contains("green, engineering"));
        let d = expect(
            &ds,
            "m.toml",
            line_of(&text, "\"newtn\""),
            "[analysis]",
            "unknown method",
        );
        assert!(d.help.unwrap().starts_with("did you mean \"newton\"?"));
        let d = expect(
            &ds,
            "m.toml",
            line_of(&text, "\"force\""),
            "[analysis]",
            "unknown control",
        );
        assert!(d.help.unwrap().contains("load, displacement, arc-length"));
    }

    #[test]
    fn load_on_a_support_is_an_error() {
        let text = BASE.replace("force = [1, 0, 0]", "force = [1, 0, -2]");
        let ds = errors(&text);
        let d = expect(
            &ds,
            "m.toml",
            line_of(&text, "force = [1, 0, -2]"),
            "load 1",
            "z component of -2 on node \"B\"",
        );
        assert!(d.help.unwrap().contains("remove the load or the support"));
    }

    // -- analysis ---------------------------------------------------------

    #[test]
    fn bad_analysis_numbers() {
        let text = with(
            "[analysis]\nsteps = 0\nmax_steps = -2\ntolerance = 0.5\nmax_iterations = 0\ntarget = nan\nwatch = [\"Bz\", \"B.q\"]\n",
        );
        let ds = errors(&text);
        expect(
            &ds,
            "m.toml",
            line_of(&text, "steps = 0"),
            "[analysis]",
            "`steps` must be at least 1",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "max_steps"),
            "[analysis]",
            "`max_steps` must be at least 1",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "tolerance"),
            "[analysis]",
            "`tolerance` must be above 0",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "max_iterations"),
            "[analysis]",
            "`max_iterations` must be at least 1",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "target"),
            "[analysis]",
            "`target` must be a finite number",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "watch"),
            "[analysis]",
            "\"Bz\" is not of the form NODE.DIR",
        );
        expect(
            &ds,
            "m.toml",
            line_of(&text, "watch"),
            "[analysis]",
            "\"B.q\" is not of the form NODE.DIR",
        );
    }

    #[test]
    fn control_point_rules() {
        let text = with("[analysis]\nnode = \"B\"\n");
        expect(
            &errors(&text),
            "m.toml",
            line_of(&text, "[analysis]") + 1,
            "[analysis]",
            "`node` is given without `dir`",
        );
        let text = with("[analysis]\ndir = \"x\"\n");
        expect(
            &errors(&text),
            "m.toml",
            line_of(&text, "dir = \"x\""),
            "[analysis]",
            "`dir` is given without `node`",
        );
        let text = with("[analysis]\ncontrol = \"displacement\"\n");
        expect(
            &errors(&text),
            "m.toml",
            line_of(&text, "control"),
            "[analysis]",
            "displacement control needs `node` and `dir`",
        );
        let text = with("[analysis]\ncontrol = \"displacement\"\nnode = \"B\"\ndir = \"z\"\n");
        expect(
            &errors(&text),
            "m.toml",
            line_of(&text, "[analysis]") + 2,
            "[analysis]",
            "that direction is supported",
        );
        let text = with("[analysis]\ncontrol = \"arc-length\"\narc = -0.1\n");
        expect(
            &errors(&text),
            "m.toml",
            line_of(&text, "arc = -0.1"),
            "[analysis]",
            "`arc` must be greater than zero",
        );
    }

    // -- the model as a whole ---------------------------------------------

    #[test]
    fn model_wide_problems() {
        let text = BASE
            .replace("fix = \"yz\"", "fix = \"zyx\"")
            .replace("[[load]]\nnode = \"B\"\nforce = [1, 0, 0]\n", "");
        let ds = errors(&text);
        assert!(
            ds.iter()
                .any(|d| d.message.contains("nothing can move") && d.line.is_none()),
            "{ds:?}"
        );

        let text = "[[node]]\nid = \"A\"\nat = [0, 0, 0]\n";
        let ds = errors(text);
        assert!(
            ds.iter().any(|d| d.message == "the model has no members"),
            "{ds:?}"
        );

        let text = with("[[node]]\nid = \"lonely\"\nat = [5, 5, 5]\nfix = \"z\"\n");
        let ds = errors(&text);
        expect(
            &ds,
            "m.toml",
            line_of(&text, "id = \"lonely\"") - 1,
            "node \"lonely\"",
            "free node has no member or spring",
        );
    }

    #[test]
    fn diagnostics_are_capped() {
        let mut text = BASE.to_string();
        for i in 0..80 {
            text.push_str(&format!(
                "[[load]]\nnode = \"nope{i}\"\nforce = [1, 0, 0]\n"
            ));
        }
        let ds = errors(&text);
        assert_eq!(ds.len(), MAX_DIAGNOSTICS + 1);
        assert!(
            ds.last().unwrap().message.contains("30 more"),
            "{:?}",
            ds.last()
        );
        // Sorted in file order.
        assert!(
            ds[..MAX_DIAGNOSTICS]
                .windows(2)
                .all(|w| w[0].line <= w[1].line)
        );
    }

    #[test]
    fn counts_above_their_caps_are_refused() {
        for (key, v) in [("steps", MAX_STEPS + 1), ("max_iterations", MAX_ITERATIONS + 1), ("max_cutbacks", MAX_CUTBACKS + 1)] {
            let text = with(&format!("[analysis]\n{key} = {v}\n"));
            let ds = errors(&text);
            expect(&ds, "m.toml", line_of(&text, key), "[analysis]", "must be at most");
        }
    }

    #[test]
    fn no_panic_on_truncated_or_mangled_input() {
        let full = with(
            "[[spring]]\nnode = \"B\"\ndir = \"x\"\nk = 2.0\n[analysis]\ncontrol = \"arc-length\"\n\
             arc = 0.1\nwatch = [\"B.x\"]\n[form]\nforce_density = 1.0\n",
        );
        for (i, _) in full.char_indices() {
            let _ = load_str(&full[..i], "m.toml", None);
            let mangled: String = full
                .chars()
                .enumerate()
                .map(|(k, c)| {
                    if k == i {
                        ['"', '[', '=', '\n', 'µ', ','][k % 6]
                    } else {
                        c
                    }
                })
                .collect();
            let _ = load_str(&mangled, "m.toml", None);
        }
        let deep = format!("a = {}{}", "[".repeat(200), "]".repeat(200));
        assert!(load_str(&deep, "m.toml", None).is_err());
        assert!(load_str("", "m.toml", None).is_err());
        assert!(load_str("\u{feff}\0\u{7}", "m.toml", None).is_err());
    }
}
