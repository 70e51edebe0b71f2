//! Stage 8: field maps. `build` computes everything a picture shows — the
//! |E| raster, equipotential lines, part outlines, peak markers and scale
//! ticks — in report units (mm, kV, kV/mm); `svg` only formats it and `png`
//! only rasterises the SVG. Nothing here feeds back into the assessment.

pub mod colour;
pub mod plot;
pub mod png;
pub mod svg;

use crate::case::{Case, Geometry};
use crate::fields::{Inside, Sampler};
use crate::grid::{Grid, Layout};
use crate::report::CheckReport;
use crate::units::{to_kv, to_kv_per_mm, to_mm};

/// Size limits of the plot area in pixels (SVG user units).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MapConfig {
    /// Widest plot area.
    pub max_width_px: f64,
    /// Tallest plot area.
    pub max_height_px: f64,
    /// Equipotential lines drawn between the lowest and highest fixed
    /// potential (at 1/(n+1), 2/(n+1), … of the difference).
    pub equipotentials: usize,
    /// The window shown, [x0, x1, y0, y1] in m (`None`: the whole domain; a
    /// zoom around a peak or a small part otherwise).
    pub view: Option<[f64; 4]>,
    /// The field colour scale tops out at this quantile of the shaded
    /// pixels' |E| (rounded up to a nice number): a singular peak would
    /// otherwise darken the whole map. Peaks above it are marked, with their
    /// values in the legend.
    pub field_top_quantile: f64,
}

impl Default for MapConfig {
    fn default() -> Self {
        MapConfig {
            max_width_px: 900.0,
            max_height_px: 600.0,
            equipotentials: 9,
            view: None,
            field_top_quantile: FIELD_TOP_QUANTILE,
        }
    }
}

/// The quantile of |E| over the shaded pixels at which the field colours
/// top out (our choice: the 1 % of the area above it are the concentrations
/// the markers point at).
pub const FIELD_TOP_QUANTILE: f64 = 0.99;

/// The `q` quantile of the finite values (nearest rank), 0 when none.
fn quantile(values: &[f64], q: f64) -> f64 {
    let mut v: Vec<f64> = values.iter().copied().filter(|v| v.is_finite()).collect();
    if v.is_empty() {
        return 0.0;
    }
    v.sort_by(f64::total_cmp);
    let k = ((q.clamp(0.0, 1.0) * v.len() as f64).ceil() as usize).clamp(1, v.len()) - 1;
    v[k]
}

/// The shaded quantity sampled at pixel centres, row 0 at the top
/// (largest y).
#[derive(Debug, Clone, PartialEq)]
pub struct Raster {
    /// Columns.
    pub width: usize,
    /// Rows.
    pub height: usize,
    /// Values in the map's unit (`Shading::unit`), row-major; NaN inside
    /// electrodes.
    pub values: Vec<f64>,
}

/// What the colours of a map show.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Shade<'a> {
    /// |E| in kV/mm (the phasor magnitude for AC with losses).
    Field,
    /// AC loss density in W/m³: each region's coefficient (W/m³ per
    /// (V/m)², from `fields::RegionLoss::per_e2`) times |E|².
    LossDensity {
        /// Coefficient of each region (layout order).
        per_e2: &'a [f64],
    },
    /// Temperature in °C from nodal values.
    Temperature {
        /// Temperature at every node, °C.
        nodal_c: &'a [f64],
    },
}

/// One equipotential level.
#[derive(Debug, Clone, PartialEq)]
pub struct Isoline {
    /// Potential in kV.
    pub level_kv: f64,
    /// Polylines in mm.
    pub paths: Vec<Vec<[f64; 2]>>,
}

/// The outline of a part.
#[derive(Debug, Clone, PartialEq)]
pub struct Outline {
    /// Part name.
    pub name: String,
    /// Electrodes are drawn filled.
    pub electrode: bool,
    /// Closed polygon in mm.
    pub points_mm: Vec<[f64; 2]>,
}

/// A marked peak field.
#[derive(Debug, Clone, PartialEq)]
pub struct Peak {
    /// Number shown beside the marker (1-based, in the order of the parts table).
    pub number: usize,
    /// Part name.
    pub part: String,
    /// Where, in mm.
    pub at_mm: [f64; 2],
    /// The part's largest value in the map's unit.
    pub value: f64,
}

/// A label placed on the map.
#[derive(Debug, Clone, PartialEq)]
pub struct Label {
    /// Text.
    pub text: String,
    /// Anchor in mm.
    pub at_mm: [f64; 2],
    /// The labelled part's bounding box in the view, [x0, x1, y0, y1] mm.
    pub part_mm: [f64; 4],
}

/// The words of a shaded quantity.
#[derive(Debug, Clone, PartialEq)]
pub struct Shading {
    /// Colour-bar title, e.g. "|E| (kV/mm rms)".
    pub bar_title: String,
    /// Caption under the map title.
    pub caption: String,
    /// Unit of the values, e.g. "kV/mm rms".
    pub unit: String,
    /// The map's short name ("field", "loss density", "temperature").
    pub name: &'static str,
}

/// Everything a field map shows, in report units.
#[derive(Debug, Clone, PartialEq)]
pub struct FieldMap {
    /// Case title.
    pub title: String,
    /// `rms` or `peak`: the convention of every field on the map.
    pub values: &'static str,
    /// Axisymmetric cases show the axis and label axes r and z.
    pub axisymmetric: bool,
    /// Domain [x0, x1, y0, y1] in mm.
    pub extent_mm: [f64; 4],
    /// Plot area in pixels (width, height); the mm scale is the same on both axes.
    pub plot_px: [f64; 2],
    /// What is shaded: the colour bar's title, the caption under the
    /// title, and the unit of the peak labels.
    pub shading: Shading,
    /// The shaded raster.
    pub raster: Raster,
    /// Bottom and top of the colour scale in the map's unit.
    pub scale: [f64; 2],
    /// Values above the top are drawn in the top colour (the scale was
    /// clipped below the largest peak).
    pub clipped: bool,
    /// A zoom around a point of the domain (not the whole domain).
    pub zoom: bool,
    /// Ticks on the colour bar in the map's unit.
    pub scale_ticks: Vec<f64>,
    /// Ticks along x and y in mm.
    pub axis_ticks: [Vec<f64>; 2],
    /// Equipotential lines.
    pub equipotentials: Vec<Isoline>,
    /// Spacing of the equipotential lines in kV (0 when there are none).
    pub equipotential_step_kv: f64,
    /// Part outlines in painting order.
    pub outlines: Vec<Outline>,
    /// Electrode names.
    pub electrode_labels: Vec<Label>,
    /// Peak field of each part.
    pub peaks: Vec<Peak>,
    /// The critical field line of each gas part with an inception level
    /// (part name, polyline in mm).
    pub discharge_lines: Vec<(String, Vec<[f64; 2]>)>,
    /// Verdict word (pass, review, fail).
    pub verdict: &'static str,
}

/// What `build` reads.
pub struct MapInputs<'a> {
    /// The case.
    pub case: &'a Case,
    /// The grid.
    pub grid: &'a Grid,
    /// The painted layout.
    pub layout: &'a Layout,
    /// Nodal potential in V (the in-phase part of an AC phasor).
    pub phi: &'a [f64],
    /// The quadrature part of an AC phasor with losses, V.
    pub quadrature: Option<&'a [f64]>,
    /// The result (peaks, verdict, names).
    pub report: &'a CheckReport,
    /// What the colours show.
    pub shade: Shade<'a>,
}

/// A "nice" number near `v` (1, 2, 2.5 or 5 times a power of ten), at or
/// above it when `up`, else the nearest.
fn nice(v: f64, up: bool) -> f64 {
    if !(v.is_finite() && v > 0.0) {
        return 1.0;
    }
    let p = 10f64.powf(v.log10().floor());
    let candidates = [1.0, 2.0, 2.5, 5.0, 10.0];
    if up {
        candidates.iter().map(|c| c * p).find(|c| *c >= v * (1.0 - 1e-9)).unwrap_or(10.0 * p)
    } else {
        candidates.iter().map(|c| c * p).min_by(|a, b| (a - v).abs().total_cmp(&(b - v).abs())).unwrap_or(p)
    }
}

/// Ticks at multiples of a nice step covering [lo, hi], about `n` of them.
pub fn ticks(lo: f64, hi: f64, n: usize) -> Vec<f64> {
    if hi.partial_cmp(&lo) != Some(std::cmp::Ordering::Greater) {
        return vec![lo];
    }
    let step = nice((hi - lo) / n.max(1) as f64, false);
    let first = (lo / step - 1e-9).ceil() as i64;
    let last = (hi / step + 1e-9).floor() as i64;
    // Rounded to the step's digits so that labels print cleanly.
    (first..=last).map(|k| k as f64 * step).map(|v| if v.abs() < step * 1e-9 { 0.0 } else { v }).collect()
}

/// Coordinate at fractional index `f` along node coordinates `v`.
fn at_index(v: &[f64], f: f64) -> f64 {
    let f = f.clamp(0.0, (v.len() - 1) as f64);
    let k = (f.floor() as usize).min(v.len() - 2);
    v[k] + (f - k as f64) * (v[k + 1] - v[k])
}

/// Equipotential polylines at `levels` (V) from the nodal potential, in m.
/// The contour crate pads the grid and closes rings along its border; the
/// rings are cut where they leave the grid, so only true isolines remain.
fn isolines(grid: &Grid, phi: &[f64], levels: &[f64]) -> Vec<Vec<Vec<[f64; 2]>>> {
    let (nx, ny) = (grid.nx(), grid.ny());
    let builder = contour::ContourBuilder::new(nx, ny, true);
    let Ok(lines) = builder.lines(phi, levels) else {
        return vec![Vec::new(); levels.len()];
    };
    // Node (i, j) sits at (i + ½, j + ½) in the crate's coordinates.
    let inside = |c: &contour::Float, n: usize| *c >= 0.5 - 1e-9 && *c <= n as f64 - 0.5 + 1e-9;
    lines
        .iter()
        .map(|line| {
            let mut paths = Vec::new();
            for ls in line.geometry().0.iter() {
                let mut current: Vec<[f64; 2]> = Vec::new();
                for c in ls.0.iter() {
                    if inside(&c.x, nx) && inside(&c.y, ny) {
                        current.push([at_index(&grid.x, c.x - 0.5), at_index(&grid.y, c.y - 0.5)]);
                    } else if current.len() > 1 {
                        paths.push(std::mem::take(&mut current));
                    } else {
                        current.clear();
                    }
                }
                if current.len() > 1 {
                    paths.push(current);
                }
            }
            paths
        })
        .collect()
}

/// Drops points closer than `tol` (mm) to the last kept one.
fn thin(path: Vec<[f64; 2]>, tol: f64) -> Vec<[f64; 2]> {
    let n = path.len();
    let mut out: Vec<[f64; 2]> = Vec::with_capacity(n);
    for (k, p) in path.into_iter().enumerate() {
        let keep = match out.last() {
            None => true,
            Some(q) => k + 1 == n || (p[0] - q[0]).hypot(p[1] - q[1]) >= tol,
        };
        if keep {
            out.push(p);
        }
    }
    out
}

/// Most characters of the title drawn on a map (about its width at 15 px).
const MAP_TITLE_CHARS: usize = 110;
/// Most characters of a name drawn on a map (labels, legend).
const MAP_NAME_CHARS: usize = 40;

/// `s` cut to at most `max` characters, the cut marked with "…". The map
/// has a fixed width, so longer text would only be clipped (and the SVG
/// text layout's cost grows faster than the text's length).
fn elide(s: &str, max: usize) -> String {
    match s.char_indices().nth(max.saturating_sub(1)) {
        Some((i, _)) if s.chars().count() > max => format!("{}…", &s[..i]),
        _ => s.to_string(),
    }
}

/// A part's largest value of the shaded quantity, from its result.
type PeakOf = dyn Fn(&crate::report::PartOut) -> Option<f64>;

/// Computes a field map.
pub fn build(inp: &MapInputs, config: &MapConfig) -> FieldMap {
    let MapInputs { case, grid, layout, phi, quadrature, report, shade } = *inp;
    let d = match config.view {
        Some([x0, x1, y0, y1]) => crate::shape::Rect { x0, x1, y0, y1 },
        None => case.domain,
    };
    let extent_mm = [to_mm(d.x0), to_mm(d.x1), to_mm(d.y0), to_mm(d.y1)];
    let (w_mm, h_mm) = (extent_mm[1] - extent_mm[0], extent_mm[3] - extent_mm[2]);
    let px_per_mm = (config.max_width_px / w_mm).min(config.max_height_px / h_mm);
    let plot_px = [w_mm * px_per_mm, h_mm * px_per_mm];
    let (width, height) = (plot_px[0].round().max(1.0) as usize, plot_px[1].round().max(1.0) as usize);

    let sampler = Sampler::phasor(case, grid, layout, phi, quadrature);
    let mut values = Vec::with_capacity(width * height);
    for row in 0..height {
        let y = d.y1 - (row as f64 + 0.5) / height as f64 * d.height();
        for col in 0..width {
            let x = d.x0 + (col as f64 + 0.5) / width as f64 * d.width();
            let s = sampler.at([x, y]);
            values.push(match (s.inside, shade) {
                (Inside::Electrode(_), _) => f64::NAN,
                (Inside::Region(_), Shade::Field) => to_kv_per_mm(s.magnitude()),
                (Inside::Region(r), Shade::LossDensity { per_e2 }) => per_e2[r as usize] * s.magnitude().powi(2),
                (Inside::Region(_), Shade::Temperature { nodal_c }) => sampler.interpolate(nodal_c, [x, y]),
            });
        }
    }
    let (shading, peak_of): (Shading, &PeakOf) = match shade {
        Shade::Field => (
            Shading {
                bar_title: format!("|E| (kV/mm {})", report.values),
                caption: format!("|E| in kV/mm {} with equipotentials", report.values),
                unit: format!("kV/mm {}", report.values),
                name: "field",
            },
            &|p| Some(p.e_max_kv_per_mm),
        ),
        Shade::LossDensity { .. } => (
            Shading {
                bar_title: "loss (W/m³)".into(),
                caption: "dielectric and conduction loss density in W/m³ with equipotentials".into(),
                unit: "W/m³".into(),
                name: "loss density",
            },
            &|p| p.loss_density_max_w_per_m3,
        ),
        Shade::Temperature { .. } => (
            Shading {
                bar_title: "T (°C)".into(),
                caption: "temperature in °C with equipotentials".into(),
                unit: "°C".into(),
                name: "temperature",
            },
            &|p| p.temperature_range_c.map(|r| r[1]),
        ),
    };
    let finite = values.iter().copied().filter(|v| v.is_finite());
    let (lo, hi) = finite.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| (a.min(v), b.max(v)));
    let largest_peak = report.parts.iter().map(|p| p.e_max_kv_per_mm).fold(0.0, f64::max);
    let scale = match shade {
        Shade::Field => [0.0, nice(quantile(&values, config.field_top_quantile).min(largest_peak), true)],
        Shade::LossDensity { .. } => [0.0, nice(hi.max(f64::MIN_POSITIVE), true)],
        Shade::Temperature { .. } if hi > lo => {
            // whole steps of a round size around the range
            let step = nice((hi - lo) / 5.0, true);
            [(lo / step).floor() * step, (hi / step).ceil() * step]
        }
        Shade::Temperature { .. } => [lo.floor() - 1.0, hi.ceil() + 1.0],
    };

    let fixed: Vec<f64> = layout
        .electrodes
        .iter()
        .filter_map(|e| match e.kind {
            crate::case::ElectrodeKind::Fixed { potential_v } => Some(potential_v),
            crate::case::ElectrodeKind::Floating => None,
        })
        .collect();
    let (lo, hi) = fixed.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| (a.min(v), b.max(v)));
    let n = config.equipotentials;
    let levels: Vec<f64> =
        if hi > lo { (1..=n).map(|k| lo + (hi - lo) * k as f64 / (n + 1) as f64).collect() } else { Vec::new() };
    let tol_mm = 0.4 / px_per_mm;
    let equipotentials = isolines(grid, phi, &levels)
        .into_iter()
        .zip(&levels)
        .map(|(paths, &level)| Isoline {
            level_kv: to_kv(level),
            paths: paths.into_iter().map(|p| thin(p.into_iter().map(|q| q.map(to_mm)).collect(), tol_mm)).collect(),
        })
        .collect();

    let outlines = case
        .parts
        .iter()
        .map(|p| Outline {
            name: p.name.clone(),
            electrode: matches!(p.role, crate::case::Role::Electrode(_)),
            points_mm: p.shape.outline().into_iter().map(|q| q.map(to_mm)).collect(),
        })
        .collect();
    let electrode_labels = case
        .electrodes()
        .filter(|(_, p, _)| p.shape.bounds().intersects(&d))
        .map(|(_, p, _)| {
            let b = p.shape.bounds();
            let cx = 0.5 * (b.x0.max(d.x0) + b.x1.min(d.x1));
            let cy = 0.5 * (b.y0.max(d.y0) + b.y1.min(d.y1));
            let part_mm = [b.x0.max(d.x0), b.x1.min(d.x1), b.y0.max(d.y0), b.y1.min(d.y1)].map(to_mm);
            Label { text: elide(&p.name, MAP_NAME_CHARS), at_mm: [to_mm(cx), to_mm(cy)], part_mm }
        })
        .collect();
    let in_view =
        |a: [f64; 2]| a[0] >= extent_mm[0] && a[0] <= extent_mm[1] && a[1] >= extent_mm[2] && a[1] <= extent_mm[3];
    let peaks: Vec<Peak> = report
        .parts
        .iter()
        .enumerate()
        .filter(|(_, p)| p.e_max_kv_per_mm > 0.0 && matches!(shade, Shade::Field | Shade::LossDensity { .. }))
        .filter(|(_, p)| in_view(p.e_max_at_mm))
        .filter_map(|(k, p)| {
            peak_of(p).map(|value| Peak {
                number: k + 1,
                part: elide(&p.name, MAP_NAME_CHARS),
                at_mm: p.e_max_at_mm,
                value,
            })
        })
        .collect();

    FieldMap {
        title: elide(&report.title, MAP_TITLE_CHARS),
        values: report.values,
        axisymmetric: case.geometry == Geometry::Axisymmetric,
        extent_mm,
        plot_px,
        shading,
        clipped: matches!(shade, Shade::Field) && peaks.iter().any(|p| p.value > scale[1]),
        zoom: config.view.is_some(),
        raster: Raster { width, height, values },
        scale_ticks: ticks(scale[0], scale[1], 5),
        scale,
        axis_ticks: [
            ticks(extent_mm[0], extent_mm[1], (plot_px[0] / 90.0).round().max(2.0) as usize),
            ticks(extent_mm[2], extent_mm[3], (plot_px[1] / 70.0).round().max(2.0) as usize),
        ],
        equipotentials,
        equipotential_step_kv: if levels.is_empty() { 0.0 } else { to_kv((hi - lo) / (n + 1) as f64) },
        outlines,
        electrode_labels,
        peaks,
        discharge_lines: report
            .parts
            .iter()
            .filter(|p| p.pd_inception_kv.is_some() && p.pd_line_mm.len() > 1)
            .map(|p| (p.name.clone(), thin(p.pd_line_mm.clone(), 1e-3 * w_mm.max(h_mm))))
            .collect(),
        verdict: match report.verdict {
            crate::report::VerdictOut::Pass => "pass",
            crate::report::VerdictOut::Review => "review",
            crate::report::VerdictOut::Fail => "fail",
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn long_text_is_elided_to_a_fixed_budget() {
        assert_eq!(elide("short", 10), "short");
        assert_eq!(elide("exactly10!", 10), "exactly10!");
        assert_eq!(elide("eleven char", 10), "eleven ch…");
        assert_eq!(elide(&"é".repeat(500), 40).chars().count(), 40);
    }

    #[test]
    fn quantile_by_nearest_rank_skips_electrode_pixels() {
        // nearest-rank quantile (common practice): of 1..=100, the 99th is 99
        let mut v: Vec<f64> = (1..=100).map(f64::from).collect();
        v.push(f64::NAN);
        assert_eq!(quantile(&v, 0.99), 99.0);
        assert_eq!(quantile(&v, 1.0), 100.0);
        assert_eq!(quantile(&[f64::NAN], 0.99), 0.0);
    }

    #[test]
    fn nice_numbers_and_ticks() {
        // Round tick steps 1-2-2.5-5 (common practice for chart axes).
        assert_eq!(nice(3.2, true), 5.0);
        assert_eq!(nice(0.021, true), 0.025);
        assert_eq!(nice(10.0, true), 10.0);
        assert_eq!(ticks(0.0, 10.0, 5), vec![0.0, 2.0, 4.0, 6.0, 8.0, 10.0]);
        assert_eq!(ticks(-3.0, 3.0, 3), vec![-2.0, 0.0, 2.0]);
    }

    #[test]
    fn fractional_index_maps_onto_graded_coordinates() {
        let v = [0.0, 1.0, 3.0];
        assert_eq!(at_index(&v, 0.5), 0.5);
        assert_eq!(at_index(&v, 1.5), 2.0);
        assert_eq!(at_index(&v, 2.0), 3.0);
    }

    #[test]
    fn thinning_keeps_the_ends() {
        let p = vec![[0.0, 0.0], [0.01, 0.0], [0.02, 0.0], [1.0, 0.0], [1.001, 0.0]];
        assert_eq!(thin(p, 0.1), vec![[0.0, 0.0], [1.0, 0.0], [1.001, 0.0]]);
    }
}
