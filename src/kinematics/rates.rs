//! Velocity and acceleration analysis from the loop-closure Jacobian.
//!
//! Differentiating `r2 e(t2) + r3 e(t3) - r4 e(t4) - r1 e(t1) = 0` in time gives
//! `J (w3, w4) = -(d f / d t2) w2`; once more,
//! `J (a3, a4) = r2 w2^2 e(t2) - r2 a2 e(t2 + 90 deg) + r3 w3^2 e(t3) - r4 w4^2 e(t4)`,
//! with the same Jacobian `J` as the position solve.

use nalgebra::{Point2, Vector2};

use super::position::Pose;
use crate::linkage::{perp, unit, FourBar};

/// Angular velocities and accelerations of the moving links and the coupler point's motion.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Rates {
    /// Crank angular velocity `w2` (rad/s), as given.
    pub omega2: f64,
    /// Coupler angular velocity `w3` (rad/s).
    pub omega3: f64,
    /// Output link angular velocity `w4` (rad/s).
    pub omega4: f64,
    /// Crank angular acceleration `a2` (rad/s^2), as given.
    pub alpha2: f64,
    /// Coupler angular acceleration `a3` (rad/s^2).
    pub alpha3: f64,
    /// Output link angular acceleration `a4` (rad/s^2).
    pub alpha4: f64,
    /// Coupler point position (length units).
    pub point: Point2<f64>,
    /// Coupler point velocity (length units per second).
    pub velocity: Vector2<f64>,
    /// Coupler point acceleration (length units per second squared).
    pub acceleration: Vector2<f64>,
}

/// `|sin(theta3 - theta4)|` below which the Jacobian counts as singular for rate solves.
const SINGULAR_SINE: f64 = 1e-14;

/// Solves `J x = rhs` for the loop-closure Jacobian at `(t3, t4)`; `None` at a toggle.
#[inline]
fn solve_j(
    r3: f64,
    r4: f64,
    e3: Vector2<f64>,
    e4: Vector2<f64>,
    rhs: Vector2<f64>,
) -> Option<(f64, f64)> {
    // J = [r3 i e3, -r4 i e4] as columns, i e = perp(e). det = r3 r4 sin(t3 - t4).
    let s34 = e3.y * e4.x - e3.x * e4.y;
    if s34.abs() < SINGULAR_SINE {
        return None;
    }
    // Column form: r3 x3 perp(e3) - r4 x4 perp(e4) = rhs. Dot with e4 and e3:
    // r3 x3 (perp(e3).e4) = rhs.e4, perp(e3).e4 = -s34 ... written out:
    let x3 = -rhs.dot(&e4) / (r3 * s34);
    let x4 = -rhs.dot(&e3) / (r4 * s34);
    Some((x3, x4))
}

/// Velocity ratios `(d theta3 / d theta2, d theta4 / d theta2)` at a pose; `None` at a toggle.
#[inline]
pub fn velocity_ratios(linkage: &FourBar, pose: &Pose) -> Option<(f64, f64)> {
    let e2 = unit(pose.theta2);
    let e3 = unit(pose.theta3);
    let e4 = unit(pose.theta4);
    // J (k3, k4) = -(d f/d t2) = -r2 perp(e2).
    solve_j(
        linkage.coupler(),
        linkage.output_link(),
        e3,
        e4,
        -linkage.input_link() * perp(e2),
    )
}

/// First and second derivatives of `theta3` and `theta4` with respect to `theta2`,
/// `[k3, k4, k3', k4']`, from the unit vectors `e2`, `e3`, `e4` of a solved pose: the
/// velocity and acceleration solves for `w2 = 1`, `a2 = 0`. `None` at a toggle. (Always
/// inlined into the continuation step, where a call and the array it returns through
/// memory cost a tenth of the step.)
#[inline(always)]
pub(crate) fn ratio_derivatives(
    linkage: &FourBar,
    e2: Vector2<f64>,
    e3: Vector2<f64>,
    e4: Vector2<f64>,
) -> Option<[f64; 4]> {
    let (r2, r3, r4) = (
        linkage.input_link(),
        linkage.coupler(),
        linkage.output_link(),
    );
    // The two solves of `solve_j` with one shared reciprocal of the determinant.
    let s34 = e3.y * e4.x - e3.x * e4.y;
    if s34.abs() < SINGULAR_SINE {
        return None;
    }
    let inv = 1.0 / (r3 * r4 * s34);
    let (inv3, inv4) = (-r4 * inv, r3 * inv);
    let v = -r2 * perp(e2);
    let (k3, k4) = (v.dot(&e4) * inv3, -v.dot(&e3) * inv4);
    let w = r2 * e2 + r3 * k3 * k3 * e3 - r4 * k4 * k4 * e4;
    let (a3, a4) = (w.dot(&e4) * inv3, -w.dot(&e3) * inv4);
    Some([k3, k4, a3, a4])
}

/// Velocities and accelerations at `pose` for crank speed `omega2` (rad/s) and crank
/// acceleration `alpha2` (rad/s^2). `None` at a toggle, where the output's rates are unbounded.
pub fn rates(linkage: &FourBar, pose: &Pose, omega2: f64, alpha2: f64) -> Option<Rates> {
    let (r2, r3, r4) = (
        linkage.input_link(),
        linkage.coupler(),
        linkage.output_link(),
    );
    let e2 = unit(pose.theta2);
    let e3 = unit(pose.theta3);
    let e4 = unit(pose.theta4);
    let (w3, w4) = solve_j(r3, r4, e3, e4, -r2 * omega2 * perp(e2))?;
    let rhs =
        r2 * omega2 * omega2 * e2 - r2 * alpha2 * perp(e2) + r3 * w3 * w3 * e3 - r4 * w4 * w4 * e4;
    let (a3, a4) = solve_j(r3, r4, e3, e4, rhs)?;
    let cp = linkage.coupler_point();
    // Coupler point offset from A: (p + i q) e3.
    let off = cp.p * e3 + cp.q * perp(e3);
    let point = linkage.joint_a(pose.theta2) + off;
    let velocity = r2 * omega2 * perp(e2) + w3 * perp(off);
    let acceleration =
        r2 * (alpha2 * perp(e2) - omega2 * omega2 * e2) + a3 * perp(off) - w3 * w3 * off;
    Some(Rates {
        omega2,
        omega3: w3,
        omega4: w4,
        alpha2,
        alpha3: a3,
        alpha4: a4,
        point,
        velocity,
        acceleration,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::kinematics::position::closed_form;
    use crate::linkage::{Assembly, CouplerPoint};
    use approx::assert_relative_eq;

    use crate::kinematics::range::wrap_pi as wrap;

    // Rates checked against central finite differences of the closed-form positions
    // (numerical differentiation as the outside reference).
    #[test]
    fn rates_match_finite_differences() {
        let l = FourBar::new(
            Point2::new(-1.0, 0.5),
            Point2::new(6.0, 1.5),
            2.0,
            6.5,
            5.0,
            CouplerPoint { p: 3.0, q: -1.5 },
            Assembly::Crossed,
        )
        .unwrap();
        let w2 = 3.0;
        let h = 1e-5;
        for k in 0..36 {
            let t2 = k as f64 * 10f64.to_radians();
            let at = |t: f64| closed_form(&l, t, Assembly::Crossed).unwrap();
            let p0 = at(t2);
            let pp = at(t2 + h);
            let pm = at(t2 - h);
            let r = rates(&l, &p0, w2, 0.0).unwrap();
            let d3 = wrap(pp.theta3 - pm.theta3) / (2.0 * h) * w2;
            let d4 = wrap(pp.theta4 - pm.theta4) / (2.0 * h) * w2;
            assert_relative_eq!(r.omega3, d3, epsilon = 1e-6, max_relative = 1e-6);
            assert_relative_eq!(r.omega4, d4, epsilon = 1e-6, max_relative = 1e-6);
            let dd3 =
                (wrap(pp.theta3 - p0.theta3) - wrap(p0.theta3 - pm.theta3)) / (h * h) * w2 * w2;
            let dd4 =
                (wrap(pp.theta4 - p0.theta4) - wrap(p0.theta4 - pm.theta4)) / (h * h) * w2 * w2;
            assert_relative_eq!(r.alpha3, dd3, epsilon = 1e-3, max_relative = 1e-3);
            assert_relative_eq!(r.alpha4, dd4, epsilon = 1e-3, max_relative = 1e-3);
            let cp = |p: &Pose| l.coupler_point_at(p.theta2, p.theta3);
            let v = (cp(&pp) - cp(&pm)) / (2.0 * h) * w2;
            assert_relative_eq!(r.velocity.x, v.x, epsilon = 1e-5, max_relative = 1e-6);
            assert_relative_eq!(r.velocity.y, v.y, epsilon = 1e-5, max_relative = 1e-6);
            let acc = (cp(&pp) - 2.0 * cp(&p0).coords + cp(&pm).coords).coords / (h * h) * w2 * w2;
            assert_relative_eq!(r.acceleration.x, acc.x, epsilon = 1e-2, max_relative = 1e-3);
            assert_relative_eq!(r.acceleration.y, acc.y, epsilon = 1e-2, max_relative = 1e-3);
        }
    }
}
