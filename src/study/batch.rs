//! Checks of whole case files, one or many: the case's bytes in, its
//! result (and review files when asked) out; a batch checks its cases in
//! parallel on rayon's pool, in the given order, one summary row each, and
//! makes its index page. Reading files and writing folders belong to the
//! caller (`load` and the review sink).

use super::ReviewSink;
use crate::Options;
use crate::report::CheckReport;
use crate::report::summary::{self, FailOn, SummaryRow};
use crate::review::ReviewFile;
use rayon::prelude::*;

/// A checked case and, when asked, its review files.
pub type Checked = (CheckReport, Option<Vec<ReviewFile>>);

/// A clock for the solve time in the result: seconds from any fixed
/// instant (the library reads no clock of its own).
pub type Clock = dyn Fn() -> f64 + Sync;

/// How one case file is checked.
#[derive(Clone, Copy)]
pub struct CheckRun<'a> {
    /// Build the review files too.
    pub review: bool,
    /// Times the solve (`None`: the result says 0 s).
    pub clock: Option<&'a Clock>,
}

/// Checks one case from its file's bytes (`name`: the file as the user
/// named it, in messages). An error is the message to show (the case could
/// not be evaluated: no verdict).
pub fn check_bytes(bytes: &[u8], name: &str, options: &Options, run: CheckRun) -> Result<Checked, String> {
    let now = || run.clock.map_or(0.0, |c| c());
    let text = crate::case::decode(bytes, name).map_err(|e| e.to_string())?;
    let case = crate::case::parse(&text, name).map_err(|e| e.to_string())?;
    let prepared = crate::prepare(case, name, options).map_err(|e| e.to_string())?;
    // the reported time covers the self-check's coarser solves, which
    // come first and give the fine solve its start (`solve_nested`)
    let started = now();
    let (solution, check) = prepared.solve_nested(options).map_err(|e| e.to_string())?;
    let seconds = now() - started;
    let evaluated = prepared.evaluate_with(&solution, options, check).map_err(|e| e.to_string())?;
    let report = prepared.report_of(&solution, &evaluated, seconds);
    let files = if run.review {
        Some(
            crate::review::files(&prepared, &solution, &report, name)
                .map_err(|e| format!("{name}: cannot build the review files: {e}"))?,
        )
    } else {
        None
    };
    Ok((report, files))
}

/// One case of a batch.
#[derive(Debug, Clone, PartialEq)]
pub struct BatchCase {
    /// The file as the user named it.
    pub name: String,
    /// Its review subfolder.
    pub folder: String,
    /// Why it is not checked (it looked like a case but cannot be read as
    /// one), if so.
    pub refused: Option<String>,
}

/// How a batch runs.
pub struct Batch<'a> {
    /// Which verdicts fail the exit status.
    pub fail_on: FailOn,
    /// The bytes of case k (the caller reads the file).
    pub load: &'a (dyn Fn(usize) -> Result<Vec<u8>, String> + Sync),
    /// When given, each checked case's review files go here with its index
    /// as it ends (so a batch holds one case's files at a time).
    pub review: Option<&'a ReviewSink<'a>>,
    /// Called once per case.
    pub progress: Option<&'a (dyn Fn() + Sync)>,
    /// Times each solve.
    pub clock: Option<&'a Clock>,
}

/// A batch's outcome: a summary row per case, in order, and the review
/// subfolder of each case that has one.
#[derive(Debug, Clone, PartialEq)]
pub struct BatchOutcome {
    /// The rows.
    pub rows: Vec<SummaryRow>,
    /// Review subfolder of each row, where written.
    pub folders: Vec<Option<String>>,
}

impl BatchOutcome {
    /// The batch's exit status: the worst of its rows'.
    pub fn exit_status(&self) -> u8 {
        summary::exit_status(&self.rows)
    }

    /// The batch's index page (review folders), linking each case's page.
    pub fn index(&self) -> ReviewFile {
        ReviewFile {
            name: "index.html".into(),
            what: "batch review page".into(),
            bytes: crate::report::html::render_batch(&self.rows, &self.folders).into_bytes(),
        }
    }
}

/// Checks every case (in parallel; rows in the given order). A case that
/// cannot be read or evaluated, or whose review files cannot be kept, is an
/// error row (exit status 2); the others run on.
pub fn batch(cases: &[BatchCase], options: &Options, b: &Batch) -> BatchOutcome {
    let one = |(k, c): (usize, &BatchCase)| -> (SummaryRow, Option<String>) {
        let out = match &c.refused {
            Some(why) => (summary::error_row(&c.name, &format!("{}: {why}", c.name)), None),
            None => match (b.load)(k).and_then(|bytes| {
                check_bytes(&bytes, &c.name, options, CheckRun { review: b.review.is_some(), clock: b.clock })
            }) {
                Ok((r, files)) => match (b.review, files) {
                    (Some(sink), Some(files)) => match sink(k, files) {
                        Ok(()) => (summary::row(&c.name, &r, b.fail_on), Some(c.folder.clone())),
                        Err(e) => (summary::error_row(&c.name, &e), None),
                    },
                    _ => (summary::row(&c.name, &r, b.fail_on), None),
                },
                Err(e) => (summary::error_row(&c.name, &e), None),
            },
        };
        if let Some(tick) = b.progress {
            tick();
        }
        out
    };
    let (rows, folders) = cases.par_iter().enumerate().map(one).collect::<Vec<_>>().into_iter().unzip();
    BatchOutcome { rows, folders }
}
