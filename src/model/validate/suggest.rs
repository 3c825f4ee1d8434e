//! "Did you mean …?": the closest candidate by edit distance.

/// Do not search huge id lists for a suggestion: the cost grows with the
/// list and a near miss among a million generated ids is rarely helpful.
pub const MAX_CANDIDATES: usize = 100_000;

/// Edit distance between `a` and `b`, ignoring case, counting insertions,
/// deletions, substitutions and swaps of neighbouring characters as one
/// edit each. Returns `None` as soon as the distance must exceed `limit`.
pub fn distance(a: &str, b: &str, limit: usize) -> Option<usize> {
    let a: Vec<char> = a.chars().flat_map(char::to_lowercase).collect();
    let b: Vec<char> = b.chars().flat_map(char::to_lowercase).collect();
    if a.len().abs_diff(b.len()) > limit {
        return None;
    }
    // Three rows of the dynamic-programming table: the swap rule looks two
    // rows back.
    let mut before: Vec<usize> = vec![0; b.len() + 1];
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    let mut cur: Vec<usize> = vec![0; b.len() + 1];
    for i in 1..=a.len() {
        cur[0] = i;
        let mut row_min = cur[0];
        for j in 1..=b.len() {
            let cost = usize::from(a[i - 1] != b[j - 1]);
            let mut d = (prev[j] + 1).min(cur[j - 1] + 1).min(prev[j - 1] + cost);
            if i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] {
                d = d.min(before[j - 2] + 1);
            }
            cur[j] = d;
            row_min = row_min.min(d);
        }
        if row_min > limit {
            return None;
        }
        std::mem::swap(&mut before, &mut prev);
        std::mem::swap(&mut prev, &mut cur);
    }
    let d = prev[b.len()];
    (d <= limit).then_some(d)
}

/// How many edits still count as a near miss for a word of this length:
/// none for one letter (any other letter would be one edit away), one for
/// very short words (ids like "A2"), then about a third.
fn closeness_limit(word: &str) -> usize {
    match word.chars().count() {
        0..=1 => 0,
        2..=3 => 1,
        n => (n / 3).max(2),
    }
}

/// A shortened word ("max_iter" for "max_iterations") is a likely miss too,
/// ranked behind true near misses.
fn is_abbreviation(word: &str, candidate: &str) -> bool {
    word.chars().count() >= 3
        && candidate.len() > word.len()
        && candidate.to_lowercase().starts_with(&word.to_lowercase())
}

/// The candidate closest to `word`, if any is close enough to be a likely
/// typo. Ties go to the first candidate.
pub fn nearest<'a>(word: &str, candidates: impl IntoIterator<Item = &'a str>) -> Option<&'a str> {
    let limit = closeness_limit(word);
    let mut best: Option<(usize, &'a str)> = None;
    for (n, c) in candidates.into_iter().enumerate() {
        if n >= MAX_CANDIDATES {
            break;
        }
        if c == word {
            continue;
        }
        let bound = best.map_or(limit, |(d, _)| d.saturating_sub(1));
        if best.is_some_and(|(d, _)| d == 0) {
            break;
        }
        let d = distance(word, c, bound)
            .or_else(|| (best.is_none() && is_abbreviation(word, c)).then_some(limit));
        if let Some(d) = d
            && best.is_none_or(|(bd, _)| d < bd)
        {
            best = Some((d, c));
        }
    }
    best.map(|(_, c)| c)
}

/// `did you mean "x"?`, if a candidate is close.
pub fn did_you_mean<'a>(
    word: &str,
    candidates: impl IntoIterator<Item = &'a str>,
) -> Option<String> {
    nearest(word, candidates).map(|c| format!("did you mean \"{c}\"?"))
}

/// `a, b, c` for help lines.
pub fn list<'a>(items: impl IntoIterator<Item = &'a str>) -> String {
    items.into_iter().collect::<Vec<_>>().join(", ")
}

/// Help for a value that must be one of a few names: a suggestion if one is
/// close, and the full list either way.
pub fn choice_help(word: &str, names: &[&str]) -> String {
    let all = list(names.iter().copied());
    match nearest(word, names.iter().copied()) {
        Some(c) => format!("did you mean \"{c}\"? valid values: {all}"),
        None => format!("valid values: {all}"),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn distances() {
        assert_eq!(distance("fix", "fxi", 3), Some(1));
        assert_eq!(distance("tolerence", "tolerance", 3), Some(1));
        assert_eq!(distance("kn", "kN", 3), Some(0));
        assert_eq!(distance("abc", "xyz", 2), None);
        assert_eq!(distance("", "ab", 2), Some(2));
    }

    #[test]
    fn nearest_prefers_the_closest() {
        let keys = ["steps", "max_steps", "tolerance"];
        assert_eq!(nearest("step", keys), Some("steps"));
        assert_eq!(nearest("tolerence", keys), Some("tolerance"));
        assert_eq!(nearest("zzzzzz", keys), None);
        assert_eq!(nearest("max_st", keys), Some("max_steps"));
        assert_eq!(nearest("fixed", ["id", "x", "fix"]), Some("fix"));
    }
}
