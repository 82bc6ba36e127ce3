//! Reports for people and programs: the `check` summary, the `sweep` table, the figures and
//! exports of a design (SVG and CSV text), and the design report of a synthesis run.
//!
//! Figures share one visual language ([`style`]): to-scale linkage drawings
//! ([`draw::linkage_figure`], [`draw::motion_figure`]), plots against the crank angle or the
//! task's input ([`plots`]), an SMIL animation ([`animate::animation_svg`]) and the CAD/CSV
//! exports ([`export`]). [`curves`] turns a sweep into the data they draw. The design report
//! of a synthesis run puts them together in one HTML page ([`html::render_report`]) and writes
//! it with the exports into a results folder ([`files::write_report`]).
//!
//! ```
//! use crankwright::report::{curve_branches, linkage_figure, poses_at_cranks};
//! use crankwright::{sweep, Assembly, CouplerPoint, FourBar, SweepOptions};
//! use nalgebra::Point2;
//!
//! let l = FourBar::new(
//!     Point2::new(0.0, 0.0),
//!     Point2::new(80.0, 0.0),
//!     25.0,
//!     70.0,
//!     55.0,
//!     CouplerPoint { p: 30.0, q: 15.0 },
//!     Assembly::Open,
//! )?;
//! let curve = curve_branches(&l, &sweep(&l, 2f64.to_radians(), &SweepOptions::default()));
//! let poses = poses_at_cranks(&l, &[0.0, 120.0]).expect("a crank-rocker assembles");
//! let svg = linkage_figure(&l, &poses, &curve, &[], &[], "mm", (640, 480));
//! assert!(svg.starts_with("<svg"));
//! assert_eq!(svg.matches(r#"class="linkage-pose""#).count(), 2);
//! # Ok::<(), crankwright::LinkageError>(())
//! ```

pub mod animate;
pub mod check;
pub mod colour;
pub mod curves;
pub mod draw;
pub mod dxf;
pub mod export;
pub mod files;
mod frame;
pub mod html;
mod legend;
pub mod palette;
pub mod plots;
mod study;
pub mod style;
#[cfg(test)]
mod svg_test;
pub mod table;

pub use animate::animation_svg;
pub use curves::{angle_branches, curve_branches, motion_poses, poses_at_cranks};
pub use draw::{footprint, linkage_figure, motion_closeup, motion_figure, FramePose};
pub use export::{cad_svg, csv_curve};
pub use files::{read_results, write_report, ReportError, REPORT_FILE};
pub use html::render_report;
pub use plots::{angle_plot, angle_plot_over, error_plot, function_plot, AngleSample};
pub use study::{FUNCTION_SAMPLES, MOTION_STEP_DEG};

/// Radians to degrees, rounded to 1e-9 degree so that files do not carry float noise.
pub fn deg(rad: f64) -> f64 {
    round9(rad.to_degrees())
}

/// A number rounded to 1e-9 (so that files do not carry float noise); huge or non-finite
/// values unchanged, and no negative zero.
pub fn round9(v: f64) -> f64 {
    if v.is_finite() && v.abs() < 1e12 {
        let r = (v * 1e9).round() / 1e9;
        if r == 0.0 {
            0.0
        } else {
            r
        }
    } else {
        v
    }
}

/// An angle in degrees wrapped into `[0, 360)`.
pub fn deg_wrapped(rad: f64) -> f64 {
    let d = deg(rad).rem_euclid(360.0);
    if d >= 360.0 - 1e-9 {
        0.0
    } else {
        d
    }
}

/// A short readable summary of a synthesis run: the run, rejections and the ranked designs.
pub fn summary_text(s: &crate::synthesis::output::Summary) -> String {
    use std::fmt::Write as _;
    let mut t = String::new();
    let _ = writeln!(
        t,
        "{} ({} generation): {} of {} starts in {:.1} s, {} evaluations{}",
        s.name,
        s.task,
        s.starts_run,
        s.starts,
        s.seconds,
        s.evaluations,
        match &s.stop_reason {
            Some(r) => format!(", stopped early ({r})"),
            None => String::new(),
        }
    );
    if !s.rejected.is_empty() {
        let parts: Vec<String> = s.rejected.iter().map(|(k, v)| format!("{k} {v}")).collect();
        let _ = writeln!(t, "rejected: {}", parts.join(", "));
    }
    if s.designs.is_empty() {
        let _ = writeln!(t, "no design met the requirements");
    }
    for d in &s.designs {
        let m = |k: &str| d.measures.get(k).and_then(serde_json::Value::as_f64);
        let mut err = match (m("sum_squared_error"), m("rms_error"), m("max_error")) {
            (Some(a), Some(b), Some(c)) => format!("sum sq {a:.4e}, rms {b:.4e}, max {c:.4e}"),
            (None, Some(b), Some(c)) => {
                format!("output angle error rms {b:.4} deg, max {c:.4} deg")
            }
            _ => String::new(),
        };
        if let Some(a) = m("max_angle_error") {
            err.push_str(&format!(", max angle error {a:.4} deg"));
        }
        if let Some(p) = m("precision_error") {
            err.push_str(&format!(", at precision points {p:.2e} deg"));
        }
        let _ = writeln!(
            t,
            "#{:<2} {err}; {}, min transmission {:.1} deg, link ratio {:.2}",
            d.rank, d.grashof, d.min_transmission, d.length_ratio
        );
    }
    let _ = writeln!(t, "note: {}", crate::SAFETY_NOTE);
    t
}
