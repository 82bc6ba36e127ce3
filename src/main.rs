//! `crankwright`: command-line front end. Parses arguments, calls the library, prints
//! results and errors, and exits with 0 (success), 1 (the design or result does not meet
//! the requirements) or 2 (bad input or usage).

use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::Context as _;
use clap::{Parser, Subcommand};

use crankwright::report::check::CheckReport;
use crankwright::report::table::{rows_to_csv, sweep_rows};
use crankwright::{load_designs, Design, InputError};

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
    /// output swing and time ratio.
    Check {
        /// Design file (YAML).
        design: PathBuf,
        /// Which design of a list (1-based), e.g. of a designs.yaml written by `synth`.
        #[arg(long, default_value_t = 1)]
        index: usize,
        /// Print JSON instead of text.
        #[arg(long)]
        json: bool,
    },
    /// Tabulate positions, transmission angle and rates over the crank's motion.
    Sweep {
        /// Design file (YAML).
        design: PathBuf,
        /// Which design of a list (1-based).
        #[arg(long, default_value_t = 1)]
        index: usize,
        /// Crank angle step, degrees.
        #[arg(long, default_value_t = 5.0)]
        step: f64,
        /// Crank speed, revolutions per minute (positive counter-clockwise).
        #[arg(long, default_value_t = 60.0)]
        speed: f64,
        /// Also write the table as CSV to this file.
        #[arg(long)]
        csv: Option<PathBuf>,
        /// Print JSON `{"rows": [...]}` instead of text.
        #[arg(long)]
        json: bool,
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

fn run(cli: Cli) -> anyhow::Result<ExitCode> {
    match cli.command {
        Command::Check {
            design,
            index,
            json,
        } => {
            let d = pick(&design, index)?;
            let report = CheckReport::new(&d);
            if json {
                println!("{}", serde_json::to_string_pretty(&report)?);
            } else {
                print!("{}", report.to_text());
            }
            if !report.assembles {
                eprintln!(
                    "{}: the linkage cannot be assembled at any crank angle",
                    design.display()
                );
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
            if !(step.is_finite() && step > 0.0 && step <= 360.0) {
                return Err(
                    Failure::Usage(format!("--step {step}: expected degrees in (0, 360]")).into(),
                );
            }
            if !speed.is_finite() {
                return Err(
                    Failure::Usage(format!("--speed {speed}: expected a finite rpm")).into(),
                );
            }
            let d = pick(&design, index)?;
            let rows = sweep_rows(&d.linkage, step, speed);
            if let Some(path) = csv {
                std::fs::write(&path, rows_to_csv(&rows, &d.units))
                    .with_context(|| format!("writing {}", path.display()))?;
            }
            if json {
                println!(
                    "{}",
                    serde_json::to_string_pretty(&serde_json::json!({ "rows": rows }))?
                );
            } else {
                println!(
                    "{:>9} {:>9} {:>9} {:>8} {:>11} {:>11} {:>10} {:>10} {:>11} {:>11}",
                    "theta2",
                    "theta3",
                    "theta4",
                    "mu",
                    "cx",
                    "cy",
                    "omega3",
                    "omega4",
                    "alpha3",
                    "alpha4"
                );
                for r in &rows {
                    println!(
                        "{:>9.3} {:>9.3} {:>9.3} {:>8.3} {:>11.4} {:>11.4} {:>10.4} {:>10.4} {:>11.4} {:>11.4}",
                        r.theta2, r.theta3, r.theta4, r.mu, r.cx, r.cy, r.omega3, r.omega4, r.alpha3, r.alpha4
                    );
                }
            }
            // With --json too: no row at all means the design fails its basic requirement.
            if rows.is_empty() {
                eprintln!(
                    "{}: the linkage cannot be assembled at any crank angle",
                    design.display()
                );
                return Ok(ExitCode::from(1));
            }
            Ok(ExitCode::SUCCESS)
        }
    }
}

fn main() -> ExitCode {
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
            eprint!("error: {err}");
            for cause in err.chain().skip(1) {
                eprint!(": {cause}");
            }
            eprintln!();
            if err.downcast_ref::<Failure>().is_some() {
                ExitCode::from(2)
            } else {
                ExitCode::from(1)
            }
        }
    }
}
