//! The Levenberg-Marquardt step of a least-squares problem with one variable per target, by
//! block elimination: its cost grows linearly with the number of targets.
//!
//! # Structure
//! The variables are `p` shared ones `y` (the linkage: pivots, lengths, coupler point, a
//! motion's frame angle) followed by one per target, `t_0 .. t_{n-1}` (the crank angle at each
//! target, measured absolutely, not as increments). The residual rows come in three groups,
//! in this order:
//! - **target rows**: `m` rows per target, `r_i(y, t_i)`, on the shared variables and that
//!   target's own variable only (the coupler point's miss, the assembly violation, ...);
//! - **global rows** `r_g(y)` on the shared variables only (the limits' penalties);
//! - **pair rows**, each on two per-target variables that are neighbours, `t_i` and
//!   `t_{i+1}`, or the first and the last, `t_0` and `t_{n-1}` (the order of the targets
//!   and the span of a turn).
//!
//! With `A_i = dr_i/dy` (`m x p`), `b_i = dr_i/dt_i` (`m`), `C = dr_g/dy` and `D` the pair
//! rows' derivatives, the normal matrix `H = J^T J` and the gradient `g = J^T r` split into
//!
//! ```text
//! H = [ U    W ]    U = sum_i A_i^T A_i + C^T C              (p x p)
//!     [ W^T  V ]    W = [A_0^T b_0, ..., A_{n-1}^T b_{n-1}]  (p x n)
//!                   V = diag(b_i^T b_i) + D^T D              (n x n)
//! ```
//!
//! where `V` is tridiagonal, plus the two corners `V_{0,n-1} = V_{n-1,0}` when a pair row joins
//! the first and the last variable: cyclic tridiagonal. Storing the Jacobian by these blocks
//! takes `O(n)` memory (the dense Jacobian `O(n^2)`).
//!
//! # The step
//! [`StructuredNormal`] solves the same damped system as the dense Levenberg-Marquardt step
//! of [`super::lm`] (a [`DampedSystem`]): `(H + lambda D) delta = -g` with Marquardt's scaling
//! `D = diag(max(H_jj, MIN_SCALE))`, on the free variables of the same active set, the held
//! ones getting a zero step; it only solves it differently. With `V' = V + lambda D_t` and
//! `U' = U + lambda D_y`, eliminating the per-target block (the Schur complement of `V'`)
//! leaves a `p x p` system,
//!
//! ```text
//! S dy = -(g_y - W V'^-1 g_t),   S = U' - W V'^-1 W^T,
//! dt   = -V'^-1 (g_t + W^T dy),
//! ```
//!
//! the reduction by which bundle adjustment eliminates its structure (point) parameters
//! and solves for the camera parameters only (Triggs, McLauchlan, Hartley and Fitzgibbon,
//! "Bundle adjustment - a modern synthesis", in Vision Algorithms: Theory and Practice, LNCS
//! 1883, Springer 2000, pp. 298-372). `S` is positive definite exactly when the damped `H`
//! is (given `V'` is), so a failed factorisation means what it means for the dense step.
//!
//! Solving with `V'` costs `O(n)` per right-hand side, `p + 1` of them. The cyclic corner is
//! split off as a symmetric rank-one term: with `beta = V'_{0,n-1}`, `s = sign(beta)` and
//! `z = e_0 - s e_{n-1}`, the matrix `T = V' + |beta| z z^T` is tridiagonal (its corner is
//! `beta - |beta| s = 0`) and positive definite (a positive definite matrix plus a
//! semidefinite one), so its `L D L^T` factorisation needs no pivoting; then by the
//! Sherman-Morrison formula (Sherman and Morrison, Ann. Math. Statist. 21, 1950),
//!
//! ```text
//! V'^-1 b = T^-1 b + |beta| q (z^T T^-1 b) / (1 - |beta| z^T q),   q = T^-1 z,
//! ```
//!
//! whose denominator is `det V' / det T`, positive exactly when `V'` is positive definite.
//! (Numerical Recipes' cyclic tridiagonal solver uses the same formula with a general
//! rank-one split; the symmetric one keeps `T` positive definite.) A step thus costs
//! `O(n p^2)`: forming the blocks `O(n m p^2)` once per iteration, each damped trial
//! `O(n p^2 + p^3)`; the dense step costs `O(n (n + p)^2)` to form and `O((n + p)^3)` to
//! factor.
//!
//! Why not variable projection (Golub and Pereyra, SIAM J. Numer. Anal. 10, 1973), which
//! would place each target's angle optimally for the current linkage and iterate on the
//! linkage alone? The angles enter the residuals nonlinearly, so each projection is an
//! inner iterative minimisation, and the outer iteration is a different algorithm from the
//! dense one; the eliminated step keeps the iterates the dense step would make (to
//! round-off), so it can replace that step without changing any result.

use argmin::core::Error;
use nalgebra::{DMatrix, DVector};

use super::lm::{DampedSystem, Params, MIN_SCALE};

/// Jacobian of a problem with shared and per-target variables, stored by blocks (see the
/// module docs): columns are the `p` shared variables then the `n` per-target ones; rows are
/// the `m` rows of each target in turn, then the global rows, then the pair rows.
#[derive(Debug, Clone, PartialEq)]
pub struct StructuredJacobian {
    shared: usize,
    targets: usize,
    rows_per_target: usize,
    /// For each target and each of its rows: the `p` derivatives with respect to the shared
    /// variables, then the one with respect to the target's own variable.
    target_rows: Vec<f64>,
    /// Rows on the shared variables only (`q x p`).
    global: DMatrix<f64>,
    /// The two per-target variables of each pair row.
    pair_targets: Vec<(usize, usize)>,
    /// The pair rows' derivatives with respect to those two variables.
    pair_derivatives: Vec<(f64, f64)>,
}

impl StructuredJacobian {
    /// A zero Jacobian for `shared` shared variables, `targets` per-target ones with
    /// `rows_per_target` rows each, `global_rows` rows on the shared variables only, and
    /// one pair row on each pair of per-target variables in `pairs`.
    ///
    /// # Errors
    /// When a pair names a target out of range, or two targets that are neither neighbours
    /// nor the first and the last (their coupling would break the cyclic tridiagonal
    /// structure the step relies on).
    pub fn new(
        shared: usize,
        targets: usize,
        rows_per_target: usize,
        global_rows: usize,
        pairs: &[(usize, usize)],
    ) -> Result<Self, Error> {
        for &(i, j) in pairs {
            let (lo, hi) = (i.min(j), i.max(j));
            let neighbours = hi == lo + 1 || (lo == 0 && hi + 1 == targets && hi >= 2);
            if hi >= targets || !neighbours {
                return Err(Error::msg(format!(
                    "pair row on targets {i} and {j} of {targets}: only neighbours or the \
                     first and the last may share a row"
                )));
            }
        }
        Ok(Self {
            shared,
            targets,
            rows_per_target,
            target_rows: vec![0.0; targets * rows_per_target * (shared + 1)],
            global: DMatrix::zeros(global_rows, shared),
            pair_targets: pairs.to_vec(),
            pair_derivatives: vec![(0.0, 0.0); pairs.len()],
        })
    }

    /// Shared variables `p`.
    pub fn shared(&self) -> usize {
        self.shared
    }

    /// Per-target variables `n`.
    pub fn targets(&self) -> usize {
        self.targets
    }

    /// All variables, `p + n`.
    pub fn n_vars(&self) -> usize {
        self.shared + self.targets
    }

    /// All rows: target rows, global rows, pair rows.
    pub fn n_rows(&self) -> usize {
        self.targets * self.rows_per_target + self.global.nrows() + self.pair_targets.len()
    }

    /// Row `row` of target `target`: its `p` derivatives with respect to the shared
    /// variables, then the one with respect to the target's own variable.
    pub fn target_row_mut(&mut self, target: usize, row: usize) -> &mut [f64] {
        let w = self.shared + 1;
        let k = (target * self.rows_per_target + row) * w;
        &mut self.target_rows[k..k + w]
    }

    /// Row `row` of target `target` (see [`Self::target_row_mut`]).
    pub fn target_row(&self, target: usize, row: usize) -> &[f64] {
        let w = self.shared + 1;
        let k = (target * self.rows_per_target + row) * w;
        &self.target_rows[k..k + w]
    }

    /// The global rows (`q x p`), on the shared variables only.
    pub fn global_mut(&mut self) -> &mut DMatrix<f64> {
        &mut self.global
    }

    /// Derivatives of pair row `k` with respect to its two variables, in the order its
    /// targets were given to [`Self::new`].
    pub fn pair_mut(&mut self, k: usize) -> &mut (f64, f64) {
        &mut self.pair_derivatives[k]
    }

    /// Each pair row: its index among the pair rows, its two targets and its derivatives.
    fn pair_rows(&self) -> impl Iterator<Item = (usize, (usize, usize), (f64, f64))> + '_ {
        self.pair_targets
            .iter()
            .zip(&self.pair_derivatives)
            .enumerate()
            .map(|(k, (&t, &d))| (k, t, d))
    }

    /// The gradient `J^T r` of half the sum of squares, for residuals `r` in this Jacobian's
    /// row order.
    ///
    /// # Panics
    /// When `r` does not have [`Self::n_rows`] entries (a bug in the caller).
    pub fn gradient(&self, r: &[f64]) -> Params {
        assert_eq!(r.len(), self.n_rows(), "one residual per Jacobian row");
        let (p, m) = (self.shared, self.rows_per_target);
        let mut g = DVector::zeros(self.n_vars());
        for i in 0..self.targets {
            for c in 0..m {
                let ri = r[i * m + c];
                let row = self.target_row(i, c);
                for a in 0..p {
                    g[a] += row[a] * ri;
                }
                g[p + i] += row[p] * ri;
            }
        }
        let base = self.targets * m;
        for q in 0..self.global.nrows() {
            for a in 0..p {
                g[a] += self.global[(q, a)] * r[base + q];
            }
        }
        let base = base + self.global.nrows();
        for (k, (i, j), (di, dj)) in self.pair_rows() {
            g[p + i] += di * r[base + k];
            g[p + j] += dj * r[base + k];
        }
        g
    }

    /// The same Jacobian as a dense matrix (for checks and small problems).
    pub fn to_dense(&self) -> DMatrix<f64> {
        let (p, m) = (self.shared, self.rows_per_target);
        let mut j = DMatrix::zeros(self.n_rows(), self.n_vars());
        for i in 0..self.targets {
            for c in 0..m {
                let row = self.target_row(i, c);
                for a in 0..p {
                    j[(i * m + c, a)] = row[a];
                }
                j[(i * m + c, p + i)] = row[p];
            }
        }
        let base = self.targets * m;
        j.view_mut((base, 0), (self.global.nrows(), p))
            .copy_from(&self.global);
        let base = base + self.global.nrows();
        for (k, (i, jj), (di, dj)) in self.pair_rows() {
            j[(base + k, p + i)] += di;
            j[(base + k, p + jj)] += dj;
        }
        j
    }
}

/// The normal equations of a [`StructuredJacobian`] by blocks, restricted to the free
/// variables: a [`DampedSystem`] whose step is found by eliminating the per-target variables
/// (see the module docs).
#[derive(Debug, Clone)]
pub struct StructuredNormal {
    shared: usize,
    targets: usize,
    /// The free shared variables.
    free_shared: Vec<usize>,
    /// Whether each per-target variable is free.
    free_target: Vec<bool>,
    /// `U` on the free shared variables (`pf x pf`).
    u: DMatrix<f64>,
    /// Marquardt's scale of the free shared variables.
    u_scale: Vec<f64>,
    /// `W` on the free shared variables, target-major: `w[i * pf + a]`; zero for a held
    /// per-target variable.
    w: Vec<f64>,
    /// Diagonal of `V` and Marquardt's scale of each per-target variable.
    v_diag: Vec<f64>,
    v_scale: Vec<f64>,
    /// `V_{i,i+1}`, zero where either variable is held.
    v_off: Vec<f64>,
    /// `V_{0,n-1}` for `n >= 3` (for `n = 2` that entry is `v_off[0]`), zero where either
    /// variable is held.
    v_corner: f64,
    /// The gradient on the free shared variables, and on the per-target ones (zero where held).
    g_shared: Vec<f64>,
    g_target: Vec<f64>,
}

impl StructuredNormal {
    /// The normal equations of `jac` with gradient `g` (from
    /// [`StructuredJacobian::gradient`]) on the variables `free` (increasing indices into
    /// `g`, as from [`super::lm::free_variables`]). Cost `O(n m p^2)`.
    pub fn new(jac: &StructuredJacobian, g: &Params, free: &[usize]) -> Self {
        let (p, n, m) = (jac.shared, jac.targets, jac.rows_per_target);
        let free_shared: Vec<usize> = free.iter().copied().filter(|&k| k < p).collect();
        let mut free_target = vec![false; n];
        for &k in free.iter().filter(|&&k| k >= p) {
            free_target[k - p] = true;
        }
        let pf = free_shared.len();
        let mut u = DMatrix::<f64>::zeros(pf, pf);
        let mut w = vec![0.0; n * pf];
        let mut v_diag = vec![0.0; n];
        let mut a = vec![0.0; pf];
        for i in 0..n {
            for c in 0..m {
                let row = jac.target_row(i, c);
                for (k, &f) in free_shared.iter().enumerate() {
                    a[k] = row[f];
                }
                let b = row[p];
                // U += a a^T (lower triangle; mirrored below).
                for k in 0..pf {
                    for l in 0..=k {
                        u[(k, l)] += a[k] * a[l];
                    }
                }
                if free_target[i] {
                    for k in 0..pf {
                        w[i * pf + k] += a[k] * b;
                    }
                }
                v_diag[i] += b * b;
            }
        }
        for q in 0..jac.global.nrows() {
            for k in 0..pf {
                for l in 0..=k {
                    u[(k, l)] += jac.global[(q, free_shared[k])] * jac.global[(q, free_shared[l])];
                }
            }
        }
        for k in 0..pf {
            for l in 0..k {
                u[(l, k)] = u[(k, l)];
            }
        }
        let mut v_off = vec![0.0; n.saturating_sub(1)];
        let mut v_corner = 0.0;
        for (_, (i, j), (di, dj)) in jac.pair_rows() {
            v_diag[i] += di * di;
            v_diag[j] += dj * dj;
            if !(free_target[i] && free_target[j]) {
                continue;
            }
            let lo = i.min(j);
            if i.abs_diff(j) == 1 {
                v_off[lo] += di * dj;
            } else {
                v_corner += di * dj;
            }
        }
        let u_scale = (0..pf).map(|k| u[(k, k)].max(MIN_SCALE)).collect();
        let v_scale = v_diag.iter().map(|d| d.max(MIN_SCALE)).collect();
        let g_shared = free_shared.iter().map(|&k| g[k]).collect();
        let g_target = (0..n)
            .map(|i| if free_target[i] { g[p + i] } else { 0.0 })
            .collect();
        Self {
            shared: p,
            targets: n,
            free_shared,
            free_target,
            u,
            u_scale,
            w,
            v_diag,
            v_scale,
            v_off,
            v_corner,
            g_shared,
            g_target,
        }
    }
}

impl DampedSystem for StructuredNormal {
    fn step(&self, lambda: f64) -> Option<Params> {
        let (p, n, pf) = (self.shared, self.targets, self.free_shared.len());
        // V' with each held variable decoupled (a unit row and column, zero right-hand side:
        // its step is zero, as in the dense system where it is left out).
        let diag: Vec<f64> = (0..n)
            .map(|i| {
                if self.free_target[i] {
                    self.v_diag[i] + lambda * self.v_scale[i]
                } else {
                    1.0
                }
            })
            .collect();
        let v = CyclicFactor::new(&diag, &self.v_off, self.v_corner)?;
        // X = V'^-1 [W^T | g_t], target-major with pf + 1 columns.
        let cols = pf + 1;
        let mut x = vec![0.0; n * cols];
        for i in 0..n {
            x[i * cols..i * cols + pf].copy_from_slice(&self.w[i * pf..(i + 1) * pf]);
            x[i * cols + pf] = self.g_target[i];
        }
        v.solve_rows(&mut x, cols);
        // S = U' - W X_w and its right-hand side -(g_y - W x_g).
        let mut s = self.u.clone();
        let mut rhs = DVector::from_fn(pf, |k, _| -self.g_shared[k]);
        for k in 0..pf {
            s[(k, k)] += lambda * self.u_scale[k];
        }
        for i in 0..n {
            let wi = &self.w[i * pf..(i + 1) * pf];
            let xi = &x[i * cols..(i + 1) * cols];
            for k in 0..pf {
                for l in 0..pf {
                    s[(k, l)] -= wi[k] * xi[l];
                }
                rhs[k] += wi[k] * xi[pf];
            }
        }
        let dy = if pf > 0 {
            s.cholesky()?.solve(&rhs)
        } else {
            DVector::zeros(0)
        };
        let mut step = DVector::zeros(p + n);
        for (k, &f) in self.free_shared.iter().enumerate() {
            step[f] = dy[k];
        }
        for i in 0..n {
            let xi = &x[i * cols..(i + 1) * cols];
            step[p + i] = -(xi[pf] + (0..pf).map(|l| xi[l] * dy[l]).sum::<f64>());
        }
        Some(step)
    }
}

/// A symmetric positive definite cyclic tridiagonal matrix (diagonal `d`, off-diagonal `e`
/// with `e_i = M_{i,i+1}`, corner `beta = M_{0,n-1}`), factored for solves in `O(n)`: the
/// `L D L^T` factors of the tridiagonal `T = M + |beta| z z^T`, `z = e_0 - sign(beta) e_{n-1}`,
/// and the Sherman-Morrison correction (see the module docs).
#[derive(Debug, Clone)]
struct CyclicFactor {
    /// Sub-diagonal of the unit lower bidiagonal `L` (`l[i]` is `L_{i,i-1}`; `l[0]` unused).
    l: Vec<f64>,
    /// The pivots `D`.
    d: Vec<f64>,
    /// `|beta|`, zero for a plain tridiagonal matrix.
    beta: f64,
    /// `sign(beta)`.
    sign: f64,
    /// `q = T^-1 z`.
    q: Vec<f64>,
    /// `|beta| / (1 - |beta| z^T q)`.
    gain: f64,
}

impl CyclicFactor {
    /// The factorisation, or `None` when the matrix is not numerically positive definite (a
    /// pivot or the Sherman-Morrison denominator not positive).
    fn new(d: &[f64], e: &[f64], corner: f64) -> Option<Self> {
        let n = d.len();
        let (beta, sign) = (corner.abs(), if corner < 0.0 { -1.0 } else { 1.0 });
        let mut t = d.to_vec();
        if beta > 0.0 {
            t[0] += beta;
            t[n - 1] += beta;
        }
        let mut l = vec![0.0; n];
        let mut piv = vec![0.0; n];
        for i in 0..n {
            let mut di = t[i];
            if i > 0 {
                l[i] = e[i - 1] / piv[i - 1];
                di -= l[i] * e[i - 1];
            }
            if di.is_nan() || di <= 0.0 {
                return None;
            }
            piv[i] = di;
        }
        let mut f = Self {
            l,
            d: piv,
            beta,
            sign,
            q: Vec::new(),
            gain: 0.0,
        };
        if beta > 0.0 {
            let mut q = vec![0.0; n];
            q[0] = 1.0;
            q[n - 1] -= sign;
            f.solve_tridiagonal(&mut q, 1);
            let denom = 1.0 - beta * (q[0] - sign * q[n - 1]);
            if denom.is_nan() || denom <= 0.0 {
                return None;
            }
            f.gain = beta / denom;
            f.q = q;
        }
        Some(f)
    }

    /// `T^-1 b` in place for the `w` columns of `b` (row-major, `n x w`).
    fn solve_tridiagonal(&self, b: &mut [f64], w: usize) {
        let n = self.d.len();
        for i in 1..n {
            let li = self.l[i];
            let (prev, cur) = b[(i - 1) * w..(i + 1) * w].split_at_mut(w);
            for (c, p) in cur.iter_mut().zip(prev.iter()) {
                *c -= li * p;
            }
        }
        for i in 0..n {
            let inv = 1.0 / self.d[i];
            for c in &mut b[i * w..(i + 1) * w] {
                *c *= inv;
            }
        }
        for i in (0..n.saturating_sub(1)).rev() {
            let li = self.l[i + 1];
            let (cur, next) = b[i * w..(i + 2) * w].split_at_mut(w);
            for (c, nx) in cur.iter_mut().zip(next.iter()) {
                *c -= li * nx;
            }
        }
    }

    /// `M^-1 b` in place for the `w` columns of `b` (row-major, `n x w`).
    fn solve_rows(&self, b: &mut [f64], w: usize) {
        let n = self.d.len();
        self.solve_tridiagonal(b, w);
        if self.beta > 0.0 {
            for c in 0..w {
                let k = self.gain * (b[c] - self.sign * b[(n - 1) * w + c]);
                for i in 0..n {
                    b[i * w + c] += k * self.q[i];
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::synthesis::lm::{free_variables, DenseNormal};
    use approx::assert_relative_eq;
    use proptest::prelude::*;
    use rand::{Rng, SeedableRng};
    use rand_chacha::ChaCha8Rng;

    /// A random structured problem: Jacobian, residuals, point and bounds.
    struct Problem {
        jac: StructuredJacobian,
        r: Vec<f64>,
        x: Params,
        lower: Params,
        upper: Params,
    }

    /// Invented data (uniform entries): `p` shared and `n` per-target variables, `m` rows per
    /// target, `q` global rows, the order pairs `(i, i+1)` and, with `span`, the pair of the
    /// first and the last; `held` variables are put on a bound.
    fn problem(
        p: usize,
        n: usize,
        m: usize,
        q: usize,
        span: bool,
        held: usize,
        seed: u64,
    ) -> Problem {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let mut pairs: Vec<(usize, usize)> = (1..n).map(|i| (i - 1, i)).collect();
        if span && n >= 2 {
            pairs.push((n - 1, 0));
        }
        let mut jac = StructuredJacobian::new(p, n, m, q, &pairs).unwrap();
        for i in 0..n {
            for c in 0..m {
                for v in jac.target_row_mut(i, c) {
                    *v = rng.random_range(-1.0..1.0);
                }
            }
        }
        for v in jac.global_mut().iter_mut() {
            *v = rng.random_range(-1.0..1.0);
        }
        for k in 0..pairs.len() {
            let w = rng.random_range(0.0..3.0);
            // Order and span penalties are differences: (-w, w).
            *jac.pair_mut(k) = (-w, w);
        }
        let r: Vec<f64> = (0..jac.n_rows())
            .map(|_| rng.random_range(-1.0..1.0))
            .collect();
        let nv = p + n;
        let mut x = DVector::from_fn(nv, |_, _| rng.random_range(-1.0..1.0));
        let lower = DVector::from_element(nv, -2.0);
        let upper = DVector::from_element(nv, 2.0);
        let g = jac.gradient(&r);
        // Put `held` variables on the bound their gradient pushes against.
        for _ in 0..if nv > 0 { held } else { 0 } {
            let k = rng.random_range(0..nv);
            x[k] = if g[k] > 0.0 { lower[k] } else { upper[k] };
        }
        Problem {
            jac,
            r,
            x,
            lower,
            upper,
        }
    }

    /// The eliminated step and the dense step of the same problem at damping `lambda`.
    fn both_steps(pr: &Problem, lambda: f64) -> (Option<Params>, Option<Params>, Vec<usize>) {
        let g = pr.jac.gradient(&pr.r);
        let free = free_variables(&pr.x, &g, &pr.lower, &pr.upper);
        let structured = StructuredNormal::new(&pr.jac, &g, &free).step(lambda);
        let j = pr.jac.to_dense();
        let a = j.transpose() * &j;
        let gd = j.transpose() * DVector::from_column_slice(&pr.r);
        let dense = DenseNormal::new(&a, &gd, &free).step(lambda);
        (structured, dense, free)
    }

    // The block gradient and the dense `J^T r` agree.
    #[test]
    fn gradient_matches_dense() {
        let pr = problem(4, 7, 3, 2, true, 0, 1);
        let j = pr.jac.to_dense();
        let dense = j.transpose() * DVector::from_column_slice(&pr.r);
        let g = pr.jac.gradient(&pr.r);
        for k in 0..g.len() {
            assert_relative_eq!(g[k], dense[k], epsilon = 1e-14);
        }
    }

    // On a small problem (nine shared variables as for a path with a free ground, six
    // targets with three rows each, the order pairs and the span pair, two variables held
    // on a bound), the eliminated step is the dense Levenberg-Marquardt step of
    // `super::lm` to round-off: same variables, same Marquardt scaling, same update.
    #[test]
    fn eliminated_step_equals_dense_step() {
        for (held, lambda) in [(0, 1e-3), (2, 1e-3), (0, 10.0), (3, 1e-8)] {
            let pr = problem(9, 6, 3, 4, true, held, 7 + held as u64);
            let (s, d, free) = both_steps(&pr, lambda);
            let (s, d) = (s.unwrap(), d.unwrap());
            assert_eq!(free.len() < pr.jac.n_vars(), held > 0, "{free:?}");
            for k in 0..s.len() {
                assert_relative_eq!(s[k], d[k], epsilon = 1e-12 * d.amax(), max_relative = 1e-10);
                if !free.contains(&k) {
                    assert!(s[k].abs() < f64::MIN_POSITIVE, "held variable {k} moved");
                }
            }
        }
    }

    // A damped system that is not positive definite is refused by both steps alike: with no
    // rows at all on a per-target variable and zero damping, its pivot is zero.
    #[test]
    fn both_refuse_a_singular_system() {
        let mut pr = problem(2, 4, 2, 0, false, 0, 3);
        for c in 0..2 {
            pr.jac.target_row_mut(2, c)[2] = 0.0;
        }
        for k in 0..3 {
            *pr.jac.pair_mut(k) = (0.0, 0.0);
        }
        let (s, d, _) = both_steps(&pr, 0.0);
        assert!(s.is_none() && d.is_none(), "{s:?} {d:?}");
        let (s, d, _) = both_steps(&pr, 1e-3);
        assert!(s.is_some() && d.is_some());
    }

    // The cyclic solve against a dense LU solve of the same matrix (nalgebra as the
    // reference), with corners of either sign.
    #[test]
    fn cyclic_solve_matches_dense() {
        let mut rng = ChaCha8Rng::seed_from_u64(11);
        for n in [1, 2, 3, 4, 9] {
            for corner in [0.0, -0.7, 0.6] {
                let corner = if n >= 3 { corner } else { 0.0 };
                let e: Vec<f64> = (1..n).map(|_| rng.random_range(-1.0..1.0)).collect();
                let d: Vec<f64> = (0..n).map(|_| rng.random_range(2.5..4.0)).collect();
                let mut m = DMatrix::from_diagonal(&DVector::from_vec(d.clone()));
                for (i, &v) in e.iter().enumerate() {
                    m[(i, i + 1)] = v;
                    m[(i + 1, i)] = v;
                }
                if n >= 3 {
                    m[(0, n - 1)] = corner;
                    m[(n - 1, 0)] = corner;
                }
                let b: Vec<f64> = (0..2 * n).map(|_| rng.random_range(-1.0..1.0)).collect();
                let mut x = b.clone();
                CyclicFactor::new(&d, &e, corner)
                    .unwrap()
                    .solve_rows(&mut x, 2);
                let lu = m.clone().lu();
                for c in 0..2 {
                    let bc = DVector::from_fn(n, |i, _| b[i * 2 + c]);
                    let xc = lu.solve(&bc).unwrap();
                    for i in 0..n {
                        assert_relative_eq!(x[i * 2 + c], xc[i], epsilon = 1e-13);
                    }
                }
            }
        }
    }

    #[test]
    fn pairs_must_be_neighbours_or_the_ends() {
        assert!(StructuredJacobian::new(3, 5, 2, 0, &[(0, 1), (4, 0), (3, 4)]).is_ok());
        assert!(StructuredJacobian::new(3, 5, 2, 0, &[(0, 2)]).is_err());
        assert!(StructuredJacobian::new(3, 5, 2, 0, &[(4, 5)]).is_err());
        assert!(StructuredJacobian::new(3, 5, 2, 0, &[(2, 2)]).is_err());
        // Two targets: the span pair is the order pair.
        assert!(StructuredJacobian::new(3, 2, 2, 0, &[(0, 1), (1, 0)]).is_ok());
    }

    /// The damped matrix `H + lambda D` and right-hand side `-g` of the dense system on the
    /// free variables.
    fn damped_dense(pr: &Problem, free: &[usize], lambda: f64) -> (DMatrix<f64>, DVector<f64>) {
        let j = pr.jac.to_dense();
        let h = j.transpose() * &j;
        let g = j.transpose() * DVector::from_column_slice(&pr.r);
        let nf = free.len();
        let mut m = DMatrix::from_fn(nf, nf, |a, b| h[(free[a], free[b])]);
        for a in 0..nf {
            m[(a, a)] += lambda * h[(free[a], free[a])].max(MIN_SCALE);
        }
        (m, DVector::from_fn(nf, |a, _| -g[free[a]]))
    }

    proptest! {
        // Over random problems (sizes, held variables, damping from tiny to large) the
        // eliminated step solves the damped system to round-off (a backward error of a few
        // hundred ulps of its terms), and it equals the dense step within what the system's
        // condition number lets two such solvers differ by; or both refuse the system.
        #[test]
        fn eliminated_step_equals_dense_step_on_random_problems(
            p in 0usize..10,
            n in 0usize..25,
            m in 1usize..5,
            q in 0usize..4,
            span in any::<bool>(),
            held in 0usize..4,
            log_lambda in -8.0f64..3.0,
            seed in any::<u64>(),
        ) {
            let pr = problem(p, n, m, q, span, held, seed);
            let lambda = 10f64.powf(log_lambda);
            let (s, d, free) = both_steps(&pr, lambda);
            prop_assume!(!free.is_empty());
            match (s, d) {
                (Some(s), Some(d)) => {
                    let (mat, rhs) = damped_dense(&pr, &free, lambda);
                    let sf = DVector::from_fn(free.len(), |a, _| s[free[a]]);
                    let df = DVector::from_fn(free.len(), |a, _| d[free[a]]);
                    let backward = (&mat * &sf - &rhs).norm();
                    let size = mat.norm() * sf.norm() + rhs.norm();
                    prop_assert!(backward <= 1e-13 * size, "backward error {} of {}", backward, size);
                    let eig = mat.symmetric_eigenvalues();
                    let cond = eig.amax() / eig.iter().fold(f64::INFINITY, |a, &b| a.min(b.abs()));
                    let forward = (&sf - &df).norm();
                    prop_assert!(
                        forward <= 1e-13 * cond * df.norm(),
                        "steps differ by {} (norm {}, condition {})", forward, df.norm(), cond
                    );
                    for k in 0..s.len() {
                        if !free.contains(&k) {
                            prop_assert!(s[k].abs() < f64::MIN_POSITIVE, "held variable {} moved", k);
                        }
                    }
                }
                (None, None) => {}
                (s, d) => prop_assert!(false, "one refused: {:?} {:?}", s, d),
            }
        }
    }
}
