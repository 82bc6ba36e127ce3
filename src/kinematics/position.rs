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
    /// Loop-closure residual `|f|` at `pose`, in length units; after an early stop on
    /// quadratic convergence, a rigorous upper bound on it (see [`solve_position`]).
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
/// `|r3 - r4| <= |A - O4| <= r3 + r4` (with a relative slack of [`ASSEMBLY_SLACK`]).
pub fn assembles_at(linkage: &FourBar, theta2: f64) -> bool {
    let k = LoopConstants::new(linkage, &NewtonOptions::default());
    k.reaches(linkage.joint_a(theta2) - linkage.output_pivot())
}

/// Slack, relative to the linkage size, of the assembly test `|r3 - r4| <= |A - O4| <=
/// r3 + r4`, so that a toggle position itself counts as assembled.
pub const ASSEMBLY_SLACK: f64 = 1e-12;

/// Bound on the rounding error of one Newton step, in units of `f64::EPSILON` times the
/// residual over `|sin(theta3 - theta4)|` (the Jacobian's conditioning) and times the
/// linkage's size (evaluation of the loop-closure sum). Generous: the 2x2 solve and the sum
/// each take a handful of roundings.
const ROUNDING_FACTOR: f64 = 16.0;

/// Largest angle (radians) whose sine and cosine [`turn`] takes from their Taylor series:
/// for `|d| <= 0.1` the first neglected terms, `d^11 / 11!` and `d^12 / 12!`, are below a
/// tenth of an ulp of the result.
pub(crate) const SERIES_ANGLE: f64 = 0.1;

/// Rounding error (radians, in units of `f64::EPSILON`) of turning a unit vector by
/// [`turn`]: the series, four products and two sums.
pub(crate) const TURN_ROUNDING: f64 = 4.0;

/// Largest angle (radians) whose sine and cosine [`turn`] takes from the two leading terms
/// of their Taylor series, `d - d^3 / 6` and `1 - d^2 / 2`: for `|d| <= 2^-13` the first
/// neglected terms, `d^5 / 120` (relative to `d`) and `d^4 / 24`, are below a tenth of an
/// ulp of the result. A Newton-Raphson correction after a good prediction is this small.
pub(crate) const SHORT_SERIES_ANGLE: f64 = 1.0 / 8192.0;

/// The unit vector `u` turned counter-clockwise by the angle `d`, `R(d) u`. For
/// `|d| <= SERIES_ANGLE` the sine and cosine of `d` come from their Taylor series (a few
/// multiply-adds instead of a library call, two terms each up to [`SHORT_SERIES_ANGLE`]);
/// beyond, from `f64::sin_cos`. (Always inlined: a continuation step makes four turns, and
/// as calls they cost as much again.)
#[inline(always)]
pub(crate) fn turn(u: Vector2<f64>, d: f64) -> Vector2<f64> {
    let (s, c) = if d.abs() <= SHORT_SERIES_ANGLE {
        let d2 = d * d;
        (d - d * d2 * (1.0 / 6.0), 1.0 - 0.5 * d2)
    } else if d.abs() <= SERIES_ANGLE {
        const S: [f64; 4] = [1.0 / 6.0, 1.0 / 20.0, 1.0 / 42.0, 1.0 / 72.0];
        const C: [f64; 5] = [0.5, 1.0 / 12.0, 1.0 / 30.0, 1.0 / 56.0, 1.0 / 90.0];
        let d2 = d * d;
        let s = d * (1.0 - d2 * S[0] * (1.0 - d2 * S[1] * (1.0 - d2 * S[2] * (1.0 - d2 * S[3]))));
        let c = 1.0
            - d2 * C[0]
                * (1.0 - d2 * C[1] * (1.0 - d2 * C[2] * (1.0 - d2 * C[3] * (1.0 - d2 * C[4]))));
        (s, c)
    } else {
        d.sin_cos()
    };
    Vector2::new(c * u.x - s * u.y, s * u.x + c * u.y)
}

/// What a Newton-Raphson position solve needs of a linkage, with the reciprocals and
/// squares computed once (a continuation sweep makes hundreds of solves).
#[derive(Debug, Clone, Copy)]
pub(crate) struct LoopConstants {
    r3: f64,
    r4: f64,
    inv_r3: f64,
    inv_r4: f64,
    /// Absolute residual tolerance.
    tol: f64,
    /// Rounding allowance of an evaluated residual (length).
    eval_rounding: f64,
    /// Squares of the largest and smallest `|A - O4|` at which the linkage assembles.
    reach2: (f64, f64),
}

impl LoopConstants {
    /// The constants of `linkage` for the tolerance of `options`.
    pub(crate) fn new(linkage: &FourBar, options: &NewtonOptions) -> Self {
        let (r3, r4) = (linkage.coupler(), linkage.output_link());
        let size = linkage.size();
        let slack = ASSEMBLY_SLACK * size;
        let (hi, lo) = (r3 + r4 + slack, ((r3 - r4).abs() - slack).max(0.0));
        Self {
            r3,
            r4,
            inv_r3: 1.0 / r3,
            inv_r4: 1.0 / r4,
            tol: options.tolerance * size,
            eval_rounding: ROUNDING_FACTOR * f64::EPSILON * size,
            reach2: (hi * hi, lo * lo),
        }
    }

    /// Whether a crank joint at `ao4 = A - O4` lets the linkage assemble:
    /// `|r3 - r4| <= |A - O4| <= r3 + r4`, with a slack of [`ASSEMBLY_SLACK`] of the size.
    #[inline]
    pub(crate) fn reaches(&self, ao4: Vector2<f64>) -> bool {
        let d2 = ao4.norm_squared();
        d2 <= self.reach2.0 && d2 >= self.reach2.1
    }

    /// Coupler length `r3`.
    #[inline]
    pub(crate) fn r3(&self) -> f64 {
        self.r3
    }

    /// Output link length `r4`.
    #[inline]
    pub(crate) fn r4(&self) -> f64 {
        self.r4
    }
}

/// Starting iterate of [`newton`]: the angles, their unit vectors, and a bound (length) on
/// the error those unit vectors and `A - O4` bring into an evaluated loop closure when they
/// were carried along (turned) rather than evaluated afresh.
#[derive(Debug, Clone, Copy)]
pub(crate) struct NewtonStart {
    pub theta3: f64,
    pub theta4: f64,
    pub e3: Vector2<f64>,
    pub e4: Vector2<f64>,
    pub error: f64,
}

impl NewtonStart {
    /// A start at `(theta3, theta4)` with freshly evaluated unit vectors.
    #[inline]
    pub(crate) fn at(theta3: f64, theta4: f64) -> Self {
        Self {
            theta3,
            theta4,
            e3: unit(theta3),
            e4: unit(theta4),
            error: 0.0,
        }
    }
}

/// Outcome of [`newton`]: the iterate with its coupler and output unit vectors.
#[derive(Debug, Clone, Copy)]
pub(crate) struct NewtonRun {
    pub status: PositionStatus,
    pub theta3: f64,
    pub theta4: f64,
    /// `e(theta3)` at the final iterate.
    pub e3: Vector2<f64>,
    /// `e(theta4)` at the final iterate.
    pub e4: Vector2<f64>,
    /// Whether `e3` and `e4` were evaluated afresh during the solve (then only the final
    /// small turn separates them from `e(theta3)`, `e(theta4)`); otherwise they carry the
    /// start's error.
    pub fresh: bool,
    pub residual: f64,
    pub iterations: usize,
}

/// Newton-Raphson on the loop closure `(A - O4) + r3 e(t3) - r4 e(t4) = 0` from `start`,
/// with `ao4 = A - O4` for the crank angle at hand.
///
/// Quadratic convergence is used to stop one evaluation early: after a full Newton step
/// `d = (d3, d4)` the new residual is exactly the Taylor remainder of the two unit vectors,
/// `|f(x + d)| = |r3 (e(t3 + d3) - e(t3) - d3 e'(t3)) - r4 (...)|`, and
/// `|e(t + d) - e(t) - d e'(t)| <= d^2 / 2`, so `|f(x + d)| <= (r3 d3^2 + r4 d4^2) / 2` plus
/// rounding and the start's error. When that bound is within the tolerance the solve is
/// converged without evaluating the residual again, and the bound is returned as the
/// residual. The final unit vectors are the last evaluated ones turned by the (small) final
/// step.
#[inline]
pub(crate) fn newton(
    k: &LoopConstants,
    ao4: Vector2<f64>,
    start: NewtonStart,
    options: &NewtonOptions,
) -> NewtonRun {
    let (r3, r4, tol) = (k.r3, k.r4, k.tol);
    let mut run = NewtonRun {
        status: PositionStatus::Diverged,
        theta3: start.theta3,
        theta4: start.theta4,
        e3: start.e3,
        e4: start.e4,
        fresh: false,
        residual: f64::NAN,
        iterations: 0,
    };
    // Error of a computed residual: rounding in the sum, and what the start brings in
    // (kept for all iterations, though fresh evaluations shed the unit vectors' part).
    let eval_error = k.eval_rounding + start.error;
    loop {
        let (c3, s3) = (run.e3.x, run.e3.y);
        let (c4, s4) = (run.e4.x, run.e4.y);
        let f1 = ao4.x + r3 * c3 - r4 * c4;
        let f2 = ao4.y + r3 * s3 - r4 * s4;
        // |f| <= |f1| + |f2|: enough for the rounding allowance, and no square root.
        let f_abs = f1.abs() + f2.abs();
        if !f_abs.is_finite() {
            run.residual = f_abs;
            run.status = PositionStatus::Diverged;
            return run;
        }
        let f_sq = f1 * f1 + f2 * f2;
        // The true residual is within eval_error of the computed one.
        let tol_eval = tol - eval_error;
        if tol_eval > 0.0 && f_sq <= tol_eval * tol_eval {
            run.residual = f_sq.sqrt() + eval_error;
            run.status = PositionStatus::Converged;
            return run;
        }
        if run.iterations >= options.max_iterations {
            run.residual = f_sq.sqrt();
            run.status = PositionStatus::Diverged;
            return run;
        }
        // sin(t3 - t4) = s3 c4 - c3 s4; det J = r3 r4 sin(t3 - t4).
        let s34 = s3 * c4 - c3 * s4;
        if s34.abs() < options.singular_sine {
            run.residual = f_sq.sqrt();
            run.status = PositionStatus::Singular;
            return run;
        }
        // (dt3, dt4) = -J^-1 f, written out for the 2x2 case.
        let inv = 1.0 / s34;
        let mut dt3 = (c4 * f1 + s4 * f2) * inv * k.inv_r3;
        let mut dt4 = (c3 * f1 + s3 * f2) * inv * k.inv_r4;
        let full_step = dt3.abs() <= options.max_step && dt4.abs() <= options.max_step;
        if !full_step {
            let scale = options.max_step / dt3.abs().max(dt4.abs());
            dt3 *= scale;
            dt4 *= scale;
        }
        run.theta3 += dt3;
        run.theta4 += dt4;
        run.iterations += 1;
        if full_step {
            let bound = 0.5 * (r3 * dt3 * dt3 + r4 * dt4 * dt4)
                + ROUNDING_FACTOR * f64::EPSILON * f_abs * inv.abs()
                + eval_error;
            if bound <= tol {
                run.e3 = turn(run.e3, dt3);
                run.e4 = turn(run.e4, dt4);
                run.residual = bound;
                run.status = PositionStatus::Converged;
                return run;
            }
        }
        run.e3 = unit(run.theta3);
        run.e4 = unit(run.theta4);
        run.fresh = true;
    }
}

/// Solves the loop-closure equations at crank angle `theta2` by Newton-Raphson from the
/// starting guess `(theta3, theta4)` of `guess` (its `theta2` is ignored).
///
/// Each iteration solves `J (dt3, dt4) = -f` with the analytic Jacobian; convergence is
/// declared when `|f| <= options.tolerance * linkage.size()`, or when the quadratic-convergence
/// bound after a full step, `(r3 dt3^2 + r4 dt4^2) / 2` plus rounding, guarantees it (then
/// `residual` is that bound). The outcome is a status, never a panic: see [`PositionStatus`].
pub fn solve_position(
    linkage: &FourBar,
    theta2: f64,
    guess: &Pose,
    options: &NewtonOptions,
) -> PositionSolve {
    let ao4 = linkage.joint_a(theta2) - linkage.output_pivot();
    let mut pose = Pose {
        theta2,
        theta3: guess.theta3,
        theta4: guess.theta4,
    };
    let k = LoopConstants::new(linkage, options);
    if !k.reaches(ao4) {
        return PositionSolve {
            status: PositionStatus::NotAssembled,
            pose,
            residual: f64::NAN,
            iterations: 0,
        };
    }
    let run = newton(
        &k,
        ao4,
        NewtonStart::at(guess.theta3, guess.theta4),
        options,
    );
    pose.theta3 = run.theta3;
    pose.theta4 = run.theta4;
    PositionSolve {
        status: run.status,
        pose,
        residual: run.residual,
        iterations: run.iterations,
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
    let slack = ASSEMBLY_SLACK * linkage.size();
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
    position_in(linkage, theta2, linkage.assembly(), options)
}

/// Position at `theta2` for the given assembly: closed-form guess polished by Newton-Raphson
/// (the closed form itself where Newton stalls, at an exact toggle). `None` when the linkage
/// cannot be assembled there.
pub fn position_in(
    linkage: &FourBar,
    theta2: f64,
    assembly: Assembly,
    options: &NewtonOptions,
) -> Option<Pose> {
    let guess = closed_form(linkage, theta2, assembly)?;
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

    use crate::kinematics::range::wrap_pi as wrap;

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

    // The series turn agrees with the library's sine and cosine to a couple of ulps, inside
    // and beyond the series' range, and for the short two-term series up to its limit
    // (where a limit ten times larger would leave `d^4 / 24` of some 40 ulps in the cosine).
    #[test]
    fn turn_matches_sin_cos() {
        let short = (-100..=100).map(|k| k as f64 / 100.0 * SHORT_SERIES_ANGLE);
        let long = (-300..=300).map(|k| k as f64 * 7e-4);
        for (k, d) in short.chain(long).enumerate() {
            let t = 0.37 + k as f64 * 1e-3;
            let turned = turn(unit(t), d);
            let exact = unit(t + d);
            assert_relative_eq!(turned.x, exact.x, epsilon = 4.0 * f64::EPSILON);
            assert_relative_eq!(turned.y, exact.y, epsilon = 4.0 * f64::EPSILON);
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
