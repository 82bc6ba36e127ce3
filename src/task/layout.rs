//! The linkage part of a task's variables: fixed pivots (free, fixed, or along a fixed ground
//! direction), link lengths and coupler point, with their bounds, the penalty residuals that
//! steer refinement towards the limits, and the closed-form position used inside residuals.

use std::f64::consts::TAU;

use nalgebra::{Point2, Vector2};
use rand::Rng;
use rand_chacha::ChaCha8Rng;

use super::Frame;
use crate::linkage::{perp, unit, Assembly, CouplerPoint, FourBar};
use crate::scenario::{CrankRequirement, Limits};

/// Weight of penalty residuals relative to target errors (internal units).
pub const PENALTY_WEIGHT: f64 = 10.0;
/// Margin (internal units) kept from the Grashof and change-point boundaries.
pub const GRASHOF_MARGIN: f64 = 1e-3;
/// Weight of the limit penalties (stiff, so that an optimum on a limit violates it only by
/// about `gradient / LIMIT_WEIGHT^2`).
pub const LIMIT_WEIGHT: f64 = 1e3;
/// How far inside a limit its penalty starts (internal units).
pub const LIMIT_MARGIN: f64 = 1e-7;

/// How the fixed pivots are parameterised. The ground length `r1` is a variable with the
/// link-length bounds wherever it is free, as in the usual published formulation
/// (input pivot, ground length and ground angle).
#[derive(Debug, Clone, Copy, PartialEq)]
enum Ground {
    /// `O2x, O2y, r1, theta1` free.
    Free,
    /// `O2` fixed; `r1, theta1` free.
    InputFixed(Point2<f64>),
    /// `O4` fixed; `r1, theta1` free (`O2 = O4 - r1 e(theta1)`).
    OutputFixed(Point2<f64>),
    /// Both fixed.
    BothFixed(Point2<f64>, Point2<f64>),
    /// Ground direction fixed; `O2x, O2y, r1` free.
    AngleFree(Vector2<f64>),
    /// Ground direction and `O2` fixed; `r1` free.
    AngleInput(Point2<f64>, Vector2<f64>),
    /// Ground direction and `O4` fixed; `r1` free.
    AngleOutput(Point2<f64>, Vector2<f64>),
}

/// Geometry of a linkage in internal units, cheap to evaluate inside residuals.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Geometry {
    /// Input pivot.
    pub o2: Point2<f64>,
    /// Output pivot.
    pub o4: Point2<f64>,
    /// Ground angle `theta1`.
    pub theta1: f64,
    /// Ground length.
    pub r1: f64,
    /// Crank.
    pub r2: f64,
    /// Coupler.
    pub r3: f64,
    /// Output link.
    pub r4: f64,
    /// Coupler point along the coupler.
    pub p: f64,
    /// Coupler point to the left.
    pub q: f64,
}

/// A position from the clamped closed form: exact where the linkage assembles; where it does
/// not, `B` is put on the line `A -> O4` and `violation` says by how much the circles miss.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SoftPosition {
    /// Crank joint.
    pub a: Point2<f64>,
    /// Unit vector along the coupler `A -> B`.
    pub e3: Vector2<f64>,
    /// Output joint.
    pub b: Point2<f64>,
    /// `max(0, |A - O4| - (r3 + r4), |r3 - r4| - |A - O4|)`.
    pub violation: f64,
}

impl Geometry {
    /// Position at crank angle `phi` from the ground line, for `assembly` (see [`SoftPosition`]).
    #[inline]
    pub fn soft_position(&self, phi: f64, assembly: Assembly) -> SoftPosition {
        let a = self.o2 + self.r2 * unit(self.theta1 + phi);
        let v = self.o4 - a;
        let d2 = v.norm_squared();
        let d = d2.sqrt().max(1e-300);
        let u = v / d;
        let (r3, r4) = (self.r3, self.r4);
        let along = (r3 * r3 - r4 * r4 + d2) / (2.0 * d);
        let h2 = r3 * r3 - along * along;
        let violation = (d - (r3 + r4)).max((r3 - r4).abs() - d).max(0.0);
        let ab = if h2 > 0.0 {
            along * u + assembly.sign() * h2.sqrt() * perp(u)
        } else if along >= 0.0 {
            r3 * u
        } else {
            -r3 * u
        };
        let e3 = ab / r3;
        let b = a + ab;
        SoftPosition {
            a,
            e3,
            b,
            violation,
        }
    }

    /// Coupler point of a position.
    #[inline]
    pub fn coupler_point(&self, s: &SoftPosition) -> Point2<f64> {
        s.a + self.p * s.e3 + self.q * perp(s.e3)
    }

    /// The validated linkage, or `None` when a length is not positive.
    pub fn linkage(&self, assembly: Assembly) -> Option<FourBar> {
        FourBar::new(
            self.o2,
            self.o4,
            self.r2,
            self.r3,
            self.r4,
            CouplerPoint {
                p: self.p,
                q: self.q,
            },
            assembly,
        )
        .ok()
    }
}

/// Variables, bounds and penalties of the linkage part of a task.
#[derive(Debug, Clone, PartialEq)]
pub struct Layout {
    ground: Ground,
    /// Where refinement may go, and where the free pivots are held by the region penalty
    /// (internal units): the limits, or boxes around the targets where there are none.
    bounded: SearchBox,
    /// Where random starts are drawn: the same as `bounded`, except that where the user gave
    /// no limit an opened layout ([`Layout::opened`]) bounds the refinement far wider than it
    /// draws its starts.
    search: SearchBox,
    /// Whether the output pivot has a region of its own (given, or both pivots').
    output_region_given: bool,
    max_ratio: Option<f64>,
    min_transmission: Option<f64>,
    full_turn: bool,
    /// Whether the coupler point is part of the variables (motion tasks may fix it).
    with_coupler_point: bool,
}

/// Default link length range of the starts, in multiples of the target set's size.
pub const DEFAULT_LENGTH_RANGE: (f64, f64) = (0.05, 5.0);
/// Default pivot region half-width of the starts around the targets' centre, in multiples of
/// their size.
pub const DEFAULT_REGION_HALF_WIDTH: f64 = 3.0;
/// How many times wider than the starts' defaults an opened layout lets refinement go where
/// the user set no limit: far enough that the defaults do not decide the design, near enough
/// to keep links of a sane size.
pub const OPEN_FACTOR: f64 = 10.0;

/// Lengths, pivot regions and coupler-point bound of a box of variables.
#[derive(Debug, Clone, Copy, PartialEq)]
struct SearchBox {
    length: (f64, f64),
    region: (Point2<f64>, Point2<f64>),
    region_out: (Point2<f64>, Point2<f64>),
    coupler_bound: f64,
}

impl SearchBox {
    /// The box for `limits` with `length` and `half` (region half-width) standing in for the
    /// link-length limit and pivot regions the user did not give.
    fn new(
        limits: &Limits,
        frame: &Frame,
        default_length: (f64, f64),
        half: f64,
        o2: Option<Point2<f64>>,
        o4: Option<Point2<f64>>,
    ) -> Self {
        let s = frame.scale;
        let length = limits
            .link_length
            .map_or(default_length, |(a, b)| (a / s, b / s));
        let default = (Point2::new(-half, -half), Point2::new(half, half));
        let internal = |r: Option<(Point2<f64>, Point2<f64>)>| {
            r.map_or(default, |(lo, hi)| {
                (frame.to_internal(lo), frame.to_internal(hi))
            })
        };
        // Without a region of its own, a free pivot next to a fixed one is searched within a
        // ground link's reach of the fixed one (not in the box around the targets, which a
        // fixed drive shaft may lie far from).
        let reach = |p: Point2<f64>| {
            let w = Vector2::new(length.1, length.1);
            (p - w, p + w)
        };
        let region = match (limits.input_region, o4) {
            (None, Some(b)) => reach(b),
            (r, _) => internal(r),
        };
        // Without a limit of its own, the output pivot is only kept off to infinity.
        let region_out = match (limits.output_region, limits.input_region) {
            (Some(r), _) => internal(Some(r)),
            (None, _) if o2.is_some() => reach(o2.expect("checked")),
            (None, Some(_)) => {
                let w = 2.0 * length.1;
                (region.0 - Vector2::new(w, w), region.1 + Vector2::new(w, w))
            }
            (None, None) => default,
        };
        SearchBox {
            length,
            region,
            region_out,
            coupler_bound: length.1,
        }
    }
}

impl Layout {
    /// The layout for `limits` in the internal units of `frame`. `with_coupler_point`: whether
    /// `p, q` are variables (otherwise they are zero).
    pub fn new(limits: &Limits, frame: &Frame, with_coupler_point: bool) -> Self {
        let o2 = limits.input_pivot.map(|p| frame.to_internal(p));
        let o4 = limits.output_pivot.map(|p| frame.to_internal(p));
        let search = SearchBox::new(
            limits,
            frame,
            DEFAULT_LENGTH_RANGE,
            DEFAULT_REGION_HALF_WIDTH,
            o2,
            o4,
        );
        let ground = match (o2, o4, limits.ground_angle.map(unit)) {
            (Some(a), Some(b), _) => Ground::BothFixed(a, b),
            (Some(a), None, None) => Ground::InputFixed(a),
            (None, Some(b), None) => Ground::OutputFixed(b),
            (None, None, None) => Ground::Free,
            (None, None, Some(e)) => Ground::AngleFree(e),
            (Some(a), None, Some(e)) => Ground::AngleInput(a, e),
            (None, Some(b), Some(e)) => Ground::AngleOutput(b, e),
        };
        Layout {
            ground,
            bounded: search,
            search,
            output_region_given: limits.output_region.is_some(),
            max_ratio: limits.max_length_ratio,
            min_transmission: limits.min_transmission,
            full_turn: limits.crank == CrankRequirement::FullTurn,
            with_coupler_point,
        }
    }

    /// This layout with the refinement's bounds opened [`OPEN_FACTOR`] times wider than the
    /// starts' box where `limits` set no link-length limit or pivot region (the starts are
    /// still drawn from the usual box).
    pub fn opened(mut self, limits: &Limits, frame: &Frame) -> Self {
        let o2 = limits.input_pivot.map(|p| frame.to_internal(p));
        let o4 = limits.output_pivot.map(|p| frame.to_internal(p));
        let wide = SearchBox::new(
            limits,
            frame,
            (DEFAULT_LENGTH_RANGE.0, DEFAULT_LENGTH_RANGE.1 * OPEN_FACTOR),
            DEFAULT_REGION_HALF_WIDTH * OPEN_FACTOR,
            o2,
            o4,
        );
        self.bounded = wide;
        self
    }

    /// The box random starts are drawn from, as bounds of the layout's variables.
    pub fn search_bounds(&self) -> (Vec<f64>, Vec<f64>) {
        self.bounds_of(&self.search)
    }

    fn ground_dim(&self) -> usize {
        match self.ground {
            Ground::Free => 4,
            Ground::AngleFree(_) => 3,
            Ground::InputFixed(_) | Ground::OutputFixed(_) => 2,
            Ground::BothFixed(..) => 0,
            Ground::AngleInput(..) | Ground::AngleOutput(..) => 1,
        }
    }

    /// Number of variables: ground part, `r2, r3, r4`, and `p, q` when included.
    pub fn dim(&self) -> usize {
        self.ground_dim() + 3 + if self.with_coupler_point { 2 } else { 0 }
    }

    /// Number of penalty residuals written by [`Layout::penalties`].
    pub const N_PENALTIES: usize = 6;

    /// Bounds of the layout's variables.
    pub fn bounds(&self) -> (Vec<f64>, Vec<f64>) {
        self.bounds_of(&self.bounded)
    }

    fn bounds_of(&self, sb: &SearchBox) -> (Vec<f64>, Vec<f64>) {
        let (lo, hi) = sb.region;
        let (l0, l1) = sb.length;
        let mut a = Vec::with_capacity(self.dim());
        let mut b = Vec::with_capacity(self.dim());
        let (pivot, r1, angle) = match self.ground {
            Ground::Free => (true, true, true),
            Ground::InputFixed(_) | Ground::OutputFixed(_) => (false, true, true),
            Ground::BothFixed(..) => (false, false, false),
            Ground::AngleFree(_) => (true, true, false),
            Ground::AngleInput(..) | Ground::AngleOutput(..) => (false, true, false),
        };
        if pivot {
            a.extend([lo.x, lo.y]);
            b.extend([hi.x, hi.y]);
        }
        if r1 {
            a.push(l0);
            b.push(l1);
        }
        if angle {
            // Wider than one turn so that no start sits against an angle bound.
            a.push(-std::f64::consts::PI);
            b.push(3.0 * std::f64::consts::PI);
        }
        for _ in 0..3 {
            a.push(l0);
            b.push(l1);
        }
        if self.with_coupler_point {
            for _ in 0..2 {
                a.push(-sb.coupler_bound);
                b.push(sb.coupler_bound);
            }
        }
        (a, b)
    }

    /// Geometry of the variables `x` (the layout's part, at the start of `x`).
    #[inline]
    pub fn geometry(&self, x: &[f64]) -> Geometry {
        let (o2, o4, k) = match self.ground {
            Ground::Free => {
                let a = Point2::new(x[0], x[1]);
                (a, a + x[2] * unit(x[3]), 4)
            }
            Ground::InputFixed(a) => (a, a + x[0] * unit(x[1]), 2),
            Ground::OutputFixed(b) => (b - x[0] * unit(x[1]), b, 2),
            Ground::BothFixed(a, b) => (a, b, 0),
            Ground::AngleFree(e) => {
                let a = Point2::new(x[0], x[1]);
                (a, a + x[2] * e, 3)
            }
            Ground::AngleInput(a, e) => (a, a + x[0] * e, 1),
            Ground::AngleOutput(b, e) => (b - x[0] * e, b, 1),
        };
        let g = o4 - o2;
        let (p, q) = if self.with_coupler_point {
            (x[k + 3], x[k + 4])
        } else {
            (0.0, 0.0)
        };
        Geometry {
            o2,
            o4,
            theta1: g.y.atan2(g.x),
            r1: g.norm(),
            r2: x[k],
            r3: x[k + 1],
            r4: x[k + 2],
            p,
            q,
        }
    }

    /// The variables of an internal-units linkage, when the fixed pivots are free (the
    /// parameterisation is then `O2x, O2y, r1, theta1, r2, r3, r4[, p, q]`); `None` otherwise.
    pub fn encode(&self, l: &FourBar) -> Option<Vec<f64>> {
        if self.ground != Ground::Free {
            return None;
        }
        let o2 = l.input_pivot();
        let cp = l.coupler_point();
        let mut x = vec![
            o2.x,
            o2.y,
            l.ground(),
            l.ground_angle(),
            l.input_link(),
            l.coupler(),
            l.output_link(),
        ];
        if self.with_coupler_point {
            x.extend([cp.p, cp.q]);
        }
        Some(x)
    }

    /// A random point in the layout's box. Lengths are drawn uniformly or, every other time,
    /// log-uniformly (so that a wide length range still yields links comparable to the target
    /// set); the coupler point likewise within the box or within reach of the coupler. When a
    /// full-turn crank is required the lengths are redrawn until the input can turn fully
    /// (the crank drawn from the short end of the range).
    pub fn sample(&self, rng: &mut ChaCha8Rng) -> Vec<f64> {
        let (lo, hi) = self.search_bounds();
        let mut x: Vec<f64> = lo
            .iter()
            .zip(&hi)
            .map(|(a, b)| rng.random_range(*a..=*b))
            .collect();
        let k = self.ground_dim();
        let log_uniform = rng.random_bool(0.5);
        let (l0, l1) = self.search.length;
        let draw = |rng: &mut ChaCha8Rng, short: bool| -> f64 {
            let top = if short { l0 + 0.3 * (l1 - l0) } else { l1 };
            if log_uniform {
                (rng.random_range(l0.ln()..=top.ln())).exp()
            } else {
                rng.random_range(l0..=top)
            }
        };
        let r1_index = match self.ground {
            Ground::Free => Some(2),
            Ground::AngleFree(_) => Some(2),
            Ground::InputFixed(_)
            | Ground::OutputFixed(_)
            | Ground::AngleInput(..)
            | Ground::AngleOutput(..) => Some(0),
            Ground::BothFixed(..) => None,
        };
        // With a region for the output pivot, half of the starts with free pivots draw it
        // there too (the ground link then joins the two draws), so that a small output region
        // is not left to the chance of a random ground length and direction.
        let both_in_boxes =
            self.ground == Ground::Free && self.output_region_given && rng.random_bool(0.5);
        for attempt in 0..50 {
            if let Some(i) = r1_index {
                x[i] = draw(rng, false);
            }
            if both_in_boxes {
                let (lo, hi) = self.search.region_out;
                let o4 = Point2::new(rng.random_range(lo.x..=hi.x), rng.random_range(lo.y..=hi.y));
                let d = o4 - Point2::new(x[0], x[1]);
                let r1 = d.norm();
                if r1 >= l0 && r1 <= l1 {
                    x[2] = r1;
                    x[3] = d.y.atan2(d.x);
                }
            }
            x[k] = draw(rng, self.full_turn && attempt > 0);
            x[k + 1] = draw(rng, false);
            x[k + 2] = draw(rng, false);
            let g = self.geometry(&x);
            if !self.full_turn
                || (g.r1 + g.r2 < g.r3 + g.r4 && (g.r1 - g.r2).abs() > (g.r3 - g.r4).abs())
            {
                break;
            }
        }
        if self.with_coupler_point && log_uniform {
            let reach = x[k + 1].min(self.search.coupler_bound);
            x[k + 3] = rng.random_range(-reach..=reach);
            x[k + 4] = rng.random_range(-reach..=reach);
        }
        x
    }

    /// Writes [`Layout::N_PENALTIES`] penalty residuals for geometry `g` into `out`: the two
    /// full-turn conditions `r1 + r2 <= r3 + r4` and `|r1 - r2| >= |r3 - r4|` (with a
    /// margin), the length ratio, a pivot outside the region, and (full turn) the transmission
    /// quality at the crank's two in-line positions. Each limit is enforced a little inside
    /// ([`LIMIT_MARGIN`]) so that the small violation a penalty leaves at an optimum on the
    /// limit still passes verification.
    pub fn penalties(&self, g: &Geometry, out: &mut [f64]) {
        let w = LIMIT_WEIGHT;
        let m = LIMIT_MARGIN;
        if self.full_turn {
            out[0] = w * ((g.r1 + g.r2) - (g.r3 + g.r4) + GRASHOF_MARGIN).max(0.0);
            out[1] = w * ((g.r3 - g.r4).abs() - (g.r1 - g.r2).abs() + GRASHOF_MARGIN).max(0.0);
        } else {
            out[0] = 0.0;
            out[1] = 0.0;
        }
        out[2] = match self.max_ratio {
            Some(r) => {
                let l = [g.r1, g.r2, g.r3, g.r4];
                let mx = l.iter().copied().fold(f64::MIN, f64::max);
                let mn = l.iter().copied().fold(f64::MAX, f64::min);
                w * (mx - r * mn + m).max(0.0)
            }
            None => 0.0,
        };
        let outside = |p: Point2<f64>, (lo, hi): (Point2<f64>, Point2<f64>)| {
            (lo.x + m - p.x).max(0.0)
                + (p.x - hi.x + m).max(0.0)
                + (lo.y + m - p.y).max(0.0)
                + (p.y - hi.y + m).max(0.0)
        };
        // A fixed pivot is where the user put it: only free pivots are held to their regions.
        let (o2_fixed, o4_fixed) = match self.ground {
            Ground::InputFixed(_) | Ground::AngleInput(..) => (true, false),
            Ground::OutputFixed(_) | Ground::AngleOutput(..) => (false, true),
            Ground::BothFixed(..) => (true, true),
            Ground::Free | Ground::AngleFree(_) => (false, false),
        };
        let o2_term = if o2_fixed {
            0.0
        } else {
            outside(g.o2, self.bounded.region)
        };
        let o4_term = if o4_fixed {
            0.0
        } else {
            outside(g.o4, self.bounded.region_out)
        };
        out[3] = w * (o2_term + o4_term);
        match (self.full_turn, self.min_transmission) {
            (true, Some(mt)) => {
                let c = mt.cos() - m;
                let cosmu = |d: f64| (g.r3 * g.r3 + g.r4 * g.r4 - d * d) / (2.0 * g.r3 * g.r4);
                out[4] = w * (cosmu(g.r1 - g.r2).abs() - c).max(0.0);
                out[5] = w * (cosmu(g.r1 + g.r2).abs() - c).max(0.0);
            }
            _ => {
                out[4] = 0.0;
                out[5] = 0.0;
            }
        }
    }

    /// Bounds for free crank angles: a start angle in `[0, 2 pi]` and increments.
    pub fn timing_bounds(n: usize) -> (Vec<f64>, Vec<f64>) {
        let mut a = vec![-TAU];
        let mut b = vec![2.0 * TAU];
        for _ in 1..n {
            a.push(MIN_INCREMENT);
            b.push(TAU - MIN_INCREMENT);
        }
        (a, b)
    }
}

/// Smallest crank increment between consecutive free-timing targets (radians).
pub const MIN_INCREMENT: f64 = 1e-3;
