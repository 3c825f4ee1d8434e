//! `report.html`: one self-contained page (inline CSS and SVG, no scripts,
//! no external assets) that prints cleanly. Every number in its tables is
//! formatted as in `results.json` and `members.csv` (shortest round-trip
//! form), so the page and the files can be compared value for value.
//! Every string from the model is escaped.

use super::num;
use crate::model::{MemberKind, Model};
use crate::results::{MemberOut, Results};
use std::fmt::Write as _;

/// Rows shown in each of the largest-tension and largest-compression tables.
pub const TOP_MEMBERS: usize = 20;
/// Rows shown at most in the utilisation and slack tables.
pub const LISTED_MEMBERS: usize = 200;
/// Rows shown at most in the reactions and steps tables.
pub const LISTED_ROWS: usize = 500;

/// A plot to embed: its caption and its SVG text.
pub struct Figure<'a> {
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
pub fn esc(s: &str) -> String {
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
pub fn report_html(model: &Model, results: &Results, members: &[MemberOut], figures: &[Figure]) -> String {
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
    summary(&mut h, model, results);
    settings(&mut h, results);
    figures_section(&mut h, figures);
    critical(&mut h, results);
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

fn summary(h: &mut String, m: &Model, r: &Results) {
    let bars = m.members.iter().filter(|x| x.kind == MemberKind::Bar).count();
    let supported = m.nodes.iter().filter(|n| n.fixed.iter().any(|f| *f)).count();
    let t = m.total_reference_load();
    let u = m.units;
    h.push_str("<h2 id=\"model\">Model</h2>\n");
    kv(
        h,
        &[
            ("units", format!("force {}, length {}", r.units.force, r.units.length)),
            ("nodes", format!("{} ({supported} supported, {} fixed directions)", m.n_nodes(), m.n_fixed())),
            ("members", format!("{} ({bars} bars, {} cables)", m.n_members(), m.n_members() - bars)),
            ("springs", m.springs.len().to_string()),
            ("free DOFs", (3 * m.n_nodes() - m.n_fixed()).to_string()),
            (
                "reference load",
                format!(
                    "{} nodal loads, total [{}, {}, {}] {}",
                    m.loads.len(),
                    num(u.force_out(t[0])),
                    num(u.force_out(t[1])),
                    num(u.force_out(t[2])),
                    r.units.force
                ),
            ),
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
        ("target", num(a.target)),
        ("relative residual tolerance", num(a.tolerance)),
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
    format!("<td class=\"num\">{}</td>", num(v))
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
    let mut header = vec!["kind", "load factor", "step", "pinpointed", "negative pivots", "mode (largest shares)"];
    let watch_heads: Vec<String> = r.watch.iter().map(|w| format!("{w} [{}]", r.units.length)).collect();
    header.extend(watch_heads.iter().map(String::as_str));
    table(h, "critical-points", &header);
    for c in &r.critical_points {
        let mut row = format!(
            "<tr>{}{}<td class=\"num\">{}</td>{}<td class=\"num\">{} → {}</td>{}",
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
    table(h, id, &["member", "kind", &force, "strain", &length, "utilisation", "slack"]);
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

fn reactions(h: &mut String, r: &Results) {
    h.push_str("<h2 id=\"reactions\">Reactions</h2>\n");
    if r.reactions.is_empty() {
        h.push_str("<p>No reaction.</p>\n");
        return;
    }
    let value = format!("reaction [{}]", r.units.force);
    table(h, "reactions", &["node", "direction", &value, "by"]);
    for x in r.reactions.iter().take(LISTED_ROWS) {
        let _ = writeln!(h, "<tr>{}{}{}{}</tr>", td(&x.node), td(&x.dir), td_num(x.value), td(&x.by));
    }
    end_table(h);
    shown(h, r.reactions.len().min(LISTED_ROWS), r.reactions.len(), "reactions (all are in results.json)");
}

fn equilibrium(h: &mut String, r: &Results) {
    let e = &r.equilibrium;
    h.push_str("<h2 id=\"equilibrium\">Equilibrium check</h2>\n");
    let _ = writeln!(h, "<p>Applied load plus reactions, summed over the structure, at the last converged state [{}].</p>", esc(&r.units.force));
    table(h, "equilibrium", &["", "x", "y", "z"]);
    for (name, v) in [("applied", e.applied), ("reactions", e.reactions), ("imbalance", e.imbalance)] {
        let _ = writeln!(h, "<tr>{}{}{}{}</tr>", td(name), td_num(v[0]), td_num(v[1]), td_num(v[2]));
    }
    end_table(h);
    let _ = writeln!(h, "<p>Relative imbalance |applied + reactions| / (|applied| + |reactions|) = <span id=\"relative-imbalance\">{}</span>.</p>", num(e.relative_imbalance));
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
            ("wall time", format!("{} s", num(t.seconds))),
        ],
    );
    table(h, "steps", &["step", "load factor", "iterations", "factorizations", "relative residual", "negative pivots"]);
    for s in r.steps.iter().take(LISTED_ROWS) {
        let _ = writeln!(
            h,
            "<tr><td class=\"num\">{}</td>{}<td class=\"num\">{}</td><td class=\"num\">{}</td>{}<td class=\"num\">{}{}</td></tr>",
            s.step,
            td_num(s.load_factor),
            s.iterations,
            s.factorizations,
            td_num(s.residual),
            s.negative_pivots,
            if s.pivots_checked { "" } else { " (carried)" }
        );
    }
    end_table(h);
    shown(h, r.steps.len().min(LISTED_ROWS), r.steps.len(), "steps (all are in results.json)");
}
