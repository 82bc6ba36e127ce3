//! Whole-motion analysis of a given design: Grashof class, range of motion and toggles,
//! transmission angle (over the whole motion, the usable part of a rocking input's arc and a
//! working range), the output's limit positions and the time ratio.
//!
//! Crank angles here are measured from the ground line `O2 -> O4` (`phi = theta2 - theta1`,
//! radians, counter-clockwise); link directions in poses are global, as everywhere in
//! [`Pose`].

use std::f64::consts::{PI, TAU};

use super::position::{closed_form, Pose};
use super::range::{wrap_pi, wrap_tau, Arc, InputRange, Toggle, ToggleKind};
use super::rates::rates;
use super::sweep::{sweep_from, Sweep, SweepOptions, TraceEnd, Tracer};
use crate::linkage::{FourBar, GrashofClass};

/// Options of [`analyse`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AnalysisOptions {
    /// Sweep tuning.
    pub sweep: SweepOptions,
    /// Grid step (radians) of the sweep the output's range is taken over. Default 1 degree.
    pub step: f64,
    /// Transmission quality `min(mu, pi - mu)` (radians) that marks the usable part of a
    /// rocking input's arc. Default [`USABLE_TRANSMISSION_DEG`].
    pub usable_quality: f64,
}

impl Default for AnalysisOptions {
    fn default() -> Self {
        Self {
            sweep: SweepOptions::default(),
            step: 1f64.to_radians(),
            usable_quality: USABLE_TRANSMISSION_DEG.to_radians(),
        }
    }
}

/// Default transmission quality `min(mu, 180 - mu)`, degrees, above which a rocking input's
/// arc counts as usable: 40 degrees, the usual floor for machines that transmit force
/// (common practice, no source).
pub const USABLE_TRANSMISSION_DEG: f64 = 40.0;

/// A turning direction.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Turn {
    /// Counter-clockwise (positive angles).
    CounterClockwise,
    /// Clockwise.
    Clockwise,
}

impl Turn {
    /// The direction of a signed speed: counter-clockwise for `s >= 0`.
    pub fn of_sign(s: f64) -> Self {
        if s >= 0.0 {
            Turn::CounterClockwise
        } else {
            Turn::Clockwise
        }
    }

    /// The other direction.
    pub fn reversed(self) -> Self {
        match self {
            Turn::CounterClockwise => Turn::Clockwise,
            Turn::Clockwise => Turn::CounterClockwise,
        }
    }

    /// `counter-clockwise` or `clockwise`.
    pub fn name(self) -> &'static str {
        match self {
            Turn::CounterClockwise => "counter-clockwise",
            Turn::Clockwise => "clockwise",
        }
    }
}

/// Extremes of the transmission angle `mu` over some crank angles. Each entry is a value
/// (radians) and the crank angle from the ground line where it occurs (radians).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TransmissionSummary {
    /// Smallest `mu`.
    pub min: (f64, f64),
    /// Largest `mu`.
    pub max: (f64, f64),
    /// Worst quality `min(mu, pi - mu)`.
    pub worst_quality: (f64, f64),
    /// Best quality `min(mu, pi - mu)` (`pi / 2` where `mu` passes a right angle).
    pub best_quality: (f64, f64),
}

impl TransmissionSummary {
    /// The summary of the union of the crank angles of `self` and `other`.
    pub fn merged(self, other: Self) -> Self {
        let lower = |a: (f64, f64), b: (f64, f64)| if b.0 < a.0 { b } else { a };
        let higher = |a: (f64, f64), b: (f64, f64)| if b.0 > a.0 { b } else { a };
        Self {
            min: lower(self.min, other.min),
            max: higher(self.max, other.max),
            worst_quality: lower(self.worst_quality, other.worst_quality),
            best_quality: higher(self.best_quality, other.best_quality),
        }
    }
}

/// Where the output link reaches one of its limit positions (an extreme of its angle).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum OutputLimit {
    /// Crank and coupler stretched in line: `|B - O2| = r2 + r3`.
    CrankCouplerStretched,
    /// Crank and coupler folded over each other: `|B - O2| = |r3 - r2|`.
    CrankCouplerFolded,
    /// A toggle of the input, where a rocking input's motion ends.
    InputToggle(ToggleKind),
}

impl OutputLimit {
    /// The limit in words, for reports.
    pub fn name(self) -> &'static str {
        match self {
            OutputLimit::CrankCouplerStretched => "crank and coupler stretched in line",
            OutputLimit::CrankCouplerFolded => "crank and coupler folded in line",
            OutputLimit::InputToggle(_) => "input at a toggle, where its motion ends",
        }
    }
}

/// An extreme position of the output link on one branch.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OutputExtreme {
    /// Pose at the extreme; its angles continue those of the branch's poses.
    pub pose: Pose,
    /// Whether it is the output's largest angle (otherwise the smallest).
    pub is_max: bool,
    /// What puts the output there.
    pub limit: OutputLimit,
}

/// The part of a rocking input's arc where the transmission quality is at least
/// [`AnalysisOptions::usable_quality`], with the transmission extremes over it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct UsablePart {
    /// Crank angle from the ground line where it begins (radians; the part runs
    /// counter-clockwise from here).
    pub from: f64,
    /// Crank angle from the ground line where it ends (radians, `> from`).
    pub to: f64,
    /// Transmission extremes over the part.
    pub transmission: TransmissionSummary,
}

/// Summary of one branch of the design's assembly.
#[derive(Debug, Clone, PartialEq)]
pub struct BranchSummary {
    /// Crank range from the ground line (radians): `None` for a full turn.
    pub crank_range: Option<(Toggle, Toggle)>,
    /// Smallest and largest output angle `theta4` (global, radians, unwrapped along the branch).
    pub theta4_range: (f64, f64),
    /// Whether the output link turns fully on this branch.
    pub output_turns_fully: bool,
    /// Interior extremes of the output (where `d theta4 / d theta2 = 0`: crank and coupler
    /// in line), in counter-clockwise order of the crank.
    pub output_extremes: Vec<OutputExtreme>,
    /// The output's smallest and largest angle on the branch, where it does not turn fully:
    /// at interior extremes, or at the ends of a rocking input's arc.
    pub output_limits: Option<(OutputExtreme, OutputExtreme)>,
    /// The usable parts of a rocking input's arc (empty for a full turn, and when the
    /// transmission quality never reaches the floor), in counter-clockwise order.
    pub usable: Vec<UsablePart>,
}

/// Time ratio of a crank that turns fully while the output rocks: the crank rotation during
/// the slower stroke of the output over that during the faster one, at constant crank speed
/// (so at least 1).
///
/// This is the trade's time (quick-return) ratio: time of the slower stroke over time of the
/// quicker one, `Q = (180 deg + beta) / (180 deg - beta)` with `beta` the imbalance angle
/// between the crank's two limit positions (Myszka, "Machines and Mechanisms: Applied
/// Kinematic Analysis", chapter on mechanism design; also Norton, "Design of Machinery",
/// quick-return mechanisms, `TR = alpha / beta`; both from memory). Which stroke is the
/// slower one depends on the running direction. The output's limit positions come where
/// crank and coupler are in line, so both crank angles are closed-form
/// ([`crank_coupler_in_line`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TimeRatio {
    /// Crank angle from the ground line (radians, `[0, 2 pi)`) at the output's smallest angle.
    pub crank_at_output_min: f64,
    /// Crank angle from the ground line (radians, `[0, 2 pi)`) at the output's largest angle.
    pub crank_at_output_max: f64,
}

impl TimeRatio {
    /// Crank rotation (radians, in `(0, 2 pi)`) during the stroke in which the output turns
    /// `output`-wise, for a crank turning `crank`-wise.
    pub fn stroke(&self, crank: Turn, output: Turn) -> f64 {
        // Counter-clockwise crank: the output rises (turns counter-clockwise) from the crank
        // angle of its minimum to that of its maximum.
        let rise_ccw = (self.crank_at_output_max - self.crank_at_output_min).rem_euclid(TAU);
        let rise = match crank {
            Turn::CounterClockwise => rise_ccw,
            Turn::Clockwise => TAU - rise_ccw,
        };
        match output {
            Turn::CounterClockwise => rise,
            Turn::Clockwise => TAU - rise,
        }
    }

    /// The output's direction during the slower stroke, for a crank turning `crank`-wise
    /// (the output's counter-clockwise stroke when both take equally long).
    pub fn slower_stroke(&self, crank: Turn) -> Turn {
        if self.stroke(crank, Turn::Clockwise) > self.stroke(crank, Turn::CounterClockwise) {
            Turn::Clockwise
        } else {
            Turn::CounterClockwise
        }
    }

    /// Slower stroke over faster stroke at constant crank speed, `>= 1`; the same for both
    /// running directions.
    pub fn ratio(&self) -> f64 {
        let a = self.stroke(Turn::CounterClockwise, Turn::CounterClockwise);
        a.max(TAU - a) / a.min(TAU - a)
    }
}

/// Everything `check` reports about a design.
#[derive(Debug, Clone, PartialEq)]
pub struct Analysis {
    /// Grashof class with the input as driver.
    pub grashof: GrashofClass,
    /// Where the input can move.
    pub range: InputRange,
    /// Transmission angle extremes over the input's whole range of motion (for a rocking
    /// input 0 and 180 degrees at its toggles); `None` when the linkage never assembles.
    pub transmission: Option<TransmissionSummary>,
    /// One summary per branch of the design's assembly.
    pub branches: Vec<BranchSummary>,
    /// Time ratio, for a full-turn input whose output rocks.
    pub time_ratio: Option<TimeRatio>,
    /// The grid sweep the summary was made from (a grid of crank angles from the ground line).
    pub sweep: Sweep,
}

/// Crank angles (from the ground line) in `[lo, hi]` where the transmission angle can be
/// extreme: the two ends and every multiple of `pi` between them. `mu` depends on the crank
/// angle only through `|A - O4|`, which is smallest at `phi = 0`, largest at `phi = pi`, and
/// monotonic between.
pub fn transmission_critical_angles(lo: f64, hi: f64) -> Vec<f64> {
    let mut out = vec![lo];
    let mut c = (lo / PI).floor() * PI + PI;
    while c < hi {
        out.push(c);
        c += PI;
    }
    if hi > lo {
        out.push(hi);
    }
    out
}

/// Crank angles from the ground line strictly between `lo` and `hi` (radians) where `mu` is
/// a right angle: there `|A - O4|^2 = r3^2 + r4^2` (law of cosines), i.e.
/// `cos phi = (r1^2 + r2^2 - r3^2 - r4^2) / (2 r1 r2)`.
fn right_angle_cranks(linkage: &FourBar, lo: f64, hi: f64) -> Vec<f64> {
    let [r1, r2, r3, r4] = linkage.lengths();
    let c = (r1 * r1 + r2 * r2 - r3 * r3 - r4 * r4) / (2.0 * r1 * r2);
    if !(-1.0..=1.0).contains(&c) {
        return Vec::new();
    }
    let a = c.acos();
    let mut out = Vec::new();
    for base in [a, -a] {
        let mut p = base + ((lo - base) / TAU).floor() * TAU;
        while p < hi {
            if p > lo {
                out.push(p);
            }
            p += TAU;
        }
    }
    out
}

/// `mu` at a toggle: exactly 0 (folded) or 180 degrees (extended) by definition, taken so
/// rather than from the law of cosines, which is ill-conditioned there: `mu` grows like the
/// square root of `r3 + r4 - |A - O4|`, so the rounding of `|A - O4|` at the toggle's crank
/// angle alone (~1e-16 relative) would put `mu` ~1e-8 rad off.
fn toggle_mu(kind: ToggleKind) -> f64 {
    match kind {
        ToggleKind::Extended => PI,
        ToggleKind::Folded => 0.0,
    }
}

/// Transmission extremes over the crank angles `[lo, hi]` from the ground line (radians),
/// exactly: evaluated at the ends (`ends` gives `mu` there when known exactly, at a toggle),
/// where `|A - O4|` is extreme ([`transmission_critical_angles`]) and where `mu` passes a
/// right angle (for the best quality). `None` when the linkage assembles at none of these.
pub fn transmission_over(
    linkage: &FourBar,
    lo: f64,
    hi: f64,
    ends: [Option<f64>; 2],
) -> Option<TransmissionSummary> {
    let t1 = linkage.ground_angle();
    let inner = transmission_critical_angles(lo, hi);
    // The angles strictly between the ends (none for a range of zero length).
    let between = inner.get(1..inner.len().saturating_sub(1)).unwrap_or(&[]);
    let mut cand: Vec<(f64, Option<f64>)> = vec![(lo, ends[0]), (hi, ends[1])];
    cand.extend(between.iter().map(|&c| (c, None)));
    cand.extend(
        right_angle_cranks(linkage, lo, hi)
            .into_iter()
            .map(|c| (c, None)),
    );
    let mut out: Option<TransmissionSummary> = None;
    for (phi, exact) in cand {
        let Some(mu) = exact.or_else(|| linkage.transmission_angle(phi + t1)) else {
            continue;
        };
        let q = (mu.min(PI - mu), phi);
        let one = TransmissionSummary {
            min: (mu, phi),
            max: (mu, phi),
            worst_quality: q,
            best_quality: q,
        };
        out = Some(out.map_or(one, |s| s.merged(one)));
    }
    out
}

/// Transmission angle extremes over the input's whole range of motion, exactly (see
/// [`transmission_over`]); a rocking input's arcs end at toggles, where `mu` is 0 or 180
/// degrees.
pub fn transmission_summary(linkage: &FourBar, range: &InputRange) -> Option<TransmissionSummary> {
    match range {
        InputRange::None => None,
        InputRange::FullTurn => transmission_over(linkage, 0.0, TAU, [None, None]),
        InputRange::Arcs(arcs) => arcs
            .iter()
            .filter_map(|a| {
                transmission_over(
                    linkage,
                    a.start.phi,
                    a.end.phi,
                    [Some(toggle_mu(a.start.kind)), Some(toggle_mu(a.end.kind))],
                )
            })
            .reduce(TransmissionSummary::merged),
    }
}

/// The parts of `arc` (crank angles from the ground line, radians) where the transmission
/// quality `min(mu, pi - mu)` is at least `quality` (radians), in counter-clockwise order.
///
/// Closed form: the quality is at least `q` where `|cos mu| <= cos q`, i.e. (law of cosines)
/// `|A - O4|^2 = r1^2 + r2^2 - 2 r1 r2 cos phi` lies within `r3^2 + r4^2 -+ 2 r3 r4 cos q`:
/// `cos phi` within a range, which holds on `[a, b]` and `[-b, -a]` (`0 <= a <= b <= pi`),
/// repeated every turn.
pub fn usable_parts(linkage: &FourBar, arc: &Arc, quality: f64) -> Vec<(f64, f64)> {
    let [r1, r2, r3, r4] = linkage.lengths();
    let (s, w) = (r3 * r3 + r4 * r4, 2.0 * r3 * r4 * quality.cos());
    let den = 2.0 * r1 * r2;
    // cos phi >= c_lo keeps |A - O4|^2 <= s + w; cos phi <= c_hi keeps it >= s - w.
    let c_lo = (r1 * r1 + r2 * r2 - (s + w)) / den;
    let c_hi = (r1 * r1 + r2 * r2 - (s - w)) / den;
    if c_lo > 1.0 || c_hi < -1.0 || c_lo > c_hi {
        return Vec::new();
    }
    let (a, b) = (c_hi.min(1.0).acos(), c_lo.max(-1.0).acos());
    let mut parts: Vec<(f64, f64)> = Vec::new();
    // Arcs lie within [-pi, 2 pi].
    for k in -1..=1 {
        let shift = f64::from(k) * TAU;
        for (lo, hi) in [(a, b), (-b, -a)] {
            let (x, y) = (
                (lo + shift).max(arc.start.phi),
                (hi + shift).min(arc.end.phi),
            );
            if x < y {
                parts.push((x, y));
            }
        }
    }
    parts.sort_by(|p, q| p.0.total_cmp(&q.0));
    // Join parts that meet (at phi = 0 when a = 0, at pi when b = pi).
    let mut out: Vec<(f64, f64)> = Vec::new();
    for p in parts {
        match out.last_mut() {
            Some(last) if p.0 <= last.1 + 1e-12 => last.1 = last.1.max(p.1),
            _ => out.push(p),
        }
    }
    out
}

/// Why the crank cannot run through a working range.
#[derive(Debug, Clone, Copy, PartialEq, thiserror::Error)]
pub enum WorkingRangeError {
    /// The linkage cannot be assembled at any crank angle.
    #[error("the linkage cannot be assembled at any crank angle")]
    NeverAssembles,
    /// The linkage cannot be assembled where the range begins.
    #[error(
        "the linkage cannot be assembled at crank angle {:.3} deg from the ground line",
        wrap_tau(*at).to_degrees()
    )]
    NotAssembled {
        /// Crank angle from the ground line, radians.
        at: f64,
    },
    /// The crank's motion ends at a toggle inside the range.
    #[error(
        "the crank's motion ends at a toggle at {:.3} deg from the ground line, inside the range",
        wrap_tau(toggle.phi).to_degrees()
    )]
    Toggle {
        /// The toggle.
        toggle: Toggle,
    },
    /// The range is longer than one turn.
    #[error("a working range spans at most one turn")]
    TooLong,
}

/// Transmission extremes over the working range of the crank from `from` to `to` (crank
/// angles from the ground line, radians; the crank turns counter-clockwise from `from`, so
/// `to > from`), when the crank can run through it without a toggle.
///
/// # Errors
/// [`WorkingRangeError`] when the range is longer than a turn, begins where the linkage does
/// not assemble, or crosses the end of a rocking input's motion.
pub fn transmission_between(
    linkage: &FourBar,
    range: &InputRange,
    from: f64,
    to: f64,
) -> Result<TransmissionSummary, WorkingRangeError> {
    const SLACK: f64 = 1e-12;
    if to - from > TAU + SLACK {
        return Err(WorkingRangeError::TooLong);
    }
    match range {
        InputRange::None => Err(WorkingRangeError::NeverAssembles),
        InputRange::FullTurn => transmission_over(linkage, from, to, [None, None])
            .ok_or(WorkingRangeError::NeverAssembles),
        InputRange::Arcs(_) => {
            let arc = range
                .arc_of(from, SLACK)
                .ok_or(WorkingRangeError::NotAssembled { at: from })?;
            let p = arc
                .unwrap(from, SLACK)
                .ok_or(WorkingRangeError::NotAssembled { at: from })?;
            let q = p + (to - from);
            if q > arc.end.phi + SLACK {
                return Err(WorkingRangeError::Toggle { toggle: arc.end });
            }
            let at = |t: &Toggle, x: f64| ((x - t.phi).abs() <= SLACK).then(|| toggle_mu(t.kind));
            transmission_over(linkage, p, q, [at(&arc.start, p), at(&arc.end, q)])
                .ok_or(WorkingRangeError::NotAssembled { at: from })
        }
    }
}

/// Slack on `|cos gamma| <= 1` in [`crank_coupler_in_line`]: the circles touch (a change
/// point's flat position) up to rounding.
const IN_LINE_SLACK: f64 = 1e-12;

/// The positions where crank and coupler lie in line, on either assembly: the output link's
/// limit positions, each with its kind (global angles).
///
/// Differentiating the loop closure and dotting with `e(theta3)` gives the output's rate
/// `d theta4 / d theta2 = r2 sin(theta3 - theta2) / (r4 sin(theta3 - theta4))`, zero exactly
/// when `theta3 = theta2` (stretched, `|B - O2| = r2 + r3`) or `theta3 = theta2 + pi`
/// (folded, `|B - O2| = |r3 - r2|`). `B` then lies on the circle of that radius `d` about
/// `O2` and on the circle of radius `r4` about `O4`; by the law of cosines in the triangle
/// `O2 O4 B` the direction of `O2 -> B` is `theta1 +- gamma` with
/// `cos gamma = (d^2 + r1^2 - r4^2) / (2 d r1)`. Up to four positions.
pub fn crank_coupler_in_line(linkage: &FourBar) -> Vec<(Pose, OutputLimit)> {
    let [r1, r2, r3, r4] = linkage.lengths();
    let t1 = linkage.ground_angle();
    let (o2, o4) = (linkage.input_pivot(), linkage.output_pivot());
    let mut out = Vec::new();
    for (d, limit) in [
        (r2 + r3, OutputLimit::CrankCouplerStretched),
        ((r3 - r2).abs(), OutputLimit::CrankCouplerFolded),
    ] {
        if d <= 0.0 {
            continue;
        }
        let c = (d * d + r1 * r1 - r4 * r4) / (2.0 * d * r1);
        if c.abs() > 1.0 + IN_LINE_SLACK {
            continue;
        }
        let g = c.clamp(-1.0, 1.0).acos();
        let sides: &[f64] = if c.abs() >= 1.0 {
            // The circles touch: one position.
            &[1.0]
        } else {
            &[1.0, -1.0]
        };
        for s in sides {
            let u = t1 + s * g;
            let b = o2 + d * crate::linkage::unit(u);
            // A lies on the line O2 B: towards B, except when folded with the coupler the
            // longer (then O2 lies between A and B).
            let folded = limit == OutputLimit::CrankCouplerFolded;
            let theta2 = if folded && r3 > r2 { u + PI } else { u };
            let theta3 = if folded { theta2 + PI } else { theta2 };
            let ob = b - o4;
            out.push((
                Pose {
                    theta2,
                    theta3,
                    theta4: ob.y.atan2(ob.x),
                },
                limit,
            ));
        }
    }
    out
}

/// Crank step (radians) to either side of a limit position at which [`output_is_max`]
/// compares the output angle when the second derivative cannot tell.
const OUTPUT_PROBE: f64 = 1e-4;

/// Whether the output is at its largest (`Some(true)`) or smallest angle at `pose`, where
/// `d theta4 / d theta2 = 0`: from the sign of `d^2 theta4 / d theta2^2` (the acceleration
/// solve for a unit crank speed), or, where that is unreliable (next to a toggle, such as a
/// change point's flat position), from the closed-form output angle [`OUTPUT_PROBE`] of
/// crank to either side on `assembly`. `None` for an inflection or when it cannot be told.
fn output_is_max(linkage: &FourBar, pose: &Pose, assembly: crate::Assembly) -> Option<bool> {
    if (pose.theta3 - pose.theta4).sin().abs() > 1e-6 {
        if let Some(r) = rates(linkage, pose, 1.0, 0.0) {
            if r.alpha4.abs() > 1e-9 {
                return Some(r.alpha4 < 0.0);
            }
        }
    }
    let side = |dt: f64| {
        closed_form(linkage, pose.theta2 + dt, assembly).map(|p| wrap_pi(p.theta4 - pose.theta4))
    };
    match (side(-OUTPUT_PROBE)?, side(OUTPUT_PROBE)?) {
        (a, b) if a < 0.0 && b < 0.0 => Some(true),
        (a, b) if a > 0.0 && b > 0.0 => Some(false),
        _ => None,
    }
}

/// `|sin(theta4 - theta3)|` below which a limit position counts as lying on both assemblies
/// (coupler and output in line too: a change point's flat position).
const BOTH_ASSEMBLIES: f64 = 1e-12;

/// `pose` placed on a branch whose poses `poses` run counter-clockwise over the crank
/// angles `window` (global, radians): `theta2` moved by whole turns into the window, and
/// `theta3`, `theta4` by whole turns next to those of the nearest pose. `None` when it is
/// not on the branch (outside the window, or on the other assembly).
fn on_branch(
    poses: &[Pose],
    window: (f64, f64),
    assembly: crate::Assembly,
    pose: &Pose,
) -> Option<Pose> {
    const EPS: f64 = 1e-9;
    let s = (pose.theta4 - pose.theta3).sin();
    if s.abs() > BOTH_ASSEMBLIES && crate::Assembly::from_sign(s) != assembly {
        return None;
    }
    let t2 = pose.theta2 + ((window.0 - EPS - pose.theta2) / TAU).ceil() * TAU;
    if t2 > window.1 + EPS {
        return None;
    }
    let near = poses
        .iter()
        .min_by(|a, b| (a.theta2 - t2).abs().total_cmp(&(b.theta2 - t2).abs()))?;
    let shift = |a: f64, b: f64| a + TAU * ((b - a) / TAU).round();
    Some(Pose {
        theta2: t2,
        theta3: shift(pose.theta3, near.theta3),
        theta4: shift(pose.theta4, near.theta4),
    })
}

/// Agreement (radians) required between the output's range over a branch's poses and its
/// limit positions for the limits to be reported.
const LIMITS_AGREE: f64 = 1e-7;

/// Analyses the design's motion on its own assembly.
pub fn analyse(linkage: &FourBar, options: &AnalysisOptions) -> Analysis {
    // A grid from the ground line, so that a turned linkage is analysed alike.
    let t1 = linkage.ground_angle();
    let sw = sweep_from(linkage, options.step, t1, &options.sweep);
    let mut tracer = Tracer::new(linkage, options.sweep);
    let in_line = crank_coupler_in_line(linkage);
    let mut branches = Vec::new();
    let mut time_ratio = None;
    for b in &sw.branches {
        let mut poses = b.poses.clone();
        if let Some((p0, p1)) = b.toggle_poses {
            // Grid angles on a toggle hold its exact pose, added again here.
            poses.retain(|p| !b.is_toggle_pose(p));
            poses.insert(0, p0);
            poses.push(p1);
        }
        let full = b.toggles.is_none();
        if full {
            if let (Some(&first), Some(&last)) = (poses.first(), poses.last()) {
                // Close the loop: trace from the last grid angle to one turn after the first.
                if let TraceEnd::Reached(p) = tracer.trace(&last, first.theta2 + TAU) {
                    poses.push(p);
                }
            }
        }
        let (Some(&first), Some(&last)) = (poses.first(), poses.last()) else {
            continue;
        };
        let window = if full {
            (first.theta2, first.theta2 + TAU)
        } else {
            (first.theta2, last.theta2)
        };
        let mut extremes: Vec<OutputExtreme> = in_line
            .iter()
            .filter_map(|(pose, limit)| {
                let pose = on_branch(&poses, window, b.assembly, pose)?;
                let is_max = output_is_max(linkage, &pose, b.assembly)?;
                Some(OutputExtreme {
                    pose,
                    is_max,
                    limit: *limit,
                })
            })
            .collect();
        extremes.sort_by(|x, y| x.pose.theta2.total_cmp(&y.pose.theta2));
        extremes.dedup_by(|x, y| (x.pose.theta2 - y.pose.theta2).abs() < 1e-9);
        let mut lo = f64::INFINITY;
        let mut hi = f64::NEG_INFINITY;
        for p in poses.iter().chain(extremes.iter().map(|e| &e.pose)) {
            lo = lo.min(p.theta4);
            hi = hi.max(p.theta4);
        }
        let output_turns_fully = full && hi - lo >= TAU - 1e-9;
        let output_limits = if output_turns_fully {
            None
        } else {
            output_limits(&extremes, b.toggles.map(|_| (first, last)), b.toggles).filter(
                |(mn, mx)| {
                    (mn.pose.theta4 - lo).abs() <= LIMITS_AGREE
                        && (mx.pose.theta4 - hi).abs() <= LIMITS_AGREE
                },
            )
        };
        if full {
            if let Some((mn, mx)) = output_limits {
                time_ratio = Some(TimeRatio {
                    crank_at_output_min: wrap_tau(mn.pose.theta2 - t1),
                    crank_at_output_max: wrap_tau(mx.pose.theta2 - t1),
                });
            }
        }
        let usable = match b.toggles {
            Some((start, end)) => {
                usable_parts(linkage, &Arc { start, end }, options.usable_quality)
                    .into_iter()
                    .filter_map(|(from, to)| {
                        Some(UsablePart {
                            from,
                            to,
                            transmission: transmission_over(linkage, from, to, [None, None])?,
                        })
                    })
                    .collect()
            }
            None => Vec::new(),
        };
        branches.push(BranchSummary {
            crank_range: b.toggles,
            theta4_range: (lo, hi),
            output_turns_fully,
            output_extremes: extremes,
            output_limits,
            usable,
        });
    }
    Analysis {
        grashof: linkage.grashof(),
        transmission: transmission_summary(linkage, &sw.range),
        range: sw.range.clone(),
        branches,
        time_ratio,
        sweep: sw,
    }
}

/// The output's smallest and largest angle among the interior `extremes` and, for a rocking
/// input, the poses at the two ends of its arc (`ends`, at the toggles `toggles`).
fn output_limits(
    extremes: &[OutputExtreme],
    ends: Option<(Pose, Pose)>,
    toggles: Option<(Toggle, Toggle)>,
) -> Option<(OutputExtreme, OutputExtreme)> {
    let mut cand: Vec<OutputExtreme> = extremes.to_vec();
    if let (Some((p0, p1)), Some((t0, t1))) = (ends, toggles) {
        for (pose, t) in [(p0, t0), (p1, t1)] {
            cand.push(OutputExtreme {
                pose,
                is_max: false,
                limit: OutputLimit::InputToggle(t.kind),
            });
        }
    }
    let by = |x: &&OutputExtreme, y: &&OutputExtreme| x.pose.theta4.total_cmp(&y.pose.theta4);
    let mn = *cand.iter().min_by(by)?;
    let mx = *cand.iter().max_by(by)?;
    Some((
        OutputExtreme {
            is_max: false,
            ..mn
        },
        OutputExtreme { is_max: true, ..mx },
    ))
}

/// Name of a toggle kind for reports.
pub fn toggle_name(kind: ToggleKind) -> &'static str {
    match kind {
        ToggleKind::Extended => "coupler and output stretched in line",
        ToggleKind::Folded => "coupler and output folded in line",
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::linkage::{Assembly, CouplerPoint};
    use approx::assert_relative_eq;
    use nalgebra::Point2;

    fn bar(r1: f64, r2: f64, r3: f64, r4: f64) -> FourBar {
        tilted(r1, r2, r3, r4, 0.0, Assembly::Open)
    }

    /// The linkage with its ground line turned `tilt` (radians) from +x, O2 at (2, 1).
    fn tilted(r1: f64, r2: f64, r3: f64, r4: f64, tilt: f64, asm: Assembly) -> FourBar {
        FourBar::new(
            Point2::new(2.0, 1.0),
            Point2::new(2.0 + r1 * tilt.cos(), 1.0 + r1 * tilt.sin()),
            r2,
            r3,
            r4,
            CouplerPoint::default(),
            asm,
        )
        .unwrap()
    }

    // r1 = 3, r2 = r3 = r4 = 1: the crank pin reaches r3 + r4 = 2 from O4 only at crank angle
    // 0 (|A - O4| = r1 - r2), so the linkage assembles at that one angle, stretched in line
    // (mu = 180 deg). This arc of zero length once panicked the transmission summary.
    #[test]
    fn a_linkage_that_assembles_at_one_crank_angle_only() {
        let l = bar(3.0, 1.0, 1.0, 1.0);
        let a = analyse(&l, &AnalysisOptions::default());
        let t = a.transmission.expect("assembles at crank angle 0");
        assert_relative_eq!(t.max.0, PI, epsilon = 1e-12);
        assert_relative_eq!(t.max.1, 0.0, epsilon = 1e-9);
    }

    // Time ratio in closed form. The output's limit positions come where crank and coupler
    // are in line, |O2 B| = r3 + r2 (stretched) and r3 - r2 (folded); the law of cosines in
    // the triangle O2 O4 B gives the angle psi of O2 -> B from the ground line, the crank lies
    // along O2 -> B when stretched and opposite when folded, so between the limits the crank
    // turns 180 + beta one way and 180 - beta the other, beta = |psi_folded - psi_stretched|,
    // and Q = (180 + beta) / (180 - beta) (Myszka, "Machines and Mechanisms", time ratio of a
    // crank-rocker; the limit-position construction e.g. Norton, "Design of Machinery";
    // both from memory). Checked on both assemblies and several ground directions.
    #[test]
    fn time_ratio_matches_the_closed_form() {
        for (r1, r2, r3, r4) in [
            (7.0, 2.0, 9.0, 6.0),
            (80.0, 25.0, 70.0, 55.0),
            (5.0, 1.5, 4.0, 3.0),
        ] {
            for asm in [Assembly::Open, Assembly::Crossed] {
                for tilt in [0.0, 0.9, -2.5] {
                    let l = tilted(r1, r2, r3, r4, tilt, asm);
                    let a = analyse(&l, &AnalysisOptions::default());
                    assert_eq!(a.grashof, GrashofClass::CrankRocker);
                    let tr = a.time_ratio.expect("a crank-rocker has a time ratio");
                    let psi = |d: f64| ((d * d + r1 * r1 - r4 * r4) / (2.0 * d * r1)).acos();
                    let (ps, pf) = (psi(r3 + r2), psi(r3 - r2));
                    let beta = (pf - ps).abs();
                    assert_relative_eq!(tr.ratio(), (PI + beta) / (PI - beta), epsilon = 1e-9);
                    // The side of the ground line B lies on: the one whose stretched pose
                    // has the design's assembly sign sin(theta4 - theta3), theta3 = theta2.
                    // In the ground frame (O2 at the origin, O4 at (r1, 0)):
                    let out = |side: f64, d: f64, p: f64| {
                        let (bx, by) = (d * (side * p).cos(), d * (side * p).sin());
                        by.atan2(bx - r1)
                    };
                    let side = [1.0, -1.0]
                        .into_iter()
                        .find(|&s| Assembly::from_sign((out(s, r3 + r2, ps) - s * ps).sin()) == asm)
                        .unwrap();
                    let (crank_s, crank_f) = (side * ps, side * pf + PI);
                    // The output's angle from the ground line stays within (0, pi) on the
                    // left side and (-pi, 0) on the right, so no wrap between the limits.
                    let (at_min, at_max) = if out(side, r3 + r2, ps) < out(side, r3 - r2, pf) {
                        (crank_s, crank_f)
                    } else {
                        (crank_f, crank_s)
                    };
                    let close = |x: f64, y: f64| wrap_pi(x - y).abs() < 1e-9;
                    assert!(close(tr.crank_at_output_min, at_min), "{tr:?} {at_min}");
                    assert!(close(tr.crank_at_output_max, at_max), "{tr:?} {at_max}");
                    // Counter-clockwise crank: the output rises from at_min to at_max.
                    let rise = (at_max - at_min).rem_euclid(TAU);
                    let ccw = Turn::CounterClockwise;
                    let cw = Turn::Clockwise;
                    assert_relative_eq!(tr.stroke(ccw, ccw), rise, epsilon = 1e-9);
                    assert_relative_eq!(tr.stroke(ccw, cw), TAU - rise, epsilon = 1e-9);
                    assert_relative_eq!(tr.stroke(cw, ccw), TAU - rise, epsilon = 1e-9);
                    assert_eq!(tr.slower_stroke(ccw), tr.slower_stroke(cw).reversed());
                    let slow = tr.stroke(ccw, tr.slower_stroke(ccw));
                    assert_relative_eq!(slow, PI + beta, epsilon = 1e-9);
                    // The output's swing between the same limits.
                    let b = &a.branches[0];
                    let swing = (out(side, r3 + r2, ps) - out(side, r3 - r2, pf)).abs();
                    assert_relative_eq!(b.theta4_range.1 - b.theta4_range.0, swing, epsilon = 1e-9);
                    let (mn, mx) = b.output_limits.expect("the output rocks");
                    assert!(close(mn.pose.theta2 - l.ground_angle(), at_min));
                    assert!(close(mx.pose.theta2 - l.ground_angle(), at_max));
                }
            }
        }
    }

    // Bug: on the change point r1 = 4, r2 = 1, r3 = 3, r4 = 2 (s + l = 1 + 4 = 3 + 2) the
    // output's limit at the flat position (crank 180 deg from the ground line, A = O2 - r2,
    // B midway between the pivots: crank and coupler folded, |O2 B| = r3 - r2 = r1 - r4, and
    // coupler and output in line too) came out at crank 179 deg. Cause: the limit was found
    // by bisecting the sign of d theta4 / d theta2 between grid poses, and the trace could
    // not enter the singular flat position, so the bisection stopped at the grid pose before
    // it. The limits are now the closed-form in-line positions. The other limit is the
    // stretched one at psi = acos(((r3 + r2)^2 + r1^2 - r4^2) / (2 (r3 + r2) r1)) (law of
    // cosines), so the crank turns 180 -+ psi between them.
    #[test]
    fn change_point_limit_at_the_flat_position() {
        let (r1, r2, r3, r4): (f64, f64, f64, f64) = (4.0, 1.0, 3.0, 2.0);
        let psi = (((r3 + r2).powi(2) + r1 * r1 - r4 * r4) / (2.0 * (r3 + r2) * r1)).acos();
        for asm in [Assembly::Open, Assembly::Crossed] {
            for tilt in [0.0, 1.1] {
                let l = tilted(r1, r2, r3, r4, tilt, asm);
                let a = analyse(&l, &AnalysisOptions::default());
                assert_eq!(a.grashof, GrashofClass::ChangePoint);
                let tr = a.time_ratio.expect("the output rocks");
                let (flat, other) = if (tr.crank_at_output_max - PI).abs() < 1e-9 {
                    (tr.crank_at_output_max, tr.crank_at_output_min)
                } else {
                    (tr.crank_at_output_min, tr.crank_at_output_max)
                };
                assert_relative_eq!(flat, PI, epsilon = 1e-9);
                assert!(
                    (other - psi).abs() < 1e-9 || (other - (TAU - psi)).abs() < 1e-9,
                    "{asm:?} {tilt}: {tr:?}"
                );
                assert_relative_eq!(tr.ratio(), (PI + psi) / (PI - psi), epsilon = 1e-9);
            }
        }
    }

    // Usable parts against dense sampling of the closed-form transmission angle, for the
    // three shapes of arc: [-a, a] between extended toggles (crossing 0), [b, 2 pi - b]
    // between folded ones, and the two arcs [b, a], [-a, -b] of a linkage with both.
    #[test]
    fn usable_parts_match_sampling() {
        let q = 40f64.to_radians();
        for l in [
            bar(8.0, 3.0, 4.0, 5.5),
            bar(5.0, 4.0, 9.0, 6.0),
            bar(7.0, 6.0, 2.0, 9.0),
            bar(4.0, 3.0, 2.0, 2.5),
            tilted(8.0, 3.0, 4.0, 5.5, 2.0, Assembly::Crossed),
        ] {
            let InputRange::Arcs(arcs) = InputRange::of(&l) else {
                panic!("a rocking input")
            };
            for arc in &arcs {
                let parts = usable_parts(&l, arc, q);
                let n = 20_000;
                for k in 0..=n {
                    let phi = arc.start.phi + arc.width() * k as f64 / n as f64;
                    let Some(mu) = l.transmission_angle(phi + l.ground_angle()) else {
                        continue;
                    };
                    let good = mu.min(PI - mu);
                    let inside = parts.iter().any(|(x, y)| (*x..=*y).contains(&phi));
                    if (good - q).abs() > 1e-6 {
                        assert_eq!(inside, good > q, "{l:?} {phi} {}", good.to_degrees());
                    }
                }
                for (x, y) in &parts {
                    assert!(x < y && *x > arc.start.phi && *y < arc.end.phi);
                }
            }
        }
    }

    // A working range is summarised where the crank can run through it and refused where
    // it crosses a toggle. This triple-rocker (s + l = 3 + 8 > 4 + 5.5) rocks on [-a, a]
    // between extended toggles (|A - O4| runs from 5 > r4 - r3 to 11 > r3 + r4); mu is
    // smallest at phi = 0 (|A - O4| = r1 - r2 = 5, law of cosines) and largest at the ends.
    #[test]
    fn working_range_over_an_arc_that_crosses_zero() {
        let l = tilted(8.0, 3.0, 4.0, 5.5, 0.7, Assembly::Open);
        let range = InputRange::of(&l);
        let InputRange::Arcs(arcs) = &range else {
            panic!("a triple-rocker rocks")
        };
        let a = arcs.iter().find(|a| a.contains(0.0, 0.0)).unwrap();
        let (from, to) = (-0.5 * a.end.phi, 0.8 * a.end.phi);
        let t = transmission_between(&l, &range, from, to).unwrap();
        let mu0 = ((16.0 + 30.25 - 25.0) / (2.0 * 4.0 * 5.5_f64)).acos();
        assert_relative_eq!(t.min.0, mu0, epsilon = 1e-12);
        assert_relative_eq!(t.min.1, 0.0, epsilon = 1e-12);
        let far = l.transmission_angle(l.ground_angle() + to).unwrap();
        assert_relative_eq!(t.max.0, far, epsilon = 1e-12);
        // The same range given a turn later, and one that runs past the toggle.
        let later = transmission_between(&l, &range, from + TAU, to + TAU).unwrap();
        assert_relative_eq!(later.min.0, t.min.0, epsilon = 1e-12);
        assert!(matches!(
            transmission_between(&l, &range, from, a.end.phi + 0.1),
            Err(WorkingRangeError::Toggle { .. })
        ));
        assert!(matches!(
            transmission_between(&l, &range, PI, PI + 0.1),
            Err(WorkingRangeError::NotAssembled { .. })
        ));
    }

    #[test]
    fn transmission_extremes_match_sampling() {
        for l in [
            bar(7.0, 2.0, 9.0, 6.0),
            bar(5.0, 4.0, 9.0, 6.0),
            bar(7.0, 6.0, 2.0, 9.0),
        ] {
            let range = InputRange::of(&l);
            let ts = transmission_summary(&l, &range).unwrap();
            let mut lo = f64::INFINITY;
            let mut hi = f64::NEG_INFINITY;
            let mut best: f64 = 0.0;
            for k in 0..36000 {
                let t2 = (k as f64 * 0.01).to_radians();
                if let Some(mu) = l.transmission_angle(t2) {
                    lo = lo.min(mu);
                    hi = hi.max(mu);
                    best = best.max(mu.min(PI - mu));
                }
            }
            // Sampling only approaches a toggle (where mu is 0 or 180 deg) like the square
            // root of the distance, hence the looser lower bound.
            assert!(
                ts.min.0 <= lo + 1e-12 && ts.min.0 > lo - 0.03,
                "{l:?} {ts:?} {lo}"
            );
            assert!(
                ts.max.0 >= hi - 1e-12 && ts.max.0 < hi + 0.03,
                "{l:?} {ts:?} {hi}"
            );
            assert!(
                ts.best_quality.0 >= best - 1e-12 && ts.best_quality.0 < best + 1e-3,
                "{l:?} {ts:?} {best}"
            );
        }
    }
}
