//! The weekly Fourier example of docs/arima.md runs as documented: the
//! test reads the YAML block under "Weekly data: a yearly cycle from
//! Fourier terms" from the page itself, writes the data it names (312 weeks
//! of statsmodels' weekly Mauna Loa CO₂ series, `statsmodels.datasets.co2`,
//! as committed in tests/reference/smoothing/smoothing_reference.json,
//! case co2_w), and runs it through `outturn run`. No number of the result
//! is checked against a reference here (arima with regressors is checked
//! against statsmodels SARIMAX in tests/reference_sarima.rs); the test
//! checks that the example runs, estimates every cell and scores both
//! candidates, with the six Fourier columns in the regression.

use std::path::PathBuf;
use std::process::Command;

fn scratch() -> PathBuf {
    let d = std::env::temp_dir().join(format!("outturn-weekly-fourier-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// The first ```yaml block after the heading.
fn documented_example() -> String {
    let page =
        std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/docs/arima.md")).unwrap();
    let at = page
        .find("## Weekly data: a yearly cycle from Fourier terms")
        .expect("the section");
    let rest = &page[at..];
    let start = rest.find("```yaml\n").expect("a yaml block") + "```yaml\n".len();
    let end = rest[start..].find("```").unwrap();
    rest[start..start + end].to_string()
}

/// 312 weeks from the week of 1990-01-06, labelled by the week's date.
fn co2_weekly_csv() -> String {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/reference/smoothing/smoothing_reference.json"
    );
    let v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap();
    let case = v["cases"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["dataset"] == "co2_w")
        .unwrap();
    let y: Vec<f64> = case["y"]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect();
    assert_eq!(y.len(), 312);
    // days since 1970-01-01 of 1990-01-06, then civil dates by Hinnant's algorithm
    let day0: i64 = 7310;
    let mut csv = String::from("week,co2\n");
    for (i, v) in y.iter().enumerate() {
        let (yy, mm, dd) = civil(day0 + 7 * i as i64);
        csv.push_str(&format!("{yy:04}-{mm:02}-{dd:02},{v}\n"));
    }
    csv
}

fn civil(z: i64) -> (i64, i64, i64) {
    let z = z + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    (yoe + era * 400 + i64::from(m <= 2), m, d)
}

#[test]
fn the_documented_weekly_fourier_example_runs() {
    assert_eq!(civil(7310), (1990, 1, 6), "day numbering");
    let dir = scratch();
    std::fs::write(dir.join("co2_weekly.csv"), co2_weekly_csv()).unwrap();
    let exp = dir.join("weekly.yaml");
    std::fs::write(&exp, documented_example()).unwrap();
    let out = dir.join("res");
    let o = Command::new(env!("CARGO_BIN_EXE_outturn"))
        .args([
            "run".as_ref(),
            exp.as_os_str(),
            "--out".as_ref(),
            out.as_os_str(),
            "--quiet".as_ref(),
        ])
        .output()
        .unwrap();
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let scores = std::fs::read_to_string(out.join("scores.csv")).unwrap();
    let header: Vec<&str> = scores.lines().next().unwrap().split(',').collect();
    let rmse = header.iter().position(|c| *c == "rmse").unwrap();
    let params = header.iter().position(|c| *c == "parameters").unwrap();
    for id in ["seasonal_naive", "\"arima_fourier(1,1,1)\""] {
        let row = scores
            .lines()
            .find(|l| l.starts_with(&format!("co2,{id},expanding,1,all,")))
            .unwrap_or_else(|| panic!("{id} scored at h = 1"));
        // the quoted id holds one comma-free bracket "(1,1,1)": split after it
        let tail = row.replacen(id, "ID", 1);
        let cells: Vec<&str> = tail.split(',').collect();
        let value: f64 = cells[rmse].parse().unwrap();
        assert!(
            value.is_finite() && value > 0.0,
            "{id}: rmse {}",
            cells[rmse]
        );
        if id.contains("arima") {
            // p + q + the six Fourier coefficients (docs/candidates.md's count)
            assert_eq!(cells[params], "8", "{row}");
        }
    }
}
