//! The failure path of `verify`: a wrong value and a NaN must fail their
//! case, show as FAIL in the table and make [`all_pass`] false (exit 4 in
//! the binary; tests/report.rs checks that end to end).

use super::*;

/// A case whose reference is the engineering-strain arch limit (the
/// closed form, not a number typed in) and whose "computed" value is given.
fn arch_case_with(computed: Result<f64, String>) -> Case {
    let reference = ARCH.limit(false).0 / 1.0e3;
    Case::new("arch", "derived", "limit load", "kN", reference, computed, 1e-6)
}

#[test]
fn a_right_value_passes() {
    let r = ARCH.limit(false).0 / 1.0e3;
    let c = arch_case_with(Ok(r * (1.0 + 1e-9)));
    assert!(c.pass && c.relative_error < 1e-8, "{c:?}");
    assert!(all_pass(&[c]));
}

#[test]
fn a_wrong_value_fails_and_is_reported() {
    let r = ARCH.limit(false).0 / 1.0e3;
    let good = arch_case_with(Ok(r));
    // 2e-6 off against a 1e-6 tolerance: just outside.
    let bad = arch_case_with(Ok(r * (1.0 + 2e-6)));
    assert!(!bad.pass && (bad.relative_error - 2e-6).abs() < 1e-9, "{bad:?}");
    let cases = [good, bad];
    assert!(!all_pass(&cases));
    let text = table(&cases);
    assert!(text.contains("1 of 2 cases pass"), "{text}");
    assert_eq!(text.matches("FAIL").count(), 1, "{text}");
}

#[test]
fn a_nan_or_missing_value_fails() {
    let nan = arch_case_with(Ok(f64::NAN));
    assert!(!nan.pass, "{nan:?}");
    let missing = arch_case_with(Err("did not reach the target".into()));
    assert!(!missing.pass && missing.computed.is_nan(), "{missing:?}");
    let cases = [nan, missing];
    assert!(!all_pass(&cases));
    let text = table(&cases);
    assert!(text.contains("0 of 2 cases pass") && text.contains("FAIL (did not reach the target)"), "{text}");
    // JSON keeps the failure: NaN is written as null, pass as false.
    let json = serde_json::to_value(&cases).unwrap();
    assert_eq!(json[0]["pass"], false);
    assert!(json[0]["computed"].is_null());
}

#[test]
fn injected_faults_fail_their_case_and_a_bad_spec_fails_the_run() {
    let r = ARCH.limit(false).0 / 1.0e3;
    let base = || vec![arch_case_with(Ok(r)), Case::new("other", "derived", "q", "N", 1.0, Ok(1.0), 1e-9)];
    for fault in ["wrong", "nan"] {
        let mut cases = base();
        assert!(all_pass(&cases));
        inject_fault(&mut cases, &format!("arch={fault}"));
        assert_eq!(cases.len(), 2);
        assert!(!cases[0].pass && cases[1].pass, "{fault}: {cases:?}");
        assert!(cases[0].note.as_deref().is_some_and(|n| n.contains(FAULT_VAR)));
    }
    for spec in ["arhc=wrong", "arch=slightly", "arch"] {
        let mut cases = base();
        inject_fault(&mut cases, spec);
        assert_eq!(cases.len(), 3, "{spec}");
        assert!(!all_pass(&cases), "{spec}");
    }
}
