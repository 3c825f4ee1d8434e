//! `report.html`: one self-contained page (inline CSS and SVG, no scripts,
//! no external assets) that prints cleanly. It opens with the governing
//! results, then the figures, then the tables. Numbers in its tables are
//! printed at 4 significant figures with the unit in the column header
//! (`numbers::sig4`); `results.json` and the CSV files keep full precision.
//! Every string from the model is escaped.

use super::numbers::sig4;
use crate::model::{MemberKind, Model};
use crate::results::{MemberOut, Results};
use std::fmt::Write as _;

/// Rows shown in each of the largest-tension and largest-compression tables.
pub const TOP_MEMBERS: usize = 20;
/// Rows shown at most in the utilisation and slack tables.
pub(crate) const LISTED_MEMBERS: usize = 200;
/// Rows shown at most in the reactions and steps tables.
pub(crate) const LISTED_ROWS: usize = 500;

/// A plot to embed: its caption and its SVG text.
pub(crate) struct Figure<'a> {
    pub caption: &'a str,
    pub svg: &'a str,
}

const CSS: &str = r#"
body { font-family: "DejaVu Sans", "Liberation Sans", Arial, sans-serif; color: #1a1a1a; margin: 1.5em auto; max-width: 1150px; padding: 0 1em; line-height: 1.4; }
h1 { font-size: 1.6em; margin-bottom: 0.2em; }
h2 { font-size: 1.25em; border-bottom: 1px solid #888; margin-top: 1.6em; }
.caution { border: 3px double #1a1a1a; background: #fff6d8; padding: 0.6em 0.9em; font-weight: bold; }
table { border-collapse: collapse; margin: 0.6em 0; font-size: 0.9em; }
th, td { border: 1px solid #999; padding: 0.2em 0.55em; text-align: left; vertical-align: top; }
th { background: #eee; }
td.num { text-align: right; font-family: "DejaVu Sans Mono", "Liberation Mono", monospace; }
.note { color: #444; font-style: italic; }
.fail { font-weight: bold; text-decoration: underline; }
figure { margin: 1em 0; }
figure svg { max-width: 100%; height: auto; border: 1px solid #ccc; }
figcaption { font-size: 0.9em; color: #333; }
dl.kv { display: grid; grid-template-columns: max-content auto; gap: 0.15em 1.2em; }
dl.kv dt { font-weight: bold; }
dl.kv dd { margin: 0; }
@media print {
  body { margin: 0; max-width: none; font-size: 10pt; }
  .caution { background: none; }
  th { background: none; }
  thead { display: table-header-group; }
  tr, figure, .caution, dl.kv { page-break-inside: avoid; break-inside: avoid; }
  h2 { page-break-after: avoid; break-after: avoid; }
  figure svg { border: none; }
}
"#;

/// Escapes text for HTML content and attribute values.
pub(crate) fn esc(s: &str) -> String {
    let mut o = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => o.push_str("&amp;"),
            '<' => o.push_str("&lt;"),
            '>' => o.push_str("&gt;"),
            '"' => o.push_str("&quot;"),
            '\'' => o.push_str("&#39;"),
            _ => o.push(c),
        }
    }
    o
}

/// The whole page.
pub(crate) fn report_html(model: &Model, results: &Results, members: &[MemberOut], figures: &[Figure]) -> String {
    let mut h = String::new();
    let title = if results.title.is_empty() { "tautline report".to_string() } else { results.title.clone() };
    let _ = write!(
        h,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>{}</title>\n<style>{CSS}</style>\n</head>\n<body>\n",
        esc(&title)
    );
    let _ = writeln!(h, "<div id=\"caution\" class=\"caution\" role=\"note\">Caution: {}</div>", esc(&results.caution));
    let _ = writeln!(h, "<h1>{}</h1>", esc(&title));
    let _ = writeln!(h, "<p>Model file: <code>{}</code>; run by {}.</p>", esc(&results.model_file), esc(&results.tool));
    let _ = writeln!(h, "<p id=\"outcome\"><strong>{}</strong></p>", outcome(results));
    governing(&mut h, results, members);
    figures_section(&mut h, figures);
    summary(&mut h, model, results);
    settings(&mut h, results);
    critical(&mut h, results);
    slack_table(&mut h, results);
    member_tables(&mut h, results, members);
    reactions(&mut h, results);
    equilibrium(&mut h, results);
    statistics(&mut h, results);
    h.push_str("</body>\n</html>\n");
    h
}

fn outcome(r: &Results) -> String {
    let status = if r.converged { "Done" } else { "Stopped before the target" };
    format!("{status}: {}", esc(&r.stop_message))
}

fn kv(h: &mut String, rows: &[(&str, String)]) {
    h.push_str("<dl class=\"kv\">\n");
    for (k, v) in rows {
        let _ = writeln!(h, "<dt>{}</dt><dd>{}</dd>", esc(k), esc(v));
    }
    h.push_str("</dl>\n");
}

fn vec3(v: [f64; 3], unit: &str) -> String {
    format!("[{}, {}, {}] {unit}", sig4(v[0]), sig4(v[1]), sig4(v[2]))
}

fn summary(h: &mut String, m: &Model, r: &Results) {
    let count = |k: MemberKind| m.members.iter().filter(|x| x.kind == k).count();
    let kinds: Vec<String> = [(MemberKind::Bar, "bar", "bars"), (MemberKind::Cable, "cable", "cables"), (MemberKind::Catenary, "catenary", "catenaries")]
        .into_iter()
        .map(|(k, one, many)| (count(k), one, many))
        .filter(|(n, _, _)| *n > 0)
        .map(|(n, one, many)| format!("{n} {}", if n == 1 { one } else { many }))
        .collect();
    let supported = m.nodes.iter().filter(|n| n.fixed.iter().any(|f| *f)).count();
    let e = &r.equilibrium;
    let f = &r.units.force;
    let dead = if e.dead_load.iter().all(|v| *v == 0.0) {
        "none".to_string()
    } else {
        format!("total {} (self-weight and catenary weight, always in full)", vec3(e.dead_load, f))
    };
    h.push_str("<h2 id=\"model\">Model</h2>\n");
    kv(
        h,
        &[
            ("units", format!("force {}, length {}", r.units.force, r.units.length)),
            ("nodes", format!("{} ({supported} supported, {} fixed directions)", m.n_nodes(), m.n_fixed())),
            ("members", format!("{} ({})", m.n_members(), if kinds.is_empty() { "none".into() } else { kinds.join(", ") })),
            ("springs", m.springs.len().to_string()),
            ("free DOFs", (3 * m.n_nodes() - m.n_fixed()).to_string()),
            ("dead load", dead),
            ("reference load", format!("{} nodal loads, total {} (scaled by the load factor λ)", m.loads.len(), vec3(e.reference_load, f))),
            ("applied at the end", format!("dead load + {} × reference load = {}", sig4(e.load_factor), vec3(e.applied, f))),
        ],
    );
}

fn settings(h: &mut String, r: &Results) {
    let a = &r.analysis;
    h.push_str("<h2 id=\"analysis\">Analysis settings</h2>\n");
    let mut rows = vec![
        ("strain measure", a.strain.clone()),
        ("corrector", a.method.clone()),
        ("path control", a.control.clone()),
        ("steps", a.steps.to_string()),
        ("target", sig4(a.target)),
        ("relative residual tolerance", format!("{:e}", a.tolerance)),
    ];
    if let Some(p) = &a.point {
        rows.push(("controlled point", p.clone()));
    }
    if !r.watch.is_empty() {
        rows.push(("watched", r.watch.join(", ")));
    }
    kv(h, &rows);
}

fn figures_section(h: &mut String, figures: &[Figure]) {
    h.push_str("<h2 id=\"plots\">Plots</h2>\n");
    if figures.is_empty() {
        h.push_str("<p class=\"note\">No plot could be drawn.</p>\n");
    }
    for f in figures {
        // The plots are this crate's own well-formed SVG with no XML
        // declaration, so they embed as they are.
        let _ = writeln!(h, "<figure class=\"plot\">\n{}<figcaption>{}</figcaption>\n</figure>", f.svg, esc(f.caption));
    }
}

/// Opens a table with its header row.
fn table(h: &mut String, id: &str, header: &[&str]) {
    let _ = write!(h, "<table id=\"{}\">\n<thead><tr>", esc(id));
    for c in header {
        let _ = write!(h, "<th>{}</th>", esc(c));
    }
    h.push_str("</tr></thead>\n<tbody>\n");
}

fn end_table(h: &mut String) {
    h.push_str("</tbody>\n</table>\n");
}

fn td(s: &str) -> String {
    format!("<td>{}</td>", esc(s))
}

fn td_num(v: f64) -> String {
    format!("<td class=\"num\">{}</td>", sig4(v))
}

fn td_int(v: usize) -> String {
    format!("<td class=\"num\">{v}</td>")
}

fn shown(h: &mut String, shown: usize, total: usize, what: &str) {
    if shown < total {
        let _ = writeln!(h, "<p class=\"note\">Showing {shown} of {total} {}; the full list is in the output files.</p>", esc(what));
    }
}

fn critical(h: &mut String, r: &Results) {
    h.push_str("<h2 id=\"critical\">Critical points</h2>\n");
    if r.critical_points.is_empty() {
        h.push_str("<p>No critical point was found along the traced path.</p>\n");
        return;
    }
    h.push_str("<p>Numbered as on the load path plot.</p>\n");
    let mut header = vec!["#", "kind", "load factor λ [–]", "step", "pinpointed", "negative pivots", "mode (largest shares)"];
    let watch_heads: Vec<String> = r.watch.iter().map(|w| format!("{w} [{}]", r.units.length)).collect();
    header.extend(watch_heads.iter().map(String::as_str));
    table(h, "critical-points", &header);
    for (i, c) in r.critical_points.iter().enumerate() {
        let mut row = format!(
            "<tr>{}{}{}<td class=\"num\">{}</td>{}<td class=\"num\">{} → {}</td>{}",
            td_int(i + 1),
            td(&c.kind),
            td_num(c.load_factor),
            c.step,
            td(if c.pinpointed { "yes" } else { "between steps" }),
            c.negative_pivots_before,
            c.negative_pivots_after,
            td(&c.mode.join(", "))
        );
        for v in &c.watched {
            row += &td_num(*v);
        }
        h.push_str(&row);
        h.push_str("</tr>\n");
    }
    end_table(h);
}

fn member_rows(h: &mut String, id: &str, rows: &[&MemberOut], r: &Results) {
    let force = format!("force [{}]", r.units.force);
    let length = format!("length [{}]", r.units.length);
    table(h, id, &["member", "kind", &force, "strain [–]", &length, "utilisation [–]", "slack"]);
    for m in rows {
        let _ = writeln!(
            h,
            "<tr data-member=\"{}\">{}{}{}{}{}{}{}</tr>",
            esc(&m.id),
            td(&m.id),
            td(&m.kind),
            td_num(m.force),
            td_num(m.strain),
            td_num(m.length),
            m.utilisation.map_or_else(|| "<td class=\"num\">–</td>".to_string(), td_num),
            td(if m.slack { "slack" } else { "" })
        );
    }
    end_table(h);
}

fn member_tables(h: &mut String, r: &Results, members: &[MemberOut]) {
    h.push_str("<h2 id=\"members\">Members</h2>\n");
    let _ = writeln!(h, "<p>{} members; forces at the last converged state, tension positive.</p>", members.len());

    let mut tension: Vec<&MemberOut> = members.iter().filter(|m| m.force > 0.0).collect();
    tension.sort_by(|a, b| b.force.total_cmp(&a.force));
    h.push_str("<h3>Largest tension</h3>\n");
    if tension.is_empty() {
        h.push_str("<p>No member is in tension.</p>\n");
    } else {
        member_rows(h, "max-tension", &tension[..tension.len().min(TOP_MEMBERS)], r);
        shown(h, tension.len().min(TOP_MEMBERS), tension.len(), "members in tension");
    }

    let mut compression: Vec<&MemberOut> = members.iter().filter(|m| m.force < 0.0).collect();
    compression.sort_by(|a, b| a.force.total_cmp(&b.force));
    h.push_str("<h3>Largest compression</h3>\n");
    if compression.is_empty() {
        h.push_str("<p>No member is in compression.</p>\n");
    } else {
        member_rows(h, "max-compression", &compression[..compression.len().min(TOP_MEMBERS)], r);
        shown(h, compression.len().min(TOP_MEMBERS), compression.len(), "members in compression");
    }

    let mut utilised: Vec<&MemberOut> = members.iter().filter(|m| m.utilisation.is_some()).collect();
    utilised.sort_by(|a, b| b.utilisation.unwrap_or(0.0).total_cmp(&a.utilisation.unwrap_or(0.0)));
    h.push_str("<h3>Utilisation</h3>\n");
    h.push_str("<p>Force over the member's <code>tension_capacity</code> or <code>compression_capacity</code> as given in the model; above 1 the given capacity is exceeded.</p>\n");
    if utilised.is_empty() {
        h.push_str("<p>No member has a capacity in the model.</p>\n");
    } else {
        let over = utilised.iter().filter(|m| m.utilisation.unwrap_or(0.0) > 1.0).count();
        let _ = writeln!(h, "<p class=\"{}\">{over} of {} members with a capacity exceed it.</p>", if over > 0 { "fail" } else { "" }, utilised.len());
        member_rows(h, "utilisation", &utilised[..utilised.len().min(LISTED_MEMBERS)], r);
        shown(h, utilised.len().min(LISTED_MEMBERS), utilised.len(), "members with a capacity, largest utilisation first");
    }

    let slack: Vec<&MemberOut> = members.iter().filter(|m| m.slack).collect();
    h.push_str("<h3>Slack members</h3>\n");
    if slack.is_empty() {
        h.push_str("<p>No cable is slack.</p>\n");
    } else {
        member_rows(h, "slack", &slack[..slack.len().min(LISTED_MEMBERS)], r);
        shown(h, slack.len().min(LISTED_MEMBERS), slack.len(), "slack members");
    }
}

/// One row per supported (or sprung) node: its reaction components.
pub(crate) struct NodeReactions {
    pub node: String,
    /// Rx, Ry, Rz (None: the direction is free and has no spring).
    pub r: [Option<f64>; 3],
    /// "support", "spring" or "support, spring".
    pub by: String,
}

/// The reactions of `results.json` gathered by node, in first-seen order.
pub(crate) fn reactions_by_node(r: &Results) -> Vec<NodeReactions> {
    let mut rows: Vec<NodeReactions> = Vec::new();
    let mut index: std::collections::HashMap<&str, usize> = std::collections::HashMap::new();
    for x in &r.reactions {
        let k = *index.entry(x.node.as_str()).or_insert_with(|| {
            rows.push(NodeReactions { node: x.node.clone(), r: [None; 3], by: String::new() });
            rows.len() - 1
        });
        let row = &mut rows[k];
        if let Some(a) = ["x", "y", "z"].iter().position(|d| *d == x.dir) {
            row.r[a] = Some(row.r[a].unwrap_or(0.0) + x.value);
        }
        if !row.by.split(", ").any(|b| b == x.by) {
            if !row.by.is_empty() {
                row.by.push_str(", ");
            }
            row.by.push_str(&x.by);
        }
    }
    rows
}

fn reactions(h: &mut String, r: &Results) {
    h.push_str("<h2 id=\"reactions\">Reactions</h2>\n");
    if r.reactions.is_empty() {
        h.push_str("<p>No reaction.</p>\n");
        return;
    }
    let rows = reactions_by_node(r);
    let f = &r.units.force;
    let _ = writeln!(h, "<p>Force each support or ground spring exerts on the structure at the last converged state, one row per node; – : that direction is free.</p>");
    let heads = [format!("Rx [{f}]"), format!("Ry [{f}]"), format!("Rz [{f}]")];
    table(h, "reactions", &["node", &heads[0], &heads[1], &heads[2], "by"]);
    for x in rows.iter().take(LISTED_ROWS) {
        let cell = |v: Option<f64>| v.map_or_else(|| "<td class=\"num\">–</td>".to_string(), td_num);
        let _ = writeln!(h, "<tr>{}{}{}{}{}</tr>", td(&x.node), cell(x.r[0]), cell(x.r[1]), cell(x.r[2]), td(&x.by));
    }
    end_table(h);
    shown(h, rows.len().min(LISTED_ROWS), rows.len(), "nodes with reactions (all are in results.json)");
}

/// Slack events grouped by the step at which they happened: how many
/// members went slack there and which, and how many carried tension again.
fn slack_table(h: &mut String, r: &Results) {
    h.push_str("<h2 id=\"slack-events\">Slack events along the path</h2>\n");
    if r.slack_events.is_empty() {
        h.push_str("<p>No member went slack along the path.</p>\n");
        return;
    }
    // step -> (load factor, went slack, tensioned again)
    let mut by_step: std::collections::BTreeMap<usize, (f64, Vec<&str>, Vec<&str>)> = Default::default();
    for e in &r.slack_events {
        by_step.entry(e.step).or_insert((e.load_factor, Vec::new(), Vec::new())).1.push(&e.member);
        if let (Some(s), Some(l)) = (e.tensioned_step, e.tensioned_load_factor) {
            by_step.entry(s).or_insert((l, Vec::new(), Vec::new())).2.push(&e.member);
        }
    }
    let _ = writeln!(
        h,
        "<p>{} slack event(s) at {} step(s); marked with triangles on the load path plot. Every event is in results.json (<code>slack_events</code>).</p>",
        r.slack_events.len(),
        by_step.len()
    );
    let names = |v: &[&str]| {
        const SHOWN: usize = 8;
        let mut s = v.iter().take(SHOWN).map(|x| esc(x)).collect::<Vec<_>>().join(", ");
        if v.len() > SHOWN {
            let _ = write!(s, " and {} more", v.len() - SHOWN);
        }
        s
    };
    table(h, "slack-events", &["step", "load factor λ [–]", "went slack", "members", "tensioned again", "members"]);
    for (step, (lambda, slack, back)) in by_step.iter().take(LISTED_ROWS) {
        let _ = writeln!(
            h,
            "<tr>{}{}{}<td>{}</td>{}<td>{}</td></tr>",
            td_int(*step),
            td_num(*lambda),
            td_int(slack.len()),
            names(slack),
            td_int(back.len()),
            names(back)
        );
    }
    end_table(h);
    shown(h, by_step.len().min(LISTED_ROWS), by_step.len(), "steps with slack events");
}

/// The governing results, first on the page.
fn governing(h: &mut String, r: &Results, members: &[MemberOut]) {
    h.push_str("<h2 id=\"governing\">Governing results</h2>\n");
    let (f, l) = (&r.units.force, &r.units.length);
    let mut rows: Vec<(String, String)> = Vec::new();
    let state = match r.steps.last() {
        Some(s) => format!("step {}, load factor λ = {}", s.step, sig4(s.load_factor)),
        None => "no converged state".into(),
    };
    rows.push(("last converged state".into(), state));
    if let Some(d) = &r.largest_displacement {
        rows.push((
            format!("largest displacement [{l}]"),
            {
                // Components below 1e-9 of the magnitude are round-off: 0.
                let c = d.components.map(|v| if v.abs() < 1e-9 * d.magnitude { 0.0 } else { v });
                format!("{} at node {} (ux, uy, uz = {}, {}, {})", sig4(d.magnitude), esc(&d.node), sig4(c[0]), sig4(c[1]), sig4(c[2]))
            },
        ));
    }
    let by = |pick: &dyn Fn(&MemberOut) -> Option<f64>| {
        members.iter().filter_map(|m| pick(m).filter(|v| v.is_finite()).map(|v| (m, v))).max_by(|a, b| a.1.total_cmp(&b.1))
    };
    match by(&|m| (m.force > 0.0).then_some(m.force)) {
        Some((m, v)) => rows.push((format!("largest tension [{f}]"), format!("{} in member {}", sig4(v), esc(&m.id)))),
        None => rows.push((format!("largest tension [{f}]"), "no member in tension".into())),
    }
    if let Some((m, v)) = by(&|m| (m.force < 0.0).then_some(-m.force)) {
        rows.push((format!("largest compression [{f}]"), format!("{} in member {}", sig4(-v), esc(&m.id))));
    }
    if let Some((m, v)) = by(&|m| m.utilisation) {
        let over = members.iter().filter(|m| m.utilisation.is_some_and(|u| u > 1.0)).count();
        let with = members.iter().filter(|m| m.utilisation.is_some()).count();
        let text = format!("{} in member {}; {over} of {with} members with a capacity exceed it", sig4(v), esc(&m.id));
        rows.push(("largest utilisation [–]".into(), if over > 0 { format!("<span class=\"fail\">{text}</span>") } else { text }));
    }
    let slack_end = r.slack_members.len();
    let slack_kinds = members.iter().filter(|m| m.slack).count();
    rows.push((
        "slack at the end".into(),
        format!(
            "{} member(s){}; {} slack event(s) along the path",
            slack_end.max(slack_kinds),
            if slack_end > 0 { format!(" ({})", r.slack_members.iter().take(6).map(|x| esc(x)).collect::<Vec<_>>().join(", ") + if slack_end > 6 { ", …" } else { "" }) } else { String::new() },
            r.slack_events.len()
        ),
    ));
    if r.critical_points.is_empty() {
        rows.push(("critical points".into(), "none found along the traced path".into()));
    } else {
        const SHOWN: usize = 6;
        let mut list: Vec<String> =
            r.critical_points.iter().take(SHOWN).enumerate().map(|(i, c)| format!("{}: {} at λ = {}", i + 1, esc(&c.kind), sig4(c.load_factor))).collect();
        if r.critical_points.len() > SHOWN {
            list.push(format!("and {} more (table below)", r.critical_points.len() - SHOWN));
        }
        rows.push(("critical points".into(), list.join("; ")));
    }
    let stable = match r.stable_at_end {
        Some(true) => "stable (no negative pivot in the tangent)".to_string(),
        Some(false) => format!("<span class=\"fail\">not stable: {} negative pivot(s) in the tangent</span>", r.negative_pivots_at_end),
        None => "not known: the pivots were not counted at the last state".to_string(),
    };
    rows.push(("end state".into(), stable));
    table(h, "governing", &["quantity", "value"]);
    for (k, v) in rows {
        // Values were escaped above; they may carry emphasis markup.
        let _ = writeln!(h, "<tr><th scope=\"row\">{}</th><td>{v}</td></tr>", esc(&k));
    }
    end_table(h);
}

fn equilibrium(h: &mut String, r: &Results) {
    let e = &r.equilibrium;
    h.push_str("<h2 id=\"equilibrium\">Equilibrium check</h2>\n");
    let _ = writeln!(
        h,
        "<p>Loads and reactions summed over the structure at the last converged state (load factor λ = {}): applied = dead load + λ × reference load.</p>",
        sig4(e.load_factor)
    );
    let f = &r.units.force;
    let heads = [format!("x [{f}]"), format!("y [{f}]"), format!("z [{f}]")];
    table(h, "equilibrium", &["", &heads[0], &heads[1], &heads[2]]);
    let scaled = e.reference_load.map(|v| v * e.load_factor);
    for (name, v) in [("dead load", e.dead_load), ("λ × reference load", scaled), ("applied", e.applied), ("reactions", e.reactions), ("imbalance", e.imbalance)] {
        let _ = writeln!(h, "<tr>{}{}{}{}</tr>", td(name), td_num(v[0]), td_num(v[1]), td_num(v[2]));
    }
    end_table(h);
    let _ = writeln!(h, "<p>Relative imbalance |applied + reactions| / (|applied| + |reactions|) = <span id=\"relative-imbalance\">{:.3e}</span>.</p>", e.relative_imbalance);
}

fn statistics(h: &mut String, r: &Results) {
    let t = &r.totals;
    h.push_str("<h2 id=\"solver\">Solver statistics</h2>\n");
    kv(
        h,
        &[
            ("iterations", t.iterations.to_string()),
            ("factorizations", t.factorizations.to_string()),
            ("residual evaluations", t.residual_evaluations.to_string()),
            ("cut-backs", format!("{} ({} iterations spent in attempts cut back)", t.cutbacks, t.wasted_iterations)),
            ("wall time", format!("{} s", sig4(t.seconds))),
        ],
    );
    table(h, "steps", &["step", "load factor λ [–]", "iterations", "factorizations", "relative residual [–]", "negative pivots"]);
    for s in r.steps.iter().take(LISTED_ROWS) {
        let _ = writeln!(
            h,
            "<tr><td class=\"num\">{}</td>{}<td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{:.3e}</td><td class=\"num\">{}{}</td></tr>",
            s.step,
            td_num(s.load_factor),
            s.iterations,
            s.factorizations,
            s.residual,
            s.negative_pivots,
            if s.pivots_checked { "" } else { " (carried)" }
        );
    }
    end_table(h);
    shown(h, r.steps.len().min(LISTED_ROWS), r.steps.len(), "steps (all are in results.json)");
}
