//! `fields.csv` and `critical_fields.csv`: whole displacement fields in long
//! format, one row per node and kept state, model length units.
//!
//! These files can hold millions of rows (a 1M-DOF net writes about 330,000
//! rows per kept step), so they are streamed through a buffered writer
//! instead of built as one string, and the node labels are escaped once.

use super::{csv_field, num};
use crate::model::Model;
use crate::results::{CriticalState, Dofs, State};
use std::io::{self, Write};

/// Header of `fields.csv`.
pub const FIELDS_HEADER: &str = "step,load_factor,node,ux,uy,uz";
/// Header of `critical_fields.csv`: `critical` is the index into
/// `results.json`'s `critical_points`, `step` the first converged step past it.
pub const CRITICAL_FIELDS_HEADER: &str = "critical,step,load_factor,node,ux,uy,uz";

/// Node labels as CSV fields, computed once for every kept state.
pub struct NodeLabels(Vec<String>);

impl NodeLabels {
    pub fn of(model: &Model) -> NodeLabels {
        NodeLabels(model.nodes.iter().map(|n| csv_field(&n.label)).collect())
    }
}

/// One row per node: `prefix`, the node, its three displacements in model
/// length units (0 in supported directions). Each row is formatted into one
/// reused line and written with one call: formatting straight into the
/// buffered file costs a call per piece.
fn rows(w: &mut impl Write, prefix: &str, labels: &NodeLabels, dofs: &impl Dofs, u: &[f64], to_si: f64) -> io::Result<()> {
    use std::fmt::Write as _;
    let mut line = String::with_capacity(128);
    for (node, label) in labels.0.iter().enumerate() {
        line.clear();
        line.push_str(prefix);
        line.push_str(label);
        for a in 0..3 {
            match dofs.dof(node, a) {
                Some(d) => {
                    let _ = write!(line, ",{:?}", u[d] / to_si);
                }
                None => line.push_str(",0.0"),
            }
        }
        line.push('\n');
        w.write_all(line.as_bytes())?;
    }
    Ok(())
}

/// `fields.csv`: the kept steps in ascending order.
pub fn fields_csv<'s>(
    w: &mut impl Write,
    model: &Model,
    dofs: &impl Dofs,
    labels: &NodeLabels,
    kept: impl IntoIterator<Item = impl Into<State<'s>>>,
) -> io::Result<()> {
    writeln!(w, "{FIELDS_HEADER}")?;
    let to_si = model.units.length.to_si();
    for f in kept {
        let f: State = f.into();
        let prefix = format!("{},{},", f.step, num(f.lambda));
        rows(w, &prefix, labels, dofs, f.u, to_si)?;
    }
    Ok(())
}

/// `critical_fields.csv`: the pinpointed critical states that kept a field.
pub fn critical_fields_csv<'s>(
    w: &mut impl Write,
    model: &Model,
    dofs: &impl Dofs,
    labels: &NodeLabels,
    critical: impl IntoIterator<Item = impl Into<CriticalState<'s>>>,
) -> io::Result<()> {
    writeln!(w, "{CRITICAL_FIELDS_HEADER}")?;
    let to_si = model.units.length.to_si();
    for (i, c) in critical.into_iter().enumerate() {
        let c: CriticalState = c.into();
        if let Some(u) = c.field {
            let prefix = format!("{i},{},{},", c.step, num(c.lambda));
            rows(w, &prefix, labels, dofs, u, to_si)?;
        }
    }
    Ok(())
}

/// Header of `critical_modes.csv`: `critical` is the index into
/// `results.json`'s `critical_points`; a point of multiplicity m has m modes,
/// written one after the other under the same index.
pub const CRITICAL_MODES_HEADER: &str = "critical,load_factor,node,ux,uy,uz";

/// `critical_modes.csv`: every mode of every critical point, one row per
/// node. Each mode has unit Euclidean norm over the free DOFs (a shape, not a
/// length: written as it is, whatever the model's length unit); supported
/// directions are 0.
pub(crate) fn critical_modes_csv<'s>(
    w: &mut impl Write,
    dofs: &impl Dofs,
    labels: &NodeLabels,
    critical: impl IntoIterator<Item = impl Into<CriticalState<'s>>>,
) -> io::Result<()> {
    writeln!(w, "{CRITICAL_MODES_HEADER}")?;
    for (i, c) in critical.into_iter().enumerate() {
        let c: CriticalState = c.into();
        let prefix = format!("{i},{},", num(c.lambda));
        for phi in c.modes {
            rows(w, &prefix, labels, dofs, phi, 1.0)?;
        }
    }
    Ok(())
}
