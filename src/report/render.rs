//! Rendering the reports of a results folder from its stored tables: the
//! templates (built in, or a user's folder), the report files from the
//! tables and the manifest's deterministic part, and `outturn render`, which
//! re-renders a folder in place and updates the manifest's hashes.

use super::{report_data, Folder, TargetPart};
use crate::error::{Error, Result};
use crate::spec::ReportFormat;
use serde_json::Value;
use std::path::Path;

/// The two report templates: (file name, source).
pub struct Templates {
    pub markdown: (String, String),
    pub html: (String, String),
}

pub const MARKDOWN_TEMPLATE: &str = "report.md.j2";
pub const HTML_TEMPLATE: &str = "report.html.j2";

/// The built-in templates, embedded at compile time from `templates/`.
pub fn default_templates() -> Templates {
    Templates {
        markdown: (
            MARKDOWN_TEMPLATE.into(),
            include_str!("../../templates/report.md.j2").into(),
        ),
        html: (
            HTML_TEMPLATE.into(),
            include_str!("../../templates/report.html.j2").into(),
        ),
    }
}

/// A user's templates: `report.md.j2` and `report.html.j2` from `dir`.
pub fn load_templates(dir: &Path) -> Result<Templates> {
    let read = |name: &str| -> Result<(String, String)> {
        let path = dir.join(name);
        match std::fs::read(&path) {
            Ok(bytes) => String::from_utf8(bytes)
                .map(|text| (name.to_string(), text))
                .map_err(|_| {
                    Error::invalid(None, format!("{}: the template is not UTF-8 text", path.display()))
                }),
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => Err(Error::invalid(
                None,
                format!(
                    "{} is missing: a template folder holds {MARKDOWN_TEMPLATE} and {HTML_TEMPLATE} (copy the built-in ones from the outturn source's templates/ folder to start)",
                    path.display()
                ),
            )),
            Err(e) => Err(Error::io(format!("cannot read {}", path.display()), e)),
        }
    };
    Ok(Templates {
        markdown: read(MARKDOWN_TEMPLATE)?,
        html: read(HTML_TEMPLATE)?,
    })
}

/// The templates a run with these formats uses, in output order
/// (Markdown, then HTML), as the manifest records them.
pub fn used_templates(templates: &Templates, formats: &[ReportFormat]) -> Vec<(String, String)> {
    let mut out = Vec::new();
    if formats.contains(&ReportFormat::Markdown) {
        out.push(templates.markdown.clone());
    }
    if formats.contains(&ReportFormat::Html) {
        out.push(templates.html.clone());
    }
    out
}

/// The manifest without its `outputs` and `run` keys: what a report may show.
pub fn manifest_core(manifest: &Value) -> Value {
    let mut core = manifest.clone();
    if let Some(map) = core.as_object_mut() {
        map.remove("run");
        // The tables' hashes stay (the report lists them); the reports' own go.
        if let Some(outputs) = map.get_mut("outputs").and_then(Value::as_array_mut) {
            outputs.retain(|o| {
                let name = o["file"].as_str().unwrap_or("");
                !name.starts_with("report.") && name != "manifest.json"
            });
        }
    }
    core
}

/// Render one template with the report data.
fn render_one(
    name: &str,
    source: &str,
    html: bool,
    data: &minijinja::Value,
) -> std::result::Result<String, String> {
    let mut env = minijinja::Environment::new();
    env.set_auto_escape_callback(move |_| {
        if html {
            minijinja::AutoEscape::Html
        } else {
            minijinja::AutoEscape::None
        }
    });
    env.set_keep_trailing_newline(true);
    env.set_trim_blocks(true);
    env.set_lstrip_blocks(true);
    env.add_template(name, source)
        .map_err(|e| format!("template {name}: {e}"))?;
    let tmpl = env
        .get_template(name)
        .map_err(|e| format!("template {name}: {e}"))?;
    tmpl.render(data)
        .map_err(|e| format!("template {name}: {e}"))
}

/// The report files of a folder as the report sees it, from the
/// manifest's deterministic part (no `outputs` of reports, no `run`):
/// ("report.md", bytes) and/or ("report.html", bytes), in that order. The
/// targets' parts of the report are passed when they are built already.
pub fn reports_of(
    folder: Folder,
    parts: Option<Vec<TargetPart>>,
    manifest: &Value,
    formats: &[ReportFormat],
    templates: &Templates,
) -> std::result::Result<Vec<(String, Vec<u8>)>, String> {
    let value = report_data(
        &folder,
        manifest,
        formats.contains(&ReportFormat::Html),
        parts,
    );
    // The formats render side by side.
    let render = |format: ReportFormat| -> std::result::Result<Option<(String, Vec<u8>)>, String> {
        if !formats.contains(&format) {
            return Ok(None);
        }
        let (file, (name, source), html) = match format {
            ReportFormat::Markdown => ("report.md", &templates.markdown, false),
            ReportFormat::Html => ("report.html", &templates.html, true),
        };
        Ok(Some((
            file.to_string(),
            render_one(name, source, html, &value)?.into_bytes(),
        )))
    };
    let (markdown, html) = if formats.len() > 1 {
        std::thread::scope(|scope| {
            // Should no thread start, the HTML renders after the Markdown.
            let html =
                std::thread::Builder::new().spawn_scoped(scope, || render(ReportFormat::Html));
            let markdown = render(ReportFormat::Markdown);
            let html = match html {
                Ok(h) => h.join().unwrap_or_else(|p| std::panic::resume_unwind(p)),
                Err(_) => render(ReportFormat::Html),
            };
            (markdown, html)
        })
    } else {
        (render(ReportFormat::Markdown), render(ReportFormat::Html))
    };
    let out: Vec<(String, Vec<u8>)> = [markdown?, html?].into_iter().flatten().collect();
    // Freeing the large trees takes a few milliseconds the caller need not wait for.
    // (Should no thread start, they are freed here.)
    let _ = std::thread::Builder::new().spawn(move || drop((folder, value)));
    Ok(out)
}
