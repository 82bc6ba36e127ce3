//! Renders every figure and export of the report layer for an invented demo: a greenhouse
//! vent opener whose motor-driven crank swings the vent flap (output link) while a stay on
//! the coupler passes a few points along the frame. Demo data only.
//!
//! ```text
//! cargo run --example draw_demo -- [OUT_DIR] [--png]
//! ```
//!
//! Writes `OUT_DIR/draw_demo.html` (all figures inline), `design-1.svg`, `design-1-curve.csv`,
//! `animation.svg` and each figure as `fig-*.svg` (default `OUT_DIR`: `target/draw_demo`). With `--png` and a
//! `chromium` on the path, also renders the page to `OUT_DIR/draw_demo.png`.

use std::f64::consts::PI;
use std::path::PathBuf;
use std::process::Command;

use crankwright::kinematics::position::{position_at, NewtonOptions};
use crankwright::kinematics::sweep::{sweep, SweepOptions};
use crankwright::report::{
    angle_branches, angle_plot, animation_svg, cad_svg, csv_curve, curve_branches, error_plot,
    footprint, function_plot, linkage_figure, motion_figure, motion_poses, poses_at_cranks,
    FramePose,
};
use crankwright::{Assembly, CouplerPoint, FourBar, Pose, SAFETY_NOTE};
use nalgebra::{Point2, Vector2};

fn main() -> anyhow::Result<()> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let png = args.iter().any(|a| a == "--png");
    let out = args
        .iter()
        .find(|a| !a.starts_with("--"))
        .map_or_else(|| PathBuf::from("target/draw_demo"), PathBuf::from);
    std::fs::create_dir_all(&out)?;

    // The vent opener (mm): crank on the motor shaft at O2, flap hinge at O4.
    let units = "mm";
    let l = FourBar::new(
        Point2::new(0.0, 0.0),
        Point2::new(120.0, 20.0),
        35.0,
        110.0,
        75.0,
        CouplerPoint { p: 55.0, q: 30.0 },
        Assembly::Open,
    )?;
    let newton = NewtonOptions::default();
    let t1 = l.ground_angle();

    // Path: five stay positions, reached at these crank angles from the ground line, with
    // invented offsets standing in for the residual error of a synthesis.
    let cranks = [20.0f64, 80.0, 140.0, 200.0, 260.0];
    let offsets = [
        (1.5, -2.0),
        (-2.5, 1.0),
        (0.8, 2.2),
        (-1.2, -1.8),
        (2.4, 0.6),
    ];
    let poses: Vec<Pose> = poses_at_cranks(&l, &cranks).expect("a crank-rocker assembles");
    let reached: Vec<Point2<f64>> = poses
        .iter()
        .map(|p| l.coupler_point_at(p.theta2, p.theta3))
        .collect();
    let targets: Vec<Point2<f64>> = reached
        .iter()
        .zip(offsets)
        .map(|(r, (dx, dy))| r + Vector2::new(dx, dy))
        .collect();

    let sw = sweep(&l, 2f64.to_radians(), &SweepOptions::default());
    let curve = curve_branches(&l, &sw);
    let angles = angle_branches(&l, &sw);
    let motion = motion_poses(&sw);
    let (lo, hi) = footprint(&l, &motion);

    let fig = linkage_figure(&l, &poses, &curve, &targets, &reached, units, (760, 560));
    let ang = angle_plot(&angles, &cranks, (760, 460));
    let anim = animation_svg(&l, &motion, &curve, &targets, units, 4.0, (640, 470));

    // Function generation: flap opening y (deg) against a thermostat reading x (deg C),
    // x in [15, 30] mapped to 120 deg of crank; the generated opening is the output
    // rotation, the desired one differs by a cubic vanishing at three Chebyshev points.
    let (x0, xf) = (15.0, 30.0);
    let cheb: Vec<f64> = (1..=3)
        .map(|j| 0.5 * (x0 + xf) - 0.5 * (xf - x0) * ((2 * j - 1) as f64 * PI / 6.0).cos())
        .collect();
    let start = position_at(&l, t1 + 20f64.to_radians(), &newton).expect("assembles");
    let xs: Vec<f64> = (0..=90).map(|k| x0 + (xf - x0) * k as f64 / 90.0).collect();
    let generated: Vec<f64> = xs
        .iter()
        .map(|x| {
            let c = 20.0 + 120.0 * (x - x0) / (xf - x0);
            position_at(&l, t1 + c.to_radians(), &newton)
                .map_or(f64::NAN, |p| (p.theta4 - start.theta4).to_degrees())
        })
        .collect();
    let desired: Vec<f64> = xs
        .iter()
        .zip(&generated)
        .map(|(x, g)| g - 0.004 * (x - cheb[0]) * (x - cheb[1]) * (x - cheb[2]))
        .collect();
    let error: Vec<f64> = generated.iter().zip(&desired).map(|(g, d)| g - d).collect();
    let func = function_plot(
        &xs,
        &desired,
        &generated,
        &cheb,
        ("thermostat reading x (°C)", "flap opening y (deg)"),
        (620, 400),
    );
    let err = error_plot(
        &xs,
        &error,
        &cheb,
        ("thermostat reading x (°C)", "error (deg)"),
        (620, 300),
    );

    // Motion generation: three flap-stay frames near the coupler's own.
    let frame_angle = 0.35;
    let mposes = &poses[..3];
    let frames: Vec<FramePose> = mposes
        .iter()
        .zip([(2.0, -1.0, 0.05), (-1.5, 2.0, -0.08), (1.0, 1.5, 0.04)])
        .map(|(p, (dx, dy, dphi))| {
            let c = l.coupler_point_at(p.theta2, p.theta3);
            FramePose {
                x: c.x + dx,
                y: c.y + dy,
                phi: p.theta3 + frame_angle + dphi,
            }
        })
        .collect();
    let mot = motion_figure(&l, mposes, &curve, &frames, frame_angle, units, (760, 560));

    // A rocking variant (double-rocker: the coupler is the shortest link), whose input
    // moves on two separate arcs: curves and angle series in two branches.
    let rocker = FourBar::new(
        Point2::new(0.0, 0.0),
        Point2::new(100.0, 0.0),
        80.0,
        40.0,
        90.0,
        CouplerPoint { p: 20.0, q: 25.0 },
        Assembly::Open,
    )?;
    let rsw = sweep(&rocker, 1f64.to_radians(), &SweepOptions::default());
    let rcurve = curve_branches(&rocker, &rsw);
    let rmotion = motion_poses(&rsw);
    let rpose = [rmotion[rmotion.len() / 2]];
    let rfig = linkage_figure(&rocker, &rpose, &rcurve, &[], &[], units, (560, 420));
    let rang = angle_plot(&angle_branches(&rocker, &rsw), &[], (560, 420));
    let ranim = animation_svg(&rocker, &rmotion, &rcurve, &[], units, 3.0, (560, 420));

    let cad = cad_svg(&l, &poses[0], units);
    let csv = csv_curve(&l, &motion, units);
    std::fs::write(out.join("design-1.svg"), &cad)?;
    std::fs::write(out.join("design-1-curve.csv"), &csv)?;
    std::fs::write(out.join("animation.svg"), &anim)?;
    for (name, svg) in [
        ("linkage", &fig),
        ("angles", &ang),
        ("function", &func),
        ("error", &err),
        ("motion", &mot),
        ("rocker", &rfig),
        ("rocker-angles", &rang),
        ("rocker-animation", &ranim),
    ] {
        std::fs::write(out.join(format!("fig-{name}.svg")), svg)?;
    }

    let csv_head: String = csv.lines().take(6).collect::<Vec<_>>().join("\n");
    let html = format!(
        r#"<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>crankwright drawing demo</title>
<style>
body {{ font-family: sans-serif; color: #243240; background: #f4f3ef; margin: 24px; max-width: 1140px; }}
h1 {{ font-size: 20px; }} h2 {{ font-size: 15px; margin: 18px 0 6px; }}
.grid {{ display: flex; flex-wrap: wrap; gap: 16px; }}
figure {{ margin: 0; background: #fdfcf9; border: 1px solid #dfe3e6; padding: 6px; }}
figcaption {{ font-size: 12px; color: #6b7884; padding: 4px 2px 0; }}
.cad svg {{ width: 360px; height: auto; background: white; }}
pre {{ font-size: 11px; }}
.note {{ font-size: 12px; color: #6b7884; }}
</style></head><body>
<h1>Vent opener (demo data)</h1>
<p class="note">{note}</p>
<p class="note">Footprint of the whole motion: x {lx:.1} to {hx:.1} mm, y {ly:.1} to {hy:.1} mm.</p>
<h2>Linkage at the target positions</h2>
<div class="grid"><figure>{fig}<figcaption>Position 1 solid, others faded; error vectors from reached to target.</figcaption></figure>
<figure>{anim}<figcaption>One full turn of the crank.</figcaption></figure></div>
<h2>Link angles and transmission angle</h2>
<figure>{ang}</figure>
<h2>Function generation</h2>
<div class="grid"><figure>{func}</figure><figure>{err}</figure></div>
<h2>Motion generation</h2>
<figure>{mot}</figure>
<h2>Rocking input (double-rocker variant, two branches)</h2>
<div class="grid"><figure>{rfig}</figure><figure>{rang}</figure><figure>{ranim}</figure></div>
<h2>Exports</h2>
<div class="grid"><figure class="cad">{cad_inline}<figcaption>design-1.svg (CAD, to scale)</figcaption></figure>
<pre>{csv_head}
...</pre></div>
</body></html>
"#,
        note = SAFETY_NOTE,
        lx = lo.x,
        hx = hi.x,
        ly = lo.y,
        hy = hi.y,
        cad_inline = cad.trim_start_matches("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n"),
    );
    let page = out.join("draw_demo.html");
    std::fs::write(&page, html)?;
    println!("wrote {}", page.display());

    if png {
        let abs = std::fs::canonicalize(&page)?;
        let shot = std::fs::canonicalize(&out)?.join("draw_demo.png");
        let profile = tempfile::tempdir()?;
        let status = Command::new("chromium")
            .args([
                "--headless",
                "--no-sandbox",
                "--disable-gpu",
                "--disable-quic",
                "--no-first-run",
                "--disable-background-networking",
                "--disable-component-update",
                "--disable-sync",
                "--hide-scrollbars",
            ])
            .arg(format!("--user-data-dir={}", profile.path().display()))
            .arg(format!("--screenshot={}", shot.display()))
            .arg("--window-size=1200,3000")
            .arg(format!("file://{}", abs.display()))
            .status();
        match status {
            Ok(s) if s.success() => println!("wrote {}", shot.display()),
            Ok(s) => eprintln!("chromium exited with {s}"),
            Err(e) => eprintln!("chromium not run: {e}"),
        }
    }
    Ok(())
}
