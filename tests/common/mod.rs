//! Shared by the integration tests (and the synthesis bench): running the built binary, and
//! the planted linkage whose coupler curve gives exact targets.

#![allow(dead_code)] // reason: each test crate uses its own part of this module

use std::path::PathBuf;
use std::process::{Command, Output};

use crankwright::{Assembly, CouplerPoint, FourBar};
use nalgebra::Point2;

/// The built `crankwright` binary.
pub fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_crankwright"))
}

/// The project's root folder.
pub fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Runs the binary; prints its output when it fails, for a readable test failure.
pub fn run(args: &[&str]) -> Output {
    let out = bin().args(args).output().expect("binary runs");
    if !out.status.success() {
        eprintln!(
            "stdout:\n{}\nstderr:\n{}",
            String::from_utf8_lossy(&out.stdout),
            String::from_utf8_lossy(&out.stderr)
        );
    }
    out
}

/// A crank-rocker of invented proportions whose coupler curve gives planted targets.
pub fn planted() -> FourBar {
    FourBar::new(
        Point2::new(0.0, 0.0),
        Point2::new(40.0, 5.0),
        12.0,
        35.0,
        30.0,
        CouplerPoint { p: 15.0, q: 10.0 },
        Assembly::Open,
    )
    .expect("valid planted linkage")
}
