//! One motion of the linkage as a self-contained animated SVG: declarative SMIL `<animate>`
//! elements driving the joints and links through a list of positions. No scripts, no
//! external resources; the static drawing (first position) shows where SMIL is off.

use nalgebra::Point2;

use super::draw::{
    bounds, curve_layer, footprint, ground_layer, has_curve, linkage_legend, pivots_layer,
    pose_layer_animated, scene_frame, targets_layer, Joints, PoseAnimation,
};
use super::frame::{finish, Map};
use super::style::num;
use crate::kinematics::position::Pose;
use crate::kinematics::range::InputRange;
use crate::linkage::FourBar;

/// Duration used when the requested one is not a positive finite number of seconds.
pub const DEFAULT_DURATION_S: f64 = 4.0;

/// Frames of the animation: the poses, closed into a loop for a crank that turns fully,
/// or run forward and back for a rocking input; with key times proportional to the crank
/// rotation so that the crank turns at constant speed.
fn frames(linkage: &FourBar, poses: &[Pose]) -> (Vec<Joints>, Vec<f64>) {
    let poses: Vec<Pose> = poses
        .iter()
        .copied()
        .filter(|p| Joints::of(linkage, p).finite())
        .collect();
    let mut seq = poses.clone();
    if poses.len() > 1 {
        if matches!(InputRange::of(linkage), InputRange::FullTurn) {
            // Back to the start: the same position one turn later.
            let mut last = poses[0];
            last.theta2 +=
                std::f64::consts::TAU * (poses[poses.len() - 1].theta2 - poses[0].theta2).signum();
            seq.push(last);
        } else {
            seq.extend(poses.iter().rev().skip(1));
        }
    }
    let mut t = vec![0.0];
    for w in seq.windows(2) {
        let prev = t[t.len() - 1];
        t.push(prev + (w[1].theta2 - w[0].theta2).abs());
    }
    let total = t[t.len() - 1];
    let times = if total > 0.0 && total.is_finite() {
        t.iter().map(|v| v / total).collect()
    } else {
        let n = (seq.len().max(2) - 1) as f64;
        (0..seq.len()).map(|i| i as f64 / n).collect()
    };
    (seq.iter().map(|p| Joints::of(linkage, p)).collect(), times)
}

/// An `<animate>` of `attr` through `values` at `key_times`.
fn animate(attr: &str, values: &[String], key_times: &str, dur: f64) -> String {
    format!(
        r#"<animate attributeName="{attr}" values="{}" keyTimes="{key_times}" dur="{}s" calcMode="linear" repeatCount="indefinite"/>"#,
        values.join(";"),
        num(dur)
    )
}

/// The moving links of the first frame, with `<animate>` children for every coordinate
/// that changes over the motion.
fn moving_layer(map: &Map, seq: &[Joints], times: &[f64], dur: f64) -> String {
    if seq.len() < 2 {
        return pose_layer_animated(map, &seq[0], 0, true, &PoseAnimation::default());
    }
    let kt: Vec<String> = times.iter().map(|t| format!("{t:.6}")).collect();
    let kt = kt.join(";");
    let xs = |f: fn(&Joints) -> Point2<f64>| -> Vec<String> {
        seq.iter().map(|j| num(map.px(f(j).x))).collect()
    };
    let ys = |f: fn(&Joints) -> Point2<f64>| -> Vec<String> {
        seq.iter().map(|j| num(map.py(f(j).y))).collect()
    };
    let (ax, ay) = (xs(|j| j.a), ys(|j| j.a));
    let (bx, by) = (xs(|j| j.b), ys(|j| j.b));
    let (cx, cy) = (xs(|j| j.c), ys(|j| j.c));
    let end = |x: &[String], y: &[String], n: &str| {
        animate(&format!("x{n}"), x, &kt, dur) + &animate(&format!("y{n}"), y, &kt, dur)
    };
    let centre =
        |x: &[String], y: &[String]| animate("cx", x, &kt, dur) + &animate("cy", y, &kt, dur);
    let plate: Vec<String> = seq
        .iter()
        .map(|j| format!("{} {} {}", map.pt(j.a), map.pt(j.b), map.pt(j.c)))
        .collect();
    let anim = PoseAnimation {
        output: end(&bx, &by, "2"),
        crank: end(&ax, &ay, "2"),
        plate: animate("points", &plate, &kt, dur),
        bar: end(&ax, &ay, "1") + &end(&bx, &by, "2"),
        joint_a: centre(&ax, &ay),
        joint_b: centre(&bx, &by),
        point: centre(&cx, &cy),
    };
    pose_layer_animated(map, &seq[0], 0, true, &anim)
}

/// One motion of the linkage as an animated SVG (SMIL, no scripts), drawn to scale over the
/// coupler curve and the numbered targets.
///
/// `poses`: positions over one motion in the order the crank runs through them (e.g.
/// [`motion_poses`](super::curves::motion_poses), in increasing crank angle, or reversed for
/// a crank that runs clockwise); a crank that turns fully loops round in that direction, a
/// rocking input runs forward and back. `curve` may be empty (no coupler curve drawn). The crank moves at constant speed, one cycle every
/// `duration_s` seconds ([`DEFAULT_DURATION_S`] if that is not positive and finite).
/// The moving links are one `<g class="linkage-pose">` whose elements carry `<animate>`
/// children; the first position is the static fallback.
pub fn animation_svg(
    linkage: &FourBar,
    poses: &[Pose],
    curve: &[Vec<Point2<f64>>],
    targets: &[Point2<f64>],
    units: &str,
    duration_s: f64,
    size: (u32, u32),
) -> String {
    let dur = if duration_s.is_finite() && duration_s > 0.0 {
        duration_s
    } else {
        DEFAULT_DURATION_S
    };
    let (lo, hi) = footprint(linkage, poses);
    let bbox = bounds(
        [lo, hi]
            .into_iter()
            .chain(curve.iter().flatten().copied())
            .chain(targets.iter().copied()),
    )
    .unwrap_or((lo, hi));
    let (svg, map) = scene_frame(
        bbox,
        units,
        size,
        &linkage_legend(has_curve(curve), !targets.is_empty()),
    );
    let mut layers = String::new();
    layers.push_str(&curve_layer(&map, curve));
    layers.push_str(&ground_layer(&map, linkage, poses));
    layers.push_str(&targets_layer(&map, targets));
    let (seq, times) = frames(linkage, poses);
    if !seq.is_empty() {
        layers.push_str(&moving_layer(&map, &seq, &times, dur));
    }
    layers.push_str(&pivots_layer(&map, linkage));
    finish(svg, &layers)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::kinematics::sweep::{sweep, SweepOptions};
    use crate::linkage::{Assembly, CouplerPoint};
    use crate::report::curves::{curve_branches, motion_poses};
    use crate::report::svg_test::*;
    use approx::assert_relative_eq;
    use roxmltree::Node;

    /// Numbers of an `<animate attributeName=attr>` child of `n`.
    fn values(n: &Node, attr: &str) -> Vec<f64> {
        n.children()
            .find(|c| c.has_tag_name("animate") && c.attribute("attributeName") == Some(attr))
            .unwrap_or_else(|| panic!("no animation of {attr}"))
            .attribute("values")
            .expect("values")
            .split(';')
            .map(|v| v.parse().expect("number"))
            .collect()
    }

    fn animated(l: &FourBar, step_deg: f64) -> (String, usize) {
        let sw = sweep(l, step_deg.to_radians(), &SweepOptions::default());
        let poses = motion_poses(&sw);
        let curve = curve_branches(l, &sw);
        let svg = animation_svg(l, &poses, &curve, &[], "mm", 3.0, (600, 450));
        (svg, poses.len())
    }

    // Every frame keeps the crank joint on its circle about O2 and the coupler bar at its
    // length: the loop-closure geometry of the closed form, frame by frame.
    #[test]
    fn crank_turn_loops_at_constant_link_lengths() {
        let l = crate::report::svg_test::crank_rocker();
        let (svg, n) = animated(&l, 5.0);
        assert!(!svg.contains("<script"));
        let doc = parse(&svg);
        let groups = by_class(&doc, "g", "linkage-pose");
        assert_eq!(groups.len(), 1);
        let g = groups[0];
        let crank = child(&g, "line", "crank");
        let bar = child(&g, "line", "coupler-bar");
        let (o2, a0) = ends(&crank);
        let (ax, ay) = (values(&crank, "x2"), values(&crank, "y2"));
        // One frame per pose plus the return to the first.
        assert_eq!(ax.len(), n + 1);
        assert_relative_eq!(ax[0], a0.0, epsilon = 1e-9);
        assert_relative_eq!(ax[0], ax[n], epsilon = 0.011);
        let (o4, _) = ends(&child(&g, "line", "output"));
        let s = dist(o2, o4) / l.ground();
        let (bx1, by1) = (values(&bar, "x1"), values(&bar, "y1"));
        let (bx2, by2) = (values(&bar, "x2"), values(&bar, "y2"));
        for k in 0..ax.len() {
            assert_relative_eq!(dist(o2, (ax[k], ay[k])), s * l.input_link(), epsilon = 0.02);
            assert_relative_eq!(
                dist((bx1[k], by1[k]), (bx2[k], by2[k])),
                s * l.coupler(),
                epsilon = 0.02
            );
        }
        let anim = g
            .descendants()
            .find(|c| c.has_tag_name("animate"))
            .expect("animated");
        assert_eq!(anim.attribute("dur"), Some("3s"));
        assert_eq!(anim.attribute("repeatCount"), Some("indefinite"));
        let times: Vec<f64> = anim
            .attribute("keyTimes")
            .unwrap()
            .split(';')
            .map(|t| t.parse().unwrap())
            .collect();
        assert_eq!(times.len(), ax.len());
        assert_relative_eq!(times[0], 0.0);
        assert_relative_eq!(times[times.len() - 1], 1.0);
        assert!(times.windows(2).all(|w| w[1] > w[0]));
    }

    #[test]
    fn rocking_input_goes_forward_and_back() {
        // Triple rocker: the input rocks between two toggles.
        let l = FourBar::new(
            nalgebra::Point2::new(0.0, 0.0),
            nalgebra::Point2::new(5.0, 0.0),
            4.0,
            9.0,
            6.0,
            CouplerPoint { p: 1.0, q: 0.5 },
            Assembly::Open,
        )
        .unwrap();
        let (svg, n) = animated(&l, 5.0);
        let doc = parse(&svg);
        let g = by_class(&doc, "g", "linkage-pose")[0];
        let ax = values(&child(&g, "line", "crank"), "x2");
        assert_eq!(ax.len(), 2 * n - 1);
        for k in 0..n {
            assert_relative_eq!(ax[k], ax[2 * n - 2 - k], epsilon = 1e-9);
        }
    }

    #[test]
    fn no_motion_or_one_position_is_still_a_drawing() {
        let l = crate::report::svg_test::crank_rocker();
        let svg = animation_svg(&l, &[], &[], &[], "mm", f64::NAN, (300, 200));
        let doc = parse(&svg);
        assert!(by_class(&doc, "g", "linkage-pose").is_empty());
        let one = crate::report::svg_test::closed_poses(&l, &[30.0]);
        let svg = animation_svg(&l, &one, &[], &[], "mm", -1.0, (300, 200));
        let doc = parse(&svg);
        assert_eq!(by_class(&doc, "g", "linkage-pose").len(), 1);
        assert!(!svg.contains("<animate"));
    }
}
