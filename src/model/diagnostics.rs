//! Problems found in a model file, each with its place, the item it concerns
//! and what to do about it.

use std::fmt;

/// One problem in a model file.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Diagnostic {
    /// File the problem is in, as the user named it.
    pub file: String,
    /// 1-based line, where known.
    pub line: Option<usize>,
    /// 1-based column, where known.
    pub column: Option<usize>,
    /// The item concerned, e.g. `member "c7"` or `[analysis]`.
    pub item: Option<String>,
    /// What is wrong, lower case, no trailing period.
    pub message: String,
    /// How to fix it.
    pub help: Option<String>,
}

impl Diagnostic {
    pub fn new(file: impl Into<String>, message: impl Into<String>) -> Self {
        Diagnostic {
            file: file.into(),
            line: None,
            column: None,
            item: None,
            message: message.into(),
            help: None,
        }
    }

    pub fn at(mut self, line: usize, column: Option<usize>) -> Self {
        self.line = Some(line);
        self.column = column;
        self
    }

    pub fn item(mut self, item: impl Into<String>) -> Self {
        self.item = Some(item.into());
        self
    }

    pub fn help(mut self, help: impl Into<String>) -> Self {
        self.help = Some(help.into());
        self
    }
}

impl fmt::Display for Diagnostic {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.file)?;
        if let Some(line) = self.line {
            write!(f, ":{line}")?;
            if let Some(col) = self.column {
                write!(f, ":{col}")?;
            }
        }
        write!(f, ": ")?;
        if let Some(item) = &self.item {
            write!(f, "{item}: ")?;
        }
        write!(f, "{}", self.message)?;
        if let Some(help) = &self.help {
            write!(f, "\n  help: {help}")?;
        }
        Ok(())
    }
}

/// Every problem found in a model, in file order.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct ModelErrors {
    pub diagnostics: Vec<Diagnostic>,
}

impl fmt::Display for ModelErrors {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (i, d) in self.diagnostics.iter().enumerate() {
            if i > 0 {
                writeln!(f)?;
            }
            write!(f, "error: {d}")?;
        }
        let n = self.diagnostics.len();
        if n > 1 {
            write!(f, "\n{n} problems found; nothing was written")?;
        }
        Ok(())
    }
}

impl std::error::Error for ModelErrors {}

impl From<Diagnostic> for ModelErrors {
    fn from(d: Diagnostic) -> Self {
        ModelErrors { diagnostics: vec![d] }
    }
}
