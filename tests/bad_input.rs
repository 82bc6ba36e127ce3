//! Bad input through the binary: every command answers with exit code 2 (1 for a design that
//! does not meet the requirements) and a short message on stderr that names the file, the
//! place where known, the field, the value and what is expected; never a panic or a
//! backtrace (RUST_BACKTRACE is set for these runs so that a panic would show one).

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn run(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_crankwright"))
        .args(args)
        .env("RUST_BACKTRACE", "1")
        .output()
        .expect("binary runs")
}

/// Asserts the exit code, that stderr is short and holds every word, and that nothing
/// panicked.
fn expect(out: &Output, code: i32, words: &[&str], max_lines: usize) {
    let err = String::from_utf8_lossy(&out.stderr);
    let shown = format!(
        "exit {:?}\nstderr:\n{err}\nstdout:\n{}",
        out.status.code(),
        String::from_utf8_lossy(&out.stdout)
    );
    assert_eq!(out.status.code(), Some(code), "{shown}");
    for w in words {
        assert!(err.contains(w), "stderr lacks {w:?}\n{shown}");
    }
    for bad in ["panicked", "backtrace", "internal error", "RUST_BACKTRACE"] {
        assert!(!err.contains(bad), "stderr shows {bad:?}\n{shown}");
    }
    let lines = err.lines().filter(|l| !l.trim().is_empty()).count();
    assert!(
        (1..=max_lines).contains(&lines),
        "{lines} lines on stderr\n{shown}"
    );
}

struct Tmp {
    dir: tempfile::TempDir,
}

impl Tmp {
    fn new() -> Self {
        Tmp {
            dir: tempfile::tempdir().unwrap(),
        }
    }
    fn file(&self, name: &str, text: &str) -> PathBuf {
        let p = self.dir.path().join(name);
        std::fs::write(&p, text).unwrap();
        p
    }
    fn out(&self) -> PathBuf {
        self.dir.path().join("out")
    }
}

fn s(p: &Path) -> &str {
    p.to_str().unwrap()
}

/// Runs `synth` on scenario `text` and checks for exit 2 and `words` (the file name is
/// `s.yaml`).
fn bad_scenario(text: &str, words: &[&str]) {
    let t = Tmp::new();
    let f = t.file("s.yaml", text);
    let out = run(&["synth", s(&f), "--out", s(&t.out()), "--starts", "3"]);
    expect(&out, 2, &[&["s.yaml"], words].concat(), 2);
    assert!(!t.out().exists(), "an output folder was made for bad input");
}

/// Runs `check` and `sweep` on design `text` and checks both for `code` and `words` (the
/// file name is `d.yaml`).
fn bad_design(text: &str, code: i32, words: &[&str]) {
    let t = Tmp::new();
    let f = t.file("d.yaml", text);
    for cmd in ["check", "sweep"] {
        expect(&run(&[cmd, s(&f)]), code, &[&["d.yaml"], words].concat(), 2);
    }
}

const PATH: &str = "task:\n  path:\n    points: [[0, 0], [10, 4], [20, 10], [26, 20]]\n";

fn with(extra: &str) -> String {
    format!("{PATH}{extra}")
}

// --- scenario files: the YAML itself ---

#[test]
fn malformed_yaml_names_line_and_column() {
    bad_scenario(
        "task:\n  path:\n    points: [[0, 0], [1, 2]\nlimits: {}\n",
        &["s.yaml:4:", "did not find expected ',' or ']'"],
    );
    bad_scenario("task: [\n", &["s.yaml:1:7", "task"]);
    bad_scenario("\u{1}\u{2}binary\u{0}", &["s.yaml"]);
}

#[test]
fn misspelt_keys_suggest_the_closest_at_every_level() {
    bad_scenario(
        &PATH.replace("task:", "tsk:"),
        &["s.yaml:1:1", "unknown field `tsk`", "did you mean `task`?"],
    );
    bad_scenario(
        &PATH.replace("points", "pionts"),
        &[
            "s.yaml:3:5",
            "task.path",
            "`pionts`",
            "did you mean `points`?",
        ],
    );
    bad_scenario(
        &with("limits:\n  link_lenght: [1, 100]\n"),
        &[
            "s.yaml:5:3",
            "limits",
            "`link_lenght`",
            "did you mean `link_length`?",
        ],
    );
    bad_scenario(
        &with("limits:\n  crank: full-turn\n  min_transmision: 30\n"),
        &["s.yaml:6:3", "did you mean `min_transmission`?"],
    );
    bad_scenario(
        &with("search:\n  strats: 10\n"),
        &["s.yaml:5:3", "search", "did you mean `starts`?"],
    );
    bad_scenario(
        "task:\n  pth:\n    points: [[0, 0], [1, 1]]\n",
        &["s.yaml:2:3", "did you mean `path`?"],
    );
}

#[test]
fn missing_keys_and_wrong_types_are_named() {
    bad_scenario(
        "task:\n  path:\n    crank_angles: [0, 10]\n",
        &["task.path", "missing field `points`"],
    );
    bad_scenario("name: x\n", &["missing field `task`"]);
    bad_scenario("", &["missing field `task`"]);
    bad_scenario("- 1\n- 2\n", &["s.yaml:1:1", "invalid type: sequence"]);
    bad_scenario(
        "task:\n  path:\n    points: many\n",
        &["s.yaml:3:13", "task.path.points", "invalid type"],
    );
    bad_scenario(
        "task:\n  path:\n    points: [[0, 0], [1, two]]\n",
        &["s.yaml:3:26", "task.path.points[1][1]", "invalid type"],
    );
    bad_scenario(
        &with("search:\n  starts: -5\n"),
        &["s.yaml:5:11", "search.starts", "-5"],
    );
    bad_scenario(
        &with("limits:\n  crank: sometimes\n"),
        &[
            "s.yaml:5:10",
            "limits.crank",
            "unknown variant `sometimes`",
            "full-turn",
        ],
    );
}

#[test]
fn exactly_one_task_is_required() {
    bad_scenario(
        &with("  motion:\n    poses: [[0, 0, 0], [1, 1, 10]]\n"),
        &[
            "s.yaml:2:3",
            "task",
            "holds 2 tasks",
            "exactly one of path, function, motion",
        ],
    );
    bad_scenario("task: {}\n", &["task", "holds 0 tasks"]);
}

// --- scenario files: values ---

#[test]
fn nan_and_infinite_numbers_are_refused_where_they_stand() {
    bad_scenario(
        "task:\n  path:\n    points: [[0, 0], [.nan, 1]]\n",
        &[
            "s.yaml:3:23",
            "task.path.points[1][0]",
            "NaN",
            "not a finite number",
        ],
    );
    bad_scenario(
        &with("limits:\n  link_length: [1, .inf]\n"),
        &[
            "s.yaml:5:20",
            "limits.link_length[1]",
            "inf",
            "positive number",
        ],
    );
    bad_scenario(
        &with("limits:\n  ground_angle: -.inf\n"),
        &["s.yaml:5:17", "limits.ground_angle", "-inf"],
    );
    bad_scenario(
        "task:\n  path:\n    points: [[0, 0], [1e300, 1]]\n",
        &[
            "task.path.points[1][0]",
            "1e300",
            "magnitude",
            "check the units",
        ],
    );
}

#[test]
fn negative_zero_and_inverted_ranges_are_refused() {
    bad_scenario(
        &with("limits:\n  link_length: [-5, 10]\n"),
        &[
            "s.yaml:5:17",
            "limits.link_length[0]",
            "-5",
            "expected a positive number",
        ],
    );
    bad_scenario(
        &with("limits:\n  link_length: [0, 10]\n"),
        &["limits.link_length[0]", "0: expected a positive number"],
    );
    bad_scenario(
        &with("limits:\n  link_length: [10, 5]\n"),
        &[
            "s.yaml:5:16",
            "limits.link_length",
            "[10, 5]",
            "min must be less than max",
        ],
    );
    bad_scenario(
        &with("limits:\n  pivot_region: [[0, 0], [0, 10]]\n"),
        &[
            "s.yaml:5:17",
            "limits.pivot_region",
            "empty or inverted",
            "xmin < xmax",
        ],
    );
    bad_scenario(
        &with("limits:\n  input_pivot_region: [[10, 10], [0, 0]]\n"),
        &["limits.input_pivot_region", "empty or inverted"],
    );
    bad_scenario(
        &with("limits:\n  pivot_region: [[0, 0], [10, 10]]\n  input_pivot_region: [[20, 20], [30, 30]]\n"),
        &["limits.input_pivot_region", "does not overlap limits.pivot_region"],
    );
    bad_scenario(
        &with("limits:\n  max_length_ratio: 0.5\n"),
        &["limits.max_length_ratio", "0.5", "at least 1"],
    );
    bad_scenario(
        &with("limits:\n  min_transmission: 95\n"),
        &["limits.min_transmission", "95", "[0, 90)"],
    );
    bad_scenario(
        &with("search:\n  starts: 0\n"),
        &["search.starts", "0: expected 1 to"],
    );
    bad_scenario(
        &with("search:\n  keep: 0\n"),
        &["search.keep", "0: expected 1 to"],
    );
    bad_scenario(
        &with("search:\n  time_limit: -1\n"),
        &["search.time_limit", "-1: expected a positive number"],
    );
}

#[test]
fn path_targets_and_crank_angles_are_checked() {
    bad_scenario(
        "task:\n  path:\n    points: [[0, 0]]\n",
        &[
            "s.yaml:3:13",
            "task.path.points",
            "1 point(s): expected at least 2",
        ],
    );
    bad_scenario(
        &with("    crank_angles: [0, 10, 20]\n"),
        &[
            "s.yaml:4:19",
            "task.path.crank_angles",
            "3 angle(s) for 4 point(s)",
            "one crank angle per point",
        ],
    );
    bad_scenario(
        &with("    crank_angles: [0, 10, 20, 30, 40]\n"),
        &["5 angle(s) for 4 point(s)"],
    );
    bad_scenario(
        "task:\n  path:\n    points: [[0, 0], [5, 5], [5, 5], [9, 1]]\n",
        &[
            "s.yaml:3:30",
            "task.path.points[2]",
            "repeats the previous target (5, 5)",
        ],
    );
    bad_scenario(
        "task:\n  path:\n    points: [[2, 3], [2, 3], [2, 3]]\n",
        &["task.path.points", "all targets are the same point"],
    );
    bad_scenario(
        &with("    timing: relative\n"),
        &["task.path.timing", "needs crank_angles"],
    );
    bad_scenario(
        &with("    crank_angles: [0, 90, 450, 500]\n"),
        &[
            "task.path.crank_angles[2]",
            "450",
            "repeats the previous crank angle",
        ],
    );
    // A full turn from the first target to the last returns the coupler point to the first.
    bad_scenario(
        &with("    crank_angles: [0, 90, 180, 360]\n"),
        &[
            "task.path.crank_angles[3]",
            "full turn",
            "the last target is elsewhere",
        ],
    );
    bad_scenario(
        &with("    crank_angles: [0, 170, 340, 150]\n"),
        &[
            "task.path.crank_angles",
            "510",
            "no four-bar can meet this",
            "one turn",
        ],
    );
}

#[test]
fn motion_and_function_tasks_are_checked_when_read() {
    bad_scenario(
        "task:\n  motion:\n    poses: [[0, 0, 0]]\n",
        &["task.motion.poses", "1 pose(s): expected at least 2"],
    );
    bad_scenario(
        "task:\n  motion:\n    poses: [[0, 0], [1, 1, 10]]\n",
        &[
            "s.yaml:3:13",
            "task.motion.poses[0]",
            "has 2 entries",
            "[x, y, angle_deg]",
        ],
    );
    bad_scenario(
        "task:\n  motion:\n    poses: [[0, 0, 5], [0, 0, 5]]\n",
        &["task.motion.poses[1]", "repeats the previous pose"],
    );
    let f = |extra: &str| {
        format!("task:\n  function:\n    formula: \"x^2\"\n    input_span: 90\n{extra}")
    };
    bad_scenario(
        &f("    x: [1, 1]\n    output_span: 60\n"),
        &["s.yaml:5:8", "task.function.x", "zero width"],
    );
    bad_scenario(
        &f("    x: [1, 2]\n    output_span: 0\n"),
        &["s.yaml:6:18", "task.function.output_span", "is 0"],
    );
    bad_scenario(
        &f("    x: [1, 2]\n    output_span: 60\n    table: [[1, 1], [2, 4]]\n"),
        &["task.function", "either formula or table"],
    );
    bad_scenario(
        &f("    x: [1, 2]\n    output_span: 60\n").replace("x^2", "x^2 +"),
        &[
            "s.yaml:3:14",
            "task.function.formula",
            "missing",
            "column 6",
        ],
    );
    bad_scenario(
        &f("    x: [1, 2]\n    output_span: 60\n").replace("x^2", "foo(x)"),
        &[
            "task.function.formula",
            "unknown function 'foo'",
            "known: sin",
        ],
    );
    // Undefined for x < 0: the message says where.
    bad_scenario(
        &f("    x: [-1, 2]\n    output_span: 60\n").replace("x^2", "sqrt(x)"),
        &[
            "task.function.formula",
            "undefined on [-1, 2]",
            "first at x = -1",
        ],
    );
    bad_scenario(
        &f("    x: [1, 2]\n    output_span: 60\n").replace("x^2", "1/(x-1.5)"),
        &["task.function.formula", "undefined", "x = 1.5"],
    );
    // Equal ends: a constant, and sin over a full period (equal only up to rounding).
    bad_scenario(
        &f("    x: [1, 2]\n    output_span: 60\n").replace("x^2", "2"),
        &["task.function", "output span cannot be mapped"],
    );
    bad_scenario(
        &f("    x: [0, 6.283185307179586]\n    output_span: 60\n").replace("x^2", "sin(x)"),
        &["task.function", "equal up to rounding"],
    );
    bad_scenario(
        "task:\n  function:\n    formula: \" \"\n    x: [1, 2]\n    input_span: 90\n    output_span: 60\n",
        &["s.yaml:3:14", "task.function.formula", "is empty"],
    );
}

// --- requirements no four-bar can meet ---

#[test]
fn impossible_requirements_are_refused_before_searching() {
    // All four links within a ratio of 1 are equal: a change point, never a reliable crank.
    bad_scenario(
        &with("limits:\n  crank: full-turn\n  max_length_ratio: 1.0\n"),
        &[
            "s.yaml:6:21",
            "limits.max_length_ratio",
            "no four-bar can meet this",
        ],
    );
    // The fixed pivots are 50 apart; no link may be longer than 40.
    bad_scenario(
        &with(
            "limits:\n  link_length: [5, 40]\n  input_pivot: [0, -30]\n  output_pivot: [50, -30]\n",
        ),
        &[
            "s.yaml:5:16",
            "limits.link_length",
            "ground link",
            "50 apart",
            "no four-bar can meet this",
        ],
    );
    // The pivot regions are at least 100 apart.
    bad_scenario(
        &with("limits:\n  link_length: [5, 40]\n  input_pivot_region: [[-60, -60], [-50, -50]]\n  output_pivot_region: [[50, -60], [60, -50]]\n"),
        &["limits.link_length", "ground link", "no four-bar can meet this"],
    );
    // Both pivots in one box whose diagonal is shorter than the shortest link.
    bad_scenario(
        &with("limits:\n  link_length: [30, 90]\n  pivot_region: [[0, -20], [10, -10]]\n"),
        &[
            "limits.link_length",
            "less than the shortest link",
            "no four-bar can meet this",
        ],
    );
    // A full-turn crank with links within a ratio of 2 has a worst transmission angle of at
    // most 2 atan 2 - 90 = 36.87 deg.
    bad_scenario(
        &with("limits:\n  crank: full-turn\n  max_length_ratio: 2\n  min_transmission: 40\n"),
        &[
            "s.yaml:7:21",
            "limits.min_transmission",
            "no four-bar can meet this",
            "36.870",
            "crank: any",
        ],
    );
    // The same bound from the link-length range alone (ratio 3: at most 53.13 deg).
    bad_scenario(
        &with("limits:\n  link_length: [10, 30]\n  min_transmission: 60\n"),
        &["limits.min_transmission", "limits.link_length", "53.130"],
    );
}

#[test]
fn scales_far_from_the_targets_are_refused_as_unit_mistakes() {
    // Targets in metres (0.3 m stroke), link lengths in millimetres times a thousand.
    bad_scenario(
        "task:\n  path:\n    points: [[0, 0], [0.1, 0], [0.2, 0], [0.3, 0.05]]\nlimits:\n  link_length: [400000, 4000000]\n",
        &["s.yaml:5:16", "limits.link_length", "check the units"],
    );
    bad_scenario(
        "task:\n  path:\n    points: [[100000000, 0], [100000000.00000001, 0.00000001]]\n",
        &["task.path.points", "too little to tell them apart"],
    );
    bad_scenario(
        &with("limits:\n  link_length: [5e-324, 60]\n"),
        &[
            "s.yaml:5:16",
            "limits.link_length",
            "times min",
            "check the units",
        ],
    );
    bad_scenario(
        &with("limits:\n  input_pivot: [1e10, 0]\n"),
        &["limits.input_pivot", "check the units"],
    );
}

// --- design files ---

const DESIGN: &str = "name: vent opener\ninput_pivot: [0.0, 0.0]\noutput_pivot: [80.0, 0.0]\n\
input_link: 25.0\ncoupler: 70.0\noutput_link: 55.0\ncoupler_point: [30.0, 15.0]\nassembly: open\n";

#[test]
fn bad_design_files_are_named_with_place_and_field() {
    bad_design(
        &DESIGN.replace("coupler: 70.0", "coupler: [70.0"),
        2,
        &["d.yaml:", "did not find expected"],
    );
    bad_design(
        &DESIGN.replace("coupler_point", "coupler_pont"),
        2,
        &[
            "d.yaml:7:1",
            "`coupler_pont`",
            "did you mean `coupler_point`?",
        ],
    );
    bad_design(
        &DESIGN.replace("coupler: 70.0\n", ""),
        2,
        &["missing field `coupler`"],
    );
    bad_design(
        &DESIGN.replace("assembly: open", "assembly: sideways"),
        2,
        &[
            "d.yaml:8:11",
            "assembly",
            "unknown variant `sideways`",
            "open",
            "crossed",
        ],
    );
    bad_design(
        &DESIGN.replace("coupler: 70.0", "coupler: -70.0"),
        2,
        &["d.yaml:5:10", "coupler", "-70", "positive finite length"],
    );
    bad_design(
        &DESIGN.replace("output_link: 55.0", "output_link: .nan"),
        2,
        &["d.yaml:6:14", "output_link", "NaN"],
    );
    bad_design(
        &DESIGN.replace("[30.0, 15.0]", "[30.0, .inf]"),
        2,
        &["d.yaml:7:23", "coupler_point.q", "inf"],
    );
    bad_design(
        &DESIGN.replace("[80.0, 0.0]", "[0.0, 0.0]"),
        2,
        &["d.yaml:3:15", "coincide"],
    );
    bad_design(
        &DESIGN.replace("[80.0, 0.0]", "[1e300, 0.0]"),
        2,
        &["output_pivot[0]", "check the units"],
    );
    bad_design("[]\n", 2, &["holds no design"]);
    bad_design("42\n", 2, &["invalid type"]);
}

// A linkage whose coupler and output link together (1 + 1) cannot reach across a ground link
// of 10 from a crank of 1: |A - O4| >= 9 > r3 + r4 at every crank angle (closed-form
// assembly condition, domain notes).
#[test]
fn a_design_that_never_assembles_fails_check_and_sweep_with_exit_1() {
    let never = "input_pivot: [0, 0]\noutput_pivot: [10, 0]\ninput_link: 1\ncoupler: 1\n\
                 output_link: 1\nassembly: open\n";
    bad_design(never, 1, &["cannot be assembled at any crank angle"]);
}

#[test]
fn command_line_mistakes_exit_2() {
    let t = Tmp::new();
    let d = t.file("d.yaml", DESIGN);
    let sc = t.file("s.yaml", PATH);
    let missing = t.dir.path().join("nope.yaml");
    expect(
        &run(&["check", s(&missing)]),
        2,
        &["nope.yaml", "cannot read"],
        2,
    );
    expect(&run(&["check", s(t.dir.path())]), 2, &["cannot read"], 2);
    expect(
        &run(&["check", s(&d), "--index", "3"]),
        2,
        &["--index 3", "holds 1 design"],
        2,
    );
    expect(&run(&["sweep", s(&d), "--step", "0"]), 2, &["--step 0"], 2);
    expect(&run(&["sweep", s(&d), "--step", "1e-9"]), 2, &["--step"], 2);
    expect(
        &run(&["sweep", s(&d), "--speed", "inf"]),
        2,
        &["--speed"],
        2,
    );
    let out = s(&t.out()).to_string();
    for (flag, value) in [
        ("--starts", "0"),
        ("--starts", "1000000000000"),
        ("--time-limit", "NaN"),
        ("--time-limit=-3", ""),
        ("--threads", "0"),
        ("--threads", "100000"),
    ] {
        let mut args = vec!["synth", s(&sc), "--out", &out, flag];
        if !value.is_empty() {
            args.push(value);
        }
        expect(&run(&args), 2, &[flag.split('=').next().unwrap()], 2);
    }
    expect(&run(&["synth", s(&sc), "--sedd", "3"]), 2, &["--sedd"], 6);
    expect(&run(&["mangle"]), 2, &["mangle"], 6);
    expect(&run(&[]), 2, &["Usage"], 12);
    // An --out that is a file, not a folder.
    expect(
        &run(&["synth", s(&sc), "--out", s(&d), "--starts", "3"]),
        2,
        &["d.yaml", "not a folder"],
        2,
    );
    assert_eq!(std::fs::read_to_string(&d).unwrap(), DESIGN);
}

#[test]
fn force_writes_into_a_non_empty_output_folder() {
    let t = Tmp::new();
    let sc = t.file("s.yaml", PATH);
    std::fs::create_dir(t.out()).unwrap();
    std::fs::write(t.out().join("old.txt"), "old").unwrap();
    let dir = t.out();
    let args = [
        "synth",
        s(&sc),
        "--out",
        s(&dir),
        "--starts",
        "20",
        "--seed",
        "2",
    ];
    expect(&run(&args), 2, &["not empty", "--force"], 2);
    let out = run(&[&args[..], &["--force"]].concat());
    assert!(matches!(out.status.code(), Some(0 | 1)), "{out:?}");
    let summary: serde_json::Value =
        serde_json::from_slice(&std::fs::read(t.out().join("summary.json")).unwrap()).unwrap();
    assert_eq!(summary["starts"], 20);
    let yaml = std::fs::read_to_string(t.out().join("designs.yaml")).unwrap();
    let _: serde_yaml::Value = serde_yaml::from_str(&yaml).unwrap();
    // Only the results and the file that was there: no temporary files left behind.
    let mut names: Vec<String> = std::fs::read_dir(t.out())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    for must in ["designs.yaml", "old.txt", "report.html", "summary.json"] {
        assert!(names.iter().any(|n| n == must), "{must} missing: {names:?}");
    }
    for n in &names {
        let result = n.starts_with("design-") && (n.ends_with(".svg") || n.ends_with("-curve.csv"));
        let known =
            ["designs.yaml", "old.txt", "report.html", "summary.json"].contains(&n.as_str());
        assert!(
            result || known,
            "unexpected file {n} (a temporary file left behind?)"
        );
    }
}
