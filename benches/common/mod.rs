//! What the benches share: reading criterion's own estimates back after a run, so that a
//! bench can print the figures its target is stated in (ratios, exponents).

use std::path::{Path, PathBuf};

/// Criterion's output directory: `$CRITERION_HOME`, else `criterion/` in the target directory
/// that holds the running bench binary (`target/release/deps/<bench>-*`).
pub fn criterion_home() -> Option<PathBuf> {
    if let Some(h) = std::env::var_os("CRITERION_HOME") {
        return Some(PathBuf::from(h));
    }
    let exe = std::env::current_exe().ok()?;
    Some(exe.parent()?.parent()?.parent()?.join("criterion"))
}

/// Median and mean time per iteration (ns) of benchmark `group/function/parameter`, from
/// criterion's `estimates.json` of the latest run.
pub fn estimates_ns(
    home: &Path,
    group: &str,
    function: &str,
    parameter: &str,
) -> Option<(f64, f64)> {
    let path = home
        .join(group)
        .join(function)
        .join(parameter)
        .join("new")
        .join("estimates.json");
    let text = std::fs::read_to_string(path).ok()?;
    let v: serde_json::Value = serde_json::from_str(&text).ok()?;
    Some((
        v["median"]["point_estimate"].as_f64()?,
        v["mean"]["point_estimate"].as_f64()?,
    ))
}
