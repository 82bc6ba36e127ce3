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
    /// Coupler angular velocity; `None` at a toggle, where the rates are unbounded.
    pub omega3: Option<f64>,
    /// Output angular velocity; `None` at a toggle.
    pub omega4: Option<f64>,
    /// Coupler angular acceleration; `None` at a toggle.
    pub alpha3: Option<f64>,
    /// Output angular acceleration; `None` at a toggle.
    pub alpha4: Option<f64>,
}

impl SweepRow {
    /// The four rates `[omega3, omega4, alpha3, alpha4]`.
    pub fn rates(&self) -> [Option<f64>; 4] {
        [self.omega3, self.omega4, self.alpha3, self.alpha4]
    }
}

/// Rows of a sweep at every multiple of `step_deg` degrees where the design assembles, for a
/// crank speed of `rpm` revolutions per minute (positive counter-clockwise), constant. A row
/// on a toggle has its exact pose and no rates.
pub fn sweep_rows(linkage: &FourBar, step_deg: f64, rpm: f64) -> Vec<SweepRow> {
    let w2 = rpm * std::f64::consts::TAU / 60.0;
    let sw = sweep(linkage, step_deg.to_radians(), &SweepOptions::default());
    sw.poses_sorted()
        .iter()
        .map(|p| {
            let r = rates(linkage, p, w2, 0.0);
            let point = linkage.coupler_point_at(p.theta2, p.theta3);
            SweepRow {
                theta2: deg_wrapped(p.theta2),
                theta3: deg_wrapped(p.theta3),
                theta4: deg_wrapped(p.theta4),
                mu: deg((p.theta3 - p.theta4).cos().clamp(-1.0, 1.0).acos()),
                cx: point.x,
                cy: point.y,
                omega3: r.map(|r| r.omega3),
                omega4: r.map(|r| r.omega4),
                alpha3: r.map(|r| r.alpha3),
                alpha4: r.map(|r| r.alpha4),
            }
        })
        .collect()
}

/// CSV text of the rows, with a header line naming the columns and units.
pub fn rows_to_csv(rows: &[SweepRow], units: &str) -> String {
    let mut s = format!(
        "theta2_deg,theta3_deg,theta4_deg,mu_deg,cx_{units},cy_{units},omega3_rad_s,omega4_rad_s,alpha3_rad_s2,alpha4_rad_s2\n"
    );
    for r in rows {
        // An empty field where a rate is unbounded (at a toggle).
        let [w3, w4, a3, a4] = r
            .rates()
            .map(|v| v.map_or(String::new(), |v| v.to_string()));
        s.push_str(&format!(
            "{},{},{},{},{},{},{w3},{w4},{a3},{a4}\n",
            r.theta2, r.theta3, r.theta4, r.mu, r.cx, r.cy
        ));
    }
    s
}
