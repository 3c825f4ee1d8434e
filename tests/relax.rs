//! Dynamic relaxation with kinetic damping (Barnes 1999) against the static
//! solver and closed forms; form finding to target forces and lengths.

use crate::common::{PRETENSIONED_CABLE, model, rel_err, trace};
use tautline::assembly::System;
use tautline::form::relax::{RelaxConfig, RelaxStop, Relaxation};
use tautline::generate::{NetOptions, saddle_net};
use tautline::model::{self as tmodel, Method};

fn norm(v: &[f64]) -> f64 {
    v.iter().map(|x| x * x).sum::<f64>().sqrt()
}

/// Relaxes a model's system at load factor `lambda` from u = 0.
fn relax(m: &tmodel::Model, lambda: f64, cfg: &RelaxConfig) -> (System, Vec<f64>, tautline::form::relax::RelaxReport) {
    let sys = System::new(m).expect("system");
    let mut u = vec![0.0; sys.n_free()];
    let mut dr = Relaxation::new(&sys, m.n_nodes());
    let rep = dr.equilibrium(&sys, lambda, &mut u, cfg);
    (sys, u, rep)
}

/// Two independent methods on one problem: a 7×7 pretensioned saddle net
/// (`generate::saddle_net`, prestress from its force densities) with a point
/// load at the centre node, solved by Newton-Raphson through the path tracer
/// (5 load steps, tolerance 1e-12) and by dynamic relaxation from rest with
/// the full load (tolerance 1e-12). They share only the residual; the
/// displacement fields agree within 1e-6 of ‖u‖ (the acceptance
/// figure).
#[test]
fn relaxation_and_newton_agree_on_a_loaded_saddle_net() {
    let g = saddle_net(&NetOptions { nx: 7, ny: 7, ..Default::default() }, "n").unwrap();
    let mut m = tmodel::load_str(&g.toml, "net.toml", None).expect("net loads");
    let centre = m.node_index("N003_003").expect("centre node");
    // Only a point load: 20 kN down at the centre.
    m.loads.retain(|l| l.node == centre);
    m.loads[0].force = [0.0, 0.0, -2.0e4];
    m.analysis.steps = 5;
    m.analysis.tolerance = 1e-12;
    let newton = trace(m.clone(), Method::Newton);
    assert!(newton.path.stop.is_complete(), "{:?}", newton.path.stop);
    let cfg = RelaxConfig { tolerance: 1e-12, max_steps: 500_000 };
    let (_, u, rep) = relax(&m, 1.0, &cfg);
    assert_eq!(rep.stop, RelaxStop::Converged, "{rep:?}");
    assert!(rep.peaks > 0, "kinetic damping never reset: {rep:?}");
    let un = &newton.path.final_state.u;
    let diff: Vec<f64> = u.iter().zip(un).map(|(a, b)| a - b).collect();
    let e = norm(&diff) / norm(un);
    assert!(norm(un) > 1e-3, "the load should move the net");
    assert!(e < 1e-6, "relative displacement difference {e:e} ({rep:?})");
    eprintln!("saddle net: relative difference {e:e}, {rep:?}");
}

/// VERIFICATION case 4 by dynamic relaxation: P = 2·EA(l_c − L_r)/L_r · w/l_c
/// with l_c = √(l² + w²), L_r = l·EA/(EA + T) (equilibrium of the loaded
/// node, engineering strain), solved here for w by bisection; w ≈ 0.226726 m
/// for l = 5 m, EA = 1e6 N, T = 1e4 N, P = 1000 N. DR from rest with the full
/// load reaches it within 1e-6 relative.
#[test]
fn relaxation_finds_the_pretensioned_cable_deflection() {
    let (l, ea, t, p) = (5.0f64, 1.0e6, 1.0e4, 1000.0);
    let lr = l * ea / (ea + t);
    let load = |w: f64| {
        let lc = (l * l + w * w).sqrt();
        2.0 * ea * (lc - lr) / lr * w / lc
    };
    let (mut lo, mut hi) = (0.0, 5.0);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if load(mid) < p { lo = mid } else { hi = mid }
    }
    let w = 0.5 * (lo + hi);
    assert!((w - 0.226726).abs() < 1e-6, "closed form w = {w}");
    let m = model(PRETENSIONED_CABLE);
    let (sys, u, rep) = relax(&m, 1.0, &RelaxConfig { tolerance: 1e-12, max_steps: 500_000 });
    assert_eq!(rep.stop, RelaxStop::Converged, "{rep:?}");
    let mid = m.node_index("M").unwrap();
    let uz = sys.dofs.displacement(&u, mid, 2);
    assert!(rel_err(-uz, w, 1e-12) < 1e-6, "w = {} vs {w} ({rep:?})", -uz);
    eprintln!("cable: w = {} vs {w}, {rep:?}", -uz);
}

/// A run capped before it can converge says so: the cap, not convergence.
#[test]
fn relaxation_cap_is_reported_not_hidden() {
    let g = saddle_net(&NetOptions { nx: 7, ny: 7, ..Default::default() }, "n").unwrap();
    let m = tmodel::load_str(&g.toml, "net.toml", None).expect("net loads");
    let (_, _, rep) = relax(&m, 1.0, &RelaxConfig { tolerance: 1e-12, max_steps: 20 });
    assert_eq!(rep.stop, RelaxStop::StepCap);
    assert_eq!(rep.steps, 20);
    assert!(rep.relative_residual > 1e-12 && rep.relative_residual.is_finite());
}
