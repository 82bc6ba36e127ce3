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

impl Rates {
    /// Speed `|v_C|` of the coupler point (length units per second).
    pub fn speed(&self) -> f64 {
        self.velocity.norm()
    }

    /// Magnitude `|a_C|` of the coupler point's acceleration (length units per second squared).
    pub fn acceleration_magnitude(&self) -> f64 {
        self.acceleration.norm()
    }

    /// Unit tangent of the coupler point's path in its direction of travel, `v_C / |v_C|`;
    /// `None` where the point is at rest (a cusp of the coupler curve, or `omega2 = 0`).
    pub fn tangent(&self) -> Option<Vector2<f64>> {
        let s = self.speed();
        (s > 0.0 && s.is_finite()).then(|| self.velocity / s)
    }
}

/// `|sin(theta3 - theta4)|` below which the Jacobian counts as singular for rate solves.
const SINGULAR_SINE: f64 = 1e-14;

/// Solves `J x = rhs` for the loop-closure Jacobian `J = [r3 perp(e3), -r4 perp(e4)]`
/// (columns: derivatives of the loop closure by `theta3` and `theta4`) at the unit vectors
/// `e3`, `e4`; `None` at a toggle (`|sin(theta3 - theta4)|` below [`SINGULAR_SINE`]).
#[inline]
pub(crate) fn solve_j(
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

/// Velocity ratio `d C / d theta2` of the coupler point `C` (length units per radian of
/// crank): `r2 perp(e2) + (d theta3 / d theta2) perp(C - A)`; `None` at a toggle. Times the
/// crank speed it is the point's velocity.
pub fn coupler_velocity_ratio(linkage: &FourBar, pose: &Pose) -> Option<Vector2<f64>> {
    let (k3, _) = velocity_ratios(linkage, pose)?;
    Some(point_velocity(linkage, pose, 1.0, k3))
}

/// Velocity of the coupler point for crank speed `w2` and coupler speed `w3`:
/// `r2 w2 perp(e2) + w3 perp(C - A)`.
#[inline]
fn point_velocity(linkage: &FourBar, pose: &Pose, w2: f64, w3: f64) -> Vector2<f64> {
    linkage.input_link() * w2 * perp(unit(pose.theta2)) + w3 * perp(coupler_offset(linkage, pose))
}

/// Coupler point offset from `A`, `p e3 + q perp(e3)`.
#[inline]
fn coupler_offset(linkage: &FourBar, pose: &Pose) -> Vector2<f64> {
    let cp = linkage.coupler_point();
    let e3 = unit(pose.theta3);
    cp.p * e3 + cp.q * perp(e3)
}

/// First and second derivatives of `theta3` and `theta4` with respect to `theta2`,
/// `[k3, k4, k3', k4']`, from the unit vectors `e2`, `e3`, `e4` of a solved pose: the
/// velocity and acceleration solves for `w2 = 1`, `a2 = 0`. `None` at a toggle.
#[inline]
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
/// acceleration `alpha2` (rad/s^2): the coupler's and output's angular rates, and the coupler
/// point's velocity (the linkage's length unit per second) and acceleration (per second
/// squared), with their magnitudes from [`Rates::speed`] and [`Rates::acceleration_magnitude`].
/// `None` at a toggle, where the output's rates are unbounded.
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
    let off = coupler_offset(linkage, pose);
    let point = linkage.joint_a(pose.theta2) + off;
    let velocity = point_velocity(linkage, pose, omega2, w3);
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

    // Coupler-point velocity and acceleration against central differences in time of the
    // coupler point placed by the law of cosines (the fixture's own closed form, sharing no
    // code with the rate solve), with the crank accelerating: theta2(t) = theta2_0 + w2 t +
    // a2 t^2 / 2. Numerical differentiation is the outside reference; five-point stencils with
    // step h = 1e-3 s keep truncation (~h^4) and rounding (~eps / h^2) below the tolerances.
    #[test]
    fn coupler_point_rates_match_differences_of_closed_form_positions() {
        use crate::kinematics::fixtures::{
            crank_rocker, double_rocker, place, DOUBLE_ROCKER_PHI_DEG,
        };
        use crate::kinematics::position::{position_at, NewtonOptions};
        let (w2, a2, h) = (3.0, -2.5, 1e-3);
        let crank_rocker_phi: Vec<f64> = (0..12).map(|k| 5.0 + 30.0 * k as f64).collect();
        let cases = [
            (crank_rocker(), crank_rocker_phi),
            (double_rocker(), DOUBLE_ROCKER_PHI_DEG.to_vec()),
        ];
        let mut checked = 0;
        for (l, phis) in &cases {
            for phi in phis {
                let t0 = l.ground_angle() + phi.to_radians();
                let at = |t: f64| place(l, t0 + w2 * t + 0.5 * a2 * t * t).unwrap().c;
                let c: Vec<Vector2<f64>> = (-2..=2).map(|k| at(k as f64 * h).coords).collect();
                let c0 = Point2::from(c[2]);
                // Five-point central differences, truncation error O(h^4).
                let v = (-c[4] + 8.0 * c[3] - 8.0 * c[1] + c[0]) / (12.0 * h);
                let acc = (-c[4] + 16.0 * c[3] - 30.0 * c[2] + 16.0 * c[1] - c[0]) / (12.0 * h * h);
                let pose = position_at(l, t0, &NewtonOptions::default()).unwrap();
                let r = rates(l, &pose, w2, a2).unwrap();
                assert_relative_eq!(r.point, c0, epsilon = 1e-12);
                let scale_v = v.norm().max(1.0);
                assert_relative_eq!(r.velocity, v, epsilon = 1e-6 * scale_v);
                assert_relative_eq!(r.speed(), v.norm(), epsilon = 1e-6 * scale_v);
                let scale_a = acc.norm().max(1.0);
                assert_relative_eq!(r.acceleration, acc, epsilon = 1e-5 * scale_a);
                assert_relative_eq!(
                    r.acceleration_magnitude(),
                    acc.norm(),
                    epsilon = 1e-5 * scale_a
                );
                let t = r.tangent().unwrap();
                assert_relative_eq!(t, v / v.norm(), epsilon = 1e-6);
                // The velocity ratio is the velocity per unit crank speed.
                let k = coupler_velocity_ratio(l, &pose).unwrap();
                assert_relative_eq!(k * w2, r.velocity, epsilon = 1e-12 * scale_v);
                checked += 1;
            }
        }
        assert_eq!(checked, 17);
    }

    // At rest (omega2 = 0) the point has no direction of travel: a status, not a NaN.
    #[test]
    fn tangent_at_rest_is_none() {
        let l = crate::kinematics::fixtures::crank_rocker();
        let pose = crate::kinematics::position::position_at(
            &l,
            0.4,
            &crate::kinematics::position::NewtonOptions::default(),
        )
        .unwrap();
        let r = rates(&l, &pose, 0.0, 1.0).unwrap();
        assert!(r.tangent().is_none());
        assert!(r.acceleration_magnitude() > 0.0);
    }
}
