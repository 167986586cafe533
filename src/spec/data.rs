//! Reading the data file: a CSV with a header row. Cells stay text here; the
//! experiment decoder decides which columns matter and parses them, so every
//! message can name the file, the line as an editor shows it, and the column.

use crate::error::{Diagnostic, Location};
use std::path::{Path, PathBuf};

#[derive(Debug, Clone)]
pub struct RawRow {
    /// 1-based line in the file, as an editor shows it.
    pub line: usize,
    pub cells: Vec<String>,
}

#[derive(Debug, Clone)]
pub struct RawTable {
    pub path: PathBuf,
    pub headers: Vec<String>,
    pub rows: Vec<RawRow>,
}

impl RawTable {
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

/// Read a CSV file. Blank lines are skipped; a UTF-8 byte-order mark is ignored.
pub fn read_table(path: &Path, bytes: &[u8]) -> Result<RawTable, Diagnostic> {
    let at = |line: Option<usize>, msg: String| {
        Diagnostic::new(
            Some(Location {
                file: path.to_path_buf(),
                line,
                column: None,
            }),
            msg,
        )
    };
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    if bytes.iter().all(|b| b.is_ascii_whitespace()) {
        return Err(at(
            None,
            "the data file is empty; it needs a header row naming the columns".into(),
        ));
    }
    // Line numbers from byte offsets: the csv reader's own line count skips blank lines.
    let newlines: Vec<usize> = bytes
        .iter()
        .enumerate()
        .filter(|(_, b)| **b == b'\n')
        .map(|(i, _)| i)
        .collect();
    let line_of = |byte: u64| {
        // A record's recorded start can sit on blank lines the reader skipped.
        let mut at = byte as usize;
        while at < bytes.len() && (bytes[at] == b'\n' || bytes[at] == b'\r') {
            at += 1;
        }
        newlines.partition_point(|&i| i < at) + 1
    };
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .from_reader(bytes);
    let mut headers: Option<Vec<String>> = None;
    let mut rows = Vec::new();
    let mut record = csv::StringRecord::new();
    loop {
        match reader.read_record(&mut record) {
            Ok(false) => break,
            Ok(true) => {
                let line = record.position().map(|p| line_of(p.byte())).unwrap_or(0);
                let cells: Vec<String> = record.iter().map(|c| c.trim().to_string()).collect();
                if cells.iter().all(|c| c.is_empty()) {
                    continue;
                }
                match &headers {
                    None => {
                        if let Some(pos) = cells.iter().position(|c| c.is_empty()) {
                            return Err(at(
                                Some(line),
                                format!("the header row has an empty name in column {}", pos + 1),
                            ));
                        }
                        if cells.iter().all(|c| c.parse::<f64>().is_ok()) {
                            return Err(at(
                                Some(line),
                                "the first row holds only numbers; the data file needs a header row naming the columns"
                                    .into(),
                            ));
                        }
                        for (i, c) in cells.iter().enumerate() {
                            if cells[..i].contains(c) {
                                return Err(at(
                                    Some(line),
                                    format!("the header names column '{c}' twice"),
                                ));
                            }
                        }
                        headers = Some(cells);
                    }
                    Some(h) => {
                        if cells.len() > h.len() {
                            return Err(at(
                                Some(line),
                                format!(
                                    "this row has {} cells but the header names {} columns",
                                    cells.len(),
                                    h.len()
                                ),
                            ));
                        }
                        let mut cells = cells;
                        cells.resize(h.len(), String::new());
                        rows.push(RawRow { line, cells });
                    }
                }
            }
            Err(e) => {
                let line = e.position().map(|p| line_of(p.byte()));
                let msg = match e.kind() {
                    csv::ErrorKind::Utf8 { .. } => {
                        "the data file is not valid UTF-8 text".to_string()
                    }
                    _ => format!("the data file is not a readable CSV: {e}"),
                };
                return Err(at(line, msg));
            }
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
    let lower = c.to_ascii_lowercase();
    if lower.contains("nan") || lower.contains("inf") {
        return Err(format!("'{c}' is not a usable number (NaN and infinity are not allowed; leave the cell empty only where SPEC allows)"));
    }
    match c.parse::<f64>() {
        Ok(v) if v.is_finite() => Ok(Some(v)),
        Ok(_) => Err(format!("'{c}' overflows a 64-bit float")),
        Err(_) => Err(format!("'{c}' is not a number")),
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
    fn numbers() {
        assert_eq!(parse_number(" 1.5 "), Ok(Some(1.5)));
        assert_eq!(parse_number(""), Ok(None));
        assert!(parse_number("NaN").is_err());
        assert!(parse_number("inf").is_err());
        assert!(parse_number("1,5").is_err());
    }
}
