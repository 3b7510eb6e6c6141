//! SVG to PNG (resvg / tiny-skia) and PDF (svg2pdf), in pure Rust, with DejaVu Sans (shipped
//! in `assets/fonts/` with its licence) loaded explicitly and embedded in the PDF, so text
//! renders the same everywhere without system fonts. Both need the `render` feature (on by
//! default); SVG output never does.

use crate::error::{Error, Result};

/// An output format of a figure.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Format {
    /// The SVG as written.
    Svg,
    /// A raster image at twice the SVG's pixel size (for slides).
    Png,
    /// A vector PDF with the font embedded.
    Pdf,
}

impl Format {
    /// The file extension (`svg`, `png`, `pdf`).
    pub fn extension(self) -> &'static str {
        match self {
            Format::Svg => "svg",
            Format::Png => "png",
            Format::Pdf => "pdf",
        }
    }

    /// Parse a comma-separated list such as `svg,png,pdf` (duplicates dropped, order kept).
    ///
    /// # Errors
    /// [`Error::Unsupported`] for an empty list or an unknown name.
    pub fn parse_list(s: &str) -> Result<Vec<Format>> {
        let mut out = Vec::new();
        for part in s.split(',').map(str::trim).filter(|p| !p.is_empty()) {
            let f = match part.to_ascii_lowercase().as_str() {
                "svg" => Format::Svg,
                "png" => Format::Png,
                "pdf" => Format::Pdf,
                other => {
                    return Err(Error::Unsupported(format!(
                        "figure format `{other}` is not known; use svg, png or pdf (comma-separated, e.g. --format svg,png)"
                    )))
                }
            };
            if !out.contains(&f) {
                out.push(f);
            }
        }
        if out.is_empty() {
            return Err(Error::Unsupported(
                "--format needs at least one of svg, png, pdf".into(),
            ));
        }
        Ok(out)
    }
}

/// The shipped font (DejaVu Sans, Bitstream Vera licence; `assets/fonts/LICENSE-DejaVu.txt`).
pub const FONT: &[u8] = include_bytes!("../../assets/fonts/DejaVuSans.ttf");

/// Scale of the PNG relative to the SVG's pixel size (1.5: a 960 x 680 figure becomes
/// 1440 x 1020 pixels, 144 dpi for an SVG read at 96 dpi: sharp on a slide or a page).
pub const PNG_SCALE: f32 = 1.5;

/// The SVG rendered in `format`: the SVG bytes themselves, a PNG or a PDF.
///
/// # Errors
/// [`Error::Numerical`] (stage `plot`) when the SVG cannot be parsed or rendered;
/// [`Error::Unsupported`] for PNG/PDF in a build without the `render` feature.
pub fn render(svg: &str, format: Format) -> Result<Vec<u8>> {
    match format {
        Format::Svg => Ok(svg.as_bytes().to_vec()),
        Format::Png => imp::png(svg),
        Format::Pdf => imp::pdf(svg),
    }
}

#[cfg(feature = "render")]
mod imp {
    use super::{FONT, PNG_SCALE};
    use crate::error::{Error, Result};
    use resvg::{tiny_skia, usvg};

    fn fail(what: &str, e: impl std::fmt::Display) -> Error {
        Error::Numerical {
            stage: "plot".into(),
            detail: format!("cannot {what}: {e}"),
        }
    }

    fn tree(svg: &str) -> Result<usvg::Tree> {
        let mut opt = usvg::Options {
            font_family: super::super::svg::FONT_FAMILY.into(),
            ..usvg::Options::default()
        };
        opt.fontdb_mut().load_font_data(FONT.to_vec());
        usvg::Tree::from_str(svg, &opt).map_err(|e| fail("parse the SVG", e))
    }

    pub(super) fn png(svg: &str) -> Result<Vec<u8>> {
        let t = tree(svg)?;
        let size = t.size().to_int_size().scale_by(PNG_SCALE);
        let size = size.ok_or_else(|| fail("size the PNG", "zero size"))?;
        let mut pix = tiny_skia::Pixmap::new(size.width(), size.height())
            .ok_or_else(|| fail("allocate the PNG", "zero size"))?;
        pix.fill(tiny_skia::Color::WHITE);
        resvg::render(
            &t,
            tiny_skia::Transform::from_scale(PNG_SCALE, PNG_SCALE),
            &mut pix.as_mut(),
        );
        encode_rgb(&pix).map_err(|e| fail("encode the PNG", e))
    }

    /// The opaque pixmap as an 8-bit RGB PNG (no alpha channel: the background is white) at
    /// the encoder's best compression with adaptive row filters.
    fn encode_rgb(pix: &tiny_skia::Pixmap) -> std::result::Result<Vec<u8>, png::EncodingError> {
        let rgb: Vec<u8> = pix
            .data()
            .chunks_exact(4)
            .flat_map(|p| [p[0], p[1], p[2]])
            .collect();
        let mut out = Vec::new();
        {
            let mut enc = png::Encoder::new(&mut out, pix.width(), pix.height());
            enc.set_color(png::ColorType::Rgb);
            enc.set_depth(png::BitDepth::Eight);
            enc.set_compression(png::Compression::Best);
            enc.set_adaptive_filter(png::AdaptiveFilterType::Adaptive);
            let mut w = enc.write_header()?;
            w.write_image_data(&rgb)?;
            w.finish()?;
        }
        Ok(out)
    }

    pub(super) fn pdf(svg: &str) -> Result<Vec<u8>> {
        let t = tree(svg)?;
        svg2pdf::to_pdf(
            &t,
            svg2pdf::ConversionOptions::default(),
            svg2pdf::PageOptions::default(),
        )
        .map_err(|e| fail("write the PDF", e))
    }
}

#[cfg(not(feature = "render"))]
mod imp {
    use crate::error::{Error, Result};

    fn off(what: &str) -> Error {
        Error::Unsupported(format!(
            "{what} output needs the `render` feature (on by default); rebuild without \
             `--no-default-features`, or use --format svg"
        ))
    }

    pub(super) fn png(_: &str) -> Result<Vec<u8>> {
        Err(off("PNG"))
    }

    pub(super) fn pdf(_: &str) -> Result<Vec<u8>> {
        Err(off("PDF"))
    }
}
