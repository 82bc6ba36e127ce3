//! Integration tests of the kinematic core against references outside the project: a
//! textbook worked example, Freudenstein's equation, the closed-form circle intersection,
//! Grashof's criterion, numerical differentiation and rigid-motion invariance.

use std::f64::consts::{PI, TAU};

use approx::assert_relative_eq;
use nalgebra::{Point2, Vector2};
use proptest::prelude::*;
use proptest::test_runner::FileFailurePersistence;

use crankwright::kinematics::analysis::{analyse, AnalysisOptions};
use crankwright::kinematics::position::{loop_residual, position_at};
use crankwright::kinematics::range::{wrap_pi, ToggleKind};
use crankwright::{
    closed_form, rates, solve_position, sweep, Assembly, CouplerPoint, FourBar, GrashofClass,
    InputRange, NewtonOptions, Pose, PositionStatus, SweepOptions, TraceEnd, Tracer,
};

#[path = "kinematics/regression.rs"]
mod regression;

/// Property-test settings: `cases` random cases, failures recorded in
/// `proptest-regressions/kinematics.txt` (committed) and replayed first on every run.
fn config(cases: u32) -> ProptestConfig {
    ProptestConfig {
        cases,
        failure_persistence: Some(Box::new(FileFailurePersistence::Direct(
            "proptest-regressions/kinematics.txt",
        ))),
        ..ProptestConfig::default()
    }
}

/// A linkage with `O2` at the origin and `O4` on the +x axis (the textbook frame).
fn ground_on_x(r1: f64, r2: f64, r3: f64, r4: f64, assembly: Assembly) -> FourBar {
    FourBar::new(
        Point2::origin(),
        Point2::new(r1, 0.0),
        r2,
        r3,
        r4,
        CouplerPoint {
            p: 0.4 * r3,
            q: 0.2 * r3,
        },
        assembly,
    )
    .expect("valid test linkage")
}

/// Angle difference reduced to `(-pi, pi]`, so that angles compare modulo whole turns.
fn diff(a: f64, b: f64) -> f64 {
    wrap_pi(a - b)
}

/// Crank angles from the ground line `phi` where the linkage assembles, for a fraction
/// `u` in `(0, 1)` of its range: anywhere for a full turn, inside an arc otherwise.
fn phi_in_range(range: &InputRange, u: f64, which: usize) -> Option<f64> {
    match range {
        InputRange::FullTurn => Some(u * TAU),
        InputRange::Arcs(arcs) => {
            let a = arcs[which % arcs.len()];
            Some(a.start.phi + u * a.width())
        }
        InputRange::None => None,
    }
}

prop_compose! {
    /// A random linkage anywhere in the plane: lengths 1..10 times a scale 0.01..100,
    /// random pivots and ground direction, random coupler point and assembly.
    fn any_linkage()(
        scale in prop_oneof![Just(1.0), 0.01f64..100.0],
        r1 in 1.0f64..10.0,
        r2 in 1.0f64..10.0,
        r3 in 1.0f64..10.0,
        r4 in 1.0f64..10.0,
        ox in -50.0f64..50.0,
        oy in -50.0f64..50.0,
        t1 in -PI..PI,
        p in -10.0f64..10.0,
        q in -10.0f64..10.0,
        crossed in any::<bool>(),
    ) -> FourBar {
        let o2 = Point2::new(ox, oy) * scale;
        let o4 = o2 + r1 * scale * Vector2::new(t1.cos(), t1.sin());
        FourBar::new(
            o2,
            o4,
            r2 * scale,
            r3 * scale,
            r4 * scale,
            CouplerPoint { p: p * scale, q: q * scale },
            if crossed { Assembly::Crossed } else { Assembly::Open },
        )
        .expect("positive lengths and distinct pivots")
    }
}

prop_compose! {
    /// A random linkage with a crank angle where it assembles, away from its toggles
    /// (`|sin mu| >= 0.2`, mu the transmission angle), with the closed-form pose there.
    fn posed_linkage()(l in any_linkage(), u in 0.01f64..0.99, which in 0usize..2)
        -> (FourBar, f64)
    {
        let phi = phi_in_range(&InputRange::of(&l), u, which).unwrap_or(0.0);
        (l, phi + l.ground_angle())
    }
}

/// Whether the loop closes at `p` to the default tolerance, `1e-12` of the linkage size,
/// allowing for the rounding of evaluating the residual in the design's absolute
/// coordinates (a few ulps of the largest coordinate).
fn loop_closes(l: &FourBar, p: &Pose) -> bool {
    let reach = l.size() + l.input_pivot().coords.norm() + l.output_pivot().coords.norm();
    loop_residual(l, p).norm() <= 1e-12 * l.size() + 16.0 * f64::EPSILON * reach
}

/// The closed-form pose at `theta2` if it is well away from a toggle.
fn well_posed(l: &FourBar, theta2: f64) -> Option<Pose> {
    let p = closed_form(l, theta2, l.assembly())?;
    ((p.theta3 - p.theta4).sin().abs() >= 0.2).then_some(p)
}

// ---------------------------------------------------------------------------------------
// A published worked example.

// Norton, "Design of Machinery" (McGraw-Hill), Example 4-1, position analysis of a
// four-bar by the closed-form (vector loop) solution: link 1 (ground) = 6, link 2 = 2,
// link 3 = 7, link 4 = 9, theta2 = 30 deg; open: theta3 = 88.84 deg, theta4 = 117.29 deg;
// crossed: theta3 = -115.21 deg, theta4 = -143.66 deg. From memory; the book rounds to
// 0.01 deg, hence the tolerance.
#[test]
fn norton_example_4_1_positions() {
    let cases: [(Assembly, f64, f64); 2] = [
        (Assembly::Open, 88.84, 117.29),
        (Assembly::Crossed, -115.21, -143.66),
    ];
    for (asm, t3, t4) in cases {
        let l = ground_on_x(6.0, 2.0, 7.0, 9.0, asm);
        let t2 = 30f64.to_radians();
        let cf = closed_form(&l, t2, asm).expect("assembles at 30 deg");
        // Newton-Raphson from a guess 10 degrees off in both angles.
        let guess = Pose {
            theta2: t2,
            theta3: t3.to_radians() + 0.17,
            theta4: t4.to_radians() - 0.17,
        };
        let nr = solve_position(&l, t2, &guess, &NewtonOptions::default());
        assert_eq!(nr.status, PositionStatus::Converged);
        for p in [cf, nr.pose] {
            assert_relative_eq!(
                diff(p.theta3, t3.to_radians()).to_degrees(),
                0.0,
                epsilon = 0.006
            );
            assert_relative_eq!(
                diff(p.theta4, t4.to_radians()).to_degrees(),
                0.0,
                epsilon = 0.006
            );
            assert_eq!(p.assembly(), asm);
        }
        // The link proportions make it a crank-rocker: s + l = 2 + 9 < p + q = 6 + 7, and
        // the shortest link is the input (Grashof's criterion).
        assert_eq!(l.grashof(), GrashofClass::CrankRocker);
    }
}

// ---------------------------------------------------------------------------------------
// Grashof classes.

// Grashof's criterion as stated in the textbooks (e.g. Norton, "Design of Machinery",
// section 2.12; Uicker, Pennock and Shigley, "Theory of Machines and Mechanisms", section
// 1.10; from memory): with s + l < p + q the shortest link turns fully relative to the
// others; as ground it gives a double-crank, as input a crank-rocker, as output a
// rocker-crank, as coupler a double-rocker; s + l > p + q gives a triple-rocker and
// s + l = p + q a change point.
#[test]
fn grashof_classes_of_textbook_cases() {
    // One Grashof chain 2, 6, 7, 9 (s + l = 11 < p + q = 13) in its four inversions, the
    // non-Grashof chain 5, 6, 7, 13 (s + l = 18 > p + q = 13) and the parallelogram
    // 4, 2, 4, 2 (s + l = p + q).
    let class = |r1, r2, r3, r4| ground_on_x(r1, r2, r3, r4, Assembly::Open).grashof();
    assert_eq!(class(2.0, 6.0, 7.0, 9.0), GrashofClass::DoubleCrank);
    assert_eq!(class(6.0, 2.0, 7.0, 9.0), GrashofClass::CrankRocker);
    assert_eq!(class(6.0, 9.0, 7.0, 2.0), GrashofClass::RockerCrank);
    assert_eq!(class(6.0, 7.0, 2.0, 9.0), GrashofClass::DoubleRocker);
    assert_eq!(class(5.0, 6.0, 7.0, 13.0), GrashofClass::TripleRocker);
    assert_eq!(class(4.0, 2.0, 4.0, 2.0), GrashofClass::ChangePoint);
}

proptest! {
    #![proptest_config(config(256))]

    // Grashof's criterion (reference above) against the independent closed-form range of
    // motion: the input turns fully exactly for double-cranks and crank-rockers, and the
    // output exactly for double-cranks and rocker-cranks (the range of the linkage driven
    // from the other side, O4 as input).
    #[test]
    fn grashof_class_predicts_full_rotation(l in any_linkage()) {
        let class = l.grashof();
        prop_assume!(class != GrashofClass::ChangePoint);
        let input_full = InputRange::of(&l) == InputRange::FullTurn;
        prop_assert_eq!(input_full, class.input_turns_fully(), "{:?}", l);
        let reversed = FourBar::new(
            l.output_pivot(),
            l.input_pivot(),
            l.output_link(),
            l.coupler(),
            l.input_link(),
            CouplerPoint::default(),
            Assembly::Open,
        ).unwrap();
        let output_full = InputRange::of(&reversed) == InputRange::FullTurn;
        let expect = matches!(class, GrashofClass::DoubleCrank | GrashofClass::RockerCrank);
        prop_assert_eq!(output_full, expect, "{:?}", l);
    }
}

// ---------------------------------------------------------------------------------------
// Newton-Raphson against the closed form, loop closure and Freudenstein's equation.

proptest! {
    #![proptest_config(config(512))]

    // The closed-form circle intersection is the independent reference: Newton-Raphson
    // from a perturbed guess finds the same pose on the same assembly, and the loop
    // closes to the requested tolerance (relative to the linkage size).
    #[test]
    fn newton_matches_closed_form_and_closes_the_loop(
        (l, t2) in posed_linkage(),
        d3 in -0.08f64..0.08,
        d4 in -0.08f64..0.08,
        flip in any::<bool>(),
    ) {
        let l = if flip { l.with_assembly(l.assembly().flipped()) } else { l };
        let Some(exact) = well_posed(&l, t2) else { return Ok(()) };
        let guess = Pose { theta2: t2, theta3: exact.theta3 + d3, theta4: exact.theta4 + d4 };
        let options = NewtonOptions::default();
        let s = solve_position(&l, t2, &guess, &options);
        prop_assert_eq!(s.status, PositionStatus::Converged);
        prop_assert_eq!(s.pose.assembly(), l.assembly());
        // Angles: residual / (link * |sin mu|) with |sin mu| >= 0.2.
        prop_assert!(diff(s.pose.theta3, exact.theta3).abs() < 1e-10, "{:?} {:?}", s, exact);
        prop_assert!(diff(s.pose.theta4, exact.theta4).abs() < 1e-10, "{:?} {:?}", s, exact);
        prop_assert!(loop_closes(&l, &s.pose), "{:?}", s);
        // The reported residual (or bound) covers the true one.
        let residual = loop_residual(&l, &s.pose).norm();
        prop_assert!(residual <= s.residual + 1e-15 * l.size(), "{} > {}", residual, s.residual);
    }

    // Freudenstein's equation (F. Freudenstein, "Approximate synthesis of four-bar
    // linkages", Trans. ASME 77, 1955, pp. 853-861), with the ground on the x axis:
    // K1 cos t4 - K2 cos t2 + K3 = cos(t2 - t4), K1 = r1/r2, K2 = r1/r4,
    // K3 = (r1^2 + r2^2 - r3^2 + r4^2) / (2 r2 r4). It follows from squaring
    // r3 e(t3) = r1 + r4 e(t4) - r2 e(t2), so it holds on both assemblies.
    #[test]
    fn freudenstein_identity_on_solved_positions(
        r in (1.0f64..10.0, 1.0f64..10.0, 1.0f64..10.0, 1.0f64..10.0),
        u in 0.01f64..0.99,
        which in 0usize..2,
        crossed in any::<bool>(),
    ) {
        let (r1, r2, r3, r4) = r;
        let asm = if crossed { Assembly::Crossed } else { Assembly::Open };
        let l = ground_on_x(r1, r2, r3, r4, asm);
        let Some(phi) = phi_in_range(&InputRange::of(&l), u, which) else { return Ok(()) };
        let p = position_at(&l, phi, &NewtonOptions::default()).expect("inside the range");
        let (k1, k2) = (r1 / r2, r1 / r4);
        let k3 = (r1 * r1 + r2 * r2 - r3 * r3 + r4 * r4) / (2.0 * r2 * r4);
        let lhs = k1 * p.theta4.cos() - k2 * p.theta2.cos() + k3;
        let rhs = (p.theta2 - p.theta4).cos();
        // The residual tolerance 1e-12 of the size, divided by 2 r2 r4, times the size.
        let scale = (r1 + r2 + r3 + r4).powi(2) / (r2 * r4);
        prop_assert!((lhs - rhs).abs() <= 1e-11 * scale, "{} vs {}", lhs, rhs);
    }

    // A grid sweep by continuation lands on the closed-form pose of the design's assembly
    // at every grid angle where the linkage assembles, and nowhere else.
    #[test]
    fn sweep_matches_closed_form_everywhere(l in any_linkage(), step_deg in 0.25f64..40.0) {
        let step = step_deg.to_radians();
        let sw = sweep(&l, step, &SweepOptions::default());
        let mut n = 0;
        for b in &sw.branches {
            for p in &b.poses {
                n += 1;
                let c = closed_form(&l, p.theta2, l.assembly()).expect("assembles");
                // Near a toggle the angles are ill-conditioned: compare joint B instead.
                let gap = (l.joint_b(p.theta4) - l.joint_b(c.theta4)).norm();
                prop_assert!(gap <= 1e-6 * l.size(), "{:?} vs {:?}", p, c);
                prop_assert!(loop_closes(&l, p), "{:?}", p);
            }
        }
        // Every grid angle in [0, 2 pi) where the linkage assembles has its pose.
        let expected = (0..)
            .map(|k| k as f64 * step)
            .take_while(|t| *t < TAU - 1e-9)
            .filter(|t| {
                InputRange::of(&l).contains(wrap_pi(t - l.ground_angle()))
            })
            .count();
        // Grid angles within rounding of a toggle may fall either way.
        prop_assert!((n as i64 - expected as i64).abs() <= 2, "{} poses, {} expected", n, expected);
    }
}

// ---------------------------------------------------------------------------------------
// Velocities and accelerations against finite differences of Newton-Raphson positions.

proptest! {
    #![proptest_config(config(256))]

    // Central differences of solved positions (numerical differentiation as the outside
    // reference). The crank step is scaled by the linkage's own rate K (from the first
    // and second derivatives; derivatives of order n grow roughly like K^n), and the
    // positions are solved to 1e-15 of the size, so that truncation and rounding both stay
    // well below the tolerances, 1e-6 K |w2| and 1e-4 K^2 w2^2.
    #[test]
    fn rates_match_finite_differences((l, t2) in posed_linkage(), w2 in -20.0f64..20.0) {
        let Some(_) = well_posed(&l, t2) else { return Ok(()) };
        let options = NewtonOptions { tolerance: 1e-15, ..NewtonOptions::default() };
        let at = |t: f64| position_at(&l, t, &options);
        let Some(p0) = at(t2) else { return Ok(()) };
        let r = rates(&l, &p0, w2, 0.0).expect("away from toggles");
        let w = w2.abs().max(1e-9);
        let k = 1.0 + r.omega3.abs().max(r.omega4.abs()) / w
            + (r.alpha3.abs().max(r.alpha4.abs()) / (w * w)).sqrt();
        let (h1, h2) = (3e-5 / k, 3e-4 / k);
        let (Some(pp), Some(pm), Some(pp2), Some(pm2)) =
            (at(t2 + h1), at(t2 - h1), at(t2 + h2), at(t2 - h2))
        else {
            return Ok(());
        };
        let d3 = diff(pp.theta3, pm.theta3) / (2.0 * h1) * w2;
        let d4 = diff(pp.theta4, pm.theta4) / (2.0 * h1) * w2;
        let tol_w = 1e-6 * k * w2.abs() + 1e-12;
        prop_assert!((r.omega3 - d3).abs() <= tol_w, "w3 {} vs {}", r.omega3, d3);
        prop_assert!((r.omega4 - d4).abs() <= tol_w, "w4 {} vs {}", r.omega4, d4);
        let dd = |a: f64, b: f64, c: f64| (diff(a, b) - diff(b, c)) / (h2 * h2) * w2 * w2;
        let a3 = dd(pp2.theta3, p0.theta3, pm2.theta3);
        let a4 = dd(pp2.theta4, p0.theta4, pm2.theta4);
        let tol_a = 1e-4 * k * k * w2 * w2 + 1e-9;
        prop_assert!((r.alpha3 - a3).abs() <= tol_a, "a3 {} vs {} k {} w2 {} tol {}", r.alpha3, a3, k, w2, tol_a);
        prop_assert!((r.alpha4 - a4).abs() <= tol_a, "a4 {} vs {}", r.alpha4, a4);
        // The coupler point's velocity and acceleration, on the scale of the linkage.
        let c = |p: &Pose| l.coupler_point_at(p.theta2, p.theta3);
        let reach = l.size() + l.coupler_point().p.abs() + l.coupler_point().q.abs();
        let v = (c(&pp) - c(&pm)) / (2.0 * h1) * w2;
        prop_assert!((r.velocity - v).norm() <= reach * tol_w, "{:?} vs {:?}", r.velocity, v);
        let acc = (c(&pp2) - c(&p0) - (c(&p0) - c(&pm2))) / (h2 * h2) * w2 * w2;
        prop_assert!((r.acceleration - acc).norm() <= reach * tol_a, "{:?} vs {:?}", r.acceleration, acc);
    }
}

// ---------------------------------------------------------------------------------------
// Invariance under a rigid motion of the whole design.

proptest! {
    #![proptest_config(config(256))]

    // Rotating the design by alpha and shifting it moves every coupler point with it: the
    // pose at crank angle theta2 + alpha is the old one turned by alpha (a property of
    // Euclidean geometry, independent of the solver).
    #[test]
    fn positions_follow_a_rigid_motion(
        (l, t2) in posed_linkage(),
        alpha in -PI..PI,
        sx in -100.0f64..100.0,
        sy in -100.0f64..100.0,
    ) {
        let shift = Vector2::new(sx, sy);
        let m = l.transformed(alpha, shift);
        let options = NewtonOptions::default();
        let Some(p) = position_at(&l, t2, &options) else { return Ok(()) };
        let Some(q) = position_at(&m, t2 + alpha, &options) else { return Ok(()) };
        let rot = nalgebra::Rotation2::new(alpha);
        let c = rot * l.coupler_point_at(p.theta2, p.theta3) + shift;
        let cm = m.coupler_point_at(q.theta2, q.theta3);
        let tol = 1e-9 * (l.size() + l.input_pivot().coords.norm() + shift.norm());
        prop_assert!((c - cm).norm() <= tol, "{:?} vs {:?}", c, cm);
        prop_assert!(diff(q.theta4, p.theta4 + alpha).abs() < 1e-6);
    }

    // The whole-motion analysis does not depend on where the design sits either: Grashof
    // class, toggles (from the ground line), output swing, transmission extremes and time
    // ratio agree for the design and a moved copy.
    #[test]
    fn analysis_follows_a_rigid_motion(l in any_linkage(), alpha in -PI..PI, sx in -100.0f64..100.0) {
        let m = l.transformed(alpha, Vector2::new(sx, -0.5 * sx));
        let opts = AnalysisOptions::default();
        let (a, b) = (analyse(&l, &opts), analyse(&m, &opts));
        prop_assert_eq!(a.grashof, b.grashof);
        prop_assert_eq!(a.branches.len(), b.branches.len());
        for (x, y) in a.branches.iter().zip(&b.branches) {
            prop_assert_eq!(x.output_turns_fully, y.output_turns_fully);
            let (sa, sb) = (x.theta4_range.1 - x.theta4_range.0, y.theta4_range.1 - y.theta4_range.0);
            prop_assert!((sa - sb).abs() < 1e-7, "swing {} vs {}", sa, sb);
            prop_assert!(sa < TAU + 1e-9 || x.output_turns_fully);
            if let (Some(tx), Some(ty)) = (x.crank_range, y.crank_range) {
                prop_assert!((tx.0.phi - ty.0.phi).abs() < 1e-9 && (tx.1.phi - ty.1.phi).abs() < 1e-9);
            }
        }
        match (a.time_ratio, b.time_ratio) {
            (Some(x), Some(y)) => prop_assert!((x.ratio() - y.ratio()).abs() < 1e-7),
            (None, None) => {}
            other => prop_assert!(false, "time ratio on one side only: {:?}", other),
        }
        if let (Some(x), Some(y)) = (a.transmission, b.transmission) {
            prop_assert!((x.min.0 - y.min.0).abs() < 1e-9 && (x.max.0 - y.max.0).abs() < 1e-9);
        }
    }
}

// ---------------------------------------------------------------------------------------
// Toggles and linkages that cannot be assembled.

/// Toggle crank angles (from the ground line, in `[0, pi]`) where `|A - O4| = d`, by the
/// law of cosines in triangle O2 A O4: `d^2 = r1^2 + r2^2 - 2 r1 r2 cos(phi)`.
fn toggle_phi(r1: f64, r2: f64, d: f64) -> Option<f64> {
    let c = (r1 * r1 + r2 * r2 - d * d) / (2.0 * r1 * r2);
    (-1.0..=1.0).contains(&c).then(|| c.acos())
}

proptest! {
    #![proptest_config(config(128))]

    // A trace towards a toggle stops there and says so; the toggle is where coupler and
    // output are in line, |A - O4| = r3 + r4 or |r3 - r4| (law of cosines), and the last
    // pose is within the toggle margin of it, on the starting assembly.
    #[test]
    fn trace_stops_at_the_toggle(l in any_linkage(), u in 0.05f64..0.95, which in 0usize..2) {
        let range = InputRange::of(&l);
        let InputRange::Arcs(arcs) = &range else { return Ok(()) };
        let arc = arcs[which % arcs.len()];
        let t1 = l.ground_angle();
        let mut tracer = Tracer::new(&l, SweepOptions::default());
        let Some(start) = tracer.pose_at(t1 + arc.start.phi + u * arc.width(), l.assembly()) else {
            return Ok(());
        };
        prop_assume!((start.theta3 - start.theta4).sin().abs() > 1e-3);
        for (dir, end) in [(1.0, arc.end), (-1.0, arc.start)] {
            match tracer.trace(&start, start.theta2 + dir * 7.0) {
                TraceEnd::Toggle { last, toggle } => {
                    prop_assert_eq!(toggle, end);
                    let [r1, r2, r3, r4] = l.lengths();
                    let d = match toggle.kind {
                        ToggleKind::Extended => r3 + r4,
                        ToggleKind::Folded => (r3 - r4).abs(),
                    };
                    let phi = toggle_phi(r1, r2, d).expect("a toggle exists");
                    prop_assert!((wrap_pi(toggle.phi).abs() - phi).abs() < 1e-9, "{} vs {}", toggle.phi, phi);
                    let reached = last.theta2 - t1;
                    prop_assert!((diff(reached, toggle.phi)).abs() <= 2e-9, "{} vs {}", reached, toggle.phi);
                    prop_assert_eq!(last.assembly(), start.assembly());
                    prop_assert!(loop_closes(&l, &last), "{:?}", last);
                }
                other => prop_assert!(false, "expected a toggle, got {:?}", other),
            }
        }
    }
}

// A triple-rocker (ground 5, input 4, coupler 9, output 6: s + l = 4 + 9 = 13 > p + q =
// 5 + 6 = 11, Grashof's criterion): the input rocks between two folded toggles symmetric
// about the ground line, where |A - O4| = r3 - r4 (law of cosines for the crank angle).
#[test]
fn triple_rocker_range_and_toggles() {
    let (r1, r2, r3, r4) = (5.0, 4.0, 9.0, 6.0);
    let l = ground_on_x(r1, r2, r3, r4, Assembly::Open);
    assert_eq!(l.grashof(), GrashofClass::TripleRocker);
    let InputRange::Arcs(arcs) = InputRange::of(&l) else {
        panic!("a triple-rocker rocks")
    };
    // |A - O4| ranges over [r1 - r2, r1 + r2] = [1, 9] and must stay >= |r3 - r4| = 3: the
    // input swings about phi = pi between the folded toggles at +-acos(...).
    assert_eq!(arcs.len(), 1);
    let phi = toggle_phi(r1, r2, r3 - r4).unwrap();
    assert_relative_eq!(arcs[0].start.phi, phi, epsilon = 1e-12);
    assert_relative_eq!(arcs[0].end.phi, TAU - phi, epsilon = 1e-12);
    assert_eq!(arcs[0].start.kind, ToggleKind::Folded);
    // At the toggle the closed form exists (both assemblies coincide) and just beyond it
    // the linkage cannot be assembled.
    let a = closed_form(&l, phi, Assembly::Open).expect("assembles at the toggle");
    let b = closed_form(&l, phi, Assembly::Crossed).expect("assembles at the toggle");
    assert_relative_eq!(diff(a.theta4, b.theta4), 0.0, epsilon = 1e-6);
    assert!(closed_form(&l, phi - 1e-6, Assembly::Open).is_none());
    let s = solve_position(&l, phi - 1e-6, &a, &NewtonOptions::default());
    assert_eq!(s.status, PositionStatus::NotAssembled);
}

// Near a toggle (1e-7 rad of crank angle from it) Newton-Raphson still converges to the
// closed-form pose, though the two assemblies are only ~sqrt(1e-7) apart there.
#[test]
fn newton_near_toggle_keeps_the_assembly() {
    let (r1, r2, r3, r4) = (5.0, 4.0, 9.0, 6.0);
    for asm in [Assembly::Open, Assembly::Crossed] {
        let l = ground_on_x(r1, r2, r3, r4, asm);
        let phi = toggle_phi(r1, r2, r3 - r4).unwrap() + 1e-7;
        let exact = closed_form(&l, phi, asm).unwrap();
        let mut tracer = Tracer::new(&l, SweepOptions::default());
        let p = tracer.pose_at(phi, asm).unwrap();
        assert_eq!(p.assembly(), asm);
        assert_relative_eq!(diff(p.theta4, exact.theta4), 0.0, epsilon = 1e-9);
        // Trace away from the toggle and back towards it.
        let TraceEnd::Reached(q) = tracer.trace(&p, phi + 1.0) else {
            panic!("inside the arc")
        };
        assert_relative_eq!(
            diff(q.theta4, closed_form(&l, phi + 1.0, asm).unwrap().theta4),
            0.0,
            epsilon = 1e-9
        );
        match tracer.trace(&q, phi - 0.5) {
            TraceEnd::Toggle { last, toggle } => {
                assert_relative_eq!(last.theta2, toggle.phi, epsilon = 2e-9);
                assert_eq!(last.assembly(), asm);
            }
            other => panic!("expected the toggle, got {other:?}"),
        }
    }
}

// A linkage whose coupler and output cannot reach across: r3 + r4 < r1 - r2 at every
// crank angle (triangle inequality), so there is no position at all.
#[test]
fn non_assemblable_linkage() {
    let l = ground_on_x(10.0, 2.0, 3.0, 4.0, Assembly::Open);
    assert_eq!(InputRange::of(&l), InputRange::None);
    for k in 0..36 {
        let t2 = k as f64 * 10f64.to_radians();
        assert!(closed_form(&l, t2, Assembly::Open).is_none());
        let s = solve_position(&l, t2, &Pose::default(), &NewtonOptions::default());
        assert_eq!(s.status, PositionStatus::NotAssembled);
    }
    let sw = sweep(&l, 5f64.to_radians(), &SweepOptions::default());
    assert!(sw.branches.is_empty());
    let a = analyse(&l, &AnalysisOptions::default());
    assert!(a.transmission.is_none() && a.time_ratio.is_none() && a.branches.is_empty());
}
