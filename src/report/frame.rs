//! Axes, ticks and grid of every figure, drawn by plotters' SVG backend; the figure's own
//! layers are then written by hand on top in pixel coordinates through [`Map`], which
//! reproduces plotters' linear mapping of data to pixels.

use nalgebra::Point2;
use plotters::coord::ranged1d::{DefaultFormatting, KeyPointHint, Ranged};
use plotters::coord::types::RangedCoordf64;
use plotters::prelude::*;

use super::legend::Legend;
use super::style::{self, num, FONT, FONT_LABEL, FONT_TICK};

/// Smallest figure size accepted; smaller requests are enlarged so labels still fit.
pub(crate) const MIN_SIZE: (u32, u32) = (240, 180);
/// Space left of a plot for tick labels and the axis description, pixels.
const Y_LABEL_AREA: u32 = 58;
/// Space below a plot for tick labels and the axis description, pixels.
const X_LABEL_AREA: u32 = 42;
/// Outer margin right and bottom, pixels.
const MARGIN: u32 = 12;
/// Left margin of the figure, pixels.
const LEFT_MARGIN: u32 = 4;
/// Left edge of the plotting area, pixels (the legend aligns with it).
pub(crate) const PLOT_LEFT: f64 = (LEFT_MARGIN + Y_LABEL_AREA) as f64;
/// Gap between stacked panels, pixels.
const PANEL_GAP: u32 = 10;

/// One axis: data range, tick positions and how many decimals the tick labels carry.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Axis {
    /// Data range shown, `lo < hi`.
    pub lo: f64,
    /// Upper end of the range.
    pub hi: f64,
    /// Tick (and grid line) positions.
    pub ticks: Vec<f64>,
    /// Decimals of the tick labels.
    pub decimals: usize,
    /// Axis description, e.g. `x (mm)`.
    pub label: String,
}

impl Axis {
    /// An axis over `[lo, hi]` with ticks every `step`.
    pub fn with_step(lo: f64, hi: f64, step: f64, label: &str) -> Self {
        let (lo, hi) = if hi > lo {
            (lo, hi)
        } else {
            (lo - 0.5, lo + 0.5)
        };
        let step = if step.is_finite() && step > 0.0 {
            step
        } else {
            nice_step(hi - lo, 5)
        };
        let k0 = (lo / step - 1e-9).ceil() as i64;
        let k1 = (hi / step + 1e-9).floor() as i64;
        let ticks = (k0..=k1).map(|k| k as f64 * step).collect();
        Self {
            lo,
            hi,
            ticks,
            decimals: decimals_of(step),
            label: label.to_owned(),
        }
    }

    /// An axis covering `[lo, hi]` widened outwards to whole ticks, about `n` of them.
    pub fn nice(lo: f64, hi: f64, n: usize, label: &str) -> Self {
        let (lo, hi) = if hi - lo > 1e-12 * (lo.abs() + hi.abs()) && hi > lo {
            (lo, hi)
        } else {
            let pad = if lo.abs() > 0.0 { 0.1 * lo.abs() } else { 1.0 };
            (lo - pad, hi + pad)
        };
        Self::covering(lo, hi, nice_step(hi - lo, n), label)
    }

    /// An axis covering `[lo, hi]` widened outwards to whole multiples of `step`.
    pub fn covering(lo: f64, hi: f64, step: f64, label: &str) -> Self {
        Self::with_step(
            (lo / step + 1e-9).floor() * step,
            (hi / step - 1e-9).ceil() * step,
            step,
            label,
        )
    }

    fn ranged(&self) -> Ticked {
        Ticked {
            inner: (self.lo..self.hi).into(),
            ticks: self.ticks.clone(),
        }
    }
}

/// A plotters axis with our own tick positions (bold grid lines and labels only) and
/// plotters' own linear mapping of values to pixels.
struct Ticked {
    inner: RangedCoordf64,
    ticks: Vec<f64>,
}

impl Ranged for Ticked {
    type FormatOption = DefaultFormatting;
    type ValueType = f64;

    fn map(&self, value: &f64, limit: (i32, i32)) -> i32 {
        self.inner.map(value, limit)
    }

    fn key_points<Hint: KeyPointHint>(&self, hint: Hint) -> Vec<f64> {
        if hint.weight().allow_light_points() {
            Vec::new()
        } else {
            self.ticks.clone()
        }
    }

    fn range(&self) -> std::ops::Range<f64> {
        self.inner.range()
    }
}

/// A "nice" tick step (1, 2, 2.5 or 5 times a power of ten) giving about `n` ticks on `span`.
pub(crate) fn nice_step(span: f64, n: usize) -> f64 {
    let raw = span.abs() / n.max(1) as f64;
    if !(raw.is_finite() && raw > 0.0) {
        return 1.0;
    }
    let mag = 10f64.powf(raw.log10().floor());
    let m = raw / mag;
    let nice = if m <= 1.0 {
        1.0
    } else if m <= 2.0 {
        2.0
    } else if m <= 2.5 {
        2.5
    } else if m <= 5.0 {
        5.0
    } else {
        10.0
    };
    nice * mag
}

/// Decimals needed to print multiples of `step` exactly.
fn decimals_of(step: f64) -> usize {
    (0..=9)
        .find(|&d| {
            let s = step * 10f64.powi(d as i32);
            (s - s.round()).abs() < 1e-6 * s.abs().max(1.0)
        })
        .unwrap_or(9)
}

/// One plot panel: its two axes and its share of the figure height.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Panel {
    /// Horizontal axis.
    pub x: Axis,
    /// Vertical axis.
    pub y: Axis,
    /// Whether tick labels and description of the x axis are drawn (off for upper panels
    /// sharing the x axis of the panel below).
    pub x_labels: bool,
    /// Relative height.
    pub weight: f64,
}

/// Linear map from data coordinates of one panel to pixel coordinates of the figure,
/// identical to plotters' own (which sends `lo` to the first pixel of the plotting area and
/// `hi` to the last, y upwards).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Map {
    /// Plotting area in pixels: left, top, right, bottom (inclusive pixel centres).
    pub rect: (f64, f64, f64, f64),
    /// Data range of x.
    pub x: (f64, f64),
    /// Data range of y.
    pub y: (f64, f64),
}

impl Map {
    /// Pixel x of data `x`.
    pub fn px(&self, x: f64) -> f64 {
        self.rect.0 + (x - self.x.0) / (self.x.1 - self.x.0) * (self.rect.2 - self.rect.0)
    }
    /// Pixel y of data `y` (pixels grow downwards).
    pub fn py(&self, y: f64) -> f64 {
        self.rect.3 - (y - self.y.0) / (self.y.1 - self.y.0) * (self.rect.3 - self.rect.1)
    }
    /// Pixel position of a data point.
    pub fn p(&self, p: Point2<f64>) -> (f64, f64) {
        (self.px(p.x), self.py(p.y))
    }
    /// Pixel position formatted as `x,y` for polygon points.
    pub fn pt(&self, p: Point2<f64>) -> String {
        let (x, y) = self.p(p);
        format!("{},{}", num(x), num(y))
    }
    /// Pixels per data unit along x.
    #[cfg(test)]
    pub fn sx(&self) -> f64 {
        (self.rect.2 - self.rect.0) / (self.x.1 - self.x.0)
    }
    /// Pixels per data unit along y.
    #[cfg(test)]
    pub fn sy(&self) -> f64 {
        (self.rect.3 - self.rect.1) / (self.y.1 - self.y.0)
    }
}

/// The figure size actually used for a requested size.
pub(crate) fn clamp_size(size: (u32, u32)) -> (u32, u32) {
    (size.0.max(MIN_SIZE.0), size.1.max(MIN_SIZE.1))
}

/// Draws the frame (paper, grid, axes, tick labels, axis descriptions) of stacked panels
/// with plotters, and the legend above them, and returns the SVG text without its closing
/// `</svg>` tag, and one [`Map`] per panel.
pub(crate) fn frame(size: (u32, u32), legend: &Legend, panels: &[Panel]) -> (String, Vec<Map>) {
    let size = clamp_size(size);
    let top = legend.height(size.0);
    let mut buf = String::new();
    let mut maps = Vec::with_capacity(panels.len());
    {
        let root = SVGBackend::with_string(&mut buf, size).into_drawing_area();
        root.fill(&style::PAPER.plotters())
            .expect("drawing into a String cannot fail");
        let area = root.margin(top, MARGIN, LEFT_MARGIN, MARGIN + 4);
        let (_, h) = area.dim_in_pixel();
        let total: f64 = panels
            .iter()
            .map(|p| p.weight.max(0.0))
            .sum::<f64>()
            .max(1e-9);
        let gaps = PANEL_GAP * panels.len().saturating_sub(1) as u32;
        let free = h.saturating_sub(gaps) as f64;
        let mut breaks = Vec::new();
        let mut acc = 0.0;
        for p in panels.iter().take(panels.len().saturating_sub(1)) {
            acc += free * p.weight.max(0.0) / total;
            breaks.push(acc.round() as i32 + (PANEL_GAP * breaks.len() as u32) as i32);
        }
        let mut rest = area;
        let mut parts = Vec::new();
        let mut offset = 0;
        for b in breaks {
            let (upper, lower) = rest.split_vertically(b - offset);
            parts.push(upper);
            let (_, lower) = lower.split_vertically(PANEL_GAP as i32);
            rest = lower;
            offset = b + PANEL_GAP as i32;
        }
        parts.push(rest);
        let ink = style::INK.plotters();
        for (part, panel) in parts.iter().zip(panels) {
            let mut chart = ChartBuilder::on(part)
                .x_label_area_size(if panel.x_labels { X_LABEL_AREA } else { 0 })
                .y_label_area_size(Y_LABEL_AREA)
                .build_cartesian_2d(panel.x.ranged(), panel.y.ranged())
                .expect("drawing into a String cannot fail");
            let (xd, yd) = (panel.x.decimals, panel.y.decimals);
            let xfmt = move |v: &f64| format!("{:.*}", xd, v + 0.0);
            let yfmt = move |v: &f64| format!("{:.*}", yd, v + 0.0);
            let nofmt = |_: &f64| String::new();
            let tick_font = (FONT, FONT_TICK * 1.24).into_font().color(&ink);
            let desc_font = (FONT, FONT_LABEL * 1.24).into_font().color(&ink);
            let mut mesh = chart.configure_mesh();
            mesh.bold_line_style(style::GRID.plotters().stroke_width(1))
                .light_line_style(TRANSPARENT)
                .axis_style(style::MUTED.plotters().stroke_width(1))
                .label_style(tick_font)
                .axis_desc_style(desc_font)
                .y_desc(panel.y.label.as_str())
                .y_label_formatter(&yfmt);
            if panel.x_labels {
                mesh.x_desc(panel.x.label.as_str()).x_label_formatter(&xfmt);
            } else {
                mesh.x_label_formatter(&nofmt);
            }
            mesh.draw().expect("drawing into a String cannot fail");
            let (xr, yr) = chart.plotting_area().get_pixel_range();
            maps.push(Map {
                rect: (
                    xr.start as f64,
                    yr.start as f64,
                    (xr.end - 1) as f64,
                    (yr.end - 1) as f64,
                ),
                x: (panel.x.lo, panel.x.hi),
                y: (panel.y.lo, panel.y.hi),
            });
        }
        root.present().expect("drawing into a String cannot fail");
    }
    if let Some(i) = buf.rfind("</svg>") {
        buf.truncate(i);
    }
    buf.push_str(&legend.svg(size.0));
    (buf, maps)
}

/// Pixel rectangle of a single panel in a figure of `size` with `legend`, for choosing
/// data ranges before the frame is drawn (equal axis scaling).
pub(crate) fn plot_rect(size: (u32, u32), legend: &Legend) -> (f64, f64, f64, f64) {
    let unit = Axis::with_step(0.0, 1.0, 1.0, "");
    let (_, maps) = frame(
        size,
        legend,
        &[Panel {
            x: unit.clone(),
            y: unit,
            x_labels: true,
            weight: 1.0,
        }],
    );
    maps[0].rect
}

/// Data ranges with equal scaling on both axes that show the box `(min, max)` centred in the
/// pixel rectangle `rect`, with at least `pad` pixels to spare on every side.
pub(crate) fn equal_ranges(
    rect: (f64, f64, f64, f64),
    min: Point2<f64>,
    max: Point2<f64>,
    pad: f64,
) -> ((f64, f64), (f64, f64)) {
    let w = (rect.2 - rect.0).max(1.0);
    let h = (rect.3 - rect.1).max(1.0);
    let dx = (max.x - min.x).max(0.0);
    let dy = (max.y - min.y).max(0.0);
    let span = dx.max(dy);
    let span = if span > 0.0 && span.is_finite() {
        span
    } else {
        1.0
    };
    // Units per pixel: the larger of what each direction needs.
    let upp = (dx / (w - 2.0 * pad).max(1.0))
        .max(dy / (h - 2.0 * pad).max(1.0))
        .max(span * 1e-9);
    let cx = 0.5 * (min.x + max.x);
    let cy = 0.5 * (min.y + max.y);
    (
        (cx - 0.5 * w * upp, cx + 0.5 * w * upp),
        (cy - 0.5 * h * upp, cy + 0.5 * h * upp),
    )
}

/// Closes a figure: appends `layers` and the closing tag to the frame text.
pub(crate) fn finish(mut frame: String, layers: &str) -> String {
    frame.push_str(layers);
    frame.push_str("</svg>\n");
    frame
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn nice_steps() {
        assert_relative_eq!(nice_step(100.0, 5), 20.0, epsilon = 1e-12);
        assert_relative_eq!(nice_step(0.9, 4), 0.25, epsilon = 1e-12);
        assert_relative_eq!(nice_step(360.0, 8), 50.0, epsilon = 1e-12);
        assert_eq!(decimals_of(0.25), 2);
        assert_eq!(decimals_of(50.0), 0);
    }

    #[test]
    fn map_matches_plotters_pixels() {
        // plotters places grid lines by its own mapping; ours must agree to the pixel.
        let panel = Panel {
            x: Axis::with_step(-10.0, 30.0, 10.0, "x"),
            y: Axis::with_step(0.0, 5.0, 1.0, "y"),
            x_labels: true,
            weight: 1.0,
        };
        let (svg, maps) = frame((400, 300), &Legend::new(&[]), &[panel]);
        let m = maps[0];
        assert_relative_eq!(m.px(-10.0), m.rect.0, epsilon = 1e-12);
        assert_relative_eq!(m.py(0.0), m.rect.3, epsilon = 1e-12);
        // The vertical grid line at x = 10 sits at plotters' pixel for 10.
        let x10 = m.px(10.0).floor() as i64;
        assert!(
            svg.contains(&format!("x1=\"{x10}\"")) || svg.contains(&format!("x1=\"{}\"", x10 + 1)),
            "no grid line near pixel {x10}"
        );
    }

    #[test]
    fn equal_ranges_give_one_scale_and_keep_the_box_inside() {
        let rect = (62.0, 30.0, 690.0, 470.0);
        let (lo, hi) = (Point2::new(-3.0, 10.0), Point2::new(40.0, 12.0));
        let (x, y) = equal_ranges(rect, lo, hi, 30.0);
        let m = Map { rect, x, y };
        assert_relative_eq!(m.sx(), m.sy(), max_relative = 1e-12);
        assert!(m.px(lo.x) >= rect.0 + 30.0 - 1e-9 && m.px(hi.x) <= rect.2 - 30.0 + 1e-9);
        assert!(m.py(hi.y) >= rect.1 && m.py(lo.y) <= rect.3);
    }
}
