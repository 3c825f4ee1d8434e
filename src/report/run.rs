//! Every output file of a `solve` run, written in one go: the numbers
//! (`results.json`, `path.csv`, `members.csv`), the field files streamed from
//! the run's states, the figures (SVG, and PNG when asked) and `report.html`,
//! staged under temporary names and renamed together.

use super::figures::{self, FigureOptions};
use super::{Staged, fields, html, members_csv, path_csv, png, results_json};
use crate::model::Model;
use crate::results::{self, Fields, MemberOut, Results};
use std::fmt;
use std::io;
use std::path::{Path, PathBuf};

/// What a run's report is written from: all of it plain data built by
/// `results` (the run's states read through [`Fields`]).
pub struct RunOutput<'a> {
    pub results: &'a Results,
    /// Final member states, as in `members.csv`.
    pub members: &'a [MemberOut],
    pub fields: &'a Fields<'a>,
}

/// How the report is drawn.
#[derive(Clone, Debug, Default)]
pub struct WriteOptions {
    /// Also write each figure as PNG.
    pub png: bool,
    pub figures: FigureOptions,
}

/// What [`write_run`] wrote.
#[derive(Debug)]
pub struct Written {
    /// The files, in the order they were staged.
    pub files: Vec<PathBuf>,
    /// Figures asked for or drawn that could not be (each file is left out;
    /// the numbers are written regardless).
    pub warnings: Vec<String>,
}

/// A file that could not be written: nothing of the run is left behind.
#[derive(Debug)]
pub enum WriteError {
    /// Writing the file at `path` (under its temporary name) failed.
    File { path: PathBuf, error: io::Error },
    /// Renaming the staged files into `dir` failed.
    Commit { dir: PathBuf, error: io::Error },
}

impl fmt::Display for WriteError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            WriteError::File { path, error } => write!(f, "writing {}: {error}", path.display()),
            WriteError::Commit { dir, error } => write!(f, "renaming output files into {}: {error}", dir.display()),
        }
    }
}

impl std::error::Error for WriteError {
    fn source(&self) -> Option<&(dyn std::error::Error + 'static)> {
        match self {
            WriteError::File { error, .. } | WriteError::Commit { error, .. } => Some(error),
        }
    }
}

/// Writes every output file of a run into `dir` (which must exist).
pub fn write_run(dir: &Path, model: &Model, run: &RunOutput, options: &WriteOptions) -> Result<Written, WriteError> {
    let RunOutput { results: res, members, fields } = *run;
    let failed = |name: &str| {
        let path = dir.join(name);
        move |error| WriteError::File { path, error }
    };
    let mut staged = Staged::default();
    let write = |staged: &mut Staged, name: &str, text: &str| staged.add(dir, name, text.as_bytes()).map_err(failed(name));
    write(&mut staged, "results.json", &results_json(res))?;
    write(&mut staged, "path.csv", &path_csv(res))?;
    write(&mut staged, "members.csv", &members_csv(members, model.units.force.name(), model.units.length.name()))?;
    let labels = fields::NodeLabels::of(model);
    staged.add_with(dir, results::FIELDS_FILE, |w| fields::fields_csv(w, model, fields, &labels, fields.kept())).map_err(failed(results::FIELDS_FILE))?;
    staged
        .add_with(dir, results::CRITICAL_FIELDS_FILE, |w| fields::critical_fields_csv(w, model, fields, &labels, fields.critical()))
        .map_err(failed(results::CRITICAL_FIELDS_FILE))?;
    staged
        .add_with(dir, results::CRITICAL_MODES_FILE, |w| fields::critical_modes_csv(w, fields, &labels, fields.critical()))
        .map_err(failed(results::CRITICAL_MODES_FILE))?;
    // Plots: a plot that cannot be drawn is reported and left out; the
    // numbers above are written regardless.
    let (plots, mut warnings) = figures::solve_plots(model, fields, res, members, &options.figures);
    let mut drawn = Vec::new();
    for p in plots {
        let name = p.file.clone().unwrap_or_else(|| "a report figure".into());
        match p.svg {
            Ok(text) => {
                if let Some(file) = &p.file {
                    if options.png {
                        let png_name = file.replace(".svg", ".png");
                        match png::svg_to_png(&text) {
                            Ok(bytes) => staged.add(dir, &png_name, &bytes).map_err(failed(&png_name))?,
                            Err(e) => warnings.push(format!("{png_name} not drawn: {e}")),
                        }
                    }
                    write(&mut staged, file, &text)?;
                }
                drawn.push((p.caption, text));
            }
            Err(e) => warnings.push(format!("{name} not drawn: {e}")),
        }
    }
    let figures: Vec<html::Figure> = drawn.iter().map(|(caption, svg)| html::Figure { caption, svg }).collect();
    write(&mut staged, "report.html", &html::report_html(model, res, members, &figures))?;
    let files = staged.commit().map_err(|error| WriteError::Commit { dir: dir.to_path_buf(), error })?;
    Ok(Written { files, warnings })
}
