//! The CSV tables a model file names (`nodes_csv`, `members_csv`,
//! `loads_csv`): reading the file, the header, and each row into the same raw
//! shape as a TOML entry so it meets the same checks. A table whose header is
//! wrong is reported once, at the header, and its rows are not checked: every
//! row would only repeat the header's problem.

use super::csv::{Cell, CsvReader};
use super::context::{Ctx, Item, Src, Toml, to_u32};
use super::loads::{RawLoad, add_load};
use super::members::{RawMember, add_member};
use super::nodes::{RawNode, add_node};
use super::refs::Refs;
use super::{MAX_CSV_BYTES, MAX_ITEMS, MAX_MEMBERS, MAX_NODES, Tables, suggest, utf8_text};
use crate::model::file::lower_first;
use crate::model::{Member, NodalLoad, Node};
use toml::Spanned;

/// Read the CSV file named by `key`; returns its index in `files` and text.
pub(super) fn read_csv(
    cx: &mut Ctx,
    t: &Toml,
    name: &Spanned<String>,
    key: &'static str,
    tables: &Tables,
) -> Option<(u16, String)> {
    let src = t.at(name);
    let item = Item::Plain(key);
    let (shown, text) = match tables {
        Tables::None => {
            cx.error(
                src,
                item,
                format!("cannot read {:?}: the model was not read from a file, so there is no folder to look in", name.get_ref()),
                "load the model from a file, or list the items in the toml file itself",
            );
            return None;
        }
        Tables::Texts(given) => {
            let Some((_, text)) = given.iter().find(|(n, _)| *n == name.get_ref().as_str()) else {
                cx.error(
                    src,
                    item,
                    format!("no table named {:?} was given", name.get_ref()),
                    "give the table's text under the name written here",
                );
                return None;
            };
            if text.len() as u64 > MAX_CSV_BYTES {
                cx.error(
                    src,
                    item,
                    format!("{:?} is larger than {} GiB", name.get_ref(), MAX_CSV_BYTES >> 30),
                    "split the model; larger tables are not supported",
                );
                return None;
            }
            (name.get_ref().clone(), text.to_string())
        }
        Tables::Folder(base) => {
            let path = base.join(name.get_ref());
            let shown = path.display().to_string();
            let too_big = std::fs::metadata(&path)
                .map(|m| m.len() > MAX_CSV_BYTES)
                .unwrap_or(false);
            if too_big {
                cx.error(
                    src,
                    item,
                    format!("{shown:?} is larger than {} GiB", MAX_CSV_BYTES >> 30),
                    "split the model; larger tables are not supported",
                );
                return None;
            }
            match std::fs::read(&path) {
                Ok(bytes) => match utf8_text(bytes) {
                    Ok(text) => (shown, text),
                    Err(bad) => {
                        let file = u16::try_from(cx.files.len()).unwrap_or(u16::MAX);
                        cx.files.push(shown.clone());
                        let src = Src { file, line: to_u32(bad.line), col: to_u32(bad.column) };
                        cx.push_error(src, bad.diagnostic(&shown, "table"));
                        return None;
                    }
                },
                Err(e) => {
                    cx.error(
                        src,
                        item,
                        format!("cannot read {shown:?}: {}", lower_first(&e.to_string())),
                        "check the name; it is relative to the folder of the model file; a table must be utf-8 text",
                    );
                    return None;
                }
            }
        }
    };
    let idx = u16::try_from(cx.files.len()).ok()?;
    cx.files.push(shown);
    Some((idx, text))
}

/// Column names of a CSV table; the first `required` must be present.
struct Columns {
    names: &'static [&'static str],
    required: usize,
}

const NODE_COLUMNS: Columns = Columns {
    names: &["id", "x", "y", "z", "fix"],
    required: 4,
};
const MEMBER_COLUMNS: Columns = Columns {
    names: &[
        "id",
        "kind",
        "end1",
        "end2",
        "section",
        "prestress",
        "rest_length",
        "force_density",
        "target_force",
        "target_length",
    ],
    required: 5,
};
const LOAD_COLUMNS: Columns = Columns {
    names: &["node", "fx", "fy", "fz"],
    required: 4,
};

impl Columns {
    /// The columns a header may have, for the help of every header problem.
    fn expected(&self) -> String {
        let required = self.names[..self.required].join(",");
        if self.required == self.names.len() {
            format!("the header is {required}")
        } else {
            format!(
                "the header is {required}, then any of {}",
                suggest::list(self.names[self.required..].iter().copied())
            )
        }
    }
}

/// Where each named column is in a row, by the header. `None` if the header
/// is wrong (reported, each help naming the expected header).
fn read_header(
    cx: &mut Ctx,
    file: u16,
    line: u32,
    cells: &[Cell],
    cols: &Columns,
) -> Option<Vec<Option<usize>>> {
    let item = Item::Plain("header");
    let mut at: Vec<Option<usize>> = vec![None; cols.names.len()];
    let mut ok = true;
    for (i, cell) in cells.iter().enumerate() {
        let src = Src {
            file,
            line,
            col: cell.col,
        };
        match cols.names.iter().position(|n| *n == cell.text) {
            Some(k) if at[k].is_some() => {
                cx.error(
                    src,
                    item,
                    format!("column `{}` appears twice", cell.text),
                    format!("keep one of them; {}", cols.expected()),
                );
                ok = false;
            }
            Some(k) => at[k] = Some(i),
            None => {
                let help = match suggest::did_you_mean(&cell.text, cols.names.iter().copied()) {
                    Some(hint) => format!("{hint} ({})", cols.expected()),
                    None => cols.expected(),
                };
                cx.error(src, item, format!("unknown column `{}`", cell.text), help);
                ok = false;
            }
        }
    }
    for (k, name) in cols.names.iter().enumerate().take(cols.required) {
        if at[k].is_none() {
            cx.error(
                Src { file, line, col: 0 },
                item,
                format!("missing column `{name}`"),
                cols.expected(),
            );
            ok = false;
        }
    }
    ok.then_some(at)
}

/// Rows of one CSV table: reads the header, then hands each well-formed
/// row (right number of cells) to `row`. Returns false if the rows were not
/// read because the table is empty or its header is wrong (reported once):
/// references to the table's items must then not be reported as unknown.
fn each_row<'a>(
    cx: &mut Ctx,
    file: u16,
    text: &'a str,
    cols: &Columns,
    mut row: impl FnMut(&mut Ctx, Row<'_, 'a>) -> bool,
) -> bool {
    let mut reader = CsvReader::new(text);
    let mut cells: Vec<Cell<'a>> = Vec::with_capacity(cols.names.len());
    let header = match reader.next_row(&mut cells) {
        None => {
            cx.error(
                Src {
                    file,
                    line: 1,
                    col: 0,
                },
                Item::Plain("header"),
                "the table is empty",
                format!("start it with the header row; {}", cols.expected()),
            );
            return false;
        }
        Some(Err(e)) => {
            cx.error(
                Src {
                    file,
                    line: e.line,
                    col: e.col,
                },
                Item::Plain("header"),
                e.message,
                format!("close the quote; {}", cols.expected()),
            );
            return false;
        }
        Some(Ok(line)) => read_header(cx, file, line, &cells, cols),
    };
    let Some(columns) = header else { return false };
    let width = cells.len();
    while let Some(next) = reader.next_row(&mut cells) {
        let line = match next {
            Ok(line) => line,
            Err(e) => {
                cx.error(
                    Src {
                        file,
                        line: e.line,
                        col: e.col,
                    },
                    Item::Plain("row"),
                    e.message,
                    "close the quote; a quote inside a quoted cell is written \"\"",
                );
                continue;
            }
        };
        if cells.len() != width {
            cx.error(
                Src { file, line, col: 0 },
                Item::Plain("row"),
                format!("row has {} cells but the header has {width}", cells.len()),
                "give every row one cell per column; quote cells that contain commas",
            );
            continue;
        }
        if !row(
            cx,
            Row {
                file,
                line,
                cells: &cells,
                columns: &columns,
            },
        ) {
            break;
        }
    }
    true
}

/// One row with its header mapping.
struct Row<'r, 'a> {
    file: u16,
    line: u32,
    cells: &'r [Cell<'a>],
    columns: &'r [Option<usize>],
}

impl Row<'_, '_> {
    fn cell(&self, k: usize) -> Option<&Cell<'_>> {
        self.columns[k]
            .map(|i| &self.cells[i])
            .filter(|c| !c.text.is_empty())
    }

    fn src(&self, k: usize) -> Src {
        let col = self.columns[k].map_or(0, |i| self.cells[i].col);
        Src {
            file: self.file,
            line: self.line,
            col,
        }
    }

    fn whole(&self) -> Src {
        Src {
            file: self.file,
            line: self.line,
            col: 0,
        }
    }

    fn text(&self, k: usize) -> &str {
        self.cell(k).map_or("", |c| &c.text)
    }

    /// A number cell: `None` if empty or not a number (the latter reported).
    fn number(&self, cx: &mut Ctx, k: usize, name: &str, item: Item) -> Option<f64> {
        let cell = self.cell(k)?;
        match cell.text.parse::<f64>() {
            Ok(v) => Some(v),
            Err(_) => {
                cx.error(
                    self.src(k),
                    item,
                    format!("`{name}` is not a number: {:?}", cell.text),
                    "write a decimal number such as 2.5 or -1e-3",
                );
                None
            }
        }
    }

    /// A number cell that must be filled in.
    fn required_number(&self, cx: &mut Ctx, k: usize, name: &str, item: Item, help: &str) -> Option<f64> {
        if self.cell(k).is_none() {
            cx.error(self.src(k), item, format!("missing `{name}`"), help);
            return None;
        }
        self.number(cx, k, name, item)
    }

    /// Past `max` items the table stops, with one error at this row.
    fn over_cap(&self, cx: &mut Ctx, n: usize, max: usize, what: &str) -> bool {
        if n < max {
            return false;
        }
        cx.error(
            self.whole(),
            Item::Plain("row"),
            format!("the model has more than {max} {what}, the most tautline accepts"),
            "split the model; larger models are not supported",
        );
        true
    }
}

/// The rows of `nodes_csv`; false if the table's rows were not read.
pub(super) fn csv_nodes(cx: &mut Ctx, file: u16, text: &str, nodes: &mut Vec<Node>) -> bool {
    each_row(cx, file, text, &NODE_COLUMNS, |cx, row| {
        if row.over_cap(cx, nodes.len(), MAX_NODES, "nodes") {
            return false;
        }
        let label = row.text(0);
        if label.is_empty() {
            cx.error(
                row.src(0),
                Item::Plain("node"),
                "node id is empty",
                "give every node an id in the `id` column",
            );
            return true;
        }
        let item = Item::Named("node", label);
        let mut at = [None; 3];
        for (a, name) in ["x", "y", "z"].into_iter().enumerate() {
            at[a] = row.number(cx, a + 1, name, item);
            if row.cell(a + 1).is_none() {
                cx.error(
                    row.src(a + 1),
                    item,
                    format!("missing `{name}` coordinate"),
                    "every node needs x, y and z",
                );
            }
        }
        let raw = RawNode {
            label,
            place: row.whole(),
            label_src: row.src(0),
            at,
            at_src: [row.src(1), row.src(2), row.src(3)],
            at_keys: ["x", "y", "z"],
            fix: row.cell(4).map(|c| (&*c.text, row.src(4))),
        };
        add_node(cx, raw, nodes);
        true
    })
}

/// The rows of `members_csv`: how many rows there were (read or not), and
/// false if the table's rows were not read.
pub(super) fn csv_members(
    cx: &mut Ctx,
    file: u16,
    text: &str,
    refs: &Refs,
    members: &mut Vec<Member>,
    attached: &mut [bool],
    section_used: &mut [bool],
) -> (usize, bool) {
    let mut rows = 0;
    let read = each_row(cx, file, text, &MEMBER_COLUMNS, |cx, row| {
        rows += 1;
        if row.over_cap(cx, members.len(), MAX_MEMBERS, "members") {
            return false;
        }
        let label = row.text(0);
        if label.is_empty() {
            cx.error(
                row.src(0),
                Item::Plain("member"),
                "member id is empty",
                "give every member an id in the `id` column",
            );
            return true;
        }
        let item = Item::Named("member", label);
        let mut complete = true;
        for (k, name) in MEMBER_COLUMNS
            .names
            .iter()
            .enumerate()
            .take(MEMBER_COLUMNS.required)
            .skip(1)
        {
            if row.cell(k).is_none() {
                cx.error(
                    row.src(k),
                    item,
                    format!("missing `{name}`"),
                    format!("fill in the `{name}` column"),
                );
                complete = false;
            }
        }
        if !complete {
            return true;
        }
        let opt = |cx: &mut Ctx, k: usize| {
            row.number(cx, k, MEMBER_COLUMNS.names[k], item)
                .map(|v| (v, row.src(k)))
        };
        let raw = RawMember {
            label,
            place: row.whole(),
            label_src: row.src(0),
            kind: (row.text(1), row.src(1)),
            ends: [(row.text(2), row.src(2)), (row.text(3), row.src(3))],
            end_keys: ["end1", "end2"],
            section: (row.text(4), row.src(4)),
            prestress: opt(cx, 5),
            rest_length: opt(cx, 6),
            force_density: opt(cx, 7),
            target_force: opt(cx, 8),
            target_length: opt(cx, 9),
        };
        add_member(cx, &raw, refs, members, attached, section_used);
        true
    });
    (rows, read)
}

/// The rows of `loads_csv`, added after the `[[load]]` tables; false if the
/// table's rows were not read.
pub(super) fn csv_loads(
    cx: &mut Ctx,
    file: u16,
    text: &str,
    refs: &Refs,
    loads: &mut Vec<NodalLoad>,
) -> bool {
    each_row(cx, file, text, &LOAD_COLUMNS, |cx, row| {
        if row.over_cap(cx, loads.len(), MAX_ITEMS, "loads") {
            return false;
        }
        let node = row.text(0);
        if node.is_empty() {
            cx.error(
                row.src(0),
                Item::Plain("load"),
                "the load's node is empty",
                "name the loaded node in the `node` column",
            );
            return true;
        }
        let item = Item::Named("load on node", node);
        let mut force = [None; 3];
        for (a, name) in ["fx", "fy", "fz"].into_iter().enumerate() {
            force[a] = row.required_number(
                cx,
                a + 1,
                name,
                item,
                "every load needs fx, fy and fz; write 0 for no force in a direction",
            );
        }
        let raw = RawLoad {
            node: (node, row.src(0)),
            item,
            place: row.whole(),
            force,
            force_src: [row.src(1), row.src(2), row.src(3)],
            force_keys: ["fx", "fy", "fz"],
        };
        add_load(cx, &raw, refs, loads);
        true
    })
}

#[cfg(test)]
mod tests {
    use super::super::tests::{BASE, errors, expect, temp_dir};
    use super::super::{MAX_LABEL_BYTES, load_str, load_texts};
    use crate::model::Diagnostic;

    /// Diagnostics of BASE with the given tables, in memory.
    fn table_errors(keys: &str, tables: &[(&str, &str)]) -> Vec<Diagnostic> {
        let text = format!("{keys}{BASE}");
        match load_texts(&text, "m.toml", tables) {
            Ok(_) => panic!("model should be rejected: {tables:?}"),
            Err(e) => e.diagnostics,
        }
    }

    #[test]
    fn tables_given_as_text_are_read_and_checked() {
        let text = format!("nodes_csv = \"n.csv\"\n{BASE}");
        let nodes = "id,x,y,z\nC,2,0,0\nD,3,0,nan\n";
        let ds = load_texts(&text, "m.toml", &[("n.csv", nodes)]).unwrap_err().diagnostics;
        expect(&ds, "n.csv", 3, "node \"D\"", "finite");
        let ds = load_texts(&text, "m.toml", &[]).unwrap_err().diagnostics;
        expect(&ds, "m.toml", 1, "nodes_csv", "no table named");
    }

    #[test]
    fn a_table_that_is_not_utf8_names_its_line() {
        let dir = temp_dir();
        std::fs::write(dir.join("n.csv"), b"id,x,y,z\nC,1,\xff,0\n").unwrap();
        let text = format!("nodes_csv = \"n.csv\"\n{BASE}");
        let ds = load_str(&text, "m.toml", Some(&dir)).unwrap_err().diagnostics;
        let n = dir.join("n.csv").display().to_string();
        let d = expect(&ds, &n, 2, "table", "not utf-8");
        assert_eq!(d.column, Some(5));
    }

    #[test]
    fn csv_without_a_folder_is_an_error() {
        let text = format!("nodes_csv = \"n.csv\"\n{BASE}");
        let ds = errors(&text);
        expect(&ds, "m.toml", 1, "nodes_csv", "not read from a file");
    }

    #[test]
    fn csv_header_problems_name_the_file_and_line_1() {
        let dir = temp_dir();
        std::fs::write(dir.join("n.csv"), "id,x,y,zz,fixed\nC,1,1,1,\n").unwrap();
        std::fs::write(dir.join("m.csv"), "id,kind,end1,section\n").unwrap();
        let text = format!("nodes_csv = \"n.csv\"\nmembers_csv = \"m.csv\"\n{BASE}");
        let ds = load_str(&text, "m.toml", Some(&dir))
            .unwrap_err()
            .diagnostics;
        let nodes = dir.join("n.csv").display().to_string();
        let members = dir.join("m.csv").display().to_string();
        let d = expect(&ds, &nodes, 1, "header", "unknown column `zz`");
        assert_eq!(d.help.as_deref(), Some("did you mean \"z\"? (the header is id,x,y,z, then any of fix)"));
        let d = expect(&ds, &nodes, 1, "header", "unknown column `fixed`");
        assert_eq!(d.help.as_deref(), Some("did you mean \"fix\"? (the header is id,x,y,z, then any of fix)"));
        expect(&ds, &nodes, 1, "header", "missing column `z`");
        let d = expect(&ds, &members, 1, "header", "missing column `end2`");
        assert!(d.help.unwrap().starts_with("the header is id,kind,end1,end2,section, then any of prestress, "));
        // Nothing else: the rows of both tables are not checked.
        assert_eq!(ds.len(), 4, "{ds:?}");
        std::fs::remove_dir_all(&dir).ok();
    }

    #[test]
    fn csv_row_problems_name_the_file_and_line() {
        let dir = temp_dir();
        std::fs::write(
            dir.join("n.csv"),
            "id,x,y,z,fix\nC,1,0,0,q\nD,abc,0,0,\nB,3,0,0,\nE,1,0\n\"F,1,0,0,\nG,,0,0,\nH,4,0,0,\n",
        )
        .unwrap();
        std::fs::write(
            dir.join("m.csv"),
            "id,kind,end1,end2,section,prestress\nm1,bar,A,C,strand,\nm5,bar,A,Cq,strand,\nm6,bar,A,H,,\nm7,cable,A,H,strand,-1\n",
        )
        .unwrap();
        let text = format!("nodes_csv = \"n.csv\"\nmembers_csv = \"m.csv\"\n{BASE}");
        let ds = load_str(&text, "m.toml", Some(&dir))
            .unwrap_err()
            .diagnostics;
        let n = dir.join("n.csv").display().to_string();
        let m = dir.join("m.csv").display().to_string();
        expect(&ds, &n, 2, "node \"C\"", "invalid letter 'q'");
        expect(&ds, &n, 3, "node \"D\"", "`x` is not a number: \"abc\"");
        let d = expect(&ds, &n, 4, "node \"B\"", "duplicate node id");
        assert!(d.message.contains("m.toml:"), "{d}");
        expect(&ds, &n, 5, "row", "row has 3 cells but the header has 5");
        expect(&ds, &n, 6, "row", "no closing quote");
        expect(&ds, &n, 7, "node \"G\"", "missing `x` coordinate");
        let d = expect(&ds, &m, 2, "member \"m1\"", "duplicate member id");
        assert!(d.message.contains("m.toml:"), "{d}");
        let d = expect(&ds, &m, 3, "member \"m5\"", "unknown node \"Cq\" in `end2`");
        assert_eq!(d.help.as_deref(), Some("did you mean \"C\"?"));
        assert_eq!(d.column, Some(10));
        expect(&ds, &m, 4, "member \"m6\"", "missing `section`");
        expect(
            &ds,
            &m,
            5,
            "member \"m7\"",
            "a cable cannot carry compression",
        );
        std::fs::remove_dir_all(&dir).ok();
    }

    #[test]
    fn large_csv_tables_read_in_full() {
        let dir = temp_dir();
        let n = 200_000;
        let mut nodes = String::from("id,x,y,z,fix\nA0,0,0,0,xyz\n");
        let mut members = String::from("id,kind,end1,end2,section\n");
        for i in 1..n {
            nodes.push_str(&format!("A{i},{i},0.5,0,\n"));
            members.push_str(&format!("c{i},cable,A{},A{i},s\n", i - 1));
        }
        std::fs::write(dir.join("n.csv"), nodes).unwrap();
        std::fs::write(dir.join("m.csv"), members).unwrap();
        let text = "nodes_csv = \"n.csv\"\nmembers_csv = \"m.csv\"\n[[section]]\nname = \"s\"\nEA = 1.0\n[[load]]\nnode = \"A1\"\nforce = [0, 0, -1]\n";
        // Not timed (no timed tests): reading speed is a `bench` matter.
        let m = load_str(text, "m.toml", Some(&dir)).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!((m.n_nodes(), m.n_members()), (n, n - 1));
        assert_eq!(m.members[n - 2].ends, [n - 2, n - 1]);
        std::fs::remove_dir_all(&dir).ok();
    }

    #[test]
    fn load_rows_add_to_the_load_tables() {
        let text = format!("loads_csv = \"l.csv\"\n{BASE}[units]\nforce = \"kN\"\n");
        let loads = "# node loads\nnode,fx,fy,fz\nB,2.5,0,0\n\n\"B\", -1e-3 ,0,0\n";
        let m = load_texts(&text, "m.toml", &[("l.csv", loads)]).unwrap_or_else(|e| panic!("{e}"));
        // BASE's [[load]] first (1 kN), then the rows in file order, in N.
        let fx: Vec<f64> = m.loads.iter().map(|l| l.force[0]).collect();
        assert_eq!(fx, vec![1000.0, 2500.0, -1.0]);
        assert!(m.loads.iter().all(|l| l.node == 1 && l.force[1] == 0.0 && l.force[2] == 0.0));
        assert_eq!((m.loads[1].place.file, m.loads[1].place.line), (1, 3));
        assert_eq!((m.loads[2].place.file, m.loads[2].place.line), (1, 5));
        assert_eq!(m.files, vec!["m.toml".to_string(), "l.csv".to_string()]);
        // Columns in any order.
        let m = load_texts(&text, "m.toml", &[("l.csv", "fz,fy,node,fx\n0,0,B,4\n")]).unwrap();
        assert_eq!(m.loads[1].force, [4000.0, 0.0, 0.0]);
    }

    #[test]
    fn load_row_problems_name_the_row_cell_and_node() {
        let loads = "node,fx,fy,fz\nBq,1,0,0\nB,abc,0,0\nB,1,0\nB,,0,0\n,1,0,0\nB,0,0,5\nB,nan,0,0\nB,1,0,0\n";
        let ds = table_errors("loads_csv = \"l.csv\"\n", &[("l.csv", loads)]);
        let d = expect(&ds, "l.csv", 2, "load on node \"Bq\"", "unknown node \"Bq\" in `node`");
        assert_eq!(d.help.as_deref(), Some("did you mean \"B\"?"));
        assert_eq!(d.column, Some(1));
        let d = expect(&ds, "l.csv", 3, "load on node \"B\"", "`fx` is not a number: \"abc\"");
        assert_eq!(d.column, Some(3));
        expect(&ds, "l.csv", 4, "row", "row has 3 cells but the header has 4");
        expect(&ds, "l.csv", 5, "load on node \"B\"", "missing `fx`");
        expect(&ds, "l.csv", 6, "load", "the load's node is empty");
        let d = expect(&ds, "l.csv", 7, "load on node \"B\"", "z component of 5 on node \"B\"");
        assert_eq!(d.column, Some(7));
        expect(&ds, "l.csv", 8, "load on node \"B\"", "`fx` must be a finite number, found nan");
        assert_eq!(ds.len(), 7, "{ds:?}");
    }

    #[test]
    fn a_wrong_header_is_reported_once_with_the_expected_columns() {
        // Every row below is bad too; none of it is reported.
        let rows = "Bq,x,0\nZ,1,2,3,4,5\n";
        for (header, words) in [
            ("node,fx,fy", "missing column `fz`"),
            ("node,fx,fy,fz,fx", "column `fx` appears twice"),
            ("node,fx,fy,fz,fw", "unknown column `fw`"),
        ] {
            let ds = table_errors("loads_csv = \"l.csv\"\n", &[("l.csv", &format!("{header}\n{rows}"))]);
            let d = expect(&ds, "l.csv", 1, "header", words);
            assert!(d.help.as_deref().unwrap().contains("the header is node,fx,fy,fz"), "{d}");
            assert_eq!(ds.len(), 1, "{header}: {ds:?}");
        }
        let ds = table_errors("loads_csv = \"l.csv\"\n", &[("l.csv", "# nothing\n")]);
        expect(&ds, "l.csv", 1, "header", "the table is empty");
    }

    #[test]
    fn an_unread_table_does_not_cascade() {
        // A bad nodes header: the members and loads naming its nodes are not
        // reported as unknown.
        let nodes = "id,x,y,zz\nC,2,0,0\n";
        let members = "id,kind,end1,end2,section\nm2,bar,B,C,strand\n";
        let loads = "node,fx,fy,fz\nC,0,0,-1\n";
        let keys = "nodes_csv = \"n.csv\"\nmembers_csv = \"m.csv\"\nloads_csv = \"l.csv\"\n";
        let ds = table_errors(keys, &[("n.csv", nodes), ("m.csv", members), ("l.csv", loads)]);
        let d = expect(&ds, "n.csv", 1, "header", "unknown column `zz`");
        assert_eq!(d.help.as_deref(), Some("did you mean \"z\"? (the header is id,x,y,z, then any of fix)"));
        expect(&ds, "n.csv", 1, "header", "missing column `z`");
        assert_eq!(ds.len(), 2, "{ds:?}");
        // A bad members header: the nodes only its rows hold are not
        // reported as free.
        let members = "id,kind,end1,end2\nm2,bar,B,C\n";
        let ds = table_errors(keys, &[("n.csv", "id,x,y,z\nC,2,0,0\n"), ("m.csv", members), ("l.csv", loads)]);
        expect(&ds, "m.csv", 1, "header", "missing column `section`");
        assert_eq!(ds.len(), 1, "{ds:?}");
        // A table that cannot be found is the one error too.
        let ds = table_errors(keys, &[("m.csv", "id,kind,end1,end2,section\nm2,bar,B,C,strand\n"), ("l.csv", loads)]);
        expect(&ds, "m.toml", 1, "nodes_csv", "no table named \"n.csv\"");
        assert_eq!(ds.len(), 1, "{ds:?}");
    }

    #[test]
    fn an_overlong_id_is_reported_at_its_row_and_cell() {
        let long = "N".repeat(MAX_LABEL_BYTES + 1);
        let nodes = format!("x,y,z,id\n2,0,0,C\n3,0,0,{long}\n");
        let members = format!("id,kind,end1,end2,section\nm2,bar,B,C,strand\nm{long},bar,B,{long},strand\n");
        let keys = "nodes_csv = \"n.csv\"\nmembers_csv = \"m.csv\"\n";
        let ds = table_errors(keys, &[("n.csv", &nodes), ("m.csv", &members)]);
        let d = expect(&ds, "n.csv", 3, "node \"NNNN", "`id` is 257 bytes long");
        assert_eq!(d.column, Some(7));
        let d = expect(&ds, "m.csv", 3, "member \"mNNN", "`id` is 258 bytes long");
        assert_eq!(d.column, Some(1));
    }

    #[test]
    fn a_csv_table_given_as_the_model_is_named_as_such() {
        // At the header's line.
        for (text, line) in [("id,x,y,z,fix\nA,0,0,0,xyz\n", 1), ("# loads\nnode,fx,fy,fz\nB,1,0,0\n", 2)] {
            let ds = errors(text);
            assert_eq!(ds.len(), 1, "{ds:?}");
            let d = expect(&ds, "m.toml", line, "model file", "this looks like a CSV table; pass the model's .toml file");
            assert!(d.message.contains("nodes_csv / members_csv / loads_csv"), "{d}");
        }
        // A file named .csv is refused before it is read, and the model
        // beside it that names it is pointed to.
        let dir = temp_dir();
        std::fs::write(dir.join("n.csv"), "id,x,y,z\nC,2,0,0\n").unwrap();
        std::fs::write(dir.join("other.toml"), "title = \"x\"\n").unwrap();
        std::fs::write(dir.join("net.toml"), format!("nodes_csv = \"n.csv\"\n{BASE}")).unwrap();
        let ds = crate::model::load(&dir.join("n.csv")).unwrap_err().diagnostics;
        assert_eq!(ds.len(), 1, "{ds:?}");
        assert!(ds[0].message.starts_with("this looks like a CSV table"), "{}", ds[0]);
        let help = ds[0].help.as_deref().unwrap();
        assert_eq!(help, format!("{} names this table; pass that file instead", dir.join("net.toml").display()));
        std::fs::remove_dir_all(&dir).ok();
    }
}
