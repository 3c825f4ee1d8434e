//! One integration-test binary. Modules:
//! - `verification`: the main job checked against published or derived closed forms;
//! - `properties`: solver facts that must hold on any model (equilibrium, method agreement);
//! - `cli`: the command-line contract (exit codes, files, messages);
//! - `catenary`: self-weight, the elastic catenary, the parabolic cable, slack reporting;
//! - `fields`: `keep_fields` and the whole displacement fields in `fields.csv`;
//! - `ids`: integer ids solve exactly as string ids.
mod common;
mod catenary;
mod cli;
mod fields;
mod form;
mod ids;
mod malformed;
mod determinism;
mod pictures;
mod plots;
mod properties;
mod quasi_newton;
mod relax;
mod report;
mod browser;
mod stability;
mod start;
mod branch;
mod verification;
mod workflow;
mod readme;
