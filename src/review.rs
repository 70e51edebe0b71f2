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

/// Most zoomed maps on a review page.
const MAX_ZOOMS: usize = 3;
/// A part smaller than this fraction of the domain's area gets a zoom.
const SMALL_PART: f64 = 0.01;

/// The windows of the zoomed maps, [x0, x1, y0, y1] in m: around each
/// small insulating part (a void: five times its size) and each part's
/// peak that sits at a singular point (a fifth of the domain's smaller
/// side), squares inside the domain,
/// one per spot (a spot inside an earlier window adds none), at most
/// `MAX_ZOOMS`.
fn zoom_windows(prepared: &Prepared, report: &CheckReport) -> Vec<[f64; 4]> {
    let d = prepared.case.domain;
    let mut wanted: Vec<([f64; 2], f64)> = Vec::new();
    for p in prepared.case.parts.iter().filter(|p| matches!(p.role, crate::case::Role::Dielectric(_))) {
        let b = p.shape.bounds();
        if b.width() * b.height() < SMALL_PART * d.width() * d.height() {
            wanted.push(([0.5 * (b.x0 + b.x1), 0.5 * (b.y0 + b.y1)], 5.0 * b.width().max(b.height())));
        }
    }
    // peaks at a singular point (judged elsewhere): the map cannot show them
    for p in &report.parts {
        if p.e_max_kv_per_mm > 0.0 && p.e_max_judged_at_mm != p.e_max_at_mm {
            wanted.push((p.e_max_at_mm.map(crate::units::mm), 0.2 * d.width().min(d.height())));
        }
    }
    let mut out: Vec<[f64; 4]> = Vec::new();
    for (c, side) in wanted {
        if out.len() >= MAX_ZOOMS {
            break;
        }
        if out.iter().any(|w| c[0] >= w[0] && c[0] <= w[1] && c[1] >= w[2] && c[1] <= w[3]) {
            continue;
        }
        let side = side.min(d.width()).min(d.height());
        let x0 = (c[0] - 0.5 * side).clamp(d.x0, d.x1 - side);
        let y0 = (c[1] - 0.5 * side).clamp(d.y0, d.y1 - side);
        out.push([x0, x0 + side, y0, y0 + side]);
    }
    out
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
    let map_in = |shade, config: &MapConfig| {
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
            config,
        )
    };
    let map_of = |shade| map_in(shade, &MapConfig::default());
    let svg = picture::svg::render(&map_of(Shade::Field));
    let png = picture::png::render(&svg, PNG_ZOOM)?;
    let loss_coefficients =
        prepared.service.ac.as_ref().map(|ac| crate::fields::loss_coefficients(ac, prepared.case.operation.values));
    let mut extra_maps = Vec::new();
    if let Some(per_e2) = &loss_coefficients {
        extra_maps.push((
            "loss-map".to_string(),
            "loss density map".to_string(),
            map_of(Shade::LossDensity { per_e2 }),
        ));
    }
    if let Some(nodal_c) = solution.dc.as_ref().and_then(|d| d.temperature.as_deref()) {
        extra_maps.push((
            "temperature-map".to_string(),
            "temperature map".to_string(),
            map_of(Shade::Temperature { nodal_c }),
        ));
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
    for (k, window) in zoom_windows(prepared, report).into_iter().enumerate() {
        let config =
            MapConfig { view: Some(window), max_width_px: 420.0, max_height_px: 420.0, ..MapConfig::default() };
        let centre = [0.5 * (window[0] + window[1]), 0.5 * (window[2] + window[3])].map(crate::units::to_mm);
        let what = format!(
            "field map zoomed around ({}, {}) mm",
            crate::report::significant(centre[0], 3),
            crate::report::significant(centre[1], 3)
        );
        extra_maps.push((format!("zoom-{}", k + 1), what, map_in(Shade::Field, &config)));
    }
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

/// The files of a sweep's review folder besides the points' own folders:
/// every plot of `report::sweep::plots` as SVG and PNG, and `index.html`
/// linking the plots and each point's folder (`links[k]`, where point k
/// has one).
pub fn sweep_files(sweep: &serde_json::Value, links: &[Option<String>]) -> Result<Vec<ReviewFile>, ReviewError> {
    let mut out = Vec::new();
    let mut shown = Vec::new();
    for (stem, plot) in report::sweep::plots(sweep) {
        let svg = picture::plot::render(&plot);
        let png = picture::png::render(&svg, PNG_ZOOM)?;
        let what = format!("{} against {}", plot.title, plot.x_label);
        out.push(ReviewFile { name: format!("{stem}.svg"), what: format!("{what} (vector)"), bytes: svg.into_bytes() });
        out.push(ReviewFile { name: format!("{stem}.png"), what: format!("{what} (picture)"), bytes: png });
        shown.push((format!("{stem}.svg"), what));
    }
    let page = report::html::render_sweep(sweep, &shown, links);
    out.insert(0, ReviewFile { name: "index.html".into(), what: "sweep review page".into(), bytes: page.into_bytes() });
    Ok(out)
}

/// The folder name of sweep point `index` (from 0) in a sweep's review
/// folder.
pub fn point_folder(index: usize) -> String {
    format!("point-{:04}", index + 1)
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
