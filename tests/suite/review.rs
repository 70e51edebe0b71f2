//! The review folder of `check --report`: field maps parsed back, the HTML
//! page rendered in a real headless browser, VTK and CSV read back, batch
//! index pages, atomic replacement and determinism.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn hvstack(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_hvstack")).args(args).output().expect("binary runs")
}

fn review_of(case: &str) -> (tempfile::TempDir, PathBuf, Output) {
    let tmp = tempfile::tempdir().expect("temp dir");
    let dir = tmp.path().join("review");
    let out = hvstack(&["check", case, "--report", dir.to_str().expect("utf-8 path")]);
    (tmp, dir, out)
}

fn read(p: &Path) -> String {
    std::fs::read_to_string(p).unwrap_or_else(|e| panic!("{}: {e}", p.display()))
}

/// Decodes a PNG into (width, height, RGBA bytes).
fn decode_png(bytes: &[u8]) -> (u32, u32, Vec<u8>) {
    let mut decoder = png::Decoder::new(std::io::Cursor::new(bytes));
    decoder.set_transformations(png::Transformations::EXPAND | png::Transformations::ALPHA);
    let mut reader = decoder.read_info().expect("PNG header");
    let mut buf = vec![0; reader.output_buffer_size().expect("size")];
    let info = reader.next_frame(&mut buf).expect("PNG frame");
    buf.truncate(info.buffer_size());
    let rgba = match info.color_type {
        png::ColorType::Rgba => buf,
        png::ColorType::GrayscaleAlpha => buf.chunks(2).flat_map(|c| [c[0], c[0], c[0], c[1]]).collect(),
        other => panic!("unexpected colour type {other:?}"),
    };
    (info.width, info.height, rgba)
}

/// Distinct colours and the share of the most common one.
fn colour_stats(rgba: &[u8]) -> (usize, f64) {
    let mut counts = std::collections::HashMap::new();
    for px in rgba.chunks(4) {
        *counts.entry([px[0], px[1], px[2]]).or_insert(0usize) += 1;
    }
    let top = counts.values().copied().max().unwrap_or(0);
    (counts.len(), top as f64 / (rgba.len() / 4) as f64)
}

#[test]
fn review_folder_has_every_file() {
    let (_t, dir, out) = review_of("cases/cable-two-layer.yaml");
    assert_eq!(out.status.code(), Some(0), "{}", String::from_utf8_lossy(&out.stderr));
    let mut names: Vec<String> = std::fs::read_dir(&dir)
        .expect("review folder")
        .map(|e| e.expect("entry").file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    assert_eq!(
        names,
        [
            ".hvstack-review",
            "field-map.png",
            "field-map.svg",
            "fields.vtk",
            "index.html",
            "line-radial.csv",
            "loss-map.png",
            "loss-map.svg",
            "result.json"
        ]
    );
    // The JSON in the folder is the one `--format json` prints (apart from the solve time).
    let from_folder: serde_json::Value = serde_json::from_str(&read(&dir.join("result.json"))).expect("JSON");
    let printed = hvstack(&["check", "cases/cable-two-layer.yaml", "--format", "json"]);
    let mut printed: serde_json::Value = serde_json::from_slice(&printed.stdout).expect("JSON");
    let mut from_folder = from_folder;
    for v in [&mut printed, &mut from_folder] {
        v["solve"]["seconds"] = serde_json::Value::Null;
    }
    assert_eq!(printed, from_folder);
    let sha = from_folder["case_sha256"].as_str().expect("hash");
    assert_eq!(sha.len(), 64);
    assert!(read(&dir.join("index.html")).contains(sha), "the page shows the case hash");
}

#[test]
fn svg_map_parses_and_shows_colour_bar_outlines_and_peaks() {
    for case in crate::common::demo_cases() {
        let case = case.to_str().expect("utf-8").to_string();
        let (_t, dir, out) = review_of(&case);
        assert!(matches!(out.status.code(), Some(0 | 1)), "{case}: {}", String::from_utf8_lossy(&out.stderr));
        let svg = read(&dir.join("field-map.svg"));
        let doc = roxmltree::Document::parse(&svg).unwrap_or_else(|e| panic!("{case}: SVG does not parse: {e}"));
        let by_id = |id: &str| doc.descendants().find(|n| n.attribute("id") == Some(id));
        let bar = by_id("colour-bar").unwrap_or_else(|| panic!("{case}: no colour bar"));
        let labels: Vec<&str> = bar.descendants().filter_map(|n| n.text()).map(str::trim).collect();
        assert!(bar.descendants().filter(|n| n.attribute("class") == Some("tick")).count() >= 3, "{case}: ticks");
        let result: serde_json::Value = serde_json::from_str(&read(&dir.join("result.json"))).expect("JSON");
        // the colour bar says whether its fields are rms or peak, as the result does
        let label = format!("|E| (kV/mm {})", result["values"].as_str().expect("values"));
        assert!(labels.contains(&label.as_str()), "{case}: colour bar label {label} missing: {labels:?}");
        // One outline per part of the case, electrodes included.
        let outlines = by_id("outlines").expect("outlines");
        let drawn: Vec<&str> = outlines.descendants().filter_map(|n| n.attribute("data-part")).collect();
        for e in result["electrodes"].as_array().expect("electrodes") {
            let name = e["name"].as_str().expect("name");
            assert!(drawn.contains(&name), "{case}: electrode {name} not outlined");
        }
        // One peak marker per part with a field, at its reported place.
        let peaks = by_id("peaks").expect("peaks");
        let marked: Vec<&str> = peaks.children().filter_map(|n| n.attribute("data-part")).collect();
        let parts: Vec<&str> = result["parts"]
            .as_array()
            .expect("parts")
            .iter()
            .filter(|p| p["e_max_kv_per_mm"].as_f64().expect("peak") > 0.0)
            .map(|p| p["name"].as_str().expect("name"))
            .collect();
        assert_eq!(marked, parts, "{case}: peak markers");
        assert!(by_id("field-raster").is_some(), "{case}: no raster");
        assert!(by_id("equipotentials").expect("equipotentials").children().count() > 0, "{case}: no equipotentials");
        let geometry = result["geometry"].as_str().expect("geometry");
        // The axis is drawn in axisymmetric cases whose domain reaches r = 0
        // (the condenser case does; the cable's domain starts at the conductor).
        if geometry == "planar" {
            assert!(by_id("axis").is_none(), "{case}: planar case with an axis");
        }
        if case.contains("condenser-foils") {
            assert!(by_id("axis").is_some(), "{case}: no axis");
        }
    }
}

#[test]
fn png_map_is_a_picture_not_a_blank() {
    let (_t, dir, _) = review_of("cases/resin-void.yaml");
    let (w, h, rgba) = decode_png(&std::fs::read(dir.join("field-map.png")).expect("PNG"));
    assert!(w >= 800 && h >= 300, "{w}×{h}");
    let (distinct, top_share) = colour_stats(&rgba);
    // A blank or single-colour image has one colour; the map has the colour
    // scale, text and lines (thresholds from memory of typical maps: well
    // over a hundred colours, no colour covering most of the picture).
    assert!(distinct > 200, "only {distinct} colours");
    assert!(top_share < 0.6, "one colour covers {:.0} %", 100.0 * top_share);
}

#[test]
fn vtk_file_reads_back() {
    let (_t, dir, _) = review_of("cases/planar-sheet.yaml");
    let text = read(&dir.join("fields.vtk"));
    let mut lines = text.lines();
    assert_eq!(lines.next(), Some("# vtk DataFile Version 3.0"));
    let body: Vec<&str> = text.lines().collect();
    let find = |prefix: &str| body.iter().position(|l| l.starts_with(prefix)).unwrap_or_else(|| panic!("no {prefix}"));
    let dims: Vec<usize> =
        body[find("DIMENSIONS")].split_whitespace().skip(1).map(|v| v.parse().expect("dimension")).collect();
    let (nx, ny) = (dims[0], dims[1]);
    assert_eq!(dims[2], 1);
    let xs: Vec<f64> = body[find("X_COORDINATES") + 1].split_whitespace().map(|v| v.parse().expect("x")).collect();
    assert_eq!(xs.len(), nx);
    assert!(xs.windows(2).all(|w| w[1] > w[0]), "x coordinates increase");
    // the demo case states rms values, and the array names say so
    let start = find("SCALARS potential_kv_rms") + 2;
    let phi: Vec<f64> = body[start..start + nx * ny].iter().map(|v| v.parse().expect("potential")).collect();
    // Maximum principle: potentials between the electrodes' 0 and 12 kV (the case's stack voltage).
    let (lo, hi) = phi.iter().fold((f64::MAX, f64::MIN), |(a, b), &v| (a.min(v), b.max(v)));
    assert!((lo - 0.0).abs() < 1e-9 && (hi - 12.0).abs() < 1e-9, "{lo} .. {hi}");
    let cells = find("CELL_DATA");
    assert_eq!(body[cells], format!("CELL_DATA {}", (nx - 1) * (ny - 1)));
    let parts: Vec<i64> =
        body[cells + 3..cells + 3 + (nx - 1) * (ny - 1)].iter().map(|v| v.parse().expect("part number")).collect();
    let result: serde_json::Value = serde_json::from_str(&read(&dir.join("result.json"))).expect("JSON");
    let n_parts = result["parts"].as_array().expect("parts").len() as i64;
    assert!(parts.iter().all(|&p| (0..=n_parts).contains(&p)));
    assert!((1..=n_parts).all(|k| parts.contains(&k)), "every part owns cells");
}

#[test]
fn line_csv_follows_the_series_layer_solution() {
    // Planar layers in series: E_i = V / (ε_i · Σ d_j/ε_j) (Gauss's law with
    // continuous normal D; any electrostatics text, e.g. Kuffel, Zaengl &
    // Kuffel, High Voltage Engineering Fundamentals, 2nd ed. 2000, §4).
    let (_t, dir, _) = review_of("cases/planar-sheet.yaml");
    let mut reader = csv::Reader::from_path(dir.join("line-through-sheet.csv")).expect("CSV");
    let head: Vec<String> = reader.headers().expect("header").iter().map(String::from).collect();
    assert_eq!(
        head,
        [
            "distance_mm",
            "x_mm",
            "y_mm",
            "potential_kv",
            "e_kv_per_mm",
            "e_x_kv_per_mm",
            "e_y_kv_per_mm",
            "part",
            "values"
        ]
    );
    let rows: Vec<csv::StringRecord> = reader.records().map(|r| r.expect("row")).collect();
    assert_eq!(rows.len(), 251);
    // Layers of the demo case: polyimide 0.125 mm, epoxy 2.0, silicone rubber 1.0
    // with the library permittivities in result.json.
    let result: serde_json::Value = serde_json::from_str(&read(&dir.join("result.json"))).expect("JSON");
    let eps: Vec<f64> =
        result["parts"].as_array().expect("parts").iter().map(|p| p["permittivity"].as_f64().expect("εr")).collect();
    let d = [0.125, 2.0, 1.0];
    let sum: f64 = d.iter().zip(&eps).map(|(d, e)| d / e).sum();
    let names = ["liner", "cast body", "cushion"];
    for row in &rows {
        let y: f64 = row[2].parse().expect("y");
        let e: f64 = row[4].parse().expect("E");
        let layer = if y < 0.125 {
            0
        } else if y < 2.125 {
            1
        } else {
            2
        };
        let on_interface = [0.0, 0.125, 2.125, 3.125].iter().any(|b| (y - b).abs() < 1e-6);
        if on_interface {
            continue;
        }
        assert_eq!(&row[7], names[layer], "y = {y}");
        assert_eq!(&row[8], "rms");
        let exact = 12.0 / (eps[layer] * sum);
        assert!((e - exact).abs() < 1e-6 * exact, "y = {y}: {e} vs {exact}");
    }
}

#[test]
fn batch_review_has_an_index_and_a_page_per_case() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let dir = tmp.path().join("all");
    let out = hvstack(&["check", "cases", "--report", dir.to_str().expect("utf-8"), "--quiet", "--jobs", "2"]);
    // The demo folder holds failing cases: exit status 1 over the batch.
    assert_eq!(out.status.code(), Some(1), "{}", String::from_utf8_lossy(&out.stderr));
    let index = read(&dir.join("index.html"));
    for case in crate::common::demo_cases() {
        let stem = case.file_stem().expect("stem").to_string_lossy().into_owned();
        assert!(index.contains(&format!("href=\"{stem}/index.html\"")), "no link to {stem}");
        assert!(dir.join(&stem).join("index.html").is_file(), "no page for {stem}");
    }
}

#[test]
fn review_folder_is_replaced_whole_and_foreign_folders_are_left_alone() {
    let tmp = tempfile::tempdir().expect("temp dir");
    let foreign = tmp.path().join("notes");
    std::fs::create_dir(&foreign).expect("mkdir");
    std::fs::write(foreign.join("keep.txt"), "mine").expect("write");
    let out = hvstack(&["check", "cases/planar-sheet.yaml", "--report", foreign.to_str().expect("utf-8")]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("not an hvstack review folder"));
    assert_eq!(read(&foreign.join("keep.txt")), "mine", "the foreign folder is untouched");

    let dir = tmp.path().join("review");
    let d = dir.to_str().expect("utf-8");
    assert_eq!(hvstack(&["check", "cases/planar-sheet.yaml", "--report", d]).status.code(), Some(0));
    assert!(dir.join("line-through-sheet.csv").is_file());
    // A second case into the same folder replaces it whole: no stale CSV.
    assert_eq!(hvstack(&["check", "cases/resin-void.yaml", "--report", d]).status.code(), Some(1));
    assert!(!dir.join("line-through-sheet.csv").exists(), "stale file left behind");
    assert!(read(&dir.join("index.html")).contains("air void"));
    // Nothing staged is left beside it.
    let leftovers: Vec<String> = std::fs::read_dir(tmp.path())
        .expect("list")
        .map(|e| e.expect("entry").file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with(".hvstack"))
        .collect();
    assert!(leftovers.is_empty(), "{leftovers:?}");
}

#[test]
fn review_files_are_byte_identical_across_runs() {
    let (_a, first, _) = review_of("cases/condenser-foils.yaml");
    let (_b, second, _) = review_of("cases/condenser-foils.yaml");
    for name in ["field-map.svg", "field-map.png", "fields.vtk", "index.html"] {
        let (x, y) = (std::fs::read(first.join(name)).expect("a"), std::fs::read(second.join(name)).expect("b"));
        assert!(x == y, "{name} differs between runs");
    }
}

/// Chromium from the system's packages (`.ci/run` installs it when missing).
fn chromium() -> PathBuf {
    for c in ["/usr/bin/chromium", "/usr/bin/chromium-browser", "/usr/bin/google-chrome"] {
        if Path::new(c).is_file() {
            return PathBuf::from(c);
        }
    }
    panic!("Chromium is not installed: run `bash .ci/run` (it installs Debian's chromium package) or install it");
}

/// Renders a page headless to a PNG; returns the PNG and the console
/// messages the page logged.
fn render_in_browser(page: &Path, shot: &Path) -> (Vec<u8>, Vec<String>) {
    let profile = tempfile::tempdir().expect("profile dir");
    let out = Command::new(chromium())
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-quic",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            "--enable-logging=stderr",
            "--v=0",
            "--window-size=1200,1800",
        ])
        .arg(format!("--user-data-dir={}", profile.path().display()))
        .arg(format!("--screenshot={}", shot.display()))
        .arg(format!("file://{}", page.display()))
        .output()
        .expect("chromium runs");
    assert!(out.status.success(), "chromium failed: {}", String::from_utf8_lossy(&out.stderr));
    let console =
        String::from_utf8_lossy(&out.stderr).lines().filter(|l| l.contains(":CONSOLE")).map(String::from).collect();
    (std::fs::read(shot).expect("screenshot written"), console)
}

#[test]
fn review_page_renders_in_a_real_browser_without_console_errors() {
    let (tmp, dir, _) = review_of("cases/busbar-support.yaml");
    let page = dir.join("index.html");
    let html = read(&page);
    // Self-contained: no scripts and nothing fetched from elsewhere.
    for forbidden in ["<script", "src=\"http", "href=\"http", "@import", "url(http"] {
        assert!(!html.contains(forbidden), "the page contains {forbidden}");
    }
    let (shot, console) = render_in_browser(&page, &tmp.path().join("page.png"));
    assert!(console.is_empty(), "console messages: {console:?}");
    let (w, h, rgba) = decode_png(&shot);
    assert_eq!((w, h), (1200, 1800));
    let (distinct, top_share) = colour_stats(&rgba);
    assert!(distinct > 200, "the page rendered with only {distinct} colours (blank?)");
    assert!(top_share < 0.9, "one colour covers {:.0} % of the page", 100.0 * top_share);
}

#[test]
fn console_check_catches_a_page_that_logs() {
    // The detector above must be able to fail: a page that logs an error.
    let tmp = tempfile::tempdir().expect("temp dir");
    let page = tmp.path().join("bad.html");
    std::fs::write(&page, "<!doctype html><html><body><p>x</p><script>console.error('broken')</script></body></html>")
        .expect("write");
    let (_, console) = render_in_browser(&page, &tmp.path().join("bad.png"));
    assert!(console.iter().any(|l| l.contains("broken")), "{console:?}");
}

/// A DC case with a thermal solve gets a temperature map whose colour bar
/// spans the solved range (the demo's conductor and screen, 70 and 50 °C),
/// and the review page shows it.
#[test]
fn a_dc_case_with_temperatures_has_a_temperature_map() {
    let (_t, dir, out) = review_of("cases/hvdc-cable-loaded.yaml");
    assert_eq!(out.status.code(), Some(1), "review verdict: {}", String::from_utf8_lossy(&out.stderr));
    let svg = read(&dir.join("temperature-map.svg"));
    assert!(svg.contains("T (°C)"), "colour bar title");
    assert!(svg.contains(">\n50\n<") && svg.contains(">\n70\n<"), "ticks at the range ends");
    assert!(dir.join("temperature-map.png").exists());
    let page = read(&dir.join("index.html"));
    assert!(page.contains("temperature in °C"), "the page shows the temperature map");
}

/// The maps read at a glance (issue 14): on every demo map the electrode
/// names and peak numbers overlap neither each other nor the markers and lie
/// inside the plot frame; markers lie inside the frame; where a singular
/// peak would set the colour scale's top it is clipped at the 99th
/// percentile and the legend says so; a void and a peak at a singular
/// point get a zoomed map on the review page.
#[test]
fn maps_place_labels_clear_of_each_other_and_zoom_on_small_parts() {
    // text boxes are estimated as the map places them: 6.8 px per character
    // of 11 px bold text, 14 px tall from 11 px above the baseline
    let text_box = |n: roxmltree::Node| {
        let (x, y): (f64, f64) =
            (n.attribute("x").unwrap().parse().unwrap(), n.attribute("y").unwrap().parse().unwrap());
        let w = 6.8 * n.text().unwrap_or("").trim().chars().count() as f64;
        let centred = n.ancestors().any(|a| a.attribute("text-anchor") == Some("middle"));
        let x0 = if centred { x - w / 2.0 } else { x };
        [x0, x0 + w, y - 11.0, y + 3.0]
    };
    let overlap =
        |a: &[f64; 4], b: &[f64; 4]| a[0] < b[1] - 0.5 && b[0] < a[1] - 0.5 && a[2] < b[3] - 0.5 && b[2] < a[3] - 0.5;
    for case in crate::common::demo_cases() {
        let case = case.to_str().expect("utf-8").to_string();
        let (_t, dir, _) = review_of(&case);
        let svg = read(&dir.join("field-map.svg"));
        let doc = roxmltree::Document::parse(&svg).unwrap();
        let by_id = |id: &str| doc.descendants().find(|n| n.attribute("id") == Some(id)).unwrap();
        let frame = by_id("axes").children().find(|n| n.has_tag_name("rect")).unwrap();
        let f = |k: &str| frame.attribute(k).unwrap().parse::<f64>().unwrap();
        let plot = [f("x"), f("x") + f("width"), f("y"), f("y") + f("height")];
        let mut boxes: Vec<[f64; 4]> = Vec::new();
        for group in ["electrode-labels", "peaks"] {
            for t in by_id(group).descendants().filter(|n| n.has_tag_name("text")) {
                boxes.push(text_box(t));
            }
        }
        for c in by_id("peaks").descendants().filter(|n| n.has_tag_name("circle") && n.attribute("r") == Some("6")) {
            let (x, y): (f64, f64) =
                (c.attribute("cx").unwrap().parse().unwrap(), c.attribute("cy").unwrap().parse().unwrap());
            assert!(
                x - 6.0 >= plot[0] && x + 6.0 <= plot[1] && y - 6.0 >= plot[2] && y + 6.0 <= plot[3],
                "{case}: marker outside"
            );
        }
        for (k, a) in boxes.iter().enumerate() {
            assert!(
                a[0] >= plot[0] && a[1] <= plot[1] && a[2] >= plot[2] && a[3] <= plot[3],
                "{case}: label outside {a:?}"
            );
            for b in &boxes[k + 1..] {
                assert!(!overlap(a, b), "{case}: labels overlap {a:?} {b:?}");
            }
        }
        let result: serde_json::Value = serde_json::from_str(&read(&dir.join("result.json"))).unwrap();
        let singular = result["parts"].as_array().unwrap().iter().any(|p| p["e_max_judged_at_mm"] != p["e_max_at_mm"]);
        if case.contains("busbar-support") || case.contains("condenser-foils") {
            assert!(singular, "{case}");
            assert!(svg.contains("Colours top out at"), "{case}: the scale is not clipped");
        }
        let zoomed = dir.join("zoom-1.svg").exists();
        assert_eq!(zoomed, singular || case.contains("resin-void"), "{case}: zoom maps");
        if zoomed {
            assert!(read(&dir.join("index.html")).contains("zoomed in"), "{case}: zoom not on the page");
        }
        // the maps sit inline on one page, where a clip's id names the first
        // element with it: each map clips with its own (a zoom clipped by the
        // main map's rectangle spilled its outlines over the page)
        let page = read(&dir.join("index.html"));
        let clips: Vec<&str> = page.split("clip-path=\"").skip(1).map(|r| &r[..r.find('"').unwrap()]).collect();
        let mut unique = clips.clone();
        unique.sort_unstable();
        unique.dedup();
        assert_eq!(unique.len(), clips.len(), "{case}: maps share a clip id: {clips:?}");
    }
}
