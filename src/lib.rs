//! tautline: large-displacement equilibrium of pin-jointed trusses and cable nets.
pub mod assembly;
pub mod element;
pub mod model;
pub mod linalg;
pub mod observe;
pub mod solve;
pub mod path;
pub mod generate;
pub mod results;
pub mod report;
pub mod form;
pub mod verify;
pub mod screen;
pub mod csv;
