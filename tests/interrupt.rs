//! Nothing lost: a `synth` run ended by Ctrl-C (SIGINT) or by its time limit stops within
//! about a second and still leaves whole, readable result files, marked as interrupted.

use std::path::Path;
use std::process::{Child, Command, ExitStatus, Stdio};
use std::time::{Duration, Instant};

use crankwright::design::parse_designs;
use crankwright::synthesis::output::Summary;

/// A path task heavy enough that a million starts keep the search busy for minutes (18
/// targets, free timing).
const BUSY: &str = "name: busy\ntask:\n  path:\n    points: [[0.5, 1.1], [0.4, 1.1], [0.3, 1.1], \
[0.2, 1.0], [0.1, 0.9], [0.05, 0.75], [0.02, 0.6], [0.0, 0.5], [0.0, 0.4], [0.03, 0.3], \
[0.1, 0.25], [0.15, 0.2], [0.2, 0.3], [0.3, 0.4], [0.4, 0.5], [0.5, 0.7], [0.6, 0.9], \
[0.6, 1.0]]\nsearch:\n  starts: 1000000\n";

fn spawn(dir: &Path, time_limit: &str) -> Child {
    let scenario = dir.join("busy.yaml");
    std::fs::write(&scenario, BUSY).unwrap();
    Command::new(env!("CARGO_BIN_EXE_crankwright"))
        .arg("synth")
        .arg(&scenario)
        .arg("--out")
        .arg(dir.join("out"))
        .args(["--time-limit", time_limit])
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("binary starts")
}

/// Waits for `child` at most `limit`; kills it and fails when it does not end.
fn wait_at_most(child: &mut Child, limit: Duration) -> (ExitStatus, Duration) {
    let t = Instant::now();
    loop {
        if let Some(status) = child.try_wait().unwrap() {
            return (status, t.elapsed());
        }
        if t.elapsed() > limit {
            let _ = child.kill();
            let _ = child.wait();
            panic!("synth still running {limit:?} after it was told to stop");
        }
        std::thread::sleep(Duration::from_millis(20));
    }
}

/// The files a stopped run leaves: whole, parseable, marked interrupted with `reason`, and no
/// temporary files beside them.
fn check_results(out: &Path, reason: &str) -> Summary {
    let text = std::fs::read_to_string(out.join("summary.json")).unwrap();
    let summary: Summary = serde_json::from_str(&text).unwrap();
    assert!(summary.interrupted, "{text}");
    assert_eq!(summary.stop_reason.as_deref(), Some(reason));
    assert!(summary.starts_run < summary.starts);
    let yaml = std::fs::read_to_string(out.join("designs.yaml")).unwrap();
    if summary.designs.is_empty() {
        let v: serde_yaml::Value = serde_yaml::from_str(&yaml).unwrap();
        assert!(v.as_sequence().is_some_and(|s| s.is_empty()), "{yaml}");
    } else {
        let designs = parse_designs(&out.join("designs.yaml"), &yaml).unwrap();
        assert_eq!(designs.len(), summary.designs.len());
    }
    let mut names: Vec<String> = std::fs::read_dir(out)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    for must in ["designs.yaml", "report.html", "summary.json"] {
        assert!(names.iter().any(|n| n == must), "{must} missing: {names:?}");
    }
    for n in &names {
        let export = n.starts_with("design-") && (n.ends_with(".svg") || n.ends_with("-curve.csv"));
        let known = ["designs.yaml", "report.html", "summary.json"].contains(&n.as_str());
        assert!(
            export || known,
            "unexpected file {n} (a temporary file left behind?)"
        );
    }
    // The report says the search was cut short.
    let html = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert!(
        html.to_lowercase().contains("stopped early"),
        "report not marked"
    );
    summary
}

#[test]
fn ctrl_c_stops_the_search_and_keeps_the_best_designs() {
    let tmp = tempfile::tempdir().unwrap();
    let mut child = spawn(tmp.path(), "600");
    std::thread::sleep(Duration::from_millis(1500));
    assert!(
        child.try_wait().unwrap().is_none(),
        "finished before the signal"
    );
    let sent = Command::new("kill")
        .args(["-INT", &child.id().to_string()])
        .status()
        .unwrap();
    assert!(sent.success());
    let (status, latency) = wait_at_most(&mut child, Duration::from_secs(10));
    // Within about a second of the signal (2 s allowed for a loaded machine).
    assert!(latency < Duration::from_secs(2), "took {latency:?} to stop");
    assert!(matches!(status.code(), Some(0 | 1)), "{status:?}");
    let mut stderr = String::new();
    std::io::Read::read_to_string(child.stderr.as_mut().unwrap(), &mut stderr).unwrap();
    assert!(!stderr.contains("panicked"), "{stderr}");
    let summary = check_results(&tmp.path().join("out"), "interrupted");
    assert_eq!(status.code() == Some(0), !summary.designs.is_empty());
}

#[test]
fn the_time_limit_stops_the_search_within_a_second() {
    let tmp = tempfile::tempdir().unwrap();
    let mut child = spawn(tmp.path(), "1");
    let (status, _) = wait_at_most(&mut child, Duration::from_secs(15));
    assert!(matches!(status.code(), Some(0 | 1)), "{status:?}");
    let summary = check_results(&tmp.path().join("out"), "time-limit");
    // The search's own clock: stopped within a second of the limit.
    assert!(summary.seconds < 2.0, "search ran {} s", summary.seconds);
}

/// A task whose every residual evaluation takes 50 ms: one start's refinement would take
/// seconds, so stopping "between starts" would be far too late.
struct Slow;

impl crankwright::task::Task for Slow {
    fn kind(&self) -> &'static str {
        "slow"
    }
    fn dim(&self) -> usize {
        2
    }
    fn n_residuals(&self) -> usize {
        2
    }
    fn bounds(&self) -> (Vec<f64>, Vec<f64>) {
        (vec![-10.0; 2], vec![10.0; 2])
    }
    fn sample(&self, rng: &mut rand_chacha::ChaCha8Rng) -> (Vec<f64>, crankwright::task::Mode) {
        use rand::Rng as _;
        let x = vec![rng.random_range(-10.0..10.0), rng.random_range(-10.0..10.0)];
        let mode = crankwright::task::Mode {
            assembly: crankwright::Assembly::Open,
            direction: 1,
        };
        (x, mode)
    }
    fn residuals(&self, x: &[f64], _: crankwright::task::Mode, out: &mut [f64]) {
        std::thread::sleep(Duration::from_millis(50));
        // Rosenbrock's valley as least squares: slow to cross.
        out[0] = 10.0 * (x[1] - x[0] * x[0]);
        out[1] = 1.0 - x[0];
    }
    fn verify(
        &self,
        _: &[f64],
        _: crankwright::task::Mode,
    ) -> Result<crankwright::task::Verified, crankwright::task::Rejection> {
        Err(crankwright::task::Rejection::Degenerate)
    }
}

#[test]
fn the_stop_flag_ends_a_refinement_in_progress() {
    use std::sync::atomic::{AtomicBool, Ordering};
    let stop = AtomicBool::new(false);
    let options = crankwright::synthesis::EngineOptions {
        starts: 4,
        threads: Some(2),
        quick_iterations: 1000,
        time_limit: Duration::from_secs(600),
        ..Default::default()
    };
    let t = Instant::now();
    let outcome = std::thread::scope(|s| {
        s.spawn(|| {
            std::thread::sleep(Duration::from_millis(300));
            stop.store(true, Ordering::SeqCst);
        });
        crankwright::synthesis::synthesize(&Slow, &options, &stop, &crankwright::synthesis::Silent)
    });
    // 300 ms, then at most one 50 ms evaluation per thread.
    assert!(
        t.elapsed() < Duration::from_secs(1),
        "took {:?}",
        t.elapsed()
    );
    assert_eq!(
        outcome.stopped,
        Some(crankwright::synthesis::StopReason::Interrupted)
    );
    // The abandoned starts are neither run nor counted as rejected.
    assert_eq!(outcome.starts_run, 0);
    assert!(outcome.rejected.is_empty());
}
