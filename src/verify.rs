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

#[cfg(test)]
mod tests;

// ---------------------------------------------------------------- closed forms

/// Two-bar arch of VERIFICATION case 1: half-span b, rise h, axial rigidity EA.
#[derive(Clone, Copy, Debug)]
pub struct Arch {
    pub ea: f64,
    pub b: f64,
    pub h: f64,
}

/// The arch of the cases: b = 5 m, h = 1 m, EA = 1280 MN.
pub const ARCH: Arch = Arch { ea: 1.28e9, b: 5.0, h: 1.0 };

impl Arch {
    fn l0(&self) -> f64 {
        (self.b * self.b + self.h * self.h).sqrt()
    }

    /// Crown load P(w) for a crown deflection w (down positive), from
    /// equilibrium of the deformed crown, z = h − w, l = √(b² + z²).
    /// Engineering strain, N = EA (l − l₀)/l₀: P = 2EA (l₀ − l)/l₀ · z/l.
    /// Green-Lagrange, S = E·E_GL on the reference area: P = EA z (h² − z²)/l₀³.
    pub fn load(&self, w: f64, green: bool) -> f64 {
        let z = self.h - w;
        let l0 = self.l0();
        if green {
            self.ea * z * (self.h * self.h - z * z) / l0.powi(3)
        } else {
            let l = (self.b * self.b + z * z).sqrt();
            2.0 * self.ea * (l0 - l) / l0 * z / l
        }
    }

    /// Limit load and crown deflection at it. Engineering: P_lim = 2EA sin³θ_c
    /// with cos θ_c = (cos α)^(1/3) (Bažant & Cedolin 1991, eq. 4.4.5), and
    /// z = b·tan θ_c; Green-Lagrange: P_lim = 2EA h³/(3√3 l₀³) at z = h/√3
    /// (dP/dz = EA (h² − 3z²)/l₀³ = 0).
    pub fn limit(&self, green: bool) -> (f64, f64) {
        let l0 = self.l0();
        if green {
            (2.0 * self.ea * self.h.powi(3) / (3.0 * 3f64.sqrt() * l0.powi(3)), self.h - self.h / 3f64.sqrt())
        } else {
            let cos_c = (self.b / l0).cbrt();
            let sin_c = (1.0 - cos_c * cos_c).sqrt();
            (2.0 * self.ea * sin_c.powi(3), self.h - self.b * sin_c / cos_c)
        }
    }

    /// Crown deflection for a load below the limit, by bisection on [0, w_lim].
    pub fn deflection(&self, p: f64, green: bool) -> f64 {
        let (_, w_lim) = self.limit(green);
        bisect(|w| self.load(w, green) - p, 0.0, w_lim)
    }
}

/// Pretensioned straight cable of two halves of length l each (EA, pretension
/// t, engineering strain) with a midspan load P: from equilibrium of the
/// loaded node, P = 2·EA(l_c − L_r)/L_r · w/l_c with l_c = √(l² + w²) and the
/// rest length L_r = l·EA/(EA + t). Returns the deflection w for a load P.
pub fn pretensioned_cable_deflection_closed_form(l: f64, ea: f64, t: f64, p: f64) -> f64 {
    let lr = l * ea / (ea + t);
    let load = |w: f64| {
        let lc = (l * l + w * w).sqrt();
        2.0 * ea * (lc - lr) / lr * w / lc
    };
    bisect(|w| load(w) - p, 0.0, l)
}

/// Force density chain of n segments, load P on every inner node, force
/// density q, level supports: z equilibrium q(z_{i−1} − 2z_i + z_{i+1}) = P
/// is met by z_i = −P·i(n − i)/(2q) (H.-J. Schek, "The force density method
/// for form finding and computation of general networks", Comput. Methods
/// Appl. Mech. Eng. 3, 1974).
pub fn chain_height(i: usize, n: usize, p: f64, q: f64) -> f64 {
    -p * (i * (n - i)) as f64 / (2.0 * q)
}

/// Straight strut of two bars of length L (EA), braced at mid-height by a
/// lateral spring k: the mid node's lateral stiffness k − 2P/l with the
/// shortened l = L(1 − P/EA) vanishes at P_cr = (kL/2)/(1 + kL/(2EA)).
pub fn braced_strut_critical_load(k: f64, l: f64, ea: f64) -> f64 {
    (k * l / 2.0) / (1.0 + k * l / (2.0 * ea))
}

/// Span l and rise h of an elastic catenary from its end forces: H. M.
/// Irvine, *Cable Structures*, MIT Press, 1981, ch. 1 (the elastic
/// catenary), with V the upward force of the support at the lower end A,
/// W = w·L0 the cable's weight:
/// l = H·L0/EA + (H/w)·[asinh(V/H) − asinh((V − W)/H)],
/// h = (W·L0/EA)·(1/2 − V/W) + (1/w)·[√(H² + (W − V)²) − √(H² + V²)].
pub fn irvine_span_rise(hh: f64, v: f64, l0: f64, ea: f64, w: f64) -> (f64, f64) {
    let big_w = w * l0;
    let span = hh * l0 / ea + hh / w * ((v / hh).asinh() - ((v - big_w) / hh).asinh());
    let rise = big_w * l0 / ea * (0.5 - v / big_w) + ((hh * hh + (big_w - v).powi(2)).sqrt() - (hh * hh + v * v).sqrt()) / w;
    (span, rise)
}

/// Root of an increasing function on [lo, hi] by bisection.
fn bisect(f: impl Fn(f64) -> f64, mut lo: f64, mut hi: f64) -> f64 {
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if f(mid) < 0.0 { lo = mid } else { hi = mid }
    }
    0.5 * (lo + hi)
}

// ---------------------------------------------------------------- runs

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

/// The two-bar arch of VERIFICATION case 1 (EA of [`ARCH`]) with its
/// supports at x = −b_left and x = b_right on z = 0 and its crown at height
/// h, free in x and z, loaded by 1 MN per unit load factor; `analysis` is
/// the body of its `[analysis]` table.
pub fn two_bar_arch(b_left: f64, b_right: f64, h: f64, analysis: &str) -> String {
    format!(
        r#"title = "two-bar arch"
[[section]]
name = "s"
EA = {ea:?}
[[node]]
id = "L"
at = [{nb:?}, 0.0, 0.0]
fix = "xyz"
[[node]]
id = "R"
at = [{b:?}, 0.0, 0.0]
fix = "xyz"
[[node]]
id = "C"
at = [0.0, 0.0, {h:?}]
fix = "y"
[[member]]
id = "left"
kind = "bar"
ends = ["L", "C"]
section = "s"
[[member]]
id = "right"
kind = "bar"
ends = ["C", "R"]
section = "s"
[[load]]
node = "C"
force = [0.0, 0.0, -1.0e6]
[analysis]
{analysis}
"#,
        ea = ARCH.ea,
        nb = -b_left,
        b = b_right,
    )
}

fn arch_text(strain: &str) -> String {
    let analysis = format!(
        r#"strain = "{strain}"
control = "arc-length"
arc = 0.05
steps = 10
target = 4.5
node = "C"
dir = "z"
max_steps = 400
tolerance = 1e-12
watch = ["C.z"]"#
    );
    two_bar_arch(ARCH.b, ARCH.b, ARCH.h, &analysis)
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

/// The pretensioned cable with a midspan point load of VERIFICATION.md case 4;
/// the integration tests start from the same model.
pub const PRETENSIONED_CABLE: &str = r#"title = "pretensioned cable"
[[section]]
name = "rope"
EA = 1.0e6
[[node]]
id = "A"
at = [0.0, 0.0, 0.0]
fix = "xyz"
[[node]]
id = "M"
at = [5.0, 0.0, 0.0]
fix = "y"
[[node]]
id = "B"
at = [10.0, 0.0, 0.0]
fix = "xyz"
[[member]]
id = "a"
kind = "cable"
ends = ["A", "M"]
section = "rope"
prestress = 1.0e4
[[member]]
id = "b"
kind = "cable"
ends = ["M", "B"]
section = "rope"
prestress = 1.0e4
[[load]]
node = "M"
force = [0.0, 0.0, -1000.0]
[analysis]
strain = "engineering"
steps = 4
target = 1.0
node = "M"
dir = "z"
tolerance = 1e-13
"#;

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

/// A statically determinate plane truss: A(0,0) pinned, B(3,0), C(6,0) on a
/// roller, D(3,4); P = 1 N down at B. Joints B and D give BD = P,
/// AD = DC = −5P/8, joint A gives AB = BC = 3P/8 (derived by the method of
/// joints, worked here; common practice, no source). EA = 1e9 N keeps
/// strains near 1e-9, so geometric effects stay far below 1e-6.
pub const DETERMINATE_TRUSS: &str = r#"title = "determinate truss"
[[section]]
name = "s"
EA = 1.0e9
[[node]]
id = "A"
at = [0.0, 0.0, 0.0]
fix = "xyz"
[[node]]
id = "B"
at = [3.0, 0.0, 0.0]
fix = "y"
[[node]]
id = "C"
at = [6.0, 0.0, 0.0]
fix = "yz"
[[node]]
id = "D"
at = [3.0, 0.0, 4.0]
fix = "y"
[[member]]
id = "AB"
kind = "bar"
ends = ["A", "B"]
section = "s"
[[member]]
id = "BC"
kind = "bar"
ends = ["B", "C"]
section = "s"
[[member]]
id = "AD"
kind = "bar"
ends = ["A", "D"]
section = "s"
[[member]]
id = "DC"
kind = "bar"
ends = ["D", "C"]
section = "s"
[[member]]
id = "BD"
kind = "bar"
ends = ["B", "D"]
section = "s"
[[load]]
node = "B"
force = [0.0, 0.0, -1.0]
[analysis]
steps = 1
tolerance = 1e-12
"#;

/// A straight vertical strut of two bars (each L = 2 m, axial rigidity
/// `ea`), pinned at the base and held laterally at the top, braced at
/// mid-height by a lateral spring k = 1e5 N/m, loaded at the top by 1e5 N per
/// unit load factor; engineering strain, T.z controlled or watched, T.z and
/// M.x watched. `analysis` adds the rest of the `[analysis]` table. It
/// bifurcates at [`braced_strut_critical_load`].
pub fn braced_strut(ea: f64, analysis: &str) -> String {
    format!(
        r#"title = "braced strut"
[[section]]
name = "s"
EA = {ea:?}
[[node]]
id = "B"
at = [0.0, 0.0, 0.0]
fix = "xyz"
[[node]]
id = "M"
at = [0.0, 0.0, 2.0]
fix = "y"
[[node]]
id = "T"
at = [0.0, 0.0, 4.0]
fix = "xy"
[[member]]
id = "lower"
kind = "bar"
ends = ["B", "M"]
section = "s"
[[member]]
id = "upper"
kind = "bar"
ends = ["M", "T"]
section = "s"
[[spring]]
node = "M"
dir = "x"
k = 1.0e5
[[load]]
node = "T"
force = [0.0, 0.0, -1.0e5]
[analysis]
strain = "engineering"
node = "T"
dir = "z"
watch = ["T.z", "M.x"]
{analysis}
"#
    )
}

/// The braced strut of `tautline verify` (EA = 1e8 N) under load control up
/// to λ = 1.2 in 12 steps.
pub fn braced_strut_case_model() -> String {
    braced_strut(1.0e8, "steps = 12\ntarget = 1.2\ntolerance = 1e-12")
}

/// The two-bar arch ([`ARCH`], engineering strain) with a linear spring in
/// series under the crown: a vertical bar of EA = 20 MN and length 10 m, i.e.
/// k = 2 MN/m, which stays vertical by symmetry and so is an exact linear
/// spring under engineering strain. The load, 1 MN per unit load factor,
/// acts on the spring's free end S. `extra` is appended to `[analysis]`.
pub fn spring_arch(control: &str, target: f64, steps: usize, extra: &str) -> String {
    let a = ARCH;
    format!(
        r#"title = "arch with a spring in series"
[[section]]
name = "strut"
EA = {ea:?}
[[section]]
name = "spring"
EA = 2.0e7
[[node]]
id = "L"
at = [{nb:?}, 0.0, 0.0]
fix = "xyz"
[[node]]
id = "R"
at = [{b:?}, 0.0, 0.0]
fix = "xyz"
[[node]]
id = "C"
at = [0.0, 0.0, {h:?}]
fix = "y"
[[node]]
id = "S"
at = [0.0, 0.0, -9.0]
fix = "xy"
[[member]]
id = "left"
kind = "bar"
ends = ["L", "C"]
section = "strut"
[[member]]
id = "right"
kind = "bar"
ends = ["C", "R"]
section = "strut"
[[member]]
id = "spring"
kind = "bar"
ends = ["C", "S"]
section = "spring"
[[load]]
node = "S"
force = [0.0, 0.0, -1.0e6]
[analysis]
strain = "engineering"
control = "{control}"
steps = {steps}
target = {target:?}
node = "S"
dir = "z"
max_steps = 2000
tolerance = 1e-12
watch = ["S.z", "C.z"]
{extra}
"#,
        ea = a.ea,
        nb = -a.b,
        b = a.b,
        h = a.h
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

// ------------------------------------------------- steep arch and pyramid

/// Half-span b, rise h and EA of the steep two-leg arch and the four-leg
/// pyramid; the crown load is 1e5 N per unit load factor.
pub const STEEP: (f64, f64, f64) = (1.0, 3.0, 1.0e6);
/// Crown load per unit load factor, N.
pub const STEEP_LOAD: f64 = 1.0e5;

/// A steep crown on `legs` bars (2: a two-bar arch in the x-z plane, the
/// crown held in y; 4: a square pyramid, legs at (±b, 0, 0) and (0, ±b, 0),
/// the crown free in x, y and z), engineering strain, a downward crown load.
/// `extra` is appended to `[analysis]`.
pub fn steep_crown(legs: usize, control: &str, target: f64, steps: usize, extra: &str) -> String {
    let (b, h, ea) = STEEP;
    let feet: Vec<(&str, f64, f64)> = if legs == 4 {
        vec![("A", -b, 0.0), ("B", b, 0.0), ("D", 0.0, -b), ("E", 0.0, b)]
    } else {
        vec![("A", -b, 0.0), ("B", b, 0.0)]
    };
    let mut t = format!("title = \"steep crown on {legs} legs\"\n[[section]]\nname = \"leg\"\nEA = {ea:?}\n");
    for (id, x, y) in &feet {
        t += &format!("[[node]]\nid = \"{id}\"\nat = [{x:?}, {y:?}, 0.0]\nfix = \"xyz\"\n");
    }
    let fix = if legs == 4 { "" } else { "fix = \"y\"\n" };
    t += &format!("[[node]]\nid = \"C\"\nat = [0.0, 0.0, {h:?}]\n{fix}");
    for (id, _, _) in &feet {
        t += &format!("[[member]]\nid = \"{id}C\"\nkind = \"bar\"\nends = [\"{id}\", \"C\"]\nsection = \"leg\"\n");
    }
    t += &format!(
        "[[load]]\nnode = \"C\"\nforce = [0.0, 0.0, {:?}]\n[analysis]\nstrain = \"engineering\"\ncontrol = \"{control}\"\nsteps = {steps}\ntarget = {target:?}\nnode = \"C\"\ndir = \"z\"\ntolerance = 1e-12\nwatch = [\"C.z\", \"C.x\"]\n{extra}\n",
        -STEEP_LOAD
    );
    t
}

/// The crown load P at crown height z (derived): each leg of length
/// l = √(b² + z²) carries N = EA(l − L)/L (engineering strain, L = √(b² + h²)),
/// and vertical equilibrium gives P = −n·N·z/l = n·EA·(z/l − z/L).
pub fn steep_load(legs: usize, z: f64) -> f64 {
    let (b, h, ea) = STEEP;
    let (l0, l) = ((b * b + h * h).sqrt(), (b * b + z * z).sqrt());
    legs as f64 * ea * (z / l - z / l0)
}

/// Crown height at the limit point (derived): dP/dz = n·EA·(b²/l³ − 1/L) = 0,
/// so l³ = b²·L. The load there is the limit load.
pub fn steep_limit_load(legs: usize) -> f64 {
    let (b, h, _) = STEEP;
    let l0 = (b * b + h * h).sqrt();
    let l = (b * b * l0).cbrt();
    steep_load(legs, (l * l - b * b).sqrt())
}

/// Crown loads at the bifurcations of the symmetric path (derived): the
/// crown's lateral (x) stiffness on that path, from the bar tangent
/// (EA/L)·e·eᵀ + (N/l)·(I − e·eᵀ) of each leg, is
/// k_x = 2·[(EA/L)·b²/l² + (N/l)·z²/l²] (+ 2N/l from the two legs along y
/// of the pyramid, which add only geometric stiffness across them). Every z
/// in (0, h) where k_x changes sign (scanned in steps of h/10⁴, then
/// bisected to round-off), from the top down: for b = 1, h = 3 the first
/// lies before the limit point (k_x falls through zero as the legs shorten)
/// and the second after it (k_x recovers as the crown nears the supports'
/// level). The pyramid's y stiffness is the same by symmetry: its points are
/// double.
pub fn steep_bifurcation_loads(legs: usize) -> Vec<f64> {
    let (b, h, ea) = STEEP;
    let l0 = (b * b + h * h).sqrt();
    let kx = |z: f64| {
        let l = (b * b + z * z).sqrt();
        let n = ea * (l - l0) / l0;
        let mut k = 2.0 * (ea / l0 * b * b / (l * l) + n / l * z * z / (l * l));
        if legs == 4 {
            k += 2.0 * n / l;
        }
        k
    };
    let mut loads = Vec::new();
    let mut hi = h;
    for i in 1..10_000 {
        let lo = h * (1.0 - i as f64 / 10_000.0);
        if kx(lo).signum() != kx(hi).signum() {
            let (mut a, mut c) = (lo, hi);
            let s = kx(lo).signum();
            for _ in 0..200 {
                let mid = 0.5 * (a + c);
                if kx(mid).signum() == s { a = mid } else { c = mid }
            }
            loads.push(steep_load(legs, 0.5 * (a + c)));
        }
        hi = lo;
    }
    loads
}

const SOURCE_STEEP: &str = "derived: leg tangent (EA/L)ee' + (N/l)(I - ee'), crown stiffness on the symmetric path (verify::steep_bifurcation_loads, steep_limit_load)";

fn steep_arc(legs: usize) -> String {
    steep_crown(legs, "arc-length", 1.0e9, 10, "arc = 0.05\nmax_steps = 400\nmax_displacement = 2.5")
}

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

/// Crown load at the snap-back turning point of the arch with a spring in
/// series (derived): the loaded end's deflection v = w + P(w)/k turns where
/// dv/dw = 1 − (dP/dz)/k = 0; with P = 2EA·(z/l − z/L),
/// dP/dz = 2EA·(b²/l³ − 1/L), so l³ = b²/(k/(2EA) + 1/L).
pub fn snap_back_turning_load() -> f64 {
    let a = ARCH;
    let k = 2.0e6;
    let l0 = (a.b * a.b + a.h * a.h).sqrt();
    let l = (a.b * a.b / (k / (2.0 * a.ea) + 1.0 / l0)).cbrt();
    let z = (l * l - a.b * a.b).sqrt();
    2.0 * a.ea * (z / l - z / l0)
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
