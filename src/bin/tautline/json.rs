//! `--format json`: the summaries and errors of `check` and `solve` as one
//! JSON object on stdout, for scripts. The exit code is the same as in text
//! mode and is repeated in the object.

use crate::shared::{Counts, Failure};
use serde_json::{Value, json};
use tautline::model::{Diagnostic, Model};
use tautline::results::Results;

/// One diagnostic: every field present, `null` where not known.
pub fn diagnostic(d: &Diagnostic) -> Value {
    json!({
        "file": d.file,
        "line": d.line,
        "column": d.column,
        "item": d.item,
        "message": d.message,
        "help": d.help,
    })
}

/// A problem without a place (a bad option, an unusable output folder).
fn plain(message: &str) -> Value {
    json!({ "file": null, "line": null, "column": null, "item": null, "message": message, "help": null })
}

/// A run that could not go on: `{"ok": false, "errors": [...]}`.
pub fn failure(f: &Failure, exit_code: u8) -> Value {
    let errors: Vec<Value> = match f {
        Failure::Model(e) => e.diagnostics.iter().map(diagnostic).collect(),
        Failure::BadInput(msg) => vec![plain(msg)],
        Failure::Internal(e) => vec![plain(&format!("internal error: {e:#}"))],
    };
    json!({ "ok": false, "exit_code": exit_code, "nothing_written": true, "errors": errors })
}

fn warnings(m: &Model, extra: &[String]) -> Vec<Value> {
    m.warnings.iter().map(diagnostic).chain(extra.iter().map(|w| plain(w))).collect()
}

/// `check`: what the model holds.
pub fn check(m: &Model, c: &Counts, screening: &[String]) -> Value {
    let u = m.units;
    let t = m.total_reference_load();
    json!({
        "ok": true,
        "exit_code": crate::exit::DONE,
        "model": m.files[0],
        "title": m.title,
        "units": { "force": u.force.name(), "length": u.length.name() },
        "nodes": c.nodes,
        "supported_nodes": c.supported,
        "fixed_directions": c.fixed,
        "members": c.members,
        "bars": c.bars,
        "cables": c.cables,
        "catenaries": c.catenaries,
        "springs": c.springs,
        "loads": c.loads,
        "free_dofs": c.free_dofs,
        "total_reference_load": t.map(|v| u.force_out(v)),
        "warnings": warnings(m, screening),
    })
}

/// `solve`: how the run ended and what it wrote.
pub fn solve(m: &Model, r: &Results, written: &[String], extra_warnings: &[String], exit_code: u8) -> Value {
    let last = r.steps.last();
    let critical: Vec<Value> = r
        .critical_points
        .iter()
        .map(|c| {
            json!({
                "kind": c.kind,
                "load_factor": c.load_factor,
                "step": c.step,
                "pinpointed": c.pinpointed,
                "multiplicity": c.multiplicity,
                "mode_converged": c.mode_converged,
            })
        })
        .collect();
    json!({
        "ok": true,
        "exit_code": exit_code,
        "model": r.model_file,
        "converged": r.converged,
        "interrupted": r.stop_reason == "interrupted",
        "stop_reason": r.stop_reason,
        "stop_message": r.stop_message,
        "method": r.analysis.method,
        "control": r.analysis.control,
        "steps": r.steps.len().saturating_sub(1),
        "load_factor": last.map(|s| s.load_factor),
        "watch": r.watch,
        "watched": last.map(|s| s.watched.clone()),
        "critical_points": critical,
        "stable_at_end": r.stable_at_end,
        "slack_members": r.slack_members.len(),
        "relative_imbalance": r.equilibrium.relative_imbalance,
        "totals": {
            "iterations": r.totals.iterations,
            "factorizations": r.totals.factorizations,
            "residual_evaluations": r.totals.residual_evaluations,
            "cutbacks": r.totals.cutbacks,
            "seconds": r.totals.seconds,
        },
        "output_files": written,
        "warnings": warnings(m, extra_warnings),
        "caution": r.caution,
    })
}
