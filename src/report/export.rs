//! Files for other programs: the linkage as a to-scale SVG for CAD ([`cad_svg`]) and the
//! motion as CSV ([`csv_curve`]). Both return text; writing it is the caller's business.

use nalgebra::Point2;

use super::deg_wrapped;
use super::draw::{footprint, Joints};
use super::style::esc;
use super::table::{header_unit, PoseAngles};
use crate::kinematics::position::Pose;
use crate::linkage::FourBar;

/// Radius of the pivot and joint circles in the CAD export, as a fraction of the largest
/// extent of the drawn position. The circles are markers: their centres are the pivots.
pub const CAD_CIRCLE_FRACTION: f64 = 0.015;
/// Margin around the drawn position in the CAD export, as a fraction of its largest extent
/// (added to the circle radius).
pub const CAD_MARGIN_FRACTION: f64 = 0.05;

/// SVG length units a CAD program understands; any other unit label gives unitless
/// `width`/`height` (SVG user units).
const SVG_LENGTH_UNITS: [&str; 6] = ["mm", "cm", "in", "pt", "pc", "px"];

/// `v` rounded to three significant digits.
fn round_sig(v: f64) -> f64 {
    if v == 0.0 || !v.is_finite() {
        return v;
    }
    let scale = 10f64.powi(2 - v.abs().log10().floor() as i32);
    (v * scale).round() / scale
}

/// A coordinate at full precision (shortest round-trip form), never `-0`.
fn full(v: f64) -> String {
    format!("{}", v + 0.0)
}

/// The linkage at `pose` drawn to scale for import into CAD: one SVG user unit is one
/// `units` (`width`/`height` carry the unit when it is an SVG length unit such as `mm`),
/// and the `viewBox` is the bounding box of the position plus a margin.
///
/// SVG's y axis points down while the design's points up, so every y coordinate is written
/// negated (`svg_y = -y`); no transform is used, so importers that ignore transforms still
/// get the true geometry, and those that flip SVG's y axis show the design upright.
///
/// Elements, each with an `id` a CAD user can pick: circles `O2`, `O4` (fixed pivots), `A`,
/// `B` (moving joints), `C` (coupler point); lines `ground` (`O2-O4`), `crank` (`O2-A`),
/// `coupler` (`A-B`), `output` (`O4-B`); and the polygon `coupler-plate` (`A-B-C`). No text
/// takes part in the layout. Being a standalone file, it is not meant to be inlined in a
/// page beside another copy (the ids would clash).
pub fn cad_svg(linkage: &FourBar, pose: &Pose, units: &str) -> String {
    let j = Joints::of(linkage, pose);
    let (lo, hi) = footprint(linkage, std::slice::from_ref(pose));
    let span = (hi.x - lo.x).max(hi.y - lo.y).max(linkage.size() * 1e-6);
    // Marker sizes rounded to three significant digits: they are not geometry.
    let r = round_sig(CAD_CIRCLE_FRACTION * span);
    let m = round_sig(r + CAD_MARGIN_FRACTION * span);
    // viewBox in SVG coordinates: x as is, y negated, so the top edge is -(max y) - margin.
    let (vx, vy) = (lo.x - m, -hi.y - m);
    let (vw, vh) = (hi.x - lo.x + 2.0 * m, hi.y - lo.y + 2.0 * m);
    let unit = if SVG_LENGTH_UNITS.contains(&units) {
        units
    } else {
        ""
    };
    let stroke = round_sig(0.25 * r);
    let pt = |p: Point2<f64>| (full(p.x), full(-p.y));
    let line = |id: &str, p: Point2<f64>, q: Point2<f64>| {
        let ((x1, y1), (x2, y2)) = (pt(p), pt(q));
        format!(r#"<line id="{id}" x1="{x1}" y1="{y1}" x2="{x2}" y2="{y2}"/>"#)
    };
    let circle = |id: &str, p: Point2<f64>| {
        let (cx, cy) = pt(p);
        format!(r#"<circle id="{id}" cx="{cx}" cy="{cy}" r="{}"/>"#, full(r))
    };
    let plate = [j.a, j.b, j.c]
        .iter()
        .map(|p| {
            let (x, y) = pt(*p);
            format!("{x},{y}")
        })
        .collect::<Vec<_>>()
        .join(" ");
    let [r1, r2, r3, r4] = linkage.lengths();
    let cp = linkage.coupler_point();
    let mut s = String::from("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
    s.push_str(&format!(
        r#"<svg xmlns="http://www.w3.org/2000/svg" version="1.1" width="{}{unit}" height="{}{unit}" viewBox="{} {} {} {}">"#,
        full(vw),
        full(vh),
        full(vx),
        full(vy),
        full(vw),
        full(vh),
    ));
    s.push('\n');
    s.push_str(&format!(
        "  <title>four-bar linkage, 1 user unit = 1 {}</title>\n",
        esc(units)
    ));
    s.push_str(&format!(
        "  <desc>Kinematic layout only. y is negated (svg y = -y). ground {} crank {} coupler {} output {} coupler point p {} q {}; crank at {} deg from the ground line O2-O4; directions counter-clockwise from +x: ground {} deg, crank {} deg, coupler {} deg, output {} deg.</desc>\n",
        full(r1),
        full(r2),
        full(r3),
        full(r4),
        full(cp.p),
        full(cp.q),
        deg_wrapped(pose.theta2 - linkage.ground_angle()),
        deg_wrapped(linkage.ground_angle()),
        deg_wrapped(pose.theta2),
        deg_wrapped(pose.theta3),
        deg_wrapped(pose.theta4)
    ));
    s.push_str(&format!(
        "  <g id=\"linkage\" fill=\"none\" stroke=\"#000000\" stroke-width=\"{}\" stroke-linecap=\"round\" stroke-linejoin=\"round\">\n",
        full(stroke)
    ));
    for l in [
        line("ground", j.o2, j.o4),
        line("crank", j.o2, j.a),
        line("coupler", j.a, j.b),
        line("output", j.o4, j.b),
        format!(r#"<polygon id="coupler-plate" points="{plate}"/>"#),
        circle("O2", j.o2),
        circle("O4", j.o4),
        circle("A", j.a),
        circle("B", j.b),
        circle("C", j.c),
    ] {
        s.push_str("    ");
        s.push_str(&l);
        s.push('\n');
    }
    s.push_str("  </g>\n</svg>\n");
    s
}

/// The motion as CSV, one row per pose in the given order: the angles by role (crank,
/// coupler and output from the ground line `O2 -> O4`, the transmission angle), the coupler
/// point `x`, `y` in `units`, then the link directions from the +x axis for CAD; the columns
/// of [`sweep`](super::table::rows_to_csv) without the branch and the rates (see
/// [`PoseAngles`] for the references). Angles in degrees, `[0, 360)` (`transmission_deg` in
/// `[0, 180]`). Poses with non-finite angles are skipped.
pub fn csv_curve(linkage: &FourBar, poses: &[Pose], units: &str) -> String {
    let u = header_unit(units);
    let (a, b) = PoseAngles::CSV_HEADS;
    let mut s = format!("{a},coupler_point_x_{u},coupler_point_y_{u},{b}\n");
    for p in poses {
        let c = linkage.coupler_point_at(p.theta2, p.theta3);
        if !(c.x.is_finite() && c.y.is_finite() && p.theta4.is_finite()) {
            continue;
        }
        let (x, y) = PoseAngles::of(linkage, p).csv_cells();
        s.push_str(&format!("{x},{},{},{y}\n", full(c.x), full(c.y)));
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::kinematics::sweep::{sweep, SweepOptions};
    use crate::report::curves::motion_poses;
    use crate::report::svg_test::*;
    use approx::assert_relative_eq;

    // The export's coordinates are the closed-form joint positions themselves (y negated),
    // exactly, and its viewBox is the position's bounding box with one margin all round.
    #[test]
    fn cad_coordinates_are_the_joint_positions() {
        let l = crank_rocker();
        let pose = closed_poses(&l, &[63.0])[0];
        let svg = cad_svg(&l, &pose, "mm");
        let doc = parse(&svg);
        let by_id = |id: &str| {
            doc.descendants()
                .find(|n| n.attribute("id") == Some(id))
                .unwrap_or_else(|| panic!("no element {id}"))
        };
        let points = [
            ("O2", l.input_pivot()),
            ("O4", l.output_pivot()),
            ("A", l.joint_a(pose.theta2)),
            ("B", l.joint_b(pose.theta4)),
            ("C", l.coupler_point_at(pose.theta2, pose.theta3)),
        ];
        for (id, p) in points {
            let c = by_id(id);
            assert!(c.has_tag_name("circle"), "{id}");
            assert_relative_eq!(attr(&c, "cx"), p.x, max_relative = 1e-15);
            assert_relative_eq!(attr(&c, "cy"), -p.y, max_relative = 1e-15);
        }
        for (id, from, to) in [
            ("ground", "O2", "O4"),
            ("crank", "O2", "A"),
            ("coupler", "A", "B"),
            ("output", "O4", "B"),
        ] {
            let n = by_id(id);
            assert!(n.has_tag_name("line"), "{id}");
            let ((x1, y1), (x2, y2)) = ends(&n);
            let (f, t) = (by_id(from), by_id(to));
            assert_relative_eq!(x1, attr(&f, "cx"), max_relative = 1e-15);
            assert_relative_eq!(y1, attr(&f, "cy"), max_relative = 1e-15);
            assert_relative_eq!(x2, attr(&t, "cx"), max_relative = 1e-15);
            assert_relative_eq!(y2, attr(&t, "cy"), max_relative = 1e-15);
        }
        assert!(by_id("coupler-plate").has_tag_name("polygon"));
        assert!(!svg.contains("<text"));

        let root = doc.root_element();
        let vb: Vec<f64> = root
            .attribute("viewBox")
            .unwrap()
            .split_whitespace()
            .map(|v| v.parse().unwrap())
            .collect();
        let (lo, hi) = footprint(&l, &[pose]);
        let m = lo.x - vb[0];
        assert!(m > 0.0 && m < 0.2 * (hi.x - lo.x));
        assert_relative_eq!(vb[1], -hi.y - m, max_relative = 1e-12);
        assert_relative_eq!(vb[2], hi.x - lo.x + 2.0 * m, max_relative = 1e-12);
        assert_relative_eq!(vb[3], hi.y - lo.y + 2.0 * m, max_relative = 1e-12);
        assert_eq!(
            root.attribute("width"),
            Some(format!("{}mm", vb[2]).as_str())
        );
        // A unit SVG does not know gives plain user units.
        let other = cad_svg(&l, &pose, "furlong");
        let doc = parse(&other);
        assert_eq!(
            doc.root_element().attribute("width"),
            Some(format!("{}", vb[2]).as_str())
        );
    }

    // Columns against independent closed forms: coupler point from FourBar, transmission
    // angle from the law of cosines on triangle A-B-O4 (FourBar::transmission_angle), and
    // each angle from the ground line equal to its global direction less the ground line's.
    #[test]
    fn csv_rows_match_the_closed_forms() {
        let l = crank_rocker();
        let sw = sweep(&l, 10f64.to_radians(), &SweepOptions::default());
        let poses = motion_poses(&sw);
        let csv = csv_curve(&l, &poses, "m m");
        let mut lines = csv.lines();
        assert_eq!(
            lines.next(),
            Some(
                "crank_from_ground_deg,coupler_from_ground_deg,output_from_ground_deg,\
                 transmission_deg,coupler_point_x_m_m,coupler_point_y_m_m,crank_global_deg,\
                 coupler_global_deg,output_global_deg"
            )
        );
        let rows: Vec<Vec<f64>> = lines
            .map(|r| r.split(',').map(|v| v.parse().unwrap()).collect())
            .collect();
        assert_eq!(rows.len(), poses.len());
        let t1 = l.ground_angle().to_degrees();
        for (r, p) in rows.iter().zip(&poses) {
            let c = l.coupler_point_at(p.theta2, p.theta3);
            assert_relative_eq!(r[4], c.x, max_relative = 1e-15);
            assert_relative_eq!(r[5], c.y, max_relative = 1e-15);
            let mu = l.transmission_angle(p.theta2).unwrap().to_degrees();
            assert_relative_eq!(r[3], mu, epsilon = 1e-7);
            for (from_ground, global, exact) in
                [(0, 6, p.theta2), (1, 7, p.theta3), (2, 8, p.theta4)]
            {
                let g = exact.to_degrees().rem_euclid(360.0);
                assert!(
                    (r[global] - g).abs() < 1e-7 || (r[global] - g).abs() > 360.0 - 1e-7,
                    "{r:?}"
                );
                let d = (r[from_ground] - (r[global] - t1)).rem_euclid(360.0);
                assert!(!(1e-7..=360.0 - 1e-7).contains(&d), "{r:?}");
                assert!((0.0..360.0).contains(&r[from_ground]));
            }
        }
    }
}
