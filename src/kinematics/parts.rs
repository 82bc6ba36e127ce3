//! The parts of a four-bar as named things: its four pin joints and its three moving bodies,
//! with where they are at a pose. Tolerance, clearance and interference studies speak of them.

use nalgebra::Point2;

use super::position::Pose;
use crate::linkage::FourBar;

/// One of the four pin joints.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Joint {
    /// The input (crank) pivot `O2`, fixed.
    InputPivot,
    /// Joint `A` between crank and coupler.
    CrankCoupler,
    /// Joint `B` between coupler and output link.
    CouplerOutput,
    /// The output pivot `O4`, fixed.
    OutputPivot,
}

impl Joint {
    /// The four joints in the order `O2`, `A`, `B`, `O4`.
    pub const ALL: [Joint; 4] = [
        Joint::InputPivot,
        Joint::CrankCoupler,
        Joint::CouplerOutput,
        Joint::OutputPivot,
    ];

    /// Name for messages and reports, e.g. `joint A (crank-coupler)`.
    pub fn name(self) -> &'static str {
        match self {
            Joint::InputPivot => "input pivot O2",
            Joint::CrankCoupler => "joint A (crank-coupler)",
            Joint::CouplerOutput => "joint B (coupler-output)",
            Joint::OutputPivot => "output pivot O4",
        }
    }

    /// Whether the joint is fixed to the frame.
    pub fn is_fixed(self) -> bool {
        matches!(self, Joint::InputPivot | Joint::OutputPivot)
    }

    /// Where the joint's centre is at `pose` (length units).
    pub fn position(self, linkage: &FourBar, pose: &Pose) -> Point2<f64> {
        match self {
            Joint::InputPivot => linkage.input_pivot(),
            Joint::CrankCoupler => linkage.joint_a(pose.theta2),
            Joint::CouplerOutput => linkage.joint_b(pose.theta4),
            Joint::OutputPivot => linkage.output_pivot(),
        }
    }
}

/// One of the three moving bodies.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Body {
    /// The input link `O2 A`.
    Crank,
    /// The coupler, a plate through `A`, `B` and the coupler point `C`.
    Coupler,
    /// The output link `O4 B`.
    Output,
}

impl Body {
    /// The three bodies.
    pub const ALL: [Body; 3] = [Body::Crank, Body::Coupler, Body::Output];

    /// Name for messages and reports.
    pub fn name(self) -> &'static str {
        match self {
            Body::Crank => "crank",
            Body::Coupler => "coupler",
            Body::Output => "output link",
        }
    }

    /// The two joints the body carries.
    pub fn joints(self) -> [Joint; 2] {
        match self {
            Body::Crank => [Joint::InputPivot, Joint::CrankCoupler],
            Body::Coupler => [Joint::CrankCoupler, Joint::CouplerOutput],
            Body::Output => [Joint::OutputPivot, Joint::CouplerOutput],
        }
    }

    /// Whether the body carries `joint`.
    pub fn carries(self, joint: Joint) -> bool {
        self.joints().contains(&joint)
    }

    /// The joint pinning this body to `other`, if they are pinned together.
    pub fn pinned_to(self, other: Body) -> Option<Joint> {
        if self == other {
            return None;
        }
        self.joints().into_iter().find(|j| other.carries(*j))
    }

    /// The body's frame at `pose`: origin (`O2`, `A` or `O4`) and direction (radians,
    /// counter-clockwise from +x: `theta2`, `theta3` or `theta4`).
    pub fn frame(self, linkage: &FourBar, pose: &Pose) -> (Point2<f64>, f64) {
        match self {
            Body::Crank => (linkage.input_pivot(), pose.theta2),
            Body::Coupler => (linkage.joint_a(pose.theta2), pose.theta3),
            Body::Output => (linkage.output_pivot(), pose.theta4),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pinned_pairs() {
        assert_eq!(
            Body::Crank.pinned_to(Body::Coupler),
            Some(Joint::CrankCoupler)
        );
        assert_eq!(
            Body::Output.pinned_to(Body::Coupler),
            Some(Joint::CouplerOutput)
        );
        assert_eq!(Body::Crank.pinned_to(Body::Output), None);
        assert_eq!(Body::Crank.pinned_to(Body::Crank), None);
        assert_eq!(Joint::ALL.iter().filter(|j| j.is_fixed()).count(), 2);
    }
}
