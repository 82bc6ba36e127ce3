//! A box-constrained Levenberg-Marquardt least-squares solver, written as an argmin [`Solver`].
//!
//! Method: Levenberg (1944) and Marquardt (1963), with Marquardt's scaling of the damping by
//! the diagonal of `J^T J` (see Nocedal and Wright, "Numerical Optimization", 2nd ed., ch. 10).
//! Bounds: variables resting on a bound with the gradient pushing outwards are held there (an
//! active set), the others take the damped step, and each trial point is projected onto the
//! box. Each iteration forms the
//! Jacobian once and tries damped steps until one lowers the sum of squares.
//!
//! The damped system of an iteration is a [`DampedSystem`]: [`DenseNormal`] here (Cholesky on
//! the full normal matrix), or the same system solved by eliminating one variable per target
//! in [`super::structured`], in time linear in the number of targets.
//!
//! Tuning: `initial_damping` is the starting `lambda`; a successful step divides it by
//! `damping_down`, a failed one multiplies it by `damping_up`; the solver stops when the
//! relative decrease of the sum of squares over an iteration falls below `rel_tolerance`, when
//! the sum of squares falls below `abs_tolerance`, or when no damped step helps.

use argmin::core::{
    Error, IterState, Jacobian, Operator, Problem, Solver, State, TerminationReason,
    TerminationStatus, KV,
};
use nalgebra::{DMatrix, DVector};

/// Parameter vector type of the refinement.
pub type Params = DVector<f64>;
/// argmin state used by [`LevenbergMarquardt`].
pub type LmState = IterState<Params, (), DMatrix<f64>, (), Params, f64>;

/// Box-constrained Levenberg-Marquardt solver (see the module docs).
#[derive(Debug, Clone)]
pub struct LevenbergMarquardt {
    lower: Params,
    upper: Params,
    /// Starting damping `lambda`. Default `1e-3`.
    pub initial_damping: f64,
    /// Factor dividing `lambda` after a successful step. Default 3.
    pub damping_down: f64,
    /// Factor multiplying `lambda` after a failed trial step. Default 4.
    pub damping_up: f64,
    /// Stop when an iteration lowers the sum of squares by less than this fraction. Default `1e-10`.
    pub rel_tolerance: f64,
    /// Stop when the sum of squares is below this. Default `1e-28`.
    pub abs_tolerance: f64,
    /// Damped trial steps per iteration before giving up. Default 12.
    pub max_trials: usize,
    lambda: f64,
    stalled: bool,
    small_steps: usize,
}

impl LevenbergMarquardt {
    /// A solver keeping the parameters in `[lower, upper]` (component-wise).
    pub fn new(lower: Params, upper: Params) -> Self {
        Self {
            lower,
            upper,
            initial_damping: 1e-3,
            damping_down: 3.0,
            damping_up: 4.0,
            rel_tolerance: 1e-10,
            abs_tolerance: 1e-28,
            max_trials: 12,
            lambda: 1e-3,
            stalled: false,
            small_steps: 0,
        }
    }

    fn project(&self, x: &mut Params) {
        for i in 0..x.len() {
            x[i] = x[i].clamp(self.lower[i], self.upper[i]);
        }
    }
}

impl<O> Solver<O, LmState> for LevenbergMarquardt
where
    O: Operator<Param = Params, Output = Params>
        + Jacobian<Param = Params, Jacobian = DMatrix<f64>>,
{
    fn name(&self) -> &str {
        "Levenberg-Marquardt (box-constrained)"
    }

    fn init(
        &mut self,
        problem: &mut Problem<O>,
        mut state: LmState,
    ) -> Result<(LmState, Option<KV>), Error> {
        let mut x = state
            .take_param()
            .ok_or_else(|| Error::msg("Levenberg-Marquardt needs a starting point"))?;
        self.project(&mut x);
        let r = problem.apply(&x)?;
        let cost = r.norm_squared();
        self.lambda = self.initial_damping;
        self.stalled = false;
        self.small_steps = 0;
        Ok((state.param(x).residuals(r).cost(cost), None))
    }

    fn next_iter(
        &mut self,
        problem: &mut Problem<O>,
        mut state: LmState,
    ) -> Result<(LmState, Option<KV>), Error> {
        let x = state
            .take_param()
            .ok_or_else(|| Error::msg("Levenberg-Marquardt: parameters missing"))?;
        let r = state
            .take_residuals()
            .ok_or_else(|| Error::msg("Levenberg-Marquardt: residuals missing"))?;
        let cost = r.norm_squared();
        let j = problem.jacobian(&x)?;
        let jt = j.transpose();
        let a = &jt * &j;
        let g = &jt * &r;
        let free = free_variables(&x, &g, &self.lower, &self.upper);
        if free.is_empty() {
            self.stalled = true;
            return Ok((state.param(x).residuals(r).cost(cost), None));
        }
        let normal = DenseNormal::new(&a, &g, &free);
        for _ in 0..self.max_trials {
            let Some(step) = normal.step(self.lambda) else {
                self.lambda *= self.damping_up;
                continue;
            };
            let mut trial = &x + &step;
            self.project(&mut trial);
            let rt = problem.apply(&trial)?;
            let ct = rt.norm_squared();
            if ct.is_finite() && ct < cost {
                self.lambda = (self.lambda / self.damping_down).max(1e-12);
                if cost - ct <= self.rel_tolerance * cost {
                    self.small_steps += 1;
                } else {
                    self.small_steps = 0;
                }
                return Ok((state.param(trial).residuals(rt).cost(ct), None));
            }
            self.lambda *= self.damping_up;
            if self.lambda > 1e16 {
                break;
            }
        }
        self.stalled = true;
        Ok((state.param(x).residuals(r).cost(cost), None))
    }

    fn terminate(&mut self, state: &LmState) -> TerminationStatus {
        if self.stalled {
            return TerminationStatus::Terminated(TerminationReason::SolverConverged);
        }
        if state.get_cost() <= self.abs_tolerance || self.small_steps >= 2 {
            return TerminationStatus::Terminated(TerminationReason::SolverConverged);
        }
        TerminationStatus::NotTerminated
    }
}

/// Smallest entry of Marquardt's scaling `diag(J^T J)`, so that a variable the residuals do
/// not (yet) depend on is still damped.
pub const MIN_SCALE: f64 = 1e-12;

/// The variables that take a step, in increasing order: all but those resting on a bound
/// (within `1e-12` of the bounds' span) with the gradient `g = J^T r` pushing them outwards,
/// which are held there (the active set of the module docs).
pub fn free_variables(x: &Params, g: &Params, lower: &Params, upper: &Params) -> Vec<usize> {
    (0..x.len())
        .filter(|&i| {
            let span = (upper[i] - lower[i]).abs().max(1e-300);
            let at_lo = x[i] <= lower[i] + 1e-12 * span && g[i] > 0.0;
            let at_hi = x[i] >= upper[i] - 1e-12 * span && g[i] < 0.0;
            !(at_lo || at_hi)
        })
        .collect()
}

/// The damped Gauss-Newton system of one Levenberg-Marquardt iteration, solvable for any
/// damping: the normal matrix `H = J^T J` and gradient `g = J^T r` restricted to the free
/// variables (see [`free_variables`]).
pub trait DampedSystem {
    /// The step `delta` of all variables that solves `(H + lambda D) delta = -g` on the free
    /// ones, with Marquardt's scaling `D = diag(max(H_ii, MIN_SCALE))`, and is zero on the
    /// held ones; `None` when the damped matrix is not numerically positive definite (the
    /// solver then raises the damping).
    fn step(&self, lambda: f64) -> Option<Params>;
}

/// [`DampedSystem`] from a dense normal matrix, solved by Cholesky factorisation: cost
/// cubic in the number of free variables.
#[derive(Debug, Clone)]
pub struct DenseNormal {
    n: usize,
    free: Vec<usize>,
    a: DMatrix<f64>,
    g: DVector<f64>,
    scale: Vec<f64>,
}

impl DenseNormal {
    /// The system of the normal matrix `a = J^T J` and gradient `g = J^T r` on the variables
    /// `free` (indices into `g`).
    pub fn new(a: &DMatrix<f64>, g: &Params, free: &[usize]) -> Self {
        let nf = free.len();
        let af = DMatrix::from_fn(nf, nf, |i, j| a[(free[i], free[j])]);
        Self {
            n: g.len(),
            free: free.to_vec(),
            scale: (0..nf).map(|i| af[(i, i)].max(MIN_SCALE)).collect(),
            a: af,
            g: DVector::from_fn(nf, |i, _| g[free[i]]),
        }
    }
}

impl DampedSystem for DenseNormal {
    fn step(&self, lambda: f64) -> Option<Params> {
        let mut m = self.a.clone();
        for (i, d) in self.scale.iter().enumerate() {
            m[(i, i)] += lambda * d;
        }
        let sf = m.cholesky()?.solve(&(-&self.g));
        let mut step = DVector::zeros(self.n);
        for (k, &i) in self.free.iter().enumerate() {
            step[i] = sf[k];
        }
        Some(step)
    }
}

/// Outcome of one refinement: final parameters, sum of squares and iterations.
#[derive(Debug, Clone, PartialEq)]
pub struct Refined {
    /// Final parameters.
    pub params: Params,
    /// Final sum of squared residuals.
    pub cost: f64,
    /// Iterations made.
    pub iterations: u64,
    /// Residual evaluations made (including those for finite-difference Jacobians).
    pub evaluations: u64,
}

/// Runs [`LevenbergMarquardt`] on `problem` from `start` for at most `max_iters` iterations.
///
/// # Errors
/// Whatever the problem's residual or Jacobian evaluation returns.
pub fn refine<O>(
    problem: O,
    start: Params,
    lower: Params,
    upper: Params,
    max_iters: u64,
) -> Result<Refined, Error>
where
    O: Operator<Param = Params, Output = Params>
        + Jacobian<Param = Params, Jacobian = DMatrix<f64>>
        + CountEvaluations,
{
    let solver = LevenbergMarquardt::new(lower, upper);
    let res = argmin::core::Executor::new(problem, solver)
        .configure(|s| s.param(start).max_iters(max_iters))
        .run()?;
    let evaluations = res
        .problem()
        .problem
        .as_ref()
        .map_or(0, |p| p.evaluations());
    let mut state = res.state().clone();
    let iterations = state.get_iter();
    let cost = state.get_cost();
    let params = state
        .take_param()
        .ok_or_else(|| Error::msg("Levenberg-Marquardt returned no parameters"))?;
    Ok(Refined {
        params,
        cost,
        iterations,
        evaluations,
    })
}

/// Problems that count their residual evaluations.
pub trait CountEvaluations {
    /// Residual evaluations so far.
    fn evaluations(&self) -> u64;
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use std::cell::Cell;

    /// Rosenbrock as least squares: r = (10 (y - x^2), 1 - x); minimum at (1, 1), the
    /// standard test function of unconstrained optimisation (Rosenbrock 1960).
    struct Rosen(Cell<u64>);
    impl Operator for Rosen {
        type Param = Params;
        type Output = Params;
        fn apply(&self, p: &Params) -> Result<Params, Error> {
            self.0.set(self.0.get() + 1);
            Ok(DVector::from_vec(vec![
                10.0 * (p[1] - p[0] * p[0]),
                1.0 - p[0],
            ]))
        }
    }
    impl Jacobian for Rosen {
        type Param = Params;
        type Jacobian = DMatrix<f64>;
        fn jacobian(&self, p: &Params) -> Result<DMatrix<f64>, Error> {
            Ok(DMatrix::from_row_slice(
                2,
                2,
                &[-20.0 * p[0], 10.0, -1.0, 0.0],
            ))
        }
    }
    impl CountEvaluations for Rosen {
        fn evaluations(&self) -> u64 {
            self.0.get()
        }
    }

    #[test]
    fn solves_rosenbrock() {
        let r = refine(
            Rosen(Cell::new(0)),
            DVector::from_vec(vec![-1.2, 1.0]),
            DVector::from_vec(vec![-5.0, -5.0]),
            DVector::from_vec(vec![5.0, 5.0]),
            200,
        )
        .unwrap();
        assert_relative_eq!(r.params[0], 1.0, epsilon = 1e-8);
        assert_relative_eq!(r.params[1], 1.0, epsilon = 1e-8);
        assert!(r.evaluations > 0);
    }

    #[test]
    fn respects_bounds() {
        // Minimum at x = 1 lies outside [-5, 0.5]: the solver ends on the bound.
        let r = refine(
            Rosen(Cell::new(0)),
            DVector::from_vec(vec![-1.2, 1.0]),
            DVector::from_vec(vec![-5.0, -5.0]),
            DVector::from_vec(vec![0.5, 5.0]),
            200,
        )
        .unwrap();
        assert!(r.params[0] <= 0.5 + 1e-15);
        assert_relative_eq!(r.params[0], 0.5, epsilon = 1e-6);
    }
}
