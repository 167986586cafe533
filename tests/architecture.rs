//! The stages of `src/` import only backwards (DEVELOPERS.md, "Architecture"):
//! numerics → spec → plan → models → backtest → score → results → report → run,
//! with `error`, `digest` and `progress` shared by all. This test reads every
//! `crate::<module>` path in the source (imports and qualified paths alike)
//! and fails on one that names a later stage, so a back-arrow cannot creep in.

use std::path::{Path, PathBuf};

/// Stages in flow order; a file may use its own stage and earlier ones.
const STAGES: [&str; 9] = [
    "numerics", "spec", "plan", "models", "backtest", "score", "results", "report", "run",
];
/// Shared by every stage.
const SHARED: [&str; 3] = ["error", "digest", "progress"];

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    for entry in std::fs::read_dir(dir).expect("read src") {
        let path = entry.expect("entry").path();
        if path.is_dir() {
            rust_files(&path, out);
        } else if path.extension().is_some_and(|e| e == "rs") {
            out.push(path);
        }
    }
}

/// The stage a file belongs to: its folder under src/, or its file name for
/// top-level files (None for lib.rs and main.rs, which wire the stages).
fn stage_of(src: &Path, file: &Path) -> Option<String> {
    let rel = file.strip_prefix(src).ok()?;
    let first = rel
        .components()
        .next()?
        .as_os_str()
        .to_string_lossy()
        .to_string();
    let name = first.trim_end_matches(".rs").to_string();
    (name != "lib" && name != "main").then_some(name)
}

/// Every module named right after `crate::` in a line of code.
fn crate_paths(line: &str) -> Vec<String> {
    let code = line.split("//").next().unwrap_or("");
    let mut out = Vec::new();
    let mut rest = code;
    while let Some(i) = rest.find("crate::") {
        let after = &rest[i + "crate::".len()..];
        let name: String = after
            .chars()
            .take_while(|c| c.is_ascii_alphanumeric() || *c == '_')
            .collect();
        if !name.is_empty() {
            out.push(name);
        }
        // `use crate::{a, b}`: the names inside the braces.
        if let Some(braced) = after.strip_prefix('{') {
            let inner = braced.split('}').next().unwrap_or("");
            for part in inner.split(',') {
                let name: String = part
                    .trim()
                    .chars()
                    .take_while(|c| c.is_ascii_alphanumeric() || *c == '_')
                    .collect();
                if !name.is_empty() {
                    out.push(name);
                }
            }
        }
        rest = after;
    }
    out
}

#[test]
fn stages_import_only_backwards() {
    let src = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut files = Vec::new();
    rust_files(&src, &mut files);
    files.sort();
    let rank = |name: &str| STAGES.iter().position(|s| *s == name);
    let mut problems = Vec::new();
    for file in &files {
        let Some(stage) = stage_of(&src, file) else {
            continue;
        };
        let own = rank(&stage);
        assert!(
            own.is_some() || SHARED.contains(&stage.as_str()),
            "{} is in no stage: add its folder to STAGES or SHARED",
            file.display()
        );
        let text = std::fs::read_to_string(file).expect("read");
        for (n, line) in text.lines().enumerate() {
            for used in crate_paths(line) {
                if SHARED.contains(&used.as_str()) {
                    continue;
                }
                let Some(theirs) = rank(&used) else {
                    problems.push(format!(
                        "{}:{}: crate::{used} is no stage",
                        file.display(),
                        n + 1
                    ));
                    continue;
                };
                match own {
                    Some(own) if theirs <= own => {}
                    Some(_) => problems.push(format!(
                        "{}:{}: the {stage} stage uses the later stage {used}",
                        file.display(),
                        n + 1
                    )),
                    None => problems.push(format!(
                        "{}:{}: shared module {stage} uses the stage {used}",
                        file.display(),
                        n + 1
                    )),
                }
            }
        }
    }
    assert!(problems.is_empty(), "back-arrows:\n{}", problems.join("\n"));
}

#[test]
fn the_reader_of_the_test_sees_braced_and_qualified_paths() {
    // The check above is only as good as this reader (property by construction).
    assert_eq!(
        crate_paths("use crate::{plan, score::x};"),
        ["plan", "score"]
    );
    assert_eq!(
        crate_paths("let x = crate::report::show(1); // crate::run"),
        ["report"]
    );
    assert!(crate_paths("// use crate::run;").is_empty());
}
