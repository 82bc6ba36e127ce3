//! Whole-motion analysis of a given design: Grashof class, range of motion and toggles,
//! transmission angle, output swing and time ratio, branch along the motion.

use std::f64::consts::{PI, TAU};

use super::position::Pose;
use super::range::{InputRange, Toggle, ToggleKind};
use super::rates::velocity_ratios;
use super::sweep::{sweep_from, Sweep, SweepOptions, TraceEnd, Tracer};
use crate::linkage::{FourBar, GrashofClass};

/// Options of [`analyse`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AnalysisOptions {
    /// Sweep tuning.
    pub sweep: SweepOptions,
    /// Grid step (radians) of the sweep used to find output extremes. Default 1 degree.
    pub step: f64,
}

impl Default for AnalysisOptions {
    fn default() -> Self {
        Self {
            sweep: SweepOptions::default(),
            step: 1f64.to_radians(),
        }
    }
}

/// Extremes of the transmission angle over the input's range of motion (radians).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TransmissionSummary {
    /// Smallest `mu` and the crank angle from the ground line where it occurs.
    pub min: (f64, f64),
    /// Largest `mu` and the crank angle from the ground line where it occurs.
    pub max: (f64, f64),
    /// Worst quality `min(mu, pi - mu)` over the motion and where (crank angle from ground).
    pub worst_quality: (f64, f64),
}

/// An extreme position of the output link on one branch.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OutputExtreme {
    /// Pose at the extreme.
    pub pose: Pose,
    /// Whether it is the output's largest angle (otherwise the smallest).
    pub is_max: bool,
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
    /// Interior extremes of the output (where `d theta4 / d theta2 = 0`).
    pub output_extremes: Vec<OutputExtreme>,
}

/// Time ratio of a crank-rocker: crank rotation (radians) while the output turns from its
/// smallest to its largest angle (forward stroke), and back (return stroke).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TimeRatio {
    /// Crank rotation during the forward stroke (output angle increasing), radians.
    pub forward: f64,
    /// Crank rotation during the return stroke, radians.
    pub back: f64,
}

impl TimeRatio {
    /// Forward over return duration at constant crank speed.
    pub fn ratio(&self) -> f64 {
        self.forward / self.back
    }
}

/// Everything `check` reports about a design.
#[derive(Debug, Clone, PartialEq)]
pub struct Analysis {
    /// Grashof class with the input as driver.
    pub grashof: GrashofClass,
    /// Where the input can move.
    pub range: InputRange,
    /// Transmission angle extremes; `None` when the linkage never assembles.
    pub transmission: Option<TransmissionSummary>,
    /// One summary per branch of the design's assembly.
    pub branches: Vec<BranchSummary>,
    /// Time ratio, for a full-turn input whose output rocks.
    pub time_ratio: Option<TimeRatio>,
    /// The grid sweep the summary was made from.
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

/// Transmission angle extremes over the input's range of motion, exactly: at the angles of
/// [`transmission_critical_angles`] and the toggles.
///
/// At a toggle `mu` is exactly 0 (folded) or 180 degrees (extended) by definition; it is
/// taken so rather than from the law of cosines, which is ill-conditioned there: `mu` grows
/// like the square root of `r3 + r4 - |A - O4|`, so the rounding of `|A - O4|` at the
/// toggle's crank angle alone (~1e-16 relative) would put `mu` ~1e-8 rad off.
pub fn transmission_summary(linkage: &FourBar, range: &InputRange) -> Option<TransmissionSummary> {
    // Candidate crank angles from the ground line, with the exact mu at toggles.
    let mut cand: Vec<(f64, Option<f64>)> = Vec::new();
    let at_toggle = |t: &Toggle| {
        let mu = match t.kind {
            ToggleKind::Extended => PI,
            ToggleKind::Folded => 0.0,
        };
        (t.phi, Some(mu))
    };
    match range {
        InputRange::None => return None,
        InputRange::FullTurn => cand.extend([(0.0, None), (PI, None)]),
        InputRange::Arcs(arcs) => {
            for a in arcs {
                cand.extend([at_toggle(&a.start), at_toggle(&a.end)]);
                // The angles strictly between the toggles (none for an arc of zero length).
                let inner = transmission_critical_angles(a.start.phi, a.end.phi);
                let between = inner.get(1..inner.len().saturating_sub(1)).unwrap_or(&[]);
                cand.extend(between.iter().map(|&c| (c, None)));
            }
        }
    }
    let t1 = linkage.ground_angle();
    let mut min = (f64::INFINITY, 0.0);
    let mut max = (f64::NEG_INFINITY, 0.0);
    for (phi, exact) in cand {
        let Some(mu) = exact.or_else(|| linkage.transmission_angle(phi + t1)) else {
            continue;
        };
        if mu < min.0 {
            min = (mu, phi);
        }
        if mu > max.0 {
            max = (mu, phi);
        }
    }
    if !min.0.is_finite() {
        return None;
    }
    let worst_quality = if min.0 <= PI - max.0 {
        min
    } else {
        (PI - max.0, max.1)
    };
    Some(TransmissionSummary {
        min,
        max,
        worst_quality,
    })
}

/// Bisects on the sign of `d theta4 / d theta2` between two poses of one branch to find the
/// output's extreme between them.
fn refine_extreme(tracer: &mut Tracer, a: &Pose, b: &Pose) -> Pose {
    let linkage = tracer.linkage();
    let k = |p: &Pose| velocity_ratios(linkage, p).map_or(0.0, |v| v.1);
    let (mut lo, mut hi) = (*a, *b);
    let ka = k(&lo);
    for _ in 0..60 {
        if (hi.theta2 - lo.theta2).abs() < 1e-13 {
            break;
        }
        let mid = 0.5 * (lo.theta2 + hi.theta2);
        let TraceEnd::Reached(m) = tracer.trace(&lo, mid) else {
            break;
        };
        if (k(&m) > 0.0) == (ka > 0.0) {
            lo = m;
        } else {
            hi = m;
        }
    }
    lo
}

/// Analyses the design's motion on its own assembly.
pub fn analyse(linkage: &FourBar, options: &AnalysisOptions) -> Analysis {
    // A grid from the ground line, so that a turned linkage is analysed alike.
    let sw = sweep_from(
        linkage,
        options.step,
        linkage.ground_angle(),
        &options.sweep,
    );
    let mut tracer = Tracer::new(linkage, options.sweep);
    let mut branches = Vec::new();
    let mut time_ratio = None;
    for b in &sw.branches {
        let mut poses = b.poses.clone();
        if let Some((p0, p1)) = b.toggle_poses {
            // Grid angles on a toggle hold its exact pose, added again below.
            poses.retain(|p| !b.is_toggle_pose(p));
            // The output's rate is unbounded at a toggle, so its sign there is taken from
            // a pose traced to within the toggle margin; without it an output extreme
            // between a toggle and the nearest grid angle would go unseen.
            let anchor = match (poses.first(), poses.last()) {
                (Some(&a), Some(&z)) => Some((a, z)),
                _ => tracer
                    .pose_at(0.5 * (p0.theta2 + p1.theta2), linkage.assembly())
                    .map(|m| (m, m)),
            };
            if let Some((a, z)) = anchor {
                if let TraceEnd::Toggle { last, .. } = tracer.trace(&a, a.theta2 - TAU) {
                    poses.insert(0, last);
                }
                if let TraceEnd::Toggle { last, .. } = tracer.trace(&z, z.theta2 + TAU) {
                    poses.push(last);
                }
            }
            poses.insert(0, p0);
            poses.push(p1);
        }
        let full = b.toggles.is_none();
        if full {
            if let Some(&first) = poses.first() {
                // Close the loop: trace from the last grid angle to one turn after the first.
                let last = *poses.last().expect("non-empty");
                if let TraceEnd::Reached(p) = tracer.trace(&last, first.theta2 + TAU) {
                    poses.push(p);
                }
            }
        }
        if poses.is_empty() {
            continue;
        }
        let mut extremes = Vec::new();
        let ks: Vec<f64> = poses
            .iter()
            .map(|p| velocity_ratios(linkage, p).map_or(f64::NAN, |v| v.1))
            .collect();
        // Sign changes of d theta4 / d theta2 between poses, skipping poses where it is
        // exactly zero (an extreme right on a grid angle) or unbounded (a toggle).
        let mut prev: Option<usize> = None;
        for (i, &k1) in ks.iter().enumerate() {
            if !k1.is_finite() || k1 == 0.0 {
                continue;
            }
            if let Some(j) = prev {
                let k0 = ks[j];
                if (k0 > 0.0) != (k1 > 0.0) {
                    let p = refine_extreme(&mut tracer, &poses[j], &poses[i]);
                    extremes.push(OutputExtreme {
                        pose: p,
                        is_max: k0 > 0.0,
                    });
                }
            }
            prev = Some(i);
        }
        let mut lo = f64::INFINITY;
        let mut hi = f64::NEG_INFINITY;
        for p in poses.iter().chain(extremes.iter().map(|e| &e.pose)) {
            lo = lo.min(p.theta4);
            hi = hi.max(p.theta4);
        }
        let output_turns_fully = full && hi - lo >= TAU - 1e-9;
        if full && !output_turns_fully {
            let mx = extremes.iter().find(|e| e.is_max);
            let mn = extremes.iter().find(|e| !e.is_max);
            if let (Some(mx), Some(mn)) = (mx, mn) {
                let forward = (mx.pose.theta2 - mn.pose.theta2).rem_euclid(TAU);
                time_ratio = Some(TimeRatio {
                    forward,
                    back: TAU - forward,
                });
            }
        }
        branches.push(BranchSummary {
            crank_range: b.toggles,
            theta4_range: (lo, hi),
            output_turns_fully,
            output_extremes: extremes,
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
        FourBar::new(
            Point2::new(2.0, 1.0),
            Point2::new(2.0 + r1, 1.0),
            r2,
            r3,
            r4,
            CouplerPoint::default(),
            Assembly::Open,
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

    // Crank-rocker extremes in closed form: the output is at its limits when crank and
    // coupler are in line, |B - O2| = r3 + r2 or r3 - r2 (standard construction of the
    // limit positions, e.g. Norton, "Design of Machinery", ch. 3, from memory).
    #[test]
    fn crank_rocker_swing_and_time_ratio() {
        let (r1, r2, r3, r4) = (7.0, 2.0, 9.0, 6.0);
        let l = bar(r1, r2, r3, r4);
        let a = analyse(&l, &AnalysisOptions::default());
        assert_eq!(a.grashof, GrashofClass::CrankRocker);
        let tr = a.time_ratio.expect("crank-rocker has a time ratio");
        // Angle of O4 -> B when |O2 B| = d: law of cosines in triangle O2 O4 B.
        let out = |d: f64| PI - ((r1 * r1 + r4 * r4 - d * d) / (2.0 * r1 * r4)).acos();
        let swing = (out(r3 + r2) - out(r3 - r2)).abs();
        let b = &a.branches[0];
        assert_relative_eq!(b.theta4_range.1 - b.theta4_range.0, swing, epsilon = 1e-9);
        // Crank angles at the limits: along O2 -> B (stretched) and opposite (folded).
        let crank = |d: f64, along: bool| {
            let t4 = out(d);
            let bx = r1 + r4 * t4.cos();
            let by = r4 * t4.sin();
            let t = by.atan2(bx);
            if along {
                t
            } else {
                t + PI
            }
        };
        let beta = (crank(r3 + r2, true) - crank(r3 - r2, false)).rem_euclid(TAU);
        assert_relative_eq!(
            tr.forward.min(tr.back),
            beta.min(TAU - beta),
            epsilon = 1e-9
        );
        assert_relative_eq!(tr.forward + tr.back, TAU, epsilon = 1e-12);
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
            for k in 0..36000 {
                let t2 = (k as f64 * 0.01).to_radians();
                if let Some(mu) = l.transmission_angle(t2) {
                    lo = lo.min(mu);
                    hi = hi.max(mu);
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
        }
    }
}
