//! tautline: large-displacement equilibrium of pin-jointed trusses and cable nets.
pub mod model;
