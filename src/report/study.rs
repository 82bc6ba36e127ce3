//! What the report works out about one ranked design before drawing it: its positions at
//! the targets, its whole motion (the branch the targets lie on, swept every degree of
//! crank: a full turn, or toggle to toggle), the coupler curve and link angles of that
//! motion, and its footprint; for function generation also the desired and generated output
//! against the task's input.
//!
//! Words: the *working motion* is the stretch between the targets (path and motion
//! generation) or over the x range (function generation); the *whole motion* is what the
//! input can do on the targets' branch, a full turn or toggle to toggle.

use nalgebra::Point2;

use super::curves::{angle_branches, branch_poses, curve_branches, poses_at_cranks};
use super::draw::footprint;
use super::plots::AngleSample;
use crate::design::Design;
use crate::kinematics::position::{position_at, NewtonOptions, Pose};
use crate::kinematics::range::{wrap_pi, Arc};
use crate::kinematics::sweep::{sweep_from, Branch, Sweep, SweepOptions};
use crate::scenario::FunctionFile;
use crate::synthesis::output::DesignSummary;

/// Crank step of the whole motion the report draws and exports, degrees: one CSV row
/// and one animation frame per step.
pub const MOTION_STEP_DEG: f64 = 1.0;
/// Samples of the task's input `x` in function-generation plots.
pub const FUNCTION_SAMPLES: usize = 121;

/// One ranked design prepared for drawing.
#[derive(Debug, Clone)]
pub(crate) struct Study {
    /// Positions at the targets (the result's crank angles); `None` if the linkage does not
    /// assemble at one of them (a verified design always does).
    pub target_poses: Option<Vec<Pose>>,
    /// The whole motion: every [`MOTION_STEP_DEG`] of crank on the branch of the targets,
    /// a full turn for a crank, toggle to toggle (toggle poses included) for a rocking input.
    pub motion: Vec<Pose>,
    /// The coupler curve of the whole motion.
    pub curve: Vec<Vec<Point2<f64>>>,
    /// Link angles of the whole motion, for the angle plot.
    pub angles: Vec<Vec<AngleSample>>,
    /// Bounding box of the whole motion (both pivots, and `A`, `B` and the coupler point
    /// `C` everywhere: the coupler point's path included).
    pub footprint: (Point2<f64>, Point2<f64>),
    /// Whether the crank turns fully.
    pub full_turn: bool,
    /// Worst transmission quality `min(mu, 180 - mu)` over a full turn of the crank,
    /// degrees; `None` when the crank cannot turn fully.
    pub full_turn_mu: Option<f64>,
}

impl Study {
    /// Works out the drawing data of `design` with the result record `summary`.
    pub fn new(design: &Design, summary: &DesignSummary) -> Self {
        let l = &design.linkage;
        // A grid of crank angles from the ground line: whole degrees of the crank angle
        // every file states (the curve export's rows, the angle plot's samples).
        let sw = sweep_from(
            l,
            MOTION_STEP_DEG.to_radians(),
            l.ground_angle(),
            &SweepOptions::default(),
        );
        let drawn = drawn_cranks(summary);
        let first = drawn.first().map(|c| c.to_radians());
        let branch = targets_branch(&sw, first);
        let one = Sweep {
            range: sw.range.clone(),
            branches: branch.cloned().into_iter().collect(),
            solves: sw.solves,
        };
        let motion = branch.map(branch_poses).unwrap_or_default();
        let target_poses = poses_at_cranks(l, &drawn);
        let mut all = motion.clone();
        all.extend(target_poses.iter().flatten().copied());
        let full_turn = branch.is_some_and(|b| b.toggles.is_none());
        let angles = angle_branches(l, &one);
        Study {
            target_poses,
            curve: curve_branches(l, &one),
            full_turn_mu: full_turn.then(|| full_turn_worst(l, &angles)),
            angles,
            footprint: footprint(l, &all),
            full_turn,
            motion,
        }
    }

    /// The position drawn in the CAD export: at the first target, else the first of the
    /// motion.
    pub fn cad_pose(&self) -> Option<Pose> {
        self.target_poses
            .as_ref()
            .and_then(|p| p.first().copied())
            .or_else(|| self.motion.first().copied())
    }

    /// Width and height of the footprint.
    pub fn footprint_size(&self) -> (f64, f64) {
        let (lo, hi) = self.footprint;
        (hi.x - lo.x, hi.y - lo.y)
    }
}

/// Worst transmission quality over a full turn of the crank, degrees: the least over the
/// swept samples `angles` and the two crank angles where `|A - O4|` is extreme, the crank
/// along the ground line and opposite it (there `|A - O4| = r1 -+ r2`, so `mu` is extreme by
/// the law of cosines of the domain notes), which the grid may miss.
fn full_turn_worst(l: &crate::FourBar, angles: &[Vec<AngleSample>]) -> f64 {
    let quality = |mu: f64| mu.min(180.0 - mu);
    let t1 = l.ground_angle();
    let exact = [0.0, std::f64::consts::PI]
        .into_iter()
        .filter_map(|phi| l.transmission_angle(t1 + phi))
        .map(f64::to_degrees);
    angles
        .iter()
        .flatten()
        .map(|a| a.mu)
        .chain(exact)
        .filter(|mu| mu.is_finite())
        .map(quality)
        .fold(f64::INFINITY, f64::min)
}

/// Crank angles (degrees from the ground line) of the positions a design is drawn at: its
/// targets or precision points; for a function generator fitted by least squares (no
/// precision points) the two ends of the x range.
pub fn drawn_cranks(summary: &DesignSummary) -> Vec<f64> {
    if !summary.crank_angles.is_empty() {
        return summary.crank_angles.clone();
    }
    match (
        measure(summary, "input_start"),
        measure(summary, "input_end"),
    ) {
        (Some(a), Some(b)) => vec![a, b],
        _ => Vec::new(),
    }
}

/// The studies of every design of a run, in rank order (`summaries` and `designs` pair by
/// index).
pub(crate) fn study_all(summaries: &[DesignSummary], designs: &[Design]) -> Vec<Study> {
    summaries
        .iter()
        .zip(designs)
        .map(|(s, d)| Study::new(d, s))
        .collect()
}

/// The branch of `sweep` the targets lie on: the one whose arc holds the first target's
/// crank angle `first` (radians from the ground line); the only one for a full turn; the
/// first when no arc holds it (or there is no target).
fn targets_branch(sweep: &Sweep, first: Option<f64>) -> Option<&Branch> {
    let holds = |b: &&Branch| match (b.toggles, first) {
        (Some((start, end)), Some(phi)) => Arc { start, end }.contains(phi, 1e-6),
        _ => false,
    };
    sweep
        .branches
        .iter()
        .find(holds)
        .or_else(|| sweep.branches.first())
}

/// Function generation drawn against the task's input `x`.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct FunctionView {
    /// Samples of `x` over `[x0, xf]`.
    pub x: Vec<f64>,
    /// `f(x)`, or `None` when the report cannot evaluate the desired function.
    pub desired: Option<Vec<f64>>,
    /// What the linkage generates: `y` when `f` is known, else the output rotation from its
    /// start (degrees); NaN where the linkage does not assemble.
    pub generated: Vec<f64>,
    /// Output angle error, generated minus desired rotation (degrees); `None` without `f`.
    pub error: Option<Vec<f64>>,
    /// `x` of the precision points (from the result's crank angles).
    pub precision_x: Vec<f64>,
}

/// A number of the result's task-specific measures.
pub(crate) fn measure(d: &DesignSummary, key: &str) -> Option<f64> {
    d.measures.get(key).and_then(serde_json::Value::as_f64)
}

/// The desired function `y = f(x)` of a function-generation task, where the report can
/// evaluate it: a table is interpolated linearly (sorted by `x`); a formula is not evaluated
/// here, so `None`.
pub(crate) fn desired_function(task: &FunctionFile) -> Option<Box<dyn Fn(f64) -> f64>> {
    if let Some(text) = &task.formula {
        let f = crate::exact::formula::Formula::parse(text).ok()?;
        return Some(Box::new(move |x: f64| f.eval(x).unwrap_or(f64::NAN)));
    }
    let mut table = task.table.clone()?;
    table.retain(|r| r[0].is_finite() && r[1].is_finite());
    table.sort_by(|a, b| a[0].total_cmp(&b[0]));
    if table.len() < 2 {
        return None;
    }
    Some(Box::new(move |x: f64| {
        // The segment holding x, or the end segment for x just outside the table.
        let i = table
            .windows(2)
            .position(|w| x <= w[1][0])
            .unwrap_or(table.len() - 2);
        let (a, b) = (table[i], table[i + 1]);
        let dx = b[0] - a[0];
        if dx.abs() > 0.0 {
            a[1] + (x - a[0]) / dx * (b[1] - a[1])
        } else {
            a[1]
        }
    }))
}

impl FunctionView {
    /// The function-generation view of `design`: `x` over the task's range mapped linearly
    /// to the crank from `input_start` over `input_span`, the output rotation measured from
    /// `output_start` (the result's measures, else the scenario's, else the output angle the
    /// linkage has at `x0`) and scaled by `output_span` to `y`. `None` when the crank's start
    /// is unknown or the range is empty.
    pub fn new(design: &Design, summary: &DesignSummary, task: &FunctionFile) -> Option<Self> {
        let l = &design.linkage;
        let [x0, xf] = task.x;
        let (span_in, span_out) = (task.input_span, task.output_span);
        let input_start = measure(summary, "input_start").or(task.input_start)?;
        let valid = x0.is_finite()
            && xf.is_finite()
            && (xf - x0).abs() > 0.0
            && span_in.is_finite()
            && span_in.abs() > 0.0
            && input_start.is_finite();
        if !valid {
            return None;
        }
        let t1 = l.ground_angle();
        let newton = NewtonOptions::default();
        let n = FUNCTION_SAMPLES;
        let x: Vec<f64> = (0..n)
            .map(|k| x0 + (xf - x0) * k as f64 / (n - 1) as f64)
            .collect();
        // Output angle from the ground line at each x, radians (NaN where not assembled).
        let out: Vec<f64> = x
            .iter()
            .map(|xv| {
                let crank = input_start + span_in * (xv - x0) / (xf - x0);
                position_at(l, t1 + crank.to_radians(), &newton).map_or(f64::NAN, |p| p.theta4 - t1)
            })
            .collect();
        let start = measure(summary, "output_start")
            .or(task.output_start)
            .map(f64::to_radians)
            .or_else(|| out.first().copied().filter(|v| v.is_finite()))?;
        // Rotation from the start, continuous along x (radians).
        let mut rotation = Vec::with_capacity(n);
        let mut prev: Option<f64> = None;
        for o in &out {
            let r = match prev {
                _ if !o.is_finite() => f64::NAN,
                Some(p) => p + wrap_pi(o - start - p),
                None => wrap_pi(o - start),
            };
            if r.is_finite() {
                prev = Some(r);
            }
            rotation.push(r);
        }
        let rotation_deg: Vec<f64> = rotation.iter().map(|r| r.to_degrees()).collect();
        let precision_x = summary
            .crank_angles
            .iter()
            .map(|c| x0 + (c - input_start) / span_in * (xf - x0))
            .collect();
        let f = desired_function(task);
        let (desired, generated, error) = match f {
            Some(f) if (f(xf) - f(x0)).abs() > 0.0 && span_out.abs() > 0.0 => {
                let (y0, dy) = (f(x0), f(xf) - f(x0));
                let desired: Vec<f64> = x.iter().map(|v| f(*v)).collect();
                let generated = rotation_deg
                    .iter()
                    .map(|r| y0 + r / span_out * dy)
                    .collect();
                let error = rotation_deg
                    .iter()
                    .zip(&desired)
                    .map(|(r, y)| r - span_out * (y - y0) / dy)
                    .collect();
                (Some(desired), generated, Some(error))
            }
            _ => (None, rotation_deg, None),
        };
        Some(FunctionView {
            x,
            desired,
            generated,
            error,
            precision_x,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::linkage::{Assembly, CouplerPoint, FourBar};
    use approx::assert_relative_eq;

    fn summary(crank_angles: Vec<f64>) -> DesignSummary {
        DesignSummary {
            rank: 1,
            linkage: crate::design::DesignFile {
                name: None,
                units: None,
                input_pivot: [0.0, 0.0],
                output_pivot: [1.0, 0.0],
                input_link: 1.0,
                coupler: 1.0,
                output_link: 1.0,
                coupler_point: [0.0, 0.0],
                assembly: Assembly::Open,
            },
            crank_angles,
            grashof: String::new(),
            min_transmission: 0.0,
            length_ratio: 1.0,
            reached: Vec::new(),
            measures: serde_json::Map::new(),
        }
    }

    fn design(l: FourBar) -> Design {
        Design {
            name: None,
            units: "mm".into(),
            linkage: l,
        }
    }

    // A double-rocker (coupler shortest) rocks on two separate arcs of crank angle; the
    // whole motion drawn is the arc that holds the targets, whichever comes first in the sweep.
    #[test]
    fn whole_motion_is_the_branch_of_the_targets() {
        let l = FourBar::new(
            Point2::new(0.0, 0.0),
            Point2::new(100.0, 0.0),
            80.0,
            40.0,
            90.0,
            CouplerPoint { p: 20.0, q: 25.0 },
            Assembly::Open,
        )
        .unwrap();
        let sw = sweep_from(&l, 1f64.to_radians(), 0.0, &SweepOptions::default());
        assert_eq!(sw.branches.len(), 2);
        for b in &sw.branches {
            let (s, e) = b.toggles.unwrap();
            let mid = 0.5 * (s.phi + e.phi);
            let st = Study::new(&design(l), &summary(vec![mid.to_degrees()]));
            assert!(!st.full_turn);
            let t1 = l.ground_angle();
            for p in &st.motion {
                let phi = p.theta2 - t1;
                assert!(Arc { start: s, end: e }.contains(phi, 1e-6), "{phi}");
            }
            assert_eq!(st.target_poses.as_ref().map(Vec::len), Some(1));
        }
    }

    // Freudenstein's equation (F. Freudenstein, "Approximate synthesis of four-bar
    // linkages", Trans. ASME 77, 1955; ground on the x axis as in the domain notes) holds at
    // every sample for the output angle the view reports: it is the linkage's own.
    // Desired function: a table made from the linkage itself, so the error vanishes at the
    // table's x values and stays within the interpolation error between them.
    #[test]
    fn function_view_measures_the_output_rotation() {
        let l = FourBar::new(
            Point2::new(0.0, 0.0),
            Point2::new(7.0, 0.0),
            2.0,
            9.0,
            6.0,
            CouplerPoint { p: 0.0, q: 0.0 },
            Assembly::Open,
        )
        .unwrap();
        let (input_start, span_in) = (40.0, 90.0);
        let newton = NewtonOptions::default();
        let out_deg = |c: f64| {
            position_at(&l, c.to_radians(), &newton)
                .unwrap()
                .theta4
                .to_degrees()
        };
        let o0 = out_deg(input_start);
        // The output span is the linkage's own rotation, y its rotation normalised to 0..1.
        let span_out = out_deg(input_start + span_in) - o0;
        let table: Vec<[f64; 2]> = (0..=20)
            .map(|k| {
                let xv = k as f64 / 20.0;
                [xv, (out_deg(input_start + span_in * xv) - o0) / span_out]
            })
            .collect();
        let task = FunctionFile {
            formula: None,
            table: Some(table),
            x: [0.0, 1.0],
            input_span: span_in,
            output_span: span_out,
            input_start: Some(input_start),
            output_start: None,
            precision_points: None,
        };
        let mut s = summary(vec![input_start + 0.25 * span_in, input_start + span_in]);
        s.measures.insert("output_start".into(), o0.into());
        let v = FunctionView::new(&design(l), &s, &task).expect("view");
        assert_eq!(v.x.len(), FUNCTION_SAMPLES);
        assert_relative_eq!(v.precision_x[0], 0.25, epsilon = 1e-12);
        assert_relative_eq!(v.precision_x[1], 1.0, epsilon = 1e-12);
        let err = v.error.as_ref().unwrap();
        let des = v.desired.as_ref().unwrap();
        for (i, xv) in v.x.iter().enumerate() {
            let t2 = (input_start + span_in * xv).to_radians();
            let t4 = (o0 + v.generated[i] * span_out).to_radians();
            let [r1, r2, r3, r4] = l.lengths();
            let k1 = r1 / r2;
            let k2 = r1 / r4;
            let k3 = (r1 * r1 + r2 * r2 - r3 * r3 + r4 * r4) / (2.0 * r2 * r4);
            let freudenstein = k1 * t4.cos() - k2 * t2.cos() + k3 - (t2 - t4).cos();
            assert_relative_eq!(freudenstein, 0.0, epsilon = 1e-9);
            // The table is the linkage's own output: error = span_out * (generated - desired)
            // on the normalised scale, small between table points and nil at them.
            assert_relative_eq!(err[i], span_out * (v.generated[i] - des[i]), epsilon = 1e-9);
            if i % 6 == 0 {
                assert_relative_eq!(err[i], 0.0, epsilon = 1e-9);
            }
        }
    }

    #[test]
    fn table_is_interpolated_and_formula_is_evaluated() {
        let mut task = FunctionFile {
            formula: Some("x^2".into()),
            table: None,
            x: [0.0, 2.0],
            input_span: 60.0,
            output_span: 40.0,
            input_start: None,
            output_start: None,
            precision_points: Some(3),
        };
        // The formula is evaluated by the project's formula parser: x^2 at 1.5.
        assert_relative_eq!(desired_function(&task).unwrap()(1.5), 2.25, epsilon = 1e-12);
        task.formula = None;
        task.table = Some(vec![[2.0, 4.0], [0.0, 0.0], [1.0, 1.0]]);
        let f = desired_function(&task).unwrap();
        assert_relative_eq!(f(0.5), 0.5, epsilon = 1e-12);
        assert_relative_eq!(f(1.5), 2.5, epsilon = 1e-12);
        assert_relative_eq!(f(2.0), 4.0, epsilon = 1e-12);
    }
}
