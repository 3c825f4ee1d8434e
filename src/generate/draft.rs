//! A generated model before it is written: one section and one member kind,
//! node and member ids in shared buffers (a generator may make millions).

use std::fmt::{self, Write as _};

use super::text::num;

/// Many short labels in one buffer.
pub(super) struct Labels {
    pub(super) text: String,
    pub(super) ends: Vec<usize>,
}

impl Labels {
    pub(super) fn with_capacity(n: usize, bytes_each: usize) -> Labels {
        Labels {
            text: String::with_capacity(n.saturating_mul(bytes_each)),
            ends: Vec::with_capacity(n),
        }
    }

    pub(super) fn push(&mut self, label: fmt::Arguments) {
        // Writing to a String cannot fail.
        let _ = self.text.write_fmt(label);
        self.ends.push(self.text.len());
    }

    pub(super) fn get(&self, i: usize) -> &str {
        let start = if i == 0 { 0 } else { self.ends[i - 1] };
        &self.text[start..self.ends[i]]
    }
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(super) enum Kind {
    Bar,
    Cable,
}

impl Kind {
    pub(super) fn name(self) -> &'static str {
        match self {
            Kind::Bar => "bar",
            Kind::Cable => "cable",
        }
    }
}

/// A generated model before it is written: one section and one member kind.
pub(super) struct Draft {
    pub(super) title: String,
    pub(super) comments: Vec<String>,
    pub(super) section: &'static str,
    pub(super) ea: f64,
    pub(super) kind: Kind,
    pub(super) node_ids: Labels,
    pub(super) at: Vec<[f64; 3]>,
    /// Supported in x, y and z.
    pub(super) fixed: Vec<bool>,
    pub(super) member_ids: Labels,
    pub(super) ends: Vec<[usize; 2]>,
    pub(super) prestress: Vec<Option<f64>>,
    /// Node and stiffness of springs in x, y and z.
    pub(super) springs: Vec<(usize, f64)>,
    pub(super) loads: Vec<(usize, [f64; 3])>,
    /// Controlled and watched node (in z).
    pub(super) control: usize,
    pub(super) tolerance: Option<f64>,
}

impl Draft {
    pub(super) fn new(nodes: usize, node_id_len: usize, members: usize, member_id_len: usize) -> Draft {
        Draft {
            title: String::new(),
            comments: Vec::new(),
            section: "",
            ea: 0.0,
            kind: Kind::Bar,
            node_ids: Labels::with_capacity(nodes, node_id_len),
            at: Vec::with_capacity(nodes),
            fixed: Vec::with_capacity(nodes),
            member_ids: Labels::with_capacity(members, member_id_len),
            ends: Vec::with_capacity(members),
            prestress: Vec::with_capacity(members),
            springs: Vec::new(),
            loads: Vec::new(),
            control: 0,
            tolerance: None,
        }
    }

    pub(super) fn node(&mut self, id: fmt::Arguments, at: [f64; 3], fixed: bool) {
        self.node_ids.push(id);
        self.at.push(at.map(|v| v + 0.0));
        self.fixed.push(fixed);
    }

    pub(super) fn member(&mut self, id: fmt::Arguments, ends: [usize; 2], prestress: Option<f64>) {
        self.member_ids.push(id);
        self.ends.push(ends);
        self.prestress.push(prestress);
    }

    /// Downward loads, one per node with a nonzero force.
    pub(super) fn add_loads(&mut self, down: &[f64]) {
        for (k, &f) in down.iter().enumerate() {
            if f != 0.0 {
                self.loads.push((k, [0.0, 0.0, -f]));
            }
        }
    }

    pub(super) fn length(&self, [i, j]: [usize; 2]) -> f64 {
        let (p, q) = (self.at[i], self.at[j]);
        (q[0] - p[0]).hypot(q[1] - p[1]).hypot(q[2] - p[2])
    }

    /// Everything written is finite and no member is degenerate.
    pub(super) fn check(&self, what: &str) -> Result<(), String> {
        let mut lo = [f64::INFINITY; 3];
        let mut hi = [f64::NEG_INFINITY; 3];
        for p in &self.at {
            if !p.iter().all(|v| v.is_finite()) {
                return Err(format!(
                    "the {what} has coordinates too large to represent; reduce its dimensions"
                ));
            }
            for k in 0..3 {
                lo[k] = lo[k].min(p[k]);
                hi[k] = hi[k].max(p[k]);
            }
        }
        let size = (hi[0] - lo[0]).hypot(hi[1] - lo[1]).hypot(hi[2] - lo[2]);
        for (m, &ends) in self.ends.iter().enumerate() {
            let len = self.length(ends);
            if !len.is_finite() || len <= 1e-10 * size {
                return Err(format!(
                    "the {what}'s dimensions are out of range: member {} would be {} m long",
                    self.member_ids.get(m),
                    num(len)
                ));
            }
            if let Some(p) = self.prestress[m]
                && !p.is_finite()
            {
                return Err(format!(
                    "the {what}'s prestress is too large to represent; reduce the force density or the spans"
                ));
            }
        }
        Ok(())
    }
}
