//! The synthesis engine: global search with random starts, local least-squares refinement,
//! verification of every candidate by a full Newton-Raphson sweep, ranking.
//!
//! Search plan (deterministic for a given seed and number of starts, whatever the number of
//! threads, because every start draws from its own random stream `(seed, index)` and results
//! are ordered by index before any choice is made):
//!
//! 1. **Scatter**: every start is drawn from the task's box and refined briefly
//!    ([`EngineOptions::quick_iterations`] Levenberg-Marquardt iterations), then verified.
//! 2. **Deepen**: the most promising fraction ([`EngineOptions::promote_fraction`], accepted
//!    designs first, then by residual) is refined to convergence and verified again.
//! 3. **Hop**: restarts around the best few accepted designs (a perturbation of a few percent
//!    of the box, refined to convergence), which pays on rugged problems where the best basin
//!    is narrow (the idea of basin hopping, Wales and Doye, J. Phys. Chem. A 101, 1997).
//!
//! 4. **Finish**: the best distinct candidates get the task's final verification
//!    ([`Task::finish`]; for a long path searched on a subset of its targets, the check and
//!    the error over every target) and are ranked again.
//!
//! The time limit and an external stop flag end the search within one residual evaluation:
//! the refinement checks them at every evaluation and abandons its start; the best designs
//! found so far are returned and marked as stopped.
//!
//! Memory is bounded whatever the number of starts: starts run in batches, and only the best
//! [`EngineOptions::candidate_pool`] candidates (accepted first, then by residual) are kept
//! between phases, with the others counted by verdict.

pub mod lm;
pub mod output;
pub mod structured;

use std::cell::{Cell, RefCell};
use std::collections::BTreeMap;
use std::sync::atomic::{AtomicBool, AtomicU64, AtomicUsize, Ordering};
use std::time::{Duration, Instant};

use argmin::core::{Error as ArgminError, Jacobian, Operator};
use nalgebra::{DMatrix, DVector};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;

use crate::task::{Mode, Rejection, Task, Verified};
use lm::{refine, CountEvaluations, Params};

/// Tuning of the engine.
#[derive(Debug, Clone, PartialEq)]
pub struct EngineOptions {
    /// Seed of all random streams.
    pub seed: u64,
    /// Random starts in the scatter phase.
    pub starts: usize,
    /// Wall-clock limit of the whole search.
    pub time_limit: Duration,
    /// Designs kept in the result.
    pub keep: usize,
    /// Worker threads (`None`: rayon's default, one per core).
    pub threads: Option<usize>,
    /// Levenberg-Marquardt iterations per start in the scatter phase. Default 40.
    pub quick_iterations: u64,
    /// Iterations when refining to convergence. Default 400.
    pub full_iterations: u64,
    /// Fraction of starts refined to convergence. Default 0.05 (at least `keep * 4`).
    pub promote_fraction: f64,
    /// Restarts around the best designs, as a fraction of `starts`. Default 0.05.
    pub hop_fraction: f64,
    /// Most candidates refined to convergence, whatever `promote_fraction` gives. Default 1000.
    pub max_promoted: usize,
    /// Candidates kept in memory between phases (the best by verdict and residual); the rest
    /// are only counted. At least `max_promoted` is used. Default 4096.
    pub candidate_pool: usize,
}

impl Default for EngineOptions {
    fn default() -> Self {
        Self {
            seed: 1,
            starts: 4000,
            time_limit: Duration::from_secs(30),
            keep: 10,
            threads: None,
            quick_iterations: 40,
            full_iterations: 400,
            promote_fraction: 0.05,
            hop_fraction: 0.05,
            max_promoted: 1000,
            candidate_pool: 4096,
        }
    }
}

/// Progress of a run, passed to an [`Observer`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Progress {
    /// Phase name (`scatter`, `deepen`, `hop`).
    pub phase: &'static str,
    /// Work items done in this phase.
    pub done: usize,
    /// Work items in this phase.
    pub total: usize,
    /// Smallest error of an accepted design so far (task's measure, user units).
    pub best_error: Option<f64>,
}

/// Receives progress reports (from worker threads).
pub trait Observer: Sync {
    /// Called after each work item.
    fn progress(&self, progress: &Progress);
}

/// An observer that ignores everything.
#[derive(Debug, Clone, Copy, Default)]
pub struct Silent;

impl Observer for Silent {
    fn progress(&self, _: &Progress) {}
}

/// Why a search ended early.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum StopReason {
    /// The time limit was reached.
    TimeLimit,
    /// The stop flag was raised (Ctrl-C).
    Interrupted,
}

/// One ranked design.
#[derive(Debug, Clone, PartialEq)]
pub struct Ranked {
    /// 1-based rank.
    pub rank: usize,
    /// The verified design.
    pub design: Verified,
    /// Index of the start it came from.
    pub start: usize,
}

/// Result of a search.
#[derive(Debug, Clone, PartialEq)]
pub struct Outcome {
    /// Best designs, ranked.
    pub designs: Vec<Ranked>,
    /// Rejected candidates by reason (each start counted once, by its final verdict).
    pub rejected: BTreeMap<&'static str, usize>,
    /// Accepted candidates (before merging duplicates and keeping the best).
    pub accepted: usize,
    /// Residual evaluations.
    pub evaluations: u64,
    /// Starts run (scatter phase), less than requested when stopped early.
    pub starts_run: usize,
    /// Wall-clock seconds.
    pub seconds: f64,
    /// Why the search stopped early, if it did.
    pub stopped: Option<StopReason>,
}

/// Starts run in parallel between two merges into the bounded candidate pool.
const BATCH: usize = 1024;

/// Error returned by a residual evaluation when the search has been halted.
const HALTED: &str = "search halted";

/// Least-squares problem of one start, as argmin sees it.
struct LmProblem<'a> {
    shared: &'a Shared<'a>,
    mode: Mode,
    evaluations: Cell<u64>,
    last: RefCell<Option<(Params, Params)>>,
}

impl Operator for LmProblem<'_> {
    type Param = Params;
    type Output = Params;
    fn apply(&self, x: &Params) -> Result<Params, ArgminError> {
        if self.shared.halted() {
            return Err(ArgminError::msg(HALTED));
        }
        let task = self.shared.task;
        let mut r = DVector::zeros(task.n_residuals());
        task.residuals(x.as_slice(), self.mode, r.as_mut_slice());
        self.evaluations.set(self.evaluations.get() + 1);
        *self.last.borrow_mut() = Some((x.clone(), r.clone()));
        Ok(r)
    }
}

impl Jacobian for LmProblem<'_> {
    type Param = Params;
    type Jacobian = DMatrix<f64>;
    fn jacobian(&self, x: &Params) -> Result<DMatrix<f64>, ArgminError> {
        if self.shared.halted() {
            return Err(ArgminError::msg(HALTED));
        }
        let task = self.shared.task;
        let cached = self
            .last
            .borrow()
            .as_ref()
            .filter(|(lx, _)| lx == x)
            .map(|(_, r)| r.clone());
        let r0 = match cached {
            Some(r) => r,
            None => self.apply(x)?,
        };
        let mut j = DMatrix::zeros(task.n_residuals(), x.len());
        task.jacobian(x.as_slice(), self.mode, r0.as_slice(), &mut j);
        self.evaluations
            .set(self.evaluations.get() + x.len() as u64);
        Ok(j)
    }
}

impl CountEvaluations for LmProblem<'_> {
    fn evaluations(&self) -> u64 {
        self.evaluations.get()
    }
}

/// A refined and verified start.
#[derive(Debug, Clone)]
struct Trial {
    index: usize,
    x: Vec<f64>,
    mode: Mode,
    cost: f64,
    verdict: Result<Verified, Rejection>,
}

impl Trial {
    /// Promotion order: accepted designs first by error, then rejected ones by residual;
    /// ties by start index, so the order is total and does not depend on scheduling.
    fn key(&self) -> (bool, f64, usize) {
        match &self.verdict {
            Ok(v) => (false, v.error, self.index),
            Err(_) => (true, self.cost, self.index),
        }
    }

    fn cmp_key(&self, other: &Self) -> std::cmp::Ordering {
        let (a, b) = (self.key(), other.key());
        a.0.cmp(&b.0).then(a.1.total_cmp(&b.1)).then(a.2.cmp(&b.2))
    }

    /// Ranking order of accepted designs: error, then the better transmission, then index.
    fn cmp_rank(&self, other: &Self) -> std::cmp::Ordering {
        match (&self.verdict, &other.verdict) {
            (Ok(va), Ok(vb)) => va
                .error
                .total_cmp(&vb.error)
                .then(vb.min_transmission.total_cmp(&va.min_transmission))
                .then(self.index.cmp(&other.index)),
            _ => self.cmp_key(other),
        }
    }
}

/// The best candidates seen so far (at most `cap`, in promotion order once full) and the
/// verdicts of those dropped.
struct Pool {
    cap: usize,
    trials: Vec<Trial>,
    dropped_rejected: BTreeMap<&'static str, usize>,
    dropped_accepted: usize,
}

impl Pool {
    fn new(cap: usize) -> Self {
        Pool {
            cap: cap.max(1),
            trials: Vec::new(),
            dropped_rejected: BTreeMap::new(),
            dropped_accepted: 0,
        }
    }

    fn absorb(&mut self, batch: Vec<Trial>, by: fn(&Trial, &Trial) -> std::cmp::Ordering) {
        self.trials.extend(batch);
        if self.trials.len() > self.cap {
            self.trials.sort_by(by);
            for t in self.trials.drain(self.cap..) {
                match t.verdict {
                    Ok(_) => self.dropped_accepted += 1,
                    Err(r) => *self.dropped_rejected.entry(r.name()).or_default() += 1,
                }
            }
        }
    }
}

fn rng_for(seed: u64, index: usize) -> ChaCha8Rng {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    rng.set_stream(index as u64);
    rng
}

struct Shared<'a> {
    task: &'a dyn Task,
    lower: Params,
    upper: Params,
    started: Instant,
    limit: Duration,
    stop: &'a AtomicBool,
    timed_out: AtomicBool,
    evaluations: AtomicU64,
    best_bits: AtomicU64,
    observer: &'a dyn Observer,
}

impl Shared<'_> {
    fn halted(&self) -> bool {
        if self.stop.load(Ordering::Relaxed) {
            return true;
        }
        if self.started.elapsed() >= self.limit {
            self.timed_out.store(true, Ordering::Relaxed);
            return true;
        }
        false
    }

    fn best(&self) -> Option<f64> {
        let b = f64::from_bits(self.best_bits.load(Ordering::Relaxed));
        b.is_finite().then_some(b)
    }

    fn note(&self, v: &Result<Verified, Rejection>) {
        if let Ok(v) = v {
            // Non-negative floats order like their bit patterns.
            self.best_bits
                .fetch_min(v.error.max(0.0).to_bits(), Ordering::Relaxed);
        }
    }

    /// Refines `x` for `iters` iterations and verifies the result; `None` when the search
    /// was halted meanwhile (the start is abandoned, not counted).
    fn run(&self, index: usize, x: Vec<f64>, mode: Mode, iters: u64) -> Option<Trial> {
        let problem = LmProblem {
            shared: self,
            mode,
            evaluations: Cell::new(0),
            last: RefCell::new(None),
        };
        let start = DVector::from_vec(x.clone());
        let (x, cost) = match refine(
            problem,
            start,
            self.lower.clone(),
            self.upper.clone(),
            iters,
        ) {
            Ok(r) => {
                self.evaluations.fetch_add(r.evaluations, Ordering::Relaxed);
                (r.params.as_slice().to_vec(), r.cost)
            }
            Err(_) if self.halted() => return None,
            Err(_) => (x, f64::INFINITY),
        };
        let verdict = if cost.is_finite() {
            self.task.verify(&x, mode)
        } else {
            Err(Rejection::Degenerate)
        };
        self.note(&verdict);
        Some(Trial {
            index,
            x,
            mode,
            cost,
            verdict,
        })
    }

    fn report(&self, phase: &'static str, done: &AtomicUsize, total: usize) {
        let d = done.fetch_add(1, Ordering::Relaxed) + 1;
        self.observer.progress(&Progress {
            phase,
            done: d,
            total,
            best_error: self.best(),
        });
    }
}

/// Two designs whose pivots, lengths and coupler points all differ by less than this fraction
/// of the linkage's size (sum of link lengths) count as one: no designer would tell them apart.
pub const NEAR_DUPLICATE: f64 = 2e-3;

/// Whether two verified designs are near-duplicates: same assembly and every pivot,
/// length and coupler-point coordinate within [`NEAR_DUPLICATE`] of the linkage's size.
pub fn same_design(a: &Verified, b: &Verified) -> bool {
    let (la, lb) = (&a.linkage, &b.linkage);
    if la.assembly() != lb.assembly() {
        return false;
    }
    let tol = NEAR_DUPLICATE * la.size().max(lb.size());
    let (ca, cb) = (la.coupler_point(), lb.coupler_point());
    let pairs = [
        (la.input_pivot().x, lb.input_pivot().x),
        (la.input_pivot().y, lb.input_pivot().y),
        (la.output_pivot().x, lb.output_pivot().x),
        (la.output_pivot().y, lb.output_pivot().y),
        (la.input_link(), lb.input_link()),
        (la.coupler(), lb.coupler()),
        (la.output_link(), lb.output_link()),
        (ca.p, cb.p),
        (ca.q, cb.q),
    ];
    pairs.iter().all(|(x, y)| (x - y).abs() <= tol)
}

/// Runs the search (see the module docs) for `task`. `stop` may be raised from another
/// thread (e.g. on Ctrl-C) to end the search early with what it has.
pub fn synthesize(
    task: &dyn Task,
    options: &EngineOptions,
    stop: &AtomicBool,
    observer: &dyn Observer,
) -> Outcome {
    match options.threads {
        Some(n) => match rayon::ThreadPoolBuilder::new()
            .num_threads(n.max(1))
            .build()
        {
            Ok(pool) => pool.install(|| search(task, options, stop, observer)),
            Err(_) => search(task, options, stop, observer),
        },
        None => search(task, options, stop, observer),
    }
}

fn search(
    task: &dyn Task,
    options: &EngineOptions,
    stop: &AtomicBool,
    observer: &dyn Observer,
) -> Outcome {
    let (lo, hi) = task.bounds();
    let shared = Shared {
        task,
        lower: DVector::from_vec(lo.clone()),
        upper: DVector::from_vec(hi.clone()),
        started: Instant::now(),
        limit: options.time_limit,
        stop,
        timed_out: AtomicBool::new(false),
        evaluations: AtomicU64::new(0),
        best_bits: AtomicU64::new(f64::INFINITY.to_bits()),
        observer,
    };

    let pool_cap = options.candidate_pool.max(options.max_promoted).max(1);

    // 1. Scatter, in batches merged into the bounded pool.
    let done = AtomicUsize::new(0);
    let mut pool = Pool::new(pool_cap);
    let mut starts_run = 0;
    let mut next = 0;
    while next < options.starts && !shared.halted() {
        let end = next.saturating_add(BATCH).min(options.starts);
        let batch: Vec<Trial> = (next..end)
            .into_par_iter()
            .filter_map(|i| {
                if shared.halted() {
                    return None;
                }
                let mut rng = rng_for(options.seed, i);
                let (x, mode) = task.sample(&mut rng);
                let t = shared.run(i, x, mode, options.quick_iterations)?;
                shared.report("scatter", &done, options.starts);
                Some(t)
            })
            .collect();
        starts_run += batch.len();
        pool.absorb(batch, Trial::cmp_key);
        next = end;
    }
    let mut trials = pool.trials;
    trials.sort_by(Trial::cmp_key);

    // 2. Deepen the most promising.
    let promote = ((options.promote_fraction * starts_run as f64).ceil() as usize)
        .max(options.keep.saturating_mul(4))
        .min(options.max_promoted)
        .min(trials.len());
    let done = AtomicUsize::new(0);
    let deepened: Vec<Option<Trial>> = trials[..promote]
        .par_iter()
        .map(|t| {
            if shared.halted() {
                return None;
            }
            let d = shared.run(t.index, t.x.clone(), t.mode, options.full_iterations)?;
            shared.report("deepen", &done, promote);
            Some(d)
        })
        .collect();
    for (k, d) in deepened.into_iter().enumerate() {
        if let Some(d) = d {
            // Keep the better of the quick and the deepened verdicts.
            if d.cmp_key(&trials[k]).is_le() {
                trials[k] = d;
            }
        }
    }

    // 3. Hop around the best accepted designs.
    let mut best: Vec<&Trial> = trials.iter().filter(|t| t.verdict.is_ok()).collect();
    best.sort_by(|a, b| a.cmp_key(b));
    let mut bases: Vec<(Vec<f64>, Mode)> = Vec::new();
    for t in best {
        let v = t.verdict.as_ref().expect("filtered on Ok");
        let dup = bases
            .iter()
            .any(|(x, m)| *m == t.mode && x.iter().zip(&t.x).all(|(a, b)| (a - b).abs() < 1e-6));
        if !dup && v.error.is_finite() {
            bases.push((t.x.clone(), t.mode));
        }
        if bases.len() >= 3 {
            break;
        }
    }
    let hops = if bases.is_empty() {
        0
    } else {
        (options.hop_fraction * options.starts as f64).ceil() as usize
    };
    // Perturbations on the scale of the starts' box, clamped to the bounds.
    let (box_lo, box_hi) = task.search_box();
    let done = AtomicUsize::new(0);
    let mut hop_pool = Pool::new(pool_cap);
    let mut hop_accepted = 0;
    let mut next = 0;
    while next < hops && !shared.halted() {
        let end = next.saturating_add(BATCH).min(hops);
        let batch: Vec<Trial> = (next..end)
            .into_par_iter()
            .filter_map(|j| {
                if shared.halted() {
                    return None;
                }
                let (base, mode) = &bases[j % bases.len()];
                let index = options.starts.saturating_add(j);
                let mut rng = rng_for(options.seed, index);
                let sigma = [0.01, 0.03, 0.1][(j / bases.len()) % 3];
                let x: Vec<f64> = base
                    .iter()
                    .enumerate()
                    .map(|(i, v)| {
                        let span = box_hi[i] - box_lo[i];
                        let g: f64 = rng.random_range(-1.0..1.0) + rng.random_range(-1.0..1.0);
                        (v + sigma * span * g).clamp(lo[i], hi[i])
                    })
                    .collect();
                let t = shared.run(index, x, *mode, options.full_iterations)?;
                shared.report("hop", &done, hops);
                // Only accepted hops matter (rejected ones are not counted).
                t.verdict.is_ok().then_some(t)
            })
            .collect();
        hop_accepted += batch.len();
        hop_pool.absorb(batch, Trial::cmp_rank);
        next = end;
    }

    // Count verdicts: every scatter start by its final verdict; hops only when accepted.
    let mut rejected = pool.dropped_rejected;
    for t in &trials {
        if let Err(r) = &t.verdict {
            *rejected.entry(r.name()).or_default() += 1;
        }
    }
    let mut candidates: Vec<Trial> = trials.into_iter().filter(|t| t.verdict.is_ok()).collect();
    let mut accepted = pool.dropped_accepted + candidates.len() + hop_accepted;
    candidates.extend(hop_pool.trials);
    candidates.sort_by(Trial::cmp_rank);

    // 4. Finish the best distinct candidates and rank them again.
    let halted = shared.halted();
    let finish = if halted {
        options.keep
    } else {
        options.keep.saturating_mul(2)
    };
    let mut chosen: Vec<Trial> = Vec::new();
    for t in candidates {
        let v = t.verdict.as_ref().expect("accepted");
        if chosen
            .iter()
            .any(|c| same_design(c.verdict.as_ref().expect("accepted"), v))
        {
            continue;
        }
        chosen.push(t);
        if chosen.len() >= finish {
            break;
        }
    }
    let finished: Vec<Trial> = chosen
        .into_par_iter()
        .map(|mut t| {
            let v = t.verdict.expect("accepted");
            t.verdict = task.finish(&t.x, t.mode, v);
            t
        })
        .collect();
    let mut finals: Vec<Trial> = Vec::new();
    for t in finished {
        match &t.verdict {
            Ok(_) => finals.push(t),
            Err(r) => {
                accepted -= 1;
                *rejected.entry(r.name()).or_default() += 1;
            }
        }
    }
    finals.sort_by(Trial::cmp_rank);
    let designs: Vec<Ranked> = finals
        .into_iter()
        .take(options.keep)
        .enumerate()
        .map(|(i, t)| Ranked {
            rank: i + 1,
            design: t.verdict.expect("accepted"),
            start: t.index,
        })
        .collect();
    let stopped = if stop.load(Ordering::Relaxed) {
        Some(StopReason::Interrupted)
    } else if shared.timed_out.load(Ordering::Relaxed) {
        Some(StopReason::TimeLimit)
    } else {
        None
    };
    Outcome {
        designs,
        rejected,
        accepted,
        evaluations: shared.evaluations.load(Ordering::Relaxed),
        starts_run,
        seconds: shared.started.elapsed().as_secs_f64(),
        stopped,
    }
}
