//! The four-bar linkage model: fixed pivots, link lengths, coupler point and assembly.
//!
//! Conventions follow the project's domain notes: `O2` is the input (crank) pivot, `O4` the
//! output pivot, `r1 = |O4 - O2|` the ground link, `r2` the input link, `r3` the coupler and
//! `r4` the output link. All angles are radians, counter-clockwise from the global +x axis.

use nalgebra::{Point2, Vector2};
use serde::{Deserialize, Serialize};

/// Unit vector `e(t) = (cos t, sin t)` for an angle `t` in radians.
#[inline]
pub fn unit(t: f64) -> Vector2<f64> {
    let (s, c) = t.sin_cos();
    Vector2::new(c, s)
}

/// The vector `v` turned 90 degrees counter-clockwise.
#[inline]
pub fn perp(v: Vector2<f64>) -> Vector2<f64> {
    Vector2::new(-v.y, v.x)
}

/// 2-D cross product (z component) of `a x b`.
#[inline]
pub fn cross(a: Vector2<f64>, b: Vector2<f64>) -> f64 {
    a.x * b.y - a.y * b.x
}

/// Axis-aligned bounding box `(min corner, max corner)` of the finite points among `points`;
/// `None` when there are none.
pub fn bounding_box(
    points: impl IntoIterator<Item = Point2<f64>>,
) -> Option<(Point2<f64>, Point2<f64>)> {
    let mut it = points
        .into_iter()
        .filter(|p| p.x.is_finite() && p.y.is_finite());
    let first = it.next()?;
    Some(it.fold((first, first), |(lo, hi), p| (lo.inf(&p), hi.sup(&p))))
}

/// Errors raised when a linkage is built from unchecked numbers.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum LinkageError {
    /// A length is zero, negative, NaN or infinite.
    #[error("{field} must be a positive finite length, got {value}")]
    BadLength {
        /// Which length (design-file field name).
        field: &'static str,
        /// The offending value.
        value: f64,
    },
    /// A coordinate is NaN or infinite.
    #[error("{field} must be finite, got {value}")]
    NotFinite {
        /// Which coordinate (design-file field name).
        field: &'static str,
        /// The offending value.
        value: f64,
    },
    /// The two fixed pivots coincide, so there is no ground link.
    #[error("input_pivot and output_pivot coincide: the ground link has zero length")]
    ZeroGround,
}

/// Assembly sign: `sigma = sign(sin(theta4 - theta3))`; `Open` is `sigma > 0`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Assembly {
    /// `sin(theta4 - theta3) > 0`.
    Open,
    /// `sin(theta4 - theta3) < 0`.
    Crossed,
}

impl Assembly {
    /// `+1.0` for open, `-1.0` for crossed.
    #[inline]
    pub fn sign(self) -> f64 {
        match self {
            Assembly::Open => 1.0,
            Assembly::Crossed => -1.0,
        }
    }

    /// The assembly whose sign is that of `s` (`s >= 0` gives open).
    #[inline]
    pub fn from_sign(s: f64) -> Self {
        if s >= 0.0 {
            Assembly::Open
        } else {
            Assembly::Crossed
        }
    }

    /// The other assembly.
    pub fn flipped(self) -> Self {
        match self {
            Assembly::Open => Assembly::Crossed,
            Assembly::Crossed => Assembly::Open,
        }
    }

    /// Lower-case name as used in files (`open`, `crossed`).
    pub fn name(self) -> &'static str {
        match self {
            Assembly::Open => "open",
            Assembly::Crossed => "crossed",
        }
    }
}

/// Coupler point in coupler coordinates: `p` along the coupler from joint `A` towards `B`,
/// `q` perpendicular to it, positive to the left. Lengths in the design's unit.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct CouplerPoint {
    /// Distance along the coupler from `A`.
    pub p: f64,
    /// Distance to the left of the coupler line.
    pub q: f64,
}

/// A validated planar four-bar linkage.
///
/// Built only through [`FourBar::new`], so every length is positive and finite and the ground
/// link is not degenerate.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FourBar {
    o2: Point2<f64>,
    o4: Point2<f64>,
    r2: f64,
    r3: f64,
    r4: f64,
    coupler_point: CouplerPoint,
    assembly: Assembly,
    // Derived, cached.
    r1: f64,
    theta1: f64,
}

fn check_len(field: &'static str, value: f64) -> Result<f64, LinkageError> {
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err(LinkageError::BadLength { field, value })
    }
}

fn check_finite(field: &'static str, value: f64) -> Result<f64, LinkageError> {
    if value.is_finite() {
        Ok(value)
    } else {
        Err(LinkageError::NotFinite { field, value })
    }
}

impl FourBar {
    /// Builds a linkage from its fixed pivots `o2`, `o4`, the input link `r2`, coupler `r3`,
    /// output link `r4`, the coupler point and the assembly.
    ///
    /// # Errors
    /// [`LinkageError`] when a length is not positive and finite, a coordinate is not finite,
    /// or the pivots coincide.
    pub fn new(
        o2: Point2<f64>,
        o4: Point2<f64>,
        r2: f64,
        r3: f64,
        r4: f64,
        coupler_point: CouplerPoint,
        assembly: Assembly,
    ) -> Result<Self, LinkageError> {
        check_finite("input_pivot.x", o2.x)?;
        check_finite("input_pivot.y", o2.y)?;
        check_finite("output_pivot.x", o4.x)?;
        check_finite("output_pivot.y", o4.y)?;
        check_len("input_link", r2)?;
        check_len("coupler", r3)?;
        check_len("output_link", r4)?;
        check_finite("coupler_point.p", coupler_point.p)?;
        check_finite("coupler_point.q", coupler_point.q)?;
        let g = o4 - o2;
        let r1 = g.norm();
        if !(r1 > 0.0 && r1.is_finite()) || r1 <= 1e-12 * (r2 + r3 + r4) {
            return Err(LinkageError::ZeroGround);
        }
        Ok(Self {
            o2,
            o4,
            r2,
            r3,
            r4,
            coupler_point,
            assembly,
            r1,
            theta1: g.y.atan2(g.x),
        })
    }

    /// A linkage with the ground on the x axis, `O2 = (0, 0)`, `O4 = (r1, 0)`, lengths
    /// `[r1, r2, r3, r4]` and the coupler point at joint `A`: the textbook placement.
    ///
    /// # Errors
    /// As [`FourBar::new`].
    pub fn on_x_axis(lengths: [f64; 4], assembly: Assembly) -> Result<Self, LinkageError> {
        let [r1, r2, r3, r4] = lengths;
        Self::new(
            Point2::origin(),
            Point2::new(r1, 0.0),
            r2,
            r3,
            r4,
            CouplerPoint::default(),
            assembly,
        )
    }

    /// Input (crank) pivot `O2`.
    pub fn input_pivot(&self) -> Point2<f64> {
        self.o2
    }
    /// Output pivot `O4`.
    pub fn output_pivot(&self) -> Point2<f64> {
        self.o4
    }
    /// Ground link length `r1 = |O4 - O2|`.
    pub fn ground(&self) -> f64 {
        self.r1
    }
    /// Ground angle `theta1` (radians), the direction of `O2 -> O4`.
    pub fn ground_angle(&self) -> f64 {
        self.theta1
    }
    /// Input link (crank) length `r2`.
    pub fn input_link(&self) -> f64 {
        self.r2
    }
    /// Coupler length `r3`.
    pub fn coupler(&self) -> f64 {
        self.r3
    }
    /// Output link length `r4`.
    pub fn output_link(&self) -> f64 {
        self.r4
    }
    /// Coupler point in coupler coordinates.
    pub fn coupler_point(&self) -> CouplerPoint {
        self.coupler_point
    }
    /// Assembly (branch sign) of the design.
    pub fn assembly(&self) -> Assembly {
        self.assembly
    }
    /// The same linkage in the other assembly.
    pub fn with_assembly(&self, assembly: Assembly) -> Self {
        Self { assembly, ..*self }
    }
    /// Link lengths `[r1, r2, r3, r4]`.
    pub fn lengths(&self) -> [f64; 4] {
        [self.r1, self.r2, self.r3, self.r4]
    }
    /// Characteristic size: the sum of the four link lengths. Tolerances scale with it.
    pub fn size(&self) -> f64 {
        self.r1 + self.r2 + self.r3 + self.r4
    }
    /// Longest link over shortest link.
    pub fn length_ratio(&self) -> f64 {
        let l = self.lengths();
        let max = l.iter().copied().fold(f64::MIN, f64::max);
        let min = l.iter().copied().fold(f64::MAX, f64::min);
        max / min
    }

    /// Crank joint `A = O2 + r2 e(theta2)` for a global crank angle `theta2` (radians).
    #[inline]
    pub fn joint_a(&self, theta2: f64) -> Point2<f64> {
        self.o2 + self.r2 * unit(theta2)
    }

    /// Output joint `B = O4 + r4 e(theta4)`.
    #[inline]
    pub fn joint_b(&self, theta4: f64) -> Point2<f64> {
        self.o4 + self.r4 * unit(theta4)
    }

    /// Coupler point `C = A + p e(theta3) + q e(theta3 + 90 deg)` in global coordinates.
    #[inline]
    pub fn coupler_point_at(&self, theta2: f64, theta3: f64) -> Point2<f64> {
        let e3 = unit(theta3);
        self.joint_a(theta2) + self.coupler_point.p * e3 + self.coupler_point.q * perp(e3)
    }

    /// Transmission angle `mu` (radians, in `[0, pi]`) at crank angle `theta2`, from the
    /// law of cosines `cos mu = (r3^2 + r4^2 - |A - O4|^2) / (2 r3 r4)`; `None` when the
    /// linkage cannot be assembled there.
    pub fn transmission_angle(&self, theta2: f64) -> Option<f64> {
        let d2 = (self.joint_a(theta2) - self.o4).norm_squared();
        let c = (self.r3 * self.r3 + self.r4 * self.r4 - d2) / (2.0 * self.r3 * self.r4);
        if (-1.0 - 1e-12..=1.0 + 1e-12).contains(&c) {
            Some(c.clamp(-1.0, 1.0).acos())
        } else {
            None
        }
    }

    /// Grashof class of the linkage, with the input as the driven link.
    pub fn grashof(&self) -> GrashofClass {
        GrashofClass::of(self.r1, self.r2, self.r3, self.r4)
    }

    /// This linkage moved rigidly: rotated by `angle` (radians) about the origin, then shifted
    /// by `shift`. The coupler point and assembly travel with it.
    pub fn transformed(&self, angle: f64, shift: Vector2<f64>) -> Self {
        let rot = nalgebra::Rotation2::new(angle);
        let o2 = rot * self.o2 + shift;
        let o4 = rot * self.o4 + shift;
        Self::new(
            o2,
            o4,
            self.r2,
            self.r3,
            self.r4,
            self.coupler_point,
            self.assembly,
        )
        .expect("a rigid motion keeps a valid linkage valid")
    }
}

/// Grashof class of a four-bar linkage (see the domain notes).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum GrashofClass {
    /// Grashof, shortest link is the ground: both input and output turn fully.
    DoubleCrank,
    /// Grashof, shortest link is the input: the input turns fully, the output rocks.
    CrankRocker,
    /// Grashof, shortest link is the output: the output turns fully, the input rocks.
    RockerCrank,
    /// Grashof, shortest link is the coupler: input and output both rock.
    DoubleRocker,
    /// `s + l = p + q`: the linkage can fold flat (change point); motion is ambiguous there.
    ChangePoint,
    /// `s + l > p + q`: no link turns fully.
    TripleRocker,
}

impl GrashofClass {
    /// Relative tolerance on `s + l - (p + q)` (scaled by the sum of lengths) below which a
    /// linkage counts as a change point.
    pub const CHANGE_POINT_TOL: f64 = 1e-9;

    /// Grashof excess `(s + l - (p + q)) / (r1 + r2 + r3 + r4)` of the lengths (ground,
    /// input, coupler, output), with the indices of the shortest and longest link (equal
    /// when all four are equal): negative for a Grashof linkage, zero at a change point.
    pub fn excess(r1: f64, r2: f64, r3: f64, r4: f64) -> (f64, usize, usize) {
        let l = [r1, r2, r3, r4];
        let sum: f64 = l.iter().sum();
        let (mut si, mut li) = (0usize, 0usize);
        for i in 1..4 {
            if l[i] < l[si] {
                si = i;
            }
            if l[i] > l[li] {
                li = i;
            }
        }
        ((l[si] + l[li] - (sum - l[si] - l[li])) / sum, si, li)
    }

    /// Classifies lengths `r1` (ground), `r2` (input), `r3` (coupler), `r4` (output).
    pub fn of(r1: f64, r2: f64, r3: f64, r4: f64) -> Self {
        let (excess, si, li) = Self::excess(r1, r2, r3, r4);
        if si == li {
            // All four equal: a parallelogram/kite at its limit, s + l = p + q.
            return GrashofClass::ChangePoint;
        }
        if excess.abs() <= Self::CHANGE_POINT_TOL {
            GrashofClass::ChangePoint
        } else if excess > 0.0 {
            GrashofClass::TripleRocker
        } else {
            match si {
                0 => GrashofClass::DoubleCrank,
                1 => GrashofClass::CrankRocker,
                3 => GrashofClass::RockerCrank,
                _ => GrashofClass::DoubleRocker,
            }
        }
    }

    /// Whether the input link can turn fully in this class (for a change point the input
    /// may turn fully but passes a folded position; callers decide whether to accept it).
    pub fn input_turns_fully(self) -> bool {
        matches!(self, GrashofClass::DoubleCrank | GrashofClass::CrankRocker)
    }

    /// Human-readable name, e.g. `crank-rocker`.
    pub fn name(self) -> &'static str {
        match self {
            GrashofClass::DoubleCrank => "double-crank",
            GrashofClass::CrankRocker => "crank-rocker",
            GrashofClass::RockerCrank => "rocker-crank",
            GrashofClass::DoubleRocker => "double-rocker",
            GrashofClass::ChangePoint => "change-point",
            GrashofClass::TripleRocker => "triple-rocker",
        }
    }
}

impl std::fmt::Display for GrashofClass {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn bar(r1: f64, r2: f64, r3: f64, r4: f64) -> FourBar {
        FourBar::on_x_axis([r1, r2, r3, r4], Assembly::Open).unwrap()
    }

    // Grashof classes: the four inversions of one Grashof chain (lengths 2, 7, 9, 6:
    // s + l = 11 < p + q = 13) and a non-Grashof chain. Classification rule from the
    // standard statement of Grashof's criterion (e.g. Norton, "Design of Machinery",
    // section 2.12, from memory).
    #[test]
    fn grashof_inversions() {
        assert_eq!(bar(7.0, 2.0, 9.0, 6.0).grashof(), GrashofClass::CrankRocker);
        assert_eq!(bar(2.0, 7.0, 9.0, 6.0).grashof(), GrashofClass::DoubleCrank);
        assert_eq!(bar(7.0, 6.0, 9.0, 2.0).grashof(), GrashofClass::RockerCrank);
        assert_eq!(
            bar(7.0, 6.0, 2.0, 9.0).grashof(),
            GrashofClass::DoubleRocker
        );
        assert_eq!(bar(7.0, 3.0, 9.0, 6.0).grashof(), GrashofClass::CrankRocker);
        assert_eq!(bar(7.0, 4.0, 9.0, 6.0).grashof(), GrashofClass::ChangePoint);
        assert_eq!(
            bar(5.0, 4.0, 9.0, 6.0).grashof(),
            GrashofClass::TripleRocker
        );
        // Parallelogram: s + l = p + q.
        assert_eq!(bar(5.0, 2.0, 5.0, 2.0).grashof(), GrashofClass::ChangePoint);
    }

    #[test]
    fn rejects_bad_lengths() {
        let e = FourBar::new(
            Point2::new(0.0, 0.0),
            Point2::new(1.0, 0.0),
            -1.0,
            1.0,
            1.0,
            CouplerPoint::default(),
            Assembly::Open,
        );
        assert!(matches!(
            e,
            Err(LinkageError::BadLength {
                field: "input_link",
                ..
            })
        ));
        let e = FourBar::new(
            Point2::new(0.0, 0.0),
            Point2::new(0.0, 0.0),
            1.0,
            1.0,
            1.0,
            CouplerPoint::default(),
            Assembly::Open,
        );
        assert_eq!(e, Err(LinkageError::ZeroGround));
    }
}
