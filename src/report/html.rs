//! The design report: one self-contained HTML page of a synthesis run ([`render_report`]).
//!
//! Everything is inline: the figures are SVG (frames by plotters, layers by
//! [`draw`](super::draw) and [`plots`](super::plots)), the styles one `<style>` element;
//! there are no scripts and no external resources, so the page opens from disk in any
//! browser and prints on A4 (one design per page group, figures at most 180 mm wide, the
//! animation left out). The markup is well-formed XML as well as HTML, so programs can read
//! it with an XML parser.
//!
//! Layout, top to bottom: the run (scenario, task, targets, limits, search and rejections),
//! the caution, the ranking table, a key to the figures, the first
//! [`FULL_DESIGNS`] designs in full, and the dimensions of every design.

use std::fmt::Write as _;

use nalgebra::Point2;

use super::animate::animation_svg;
use super::draw::{
    ground_symbol, linkage_figure, motion_closeup, motion_figure, pivot_circle, triad, FramePose,
    GROUND_DASH,
};
use super::files::{cad_file, check_pairing, curve_file, ReportError};
use super::legend::{swatch_icon, Swatch};
use super::plots::{
    angle_plot_over, error_plot, function_plot, AngleMarks, MuScope, MU_BAND_HIGH, MU_BAND_LOW,
    RANGE_END_DASH,
};
use super::study::{
    desired_function, drawn_cranks, measure, study_all, FunctionView, Study, MOTION_STEP_DEG,
};
use super::style::{self, esc, LINK_WIDTH};
use crate::design::Design;
use crate::kinematics::position::Pose;
use crate::linkage::GrashofClass;
use crate::scenario::{CrankRequirement, FunctionFile, ScenarioFile, TimingFile};
use crate::synthesis::output::{DesignSummary, Summary};
use crate::SAFETY_NOTE;

/// Designs shown in full (figures and tables); the others appear in the tables only.
pub const FULL_DESIGNS: usize = 3;
/// Size of the main linkage drawing, pixels.
const LINKAGE_SIZE: (u32, u32) = (760, 560);
/// Size of the plots and the smaller drawings, pixels.
const PLOT_SIZE: (u32, u32) = (560, 440);
/// Size of the error plot of function generation, pixels.
const ERROR_PLOT_SIZE: (u32, u32) = (560, 320);
/// Seconds per cycle of the animation.
const ANIMATION_SECONDS: f64 = 5.0;
/// Largest number of frames in an animation (the motion is thinned to it).
const ANIMATION_FRAMES: usize = 180;
/// Significant digits of errors and lengths in tables.
const DIGITS: usize = 4;
/// Significant digits of design dimensions (a drawing someone may build from).
const DIM_DIGITS: usize = 6;
/// Transmission quality below which a table cell is flagged, degrees (common practice,
/// no source).
const MU_GOOD: f64 = 40.0;

/// The page's styles. Screen: a centred column of panels; print: A4, single column.
const CSS: &str = r#"
:root { --ink: #243240; --muted: #5f6c78; --rule: #dde1e4; --paper: #fdfcf9;
  --page: #eceae4; --accent: #2c6e91; --warn: #b06a1f; --warn-bg: #fbf1df; --bad: #c2413b; }
* { box-sizing: border-box; }
html { background: var(--page); }
body { margin: 0 auto; max-width: 1180px; padding: 24px 22px 40px; color: var(--ink);
  font-family: sans-serif; font-size: 14px; line-height: 1.45; }
h1, h2, h3 { line-height: 1.2; margin: 0; }
h2 { font-size: 19px; }
h3 { font-size: 13px; text-transform: uppercase; letter-spacing: 0.06em; color: var(--muted);
  margin: 0 0 8px; }
a { color: var(--accent); }
.masthead { background: var(--paper); border: 1px solid var(--rule); border-top: 6px solid var(--accent);
  padding: 16px 22px 14px; }
.kicker { font-size: 11px; letter-spacing: 0.1em; text-transform: uppercase; color: var(--muted); }
.masthead h1 { font-size: 28px; margin: 4px 0 6px; }
.masthead .sub { margin: 0; color: var(--muted); }
.caution { margin: 14px 0; padding: 12px 18px 12px 16px; background: var(--warn-bg);
  border: 1px solid #e6c99a; border-left: 8px solid var(--warn); font-size: 15px; }
.caution strong { display: block; font-size: 12px; letter-spacing: 0.1em; text-transform: uppercase;
  color: var(--warn); margin-bottom: 2px; }
.stopped { margin: 14px 0; padding: 10px 16px; border: 2px dashed var(--bad); color: var(--bad);
  background: var(--paper); font-weight: bold; }
.panel { background: var(--paper); border: 1px solid var(--rule); padding: 14px 18px; margin-top: 14px; }
.overview { display: grid; grid-template-columns: minmax(0, 1.25fr) minmax(0, 1fr) minmax(0, 1fr); gap: 14px; }
.overview .panel { margin-top: 0; }
.section-title { margin: 26px 0 10px; display: flex; align-items: baseline; gap: 12px; }
.section-title .sub { color: var(--muted); font-size: 13px; }
table { border-collapse: collapse; font-variant-numeric: tabular-nums; width: 100%; }
caption { caption-side: bottom; text-align: left; font-size: 12px; color: var(--muted); padding-top: 6px; }
th { text-align: left; font-size: 12px; font-weight: 600; color: var(--muted); padding: 4px 8px;
  border-bottom: 1.5px solid var(--ink); vertical-align: bottom; }
td { padding: 4px 8px; border-bottom: 1px solid var(--rule); vertical-align: top; }
th.num, td.num { text-align: right; white-space: nowrap; }
td.key { color: var(--muted); white-space: nowrap; }
td.class { white-space: nowrap; }
td.warn { color: var(--warn); font-weight: bold; }
table.compact td, table.compact th { padding: 3px 6px; }
.ranking tr.full td { background: #f3f7f9; }
.ranking td.rank a { font-weight: bold; text-decoration: none; }
.ranking td.rank { font-weight: bold; }
.key-list { display: grid; grid-template-columns: repeat(auto-fill, minmax(250px, 1fr)); gap: 4px 18px;
  margin: 0; padding: 0; list-style: none; font-size: 13px; }
.key-list li { display: flex; align-items: center; gap: 8px; }
.key-list svg { flex: none; }
section.design { margin-top: 34px; }
.design-head { display: flex; align-items: center; gap: 14px; background: var(--ink); color: #fff;
  padding: 10px 18px; }
.design-head .badge { font-size: 30px; font-weight: bold; line-height: 1; }
.design-head .sub { margin: 2px 0 0; color: #c9d3db; font-size: 13px; }
.stats { display: grid; grid-template-columns: repeat(auto-fit, minmax(130px, 1fr)); gap: 0;
  background: var(--paper); border: 1px solid var(--rule); border-top: none; }
.stat { padding: 8px 14px; border-right: 1px solid var(--rule); }
.stat:last-child { border-right: none; }
.stat .label { font-size: 11px; color: var(--muted); text-transform: uppercase; letter-spacing: 0.05em; }
.stat .value { font-size: 19px; font-weight: bold; font-variant-numeric: tabular-nums; white-space: nowrap; }
.stat .value small { font-size: 12px; font-weight: normal; color: var(--muted); }
.stat.warn .value { color: var(--warn); }
.sheet { display: grid; grid-template-columns: minmax(0, 2fr) minmax(0, 1fr); gap: 14px; margin-top: 14px; }
.sheet .panel { margin-top: 0; }
.card .block + .block { margin-top: 18px; }
.pair { display: grid; grid-template-columns: minmax(0, 1fr) minmax(0, 1fr); gap: 14px; margin-top: 14px; }
figure { margin: 0; background: var(--paper); border: 1px solid var(--rule); padding: 8px; }
figure svg { display: block; width: 100%; height: auto; }
figcaption { font-size: 12px; color: var(--muted); padding: 6px 4px 0; }
figcaption b { color: var(--ink); }
.note { font-size: 13px; color: var(--muted); }
.files { font-size: 13px; margin: 10px 0 0; }
footer { margin-top: 30px; font-size: 12px; color: var(--muted); border-top: 1px solid var(--rule); padding-top: 10px; }
@page { size: A4; margin: 14mm 15mm 14mm 15mm; }
@media print {
  html { background: #fff; }
  body { max-width: none; padding: 0; font-size: 9pt; }
  .masthead { border: none; border-top: 4px solid var(--accent); padding: 8px 0 4px; }
  .masthead h1 { font-size: 20pt; }
  .caution { break-inside: avoid; font-size: 10pt; }
  .panel, figure { border: none; padding: 0; background: #fff; }
  .overview { gap: 6mm; font-size: 8pt; }
  .overview .panel { margin-top: 0; }
  .overview td, .overview th { padding: 2px 4px; }
  .ranking { font-size: 8.5pt; }
  .ranking td, .ranking th { padding: 3px 5px; }
  .panel.figure-key { break-inside: avoid; }
  .key-list { grid-template-columns: 1fr 1fr 1fr; font-size: 8pt; }
  section.design { break-before: page; margin-top: 0; }
  section.appendix { break-before: page; }
  .design-head { padding: 6px 12px; }
  .design-head .badge { font-size: 20pt; }
  .stat { padding: 5px 8px; }
  .stat .value { font-size: 12pt; }
  .sheet, .pair { display: block; margin-top: 0; }
  figure { margin: 5mm auto 0; break-inside: avoid; }
  .sheet figure { max-width: 180mm; }
  .pair figure { max-width: 150mm; }
  .card { display: grid; grid-template-columns: 1fr 1fr; gap: 8mm; margin-top: 4mm; break-inside: avoid; }
  .card .block + .block { margin-top: 0; }
  .design-head, .stat, .ranking tr.full td { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
  .screen-only { display: none; }
  tr { break-inside: avoid; }
  a { color: inherit; text-decoration: none; }
}
"#;

/// `v` with `digits` significant digits: fixed notation for magnitudes in `[1e-3, 1e6)`,
/// scientific (`1.284e-6`) otherwise; an en dash when not finite. Tests read these back.
pub fn sig(v: f64, digits: usize) -> String {
    if !v.is_finite() {
        return "–".into();
    }
    let digits = digits.max(1);
    let a = v.abs();
    if a == 0.0 {
        return "0".into();
    }
    if (1e-3..1e6).contains(&a) {
        let e = a.log10().floor() as i32;
        let decimals = (digits as i32 - 1 - e).max(0) as usize;
        format!("{:.*}", decimals, v + 0.0)
    } else {
        format!("{:.*e}", digits - 1, v)
    }
}

/// A number from an input file as written there (shortest round-trip form, no `-0`).
fn given(v: f64) -> String {
    format!("{}", v + 0.0)
}

/// `(x, y)` with `digits` significant digits each.
fn pair(x: f64, y: f64, digits: usize) -> String {
    format!("({}, {})", sig(x, digits), sig(y, digits))
}

/// An angle in degrees with one decimal.
fn angle(v: f64) -> String {
    if v.is_finite() {
        format!("{:.1}", v + 0.0)
    } else {
        "–".into()
    }
}

/// A table cell with a number, right-aligned; `key` names the summary field it shows.
fn num_cell(key: &str, text: &str, warn: bool) -> String {
    format!(
        r#"<td class="num{}" data-key="{key}">{}</td>"#,
        if warn { " warn" } else { "" },
        esc(text)
    )
}

/// Human name of a task kind.
fn task_title(task: &str) -> &'static str {
    match task {
        "path" => "Path generation",
        "motion" => "Motion generation",
        "function" => "Function generation",
        _ => "Synthesis",
    }
}

/// What a rejection reason of the summary means, in words.
fn rejection_meaning(reason: &str) -> &'static str {
    match reason {
        "degenerate" => "a link collapsed during refinement",
        "not-assembled" => "cannot be assembled at a target, or a target is at a dead point",
        "circuit-defect" => "targets on different circuits",
        "branch-defect" => "a toggle between targets: the drive would have to reverse",
        "order-defect" => "targets reached out of order",
        "crank-not-full-turn" => "the crank cannot turn fully",
        "change-point" => "change point (can fold flat)",
        "transmission-angle" => "transmission angle below the limit",
        "link-length" => "a link outside the length limits",
        "length-ratio" => "longest/shortest link above the limit",
        "pivot-region" => "a fixed pivot outside its region",
        "sweep-failed" => "the position sweep lost the linkage",
        _ => "",
    }
}

/// One error column of the ranking: summary key and heading.
struct ErrorColumn {
    key: &'static str,
    head: String,
    /// Short label for the design's headline figures (`None`: not shown there).
    stat: Option<&'static str>,
    /// Unit shown beside the headline figure.
    unit: String,
}

/// The error columns of a task, in the units of the run.
fn error_columns(task: &str, units: &str) -> Vec<ErrorColumn> {
    let col = |key, head: String, stat, unit: &str| ErrorColumn {
        key,
        head,
        stat,
        unit: unit.to_owned(),
    };
    let u = esc(units);
    if task == "function" {
        return vec![
            col("rms_error", "RMS error (°)".into(), Some("RMS error"), "°"),
            col("max_error", "max error (°)".into(), Some("max error"), "°"),
            col(
                "precision_error",
                "precision-point error (°)".into(),
                Some("precision-point error"),
                "°",
            ),
        ];
    }
    let mut v = vec![
        col("sum_squared_error", format!("Σ error² ({u}²)"), None, ""),
        col(
            "rms_error",
            format!("RMS error ({u})"),
            Some("RMS error"),
            units,
        ),
        col(
            "max_error",
            format!("max error ({u})"),
            Some("max error"),
            units,
        ),
    ];
    if task == "motion" {
        v.push(col(
            "max_angle_error",
            "max angle error (°)".into(),
            Some("max angle error"),
            "°",
        ));
    }
    v
}

/// Target points of a path task, or origins of the poses of a motion task, user units.
fn target_points(s: &ScenarioFile) -> Vec<Point2<f64>> {
    if let Some(p) = &s.task.path {
        return p.points.iter().map(|q| Point2::new(q[0], q[1])).collect();
    }
    target_frames(s)
        .iter()
        .map(|f| Point2::new(f.x, f.y))
        .collect()
}

/// Target poses of a motion task (angle in radians).
fn target_frames(s: &ScenarioFile) -> Vec<FramePose> {
    s.task
        .motion
        .as_ref()
        .map(|m| {
            m.poses
                .iter()
                .filter(|p| p.len() >= 3)
                .map(|p| FramePose {
                    x: p[0],
                    y: p[1],
                    phi: p[2].to_radians(),
                })
                .collect()
        })
        .unwrap_or_default()
}

/// The scope of the run's `min_transmission`: the whole turn when the scenario requires the
/// crank to turn fully, else the working motion (between targets, or over the x range).
fn mu_scope(s: &Summary) -> MuScope {
    if s.scenario.limits.crank.unwrap_or_default() == CrankRequirement::FullTurn {
        MuScope::FullTurn
    } else if s.task == "function" {
        MuScope::XRange
    } else {
        MuScope::BetweenTargets
    }
}

/// Transmission quality below which a value is flagged, degrees: [`MU_GOOD`] or the
/// scenario's limit, whichever is higher.
fn mu_flag(s: &Summary) -> f64 {
    s.scenario
        .limits
        .min_transmission
        .filter(|v| v.is_finite())
        .map_or(MU_GOOD, |v| v.max(MU_GOOD))
}

/// Whether the crank runs counter-clockwise (`Some(true)`) or clockwise from the first
/// target to the last: the sign of the crank-angle progression, for function generation
/// the sign of the input span. `None` when that is unknown.
fn runs_ccw(s: &Summary, d: &DesignSummary) -> Option<bool> {
    let step = match &s.scenario.task.function {
        Some(f) => f.input_span,
        None => match d.crank_angles.as_slice() {
            [first, .., last] => last - first,
            _ => f64::NAN,
        },
    };
    (step.is_finite() && step != 0.0).then_some(step > 0.0)
}

/// The direction of the crank in words (`counter-clockwise`, `clockwise`) and the stretch
/// it is taken over (`from target 1 to target 5`, `from x0 to xf`).
fn direction_text(s: &Summary, d: &DesignSummary) -> Option<(&'static str, String)> {
    let ccw = runs_ccw(s, d)?;
    let span = if s.task == "function" {
        "from x0 to xf".to_owned()
    } else {
        format!("from target 1 to target {}", d.crank_angles.len())
    };
    Some((
        if ccw {
            "counter-clockwise"
        } else {
            "clockwise"
        },
        span,
    ))
}

/// Whether the output link rocks (cannot turn fully): Grashof crank-rocker and
/// double-rocker, and every non-Grashof linkage.
fn output_rocks(l: &crate::FourBar) -> bool {
    matches!(
        l.grashof(),
        GrashofClass::CrankRocker | GrashofClass::DoubleRocker | GrashofClass::TripleRocker
    )
}

/// The whole motion a design's figures cover, in words.
fn whole_motion(st: &Study) -> &'static str {
    if st.full_turn {
        "a full turn of the crank"
    } else {
        "the whole motion (toggle to toggle)"
    }
}

/// The page of `summary` and its `designs` (the same designs, in rank order, as
/// `designs.yaml` holds them).
///
/// # Errors
/// [`ReportError::Count`] or [`ReportError::Mismatch`] when `designs` are not the designs
/// of `summary`.
pub fn render_report(summary: &Summary, designs: &[Design]) -> Result<String, ReportError> {
    check_pairing(summary, designs)?;
    let studies = study_all(&summary.designs, designs);
    Ok(render_studies(summary, designs, &studies))
}

/// The page from designs already studied (one [`Study`] per design).
pub(crate) fn render_studies(summary: &Summary, designs: &[Design], studies: &[Study]) -> String {
    let mut h = String::with_capacity(1 << 20);
    let title = format!("{} — design report", summary.name);
    let _ = writeln!(
        h,
        "<!DOCTYPE html>\n<html lang=\"en\" xmlns=\"http://www.w3.org/1999/xhtml\">\n<head>\n\
         <meta charset=\"utf-8\"/>\n<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"/>\n\
         <meta name=\"generator\" content=\"crankwright {}\"/>\n<title>{}</title>\n<style>{CSS}</style>\n</head>\n<body>",
        env!("CARGO_PKG_VERSION"),
        esc(&title)
    );
    masthead(&mut h, summary);
    let _ = writeln!(
        h,
        "<aside class=\"caution\" role=\"note\"><strong>Caution</strong>{}</aside>",
        esc(SAFETY_NOTE)
    );
    if summary.interrupted {
        let _ = writeln!(
            h,
            "<p class=\"stopped\">Search stopped early ({}) after {} of {} starts: better designs may exist.</p>",
            esc(summary.stop_reason.as_deref().unwrap_or("interrupted")),
            summary.starts_run,
            summary.starts
        );
    }
    overview(&mut h, summary);
    ranking(&mut h, summary, studies);
    let precision_points = summary
        .scenario
        .task
        .function
        .as_ref()
        .is_some_and(|f| f.precision_points.is_some());
    figure_key(&mut h, &summary.task, precision_points);
    for ((s, d), st) in summary
        .designs
        .iter()
        .zip(designs)
        .zip(studies)
        .take(FULL_DESIGNS)
    {
        design_section(&mut h, summary, s, d, st);
    }
    dimensions(&mut h, summary, designs);
    let _ = writeln!(
        h,
        "<footer><p>{} Angles in degrees, counter-clockwise; crank angles are measured from the ground line O2→O4. \
         Lengths in {}. Drawn by crankwright {} from summary.json and designs.yaml.</p></footer>\n</body>\n</html>",
        esc(SAFETY_NOTE),
        esc(&summary.units),
        env!("CARGO_PKG_VERSION")
    );
    h
}

fn masthead(h: &mut String, s: &Summary) {
    let n = s.designs.len();
    let _ = writeln!(
        h,
        "<header class=\"masthead\"><div class=\"kicker\">Four-bar linkage · kinematic design report</div>\
         <h1>{}</h1><p class=\"sub\">{} · {} design{} kept of {} accepted · lengths in {}</p></header>",
        esc(&s.name),
        task_title(&s.task),
        n,
        if n == 1 { "" } else { "s" },
        s.accepted,
        esc(&s.units)
    );
}

/// Task and targets, limits, and the search, side by side.
fn overview(h: &mut String, s: &Summary) {
    h.push_str("<div class=\"overview\">\n<div class=\"panel task\">");
    task_panel(h, s);
    h.push_str("</div>\n<div class=\"panel limits\">");
    limits_panel(h, &s.scenario, &s.units);
    h.push_str("</div>\n<div class=\"panel search\">");
    search_panel(h, s);
    h.push_str("</div>\n</div>\n");
}

fn task_panel(h: &mut String, s: &Summary) {
    let u = esc(&s.units);
    let sc = &s.scenario;
    let _ = write!(h, "<h3>{}</h3>", task_title(&s.task));
    if let Some(p) = &sc.task.path {
        let cranks = p.crank_angles.as_deref().unwrap_or(&[]);
        let timing = match (cranks.is_empty(), p.timing.unwrap_or_default()) {
            (true, _) => "Free timing: the search chooses the crank angles, in order.",
            (false, TimingFile::Absolute) => {
                "Prescribed timing: crank angles from the ground line as given."
            }
            (false, TimingFile::Relative) => {
                "Relative timing: only the differences of the crank angles are prescribed."
            }
        };
        let _ = write!(
            h,
            "<table class=\"targets compact\"><caption>{timing}{}</caption><thead><tr><th class=\"num\">#</th>\
             <th class=\"num\">x ({u})</th><th class=\"num\">y ({u})</th>{}</tr></thead><tbody>",
            thinned_note(p.points.len()),
            if cranks.is_empty() {
                ""
            } else {
                "<th class=\"num\">crank (°)</th>"
            }
        );
        for i in thin_indices(p.points.len(), SHOWN_TARGETS) {
            let q = &p.points[i];
            let _ = write!(
                h,
                "<tr class=\"target-row\"><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td>{}</tr>",
                i + 1,
                given(q[0]),
                given(q[1]),
                cranks
                    .get(i)
                    .map(|c| format!("<td class=\"num\">{}</td>", given(*c)))
                    .unwrap_or_default()
            );
        }
        h.push_str("</tbody></table>");
    } else if let Some(m) = &sc.task.motion {
        let _ = write!(
            h,
            "<table class=\"targets compact\"><caption>Poses of a frame fixed to the coupler, in running order.{}</caption>\
             <thead><tr><th class=\"num\">#</th><th class=\"num\">x ({u})</th><th class=\"num\">y ({u})</th>\
             <th class=\"num\">angle (°)</th></tr></thead><tbody>",
            thinned_note(m.poses.len())
        );
        for i in thin_indices(m.poses.len(), SHOWN_TARGETS) {
            let p = &m.poses[i];
            let cell = |k: usize| p.get(k).map_or_else(|| "–".into(), |v| given(*v));
            let _ = write!(
                h,
                "<tr class=\"target-row\"><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td></tr>",
                i + 1,
                cell(0),
                cell(1),
                cell(2)
            );
        }
        h.push_str("</tbody></table>");
    } else if let Some(f) = &sc.task.function {
        function_task_table(h, f);
    }
}

fn function_task_table(h: &mut String, f: &FunctionFile) {
    let mut rows: Vec<(&str, String)> = Vec::new();
    if let Some(formula) = &f.formula {
        rows.push(("desired function", format!("y = {formula}")));
    }
    if let Some(t) = &f.table {
        rows.push(("desired function", format!("table of {} points", t.len())));
    }
    rows.push(("x range", format!("{} to {}", given(f.x[0]), given(f.x[1]))));
    rows.push((
        "crank turns",
        format!("{}° as x runs over it", given(f.input_span)),
    ));
    rows.push((
        "output turns",
        format!("{}° as y runs over it", given(f.output_span)),
    ));
    let free = || "free".to_owned();
    rows.push((
        "crank at x0",
        f.input_start
            .map_or_else(free, |v| format!("{}° from ground line", given(v))),
    ));
    rows.push((
        "output at x0",
        f.output_start
            .map_or_else(free, |v| format!("{}° from ground line", given(v))),
    ));
    rows.push((
        "precision points",
        f.precision_points.map_or_else(
            || "none (least squares over the range)".into(),
            |n| format!("{n}, Chebyshev spacing"),
        ),
    ));
    key_value_table(h, "function", &rows);
}

fn key_value_table(h: &mut String, class: &str, rows: &[(&str, String)]) {
    let _ = write!(h, "<table class=\"{class} compact\"><tbody>");
    for (k, v) in rows {
        let _ = write!(
            h,
            "<tr><td class=\"key\">{}</td><td>{}</td></tr>",
            esc(k),
            esc(v)
        );
    }
    h.push_str("</tbody></table>");
}

fn limits_panel(h: &mut String, sc: &ScenarioFile, units: &str) {
    h.push_str("<h3>Limits</h3>");
    let l = &sc.limits;
    let u = units;
    let region = |r: &[[f64; 2]; 2]| {
        format!(
            "x {} to {}, y {} to {} {u}",
            given(r[0][0]),
            given(r[1][0]),
            given(r[0][1]),
            given(r[1][1])
        )
    };
    let point = |p: &[f64; 2]| format!("({}, {}) {u}", given(p[0]), given(p[1]));
    let mut rows: Vec<(&str, String)> = Vec::new();
    if let Some([a, b]) = l.link_length {
        rows.push(("link lengths", format!("{} to {} {u}", given(a), given(b))));
    }
    if let Some(r) = &l.pivot_region {
        rows.push(("fixed pivots within", region(r)));
    }
    if let Some(r) = &l.input_pivot_region {
        rows.push(("input pivot O2 within", region(r)));
    }
    if let Some(r) = &l.output_pivot_region {
        rows.push(("output pivot O4 within", region(r)));
    }
    if let Some(p) = &l.input_pivot {
        rows.push(("input pivot O2 at", point(p)));
    }
    if let Some(p) = &l.output_pivot {
        rows.push(("output pivot O4 at", point(p)));
    }
    if let Some(a) = l.ground_angle {
        rows.push(("ground line O2→O4 at", format!("{}°", given(a))));
    }
    if let Some(r) = l.max_length_ratio {
        rows.push(("longest/shortest link", format!("at most {}", given(r))));
    }
    if let Some(m) = l.min_transmission {
        rows.push((
            "transmission angle",
            format!("min(μ, 180° − μ) at least {}°", given(m)),
        ));
    }
    rows.push((
        "crank",
        match l.crank.unwrap_or_default() {
            CrankRequirement::FullTurn => "must turn fully".into(),
            CrankRequirement::Any => "may rock".into(),
        },
    ));
    key_value_table(h, "limits", &rows);
}

fn search_panel(h: &mut String, s: &Summary) {
    h.push_str("<h3>Search</h3>");
    let starts = if s.starts_run == s.starts {
        format!("{}", s.starts)
    } else {
        format!("{} of {}", s.starts_run, s.starts)
    };
    let mut rows: Vec<(&str, String)> = vec![
        ("seed", s.seed.to_string()),
        ("random starts", starts),
        ("run time", format!("{:.1} s", s.seconds)),
        ("evaluations", grouped(s.evaluations)),
        ("designs accepted", s.accepted.to_string()),
    ];
    if s.interrupted {
        rows.push((
            "stopped early",
            s.stop_reason
                .clone()
                .unwrap_or_else(|| "interrupted".into()),
        ));
    }
    key_value_table(h, "run", &rows);
    let total: usize = s.rejected.values().sum();
    if total == 0 {
        h.push_str("<p class=\"note\">No candidate was rejected.</p>");
        return;
    }
    let mut reasons: Vec<(&String, &usize)> = s.rejected.iter().collect();
    reasons.sort_by(|a, b| b.1.cmp(a.1).then(a.0.cmp(b.0)));
    let _ = write!(
        h,
        "<table class=\"rejected compact\"><caption>{} candidates rejected by verification.</caption>\
         <thead><tr><th>rejected because</th><th class=\"num\">count</th></tr></thead><tbody>",
        grouped(total as u64)
    );
    for (reason, count) in reasons {
        let meaning = rejection_meaning(reason);
        let _ = write!(
            h,
            "<tr class=\"rejection\" data-reason=\"{}\"><td>{}</td><td class=\"num\">{count}</td></tr>",
            esc(reason),
            if meaning.is_empty() {
                esc(reason)
            } else {
                esc(meaning)
            }
        );
    }
    h.push_str("</tbody></table>");
}

/// An integer with thousands separated by commas.
fn grouped(n: u64) -> String {
    let digits = n.to_string();
    let mut out = String::new();
    for (i, c) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i) % 3 == 0 {
            out.push(',');
        }
        out.push(c);
    }
    out
}

fn ranking(h: &mut String, s: &Summary, studies: &[Study]) {
    let _ = writeln!(
        h,
        "<div class=\"section-title\"><h2>Ranking</h2><span class=\"sub\">{}</span></div>",
        match s.designs.len() {
            0 => "no design kept".to_owned(),
            n if n <= FULL_DESIGNS => "best first; each in full below".to_owned(),
            _ => format!(
                "best first; the first {FULL_DESIGNS} in full below, all in the dimensions table"
            ),
        }
    );
    if s.designs.is_empty() {
        h.push_str("<div class=\"panel\"><p class=\"none\">No design met the requirements. \
                    The rejection counts above show what stood in the way: relax those limits or search with more starts.</p></div>\n");
        return;
    }
    let mut cols = error_columns(&s.task, &s.units);
    // Only the measures the designs have (a least-squares function design has no
    // precision-point error).
    cols.retain(|c| s.designs.iter().any(|d| measure(d, c.key).is_some()));
    let u = esc(&s.units);
    let scope = mu_scope(s);
    let flag = mu_flag(s);
    // The worst over the full turn as well, when the number is taken over less and some
    // design's crank turns fully.
    let turn_column = scope != MuScope::FullTurn && studies.iter().any(|st| st.full_turn);
    let _ = write!(
        h,
        "<div class=\"panel\"><table class=\"ranking\"><caption>{} Min transmission: the worst min(μ, 180° − μ) {}{}{}; \
         amber below {}° ({}). Footprint: the box holding both fixed pivots and the paths of joints A and B{} \
         over the whole motion (a full turn, or toggle to toggle).</caption>\
         <thead><tr><th class=\"num\">rank</th>",
        match s.task.as_str() {
            "motion" => "Errors: distances from the coupler point (the frame origin) to the target poses, and angles of the \
                         coupler frame to theirs; the ranking weighs both together.",
            "function" if cols.iter().any(|c| c.key == "precision_error") => {
                "Errors: the output angle against the desired output, over the range of x and at the precision points."
            }
            "function" => "Errors: the output angle against the desired output, over the range of x.",
            _ => "Errors: distances from the coupler point to the targets.",
        },
        scope.words(),
        match scope {
            MuScope::FullTurn => " (the scenario requires the crank to turn fully)",
            MuScope::XRange => " (the working motion)",
            MuScope::BetweenTargets => " (the working motion, from the first target to the last)",
        },
        if turn_column {
            "; full turn: the same over a full turn, for designs whose crank turns fully"
        } else {
            ""
        },
        given(flag),
        if flag > MU_GOOD {
            "the scenario's limit"
        } else {
            "common practice"
        },
        if s.task == "function" {
            ""
        } else {
            " and of the coupler point"
        },
    );
    for c in &cols {
        let _ = write!(h, "<th class=\"num\">{}</th>", c.head);
    }
    let _ = write!(
        h,
        "<th>Grashof class</th><th class=\"num\">min transmission (°), {}</th>{}\
         <th class=\"num\">longest / shortest</th><th class=\"num\">footprint W × H ({u})</th></tr></thead><tbody>",
        scope.short(),
        if turn_column {
            "<th class=\"num\">full turn (°)</th>"
        } else {
            ""
        }
    );
    for (i, (d, st)) in s.designs.iter().zip(studies).enumerate() {
        let full = i < FULL_DESIGNS;
        let rank = if full {
            format!("<a href=\"#design-{0}\">{0}</a>", d.rank)
        } else {
            d.rank.to_string()
        };
        let _ = write!(
            h,
            "<tr class=\"design-row{}\" data-rank=\"{}\"><td class=\"num rank\">{rank}</td>",
            if full { " full" } else { "" },
            d.rank
        );
        for c in &cols {
            let v = measure(d, c.key).unwrap_or(f64::NAN);
            h.push_str(&num_cell(c.key, &sig(v, DIGITS), false));
        }
        let (w, ht) = st.footprint_size();
        let turn_cell = match (turn_column, st.full_turn_mu) {
            (false, _) => String::new(),
            (true, Some(v)) => num_cell("full_turn_transmission", &angle(v), v < flag),
            (true, None) => num_cell("full_turn_transmission", "–", false),
        };
        let _ = write!(
            h,
            "<td class=\"class\" data-key=\"grashof\">{}</td>{}{turn_cell}{}{}</tr>",
            esc(&d.grashof),
            num_cell(
                "min_transmission",
                &angle(d.min_transmission),
                d.min_transmission < flag
            ),
            num_cell("length_ratio", &format!("{:.2}", d.length_ratio), false),
            num_cell(
                "footprint",
                &format!("{} × {}", sig(w, DIGITS), sig(ht, DIGITS)),
                false
            ),
        );
    }
    h.push_str("</tbody></table></div>\n");
}

/// A small inline SVG icon of `w` x `h` pixels.
fn icon(w: u32, h: u32, body: &str) -> String {
    format!(
        r#"<svg class="icon" width="{w}" height="{h}" viewBox="0 0 {w} {h}" xmlns="http://www.w3.org/2000/svg">{body}</svg>"#
    )
}

/// The key to the figures: what each mark and colour means.
fn figure_key(h: &mut String, task: &str, precision_points: bool) {
    let mut items: Vec<(String, &str)> = vec![
        (
            swatch_icon(Swatch::Line(style::CRANK, LINK_WIDTH, None)),
            "crank (input link), driven",
        ),
        (
            swatch_icon(Swatch::Plate),
            if task == "function" {
                "coupler: the link from joint A to joint B"
            } else {
                "coupler: the plate through joints A, B and the coupler point"
            },
        ),
        (
            swatch_icon(Swatch::Line(style::OUTPUT, LINK_WIDTH, None)),
            "output link",
        ),
        (
            icon(
                34,
                30,
                &(ground_symbol(17.0, 7.0, 0) + &pivot_circle(17.0, 7.0)),
            ),
            "fixed pivot on the frame (O2 input, O4 output)",
        ),
        (
            swatch_icon(Swatch::Line(style::MUTED, 1.0, Some(GROUND_DASH))),
            "ground line O2–O4 between the fixed pivots",
        ),
    ];
    if task != "function" {
        items.push((
            swatch_icon(Swatch::Line(style::CURVE, 1.6, None)),
            "coupler curve over the whole motion (a full turn, or toggle to toggle)",
        ));
        items.push((
            swatch_icon(Swatch::Reticle),
            "target, numbered in running order",
        ));
        items.push((
            icon(
                34,
                18,
                &super::draw::arrow("k", (3.0, 9.0), (31.0, 9.0), 7.0, style::TARGET, 1.3, ""),
            ),
            "error: reached coupler point → target (true scale)",
        ));
    }
    items.push((
        icon(
            34,
            18,
            &super::draw::line(
                "k",
                (3.0, 9.0),
                (31.0, 9.0),
                style::CRANK,
                0.6 * LINK_WIDTH,
                r#" opacity="0.28" stroke-linecap="round""#,
            ),
        ),
        match (task, precision_points) {
            ("function", true) => "faded: the linkage at the other precision points",
            ("function", false) => "faded: the linkage at the other end of the x range",
            _ => "faded: the linkage at the other targets",
        },
    ));
    if task == "motion" {
        items.push((
            icon(
                52,
                34,
                &triad("k", (12.0, 30.0), 0.35, style::COUPLER, false),
            ),
            "coupler frame at each target position",
        ));
        items.push((
            icon(46, 30, &triad("k", (6.0, 24.0), 0.35, style::TARGET, true)),
            "target pose of that frame",
        ));
    }
    items.push((
        swatch_icon(Swatch::Line(style::COUPLER, 1.9, None)),
        "θ3: coupler angle (from +x)",
    ));
    items.push((
        swatch_icon(Swatch::Line(style::OUTPUT, 1.9, None)),
        "θ4: output link angle (from +x)",
    ));
    items.push((
        swatch_icon(Swatch::Line(style::GENERATED, 1.9, None)),
        "μ: transmission angle at joint B",
    ));
    items.push((
        swatch_icon(Swatch::Fill(style::BAND)),
        "μ between 40° and 140°: common practice for smooth running",
    ));
    if task == "function" {
        items.push((
            swatch_icon(Swatch::Line(style::INK, 1.6, Some("7 4"))),
            "desired function",
        ));
        if precision_points {
            items.push((swatch_icon(Swatch::Ring(style::TARGET)), "precision point"));
        }
        items.push((
            swatch_icon(Swatch::Line(style::INK, 1.0, Some(RANGE_END_DASH))),
            "x0, xf: the ends of the x range on the angle plot",
        ));
    }
    h.push_str(
        "<div class=\"panel figure-key\"><h3>Reading the figures</h3><ul class=\"key-list\">",
    );
    for (svg, text) in items {
        let _ = write!(h, "<li>{svg}<span>{}</span></li>", esc(text));
    }
    h.push_str("</ul></div>\n");
}

/// One design in full: headline figures, drawing, dimensions, plots and animation.
fn design_section(h: &mut String, s: &Summary, d: &DesignSummary, design: &Design, st: &Study) {
    let l = &design.linkage;
    let units = &s.units;
    let u = esc(units);
    let function = s.task == "function";
    let direction = direction_text(s, d);
    let motion_text = crank_motion_text(st);
    let _ = writeln!(
        h,
        "<section class=\"design\" id=\"design-{r}\" data-rank=\"{r}\">\n<header class=\"design-head\"><div class=\"badge\">#{r}</div>\
         <div><h2>Design {r}</h2><p class=\"sub\">{} · {} assembly · {}{}</p></div></header>",
        esc(&d.grashof),
        l.assembly().name(),
        esc(&motion_text),
        direction
            .as_ref()
            .map(|(way, span)| format!(
                " · <span class=\"direction\">crank runs {way} {}</span>",
                esc(span)
            ))
            .unwrap_or_default(),
        r = d.rank
    );
    // Headline figures.
    let scope = mu_scope(s);
    let flag = mu_flag(s);
    h.push_str("<div class=\"stats\">");
    for c in error_columns(&s.task, units) {
        if let (Some(label), Some(v)) = (c.stat, measure(d, c.key)) {
            stat(h, c.key, label, &sig(v, DIGITS), &c.unit, false);
        }
    }
    stat(
        h,
        "min_transmission",
        &format!("min transmission, {}", scope.short()),
        &angle(d.min_transmission),
        "°",
        d.min_transmission < flag,
    );
    if let (true, Some(v)) = (scope != MuScope::FullTurn, st.full_turn_mu) {
        stat(
            h,
            "full_turn_transmission",
            "min transmission, full turn",
            &angle(v),
            "°",
            v < flag,
        );
    }
    stat(
        h,
        "length_ratio",
        "longest / shortest",
        &format!("{:.2}", d.length_ratio),
        "",
        false,
    );
    let (w, ht) = st.footprint_size();
    stat(
        h,
        "footprint",
        "footprint W × H",
        &format!("{} × {}", sig(w, DIGITS), sig(ht, DIGITS)),
        units,
        false,
    );
    h.push_str("</div>\n");

    // The drawing at the targets, and the dimensions beside it.
    // A long target list is shown at SHOWN_TARGETS of its targets, evenly spaced.
    let all_targets = target_points(&s.scenario);
    let n_targets = all_targets.len().max(d.crank_angles.len());
    let shown_idx = thin_indices(n_targets, SHOWN_TARGETS);
    let thinned = shown_idx.len() < n_targets;
    let targets = pick(&all_targets, &shown_idx);
    let reached: Vec<Point2<f64>> = pick(&d.reached, &shown_idx)
        .iter()
        .map(|r| Point2::new(r[0], r[1]))
        .collect();
    let shown_poses = match st.target_poses.as_deref() {
        Some(p) if p.len() == n_targets => pick(p, &shown_idx),
        Some(p) => p.to_vec(),
        None => Vec::new(),
    };
    let poses: &[Pose] = &shown_poses;
    let motion = s.task == "motion";
    let frames = pick(&target_frames(&s.scenario), &shown_idx);
    let frame_angle = measure(d, "frame_angle").unwrap_or(0.0).to_radians();
    // A function generator has no coupler point of its own (it sits on joint A): no curve.
    let curve: &[Vec<Point2<f64>>] = if function { &[] } else { &st.curve };
    // Motion generation draws the coupler frame at each position against the target poses
    // (dashed, numbered), which stand in for the target markers.
    let fig = if motion {
        motion_figure(l, poses, curve, &frames, frame_angle, units, LINKAGE_SIZE)
    } else {
        linkage_figure(l, poses, curve, &targets, &reached, units, LINKAGE_SIZE)
    };
    let n = poses.len();
    let what = match s.task.as_str() {
        "function" if d.crank_angles.is_empty() => "x-range end",
        "function" => "precision point",
        _ => "target",
    };
    let _ = write!(
        h,
        "<div class=\"sheet\"><figure class=\"linkage\">{fig}<figcaption><b>Drawn to scale at {} {what} position{}</b> \
         (position 1 solid and labelled: fixed pivots O2, O4 and joints A, B; the others faded){}{}.</figcaption></figure>\n<div class=\"panel card\">",
        if thinned {
            format!("{n} evenly spaced of the {n_targets}")
        } else {
            format!("the {n}")
        },
        if n == 1 { "" } else { "s" },
        if function {
            String::new()
        } else {
            format!(" with the coupler curve of {}", whole_motion(st))
        },
        if motion {
            format!(
                ". The coupler frame (solid axes, at the coupler point, turned {}° from the coupler line A→B) \
                 against each target pose (dashed, numbered); red: the error from the frame origin to each target",
                angle(frame_angle.to_degrees())
            )
        } else if targets.is_empty() {
            String::new()
        } else {
            "; red: the targets and the error from the reached coupler point to each".to_owned()
        }
    );
    dimension_card(h, s, d, l, &u);
    if function {
        function_card(h, s, d);
    } else {
        target_card(h, s, d, st, &shown_idx);
    }
    h.push_str("</div></div>\n");

    // Plots, the task's own figure and the animation.
    // Function generation works over the whole x range: from input_start over input_span.
    let working = match (
        &s.scenario.task.function,
        d.measures.get("input_start").and_then(|v| v.as_f64()),
    ) {
        (Some(f), Some(start)) => {
            // Unwrap the start near the first reported crank angle.
            let first = d.crank_angles.first().copied().unwrap_or(start);
            let a = start + ((first - start) / 360.0).round() * 360.0;
            Some((a, a + f.input_span))
        }
        _ => None,
    };
    let drawn = match drawn_cranks(d) {
        c if c.len() == n_targets => pick(&c, &shown_idx),
        c => c,
    };
    // A least-squares function design is drawn at the ends of the x range: the plot marks
    // them as such (x0, xf), not as numbered positions.
    let lsq = function && d.crank_angles.is_empty() && working.is_some();
    let marks = AngleMarks {
        cranks: if lsq { &[] } else { &drawn },
        name: what,
        working,
        scope,
    };
    let angles = angle_plot_over(&st.angles, &marks, PLOT_SIZE);
    let marked = match (s.task.as_str(), lsq) {
        ("function", true) => {
            "dash-dot: the ends of the x range (x0, xf), between which the linkage works".to_owned()
        }
        ("function", false) => "dotted: the crank angle at each precision point; dash-dot: the ends of the x range \
             (x0, xf), between which the linkage works"
            .to_owned(),
        _ => format!(
            "dotted: the crank angle at each target{}; the working motion runs from target 1 to target {n_targets}",
            if thinned { " shown" } else { "" }
        ),
    };
    let angles_fig = format!(
        "<figure class=\"angles\">{angles}<figcaption><b>Link angles and transmission angle</b> over {}; \
         {marked}. The worst min(μ, 180° − μ) is labelled {}{}. Shaded: μ from {MU_BAND_LOW}° to {MU_BAND_HIGH}° (common practice).</figcaption></figure>",
        whole_motion(st),
        scope.words(),
        if scope != MuScope::FullTurn && st.full_turn {
            ", and over a full turn where that is worse"
        } else {
            ""
        }
    );
    let mut anim_poses = thin(&st.motion, ANIMATION_FRAMES);
    if runs_ccw(s, d) == Some(false) {
        anim_poses.reverse();
    }
    let anim = animation_svg(
        l,
        &anim_poses,
        curve,
        &targets,
        units,
        ANIMATION_SECONDS,
        PLOT_SIZE,
    );
    let turning = direction
        .as_ref()
        .map(|(way, span)| {
            format!(
                ", {}{way} (the way it runs {})",
                if st.full_turn { "" } else { "starting " },
                esc(span)
            )
        })
        .unwrap_or_default();
    let anim_fig = format!(
        "<figure class=\"animation screen-only\">{anim}<figcaption><b>One {}</b>{turning}; {ANIMATION_SECONDS} s per cycle at constant crank speed \
         (animated on screen; not printed).</figcaption></figure>",
        if st.full_turn {
            "full turn of the crank"
        } else {
            "full stroke of the input, toggle to toggle and back"
        }
    );
    match s.task.as_str() {
        "motion" => {
            let close = motion_closeup(l, poses, curve, &frames, frame_angle, units, PLOT_SIZE);
            let _ = writeln!(
                h,
                "<div class=\"pair\"><figure class=\"closeup\">{close}<figcaption><b>Close-up of the poses</b>, to scale: \
                 the coupler frame (solid) against each target pose (dashed), on the coupler curve.</figcaption></figure>{angles_fig}</div>\n\
                 <div class=\"pair\">{anim_fig}</div>"
            );
        }
        "function" => {
            let view = s
                .scenario
                .task
                .function
                .as_ref()
                .and_then(|f| FunctionView::new(design, d, f));
            h.push_str("<div class=\"pair\">");
            match view {
                Some(v) => function_figures(h, &v),
                None => h.push_str(
                    "<p class=\"note\">The function plots need the crank angle at x0, which neither the result nor the scenario gives.</p>",
                ),
            }
            let _ = writeln!(
                h,
                "</div>\n<div class=\"pair\">{angles_fig}{anim_fig}</div>"
            );
        }
        _ => {
            let _ = writeln!(h, "<div class=\"pair\">{angles_fig}{anim_fig}</div>");
        }
    }
    let r = d.rank;
    let _ = writeln!(
        h,
        "<p class=\"files\">Files: <a href=\"{cad}\">{cad}</a> (the linkage at position 1 for CAD, 1 user unit = 1 {u}) · \
         <a href=\"{csv}\">{csv}</a> (crank, coupler and output angles from the ground line, μ, the coupler point, and the link directions from +x, every {MOTION_STEP_DEG}° of crank from the ground line)</p>\n</section>",
        cad = cad_file(r),
        csv = curve_file(r)
    );
}

fn stat(h: &mut String, key: &str, label: &str, value: &str, unit: &str, warn: bool) {
    let _ = write!(
        h,
        "<div class=\"stat{}\" data-key=\"{key}\"><div class=\"label\">{}</div><div class=\"value\">{}{}</div></div>",
        if warn { " warn" } else { "" },
        esc(label),
        esc(value),
        if unit.is_empty() {
            String::new()
        } else {
            format!(" <small>{}</small>", esc(unit))
        }
    );
}

/// How the input moves over its whole motion, in words.
fn crank_motion_text(st: &Study) -> String {
    if st.full_turn {
        return "crank turns fully".into();
    }
    let ends = st
        .angles
        .first()
        .and_then(|b| Some((b.first()?.crank, b.last()?.crank)));
    match ends {
        Some((a, b)) => format!(
            "input rocks from {}° to {}° (toggles)",
            angle(a.min(b)),
            angle(a.max(b))
        ),
        None => "input does not move".into(),
    }
}

/// Every `k`-th pose so that at most `max` remain, the last one kept.
fn thin(poses: &[Pose], max: usize) -> Vec<Pose> {
    thin_indices(poses.len(), max)
        .into_iter()
        .map(|i| poses[i])
        .collect()
}

/// At most about `max` indices of `0..n`, evenly stepped, the first and the last included
/// (all of them when `n <= max`).
fn thin_indices(n: usize, max: usize) -> Vec<usize> {
    if n <= max || max < 2 {
        return (0..n).collect();
    }
    let k = n.div_ceil(max - 1);
    let mut v: Vec<usize> = (0..n).step_by(k).collect();
    if (n - 1) % k != 0 {
        v.push(n - 1);
    }
    v
}

/// Most targets of a design drawn, marked on its plots and listed one by one; a longer list
/// is shown at evenly spaced targets, the first and last included (`summary.json` has all).
const SHOWN_TARGETS: usize = 40;

/// " Shown: k evenly spaced of n." when a list of `n` is thinned to [`SHOWN_TARGETS`].
fn thinned_note(n: usize) -> String {
    let k = thin_indices(n, SHOWN_TARGETS).len();
    if k < n {
        format!(" Shown: {k} evenly spaced of {n} (the scenario file has all).")
    } else {
        String::new()
    }
}

/// `v` at the indices `idx` (those within it).
fn pick<T: Copy>(v: &[T], idx: &[usize]) -> Vec<T> {
    idx.iter().filter_map(|&i| v.get(i).copied()).collect()
}

fn dimension_card(h: &mut String, s: &Summary, d: &DesignSummary, l: &crate::FourBar, u: &str) {
    let (o2, o4, cp) = (l.input_pivot(), l.output_pivot(), l.coupler_point());
    let len = |v: f64| format!("{} {u}", sig(v, DIM_DIGITS));
    let function = s.task == "function";
    let mut rows: Vec<(&str, &str, String)> = vec![
        (
            "input_pivot",
            "input pivot O2",
            format!("{} {u}", pair(o2.x, o2.y, DIM_DIGITS)),
        ),
        (
            "output_pivot",
            "output pivot O4",
            format!("{} {u}", pair(o4.x, o4.y, DIM_DIGITS)),
        ),
        (
            "ground",
            "ground O2–O4",
            format!(
                "{} at {}°",
                len(l.ground()),
                angle(l.ground_angle().to_degrees())
            ),
        ),
        ("input_link", "crank r2", len(l.input_link())),
        ("coupler", "coupler r3", len(l.coupler())),
        (
            "output_link",
            if output_rocks(l) {
                "output link (rocker) r4"
            } else {
                "output link r4"
            },
            len(l.output_link()),
        ),
    ];
    // A function generator's coupler point sits on joint A: nothing to build.
    if !function {
        rows.push((
            "coupler_point",
            "coupler point",
            format!(
                "p {}, q {} {u}",
                sig(cp.p, DIM_DIGITS),
                sig(cp.q, DIM_DIGITS)
            ),
        ));
    }
    if let (true, Some(a)) = (s.task == "motion", measure(d, "frame_angle")) {
        rows.push((
            "frame_angle",
            "coupler frame angle",
            format!("{}° from A→B", sig(a, DIM_DIGITS)),
        ));
    }
    rows.push(("assembly", "assembly", l.assembly().name().to_owned()));
    let _ = write!(
        h,
        "<div class=\"block\"><h3>Dimensions</h3><table class=\"dimensions compact\"><caption>{}</caption><tbody>",
        match s.task.as_str() {
            "function" => "No coupler point: function generation uses the output link's angle alone.",
            "motion" => "p along the coupler from A towards B, q to its left; the coupler frame's x axis turned \
                         the frame angle counter-clockwise from the coupler line A→B.",
            _ => "p along the coupler from A towards B, q to its left.",
        }
    );
    for (key, k, v) in rows {
        let _ = write!(
            h,
            "<tr data-key=\"{key}\"><td class=\"key\">{}</td><td class=\"num\">{v}</td></tr>",
            esc(k)
        );
    }
    h.push_str("</tbody></table></div>");
}

/// An angle in degrees with two decimals, for the angles a linkage is mounted at.
fn mount_angle(v: f64) -> String {
    if v.is_finite() {
        format!("{:.2}", v + 0.0)
    } else {
        "–".into()
    }
}

/// Function generation: the angles the linkage is mounted at (crank and output at both ends
/// of the x range, from the ground line), and the positions it is drawn at: the precision
/// points (x, crank angle, output angle), or the ends of the x range for least squares.
fn function_card(h: &mut String, s: &Summary, d: &DesignSummary) {
    let Some(f) = &s.scenario.task.function else {
        return;
    };
    let [x0, xf] = f.x;
    let input_start = measure(d, "input_start");
    let input_end = measure(d, "input_end").or(input_start.map(|a| a + f.input_span));
    let output_start = measure(d, "output_start");
    let output_end = output_start.map(|o| o + f.output_span);
    let rows = [
        ("input_start", "crank at x0", input_start),
        ("input_end", "crank at xf", input_end),
        ("output_start", "output at x0", output_start),
        ("output_end", "output at xf", output_end),
    ];
    h.push_str(
        "<div class=\"block\"><h3>Mounting angles</h3><table class=\"mounting compact\">\
         <caption>Degrees counter-clockwise from the ground line O2→O4.</caption><tbody>",
    );
    for (key, label, v) in rows {
        let _ = write!(
            h,
            "<tr><td class=\"key\">{label}</td><td class=\"num\" data-key=\"{key}\">{}°</td></tr>",
            mount_angle(v.unwrap_or(f64::NAN))
        );
    }
    h.push_str("</tbody></table></div>");

    // The positions drawn: (label, x, crank, output).
    let mut at: Vec<(String, f64, f64, f64)> = Vec::new();
    if d.crank_angles.is_empty() {
        // Least squares has no precision points: the ends of the x range instead.
        at.push((
            "x0".into(),
            x0,
            input_start.unwrap_or(f64::NAN),
            output_start.unwrap_or(f64::NAN),
        ));
        at.push((
            "xf".into(),
            xf,
            input_end.unwrap_or(f64::NAN),
            output_end.unwrap_or(f64::NAN),
        ));
    } else {
        let xs: Vec<f64> = match d.measures.get("precision_x").and_then(|v| v.as_array()) {
            Some(a) => a.iter().map(|v| v.as_f64().unwrap_or(f64::NAN)).collect(),
            // Older summaries: x from the linear mapping of the crank.
            None => d
                .crank_angles
                .iter()
                .map(|c| match input_start {
                    Some(a) if f.input_span != 0.0 => x0 + (c - a) / f.input_span * (xf - x0),
                    _ => f64::NAN,
                })
                .collect(),
        };
        // The output from y normalised over the range, where the function can be evaluated.
        let y = desired_function(f);
        for (i, c) in d.crank_angles.iter().enumerate() {
            let x = xs.get(i).copied().unwrap_or(f64::NAN);
            let out = match (&y, output_start) {
                (Some(y), Some(o)) => {
                    let (y0, dy) = (y(x0), y(xf) - y(x0));
                    if dy.abs() > 0.0 {
                        o + f.output_span * (y(x) - y0) / dy
                    } else {
                        f64::NAN
                    }
                }
                _ => f64::NAN,
            };
            at.push(((i + 1).to_string(), x, *c, out));
        }
    }
    let with_output = at.iter().any(|r| r.3.is_finite());
    let _ = write!(
        h,
        "<div class=\"block\"><h3>{}</h3><table class=\"at-targets compact\"><thead><tr><th class=\"num\">#</th>\
         <th class=\"num\">x</th><th class=\"num\">crank (°)</th>{}</tr></thead><tbody>",
        if d.crank_angles.is_empty() {
            "Ends of the x range (least squares: no precision points)"
        } else {
            "Precision points"
        },
        if with_output {
            "<th class=\"num\">output (°)</th>"
        } else {
            ""
        }
    );
    for (label, x, c, o) in at {
        let _ = write!(
            h,
            "<tr><td class=\"num\">{label}</td><td class=\"num\" data-key=\"x\">{}</td><td class=\"num\" data-key=\"crank\">{}</td>{}</tr>",
            sig(x, DIGITS),
            angle(c),
            if with_output {
                format!("<td class=\"num\" data-key=\"output\">{}</td>", angle(o))
            } else {
                String::new()
            }
        );
    }
    h.push_str("</tbody></table></div>");
}

/// Per-target results of path and motion generation: crank angle, distance error and
/// (motion) angle error.
fn target_card(h: &mut String, s: &Summary, d: &DesignSummary, st: &Study, shown: &[usize]) {
    let u = esc(&s.units);
    let targets = target_points(&s.scenario);
    let frames = target_frames(&s.scenario);
    let motion = s.task == "motion";
    let frame_angle = measure(d, "frame_angle").unwrap_or(0.0).to_radians();
    // A crank that turns fully: its angles as on the plot's axis, in [0, 360).
    let turn = |c: f64| if st.full_turn { c.rem_euclid(360.0) } else { c };
    let n = d.crank_angles.len();
    let _ = write!(
        h,
        "<div class=\"block\"><h3>At the targets{}</h3><table class=\"at-targets compact\"><thead><tr><th class=\"num\">#</th>\
         <th class=\"num\">crank (°)</th><th class=\"num\">error ({u})</th>{}</tr></thead><tbody>",
        if shown.len() < n {
            format!(" ({} evenly spaced of {n}; all in summary.json)", shown.len())
        } else {
            String::new()
        },
        if motion {
            "<th class=\"num\">angle error (°)</th>"
        } else {
            ""
        }
    );
    let poses = st.target_poses.as_deref().unwrap_or(&[]);
    for &i in shown {
        let Some(c) = d.crank_angles.get(i) else {
            continue;
        };
        let err = match (targets.get(i), d.reached.get(i)) {
            (Some(t), Some(r)) => (t - Point2::new(r[0], r[1])).norm(),
            _ => f64::NAN,
        };
        let angle_err = match (frames.get(i), poses.get(i)) {
            (Some(f), Some(p)) if motion => {
                crate::kinematics::range::wrap_pi(p.theta3 + frame_angle - f.phi).to_degrees()
            }
            _ => f64::NAN,
        };
        let _ = write!(
            h,
            "<tr><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td>{}</tr>",
            i + 1,
            angle(turn(*c)),
            sig(err, 3),
            if motion {
                format!("<td class=\"num\">{}</td>", sig(angle_err, 3))
            } else {
                String::new()
            }
        );
    }
    h.push_str("</tbody></table></div>");
}

/// The function-generation figures: desired against generated, and the error.
fn function_figures(h: &mut String, v: &FunctionView) {
    let nan = vec![f64::NAN; v.x.len()];
    let (desired, y_label) = match &v.desired {
        Some(d) => (d.as_slice(), "y"),
        None => (nan.as_slice(), "output rotation (°)"),
    };
    let fp = function_plot(
        &v.x,
        desired,
        &v.generated,
        &v.precision_x,
        ("x", y_label),
        PLOT_SIZE,
    );
    let _ = write!(
        h,
        "<figure class=\"function\">{fp}<figcaption><b>Desired and generated output</b> over the range of x; \
         the output rotation is scaled to y by the output span.{}</figcaption></figure>",
        if v.desired.is_some() {
            ""
        } else {
            " The desired function could not be evaluated from the scenario: the generated output rotation is shown alone."
        }
    );
    if let Some(e) = &v.error {
        let ep = error_plot(
            &v.x,
            e,
            &v.precision_x,
            ("x", "output error (°)"),
            ERROR_PLOT_SIZE,
        );
        let _ = write!(
            h,
            "<figure class=\"function-error\">{ep}<figcaption><b>Output angle error</b>, generated minus desired{}.</figcaption></figure>",
            if v.precision_x.is_empty() {
                " (least squares over the whole range: no precision points)"
            } else {
                "; it vanishes at the precision points"
            }
        );
    }
}

/// The dimensions of every ranked design, for building or importing any of them; for
/// motion generation also the coupler frame angle, which designs.yaml does not hold.
fn dimensions(h: &mut String, s: &Summary, designs: &[Design]) {
    if designs.is_empty() {
        return;
    }
    let u = esc(&s.units);
    let motion = s.task == "motion";
    // A function generator's coupler point sits on joint A: no column for it.
    let function = s.task == "function";
    let _ = write!(
        h,
        "<section class=\"appendix\"><div class=\"section-title\"><h2>Dimensions of all designs</h2>\
         <span class=\"sub\">lengths in {u}; {}</span></div>\n<div class=\"panel\">\
         <table class=\"all-dimensions\"><thead><tr><th class=\"num\">rank</th><th class=\"num\">O2 (x, y)</th>\
         <th class=\"num\">O4 (x, y)</th><th class=\"num\">crank r2</th><th class=\"num\">coupler r3</th>\
         <th class=\"num\">output r4</th>{}{}<th>assembly</th></tr></thead><tbody>",
        if motion {
            "linkages as in designs.yaml; frame angle (x axis from A→B) from summary.json, not in designs.yaml"
        } else {
            "the same as designs.yaml"
        },
        if function {
            ""
        } else {
            "<th class=\"num\">coupler point (p, q)</th>"
        },
        if motion {
            "<th class=\"num\">frame angle (°)</th>"
        } else {
            ""
        }
    );
    for (d, design) in s.designs.iter().zip(designs) {
        let l = &design.linkage;
        let (o2, o4, cp) = (l.input_pivot(), l.output_pivot(), l.coupler_point());
        let point = if function {
            String::new()
        } else {
            format!("<td class=\"num\">{}</td>", pair(cp.p, cp.q, DIM_DIGITS))
        };
        let frame = if motion {
            num_cell(
                "frame_angle",
                &sig(measure(d, "frame_angle").unwrap_or(f64::NAN), DIM_DIGITS),
                false,
            )
        } else {
            String::new()
        };
        let _ = write!(
            h,
            "<tr class=\"dimension-row\" data-rank=\"{}\"><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td>\
             <td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td>{point}{frame}<td>{}</td></tr>",
            d.rank,
            d.rank,
            pair(o2.x, o2.y, DIM_DIGITS),
            pair(o4.x, o4.y, DIM_DIGITS),
            sig(l.input_link(), DIM_DIGITS),
            sig(l.coupler(), DIM_DIGITS),
            sig(l.output_link(), DIM_DIGITS),
            l.assembly().name()
        );
    }
    h.push_str("</tbody></table></div></section>\n");
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn significant_digits() {
        assert_eq!(sig(1.974_2, 4), "1.974");
        assert_eq!(sig(97.903_85, 4), "97.90");
        assert_eq!(sig(0.531_06, 4), "0.5311");
        assert_eq!(sig(1.284e-6, 4), "1.284e-6");
        assert_eq!(sig(-0.0, 4), "0");
        assert_eq!(sig(f64::NAN, 4), "–");
        assert_eq!(sig(2.5e7, 3), "2.50e7");
        assert_eq!(grouped(518_008), "518,008");
        assert_eq!(grouped(12), "12");
    }

    #[test]
    fn thinning_keeps_both_ends() {
        let poses: Vec<Pose> = (0..361)
            .map(|k| Pose {
                theta2: k as f64,
                theta3: 0.0,
                theta4: 0.0,
            })
            .collect();
        let t = thin(&poses, 180);
        assert!(t.len() <= 181);
        approx::assert_relative_eq!(t[0].theta2, 0.0);
        approx::assert_relative_eq!(t[t.len() - 1].theta2, 360.0);
    }
}
