//! A small reader for the node and member tables: comma separated, cells
//! trimmed, double-quoted cells allowed (`""` inside quotes is a quote),
//! blank lines and lines starting with `#` skipped. Cells borrow from the
//! text unless they contain an escaped quote, so a row costs no allocation.

use std::borrow::Cow;

/// One cell of a row.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Cell<'a> {
    pub text: Cow<'a, str>,
    /// 1-based column (in bytes) where the cell starts.
    pub col: u32,
}

/// A quoting problem in a row.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct CsvError {
    pub line: u32,
    pub col: u32,
    pub message: String,
}

pub struct CsvReader<'a> {
    rest: &'a str,
    /// Line number of the next line in `rest`.
    line: u32,
}

impl<'a> CsvReader<'a> {
    pub fn new(text: &'a str) -> CsvReader<'a> {
        CsvReader {
            rest: text.strip_prefix('\u{feff}').unwrap_or(text),
            line: 1,
        }
    }

    /// Read the next row into `cells` (cleared first). Returns its 1-based
    /// line number, or `None` at the end of the text.
    pub fn next_row(&mut self, cells: &mut Vec<Cell<'a>>) -> Option<Result<u32, CsvError>> {
        loop {
            if self.rest.is_empty() {
                return None;
            }
            let (line, rest) = match self.rest.find('\n') {
                Some(i) => (&self.rest[..i], &self.rest[i + 1..]),
                None => (self.rest, ""),
            };
            self.rest = rest;
            let number = self.line;
            self.line = self.line.saturating_add(1);
            let trimmed = line.trim_start();
            if trimmed.trim_end().is_empty() || trimmed.starts_with('#') {
                continue;
            }
            cells.clear();
            return Some(split_line(line, number, cells).map(|()| number));
        }
    }
}

fn is_blank(b: u8) -> bool {
    b == b' ' || b == b'\t' || b == b'\r'
}

/// Split one line at commas. Works on bytes: commas, quotes and blanks are
/// ASCII, so every split point is a character boundary.
fn split_line<'a>(line: &'a str, number: u32, cells: &mut Vec<Cell<'a>>) -> Result<(), CsvError> {
    let bytes = line.as_bytes();
    let mut pos = 0;
    loop {
        while pos < bytes.len() && is_blank(bytes[pos]) {
            pos += 1;
        }
        let col = u32::try_from(pos + 1).unwrap_or(u32::MAX);
        if pos < bytes.len() && bytes[pos] == b'"' {
            let (text, end) = quoted(line, pos).ok_or_else(|| CsvError {
                line: number,
                col,
                message: "quoted cell has no closing quote".into(),
            })?;
            cells.push(Cell { text, col });
            pos = end;
            while pos < bytes.len() && is_blank(bytes[pos]) {
                pos += 1;
            }
            match bytes.get(pos) {
                None => return Ok(()),
                Some(b',') => pos += 1,
                Some(_) => {
                    return Err(CsvError {
                        line: number,
                        col: u32::try_from(pos + 1).unwrap_or(u32::MAX),
                        message: "unexpected text after a quoted cell".into(),
                    });
                }
            }
        } else {
            let end = bytes[pos..]
                .iter()
                .position(|b| *b == b',')
                .map_or(bytes.len(), |i| pos + i);
            let text = line[pos..end].trim_end();
            cells.push(Cell {
                text: Cow::Borrowed(text),
                col,
            });
            if end == bytes.len() {
                return Ok(());
            }
            pos = end + 1;
        }
    }
}

/// The contents of the quoted cell starting at `start` and the offset just
/// past its closing quote.
fn quoted(line: &str, start: usize) -> Option<(Cow<'_, str>, usize)> {
    let bytes = line.as_bytes();
    let body = start + 1;
    let mut i = body;
    let mut owned: Option<String> = None;
    let mut piece = body;
    while i < bytes.len() {
        if bytes[i] == b'"' {
            if bytes.get(i + 1) == Some(&b'"') {
                // An escaped quote: the cell can no longer borrow the text.
                let s = owned.get_or_insert_with(String::new);
                s.push_str(&line[piece..=i]);
                i += 2;
                piece = i;
                continue;
            }
            let text = match owned {
                Some(mut s) => {
                    s.push_str(&line[piece..i]);
                    Cow::Owned(s)
                }
                None => Cow::Borrowed(&line[body..i]),
            };
            return Some((text, i + 1));
        }
        i += 1;
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rows(text: &str) -> Vec<(u32, Vec<String>)> {
        let mut r = CsvReader::new(text);
        let mut cells = Vec::new();
        let mut out = Vec::new();
        while let Some(row) = r.next_row(&mut cells) {
            let line = row.unwrap();
            out.push((line, cells.iter().map(|c| c.text.to_string()).collect()));
        }
        out
    }

    #[test]
    fn splits_trims_and_skips() {
        let got = rows("id, x ,y\n\n# note\n A , 1,2\r\n\"b,c\",\"say \"\"hi\"\"\",\n");
        assert_eq!(got[0], (1, vec!["id".into(), "x".into(), "y".into()]));
        assert_eq!(got[1], (4, vec!["A".into(), "1".into(), "2".into()]));
        assert_eq!(
            got[2],
            (5, vec!["b,c".into(), "say \"hi\"".into(), "".into()])
        );
    }

    #[test]
    fn unclosed_quote_is_an_error() {
        let mut r = CsvReader::new("a\n\"x,y\n");
        let mut cells = Vec::new();
        assert!(r.next_row(&mut cells).unwrap().is_ok());
        let e = r.next_row(&mut cells).unwrap().unwrap_err();
        assert_eq!((e.line, e.col), (2, 1));
    }
}
