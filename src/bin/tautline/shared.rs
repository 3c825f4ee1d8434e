//! What the commands share: the failure every command returns, loading a
//! model file, preparing an output folder, and the counts `check` reports.
//! It imports no command file, so the commands depend on it and never on
//! each other's internals.

use crate::args::Format;
use crate::exit;
use std::path::Path;
use tautline::model::{self, MemberKind, Model};

/// Why a command failed, and so its exit code.
pub enum Failure {
    /// The input is wrong: exit 2, nothing written.
    BadInput(String),
    /// The model file is wrong (every problem found): exit 2, nothing written.
    Model(model::ModelErrors),
    Internal(anyhow::Error),
}

impl Failure {
    pub fn exit_code(&self) -> u8 {
        match self {
            Failure::BadInput(_) | Failure::Model(_) => exit::BAD_INPUT,
            Failure::Internal(_) => exit::INTERNAL,
        }
    }
}

impl From<anyhow::Error> for Failure {
    fn from(e: anyhow::Error) -> Self {
        Failure::Internal(e)
    }
}

/// Loads a model; in text mode its warnings go to stderr (JSON output
/// carries them in the summary).
pub fn load(path: &Path, format: Format) -> Result<Model, Failure> {
    let m = model::load(path).map_err(Failure::Model)?;
    if format == Format::Text {
        for w in &m.warnings {
            eprintln!("warning: {w}");
        }
    }
    Ok(m)
}

/// What `check` reports about a model.
pub struct Counts {
    pub nodes: usize,
    pub supported: usize,
    pub fixed: usize,
    pub members: usize,
    pub bars: usize,
    pub cables: usize,
    pub catenaries: usize,
    pub springs: usize,
    pub loads: usize,
    pub free_dofs: usize,
}

impl Counts {
    pub fn of(m: &Model) -> Counts {
        let bars = m.members.iter().filter(|x| x.kind == MemberKind::Bar).count();
        let catenaries = m.members.iter().filter(|x| x.kind == MemberKind::Catenary).count();
        Counts {
            nodes: m.n_nodes(),
            supported: m.nodes.iter().filter(|n| n.fixed.iter().any(|f| *f)).count(),
            fixed: m.n_fixed(),
            members: m.n_members(),
            bars,
            cables: m.n_members() - bars - catenaries,
            catenaries,
            springs: m.springs.len(),
            loads: m.loads.len(),
            free_dofs: 3 * m.n_nodes() - m.n_fixed(),
        }
    }
}

/// The model file named in an existing `DIR/results.json`, if any.
fn previous_model(out: &Path) -> Option<String> {
    let text = std::fs::read_to_string(out.join("results.json")).ok()?;
    let v: serde_json::Value = serde_json::from_str(&text).ok()?;
    v.get("model_file")?.as_str().map(str::to_string)
}

pub fn prepare_out_dir(out: &Path, model_path: Option<&Path>, this_model: &str, force: bool) -> Result<(), Failure> {
    if !force
        && let Some(prev) = previous_model(out)
        && prev != this_model
    {
        return Err(Failure::BadInput(format!(
            "{}: holds the results of another model ({prev}); choose another -o DIR or pass --force to overwrite them",
            out.display()
        )));
    }
    if out.exists() && !out.is_dir() {
        return Err(Failure::BadInput(format!(
            "{}: the output path exists and is not a folder; choose another -o DIR",
            out.display()
        )));
    }
    if let Some(mp) = model_path
        && mp.canonicalize().ok() == out.canonicalize().ok()
    {
        return Err(Failure::BadInput("the output folder may not be the model file".into()));
    }
    std::fs::create_dir_all(out).map_err(|e| {
        Failure::BadInput(format!("{}: cannot create the output folder: {e}", out.display()))
    })
}
