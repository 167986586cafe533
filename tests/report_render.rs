//! The reports are rebuilt from a results folder's stored tables: `outturn
//! render` reproduces the bytes a run wrote, accepts a user's template
//! folder (and records its hashes), and the HTML is one self-contained file.
//! Expected values here are properties by construction (identical bytes,
//! hashes of the files actually written), not numbers.

use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::OnceLock;

fn scratch(tag: &str) -> PathBuf {
    let nanos = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_nanos())
        .unwrap_or(0);
    let dir = std::env::temp_dir().join(format!(
        "outturn-report-{tag}-{}-{nanos}",
        std::process::id()
    ));
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn outturn(args: &[&std::ffi::OsStr]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_outturn"))
        .args(args)
        .output()
        .expect("run outturn")
}

/// The demo, run once per test binary; each test works on its own copy.
fn demo() -> &'static Path {
    static DEMO: OnceLock<PathBuf> = OnceLock::new();
    DEMO.get_or_init(|| {
        let out = scratch("demo").join("results");
        let experiment =
            PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("experiments/water_demand.yaml");
        let o = outturn(&[
            "run".as_ref(),
            experiment.as_os_str(),
            "--out".as_ref(),
            out.as_os_str(),
            "--quiet".as_ref(),
        ]);
        assert!(
            o.status.success(),
            "demo run failed: {}",
            String::from_utf8_lossy(&o.stderr)
        );
        out
    })
}

fn copy_of_demo(tag: &str) -> PathBuf {
    let dir = scratch(tag).join("results");
    std::fs::create_dir_all(&dir).unwrap();
    for entry in std::fs::read_dir(demo()).unwrap() {
        let entry = entry.unwrap();
        std::fs::copy(entry.path(), dir.join(entry.file_name())).unwrap();
    }
    dir
}

fn read(dir: &Path, name: &str) -> Vec<u8> {
    std::fs::read(dir.join(name)).unwrap_or_else(|e| panic!("{name}: {e}"))
}

fn manifest(dir: &Path) -> Value {
    serde_json::from_slice(&read(dir, "manifest.json")).unwrap()
}

#[test]
fn render_reproduces_the_reports_of_a_run_byte_for_byte() {
    let dir = copy_of_demo("same");
    let before: Vec<(String, Vec<u8>)> = ["report.md", "report.html", "manifest.json"]
        .iter()
        .map(|n| (n.to_string(), read(&dir, n)))
        .collect();
    let o = outturn(&["render".as_ref(), dir.as_os_str()]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    for (name, bytes) in before {
        assert!(read(&dir, &name) == bytes, "{name} changed on render");
    }
    // No temporary files are left behind.
    let stray: Vec<String> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        .filter(|n| n.starts_with('.'))
        .collect();
    assert!(stray.is_empty(), "{stray:?}");
}

#[test]
fn render_with_user_templates_writes_them_and_records_their_hashes() {
    let dir = copy_of_demo("user");
    let templates = scratch("templates");
    let md =
        "# {{ title }}\n{% for t in targets %}{{ t.name }}: {{ t.verdict.headline }}\n{% endfor %}";
    let html = "<!DOCTYPE html><title>{{ title }}</title><p>benchmark {{ benchmark }}</p>\n";
    std::fs::write(templates.join("report.md.j2"), md).unwrap();
    std::fs::write(templates.join("report.html.j2"), html).unwrap();
    let before = manifest(&dir);
    let o = outturn(&[
        "render".as_ref(),
        dir.as_os_str(),
        "--templates".as_ref(),
        templates.as_os_str(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));

    let report_md = String::from_utf8(read(&dir, "report.md")).unwrap();
    assert!(report_md.starts_with("# Water demand, monthly (invented data)\ndemand_ml: "));
    assert!(report_md.contains("naive"));
    let report_html = String::from_utf8(read(&dir, "report.html")).unwrap();
    assert!(
        report_html.contains("<p>benchmark naive</p>"),
        "{report_html}"
    );

    let after = manifest(&dir);
    let sha = |bytes: &[u8]| -> String {
        use sha2::Digest;
        sha2::Sha256::digest(bytes)
            .iter()
            .map(|b| format!("{b:02x}"))
            .collect()
    };
    let recorded: Vec<(String, String)> = after["templates"]
        .as_array()
        .unwrap()
        .iter()
        .map(|t| {
            (
                t["name"].as_str().unwrap().to_string(),
                t["sha256"].as_str().unwrap().to_string(),
            )
        })
        .collect();
    assert_eq!(
        recorded,
        vec![
            ("report.md.j2".to_string(), sha(md.as_bytes())),
            ("report.html.j2".to_string(), sha(html.as_bytes())),
        ]
    );
    for output in after["outputs"].as_array().unwrap() {
        let name = output["file"].as_str().unwrap();
        let bytes = read(&dir, name);
        assert_eq!(output["sha256"].as_str().unwrap(), sha(&bytes), "{name}");
        assert_eq!(output["bytes"].as_u64().unwrap() as usize, bytes.len());
    }
    // Everything else in the manifest is untouched.
    for key in ["tool", "experiment", "data", "grid", "seed", "run"] {
        assert_eq!(before[key], after[key], "{key}");
    }

    // Back to the built-in templates: the original bytes return.
    let o = outturn(&["render".as_ref(), dir.as_os_str()]);
    assert!(o.status.success());
    assert!(read(&dir, "report.html") == read(demo(), "report.html"));
    assert!(read(&dir, "manifest.json") == read(demo(), "manifest.json"));
}

#[test]
fn render_refuses_what_it_cannot_use() {
    // A template folder without the HTML template: invalid input, exit 2.
    let dir = copy_of_demo("missing");
    let templates = scratch("half");
    std::fs::write(templates.join("report.md.j2"), "# {{ title }}\n").unwrap();
    let o = outturn(&[
        "render".as_ref(),
        dir.as_os_str(),
        "--templates".as_ref(),
        templates.as_os_str(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("report.html.j2"), "{err}");
    assert!(read(&dir, "report.md") == read(demo(), "report.md"));

    // A folder that is not a results folder: exit 2.
    let empty = scratch("empty");
    let o = outturn(&["render".as_ref(), empty.as_os_str()]);
    assert_eq!(o.status.code(), Some(2));

    // A template that does not compile is bad input: exit 2, located, nothing changes.
    let broken = scratch("broken");
    std::fs::write(broken.join("report.md.j2"), "{% for %}").unwrap();
    std::fs::write(broken.join("report.html.j2"), "ok").unwrap();
    let o = outturn(&[
        "render".as_ref(),
        dir.as_os_str(),
        "--templates".as_ref(),
        broken.as_os_str(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("report.md.j2:1"), "{err}");
    assert!(read(&dir, "manifest.json") == read(demo(), "manifest.json"));
}

/// Every value of `attr="…"` in the page.
fn attribute_values<'a>(html: &'a str, attr: &str) -> Vec<&'a str> {
    let needle = format!("{attr}=\"");
    let mut out = Vec::new();
    let mut rest = html;
    while let Some(i) = rest.find(&needle) {
        let after = &rest[i + needle.len()..];
        let end = after.find('"').unwrap_or(after.len());
        out.push(&after[..end]);
        rest = &after[end..];
    }
    out
}

#[test]
fn the_html_report_is_self_contained() {
    let html = String::from_utf8(read(demo(), "report.html")).unwrap();
    let lower = html.to_lowercase();
    assert!(!lower.contains("<script"), "no scripts");
    assert!(!lower.contains("@import"));
    assert!(!lower.contains("<link"), "no linked resources");
    assert!(!lower.contains("<img"), "charts are inline SVG");
    assert!(!lower.contains("http://") && !lower.contains("https://"));
    for attr in ["src", "href", "xlink:href"] {
        for v in attribute_values(&html, attr) {
            assert!(v.starts_with('#'), "{attr}=\"{v}\" points outside the page");
        }
    }
    let mut rest = lower.as_str();
    while let Some(i) = rest.find("url(") {
        assert!(rest[i + 4..].starts_with('#'), "url() outside the page");
        rest = &rest[i + 4..];
    }
    assert!(html.contains("<svg"), "charts are drawn");
    assert!(html.contains("@media print"));
}

#[test]
fn both_reports_state_the_verdict_first() {
    let html = String::from_utf8(read(demo(), "report.html")).unwrap();
    let md = String::from_utf8(read(demo(), "report.md")).unwrap();
    for text in [&html, &md] {
        assert!(text.contains("comes first"), "a verdict sentence");
        assert!(
            text.contains("snooping test"),
            "the search is accounted for"
        );
        assert!(text.contains("Across the 6 scheme × horizon settings"));
        let verdict = text.find("Verdict").unwrap();
        for later in [
            "Rankings",
            "Does the fit carry over?",
            "Over time",
            "Run record",
        ] {
            let at = text.find(later).unwrap_or_else(|| panic!("{later}"));
            assert!(verdict < at, "{later} comes after the verdict");
        }
    }
    // The Markdown holds the ranking tables too, and no timing.
    assert!(md.contains("### fixed scheme"));
    assert!(md.contains("| # | candidate |"));
    assert!(!md.contains("seconds") && !html.contains("seconds"));
}

/// A small experiment on the demo's data in its own folder, run; returns
/// the results folder. The extra lines go under the predictor and under
/// `scoring`; `report` is the value of the `report` key.
fn run_small(tag: &str, predictor_extra: &str, scoring_extra: &str, report: &str) -> PathBuf {
    let dir = scratch(tag);
    std::fs::create_dir_all(dir.join("data")).unwrap();
    std::fs::copy(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("experiments/data/water_demand.csv"),
        dir.join("data/water_demand.csv"),
    )
    .unwrap();
    let yaml = format!(
        "version: 1
experiment: small
data: {{file: data/water_demand.csv, time: period, frequency: monthly, start: 2007-01}}
target: demand_ml
transform: seasonal_diff
predictors:
  - column: school_holiday_days
    transform: seasonal_diff
{predictor_extra}
candidates:
  - family: naive
  - family: mean
  - family: ardl
    lags: [1]
    predictors: [school_holiday_days]
    predictor_lags: [1]
backtest:
  schemes:
    - expanding: {{first_origin: 2018-12}}
  horizons: [1, 2]
scoring:
  metrics: [rmse, mae]
  benchmark: naive
{scoring_extra}
report: {report}
seed: 7
"
    );
    let experiment = dir.join("small.yaml");
    std::fs::write(&experiment, yaml).unwrap();
    let out = dir.join("results");
    let o = outturn(&[
        "run".as_ref(),
        experiment.as_os_str(),
        "--out".as_ref(),
        out.as_os_str(),
        "--quiet".as_ref(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    out
}

#[test]
fn the_report_says_what_the_checked_declaration_says() {
    // Each setting is written in a form the experiment grammar accepts but
    // a plain re-reading of the YAML text misreads: a capitalised boolean,
    // a quoted level with a trailing space, a scalar list of formats. The
    // expected readings are what the grammar defines them to mean.
    let out = run_small(
        "declared",
        "    known_ahead: True",
        "  tests:\n    confidence_set: {alpha: \"0.2 \", resamples: 200}",
        "{formats: markdown}",
    );
    // `formats: markdown` is the list [markdown]: that report and no other.
    assert!(!out.join("report.html").exists());
    let md = String::from_utf8(read(&out, "report.md")).unwrap();
    // known_ahead: True is true.
    assert!(
        md.contains("| `school_holiday_days` | seasonal_diff | 0 | yes |"),
        "{md}"
    );
    assert!(md.contains("Candidates that use school_holiday_days (known ahead)"));
    // alpha: "0.2 " is 0.2: a 20% model confidence set.
    assert!(
        md.contains("inside the model confidence set at 20%"),
        "{md}"
    );
    assert!(md.contains("Model confidence set at 20%:"), "{md}");
    assert!(!md.contains("at 10%"));
    // Render reproduces the report and the manifest (which lists the one
    // template used), and the folder still verifies afterwards.
    let (report, manifest) = (read(&out, "report.md"), read(&out, "manifest.json"));
    let o = outturn(&["render".as_ref(), out.as_os_str()]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(read(&out, "report.md") == report);
    assert!(read(&out, "manifest.json") == manifest);
    let templates = &serde_json::from_slice::<Value>(&manifest).unwrap()["templates"];
    assert_eq!(templates[0]["name"], "report.md.j2");
    assert_eq!(templates.as_array().map(Vec::len), Some(1));
    let o = outturn(&["verify".as_ref(), out.as_os_str()]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
}

#[test]
fn captions_name_the_ranking_metric_where_it_sets_the_order() {
    // With rank_by: mae the leaders are the first by MAE; the captions that
    // describe them say so. Columns that really are RMSE keep the name.
    let out = run_small(
        "rank-by",
        "",
        "  rank_by: mae",
        "{formats: [html, markdown]}",
    );
    let html = String::from_utf8(read(&out, "report.html")).unwrap();
    assert!(
        html.contains("The leaders by MAE at this horizon"),
        "caption"
    );
    assert!(!html.contains("leaders by RMSE"));
    assert!(html.contains("relative RMSE"));
    let md = String::from_utf8(read(&out, "report.md")).unwrap();
    assert!(md.contains(", then mae in brackets"), "{md}");
}

/// `text` with line `n` (1-based) changed by `edit`.
fn edit_line(text: &str, n: usize, edit: impl Fn(&str) -> String) -> String {
    text.split_inclusive('\n')
        .enumerate()
        .map(|(i, l)| {
            if i + 1 == n {
                edit(l.trim_end_matches('\n')) + "\n"
            } else {
                l.to_string()
            }
        })
        .collect()
}

#[test]
fn an_edited_table_is_invalid_input_naming_its_file_and_line() {
    // A table cut short, a row with a field too many, a number that is not
    // one, a last line end missing: render stops with exit 2, names the
    // file (and the line where the problem is known to be), and leaves
    // the reports and the manifest as they were.
    type Edit = fn(&str) -> String;
    let cases: [(&str, Edit, &str); 4] = [
        (
            "scores.csv",
            |t| t[..t.len() / 2].to_string(),
            "scores.csv:",
        ),
        (
            "forecasts.csv",
            // The demo's table has 15 columns: 10, two interval levels, `order`.
            |t| edit_line(t, 3, |l| format!("{l},extra")),
            "forecasts.csv:3: the row has 16 fields where the header has 15",
        ),
        (
            "forecasts.csv",
            // The forecast (seventh field) of line 5 is not a number.
            |t| {
                edit_line(t, 5, |l| {
                    let mut fields: Vec<&str> = l.split(',').collect();
                    fields[6] = "about 3";
                    fields.join(",")
                })
            },
            "forecasts.csv:5: forecast is 'about 3', not a number",
        ),
        (
            "tests.csv",
            |t| t.trim_end_matches('\n').to_string(),
            "looks cut short",
        ),
    ];
    for (i, (file, edit, message)) in cases.iter().enumerate() {
        let dir = copy_of_demo(&format!("edited-{i}"));
        let text = String::from_utf8(read(&dir, file)).unwrap();
        let edited = edit(&text);
        std::fs::write(dir.join(file), &edited).unwrap();
        // As edited, the table no longer matches the manifest's hash: render
        // checks every table against it first.
        let o = outturn(&["render".as_ref(), dir.as_os_str()]);
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{file}: {err}");
        assert!(
            err.contains(file) && err.contains("not as outturn wrote it"),
            "{err}"
        );
        assert!(read(&dir, "report.md") == read(demo(), "report.md"));
        // With the manifest edited to match, the readers name the line.
        let m = String::from_utf8(read(&dir, "manifest.json")).unwrap();
        let old = manifest(&dir)["outputs"]
            .as_array()
            .unwrap()
            .iter()
            .find(|o| o["file"] == *file)
            .map(|o| {
                (
                    o["sha256"].as_str().unwrap().to_string(),
                    o["bytes"].as_u64().unwrap(),
                )
            })
            .unwrap();
        let new_sha: String = {
            use sha2::Digest;
            sha2::Sha256::digest(edited.as_bytes())
                .iter()
                .map(|b| format!("{b:02x}"))
                .collect()
        };
        let m = m.replace(&old.0, &new_sha).replace(
            &format!("\"bytes\": {},\n      \"file\": \"{file}\"", old.1),
            &format!("\"bytes\": {},\n      \"file\": \"{file}\"", edited.len()),
        );
        std::fs::write(dir.join("manifest.json"), &m).unwrap();
        let o = outturn(&["render".as_ref(), dir.as_os_str()]);
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{file}: {err}");
        assert!(err.contains(message), "{file}: {err}");
        assert!(err.contains(file), "{err}");
        assert!(read(&dir, "report.md") == read(demo(), "report.md"));
        assert_eq!(read(&dir, "manifest.json"), m.as_bytes());
    }
    // A table deleted from the folder.
    let dir = copy_of_demo("deleted");
    std::fs::remove_file(dir.join("forecasts.csv")).unwrap();
    let o = outturn(&["render".as_ref(), dir.as_os_str()]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("forecasts.csv is missing"), "{err}");
}

/// Text a user writes (notes, title, column names) cannot carry HTML into
/// report.md, nor a formula into the tables: `<script>` and `<img
/// onerror=…>` are written as entities in Markdown (and escaped in HTML),
/// a target named like a spreadsheet formula is written as text (a leading
/// `'`), and the folder still renders and verifies to the same bytes.
#[test]
fn user_text_carries_no_markup_into_the_reports_nor_formulas_into_the_tables() {
    let dir = scratch("inject");
    let csv = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("experiments/data/water_demand.csv"),
    )
    .unwrap();
    let csv = csv.replacen("demand_ml", "=SUM(A1)", 1);
    std::fs::write(dir.join("data.csv"), csv).unwrap();
    let yaml = "version: 1
experiment: inject
notes: \"<script>alert(1)</script> and <img src=x onerror=alert(2)> & more\"
data: {file: data.csv, time: period, frequency: monthly}
target: \"=SUM(A1)\"
transform: seasonal_diff
candidates:
  - family: naive
  - {family: ar, lags: [1]}
backtest:
  schemes: [{expanding: {first_origin: 2018-12}}]
  horizons: [1]
report: {title: \"<b onmouseover=alert(3)>Title</b>\"}
";
    let experiment = dir.join("inject.yaml");
    std::fs::write(&experiment, yaml).unwrap();
    let out = dir.join("results");
    let o = outturn(&[
        "run".as_ref(),
        experiment.as_os_str(),
        "--out".as_ref(),
        out.as_os_str(),
        "--quiet".as_ref(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let md = String::from_utf8(read(&out, "report.md")).unwrap();
    let outside_code = md.split("yaml\n").next().unwrap_or("");
    for raw in ["<script", "<img", "<b onmouseover"] {
        assert!(!outside_code.contains(raw), "report.md carries {raw}");
    }
    assert!(md.contains("&lt;script>alert(1)&lt;/script>"), "{md}");
    let html = String::from_utf8(read(&out, "report.html")).unwrap();
    assert!(!html.contains("<script") && !html.contains("<img src=x"));
    let forecasts = String::from_utf8(read(&out, "forecasts.csv")).unwrap();
    let row = forecasts.lines().nth(1).unwrap();
    assert!(row.starts_with("'=SUM(A1),"), "{row}");
    assert!(!forecasts.lines().skip(1).any(|l| l.starts_with('=')));
    let before = read(&out, "report.md");
    let o = outturn(&["render".as_ref(), out.as_os_str()]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert_eq!(read(&out, "report.md"), before);
    let o = outturn(&["verify".as_ref(), out.as_os_str()]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stdout));
}

/// A user's template that loops without bound is stopped (its fuel runs
/// out) within a few seconds: exit 2 naming the template, nothing rewritten.
#[test]
fn a_template_that_loops_without_bound_is_stopped() {
    let dir = copy_of_demo("fuel");
    let templates = scratch("fuel-templates");
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("templates");
    std::fs::copy(
        root.join("report.html.j2"),
        templates.join("report.html.j2"),
    )
    .unwrap();
    std::fs::write(
        templates.join("report.md.j2"),
        "{% for i in range(100000) %}{% for j in range(100000) %}x{% endfor %}{% endfor %}",
    )
    .unwrap();
    let started = std::time::Instant::now();
    let o = outturn(&[
        "render".as_ref(),
        dir.as_os_str(),
        "--templates".as_ref(),
        templates.as_os_str(),
    ]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("report.md.j2") && err.contains("fuel"),
        "{err}"
    );
    assert!(started.elapsed().as_secs_f64() < 5.0);
    assert!(read(&dir, "report.md") == read(demo(), "report.md"));
}
