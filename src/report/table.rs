//! The `sweep` table: one row per crank angle, as JSON rows or CSV; and the angles of one
//! position by role, shared with the curve export.
//!
//! Column names say the role and the reference of each angle: `_from_ground` angles are
//! measured counter-clockwise from the ground line `O2 -> O4` (the crank angles a scenario's
//! targets are tied to), `_global` ones counter-clockwise from the +x axis of the design's
//! coordinates (link directions for CAD). All in degrees, wrapped into `[0, 360)`.

use serde::Serialize;

use super::{deg, deg_wrapped};
use crate::kinematics::position::Pose;
use crate::kinematics::rates::rates;
use crate::kinematics::sweep::{sweep_from, SweepOptions};
use crate::linkage::FourBar;

/// Name of the `sweep --json` format.
pub const SWEEP_FORMAT: &str = "crankwright sweep";
/// Version of the `sweep --json` format and of the sweep and curve CSV columns: 2 since
/// the crank angle is measured from the ground line and the columns are named by role and
/// reference (version 1, unversioned, had `theta2`, `theta3`, `theta4` from +x).
pub const SWEEP_FORMAT_VERSION: u32 = 2;

/// The angle convention of the sweep table and the curve export, as stated in them.
pub const ANGLES: &str = "degrees counter-clockwise, in [0, 360): *_from_ground from the \
ground line O2 -> O4, *_global from the +x axis; transmission_deg is the angle at B between \
coupler and output, in [0, 180]";

/// The angles of one position by role, degrees (see the module docs for the references).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct PoseAngles {
    /// Crank angle, direction `O2 -> A` from the ground line.
    pub crank_from_ground_deg: f64,
    /// Coupler direction `A -> B` from the ground line.
    pub coupler_from_ground_deg: f64,
    /// Output link direction `O4 -> B` from the ground line.
    pub output_from_ground_deg: f64,
    /// Transmission angle `mu` at `B`, `[0, 180]`.
    pub transmission_deg: f64,
    /// Crank direction `O2 -> A` from +x.
    pub crank_global_deg: f64,
    /// Coupler direction `A -> B` from +x.
    pub coupler_global_deg: f64,
    /// Output link direction `O4 -> B` from +x.
    pub output_global_deg: f64,
}

impl PoseAngles {
    /// The angles of `pose` of `linkage`.
    pub fn of(linkage: &FourBar, pose: &Pose) -> Self {
        let t1 = linkage.ground_angle();
        PoseAngles {
            crank_from_ground_deg: deg_wrapped(pose.theta2 - t1),
            coupler_from_ground_deg: deg_wrapped(pose.theta3 - t1),
            output_from_ground_deg: deg_wrapped(pose.theta4 - t1),
            transmission_deg: deg((pose.theta3 - pose.theta4).cos().clamp(-1.0, 1.0).acos()),
            crank_global_deg: deg_wrapped(pose.theta2),
            coupler_global_deg: deg_wrapped(pose.theta3),
            output_global_deg: deg_wrapped(pose.theta4),
        }
    }

    /// CSV header cells of the angles before the coupler point, and those after it.
    pub const CSV_HEADS: (&'static str, &'static str) = (
        "crank_from_ground_deg,coupler_from_ground_deg,output_from_ground_deg,transmission_deg",
        "crank_global_deg,coupler_global_deg,output_global_deg",
    );

    /// CSV cells of the angles before the coupler point, and those after it.
    pub fn csv_cells(&self) -> (String, String) {
        (
            format!(
                "{},{},{},{}",
                self.crank_from_ground_deg,
                self.coupler_from_ground_deg,
                self.output_from_ground_deg,
                self.transmission_deg
            ),
            format!(
                "{},{},{}",
                self.crank_global_deg, self.coupler_global_deg, self.output_global_deg
            ),
        )
    }
}

/// A unit label made safe for a CSV header (letters and digits kept, others become `_`).
pub fn header_unit(units: &str) -> String {
    let u: String = units
        .chars()
        .map(|c| if c.is_ascii_alphanumeric() { c } else { '_' })
        .collect();
    if u.is_empty() {
        "units".to_owned()
    } else {
        u
    }
}

/// One row of a sweep: the position's angles by role, the coupler point in the design's
/// units, the coupler's and output's angular velocity (rad/s) and acceleration (rad/s^2),
/// counter-clockwise positive.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SweepRow {
    /// Branch of the design's assembly the row lies on (1-based; a rocking input may move
    /// on two separate arcs).
    pub branch: usize,
    /// The angles.
    #[serde(flatten)]
    pub angles: PoseAngles,
    /// Coupler point x.
    pub coupler_point_x: f64,
    /// Coupler point y.
    pub coupler_point_y: f64,
    /// Coupler angular velocity; `None` at a toggle, where the rates are unbounded.
    pub coupler_rate_rad_s: Option<f64>,
    /// Output angular velocity; `None` at a toggle.
    pub output_rate_rad_s: Option<f64>,
    /// Coupler angular acceleration; `None` at a toggle.
    pub coupler_accel_rad_s2: Option<f64>,
    /// Output angular acceleration; `None` at a toggle.
    pub output_accel_rad_s2: Option<f64>,
}

impl SweepRow {
    /// The four rates: coupler and output velocity, coupler and output acceleration.
    pub fn rates(&self) -> [Option<f64>; 4] {
        [
            self.coupler_rate_rad_s,
            self.output_rate_rad_s,
            self.coupler_accel_rad_s2,
            self.output_accel_rad_s2,
        ]
    }
}

/// Rows of a sweep at crank angles `k * step_deg` degrees from the ground line where the
/// design assembles, for a crank speed of `rpm` revolutions per minute (positive
/// counter-clockwise), constant. Rows run branch by branch, each in counter-clockwise order
/// of the crank from where its motion begins: from the ground line for a full turn, from the
/// clockwise toggle for a rocking input (so an arc across the ground line is listed in the
/// order the crank passes it, e.g. 350, 355, 0, 5). A row on a toggle has its exact pose and
/// no rates.
pub fn sweep_rows(linkage: &FourBar, step_deg: f64, rpm: f64) -> Vec<SweepRow> {
    let w2 = rpm * std::f64::consts::TAU / 60.0;
    let sw = sweep_from(
        linkage,
        step_deg.to_radians(),
        linkage.ground_angle(),
        &SweepOptions::default(),
    );
    sw.branches
        .iter()
        .enumerate()
        .flat_map(|(i, b)| b.poses.iter().map(move |p| (i + 1, p)))
        .map(|(branch, p)| {
            let r = rates(linkage, p, w2, 0.0);
            let point = linkage.coupler_point_at(p.theta2, p.theta3);
            SweepRow {
                branch,
                angles: PoseAngles::of(linkage, p),
                coupler_point_x: point.x,
                coupler_point_y: point.y,
                coupler_rate_rad_s: r.map(|r| r.omega3),
                output_rate_rad_s: r.map(|r| r.omega4),
                coupler_accel_rad_s2: r.map(|r| r.alpha3),
                output_accel_rad_s2: r.map(|r| r.alpha4),
            }
        })
        .collect()
}

/// CSV text of the rows, with a header line naming the columns with their units and
/// references (see the module docs).
pub fn rows_to_csv(rows: &[SweepRow], units: &str) -> String {
    let u = header_unit(units);
    let (a, b) = PoseAngles::CSV_HEADS;
    let mut s = format!(
        "branch,{a},coupler_point_x_{u},coupler_point_y_{u},coupler_rate_rad_s,output_rate_rad_s,coupler_accel_rad_s2,output_accel_rad_s2,{b}\n"
    );
    for r in rows {
        // An empty field where a rate is unbounded (at a toggle).
        let [w3, w4, a3, a4] = r
            .rates()
            .map(|v| v.map_or(String::new(), |v| v.to_string()));
        let (x, y) = r.angles.csv_cells();
        s.push_str(&format!(
            "{},{x},{},{},{w3},{w4},{a3},{a4},{y}\n",
            r.branch, r.coupler_point_x, r.coupler_point_y
        ));
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::linkage::{Assembly, CouplerPoint};
    use approx::assert_relative_eq;
    use nalgebra::Point2;

    // A triple-rocker (s + l = 3 + 8 > 4 + 5.5; |A - O4| from 5 to 11 > r3 + r4) whose input
    // rocks on one arc between extended toggles at phi = -+a, cos a = (r1^2 + r2^2 - (r3 + r4)^2) / (2 r1 r2) (law of cosines,
    // |A - O4| = r3 + r4): an arc across the ground line. Its rows come in the crank's order
    // through the ground line, and each row's crank angle from the ground line gives the
    // crank pin where the row's global crank angle puts it.
    #[test]
    fn an_arc_across_the_ground_line_is_listed_in_motion_order() {
        let tilt = 0.6f64;
        let (r1, r2, r3, r4) = (8.0, 3.0, 4.0, 5.5);
        let l = FourBar::new(
            Point2::new(1.0, 2.0),
            Point2::new(1.0 + r1 * tilt.cos(), 2.0 + r1 * tilt.sin()),
            r2,
            r3,
            r4,
            CouplerPoint { p: 2.0, q: 1.0 },
            Assembly::Open,
        )
        .unwrap();
        let a = ((r1 * r1 + r2 * r2 - (r3 + r4) * (r3 + r4)) / (2.0 * r1 * r2))
            .acos()
            .to_degrees();
        let rows = sweep_rows(&l, 5.0, 60.0);
        let cranks: Vec<f64> = rows
            .iter()
            .map(|r| r.angles.crank_from_ground_deg)
            .collect();
        let n = (a / 5.0).floor() as usize;
        assert_eq!(cranks.len(), 2 * n + 1, "{cranks:?}");
        for (k, c) in cranks.iter().enumerate() {
            let want = (5.0 * (k as f64 - n as f64)).rem_euclid(360.0);
            assert_relative_eq!(*c, want, epsilon = 1e-9);
        }
        // The angles are rounded to 1e-9 degree in the rows.
        for r in &rows {
            let t2 = r.angles.crank_global_deg.to_radians();
            let phi = r.angles.crank_from_ground_deg.to_radians();
            assert_relative_eq!(
                (l.joint_a(t2) - l.joint_a(phi + tilt)).norm(),
                0.0,
                epsilon = 1e-9
            );
        }
    }
}
