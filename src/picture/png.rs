//! PNG encoding: the indexed raster embedded in the SVG, and the whole map
//! rasterised from its SVG with resvg and a bundled font, so the picture is
//! the same on every machine.

use std::sync::Arc;

/// An error rasterising a map (a bug if it ever happens: the SVG is ours).
#[derive(Debug, thiserror::Error)]
pub enum PictureError {
    /// The SVG did not parse.
    #[error("field map SVG did not parse: {0}")]
    Parse(String),
    /// The picture has no pixels or is too large.
    #[error("field map of {0}×{1} px cannot be rasterised")]
    Size(u32, u32),
    /// PNG encoding failed.
    #[error("PNG encoding failed: {0}")]
    Encode(String),
}

/// Encodes an 8-bit indexed image; index 0 is fully transparent.
pub fn indexed(width: usize, height: usize, index: &[u8], palette: &[[u8; 3]]) -> Vec<u8> {
    let mut out = Vec::new();
    {
        let mut enc = ::png::Encoder::new(&mut out, width as u32, height as u32);
        enc.set_color(::png::ColorType::Indexed);
        enc.set_depth(::png::BitDepth::Eight);
        enc.set_palette(palette.iter().flatten().copied().collect::<Vec<u8>>());
        enc.set_trns(vec![0u8]);
        enc.set_compression(::png::Compression::High);
        // Writing into a Vec cannot fail for a well-formed header; an error
        // leaves an empty image that the SVG shows as the grey underlay.
        if let Ok(mut w) = enc.write_header() {
            let _ = w.write_image_data(index);
        }
    }
    out
}

/// Rasterises an SVG at `zoom` times its size with the bundled font.
pub fn render(svg: &str, zoom: f32) -> Result<Vec<u8>, PictureError> {
    let mut fonts = resvg::usvg::fontdb::Database::new();
    fonts.load_font_data(epaint_default_fonts::UBUNTU_LIGHT.to_vec());
    fonts.set_sans_serif_family("Ubuntu");
    let options = resvg::usvg::Options { fontdb: Arc::new(fonts), ..Default::default() };
    let tree = resvg::usvg::Tree::from_str(svg, &options).map_err(|e| PictureError::Parse(e.to_string()))?;
    let size = tree.size().to_int_size().scale_by(zoom).ok_or(PictureError::Size(0, 0))?;
    let mut pixmap = resvg::tiny_skia::Pixmap::new(size.width(), size.height())
        .ok_or(PictureError::Size(size.width(), size.height()))?;
    resvg::render(&tree, resvg::tiny_skia::Transform::from_scale(zoom, zoom), &mut pixmap.as_mut());
    pixmap.encode_png().map_err(|e| PictureError::Encode(e.to_string()))
}
