//! One integration-test binary. Modules:
//! - `verification`: the main job checked against published or derived closed forms;
//! - `properties`: solver facts that must hold on any model (equilibrium, method agreement);
//! - `cli`: the command-line contract (exit codes, files, messages).
mod common;
mod cli;
mod form;
mod plots;
mod properties;
mod quasi_newton;
mod report;
mod browser;
mod stability;
mod verification;
