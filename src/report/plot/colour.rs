//! Colour scales that fit the data: a sequential scale from the smallest to
//! the largest value when every value has one sign, a diverging one only
//! when both signs are present (its two halves each spanning their own
//! range), optionally in a few bands (a filled-contour reading). Every ramp
//! runs from a pale sand to a deep colour, so it reads as a grey ramp in
//! black-and-white print. Legend numbers at 4 significant figures.

use super::svg::{Anchor, Stroke, Svg, INK};
use crate::report::numbers::{sig4, sig4_short};

/// Deep teal (tension, and the sequential ramp's dark end).
pub const TENSION_RGB: [f64; 3] = [16.0, 96.0, 104.0];
/// Brick red (compression).
pub const COMPRESSION_RGB: [f64; 3] = [176.0, 58.0, 34.0];
/// Pale sand: zero on a diverging scale, the light end of a sequential one.
pub const NEUTRAL_RGB: [f64; 3] = [216.0, 207.0, 184.0];
/// Deep violet: downward movement on the displacement maps.
pub const DOWN_RGB: [f64; 3] = [58.0, 36.0, 110.0];
/// Dark ochre: upward movement on the displacement maps.
pub const UP_RGB: [f64; 3] = [150.0, 92.0, 10.0];

#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Ramp {
    /// From `lo` (pale) to `hi` (`end`).
    Sequential { lo: f64, hi: f64, end: [f64; 3] },
    /// `neg` < 0 < `pos`: zero pale, each half to its own end colour.
    Diverging { neg: f64, pos: f64, neg_end: [f64; 3], pos_end: [f64; 3] },
}

#[derive(Clone, Debug)]
pub struct ColourScale {
    pub ramp: Ramp,
    /// Legend heading, with the unit in brackets.
    pub title: String,
    /// Words beside the two ends of the bar (e.g. "tension").
    pub hi_note: String,
    pub lo_note: String,
    /// Band edges, ascending (a banded scale), None: continuous.
    pub bands: Option<Vec<f64>>,
}

fn mix(end: [f64; 3], t: f64) -> [u8; 3] {
    let t = if t.is_finite() { t.clamp(0.0, 1.0) } else { 0.0 };
    [0, 1, 2].map(|k| (NEUTRAL_RGB[k] + t * (end[k] - NEUTRAL_RGB[k])).round().clamp(0.0, 255.0) as u8)
}

pub fn hex(c: [u8; 3]) -> String {
    format!("#{:02x}{:02x}{:02x}", c[0], c[1], c[2])
}

impl ColourScale {
    /// A scale for `values` (non-finite ones ignored): sequential towards
    /// `pos_end` when none is negative, towards `neg_end` (the largest
    /// magnitude darkest) when none is positive, else diverging.
    pub fn fit(values: impl IntoIterator<Item = f64>, pos_end: [f64; 3], neg_end: [f64; 3], title: String) -> ColourScale {
        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
        for v in values.into_iter().filter(|v| v.is_finite()) {
            lo = lo.min(v);
            hi = hi.max(v);
        }
        let ramp = if !lo.is_finite() {
            Ramp::Sequential { lo: 0.0, hi: 0.0, end: pos_end }
        } else if lo >= 0.0 {
            Ramp::Sequential { lo, hi, end: pos_end }
        } else if hi <= 0.0 {
            // Darkest at the most negative value: the ramp runs from hi to lo.
            Ramp::Sequential { lo: hi, hi: lo, end: neg_end }
        } else {
            Ramp::Diverging { neg: lo, pos: hi, neg_end, pos_end }
        };
        ColourScale { ramp, title, hi_note: String::new(), lo_note: String::new(), bands: None }
    }

    /// Bands at "nice" edges (1, 2 or 5 × 10^k apart, about `n` of them)
    /// covering the scale's range.
    pub fn banded(mut self, n: usize) -> ColourScale {
        let (lo, hi) = self.range();
        let (_, _, edges) = super::ticks(lo, hi, n as f64);
        if edges.len() >= 2 {
            self.bands = Some(edges);
        }
        self
    }

    /// The value range, smallest first.
    pub fn range(&self) -> (f64, f64) {
        if let Some(e) = self.bands.as_ref().filter(|e| e.len() >= 2) {
            return (e[0], e[e.len() - 1]);
        }
        match self.ramp {
            Ramp::Sequential { lo, hi, .. } => (lo.min(hi), lo.max(hi)),
            Ramp::Diverging { neg, pos, .. } => (neg, pos),
        }
    }

    fn continuous(&self, v: f64) -> [u8; 3] {
        match self.ramp {
            Ramp::Sequential { lo, hi, end } => {
                let t = if hi != lo { (v - lo) / (hi - lo) } else { 1.0 };
                mix(end, t)
            }
            Ramp::Diverging { neg, pos, neg_end, pos_end } => {
                if v >= 0.0 { mix(pos_end, v / pos) } else { mix(neg_end, v / neg) }
            }
        }
    }

    /// Band index of `v` (0 the lowest), for a banded scale.
    pub fn band(&self, v: f64) -> Option<usize> {
        let e = self.bands.as_ref()?;
        let n = e.len().saturating_sub(1).max(1);
        if !v.is_finite() {
            return Some(0);
        }
        Some(e.partition_point(|x| *x <= v).saturating_sub(1).min(n - 1))
    }

    /// Edges of the bands, lowest first (the range's ends when continuous).
    pub fn band_edges(&self) -> Vec<f64> {
        match &self.bands {
            Some(e) if e.len() >= 2 => e.clone(),
            _ => {
                let (lo, hi) = self.range();
                vec![lo, hi]
            }
        }
    }

    /// Colour of `v` (banded scales give the colour of the band's middle).
    pub fn rgb(&self, v: f64) -> [u8; 3] {
        match self.band(v) {
            Some(k) => {
                let e = self.band_edges();
                self.continuous(0.5 * (e[k] + e[k + 1]))
            }
            None => self.continuous(v),
        }
    }

    pub fn hex(&self, v: f64) -> String {
        hex(self.rgb(v))
    }

    /// The colour bar: heading at (x, y), the bar below it, `height` px
    /// tall, top the largest value; labels at the ends, at zero on a
    /// diverging scale and at every band edge of a banded one. Returns the
    /// y just below the bar's lowest label.
    pub fn legend(&self, svg: &mut Svg, x: f64, y: f64, height: f64, unit: &str) -> f64 {
        const BAR_W: f64 = 18.0;
        const SLICES: usize = 48;
        svg.text(x, y, &self.title, 12.0, Anchor::Start, "legend-text");
        let top = y + 12.0;
        let (lo, hi) = self.range();
        let at = |v: f64| if hi > lo { top + (hi - v) / (hi - lo) * height } else { top + 0.5 * height };
        match &self.bands {
            Some(_) => {
                let e = self.band_edges();
                for k in 0..e.len() - 1 {
                    let (y0, y1) = (at(e[k + 1]), at(e[k]));
                    svg.rect(x, y0, BAR_W, (y1 - y0).max(0.5), &self.hex(0.5 * (e[k] + e[k + 1])), None, "colour-band");
                }
            }
            None => {
                for i in 0..SLICES {
                    let v = hi - (hi - lo) * (i as f64 + 0.5) / SLICES as f64;
                    let h = height / SLICES as f64;
                    svg.rect(x, top + i as f64 * h, BAR_W, h + 0.3, &self.hex(v), None, "colour-band");
                }
            }
        }
        svg.rect(x, top, BAR_W, height, "none", Some(Stroke::solid(INK, 0.8)), "colour-bar");
        let mut marks: Vec<(f64, String)> = Vec::new();
        match (&self.bands, self.ramp) {
            (Some(_), _) => marks.extend(self.band_edges().into_iter().rev().map(|v| (v, String::new()))),
            (None, Ramp::Diverging { .. }) => marks.extend([(hi, String::new()), (0.0, String::new()), (lo, String::new())]),
            (None, _) => marks.extend([(hi, String::new()), (lo, String::new())]),
        }
        if let Some(m) = marks.first_mut() {
            m.1 = self.hi_note.clone();
        }
        if let Some(m) = marks.last_mut() {
            m.1 = self.lo_note.clone();
        }
        let n = marks.len();
        let lowest = marks.last().map_or(top + height, |m| at(m.0));
        let mut prev = f64::NEG_INFINITY;
        for (i, (v, note)) in marks.into_iter().enumerate() {
            let py = at(v);
            // Inner labels closer than a line of text to a neighbour are
            // left out; the two ends are always labelled.
            let end = i == 0 || i + 1 == n;
            if !end && (py - prev < 12.0 || lowest - py < 12.0) {
                continue;
            }
            svg.line(x + BAR_W, py, x + BAR_W + 5.0, py, Stroke::solid(INK, 1.0), "tick");
            let mut text = if self.bands.is_some() { sig4_short(v) } else { sig4(v) };
            for part in [unit, note.as_str()] {
                if !part.is_empty() {
                    text.push(' ');
                    text.push_str(part);
                }
            }
            svg.text(x + BAR_W + 8.0, py + 4.0, &text, 11.0, Anchor::Start, "legend-value");
            prev = py;
        }
        top + height + 16.0
    }
}
