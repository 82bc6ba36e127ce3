//! Cost of one Levenberg-Marquardt step of a free-timing problem against the number of
//! targets `N`: the block-eliminated step (`synthesis::structured`) against the dense one
//! (`synthesis::lm`), at N = 10, 100 and 1000. Each step is what one solver iteration does
//! after the Jacobian is evaluated: the gradient `J^T r`, the normal equations (by blocks, or
//! `J^T J` in full) and one damped solve. Target (issue 15): the eliminated step grows
//! linearly with N. After the criterion run the bench prints the exponent of a power law
//! fitted (least squares in log-log) to each step's median times.
//!
//! The problem has the shape of a path with free timing: nine shared variables (pivots,
//! lengths, coupler point), three rows per target, six penalty rows on the shared variables,
//! the order rows between neighbouring targets and the span row between the first and the
//! last; the entries are invented (uniform random, fixed seed), since the cost depends on
//! the shape only.
//!
//! Run with `cargo bench --bench structured_step`.

use std::hint::black_box;
use std::time::Duration;

use crankwright::synthesis::lm::{free_variables, DampedSystem, DenseNormal, Params};
use crankwright::synthesis::structured::{StructuredJacobian, StructuredNormal};
use criterion::{BenchmarkId, Criterion};
use nalgebra::{DMatrix, DVector};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

mod common;
use common::{criterion_home, estimates_ns};

const GROUP: &str = "structured_step";
/// Numbers of targets.
const SIZES: [usize; 3] = [10, 100, 1000];
/// Shared variables, rows per target and global rows of a path task with a free ground.
const SHARED: usize = 9;
const ROWS: usize = 3;
const GLOBAL: usize = 6;
/// The damping of the timed solve (the solver's starting value).
const LAMBDA: f64 = 1e-3;

/// A free-timing-shaped problem with `n` targets: structured Jacobian, residuals, point and
/// bounds (all variables free).
fn problem(n: usize) -> (StructuredJacobian, Vec<f64>, Params, Params, Params) {
    let mut rng = ChaCha8Rng::seed_from_u64(15);
    let mut pairs: Vec<(usize, usize)> = (1..n).map(|i| (i - 1, i)).collect();
    pairs.push((n - 1, 0));
    let mut jac = StructuredJacobian::new(SHARED, n, ROWS, GLOBAL, &pairs).expect("valid pairs");
    for i in 0..n {
        for c in 0..ROWS {
            for v in jac.target_row_mut(i, c) {
                *v = rng.random_range(-1.0..1.0);
            }
        }
    }
    for v in jac.global_mut().iter_mut() {
        *v = rng.random_range(-1.0..1.0);
    }
    for k in 0..pairs.len() {
        *jac.pair_mut(k) = (-1.0, 1.0);
    }
    let r = (0..jac.n_rows())
        .map(|_| rng.random_range(-1.0..1.0))
        .collect();
    let nv = jac.n_vars();
    let x = DVector::zeros(nv);
    (
        jac,
        r,
        x,
        DVector::from_element(nv, -10.0),
        DVector::from_element(nv, 10.0),
    )
}

/// The eliminated step: gradient, block normal equations, one damped solve.
fn eliminated(jac: &StructuredJacobian, r: &[f64], x: &Params, lo: &Params, hi: &Params) -> Params {
    let g = jac.gradient(r);
    let free = free_variables(x, &g, lo, hi);
    StructuredNormal::new(jac, &g, &free)
        .step(LAMBDA)
        .expect("positive definite")
}

/// The dense step: `J^T r`, `J^T J`, one damped Cholesky solve.
fn dense(j: &DMatrix<f64>, r: &DVector<f64>, x: &Params, lo: &Params, hi: &Params) -> Params {
    let jt = j.transpose();
    let a = &jt * j;
    let g = &jt * r;
    let free = free_variables(x, &g, lo, hi);
    DenseNormal::new(&a, &g, &free)
        .step(LAMBDA)
        .expect("positive definite")
}

fn bench(c: &mut Criterion) {
    let mut group = c.benchmark_group(GROUP);
    group.sample_size(10);
    group.warm_up_time(Duration::from_secs(1));
    for n in SIZES {
        let (jac, r, x, lo, hi) = problem(n);
        let j = jac.to_dense();
        let rd = DVector::from_column_slice(&r);
        // Sanity: both compute the same step.
        let (s, d) = (
            eliminated(&jac, &r, &x, &lo, &hi),
            dense(&j, &rd, &x, &lo, &hi),
        );
        assert!(
            (&s - &d).amax() <= 1e-8 * d.amax(),
            "steps differ at N = {n}"
        );
        group.bench_with_input(BenchmarkId::new("eliminated", n), &n, |b, _| {
            b.iter(|| eliminated(black_box(&jac), black_box(&r), &x, &lo, &hi))
        });
        group.bench_with_input(BenchmarkId::new("dense", n), &n, |b, _| {
            b.iter(|| dense(black_box(&j), black_box(&rd), &x, &lo, &hi))
        });
    }
    group.finish();
}

/// Slope of the least-squares line through `(ln N, ln t)`.
fn exponent(points: &[(f64, f64)]) -> f64 {
    let k = points.len() as f64;
    let (sx, sy) = points
        .iter()
        .fold((0.0, 0.0), |(a, b), (n, t)| (a + n.ln(), b + t.ln()));
    let (mx, my) = (sx / k, sy / k);
    let (num, den) = points.iter().fold((0.0, 0.0), |(a, b), (n, t)| {
        let dx = n.ln() - mx;
        (a + dx * (t.ln() - my), b + dx * dx)
    });
    num / den
}

fn report_exponents() {
    let Some(home) = criterion_home() else {
        return;
    };
    println!("\nCost of one Levenberg-Marquardt step against the number of targets N (medians):");
    for function in ["eliminated", "dense"] {
        let times: Option<Vec<(f64, f64)>> = SIZES
            .iter()
            .map(|&n| {
                estimates_ns(&home, GROUP, function, &n.to_string()).map(|(med, _)| (n as f64, med))
            })
            .collect();
        let Some(times) = times else {
            println!("  {function}: no estimates found under {}", home.display());
            continue;
        };
        let list: Vec<String> = times
            .iter()
            .map(|(n, t)| format!("N = {n}: {:.1} us", t * 1e-3))
            .collect();
        println!(
            "  {function:10} {}; fitted exponent {:.2}",
            list.join(", "),
            exponent(&times)
        );
    }
}

fn main() {
    let mut c = Criterion::default().configure_from_args();
    bench(&mut c);
    c.final_summary();
    report_exponents();
}
