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
    pixmap.encode_png().map_err(|e| format!("PNG encoding failed: {e}"))
}
