//! Numbering of the free translational degrees of freedom.
//!
//! Every node has three translations; supported ones are removed. Free DOFs are
//! numbered node by node, x before y before z, so a node's free DOFs are
//! consecutive.

use crate::model::{Axis, Model, NodeDir};

/// Marks a supported direction in [`DofMap::dof`].
pub const FIXED: u32 = u32::MAX;

#[derive(Clone, Debug)]
pub struct DofMap {
    /// `dof[3·node + axis]`: the free DOF index, or [`FIXED`].
    dof: Vec<u32>,
    /// For each free DOF, its node and direction.
    owner: Vec<NodeDir>,
    /// For each free DOF, its index 3·node + axis in [`DofMap::raw`].
    raw_index: Vec<u32>,
}

impl DofMap {
    pub fn new(model: &Model) -> DofMap {
        let mut dof = Vec::with_capacity(3 * model.n_nodes());
        let mut owner = Vec::new();
        let mut raw_index = Vec::new();
        for (node, n) in model.nodes.iter().enumerate() {
            for axis in Axis::ALL {
                if n.fixed[axis.index()] {
                    dof.push(FIXED);
                } else {
                    raw_index.push(dof.len() as u32);
                    dof.push(owner.len() as u32);
                    owner.push(NodeDir { node, axis });
                }
            }
        }
        DofMap { dof, owner, raw_index }
    }

    /// Number of free DOFs.
    pub fn n_free(&self) -> usize {
        self.owner.len()
    }

    /// Free DOF index of a node direction, if it is free.
    #[inline]
    pub fn dof(&self, node: usize, axis: usize) -> Option<usize> {
        let d = self.dof[3 * node + axis];
        (d != FIXED).then_some(d as usize)
    }

    /// Raw table, `FIXED` for supported directions.
    #[inline]
    pub fn raw(&self) -> &[u32] {
        &self.dof
    }

    /// For each free DOF, its index 3·node + axis in [`DofMap::raw`].
    #[inline]
    pub fn raw_index(&self) -> &[u32] {
        &self.raw_index
    }

    /// The node and direction of a free DOF.
    pub fn owner(&self, dof: usize) -> NodeDir {
        self.owner[dof]
    }

    /// Displacement of a node direction from the free-DOF vector (zero if supported).
    #[inline]
    pub fn displacement(&self, u: &[f64], node: usize, axis: usize) -> f64 {
        self.dof(node, axis).map_or(0.0, |d| u[d])
    }
}
