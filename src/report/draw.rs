//! Figures of the linkage itself, drawn to scale with equal axis scaling: the linkage at
//! given positions with its coupler curve and targets ([`linkage_figure`]), the same with
//! coupler frames for motion generation ([`motion_figure`]), and the footprint of a motion.
//!
//! Every function returns SVG text and does no I/O. The figures can be placed inline in one
//! HTML page side by side: they define no `id`s. Elements carry `class` names
//! (`linkage-pose`, `coupler-curve`, `target`, `error`, `ground-symbol`, ...) so that pages
//! and tests can find them.

use nalgebra::Point2;

use super::frame::{self, equal_ranges, finish, nice_step, plot_rect, Axis, Map, Panel};
use super::legend::{Legend, Swatch};
use super::style::{
    self, num, text, Rgb, COUPLER_POINT_R, FADED, FONT_TICK, JOINT_R, LINK_WIDTH, PIVOT_R, TARGET_R,
};
use crate::kinematics::position::Pose;
use crate::linkage::FourBar;

/// Pixels kept free around the drawn motion inside the plot (room for ground symbols).
const SCENE_PAD: f64 = 34.0;
/// Length of the x axis of a frame triad, pixels (the y axis is 70 % of it).
const TRIAD_LEN: f64 = 38.0;

/// A planar pose of a frame: origin `(x, y)` in the design's units and the angle `phi`
/// (radians, counter-clockwise from +x) of its x axis.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct FramePose {
    /// Origin x.
    pub x: f64,
    /// Origin y.
    pub y: f64,
    /// Direction of the frame's x axis, radians.
    pub phi: f64,
}

/// The five points of a linkage at one pose.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Joints {
    pub o2: Point2<f64>,
    pub o4: Point2<f64>,
    pub a: Point2<f64>,
    pub b: Point2<f64>,
    pub c: Point2<f64>,
}

impl Joints {
    /// Positions of pivots, joints and coupler point of `linkage` at `pose`.
    pub fn of(linkage: &FourBar, pose: &Pose) -> Self {
        Self {
            o2: linkage.input_pivot(),
            o4: linkage.output_pivot(),
            a: linkage.joint_a(pose.theta2),
            b: linkage.joint_b(pose.theta4),
            c: linkage.coupler_point_at(pose.theta2, pose.theta3),
        }
    }

    pub(crate) fn finite(&self) -> bool {
        [self.o2, self.o4, self.a, self.b, self.c]
            .iter()
            .all(|p| p.x.is_finite() && p.y.is_finite())
    }
}

fn finite(p: &Point2<f64>) -> bool {
    p.x.is_finite() && p.y.is_finite()
}

/// Bounding box `(min, max)` of a motion: both fixed pivots and the joints `A`, `B` and the
/// coupler point `C` at every pose. Poses with non-finite angles are skipped, so the box of
/// an empty motion is that of the two pivots.
pub fn footprint(linkage: &FourBar, poses: &[Pose]) -> (Point2<f64>, Point2<f64>) {
    let points = poses
        .iter()
        .map(|p| Joints::of(linkage, p))
        .filter(Joints::finite)
        .flat_map(|j| [j.a, j.b, j.c]);
    bounds(
        [linkage.input_pivot(), linkage.output_pivot()]
            .into_iter()
            .chain(points),
    )
    .expect("the two pivots of a valid linkage are finite")
}

pub(crate) use crate::linkage::bounding_box as bounds;

/// The frame of a to-scale drawing: axes `x (units)` and `y (units)` with equal scaling,
/// one tick step for both, showing everything in `bbox` with room for symbols; the legend
/// above.
pub(crate) fn scene_frame(
    bbox: (Point2<f64>, Point2<f64>),
    units: &str,
    size: (u32, u32),
    legend: &Legend,
) -> (String, Map) {
    let rect = plot_rect(size, legend);
    let ((x0, x1), (y0, y1)) = equal_ranges(rect, bbox.0, bbox.1, SCENE_PAD);
    let longest = (rect.2 - rect.0).max(rect.3 - rect.1);
    let n = (longest / 90.0).round().max(3.0) as usize;
    let step = nice_step((x1 - x0).max(y1 - y0), n);
    let panel = Panel {
        x: Axis::with_step(x0, x1, step, &format!("x ({units})")),
        y: Axis::with_step(y0, y1, step, &format!("y ({units})")),
        x_labels: true,
        weight: 1.0,
    };
    let (svg, maps) = frame::frame(size, legend, &[panel]);
    (svg, maps[0])
}

/// A line between two pixel positions.
pub(crate) fn line(
    class: &str,
    p: (f64, f64),
    q: (f64, f64),
    colour: Rgb,
    width: f64,
    extra: &str,
) -> String {
    format!(
        r#"<line class="{class}" x1="{}" y1="{}" x2="{}" y2="{}" stroke="{}" stroke-width="{}"{extra}/>"#,
        num(p.0),
        num(p.1),
        num(q.0),
        num(q.1),
        colour.hex(),
        num(width)
    )
}

/// A line from `p` to `q` ending in a filled arrowhead of length `head` at `q`.
pub(crate) fn arrow(
    class: &str,
    p: (f64, f64),
    q: (f64, f64),
    head: f64,
    colour: Rgb,
    width: f64,
    extra: &str,
) -> String {
    let (dx, dy) = (q.0 - p.0, q.1 - p.1);
    let len = dx.hypot(dy);
    if len < 1e-9 {
        return String::new();
    }
    let (ux, uy) = (dx / len, dy / len);
    let head = head.min(0.6 * len);
    let base = (q.0 - ux * head, q.1 - uy * head);
    let half = 0.42 * head;
    let l = (base.0 - uy * half, base.1 + ux * half);
    let r = (base.0 + uy * half, base.1 - ux * half);
    format!(
        r#"<g class="{class}">{}<polygon points="{},{} {},{} {},{}" fill="{}"/></g>"#,
        line("shaft", p, base, colour, width, extra),
        num(q.0),
        num(q.1),
        num(l.0),
        num(l.1),
        num(r.0),
        num(r.1),
        colour.hex()
    )
}

/// The coupler curve as one `<path>`, a sub-path per branch; nothing when the curve has no
/// drawable point.
pub(crate) fn curve_layer(map: &Map, curve: &[Vec<Point2<f64>>]) -> String {
    if !curve.iter().flatten().any(finite) {
        return String::new();
    }
    let mut d = String::new();
    for branch in curve {
        let mut pen_down = false;
        for p in branch {
            if !finite(p) {
                pen_down = false;
                continue;
            }
            let (x, y) = map.p(*p);
            d.push_str(if pen_down { " L" } else { " M" });
            d.push_str(&format!("{},{}", num(x), num(y)));
            pen_down = true;
        }
    }
    format!(
        r#"<path class="coupler-curve" d="{}" fill="none" stroke="{}" stroke-width="1.6" stroke-linejoin="round"/>"#,
        d.trim_start(),
        style::CURVE.hex()
    )
}

/// The ground: the line of centres `O2 - O4` and a bearing symbol with hatching at each
/// fixed pivot (the pivot circles themselves come later, on top of the links). Each symbol
/// hangs below its pivot unless a link or the line of centres leaves the pivot that way in
/// one of the drawn `poses`; then it turns to the side (or up) where it is least in the way.
pub(crate) fn ground_layer(map: &Map, linkage: &FourBar, poses: &[Pose]) -> String {
    let mut s = String::from(r#"<g class="ground">"#);
    s.push_str(&line(
        "ground-line",
        map.p(linkage.input_pivot()),
        map.p(linkage.output_pivot()),
        style::MUTED,
        1.0,
        &format!(r#" stroke-dasharray="{GROUND_DASH}""#),
    ));
    for (pivot, turn) in pivot_symbols(linkage, poses) {
        let (x, y) = map.p(pivot);
        s.push_str(&ground_symbol(x, y, turn));
    }
    s.push_str("</g>");
    s
}

/// Dash pattern of the ground line `O2 - O4` (dash-dot).
pub(crate) const GROUND_DASH: &str = "14 3 2 3";

/// Each fixed pivot (`O2`, then `O4`) with the quarter turns of its ground symbol (see
/// [`symbol_turn`]) for the links that leave it in `poses` and the line of centres.
fn pivot_symbols(linkage: &FourBar, poses: &[Pose]) -> [(Point2<f64>, u8); 2] {
    let (o2, o4) = (linkage.input_pivot(), linkage.output_pivot());
    let joints: Vec<Joints> = poses
        .iter()
        .map(|p| Joints::of(linkage, p))
        .filter(Joints::finite)
        .collect();
    let mut crank_dirs: Vec<_> = joints.iter().map(|j| j.a - o2).collect();
    crank_dirs.push(o4 - o2);
    let mut output_dirs: Vec<_> = joints.iter().map(|j| j.b - o4).collect();
    output_dirs.push(o2 - o4);
    [
        (o2, symbol_turn(&crank_dirs)),
        (o4, symbol_turn(&output_dirs)),
    ]
}

/// Quarter turns (0: hanging down, 1: pointing right, 2: up, 3: left; counter-clockwise
/// on the page) for a ground symbol at a pivot whose links leave in the world directions
/// `dirs`: the direction whose worst overlap with a link is least, down preferred, then
/// the sides, then up.
fn symbol_turn(dirs: &[nalgebra::Vector2<f64>]) -> u8 {
    // World directions of the symbol for each turn (page y is flipped) and a preference.
    let options = [
        (0u8, nalgebra::Vector2::new(0.0, -1.0), 0.0),
        (1, nalgebra::Vector2::new(1.0, 0.0), 0.08),
        (3, nalgebra::Vector2::new(-1.0, 0.0), 0.08),
        (2, nalgebra::Vector2::new(0.0, 1.0), 0.16),
    ];
    let worst = |d: &nalgebra::Vector2<f64>| {
        dirs.iter()
            .filter_map(|v| {
                let n = v.norm();
                (n > 0.0 && n.is_finite()).then(|| v.dot(d) / n)
            })
            .fold(-1.0, f64::max)
    };
    options
        .iter()
        .map(|(turn, d, bias)| (*turn, worst(d).max(0.5) + bias))
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .map_or(0, |(turn, _)| turn)
}

/// A fixed-pivot symbol at pixel `(x, y)`: a bearing block under the pivot standing on a
/// base line with diagonal hatching below it, turned by `turn` quarter turns
/// counter-clockwise on the page.
pub(crate) fn ground_symbol(x: f64, y: f64, turn: u8) -> String {
    let g = style::GROUND.hex();
    let (half, drop, hatch) = (13.0, 15.0, 6.0);
    let base = y + drop;
    let rotate = if turn % 4 == 0 {
        String::new()
    } else {
        // SVG rotates clockwise on the page for positive angles.
        format!(
            r#" transform="rotate({} {} {})""#,
            -90 * i32::from(turn % 4),
            num(x),
            num(y)
        )
    };
    let mut s = format!(
        r#"<g class="ground-symbol"{rotate}><polygon points="{},{} {},{} {},{}" fill="{}" stroke="{g}" stroke-width="1.3" stroke-linejoin="round"/>"#,
        num(x),
        num(y),
        num(x - 0.62 * half),
        num(base),
        num(x + 0.62 * half),
        num(base),
        style::PAPER.hex()
    );
    s.push_str(&format!(
        r#"<line x1="{}" y1="{}" x2="{}" y2="{}" stroke="{g}" stroke-width="1.6" stroke-linecap="round"/>"#,
        num(x - half),
        num(base),
        num(x + half),
        num(base)
    ));
    let n = 6;
    for i in 0..n {
        let hx = x - half + 3.0 + i as f64 * (2.0 * half - 3.0) / (n - 1) as f64;
        s.push_str(&format!(
            r#"<line class="hatch" x1="{}" y1="{}" x2="{}" y2="{}" stroke="{g}" stroke-width="1"/>"#,
            num(hx),
            num(base),
            num(hx - 4.5),
            num(base + hatch)
        ));
    }
    s.push_str("</g>");
    s
}

/// The two fixed pivots as rings with a centre dot, drawn over the link ends.
pub(crate) fn pivots_layer(map: &Map, linkage: &FourBar) -> String {
    let mut s = String::from(r#"<g class="pivots">"#);
    for p in [linkage.input_pivot(), linkage.output_pivot()] {
        let (x, y) = map.p(p);
        s.push_str(&pivot_circle(x, y));
    }
    s.push_str("</g>");
    s
}

pub(crate) fn pivot_circle(x: f64, y: f64) -> String {
    format!(
        r#"<circle class="pivot" cx="{x}" cy="{y}" r="{}" fill="{}" stroke="{}" stroke-width="1.6"/><circle cx="{x}" cy="{y}" r="1.4" fill="{}"/>"#,
        num(PIVOT_R),
        style::PAPER.hex(),
        style::INK.hex(),
        style::INK.hex(),
        x = num(x),
        y = num(y)
    )
}

/// Animation children for the elements of one drawn position (empty strings for a still
/// drawing).
#[derive(Debug, Clone, Default, PartialEq)]
pub(crate) struct PoseAnimation {
    /// Children of the output link line.
    pub output: String,
    /// Children of the crank line.
    pub crank: String,
    /// Children of the coupler plate polygon.
    pub plate: String,
    /// Children of the coupler bar line `A-B`.
    pub bar: String,
    /// Children of the ring at joint `A`.
    pub joint_a: String,
    /// Children of the ring at joint `B`.
    pub joint_b: String,
    /// Children of the coupler point dot.
    pub point: String,
}

/// A self-closing element `<tag .../>` given `body` as children (unchanged when `body` is
/// empty).
fn with_body(elem: String, body: &str) -> String {
    if body.is_empty() {
        return elem;
    }
    let tag = elem[1..]
        .split(char::is_whitespace)
        .next()
        .unwrap_or("g")
        .to_owned();
    match elem.strip_suffix("/>") {
        Some(open) => format!("{open}>{body}</{tag}>"),
        None => elem,
    }
}

/// One position of the moving links: output link, crank, coupler plate `A-B-C` with the
/// coupler bar `A-B` stressed, joint rings and the coupler point. A position that is not
/// `solid` is drawn faded, thinner and without the plate's fill, so that several positions
/// overlaid stay legible.
pub(crate) fn pose_layer(map: &Map, j: &Joints, index: usize, solid: bool) -> String {
    pose_layer_animated(map, j, index, solid, &PoseAnimation::default())
}

/// [`pose_layer`] with animation children on its elements.
pub(crate) fn pose_layer_animated(
    map: &Map,
    j: &Joints,
    index: usize,
    solid: bool,
    anim: &PoseAnimation,
) -> String {
    let (a, b, c) = (map.p(j.a), map.p(j.b), map.p(j.c));
    let round = r#" stroke-linecap="round""#;
    let (opacity, width, fill) = if solid {
        (1.0, LINK_WIDTH, 0.16)
    } else {
        (FADED, 0.6 * LINK_WIDTH, 0.0)
    };
    let mut s = format!(
        r#"<g class="linkage-pose" data-pose="{}" opacity="{}">"#,
        index + 1,
        num(opacity)
    );
    let output = line("output", map.p(j.o4), b, style::OUTPUT, width, round);
    s.push_str(&with_body(output, &anim.output));
    let crank = line("crank", map.p(j.o2), a, style::CRANK, width, round);
    s.push_str(&with_body(crank, &anim.crank));
    let plate = format!(
        r#"<polygon class="coupler" points="{} {} {}" fill="{}" fill-opacity="{}" stroke="{}" stroke-width="1.4" stroke-linejoin="round"/>"#,
        map.pt(j.a),
        map.pt(j.b),
        map.pt(j.c),
        style::COUPLER.hex(),
        num(fill),
        style::COUPLER.hex()
    );
    s.push_str(&with_body(plate, &anim.plate));
    let bar = line("coupler-bar", a, b, style::COUPLER, width, round);
    s.push_str(&with_body(bar, &anim.bar));
    for ((x, y), body) in [(a, &anim.joint_a), (b, &anim.joint_b)] {
        let ring = format!(
            r#"<circle class="joint" cx="{}" cy="{}" r="{}" fill="{}" stroke="{}" stroke-width="1.4"/>"#,
            num(x),
            num(y),
            num(JOINT_R),
            style::PAPER.hex(),
            style::INK.hex()
        );
        s.push_str(&with_body(ring, body));
    }
    // A coupler point on joint A (p = q = 0, as in function generation) is A itself.
    if j.c != j.a {
        let dot = format!(
            r#"<circle class="coupler-point" cx="{}" cy="{}" r="{}" fill="{}" stroke="{}" stroke-width="1"/>"#,
            num(c.0),
            num(c.1),
            num(COUPLER_POINT_R),
            style::CURVE.hex(),
            style::PAPER.hex()
        );
        s.push_str(&with_body(dot, &anim.point));
    }
    s.push_str("</g>");
    s
}

/// All positions, the first drawn solid and last (on top), the others faded.
fn poses_layer(map: &Map, linkage: &FourBar, poses: &[Pose]) -> String {
    let mut s = String::new();
    let joints: Vec<(usize, Joints)> = poses
        .iter()
        .map(|p| Joints::of(linkage, p))
        .enumerate()
        .filter(|(_, j)| j.finite())
        .collect();
    for (i, j) in joints.iter().skip(1).rev() {
        s.push_str(&pose_layer(map, j, *i, false));
    }
    if let Some((i, j)) = joints.first() {
        s.push_str(&pose_layer(map, j, *i, true));
    }
    s
}

/// A target reticle: a ring with four ticks leaving its centre clear, numbered.
pub(crate) fn reticle(x: f64, y: f64, label: &str, colour: Rgb) -> String {
    let c = colour.hex();
    let mut s = format!(
        r#"<circle cx="{}" cy="{}" r="{}" fill="none" stroke="{c}" stroke-width="1.5"/>"#,
        num(x),
        num(y),
        num(TARGET_R)
    );
    for (ux, uy) in [(1.0, 0.0), (-1.0, 0.0), (0.0, 1.0), (0.0, -1.0)] {
        s.push_str(&format!(
            r#"<line x1="{}" y1="{}" x2="{}" y2="{}" stroke="{c}" stroke-width="1.2"/>"#,
            num(x + ux * 0.4 * TARGET_R),
            num(y + uy * 0.4 * TARGET_R),
            num(x + ux * 1.6 * TARGET_R),
            num(y + uy * 1.6 * TARGET_R)
        ));
    }
    if !label.is_empty() {
        s.push_str(&text(
            x + 1.2 * TARGET_R,
            y - 1.2 * TARGET_R,
            FONT_TICK,
            "start",
            colour,
            label,
        ));
    }
    s
}

/// Error vectors from each reached point to its target (true scale), drawn under the
/// target markers; an arrowhead only where the vector is long enough to carry one.
pub(crate) fn errors_layer(map: &Map, targets: &[Point2<f64>], reached: &[Point2<f64>]) -> String {
    let mut s = String::new();
    for (t, r) in targets.iter().zip(reached) {
        if !(finite(t) && finite(r)) {
            continue;
        }
        let (tp, rp) = (map.p(*t), map.p(*r));
        let len = (tp.0 - rp.0).hypot(tp.1 - rp.1);
        s.push_str(r#"<g class="error">"#);
        if len > 12.0 {
            s.push_str(&arrow("vector", rp, tp, 7.0, style::TARGET, 1.3, ""));
        } else {
            s.push_str(&line("vector", rp, tp, style::TARGET, 1.3, ""));
        }
        s.push_str(&format!(
            r#"<circle cx="{}" cy="{}" r="1.8" fill="{}"/></g>"#,
            num(rp.0),
            num(rp.1),
            style::TARGET.hex()
        ));
    }
    s
}

/// Numbered target markers.
pub(crate) fn targets_layer(map: &Map, targets: &[Point2<f64>]) -> String {
    let mut s = String::new();
    for (i, t) in targets.iter().enumerate() {
        if !finite(t) {
            continue;
        }
        let (x, y) = map.p(*t);
        s.push_str(&format!(
            r#"<g class="target" data-target="{}">{}</g>"#,
            i + 1,
            reticle(x, y, &(i + 1).to_string(), style::TARGET)
        ));
    }
    s
}

/// The links and the ground line: the first entries of every drawing's legend.
fn links_legend() -> Legend {
    Legend::new(&[
        (Swatch::Line(style::CRANK, LINK_WIDTH, None), "crank"),
        (Swatch::Plate, "coupler"),
        (Swatch::Line(style::OUTPUT, LINK_WIDTH, None), "output link"),
        (
            Swatch::Line(style::MUTED, 1.0, Some(GROUND_DASH)),
            "ground line O2–O4",
        ),
    ])
}

/// Whether a coupler curve has a point to draw.
pub(crate) fn has_curve(curve: &[Vec<Point2<f64>>]) -> bool {
    curve.iter().flatten().any(finite)
}

/// The legend of a linkage drawing: the coupler curve entry only when a curve is drawn, the
/// target entry only when there are targets.
pub(crate) fn linkage_legend(with_curve: bool, with_targets: bool) -> Legend {
    let mut l = links_legend();
    if with_curve {
        l.push(Swatch::Line(style::CURVE, 1.6, None), "coupler curve");
    }
    if with_targets {
        l.push(Swatch::Reticle, "target");
    }
    l
}

/// The linkage drawn to scale at each of `poses`, with its coupler curve, the targets and
/// the error vector from each reached coupler point to its target.
///
/// - `poses`: positions to draw; the first is drawn solid, the others faded. For a synthesis
///   result these are the positions at the targets, in target order.
/// - `curve`: the whole coupler curve, one polyline per branch.
/// - `targets`: target points, numbered from 1 in the figure.
/// - `reached`: the coupler point at each target position (pairs with `targets` by index;
///   extra entries of either are ignored for the error vectors).
/// - `units`: length unit for the axis labels; `size`: figure size in pixels.
///
/// Axes have equal scaling, so the drawing is to scale. The figure contains one
/// `<g class="linkage-pose">` per drawable pose, one `<path class="coupler-curve">`, one
/// `<g class="target">` per target and one `<g class="error">` per target-reached pair.
pub fn linkage_figure(
    linkage: &FourBar,
    poses: &[Pose],
    curve: &[Vec<Point2<f64>>],
    targets: &[Point2<f64>],
    reached: &[Point2<f64>],
    units: &str,
    size: (u32, u32),
) -> String {
    let (lo, hi) = footprint(linkage, poses);
    let bbox = bounds(
        [lo, hi]
            .into_iter()
            .chain(curve.iter().flatten().copied())
            .chain(targets.iter().copied())
            .chain(reached.iter().copied()),
    )
    .unwrap_or((lo, hi));
    let legend = linkage_legend(has_curve(curve), !targets.is_empty());
    let (svg, map) = scene_frame(bbox, units, size, &legend);
    let mut layers = String::new();
    layers.push_str(&curve_layer(&map, curve));
    layers.push_str(&ground_layer(&map, linkage, poses));
    layers.push_str(&poses_layer(&map, linkage, poses));
    layers.push_str(&pivots_layer(&map, linkage));
    layers.push_str(&errors_layer(&map, targets, reached));
    layers.push_str(&targets_layer(&map, targets));
    // Labels keep clear of the targets, their numbers (up and right of each) and the
    // reached points.
    let avoid: Vec<(f64, f64)> = targets
        .iter()
        .chain(reached)
        .filter(|p| finite(p))
        .flat_map(|p| {
            let (x, y) = map.p(*p);
            [(x, y), (x + 1.2 * TARGET_R + 4.0, y - 1.2 * TARGET_R - 4.0)]
        })
        .collect();
    layers.push_str(&joint_labels(&map, linkage, poses, &avoid));
    finish(svg, &layers)
}

/// Distance beyond which a point to avoid no longer steers a label, pixels.
const LABEL_REACH: f64 = 48.0;

/// The labels `O2` and `O4` at the fixed pivots and `A` and `B` at the moving joints of the
/// first of `poses` (the solid one), as `<g class="joint-labels">` of `<text
/// class="joint-label" data-point="...">`. Each label sits just beside its point in the
/// widest free angle between the lines that leave the point (at a pivot the links of every
/// drawn pose, the line of centres and the ground symbol; at a joint the links and coupler
/// plate edges of the first pose) and the points of `avoid` (and the labels already placed)
/// within [`LABEL_REACH`], so that it sits on no line. Nothing without a drawable pose.
pub(crate) fn joint_labels(
    map: &Map,
    linkage: &FourBar,
    poses: &[Pose],
    avoid: &[(f64, f64)],
) -> String {
    let Some(first) = poses
        .iter()
        .map(|p| Joints::of(linkage, p))
        .find(Joints::finite)
    else {
        return String::new();
    };
    let all: Vec<Joints> = poses
        .iter()
        .map(|p| Joints::of(linkage, p))
        .filter(Joints::finite)
        .collect();
    // Page directions of a ground symbol: its middle and its two flanks.
    let symbol = |turn: u8| {
        let a = -std::f64::consts::FRAC_PI_2 * f64::from(turn);
        [-0.55, 0.0, 0.55].map(|d: f64| {
            let t = a + d;
            // Turn 0 hangs down the page (+y); each turn is a quarter counter-clockwise.
            (-t.sin(), t.cos())
        })
    };
    let [(_, turn2), (_, turn4)] = pivot_symbols(linkage, poses);
    let px = |p: Point2<f64>| map.p(p);
    let towards = |from: (f64, f64), to: (f64, f64)| (to.0 - from.0, to.1 - from.1);
    let (o2, o4, a, b, c) = (
        px(first.o2),
        px(first.o4),
        px(first.a),
        px(first.b),
        px(first.c),
    );
    let mut d2: Vec<(f64, f64)> = all.iter().map(|j| towards(o2, px(j.a))).collect();
    d2.push(towards(o2, o4));
    d2.extend(symbol(turn2));
    let mut d4: Vec<(f64, f64)> = all.iter().map(|j| towards(o4, px(j.b))).collect();
    d4.push(towards(o4, o2));
    d4.extend(symbol(turn4));
    // Each point: its name, where it is, the directions its lines leave it, its radius.
    let points = [
        ("O2", o2, d2, style::PIVOT_R),
        ("O4", o4, d4, style::PIVOT_R),
        (
            "A",
            a,
            vec![towards(a, o2), towards(a, b), towards(a, c)],
            JOINT_R,
        ),
        (
            "B",
            b,
            vec![towards(b, a), towards(b, o4), towards(b, c)],
            JOINT_R,
        ),
    ];
    // Every line drawn solid near the points (position 1's links and plate edges, the
    // ground line) as points every few pixels: a line passing close by blocks a label too.
    let segments = [(o2, a), (a, b), (b, o4), (a, c), (b, c), (o2, o4)];
    let along: Vec<(f64, f64)> = segments
        .iter()
        .flat_map(|(p, q)| {
            let n = (dist_px(*p, *q) / 5.0).ceil().clamp(1.0, 400.0) as usize;
            (0..=n).map(move |k| {
                let t = k as f64 / n as f64;
                (p.0 + t * (q.0 - p.0), p.1 + t * (q.1 - p.1))
            })
        })
        .collect();
    let mut placed: Vec<(f64, f64)> = Vec::new();
    let mut s = String::from(r#"<g class="joint-labels">"#);
    for (name, at, mut dirs, radius) in points {
        for q in along.iter().chain(avoid).chain(&placed) {
            let d = towards(at, *q);
            if d.0.hypot(d.1) < LABEL_REACH {
                dirs.push(d);
            }
        }
        let (ux, uy) = widest_gap(&dirs);
        // Half extents of the label's box; its support along (ux, uy) plus a clearance.
        let (hw, hh) = (0.5 * style::text_width(name, FONT_TICK), 0.36 * FONT_TICK);
        let reach = radius + 3.0 + hw * ux.abs() + hh * uy.abs();
        let centre = (at.0 + reach * ux, at.1 + reach * uy);
        placed.push(centre);
        let t = style::halo_text(
            centre.0,
            centre.1 + 0.36 * FONT_TICK,
            FONT_TICK,
            "middle",
            style::INK,
            name,
        );
        s.push_str(&t.replacen(
            "<text ",
            &format!(r#"<text class="joint-label" data-point="{name}" "#),
            1,
        ));
    }
    s.push_str("</g>");
    s
}

/// Distance between two pixel positions.
fn dist_px(p: (f64, f64), q: (f64, f64)) -> f64 {
    (p.0 - q.0).hypot(p.1 - q.1)
}

/// The unit page direction halfway across the widest angle between the directions `dirs`
/// (zero vectors ignored); up and to the right when there are none.
fn widest_gap(dirs: &[(f64, f64)]) -> (f64, f64) {
    let mut angles: Vec<f64> = dirs
        .iter()
        .filter(|(x, y)| x.hypot(*y) > 1e-9 && x.is_finite() && y.is_finite())
        .map(|(x, y)| y.atan2(*x))
        .collect();
    angles.sort_by(f64::total_cmp);
    let best = match angles.as_slice() {
        [] => -std::f64::consts::FRAC_PI_4,
        [only] => only + std::f64::consts::PI,
        _ => {
            let tau = std::f64::consts::TAU;
            let n = angles.len();
            (0..n)
                .map(|i| {
                    let (from, to) = (
                        angles[i],
                        angles[(i + 1) % n] + if i + 1 == n { tau } else { 0.0 },
                    );
                    (to - from, from + 0.5 * (to - from))
                })
                .max_by(|p, q| p.0.total_cmp(&q.0))
                .map_or(0.0, |(_, mid)| mid)
        }
    };
    (best.cos(), best.sin())
}

/// A frame triad: x axis arrow of [`TRIAD_LEN`] pixels and a shorter y axis arrow.
pub(crate) fn triad(
    class: &str,
    origin: (f64, f64),
    phi: f64,
    colour: Rgb,
    dashed: bool,
) -> String {
    // Equal scaling: a world direction (cos, sin) is the pixel direction (cos, -sin).
    let (s, c) = phi.sin_cos();
    let xe = (origin.0 + TRIAD_LEN * c, origin.1 - TRIAD_LEN * s);
    let k = 0.7 * TRIAD_LEN;
    let ye = (origin.0 - k * s, origin.1 - k * c);
    let extra = if dashed {
        r#" stroke-dasharray="4 2.5""#
    } else {
        ""
    };
    format!(
        r#"<g class="{class}">{}{}<circle cx="{}" cy="{}" r="2.2" fill="{}"/></g>"#,
        arrow("axis-x", origin, xe, 7.0, colour, 1.6, extra),
        arrow("axis-y", origin, ye, 6.0, colour, 1.1, extra),
        num(origin.0),
        num(origin.1),
        colour.hex()
    )
}

/// The legend of the motion-generation drawings: the coupler curve entry only when a curve
/// is drawn.
fn motion_legend(with_curve: bool) -> Legend {
    let mut l = links_legend();
    if with_curve {
        l.push(Swatch::Line(style::CURVE, 1.6, None), "coupler curve");
    }
    l.push(Swatch::Line(style::COUPLER, 1.6, None), "coupler frame");
    l.push(
        Swatch::Line(style::TARGET, 1.6, Some("4 2.5")),
        "target frame",
    );
    l
}

/// Motion generation: the linkage to scale at each of `poses` (first solid, others faded)
/// with the coupler frame drawn as an axes triad at each pose, and the target frames as
/// dashed, numbered triads.
///
/// The coupler frame has its origin at the coupler point `C` and its x axis at
/// `theta3 + frame_angle`, where `frame_angle` (radians) is the fixed angle from the coupler
/// line `A -> B` to the frame's x axis; for a design made from target poses it is
/// `phi_1 - theta3` at the first target. `curve` is the coupler curve (may be empty).
/// Contains one `<g class="coupler-frame">` per drawable pose and one
/// `<g class="target-frame">` per target.
pub fn motion_figure(
    linkage: &FourBar,
    poses: &[Pose],
    curve: &[Vec<Point2<f64>>],
    targets: &[FramePose],
    frame_angle: f64,
    units: &str,
    size: (u32, u32),
) -> String {
    let origins: Vec<Point2<f64>> = targets.iter().map(|t| Point2::new(t.x, t.y)).collect();
    let (lo, hi) = footprint(linkage, poses);
    let bbox = bounds(
        [lo, hi]
            .into_iter()
            .chain(curve.iter().flatten().copied())
            .chain(origins.iter().copied()),
    )
    .unwrap_or((lo, hi));
    let (svg, map) = scene_frame(bbox, units, size, &motion_legend(has_curve(curve)));
    let mut layers = motion_layers(&map, linkage, poses, curve, targets, frame_angle);
    // Labels keep clear of the target frames' origins and numbers (down and left of each).
    let avoid: Vec<(f64, f64)> = origins
        .iter()
        .filter(|p| finite(p))
        .flat_map(|p| {
            let (x, y) = map.p(*p);
            [(x, y), (x - TARGET_R - 3.0, y + TARGET_R + 0.5 * FONT_TICK)]
        })
        .collect();
    layers.push_str(&joint_labels(&map, linkage, poses, &avoid));
    finish(svg, &layers)
}

/// Motion generation seen close up: the same drawing as [`motion_figure`], to scale, but
/// framing only the target poses and the coupler point at each of `poses`, so that the
/// frames of poses close together can be told apart. Whatever lies outside (usually the
/// fixed pivots and much of the links) is clipped at the plot's edge by a nested `<svg>`
/// viewport (no `id`s needed).
pub fn motion_closeup(
    linkage: &FourBar,
    poses: &[Pose],
    curve: &[Vec<Point2<f64>>],
    targets: &[FramePose],
    frame_angle: f64,
    units: &str,
    size: (u32, u32),
) -> String {
    let points = targets.iter().map(|t| Point2::new(t.x, t.y)).chain(
        poses
            .iter()
            .map(|p| linkage.coupler_point_at(p.theta2, p.theta3)),
    );
    let (lo, hi) = bounds(points).unwrap_or_else(|| footprint(linkage, poses));
    let legend = motion_legend(has_curve(curve));
    // Room for the frame triads, which are longer than the drawing's usual padding: widen
    // the box by their length at the scale it gets (once more after widening, as the scale
    // shrinks a little).
    let mut bbox = (lo, hi);
    for _ in 0..2 {
        let (_, map) = scene_frame(bbox, units, size, &legend);
        let upp = (map.x.1 - map.x.0) / (map.rect.2 - map.rect.0).max(1.0);
        let grow = upp * (TRIAD_LEN + 10.0 - SCENE_PAD).max(0.0);
        let v = nalgebra::Vector2::new(grow, grow);
        bbox = (lo - v, hi + v);
    }
    let (svg, map) = scene_frame(bbox, units, size, &legend);
    let (x0, y0, x1, y1) = map.rect;
    let (w, h) = (x1 - x0, y1 - y0);
    let layers = format!(
        r#"<svg class="closeup" x="{x}" y="{y}" width="{w}" height="{h}" viewBox="{x} {y} {w} {h}" overflow="hidden">{}</svg>"#,
        motion_layers(&map, linkage, poses, curve, targets, frame_angle),
        x = num(x0),
        y = num(y0),
        w = num(w),
        h = num(h),
    );
    finish(svg, &layers)
}

/// The layers of a motion-generation drawing on `map`.
fn motion_layers(
    map: &Map,
    linkage: &FourBar,
    poses: &[Pose],
    curve: &[Vec<Point2<f64>>],
    targets: &[FramePose],
    frame_angle: f64,
) -> String {
    let origins: Vec<Point2<f64>> = targets.iter().map(|t| Point2::new(t.x, t.y)).collect();
    let mut layers = String::new();
    layers.push_str(&curve_layer(map, curve));
    layers.push_str(&ground_layer(map, linkage, poses));
    layers.push_str(&poses_layer(map, linkage, poses));
    layers.push_str(&pivots_layer(map, linkage));
    let reached: Vec<Point2<f64>> = poses
        .iter()
        .map(|p| linkage.coupler_point_at(p.theta2, p.theta3))
        .collect();
    layers.push_str(&errors_layer(map, &origins, &reached));
    for (i, t) in targets.iter().enumerate() {
        let o = Point2::new(t.x, t.y);
        if !(finite(&o) && t.phi.is_finite()) {
            continue;
        }
        let (x, y) = map.p(o);
        layers.push_str(&format!(
            r#"<g class="target-frame" data-target="{}">{}{}</g>"#,
            i + 1,
            triad("triad", (x, y), t.phi, style::TARGET, true),
            text(
                x - 0.9 * TARGET_R,
                y + 1.0 * TARGET_R + FONT_TICK,
                FONT_TICK,
                "end",
                style::TARGET,
                &(i + 1).to_string()
            )
        ));
    }
    for (i, p) in poses.iter().enumerate() {
        let j = Joints::of(linkage, p);
        let phi = p.theta3 + frame_angle;
        if !(j.finite() && phi.is_finite()) {
            continue;
        }
        let opacity = if i == 0 { 1.0 } else { 0.85 };
        layers.push_str(&format!(
            r#"<g class="coupler-frame" data-pose="{}" opacity="{}">{}</g>"#,
            i + 1,
            num(opacity),
            triad("triad", map.p(j.c), phi, style::COUPLER, false)
        ));
    }
    layers
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::kinematics::sweep::{sweep, SweepOptions};
    use crate::report::curves::{curve_branches, motion_poses};
    use crate::report::svg_test::*;
    use approx::assert_relative_eq;

    // The crank joint A runs on the circle of radius r2 about O2 (closed form), so over a
    // full turn sampled every degree the footprint reaches O2.x +- r2 and O2.y +- r2 to within
    // r2 (1 - cos 0.5 deg); and every joint of every pose lies inside it.
    #[test]
    fn footprint_holds_the_crank_circle_and_every_joint() {
        let l = crank_rocker();
        let sw = sweep(&l, 1f64.to_radians(), &SweepOptions::default());
        let poses = motion_poses(&sw);
        let (lo, hi) = footprint(&l, &poses);
        let o2 = l.input_pivot();
        let r2 = l.input_link();
        let slack = r2 * (1.0 - 0.5f64.to_radians().cos()) + 1e-12;
        assert!(lo.x <= o2.x - r2 + slack && lo.y <= o2.y - r2 + slack);
        assert!(hi.x >= o2.x + r2 - slack && hi.y >= o2.y + r2 - slack);
        for p in &poses {
            let j = Joints::of(&l, p);
            for q in [j.o2, j.o4, j.a, j.b, j.c] {
                assert!(q.x >= lo.x && q.x <= hi.x && q.y >= lo.y && q.y <= hi.y);
            }
        }
        // No poses: the box of the two pivots.
        let (lo, hi) = footprint(&l, &[]);
        assert_relative_eq!(lo.x, 10.0, epsilon = 1e-12);
        assert_relative_eq!(hi.y, -4.0 + 4.2, epsilon = 1e-12);
    }

    /// The group of the solid position 1 of a drawing.
    fn position_one<'a, 'i>(doc: &'a roxmltree::Document<'i>) -> roxmltree::Node<'a, 'i> {
        by_class(doc, "g", "linkage-pose")
            .into_iter()
            .find(|g| g.attribute("data-pose") == Some("1"))
            .expect("position 1")
    }

    fn figure(l: &FourBar, poses: &[Pose], targets: &[Point2<f64>]) -> String {
        let sw = sweep(l, 2f64.to_radians(), &SweepOptions::default());
        let curve = curve_branches(l, &sw);
        let reached: Vec<Point2<f64>> = poses
            .iter()
            .map(|p| l.coupler_point_at(p.theta2, p.theta3))
            .collect();
        linkage_figure(l, poses, &curve, targets, &reached, "mm", (700, 520))
    }

    #[test]
    fn linkage_figure_has_one_group_per_pose_and_the_expected_marks() {
        let l = crank_rocker();
        let poses = closed_poses(&l, &[10.0, 100.0, 190.0]);
        let targets: Vec<Point2<f64>> = poses
            .iter()
            .map(|p| l.coupler_point_at(p.theta2, p.theta3) + nalgebra::Vector2::new(0.3, -0.2))
            .collect();
        let svg = figure(&l, &poses, &targets);
        let doc = parse(&svg);
        let groups = by_class(&doc, "g", "linkage-pose");
        assert_eq!(groups.len(), 3);
        // The first position is solid and drawn last (on top); the others are faded.
        let first = groups.last().expect("three groups");
        assert_eq!(first.attribute("data-pose"), Some("1"));
        assert_eq!(first.attribute("opacity"), Some("1"));
        assert_eq!(groups[0].attribute("opacity"), Some(num(FADED).as_str()));
        let curves = by_class(&doc, "path", "coupler-curve");
        assert_eq!(curves.len(), 1);
        assert_eq!(
            subpaths(&curves[0]),
            1,
            "a crank-rocker has one closed curve"
        );
        assert_eq!(by_class(&doc, "g", "target").len(), 3);
        assert_eq!(by_class(&doc, "g", "error").len(), 3);
        assert_eq!(by_class(&doc, "g", "ground-symbol").len(), 2);
        assert_eq!(by_class(&doc, "line", "hatch").len(), 12);
        let labels: Vec<&str> = doc
            .descendants()
            .filter(|n| n.has_tag_name("text"))
            .filter_map(|n| n.text())
            .map(str::trim)
            .collect();
        assert!(labels.contains(&"x (mm)") && labels.contains(&"y (mm)"));
    }

    // Drawn to scale: with one scale for both axes every link's drawn length is its true
    // length times that scale, whatever its direction, and every joint sits where the
    // closed-form position puts it (y flipped: pixels grow downwards).
    #[test]
    fn linkage_figure_is_drawn_to_scale() {
        let l = crank_rocker();
        let poses = closed_poses(&l, &[0.0, 75.0, 150.0, 225.0, 300.0]);
        let svg = figure(&l, &poses, &[]);
        let doc = parse(&svg);
        let first = position_one(&doc);
        let (o2, _) = ends(&child(&first, "line", "crank"));
        let (o4, _) = ends(&child(&first, "line", "output"));
        let s = dist(o2, o4) / l.ground();
        for g in by_class(&doc, "g", "linkage-pose") {
            let i: usize = g.attribute("data-pose").unwrap().parse().unwrap();
            let p = poses[i - 1];
            let (q2, qa) = ends(&child(&g, "line", "crank"));
            let (q4, qb) = ends(&child(&g, "line", "output"));
            let (ba, bb) = ends(&child(&g, "line", "coupler-bar"));
            // Coordinates carry two decimals: 0.01 px.
            assert_relative_eq!(dist(q2, qa), s * l.input_link(), epsilon = 0.02);
            assert_relative_eq!(dist(q4, qb), s * l.output_link(), epsilon = 0.02);
            assert_relative_eq!(dist(ba, bb), s * l.coupler(), epsilon = 0.02);
            for (px, world) in [(qa, l.joint_a(p.theta2)), (qb, l.joint_b(p.theta4))] {
                let d = world - l.input_pivot();
                assert_relative_eq!(px.0, o2.0 + s * d.x, epsilon = 0.02);
                assert_relative_eq!(px.1, o2.1 - s * d.y, epsilon = 0.02);
            }
            let c = child(&g, "circle", "coupler-point");
            let d = l.coupler_point_at(p.theta2, p.theta3) - l.input_pivot();
            assert_relative_eq!(attr(&c, "cx"), o2.0 + s * d.x, epsilon = 0.02);
            assert_relative_eq!(attr(&c, "cy"), o2.1 - s * d.y, epsilon = 0.02);
        }
    }

    /// Distance from pixel `p` to the segment `a-b`.
    fn to_segment(p: (f64, f64), (a, b): ((f64, f64), (f64, f64))) -> f64 {
        let (dx, dy) = (b.0 - a.0, b.1 - a.1);
        let len2 = dx * dx + dy * dy;
        let t = if len2 > 0.0 {
            (((p.0 - a.0) * dx + (p.1 - a.1) * dy) / len2).clamp(0.0, 1.0)
        } else {
            0.0
        };
        dist(p, (a.0 + t * dx, a.1 + t * dy))
    }

    // The labels O2, O4, A and B sit beside their points (position 1) and off every line
    // that leaves them: the links of position 1 and the ground line.
    #[test]
    fn pivots_and_joints_are_labelled_off_the_lines() {
        let l = crank_rocker();
        for cranks in [
            [10.0, 100.0, 190.0],
            [200.0, 250.0, 300.0],
            [95.0, 0.0, 270.0],
        ] {
            let poses = closed_poses(&l, &cranks);
            let svg = figure(&l, &poses, &[]);
            let doc = parse(&svg);
            let first = position_one(&doc);
            let (o2, a) = ends(&child(&first, "line", "crank"));
            let (o4, b) = ends(&child(&first, "line", "output"));
            let segments = [(o2, a), (o4, b), (a, b), (o2, o4)];
            let labels = by_class(&doc, "text", "joint-label");
            assert_eq!(labels.len(), 4);
            for t in labels {
                let name = t.attribute("data-point").unwrap();
                assert_eq!(t.text(), Some(name));
                let at = match name {
                    "O2" => o2,
                    "O4" => o4,
                    "A" => a,
                    "B" => b,
                    other => panic!("label {other}"),
                };
                // The middle of the text (baseline 0.36 of the font size below it).
                let centre = (attr(&t, "x"), attr(&t, "y") - 0.36 * FONT_TICK);
                let d = dist(centre, at);
                assert!((8.0..30.0).contains(&d), "{name} {d} px from its point");
                for seg in segments {
                    assert!(
                        to_segment(centre, seg) > 5.0,
                        "{name} at {centre:?} on a line {seg:?} (cranks {cranks:?})"
                    );
                }
            }
        }
    }

    // No curve given: no coupler-curve element and no legend entry for it; a coupler point
    // on joint A (p = q = 0) is A itself, so no separate dot either. The ground line is
    // drawn and named in the legend.
    #[test]
    fn nothing_drawn_for_an_absent_coupler_curve_or_point() {
        let l = FourBar::on_x_axis([7.0, 2.0, 9.0, 6.0], crate::linkage::Assembly::Open).unwrap();
        let poses = closed_poses(&l, &[20.0, 80.0]);
        let svg = linkage_figure(&l, &poses, &[], &[], &[], "mm", (600, 450));
        let doc = parse(&svg);
        assert!(by_class(&doc, "path", "coupler-curve").is_empty());
        assert!(by_class(&doc, "circle", "coupler-point").is_empty());
        let legend: Vec<&str> = by_class(&doc, "g", "legend")[0]
            .descendants()
            .filter_map(|n| n.text())
            .collect();
        assert!(!legend.contains(&"coupler curve"), "{legend:?}");
        assert!(legend.contains(&"ground line O2–O4"), "{legend:?}");
        assert_eq!(by_class(&doc, "line", "ground-line").len(), 1);
        // With a curve, both are named.
        let l = crank_rocker();
        let poses = closed_poses(&l, &[20.0]);
        for svg in [
            figure(&l, &poses, &[]),
            motion_figure(
                &l,
                &poses,
                &curve_branches(&l, &sweep(&l, 0.1, &SweepOptions::default())),
                &[],
                0.0,
                "mm",
                (600, 450),
            ),
        ] {
            let doc = parse(&svg);
            assert_eq!(by_class(&doc, "path", "coupler-curve").len(), 1);
            let legend: Vec<&str> = by_class(&doc, "g", "legend")[0]
                .descendants()
                .filter_map(|n| n.text())
                .collect();
            assert!(legend.contains(&"coupler curve"), "{legend:?}");
        }
    }

    #[test]
    fn ground_symbols_turn_away_from_links() {
        use nalgebra::Vector2;
        assert_eq!(symbol_turn(&[]), 0);
        // Ground line to the right, link up: hanging down is free.
        assert_eq!(
            symbol_turn(&[Vector2::new(1.0, 0.0), Vector2::new(0.1, 1.0)]),
            0
        );
        // A link straight down and the ground line to the right: turn to the left.
        assert_eq!(
            symbol_turn(&[Vector2::new(0.0, -1.0), Vector2::new(1.0, 0.0)]),
            3
        );
        // Links down, left and right: only up is free.
        let dirs = [
            Vector2::new(0.0, -1.0),
            Vector2::new(-1.0, 0.0),
            Vector2::new(1.0, 0.0),
        ];
        assert_eq!(symbol_turn(&dirs), 2);
    }

    #[test]
    fn odd_input_still_gives_well_formed_svg() {
        let l = crank_rocker();
        // No poses, no curve, a non-finite target and a unit label with markup in it.
        let svg = linkage_figure(
            &l,
            &[],
            &[],
            &[Point2::new(f64::NAN, 1.0), Point2::new(12.0, 1.0)],
            &[],
            "<in & \"ft\">",
            (10, 10),
        );
        let doc = parse(&svg);
        assert!(by_class(&doc, "g", "linkage-pose").is_empty());
        assert_eq!(by_class(&doc, "g", "target").len(), 1);
        assert!(svg.contains("x (&lt;in &amp; &quot;ft&quot;&gt;)"));
        assert!(!svg.contains("NaN"));
    }

    // The close-up frames the target poses and reached coupler points, not the pivots; the
    // drawing keeps one scale for both axes and clips what lies outside the plot.
    #[test]
    fn motion_closeup_frames_the_targets() {
        let l = crank_rocker();
        let poses = closed_poses(&l, &[20.0, 40.0, 60.0]);
        let targets: Vec<FramePose> = poses
            .iter()
            .map(|p| {
                let c = l.coupler_point_at(p.theta2, p.theta3);
                FramePose {
                    x: c.x + 0.05,
                    y: c.y - 0.05,
                    phi: p.theta3 + 0.2,
                }
            })
            .collect();
        let svg = motion_closeup(&l, &poses, &[], &targets, 0.2, "mm", (640, 480));
        let doc = parse(&svg);
        let clip = by_class(&doc, "svg", "closeup");
        assert_eq!(clip.len(), 1);
        assert_eq!(clip[0].attribute("overflow"), Some("hidden"));
        let (cx, cy) = (attr(&clip[0], "x"), attr(&clip[0], "y"));
        let (cw, ch) = (attr(&clip[0], "width"), attr(&clip[0], "height"));
        assert_eq!(by_class(&doc, "g", "target-frame").len(), 3);
        // Frame origins (the dot at the triad's root) lie well inside the clip.
        for f in by_class(&doc, "g", "coupler-frame") {
            let dot = f
                .descendants()
                .rfind(|n| n.has_tag_name("circle"))
                .expect("origin dot");
            let (x, y) = (attr(&dot, "cx"), attr(&dot, "cy"));
            assert!(x > cx + 30.0 && x < cx + cw - 30.0, "{x}");
            assert!(y > cy + 30.0 && y < cy + ch - 30.0, "{y}");
        }
        // Zoomed in: the crank (length 2) is drawn longer than in the whole-mechanism view.
        let whole = motion_figure(&l, &poses, &[], &targets, 0.2, "mm", (640, 480));
        let crank_px = |svg: &str| {
            let doc = parse(svg);
            let g = position_one(&doc);
            let (p, q) = ends(&child(&g, "line", "crank"));
            dist(p, q)
        };
        assert!(crank_px(&svg) > 1.5 * crank_px(&whole));
    }

    // Motion generation: the coupler frame rides on the coupler point at theta3 +
    // frame_angle; its drawn x axis points that way (pixel y flipped).
    #[test]
    fn motion_figure_draws_coupler_and_target_frames() {
        let l = crank_rocker();
        let poses = closed_poses(&l, &[20.0, 140.0, 260.0]);
        let frame_angle = 0.4;
        let targets: Vec<FramePose> = poses
            .iter()
            .map(|p| {
                let c = l.coupler_point_at(p.theta2, p.theta3);
                FramePose {
                    x: c.x + 0.1,
                    y: c.y,
                    phi: p.theta3 + frame_angle + 0.05,
                }
            })
            .collect();
        let svg = motion_figure(&l, &poses, &[], &targets, frame_angle, "mm", (640, 480));
        let doc = parse(&svg);
        assert_eq!(by_class(&doc, "g", "linkage-pose").len(), 3);
        assert_eq!(by_class(&doc, "g", "target-frame").len(), 3);
        let frames = by_class(&doc, "g", "coupler-frame");
        assert_eq!(frames.len(), 3);
        for f in frames {
            let i: usize = f.attribute("data-pose").unwrap().parse().unwrap();
            let axis = child(&child(&f, "g", "axis-x"), "line", "shaft");
            let ((x1, y1), (x2, y2)) = ends(&axis);
            let drawn = (-(y2 - y1)).atan2(x2 - x1);
            let want = poses[i - 1].theta3 + frame_angle;
            let diff = crate::kinematics::range::wrap_pi(drawn - want);
            assert_relative_eq!(diff, 0.0, epsilon = 2e-3);
        }
    }
}
