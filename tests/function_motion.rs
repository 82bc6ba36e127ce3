//! Function and motion generation: planted cases (data taken from a known linkage must give
//! that linkage back), a three-point design with a branch defect, and Burmester points.

use std::f64::consts::TAU;
use std::sync::atomic::AtomicBool;
use std::time::Duration;

use crankwright::exact::freudenstein::{design, AnglePair, FreudensteinOptions};
use crankwright::kinematics::position::closed_form;
use crankwright::kinematics::range::InputRange;
use crankwright::kinematics::sweep::SweepOptions;
use crankwright::scenario::{CrankRequirement, FunctionSource, FunctionSpec, Limits};
use crankwright::synthesis::{synthesize, EngineOptions, Silent};
use crankwright::task::{check_motion, FunctionTask, Rejection};
use crankwright::{Assembly, FourBar};

fn on_x_axis(r: [f64; 4], assembly: Assembly) -> FourBar {
    FourBar::on_x_axis(r, assembly).unwrap()
}

fn options(starts: usize) -> EngineOptions {
    EngineOptions {
        seed: 2,
        starts,
        keep: 3,
        time_limit: Duration::from_secs(300),
        ..EngineOptions::default()
    }
}

/// The planted crank-rocker's output angle (degrees from the ground line, unwrapped near
/// `near`) at crank angle `phi_deg`; the outside reference is the closed-form position.
fn output_deg(l: &FourBar, phi_deg: f64, near: f64) -> f64 {
    let p = closed_form(l, phi_deg.to_radians(), l.assembly()).unwrap();
    let d = p.theta4.to_degrees();
    d + ((near - d) / 360.0).round() * 360.0
}

fn planted_spec(l: &FourBar, starts_given: bool) -> FunctionSpec {
    // x is the crank angle in degrees, y the output angle: the table is the planted
    // linkage's own input-output relation, finely sampled.
    let (a, b) = (40.0, 120.0);
    let mut rows = Vec::new();
    let mut prev = output_deg(l, a, 0.0);
    for j in 0..=4000 {
        let x = a + (b - a) * j as f64 / 4000.0;
        let y = output_deg(l, x, prev);
        prev = y;
        rows.push((x, y));
    }
    let (y0, yf) = (rows[0].1, rows[rows.len() - 1].1);
    FunctionSpec {
        source: FunctionSource::Table(rows),
        x0: a,
        xf: b,
        input_span: (b - a).to_radians(),
        output_span: (yf - y0).to_radians(),
        input_start: starts_given.then(|| a.to_radians()),
        output_start: starts_given.then(|| y0.to_radians()),
        precision_points: None,
    }
}

#[test]
fn planted_function_generator_is_recovered() {
    // Invented crank-rocker of ground length 100 (the default ground length of a function
    // generator whose pivots are free, so lengths compare directly).
    let l = on_x_axis([100.0, 35.0, 110.0, 80.0], Assembly::Open);
    for starts_given in [true, false] {
        let spec = planted_spec(&l, starts_given);
        let limits = Limits {
            crank: CrankRequirement::Any,
            ..Limits::default()
        };
        let task = FunctionTask::new(&spec, &limits).unwrap();
        let out = synthesize(&task, &options(300), &AtomicBool::new(false), &Silent);
        let best = &out.designs.first().expect("a design").design;
        let got = best.linkage;
        for (g, w) in [
            (got.input_link(), 35.0),
            (got.coupler(), 110.0),
            (got.output_link(), 80.0),
            (got.ground(), 100.0),
        ] {
            assert!(
                (g - w).abs() < 1e-3 * l.size(),
                "starts given {starts_given}: {got:?}"
            );
        }
        let max = best.measures["max_error"].as_f64().unwrap();
        assert!(max < 1e-4, "max output error {max} deg");
    }
}

// A three-point design that meets its precision points exactly but cannot run from one to
// the next: the crank would have to pass through the range where the (non-Grashof) linkage
// does not assemble, i.e. a toggle separates the points. Freudenstein's equation recovers the
// linkage from the three points (it is blind to branches); the engine's Newton-Raphson
// verification rejects it. The outside reference for the precision points is the closed
// form.
#[test]
fn three_point_design_with_branch_defect_is_rejected() {
    let l = on_x_axis([5.0, 4.0, 9.0, 6.0], Assembly::Open);
    let InputRange::Arcs(arcs) = InputRange::of(&l) else {
        panic!("a triple rocker rocks")
    };
    let arc = arcs[0];
    assert!(arc.width() > 1.0);
    // Past the arc's end and round again to its start: monotonic, less than a turn.
    let phis = [
        arc.end.phi - 0.1,
        arc.start.phi + TAU + 0.2,
        arc.start.phi + TAU + 0.5,
    ];
    let pairs: Vec<AnglePair> = phis
        .iter()
        .map(|&p| AnglePair {
            theta2: p,
            theta4: closed_form(&l, p, Assembly::Open).unwrap().theta4,
        })
        .collect();
    let d = design(&pairs, 5.0, &FreudensteinOptions::default()).unwrap();
    assert!(d.max_output_error() < 1e-9);
    assert!((d.linkage.input_link() - 4.0).abs() < 1e-9);
    assert!((d.linkage.coupler() - 9.0).abs() < 1e-9);
    let limits = Limits {
        crank: CrankRequirement::Any,
        ..Limits::default()
    };
    let verdict = check_motion(&d.linkage, &d.theta2, &limits, &SweepOptions::default());
    assert_eq!(verdict.unwrap_err(), Rejection::BranchDefect);
    // The same three points run in the order the linkage can follow pass.
    let ok = [arc.start.phi + 0.2, arc.start.phi + 0.5, arc.end.phi - 0.1];
    assert!(check_motion(&d.linkage, &ok, &limits, &SweepOptions::default()).is_ok());
}
