//! Formats a `FieldMap` as SVG: the |E| raster (an embedded indexed PNG),
//! vector outlines, equipotentials, peak markers, axes in mm and a colour
//! bar in kV/mm. Formatting only: every number comes from `build`.

use super::{FieldMap, colour};
use svg::Document;
use svg::node::element::{
    Circle, Definitions, Group, Image, Line, LinearGradient, Path, Rectangle, Stop, Text, Title, path::Data,
};

/// Font stack: the bundled face first (PNG rendering), then common ones.
pub const FONT: &str = "Ubuntu, 'DejaVu Sans', 'Helvetica Neue', Arial, sans-serif";

const LEFT: f64 = 72.0;
const TOP: f64 = 68.0;
const RIGHT: f64 = 128.0;
const AXIS_BAND: f64 = 52.0;
const LEGEND_ROW: f64 = 18.0;
const MIN_WIDTH: f64 = 560.0;
const MARKER: &str = "#d81b60";
const INK: &str = "#1f2328";

/// Prints a tick value without float noise.
fn tick_text(v: f64) -> String {
    let r = (v * 1e6).round() / 1e6;
    if r == 0.0 { "0".into() } else { format!("{r}") }
}

/// Three significant digits.
fn g3(v: f64) -> String {
    crate::report::significant(v, 3)
}

struct Frame {
    x0: f64,
    y1: f64,
    scale: f64,
}

impl Frame {
    fn px(&self, p: [f64; 2]) -> (f64, f64) {
        (LEFT + (p[0] - self.x0) * self.scale, TOP + (self.y1 - p[1]) * self.scale)
    }
}

fn round1(v: f64) -> f64 {
    (v * 10.0).round() / 10.0
}

fn polyline(frame: &Frame, points: &[[f64; 2]], close: bool) -> Data {
    let mut d = Data::new();
    for (k, p) in points.iter().enumerate() {
        let (x, y) = frame.px(*p);
        d = if k == 0 { d.move_to((round1(x), round1(y))) } else { d.line_to((round1(x), round1(y))) };
    }
    if close { d.close() } else { d }
}

fn text(x: f64, y: f64, size: f64, content: &str) -> Text {
    Text::new(content).set("x", round1(x)).set("y", round1(y)).set("font-size", size).set("fill", INK)
}

/// A text with a white halo so it reads on any colour.
fn halo_text(x: f64, y: f64, size: f64, content: &str) -> Text {
    text(x, y, size, content)
        .set("stroke", "#ffffff")
        .set("stroke-width", 3)
        .set("stroke-opacity", 0.85)
        .set("paint-order", "stroke")
        .set("stroke-linejoin", "round")
}

fn marker(x: f64, y: f64) -> Group {
    let ring = |colour: &str, width: f64| {
        Circle::new()
            .set("cx", round1(x))
            .set("cy", round1(y))
            .set("r", 6)
            .set("fill", "none")
            .set("stroke", colour)
            .set("stroke-width", width)
    };
    // A white halo under the coloured ring keeps it visible on any colour.
    Group::new()
        .add(ring("#ffffff", 4.4))
        .add(ring(MARKER, 2.2))
        .add(Circle::new().set("cx", round1(x)).set("cy", round1(y)).set("r", 1.6).set("fill", MARKER))
}

/// The raster as an indexed PNG data URI: index 0 transparent (inside
/// electrodes), 1–255 the colour scale from 0 to the scale top.
fn raster_uri(map: &FieldMap) -> String {
    let table = colour::table();
    let levels = 255usize;
    let mut palette = vec![[255u8, 255, 255]];
    palette.extend((0..levels).map(|k| table[k * (colour::STEPS - 1) / (levels - 1)]));
    let [bottom, top] = map.scale;
    let index: Vec<u8> = map
        .raster
        .values
        .iter()
        .map(|&v| {
            if v.is_nan() {
                0
            } else {
                1 + (((v - bottom) / (top - bottom)).clamp(0.0, 1.0) * (levels - 1) as f64).round() as u8
            }
        })
        .collect();
    let png = super::png::indexed(map.raster.width, map.raster.height, &index, &palette);
    use base64::Engine;
    format!("data:image/png;base64,{}", base64::engine::general_purpose::STANDARD.encode(png))
}

/// The SVG document of a field map.
pub fn render(map: &FieldMap) -> String {
    let [x0, x1, y0, y1] = map.extent_mm;
    let [pw, ph] = map.plot_px;
    let frame = Frame { x0, y1, scale: pw / (x1 - x0) };
    let legend_rows = 1 + map.peaks.len() + usize::from(!map.discharge_lines.is_empty());
    let width = (LEFT + pw + RIGHT).max(MIN_WIDTH).ceil();
    let height = (TOP + ph + AXIS_BAND + LEGEND_ROW * legend_rows as f64 + 16.0).ceil();
    let (xa, ya) = if map.axisymmetric { ("r", "z") } else { ("x", "y") };

    let mut doc = Document::new()
        .set("xmlns", "http://www.w3.org/2000/svg")
        .set("width", width)
        .set("height", height)
        .set("viewBox", (0, 0, width, height))
        .set("font-family", FONT)
        .add(Title::new(format!("{}: {} and equipotentials", map.title, map.shading.name)))
        .add(Rectangle::new().set("width", width).set("height", height).set("fill", "#ffffff"));

    // Definitions: plot clip and the colour-bar gradient (bottom = 0).
    let mut gradient = LinearGradient::new().set("id", "hv-scale").set("x1", 0).set("y1", 1).set("x2", 0).set("y2", 0);
    for k in 0..=32 {
        let t = k as f64 / 32.0;
        let [r, g, b] = colour::at(t);
        gradient = gradient.add(Stop::new().set("offset", t).set("stop-color", format!("#{r:02x}{g:02x}{b:02x}")));
    }
    let clip = svg::node::element::ClipPath::new()
        .set("id", "hv-plot")
        .add(Rectangle::new().set("x", LEFT).set("y", TOP).set("width", round1(pw)).set("height", round1(ph)));
    doc = doc.add(Definitions::new().add(gradient).add(clip));

    doc = doc.add(text(LEFT, 24.0, 15.0, &map.title).set("font-weight", "bold")).add(text(
        LEFT,
        43.0,
        12.0,
        &format!("{} · verdict: {}", map.shading.caption, map.verdict),
    ));

    // Field raster, drawn on a light grey that shows through at electrodes.
    let plot = Group::new()
        .set("clip-path", "url(#hv-plot)")
        .add(
            Rectangle::new()
                .set("x", LEFT)
                .set("y", TOP)
                .set("width", round1(pw))
                .set("height", round1(ph))
                .set("fill", "#e6e7e9"),
        )
        .add(
            Image::new()
                .set("id", "field-raster")
                .set("x", LEFT)
                .set("y", TOP)
                .set("width", round1(pw))
                .set("height", round1(ph))
                .set("preserveAspectRatio", "none")
                .set("href", raster_uri(map)),
        );

    let mut equi = Group::new()
        .set("id", "equipotentials")
        .set("fill", "none")
        .set("stroke", "#101418")
        .set("stroke-opacity", 0.6)
        .set("stroke-width", 0.8);
    for iso in &map.equipotentials {
        for p in &iso.paths {
            equi = equi.add(Path::new().set("d", polyline(&frame, p, false)).set("data-kv", g3(iso.level_kv)));
        }
    }

    let mut outlines = Group::new().set("id", "outlines").set("stroke-linejoin", "round");
    for o in map.outlines.iter().filter(|o| !o.electrode) {
        outlines = outlines.add(
            Path::new()
                .set("class", "outline")
                .set("data-part", o.name.as_str())
                .set("d", polyline(&frame, &o.points_mm, true))
                .set("fill", "none")
                .set("stroke", INK)
                .set("stroke-width", 1.1),
        );
    }
    for o in map.outlines.iter().filter(|o| o.electrode) {
        outlines = outlines.add(
            Path::new()
                .set("class", "outline electrode")
                .set("data-part", o.name.as_str())
                .set("d", polyline(&frame, &o.points_mm, true))
                .set("fill", "#a9adb3")
                .set("stroke", "#3b4046")
                .set("stroke-width", 1.3),
        );
    }
    // the critical field line of each gas part: light dashes over a dark
    // casing, readable on every colour of the scale
    let mut pd = Group::new().set("id", "pd-lines").set("fill", "none").set("stroke-linecap", "round");
    for (name, line) in &map.discharge_lines {
        let d = polyline(&frame, line, false);
        pd = pd.add(Path::new().set("d", d.clone()).set("stroke", INK).set("stroke-width", 3.2)).add(
            Path::new()
                .set("class", "pd-line")
                .set("data-part", name.as_str())
                .set("d", d)
                .set("stroke", "#fafafa")
                .set("stroke-width", 1.6)
                .set("stroke-dasharray", "4 3"),
        );
    }
    let outlines = outlines.add(pd);
    let mut labels = Group::new().set("id", "electrode-labels").set("text-anchor", "middle");
    let mut placed: Vec<[f64; 4]> = Vec::new();
    for l in &map.electrode_labels {
        let (x, y) = frame.px(l.at_mm);
        // Kept inside the plot (electrodes often sit on the domain's edge)
        // and moved down past labels already placed (thin foils side by side).
        let half = 3.4 * l.text.chars().count() as f64;
        let mut y = (y + 4.0).clamp(TOP + 14.0, TOP + ph - 5.0);
        for _ in 0..8 {
            let clash = placed.iter().any(|b| x - half < b[1] && b[0] < x + half && y - 11.0 < b[3] && b[2] < y + 2.0);
            if !clash {
                break;
            }
            y += 14.0;
        }
        placed.push([x - half, x + half, y - 11.0, y + 2.0]);
        labels = labels.add(halo_text(x, y, 11.0, &l.text).set("font-weight", "bold"));
    }
    // Peaks that fall on the same spot share one number label ("1, 2").
    let mut peaks = Group::new().set("id", "peaks");
    let spots: Vec<(f64, f64)> = map.peaks.iter().map(|p| frame.px(p.at_mm)).collect();
    for (k, p) in map.peaks.iter().enumerate() {
        let (x, y) = spots[k];
        let near = |q: &(f64, f64)| (q.0 - x).hypot(q.1 - y) < 8.0;
        let mut peak = Group::new().set("class", "peak").set("data-part", p.part.as_str()).add(marker(x, y));
        if !spots[..k].iter().any(near) {
            let numbers: Vec<String> =
                map.peaks.iter().zip(&spots).filter(|(_, q)| near(q)).map(|(q, _)| q.number.to_string()).collect();
            peak = peak.add(halo_text(x + 8.0, y - 7.0, 11.0, &numbers.join(", ")).set("font-weight", "bold"));
        }
        peaks = peaks.add(peak);
    }
    doc = doc.add(plot.add(equi).add(outlines).add(labels));

    if map.axisymmetric && x0 <= 0.0 && x1 >= 0.0 {
        let (ax, _) = frame.px([0.0, y0]);
        doc = doc.add(
            Group::new()
                .set("id", "axis")
                .add(
                    Line::new()
                        .set("x1", round1(ax))
                        .set("y1", TOP - 6.0)
                        .set("x2", round1(ax))
                        .set("y2", TOP + ph + 6.0)
                        .set("stroke", "#000000")
                        .set("stroke-width", 1.4)
                        .set("stroke-dasharray", "12 3 2 3"),
                )
                .add(text(ax + 4.0, TOP - 8.0, 11.0, "axis (r = 0)")),
        );
    }
    doc = doc.add(peaks);

    // Frame and axes in mm.
    let mut axes = Group::new().set("id", "axes").set("font-size", 11).set("fill", INK);
    axes = axes.add(
        Rectangle::new()
            .set("x", LEFT)
            .set("y", TOP)
            .set("width", round1(pw))
            .set("height", round1(ph))
            .set("fill", "none")
            .set("stroke", "#444a50")
            .set("stroke-width", 1),
    );
    for &t in &map.axis_ticks[0] {
        let (x, _) = frame.px([t, y0]);
        axes = axes
            .add(
                Line::new()
                    .set("x1", round1(x))
                    .set("y1", TOP + ph)
                    .set("x2", round1(x))
                    .set("y2", TOP + ph + 5.0)
                    .set("stroke", "#444a50"),
            )
            .add(text(x, TOP + ph + 18.0, 11.0, &tick_text(t)).set("text-anchor", "middle"));
    }
    for &t in &map.axis_ticks[1] {
        let (_, y) = frame.px([x0, t]);
        axes = axes
            .add(
                Line::new()
                    .set("x1", LEFT - 5.0)
                    .set("y1", round1(y))
                    .set("x2", LEFT)
                    .set("y2", round1(y))
                    .set("stroke", "#444a50"),
            )
            .add(text(LEFT - 8.0, y + 4.0, 11.0, &tick_text(t)).set("text-anchor", "end"));
    }
    axes = axes.add(text(LEFT + pw / 2.0, TOP + ph + 36.0, 12.0, &format!("{xa} (mm)")).set("text-anchor", "middle"));
    let (lx, ly) = (18.0, TOP + ph / 2.0);
    axes = axes.add(
        text(lx, ly, 12.0, &format!("{ya} (mm)"))
            .set("text-anchor", "middle")
            .set("transform", format!("rotate(-90 {lx} {})", round1(ly))),
    );
    doc = doc.add(axes);

    // Colour bar.
    let bx = LEFT + pw + 26.0;
    let bh = ph.clamp(120.0, 320.0);
    let mut bar = Group::new().set("id", "colour-bar").add(text(bx, TOP - 8.0, 11.0, &map.shading.bar_title)).add(
        Rectangle::new()
            .set("x", bx)
            .set("y", TOP)
            .set("width", 16)
            .set("height", round1(bh))
            .set("fill", "url(#hv-scale)")
            .set("stroke", "#444a50")
            .set("stroke-width", 0.8),
    );
    for &t in &map.scale_ticks {
        let y = TOP + bh * (1.0 - (t - map.scale[0]) / (map.scale[1] - map.scale[0]));
        bar = bar
            .add(
                Line::new()
                    .set("x1", bx + 16.0)
                    .set("y1", round1(y))
                    .set("x2", bx + 21.0)
                    .set("y2", round1(y))
                    .set("stroke", "#444a50"),
            )
            .add(text(bx + 24.0, y + 4.0, 11.0, &tick_text(t)).set("class", "tick"));
    }
    doc = doc.add(bar);

    // Legend under the axes.
    let mut legend = Group::new().set("id", "legend").set("font-size", 12);
    let mut y = TOP + ph + AXIS_BAND + 8.0;
    let equi_text = if map.equipotentials.is_empty() {
        "No equipotentials: the fixed electrodes share one potential.".to_string()
    } else {
        format!("Thin dark lines: equipotentials every {} kV.", g3(map.equipotential_step_kv))
    };
    legend = legend.add(text(LEFT, y, 12.0, &equi_text));
    for p in &map.peaks {
        y += LEGEND_ROW;
        legend = legend.add(marker(LEFT + 6.0, y - 4.0)).add(text(
            LEFT + 18.0,
            y,
            12.0,
            &format!("{}: peak in {}, {} {}", p.number, p.part, g3(p.value), map.shading.unit),
        ));
    }
    if !map.discharge_lines.is_empty() {
        y += LEGEND_ROW;
        let names: Vec<&str> = map.discharge_lines.iter().map(|l| l.0.as_str()).collect();
        legend = legend
            .add(Path::new().set("d", format!("M{} {}h14", LEFT, y - 4.0)).set("stroke", INK).set("stroke-width", 3.2))
            .add(
                Path::new()
                    .set("d", format!("M{} {}h14", LEFT, y - 4.0))
                    .set("stroke", "#fafafa")
                    .set("stroke-width", 1.6)
                    .set("stroke-dasharray", "4 3"),
            )
            .add(text(
                LEFT + 18.0,
                y,
                12.0,
                &format!("critical field line of partial-discharge inception in {}", names.join(", ")),
            ));
    }
    doc.add(legend).to_string()
}
