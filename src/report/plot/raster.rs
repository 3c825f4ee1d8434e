//! A pixel canvas for drawings too dense for vector lines: members are
//! stroked into a tiny-skia pixmap (the rasteriser resvg already brings, so
//! no new crate), encoded as PNG and embedded in the SVG as a base64 data
//! URI, so the SVG and the report stay self-contained and their size is set
//! by the pixel count, not by the member count.

use resvg::tiny_skia::{Color, LineCap, Paint, PathBuilder, Pixmap, Stroke, Transform};

/// Pixels per SVG pixel of an embedded raster (2: sharp on a high-density
/// screen and in print at the page width).
pub const OVERSAMPLE: f32 = 2.0;

pub struct Canvas {
    pixmap: Pixmap,
}

impl Canvas {
    /// A white canvas of `w` × `h` SVG pixels (times [`OVERSAMPLE`]).
    pub fn new(w: f64, h: f64) -> Option<Canvas> {
        let px = |v: f64| ((v.max(1.0) as f32) * OVERSAMPLE).round().clamp(1.0, 8192.0) as u32;
        let mut pixmap = Pixmap::new(px(w), px(h))?;
        pixmap.fill(Color::WHITE);
        Some(Canvas { pixmap })
    }

    /// Strokes line segments `[x0, y0, x1, y1]` (SVG pixels) in one colour;
    /// `width` in SVG pixels.
    pub fn lines(&mut self, segments: &[[f64; 4]], rgb: [u8; 3], width: f64) {
        let mut pb = PathBuilder::with_capacity(2 * segments.len(), 2 * segments.len());
        let ok = |v: f64| v.is_finite() && v.abs() < 1e6;
        for s in segments.iter().filter(|s| s.iter().all(|v| ok(*v))) {
            pb.move_to(s[0] as f32 * OVERSAMPLE, s[1] as f32 * OVERSAMPLE);
            pb.line_to(s[2] as f32 * OVERSAMPLE, s[3] as f32 * OVERSAMPLE);
        }
        let Some(path) = pb.finish() else { return };
        let mut paint = Paint::default();
        paint.set_color_rgba8(rgb[0], rgb[1], rgb[2], 255);
        paint.anti_alias = true;
        let stroke = Stroke { width: (width as f32 * OVERSAMPLE).max(1.0), line_cap: LineCap::Round, ..Default::default() };
        self.pixmap.stroke_path(&path, &paint, &stroke, Transform::identity(), None);
    }

    /// PNG bytes of the canvas.
    pub fn png(&self) -> Result<Vec<u8>, String> {
        self.pixmap.encode_png().map_err(|e| format!("PNG encoding failed: {e}"))
    }

    /// A `data:` URI of the canvas as PNG.
    pub fn data_uri(&self) -> Result<String, String> {
        Ok(format!("data:image/png;base64,{}", base64(&self.png()?)))
    }
}

/// Standard base64 (RFC 4648 §4, with padding).
pub fn base64(bytes: &[u8]) -> String {
    const ABC: &[u8; 64] = b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
    let mut out = String::with_capacity(bytes.len().div_ceil(3) * 4);
    for chunk in bytes.chunks(3) {
        let b = [chunk[0], *chunk.get(1).unwrap_or(&0), *chunk.get(2).unwrap_or(&0)];
        let n = (u32::from(b[0]) << 16) | (u32::from(b[1]) << 8) | u32::from(b[2]);
        for k in 0..4 {
            if k <= chunk.len() {
                out.push(ABC[((n >> (18 - 6 * k)) & 63) as usize] as char);
            } else {
                out.push('=');
            }
        }
    }
    out
}

/// Decodes standard base64 (with or without padding); None on a character
/// outside the alphabet.
pub fn unbase64(s: &str) -> Option<Vec<u8>> {
    let val = |c: u8| -> Option<u32> {
        Some(u32::from(match c {
            b'A'..=b'Z' => c - b'A',
            b'a'..=b'z' => c - b'a' + 26,
            b'0'..=b'9' => c - b'0' + 52,
            b'+' => 62,
            b'/' => 63,
            _ => return None,
        }))
    };
    let bytes: Vec<u8> = s.bytes().filter(|c| *c != b'=').collect();
    let mut out = Vec::with_capacity(bytes.len() * 3 / 4);
    for chunk in bytes.chunks(4) {
        let mut n = 0u32;
        for (i, c) in chunk.iter().enumerate() {
            n |= val(*c)? << (18 - 6 * i);
        }
        for k in 0..chunk.len().saturating_sub(1) {
            out.push((n >> (16 - 8 * k)) as u8);
        }
    }
    Some(out)
}

/// The raster images this crate embeds in an SVG (`<image class="raster"
/// …>`): their box (x, y, width, height, in SVG pixels) and PNG bytes.
pub fn embedded(svg: &str) -> Vec<([f32; 4], Vec<u8>)> {
    let attr = |tag: &str, name: &str| -> Option<String> {
        let k = format!(" {name}=\"");
        let i = tag.find(&k)? + k.len();
        Some(tag[i..i + tag[i..].find('"')?].to_string())
    };
    svg.split("<image class=\"raster\"")
        .skip(1)
        .filter_map(|t| {
            let t = &t[..t.find("/>")?];
            let num = |n: &str| attr(t, n)?.parse::<f32>().ok();
            let href = attr(t, "href")?;
            let data = unbase64(href.strip_prefix("data:image/png;base64,")?)?;
            Some(([num("x")?, num("y")?, num("width")?, num("height")?], data))
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn base64_round_trips() {
        for n in 0..40usize {
            let bytes: Vec<u8> = (0..n).map(|i| (i * 37 + 11) as u8).collect();
            assert_eq!(unbase64(&base64(&bytes)).unwrap(), bytes);
        }
        assert!(unbase64("Zm9v!").is_none());
    }

    #[test]
    fn base64_of_the_rfc_4648_test_vectors() {
        // RFC 4648 §10 test vectors.
        for (i, o) in [("", ""), ("f", "Zg=="), ("fo", "Zm8="), ("foo", "Zm9v"), ("foob", "Zm9vYg=="), ("fooba", "Zm9vYmE="), ("foobar", "Zm9vYmFy")] {
            assert_eq!(base64(i.as_bytes()), o);
        }
    }

    #[test]
    fn a_line_marks_pixels() {
        let mut c = Canvas::new(20.0, 10.0).unwrap();
        c.lines(&[[1.0, 5.0, 19.0, 5.0]], [0, 0, 0], 1.0);
        let dark = c.pixmap.pixels().iter().filter(|p| p.red() < 128).count();
        // A 36-pixel line, 2 pixels wide at the oversampling.
        assert!((50..=110).contains(&dark), "{dark} dark pixels");
    }
}
