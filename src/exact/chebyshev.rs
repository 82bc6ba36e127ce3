//! Chebyshev spacing of precision points.
//!
//! For `n` precision points on `[x0, xf]`,
//!
//! ```text
//! x_j = (x0 + xf)/2 - (xf - x0)/2 cos((2j - 1) pi / (2n)),   j = 1..n
//! ```
//!
//! the zeros of the Chebyshev polynomial `T_n` mapped linearly onto the interval. Placing the
//! precision points there keeps the largest structural error of an interpolating design small
//! over the whole range (Chebyshev's minimax property). Its use for linkage precision points
//! goes back to Freudenstein, "Approximate synthesis of four-bar linkages", Trans. ASME 77
//! (1955) 853-861, and is the usual first choice in the kinematic-synthesis literature
//! (e.g. Hartenberg and Denavit, "Kinematic Synthesis of Linkages", 1964).

use std::f64::consts::PI;

/// The `n` Chebyshev-spaced points on `[x0, xf]`, in the order `j = 1..n`, i.e. from the `x0`
/// end to the `xf` end (increasing when `x0 < xf`). An empty vector when `n` is zero.
///
/// ```
/// use crankwright::exact::chebyshev::chebyshev_points;
/// let x = chebyshev_points(1.0, 2.0, 3);
/// // The middle point of an odd count is the midpoint of the range.
/// assert!((x[1] - 1.5).abs() < 1e-15);
/// ```
pub fn chebyshev_points(x0: f64, xf: f64, n: usize) -> Vec<f64> {
    let mid = 0.5 * (x0 + xf);
    let half = 0.5 * (xf - x0);
    (1..=n)
        .map(|j| mid - half * ((2 * j - 1) as f64 * PI / (2 * n) as f64).cos())
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    // Values by hand from the formula above: n = 3 on [1, 2] uses cos(30 deg) = sqrt(3)/2,
    // cos(90 deg) = 0, cos(150 deg) = -sqrt(3)/2.
    #[test]
    fn three_points_by_hand() {
        let x = chebyshev_points(1.0, 2.0, 3);
        let h = 3f64.sqrt() / 4.0;
        assert_eq!(x.len(), 3);
        assert_relative_eq!(x[0], 1.5 - h, max_relative = 1e-14);
        assert_relative_eq!(x[1], 1.5, max_relative = 1e-14);
        assert_relative_eq!(x[2], 1.5 + h, max_relative = 1e-14);
    }

    // The points are the zeros of T_n(t) = cos(n acos t) with t mapped from [x0, xf] to
    // [-1, 1] (definition of the Chebyshev polynomials of the first kind, cos(n theta) with
    // t = cos(theta)).
    #[test]
    fn points_are_zeros_of_chebyshev_polynomial() {
        for n in 1..=7 {
            let (x0, xf) = (-3.0, 5.0);
            let x = chebyshev_points(x0, xf, n);
            assert_eq!(x.len(), n);
            for (j, &xj) in x.iter().enumerate() {
                let t = (2.0 * xj - (x0 + xf)) / (xf - x0);
                assert_relative_eq!((n as f64 * t.acos()).cos(), 0.0, epsilon = 1e-12);
                assert!((x0..=xf).contains(&xj));
                if j > 0 {
                    assert!(xj > x[j - 1], "increasing");
                }
            }
        }
    }

    #[test]
    fn reversed_range_runs_from_x0() {
        let x = chebyshev_points(2.0, 1.0, 4);
        assert!(x.windows(2).all(|w| w[1] < w[0]));
        assert!(chebyshev_points(0.0, 1.0, 0).is_empty());
    }
}
