//! Line plots of a study (a figure against a varied key) as SVG: data
//! series as lines with point markers, limit series (strength over the
//! safety factor, the working level, …) dashed, axes with ticks, a legend
//! beside the plot. Formatting only: every number comes from the caller.

use super::svg::FONT;
use svg::Document;
use svg::node::element::{Circle, Line, Path, Rectangle, Text, Title, path::Data};

/// What a series is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SeriesKind {
    /// A computed figure: a line with a marker at every point.
    Data,
    /// A limit the figure is judged against: dashed, no markers.
    Limit,
    /// Scattered points (a random study): markers only.
    Points,
    /// A limit at scattered points: a short dash at each.
    LimitPoints,
}

/// One series: points (x, y) in plot units; a non-finite y breaks the line.
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    /// Legend text.
    pub label: String,
    /// Data or limit.
    pub kind: SeriesKind,
    /// Colour slot (series that belong together share one).
    pub colour: usize,
    /// The points, in x order.
    pub points: Vec<[f64; 2]>,
}

/// A plot of one figure against one key.
#[derive(Debug, Clone, PartialEq)]
pub struct Plot {
    /// Heading.
    pub title: String,
    /// Horizontal axis: the key (with its unit where known).
    pub x_label: String,
    /// Vertical axis: the figure and its unit.
    pub y_label: String,
    /// Words for the horizontal positions 0, 1, … when the key's values are
    /// not numbers (`None`: numeric axis).
    pub categories: Option<Vec<String>>,
    /// The series.
    pub series: Vec<Series>,
}

/// Colours of the series slots: distinct in hue and lightness (readable in
/// grey print), cycled.
const COLOURS: [&str; 10] =
    ["#1b4f8a", "#c2571a", "#2a8a5b", "#8a2a6e", "#6b6b00", "#4a4a4a", "#0f8fa8", "#d4a017", "#b5346a", "#7a5230"];
const INK: &str = "#1f2328";
const GRID: &str = "#e3e5e8";
const WIDTH: f64 = 800.0;
const HEIGHT: f64 = 400.0;
const LEFT: f64 = 72.0;
const TOP: f64 = 48.0;
const PLOT_W: f64 = 440.0;
const PLOT_H: f64 = 290.0;
const LEGEND_X: f64 = LEFT + PLOT_W + 18.0;
/// Most characters of a legend entry.
const LEGEND_CHARS: usize = 40;

fn colour(slot: usize) -> &'static str {
    COLOURS[slot % COLOURS.len()]
}

fn text(x: f64, y: f64, size: f64, s: &str) -> Text {
    Text::new(s).set("x", round1(x)).set("y", round1(y)).set("font-size", size).set("fill", INK)
}

fn round1(v: f64) -> f64 {
    (v * 10.0).round() / 10.0
}

/// The range of the finite values, padded; a flat range gets a band
/// around its value.
fn range(values: impl Iterator<Item = f64>) -> Option<(f64, f64)> {
    let (lo, hi) =
        values.filter(|v| v.is_finite()).fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| (a.min(v), b.max(v)));
    if !lo.is_finite() {
        return None;
    }
    let pad = if hi > lo { 0.06 * (hi - lo) } else { 0.1 * lo.abs().max(1e-12) };
    Some((lo - pad, hi + pad))
}

/// A tick value without float noise (ticks are multiples of a nice step).
fn tick_text(v: f64) -> String {
    let r = (v * 1e9).round() / 1e9;
    if r == 0.0 {
        "0".into()
    } else if r.abs() >= 1e6 || r.abs() < 1e-4 {
        format!("{r:e}")
    } else {
        format!("{r}")
    }
}

fn elide(s: &str) -> String {
    if s.chars().count() > LEGEND_CHARS {
        format!("{}…", s.chars().take(LEGEND_CHARS - 1).collect::<String>())
    } else {
        s.to_string()
    }
}

/// The plot as an SVG document.
pub fn render(plot: &Plot) -> String {
    let mut doc = Document::new()
        .set("xmlns", "http://www.w3.org/2000/svg")
        .set("width", WIDTH)
        .set("height", HEIGHT)
        .set("viewBox", (0, 0, WIDTH, HEIGHT))
        .set("font-family", FONT)
        .add(Title::new(format!("{}: {} against {}", plot.title, plot.y_label, plot.x_label)))
        .add(Rectangle::new().set("width", "100%").set("height", "100%").set("fill", "#ffffff"))
        .add(text(LEFT, 24.0, 15.0, &plot.title).set("font-weight", "bold"));
    let xs = plot.series.iter().flat_map(|s| s.points.iter().map(|p| p[0]));
    let ys = plot.series.iter().flat_map(|s| s.points.iter().map(|p| p[1]));
    let (Some((x0, x1)), Some((y0, y1))) = (range(xs), range(ys)) else {
        return doc.add(text(LEFT, TOP + 40.0, 13.0, "no finite values to plot")).to_string();
    };
    let px = |x: f64| LEFT + (x - x0) / (x1 - x0) * PLOT_W;
    let py = |y: f64| TOP + PLOT_H - (y - y0) / (y1 - y0) * PLOT_H;
    doc = doc.add(
        Rectangle::new()
            .set("x", LEFT)
            .set("y", TOP)
            .set("width", PLOT_W)
            .set("height", PLOT_H)
            .set("fill", "none")
            .set("stroke", INK)
            .set("stroke-width", 1),
    );
    for t in super::ticks(y0, y1, 6) {
        let y = round1(py(t));
        doc = doc
            .add(Line::new().set("x1", LEFT).set("x2", LEFT + PLOT_W).set("y1", y).set("y2", y).set("stroke", GRID))
            .add(text(LEFT - 6.0, y + 4.0, 11.0, &tick_text(t)).set("text-anchor", "end"));
    }
    let x_ticks: Vec<(f64, String)> = match &plot.categories {
        Some(words) => words.iter().enumerate().map(|(k, w)| (k as f64, w.clone())).collect(),
        None => super::ticks(x0, x1, 6).into_iter().map(|t| (t, tick_text(t))).collect(),
    };
    for (t, label) in x_ticks {
        let x = round1(px(t));
        doc = doc
            .add(Line::new().set("x1", x).set("x2", x).set("y1", TOP).set("y2", TOP + PLOT_H).set("stroke", GRID))
            .add(text(x, TOP + PLOT_H + 16.0, 11.0, &label).set("text-anchor", "middle"));
    }
    doc =
        doc.add(text(LEFT + PLOT_W / 2.0, TOP + PLOT_H + 38.0, 12.0, &plot.x_label).set("text-anchor", "middle")).add(
            text(16.0, TOP + PLOT_H / 2.0, 12.0, &plot.y_label)
                .set("text-anchor", "middle")
                .set("transform", format!("rotate(-90 16 {})", round1(TOP + PLOT_H / 2.0))),
        );
    for (k, s) in plot.series.iter().enumerate() {
        let c = colour(s.colour);
        // a non-finite value breaks the line
        let mut data = Data::new();
        let mut pen_down = false;
        for p in &s.points {
            if p[1].is_finite() {
                let at = (round1(px(p[0])), round1(py(p[1])));
                data = if pen_down { data.line_to(at) } else { data.move_to(at) };
                pen_down = true;
            } else {
                pen_down = false;
            }
        }
        let mut path = Path::new().set("d", data).set("fill", "none").set("stroke", c).set("stroke-width", 1.8);
        if s.kind == SeriesKind::Limit {
            path = path.set("stroke-dasharray", "6 4");
        }
        match s.kind {
            SeriesKind::Data | SeriesKind::Limit => doc = doc.add(path),
            SeriesKind::Points => {}
            SeriesKind::LimitPoints => {
                for p in s.points.iter().filter(|p| p[1].is_finite()) {
                    let (x, y) = (round1(px(p[0])), round1(py(p[1])));
                    doc = doc.add(
                        Line::new()
                            .set("x1", x - 5.0)
                            .set("x2", x + 5.0)
                            .set("y1", y)
                            .set("y2", y)
                            .set("stroke", c)
                            .set("stroke-width", 2),
                    );
                }
            }
        }
        if matches!(s.kind, SeriesKind::Data | SeriesKind::Points) {
            for p in s.points.iter().filter(|p| p[1].is_finite()) {
                doc = doc.add(
                    Circle::new().set("cx", round1(px(p[0]))).set("cy", round1(py(p[1]))).set("r", 2.8).set("fill", c),
                );
            }
        }
        let y = TOP + 8.0 + 18.0 * k as f64;
        if s.kind == SeriesKind::Points {
            doc = doc.add(Circle::new().set("cx", LEGEND_X + 11.0).set("cy", y).set("r", 2.8).set("fill", c));
        } else {
            let mut key = Line::new()
                .set("x1", LEGEND_X)
                .set("x2", LEGEND_X + 22.0)
                .set("y1", y)
                .set("y2", y)
                .set("stroke", c)
                .set("stroke-width", 1.8);
            if s.kind == SeriesKind::Limit {
                key = key.set("stroke-dasharray", "6 4");
            }
            if s.kind == SeriesKind::LimitPoints {
                key = key.set("x1", LEGEND_X + 6.0).set("x2", LEGEND_X + 16.0).set("stroke-width", 2);
            }
            doc = doc.add(key);
        }
        doc = doc.add(text(LEGEND_X + 28.0, y + 4.0, 11.0, &elide(&s.label)));
    }
    doc.to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn series_draw_inside_the_frame_and_limits_are_dashed() {
        let plot = Plot {
            title: "t".into(),
            x_label: "x".into(),
            y_label: "y".into(),
            categories: None,
            series: vec![
                Series { label: "a".into(), kind: SeriesKind::Data, colour: 0, points: vec![[0.0, 1.0], [1.0, 2.0]] },
                Series {
                    label: "limit".into(),
                    kind: SeriesKind::Limit,
                    colour: 1,
                    points: vec![[0.0, 3.0], [1.0, f64::NAN]],
                },
            ],
        };
        let svg = render(&plot);
        assert_eq!(svg.matches("<circle").count(), 2);
        assert_eq!(svg.matches("stroke-dasharray").count(), 2);
        // well-formed: the rasteriser reads it
        assert!(crate::picture::png::render(&svg, 1.0).is_ok(), "{svg}");
        // nothing to plot: said, not drawn
        let empty = Plot { series: vec![], ..plot };
        assert!(render(&empty).contains("no finite values"));
    }
}
