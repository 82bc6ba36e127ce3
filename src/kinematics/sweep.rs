//! Motion by continuation: Newton-Raphson position solves stepped along the crank angle,
//! each started from the previous solution moved along its tangent (the velocity solution
//! of the same Jacobian). Continuation is what keeps the linkage on one branch; the step is
//! cut near toggles, where the coupler's angle changes like the square root of the distance.

use std::f64::consts::TAU;

use super::position::{closed_form, solve_position, NewtonOptions, Pose, PositionStatus};
use super::range::{wrap_tau, Arc, InputRange, Toggle};
use super::rates::velocity_ratios;
use crate::linkage::{Assembly, FourBar};

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

/// Traces the motion of one linkage along its crank angle by continuation.
#[derive(Debug, Clone)]
pub struct Tracer<'a> {
    linkage: &'a FourBar,
    range: InputRange,
    options: SweepOptions,
    solves: usize,
}

impl<'a> Tracer<'a> {
    /// A tracer for `linkage`; computes its input range once.
    pub fn new(linkage: &'a FourBar, options: SweepOptions) -> Self {
        Self {
            linkage,
            range: InputRange::of(linkage),
            options,
            solves: 0,
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
        let guess = closed_form(self.linkage, theta2, assembly)?;
        self.solves += 1;
        let s = solve_position(self.linkage, theta2, &guess, &self.options.newton);
        Some(if s.converged() { s.pose } else { guess })
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

    /// Traces from the converged pose `start` to crank angle `theta2_end` (radians; larger
    /// than `start.theta2` means counter-clockwise, and more than a turn is allowed), staying
    /// on the branch of `start`.
    pub fn trace(&mut self, start: &Pose, theta2_end: f64) -> TraceEnd {
        let total = theta2_end - start.theta2;
        if total == 0.0 {
            return TraceEnd::Reached(*start);
        }
        let dir = total.signum();
        let sign = start.assembly();
        let opts = self.options;
        let mut goal = theta2_end;
        let mut toggle = None;
        if let Some((dist, t)) = self.limit(start.theta2, dir) {
            if dist < total.abs() {
                goal = start.theta2 + dir * (dist - opts.toggle_margin).max(0.0);
                toggle = Some(t);
            }
        }
        let mut cur = *start;
        let mut h = opts.max_step;
        loop {
            let remaining = (goal - cur.theta2) * dir;
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
            let Some((k3, k4)) = velocity_ratios(self.linkage, &cur) else {
                return TraceEnd::Lost {
                    last: cur,
                    status: PositionStatus::Singular,
                };
            };
            let t2 = if step >= remaining {
                goal
            } else {
                cur.theta2 + dir * step
            };
            let dt = t2 - cur.theta2;
            let guess = Pose {
                theta2: t2,
                theta3: cur.theta3 + k3 * dt,
                theta4: cur.theta4 + k4 * dt,
            };
            self.solves += 1;
            let s = solve_position(self.linkage, t2, &guess, &opts.newton);
            let jump = (s.pose.theta3 - guess.theta3)
                .abs()
                .max((s.pose.theta4 - guess.theta4).abs());
            if s.converged() && s.pose.assembly() == sign && jump < 0.5 {
                cur = s.pose;
                if s.iterations <= 3 {
                    h = (h * 2.0).min(opts.max_step);
                } else if s.iterations > 6 {
                    h *= 0.5;
                }
            } else {
                h = step * 0.25;
                if h < opts.min_step {
                    return TraceEnd::Lost {
                        last: cur,
                        status: s.status,
                    };
                }
            }
        }
        match toggle {
            Some(toggle) => TraceEnd::Toggle { last: cur, toggle },
            None => TraceEnd::Reached(cur),
        }
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
    /// Exact poses at the two toggles (closed form, where the Jacobian is singular).
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

/// Sweeps the linkage over crank angles that are whole multiples of `step` (radians),
/// on the linkage's own assembly, by Newton-Raphson continuation. Each branch starts from a
/// closed-form guess at its first grid angle and is then traced grid angle to grid angle.
pub fn sweep(linkage: &FourBar, step: f64, options: &SweepOptions) -> Sweep {
    let mut tracer = Tracer::new(linkage, *options);
    let asm = linkage.assembly();
    let t1 = linkage.ground_angle();
    let mut branches = Vec::new();
    let range = tracer.range().clone();
    // Grid stations: the crank angles k * step in [lo, hi].
    let stations = |lo: f64, hi: f64| -> Vec<f64> {
        let k0 = (lo / step).ceil() as i64;
        let k1 = (hi / step).floor() as i64;
        (k0..=k1).map(|k| k as f64 * step).collect()
    };
    let run = |tracer: &mut Tracer, st: Vec<f64>| -> Vec<Pose> {
        let mut poses = Vec::with_capacity(st.len());
        let Some(&first) = st.first() else {
            return poses;
        };
        let Some(mut cur) = tracer.pose_at(first, asm) else {
            return poses;
        };
        poses.push(cur);
        for &t2 in &st[1..] {
            match tracer.trace(&cur, t2) {
                TraceEnd::Reached(p) => {
                    cur = p;
                    poses.push(p);
                }
                _ => {
                    // Cannot happen inside an arc; restart from the closed form if it does.
                    if let Some(p) = tracer.pose_at(t2, asm) {
                        cur = p;
                        poses.push(p);
                    }
                }
            }
        }
        poses
    };
    match &range {
        InputRange::None => {}
        InputRange::FullTurn => {
            let n = (TAU / step).round() as usize;
            let st: Vec<f64> = (0..n)
                .map(|k| k as f64 * step)
                .filter(|t| *t < TAU - 1e-12)
                .collect();
            let poses = run(&mut tracer, st);
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
                let poses = run(&mut tracer, stations(lo, hi));
                let tp = (tracer.pose_at(lo, asm), tracer.pose_at(hi, asm));
                branches.push(Branch {
                    assembly: asm,
                    poses,
                    toggles: Some((arc.start, arc.end)),
                    toggle_poses: match tp {
                        (Some(a), Some(b)) => Some((a, b)),
                        _ => None,
                    },
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
