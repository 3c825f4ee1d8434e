//! A CSV table given where the model file is expected: said plainly, once,
//! instead of a TOML syntax error on every line of the table.

use std::io::Read;
use std::path::Path;

use crate::model::Diagnostic;

/// The words of the message (the table keys are the model file's own).
const MESSAGE: &str = "this looks like a CSV table; pass the model's .toml file \
                       (which names it in nodes_csv / members_csv / loads_csv)";

/// True for a file name ending in `.csv` (any case).
pub(super) fn has_csv_name(path: &Path) -> bool {
    path.extension()
        .and_then(|e| e.to_str())
        .is_some_and(|e| e.eq_ignore_ascii_case("csv"))
}

/// The 1-based line of the first line that is not blank or a comment, if it
/// reads as a CSV header: two or more comma-separated names and no `=` or
/// `[`. No TOML file can start that way (a TOML line is a key/value pair or
/// a table header).
pub(super) fn csv_header_line(text: &str) -> Option<usize> {
    let (i, first) = text
        .strip_prefix('\u{feff}')
        .unwrap_or(text)
        .lines()
        .map(str::trim)
        .enumerate()
        .find(|(_, l)| !l.is_empty() && !l.starts_with('#'))?;
    if first.contains(['=', '[']) || !first.contains(',') {
        return None;
    }
    let names = first.split(',').all(|cell| {
        let cell = cell.trim();
        let name = cell
            .strip_prefix('"')
            .and_then(|c| c.strip_suffix('"'))
            .unwrap_or(cell);
        name.starts_with(|c: char| c.is_alphabetic() || c == '_')
            && name.chars().all(|c| c.is_alphanumeric() || matches!(c, '_' | '-' | '.' | ' '))
    });
    names.then_some(i + 1)
}

/// The refusal, at `line`. `sibling` is a model file beside the table that
/// names it, if one was found.
pub(super) fn diagnostic(file: &str, line: usize, sibling: Option<&str>) -> Diagnostic {
    let help = match sibling {
        Some(model) => format!("{model} names this table; pass that file instead"),
        None => "a model file is TOML with [[section]], [[node]] and [[member]] tables \
                 (see the model file section of the README)"
            .to_string(),
    };
    Diagnostic::new(file, MESSAGE).at(line, None).item("model file").help(help)
}

/// A `.toml` file in the table's folder that names the table in one of its
/// CSV keys. Only the start of each file is read (the keys must come before
/// the first table, so they are near the top) and only so many files are
/// looked at: this is a hint, not a search.
pub(super) fn naming_model(table: &Path) -> Option<String> {
    const FILES: usize = 200;
    const HEAD: u64 = 64 << 10;
    let name = table.file_name()?.to_str()?;
    let dir = match table.parent() {
        Some(d) if !d.as_os_str().is_empty() => d,
        _ => Path::new("."),
    };
    let mut found: Vec<String> = Vec::new();
    for entry in std::fs::read_dir(dir).ok()?.flatten().take(FILES) {
        let path = entry.path();
        if path.extension().and_then(|e| e.to_str()) != Some("toml") {
            continue;
        }
        let mut bytes = Vec::new();
        let Ok(file) = std::fs::File::open(&path) else { continue };
        if file.take(HEAD).read_to_end(&mut bytes).is_err() {
            continue;
        }
        // The cut may fall inside a character; the keys are ASCII anyway.
        let head = String::from_utf8_lossy(&bytes);
        let names_it = head.lines().any(|l| {
            let l = l.trim_start();
            ["nodes_csv", "members_csv", "loads_csv"].iter().any(|k| l.starts_with(k))
                && l.split_once('=').is_some_and(|(_, v)| v.trim().trim_matches(['"', '\'']) == name)
        });
        if names_it {
            found.push(path.display().to_string());
        }
    }
    found.sort();
    found.into_iter().next()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn csv_headers_are_told_from_toml() {
        assert_eq!(csv_header_line("id,x,y,z,fix\nA,0,0,0,xyz\n"), Some(1));
        assert_eq!(csv_header_line("\u{feff}# loads\n\nnode, fx, fy, fz\n"), Some(3));
        assert_eq!(csv_header_line("\"id\",\"kind\",end1,end2,section\n"), Some(1));
        assert_eq!(None, csv_header_line("title = \"a, b\"\n"));
        assert_eq!(None, csv_header_line("[[node]]\nid = \"A\"\n"));
        assert_eq!(None, csv_header_line("ends = [\"A\", \"B\"]\n"));
        assert_eq!(None, csv_header_line("A1,0,0,0\n"), "a data row of numbers is not a header");
        assert_eq!(None, csv_header_line("1,2,3\n"));
        assert_eq!(None, csv_header_line("just words\n"));
        assert_eq!(None, csv_header_line(""));
    }

    #[test]
    fn csv_names_in_any_case() {
        assert!(has_csv_name(Path::new("dir/net_nodes.csv")));
        assert!(has_csv_name(Path::new("NET.CSV")));
        assert!(!has_csv_name(Path::new("net.toml")));
        assert!(!has_csv_name(Path::new("csv")));
    }
}
