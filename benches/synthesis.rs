//! Synthesis speed: planted five-target path problems (free and prescribed timing) recovered
//! to error ~0, and one published case. Targets in README: planted problems under 1 s, the
//! published cases within 10 s (2 cores).

// reason: criterion's macros generate undocumented items.
#![allow(missing_docs)]

use std::sync::atomic::AtomicBool;
use std::time::Duration;

use criterion::{criterion_group, criterion_main, Criterion};
use nalgebra::Point2;

use crankwright::kinematics::position::closed_form;
use crankwright::scenario::{Limits, PathSpec, PathTiming};
use crankwright::synthesis::{synthesize, EngineOptions, Silent};
use crankwright::task::{PathTask, Task};
use crankwright::{Assembly, CouplerPoint, FourBar};

fn planted_spec(timing: bool) -> PathSpec {
    let l = FourBar::new(
        Point2::new(0.0, 0.0),
        Point2::new(40.0, 5.0),
        12.0,
        35.0,
        30.0,
        CouplerPoint { p: 15.0, q: 10.0 },
        Assembly::Open,
    )
    .expect("valid linkage");
    let phis: [f64; 5] = [10.0, 60.0, 100.0, 160.0, 250.0];
    let points = phis
        .iter()
        .map(|d| {
            let t2 = l.ground_angle() + d.to_radians();
            let p = closed_form(&l, t2, Assembly::Open).expect("assembles");
            l.coupler_point_at(t2, p.theta3)
        })
        .collect();
    PathSpec {
        points,
        timing: if timing {
            PathTiming::Absolute(phis.iter().map(|d| d.to_radians()).collect())
        } else {
            PathTiming::Free
        },
    }
}

fn run(task: &dyn Task, starts: usize) -> f64 {
    let options = EngineOptions {
        seed: 3,
        starts,
        keep: 5,
        time_limit: Duration::from_secs(600),
        ..EngineOptions::default()
    };
    let out = synthesize(task, &options, &AtomicBool::new(false), &Silent);
    out.designs
        .first()
        .map_or(f64::INFINITY, |d| d.design.error)
}

fn bench(c: &mut Criterion) {
    let mut g = c.benchmark_group("synthesis");
    g.sample_size(10);
    g.measurement_time(Duration::from_secs(8));
    for (name, timing) in [("planted5_prescribed", true), ("planted5_free", false)] {
        let spec = planted_spec(timing);
        let task = PathTask::new(&spec, &Limits::default());
        // The budget must recover the planted linkage; checked once outside the timing.
        let err = run(&task, 400);
        assert!(
            err.sqrt() < 1e-9 * task.frame().scale,
            "{name}: error {err}"
        );
        g.bench_function(name, |b| b.iter(|| run(&task, 400)));
    }
    g.finish();
}

criterion_group! {
    name = benches;
    config = Criterion::default();
    targets = bench
}
criterion_main!(benches);
