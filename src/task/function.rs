//! Function generation: make the output link's rotation follow `y = f(x)` as the crank's
//! rotation follows `x`, over `x` in `[x0, xf]`.
//!
//! The linear map (see [`crate::exact::freudenstein::FunctionMapping`]) turns `x` into a crank angle
//! `phi2 = input_start + input_span (x - x0) / (xf - x0)` and `y` into a wanted output angle
//! `phi4 = output_start + output_span (y - y0) / (yf - y0)`, both from the ground line. The
//! task is scale-free: internally the ground link has length 1 and lies along the ground
//! line; the user's pivots (when fixed) or a default ground length place and size it.
//!
//! Variables: `r2, r3, r4` (ground = 1), then the start angles that are free. Residuals: the
//! structural error `phi4(x_j) - wanted(x_j)` (radians) at evenly spaced samples over the whole
//! range and, with precision points, the same error at the Chebyshev-spaced precision points
//! weighted by [`PRECISION_WEIGHT`] (so they are met exactly when the proportions allow),
//! plus assembly violations and the layout's penalties. Starts come from Freudenstein's
//! equation through three (or the given number of) precision points at random start angles:
//! the exact method as a source of good starts.

use std::f64::consts::{PI, TAU};

use nalgebra::{Point2, Vector2};
use rand::Rng;
use rand_chacha::ChaCha8Rng;

use super::check::check_motion;
use super::layout::{Layout, PENALTY_WEIGHT};
use super::{Frame, Mode, Rejection, Task, TaskError, Verified};
use crate::exact::chebyshev::chebyshev_points;
use crate::exact::formula::Formula;
use crate::exact::freudenstein::{design, AnglePair, FreudensteinOptions};
use crate::kinematics::range::wrap_pi;
use crate::kinematics::sweep::SweepOptions;
use crate::linkage::{unit, Assembly, CouplerPoint, FourBar};
use crate::scenario::{FunctionSource, FunctionSpec, Limits, Region};

/// Evenly spaced samples of the structural error used in refinement.
pub const FIT_SAMPLES: usize = 41;
/// Samples over the whole range used to measure and verify a design.
pub const CHECK_SAMPLES: usize = 201;
/// Weight of precision-point residuals relative to the whole-range ones.
pub const PRECISION_WEIGHT: f64 = 1e4;
/// Ground length (in the scenario's units) of a function generator whose pivots are not
/// fixed, unless the link-length limits ask for another size.
pub const DEFAULT_GROUND: f64 = 100.0;
/// Longest/shortest link ratio allowed when the scenario sets none (keeps the scale-free
/// search away from degenerate proportions).
pub const DEFAULT_MAX_RATIO: f64 = 20.0;

/// Values of the function: a parsed formula or a table interpolated linearly.
#[derive(Debug, Clone)]
enum Source {
    Formula(Box<Formula>),
    Table(Vec<(f64, f64)>),
}

impl Source {
    fn eval(&self, x: f64) -> Result<f64, String> {
        match self {
            Source::Formula(f) => f.eval(x).map_err(|e| e.to_string()),
            Source::Table(t) => {
                let i = t.partition_point(|r| r.0 < x).clamp(1, t.len() - 1);
                let (a, b) = (t[i - 1], t[i]);
                let w = (x - a.0) / (b.0 - a.0);
                Ok(a.1 + w * (b.1 - a.1))
            }
        }
    }
}

/// Where the user's design goes: input pivot, ground angle, and the ground length if fixed.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Placement {
    o2: Option<Point2<f64>>,
    o4: Option<Point2<f64>>,
    theta1: f64,
    /// Whether the ground direction is set (given, or by two fixed pivots).
    theta1_fixed: bool,
    ground: Option<f64>,
}

/// The function-generation task.
#[derive(Debug, Clone)]
pub struct FunctionTask {
    layout: Layout,
    mapping_x: (f64, f64),
    input_span: f64,
    output_span: f64,
    input_start: Option<f64>,
    output_start: Option<f64>,
    /// Fit samples: `(x, normalised y in [0, 1] at x0..xf)`.
    fit: Vec<(f64, f64)>,
    /// Precision points, same form.
    precision: Vec<(f64, f64)>,
    /// Points of the Freudenstein starts, same form.
    seed_points: Vec<(f64, f64)>,
    /// Check samples over the whole range (precision points merged in), same form.
    check: Vec<(f64, f64)>,
    placement: Placement,
    limits: Limits,
    sweep: SweepOptions,
}

fn task_err(field: &str, message: impl Into<String>) -> TaskError {
    TaskError::Invalid {
        field: field.into(),
        message: message.into(),
    }
}

impl FunctionTask {
    /// The task for `spec` within `limits`.
    ///
    /// # Errors
    /// [`TaskError`] when the formula does not parse or is undefined somewhere on the range,
    /// or `f(x0) = f(xf)` (the output span cannot be mapped).
    pub fn new(spec: &FunctionSpec, limits: &Limits) -> Result<Self, TaskError> {
        let source = match &spec.source {
            FunctionSource::Formula(text) => {
                let f = Formula::parse(text)
                    .map_err(|e| task_err("task.function.formula", e.to_string()))?;
                f.check_range(spec.x0, spec.xf, 1001)
                    .map_err(|e| task_err("task.function.formula", e.to_string()))?;
                Source::Formula(Box::new(f))
            }
            FunctionSource::Table(t) => Source::Table(t.clone()),
        };
        let y0 = source
            .eval(spec.x0)
            .map_err(|e| task_err("task.function", e))?;
        let yf = source
            .eval(spec.xf)
            .map_err(|e| task_err("task.function", e))?;
        // Equal ends up to rounding: compared with the size of f over the whole range, so that
        // e.g. sin over a full period (ends 0 and -2.4e-16) counts as equal.
        let mut size = y0.abs().max(yf.abs());
        for j in 1..100 {
            let x = spec.x0 + (spec.xf - spec.x0) * f64::from(j) / 100.0;
            if let Ok(y) = source.eval(x) {
                size = size.max(y.abs());
            }
        }
        if (yf - y0).abs() <= 1e-12 * size.max(f64::MIN_POSITIVE) {
            return Err(task_err(
                "task.function",
                format!(
                    "f(x0) = {y0}, f(xf) = {yf}: equal up to rounding, so the output span cannot be mapped onto y"
                ),
            ));
        }
        let norm = |x: f64| -> Result<(f64, f64), TaskError> {
            let y = source.eval(x).map_err(|e| task_err("task.function", e))?;
            Ok((x, (y - y0) / (yf - y0)))
        };
        let along = |n: usize| -> Vec<f64> {
            (0..n)
                .map(|j| spec.x0 + (spec.xf - spec.x0) * j as f64 / (n - 1) as f64)
                .collect()
        };
        let fit = along(FIT_SAMPLES)
            .into_iter()
            .map(norm)
            .collect::<Result<Vec<_>, _>>()?;
        let precision = match spec.precision_points {
            Some(n) => chebyshev_points(spec.x0, spec.xf, n)
                .into_iter()
                .map(norm)
                .collect::<Result<Vec<_>, _>>()?,
            None => Vec::new(),
        };
        // The points Freudenstein's equation is solved through for starts: the precision
        // points, or three Chebyshev-spaced points when the fit is least squares.
        let seed_points = if precision.len() >= 3 {
            precision.clone()
        } else {
            chebyshev_points(spec.x0, spec.xf, 3)
                .into_iter()
                .map(norm)
                .collect::<Result<Vec<_>, _>>()?
        };
        let mut check = along(CHECK_SAMPLES)
            .into_iter()
            .map(norm)
            .collect::<Result<Vec<_>, _>>()?;
        check.extend(precision.iter().copied());
        let dir = (spec.xf - spec.x0).signum();
        check.sort_by(|a, b| (a.0 * dir).total_cmp(&(b.0 * dir)));
        check.dedup_by(|a, b| (a.0 - b.0).abs() <= 1e-12 * (spec.xf - spec.x0).abs());

        // Placement and the internal (ground = 1) limits.
        let theta1 = match (limits.input_pivot, limits.output_pivot, limits.ground_angle) {
            (Some(a), Some(b), _) => {
                let d = b - a;
                d.y.atan2(d.x)
            }
            (_, _, Some(g)) => g,
            _ => 0.0,
        };
        let ground = match (limits.input_pivot, limits.output_pivot) {
            (Some(a), Some(b)) => Some((b - a).norm()),
            _ => None,
        };
        let placement = Placement {
            o2: limits.input_pivot,
            o4: limits.output_pivot,
            theta1,
            theta1_fixed: limits.ground_angle.is_some()
                || (limits.input_pivot.is_some() && limits.output_pivot.is_some()),
            ground,
        };
        let ratio = limits
            .max_length_ratio
            .unwrap_or(DEFAULT_MAX_RATIO)
            .min(limits.link_length.map_or(f64::INFINITY, |(a, b)| b / a));
        let internal_lengths = match (ground, limits.link_length) {
            (Some(g), Some((a, b))) => (a / g, b / g),
            _ => (1.0 / ratio, ratio),
        };
        if internal_lengths.0 > 1.0 || internal_lengths.1 < 1.0 {
            return Err(task_err(
                "limits.link_length",
                "the fixed pivots' distance lies outside the link length range",
            ));
        }
        let internal = Limits {
            link_length: Some(internal_lengths),
            input_region: None,
            output_region: None,
            input_pivot: Some(Point2::origin()),
            output_pivot: Some(Point2::new(1.0, 0.0)),
            ground_angle: None,
            max_length_ratio: Some(ratio),
            min_transmission: limits.min_transmission,
            crank: limits.crank,
        };
        let frame = Frame {
            origin: Point2::origin(),
            scale: 1.0,
        };
        Ok(FunctionTask {
            layout: Layout::new(&internal, &frame, false),
            mapping_x: (spec.x0, spec.xf),
            input_span: spec.input_span,
            output_span: spec.output_span,
            input_start: spec.input_start,
            output_start: spec.output_start,
            fit,
            precision,
            seed_points,
            check,
            placement,
            limits: limits.clone(),
            sweep: SweepOptions::default(),
        })
    }

    fn t(&self, x: f64) -> f64 {
        (x - self.mapping_x.0) / (self.mapping_x.1 - self.mapping_x.0)
    }

    /// Start angles `(input_start, output_start)` (radians from the ground line) at `x`.
    fn starts(&self, x: &[f64]) -> (f64, f64) {
        let k = self.layout.dim();
        let mut i = k;
        let a = self.input_start.unwrap_or_else(|| {
            i += 1;
            x[i - 1]
        });
        let b = self.output_start.unwrap_or_else(|| x[i]);
        (a, b)
    }

    /// Crank angle and wanted output angle (from the ground line) of a sample.
    fn angles(&self, starts: (f64, f64), s: (f64, f64)) -> (f64, f64) {
        (
            starts.0 + self.input_span * self.t(s.0),
            starts.1 + self.output_span * s.1,
        )
    }

    /// The user-units linkage for internal proportions `r = [r2, r3, r4]` (ground = 1): the
    /// fixed pivots where given; otherwise a ground vector `O2 -> O4` of a length the link
    /// limits allow (default [`DEFAULT_GROUND`]) and a direction (given, else tried in steps
    /// of 45 degrees, then aimed across the pivot regions), with the input pivot chosen so
    /// that both pivots lie in their regions.
    ///
    /// # Errors
    /// [`Rejection::LinkLength`] when no ground length fits the limits,
    /// [`Rejection::PivotRegion`] when no placement puts the pivots in their regions.
    fn place(&self, r: [f64; 3], assembly: Assembly) -> Result<FourBar, Rejection> {
        let p = &self.placement;
        // Ground lengths the link limits allow, `[a, b]`, and the ones tried first.
        let (a, b, scales) = match p.ground {
            Some(g) => (g, g, vec![g]),
            None => {
                let min = r.iter().copied().fold(1.0, f64::min);
                let max = r.iter().copied().fold(1.0, f64::max);
                match self.limits.link_length {
                    Some((lo, hi)) => {
                        let (a, b) = (lo / min, hi / max);
                        if a > b * (1.0 + 1e-9) {
                            return Err(Rejection::LinkLength);
                        }
                        let b = b.max(a);
                        (a, b, vec![DEFAULT_GROUND.clamp(a, b), (a * b).sqrt(), a, b])
                    }
                    None => (0.0, f64::INFINITY, vec![DEFAULT_GROUND]),
                }
            }
        };
        let angles: Vec<f64> = if p.theta1_fixed {
            vec![p.theta1]
        } else {
            (0..8).map(|k| p.theta1 + f64::from(k) * PI / 4.0).collect()
        };
        let inside = |q: Point2<f64>, region: Option<Region>| {
            region.map_or(true, |(lo, hi)| {
                let m = 1e-9 * (hi - lo).norm();
                q.x >= lo.x - m && q.x <= hi.x + m && q.y >= lo.y - m && q.y <= hi.y + m
            })
        };
        let (rin, rout) = (self.limits.input_region, self.limits.output_region);
        // The ground vectors `O4 - O2` the regions and fixed pivots allow: a box, when bounded.
        let allowed: Option<Region> = match (p.o2, p.o4, rin, rout) {
            (Some(_), Some(_), _, _) => None,
            (Some(o2), None, _, Some(ro)) => Some((ro.0 - o2.coords, ro.1 - o2.coords)),
            (None, Some(o4), Some(ri), _) => Some((o4 - ri.1.coords, o4 - ri.0.coords)),
            (None, None, Some(ri), Some(ro)) => Some((ro.0 - ri.1.coords, ro.1 - ri.0.coords)),
            _ => None,
        };
        // First the usual placements (lengths above, directions in 45-degree steps), then
        // vectors spread over the allowed box, brought to an allowed length and direction.
        let mut vectors: Vec<Vector2<f64>> = scales
            .iter()
            .flat_map(|&s| angles.iter().map(move |&t| s * unit(t)))
            .collect();
        if let Some((lo, hi)) = allowed {
            // A 7 x 7 grid over the box, from its centre outwards.
            const N: i32 = 3;
            let mut grid: Vec<(i32, i32)> = (-N..=N)
                .flat_map(|i| (-N..=N).map(move |j| (i, j)))
                .collect();
            grid.sort_by_key(|&(i, j)| (i.abs().max(j.abs()), i.abs() + j.abs()));
            for (i, j) in grid {
                let half = f64::from(2 * N);
                let (fx, fy) = (0.5 + f64::from(i) / half, 0.5 + f64::from(j) / half);
                let v = Vector2::new(lo.x + fx * (hi.x - lo.x), lo.y + fy * (hi.y - lo.y));
                let v = if p.theta1_fixed {
                    let u = unit(p.theta1);
                    u * v.dot(&u).clamp(a, b)
                } else {
                    let n = v.norm();
                    if n > 0.0 {
                        v * (n.clamp(a, b) / n)
                    } else {
                        unit(p.theta1) * a.max(f64::MIN_POSITIVE)
                    }
                };
                vectors.push(v);
            }
        }
        for d in vectors {
            if !(d.norm() > 0.0 && d.norm().is_finite()) {
                continue;
            }
            let (o2, o4) = match (p.o2, p.o4) {
                (Some(a), Some(b)) => (a, b),
                (Some(a), None) => (a, a + d),
                (None, Some(b)) => (b - d, b),
                (None, None) => {
                    // O2 in the input region and O2 + d in the output region: the centre of
                    // the overlap of the two boxes (the output one shifted back by d).
                    let shifted = rout.map(|(lo, hi)| (lo - d, hi - d));
                    let o2 = match (rin, shifted) {
                        (None, None) => Point2::origin(),
                        (Some(b), None) | (None, Some(b)) => nalgebra::center(&b.0, &b.1),
                        (Some(a), Some(b)) => {
                            let (lo, hi) = (a.0.sup(&b.0), a.1.inf(&b.1));
                            if lo.x > hi.x || lo.y > hi.y {
                                continue;
                            }
                            nalgebra::center(&lo, &hi)
                        }
                    };
                    (o2, o2 + d)
                }
            };
            let scale = (o4 - o2).norm();
            if inside(o2, rin) && inside(o4, rout) {
                return FourBar::new(
                    o2,
                    o4,
                    r[0] * scale,
                    r[1] * scale,
                    r[2] * scale,
                    CouplerPoint::default(),
                    assembly,
                )
                .map_err(|_| Rejection::Degenerate);
            }
        }
        Err(Rejection::PivotRegion)
    }

    fn n_free_starts(&self) -> usize {
        usize::from(self.input_start.is_none()) + usize::from(self.output_start.is_none())
    }
}

impl Task for FunctionTask {
    fn kind(&self) -> &'static str {
        "function"
    }

    fn dim(&self) -> usize {
        self.layout.dim() + self.n_free_starts()
    }

    fn n_residuals(&self) -> usize {
        2 * (self.fit.len() + self.precision.len()) + Layout::N_PENALTIES
    }

    fn bounds(&self) -> (Vec<f64>, Vec<f64>) {
        let (mut a, mut b) = self.layout.bounds();
        for _ in 0..self.n_free_starts() {
            a.push(-PI);
            b.push(3.0 * PI);
        }
        (a, b)
    }

    fn sample(&self, rng: &mut ChaCha8Rng) -> (Vec<f64>, Mode) {
        let (lo, hi) = self.bounds();
        let k = self.layout.dim();
        let mut x: Vec<f64> = lo
            .iter()
            .zip(&hi)
            .map(|(a, b)| rng.random_range(*a..=*b))
            .collect();
        for v in x.iter_mut().skip(k) {
            *v = rng.random_range(0.0..TAU);
        }
        let mut assembly = if rng.random_bool(0.5) {
            Assembly::Open
        } else {
            Assembly::Crossed
        };
        // Most starts: Freudenstein's equation through the precision points (or three
        // Chebyshev points) at the drawn start angles.
        if rng.random_bool(0.8) {
            let (a0, b0) = self.starts(&x);
            let pairs: Vec<AnglePair> = self
                .seed_points
                .iter()
                .map(|s| {
                    let (t2, t4) = self.angles((a0, b0), *s);
                    AnglePair {
                        theta2: t2,
                        theta4: t4,
                    }
                })
                .collect();
            let usable = |d: &crate::exact::freudenstein::FreudensteinDesign| {
                // A flipped link needs its start angle turned by half a turn: impossible when
                // that start angle is prescribed.
                !(d.input_flipped && self.input_start.is_some()
                    || d.output_flipped && self.output_start.is_some())
            };
            if let Some(d) = design(&pairs, 1.0, &FreudensteinOptions::default())
                .ok()
                .filter(usable)
            {
                let l = d.linkage;
                let r = [l.input_link(), l.coupler(), l.output_link()];
                if r.iter()
                    .zip(&lo)
                    .zip(&hi)
                    .all(|((v, a), b)| v >= a && v <= b)
                {
                    x[..3].copy_from_slice(&r);
                    let mut i = k;
                    if self.input_start.is_none() {
                        x[i] = a0 + if d.input_flipped { PI } else { 0.0 };
                        i += 1;
                    }
                    if self.output_start.is_none() {
                        x[i] = b0 + if d.output_flipped { PI } else { 0.0 };
                    }
                    assembly = l.assembly();
                }
            }
        }
        (
            x,
            Mode {
                assembly,
                direction: 1,
            },
        )
    }

    fn residuals(&self, x: &[f64], mode: Mode, out: &mut [f64]) {
        let g = self.layout.geometry(x);
        let starts = self.starts(x);
        let all = self
            .fit
            .iter()
            .map(|s| (s, 1.0))
            .chain(self.precision.iter().map(|s| (s, PRECISION_WEIGHT)));
        for (j, (s, w)) in all.enumerate() {
            let (phi2, want) = self.angles(starts, *s);
            let p = g.soft_position(phi2, mode.assembly);
            let b = p.b - g.o4;
            out[2 * j] = w * wrap_pi(b.y.atan2(b.x) - g.theta1 - want);
            out[2 * j + 1] = PENALTY_WEIGHT * p.violation;
        }
        let base = 2 * (self.fit.len() + self.precision.len());
        self.layout
            .penalties(&g, &mut out[base..base + Layout::N_PENALTIES]);
    }

    fn verify(&self, x: &[f64], mode: Mode) -> Result<Verified, Rejection> {
        let g = self.layout.geometry(x);
        let linkage = self.place([g.r2, g.r3, g.r4], mode.assembly)?;
        let starts = self.starts(x);
        let phis: Vec<f64> = self
            .check
            .iter()
            .map(|s| self.angles(starts, *s).0)
            .collect();
        let check = check_motion(&linkage, &phis, &self.limits, &self.sweep)?;
        let t1 = linkage.ground_angle();
        let errors: Vec<f64> = self
            .check
            .iter()
            .zip(&check.poses)
            .map(|(s, p)| wrap_pi(p.theta4 - t1 - self.angles(starts, *s).1))
            .collect();
        let n = errors.len() as f64;
        let rms = (errors.iter().map(|e| e * e).sum::<f64>() / n).sqrt();
        let max = errors.iter().fold(0.0f64, |m, e| m.max(e.abs()));
        let at = |xv: f64| {
            self.check
                .iter()
                // The same tolerance as the merging of precision points into the samples.
                .position(|s| {
                    (s.0 - xv).abs()
                        <= 1e-12 * ((self.mapping_x.1 - self.mapping_x.0).abs() + 1.0 + xv.abs())
                })
        };
        let precision_error = self
            .precision
            .iter()
            .filter_map(|s| at(s.0).map(|i| errors[i].abs()))
            .fold(0.0f64, f64::max);
        // Reported angles, all in one turn: the crank at the precision points (none for a
        // least-squares design) with the first in [0, 360) deg, as every result's crank
        // angles are, and `input_start` shifted by the same whole turns; `output_start` in
        // (-180, 180] deg with the report curve's angles in its turn.
        let first = self.precision.first().map(|s| self.angles(starts, *s).0);
        let turns = match first {
            Some(c) => (c / TAU).floor(),
            None => (wrap_pi(starts.0) - starts.0) / -TAU,
        };
        let shown = (starts.0 - TAU * turns, wrap_pi(starts.1));
        let crank_angles: Vec<f64> = self
            .precision
            .iter()
            .map(|s| self.angles(shown, *s).0)
            .collect();
        let mut measures = serde_json::Map::new();
        measures.insert("rms_error".into(), rms.to_degrees().into());
        measures.insert("max_error".into(), max.to_degrees().into());
        if !self.precision.is_empty() {
            measures.insert(
                "precision_error".into(),
                precision_error.to_degrees().into(),
            );
            measures.insert(
                "precision_x".into(),
                self.precision
                    .iter()
                    .map(|s| s.0)
                    .collect::<Vec<f64>>()
                    .into(),
            );
        }
        measures.insert("input_start".into(), shown.0.to_degrees().into());
        // The crank angle at the end of the x range, in the same turn as `input_start`.
        measures.insert(
            "input_end".into(),
            (shown.0 + self.input_span).to_degrees().into(),
        );
        measures.insert("output_start".into(), shown.1.to_degrees().into());
        // The curve of the report: x, wanted and generated output angle (degrees from the
        // ground line), every fifth check sample and the last.
        let last = self.check.len().saturating_sub(1);
        let curve: Vec<[f64; 3]> = self
            .check
            .iter()
            .zip(&check.poses)
            .enumerate()
            .filter(|(i, _)| i % 5 == 0 || *i == last)
            .map(|(_, (s, p))| {
                let want = self.angles(shown, *s).1;
                let got = want + wrap_pi(p.theta4 - t1 - want);
                [s.0, want.to_degrees(), got.to_degrees()]
            })
            .collect();
        measures.insert(
            "curve".into(),
            serde_json::to_value(curve).unwrap_or_default(),
        );
        Ok(Verified {
            grashof: linkage.grashof(),
            reached: Vec::new(),
            linkage,
            crank_angles,
            error: rms.to_degrees(),
            min_transmission: check.min_transmission,
            measures,
        })
    }
}
