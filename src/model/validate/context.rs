//! The small context every table's checks share: where a value was
//! written (`Src`, `Toml`), what a diagnostic is about (`Item`), the
//! diagnostic sink with its caps (`Ctx`), and the number and count rules
//! (`check_number`, `check_count`) every table applies.

use toml::Spanned;

use crate::model::file::{LineIndex, Span};
use crate::model::{Diagnostic, ModelErrors, Place, Units};
use super::{MAX_DIAGNOSTICS, MAX_LABEL_BYTES, MAX_WARNINGS};

/// Where a value was written: file index, 1-based line and column (0 = not
/// known).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub(super) struct Src {
    pub(super) file: u16,
    pub(super) line: u32,
    pub(super) col: u32,
}

impl Src {
    pub(super) fn place(self) -> Place {
        Place {
            file: self.file,
            line: self.line,
        }
    }

    /// Sort key: file order, with model-wide problems (no line) last.
    pub(super) fn order(self) -> (bool, u16, u32, u32) {
        (self.line == 0, self.file, self.line, self.col)
    }
}

pub(super) fn to_u32(v: usize) -> u32 {
    u32::try_from(v).unwrap_or(u32::MAX)
}

/// A label as shown in messages: an overlong one is cut (it is reported as
/// too long on its own).
pub(super) fn shorten(label: &str) -> std::borrow::Cow<'_, str> {
    const SHOWN: usize = 40;
    if label.len() <= MAX_LABEL_BYTES {
        return label.into();
    }
    let mut end = SHOWN;
    while !label.is_char_boundary(end) {
        end -= 1;
    }
    format!("{}…", &label[..end]).into()
}

/// An id or name longer than [`MAX_LABEL_BYTES`] is an error.
pub(super) fn check_label(cx: &mut Ctx, src: Src, item: Item, key: &str, label: &str) {
    if label.len() > MAX_LABEL_BYTES {
        cx.error(
            src,
            item,
            format!("`{key}` is {} bytes long, more than the {MAX_LABEL_BYTES} allowed", label.len()),
            "use a short id; it only has to be unique",
        );
    }
}

/// The TOML text, for turning byte spans into lines and columns.
pub(super) struct Toml<'t> {
    pub(super) text: &'t str,
    pub(super) index: LineIndex,
}

impl Toml<'_> {
    pub(super) fn src(&self, span: &Span) -> Src {
        let (line, col) = self.index.line_col(self.text, span.start);
        Src {
            file: 0,
            line: to_u32(line),
            col: to_u32(col),
        }
    }

    pub(super) fn at<T>(&self, v: &Spanned<T>) -> Src {
        self.src(&v.span())
    }
}

/// The thing a diagnostic is about.
#[derive(Clone, Copy, Debug)]
pub(super) enum Item<'a> {
    /// `node "A2"`
    Named(&'static str, &'a str),
    /// `spring 3`
    Numbered(&'static str, usize),
    /// `[analysis]`, `header`, …
    Plain(&'static str),
    /// The model as a whole.
    Model,
}

impl Item<'_> {
    pub(super) fn text(self) -> Option<String> {
        match self {
            Item::Named(kind, label) => Some(format!("{kind} {:?}", shorten(label))),
            Item::Numbered(kind, n) => Some(format!("{kind} {n}")),
            Item::Plain(s) => Some(s.to_string()),
            Item::Model => None,
        }
    }
}

pub(super) struct Ctx {
    pub(super) files: Vec<String>,
    pub(super) units: Units,
    pub(super) errors: Vec<(Src, Diagnostic)>,
    pub(super) dropped_errors: usize,
    pub(super) warnings: Vec<(Src, Diagnostic)>,
    pub(super) dropped_warnings: usize,
}

impl Ctx {
    pub(super) fn new(file_name: &str) -> Ctx {
        Ctx {
            files: vec![file_name.to_string()],
            units: Units::default(),
            errors: Vec::new(),
            dropped_errors: 0,
            warnings: Vec::new(),
            dropped_warnings: 0,
        }
    }

    /// No more errors will be kept: skip costly work such as suggestions.
    pub(super) fn full(&self) -> bool {
        self.errors.len() >= MAX_DIAGNOSTICS
    }

    pub(super) fn diagnostic(
        &self,
        src: Src,
        item: Option<String>,
        message: String,
        help: Option<String>,
    ) -> Diagnostic {
        let file = self
            .files
            .get(usize::from(src.file))
            .cloned()
            .unwrap_or_default();
        let mut d = Diagnostic::new(file, message);
        if src.line > 0 {
            d = d.at(src.line as usize, (src.col > 0).then_some(src.col as usize));
        }
        d.item = item;
        d.help = help;
        d
    }

    pub(super) fn push_error(&mut self, src: Src, d: Diagnostic) {
        if self.full() {
            self.dropped_errors += 1;
        } else {
            self.errors.push((src, d));
        }
    }

    pub(super) fn error_with(&mut self, src: Src, item: Item, message: String, help: Option<String>) {
        if self.full() {
            self.dropped_errors += 1;
            return;
        }
        let d = self.diagnostic(src, item.text(), message, help);
        self.errors.push((src, d));
    }

    pub(super) fn error(&mut self, src: Src, item: Item, message: impl Into<String>, help: impl Into<String>) {
        self.error_with(src, item, message.into(), Some(help.into()));
    }

    pub(super) fn warn(&mut self, src: Src, item: Item, message: impl Into<String>, help: impl Into<String>) {
        if self.warnings.len() >= MAX_WARNINGS {
            self.dropped_warnings += 1;
            return;
        }
        let d = self.diagnostic(src, item.text(), message.into(), Some(help.into()));
        self.warnings.push((src, d));
    }

    pub(super) fn into_errors(self) -> ModelErrors {
        let mut errors = self.errors;
        errors.sort_by_key(|(src, _)| src.order());
        let mut diagnostics: Vec<Diagnostic> = errors.into_iter().map(|(_, d)| d).collect();
        if self.dropped_errors > 0 {
            diagnostics.push(
                Diagnostic::new(
                    self.files[0].clone(),
                    format!(
                        "too many problems: {} more were found and not shown",
                        self.dropped_errors
                    ),
                )
                .help(format!(
                    "fix the {MAX_DIAGNOSTICS} problems above and check again"
                )),
            );
        }
        ModelErrors { diagnostics }
    }

    pub(super) fn into_warnings(self) -> Vec<Diagnostic> {
        let mut warnings = self.warnings;
        warnings.sort_by_key(|(src, _)| src.order());
        let mut out: Vec<Diagnostic> = warnings.into_iter().map(|(_, d)| d).collect();
        if self.dropped_warnings > 0 {
            out.push(Diagnostic::new(
                self.files[0].clone(),
                format!("{} more warnings were not shown", self.dropped_warnings),
            ));
        }
        out
    }
}

/// A number as written in messages (`nan`, `inf`, `2.5`).
pub(super) fn fmt_num(v: f64) -> String {
    if v.is_nan() {
        "nan".into()
    } else if v.is_infinite() {
        if v > 0.0 { "inf".into() } else { "-inf".into() }
    } else {
        format!("{v}")
    }
}

#[derive(Clone, Copy, PartialEq, Eq)]
pub(super) enum Rule {
    Finite,
    Positive,
    NonNegative,
}

/// Check one number from the file; true if it may be used. `help` explains
/// the sign rule.
pub(super) fn check_number(
    cx: &mut Ctx,
    v: f64,
    src: Src,
    item: Item,
    key: &str,
    rule: Rule,
    help: &str,
) -> bool {
    if !v.is_finite() {
        cx.error(
            src,
            item,
            format!("`{key}` must be a finite number, found {}", fmt_num(v)),
            "nan and inf are valid toml but mean nothing in a model; write a finite number",
        );
        return false;
    }
    let bad = match rule {
        Rule::Finite => None,
        Rule::Positive => (v <= 0.0).then_some("greater than zero"),
        Rule::NonNegative => (v < 0.0).then_some("zero or more"),
    };
    if let Some(want) = bad {
        cx.error(
            src,
            item,
            format!("`{key}` must be {want}, found {}", fmt_num(v)),
            help,
        );
        return false;
    }
    true
}

/// A count such as `steps`: at least `min`, at most `max`.
pub(super) fn check_count(
    cx: &mut Ctx,
    t: &Toml,
    v: &Spanned<i64>,
    key: &str,
    min: i64,
    max: usize,
    help: &str,
) -> Option<usize> {
    let n = *v.get_ref();
    if n < min {
        cx.error(
            t.at(v),
            Item::Plain("[analysis]"),
            format!("`{key}` must be at least {min}, found {n}"),
            help,
        );
        return None;
    }
    match usize::try_from(n) {
        Ok(n) if n <= max => Some(n),
        _ => {
            cx.error(
                t.at(v),
                Item::Plain("[analysis]"),
                format!("`{key}` must be at most {max}, found {n}"),
                format!("{max} is the largest `{key}` tautline accepts; {help}"),
            );
            None
        }
    }
}

/// A count of items above its cap is an error of the model as a whole.
pub(super) fn check_size(cx: &mut Ctx, n: usize, max: usize, what: &str) {
    if n > max {
        cx.error(
            Src::default(),
            Item::Model,
            format!("the model has {n} {what}, more than the {max} tautline accepts"),
            "split the model; larger models are not supported",
        );
    }
}
