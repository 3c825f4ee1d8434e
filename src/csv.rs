//! CSV fields as RFC 4180 writes them: one function for every CSV the crate
//! writes (`members.csv` and friends in `report`, the node and member
//! tables of `model::write`), so a label with a comma, a quote or a line
//! break reads back as itself everywhere.

/// One field: quoted when it holds a comma, a double quote or a line break,
/// with each inner quote doubled (RFC 4180, sec. 2, rules 6 and 7); as it
/// is otherwise.
pub fn field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) { format!("\"{}\"", s.replace('"', "\"\"")) } else { s.to_string() }
}

#[cfg(test)]
mod tests {
    use super::field;

    #[test]
    fn plain_fields_stay_and_special_ones_are_quoted() {
        assert_eq!(field("N12"), "N12");
        assert_eq!(field(""), "");
        assert_eq!(field("a,b"), "\"a,b\"");
        assert_eq!(field("say \"hi\""), "\"say \"\"hi\"\"\"");
        assert_eq!(field("two\nlines"), "\"two\nlines\"");
        assert_eq!(field("cr\r"), "\"cr\r\"");
    }
}
