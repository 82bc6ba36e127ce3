//! Test fixtures of the kinematics layer: linkages of known Grashof class and an independent
//! closed-form position, written out here from the triangle `A, B, O4` (law of cosines) and
//! sharing no code with the library's solvers, so that the checks built on it are checks.

use nalgebra::{Point2, Vector2};

use crate::linkage::{Assembly, CouplerPoint, FourBar, GrashofClass};

/// A crank-rocker (shortest link the input) with a tilted ground and a coupler point off the
/// coupler line: `O2 = (1, 2)`, `O4 = (8.5, 3.2)` (`r1 = 7.595`), `r2 = 2`, `r3 = 8`, `r4 = 6`,
/// `p = 3`, `q = 2.5`, crossed assembly. `s + l = 10 < p + q = 13.6`.
pub(crate) fn crank_rocker() -> FourBar {
    let l = FourBar::new(
        Point2::new(1.0, 2.0),
        Point2::new(8.5, 3.2),
        2.0,
        8.0,
        6.0,
        CouplerPoint { p: 3.0, q: 2.5 },
        Assembly::Crossed,
    )
    .expect("valid fixture");
    assert_eq!(l.grashof(), GrashofClass::CrankRocker);
    l
}

/// A double-rocker (shortest link the coupler): ground 7 at 20 degrees from `O2 = (-1, 0.5)`,
/// `r2 = 6`, `r3 = 2`, `r4 = 9`, coupler point `p = 1`, `q = 1.5`, open assembly. The input
/// assembles for crank angles from the ground line in `[64.6, 115.4]` and `[244.6, 295.4]`
/// degrees (`|A - O4|` in `[r4 - r3, r3 + r4]`).
pub(crate) fn double_rocker() -> FourBar {
    let o2 = Point2::new(-1.0, 0.5);
    let t1 = 20f64.to_radians();
    let l = FourBar::new(
        o2,
        o2 + 7.0 * Vector2::new(t1.cos(), t1.sin()),
        6.0,
        2.0,
        9.0,
        CouplerPoint { p: 1.0, q: 1.5 },
        Assembly::Open,
    )
    .expect("valid fixture");
    assert_eq!(l.grashof(), GrashofClass::DoubleRocker);
    l
}

/// Crank angles from the ground line (degrees) inside the double-rocker's first arc of motion.
pub(crate) const DOUBLE_ROCKER_PHI_DEG: [f64; 5] = [70.0, 80.0, 90.0, 100.0, 110.0];

/// One position of a linkage from the law of cosines: the joints and the coupler point.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Placed {
    /// Crank joint `A`.
    pub a: Point2<f64>,
    /// Output joint `B`.
    pub b: Point2<f64>,
    /// Coupler point `C`.
    pub c: Point2<f64>,
    /// Coupler angle (direction of `A -> B`).
    pub theta3: f64,
    /// Output angle (direction of `O4 -> B`).
    pub theta4: f64,
}

/// Places `l` at the global crank angle `theta2` in its own assembly from the triangle
/// `A, B, O4`: with `d = |O4 - A|`, the angle at `A` between `A -> O4` and `A -> B` is
/// `acos((r3^2 + d^2 - r4^2) / (2 r3 d))`, taken counter-clockwise (B left of `A -> O4`) for
/// the open assembly, clockwise for the crossed. `None` when the triangle does not close.
pub(crate) fn place(l: &FourBar, theta2: f64) -> Option<Placed> {
    let (r2, r3, r4) = (l.input_link(), l.coupler(), l.output_link());
    let o2 = l.input_pivot();
    let o4 = l.output_pivot();
    let a = Point2::new(o2.x + r2 * theta2.cos(), o2.y + r2 * theta2.sin());
    let dx = o4.x - a.x;
    let dy = o4.y - a.y;
    let d = (dx * dx + dy * dy).sqrt();
    let cos_gamma = (r3 * r3 + d * d - r4 * r4) / (2.0 * r3 * d);
    if !(-1.0..=1.0).contains(&cos_gamma) {
        return None;
    }
    let sign = match l.assembly() {
        Assembly::Open => 1.0,
        Assembly::Crossed => -1.0,
    };
    let theta3 = dy.atan2(dx) + sign * cos_gamma.acos();
    let b = Point2::new(a.x + r3 * theta3.cos(), a.y + r3 * theta3.sin());
    let theta4 = (b.y - o4.y).atan2(b.x - o4.x);
    let cp = l.coupler_point();
    let c = Point2::new(
        a.x + cp.p * theta3.cos() - cp.q * theta3.sin(),
        a.y + cp.p * theta3.sin() + cp.q * theta3.cos(),
    );
    Some(Placed {
        a,
        b,
        c,
        theta3,
        theta4,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::kinematics::position::{position_at, NewtonOptions};
    use crate::kinematics::range::wrap_pi;

    // The fixture's placement closes the loop and takes the assembly it was asked for.
    #[test]
    fn placement_closes_the_loop() {
        for l in [crank_rocker(), double_rocker()] {
            let t1 = l.ground_angle();
            for k in 0..36 {
                let theta2 = t1 + (k as f64 * 10.0).to_radians();
                let Some(p) = place(&l, theta2) else { continue };
                assert!(((p.b - l.output_pivot()).norm() - l.output_link()).abs() < 1e-12);
                let lib = position_at(&l, theta2, &NewtonOptions::default()).unwrap();
                assert!(wrap_pi(lib.theta4 - p.theta4).abs() < 1e-10);
                assert!(wrap_pi(lib.theta3 - p.theta3).abs() < 1e-10);
            }
        }
        let l = double_rocker();
        for deg in DOUBLE_ROCKER_PHI_DEG {
            assert!(place(&l, l.ground_angle() + deg.to_radians()).is_some());
        }
    }
}
