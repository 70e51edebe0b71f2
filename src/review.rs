//! The review folder of one case, built in memory: the field map (SVG and
//! PNG), the HTML review page, the JSON result, a CSV per sampling line and
//! a VTK file. The binary writes the files; nothing here touches the disk.

use crate::picture::{self, MapConfig, MapInputs, Shade, png::PictureError};
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

/// Longest file-name stem made from a line name, in bytes.
const LINE_STEM_BYTES: usize = 60;

/// The CSV file name of each line, in order: `line-STEM.csv`, where STEM
/// keeps the name's ASCII letters, digits, '-' and '_' and turns every other
/// run of characters into one '-' (so any printable name is safe on every
/// file system and cannot leave the folder), made unique with `-2`, `-3`, …
pub fn line_file_names<'a>(names: impl Iterator<Item = &'a str>) -> Vec<String> {
    let mut taken = std::collections::BTreeSet::new();
    names
        .map(|name| {
            let stem = crate::case::text::file_stem(name, LINE_STEM_BYTES, "line");
            let mut file = format!("line-{stem}.csv");
            let mut n = 2;
            while !taken.insert(file.to_ascii_lowercase()) {
                file = format!("line-{stem}-{n}.csv");
                n += 1;
            }
            file
        })
        .collect()
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
    let map_of = |shade| {
        picture::build(
            &MapInputs {
                case: &prepared.case,
                grid: &prepared.grid,
                layout: &prepared.layout,
                phi: &solution.phi,
                quadrature: solution.quadrature.as_deref(),
                report,
                shade,
            },
            &MapConfig::default(),
        )
    };
    let svg = picture::svg::render(&map_of(Shade::Field));
    let png = picture::png::render(&svg, PNG_ZOOM)?;
    let loss_coefficients =
        prepared.service.ac.as_ref().map(|ac| crate::fields::loss_coefficients(ac, prepared.case.operation.values));
    let mut extra_maps = Vec::new();
    if let Some(per_e2) = &loss_coefficients {
        extra_maps.push(("loss-map", "loss density map", map_of(Shade::LossDensity { per_e2 })));
    }
    if let Some(nodal_c) = solution.dc.as_ref().and_then(|d| d.temperature.as_deref()) {
        extra_maps.push(("temperature-map", "temperature map", map_of(Shade::Temperature { nodal_c })));
    }
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
    let mut extra_svgs = Vec::new();
    for (stem, what, map) in extra_maps {
        let svg = picture::svg::render(&map);
        let png = picture::png::render(&svg, PNG_ZOOM)?;
        out.push(ReviewFile {
            name: format!("{stem}.svg"),
            what: format!("{what} (vector)"),
            bytes: svg.clone().into_bytes(),
        });
        out.push(ReviewFile { name: format!("{stem}.png"), what: format!("{what} (picture)"), bytes: png });
        extra_svgs.push(svg);
    }
    let line_files = line_file_names(report.lines.iter().map(|l| l.name.as_str()));
    for (l, name) in report.lines.iter().zip(&line_files) {
        let bytes = report::line_csv(l).map_err(|source| ReviewError::Csv { line: l.name.clone(), source })?;
        out.push(ReviewFile {
            name: name.clone(),
            what: format!("field along line {} ({} samples)", l.name, l.points),
            bytes,
        });
    }
    let listed: Vec<(String, String)> = out.iter().map(|f| (f.name.clone(), f.what.clone())).collect();
    let page = report::html::render_page(&PageInputs {
        report,
        case_file,
        map_svg: &svg,
        extra_map_svgs: &extra_svgs,
        files: &listed,
        line_files: &line_files,
    });
    out.insert(0, ReviewFile { name: "index.html".into(), what: "review page".into(), bytes: page.into_bytes() });
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn line_files_are_safe_and_unique() {
        let names = ["through void", "through-void", "../../etc/x", "Ω", "A", "a"];
        let files = line_file_names(names.into_iter());
        assert_eq!(
            files,
            [
                "line-through-void.csv",
                "line-through-void-2.csv",
                "line-etc-x.csv",
                "line-line.csv",
                "line-A.csv",
                "line-a-2.csv"
            ]
        );
    }
}
