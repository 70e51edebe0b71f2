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
/// Width of one character of an 11 px bold label (an estimate for placing).
const LABEL_CHAR_PX: f64 = 6.8;
const INK: &str = "#1f2328";

/// Prints a tick value without float noise.
fn tick_text(v: f64) -> String {
    let r = (v * 1e6).round() / 1e6;
    if r == 0.0 { "0".into() } else { format!("{r}") }
}

/// `v` kept in [lo, hi]; the middle when the range is empty (a plot
/// flatter than a marker: a thin planar stack drawn to scale).
fn within(v: f64, lo: f64, hi: f64) -> f64 {
    if lo <= hi { v.clamp(lo, hi) } else { 0.5 * (lo + hi) }
}

/// Three significant digits.
fn g3(v: f64) -> String {
    crate::report::significant(v, 3)
}

/// True when two boxes [x0, x1, y0, y1] overlap.
fn overlaps(a: &[f64; 4], b: &[f64; 4]) -> bool {
    a[0] < b[1] && b[0] < a[1] && a[2] < b[3] && b[2] < a[3]
}

/// Boxes already used on the plot, and the plot's own box.
struct Placer {
    plot: [f64; 4],
    taken: Vec<[f64; 4]>,
}

impl Placer {
    /// Inside the plot and clear of everything placed.
    fn free(&self, b: &[f64; 4]) -> bool {
        b[0] >= self.plot[0] + 2.0
            && b[1] <= self.plot[1] - 2.0
            && b[2] >= self.plot[2] + 2.0
            && b[3] <= self.plot[3] - 2.0
            && !self.taken.iter().any(|t| overlaps(b, t))
    }
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
    let width = (LEFT + pw + RIGHT).max(MIN_WIDTH).ceil();
    // the height follows the legend, set at the end; the background is
    // drawn tall enough for any legend
    let height = (TOP + ph + AXIS_BAND + LEGEND_ROW * (4 + map.peaks.len()) as f64 + 16.0).ceil();
    let (xa, ya) = if map.axisymmetric { ("r", "z") } else { ("x", "y") };

    let mut doc = Document::new()
        .set("xmlns", "http://www.w3.org/2000/svg")
        .set("width", width)
        .set("height", height)
        .set("viewBox", (0, 0, width, height))
        .set("font-family", FONT)
        .add(Title::new(format!("{}: {} and equipotentials", map.title, map.shading.name)))
        .add(Rectangle::new().set("width", "100%").set("height", "100%").set("fill", "#ffffff"));

    // Definitions: plot clip and the colour-bar gradient (bottom = 0).
    // Several maps sit inline on one review page, where an id names the
    // first element that has it: the clip and the gradient take ids of this
    // map's own (its quantity and window).
    let own: String = format!("{}-{:?}", map.shading.name, map.extent_mm)
        .chars()
        .map(|c| if c.is_ascii_alphanumeric() { c } else { '-' })
        .collect();
    let (clip_id, scale_id) = (format!("hv-plot-{own}"), format!("hv-scale-{own}"));
    let mut gradient =
        LinearGradient::new().set("id", scale_id.as_str()).set("x1", 0).set("y1", 1).set("x2", 0).set("y2", 0);
    for k in 0..=32 {
        let t = k as f64 / 32.0;
        let [r, g, b] = colour::at(t);
        gradient = gradient.add(Stop::new().set("offset", t).set("stop-color", format!("#{r:02x}{g:02x}{b:02x}")));
    }
    let clip = svg::node::element::ClipPath::new()
        .set("id", clip_id.as_str())
        .add(Rectangle::new().set("x", LEFT).set("y", TOP).set("width", round1(pw)).set("height", round1(ph)));
    doc = doc.add(Definitions::new().add(gradient).add(clip));

    doc = doc.add(text(LEFT, 24.0, 15.0, &map.title).set("font-weight", "bold")).add(text(
        LEFT,
        43.0,
        12.0,
        &format!("{}{} · verdict: {}", map.shading.caption, if map.zoom { " · zoomed in" } else { "" }, map.verdict),
    ));

    // Field raster, drawn on a light grey that shows through at electrodes.
    let plot = Group::new()
        .set("clip-path", format!("url(#{clip_id})"))
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
    // Labels are placed where they overlap nothing drawn before them:
    // markers first, then electrode names (inside their part when it holds
    // them, else beside it), then the peak numbers, each clear of the
    // electrodes it does not name and inside the plot.
    let plot_box = [LEFT, LEFT + pw, TOP, TOP + ph];
    let mut placer = Placer { plot: plot_box, taken: Vec::new() };
    let part_px = |m: &[f64; 4]| {
        let (a, b) = (frame.px([m[0], m[3]]), frame.px([m[1], m[2]]));
        [a.0, b.0, a.1, b.1]
    };
    let electrode_boxes: Vec<[f64; 4]> = map.electrode_labels.iter().map(|l| part_px(&l.part_mm)).collect();
    let spots: Vec<(f64, f64)> = map
        .peaks
        .iter()
        .map(|p| {
            let (x, y) = frame.px(p.at_mm);
            (within(x, LEFT + 7.0, LEFT + pw - 7.0), within(y, TOP + 7.0, TOP + ph - 7.0))
        })
        .collect();
    for &(x, y) in &spots {
        placer.taken.push([x - 7.0, x + 7.0, y - 7.0, y + 7.0]);
    }
    let mut unlabelled: Vec<String> = Vec::new();
    let mut labels = Group::new().set("id", "electrode-labels").set("text-anchor", "middle");
    for (k, l) in map.electrode_labels.iter().enumerate() {
        let w = LABEL_CHAR_PX * l.text.chars().count() as f64;
        let own = electrode_boxes[k];
        let others: Vec<[f64; 4]> =
            electrode_boxes.iter().enumerate().filter(|(j, _)| *j != k).map(|(_, b)| *b).collect();
        let (cx, cy) = ((own[0] + own[1]) / 2.0, (own[2] + own[3]) / 2.0);
        // (centre x, baseline y) candidates: inside, right, left, above, below
        let inside_fits = own[1] - own[0] >= w + 4.0 && own[3] - own[2] >= 15.0;
        let mut candidates = Vec::new();
        if inside_fits {
            candidates.push((cx, cy + 4.0));
        }
        candidates.extend([
            (own[1] + 5.0 + w / 2.0, cy + 4.0),
            (own[0] - 5.0 - w / 2.0, cy + 4.0),
            (cx, own[2] - 5.0),
            (cx, own[3] + 15.0),
            (own[1] + 5.0 + w / 2.0, own[2] + 12.0),
            (own[1] + 5.0 + w / 2.0, own[3] - 3.0),
        ]);
        let boxed = |&(x, y): &(f64, f64)| [x - w / 2.0, x + w / 2.0, y - 11.0, y + 3.0];
        let fits = |c: &(f64, f64)| {
            let b = boxed(c);
            placer.free(&b) && (inside_fits || !overlaps(&b, &own)) && !others.iter().any(|o| overlaps(&b, o))
        };
        if let Some(c) = candidates.iter().find(|c| fits(c)).copied() {
            placer.taken.push(boxed(&c));
            labels = labels.add(halo_text(c.0, c.1, 11.0, &l.text).set("font-weight", "bold"));
        } else {
            // no clear place: the name goes to the legend's list of unlabelled parts
            unlabelled.push(l.text.clone());
        }
    }
    // Peaks that fall on the same spot share one number label ("1, 2"),
    // offset from the marker, with a leader line when it had to move away.
    let mut peaks = Group::new().set("id", "peaks");
    for (k, p) in map.peaks.iter().enumerate() {
        let (x, y) = spots[k];
        let near = |q: &(f64, f64)| (q.0 - x).hypot(q.1 - y) < 8.0;
        let mut peak = Group::new().set("class", "peak").set("data-part", p.part.as_str()).add(marker(x, y));
        if !spots[..k].iter().any(near) {
            let numbers: Vec<String> =
                map.peaks.iter().zip(&spots).filter(|(_, q)| near(q)).map(|(q, _)| q.number.to_string()).collect();
            let label = numbers.join(", ");
            let w = LABEL_CHAR_PX * label.chars().count() as f64;
            let boxed = |(lx, ly): (f64, f64)| [lx, lx + w, ly - 11.0, ly + 3.0];
            let mut chosen = None;
            'rings: for radius in [11.0, 26.0, 44.0] {
                for k in 0..8 {
                    let a = -std::f64::consts::FRAC_PI_4 - k as f64 * std::f64::consts::FRAC_PI_4;
                    let (ox, oy) = (x + radius * a.cos(), y + radius * a.sin());
                    // anchor the text's near corner at the offset point
                    let lx = if a.cos() >= -1e-9 { ox } else { ox - w };
                    let ly = if a.sin() <= 1e-9 { oy } else { oy + 11.0 };
                    let b = boxed((lx, ly));
                    if placer.free(&b) && !electrode_boxes.iter().any(|e| overlaps(&b, e)) {
                        chosen = Some((lx, ly, radius, b));
                        break 'rings;
                    }
                }
            }
            let (lx, ly, radius, b) = chosen.unwrap_or((x + 8.0, y - 7.0, 11.0, boxed((x + 8.0, y - 7.0))));
            placer.taken.push(b);
            if radius > 11.0 {
                let (tx, ty) = ((b[0] + b[1]) / 2.0, (b[2] + b[3]) / 2.0);
                let len = (tx - x).hypot(ty - y).max(1e-9);
                peak = peak.add(
                    Line::new()
                        .set("class", "leader")
                        .set("x1", round1(x + 7.0 * (tx - x) / len))
                        .set("y1", round1(y + 7.0 * (ty - y) / len))
                        .set("x2", round1(tx - 0.5 * w.min(len) * (tx - x) / len))
                        .set("y2", round1(ty - 6.0 * (ty - y) / len))
                        .set("stroke", MARKER)
                        .set("stroke-width", 1.2),
                );
            }
            peak = peak.add(halo_text(lx, ly, 11.0, &label).set("font-weight", "bold"));
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
            .set("fill", format!("url(#{scale_id})"))
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
    let mut legend_chars = equi_text.chars().count();
    let mut row = |s: String| {
        legend_chars = legend_chars.max(s.chars().count());
        s
    };
    for p in &map.peaks {
        y += LEGEND_ROW;
        legend = legend.add(marker(LEFT + 6.0, y - 4.0)).add(text(
            LEFT + 18.0,
            y,
            12.0,
            &row(format!("{}: peak in {}, {} {}", p.number, p.part, g3(p.value), map.shading.unit)),
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
                &row(format!("critical field line of partial-discharge inception in {}", names.join(", "))),
            ));
    }
    if map.clipped {
        y += LEGEND_ROW;
        legend = legend.add(text(
            LEFT,
            y,
            12.0,
            &row(format!(
                "Colours top out at {} {} (99 % of the area lies below); peaks above it are marked.",
                g3(map.scale[1]),
                map.shading.unit
            )),
        ));
    }
    if !unlabelled.is_empty() {
        y += LEGEND_ROW;
        let names = row(format!("Not named on the map (no clear place): {}.", unlabelled.join(", ")));
        legend = legend.add(text(LEFT, y, 12.0, &names));
    }
    let height = (y + 16.0).ceil();
    // wide enough for the longest legend row (an estimate of 12 px text)
    let width = width.max((LEFT + 18.0 + 6.4 * legend_chars as f64 + 12.0).ceil());
    doc.set("height", height).set("width", width).set("viewBox", (0, 0, width, height)).add(legend).to_string()
}
