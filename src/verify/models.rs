//! The built-in cases' models, as model-file text (public ones are shared
//! with the integration tests).

use super::closed_forms::{ARCH, STEEP, STEEP_LOAD};

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

pub(super) fn arch_text(strain: &str) -> String {
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
/// bifurcates at [`braced_strut_critical_load`](super::braced_strut_critical_load).
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

pub(super) fn steep_arc(legs: usize) -> String {
    steep_crown(legs, "arc-length", 1.0e9, 10, "arc = 0.05\nmax_steps = 400\nmax_displacement = 2.5")
}
