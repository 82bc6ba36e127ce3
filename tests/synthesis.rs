//! Whole synthesis jobs: planted problems must be recovered.

mod common;
use common::planted;

use std::sync::atomic::AtomicBool;
use std::time::Duration;

use crankwright::kinematics::position::closed_form;
use crankwright::scenario::{Limits, PathSpec, PathTiming};
use crankwright::synthesis::{synthesize, EngineOptions, Silent};
use crankwright::task::PathTask;
use crankwright::FourBar;
use nalgebra::Point2;

fn targets(l: &FourBar, phis_deg: &[f64]) -> Vec<Point2<f64>> {
    phis_deg
        .iter()
        .map(|d| {
            let t2 = l.ground_angle() + d.to_radians();
            let p = closed_form(l, t2, l.assembly()).unwrap();
            l.coupler_point_at(t2, p.theta3)
        })
        .collect()
}

fn options(starts: usize) -> EngineOptions {
    EngineOptions {
        seed: 3,
        starts,
        time_limit: Duration::from_secs(120),
        keep: 5,
        ..EngineOptions::default()
    }
}

// Planted case, prescribed timing: the targets lie exactly on the planted linkage's coupler
// curve at the given crank angles, so an error of (numerically) zero is reachable; the
// outside reference is the closed-form position of the planted linkage.
#[test]
fn planted_prescribed_timing_is_recovered() {
    let l = planted();
    let phis = [20.0, 70.0, 120.0, 170.0, 220.0];
    let pts = targets(&l, &phis);
    let spec = PathSpec {
        points: pts.clone(),
        timing: PathTiming::Absolute(phis.iter().map(|d: &f64| d.to_radians()).collect()),
    };
    let task = PathTask::new(&spec, &Limits::default());
    let out = synthesize(&task, &options(400), &AtomicBool::new(false), &Silent);
    let best = &out.designs.first().expect("a design").design;
    let size = task.frame().scale;
    let rms = (best.error / pts.len() as f64).sqrt();
    assert!(
        rms < 1e-9 * size,
        "rms {rms}, designs {:?}",
        out.designs.len()
    );
}

#[test]
fn planted_free_timing_is_recovered() {
    let l = planted();
    let phis = [10.0, 60.0, 100.0, 160.0, 250.0];
    let pts = targets(&l, &phis);
    let spec = PathSpec {
        points: pts.clone(),
        timing: PathTiming::Free,
    };
    let task = PathTask::new(&spec, &Limits::default());
    let out = synthesize(&task, &options(400), &AtomicBool::new(false), &Silent);
    let best = &out.designs.first().expect("a design").design;
    let size = task.frame().scale;
    let rms = (best.error / pts.len() as f64).sqrt();
    assert!(rms < 1e-9 * size, "rms {rms}");
}

// Planted motion generation: poses of a frame fixed to the planted linkage's coupler (origin
// at the coupler point, turned 25 deg from the coupler line) at six crank angles; the
// outside reference is the planted linkage's closed-form position.
#[test]
fn planted_motion_is_recovered() {
    use crankwright::scenario::MotionSpec;
    let l = planted();
    let gamma = 25f64.to_radians();
    let poses = [15.0, 55.0, 95.0, 140.0, 190.0, 240.0]
        .iter()
        .map(|d: &f64| {
            let t2 = l.ground_angle() + d.to_radians();
            let p = closed_form(&l, t2, l.assembly()).unwrap();
            (l.coupler_point_at(t2, p.theta3), p.theta3 + gamma)
        })
        .collect();
    let task = PathTask::motion(&MotionSpec { poses }, &Limits::default());
    let out = synthesize(&task, &options(400), &AtomicBool::new(false), &Silent);
    let best = &out.designs.first().expect("a design").design;
    let size = task.frame().scale;
    assert!(best.error.sqrt() < 1e-8 * size, "error {}", best.error);
    let max_angle = best.measures["max_angle_error"].as_f64().unwrap();
    assert!(max_angle < 1e-7, "{max_angle} deg");
}

// Relative timing: only the differences of the planted crank angles are given, shifted by an
// arbitrary offset; the planted linkage still fits exactly.
#[test]
fn planted_relative_timing_is_recovered() {
    let l = planted();
    let phis = [40.0, 85.0, 130.0, 175.0, 220.0];
    let pts = targets(&l, &phis);
    let spec = PathSpec {
        points: pts.clone(),
        timing: PathTiming::Relative(
            phis.iter()
                .map(|d: &f64| (d - 100.0).to_radians())
                .collect(),
        ),
    };
    let task = PathTask::new(&spec, &Limits::default());
    let out = synthesize(&task, &options(400), &AtomicBool::new(false), &Silent);
    let best = &out.designs.first().expect("a design").design;
    let rms = (best.error / pts.len() as f64).sqrt();
    assert!(rms < 1e-9 * task.frame().scale, "rms {rms}");
}

// Five poses: Burmester's points give the exact dyads, so even a small budget recovers the
// planted linkage (half the motion task's starts come from the exact method). Reference:
// the planted linkage's closed-form positions.
#[test]
fn planted_five_pose_motion_is_recovered_from_burmester_starts() {
    use crankwright::scenario::MotionSpec;
    let l = planted();
    let poses = [20.0, 65.0, 110.0, 150.0, 200.0]
        .iter()
        .map(|d: &f64| {
            let t2 = l.ground_angle() + d.to_radians();
            let p = closed_form(&l, t2, l.assembly()).unwrap();
            (l.coupler_point_at(t2, p.theta3), p.theta3 - 0.4)
        })
        .collect();
    let task = PathTask::motion(&MotionSpec { poses }, &Limits::default());
    let out = synthesize(&task, &options(40), &AtomicBool::new(false), &Silent);
    let best = &out.designs.first().expect("a design").design;
    assert!(
        best.error.sqrt() < 1e-8 * task.frame().scale,
        "error {}",
        best.error
    );
}
