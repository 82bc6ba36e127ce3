//! The legend strip above every figure: entries of a swatch and a label, laid out in rows
//! that wrap at the figure's width. The frame reserves [`Legend::height`] pixels for it.

use super::draw::{line, reticle};
use super::frame::PLOT_LEFT;
use super::style::{self, num, text, text_width, Rgb, FONT_LABEL};

/// Width of a swatch, pixels.
const SWATCH_W: f64 = 22.0;
/// Gap between swatch and label, pixels.
const SWATCH_GAP: f64 = 6.0;
/// Gap after a label, before the next entry, pixels.
const ENTRY_GAP: f64 = 18.0;
/// Height of one legend row, pixels.
const ROW_H: f64 = 18.0;
/// Space above the first row and below the last, pixels (together).
const STRIP_PAD: f64 = 12.0;
/// Right margin the legend keeps free, pixels.
const RIGHT_MARGIN: f64 = 10.0;

/// What a legend entry shows.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum Swatch {
    /// A line of the given colour and width, optionally dashed.
    Line(Rgb, f64, Option<&'static str>),
    /// The coupler plate.
    Plate,
    /// A target reticle.
    Reticle,
    /// A filled square (shaded band).
    Fill(Rgb),
    /// An open ring (marker).
    Ring(Rgb),
}

/// Legend entries in order.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Legend {
    entries: Vec<(Swatch, String)>,
}

impl Legend {
    /// A legend of these entries.
    pub fn new(entries: &[(Swatch, &str)]) -> Self {
        Self {
            entries: entries.iter().map(|(s, l)| (*s, (*l).to_owned())).collect(),
        }
    }

    /// Appends an entry.
    pub fn push(&mut self, swatch: Swatch, label: &str) {
        self.entries.push((swatch, label.to_owned()));
    }

    /// Left edge and row of each entry in a figure `width` pixels wide.
    fn layout(&self, width: u32) -> Vec<(f64, usize)> {
        let right = f64::from(width) - RIGHT_MARGIN;
        let mut x = PLOT_LEFT;
        let mut row = 0;
        let mut out = Vec::with_capacity(self.entries.len());
        for (_, label) in &self.entries {
            let w = SWATCH_W + SWATCH_GAP + text_width(label, FONT_LABEL);
            if x + w > right && x > PLOT_LEFT {
                row += 1;
                x = PLOT_LEFT;
            }
            out.push((x, row));
            x += w + ENTRY_GAP;
        }
        out
    }

    /// Pixels the legend needs above the plots in a figure `width` pixels wide.
    pub fn height(&self, width: u32) -> u32 {
        let rows = self.layout(width).last().map_or(0, |(_, r)| r + 1);
        (STRIP_PAD + ROW_H * rows.max(1) as f64).round() as u32
    }

    /// The legend as a `<g class="legend">` for a figure `width` pixels wide.
    pub fn svg(&self, width: u32) -> String {
        let mut s = String::from(r#"<g class="legend">"#);
        for ((sw, label), (x, row)) in self.entries.iter().zip(self.layout(width)) {
            let y = 0.5 * STRIP_PAD + ROW_H * (row as f64 + 0.5);
            let x1 = x + SWATCH_W;
            s.push_str(&swatch(*sw, x, y));
            s.push_str(&text(
                x1 + SWATCH_GAP,
                y + 0.36 * FONT_LABEL,
                FONT_LABEL,
                "start",
                style::INK,
                label,
            ));
        }
        s.push_str("</g>");
        s
    }
}

/// A swatch whose left edge is at `x` and middle at height `y`, pixels.
fn swatch(sw: Swatch, x: f64, y: f64) -> String {
    let (x0, x1) = (x, x + SWATCH_W);
    let xm = 0.5 * (x0 + x1);
    match sw {
        Swatch::Line(c, w, dash) => {
            let extra = dash
                .map(|d| format!(r#" stroke-dasharray="{d}""#))
                .unwrap_or_default();
            line("swatch", (x0, y), (x1, y), c, w, &extra)
        }
        Swatch::Plate => format!(
            r#"<polygon points="{},{} {},{} {},{}" fill="{c}" fill-opacity="0.16" stroke="{c}" stroke-width="1.4"/>"#,
            num(x0),
            num(y + 5.0),
            num(x1),
            num(y + 5.0),
            num(xm + 3.0),
            num(y - 6.0),
            c = style::COUPLER.hex()
        ),
        Swatch::Reticle => reticle(xm, y, "", style::TARGET),
        Swatch::Fill(c) => format!(
            r#"<rect x="{}" y="{}" width="{}" height="10" fill="{}" stroke="{}" stroke-width="0.8"/>"#,
            num(x0),
            num(y - 5.0),
            num(SWATCH_W),
            c.hex(),
            style::GRID.hex()
        ),
        Swatch::Ring(c) => format!(
            r#"<circle cx="{}" cy="{}" r="4" fill="{}" stroke="{}" stroke-width="1.5"/>"#,
            num(xm),
            num(y),
            style::PAPER.hex(),
            c.hex()
        ),
    }
}

/// A swatch on its own, as a small inline `<svg>` for keys outside a figure (e.g. a legend
/// table in a page); it looks exactly like the swatch of a figure legend.
pub(crate) fn swatch_icon(sw: Swatch) -> String {
    let (w, h) = (SWATCH_W + 6.0, ROW_H);
    format!(
        r#"<svg class="swatch" width="{}" height="{}" viewBox="-3 0 {} {}" xmlns="http://www.w3.org/2000/svg">{}</svg>"#,
        num(w),
        num(h),
        num(w),
        num(h),
        swatch(sw, 0.0, 0.5 * h)
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wraps_into_rows_when_narrow() {
        let l = Legend::new(&[
            (Swatch::Plate, "coupler"),
            (Swatch::Reticle, "target"),
            (Swatch::Ring(style::TARGET), "precision point"),
        ]);
        assert_eq!(l.height(2000), 30);
        assert!(l.height(200) > 30);
        // Every entry stays inside the figure.
        for (x, _) in l.layout(200) {
            assert!(x < 200.0);
        }
    }
}
