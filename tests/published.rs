//! The published path-synthesis test cases (tests/published/): crankwright must match or
//! beat the best published error of each with its fixed seed. Sources are named in each
//! scenario file and in tests/published/bars.yaml.

use std::path::Path;
use std::sync::atomic::AtomicBool;
use std::time::Duration;

use crankwright::scenario::load_scenario;
use crankwright::synthesis::{synthesize, EngineOptions, Silent};

#[derive(serde::Deserialize)]
struct Bar {
    file: String,
    bar: f64,
    label: String,
}

#[test]
fn published_cases_match_or_beat_the_best_published_error() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/published");
    let bars: Vec<Bar> =
        serde_yaml::from_str(&std::fs::read_to_string(dir.join("bars.yaml")).unwrap()).unwrap();
    assert_eq!(bars.len(), 5);
    let mut failures = Vec::new();
    for b in &bars {
        let scenario = load_scenario(&dir.join(&b.file)).unwrap();
        let task = crankwright::task::build(&scenario).unwrap();
        let s = scenario.search;
        let options = EngineOptions {
            seed: s.seed,
            starts: s.starts,
            keep: s.keep,
            // No time limit here: the result must not depend on the machine's speed.
            time_limit: Duration::from_secs(3600),
            ..EngineOptions::default()
        };
        let out = synthesize(task.as_ref(), &options, &AtomicBool::new(false), &Silent);
        let best = out
            .designs
            .first()
            .map_or(f64::INFINITY, |d| d.design.error);
        // "Match": equal to the published figure within its printed precision (1e-6 relative).
        if best > b.bar * (1.0 + 1e-6) {
            failures.push(format!(
                "{} ({}): {best:e} > published {:e}",
                b.file, b.label, b.bar
            ));
        }
    }
    assert!(failures.is_empty(), "{failures:#?}");
}
