//! A small SVG writer: the map is drawn element by element, with every number written to one
//! decimal of a pixel, so the same drawing gives the same bytes.

use std::fmt::Write as _;

use super::super::FONT;

/// A colour as `#rrggbb`.
pub(super) fn hex((r, g, b): (u8, u8, u8)) -> String {
    format!("#{r:02X}{g:02X}{b:02X}")
}

/// A pixel value to one decimal (never "-0.0").
pub(super) fn px(value: f64) -> String {
    let text = format!("{value:.1}");
    if text == "-0.0" { "0.0".into() } else { text }
}

/// Text escaped for XML character data and attribute values.
pub(super) fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
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

/// Where a text sits relative to its x.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Anchor {
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

/// A line of text: position (x, baseline-centred y), size in pixels, anchor, weight.
#[derive(Debug, Clone, Copy)]
pub(super) struct TextStyle {
    pub size: f64,
    pub anchor: Anchor,
    pub bold: bool,
    pub colour: (u8, u8, u8),
    /// A white outline behind the letters, so that a label stays legible over lines.
    pub halo: bool,
}

impl TextStyle {
    pub fn new(size: f64, anchor: Anchor) -> TextStyle {
        TextStyle { size, anchor, bold: false, colour: (0, 0, 0), halo: false }
    }
}

/// Estimated width in pixels of `text` set in the document's serif face at `size` (about half
/// an em per character, a little more than the face's average, so that estimates err wide).
pub(super) fn text_width(text: &str, size: f64) -> f64 {
    text.chars().count() as f64 * size * 0.5
}

/// The SVG document being written.
pub(super) struct Svg {
    body: String,
}

impl Svg {
    pub fn new() -> Svg {
        Svg { body: String::new() }
    }

    /// Closes the document at the given size.
    pub fn finish(self, width: f64, height: f64) -> String {
        let (w, h) = (px(width), px(height));
        format!(
            "<svg width=\"{w}\" height=\"{h}\" viewBox=\"0 0 {w} {h}\" xmlns=\"http://www.w3.org/2000/svg\">\n<rect x=\"0\" y=\"0\" width=\"{w}\" height=\"{h}\" fill=\"#FFFFFF\" stroke=\"none\"/>\n{}</svg>\n",
            self.body
        )
    }

    pub fn raw(&mut self, element: &str) {
        self.body.push_str(element);
        self.body.push('\n');
    }

    pub fn rect(
        &mut self,
        (x, y): (f64, f64),
        (width, height): (f64, f64),
        fill: &str,
        stroke: &str,
        stroke_width: f64,
    ) {
        self.raw(&format!(
            "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" fill=\"{fill}\" stroke=\"{stroke}\" stroke-width=\"{}\"/>",
            px(x),
            px(y),
            px(width),
            px(height),
            px(stroke_width)
        ));
    }

    pub fn line(&mut self, from: (f64, f64), to: (f64, f64), stroke: &str, stroke_width: f64) {
        self.raw(&format!(
            "<line x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\" stroke=\"{stroke}\" stroke-width=\"{}\"/>",
            px(from.0),
            px(from.1),
            px(to.0),
            px(to.1),
            px(stroke_width)
        ));
    }

    pub fn polyline(&mut self, points: &[(f64, f64)], stroke: &str, stroke_width: f64) {
        let mut list = String::new();
        for (x, y) in points {
            let _ = write!(list, "{},{} ", px(*x), px(*y));
        }
        self.raw(&format!(
            "<polyline points=\"{}\" fill=\"none\" stroke=\"{stroke}\" stroke-width=\"{}\"/>",
            list.trim_end(),
            px(stroke_width)
        ));
    }

    pub fn polygon(&mut self, points: &[(f64, f64)], fill: &str, stroke: &str, stroke_width: f64) {
        let mut list = String::new();
        for (x, y) in points {
            let _ = write!(list, "{},{} ", px(*x), px(*y));
        }
        self.raw(&format!(
            "<polygon points=\"{}\" fill=\"{fill}\" stroke=\"{stroke}\" stroke-width=\"{}\"/>",
            list.trim_end(),
            px(stroke_width)
        ));
    }

    pub fn circle(&mut self, (x, y): (f64, f64), radius: f64, fill: &str, stroke: &str, stroke_width: f64) {
        self.raw(&format!(
            "<circle cx=\"{}\" cy=\"{}\" r=\"{}\" fill=\"{fill}\" stroke=\"{stroke}\" stroke-width=\"{}\"/>",
            px(x),
            px(y),
            px(radius),
            px(stroke_width)
        ));
    }

    pub fn text(&mut self, (x, y): (f64, f64), content: &str, style: TextStyle) {
        let weight = if style.bold { " font-weight=\"bold\"" } else { "" };
        let common = format!(
            "x=\"{}\" y=\"{}\" dy=\"0.35em\" text-anchor=\"{}\" font-family=\"{FONT}\" font-size=\"{}\"{weight}",
            px(x),
            px(y),
            style.anchor.name(),
            px(style.size)
        );
        let content = escape(content);
        if style.halo {
            self.raw(&format!(
                "<text {common} fill=\"#FFFFFF\" stroke=\"#FFFFFF\" stroke-width=\"3.0\" stroke-linejoin=\"round\">{content}</text>"
            ));
        }
        self.raw(&format!("<text {common} fill=\"{}\">{content}</text>", hex(style.colour)));
    }
}
