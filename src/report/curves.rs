//! Figure data from a sweep: the coupler curve per branch, link angles per branch in plotting
//! form, and the poses of one full motion for the animation.

use std::f64::consts::TAU;

use nalgebra::Point2;

use super::plots::AngleSample;
use crate::kinematics::position::{closed_form, position_at, NewtonOptions, Pose};
use crate::kinematics::range::{wrap_pi, wrap_tau};
use crate::kinematics::sweep::{Branch, Sweep};
use crate::linkage::FourBar;

/// Transmission angle `mu` of a pose, radians in `[0, pi]`: the angle at `B` between the
/// coupler and the output link, i.e. between the directions `theta3` and `theta4`.
pub fn pose_mu(pose: &Pose) -> f64 {
    (pose.theta3 - pose.theta4).cos().clamp(-1.0, 1.0).acos()
}

/// The poses of a branch in crank order, with the exact toggle poses at its ends when it
/// ends in toggles.
pub fn branch_poses(branch: &Branch) -> Vec<Pose> {
    // Grid angles on a toggle hold its exact pose, added here.
    let mut poses = Vec::with_capacity(branch.poses.len() + 2);
    if let Some((p0, _)) = branch.toggle_poses {
        poses.push(p0);
    }
    poses.extend(branch.poses.iter().filter(|p| !branch.is_toggle_pose(p)));
    if let Some((_, p1)) = branch.toggle_poses {
        poses.push(p1);
    }
    poses
}

/// The coupler curve of a sweep, one polyline per branch; a full turn is closed (its first
/// point repeated at the end).
pub fn curve_branches(linkage: &FourBar, sweep: &Sweep) -> Vec<Vec<Point2<f64>>> {
    sweep
        .branches
        .iter()
        .map(|b| {
            let mut pts: Vec<Point2<f64>> = branch_poses(b)
                .iter()
                .map(|p| linkage.coupler_point_at(p.theta2, p.theta3))
                .collect();
            if b.toggles.is_none() {
                if let Some(&first) = pts.first() {
                    pts.push(first);
                }
            }
            pts
        })
        .filter(|pts| !pts.is_empty())
        .collect()
}

/// Angles along one continuous run of poses, unwrapped so that neighbours differ by less
/// than half a turn, then moved by whole turns so that the middle of their range lies in
/// `[0, 360)` degrees; a series covering a full turn or more is wrapped into `[0, 360)`
/// instead (the plot breaks it at the wrap).
fn unwrap_degrees(raw: impl IntoIterator<Item = f64>) -> Vec<f64> {
    let mut out: Vec<f64> = Vec::new();
    for r in raw {
        let v = match out.last() {
            Some(&prev) => prev + wrap_pi(r - prev),
            None => r,
        };
        out.push(v);
    }
    let (lo, hi) = out
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), v| {
            (l.min(*v), h.max(*v))
        });
    if !(lo.is_finite() && hi.is_finite()) {
        return out;
    }
    if hi - lo >= TAU - 1e-9 {
        return out.iter().map(|v| wrap_tau(*v).to_degrees()).collect();
    }
    let shift = TAU * (0.5 * (lo + hi) / TAU).floor();
    out.iter().map(|v| (v - shift).to_degrees()).collect()
}

/// Link angles of a sweep for [`angle_plot`](super::plots::angle_plot), one list per branch,
/// crank angles measured from the ground line. A full-turn branch runs from exactly 0 to
/// 360 degrees of crank (closed, the end poses from the closed form); a rocking branch keeps its crank angles continuous, its middle
/// in `[0, 360)`.
pub fn angle_branches(linkage: &FourBar, sweep: &Sweep) -> Vec<Vec<AngleSample>> {
    let t1 = linkage.ground_angle();
    let mut out = Vec::new();
    for b in &sweep.branches {
        let mut poses = branch_poses(b);
        if poses.is_empty() {
            continue;
        }
        let full = b.toggles.is_none();
        let cranks: Vec<f64> = if full {
            // Run from exactly 0 to exactly 360 degrees of crank from the ground line: the
            // closed-form pose at the ground line, then the grid poses in crank order.
            let Some(start) = closed_form(linkage, t1, linkage.assembly()) else {
                continue;
            };
            let travel = |p: &Pose| wrap_tau(p.theta2 - t1);
            poses.retain(|p| travel(p) > 1e-9 && travel(p) < TAU - 1e-9);
            poses.sort_by(|a, b| travel(a).total_cmp(&travel(b)));
            let c: Vec<f64> = std::iter::once(0.0)
                .chain(poses.iter().map(|p| travel(p).to_degrees()))
                .chain(std::iter::once(360.0))
                .collect();
            poses.insert(0, start);
            poses.push(Pose {
                theta2: start.theta2 + TAU,
                ..start
            });
            c
        } else {
            let raw: Vec<f64> = poses.iter().map(|p| p.theta2 - t1).collect();
            let mid = 0.5 * (raw[0] + raw[raw.len() - 1]);
            let shift = TAU * (mid / TAU).floor();
            raw.iter().map(|c| (c - shift).to_degrees()).collect()
        };
        let t3 = unwrap_degrees(poses.iter().map(|p| p.theta3));
        let t4 = unwrap_degrees(poses.iter().map(|p| p.theta4));
        out.push(
            poses
                .iter()
                .enumerate()
                .map(|(i, p)| AngleSample {
                    crank: cranks[i],
                    theta3: t3[i],
                    theta4: t4[i],
                    mu: pose_mu(p).to_degrees(),
                })
                .collect(),
        );
    }
    out
}

/// The positions of the design at crank angles measured from the ground line `O2 -> O4`
/// (degrees, as a result's `crank_angles`), on the design's own assembly: closed form
/// polished by Newton-Raphson. `None` if the linkage cannot be assembled at one of them.
pub fn poses_at_cranks(linkage: &FourBar, cranks_deg: &[f64]) -> Option<Vec<Pose>> {
    let t1 = linkage.ground_angle();
    let newton = NewtonOptions::default();
    cranks_deg
        .iter()
        .map(|c| position_at(linkage, t1 + c.to_radians(), &newton))
        .collect()
}

/// The poses of one motion of the design for the animation: the full turn of a crank, or
/// for a rocking input its first branch from toggle to toggle.
pub fn motion_poses(sweep: &Sweep) -> Vec<Pose> {
    sweep.branches.first().map(branch_poses).unwrap_or_default()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::kinematics::sweep::{sweep, SweepOptions};
    use crate::linkage::{Assembly, CouplerPoint};
    use approx::assert_relative_eq;

    fn bar(r1: f64, r2: f64, r3: f64, r4: f64) -> FourBar {
        FourBar::new(
            Point2::new(3.0, -1.0),
            Point2::new(3.0 + r1 * 0.8, -1.0 + r1 * 0.6),
            r2,
            r3,
            r4,
            CouplerPoint { p: 2.0, q: 1.5 },
            Assembly::Open,
        )
        .unwrap()
    }

    // mu from the pose agrees with the law of cosines on the triangle A-B-O4 (the
    // transmission-angle formula of the domain notes, a closed form independent of theta3).
    #[test]
    fn mu_and_curve_agree_with_closed_forms() {
        let l = bar(7.0, 2.0, 9.0, 6.0);
        let sw = sweep(&l, 5f64.to_radians(), &SweepOptions::default());
        let curves = curve_branches(&l, &sw);
        assert_eq!(curves.len(), 1);
        assert_eq!(curves[0].len(), 72 + 1);
        let angles = angle_branches(&l, &sw);
        // The 72 grid poses between the closed-form poses at 0 and 360 degrees of crank.
        assert_eq!(angles[0].len(), 72 + 2);
        assert_relative_eq!(angles[0][0].crank, 0.0, epsilon = 1e-12);
        assert_relative_eq!(angles[0][73].crank, 360.0, epsilon = 1e-12);
        assert_relative_eq!(angles[0][0].theta4, angles[0][73].theta4, epsilon = 1e-9);
        for p in &sw.branches[0].poses {
            let mu = l.transmission_angle(p.theta2).unwrap();
            assert_relative_eq!(pose_mu(p), mu, epsilon = 1e-9);
        }
        let t1 = l.ground_angle();
        for a in &angles[0] {
            let mu = l.transmission_angle(t1 + a.crank.to_radians()).unwrap();
            assert_relative_eq!(a.mu, mu.to_degrees(), epsilon = 1e-7);
        }
        for w in angles[0].windows(2) {
            assert!(w[1].crank > w[0].crank);
            assert!(
                (w[1].theta4 - w[0].theta4).abs() < 30.0,
                "rocker series must not jump"
            );
        }
    }

    #[test]
    fn rocking_branches_end_at_toggles() {
        // Triple rocker: motion ends where coupler and output are in line, mu = 0 or 180.
        let l = bar(5.0, 4.0, 9.0, 6.0);
        let sw = sweep(&l, 5f64.to_radians(), &SweepOptions::default());
        let angles = angle_branches(&l, &sw);
        assert!(!angles.is_empty());
        for b in &angles {
            for end in [b[0], b[b.len() - 1]] {
                let q = end.mu.min(180.0 - end.mu);
                assert!(q < 0.01, "toggle transmission angle {end:?}");
            }
            let mid = 0.5 * (b[0].crank + b[b.len() - 1].crank);
            assert!((0.0..360.0).contains(&mid));
        }
        assert_eq!(motion_poses(&sw).len(), angles[0].len());
        // Outside the rocking range (crank 0: |A - O4| = 1 < |r3 - r4| = 3) nothing assembles.
        assert!(poses_at_cranks(&l, &[0.0]).is_none());
    }

    #[test]
    fn poses_at_cranks_match_the_closed_form() {
        let l = bar(7.0, 2.0, 9.0, 6.0);
        let cranks = [0.0, 95.0, 271.5];
        let poses = poses_at_cranks(&l, &cranks).expect("crank-rocker assembles");
        for (p, c) in poses.iter().zip(cranks) {
            let t2 = l.ground_angle() + c.to_radians();
            let exact = closed_form(&l, t2, Assembly::Open).unwrap();
            assert_relative_eq!(p.theta2, t2, epsilon = 1e-15);
            assert_relative_eq!(wrap_pi(p.theta3 - exact.theta3), 0.0, epsilon = 1e-10);
            assert_relative_eq!(wrap_pi(p.theta4 - exact.theta4), 0.0, epsilon = 1e-10);
        }
    }
}
