//! The visual language of crankwright's figures: one calm technical palette, fixed symbol
//! sizes in pixels, and the small helpers every hand-written SVG layer shares.
//!
//! Links are drawn to scale; symbols (pivots, joints, target reticles) have a fixed size on
//! the page so that a small mechanism and a large one read the same way.

/// A colour as 8-bit red, green, blue.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Rgb(pub u8, pub u8, pub u8);

impl Rgb {
    /// CSS/SVG hex form, e.g. `#2c6e91`.
    pub fn hex(self) -> String {
        format!("#{:02x}{:02x}{:02x}", self.0, self.1, self.2)
    }

    /// The same colour for plotters.
    pub(crate) fn plotters(self) -> plotters::style::RGBColor {
        plotters::style::RGBColor(self.0, self.1, self.2)
    }
}

/// Background of every figure (a faint warm white, easier on the eye than pure white).
pub const PAPER: Rgb = Rgb(0xfd, 0xfc, 0xf9);
/// Text, axes and joint outlines.
pub const INK: Rgb = Rgb(0x24, 0x32, 0x40);
/// Secondary text and the ground link centre line.
pub const MUTED: Rgb = Rgb(0x6b, 0x78, 0x84);
/// Grid lines.
pub const GRID: Rgb = Rgb(0xe3, 0xe7, 0xea);
/// Fixed pivots and their ground hatching.
pub const GROUND: Rgb = Rgb(0x4a, 0x55, 0x60);
/// The input link (crank) and crank-angle series.
pub const CRANK: Rgb = Rgb(0x2c, 0x6e, 0x91);
/// The coupler plate A-B-C and coupler-angle series.
pub const COUPLER: Rgb = Rgb(0x2f, 0x8a, 0x74);
/// The output link and output-angle series.
pub const OUTPUT: Rgb = Rgb(0xa0, 0x61, 0x3c);
/// The coupler curve and the coupler point.
pub const CURVE: Rgb = Rgb(0x7b, 0x5e, 0xa7);
/// Targets, precision points and error vectors.
pub const TARGET: Rgb = Rgb(0xc2, 0x41, 0x3b);
/// The generated (achieved) series in function plots and the transmission angle.
pub const GENERATED: Rgb = Rgb(0x2c, 0x6e, 0x91);
/// Shading of the recommended transmission-angle band.
pub const BAND: Rgb = Rgb(0xe2, 0xf0, 0xe6);

/// Font family of all figure text (generic, so no font file is needed).
pub(crate) const FONT: &str = "sans-serif";
/// Tick label size, pixels.
pub(crate) const FONT_TICK: f64 = 11.0;
/// Axis description and legend size, pixels.
pub(crate) const FONT_LABEL: f64 = 12.0;

/// Link stroke width, pixels.
pub(crate) const LINK_WIDTH: f64 = 3.5;
/// Radius of a moving joint, pixels.
pub(crate) const JOINT_R: f64 = 4.0;
/// Radius of a fixed pivot, pixels.
pub(crate) const PIVOT_R: f64 = 5.5;
/// Radius of the coupler point dot, pixels.
pub(crate) const COUPLER_POINT_R: f64 = 3.2;
/// Radius of a target reticle, pixels.
pub(crate) const TARGET_R: f64 = 6.5;
/// Opacity of all but the first position of a linkage.
pub(crate) const FADED: f64 = 0.28;

/// A pixel (or SVG user unit) coordinate with two decimals, trailing zeros dropped and
/// never `-0`.
pub(crate) fn num(v: f64) -> String {
    let s = format!("{v:.2}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".to_owned()
    } else {
        s.to_owned()
    }
}

/// Text escaped for XML character data and attribute values.
pub(crate) fn esc(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            // Control characters are not allowed in XML 1.0.
            c if (c as u32) < 0x20 && !matches!(c, '\t' | '\n' | '\r') => out.push(' '),
            c => out.push(c),
        }
    }
    out
}

/// A `<text>` element at pixel `(x, y)`; `anchor` is `start`, `middle` or `end`.
pub(crate) fn text(x: f64, y: f64, size: f64, anchor: &str, fill: Rgb, body: &str) -> String {
    format!(
        r#"<text x="{}" y="{}" font-family="{FONT}" font-size="{}" text-anchor="{anchor}" fill="{}">{}</text>"#,
        num(x),
        num(y),
        num(size),
        fill.hex(),
        esc(body)
    )
}

/// [`text`] with a halo of paper colour around the glyphs, which keeps a label legible over
/// grid, band and link lines.
pub(crate) fn halo_text(x: f64, y: f64, size: f64, anchor: &str, fill: Rgb, body: &str) -> String {
    text(x, y, size, anchor, fill, body).replacen(
        "<text ",
        &format!(
            r#"<text stroke="{}" stroke-width="3" stroke-linejoin="round" paint-order="stroke" "#,
            PAPER.hex()
        ),
        1,
    )
}

/// A rough width of `s` set at `size` pixels (mean advance of a sans-serif face), used only
/// to space legend entries.
pub(crate) fn text_width(s: &str, size: f64) -> f64 {
    s.chars().count() as f64 * size * 0.56
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_are_short_and_never_negative_zero() {
        assert_eq!(num(12.5), "12.5");
        assert_eq!(num(3.0), "3");
        assert_eq!(num(-0.001), "0");
        assert_eq!(num(-2.346), "-2.35");
    }

    #[test]
    fn escapes_markup() {
        assert_eq!(esc("a<b & \"c\""), "a&lt;b &amp; &quot;c&quot;");
        assert_eq!(Rgb(1, 2, 255).hex(), "#0102ff");
    }
}
