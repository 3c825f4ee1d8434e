//! PNG copies of the SVG plots, rasterised by resvg with an embedded
//! open-licence font (DejaVu Sans, licence in assets/fonts/), so text renders
//! the same on a machine without system fonts.

use resvg::{tiny_skia, usvg};

/// DejaVu Sans (Bitstream Vera licence, see assets/fonts/LICENSE-DejaVu.txt).
const FONT: &[u8] = include_bytes!("../../assets/fonts/DejaVuSans.ttf");
const FONT_FAMILY: &str = "DejaVu Sans";

/// Rasterises one of this crate's SVG plots at its own pixel size.
pub fn svg_to_png(svg: &str) -> Result<Vec<u8>, String> {
    let mut opt = usvg::Options { font_family: FONT_FAMILY.into(), ..Default::default() };
    {
        let db = opt.fontdb_mut();
        db.load_font_data(FONT.to_vec());
        // Every family the plots name falls back to the embedded font.
        db.set_sans_serif_family(FONT_FAMILY);
        db.set_serif_family(FONT_FAMILY);
        db.set_monospace_family(FONT_FAMILY);
    }
    let tree = usvg::Tree::from_str(svg, &opt).map_err(|e| format!("the SVG does not parse: {e}"))?;
    let size = tree.size().to_int_size();
    let mut pixmap = tiny_skia::Pixmap::new(size.width(), size.height()).ok_or("the plot has no area")?;
    resvg::render(&tree, tiny_skia::Transform::default(), &mut pixmap.as_mut());
    // resvg is built without its raster-image decoders (they would bring
    // more crates); the raster panels the plots embed are PNGs that
    // tiny-skia decodes itself, so they are drawn here, on top.
    for ([x, y, w, h], data) in crate::report::plot::raster::embedded(svg) {
        let Ok(img) = tiny_skia::Pixmap::decode_png(&data) else { continue };
        let (sx, sy) = (w / img.width() as f32, h / img.height() as f32);
        let paint = tiny_skia::PixmapPaint { quality: tiny_skia::FilterQuality::Bilinear, ..Default::default() };
        pixmap.draw_pixmap(0, 0, img.as_ref(), &paint, tiny_skia::Transform::from_row(sx, 0.0, 0.0, sy, x, y), None);
    }
    pixmap.encode_png().map_err(|e| format!("PNG encoding failed: {e}"))
}
