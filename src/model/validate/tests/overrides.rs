//! Command-line overrides of `[analysis]` (`Overrides::apply`): held to the
//! file's rules, errors naming the flag.

use super::super::*;
use crate::model::*;
use super::{BASE, ok};

fn apply(o: &Overrides) -> (Result<Model, String>, Vec<String>) {
    let mut m = ok(BASE);
    let mut notes = Vec::new();
    let r = o.apply(&mut m, &mut notes).map(|()| m);
    (r, notes)
}

#[test]
fn good_values_replace_the_files() {
    let o = Overrides {
        method: Some("bfgs".into()),
        strain: Some("engineering".into()),
        steps: Some(7),
        tolerance: Some(1e-6),
        keep_fields: Some("0,3".into()),
        ..Overrides::default()
    };
    let (m, notes) = apply(&o);
    let a = m.expect("valid overrides").analysis;
    assert_eq!((a.method, a.strain, a.steps, a.tolerance), (Method::Bfgs, StrainMeasure::Engineering, 7, 1e-6));
    assert_eq!(a.keep_fields, KeepFields::steps(vec![0, 3]));
    assert!(notes.is_empty());
}

#[test]
fn bad_values_are_refused_by_the_files_rules() {
    let cases = [
        (Overrides { steps: Some(0), ..Overrides::default() }, "--steps 0"),
        (Overrides { max_steps: Some(MAX_STEPS + 1), ..Overrides::default() }, "--max-steps"),
        (Overrides { tolerance: Some(0.5), ..Overrides::default() }, "--tolerance 0.5"),
        (Overrides { strain: Some("gren".into()), ..Overrides::default() }, "--strain gren"),
        (Overrides { watch: vec!["B.q".into()], ..Overrides::default() }, "--watch B.q"),
        (Overrides { keep_fields: Some("0,x".into()), ..Overrides::default() }, "--keep-fields 0,x"),
    ];
    for (o, flag) in cases {
        let err = apply(&o).0.expect_err(flag);
        assert!(err.starts_with(flag), "{flag}: {err}");
    }
    // The nearest name is suggested, as for a value in the file.
    let err = apply(&Overrides { strain: Some("gren".into()), ..Overrides::default() }).0.unwrap_err();
    assert!(err.contains("green"), "{err}");
}

#[test]
fn a_switch_to_displacement_control_takes_the_first_watch_and_says_so() {
    let o = Overrides {
        control: Some("displacement".into()),
        target: Some(0.01),
        watch: vec!["B.x".into()],
        ..Overrides::default()
    };
    let (m, notes) = apply(&o);
    let m = m.expect("a free watched direction");
    let p = m.analysis.point.expect("a controlled point");
    assert_eq!(m.node_dir_label(p), "B.x");
    assert_eq!(m.analysis.target, m.units.length_in(0.01));
    assert_eq!(notes.len(), 1, "{notes:?}");
    assert!(notes[0].contains("B.x"), "{notes:?}");
    // A supported direction cannot be controlled; the note still comes first.
    let o = Overrides { watch: vec!["B.y".into()], ..o };
    let (m, notes) = apply(&o);
    assert!(m.unwrap_err().contains("supported"));
    assert_eq!(notes.len(), 1);
}
