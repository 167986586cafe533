//! Exit codes a scheduled job can act on (docs/commands.md): 3 when the
//! results were written but some cells could not be estimated — said on
//! stderr even under `--quiet`, and listed in the manifest and the report.

use std::path::PathBuf;
use std::process::Command;

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("outturn-exit-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("temporary folder");
    dir
}

#[test]
fn a_run_with_failed_cells_writes_its_results_and_exits_3() {
    let dir = scratch("partial");
    // A monthly series that crosses zero: a multiplicative season cannot be
    // estimated on it (its cell fails), the other candidates can.
    let mut csv = String::from("period,y\n");
    for i in 0..96 {
        let season = [
            3.0, 1.0, -2.0, -4.0, -1.0, 2.0, 4.0, 3.0, 0.5, -1.5, -3.0, -1.0,
        ][i % 12];
        csv.push_str(&format!(
            "{}-{:02},{}\n",
            2010 + i / 12,
            i % 12 + 1,
            season + 0.1 * (i % 7) as f64
        ));
    }
    std::fs::write(dir.join("data.csv"), csv).unwrap();
    std::fs::write(
        dir.join("exp.yaml"),
        "version: 1\nexperiment: partial\ndata: {file: data.csv, time: period, frequency: monthly}\ntarget: y\ncandidates:\n  - family: naive\n  - family: seasonal_naive\n  - {family: smoothing, trend: [none], season: [multiplicative]}\nbacktest:\n  schemes: [{expanding: {first_origin: 2014-12}}]\n  horizons: [1]\n",
    )
    .unwrap();
    let out = Command::new(env!("CARGO_BIN_EXE_outturn"))
        .args(["run", "exp.yaml", "--out", "res", "--quiet", "--no-cache"])
        .current_dir(&dir)
        .output()
        .expect("outturn runs");
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(3), "{stderr}");
    assert!(
        stderr.contains("1 of 3 cells could not be estimated"),
        "{stderr}"
    );
    assert!(
        stderr.contains("y/smoothing(none,multiplicative)/expanding"),
        "{stderr}"
    );
    let manifest: serde_json::Value =
        serde_json::from_slice(&std::fs::read(dir.join("res/manifest.json")).unwrap()).unwrap();
    let failed: Vec<&str> = manifest["grid"]["cells"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|c| c["status"] == "failed")
        .map(|c| c["id"].as_str().unwrap())
        .collect();
    assert_eq!(failed, ["y/smoothing(none,multiplicative)/expanding"]);
    let report = std::fs::read_to_string(dir.join("res/report.md")).unwrap();
    assert!(report.contains("y/smoothing(none,multiplicative)/expanding"));
    let _ = std::fs::remove_dir_all(&dir);
}
