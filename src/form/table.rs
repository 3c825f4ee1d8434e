//! `form.csv`: the member table of a form-finding result, in the model's
//! units.

use super::FormResult;
use crate::csv::field as csv_field;
use crate::model::Model;
use crate::model::write::num;
use std::fmt::Write;

/// Member table of a form-finding result, in the model's units:
/// `id,force_<F>,length_<L>,force_density_<F>/<L>`.
pub fn form_csv(model: &Model, form: &FormResult) -> String {
    let u = model.units;
    let (f, l) = (u.force.name(), u.length.name());
    let mut s = format!("id,force_{f},length_{l},force_density_{f}/{l}\n");
    for (m, member) in model.members.iter().enumerate() {
        let cell =
            |v: Option<&f64>, out: &dyn Fn(f64) -> f64| v.map_or(String::new(), |x| num(out(*x)));
        let _ = writeln!(
            s,
            "{},{},{},{}",
            csv_field(&member.label),
            cell(form.forces.get(m), &|x| u.force_out(x)),
            cell(form.lengths.get(m), &|x| u.length_out(x)),
            cell(form.force_densities.get(m), &|x| u.force_per_length_out(x)),
        );
    }
    s
}
