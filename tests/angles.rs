//! One crank angle convention in every command and file: `synth`'s prescribed crank angles,
//! summary.json, `check`, `sweep` (text, JSON, CSV) and the curve export all measure the
//! crank from the ground line O2 -> O4, checked on a design whose ground line is turned and
//! moved away from the origin; and the time ratio of `check` against the closed form.

mod common;
use common::run;

use std::f64::consts::PI;

use crankwright::kinematics::position::{position_at, NewtonOptions};
use crankwright::{Assembly, CouplerPoint, FourBar};
use nalgebra::Point2;

/// Ground line direction of the planted design, degrees from +x.
const TILT_DEG: f64 = 35.0;
/// Prescribed crank angles, degrees from the ground line.
const CRANKS: [f64; 5] = [20.0, 60.0, 100.0, 140.0, 180.0];

/// A crank-rocker (12 + 42 < 35 + 30, crank shortest) of invented proportions, its ground
/// line turned 35 deg and O2 moved to (30, -12).
fn planted() -> FourBar {
    let o2 = Point2::new(30.0, -12.0);
    let t = TILT_DEG.to_radians();
    FourBar::new(
        o2,
        o2 + 42.0 * nalgebra::Vector2::new(t.cos(), t.sin()),
        12.0,
        35.0,
        30.0,
        CouplerPoint { p: 15.0, q: 10.0 },
        Assembly::Open,
    )
    .unwrap()
}

/// The planted coupler point at crank angle `c` degrees from the ground line: the
/// loop-closure solution at `theta2 = theta1 + c`, by definition of that angle.
fn target(l: &FourBar, c: f64) -> Point2<f64> {
    let t2 = l.ground_angle() + c.to_radians();
    let p = position_at(l, t2, &NewtonOptions::default()).unwrap();
    l.coupler_point_at(t2, p.theta3)
}

fn json(out: &std::process::Output) -> serde_json::Value {
    assert!(out.status.success());
    serde_json::from_slice(&out.stdout).expect("JSON output")
}

/// Rows of a CSV text as maps from column name to number.
fn csv(text: &str) -> Vec<std::collections::HashMap<String, f64>> {
    let mut lines = text.lines();
    let head: Vec<&str> = lines.next().unwrap().split(',').collect();
    lines
        .map(|l| {
            head.iter()
                .zip(l.split(','))
                .filter_map(|(h, v)| Some((h.to_string(), v.parse().ok()?)))
                .collect()
        })
        .collect()
}

// The targets are the planted design's coupler points at the prescribed crank angles, so the
// design synth finds (with both fixed pivots given) puts its coupler point on each target at
// the crank angle of that target; every command must call that position by the same angle.
#[test]
fn every_command_measures_the_crank_from_the_ground_line() {
    let l = planted();
    let tmp = tempfile::tempdir().unwrap();
    let points: Vec<String> = CRANKS
        .iter()
        .map(|&c| {
            let p = target(&l, c);
            format!("[{}, {}]", p.x, p.y)
        })
        .collect();
    let (o2, o4) = (l.input_pivot(), l.output_pivot());
    let scenario = format!(
        "name: tilted\ntask:\n  path:\n    points: [{}]\n    crank_angles: [{}]\n\
         limits:\n  input_pivot: [{}, {}]\n  output_pivot: [{}, {}]\n\
         search:\n  seed: 3\n  starts: 300\n",
        points.join(", "),
        CRANKS.map(|c| c.to_string()).join(", "),
        o2.x,
        o2.y,
        o4.x,
        o4.y
    );
    let sc = tmp.path().join("tilted.yaml");
    std::fs::write(&sc, scenario).unwrap();
    let dir = tmp.path().join("out");
    let out = run(&[
        "synth",
        sc.to_str().unwrap(),
        "--out",
        dir.to_str().unwrap(),
    ]);
    assert!(out.status.success());
    let summary: serde_json::Value =
        serde_json::from_slice(&std::fs::read(dir.join("summary.json")).unwrap()).unwrap();
    let best = &summary["designs"][0];
    let max_error = best["max_error"].as_f64().unwrap();
    // The planted design is in the search space: found to round-off (relative to its 42 mm).
    assert!(max_error < 1e-6, "{best}");
    let tol = 1e-5;
    // summary.json: the prescribed angles, from the ground line.
    let got: Vec<f64> = best["crank_angles"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_f64().unwrap())
        .collect();
    for (g, c) in got.iter().zip(CRANKS) {
        assert!((g - c).abs() < 1e-6, "{got:?}");
    }
    let designs = dir.join("designs.yaml");
    let designs = designs.to_str().unwrap();

    // sweep --json: the row at crank angle c from the ground line puts the coupler point on
    // the target prescribed at c.
    let v = json(&run(&["sweep", designs, "--step", "20", "--json"]));
    assert_eq!(v["format_version"], 2);
    assert!((v["ground_line_global_deg"].as_f64().unwrap() - TILT_DEG).abs() < 1e-6);
    let rows = v["rows"].as_array().unwrap();
    assert_eq!(rows.len(), 18);
    for &c in &CRANKS {
        let row = rows
            .iter()
            .find(|r| (r["crank_from_ground_deg"].as_f64().unwrap() - c).abs() < 1e-9)
            .unwrap_or_else(|| panic!("no row at {c}"));
        let p = target(&l, c);
        let (x, y) = (
            row["coupler_point_x"].as_f64().unwrap(),
            row["coupler_point_y"].as_f64().unwrap(),
        );
        assert!((x - p.x).hypot(y - p.y) < tol, "{c}: {row}");
        // The global crank direction is the angle from the ground line plus the tilt.
        let g = row["crank_global_deg"].as_f64().unwrap();
        assert!(
            ((g - c - TILT_DEG).rem_euclid(360.0)).min((c + TILT_DEG - g).rem_euclid(360.0)) < 1e-6
        );
    }

    // sweep text: its first row is crank 0 from the ground line; the table says so.
    let text = run(&["sweep", designs, "--step", "20"]);
    let text = String::from_utf8(text.stdout).unwrap();
    assert!(
        text.contains("from the ground line O2 -> O4 (which points 35.000 deg from +x)"),
        "{text}"
    );
    let first = text
        .lines()
        .find(|l| !l.starts_with('#') && !l.trim_start().starts_with("crank"))
        .unwrap();
    assert!(first.trim_start().starts_with("0.000 "), "{text}");

    // sweep --csv: the same rows under role names.
    let csv_path = tmp.path().join("sweep.csv");
    assert!(run(&[
        "sweep",
        designs,
        "--step",
        "20",
        "--csv",
        csv_path.to_str().unwrap()
    ])
    .status
    .success());
    let table = csv(&std::fs::read_to_string(&csv_path).unwrap());
    for &c in &CRANKS {
        let row = table
            .iter()
            .find(|r| (r["crank_from_ground_deg"] - c).abs() < 1e-9)
            .unwrap();
        let p = target(&l, c);
        assert!((row["coupler_point_x_mm"] - p.x).hypot(row["coupler_point_y_mm"] - p.y) < tol);
    }

    // The curve export of the report, one row per degree of crank from the ground line.
    let curve = std::fs::read_to_string(dir.join("design-1-curve.csv")).unwrap();
    assert!(
        !curve.contains("theta"),
        "{}",
        curve.lines().next().unwrap()
    );
    let table = csv(&curve);
    assert_eq!(table.len(), 360);
    for &c in &CRANKS {
        let row = table
            .iter()
            .find(|r| (r["crank_from_ground_deg"] - c).abs() < 1e-9)
            .unwrap_or_else(|| panic!("no curve row at {c}"));
        let p = target(&l, c);
        assert!((row["coupler_point_x_mm"] - p.x).hypot(row["coupler_point_y_mm"] - p.y) < tol);
    }

    // check: the transmission angle is extreme where the crank lies along the ground line
    // (|A - O4| = r1 - r2, smallest) and opposite it (r1 + r2): 0 and 180 deg from the ground
    // line whatever the tilt (law of cosines, cos mu = (r3^2 + r4^2 - |A - O4|^2) / (2 r3 r4)).
    let v = json(&run(&["check", designs, "--json"]));
    assert_eq!(v["format_version"], 2);
    let t = &v["transmission"];
    assert!(t["min_at_crank_deg"].as_f64().unwrap().abs() < 1e-6, "{t}");
    assert!(
        (t["max_at_crank_deg"].as_f64().unwrap() - 180.0).abs() < 1e-6,
        "{t}"
    );
}

// Time ratio of `check` against the closed form, on the tilted crank-rocker: the output's
// limit positions come where crank and coupler are in line, |O2 B| = r3 + r2 (stretched)
// and r3 - r2 (folded); the law of cosines in the triangle O2 O4 B gives the angle psi of
// O2 -> B from the ground line, the crank lies along O2 -> B when stretched and opposite
// when folded, so the crank turns 180 + beta between them one way and 180 - beta the other
// (beta = psi_folded - psi_stretched), and the time ratio (slower stroke over faster) is
// Q = (180 + beta) / (180 - beta) (Myszka, "Machines and Mechanisms", time ratio of a
// crank-rocker, from memory). The planted design is open with B on the left of O2 -> O4
// (y > 0 in the ground frame), where the stretched limit is the output's smallest angle,
// so a counter-clockwise crank raises the output over 180 + beta: the slower stroke.
#[test]
fn check_gives_the_time_ratio_and_limit_positions_in_closed_form() {
    let l = planted();
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path().join("d.yaml");
    let (o2, o4) = (l.input_pivot(), l.output_pivot());
    std::fs::write(
        &d,
        format!(
            "input_pivot: [{}, {}]\noutput_pivot: [{}, {}]\ninput_link: 12\ncoupler: 35\n\
             output_link: 30\ncoupler_point: [15, 10]\nassembly: open\n",
            o2.x, o2.y, o4.x, o4.y
        ),
    )
    .unwrap();
    let d = d.to_str().unwrap();
    let (r1, r2, r3, r4): (f64, f64, f64, f64) = (42.0, 12.0, 35.0, 30.0);
    let psi = |x: f64| ((x * x + r1 * r1 - r4 * r4) / (2.0 * x * r1)).acos();
    let (ps, pf) = (psi(r3 + r2), psi(r3 - r2));
    let beta = (pf - ps).to_degrees();
    let q = (180.0 + beta) / (180.0 - beta);
    let (crank_min, crank_max) = (ps.to_degrees(), (pf + PI).to_degrees());
    let near = |a: f64, b: f64| (a - b).abs() < 1e-6;

    let v = json(&run(&["check", d, "--json", "--speed", "30"]));
    let t = &v["time_ratio"];
    assert!(near(t["ratio"].as_f64().unwrap(), q), "{t} vs {q}");
    assert_eq!(t["crank_turns"], "counter-clockwise");
    let slow = &t["slower"];
    assert_eq!(slow["output_turns"], "counter-clockwise");
    assert!(
        near(slow["crank_rotation_deg"].as_f64().unwrap(), 180.0 + beta),
        "{t}"
    );
    assert!(
        near(slow["from_crank_deg"].as_f64().unwrap(), crank_min),
        "{t}"
    );
    assert!(
        near(slow["to_crank_deg"].as_f64().unwrap(), crank_max),
        "{t}"
    );
    // At 30 rpm a turn takes 2 s.
    assert!(near(
        slow["seconds"].as_f64().unwrap(),
        2.0 * (180.0 + beta) / 360.0
    ));
    let b = &v["branches"][0];
    assert!(near(
        b["output_min"]["crank_from_ground_deg"].as_f64().unwrap(),
        crank_min
    ));
    assert!(near(
        b["output_max"]["crank_from_ground_deg"].as_f64().unwrap(),
        crank_max
    ));
    assert_eq!(
        b["output_min"]["position"],
        "crank and coupler stretched in line"
    );

    // A clockwise crank: the same ratio, the strokes swap.
    let v = json(&run(&["check", d, "--json", "--speed", "-30"]));
    let t = &v["time_ratio"];
    assert!(near(t["ratio"].as_f64().unwrap(), q));
    assert_eq!(t["crank_turns"], "clockwise");
    assert_eq!(t["slower"]["output_turns"], "clockwise");
    assert!(near(
        t["slower"]["crank_rotation_deg"].as_f64().unwrap(),
        180.0 + beta
    ));

    let text = String::from_utf8(run(&["check", d]).stdout).unwrap();
    assert!(text.contains(&format!("time ratio: {q:.4}")), "{text}");
}

// A rocking input whose arc crosses the ground line: `sweep` lists it in the order the
// crank passes it, `check` names the usable part of the arc and the working range asked for.
// Triple-rocker r1 = 8, r2 = 3, r3 = 4, r4 = 5.5 (s + l = 3 + 8 > 4 + 5.5): |A - O4| runs
// from r1 - r2 = 5 > r4 - r3 to r1 + r2 = 11 > r3 + r4, so the input rocks between extended
// toggles at phi = -+a, cos a = (r1^2 + r2^2 - (r3 + r4)^2) / (2 r1 r2) (law of cosines).
#[test]
fn a_rocking_input_across_the_ground_line() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path().join("rocker.yaml");
    let t = 1.2f64;
    std::fs::write(
        &d,
        format!(
            "input_pivot: [3, 4]\noutput_pivot: [{}, {}]\ninput_link: 3\ncoupler: 4\n\
             output_link: 5.5\nassembly: open\n",
            3.0 + 8.0 * t.cos(),
            4.0 + 8.0 * t.sin()
        ),
    )
    .unwrap();
    let d = d.to_str().unwrap();
    let a = ((64.0f64 + 9.0 - 9.5 * 9.5) / 48.0).acos().to_degrees();
    let v = json(&run(&["sweep", d, "--json", "--step", "10"]));
    let cranks: Vec<f64> = v["rows"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| r["crank_from_ground_deg"].as_f64().unwrap())
        .collect();
    let n = (a / 10.0).floor() as i32;
    let want: Vec<f64> = (-n..=n)
        .map(|k| (10.0 * f64::from(k)).rem_euclid(360.0))
        .collect();
    assert_eq!(cranks.len(), want.len(), "{cranks:?}");
    for (c, w) in cranks.iter().zip(&want) {
        assert!((c - w).abs() < 1e-9, "{cranks:?}");
    }
    let v = json(&run(&["check", d, "--json", "--crank-range", "-20", "30"]));
    let b = &v["branches"][0];
    assert!((b["from"]["crank_from_ground_deg"].as_f64().unwrap() - (360.0 - a)).abs() < 1e-6);
    assert!((b["to"]["crank_from_ground_deg"].as_f64().unwrap() - a).abs() < 1e-6);
    // Usable part: min(mu, 180 - mu) >= 40 deg; mu is smallest at phi = 0, |A - O4| = 5.
    let mu0 = ((16.0f64 + 30.25 - 25.0) / 44.0).acos().to_degrees();
    let u = &b["usable"][0];
    assert!((u["min_deg"].as_f64().unwrap() - mu0).abs() < 1e-6, "{u}");
    assert!(u["min_at_crank_deg"].as_f64().unwrap().abs() < 1e-9, "{u}");
    assert!((u["max_deg"].as_f64().unwrap() - 140.0).abs() < 1e-6, "{u}");
    let w = &v["working_range"]["transmission"];
    assert!((w["min_deg"].as_f64().unwrap() - mu0).abs() < 1e-6, "{w}");
    // The range past the toggle at phi = a is refused, with exit code 1.
    let out = run(&["check", d, "--crank-range", "0", &format!("{}", a + 5.0)]);
    assert_eq!(out.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&out.stderr).contains("toggle"));
}
