//! One element at a time: internal force and tangent of a two-node axial
//! member, given its chord. Kernels know nothing of the global system and do
//! not allocate.
//!
//! Symbols: `d` initial chord (node j − node i), `du` difference of the end
//! displacements, `x = d + du` the current chord, `l = |x|`, `L` the initial
//! length `|d|`, `Lr` the unstressed (rest) length, `EA` the axial rigidity.
//! A member's stretch is computed from the displacements, never by subtracting
//! two nearly equal lengths:
//!
//! ```text
//! l² − Lr² = (L² − Lr²) + 2·d·du + du·du
//! ```
//!
//! which keeps the residual noise near 1e-13 of the load where the naive
//! `l − Lr` leaves 1e-10 at strains of 1e-3.

pub mod bar;
pub mod catenary;

pub use bar::{AxialState, Bar};
pub use catenary::Catenary;
