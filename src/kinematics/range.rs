//! The input's range of motion: where the linkage assembles, in closed form.
//!
//! With `phi = theta2 - theta1` (crank angle from the ground line), the diagonal
//! `D^2 = |A - O4|^2 = r1^2 + r2^2 - 2 r1 r2 cos(phi)` must lie in `[(r3 - r4)^2, (r3 + r4)^2]`.
//! Each bound is a toggle of the input: coupler and output link in line (folded at the lower
//! bound, stretched at the upper).

use std::f64::consts::{PI, TAU};

use super::position::Pose;
use crate::linkage::FourBar;

/// Which limit ends an arc of input motion.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum ToggleKind {
    /// Coupler and output link stretched in line: `|A - O4| = r3 + r4`.
    Extended,
    /// Coupler and output link folded over each other: `|A - O4| = |r3 - r4|`.
    Folded,
}

/// A toggle position: crank angle from the ground line (radians) and its kind.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Toggle {
    /// Crank angle from the ground line, `theta2 - theta1`, radians.
    pub phi: f64,
    /// Which in-line position it is.
    pub kind: ToggleKind,
}

impl Toggle {
    /// The pose at this toggle, built from its geometry: `B` lies on the line through `A`
    /// and `O4` (between them when extended; on the far side of `O4` when folded with the
    /// coupler longer, of `A` when the output is longer), so `theta3` and `theta4` are the
    /// direction of `A -> O4` or its opposite.
    ///
    /// This is better conditioned than the closed-form circle intersection there: the
    /// circles touch, and the intersection's half-chord `sqrt(r3^2 - along^2)` turns the
    /// rounding of `|A - O4|` (~1e-16) into an angle error of ~1e-8.
    pub fn pose(&self, linkage: &FourBar) -> Pose {
        let theta2 = self.phi + linkage.ground_angle();
        let u = linkage.output_pivot() - linkage.joint_a(theta2);
        let toward_o4 = u.y.atan2(u.x);
        let (theta3, theta4) = match self.kind {
            ToggleKind::Extended => (toward_o4, toward_o4 + PI),
            ToggleKind::Folded if linkage.coupler() >= linkage.output_link() => {
                (toward_o4, toward_o4)
            }
            ToggleKind::Folded => (toward_o4 + PI, toward_o4 + PI),
        };
        Pose {
            theta2,
            theta3,
            theta4,
        }
    }
}

/// One arc of crank angles (from the ground line) on which the linkage assembles:
/// `phi` from `start` to `end` counter-clockwise, `start < end`, ends at toggles.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Arc {
    /// Toggle at the clockwise end.
    pub start: Toggle,
    /// Toggle at the counter-clockwise end (`end.phi > start.phi`, possibly above pi).
    pub end: Toggle,
}

impl Arc {
    /// Angular width of the arc (radians).
    pub fn width(&self) -> f64 {
        self.end.phi - self.start.phi
    }
    /// Whether `phi` (any turn) lies in the arc, with slack `eps` (radians) at both ends.
    pub fn contains(&self, phi: f64, eps: f64) -> bool {
        self.unwrap(phi, eps).is_some()
    }
    /// `phi` moved by whole turns into `[start, end]` (with slack `eps`), if it lies there.
    pub fn unwrap(&self, phi: f64, eps: f64) -> Option<f64> {
        let k = ((self.start.phi - eps - phi) / TAU).ceil();
        let p = phi + k * TAU;
        (p <= self.end.phi + eps).then_some(p)
    }
    /// Midpoint of the arc.
    pub fn mid(&self) -> f64 {
        0.5 * (self.start.phi + self.end.phi)
    }
}

/// Where the input can move: all the way round, on one or two arcs, or nowhere.
#[derive(Debug, Clone, PartialEq)]
pub enum InputRange {
    /// The input turns fully (no toggles).
    FullTurn,
    /// The input rocks on these arcs (one or two), each ending in toggles.
    Arcs(Vec<Arc>),
    /// The linkage cannot be assembled at any crank angle.
    None,
}

impl InputRange {
    /// Range of the input of `linkage` (closed form, independent of the assembly).
    pub fn of(linkage: &FourBar) -> Self {
        let [r1, r2, r3, r4] = linkage.lengths();
        let den = 2.0 * r1 * r2;
        // cos(phi) >= c_lo keeps D <= r3 + r4; cos(phi) <= c_hi keeps D >= |r3 - r4|.
        let c_lo = (r1 * r1 + r2 * r2 - (r3 + r4) * (r3 + r4)) / den;
        let c_hi = (r1 * r1 + r2 * r2 - (r3 - r4) * (r3 - r4)) / den;
        if c_lo > 1.0 || c_hi < -1.0 || c_lo > c_hi {
            return InputRange::None;
        }
        let ext = |phi| Toggle {
            phi,
            kind: ToggleKind::Extended,
        };
        let fold = |phi| Toggle {
            phi,
            kind: ToggleKind::Folded,
        };
        match (c_lo > -1.0, c_hi < 1.0) {
            (false, false) => InputRange::FullTurn,
            (true, false) => {
                let a = c_lo.acos();
                InputRange::Arcs(vec![Arc {
                    start: ext(-a),
                    end: ext(a),
                }])
            }
            (false, true) => {
                let b = c_hi.acos();
                InputRange::Arcs(vec![Arc {
                    start: fold(b),
                    end: fold(TAU - b),
                }])
            }
            (true, true) => {
                let a = c_lo.acos();
                let b = c_hi.acos();
                InputRange::Arcs(vec![
                    Arc {
                        start: fold(b),
                        end: ext(a),
                    },
                    Arc {
                        start: ext(-a),
                        end: fold(-b),
                    },
                ])
            }
        }
    }

    /// The arc containing `phi` (crank angle from the ground line), if any; for a full turn,
    /// `None` too (use [`InputRange::FullTurn`] directly).
    pub fn arc_of(&self, phi: f64, eps: f64) -> Option<&Arc> {
        match self {
            InputRange::Arcs(arcs) => arcs.iter().find(|a| a.contains(phi, eps)),
            _ => None,
        }
    }

    /// Whether the linkage assembles at `phi` (from the ground line).
    pub fn contains(&self, phi: f64) -> bool {
        match self {
            InputRange::FullTurn => true,
            InputRange::None => false,
            InputRange::Arcs(_) => self.arc_of(phi, 1e-12).is_some(),
        }
    }
}

/// Wraps an angle into `(-pi, pi]`.
pub fn wrap_pi(a: f64) -> f64 {
    let t = a.rem_euclid(TAU);
    if t > PI {
        t - TAU
    } else {
        t
    }
}

/// Wraps an angle into `[0, 2 pi)`.
pub fn wrap_tau(a: f64) -> f64 {
    let t = a.rem_euclid(TAU);
    if t >= TAU {
        0.0
    } else {
        t
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::kinematics::position::assembles_at;
    use crate::linkage::{Assembly, CouplerPoint};
    use nalgebra::Point2;

    fn bar(r1: f64, r2: f64, r3: f64, r4: f64) -> FourBar {
        FourBar::new(
            Point2::new(0.5, -1.0),
            Point2::new(0.5 + r1 * 0.6, -1.0 + r1 * 0.8),
            r2,
            r3,
            r4,
            CouplerPoint::default(),
            Assembly::Open,
        )
        .unwrap()
    }

    // The closed-form range agrees with a direct assembly test at every degree.
    #[test]
    fn range_agrees_with_assembly_test() {
        for l in [
            bar(7.0, 2.0, 9.0, 6.0),
            bar(5.0, 4.0, 9.0, 6.0),
            bar(4.0, 3.0, 2.0, 2.5),
            bar(7.0, 6.0, 2.0, 9.0),
            bar(7.0, 6.0, 9.0, 2.0),
            bar(10.0, 2.0, 1.5, 1.5),
        ] {
            let range = InputRange::of(&l);
            for k in 0..3600 {
                let phi = (k as f64 * 0.1 + 0.05).to_radians();
                let t2 = phi + l.ground_angle();
                assert_eq!(range.contains(phi), assembles_at(&l, t2), "{l:?} at {phi}");
            }
        }
        assert_eq!(
            InputRange::of(&bar(7.0, 2.0, 9.0, 6.0)),
            InputRange::FullTurn
        );
        assert_eq!(InputRange::of(&bar(10.0, 2.0, 1.5, 1.5)), InputRange::None);
    }
}
