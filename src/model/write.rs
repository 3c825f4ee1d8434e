//! A model written back as a model file: the TOML format the loader reads,
//! every node and member inline, values in the model's own units. (A
//! form-finding result's member table is `form::form_csv`.)

use super::{Axis, Control, FormSettings, FormTarget, Model, RestSpec, StrainMeasure};
use std::fmt::Write;

/// A number that reads back to the same f64 (`nan` and `inf` as TOML
/// writes them).
pub(crate) fn num(v: f64) -> String {
    if v.is_nan() {
        "nan".into()
    } else if v.is_infinite() {
        if v > 0.0 { "inf".into() } else { "-inf".into() }
    } else {
        format!("{v:?}")
    }
}

/// A TOML basic string.
fn quote(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + 2);
    out.push('"');
    for c in s.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            '\n' => out.push_str("\\n"),
            '\t' => out.push_str("\\t"),
            '\r' => out.push_str("\\r"),
            c if (c as u32) < 0x20 || c as u32 == 0x7f => {
                let _ = write!(out, "\\u{:04X}", c as u32);
            }
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

fn fix_letters(fixed: [bool; 3]) -> String {
    Axis::ALL
        .iter()
        .filter(|a| fixed[a.index()])
        .map(|a| a.letter())
        .collect()
}

fn label(model: &Model, node: usize) -> String {
    model
        .nodes
        .get(node)
        .map_or_else(|| format!("#{node}"), |n| n.label.clone())
}

/// The complete model as a model file.
pub fn to_toml(model: &Model) -> String {
    let u = model.units;
    let mut s = String::new();
    if !model.title.is_empty() {
        let _ = writeln!(s, "title = {}", quote(&model.title));
    }
    let _ = writeln!(s, "\n[units]");
    let _ = writeln!(s, "force = {}", quote(u.force.name()));
    let _ = writeln!(s, "length = {}", quote(u.length.name()));

    for sec in &model.sections {
        let _ = writeln!(s, "\n[[section]]");
        let _ = writeln!(s, "name = {}", quote(&sec.name));
        let _ = writeln!(s, "EA = {}", num(u.force_out(sec.ea)));
        if let Some(w) = sec.weight {
            let _ = writeln!(s, "weight = {}", num(u.force_per_length_out(w)));
        }
        if let Some(c) = sec.tension_capacity {
            let _ = writeln!(s, "tension_capacity = {}", num(u.force_out(c)));
        }
        if let Some(c) = sec.compression_capacity {
            let _ = writeln!(s, "compression_capacity = {}", num(u.force_out(c)));
        }
    }
    for n in &model.nodes {
        let _ = writeln!(s, "\n[[node]]");
        let _ = writeln!(s, "id = {}", quote(&n.label));
        let at = n.at.map(|v| num(u.length_out(v)));
        let _ = writeln!(s, "at = [{}, {}, {}]", at[0], at[1], at[2]);
        if n.fixed.iter().any(|f| *f) {
            let _ = writeln!(s, "fix = {}", quote(&fix_letters(n.fixed)));
        }
    }
    for m in &model.members {
        let _ = writeln!(s, "\n[[member]]");
        let _ = writeln!(s, "id = {}", quote(&m.label));
        let kind = match m.kind {
            super::MemberKind::Bar => "bar",
            super::MemberKind::Cable => "cable",
            super::MemberKind::Catenary => "catenary",
        };
        let _ = writeln!(s, "kind = {}", quote(kind));
        let _ = writeln!(
            s,
            "ends = [{}, {}]",
            quote(&label(model, m.ends[0])),
            quote(&label(model, m.ends[1]))
        );
        let section = model
            .sections
            .get(m.section)
            .map_or("", |x| x.name.as_str());
        let _ = writeln!(s, "section = {}", quote(section));
        match m.rest {
            RestSpec::Geometry => {}
            RestSpec::Length(l) => {
                let _ = writeln!(s, "rest_length = {}", num(u.length_out(l)));
            }
            RestSpec::Prestress(p) => {
                let _ = writeln!(s, "prestress = {}", num(u.force_out(p)));
            }
        }
        if let Some(q) = m.force_density {
            let _ = writeln!(s, "force_density = {}", num(u.force_per_length_out(q)));
        }
        match m.target {
            None => {}
            Some(FormTarget::Force(t)) => {
                let _ = writeln!(s, "target_force = {}", num(u.force_out(t)));
            }
            Some(FormTarget::Length(l)) => {
                let _ = writeln!(s, "target_length = {}", num(u.length_out(l)));
            }
        }
    }
    for sp in &model.springs {
        let _ = writeln!(s, "\n[[spring]]");
        let _ = writeln!(s, "node = {}", quote(&label(model, sp.node)));
        let _ = writeln!(s, "dir = \"{}\"", sp.axis.letter());
        let _ = writeln!(s, "k = {}", num(u.force_per_length_out(sp.k)));
    }
    for l in &model.loads {
        let _ = writeln!(s, "\n[[load]]");
        let _ = writeln!(s, "node = {}", quote(&label(model, l.node)));
        let f = l.force.map(|v| num(u.force_out(v)));
        let _ = writeln!(s, "force = [{}, {}, {}]", f[0], f[1], f[2]);
    }

    let a = &model.analysis;
    let _ = writeln!(s, "\n[analysis]");
    let strain = match a.strain {
        StrainMeasure::Green => "green",
        StrainMeasure::Engineering => "engineering",
    };
    let _ = writeln!(s, "strain = {}", quote(strain));
    let _ = writeln!(s, "method = {}", quote(a.method.name()));
    let _ = writeln!(s, "control = {}", quote(a.control.name()));
    let _ = writeln!(s, "steps = {}", a.steps);
    let target = if a.control == Control::Displacement {
        u.length_out(a.target)
    } else {
        a.target
    };
    let _ = writeln!(s, "target = {}", num(target));
    if let Some(d) = a.max_displacement {
        let _ = writeln!(s, "max_displacement = {}", num(u.length_out(d)));
    }
    if let Some(p) = a.point {
        let _ = writeln!(s, "node = {}", quote(&label(model, p.node)));
        let _ = writeln!(s, "dir = \"{}\"", p.axis.letter());
    }
    if let Some(arc) = a.arc {
        let _ = writeln!(s, "arc = {}", num(u.length_out(arc)));
    }
    let _ = writeln!(s, "max_steps = {}", a.max_steps);
    let _ = writeln!(s, "tolerance = {}", num(a.tolerance));
    let _ = writeln!(s, "max_iterations = {}", a.max_iterations);
    let _ = writeln!(s, "max_cutbacks = {}", a.max_cutbacks);
    if !a.watch.is_empty() {
        let list: Vec<String> = a
            .watch
            .iter()
            .map(|w| quote(&format!("{}.{}", label(model, w.node), w.axis.letter())))
            .collect();
        let _ = writeln!(s, "watch = [{}]", list.join(", "));
    }
    let _ = writeln!(s, "refactor_after = {}", a.refactor_after);
    let _ = writeln!(s, "refactor_each_step = {}", a.refactor_each_step);
    let _ = writeln!(s, "stall_ratio = {}", num(a.stall_ratio));
    if let Some(n) = a.line_search {
        let _ = writeln!(s, "line_search = {n}");
    }
    if a.self_weight != super::SelfWeight::Dead {
        let _ = writeln!(s, "self_weight = {}", quote(a.self_weight.name()));
    }
    match &a.keep_fields {
        super::KeepFields::Auto => {}
        super::KeepFields::Steps(steps) => {
            let list: Vec<String> = steps.iter().map(|n| n.to_string()).collect();
            let _ = writeln!(s, "keep_fields = [{}]", list.join(", "));
        }
        k => {
            let _ = writeln!(s, "keep_fields = {}", quote(k.name()));
        }
    }
    if a.start_load_factor != 0.0 {
        let _ = writeln!(s, "start_load_factor = {}", num(a.start_load_factor));
    }
    if let Some(t) = a.displacement_tolerance {
        let _ = writeln!(s, "displacement_tolerance = {}", num(t));
    }
    if let Some(t) = a.energy_tolerance {
        let _ = writeln!(s, "energy_tolerance = {}", num(t));
    }
    let variant = if a.arc_variant_normal_plane {
        "normal-plane"
    } else {
        "cylindrical"
    };
    let _ = writeln!(s, "arc_variant = {}", quote(variant));
    let check = if a.stability_each_step {
        "every-step"
    } else {
        "on-refactor"
    };
    let _ = writeln!(s, "stability_check = {}", quote(check));
    let _ = writeln!(s, "pinpoint = {}", a.pinpoint);
    if !a.load_predictor {
        let _ = writeln!(s, "load_predictor = \"none\"");
    }
    // Branch switching and imperfection seeding (path::branch).
    if let Some(n) = a.branch.switch_at {
        let _ = writeln!(s, "switch_at = {n}");
    }
    if let Some(k) = a.branch.switch_mode {
        let _ = writeln!(s, "switch_mode = {k}");
    }
    if let Some(imp) = a.branch.imperfection {
        let _ = writeln!(s, "imperfection = {{ mode = {}, amplitude = {} }}", imp.mode, num(u.length_out(imp.amplitude)));
    }

    let f = &model.form;
    let d = FormSettings::default();
    let max_default = FormSettings::default_max_iterations(f.method);
    if f.force_density.is_some() || f.method != d.method || f.tolerance != d.tolerance || f.max_iterations != max_default {
        let _ = writeln!(s, "\n[form]");
        if let Some(q) = f.force_density {
            let _ = writeln!(s, "force_density = {}", num(u.force_per_length_out(q)));
        }
        if f.method != d.method {
            let _ = writeln!(s, "method = {}", quote(f.method.name()));
        }
        if f.tolerance != d.tolerance {
            let _ = writeln!(s, "tolerance = {}", num(f.tolerance));
        }
        if f.max_iterations != max_default {
            let _ = writeln!(s, "max_iterations = {}", f.max_iterations);
        }
    }
    s
}


#[cfg(test)]
mod tests {
    use super::to_toml;
    use crate::model::{load_str, load_texts};

    /// A model read from CSV tables is written back whole, every node,
    /// member and load inline, and reads back to the same model.
    #[test]
    fn a_model_from_csv_tables_is_written_inline() {
        let text = "nodes_csv = \"n.csv\"\nmembers_csv = \"m.csv\"\nloads_csv = \"l.csv\"\n\
                    [units]\nforce = \"kN\"\n[[section]]\nname = \"s\"\nEA = 1000.0\n\
                    [[load]]\nnode = \"B\"\nforce = [0, 0, -2]\n";
        let tables = [
            ("n.csv", "id,x,y,z,fix\nA,0,0,0,xyz\nB,1,0,0.25,\nC,2,0,0,xyz\n"),
            ("m.csv", "id,kind,end1,end2,section,prestress\nc1,cable,A,B,s,5\nc2,cable,B,C,s,5\n"),
            ("l.csv", "node,fx,fy,fz\nB,0.5,0,-1.5\n"),
        ];
        let m = load_texts(text, "m.toml", &tables).unwrap_or_else(|e| panic!("{e}"));
        let written = to_toml(&m);
        assert!(!written.contains("_csv"), "{written}");
        assert_eq!(written.matches("[[load]]").count(), 2);
        let back = load_str(&written, "formed.toml", None).unwrap_or_else(|e| panic!("{e}\n{written}"));
        assert_eq!(back.loads.len(), 2);
        for (a, b) in m.loads.iter().zip(&back.loads) {
            assert_eq!((a.node, a.force), (b.node, b.force));
        }
        assert_eq!(back.loads[1].force, [500.0, 0.0, -1500.0]);
        assert_eq!(back.n_nodes(), 3);
        assert_eq!(back.members.iter().map(|x| x.ends).collect::<Vec<_>>(), vec![[0, 1], [1, 2]]);
    }
}
