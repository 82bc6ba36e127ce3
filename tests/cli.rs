//! End-to-end tests of the command-line tool: run the built binary in a temporary
//! directory and check its output, files and exit codes.

use std::path::{Path, PathBuf};
use std::process::Command;

use approx::assert_relative_eq;
use serde_json::Value;

/// A scratch directory and a way to run `crankwright` in it.
struct Cli {
    dir: tempfile::TempDir,
}

/// What a run produced.
#[derive(Debug)]
struct Run {
    code: i32,
    stdout: String,
    stderr: String,
}

impl Cli {
    fn new() -> Self {
        Self {
            dir: tempfile::tempdir().expect("temporary directory"),
        }
    }

    /// Path of `name` inside the scratch directory.
    fn path(&self, name: &str) -> PathBuf {
        self.dir.path().join(name)
    }

    /// Writes `text` to `name` in the scratch directory and returns its path.
    fn write(&self, name: &str, text: &str) -> PathBuf {
        let p = self.path(name);
        std::fs::write(&p, text).expect("write test file");
        p
    }

    /// Runs the binary with `args` in the scratch directory.
    fn run(&self, args: &[&str]) -> Run {
        let out = Command::new(env!("CARGO_BIN_EXE_crankwright"))
            .args(args)
            .current_dir(self.dir.path())
            .output()
            .expect("run crankwright");
        Run {
            code: out.status.code().expect("exited normally"),
            stdout: String::from_utf8(out.stdout).expect("UTF-8 stdout"),
            stderr: String::from_utf8(out.stderr).expect("UTF-8 stderr"),
        }
    }
}

impl Run {
    /// Asserts the exit code, showing both streams when it differs.
    fn expect_code(&self, code: i32) -> &Self {
        assert_eq!(
            self.code, code,
            "exit code {} (expected {code})\n--- stdout\n{}\n--- stderr\n{}",
            self.code, self.stdout, self.stderr
        );
        self
    }

    fn json(&self) -> Value {
        serde_json::from_str(&self.stdout)
            .unwrap_or_else(|e| panic!("stdout is not JSON ({e}):\n{}", self.stdout))
    }
}

/// Whether two lines of comma-separated cells agree: text cells exactly, numbers to a few
/// ulps (JSON and CSV print the same float, but serde_json's default parser may land one
/// ulp away).
fn same_cells(x: &str, y: &str) -> bool {
    let (xs, ys): (Vec<&str>, Vec<&str>) = (x.split(',').collect(), y.split(',').collect());
    xs.len() == ys.len()
        && xs
            .iter()
            .zip(&ys)
            .all(|(a, b)| match (a.parse::<f64>(), b.parse::<f64>()) {
                (Ok(u), Ok(v)) => (u - v).abs() <= 4.0 * f64::EPSILON * u.abs().max(v.abs()),
                _ => a == b,
            })
}

/// Asserts two CSV texts agree line by line (see [`same_cells`]), printing a readable diff
/// of the lines that differ (with their numbers) when they do not.
fn assert_same_lines(expected: &str, actual: &str) {
    let (e, a): (Vec<&str>, Vec<&str>) = (expected.lines().collect(), actual.lines().collect());
    let mut diff = String::new();
    for i in 0..e.len().max(a.len()) {
        let (x, y) = (e.get(i), a.get(i));
        let same = match (x, y) {
            (Some(x), Some(y)) => same_cells(x, y),
            _ => false,
        };
        if !same {
            diff.push_str(&format!(
                "line {}:\n  - {}\n  + {}\n",
                i + 1,
                x.unwrap_or(&"(none)"),
                y.unwrap_or(&"(none)")
            ));
        }
    }
    assert!(
        diff.is_empty(),
        "texts differ (- expected, + actual):\n{diff}"
    );
}

/// A bundled scenario, by file name.
fn scenario(name: &str) -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("scenarios")
        .join(name)
        .display()
        .to_string()
}

const VENT: &str = "vent-opener.design.yaml";

/// A design whose coupler and output cannot reach across the ground at any crank angle:
/// r3 + r4 = 30 < r1 - r2 = 90 (triangle inequality). Invented test data.
const UNREACHABLE: &str = "name: too short\ninput_pivot: [0.0, 0.0]\n\
    output_pivot: [100.0, 0.0]\ninput_link: 10.0\ncoupler: 15.0\noutput_link: 15.0\n\
    assembly: open\n";

#[test]
fn check_reports_every_bundled_scenario() {
    let cli = Cli::new();
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("scenarios");
    let mut n = 0;
    for entry in std::fs::read_dir(dir).expect("scenarios directory") {
        let path = entry.expect("entry").path();
        if !path.to_string_lossy().ends_with(".design.yaml") {
            continue;
        }
        n += 1;
        let r = cli.run(&["check", &path.display().to_string()]);
        r.expect_code(0);
        assert!(r.stdout.contains("Grashof class: "), "{}", r.stdout);
        assert!(
            r.stdout.contains("note: Kinematic design only"),
            "{}",
            r.stdout
        );
    }
    assert!(n >= 3, "expected the bundled demo designs, found {n}");
}

// The vent opener: ground 80, crank 25, coupler 70, output 55. Grashof: s + l = 25 + 80 <
// p + q = 70 + 55 with the crank shortest, a crank-rocker. The transmission angle of a
// crank-rocker is extreme when crank and ground are in line, |A - O4| = r1 -+ r2: cos mu =
// (r3^2 + r4^2 - (r1 -+ r2)^2) / (2 r3 r4) (law of cosines; the standard result, e.g.
// Norton, "Design of Machinery", section 3.3, from memory).
#[test]
fn check_text_and_json_agree_with_hand_formulas() {
    let cli = Cli::new();
    let text = cli.run(&["check", &scenario(VENT)]);
    text.expect_code(0);
    assert!(
        text.stdout.contains("Grashof class: crank-rocker"),
        "{}",
        text.stdout
    );
    assert!(
        text.stdout.contains("crank: turns fully"),
        "{}",
        text.stdout
    );
    let (r1, r2, r3, r4): (f64, f64, f64, f64) = (80.0, 25.0, 70.0, 55.0);
    let mu = |d: f64| {
        ((r3 * r3 + r4 * r4 - d * d) / (2.0 * r3 * r4))
            .acos()
            .to_degrees()
    };
    let (mu_min, mu_max) = (mu(r1 - r2), mu(r1 + r2));
    assert!(
        text.stdout.contains(&format!(
            "mu min {mu_min:.3} deg at crank 0.000 deg, max {mu_max:.3} deg at crank 180.000 deg"
        )),
        "{}",
        text.stdout
    );

    let json = cli.run(&["check", &scenario(VENT), "--json"]);
    json.expect_code(0);
    let v = json.json();
    assert_eq!(v["grashof"], "crank-rocker");
    assert_eq!(v["crank_turns_fully"], true);
    assert_eq!(v["assembles"], true);
    assert_relative_eq!(v["ground_link"].as_f64().unwrap(), r1, epsilon = 1e-12);
    assert_relative_eq!(
        v["transmission"]["min_deg"].as_f64().unwrap(),
        mu_min,
        epsilon = 1e-6
    );
    assert_relative_eq!(
        v["transmission"]["max_deg"].as_f64().unwrap(),
        mu_max,
        epsilon = 1e-6
    );
    // Time ratio: the crank turns 180 + beta one way and 180 - beta the other, beta the
    // angle between its two limit positions (crank and coupler in line, |O2 B| = r3 +- r2).
    let tr = &v["time_ratio"];
    let (slow, fast) = (
        tr["slower"]["crank_rotation_deg"].as_f64().unwrap(),
        tr["faster"]["crank_rotation_deg"].as_f64().unwrap(),
    );
    assert_relative_eq!(slow + fast, 360.0, epsilon = 1e-9);
    let limit = |d: f64| {
        ((d * d + r1 * r1 - r4 * r4) / (2.0 * d * r1))
            .acos()
            .to_degrees()
    };
    let beta = limit(r3 - r2) - limit(r3 + r2);
    assert_relative_eq!(slow, 180.0 + beta, epsilon = 1e-6);
    // The report rounds the two crank rotations to 1e-9 degree, not the ratio.
    assert_relative_eq!(
        tr["ratio"].as_f64().unwrap(),
        slow / fast,
        max_relative = 1e-10
    );
    assert!(v["caution"]
        .as_str()
        .unwrap()
        .contains("Kinematic design only"));
}

/// The keys of a `sweep --json` row (version 2).
const ROW_KEYS: [&str; 14] = [
    "branch",
    "crank_from_ground_deg",
    "coupler_from_ground_deg",
    "output_from_ground_deg",
    "transmission_deg",
    "coupler_point_x",
    "coupler_point_y",
    "coupler_rate_rad_s",
    "output_rate_rad_s",
    "coupler_accel_rad_s2",
    "output_accel_rad_s2",
    "crank_global_deg",
    "coupler_global_deg",
    "output_global_deg",
];

#[test]
fn sweep_json_rows_have_exactly_the_documented_keys() {
    let cli = Cli::new();
    let r = cli.run(&["sweep", &scenario(VENT), "--json"]);
    r.expect_code(0);
    let v = r.json();
    let top: Vec<&String> = v.as_object().expect("an object").keys().collect();
    assert_eq!(
        top,
        [
            "angles",
            "format",
            "format_version",
            "ground_line_global_deg",
            "rows",
            "units"
        ]
    );
    assert_eq!(v["format"], "crankwright sweep");
    assert_eq!(v["format_version"], 2);
    let rows = v["rows"].as_array().expect("rows");
    // Default step 5 degrees over a full turn of the crank.
    assert_eq!(rows.len(), 72);
    let mut want = ROW_KEYS;
    want.sort_unstable();
    for (k, row) in rows.iter().enumerate() {
        let mut keys: Vec<&str> = row
            .as_object()
            .unwrap()
            .keys()
            .map(String::as_str)
            .collect();
        keys.sort_unstable();
        assert_eq!(keys, want);
        let get = |key: &str| {
            row[key]
                .as_f64()
                .unwrap_or_else(|| panic!("{key} is a number"))
        };
        // The vent opener's ground line is the +x axis: both references agree.
        assert_relative_eq!(get("crank_from_ground_deg"), 5.0 * k as f64, epsilon = 1e-9);
        assert_relative_eq!(get("crank_global_deg"), 5.0 * k as f64, epsilon = 1e-9);
        for key in ["coupler_from_ground_deg", "output_from_ground_deg"] {
            assert!((0.0..360.0).contains(&get(key)), "{key} = {}", get(key));
        }
        assert!((0.0..=180.0).contains(&get("transmission_deg")));
    }
    // At 60 rpm (2 pi rad/s) and crank angle 0: the crank pin at (25, 0) is 55 from O4,
    // so the triangle A-B-O4 has sides 70, 55, 55 and mu = acos(70 / 110) (isosceles).
    let row0 = &rows[0];
    assert_relative_eq!(
        row0["transmission_deg"].as_f64().unwrap(),
        (70.0f64 / 110.0).acos().to_degrees(),
        epsilon = 1e-9
    );
    // Twice the crank speed: twice the angular velocities, four times the accelerations.
    let fast = cli.run(&["sweep", &scenario(VENT), "--json", "--speed", "120"]);
    let f0 = &fast.expect_code(0).json()["rows"][0];
    for (key, factor) in [
        ("coupler_rate_rad_s", 2.0),
        ("output_rate_rad_s", 2.0),
        ("coupler_accel_rad_s2", 4.0),
        ("output_accel_rad_s2", 4.0),
    ] {
        let (a, b) = (row0[key].as_f64().unwrap(), f0[key].as_f64().unwrap());
        assert_relative_eq!(b, factor * a, epsilon = 1e-9, max_relative = 1e-12);
    }
}

#[test]
fn sweep_csv_file_matches_the_json_rows() {
    let cli = Cli::new();
    let r = cli.run(&[
        "sweep",
        &scenario(VENT),
        "--json",
        "--step",
        "10",
        "--csv",
        "table.csv",
    ]);
    r.expect_code(0);
    let csv = std::fs::read_to_string(cli.path("table.csv")).expect("CSV written");
    let rows = r.json()["rows"].as_array().unwrap().clone();
    // The CSV names the coupler point's columns with the unit; the JSON gives it once.
    let mut expected = ROW_KEYS
        .map(|k| match k {
            "coupler_point_x" | "coupler_point_y" => format!("{k}_mm"),
            _ => k.to_string(),
        })
        .join(",");
    expected.push('\n');
    for row in &rows {
        let cells: Vec<String> = ROW_KEYS
            .iter()
            .map(|k| row[*k].as_f64().unwrap().to_string())
            .collect();
        expected.push_str(&cells.join(","));
        expected.push('\n');
    }
    assert_same_lines(&expected, &csv);
    assert_eq!(csv.lines().count(), 37);
}

#[test]
fn sweep_text_lists_one_line_per_grid_angle() {
    let cli = Cli::new();
    let r = cli.run(&[
        "sweep",
        &scenario("seed-tray-lifter.design.yaml"),
        "--step",
        "2",
    ]);
    r.expect_code(0);
    let json = cli.run(&[
        "sweep",
        &scenario("seed-tray-lifter.design.yaml"),
        "--step",
        "2",
        "--json",
    ]);
    let n = json.expect_code(0).json()["rows"].as_array().unwrap().len();
    // The lifter's input rocks on two arcs of about 60.6 degrees: ~30 grid angles each.
    assert!((58..=62).contains(&n), "{n} rows");
    // Lines starting with '#' state the angles' reference and name each branch.
    let table: Vec<&str> = r.stdout.lines().filter(|l| !l.starts_with('#')).collect();
    assert_eq!(table.len(), n + 1, "{}", r.stdout);
    assert!(r
        .stdout
        .starts_with("# angles: degrees counter-clockwise from the ground line"));
    assert_eq!(r.stdout.matches("# branch ").count(), 2, "{}", r.stdout);
}

// Regression: `sweep --json` exited 0 for a design that never assembles, because the
// check for an empty table sat in the text branch only.
#[test]
fn a_design_that_never_assembles_exits_1() {
    let cli = Cli::new();
    let f = cli.write("unreachable.design.yaml", UNREACHABLE);
    let f = f.to_str().unwrap();
    for args in [
        vec!["check", f],
        vec!["check", f, "--json"],
        vec!["sweep", f],
        vec!["sweep", f, "--json"],
    ] {
        let r = cli.run(&args);
        r.expect_code(1);
        assert!(
            r.stderr.contains("cannot be assembled"),
            "{args:?}: {}",
            r.stderr
        );
    }
    let v = cli.run(&["check", f, "--json"]).json();
    assert_eq!(v["assembles"], false);
    // `sweep` prints no table (not even its header) before saying so.
    for args in [vec!["sweep", f], vec!["sweep", f, "--json"]] {
        let r = cli.run(&args);
        assert!(r.stdout.is_empty(), "{args:?}: {}", r.stdout);
    }
}

#[test]
fn bad_input_exits_2_naming_the_problem() {
    let cli = Cli::new();
    let vent = std::fs::read_to_string(scenario(VENT)).unwrap();
    // Malformed YAML: an unclosed flow sequence.
    let broken = cli.write("broken.yaml", &vent.replace("[80.0, 0.0]", "[80.0, 0.0"));
    // A misspelt key: unknown keys are an error, with the closest known one suggested.
    let typo = cli.write("typo.yaml", &vent.replace("output_link:", "output_lenk:"));
    // A length that is not positive.
    let negative = cli.write(
        "negative.yaml",
        &vent.replace("coupler: 70.0", "coupler: -70.0"),
    );
    let cases = [
        (broken, vec!["broken.yaml"]),
        (typo, vec!["typo.yaml", "output_lenk", "output_link"]),
        (negative, vec!["negative.yaml", "coupler", "-70"]),
    ];
    for (path, words) in cases {
        for cmd in ["check", "sweep"] {
            let r = cli.run(&[cmd, path.to_str().unwrap()]);
            r.expect_code(2);
            for w in &words {
                assert!(
                    r.stderr.contains(w),
                    "{cmd} {path:?}: stderr lacks {w:?}:\n{}",
                    r.stderr
                );
            }
        }
    }
    let missing = cli.run(&["check", "no-such-file.yaml"]);
    missing.expect_code(2);
    assert!(
        missing.stderr.contains("no-such-file.yaml"),
        "{}",
        missing.stderr
    );
    let bad_step = cli.run(&["sweep", &scenario(VENT), "--step", "0"]);
    bad_step.expect_code(2);
    assert!(bad_step.stderr.contains("--step"), "{}", bad_step.stderr);
    cli.run(&["frobnicate"]).expect_code(2);
}
