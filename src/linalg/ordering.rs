//! A nested-dissection ordering of the tangent's pattern, offered beside
//! faer's approximate minimum degree (AMD); `Ldlt::new` keeps whichever
//! gives the smaller factor.
//!
//! Why: on the big plane nets the factorization is most of the run
//! (a 578 × 578 net, a million DOF: 2.9 to 3.7 s a factorization with AMD
//! on this machine, measured on two days), and
//! for meshes of the plane a nested-dissection ordering is the one whose
//! fill grows as N·log N and whose work as N^1.5 (George, "Nested
//! dissection of a regular finite element mesh", SIAM J. Numer. Anal. 10,
//! 1973), with its separators eliminated last as dense blocks that the
//! supernodal factorization does at matrix-matrix speed.
//!
//! How: the DOFs of one node couple to the same DOFs, so they are merged
//! into one vertex first (a supervariable); the node graph is then cut
//! recursively by level structures from a pseudo-peripheral vertex, the
//! smallest level that leaves a third or more on either side being the
//! separator (George and Liu, *Computer Solution of
//! Large Sparse Positive Definite Systems*, 1981, §4.3 for the
//! pseudo-peripheral node, ch. 8 for level-structure dissection). Each
//! part is ordered before its separator; parts of [`LEAF`] vertices or
//! fewer are kept in the order their breadth-first search met them.
//!
//! Measured 2026-12-04 (one numeric factorization, warm, this 2-core
//! machine): a generated 578 × 578 net (995,328 DOF) has 104.3 M factor
//! entries and factorizes in 2.35 s with this ordering, 136.4 M and 3.7 s
//! with AMD; the 183 × 183 net 8.0 M and 0.12 s against 9.0 M and 0.16 s.

use crate::assembly::Pattern;

/// Parts of at most this many node vertices are not cut further. Measured
/// 2026-12-04 on a generated 183 × 183 net (100k DOF), entries of the
/// factor: 8.00 M with 1 or 2, 8.12 M with 4, 8.55 M with 8, 9.33 M with
/// 32; AMD 8.96 M.
const LEAF: usize = 2;

/// The elimination order `fwd` (`fwd[k]` = the DOF eliminated k-th) and its
/// inverse, for `SymmetricOrdering::Custom`.
pub struct Order {
    pub fwd: Vec<u32>,
    pub inv: Vec<u32>,
}

/// The full (both triangles) adjacency of a graph, CSR, no self loops.
struct Graph {
    ptr: Vec<usize>,
    adj: Vec<u32>,
}

impl Graph {
    fn n(&self) -> usize {
        self.ptr.len() - 1
    }
    fn neighbours(&self, v: usize) -> &[u32] {
        &self.adj[self.ptr[v]..self.ptr[v + 1]]
    }
}

/// The DOF graph of the upper-triangle pattern, both triangles, sorted rows.
fn dof_graph(p: &Pattern) -> Graph {
    let n = p.n;
    let mut count = vec![0usize; n];
    for j in 0..n {
        for &i in &p.row_idx[p.col_ptr[j] as usize..p.col_ptr[j + 1] as usize] {
            if i as usize != j {
                count[i as usize] += 1;
                count[j] += 1;
            }
        }
    }
    let mut ptr = Vec::with_capacity(n + 1);
    ptr.push(0);
    for c in &count {
        ptr.push(ptr.last().unwrap() + c);
    }
    let mut fill = ptr[..n].to_vec();
    let mut adj = vec![0u32; ptr[n]];
    // Column j holds the rows i < j, ascending. Taking the columns in
    // order, vertex v first gets its lower neighbours (column v's rows) and
    // then its upper ones (v as a row of the later columns), so every list
    // comes out sorted.
    for j in 0..n {
        for &i in &p.row_idx[p.col_ptr[j] as usize..p.col_ptr[j + 1] as usize] {
            let i = i as usize;
            if i != j {
                adj[fill[i]] = j as u32;
                fill[i] += 1;
                adj[fill[j]] = i as u32;
                fill[j] += 1;
            }
        }
    }
    debug_assert!((0..n).all(|v| adj[ptr[v]..ptr[v + 1]].is_sorted()));
    Graph { ptr, adj }
}

/// Whether DOFs a and b have the same closed neighbourhood (adj ∪ self).
fn same_closed_neighbourhood(g: &Graph, a: usize, b: usize) -> bool {
    let (na, nb) = (g.neighbours(a), g.neighbours(b));
    if na.len() != nb.len() || na.binary_search(&(b as u32)).is_err() {
        return false;
    }
    // na ∪ {a} = nb ∪ {b}: merge-walk both lists with the own index in.
    fn closed(list: &[u32], own: usize) -> impl Iterator<Item = u32> + '_ {
        let at = list.partition_point(|&x| (x as usize) < own);
        list[..at].iter().copied().chain(std::iter::once(own as u32)).chain(list[at..].iter().copied())
    }
    closed(na, a).eq(closed(nb, b))
}

/// Groups of consecutive DOFs with equal closed neighbourhoods (a node's
/// free DOFs, numbered together by the DOF map), and the graph between the
/// groups.
fn supervariables(g: &Graph) -> (Vec<usize>, Graph) {
    let n = g.n();
    // group_start[k]..group_start[k+1] are the DOFs of group k.
    let mut group_start = vec![0usize];
    let mut group_of = vec![0u32; n];
    for (v, group) in group_of.iter_mut().enumerate().skip(1) {
        let first = *group_start.last().unwrap();
        if !same_closed_neighbourhood(g, first, v) {
            group_start.push(v);
        }
        *group = (group_start.len() - 1) as u32;
    }
    group_start.push(n);
    let m = group_start.len() - 1;
    let mut ptr = Vec::with_capacity(m + 1);
    ptr.push(0);
    let mut adj = Vec::new();
    let mut seen = vec![u32::MAX; m];
    for (k, &first) in group_start[..m].iter().enumerate() {
        for &w in g.neighbours(first) {
            let h = group_of[w as usize];
            if h as usize != k && seen[h as usize] != k as u32 {
                seen[h as usize] = k as u32;
                adj.push(h);
            }
        }
        ptr.push(adj.len());
    }
    (group_start, Graph { ptr, adj })
}

/// Breadth-first level structure of the part `part` (vertices whose
/// `region` is `part`) from `root`: the vertices in the order met, and the
/// index in that list where each level starts (with the end appended).
fn levels(g: &Graph, region: &[u32], part: u32, root: u32, level_of: &mut [u32], order: &mut Vec<u32>) -> Vec<usize> {
    order.clear();
    order.push(root);
    level_of[root as usize] = 0;
    let mut starts = vec![0usize];
    let mut head = 0;
    let mut level = 0u32;
    while head < order.len() {
        let end = order.len();
        for k in head..end {
            let v = order[k] as usize;
            for &w in g.neighbours(v) {
                if region[w as usize] == part && level_of[w as usize] == u32::MAX {
                    level_of[w as usize] = level + 1;
                    order.push(w);
                }
            }
        }
        starts.push(end);
        head = end;
        level += 1;
    }
    starts
}

/// Nested dissection of the node-vertex graph; every vertex gets its place.
fn dissect(g: &Graph) -> Vec<u32> {
    let n = g.n();
    let mut region = vec![0u32; n];
    let mut next_region = 1u32;
    let mut level_of = vec![u32::MAX; n];
    let mut out: Vec<u32> = Vec::with_capacity(n);
    let mut bfs: Vec<u32> = Vec::new();
    // Work list, last in first out: either a part to cut, or a separator to
    // emit once both of its parts are out.
    enum Work {
        Part(Vec<u32>),
        Emit(Vec<u32>),
    }
    let mut work = vec![Work::Part((0..n as u32).collect())];
    while let Some(item) = work.pop() {
        let part = match item {
            Work::Emit(sep) => {
                out.extend_from_slice(&sep);
                continue;
            }
            Work::Part(p) => p,
        };
        if part.is_empty() {
            continue;
        }
        let id = next_region;
        next_region += 1;
        for &v in &part {
            region[v as usize] = id;
        }
        // The part may be disconnected: take one component at a time.
        let root0 = part[0];
        // Pseudo-peripheral root: from a vertex, go to a vertex of least
        // degree in the last level while the eccentricity grows.
        let mut root = root0;
        let mut starts = levels(g, &region, id, root, &mut level_of, &mut bfs);
        for _ in 0..8 {
            let last = &bfs[starts[starts.len() - 2]..];
            let cand = *last.iter().min_by_key(|&&v| g.neighbours(v as usize).len()).unwrap();
            for &v in &bfs {
                level_of[v as usize] = u32::MAX;
            }
            let trial = levels(g, &region, id, cand, &mut level_of, &mut bfs);
            if trial.len() > starts.len() {
                root = cand;
                starts = trial;
            } else {
                for &v in &bfs {
                    level_of[v as usize] = u32::MAX;
                }
                starts = levels(g, &region, id, root, &mut level_of, &mut bfs);
                break;
            }
        }
        let component: Vec<u32> = bfs.clone();
        let rest: Vec<u32> = if component.len() < part.len() {
            part.iter().copied().filter(|&v| level_of[v as usize] == u32::MAX).collect()
        } else {
            Vec::new()
        };
        let n_levels = starts.len() - 1;
        if component.len() <= LEAF || n_levels < 3 {
            for &v in &component {
                level_of[v as usize] = u32::MAX;
            }
            out.extend_from_slice(&component);
            work.push(Work::Part(rest));
            continue;
        }
        // The separator: the smallest level that leaves at least a third of
        // the component on either side, else the middle level by count.
        let size = component.len();
        let half = size / 2;
        let median = (1..n_levels - 1).find(|&l| starts[l + 1] > half).unwrap_or(n_levels / 2);
        let balanced = |l: &usize| 3 * starts[*l] >= size && 3 * (size - starts[l + 1]) >= size;
        let mid = (1..n_levels - 1).filter(balanced).min_by_key(|&l| (starts[l + 1] - starts[l], l.abs_diff(median))).unwrap_or(median);
        let mid_level = mid as u32;
        let mut lower = component[..starts[mid]].to_vec();
        let upper = component[starts[mid + 1]..].to_vec();
        let mut separator = Vec::new();
        // A separator vertex with no neighbour above it separates nothing:
        // it joins the lower part.
        for &v in &component[starts[mid]..starts[mid + 1]] {
            let touches_upper = g.neighbours(v as usize).iter().any(|&w| region[w as usize] == id && level_of[w as usize] == mid_level + 1);
            if touches_upper { separator.push(v) } else { lower.push(v) }
        }
        for &v in &component {
            level_of[v as usize] = u32::MAX;
        }
        work.push(Work::Part(rest));
        work.push(Work::Emit(separator));
        work.push(Work::Part(upper));
        work.push(Work::Part(lower));
    }
    out
}

/// The nested-dissection elimination order of the pattern's DOFs.
pub fn nested_dissection(p: &Pattern) -> Order {
    let n = p.n;
    if n == 0 {
        return Order { fwd: Vec::new(), inv: Vec::new() };
    }
    let g = dof_graph(p);
    let (group_start, quotient) = supervariables(&g);
    drop(g);
    let groups = dissect(&quotient);
    let mut fwd = Vec::with_capacity(n);
    for k in groups {
        fwd.extend((group_start[k as usize]..group_start[k as usize + 1]).map(|d| d as u32));
    }
    let mut inv = vec![0u32; n];
    for (new, &old) in fwd.iter().enumerate() {
        inv[old as usize] = new as u32;
    }
    Order { fwd, inv }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The upper-triangle pattern of a k × k grid of nodes with three DOFs
    /// each, every node coupled to its four neighbours.
    fn grid(k: usize) -> Pattern {
        let n = 3 * k * k;
        let node = |i: usize, j: usize| i * k + j;
        let mut cols: Vec<Vec<usize>> = vec![Vec::new(); n];
        for i in 0..k {
            for j in 0..k {
                let a = node(i, j);
                let mut near = vec![a];
                if i + 1 < k { near.push(node(i + 1, j)) }
                if j + 1 < k { near.push(node(i, j + 1)) }
                if i > 0 { near.push(node(i - 1, j)) }
                if j > 0 { near.push(node(i, j - 1)) }
                for b in near {
                    for x in 0..3 {
                        for y in 0..3 {
                            let (r, c) = (3 * a + x, 3 * b + y);
                            if r <= c {
                                cols[c].push(r);
                            }
                        }
                    }
                }
            }
        }
        let mut col_ptr = vec![0usize];
        let mut row_idx = Vec::new();
        for c in cols.iter_mut() {
            c.sort_unstable();
            c.dedup();
            row_idx.extend_from_slice(c);
            col_ptr.push(row_idx.len());
        }
        Pattern::from_upper_csc(n, &col_ptr, &row_idx).unwrap()
    }

    #[test]
    fn the_order_is_a_permutation_that_keeps_a_nodes_dofs_together() {
        let p = grid(23);
        let o = nested_dissection(&p);
        let mut seen = vec![false; p.n];
        for &d in &o.fwd {
            assert!(!seen[d as usize], "DOF {d} twice");
            seen[d as usize] = true;
        }
        assert!(seen.iter().all(|&s| s));
        for (k, &d) in o.fwd.iter().enumerate() {
            assert_eq!(o.inv[d as usize] as usize, k);
        }
        for chunk in o.fwd.chunks(3) {
            assert_eq!(chunk[0] / 3, chunk[2] / 3, "a node's DOFs were split: {chunk:?}");
        }
    }

    #[test]
    fn a_grid_gets_a_smaller_factor_than_by_minimum_degree() {
        // For a plane mesh nested dissection is the asymptotically better
        // order (George 1973); a 64 × 64 grid already shows it.
        use faer::Side;
        use faer::perm::PermRef;
        use faer::sparse::SymbolicSparseColMatRef;
        use faer::sparse::linalg::cholesky::{CholeskySymbolicParams, SymmetricOrdering, factorize_symbolic_cholesky};
        let p = grid(64);
        let view = SymbolicSparseColMatRef::new_checked(p.n, p.n, &p.col_ptr, None, &p.row_idx);
        let fill = |ord: SymmetricOrdering<'_, u32>| {
            factorize_symbolic_cholesky(view, Side::Upper, ord, CholeskySymbolicParams::default()).unwrap().len_val()
        };
        let o = nested_dissection(&p);
        let nd = fill(SymmetricOrdering::Custom(PermRef::new_checked(&o.fwd, &o.inv, p.n)));
        let amd = fill(SymmetricOrdering::Amd);
        assert!(nd < amd, "nested dissection {nd} entries, AMD {amd}");
    }

    #[test]
    fn tiny_patterns_are_ordered() {
        for k in 0..4 {
            let o = nested_dissection(&grid(k));
            let mut sorted = o.fwd.clone();
            sorted.sort_unstable();
            assert_eq!(sorted, (0..(3 * k * k) as u32).collect::<Vec<_>>());
        }
    }

    #[test]
    fn a_grid_is_cut_through_its_middle_last() {
        // The last vertices eliminated are the top separator: about one
        // grid line (k nodes), not a big share of the grid.
        let k = 31;
        let p = grid(k);
        let o = nested_dissection(&p);
        let g = super::dof_graph(&p);
        // Remove the last 3·(k+2) DOFs: the rest must fall apart in at
        // least two pieces of at least a quarter each.
        let cut = 3 * (k + 2);
        let keep: Vec<bool> = {
            let mut keep = vec![true; p.n];
            for &d in &o.fwd[p.n - cut..] {
                keep[d as usize] = false;
            }
            keep
        };
        let mut comp = vec![usize::MAX; p.n];
        let mut sizes = Vec::new();
        for s in 0..p.n {
            if !keep[s] || comp[s] != usize::MAX {
                continue;
            }
            let id = sizes.len();
            let mut stack = vec![s];
            comp[s] = id;
            let mut size = 0;
            while let Some(v) = stack.pop() {
                size += 1;
                for &w in g.neighbours(v) {
                    let w = w as usize;
                    if keep[w] && comp[w] == usize::MAX {
                        comp[w] = id;
                        stack.push(w);
                    }
                }
            }
            sizes.push(size);
        }
        sizes.sort_unstable();
        assert!(sizes.len() >= 2, "the last {cut} DOFs do not separate the grid: {sizes:?}");
        assert!(sizes[sizes.len() - 2] >= p.n / 4, "unbalanced cut: {sizes:?}");
    }
}
