//! Hostile inputs and situations beyond the case catalogue of `tests/bad/`:
//! special files, links, outputs that would overwrite the user's files,
//! interrupts, huge counts, control characters in file names, foreign JSON.
//! Each test names the class of problem it guards against.

use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};
use std::time::{Duration, Instant};

fn hvstack(args: &[&str]) -> Output {
    hvstack_in(Path::new("."), args)
}

fn hvstack_in(dir: &Path, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_hvstack")).current_dir(dir).args(args).output().expect("binary runs")
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

/// A small valid case (a two-layer planar stack) that passes.
const SMALL: &str = "title: small\nstack:\n  form: planar\n  voltage_kv: 5\n  width: 10\n  layers:\n    - { name: film, material: polyimide, thickness: 0.5 }\n    - { name: cast, material: epoxy, thickness: 2 }\n";

/// A case that takes a second or so in a test build (about 0.3 million
/// nodes), long enough to interrupt or to meddle with while it runs.
fn slow_case() -> String {
    std::fs::read_to_string("benches/cases/square-512.yaml").expect("benchmark case")
}

fn write(path: &Path, text: &str) {
    std::fs::write(path, text).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
}

fn mkfifo(path: &Path) {
    let ok = Command::new("mkfifo").arg(path).status().expect("mkfifo runs").success();
    assert!(ok, "mkfifo {}", path.display());
}

/// Runs hvstack with a deadline: a hang is a failure, not a stuck suite.
fn within(args: &[&str], dir: &Path, limit: Duration) -> Output {
    let mut child = Command::new(env!("CARGO_BIN_EXE_hvstack"))
        .current_dir(dir)
        .args(args)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("spawn");
    let start = Instant::now();
    while child.try_wait().expect("wait").is_none() {
        if start.elapsed() > limit {
            let _ = child.kill();
            panic!("hvstack {args:?} did not finish within {limit:?}");
        }
        std::thread::sleep(Duration::from_millis(20));
    }
    child.wait_with_output().expect("output")
}

/// Names of hidden staging leftovers in `dir`.
fn leftovers(dir: &Path) -> Vec<String> {
    std::fs::read_dir(dir)
        .expect("list")
        .map(|e| e.expect("entry").file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with(".hvstack"))
        .collect()
}

// ---- hangs and memory -------------------------------------------------

/// A device or a FIFO as the case is refused at once, by what it is; a FIFO
/// in a batch folder is listed as not checked (status 2), never skipped.
#[test]
fn special_files_are_refused_not_read() {
    let tmp = tempfile::tempdir().unwrap();
    let zero = within(&["check", "/dev/zero"], tmp.path(), Duration::from_secs(20));
    assert_eq!(zero.status.code(), Some(2));
    assert!(stderr(&zero).contains("/dev/zero: is a character device"), "{}", stderr(&zero));

    let fifo = tmp.path().join("pipe.yaml");
    mkfifo(&fifo);
    let out = within(&["check", "pipe.yaml"], tmp.path(), Duration::from_secs(20));
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("pipe.yaml: is a FIFO (named pipe)"), "{}", stderr(&out));

    write(&tmp.path().join("good.yaml"), SMALL);
    let out = within(&["check", ".", "--quiet", "--format", "json"], tmp.path(), Duration::from_secs(60));
    assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
    let rows: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let rows = rows.as_array().unwrap();
    assert_eq!(rows.len(), 2, "{rows:?}");
    let pipe = rows.iter().find(|r| r["file"].as_str().unwrap().ends_with("pipe.yaml")).expect("the FIFO is listed");
    assert_eq!(pipe["verdict"], "error");
    assert!(pipe["error"].as_str().unwrap().contains("FIFO"));
}

/// The size cap (64 MiB, README) is stated in the message.
#[test]
fn an_oversized_case_is_refused_with_the_limit() {
    let tmp = tempfile::tempdir().unwrap();
    let big = tmp.path().join("big.yaml");
    let f = std::fs::File::create(&big).unwrap();
    f.set_len(hvstack::case::limits::MAX_CASE_BYTES + 1).unwrap();
    let out = hvstack_in(tmp.path(), &["check", "big.yaml"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("above the limit of 64 MiB"), "{}", stderr(&out));
}

/// Counts are bounded with the limit in the message (a million probes
/// once took 2 GB).
#[test]
fn too_many_probes_and_line_points_are_refused() {
    let tmp = tempfile::tempdir().unwrap();
    let probes: Vec<String> = (0..1001).map(|k| format!("{{ name: p{k}, at: [1, 1] }}")).collect();
    let case = tmp.path().join("probes.yaml");
    write(&case, &format!("{SMALL}probes: [{}]\n", probes.join(", ")));
    let out = hvstack_in(tmp.path(), &["check", "probes.yaml"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(
        stderr(&out).contains("probes.yaml:9:1: probes: 1001 probes; at most 1000 are allowed"),
        "{}",
        stderr(&out)
    );

    let lines: Vec<String> =
        (0..5).map(|k| format!("{{ name: l{k}, from: [1, 0], to: [1, 2.5], points: 100000 }}")).collect();
    write(&case, &format!("{SMALL}lines: [{}]\n", lines.join(", ")));
    let out = hvstack_in(tmp.path(), &["check", "probes.yaml"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("all lines together may have at most 400000"), "{}", stderr(&out));
}

/// `--max-nodes` beyond what the solver's 32-bit indices allow is refused,
/// not silently capped.
#[test]
fn max_nodes_beyond_the_solver_is_refused() {
    let out = hvstack(&["check", "cases/planar-sheet.yaml", "--max-nodes", "3000000000"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("2147483648"), "{}", stderr(&out));
}

// ---- links and batches ------------------------------------------------

/// A link to a case in a batch folder is followed; a loop and a link to
/// nothing are listed as not checked; nothing is dropped without a word.
#[test]
fn links_in_a_batch_are_followed_and_loops_listed() {
    let tmp = tempfile::tempdir().unwrap();
    let batch = tmp.path().join("batch");
    std::fs::create_dir(&batch).unwrap();
    write(&tmp.path().join("real.yaml"), SMALL);
    std::os::unix::fs::symlink("../real.yaml", batch.join("linked.yaml")).unwrap();
    std::os::unix::fs::symlink("..", batch.join("up")).unwrap();
    std::os::unix::fs::symlink("gone.yaml", batch.join("dangling.yaml")).unwrap();
    write(&batch.join("SHOUTED.YAML"), SMALL);
    let out = hvstack_in(tmp.path(), &["check", "batch", "--quiet", "--format", "json"]);
    let rows: serde_json::Value = serde_json::from_slice(&out.stdout).expect("rows");
    let by_file =
        |suffix: &str| rows.as_array().unwrap().iter().find(|r| r["file"].as_str().unwrap().ends_with(suffix)).cloned();
    assert_eq!(by_file("linked.yaml").expect("link followed")["verdict"], "pass");
    assert_eq!(by_file("SHOUTED.YAML").expect("an upper-case extension is a case too")["verdict"], "pass");
    assert!(by_file("up").expect("loop listed")["error"].as_str().unwrap().contains("a loop"));
    assert!(
        by_file("dangling.yaml").expect("dangling link listed")["error"].as_str().unwrap().contains("cannot be read")
    );
    assert_eq!(out.status.code(), Some(2));
}

// ---- data loss: review folders ----------------------------------------

fn review(dir: &Path, case: &str, folder: &str) -> Output {
    hvstack_in(dir, &["check", case, "--report", folder])
}

/// A case file inside the review folder, or any file hvstack did not
/// write there, or one of its files changed since, refuses the swap: exit
/// 2, the folder untouched.
#[test]
fn a_review_folder_is_replaced_only_while_it_holds_only_what_hvstack_wrote() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    write(&d.join("case.yaml"), SMALL);
    assert_eq!(review(d, "case.yaml", "rv").status.code(), Some(0));
    let page = std::fs::read(d.join("rv/index.html")).unwrap();

    // an input inside it
    std::fs::copy(d.join("case.yaml"), d.join("rv/inside.yaml")).unwrap();
    let out = review(d, "rv/inside.yaml", "rv");
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("holds inside.yaml, an input of this run"), "{}", stderr(&out));
    assert!(d.join("rv/inside.yaml").is_file(), "the case survives");
    // the same file found by a batch over its folder
    let out = hvstack_in(d, &["check", "rv", "--report", "rv", "--quiet"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(d.join("rv/inside.yaml").is_file());
    // any other file of the user's
    let out = review(d, "case.yaml", "rv");
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("holds inside.yaml, which hvstack did not write"), "{}", stderr(&out));
    std::fs::remove_file(d.join("rv/inside.yaml")).unwrap();
    // a file of ours, edited
    let json = d.join("rv/result.json");
    let mut edited = std::fs::read_to_string(&json).unwrap();
    edited.push_str("\nmy notes\n");
    write(&json, &edited);
    let out = review(d, "case.yaml", "rv");
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("holds result.json, changed since hvstack wrote it"), "{}", stderr(&out));
    assert_eq!(std::fs::read_to_string(&json).unwrap(), edited);
    assert_eq!(std::fs::read(d.join("rv/index.html")).unwrap(), page);
    // a marker from an earlier version (no file list) is not trusted
    let legacy = d.join("old");
    std::fs::create_dir(&legacy).unwrap();
    write(
        &legacy.join(".hvstack-review"),
        "Written by hvstack check --report; the whole folder is replaced on every run.\n",
    );
    write(&legacy.join("index.html"), "mine?");
    let out = review(d, "case.yaml", "old");
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("without a list of files"), "{}", stderr(&out));
    assert!(leftovers(d).is_empty(), "{:?}", leftovers(d));
}

/// A file written into the review folder while a run is in progress is
/// found at the swap: the folder is put back as it was, file included.
#[test]
fn a_file_written_into_the_review_folder_during_the_run_is_kept() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    write(&d.join("case.yaml"), SMALL);
    write(&d.join("slow.yaml"), &slow_case());
    assert_eq!(review(d, "case.yaml", "rv").status.code(), Some(0));
    let page = std::fs::read(d.join("rv/index.html")).unwrap();
    let child = slow_review_run(d);
    write(&d.join("rv/notes.txt"), "written while hvstack ran");
    let out = child.wait_with_output().unwrap();
    assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
    assert!(stderr(&out).contains("holds notes.txt, which hvstack did not write"), "{}", stderr(&out));
    assert!(stderr(&out).contains("the folder is as it was"));
    assert_eq!(std::fs::read_to_string(d.join("rv/notes.txt")).unwrap(), "written while hvstack ran");
    assert_eq!(std::fs::read(d.join("rv/index.html")).unwrap(), page, "the earlier review is in place");
    assert!(leftovers(d).is_empty(), "{:?}", leftovers(d));
}

/// Starts `check slow.yaml --report rv` in `dir` and returns once its
/// staging folder exists (the run is then between staging and swap).
fn slow_review_run(dir: &Path) -> std::process::Child {
    let child = Command::new(env!("CARGO_BIN_EXE_hvstack"))
        .current_dir(dir)
        .args(["check", "slow.yaml", "--report", "rv"])
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    wait_for_staging(dir);
    child
}

fn wait_for_staging(dir: &Path) {
    let start = Instant::now();
    while !leftovers(dir).iter().any(|n| n.starts_with(".hvstack-review-")) {
        assert!(start.elapsed() < Duration::from_secs(30), "no staging folder appeared");
        std::thread::sleep(Duration::from_millis(5));
    }
}

// ---- interrupts ---------------------------------------------------------

/// SIGINT, SIGTERM and SIGHUP after staging has begun: exit 130/143/129,
/// the message says nothing was written, the earlier review is in place
/// and no hidden staging folder is left.
#[test]
fn interrupts_leave_the_earlier_review_and_say_so() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    write(&d.join("case.yaml"), SMALL);
    write(&d.join("slow.yaml"), &slow_case());
    assert_eq!(review(d, "case.yaml", "rv").status.code(), Some(0));
    let page = std::fs::read(d.join("rv/index.html")).unwrap();
    // exit status 128 + signal number (common practice for shells)
    for (signal, code) in [("INT", 130), ("TERM", 143), ("HUP", 129)] {
        let child = slow_review_run(d);
        let killed = Command::new("kill").args([&format!("-{signal}"), &child.id().to_string()]).status().unwrap();
        assert!(killed.success());
        let out = child.wait_with_output().unwrap();
        assert_eq!(out.status.code(), Some(code), "SIG{signal}: {}", stderr(&out));
        assert!(
            stderr(&out).contains(&format!("interrupted (SIG{signal}); no output was written")),
            "{}",
            stderr(&out)
        );
        assert!(out.stdout.is_empty());
        assert_eq!(std::fs::read(d.join("rv/index.html")).unwrap(), page, "SIG{signal}: earlier review intact");
        assert!(leftovers(d).is_empty(), "SIG{signal}: {:?}", leftovers(d));
    }
}

// ---- data loss: JUnit -------------------------------------------------

/// `--junit` refuses an input, a foreign file and a path inside the review
/// folder; replaces its own earlier report through a link (the link stays
/// a link); writes through `/dev/stdout`.
#[test]
fn junit_never_overwrites_what_is_not_its_own() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    write(&d.join("case.yaml"), SMALL);
    let junit = |path: &str| hvstack_in(d, &["check", "case.yaml", "--quiet", "--junit", path]);

    let out = junit("case.yaml");
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("is one of this run's case files"), "{}", stderr(&out));
    assert_eq!(std::fs::read_to_string(d.join("case.yaml")).unwrap(), SMALL);

    std::os::unix::fs::symlink("case.yaml", d.join("link-to-case.xml")).unwrap();
    assert_eq!(junit("link-to-case.xml").status.code(), Some(2));
    assert_eq!(std::fs::read_to_string(d.join("case.yaml")).unwrap(), SMALL);

    write(&d.join("notes.xml"), "<notes>mine</notes>");
    let out = junit("notes.xml");
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("is not a JUnit report written by hvstack"), "{}", stderr(&out));
    assert_eq!(std::fs::read_to_string(d.join("notes.xml")).unwrap(), "<notes>mine</notes>");

    assert_eq!(junit("results.xml").status.code(), Some(0));
    std::os::unix::fs::symlink("results.xml", d.join("latest.xml")).unwrap();
    assert_eq!(junit("latest.xml").status.code(), Some(0));
    assert!(std::fs::symlink_metadata(d.join("latest.xml")).unwrap().file_type().is_symlink(), "still a link");
    assert!(std::fs::read_to_string(d.join("results.xml")).unwrap().contains("<testsuites name=\"hvstack\">"));

    let out = junit("/dev/stdout");
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    assert!(stdout(&out).starts_with("<?xml"), "{}", stdout(&out));

    let out = hvstack_in(d, &["check", "case.yaml", "--quiet", "--report", "rv", "--junit", "rv/junit.xml"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("lies inside the review folder"), "{}", stderr(&out));
    assert!(leftovers(d).is_empty(), "{:?}", leftovers(d));
}

/// File names and messages with control characters reach neither the
/// terminal raw nor the JUnit XML, which stays well-formed.
#[test]
fn control_characters_are_escaped_in_every_output() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    write(&d.join("fake\u{1b}[2K\rverdict PASS.yaml"), SMALL);
    write(&d.join("bad.yaml"), "title: t\n\"ke\\ey\": 1\n");
    let out = hvstack_in(d, &["check", ".", "--quiet", "--junit", "j.xml"]);
    assert_eq!(out.status.code(), Some(2));
    for text in [stdout(&out), stderr(&out)] {
        assert!(!text.chars().any(|c| c.is_control() && c != '\n'), "raw control character in {text:?}");
    }
    assert!(stdout(&out).contains("fake\\u{1b}[2K\\u{d}verdict PASS.yaml"), "{}", stdout(&out));
    let xml = std::fs::read_to_string(d.join("j.xml")).unwrap();
    let doc = roxmltree::Document::parse(&xml).expect("well-formed JUnit XML");
    assert_eq!(doc.descendants().filter(|n| n.has_tag_name("testcase")).count(), 2);
    assert!(xml.contains("ke\\u{1b}y"), "{xml}");
}

// ---- unclear or wrong messages ----------------------------------------

/// A UTF-8 byte-order mark is accepted; the SHA-256 is of the file's bytes.
#[test]
fn a_byte_order_mark_is_accepted() {
    let tmp = tempfile::tempdir().unwrap();
    let bytes = [b"\xef\xbb\xbf".as_slice(), SMALL.as_bytes()].concat();
    std::fs::write(tmp.path().join("bom.yaml"), &bytes).unwrap();
    let out = hvstack_in(tmp.path(), &["check", "bom.yaml", "--format", "json"]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["case_sha256"], hvstack::case::sha256_hex(&bytes));
}

/// `diff` takes only hvstack results: other JSON is exit 2, located.
#[test]
fn diff_refuses_json_that_is_not_a_result() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    let good = hvstack(&["check", "cases/planar-sheet.yaml", "--format", "json"]);
    std::fs::write(d.join("good.json"), &good.stdout).unwrap();
    for (text, fragment) in [
        ("[1,2,3]", "it is a list, not an object"),
        ("{\"verdict\": 5}", "it has no `hvstack_version`"),
        (
            "{\"hvstack_version\": \"0\", \"format_version\": 1, \"verdict\": \"maybe\", \"parts\": []}",
            "`verdict` is a string",
        ),
        ("{ not json", "bad.json:1:3: not a result JSON"),
    ] {
        write(&d.join("bad.json"), text);
        let out = hvstack_in(d, &["diff", "good.json", "bad.json"]);
        assert_eq!(out.status.code(), Some(2), "{text}");
        assert!(stderr(&out).contains(fragment), "{text}: {}", stderr(&out));
        assert!(out.stdout.is_empty());
    }
}

/// Legal values far outside insulation practice are evaluated but warned
/// about (a layer of 2000 mm where 2 was meant, 17 000 kV), by key and line.
#[test]
fn implausible_values_are_warned_about_by_key_and_line() {
    let tmp = tempfile::tempdir().unwrap();
    let case = SMALL.replace("voltage_kv: 5", "voltage_kv: 17000").replace("thickness: 2 }", "thickness: 2000 }");
    write(&tmp.path().join("slip.yaml"), &case);
    let out = hvstack_in(tmp.path(), &["check", "slip.yaml", "--format", "json"]);
    assert_eq!(out.status.code(), Some(1), "{}", stderr(&out));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let notes: Vec<&serde_json::Value> =
        v["findings"].as_array().unwrap().iter().filter(|f| f["code"] == "implausible-input").collect();
    let text = |k: usize| notes[k]["message"].as_str().unwrap().to_string();
    assert_eq!(notes.len(), 2, "{notes:?}");
    assert!(notes.iter().all(|f| f["severity"] == "warning"));
    let all = format!("{} | {}", text(0), text(1));
    assert!(all.contains("stack.voltage_kv (line 4): potential 17000 kV is above 2500 kV"), "{all}");
    assert!(all.contains("stack.layers[1].thickness (line 8): length 2000 mm is above 500 mm"), "{all}");
    assert!(notes.iter().any(|f| f["part"] == "cast"), "the layer is named");
}

/// A probe exactly on an electrode outline reads the field on the
/// insulation side, on both faces of a thick electrode. Uniform field
/// between parallel plates: E = V/d (common practice).
#[test]
fn a_probe_on_an_electrode_outline_reads_the_insulation_side() {
    let case = "title: probes on outlines\ngeometry: planar\ndomain: { x: [0, 10], y: [0, 10] }\nbackground: ptfe\nparts:\n  - { name: bar, electrode: { potential_kv: 10 }, shape: { rect: { x: [0, 10], y: [4, 6] } } }\n  - { name: bottom, electrode: { potential_kv: 0 }, shape: { rect: { x: [0, 10], y: [0, 0] } } }\n  - { name: top, electrode: { potential_kv: 0 }, shape: { rect: { x: [0, 10], y: [10, 10] } } }\nprobes:\n  - { name: under the bar, at: [5, 4] }\n  - { name: over the bar, at: [5, 6] }\n  - { name: on the bottom plate, at: [5, 0] }\n";
    let report = hvstack::check(case, "probes.yaml", &hvstack::Options::default()).expect("checks");
    for p in &report.probes {
        // 10 kV over 4 mm of PTFE: 2.5 kV/mm on each side of the bar
        assert!((p.e_kv_per_mm - 2.5).abs() < 1e-6, "{}: {} kV/mm", p.name, p.e_kv_per_mm);
        assert_eq!(p.part, "background", "{}", p.name);
    }
}

/// A review of lines whose names have spaces and slashes: the CSV names
/// are derived and safe, and each file is there.
#[test]
fn line_names_may_be_any_printable_text() {
    let tmp = tempfile::tempdir().unwrap();
    let case = format!(
        "{SMALL}lines:\n  - {{ name: through the film, from: [5, 0], to: [5, 2.5] }}\n  - {{ name: ../../etc/x, from: [1, 0], to: [1, 2.5] }}\n"
    );
    write(&tmp.path().join("lines.yaml"), &case);
    let out = review(tmp.path(), "lines.yaml", "rv");
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    assert!(tmp.path().join("rv/line-through-the-film.csv").is_file());
    assert!(tmp.path().join("rv/line-etc-x.csv").is_file());
    let page = std::fs::read_to_string(tmp.path().join("rv/index.html")).unwrap();
    assert!(page.contains("href=\"line-etc-x.csv\""));
    assert!(!PathBuf::from("etc/x.csv").exists());
}

/// A document far beyond any case's size is refused where it crosses the
/// limit, quickly, and a flood of problems is listed only up to 200.
#[test]
fn oversized_documents_are_refused_early_and_problems_are_capped() {
    let tmp = tempfile::tempdir().unwrap();
    let probes = vec!["[0, 0]"; 20_000].join(", ");
    write(&tmp.path().join("flood.yaml"), &format!("title: t\nprobes: [{probes}]\n"));
    let out = within(&["check", "flood.yaml"], tmp.path(), Duration::from_secs(20));
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("flood.yaml:2:80010: `probes` has more than 10000 entries"), "{}", stderr(&out));

    let keys: String = (0..300).map(|k| format!("key{k}: 1\n")).collect();
    write(&tmp.path().join("keys.yaml"), &keys);
    let out = hvstack_in(tmp.path(), &["check", "keys.yaml"]);
    assert_eq!(out.status.code(), Some(2));
    let err = stderr(&out);
    assert_eq!(err.lines().count(), 201, "200 problems and one line saying there are more");
    assert!(err.lines().last().unwrap().contains("and more problems (only the first 200 are listed)"), "{err}");
}
