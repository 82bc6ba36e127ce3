//! Regression tests for fixed bugs, each with the cause.

use std::io::{BufRead, BufReader};
use std::process::{Command, Stdio};

// `crankwright sweep ... | head -2` used to end in "internal error" (exit 101): Rust ignores
// SIGPIPE, so writing to a closed pipe returns an error that `println!` turns into a panic.
// Output now goes through a writer that ends the program quietly on a broken pipe.
#[test]
fn a_closed_output_pipe_ends_quietly() {
    let design = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/scenarios/vent-opener.design.yaml"
    );
    let mut child = Command::new(env!("CARGO_BIN_EXE_crankwright"))
        .args(["sweep", design, "--step", "0.01"])
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let stdout = child.stdout.take().unwrap();
    let mut first = String::new();
    BufReader::new(stdout).read_line(&mut first).unwrap();
    assert!(first.contains("theta2"));
    // The reader (and with it the pipe) is dropped here, while 36,000 rows remain to write.
    let out = child.wait_with_output().unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(0), "{err}");
    assert!(
        !err.contains("internal error") && !err.contains("panicked"),
        "{err}"
    );
}

fn synth_best(yaml: &str) -> (i32, serde_json::Value) {
    let dir = tempfile::tempdir().unwrap();
    let scenario = dir.path().join("s.yaml");
    std::fs::write(&scenario, yaml).unwrap();
    let out = dir.path().join("out");
    let o = Command::new(env!("CARGO_BIN_EXE_crankwright"))
        .args([
            "synth",
            scenario.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
        ])
        .output()
        .unwrap();
    let code = o.status.code().unwrap_or(-1);
    let summary = std::fs::read(out.join("summary.json"))
        .ok()
        .and_then(|b| serde_json::from_slice(&b).ok())
        .unwrap_or(serde_json::Value::Null);
    (code, summary)
}

// Prescribed crank angles [0, 200, 300] were unwrapped in the direction of the first step
// taken the short way (-160 deg), giving 0, -160, -420 and the refusal "span 420 deg";
// running counter-clockwise they span 300 deg. The shorter direction is now chosen.
#[test]
fn crank_angles_with_a_long_first_step_are_accepted() {
    let (code, s) = synth_best(
        "task:\n  path:\n    points: [[0, 0], [50, 20], [80, 60]]\n    crank_angles: [0, 200, 300]\n\
         limits:\n  crank: any\nsearch: {starts: 200, seed: 1}\n",
    );
    assert_eq!(code, 0);
    assert_eq!(
        s["designs"][0]["crank_angles"],
        serde_json::json!([0.0, 200.0, 300.0])
    );
}

// Function generators were always placed with O2 at the origin, so a pivot region elsewhere
// rejected every candidate; the placement now puts both pivots in their regions.
#[test]
fn function_generator_is_placed_in_the_pivot_region() {
    let (code, s) = synth_best(
        "task:\n  function:\n    formula: \"sqrt(x - 14)\"\n    x: [15, 35]\n    input_span: 90\n\
         \x20   output_span: 60\n    precision_points: 3\nlimits:\n  link_length: [20, 200]\n\
         \x20 pivot_region: [[500, 500], [800, 800]]\n  crank: any\nsearch: {starts: 300, seed: 5}\n",
    );
    assert_eq!(code, 0, "{s}");
    for pivot in ["input_pivot", "output_pivot"] {
        let p = &s["designs"][0]["linkage"][pivot];
        for c in 0..2 {
            let v = p[c].as_f64().unwrap();
            assert!((500.0..=800.0).contains(&v), "{pivot} {p}");
        }
    }
}

// A fixed input pivot far from the targets was also held to the default search box around
// the targets, adding a constant penalty that stopped the refinement early (best rms 1.5 mm
// on this case); fixed pivots are no longer penalised and the free pivot is searched within
// reach of the fixed one. Exact solutions exist (5 targets, free timing): the rms must be ~0.
#[test]
fn a_fixed_pivot_far_from_the_targets_does_not_spoil_the_fit() {
    let (code, s) = synth_best(
        "task:\n  path:\n    points: [[0, 0], [40, 10], [80, 40], [100, 80], [90, 100]]\n\
         limits:\n  link_length: [10, 2000]\n  input_pivot: [50, -1000]\n  crank: any\n\
         search: {seed: 3, starts: 1000}\n",
    );
    assert_eq!(code, 0);
    let rms = s["designs"][0]["rms_error"].as_f64().unwrap();
    assert!(rms < 1e-8, "rms {rms}");
}

// A motion task whose frame origin stays put (the body only turns) had an internal scale of
// 1 unit whatever the link lengths allowed, so a millimetre-sized search never reached links
// of 50-400 mm: the best design missed the angles by 51 deg. The scale now comes from the
// limits (here the longest link). The poses are met when the design reproduces them.
#[test]
fn a_body_that_only_turns_is_searched_at_the_scale_of_its_links() {
    let (code, s) = synth_best(
        "units: mm\ntask:\n  motion:\n    poses: [[500, 500, 0], [500, 500, 30], [500, 500, 60], \
         [500, 500, 90]]\nlimits:\n  link_length: [50, 400]\n  crank: any\n\
         search: {seed: 1, starts: 500}\n",
    );
    assert_eq!(code, 0, "{s}");
    let best = &s["designs"][0];
    let angle = best["max_angle_error"].as_f64().unwrap();
    let max = best["max_error"].as_f64().unwrap();
    assert!(
        angle < 1.0 && max < 1.0,
        "angle {angle} deg, position {max} mm"
    );
}
