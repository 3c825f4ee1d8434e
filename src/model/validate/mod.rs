//! ModelFile → Model: resolve labels to indices, convert to SI and check
//! everything, collecting every problem (up to a cap) before failing.
//!
//! TOML entries and CSV rows are first put into the same raw shape
//! (`RawNode`, `RawMember`, `RawLoad`) and then go through the same
//! checks, so a row of `members.csv` is held to exactly the rules of a
//! `[[member]]` table. The CSV tables themselves are read in `tables`.

mod analysis;
mod build;
mod context;
mod csv;
mod csv_given;
mod form;
mod load_file;
mod loads;
mod members;
mod nodes;
mod overrides;
mod refs;
mod springs;
pub(crate) mod suggest;
mod tables;
#[cfg(test)]
mod tests;
mod units;

pub use load_file::{LoadCase, load_case};
pub use overrides::{Overrides, bad_value};

use std::path::Path;

use super::file::{LineIndex, ModelFile, lower_first};
use super::{Diagnostic, Model, ModelErrors};
use build::build;
use context::{Ctx, Toml};

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
