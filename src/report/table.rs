//! The `sweep` table: one row per crank angle, as JSON rows or CSV.

use serde::Serialize;

use super::{deg, deg_wrapped};
use crate::kinematics::rates::rates;
use crate::kinematics::sweep::{sweep, SweepOptions};
use crate::linkage::FourBar;

/// One row of a sweep. Angles in degrees (global, counter-clockwise from +x), rates in rad/s
/// and rad/s^2, coupler point in the design's units.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SweepRow {
    /// Crank angle, `[0, 360)`.
    pub theta2: f64,
    /// Coupler angle, `[0, 360)`.
    pub theta3: f64,
    /// Output link angle, `[0, 360)`.
    pub theta4: f64,
    /// Transmission angle, `[0, 180]`.
    pub mu: f64,
    /// Coupler point x.
    pub cx: f64,
    /// Coupler point y.
    pub cy: f64,
    /// Coupler angular velocity.
    pub omega3: f64,
    /// Output angular velocity.
    pub omega4: f64,
    /// Coupler angular acceleration.
    pub alpha3: f64,
    /// Output angular acceleration.
    pub alpha4: f64,
}

/// Rows of a sweep at every multiple of `step_deg` degrees where the design assembles, for a
/// crank speed of `rpm` revolutions per minute (positive counter-clockwise), constant.
pub fn sweep_rows(linkage: &FourBar, step_deg: f64, rpm: f64) -> Vec<SweepRow> {
    let w2 = rpm * std::f64::consts::TAU / 60.0;
    let sw = sweep(linkage, step_deg.to_radians(), &SweepOptions::default());
    sw.poses_sorted()
        .iter()
        .filter_map(|p| {
            let r = rates(linkage, p, w2, 0.0)?;
            Some(SweepRow {
                theta2: deg_wrapped(p.theta2),
                theta3: deg_wrapped(p.theta3),
                theta4: deg_wrapped(p.theta4),
                mu: deg((p.theta3 - p.theta4).cos().clamp(-1.0, 1.0).acos()),
                cx: r.point.x,
                cy: r.point.y,
                omega3: r.omega3,
                omega4: r.omega4,
                alpha3: r.alpha3,
                alpha4: r.alpha4,
            })
        })
        .collect()
}

/// CSV text of the rows, with a header line naming the columns and units.
pub fn rows_to_csv(rows: &[SweepRow], units: &str) -> String {
    let mut s = format!(
        "theta2_deg,theta3_deg,theta4_deg,mu_deg,cx_{units},cy_{units},omega3_rad_s,omega4_rad_s,alpha3_rad_s2,alpha4_rad_s2\n"
    );
    for r in rows {
        s.push_str(&format!(
            "{},{},{},{},{},{},{},{},{},{}\n",
            r.theta2, r.theta3, r.theta4, r.mu, r.cx, r.cy, r.omega3, r.omega4, r.alpha3, r.alpha4
        ));
    }
    s
}
