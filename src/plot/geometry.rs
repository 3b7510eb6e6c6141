//! Geometry read back from an SVG this module wrote: the canvas, the plot area (the data
//! frame, `id="plot-area"`) and the box of every text element, with the checks that no text
//! leaves the canvas or covers the data.

use super::svg::text_width;

/// The box of one text element in pixels (x0 < x1, y0 < y1).
#[derive(Debug, Clone, PartialEq)]
pub struct TextBox {
    /// The text, unescaped.
    pub text: String,
    /// Left edge.
    pub x0: f64,
    /// Top edge.
    pub y0: f64,
    /// Right edge.
    pub x1: f64,
    /// Bottom edge.
    pub y1: f64,
    /// A line label (`class="line-label"`): allowed over the data, never over another text.
    pub line_label: bool,
}

impl TextBox {
    /// Whether the two boxes share more than half a pixel in both directions.
    pub fn overlaps(&self, o: &TextBox) -> bool {
        self.x0 < o.x1 - 0.5 && o.x0 < self.x1 - 0.5 && self.y0 < o.y1 - 0.5 && o.y0 < self.y1 - 0.5
    }
}

fn attr(tag: &str, name: &str) -> Option<String> {
    let key = format!(" {name}=\"");
    let i = tag.find(&key)? + key.len();
    let j = tag[i..].find('"')? + i;
    Some(tag[i..j].to_string())
}

fn num(tag: &str, name: &str) -> Option<f64> {
    attr(tag, name)?.parse().ok()
}

fn unescape(s: &str) -> String {
    s.replace("&lt;", "<")
        .replace("&gt;", ">")
        .replace("&quot;", "\"")
        .replace("&apos;", "'")
        .replace("&amp;", "&")
}

/// Canvas width and height (the root element's `width` and `height`).
pub fn canvas(svg: &str) -> Option<(f64, f64)> {
    let end = svg.find('>')?;
    let root = &svg[..end];
    Some((num(root, "width")?, num(root, "height")?))
}

/// The data frame (x0, y0, x1, y1), from the rectangle with `id="plot-area"`.
pub fn plot_area(svg: &str) -> Option<(f64, f64, f64, f64)> {
    let i = svg.find("id=\"plot-area\"")?;
    let start = svg[..i].rfind('<')?;
    let end = svg[i..].find('>')? + i;
    let tag = &svg[start..end];
    let (x, y) = (num(tag, "x")?, num(tag, "y")?);
    Some((x, y, x + num(tag, "width")?, y + num(tag, "height")?))
}

/// Every text element's box: ascent 0.76 em above the baseline, descent 0.24 em below, the
/// advance from [`text_width`], placed by `text-anchor`, turned for a -90 degree rotation.
pub fn text_boxes(svg: &str) -> Vec<TextBox> {
    let mut out = Vec::new();
    let mut rest = svg;
    while let Some(i) = rest.find("<text ") {
        let Some(close) = rest[i..].find('>') else {
            break;
        };
        let tag = &rest[i..i + close];
        let body_start = i + close + 1;
        let Some(end) = rest[body_start..].find("</text>") else {
            break;
        };
        let text = unescape(&rest[body_start..body_start + end]);
        rest = &rest[body_start + end..];
        let (Some(x), Some(y), Some(size)) = (num(tag, "x"), num(tag, "y"), num(tag, "font-size"))
        else {
            continue;
        };
        let w = text_width(&text, size);
        let (a, b) = match attr(tag, "text-anchor").as_deref() {
            Some("middle") => (-w / 2.0, w / 2.0),
            Some("end") => (-w, 0.0),
            _ => (0.0, w),
        };
        let vertical = attr(tag, "transform").is_some_and(|t| t.starts_with("rotate(-90"));
        let line_label = attr(tag, "class").is_some_and(|c| c == "line-label");
        let tb = if vertical {
            TextBox {
                text,
                x0: x - 0.76 * size,
                x1: x + 0.24 * size,
                y0: y - b,
                y1: y - a,
                line_label,
            }
        } else {
            TextBox {
                text,
                x0: x + a,
                x1: x + b,
                y0: y - 0.76 * size,
                y1: y + 0.24 * size,
                line_label,
            }
        };
        out.push(tb);
    }
    out
}

/// What is wrong with the text layout: texts that leave the canvas, texts other than line
/// labels that overlap the plot area, and line labels that overlap any other text (each as
/// one line naming the text). Empty when the figure is clean.
pub fn problems(svg: &str) -> Vec<String> {
    let mut out = Vec::new();
    let Some((w, h)) = canvas(svg) else {
        return vec!["no canvas size on the root element".into()];
    };
    let frame = plot_area(svg);
    let boxes = text_boxes(svg);
    for (i, t) in boxes.iter().enumerate().filter(|(_, t)| t.line_label) {
        // each pair of labels once, every other text against every label
        let clash = boxes
            .iter()
            .enumerate()
            .filter(|&(j, o)| j != i && (!o.line_label || j > i))
            .find(|&(_, o)| t.overlaps(o));
        if let Some((_, o)) = clash {
            out.push(format!(
                "line label `{}` overlaps the text `{}`",
                t.text, o.text
            ));
        }
    }
    for t in boxes {
        if t.x0 < -0.5 || t.y0 < -0.5 || t.x1 > w + 0.5 || t.y1 > h + 0.5 {
            out.push(format!(
                "text `{}` leaves the {w}x{h} canvas: box ({:.1}, {:.1})-({:.1}, {:.1})",
                t.text, t.x0, t.y0, t.x1, t.y1
            ));
        }
        if let Some((fx0, fy0, fx1, fy1)) = frame.filter(|_| !t.line_label) {
            if t.x0 < fx1 - 0.5 && t.x1 > fx0 + 0.5 && t.y0 < fy1 - 0.5 && t.y1 > fy0 + 0.5 {
                out.push(format!(
                    "text `{}` overlaps the plot area: box ({:.1}, {:.1})-({:.1}, {:.1})",
                    t.text, t.x0, t.y0, t.x1, t.y1
                ));
            }
        }
    }
    out
}
