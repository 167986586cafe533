//! Rendering the reports of a results folder from its stored tables: the
//! templates (built in, or a user's folder), the report files from the
//! tables and the manifest's deterministic part, and `outturn render`, which
//! re-renders a folder in place and updates the manifest's hashes.

use super::{report_data, Folder, TargetPart};
use crate::error::{Error, Result};
use crate::spec::ReportFormat;
use serde_json::Value;
use std::path::Path;

/// The two report templates: (file name, source), and the fuel a user's
/// templates may burn (the built-in ones are bounded by the data alone).
pub struct Templates {
    pub markdown: (String, String),
    pub html: (String, String),
    pub fuel: Option<u64>,
}

/// The work a user's template may do before it is stopped (minijinja's
/// fuel: one unit per instruction), far beyond what the built-in templates
/// need for a thousand targets, and reached in about a second by a
/// template that loops without bound.
pub const TEMPLATE_FUEL: u64 = 10_000_000;

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
        fuel: None,
    }
}

/// A user's templates: `report.md.j2` and `report.html.j2` from `dir`.
pub fn load_templates(dir: &Path) -> Result<Templates> {
    let read = |name: &str| -> Result<(String, String)> {
        let path = dir.join(name);
        if std::fs::metadata(&path).is_ok_and(|m| !m.is_file()) {
            return Err(Error::invalid(
                None,
                format!("{} is not a regular file", path.display()),
            ));
        }
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
        fuel: Some(TEMPLATE_FUEL),
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

/// Render one template with the report data.
/// Text for Markdown that no viewer takes for HTML: a `<` that could open
/// a tag, a comment or a processing instruction (`<script`, `</a`, `<!--`,
/// `<?`) and a `&` that could start an entity are written as entities.
/// A `<` before a space or a digit ("p < 0.05", "<0.001") stays as it is.
pub fn markdown_text(s: &str) -> std::borrow::Cow<'_, str> {
    let bytes = s.as_bytes();
    let risky = |i: usize| match bytes[i] {
        b'<' => bytes
            .get(i + 1)
            .is_some_and(|b| b.is_ascii_alphabetic() || matches!(b, b'/' | b'!' | b'?')),
        b'&' => bytes
            .get(i + 1)
            .is_some_and(|b| b.is_ascii_alphanumeric() || *b == b'#'),
        _ => false,
    };
    if !(0..bytes.len()).any(risky) {
        return std::borrow::Cow::Borrowed(s);
    }
    let mut out = String::with_capacity(s.len() + 8);
    for (i, c) in s.char_indices() {
        match c {
            '<' if risky(i) => out.push_str("&lt;"),
            '&' if risky(i) => out.push_str("&amp;"),
            _ => out.push(c),
        }
    }
    std::borrow::Cow::Owned(out)
}

fn render_one(
    name: &str,
    source: &str,
    html: bool,
    data: &minijinja::Value,
    fuel: Option<u64>,
) -> std::result::Result<String, String> {
    let mut env = minijinja::Environment::new();
    env.set_auto_escape_callback(move |_| {
        if html {
            minijinja::AutoEscape::Html
        } else {
            minijinja::AutoEscape::Custom("markdown")
        }
    });
    // Markdown: every string not marked safe goes through `markdown_text`,
    // so a user's notes, title or column names cannot carry HTML into it.
    env.set_formatter(|out, state, value| {
        if !matches!(
            state.auto_escape(),
            minijinja::AutoEscape::Custom("markdown")
        ) {
            return minijinja::escape_formatter(out, state, value);
        }
        if value.is_undefined() {
            return Ok(());
        }
        let text = value.to_string();
        let text = if value.is_safe() {
            std::borrow::Cow::Borrowed(text.as_str())
        } else {
            markdown_text(&text)
        };
        out.write_str(&text).map_err(|_| {
            minijinja::Error::new(
                minijinja::ErrorKind::WriteFailure,
                "cannot write the report",
            )
        })
    });
    env.set_fuel(fuel);
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
            render_one(name, source, html, &value, templates.fuel)?.into_bytes(),
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
