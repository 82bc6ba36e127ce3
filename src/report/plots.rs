//! Line plots against the crank angle or the task's input variable: link angles and
//! transmission angle ([`angle_plot`]), function generation ([`function_plot`],
//! [`error_plot`]). Frames come from plotters; series are hand-written `<path>`s with
//! `class` names (`series theta3`, `band`, `target-mark`, ...). No I/O, no `id`s.

use super::draw::line;
use super::frame::{self, finish, Axis, Map, Panel};
use super::legend::{Legend, Swatch};
use super::style::{self, halo_text, num, text, text_width, Rgb, FONT_TICK};

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

/// Over which stretch of motion a worst transmission angle is taken: the scope of a
/// result's `min_transmission`, named the same way wherever the number is shown.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum MuScope {
    /// The whole turn of a crank (the scenario requires `crank: full-turn`).
    FullTurn,
    /// From the first target to the last (path and motion generation).
    #[default]
    BetweenTargets,
    /// Over the task's x range (function generation).
    XRange,
}

impl MuScope {
    /// The scope in words, as it follows a number: `over a full turn`, `between targets`,
    /// `over the x range`.
    pub fn words(self) -> &'static str {
        match self {
            MuScope::FullTurn => "over a full turn",
            MuScope::BetweenTargets => "between targets",
            MuScope::XRange => "over the x range",
        }
    }

    /// The scope as a short heading: `full turn`, `between targets`, `over the x range`.
    pub fn short(self) -> &'static str {
        match self {
            MuScope::FullTurn => "full turn",
            s => s.words(),
        }
    }
}

/// What an angle plot marks besides the angles, and the stretch over which it reports the
/// worst transmission.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct AngleMarks<'a> {
    /// Crank angles from the ground line (degrees) of the marked positions (targets,
    /// precision points or the ends of an x range), dotted and numbered from 1; moved by
    /// whole turns into the plotted range when needed.
    pub cranks: &'a [f64],
    /// Legend name of those marks (`target` when empty).
    pub name: &'a str,
    /// The working range `(from, to)` of crank angle (degrees) when it reaches beyond the
    /// marks (function generation works over the whole x range, whose ends lie outside its
    /// precision points): its ends are drawn dash-dotted, labelled `x0` (at `from`) and `xf`,
    /// unless a mark already stands there. `None`: the first to the last mark.
    pub working: Option<(f64, f64)>,
    /// Scope of the labelled worst transmission.
    pub scope: MuScope,
}

impl<'a> AngleMarks<'a> {
    /// Targets at `cranks`, the worst transmission taken between them.
    pub fn targets(cranks: &'a [f64]) -> Self {
        Self {
            cranks,
            ..Self::default()
        }
    }
}

/// Link angles against crank angle: `theta3` and `theta4` in the upper panel, the
/// transmission angle `mu` in the lower panel over the shaded 40..140 degree band (common
/// practice, no source), the worst transmission quality `min(mu, 180 - mu)` labelled: over
/// the whole turn when a branch turns fully, else between the first and last target (a
/// rocking input's motion ends in toggles, where the quality is nil by definition).
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
    let full = branches.iter().any(|b| !rocking_branch(b));
    let marks = AngleMarks {
        scope: if full {
            MuScope::FullTurn
        } else {
            MuScope::BetweenTargets
        },
        ..AngleMarks::targets(target_cranks)
    };
    angle_plot_over(branches, &marks, size)
}

/// Whether a branch's crank angles span less than a full turn (the input rocks).
fn rocking_branch(b: &[AngleSample]) -> bool {
    extent(b.iter().map(|a| a.crank)).map_or(true, |(lo, hi)| hi - lo < 360.0 - 1e-6)
}

/// A labelled point of worst transmission on the `mu` panel: the dot, and the label beside
/// it outside the curve (above a maximum of `mu`, below a minimum, where there is room),
/// on the flipped side when `flip`. Returns the SVG and the label's box (left, top, right,
/// bottom, pixels).
fn worst_mark(
    mb: &Map,
    (crank, mu): (f64, f64),
    label: &str,
    class: &str,
    flip: bool,
) -> (String, (f64, f64, f64, f64)) {
    let (px, py) = (mb.px(crank), mb.py(mu));
    let right = px < 0.5 * (mb.rect.0 + mb.rect.2);
    let room_above = py - 7.0 - FONT_TICK > mb.rect.1;
    let room_below = py + 15.0 < mb.rect.3;
    let above = (if mu > 90.0 { room_above } else { !room_below }) != flip;
    let (tx, ty) = (
        px + if right { 7.0 } else { -7.0 },
        py + if above { -7.0 } else { 15.0 },
    );
    let w = text_width(label, FONT_TICK);
    let (l, r) = if right { (tx, tx + w) } else { (tx - w, tx) };
    let svg = format!(
        r#"<g class="{class}"><circle cx="{}" cy="{}" r="3" fill="{}"/>{}</g>"#,
        num(px),
        num(py),
        style::INK.hex(),
        halo_text(
            tx,
            ty,
            FONT_TICK,
            if right { "start" } else { "end" },
            style::INK,
            label
        )
    );
    (svg, (l, ty - FONT_TICK, r, ty + 3.0))
}

/// Whether two boxes (left, top, right, bottom) overlap.
fn overlap(a: (f64, f64, f64, f64), b: (f64, f64, f64, f64)) -> bool {
    a.0 < b.2 && b.0 < a.2 && a.1 < b.3 && b.1 < a.3
}

/// [`angle_plot`] with its marks, working range and the scope of its worst transmission
/// given explicitly (see [`AngleMarks`]).
///
/// The worst transmission quality is labelled with its scope: for
/// [`MuScope::BetweenTargets`] and [`MuScope::XRange`] over the working range (the marks'
/// span, or [`AngleMarks::working`]), and when a branch turns fully also over the full turn
/// where that is worse (`<g class="worst-mu">` and `<g class="worst-mu full-turn">`); for
/// [`MuScope::FullTurn`] over everything plotted. Marks are `<g class="target-mark">`, the
/// ends of a working range `<g class="range-end">`.
pub fn angle_plot_over(
    branches: &[Vec<AngleSample>],
    marks: &AngleMarks,
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
    // The marks, and the ends of the working range that no mark stands on.
    let (xl, xh) = (top.x.lo, top.x.hi);
    let targets: Vec<f64> = marks
        .cranks
        .iter()
        .map(|t| into_range(*t, xl, xh))
        .collect();
    let ends: Vec<(f64, &str)> = marks
        .working
        .map(|(a, b)| {
            [(a, "x0"), (b, "xf")]
                .into_iter()
                .map(|(c, l)| (into_range(c, xl, xh), l))
                .filter(|(c, _)| {
                    c.is_finite()
                        && *c >= xl
                        && *c <= xh
                        && !targets.iter().any(|t| (t - c).abs() < 0.5)
                })
                .collect()
        })
        .unwrap_or_default();
    let mut legend = Legend::new(&[
        (Swatch::Line(style::COUPLER, 1.9, None), "θ3 coupler"),
        (Swatch::Line(style::OUTPUT, 1.9, None), "θ4 output"),
        (Swatch::Line(style::GENERATED, 1.9, None), "μ transmission"),
        (Swatch::Fill(style::BAND), "40–140°"),
    ]);
    if !targets.is_empty() {
        let name = if marks.name.is_empty() {
            "target"
        } else {
            marks.name
        };
        legend.push(Swatch::Line(style::TARGET, 1.0, Some(MARK_DASH)), name);
    }
    if !ends.is_empty() {
        legend.push(
            Swatch::Line(style::INK, 1.0, Some(RANGE_END_DASH)),
            "x-range end",
        );
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

    // Target marks and range ends under the series.
    let full_height = |px: f64, colour: Rgb, dash: &str| -> String {
        [&mt, &mb]
            .iter()
            .map(|m| {
                line(
                    "mark",
                    (px, m.rect.1),
                    (px, m.rect.3),
                    colour,
                    1.0,
                    &format!(r#" stroke-dasharray="{dash}""#),
                )
            })
            .collect()
    };
    for (i, t) in targets.iter().enumerate() {
        if !(t.is_finite() && *t >= xl && *t <= xh) {
            continue;
        }
        let px = mt.px(*t);
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
            r#"<g class="target-mark" data-target="{number}">{}{label}</g>"#,
            full_height(px, style::TARGET, MARK_DASH)
        ));
    }
    for (c, name) in &ends {
        let px = mt.px(*c);
        // The label outside the working range, so it stays clear of the marks' numbers.
        let other = ends
            .iter()
            .map(|e| e.0)
            .chain(targets.iter().copied())
            .fold(*c, |acc, v| {
                if (v - c).abs() > (acc - c).abs() {
                    v
                } else {
                    acc
                }
            });
        let width = text_width(name, FONT_TICK);
        let left = other > *c && px - 3.0 - width > mt.rect.0 || px + 3.0 + width > mt.rect.2;
        let label = text(
            if left { px - 3.0 } else { px + 3.0 },
            mt.rect.1 + FONT_TICK + 1.0,
            FONT_TICK,
            if left { "end" } else { "start" },
            style::INK,
            name,
        );
        s.push_str(&format!(
            r#"<g class="range-end" data-end="{name}">{}{label}</g>"#,
            full_height(px, style::INK, RANGE_END_DASH)
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

    // Worst transmission quality over the working range: the stretch from the first target
    // to the last (or the given working range), the part of the stroke that does the work;
    // a crank's whole turn when the scope is the full turn, or when there is no range.
    let quality = |mu: f64| mu.min(180.0 - mu);
    let full = branches.iter().any(|b| !rocking_branch(b));
    let window = match marks.scope {
        MuScope::FullTurn => None,
        _ => marks
            .working
            .map(|(a, b)| (a.min(b), a.max(b)))
            // The marks in running order, unwrapped: their span even across the plot's seam.
            .or_else(|| extent(marks.cranks.iter().copied()))
            .filter(|(lo, hi)| hi > lo && hi - lo < 360.0 - 1e-6),
    };
    let mu_at = |t: f64| {
        let t = into_range(t, xl, xh);
        branches.iter().find_map(|b| interpolate(b, t, |a| a.mu))
    };
    // Whether crank angle `c` lies in `[lo, hi]` up to whole turns (a range given in another
    // turn than the plot's, or across its 0/360 seam).
    let within_turns = |c: f64, (lo, hi): (f64, f64)| {
        (-2..=2)
            .map(|k| c + 360.0 * f64::from(k))
            .any(|v| v >= lo - 1e-9 && v <= hi + 1e-9)
    };
    let worst_of = |cands: Vec<(f64, f64)>| {
        cands
            .into_iter()
            .min_by(|a, b| quality(a.1).total_cmp(&quality(b.1)))
    };
    let everywhere: Vec<(f64, f64)> = all()
        .filter(|a| a.mu.is_finite() && a.crank.is_finite())
        .map(|a| (a.crank, a.mu))
        .collect();
    let overall = worst_of(everywhere.clone());
    let (primary, secondary) = match window {
        Some((lo, hi)) => {
            // The samples inside, the ends of the range themselves and the marks (they fall
            // between grid samples).
            let mut cands: Vec<(f64, f64)> = everywhere
                .iter()
                .copied()
                .filter(|(c, _)| within_turns(*c, (lo, hi)))
                .collect();
            cands.extend(
                [lo, hi]
                    .iter()
                    .chain(&targets)
                    .filter(|t| within_turns(**t, (lo, hi)))
                    .filter_map(|t| Some((into_range(*t, xl, xh), mu_at(*t)?))),
            );
            let inside = worst_of(cands);
            let label =
                |(_, mu): (f64, f64)| format!("worst {:.1}° {}", quality(mu), marks.scope.words());
            // Over the full turn too, where that is worse by a shown digit.
            let turn = overall
                .filter(|o| full && inside.map_or(true, |i| quality(i.1) - quality(o.1) >= 0.05));
            (
                inside.map(|w| (w, label(w))),
                turn.map(|w| (w, format!("worst {:.1}° over a full turn", quality(w.1)))),
            )
        }
        None => {
            let words = if full { " over a full turn" } else { "" };
            (
                overall.map(|w| (w, format!("worst {:.1}°{words}", quality(w.1)))),
                None,
            )
        }
    };
    let mut taken: Option<(f64, f64, f64, f64)> = None;
    if let Some((w, label)) = primary {
        let (svg, bbox) = worst_mark(&mb, w, &label, "worst-mu", false);
        s.push_str(&svg);
        taken = Some(bbox);
    }
    if let Some((w, label)) = secondary {
        let class = "worst-mu full-turn";
        let (mut svg, bbox) = worst_mark(&mb, w, &label, class, false);
        if taken.is_some_and(|t| overlap(t, bbox)) {
            svg = worst_mark(&mb, w, &label, class, true).0;
        }
        s.push_str(&svg);
    }
    finish(svg, &s)
}

/// Dash pattern of the marks at targets and precision points.
pub(crate) const MARK_DASH: &str = "2 3";
/// Dash pattern of the marks at the ends of a working range.
pub(crate) const RANGE_END_DASH: &str = "7 3 2 3";

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
    use crate::report::svg_test::{ends as ends_of, *};
    use approx::assert_relative_eq;
    use roxmltree::Node;

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
            "worst 30.0° over a full turn"
        );
    }

    fn labels_of(svg: &str, class: &str) -> Vec<String> {
        let doc = parse(svg);
        by_class(&doc, "g", class)
            .iter()
            .map(|g| {
                g.descendants()
                    .find(|n| n.has_tag_name("text"))
                    .and_then(|n| n.text())
                    .expect("label")
                    .trim()
                    .to_owned()
            })
            .collect()
    }

    // A crank that turns fully while the result's number is taken between the targets:
    // mu = 90 - 60 cos(crank), so between targets at 90 and 170 deg the worst quality is at
    // 170 deg (90 - 60 cos 170 = 149.09 deg, quality 30.9 deg), over the full turn at 0 deg
    // (30 deg). Both are labelled, each with its scope.
    #[test]
    fn worst_transmission_of_a_full_turn_between_targets_names_both_scopes() {
        let mut turn = line_branch(0.0, 360.0);
        for a in &mut turn {
            a.mu = 90.0 - 60.0 * (a.crank.to_radians()).cos();
        }
        let marks = AngleMarks {
            scope: MuScope::BetweenTargets,
            ..AngleMarks::targets(&[90.0, 170.0])
        };
        let svg = angle_plot_over(&[turn.clone()], &marks, (600, 400));
        let worst = labels_of(&svg, "worst-mu");
        assert_eq!(worst.len(), 2, "{worst:?}");
        assert_eq!(worst[0], "worst 30.9° between targets");
        assert_eq!(worst[1], "worst 30.0° over a full turn");
        assert_eq!(
            labels_of(&svg, "full-turn"),
            ["worst 30.0° over a full turn"]
        );
        // The full turn required: one label, over the whole turn.
        let marks = AngleMarks {
            scope: MuScope::FullTurn,
            ..marks
        };
        let svg = angle_plot_over(&[turn], &marks, (600, 400));
        assert_eq!(
            labels_of(&svg, "worst-mu"),
            ["worst 30.0° over a full turn"]
        );
    }

    // Function generation: the marks are precision points, named so in the legend; the x
    // range reaches beyond them, and its ends are drawn and labelled x0 and xf; the worst
    // transmission is taken over the x range (mu = 20 + c / 2: at x0 = 20 deg, 30 deg).
    #[test]
    fn function_marks_precision_points_and_the_ends_of_the_x_range() {
        let rocking = vec![line_branch(0.0, 120.0)];
        let marks = AngleMarks {
            cranks: &[30.0, 60.0, 90.0],
            name: "precision point",
            working: Some((100.0, 20.0)),
            scope: MuScope::XRange,
        };
        let svg = angle_plot_over(&rocking, &marks, (600, 400));
        let doc = parse(&svg);
        let legend: Vec<&str> = by_class(&doc, "g", "legend")[0]
            .descendants()
            .filter(|n| n.has_tag_name("text"))
            .filter_map(|n| n.text())
            .collect();
        assert!(legend.contains(&"precision point"), "{legend:?}");
        assert!(legend.contains(&"x-range end"), "{legend:?}");
        assert!(!legend.contains(&"target"), "{legend:?}");
        let ends = by_class(&doc, "g", "range-end");
        let named: Vec<&str> = ends
            .iter()
            .filter_map(|g| g.attribute("data-end"))
            .collect();
        assert_eq!(named, ["x0", "xf"]);
        // x0 at crank 100, xf at 20: x0 lies right of xf on the plot.
        let x_of = |g: &Node| ends_of(&child(g, "line", "mark")).0 .0;
        assert!(x_of(&ends[0]) > x_of(&ends[1]));
        assert_eq!(by_class(&doc, "g", "target-mark").len(), 3);
        assert_eq!(worst_label(&svg), "worst 30.0° over the x range");
        // An end on a mark is not drawn twice (least squares is drawn at the ends).
        let marks = AngleMarks {
            cranks: &[20.0, 100.0],
            ..marks
        };
        let doc_svg = angle_plot_over(&rocking, &marks, (600, 400));
        assert!(by_class(&parse(&doc_svg), "g", "range-end").is_empty());
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
