//! report: the HTML and Markdown reports of a results folder. They are
//! built from the folder's stored tables alone, never from in-memory state,
//! so `run`, `merge` and `render` write the same bytes: `results` reads the
//! tables into typed rows, [`view`] holds them with the grid and the
//! checked declaration's settings and indexes them, one module per section
//! turns the view into that section's part of the report-data value
//! ([`summary`] across targets, [`verdict`], [`rankings`], [`overfitting`], [`parameters`], [`significance`]
//! with [`calibration`],
//! [`over_time`], [`outlook`], [`data`], [`record`]), [`parts`] assembles
//! the value target by target, and the minijinja templates in `templates/`
//! lay it out ([`render`]). Charts are inline SVG built in [`charts`];
//! numbers for people are formatted in [`format`].

mod calibration;
pub(crate) mod charts;
mod claims;
mod data;
mod format;
mod outlook;
mod over_time;
mod overfitting;
mod parameters;
mod parts;
mod rankings;
mod record;
pub(crate) mod render;
pub(crate) mod selection;
mod significance;
mod summary;
mod verdict;
mod view;

pub use parts::{report_data, PartContext, TargetPart};
pub use selection::{Key, Shown};
pub use view::Folder;

use serde_json::{json, Value};

pub const CAUTION: &str = "Backtest accuracy describes how these models would have done on past data. It does not promise the same accuracy in the future: relationships shift, data are revised, and the best model of the past can fail next period. Treat the rankings as evidence, not as a guarantee.";

/// The significance level of the report's plain-language readings of
/// p-values (the tables show the p-values themselves).
pub const LEVEL: f64 = 0.05;
/// Targets shown with every chart (those of the detailed targets with the
/// largest gain, see [`selection`]); the others get tables only.
pub const CHART_TARGETS: usize = 8;

/// A chart as the templates take it: the inline SVG, its caption, and the
/// numbers behind it as a table.
fn chart_value(
    svg: String,
    caption: String,
    columns: Vec<String>,
    rows: Vec<Vec<String>>,
) -> Value {
    json!({"svg": svg, "caption": caption, "columns": columns, "rows": rows})
}
