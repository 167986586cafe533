//! The reference in docs/ is the only one a user has: it must exist, its
//! links must resolve, and it must name every key, value, command, flag,
//! family, metric and test the program accepts. Each check reads the
//! program (its sources or its own output) and fails on a name the docs
//! leave out.

use std::collections::BTreeSet;
use std::path::{Path, PathBuf};
use std::process::Command;

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn read(rel: &str) -> String {
    std::fs::read_to_string(root().join(rel)).unwrap_or_else(|e| panic!("{rel}: {e}"))
}

fn pages() -> Vec<PathBuf> {
    let mut out = vec![
        root().join("README.md"),
        root().join("experiments/README.md"),
        root().join("templates/README.md"),
        root().join("DEVELOPERS.md"),
    ];
    for e in std::fs::read_dir(root().join("docs")).unwrap() {
        let p = e.unwrap().path();
        if p.extension().is_some_and(|x| x == "md") {
            out.push(p);
        }
    }
    out.sort();
    out
}

/// The anchor a Markdown heading gets: lower case, spaces to hyphens,
/// punctuation other than hyphens and underscores dropped.
fn slug(heading: &str) -> String {
    heading
        .trim()
        .to_lowercase()
        .chars()
        .filter_map(|c| match c {
            ' ' => Some('-'),
            c if c.is_alphanumeric() || c == '-' || c == '_' => Some(c),
            _ => None,
        })
        .collect()
}

fn anchors(text: &str) -> BTreeSet<String> {
    let mut fenced = false;
    let mut out = BTreeSet::new();
    for line in text.lines() {
        if line.trim_start().starts_with("```") {
            fenced = !fenced;
            continue;
        }
        if !fenced && line.starts_with('#') {
            out.insert(slug(line.trim_start_matches('#')));
        }
    }
    out
}

/// Every `](target)` in the text outside code fences.
fn links(text: &str) -> Vec<String> {
    let mut fenced = false;
    let mut out = Vec::new();
    for line in text.lines() {
        if line.trim_start().starts_with("```") {
            fenced = !fenced;
            continue;
        }
        if fenced {
            continue;
        }
        let mut rest = line;
        while let Some(i) = rest.find("](") {
            let after = &rest[i + 2..];
            let Some(end) = after.find(')') else { break };
            out.push(after[..end].to_string());
            rest = &after[end..];
        }
    }
    out
}

#[test]
fn every_link_in_the_docs_resolves_to_a_file_and_heading_of_the_repository() {
    let mut broken = Vec::new();
    for page in pages() {
        let text = std::fs::read_to_string(&page).unwrap();
        for link in links(&text) {
            if link.starts_with("http://") || link.starts_with("https://") {
                broken.push(format!("{}: {link} leaves the repository", page.display()));
                continue;
            }
            let (file, anchor) = match link.split_once('#') {
                Some((f, a)) => (f, Some(a)),
                None => (link.as_str(), None),
            };
            let target = if file.is_empty() {
                page.clone()
            } else {
                page.parent().unwrap().join(file)
            };
            let Ok(target) = target.canonicalize() else {
                broken.push(format!("{}: {link} does not exist", page.display()));
                continue;
            };
            if !target.starts_with(root().canonicalize().unwrap()) {
                broken.push(format!(
                    "{}: {link} is outside the repository",
                    page.display()
                ));
                continue;
            }
            if let Some(a) = anchor {
                let t = std::fs::read_to_string(&target).unwrap_or_default();
                if !anchors(&t).contains(a) {
                    broken.push(format!("{}: {link} names no heading", page.display()));
                }
            }
        }
    }
    assert!(broken.is_empty(), "{}", broken.join("\n"));
}

#[test]
fn every_page_an_error_message_cites_exists() {
    for page in outturn::error::pages::ALL {
        assert!(
            root().join(page).is_file(),
            "{page} is cited by errors but missing"
        );
    }
}

#[test]
fn nothing_a_user_reads_points_outside_the_repository() {
    // The contract the project is built to lives outside the repository;
    // a user who clones it has only docs/. Neither the pages nor any text
    // compiled into the program may send them there. (The benchmark's
    // peer script, also outside, is named in the README's speed section
    // as what the figures were measured against.)
    for page in pages() {
        if page.ends_with("DEVELOPERS.md") {
            continue;
        }
        let text = std::fs::read_to_string(&page).unwrap();
        assert!(
            !text.contains("../shared/SPEC"),
            "{} cites ../shared/SPEC",
            page.display()
        );
        assert!(!text.contains("SPEC"), "{} cites SPEC", page.display());
    }
    let binary = std::fs::read(env!("CARGO_BIN_EXE_outturn")).unwrap();
    for needle in [&b"SPEC \xc2\xa7"[..], b"SPEC.md", b"../shared"] {
        assert!(
            !binary.windows(needle.len()).any(|w| w == needle),
            "the program's text cites {}",
            String::from_utf8_lossy(needle)
        );
    }
}

/// The names a decoder accepts: every string literal of a `&[…]` list in
/// src/spec outside its unit tests (the keys of each mapping and the
/// values of each choice).
fn accepted_names() -> BTreeSet<String> {
    fn walk(dir: &Path, out: &mut Vec<PathBuf>) {
        for e in std::fs::read_dir(dir).unwrap() {
            let p = e.unwrap().path();
            if p.is_dir() {
                walk(&p, out);
            } else if p.extension().is_some_and(|x| x == "rs") {
                out.push(p);
            }
        }
    }
    let mut files = Vec::new();
    walk(&root().join("src/spec"), &mut files);
    let mut names = BTreeSet::new();
    for f in files {
        let text = std::fs::read_to_string(&f).unwrap();
        let code = text.split("#[cfg(test)]").next().unwrap();
        let mut rest = code;
        while let Some(i) = rest.find("&[") {
            let after = &rest[i + 2..];
            let end = after.find(']').unwrap_or(after.len());
            let list = &after[..end];
            for piece in list.split('"').skip(1).step_by(2) {
                if !piece.is_empty()
                    && piece
                        .chars()
                        .all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || c == '_')
                {
                    names.insert(piece.to_string());
                }
            }
            rest = &after[end..];
        }
    }
    names
}

#[test]
fn the_experiment_reference_names_every_key_and_value_the_decoder_accepts() {
    let names = accepted_names();
    assert!(
        names.len() > 40,
        "the scan found only {} names: {names:?}",
        names.len()
    );
    let docs =
        read("docs/experiment-file.md") + &read("docs/candidates.md") + &read("docs/arima.md");
    let missing: Vec<&String> = names
        .iter()
        .filter(|n| !docs.contains(&format!("`{n}")) && !docs.contains(&format!("{n}:")))
        .collect();
    assert!(
        missing.is_empty(),
        "not in docs/experiment-file.md: {missing:?}"
    );
}

fn outturn(args: &[&str]) -> String {
    let o = Command::new(env!("CARGO_BIN_EXE_outturn"))
        .args(args)
        .output()
        .unwrap();
    String::from_utf8(o.stdout).unwrap()
}

#[test]
fn the_commands_reference_names_every_command_and_flag() {
    let docs = read("docs/commands.md");
    let help = outturn(&["--help"]);
    let commands: Vec<&str> = help
        .lines()
        .skip_while(|l| !l.starts_with("Commands:"))
        .skip(1)
        .take_while(|l| l.starts_with("  "))
        .filter_map(|l| l.split_whitespace().next())
        .filter(|c| *c != "help")
        .collect();
    assert!(commands.len() >= 7, "{commands:?}");
    let mut missing = Vec::new();
    for c in &commands {
        if !docs.contains(&format!("outturn {c}")) {
            missing.push(c.to_string());
        }
        for line in outturn(&[c, "--help"]).lines() {
            for word in line.split_whitespace() {
                let flag =
                    word.trim_end_matches(|c: char| !(c.is_ascii_alphanumeric() || c == '-'));
                if flag.starts_with("--") && flag != "--help" && !docs.contains(flag) {
                    missing.push(format!("{c} {flag}"));
                }
            }
        }
    }
    assert!(missing.is_empty(), "not in docs/commands.md: {missing:?}");
}

#[test]
fn the_docs_describe_every_family_metric_and_test_that_kinds_lists() {
    let docs = read("docs/arithmetic.md") + &read("docs/experiment-file.md");
    let kinds = outturn(&["kinds"]);
    let names: Vec<&str> = kinds
        .lines()
        .filter(|l| l.starts_with("  ") && !l.trim_start().starts_with('('))
        .filter_map(|l| l.split_whitespace().next())
        .collect();
    assert!(names.len() >= 20, "{names:?}");
    let missing: Vec<&&str> = names
        .iter()
        .filter(|n| !docs.contains(&format!("`{n}`")))
        .collect();
    assert!(
        missing.is_empty(),
        "named by kinds, not in the docs: {missing:?}"
    );
}
