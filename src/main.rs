//! The `hvstack` command: reads files, wires the library's stages, prints,
//! and maps outcomes to exit status 0 (pass), 1 (review or fail) and 2 (the
//! case could not be evaluated).

use clap::{Parser, Subcommand, ValueEnum};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::time::Instant;

/// Electrostatic screening of insulation cross-sections.
///
/// Exit status: 0 = pass, 1 = review or fail (the case was evaluated and
/// something needs attention), 2 = the case could not be evaluated.
///
/// Results are screening estimates from typical material values: check every
/// design against the applicable codes and have it reviewed by a licensed or
/// otherwise qualified engineer (see SAFETY.md).
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
    ///
    /// Give one case file for its full report, or several files and folders
    /// (searched recursively for *.yaml and *.yml) for a batch: one summary
    /// line per case and the worst exit status over all of them.
    Check {
        /// Case files (YAML) or folders of them.
        #[arg(required = true)]
        paths: Vec<PathBuf>,
        /// Output format (a batch prints its summary rows as a JSON array).
        #[arg(long, value_enum, default_value = "text")]
        format: Format,
        /// Refuse grids above this many nodes (exit 2) instead of running out of time or memory.
        #[arg(long, default_value_t = hvstack::DEFAULT_MAX_NODES)]
        max_nodes: usize,
        /// Cases checked at once in a batch (each solve also uses every core).
        #[arg(long, default_value_t = 1, value_parser = clap::value_parser!(u16).range(1..=256))]
        jobs: u16,
        /// Write a JUnit-style XML report of the batch to this file (one test per case).
        #[arg(long)]
        junit: Option<PathBuf>,
        /// No progress bar.
        #[arg(long)]
        quiet: bool,
        /// Run only the I-th of N disjoint slices of the batch (I from 1 to N),
        /// e.g. from a cluster job array's task index.
        #[arg(long, value_parser = parse_shard)]
        shard: Option<(usize, usize)>,
    },
    /// Show what changed between two results of a case, part by part.
    ///
    /// Each side is a result JSON (from `check --format json`) or a case
    /// file, which is checked first. Prints each part's peak field, margin
    /// and verdict before and after, and the case verdict.
    Diff {
        /// The earlier result or case.
        old: PathBuf,
        /// The later result or case.
        new: PathBuf,
        /// Output format.
        #[arg(long, value_enum, default_value = "text")]
        format: Format,
    },
    /// Print the JSON Schema of the case format (for editor support).
    Schema,
    /// List the built-in materials with their typical values and sources.
    Materials {
        /// Output format.
        #[arg(long, value_enum, default_value = "text")]
        format: Format,
    },
}

/// Parses `I/N` with 1 ≤ I ≤ N.
fn parse_shard(s: &str) -> Result<(usize, usize), String> {
    let (i, n) = s.split_once('/').ok_or("expected I/N, e.g. 3/16")?;
    let (i, n): (usize, usize) =
        (i.trim().parse().map_err(|_| "I is not a number")?, n.trim().parse().map_err(|_| "N is not a number")?);
    if n == 0 || i == 0 || i > n {
        return Err(format!("need 1 ≤ I ≤ N, found {i}/{n}"));
    }
    Ok((i, n))
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

/// Reads, evaluates and reports one case; errors come back as the message
/// to print (exit status 2).
fn run_case(path: &Path, max_nodes: usize) -> Result<hvstack::report::CheckReport, String> {
    let file = path.display().to_string();
    let text = std::fs::read_to_string(path).map_err(|e| format!("{file}: cannot read the case: {e}"))?;
    let mut options = hvstack::Options::default();
    options.limits.max_nodes = max_nodes;
    let case = hvstack::case::parse(&text, &file).map_err(|e| e.to_string())?;
    let prepared = hvstack::prepare(case, &file, &options).map_err(|e| e.to_string())?;
    let started = Instant::now();
    let solution = prepared.solve(&options.solve).map_err(|e| e.to_string())?;
    let seconds = started.elapsed().as_secs_f64();
    Ok(prepared.report(&solution, &options, seconds))
}

/// A result as JSON: read from a .json file, or computed from a case file.
fn result_value(path: &Path) -> Result<serde_json::Value, String> {
    if path.extension().and_then(|e| e.to_str()) == Some("json") {
        let text = std::fs::read_to_string(path).map_err(|e| format!("{}: cannot read: {e}", path.display()))?;
        serde_json::from_str(&text).map_err(|e| format!("{}:{}: not a result JSON: {e}", path.display(), e.line()))
    } else {
        let report = run_case(path, hvstack::DEFAULT_MAX_NODES)?;
        serde_json::to_value(&report).map_err(|e| format!("{}: {e}", path.display()))
    }
}

/// The case files of a batch: files as given, folders searched recursively
/// for *.yaml and *.yml, sorted.
fn collect(paths: &[PathBuf]) -> Result<Vec<PathBuf>, String> {
    let mut files = Vec::new();
    for p in paths {
        if p.is_dir() {
            let mut found: Vec<PathBuf> = walkdir::WalkDir::new(p)
                .into_iter()
                .filter_map(Result::ok)
                .filter(|e| e.file_type().is_file())
                .map(|e| e.into_path())
                .filter(|f| matches!(f.extension().and_then(|e| e.to_str()), Some("yaml" | "yml")))
                .collect();
            if found.is_empty() {
                return Err(format!("{}: no case files (*.yaml, *.yml) in this folder", p.display()));
            }
            found.sort();
            files.extend(found);
        } else {
            files.push(p.clone());
        }
    }
    Ok(files)
}

/// Writes a file atomically: a temporary file beside it, then a rename, so
/// an interrupted run leaves any previous file intact.
fn write_atomically(path: &Path, contents: &str) -> Result<(), String> {
    let dir = path.parent().filter(|d| !d.as_os_str().is_empty()).unwrap_or(Path::new("."));
    let mut tmp = tempfile::NamedTempFile::new_in(dir).map_err(|e| format!("{}: cannot write: {e}", path.display()))?;
    tmp.write_all(contents.as_bytes()).map_err(|e| format!("{}: cannot write: {e}", path.display()))?;
    tmp.persist(path).map_err(|e| format!("{}: cannot write: {}", path.display(), e.error))?;
    Ok(())
}

struct BatchOptions {
    format: Format,
    max_nodes: usize,
    jobs: u16,
    junit: Option<PathBuf>,
    quiet: bool,
    shard: Option<(usize, usize)>,
}

fn batch(paths: &[PathBuf], o: &BatchOptions) -> ExitCode {
    use hvstack::report::summary;
    use rayon::prelude::*;
    let files = match collect(paths) {
        Ok(f) => f,
        Err(e) => {
            eprintln!("{e}");
            return ExitCode::from(2);
        }
    };
    // Slice I of N takes every N-th case from the sorted list: disjoint
    // slices that together cover the batch, balanced by count.
    let files: Vec<PathBuf> = match o.shard {
        Some((i, n)) => files.into_iter().enumerate().filter(|(k, _)| k % n == i - 1).map(|(_, f)| f).collect(),
        None => files,
    };
    let bar = if o.quiet { indicatif::ProgressBar::hidden() } else { indicatif::ProgressBar::new(files.len() as u64) };
    let pool = match rayon::ThreadPoolBuilder::new().num_threads(o.jobs as usize).build() {
        Ok(p) => p,
        Err(e) => {
            eprintln!("hvstack: cannot start {} jobs: {e}", o.jobs);
            return ExitCode::from(2);
        }
    };
    // Cases run in parallel; results come back in file order.
    let rows: Vec<summary::SummaryRow> = pool.install(|| {
        files
            .par_iter()
            .map(|f| {
                let name = f.display().to_string();
                let row = match run_case(f, o.max_nodes) {
                    Ok(r) => summary::row(&name, &r),
                    Err(e) => summary::error_row(&name, &e),
                };
                bar.inc(1);
                row
            })
            .collect()
    });
    bar.finish_and_clear();
    if let Some(path) = &o.junit
        && let Err(e) = write_atomically(path, &summary::junit_xml(&rows))
    {
        eprintln!("{e}");
        return ExitCode::from(2);
    }
    let code = emit(&match o.format {
        Format::Text => summary::render_summary(&rows),
        Format::Json => json(&rows),
    });
    if code != ExitCode::SUCCESS { code } else { ExitCode::from(summary::exit_status(&rows)) }
}

fn main() -> ExitCode {
    // Outputs are written whole at the end (stdout in one write, files by
    // rename), so an interrupt loses nothing: say so and stop.
    let _ = ctrlc::set_handler(|| {
        eprintln!("hvstack: interrupted; nothing was written");
        std::process::exit(130);
    });
    let cli = Cli::parse();
    match cli.command {
        Command::Check { paths, format, max_nodes, jobs, junit, quiet, shard } => {
            let single = paths.len() == 1 && !paths[0].is_dir() && junit.is_none() && shard.is_none();
            if !single {
                return batch(&paths, &BatchOptions { format, max_nodes, jobs, junit, quiet, shard });
            }
            match run_case(&paths[0], max_nodes) {
                Ok(report) => {
                    let pass = report.verdict == hvstack::report::VerdictOut::Pass;
                    let code = emit(&match format {
                        Format::Text => hvstack::report::render_text(&report),
                        Format::Json => json(&report),
                    });
                    if code != ExitCode::SUCCESS || pass { code } else { ExitCode::from(1) }
                }
                Err(message) => {
                    eprintln!("{message}");
                    ExitCode::from(2)
                }
            }
        }
        Command::Diff { old, new, format } => match (result_value(&old), result_value(&new)) {
            (Ok(a), Ok(b)) => {
                let d = hvstack::report::diff::diff(&a, &b);
                emit(&match format {
                    Format::Text => hvstack::report::diff::render_diff(&d),
                    Format::Json => json(&d),
                })
            }
            (Err(e), _) | (_, Err(e)) => {
                eprintln!("{e}");
                ExitCode::from(2)
            }
        },
        Command::Schema => emit(&hvstack::case::json_schema()),
        Command::Materials { format } => {
            let list = hvstack::report::materials();
            emit(&match format {
                Format::Text => hvstack::report::render_materials(&list),
                Format::Json => json(&list),
            })
        }
    }
}
