//! How generated numbers and strings are written: Rust's shortest round-trip
//! form (so a generated file reads back to exactly the computed values),
//! through a small cache of recent texts; TOML basic strings.

use std::fmt::{self, Write as _};

/// A number as it is written to files: shortest round-trip form, −0 as 0.
pub(super) fn num(v: f64) -> Num {
    Num(v)
}

pub(super) struct Num(f64);

impl fmt::Display for Num {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{:?}", self.0 + 0.0)
    }
}

/// A TOML basic string.
pub(super) struct TomlStr<'a>(pub(super) &'a str);

impl fmt::Display for TomlStr<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_char('"')?;
        for c in self.0.chars() {
            match c {
                '"' => f.write_str("\\\"")?,
                '\\' => f.write_str("\\\\")?,
                c if c.is_control() => write!(f, "\\u{:04X}", c as u32)?,
                c => f.write_char(c)?,
            }
        }
        f.write_char('"')
    }
}

/// Shortest round-trip text of recently written numbers. Generated models
/// repeat many values (grid lines, mirror-image cables, equal loads), and
/// looking the text up is much cheaper than formatting the number again.
pub(super) struct NumText {
    pub(super) slots: Vec<(u64, String)>,
    pub(super) shift: u32,
}

impl NumText {
    /// A cache of about `items` slots (a power of two between 64 and 65536).
    pub(super) fn new(items: usize) -> NumText {
        let bits = items
            .clamp(64, 1 << 16)
            .next_power_of_two()
            .trailing_zeros();
        NumText {
            // Bits of a NaN never produced here, so empty slots never match.
            slots: vec![(u64::MAX, String::new()); 1 << bits],
            shift: 64 - bits,
        }
    }

    pub(super) fn push(&mut self, out: &mut String, v: f64) {
        let v = v + 0.0;
        let key = v.to_bits();
        let h = (key.wrapping_mul(0x9E37_79B9_7F4A_7C15) >> self.shift) as usize;
        let (bits, text) = &mut self.slots[h];
        if *bits != key {
            *bits = key;
            text.clear();
            let _ = write!(text, "{v:?}");
        }
        out.push_str(text);
    }
}
