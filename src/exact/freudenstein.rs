//! Function generation by Freudenstein's equation.
//!
//! With the ground link on the x axis, `O2 = (0, 0)` and `O4 = (r1, 0)`, the loop closure
//! `r2 e(t2) + r3 e(t3) = r1 + r4 e(t4)` gives, after isolating `r3 e(t3)`, squaring and
//! dividing by `2 r2 r4`,
//!
//! ```text
//! K1 cos t4 - K2 cos t2 + K3 = cos(t2 - t4)
//! K1 = r1/r2,   K2 = r1/r4,   K3 = (r1^2 + r2^2 - r3^2 + r4^2) / (2 r2 r4)
//! ```
//!
//! (F. Freudenstein, "Approximate synthesis of four-bar linkages", Trans. ASME 77 (1955)
//! 853-861; written here in this project's angle convention, counter-clockwise from the
//! ground line `O2 -> O4`, and checked numerically against the closed-form positions in the
//! tests). The equation is linear in `K1, K2, K3`: three pairs of input and output angles
//! (precision points) give them by a 3x3 linear solve, more pairs by least squares.
//!
//! Given the ground length `r1`, the link lengths follow: `r2 = r1/K1`, `r4 = r1/K2`,
//! `r3^2 = r1^2 + r2^2 + r4^2 - 2 r2 r4 K3`. A negative `r2` (or `r4`) solves the equation
//! too: it is the link pointing the other way, `r2 e(t2) = |r2| e(t2 + pi)`. The linkage built
//! here then has the positive length and its angles at the precision points turned by half a
//! turn ([`FreudensteinDesign::input_flipped`], [`FreudensteinDesign::output_flipped`]); the
//! rotations between precision points, which is what a function generator reproduces, are
//! unchanged.
//!
//! The equation does not see the assembly (it is the loop closure squared): each precision
//! point lies on one of the two assemblies, and [`design`] picks the assembly whose
//! closed-form output angles match the points. Whether the linkage moves from one precision
//! point to the next without passing a toggle (a branch defect) is for the full
//! Newton-Raphson verification sweep of the synthesis engine to decide.

use std::f64::consts::PI;

use nalgebra::{DMatrix, DVector};

use crate::kinematics::position::closed_form;
use crate::kinematics::range::wrap_pi;
use crate::linkage::{Assembly, FourBar, LinkageError};

/// A pair of input and output angles (radians, counter-clockwise from the ground line).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AnglePair {
    /// Input (crank) angle `theta2`.
    pub theta2: f64,
    /// Output link angle `theta4`.
    pub theta4: f64,
}

/// Errors of Freudenstein synthesis and of the function-to-angle mapping.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FreudensteinError {
    /// Fewer than three precision points.
    #[error("Freudenstein synthesis needs at least 3 precision points, got {given}")]
    TooFewPoints {
        /// Number of points given.
        given: usize,
    },
    /// A precision angle is NaN or infinite.
    #[error("precision point {index} has a non-finite angle")]
    NotFinite {
        /// Index of the point.
        index: usize,
    },
    /// The precision points do not determine `K1, K2, K3` (e.g. two points coincide, or
    /// every point has `theta4 = theta2`).
    #[error("the precision points do not determine the linkage (singular-value ratio {ratio:e})")]
    Singular {
        /// Smallest over largest singular value of the linear system.
        ratio: f64,
    },
    /// The ground length is not positive and finite.
    #[error("ground length must be positive and finite, got {r1}")]
    BadGround {
        /// The value given.
        r1: f64,
    },
    /// `K1` or `K2` is zero or not finite: the input or output link would be infinitely long.
    #[error("{which} = {value}: the {link} would be infinitely long")]
    InfiniteLink {
        /// `K1` or `K2`.
        which: &'static str,
        /// Its value.
        value: f64,
        /// `input link` or `output link`.
        link: &'static str,
    },
    /// `r3^2 = r1^2 + r2^2 + r4^2 - 2 r2 r4 K3` is not positive: no coupler closes the loop.
    #[error("no coupler length fits (r3^2 = {r3_squared})")]
    NoCoupler {
        /// The computed `r3^2`.
        r3_squared: f64,
    },
    /// The linkage cannot be assembled at a precision point, in either assembly.
    #[error("the linkage cannot be assembled at precision point {index}")]
    NotAssembled {
        /// Index of the point.
        index: usize,
    },
    /// The precision points lie on different assemblies (branches or circuits): no single
    /// assembly passes through all of them.
    #[error(
        "the precision points lie on different assemblies ({open} open, {crossed} crossed): \
         the linkage cannot reach all of them"
    )]
    MixedAssembly {
        /// Points reached in the open assembly.
        open: usize,
        /// Points reached in the crossed assembly.
        crossed: usize,
    },
    /// A function-mapping value is not valid.
    #[error("{field} must be {what}, got {value}")]
    BadMapping {
        /// The field (`x0`, `xf`, `input_span`...).
        field: &'static str,
        /// What it must be.
        what: &'static str,
        /// The value.
        value: f64,
    },
    /// `f(x0) = f(xf)`: the output rotation cannot be scaled to the function's range.
    #[error("f(x0) = {y0} and f(xf) = {yf} coincide: no output range to map")]
    FlatFunction {
        /// `f(x0)`.
        y0: f64,
        /// `f(xf)`.
        yf: f64,
    },
    /// The linkage model refused the lengths.
    #[error(transparent)]
    Linkage(#[from] LinkageError),
}

/// Tuning of Freudenstein synthesis.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FreudensteinOptions {
    /// The linear system (rows `[cos t4, -cos t2, 1]`) counts as singular when its smallest
    /// singular value is below this fraction of the largest. Default `1e-10`.
    pub singular_ratio: f64,
    /// With exactly three points the linkage must meet each of them: the largest output-angle
    /// error (radians) accepted at the precision points before they count as lying on
    /// different assemblies. Default `1e-7`.
    pub match_tolerance: f64,
}

impl Default for FreudensteinOptions {
    fn default() -> Self {
        Self {
            singular_ratio: 1e-10,
            match_tolerance: 1e-7,
        }
    }
}

/// Freudenstein's constants `K1 = r1/r2`, `K2 = r1/r4`,
/// `K3 = (r1^2 + r2^2 - r3^2 + r4^2) / (2 r2 r4)`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FreudensteinK {
    /// `K1 = r1 / r2`.
    pub k1: f64,
    /// `K2 = r1 / r4`.
    pub k2: f64,
    /// `K3 = (r1^2 + r2^2 - r3^2 + r4^2) / (2 r2 r4)`.
    pub k3: f64,
}

/// Link lengths from Freudenstein's constants; `r2` and `r4` carry a sign (negative: the link
/// points the other way, see the module documentation).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SignedLengths {
    /// Ground link.
    pub r1: f64,
    /// Input link, signed.
    pub r2: f64,
    /// Coupler (positive).
    pub r3: f64,
    /// Output link, signed.
    pub r4: f64,
}

impl FreudensteinK {
    /// The constants of a linkage with lengths `r1..r4` (`r2`, `r4` may be signed).
    pub fn from_lengths(r1: f64, r2: f64, r3: f64, r4: f64) -> Self {
        Self {
            k1: r1 / r2,
            k2: r1 / r4,
            k3: (r1 * r1 + r2 * r2 - r3 * r3 + r4 * r4) / (2.0 * r2 * r4),
        }
    }

    /// Residual of Freudenstein's equation, `K1 cos t4 - K2 cos t2 + K3 - cos(t2 - t4)`.
    pub fn residual(&self, pair: AnglePair) -> f64 {
        let AnglePair { theta2, theta4 } = pair;
        self.k1 * theta4.cos() - self.k2 * theta2.cos() + self.k3 - (theta2 - theta4).cos()
    }

    /// Link lengths for the ground length `r1`.
    ///
    /// # Errors
    /// [`FreudensteinError::BadGround`], [`FreudensteinError::InfiniteLink`] when `K1` or `K2`
    /// is zero, [`FreudensteinError::NoCoupler`] when `r3^2 <= 0`.
    pub fn lengths(&self, r1: f64) -> Result<SignedLengths, FreudensteinError> {
        if !(r1.is_finite() && r1 > 0.0) {
            return Err(FreudensteinError::BadGround { r1 });
        }
        let r2 = r1 / self.k1;
        if !(r2.is_finite() && self.k1.abs() > NEGLIGIBLE_K) {
            return Err(FreudensteinError::InfiniteLink {
                which: "K1",
                value: self.k1,
                link: "input link",
            });
        }
        let r4 = r1 / self.k2;
        if !(r4.is_finite() && self.k2.abs() > NEGLIGIBLE_K) {
            return Err(FreudensteinError::InfiniteLink {
                which: "K2",
                value: self.k2,
                link: "output link",
            });
        }
        let r3_squared = r1 * r1 + r2 * r2 + r4 * r4 - 2.0 * r2 * r4 * self.k3;
        if !(r3_squared.is_finite() && r3_squared > 0.0) {
            return Err(FreudensteinError::NoCoupler { r3_squared });
        }
        Ok(SignedLengths {
            r1,
            r2,
            r3: r3_squared.sqrt(),
            r4,
        })
    }
}

/// `|K1|` or `|K2|` at or below which the input or output link counts as infinitely long (more
/// than a billion ground lengths: round-off of a solve whose exact answer is zero).
pub const NEGLIGIBLE_K: f64 = 1e-9;

/// The linkage in Freudenstein's frame: `O2 = (0, 0)`, `O4 = (r1, 0)`, lengths
/// `[r1, r2, r3, r4]`, the coupler point at joint `A` (function generation does not use it).
///
/// # Errors
/// [`LinkageError`] for lengths that are not positive and finite.
pub fn linkage_on_x_axis(lengths: [f64; 4], assembly: Assembly) -> Result<FourBar, LinkageError> {
    FourBar::on_x_axis(lengths, assembly)
}

/// Solves Freudenstein's equation for `K1, K2, K3`: exactly through three precision points
/// (3x3 linear solve), or in the least-squares sense of the equation's residuals for more
/// (singular value decomposition). Least squares here minimises the algebraic residual, not
/// the output-angle error; the engine's refinement takes it from there.
///
/// # Errors
/// [`FreudensteinError::TooFewPoints`], [`FreudensteinError::NotFinite`],
/// [`FreudensteinError::Singular`] when the points do not determine the constants.
pub fn solve_k(
    pairs: &[AnglePair],
    options: &FreudensteinOptions,
) -> Result<FreudensteinK, FreudensteinError> {
    if pairs.len() < 3 {
        return Err(FreudensteinError::TooFewPoints { given: pairs.len() });
    }
    if let Some(index) = pairs
        .iter()
        .position(|p| !(p.theta2.is_finite() && p.theta4.is_finite()))
    {
        return Err(FreudensteinError::NotFinite { index });
    }
    let n = pairs.len();
    let a = DMatrix::from_fn(n, 3, |i, j| match j {
        0 => pairs[i].theta4.cos(),
        1 => -pairs[i].theta2.cos(),
        _ => 1.0,
    });
    let b = DVector::from_fn(n, |i, _| (pairs[i].theta2 - pairs[i].theta4).cos());
    let svd = a.clone().svd(true, true);
    let smax = svd.singular_values.max();
    let smin = svd.singular_values.min();
    let ratio = if smax > 0.0 { smin / smax } else { 0.0 };
    if ratio.is_nan() || ratio < options.singular_ratio {
        return Err(FreudensteinError::Singular { ratio });
    }
    let k = if n == 3 {
        a.lu().solve(&b)
    } else {
        svd.solve(&b, smax * options.singular_ratio).ok()
    }
    .ok_or(FreudensteinError::Singular { ratio })?;
    Ok(FreudensteinK {
        k1: k[0],
        k2: k[1],
        k3: k[2],
    })
}

/// A function generator from Freudenstein's equation.
#[derive(Debug, Clone, PartialEq)]
pub struct FreudensteinDesign {
    /// The linkage: `O2 = (0, 0)`, `O4 = (r1, 0)`, positive lengths, the coupler point at
    /// joint `A` (it plays no part in function generation), and the assembly that meets the
    /// precision points.
    pub linkage: FourBar,
    /// Freudenstein's constants of the solve.
    pub k: FreudensteinK,
    /// `r2` came out negative: the crank angles in [`theta2`](Self::theta2) are the prescribed
    /// ones plus half a turn.
    pub input_flipped: bool,
    /// `r4` came out negative: the output angles in [`theta4`](Self::theta4) are the
    /// prescribed ones plus half a turn.
    pub output_flipped: bool,
    /// Crank angles of the linkage at the precision points (radians from the ground line).
    pub theta2: Vec<f64>,
    /// Output angles the linkage should have there (radians from the ground line).
    pub theta4: Vec<f64>,
    /// Output angle of the linkage (closed form, in its assembly) minus the wanted one at
    /// each precision point, wrapped to `(-pi, pi]`; zero up to round-off for three points.
    pub output_error: Vec<f64>,
}

impl FreudensteinDesign {
    /// Largest absolute output-angle error at the precision points (radians).
    pub fn max_output_error(&self) -> f64 {
        self.output_error.iter().fold(0.0, |m, e| m.max(e.abs()))
    }
}

/// Freudenstein synthesis: constants from the precision points ([`solve_k`]), link lengths
/// for the ground length `r1`, and the linkage in the assembly that meets the points
/// (see [`design_from_k`]).
///
/// # Errors
/// Any [`FreudensteinError`] of the steps.
pub fn design(
    pairs: &[AnglePair],
    r1: f64,
    options: &FreudensteinOptions,
) -> Result<FreudensteinDesign, FreudensteinError> {
    let k = solve_k(pairs, options)?;
    design_from_k(k, pairs, r1, options)
}

/// The linkage for given constants `k`, ground length `r1` and precision points `pairs`.
///
/// Lengths come from [`FreudensteinK::lengths`]; a negative `r2` or `r4` is made positive
/// with its angles turned by half a turn. At each precision point the closed-form output
/// angle of both assemblies is compared with the wanted one, and the assembly with the
/// smaller sum of squared errors over the points is chosen. With exactly three points (an
/// exact solve) every error must be within `options.match_tolerance`, otherwise the points
/// lie on different assemblies.
///
/// # Errors
/// [`FreudensteinError::NotAssembled`] when neither assembly exists at some point,
/// [`FreudensteinError::MixedAssembly`] as above, and the errors of
/// [`FreudensteinK::lengths`] and [`FourBar::new`].
pub fn design_from_k(
    k: FreudensteinK,
    pairs: &[AnglePair],
    r1: f64,
    options: &FreudensteinOptions,
) -> Result<FreudensteinDesign, FreudensteinError> {
    let lengths = k.lengths(r1)?;
    let input_flipped = lengths.r2 < 0.0;
    let output_flipped = lengths.r4 < 0.0;
    let turn = |flip: bool| if flip { PI } else { 0.0 };
    let theta2: Vec<f64> = pairs
        .iter()
        .map(|p| p.theta2 + turn(input_flipped))
        .collect();
    let theta4: Vec<f64> = pairs
        .iter()
        .map(|p| p.theta4 + turn(output_flipped))
        .collect();
    let base = linkage_on_x_axis(
        [r1, lengths.r2.abs(), lengths.r3, lengths.r4.abs()],
        Assembly::Open,
    )?;
    // Output-angle errors of each assembly at each point (None: does not assemble).
    let errors = |assembly: Assembly| -> Option<Vec<f64>> {
        theta2
            .iter()
            .zip(&theta4)
            .map(|(&t2, &t4)| closed_form(&base, t2, assembly).map(|p| wrap_pi(p.theta4 - t4)))
            .collect()
    };
    let open = errors(Assembly::Open);
    let crossed = errors(Assembly::Crossed);
    let sum_sq = |e: &Option<Vec<f64>>| {
        e.as_ref()
            .map_or(f64::INFINITY, |v| v.iter().map(|x| x * x).sum::<f64>())
    };
    let (assembly, output_error) = match (sum_sq(&open) <= sum_sq(&crossed), open, crossed) {
        (true, Some(e), _) => (Assembly::Open, e),
        (false, _, Some(e)) => (Assembly::Crossed, e),
        _ => {
            let index = theta2
                .iter()
                .position(|&t2| closed_form(&base, t2, Assembly::Open).is_none())
                .unwrap_or(0);
            return Err(FreudensteinError::NotAssembled { index });
        }
    };
    if pairs.len() == 3 {
        let worst = output_error.iter().fold(0.0f64, |m, e| m.max(e.abs()));
        if worst > options.match_tolerance {
            let near = |a: Assembly| {
                theta2
                    .iter()
                    .zip(&theta4)
                    .filter(|(&t2, &t4)| {
                        closed_form(&base, t2, a).is_some_and(|p| {
                            wrap_pi(p.theta4 - t4).abs() <= options.match_tolerance
                        })
                    })
                    .count()
            };
            return Err(FreudensteinError::MixedAssembly {
                open: near(Assembly::Open),
                crossed: near(Assembly::Crossed),
            });
        }
    }
    Ok(FreudensteinDesign {
        linkage: base.with_assembly(assembly),
        k,
        input_flipped,
        output_flipped,
        theta2,
        theta4,
        output_error,
    })
}

/// The linear map of function generation: `x` in `[x0, xf]` to the crank angle and `y` in
/// `[f(x0), f(xf)]` to the output angle,
///
/// ```text
/// theta2 = input_start  + (x - x0) / (xf - x0) * input_span
/// theta4 = output_start + (y - y0) / (yf - y0) * output_span
/// ```
///
/// Angles in radians from the ground line; the sign of a span is the direction of rotation
/// (counter-clockwise positive).
///
/// ```
/// use crankwright::exact::chebyshev::chebyshev_points;
/// use crankwright::exact::formula::Formula;
/// use crankwright::exact::freudenstein::{design, FreudensteinOptions, FunctionMapping};
///
/// let f = Formula::parse("log10(x)")?;
/// let (x0, xf) = (1.0, 2.0);
/// let map = FunctionMapping::new(
///     x0, xf, f.eval(x0)?, f.eval(xf)?,
///     60f64.to_radians(), 90f64.to_radians(), // spans
///     30f64.to_radians(), 240f64.to_radians(), // starts
/// ).expect("valid mapping");
/// let pairs = map.precision_pairs(&chebyshev_points(x0, xf, 3), |x| f.eval(x))?;
/// let d = design(&pairs, 1.0, &FreudensteinOptions::default()).expect("a linkage");
/// assert!(d.max_output_error() < 1e-9);
/// # Ok::<(), crankwright::exact::formula::FormulaError>(())
/// ```
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FunctionMapping {
    x0: f64,
    xf: f64,
    y0: f64,
    yf: f64,
    input_span: f64,
    output_span: f64,
    input_start: f64,
    output_start: f64,
}

impl FunctionMapping {
    /// A mapping for `x` in `[x0, xf]` with `y0 = f(x0)`, `yf = f(xf)`; spans and starts in
    /// radians.
    ///
    /// # Errors
    /// [`FreudensteinError::BadMapping`] for non-finite values, `x0 = xf` or a zero span;
    /// [`FreudensteinError::FlatFunction`] when `y0 = yf`.
    #[allow(
        clippy::too_many_arguments,
        reason = "the eight numbers of the published mapping"
    )]
    pub fn new(
        x0: f64,
        xf: f64,
        y0: f64,
        yf: f64,
        input_span: f64,
        output_span: f64,
        input_start: f64,
        output_start: f64,
    ) -> Result<Self, FreudensteinError> {
        let finite = [
            ("x0", x0),
            ("xf", xf),
            ("f(x0)", y0),
            ("f(xf)", yf),
            ("input_span", input_span),
            ("output_span", output_span),
            ("input_start", input_start),
            ("output_start", output_start),
        ];
        for (field, value) in finite {
            if !value.is_finite() {
                return Err(FreudensteinError::BadMapping {
                    field,
                    what: "finite",
                    value,
                });
            }
        }
        for (field, value) in [("input_span", input_span), ("output_span", output_span)] {
            if value.abs() < f64::EPSILON {
                return Err(FreudensteinError::BadMapping {
                    field,
                    what: "non-zero",
                    value,
                });
            }
        }
        if (xf - x0).abs() <= f64::EPSILON * (x0.abs() + xf.abs()) {
            return Err(FreudensteinError::BadMapping {
                field: "xf",
                what: "different from x0",
                value: xf,
            });
        }
        if (yf - y0).abs() <= f64::EPSILON * (y0.abs() + yf.abs()) {
            return Err(FreudensteinError::FlatFunction { y0, yf });
        }
        Ok(Self {
            x0,
            xf,
            y0,
            yf,
            input_span,
            output_span,
            input_start,
            output_start,
        })
    }

    /// Crank angle for `x`.
    pub fn theta2(&self, x: f64) -> f64 {
        self.input_start + (x - self.x0) / (self.xf - self.x0) * self.input_span
    }

    /// Output angle for `y`.
    pub fn theta4(&self, y: f64) -> f64 {
        self.output_start + (y - self.y0) / (self.yf - self.y0) * self.output_span
    }

    /// `x` for a crank angle (the inverse of [`theta2`](Self::theta2)).
    pub fn x_of(&self, theta2: f64) -> f64 {
        self.x0 + (theta2 - self.input_start) / self.input_span * (self.xf - self.x0)
    }

    /// `y` for an output angle (the inverse of [`theta4`](Self::theta4)).
    pub fn y_of(&self, theta4: f64) -> f64 {
        self.y0 + (theta4 - self.output_start) / self.output_span * (self.yf - self.y0)
    }

    /// The angle pair of the point `(x, y)`.
    pub fn pair(&self, x: f64, y: f64) -> AnglePair {
        AnglePair {
            theta2: self.theta2(x),
            theta4: self.theta4(y),
        }
    }

    /// Precision angle pairs at the points `xs`, with `y = f(x)` from `f`.
    ///
    /// # Errors
    /// The first error of `f`.
    pub fn precision_pairs<E>(
        &self,
        xs: &[f64],
        mut f: impl FnMut(f64) -> Result<f64, E>,
    ) -> Result<Vec<AnglePair>, E> {
        xs.iter().map(|&x| Ok(self.pair(x, f(x)?))).collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    use crate::exact::chebyshev::chebyshev_points;
    use crate::kinematics::position::{position_at, NewtonOptions};

    fn bar(r1: f64, r2: f64, r3: f64, r4: f64, assembly: Assembly) -> FourBar {
        linkage_on_x_axis([r1, r2, r3, r4], assembly).unwrap()
    }

    // With the output always 1 rad ahead of the input, Freudenstein's equation
    // K1 cos(theta4) - K2 cos(theta2) + K3 = cos(theta2 - theta4) holds for every angle only
    // with K1 = K2 = 0: no finite linkage does it. The solve gives K1, K2 of round-off size,
    // which once slipped through as a linkage 1e17 ground lengths long.
    #[test]
    fn a_constant_phase_shift_asks_for_an_infinite_link() {
        let pairs: Vec<AnglePair> = [0.1, 0.7, 1.3]
            .iter()
            .map(|t| AnglePair {
                theta2: *t,
                theta4: t + 1.0,
            })
            .collect();
        let err = design(&pairs, 100.0, &FreudensteinOptions::default()).unwrap_err();
        assert!(
            matches!(err, FreudensteinError::InfiniteLink { .. }),
            "{err:?}"
        );
    }

    fn pairs_of(l: &FourBar, degrees: &[f64]) -> Vec<AnglePair> {
        degrees
            .iter()
            .map(|d| {
                let p = closed_form(l, d.to_radians(), l.assembly()).unwrap();
                AnglePair {
                    theta2: p.theta2,
                    theta4: p.theta4,
                }
            })
            .collect()
    }

    // Sign convention, derived again: with K from the lengths, Freudenstein's equation holds at
    // every closed-form position of both assemblies (the closed form is the intersection of
    // two circles, independent of the equation). The same check with the roles of t2 and t4
    // swapped fails, so the test can tell the conventions apart.
    #[test]
    fn equation_holds_on_closed_form_positions() {
        for &(r1, r2, r3, r4) in &[
            (5.0, 2.0, 5.5, 4.0),
            (3.0, 4.5, 2.0, 3.5),
            (2.0, 6.0, 7.0, 5.0),
        ] {
            let k = FreudensteinK::from_lengths(r1, r2, r3, r4);
            let swapped = FreudensteinK {
                k1: k.k2,
                k2: k.k1,
                k3: k.k3,
            };
            let mut swapped_worst = 0.0f64;
            let mut checked = 0;
            for asm in [Assembly::Open, Assembly::Crossed] {
                let l = bar(r1, r2, r3, r4, asm);
                for i in 0..72 {
                    let Some(p) = closed_form(&l, (i as f64 * 5.0).to_radians(), asm) else {
                        continue;
                    };
                    let pair = AnglePair {
                        theta2: p.theta2,
                        theta4: p.theta4,
                    };
                    assert_relative_eq!(k.residual(pair), 0.0, epsilon = 1e-12);
                    swapped_worst = swapped_worst.max(swapped.residual(pair).abs());
                    checked += 1;
                }
            }
            assert!(checked > 20);
            assert!(swapped_worst > 1e-2, "{swapped_worst}");
        }
    }

    // Planted linkage: three (t2, t4) pairs read from closed-form positions of a known
    // linkage must give back its K and its link lengths (relative 1e-9).
    #[test]
    fn planted_three_points() {
        for asm in [Assembly::Open, Assembly::Crossed] {
            let (r1, r2, r3, r4) = (5.0, 2.0, 5.5, 4.0);
            let l = bar(r1, r2, r3, r4, asm);
            let pairs = pairs_of(&l, &[40.0, 75.0, 130.0]);
            let opts = FreudensteinOptions::default();
            let k = solve_k(&pairs, &opts).unwrap();
            let want = FreudensteinK::from_lengths(r1, r2, r3, r4);
            assert_relative_eq!(k.k1, want.k1, max_relative = 1e-9);
            assert_relative_eq!(k.k2, want.k2, max_relative = 1e-9);
            assert_relative_eq!(k.k3, want.k3, max_relative = 1e-9);
            let d = design(&pairs, r1, &opts).unwrap();
            let got = d.linkage.lengths();
            for (g, w) in got.iter().zip([r1, r2, r3, r4]) {
                assert_relative_eq!(*g, w, max_relative = 1e-9);
            }
            assert_eq!(d.linkage.assembly(), asm);
            assert!(!d.input_flipped && !d.output_flipped);
            assert!(d.max_output_error() < 1e-9);
        }
    }

    // Least squares on more than three exact points recovers the same linkage.
    #[test]
    fn planted_least_squares() {
        // A double-rocker (coupler shortest, s + l = 6.5 < 7); it assembles for crank
        // angles between about 21 and 104 degrees.
        let (r1, r2, r3, r4) = (3.0, 4.5, 2.0, 4.0);
        let l = bar(r1, r2, r3, r4, Assembly::Crossed);
        let pairs = pairs_of(&l, &[30.0, 40.0, 50.0, 60.0, 70.0, 80.0, 90.0]);
        let d = design(&pairs, r1, &FreudensteinOptions::default()).unwrap();
        for (g, w) in d.linkage.lengths().iter().zip([r1, r2, r3, r4]) {
            assert_relative_eq!(*g, w, max_relative = 1e-9);
        }
        assert_eq!(d.linkage.assembly(), Assembly::Crossed);
        assert!(d.max_output_error() < 1e-9, "{:?}", d.output_error);
    }

    // A link pointing the other way: shifting every crank angle by half a turn makes the
    // solve return K1 < 0 (r2 < 0); the design flips it back to the planted linkage.
    #[test]
    fn negative_lengths_are_flipped() {
        let (r1, r2, r3, r4) = (5.0, 2.0, 5.5, 4.0);
        let l = bar(r1, r2, r3, r4, Assembly::Open);
        let planted = pairs_of(&l, &[40.0, 75.0, 130.0]);
        let shifted: Vec<AnglePair> = planted
            .iter()
            .map(|p| AnglePair {
                theta2: p.theta2 + PI,
                theta4: p.theta4 - PI,
            })
            .collect();
        let opts = FreudensteinOptions::default();
        let k = solve_k(&shifted, &opts).unwrap();
        assert!(k.k1 < 0.0 && k.k2 < 0.0);
        let d = design(&shifted, r1, &opts).unwrap();
        assert!(d.input_flipped && d.output_flipped);
        for (g, w) in d.linkage.lengths().iter().zip([r1, r2, r3, r4]) {
            assert_relative_eq!(*g, w, max_relative = 1e-9);
        }
        for (t2, p) in d.theta2.iter().zip(&planted) {
            assert_relative_eq!(wrap_pi(t2 - p.theta2), 0.0, epsilon = 1e-12);
        }
        assert!(d.max_output_error() < 1e-9);
    }

    // Degenerate inputs: t4 = t2 everywhere makes the columns cos t4 and -cos t2 opposite,
    // so K1 and K2 are not determined (a parallelogram does this with any K1 = K2).
    #[test]
    fn singular_and_too_few() {
        let opts = FreudensteinOptions::default();
        let same: Vec<AnglePair> = [0.3, 0.8, 1.4]
            .iter()
            .map(|&t| AnglePair {
                theta2: t,
                theta4: t,
            })
            .collect();
        assert!(matches!(
            solve_k(&same, &opts),
            Err(FreudensteinError::Singular { .. })
        ));
        assert!(matches!(
            solve_k(&same[..2], &opts),
            Err(FreudensteinError::TooFewPoints { given: 2 })
        ));
        let mut bad = same.clone();
        bad[1].theta4 = f64::NAN;
        assert!(matches!(
            solve_k(&bad, &opts),
            Err(FreudensteinError::NotFinite { index: 1 })
        ));
    }

    // Points taken from both assemblies of one linkage: Freudenstein's equation is satisfied
    // (it is blind to the assembly) but no single assembly meets all three.
    #[test]
    fn mixed_assembly_is_reported() {
        let (r1, r2, r3, r4) = (5.0, 2.0, 5.5, 4.0);
        let open = bar(r1, r2, r3, r4, Assembly::Open);
        let crossed = bar(r1, r2, r3, r4, Assembly::Crossed);
        let mut pairs = pairs_of(&open, &[40.0, 75.0]);
        pairs.extend(pairs_of(&crossed, &[130.0]));
        let r = design(&pairs, r1, &FreudensteinOptions::default());
        assert!(
            matches!(
                r,
                Err(FreudensteinError::MixedAssembly {
                    open: 2,
                    crossed: 1
                })
            ),
            "{r:?}"
        );
    }

    // The function-generation workflow on y = log10(x), 1 <= x <= 2, three Chebyshev
    // points: the classic demonstration function of Freudenstein (1955). The published
    // numbers of textbook versions of this example are not asserted (not confirmed here);
    // the check is that the designed linkage, solved by Newton-Raphson from its own
    // kinematics, reproduces the wanted output angle at the precision points, and that the
    // mapping is the published linear one.
    #[test]
    fn log10_function_generator() {
        let f = |x: f64| Ok::<f64, ()>(x.log10());
        let (x0, xf) = (1.0f64, 2.0f64);
        let map = FunctionMapping::new(
            x0,
            xf,
            0.0,
            2f64.log10(),
            60f64.to_radians(),
            90f64.to_radians(),
            30f64.to_radians(),
            240f64.to_radians(),
        )
        .unwrap();
        assert_relative_eq!(map.theta2(xf), 90f64.to_radians(), max_relative = 1e-15);
        assert_relative_eq!(
            map.theta4(2f64.log10()),
            330f64.to_radians(),
            max_relative = 1e-15
        );
        assert_relative_eq!(map.x_of(map.theta2(1.3)), 1.3, max_relative = 1e-15);
        assert_relative_eq!(map.y_of(map.theta4(0.2)), 0.2, max_relative = 1e-14);
        let xs = chebyshev_points(x0, xf, 3);
        let pairs = map.precision_pairs(&xs, f).unwrap();
        let d = design(&pairs, 1.0, &FreudensteinOptions::default()).unwrap();
        for (i, x) in xs.iter().enumerate() {
            let wanted = map.theta4(x.log10()) + if d.output_flipped { PI } else { 0.0 };
            assert_relative_eq!(wrap_pi(d.theta4[i] - wanted), 0.0, epsilon = 1e-12);
            let pose = position_at(&d.linkage, d.theta2[i], &NewtonOptions::default()).unwrap();
            assert_relative_eq!(wrap_pi(pose.theta4 - wanted), 0.0, epsilon = 1e-9);
        }
    }

    #[test]
    fn mapping_rejects_bad_values() {
        let r = FunctionMapping::new(1.0, 1.0, 0.0, 1.0, 1.0, 1.0, 0.0, 0.0);
        assert!(matches!(
            r,
            Err(FreudensteinError::BadMapping { field: "xf", .. })
        ));
        let r = FunctionMapping::new(0.0, 1.0, 2.0, 2.0, 1.0, 1.0, 0.0, 0.0);
        assert!(matches!(r, Err(FreudensteinError::FlatFunction { .. })));
        let r = FunctionMapping::new(0.0, 1.0, 0.0, 1.0, 0.0, 1.0, 0.0, 0.0);
        assert!(matches!(
            r,
            Err(FreudensteinError::BadMapping {
                field: "input_span",
                ..
            })
        ));
        assert!(matches!(
            FreudensteinK::from_lengths(1.0, 2.0, 3.0, 2.5).lengths(-1.0),
            Err(FreudensteinError::BadGround { .. })
        ));
    }
}
