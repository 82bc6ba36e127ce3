//! The design as an ASCII DXF drawing for CAD: fixed pivots, the links at one position, joint
//! circles, the coupler plate, the coupler curve and the targets, each on a named layer
//! coloured after the project's palette ([`super::palette`]), with the units in the header.
//!
//! Written with the `dxf` crate as DXF R2000 (`$ACADVER` `AC1015`), the first version with
//! the `$INSUNITS` header and layer line weights; lines, circles, points, text and
//! `LWPOLYLINE`s are all entities R2000 readers know. One drawing unit is one of the design's
//! units (`$INSUNITS` says which, see [`insunits`]), and coordinates are the design's own:
//! `x` to the right, `y` up, no scaling or flipping.
//!
//! ```
//! use crankwright::report::dxf::{dxf_bytes, CadSheet};
//! use crankwright::{Assembly, CouplerPoint, FourBar};
//! use nalgebra::Point2;
//!
//! let l = FourBar::new(
//!     Point2::new(0.0, 0.0),
//!     Point2::new(80.0, 0.0),
//!     25.0,
//!     70.0,
//!     55.0,
//!     CouplerPoint { p: 30.0, q: 15.0 },
//!     Assembly::Open,
//! )?;
//! let sheet = CadSheet {
//!     linkage: &l,
//!     crank_deg: 40.0,
//!     curve: &[],
//!     targets: &[Point2::new(20.0, 60.0)],
//!     units: "mm",
//! };
//! let text = String::from_utf8(dxf_bytes(&sheet).expect("assembles at 40 deg")).unwrap();
//! assert!(text.contains("AC1015"));
//! assert!(text.contains("$INSUNITS"));
//! # Ok::<(), crankwright::LinkageError>(())
//! ```

use std::path::{Path, PathBuf};

use dxf::entities::{Circle, Entity, EntityType, Line, LwPolyline, ModelPoint, Text};
use dxf::enums::{AcadVersion, DrawingUnits, Units};
use dxf::tables::{Layer, LineType};
use dxf::{Color, Drawing, LwPolylineVertex};
use nalgebra::Point2;

use super::curves::poses_at_cranks;
use super::draw::Joints;
use super::export::CAD_CIRCLE_FRACTION;
use super::palette::{self, Swatch};
use crate::fsutil::write_atomic;
use crate::linkage::{bounding_box, FourBar};

/// What one DXF drawing shows: a design at one crank position with its coupler curve and
/// targets. Lengths in `units`.
#[derive(Debug, Clone, Copy)]
pub struct CadSheet<'a> {
    /// The design.
    pub linkage: &'a FourBar,
    /// Crank angle of the drawn position, degrees counter-clockwise from the ground line
    /// `O2 -> O4` (as a result's `crank_angles`; the first target's, usually).
    pub crank_deg: f64,
    /// The coupler curve, one polyline per branch (as [`super::curve_branches`] returns it).
    /// A non-finite point breaks a polyline; a polyline whose last point repeats its first
    /// (within 1e-12 of the drawing's size) is written closed, without the repeat; runs of
    /// fewer than two points are left out.
    pub curve: &'a [Vec<Point2<f64>>],
    /// The targets (path points, precision points or pose origins), numbered from 1 in this
    /// order.
    pub targets: &'a [Point2<f64>],
    /// The scenario's unit label (see [`insunits`]).
    pub units: &'a str,
}

/// Errors of the DXF export.
#[derive(Debug, thiserror::Error)]
pub enum DxfExportError {
    /// The linkage cannot be assembled at the crank angle asked for.
    #[error("the linkage cannot be assembled with the crank at {crank_deg} deg from the ground line O2->O4")]
    NoAssembly {
        /// The crank angle, degrees from the ground line.
        crank_deg: f64,
    },
    /// A target or the crank angle is NaN or infinite.
    #[error("{what} is not finite")]
    NotFinite {
        /// Which value, e.g. `target 3`.
        what: String,
    },
    /// The DXF crate failed to encode the drawing.
    #[error("cannot encode the DXF drawing: {0}")]
    Encode(#[source] dxf::DxfError),
    /// The file could not be written.
    #[error("cannot write {path}: {source}")]
    Io {
        /// The file.
        path: PathBuf,
        /// The cause.
        #[source]
        source: std::io::Error,
    },
}

/// The layers of the drawing, in the order a layer list shows them. Names are lower-case
/// words of the trade joined by hyphens.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum CadLayer {
    /// `fixed-pivots`: a circle about each fixed pivot `O2`, `O4`.
    FixedPivots,
    /// `ground-line`: the line `O2-O4`, dotted (line type [`DOTS_LINE_TYPE`]).
    GroundLine,
    /// `crank`: the line `O2-A`.
    Crank,
    /// `coupler`: the line `A-B`.
    Coupler,
    /// `coupler-plate`: the closed polyline `A-B-C` (left out when `C` lies on `A` or `B`).
    CouplerPlate,
    /// `output-link`: the line `O4-B`.
    OutputLink,
    /// `moving-joints`: a circle about each moving joint `A`, `B`.
    MovingJoints,
    /// `coupler-point`: a circle about the coupler point `C` (left out when `C` lies on `A`
    /// or `B`).
    CouplerPoint,
    /// `coupler-curve`: the coupler curve as polylines.
    CouplerCurve,
    /// `targets`: per target a point entity at the target, a diamond about it and its number.
    Targets,
    /// `notes`: text under the drawing, in lines of at most [`NOTE_COLUMNS`] characters:
    /// the crank angle with its reference, the dimensions, and the caution that this is
    /// kinematics only.
    Notes,
}

impl CadLayer {
    /// Every layer.
    pub const ALL: [CadLayer; 11] = [
        CadLayer::FixedPivots,
        CadLayer::GroundLine,
        CadLayer::Crank,
        CadLayer::Coupler,
        CadLayer::CouplerPlate,
        CadLayer::OutputLink,
        CadLayer::MovingJoints,
        CadLayer::CouplerPoint,
        CadLayer::CouplerCurve,
        CadLayer::Targets,
        CadLayer::Notes,
    ];

    /// The layer's name in the file.
    pub fn name(self) -> &'static str {
        match self {
            CadLayer::FixedPivots => "fixed-pivots",
            CadLayer::GroundLine => "ground-line",
            CadLayer::Crank => "crank",
            CadLayer::Coupler => "coupler",
            CadLayer::CouplerPlate => "coupler-plate",
            CadLayer::OutputLink => "output-link",
            CadLayer::MovingJoints => "moving-joints",
            CadLayer::CouplerPoint => "coupler-point",
            CadLayer::CouplerCurve => "coupler-curve",
            CadLayer::Targets => "targets",
            CadLayer::Notes => "notes",
        }
    }

    /// The palette colour of the layer's role; the layer's colour is its ACI stand-in
    /// ([`Swatch::aci`]).
    pub fn swatch(self) -> Swatch {
        match self {
            CadLayer::FixedPivots | CadLayer::GroundLine => palette::GROUND,
            CadLayer::Crank => palette::CRANK,
            CadLayer::Coupler | CadLayer::CouplerPlate => palette::COUPLER,
            CadLayer::OutputLink => palette::OUTPUT,
            CadLayer::MovingJoints => palette::JOINT,
            CadLayer::CouplerPoint | CadLayer::CouplerCurve => palette::CURVE,
            CadLayer::Targets => palette::TARGET,
            CadLayer::Notes => palette::BLACK,
        }
    }

    /// Line weight of the layer's entities for print, hundredths of a millimetre (a standard
    /// DXF line weight): links 0.50 mm, outlines and curve 0.25 mm, ground line and text
    /// 0.18 mm. Set on each entity, since the `dxf` crate writes a layer's own line weight
    /// as 0 only.
    pub fn line_weight(self) -> i16 {
        match self {
            CadLayer::Crank | CadLayer::Coupler | CadLayer::OutputLink => 50,
            CadLayer::GroundLine | CadLayer::Notes => 18,
            _ => 25,
        }
    }
}

/// Name of the line type of the ground line: dots (zero-length dashes) spaced
/// [`DOT_SPACING`] marker radii apart.
pub const DOTS_LINE_TYPE: &str = "ground-dots";
/// Spacing of the ground line's dots, in marker radii (see [`marker_radius`]).
pub const DOT_SPACING: f64 = 2.0;
/// Half-diagonal of a target's diamond, in marker radii.
pub const TARGET_DIAMOND: f64 = 1.5;
/// Height of target numbers and notes, in marker radii.
pub const TEXT_HEIGHT: f64 = 2.0;

/// The `$INSUNITS` code of a scenario's unit label (trimmed, any case): `mm` 4, `cm` 5, `m`
/// 6, `in` 1, `ft` 2; any other label 0, unitless (the drawing keeps the numbers and the
/// CAD program asks or assumes the unit).
pub fn insunits(label: &str) -> i16 {
    units_of(label) as i16
}

fn units_of(label: &str) -> Units {
    match label.trim().to_ascii_lowercase().as_str() {
        "mm" => Units::Millimeters,
        "cm" => Units::Centimeters,
        "m" => Units::Meters,
        "in" => Units::Inches,
        "ft" => Units::Feet,
        _ => Units::Unitless,
    }
}

/// The radius of the joint and pivot circles, in drawing units: [`CAD_CIRCLE_FRACTION`] of
/// the largest extent of what is drawn (`span`), rounded down to 1, 2 or 5 times a power of
/// ten so that the circles have a plain size in CAD. Circle and marker sizes are symbols, not
/// geometry; their centres are.
pub fn marker_radius(span: f64) -> f64 {
    let raw = CAD_CIRCLE_FRACTION * span;
    if !(raw.is_finite() && raw > 0.0) {
        return 1.0;
    }
    let decade = 10f64.powf(raw.log10().floor());
    let step = [5.0, 2.0, 1.0]
        .into_iter()
        .find(|m| m * decade <= raw * (1.0 + 1e-12))
        .unwrap_or(1.0);
    step * decade
}

fn point(p: Point2<f64>) -> dxf::Point {
    dxf::Point::new(p.x, p.y, 0.0)
}

/// The drawing's entities before they are put into a `Drawing`.
struct Sheet {
    entities: Vec<(CadLayer, EntityType)>,
}

impl Sheet {
    fn add(&mut self, layer: CadLayer, e: EntityType) {
        self.entities.push((layer, e));
    }
    fn line(&mut self, layer: CadLayer, p: Point2<f64>, q: Point2<f64>) {
        self.add(layer, EntityType::Line(Line::new(point(p), point(q))));
    }
    fn circle(&mut self, layer: CadLayer, c: Point2<f64>, r: f64) {
        self.add(layer, EntityType::Circle(Circle::new(point(c), r)));
    }
    fn polyline(&mut self, layer: CadLayer, pts: &[Point2<f64>], closed: bool) {
        let mut pl = LwPolyline {
            vertices: pts
                .iter()
                .map(|p| LwPolylineVertex {
                    x: p.x,
                    y: p.y,
                    ..Default::default()
                })
                .collect(),
            ..Default::default()
        };
        pl.set_is_closed(closed);
        self.add(layer, EntityType::LwPolyline(pl));
    }
    fn text(&mut self, layer: CadLayer, at: Point2<f64>, height: f64, value: String) {
        self.add(
            layer,
            EntityType::Text(Text {
                location: point(at),
                text_height: height,
                value,
                ..Default::default()
            }),
        );
    }
}

/// Characters per line of the notes under the drawing.
pub const NOTE_COLUMNS: usize = 64;

/// `text` broken into lines of at most `columns` characters at spaces (a longer word stands
/// alone on its line).
fn word_wrap(text: &str, columns: usize) -> Vec<String> {
    let mut lines: Vec<String> = Vec::new();
    for word in text.split_whitespace() {
        match lines.last_mut() {
            Some(line) if line.chars().count() + 1 + word.chars().count() <= columns => {
                line.push(' ');
                line.push_str(word);
            }
            _ => lines.push(word.to_owned()),
        }
    }
    lines
}

/// The runs of finite points of a curve branch.
fn finite_runs(branch: &[Point2<f64>]) -> Vec<&[Point2<f64>]> {
    branch
        .split(|p| !(p.x.is_finite() && p.y.is_finite()))
        .filter(|run| run.len() >= 2)
        .collect()
}

/// Builds the drawing of `sheet` (see [`CadSheet`] and [`CadLayer`] for what goes where).
fn drawing(sheet: &CadSheet) -> Result<Drawing, DxfExportError> {
    let l = sheet.linkage;
    if !sheet.crank_deg.is_finite() {
        return Err(DxfExportError::NotFinite {
            what: "the crank angle".into(),
        });
    }
    if let Some(i) = sheet
        .targets
        .iter()
        .position(|t| !(t.x.is_finite() && t.y.is_finite()))
    {
        return Err(DxfExportError::NotFinite {
            what: format!("target {}", i + 1),
        });
    }
    let pose = poses_at_cranks(l, &[sheet.crank_deg])
        .and_then(|p| p.first().copied())
        .ok_or(DxfExportError::NoAssembly {
            crank_deg: sheet.crank_deg,
        })?;
    let j = Joints::of(l, &pose);
    let runs: Vec<&[Point2<f64>]> = sheet.curve.iter().flat_map(|b| finite_runs(b)).collect();
    let (lo, hi) = bounding_box(
        [j.o2, j.o4, j.a, j.b, j.c]
            .into_iter()
            .chain(runs.iter().flat_map(|r| r.iter().copied()))
            .chain(sheet.targets.iter().copied()),
    )
    .expect("the pivots of a valid linkage are finite");
    let span = (hi.x - lo.x).max(hi.y - lo.y).max(l.size() * 1e-6);
    let r = marker_radius(span);

    let mut s = Sheet {
        entities: Vec::new(),
    };
    s.line(CadLayer::GroundLine, j.o2, j.o4);
    s.circle(CadLayer::FixedPivots, j.o2, r);
    s.circle(CadLayer::FixedPivots, j.o4, r);
    s.line(CadLayer::Crank, j.o2, j.a);
    s.line(CadLayer::Coupler, j.a, j.b);
    s.line(CadLayer::OutputLink, j.o4, j.b);
    s.circle(CadLayer::MovingJoints, j.a, r);
    s.circle(CadLayer::MovingJoints, j.b, r);
    // A coupler point on joint A or B (as in function generation) is that joint itself.
    let apart = 1e-9 * l.size();
    if (j.c - j.a).norm() > apart && (j.c - j.b).norm() > apart {
        s.polyline(CadLayer::CouplerPlate, &[j.a, j.b, j.c], true);
        s.circle(CadLayer::CouplerPoint, j.c, r);
    }
    for run in runs {
        let n = run.len();
        let closed = n > 2 && (run[n - 1] - run[0]).norm() <= 1e-12 * span;
        let pts = if closed { &run[..n - 1] } else { run };
        s.polyline(CadLayer::CouplerCurve, pts, closed);
    }
    for (i, t) in sheet.targets.iter().enumerate() {
        s.add(
            CadLayer::Targets,
            EntityType::ModelPoint(ModelPoint::new(point(*t))),
        );
        let d = palette::diamond(t.x, t.y, TARGET_DIAMOND * r);
        let corners: Vec<Point2<f64>> = d.iter().map(|&(x, y)| Point2::new(x, y)).collect();
        s.polyline(CadLayer::Targets, &corners, true);
        s.text(
            CadLayer::Targets,
            Point2::new(t.x + TARGET_DIAMOND * r, t.y + TARGET_DIAMOND * r),
            TEXT_HEIGHT * r,
            (i + 1).to_string(),
        );
    }
    let h = TEXT_HEIGHT * r;
    let [r1, r2, r3, r4] = l.lengths().map(super::round9);
    let cp = l.coupler_point();
    let notes = [
        format!(
            "four-bar linkage, crank at {} deg from the ground line O2->O4 (the ground line at {} deg from +x, counter-clockwise)",
            super::round9(sheet.crank_deg),
            super::deg_wrapped(l.ground_angle())
        ),
        format!(
            "ground {r1} crank {r2} coupler {r3} output {r4}, coupler point p {} q {} ({})",
            super::round9(cp.p),
            super::round9(cp.q),
            sheet.units
        ),
        crate::SAFETY_NOTE.to_owned(),
    ];
    let mut at = Point2::new(lo.x, lo.y - 2.0 * h - r);
    let mut widest = 0usize;
    for line in notes.iter().flat_map(|n| word_wrap(n, NOTE_COLUMNS)) {
        widest = widest.max(line.chars().count());
        s.text(CadLayer::Notes, at, h, line);
        at.y -= 1.6 * h;
    }

    let mut d = Drawing::new();
    d.header.version = AcadVersion::R2000;
    let units = units_of(sheet.units);
    d.header.default_drawing_units = units;
    d.header.drawing_units = match units {
        Units::Inches | Units::Feet => DrawingUnits::English,
        _ => DrawingUnits::Metric,
    };
    d.header.minimum_drawing_extents = dxf::Point::new(lo.x - r, at.y, 0.0);
    // Text is at most one text height wide per character in the common CAD fonts.
    let right = (hi.x + r).max(lo.x + widest as f64 * h);
    d.header.maximum_drawing_extents = dxf::Point::new(right, hi.y + r + 2.0 * h, 0.0);
    d.add_line_type(LineType {
        name: DOTS_LINE_TYPE.to_owned(),
        description: "dots".to_owned(),
        element_count: 2,
        total_pattern_length: DOT_SPACING * r,
        dash_dot_space_lengths: vec![0.0, -DOT_SPACING * r],
        ..Default::default()
    });
    for layer in CadLayer::ALL {
        d.add_layer(Layer {
            name: layer.name().to_owned(),
            color: Color::from_index(layer.swatch().aci),
            line_type_name: if layer == CadLayer::GroundLine {
                DOTS_LINE_TYPE.to_owned()
            } else {
                "CONTINUOUS".to_owned()
            },
            ..Default::default()
        });
    }
    for (layer, specific) in s.entities {
        let mut e = Entity::new(specific);
        e.common.layer = layer.name().to_owned();
        e.common.color = Color::by_layer();
        e.common.lineweight_enum_value = layer.line_weight();
        d.add_entity(e);
    }
    Ok(d)
}

/// The DXF text (ASCII, R2000) of `sheet`. Coordinates are written with 12 decimals (the
/// `dxf` crate's format), i.e. to within 5e-13 of a drawing unit.
///
/// # Errors
/// [`DxfExportError::NoAssembly`] when the linkage cannot be assembled at
/// `sheet.crank_deg`; [`DxfExportError::NotFinite`] for a non-finite crank angle or target;
/// [`DxfExportError::Encode`] if the crate fails to encode it.
pub fn dxf_bytes(sheet: &CadSheet) -> Result<Vec<u8>, DxfExportError> {
    let d = drawing(sheet)?;
    let mut out = Vec::new();
    d.save(&mut out).map_err(DxfExportError::Encode)?;
    Ok(out)
}

/// Writes the DXF of `sheet` to `path` atomically ([`write_atomic`]).
///
/// # Errors
/// As [`dxf_bytes`], and [`DxfExportError::Io`] when the file cannot be written.
pub fn write_dxf(path: &Path, sheet: &CadSheet) -> Result<(), DxfExportError> {
    let bytes = dxf_bytes(sheet)?;
    write_atomic(path, &bytes).map_err(|source| DxfExportError::Io {
        path: path.to_path_buf(),
        source,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::kinematics::position::closed_form;
    use crate::kinematics::sweep::{sweep, SweepOptions};
    use crate::linkage::{Assembly, CouplerPoint};
    use crate::report::curves::curve_branches;
    use crate::report::svg_test::crank_rocker;
    use approx::assert_relative_eq;

    /// The drawing read back with the `dxf` crate's own reader.
    fn read_back(sheet: &CadSheet) -> Drawing {
        let bytes = dxf_bytes(sheet).expect("writes");
        assert!(bytes.is_ascii(), "ASCII DXF");
        Drawing::load(&mut bytes.as_slice()).expect("the crate reads its own file")
    }

    fn on(d: &Drawing, layer: CadLayer) -> Vec<EntityType> {
        d.entities()
            .filter(|e| e.common.layer == layer.name())
            .map(|e| e.specific.clone())
            .collect()
    }

    fn xy(p: &dxf::Point) -> Point2<f64> {
        Point2::new(p.x, p.y)
    }

    // The file holds 12 decimals (the crate's format): half a unit in the last place.
    const WRITTEN: f64 = 5e-13;

    fn close(p: Point2<f64>, q: Point2<f64>) {
        assert!((p - q).norm() <= 2.0 * WRITTEN, "{p} vs {q}");
    }

    // Round trip through the crate's reader: header, layers with the palette's ACI
    // stand-ins, and every entity at the joint positions of the closed-form circle
    // intersection (kinematics::position::closed_form, checked against loop closure in its
    // own tests) on its layer.
    #[test]
    fn round_trip_through_the_crates_reader() {
        let l = crank_rocker();
        let sw = sweep(&l, 5f64.to_radians(), &SweepOptions::default());
        let curve = curve_branches(&l, &sw);
        let targets = [Point2::new(12.0, 3.0), Point2::new(14.5, 4.25)];
        let sheet = CadSheet {
            linkage: &l,
            crank_deg: 63.0,
            curve: &curve,
            targets: &targets,
            units: "mm",
        };
        let d = read_back(&sheet);
        assert_eq!(d.header.version, AcadVersion::R2000);
        assert_eq!(d.header.default_drawing_units, Units::Millimeters);
        assert_eq!(d.header.drawing_units, DrawingUnits::Metric);
        for layer in CadLayer::ALL {
            let found = d
                .layers()
                .find(|x| x.name == layer.name())
                .unwrap_or_else(|| panic!("no layer {}", layer.name()));
            assert_eq!(
                found.color.index(),
                Some(layer.swatch().aci),
                "{}",
                layer.name()
            );
            for e in d.entities().filter(|e| e.common.layer == layer.name()) {
                assert!(e.common.color.is_by_layer());
                assert_eq!(e.common.lineweight_enum_value, layer.line_weight());
            }
        }
        let dots = d.line_types().find(|t| t.name == DOTS_LINE_TYPE).unwrap();
        let ground = d.layers().find(|x| x.name == "ground-line").unwrap();
        assert_eq!(ground.line_type_name, DOTS_LINE_TYPE);
        assert_eq!(dots.dash_dot_space_lengths.len(), 2);
        assert_relative_eq!(dots.dash_dot_space_lengths[0], 0.0);

        let pose = closed_form(&l, l.ground_angle() + 63f64.to_radians(), l.assembly()).unwrap();
        let j = Joints::of(&l, &pose);
        let line = |layer| match on(&d, layer).as_slice() {
            [EntityType::Line(x)] => (xy(&x.p1), xy(&x.p2)),
            other => panic!("{}: {other:?}", layer.name()),
        };
        for (layer, p, q) in [
            (CadLayer::GroundLine, j.o2, j.o4),
            (CadLayer::Crank, j.o2, j.a),
            (CadLayer::Coupler, j.a, j.b),
            (CadLayer::OutputLink, j.o4, j.b),
        ] {
            let (a, b) = line(layer);
            close(a, p);
            close(b, q);
        }
        let centres = |layer| -> Vec<(Point2<f64>, f64)> {
            on(&d, layer)
                .iter()
                .map(|e| match e {
                    EntityType::Circle(c) => (xy(&c.center), c.radius),
                    other => panic!("{other:?}"),
                })
                .collect()
        };
        let r = centres(CadLayer::FixedPivots)[0].1;
        for (layer, want) in [
            (CadLayer::FixedPivots, vec![j.o2, j.o4]),
            (CadLayer::MovingJoints, vec![j.a, j.b]),
            (CadLayer::CouplerPoint, vec![j.c]),
        ] {
            let got = centres(layer);
            assert_eq!(got.len(), want.len());
            for ((c, radius), w) in got.into_iter().zip(want) {
                close(c, w);
                assert_relative_eq!(radius, r);
            }
        }
        match on(&d, CadLayer::CouplerPlate).as_slice() {
            [EntityType::LwPolyline(p)] => {
                assert!(p.is_closed());
                let v: Vec<_> = p.vertices.iter().map(|v| Point2::new(v.x, v.y)).collect();
                assert_eq!(v.len(), 3);
                for (g, w) in v.into_iter().zip([j.a, j.b, j.c]) {
                    close(g, w);
                }
            }
            other => panic!("{other:?}"),
        }
        // The full turn comes back as one closed polyline without the repeated point.
        match on(&d, CadLayer::CouplerCurve).as_slice() {
            [EntityType::LwPolyline(p)] => {
                assert!(p.is_closed());
                assert_eq!(p.vertices.len(), curve[0].len() - 1);
                for (v, w) in p.vertices.iter().zip(&curve[0]) {
                    close(Point2::new(v.x, v.y), *w);
                }
            }
            other => panic!("{other:?}"),
        }
        let t = on(&d, CadLayer::Targets);
        let points: Vec<Point2<f64>> = t
            .iter()
            .filter_map(|e| match e {
                EntityType::ModelPoint(p) => Some(xy(&p.location)),
                _ => None,
            })
            .collect();
        assert_eq!(points.len(), 2);
        for (p, w) in points.into_iter().zip(targets) {
            close(p, w);
        }
        let labels: Vec<String> = t
            .iter()
            .filter_map(|e| match e {
                EntityType::Text(x) => Some(x.value.clone()),
                _ => None,
            })
            .collect();
        assert_eq!(labels, ["1", "2"]);
        let notes: Vec<String> = on(&d, CadLayer::Notes)
            .iter()
            .filter_map(|e| match e {
                EntityType::Text(x) => Some(x.value.clone()),
                _ => None,
            })
            .collect();
        assert!(notes.iter().all(|n| n.chars().count() <= NOTE_COLUMNS));
        let joined = notes.join(" ");
        assert!(joined.contains("crank at 63 deg from the ground line O2->O4"));
        assert!(joined.contains(crate::SAFETY_NOTE));
    }

    // $INSUNITS codes of the DXF reference (AutoCAD DXF Reference, HEADER section:
    // 0 unitless, 1 inches, 2 feet, 4 millimetres, 5 centimetres, 6 metres), and the
    // English/metric $MEASUREMENT that goes with them.
    #[test]
    fn units_labels_map_to_the_header() {
        for (label, code) in [
            ("mm", 4),
            ("cm", 5),
            ("m", 6),
            ("in", 1),
            ("ft", 2),
            (" MM ", 4),
            ("Ft", 2),
            ("furlong", 0),
            ("", 0),
            ("inch", 0),
        ] {
            assert_eq!(insunits(label), code, "{label:?}");
        }
        let l = crank_rocker();
        for (label, units, system) in [
            ("in", Units::Inches, DrawingUnits::English),
            ("m", Units::Meters, DrawingUnits::Metric),
            ("furlong", Units::Unitless, DrawingUnits::Metric),
        ] {
            let d = read_back(&CadSheet {
                linkage: &l,
                crank_deg: 0.0,
                curve: &[],
                targets: &[],
                units: label,
            });
            assert_eq!(d.header.default_drawing_units, units);
            assert_eq!(d.header.drawing_units, system);
        }
    }

    // Marker radii: 1.5 % of the span rounded down to 1, 2 or 5 times a power of ten,
    // also exactly on a step and for tiny and huge designs.
    #[test]
    fn marker_radius_is_a_plain_number() {
        for (span, r) in [
            (90.0, 1.0),
            (1000.0, 10.0),
            (200.0, 2.0),
            (400.0, 5.0),
            (2.0 / 0.015, 2.0),
            (1e-3, 1e-5),
            (7e6, 1e5),
        ] {
            assert_relative_eq!(marker_radius(span), r, max_relative = 1e-12);
        }
        assert_relative_eq!(marker_radius(0.0), 1.0);
        assert_relative_eq!(marker_radius(f64::NAN), 1.0);
    }

    // A non-finite point breaks the curve; a piece of one point is left out; an open branch
    // stays open.
    #[test]
    fn curve_breaks_at_non_finite_points() {
        let l = crank_rocker();
        let nan = Point2::new(f64::NAN, 0.0);
        let curve = vec![vec![
            Point2::new(0.0, 0.0),
            Point2::new(1.0, 0.0),
            Point2::new(1.0, 1.0),
            nan,
            Point2::new(5.0, 5.0),
            nan,
            Point2::new(2.0, 2.0),
            Point2::new(3.0, 2.0),
            Point2::new(2.0, 2.0),
        ]];
        let d = read_back(&CadSheet {
            linkage: &l,
            crank_deg: 10.0,
            curve: &curve,
            targets: &[],
            units: "mm",
        });
        let lines: Vec<(usize, bool)> = on(&d, CadLayer::CouplerCurve)
            .iter()
            .map(|e| match e {
                EntityType::LwPolyline(p) => (p.vertices.len(), p.is_closed()),
                other => panic!("{other:?}"),
            })
            .collect();
        assert_eq!(lines, [(3, false), (2, true)]);
    }

    // A coupler point on joint A (function generation) has no plate and no circle of its own.
    #[test]
    fn coupler_point_on_a_joint_draws_no_plate() {
        let l = FourBar::on_x_axis([7.0, 2.0, 9.0, 6.0], Assembly::Open).unwrap();
        let d = read_back(&CadSheet {
            linkage: &l,
            crank_deg: 30.0,
            curve: &[],
            targets: &[],
            units: "mm",
        });
        assert!(on(&d, CadLayer::CouplerPlate).is_empty());
        assert!(on(&d, CadLayer::CouplerPoint).is_empty());
        assert_eq!(on(&d, CadLayer::MovingJoints).len(), 2);
    }

    // Refusals: a crank angle where the links cannot close (crank 60 pointing away from
    // O4 at 80: |A - O4| = 140 > coupler + output = 40), non-finite inputs, and a folder
    // that does not exist.
    #[test]
    fn refuses_what_it_cannot_draw() {
        let l = FourBar::new(
            Point2::origin(),
            Point2::new(80.0, 0.0),
            60.0,
            20.0,
            20.0,
            CouplerPoint { p: 5.0, q: 1.0 },
            Assembly::Open,
        )
        .unwrap();
        let sheet = |crank_deg, targets| CadSheet {
            linkage: &l,
            crank_deg,
            curve: &[],
            targets,
            units: "mm",
        };
        assert!(matches!(
            dxf_bytes(&sheet(180.0, &[])),
            Err(DxfExportError::NoAssembly { crank_deg }) if (crank_deg - 180.0).abs() < 1e-12
        ));
        assert!(dxf_bytes(&sheet(0.0, &[])).is_ok());
        assert!(matches!(
            dxf_bytes(&sheet(f64::NAN, &[])),
            Err(DxfExportError::NotFinite { .. })
        ));
        let bad = [Point2::new(1.0, 1.0), Point2::new(f64::INFINITY, 0.0)];
        match dxf_bytes(&sheet(0.0, &bad)) {
            Err(e @ DxfExportError::NotFinite { .. }) => {
                assert_eq!(e.to_string(), "target 2 is not finite")
            }
            other => panic!("{other:?}"),
        }
        let dir = tempfile::tempdir().unwrap();
        let missing = dir.path().join("no-such-folder").join("d.dxf");
        assert!(matches!(
            write_dxf(&missing, &sheet(0.0, &[])),
            Err(DxfExportError::Io { .. })
        ));
        let ok = dir.path().join("d.dxf");
        write_dxf(&ok, &sheet(0.0, &[])).unwrap();
        let text = std::fs::read_to_string(&ok).unwrap();
        assert!(text.contains("AC1015") && text.ends_with("EOF\r\n"));
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1);
    }

    // Lines break at spaces within the width; a word longer than the width stands alone.
    #[test]
    fn notes_wrap_at_spaces() {
        assert_eq!(
            word_wrap("aa bb  cc dddddd e", 5),
            ["aa bb", "cc", "dddddd", "e"]
        );
        assert_eq!(word_wrap("aa bb", 5), ["aa bb"]);
        assert!(word_wrap("   ", 5).is_empty());
    }

    // The export's errors cross threads like every library error.
    #[test]
    fn errors_are_send_and_sync() {
        fn check<E: std::error::Error + Send + Sync + 'static>() {}
        check::<DxfExportError>();
    }
}
