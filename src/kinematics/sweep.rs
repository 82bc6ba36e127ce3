//! Motion by continuation: Newton-Raphson position solves stepped along the crank angle,
//! each started from the previous solution moved along its second-order Taylor expansion
//! (the velocity and acceleration solutions of the same Jacobian). Continuation is what keeps the linkage on one branch; the step is
//! cut near toggles, where the coupler's angle changes like the square root of the distance.

use std::f64::consts::TAU;

use nalgebra::Vector2;

use super::position::{
    newton, position_in, turn, LoopConstants, NewtonOptions, NewtonStart, Pose, PositionStatus,
    SERIES_ANGLE, TURN_ROUNDING,
};
use super::range::{wrap_tau, Arc, InputRange, Toggle};
use super::rates::ratio_derivatives;
use crate::linkage::{unit, Assembly, FourBar};

/// Tuning of a continuation sweep.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SweepOptions {
    /// Newton-Raphson options for each position.
    pub newton: NewtonOptions,
    /// Largest crank step between two solves (radians). Default 10 degrees.
    pub max_step: f64,
    /// Smallest crank step before the trace gives up (radians). Default `1e-10`.
    pub min_step: f64,
    /// How close (radians of crank angle) a trace goes to a toggle before stopping there.
    /// Default `1e-9`.
    pub toggle_margin: f64,
}

impl Default for SweepOptions {
    fn default() -> Self {
        Self {
            newton: NewtonOptions::default(),
            max_step: 10f64.to_radians(),
            min_step: 1e-10,
            toggle_margin: 1e-9,
        }
    }
}

/// How a trace from one crank angle to another ended.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum TraceEnd {
    /// The requested crank angle was reached; the pose there, on the starting branch.
    Reached(Pose),
    /// A toggle lies between the start and the requested angle: the input cannot get there
    /// without reversing. `last` is the pose traced to just short of the toggle.
    Toggle {
        /// Last pose reached, within the toggle margin of the toggle.
        last: Pose,
        /// The toggle that ends the motion.
        toggle: Toggle,
    },
    /// Newton-Raphson failed even at the smallest step (should not happen away from toggles).
    Lost {
        /// Last pose reached.
        last: Pose,
        /// Status of the failed solve.
        status: PositionStatus,
    },
}

/// A converged pose with the unit vectors `e(theta2)`, `e(theta3)`, `e(theta4)` and the
/// first and second derivatives of `theta3`, `theta4` with respect to `theta2`: what the
/// predictor works from.
///
/// Along a uniform grid the unit vectors are carried from station to station by turning
/// them (see [`GridTurn`]) rather than evaluated afresh; `e2_error` and `units_error` bound
/// how far they have drifted from `e(theta2)` and from `e(theta3)`, `e(theta4)` (radians).
#[derive(Debug, Clone, Copy)]
struct Node {
    pose: Pose,
    e2: Vector2<f64>,
    e3: Vector2<f64>,
    e4: Vector2<f64>,
    /// `[d theta3, d theta4, d2 theta3, d2 theta4]`, derivatives with respect to `theta2`.
    d: [f64; 4],
    e2_error: f64,
    units_error: f64,
}

impl Node {
    /// The node of a solved pose whose unit vectors were just evaluated; `None` at a toggle.
    #[inline]
    fn new(
        linkage: &FourBar,
        pose: Pose,
        e2: Vector2<f64>,
        e3: Vector2<f64>,
        e4: Vector2<f64>,
    ) -> Option<Self> {
        let d = ratio_derivatives(linkage, e2, e3, e4)?;
        Some(Self {
            pose,
            e2,
            e3,
            e4,
            d,
            e2_error: 0.0,
            units_error: 0.0,
        })
    }

    /// Assembly sign `sign(sin(theta4 - theta3))`.
    #[inline]
    fn sign(&self) -> Assembly {
        sign_of(self.e3, self.e4)
    }
}

/// `sign(sin(theta4 - theta3))` from the unit vectors.
#[inline]
fn sign_of(e3: Vector2<f64>, e4: Vector2<f64>) -> Assembly {
    Assembly::from_sign(e4.y * e3.x - e4.x * e3.y)
}

/// Share of the Newton-Raphson tolerance that the drift of carried (turned) unit vectors may
/// take: along a uniform grid they are evaluated afresh once the bound on the error they
/// bring into the loop closure would exceed it. The rest of the tolerance is left to the
/// quadratic-convergence bound of the correction, so that one iteration still suffices.
const DRIFT_SHARE: f64 = 0.25;

/// A uniform grid of crank angles with step `h`: `e(theta2 + h) = R(h) e(theta2)`, so along
/// the grid `e(theta2)` is turned by a rotation computed once instead of evaluating `sin`
/// and `cos` at every station (and `e(theta3)`, `e(theta4)` are turned by the predicted
/// increments, see [`turn`]).
#[derive(Debug, Clone, Copy)]
struct GridTurn {
    /// The grid step `h` (radians).
    step: f64,
    /// `(sin h, cos h)`.
    sin_cos: (f64, f64),
}

impl GridTurn {
    fn new(step: f64) -> Self {
        Self {
            step,
            sin_cos: step.sin_cos(),
        }
    }

    /// Whether a crank step `dt` ending at `theta2` is this grid's step, up to the rounding
    /// of the stations themselves (a few ulps of `theta2`).
    #[inline]
    fn fits(&self, dt: f64, theta2: f64) -> bool {
        (dt - self.step).abs() <= 8.0 * f64::EPSILON * (1.0 + theta2.abs())
    }

    /// `u` turned by the grid step.
    #[inline]
    fn turn(&self, u: Vector2<f64>) -> Vector2<f64> {
        let (s, c) = self.sin_cos;
        Vector2::new(c * u.x - s * u.y, s * u.x + c * u.y)
    }
}

/// Largest change (radians) of `theta3` or `theta4` that a continuation step predicts, and
/// largest difference between a predicted and a converged angle that it accepts: a longer
/// prediction is cut by shortening the step, a larger correction means Newton-Raphson
/// left the branch. Together they keep every step well within half a turn, so that the
/// traced angles never skip whole turns.
const MAX_JUMP: f64 = 0.5;

/// Traces the motion of one linkage along its crank angle by continuation.
///
/// Each step predicts the next position from a second-order Taylor expansion of `theta3`
/// and `theta4` in `theta2` (velocity and acceleration solves with the position's own
/// Jacobian) and corrects it by Newton-Raphson, which then usually needs a single
/// iteration; see [`solve_position`](super::position::solve_position) for the early stop on
/// quadratic convergence.
#[derive(Debug, Clone)]
pub struct Tracer<'a> {
    linkage: &'a FourBar,
    range: InputRange,
    options: SweepOptions,
    solves: usize,
    /// `O2 - O4`, so that `A - O4 = o24 + r2 e(theta2)`.
    o24: Vector2<f64>,
    /// Lengths and tolerances of the Newton-Raphson solves.
    k: LoopConstants,
    /// Largest error (length) that carried unit vectors may bring into a loop closure:
    /// [`DRIFT_SHARE`] of the absolute tolerance.
    drift_budget: f64,
}

impl<'a> Tracer<'a> {
    /// A tracer for `linkage`; computes its input range once.
    pub fn new(linkage: &'a FourBar, options: SweepOptions) -> Self {
        Self {
            linkage,
            range: InputRange::of(linkage),
            options,
            solves: 0,
            o24: linkage.input_pivot() - linkage.output_pivot(),
            k: LoopConstants::new(linkage, &options.newton),
            drift_budget: DRIFT_SHARE * options.newton.tolerance * linkage.size(),
        }
    }

    /// The linkage being traced.
    pub fn linkage(&self) -> &'a FourBar {
        self.linkage
    }

    /// The input's range of motion.
    pub fn range(&self) -> &InputRange {
        &self.range
    }

    /// Newton-Raphson solves made so far.
    pub fn solves(&self) -> usize {
        self.solves
    }

    /// A converged pose at `theta2` on the given assembly: closed-form guess polished by
    /// Newton-Raphson. `None` when the linkage does not assemble there.
    pub fn pose_at(&mut self, theta2: f64, assembly: Assembly) -> Option<Pose> {
        self.solves += 1;
        position_in(self.linkage, theta2, assembly, &self.options.newton)
    }

    /// The predictor's node at a solved pose; `None` at a toggle.
    fn node(&self, pose: &Pose) -> Option<Node> {
        Node::new(
            self.linkage,
            *pose,
            unit(pose.theta2),
            unit(pose.theta3),
            unit(pose.theta4),
        )
    }

    /// Signed crank-angle distance from `theta2` to the toggle that ends the motion in
    /// direction `dir` (+1 counter-clockwise), with that toggle; `None` for a full turn.
    fn limit(&self, theta2: f64, dir: f64) -> Option<(f64, Toggle)> {
        let phi = theta2 - self.linkage.ground_angle();
        let arc: &Arc = self.range.arc_of(phi, 1e-9)?;
        let p = arc.unwrap(phi, 1e-9)?;
        if dir > 0.0 {
            Some(((arc.end.phi - p).max(0.0), arc.end))
        } else {
            Some(((p - arc.start.phi).max(0.0), arc.start))
        }
    }

    /// One continuation step from the node `at` to crank angle `theta2`: second-order
    /// predictor, Newton-Raphson, and a check that the solution kept the assembly `sign` and
    /// stayed near the prediction. On success `at` becomes the new node and the Newton
    /// iterations are returned; on failure `at` is left as it was and the status of the
    /// failed step is returned (`Converged` when it converged onto another branch).
    ///
    /// With `grid` (a uniform grid whose step `dt` is this step's), the unit vectors are
    /// carried over from `at` by turning them while the bound on their drift stays within
    /// [`DRIFT_SHARE`] of the tolerance; that bound enters the Newton-Raphson solve as a
    /// known error of the loop closure.
    #[inline]
    fn step(
        &mut self,
        at: &mut Node,
        theta2: f64,
        grid: Option<&GridTurn>,
        sign: Assembly,
    ) -> Result<usize, PositionStatus> {
        const EPS: f64 = f64::EPSILON;
        let from = &*at;
        let dt = theta2 - from.pose.theta2;
        let [k3, k4, a3, a4] = from.d;
        let d3 = dt * (k3 + 0.5 * a3 * dt);
        let d4 = dt * (k4 + 0.5 * a4 * dt);
        if d3.abs() > MAX_JUMP || d4.abs() > MAX_JUMP {
            // The step is too long for the local rates (near a toggle, longer than the
            // Taylor series' radius of convergence): a prediction this far out could land
            // within MAX_JUMP of a solution whole turns away.
            return Err(PositionStatus::Diverged);
        }
        let (g3, g4) = (from.pose.theta3 + d3, from.pose.theta4 + d4);
        let r2 = self.linkage.input_link();
        let carried = grid
            .filter(|_| d3.abs() <= SERIES_ANGLE && d4.abs() <= SERIES_ANGLE)
            .and_then(|g| {
                // Each turn rounds; the angles' own sums round by half an ulp each; the
                // station spacing differs from the grid step by the stations' rounding.
                let e2_error = from.e2_error + (dt - g.step).abs() + (TURN_ROUNDING + 1.0) * EPS;
                // (Half an ulp of the larger angle is at most that of their sum.)
                let units_error =
                    from.units_error + (TURN_ROUNDING + 0.5 * (1.0 + g3.abs() + g4.abs())) * EPS;
                let error = r2 * e2_error + (self.k.r3() + self.k.r4()) * units_error;
                (error <= self.drift_budget).then(|| {
                    let start = NewtonStart {
                        theta3: g3,
                        theta4: g4,
                        e3: turn(from.e3, d3),
                        e4: turn(from.e4, d4),
                        error,
                    };
                    (g.turn(from.e2), e2_error, units_error, start)
                })
            });
        let (e2, e2_error, units_error, start) =
            carried.unwrap_or_else(|| (unit(theta2), 0.0, 0.0, NewtonStart::at(g3, g4)));
        let ao4 = self.o24 + r2 * e2;
        self.solves += 1;
        if !self.k.reaches(ao4) {
            return Err(PositionStatus::NotAssembled);
        }
        let run = newton(&self.k, ao4, start, &self.options.newton);
        if run.status != PositionStatus::Converged {
            return Err(run.status);
        }
        let jump = (run.theta3 - g3).abs() >= MAX_JUMP || (run.theta4 - g4).abs() >= MAX_JUMP;
        if sign_of(run.e3, run.e4) != sign || jump {
            return Err(run.status);
        }
        let d =
            ratio_derivatives(self.linkage, e2, run.e3, run.e4).ok_or(PositionStatus::Singular)?;
        // The final small turn of Newton-Raphson and the angles' last sums.
        let last = (TURN_ROUNDING + 0.5 * (1.0 + run.theta3.abs() + run.theta4.abs())) * EPS;
        *at = Node {
            pose: Pose {
                theta2,
                theta3: run.theta3,
                theta4: run.theta4,
            },
            e2,
            e3: run.e3,
            e4: run.e4,
            d,
            e2_error,
            units_error: if run.fresh { last } else { units_error + last },
        };
        Ok(run.iterations)
    }

    /// Traces from the converged pose `start` to crank angle `theta2_end` (radians; larger
    /// than `start.theta2` means counter-clockwise, and more than a turn is allowed), staying
    /// on the branch of `start`.
    pub fn trace(&mut self, start: &Pose, theta2_end: f64) -> TraceEnd {
        if theta2_end - start.theta2 == 0.0 {
            return TraceEnd::Reached(*start);
        }
        let Some(node) = self.node(start) else {
            return TraceEnd::Lost {
                last: *start,
                status: PositionStatus::Singular,
            };
        };
        self.trace_node(node, theta2_end).1
    }

    /// [`Tracer::trace`] from a node, also returning the node reached.
    fn trace_node(&mut self, start: Node, theta2_end: f64) -> (Node, TraceEnd) {
        let total = theta2_end - start.pose.theta2;
        if total == 0.0 {
            return (start, TraceEnd::Reached(start.pose));
        }
        let dir = total.signum();
        let sign = start.sign();
        let opts = self.options;
        let mut goal = theta2_end;
        let mut toggle = None;
        if let Some((dist, t)) = self.limit(start.pose.theta2, dir) {
            if dist < total.abs() {
                goal = start.pose.theta2 + dir * (dist - opts.toggle_margin).max(0.0);
                toggle = Some(t);
            }
        }
        let mut cur = start;
        let mut h = opts.max_step;
        loop {
            let remaining = (goal - cur.pose.theta2) * dir;
            if remaining <= 0.0 {
                break;
            }
            let mut step = h.min(remaining);
            if toggle.is_some() {
                // Near a toggle the tangent grows like 1/sqrt(distance): halve the distance
                // to the toggle at each step.
                step = step
                    .min(0.5 * (remaining + opts.toggle_margin))
                    .max(remaining.min(opts.min_step));
            }
            let t2 = if step >= remaining {
                goal
            } else {
                cur.pose.theta2 + dir * step
            };
            match self.step(&mut cur, t2, None, sign) {
                Ok(iterations) => {
                    if iterations <= 3 {
                        h = (h * 2.0).min(opts.max_step);
                    } else if iterations > 6 {
                        h *= 0.5;
                    }
                }
                Err(status) => {
                    h = step * 0.25;
                    if h < opts.min_step {
                        return (
                            cur,
                            TraceEnd::Lost {
                                last: cur.pose,
                                status,
                            },
                        );
                    }
                }
            }
        }
        let end = match toggle {
            Some(toggle) => TraceEnd::Toggle {
                last: cur.pose,
                toggle,
            },
            None => TraceEnd::Reached(cur.pose),
        };
        (cur, end)
    }

    /// Traces from the converged pose `start` through the crank angles `stations` in turn,
    /// pushing the pose reached at each onto `poses`: the fast path for a grid of closely
    /// spaced angles. A station at most `max_step` from the previous one and well short of
    /// the next toggle is reached in a single continuation step (one Newton-Raphson solve,
    /// the predictor's derivatives carried over from the step before); any other station,
    /// or one where that step fails, is reached by [`Tracer::trace`]'s adaptive stepping.
    /// Stops at the first station it cannot reach and returns how that trace ended, else
    /// `Reached` with the pose at the last station.
    pub fn trace_grid(
        &mut self,
        start: &Pose,
        stations: &[f64],
        poses: &mut Vec<Pose>,
    ) -> TraceEnd {
        let Some(mut cur) = self.node(start) else {
            return TraceEnd::Lost {
                last: *start,
                status: PositionStatus::Singular,
            };
        };
        let sign = cur.sign();
        let mut grid = None;
        for &t2 in stations {
            let dt = t2 - cur.pose.theta2;
            let fast = dt != 0.0
                && dt.abs() <= self.options.max_step
                && self
                    .limit(cur.pose.theta2, dt.signum())
                    .map_or(true, |(dist, _)| dt.abs() < 0.5 * dist);
            if fast {
                let g = match grid {
                    Some(g) if GridTurn::fits(&g, dt, t2) => g,
                    _ => GridTurn::new(dt),
                };
                grid = Some(g);
                if self.step(&mut cur, t2, Some(&g), sign).is_ok() {
                    poses.push(cur.pose);
                    continue;
                }
            }
            match self.trace_node(cur, t2) {
                (next, TraceEnd::Reached(p)) => {
                    cur = next;
                    poses.push(p);
                }
                (_, end) => return end,
            }
        }
        TraceEnd::Reached(cur.pose)
    }
}

impl Branch {
    /// Whether `pose` is one of the branch's toggle poses (a grid angle on a toggle holds
    /// the toggle's exact pose, so the two may appear in a list together).
    pub fn is_toggle_pose(&self, pose: &Pose) -> bool {
        self.toggle_poses.is_some_and(|(a, b)| {
            [a, b]
                .iter()
                .any(|t| (t.theta2 - pose.theta2).abs() <= AT_TOGGLE * 1e-3)
        })
    }
}

/// One branch of a sweep: poses at the grid angles inside one stretch of motion.
#[derive(Debug, Clone, PartialEq)]
pub struct Branch {
    /// Assembly sign on this branch.
    pub assembly: Assembly,
    /// Poses at the grid's crank angles, in counter-clockwise order of the crank.
    pub poses: Vec<Pose>,
    /// Toggles ending the branch (clockwise end, counter-clockwise end); `None` for a full turn.
    pub toggles: Option<(Toggle, Toggle)>,
    /// Exact poses at the two toggles (see [`Toggle::pose`]; the Jacobian is singular
    /// there), their `theta3` and `theta4` shifted by whole turns to continue the branch's
    /// poses.
    pub toggle_poses: Option<(Pose, Pose)>,
}

/// Result of a grid sweep over all crank angles for one assembly.
#[derive(Debug, Clone, PartialEq)]
pub struct Sweep {
    /// The input's range of motion.
    pub range: InputRange,
    /// Branches of the requested assembly, one per arc (one for a full turn).
    pub branches: Vec<Branch>,
    /// Newton-Raphson solves made.
    pub solves: usize,
}

impl Sweep {
    /// All poses of all branches, sorted by crank angle in `[0, 2 pi)`.
    pub fn poses_sorted(&self) -> Vec<Pose> {
        let mut v: Vec<Pose> = self
            .branches
            .iter()
            .flat_map(|b| b.poses.iter().copied())
            .collect();
        v.sort_by(|a, b| wrap_tau(a.theta2).total_cmp(&wrap_tau(b.theta2)));
        v
    }
}

/// `pose` with `theta3` and `theta4` shifted by whole turns to lie within half a turn of
/// those of `near`.
fn unwrap_near(pose: Pose, near: &Pose) -> Pose {
    let shift = |a: f64, b: f64| a + TAU * ((b - a) / TAU).round();
    Pose {
        theta2: pose.theta2,
        theta3: shift(pose.theta3, near.theta3),
        theta4: shift(pose.theta4, near.theta4),
    }
}

/// Crank angles `origin + k * step` (whole `k`) in `[lo, hi]`, counting one that rounding put
/// within [`AT_TOGGLE`] outside an end as inside.
fn stations(step: f64, origin: f64, lo: f64, hi: f64) -> Vec<f64> {
    let slack = AT_TOGGLE / step;
    let k0 = ((lo - origin) / step - slack).ceil() as i64;
    let k1 = ((hi - origin) / step + slack).floor() as i64;
    (k0..=k1).map(|k| origin + k as f64 * step).collect()
}

/// Crank-angle distance (radians) within which a grid angle counts as lying on a toggle: the
/// exact toggle pose is used there, since Newton-Raphson on the singular Jacobian converges
/// only to about the square root of its tolerance.
const AT_TOGGLE: f64 = 1e-9;

/// Poses at the crank angles `st` for `assembly`, by continuation from a closed-form start;
/// where a station cannot be reached (which does not happen inside one arc of motion) the
/// trace restarts there from the closed form.
fn trace_stations(tracer: &mut Tracer, st: &[f64], assembly: Assembly) -> Vec<Pose> {
    let mut poses: Vec<Pose> = Vec::with_capacity(st.len());
    let mut i = 0;
    while i < st.len() {
        let Some(p) = tracer.pose_at(st[i], assembly) else {
            i += 1;
            continue;
        };
        // A restart (past a point continuation cannot cross, such as the singular pose of a
        // change-point linkage) continues the angles of the poses before it.
        let p = match poses.last() {
            Some(prev) => unwrap_near(p, prev),
            None => p,
        };
        poses.push(p);
        let before = poses.len();
        // Whatever the end, the poses pushed are the stations reached.
        let _ = tracer.trace_grid(&p, &st[i + 1..], &mut poses);
        i += 1 + (poses.len() - before);
    }
    poses
}

/// Sweeps the linkage over crank angles that are whole multiples of `step` (radians),
/// on the linkage's own assembly, by Newton-Raphson continuation. Each branch starts from a
/// closed-form guess at its first grid angle and is then traced grid angle to grid angle.
pub fn sweep(linkage: &FourBar, step: f64, options: &SweepOptions) -> Sweep {
    sweep_from(linkage, step, 0.0, options)
}

/// [`sweep`] over the crank angles `origin + k * step` (radians) instead: with the ground
/// line's direction as `origin` the grid is the same for a linkage however it is turned.
pub fn sweep_from(linkage: &FourBar, step: f64, origin: f64, options: &SweepOptions) -> Sweep {
    let mut tracer = Tracer::new(linkage, *options);
    let asm = linkage.assembly();
    let t1 = linkage.ground_angle();
    let mut branches = Vec::new();
    let range = tracer.range().clone();
    match &range {
        InputRange::None => {}
        InputRange::FullTurn => {
            // Every multiple of the step in [0, 2 pi), the last one short of a full turn.
            let st: Vec<f64> = stations(step, origin, origin, origin + TAU)
                .into_iter()
                .filter(|t| *t < origin + TAU - 1e-12)
                .collect();
            let poses = trace_stations(&mut tracer, &st, asm);
            branches.push(Branch {
                assembly: asm,
                poses,
                toggles: None,
                toggle_poses: None,
            });
        }
        InputRange::Arcs(arcs) => {
            for arc in arcs {
                let lo = t1 + arc.start.phi;
                let hi = t1 + arc.end.phi;
                let mut st = stations(step, origin, lo, hi);
                // Grid angles on a toggle take its exact pose, not a trace.
                let at_start = st.first().is_some_and(|t| (t - lo).abs() <= AT_TOGGLE);
                let at_end = st.len() > usize::from(at_start)
                    && st.last().is_some_and(|t| (t - hi).abs() <= AT_TOGGLE);
                st.drain(st.len() - usize::from(at_end)..);
                st.drain(..usize::from(at_start));
                let mut poses = trace_stations(&mut tracer, &st, asm);
                let a = arc.start.pose(linkage);
                let a = unwrap_near(a, poses.first().unwrap_or(&a));
                let b = arc.end.pose(linkage);
                let b = unwrap_near(b, poses.last().unwrap_or(&a));
                if at_start {
                    poses.insert(0, a);
                }
                if at_end {
                    poses.push(b);
                }
                branches.push(Branch {
                    assembly: asm,
                    poses,
                    toggles: Some((arc.start, arc.end)),
                    toggle_poses: Some((a, b)),
                });
            }
        }
    }
    let solves = tracer.solves();
    Sweep {
        range,
        branches,
        solves,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::kinematics::position::closed_form;
    use crate::kinematics::range::wrap_pi;
    use crate::linkage::CouplerPoint;
    use approx::assert_relative_eq;
    use nalgebra::Point2;
    use std::f64::consts::PI;

    fn bar(r1: f64, r2: f64, r3: f64, r4: f64, asm: Assembly) -> FourBar {
        FourBar::new(
            Point2::new(0.0, 0.0),
            Point2::new(r1, 0.0),
            r2,
            r3,
            r4,
            CouplerPoint { p: 1.0, q: 0.5 },
            asm,
        )
        .unwrap()
    }

    #[test]
    fn full_turn_sweep_matches_closed_form() {
        for asm in [Assembly::Open, Assembly::Crossed] {
            let l = bar(7.0, 2.0, 9.0, 6.0, asm);
            let s = sweep(&l, 1f64.to_radians(), &SweepOptions::default());
            assert_eq!(s.branches.len(), 1);
            assert_eq!(s.branches[0].poses.len(), 360);
            for p in &s.branches[0].poses {
                let c = closed_form(&l, p.theta2, asm).unwrap();
                assert_relative_eq!(wrap_pi(p.theta3 - c.theta3), 0.0, epsilon = 1e-10);
                assert_relative_eq!(wrap_pi(p.theta4 - c.theta4), 0.0, epsilon = 1e-10);
            }
        }
    }

    // Along a long uniform grid the unit vectors are carried by turning them; at every
    // station their true distance from the freshly evaluated `e(theta)` is within the drift
    // bound the tracer keeps (plus the library sine's own rounding), the loop closes to
    // the tolerance, and the budget binds: they are evaluated afresh again and again, each
    // time before the error they bring into the loop closure exceeds DRIFT_SHARE of the
    // tolerance.
    #[test]
    fn carried_unit_vectors_stay_within_their_drift_bound() {
        // A double-crank (ground shortest): theta3 and theta4 turn fully, so over two turns
        // of the crank the angles, and the rounding of their sums, grow.
        let l = bar(2.0, 7.0, 9.0, 6.0, Assembly::Open);
        let opts = SweepOptions::default();
        let mut tracer = Tracer::new(&l, opts);
        let start = tracer.pose_at(0.0, Assembly::Open).unwrap();
        let mut node = tracer.node(&start).unwrap();
        let sign = node.sign();
        let h = 0.01f64.to_radians();
        let grid = GridTurn::new(h);
        let (r2, r3, r4) = (l.input_link(), l.coupler(), l.output_link());
        let tol = opts.newton.tolerance * l.size();
        let lib = 2.0 * f64::EPSILON;
        let (mut fresh, mut carried, mut longest, mut run) = (0, 0, 0, 0);
        for k in 1..=72_000 {
            let t2 = k as f64 * h;
            let before = r2 * node.e2_error + (r3 + r4) * node.units_error;
            tracer.step(&mut node, t2, Some(&grid), sign).unwrap();
            if node.e2_error == 0.0 {
                fresh += 1;
                longest = longest.max(run);
                run = 0;
            } else {
                carried += 1;
                run += 1;
                assert!(before <= tracer.drift_budget, "{before} > budget at {k}");
            }
            let p = node.pose;
            assert!(
                (node.e2 - unit(p.theta2)).norm() <= node.e2_error + lib,
                "e2 at {k}"
            );
            assert!(
                (node.e3 - unit(p.theta3)).norm() <= node.units_error + lib,
                "e3 at {k}"
            );
            assert!(
                (node.e4 - unit(p.theta4)).norm() <= node.units_error + lib,
                "e4 at {k}"
            );
            let residual = crate::kinematics::position::loop_residual(&l, &p).norm();
            assert!(
                residual <= tol + 16.0 * f64::EPSILON * l.size(),
                "residual at {k}"
            );
        }
        assert!(
            fresh >= 10,
            "the budget never bound: {fresh} fresh evaluations"
        );
        assert!(carried > 20 * fresh, "{carried} carried, {fresh} fresh");
        assert!(longest > 8, "longest carried run {longest}");
        assert_relative_eq!(tracer.drift_budget, DRIFT_SHARE * tol, max_relative = 1e-15);
    }

    #[test]
    fn trace_stops_at_toggle_of_triple_rocker() {
        let l = bar(5.0, 4.0, 9.0, 6.0, Assembly::Open);
        let InputRange::Arcs(arcs) = InputRange::of(&l) else {
            panic!("triple rocker must rock")
        };
        assert_eq!(arcs.len(), 1);
        let mut tr = Tracer::new(&l, SweepOptions::default());
        // Here the input rocks about phi = pi (at phi = 0, |A - O4| = 1 < |r3 - r4| = 3).
        let start = tr.pose_at(PI, Assembly::Open).unwrap();
        match tr.trace(&start, PI + 3.0) {
            TraceEnd::Toggle { last, toggle } => {
                assert_relative_eq!(last.theta2, toggle.phi, epsilon = 1e-8);
                assert!(toggle.phi > PI && toggle.phi < PI + 3.0);
                let c = closed_form(&l, last.theta2, Assembly::Open).unwrap();
                assert_relative_eq!(wrap_pi(last.theta4 - c.theta4), 0.0, epsilon = 1e-4);
            }
            other => panic!("expected a toggle, got {other:?}"),
        }
    }
}
