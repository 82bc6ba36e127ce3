//! `crankwright synth` end to end: outputs, determinism across thread counts, and the
//! designs it writes being usable by `check`.

mod common;
use common::{bin, root, run};

use std::path::Path;
use std::process::Output;

fn synth(dir: &Path, threads: &str) -> Output {
    let scenario = root().join("tests/published/arc5-timed.yaml");
    run(&[
        "synth",
        scenario.to_str().unwrap(),
        "--out",
        dir.to_str().unwrap(),
        "--starts",
        "300",
        "--seed",
        "5",
        "--threads",
        threads,
        "--time-limit",
        "600",
    ])
}

#[test]
fn same_seed_and_starts_give_identical_designs_at_any_thread_count() {
    let tmp = tempfile::tempdir().unwrap();
    let a = tmp.path().join("one");
    let b = tmp.path().join("two");
    assert!(synth(&a, "1").status.success());
    assert!(synth(&b, "2").status.success());
    let ya = std::fs::read(a.join("designs.yaml")).unwrap();
    let yb = std::fs::read(b.join("designs.yaml")).unwrap();
    assert!(ya == yb, "designs.yaml differs between 1 and 2 threads");
    let sa: serde_json::Value =
        serde_json::from_slice(&std::fs::read(a.join("summary.json")).unwrap()).unwrap();
    let sb: serde_json::Value =
        serde_json::from_slice(&std::fs::read(b.join("summary.json")).unwrap()).unwrap();
    assert_eq!(sa["designs"], sb["designs"]);
    assert_eq!(sa["rejected"], sb["rejected"]);
    assert_eq!(sa["evaluations"], sb["evaluations"]);
}

#[test]
fn summary_has_the_promised_keys_and_designs_pass_check() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("run");
    let out = synth(&dir, "2");
    assert!(out.status.success());
    let s: serde_json::Value =
        serde_json::from_slice(&std::fs::read(dir.join("summary.json")).unwrap()).unwrap();
    for key in [
        "task",
        "seed",
        "starts",
        "seconds",
        "evaluations",
        "rejected",
        "designs",
    ] {
        assert!(s.get(key).is_some(), "summary.json lacks {key}");
    }
    assert_eq!(s["task"], "path");
    let designs = s["designs"].as_array().unwrap();
    assert!(!designs.is_empty());
    for d in designs {
        for key in [
            "rank",
            "linkage",
            "crank_angles",
            "sum_squared_error",
            "rms_error",
            "max_error",
            "grashof",
            "min_transmission",
        ] {
            assert!(d.get(key).is_some(), "design lacks {key}");
        }
        assert_eq!(d["crank_angles"].as_array().unwrap().len(), 5);
    }
    // Every written design is a design file that `check` accepts; the prescribed crank
    // angles (30..90 deg from the ground line) come back in the summary.
    let first = &designs[0]["crank_angles"];
    let a0 = first[0].as_f64().unwrap();
    assert!((a0 - 30.0).abs() < 1e-9, "{first}");
    for i in 1..=designs.len() {
        let out = run(&[
            "check",
            dir.join("designs.yaml").to_str().unwrap(),
            "--index",
            &i.to_string(),
            "--json",
        ]);
        assert!(out.status.success());
        let c: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
        assert_eq!(c["grashof"], designs[i - 1]["grashof"]);
    }
}

#[test]
fn refuses_a_non_empty_output_folder_without_force() {
    let tmp = tempfile::tempdir().unwrap();
    std::fs::write(tmp.path().join("keep.txt"), "mine").unwrap();
    let scenario = root().join("tests/published/arc5-timed.yaml");
    let out = bin()
        .args(["synth", scenario.to_str().unwrap(), "--out"])
        .arg(tmp.path())
        .args(["--starts", "10"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("--force"));
    assert_eq!(
        std::fs::read_to_string(tmp.path().join("keep.txt")).unwrap(),
        "mine"
    );
}
