//! The scenario file: what a synthesis run must achieve, within which limits, and how hard to
//! search. Two stages: [`ScenarioFile`] mirrors the YAML; [`Scenario`] is checked and in
//! internal units (radians).

use std::path::{Path, PathBuf};

use nalgebra::Point2;
use serde::{Deserialize, Serialize};

use crate::input::{parse_yaml, read_text, InputError};

/// Largest magnitude accepted for any number in a scenario (lengths, coordinates, angles,
/// function values, seconds): beyond it the file is almost surely in the wrong units, and
/// squares of such numbers lose the precision the solvers need.
pub const MAX_MAGNITUDE: f64 = 1e12;

/// Largest number of random starts accepted.
pub const MAX_STARTS: usize = 100_000_000;

/// Largest number of designs kept.
pub const MAX_KEEP: usize = 1000;

/// Timing mode of prescribed crank angles.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "lowercase")]
pub enum TimingFile {
    /// The crank angles are prescribed as given (from the ground line).
    #[default]
    Absolute,
    /// Only differences between crank angles are prescribed; the start is free.
    Relative,
}

/// `task.path` as written.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PathFile {
    /// Target points `[x, y]`, in the order the coupler point passes them.
    pub points: Vec<[f64; 2]>,
    /// Prescribed crank angles (degrees from the ground line), one per point.
    #[serde(default)]
    pub crank_angles: Option<Vec<f64>>,
    /// How the crank angles are prescribed.
    #[serde(default)]
    pub timing: Option<TimingFile>,
}

/// `task.function` as written.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FunctionFile {
    /// An expression in `x`.
    #[serde(default)]
    pub formula: Option<String>,
    /// Or a table of `[x, y]` pairs.
    #[serde(default)]
    pub table: Option<Vec<[f64; 2]>>,
    /// `[x0, xf]`.
    pub x: [f64; 2],
    /// Degrees the crank turns as x goes x0 -> xf (sign = direction).
    pub input_span: f64,
    /// Degrees the output turns as y goes f(x0) -> f(xf).
    pub output_span: f64,
    /// Crank angle at x0, degrees from the ground line; free when absent.
    #[serde(default)]
    pub input_start: Option<f64>,
    /// Output angle at x0, degrees from the ground line; free when absent.
    #[serde(default)]
    pub output_start: Option<f64>,
    /// Exact through this many Chebyshev-spaced precision points; least squares when absent.
    #[serde(default)]
    pub precision_points: Option<usize>,
}

/// `task.motion` as written.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MotionFile {
    /// Poses `[x, y, angle_deg]` of a frame fixed to the coupler, in order.
    pub poses: Vec<Vec<f64>>,
}

/// `task:` as written: exactly one of the three.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub struct TaskFile {
    /// Path generation.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub path: Option<PathFile>,
    /// Function generation.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub function: Option<FunctionFile>,
    /// Motion generation.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub motion: Option<MotionFile>,
}

/// Crank requirement as written.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "kebab-case")]
pub enum CrankRequirement {
    /// The input must revolve fully (Grashof, input shortest or ground shortest; no change point).
    #[default]
    FullTurn,
    /// Any input motion that reaches the targets without defects.
    Any,
}

/// `limits:` as written.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub struct LimitsFile {
    /// `[min, max]` for every link length, ground included.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub link_length: Option<[f64; 2]>,
    /// `[[xmin, ymin], [xmax, ymax]]` where both fixed pivots may go.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub pivot_region: Option<[[f64; 2]; 2]>,
    /// Where the input pivot `O2` may go (within `pivot_region` too, when both are given).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub input_pivot_region: Option<[[f64; 2]; 2]>,
    /// Where the output pivot `O4` may go (within `pivot_region` too, when both are given).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub output_pivot_region: Option<[[f64; 2]; 2]>,
    /// Fixed input pivot `O2`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub input_pivot: Option<[f64; 2]>,
    /// Fixed output pivot `O4`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub output_pivot: Option<[f64; 2]>,
    /// Fixed direction of `O2 -> O4`, degrees.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ground_angle: Option<f64>,
    /// Largest longest/shortest link ratio.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_length_ratio: Option<f64>,
    /// Smallest `min(mu, 180 - mu)` over the working motion, degrees.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub min_transmission: Option<f64>,
    /// `full-turn` (default) or `any`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub crank: Option<CrankRequirement>,
}

/// `search:` as written.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub struct SearchFile {
    /// Random seed (default 1).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub seed: Option<u64>,
    /// Random starts (default 4000).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub starts: Option<usize>,
    /// Seconds before the search stops with what it has (default 30).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub time_limit: Option<f64>,
    /// Designs kept in the result (default 10).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub keep: Option<usize>,
}

/// The scenario file as written.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ScenarioFile {
    /// Name of the scenario.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub name: Option<String>,
    /// Length unit label (default mm).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub units: Option<String>,
    /// The task.
    pub task: TaskFile,
    /// Limits on the design.
    #[serde(default)]
    pub limits: LimitsFile,
    /// Search settings.
    #[serde(default)]
    pub search: SearchFile,
}

/// Prescribed or free timing of a path task (radians from the ground line).
#[derive(Debug, Clone, PartialEq)]
pub enum PathTiming {
    /// Crank angles are unknowns, reached in order.
    Free,
    /// Crank angles as given.
    Absolute(Vec<f64>),
    /// Crank angles up to a common free offset.
    Relative(Vec<f64>),
}

/// A checked path-generation task.
#[derive(Debug, Clone, PartialEq)]
pub struct PathSpec {
    /// Targets, in order.
    pub points: Vec<Point2<f64>>,
    /// Timing.
    pub timing: PathTiming,
}

/// Where the function's values come from.
#[derive(Debug, Clone, PartialEq)]
pub enum FunctionSource {
    /// An expression in `x` (checked by the function task).
    Formula(String),
    /// Tabulated `(x, y)` pairs, sorted by x.
    Table(Vec<(f64, f64)>),
}

/// A function-generation task, with angles in radians.
#[derive(Debug, Clone, PartialEq)]
pub struct FunctionSpec {
    /// The function.
    pub source: FunctionSource,
    /// `x0`.
    pub x0: f64,
    /// `xf`.
    pub xf: f64,
    /// Crank rotation for x0 -> xf (radians, signed).
    pub input_span: f64,
    /// Output rotation for f(x0) -> f(xf) (radians, signed).
    pub output_span: f64,
    /// Crank angle at x0 from the ground line, if fixed.
    pub input_start: Option<f64>,
    /// Output angle at x0 from the ground line, if fixed.
    pub output_start: Option<f64>,
    /// Number of Chebyshev precision points, if exact.
    pub precision_points: Option<usize>,
}

/// A motion-generation task: poses `(origin, angle in radians)` of a coupler frame.
#[derive(Debug, Clone, PartialEq)]
pub struct MotionSpec {
    /// The poses, in order.
    pub poses: Vec<(Point2<f64>, f64)>,
}

/// The checked task.
#[derive(Debug, Clone, PartialEq)]
pub enum TaskSpec {
    /// Path generation.
    Path(PathSpec),
    /// Function generation.
    Function(FunctionSpec),
    /// Motion generation.
    Motion(MotionSpec),
}

impl TaskSpec {
    /// `path`, `function` or `motion`.
    pub fn kind(&self) -> &'static str {
        match self {
            TaskSpec::Path(_) => "path",
            TaskSpec::Function(_) => "function",
            TaskSpec::Motion(_) => "motion",
        }
    }
}

/// A rectangle `(min corner, max corner)`.
pub type Region = (Point2<f64>, Point2<f64>);

/// Checked limits, radians for angles.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Limits {
    /// Link length range.
    pub link_length: Option<(f64, f64)>,
    /// Region `(min corner, max corner)` of the input pivot `O2`.
    pub input_region: Option<Region>,
    /// Region of the output pivot `O4`.
    pub output_region: Option<Region>,
    /// Fixed `O2`.
    pub input_pivot: Option<Point2<f64>>,
    /// Fixed `O4`.
    pub output_pivot: Option<Point2<f64>>,
    /// Fixed ground angle.
    pub ground_angle: Option<f64>,
    /// Largest longest/shortest ratio.
    pub max_length_ratio: Option<f64>,
    /// Smallest transmission quality `min(mu, pi - mu)` over the working motion.
    pub min_transmission: Option<f64>,
    /// Crank requirement.
    pub crank: CrankRequirement,
}

/// Checked search settings.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SearchSettings {
    /// Seed.
    pub seed: u64,
    /// Random starts.
    pub starts: usize,
    /// Seconds.
    pub time_limit: f64,
    /// Designs kept.
    pub keep: usize,
}

impl Default for SearchSettings {
    fn default() -> Self {
        Self {
            seed: 1,
            starts: 4000,
            time_limit: 30.0,
            keep: 10,
        }
    }
}

/// A checked scenario.
#[derive(Debug, Clone, PartialEq)]
pub struct Scenario {
    /// Name (the file stem when absent).
    pub name: String,
    /// Length unit label.
    pub units: String,
    /// The task.
    pub task: TaskSpec,
    /// Limits.
    pub limits: Limits,
    /// Search settings.
    pub search: SearchSettings,
    /// The file as written (for reports).
    pub raw: ScenarioFile,
}

struct Checker<'a> {
    path: &'a Path,
}

impl Checker<'_> {
    fn err(&self, field: impl Into<String>, message: impl Into<String>) -> InputError {
        InputError::Invalid {
            path: self.path.to_path_buf(),
            field: field.into(),
            message: message.into(),
        }
    }

    fn finite(&self, field: &str, v: f64) -> Result<f64, InputError> {
        if !v.is_finite() {
            Err(self.err(field, format!("{v} is not a finite number")))
        } else if v.abs() > MAX_MAGNITUDE {
            Err(self.err(
                field,
                format!(
                    "{v:e}: expected a magnitude of at most {MAX_MAGNITUDE:e}; check the units"
                ),
            ))
        } else {
            Ok(v)
        }
    }

    fn point(&self, field: &str, p: [f64; 2]) -> Result<Point2<f64>, InputError> {
        Ok(Point2::new(
            self.finite(&format!("{field}[0]"), p[0])?,
            self.finite(&format!("{field}[1]"), p[1])?,
        ))
    }

    fn positive(&self, field: &str, v: f64) -> Result<f64, InputError> {
        if v.is_finite() && v > 0.0 {
            self.finite(field, v)
        } else {
            Err(self.err(field, format!("{v}: expected a positive number")))
        }
    }
}

/// Reads and checks a scenario file.
///
/// # Errors
/// [`InputError`] naming the file, place and field for anything unreadable or invalid.
pub fn load_scenario(path: &Path) -> Result<Scenario, InputError> {
    let text = read_text(path)?;
    parse_scenario(path, &text)
}

/// Parses and checks scenario text; `path` names the file in messages.
///
/// # Errors
/// As [`load_scenario`].
pub fn parse_scenario(path: &Path, text: &str) -> Result<Scenario, InputError> {
    crate::input::check_kind(path, text, crate::input::FileKind::Scenario)?;
    let raw: ScenarioFile = parse_yaml(path, text)?;
    check_scenario(path, raw).map_err(|e| crate::input::with_location(e, text))
}

fn check_path(c: &Checker, p: &PathFile) -> Result<PathSpec, InputError> {
    if p.points.len() < 2 {
        return Err(c.err(
            "task.path.points",
            format!("{} point(s): expected at least 2 targets", p.points.len()),
        ));
    }
    let points = p
        .points
        .iter()
        .enumerate()
        .map(|(i, q)| c.point(&format!("task.path.points[{i}]"), *q))
        .collect::<Result<Vec<_>, _>>()?;
    let (lo, hi) = crate::linkage::bounding_box(points.iter().copied())
        .expect("at least two finite points were checked above");
    let size = (hi - lo).norm();
    if size == 0.0 {
        return Err(c.err("task.path.points", "all targets are the same point"));
    }
    for i in 1..points.len() {
        if (points[i] - points[i - 1]).norm() <= 1e-9 * size {
            return Err(c.err(
                format!("task.path.points[{i}]"),
                format!(
                    "repeats the previous target ({}, {}); consecutive targets must differ",
                    points[i].x, points[i].y
                ),
            ));
        }
    }
    let timing = match (&p.crank_angles, p.timing) {
        (None, None) => PathTiming::Free,
        (None, Some(_)) => {
            return Err(c.err(
                "task.path.timing",
                "timing needs crank_angles, one per point",
            ))
        }
        (Some(a), t) => {
            if a.len() != points.len() {
                return Err(c.err(
                    "task.path.crank_angles",
                    format!(
                        "{} angle(s) for {} point(s): expected one crank angle per point",
                        a.len(),
                        points.len()
                    ),
                ));
            }
            let rad = a
                .iter()
                .enumerate()
                .map(|(i, v)| {
                    c.finite(&format!("task.path.crank_angles[{i}]"), *v)
                        .map(f64::to_radians)
                })
                .collect::<Result<Vec<_>, _>>()?;
            check_crank_angles(c, &rad)?;
            // A full turn from the first target to the last brings the crank, and with it
            // the coupler point, back to the first target.
            let run = crate::task::path::unwrap_running(&rad);
            let turn = (run[run.len() - 1] - run[0]).abs();
            let last = points.len() - 1;
            if (turn - std::f64::consts::TAU).abs() <= 1e-9 * std::f64::consts::TAU
                && (points[last] - points[0]).norm() > 1e-9 * size
            {
                return Err(c.err(
                    format!("task.path.crank_angles[{last}]"),
                    format!(
                        "{} deg is a full turn from the first crank angle, which puts the coupler point back on the first target, but the last target is elsewhere",
                        crate::input::short(a[last])
                    ),
                ));
            }
            match t.unwrap_or_default() {
                TimingFile::Absolute => PathTiming::Absolute(rad),
                TimingFile::Relative => PathTiming::Relative(rad),
            }
        }
    };
    Ok(PathSpec { points, timing })
}

/// Prescribed crank angles (radians) must step to a new angle at every target and, taken in
/// running order, stay within one turn: verification rejects anything else as an order
/// defect, so no design could meet them.
fn check_crank_angles(c: &Checker, rad: &[f64]) -> Result<(), InputError> {
    let run = crate::task::path::unwrap_running(rad);
    for i in 1..run.len() {
        if (run[i] - run[i - 1]).abs() <= 1e-12 * (1.0 + run[i].abs()) {
            return Err(c.err(
                format!("task.path.crank_angles[{i}]"),
                format!(
                    "{} deg repeats the previous crank angle (mod 360): one crank angle cannot put the coupler point on two targets",
                    crate::input::short(rad[i].to_degrees())
                ),
            ));
        }
    }
    let span = (run[run.len() - 1] - run[0]).abs();
    if span > std::f64::consts::TAU * (1.0 + 1e-9) {
        return Err(c.err(
            "task.path.crank_angles",
            format!(
                "span {} deg in running order (in the shorter of the two directions): no four-bar can meet this, the targets must be reached within one turn of the crank",
                crate::input::short(span.to_degrees())
            ),
        ));
    }
    Ok(())
}

fn check_function(c: &Checker, f: &FunctionFile) -> Result<FunctionSpec, InputError> {
    let source = match (&f.formula, &f.table) {
        (Some(s), None) => {
            if s.trim().is_empty() {
                return Err(c.err(
                    "task.function.formula",
                    "is empty: expected an expression in x",
                ));
            }
            FunctionSource::Formula(s.clone())
        }
        (None, Some(t)) => {
            if t.len() < 2 {
                return Err(c.err("task.function.table", "expected at least 2 [x, y] rows"));
            }
            let mut rows = Vec::with_capacity(t.len());
            for (i, r) in t.iter().enumerate() {
                rows.push((
                    c.finite(&format!("task.function.table[{i}][0]"), r[0])?,
                    c.finite(&format!("task.function.table[{i}][1]"), r[1])?,
                ));
            }
            rows.sort_by(|a, b| a.0.total_cmp(&b.0));
            for w in rows.windows(2) {
                #[allow(clippy::float_cmp)] // reason: an exactly repeated x is the error
                let repeated = w[0].0 == w[1].0;
                if repeated {
                    return Err(c.err(
                        "task.function.table",
                        format!("x = {} appears twice", w[0].0),
                    ));
                }
            }
            FunctionSource::Table(rows)
        }
        (Some(_), Some(_)) => {
            return Err(c.err("task.function", "give either formula or table, not both"))
        }
        (None, None) => {
            return Err(c.err(
                "task.function",
                "missing formula (an expression in x) or table",
            ))
        }
    };
    let x0 = c.finite("task.function.x[0]", f.x[0])?;
    let xf = c.finite("task.function.x[1]", f.x[1])?;
    #[allow(clippy::float_cmp)] // reason: exactly zero width is the error
    let zero_width = x0 == xf;
    if zero_width {
        return Err(c.err("task.function.x", format!("[{x0}, {xf}] has zero width")));
    }
    if let FunctionSource::Formula(text) = &source {
        let f = crate::exact::formula::Formula::parse(text)
            .map_err(|e| c.err("task.function.formula", format!("{text:?}: {e}")))?;
        f.check_range(x0, xf, 1001)
            .map_err(|e| c.err("task.function.formula", format!("{text:?}: {e}")))?;
    }
    if let FunctionSource::Table(t) = &source {
        let (tmin, tmax) = (t[0].0, t[t.len() - 1].0);
        if x0.min(xf) < tmin || x0.max(xf) > tmax {
            return Err(c.err(
                "task.function.x",
                format!("[{x0}, {xf}] reaches outside the table's x range [{tmin}, {tmax}]"),
            ));
        }
    }
    let input_span = c.finite("task.function.input_span", f.input_span)?;
    let output_span = c.finite("task.function.output_span", f.output_span)?;
    if input_span == 0.0 {
        return Err(c.err("task.function.input_span", "is 0: the crank must turn"));
    }
    if output_span == 0.0 {
        return Err(c.err("task.function.output_span", "is 0: the output must turn"));
    }
    if input_span.abs() >= 360.0 {
        return Err(c.err(
            "task.function.input_span",
            format!("{input_span}: expected less than one turn"),
        ));
    }
    if output_span.abs() >= 360.0 {
        return Err(c.err(
            "task.function.output_span",
            format!("{output_span}: expected less than one turn"),
        ));
    }
    let input_start = f
        .input_start
        .map(|v| {
            c.finite("task.function.input_start", v)
                .map(f64::to_radians)
        })
        .transpose()?;
    let output_start = f
        .output_start
        .map(|v| {
            c.finite("task.function.output_start", v)
                .map(f64::to_radians)
        })
        .transpose()?;
    if let Some(n) = f.precision_points {
        if !(3..=5).contains(&n) {
            return Err(c.err(
                "task.function.precision_points",
                format!(
                    "{n}: expected 3 to 5 precision points (the linkage has 5 free proportions)"
                ),
            ));
        }
    }
    Ok(FunctionSpec {
        source,
        x0,
        xf,
        input_span: input_span.to_radians(),
        output_span: output_span.to_radians(),
        input_start,
        output_start,
        precision_points: f.precision_points,
    })
}

fn check_motion(c: &Checker, m: &MotionFile) -> Result<MotionSpec, InputError> {
    if m.poses.len() < 2 {
        return Err(c.err(
            "task.motion.poses",
            format!("{} pose(s): expected at least 2", m.poses.len()),
        ));
    }
    let mut poses = Vec::with_capacity(m.poses.len());
    for (i, p) in m.poses.iter().enumerate() {
        let f = format!("task.motion.poses[{i}]");
        if p.len() != 3 {
            return Err(c.err(
                f,
                format!("has {} entries: expected [x, y, angle_deg]", p.len()),
            ));
        }
        poses.push((
            Point2::new(c.finite(&f, p[0])?, c.finite(&f, p[1])?),
            c.finite(&f, p[2])?.to_radians(),
        ));
    }
    for i in 1..poses.len() {
        let (a, b) = (poses[i - 1], poses[i]);
        // Angles that differ by whole turns give the same pose.
        if (a.0 - b.0).norm() == 0.0 && crate::kinematics::range::wrap_pi(a.1 - b.1).abs() < 1e-12 {
            return Err(c.err(
                format!("task.motion.poses[{i}]"),
                "repeats the previous pose; consecutive poses must differ",
            ));
        }
    }
    Ok(MotionSpec { poses })
}

fn check_limits(c: &Checker, l: &LimitsFile) -> Result<Limits, InputError> {
    let link_length = match l.link_length {
        None => None,
        Some([a, b]) => {
            let a = c.positive("limits.link_length[0]", a)?;
            let b = c.positive("limits.link_length[1]", b)?;
            if a >= b {
                return Err(c.err(
                    "limits.link_length",
                    format!("[{a}, {b}]: min must be less than max"),
                ));
            }
            Some((a, b))
        }
    };
    let region = |field: &str, r: Option<[[f64; 2]; 2]>| -> Result<Option<Region>, InputError> {
        let Some([p, q]) = r else { return Ok(None) };
        let lo = c.point(&format!("{field}[0]"), p)?;
        let hi = c.point(&format!("{field}[1]"), q)?;
        if lo.x >= hi.x || lo.y >= hi.y {
            return Err(c.err(
                field,
                format!(
                    "[[{}, {}], [{}, {}]] is empty or inverted: expected [[xmin, ymin], [xmax, ymax]] with xmin < xmax and ymin < ymax",
                    lo.x, lo.y, hi.x, hi.y
                ),
            ));
        }
        Ok(Some((lo, hi)))
    };
    let both = region("limits.pivot_region", l.pivot_region)?;
    let meet = |field: &str,
                own: Option<(Point2<f64>, Point2<f64>)>|
     -> Result<Option<Region>, InputError> {
        Ok(match (own, both) {
            (None, b) => b,
            (a, None) => a,
            (Some((a0, a1)), Some((b0, b1))) => {
                let lo = a0.sup(&b0);
                let hi = a1.inf(&b1);
                if lo.x >= hi.x || lo.y >= hi.y {
                    return Err(c.err(field, "does not overlap limits.pivot_region"));
                }
                Some((lo, hi))
            }
        })
    };
    let input_region = meet(
        "limits.input_pivot_region",
        region("limits.input_pivot_region", l.input_pivot_region)?,
    )?;
    let output_region = meet(
        "limits.output_pivot_region",
        region("limits.output_pivot_region", l.output_pivot_region)?,
    )?;
    let input_pivot = l
        .input_pivot
        .map(|p| c.point("limits.input_pivot", p))
        .transpose()?;
    let output_pivot = l
        .output_pivot
        .map(|p| c.point("limits.output_pivot", p))
        .transpose()?;
    for (name, p, r) in [
        ("limits.input_pivot", input_pivot, input_region),
        ("limits.output_pivot", output_pivot, output_region),
    ] {
        if let (Some(p), Some((lo, hi))) = (p, r) {
            if p.x < lo.x || p.x > hi.x || p.y < lo.y || p.y > hi.y {
                return Err(c.err(
                    name,
                    format!("({}, {}) lies outside its pivot region", p.x, p.y),
                ));
            }
        }
    }
    if let (Some(a), Some(b)) = (input_pivot, output_pivot) {
        if (a - b).norm() == 0.0 {
            return Err(c.err(
                "limits.output_pivot",
                "coincides with limits.input_pivot: the ground link would have zero length",
            ));
        }
    }
    let ground_angle = l
        .ground_angle
        .map(|v| c.finite("limits.ground_angle", v).map(f64::to_radians))
        .transpose()?;
    if let (Some(a), Some(b), Some(g)) = (input_pivot, output_pivot, ground_angle) {
        let d = b - a;
        let actual = d.y.atan2(d.x);
        if crate::kinematics::range::wrap_pi(actual - g).abs() > 1e-9 {
            return Err(c.err(
                "limits.ground_angle",
                format!(
                    "{} deg contradicts the fixed pivots, which give {:.6} deg",
                    crate::input::short(g.to_degrees()),
                    actual.to_degrees()
                ),
            ));
        }
    }
    let max_length_ratio = l
        .max_length_ratio
        .map(|v| {
            if v.is_finite() && v >= 1.0 {
                Ok(v)
            } else {
                Err(c.err(
                    "limits.max_length_ratio",
                    format!("{v}: expected a number of at least 1"),
                ))
            }
        })
        .transpose()?;
    let min_transmission = l
        .min_transmission
        .map(|v| {
            if v.is_finite() && (0.0..90.0).contains(&v) {
                Ok(v.to_radians())
            } else {
                Err(c.err(
                    "limits.min_transmission",
                    format!("{v}: expected degrees in [0, 90)"),
                ))
            }
        })
        .transpose()?;
    let crank = l.crank.unwrap_or_default();
    if crank == CrankRequirement::FullTurn {
        if let Some(r) = max_length_ratio {
            // A crank that turns fully needs s + l < p + q strictly; with all four links
            // within a ratio of 1 they are equal and the linkage is a change point.
            if r <= 1.0 + 1e-9 {
                return Err(c.err(
                    "limits.max_length_ratio",
                    format!("{r} with crank: full-turn: no four-bar can meet this (equal links make a change point, which cannot be a reliable full-turn crank)"),
                ));
            }
        }
    }
    Ok(Limits {
        link_length,
        input_region,
        output_region,
        input_pivot,
        output_pivot,
        ground_angle,
        max_length_ratio,
        min_transmission,
        crank,
    })
}

fn check_search(c: &Checker, s: &SearchFile) -> Result<SearchSettings, InputError> {
    let d = SearchSettings::default();
    let starts = s.starts.unwrap_or(d.starts);
    if starts == 0 || starts > MAX_STARTS {
        return Err(c.err(
            "search.starts",
            format!("{starts}: expected 1 to {MAX_STARTS} starts"),
        ));
    }
    let time_limit = s.time_limit.unwrap_or(d.time_limit);
    c.positive("search.time_limit", time_limit)?;
    let keep = s.keep.unwrap_or(d.keep);
    if keep == 0 || keep > MAX_KEEP {
        return Err(c.err(
            "search.keep",
            format!("{keep}: expected 1 to {MAX_KEEP} designs"),
        ));
    }
    Ok(SearchSettings {
        seed: s.seed.unwrap_or(d.seed),
        starts,
        time_limit,
        keep,
    })
}

/// Checks a parsed scenario file.
///
/// # Errors
/// [`InputError::Invalid`] naming the field, the bad value and what is expected.
pub fn check_scenario(path: &Path, raw: ScenarioFile) -> Result<Scenario, InputError> {
    let c = Checker { path };
    let t = &raw.task;
    let given = [t.path.is_some(), t.function.is_some(), t.motion.is_some()]
        .iter()
        .filter(|b| **b)
        .count();
    if given != 1 {
        return Err(c.err(
            "task",
            format!("holds {given} tasks: expected exactly one of path, function, motion"),
        ));
    }
    let task = if let Some(p) = &t.path {
        TaskSpec::Path(check_path(&c, p)?)
    } else if let Some(f) = &t.function {
        TaskSpec::Function(check_function(&c, f)?)
    } else {
        TaskSpec::Motion(check_motion(
            &c,
            t.motion.as_ref().expect("one task is present"),
        )?)
    };
    let limits = check_limits(&c, &raw.limits)?;
    let search = check_search(&c, &raw.search)?;
    crate::feasibility::check(path, &task, &limits)?;
    let name = raw.name.clone().unwrap_or_else(|| {
        path.file_stem()
            .map_or_else(|| "scenario".into(), |s| s.to_string_lossy().into_owned())
    });
    Ok(Scenario {
        name,
        units: raw
            .units
            .clone()
            .unwrap_or_else(|| crate::design::DEFAULT_UNITS.into()),
        task,
        limits,
        search,
        raw,
    })
}

/// Path used in messages for a scenario given as text.
pub fn inline_path() -> PathBuf {
    PathBuf::from("(scenario)")
}
