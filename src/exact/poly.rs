//! Roots of real polynomials for the exact methods.
//!
//! The roots are the eigenvalues of the companion matrix (the method behind most numerical
//! root finders, e.g. Edelman and Murakami, "Polynomial roots from companion matrix
//! eigenvalues", Math. Comp. 64 (1995) 763-776), computed by nalgebra's real Schur
//! decomposition and polished by a few Newton steps on the polynomial itself.

use nalgebra::{Complex, DMatrix, Schur};

/// Newton polishing steps applied to every eigenvalue root.
const POLISH_STEPS: usize = 3;

/// Iteration cap of the Schur decomposition (a status, never an endless loop).
const SCHUR_MAX_ITERATIONS: usize = 10_000;

/// Value of `sum c[k] z^k` at a complex `z` (Horner).
pub(crate) fn eval_complex(c: &[f64], z: Complex<f64>) -> Complex<f64> {
    c.iter()
        .rev()
        .fold(Complex::new(0.0, 0.0), |acc, &ck| acc * z + ck)
}

/// Value and derivative of `sum c[k] z^k` at a complex `z`.
fn eval_with_derivative(c: &[f64], z: Complex<f64>) -> (Complex<f64>, Complex<f64>) {
    let mut p = Complex::new(0.0, 0.0);
    let mut dp = Complex::new(0.0, 0.0);
    for &ck in c.iter().rev() {
        dp = dp * z + p;
        p = p * z + ck;
    }
    (p, dp)
}

/// Complex roots of `sum c[k] x^k` (coefficients in increasing degree).
///
/// Leading coefficients no larger than `negligible` times the largest one are dropped first:
/// they stand for roots at (or beyond) `1/negligible` times the typical root size, which the
/// callers do not want. An empty result for a constant polynomial or when the eigenvalue
/// iteration fails.
pub(crate) fn roots(c: &[f64], negligible: f64) -> Vec<Complex<f64>> {
    let big = c.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    if !(big.is_finite() && big > 0.0) {
        return Vec::new();
    }
    let Some(deg) = c.iter().rposition(|v| v.abs() > negligible * big) else {
        return Vec::new();
    };
    let c = &c[..=deg];
    match deg {
        0 => Vec::new(),
        1 => vec![Complex::new(-c[0] / c[1], 0.0)],
        _ => {
            // Scale x = s z so that the constant and leading coefficients have equal size;
            // this keeps the companion matrix entries moderate.
            let s = if c[0] != 0.0 {
                (c[0].abs() / c[deg].abs()).powf(1.0 / deg as f64)
            } else {
                1.0
            };
            let mut a: Vec<f64> = c
                .iter()
                .enumerate()
                .map(|(k, v)| v * s.powi(k as i32))
                .collect();
            let lead = a[deg];
            a.iter_mut().for_each(|v| *v /= lead);
            // Companion matrix of the monic polynomial z^n + a[n-1] z^(n-1) + ... + a[0].
            let mut m = DMatrix::<f64>::zeros(deg, deg);
            for i in 1..deg {
                m[(i, i - 1)] = 1.0;
            }
            for i in 0..deg {
                m[(i, deg - 1)] = -a[i];
            }
            let Some(schur) = Schur::try_new(m, f64::EPSILON, SCHUR_MAX_ITERATIONS) else {
                return Vec::new();
            };
            schur
                .complex_eigenvalues()
                .iter()
                .map(|z| {
                    let mut x = *z * s;
                    for _ in 0..POLISH_STEPS {
                        let (p, dp) = eval_with_derivative(c, x);
                        if dp.norm() == 0.0 {
                            break;
                        }
                        let next = x - p / dp;
                        if !(next.re.is_finite() && next.im.is_finite()) {
                            break;
                        }
                        x = next;
                    }
                    x
                })
                .collect()
        }
    }
}

/// Real roots of `sum c[k] x^k`: the roots of [`roots`] whose imaginary part is at most
/// `imag_tol * (1 + |x|)`, as their real parts, sorted.
pub(crate) fn real_roots(c: &[f64], negligible: f64, imag_tol: f64) -> Vec<f64> {
    let mut r: Vec<f64> = roots(c, negligible)
        .into_iter()
        .filter(|z| z.im.abs() <= imag_tol * (1.0 + z.norm()))
        .map(|z| z.re)
        .collect();
    r.sort_by(f64::total_cmp);
    r
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    // Polynomials built from known roots: (x - 1)(x - 2)(x - 3) = x^3 - 6x^2 + 11x - 6.
    #[test]
    fn cubic_with_known_roots() {
        let r = real_roots(&[-6.0, 11.0, -6.0, 1.0], 1e-14, 1e-9);
        assert_eq!(r.len(), 3);
        for (got, want) in r.iter().zip([1.0, 2.0, 3.0]) {
            assert_relative_eq!(*got, want, max_relative = 1e-12);
        }
        // x^2 + 1 has no real roots; x^3 - x has 0 among them.
        assert!(real_roots(&[1.0, 0.0, 1.0], 1e-14, 1e-9).is_empty());
        let r = real_roots(&[0.0, -1.0, 0.0, 1.0], 1e-14, 1e-9);
        assert_eq!(r.len(), 3);
        assert_relative_eq!(r[1], 0.0, epsilon = 1e-14);
    }

    // Wilkinson-style check on widely spread roots: 1e-3, 1, 1e3 and a negligible x^4 term.
    #[test]
    fn spread_roots_and_negligible_lead() {
        let (a, b, c) = (1e-3, 1.0, 1e3);
        let coeffs = [-a * b * c, a * b + b * c + a * c, -(a + b + c), 1.0, 1e-20];
        let r = real_roots(&coeffs, 1e-14, 1e-9);
        assert_eq!(r.len(), 3);
        assert_relative_eq!(r[0], a, max_relative = 1e-9);
        assert_relative_eq!(r[1], b, max_relative = 1e-12);
        assert_relative_eq!(r[2], c, max_relative = 1e-12);
        assert!(roots(&[0.0, 0.0], 1e-14).is_empty());
        assert!(roots(&[2.0], 1e-14).is_empty());
    }
}
