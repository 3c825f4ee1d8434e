//! Built-in textbook cases: each solves a small model with the real solver
//! and compares one quantity with its closed form, citing where the closed
//! form comes from. `tautline verify` prints them as a table; engineers
//! attach it to show the tool checks out on their machine.
//!
//! To add a case, write a function returning a [`Case`] and list it in
//! [`CASES`]. The closed forms are public so the integration tests check
//! the same formulas.

use crate::assembly::System;
use crate::model::{self, Model};
use crate::observe::Silent;
use crate::path::{CriticalKind, EquilibriumPath, StopReason};
use crate::solver::Solver;
use serde::Serialize;

/// One checked quantity.
#[derive(Clone, Debug, Serialize)]
pub struct Case {
    pub name: String,
    /// Where the closed form comes from: author, title, year, section.
    pub source: String,
    pub quantity: String,
    pub unit: String,
    pub reference: f64,
    /// From the solver; NaN when the run gave no value (the case fails).
    pub computed: f64,
    pub relative_error: f64,
    pub tolerance: f64,
    pub pass: bool,
    /// Why the case failed without a value, if it did.
    pub note: Option<String>,
}

impl Case {
    /// Compares a computed value (or the error that kept the run from one)
    /// with its reference: relative error against the tolerance. A missing
    /// or NaN value fails.
    pub fn new(name: &str, source: &str, quantity: &str, unit: &str, reference: f64, computed: Result<f64, String>, tolerance: f64) -> Case {
        let (computed, note) = match computed {
            Ok(v) => (v, None),
            Err(e) => (f64::NAN, Some(e)),
        };
        let relative_error = (computed - reference).abs() / reference.abs().max(f64::MIN_POSITIVE);
        Case {
            name: name.into(),
            source: source.into(),
            quantity: quantity.into(),
            unit: unit.into(),
            reference,
            computed,
            relative_error,
            tolerance,
            // NaN compares false: a missing value fails.
            pass: relative_error <= tolerance,
            note,
        }
    }
}

/// Every case, in table order.
pub const CASES: &[fn() -> Case] = &[
    arch_limit_engineering,
    arch_limit_green,
    pretensioned_cable_deflection,
    determinate_truss_force,
    force_density_chain_sag,
    braced_strut_bifurcation,
    snap_back_limit,
    elastic_catenary_support_force,
    steep_arch_bifurcation_before_limit,
    steep_arch_limit_after_bifurcation,
    steep_arch_bifurcation_after_limit,
    square_pyramid_double_bifurcation,
    snap_back_turning_point,
];

/// The variable that makes one case fail on purpose, to test the failure
/// path of `tautline verify` end to end: `<case name>=wrong` multiplies its
/// computed value by 1.01, `<case name>=nan` replaces it with NaN. The case
/// is marked as injected in its note, so a table made this way says so.
pub const FAULT_VAR: &str = "TAUTLINE_VERIFY_FAULT";

/// Runs every case (with the fault of [`FAULT_VAR`] applied, if set).
pub fn run_all() -> Vec<Case> {
    let mut cases: Vec<Case> = CASES.iter().map(|case| case()).collect();
    if let Ok(spec) = std::env::var(FAULT_VAR) {
        inject_fault(&mut cases, &spec);
    }
    cases
}

/// Whether every case passed: the exit status of `tautline verify`.
pub fn all_pass(cases: &[Case]) -> bool {
    cases.iter().all(|c| c.pass)
}

/// Applies a [`FAULT_VAR`] spec to `cases`. A spec naming no case or no
/// known fault adds a failing case saying so: a mistyped spec never lets a
/// run pass unnoticed.
pub fn inject_fault(cases: &mut Vec<Case>, spec: &str) {
    let (name, fault) = spec.rsplit_once('=').unwrap_or((spec, ""));
    let value = |c: &Case| match fault {
        "wrong" => Some(Ok(c.computed * 1.01)),
        "nan" => Some(Ok(f64::NAN)),
        _ => None,
    };
    let hit = cases.iter().position(|c| c.name == name);
    match hit.and_then(|i| value(&cases[i]).map(|v| (i, v))) {
        Some((i, v)) => {
            let c = &cases[i];
            let mut faulty = Case::new(&c.name, &c.source, &c.quantity, &c.unit, c.reference, v, c.tolerance);
            faulty.note = Some(format!("fault injected by {FAULT_VAR}"));
            cases[i] = faulty;
        }
        None => cases.push(Case::new(
            FAULT_VAR,
            "-",
            "fault spec",
            "-",
            0.0,
            Err(format!("'{spec}' names no case or no fault; use <case name>=wrong or <case name>=nan")),
            0.0,
        )),
    }
}

const SOURCE_ARCH: &str = "Z. P. Bazant, L. Cedolin, Stability of Structures, 1st ed., Oxford University Press, 1991, sec. 4.4, eq. 4.4.5";
const SOURCE_ARCH_GREEN: &str = "derived: Green-Lagrange crown equilibrium P = EA z (h^2 - z^2)/l0^3, limit where dP/dz = 0; \
     the arch of Z. P. Bazant, L. Cedolin, Stability of Structures, 1st ed., Oxford University Press, 1991, sec. 4.4";

mod closed_forms;
mod models;
#[cfg(test)]
mod tests;

pub use closed_forms::{
    ARCH, Arch, STEEP, STEEP_LOAD, braced_strut_critical_load, chain_height, irvine_span_rise,
    pretensioned_cable_deflection_closed_form, snap_back_turning_load, steep_bifurcation_loads, steep_limit_load,
    steep_load,
};
pub use models::{
    DETERMINATE_TRUSS, PRETENSIONED_CABLE, braced_strut, braced_strut_case_model, spring_arch, steep_crown,
    two_bar_arch,
};
use models::{arch_text, steep_arc};

fn load(text: &str, name: &str) -> Result<Model, String> {
    model::load_str(text, name, None).map_err(|e| format!("built-in model invalid: {e}"))
}

/// Traces a model's path with its own corrector, observing nothing.
fn trace(m: &Model) -> Result<EquilibriumPath, String> {
    let solver = Solver::with_parallelism(m, faer::Par::Seq).map_err(|e| e.to_string())?;
    Ok(solver.trace(&mut Silent).path)
}

fn reached(path: &EquilibriumPath) -> Result<(), String> {
    if path.stop == StopReason::TargetReached { Ok(()) } else { Err(format!("run stopped: {:?}", path.stop)) }
}

fn first_limit(path: &EquilibriumPath) -> Result<f64, String> {
    path.critical
        .iter()
        .find(|c| c.kind == CriticalKind::Limit)
        .map(|c| c.lambda)
        .ok_or_else(|| "no limit point found".to_string())
}

fn arch_case(green: bool) -> Case {
    let strain = if green { "green" } else { "engineering" };
    let computed = load(&arch_text(strain), "arch.toml").and_then(|m| trace(&m)).and_then(|p| {
        reached(&p)?;
        Ok(first_limit(&p)? * 1.0e6 / 1.0e3)
    });
    Case::new(
        &format!("two-bar arch, {strain} strain"),
        if green { SOURCE_ARCH_GREEN } else { SOURCE_ARCH },
        "limit load (arc-length, pinpointed)",
        "kN",
        ARCH.limit(green).0 / 1.0e3,
        computed,
        1e-6,
    )
}

fn arch_limit_engineering() -> Case {
    arch_case(false)
}

fn arch_limit_green() -> Case {
    arch_case(true)
}

fn pretensioned_cable_deflection() -> Case {
    let text = PRETENSIONED_CABLE;
    let computed = load(text, "cable.toml").and_then(|m| trace(&m)).and_then(|p| {
        reached(&p)?;
        Ok(-p.points.last().map(|pt| pt.point).unwrap_or(f64::NAN) * 1e3)
    });
    Case::new(
        "pretensioned cable, midspan load 1 kN",
        "closed form derived from equilibrium of the loaded node: P = 2 EA (l_c - L_r)/L_r * w/l_c (no literature value claimed)",
        "midspan deflection",
        "mm",
        pretensioned_cable_deflection_closed_form(5.0, 1.0e6, 1.0e4, 1000.0) * 1e3,
        computed,
        1e-8,
    )
}

fn determinate_truss_force() -> Case {
    // A(0,0) pinned, B(3,0), C(6,0) roller, D(3,4); P = 1 N down at B.
    // Joints B and D give BD = P (small strains keep geometric effects far
    // below the tolerance).
    let text = DETERMINATE_TRUSS;
    let computed = load(text, "truss.toml").and_then(|m| {
        let system = System::new(&m).map_err(|e| e.message.clone())?;
        let p = trace(&m)?;
        reached(&p)?;
        let i = m.members.iter().position(|x| x.label == "AD").ok_or("no member AD")?;
        Ok(system.member_results(&p.final_state.u)[i].force)
    });
    Case::new(
        "determinate plane truss",
        "derived (method of joints at B, D and A: BD = P, AD = DC = -5P/8, AB = BC = 3P/8)",
        "force in diagonal AD (-5P/8)",
        "N",
        -5.0 / 8.0,
        computed,
        1e-6,
    )
}

fn force_density_chain_sag() -> Case {
    let (n, h, p, q) = (8usize, 3.0, 1500.0, 2500.0);
    let mut s = format!("title = \"force density chain\"\n[form]\nforce_density = {q:?}\n[[section]]\nname = \"s\"\nEA = 1.0e7\n");
    for i in 0..=n {
        let fix = if i == 0 || i == n { "fix = \"xyz\"\n" } else { "" };
        s += &format!("[[node]]\nid = \"N{i}\"\nat = [{:?}, 0.0, 0.0]\n{fix}", i as f64 * h);
    }
    for i in 0..n {
        s += &format!("[[member]]\nid = \"c{i}\"\nkind = \"cable\"\nends = [\"N{i}\", \"N{}\"]\nsection = \"s\"\n", i + 1);
    }
    for i in 1..n {
        s += &format!("[[load]]\nnode = \"N{i}\"\nforce = [0.0, 0.0, {:?}]\n", -p);
    }
    let computed = load(&s, "chain.toml").and_then(|m| {
        let r = crate::form::force_density(&m).map_err(|e| e.to_string())?;
        Ok(-r.positions[n / 2][2] * 1e3)
    });
    Case::new(
        "force density chain, 8 segments",
        "H.-J. Schek, The force density method for form finding and computation of general networks, Comput. Methods Appl. Mech. Eng. 3, 1974",
        "midspan sag",
        "mm",
        -chain_height(n / 2, n, p, q) * 1e3,
        computed,
        1e-10,
    )
}

fn braced_strut_bifurcation() -> Case {
    let text = braced_strut_case_model();
    let computed = load(&text, "strut.toml").and_then(|m| trace(&m)).and_then(|p| {
        reached(&p)?;
        p.critical
            .iter()
            .find(|c| c.kind == CriticalKind::Bifurcation)
            .map(|c| c.lambda * 1.0e5 / 1.0e3)
            .ok_or_else(|| "no bifurcation found".to_string())
    });
    Case::new(
        "braced strut (two bars, lateral spring)",
        "lateral stiffness k - 2P/l of the mid node (derived); the braced strut as in Z. P. Bazant, L. Cedolin, Stability of Structures, 1991, ch. 1, from memory",
        "bifurcation load",
        "kN",
        braced_strut_critical_load(1.0e5, 2.0, 1.0e8) / 1.0e3,
        computed,
        1e-6,
    )
}

fn snap_back_limit() -> Case {
    // The arch with a 10 m vertical bar (k = EA/L = 2 MN/m) in series under
    // the crown, loaded at the bar's free end: the series spring does not
    // change the largest load the arch carries, only the path (snap-back).
    let a = ARCH;
    let text = spring_arch("arc-length", 4.5, 10, "arc = 0.05");
    let computed = load(&text, "snap_back.toml").and_then(|m| trace(&m)).and_then(|p| {
        reached(&p)?;
        Ok(first_limit(&p)? * 1.0e6 / 1.0e3)
    });
    Case::new(
        "snap-back: arch with a spring in series",
        "M. A. Crisfield, Non-linear Finite Element Analysis of Solids and Structures, vol. 1, 1991, ch. 1, from memory; limit load from Bazant & Cedolin 1991, eq. 4.4.5",
        "limit load (arc-length through snap-back)",
        "kN",
        a.limit(false).0 / 1.0e3,
        computed,
        1e-6,
    )
}

/// The cases as an aligned text table.
/// One catenary member between a fixed support A and a node B placed where
/// Irvine's equations put it for chosen end forces (H, V), B held in y and z
/// and pulled by H in x: the solver must find B in place with A's vertical
/// reaction equal to V. The geometry is computed forward from the published
/// equations, so no root finder stands between the reference and the check.
/// It is a round trip: the element solves the same equations backwards, so
/// the case checks the solver's handling of the element and its reactions,
/// not Irvine's equations themselves (tests/catenary.rs checks the element
/// against a separate root finder and a bar chain).
fn elastic_catenary_support_force() -> Case {
    let (l0, ea, w, hh, v) = (100.0, 2.0e7, 50.0, 2.0e4, 3500.0);
    let (span, rise) = irvine_span_rise(hh, v, l0, ea, w);
    let text = format!(
        "title = \"elastic catenary stay\"\n[[section]]\nname = \"rope\"\nEA = {ea:?}\nweight = {w:?}\n\
         [[node]]\nid = \"A\"\nat = [0.0, 0.0, 0.0]\nfix = \"xyz\"\n\
         [[node]]\nid = \"B\"\nat = [{span:?}, 0.0, {rise:?}]\nfix = \"yz\"\n\
         [[member]]\nid = \"stay\"\nkind = \"catenary\"\nends = [\"A\", \"B\"]\nsection = \"rope\"\nrest_length = {l0:?}\n\
         [[load]]\nnode = \"B\"\nforce = [{hh:?}, 0.0, 0.0]\n\
         [analysis]\nstrain = \"engineering\"\nstart_load_factor = 0.5\ntarget = 1.0\nsteps = 2\ntolerance = 1e-12\nwatch = [\"B.x\"]\n"
    );
    let computed = load(&text, "stay.toml").and_then(|m| {
        let p = trace(&m)?;
        reached(&p)?;
        let a = m.node_index("A").ok_or("node A missing")?;
        Ok(p.final_state.reactions[3 * a + 2])
    });
    Case::new(
        "elastic catenary stay, one member",
        "round trip of the element's own equations: B placed by Irvine's span and rise for chosen end forces, \
         which the catenary element inverts (H. M. Irvine, Cable Structures, 1st ed., MIT Press, 1981, ch. 1); \
         checks the solve and the reaction, not the equations",
        "vertical support force at the lower end",
        "N",
        v,
        computed,
        1e-9,
    )
}

pub fn table(cases: &[Case]) -> String {
    let header = ["case", "source", "quantity", "reference", "computed", "rel. error", "tolerance", "result"];
    let rows: Vec<[String; 8]> = cases
        .iter()
        .map(|c| {
            [
                c.name.clone(),
                c.source.clone(),
                format!("{} [{}]", c.quantity, c.unit),
                format!("{:.9e}", c.reference),
                if c.computed.is_finite() { format!("{:.9e}", c.computed) } else { "-".into() },
                if c.relative_error.is_finite() { format!("{:.1e}", c.relative_error) } else { "-".into() },
                format!("{:.0e}", c.tolerance),
                if c.pass { "pass".into() } else { format!("FAIL{}", c.note.as_ref().map(|n| format!(" ({n})")).unwrap_or_default()) },
            ]
        })
        .collect();
    // The source column is long: it goes on its own line under each case.
    let cols = [0usize, 2, 3, 4, 5, 6, 7];
    let width = |i: usize| rows.iter().map(|r| r[i].chars().count()).chain([header[i].len()]).max().unwrap_or(0);
    let widths: Vec<usize> = cols.iter().map(|&i| width(i)).collect();
    let mut s = String::new();
    let line = |cells: Vec<&str>| {
        let mut l = String::new();
        for (k, cell) in cells.iter().enumerate() {
            if k > 0 {
                l.push_str("  ");
            }
            let pad = widths[k].saturating_sub(cell.chars().count());
            if (2..=5).contains(&k) {
                l.push_str(&" ".repeat(pad));
                l.push_str(cell);
            } else {
                l.push_str(cell);
                l.push_str(&" ".repeat(pad));
            }
        }
        l.trim_end().to_string() + "\n"
    };
    s += &line(cols.iter().map(|&i| header[i]).collect());
    s += &widths.iter().map(|w| "-".repeat(*w)).collect::<Vec<_>>().join("  ");
    s.push('\n');
    for r in &rows {
        s += &line(cols.iter().map(|&i| r[i].as_str()).collect());
        s += &format!("    source: {}\n", r[1]);
    }
    let passed = cases.iter().filter(|c| c.pass).count();
    s += &format!("{passed} of {} cases pass\n", cases.len());
    s
}

const SOURCE_STEEP: &str = "derived: leg tangent (EA/L)ee' + (N/l)(I - ee'), crown stiffness on the symmetric path (verify::steep_bifurcation_loads, steep_limit_load)";

fn nth_critical(path: &EquilibriumPath, kind: CriticalKind, nth: usize, multiplicity: usize) -> Result<f64, String> {
    let c = path.critical.iter().filter(|c| c.kind == kind).nth(nth).ok_or_else(|| format!("no {kind:?} number {} found", nth + 1))?;
    if !c.pinpointed || !c.mode_converged || c.multiplicity != multiplicity {
        return Err(format!(
            "{kind:?} at {}: pinpointed {}, mode converged {}, multiplicity {} (expected {multiplicity})",
            c.lambda, c.pinpointed, c.mode_converged, c.multiplicity
        ));
    }
    Ok(c.lambda * STEEP_LOAD / 1.0e3)
}

fn ends_at_max_displacement(path: &EquilibriumPath) -> Result<(), String> {
    if path.stop == StopReason::MaxDisplacement { Ok(()) } else { Err(format!("run stopped: {:?}", path.stop)) }
}

fn steep_arch_bifurcation_before_limit() -> Case {
    let computed = load(&steep_arc(2), "steep_arch.toml").and_then(|m| trace(&m)).and_then(|p| {
        ends_at_max_displacement(&p)?;
        nth_critical(&p, CriticalKind::Bifurcation, 0, 1)
    });
    Case::new("steep two-bar arch (b = 1 m, h = 3 m)", SOURCE_STEEP, "bifurcation load (before the limit)", "kN", steep_bifurcation_loads(2)[0] / 1.0e3, computed, 1e-6)
}

fn steep_arch_limit_after_bifurcation() -> Case {
    let computed = load(&steep_arc(2), "steep_arch.toml").and_then(|m| trace(&m)).and_then(|p| {
        ends_at_max_displacement(&p)?;
        nth_critical(&p, CriticalKind::Limit, 0, 1)
    });
    Case::new("steep two-bar arch, past its bifurcation", SOURCE_STEEP, "limit load", "kN", steep_limit_load(2) / 1.0e3, computed, 1e-6)
}

fn steep_arch_bifurcation_after_limit() -> Case {
    let computed = load(&steep_arc(2), "steep_arch.toml").and_then(|m| trace(&m)).and_then(|p| {
        ends_at_max_displacement(&p)?;
        nth_critical(&p, CriticalKind::Bifurcation, 1, 1)
    });
    Case::new("steep two-bar arch, past its limit", SOURCE_STEEP, "bifurcation load (after the limit)", "kN", steep_bifurcation_loads(2)[1] / 1.0e3, computed, 1e-6)
}

fn square_pyramid_double_bifurcation() -> Case {
    let computed = load(&steep_arc(4), "pyramid.toml").and_then(|m| trace(&m)).and_then(|p| {
        ends_at_max_displacement(&p)?;
        nth_critical(&p, CriticalKind::Bifurcation, 0, 2)
    });
    Case::new("square four-bar pyramid (double)", SOURCE_STEEP, "bifurcation load", "kN", steep_bifurcation_loads(4)[0] / 1.0e3, computed, 1e-6)
}

fn snap_back_turning_point() -> Case {
    let text = spring_arch("arc-length", 4.5, 10, "arc = 0.05");
    let computed = load(&text, "snap_back.toml").and_then(|m| trace(&m)).and_then(|p| {
        reached(&p)?;
        let t = p.turning.first().ok_or("no turning point found")?;
        if !t.pinpointed {
            return Err(format!("turning point at {} not pinpointed", t.lambda));
        }
        Ok(t.lambda * 1.0e6 / 1.0e3)
    });
    Case::new(
        "snap-back: turning point of the loaded end",
        "dv/dw = 1 - (dP/dz)/k = 0 with the arch's crown equilibrium (derived; P(z) as in Bazant & Cedolin 1991, sec. 4.4)",
        "load at the turning point",
        "kN",
        snap_back_turning_load() / 1.0e3,
        computed,
        1e-6,
    )
}
