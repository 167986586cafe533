//! results: everything a results folder holds. Each output table is a
//! module with its file name, its columns, its writer and its reader of
//! typed rows, used alike by `run`, `render`, `verify` and `merge`
//! (`forecasts`, `scores`, `tests`, `outlook`, `parameters`, `stability`,
//! `diagnostics`, `series`); `text` is the number text and the CSV reader they share,
//! `grid` the ids the tables name and `rows` all of a folder's rows read
//! together. The manifest is a typed value; `folder` writes a results
//! folder whole or not at all; `shard` is a shard folder's files.

pub(crate) mod cell_log;
pub(crate) mod diagnostics;
pub(crate) mod folder;
pub(crate) mod forecasts;
pub(crate) mod grid;
pub(crate) mod manifest;
pub(crate) mod outlook;
pub(crate) mod parameters;
pub(crate) mod rows;
pub(crate) mod scores;
pub(crate) mod series;
pub(crate) mod shard;
pub(crate) mod stability;
pub(crate) mod summary;
pub(crate) mod tests;
pub(crate) mod text;

pub use grid::Grid;
pub use rows::{Rows, Tables};
