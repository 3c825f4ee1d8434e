//! A parsed model through what `check` and the start of `solve` do: build the
//! system (DOF numbering, sparsity pattern, rest lengths), the symbolic
//! analysis, the first tangent and its factorization with the inertia, and a
//! short traced path. Models are kept small so an iteration stays fast.
#![no_main]

use libfuzzer_sys::fuzz_target;
use tautline::assembly::System;
use tautline::linalg::Ldlt;
use tautline::observe::Silent;

mod split;

/// Larger models say nothing new to the fuzzer and slow every run.
const MAX_NODES: usize = 64;
const MAX_MEMBERS: usize = 256;

fuzz_target!(|data: &[u8]| {
    let Ok(mut m) = split::split(data).load() else { return };
    if m.n_nodes() > MAX_NODES || m.n_members() > MAX_MEMBERS {
        return;
    }
    let Ok(system) = System::new(&m) else { return };
    let n = system.n_free();
    if n == 0 {
        return;
    }
    let Ok(mut ldlt) = Ldlt::new(&system.pattern, faer::Par::Seq) else { return };
    let mut k = system.new_tangent_values();
    let mut r = vec![0.0; n];
    let mut reactions = vec![0.0; 3 * m.n_nodes()];
    let u = vec![0.0; n];
    system.residual_and_tangent(&u, m.analysis.start_load_factor, &mut r, &mut reactions, &mut k);
    let inertia = ldlt.factorize(&system.pattern, &k);
    if inertia.is_singular() {
        let _ = ldlt.factorize_regularized(&system.pattern, &k);
    }

    // A short path: few steps, few iterations, so a run cannot take long.
    let a = &mut m.analysis;
    a.steps = a.steps.min(3);
    a.max_steps = a.max_steps.min(4);
    a.max_iterations = a.max_iterations.min(12);
    a.max_cutbacks = a.max_cutbacks.min(3);
    let Ok(solver) = tautline::Solver::with_parallelism(&m, faer::Par::Seq) else { return };
    let run = solver.trace(&mut Silent);
    let res = tautline::results::build(&m, &run.system, &run.path, &run.wasted, 0.0);
    let _ = tautline::report::results_json(&res);
    let _ = tautline::report::path_csv(&res);
});
