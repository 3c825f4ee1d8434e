//! Model generators: parametric cable nets and lattice domes written out as
//! model files (TOML, with the node and member tables moved to CSV files when
//! the model is large).
//!
//! Generators never panic: options are checked first and every problem is
//! returned as a lower-case message. Numbers are written with Rust's shortest
//! round-trip formatting, so reading a generated file gives back exactly the
//! coordinates and prestresses that were computed here.

mod dome;
mod draft;
mod net;
#[cfg(test)]
mod tests;
mod text;
mod write;

pub use dome::{DOME_DEFAULT_CROWN_LOAD, DOME_DEFAULT_LOAD, DomeOptions, lattice_dome};
pub use net::{NetEdge, NetOptions, saddle_net};
use text::num;

/// Largest number of nodes a generator will produce.
pub const MAX_GENERATED_NODES: usize = 4_000_000;

/// The generated reference load (downward, −z).
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Loading {
    /// A load on the plan, N/m², lumped to the nodes by tributary plan area:
    /// each plan cell (a rectangle of the net, a triangle of the dome) gives
    /// every corner an equal share of its area, which is the consistent load
    /// of a uniform pressure on a bilinear rectangle (A/4 per corner) or a
    /// linear triangle (A/3 per corner), since ∫N_i dA is A/4 resp. A/3
    /// (derived). Shares that fall on supported nodes go straight to the
    /// supports and are not written; so the free nodes carry the pressure on
    /// the plan less a strip half a cell wide along the supports, and
    /// refining the grid leaves the total load (almost) unchanged.
    Plan(f64),
    /// The same force on every free node, N (the total grows with the
    /// number of nodes).
    PerNode(f64),
}

impl Loading {
    /// 600 N/m² on the plan: a light snow load (common practice, no source).
    pub const DEFAULT: Loading = Loading::Plan(600.0);

    fn check(self) -> Result<(), String> {
        match self {
            Loading::Plan(p) => finite("load", p),
            Loading::PerNode(f) => finite("node load", f),
        }
    }

    /// The downward force on each node (0 on supported nodes), given the
    /// nodes' tributary plan areas.
    fn forces(self, areas: &[f64], fixed: &[bool]) -> Vec<f64> {
        areas
            .iter()
            .zip(fixed)
            .map(|(&a, &f)| match (f, self) {
                (true, _) => 0.0,
                (false, Loading::Plan(p)) => p * a,
                (false, Loading::PerNode(n)) => n,
            })
            .collect()
    }

    fn describe(self) -> String {
        match self {
            Loading::Plan(p) => format!("load = {} N/m2 on the plan, spread by tributary plan area", num(p)),
            Loading::PerNode(f) => format!("load = {} N per free node", num(f)),
        }
    }
}

/// Tributary plan areas of the nodes: every cell (its corner nodes and its
/// plan area) gives each corner an equal share (see [`Loading::Plan`]).
fn tributary_areas<'a>(n_nodes: usize, cells: impl Iterator<Item = (&'a [usize], f64)>) -> Vec<f64> {
    let mut area = vec![0.0; n_nodes];
    for (corners, a) in cells {
        let share = a / corners.len() as f64;
        for &k in corners {
            area[k] += share;
        }
    }
    area
}


/// A generated model: the TOML text and, for large models, the CSV files it
/// names (file name relative to the TOML file's folder, contents).
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Generated {
    pub toml: String,
    pub csv: Vec<(String, String)>,
}

// Option checks shared by the generators.

fn positive(name: &str, v: f64) -> Result<(), String> {
    if v.is_finite() && v > 0.0 {
        Ok(())
    } else {
        Err(format!(
            "{name} must be a positive finite number, got {}",
            num(v)
        ))
    }
}

fn finite(name: &str, v: f64) -> Result<(), String> {
    if v.is_finite() {
        Ok(())
    } else {
        Err(format!("{name} must be a finite number, got {}", num(v)))
    }
}

fn node_count(n: Option<usize>, what: impl Fn() -> String) -> Result<usize, String> {
    match n {
        Some(n) if n <= MAX_GENERATED_NODES => Ok(n),
        _ => Err(format!(
            "{} would have more than {MAX_GENERATED_NODES} nodes; use fewer",
            what()
        )),
    }
}

fn check_stem(stem: &str) -> Result<(), String> {
    if stem.is_empty() {
        return Err("the file stem is empty".into());
    }
    if stem == "." || stem == ".." {
        return Err(format!("the file stem {stem:?} is not a file name"));
    }
    if stem.contains(['/', '\\']) {
        return Err(format!(
            "the file stem {stem:?} contains a path separator; give a bare name"
        ));
    }
    if stem.chars().any(char::is_control) {
        return Err(format!(
            "the file stem {stem:?} contains a control character"
        ));
    }
    Ok(())
}

fn digits(mut n: usize) -> usize {
    let mut d = 1;
    while n >= 10 {
        n /= 10;
        d += 1;
    }
    d
}
