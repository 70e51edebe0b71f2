//! The review folder of one case, built in memory: the field map (SVG and
//! PNG), the HTML review page, the JSON result, a CSV per sampling line and
//! a VTK file. The binary writes the files; nothing here touches the disk.

use crate::picture::{self, MapConfig, MapInputs, png::PictureError};
use crate::report::{self, CheckReport, html::PageInputs};
use crate::{Prepared, Solution};

/// One file of a review folder.
#[derive(Debug, Clone, PartialEq)]
pub struct ReviewFile {
    /// File name inside the folder.
    pub name: String,
    /// What it holds (shown on the review page).
    pub what: String,
    /// Contents.
    pub bytes: Vec<u8>,
}

/// A file of the review could not be produced (a bug: every input is ours).
#[derive(Debug, thiserror::Error)]
pub enum ReviewError {
    /// The map could not be rasterised.
    #[error(transparent)]
    Picture(#[from] PictureError),
    /// A CSV could not be written.
    #[error("CSV of line '{line}': {source}")]
    Csv {
        /// Line name.
        line: String,
        /// The problem.
        source: csv::Error,
    },
    /// The JSON result could not be written.
    #[error("JSON result: {0}")]
    Json(#[from] serde_json::Error),
}

/// Zoom of the PNG map relative to the SVG (sharper text and lines).
const PNG_ZOOM: f32 = 2.0;

/// The files of a case's review folder. `case_file` is the case's path as
/// the user gave it (shown on the page).
pub fn files(
    prepared: &Prepared,
    solution: &Solution,
    report: &CheckReport,
    case_file: &str,
) -> Result<Vec<ReviewFile>, ReviewError> {
    let map = picture::build(
        &MapInputs { case: &prepared.case, grid: &prepared.grid, layout: &prepared.layout, phi: &solution.phi, report },
        &MapConfig::default(),
    );
    let svg = picture::svg::render(&map);
    let png = picture::png::render(&svg, PNG_ZOOM)?;
    let mut json = serde_json::to_vec_pretty(report)?;
    json.push(b'\n');
    let mut out = vec![
        ReviewFile { name: "field-map.svg".into(), what: "field map (vector)".into(), bytes: svg.clone().into_bytes() },
        ReviewFile { name: "field-map.png".into(), what: "field map (picture)".into(), bytes: png },
        ReviewFile { name: "result.json".into(), what: "the result as JSON".into(), bytes: json },
        ReviewFile {
            name: "fields.vtk".into(),
            what: "potential and field on the grid (legacy VTK)".into(),
            bytes: crate::export::vtk(&prepared.case, &prepared.grid, &prepared.layout, &solution.phi).into_bytes(),
        },
    ];
    for l in &report.lines {
        let bytes = report::line_csv(l).map_err(|source| ReviewError::Csv { line: l.name.clone(), source })?;
        out.push(ReviewFile {
            name: format!("line-{}.csv", l.name),
            what: format!("field along line {} ({} samples)", l.name, l.points),
            bytes,
        });
    }
    let listed: Vec<(String, String)> = out.iter().map(|f| (f.name.clone(), f.what.clone())).collect();
    let page = report::html::render_page(&PageInputs { report, case_file, map_svg: &svg, files: &listed });
    out.insert(0, ReviewFile { name: "index.html".into(), what: "review page".into(), bytes: page.into_bytes() });
    Ok(out)
}
