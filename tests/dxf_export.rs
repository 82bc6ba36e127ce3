//! The DXF export read back by an independent reader: ezdxf (a Python DXF library, not the
//! `dxf` crate that writes the file), through `tests/dxf_check.py`. The geometry is checked
//! against joint positions computed here in closed form (circle intersection), the layers'
//! colours against ezdxf's own ACI colour table, the units against the DXF header codes.
//!
//! Without python3 or ezdxf the tests print a notice and pass, unless
//! `CRANKWRIGHT_REQUIRE_EZDXF` is set (as `.ci/run` does), when they fail.

use std::path::{Path, PathBuf};
use std::process::Command;

use crankwright::kinematics::sweep::{sweep, SweepOptions};
use crankwright::report::colour::{ciede2000, lab};
use crankwright::report::curves::{branch_poses, curve_branches};
use crankwright::report::dxf::{insunits, write_dxf, CadLayer, CadSheet, DOTS_LINE_TYPE};
use crankwright::report::palette;
use crankwright::report::style::Rgb;
use crankwright::{Assembly, CouplerPoint, FourBar};
use nalgebra::{Point2, Vector2};
use serde_json::Value;

/// The checker script.
fn script() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/dxf_check.py")
}

/// The checker run with `args` (file paths): its output, or `None` when python3 or ezdxf
/// is missing here, after a notice; a failure instead when `CRANKWRIGHT_REQUIRE_EZDXF` is
/// set.
fn run_checker<S: AsRef<std::ffi::OsStr>>(args: &[S]) -> Option<std::process::Output> {
    let why = match Command::new("python3").arg(script()).args(args).output() {
        // Exit 3: ezdxf is not installed.
        Ok(out) if out.status.code() != Some(3) => return Some(out),
        Ok(out) => String::from_utf8_lossy(&out.stderr).trim().to_owned(),
        Err(e) => format!("python3 cannot be started: {e}"),
    };
    if std::env::var_os("CRANKWRIGHT_REQUIRE_EZDXF").is_some() {
        panic!("CRANKWRIGHT_REQUIRE_EZDXF is set but the DXF reader cannot run: {why}");
    }
    eprintln!("notice: DXF read-back by ezdxf skipped: {why}");
    None
}

/// The drawings at `paths` as the checker reads them, in order (one Python start for all;
/// its exit code must be 0: each read and audited without errors); `None` without the
/// reader (see [`run_checker`]).
fn read_all(paths: &[PathBuf]) -> Option<Vec<Value>> {
    let out = run_checker(paths)?;
    assert!(
        out.status.success(),
        "dxf_check.py failed ({}): {}",
        out.status,
        String::from_utf8_lossy(&out.stderr)
    );
    let docs: Vec<Value> = String::from_utf8(out.stdout)
        .expect("UTF-8")
        .lines()
        .map(|l| serde_json::from_str(l).expect("the checker prints a JSON line per file"))
        .collect();
    assert_eq!(docs.len(), paths.len());
    Some(docs)
}

fn pt(v: &Value) -> Point2<f64> {
    Point2::new(v[0].as_f64().unwrap(), v[1].as_f64().unwrap())
}

fn e(t: f64) -> Vector2<f64> {
    Vector2::new(t.cos(), t.sin())
}

/// One position in closed form, written here independently of the library: the crank
/// joint `A = O2 + r2 e(theta1 + phi)`; the output joint `B` on both circles `|B - A| = r3`
/// and `|B - O4| = r4` (intersection of two circles: the foot of the chord at `along` from
/// `A` towards `O4`, the chord's half `h` either side), the one whose assembly sign
/// `sin(theta4 - theta3)` is positive for an open linkage and negative for a crossed one
/// (the project's definition, DOMAIN notes "Assembly sign"); the coupler point
/// `C = A + p e(theta3) + q e(theta3 + 90 deg)`.
struct Design {
    o2: Point2<f64>,
    o4: Point2<f64>,
    r: [f64; 3],
    pq: (f64, f64),
    open: bool,
}

impl Design {
    fn joints(&self, phi_deg: f64) -> [Point2<f64>; 3] {
        let [r2, r3, r4] = self.r;
        let g = self.o4 - self.o2;
        let theta1 = g.y.atan2(g.x);
        let a = self.o2 + r2 * e(theta1 + phi_deg.to_radians());
        let v = self.o4 - a;
        let d = v.norm();
        let along = (r3 * r3 - r4 * r4 + d * d) / (2.0 * d);
        let h = (r3 * r3 - along * along).sqrt();
        let u = v / d;
        let n = Vector2::new(-u.y, u.x);
        let b = [a + along * u + h * n, a + along * u - h * n]
            .into_iter()
            .find(|b| {
                let (ab, ob) = (b - a, b - self.o4);
                let sigma = (ob.y.atan2(ob.x) - ab.y.atan2(ab.x)).sin();
                (sigma > 0.0) == self.open
            })
            .expect("one intersection has each assembly sign");
        let t3 = (b - a).y.atan2((b - a).x);
        let c = a + self.pq.0 * e(t3) + self.pq.1 * e(t3 + std::f64::consts::FRAC_PI_2);
        [a, b, c]
    }

    fn linkage(&self) -> FourBar {
        FourBar::new(
            self.o2,
            self.o4,
            self.r[0],
            self.r[1],
            self.r[2],
            CouplerPoint {
                p: self.pq.0,
                q: self.pq.1,
            },
            if self.open {
                Assembly::Open
            } else {
                Assembly::Crossed
            },
        )
        .expect("valid dimensions")
    }
}

/// A crank-rocker (ground 80, crank 25, coupler 70, output 55: s + l = 105 < 125, the
/// crank shortest) with its ground line turned 23 deg and moved off the origin, so that a
/// lost rotation or offset shows.
fn design(open: bool) -> Design {
    let o2 = Point2::new(12.5, -7.25);
    Design {
        o2,
        o4: o2 + 80.0 * e(23f64.to_radians()),
        r: [25.0, 70.0, 55.0],
        pq: (30.0, 15.0),
        open,
    }
}

fn entities<'a>(doc: &'a Value, layer: CadLayer, kind: &str) -> Vec<&'a Value> {
    doc["entities"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|e| e["layer"] == layer.name() && e["type"] == kind)
        .collect()
}

// The drawn position, the coupler curve of the library's sweep and the targets, as ezdxf
// reads them, against the closed form above, within 1e-9 of the design's size, for the
// open and the crossed assembly.
#[test]
fn geometry_read_by_ezdxf_matches_the_closed_form() {
    let dir = tempfile::tempdir().unwrap();
    let mut written = Vec::new();
    for open in [true, false] {
        let dz = design(open);
        let l = dz.linkage();
        let crank = 37.5;
        let targets: Vec<Point2<f64>> = [crank, 110.0, 205.0, 290.0]
            .iter()
            .map(|phi| dz.joints(*phi)[2])
            .collect();
        let sw = sweep(&l, 5f64.to_radians(), &SweepOptions::default());
        assert_eq!(sw.branches.len(), 1, "a crank-rocker turns fully");
        let curve = curve_branches(&l, &sw);
        let path = dir.path().join(format!("design-open-{open}.dxf"));
        write_dxf(
            &path,
            &CadSheet {
                linkage: &l,
                crank_deg: crank,
                curve: &curve,
                targets: &targets,
                units: "mm",
            },
        )
        .unwrap();
        written.push((dz, targets, sw, path));
    }
    let Some(docs) = read_all(&written.iter().map(|w| w.3.clone()).collect::<Vec<_>>()) else {
        return;
    };
    for ((dz, targets, sw, _), doc) in written.iter().zip(&docs) {
        let open = dz.open;
        let l = dz.linkage();
        let tol = 1e-9 * l.size();
        let near = |got: Point2<f64>, want: Point2<f64>, what: &str| {
            assert!(
                (got - want).norm() <= tol,
                "{what} (open {open}): {got} vs {want}"
            );
        };
        let [a, b, c] = dz.joints(37.5);
        for (layer, from, to) in [
            (CadLayer::GroundLine, dz.o2, dz.o4),
            (CadLayer::Crank, dz.o2, a),
            (CadLayer::Coupler, a, b),
            (CadLayer::OutputLink, dz.o4, b),
        ] {
            let lines = entities(doc, layer, "LINE");
            assert_eq!(lines.len(), 1, "{}", layer.name());
            near(pt(&lines[0]["start"]), from, layer.name());
            near(pt(&lines[0]["end"]), to, layer.name());
        }
        let circles = |layer| -> Vec<(Point2<f64>, f64)> {
            entities(doc, layer, "CIRCLE")
                .iter()
                .map(|c| (pt(&c["center"]), c["radius"].as_f64().unwrap()))
                .collect()
        };
        let radius = circles(CadLayer::FixedPivots)[0].1;
        for (layer, want) in [
            (CadLayer::FixedPivots, vec![dz.o2, dz.o4]),
            (CadLayer::MovingJoints, vec![a, b]),
            (CadLayer::CouplerPoint, vec![c]),
        ] {
            let got = circles(layer);
            assert_eq!(got.len(), want.len(), "{}", layer.name());
            for ((centre, r), w) in got.into_iter().zip(want) {
                near(centre, w, layer.name());
                assert!((r - radius).abs() <= 1e-12 * radius);
            }
        }
        let plate = entities(doc, CadLayer::CouplerPlate, "LWPOLYLINE");
        assert_eq!(plate.len(), 1);
        assert_eq!(plate[0]["closed"], true);
        let corners: Vec<Point2<f64>> = plate[0]["points"]
            .as_array()
            .unwrap()
            .iter()
            .map(pt)
            .collect();
        assert_eq!(corners.len(), 3);
        for (got, want) in corners.into_iter().zip([a, b, c]) {
            near(got, want, "coupler plate");
        }

        // The curve: one closed polyline with a vertex per pose of the sweep, each the
        // closed-form coupler point at that pose's crank angle.
        let polylines = entities(doc, CadLayer::CouplerCurve, "LWPOLYLINE");
        assert_eq!(polylines.len(), 1);
        assert_eq!(polylines[0]["closed"], true);
        let vertices = polylines[0]["points"].as_array().unwrap();
        let poses = branch_poses(&sw.branches[0]);
        assert_eq!(vertices.len(), poses.len());
        assert!(poses.len() >= 72);
        for (v, pose) in vertices.iter().zip(&poses) {
            let phi = (pose.theta2 - l.ground_angle()).to_degrees();
            near(pt(v), dz.joints(phi)[2], "coupler curve");
        }

        let points = entities(doc, CadLayer::Targets, "POINT");
        assert_eq!(points.len(), targets.len());
        for (p, t) in points.iter().zip(targets) {
            near(pt(&p["location"]), *t, "target");
        }
        let diamonds = entities(doc, CadLayer::Targets, "LWPOLYLINE");
        assert_eq!(diamonds.len(), targets.len());
        for (d, t) in diamonds.iter().zip(targets) {
            let corners: Vec<Point2<f64>> =
                d["points"].as_array().unwrap().iter().map(pt).collect();
            assert_eq!(corners.len(), 4);
            let centre = corners.iter().fold(Vector2::zeros(), |s, p| s + p.coords) / 4.0;
            near(Point2::from(centre), *t, "target diamond centre");
        }
        let labels: Vec<&str> = entities(doc, CadLayer::Targets, "TEXT")
            .iter()
            .map(|t| t["text"].as_str().unwrap())
            .collect();
        assert_eq!(labels, ["1", "2", "3", "4"]);
        let notes: Vec<&str> = entities(doc, CadLayer::Notes, "TEXT")
            .iter()
            .map(|t| t["text"].as_str().unwrap())
            .collect();
        let joined = notes.join(" ");
        assert!(
            joined.contains("crank at 37.5 deg from the ground line O2->O4")
                && joined.contains("the ground line at 23 deg from +x"),
            "{notes:?}"
        );
        assert!(joined.contains(crankwright::SAFETY_NOTE));
    }
}

// Header, layers, line type and colours as ezdxf reads them: version AC1015, $INSUNITS
// and $MEASUREMENT per unit label (DXF reference codes: 0 unitless, 1 in, 2 ft, 4 mm,
// 5 cm, 6 m), every layer with its palette colour's ACI, each ACI the nearest (CIEDE2000)
// to the palette colour in ezdxf's own ACI table, and nothing for ezdxf's audit to call an
// error. The audit does repair one thing on loading: the `dxf` crate writes no handle on
// the seven TABLE heads; any other repair fails the test.
#[test]
fn header_layers_and_colours_read_by_ezdxf() {
    let dz = design(true);
    let l = dz.linkage();
    let dir = tempfile::tempdir().unwrap();
    let cases = [
        ("mm", 4, 1),
        ("cm", 5, 1),
        ("m", 6, 1),
        ("in", 1, 0),
        ("ft", 2, 0),
        ("furlong", 0, 1),
    ];
    let targets = [dz.joints(10.0)[2]];
    let paths: Vec<PathBuf> = cases
        .iter()
        .map(|(label, _, _)| {
            let path = dir.path().join(format!("units-{label}.dxf"));
            let sheet = CadSheet {
                linkage: &l,
                crank_deg: 10.0,
                curve: &[],
                targets: &targets,
                units: label,
            };
            write_dxf(&path, &sheet).unwrap();
            path
        })
        .collect();
    let Some(docs) = read_all(&paths) else {
        return;
    };
    for ((label, units, measurement), doc) in cases.into_iter().zip(&docs) {
        assert_eq!(doc["dxfversion"], "AC1015");
        assert_eq!(doc["insunits"], units, "{label}");
        assert_eq!(insunits(label), units, "{label}");
        assert_eq!(doc["measurement"], measurement, "{label}");
        assert_eq!(doc["audit"]["errors"].as_array().unwrap().len(), 0);
        for fix in doc["audit"]["fixes"].as_array().unwrap() {
            let fix = fix.as_str().unwrap();
            assert!(
                fix.starts_with("Fixed invalid table head handle in table"),
                "{fix}"
            );
        }
        if label != "mm" {
            continue;
        }
        let aci: Vec<Option<Rgb>> = doc["aci_rgb"]
            .as_array()
            .unwrap()
            .iter()
            .map(|c| {
                c.as_array().map(|c| {
                    let ch = |i: usize| u8::try_from(c[i].as_u64().unwrap()).unwrap();
                    Rgb(ch(0), ch(1), ch(2))
                })
            })
            .collect();
        assert_eq!(aci.len(), 256);
        for layer in CadLayer::ALL {
            let found = &doc["layers"][layer.name()];
            let s = layer.swatch();
            assert_eq!(found["color"], s.aci, "{}", layer.name());
            assert_eq!(found["on"], true);
            let want_type = if layer == CadLayer::GroundLine {
                DOTS_LINE_TYPE
            } else {
                "CONTINUOUS"
            };
            assert_eq!(found["linetype"], want_type);
            for ent in doc["entities"].as_array().unwrap() {
                if ent["layer"] == layer.name() {
                    assert_eq!(ent["lineweight"], layer.line_weight());
                }
            }
        }
        // Every swatch but black: its ACI is the nearest in ezdxf's table, and the colour
        // the palette records for it is that table's.
        for s in palette::SWATCHES {
            if s == palette::BLACK {
                assert_eq!(s.aci, 7, "black is drawn with the foreground colour");
                continue;
            }
            assert_eq!(aci[usize::from(s.aci)], Some(s.aci_rgb), "{}", s.name);
            let target = lab(s.rgb);
            let nearest = (1..=255)
                .filter_map(|i| aci[i].map(|c| (i, ciede2000(target, lab(c)))))
                .min_by(|x, y| x.1.total_cmp(&y.1))
                .unwrap();
            assert_eq!(nearest.0, usize::from(s.aci), "{}: {nearest:?}", s.name);
        }
        // The ground line's dots: a dot (length 0) then a gap of DOT_SPACING marker radii.
        let radius = entities(doc, CadLayer::FixedPivots, "CIRCLE")[0]["radius"]
            .as_f64()
            .unwrap();
        let dots = &doc["linetypes"][DOTS_LINE_TYPE];
        let elements: Vec<f64> = dots["elements"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect();
        assert_eq!(elements.len(), 2);
        assert!(elements[0].abs() < 1e-15);
        let gap = crankwright::report::dxf::DOT_SPACING * radius;
        assert!((elements[1] + gap).abs() <= 1e-12 * gap);
        assert!((dots["length"].as_f64().unwrap() - gap).abs() <= 1e-12 * gap);
    }
}

// The reader is no rubber stamp: a file cut short, a coordinate that is not a number, or
// sections that lose their ENDSEC make the checker fail (exit 1, with ezdxf's message).
#[test]
fn the_reader_refuses_a_broken_file() {
    let dz = design(true);
    let l = dz.linkage();
    let dir = tempfile::tempdir().unwrap();
    let good = dir.path().join("good.dxf");
    let sheet = CadSheet {
        linkage: &l,
        crank_deg: 0.0,
        curve: &[],
        targets: &[],
        units: "mm",
    };
    write_dxf(&good, &sheet).unwrap();
    let text = std::fs::read_to_string(&good).unwrap();
    let cut = dir.path().join("cut.dxf");
    std::fs::write(&cut, &text[..text.len() / 2]).unwrap();
    let (x, _) = text
        .split_once("\r\n 10\r\n")
        .and_then(|(_, rest)| rest.split_once("\r\n"))
        .expect("a coordinate (group code 10)");
    let not_a_number = dir.path().join("nan.dxf");
    std::fs::write(
        &not_a_number,
        text.replacen(&format!("\r\n 10\r\n{x}\r\n"), "\r\n 10\r\nnineteen\r\n", 1),
    )
    .unwrap();
    let unclosed = dir.path().join("unclosed.dxf");
    std::fs::write(&unclosed, text.replace("ENDSEC", "END")).unwrap();
    for bad in [cut, not_a_number, unclosed] {
        let Some(out) = run_checker(&[&bad]) else {
            return;
        };
        assert_eq!(out.status.code(), Some(1), "{}", bad.display());
        assert!(!out.stderr.is_empty());
    }
}
