//! `relax`: static equilibrium at one load factor by dynamic relaxation,
//! an independent check of `solve` on the same model.

use crate::exit;
use crate::shared::{Failure, load, prepare_out_dir};
use std::path::Path;
use tautline::assembly::System;
use tautline::form::relax::{RelaxConfig, RelaxStop, Relaxation};
use tautline::model::Control;
use tautline::report;

pub fn relax(
    model_path: &Path,
    out: &Path,
    load_factor: Option<f64>,
    tolerance: Option<f64>,
    max_steps: usize,
) -> Result<u8, Failure> {
    let m = load(model_path, crate::args::Format::Text)?;
    let a = &m.analysis;
    let lambda = match load_factor {
        Some(l) if !l.is_finite() => return Err(Failure::BadInput(format!("--load-factor {l}: must be a finite number"))),
        Some(l) => l,
        None if a.control == Control::Displacement => 1.0,
        None => a.target,
    };
    let tolerance = tolerance.unwrap_or(a.tolerance);
    if !(tolerance > 0.0 && tolerance <= 0.1) {
        return Err(Failure::BadInput(format!("--tolerance {tolerance}: must be in (0, 0.1]")));
    }
    if max_steps == 0 {
        return Err(Failure::BadInput("--max-steps must be at least 1".into()));
    }
    let system = System::new(&m).map_err(|e| {
        Failure::BadInput(format!("member \"{}\": {}; change the prestress or the section", e.member, e.message))
    })?;
    if system.n_free() == 0 {
        return Err(Failure::BadInput("the model has no free degree of freedom".into()));
    }
    prepare_out_dir(out, Some(model_path), &m.files[0], true)?;
    let mut u = vec![0.0; system.n_free()];
    let mut dr = Relaxation::new(&system, m.n_nodes());
    let rep = dr.equilibrium(&system, lambda, &mut u, &RelaxConfig { tolerance, max_steps });

    let units = m.units;
    let ln = units.length.name();
    let mut csv = format!("node,ux_{ln},uy_{ln},uz_{ln}\n");
    for (k, node) in m.nodes.iter().enumerate() {
        let d: [f64; 3] = std::array::from_fn(|ax| units.length_out(system.dofs.displacement(&u, k, ax)));
        let label = tautline::csv::field(&node.label);
        csv += &format!("{label},{:e},{:e},{:e}\n", d[0], d[1], d[2]);
    }
    let mut staged = report::Staged::default();
    let io = |e: std::io::Error| Failure::Internal(anyhow::anyhow!("writing into {}: {e}", out.display()));
    staged.add(out, "relax.csv", csv.as_bytes()).map_err(io)?;
    let written = staged.commit().map_err(io)?;

    println!("relax: {} at load factor {lambda}", m.title);
    println!(
        "dynamic relaxation: {} time steps, {} kinetic-energy peaks, {} mass updates, {} stability restarts, relative residual {:.3e}",
        rep.steps, rep.peaks, rep.mass_updates, rep.restarts, rep.relative_residual
    );
    for w in &a.watch {
        let v = units.length_out(system.dofs.displacement(&u, w.node, w.axis.index()));
        println!("  {} = {v:.6e} {ln}", m.node_dir_label(*w));
    }
    println!("wrote {}", written.iter().map(|p| p.display().to_string()).collect::<Vec<_>>().join(", "));
    Ok(match rep.stop {
        RelaxStop::Converged => {
            println!("done: relative residual {:.3e} ≤ tolerance {tolerance:.1e}", rep.relative_residual);
            exit::DONE
        }
        RelaxStop::StepCap => {
            println!(
                "stopped before the target: {} time steps (--max-steps) reached at a relative residual of {:.3e}, above the tolerance {tolerance:.1e}; relax.csv holds the state reached",
                rep.steps, rep.relative_residual
            );
            exit::STOPPED
        }
        RelaxStop::NotFinite => {
            println!(
                "stopped before the target: the motion stayed unstable after {} time steps and {} restarts with heavier masses; \
                 relax.csv holds the last state at rest before that (relative residual {:.3e}), which is not an equilibrium",
                rep.steps, rep.restarts, rep.relative_residual
            );
            exit::STOPPED
        }
    })
}
