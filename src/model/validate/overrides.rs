//! Command-line overrides of `[analysis]` (`solve --method bfgs --steps 40
//! …`): the values as the user typed them, checked by the rules the file's
//! own keys meet (the same names, ranges and unit conversions as
//! `analysis`), with messages that name the flag instead of a file line.

use super::analysis::{STRAIN_NAMES, parse_strain, target_in, tolerance_in_range};
use super::nodes::parse_dir;
use super::{MAX_STEPS, suggest};
use crate::model::{Control, KeepFields, Method, Model, NodeDir};

/// Values that override a model's `[analysis]` table, as given on the
/// command line (`None` or empty: keep the model's own).
#[derive(Clone, Debug, Default)]
pub struct Overrides {
    /// `--method`: a `Method` name.
    pub method: Option<String>,
    /// `--control`: a `Control` name.
    pub control: Option<String>,
    /// `--steps`.
    pub steps: Option<usize>,
    /// `--target`: a load factor, or a displacement in model length units
    /// under displacement control.
    pub target: Option<f64>,
    /// `--arc`: the first arc length, model length units.
    pub arc: Option<f64>,
    /// `--strain`: `green` or `engineering`.
    pub strain: Option<String>,
    /// `--tolerance`.
    pub tolerance: Option<f64>,
    /// `--max-steps`.
    pub max_steps: Option<usize>,
    /// `--keep-fields`: a policy name, or step numbers separated by commas.
    pub keep_fields: Option<String>,
    /// `--watch NODE.DIR`, in order; the first is controlled when a switch to
    /// displacement control needs a point.
    pub watch: Vec<String>,
    /// `--switch-at`.
    pub switch_at: Option<usize>,
}

/// A command-line value that is not one of `names`, in the style of the
/// model file's errors: the value, then a help line with the nearest name
/// ("did you mean") and the full list.
pub fn bad_value(flag: &str, value: &str, names: &[&str]) -> String {
    format!("{flag} {value}: not a valid value\n  help: {}", suggest::choice_help(value, names))
}

impl Overrides {
    /// Applies the overrides to `model`, checking each like the model file's
    /// own value. The first bad value is the error (naming its flag). Notes
    /// for the user (which point a switch to displacement control controls)
    /// are pushed to `notes` as they arise, also when an error follows.
    pub fn apply(&self, model: &mut Model, notes: &mut Vec<String>) -> Result<(), String> {
        let o = self;
        let units = model.units;
        let a = &mut model.analysis;
        if let Some(s) = &o.method {
            a.method = Method::parse(s).ok_or_else(|| bad_value("--method", s, &Method::NAMES))?;
        }
        // `--control displacement` on a model written for another control:
        // its `target` is a load factor and its point may only be a watched
        // one, so both must be said on the command line (or the point in the
        // model).
        let mut switched_to_displacement = false;
        if let Some(s) = &o.control {
            let c = Control::parse(s).ok_or_else(|| bad_value("--control", s, &Control::NAMES))?;
            switched_to_displacement = c == Control::Displacement && a.control != Control::Displacement;
            a.control = c;
        }
        if let Some(s) = &o.strain {
            a.strain = parse_strain(s).ok_or_else(|| bad_value("--strain", s, &STRAIN_NAMES))?;
        }
        if let Some(n) = o.steps {
            a.steps = step_count("--steps", n)?;
        }
        if let Some(n) = o.max_steps {
            a.max_steps = step_count("--max-steps", n)?;
        }
        if let Some(t) = o.tolerance {
            if !tolerance_in_range(t) {
                return Err(format!("--tolerance {t}: must be in (0, 0.1]"));
            }
            a.tolerance = t;
        }
        if let Some(t) = o.target {
            // Stricter than the file's `target = 0` (a warning there): a
            // target typed on the command line that goes nowhere is a slip.
            if !t.is_finite() || t == 0.0 {
                return Err(format!("--target {t}: must be a finite, non-zero number"));
            }
            a.target = target_in(a.control, units, t);
        }
        if let Some(arc) = o.arc {
            if !(arc > 0.0 && arc.is_finite()) {
                return Err(format!("--arc {arc}: must be positive"));
            }
            a.arc = Some(units.length_in(arc));
        }
        if let Some(s) = &o.keep_fields {
            a.keep_fields = keep_fields(s)?;
        }
        if let Some(n) = o.switch_at {
            if n == 0 || n > MAX_STEPS {
                return Err(format!(
                    "--switch-at {n}: must be from 1 to {MAX_STEPS} (the Nth bifurcation met along the path, counting from 1)"
                ));
            }
            if !a.pinpoint {
                return Err(format!(
                    "--switch-at {n}: the model sets pinpoint = false; branch switching needs the bifurcation pinpointed, remove that line"
                ));
            }
            a.branch.switch_at = Some(n);
        }
        if !o.watch.is_empty() {
            let watch = o.watch.iter().map(|w| node_dir(model, w)).collect::<Result<Vec<_>, _>>()?;
            if model.analysis.point.is_none() {
                model.analysis.point = watch.first().copied();
            }
            model.analysis.watch = watch;
        }
        if switched_to_displacement {
            let ln = units.length.name();
            if o.target.is_none() {
                return Err(format!(
                    "--control displacement needs --target: the controlled displacement in {ln} (the model's target = {} is a load factor, not a displacement)",
                    model.analysis.target
                ));
            }
            if !model.analysis.point_given {
                if o.watch.is_empty() {
                    return Err(
                        "--control displacement needs the controlled point: set node and dir in [analysis], or pass --watch NODE.DIR (the first --watch is controlled)"
                            .into(),
                    );
                }
                model.analysis.point = model.analysis.watch.first().copied();
                if let Some(p) = model.analysis.point {
                    notes.push(format!("--control displacement controls {} (the first --watch)", model.node_dir_label(p)));
                }
            }
        }
        let a = &model.analysis;
        if a.control == Control::Displacement {
            match a.point {
                None => return Err("displacement control needs a controlled point: set node and dir in [analysis]".into()),
                Some(p) if model.nodes[p.node].fixed[p.axis.index()] => {
                    return Err(format!(
                        "the controlled point {} is supported; choose a free direction",
                        model.node_dir_label(p)
                    ));
                }
                _ => {}
            }
        }
        Ok(())
    }
}

/// `--steps` / `--max-steps`: from 1 to [`MAX_STEPS`], as `steps` and
/// `max_steps` in the file.
fn step_count(flag: &str, n: usize) -> Result<usize, String> {
    if n == 0 || n > MAX_STEPS {
        return Err(format!("{flag} {n}: must be from 1 to {MAX_STEPS}"));
    }
    Ok(n)
}

/// `--watch NODE.DIR`.
fn node_dir(m: &Model, s: &str) -> Result<NodeDir, String> {
    let (node, dir) = s.rsplit_once('.').ok_or_else(|| format!("--watch {s}: expected NODE.DIR, e.g. A2.z"))?;
    let node = m.node_index(node).ok_or_else(|| format!("--watch {s}: no node \"{node}\" in the model"))?;
    let axis = parse_dir(dir).ok_or_else(|| format!("--watch {s}: direction must be x, y or z"))?;
    Ok(NodeDir { node, axis })
}

/// `--keep-fields`: a policy name, or step numbers separated by commas, each
/// from 0 to [`MAX_STEPS`] as in the file's `keep_fields = [...]`.
fn keep_fields(s: &str) -> Result<KeepFields, String> {
    if let Some(k) = KeepFields::parse(s) {
        return Ok(k);
    }
    let names = KeepFields::NAMES.join(", ");
    if !s.starts_with(|c: char| c.is_ascii_digit()) {
        return Err(format!("--keep-fields {s}: expected one of {names}, or step numbers such as 0,5,10"));
    }
    s.split(',')
        .map(|p| match p.trim().parse::<usize>() {
            Ok(n) if n <= MAX_STEPS => Ok(n),
            _ => Err(format!("--keep-fields {s}: {p:?} is not a step number from 0 to {MAX_STEPS}; write e.g. 0,5,10")),
        })
        .collect::<Result<Vec<_>, _>>()
        .map(KeepFields::steps)
}
