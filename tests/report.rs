//! The design report end to end: `synth` writes report.html, design-N.svg and
//! design-N-curve.csv; `report DIR` redraws them; the page and every SVG are well-formed XML
//! holding the expected drawings, and the numbers shown are those of summary.json.

mod common;
use common::{root, run};

use std::path::{Path, PathBuf};

use approx::assert_relative_eq;
use crankwright::report::{render_report, ReportError, MOTION_STEP_DEG};
use crankwright::scenario::{CrankRequirement, FunctionFile, LimitsFile, ScenarioFile, TaskFile};
use crankwright::synthesis::output::{DesignSummary, Summary};
use crankwright::{load_designs, Assembly, CouplerPoint, Design, DesignFile, FourBar};
use nalgebra::{Point2, Vector2};
use roxmltree::{Document, Node, ParsingOptions};

/// `synth` of a bundled scenario with few starts into a new folder, and the checks every
/// report passes: self-contained, each figure's legend complete, the ranking's numbers
/// those of summary.json (`error_keys` among them). Returns the folder (kept while the
/// returned guard lives), summary.json as JSON and as a [`Summary`], and report.html.
fn synth_run(
    scenario: &str,
    error_keys: &[&str],
) -> (
    tempfile::TempDir,
    PathBuf,
    serde_json::Value,
    Summary,
    String,
) {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("run");
    synth(scenario, &dir);
    let text = std::fs::read_to_string(dir.join("summary.json")).unwrap();
    let html = std::fs::read_to_string(dir.join("report.html")).unwrap();
    let json: serde_json::Value = serde_json::from_str(&text).unwrap();
    let doc = parse(&html);
    check_self_contained(&html, &doc);
    check_legends(&doc);
    check_ranking(&doc, &json, error_keys);
    drop(doc);
    (tmp, dir, json, serde_json::from_str(&text).unwrap(), html)
}

/// `synth` of a bundled scenario with few starts into `dir`.
fn synth(scenario: &str, dir: &Path) {
    let path = root().join(scenario);
    let out = run(&[
        "synth",
        path.to_str().unwrap(),
        "--out",
        dir.to_str().unwrap(),
        "--starts",
        "200",
        "--time-limit",
        "600",
    ]);
    assert!(out.status.success(), "synth {scenario} failed");
}

/// The error measures of path generation in summary.json.
const PATH_ERRORS: &[&str] = &["sum_squared_error", "rms_error", "max_error"];

fn parse(text: &str) -> Document<'_> {
    let options = ParsingOptions {
        allow_dtd: true,
        ..ParsingOptions::default()
    };
    Document::parse_with_options(text, options)
        .unwrap_or_else(|e| panic!("not well-formed XML: {e}"))
}

fn has_class(n: &Node, class: &str) -> bool {
    n.attribute("class")
        .is_some_and(|c| c.split_whitespace().any(|w| w == class))
}

fn within<'a, 'i>(n: Node<'a, 'i>, tag: &str, class: &str) -> Vec<Node<'a, 'i>> {
    n.descendants()
        .filter(|c| c.has_tag_name(tag) && has_class(c, class))
        .collect()
}

fn one<'a, 'i>(n: Node<'a, 'i>, tag: &str, class: &str) -> Node<'a, 'i> {
    let v = within(n, tag, class);
    assert_eq!(v.len(), 1, "<{tag} class={class}>");
    v[0]
}

fn text_of(n: Node) -> String {
    n.descendants()
        .filter(|c| c.is_text())
        .filter_map(|c| c.text())
        .collect::<String>()
        .trim()
        .to_owned()
}

fn num_attr(n: Node, name: &str) -> f64 {
    n.attribute(name)
        .unwrap_or_else(|| panic!("no {name}"))
        .parse()
        .unwrap_or_else(|e| panic!("{name}: {e}"))
}

/// The ranking table's numbers against summary.json: errors carry four significant digits
/// (so they agree to 5e-4 relative), angles one decimal, ratios two.
fn check_ranking(doc: &Document, summary: &serde_json::Value, error_keys: &[&str]) {
    let designs = summary["designs"].as_array().unwrap();
    let table = one(doc.root_element(), "table", "ranking");
    let rows = within(table, "tr", "design-row");
    assert_eq!(rows.len(), designs.len());
    for (row, d) in rows.iter().zip(designs) {
        assert_eq!(
            row.attribute("data-rank").unwrap(),
            d["rank"].to_string(),
            "rank order"
        );
        let cell = |key: &str| {
            row.children()
                .find(|c| c.attribute("data-key") == Some(key))
                .map(text_of)
                .unwrap_or_else(|| panic!("no cell {key}"))
        };
        for key in error_keys {
            let shown: f64 = cell(key).parse().unwrap();
            assert_relative_eq!(shown, d[key].as_f64().unwrap(), max_relative = 5e-4);
        }
        let mu: f64 = cell("min_transmission").parse().unwrap();
        assert_relative_eq!(
            mu,
            d["min_transmission"].as_f64().unwrap(),
            epsilon = 0.05 + 1e-9
        );
        let ratio: f64 = cell("length_ratio").parse().unwrap();
        assert_relative_eq!(
            ratio,
            d["length_ratio"].as_f64().unwrap(),
            epsilon = 0.005 + 1e-9
        );
        assert_eq!(cell("grashof"), d["grashof"].as_str().unwrap());
    }
}

/// The footprint cell `W × H` of a rank.
fn footprint_cell(doc: &Document, rank: usize) -> (f64, f64) {
    let row = within(doc.root_element(), "tr", "design-row")
        .into_iter()
        .find(|r| r.attribute("data-rank") == Some(rank.to_string().as_str()))
        .unwrap();
    let cell = row
        .children()
        .find(|c| c.attribute("data-key") == Some("footprint"))
        .map(text_of)
        .unwrap();
    let (w, h) = cell.split_once('×').expect("W × H");
    (w.trim().parse().unwrap(), h.trim().parse().unwrap())
}

/// A page that needs nothing from outside: no scripts, no external references.
fn check_self_contained(html: &str, doc: &Document) {
    assert!(html.starts_with("<!DOCTYPE html>"));
    assert!(doc.root_element().has_tag_name("html"));
    assert!(doc.descendants().all(|n| !n.has_tag_name("script")));
    // The only URLs are XML namespace names, which are identifiers and never fetched.
    assert_eq!(
        html.matches("http").count(),
        html.matches("xmlns=\"http://www.w3.org/").count()
    );
    assert!(!html.contains("https://"));
    for n in doc.descendants() {
        for a in ["src", "href"] {
            if let Some(v) = n.attribute(a) {
                assert!(
                    v.starts_with('#') || v.starts_with("design-"),
                    "{a}={v} leaves the page"
                );
            }
        }
    }
    let caution = one(doc.root_element(), "aside", "caution");
    assert!(text_of(caution).contains(crankwright::SAFETY_NOTE));
}

/// The CAD export against the design: pivots where the design file puts them, the crank
/// joint on the crank circle at the first target's crank angle, the loop closed
/// (`|B - A| = r3`, `|B - O4| = r4`: the loop-closure equations of the domain notes), the
/// coupler point at `A + p e3 + q e3⊥`, and the viewBox holding all of them. SVG y is down.
fn check_cad(svg: &str, design: &Design, crank0_deg: f64) {
    let doc = parse(svg);
    let l = &design.linkage;
    let by_id = |id: &str| {
        doc.descendants()
            .find(|n| n.attribute("id") == Some(id))
            .unwrap_or_else(|| panic!("no #{id}"))
    };
    let pt = |id: &str| {
        let c = by_id(id);
        Point2::new(num_attr(c, "cx"), -num_attr(c, "cy"))
    };
    let (o2, o4, a, b, c) = (pt("O2"), pt("O4"), pt("A"), pt("B"), pt("C"));
    let size = l.size();
    let tol = 1e-12 * size;
    assert_relative_eq!(o2.x, l.input_pivot().x, epsilon = tol);
    assert_relative_eq!(o2.y, l.input_pivot().y, epsilon = tol);
    assert_relative_eq!(o4.x, l.output_pivot().x, epsilon = tol);
    assert_relative_eq!(o4.y, l.output_pivot().y, epsilon = tol);
    let t2 = l.ground_angle() + crank0_deg.to_radians();
    let a_ref = o2 + l.input_link() * Vector2::new(t2.cos(), t2.sin());
    assert_relative_eq!(a.x, a_ref.x, epsilon = 1e-9 * size);
    assert_relative_eq!(a.y, a_ref.y, epsilon = 1e-9 * size);
    assert_relative_eq!((b - a).norm(), l.coupler(), epsilon = 1e-9 * size);
    assert_relative_eq!((b - o4).norm(), l.output_link(), epsilon = 1e-9 * size);
    let e3 = (b - a) / (b - a).norm();
    let cp = l.coupler_point();
    let c_ref = a + cp.p * e3 + cp.q * Vector2::new(-e3.y, e3.x);
    assert_relative_eq!(c.x, c_ref.x, epsilon = 1e-9 * size);
    assert_relative_eq!(c.y, c_ref.y, epsilon = 1e-9 * size);
    let vb: Vec<f64> = doc
        .root_element()
        .attribute("viewBox")
        .unwrap()
        .split_whitespace()
        .map(|v| v.parse().unwrap())
        .collect();
    for p in [o2, o4, a, b, c] {
        assert!(
            p.x > vb[0] && p.x < vb[0] + vb[2],
            "x {} outside viewBox",
            p.x
        );
        assert!(
            -p.y > vb[1] && -p.y < vb[1] + vb[3],
            "y {} outside viewBox",
            p.y
        );
    }
    // 1 user unit = 1 mm.
    assert_eq!(
        doc.root_element().attribute("width"),
        Some(format!("{}mm", vb[2]).as_str())
    );
}

/// Rows of a curve export: crank, coupler and output angles from the ground line, the
/// transmission angle, the coupler point x and y, then crank, coupler and output directions
/// from +x.
fn csv_rows(text: &str) -> Vec<Vec<f64>> {
    let mut lines = text.lines();
    assert_eq!(
        lines.next(),
        Some(
            "crank_from_ground_deg,coupler_from_ground_deg,output_from_ground_deg,\
             transmission_deg,coupler_point_x_mm,coupler_point_y_mm,crank_global_deg,\
             coupler_global_deg,output_global_deg"
        )
    );
    lines
        .map(|r| r.split(',').map(|v| v.parse().unwrap()).collect())
        .collect()
}

#[test]
fn path_report_from_synth_and_redrawn_by_report() {
    let (_tmp, dir, _json, summary, html) =
        synth_run("tests/published/arc5-timed.yaml", PATH_ERRORS);
    let designs = load_designs(&dir.join("designs.yaml")).unwrap();
    let n = designs.len();
    assert!(n >= 1);
    let doc = parse(&html);

    // The first three in full: one drawing per target position, the coupler curve, the
    // targets and their error vectors; the angle plot marks every target; an animation.
    let sections = within(doc.root_element(), "section", "design");
    assert_eq!(sections.len(), n.min(3));
    let targets = 5;
    for s in &sections {
        let fig = one(*s, "figure", "linkage");
        assert_eq!(within(fig, "g", "linkage-pose").len(), targets);
        assert_eq!(within(fig, "path", "coupler-curve").len(), 1);
        assert_eq!(within(fig, "g", "target").len(), targets);
        assert_eq!(within(fig, "g", "error").len(), targets);
        assert_eq!(within(fig, "g", "ground-symbol").len(), 2);
        let angles = one(*s, "figure", "angles");
        assert_eq!(within(angles, "g", "target-mark").len(), targets);
        assert_eq!(within(angles, "rect", "band").len(), 1);
        let anim = one(*s, "figure", "animation");
        assert!(anim.descendants().any(|c| c.has_tag_name("animate")));
        // Crank angles 30..90 deg: counter-clockwise. The scenario requires a full turn,
        // the scope of min_transmission, so no second figure for it.
        check_direction(*s, true);
        let (label, _, _) = tile(*s, "min_transmission").unwrap();
        assert!(label.ends_with("full turn"), "{label}");
        assert!(tile(*s, "full_turn_transmission").is_none());
    }

    // Exports: the CAD drawing at the first target and the motion every degree of crank
    // (the crank turns fully: 360 rows at whole degrees of crank from the ground line).
    for (d, design) in summary.designs.iter().zip(&designs) {
        let svg = std::fs::read_to_string(dir.join(format!("design-{}.svg", d.rank))).unwrap();
        check_cad(&svg, design, d.crank_angles[0]);
        let csv =
            std::fs::read_to_string(dir.join(format!("design-{}-curve.csv", d.rank))).unwrap();
        let rows = csv_rows(&csv);
        assert_eq!(rows.len(), (360.0 / MOTION_STEP_DEG).round() as usize);
        let mut cranks: Vec<i64> = rows.iter().map(|r| r[0].round() as i64).collect();
        cranks.sort_unstable();
        assert_eq!(cranks, (0..360).collect::<Vec<_>>());
        for r in &rows {
            assert_relative_eq!(r[0], r[0].round(), epsilon = 1e-6);
        }
        // The footprint holds every coupler point of the motion and both pivots.
        let (w, h) = footprint_cell(&doc, d.rank);
        let l = &design.linkage;
        let xs = rows
            .iter()
            .map(|r| r[4])
            .chain([l.input_pivot().x, l.output_pivot().x]);
        let ys = rows
            .iter()
            .map(|r| r[5])
            .chain([l.input_pivot().y, l.output_pivot().y]);
        let span = |v: Vec<f64>| {
            v.iter().copied().fold(f64::NEG_INFINITY, f64::max)
                - v.iter().copied().fold(f64::INFINITY, f64::min)
        };
        assert!(w >= span(xs.collect()) * (1.0 - 5e-4), "width {w}");
        assert!(h >= span(ys.collect()) * (1.0 - 5e-4), "height {h}");
    }

    // `report DIR` redraws the same files from summary.json and designs.yaml alone.
    let first_svg = std::fs::read(dir.join("design-1.svg")).unwrap();
    std::fs::remove_file(dir.join("report.html")).unwrap();
    std::fs::remove_file(dir.join("design-1.svg")).unwrap();
    let out = run(&["report", dir.to_str().unwrap()]);
    assert!(out.status.success());
    let again = std::fs::read_to_string(dir.join("report.html")).unwrap();
    assert!(
        again == html,
        "redrawn report differs from the one synth wrote"
    );
    assert!(std::fs::read(dir.join("design-1.svg")).unwrap() == first_svg);
}

#[test]
fn motion_report_draws_frames_at_every_pose() {
    let (_tmp, dir, json, summary, html) = synth_run(
        "scenarios/bin-lid.yaml",
        &[
            "sum_squared_error",
            "rms_error",
            "max_error",
            "max_angle_error",
        ],
    );
    let doc = parse(&html);
    let poses = 5;
    let sections = within(doc.root_element(), "section", "design");
    assert_eq!(sections.len(), summary.designs.len().min(3));
    for s in &sections {
        let fig = one(*s, "figure", "linkage");
        assert_eq!(within(fig, "g", "linkage-pose").len(), poses);
        assert_eq!(within(fig, "g", "coupler-frame").len(), poses);
        assert_eq!(within(fig, "g", "target-frame").len(), poses);
        assert_eq!(within(fig, "g", "error").len(), poses);
        assert_eq!(within(fig, "path", "coupler-curve").len(), 1);
        let close = one(*s, "figure", "closeup");
        assert_eq!(within(close, "g", "coupler-frame").len(), poses);
        assert!(legend_texts(close).iter().any(|t| t == "coupler curve"));
    }
    // The coupler frame angle, which designs.yaml does not hold: in each design's
    // dimensions and in the appendix, as summary.json has it (six significant digits).
    let designs_json = json["designs"].as_array().unwrap();
    for (s, d) in sections.iter().zip(designs_json) {
        let row = one(*s, "table", "dimensions")
            .descendants()
            .find(|r| r.has_tag_name("tr") && r.attribute("data-key") == Some("frame_angle"))
            .expect("frame angle row");
        let shown: f64 = text_of(row.last_element_child().unwrap())
            .split('°')
            .next()
            .unwrap()
            .parse()
            .unwrap();
        assert_relative_eq!(
            shown,
            d["frame_angle"].as_f64().unwrap(),
            max_relative = 5e-6
        );
        check_direction(*s, ccw_of(d));
    }
    let rows = within(doc.root_element(), "tr", "dimension-row");
    assert_eq!(rows.len(), designs_json.len());
    for (row, d) in rows.iter().zip(designs_json) {
        let cell = row
            .children()
            .find(|c| c.attribute("data-key") == Some("frame_angle"))
            .expect("frame angle column");
        let shown: f64 = text_of(cell).parse().unwrap();
        assert_relative_eq!(
            shown,
            d["frame_angle"].as_f64().unwrap(),
            max_relative = 5e-6
        );
    }
    // The scenario lets the input rock: for a design whose input cannot turn fully the
    // curve export runs toggle to toggle, its ends in line (transmission angle 0 or 180
    // degrees, the definition of a toggle in the domain notes).
    let designs = load_designs(&dir.join("designs.yaml")).unwrap();
    for (d, design) in summary.designs.iter().zip(&designs) {
        let csv =
            std::fs::read_to_string(dir.join(format!("design-{}-curve.csv", d.rank))).unwrap();
        let rows = csv_rows(&csv);
        assert!(rows.len() > 2);
        if !design.linkage.grashof().input_turns_fully() {
            for end in [&rows[0], &rows[rows.len() - 1]] {
                assert!(end[3].min(180.0 - end[3]) < 1e-3, "toggle mu {}", end[3]);
            }
        }
        let svg = std::fs::read_to_string(dir.join(format!("design-{}.svg", d.rank))).unwrap();
        check_cad(&svg, design, d.crank_angles[0]);
    }
}

#[test]
fn report_refuses_missing_or_mismatched_files() {
    let tmp = tempfile::tempdir().unwrap();
    let out = run(&["report", tmp.path().to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("summary.json") && err.contains("not found"),
        "{err}"
    );

    std::fs::write(tmp.path().join("summary.json"), "{\"task\": 3}").unwrap();
    let out = run(&["report", tmp.path().to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("not a synthesis summary"));

    // A summary with designs, and a designs file holding fewer.
    let dir = tmp.path().join("run");
    synth("tests/published/arc5-timed.yaml", &dir);
    let designs = load_designs(&dir.join("designs.yaml")).unwrap();
    if designs.len() >= 2 {
        let one = crankwright::design::designs_to_yaml(&designs[..1]);
        std::fs::write(dir.join("designs.yaml"), one).unwrap();
        let out = run(&["report", dir.to_str().unwrap()]);
        assert_eq!(out.status.code(), Some(2));
        assert!(String::from_utf8_lossy(&out.stderr).contains("designs file holds 1"));
    }
}

/// Function generation by Freudenstein's equation (F. Freudenstein, "Approximate synthesis
/// of four-bar linkages", Trans. ASME 77, 1955; the form of the domain notes, ground on the
/// x axis): `K1 cos t4 - K2 cos t2 + K3 = cos(t2 - t4)` at three Chebyshev-spaced
/// precision points gives `K1 = r1/r2`, `K2 = r1/r4`, `K3 = (r1^2 + r2^2 - r3^2 + r4^2) /
/// (2 r2 r4)` by a linear solve. Demo task (invented): `y = x^1.5` on `[1, 3]`, the crank
/// turning 90 degrees from 30, the output 40 degrees from 45; ground 70 mm.
fn function_case() -> (Summary, Vec<Design>) {
    function_case_turning(30.0, 90.0, 45.0, 40.0)
}

/// [`function_case`] with the crank turning `span_in` degrees from `input_start` and the
/// output `span_out` from `output_start` (angles from the ground line). Its mirror image in
/// the ground line, `(-30, -90, -45, -40)`, has the same link lengths (Freudenstein's
/// equation holds the cosines only) and runs clockwise.
fn function_case_turning(
    input_start: f64,
    span_in: f64,
    output_start: f64,
    span_out: f64,
) -> (Summary, Vec<Design>) {
    let (x0, xf) = (1.0f64, 3.0f64);
    let f = |x: f64| x.powf(1.5);
    let cheb: Vec<f64> = (1..=3)
        .map(|j| {
            0.5 * (x0 + xf)
                - 0.5 * (xf - x0) * ((2.0 * f64::from(j) - 1.0) * std::f64::consts::PI / 6.0).cos()
        })
        .collect();
    let t2 = |x: f64| (input_start + span_in * (x - x0) / (xf - x0)).to_radians();
    let t4 = |x: f64| (output_start + span_out * (f(x) - f(x0)) / (f(xf) - f(x0))).to_radians();
    let m = nalgebra::Matrix3::from_fn(|i, j| {
        let x = cheb[i];
        [t4(x).cos(), -t2(x).cos(), 1.0][j]
    });
    let rhs = nalgebra::Vector3::from_fn(|i, _| (t2(cheb[i]) - t4(cheb[i])).cos());
    let k = m.lu().solve(&rhs).expect("three distinct precision points");
    let r1 = 70.0;
    let (r2, r4) = (r1 / k[0], r1 / k[1]);
    let r3 = (r1 * r1 + r2 * r2 + r4 * r4 - 2.0 * r2 * r4 * k[2]).sqrt();
    assert!(r2 > 0.0 && r4 > 0.0 && r3.is_finite());
    // The assembly on which the output takes the prescribed angle: the sign of
    // sin(theta4 - theta3) at the first precision point.
    let a = Point2::new(r2 * t2(cheb[0]).cos(), r2 * t2(cheb[0]).sin());
    let b = Point2::new(r1 + r4 * t4(cheb[0]).cos(), r4 * t4(cheb[0]).sin());
    let t3 = (b.y - a.y).atan2(b.x - a.x);
    let l = FourBar::new(
        Point2::new(0.0, 0.0),
        Point2::new(r1, 0.0),
        r2,
        r3,
        r4,
        CouplerPoint { p: 0.0, q: 0.0 },
        Assembly::from_sign((t4(cheb[0]) - t3).sin()),
    )
    .unwrap();
    let design = Design {
        name: Some("dial #1".into()),
        units: "mm".into(),
        linkage: l,
    };
    let table: Vec<[f64; 2]> = (0..=200)
        .map(|k| {
            let x = x0 + (xf - x0) * f64::from(k) / 200.0;
            [x, f(x)]
        })
        .collect();
    let crank_angles: Vec<f64> = cheb
        .iter()
        .map(|x| input_start + span_in * (x - x0) / (xf - x0))
        .collect();
    let mut measures = serde_json::Map::new();
    measures.insert("precision_x".into(), cheb.clone().into());
    for (k, v) in [
        ("input_start", input_start),
        ("input_end", input_start + span_in),
        ("output_start", output_start),
        ("rms_error", 0.4321),
        ("max_error", 0.987_65),
        ("precision_error", 1.5e-7),
    ] {
        measures.insert(k.into(), v.into());
    }
    let ds = DesignSummary {
        rank: 1,
        linkage: DesignFile::from(&design),
        crank_angles,
        grashof: l.grashof().name().into(),
        min_transmission: 41.25,
        length_ratio: l.length_ratio(),
        reached: Vec::new(),
        measures,
    };
    let scenario = ScenarioFile {
        name: Some("dial".into()),
        units: Some("mm".into()),
        task: TaskFile {
            function: Some(FunctionFile {
                formula: None,
                table: Some(table),
                x: [x0, xf],
                input_span: span_in,
                output_span: span_out,
                input_start: None,
                output_start: None,
                precision_points: Some(3),
            }),
            ..TaskFile::default()
        },
        // The crank may rock: min_transmission is taken over the x range.
        limits: LimitsFile {
            crank: Some(CrankRequirement::Any),
            ..LimitsFile::default()
        },
        search: Default::default(),
    };
    let summary = Summary {
        starts_run: 4,
        interrupted: true,
        stop_reason: Some("time-limit".into()),
        rejected: [("not-assembled".to_string(), 3usize)]
            .into_iter()
            .collect(),
        ..hand_made("function", "dial", ds, scenario)
    };
    (summary, vec![design])
}

/// The summary of a hand-made run of `task` that kept the one design `ds`: ten starts, all
/// run, nothing rejected.
fn hand_made(task: &str, name: &str, ds: DesignSummary, scenario: ScenarioFile) -> Summary {
    Summary {
        task: task.into(),
        name: name.into(),
        units: "mm".into(),
        seed: 1,
        starts: 10,
        starts_run: 10,
        seconds: 0.5,
        evaluations: 1234,
        interrupted: false,
        stop_reason: None,
        accepted: 1,
        rejected: Default::default(),
        designs: vec![ds],
        scenario,
        caution: crankwright::SAFETY_NOTE.into(),
    }
}

// Function generation, written against the result fields the function task reports
// (input_start, output_start, crank angles at the precision points, errors in degrees).
#[test]
fn function_report_from_a_hand_made_summary() {
    let (summary, designs) = function_case();
    let html = render_report(&summary, &designs).unwrap();
    let doc = parse(&html);
    check_self_contained(&html, &doc);
    let json = serde_json::to_value(&summary).unwrap();
    check_ranking(&doc, &json, &["rms_error", "max_error", "precision_error"]);
    assert_eq!(within(doc.root_element(), "p", "stopped").len(), 1);
    let s = one(doc.root_element(), "section", "design");
    let f = one(s, "figure", "function");
    assert_eq!(within(f, "path", "desired").len(), 1);
    assert_eq!(within(f, "path", "generated").len(), 1);
    assert_eq!(within(f, "circle", "precision-point").len(), 3);
    let e = one(s, "figure", "function-error");
    assert_eq!(within(e, "path", "error").len(), 1);
    let rings = within(e, "circle", "precision-point");
    assert_eq!(rings.len(), 3);
    // Freudenstein's linkage is exact at the precision points: the plotted error crosses
    // the zero line there (path vertices carry 0.01 px; linear between 121 samples).
    let zero = num_attr(one(e, "line", "zero"), "y1");
    let d = one(e, "path", "error").attribute("d").unwrap();
    let pts: Vec<(f64, f64)> = d
        .split(['M', 'L'])
        .filter_map(|p| p.trim().split_once(','))
        .map(|(x, y)| (x.parse().unwrap(), y.parse().unwrap()))
        .collect();
    let (lo, hi) = pts
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), p| {
            (l.min(p.1), h.max(p.1))
        });
    assert!(hi - lo > 20.0, "the error curve spans the plot");
    for r in rings {
        let x = num_attr(r, "cx");
        let y = pts
            .windows(2)
            .find(|w| w[0].0 <= x && x <= w[1].0)
            .map(|w| w[0].1 + (x - w[0].0) / (w[1].0 - w[0].0) * (w[1].1 - w[0].1))
            .expect("precision point inside the range");
        assert_relative_eq!(y, zero, epsilon = 0.5);
    }
    // The linkage at the three precision points, no path targets.
    let fig = one(s, "figure", "linkage");
    assert_eq!(within(fig, "g", "linkage-pose").len(), 3);
    assert!(within(fig, "g", "target").is_empty());
}

#[test]
fn report_of_a_run_without_designs_and_of_mismatched_designs() {
    let (mut summary, designs) = function_case();
    // Designs that are not the summary's.
    let mut other = designs.clone();
    other[0].linkage = other[0].linkage.transformed(0.0, Vector2::new(1.0, 0.0));
    match render_report(&summary, &other) {
        Err(ReportError::Mismatch { rank: 1, field }) => assert!(field.contains("pivot")),
        r => panic!("expected a mismatch, got {r:?}"),
    }
    assert!(matches!(
        render_report(&summary, &[]),
        Err(ReportError::Count {
            summary: 1,
            designs: 0
        })
    ));
    summary.designs.clear();
    let html = render_report(&summary, &[]).unwrap();
    let doc = parse(&html);
    assert!(within(doc.root_element(), "tr", "design-row").is_empty());
    assert_eq!(within(doc.root_element(), "p", "none").len(), 1);
    assert_eq!(within(doc.root_element(), "tr", "rejection").len(), 1);
}

/// Each drawn class of a figure and the legend entries that may name it.
const LEGEND_OF: &[(&str, &str, &[&str])] = &[
    ("line", "crank", &["crank"]),
    ("polygon", "coupler", &["coupler"]),
    ("line", "output", &["output link"]),
    ("line", "ground-line", &["ground line O2–O4"]),
    ("path", "coupler-curve", &["coupler curve"]),
    ("g", "target", &["target"]),
    ("g", "coupler-frame", &["coupler frame"]),
    ("g", "target-frame", &["target frame"]),
    ("g", "target-mark", &["target", "precision point"]),
    ("g", "range-end", &["x-range end"]),
    ("circle", "precision-point", &["precision point"]),
    ("path", "desired", &["desired"]),
    ("path", "generated", &["generated"]),
    ("path", "error", &["generated − desired"]),
    ("path", "theta3", &["θ3 coupler"]),
    ("path", "theta4", &["θ4 output"]),
    ("path", "mu", &["μ transmission"]),
    ("rect", "band", &["40–140°"]),
];

/// Texts of the legend strip of a figure.
fn legend_texts(fig: Node) -> Vec<String> {
    within(fig, "g", "legend")
        .into_iter()
        .flat_map(|g| g.descendants().filter(|n| n.has_tag_name("text")))
        .map(text_of)
        .collect()
}

/// Every figure of the page names in its legend each kind of mark it draws.
fn check_legends(doc: &Document) {
    for fig in doc.descendants().filter(|n| n.has_tag_name("figure")) {
        let legend = legend_texts(fig);
        for (tag, class, names) in LEGEND_OF {
            if !within(fig, tag, class).is_empty() {
                assert!(
                    names.iter().any(|n| legend.iter().any(|l| l == n)),
                    "figure {:?} draws <{tag} class={class}> but its legend {legend:?} does not name it",
                    fig.attribute("class")
                );
            }
        }
    }
}

/// Crank angles (degrees, unwrapped) of the animation's crank joint A about O2 at every
/// key frame of a design section; pixel y grows downwards.
fn animated_cranks(section: Node) -> Vec<f64> {
    let anim = one(section, "figure", "animation");
    let crank = one(anim, "line", "crank");
    let (x1, y1) = (num_attr(crank, "x1"), num_attr(crank, "y1"));
    let values = |attr: &str| -> Vec<f64> {
        crank
            .children()
            .find(|c| c.has_tag_name("animate") && c.attribute("attributeName") == Some(attr))
            .unwrap_or_else(|| panic!("no animation of {attr}"))
            .attribute("values")
            .unwrap()
            .split(';')
            .map(|v| v.parse().unwrap())
            .collect()
    };
    let (xs, ys) = (values("x2"), values("y2"));
    let mut out: Vec<f64> = Vec::new();
    for (x, y) in xs.iter().zip(&ys) {
        let a = (-(y - y1)).atan2(x - x1).to_degrees();
        let a = match out.last() {
            Some(p) => p + (a - p + 180.0).rem_euclid(360.0) - 180.0,
            None => a,
        };
        out.push(a);
    }
    out
}

/// The header of a design section says which way the crank runs, and the animation runs
/// it that way: key frames in decreasing crank angle when clockwise (the first stroke of a
/// rocking input, the whole loop of a crank that turns fully).
fn check_direction(section: Node, ccw: bool) {
    let head = text_of(one(section, "span", "direction"));
    let way = if ccw {
        "counter-clockwise"
    } else {
        "clockwise"
    };
    assert!(
        head.starts_with(&format!("crank runs {way} from")),
        "{head}"
    );
    let cranks = animated_cranks(section);
    assert!(cranks.len() > 10);
    let sign = if ccw { 1.0 } else { -1.0 };
    // The first stroke: up to the turning point of a rocking input, or the whole loop.
    let turn = cranks
        .windows(2)
        .position(|w| (w[1] - w[0]) * sign < 0.0)
        .unwrap_or(cranks.len() - 1);
    assert!(
        turn > 5,
        "the animation starts the wrong way: {:?}",
        &cranks[..4]
    );
    for w in cranks[..=turn].windows(2) {
        assert!((w[1] - w[0]) * sign > 0.0, "{w:?}");
    }
}

/// A stat tile of a design section: its label and value.
fn tile(section: Node, key: &str) -> Option<(String, f64, bool)> {
    within(section, "div", "stat")
        .into_iter()
        .find(|n| n.attribute("data-key") == Some(key))
        .map(|t| {
            let label = text_of(one(t, "div", "label"));
            let value = text_of(one(t, "div", "value"));
            let number = value.split_whitespace().next().unwrap().parse().unwrap();
            (label, number, has_class(&t, "warn"))
        })
}

/// Worst transmission quality `min(mu, 180 - mu)` over a full turn of a crank that turns
/// fully, degrees: `|A - O4|` runs over `[r1 - r2, r1 + r2]`, its ends with the crank along
/// the ground line and opposite it, and `mu` follows from the law of cosines at `B`,
/// `cos mu = (r3^2 + r4^2 - |A - O4|^2) / (2 r3 r4)` (the transmission-angle formula of the
/// domain notes; the extremes at the crank in line with the ground are the classic result,
/// e.g. R. L. Norton, Design of Machinery, section on the transmission angle; from memory).
fn full_turn_quality(l: &FourBar) -> f64 {
    let [r1, r2, r3, r4] = l.lengths();
    [r1 - r2, r1 + r2]
        .iter()
        .map(|d| {
            let mu = ((r3 * r3 + r4 * r4 - d * d) / (2.0 * r3 * r4))
                .clamp(-1.0, 1.0)
                .acos()
                .to_degrees();
            mu.min(180.0 - mu)
        })
        .fold(f64::INFINITY, f64::min)
}

/// Path generation with a crank that turns fully while the scenario lets it rock (`crank:
/// any`), so that the result's min_transmission is taken between the targets only. Demo
/// data (invented): a crank-rocker (ground 40 at 20 deg, crank 18, coupler 35, output 30;
/// Grashof, crank shortest) whose coupler point passes four targets 0.2 mm off, at crank
/// angles 200, 170, 140 and 110 deg from the ground line: the crank runs clockwise.
fn rocking_path_case() -> (Summary, Vec<Design>) {
    let g = 20f64.to_radians();
    let l = FourBar::new(
        Point2::new(5.0, -3.0),
        Point2::new(5.0 + 40.0 * g.cos(), -3.0 + 40.0 * g.sin()),
        18.0,
        35.0,
        30.0,
        CouplerPoint { p: 15.0, q: 10.0 },
        Assembly::Open,
    )
    .unwrap();
    assert!(l.grashof().input_turns_fully());
    let cranks = [200.0, 170.0, 140.0, 110.0];
    let poses = crankwright::report::poses_at_cranks(&l, &cranks).expect("assembles");
    let reached: Vec<Point2<f64>> = poses
        .iter()
        .map(|p| l.coupler_point_at(p.theta2, p.theta3))
        .collect();
    let targets: Vec<[f64; 2]> = reached.iter().map(|r| [r.x + 0.2, r.y]).collect();
    let design = Design {
        name: Some("wiper #1".into()),
        units: "mm".into(),
        linkage: l,
    };
    let n = cranks.len() as f64;
    let mut measures = serde_json::Map::new();
    for (k, v) in [
        ("sum_squared_error", 0.04 * n),
        ("rms_error", 0.2),
        ("max_error", 0.2),
    ] {
        measures.insert(k.into(), v.into());
    }
    let between = crankwright::task::check::worst_transmission(
        &l,
        cranks[0].to_radians(),
        cranks[3].to_radians(),
        false,
    )
    .to_degrees();
    let ds = DesignSummary {
        rank: 1,
        linkage: DesignFile::from(&design),
        crank_angles: cranks.to_vec(),
        grashof: l.grashof().name().into(),
        min_transmission: between,
        length_ratio: l.length_ratio(),
        reached: reached.iter().map(|r| [r.x, r.y]).collect(),
        measures,
    };
    let scenario: ScenarioFile = serde_yaml::from_str(&format!(
        "name: wiper\nunits: mm\ntask:\n  path:\n    points: {}\nlimits:\n  min_transmission: 25\n  crank: any\n",
        serde_json::to_string(&targets).unwrap()
    ))
    .unwrap();
    let summary = hand_made("path", "wiper", ds, scenario);
    (summary, vec![design])
}

// A crank that turns fully, its min_transmission taken between the targets (the scenario
// lets the input rock): the page names that scope, and shows the worst transmission over
// the full turn beside it, flagged below 40 deg (common practice, no source); the closed
// form of `full_turn_quality` is the reference. The crank runs clockwise from target 1 to
// 4, and the animation runs it so.
#[test]
fn full_turn_transmission_shown_beside_the_working_one() {
    let (summary, designs) = rocking_path_case();
    let html = render_report(&summary, &designs).unwrap();
    let doc = parse(&html);
    check_self_contained(&html, &doc);
    check_legends(&doc);
    let l = &designs[0].linkage;
    let full = full_turn_quality(l);
    assert!(full < 40.0 && full + 1.0 < summary.designs[0].min_transmission);
    let s = one(doc.root_element(), "section", "design");
    let (label, v, warn) = tile(s, "min_transmission").unwrap();
    assert!(label.ends_with("between targets"), "{label}");
    assert_relative_eq!(
        v,
        summary.designs[0].min_transmission,
        epsilon = 0.05 + 1e-9
    );
    assert!(!warn, "{v} is above 40 deg");
    let (label, v, warn) = tile(s, "full_turn_transmission").expect("full-turn tile");
    assert!(label.ends_with("full turn"), "{label}");
    assert_relative_eq!(v, full, epsilon = 0.05 + 1e-9);
    assert!(warn, "{v} below 40 deg is flagged");
    // The ranking: the scope in the heading, the full turn in its own column.
    let ranking = one(doc.root_element(), "table", "ranking");
    let heads: Vec<String> = ranking
        .descendants()
        .filter(|n| n.has_tag_name("th"))
        .map(text_of)
        .collect();
    assert!(
        heads
            .iter()
            .any(|h| h == "min transmission (°), between targets"),
        "{heads:?}"
    );
    assert!(heads.iter().any(|h| h == "full turn (°)"), "{heads:?}");
    let cell = one(ranking, "tr", "design-row")
        .children()
        .find(|c| c.attribute("data-key") == Some("full_turn_transmission"))
        .unwrap();
    assert_relative_eq!(
        text_of(cell).parse::<f64>().unwrap(),
        full,
        epsilon = 0.05 + 1e-9
    );
    assert!(has_class(&cell, "warn"));
    // The angle plot labels both, each with its scope.
    let angles = one(s, "figure", "angles");
    let labels: Vec<String> = within(angles, "g", "worst-mu")
        .into_iter()
        .map(text_of)
        .collect();
    assert_eq!(labels.len(), 2, "{labels:?}");
    assert!(labels[0].ends_with("between targets"), "{labels:?}");
    assert_eq!(labels[1], format!("worst {full:.1}° over a full turn"));
    check_direction(s, false);
    // The drawing at position 1 names the fixed pivots and the joints.
    let fig = one(s, "figure", "linkage");
    let mut named: Vec<String> = within(fig, "text", "joint-label")
        .into_iter()
        .map(text_of)
        .collect();
    named.sort();
    assert_eq!(named, ["A", "B", "O2", "O4"]);
}

// The mirror image of the function demo in its ground line runs clockwise (input span -90
// deg): the header says so and the animation turns the crank clockwise. The mounting angles
// shown are the summary's, and the precision points' output angles are the ones the
// linkage reaches there (Freudenstein's construction of `function_case` makes them exact).
#[test]
fn function_report_shows_mounting_angles_and_runs_clockwise() {
    for (summary, designs, ccw) in [
        {
            let (s, d) = function_case();
            (s, d, true)
        },
        {
            let (s, d) = function_case_turning(-30.0, -90.0, -45.0, -40.0);
            (s, d, false)
        },
    ] {
        let html = render_report(&summary, &designs).unwrap();
        let doc = parse(&html);
        check_legends(&doc);
        let d = &summary.designs[0];
        let f = summary.scenario.task.function.as_ref().unwrap();
        let s = one(doc.root_element(), "section", "design");
        check_direction(s, ccw);
        let mounting = one(s, "table", "mounting");
        let shown = |key: &str| -> f64 {
            let cell = mounting
                .descendants()
                .find(|n| n.attribute("data-key") == Some(key))
                .unwrap_or_else(|| panic!("no {key}"));
            text_of(cell).trim_end_matches('°').parse().unwrap()
        };
        let m = |k: &str| d.measures[k].as_f64().unwrap();
        assert_relative_eq!(
            shown("input_start"),
            m("input_start"),
            epsilon = 0.005 + 1e-9
        );
        assert_relative_eq!(shown("input_end"), m("input_end"), epsilon = 0.005 + 1e-9);
        assert_relative_eq!(
            shown("output_start"),
            m("output_start"),
            epsilon = 0.005 + 1e-9
        );
        assert_relative_eq!(
            shown("output_end"),
            m("output_start") + f.output_span,
            epsilon = 0.005 + 1e-9
        );
        // Precision points: x, crank and output from the ground line.
        let l = &designs[0].linkage;
        let table = one(s, "table", "at-targets");
        let heads: Vec<String> = table
            .descendants()
            .filter(|n| n.has_tag_name("th"))
            .map(text_of)
            .collect();
        assert_eq!(heads, ["#", "x", "crank (°)", "output (°)"]);
        let rows: Vec<Node> = table
            .descendants()
            .filter(|n| n.has_tag_name("tr") && n.parent().is_some_and(|p| p.has_tag_name("tbody")))
            .collect();
        assert_eq!(rows.len(), 3);
        let xs = d.measures["precision_x"].as_array().unwrap();
        for ((row, c), x) in rows.iter().zip(&d.crank_angles).zip(xs) {
            let cell = |key: &str| -> f64 {
                text_of(
                    row.children()
                        .find(|n| n.attribute("data-key") == Some(key))
                        .unwrap(),
                )
                .parse()
                .unwrap()
            };
            assert_relative_eq!(cell("x"), x.as_f64().unwrap(), max_relative = 5e-4);
            assert_relative_eq!(cell("crank"), *c, epsilon = 0.05 + 1e-9);
            let pose = crankwright::report::poses_at_cranks(l, &[*c]).unwrap()[0];
            let reached = (pose.theta4 - l.ground_angle()).to_degrees();
            let diff = (cell("output") - reached + 180.0).rem_euclid(360.0) - 180.0;
            assert!(
                diff.abs() < 0.05 + 1e-6,
                "output {} vs {reached}",
                cell("output")
            );
        }
        // No coupler point of its own: no curve, no dot, no dimension row.
        for fig in ["linkage", "animation"] {
            let fig = one(s, "figure", fig);
            assert!(within(fig, "path", "coupler-curve").is_empty(), "{fig:?}");
            assert!(within(fig, "circle", "coupler-point").is_empty());
            assert!(!legend_texts(fig).iter().any(|t| t == "coupler curve"));
        }
        let caption = one(s, "figure", "linkage")
            .children()
            .find(|c| c.has_tag_name("figcaption"))
            .map(text_of)
            .unwrap();
        assert!(!caption.contains("coupler curve"), "{caption}");
        let dims = one(s, "table", "dimensions");
        assert!(dims
            .descendants()
            .all(|n| n.attribute("data-key") != Some("coupler_point")));
        // The angle plot names its marks precision points and marks the x range's ends.
        let angles = one(s, "figure", "angles");
        let legend = legend_texts(angles);
        assert!(legend.iter().any(|t| t == "precision point"), "{legend:?}");
        assert!(!legend.iter().any(|t| t == "target"), "{legend:?}");
        assert_eq!(within(angles, "g", "range-end").len(), 2);
        let worst = text_of(within(angles, "g", "worst-mu")[0]);
        assert!(worst.ends_with("over the x range"), "{worst}");
        // The crank turns fully (a Grashof crank-rocker): its full turn is shown as well.
        assert!(l.grashof().input_turns_fully());
        let (label, _, _) = tile(s, "min_transmission").unwrap();
        assert!(label.ends_with("over the x range"), "{label}");
        let (_, v, warn) = tile(s, "full_turn_transmission").expect("full-turn tile");
        assert_relative_eq!(v, full_turn_quality(l), epsilon = 0.05 + 1e-9);
        assert_eq!(warn, v < 40.0);
    }
}

/// Whether a design of summary.json runs counter-clockwise from its first target to its
/// last: the sign of its crank-angle progression.
fn ccw_of(d: &serde_json::Value) -> bool {
    let c = d["crank_angles"].as_array().unwrap();
    c[c.len() - 1].as_f64().unwrap() > c[0].as_f64().unwrap()
}

// End to end on an invented path task whose input may rock (tests/scenarios/
// label-applicator.yaml): min_transmission is named as taken between the targets, and every
// design whose crank turns fully (Grashof, crank or ground shortest) also shows its worst
// transmission over the full turn, equal to the closed form of `full_turn_quality`, in its
// tile and in the ranking; the others show none. Each design's direction is stated and
// animated as its crank angles run.
#[test]
fn a_rocking_path_run_names_its_transmission_scopes() {
    let (_tmp, dir, _json, summary, html) =
        synth_run("tests/scenarios/label-applicator.yaml", PATH_ERRORS);
    let doc = parse(&html);
    let designs = load_designs(&dir.join("designs.yaml")).unwrap();
    let turns: Vec<bool> = designs
        .iter()
        .map(|d| d.linkage.grashof().input_turns_fully())
        .collect();
    let rows = within(doc.root_element(), "tr", "design-row");
    for ((row, design), turning) in rows.iter().zip(&designs).zip(&turns) {
        let cell = row
            .children()
            .find(|c| c.attribute("data-key") == Some("full_turn_transmission"));
        match (turning, cell) {
            (true, Some(c)) => assert_relative_eq!(
                text_of(c).parse::<f64>().unwrap(),
                full_turn_quality(&design.linkage),
                epsilon = 0.05 + 1e-9
            ),
            (false, Some(c)) => assert_eq!(text_of(c), "–"),
            (_, None) => assert!(!turns.iter().any(|t| *t), "no full-turn column"),
        }
    }
    let sections = within(doc.root_element(), "section", "design");
    for ((s, d), design) in sections.iter().zip(&summary.designs).zip(&designs) {
        let (label, _, _) = tile(*s, "min_transmission").unwrap();
        assert!(label.ends_with("between targets"), "{label}");
        match tile(*s, "full_turn_transmission") {
            Some((_, v, warn)) => {
                assert!(design.linkage.grashof().input_turns_fully());
                let full = full_turn_quality(&design.linkage);
                assert_relative_eq!(v, full, epsilon = 0.05 + 1e-9);
                // Flagged below 40 deg (common practice, no source) or the scenario's 25.
                assert_eq!(warn, v < 40.0);
            }
            None => assert!(!design.linkage.grashof().input_turns_fully()),
        }
        let c = &d.crank_angles;
        check_direction(*s, c[c.len() - 1] > c[0]);
    }
}

// A long target list is shown at evenly spaced targets (the first and last among them) in
// the scenario table, the drawings and the per-design table, so that the report stays small
// (10,000 targets once made a 95 MB report); the tables say how many of how many.
#[test]
fn a_long_target_list_is_shown_thinned() {
    let tmp = tempfile::tempdir().unwrap();
    let n = 300;
    let points: Vec<String> = (0..n)
        .map(|k| {
            let t = 0.004 * k as f64;
            format!("[{:.6}, {:.6}]", 100.0 * t.cos(), 100.0 * t.sin())
        })
        .collect();
    let scenario = tmp.path().join("long.yaml");
    std::fs::write(
        &scenario,
        format!(
            "units: mm\ntask:\n  path:\n    points: [{}]\nlimits:\n  crank: any\nsearch: {{seed: 1, starts: 60, keep: 2}}\n",
            points.join(", ")
        ),
    )
    .unwrap();
    let dir = tmp.path().join("run");
    synth(scenario.to_str().unwrap(), &dir);
    let html = std::fs::read_to_string(dir.join("report.html")).unwrap();
    let doc = parse(&html);
    let rows = |class: &str| {
        doc.descendants()
            .filter(|n| n.has_tag_name("tr") && has_class(n, class))
            .count()
    };
    let scenario_rows = rows("target-row");
    assert!(
        (2..=41).contains(&scenario_rows),
        "{scenario_rows} scenario rows"
    );
    assert!(html.contains(&format!("evenly spaced of {n}")));
    for table in within(doc.root(), "table", "at-targets") {
        let body_rows = table.descendants().filter(|r| r.has_tag_name("tr")).count();
        assert!(body_rows <= 42, "{body_rows} rows in an at-targets table");
    }
    assert!(html.len() < 2_000_000, "report of {} bytes", html.len());
}
