//! A small SVG writer with `f64` coordinates (two decimals), so lines are smooth and every
//! element's geometry can be read back by [`super::geometry`].

use std::fmt::Write as _;

/// The font family every figure names; [`mod@super::render`] loads this font from
/// `assets/fonts/` before rasterising, so no system font is ever needed.
pub const FONT_FAMILY: &str = "DejaVu Sans";

/// Horizontal anchor of a text element (SVG `text-anchor`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Anchor {
    /// The text starts at x.
    Start,
    /// The text is centred on x.
    Middle,
    /// The text ends at x.
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

/// An RGB colour.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Rgb(pub u8, pub u8, pub u8);

impl Rgb {
    /// `#rrggbb`.
    pub fn hex(self) -> String {
        format!("#{:02x}{:02x}{:02x}", self.0, self.1, self.2)
    }
}

/// Escape the five XML special characters.
pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            c => out.push(c),
        }
    }
    out
}

/// Line style of a path.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Pen {
    pub colour: Rgb,
    pub width: f64,
    pub opacity: f64,
    /// Dash pattern (on, off) in pixels; `None` for a solid line.
    pub dash: Option<(f64, f64)>,
}

/// The document being written.
pub(crate) struct Svg {
    buf: String,
}

impl Svg {
    /// A white canvas of `w` x `h` pixels.
    pub fn new(w: f64, h: f64) -> Self {
        let mut buf = String::new();
        let _ = write!(
            buf,
            "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{w:.0}\" height=\"{h:.0}\" \
             viewBox=\"0 0 {w:.0} {h:.0}\" font-family=\"{FONT_FAMILY}\">\n\
             <rect x=\"0\" y=\"0\" width=\"{w:.0}\" height=\"{h:.0}\" fill=\"#ffffff\"/>\n"
        );
        Svg { buf }
    }

    /// Open a group with an id (tests find the colour bar, legend and plot area by id).
    pub fn group(&mut self, id: &str) {
        let _ = writeln!(self.buf, "<g id=\"{}\">", escape(id));
    }

    /// Close the last group.
    pub fn end_group(&mut self) {
        self.buf.push_str("</g>\n");
    }

    /// A rectangle; `stroke` draws its outline.
    #[allow(clippy::too_many_arguments)]
    pub fn rect(
        &mut self,
        id: Option<&str>,
        (x, y, w, h): (f64, f64, f64, f64),
        fill: Option<Rgb>,
        stroke: Option<Rgb>,
    ) {
        let id = id.map(|i| format!(" id=\"{i}\"")).unwrap_or_default();
        let fill = fill.map(Rgb::hex).unwrap_or_else(|| "none".into());
        let stroke = stroke
            .map(|s| format!(" stroke=\"{}\" stroke-width=\"1\"", s.hex()))
            .unwrap_or_default();
        let _ = writeln!(
            self.buf,
            "<rect{id} x=\"{x:.2}\" y=\"{y:.2}\" width=\"{w:.2}\" height=\"{h:.2}\" fill=\"{fill}\"{stroke}/>"
        );
    }

    /// An open polyline through `pts` (pixel coordinates).
    pub fn path(&mut self, pts: &[(f64, f64)], pen: Pen) {
        if pts.len() < 2 {
            return;
        }
        let mut d = String::with_capacity(16 * pts.len());
        for (i, (x, y)) in pts.iter().enumerate() {
            let _ = write!(d, "{}{x:.2} {y:.2}", if i == 0 { "M" } else { " L" });
        }
        let dash = pen
            .dash
            .map(|(a, b)| format!(" stroke-dasharray=\"{a:.1} {b:.1}\""))
            .unwrap_or_default();
        let op = if pen.opacity < 1.0 {
            format!(" stroke-opacity=\"{:.3}\"", pen.opacity)
        } else {
            String::new()
        };
        let _ = writeln!(
            self.buf,
            "<path d=\"{d}\" fill=\"none\" stroke=\"{}\" stroke-width=\"{:.2}\"{dash}{op} \
             stroke-linejoin=\"round\" stroke-linecap=\"round\"/>",
            pen.colour.hex(),
            pen.width
        );
    }

    /// A filled circle.
    pub fn dot(&mut self, (x, y): (f64, f64), r: f64, colour: Rgb) {
        let _ = writeln!(
            self.buf,
            "<circle cx=\"{x:.2}\" cy=\"{y:.2}\" r=\"{r:.2}\" fill=\"{}\"/>",
            colour.hex()
        );
    }

    /// A text element; `vertical` rotates it by -90 degrees about (x, y) (a y-axis label).
    #[allow(clippy::too_many_arguments)]
    pub fn text(
        &mut self,
        (x, y): (f64, f64),
        size: f64,
        anchor: Anchor,
        colour: Rgb,
        s: &str,
        vertical: bool,
    ) {
        let rot = if vertical {
            format!(" transform=\"rotate(-90 {x:.2} {y:.2})\"")
        } else {
            String::new()
        };
        let _ = writeln!(
            self.buf,
            "<text x=\"{x:.2}\" y=\"{y:.2}\" font-size=\"{size:.1}\" text-anchor=\"{}\" fill=\"{}\"{rot}>{}</text>",
            anchor.name(),
            colour.hex(),
            escape(s)
        );
    }

    /// A line label (`class="line-label"`, the only text allowed over the data: the geometry
    /// checks ([`super::geometry`]) require that no two of them overlap).
    pub fn line_label(
        &mut self,
        (x, y): (f64, f64),
        size: f64,
        anchor: Anchor,
        colour: Rgb,
        s: &str,
    ) {
        let _ = writeln!(
            self.buf,
            "<text class=\"line-label\" x=\"{x:.2}\" y=\"{y:.2}\" font-size=\"{size:.1}\" text-anchor=\"{}\" fill=\"{}\">{}</text>",
            anchor.name(),
            colour.hex(),
            escape(s)
        );
    }

    /// The finished document.
    pub fn finish(mut self) -> String {
        self.buf.push_str("</svg>\n");
        self.buf
    }
}

/// The shipped font's advance widths in em (advance / units per em): the first 128 code
/// points in a table, read once from `assets/fonts/DejaVuSans.ttf` with ttf-parser.
struct Metrics {
    face: Option<ttf_parser::Face<'static>>,
    ascii: [f64; 128],
}

fn metrics() -> &'static Metrics {
    static M: std::sync::OnceLock<Metrics> = std::sync::OnceLock::new();
    M.get_or_init(|| {
        let face = ttf_parser::Face::parse(super::render::FONT, 0).ok();
        let mut ascii = [FALLBACK_EM; 128];
        if let Some(f) = &face {
            for (c, w) in ascii.iter_mut().enumerate() {
                if let Some(a) = char::from_u32(c as u32).and_then(|ch| advance_em(f, ch)) {
                    *w = a;
                }
            }
        }
        Metrics { face, ascii }
    })
}

/// Width used for a glyph the font lacks (its `.notdef` box is about this wide).
const FALLBACK_EM: f64 = 0.6;

fn advance_em(f: &ttf_parser::Face<'_>, c: char) -> Option<f64> {
    let upem = f64::from(f.units_per_em());
    let g = f.glyph_index(c)?;
    f.glyph_hor_advance(g).map(|a| f64::from(a) / upem)
}

/// Advance width of `s` in pixels at font size `size`: the sum of the glyph advances of the
/// shipped font (DejaVu Sans, read with ttf-parser and cached), the width the renderers lay the
/// text out with before kerning (DejaVu's kerning pairs only tighten text, so this is never
/// narrower than the drawn text). Layout and the geometry checks both use it.
pub fn text_width(s: &str, size: f64) -> f64 {
    let m = metrics();
    let em: f64 = s
        .chars()
        .map(|c| {
            let i = c as usize;
            if i < 128 {
                m.ascii[i]
            } else {
                m.face
                    .as_ref()
                    .and_then(|f| advance_em(f, c))
                    .unwrap_or(FALLBACK_EM)
            }
        })
        .sum();
    em * size
}
