//! Path generation (carry the coupler point through target points, with prescribed or free
//! crank timing) and motion generation (guide a frame fixed to the coupler through poses),
//! which is path generation with an orientation at every target.
//!
//! Variables (internal units): the [`Layout`] part (pivots, `r2, r3, r4, p, q`); for motion
//! the angle `gamma` of the coupler frame from the coupler line `A -> B`; then for free timing
//! the first crank angle and the positive increments to each next target (so the order is
//! built in), for relative timing the first crank angle only. Residuals per target: the
//! coupler point's miss `C(phi_i) - P_i`, a weighted assembly violation and, for motion, the
//! frame's angle error times the target set's size (so that one radian weighs like a miss of
//! the whole target set); then the layout's penalties and, for free timing, a penalty on
//! increments adding up to more than a turn. Error measure: `sum |C(phi_i) - P_i|^2` (the
//! measure of most published benchmark tables), also reported as RMS and max distance; for
//! motion the ranking error adds `sum (size * angle error)^2`.
//!
//! For three to five poses, half of the motion task's starts come from the exact methods of
//! Burmester theory (see [`crate::exact::motion`]): two dyads that guide the frame through
//! the poses exactly, so that refinement starts at zero error and verification decides
//! whether the linkage can run through the poses in order.
//!
//! Long paths (and many poses): with more than [`SEARCH_TARGETS`] targets the search runs on that many of
//! them, evenly spaced by index (first and last kept), so that the least-squares problem
//! stays small (free timing would otherwise need one variable and three residual rows per
//! target: a dense Jacobian of `(3n + 7) x (n + 9)`). [`Task::finish`] then checks the
//! candidate through every target and measures the error over all of them: prescribed crank
//! angles are used as given; free ones are placed target by target between the crank angles
//! of the neighbouring search targets, in order, each where the coupler point comes closest
//! to its target (a scan followed by Brent's method). For motion, the frame's angle errors are measured
//! at every pose too.

use std::f64::consts::TAU;

use nalgebra::{DMatrix, Point2, Vector2};
use rand::Rng;
use rand_chacha::ChaCha8Rng;

use super::check::check_motion;
use super::layout::{Layout, LIMIT_MARGIN, LIMIT_WEIGHT, MIN_INCREMENT, PENALTY_WEIGHT};
use super::{Frame, Mode, Rejection, Task, Verified};
use crate::exact::motion::{
    burmester_curve, burmester_points, dyads_to_linkage, three_pose_dyad, BurmesterOptions, Dyad,
    FramePose,
};
use crate::kinematics::range::wrap_pi;
use crate::kinematics::sweep::SweepOptions;
use crate::linkage::Assembly;
use crate::scenario::{Limits, MotionSpec, PathSpec, PathTiming};

#[derive(Debug, Clone, PartialEq)]
enum Timing {
    Free,
    /// Crank angles as given (from the ground line, unwrapped in running order).
    Absolute(Vec<f64>),
    /// Offsets of each crank angle from the first.
    Relative(Vec<f64>),
}

/// Paths with more targets than this are searched on this many of them (see the module docs).
pub const SEARCH_TARGETS: usize = 48;

/// Evaluations of the scan that brackets each placed crank angle of a long free-timing path.
const PLACE_SCAN: usize = 12;
/// Most iterations of Brent's method refining each placed crank angle.
const PLACE_ITERATIONS: usize = 60;
/// Tolerance (radians, relative to `1 + |angle|`) of each placed crank angle.
const PLACE_TOLERANCE: f64 = 1e-10;

/// Indices of `keep` targets out of `n`, evenly spaced, first and last included.
pub fn even_subset(n: usize, keep: usize) -> Vec<usize> {
    if keep >= n || keep < 2 {
        return (0..n).collect();
    }
    let mut idx: Vec<usize> = (0..keep)
        .map(|j| ((j as f64) * (n - 1) as f64 / (keep - 1) as f64).round() as usize)
        .collect();
    idx.dedup();
    idx
}

/// The whole path when the search runs on a subset of its targets.
#[derive(Debug, Clone)]
struct FullPath {
    /// Indices of the search targets in the whole list.
    subset: Vec<usize>,
    /// Every target (user units).
    targets: Vec<Point2<f64>>,
    /// Prescribed crank angles of every target: as given (absolute) or as offsets from the
    /// first (relative); `None` for free timing.
    timing: Option<Vec<f64>>,
    /// Frame angles of every pose (radians), for motion generation.
    angles: Option<Vec<f64>>,
}

/// The path-generation task, or motion generation when the targets carry orientations.
#[derive(Debug, Clone)]
pub struct PathTask {
    frame: Frame,
    /// Target frame angles (radians), for motion generation.
    angles: Option<Vec<f64>>,
    /// Dyads of the exact (Burmester) solution for four or five poses, internal units.
    dyads: Vec<Dyad>,
    layout: Layout,
    targets: Vec<Point2<f64>>,
    user_targets: Vec<Point2<f64>>,
    full: Option<FullPath>,
    timing: Timing,
    limits: Limits,
    sweep: SweepOptions,
    /// Chord lengths between consecutive targets, normalised to sum 1 (for timing guesses).
    chords: Vec<f64>,
}

/// Unwraps prescribed crank angles into running order. Angles already monotonic and within
/// one turn are kept as given; otherwise each step is taken in one direction (modulo a turn),
/// choosing the direction whose total travel is the shorter, so that `[0, 200, 300]` runs
/// counter-clockwise through 300 degrees rather than clockwise through 420.
pub fn unwrap_running(angles: &[f64]) -> Vec<f64> {
    if angles.len() < 2 {
        return angles.to_vec();
    }
    let span = angles[angles.len() - 1] - angles[0];
    let monotonic = angles
        .windows(2)
        .all(|w| (w[1] - w[0]) * span.signum() > 0.0);
    if monotonic && span.abs() <= TAU {
        return angles.to_vec();
    }
    let unwrap = |dir: f64| -> Vec<f64> {
        let mut out = vec![angles[0]];
        for w in angles.windows(2) {
            let step = ((w[1] - w[0]) * dir).rem_euclid(TAU) * dir;
            out.push(out[out.len() - 1] + step);
        }
        out
    };
    let (ccw, cw) = (unwrap(1.0), unwrap(-1.0));
    let travel = |v: &Vec<f64>| (v[v.len() - 1] - v[0]).abs();
    if travel(&ccw) <= travel(&cw) {
        ccw
    } else {
        cw
    }
}

impl PathTask {
    /// The task for `spec` within `limits` (searched on [`SEARCH_TARGETS`] of its targets when
    /// it has more).
    pub fn new(spec: &PathSpec, limits: &Limits) -> Self {
        let frame = Frame::of_task(&spec.points, limits);
        let all_timing = match &spec.timing {
            PathTiming::Free => Timing::Free,
            PathTiming::Absolute(a) => Timing::Absolute(unwrap_running(a)),
            PathTiming::Relative(a) => {
                let u = unwrap_running(a);
                Timing::Relative(u.iter().map(|v| v - u[0]).collect())
            }
        };
        let n = spec.points.len();
        let (points, timing, full) = if n > SEARCH_TARGETS {
            let subset = even_subset(n, SEARCH_TARGETS);
            let pick = |v: &[f64]| subset.iter().map(|&i| v[i]).collect::<Vec<f64>>();
            let (timing, given) = match &all_timing {
                Timing::Free => (Timing::Free, None),
                Timing::Absolute(a) => (Timing::Absolute(pick(a)), Some(a.clone())),
                Timing::Relative(d) => (Timing::Relative(pick(d)), Some(d.clone())),
            };
            let points = subset.iter().map(|&i| spec.points[i]).collect();
            let full = FullPath {
                subset,
                targets: spec.points.clone(),
                timing: given,
                angles: None,
            };
            (points, timing, Some(full))
        } else {
            (spec.points.clone(), all_timing, None)
        };
        let targets: Vec<_> = points.iter().map(|p| frame.to_internal(*p)).collect();
        let mut chords: Vec<f64> = targets.windows(2).map(|w| (w[1] - w[0]).norm()).collect();
        let total: f64 = chords.iter().sum();
        for c in &mut chords {
            *c /= total.max(1e-300);
        }
        PathTask {
            frame,
            angles: None,
            dyads: Vec::new(),
            layout: Layout::new(limits, &frame, true).opened(limits, &frame),
            targets,
            user_targets: points,
            full,
            timing,
            limits: limits.clone(),
            sweep: SweepOptions::default(),
            chords,
        }
    }

    /// The motion-generation task: poses `(origin, angle)` of a frame fixed to the coupler,
    /// with free timing. The frame's origin is the design's coupler point.
    pub fn motion(spec: &MotionSpec, limits: &Limits) -> Self {
        let path = PathSpec {
            points: spec.poses.iter().map(|p| p.0).collect(),
            timing: PathTiming::Free,
        };
        let mut task = Self::new(&path, limits);
        let all: Vec<f64> = spec.poses.iter().map(|p| p.1).collect();
        task.angles = Some(match &mut task.full {
            // Many poses: the search sees the subset's angles, the final check all of them.
            Some(full) => {
                let searched = full.subset.iter().map(|&i| all[i]).collect();
                full.angles = Some(all);
                searched
            }
            None => all,
        });
        let poses = task.exact_poses();
        let opts = BurmesterOptions::default();
        task.dyads = match poses.len() {
            4 => burmester_curve(&[poses[0], poses[1], poses[2], poses[3]], &opts)
                .unwrap_or_default(),
            5 => burmester_points(&[poses[0], poses[1], poses[2], poses[3], poses[4]], &opts)
                .unwrap_or_default(),
            _ => Vec::new(),
        };
        task
    }

    /// The motion targets as frame poses in internal units.
    fn exact_poses(&self) -> Vec<FramePose> {
        match &self.angles {
            Some(a) => self
                .targets
                .iter()
                .zip(a)
                .map(|(p, a)| FramePose {
                    origin: *p,
                    angle: *a,
                })
                .collect(),
            None => Vec::new(),
        }
    }

    /// A start from the exact methods of motion generation (Burmester theory): two dyads
    /// that guide the coupler frame through the poses exactly (three poses: moving pivots
    /// drawn at random, fixed pivots at the circle centres; four: two points of the
    /// circle-point curve; five: two Burmester points), encoded as variables with the crank
    /// angles at the poses. `None` when no such start applies or the dyads do not make a
    /// linkage.
    fn exact_start(&self, rng: &mut ChaCha8Rng) -> Option<(Vec<f64>, Mode)> {
        let poses = self.exact_poses();
        let (d_in, d_out) = match poses.len() {
            3 => {
                let three = [poses[0], poses[1], poses[2]];
                let mut draw = || {
                    let m = Vector2::new(rng.random_range(-2.0..2.0), rng.random_range(-2.0..2.0));
                    three_pose_dyad(&three, m)
                };
                (draw()?, draw()?)
            }
            4 | 5 if self.dyads.len() >= 2 => {
                let i = rng.random_range(0..self.dyads.len());
                let mut j = rng.random_range(0..self.dyads.len() - 1);
                if j >= i {
                    j += 1;
                }
                (self.dyads[i], self.dyads[j])
            }
            _ => return None,
        };
        let l = dyads_to_linkage(&d_in, &d_out, &poses)?;
        let mut x = self.layout.encode(&l)?;
        let t1 = l.ground_angle();
        let a0 = d_in.moving_at(&poses[0]);
        let b0 = d_out.moving_at(&poses[0]);
        let theta3 = (b0.y - a0.y).atan2(b0.x - a0.x);
        x.push(wrap_pi(poses[0].angle - theta3));
        let phis: Vec<f64> = poses.iter().map(|p| d_in.crank_angle(p) - t1).collect();
        let run = unwrap_running(&phis);
        let dir = if run[run.len() - 1] >= run[0] {
            1.0
        } else {
            -1.0
        };
        x.push(phis[0].rem_euclid(TAU));
        for w in phis.windows(2) {
            x.push(((w[1] - w[0]) * dir).rem_euclid(TAU).max(MIN_INCREMENT));
        }
        let (lo, hi) = self.bounds();
        if x.iter()
            .zip(lo.iter().zip(&hi))
            .any(|(v, (a, b))| v < a || v > b)
        {
            return None;
        }
        Some((
            x,
            Mode {
                assembly: l.assembly(),
                direction: if dir > 0.0 { 1 } else { -1 },
            },
        ))
    }

    /// Residual rows per target.
    fn rows(&self) -> usize {
        if self.angles.is_some() {
            4
        } else {
            3
        }
    }

    /// Index of the first timing variable.
    fn timing_start(&self) -> usize {
        self.layout.dim() + usize::from(self.angles.is_some())
    }

    /// `layout` bounds followed by those of the frame angle (motion) and the timing variables.
    fn with_angle_bounds(&self, (mut a, mut b): (Vec<f64>, Vec<f64>)) -> (Vec<f64>, Vec<f64>) {
        if self.angles.is_some() {
            a.push(-TAU);
            b.push(TAU);
        }
        match self.timing {
            Timing::Free => {
                let (ta, tb) = Layout::timing_bounds(self.n());
                a.extend(ta);
                b.extend(tb);
            }
            Timing::Relative(_) => {
                a.push(-TAU);
                b.push(2.0 * TAU);
            }
            Timing::Absolute(_) => {}
        }
        (a, b)
    }

    /// The internal frame (scaling) of the task.
    pub fn frame(&self) -> &Frame {
        &self.frame
    }

    fn n(&self) -> usize {
        self.targets.len()
    }

    fn timing_dim(&self) -> usize {
        match self.timing {
            Timing::Free => self.n(),
            Timing::Absolute(_) => 0,
            Timing::Relative(_) => 1,
        }
    }

    /// Crank angles from the ground line at the targets for variables `x`.
    pub fn crank_angles(&self, x: &[f64], mode: Mode) -> Vec<f64> {
        let k = self.timing_start();
        match &self.timing {
            Timing::Absolute(a) => a.clone(),
            Timing::Relative(d) => d.iter().map(|v| x[k] + v).collect(),
            Timing::Free => {
                let dir = f64::from(mode.direction);
                let mut phi = x[k];
                let mut out = Vec::with_capacity(self.n());
                out.push(phi);
                for i in 1..self.n() {
                    phi += dir * x[k + i];
                    out.push(phi);
                }
                out
            }
        }
    }

    fn residuals_at(&self, x: &[f64], phis: &[f64], assembly: Assembly, out: &mut [f64]) {
        let g = self.layout.geometry(x);
        let rows = self.rows();
        for (i, (t, phi)) in self.targets.iter().zip(phis).enumerate() {
            let s = g.soft_position(*phi, assembly);
            let c = g.coupler_point(&s);
            out[rows * i] = c.x - t.x;
            out[rows * i + 1] = c.y - t.y;
            out[rows * i + 2] = PENALTY_WEIGHT * s.violation;
            if let Some(angles) = &self.angles {
                let gamma = x[self.layout.dim()];
                let theta3 = s.e3.y.atan2(s.e3.x);
                out[rows * i + 3] = wrap_pi(theta3 + gamma - angles[i]);
            }
        }
        let base = rows * self.n();
        self.layout
            .penalties(&g, &mut out[base..base + Layout::N_PENALTIES]);
        if matches!(self.timing, Timing::Free) {
            let k = self.timing_start();
            let total: f64 = x[k + 1..].iter().sum();
            out[base + Layout::N_PENALTIES] =
                LIMIT_WEIGHT * (total - (TAU - LIMIT_MARGIN)).max(0.0);
        }
    }
}

impl Task for PathTask {
    fn kind(&self) -> &'static str {
        if self.angles.is_some() {
            "motion"
        } else {
            "path"
        }
    }

    fn dim(&self) -> usize {
        self.timing_start() + self.timing_dim()
    }

    fn n_residuals(&self) -> usize {
        self.rows() * self.n()
            + Layout::N_PENALTIES
            + usize::from(matches!(self.timing, Timing::Free))
    }

    fn bounds(&self) -> (Vec<f64>, Vec<f64>) {
        self.with_angle_bounds(self.layout.bounds())
    }

    fn search_box(&self) -> (Vec<f64>, Vec<f64>) {
        self.with_angle_bounds(self.layout.search_bounds())
    }

    fn sample(&self, rng: &mut ChaCha8Rng) -> (Vec<f64>, Mode) {
        if self.angles.is_some() && rng.random_bool(0.5) {
            if let Some(start) = self.exact_start(rng) {
                return start;
            }
        }
        let mut x = self.layout.sample(rng);
        if self.angles.is_some() {
            x.push(rng.random_range(-std::f64::consts::PI..std::f64::consts::PI));
        }
        let assembly = if rng.random_bool(0.5) {
            Assembly::Open
        } else {
            Assembly::Crossed
        };
        let mut direction = 1;
        match self.timing {
            Timing::Free => {
                direction = if rng.random_bool(0.5) { 1 } else { -1 };
                x.push(rng.random_range(0.0..TAU));
                // Crank increments roughly proportional to the chords between targets.
                let total = rng.random_range(0.25..0.95) * TAU;
                for c in &self.chords {
                    let jitter = rng.random_range(0.5..1.5);
                    x.push((total * c * jitter).max(MIN_INCREMENT));
                }
            }
            Timing::Relative(_) => x.push(rng.random_range(0.0..TAU)),
            Timing::Absolute(_) => {}
        }
        (
            x,
            Mode {
                assembly,
                direction,
            },
        )
    }

    fn residuals(&self, x: &[f64], mode: Mode, out: &mut [f64]) {
        let phis = self.crank_angles(x, mode);
        self.residuals_at(x, &phis, mode.assembly, out);
    }

    fn jacobian(&self, x: &[f64], mode: Mode, r0: &[f64], out: &mut DMatrix<f64>) {
        let Timing::Free = self.timing else {
            return super::fd_jacobian(self, x, mode, r0, out);
        };
        // Layout columns by forward differences; the timing columns by one grouped evaluation
        // (each crank angle moves only its own target's rows) and the chain rule through the
        // cumulative increments.
        let k = self.timing_start();
        let rows = self.rows();
        let m = self.n_residuals();
        let mut xp = x.to_vec();
        let mut r = vec![0.0; m];
        let phis = self.crank_angles(x, mode);
        for j in 0..k {
            let h = super::fd_step(x[j]);
            xp[j] = x[j] + h;
            self.residuals_at(&xp, &phis, mode.assembly, &mut r);
            xp[j] = x[j];
            for i in 0..m {
                out[(i, j)] = (r[i] - r0[i]) / h;
            }
        }
        let h = 1e-7;
        let shifted: Vec<f64> = phis.iter().map(|p| p + h).collect();
        self.residuals_at(x, &shifted, mode.assembly, &mut r);
        let n = self.n();
        // d r_i / d phi_i for each target's rows.
        let dphi: Vec<[f64; 4]> = (0..n)
            .map(|i| {
                let mut d = [0.0; 4];
                for (c, v) in d.iter_mut().enumerate().take(rows) {
                    *v = (r[rows * i + c] - r0[rows * i + c]) / h;
                }
                d
            })
            .collect();
        let dir = f64::from(mode.direction);
        for j in 0..n {
            for i in 0..m {
                out[(i, k + j)] = 0.0;
            }
            // phi_i = x[k] + dir * sum_{l=1..i} x[k + l].
            for (i, d) in dphi.iter().enumerate() {
                let w = if j == 0 {
                    1.0
                } else if i >= j {
                    dir
                } else {
                    0.0
                };
                if w != 0.0 {
                    for c in 0..rows {
                        out[(rows * i + c, k + j)] = w * d[c];
                    }
                }
            }
        }
        // Increment-sum penalty row.
        let row = rows * n + Layout::N_PENALTIES;
        let total: f64 = x[k + 1..].iter().sum();
        let active = total > TAU - LIMIT_MARGIN;
        for j in 1..n {
            out[(row, k + j)] = if active { LIMIT_WEIGHT } else { 0.0 };
        }
    }

    fn verify(&self, x: &[f64], mode: Mode) -> Result<Verified, Rejection> {
        let g = self.layout.geometry(x);
        let internal = g.linkage(mode.assembly).ok_or(Rejection::Degenerate)?;
        let linkage = self.frame.linkage_to_user(&internal);
        let phis = self.crank_angles(x, mode);
        let check = check_motion(&linkage, &phis, &self.limits, &self.sweep)?;
        Ok(self.measured(
            x,
            linkage,
            phis,
            &check,
            &self.user_targets,
            self.angles.as_deref(),
        ))
    }

    fn finish(&self, x: &[f64], _mode: Mode, verified: Verified) -> Result<Verified, Rejection> {
        let Some(full) = &self.full else {
            return Ok(verified);
        };
        let linkage = verified.linkage;
        let phis = match &full.timing {
            None => {
                let frame = full
                    .angles
                    .as_deref()
                    .map(|a| (x[self.layout.dim()], a, self.frame.scale));
                place_free(
                    &linkage,
                    &full.subset,
                    &verified.crank_angles,
                    &full.targets,
                    frame,
                )?
            }
            Some(given) => match self.timing {
                Timing::Relative(_) => {
                    let start = x[self.timing_start()];
                    given.iter().map(|d| start + d).collect()
                }
                _ => given.clone(),
            },
        };
        let check = check_motion(&linkage, &phis, &self.limits, &self.sweep)?;
        Ok(self.measured(
            x,
            linkage,
            phis,
            &check,
            &full.targets,
            full.angles.as_deref(),
        ))
    }
}

impl PathTask {
    /// The verified design with its errors at `targets` (user units) and, for motion, at the
    /// frame `angles` of the poses.
    fn measured(
        &self,
        x: &[f64],
        linkage: crate::FourBar,
        phis: Vec<f64>,
        check: &super::MotionCheck,
        targets: &[Point2<f64>],
        angles: Option<&[f64]>,
    ) -> Verified {
        let reached: Vec<Point2<f64>> = check
            .poses
            .iter()
            .map(|p| linkage.coupler_point_at(p.theta2, p.theta3))
            .collect();
        let d2: Vec<f64> = reached
            .iter()
            .zip(targets)
            .map(|(a, b)| (a - b).norm_squared())
            .collect();
        let sse: f64 = d2.iter().sum();
        let rms = (sse / d2.len() as f64).sqrt();
        let max = d2.iter().copied().fold(0.0, f64::max).sqrt();
        let mut measures = serde_json::Map::new();
        measures.insert("sum_squared_error".into(), sse.into());
        measures.insert("rms_error".into(), rms.into());
        measures.insert("max_error".into(), max.into());
        let mut error = sse;
        if let Some(angles) = angles {
            let gamma = x[self.layout.dim()];
            let errs: Vec<f64> = check
                .poses
                .iter()
                .zip(angles)
                .map(|(p, a)| wrap_pi(p.theta3 + gamma - a))
                .collect();
            let max_angle = errs.iter().fold(0.0f64, |m, e| m.max(e.abs()));
            let s = self.frame.scale;
            error += errs.iter().map(|e| (s * e) * (s * e)).sum::<f64>();
            measures.insert("max_angle_error".into(), max_angle.to_degrees().into());
            measures.insert("frame_angle".into(), wrap_pi(gamma).to_degrees().into());
            measures.insert("angle_weight".into(), s.into());
        }
        Verified {
            grashof: linkage.grashof(),
            linkage,
            crank_angles: phis,
            error,
            min_transmission: check.min_transmission,
            measures,
            reached,
        }
    }
}

/// The closed-form position of a linkage (any units), cheap enough to call a few dozen times
/// per target of a long path.
fn geometry_of(l: &crate::FourBar) -> super::layout::Geometry {
    let cp = l.coupler_point();
    super::layout::Geometry {
        o2: l.input_pivot(),
        o4: l.output_pivot(),
        theta1: l.ground_angle(),
        r1: l.ground(),
        r2: l.input_link(),
        r3: l.coupler(),
        r4: l.output_link(),
        p: cp.p,
        q: cp.q,
    }
}

/// The coupler frame of a motion task when placing crank angles: the frame's angle from
/// the coupler line, the poses' angles and the weight of one radian (the target set's size).
type FrameAngles<'a> = (f64, &'a [f64], f64);

/// Squared distance from the coupler point at crank angle `phi` (from the ground line) to
/// `target`, plus for motion (`frame`: frame angle from the coupler line, the pose's angle,
/// weight of a radian) the squared weighted error of the frame's angle; infinite where the
/// linkage does not assemble.
fn miss(
    g: &super::layout::Geometry,
    assembly: Assembly,
    phi: f64,
    target: Point2<f64>,
    frame: Option<(f64, f64, f64)>,
) -> f64 {
    let s = g.soft_position(phi, assembly);
    if s.violation > 0.0 {
        return f64::INFINITY;
    }
    let d2 = (g.coupler_point(&s) - target).norm_squared();
    match frame {
        Some((gamma, angle, weight)) => {
            let e = weight * wrap_pi(s.e3.y.atan2(s.e3.x) + gamma - angle);
            d2 + e * e
        }
        None => d2,
    }
}

/// Crank angles at every target of a long free-timing path, given those of the search
/// targets (`subset`, `anchors`, in running order): each target between two search targets
/// gets the angle, after its predecessor's and before the next search target's, where the
/// coupler point comes closest to it (see the module docs).
///
/// # Errors
/// [`Rejection::OrderDefect`] when the anchors are not strictly monotonic.
fn place_free(
    linkage: &crate::FourBar,
    subset: &[usize],
    anchors: &[f64],
    targets: &[Point2<f64>],
    frame: Option<FrameAngles>,
) -> Result<Vec<f64>, Rejection> {
    let g = geometry_of(linkage);
    let assembly = linkage.assembly();
    let mut phis = vec![0.0; targets.len()];
    for (w, a) in subset.windows(2).zip(anchors.windows(2)) {
        let (i0, i1) = (w[0], w[1]);
        let (a0, a1) = (a[0], a[1]);
        let span = a1 - a0;
        if !(span.abs() > 0.0 && span.is_finite()) {
            return Err(Rejection::OrderDefect);
        }
        phis[i0] = a0;
        phis[i1] = a1;
        let m = i1 - i0 - 1;
        // Keep placed angles strictly inside the interval and apart from each other.
        let gap = 1e-6 * span / (m + 1) as f64;
        let mut lo = a0;
        for (k, i) in (i0 + 1..i1).enumerate() {
            let from = lo + gap;
            let to = a1 - gap * (m - k) as f64;
            let pose = frame.map(|(gamma, angles, weight)| (gamma, angles[i], weight));
            let f = |t: f64| miss(&g, assembly, t, targets[i], pose);
            let phi = minimise_on(from, to, f);
            phis[i] = phi;
            lo = phi;
        }
    }
    Ok(phis)
}

/// Minimiser of `f` on the interval between `a` and `b` (either order): a scan of
/// [`PLACE_SCAN`] points brackets the best, then Brent's method (golden-section steps with
/// parabolic interpolation; R. P. Brent, "Algorithms for Minimization without Derivatives",
/// 1973, ch. 5) refines it to [`PLACE_TOLERANCE`].
pub fn minimise_on(a: f64, b: f64, f: impl Fn(f64) -> f64) -> f64 {
    let (a, b) = if a <= b { (a, b) } else { (b, a) };
    if b - a <= 0.0 {
        return a;
    }
    let h = (b - a) / (PLACE_SCAN - 1) as f64;
    let mut best = (f64::INFINITY, a);
    for k in 0..PLACE_SCAN {
        let t = a + h * k as f64;
        let v = f(t);
        if v < best.0 {
            best = (v, t);
        }
    }
    if !best.0.is_finite() {
        return best.1;
    }
    brent((best.1 - h).max(a), (best.1 + h).min(b), best, f)
}

/// Brent's minimisation on `[lo, hi]` from the point `x0` with value `f0` inside it.
fn brent(mut lo: f64, mut hi: f64, (f0, x0): (f64, f64), f: impl Fn(f64) -> f64) -> f64 {
    const GOLD: f64 = 0.381_966_011_250_105_1; // (3 - sqrt 5) / 2
    let (mut x, mut w, mut v) = (x0, x0, x0);
    let (mut fx, mut fw, mut fv) = (f0, f0, f0);
    let (mut d, mut e): (f64, f64) = (0.0, 0.0);
    for _ in 0..PLACE_ITERATIONS {
        let mid = 0.5 * (lo + hi);
        let tol1 = PLACE_TOLERANCE * (1.0 + x.abs());
        let tol2 = 2.0 * tol1;
        if (x - mid).abs() <= tol2 - 0.5 * (hi - lo) {
            break;
        }
        let mut golden = true;
        if e.abs() > tol1 && fx.is_finite() && fw.is_finite() && fv.is_finite() {
            // Parabola through x, w, v.
            let r = (x - w) * (fx - fv);
            let mut q = (x - v) * (fx - fw);
            let mut p = (x - v) * q - (x - w) * r;
            q = 2.0 * (q - r);
            if q > 0.0 {
                p = -p;
            }
            q = q.abs();
            let e_old = e;
            if p.abs() < (0.5 * q * e_old).abs() && p > q * (lo - x) && p < q * (hi - x) {
                e = d;
                d = p / q;
                let u = x + d;
                if u - lo < tol2 || hi - u < tol2 {
                    d = tol1.copysign(mid - x);
                }
                golden = false;
            }
        }
        if golden {
            e = if x >= mid { lo - x } else { hi - x };
            d = GOLD * e;
        }
        let u = if d.abs() >= tol1 {
            x + d
        } else {
            x + tol1.copysign(d)
        };
        let fu = f(u);
        if fu <= fx {
            if u >= x {
                lo = x;
            } else {
                hi = x;
            }
            (v, fv) = (w, fw);
            (w, fw) = (x, fx);
            (x, fx) = (u, fu);
        } else {
            if u < x {
                lo = u;
            } else {
                hi = u;
            }
            #[allow(clippy::float_cmp)] // reason: Brent's test for coinciding abscissae
            let (w_is_x, v_is_x, v_is_w) = (w == x, v == x, v == w);
            if fu <= fw || w_is_x {
                (v, fv) = (w, fw);
                (w, fw) = (u, fu);
            } else if fu <= fv || v_is_x || v_is_w {
                (v, fv) = (u, fu);
            }
        }
    }
    x
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn even_subset_keeps_ends_and_spacing() {
        let s = even_subset(10_000, SEARCH_TARGETS);
        assert_eq!(s.len(), SEARCH_TARGETS);
        assert_eq!((s[0], s[s.len() - 1]), (0, 9_999));
        assert!(s.windows(2).all(|w| w[1] > w[0]));
        assert_eq!(even_subset(5, SEARCH_TARGETS), vec![0, 1, 2, 3, 4]);
    }

    // Reference minima in closed form: cos has its minimum at pi; (t - 0.3)^2 + 1 at 0.3; an
    // interval ending before the minimum gives its end. Tolerance 1e-7: near a quadratic
    // minimum f is flat, so its abscissa is resolved only to about sqrt(machine epsilon).
    #[test]
    fn minimiser_finds_interior_and_end_minima() {
        assert_relative_eq!(
            minimise_on(2.0, 4.0, f64::cos),
            std::f64::consts::PI,
            epsilon = 1e-7
        );
        assert_relative_eq!(
            minimise_on(1.0, -1.0, |t| (t - 0.3).powi(2) + 1.0),
            0.3,
            epsilon = 1e-7
        );
        assert_relative_eq!(
            minimise_on(0.5, 1.0, |t| (t - 0.3).powi(2)),
            0.5,
            epsilon = 1e-7
        );
        // Not assembled (infinite) on part of the interval.
        let f = |t: f64| {
            if t < 0.2 {
                f64::INFINITY
            } else {
                (t - 0.25).powi(2)
            }
        };
        assert_relative_eq!(minimise_on(0.0, 1.0, f), 0.25, epsilon = 1e-7);
    }

    #[test]
    fn unwrap_running_keeps_direction() {
        let d = |v: &[f64]| v.iter().map(|a| a.to_radians()).collect::<Vec<_>>();
        let u = unwrap_running(&d(&[350.0, 10.0, 40.0]));
        assert_relative_eq!(u[1].to_degrees(), 370.0, epsilon = 1e-9);
        assert_relative_eq!(u[2].to_degrees(), 400.0, epsilon = 1e-9);
        let u = unwrap_running(&d(&[90.0, 60.0, 300.0]));
        assert_relative_eq!(u[2].to_degrees(), -60.0, epsilon = 1e-9);
        // A first step of more than half a turn: 300 deg counter-clockwise, not 420 clockwise.
        let u = unwrap_running(&d(&[0.0, 200.0, 300.0]));
        assert_relative_eq!(u[2].to_degrees(), 300.0, epsilon = 1e-9);
        let u = unwrap_running(&d(&[0.0, -200.0, -300.0]));
        assert_relative_eq!(u[2].to_degrees(), -300.0, epsilon = 1e-9);
        let u = unwrap_running(&d(&[300.0, 100.0, 20.0]));
        assert_relative_eq!(u[2].to_degrees(), 20.0, epsilon = 1e-9);
    }

    #[test]
    fn grouped_jacobian_matches_plain_differences() {
        let spec = PathSpec {
            points: vec![
                Point2::new(0.0, 0.0),
                Point2::new(10.0, 3.0),
                Point2::new(18.0, 9.0),
                Point2::new(20.0, 15.0),
            ],
            timing: PathTiming::Free,
        };
        let motion = MotionSpec {
            poses: spec
                .points
                .iter()
                .enumerate()
                .map(|(i, p)| (*p, 0.3 * i as f64))
                .collect(),
        };
        for task in [
            PathTask::new(&spec, &Limits::default()),
            PathTask::motion(&motion, &Limits::default()),
        ] {
            check_grouped_jacobian(&task);
        }
    }

    fn check_grouped_jacobian(task: &PathTask) {
        let mut rng = <ChaCha8Rng as rand::SeedableRng>::seed_from_u64(7);
        let (x, mode) = task.sample(&mut rng);
        let m = task.n_residuals();
        let mut r0 = vec![0.0; m];
        task.residuals(&x, mode, &mut r0);
        let mut a = DMatrix::zeros(m, x.len());
        let mut b = DMatrix::zeros(m, x.len());
        task.jacobian(&x, mode, &r0, &mut a);
        super::super::fd_jacobian(task, &x, mode, &r0, &mut b);
        for i in 0..m {
            for j in 0..x.len() {
                assert!(
                    (a[(i, j)] - b[(i, j)]).abs() <= 1e-4 * (1.0 + b[(i, j)].abs()),
                    "{} row {i} col {j}: {} vs {}",
                    task.kind(),
                    a[(i, j)],
                    b[(i, j)]
                );
            }
        }
    }
}
