//! What `synth` writes: `designs.yaml` (the ranked designs as design files) and
//! `summary.json` (the run and every design's measures).

use std::path::Path;

use serde::{Deserialize, Serialize};

use super::{Outcome, StopReason};
use crate::design::{designs_to_yaml, Design, DesignFile};
use crate::fsutil::write_atomic;
use crate::report::round9;
use crate::scenario::{Scenario, ScenarioFile};
use crate::SAFETY_NOTE;

/// File name of the ranked designs.
pub const DESIGNS_FILE: &str = "designs.yaml";
/// File name of the run summary.
pub const SUMMARY_FILE: &str = "summary.json";

/// One design in `summary.json`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DesignSummary {
    /// 1-based rank.
    pub rank: usize,
    /// The design-file fields.
    pub linkage: DesignFile,
    /// Crank angles at the targets, degrees from the ground line, in running order.
    pub crank_angles: Vec<f64>,
    /// Grashof class.
    pub grashof: String,
    /// Worst `min(mu, 180 - mu)` over the working motion, degrees.
    pub min_transmission: f64,
    /// Longest over shortest link.
    pub length_ratio: f64,
    /// Coupler point at each target as reached (user units), for reports.
    pub reached: Vec<[f64; 2]>,
    /// Task-specific measures (e.g. `sum_squared_error`, `rms_error`, `max_error`).
    #[serde(flatten)]
    pub measures: serde_json::Map<String, serde_json::Value>,
}

/// `summary.json`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Summary {
    /// `path`, `function` or `motion`.
    pub task: String,
    /// Scenario name.
    pub name: String,
    /// Length unit label.
    pub units: String,
    /// Seed used.
    pub seed: u64,
    /// Starts requested.
    pub starts: usize,
    /// Starts run (fewer when stopped early).
    pub starts_run: usize,
    /// Wall-clock seconds of the search.
    pub seconds: f64,
    /// Residual evaluations.
    pub evaluations: u64,
    /// Whether the search ended early (time limit or Ctrl-C).
    pub interrupted: bool,
    /// `time-limit` or `interrupted` when it ended early.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub stop_reason: Option<String>,
    /// Candidates accepted by verification.
    pub accepted: usize,
    /// Rejected candidates by reason.
    pub rejected: std::collections::BTreeMap<String, usize>,
    /// Ranked designs.
    pub designs: Vec<DesignSummary>,
    /// The scenario as read, so that reports can be redrawn from this file alone.
    pub scenario: ScenarioFile,
    /// Kinematics-only caution.
    pub caution: String,
}

impl Summary {
    /// Gathers the summary of `outcome` for `scenario`.
    pub fn new(scenario: &Scenario, outcome: &Outcome, seed: u64, starts: usize) -> Self {
        let designs = outcome
            .designs
            .iter()
            .map(|r| {
                let v = &r.design;
                DesignSummary {
                    rank: r.rank,
                    linkage: DesignFile::from(&design_of(scenario, r.rank, &v.linkage)),
                    crank_angles: crank_degrees(&v.crank_angles),
                    grashof: v.grashof.name().into(),
                    min_transmission: round9(v.min_transmission.to_degrees()),
                    length_ratio: v.linkage.length_ratio(),
                    reached: v.reached.iter().map(|p| [p.x, p.y]).collect(),
                    measures: v.measures.clone(),
                }
            })
            .collect();
        Summary {
            task: scenario.task.kind().into(),
            name: scenario.name.clone(),
            units: scenario.units.clone(),
            seed,
            starts,
            starts_run: outcome.starts_run,
            seconds: outcome.seconds,
            evaluations: outcome.evaluations,
            interrupted: outcome.stopped.is_some(),
            stop_reason: outcome.stopped.map(|s| match s {
                StopReason::TimeLimit => "time-limit".into(),
                StopReason::Interrupted => "interrupted".into(),
            }),
            accepted: outcome.accepted,
            rejected: outcome
                .rejected
                .iter()
                .map(|(k, v)| ((*k).to_string(), *v))
                .collect(),
            designs,
            scenario: scenario.raw.clone(),
            caution: SAFETY_NOTE.into(),
        }
    }
}

/// Crank angles (radians, unwrapped in running order) as degrees, shifted by whole turns so
/// that the first lies in `[0, 360)`; the later ones keep their running order.
pub fn crank_degrees(angles: &[f64]) -> Vec<f64> {
    let Some(first) = angles.first() else {
        return Vec::new();
    };
    let shift = (first.to_degrees() / 360.0).floor() * 360.0;
    angles
        .iter()
        .map(|a| round9(a.to_degrees() - shift))
        .collect()
}

/// The design file of a ranked linkage, named after the scenario and rank.
pub fn design_of(scenario: &Scenario, rank: usize, linkage: &crate::FourBar) -> Design {
    Design {
        name: Some(format!("{} #{rank}", scenario.name)),
        units: scenario.units.clone(),
        linkage: *linkage,
    }
}

/// Writes `designs.yaml` and `summary.json` into `dir` (atomically, each).
///
/// # Errors
/// I/O errors of writing either file.
pub fn write_results(
    dir: &Path,
    scenario: &Scenario,
    outcome: &Outcome,
    summary: &Summary,
) -> std::io::Result<()> {
    let designs: Vec<Design> = outcome
        .designs
        .iter()
        .map(|r| design_of(scenario, r.rank, &r.design.linkage))
        .collect();
    let mut yaml = format!(
        "# Ranked designs of \"{}\" written by crankwright; each entry is a design file\n# (use `crankwright check designs.yaml --index N`). {}\n",
        scenario.name, SAFETY_NOTE
    );
    if designs.is_empty() {
        yaml.push_str("[]\n");
    } else {
        yaml.push_str(&designs_to_yaml(&designs));
    }
    write_atomic(&dir.join(DESIGNS_FILE), yaml.as_bytes())?;
    let json = serde_json::to_string_pretty(summary).expect("plain data always serialises");
    write_atomic(&dir.join(SUMMARY_FILE), json.as_bytes())
}
