//! SVG to PNG in-process: resvg parses and rasterises, tiny-skia encodes. The font comes from
//! bytes compiled into the binary, so no system font, program or display is needed, and the
//! PNG looks the same on every machine.

use std::sync::{Arc, OnceLock};

use resvg::tiny_skia::{Pixmap, Transform};
use resvg::usvg::{self, fontdb};

use crate::{FigureError, MAX_SIZE};

/// The font database shared by every rasterisation: the bundled sans-serif, registered as
/// the generic `sans-serif` family too.
fn fonts() -> &'static (Arc<fontdb::Database>, String) {
    static FONTS: OnceLock<(Arc<fontdb::Database>, String)> = OnceLock::new();
    FONTS.get_or_init(|| {
        let mut db = fontdb::Database::new();
        db.load_font_data(epaint_default_fonts::UBUNTU_LIGHT.to_vec());
        let family = db
            .faces()
            .next()
            .and_then(|f| f.families.first())
            .map(|(name, _)| name.clone())
            .unwrap_or_else(|| "Ubuntu".to_owned());
        db.set_sans_serif_family(family.clone());
        (Arc::new(db), family)
    })
}

/// The SVG as resvg reads it, text laid out in the bundled font.
pub fn parse(svg: &str) -> Result<usvg::Tree, FigureError> {
    let (db, family) = fonts();
    let opt = usvg::Options {
        fontdb: Arc::clone(db),
        font_family: family.clone(),
        ..usvg::Options::default()
    };
    usvg::Tree::from_str(svg, &opt).map_err(|e| FigureError::Parse(e.to_string()))
}

/// Checks a raster size.
pub fn check_size(width: u32, height: u32) -> Result<(), FigureError> {
    if width == 0 || height == 0 || width > MAX_SIZE || height > MAX_SIZE {
        return Err(FigureError::BadSize { width, height });
    }
    Ok(())
}

/// A figure as a `width`×`height` PNG: the size is checked before `svg` is asked to draw it.
pub fn figure_png(
    width: u32,
    height: u32,
    svg: impl FnOnce() -> String,
) -> Result<Vec<u8>, FigureError> {
    check_size(width, height)?;
    svg_to_png(&svg(), width, height)
}

/// Rasterises `svg` to a `width`×`height` PNG on white; see [`crate::svg_to_png`].
pub fn svg_to_png(svg: &str, width: u32, height: u32) -> Result<Vec<u8>, FigureError> {
    check_size(width, height)?;
    let tree = parse(svg)?;
    let mut pixmap = Pixmap::new(width, height).ok_or(FigureError::BadSize { width, height })?;
    pixmap.fill(resvg::tiny_skia::Color::WHITE);
    let size = tree.size();
    let transform =
        Transform::from_scale(width as f32 / size.width(), height as f32 / size.height());
    resvg::render(&tree, transform, &mut pixmap.as_mut());
    pixmap
        .encode_png()
        .map_err(|e| FigureError::Encode(e.to_string()))
}
