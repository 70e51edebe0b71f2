//! The `hvstack` command: reads files, wires the library's stages, prints,
//! and maps outcomes to exit status 0 (pass), 1 (review or fail) and 2 (the
//! case could not be evaluated).

use clap::{Parser, Subcommand, ValueEnum};
use std::io::Write;
use std::path::PathBuf;
use std::process::ExitCode;
use std::time::Instant;

/// Electrostatic screening of insulation cross-sections.
///
/// Exit status: 0 = pass, 1 = review or fail (the case was evaluated and
/// something needs attention), 2 = the case could not be evaluated.
#[derive(Parser)]
#[command(name = "hvstack", version, about, long_about)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Clone, Copy, ValueEnum)]
enum Format {
    /// Aligned tables for reading.
    Text,
    /// The result model as JSON (nothing else on stdout).
    Json,
}

#[derive(Subcommand)]
enum Command {
    /// Solve a case and assess every part against its typical breakdown strength.
    ///
    /// Prints the peak and mean field of every dielectric part, its margin
    /// (strength / peak field) and verdict, the electrodes' potentials and
    /// charges, capacitance, energy, findings and a caution. Lengths in the
    /// case are mm, potentials kV; fields are reported in kV/mm.
    Check {
        /// The case file (YAML).
        case: PathBuf,
        /// Output format.
        #[arg(long, value_enum, default_value = "text")]
        format: Format,
        /// Refuse grids above this many nodes (exit 2) instead of running out of time or memory.
        #[arg(long, default_value_t = hvstack::DEFAULT_MAX_NODES)]
        max_nodes: usize,
    },
    /// List the built-in materials with their typical values and sources.
    Materials {
        /// Output format.
        #[arg(long, value_enum, default_value = "text")]
        format: Format,
    },
}

/// Prints to stdout; a closed pipe is not an error.
fn emit(text: &str) -> ExitCode {
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|_| out.flush()) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("hvstack: cannot write the output: {e}");
            ExitCode::from(2)
        }
    }
}

fn json<T: serde::Serialize>(value: &T) -> String {
    // The result model has only plain fields, so serialisation cannot fail.
    let mut s = serde_json::to_string_pretty(value).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"));
    s.push('\n');
    s
}

fn check(path: &PathBuf, format: Format, max_nodes: usize) -> Result<(String, bool), String> {
    let file = path.display().to_string();
    let text = std::fs::read_to_string(path).map_err(|e| format!("{file}: cannot read the case: {e}"))?;
    let mut options = hvstack::Options::default();
    options.limits.max_nodes = max_nodes;
    let case = hvstack::case::parse(&text, &file).map_err(|e| e.to_string())?;
    let prepared = hvstack::prepare(case, &file, &options).map_err(|e| e.to_string())?;
    let started = Instant::now();
    let solution = prepared.solve(&options.solve).map_err(|e| e.to_string())?;
    let seconds = started.elapsed().as_secs_f64();
    let report = prepared.report(&solution, &options, seconds);
    let pass = report.verdict == hvstack::report::VerdictOut::Pass;
    let text = match format {
        Format::Text => hvstack::report::render_text(&report),
        Format::Json => json(&report),
    };
    Ok((text, pass))
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    match cli.command {
        Command::Check { case, format, max_nodes } => match check(&case, format, max_nodes) {
            Ok((text, pass)) => {
                let code = emit(&text);
                if code != ExitCode::SUCCESS || pass { code } else { ExitCode::from(1) }
            }
            Err(message) => {
                eprintln!("{message}");
                ExitCode::from(2)
            }
        },
        Command::Materials { format } => {
            let list = hvstack::report::materials();
            emit(&match format {
                Format::Text => hvstack::report::render_materials(&list),
                Format::Json => json(&list),
            })
        }
    }
}
