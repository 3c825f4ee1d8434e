//! A `Draft` written as a model file: TOML, with the node, member and load
//! tables in CSV files above a size.
//!
//! This is not `model::write::to_toml`: that writes a validated `Model`
//! whole (every node and member inline, every `[analysis]` setting), while a
//! generated file keeps large tables in CSV, sets only the analysis keys the
//! generator chose, carries its options as comments, and must stay quick at
//! millions of nodes (ids in shared buffers, the number text cache). Routing
//! the generators through `to_toml` would change every generated file.

use std::fmt::Write as _;

use super::Generated;
use super::draft::Draft;
use super::text::{NumText, TomlStr, num};

impl Draft {
    pub(super) fn render(&self, stem: &str, csv_threshold: usize) -> Generated {
        let n = self.at.len();
        let m = self.ends.len();
        let use_csv = n > csv_threshold;
        let node_len = self.node_ids.text.len().checked_div(n).unwrap_or(0);
        let member_len = self.member_ids.text.len().checked_div(m).unwrap_or(0);
        // Rough sizes of one entry; a number takes at most 24 bytes.
        let node_bytes = node_len + 3 * 24 + 8;
        let member_bytes = member_len + 2 * node_len + self.section.len() + 40;
        let tables = if use_csv {
            0
        } else {
            n * (node_bytes + 40) + m * (member_bytes + 70)
        };
        let load_bytes = node_len + 3 * 24 + 8;
        let loads = if use_csv { 0 } else { self.loads.len() * (load_bytes + 32) };
        let cap = 1024 + tables + loads + self.springs.len() * 3 * (node_len + 50);
        let mut nums = NumText::new(n);
        let mut t = String::with_capacity(cap);
        // Writing to a String cannot fail; those results are ignored below.
        for c in &self.comments {
            let _ = writeln!(t, "# {c}");
        }
        let _ = writeln!(t, "title = {}", TomlStr(&self.title));
        let mut csv = Vec::new();
        if use_csv {
            let nodes_name = format!("{stem}_nodes.csv");
            let members_name = format!("{stem}_members.csv");
            let loads_name = format!("{stem}_loads.csv");
            let _ = writeln!(t, "nodes_csv = {}", TomlStr(&nodes_name));
            let _ = writeln!(t, "members_csv = {}", TomlStr(&members_name));
            let _ = writeln!(t, "loads_csv = {}", TomlStr(&loads_name));
            let nodes = self.nodes_csv(n * node_bytes + 64, &mut nums);
            csv.push((nodes_name, nodes));
            let members = self.members_csv(m * member_bytes + 64, &mut nums);
            csv.push((members_name, members));
            let loads = self.loads_csv(self.loads.len() * load_bytes + 64, &mut nums);
            csv.push((loads_name, loads));
        }
        let _ = write!(
            t,
            "\n[[section]]\nname = {}\nEA = {}\n",
            TomlStr(self.section),
            num(self.ea)
        );
        // Generated ids are ASCII letters, digits and underscores: they need
        // no quoting or escaping in TOML or CSV.
        if !use_csv {
            for k in 0..n {
                t.push_str("\n[[node]]\nid = \"");
                t.push_str(self.node_ids.get(k));
                t.push_str("\"\nat = ");
                push_triple(&mut t, &mut nums, self.at[k]);
                t.push('\n');
                if self.fixed[k] {
                    t.push_str("fix = \"xyz\"\n");
                }
            }
            for k in 0..m {
                let [a, b] = self.ends[k];
                t.push_str("\n[[member]]\nid = \"");
                t.push_str(self.member_ids.get(k));
                t.push_str("\"\nkind = \"");
                t.push_str(self.kind.name());
                t.push_str("\"\nends = [\"");
                t.push_str(self.node_ids.get(a));
                t.push_str("\", \"");
                t.push_str(self.node_ids.get(b));
                t.push_str("\"]\nsection = \"");
                t.push_str(self.section);
                t.push_str("\"\n");
                if let Some(p) = self.prestress[k] {
                    t.push_str("prestress = ");
                    nums.push(&mut t, p);
                    t.push('\n');
                }
            }
        }
        for &(node, k) in &self.springs {
            for dir in ["x", "y", "z"] {
                t.push_str("\n[[spring]]\nnode = \"");
                t.push_str(self.node_ids.get(node));
                t.push_str("\"\ndir = \"");
                t.push_str(dir);
                t.push_str("\"\nk = ");
                nums.push(&mut t, k);
                t.push('\n');
            }
        }
        if !use_csv {
            for &(node, f) in &self.loads {
                t.push_str("\n[[load]]\nnode = \"");
                t.push_str(self.node_ids.get(node));
                t.push_str("\"\nforce = ");
                push_triple(&mut t, &mut nums, f);
                t.push('\n');
            }
        }
        let control = self.node_ids.get(self.control);
        let _ = write!(
            t,
            "\n[analysis]\nstrain = \"green\"\nmethod = \"newton\"\ncontrol = \"load\"\n\
             steps = 10\ntarget = 1.0\nnode = \"{control}\"\ndir = \"z\"\n"
        );
        if let Some(tol) = self.tolerance {
            let _ = writeln!(t, "tolerance = {}", num(tol));
        }
        let _ = writeln!(t, "watch = [\"{control}.z\"]");
        Generated { toml: t, csv }
    }

    fn nodes_csv(&self, cap: usize, nums: &mut NumText) -> String {
        let mut s = String::with_capacity(cap);
        s.push_str("id,x,y,z,fix\n");
        for k in 0..self.at.len() {
            let p = self.at[k];
            s.push_str(self.node_ids.get(k));
            for v in p {
                s.push(',');
                nums.push(&mut s, v);
            }
            s.push_str(if self.fixed[k] { ",xyz\n" } else { ",\n" });
        }
        s
    }

    fn loads_csv(&self, cap: usize, nums: &mut NumText) -> String {
        let mut s = String::with_capacity(cap);
        s.push_str("node,fx,fy,fz\n");
        for &(node, f) in &self.loads {
            s.push_str(self.node_ids.get(node));
            for v in f {
                s.push(',');
                nums.push(&mut s, v);
            }
            s.push('\n');
        }
        s
    }

    fn members_csv(&self, cap: usize, nums: &mut NumText) -> String {
        let mut s = String::with_capacity(cap);
        s.push_str("id,kind,end1,end2,section,prestress\n");
        for k in 0..self.ends.len() {
            let [a, b] = self.ends[k];
            for (i, cell) in [
                self.member_ids.get(k),
                self.kind.name(),
                self.node_ids.get(a),
                self.node_ids.get(b),
                self.section,
            ]
            .into_iter()
            .enumerate()
            {
                if i > 0 {
                    s.push(',');
                }
                s.push_str(cell);
            }
            s.push(',');
            if let Some(p) = self.prestress[k] {
                nums.push(&mut s, p);
            }
            s.push('\n');
        }
        s
    }
}

/// `[a, b, c]`
fn push_triple(out: &mut String, nums: &mut NumText, v: [f64; 3]) {
    out.push('[');
    nums.push(out, v[0]);
    out.push_str(", ");
    nums.push(out, v[1]);
    out.push_str(", ");
    nums.push(out, v[2]);
    out.push(']');
}
