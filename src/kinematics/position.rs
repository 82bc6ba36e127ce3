//! Position analysis: Newton-Raphson on the loop-closure equations, and the closed-form
//! circle intersection used for starting guesses and as an independent check.
//!
//! Loop closure (domain notes): `r2 e(t2) + r3 e(t3) - r4 e(t4) - r1 e(t1) = 0`, solved for
//! `(t3, t4)` at a given crank angle `t2`. The Jacobian with respect to `(t3, t4)` is
//!
//! ```text
//! J = [ -r3 sin t3    r4 sin t4 ]     det J = r3 r4 sin(t3 - t4)
//!     [  r3 cos t3   -r4 cos t4 ]
//! ```
//!
//! and `det J = 0` is a toggle (limit) position of the input: coupler and output link in line.

use nalgebra::Vector2;

use crate::linkage::{cross, perp, unit, Assembly, FourBar};

/// One position of the linkage: crank angle and the two unknown angles (radians, global).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Pose {
    /// Crank (input link) angle `theta2`.
    pub theta2: f64,
    /// Coupler angle `theta3`, the direction of `A -> B`.
    pub theta3: f64,
    /// Output link angle `theta4`, the direction of `O4 -> B`.
    pub theta4: f64,
}

impl Pose {
    /// Assembly sign of the pose: `sign(sin(theta4 - theta3))`.
    pub fn assembly(&self) -> Assembly {
        Assembly::from_sign((self.theta4 - self.theta3).sin())
    }
}

/// Tuning of the Newton-Raphson position solver.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NewtonOptions {
    /// Convergence when the loop-closure residual `|f|` is at most this fraction of the
    /// linkage size (sum of the four link lengths). Default `1e-12`.
    pub tolerance: f64,
    /// Iteration cap. Default 40.
    pub max_iterations: usize,
    /// A Jacobian with `|sin(t3 - t4)|` below this counts as singular (toggle). Default `1e-10`.
    pub singular_sine: f64,
    /// Largest change of either angle in one iteration (radians); longer steps are scaled
    /// down, which keeps a poor guess from jumping to the other assembly. Default `0.5`.
    pub max_step: f64,
}

impl Default for NewtonOptions {
    fn default() -> Self {
        Self {
            tolerance: 1e-12,
            max_iterations: 40,
            singular_sine: 1e-10,
            max_step: 0.5,
        }
    }
}

/// How a position solve ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum PositionStatus {
    /// Residual below the tolerance.
    Converged,
    /// No assembly exists at this crank angle: `|A - O4|` is outside `[|r3 - r4|, r3 + r4]`.
    NotAssembled,
    /// The Jacobian became singular (coupler and output link in line: a toggle).
    Singular,
    /// The iteration cap was reached or the iterate became non-finite.
    Diverged,
}

/// Result of a Newton-Raphson position solve: status, final iterate, residual and count.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PositionSolve {
    /// How the solve ended.
    pub status: PositionStatus,
    /// Final iterate (the solution when `status` is `Converged`).
    pub pose: Pose,
    /// Loop-closure residual `|f|` at `pose`, in length units.
    pub residual: f64,
    /// Newton iterations taken.
    pub iterations: usize,
}

impl PositionSolve {
    /// Whether the solve converged.
    pub fn converged(&self) -> bool {
        self.status == PositionStatus::Converged
    }
}

/// Loop-closure residual `(f1, f2)` at `(theta2, theta3, theta4)`.
#[inline]
pub fn loop_residual(linkage: &FourBar, pose: &Pose) -> Vector2<f64> {
    let a = linkage.joint_a(pose.theta2);
    let b = linkage.joint_b(pose.theta4);
    (a - b) + linkage.coupler() * unit(pose.theta3)
}

/// Jacobian `d(f1, f2) / d(theta3, theta4)` of the loop-closure equations (row-major).
#[inline]
pub fn loop_jacobian(linkage: &FourBar, theta3: f64, theta4: f64) -> [[f64; 2]; 2] {
    let (s3, c3) = theta3.sin_cos();
    let (s4, c4) = theta4.sin_cos();
    let (r3, r4) = (linkage.coupler(), linkage.output_link());
    [[-r3 * s3, r4 * s4], [r3 * c3, -r4 * c4]]
}

/// Whether the linkage can be assembled at crank angle `theta2`, i.e. whether
/// `|r3 - r4| <= |A - O4| <= r3 + r4` (with a relative slack of `1e-12`).
pub fn assembles_at(linkage: &FourBar, theta2: f64) -> bool {
    let d = (linkage.joint_a(theta2) - linkage.output_pivot()).norm();
    let (r3, r4) = (linkage.coupler(), linkage.output_link());
    let slack = 1e-12 * linkage.size();
    d <= r3 + r4 + slack && d >= (r3 - r4).abs() - slack
}

/// Solves the loop-closure equations at crank angle `theta2` by Newton-Raphson from the
/// starting guess `(theta3, theta4)` of `guess` (its `theta2` is ignored).
///
/// Each iteration solves `J (dt3, dt4) = -f` with the analytic Jacobian; convergence is
/// declared when `|f| <= options.tolerance * linkage.size()`. The outcome is a status, never
/// a panic: see [`PositionStatus`].
pub fn solve_position(
    linkage: &FourBar,
    theta2: f64,
    guess: &Pose,
    options: &NewtonOptions,
) -> PositionSolve {
    let r3 = linkage.coupler();
    let r4 = linkage.output_link();
    let a = linkage.joint_a(theta2);
    let ao4 = a - linkage.output_pivot();
    let tol = options.tolerance * linkage.size();
    let mut pose = Pose {
        theta2,
        theta3: guess.theta3,
        theta4: guess.theta4,
    };
    let d = ao4.norm();
    let slack = 1e-12 * linkage.size();
    if d > r3 + r4 + slack || d < (r3 - r4).abs() - slack {
        return PositionSolve {
            status: PositionStatus::NotAssembled,
            pose,
            residual: f64::NAN,
            iterations: 0,
        };
    }
    let mut iterations = 0;
    loop {
        let (s3, c3) = pose.theta3.sin_cos();
        let (s4, c4) = pose.theta4.sin_cos();
        let f1 = ao4.x + r3 * c3 - r4 * c4;
        let f2 = ao4.y + r3 * s3 - r4 * s4;
        let residual = f1.hypot(f2);
        if !residual.is_finite() {
            return PositionSolve {
                status: PositionStatus::Diverged,
                pose,
                residual,
                iterations,
            };
        }
        if residual <= tol {
            return PositionSolve {
                status: PositionStatus::Converged,
                pose,
                residual,
                iterations,
            };
        }
        if iterations >= options.max_iterations {
            return PositionSolve {
                status: PositionStatus::Diverged,
                pose,
                residual,
                iterations,
            };
        }
        // sin(t3 - t4) = s3 c4 - c3 s4; det J = r3 r4 sin(t3 - t4).
        let s34 = s3 * c4 - c3 * s4;
        if s34.abs() < options.singular_sine {
            return PositionSolve {
                status: PositionStatus::Singular,
                pose,
                residual,
                iterations,
            };
        }
        // (dt3, dt4) = -J^-1 f, written out for the 2x2 case.
        let mut dt3 = (c4 * f1 + s4 * f2) / (r3 * s34);
        let mut dt4 = (c3 * f1 + s3 * f2) / (r4 * s34);
        let big = dt3.abs().max(dt4.abs());
        if big > options.max_step {
            let k = options.max_step / big;
            dt3 *= k;
            dt4 *= k;
        }
        pose.theta3 += dt3;
        pose.theta4 += dt4;
        iterations += 1;
    }
}

/// Closed-form position at crank angle `theta2` for the given assembly: `B` is the
/// intersection of the circle of radius `r3` about `A` with the circle of radius `r4` about
/// `O4`, on the left of `A -> O4` for the open assembly. `None` when the circles do not meet.
pub fn closed_form(linkage: &FourBar, theta2: f64, assembly: Assembly) -> Option<Pose> {
    let r3 = linkage.coupler();
    let r4 = linkage.output_link();
    let a = linkage.joint_a(theta2);
    let v = linkage.output_pivot() - a;
    let d2 = v.norm_squared();
    let d = d2.sqrt();
    let slack = 1e-12 * linkage.size();
    if d > r3 + r4 + slack || d < (r3 - r4).abs() - slack || d == 0.0 {
        return None;
    }
    // Distance from A along A -> O4 to the chord, and half the chord.
    let along = (r3 * r3 - r4 * r4 + d2) / (2.0 * d);
    let h = (r3 * r3 - along * along).max(0.0).sqrt();
    let u = v / d;
    // cross(O4 - A, B - A) = h d sign: open assembly (sigma > 0) takes B on the left.
    let ab = along * u + assembly.sign() * h * perp(u);
    let b = a + ab;
    let ob = b - linkage.output_pivot();
    debug_assert!(cross(v, ab) * assembly.sign() >= -1e-9 * d * r3);
    Some(Pose {
        theta2,
        theta3: ab.y.atan2(ab.x),
        theta4: ob.y.atan2(ob.x),
    })
}

/// Position at `theta2` for the linkage's own assembly: closed-form guess polished by
/// Newton-Raphson. `None` when the linkage cannot be assembled there.
pub fn position_at(linkage: &FourBar, theta2: f64, options: &NewtonOptions) -> Option<Pose> {
    let guess = closed_form(linkage, theta2, linkage.assembly())?;
    let solve = solve_position(linkage, theta2, &guess, options);
    if solve.converged() {
        Some(solve.pose)
    } else {
        // At an exact toggle Newton stalls on a singular Jacobian; the closed form is exact.
        Some(guess)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use nalgebra::Point2;

    use crate::linkage::CouplerPoint;

    fn wrap(a: f64) -> f64 {
        let t = a.rem_euclid(std::f64::consts::TAU);
        if t > std::f64::consts::PI {
            t - std::f64::consts::TAU
        } else {
            t
        }
    }

    fn sample() -> FourBar {
        FourBar::new(
            Point2::new(1.0, 2.0),
            Point2::new(8.0, 3.0),
            2.0,
            6.5,
            5.0,
            CouplerPoint { p: 2.0, q: 1.0 },
            Assembly::Open,
        )
        .unwrap()
    }

    #[test]
    fn newton_matches_closed_form() {
        let l = sample();
        for k in 0..72 {
            let t2 = k as f64 * 5f64.to_radians();
            for asm in [Assembly::Open, Assembly::Crossed] {
                let exact = closed_form(&l, t2, asm).unwrap();
                let guess = Pose {
                    theta2: t2,
                    theta3: exact.theta3 + 0.2,
                    theta4: exact.theta4 - 0.15,
                };
                let s = solve_position(&l, t2, &guess, &NewtonOptions::default());
                assert!(s.converged(), "{s:?}");
                assert_relative_eq!(wrap(s.pose.theta3 - exact.theta3), 0.0, epsilon = 1e-11);
                assert_relative_eq!(wrap(s.pose.theta4 - exact.theta4), 0.0, epsilon = 1e-11);
                assert_eq!(s.pose.assembly(), asm);
            }
        }
    }

    #[test]
    fn not_assembled_is_a_status() {
        // r3 + r4 = 3 < r1 - r2 = 8: never assembles.
        let l = FourBar::new(
            Point2::origin(),
            Point2::new(10.0, 0.0),
            2.0,
            1.5,
            1.5,
            CouplerPoint::default(),
            Assembly::Open,
        )
        .unwrap();
        let s = solve_position(&l, 0.3, &Pose::default(), &NewtonOptions::default());
        assert_eq!(s.status, PositionStatus::NotAssembled);
        assert!(closed_form(&l, 0.3, Assembly::Open).is_none());
    }

    #[test]
    fn singular_at_toggle_is_a_status() {
        // Triple rocker r1=4, r2=3, r3=2, r4=2.5 at a toggle: coupler and output in line.
        let l = FourBar::new(
            Point2::origin(),
            Point2::new(4.0, 0.0),
            3.0,
            2.0,
            2.5,
            CouplerPoint::default(),
            Assembly::Open,
        )
        .unwrap();
        // |A - O4| = r3 + r4 = 4.5: cos(t2) = (16 + 9 - 20.25) / 24.
        let t2 = ((16.0 + 9.0 - 20.25) / 24.0f64).acos();
        let a = l.joint_a(t2);
        let dir = (l.output_pivot() - a).normalize();
        let t = dir.y.atan2(dir.x);
        // Guess exactly in line (t3 = t4 + pi direction-wise: both point along A -> O4 / O4 -> B).
        let guess = Pose {
            theta2: t2,
            theta3: t,
            theta4: t + std::f64::consts::PI,
        };
        let s = solve_position(&l, t2, &guess, &NewtonOptions::default());
        // Either already converged (exact) or singular; never a panic or a wrong branch.
        assert!(matches!(
            s.status,
            PositionStatus::Converged | PositionStatus::Singular
        ));
    }
}
