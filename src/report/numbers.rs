//! Numbers for people: the report's tables and legends print values at 4
//! significant figures (the CSV and JSON files keep full precision).

/// `v` at 4 significant figures: fixed notation from 1e-3 up to 1e6
/// (`17.50`, `0.001234`, `12350`), scientific outside it (`1.234e-5`).
pub fn sig4(v: f64) -> String {
    sig(v, 4)
}

/// `v` at `digits` significant figures (at least 1), as [`sig4`].
pub(crate) fn sig(v: f64, digits: usize) -> String {
    if v == 0.0 {
        return "0".into();
    }
    if v.is_nan() {
        return "NaN".into();
    }
    if v.is_infinite() {
        return if v > 0.0 { "inf".into() } else { "-inf".into() };
    }
    let digits = digits.max(1);
    // The scientific form rounds first, so 9.9996 gives exponent 1, not 0.
    let sci = format!("{:.*e}", digits - 1, v);
    let exp: i32 = sci.split('e').nth(1).and_then(|e| e.parse().ok()).unwrap_or(0);
    if !(-3..6).contains(&exp) {
        return sci;
    }
    let rounded: f64 = sci.parse().unwrap_or(v);
    let decimals = (digits as i32 - 1 - exp).max(0) as usize;
    format!("{rounded:.decimals$}")
}

/// At most 4 significant figures, trailing zeros of the decimals dropped
/// (`0.01`, `-0.025`, `12.5`): for round values such as colour band edges.
pub(crate) fn sig4_short(v: f64) -> String {
    let s = sig4(v);
    if s.contains('e') || !s.contains('.') {
        return s;
    }
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn four_significant_figures() {
        assert_eq!(sig4(17.5032155567555), "17.50");
        assert_eq!(sig4(-36436.0), "-36440");
        assert_eq!(sig4(0.0012345), "0.001234");
        assert_eq!(sig4(1.23456e-5), "1.235e-5");
        assert_eq!(sig4(9.99996), "10.00");
        assert_eq!(sig4(2.5e7), "2.500e7");
        assert_eq!(sig4(0.0), "0");
        assert_eq!(sig4(1.0), "1.000");
        assert_eq!(sig4(f64::NAN), "NaN");
        assert_eq!(sig4_short(-0.01), "-0.01");
        assert_eq!(sig4_short(12.5), "12.5");
        assert_eq!(sig4_short(200.0), "200");
        assert_eq!(sig4_short(36436.0), "36440");
        // Every printed value reads back within half a unit of its 4th digit.
        for v in [123.456, -0.98765, 4.4444e-4, 7.77777e9, 999.95] {
            let back: f64 = sig4(v).parse().unwrap();
            assert!((back - v).abs() <= 5e-4 * v.abs(), "{v} -> {back}");
        }
    }
}
