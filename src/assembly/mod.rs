//! The global system: degree-of-freedom numbering, the sparsity pattern built
//! once per structure, and the residual r(u, λ) = f_int(u) − λ·f_ref with the
//! tangent K(u) refilled in place, in parallel with a fixed summation order.

pub mod dofs;
pub mod gather;
pub mod member_table;
pub mod pattern;
pub mod system;

pub use dofs::DofMap;
pub use pattern::Pattern;
pub use system::{BuildError, MemberResult, System, SystemMemory};
