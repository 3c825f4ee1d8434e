//! The validated structural model: what every later stage reads.
//!
//! A model file is read into `file::ModelFile` (a serde mirror that keeps the
//! user's labels and the places they were written), then [`validate`] turns it
//! into a [`Model`]: ids resolved to dense indices, units converted to SI
//! (N, m) and every problem collected before failing. A `Model` is immutable.

pub mod diagnostics;
pub(crate) mod file;
pub mod units;
pub mod validate;
pub mod write;

pub use diagnostics::{Diagnostic, ModelErrors};
pub use units::{ForceUnit, LengthUnit, Units};
pub use validate::{load, load_str, load_texts};

/// Axis of a translational degree of freedom.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Axis {
    X = 0,
    Y = 1,
    Z = 2,
}

impl Axis {
    pub const ALL: [Axis; 3] = [Axis::X, Axis::Y, Axis::Z];

    pub fn index(self) -> usize {
        self as usize
    }

    pub fn from_index(i: usize) -> Axis {
        Axis::ALL[i]
    }

    pub fn letter(self) -> char {
        ['x', 'y', 'z'][self as usize]
    }

    pub fn from_letter(c: char) -> Option<Axis> {
        match c {
            'x' | 'X' => Some(Axis::X),
            'y' | 'Y' => Some(Axis::Y),
            'z' | 'Z' => Some(Axis::Z),
            _ => None,
        }
    }
}

impl std::fmt::Display for Axis {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}", self.letter())
    }
}

/// Where an item was written: an index into [`Model::files`] and a 1-based line.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Place {
    pub file: u16,
    pub line: u32,
}

#[derive(Clone, Debug)]
pub struct Node {
    pub label: String,
    /// Initial position, m.
    pub at: [f64; 3],
    /// Supported directions.
    pub fixed: [bool; 3],
    pub place: Place,
}

#[derive(Clone, Debug)]
pub struct Section {
    pub name: String,
    /// Axial rigidity, N.
    pub ea: f64,
    /// Self-weight, N/m, acting in −z.
    pub weight: Option<f64>,
    /// N.
    pub tension_capacity: Option<f64>,
    /// N, as a positive number.
    pub compression_capacity: Option<f64>,
    pub place: Place,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum MemberKind {
    /// Carries tension and compression.
    Bar,
    /// Tension only: zero force and zero stiffness when slack.
    Cable,
    /// Elastic catenary (Irvine 1981): one element for a whole cable hanging
    /// under its section's weight; tension only.
    Catenary,
}

impl MemberKind {
    pub const NAMES: [&'static str; 3] = ["bar", "cable", "catenary"];

    pub fn name(self) -> &'static str {
        match self {
            MemberKind::Bar => "bar",
            MemberKind::Cable => "cable",
            MemberKind::Catenary => "catenary",
        }
    }

    /// Carries no compression.
    pub fn tension_only(self) -> bool {
        self != MemberKind::Bar
    }
}

/// How the members' self-weight (section `weight`) is applied.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum SelfWeight {
    /// A constant dead load, in full at every load factor: the dead-load
    /// state is found first, then the reference load is stepped.
    #[default]
    Dead,
    /// Part of the reference load, scaled by λ (catenary members excepted:
    /// their weight shapes the element and stays a dead load).
    Reference,
    /// Not applied; catenary members become weightless.
    None,
}

impl SelfWeight {
    pub const NAMES: [&'static str; 3] = ["dead", "reference", "none"];

    pub fn name(self) -> &'static str {
        match self {
            SelfWeight::Dead => "dead",
            SelfWeight::Reference => "reference",
            SelfWeight::None => "none",
        }
    }
}

/// How the unstressed length of a member is given.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum RestSpec {
    /// The member is unstressed in the given geometry.
    Geometry,
    /// Unstressed length, m.
    Length(f64),
    /// Axial force in the given geometry, N (tension positive).
    Prestress(f64),
}

#[derive(Clone, Debug)]
pub struct Member {
    pub label: String,
    pub kind: MemberKind,
    pub ends: [usize; 2],
    pub section: usize,
    pub rest: RestSpec,
    /// Force per length, N/m, for form finding.
    pub force_density: Option<f64>,
    /// What form finding to targets must reach for this member.
    pub target: Option<FormTarget>,
    pub place: Place,
}

/// A form-finding target of one member.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum FormTarget {
    /// Axial force in the found shape, N.
    Force(f64),
    /// Length in the found shape, m.
    Length(f64),
}

#[derive(Clone, Debug)]
pub struct Spring {
    pub node: usize,
    pub axis: Axis,
    /// N/m.
    pub k: f64,
    pub place: Place,
}

#[derive(Clone, Debug)]
pub struct NodalLoad {
    pub node: usize,
    /// Reference load, N, scaled by the load factor λ.
    pub force: [f64; 3],
    pub place: Place,
}

/// A node and a direction: a controlled or watched displacement.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct NodeDir {
    pub node: usize,
    pub axis: Axis,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum StrainMeasure {
    /// Green-Lagrange strain, total Lagrangian, S = E·E_GL on the reference area.
    #[default]
    Green,
    /// Engineering strain (l − L)/L with a corotational description.
    Engineering,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum Method {
    /// Full Newton-Raphson: refactor every iteration.
    #[default]
    Newton,
    /// Keep the factorization of the step's first tangent.
    ModifiedNewton,
    /// Broyden's "good" update of the inverse, Sherman-Morrison form.
    Broyden,
    /// Broyden's "bad" update (of the inverse directly).
    BroydenBad,
    /// BFGS in the Matthies-Strang form.
    Bfgs,
}

impl Method {
    pub const NAMES: [&'static str; 5] =
        ["newton", "modified-newton", "broyden", "broyden-bad", "bfgs"];

    pub fn name(self) -> &'static str {
        match self {
            Method::Newton => "newton",
            Method::ModifiedNewton => "modified-newton",
            Method::Broyden => "broyden",
            Method::BroydenBad => "broyden-bad",
            Method::Bfgs => "bfgs",
        }
    }

    pub fn parse(s: &str) -> Option<Method> {
        Some(match s {
            "newton" => Method::Newton,
            "modified-newton" => Method::ModifiedNewton,
            "broyden" => Method::Broyden,
            "broyden-bad" => Method::BroydenBad,
            "bfgs" => Method::Bfgs,
            _ => return None,
        })
    }
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum Control {
    #[default]
    Load,
    Displacement,
    ArcLength,
}

impl Control {
    pub const NAMES: [&'static str; 3] = ["load", "displacement", "arc-length"];

    pub fn name(self) -> &'static str {
        match self {
            Control::Load => "load",
            Control::Displacement => "displacement",
            Control::ArcLength => "arc-length",
        }
    }

    pub fn parse(s: &str) -> Option<Control> {
        Some(match s {
            "load" => Control::Load,
            "displacement" => Control::Displacement,
            "arc-length" => Control::ArcLength,
            _ => return None,
        })
    }
}

/// Free DOFs up to which `keep_fields = "auto"` keeps every step's field;
/// above it, only the ends and critical steps. At 30,000 DOFs a field is
/// 240 kB in memory and 10,000 rows of `fields.csv`, so the default 200
/// steps stay under 50 MB and 2 million rows (a choice of this project, no
/// source).
pub const AUTO_ALL_FIELDS_MAX_DOFS: usize = 30_000;

/// Which converged steps keep their whole displacement field for
/// `fields.csv` (`keep_fields`).
#[derive(Clone, Debug, PartialEq, Eq, Default)]
pub enum KeepFields {
    /// `All` up to [`AUTO_ALL_FIELDS_MAX_DOFS`] free DOFs, else `Ends`.
    #[default]
    Auto,
    /// Every converged step.
    All,
    /// Step 0, the last converged step, and the converged step at or after
    /// each change of the tangent's negative pivot count (a critical point),
    /// plus each pinpointed critical state.
    Ends,
    /// No field.
    None,
    /// These steps, ascending, without repeats; steps never reached are
    /// simply absent.
    Steps(Vec<usize>),
}

impl KeepFields {
    pub const NAMES: [&'static str; 4] = ["auto", "all", "ends", "none"];

    pub fn parse(s: &str) -> Option<KeepFields> {
        Some(match s {
            "auto" => KeepFields::Auto,
            "all" => KeepFields::All,
            "ends" => KeepFields::Ends,
            "none" => KeepFields::None,
            _ => return None,
        })
    }

    /// A list of steps, sorted and without repeats.
    pub fn steps(mut steps: Vec<usize>) -> KeepFields {
        steps.sort_unstable();
        steps.dedup();
        KeepFields::Steps(steps)
    }

    /// The policy for a system of `n_free` free DOFs: `Auto` becomes `All`
    /// or `Ends`; the others stay.
    pub fn resolve(&self, n_free: usize) -> KeepFields {
        match self {
            KeepFields::Auto if n_free <= AUTO_ALL_FIELDS_MAX_DOFS => KeepFields::All,
            KeepFields::Auto => KeepFields::Ends,
            other => other.clone(),
        }
    }

    /// `"auto"`, `"all"`, `"ends"`, `"none"`, or `"list"` for a list of steps.
    pub fn name(&self) -> &'static str {
        match self {
            KeepFields::Auto => "auto",
            KeepFields::All => "all",
            KeepFields::Ends => "ends",
            KeepFields::None => "none",
            KeepFields::Steps(_) => "list",
        }
    }
}

/// The `[analysis]` table, in SI.
#[derive(Clone, Debug)]
pub struct Analysis {
    pub strain: StrainMeasure,
    pub method: Method,
    pub control: Control,
    /// Number of equal increments to `target` (load control).
    pub steps: usize,
    /// Load factor (load, arc-length) or controlled displacement in m (displacement).
    pub target: f64,
    /// Stop when |u(point)| reaches it, m.
    pub max_displacement: Option<f64>,
    /// Controlled / watched point.
    pub point: Option<NodeDir>,
    /// `point` was given as `node` and `dir` in the file (not taken from
    /// the first watched displacement).
    pub point_given: bool,
    /// First arc length (arc-length control), in the model's scaled norm.
    pub arc: Option<f64>,
    pub max_steps: usize,
    /// Relative residual tolerance.
    pub tolerance: f64,
    /// Maximum corrector iterations per step.
    pub max_iterations: usize,
    /// How many times a step may be halved before the run stops.
    pub max_cutbacks: usize,
    /// Columns of path.csv.
    pub watch: Vec<NodeDir>,
    /// Refactor after this many stored quasi-Newton updates.
    pub refactor_after: usize,
    /// Refactor at the start of every step.
    pub refactor_each_step: bool,
    /// Refactor when the residual norm falls by less than this ratio in an iteration.
    pub stall_ratio: f64,
    /// Line-search trials beyond the full step; None: the method's default
    /// (5 for the quasi-Newton correctors, 0 for Newton).
    pub line_search: Option<usize>,
    /// Optional displacement-increment criterion: ‖δu‖ ≤ this·‖Δu‖.
    pub displacement_tolerance: Option<f64>,
    /// Optional energy criterion: |δu·r| ≤ this·(the step's first |δu·r|).
    pub energy_tolerance: Option<f64>,
    /// Factor the tangent at every converged state to count its negative
    /// pivots (stability); false: only when the corrector refactors anyway.
    pub stability_each_step: bool,
    /// Load factor of the first state: 1 for a formed model, whose shape
    /// balances its form-finding loads at full value.
    pub start_load_factor: f64,
    /// Pinpoint critical points by bisection when the pivot count changes.
    pub pinpoint: bool,
    /// Arc-length variant: Riks/Ramm normal plane instead of Crisfield's cylinder.
    pub arc_variant_normal_plane: bool,
    /// How section weights are applied (`self_weight`).
    pub self_weight: SelfWeight,
    /// Load control starts each step's corrector from a predicted
    /// displacement (`load_predictor = "secant"`) instead of the last state
    /// (`"none"`).
    pub load_predictor: bool,
    /// Steps whose whole displacement field is kept (`keep_fields`).
    pub keep_fields: KeepFields,
    /// Branch switching and imperfection seeding (see `path::branch`).
    pub branch: BranchSettings,
}

/// `switch_at`, `switch_mode` and `imperfection` of `[analysis]`.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct BranchSettings {
    /// Leave the primary path at its Nth bifurcation (1-based).
    pub switch_at: Option<usize>,
    /// Which mode of a multiple bifurcation to leave along (1-based); None:
    /// the mode of largest projection (see `path::branch::pick_mode`).
    pub switch_mode: Option<usize>,
    /// Line of `switch_mode` in the model file, for a run-time message when
    /// the point met has fewer modes.
    pub switch_mode_line: Option<u32>,
    /// Seed the geometry with a computed mode before the run.
    pub imperfection: Option<Imperfection>,
}

/// `imperfection = { mode = N, amplitude = a }`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Imperfection {
    /// The Nth critical point of the perfect path (1-based) whose mode is used.
    pub mode: usize,
    /// Largest nodal displacement of the scaled mode, m (signed: the sign
    /// flips the shape).
    pub amplitude: f64,
}

impl Default for Analysis {
    fn default() -> Self {
        Analysis {
            strain: StrainMeasure::Green,
            method: Method::Newton,
            control: Control::Load,
            steps: 10,
            target: 1.0,
            max_displacement: None,
            point: None,
            point_given: false,
            arc: None,
            max_steps: 200,
            tolerance: 1e-9,
            max_iterations: 30,
            max_cutbacks: 6,
            watch: Vec::new(),
            refactor_after: 20,
            refactor_each_step: true,
            stall_ratio: 0.9,
            line_search: None,
            displacement_tolerance: None,
            energy_tolerance: None,
            arc_variant_normal_plane: false,
            stability_each_step: true,
            pinpoint: true,
            start_load_factor: 0.0,
            self_weight: SelfWeight::Dead,
            load_predictor: true,
            keep_fields: KeepFields::Auto,
            branch: BranchSettings::default(),
        }
    }
}

/// How `form` finds the shape.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum FormMethod {
    /// Linear force density solves (iterated when members have targets).
    #[default]
    ForceDensity,
    /// Dynamic relaxation with kinetic damping.
    Relax,
}

impl FormMethod {
    pub const NAMES: [&'static str; 2] = ["force-density", "relax"];

    pub fn name(self) -> &'static str {
        match self {
            FormMethod::ForceDensity => "force-density",
            FormMethod::Relax => "relax",
        }
    }

    pub fn parse(s: &str) -> Option<FormMethod> {
        match s {
            "force-density" => Some(FormMethod::ForceDensity),
            "relax" => Some(FormMethod::Relax),
            _ => None,
        }
    }
}

/// Settings of the `[form]` table (form finding).
#[derive(Clone, Debug)]
pub struct FormSettings {
    /// Default force density, N/m, for members that set none.
    pub force_density: Option<f64>,
    pub method: FormMethod,
    /// Largest relative target error accepted (targets), or relative
    /// residual (relax).
    pub tolerance: f64,
    /// Largest number of force density updates (targets) or time steps (relax).
    pub max_iterations: usize,
}

impl FormSettings {
    /// Default `max_iterations` of each method.
    pub fn default_max_iterations(method: FormMethod) -> usize {
        match method {
            FormMethod::ForceDensity => 200,
            FormMethod::Relax => 200_000,
        }
    }
}

impl Default for FormSettings {
    fn default() -> Self {
        FormSettings {
            force_density: None,
            method: FormMethod::ForceDensity,
            tolerance: 1e-9,
            max_iterations: FormSettings::default_max_iterations(FormMethod::ForceDensity),
        }
    }
}

/// A validated model, SI units inside.
#[derive(Clone, Debug)]
pub struct Model {
    pub title: String,
    /// Files the model was read from; `files[0]` is the TOML file.
    pub files: Vec<String>,
    pub units: Units,
    pub nodes: Vec<Node>,
    pub sections: Vec<Section>,
    pub members: Vec<Member>,
    pub springs: Vec<Spring>,
    pub loads: Vec<NodalLoad>,
    /// Constant nodal loads, N, present at every load factor like the
    /// self-weight's dead load: the model's own loads when a load file is
    /// added for `solve` (see [`Model::with_load_case`]). Empty for a model
    /// read from a file.
    pub dead_loads: Vec<NodalLoad>,
    pub analysis: Analysis,
    pub form: FormSettings,
    /// Things worth knowing that do not stop the run (e.g. an unloaded model).
    pub warnings: Vec<Diagnostic>,
}

impl Model {
    /// This model with a separate load case: `loads` (from a load file)
    /// become the reference load, stepped from λ = 0 to `target`; the
    /// model's own loads are held constant, as a dead load, at their value
    /// at `start_load_factor` (a formed model's form-finding loads at 1,
    /// which its shape balances; a model starting at 0 drops them). Returns
    /// the number of the model's loads held.
    pub fn with_load_case(&mut self, case: validate::LoadCase) -> usize {
        // The load file's places index its own file list: append it.
        let offset = self.files.len() as u16;
        self.files.extend(case.files);
        let loads: Vec<NodalLoad> = case
            .loads
            .into_iter()
            .map(|l| NodalLoad { place: Place { file: l.place.file + offset, ..l.place }, ..l })
            .collect();
        let held = self.analysis.start_load_factor;
        let own = std::mem::replace(&mut self.loads, loads);
        let n_held = if held != 0.0 { own.len() } else { 0 };
        if held != 0.0 {
            self.dead_loads.extend(own.into_iter().map(|l| NodalLoad { force: l.force.map(|f| held * f), ..l }));
        }
        self.analysis.start_load_factor = 0.0;
        n_held
    }

    pub fn n_nodes(&self) -> usize {
        self.nodes.len()
    }

    pub fn n_members(&self) -> usize {
        self.members.len()
    }

    /// "file:line" of an item, for messages.
    pub fn describe_place(&self, place: Place) -> String {
        let file = self.files.get(place.file as usize).map(String::as_str).unwrap_or("?");
        if place.line > 0 { format!("{file}:{}", place.line) } else { file.to_string() }
    }

    /// "A2.z" style label of a node direction.
    pub fn node_dir_label(&self, nd: NodeDir) -> String {
        format!("{}.{}", self.nodes[nd.node].label, nd.axis)
    }

    /// Index of the node with this label.
    pub fn node_index(&self, label: &str) -> Option<usize> {
        self.nodes.iter().position(|n| n.label == label)
    }

    /// Number of supported directions.
    pub fn n_fixed(&self) -> usize {
        self.nodes.iter().map(|n| n.fixed.iter().filter(|f| **f).count()).sum()
    }

    /// Total reference load, N.
    pub fn total_reference_load(&self) -> [f64; 3] {
        let mut t = [0.0; 3];
        for l in &self.loads {
            for (t, f) in t.iter_mut().zip(l.force) {
                *t += f;
            }
        }
        t
    }

    /// Initial length of a member, m.
    pub fn member_length(&self, m: usize) -> f64 {
        let [i, j] = self.members[m].ends;
        let (a, b) = (self.nodes[i].at, self.nodes[j].at);
        ((b[0] - a[0]).powi(2) + (b[1] - a[1]).powi(2) + (b[2] - a[2]).powi(2)).sqrt()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn auto_keeps_all_steps_up_to_the_threshold_then_the_ends() {
        let auto = KeepFields::Auto;
        assert_eq!(auto.resolve(1), KeepFields::All);
        assert_eq!(auto.resolve(AUTO_ALL_FIELDS_MAX_DOFS), KeepFields::All);
        assert_eq!(auto.resolve(AUTO_ALL_FIELDS_MAX_DOFS + 1), KeepFields::Ends);
        assert_eq!(auto.resolve(1_000_000), KeepFields::Ends);
        // The other policies are what they say whatever the size.
        for k in [KeepFields::All, KeepFields::Ends, KeepFields::None, KeepFields::steps(vec![3, 1])] {
            assert_eq!(k.resolve(1), k);
            assert_eq!(k.resolve(1_000_000), k);
        }
    }

    #[test]
    fn policy_names_and_step_lists() {
        for name in KeepFields::NAMES {
            assert_eq!(KeepFields::parse(name).map(|k| k.name()), Some(name));
        }
        assert_eq!(KeepFields::parse("end"), None);
        assert_eq!(KeepFields::steps(vec![5, 0, 5, 2]), KeepFields::Steps(vec![0, 2, 5]));
        assert_eq!(KeepFields::steps(vec![4]).name(), "list");
    }

    #[test]
    fn keep_fields_survives_writing_the_model_back() {
        let base = "[[section]]\nname = \"s\"\nEA = 1.0\n[[node]]\nid = \"A\"\nat = [0, 0, 0]\nfix = \"xyz\"\n\
                    [[node]]\nid = \"B\"\nat = [1, 0, 0]\n[[member]]\nid = \"m\"\nkind = \"bar\"\nends = [\"A\", \"B\"]\n\
                    section = \"s\"\n[analysis]\n";
        for (line, want) in [
            ("", KeepFields::Auto),
            ("keep_fields = \"ends\"", KeepFields::Ends),
            ("keep_fields = \"none\"", KeepFields::None),
            ("keep_fields = [7, 0, 3]", KeepFields::Steps(vec![0, 3, 7])),
        ] {
            let m = load_str(&format!("{base}{line}\n"), "t.toml", None).expect("valid model");
            assert_eq!(m.analysis.keep_fields, want, "{line}");
            let again = load_str(&write::to_toml(&m), "formed.toml", None).expect("written model reads back");
            assert_eq!(again.analysis.keep_fields, want, "{line} written back");
        }
    }
}
