//! The report's files in a results folder: `report.html` and, per ranked design, the CAD
//! drawing `design-N.svg` and the motion table `design-N-curve.csv` ([`write_report`]); and
//! reading a folder written by `synth` back ([`read_results`]) so that the report can be
//! redrawn without searching again.

use std::path::{Path, PathBuf};

use super::export::{cad_svg, csv_curve};
use super::html::render_studies;
use super::study::study_all;
use crate::design::{parse_designs, Design};
use crate::fsutil::write_atomic;
use crate::input::InputError;
use crate::synthesis::output::{Summary, DESIGNS_FILE, SUMMARY_FILE};

/// File name of the report page.
pub const REPORT_FILE: &str = "report.html";

/// File name of the CAD drawing of the design ranked `rank`.
pub fn cad_file(rank: usize) -> String {
    format!("design-{rank}.svg")
}

/// File name of the motion table of the design ranked `rank`.
pub fn curve_file(rank: usize) -> String {
    format!("design-{rank}-curve.csv")
}

/// Why a report could not be read, drawn or written.
#[derive(Debug, thiserror::Error)]
pub enum ReportError {
    /// A results file is not there.
    #[error("{path}: not found; run `crankwright synth --out {dir}` first", dir = .path.parent().unwrap_or(Path::new(".")).display())]
    Missing {
        /// The file looked for.
        path: PathBuf,
    },
    /// A file could not be read or written.
    #[error("{path}: {source}")]
    Io {
        /// The file.
        path: PathBuf,
        /// The cause.
        #[source]
        source: std::io::Error,
    },
    /// `summary.json` is not a summary written by `synth`.
    #[error("{path}: not a synthesis summary: {source}")]
    Summary {
        /// The file.
        path: PathBuf,
        /// The cause.
        #[source]
        source: serde_json::Error,
    },
    /// `designs.yaml` is not a list of valid designs.
    #[error(transparent)]
    Designs(#[from] InputError),
    /// The summary and the designs do not describe the same run.
    #[error("the summary lists {summary} design(s) but the designs file holds {designs}")]
    Count {
        /// Designs in the summary.
        summary: usize,
        /// Designs given.
        designs: usize,
    },
    /// A design differs between the summary and the designs file.
    #[error("design {rank}: the summary and the designs file disagree on {field}")]
    Mismatch {
        /// Rank of the design.
        rank: usize,
        /// The first field that differs.
        field: &'static str,
    },
}

fn read(path: &Path) -> Result<String, ReportError> {
    std::fs::read_to_string(path).map_err(|source| {
        if source.kind() == std::io::ErrorKind::NotFound {
            ReportError::Missing {
                path: path.to_path_buf(),
            }
        } else {
            ReportError::Io {
                path: path.to_path_buf(),
                source,
            }
        }
    })
}

/// Reads `summary.json` and `designs.yaml` from a folder written by `synth`.
///
/// # Errors
/// [`ReportError::Missing`] for a file that is not there, [`ReportError::Summary`] or
/// [`ReportError::Designs`] for one that does not parse, and [`ReportError::Count`] or
/// [`ReportError::Mismatch`] when the two do not belong together.
pub fn read_results(dir: &Path) -> Result<(Summary, Vec<Design>), ReportError> {
    let path = dir.join(SUMMARY_FILE);
    let summary: Summary = serde_json::from_str(&read(&path)?)
        .map_err(|source| ReportError::Summary { path, source })?;
    let path = dir.join(DESIGNS_FILE);
    let text = read(&path)?;
    // A run that kept no design writes an empty list, which is not a design file.
    let designs = if summary.designs.is_empty() {
        Vec::new()
    } else {
        parse_designs(&path, &text)?
    };
    check_pairing(&summary, &designs)?;
    Ok((summary, designs))
}

/// Checks that `designs` are the designs of `summary`, in rank order.
pub(crate) fn check_pairing(summary: &Summary, designs: &[Design]) -> Result<(), ReportError> {
    if summary.designs.len() != designs.len() {
        return Err(ReportError::Count {
            summary: summary.designs.len(),
            designs: designs.len(),
        });
    }
    let close = |a: f64, b: f64, size: f64| (a - b).abs() <= 1e-9 * size.max(1e-300);
    for (s, d) in summary.designs.iter().zip(designs) {
        let l = &d.linkage;
        let f = &s.linkage;
        let size = l.size();
        let (o2, o4, cp) = (l.input_pivot(), l.output_pivot(), l.coupler_point());
        let checks: [(&'static str, bool); 6] = [
            (
                "the input pivot",
                close(o2.x, f.input_pivot[0], size) && close(o2.y, f.input_pivot[1], size),
            ),
            (
                "the output pivot",
                close(o4.x, f.output_pivot[0], size) && close(o4.y, f.output_pivot[1], size),
            ),
            ("the input link", close(l.input_link(), f.input_link, size)),
            ("the coupler", close(l.coupler(), f.coupler, size)),
            (
                "the output link",
                close(l.output_link(), f.output_link, size),
            ),
            (
                "the coupler point",
                close(cp.p, f.coupler_point[0], size) && close(cp.q, f.coupler_point[1], size),
            ),
        ];
        if let Some((field, _)) = checks.iter().find(|(_, ok)| !ok) {
            return Err(ReportError::Mismatch {
                rank: s.rank,
                field,
            });
        }
        if l.assembly() != f.assembly {
            return Err(ReportError::Mismatch {
                rank: s.rank,
                field: "the assembly",
            });
        }
    }
    Ok(())
}

/// Writes `report.html` and, for every ranked design, `design-N.svg` (the linkage at its
/// first target, 1 SVG user unit = 1 scenario unit, see [`cad_svg`]) and `design-N-curve.csv`
/// (its whole motion, a full turn or toggle to toggle, every
/// [`MOTION_STEP_DEG`](super::MOTION_STEP_DEG) of crank, see [`csv_curve`]) into `dir`, each
/// file atomically. `N` is the rank.
///
/// # Errors
/// [`ReportError::Count`] or [`ReportError::Mismatch`] when `designs` are not those of
/// `summary`; [`ReportError::Io`] when a file cannot be written.
pub fn write_report(dir: &Path, summary: &Summary, designs: &[Design]) -> Result<(), ReportError> {
    check_pairing(summary, designs)?;
    let studies = study_all(&summary.designs, designs);
    let write = |name: &str, text: &str| {
        let path = dir.join(name);
        write_atomic(&path, text.as_bytes()).map_err(|source| ReportError::Io { path, source })
    };
    for ((s, d), study) in summary.designs.iter().zip(designs).zip(&studies) {
        if let Some(pose) = study.cad_pose() {
            write(&cad_file(s.rank), &cad_svg(&d.linkage, &pose, &d.units))?;
        }
        write(
            &curve_file(s.rank),
            &csv_curve(&d.linkage, &study.motion, &d.units),
        )?;
    }
    write(REPORT_FILE, &render_studies(summary, designs, &studies))?;
    remove_stale_exports(dir, summary)
}

/// Removes `design-N.svg` and `design-N-curve.csv` files in `dir` whose `N` is no rank of
/// `summary` (left by an earlier run into the same folder), so that the folder holds one run.
///
/// # Errors
/// [`ReportError::Io`] when the folder cannot be read or a file removed.
fn remove_stale_exports(dir: &Path, summary: &Summary) -> Result<(), ReportError> {
    let io = |path: &Path| {
        let path = path.to_path_buf();
        move |source| ReportError::Io { path, source }
    };
    let ranks: std::collections::BTreeSet<usize> = summary.designs.iter().map(|d| d.rank).collect();
    for entry in std::fs::read_dir(dir).map_err(io(dir))? {
        let path = entry.map_err(io(dir))?.path();
        let Some(name) = path.file_name().and_then(|n| n.to_str()) else {
            continue;
        };
        let rank = name
            .strip_prefix("design-")
            .and_then(|r| {
                r.strip_suffix(".svg")
                    .or_else(|| r.strip_suffix("-curve.csv"))
            })
            .and_then(|r| r.parse::<usize>().ok());
        if let Some(rank) = rank {
            if !ranks.contains(&rank) && (name == cad_file(rank) || name == curve_file(rank)) {
                std::fs::remove_file(&path).map_err(io(&path))?;
            }
        }
    }
    Ok(())
}
