//! What a new user trips over: the other kind of file, tabs, a missing file, numbers echoed
//! back, an empty table before an error. Each message is checked through the binary.

mod common;
use common::{bin, root};

use std::path::Path;

/// Exit code, standard output and standard error of a run.
fn run(args: &[&str]) -> (Option<i32>, String, String) {
    let out = bin().args(args).output().expect("binary runs");
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn bundled(name: &str) -> String {
    root().join("scenarios").join(name).display().to_string()
}

// `check` on a scenario said "unknown field `task` (did you mean `name`?)", `synth` on a design
// "unknown field `input_pivot`": the file is now recognised and the right command named.
#[test]
fn the_other_kind_of_file_names_the_command_for_it() {
    let scenario = bundled("vent-opener.yaml");
    for cmd in ["check", "sweep"] {
        let (code, out, err) = run(&[cmd, &scenario]);
        assert_eq!(code, Some(2), "{err}");
        assert!(out.is_empty(), "{out}");
        assert!(
            err.contains("this is a scenario file")
                && err.contains(&format!("crankwright synth {scenario}")),
            "{err}"
        );
        assert!(!err.contains("did you mean"), "{err}");
    }
    let tmp = tempfile::tempdir().unwrap();
    let design = bundled("vent-opener.design.yaml");
    let out_dir = tmp.path().join("o");
    let (code, _, err) = run(&["synth", &design, "--out", out_dir.to_str().unwrap()]);
    assert_eq!(code, Some(2), "{err}");
    assert!(
        err.contains("this is a design file")
            && err.contains(&format!("crankwright check {design}")),
        "{err}"
    );
    assert!(!out_dir.exists(), "nothing is written for a wrong file");
}

// YAML forbids tabs in indentation (YAML 1.2, section 6.1); the parser only said it "found
// character that cannot start any token".
#[test]
fn a_tab_in_the_indentation_is_named_with_its_line() {
    let tmp = tempfile::tempdir().unwrap();
    let scenario = tmp.path().join("tabs.yaml");
    std::fs::write(
        &scenario,
        "task:\n  path:\n\tpoints: [[0, 0], [10, 4], [20, 10]]\n",
    )
    .unwrap();
    let design = tmp.path().join("tabs.design.yaml");
    std::fs::write(
        &design,
        "input_pivot: [0, 0]\noutput_pivot:\n  \t[80, 0]\ninput_link: 25\ncoupler: 70\n\
         output_link: 55\nassembly: open\n",
    )
    .unwrap();
    let s = scenario.to_str().unwrap();
    let d = design.to_str().unwrap();
    for (args, at) in [
        (vec!["synth", s], format!("{s}:3:1")),
        (vec!["check", d], format!("{d}:3:3")),
        (vec!["sweep", d], format!("{d}:3:3")),
    ] {
        let (code, _, err) = run(&args);
        assert_eq!(code, Some(2), "{err}");
        assert_eq!(
            err.trim_end(),
            format!("error: {at}: tabs are not allowed for indentation in YAML, use spaces")
        );
    }
}

// A missing file printed the operating system's words twice: once in the message and once
// more as its cause.
#[test]
fn a_missing_file_is_said_once() {
    let tmp = tempfile::tempdir().unwrap();
    let missing = tmp.path().join("nope.yaml");
    let m = missing.to_str().unwrap();
    for args in [vec!["check", m], vec!["sweep", m], vec!["synth", m]] {
        let (code, _, err) = run(&args);
        assert_eq!(code, Some(2), "{err}");
        assert!(err.contains(&format!("{m}: cannot read")), "{err}");
        let os = std::io::Error::from(std::io::ErrorKind::NotFound).to_string();
        let words = "No such file or directory";
        assert_eq!(err.matches(words).count(), 1, "{err} ({os})");
        assert_eq!(err.lines().count(), 1, "{err}");
    }
}

// `limits.min_transmission: 60` was echoed as 59.99999999999999 deg, the round trip through
// radians; the number is now printed as given.
#[test]
fn numbers_are_echoed_as_given() {
    let tmp = tempfile::tempdir().unwrap();
    let s = tmp.path().join("s.yaml");
    std::fs::write(
        &s,
        "task:\n  path:\n    points: [[0, 0], [10, 4], [20, 10]]\n\
         limits:\n  link_length: [10, 30]\n  min_transmission: 60\n",
    )
    .unwrap();
    let (code, _, err) = run(&["synth", s.to_str().unwrap()]);
    assert_eq!(code, Some(2), "{err}");
    assert!(
        err.contains("limits.min_transmission: 60 deg with crank: full-turn"),
        "{err}"
    );
    assert!(
        err.contains("within a ratio of 3 (limits.link_length)"),
        "{err}"
    );
    assert!(!err.contains("59.99"), "{err}");
}

// `sweep` on a design that cannot be assembled printed the table's header, then the error.
#[test]
fn sweep_prints_no_table_for_a_design_that_never_assembles() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path().join("short.yaml");
    // r3 + r4 = 30 < r1 - r2 = 90: the coupler and output never reach across (triangle
    // inequality). Invented test data.
    std::fs::write(
        &d,
        "input_pivot: [0, 0]\noutput_pivot: [100, 0]\ninput_link: 10\ncoupler: 15\n\
         output_link: 15\nassembly: open\n",
    )
    .unwrap();
    let csv = tmp.path().join("t.csv");
    let (code, out, err) = run(&["sweep", d.to_str().unwrap(), "--csv", csv.to_str().unwrap()]);
    assert_eq!(code, Some(1));
    assert_eq!(out, "");
    assert!(err.contains("cannot be assembled"), "{err}");
    assert!(!Path::new(&csv).exists(), "no empty CSV written");
}
