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
        /// Write a review folder: field maps (SVG, PNG), an HTML page, the JSON
        /// result, line CSVs and a VTK file; a batch gets one subfolder per case
        /// and an index page. The folder is replaced whole, and only if it is new,
        /// empty or an earlier review folder.
        #[arg(long, value_name = "DIR")]
        report: Option<PathBuf>,
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

type ReviewFiles = Vec<hvstack::review::ReviewFile>;

/// Reads, evaluates and reports one case, with its review files when
/// asked; errors come back as the message to print (exit status 2).
fn run_case(
    path: &Path,
    max_nodes: usize,
    review: bool,
) -> Result<(hvstack::report::CheckReport, Option<ReviewFiles>), String> {
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
    let files = if review {
        Some(
            hvstack::review::files(&prepared, &solution, &report, &file)
                .map_err(|e| format!("{file}: cannot build the review files: {e}"))?,
        )
    } else {
        None
    };
    Ok((report, files))
}

/// Review folders being staged, removed if the run is interrupted.
static STAGED: std::sync::Mutex<Vec<PathBuf>> = std::sync::Mutex::new(Vec::new());

/// Marks a folder as an hvstack review folder, which `--report` may replace.
const REVIEW_MARKER: &str = ".hvstack-review";

/// A review folder built beside its destination and swapped in whole by
/// `commit`, so an interrupted run leaves the previous review intact.
struct Staging {
    dir: tempfile::TempDir,
    dest: PathBuf,
}

impl Staging {
    fn new(dest: &Path) -> Result<Staging, String> {
        let shown = dest.display();
        if dest.exists() {
            let entries =
                std::fs::read_dir(dest).map_err(|e| format!("{shown}: cannot use as a review folder: {e}"))?;
            let empty = entries.count() == 0;
            if !empty && !dest.join(REVIEW_MARKER).is_file() {
                return Err(format!(
                    "{shown}: exists and is not an hvstack review folder; name a new or empty folder (it is replaced \
                     whole on every run)"
                ));
            }
        }
        let parent = dest.parent().filter(|d| !d.as_os_str().is_empty()).unwrap_or(Path::new("."));
        std::fs::create_dir_all(parent).map_err(|e| format!("{}: cannot create: {e}", parent.display()))?;
        let dir = tempfile::Builder::new()
            .prefix(".hvstack-review-")
            .tempdir_in(parent)
            .map_err(|e| format!("{}: cannot write: {e}", parent.display()))?;
        if let Ok(mut staged) = STAGED.lock() {
            staged.push(dir.path().to_path_buf());
        }
        Ok(Staging { dir, dest: dest.to_path_buf() })
    }

    /// Writes files into `sub` ("" for the top) of the staged folder.
    fn write(&self, sub: &str, files: &[hvstack::review::ReviewFile]) -> Result<(), String> {
        let dir = self.dir.path().join(sub);
        std::fs::create_dir_all(&dir).map_err(|e| format!("{}: cannot create: {e}", self.dest.join(sub).display()))?;
        for f in files {
            std::fs::write(dir.join(&f.name), &f.bytes)
                .map_err(|e| format!("{}: cannot write: {e}", self.dest.join(sub).join(&f.name).display()))?;
        }
        Ok(())
    }

    /// Swaps the staged folder in place of the destination.
    fn commit(self) -> Result<(), String> {
        let shown = self.dest.display().to_string();
        let marker = "Written by hvstack check --report; the whole folder is replaced on every run.\n";
        std::fs::write(self.dir.path().join(REVIEW_MARKER), marker).map_err(|e| format!("{shown}: {e}"))?;
        let staged = self.dir.keep();
        if let Ok(mut list) = STAGED.lock() {
            list.retain(|p| p != &staged);
        }
        let old = if self.dest.exists() {
            let parent = staged.parent().unwrap_or(Path::new("."));
            let old = tempfile::Builder::new()
                .prefix(".hvstack-old-")
                .tempdir_in(parent)
                .map_err(|e| format!("{shown}: cannot replace: {e}"))?
                .keep();
            let old = old.join("review");
            std::fs::rename(&self.dest, &old).map_err(|e| format!("{shown}: cannot replace: {e}"))?;
            Some(old)
        } else {
            None
        };
        std::fs::rename(&staged, &self.dest).map_err(|e| format!("{shown}: cannot replace: {e}"))?;
        if let Some(old) = old
            && let Some(holder) = old.parent()
        {
            let _ = std::fs::remove_dir_all(holder);
        }
        Ok(())
    }
}

/// A result as JSON: read from a .json file, or computed from a case file.
fn result_value(path: &Path) -> Result<serde_json::Value, String> {
    if path.extension().and_then(|e| e.to_str()) == Some("json") {
        let text = std::fs::read_to_string(path).map_err(|e| format!("{}: cannot read: {e}", path.display()))?;
        serde_json::from_str(&text).map_err(|e| format!("{}:{}: not a result JSON: {e}", path.display(), e.line()))
    } else {
        let (report, _) = run_case(path, hvstack::DEFAULT_MAX_NODES, false)?;
        serde_json::to_value(&report).map_err(|e| format!("{}: {e}", path.display()))
    }
}

/// The case files of a batch: files as given, folders searched recursively
/// for *.yaml and *.yml, sorted; each with the name of its review subfolder
/// (its path below the folder given, or its stem, without the extension;
/// made unique with a suffix).
fn collect(paths: &[PathBuf]) -> Result<Vec<(PathBuf, String)>, String> {
    let mut files: Vec<(PathBuf, String)> = Vec::new();
    let mut seen = std::collections::BTreeSet::new();
    let mut add = |files: &mut Vec<(PathBuf, String)>, f: PathBuf, key: String| {
        let mut unique = key.clone();
        let mut n = 2;
        while !seen.insert(unique.clone()) {
            unique = format!("{key}-{n}");
            n += 1;
        }
        files.push((f, unique));
    };
    let stem_key = |f: &Path| f.with_extension("").to_string_lossy().replace('\\', "/");
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
            for f in found {
                let key = stem_key(f.strip_prefix(p).unwrap_or(&f));
                add(&mut files, f, key);
            }
        } else {
            let key = p.file_stem().map_or_else(|| "case".to_string(), |s| s.to_string_lossy().into_owned());
            add(&mut files, p.clone(), key);
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
    report: Option<PathBuf>,
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
    let files: Vec<(PathBuf, String)> = match o.shard {
        Some((i, n)) => files.into_iter().enumerate().filter(|(k, _)| k % n == i - 1).map(|(_, f)| f).collect(),
        None => files,
    };
    let staging = match o.report.as_deref().map(Staging::new).transpose() {
        Ok(s) => s,
        Err(e) => {
            eprintln!("{e}");
            return ExitCode::from(2);
        }
    };
    let bar = if o.quiet { indicatif::ProgressBar::hidden() } else { indicatif::ProgressBar::new(files.len() as u64) };
    let pool = match rayon::ThreadPoolBuilder::new().num_threads(o.jobs as usize).build() {
        Ok(p) => p,
        Err(e) => {
            eprintln!("hvstack: cannot start {} jobs: {e}", o.jobs);
            return ExitCode::from(2);
        }
    };
    // Cases run in parallel; results come back in file order. Review files
    // go to disk as each case ends, so a batch holds one case's at a time.
    let done: Vec<(summary::SummaryRow, Option<String>)> = pool.install(|| {
        files
            .par_iter()
            .map(|(f, key)| {
                let name = f.display().to_string();
                let out = match run_case(f, o.max_nodes, staging.is_some()) {
                    Ok((r, review)) => match (&staging, review) {
                        (Some(st), Some(files)) => match st.write(key, &files) {
                            Ok(()) => (summary::row(&name, &r), Some(key.clone())),
                            Err(e) => (summary::error_row(&name, &e), None),
                        },
                        _ => (summary::row(&name, &r), None),
                    },
                    Err(e) => (summary::error_row(&name, &e), None),
                };
                bar.inc(1);
                out
            })
            .collect()
    });
    bar.finish_and_clear();
    let (rows, links): (Vec<summary::SummaryRow>, Vec<Option<String>>) = done.into_iter().unzip();
    if let Some(st) = staging {
        let index = hvstack::report::html::render_batch(&rows, &links);
        let page = hvstack::review::ReviewFile {
            name: "index.html".into(),
            what: "batch review page".into(),
            bytes: index.into_bytes(),
        };
        if let Err(e) = st.write("", &[page]).and_then(|_| st.commit()) {
            eprintln!("{e}");
            return ExitCode::from(2);
        }
    }
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
        if let Ok(staged) = STAGED.try_lock() {
            for dir in staged.iter() {
                let _ = std::fs::remove_dir_all(dir);
            }
        }
        eprintln!("hvstack: interrupted; nothing was written (earlier outputs are intact)");
        std::process::exit(130);
    });
    let cli = Cli::parse();
    match cli.command {
        Command::Check { paths, format, max_nodes, jobs, junit, quiet, shard, report } => {
            let single = paths.len() == 1 && !paths[0].is_dir() && junit.is_none() && shard.is_none();
            if !single {
                return batch(&paths, &BatchOptions { format, max_nodes, jobs, junit, quiet, shard, report });
            }
            let staging = match report.as_deref().map(Staging::new).transpose() {
                Ok(s) => s,
                Err(e) => {
                    eprintln!("{e}");
                    return ExitCode::from(2);
                }
            };
            match run_case(&paths[0], max_nodes, staging.is_some()) {
                Ok((report, review)) => {
                    if let (Some(st), Some(files)) = (staging, review)
                        && let Err(e) = st.write("", &files).and_then(|_| st.commit())
                    {
                        eprintln!("{e}");
                        return ExitCode::from(2);
                    }
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
