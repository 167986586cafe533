//! Audit trail and scale-out (SPEC §5–§6): byte-identical outputs across
//! thread counts and shard counts, `verify` on untouched and tampered
//! folders, `merge` refusing bad shard sets, and the resume cache. These are
//! properties that hold by construction of the design; no number here comes
//! from invented data.

use std::path::{Path, PathBuf};
use std::process::Command;

const BIN: &str = env!("CARGO_BIN_EXE_outturn");

fn demo() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("experiments/water_demand.yaml")
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("outturn-scale-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn outturn(args: &[&str]) -> std::process::Output {
    Command::new(BIN).args(args).output().expect("run outturn")
}

/// The arguments of `outturn run EXP --out OUT --quiet --no-cache MORE…`.
fn run_args<'a>(exp: &'a Path, out: &'a Path, more: &[&'a str]) -> Vec<&'a str> {
    let mut args = vec![
        "run",
        exp.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--quiet",
        "--no-cache",
    ];
    args.extend_from_slice(more);
    args
}

/// `outturn run EXP --out OUT --quiet --no-cache` with more arguments.
fn run(exp: &Path, out: &Path, more: &[&str]) -> std::process::Output {
    outturn(&run_args(exp, out, more))
}

fn ok(args: &[&str]) {
    let o = outturn(args);
    assert!(
        o.status.success(),
        "outturn {args:?} failed: {}",
        String::from_utf8_lossy(&o.stderr)
    );
}

const TABLES: [&str; 11] = [
    "forecasts.csv",
    "scores.csv",
    "tests.csv",
    "outlook.csv",
    "parameters.csv",
    "stability.csv",
    "diagnostics.csv",
    "series.csv",
    "experiment.yaml",
    "report.md",
    "report.html",
];

fn same_outputs(a: &Path, b: &Path) {
    for f in TABLES {
        let x = std::fs::read(a.join(f)).unwrap();
        let y = std::fs::read(b.join(f)).unwrap();
        assert!(
            x == y,
            "{f} differs between {} and {}",
            a.display(),
            b.display()
        );
    }
    let strip = |p: &Path| {
        let mut v: serde_json::Value =
            serde_json::from_slice(&std::fs::read(p.join("manifest.json")).unwrap()).unwrap();
        v.as_object_mut().unwrap().remove("run");
        v
    };
    assert_eq!(
        strip(a),
        strip(b),
        "manifest outside its run section differs"
    );
}

#[test]
fn identical_across_thread_counts_shards_and_merge() {
    let dir = scratch("shards");
    let exp = demo();
    let exp = exp.to_str().unwrap();
    let single = dir.join("single");
    ok(&[
        "run",
        exp,
        "--out",
        single.to_str().unwrap(),
        "--quiet",
        "--no-cache",
        "--jobs",
        "1",
    ]);
    for jobs in ["2", "16"] {
        let out = dir.join(format!("jobs{jobs}"));
        ok(&[
            "run",
            exp,
            "--out",
            out.to_str().unwrap(),
            "--quiet",
            "--no-cache",
            "--jobs",
            jobs,
        ]);
        same_outputs(&single, &out);
    }
    for n in [1usize, 2, 3, 7] {
        let mut shards = Vec::new();
        for k in 1..=n {
            let out = dir.join(format!("n{n}-k{k}"));
            ok(&[
                "run",
                exp,
                "--out",
                out.to_str().unwrap(),
                "--quiet",
                "--no-cache",
                "--shard",
                &format!("{k}/{n}"),
            ]);
            shards.push(out);
        }
        let merged = dir.join(format!("merged{n}"));
        let mut args = vec!["merge".to_string()];
        args.extend(shards.iter().map(|s| s.to_string_lossy().to_string()));
        args.extend(["--out".to_string(), merged.to_string_lossy().to_string()]);
        let args: Vec<&str> = args.iter().map(String::as_str).collect();
        ok(&args);
        same_outputs(&single, &merged);
        if n == 3 {
            // Missing and duplicate shards are refused with exit code 2.
            let o = outturn(&[
                "merge",
                shards[0].to_str().unwrap(),
                shards[1].to_str().unwrap(),
                "--out",
                dir.join("bad").to_str().unwrap(),
            ]);
            assert_eq!(o.status.code(), Some(2));
            assert!(String::from_utf8_lossy(&o.stderr).contains("missing shard(s): 3/3"));
            let o = outturn(&[
                "merge",
                shards[0].to_str().unwrap(),
                shards[0].to_str().unwrap(),
                shards[1].to_str().unwrap(),
                "--out",
                dir.join("bad").to_str().unwrap(),
            ]);
            assert_eq!(o.status.code(), Some(2));
            assert!(String::from_utf8_lossy(&o.stderr).contains("given twice"));
            // A shard of a different shard count is refused.
            let o = outturn(&[
                "merge",
                shards[0].to_str().unwrap(),
                dir.join("n2-k2").to_str().unwrap(),
                shards[2].to_str().unwrap(),
                "--out",
                dir.join("bad").to_str().unwrap(),
            ]);
            assert_eq!(o.status.code(), Some(2));
            assert!(!dir.join("bad").exists());
            // A shard whose rows were edited after the run is refused, and
            // nothing is written (the rows are streamed, so the hash is
            // checked after the last one is read).
            let edited = dir.join("edited");
            std::fs::create_dir_all(&edited).unwrap();
            for e in std::fs::read_dir(&shards[1]).unwrap() {
                let e = e.unwrap();
                std::fs::copy(e.path(), edited.join(e.file_name())).unwrap();
            }
            let rows = std::fs::read_to_string(edited.join("cells.txt")).unwrap();
            let at = rows.find("\nf ").expect("a forecast row") + 1;
            let line_end = at + rows[at..].find('\n').unwrap();
            let mut fields: Vec<String> = rows[at..line_end].split(' ').map(String::from).collect();
            fields[3] = "1.5e0".into();
            let changed = format!("{}{}{}", &rows[..at], fields.join(" "), &rows[line_end..]);
            assert_ne!(changed, rows);
            std::fs::write(edited.join("cells.txt"), changed).unwrap();
            refused_as_edited(&shards, &edited, &dir.join("bad"));
            // An edit that leaves a row unreadable is named as an edit too.
            let rows = std::fs::read_to_string(edited.join("cells.txt")).unwrap();
            std::fs::write(edited.join("cells.txt"), rows.replacen("\nf ", "\nf x ", 1)).unwrap();
            refused_as_edited(&shards, &edited, &dir.join("bad"));
        }
    }
    // verify: untouched passes, tampered fails naming the file and row.
    ok(&["verify", single.to_str().unwrap()]);
    let path = single.join("scores.csv");
    let text = std::fs::read_to_string(&path).unwrap();
    let mut lines: Vec<String> = text.lines().map(String::from).collect();
    lines[3].push('7');
    std::fs::write(&path, lines.join("\n") + "\n").unwrap();
    let o = outturn(&["verify", single.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(1));
    let said = String::from_utf8_lossy(&o.stdout);
    assert!(
        said.contains("scores.csv") && said.contains("line 4"),
        "{said}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn verify_refuses_changed_inputs() {
    let dir = scratch("changed");
    let data_dir = dir.join("data");
    std::fs::create_dir_all(&data_dir).unwrap();
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("experiments");
    std::fs::copy(
        src.join("data/water_demand.csv"),
        data_dir.join("water_demand.csv"),
    )
    .unwrap();
    let exp = dir.join("exp.yaml");
    std::fs::copy(src.join("water_demand.yaml"), &exp).unwrap();
    let out = dir.join("out");
    let o = run(&exp, &out, &[]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let mut data = std::fs::read_to_string(data_dir.join("water_demand.csv")).unwrap();
    data = data.replacen("379.97", "379.98", 1);
    std::fs::write(data_dir.join("water_demand.csv"), data).unwrap();
    let o = outturn(&["verify", out.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    let said = String::from_utf8_lossy(&o.stderr);
    assert!(
        said.contains("water_demand.csv") && said.contains("changed"),
        "{said}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

fn cells_from_cache(folder: &Path) -> u64 {
    let v: serde_json::Value =
        serde_json::from_slice(&std::fs::read(folder.join("manifest.json")).unwrap()).unwrap();
    v["run"]["cells_from_cache"].as_u64().unwrap()
}

#[test]
fn resume_cache_recomputes_only_new_cells() {
    let dir = scratch("cache");
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("experiments");
    std::fs::create_dir_all(dir.join("data")).unwrap();
    std::fs::copy(
        src.join("data/water_demand.csv"),
        dir.join("data/water_demand.csv"),
    )
    .unwrap();
    let base = std::fs::read_to_string(src.join("water_demand.yaml")).unwrap();
    let exp = dir.join("exp.yaml");
    std::fs::write(&exp, &base).unwrap();
    let out = dir.join("results/out");
    ok(&[
        "run",
        exp.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--quiet",
    ]);
    assert_eq!(cells_from_cache(&out), 0);
    let first = std::fs::read(out.join("forecasts.csv")).unwrap();
    // A rerun takes every computed cell from the cache and writes the same bytes.
    ok(&[
        "run",
        exp.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--quiet",
    ]);
    let cached = cells_from_cache(&out);
    assert!(cached > 0);
    assert_eq!(std::fs::read(out.join("forecasts.csv")).unwrap(), first);
    // Adding a candidate recomputes only its cells (one per scheme).
    let grown = base.replacen(
        "candidates:\n",
        "candidates:\n  - family: ar\n    label: extra\n    lags: [5]\n",
        1,
    );
    std::fs::write(&exp, grown).unwrap();
    ok(&[
        "run",
        exp.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--quiet",
    ]);
    assert_eq!(cells_from_cache(&out), cached);
    // A damaged entry is ignored, not trusted.
    let cache = dir.join("results/.outturn-cache");
    let entry = std::fs::read_dir(&cache)
        .unwrap()
        .next()
        .unwrap()
        .unwrap()
        .path();
    let text = std::fs::read_to_string(&entry).unwrap();
    std::fs::write(&entry, text.replacen("\nf ", "\nf 9", 1)).unwrap();
    ok(&[
        "run",
        exp.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--quiet",
    ]);
    assert_eq!(cells_from_cache(&out), cached - 1 + 3);
    let _ = std::fs::remove_dir_all(&dir);
}

/// A panel of `k` series of length `n` from a fixed linear recurrence: any
/// numbers serve, since the tests below check properties (render equals run,
/// merge equals single), not values.
fn write_panel(dir: &Path, k: usize, n: usize) -> PathBuf {
    let mut text = String::from("t");
    for j in 0..k {
        text.push_str(&format!(",y{j}"));
    }
    text.push_str(",x\n");
    let mut state = 12345u64;
    let mut next = || {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        ((state >> 11) as f64 / (1u64 << 53) as f64) - 0.5
    };
    let mut y = vec![0.0; k];
    let mut x = 0.0;
    for t in 1..=n {
        x = 0.6 * x + next();
        text.push_str(&t.to_string());
        for v in y.iter_mut() {
            *v = 0.5 + 0.5 * *v + 0.3 * x + next();
            text.push_str(&format!(",{v:.6}"));
        }
        text.push_str(&format!(",{x:.6}\n"));
    }
    write_experiment(
        dir,
        "panel",
        &text,
        k,
        "predictors:\n  - column: x\ncandidates:\n  - family: naive\n  - family: mean\n  - family: ar\n    lags: [1, 2]\n  - family: ardl\n    lags: [1]\n    predictors: [x]\n    predictor_lags: [1, 2]\n  - family: combination\n    members: [\"ar(1)\", \"ardl(1,1)\"]\n    weights: inverse_mse\nbacktest:\n  schemes: [{expanding: {first_origin: 40}}, {rolling: {window: 30, first_origin: 40}}]\n  horizons: [1, 3]\nscoring:\n  metrics: [rmse, mae]\n  tests: {diebold_mariano: true, clark_west: true}\nseed: 7\n",
    )
}

/// Merging shards 1 and 3 with `edited` in place of shard 2 is refused as
/// an edit (exit code 2), and nothing is written at `out`.
fn refused_as_edited(shards: &[PathBuf], edited: &Path, out: &Path) {
    let o = outturn(&[
        "merge",
        shards[0].to_str().unwrap(),
        edited.to_str().unwrap(),
        shards[2].to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    let said = String::from_utf8_lossy(&o.stderr);
    assert!(said.contains("do not match its manifest's hash"), "{said}");
    assert!(!out.exists());
}

/// A panel text of `k` series y0…y{k−1} over periods t = 1…n: each cell is
/// `value(j, u)` with u uniform on [0, 1) from a fixed generator (`seed`).
fn uniform_panel(k: usize, n: usize, seed: u64, value: impl Fn(usize, f64) -> f64) -> String {
    let mut text = String::from("t");
    for j in 0..k {
        text.push_str(&format!(",y{j}"));
    }
    text.push('\n');
    let mut state = seed;
    for t in 1..=n {
        text.push_str(&t.to_string());
        for j in 0..k {
            state = state
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            let u = (state >> 11) as f64 / (1u64 << 53) as f64;
            text.push_str(&format!(",{:.6}", value(j, u)));
        }
        text.push('\n');
    }
    text
}

/// Write `data` as panel.csv and an experiment over its targets y0…y{k−1}
/// (time column t) with the keys in `rest`; returns the experiment's path.
fn write_experiment(dir: &Path, name: &str, data: &str, k: usize, rest: &str) -> PathBuf {
    std::fs::write(dir.join("panel.csv"), data).unwrap();
    let targets: Vec<String> = (0..k).map(|j| format!("y{j}")).collect();
    let exp = dir.join("panel.yaml");
    std::fs::write(
        &exp,
        format!(
            "version: 1\nexperiment: {name}\ndata: {{file: panel.csv, time: t, frequency: index}}\ntarget: [{}]\n{rest}",
            targets.join(", ")
        ),
    )
    .unwrap();
    exp
}

#[test]
fn many_targets_render_and_merge_to_the_same_bytes() {
    // More targets than the report charts in full: the report a run writes
    // from the rows it keeps must equal the one `render` makes from the
    // whole folder, and a merge must equal a single run.
    let dir = scratch("panel");
    let exp = write_panel(&dir, 27, 90);
    let exp = exp.to_str().unwrap();
    let single = dir.join("single");
    ok(&[
        "run",
        exp,
        "--out",
        single.to_str().unwrap(),
        "--quiet",
        "--no-cache",
        "--jobs",
        "2",
    ]);
    let rendered = dir.join("rendered");
    std::fs::create_dir_all(&rendered).unwrap();
    for e in std::fs::read_dir(&single).unwrap() {
        let e = e.unwrap();
        std::fs::copy(e.path(), rendered.join(e.file_name())).unwrap();
    }
    ok(&["render", rendered.to_str().unwrap()]);
    for f in ["report.md", "report.html", "manifest.json"] {
        assert!(
            std::fs::read(single.join(f)).unwrap() == std::fs::read(rendered.join(f)).unwrap(),
            "{f} differs after render"
        );
    }
    let mut shards = Vec::new();
    for k in 1..=3 {
        let out = dir.join(format!("s{k}"));
        ok(&[
            "run",
            exp,
            "--out",
            out.to_str().unwrap(),
            "--quiet",
            "--no-cache",
            "--shard",
            &format!("{k}/3"),
        ]);
        shards.push(out.to_string_lossy().to_string());
    }
    let merged = dir.join("merged");
    let mut args: Vec<&str> = vec!["merge"];
    args.extend(shards.iter().map(String::as_str));
    args.extend(["--out", merged.to_str().unwrap()]);
    ok(&args);
    same_outputs(&single, &merged);
    ok(&["verify", single.to_str().unwrap()]);
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn the_lowest_failing_target_is_reported_at_any_thread_count() {
    // Targets are computed side by side and handed to the writer as they
    // finish; when two targets cannot be estimated, the run must refuse the
    // same way whatever the thread count: the lowest failing target named,
    // exit code 2, and nothing written.
    let dir = scratch("failing");
    // y3 and y9 do not vary: every ar design on them is singular.
    let text = uniform_panel(12, 90, 99, |j, u| if j == 3 || j == 9 { 5.0 } else { u });
    let exp = write_experiment(
        &dir,
        "failing",
        &text,
        12,
        "candidates:\n  - family: naive\n  - family: ar\n    lags: [1, 2]\nbacktest:\n  schemes: [{expanding: {first_origin: 40}}]\n  horizons: [1]\n",
    );
    let out = dir.join("results");
    let mut messages = Vec::new();
    for jobs in ["1", "2", "16"] {
        let o = run(&exp, &out, &["--jobs", jobs]);
        assert_eq!(o.status.code(), Some(2), "--jobs {jobs}");
        let stderr = String::from_utf8_lossy(&o.stderr).to_string();
        assert!(stderr.contains("target 'y3'"), "--jobs {jobs}: {stderr}");
        assert!(!stderr.contains("target 'y9'"), "--jobs {jobs}: {stderr}");
        messages.push(stderr);
        let left: Vec<_> = std::fs::read_dir(&dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
            .filter(|n| n != "panel.csv" && n != "panel.yaml")
            .collect();
        assert!(left.is_empty(), "--jobs {jobs} left {left:?}");
    }
    assert!(messages.windows(2).all(|w| w[0] == w[1]));
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn many_targets_on_many_threads_finish() {
    // Workers wait for the table writer when they run too far ahead; a
    // worker loop must never end up waiting inside the thread pool above
    // a target the writer needs (that hung runs of a few hundred targets
    // on 3 or more threads). Run such a panel repeatedly with a watchdog.
    let dir = scratch("threads");
    let text = uniform_panel(300, 120, 7, |_, u| u);
    let exp = write_experiment(
        &dir,
        "threads",
        &text,
        300,
        "candidates:\n  - family: naive\n  - family: mean\n  - family: ar\n    lags: [1, 2]\nbacktest:\n  schemes: [{expanding: {first_origin: 60}}]\n  horizons: [1]\nreport:\n  formats: [markdown]\n",
    );
    let out = dir.join("results");
    for round in 0..12 {
        let jobs = if round % 2 == 0 { "4" } else { "8" };
        let mut child = Command::new(BIN)
            .args(run_args(&exp, &out, &["--jobs", jobs]))
            .spawn()
            .expect("run outturn");
        let started = std::time::Instant::now();
        let status = loop {
            if let Some(status) = child.try_wait().unwrap() {
                break status;
            }
            if started.elapsed() > std::time::Duration::from_secs(60) {
                let _ = child.kill();
                panic!("round {round} (--jobs {jobs}) did not finish in 60 s");
            }
            std::thread::sleep(std::time::Duration::from_millis(20));
        };
        assert!(status.success(), "round {round} (--jobs {jobs}) failed");
    }
    let _ = std::fs::remove_dir_all(&dir);
}

/// Shard files edited after the run are refused with exit code 2, naming
/// the file, and nothing is written — never an abort or a panic: a shard
/// count far beyond any run, a row moved to another horizon with the
/// manifest's hash recomputed to match, a truncated cells.txt and a
/// manifest that is not JSON.
#[test]
fn edited_shard_files_are_refused_without_abort() {
    use sha2::Digest;
    let dir = scratch("edited-shards");
    let exp = demo();
    let mut shards = Vec::new();
    for k in 1..=3 {
        let out = dir.join(format!("k{k}"));
        let shard = format!("{k}/3");
        ok(&run_args(&exp, &out, &["--shard", &shard]));
        shards.push(out);
    }
    let copy = |name: &str| -> Vec<PathBuf> {
        shards
            .iter()
            .enumerate()
            .map(|(i, s)| {
                let to = dir.join(format!("{name}{}", i + 1));
                std::fs::create_dir_all(&to).unwrap();
                for f in ["manifest.json", "cells.txt"] {
                    std::fs::copy(s.join(f), to.join(f)).unwrap();
                }
                to
            })
            .collect()
    };
    let refused = |given: &[PathBuf], says: &[&str]| {
        let out = dir.join("merged");
        let mut args = vec!["merge".to_string()];
        args.extend(given.iter().map(|s| s.to_string_lossy().to_string()));
        args.extend(["--out".to_string(), out.to_string_lossy().to_string()]);
        let args: Vec<&str> = args.iter().map(String::as_str).collect();
        let o = outturn(&args);
        let said = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{said}");
        for s in says {
            assert!(said.contains(s), "expected '{s}' in: {said}");
        }
        assert!(!said.contains("panicked"), "{said}");
        assert!(!out.exists());
    };
    // A shard count of 1e15 (it used to allocate a table that size and abort).
    let counts = copy("count");
    for d in &counts {
        let m = std::fs::read_to_string(d.join("manifest.json")).unwrap();
        std::fs::write(
            d.join("manifest.json"),
            m.replace("\"count\": 3", "\"count\": 1000000000000000"),
        )
        .unwrap();
    }
    refused(&counts, &["manifest.json", "shard count"]);
    // A forecast row moved to horizon 99, the hash recomputed (it used to panic while scoring).
    let moved = copy("moved");
    let holder = moved
        .iter()
        .find(|d| {
            std::fs::read_to_string(d.join("cells.txt"))
                .unwrap()
                .contains("\nf ")
        })
        .unwrap()
        .clone();
    let rows = std::fs::read_to_string(holder.join("cells.txt")).unwrap();
    let at = rows.find("\nf ").unwrap() + 1;
    let end = at + rows[at..].find('\n').unwrap();
    let mut fields: Vec<&str> = rows[at..end].split(' ').collect();
    fields[1] = "99";
    let changed = format!("{}{}{}", &rows[..at], fields.join(" "), &rows[end..]);
    std::fs::write(holder.join("cells.txt"), &changed).unwrap();
    let digest: String = sha2::Sha256::digest(changed.as_bytes())
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect();
    let m = std::fs::read_to_string(holder.join("manifest.json")).unwrap();
    let old = m
        .split("\"sha256\": \"")
        .nth(1)
        .unwrap()
        .split('"')
        .next()
        .unwrap();
    std::fs::write(holder.join("manifest.json"), m.replace(old, &digest)).unwrap();
    refused(
        &moved,
        &["cells.txt", "does not match the experiment's plan"],
    );
    // cells.txt cut in the middle of a cell.
    let cut = copy("cut");
    let rows = std::fs::read(cut[0].join("cells.txt")).unwrap();
    std::fs::write(cut[0].join("cells.txt"), &rows[..rows.len() / 2]).unwrap();
    refused(&cut, &["cells.txt"]);
    // A manifest that is not JSON.
    let garbled = copy("garbled");
    std::fs::write(garbled[1].join("manifest.json"), b"garbage\x00\xff").unwrap();
    refused(&garbled, &["manifest.json", "not a shard manifest"]);
    let _ = std::fs::remove_dir_all(&dir);
}

/// verify lists every difference, not only the first: a table changed
/// (with its first differing line), a table deleted and a file added.
#[test]
fn verify_reports_every_added_missing_and_changed_file() {
    let dir = scratch("verify-all");
    let folder = dir.join("res");
    ok(&run_args(&demo(), &folder, &[]));
    ok(&["verify", folder.to_str().unwrap()]);
    let path = folder.join("scores.csv");
    let text = std::fs::read_to_string(&path).unwrap();
    std::fs::write(&path, text.replacen('\n', "\n7", 2)).unwrap();
    std::fs::remove_file(folder.join("outlook.csv")).unwrap();
    std::fs::write(folder.join("notes.txt"), b"mine").unwrap();
    let o = outturn(&["verify", folder.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(1));
    let said = String::from_utf8_lossy(&o.stdout);
    assert!(
        said.contains("scores.csv differs first at line 2"),
        "{said}"
    );
    assert!(
        said.contains("outlook.csv is missing from the folder"),
        "{said}"
    );
    assert!(said.contains("notes.txt was added to the folder"), "{said}");
    let _ = std::fs::remove_dir_all(&dir);
}

/// verify and render of a shard folder say to merge first (exit 2).
#[test]
fn a_shard_folder_is_merged_before_it_is_verified_or_rendered() {
    let dir = scratch("shard-first");
    let shard = dir.join("k1");
    ok(&run_args(&demo(), &shard, &["--shard", "1/2"]));
    for command in ["verify", "render"] {
        let o = outturn(&[command, shard.to_str().unwrap()]);
        let said = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{command}: {said}");
        assert!(
            said.contains("shard folder") && said.contains("merge"),
            "{command}: {said}"
        );
    }
    let _ = std::fs::remove_dir_all(&dir);
}

/// verify works on a results folder moved to another machine: the
/// experiment file is the folder's own copy, the data file is found beside
/// it or given with --data, and what is missing is said precisely; after
/// render --templates, verify asks for the templates and then passes.
#[test]
fn verify_works_on_a_copied_folder() {
    let dir = scratch("copied");
    let origin = dir.join("origin");
    std::fs::create_dir_all(origin.join("data")).unwrap();
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("experiments");
    std::fs::copy(
        root.join("water_demand.yaml"),
        origin.join("water_demand.yaml"),
    )
    .unwrap();
    std::fs::copy(
        root.join("data/water_demand.csv"),
        origin.join("data/water_demand.csv"),
    )
    .unwrap();
    let folder = origin.join("res");
    ok(&run_args(&origin.join("water_demand.yaml"), &folder, &[]));
    // "Another machine": the folder alone, the inputs gone from where they were.
    let elsewhere = dir.join("elsewhere");
    std::fs::create_dir_all(&elsewhere).unwrap();
    let copied = elsewhere.join("res");
    std::fs::rename(&folder, &copied).unwrap();
    let data_copy = dir.join("inputs");
    std::fs::create_dir_all(&data_copy).unwrap();
    std::fs::rename(
        origin.join("data/water_demand.csv"),
        data_copy.join("water_demand.csv"),
    )
    .unwrap();
    std::fs::remove_dir_all(&origin).unwrap();
    let o = outturn(&["verify", copied.to_str().unwrap()]);
    let said = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{said}");
    assert!(
        said.contains("data/water_demand.csv") && said.contains("--data DIR"),
        "{said}"
    );
    ok(&[
        "verify",
        copied.to_str().unwrap(),
        "--data",
        data_copy.to_str().unwrap(),
    ]);
    // Rendered with templates of one's own: verify needs them.
    let templates = dir.join("templates");
    std::fs::create_dir_all(&templates).unwrap();
    let built_in = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("templates");
    std::fs::copy(
        built_in.join("report.html.j2"),
        templates.join("report.html.j2"),
    )
    .unwrap();
    std::fs::write(templates.join("report.md.j2"), "# {{ title }}\n").unwrap();
    ok(&[
        "render",
        copied.to_str().unwrap(),
        "--templates",
        templates.to_str().unwrap(),
    ]);
    let o = outturn(&[
        "verify",
        copied.to_str().unwrap(),
        "--data",
        data_copy.to_str().unwrap(),
    ]);
    let said = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{said}");
    assert!(
        said.contains("report.md.j2") && said.contains("--templates"),
        "{said}"
    );
    ok(&[
        "verify",
        copied.to_str().unwrap(),
        "--data",
        data_copy.to_str().unwrap(),
        "--templates",
        templates.to_str().unwrap(),
    ]);
    let _ = std::fs::remove_dir_all(&dir);
}
