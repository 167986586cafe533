//! Reading the data file: a CSV with a header row. Cells stay text here; the
//! experiment decoder decides which columns matter and parses them, so every
//! message can name the file, the line as an editor shows it, and the column.

use crate::error::{Diagnostic, Location};
use std::path::{Path, PathBuf};

#[derive(Debug, Clone)]
pub struct RawRow {
    /// 1-based line in the file, as an editor shows it.
    pub line: usize,
    pub cells: Cells,
}

/// A row's cells, trimmed, in one buffer (a wide panel has hundreds of
/// thousands of cells; one allocation each made reading it slow).
#[derive(Debug, Clone, Default)]
pub struct Cells {
    text: String,
    ends: Vec<usize>,
}

impl Cells {
    fn push(&mut self, cell: &str) {
        self.text.push_str(cell);
        self.ends.push(self.text.len());
    }

    pub fn len(&self) -> usize {
        self.ends.len()
    }

    pub fn iter(&self) -> impl Iterator<Item = &str> {
        (0..self.len()).map(move |i| &self[i])
    }
}

impl std::ops::Index<usize> for Cells {
    type Output = str;
    fn index(&self, i: usize) -> &str {
        let start = if i == 0 { 0 } else { self.ends[i - 1] };
        &self.text[start..self.ends[i]]
    }
}

#[derive(Debug, Clone)]
pub struct RawTable {
    pub path: PathBuf,
    /// Line of the header row, as an editor shows it.
    pub header_line: usize,
    pub headers: Vec<String>,
    pub rows: Vec<RawRow>,
}

impl RawTable {
    /// The same file's header with no rows (a vintage's table starts so).
    pub fn clone_empty(&self) -> RawTable {
        RawTable {
            path: self.path.clone(),
            header_line: self.header_line,
            headers: self.headers.clone(),
            rows: Vec::new(),
        }
    }

    pub fn column(&self, name: &str) -> Option<usize> {
        self.headers.iter().position(|h| h == name)
    }

    pub fn location(&self, line: usize, column: Option<usize>) -> Option<Location> {
        Some(Location {
            file: self.path.clone(),
            line: Some(line),
            column: column.map(|c| c + 1),
        })
    }
}

/// A header row names every column once, and is not a row of numbers.
fn check_header(cells: &Cells) -> Result<(), String> {
    if let Some(pos) = cells.iter().position(|c| c.is_empty()) {
        return Err(format!(
            "the header row has an empty name in column {}",
            pos + 1
        ));
    }
    if cells.iter().all(|c| c.parse::<f64>().is_ok()) {
        return Err(
            "the first row holds only numbers; the data file needs a header row naming the columns"
                .into(),
        );
    }
    let mut seen = std::collections::HashSet::new();
    for c in cells.iter() {
        if !seen.insert(c) {
            return Err(format!("the header names column '{c}' twice"));
        }
    }
    Ok(())
}

/// A data row, padded with empty cells to the header's `width`; more cells
/// than the header names is an error.
fn data_row(
    path: &Path,
    line: usize,
    mut cells: Cells,
    width: usize,
) -> Result<RawRow, Diagnostic> {
    if cells.len() > width {
        return Err(Diagnostic::new(
            Some(Location {
                file: path.to_path_buf(),
                line: Some(line),
                column: Some(width + 1),
            }),
            format!(
                "this row has {} cells but the header names {width} columns; remove the extra cells or name their column in the header",
                cells.len(),
            ),
        ));
    }
    while cells.len() < width {
        cells.push("");
    }
    Ok(RawRow { line, cells })
}

/// Line numbers from byte offsets: the csv reader's own line count skips
/// blank lines.
struct LineIndex<'a> {
    bytes: &'a [u8],
    newlines: Vec<usize>,
}

impl<'a> LineIndex<'a> {
    fn new(bytes: &'a [u8]) -> Self {
        let newlines = bytes
            .iter()
            .enumerate()
            .filter(|(_, b)| **b == b'\n')
            .map(|(i, _)| i)
            .collect();
        LineIndex { bytes, newlines }
    }

    /// The 1-based line of a record that starts at `byte`.
    fn line_of(&self, byte: u64) -> usize {
        // A record's recorded start can sit on blank lines the reader skipped.
        let mut at = byte as usize;
        while at < self.bytes.len() && (self.bytes[at] == b'\n' || self.bytes[at] == b'\r') {
            at += 1;
        }
        self.newlines.partition_point(|&i| i < at) + 1
    }
}

/// A data row's cells each stay on one line: a quote left open would
/// otherwise swallow the rows below it.
fn single_line_cells(path: &Path, line: usize, cells: &Cells) -> Result<(), Diagnostic> {
    match cells.iter().position(|c| c.contains(['\n', '\r'])) {
        None => Ok(()),
        Some(pos) => Err(Diagnostic::new(
            Some(Location {
                file: path.to_path_buf(),
                line: Some(line),
                column: Some(pos + 1),
            }),
            "a quoted cell starting here runs over several lines: a quote (\") is opened and not closed on its line; close it or remove it",
        )),
    }
}

/// A problem at a line of the data file (or the whole file).
fn at_line(path: &Path, line: Option<usize>, msg: String) -> Diagnostic {
    Diagnostic::new(
        Some(Location {
            file: path.to_path_buf(),
            line,
            column: None,
        }),
        msg,
    )
}

/// What a CSV reader error means for the user.
fn csv_problem(e: &csv::Error) -> String {
    match e.kind() {
        csv::ErrorKind::Utf8 { .. } => "the data file is not valid UTF-8 text".to_string(),
        _ => format!("the data file is not a readable CSV: {e}"),
    }
}

/// Read a CSV file. Blank lines are skipped; a UTF-8 byte-order mark is ignored.
pub fn read_table(path: &Path, bytes: &[u8]) -> Result<RawTable, Diagnostic> {
    let at = |line: Option<usize>, msg: String| at_line(path, line, msg);
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    if bytes.iter().all(|b| b.is_ascii_whitespace()) {
        return Err(at(
            None,
            "the data file is empty; it needs a header row naming the columns".into(),
        ));
    }
    let lines = LineIndex::new(bytes);
    let line_of = |byte: u64| lines.line_of(byte);
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .from_reader(bytes);
    let mut headers: Option<Vec<String>> = None;
    let mut header_line = 1;
    let mut rows = Vec::new();
    let mut record = csv::StringRecord::new();
    loop {
        match reader.read_record(&mut record) {
            Ok(false) => break,
            Ok(true) => {
                let line = record.position().map(|p| line_of(p.byte())).unwrap_or(0);
                if record.iter().all(|c| c.trim().is_empty()) {
                    continue;
                }
                let mut cells = Cells::default();
                for c in record.iter() {
                    cells.push(c.trim());
                }
                single_line_cells(path, line, &cells)?;
                match &headers {
                    None => {
                        check_header(&cells).map_err(|m| at(Some(line), m))?;
                        header_line = line;
                        headers = Some(cells.iter().map(String::from).collect());
                    }
                    Some(h) => rows.push(data_row(path, line, cells, h.len())?),
                }
            }
            Err(e) => return Err(at(e.position().map(|p| line_of(p.byte())), csv_problem(&e))),
        }
    }
    let Some(headers) = headers else {
        return Err(at(
            None,
            "the data file is empty; it needs a header row naming the columns".into(),
        ));
    };
    if rows.is_empty() {
        return Err(at(
            None,
            "the data file has a header but no data rows".into(),
        ));
    }
    Ok(RawTable {
        path: path.to_path_buf(),
        header_line,
        headers,
        rows,
    })
}

/// Parse a numeric cell. Empty cells give `Ok(None)`; NaN and infinity
/// literals are refused, since they are never a value a forecast can use.
pub fn parse_number(cell: &str) -> Result<Option<f64>, String> {
    let c = cell.trim();
    if c.is_empty() {
        return Ok(None);
    }
    // The common case first; the messages below are built only for a
    // cell that is refused.
    if let Ok(v) = c.parse::<f64>() {
        if v.is_finite() {
            return Ok(Some(v));
        }
    }
    let shown = crate::spec::decode::clip(c);
    let lower = c.to_ascii_lowercase();
    let bare = lower.trim_start_matches(['+', '-']);
    if bare == "nan" || bare.starts_with("inf") || bare == "na" || bare == "n/a" {
        return Err(format!("'{shown}' is not a usable number: NaN, infinity and NA are not allowed; give the value, or leave the cell empty only where missing values are allowed (a target's future rows, a predictor's ragged edge)"));
    }
    match c.parse::<f64>() {
        Ok(v) if v.is_finite() => Ok(Some(v)),
        Ok(_) => Err(format!("'{shown}' is too large for a 64-bit number")),
        Err(_) if c.contains(',') && c.replace(',', ".").parse::<f64>().is_ok() => Err(format!(
            "'{shown}' is not a number: write the decimal point as '.' (a ',' separates cells)"
        )),
        Err(_) => Err(format!(
            "'{shown}' is not a number; write plain numbers such as -12.5 or 3e4, without units or thousands separators"
        )),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lines_count_as_an_editor_does() {
        let t = read_table(Path::new("d.csv"), b"period,y\n\n2000,1\n2001,2\n").unwrap();
        assert_eq!(t.rows[0].line, 3);
        assert_eq!(t.rows[1].line, 4);
    }

    #[test]
    fn refuses_headerless_and_empty() {
        assert!(read_table(Path::new("d.csv"), b"").is_err());
        assert!(read_table(Path::new("d.csv"), b"1,2\n3,4\n").is_err());
        assert!(read_table(Path::new("d.csv"), b"a,b\n").is_err());
    }

    #[test]
    fn an_unclosed_quote_is_named() {
        let e =
            read_table(Path::new("d.csv"), b"period,y\n2000,1\n\"2001,2\n2002,3\n").unwrap_err();
        let loc = e.location.unwrap();
        assert_eq!((loc.line, loc.column), (Some(3), Some(1)));
        assert!(e.message.contains("not closed"), "{}", e.message);
    }

    #[test]
    fn numbers() {
        assert_eq!(parse_number(" 1.5 "), Ok(Some(1.5)));
        assert_eq!(parse_number(""), Ok(None));
        assert!(parse_number("NaN").is_err());
        assert!(parse_number("inf").is_err());
        assert!(parse_number("1,5").is_err());
    }
}
