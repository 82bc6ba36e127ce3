//! Runs the bundled published path-synthesis cases and prints, for each, the best published
//! error, crankwright's error, the time and the residual evaluations.
//!
//! `cargo run --release --example published_cases [-- --threads N] [--promote F] [--hop F] [--starts N]`
//! (`--promote` and `--hop` set the engine's deepen and hop fractions, for measuring what
//! each phase buys.)

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

fn main() -> anyhow::Result<()> {
    let args: Vec<String> = std::env::args().collect();
    let threads = args
        .iter()
        .position(|a| a == "--threads")
        .and_then(|i| args.get(i + 1))
        .and_then(|v| v.parse().ok());
    let fraction = |flag: &str| {
        args.iter()
            .position(|a| a == flag)
            .and_then(|i| args.get(i + 1))
            .and_then(|v| v.parse::<f64>().ok())
    };
    let defaults = EngineOptions::default();
    let promote_fraction = fraction("--promote").unwrap_or(defaults.promote_fraction);
    let hop_fraction = fraction("--hop").unwrap_or(defaults.hop_fraction);
    let starts = fraction("--starts").map(|v| v as usize);
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/published");
    let bars: Vec<Bar> = serde_yaml::from_str(&std::fs::read_to_string(dir.join("bars.yaml"))?)?;
    println!(
        "| case | best published error | crankwright error | time (s) | evaluations |\n|---|---|---|---|---|"
    );
    for b in &bars {
        let scenario = load_scenario(&dir.join(&b.file))?;
        let task = crankwright::task::build(&scenario)?;
        let s = scenario.search;
        let options = EngineOptions {
            seed: s.seed,
            starts: starts.unwrap_or(s.starts),
            keep: s.keep,
            time_limit: Duration::from_secs_f64(s.time_limit),
            threads,
            promote_fraction,
            hop_fraction,
            ..EngineOptions::default()
        };
        let out = synthesize(task.as_ref(), &options, &AtomicBool::new(false), &Silent);
        let best = out.designs.first().map_or(f64::NAN, |d| d.design.error);
        println!(
            "| {} | {:.6e} | {:.6e} | {:.2} | {} |",
            b.label, b.bar, best, out.seconds, out.evaluations
        );
    }
    Ok(())
}
