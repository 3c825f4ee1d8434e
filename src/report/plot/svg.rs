//! A small SVG writer: just the elements the plots need, with every number
//! checked finite and every text escaped, so the output is always well formed.

use std::fmt::Write as _;

/// Dark ink for axes, text and black-and-white line work.
pub const INK: &str = "#222222";
/// Light grey for grid lines and the undeformed shape.
pub const GRID: &str = "#d4d4d4";
pub const MUTED: &str = "#8a8a8a";
pub const PAPER: &str = "#ffffff";
pub const FONT: &str = "Helvetica, Arial, sans-serif";
pub const FONT_SIZE: f64 = 12.0;
pub const TITLE_SIZE: f64 = 15.0;

/// Escapes text for use in element content and attribute values.
pub fn esc(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            // Control characters are not allowed in XML 1.0.
            c if (c as u32) < 0x20 && c != '\t' && c != '\n' && c != '\r' => out.push(' '),
            c => out.push(c),
        }
    }
    out
}

/// A pixel coordinate, forced finite (non-finite values collapse to 0).
fn px(v: f64) -> String {
    let v = if v.is_finite() { v.clamp(-1e6, 1e6) } else { 0.0 };
    format!("{v:.2}")
}

/// Stroke of a line: colour, width and an optional dash pattern.
#[derive(Clone, Copy, Debug)]
pub struct Stroke<'a> {
    pub color: &'a str,
    pub width: f64,
    pub dash: Option<&'a str>,
}

impl<'a> Stroke<'a> {
    pub fn solid(color: &'a str, width: f64) -> Self {
        Stroke { color, width, dash: None }
    }
    pub fn dashed(color: &'a str, width: f64, dash: &'a str) -> Self {
        Stroke { color, width, dash: Some(dash) }
    }
    fn attrs(&self) -> String {
        let mut s = format!(r#"stroke="{}" stroke-width="{}" fill="none""#, esc(self.color), px(self.width));
        if let Some(d) = self.dash {
            let _ = write!(s, r#" stroke-dasharray="{}""#, esc(d));
        }
        s
    }
}

/// Text anchor.
#[derive(Clone, Copy, Debug)]
pub enum Anchor {
    Start,
    Middle,
    End,
}

impl Anchor {
    fn name(self) -> &'static str {
        match self {
            Anchor::Start => "start",
            Anchor::Middle => "middle",
            Anchor::End => "end",
        }
    }
}

/// Marker shapes, told apart without colour.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Shape {
    Circle,
    Square,
    TriangleUp,
    Diamond,
    TriangleDown,
    Cross,
}

pub const SHAPES: [Shape; 6] =
    [Shape::Circle, Shape::Square, Shape::TriangleUp, Shape::Diamond, Shape::TriangleDown, Shape::Cross];

pub struct Svg {
    buf: String,
    pub width: f64,
}

impl Svg {
    pub fn new(width: f64, height: f64) -> Svg {
        let mut buf = String::new();
        let _ = write!(
            buf,
            r#"<svg xmlns="http://www.w3.org/2000/svg" width="{w}" height="{h}" viewBox="0 0 {w} {h}" font-family="{FONT}" font-size="{FONT_SIZE}">"#,
            w = px(width),
            h = px(height)
        );
        buf.push('\n');
        let _ = writeln!(buf, r#"<rect x="0" y="0" width="{}" height="{}" fill="{PAPER}"/>"#, px(width), px(height));
        Svg { buf, width }
    }

    pub fn finish(mut self) -> String {
        self.buf.push_str("</svg>\n");
        self.buf
    }

    pub fn open_group(&mut self, class: &str) {
        let _ = writeln!(self.buf, r#"<g class="{}">"#, esc(class));
    }

    /// A group whose filled shapes are drawn with crisp edges (no
    /// anti-aliased seams between abutting cells).
    pub fn open_crisp_group(&mut self, class: &str) {
        let _ = writeln!(self.buf, r#"<g class="{}" shape-rendering="crispEdges">"#, esc(class));
    }

    pub fn close_group(&mut self) {
        self.buf.push_str("</g>\n");
    }

    pub fn line(&mut self, x1: f64, y1: f64, x2: f64, y2: f64, stroke: Stroke, class: &str) {
        let _ = writeln!(
            self.buf,
            r#"<line class="{}" x1="{}" y1="{}" x2="{}" y2="{}" {}/>"#,
            esc(class),
            px(x1),
            px(y1),
            px(x2),
            px(y2),
            stroke.attrs()
        );
    }

    pub fn polyline(&mut self, pts: &[(f64, f64)], stroke: Stroke, class: &str) {
        if pts.len() < 2 {
            return;
        }
        let list: Vec<String> = pts.iter().map(|(x, y)| format!("{},{}", px(*x), px(*y))).collect();
        let _ = writeln!(
            self.buf,
            r#"<polyline class="{}" points="{}" {} stroke-linejoin="round"/>"#,
            esc(class),
            list.join(" "),
            stroke.attrs()
        );
    }

    // A drawing primitive takes its geometry and style as plain values:
    // a struct for them would be built once per call and read once.
    #[allow(clippy::too_many_arguments)]
    pub fn rect(&mut self, x: f64, y: f64, w: f64, h: f64, fill: &str, stroke: Option<Stroke>, class: &str) {
        let st = stroke.map(|s| s.attrs().replace(r#" fill="none""#, "")).unwrap_or_else(|| r#"stroke="none""#.into());
        let _ = writeln!(
            self.buf,
            r#"<rect class="{}" x="{}" y="{}" width="{}" height="{}" fill="{}" {}/>"#,
            esc(class),
            px(x),
            px(y),
            px(w.max(0.0)),
            px(h.max(0.0)),
            esc(fill),
            st
        );
    }

    pub fn text(&mut self, x: f64, y: f64, s: &str, size: f64, anchor: Anchor, class: &str) {
        let _ = writeln!(
            self.buf,
            r#"<text class="{}" x="{}" y="{}" font-size="{}" text-anchor="{}" fill="{INK}">{}</text>"#,
            esc(class),
            px(x),
            px(y),
            px(size),
            anchor.name(),
            esc(s)
        );
    }

    /// Text with a paper-coloured halo, legible over lines and markers.
    pub fn text_halo(&mut self, x: f64, y: f64, s: &str, size: f64, anchor: Anchor, class: &str) {
        let _ = writeln!(
            self.buf,
            r#"<text class="{}" x="{}" y="{}" font-size="{}" text-anchor="{}" fill="{INK}" stroke="{PAPER}" stroke-width="4" stroke-linejoin="round" paint-order="stroke">{}</text>"#,
            esc(class),
            px(x),
            px(y),
            px(size),
            anchor.name(),
            esc(s)
        );
    }

    /// Text turned 90° anticlockwise about its anchor (for a y-axis label).
    pub fn text_vertical(&mut self, x: f64, y: f64, s: &str, size: f64, class: &str) {
        let _ = writeln!(
            self.buf,
            r#"<text class="{}" x="0" y="0" font-size="{}" text-anchor="middle" fill="{INK}" transform="translate({},{}) rotate(-90)">{}</text>"#,
            esc(class),
            px(size),
            px(x),
            px(y),
            esc(s)
        );
    }

    /// A marker centred on (x, y), `r` its half size; hollow markers are
    /// filled with paper colour so they read as open shapes in print.
    // A drawing primitive takes its geometry and style as plain values:
    // a struct for them would be built once per call and read once.
    #[allow(clippy::too_many_arguments)]
    pub fn marker(&mut self, shape: Shape, x: f64, y: f64, r: f64, color: &str, filled: bool, class: &str) {
        let fill = if filled { color } else { PAPER };
        let common = format!(
            r#"class="{}" fill="{}" stroke="{}" stroke-width="1.3""#,
            esc(class),
            esc(fill),
            esc(color)
        );
        let poly = |pts: &[(f64, f64)]| -> String {
            pts.iter().map(|(a, b)| format!("{},{}", px(x + a), px(y + b))).collect::<Vec<_>>().join(" ")
        };
        let el = match shape {
            Shape::Circle => format!(r#"<circle {common} cx="{}" cy="{}" r="{}"/>"#, px(x), px(y), px(r)),
            Shape::Square => format!(
                r#"<rect {common} x="{}" y="{}" width="{}" height="{}"/>"#,
                px(x - 0.85 * r),
                px(y - 0.85 * r),
                px(1.7 * r),
                px(1.7 * r)
            ),
            Shape::TriangleUp => {
                format!(r#"<polygon {common} points="{}"/>"#, poly(&[(0.0, -r * 1.1), (r, r * 0.8), (-r, r * 0.8)]))
            }
            Shape::TriangleDown => {
                format!(r#"<polygon {common} points="{}"/>"#, poly(&[(0.0, r * 1.1), (r, -r * 0.8), (-r, -r * 0.8)]))
            }
            Shape::Diamond => {
                format!(r#"<polygon {common} points="{}"/>"#, poly(&[(0.0, -r * 1.2), (r, 0.0), (0.0, r * 1.2), (-r, 0.0)]))
            }
            Shape::Cross => {
                let k = 0.35 * r;
                format!(
                    r#"<polygon {common} points="{}"/>"#,
                    poly(&[
                        (-k, -r),
                        (k, -r),
                        (k, -k),
                        (r, -k),
                        (r, k),
                        (k, k),
                        (k, r),
                        (-k, r),
                        (-k, k),
                        (-r, k),
                        (-r, -k),
                        (-k, -k)
                    ])
                )
            }
        };
        self.buf.push_str(&el);
        self.buf.push('\n');
    }
}

impl Svg {
    /// An embedded raster image (a `data:` URI) stretched over the box.
    pub fn image(&mut self, x: f64, y: f64, w: f64, h: f64, data_uri: &str, class: &str) {
        let _ = writeln!(
            self.buf,
            r#"<image class="{}" x="{}" y="{}" width="{}" height="{}" preserveAspectRatio="none" href="{}"/>"#,
            esc(class),
            px(x),
            px(y),
            px(w.max(0.0)),
            px(h.max(0.0)),
            esc(data_uri)
        );
    }
}
