//! Statics by virtual work: mechanical advantage and the input torque a load needs.
//!
//! **Frictionless, quasi-static; inertia not included.** The joints are ideal pins, the links
//! rigid and massless, and the motion slow enough that the links' inertia forces are
//! negligible against the load. Friction, link weights and inertia raise the torque a real
//! drive needs; strength and safety follow local codes and licensed engineering practice.
//!
//! # Virtual work
//! A four-bar has one degree of freedom, so for ideal joints the power put in at the crank
//! equals the power delivered to the work (the principle of virtual work):
//!
//! ```text
//! T2 w2 = T_out w4 + F . v_C
//! ```
//!
//! where `T2` is the torque the drive applies to the crank, `T_out` the torque the output link
//! delivers to its load, and `F` the force the coupler point exerts on the work (the load
//! acting on the mechanism is `-T_out` and `-F`). Dividing by `w2` gives the rates per unit
//! crank rotation from the loop-closure Jacobian ([`super::rates`]):
//!
//! ```text
//! T2 = T_out k4 + F . (dC / d theta2),      k4 = d theta4 / d theta2 = w4 / w2
//! ```
//!
//! so the input torque does not depend on the crank speed, only (for a force that resists the
//! motion along the path) on its direction. The mechanical advantage of an output-torque load
//! is `T_out / T2 = w2 / w4 = 1 / k4`: positive when the output turns the same way as the
//! crank.
//!
//! # The same from the angles (force transmitted along the coupler)
//! With no load on the coupler itself, the coupler is a two-force member: it carries one force
//! `P` along its line `e3` (the direction of `A -> B`), pulling on the crank at `A` with `+P e3`
//! and on the output at `B` with `-P e3`. The crank needs the torque
//! `T2 = -r2 P (e2 x e3) = r2 P sin(theta2 - theta3)` to balance it, and the output delivers
//! `T_out = r4 P (e4 x (-e3)) = r4 P sin(theta4 - theta3)`. Hence
//!
//! ```text
//! T_out / T2 = r4 sin(theta4 - theta3) / (r2 sin(theta2 - theta3))
//! ```
//!
//! and in magnitude `|MA| = r4 sin(mu) / (r2 sin(nu))` with the transmission angle `mu`
//! (between coupler and output link) and `nu` the angle between crank and coupler: the
//! textbook form (Norton, "Design of Machinery", the section on mechanical advantage of the
//! fourbar, where it is multiplied by `r_in / r_out` for forces at given radii; from memory).
//! It agrees with `1 / k4` from the velocity solve (the tests check it at several crank
//! angles), which is the point of writing it out: the advantage is infinite where crank and
//! coupler are in line (`nu = 0`: the output is at rest, a limit position of a rocker) and zero
//! where coupler and output are in line (`mu = 0`: the input's toggle, where no input torque
//! can move a loaded output).

use std::f64::consts::TAU;

use nalgebra::Vector2;

use super::position::Pose;
use super::rates::{coupler_velocity_ratio, velocity_ratios};
use crate::linkage::FourBar;

/// `|d theta4 / d theta2|` at or below which the output counts as at rest (crank and coupler
/// in line): the mechanical advantage is then [`Advantage::Infinite`]. Dimensionless; the
/// ratio is of order one away from such positions.
pub const OUTPUT_AT_REST: f64 = 1e-12;

/// Which way the crank turns. Only a load that resists the motion along the path
/// ([`Load::PathResistance`]) depends on it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Turning {
    /// `w2 > 0`.
    CounterClockwise,
    /// `w2 < 0`.
    Clockwise,
}

impl Turning {
    /// `+1` counter-clockwise, `-1` clockwise.
    pub fn sign(self) -> f64 {
        match self {
            Turning::CounterClockwise => 1.0,
            Turning::Clockwise => -1.0,
        }
    }

    /// The direction of a crank speed `omega2` (rad/s); `None` when it is zero or not finite.
    pub fn of_speed(omega2: f64) -> Option<Self> {
        if !omega2.is_finite() || omega2 == 0.0 {
            None
        } else if omega2 > 0.0 {
            Some(Turning::CounterClockwise)
        } else {
            Some(Turning::Clockwise)
        }
    }
}

/// What the mechanism works against. Forces in any unit `N`; torques in `N` times the
/// linkage's length unit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Load {
    /// The torque the output link delivers to its load (counter-clockwise positive): the load
    /// applies the opposite torque to the output link.
    OutputTorque(f64),
    /// The force the coupler point exerts on the work: the work applies the opposite force
    /// to the coupler point. Lifting a weight `W` hung on the point is `(0, W)`.
    CouplerForce(Vector2<f64>),
    /// A force of this magnitude (non-negative) resisting the coupler point's motion along its
    /// path (a cutting or friction-like load on the tool at the point): the point exerts `F`
    /// along its direction of travel.
    PathResistance(f64),
}

/// Mechanical advantage `T_out / T2 = w2 / w4` at one pose.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Advantage {
    /// Finite ratio, positive when the output turns the same way as the crank.
    Finite(f64),
    /// The output is at rest (`|w4 / w2|` at most [`OUTPUT_AT_REST`]): crank and coupler in
    /// line, a limit position of the output. Any output torque is held with no input torque.
    Infinite,
    /// The input's toggle: coupler and output in line, the Jacobian singular. The advantage
    /// is zero there (`sin mu = 0`): no input torque can move a loaded output.
    InputToggle,
}

impl Advantage {
    /// The ratio as a number: `f64::INFINITY` at rest, `0` at the input's toggle.
    pub fn value(self) -> f64 {
        match self {
            Advantage::Finite(v) => v,
            Advantage::Infinite => f64::INFINITY,
            Advantage::InputToggle => 0.0,
        }
    }
}

/// Mechanical advantage of `linkage` at `pose` by virtual work, `w2 / w4` from the velocity
/// solve of the loop-closure Jacobian (dimensionless).
pub fn mechanical_advantage(linkage: &FourBar, pose: &Pose) -> Advantage {
    match velocity_ratios(linkage, pose) {
        None => Advantage::InputToggle,
        Some((_, k4)) if k4.abs() <= OUTPUT_AT_REST => Advantage::Infinite,
        Some((_, k4)) => Advantage::Finite(1.0 / k4),
    }
}

/// Input torque the drive must apply to the crank at `pose` to carry `load`, by virtual work
/// (`T2 = T_out k4 + F . dC/d theta2`; frictionless, quasi-static, inertia not included), in
/// the load's force unit times the linkage's length unit, counter-clockwise positive. `None`
/// at the input's toggle, where the rates are singular and the torque unbounded.
pub fn input_torque(linkage: &FourBar, pose: &Pose, load: &Load, turning: Turning) -> Option<f64> {
    match *load {
        Load::OutputTorque(t) => velocity_ratios(linkage, pose).map(|(_, k4)| t * k4),
        Load::CouplerForce(f) => coupler_velocity_ratio(linkage, pose).map(|v| f.dot(&v)),
        // F along the travel: F . v_C / w2 = F |v_C| / w2 = F |dC/d theta2| sign(w2).
        Load::PathResistance(f) => {
            coupler_velocity_ratio(linkage, pose).map(|v| f * v.norm() * turning.sign())
        }
    }
}

/// The largest input torque over a motion and where it occurs.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PeakTorque {
    /// The largest `|T2|` over the poses: the signed torque and its pose.
    Finite {
        /// Pose where `|T2|` is largest among the poses given.
        pose: Pose,
        /// Crank angle there from the ground line `O2 -> O4` (radians, in `[0, 2 pi)`).
        phi: f64,
        /// Input torque there (counter-clockwise positive).
        torque: f64,
    },
    /// The motion passes the input's toggle (coupler and output in line), where a load needs
    /// an unbounded torque: the first such pose.
    Unbounded {
        /// The toggle pose.
        pose: Pose,
        /// Crank angle there from the ground line `O2 -> O4` (radians, in `[0, 2 pi)`).
        phi: f64,
    },
}

/// Input torque at each of `poses` for `load` (see [`input_torque`]).
pub fn torque_profile(
    linkage: &FourBar,
    poses: &[Pose],
    load: &Load,
    turning: Turning,
) -> Vec<Option<f64>> {
    poses
        .iter()
        .map(|p| input_torque(linkage, p, load, turning))
        .collect()
}

/// The largest input torque `|T2|` over `poses` (e.g. a sweep's branch) and where it occurs;
/// `None` when `poses` is empty. The peak is the largest among the poses given, so its
/// resolution is their spacing; a pose at the input's toggle gives
/// [`PeakTorque::Unbounded`].
pub fn peak_input_torque(
    linkage: &FourBar,
    poses: &[Pose],
    load: &Load,
    turning: Turning,
) -> Option<PeakTorque> {
    let phi = |p: &Pose| (p.theta2 - linkage.ground_angle()).rem_euclid(TAU);
    let mut best: Option<PeakTorque> = None;
    for pose in poses {
        match input_torque(linkage, pose, load, turning) {
            None => {
                return Some(PeakTorque::Unbounded {
                    pose: *pose,
                    phi: phi(pose),
                })
            }
            Some(torque) => {
                let better = match best {
                    Some(PeakTorque::Finite { torque: t, .. }) => torque.abs() > t.abs(),
                    _ => true,
                };
                if better {
                    best = Some(PeakTorque::Finite {
                        pose: *pose,
                        phi: phi(pose),
                        torque,
                    });
                }
            }
        }
    }
    best
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::kinematics::fixtures::{crank_rocker, double_rocker, place, DOUBLE_ROCKER_PHI_DEG};
    use crate::kinematics::position::{position_at, NewtonOptions};
    use crate::kinematics::range::wrap_pi;
    use crate::kinematics::sweep::{sweep, SweepOptions};
    use crate::linkage::{Assembly, CouplerPoint};
    use approx::assert_relative_eq;
    use nalgebra::Point2;

    /// Crank angles from the ground line (degrees) used on each fixture.
    fn cases() -> Vec<(FourBar, Vec<f64>)> {
        vec![
            (
                crank_rocker(),
                (0..12).map(|k| 5.0 + 30.0 * k as f64).collect(),
            ),
            (double_rocker(), DOUBLE_ROCKER_PHI_DEG.to_vec()),
        ]
    }

    /// Angle (radians, in `[0, pi]`) at the vertex `v` of the triangle with sides `a`, `b`
    /// meeting there and `c` opposite: the law of cosines.
    fn vertex_angle(a: f64, b: f64, c: f64) -> f64 {
        ((a * a + b * b - c * c) / (2.0 * a * b))
            .clamp(-1.0, 1.0)
            .acos()
    }

    // Mechanical advantage by virtual work against the angle form r4 sin(mu) / (r2 sin(nu))
    // (Norton, "Design of Machinery", mechanical advantage of the fourbar; from memory), with
    // mu and nu computed here by the law of cosines from the joints placed by the fixture's own
    // closed form: mu from the triangle A, B, O4 and nu from the triangle O2, A, B.
    #[test]
    fn advantage_matches_the_angle_form() {
        let mut n = 0;
        for (l, phis) in cases() {
            let (r2, r3, r4) = (l.input_link(), l.coupler(), l.output_link());
            for deg in phis {
                let t2 = l.ground_angle() + deg.to_radians();
                let placed = place(&l, t2).unwrap();
                let mu = vertex_angle(r3, r4, (placed.a - l.output_pivot()).norm());
                let nu = vertex_angle(r2, r3, (placed.b - l.input_pivot()).norm());
                let textbook = r4 * mu.sin() / (r2 * nu.sin());
                let pose = position_at(&l, t2, &NewtonOptions::default()).unwrap();
                let Advantage::Finite(ma) = mechanical_advantage(&l, &pose) else {
                    panic!("finite advantage expected at {deg} deg");
                };
                assert_relative_eq!(ma.abs(), textbook, max_relative = 1e-9);
                n += 1;
            }
        }
        assert_eq!(n, 17);
    }

    proptest::proptest! {
        // The advantage by virtual work against the angle form on random linkages, away from
        // both singular positions (|sin(mu)|, |sin(nu)| > 0.02).
        #[test]
        fn advantage_matches_the_angle_form_on_random_linkages(
            r1 in 0.5..10.0f64, r2 in 0.5..10.0f64, r3 in 0.5..10.0f64, r4 in 0.5..10.0f64,
            t1 in -3.0..3.0f64, open in proptest::bool::ANY, phi in 0.0..TAU,
        ) {
            let asm = if open { Assembly::Open } else { Assembly::Crossed };
            let o4 = Point2::new(r1 * t1.cos(), r1 * t1.sin());
            let l = FourBar::new(Point2::origin(), o4, r2, r3, r4, CouplerPoint::default(), asm)
                .unwrap();
            let t2 = t1 + phi;
            let Some(at) = place(&l, t2) else { return Ok(()) };
            let mu = vertex_angle(r3, r4, (at.a - l.output_pivot()).norm());
            let nu = vertex_angle(r2, r3, (at.b - l.input_pivot()).norm());
            proptest::prop_assume!(mu.sin() > 0.02 && nu.sin() > 0.02);
            let pose = position_at(&l, t2, &NewtonOptions::default()).unwrap();
            let ma = mechanical_advantage(&l, &pose).value();
            let textbook = r4 * mu.sin() / (r2 * nu.sin());
            proptest::prop_assert!((ma.abs() / textbook - 1.0).abs() < 1e-8, "{} vs {}", ma, textbook);
        }
    }

    // Virtual work by finite differences: the input torque for an output torque, a fixed force
    // on the coupler point and a force resisting the path equals the work done on the load per
    // unit crank rotation, from central differences of the fixture's closed-form positions
    // (five-point stencil). The signed advantage is the ratio of crank to output rotation.
    #[test]
    fn input_torque_matches_finite_difference_virtual_work() {
        let h = 1e-3;
        let force = Vector2::new(-3.0, 7.5);
        for (l, phis) in cases() {
            for deg in phis {
                let t2 = l.ground_angle() + deg.to_radians();
                let at = |k: i32| place(&l, t2 + k as f64 * h).unwrap();
                let d = |f: &dyn Fn(i32) -> f64| {
                    (-f(2) + 8.0 * f(1) - 8.0 * f(-1) + f(-2)) / (12.0 * h)
                };
                let th4 = |k: i32| at(0).theta4 + wrap_pi(at(k).theta4 - at(0).theta4);
                let dtheta4 = d(&th4);
                let dcx = d(&|k| at(k).c.x);
                let dcy = d(&|k| at(k).c.y);
                let pose = position_at(&l, t2, &NewtonOptions::default()).unwrap();
                let t_out = 12.0;
                let t2_out =
                    input_torque(&l, &pose, &Load::OutputTorque(t_out), Turning::Clockwise)
                        .unwrap();
                assert_relative_eq!(t2_out, t_out * dtheta4, epsilon = 1e-7 * t_out);
                let Advantage::Finite(ma) = mechanical_advantage(&l, &pose) else {
                    panic!("finite advantage expected");
                };
                assert_relative_eq!(ma, 1.0 / dtheta4, max_relative = 1e-7);
                let t2_f = input_torque(
                    &l,
                    &pose,
                    &Load::CouplerForce(force),
                    Turning::CounterClockwise,
                )
                .unwrap();
                let scale = force.norm() * (dcx.hypot(dcy)).max(1.0);
                assert_relative_eq!(t2_f, force.x * dcx + force.y * dcy, epsilon = 1e-7 * scale);
                // A resisting force along the path: the drive works against it whichever way it
                // turns, so the torque has the sign of the crank speed.
                for turning in [Turning::CounterClockwise, Turning::Clockwise] {
                    let t = input_torque(&l, &pose, &Load::PathResistance(5.0), turning).unwrap();
                    assert_relative_eq!(
                        t,
                        turning.sign() * 5.0 * dcx.hypot(dcy),
                        epsilon = 1e-7 * scale
                    );
                }
            }
        }
    }

    // At a rocker's limit position the output is at rest: infinite advantage, and an output
    // torque needs no input torque. A crank-rocker's output is at a limit where crank and
    // coupler are in line (a standard property of its extreme positions; e.g. Norton, "Design
    // of Machinery", limit positions; from memory): extended, |O2 B| = r2 + r3, so B is placed
    // here from the triangle O2, B, O4 by the law of cosines.
    #[test]
    fn rocker_limit_is_infinite_advantage() {
        // Ground on the x axis so that B's triangle is written simply.
        let l = FourBar::new(
            Point2::origin(),
            Point2::new(7.0, 0.0),
            2.0,
            8.0,
            6.0,
            CouplerPoint { p: 3.0, q: 2.5 },
            Assembly::Open,
        )
        .unwrap();
        let (r1, r2, r3, r4) = (7.0, 2.0, 8.0, 6.0);
        // Extended: |O2 B| = r2 + r3; the angle of O2 -> B from the ground by the law of cosines.
        let ob = r2 + r3;
        let ang = vertex_angle(ob, r1, r4);
        // Crank and coupler in line along O2 -> B; choose B above the ground.
        let theta2 = ang;
        let b = Point2::new(ob * ang.cos(), ob * ang.sin());
        let theta4 = (b.y).atan2(b.x - r1);
        let pose = Pose {
            theta2,
            theta3: theta2,
            theta4,
        };
        assert!(((l.joint_b(theta4) - l.joint_a(theta2)).norm() - r3).abs() < 1e-12);
        let pose = crate::kinematics::position::solve_position(
            &l,
            theta2,
            &pose,
            &NewtonOptions::default(),
        )
        .pose;
        // Exactly in line k4 is of rounding size: the status says infinite, no panic.
        let ma = mechanical_advantage(&l, &pose);
        assert_eq!(ma, Advantage::Infinite, "{ma:?}");
        assert!(ma.value().is_infinite());
        let t = input_torque(
            &l,
            &pose,
            &Load::OutputTorque(50.0),
            Turning::CounterClockwise,
        );
        assert!(t.unwrap().abs() < 1e-9);
        // A little away from it the advantage is finite and large, and grows towards it.
        let near = |d: f64| {
            let p = position_at(&l, theta2 + d, &NewtonOptions::default()).unwrap();
            mechanical_advantage(&l, &p).value().abs()
        };
        assert!(near(1e-3) > 100.0);
        assert!(near(1e-4) > near(1e-3));
    }

    // The input's toggle of a double-rocker (coupler and output in line): zero advantage as a
    // status, an unbounded torque as `None`, and the peak over a sweep that reaches the toggle
    // is reported as unbounded at the toggle.
    #[test]
    fn input_toggle_is_a_status_and_an_unbounded_peak() {
        let l = double_rocker();
        let s = sweep(&l, 1f64.to_radians(), &SweepOptions::default());
        let branch = &s.branches[0];
        let (start, _) = branch.toggle_poses.unwrap();
        assert_eq!(mechanical_advantage(&l, &start), Advantage::InputToggle);
        assert!(Advantage::InputToggle.value().abs() < f64::MIN_POSITIVE);
        assert!(input_torque(&l, &start, &Load::OutputTorque(1.0), Turning::Clockwise).is_none());
        let mut poses = branch.poses.clone();
        if !poses.contains(&start) {
            poses.insert(0, start);
        }
        match peak_input_torque(&l, &poses, &Load::OutputTorque(1.0), Turning::Clockwise) {
            Some(PeakTorque::Unbounded { pose, phi }) => {
                assert_eq!(pose, start);
                let toggle = branch.toggles.unwrap().0.phi;
                assert_relative_eq!(phi, toggle.rem_euclid(TAU), epsilon = 1e-12);
            }
            other => panic!("expected an unbounded peak, got {other:?}"),
        }
        // Without the toggle poses the peak is finite and lies at the sample nearest a toggle,
        // where the torque grows without bound.
        let inner = &branch.poses[1..branch.poses.len() - 1];
        let Some(PeakTorque::Finite { pose, torque, .. }) =
            peak_input_torque(&l, inner, &Load::OutputTorque(1.0), Turning::Clockwise)
        else {
            panic!("finite peak expected");
        };
        assert!(pose == inner[0] || pose == inner[inner.len() - 1]);
        assert!(torque.abs() > 1.0);
    }

    // The peak over a sampled crank-rocker motion is the largest |T2| of the samples,
    // recomputed here from finite differences of the fixture's positions at every sample.
    #[test]
    fn peak_torque_is_the_largest_sample() {
        let l = crank_rocker();
        let s = sweep(&l, 2f64.to_radians(), &SweepOptions::default());
        let poses = &s.branches[0].poses;
        let force = Vector2::new(0.0, 40.0);
        let load = Load::CouplerForce(force);
        let Some(PeakTorque::Finite { pose, phi, torque }) =
            peak_input_torque(&l, poses, &load, Turning::CounterClockwise)
        else {
            panic!("finite peak expected on a crank-rocker");
        };
        let h = 1e-4;
        let (mut best, mut at) = (0.0f64, 0.0);
        for p in poses {
            let c = |d: f64| place(&l, p.theta2 + d).unwrap().c;
            let t = force.dot(&((c(h) - c(-h)) / (2.0 * h)));
            if t.abs() > best.abs() {
                best = t;
                at = p.theta2;
            }
        }
        assert_relative_eq!(torque, best, max_relative = 1e-6);
        assert_relative_eq!(pose.theta2, at, epsilon = 1e-12);
        assert_relative_eq!(
            phi,
            (at - l.ground_angle()).rem_euclid(TAU),
            epsilon = 1e-12
        );
        assert!(peak_input_torque(&l, &[], &load, Turning::Clockwise).is_none());
        let profile = torque_profile(&l, poses, &load, Turning::CounterClockwise);
        assert_eq!(profile.len(), poses.len());
        assert!(profile.iter().all(|t| t.unwrap().abs() <= torque.abs()));
    }

    #[test]
    fn turning_of_speed() {
        assert_eq!(Turning::of_speed(2.0), Some(Turning::CounterClockwise));
        assert_eq!(Turning::of_speed(-0.1), Some(Turning::Clockwise));
        assert_eq!(Turning::of_speed(0.0), None);
        assert_eq!(Turning::of_speed(f64::NAN), None);
    }
}
