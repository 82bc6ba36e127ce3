//! Requirements that no four-bar can meet, and scales that no solver can work with, found
//! before any search: a scenario that asks for the impossible is bad input (exit 2), said
//! plainly, rather than a long search that ends with nothing.
//!
//! What is proven impossible here:
//! - a ground link that cannot have a length inside `limits.link_length`, because the places
//!   allowed for the fixed pivots are all closer together than its minimum or all farther
//!   apart than its maximum;
//! - a crank that must turn fully with a worst transmission angle above the best any such
//!   four-bar has within the allowed link-length ratio ([`best_full_turn_transmission`]).
//!
//! (A full-turn crank with `max_length_ratio` 1 and crank angles that span more than a turn
//! are caught where those fields are read, in [`crate::scenario`].)
//!
//! What is refused as a matter of scale: targets so close together, next to their distance
//! from the origin, that floating point cannot tell them apart, and limits a million times
//! larger or smaller than the target set, which almost always means mixed units.

use std::f64::consts::FRAC_PI_2;
use std::path::Path;

use nalgebra::Point2;

use crate::input::{short, InputError};
use crate::scenario::{CrankRequirement, Limits, Region, TaskSpec};

/// Limits more than this factor larger or smaller than the target set are refused as a
/// likely unit mistake.
pub const SCALE_FACTOR: f64 = 1e6;

/// Largest `max / min` of `limits.link_length` accepted: wider ranges are a typing or unit
/// mistake, and their logarithmic sampling would leave the range of floating point.
pub const MAX_LENGTH_RANGE: f64 = 1e9;

/// Targets whose spread is below this fraction of their largest coordinate are refused:
/// double precision leaves too few digits to tell them apart.
pub const MIN_RELATIVE_SPREAD: f64 = 1e-9;

/// The best worst-case transmission quality `min(mu, pi - mu)` (radians) that a four-bar
/// whose input turns fully (Grashof crank-rocker or double-crank) can have over the full turn
/// when its longest link is at most `ratio` times its shortest: `2 atan(ratio) - pi/2`.
///
/// Derivation (in this project's notation; `mu` as in the domain notes). Scale so that the
/// shorter of ground and crank is 1 and the other is `k`, `1 <= k <= ratio`. Over a full
/// turn `|A - O4|` runs from `k - 1` to `k + 1`, and
/// `cos mu = (r3^2 + r4^2 - |A - O4|^2) / (2 r3 r4)` is monotonic in it, so a quality of at
/// least `pi/2 - acos(c)`, i.e. `|cos mu| <= c`, needs
/// `S - (k-1)^2 <= 2 c P` and `(k+1)^2 - S <= 2 c P` with `S = r3^2 + r4^2`, `P = r3 r4`.
/// Their sum gives `P >= k / c`; the first with `S >= 2P` gives
/// `P <= (k-1)^2 / (2 (1 - c))`. Both hold only if `c >= 2k / (k^2 + 1)`, which falls as `k`
/// grows, so the best is `c = 2 ratio / (ratio^2 + 1) = sin(2 atan(ratio))`, reached by
/// `r3 = r4 = sqrt((ratio^2 + 1) / 2)`, and the quality is `2 atan(ratio) - pi/2`.
/// (The balanced choice `r3^2 + r4^2 = r1^2 + r2^2` is the classical condition for a
/// transmission angle that deviates equally either side of 90 degrees.)
pub fn best_full_turn_transmission(ratio: f64) -> f64 {
    (2.0 * ratio.max(1.0).atan() - FRAC_PI_2).max(0.0)
}

/// Where a fixed pivot may be.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Place {
    Point(Point2<f64>),
    Box(Region),
    Anywhere,
}

impl Place {
    fn of(point: Option<Point2<f64>>, region: Option<Region>) -> Self {
        match (point, region) {
            (Some(p), _) => Place::Point(p),
            (None, Some(r)) => Place::Box(r),
            (None, None) => Place::Anywhere,
        }
    }

    /// `(min x, max x, min y, max y)`, or `None` for anywhere.
    fn bounds(self) -> Option<(f64, f64, f64, f64)> {
        match self {
            Place::Point(p) => Some((p.x, p.x, p.y, p.y)),
            Place::Box((lo, hi)) => Some((lo.x, hi.x, lo.y, hi.y)),
            Place::Anywhere => None,
        }
    }
}

/// Smallest and largest distance between a point of `a` and a point of `b` (axis-aligned
/// boxes, points being degenerate boxes); `None` when either may be anywhere.
fn distance_range(a: Place, b: Place) -> Option<(f64, f64)> {
    let (ax0, ax1, ay0, ay1) = a.bounds()?;
    let (bx0, bx1, by0, by1) = b.bounds()?;
    let gap = |a0: f64, a1: f64, b0: f64, b1: f64| (a0 - b1).max(b0 - a1).max(0.0);
    let reach = |a0: f64, a1: f64, b0: f64, b1: f64| (a1 - b0).abs().max((b1 - a0).abs());
    let min = gap(ax0, ax1, bx0, bx1).hypot(gap(ay0, ay1, by0, by1));
    let max = reach(ax0, ax1, bx0, bx1).hypot(reach(ay0, ay1, by0, by1));
    Some((min, max))
}

fn invalid(path: &Path, field: &str, message: String) -> InputError {
    InputError::Invalid {
        path: path.to_path_buf(),
        field: field.into(),
        message,
    }
}

/// The points that give a task its size (path targets, motion pose origins), with their
/// field name; none for function generation, whose linkage size is free.
fn target_points(task: &TaskSpec) -> Option<(Vec<Point2<f64>>, &'static str)> {
    match task {
        TaskSpec::Path(p) => Some((p.points.clone(), "task.path.points")),
        TaskSpec::Motion(m) => Some((m.poses.iter().map(|p| p.0).collect(), "task.motion.poses")),
        TaskSpec::Function(_) => None,
    }
}

fn check_scale(path: &Path, task: &TaskSpec, limits: &Limits) -> Result<(), InputError> {
    if let Some((a, b)) = limits.link_length {
        if b > MAX_LENGTH_RANGE * a {
            return Err(invalid(
                path,
                "limits.link_length",
                format!(
                    "[{}, {}]: max is {} times min: expected at most {MAX_LENGTH_RANGE:e}; \
                     check the units",
                    short(a),
                    short(b),
                    short(b / a)
                ),
            ));
        }
    }
    let Some((points, field)) = target_points(task) else {
        return Ok(());
    };
    let Some((lo, hi)) = crate::linkage::bounding_box(points.iter().copied()) else {
        return Ok(());
    };
    let largest = points
        .iter()
        .fold(0.0f64, |m, p| m.max(p.x.abs()).max(p.y.abs()));
    let d = hi - lo;
    let size = d.x.max(d.y);
    if size <= 0.0 {
        // All at one place (a motion task of pure rotation): nothing to compare with.
        return Ok(());
    }
    if size < MIN_RELATIVE_SPREAD * largest {
        return Err(invalid(
            path,
            field,
            format!(
                "the targets span only {} at a distance of {} from the origin: \
                 too little to tell them apart in floating point; move the origin near the \
                 targets or check the units",
                short(size),
                short(largest)
            ),
        ));
    }
    if let Some((a, b)) = limits.link_length {
        if b * SCALE_FACTOR < size {
            return Err(invalid(
                path,
                "limits.link_length",
                format!(
                    "[{a}, {b}]: the longest link allowed is less than 1/{SCALE_FACTOR:e} of \
                     the target set's size ({}); check the units",
                    short(size)
                ),
            ));
        }
        if a > SCALE_FACTOR * size {
            return Err(invalid(
                path,
                "limits.link_length",
                format!(
                    "[{a}, {b}]: the shortest link allowed is more than {SCALE_FACTOR:e} times \
                     the target set's size ({}); check the units",
                    short(size)
                ),
            ));
        }
    }
    let centre = nalgebra::center(&lo, &hi);
    let far = |p: Point2<f64>| (p - centre).norm() > SCALE_FACTOR * size;
    let places = [
        ("limits.input_pivot", limits.input_pivot.map(|p| (p, p))),
        ("limits.output_pivot", limits.output_pivot.map(|p| (p, p))),
        ("limits.input_pivot_region", limits.input_region),
        ("limits.output_pivot_region", limits.output_region),
    ];
    for (name, place) in places {
        if let Some((a, b)) = place {
            if far(a) && far(b) {
                return Err(invalid(
                    path,
                    name,
                    format!(
                        "lies more than {SCALE_FACTOR:e} times the target set's size ({}) \
                         away from the targets; check the units",
                        short(size)
                    ),
                ));
            }
        }
    }
    Ok(())
}

fn check_ground(path: &Path, limits: &Limits) -> Result<(), InputError> {
    let Some((lo, hi)) = limits.link_length else {
        return Ok(());
    };
    let o2 = Place::of(limits.input_pivot, limits.input_region);
    let o4 = Place::of(limits.output_pivot, limits.output_region);
    let Some((near, far)) = distance_range(o2, o4) else {
        return Ok(());
    };
    let slack = 1e-9 * hi;
    let fixed = matches!((o2, o4), (Place::Point(_), Place::Point(_)));
    let between = if fixed {
        format!("the fixed pivots are {} apart", short(near))
    } else {
        format!(
            "the fixed pivots can be from {} to {} apart where the limits allow them",
            short(near),
            short(far)
        )
    };
    let beyond = if near > hi + slack {
        "more than the longest"
    } else if far < lo - slack {
        "less than the shortest"
    } else {
        return Ok(());
    };
    Err(invalid(
        path,
        "limits.link_length",
        format!(
            "[{}, {}] cannot hold the ground link: {between}, {beyond} link allowed; no \
             four-bar can meet this",
            short(lo),
            short(hi)
        ),
    ))
}

fn check_transmission(path: &Path, limits: &Limits) -> Result<(), InputError> {
    let (Some(mt), CrankRequirement::FullTurn) = (limits.min_transmission, limits.crank) else {
        return Ok(());
    };
    let by_lengths = limits.link_length.map(|(a, b)| b / a);
    let (ratio, source) = match (limits.max_length_ratio, by_lengths) {
        (Some(r), Some(l)) if l < r => (l, "limits.link_length"),
        (Some(r), _) => (r, "limits.max_length_ratio"),
        (None, Some(l)) => (l, "limits.link_length"),
        (None, None) => return Ok(()),
    };
    let best = best_full_turn_transmission(ratio);
    // The numbers as the user gave them, without the round trip's float noise.
    let r = short(ratio);
    if mt > best + 1e-9 {
        return Err(invalid(
            path,
            "limits.min_transmission",
            format!(
                "{} deg with crank: full-turn and links within a ratio of {r} ({source}): \
                 no four-bar can meet this; a crank that turns fully with links within that \
                 ratio has a worst transmission angle of at most 2 atan({r}) - 90 = {:.3} \
                 deg. Lower min_transmission, allow a larger ratio, or set crank: any",
                short(mt.to_degrees()),
                best.to_degrees()
            ),
        ));
    }
    Ok(())
}

/// Checks a scenario's task and limits for requirements no four-bar can meet and for scales
/// no solver can work with (see the module docs). `path` names the file in messages.
///
/// # Errors
/// [`InputError::Invalid`] naming the field, the values and why nothing can meet them.
pub fn check(path: &Path, task: &TaskSpec, limits: &Limits) -> Result<(), InputError> {
    check_scale(path, task, limits)?;
    check_ground(path, limits)?;
    check_transmission(path, limits)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::linkage::{Assembly, FourBar, GrashofClass};
    use crate::task::check::worst_transmission;
    use approx::assert_relative_eq;
    use proptest::prelude::*;

    fn bar(r1: f64, r2: f64, r3: f64, r4: f64) -> Option<FourBar> {
        FourBar::on_x_axis([r1, r2, r3, r4], Assembly::Open).ok()
    }

    // The bound is reached: crank 1, ground R, coupler = output = sqrt((R^2 + 1) / 2) has a
    // worst transmission quality of exactly 2 atan(R) - 90 deg over the full turn (computed
    // here by the crate's transmission angle, an independent route from the bound's formula).
    #[test]
    fn bound_is_reached_by_the_balanced_crank_rocker() {
        for r in [1.5, 2.0, 3.0, 8.0] {
            let l = ((r * r + 1.0) / 2.0f64).sqrt();
            let link = bar(r, 1.0, l, l).unwrap();
            assert_eq!(link.grashof(), GrashofClass::CrankRocker);
            let worst = worst_transmission(&link, 0.0, 1.0, true);
            assert_relative_eq!(worst, best_full_turn_transmission(r), epsilon = 1e-12);
        }
        // R = 2: 2 atan 2 - 90 deg = 36.8699 deg (the 3-4-5 triangle's angle).
        assert_relative_eq!(
            best_full_turn_transmission(2.0).to_degrees(),
            36.869_897_645_844_02,
            epsilon = 1e-9
        );
    }

    proptest! {
        // No four-bar whose input turns fully beats the bound for its own length ratio.
        #[test]
        fn no_full_turn_linkage_beats_the_bound(
            r1 in 0.1f64..10.0, r2 in 0.1f64..10.0, r3 in 0.1f64..10.0, r4 in 0.1f64..10.0
        ) {
            let link = bar(r1, r2, r3, r4).unwrap();
            prop_assume!(matches!(
                link.grashof(),
                GrashofClass::CrankRocker | GrashofClass::DoubleCrank
            ));
            let worst = worst_transmission(&link, 0.0, 1.0, true);
            prop_assert!(worst <= best_full_turn_transmission(link.length_ratio()) + 1e-9);
        }
    }

    #[test]
    fn distance_between_places() {
        let p = |x, y| Point2::new(x, y);
        let (near, far) = distance_range(
            Place::Point(p(0.0, 0.0)),
            Place::Box((p(3.0, 4.0), p(6.0, 8.0))),
        )
        .unwrap();
        assert_relative_eq!(near, 5.0, epsilon = 1e-12);
        assert_relative_eq!(far, 10.0, epsilon = 1e-12);
        assert!(distance_range(Place::Anywhere, Place::Point(p(0.0, 0.0))).is_none());
    }
}
