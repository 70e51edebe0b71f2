//! The `hvstack` command: reads files, wires the library's stages, prints,
//! and maps outcomes to exit status 0 (pass), 1 (review or fail; with
//! `--fail-on fail` only fail) and 2 (the case could not be evaluated).

mod cli;

use clap::{Parser, Subcommand, ValueEnum};
use cli::input::{self, Entry, shown};
use cli::output::{self, Staging};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

/// Electrostatic screening of insulation cross-sections.
///
/// Exit status: 0 = pass, 1 = review or fail (the case was evaluated and
/// something needs attention; `--fail-on fail`: fail only), 2 = the case
/// could not be evaluated.
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

#[derive(Clone, Copy, ValueEnum)]
enum FailOnArg {
    /// A review or fail verdict gives exit status 1.
    Review,
    /// Only a fail verdict gives exit status 1.
    Fail,
}

impl From<FailOnArg> for hvstack::report::summary::FailOn {
    fn from(a: FailOnArg) -> Self {
        match a {
            FailOnArg::Review => hvstack::report::summary::FailOn::Review,
            FailOnArg::Fail => hvstack::report::summary::FailOn::Fail,
        }
    }
}

#[derive(Clone, Copy, ValueEnum)]
enum SweepFormat {
    /// An aligned table: one row per point.
    Text,
    /// `{ "vary": [...], "points": [ { "set": {...}, "result": {...} } ] }`.
    Json,
    /// The table's columns as CSV.
    Csv,
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
        /// Refuse grids above this many nodes (exit 2) instead of running out of time or memory;
        /// at most 2147483648 (the solver's 32-bit indices).
        #[arg(long, default_value_t = hvstack::DEFAULT_MAX_NODES as u64,
              value_parser = clap::value_parser!(u64).range(1..=hvstack::grid::MAX_SUPPORTED_NODES as u64))]
        max_nodes: u64,
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
        /// Which verdicts fail the exit status and the JUnit test: `review`
        /// (review and fail, the default) or `fail` (only fail).
        #[arg(long, value_enum, default_value = "review")]
        fail_on: FailOnArg,
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
    /// and verdict before and after, the case verdict, the findings added,
    /// removed or changed in severity, the input keys that differ (when both
    /// sides are case files), and a warning when the sides look like
    /// different cases. Exit status 1 when the new verdict is worse.
    Diff {
        /// The earlier result or case.
        old: PathBuf,
        /// The later result or case.
        new: PathBuf,
        /// Output format.
        #[arg(long, value_enum, default_value = "text")]
        format: Format,
    },
    /// Check a case at every combination of varied values.
    ///
    /// Each `--vary KEY=VALUES` sets a key path as error messages print it
    /// (`stack.layers[1].thickness`, `parts[3].water.volume_pct`,
    /// `environment.temperature_c`, `operation.frequency_hz`,
    /// `stack.voltage_kv`) to a comma list of values or to `start:stop:count`
    /// evenly spaced values, or `±T%` for a tolerance band around the
    /// case's own value (low, nominal, high; the table then names the worst
    /// point and the spread of each figure); several make a full grid, the
    /// first slowest.
    /// Every point is validated and checked as a case of its own; if one
    /// cannot be evaluated nothing is printed and the exit status is 2.
    /// Exit status otherwise: 0 when every point passes, 1 when any needs
    /// review or fails.
    Sweep {
        /// The case file (YAML).
        case: PathBuf,
        /// KEY=VALUES (repeat for a grid of points).
        #[arg(long = "vary", value_name = "KEY=VALUES", required = true)]
        vary: Vec<String>,
        /// Output format.
        #[arg(long, value_enum, default_value = "text")]
        format: SweepFormat,
        /// Refuse grids above this many nodes (exit 2), as for `check`.
        #[arg(long, default_value_t = hvstack::DEFAULT_MAX_NODES as u64,
              value_parser = clap::value_parser!(u64).range(1..=hvstack::grid::MAX_SUPPORTED_NODES as u64))]
        max_nodes: u64,
        /// Points checked at once (each solve also uses every core).
        #[arg(long, default_value_t = 1, value_parser = clap::value_parser!(u16).range(1..=256))]
        jobs: u16,
        /// Which verdicts fail the exit status: `review` (the default) or `fail`.
        #[arg(long, value_enum, default_value = "review")]
        fail_on: FailOnArg,
        /// Check only the I-th of N slices of the points (every N-th from the
        /// I-th); `--format json` then adds `shard: {index, count}`, and
        /// `sweep-combine` joins the N outputs into the whole sweep.
        #[arg(long, value_parser = parse_shard)]
        shard: Option<(usize, usize)>,
        /// No progress bar.
        #[arg(long)]
        quiet: bool,
        /// A seeded random tolerance study: this many points, each drawing
        /// every `KEY=±T%` band uniformly within nominal·(1 ± T) (every
        /// --vary must be a band); `--format json` then adds
        /// `samples: {count, seed, distribution}`.
        #[arg(long, value_parser = clap::value_parser!(u32).range(1..=hvstack::study::MAX_POINTS as i64))]
        samples: Option<u32>,
        /// Seed of the random study (the same seed gives the same points on
        /// every machine).
        #[arg(long, default_value_t = 1, requires = "samples")]
        seed: u64,
        /// Write a review folder here: plots (SVG and PNG) of peak field,
        /// margin, partial-discharge inception and allowable level against
        /// each varied key with the limits dashed, every point's review
        /// folder (point-0001, …) and an index page. Staged and moved into
        /// place only when complete.
        #[arg(long, value_name = "DIR")]
        report: Option<PathBuf>,
    },
    /// Join the JSON outputs of `sweep --shard I/N` (all N of them) into the
    /// JSON, table or CSV of the whole sweep.
    SweepCombine {
        /// The shards' JSON files, in any order.
        #[arg(required = true)]
        shards: Vec<PathBuf>,
        /// Output format.
        #[arg(long, value_enum, default_value = "text")]
        format: SweepFormat,
        /// Write the plots and index page of the whole sweep here (the
        /// points' own review folders stay in the shards' folders).
        #[arg(long, value_name = "DIR")]
        report: Option<PathBuf>,
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
    cli::signals::outputs().stdout_started = true;
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

/// Prints a message to stderr and gives exit status 2.
fn refuse(message: &str) -> ExitCode {
    eprintln!("{message}");
    ExitCode::from(2)
}

/// Reads, evaluates and reports one case, with its review files when
/// asked; errors come back as the message to print (exit status 2).
fn run_case(path: &Path, max_nodes: usize, review: bool) -> Result<hvstack::study::batch::Checked, String> {
    let bytes = input::read_regular(path, "case")?;
    let run = hvstack::study::batch::CheckRun { review, clock: Some(&seconds) };
    hvstack::study::batch::check_bytes(&bytes, &shown(path), &options_with(max_nodes), run)
}

/// Seconds since the first call (the library's clock for solve times).
fn seconds() -> f64 {
    static START: std::sync::OnceLock<std::time::Instant> = std::sync::OnceLock::new();
    START.get_or_init(std::time::Instant::now).elapsed().as_secs_f64()
}

/// The default options with a node limit.
fn options_with(max_nodes: usize) -> hvstack::Options {
    let mut options = hvstack::Options::default();
    options.limits.max_nodes = max_nodes;
    options
}

/// A result as JSON: read from a .json file (which must be an hvstack
/// result), or computed from a case file (then with the case document, for
/// the input comparison).
fn result_value(path: &Path) -> Result<(serde_json::Value, Option<serde_yaml::Value>), String> {
    let name = shown(path);
    if path.extension().and_then(|e| e.to_str()) == Some("json") {
        let bytes = input::read_regular(path, "result")?;
        let value: serde_json::Value = serde_json::from_slice(&bytes)
            .map_err(|e| format!("{name}:{}:{}: not a result JSON: {e}", e.line(), e.column()))?;
        match hvstack::report::diff::not_a_result(&value) {
            None => Ok((value, None)),
            Some(why) => Err(format!("{name}: not an hvstack result (from `check --format json`): it {why}")),
        }
    } else {
        let (report, _) = run_case(path, hvstack::DEFAULT_MAX_NODES, false)?;
        // the case evaluated, so it is YAML
        let doc = input::read_regular(path, "case")
            .ok()
            .and_then(|b| hvstack::case::decode(&b, &name).ok())
            .and_then(|t| serde_yaml::from_str(&t).ok());
        Ok((serde_json::to_value(&report).map_err(|e| format!("{name}: {e}"))?, doc))
    }
}

struct BatchOptions {
    format: Format,
    fail_on: hvstack::report::summary::FailOn,
    max_nodes: usize,
    jobs: u16,
    junit: Option<PathBuf>,
    quiet: bool,
    shard: Option<(usize, usize)>,
    report: Option<PathBuf>,
}

fn batch(paths: &[PathBuf], o: &BatchOptions) -> ExitCode {
    use hvstack::report::summary;
    let entries = match input::collect(paths) {
        Ok(f) => f,
        Err(e) => return refuse(&e),
    };
    // Slice I of N takes every N-th entry from the sorted list: disjoint
    // slices that together cover the batch, balanced by count.
    let entries: Vec<Entry> = match o.shard {
        Some((i, n)) => entries.into_iter().enumerate().filter(|(k, _)| k % n == i - 1).map(|(_, f)| f).collect(),
        None => entries,
    };
    let inputs: Vec<PathBuf> = entries
        .iter()
        .map(|e| match e {
            Entry::Case(p, _) | Entry::Refused(p, _) => p.clone(),
        })
        .collect();
    if let Some(path) = &o.junit
        && let Err(e) = output::junit_target(path, &inputs, o.report.as_deref())
    {
        return refuse(&e);
    }
    let staging = match o.report.as_deref().map(|d| Staging::new(d, &inputs)).transpose() {
        Ok(s) => s,
        Err(e) => return refuse(&e),
    };
    let bar =
        if o.quiet { indicatif::ProgressBar::hidden() } else { indicatif::ProgressBar::new(entries.len() as u64) };
    let pool = match rayon::ThreadPoolBuilder::new().num_threads(o.jobs as usize).build() {
        Ok(p) => p,
        Err(e) => return refuse(&format!("hvstack: cannot start {} jobs: {e}", o.jobs)),
    };
    let cases: Vec<hvstack::study::batch::BatchCase> = entries
        .iter()
        .map(|e| match e {
            Entry::Case(p, key) => {
                hvstack::study::batch::BatchCase { name: shown(p), folder: key.clone(), refused: None }
            }
            Entry::Refused(p, why) => {
                hvstack::study::batch::BatchCase { name: shown(p), folder: String::new(), refused: Some(why.clone()) }
            }
        })
        .collect();
    let load = |k: usize| input::read_regular(&inputs[k], "case");
    let keep = |k: usize, files: Vec<hvstack::review::ReviewFile>| match &staging {
        Some(st) => st.write(&cases[k].folder, &files),
        None => Ok(()),
    };
    let tick = || bar.inc(1);
    let run = hvstack::study::batch::Batch {
        fail_on: o.fail_on,
        load: &load,
        review: staging.as_ref().map(|_| &keep as _),
        progress: Some(&tick),
        clock: Some(&seconds),
    };
    let outcome = pool.install(|| hvstack::study::batch::batch(&cases, &options_with(o.max_nodes), &run));
    bar.finish_and_clear();
    if let Some(st) = staging
        && let Err(e) = st.write("", &[outcome.index()]).and_then(|_| st.commit())
    {
        return refuse(&e);
    }
    let rows = &outcome.rows;
    if let Some(path) = &o.junit
        && let Err(e) = output::write_junit(path, &inputs, o.report.as_deref(), &summary::junit_xml(rows))
    {
        return refuse(&e);
    }
    let code = emit(&match o.format {
        Format::Text => summary::render_summary(rows),
        Format::Json => json(rows),
    });
    if code != ExitCode::SUCCESS { code } else { ExitCode::from(outcome.exit_status()) }
}

/// A sweep's JSON in the asked format.
fn render_sweep(value: &serde_json::Value, format: SweepFormat) -> Result<String, String> {
    Ok(match format {
        SweepFormat::Text => hvstack::report::sweep::render_table(value),
        SweepFormat::Json => json(value),
        SweepFormat::Csv => {
            hvstack::report::sweep::render_csv(value).map_err(|e| format!("cannot write the CSV: {e}"))?
        }
    })
}

/// A sweep of one case (see `Command::Sweep`).
struct SweepOptions {
    format: SweepFormat,
    max_nodes: usize,
    jobs: u16,
    fail_on: hvstack::report::summary::FailOn,
    shard: Option<(usize, usize)>,
    quiet: bool,
    report: Option<PathBuf>,
    sampling: Option<hvstack::study::Sampling>,
}

/// Writes a sweep's plots and index into a staged review folder and moves
/// it into place (`links[k]`: the folder of point k, where it has one).
fn sweep_review(st: Staging, value: &serde_json::Value, links: &[Option<String>]) -> Result<(), String> {
    let files = hvstack::review::sweep_files(value, links).map_err(|e| format!("cannot build the sweep plots: {e}"))?;
    st.write("", &files)?;
    st.commit()
}

fn sweep(path: &Path, vary: &[String], o: &SweepOptions) -> ExitCode {
    let SweepOptions { format, max_nodes, jobs, fail_on, shard, quiet, .. } = *o;
    let vary: Vec<hvstack::study::Vary> = match vary.iter().map(|v| hvstack::study::parse_vary(v)).collect() {
        Ok(v) => v,
        Err(e) => return refuse(&format!("hvstack sweep: {e}")),
    };
    let file = shown(path);
    let text = match input::read_regular(path, "case")
        .and_then(|b| hvstack::case::decode(&b, &file).map_err(|e| e.to_string()))
    {
        Ok(t) => t,
        Err(e) => return refuse(&e),
    };
    let resolved = match o.sampling {
        Some(sampling) => hvstack::study::resolve_random(&text, &file, &vary, sampling),
        None => hvstack::study::resolve(&text, &file, &vary),
    };
    let vary = match resolved {
        Ok(v) => v,
        Err(e) => return refuse(&format!("hvstack sweep: {e}")),
    };
    let design = if o.sampling.is_some() { hvstack::study::Design::Zip } else { hvstack::study::Design::Grid };
    let options = options_with(max_nodes);
    let pool = match rayon::ThreadPoolBuilder::new().num_threads(jobs as usize).build() {
        Ok(p) => p,
        Err(e) => return refuse(&format!("hvstack: cannot start {jobs} jobs: {e}")),
    };
    // indicatif draws only on a terminal (stderr), so pipes and CI stay clean
    let total: usize = match o.sampling {
        Some(sampling) => sampling.samples,
        None => vary.iter().map(|v| v.values.len()).product(),
    };
    let total = shard.map_or(total, |(i, n)| total / n + usize::from(i <= total % n));
    let bar = if quiet { indicatif::ProgressBar::hidden() } else { indicatif::ProgressBar::new(total as u64) };
    let tick = || bar.inc(1);
    let staging = match o.report.as_deref().map(|d| Staging::new(d, &[path.to_path_buf()])).transpose() {
        Ok(s) => s,
        Err(e) => return refuse(&e),
    };
    let keep = |k: usize, files: Vec<hvstack::review::ReviewFile>| match &staging {
        Some(st) => st.write(&hvstack::review::point_folder(k), &files),
        None => Ok(()),
    };
    let run =
        hvstack::study::Run { shard, design, progress: Some(&tick), review: staging.as_ref().map(|_| &keep as _) };
    let points = pool.install(|| hvstack::study::sweep_shard(&text, &file, &vary, &options, &run));
    bar.finish_and_clear();
    let points = match points {
        Ok(p) => p,
        Err(e) => return refuse(&e.to_string()),
    };
    let mut value = match serde_json::to_value(hvstack::report::sweep::sweep_out(&vary, &points)) {
        Ok(v) => v,
        Err(e) => return refuse(&format!("hvstack sweep: {e}")),
    };
    if let Some(sampling) = o.sampling {
        value["samples"] = serde_json::json!({
            "count": sampling.samples,
            "seed": sampling.seed,
            "distribution": "uniform within nominal·(1 ± T)",
        });
    }
    if let Some((i, n)) = shard {
        value["shard"] = serde_json::json!({ "index": i, "count": n });
    }
    let out = match render_sweep(&value, format) {
        Ok(o) => o,
        Err(e) => return refuse(&format!("hvstack sweep: {e}")),
    };
    if let Some(st) = staging {
        // point j of shard I/N is point j·N + I − 1 of the whole sweep
        let (i, n) = shard.unwrap_or((1, 1));
        let links: Vec<Option<String>> =
            (0..points.len()).map(|j| Some(hvstack::review::point_folder(j * n + i - 1))).collect();
        if let Err(e) = sweep_review(st, &value, &links) {
            return refuse(&format!("hvstack sweep: {e}"));
        }
    }
    let status = hvstack::study::exit_status(&points, fail_on);
    let code = emit(&out);
    if code != ExitCode::SUCCESS { code } else { ExitCode::from(status) }
}

/// One case: its full report, and its review folder when asked.
fn single(
    path: &Path,
    format: Format,
    max_nodes: usize,
    report: Option<&Path>,
    fail_on: hvstack::report::summary::FailOn,
) -> ExitCode {
    let staging = match report.map(|d| Staging::new(d, &[path.to_path_buf()])).transpose() {
        Ok(s) => s,
        Err(e) => return refuse(&e),
    };
    match run_case(path, max_nodes, staging.is_some()) {
        Ok((report, review)) => {
            if let (Some(st), Some(files)) = (staging, review)
                && let Err(e) = st.write("", &files).and_then(|_| st.commit())
            {
                return refuse(&e);
            }
            let status = hvstack::report::summary::verdict_exit(report.verdict, fail_on);
            let code = emit(&match format {
                Format::Text => hvstack::report::render_text(&report),
                Format::Json => json(&report),
            });
            if code != ExitCode::SUCCESS { code } else { ExitCode::from(status) }
        }
        Err(message) => refuse(&message),
    }
}

/// Large blocks on transparent huge pages where the kernel offers them
/// (`cli::memory`).
#[global_allocator]
static ALLOCATOR: cli::memory::HugePages = cli::memory::HugePages;

fn main() -> ExitCode {
    cli::memory::configure();
    // SIGINT, SIGTERM and SIGHUP wait for any write in progress, remove
    // staged folders and say which outputs are complete (cli::signals).
    if let Err(e) = cli::signals::install() {
        eprintln!("hvstack: cannot install the interrupt handler: {e}");
    }
    let cli = Cli::parse();
    match cli.command {
        Command::Check { paths, format, max_nodes, jobs, junit, quiet, shard, fail_on, report } => {
            let fail_on = fail_on.into();
            // the parser bounds it by MAX_SUPPORTED_NODES, which fits usize
            let max_nodes = usize::try_from(max_nodes).unwrap_or(hvstack::grid::MAX_SUPPORTED_NODES);
            let one = paths.len() == 1 && !paths[0].is_dir() && junit.is_none() && shard.is_none();
            if one {
                single(&paths[0], format, max_nodes, report.as_deref(), fail_on)
            } else {
                batch(&paths, &BatchOptions { format, fail_on, max_nodes, jobs, junit, quiet, shard, report })
            }
        }
        Command::Diff { old, new, format } => match (result_value(&old), result_value(&new)) {
            (Ok((a, da)), Ok((b, db))) => {
                let mut d = hvstack::report::diff::diff(&a, &b);
                d.inputs = match (da, db) {
                    (Some(x), Some(y)) => Some(hvstack::report::diff::input_changes(&x, &y)),
                    // results: the same case file bytes, or unknown
                    _ => (a["case_sha256"].is_string() && a["case_sha256"] == b["case_sha256"]).then(Vec::new),
                };
                let code = emit(&match format {
                    Format::Text => hvstack::report::diff::render_diff(&d),
                    Format::Json => json(&d),
                });
                if code != ExitCode::SUCCESS || !d.worse { code } else { ExitCode::from(1) }
            }
            (Err(e), _) | (_, Err(e)) => refuse(&e),
        },
        Command::Sweep { case, vary, format, max_nodes, jobs, fail_on, shard, quiet, report, samples, seed } => {
            let max_nodes = usize::try_from(max_nodes).unwrap_or(hvstack::grid::MAX_SUPPORTED_NODES);
            let sampling = samples.map(|n| hvstack::study::Sampling { samples: n as usize, seed });
            let o = SweepOptions { format, max_nodes, jobs, fail_on: fail_on.into(), shard, quiet, report, sampling };
            sweep(&case, &vary, &o)
        }
        Command::SweepCombine { shards, format, report } => {
            let staging = match report.as_deref().map(|d| Staging::new(d, &shards)).transpose() {
                Ok(s) => s,
                Err(e) => return refuse(&e),
            };
            let mut read = Vec::new();
            for path in &shards {
                let name = shown(path);
                let value = input::read_regular(path, "sweep shard").and_then(|b| {
                    serde_json::from_slice::<serde_json::Value>(&b)
                        .map_err(|e| format!("{name}:{}:{}: not a sweep shard JSON: {e}", e.line(), e.column()))
                });
                match value {
                    Ok(v) => read.push((name, v)),
                    Err(e) => return refuse(&e),
                }
            }
            let whole = match hvstack::study::combine_shards(&read) {
                Ok(v) => v,
                Err(e) => return refuse(&format!("hvstack sweep-combine: {e}")),
            };
            let out = match render_sweep(&whole, format) {
                Ok(out) => out,
                Err(e) => return refuse(&format!("hvstack sweep-combine: {e}")),
            };
            if let Some(st) = staging {
                let links = vec![None; whole["points"].as_array().map_or(0, Vec::len)];
                if let Err(e) = sweep_review(st, &whole, &links) {
                    return refuse(&format!("hvstack sweep-combine: {e}"));
                }
            }
            emit(&out)
        }
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
