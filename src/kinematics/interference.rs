//! Interference: whether a moving body sweeps over a pin it is not joined to, or two bodies
//! cross each other, over a motion.
//!
//! # Model
//! In plan view the crank is the segment `O2 A`, the output link the segment `O4 B`, and the
//! coupler the plate (triangle) `A, B, C` with the coupler point `C` (a segment when `C` lies
//! on the line `A B`). Links have a width: each body is its core inflated by half the
//! `link_width`. Pins are discs of radius `pin_radius` about the four joint centres. Two
//! shapes meet when their cores are no farther apart than the sum of those allowances (with a
//! rounding slack of [`CONTACT_SLACK`] of the linkage's size), so with zero widths touching
//! counts.
//!
//! # Stacking (which pairs can meet)
//! A pin joint puts the two bodies it joins on different layers, so a joined pair is never a
//! clash. Beyond that the assumption is a parameter, [`Stacking`]:
//! - [`Stacking::OnePlane`]: every body and every pin in one plane (the plan-view check; the
//!   conservative choice while the layers are not decided). A body over any pin it does not
//!   carry, and the crank over the output link, are clashes.
//! - [`Stacking::Layered`]: the frame is layer 0 and each body has a layer from 1 up. A fixed
//!   pivot's pin rises from the frame to its link (`O2` spans layers `0..=crank`, `O4` spans
//!   `0..=output`); a moving joint's pin spans the layers of the two bodies it joins. A body
//!   meets a pin whose span contains the body's layer, and another body on the same layer.
//!   The frame itself is taken to be clear of the moving bodies except for its pins.
//!
//! # Over a motion
//! The poses given are taken as one continuous motion in order (one branch of a sweep; for a
//! full turn repeat the first pose at the end). Each pose is checked, and so is the motion
//! between neighbours: two shapes can only start or stop overlapping when a vertex of one
//! crosses the other, so the path of each vertex relative to the other body (its chord in that
//! body's frame between the two poses) is checked against that body. The chord stands for an
//! arc, so the check between poses is exact to first order in the step `h` (radians of crank):
//! the chord of an arc of radius `R` turning by `h` lies within `R (1 - cos(h / 2))`, about
//! `R h^2 / 8`, of it. Keep the step small against the link widths and the distances that
//! matter.

use nalgebra::{Point2, Rotation2};

use super::error::{non_negative, KinematicsError};
use super::parts::{Body, Joint};
use super::position::Pose;
use crate::linkage::{cross, FourBar};

/// Rounding slack, relative to the linkage's size (sum of link lengths), within which two
/// shapes count as touching.
pub const CONTACT_SLACK: f64 = 1e-12;

/// The layer of each body when the bodies are stacked (the frame is layer 0).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Layers {
    crank: u8,
    coupler: u8,
    output: u8,
}

impl Layers {
    /// Layers for the crank, coupler and output link, each at least 1.
    ///
    /// # Errors
    /// [`KinematicsError::FrameLayer`] for a layer 0, [`KinematicsError::SharedLayer`] when the
    /// coupler shares a layer with the crank or the output link (they are pinned together).
    pub fn new(crank: u8, coupler: u8, output: u8) -> Result<Self, KinematicsError> {
        let l = Self {
            crank,
            coupler,
            output,
        };
        for body in Body::ALL {
            if l.of(body) == 0 {
                return Err(KinematicsError::FrameLayer { body: body.name() });
            }
        }
        for other in [Body::Crank, Body::Output] {
            if l.of(other) == coupler {
                return Err(KinematicsError::SharedLayer {
                    first: other.name(),
                    second: Body::Coupler.name(),
                    layer: coupler,
                });
            }
        }
        Ok(l)
    }

    /// The layer of `body`.
    pub fn of(&self, body: Body) -> u8 {
        match body {
            Body::Crank => self.crank,
            Body::Coupler => self.coupler,
            Body::Output => self.output,
        }
    }

    /// The layers `(lowest, highest)` the pin of `joint` spans: from the frame to its link for
    /// a fixed pivot, between the two bodies' layers for a moving joint.
    pub fn pin_span(&self, joint: Joint) -> (u8, u8) {
        match joint {
            Joint::InputPivot => (0, self.crank),
            Joint::OutputPivot => (0, self.output),
            Joint::CrankCoupler => minmax(self.crank, self.coupler),
            Joint::CouplerOutput => minmax(self.coupler, self.output),
        }
    }
}

fn minmax(a: u8, b: u8) -> (u8, u8) {
    (a.min(b), a.max(b))
}

/// How the bodies are stacked, which decides the pairs that can meet (see the module doc).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Stacking {
    /// All bodies and pins in one plane: the plan-view check.
    OnePlane,
    /// Each body on its own layer above the frame.
    Layered(Layers),
}

impl Stacking {
    /// Whether `body` can run into the pin of `joint` (a joint it does not carry).
    pub fn pin_meets(&self, joint: Joint, body: Body) -> bool {
        if body.carries(joint) {
            return false;
        }
        match self {
            Stacking::OnePlane => true,
            Stacking::Layered(l) => {
                let (lo, hi) = l.pin_span(joint);
                (lo..=hi).contains(&l.of(body))
            }
        }
    }

    /// Whether two distinct bodies not pinned together can run into each other.
    pub fn bodies_meet(&self, first: Body, second: Body) -> bool {
        if first == second || first.pinned_to(second).is_some() {
            return false;
        }
        match self {
            Stacking::OnePlane => true,
            Stacking::Layered(l) => l.of(first) == l.of(second),
        }
    }
}

/// Options of an interference check: stacking and the sizes of links and pins (length units).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct InterferenceOptions {
    stacking: Stacking,
    link_width: f64,
    pin_radius: f64,
}

impl Default for InterferenceOptions {
    /// One plane, zero link width and pin radius: the cores themselves must not meet.
    fn default() -> Self {
        Self {
            stacking: Stacking::OnePlane,
            link_width: 0.0,
            pin_radius: 0.0,
        }
    }
}

impl InterferenceOptions {
    /// Options with the given stacking, link width (full width of every link, length units)
    /// and pin radius (length units).
    ///
    /// # Errors
    /// [`KinematicsError::NotNonNegative`] for a negative or non-finite size.
    pub fn new(
        stacking: Stacking,
        link_width: f64,
        pin_radius: f64,
    ) -> Result<Self, KinematicsError> {
        Ok(Self {
            stacking,
            link_width: non_negative("link_width", link_width)?,
            pin_radius: non_negative("pin_radius", pin_radius)?,
        })
    }

    /// The stacking assumed.
    pub fn stacking(&self) -> Stacking {
        self.stacking
    }

    /// Full width of each link (length units).
    pub fn link_width(&self) -> f64 {
        self.link_width
    }

    /// Radius of each pin (length units).
    pub fn pin_radius(&self) -> f64 {
        self.pin_radius
    }
}

/// One kind of interference.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Clash {
    /// A body passes over the pin of a joint it does not carry.
    BodyOverPin {
        /// The moving body.
        body: Body,
        /// The pin it runs into.
        pin: Joint,
    },
    /// Two bodies not pinned together overlap (`first < second`).
    Bodies {
        /// One body.
        first: Body,
        /// The other body.
        second: Body,
    },
}

impl std::fmt::Display for Clash {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Clash::BodyOverPin { body, pin } => {
                write!(f, "the {} passes over the {}", body.name(), pin.name())
            }
            Clash::Bodies { first, second } => {
                write!(f, "the {} and the {} overlap", first.name(), second.name())
            }
        }
    }
}

/// A stretch of a motion over which one clash lasts: from pose `first` to pose `last`
/// (indices into the poses given, inclusive). A clash found only between two poses spans
/// both.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct ClashSpan {
    /// What clashes.
    pub clash: Clash,
    /// Index of the first pose of the stretch.
    pub first: usize,
    /// Index of the last pose of the stretch.
    pub last: usize,
}

/// The clashes of `linkage` at one pose.
pub fn clashes_at(linkage: &FourBar, pose: &Pose, options: &InterferenceOptions) -> Vec<Clash> {
    let geo = Geometry::new(linkage, options);
    geo.checks(options.stacking)
        .into_iter()
        .filter(|c| geo.at(c, pose))
        .collect()
}

/// The clashes of `linkage` over the motion through `poses` (in order, one continuous
/// motion), as stretches sorted by clash and then by first pose. Empty when nothing meets.
pub fn clashes_over(
    linkage: &FourBar,
    poses: &[Pose],
    options: &InterferenceOptions,
) -> Vec<ClashSpan> {
    let geo = Geometry::new(linkage, options);
    let mut spans = Vec::new();
    for clash in geo.checks(options.stacking) {
        // Flags interleaved: pose 0, between 0 and 1, pose 1, ...
        let mut open: Option<usize> = None;
        let mut last = 0;
        for (i, pose) in poses.iter().enumerate() {
            let here = geo.at(&clash, pose);
            let between = poses
                .get(i + 1)
                .is_some_and(|next| geo.between(&clash, pose, next));
            for (flag, end) in [(here, i), (between, i + 1)] {
                if flag {
                    open.get_or_insert(i);
                    last = end;
                } else if let Some(first) = open.take() {
                    spans.push(ClashSpan { clash, first, last });
                }
            }
        }
        if let Some(first) = open {
            spans.push(ClashSpan { clash, first, last });
        }
    }
    spans
}

/// A core shape: one point, a segment or a triangle (the first `n` of `p`).
#[derive(Debug, Clone, Copy)]
struct Core {
    p: [Point2<f64>; 3],
    n: usize,
}

impl Core {
    fn point(a: Point2<f64>) -> Self {
        Self { p: [a; 3], n: 1 }
    }
    fn segment(a: Point2<f64>, b: Point2<f64>) -> Self {
        Self { p: [a, b, b], n: 2 }
    }
    fn triangle(a: Point2<f64>, b: Point2<f64>, c: Point2<f64>) -> Self {
        Self { p: [a, b, c], n: 3 }
    }
    fn vertices(&self) -> &[Point2<f64>] {
        &self.p[..self.n]
    }
    fn edges(&self) -> impl Iterator<Item = (Point2<f64>, Point2<f64>)> + '_ {
        let n = self.n;
        let count = if n == 3 { 3 } else { 1 };
        (0..count).map(move |i| (self.p[i], self.p[(i + 1) % n.max(1)]))
    }
    /// Whether `q` lies strictly inside a non-degenerate triangle core.
    fn encloses(&self, q: Point2<f64>) -> bool {
        if self.n != 3 {
            return false;
        }
        let [a, b, c] = self.p;
        let area = cross(b - a, c - a);
        let scale = (b - a).norm_squared().max((c - a).norm_squared());
        if area.abs() <= 1e-12 * scale {
            return false;
        }
        let s = area.signum();
        [(a, b), (b, c), (c, a)]
            .iter()
            .all(|(u, v)| cross(v - u, q - u) * s > 0.0)
    }
    /// The core moved into the frame with origin `o` and direction `theta`.
    fn placed(&self, o: Point2<f64>, theta: f64) -> Self {
        let r = Rotation2::new(theta);
        let mut c = *self;
        for q in &mut c.p {
            *q = o + r * q.coords;
        }
        c
    }
}

/// Distance from `q` to the segment `a b` (a point when `a = b`).
fn point_segment(q: Point2<f64>, a: Point2<f64>, b: Point2<f64>) -> f64 {
    let ab = b - a;
    let len2 = ab.norm_squared();
    let t = if len2 > 0.0 {
        ((q - a).dot(&ab) / len2).clamp(0.0, 1.0)
    } else {
        0.0
    };
    (q - (a + t * ab)).norm()
}

/// Distance between the segments `a b` and `c d`: zero when they cross properly, else the
/// least distance of an end point to the other segment.
fn segment_segment(a: Point2<f64>, b: Point2<f64>, c: Point2<f64>, d: Point2<f64>) -> f64 {
    let o1 = cross(b - a, c - a);
    let o2 = cross(b - a, d - a);
    let o3 = cross(d - c, a - c);
    let o4 = cross(d - c, b - c);
    if o1 * o2 < 0.0 && o3 * o4 < 0.0 {
        return 0.0;
    }
    point_segment(a, c, d)
        .min(point_segment(b, c, d))
        .min(point_segment(c, a, b))
        .min(point_segment(d, a, b))
}

/// Distance between two cores: zero when one encloses a vertex of the other or their edges
/// cross, else the least distance between their edges.
fn core_distance(x: &Core, y: &Core) -> f64 {
    if x.vertices().iter().any(|v| y.encloses(*v)) || y.vertices().iter().any(|v| x.encloses(*v)) {
        return 0.0;
    }
    let mut d = f64::INFINITY;
    for (a, b) in x.edges() {
        for (c, e) in y.edges() {
            d = d.min(segment_segment(a, b, c, e));
        }
    }
    d
}

/// What the checks need of a linkage: each body's core in its own frame and the allowances.
struct Geometry<'a> {
    linkage: &'a FourBar,
    /// Allowance between a body's core and a pin centre.
    body_pin: f64,
    /// Allowance between two bodies' cores.
    body_body: f64,
}

impl<'a> Geometry<'a> {
    fn new(linkage: &'a FourBar, options: &InterferenceOptions) -> Self {
        let slack = CONTACT_SLACK * linkage.size();
        Self {
            linkage,
            body_pin: 0.5 * options.link_width + options.pin_radius + slack,
            body_body: options.link_width + slack,
        }
    }

    /// The clashes the stacking allows, in a fixed order.
    fn checks(&self, stacking: Stacking) -> Vec<Clash> {
        let mut out = Vec::new();
        for body in Body::ALL {
            for pin in Joint::ALL {
                if stacking.pin_meets(pin, body) {
                    out.push(Clash::BodyOverPin { body, pin });
                }
            }
        }
        for (i, &first) in Body::ALL.iter().enumerate() {
            for &second in &Body::ALL[i + 1..] {
                if stacking.bodies_meet(first, second) {
                    out.push(Clash::Bodies { first, second });
                }
            }
        }
        out
    }

    /// The core of `body` in its own frame (see [`Body::frame`]).
    fn local(&self, body: Body) -> Core {
        let l = self.linkage;
        match body {
            Body::Crank => Core::segment(Point2::origin(), Point2::new(l.input_link(), 0.0)),
            Body::Output => Core::segment(Point2::origin(), Point2::new(l.output_link(), 0.0)),
            Body::Coupler => {
                let cp = l.coupler_point();
                Core::triangle(
                    Point2::origin(),
                    Point2::new(l.coupler(), 0.0),
                    Point2::new(cp.p, cp.q),
                )
            }
        }
    }

    fn global(&self, body: Body, pose: &Pose) -> Core {
        let (o, t) = body.frame(self.linkage, pose);
        self.local(body).placed(o, t)
    }

    /// `q` (global) in the frame of `body` at `pose`.
    fn in_frame(&self, body: Body, pose: &Pose, q: Point2<f64>) -> Point2<f64> {
        let (o, t) = body.frame(self.linkage, pose);
        Point2::from(Rotation2::new(-t) * (q - o))
    }

    /// Whether `clash` holds at `pose`.
    fn at(&self, clash: &Clash, pose: &Pose) -> bool {
        match *clash {
            Clash::BodyOverPin { body, pin } => {
                let q = Core::point(pin.position(self.linkage, pose));
                core_distance(&self.global(body, pose), &q) <= self.body_pin
            }
            Clash::Bodies { first, second } => {
                core_distance(&self.global(first, pose), &self.global(second, pose))
                    <= self.body_body
            }
        }
    }

    /// Whether some vertex of `mover` (global cores at two poses) sweeps, relative to `body`,
    /// within `allowance` of `body`'s core between `from` and `to`.
    fn sweeps(
        &self,
        body: Body,
        mover: (&Core, &Core),
        from: &Pose,
        to: &Pose,
        allowance: f64,
    ) -> bool {
        let core = self.local(body);
        mover
            .0
            .vertices()
            .iter()
            .zip(mover.1.vertices())
            .any(|(a, b)| {
                let chord =
                    Core::segment(self.in_frame(body, from, *a), self.in_frame(body, to, *b));
                core_distance(&core, &chord) <= allowance
            })
    }

    /// Whether `clash` happens on the way from `from` to `to` (see the module doc).
    fn between(&self, clash: &Clash, from: &Pose, to: &Pose) -> bool {
        match *clash {
            Clash::BodyOverPin { body, pin } => {
                let a = Core::point(pin.position(self.linkage, from));
                let b = Core::point(pin.position(self.linkage, to));
                self.sweeps(body, (&a, &b), from, to, self.body_pin)
            }
            Clash::Bodies { first, second } => {
                let f = (&self.global(first, from), &self.global(first, to));
                let s = (&self.global(second, from), &self.global(second, to));
                self.sweeps(second, f, from, to, self.body_body)
                    || self.sweeps(first, s, from, to, self.body_body)
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::kinematics::fixtures::{crank_rocker, place};
    use crate::kinematics::position::{position_at, NewtonOptions};
    use crate::kinematics::sweep::{sweep, sweep_from, SweepOptions};
    use crate::linkage::{Assembly, CouplerPoint};
    use approx::assert_relative_eq;
    use nalgebra::Vector2;

    fn dir(theta: f64) -> Vector2<f64> {
        Vector2::new(theta.cos(), theta.sin())
    }

    fn p(x: f64, y: f64) -> Point2<f64> {
        Point2::new(x, y)
    }

    // Distances in hand-built configurations, known by construction.
    #[test]
    fn predicates_on_hand_built_shapes() {
        // A point above the middle of a segment, and beyond its end.
        assert_relative_eq!(point_segment(p(1.0, 2.0), p(0.0, 0.0), p(2.0, 0.0)), 2.0);
        assert_relative_eq!(point_segment(p(5.0, 4.0), p(0.0, 0.0), p(2.0, 0.0)), 5.0);
        // Crossing diagonals of a square, and two parallel segments 0.5 apart.
        assert!(segment_segment(p(0.0, 0.0), p(1.0, 1.0), p(0.0, 1.0), p(1.0, 0.0)) < 1e-15);
        assert_relative_eq!(
            segment_segment(p(0.0, 0.0), p(1.0, 0.0), p(0.0, 0.5), p(1.0, 0.5)),
            0.5
        );
        // Segments in a T that touch, and that miss by 0.25.
        assert!(segment_segment(p(0.0, 0.0), p(2.0, 0.0), p(1.0, 0.0), p(1.0, 1.0)) < 1e-15);
        assert_relative_eq!(
            segment_segment(p(0.0, 0.0), p(2.0, 0.0), p(1.0, 0.25), p(1.0, 1.0)),
            0.25
        );
        let tri = Core::triangle(p(0.0, 0.0), p(4.0, 0.0), p(0.0, 3.0));
        // Inside (centroid), on an edge, and outside at distance 1 beyond the middle of the
        // hypotenuse 3x + 4y = 12, along its outward normal (3, 4) / 5.
        assert!(core_distance(&tri, &Core::point(p(4.0 / 3.0, 1.0))) < 1e-15);
        assert!(core_distance(&tri, &Core::point(p(2.0, 0.0))) < 1e-15);
        let outside = p(2.0, 1.5) + Vector2::new(3.0, 4.0) / 5.0;
        assert_relative_eq!(
            core_distance(&tri, &Core::point(outside)),
            1.0,
            epsilon = 1e-12
        );
        // A segment passing through the triangle without a vertex inside, and a segment whose
        // end lies inside.
        assert!(core_distance(&tri, &Core::segment(p(-1.0, 1.0), p(5.0, 1.0))) < 1e-15);
        assert!(core_distance(&tri, &Core::segment(p(1.0, 1.0), p(1.0, 1.2))) < 1e-15);
        // A degenerate (collinear) triangle is its hull segment: a point on its line beyond the
        // hull is outside.
        let flat = Core::triangle(p(0.0, 0.0), p(2.0, 0.0), p(3.0, 0.0));
        assert_relative_eq!(core_distance(&flat, &Core::point(p(4.0, 0.0))), 1.0);
        assert!(core_distance(&flat, &Core::point(p(2.5, 0.0))) < 1e-15);
    }

    #[test]
    fn layers_are_validated() {
        assert!(matches!(
            Layers::new(1, 1, 2),
            Err(KinematicsError::SharedLayer { layer: 1, .. })
        ));
        assert!(matches!(
            Layers::new(1, 2, 2),
            Err(KinematicsError::SharedLayer { layer: 2, .. })
        ));
        assert!(matches!(
            Layers::new(0, 2, 1),
            Err(KinematicsError::FrameLayer { body: "crank" })
        ));
        let l = Layers::new(1, 2, 1).unwrap();
        assert_eq!(l.pin_span(Joint::OutputPivot), (0, 1));
        assert_eq!(l.pin_span(Joint::CouplerOutput), (1, 2));
        assert!(InterferenceOptions::new(Stacking::OnePlane, -1.0, 0.0).is_err());
        assert!(InterferenceOptions::new(Stacking::OnePlane, 0.0, f64::NAN).is_err());
    }

    /// A parallelogram with ground 4 on the x axis, crank and output 1.5, coupler 4, coupler
    /// point at `A`, at the crank angles (degrees) `0.5 + 7.3 k` for `k = 0..=50` (a little
    /// over a turn, never exactly at 0 or 180 degrees). Its parallelogram form is built by
    /// construction: `theta3 = 0`, `theta4 = theta2`.
    fn parallelogram() -> (FourBar, Vec<Pose>) {
        let l = FourBar::new(
            p(0.0, 0.0),
            p(4.0, 0.0),
            1.5,
            4.0,
            1.5,
            CouplerPoint::default(),
            Assembly::Open,
        )
        .unwrap();
        let poses = (0..=50)
            .map(|k| {
                let t = (0.5 + 7.3 * k as f64).to_radians();
                Pose {
                    theta2: t,
                    theta3: 0.0,
                    theta4: t,
                }
            })
            .collect();
        (l, poses)
    }

    // The parallelogram's coupler stays parallel to the ground at height 1.5 sin(theta2): it
    // lies on the ground line exactly at theta2 = 0 (spanning x in [1.5, 5.5], over O4) and
    // at 180 degrees (x in [-1.5, 2.5], over O2), never elsewhere. Crank and output are
    // translates of each other by the ground vector and never meet (at theta2 = 0 they span
    // [0, 1.5] and [4, 5.5]); the crank never reaches O4 (1.5 < 4) nor B (|B - O2| >= 2.5),
    // nor the output O2 or A. Both pivot crossings fall between samples: only the check of
    // the motion between poses can find them.
    #[test]
    fn parallelogram_coupler_sweeps_both_pivots_in_one_plane() {
        let (l, poses) = parallelogram();
        let spans = clashes_over(&l, &poses, &InterferenceOptions::default());
        // 180 degrees lies between k = 24 (175.7) and k = 25 (183.0); 360 between k = 49 and 50.
        let expected = vec![
            ClashSpan {
                clash: Clash::BodyOverPin {
                    body: Body::Coupler,
                    pin: Joint::InputPivot,
                },
                first: 24,
                last: 25,
            },
            ClashSpan {
                clash: Clash::BodyOverPin {
                    body: Body::Coupler,
                    pin: Joint::OutputPivot,
                },
                first: 49,
                last: 50,
            },
        ];
        assert_eq!(spans, expected);
        // No single pose shows it.
        for pose in &poses {
            assert!(clashes_at(&l, pose, &InterferenceOptions::default()).is_empty());
        }
        // Coupler on a layer of its own above crank and output: the pivots' pins end below it,
        // and crank and output (same layer) never meet. Nothing clashes.
        let stacked = Stacking::Layered(Layers::new(1, 2, 1).unwrap());
        let opts = InterferenceOptions::new(stacked, 0.0, 0.0).unwrap();
        assert!(clashes_over(&l, &poses, &opts).is_empty());
        // Coupler below the crank: the input pivot's pin rises through the coupler's layer.
        let low = Stacking::Layered(Layers::new(2, 1, 3).unwrap());
        let opts = InterferenceOptions::new(low, 0.0, 0.0).unwrap();
        let spans = clashes_over(&l, &poses, &opts);
        assert_eq!(spans.len(), 2, "{spans:?}");
        assert_eq!(spans[0], expected[0]);
        assert_eq!(spans[1], expected[1]);
    }

    // A drag link (double-crank: ground 2 the shortest link) with crank 5 and output 5.5,
    // both longer than the ground: turning fully, the crank passes over O4 (when it points at
    // O4) and the output over O2. Which of them clash depends on the stacking as the pins'
    // spans say.
    #[test]
    fn drag_link_pivots_are_swept_as_the_layers_say() {
        let l = FourBar::new(
            p(0.0, 0.0),
            p(2.0, 0.0),
            5.0,
            6.0,
            5.5,
            CouplerPoint::default(),
            Assembly::Open,
        )
        .unwrap();
        assert_eq!(l.grashof(), crate::linkage::GrashofClass::DoubleCrank);
        let s = sweep(&l, 3f64.to_radians(), &SweepOptions::default());
        let mut poses = s.branches[0].poses.clone();
        poses.push(poses[0]);
        let has = |spans: &[ClashSpan], body: Body, pin: Joint| {
            spans
                .iter()
                .any(|s| s.clash == Clash::BodyOverPin { body, pin })
        };
        let one = clashes_over(&l, &poses, &InterferenceOptions::default());
        assert!(has(&one, Body::Crank, Joint::OutputPivot), "{one:?}");
        assert!(has(&one, Body::Output, Joint::InputPivot), "{one:?}");
        let opts = |c, cp, o| {
            InterferenceOptions::new(Stacking::Layered(Layers::new(c, cp, o).unwrap()), 0.0, 0.0)
                .unwrap()
        };
        // Crank on top: O4's pin ends below it; the output is crossed by O2's pin.
        let top = clashes_over(&l, &poses, &opts(3, 2, 1));
        assert!(!has(&top, Body::Crank, Joint::OutputPivot), "{top:?}");
        assert!(has(&top, Body::Output, Joint::InputPivot), "{top:?}");
        // Output on top: the other way round.
        let bottom = clashes_over(&l, &poses, &opts(1, 2, 3));
        assert!(has(&bottom, Body::Crank, Joint::OutputPivot), "{bottom:?}");
        assert!(!has(&bottom, Body::Output, Joint::InputPivot), "{bottom:?}");
    }

    // A coupler plate built so that the input pivot is the centroid of A, B, C at one pose:
    // C = 3 O2 - A - B. The plate covers O2 there; with C on the far side of A B instead the
    // plate is a mirror image and (for this crank-rocker, checked from the distances) misses
    // O2 at that pose.
    #[test]
    fn coupler_plate_over_a_pivot_by_construction() {
        let base = crank_rocker();
        let t2 = base.ground_angle() + 200f64.to_radians();
        let at = place(&base, t2).unwrap();
        let c = Point2::from(3.0 * base.input_pivot().coords - at.a.coords - at.b.coords);
        let e3 = dir(at.theta3);
        let n3 = Vector2::new(-e3.y, e3.x);
        let cp = CouplerPoint {
            p: (c - at.a).dot(&e3),
            q: (c - at.a).dot(&n3),
        };
        let with = |cp: CouplerPoint| {
            FourBar::new(
                base.input_pivot(),
                base.output_pivot(),
                base.input_link(),
                base.coupler(),
                base.output_link(),
                cp,
                base.assembly(),
            )
            .unwrap()
        };
        let l = with(cp);
        let pose = position_at(&l, t2, &NewtonOptions::default()).unwrap();
        assert_relative_eq!(l.coupler_point_at(t2, pose.theta3), c, epsilon = 1e-9);
        let clash = Clash::BodyOverPin {
            body: Body::Coupler,
            pin: Joint::InputPivot,
        };
        assert!(clashes_at(&l, &pose, &InterferenceOptions::default()).contains(&clash));
        let mirrored = with(CouplerPoint { p: cp.p, q: -cp.q });
        // Distance of O2 from the mirrored plate, from its three edges (O2 outside it).
        let pose = position_at(&mirrored, t2, &NewtonOptions::default()).unwrap();
        let (a, b) = (mirrored.joint_a(t2), mirrored.joint_b(pose.theta4));
        let c2 = mirrored.coupler_point_at(t2, pose.theta3);
        let o2 = mirrored.input_pivot();
        let gap = point_segment(o2, a, b)
            .min(point_segment(o2, b, c2))
            .min(point_segment(o2, c2, a));
        assert!(gap > 0.1);
        let hits = |w: f64| {
            let opts = InterferenceOptions::new(Stacking::OnePlane, w, 0.0).unwrap();
            clashes_at(&mirrored, &pose, &opts).contains(&clash)
        };
        // The plate, inflated by half the link width, reaches O2 exactly when w / 2 >= gap.
        assert!(!hits(2.0 * gap * (1.0 - 1e-9)));
        assert!(hits(2.0 * gap * (1.0 + 1e-9)));
    }

    // Link width and pin radius: the crank-rocker's crank comes closest to O4 when it points
    // at it, at r1 - r2. At that pose the crank clears O4's pin exactly when half the width
    // plus the pin radius stays below r1 - r2. Over a motion on a grid through that angle the
    // check between poses follows chords of the pivot's circle about O2 (radius r1), which cut
    // inside the arc by r1 (1 - cos(h / 2)), about 1e-5 of r1 - r2 for h = 0.5 degree: a near
    // miss closer than that is flagged, one farther is not.
    #[test]
    fn widths_decide_a_near_miss() {
        let l = crank_rocker();
        let gap = l.ground() - l.input_link();
        let clash = Clash::BodyOverPin {
            body: Body::Crank,
            pin: Joint::OutputPivot,
        };
        let opts = |w: f64, r: f64| InterferenceOptions::new(Stacking::OnePlane, w, r).unwrap();
        let pose = position_at(&l, l.ground_angle(), &NewtonOptions::default()).unwrap();
        let at = |w: f64, r: f64| clashes_at(&l, &pose, &opts(w, r)).contains(&clash);
        assert!(!at(gap, 0.5 * gap * (1.0 - 1e-9)));
        assert!(at(gap, 0.5 * gap * (1.0 + 1e-9)));
        assert!(!at(0.0, gap * (1.0 - 1e-9)));
        assert!(at(0.0, gap * (1.0 + 1e-9)));
        let s = sweep_from(
            &l,
            0.5f64.to_radians(),
            l.ground_angle(),
            &SweepOptions::default(),
        );
        let poses = &s.branches[0].poses;
        let over = |w: f64, r: f64| {
            clashes_over(&l, poses, &opts(w, r))
                .iter()
                .any(|s| s.clash == clash)
        };
        assert!(!over(0.0, gap * (1.0 - 2e-5)));
        assert!(over(0.0, gap * (1.0 + 1e-9)));
        assert!(!over(gap, 0.5 * gap * (1.0 - 2e-5)));
    }
}
