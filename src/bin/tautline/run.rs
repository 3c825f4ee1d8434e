//! Resolved run settings and the calls into the library.

use crate::args::{Cli, Command, Format, Generate, Overrides};
use crate::exit;
use crate::shared::{Counts, Failure, load, prepare_out_dir};
use std::path::{Path, PathBuf};
use std::time::Instant;
use tautline::assembly::System;
use tautline::model::{self, Model};
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use tautline::observe::{Answer, IterEvent, Observer, StepEvent};
use tautline::path::StopReason;
use tautline::{SetupError, Solver};
use tautline::results::{self, CAUTION};
use tautline::report;

/// The embedded demo model.
const DEMO_NAME: &str = "courtyard_net.toml (embedded demo)";
const DEMO_MODEL: &str = include_str!("../../../models/courtyard_net.toml");


pub fn run(cli: Cli) -> Result<u8, Failure> {
    let quiet = cli.quiet;
    match cli.command {
        Command::Check { model, format } => {
            let started = Instant::now();
            let m = load(&model, format)?;
            let read_s = started.elapsed().as_secs_f64();
            let screening = screen_model(&m);
            match format {
                Format::Text => {
                    for w in &screening {
                        eprintln!("warning: {w}");
                    }
                    print_summary(&m);
                    println!("read and validated in {read_s:.2} s");
                }
                Format::Json => println!("{}", crate::json::check(&m, &Counts::of(&m), &screening)),
            }
            Ok(exit::DONE)
        }
        Command::Solve { model, out, force, format, png, plot_mode, report, loads, overrides } => {
            // With a load file the model's "no loads" warning does not apply.
            let mut m = model::load(&model).map_err(Failure::Model)?;
            if loads.is_some() {
                m.warnings.retain(|w| !w.message.contains("the model has no loads"));
            }
            if format == Format::Text {
                for w in &m.warnings {
                    eprintln!("warning: {w}");
                }
            }
            if let Some(file) = &loads {
                let case = model::validate::load_case(&m, file).map_err(Failure::Model)?;
                let n = case.loads.len();
                let start = m.analysis.start_load_factor;
                let held = m.with_load_case(case);
                if format == Format::Text {
                    let own = if held > 0 {
                        format!("the model's {held} load(s) held constant at load factor {start}")
                    } else {
                        "the model's own loads not applied (its start_load_factor is 0)".to_string()
                    };
                    eprintln!("note: {}: {n} load(s) stepped from load factor 0; {own}", file.display());
                }
            }
            apply_overrides(&mut m, &overrides).map_err(Failure::BadInput)?;
            if plot_mode == Some(0) {
                return Err(Failure::BadInput("--plot-mode 0: critical points are counted from 1".into()));
            }
            solve(&m, &out, Some(&model), force, Outputs { quiet, png, format, figures: report.figures(plot_mode) })
        }
        Command::Form { model, out, method } => form(&model, &out, method.as_deref()),
        Command::Relax { model, out, load_factor, tolerance, max_steps } => {
            crate::relax::relax(&model, &out, load_factor, tolerance, max_steps)
        }
        Command::Generate { what } => generate(what),
        Command::Bench(a) => crate::bench::bench(&a),
        Command::BenchRun(a) => crate::bench::bench_run(&a),
        Command::Demo { out, png, report } => {
            let m = model::load_str(DEMO_MODEL, DEMO_NAME, None)
                .map_err(|e| Failure::Internal(anyhow::anyhow!("embedded demo model is invalid: {e}")))?;
            println!("demo: {}", m.title);
            solve(&m, &out, None, false, Outputs { quiet, png, format: Format::Text, figures: report.figures(None) })
        }
        Command::Verify { format } => verify(&format),
    }
}


/// The command-line overrides of `[analysis]`, passed through to the
/// library's validation (`model::validate::Overrides`), which checks them.
fn apply_overrides(m: &mut Model, o: &Overrides) -> Result<(), String> {
    let o = model::validate::Overrides {
        method: o.method.clone(),
        control: o.control.clone(),
        steps: o.steps,
        target: o.target,
        arc: o.arc,
        strain: o.strain.clone(),
        tolerance: o.tolerance,
        max_steps: o.max_steps,
        keep_fields: o.keep_fields.clone(),
        watch: o.watch.clone(),
        switch_at: o.switch_at,
    };
    let mut notes = Vec::new();
    let applied = o.apply(m, &mut notes);
    for n in &notes {
        eprintln!("note: {n}");
    }
    applied
}

/// `check`'s screening beyond validation: force densities `solve` ignores,
/// and every independent mechanism of the drawn geometry (`screen`).
fn screen_model(m: &Model) -> Vec<String> {
    let mut out: Vec<String> = force_density_warning(m).into_iter().collect();
    let Ok(system) = System::new(m) else {
        // `solve` reports why the system cannot be built.
        return out;
    };
    if system.n_free() > SCREEN_MAX_DOFS {
        out.push(format!(
            "mechanism search skipped: {} free DOFs, above {SCREEN_MAX_DOFS} (it factors the tangent twice); `solve` still names a mechanism it meets",
            system.n_free()
        ));
        return out;
    }
    if let Some((force, node)) = tautline::screen::prestress_imbalance(&system, m) {
        out.push(format!(
            "the prestress is not in balance in the drawn geometry: {:.4e} {} out of balance at node {:?}; `solve` first looks for \
             the equilibrium at load factor 0, which moves the structure (or finds none). That is expected where members given by \
             rest length settle the structure (a guyed mast); a cable net should be form-found first (`tautline form`)",
            m.units.force_out(force),
            m.units.force.name(),
            m.nodes[node].label
        ));
    }
    match tautline::screen::mechanisms(&system, m) {
        Ok(mech) => {
            if !mech.obvious.is_empty() {
                let shown: Vec<String> = mech.obvious.iter().take(10).map(|nd| m.node_dir_label(*nd)).collect();
                let more = if mech.obvious.len() > 10 { format!(" and {} more", mech.obvious.len() - 10) } else { String::new() };
                out.push(format!(
                    "{} free direction(s) have no stiffness at all in the drawn geometry (no member, prestress or spring acts along them): {}{more}; \
                     support them, add a member or spring, or prestress the members that meet there",
                    mech.obvious.len(),
                    shown.join(", ")
                ));
            }
            if mech.count > 0 {
                let listed: Vec<String> = mech
                    .modes
                    .iter()
                    .enumerate()
                    .map(|(k, dirs)| {
                        let d: Vec<String> = dirs.iter().map(|nd| m.node_dir_label(*nd)).collect();
                        format!("  {}. moves {}", k + 1, d.join(", "))
                    })
                    .collect();
                let more = if mech.count > mech.modes.len() { format!("\n  ... ({} not described)", mech.count - mech.modes.len()) } else { String::new() };
                let listing = if listed.is_empty() { String::new() } else { format!(":\n{}{more}", listed.join("\n")) };
                out.push(format!(
                    "the drawn geometry has {} independent mechanism(s) (the start tangent has {} zero eigenvalue(s)); `solve` stops at step 0 \
                     unless the load or the path stiffens them; each needs a support, a member or prestress{listing}",
                    mech.count,
                    mech.count,
                ));
            }
        }
        Err(e) => out.push(format!("the mechanism search did not finish: {e}")),
    }
    out
}

/// Largest model `check` searches for mechanisms.
const SCREEN_MAX_DOFS: usize = 300_000;

/// One warning for members whose `force_density` `solve` does not use.
fn force_density_warning(m: &Model) -> Option<String> {
    let ignored = tautline::screen::ignored_force_densities(m);
    let first = *ignored.first()?;
    Some(format!(
        "{} member(s) (first: {:?}) have a force density but no `prestress` or `rest_length`: `solve` ignores force densities \
         (they are an input of `form`), so these members start unstressed in the drawn geometry; run `tautline form {} -o DIR` \
         and solve DIR/formed.toml, or give them a `prestress`",
        ignored.len(),
        m.members[first].label,
        m.files[0]
    ))
}


fn print_summary(m: &Model) {
    let u = m.units;
    let c = Counts::of(m);
    let (bars, cables, catenaries) = (c.bars, c.cables, c.catenaries);
    let t = m.total_reference_load();
    println!("model: {} ({})", m.title, m.files[0]);
    println!("units: force {}, length {}", u.force.name(), u.length.name());
    println!("nodes: {} ({} supported, {} fixed directions)", c.nodes, c.supported, c.fixed);
    if catenaries > 0 {
        println!("members: {} ({bars} bars, {cables} cables, {catenaries} catenaries)", m.n_members());
    } else {
        println!("members: {} ({bars} bars, {cables} cables)", m.n_members());
    }
    println!("springs: {}", m.springs.len());
    if m.sections.iter().any(|s| s.weight.is_some_and(|w| w > 0.0)) {
        let how = match m.analysis.self_weight {
            model::SelfWeight::Dead => "a dead load, in full before the reference load is stepped",
            model::SelfWeight::Reference => "part of the reference load (catenary members: dead load)",
            model::SelfWeight::None => "not applied (self_weight = \"none\")",
        };
        println!("self-weight: {how}");
    }
    println!("free DOFs: {}", c.free_dofs);
    println!(
        "loads: {} nodal loads; total reference load [{:.6}, {:.6}, {:.6}] {}",
        c.loads,
        u.force_out(t[0]),
        u.force_out(t[1]),
        u.force_out(t[2]),
        u.force.name()
    );
    println!("model is valid");
}


/// What `solve` prints and writes besides the standard files.
#[derive(Clone)]
struct Outputs {
    /// No progress bar, a one-line summary.
    quiet: bool,
    /// PNG copies of the plots.
    png: bool,
    /// Summary and errors as text or JSON.
    format: Format,
    /// What the figures draw (`--plot-mode`, `--shape-at`, `--colour-by`, `--raster-above`).
    figures: report::figures::FigureOptions,
}

fn solve(m: &Model, out: &Path, model_path: Option<&Path>, force: bool, outputs: Outputs) -> Result<u8, Failure> {
    let Outputs { quiet, png, format, figures } = outputs;
    // Imperfection seeding (path::branch): the perfect path is traced first
    // and the model's geometry offset by the chosen mode; everything below
    // runs on the seeded model.
    let seeded = if m.analysis.branch.imperfection.is_some() {
        let mut silent = tautline::observe::Silent;
        match tautline::path::branch::seed(m, &mut silent) {
            Ok(s) => s,
            Err(e @ tautline::path::branch::SeedError::NotMet { .. }) => {
                return Err(Failure::BadInput(format!("{}: [analysis]: {e}", m.files[0])));
            }
            Err(e) => return Err(Failure::BadInput(format!("{}: {e}", m.files[0]))),
        }
    } else {
        None
    };
    let (m, seed) = match &seeded {
        Some((model, seed)) => (model, Some(seed.clone())),
        None => (m, None),
    };
    let solver = Solver::new(m).map_err(|e| match e {
        SetupError::Member(e) => {
            Failure::BadInput(format!("member \"{}\": {}; change the prestress or the section", e.member, e.message))
        }
        SetupError::Factor(e) => Failure::Internal(e.into()),
    })?;
    if solver.system().n_free() == 0 {
        return Err(Failure::BadInput("the model has no free degree of freedom".into()));
    }
    prepare_out_dir(out, model_path, &m.files[0], force)?;
    let started = Instant::now();
    let a = &m.analysis;
    let mut interrupt = Interrupt::install();
    let mut progress = crate::progress::Progress::new(a, quiet, &mut interrupt);
    let tautline::Run { system, mut path, wasted } = solver.trace(&mut progress);
    progress.finish();
    path.imperfection = seed;
    // A `switch_mode` larger than the multiplicity of the point met is bad
    // input found at run time: exit 2, nothing written.
    if let Some(tautline::path::branch::SwitchOutcome::ModeOutOfRange { lambda, requested, multiplicity, line, .. }) = &path.switch {
        let place = line.map_or(String::new(), |l| format!(":{l}"));
        return Err(Failure::BadInput(format!(
            "{}{place}: [analysis]: switch_mode = {requested}, but the bifurcation met at load factor {lambda:.6} has {multiplicity} mode(s); \
             set switch_mode from 1 to {multiplicity}, or remove it to take the mode of largest projection",
            m.files[0]
        )));
    }
    let seconds = started.elapsed().as_secs_f64();
    let res = results::build(m, &system, &path, &wasted, seconds);
    let members = results::members(m, &system, &path);
    // Warnings an engineer needs besides the numbers: force densities the
    // run ignored, members over capacity, strains no steel takes.
    let mut warnings: Vec<String> = force_density_warning(m).into_iter().collect();
    if !res.steps.is_empty() {
        let util: Vec<Option<f64>> = members.iter().map(|x| x.utilisation).collect();
        let strain: Vec<f64> = members.iter().map(|x| x.strain).collect();
        warnings.extend(tautline::screen::result_warnings(m, &util, &strain));
    }
    if let Some(w) = results::lost_at_start_warning(m, &path) {
        warnings.push(w);
    }
    if let Some(w) = results::unstable_chord_warning(&path) {
        warnings.push(w);
    }

    let fields = results::Fields::new(m, &system, &path);
    let run = report::RunOutput { results: &res, members: &members, fields: &fields };
    let options = report::WriteOptions { png, figures };
    let report::Written { files: written, warnings: drawn_warnings } =
        report::write_run(out, m, &run, &options)
            // The message alone: its io error is already in it, and `{:#}`
            // would print the source again.
            .map_err(|e| Failure::Internal(anyhow::anyhow!("{e}")))?;
    let mut plot_warnings = warnings;
    plot_warnings.extend(drawn_warnings);

    let code = match path.stop {
        // A switch asked for and never met: the path is right, but the
        // secondary branch asked for was not traced (exit 3, as a run that
        // stopped before its target).
        s if s.is_complete() && matches!(path.switch, Some(tautline::path::branch::SwitchOutcome::NotMet { .. })) => exit::STOPPED,
        s if s.is_complete() => exit::DONE,
        StopReason::Interrupted => exit::INTERRUPTED,
        _ => exit::STOPPED,
    };
    let written: Vec<String> = written.iter().map(|p| p.display().to_string()).collect();
    match format {
        Format::Text => {
            for w in &plot_warnings {
                eprintln!("warning: {w}");
            }
            if quiet {
                let status = match (res.converged, &res.switch_not_made) {
                    (true, Some(_)) => "done without the branch switch",
                    (true, None) => "done",
                    (false, _) => "stopped before the target",
                };
                println!("{status}: {}", res.stop_message);
            } else {
                print_run_summary(m, &res);
            }
            println!("wrote {}", written.join(", "));
            println!("report: {} (open it in a browser; it needs no network)", out.join("report.html").display());
            println!("{CAUTION}");
        }
        Format::Json => println!("{}", crate::json::solve(m, &res, &written, &plot_warnings, code)),
    }
    Ok(code)
}

fn print_run_summary(m: &Model, r: &results::Results) {
    let u = m.units;
    println!(
        "{} / {} control / {} strain: {} steps",
        r.analysis.method,
        r.analysis.control,
        r.analysis.strain,
        r.steps.len().saturating_sub(1)
    );
    if let Some(last) = r.steps.last() {
        println!("final load factor {:.6}", last.load_factor);
        for (w, v) in r.watch.iter().zip(&last.watched) {
            println!("  {w} = {v:.6e} {}", u.length.name());
        }
    }
    if let Some(cp) = r.critical_points.first() {
        let p = results_load(m, cp.load_factor);
        let how = match (cp.pinpointed, cp.multiplicity) {
            (true, 1) => String::new(),
            (true, k) => format!(", multiplicity {k}"),
            (false, k) => format!(", multiplicity {k}, not pinpointed: between two steps"),
        };
        println!("first critical point: {} at load factor {:.6} ({p:.6e} {} total load{how})", cp.kind, cp.load_factor, u.force.name());
        if r.critical_points.len() > 1 {
            println!("{} critical points in all (results.json critical_points; modes in {})", r.critical_points.len(), r.critical_modes_file);
        }
    }
    match r.stable_at_end {
        Some(false) => println!(
            "warning: the last converged state is unstable ({} negative pivots): it is in equilibrium but a small disturbance \
             moves it away, so the structure cannot hold it; see critical_points in results.json for where stability was lost, \
             and add a support, bracing or prestress, or keep the load below the first critical point",
            r.negative_pivots_at_end
        ),
        None if !r.steps.is_empty() => println!(
            "note: the stability of the last state was not checked (stability_check = \"on-refactor\"); use \"every-step\" to check it"
        ),
        _ => {}
    }
    if let Some(i) = &r.imperfection {
        println!(
            "imperfection: mode of critical point {} of the perfect path ({} at load factor {:.6}), largest offset {:.6e} {} at node {}",
            i.mode, i.kind, i.load_factor, i.amplitude, u.length.name(), i.node
        );
    }
    if let Some(s) = &r.switched {
        println!(
            "switched to the secondary branch at the bifurcation at load factor {:.6} (mode {} of {}); first secondary state: step {}, load factor {:.6}",
            s.load_factor, s.mode, s.multiplicity, s.step, s.load_factor_after
        );
    }
    if let Some(n) = &r.switch_not_made {
        println!("no branch switch: {}", n.reason);
    }
    if !r.slack_events.is_empty() {
        let mut members: Vec<&str> = r.slack_events.iter().map(|e| e.member.as_str()).collect();
        members.sort_unstable();
        members.dedup();
        let shown: Vec<String> = r
            .slack_events
            .iter()
            .take(5)
            .map(|e| format!("{} at step {} (λ={:.4})", e.member, e.step, e.load_factor))
            .collect();
        let more = if r.slack_events.len() > 5 { format!(", ... ({} events in results.json)", r.slack_events.len()) } else { String::new() };
        let noun = if members.len() == 1 { "cable went" } else { "cables went" };
        println!("{} {noun} slack: {}{more}", members.len(), shown.join(", "));
    }
    if !r.slack_members.is_empty() {
        let shown: Vec<_> = r.slack_members.iter().take(10).cloned().collect();
        println!("slack cables at the end: {} ({}{})", r.slack_members.len(), shown.join(", "), if r.slack_members.len() > 10 { ", ..." } else { "" });
    }
    println!(
        "totals: {} iterations, {} factorizations, {} residual evaluations, {} cut-backs, {:.3} s",
        r.totals.iterations, r.totals.factorizations, r.totals.residual_evaluations, r.totals.cutbacks, r.totals.seconds
    );
    if let Some(note) = newton_finished_note(r) {
        println!("{note}");
    }
    if r.steps.is_empty() {
        // No converged state: the written state is the given geometry, whose
        // imbalance says nothing about equilibrium.
        println!("equilibrium check: none (no converged state)");
    } else {
        println!("equilibrium check: |loads + reactions| / |loads| = {:.2e}", r.equilibrium.relative_imbalance);
    }
    let status = match (r.converged, &r.switch_not_made) {
        (true, Some(_)) => "done without the branch switch",
        (true, None) => "done",
        (false, _) => "stopped before the target",
    };
    println!("{status}: {}", r.stop_message);
}

/// A quasi-Newton run most of whose steps were finished by the Newton
/// fallback paid for both correctors: on the slack nets measured (README,
/// "Hard paths") Newton alone took less time there, so the summary says so.
/// Only from 2 such steps, and at least 4 in 5 of the converged ones: on an
/// 81 × 81 net at 1600 N per node, 6 of 10 steps finished by Newton and
/// BFGS was still the faster (1.8 s against 2.3 s, 2026-12-03); on a 61 × 61
/// net at 1600 N, 9 of 10 and Newton the faster (0.75 s against 0.90 s).
fn newton_finished_note(r: &results::Results) -> Option<String> {
    let steps = r.steps.len().saturating_sub(1);
    let by_newton = r.totals.newton_fallback_steps;
    (r.analysis.method != "newton" && by_newton >= 2 && 5 * by_newton >= 4 * steps).then(|| {
        format!(
            "note: {by_newton} of {steps} steps were finished by Newton iterations after the {} iterations stalled \
             (cables at the tension-only kink, or a tangent that changes sharply); on such paths `--method newton` \
             was the faster in the measurements of the README (\"Hard paths\"): try it",
            r.analysis.method
        )
    })
}

/// `verify`: the built-in textbook cases as a table (or JSON); exit 4 if any fails.
fn verify(format: &str) -> Result<u8, Failure> {
    if format != "text" && format != "json" {
        return Err(Failure::BadInput(model::validate::bad_value("--format", format, &["text", "json"])));
    }
    let cases = tautline::verify::run_all();
    if format == "json" {
        let text = serde_json::to_string_pretty(&cases).map_err(|e| Failure::Internal(e.into()))?;
        println!("{text}");
    } else {
        println!("tautline {} verification: built-in cases against their closed forms", env!("CARGO_PKG_VERSION"));
        print!("{}", tautline::verify::table(&cases));
    }
    Ok(if cases.iter().all(|c| c.pass) { exit::DONE } else { exit::VERIFY_FAILED })
}

fn results_load(m: &Model, lambda: f64) -> f64 {
    let t = m.total_reference_load();
    m.units.force_out(lambda * (t[0] * t[0] + t[1] * t[1] + t[2] * t[2]).sqrt())
}

fn generate(what: Generate) -> Result<u8, Failure> {
    use tautline::generate::{DomeOptions, Loading, NetEdge, NetOptions, lattice_dome, saddle_net};
    let loading = |plan: f64, per_node: Option<f64>| per_node.map_or(Loading::Plan(plan), Loading::PerNode);
    let (generated, out) = match what {
        Generate::Net { nx, ny, span_x, span_y, rise, force_density, ea, load, node_load, elastic_edge, csv_threshold, out } => {
            let load = loading(load, node_load);
            let edge = elastic_edge.map_or(NetEdge::Fixed, |k| NetEdge::Elastic { k });
            let o = NetOptions { nx, ny, span_x, span_y, rise, force_density, ea, load, edge, csv_threshold };
            (saddle_net(&o, &stem_of(&out)?), out)
        }
        Generate::Dome { rings, sectors, radius, rise, ea, load, node_load, crown_load, csv_threshold, out } => {
            let o = DomeOptions { rings, sectors, radius, rise, ea, load: loading(load, node_load), crown_load, csv_threshold };
            (lattice_dome(&o, &stem_of(&out)?), out)
        }
    };
    let g = generated.map_err(|e| Failure::BadInput(format!("generate: {e}")))?;
    let dir = match out.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    if !dir.is_dir() {
        return Err(Failure::BadInput(format!("{}: no such folder; create it first", dir.display())));
    }
    let file_name = out.file_name().map(|f| f.to_string_lossy().to_string()).unwrap_or_default();
    let mut staged = report::Staged::default();
    let io = |e: std::io::Error| Failure::Internal(anyhow::anyhow!("writing into {}: {e}", dir.display()));
    staged.add(&dir, &file_name, g.toml.as_bytes()).map_err(io)?;
    for (name, text) in &g.csv {
        staged.add(&dir, name, text.as_bytes()).map_err(io)?;
    }
    let written = staged.commit().map_err(io)?;
    println!("wrote {}", written.iter().map(|p| p.display().to_string()).collect::<Vec<_>>().join(", "));
    Ok(exit::DONE)
}

/// The file stem that names a generated model's CSV tables.
fn stem_of(out: &Path) -> Result<String, Failure> {
    let stem = out.file_stem().map(|s| s.to_string_lossy().to_string()).unwrap_or_default();
    if stem.is_empty() {
        return Err(Failure::BadInput(format!("{}: give a file name to write, e.g. net.toml", out.display())));
    }
    Ok(stem)
}

/// Ctrl-C or SIGTERM: the run stops after the current iteration and writes
/// what it has found, marked interrupted (exit 130).
struct Interrupt {
    flag: Arc<AtomicBool>,
}

impl Interrupt {
    fn install() -> Interrupt {
        let flag = Arc::new(AtomicBool::new(false));
        let f = flag.clone();
        // A second handler cannot be installed (e.g. in a second run of the
        // same process); the run then simply cannot be interrupted cleanly.
        let _ = ctrlc::set_handler(move || f.store(true, Ordering::SeqCst));
        Interrupt { flag }
    }

    fn answer(&self) -> Answer {
        if self.flag.load(Ordering::SeqCst) { Answer::Stop } else { Answer::Continue }
    }
}

impl Observer for Interrupt {
    fn on_iteration(&mut self, _: &IterEvent) -> Answer {
        self.answer()
    }
    fn on_step(&mut self, _: &StepEvent) -> Answer {
        self.answer()
    }
}

/// `form`: force density form finding (iterated to member targets when
/// there are any) or dynamic relaxation, then the formed model and its table.
fn form(model_path: &Path, out: &Path, method: Option<&str>) -> Result<u8, Failure> {
    use tautline::form::{relax, targets};
    use tautline::model::{FormMethod, FormSettings};
    let mut m = load(model_path, Format::Text)?;
    if let Some(s) = method {
        let chosen = FormMethod::parse(s).ok_or_else(|| Failure::BadInput(model::validate::bad_value("--method", s, &FormMethod::NAMES)))?;
        if chosen != m.form.method && m.form.max_iterations == FormSettings::default_max_iterations(m.form.method) {
            m.form.max_iterations = FormSettings::default_max_iterations(chosen);
        }
        m.form.method = chosen;
    }
    let bad = |e: tautline::form::FormError| Failure::BadInput(format!("{}: {e}", model_path.display()));
    let mut log_csv = None;
    let mut stopped: Option<String> = None;
    let (found, how) = match m.form.method {
        FormMethod::Relax => {
            let cfg = relax::RelaxConfig { tolerance: m.form.tolerance, max_steps: m.form.max_iterations };
            let (found, rep) = relax::relax_form(&m, &cfg).map_err(bad)?;
            println!(
                "dynamic relaxation: {} time steps, {} kinetic-energy peaks, relative residual {:.2e}",
                rep.steps, rep.peaks, rep.relative_residual
            );
            if !rep.converged() {
                stopped = Some(format!(
                    "dynamic relaxation stopped after {} time steps ([form] max_iterations) at a relative \
                     residual of {:.3e}, above the tolerance {:.1e}",
                    rep.steps, rep.relative_residual, m.form.tolerance
                ));
            }
            (found, "dynamic relaxation")
        }
        FormMethod::ForceDensity if targets::has_targets(&m) => {
            let run = targets::force_density_to_targets(&m).map_err(bad)?;
            print_target_log(&m, &run.log);
            log_csv = Some(target_log_csv(&m, &run.log));
            if let Some(e) = &run.broke_off {
                stopped = Some(format!(
                    "targets not met: after {} updates {e}; member {:?} is furthest off, relative error \
                     {:.3e}; the targets may be out of reach of the other members' force densities; the \
                     best shape found is written",
                    run.log.len(),
                    m.members[run.worst_member].label,
                    run.max_error
                ));
            } else if !run.converged {
                stopped = Some(format!(
                    "targets not met after {} updates ([form] max_iterations): member {:?} is furthest \
                     off, relative error {:.3e} (tolerance {:.1e}); the best shape found is written",
                    run.log.len().saturating_sub(1),
                    m.members[run.worst_member].label,
                    run.max_error,
                    m.form.tolerance
                ));
            }
            (run.form, "force density method, iterated to targets")
        }
        FormMethod::ForceDensity => (tautline::form::force_density(&m).map_err(bad)?, "force density method"),
    };
    for w in &found.warnings {
        eprintln!("warning: {w}");
    }
    let formed = tautline::form::formed_model(&m, &found);
    for w in formed.warnings.iter().skip(m.warnings.len()) {
        eprintln!("warning: {w}");
    }
    prepare_out_dir(out, Some(model_path), &m.files[0], true)?;
    let mut staged = report::Staged::default();
    let io = |e: std::io::Error| Failure::Internal(anyhow::anyhow!("writing into {}: {e}", out.display()));
    staged.add(out, "formed.toml", model::write::to_toml(&formed).as_bytes()).map_err(io)?;
    staged.add(out, "form.csv", tautline::form::form_csv(&m, &found).as_bytes()).map_err(io)?;
    if let Some(text) = &log_csv {
        staged.add(out, "form_log.csv", text.as_bytes()).map_err(io)?;
    }
    // The found shape, members shaded by their found force: the formed model
    // drawn at rest (no displacement), so it is the shape `solve` starts from.
    let at_rest = vec![[0.0; 3]; formed.n_nodes()];
    let slack: Vec<bool> = formed.members.iter().zip(&found.forces).map(|(mb, f)| mb.kind.tension_only() && *f <= 0.0).collect();
    let input = report::plot::ShapeInput { model: &formed, displacements: &at_rest, forces: &found.forces, slack: &slack, utilisation: None };
    let options = report::plot::ShapeOptions { form: true, ..Default::default() };
    match report::plot::shape_svg_with(&input, &options) {
        Ok(svg) => staged.add(out, "shape.svg", svg.as_bytes()).map_err(io)?,
        Err(e) => eprintln!("warning: shape.svg not drawn: {e}"),
    }
    let written = staged.commit().map_err(io)?;
    let u = m.units;
    let (lo, hi) = found.forces.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), f| (a.min(*f), b.max(*f)));
    println!("form: {} ({} members, {how})", m.title, m.n_members());
    if lo.is_finite() {
        println!("member forces {:.6} to {:.6} {}", u.force_out(lo), u.force_out(hi), u.force.name());
    }
    println!("wrote {}", written.iter().map(|p| p.display().to_string()).collect::<Vec<_>>().join(", "));
    if let Some(msg) = &stopped {
        println!("stopped before the target: {msg}");
    }
    println!("{CAUTION}");
    Ok(if stopped.is_some() { exit::STOPPED } else { exit::DONE })
}

/// The convergence table of a target iteration: all rows when short, else
/// the first and last few.
fn print_target_log(m: &Model, log: &[tautline::form::targets::TargetIteration]) {
    println!("iteration  max target error  member");
    let row = |t: &tautline::form::targets::TargetIteration| {
        println!("{:>9}  {:>16.3e}  {}", t.iteration, t.max_error, m.members[t.worst_member].label);
    };
    if log.len() <= 12 {
        log.iter().for_each(row);
    } else {
        log[..5].iter().for_each(row);
        println!("      ...");
        log[log.len() - 5..].iter().for_each(row);
    }
}

fn target_log_csv(m: &Model, log: &[tautline::form::targets::TargetIteration]) -> String {
    let mut s = String::from("iteration,max_error,member\n");
    for t in log {
        let label = tautline::csv::field(&m.members[t.worst_member].label);
        s += &format!("{},{:e},{}\n", t.iteration, t.max_error, label);
    }
    s
}
