//! The few dense vector operations the correctors, constraints and mode
//! search share, written once. Sums run in index order, so results do not
//! depend on the thread count.

/// a·b.
pub(crate) fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// ‖a − b‖₂.
pub(crate) fn distance(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| (x - y) * (x - y)).sum::<f64>().sqrt()
}
