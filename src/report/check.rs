//! The `check` summary of a design: a serialisable record and its readable text.

use std::fmt::Write as _;

use serde::Serialize;

use super::{deg, deg_wrapped};
use crate::design::{Design, DesignFile};
use crate::kinematics::analysis::{analyse, Analysis, AnalysisOptions};
use crate::kinematics::range::{InputRange, Toggle, ToggleKind};
use crate::SAFETY_NOTE;

/// A toggle position in a report: crank angle (global degrees) and what is in line.
#[derive(Debug, Clone, Serialize)]
pub struct ToggleRecord {
    /// Crank angle `theta2`, degrees counter-clockwise from +x, in `[0, 360)`.
    pub theta2: f64,
    /// `extended` (coupler and output stretched in line) or `folded`.
    pub kind: &'static str,
}

/// One branch of the design's assembly in a report.
#[derive(Debug, Clone, Serialize)]
pub struct BranchRecord {
    /// Toggle ending the crank's clockwise motion; absent for a full turn.
    pub from: Option<ToggleRecord>,
    /// Toggle ending the crank's counter-clockwise motion; absent for a full turn.
    pub to: Option<ToggleRecord>,
    /// Crank rotation available on the branch, degrees (360 for a full turn).
    pub crank_travel: f64,
    /// Smallest output angle `theta4` reached, degrees in `[0, 360)`.
    pub output_min: f64,
    /// Largest output angle `theta4` reached, degrees: `output_min` plus the angle the
    /// output turns through, so it may exceed 360.
    pub output_max: f64,
    /// Output swing, degrees (360 when the output turns fully).
    pub output_swing: f64,
    /// Whether the output link turns fully.
    pub output_turns_fully: bool,
}

/// Transmission angle extremes over the motion, degrees, with the crank angles (global).
#[derive(Debug, Clone, Serialize)]
pub struct TransmissionRecord {
    /// Smallest transmission angle `mu`.
    pub min: f64,
    /// Crank angle of the smallest.
    pub min_at: f64,
    /// Largest transmission angle.
    pub max: f64,
    /// Crank angle of the largest.
    pub max_at: f64,
    /// Worst quality `min(mu, 180 - mu)` over the motion.
    pub worst: f64,
}

/// Time ratio of a crank-rocker.
#[derive(Debug, Clone, Serialize)]
pub struct TimeRatioRecord {
    /// Crank rotation (degrees) while the output angle increases.
    pub forward_crank: f64,
    /// Crank rotation (degrees) while it decreases.
    pub return_crank: f64,
    /// Forward over return time at constant crank speed.
    pub ratio: f64,
}

/// Everything `check` tells about a design.
#[derive(Debug, Clone, Serialize)]
pub struct CheckReport {
    /// The design as in its file.
    pub design: DesignFile,
    /// Ground link length `r1`.
    pub ground_link: f64,
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
    /// Branches of the design's assembly.
    pub branches: Vec<BranchRecord>,
    /// Transmission angle extremes; absent when it never assembles.
    pub transmission: Option<TransmissionRecord>,
    /// Time ratio, for a crank that turns fully and an output that rocks.
    pub time_ratio: Option<TimeRatioRecord>,
    /// Kinematics-only caution.
    pub caution: &'static str,
}

fn toggle(t: &Toggle, theta1: f64) -> ToggleRecord {
    ToggleRecord {
        theta2: deg_wrapped(t.phi + theta1),
        kind: match t.kind {
            ToggleKind::Extended => "extended",
            ToggleKind::Folded => "folded",
        },
    }
}

impl CheckReport {
    /// Analyses `design` and gathers the report.
    pub fn new(design: &Design) -> Self {
        Self::from_analysis(
            design,
            &analyse(&design.linkage, &AnalysisOptions::default()),
        )
    }

    /// Gathers the report from an analysis already made.
    pub fn from_analysis(design: &Design, a: &Analysis) -> Self {
        let l = &design.linkage;
        let t1 = l.ground_angle();
        let branches = a
            .branches
            .iter()
            .map(|b| BranchRecord {
                from: b.crank_range.map(|r| toggle(&r.0, t1)),
                to: b.crank_range.map(|r| toggle(&r.1, t1)),
                crank_travel: b.crank_range.map_or(360.0, |r| deg(r.1.phi - r.0.phi)),
                output_min: deg_wrapped(b.theta4_range.0),
                output_max: deg_wrapped(b.theta4_range.0)
                    + deg(b.theta4_range.1 - b.theta4_range.0),
                output_swing: if b.output_turns_fully {
                    360.0
                } else {
                    deg(b.theta4_range.1 - b.theta4_range.0)
                },
                output_turns_fully: b.output_turns_fully,
            })
            .collect();
        CheckReport {
            design: DesignFile::from(design),
            ground_link: l.ground(),
            grashof: a.grashof.name(),
            change_point: a.grashof == crate::GrashofClass::ChangePoint,
            length_ratio: l.length_ratio(),
            crank_turns_fully: a.range == InputRange::FullTurn,
            assembles: a.range != InputRange::None,
            branches,
            transmission: a.transmission.map(|t| TransmissionRecord {
                min: deg(t.min.0),
                min_at: deg_wrapped(t.min.1 + t1),
                max: deg(t.max.0),
                max_at: deg_wrapped(t.max.1 + t1),
                worst: deg(t.worst_quality.0),
            }),
            time_ratio: a.time_ratio.map(|t| TimeRatioRecord {
                forward_crank: deg(t.forward),
                return_crank: deg(t.back),
                ratio: t.ratio(),
            }),
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
            match (&b.from, &b.to) {
                (Some(f), Some(t)) => {
                    let _ = writeln!(
                        s,
                        "  branch {}: crank from {:.3} deg ({}) to {:.3} deg ({}), travel {:.3} deg",
                        i + 1,
                        f.theta2,
                        f.kind,
                        t.theta2,
                        t.kind,
                        b.crank_travel
                    );
                }
                _ => {
                    let _ = writeln!(s, "  branch {}: full turn of the crank", i + 1);
                }
            }
            if b.output_turns_fully {
                let _ = writeln!(s, "    output turns fully");
            } else {
                let _ = writeln!(
                    s,
                    "    output from {:.3} to {:.3} deg, swing {:.3} deg",
                    b.output_min, b.output_max, b.output_swing
                );
            }
        }
        if let Some(t) = &self.transmission {
            let _ = writeln!(
                s,
                "transmission angle: min {:.3} deg at crank {:.3} deg, max {:.3} deg at crank {:.3} deg; worst min(mu, 180 - mu) = {:.3} deg{}",
                t.min,
                t.min_at,
                t.max,
                t.max_at,
                t.worst,
                if t.worst < 40.0 {
                    " (below the 40 deg of common practice)"
                } else {
                    ""
                }
            );
        }
        if let Some(t) = &self.time_ratio {
            let _ = writeln!(
                s,
                "time ratio: {:.4} (crank turns {:.3} deg while the output angle rises, {:.3} deg while it falls)",
                t.ratio, t.forward_crank, t.return_crank
            );
        }
        let _ = writeln!(s, "note: {}", self.caution);
        s
    }
}
