//! `crankwright`: command-line front end. Parses arguments, calls the library, prints
//! results and errors, and exits with 0 (success), 1 (the design or result does not meet
//! the requirements) or 2 (bad input or usage).

use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;
use std::time::Duration;

use anyhow::Context as _;
use clap::{Parser, Subcommand};
use indicatif::{ProgressBar, ProgressStyle};

use crankwright::fsutil::write_atomic;
use crankwright::kinematics::analysis::Turn;
use crankwright::report::check::{CheckOptions, CheckReport};
use crankwright::report::deg_wrapped;
use crankwright::report::table::{
    rows_to_csv, sweep_rows, SweepRow, ANGLES, SWEEP_FORMAT, SWEEP_FORMAT_VERSION,
};
use crankwright::report::{read_results, write_report, REPORT_FILE};
use crankwright::scenario::{load_scenario, MAX_STARTS};
use crankwright::synthesis::output::{design_of, write_results, Summary};
use crankwright::synthesis::{synthesize, EngineOptions, Observer, Progress};
use crankwright::{load_designs, Design, InputError};

/// `print!` through [`say`], returning its error with `?`.
macro_rules! out {
    ($($arg:tt)*) => {
        say(format_args!($($arg)*))?
    };
}

/// `println!` through [`say`].
macro_rules! outln {
    ($($arg:tt)*) => {{
        out!($($arg)*);
        out!("\n");
    }};
}

/// Dimensional synthesis and verification of planar four-bar linkages.
#[derive(Parser, Debug)]
#[command(name = "crankwright", version, about, long_about = None)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand, Debug)]
enum Command {
    /// Summarise a design: Grashof class, range of motion, toggles, transmission angle,
    /// the output's limit positions and time ratio. Crank and output angles are degrees
    /// counter-clockwise from the ground line O2 -> O4.
    Check {
        /// Design file (YAML).
        design: PathBuf,
        /// Which design of a list (1-based), e.g. of a designs.yaml written by `synth`.
        #[arg(long, default_value_t = 1)]
        index: usize,
        /// Crank speed, revolutions per minute (positive counter-clockwise): the running
        /// direction names the slower and faster strokes of the time ratio.
        #[arg(long, default_value_t = 60.0, allow_negative_numbers = true)]
        speed: f64,
        /// Working range of the crank: transmission angle extremes over the crank's motion
        /// from FROM counter-clockwise to TO, degrees from the ground line.
        #[arg(long = "crank-range", num_args = 2, value_names = ["FROM", "TO"], allow_negative_numbers = true)]
        crank_range: Option<Vec<f64>>,
        /// Print JSON instead of text.
        #[arg(long)]
        json: bool,
    },
    /// Tabulate positions, transmission angle and rates over the crank's motion, at crank
    /// angles from the ground line O2 -> O4.
    Sweep {
        /// Design file (YAML).
        design: PathBuf,
        /// Which design of a list (1-based).
        #[arg(long, default_value_t = 1)]
        index: usize,
        /// Crank angle step, degrees (rows at multiples of it from the ground line).
        #[arg(long, default_value_t = 5.0)]
        step: f64,
        /// Crank speed, revolutions per minute (positive counter-clockwise).
        #[arg(long, default_value_t = 60.0, allow_negative_numbers = true)]
        speed: f64,
        /// Also write the table as CSV to this file.
        #[arg(long)]
        csv: Option<PathBuf>,
        /// Print JSON (`format`, `format_version`, `angles`, `rows`) instead of text.
        #[arg(long)]
        json: bool,
    },
    /// Search for designs that do what a scenario asks, verify and rank them, and write
    /// designs.yaml and summary.json into the output folder.
    Synth {
        /// Scenario file (YAML).
        scenario: PathBuf,
        /// Output folder (default: out/<scenario file stem>).
        #[arg(long)]
        out: Option<PathBuf>,
        /// Random seed (overrides the scenario's search.seed).
        #[arg(long)]
        seed: Option<u64>,
        /// Random starts (overrides search.starts).
        #[arg(long)]
        starts: Option<usize>,
        /// Seconds before the search stops with what it has (overrides search.time_limit).
        #[arg(long = "time-limit")]
        time_limit: Option<f64>,
        /// Worker threads (default: one per core).
        #[arg(long)]
        threads: Option<usize>,
        /// Write into a non-empty output folder.
        #[arg(long)]
        force: bool,
    },
    /// Redraw report.html and the design-N.svg / design-N-curve.csv exports of a folder
    /// written by `synth`, from its summary.json and designs.yaml, without searching again.
    Report {
        /// Results folder of a `synth` run.
        dir: PathBuf,
    },
}

/// A failure that maps to an exit code.
#[derive(Debug, thiserror::Error)]
enum Failure {
    /// Bad input or usage: exit 2.
    #[error(transparent)]
    Input(#[from] InputError),
    #[error("{0}")]
    Usage(String),
}

/// Most worker threads `synth --threads` accepts.
const MAX_THREADS: usize = 1024;

/// Smallest `sweep --step`, degrees (360,000 rows a turn).
const MIN_STEP: f64 = 1e-3;

fn pick(path: &Path, index: usize) -> Result<Design, Failure> {
    let mut designs = load_designs(path)?;
    let n = designs.len();
    if index == 0 || index > n {
        return Err(Failure::Usage(format!(
            "{}: --index {index} is out of range: the file holds {n} design{}",
            path.display(),
            if n == 1 { "" } else { "s" }
        )));
    }
    Ok(designs.swap_remove(index - 1))
}

struct Bar(ProgressBar);

impl Observer for Bar {
    fn progress(&self, p: &Progress) {
        if self.0.length() != Some(p.total as u64) {
            self.0.set_length(p.total as u64);
            self.0.set_position(0);
        }
        self.0.set_position(p.done as u64);
        self.0.set_message(match p.best_error {
            Some(e) => format!("{}: best error {e:.6e}", p.phase),
            None => format!("{}: no design accepted yet", p.phase),
        });
    }
}

#[allow(clippy::too_many_arguments)] // reason: one value per command-line flag
fn synth(
    scenario_path: &Path,
    out: Option<PathBuf>,
    seed: Option<u64>,
    starts: Option<usize>,
    time_limit: Option<f64>,
    threads: Option<usize>,
    force: bool,
) -> anyhow::Result<ExitCode> {
    let mut scenario = load_scenario(scenario_path).map_err(Failure::from)?;
    if let Some(s) = seed {
        scenario.search.seed = s;
    }
    if let Some(n) = starts {
        if n == 0 || n > MAX_STARTS {
            return Err(Failure::Usage(format!("--starts {n}: expected 1 to {MAX_STARTS}")).into());
        }
        scenario.search.starts = n;
    }
    if let Some(t) = time_limit {
        if !(t.is_finite() && t > 0.0) {
            return Err(
                Failure::Usage(format!("--time-limit {t}: expected positive seconds")).into(),
            );
        }
        scenario.search.time_limit = t;
    }
    if let Some(n) = threads.filter(|n| !(1..=MAX_THREADS).contains(n)) {
        return Err(Failure::Usage(format!("--threads {n}: expected 1 to {MAX_THREADS}")).into());
    }
    let task = crankwright::task::build(&scenario)
        .map_err(|e| Failure::Usage(format!("{}: {e}", scenario_path.display())))?;
    let dir = out.unwrap_or_else(|| {
        let stem = scenario_path
            .file_stem()
            .map_or_else(|| "run".into(), |s| s.to_string_lossy().into_owned());
        PathBuf::from("out").join(stem.trim_end_matches(".scenario"))
    });
    if dir.exists() && !dir.is_dir() {
        return Err(Failure::Usage(format!(
            "{}: --out names a file, not a folder; choose another --out",
            dir.display()
        ))
        .into());
    }
    if dir.exists() {
        let non_empty = std::fs::read_dir(&dir)
            .with_context(|| format!("reading {}", dir.display()))?
            .next()
            .is_some();
        if non_empty && !force {
            return Err(Failure::Usage(format!(
                "{}: output folder is not empty; choose another --out or pass --force",
                dir.display()
            ))
            .into());
        }
    }
    std::fs::create_dir_all(&dir).map_err(|e| {
        Failure::Usage(format!(
            "{}: cannot create the output folder: {e}",
            dir.display()
        ))
    })?;
    let stop = Arc::new(AtomicBool::new(false));
    {
        let stop = Arc::clone(&stop);
        // The first Ctrl-C ends the search, which then writes what it has; a second one
        // aborts at once (files already written stay whole: they are written atomically).
        // A second handler cannot be installed (e.g. in tests); the time limit still applies.
        let _ = ctrlc::set_handler(move || {
            if stop.swap(true, Ordering::SeqCst) {
                eprintln!("crankwright: aborted");
                std::process::exit(130);
            }
            eprintln!(
                "crankwright: stopping; writing the best designs so far (Ctrl-C again aborts)"
            );
        });
    }
    let s = &scenario.search;
    let options = EngineOptions {
        seed: s.seed,
        starts: s.starts,
        // Saturates for limits beyond what a Duration holds.
        time_limit: Duration::try_from_secs_f64(s.time_limit).unwrap_or(Duration::MAX),
        keep: s.keep,
        threads,
        ..EngineOptions::default()
    };
    let bar = ProgressBar::new(s.starts as u64);
    bar.set_style(
        ProgressStyle::with_template("{spinner} [{elapsed_precise}] {bar:30} {pos}/{len} {msg}")
            .expect("static template is valid"),
    );
    let outcome = synthesize(task.as_ref(), &options, &stop, &Bar(bar.clone()));
    bar.finish_and_clear();
    let summary = Summary::new(&scenario, &outcome, s.seed, s.starts);
    write_results(&dir, &scenario, &outcome, &summary)
        .with_context(|| format!("writing results into {}", dir.display()))?;
    let designs: Vec<Design> = outcome
        .designs
        .iter()
        .map(|r| design_of(&scenario, r.rank, &r.design.linkage))
        .collect();
    write_report(&dir, &summary, &designs)
        .with_context(|| format!("writing the report into {}", dir.display()))?;
    out!("{}", crankwright::report::summary_text(&summary));
    outln!("written: {}", dir.display());
    Ok(if outcome.designs.is_empty() {
        ExitCode::from(1)
    } else {
        ExitCode::SUCCESS
    })
}

fn report(dir: &Path) -> anyhow::Result<ExitCode> {
    let (summary, designs) = read_results(dir).map_err(|e| Failure::Usage(e.to_string()))?;
    write_report(dir, &summary, &designs)
        .with_context(|| format!("writing the report into {}", dir.display()))?;
    outln!("written: {}", dir.join(REPORT_FILE).display());
    Ok(ExitCode::SUCCESS)
}

fn run(cli: Cli) -> anyhow::Result<ExitCode> {
    match cli.command {
        Command::Synth {
            scenario,
            out,
            seed,
            starts,
            time_limit,
            threads,
            force,
        } => synth(&scenario, out, seed, starts, time_limit, threads, force),
        Command::Report { dir } => report(&dir),
        Command::Check {
            design,
            index,
            speed,
            crank_range,
            json,
        } => {
            if !speed.is_finite() {
                return Err(
                    Failure::Usage(format!("--speed {speed}: expected a finite rpm")).into(),
                );
            }
            let working_range = match crank_range.as_deref() {
                None => None,
                Some(&[from, to]) if from.is_finite() && to.is_finite() && (from - to).abs() > 0.0 => {
                    Some((from, to))
                }
                Some(v) => {
                    return Err(Failure::Usage(format!(
                        "--crank-range {}: expected two different finite crank angles, degrees from the ground line",
                        v.iter().map(|x| x.to_string()).collect::<Vec<_>>().join(" ")
                    ))
                    .into())
                }
            };
            let d = pick(&design, index)?;
            let report = CheckReport::with(
                &d,
                &CheckOptions {
                    speed_rpm: speed,
                    working_range,
                },
            );
            if json {
                outln!("{}", serde_json::to_string_pretty(&report)?);
            } else {
                out!("{}", report.to_text());
            }
            if !report.assembles {
                eprintln!(
                    "{}: the linkage cannot be assembled at any crank angle",
                    design.display()
                );
                return Ok(ExitCode::from(1));
            }
            if let Some(p) = report
                .working_range
                .as_ref()
                .and_then(|w| w.problem.as_ref())
            {
                eprintln!("{}: --crank-range: {p}", design.display());
                return Ok(ExitCode::from(1));
            }
            Ok(ExitCode::SUCCESS)
        }
        Command::Sweep {
            design,
            index,
            step,
            speed,
            csv,
            json,
        } => {
            if !(step.is_finite() && (MIN_STEP..=360.0).contains(&step)) {
                return Err(Failure::Usage(format!(
                    "--step {step}: expected degrees from {MIN_STEP} to 360"
                ))
                .into());
            }
            if !speed.is_finite() {
                return Err(
                    Failure::Usage(format!("--speed {speed}: expected a finite rpm")).into(),
                );
            }
            let d = pick(&design, index)?;
            let rows = sweep_rows(&d.linkage, step, speed);
            // No row at all means the design fails its basic requirement: say so before
            // printing or writing an empty table.
            if rows.is_empty() {
                if CheckReport::new(&d).assembles {
                    eprintln!(
                        "{}: the linkage assembles only over crank ranges narrower than --step {step}; try a smaller step",
                        design.display()
                    );
                } else {
                    eprintln!(
                        "{}: the linkage cannot be assembled at any crank angle",
                        design.display()
                    );
                }
                return Ok(ExitCode::from(1));
            }
            if let Some(path) = csv {
                write_atomic(&path, rows_to_csv(&rows, &d.units).as_bytes())
                    .with_context(|| format!("writing {}", path.display()))?;
            }
            if json {
                outln!(
                    "{}",
                    serde_json::to_string_pretty(&serde_json::json!({
                        "format": SWEEP_FORMAT,
                        "format_version": SWEEP_FORMAT_VERSION,
                        "angles": ANGLES,
                        "units": d.units,
                        "ground_line_global_deg": deg_wrapped(d.linkage.ground_angle()),
                        "rows": rows,
                    }))?
                );
            } else {
                print_sweep(&d, &rows, speed)?;
            }
            Ok(ExitCode::SUCCESS)
        }
    }
}

/// The sweep table as text: a line stating the angles' reference, then one line per row
/// under a header, with a line naming each branch of a rocking input before its rows.
fn print_sweep(d: &Design, rows: &[SweepRow], speed: f64) -> anyhow::Result<()> {
    outln!(
        "# angles: degrees counter-clockwise from the ground line O2 -> O4 (which points {:.3} deg from +x), in [0, 360); mu at B between coupler and output",
        deg_wrapped(d.linkage.ground_angle())
    );
    outln!(
        "# coupler point in {}; rates for the crank at {} rpm ({}), rad/s and rad/s^2",
        d.units,
        crankwright::input::short(speed.abs()),
        Turn::of_sign(speed).name()
    );
    let rocking = !CheckReport::new(d).crank_turns_fully;
    outln!(
        "{:>9} {:>9} {:>9} {:>8} {:>11} {:>11} {:>10} {:>10} {:>11} {:>11}",
        "crank",
        "coupler",
        "output",
        "mu",
        "x",
        "y",
        "w_coupler",
        "w_output",
        "a_coupler",
        "a_output"
    );
    let mut branch = 0;
    for r in rows {
        if rocking && r.branch != branch {
            branch = r.branch;
            outln!(
                "# branch {branch}: the crank rocks; rows in counter-clockwise order of the crank"
            );
        }
        // "toggle" where the rates are unbounded.
        let [w3, w4, a3, a4] = r
            .rates()
            .map(|v| v.map_or("toggle".to_string(), |v| format!("{v:.4}")));
        let a = &r.angles;
        outln!(
            "{:>9.3} {:>9.3} {:>9.3} {:>8.3} {:>11.4} {:>11.4} {w3:>10} {w4:>10} {a3:>11} {a4:>11}",
            a.crank_from_ground_deg,
            a.coupler_from_ground_deg,
            a.output_from_ground_deg,
            a.transmission_deg,
            r.coupler_point_x,
            r.coupler_point_y
        );
    }
    Ok(())
}

/// Last resort: a panic is a bug, never the user's fault; say so on one line instead of
/// printing a backtrace (the process then exits with code 101).
fn install_panic_hook() {
    std::panic::set_hook(Box::new(|info| {
        let payload = info.payload();
        let what = payload
            .downcast_ref::<&str>()
            .map(|s| (*s).to_string())
            .or_else(|| payload.downcast_ref::<String>().cloned())
            .unwrap_or_default();
        let at = info
            .location()
            .map(|l| format!(" ({}:{})", l.file(), l.line()))
            .unwrap_or_default();
        eprintln!("crankwright: internal error, please report it: {what}{at}");
    }));
}

/// Writes to standard output. A closed pipe (e.g. `crankwright sweep ... | head`) ends the
/// program quietly with success, as command-line tools do; other write errors are reported.
fn say(args: std::fmt::Arguments) -> anyhow::Result<()> {
    use std::io::Write as _;
    match std::io::stdout().lock().write_fmt(args) {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => std::process::exit(0),
        Err(e) => Err(anyhow::Error::new(e).context("writing to standard output")),
    }
}

/// An error with its causes on one line, leaving out a cause whose text the message before
/// it already holds (an error that prints its source, such as "cannot read: ...").
fn error_text(err: &anyhow::Error) -> String {
    let mut text = err.to_string();
    for cause in err.chain().skip(1) {
        let c = cause.to_string();
        if !text.contains(&c) {
            text.push_str(": ");
            text.push_str(&c);
        }
    }
    text
}

fn main() -> ExitCode {
    install_panic_hook();
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    match run(cli) {
        Ok(code) => code,
        Err(err) => {
            eprintln!("error: {}", error_text(&err));
            if err.downcast_ref::<Failure>().is_some() {
                ExitCode::from(2)
            } else {
                ExitCode::from(1)
            }
        }
    }
}
