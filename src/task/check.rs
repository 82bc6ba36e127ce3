//! Verification of a candidate by a full Newton-Raphson sweep through its targets.
//!
//! The defects follow Chase and Mirth, "Circuits and branches of single-degree-of-freedom
//! planar linkages", J. Mech. Des. 115 (1993): targets on different circuits (circuit
//! defect), on one circuit but separated by a toggle so that the driver would have to reverse
//! (branch defect), and reached in the wrong order as the driver turns one way (order defect).

use std::f64::consts::{PI, TAU};

use super::Rejection;
use crate::kinematics::analysis::transmission_critical_angles;
use crate::kinematics::position::{closed_form, Pose};
use crate::kinematics::range::{wrap_pi, InputRange};
use crate::kinematics::sweep::{SweepOptions, TraceEnd, Tracer};
use crate::linkage::{FourBar, GrashofClass};
use crate::scenario::{CrankRequirement, Limits};

/// Relative slack on limits, so that a design refined onto a bound is not rejected for
/// rounding.
pub const LIMIT_SLACK: f64 = 1e-9;

/// Smallest distance (radians of crank angle) between a target and a toggle of the input;
/// closer, the target counts as a dead point where the linkage cannot be driven.
pub const TOGGLE_CLEARANCE: f64 = 1e-7;

/// What a successful check found.
#[derive(Debug, Clone, PartialEq)]
pub struct MotionCheck {
    /// Poses at the targets, as reached by continuation from the first.
    pub poses: Vec<Pose>,
    /// Worst transmission quality `min(mu, pi - mu)` over the working motion (radians).
    pub min_transmission: f64,
    /// Newton-Raphson solves made.
    pub solves: usize,
}

/// Checks the limits that depend on the linkage alone: link lengths, length ratio, pivot
/// region and the crank requirement.
///
/// # Errors
/// Relative Grashof excess (see [`GrashofClass::excess`]) within which a design that must
/// turn its crank fully counts as a change point: within it the linkage passes almost flat
/// (transmission angle near zero) once a turn.
pub const FOLD_MARGIN: f64 = 1e-6;

/// The first limit violated.
pub fn check_limits(linkage: &FourBar, limits: &Limits) -> Result<(), Rejection> {
    // A design its own file could not hold (see `design::linkage_scale_problem`).
    if crate::design::linkage_scale_problem(linkage).is_some() {
        return Err(Rejection::Degenerate);
    }
    if let Some((lo, hi)) = limits.link_length {
        for l in linkage.lengths() {
            if l < lo * (1.0 - LIMIT_SLACK) || l > hi * (1.0 + LIMIT_SLACK) {
                return Err(Rejection::LinkLength);
            }
        }
    }
    if let Some(r) = limits.max_length_ratio {
        if linkage.length_ratio() > r * (1.0 + LIMIT_SLACK) {
            return Err(Rejection::LengthRatio);
        }
    }
    for (p, region) in [
        (linkage.input_pivot(), limits.input_region),
        (linkage.output_pivot(), limits.output_region),
    ] {
        if let Some((lo, hi)) = region {
            let slack = LIMIT_SLACK * (hi - lo).norm();
            if p.x < lo.x - slack || p.x > hi.x + slack || p.y < lo.y - slack || p.y > hi.y + slack
            {
                return Err(Rejection::PivotRegion);
            }
        }
    }
    if limits.crank == CrankRequirement::FullTurn {
        // A crank that must turn fully must also clear the change point by a margin: next
        // to it the linkage passes almost flat once a turn (transmission angle near 0).
        let [r1, r2, r3, r4] = linkage.lengths();
        if GrashofClass::excess(r1, r2, r3, r4).0.abs() <= FOLD_MARGIN {
            return Err(Rejection::ChangePoint);
        }
        match linkage.grashof() {
            GrashofClass::CrankRocker | GrashofClass::DoubleCrank => {}
            GrashofClass::ChangePoint => return Err(Rejection::ChangePoint),
            _ => return Err(Rejection::CrankNotFullTurn),
        }
    }
    Ok(())
}

/// Worst transmission quality over crank angles from `phi_a` to `phi_b` (from the ground line,
/// either order), or over the whole turn when `full` is set, at the angles of
/// [`transmission_critical_angles`].
pub fn worst_transmission(linkage: &FourBar, phi_a: f64, phi_b: f64, full: bool) -> f64 {
    let t1 = linkage.ground_angle();
    let (lo, hi) = (phi_a.min(phi_b), phi_a.max(phi_b));
    let cand = if full || hi - lo >= TAU {
        transmission_critical_angles(0.0, TAU)
    } else {
        transmission_critical_angles(lo, hi)
    };
    cand.iter()
        .filter_map(|phi| linkage.transmission_angle(phi + t1))
        .map(|mu| mu.min(PI - mu))
        .fold(f64::INFINITY, f64::min)
}

/// Verifies that `linkage` (its own assembly) reaches crank angles `phis` (from the ground
/// line, radians, in running order and unwrapped) one after the other by a Newton-Raphson
/// continuation sweep, within `limits`.
///
/// # Errors
/// The [`Rejection`] found first: a limit, the crank requirement, an order defect (angles not
/// monotonic or spanning more than a turn), a target where the linkage does not assemble, or a
/// circuit or branch defect between targets.
pub fn check_motion(
    linkage: &FourBar,
    phis: &[f64],
    limits: &Limits,
    options: &SweepOptions,
) -> Result<MotionCheck, Rejection> {
    check_limits(linkage, limits)?;
    if phis.iter().any(|p| !p.is_finite()) {
        return Err(Rejection::Degenerate);
    }
    if phis.len() >= 2 {
        let dir = (phis[1] - phis[0]).signum();
        let monotonic = phis.windows(2).all(|w| (w[1] - w[0]) * dir > 0.0);
        let span = (phis[phis.len() - 1] - phis[0]).abs();
        // A closed path may come back to its first target after exactly one turn.
        if !monotonic || span > TAU * (1.0 + 1e-9) {
            return Err(Rejection::OrderDefect);
        }
    }
    let asm = linkage.assembly();
    let t1 = linkage.ground_angle();
    let mut tracer = Tracer::new(linkage, *options);
    // A target at (or within round-off of) a toggle is a dead point: the crank cannot drive
    // the linkage there, and the continuation cannot start from its singular Jacobian.
    if let InputRange::Arcs(_) = tracer.range() {
        if phis
            .iter()
            .any(|&p| tracer.range().arc_of(p, -TOGGLE_CLEARANCE).is_none())
        {
            return Err(Rejection::NotAssembled);
        }
    }
    let Some(mut cur) = tracer.pose_at(t1 + phis[0], asm) else {
        return Err(Rejection::NotAssembled);
    };
    let mut poses = vec![cur];
    for &phi in &phis[1..] {
        let Some(expect) = closed_form(linkage, t1 + phi, asm) else {
            return Err(Rejection::NotAssembled);
        };
        match tracer.trace(&cur, t1 + phi) {
            TraceEnd::Reached(p) => {
                let same = wrap_pi(p.theta3 - expect.theta3).abs() < 1e-6
                    && wrap_pi(p.theta4 - expect.theta4).abs() < 1e-6;
                if !same {
                    return Err(Rejection::CircuitDefect);
                }
                cur = p;
                poses.push(p);
            }
            TraceEnd::Toggle { .. } => {
                let range = tracer.range();
                let here = range.arc_of(cur.theta2 - t1, 1e-9);
                let there = range.arc_of(phi, 1e-9);
                return Err(match (here, there) {
                    (Some(a), Some(b)) if a == b => Rejection::BranchDefect,
                    _ => Rejection::CircuitDefect,
                });
            }
            TraceEnd::Lost { .. } => return Err(Rejection::SweepFailed),
        }
    }
    let full =
        limits.crank == CrankRequirement::FullTurn && *tracer.range() == InputRange::FullTurn;
    let min_transmission = worst_transmission(linkage, phis[0], phis[phis.len() - 1], full);
    if let Some(mt) = limits.min_transmission {
        if min_transmission < mt * (1.0 - LIMIT_SLACK) {
            return Err(Rejection::TransmissionAngle);
        }
    }
    Ok(MotionCheck {
        poses,
        min_transmission,
        solves: tracer.solves(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::linkage::Assembly;

    fn bar(r1: f64, r2: f64, r3: f64, r4: f64) -> FourBar {
        FourBar::on_x_axis([r1, r2, r3, r4], Assembly::Open).unwrap()
    }

    // Grashof's condition (s + l <= p + q for a link to turn fully; DOMAIN.md): lengths
    // 121.2417, 121.2269, 121.2536, 121.2389 have s + l - (p + q) = -1.1e-4, a relative excess
    // of -2.3e-7, so the crank turns fully but the linkage passes within 0.001 deg of flat.
    #[test]
    fn a_crank_next_to_the_change_point_does_not_count_as_turning_fully() {
        let near = bar(121.2417, 121.2269, 121.2536, 121.2389);
        assert_eq!(near.grashof(), GrashofClass::CrankRocker);
        let mut lim = Limits::default();
        assert_eq!(check_limits(&near, &lim), Err(Rejection::ChangePoint));
        lim.crank = CrankRequirement::Any;
        assert_eq!(check_limits(&near, &lim), Ok(()));
        let clear = bar(7.0, 2.0, 9.0, 6.0);
        assert_eq!(check_limits(&clear, &Limits::default()), Ok(()));
    }

    #[test]
    fn crank_rocker_passes_in_order_and_fails_out_of_order() {
        let l = bar(7.0, 2.0, 9.0, 6.0);
        let lim = Limits::default();
        let ok = check_motion(&l, &[0.1, 1.0, 2.5, 4.0], &lim, &SweepOptions::default()).unwrap();
        assert_eq!(ok.poses.len(), 4);
        assert_eq!(
            check_motion(&l, &[0.1, 2.5, 1.0], &lim, &SweepOptions::default()),
            Err(Rejection::OrderDefect)
        );
        assert_eq!(
            check_motion(&l, &[0.1, 3.0, 6.5], &lim, &SweepOptions::default()),
            Err(Rejection::OrderDefect)
        );
    }

    #[test]
    fn triple_rocker_rejected_for_full_turn_and_branch_defect_when_rocking() {
        // r1=5, r2=4, r3=9, r4=6: s + l = 13 > p + q = 11; the input rocks about phi = pi.
        let l = bar(5.0, 4.0, 9.0, 6.0);
        assert_eq!(
            check_motion(
                &l,
                &[3.0, 3.3],
                &Limits::default(),
                &SweepOptions::default()
            ),
            Err(Rejection::CrankNotFullTurn)
        );
        let any = Limits {
            crank: CrankRequirement::Any,
            ..Limits::default()
        };
        assert!(check_motion(&l, &[3.0, 3.3], &any, &SweepOptions::default()).is_ok());
        // From phi = 3.3 running on to 3.0 + 2 pi passes the toggle: the input would have to
        // reverse to get there.
        assert_eq!(
            check_motion(&l, &[3.3, 3.0 + TAU - 1e-3], &any, &SweepOptions::default()),
            Err(Rejection::BranchDefect)
        );
    }

    // A target exactly at a toggle used to end as "sweep-failed": the continuation started
    // from a pose with a singular Jacobian. It is a dead point of the input (the crank cannot
    // drive the linkage there) and is now rejected as such before any tracing.
    #[test]
    fn target_at_a_toggle_is_a_dead_point() {
        let l = bar(5.0, 4.0, 9.0, 6.0);
        let InputRange::Arcs(arcs) = InputRange::of(&l) else {
            panic!("a triple rocker rocks")
        };
        let a = arcs[0].start.phi;
        let any = Limits {
            crank: CrankRequirement::Any,
            ..Limits::default()
        };
        let opts = SweepOptions::default();
        assert_eq!(
            check_motion(&l, &[a, a + 0.3], &any, &opts),
            Err(Rejection::NotAssembled)
        );
        assert!(check_motion(&l, &[a + 1e-4, a + 0.3], &any, &opts).is_ok());
    }
}
