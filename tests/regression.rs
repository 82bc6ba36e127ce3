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
