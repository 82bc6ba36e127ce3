//! The design report end to end: `synth` writes report.html, design-N.svg and
//! design-N-curve.csv; `report DIR` redraws them; the page and every SVG are well-formed XML
//! holding the expected drawings, and the numbers shown are those of summary.json.

mod common;
use common::{root, run};

use std::path::{Path, PathBuf};

use approx::assert_relative_eq;
use crankwright::report::{render_report, ReportError, MOTION_STEP_DEG};
use crankwright::scenario::{FunctionFile, ScenarioFile, TaskFile};
use crankwright::synthesis::output::{DesignSummary, Summary};
use crankwright::{load_designs, Assembly, CouplerPoint, Design, DesignFile, FourBar};
use nalgebra::{Point2, Vector2};
use roxmltree::{Document, Node, ParsingOptions};

/// `synth` of a bundled scenario with few starts into a new folder: the folder (kept while
/// the returned guard lives), summary.json as JSON and as a [`Summary`], and report.html.
fn synth_run(
    scenario: &str,
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
    (
        tmp,
        dir,
        serde_json::from_str(&text).unwrap(),
        serde_json::from_str(&text).unwrap(),
        html,
    )
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

/// Rows `crank, theta2, cx, cy, theta3, theta4, mu` of a curve export.
fn csv_rows(text: &str) -> Vec<Vec<f64>> {
    let mut lines = text.lines();
    assert_eq!(
        lines.next(),
        Some("crank_deg,theta2_deg,cx_mm,cy_mm,theta3_deg,theta4_deg,mu_deg")
    );
    lines
        .map(|r| r.split(',').map(|v| v.parse().unwrap()).collect())
        .collect()
}

#[test]
fn path_report_from_synth_and_redrawn_by_report() {
    let (_tmp, dir, json, summary, html) = synth_run("tests/published/arc5-timed.yaml");
    let designs = load_designs(&dir.join("designs.yaml")).unwrap();
    let n = designs.len();
    assert!(n >= 1);
    let doc = parse(&html);
    check_self_contained(&html, &doc);
    check_ranking(
        &doc,
        &json,
        &["sum_squared_error", "rms_error", "max_error"],
    );

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
    }

    // Exports: the CAD drawing at the first target and the motion every degree of crank
    // (the crank turns fully: 360 rows; the ground line lies along +x, so the crank angles
    // from the ground line are whole degrees).
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
            .map(|r| r[2])
            .chain([l.input_pivot().x, l.output_pivot().x]);
        let ys = rows
            .iter()
            .map(|r| r[3])
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
    let (_tmp, dir, json, summary, html) = synth_run("scenarios/bin-lid.yaml");
    let doc = parse(&html);
    check_self_contained(&html, &doc);
    check_ranking(
        &doc,
        &json,
        &[
            "sum_squared_error",
            "rms_error",
            "max_error",
            "max_angle_error",
        ],
    );
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
                assert!(end[6].min(180.0 - end[6]) < 1e-3, "toggle mu {}", end[6]);
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
    let (x0, xf) = (1.0f64, 3.0f64);
    let f = |x: f64| x.powf(1.5);
    let (input_start, span_in, output_start, span_out) = (30.0f64, 90.0, 45.0f64, 40.0);
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
    for (k, v) in [
        ("input_start", input_start),
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
        limits: Default::default(),
        search: Default::default(),
    };
    let summary = Summary {
        task: "function".into(),
        name: "dial".into(),
        units: "mm".into(),
        seed: 1,
        starts: 10,
        starts_run: 4,
        seconds: 0.5,
        evaluations: 1234,
        interrupted: true,
        stop_reason: Some("time-limit".into()),
        accepted: 1,
        rejected: [("not-assembled".to_string(), 3usize)]
            .into_iter()
            .collect(),
        designs: vec![ds],
        scenario,
        caution: crankwright::SAFETY_NOTE.into(),
    };
    (summary, vec![design])
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
