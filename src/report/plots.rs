//! Line plots against the crank angle or the task's input variable: link angles and
//! transmission angle ([`angle_plot`]), function generation ([`function_plot`],
//! [`error_plot`]). Frames come from plotters; series are hand-written `<path>`s with
//! `class` names (`series theta3`, `band`, `target-mark`, ...). No I/O, no `id`s.

use super::draw::line;
use super::frame::{self, finish, Axis, Map, Panel};
use super::legend::{Legend, Swatch};
use super::style::{self, num, text, Rgb, FONT_TICK};

/// Lower edge of the shaded transmission-angle band, degrees (common practice, no source).
pub const MU_BAND_LOW: f64 = 40.0;
/// Upper edge of the shaded transmission-angle band, degrees (common practice, no source).
pub const MU_BAND_HIGH: f64 = 140.0;

/// Crank angle jump (degrees) between neighbouring samples above which a series is broken.
const GAP_DEG: f64 = 20.0;
/// Jump of a plotted angle (degrees) between neighbouring samples taken as a wrap-around.
const WRAP_DEG: f64 = 180.0;

/// One sample of the link angles over the motion, all in degrees.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct AngleSample {
    /// Crank angle from the ground line `O2 -> O4` (`theta2 - theta1`).
    pub crank: f64,
    /// Coupler angle `theta3` (global).
    pub theta3: f64,
    /// Output link angle `theta4` (global).
    pub theta4: f64,
    /// Transmission angle `mu`, `[0, 180]`.
    pub mu: f64,
}

/// A polyline through `(xs[i], ys[i])`, broken at non-finite values, at crank gaps larger
/// than `gap` and at jumps of `y` larger than `wrap`; returns the path data.
fn path_data(map: &Map, pts: impl IntoIterator<Item = (f64, f64)>, gap: f64, wrap: f64) -> String {
    let mut d = String::new();
    let mut prev: Option<(f64, f64)> = None;
    for (x, y) in pts {
        if !(x.is_finite() && y.is_finite()) {
            prev = None;
            continue;
        }
        let cont = prev.is_some_and(|(px, py)| (x - px).abs() <= gap && (y - py).abs() <= wrap);
        d.push_str(if cont { " L" } else { " M" });
        d.push_str(&format!("{},{}", num(map.px(x)), num(map.py(y))));
        prev = Some((x, y));
    }
    d.trim_start().to_owned()
}

fn path(class: &str, d: &str, colour: Rgb, width: f64, dash: Option<&str>) -> String {
    let dash = dash
        .map(|v| format!(r#" stroke-dasharray="{v}""#))
        .unwrap_or_default();
    format!(
        r#"<path class="{class}" d="{d}" fill="none" stroke="{}" stroke-width="{}" stroke-linejoin="round"{dash}/>"#,
        colour.hex(),
        num(width)
    )
}

fn ring(class: &str, x: f64, y: f64, colour: Rgb) -> String {
    format!(
        r#"<circle class="{class}" cx="{}" cy="{}" r="3.6" fill="{}" stroke="{}" stroke-width="1.5"/>"#,
        num(x),
        num(y),
        style::PAPER.hex(),
        colour.hex()
    )
}

/// A tick step for an angle axis (degrees) giving at most about `n` ticks.
fn angle_step(span: f64, n: usize) -> f64 {
    [1.0, 2.0, 5.0, 10.0, 15.0, 30.0, 45.0, 60.0, 90.0, 180.0]
        .into_iter()
        .find(|s| span / s <= n as f64)
        .unwrap_or(360.0)
}

/// An angle axis covering `[lo, hi]` widened to whole ticks.
fn angle_axis(lo: f64, hi: f64, n: usize, label: &str) -> Axis {
    let (lo, hi) = if hi > lo {
        (lo, hi)
    } else {
        (lo - 5.0, hi + 5.0)
    };
    Axis::covering(lo, hi, angle_step(hi - lo, n), label)
}

/// Finite `(min, max)` of the values, `None` if there are none.
fn extent(values: impl IntoIterator<Item = f64>) -> Option<(f64, f64)> {
    values
        .into_iter()
        .filter(|v| v.is_finite())
        .fold(None, |acc, v| match acc {
            None => Some((v, v)),
            Some((lo, hi)) => Some((lo.min(v), hi.max(v))),
        })
}

/// Linear interpolation of `f` (a field of the samples) at crank angle `x` on a branch whose
/// samples are in increasing crank order; `None` outside the branch or across a gap.
fn interpolate(branch: &[AngleSample], x: f64, f: impl Fn(&AngleSample) -> f64) -> Option<f64> {
    branch.windows(2).find_map(|w| {
        let (a, b) = (&w[0], &w[1]);
        let (fa, fb) = (f(a), f(b));
        if (b.crank - a.crank).abs() > GAP_DEG || (fb - fa).abs() > WRAP_DEG {
            return None;
        }
        lerp_on((a.crank, fa), (b.crank, fb), x)
    })
}

/// Linear interpolation at `x` on the segment `p-q`; `None` when `x` is not over the
/// segment or an end is not finite.
fn lerp_on(p: (f64, f64), q: (f64, f64), x: f64) -> Option<f64> {
    let inside = (p.0 <= x && x <= q.0) || (q.0 <= x && x <= p.0);
    if !(inside && p.1.is_finite() && q.1.is_finite()) {
        return None;
    }
    let dx = q.0 - p.0;
    let t = if dx.abs() > 0.0 { (x - p.0) / dx } else { 0.0 };
    Some(p.1 + t * (q.1 - p.1))
}

/// `x` moved by whole turns into `[lo, hi]` if possible, else unchanged.
fn into_range(x: f64, lo: f64, hi: f64) -> f64 {
    (-2..=2)
        .map(|k| x + 360.0 * f64::from(k))
        .find(|v| *v >= lo - 1e-9 && *v <= hi + 1e-9)
        .unwrap_or(x)
}

/// Link angles against crank angle: `theta3` and `theta4` in the upper panel, the
/// transmission angle `mu` in the lower panel over the shaded 40..140 degree band (common
/// practice, no source), the worst transmission quality `min(mu, 180 - mu)` labelled: over
/// everything plotted when a branch turns fully, and between the first and last target
/// when every branch rocks (its ends are toggles, where the quality is nil by definition).
///
/// `branches`: one sample list per branch, each in crank order; a series is broken between
/// branches, across crank gaps over 20 degrees and where a plotted angle jumps by more than
/// 180 degrees (a wrap-around), so positions where the linkage cannot assemble stay blank.
/// `target_cranks`: crank angles from the ground line (degrees) of the targets, marked and
/// numbered from 1 (moved by whole turns into the plotted range when needed).
pub fn angle_plot(
    branches: &[Vec<AngleSample>],
    target_cranks: &[f64],
    size: (u32, u32),
) -> String {
    angle_plot_over(branches, target_cranks, None, size)
}

/// [`angle_plot`] with the working motion of a rocking input given explicitly as a crank
/// range `(from, to)` in degrees (function generation works over the whole x range, which
/// reaches beyond its precision points); `None` takes the first to the last target.
pub fn angle_plot_over(
    branches: &[Vec<AngleSample>],
    target_cranks: &[f64],
    working: Option<(f64, f64)>,
    size: (u32, u32),
) -> String {
    let all = || branches.iter().flatten();
    let (x_lo, x_hi) = extent(all().map(|s| s.crank)).unwrap_or((0.0, 360.0));
    let size = frame::clamp_size(size);
    let nx = (f64::from(size.0) / 70.0).round().max(3.0) as usize;
    let x = angle_axis(x_lo, x_hi, nx, "crank angle from ground line O2→O4 (deg)");
    let (y_lo, y_hi) = extent(all().flat_map(|s| [s.theta3, s.theta4])).unwrap_or((0.0, 360.0));
    let ny = (f64::from(size.1) * 0.55 / 45.0).round().max(3.0) as usize;
    let top = Panel {
        x: x.clone(),
        y: angle_axis(y_lo, y_hi, ny, "link angle (deg)"),
        x_labels: false,
        weight: 0.56,
    };
    let bottom = Panel {
        x,
        y: Axis::with_step(0.0, 180.0, 30.0, "μ (deg)"),
        x_labels: true,
        weight: 0.44,
    };
    let mut legend = Legend::new(&[
        (Swatch::Line(style::COUPLER, 1.9, None), "θ3 coupler"),
        (Swatch::Line(style::OUTPUT, 1.9, None), "θ4 output"),
        (Swatch::Line(style::GENERATED, 1.9, None), "μ transmission"),
        (Swatch::Fill(style::BAND), "40–140°"),
    ]);
    if !target_cranks.is_empty() {
        legend.push(Swatch::Line(style::TARGET, 1.0, Some("2 3")), "target");
    }
    let (svg, maps) = frame::frame(size, &legend, &[top, bottom]);
    let (mt, mb) = (maps[0], maps[1]);
    let mut s = String::new();

    // The band first, translucent so the grid shows through.
    let (y140, y40) = (mb.py(MU_BAND_HIGH), mb.py(MU_BAND_LOW));
    s.push_str(&format!(
        r#"<rect class="band" x="{}" y="{}" width="{}" height="{}" fill="{}" fill-opacity="0.75"/>"#,
        num(mb.rect.0),
        num(y140),
        num(mb.rect.2 - mb.rect.0),
        num(y40 - y140),
        style::BAND.hex()
    ));
    for y in [y140, y40] {
        s.push_str(&line(
            "band-edge",
            (mb.rect.0, y),
            (mb.rect.2, y),
            Rgb(0x9c, 0xc4, 0xa8),
            1.0,
            r#" stroke-dasharray="5 3""#,
        ));
    }

    // Target marks under the series.
    let (xl, xh) = (mt.x.0, mt.x.1);
    let targets: Vec<f64> = target_cranks
        .iter()
        .map(|t| into_range(*t, xl, xh))
        .collect();
    for (i, t) in targets.iter().enumerate() {
        if !(t.is_finite() && *t >= xl && *t <= xh) {
            continue;
        }
        let px = mt.px(*t);
        let marks: String = [&mt, &mb]
            .iter()
            .map(|m| {
                let dots = r#" stroke-dasharray="2 3""#;
                line(
                    "mark",
                    (px, m.rect.1),
                    (px, m.rect.3),
                    style::TARGET,
                    1.0,
                    dots,
                )
            })
            .collect();
        let number = (i + 1).to_string();
        let label = text(
            px + 3.0,
            mt.rect.1 + FONT_TICK + 1.0,
            FONT_TICK,
            "start",
            style::TARGET,
            &number,
        );
        s.push_str(&format!(
            r#"<g class="target-mark" data-target="{number}">{marks}{label}</g>"#
        ));
    }

    type Field = fn(&AngleSample) -> f64;
    let series: [(&str, Field, Rgb, &Map); 3] = [
        ("series theta3", |a| a.theta3, style::COUPLER, &mt),
        ("series theta4", |a| a.theta4, style::OUTPUT, &mt),
        ("series mu", |a| a.mu, style::GENERATED, &mb),
    ];
    for (class, f, colour, map) in series {
        let mut d = String::new();
        for b in branches {
            let part = path_data(map, b.iter().map(|a| (a.crank, f(a))), GAP_DEG, WRAP_DEG);
            d.push(' ');
            d.push_str(&part);
        }
        s.push_str(&path(class, d.trim(), colour, 1.9, None));
        for t in &targets {
            if let Some(v) = branches.iter().find_map(|b| interpolate(b, *t, f)) {
                s.push_str(&ring("target-value", map.px(*t), map.py(v), colour));
            }
        }
    }

    // Worst transmission quality over the working motion: a crank's whole turn; for a
    // rocking input, whose motion ends in toggles (where mu is 0 or 180 by definition), the
    // stretch from the first target to the last, the part of the stroke that does the work.
    let quality = |mu: f64| mu.min(180.0 - mu);
    let rocking = branches
        .iter()
        .all(|b| extent(b.iter().map(|a| a.crank)).is_some_and(|(lo, hi)| hi - lo < 360.0 - 1e-6));
    let window = working
        .map(|(a, b)| (a.min(b), a.max(b)))
        .or_else(|| extent(targets.iter().copied().filter(|t| *t >= xl && *t <= xh)))
        .filter(|(lo, hi)| rocking && hi > lo);
    let inside = |c: f64| window.map_or(true, |(lo, hi)| c >= lo - 1e-9 && c <= hi + 1e-9);
    let mut candidates: Vec<(f64, f64)> = all()
        .filter(|a| a.mu.is_finite() && a.crank.is_finite() && inside(a.crank))
        .map(|a| (a.crank, a.mu))
        .collect();
    if let Some((lo, hi)) = window {
        // The ends of the working range themselves (they fall between grid samples).
        candidates.extend([lo, hi].iter().filter_map(|t| {
            let mu = branches.iter().find_map(|b| interpolate(b, *t, |a| a.mu))?;
            Some((*t, mu))
        }));
    }
    if window.is_some() {
        candidates.extend(targets.iter().filter_map(|t| {
            let mu = branches.iter().find_map(|b| interpolate(b, *t, |a| a.mu))?;
            Some((*t, mu))
        }));
    }
    let worst = candidates
        .into_iter()
        .min_by(|a, b| quality(a.1).total_cmp(&quality(b.1)));
    if let Some((crank, mu)) = worst {
        let (px, py) = (mb.px(crank), mb.py(mu));
        let q = quality(mu);
        let right = px < 0.5 * (mb.rect.0 + mb.rect.2);
        // Outside the curve: above a maximum of mu, below a minimum, where there is room.
        let room_above = py - 7.0 - FONT_TICK > mb.rect.1;
        let room_below = py + 15.0 < mb.rect.3;
        let above = if mu > 90.0 { room_above } else { !room_below };
        let label = match window {
            Some(_) if working.is_some() => format!("worst {q:.1}° over the working range"),
            Some(_) => format!("worst {q:.1}° between targets"),
            None => format!("worst {q:.1}°"),
        };
        s.push_str(&format!(
            r#"<g class="worst-mu"><circle cx="{}" cy="{}" r="3" fill="{}"/>{}</g>"#,
            num(px),
            num(py),
            style::INK.hex(),
            // A halo of paper colour keeps the label legible over grid and band lines.
            text(
                px + if right { 7.0 } else { -7.0 },
                py + if above { -7.0 } else { 15.0 },
                FONT_TICK,
                if right { "start" } else { "end" },
                style::INK,
                &label
            )
            .replacen(
                "<text ",
                &format!(
                    r#"<text stroke="{}" stroke-width="3" stroke-linejoin="round" paint-order="stroke" "#,
                    style::PAPER.hex()
                ),
                1
            )
        ));
    }
    finish(svg, &s)
}

/// A single-panel frame for `y` against `x`, sized to the finite data.
fn xy_frame(
    x: impl IntoIterator<Item = f64>,
    y: impl IntoIterator<Item = f64>,
    labels: (&str, &str),
    size: (u32, u32),
    legend: &Legend,
) -> (String, Map) {
    let size = frame::clamp_size(size);
    let (x_lo, x_hi) = extent(x).unwrap_or((0.0, 1.0));
    let (y_lo, y_hi) = extent(y).unwrap_or((0.0, 1.0));
    let nx = (f64::from(size.0) / 80.0).round().max(3.0) as usize;
    let ny = (f64::from(size.1) / 55.0).round().max(3.0) as usize;
    let panel = Panel {
        // x spans exactly the task's input range; y is widened to whole ticks.
        x: Axis::with_step(x_lo, x_hi, frame::nice_step(x_hi - x_lo, nx), labels.0),
        y: Axis::nice(y_lo, y_hi, ny, labels.1),
        x_labels: true,
        weight: 1.0,
    };
    let (svg, maps) = frame::frame(size, legend, &[panel]);
    (svg, maps[0])
}

/// Linear interpolation of `ys` over increasing `xs` at `x`.
fn interp_xy(xs: &[f64], ys: &[f64], x: f64) -> Option<f64> {
    xs.windows(2)
        .zip(ys.windows(2))
        .find_map(|(xw, yw)| lerp_on((xw[0], yw[0]), (xw[1], yw[1]), x))
}

/// Function generation: the desired function `y = f(x)` (dashed) and the output the
/// linkage generates (solid) against `x`, precision points ringed on the desired curve.
///
/// `x`, `desired` and `generated` pair by index (extra entries are ignored); a non-finite
/// `generated` value (the linkage cannot reach that input) breaks the line. `labels` names
/// the x and y axes. Contains `<path class="series desired">`, `<path class="series
/// generated">` and one `<circle class="precision-point">` per precision point in range.
pub fn function_plot(
    x: &[f64],
    desired: &[f64],
    generated: &[f64],
    precision_xs: &[f64],
    labels: (&str, &str),
    size: (u32, u32),
) -> String {
    let n = x.len().min(desired.len()).min(generated.len());
    let (x, desired, generated) = (&x[..n], &desired[..n], &generated[..n]);
    let mut legend = Legend::new(&[
        (Swatch::Line(style::INK, 1.6, Some("7 4")), "desired"),
        (Swatch::Line(style::GENERATED, 2.0, None), "generated"),
    ]);
    if !precision_xs.is_empty() {
        legend.push(Swatch::Ring(style::TARGET), "precision point");
    }
    let (svg, map) = xy_frame(
        x.iter().copied(),
        desired.iter().chain(generated).copied(),
        labels,
        size,
        &legend,
    );
    let mut s = String::new();
    let inf = f64::INFINITY;
    let d = path_data(
        &map,
        x.iter().copied().zip(desired.iter().copied()),
        inf,
        inf,
    );
    s.push_str(&path("series desired", &d, style::INK, 1.6, Some("7 4")));
    let g = path_data(
        &map,
        x.iter().copied().zip(generated.iter().copied()),
        inf,
        inf,
    );
    s.push_str(&path("series generated", &g, style::GENERATED, 2.0, None));
    for xp in precision_xs {
        if let Some(y) = interp_xy(x, desired, *xp) {
            s.push_str(&ring(
                "precision-point",
                map.px(*xp),
                map.py(y),
                style::TARGET,
            ));
        }
    }
    finish(svg, &s)
}

/// Function generation error (generated minus desired) against `x`, with the zero line and
/// the precision points ringed on it (where a synthesised error should vanish).
///
/// `labels` names the x axis and the error axis. Contains `<path class="series error">`,
/// `<line class="zero">` and one `<circle class="precision-point">` per precision point.
pub fn error_plot(
    x: &[f64],
    error: &[f64],
    precision_xs: &[f64],
    labels: (&str, &str),
    size: (u32, u32),
) -> String {
    let n = x.len().min(error.len());
    let (x, error) = (&x[..n], &error[..n]);
    let mut legend = Legend::new(&[(
        Swatch::Line(style::GENERATED, 2.0, None),
        "generated − desired",
    )]);
    if !precision_xs.is_empty() {
        legend.push(Swatch::Ring(style::TARGET), "precision point");
    }
    let (svg, map) = xy_frame(
        x.iter().copied(),
        error.iter().copied().chain([0.0]),
        labels,
        size,
        &legend,
    );
    let mut s = line(
        "zero",
        (map.rect.0, map.py(0.0)),
        (map.rect.2, map.py(0.0)),
        style::MUTED,
        1.2,
        "",
    );
    let inf = f64::INFINITY;
    let d = path_data(&map, x.iter().copied().zip(error.iter().copied()), inf, inf);
    s.push_str(&path("series error", &d, style::GENERATED, 2.0, None));
    for xp in precision_xs {
        if xp.is_finite() && *xp >= map.x.0 && *xp <= map.x.1 {
            s.push_str(&ring(
                "precision-point",
                map.px(*xp),
                map.py(0.0),
                style::TARGET,
            ));
        }
    }
    finish(svg, &s)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::svg_test::*;
    use approx::assert_relative_eq;

    /// Straight-line series (so interpolation is exact): theta3 = c, theta4 = 200 - c / 2,
    /// mu = 20 + c / 2 for crank c on [lo, hi] every 5 degrees.
    fn line_branch(lo: f64, hi: f64) -> Vec<AngleSample> {
        let n = ((hi - lo) / 5.0).round() as usize;
        (0..=n)
            .map(|k| {
                let c = lo + 5.0 * k as f64;
                AngleSample {
                    crank: c,
                    theta3: c,
                    theta4: 200.0 - 0.5 * c,
                    mu: 20.0 + 0.5 * c,
                }
            })
            .collect()
    }

    #[test]
    fn angle_plot_series_band_and_targets() {
        let branches = vec![line_branch(0.0, 120.0), line_branch(200.0, 300.0)];
        let svg = angle_plot(&branches, &[30.0, 250.0, 330.0], (700, 460));
        let doc = parse(&svg);
        for class in ["theta3", "theta4", "mu"] {
            let p = by_class(&doc, "path", class);
            assert_eq!(p.len(), 1, "{class}");
            assert_eq!(subpaths(&p[0]), 2, "{class}: one stroke per branch");
        }
        // Target 3 (330 deg) lies outside the plotted crank range even moved by a turn.
        assert_eq!(by_class(&doc, "g", "target-mark").len(), 2);
        // The mu values at the targets (30 -> 35 deg, 250 -> 145 deg) fix the pixel scale
        // of the mu axis; the band must span exactly 40..140 deg on it.
        let rings: Vec<f64> = by_class(&doc, "circle", "target-value")
            .iter()
            .filter(|c| c.attribute("stroke") == Some(style::GENERATED.hex().as_str()))
            .map(|c| attr(c, "cy"))
            .collect();
        assert_eq!(rings.len(), 2);
        let per_deg = (rings[0] - rings[1]) / (145.0 - 35.0);
        let y_of = |mu: f64| rings[0] - (mu - 35.0) * per_deg;
        let band = &by_class(&doc, "rect", "band")[0];
        assert_relative_eq!(attr(band, "y"), y_of(MU_BAND_HIGH), epsilon = 0.05);
        assert_relative_eq!(
            attr(band, "y") + attr(band, "height"),
            y_of(MU_BAND_LOW),
            epsilon = 0.05
        );
    }

    fn worst_label(svg: &str) -> String {
        let doc = parse(svg);
        let g = by_class(&doc, "g", "worst-mu");
        assert_eq!(g.len(), 1);
        g[0].descendants()
            .find(|n| n.has_tag_name("text"))
            .and_then(|n| n.text())
            .expect("label")
            .trim()
            .to_owned()
    }

    // mu = 20 + c / 2 on a rocking branch over crank 0..120: everywhere the worst quality
    // is at crank 0 (20 deg), but between targets at 30 and 90 it is at 30 (35 deg). On a
    // full turn the whole motion counts.
    #[test]
    fn worst_transmission_between_targets_when_rocking() {
        let rocking = vec![line_branch(0.0, 120.0)];
        assert_eq!(
            worst_label(&angle_plot(&rocking, &[90.0, 30.0], (600, 400))),
            "worst 35.0° between targets"
        );
        assert_eq!(
            worst_label(&angle_plot(&rocking, &[], (600, 400))),
            "worst 20.0°"
        );
        let mut turn = line_branch(0.0, 360.0);
        for a in &mut turn {
            a.mu = 90.0 - 60.0 * (a.crank.to_radians()).cos();
        }
        assert_eq!(
            worst_label(&angle_plot(&[turn], &[90.0, 200.0], (600, 400))),
            "worst 30.0°"
        );
    }

    #[test]
    fn series_break_at_wraps_and_gaps() {
        // theta4 wraps from 355 to 0 degrees at crank 25..30; a hole of 25 degrees in the
        // crank samples after 35.
        let mut b = line_branch(0.0, 60.0);
        for s in &mut b {
            s.theta4 = (330.0 + s.crank) % 360.0;
        }
        b.retain(|s| !(40.0..=55.0).contains(&s.crank));
        let doc_svg = angle_plot(&[b], &[], (500, 400));
        let doc = parse(&doc_svg);
        assert_eq!(subpaths(&by_class(&doc, "path", "theta3")[0]), 2);
        assert_eq!(subpaths(&by_class(&doc, "path", "theta4")[0]), 3);
        assert!(by_class(&doc, "g", "target-mark").is_empty());
    }

    #[test]
    fn function_and_error_plots() {
        let x: Vec<f64> = (0..=20).map(|k| k as f64 * 0.05).collect();
        let desired: Vec<f64> = x.iter().map(|v| v * v).collect();
        let mut generated: Vec<f64> = x.iter().map(|v| v * v + 0.01 * (v - 0.5)).collect();
        generated[10] = f64::NAN;
        let pxs = [0.1, 0.5, 0.9, 7.0];
        let svg = function_plot(&x, &desired, &generated, &pxs, ("x", "y"), (600, 400));
        let doc = parse(&svg);
        assert_eq!(subpaths(&by_class(&doc, "path", "desired")[0]), 1);
        assert_eq!(subpaths(&by_class(&doc, "path", "generated")[0]), 2);
        // 7.0 is outside the input range.
        assert_eq!(by_class(&doc, "circle", "precision-point").len(), 3);
        assert!(!svg.contains("NaN"));

        let err: Vec<f64> = generated.iter().zip(&desired).map(|(g, d)| g - d).collect();
        let svg = error_plot(&x, &err, &pxs, ("x", "error"), (600, 300));
        let doc = parse(&svg);
        let zero = &by_class(&doc, "line", "zero")[0];
        let rings = by_class(&doc, "circle", "precision-point");
        assert_eq!(rings.len(), 3);
        for r in rings {
            assert_relative_eq!(attr(&r, "cy"), attr(zero, "y1"), epsilon = 1e-9);
        }
        assert_eq!(subpaths(&by_class(&doc, "path", "error")[0]), 2);
    }

    #[test]
    fn empty_and_non_finite_input_gives_clean_svg() {
        let nan = f64::NAN;
        let bad = vec![vec![AngleSample {
            crank: nan,
            theta3: 1.0,
            theta4: nan,
            mu: nan,
        }]];
        for svg in [
            angle_plot(&[], &[], (0, 0)),
            angle_plot(&bad, &[nan], (300, 200)),
            function_plot(&[], &[], &[], &[], ("x", "y"), (300, 200)),
            function_plot(
                &[1.0, 2.0],
                &[nan, nan],
                &[nan, 3.0],
                &[nan],
                ("x", "y"),
                (300, 200),
            ),
            error_plot(&[], &[], &[], ("x", "e"), (300, 200)),
        ] {
            parse(&svg);
            assert!(!svg.contains("NaN") && !svg.contains("inf"), "{svg}");
        }
    }
}
