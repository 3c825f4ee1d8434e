//! `tautline bench`: the correctors compared on generated saddle nets.
//!
//! `--case easy` (the default) loads the nets with 60 N/m² of plan, which
//! leaves every cable taut; `--case hard` with 600 N/m² (the generator's
//! default snow load), under which the arching cables next to the edges go
//! slack along the path (the second line of each run counts them).
//!
//! Each run is a child process (`tautline bench-run`), so its peak memory
//! (VmHWM) is its own. The figures printed are wall time, numeric
//! factorizations, corrector iterations, residual evaluations, peak memory,
//! the bytes of the system's pattern, gather lists and member arrays, the median time of three warm factorizations of the initial tangent and the path's time
//! as a multiple of it, the time of one assembly of residual and tangent on
//! one and on two threads (and their ratio), residual evaluations per second,
//! the largest change of a cable force along the path, and the largest
//! difference of the final displacements from Newton's.
//! A second line per run gives the size and write time of `results.json` and
//! `fields.csv` (`--keep-fields`, default "ends") as `solve` writes them.

use crate::args::{BenchArgs, BenchCase, BenchRunArgs};
use crate::shared::Failure;
use std::io::Write;
use std::path::Path;
use std::time::Instant;
use tautline::assembly::System;
use tautline::generate::{Loading, NetOptions, saddle_net};
use tautline::model::{self, KeepFields, Method};
use tautline::observe::Silent;
use tautline::report::{self, Staged, fields::NodeLabels};
use tautline::results;
use tautline::{SetupError, Solver};

/// Peak resident memory of this process, bytes (Linux; 0 elsewhere).
fn peak_memory() -> u64 {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| {
            s.lines().find(|l| l.starts_with("VmHWM:")).and_then(|l| {
                l.split_whitespace().nth(1).and_then(|kb| kb.parse::<u64>().ok())
            })
        })
        .map_or(0, |kb| kb * 1024)
}

/// Mean wall time of `f` over enough repetitions to fill about half a second
/// (at least two), seconds.
fn mean_time(mut f: impl FnMut()) -> f64 {
    f();
    let t = Instant::now();
    let mut n = 0;
    while n < 2 || (t.elapsed().as_secs_f64() < 0.5 && n < 50) {
        f();
        n += 1;
    }
    t.elapsed().as_secs_f64() / n as f64
}

/// Times of one residual-and-tangent assembly at `u` on a pool of `threads`.
fn assembly_time(system: &System, u: &[f64], n_nodes: usize, threads: usize) -> Result<f64, Failure> {
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .map_err(|e| Failure::Internal(e.into()))?;
    let mut k = system.new_tangent_values();
    let mut r = vec![0.0; system.n_free()];
    let mut react = vec![0.0; 3 * n_nodes];
    Ok(pool.install(|| mean_time(|| {
        system.residual_and_tangent(u, 1.0, &mut r, &mut react, &mut k);
    })))
}

/// `bench --keep-fields`: a policy that does not depend on the net's size.
fn keep_policy(s: &str) -> Result<KeepFields, Failure> {
    match KeepFields::parse(s) {
        Some(k @ (KeepFields::All | KeepFields::Ends | KeepFields::None)) => Ok(k),
        _ => Err(Failure::BadInput(format!("--keep-fields {s}: expected all, ends or none"))),
    }
}

/// One run, printed as one line of `key=value` pairs for the parent.
pub fn bench_run(a: &BenchRunArgs) -> Result<u8, Failure> {
    let mut m = model::load(&a.model).map_err(|e| Failure::BadInput(e.to_string()))?;
    let method = Method::parse(&a.method).ok_or_else(|| Failure::BadInput(format!("unknown method {}", a.method)))?;
    m.analysis.method = method;
    m.analysis.steps = a.steps;
    m.analysis.tolerance = a.tolerance;
    m.analysis.max_steps = 10 * a.steps;
    // "ends" is what a large model gets by default; the output files are
    // timed below as `solve` would write them.
    m.analysis.keep_fields = keep_policy(&a.keep_fields)?;
    if method != Method::Newton && !a.check_every_step {
        // The lean quasi-Newton set-up: one factor carried across steps,
        // refactored only by the policy's guards.
        m.analysis.refactor_each_step = false;
        m.analysis.stability_each_step = false;
    }
    let mut solver = Solver::new(&m).map_err(|e| match e {
        SetupError::Member(e) => Failure::BadInput(e.message),
        SetupError::Factor(e) => Failure::Internal(e.into()),
    })?;
    let symbolic_s = solver.symbolic_seconds();
    // One numeric factorization of the initial tangent, timed alone.
    let (system, ldlt) = solver.system_and_factor();
    let mut k = system.new_tangent_values();
    let u0 = vec![0.0; system.n_free()];
    let mut r = vec![0.0; system.n_free()];
    let mut react = vec![0.0; 3 * m.n_nodes()];
    system.residual_and_tangent(&u0, 0.0, &mut r, &mut react, &mut k);
    // The first factorization also touches the factor's memory for the first
    // time; the path's refactorizations find it warm, so that one is not
    // timed. On a shared machine one warm factorization of the same matrix
    // was seen to take from 0.67 to 1.12 s: the figure is the median of three.
    ldlt.factorize(&system.pattern, &k);
    let mut times = [0.0; 3];
    for t in &mut times {
        let t_fac = Instant::now();
        ldlt.factorize(&system.pattern, &k);
        *t = t_fac.elapsed().as_secs_f64();
    }
    times.sort_by(f64::total_cmp);
    let factor_s = times[1];
    // One forward and back substitution with that factor (what every
    // corrector iteration pays besides its updates), median of three.
    let mut x = vec![1.0; system.n_free()];
    for t in &mut times {
        let t_sol = Instant::now();
        ldlt.solve_in_place(&mut x);
        *t = t_sol.elapsed().as_secs_f64();
    }
    times.sort_by(f64::total_cmp);
    let substitution_s = times[1];
    ldlt.n_factorizations = 0;
    let factor_nnz = ldlt.factor_nnz();
    let f0: Vec<f64> = system.member_results(&u0).iter().map(|r| r.force).collect();

    let t0 = Instant::now();
    let run = solver.trace(&mut Silent);
    let seconds = t0.elapsed().as_secs_f64();
    let (system, path, w) = (&run.system, &run.path, &run.wasted);
    let (iters, facs, evals) = path.totals();
    let f1 = system.member_results(&path.final_state.u);
    let max_change = f0
        .iter()
        .zip(&f1)
        .filter(|(a, _)| **a > 0.0)
        .map(|(a, b)| (b.force - a).abs() / a)
        .fold(0.0, f64::max);
    // Assembly and residual rates at the final state, where the members are
    // stretched as they are along the path.
    let u1 = &path.final_state.u;
    let assembly_1 = assembly_time(system, u1, m.n_nodes(), 1)?;
    let assembly_2 = assembly_time(system, u1, m.n_nodes(), 2)?;
    let residual_s = mean_time(|| {
        system.residual(u1, 1.0, &mut r, &mut react);
    });
    let (json_s, json_bytes, fields_s, fields_bytes) = write_outputs(&m, system, path, w, seconds, &a.u_out)?;
    let kept: Vec<String> = path.fields.iter().map(|f| f.step.to_string()).collect();
    let bytes: Vec<u8> = path.final_state.u.iter().flat_map(|v| v.to_le_bytes()).collect();
    std::fs::write(&a.u_out, bytes).map_err(|e| Failure::Internal(e.into()))?;
    println!(
        "dofs={} nnz={} factor_nnz={} stop={} seconds={seconds:.3} symbolic={symbolic_s:.3} factor={factor_s:.3} solve={substitution_s:.5} \
         iterations={} factorizations={} evaluations={} max_force_change={max_change:.3} peak={} \
         system_bytes={} threads={} assembly1={assembly_1:.5} assembly2={assembly_2:.5} residuals_per_s={:.1} \
         json_s={json_s:.3} json_bytes={json_bytes} fields_s={fields_s:.3} fields_bytes={fields_bytes} \
         fields_rows={} fields_steps={} slack={} slack_events={}",
        system.n_free(),
        system.pattern.nnz(),
        factor_nnz,
        path.stop.name(),
        iters + w.iterations,
        facs + w.factorizations,
        evals + w.residual_evaluations,
        peak_memory(),
        system.memory().total(),
        rayon::current_num_threads(),
        1.0 / residual_s,
        path.fields.len() * m.n_nodes(),
        kept.join(","),
        system.slack_members(&path.final_state.u).len(),
        results::slack_events(&m, path).len(),
    );
    Ok(0)
}

/// Writes `results.json`, `fields.csv` and `critical_fields.csv` beside
/// `u_out` as `solve` does (staged, renamed together) and returns the time
/// and size of `results.json` (built and written), the time of the two
/// field files and the size of `fields.csv`, seconds and bytes.
fn write_outputs(
    m: &model::Model,
    system: &System,
    path: &tautline::path::EquilibriumPath,
    wasted: &tautline::solve::StepRecord,
    seconds: f64,
    u_out: &Path,
) -> Result<(f64, u64, f64, u64), Failure> {
    let dir = u_out.parent().unwrap_or(Path::new("."));
    let io = |e: std::io::Error| Failure::Internal(e.into());
    let mut staged = Staged::default();
    let t = Instant::now();
    let res = results::build(m, system, path, wasted, seconds);
    staged.add(dir, "results.json", report::results_json(&res).as_bytes()).map_err(io)?;
    let json_s = t.elapsed().as_secs_f64();
    let t = Instant::now();
    let labels = NodeLabels::of(m);
    staged
        .add_with(dir, results::FIELDS_FILE, |w| report::fields::fields_csv(w, m, &system.dofs, &labels, &path.fields))
        .map_err(io)?;
    staged
        .add_with(dir, results::CRITICAL_FIELDS_FILE, |w| {
            report::fields::critical_fields_csv(w, m, &system.dofs, &labels, &path.critical)
        })
        .map_err(io)?;
    let fields_s = t.elapsed().as_secs_f64();
    let written = staged.commit().map_err(io)?;
    let size = |name: &str| written.iter().find(|p| p.ends_with(name)).and_then(|p| p.metadata().ok()).map_or(0, |md| md.len());
    Ok((json_s, size("results.json"), fields_s, size(results::FIELDS_FILE)))
}

fn field<'a>(line: &'a str, key: &str) -> &'a str {
    line.split_whitespace()
        .find_map(|kv| kv.strip_prefix(key).and_then(|r| r.strip_prefix('=')))
        .unwrap_or("?")
}

fn read_u(path: &Path) -> Vec<f64> {
    std::fs::read(path)
        .unwrap_or_default()
        .chunks_exact(8)
        .map(|c| f64::from_le_bytes(c.try_into().expect("8 bytes")))
        .collect()
}

pub fn bench(a: &BenchArgs) -> Result<u8, Failure> {
    keep_policy(&a.keep_fields)?;
    for m in &a.methods {
        if Method::parse(m).is_none() {
            return Err(Failure::BadInput(format!("--methods: unknown method {m}; expected {}", Method::NAMES.join(", "))));
        }
    }
    let exe = std::env::current_exe().map_err(|e| Failure::Internal(e.into()))?;
    let dir = std::env::temp_dir().join(format!("tautline-bench-{}", std::process::id()));
    std::fs::create_dir_all(&dir).map_err(|e| Failure::Internal(e.into()))?;
    let pressure = a.pressure.unwrap_or(a.case.pressure());
    println!("threads: {} (assembly also timed on 1 and 2)", rayon::current_num_threads());
    println!(
        "case: {} ({} N/m² on the plan of the default 20 m x 20 m saddle net, by tributary area)",
        if a.case == BenchCase::Hard { "hard" } else { "easy" },
        pressure
    );
    println!(
        "{:>8} {:>16} {:>9} {:>6} {:>6} {:>6} {:>8} {:>7} {:>8} {:>7} {:>7} {:>8} {:>8} {:>5} {:>6} {:>9} {:>9} {:>9}",
        "DOF", "method", "time s", "facts", "iters", "evals", "peak MB", "sys MB", "1 fac s", "×fac", "sol ms", "asm1 ms", "asm2 ms",
        "×2", "asm%", "res/s", "ΔN max", "Δu/|u|"
    );
    for &target in &a.dofs {
        // 3 free DOFs per interior node of an n × n net with fixed edges.
        let n = ((target as f64 / 3.0).sqrt().round() as usize + 2).max(3);
        let opts = NetOptions { nx: n, ny: n, load: Loading::Plan(pressure), csv_threshold: 0, ..NetOptions::default() };
        let g = saddle_net(&opts, "bench").map_err(Failure::BadInput)?;
        let model_path = dir.join("bench.toml");
        std::fs::write(&model_path, &g.toml).map_err(|e| Failure::Internal(e.into()))?;
        for (name, text) in &g.csv {
            std::fs::write(dir.join(name), text).map_err(|e| Failure::Internal(e.into()))?;
        }
        let mut reference: Option<Vec<f64>> = None;
        for method in &a.methods {
            let u_out = dir.join(format!("u-{method}.bin"));
            let mut cmd = std::process::Command::new(&exe);
            cmd.env(crate::threads::ENV, rayon::current_num_threads().to_string());
            if a.check_every_step {
                cmd.arg("bench-run").arg("--check-every-step");
            } else {
                cmd.arg("bench-run");
            }
            let out = cmd
                .arg(&model_path)
                .arg(method)
                .arg(a.steps.to_string())
                .arg(a.tolerance.to_string())
                .arg(&u_out)
                .arg("--keep-fields")
                .arg(&a.keep_fields)
                .output()
                .map_err(|e| Failure::Internal(e.into()))?;
            let line = String::from_utf8_lossy(&out.stdout).to_string();
            if !out.status.success() {
                println!("{target:>8} {method:>16} failed: {}", String::from_utf8_lossy(&out.stderr).trim());
                continue;
            }
            let u = read_u(&u_out);
            let diff = match &reference {
                None => {
                    reference = Some(u);
                    "ref".to_string()
                }
                Some(r) => {
                    let scale = r.iter().map(|v| v.abs()).fold(0.0, f64::max);
                    let d = r.iter().zip(&u).map(|(a, b)| (a - b).abs()).fold(0.0, f64::max);
                    format!("{:.1e}", d / scale)
                }
            };
            let secs: f64 = field(&line, "seconds").parse().unwrap_or(f64::NAN);
            let fac: f64 = field(&line, "factor").parse().unwrap_or(f64::NAN);
            let peak: f64 = field(&line, "peak").parse::<f64>().unwrap_or(0.0) / 1e6;
            let sys: f64 = field(&line, "system_bytes").parse::<f64>().unwrap_or(f64::NAN) / 1e6;
            let asm1: f64 = field(&line, "assembly1").parse().unwrap_or(f64::NAN);
            let asm2: f64 = field(&line, "assembly2").parse().unwrap_or(f64::NAN);
            let asm_here = if field(&line, "threads") == "1" { asm1 } else { asm2 };
            let rate: f64 = field(&line, "residuals_per_s").parse().unwrap_or(f64::NAN);
            println!(
                "{:>8} {:>16} {:>9.2} {:>6} {:>6} {:>6} {:>8.0} {:>7.1} {:>8.3} {:>7.1} {:>7.1} {:>8.1} {:>8.1} {:>5.2} {:>6.1} {:>9.0} {:>9} {:>9}{}",
                field(&line, "dofs"),
                method,
                secs,
                field(&line, "factorizations"),
                field(&line, "iterations"),
                field(&line, "evaluations"),
                peak,
                sys,
                fac,
                secs / fac,
                1e3 * field(&line, "solve").parse::<f64>().unwrap_or(f64::NAN),
                1e3 * asm1,
                1e3 * asm2,
                asm1 / asm2,
                100.0 * asm_here / fac,
                rate,
                field(&line, "max_force_change"),
                diff,
                if field(&line, "stop") == "target_reached" { "" } else { "  (did not reach the target)" }
            );
            println!(
                "{:>8} {:>16} results.json {:.1} kB in {} s; fields.csv (\"{}\": steps {}) {} rows, {:.1} MB in {} s; slack members at the last converged state {} ({} slack events)",
                "",
                "",
                field(&line, "json_bytes").parse::<f64>().unwrap_or(f64::NAN) / 1e3,
                field(&line, "json_s"),
                a.keep_fields,
                field(&line, "fields_steps"),
                field(&line, "fields_rows"),
                field(&line, "fields_bytes").parse::<f64>().unwrap_or(f64::NAN) / 1e6,
                field(&line, "fields_s"),
                field(&line, "slack"),
                field(&line, "slack_events"),
            );
            let _ = std::io::stdout().flush();
        }
    }
    let _ = std::fs::remove_dir_all(&dir);
    Ok(0)
}
