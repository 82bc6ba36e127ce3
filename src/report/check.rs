//! The `check` summary of a design: a serialisable record and its readable text.
//!
//! Angles: crank and output angles are degrees counter-clockwise from the ground line
//! `O2 -> O4`, wrapped into `[0, 360)` ([`ANGLES`]); the ground line's own direction is given
//! once, from the +x axis, as `ground_line_global_deg`.

use std::fmt::Write as _;

use serde::Serialize;

use super::{deg, deg_wrapped};
use crate::design::{Design, DesignFile};
use crate::kinematics::analysis::{
    analyse, toggle_name, transmission_between, Analysis, AnalysisOptions, OutputExtreme,
    TimeRatio, TransmissionSummary, Turn, USABLE_TRANSMISSION_DEG,
};
use crate::kinematics::range::{InputRange, Toggle, ToggleKind};
use crate::SAFETY_NOTE;

/// Name of the `check --json` format.
pub const CHECK_FORMAT: &str = "crankwright check";
/// Version of the `check --json` format: 2 since the crank angles are measured from the
/// ground line and the keys name their reference (version 1 had no version field).
pub const CHECK_FORMAT_VERSION: u32 = 2;

/// The angle convention of the `check` report, as stated in it.
pub const ANGLES: &str = "degrees counter-clockwise; crank and output angles from the ground \
line O2 -> O4, in [0, 360); mu is the transmission angle at B between coupler and output";

/// What `check` is asked beyond the design itself.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CheckOptions {
    /// Crank speed, revolutions per minute; its sign is the running direction (positive
    /// counter-clockwise). Names the strokes of the time ratio and gives their durations.
    pub speed_rpm: f64,
    /// Working range of the crank, degrees from the ground line: from the first angle
    /// counter-clockwise to the second.
    pub working_range: Option<(f64, f64)>,
}

impl Default for CheckOptions {
    fn default() -> Self {
        Self {
            speed_rpm: 60.0,
            working_range: None,
        }
    }
}

/// A toggle position in a report.
#[derive(Debug, Clone, Serialize)]
pub struct ToggleRecord {
    /// Crank angle, degrees from the ground line, in `[0, 360)`.
    pub crank_from_ground_deg: f64,
    /// `extended` (coupler and output stretched in line) or `folded`.
    pub kind: &'static str,
}

/// One limit position of the output link.
#[derive(Debug, Clone, Serialize)]
pub struct OutputLimitRecord {
    /// Output angle (direction `O4 -> B`), degrees from the ground line, in `[0, 360)`.
    pub output_from_ground_deg: f64,
    /// Crank angle there, degrees from the ground line, in `[0, 360)`.
    pub crank_from_ground_deg: f64,
    /// What puts the output there, in words.
    pub position: &'static str,
}

/// Transmission angle extremes over a stretch of crank motion, degrees; crank angles from
/// the ground line in `[0, 360)`.
#[derive(Debug, Clone, Serialize)]
pub struct TransmissionRecord {
    /// Which crank motion the extremes are over, in words.
    pub scope: String,
    /// Where the stretch begins (absent for a full turn); it runs counter-clockwise.
    pub from_crank_deg: Option<f64>,
    /// Where it ends (absent for a full turn).
    pub to_crank_deg: Option<f64>,
    /// Smallest transmission angle `mu`.
    pub min_deg: f64,
    /// Crank angle of the smallest.
    pub min_at_crank_deg: f64,
    /// Largest `mu`.
    pub max_deg: f64,
    /// Crank angle of the largest.
    pub max_at_crank_deg: f64,
    /// Worst quality `min(mu, 180 - mu)`.
    pub worst_quality_deg: f64,
    /// Best quality `min(mu, 180 - mu)`.
    pub best_quality_deg: f64,
    /// Crank angle of the best quality.
    pub best_at_crank_deg: f64,
}

/// One branch of the design's assembly in a report.
#[derive(Debug, Clone, Serialize)]
pub struct BranchRecord {
    /// Toggle ending the crank's clockwise motion; absent for a full turn.
    pub from: Option<ToggleRecord>,
    /// Toggle ending the crank's counter-clockwise motion; absent for a full turn.
    pub to: Option<ToggleRecord>,
    /// Crank rotation available on the branch, degrees (360 for a full turn).
    pub crank_travel_deg: f64,
    /// The output's smallest angle; absent when it turns fully.
    pub output_min: Option<OutputLimitRecord>,
    /// The output's largest angle (counter-clockwise from the smallest by the swing);
    /// absent when it turns fully.
    pub output_max: Option<OutputLimitRecord>,
    /// Output swing, degrees (360 when the output turns fully).
    pub output_swing_deg: f64,
    /// Whether the output link turns fully.
    pub output_turns_fully: bool,
    /// For a rocking input, the transmission over each usable part of the branch's arc
    /// (see [`CheckReport::usable_quality_deg`]); empty for a full turn.
    pub usable: Vec<TransmissionRecord>,
}

/// One stroke of the output of a crank-rocker.
#[derive(Debug, Clone, Serialize)]
pub struct StrokeRecord {
    /// The output's direction during the stroke (`counter-clockwise`: its angle rises).
    pub output_turns: &'static str,
    /// Crank angle where the stroke begins, degrees from the ground line.
    pub from_crank_deg: f64,
    /// Crank angle where it ends.
    pub to_crank_deg: f64,
    /// Crank rotation during the stroke, degrees.
    pub crank_rotation_deg: f64,
    /// Duration at the crank speed, seconds; absent at speed 0.
    pub seconds: Option<f64>,
}

/// Time ratio of a crank that turns fully while the output rocks.
#[derive(Debug, Clone, Serialize)]
pub struct TimeRatioRecord {
    /// Crank rotation during the slower stroke over that during the faster one, `>= 1`.
    pub ratio: f64,
    /// The crank's running direction (from the sign of the speed).
    pub crank_turns: &'static str,
    /// Crank speed, revolutions per minute (signed, positive counter-clockwise).
    pub crank_speed_rpm: f64,
    /// The slower stroke.
    pub slower: StrokeRecord,
    /// The faster stroke.
    pub faster: StrokeRecord,
}

/// A working range of the crank and what happens over it.
#[derive(Debug, Clone, Serialize)]
pub struct WorkingRangeRecord {
    /// Crank angle where it begins, degrees from the ground line, as given.
    pub from_crank_deg: f64,
    /// Crank angle where it ends, as given.
    pub to_crank_deg: f64,
    /// Transmission extremes over it; absent when the crank cannot run through it.
    pub transmission: Option<TransmissionRecord>,
    /// Why the crank cannot run through it.
    pub problem: Option<String>,
}

/// Everything `check` tells about a design.
#[derive(Debug, Clone, Serialize)]
pub struct CheckReport {
    /// [`CHECK_FORMAT`].
    pub format: &'static str,
    /// [`CHECK_FORMAT_VERSION`].
    pub format_version: u32,
    /// The angle convention ([`ANGLES`]).
    pub angles: &'static str,
    /// The design as in its file.
    pub design: DesignFile,
    /// Ground link length `r1`.
    pub ground_link: f64,
    /// Direction of the ground line `O2 -> O4`, degrees counter-clockwise from +x.
    pub ground_line_global_deg: f64,
    /// Grashof class with the input as driver.
    pub grashof: &'static str,
    /// Whether the linkage is a change point (`s + l = p + q`).
    pub change_point: bool,
    /// Longest over shortest link.
    pub length_ratio: f64,
    /// Whether the input (crank) turns fully.
    pub crank_turns_fully: bool,
    /// Whether the linkage can be assembled at any crank angle.
    pub assembles: bool,
    /// Transmission quality `min(mu, 180 - mu)`, degrees, that marks the usable part of a
    /// rocking input's arc (common practice, no source).
    pub usable_quality_deg: f64,
    /// Branches of the design's assembly.
    pub branches: Vec<BranchRecord>,
    /// Transmission angle extremes over the working motion: a full turn of the crank, or
    /// for a rocking input the usable parts of its arcs (its toggles, where `mu` is 0 or
    /// 180 degrees, when no part is usable); absent when it never assembles.
    pub transmission: Option<TransmissionRecord>,
    /// The working range asked for, if any.
    pub working_range: Option<WorkingRangeRecord>,
    /// Time ratio, for a crank that turns fully and an output that rocks.
    pub time_ratio: Option<TimeRatioRecord>,
    /// Kinematics-only caution.
    pub caution: &'static str,
}

fn toggle(t: &Toggle) -> ToggleRecord {
    ToggleRecord {
        crank_from_ground_deg: deg_wrapped(t.phi),
        kind: match t.kind {
            ToggleKind::Extended => "extended",
            ToggleKind::Folded => "folded",
        },
    }
}

fn transmission(
    scope: String,
    span: Option<(f64, f64)>,
    t: &TransmissionSummary,
) -> TransmissionRecord {
    TransmissionRecord {
        scope,
        from_crank_deg: span.map(|s| deg_wrapped(s.0)),
        to_crank_deg: span.map(|s| deg_wrapped(s.1)),
        min_deg: deg(t.min.0),
        min_at_crank_deg: deg_wrapped(t.min.1),
        max_deg: deg(t.max.0),
        max_at_crank_deg: deg_wrapped(t.max.1),
        worst_quality_deg: deg(t.worst_quality.0),
        best_quality_deg: deg(t.best_quality.0),
        best_at_crank_deg: deg_wrapped(t.best_quality.1),
    }
}

fn output_limit(e: &OutputExtreme, t1: f64) -> OutputLimitRecord {
    OutputLimitRecord {
        output_from_ground_deg: deg_wrapped(e.pose.theta4 - t1),
        crank_from_ground_deg: deg_wrapped(e.pose.theta2 - t1),
        position: e.limit.name(),
    }
}

fn time_ratio(t: &TimeRatio, rpm: f64) -> TimeRatioRecord {
    let crank = Turn::of_sign(rpm);
    let stroke = |output: Turn| {
        // The output turns counter-clockwise (rises) from its smallest angle to its largest.
        let (from, to) = match output {
            Turn::CounterClockwise => (t.crank_at_output_min, t.crank_at_output_max),
            Turn::Clockwise => (t.crank_at_output_max, t.crank_at_output_min),
        };
        let rotation = t.stroke(crank, output);
        StrokeRecord {
            output_turns: output.name(),
            from_crank_deg: deg_wrapped(from),
            to_crank_deg: deg_wrapped(to),
            crank_rotation_deg: deg(rotation),
            // One turn takes 60 / |rpm| seconds.
            seconds: (rpm != 0.0).then(|| rotation / std::f64::consts::TAU * 60.0 / rpm.abs()),
        }
    };
    let slow = t.slower_stroke(crank);
    TimeRatioRecord {
        ratio: t.ratio(),
        crank_turns: crank.name(),
        crank_speed_rpm: rpm,
        slower: stroke(slow),
        faster: stroke(slow.reversed()),
    }
}

impl CheckReport {
    /// Analyses `design` and gathers the report, with the default [`CheckOptions`].
    pub fn new(design: &Design) -> Self {
        Self::with(design, &CheckOptions::default())
    }

    /// Analyses `design` and gathers the report.
    pub fn with(design: &Design, options: &CheckOptions) -> Self {
        Self::from_analysis(
            design,
            &analyse(&design.linkage, &AnalysisOptions::default()),
            options,
        )
    }

    /// Gathers the report from an analysis already made (with the default usable quality).
    pub fn from_analysis(design: &Design, a: &Analysis, options: &CheckOptions) -> Self {
        let l = &design.linkage;
        let t1 = l.ground_angle();
        let usable_quality = AnalysisOptions::default().usable_quality;
        let floor = crate::input::short(deg(usable_quality));
        let usable_words = format!("usable arc (min(mu, 180 - mu) >= {floor} deg)");
        let branches = a
            .branches
            .iter()
            .map(|b| BranchRecord {
                from: b.crank_range.map(|r| toggle(&r.0)),
                to: b.crank_range.map(|r| toggle(&r.1)),
                crank_travel_deg: b.crank_range.map_or(360.0, |r| deg(r.1.phi - r.0.phi)),
                output_min: b.output_limits.map(|(mn, _)| output_limit(&mn, t1)),
                output_max: b.output_limits.map(|(_, mx)| output_limit(&mx, t1)),
                output_swing_deg: if b.output_turns_fully {
                    360.0
                } else {
                    deg(b.theta4_range.1 - b.theta4_range.0)
                },
                output_turns_fully: b.output_turns_fully,
                usable: b
                    .usable
                    .iter()
                    .map(|u| {
                        transmission(usable_words.clone(), Some((u.from, u.to)), &u.transmission)
                    })
                    .collect(),
            })
            .collect();
        let usable_all = a
            .branches
            .iter()
            .flat_map(|b| b.usable.iter().map(|u| u.transmission))
            .reduce(TransmissionSummary::merged);
        let whole = match (&a.range, usable_all) {
            (InputRange::FullTurn, _) => a
                .transmission
                .map(|t| transmission("full turn of the crank".into(), None, &t)),
            (_, Some(u)) => Some(transmission(
                format!("usable arcs of every branch (min(mu, 180 - mu) >= {floor} deg)"),
                None,
                &u,
            )),
            (_, None) => a.transmission.map(|t| {
                transmission(
                    format!(
                        "whole arcs to the toggles (no crank angle has min(mu, 180 - mu) >= {floor} deg)"
                    ),
                    None,
                    &t,
                )
            }),
        };
        let working_range = options.working_range.map(|(from, to)| {
            let (lo, hi) = (from.to_radians(), to.to_radians());
            // Counter-clockwise from `from` to `to`: at most one turn on.
            let hi = if hi <= lo {
                hi + std::f64::consts::TAU
            } else {
                hi
            };
            match transmission_between(l, &a.range, lo, hi) {
                Ok(t) => WorkingRangeRecord {
                    from_crank_deg: from,
                    to_crank_deg: to,
                    transmission: Some(transmission("working range".into(), Some((lo, hi)), &t)),
                    problem: None,
                },
                Err(e) => WorkingRangeRecord {
                    from_crank_deg: from,
                    to_crank_deg: to,
                    transmission: None,
                    problem: Some(e.to_string()),
                },
            }
        });
        CheckReport {
            format: CHECK_FORMAT,
            format_version: CHECK_FORMAT_VERSION,
            angles: ANGLES,
            design: DesignFile::from(design),
            ground_link: l.ground(),
            ground_line_global_deg: deg_wrapped(t1),
            grashof: a.grashof.name(),
            change_point: a.grashof == crate::GrashofClass::ChangePoint,
            length_ratio: l.length_ratio(),
            crank_turns_fully: a.range == InputRange::FullTurn,
            assembles: a.range != InputRange::None,
            usable_quality_deg: deg(usable_quality),
            branches,
            transmission: whole,
            working_range,
            time_ratio: a.time_ratio.map(|t| time_ratio(&t, options.speed_rpm)),
            caution: SAFETY_NOTE,
        }
    }

    /// The report as readable text.
    pub fn to_text(&self) -> String {
        let d = &self.design;
        let u = d.units.as_deref().unwrap_or("mm");
        let mut s = String::new();
        let _ = writeln!(s, "design: {}", d.name.as_deref().unwrap_or("(unnamed)"));
        let _ = writeln!(
            s,
            "links ({u}): ground {:.4}, crank {:.4}, coupler {:.4}, output {:.4}; assembly {}",
            self.ground_link,
            d.input_link,
            d.coupler,
            d.output_link,
            d.assembly.name()
        );
        let _ = writeln!(
            s,
            "coupler point: p = {:.4}, q = {:.4} {u}; longest/shortest link {:.3}",
            d.coupler_point[0], d.coupler_point[1], self.length_ratio
        );
        let _ = writeln!(
            s,
            "angles: degrees counter-clockwise from the ground line O2 -> O4 (which points {:.3} deg from +x), in [0, 360)",
            self.ground_line_global_deg
        );
        let _ = writeln!(
            s,
            "Grashof class: {}{}",
            self.grashof,
            if self.change_point {
                " (change point: the linkage can fold flat; motion is ambiguous there)"
            } else {
                ""
            }
        );
        if !self.assembles {
            let _ = writeln!(s, "cannot be assembled at any crank angle");
        } else if self.crank_turns_fully {
            let _ = writeln!(s, "crank: turns fully");
        } else {
            let _ = writeln!(s, "crank: does not turn fully; its motion ends at toggles");
        }
        for (i, b) in self.branches.iter().enumerate() {
            self.branch_text(&mut s, i, b);
        }
        if let Some(t) = &self.transmission {
            let _ = writeln!(s, "transmission angle over the {}:", t.scope);
            let _ = writeln!(s, "  {}", extremes_text(t));
        }
        if let Some(w) = &self.working_range {
            match (&w.transmission, &w.problem) {
                (Some(t), _) => {
                    let _ = writeln!(
                        s,
                        "working range, crank {} to {} deg counter-clockwise:\n  {}",
                        crate::input::short(w.from_crank_deg),
                        crate::input::short(w.to_crank_deg),
                        extremes_text(t)
                    );
                }
                (None, p) => {
                    let _ = writeln!(
                        s,
                        "working range, crank {} to {} deg counter-clockwise: not reachable: {}",
                        crate::input::short(w.from_crank_deg),
                        crate::input::short(w.to_crank_deg),
                        p.as_deref().unwrap_or("")
                    );
                }
            }
        }
        if let Some(t) = &self.time_ratio {
            let _ = writeln!(
                s,
                "time ratio: {:.4} (crank rotation during the slower stroke over that during the faster, constant crank speed)",
                t.ratio
            );
            let speed = crate::input::short(t.crank_speed_rpm.abs());
            let _ = writeln!(s, "  crank turning {} at {speed} rpm:", t.crank_turns);
            for (name, k) in [("slower", &t.slower), ("faster", &t.faster)] {
                let secs = k.seconds.map_or(String::new(), |v| format!(", {v:.3} s"));
                let _ = writeln!(
                    s,
                    "    {name}: output turns {} while the crank goes {:.3} -> {:.3} deg ({:.3} deg of crank{secs})",
                    k.output_turns, k.from_crank_deg, k.to_crank_deg, k.crank_rotation_deg
                );
            }
        }
        let _ = writeln!(s, "note: {}", self.caution);
        s
    }

    fn branch_text(&self, s: &mut String, i: usize, b: &BranchRecord) {
        match (&b.from, &b.to) {
            (Some(f), Some(t)) => {
                let _ = writeln!(
                    s,
                    "  branch {}: crank from {:.3} deg ({}) counter-clockwise to {:.3} deg ({}), travel {:.3} deg",
                    i + 1,
                    f.crank_from_ground_deg,
                    toggle_words(f.kind),
                    t.crank_from_ground_deg,
                    toggle_words(t.kind),
                    b.crank_travel_deg
                );
            }
            _ => {
                let _ = writeln!(s, "  branch {}: full turn of the crank", i + 1);
            }
        }
        if b.output_turns_fully {
            let _ = writeln!(s, "    output turns fully");
        } else if let (Some(mn), Some(mx)) = (&b.output_min, &b.output_max) {
            let _ = writeln!(
                s,
                "    output from {:.3} deg (crank {:.3} deg, {}) counter-clockwise to {:.3} deg (crank {:.3} deg, {}), swing {:.3} deg",
                mn.output_from_ground_deg,
                mn.crank_from_ground_deg,
                mn.position,
                mx.output_from_ground_deg,
                mx.crank_from_ground_deg,
                mx.position,
                b.output_swing_deg
            );
        } else {
            let _ = writeln!(s, "    output swing {:.3} deg", b.output_swing_deg);
        }
        if b.from.is_some() {
            if b.usable.is_empty() {
                let _ = writeln!(
                    s,
                    "    no usable arc: min(mu, 180 - mu) stays below {} deg",
                    crate::input::short(self.usable_quality_deg)
                );
            }
            for t in &b.usable {
                let _ = writeln!(
                    s,
                    "    usable arc (min(mu, 180 - mu) >= {} deg): crank {:.3} to {:.3} deg; {}",
                    crate::input::short(self.usable_quality_deg),
                    t.from_crank_deg.unwrap_or(f64::NAN),
                    t.to_crank_deg.unwrap_or(f64::NAN),
                    extremes_text(t)
                );
            }
        }
    }
}

/// The toggle of a [`ToggleRecord::kind`] in words.
fn toggle_words(kind: &str) -> String {
    let kind = if kind == "extended" {
        ToggleKind::Extended
    } else {
        ToggleKind::Folded
    };
    format!("toggle: {}", toggle_name(kind))
}

/// One line of transmission extremes.
fn extremes_text(t: &TransmissionRecord) -> String {
    format!(
        "mu min {:.3} deg at crank {:.3} deg, max {:.3} deg at crank {:.3} deg; worst min(mu, 180 - mu) {:.3} deg{}, best {:.3} deg at crank {:.3} deg",
        t.min_deg,
        t.min_at_crank_deg,
        t.max_deg,
        t.max_at_crank_deg,
        t.worst_quality_deg,
        if t.worst_quality_deg < USABLE_TRANSMISSION_DEG {
            " (below the 40 deg of common practice)"
        } else {
            ""
        },
        t.best_quality_deg,
        t.best_at_crank_deg
    )
}
