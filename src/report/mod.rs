//! Writers of the output files. Every file is written whole or not at all:
//! all files of a run are first written under temporary names in the output
//! folder, then renamed into place.

pub mod fields;
pub mod figures;
pub mod numbers;
pub mod html;
pub mod plot;
pub mod png;
mod run;

pub use run::{RunOutput, WriteError, WriteOptions, Written, write_run};

use crate::results::{MemberOut, Results};
use std::fmt::Write as _;
use std::io;
use std::path::{Path, PathBuf};

/// Files staged under temporary names, renamed together by [`Staged::commit`].
#[derive(Default)]
pub struct Staged {
    files: Vec<(PathBuf, PathBuf)>,
}

impl Staged {
    /// Writes `contents` to a temporary file beside `dir/name`.
    pub fn add(&mut self, dir: &Path, name: &str, contents: &[u8]) -> io::Result<()> {
        let final_path = dir.join(name);
        let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
        std::fs::write(&tmp, contents)?;
        self.files.push((tmp, final_path));
        Ok(())
    }

    /// Streams a file to a temporary name beside `dir/name` through a
    /// buffered writer: for files too large to build in memory first.
    pub fn add_with(
        &mut self,
        dir: &Path,
        name: &str,
        write: impl FnOnce(&mut io::BufWriter<std::fs::File>) -> io::Result<()>,
    ) -> io::Result<()> {
        let final_path = dir.join(name);
        let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
        // Registered first, so a failed write is removed by `drop`.
        self.files.push((tmp.clone(), final_path));
        let mut w = io::BufWriter::with_capacity(1 << 20, std::fs::File::create(&tmp)?);
        write(&mut w)?;
        w.into_inner().map_err(|e| e.into_error())?;
        Ok(())
    }

    /// Renames every staged file into place.
    pub fn commit(mut self) -> io::Result<Vec<PathBuf>> {
        let mut done = Vec::new();
        for (tmp, path) in std::mem::take(&mut self.files) {
            std::fs::rename(&tmp, &path)?;
            done.push(path);
        }
        Ok(done)
    }
}

impl Drop for Staged {
    fn drop(&mut self) {
        // Not committed: leave nothing half-written behind.
        for (tmp, _) in &self.files {
            let _ = std::fs::remove_file(tmp);
        }
    }
}

/// `results.json`.
pub fn results_json(results: &Results) -> String {
    serde_json::to_string_pretty(results).expect("results serialize") + "\n"
}

/// Formats a number so it reads back exactly (shortest round-trip form).
fn num(v: f64) -> String {
    format!("{v:?}")
}

/// `path.csv`: header `step,load_factor,<watch...>`, displacements in model units.
pub fn path_csv(results: &Results) -> String {
    let mut s = String::from("step,load_factor");
    for w in &results.watch {
        s.push(',');
        s.push_str(w);
    }
    s.push('\n');
    for st in &results.steps {
        let _ = write!(s, "{},{}", st.step, num(st.load_factor));
        for v in &st.watched {
            let _ = write!(s, ",{}", num(*v));
        }
        s.push('\n');
    }
    s
}

use crate::csv::field as csv_field;

/// `members.csv`: final force, strain, length, utilisation and slack flag.
pub fn members_csv(members: &[MemberOut], force_unit: &str, length_unit: &str) -> String {
    let mut s = format!("id,kind,force_{force_unit},strain,length_{length_unit},utilisation,slack\n");
    for m in members {
        let _ = writeln!(
            s,
            "{},{},{},{},{},{},{}",
            csv_field(&m.id),
            m.kind,
            num(m.force),
            num(m.strain),
            num(m.length),
            m.utilisation.map(num).unwrap_or_default(),
            m.slack
        );
    }
    s
}
