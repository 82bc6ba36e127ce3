//! Very large inputs: a path of 10,000 targets is searched on a subset of them and then
//! verified and measured through every target.

mod common;
use common::planted;

use std::sync::atomic::AtomicBool;
use std::time::Duration;

use crankwright::kinematics::position::closed_form;
use crankwright::scenario::{Limits, PathSpec, PathTiming};
use crankwright::synthesis::{synthesize, EngineOptions, Outcome, Silent};
use crankwright::task::PathTask;
use crankwright::FourBar;
use nalgebra::Point2;

const N: usize = 10_000;

/// Crank angles (from the ground line) over 300 degrees and the coupler points there.
fn targets(l: &FourBar) -> (Vec<f64>, Vec<Point2<f64>>) {
    let phis: Vec<f64> = (0..N)
        .map(|i| (10.0 + 300.0 * i as f64 / (N - 1) as f64).to_radians())
        .collect();
    let points = phis
        .iter()
        .map(|phi| {
            let t2 = l.ground_angle() + phi;
            let p = closed_form(l, t2, l.assembly()).unwrap();
            l.coupler_point_at(t2, p.theta3)
        })
        .collect();
    (phis, points)
}

fn run(timing: PathTiming, points: Vec<Point2<f64>>, starts: usize) -> Outcome {
    let spec = PathSpec { points, timing };
    let task = PathTask::new(&spec, &Limits::default());
    let options = EngineOptions {
        seed: 4,
        starts,
        keep: 2,
        time_limit: Duration::from_secs(600),
        ..EngineOptions::default()
    };
    synthesize(&task, &options, &AtomicBool::new(false), &Silent)
}

/// Every design covers every target, and its reported error is the sum of squared distances
/// recomputed here from the closed-form position (circle intersection, domain notes) at the
/// reported crank angles, an independent route from the Newton-Raphson sweep.
fn check_covers_all(out: &Outcome, points: &[Point2<f64>]) {
    assert!(!out.designs.is_empty());
    for d in &out.designs {
        let v = &d.design;
        assert_eq!(v.crank_angles.len(), N);
        assert_eq!(v.reached.len(), N);
        let dir = (v.crank_angles[1] - v.crank_angles[0]).signum();
        assert!(v.crank_angles.windows(2).all(|w| (w[1] - w[0]) * dir > 0.0));
        let l = &v.linkage;
        let sse: f64 = v
            .crank_angles
            .iter()
            .zip(points)
            .map(|(phi, p)| {
                let t2 = l.ground_angle() + phi;
                let pose = closed_form(l, t2, l.assembly()).unwrap();
                (l.coupler_point_at(t2, pose.theta3) - p).norm_squared()
            })
            .sum();
        approx::assert_relative_eq!(v.error, sse, max_relative = 1e-6, epsilon = 1e-12);
    }
}

#[test]
fn ten_thousand_targets_free_timing() {
    let (_, points) = targets(&planted());
    let out = run(PathTiming::Free, points.clone(), 40);
    check_covers_all(&out, &points);
    // The targets lie on the planted coupler curve, so a zero error is reachable; the best
    // design must come close over all 10,000 targets, not only the searched subset.
    let rms = (out.designs[0].design.error / N as f64).sqrt();
    assert!(rms < 1e-8 * 40.0, "rms {rms}");
}

#[test]
fn ten_thousand_targets_prescribed_timing() {
    let (phis, points) = targets(&planted());
    let out = run(PathTiming::Absolute(phis.clone()), points.clone(), 40);
    check_covers_all(&out, &points);
    for (a, b) in out.designs[0].design.crank_angles.iter().zip(&phis) {
        approx::assert_relative_eq!(a, b, epsilon = 1e-12);
    }
    let rms = (out.designs[0].design.error / N as f64).sqrt();
    assert!(rms < 1e-8 * 40.0, "rms {rms}");
}

/// Motion generation with many poses follows the same route: searched on a subset, then
/// checked and measured, position and frame angle, at every pose.
#[test]
fn two_thousand_poses_motion() {
    let l = planted();
    let gamma = 0.4;
    let poses: Vec<(Point2<f64>, f64)> = (0..2000)
        .map(|i| {
            let phi = (10.0 + 300.0 * i as f64 / 1999.0).to_radians();
            let t2 = l.ground_angle() + phi;
            let p = closed_form(&l, t2, l.assembly()).unwrap();
            (l.coupler_point_at(t2, p.theta3), p.theta3 + gamma)
        })
        .collect();
    let spec = crankwright::scenario::MotionSpec { poses };
    let task = PathTask::motion(&spec, &Limits::default());
    let options = EngineOptions {
        seed: 4,
        starts: 100,
        keep: 2,
        time_limit: Duration::from_secs(600),
        ..EngineOptions::default()
    };
    let out = synthesize(&task, &options, &AtomicBool::new(false), &Silent);
    let best = &out.designs.first().expect("a design").design;
    assert_eq!(best.crank_angles.len(), 2000);
    assert_eq!(best.reached.len(), 2000);
    let rms = best.measures["rms_error"].as_f64().unwrap();
    let max_angle = best.measures["max_angle_error"].as_f64().unwrap();
    assert!(rms < 1e-8 * 40.0, "rms {rms}");
    assert!(max_angle < 1e-6, "max angle error {max_angle} deg");
}
