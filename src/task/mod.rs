//! Synthesis tasks: what a design must do, as variables, bounds, residuals and a verification.
//!
//! A [`Task`] turns a scenario into a least-squares problem in internal, scaled units (lengths
//! divided by the size of the target set, see [`Frame`]) and checks every refined candidate
//! with a full Newton-Raphson sweep ([`check::check_motion`]). The engine in
//! [`crate::synthesis`] only talks to this trait, so a new task kind plugs in by implementing it.

pub mod check;
pub mod function;
pub mod layout;
pub mod path;

use nalgebra::{DMatrix, Point2, Vector2};
use rand_chacha::ChaCha8Rng;
use serde::Serialize;

use crate::linkage::{Assembly, FourBar, GrashofClass};
use crate::scenario::Limits;

pub use check::{check_motion, MotionCheck};
pub use function::FunctionTask;
pub use layout::Layout;
pub use path::PathTask;

/// Internal scaling: a user point `P` maps to `(P - origin) / scale`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Frame {
    /// Centre of the target set (user units).
    pub origin: Point2<f64>,
    /// Size of the target set (user units); never zero.
    pub scale: f64,
}

impl Frame {
    /// The frame of a set of points: centre of the bounding box, scale the larger side
    /// (or 1 when all points coincide).
    pub fn of(points: &[Point2<f64>]) -> Self {
        let (lo, hi) = crate::linkage::bounding_box(points.iter().copied())
            .unwrap_or((Point2::origin(), Point2::origin()));
        let d = hi - lo;
        let scale = d.x.max(d.y);
        Frame {
            origin: nalgebra::center(&lo, &hi),
            scale: if scale > 0.0 && scale.is_finite() {
                scale
            } else {
                1.0
            },
        }
    }
    /// The frame of a set of points as [`Frame::of`], but when all points coincide (a motion
    /// task whose frame origin stays put while only its angle changes) the scale comes from
    /// the limits: the longest allowed link, else the size of the pivot regions, else the
    /// distance to a fixed pivot; 1 unit only when the limits say nothing about size.
    pub fn of_task(points: &[Point2<f64>], limits: &Limits) -> Self {
        let frame = Frame::of(points);
        let spread = crate::linkage::bounding_box(points.iter().copied())
            .map(|(lo, hi)| (hi - lo).amax())
            .unwrap_or(0.0);
        if spread > 0.0 {
            return frame;
        }
        let region_size = |r: &Option<crate::scenario::Region>| r.map(|(lo, hi)| (hi - lo).amax());
        let pivot_distance = |p: &Option<Point2<f64>>| p.map(|p| (p - frame.origin).norm());
        let scale = [
            limits.link_length.map(|(_, hi)| hi),
            region_size(&limits.input_region),
            region_size(&limits.output_region),
            pivot_distance(&limits.input_pivot),
            pivot_distance(&limits.output_pivot),
        ]
        .into_iter()
        .flatten()
        .find(|s| *s > 0.0 && s.is_finite())
        .unwrap_or(1.0);
        Frame {
            origin: frame.origin,
            scale,
        }
    }
    /// User point to internal.
    pub fn to_internal(&self, p: Point2<f64>) -> Point2<f64> {
        Point2::from((p - self.origin) / self.scale)
    }
    /// Internal point to user.
    pub fn to_user(&self, p: Point2<f64>) -> Point2<f64> {
        self.origin + p.coords * self.scale
    }
    /// A linkage in internal units moved to user units.
    pub fn linkage_to_user(&self, l: &FourBar) -> FourBar {
        let s = self.scale;
        let cp = l.coupler_point();
        FourBar::new(
            self.to_user(l.input_pivot()),
            self.to_user(l.output_pivot()),
            l.input_link() * s,
            l.coupler() * s,
            l.output_link() * s,
            crate::linkage::CouplerPoint {
                p: cp.p * s,
                q: cp.q * s,
            },
            l.assembly(),
        )
        .expect("scaling a valid linkage by a positive factor keeps it valid")
    }
}

/// Discrete choices of a start that refinement does not change: the assembly and the
/// direction in which the crank runs through the targets.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Mode {
    /// Assembly used by the residuals' closed-form positions.
    pub assembly: Assembly,
    /// `+1` when the crank angle increases from target to target, `-1` otherwise.
    pub direction: i8,
}

/// Why a candidate was rejected (counted per reason in results).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Rejection {
    /// Refinement produced an invalid linkage (a length collapsed to zero or NaN, or sizes a
    /// design file cannot hold).
    Degenerate,
    /// Cannot be assembled at one of the targets, or a target sits at a toggle (a dead point
    /// of the input).
    NotAssembled,
    /// Targets lie on different circuits.
    CircuitDefect,
    /// Targets on one circuit but separated by a toggle: the driver would have to reverse.
    BranchDefect,
    /// Targets reached in the wrong order (or more than one turn of the crank apart).
    OrderDefect,
    /// The crank must turn fully but does not (not Grashof with the input shortest or the
    /// ground shortest).
    CrankNotFullTurn,
    /// A change point (`s + l = p + q`) where a full-turn crank is required.
    ChangePoint,
    /// Transmission angle below the limit over the working motion.
    TransmissionAngle,
    /// A link length outside `limits.link_length`.
    LinkLength,
    /// Longest/shortest link ratio above `limits.max_length_ratio`.
    LengthRatio,
    /// A fixed pivot outside `limits.pivot_region`.
    PivotRegion,
    /// The Newton-Raphson sweep lost the linkage between targets.
    SweepFailed,
}

impl Rejection {
    /// Kebab-case name used in summary files.
    pub fn name(self) -> &'static str {
        match self {
            Rejection::Degenerate => "degenerate",
            Rejection::NotAssembled => "not-assembled",
            Rejection::CircuitDefect => "circuit-defect",
            Rejection::BranchDefect => "branch-defect",
            Rejection::OrderDefect => "order-defect",
            Rejection::CrankNotFullTurn => "crank-not-full-turn",
            Rejection::ChangePoint => "change-point",
            Rejection::TransmissionAngle => "transmission-angle",
            Rejection::LinkLength => "link-length",
            Rejection::LengthRatio => "length-ratio",
            Rejection::PivotRegion => "pivot-region",
            Rejection::SweepFailed => "sweep-failed",
        }
    }
}

/// A verified design with its measures (user units; angles radians).
#[derive(Debug, Clone, PartialEq)]
pub struct Verified {
    /// The linkage in user units.
    pub linkage: FourBar,
    /// Crank angles from the ground line at the targets (radians, unwrapped in running order).
    pub crank_angles: Vec<f64>,
    /// Ranking error (the task's main measure, smaller is better).
    pub error: f64,
    /// Worst transmission quality `min(mu, pi - mu)` over the working motion.
    pub min_transmission: f64,
    /// Grashof class.
    pub grashof: GrashofClass,
    /// Task-specific measures for summaries, in user units and degrees.
    pub measures: serde_json::Map<String, serde_json::Value>,
    /// The coupler point at each target, from the verified positions (user units).
    pub reached: Vec<Point2<f64>>,
}

/// A synthesis task (see the module docs).
pub trait Task: Sync {
    /// `path`, `function` or `motion`.
    fn kind(&self) -> &'static str;
    /// Number of continuous variables.
    fn dim(&self) -> usize;
    /// Number of residuals.
    fn n_residuals(&self) -> usize;
    /// Lower and upper bounds of the variables (internal units).
    fn bounds(&self) -> (Vec<f64>, Vec<f64>);
    /// The box random starts are drawn from, within the bounds; its size sets the scale of
    /// perturbations and of the distance between designs. Default: the bounds.
    fn search_box(&self) -> (Vec<f64>, Vec<f64>) {
        self.bounds()
    }
    /// A random start: variables inside the bounds and a mode.
    fn sample(&self, rng: &mut ChaCha8Rng) -> (Vec<f64>, Mode);
    /// Residuals at `x` for `mode`, written to `out` (length [`Task::n_residuals`]).
    fn residuals(&self, x: &[f64], mode: Mode, out: &mut [f64]);
    /// Jacobian of the residuals at `x` (`r0` the residuals there) into `out`
    /// (`n_residuals x dim`). Default: forward differences, [`fd_jacobian`].
    fn jacobian(&self, x: &[f64], mode: Mode, r0: &[f64], out: &mut DMatrix<f64>) {
        fd_jacobian(self, x, mode, r0, out);
    }
    /// Builds and verifies the candidate at `x` by a full Newton-Raphson sweep.
    ///
    /// # Errors
    /// The [`Rejection`] that disqualifies it.
    fn verify(&self, x: &[f64], mode: Mode) -> Result<Verified, Rejection>;
    /// Final verification of a candidate the search accepted (`verified`, from
    /// [`Task::verify`]) before it is ranked and reported. Default: `verified` as it is. A
    /// task that searches a reduced problem (e.g. a long path on a subset of its targets)
    /// checks the whole problem here and measures the error over all of it.
    ///
    /// # Errors
    /// The [`Rejection`] that disqualifies it.
    fn finish(&self, x: &[f64], mode: Mode, verified: Verified) -> Result<Verified, Rejection> {
        let _ = (x, mode);
        Ok(verified)
    }
    /// A measure of how far apart two candidates are (0 for the same design), used to merge
    /// near-duplicates; default: largest difference of variables relative to the box.
    fn distance(&self, a: &[f64], b: &[f64]) -> f64 {
        let (lo, hi) = self.search_box();
        a.iter()
            .zip(b)
            .enumerate()
            .map(|(i, (x, y))| (x - y).abs() / (hi[i] - lo[i]).max(1e-12))
            .fold(0.0, f64::max)
    }
}

/// Forward-difference step for a variable of value `v` (internal units are of order 1).
#[inline]
pub fn fd_step(v: f64) -> f64 {
    1e-7 * v.abs().max(1.0)
}

/// Forward-difference Jacobian of `task`'s residuals at `x`, given the residuals `r0` there.
pub fn fd_jacobian<T: Task + ?Sized>(
    task: &T,
    x: &[f64],
    mode: Mode,
    r0: &[f64],
    out: &mut DMatrix<f64>,
) {
    let m = task.n_residuals();
    let mut xp = x.to_vec();
    let mut r = vec![0.0; m];
    for j in 0..x.len() {
        let h = fd_step(x[j]);
        xp[j] = x[j] + h;
        task.residuals(&xp, mode, &mut r);
        xp[j] = x[j];
        for i in 0..m {
            out[(i, j)] = (r[i] - r0[i]) / h;
        }
    }
}

/// Coupler point offset `p e3 + q perp(e3)` for a unit coupler direction `e3`.
#[inline]
pub fn coupler_offset(p: f64, q: f64, e3: Vector2<f64>) -> Vector2<f64> {
    p * e3 + q * crate::linkage::perp(e3)
}

/// Errors building a task from a scenario.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum TaskError {
    /// The scenario asks for something the task cannot be built for.
    #[error("{field}: {message}")]
    Invalid {
        /// Dotted field name.
        field: String,
        /// What is wrong.
        message: String,
    },
}

/// Builds the task a scenario asks for.
///
/// # Errors
/// [`TaskError`] when the task's data cannot be turned into a problem.
pub fn build(scenario: &crate::scenario::Scenario) -> Result<Box<dyn Task>, TaskError> {
    use crate::scenario::TaskSpec;
    match &scenario.task {
        TaskSpec::Path(p) => Ok(Box::new(PathTask::new(p, &scenario.limits))),
        TaskSpec::Motion(m) => Ok(Box::new(PathTask::motion(m, &scenario.limits))),
        TaskSpec::Function(f) => Ok(Box::new(FunctionTask::new(f, &scenario.limits)?)),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn coinciding_points_take_their_scale_from_the_limits() {
        let at = [Point2::new(500.0, 500.0); 3];
        let mut limits = Limits::default();
        assert_relative_eq!(Frame::of_task(&at, &limits).scale, 1.0, epsilon = 0.0);
        limits.input_pivot = Some(Point2::new(500.0, 200.0));
        assert_relative_eq!(Frame::of_task(&at, &limits).scale, 300.0, epsilon = 1e-12);
        limits.link_length = Some((50.0, 400.0));
        let frame = Frame::of_task(&at, &limits);
        assert_relative_eq!(frame.scale, 400.0, epsilon = 0.0);
        assert_relative_eq!(frame.origin, Point2::new(500.0, 500.0), epsilon = 0.0);
        // Points that spread keep the scale of their own bounding box.
        let spread = [Point2::new(0.0, 0.0), Point2::new(30.0, 10.0)];
        assert_relative_eq!(Frame::of_task(&spread, &limits).scale, 30.0, epsilon = 0.0);
    }
}
