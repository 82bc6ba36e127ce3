//! Tolerance and clearance studies of a given linkage: the first-order sensitivity of the
//! coupler point and the output angle to each dimension, first-order (linear) error
//! propagation, and a seeded, parallel Monte Carlo sampler of perturbed linkages.
//!
//! # Dimensions
//! A linkage is nine numbers ([`Dimension`]): the two fixed pivots' coordinates, the lengths
//! `r2`, `r3`, `r4` and the coupler point `(p, q)`; the ground length `r1` follows from the
//! pivots (moving `O4` along the ground line changes `r1` alone:
//! `d/d r1 = cos(theta1) d/d O4x + sin(theta1) d/d O4y`).
//!
//! # Sensitivity (implicit-function theorem on the loop closure)
//! At a crank angle the loop closure `F = O2 + r2 e2 + r3 e3 - O4 - r4 e4 = 0` fixes
//! `x = (theta3, theta4)`. For a dimension `d_k`, differentiating `F(x(d), d) = 0` gives
//! `J dx/dd_k = -(dF/dd_k + r2 perp(e2) d theta2/dd_k)` with the loop-closure Jacobian
//! `J = [r3 perp(e3), -r4 perp(e4)]` of the position and rate solves
//! ([`super::rates`]), where `dF/dO2 = I`, `dF/dO4 = -I`, `dF/dr2 = e2`, `dF/dr3 = e3`,
//! `dF/dr4 = -e4`, `dF/dp = dF/dq = 0`. The coupler point `C = O2 + r2 e2 + p e3 + q perp(e3)`
//! then moves by its direct derivatives plus `perp(C - A) d theta3/dd_k` (plus
//! `r2 perp(e2) d theta2/dd_k`). `d theta2/dd_k` is zero when the crank angle is held in the
//! frame ([`CrankReference::Frame`]) and `d theta1/dd_k` when it is held from the ground line
//! ([`CrankReference::GroundLine`], the convention of prescribed timing).
//!
//! # Clearance: where a pin sits in its hole
//! Each of the four joints has a radial clearance `c`: the pin's centre may sit anywhere within
//! `c` of the hole's centre. A sample draws one offset per joint, uniform over that disc, and
//! holds it for the whole motion (a frozen contact, as under a steady load): at the fixed
//! pivots the offset is fixed in the frame, so the effective pivot moves by it; at `A` and `B`
//! it is fixed in the coupler, so the coupler's effective length (pin centre to pin centre)
//! and the coupler point's place relative to the pins change. Along the coupler this is the
//! effective-link-length model of Garrett and Hall, "Effect of tolerance and clearance in
//! linkage design", ASME J. Eng. Ind. 91(1), 1969 (the model read from memory): the
//! coupler's length varies by up to the sum of its joints' clearances. Every sample is again a
//! [`FourBar`], so whatever evaluates a linkage evaluates a perturbed one.
//!
//! # Linear propagation and Monte Carlo
//! For small independent deviations `z` (dimensions and joint offsets) with covariance
//! `Sigma_z`, the outputs `y = f(d + G z)` have to first order the covariance
//! `cov(y) = J G Sigma_z G^T J^T`, `J = dy/dd`, `G` the first-order map of joint offsets into
//! the dimensions: the law of propagation of uncertainty (JCGM 100:2008, the GUM, 5.1-5.2, and
//! its matrix form in JCGM 102:2011; from memory). A uniform deviation on `[-t, t]` has
//! variance `t^2 / 3` (GUM 4.3.7); an offset uniform over a disc of radius `c` has variance
//! `c^2 / 4` in each coordinate. The Monte Carlo propagation of distributions (JCGM 101:2008)
//! needs no linearisation and gives the tails, the defects and the share that still
//! assembles; the two agree for small tolerances (the tests check it).
//!
//! # Determinism
//! Sample `i` draws from its own random stream, ChaCha8 seeded with `seed` on stream `i`
//! ([`sample_rng`]), and the samples are collected in index order, so the result is the same
//! whatever the number of threads or their scheduling.

use nalgebra::{Matrix3, Point2, SMatrix, SVector, Vector2, Vector3};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;
use rayon::prelude::*;

use super::error::{non_negative, KinematicsError};
use super::parts::Joint;
use super::position::{position_in, NewtonOptions, Pose};
use super::range::wrap_pi;
use super::rates::solve_j;
use crate::linkage::{perp, unit, CouplerPoint, FourBar, LinkageError};

/// Number of dimensions of a linkage (see [`Dimension`]).
pub const DIMENSIONS: usize = 9;

/// Values or deviations of the nine dimensions, in [`Dimension::ALL`] order.
pub type Dimensions = SVector<f64, DIMENSIONS>;

/// Covariance of the nine dimensions.
pub type DimensionCovariance = SMatrix<f64, DIMENSIONS, DIMENSIONS>;

/// Derivatives of the outputs `(Cx, Cy, output angle)` (rows) by the dimensions (columns).
pub type OutputJacobian = SMatrix<f64, 3, DIMENSIONS>;

/// First-order effect of the joint offsets (columns: `x`, `y` of each joint in
/// [`Joint::ALL`] order) on the dimensions (rows).
pub type ClearanceMap = SMatrix<f64, DIMENSIONS, 8>;

/// One dimension of a linkage.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Dimension {
    /// `x` of the input pivot `O2`.
    InputPivotX,
    /// `y` of the input pivot `O2`.
    InputPivotY,
    /// `x` of the output pivot `O4`.
    OutputPivotX,
    /// `y` of the output pivot `O4`.
    OutputPivotY,
    /// Input link (crank) length `r2`.
    InputLink,
    /// Coupler length `r3`.
    Coupler,
    /// Output link length `r4`.
    OutputLink,
    /// Coupler point `p`, along the coupler from `A`.
    CouplerP,
    /// Coupler point `q`, to the left of the coupler.
    CouplerQ,
}

impl Dimension {
    /// The nine dimensions in vector order.
    pub const ALL: [Dimension; DIMENSIONS] = [
        Dimension::InputPivotX,
        Dimension::InputPivotY,
        Dimension::OutputPivotX,
        Dimension::OutputPivotY,
        Dimension::InputLink,
        Dimension::Coupler,
        Dimension::OutputLink,
        Dimension::CouplerP,
        Dimension::CouplerQ,
    ];

    /// Position in [`Dimension::ALL`] and in [`Dimensions`] vectors.
    pub fn index(self) -> usize {
        self as usize
    }

    /// Design-file name of the dimension, e.g. `input_pivot.x`.
    pub fn name(self) -> &'static str {
        match self {
            Dimension::InputPivotX => "input_pivot.x",
            Dimension::InputPivotY => "input_pivot.y",
            Dimension::OutputPivotX => "output_pivot.x",
            Dimension::OutputPivotY => "output_pivot.y",
            Dimension::InputLink => "input_link",
            Dimension::Coupler => "coupler",
            Dimension::OutputLink => "output_link",
            Dimension::CouplerP => "coupler_point.p",
            Dimension::CouplerQ => "coupler_point.q",
        }
    }

    /// The tolerance group that sets its deviation.
    pub fn group(self) -> ToleranceGroup {
        match self {
            Dimension::InputPivotX
            | Dimension::InputPivotY
            | Dimension::OutputPivotX
            | Dimension::OutputPivotY => ToleranceGroup::PivotPosition,
            Dimension::InputLink | Dimension::Coupler | Dimension::OutputLink => {
                ToleranceGroup::LinkLength
            }
            Dimension::CouplerP | Dimension::CouplerQ => ToleranceGroup::CouplerPoint,
        }
    }
}

/// A group of deviations sharing one tolerance.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum ToleranceGroup {
    /// Each link length `r2`, `r3`, `r4`: `+/- t`.
    LinkLength,
    /// Each coordinate of each fixed pivot: `+/- t`.
    PivotPosition,
    /// Each coordinate `p`, `q` of the coupler point: `+/- t`.
    CouplerPoint,
    /// Radial clearance of each of the four joints.
    JointClearance,
}

impl ToleranceGroup {
    /// The four groups.
    pub const ALL: [ToleranceGroup; 4] = [
        ToleranceGroup::LinkLength,
        ToleranceGroup::PivotPosition,
        ToleranceGroup::CouplerPoint,
        ToleranceGroup::JointClearance,
    ];

    /// Scenario-file name of the group, e.g. `link_length`.
    pub fn name(self) -> &'static str {
        match self {
            ToleranceGroup::LinkLength => "link_length",
            ToleranceGroup::PivotPosition => "pivot_position",
            ToleranceGroup::CouplerPoint => "coupler_point",
            ToleranceGroup::JointClearance => "joint_clearance",
        }
    }
}

/// The dimensions of `linkage` as a vector in [`Dimension::ALL`] order (length units).
pub fn dimensions_of(linkage: &FourBar) -> Dimensions {
    let (o2, o4) = (linkage.input_pivot(), linkage.output_pivot());
    let cp = linkage.coupler_point();
    Dimensions::from([
        o2.x,
        o2.y,
        o4.x,
        o4.y,
        linkage.input_link(),
        linkage.coupler(),
        linkage.output_link(),
        cp.p,
        cp.q,
    ])
}

/// The linkage with dimensions `d` (in [`Dimension::ALL`] order) and `linkage`'s assembly.
///
/// # Errors
/// [`LinkageError`] when the dimensions make no valid linkage (a length not positive, the
/// pivots coinciding).
pub fn with_dimensions(linkage: &FourBar, d: &Dimensions) -> Result<FourBar, LinkageError> {
    FourBar::new(
        Point2::new(d[0], d[1]),
        Point2::new(d[2], d[3]),
        d[4],
        d[5],
        d[6],
        CouplerPoint { p: d[7], q: d[8] },
        linkage.assembly(),
    )
}

/// What stays fixed when the dimensions change: the crank angle in the frame, or measured
/// from the ground line `O2 -> O4`. The output angle is reported from the same reference.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum CrankReference {
    /// Angles counter-clockwise from the frame's +x axis (`theta2`, `theta4`): a drive and an
    /// output read against the frame.
    Frame,
    /// Angles from the ground line (`theta2 - theta1`, `theta4 - theta1`): the convention of
    /// prescribed timing, which moves with the pivots.
    GroundLine,
}

impl CrankReference {
    /// The reference angle (radians) of `linkage`: 0 or its ground angle `theta1`.
    fn origin(self, linkage: &FourBar) -> f64 {
        match self {
            CrankReference::Frame => 0.0,
            CrankReference::GroundLine => linkage.ground_angle(),
        }
    }
}

/// The outputs of `linkage` at the crank angle `crank_angle` (radians, from `reference`) in
/// its own assembly: the pose and `(Cx, Cy, output angle)`, the coupler point in length units
/// and the output angle `theta4` (radians, from `reference`, in `(-pi, pi]`). `None` when the
/// linkage cannot be assembled there.
pub fn outputs_at(
    linkage: &FourBar,
    crank_angle: f64,
    reference: CrankReference,
) -> Option<(Pose, Vector3<f64>)> {
    let origin = reference.origin(linkage);
    let theta2 = crank_angle + origin;
    let pose = position_in(
        linkage,
        theta2,
        linkage.assembly(),
        &NewtonOptions::default(),
    )?;
    let c = linkage.coupler_point_at(theta2, pose.theta3);
    Some((pose, Vector3::new(c.x, c.y, wrap_pi(pose.theta4 - origin))))
}

/// Output deviation `outputs - nominal` with the angle's difference wrapped into `(-pi, pi]`.
pub fn output_error(outputs: &Vector3<f64>, nominal: &Vector3<f64>) -> Vector3<f64> {
    let d = outputs - nominal;
    Vector3::new(d.x, d.y, wrap_pi(d.z))
}

/// First-order sensitivity of the outputs at one crank angle.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Sensitivity {
    /// The pose of the nominal linkage there.
    pub pose: Pose,
    /// The outputs `(Cx, Cy, output angle)` (see [`outputs_at`]).
    pub outputs: Vector3<f64>,
    /// Their derivatives by the dimensions: rows `Cx`, `Cy` (length per length, i.e.
    /// dimensionless) and the output angle (radians per length unit).
    pub jacobian: OutputJacobian,
}

/// The first-order sensitivity of the coupler point and output angle of `linkage` at
/// `crank_angle` (radians, from `reference`) to each dimension, from the loop-closure
/// Jacobian by the implicit-function theorem (module doc). `None` when the linkage does not
/// assemble there or sits at a toggle (where the sensitivity is unbounded).
pub fn sensitivity(
    linkage: &FourBar,
    crank_angle: f64,
    reference: CrankReference,
) -> Option<Sensitivity> {
    let (pose, outputs) = outputs_at(linkage, crank_angle, reference)?;
    let (r2, r3, r4) = (
        linkage.input_link(),
        linkage.coupler(),
        linkage.output_link(),
    );
    let (e2, e3, e4) = (unit(pose.theta2), unit(pose.theta3), unit(pose.theta4));
    let cp = linkage.coupler_point();
    let off = cp.p * e3 + cp.q * perp(e3);
    // d theta1 / d(O2x, O2y, O4x, O4y): atan2 of g = O4 - O2.
    let g = linkage.output_pivot() - linkage.input_pivot();
    let g2 = g.norm_squared();
    let dt1 = [g.y / g2, -g.x / g2, -g.y / g2, g.x / g2];
    let mut jacobian = OutputJacobian::zeros();
    for dim in Dimension::ALL {
        let k = dim.index();
        // Direct derivatives of the loop closure F and of C, holding the angles.
        let (df, dc) = match dim {
            Dimension::InputPivotX => (Vector2::x(), Vector2::x()),
            Dimension::InputPivotY => (Vector2::y(), Vector2::y()),
            Dimension::OutputPivotX => (-Vector2::x(), Vector2::zeros()),
            Dimension::OutputPivotY => (-Vector2::y(), Vector2::zeros()),
            Dimension::InputLink => (e2, e2),
            Dimension::Coupler => (e3, Vector2::zeros()),
            Dimension::OutputLink => (-e4, Vector2::zeros()),
            Dimension::CouplerP => (Vector2::zeros(), e3),
            Dimension::CouplerQ => (Vector2::zeros(), perp(e3)),
        };
        let dtheta1 = if k < 4 { dt1[k] } else { 0.0 };
        let dtheta2 = match reference {
            CrankReference::Frame => 0.0,
            CrankReference::GroundLine => dtheta1,
        };
        let crank = r2 * perp(e2) * dtheta2;
        let (d3, d4) = solve_j(r3, r4, e3, e4, -(df + crank))?;
        let dc = dc + crank + perp(off) * d3;
        let dout = match reference {
            CrankReference::Frame => d4,
            CrankReference::GroundLine => d4 - dtheta1,
        };
        jacobian.set_column(k, &Vector3::new(dc.x, dc.y, dout));
    }
    Some(Sensitivity {
        pose,
        outputs,
        jacobian,
    })
}

/// The first-order map of the joint offsets (see [`Deviation::joints`]) into the dimensions
/// of `linkage`: a fixed pivot's offset moves the pivot; offsets `dA`, `dB` of the pins at
/// `A` and `B` (coupler frame) change the coupler's length by `dBx - dAx`, turn the line
/// through the pins by `g = (dBy - dAy) / r3`, and so move the coupler point relative to it by
/// `dp = -dAx + g q`, `dq = -dAy - g p`.
pub fn clearance_map(linkage: &FourBar) -> ClearanceMap {
    let r3 = linkage.coupler();
    let cp = linkage.coupler_point();
    let mut m = ClearanceMap::zeros();
    // Columns: O2 (0, 1), A (2, 3), B (4, 5), O4 (6, 7).
    m[(0, 0)] = 1.0;
    m[(1, 1)] = 1.0;
    m[(2, 6)] = 1.0;
    m[(3, 7)] = 1.0;
    m[(5, 2)] = -1.0;
    m[(5, 4)] = 1.0;
    m[(7, 2)] = -1.0;
    m[(7, 3)] = -cp.q / r3;
    m[(7, 5)] = cp.q / r3;
    m[(8, 3)] = -1.0 + cp.p / r3;
    m[(8, 5)] = -cp.p / r3;
    m
}

/// How the deviations of the toleranced dimensions are distributed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Spread {
    /// Uniform on `[-t, t]` (variance `t^2 / 3`).
    Uniform,
    /// Normal with standard deviation `t / 3`, so that `+/- t` holds 99.7 % of the parts
    /// (tolerance as three standard deviations: common practice, no source). Not truncated.
    Normal,
}

/// The tolerances of a study (length units) and how deviations spread. Joint offsets are
/// always uniform over their clearance disc.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tolerances {
    link_length: f64,
    pivot_position: f64,
    coupler_point: f64,
    joint_clearance: f64,
    spread: Spread,
}

impl Tolerances {
    /// Tolerances `+/-` on each link length, each fixed-pivot coordinate and each coupler
    /// point coordinate, and the radial clearance of each joint (length units).
    ///
    /// # Errors
    /// [`KinematicsError::NotNonNegative`] naming the tolerance that is negative or not finite.
    pub fn new(
        link_length: f64,
        pivot_position: f64,
        coupler_point: f64,
        joint_clearance: f64,
        spread: Spread,
    ) -> Result<Self, KinematicsError> {
        Ok(Self {
            link_length: non_negative("link_length", link_length)?,
            pivot_position: non_negative("pivot_position", pivot_position)?,
            coupler_point: non_negative("coupler_point", coupler_point)?,
            joint_clearance: non_negative("joint_clearance", joint_clearance)?,
            spread,
        })
    }

    /// No deviation at all.
    pub fn zero() -> Self {
        Self {
            link_length: 0.0,
            pivot_position: 0.0,
            coupler_point: 0.0,
            joint_clearance: 0.0,
            spread: Spread::Uniform,
        }
    }

    /// The tolerance of `group` (length units).
    pub fn of(&self, group: ToleranceGroup) -> f64 {
        match group {
            ToleranceGroup::LinkLength => self.link_length,
            ToleranceGroup::PivotPosition => self.pivot_position,
            ToleranceGroup::CouplerPoint => self.coupler_point,
            ToleranceGroup::JointClearance => self.joint_clearance,
        }
    }

    /// How the dimensions' deviations spread.
    pub fn spread(&self) -> Spread {
        self.spread
    }

    /// Variance of the deviation of one dimension of `group` (not the clearance):
    /// `t^2 / 3` uniform, `t^2 / 9` normal.
    fn dimension_variance(&self, group: ToleranceGroup) -> f64 {
        let t = self.of(group);
        match self.spread {
            Spread::Uniform => t * t / 3.0,
            Spread::Normal => t * t / 9.0,
        }
    }

    /// Variance of each coordinate of a joint offset uniform over the clearance disc,
    /// `c^2 / 4` (`E[r^2] = c^2 / 2`, split evenly between the two axes).
    fn offset_variance(&self) -> f64 {
        self.joint_clearance * self.joint_clearance / 4.0
    }

    /// The covariance of the effective dimensions of `linkage` to first order:
    /// `Sigma_d + G Sigma_c G^T` with the clearance map `G` ([`clearance_map`]).
    pub fn covariance(&self, linkage: &FourBar) -> DimensionCovariance {
        let mut cov = DimensionCovariance::zeros();
        for dim in Dimension::ALL {
            cov[(dim.index(), dim.index())] = self.dimension_variance(dim.group());
        }
        let g = clearance_map(linkage);
        cov + g * g.transpose() * self.offset_variance()
    }

    /// One random deviation: the nine dimensions (fixed order) then the four joint offsets.
    pub fn draw<R: Rng>(&self, rng: &mut R) -> Deviation {
        let mut dimensions = Dimensions::zeros();
        for dim in Dimension::ALL {
            let t = self.of(dim.group());
            dimensions[dim.index()] = match self.spread {
                Spread::Uniform => t * rng.random_range(-1.0..=1.0),
                Spread::Normal => t / 3.0 * rng.sample::<f64, _>(StandardNormal),
            };
        }
        let mut joints = [Vector2::zeros(); 4];
        for j in &mut joints {
            // Uniform over the disc: radius c sqrt(u) (area-uniform), angle uniform.
            let r = self.joint_clearance * rng.random::<f64>().sqrt();
            let a = rng.random::<f64>() * std::f64::consts::TAU;
            *j = r * unit(a);
        }
        Deviation { dimensions, joints }
    }
}

/// One manufactured instance's deviations from the nominal linkage.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Deviation {
    /// Deviations of the nine dimensions (length units, [`Dimension::ALL`] order).
    pub dimensions: Dimensions,
    /// Offset of each joint's pin from its hole's centre (length units, [`Joint::ALL`]
    /// order): in the frame for the fixed pivots, in the coupler's frame (x along `A -> B`)
    /// for `A` and `B`.
    pub joints: [Vector2<f64>; 4],
}

impl Deviation {
    /// The offset of `joint`.
    pub fn joint(&self, joint: Joint) -> Vector2<f64> {
        self.joints[joint as usize]
    }
}

/// The effective linkage of a manufactured instance of `nominal` with deviation `deviation`
/// (module doc: pivots moved by their offsets, the coupler measured between the pins' centres).
/// A zero deviation gives `nominal` exactly.
///
/// # Errors
/// [`LinkageError`] when the deviations are so large that no valid linkage is left.
pub fn perturbed(nominal: &FourBar, deviation: &Deviation) -> Result<FourBar, LinkageError> {
    let d = dimensions_of(nominal) + deviation.dimensions;
    let o2 = Point2::new(d[0], d[1]) + deviation.joint(Joint::InputPivot);
    let o4 = Point2::new(d[2], d[3]) + deviation.joint(Joint::OutputPivot);
    // Coupler frame: holes at (0, 0) and (r3, 0), pins at dA and (r3, 0) + dB.
    let da = deviation.joint(Joint::CrankCoupler);
    let db = deviation.joint(Joint::CouplerOutput);
    let axis = Vector2::new(d[5] + db.x - da.x, db.y - da.y);
    let r3 = axis.x.hypot(axis.y);
    let x = axis / r3;
    let rel = Vector2::new(d[7] - da.x, d[8] - da.y);
    let cp = CouplerPoint {
        p: rel.dot(&x),
        q: rel.dot(&perp(x)),
    };
    FourBar::new(o2, o4, d[4], r3, d[6], cp, nominal.assembly())
}

impl Sensitivity {
    /// The first-order covariance of the outputs for the dimensions' covariance `cov`:
    /// `J cov J^T` (rows and columns `Cx`, `Cy`, output angle).
    pub fn covariance(&self, cov: &DimensionCovariance) -> Matrix3<f64> {
        self.jacobian * cov * self.jacobian.transpose()
    }

    /// The share of each tolerance group in the first-order variance of each output (the
    /// groups are independent, so the shares add up to the diagonal of [`Self::covariance`]
    /// of [`Tolerances::covariance`]): which tolerance to tighten first.
    pub fn contributions(
        &self,
        nominal: &FourBar,
        tolerances: &Tolerances,
    ) -> [(ToleranceGroup, Vector3<f64>); 4] {
        let jg = self.jacobian * clearance_map(nominal);
        ToleranceGroup::ALL.map(|group| {
            let v = if group == ToleranceGroup::JointClearance {
                jg.map(|x| x * x).column_sum() * tolerances.offset_variance()
            } else {
                let var = tolerances.dimension_variance(group);
                let mut s = Vector3::zeros();
                for dim in Dimension::ALL.iter().filter(|d| d.group() == group) {
                    s += self.jacobian.column(dim.index()).map(|x| x * x) * var;
                }
                s
            };
            (group, v)
        })
    }

    /// First-order worst case of each output's deviation: every dimension at the end of its
    /// tolerance that hurts most (`sum |dy/dd_k| t_k`) and every pin against its hole on the
    /// side that hurts most (`sum c |dy/d offset_j|`, the offset's gradient's length).
    pub fn worst_case(&self, nominal: &FourBar, tolerances: &Tolerances) -> Vector3<f64> {
        let mut w = Vector3::zeros();
        for dim in Dimension::ALL {
            let t = tolerances.of(dim.group());
            w += self.jacobian.column(dim.index()).abs() * t;
        }
        let jg = self.jacobian * clearance_map(nominal);
        let c = tolerances.joint_clearance;
        for j in 0..4 {
            for row in 0..3 {
                w[row] += c * jg[(row, 2 * j)].hypot(jg[(row, 2 * j + 1)]);
            }
        }
        w
    }
}

/// The random stream of Monte Carlo sample `index`: ChaCha8 seeded with `seed`, on stream
/// `index`. Independent of thread count and scheduling.
pub fn sample_rng(seed: u64, index: usize) -> ChaCha8Rng {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    rng.set_stream(index as u64);
    rng
}

/// The effective linkage of Monte Carlo sample `index` of `nominal` under `tolerances`.
///
/// # Errors
/// [`LinkageError`] when the sampled deviations leave no valid linkage.
pub fn sample_linkage(
    nominal: &FourBar,
    tolerances: &Tolerances,
    seed: u64,
    index: usize,
) -> Result<FourBar, LinkageError> {
    perturbed(nominal, &tolerances.draw(&mut sample_rng(seed, index)))
}

/// Runs `evaluate` on `samples` perturbed instances of `nominal` (sample `i` from
/// [`sample_linkage`] with `seed` and `i`), in parallel, and returns the results in sample
/// order; a sample that leaves no valid linkage gives its error instead. The result does not
/// depend on the number of threads.
pub fn monte_carlo<T, F>(
    nominal: &FourBar,
    tolerances: &Tolerances,
    samples: usize,
    seed: u64,
    evaluate: F,
) -> Vec<Result<T, LinkageError>>
where
    T: Send,
    F: Fn(&FourBar) -> T + Sync,
{
    (0..samples)
        .into_par_iter()
        .map(|i| sample_linkage(nominal, tolerances, seed, i).map(|l| evaluate(&l)))
        .collect()
}

/// Sample mean and covariance of vectors.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Moments<const N: usize> {
    /// Number of samples.
    pub count: usize,
    /// Sample mean.
    pub mean: SVector<f64, N>,
    /// Sample covariance with the `n - 1` divisor (unbiased).
    pub covariance: SMatrix<f64, N, N>,
}

impl<const N: usize> Moments<N> {
    /// Mean and covariance of `samples` (two passes: the mean, then the deviations from it);
    /// `None` for fewer than two samples.
    pub fn of(samples: &[SVector<f64, N>]) -> Option<Self> {
        let n = samples.len();
        if n < 2 {
            return None;
        }
        let mean = samples.iter().sum::<SVector<f64, N>>() / n as f64;
        let mut covariance = SMatrix::<f64, N, N>::zeros();
        for s in samples {
            let d = s - mean;
            covariance += d * d.transpose();
        }
        covariance /= (n - 1) as f64;
        Some(Self {
            count: n,
            mean,
            covariance,
        })
    }

    /// Standard deviation of each component.
    pub fn std(&self) -> SVector<f64, N> {
        self.covariance.diagonal().map(f64::sqrt)
    }
}

/// The `p`-quantile (`0 <= p <= 1`) of ascending `sorted` data by linear interpolation
/// between order statistics, `x[h] + (h - floor h)(x[h + 1] - x[h])` with `h = (n - 1) p`
/// (definition 7 of Hyndman and Fan, "Sample quantiles in statistical packages", The American
/// Statistician 50(4), 1996; from memory). `None` for no data or `p` outside `[0, 1]`.
pub fn quantile(sorted: &[f64], p: f64) -> Option<f64> {
    if sorted.is_empty() || !(0.0..=1.0).contains(&p) {
        return None;
    }
    let h = (sorted.len() - 1) as f64 * p;
    let lo = h.floor() as usize;
    let hi = (lo + 1).min(sorted.len() - 1);
    Some(sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo]))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::kinematics::fixtures::{crank_rocker, double_rocker, place, DOUBLE_ROCKER_PHI_DEG};
    use approx::assert_relative_eq;

    /// Crank angles (radians, from the ground line) used on each fixture.
    fn cases() -> Vec<(FourBar, Vec<f64>)> {
        let deg = |v: &[f64]| v.iter().map(|d| d.to_radians()).collect::<Vec<_>>();
        vec![
            (
                crank_rocker(),
                deg(&[15.0, 75.0, 135.0, 195.0, 255.0, 315.0]),
            ),
            (double_rocker(), deg(&DOUBLE_ROCKER_PHI_DEG)),
        ]
    }

    /// Outputs from the fixture's own closed form (law of cosines): the crank angle `phi`
    /// (from the ground line of `nominal`) held in the frame or from the linkage's own ground
    /// line.
    fn closed_outputs(l: &FourBar, nominal: &FourBar, phi: f64, r: CrankReference) -> Vector3<f64> {
        let origin = match r {
            CrankReference::Frame => nominal.ground_angle(),
            CrankReference::GroundLine => l.ground_angle(),
        };
        let at = place(l, phi + origin).unwrap();
        let out = match r {
            CrankReference::Frame => at.theta4,
            CrankReference::GroundLine => at.theta4 - l.ground_angle(),
        };
        Vector3::new(at.c.x, at.c.y, out)
    }

    // The analytic sensitivity against central differences of closed-form outputs (written in
    // the fixture, independent of the library's solvers) for each dimension, both references,
    // at several crank angles of a crank-rocker and a double-rocker.
    #[test]
    fn sensitivity_matches_finite_differences() {
        let h = 1e-6;
        let mut worst: f64 = 0.0;
        for (l, phis) in cases() {
            let d0 = dimensions_of(&l);
            for &phi in &phis {
                for r in [CrankReference::Frame, CrankReference::GroundLine] {
                    let angle = phi + l.ground_angle() - r.origin(&l);
                    let s = sensitivity(&l, angle, r).unwrap();
                    let nominal = closed_outputs(&l, &l, phi, r);
                    assert_relative_eq!(
                        output_error(&s.outputs, &nominal).norm(),
                        0.0,
                        epsilon = 1e-10
                    );
                    for dim in Dimension::ALL {
                        let k = dim.index();
                        let step = |sign: f64| {
                            let mut d = d0;
                            d[k] += sign * h;
                            closed_outputs(&with_dimensions(&l, &d).unwrap(), &l, phi, r)
                        };
                        let fd = output_error(&step(1.0), &step(-1.0)) / (2.0 * h);
                        let an = s.jacobian.column(k);
                        let err = (fd - an).abs().max();
                        worst = worst.max(err / an.abs().max().max(1.0));
                        assert!(
                            err < 1e-6 * an.abs().max().max(1.0),
                            "{dim:?} {r:?}: {fd} vs {an}"
                        );
                    }
                }
            }
        }
        assert!(worst > 0.0);
    }

    proptest::proptest! {
        // The analytic sensitivity against central differences of the fixture's closed form
        // on random linkages and crank angles (both references), away from toggles
        // (|sin(theta3 - theta4)| > 0.05) where the derivatives are unbounded.
        #[test]
        fn sensitivity_matches_differences_on_random_linkages(
            o2x in -5.0..5.0f64, o2y in -5.0..5.0f64, r1 in 1.0..10.0f64, t1 in -3.0..3.0f64,
            r2 in 0.5..10.0f64, r3 in 0.5..10.0f64, r4 in 0.5..10.0f64,
            p in -5.0..5.0f64, q in -5.0..5.0f64, open in proptest::bool::ANY,
            phi in 0.0..std::f64::consts::TAU,
        ) {
            let o2 = Point2::new(o2x, o2y);
            let asm = if open { crate::linkage::Assembly::Open } else { crate::linkage::Assembly::Crossed };
            let l = FourBar::new(o2, o2 + r1 * unit(t1), r2, r3, r4, CouplerPoint { p, q }, asm)
                .unwrap();
            let at = place(&l, phi + l.ground_angle());
            proptest::prop_assume!(at.is_some_and(|a| (a.theta3 - a.theta4).sin().abs() > 0.05));
            let h = 1e-6;
            for r in [CrankReference::Frame, CrankReference::GroundLine] {
                let s = sensitivity(&l, phi + l.ground_angle() - r.origin(&l), r).unwrap();
                for dim in Dimension::ALL {
                    let k = dim.index();
                    let step = |sign: f64| {
                        let mut d = dimensions_of(&l);
                        d[k] += sign * h;
                        closed_outputs(&with_dimensions(&l, &d).unwrap(), &l, phi, r)
                    };
                    let fd = output_error(&step(1.0), &step(-1.0)) / (2.0 * h);
                    let an = s.jacobian.column(k);
                    let scale = an.abs().max().max(1.0);
                    proptest::prop_assert!((fd - an).abs().max() < 1e-5 * scale, "{:?}: {} vs {}", dim, fd, an);
                }
            }
        }
    }

    // The clearance map against differences of the exact effective linkage.
    #[test]
    fn clearance_map_matches_finite_differences() {
        let h = 1e-7;
        for (l, _) in cases() {
            let g = clearance_map(&l);
            for col in 0..8 {
                let step = |sign: f64| {
                    let mut dev = Deviation {
                        dimensions: Dimensions::zeros(),
                        joints: [Vector2::zeros(); 4],
                    };
                    dev.joints[col / 2][col % 2] = sign * h;
                    dimensions_of(&perturbed(&l, &dev).unwrap())
                };
                let fd = (step(1.0) - step(-1.0)) / (2.0 * h);
                for row in 0..DIMENSIONS {
                    assert_relative_eq!(fd[row], g[(row, col)], epsilon = 1e-7);
                }
            }
        }
    }

    /// Position and output-angle errors of every sample at each crank angle; `None` for a
    /// sample that does not assemble at one of them.
    fn errors(
        nominal: &FourBar,
        tol: &Tolerances,
        angles: &[f64],
        r: CrankReference,
        samples: usize,
        seed: u64,
    ) -> Vec<Option<Vec<Vector3<f64>>>> {
        let base: Vec<Vector3<f64>> = angles
            .iter()
            .map(|a| outputs_at(nominal, *a, r).unwrap().1)
            .collect();
        monte_carlo(nominal, tol, samples, seed, |l| {
            angles
                .iter()
                .zip(&base)
                .map(|(a, b)| outputs_at(l, *a, r).map(|(_, y)| output_error(&y, b)))
                .collect::<Option<Vec<_>>>()
        })
        .into_iter()
        .map(|s| s.ok().flatten())
        .collect()
    }

    // Monte Carlo against first-order propagation, cov = J cov(d) J^T (the GUM's law of
    // propagation of uncertainty, JCGM 100:2008 5.1-5.2; Monte Carlo as in JCGM 101:2008; from
    // memory): with tolerances of about 1e-4 of the linkage's size, the standard deviation of
    // each target's x, y and output-angle error, and the RMS position error about its mean,
    // agree within 3 % over 20000 samples (the estimate's own scatter is about
    // 1 / sqrt(2 n) = 0.5 %; at 400000 samples they agree within 0.25 %). Uniform spread with
    // the crank held in the frame, normal spread with it held from the ground line, and joint
    // clearance alone.
    #[test]
    fn monte_carlo_matches_linear_propagation() {
        let nominal = crank_rocker();
        let angles: Vec<f64> = [15.0f64, 75.0, 135.0, 195.0, 255.0, 315.0]
            .iter()
            .map(|d| d.to_radians())
            .collect();
        let mut worst: f64 = 0.0;
        // The last case has joint clearance alone, so that its model is checked on its own.
        for (tol, r) in [
            (
                Tolerances::new(0.002, 0.003, 0.002, 0.001, Spread::Uniform).unwrap(),
                CrankReference::Frame,
            ),
            (
                Tolerances::new(0.002, 0.003, 0.002, 0.001, Spread::Normal).unwrap(),
                CrankReference::GroundLine,
            ),
            (
                Tolerances::new(0.0, 0.0, 0.0, 0.002, Spread::Uniform).unwrap(),
                CrankReference::GroundLine,
            ),
        ] {
            let spread = tol.spread();
            let cov_d = tol.covariance(&nominal);
            let runs = errors(&nominal, &tol, &angles, r, 20_000, 7);
            assert!(runs.iter().all(Option::is_some));
            for (t, angle) in angles.iter().enumerate() {
                let s = sensitivity(&nominal, *angle, r).unwrap();
                let linear = s.covariance(&cov_d);
                let sample: Vec<Vector3<f64>> =
                    runs.iter().map(|e| e.as_ref().unwrap()[t]).collect();
                let m = Moments::of(&sample).unwrap();
                for i in 0..3 {
                    let ratio = m.covariance[(i, i)].sqrt() / linear[(i, i)].sqrt();
                    worst = worst.max((ratio - 1.0).abs());
                    assert!(
                        (ratio - 1.0).abs() < 0.03,
                        "{spread:?} target {t} row {i}: {ratio}"
                    );
                }
                let rms = (m.covariance[(0, 0)] + m.covariance[(1, 1)]).sqrt();
                let rms_lin = (linear[(0, 0)] + linear[(1, 1)]).sqrt();
                assert!((rms / rms_lin - 1.0).abs() < 0.03);
                // The group shares add up to the first-order variance.
                let shares: Vector3<f64> = s
                    .contributions(&nominal, &tol)
                    .iter()
                    .map(|(_, v)| *v)
                    .sum();
                assert_relative_eq!(shares, linear.diagonal(), max_relative = 1e-12);
            }
        }
        println!("largest |MC std / linear std - 1| = {worst:.4}");
    }

    // Zero tolerance: every sample is the nominal linkage, so every error is exactly zero.
    #[test]
    fn zero_tolerance_gives_zero_spread() {
        let nominal = crank_rocker();
        let angles = [0.3, 1.9, 4.0];
        let runs = errors(
            &nominal,
            &Tolerances::zero(),
            &angles,
            CrankReference::Frame,
            500,
            3,
        );
        for e in runs {
            for v in e.unwrap() {
                assert!(v.abs().max() < f64::MIN_POSITIVE, "{v}");
            }
        }
        let l = sample_linkage(&nominal, &Tolerances::zero(), 3, 17).unwrap();
        assert_eq!(l, nominal);
    }

    // The same samples on one thread and on four.
    #[test]
    fn monte_carlo_is_independent_of_thread_count() {
        let nominal = double_rocker();
        let tol = Tolerances::new(0.01, 0.01, 0.02, 0.005, Spread::Normal).unwrap();
        let angles: Vec<f64> = DOUBLE_ROCKER_PHI_DEG
            .iter()
            .map(|d| d.to_radians())
            .collect();
        let run = |threads: usize, seed: u64| {
            rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap()
                .install(|| {
                    errors(
                        &nominal,
                        &tol,
                        &angles,
                        CrankReference::GroundLine,
                        3000,
                        seed,
                    )
                })
        };
        let bits = |runs: Vec<Option<Vec<Vector3<f64>>>>| {
            runs.into_iter()
                .map(|e| {
                    e.map(|v| {
                        v.iter()
                            .flat_map(|x| x.iter().map(|c| c.to_bits()))
                            .collect::<Vec<_>>()
                    })
                })
                .collect::<Vec<_>>()
        };
        let one = bits(run(1, 11));
        assert_eq!(one, bits(run(4, 11)));
        // And a different seed gives different samples.
        let other = run(2, 12);
        assert_ne!(one, bits(other));
    }

    // The first-order worst case is reached, to first order, by the corner deviation it
    // describes (each dimension at the end of its tolerance with the sign of its derivative,
    // each pin against its hole along the gradient), and no uniform sample exceeds it beyond
    // second-order terms.
    #[test]
    fn worst_case_is_reached_at_its_corner_and_bounds_the_samples() {
        let nominal = crank_rocker();
        let tol = Tolerances::new(0.002, 0.003, 0.002, 0.001, Spread::Uniform).unwrap();
        let angle = 75f64.to_radians();
        let s = sensitivity(&nominal, angle, CrankReference::Frame).unwrap();
        let w = s.worst_case(&nominal, &tol);
        let jg = s.jacobian * clearance_map(&nominal);
        for row in 0..3 {
            let mut dev = Deviation {
                dimensions: Dimensions::zeros(),
                joints: [Vector2::zeros(); 4],
            };
            for dim in Dimension::ALL {
                let k = dim.index();
                dev.dimensions[k] = tol.of(dim.group()) * s.jacobian[(row, k)].signum();
            }
            for (j, off) in dev.joints.iter_mut().enumerate() {
                let g = Vector2::new(jg[(row, 2 * j)], jg[(row, 2 * j + 1)]);
                *off = 0.001 * g / g.norm();
            }
            let l = perturbed(&nominal, &dev).unwrap();
            let y = outputs_at(&l, angle, CrankReference::Frame).unwrap().1;
            let e = output_error(&y, &s.outputs)[row];
            assert_relative_eq!(e, w[row], max_relative = 0.01);
        }
        let runs = errors(&nominal, &tol, &[angle], CrankReference::Frame, 5000, 5);
        for e in runs {
            let e = e.unwrap()[0];
            for row in 0..3 {
                assert!(e[row].abs() <= w[row] * 1.01);
            }
        }
    }

    // Hand-computed moments: x = 1, 3, 5 and y = 2 x: means 3 and 6, variances 4 and 16,
    // covariance 8 (n - 1 divisor).
    #[test]
    fn moments_of_a_small_sample() {
        let v: Vec<SVector<f64, 2>> = [1.0, 3.0, 5.0]
            .iter()
            .map(|x| SVector::<f64, 2>::new(*x, 2.0 * x))
            .collect();
        let m = Moments::of(&v).unwrap();
        assert_relative_eq!(m.mean, SVector::<f64, 2>::new(3.0, 6.0));
        assert_relative_eq!(m.covariance[(0, 0)], 4.0);
        assert_relative_eq!(m.covariance[(1, 1)], 16.0);
        assert_relative_eq!(m.covariance[(0, 1)], 8.0);
        assert_relative_eq!(m.std()[1], 4.0);
        assert!(Moments::of(&v[..1]).is_none());
    }

    // Definition 7 of Hyndman and Fan (R's and NumPy's default; from memory): the median of
    // 1..4 is 2.5, the 0.95 quantile of 1..10 is 1 + 0.95 * 9 = 9.55.
    #[test]
    fn quantiles_by_linear_interpolation() {
        assert_relative_eq!(quantile(&[1.0, 2.0, 3.0, 4.0], 0.5).unwrap(), 2.5);
        let ten: Vec<f64> = (1..=10).map(f64::from).collect();
        assert_relative_eq!(quantile(&ten, 0.95).unwrap(), 9.55, epsilon = 1e-12);
        assert_relative_eq!(quantile(&ten, 0.0).unwrap(), 1.0);
        assert_relative_eq!(quantile(&ten, 1.0).unwrap(), 10.0);
        assert!(quantile(&[], 0.5).is_none());
        assert!(quantile(&ten, 1.5).is_none());
    }

    #[test]
    fn tolerances_are_validated() {
        assert!(matches!(
            Tolerances::new(-0.1, 0.0, 0.0, 0.0, Spread::Uniform),
            Err(KinematicsError::NotNonNegative {
                field: "link_length",
                ..
            })
        ));
        assert!(matches!(
            Tolerances::new(0.0, 0.0, 0.0, f64::INFINITY, Spread::Normal),
            Err(KinematicsError::NotNonNegative {
                field: "joint_clearance",
                ..
            })
        ));
        // A tolerance larger than a link can leave no linkage: an error per sample, no panic.
        let nominal = crank_rocker();
        let huge = Tolerances::new(50.0, 0.0, 0.0, 0.0, Spread::Uniform).unwrap();
        let runs = monte_carlo(&nominal, &huge, 200, 1, |l| l.size());
        assert!(runs.iter().any(Result::is_err));
        assert!(runs.iter().any(Result::is_ok));
    }

    #[test]
    fn dimensions_round_trip() {
        let l = crank_rocker();
        assert_eq!(with_dimensions(&l, &dimensions_of(&l)).unwrap(), l);
        for (i, d) in Dimension::ALL.iter().enumerate() {
            assert_eq!(d.index(), i);
        }
    }
}
