//! One fuzz input → a model file and its CSV tables.
//!
//! The bytes are cut at 0xFF (never part of UTF-8 text): the first piece is
//! the TOML text, the second (if any) the table named `nodes.csv`, the third
//! the table named `members.csv`, the fourth the table named `loads.csv`. Invalid UTF-8 is replaced rather than
//! rejected so that the fuzzer keeps exploring the parser behind it.

pub const SEPARATOR: u8 = 0xFF;

pub struct Texts {
    pub toml: String,
    pub nodes: Option<String>,
    pub members: Option<String>,
    pub loads: Option<String>,
}

pub fn split(data: &[u8]) -> Texts {
    let mut pieces = data.splitn(4, |b| *b == SEPARATOR).map(|p| String::from_utf8_lossy(p).into_owned());
    Texts { toml: pieces.next().unwrap_or_default(), nodes: pieces.next(), members: pieces.next(), loads: pieces.next() }
}

impl Texts {
    pub fn load(&self) -> Result<tautline::model::Model, tautline::model::ModelErrors> {
        let mut tables: Vec<(&str, &str)> = Vec::new();
        if let Some(n) = &self.nodes {
            tables.push(("nodes.csv", n));
        }
        if let Some(m) = &self.members {
            tables.push(("members.csv", m));
        }
        if let Some(l) = &self.loads {
            tables.push(("loads.csv", l));
        }
        tautline::model::load_texts(&self.toml, "fuzz.toml", &tables)
    }
}
