//! Positions per second of a 360-step Newton-Raphson continuation sweep (tolerance `1e-12`
//! of the linkage size) against the closed-form circle intersection at the same 360 crank
//! angles, for a crank-rocker and a double-crank. Both produce the same poses (crank,
//! coupler and output angles) at the same angles `k * 1 deg`, each from the linkage as an
//! opaque input once per sweep. Target (issue 15; issue 2 had 1.5): the sweep costs at most
//! 1.2 times the closed form. After the criterion run the bench prints the measured ratio
//! for each linkage, read from criterion's own estimates: the ratio of the medians of the
//! two samples (robust to the bursts of other work on a shared machine), and of the means.
//!
//! Run with `cargo bench --bench position_sweep`.

use std::f64::consts::TAU;
use std::hint::black_box;

use crankwright::{closed_form, sweep, Assembly, CouplerPoint, FourBar, SweepOptions};
use criterion::{BenchmarkId, Criterion, Throughput};
use nalgebra::Point2;

mod common;
use common::{criterion_home, estimates_ns};

/// Crank angles per sweep.
const POSITIONS: usize = 360;
/// The target: Newton-Raphson sweep time over closed-form time.
const TARGET_RATIO: f64 = 1.2;
const GROUP: &str = "position_sweep";

/// The benchmarked linkages: invented demo proportions of each Grashof class that turns
/// its crank fully.
fn linkages() -> Vec<(&'static str, FourBar)> {
    let mk = |o4: (f64, f64), r2, r3, r4, cp: (f64, f64), asm| {
        FourBar::new(
            Point2::new(0.0, 0.0),
            Point2::new(o4.0, o4.1),
            r2,
            r3,
            r4,
            CouplerPoint { p: cp.0, q: cp.1 },
            asm,
        )
        .expect("valid demo linkage")
    };
    vec![
        // The vent-opener demo design (scenarios/vent-opener.design.yaml).
        (
            "crank-rocker",
            mk((80.0, 0.0), 25.0, 70.0, 55.0, (30.0, 15.0), Assembly::Open),
        ),
        // Shortest link is the ground: both cranks turn; tilted ground line, crossed.
        (
            "double-crank",
            mk(
                (18.0, 9.0),
                45.0,
                60.0,
                50.0,
                (20.0, -10.0),
                Assembly::Crossed,
            ),
        ),
    ]
}

fn bench(c: &mut Criterion) {
    let step = 1f64.to_radians();
    let options = SweepOptions::default();
    let mut group = c.benchmark_group(GROUP);
    group.throughput(Throughput::Elements(POSITIONS as u64));
    for (name, l) in linkages() {
        // Sanity: the sweep really produces the 360 positions being compared.
        let s = sweep(&l, step, &options);
        assert_eq!(s.branches.len(), 1, "{name} must turn its crank fully");
        assert_eq!(s.branches[0].poses.len(), POSITIONS);
        // ... at the same crank angles as the closed form, with the same poses.
        for (k, p) in s.branches[0].poses.iter().enumerate() {
            let c = closed_form(&l, k as f64 * step, l.assembly()).expect("assembles");
            let turns = |a: f64| (a / TAU - (a / TAU).round()).abs() * TAU;
            assert_eq!(
                p.theta2.to_bits(),
                c.theta2.to_bits(),
                "{name}: crank angle {k}"
            );
            assert!(turns(p.theta3 - c.theta3) < 1e-9 && turns(p.theta4 - c.theta4) < 1e-9);
        }
        group.bench_with_input(BenchmarkId::new("newton_sweep", name), &l, |b, l| {
            b.iter(|| sweep(black_box(l), black_box(step), &options))
        });
        group.bench_with_input(BenchmarkId::new("closed_form", name), &l, |b, l| {
            b.iter(|| {
                // Opaque once per sweep, as the linkage handed to `sweep` above.
                let (l, step) = (black_box(l), black_box(step));
                let asm = l.assembly();
                let mut out = Vec::with_capacity(POSITIONS);
                for k in 0..POSITIONS {
                    out.push(closed_form(l, k as f64 * step, asm));
                }
                out
            })
        });
    }
    group.finish();
}

fn report_ratios() {
    let Some(home) = criterion_home() else {
        return;
    };
    println!("\nNewton-Raphson sweep vs closed form ({POSITIONS} positions, target ratio <= {TARGET_RATIO}):");
    for (name, _) in linkages() {
        let (Some((nr, nr_mean)), Some((cf, cf_mean))) = (
            estimates_ns(&home, GROUP, "newton_sweep", name),
            estimates_ns(&home, GROUP, "closed_form", name),
        ) else {
            println!("  {name}: no estimates found under {}", home.display());
            continue;
        };
        let per_s = |ns: f64| POSITIONS as f64 / (ns * 1e-9);
        let ratio = nr / cf;
        println!(
            "  {name:13} newton {:>6.2} M positions/s, closed form {:>6.2} M positions/s (medians), ratio {ratio:.2} {} (of the means {:.2})",
            per_s(nr) / 1e6,
            per_s(cf) / 1e6,
            if ratio <= TARGET_RATIO { "(meets target)" } else { "(ABOVE TARGET)" },
            nr_mean / cf_mean,
        );
    }
}

fn main() {
    let mut c = Criterion::default().configure_from_args();
    bench(&mut c);
    c.final_summary();
    report_ratios();
}
