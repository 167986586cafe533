//! The worst sizes an experiment can ask for are refused quickly and
//! cheaply: exit code 2 within a second and under 200 MiB of memory (peak
//! resident size, as the kernel accounts it for the finished process), with
//! a message naming the key, and nothing written. Each case once aborted,
//! hung or used gigabytes (docs/refusals.md lists them).

use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("outturn-limits-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("temporary folder");
    dir
}

/// 80 monthly observations of a wandering series and a predictor.
fn data() -> String {
    let mut s = String::from("period,y,x\n");
    let mut state: u64 = 7;
    let mut level = 50.0;
    for i in 0..80 {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        level += ((state >> 33) as f64 / (1u64 << 31) as f64) - 0.5;
        s.push_str(&format!(
            "{}-{:02},{level:.3},{:.3}\n",
            2000 + i / 12,
            i % 12 + 1,
            (i % 5) as f64
        ));
    }
    s
}

fn experiment(candidates: &str, scheme: &str) -> String {
    format!(
        "version: 1\nexperiment: limits\ndata: {{file: data.csv, time: period, frequency: monthly}}\ntarget: y\npredictors:\n  - column: x\ncandidates:\n  - family: naive\n{candidates}backtest:\n  schemes: [{scheme}]\n  horizons: [1]\n"
    )
}

/// Run outturn with `args` in `dir`: (exit code, stderr, seconds, peak resident bytes).
// The child is reaped by wait4 below (to read its resource usage), not by `wait`.
#[allow(clippy::zombie_processes)]
fn measured(dir: &Path, args: &[&str]) -> (Option<i32>, String, f64, u64) {
    use std::os::unix::process::ExitStatusExt;
    let started = Instant::now();
    let child = std::process::Command::new(env!("CARGO_BIN_EXE_outturn"))
        .args(args)
        .current_dir(dir)
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .expect("outturn starts");
    let pid = libc::pid_t::try_from(child.id()).expect("pid");
    let mut stderr = child.stderr.expect("stderr");
    let reader = std::thread::spawn(move || {
        use std::io::Read;
        let mut s = String::new();
        let _ = stderr.read_to_string(&mut s);
        s
    });
    let mut status = 0;
    // SAFETY: an all-zero rusage is a valid value for wait4 to fill.
    let mut usage: libc::rusage = unsafe { std::mem::zeroed() };
    loop {
        // SAFETY: waiting for our own child, with valid pointers.
        let rc = unsafe { libc::wait4(pid, &mut status, libc::WNOHANG, &mut usage) };
        if rc == pid {
            break;
        }
        if started.elapsed() > Duration::from_secs(30) {
            // SAFETY: killing our own child that overran.
            unsafe { libc::kill(pid, libc::SIGKILL) };
        }
        std::thread::sleep(Duration::from_millis(5));
    }
    let seconds = started.elapsed().as_secs_f64();
    let status = std::process::ExitStatus::from_raw(status);
    // ru_maxrss is in kilobytes on Linux.
    let peak = usage.ru_maxrss as u64 * 1024;
    (
        status.code(),
        reader.join().unwrap_or_default(),
        seconds,
        peak,
    )
}

#[test]
fn the_worst_sizes_are_refused_within_a_second_and_200_mib() {
    let dir = scratch("worst");
    std::fs::write(dir.join("data.csv"), data()).unwrap();
    let cases: Vec<(&str, String, Vec<&str>, &str)> = vec![
        (
            "lags 100000",
            experiment("  - {family: ar, lags: [100000]}\n", "{expanding: {}}"),
            vec![],
            "candidates[2].lags",
        ),
        (
            "lags 20000",
            experiment("  - {family: ar, lags: [20000]}\n", "{expanding: {}}"),
            vec![],
            "candidates[2].lags",
        ),
        (
            "an ar searching 1000 orders",
            experiment(
                "  - {family: ar, select: bic, max_lags: 1000}\n",
                "{expanding: {}}",
            ),
            vec![],
            "at most 100",
        ),
        (
            "an ardl searching 1000 × 1000 orders",
            experiment(
                "  - {family: ardl, select: bic, max_lags: 1000, predictors: [x]}\n",
                "{expanding: {}}",
            ),
            vec![],
            "at most 24",
        ),
        (
            "lags as a range",
            experiment(
                "  - {family: ar, lags: {from: 1, to: 5000}}\n",
                "{expanding: {}}",
            ),
            vec![],
            "at most 1000 lags",
        ),
        (
            "predictor_lags 100000",
            experiment(
                "  - {family: ardl, lags: [1], predictors: [x], predictor_lags: [100000]}\n",
                "{expanding: {}}",
            ),
            vec![],
            "predictor_lags",
        ),
        (
            "window 1e12",
            experiment(
                "  - {family: ar, lags: [1]}\n",
                "{rolling: {window: 1000000000000}}",
            ),
            vec![],
            "window",
        ),
        (
            "lags beyond the sample",
            experiment("  - {family: ar, lags: [600]}\n", "{expanding: {}}"),
            vec![],
            "estimation rows",
        ),
        (
            "arima(12,2,12) on 80 observations",
            experiment(
                "  - {family: arima, p: [12], d: [2], q: [12]}\n",
                "{expanding: {}}",
            ),
            vec![],
            "per parameter",
        ),
        (
            "resamples 1e12",
            experiment("", "{expanding: {}}").replace(
                "horizons: [1]\n",
                "horizons: [1]\nscoring:\n  tests: {snooping: {resamples: 1000000000000}}\n",
            ),
            vec![],
            "resamples",
        ),
        (
            "jobs 65535",
            experiment("", "{expanding: {}}"),
            vec!["--jobs", "65535"],
            "--jobs",
        ),
        (
            "a 300-character name",
            experiment("", "{expanding: {}}").replace(
                "experiment: limits",
                &format!("experiment: {}", "a".repeat(300)),
            ),
            vec![],
            "at most 200",
        ),
    ];
    for (what, yaml, extra, says) in cases {
        std::fs::write(dir.join("exp.yaml"), &yaml).unwrap();
        for command in ["check", "run"] {
            let mut args = vec![command, "exp.yaml"];
            if command == "run" {
                args.extend(["--out", "res", "--quiet"]);
            }
            args.extend(extra.iter().copied());
            let (code, stderr, seconds, peak) = measured(&dir, &args);
            assert_eq!(code, Some(2), "{what} ({command}): {stderr}");
            assert!(
                stderr.contains(says),
                "{what} ({command}): expected '{says}' in {stderr}"
            );
            assert!(seconds < 1.0, "{what} ({command}) took {seconds:.2} s");
            assert!(
                peak < 200 << 20,
                "{what} ({command}) used {} MiB",
                peak >> 20
            );
        }
        let left: Vec<String> = std::fs::read_dir(&dir)
            .unwrap()
            .flatten()
            .map(|e| e.file_name().to_string_lossy().to_string())
            .filter(|n| n != "exp.yaml" && n != "data.csv")
            .collect();
        assert!(left.is_empty(), "{what} left {left:?}");
    }
    // More shards than a merge accepts: refused before anything is written.
    std::fs::write(dir.join("exp.yaml"), experiment("", "{expanding: {}}")).unwrap();
    let (code, stderr, _, _) = measured(
        &dir,
        &[
            "run", "exp.yaml", "--out", "res", "--quiet", "--shard", "1/200000",
        ],
    );
    assert_eq!(code, Some(2), "{stderr}");
    assert!(stderr.contains("at most 100000 shards"), "{stderr}");
    assert!(!dir.join("res").exists());
    // A pipe named as the data file is refused, not read (reading it would block).
    let fifo = dir.join("pipe.csv");
    let c = std::ffi::CString::new(fifo.to_string_lossy().as_bytes()).unwrap();
    // SAFETY: a valid NUL-terminated path.
    assert_eq!(unsafe { libc::mkfifo(c.as_ptr(), 0o600) }, 0);
    std::fs::write(
        dir.join("exp.yaml"),
        experiment("", "{expanding: {}}").replace("data.csv", "pipe.csv"),
    )
    .unwrap();
    let (code, stderr, seconds, _) = measured(&dir, &["check", "exp.yaml"]);
    assert_eq!(code, Some(2), "{stderr}");
    assert!(
        stderr.contains("not a regular file") && seconds < 1.0,
        "{stderr}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}
