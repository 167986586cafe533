//! The text of the tables, both ways. Writing: numbers as the shortest text
//! that reads back to the same f64, undefined values empty (SPEC §5), and
//! fields quoted the way the csv crate quotes them, so rows written by hand
//! match rows written through it. Reading: [`Reader`] walks a stored table
//! row by row and every problem it meets (an edited, truncated or ragged
//! file) is a [`ReadError`] naming the file and the line, never a panic.

use std::collections::HashMap;
use std::io::Read;

/// Shortest round-trip representation of a float (Ryū: the fewest digits
/// that parse back to the same f64), without a trailing `.0`; exponent form
/// for magnitudes below 1e-5 or from 1e16. Undefined values are empty.
pub fn num(v: f64) -> String {
    let mut out = Vec::new();
    push_num(&mut out, v);
    String::from_utf8(out).unwrap_or_default()
}

/// [`num`] appended to a byte buffer without allocating.
pub fn push_num(out: &mut Vec<u8>, v: f64) {
    if !v.is_finite() {
        return;
    }
    let mut buf = ryu::Buffer::new();
    let s = buf.format_finite(v).as_bytes();
    out.extend_from_slice(s.strip_suffix(b".0").unwrap_or(s));
}

/// A text cell that a spreadsheet would take for a formula (it starts with
/// `=`, `+`, `-`, `@`, a tab or a carriage return and is not a number) is
/// written with a leading `'`, as is one that starts with `'` itself, so
/// [`Row::text`] can take exactly one off again: a target named
/// `=HYPERLINK(…)` stays text in every table, and numbers stay numbers.
pub fn neutral(s: &str) -> std::borrow::Cow<'_, str> {
    let risky = match s.as_bytes().first() {
        Some(b'\'') => true,
        Some(b'=' | b'+' | b'-' | b'@' | b'\t' | b'\r') => s.parse::<f64>().is_err(),
        _ => false,
    };
    if risky {
        std::borrow::Cow::Owned(format!("'{s}"))
    } else {
        std::borrow::Cow::Borrowed(s)
    }
}

/// The text a cell written through [`neutral`] held.
fn unneutral(s: &str) -> &str {
    match s.as_bytes() {
        [b'\'', b'\'' | b'=' | b'+' | b'-' | b'@' | b'\t' | b'\r', ..] => &s[1..],
        _ => s,
    }
}

/// Write a row of a small table through the csv writer, every cell through [`neutral`].
pub fn write_row<I, T>(w: &mut csv::Writer<Vec<u8>>, cells: I)
where
    I: IntoIterator<Item = T>,
    T: AsRef<str>,
{
    let cells: Vec<String> = cells
        .into_iter()
        .map(|c| neutral(c.as_ref()).into_owned())
        .collect();
    let _ = w.write_record(&cells);
}

/// A text field, quoted when it holds a comma, quote or newline (the csv
/// crate's "necessary" quoting, so hand-written rows match its output),
/// and written through [`neutral`].
pub fn push_field(out: &mut Vec<u8>, s: &str) {
    let s = &*neutral(s);
    if s.bytes().any(|b| b == b',' || b == b'"' || b == b'\n') {
        out.push(b'"');
        for b in s.bytes() {
            if b == b'"' {
                out.push(b'"');
            }
            out.push(b);
        }
        out.push(b'"');
    } else {
        out.extend_from_slice(s.as_bytes());
    }
}

/// A count in decimal digits, appended without allocating a string.
pub fn push_usize(out: &mut Vec<u8>, mut v: usize) {
    let start = out.len();
    loop {
        out.push(b'0' + (v % 10) as u8);
        v /= 10;
        if v == 0 {
            break;
        }
    }
    out[start..].reverse();
}

/// [`num`] of a value that may be undefined.
pub fn opt(v: Option<f64>) -> String {
    v.map(num).unwrap_or_default()
}

/// A csv writer into memory with `\n` line ends, for the small tables.
pub fn writer() -> csv::Writer<Vec<u8>> {
    csv::WriterBuilder::new()
        .terminator(csv::Terminator::Any(b'\n'))
        .from_writer(Vec::new())
}

/// The bytes a [`writer`] holds.
pub fn finish(w: csv::Writer<Vec<u8>>) -> Vec<u8> {
    w.into_inner().unwrap_or_default()
}

// ---------------------------------------------------------------------------
// Reading.

/// A problem reading a stored table.
#[derive(Debug)]
pub enum ReadError {
    /// The table is not as outturn writes it (edited, truncated, another
    /// file): `line` is the line of the file the problem is on, when known.
    Invalid {
        file: &'static str,
        line: Option<u64>,
        message: String,
    },
    /// Reading the file failed.
    Io {
        file: &'static str,
        source: std::io::Error,
    },
}

impl std::fmt::Display for ReadError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            ReadError::Invalid {
                file,
                line: Some(line),
                message,
            } => write!(f, "{file}, line {line}: {message}"),
            ReadError::Invalid {
                file,
                line: None,
                message,
            } => write!(f, "{file}: {message}"),
            ReadError::Io { file, source } => write!(f, "cannot read {file}: {source}"),
        }
    }
}

impl ReadError {
    pub fn invalid(file: &'static str, line: Option<u64>, message: impl Into<String>) -> Self {
        ReadError::Invalid {
            file,
            line,
            message: message.into(),
        }
    }

    /// The command-line error: an unusable table is invalid input (exit 2),
    /// a failed read a failed run (exit 1). `dir` is the folder read.
    pub fn into_error(self, dir: &std::path::Path) -> crate::error::Error {
        match self {
            ReadError::Invalid {
                file,
                line,
                message,
            } => crate::error::Error::invalid(
                Some(crate::error::Location {
                    file: dir.join(file),
                    line: line.and_then(|l| usize::try_from(l).ok()),
                    column: None,
                }),
                message,
            ),
            ReadError::Io { file, source } => {
                crate::error::Error::io(format!("cannot read {}", dir.join(file).display()), source)
            }
        }
    }
}

fn csv_error(file: &'static str, e: csv::Error) -> ReadError {
    let line = e.position().map(csv::Position::line);
    let text = e.to_string();
    match e.into_kind() {
        csv::ErrorKind::Io(source) => ReadError::Io { file, source },
        csv::ErrorKind::UnequalLengths {
            expected_len, len, ..
        } => ReadError::invalid(
            file,
            line,
            format!("the row has {len} fields where the header has {expected_len}"),
        ),
        csv::ErrorKind::Utf8 { .. } => ReadError::invalid(file, line, "the row is not UTF-8 text"),
        _ => ReadError::invalid(file, line, text),
    }
}

/// A source that remembers its last byte: every table outturn writes ends
/// with a line end, so a file that does not was cut short.
struct Tail<R> {
    inner: R,
    last: Option<u8>,
}

impl<R: Read> Read for Tail<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.inner.read(buf)?;
        if n > 0 {
            self.last = Some(buf[n - 1]);
        }
        Ok(n)
    }
}

/// A stored table read row by row against its header. Rows must have as
/// many fields as the header; the file must end with a line end.
pub struct Reader<R> {
    file: &'static str,
    csv: csv::Reader<Tail<R>>,
    header: Vec<String>,
    record: csv::StringRecord,
}

impl<R: Read> Reader<R> {
    /// Read the header of `file` from `source`.
    pub fn new(file: &'static str, source: R) -> Result<Reader<R>, ReadError> {
        let mut csv = csv::ReaderBuilder::new()
            .has_headers(true)
            .flexible(false)
            .from_reader(Tail {
                inner: source,
                last: None,
            });
        let header: Vec<String> = csv
            .headers()
            .map_err(|e| csv_error(file, e))?
            .iter()
            .map(String::from)
            .collect();
        if header.is_empty() {
            return Err(ReadError::invalid(
                file,
                None,
                "the file is empty (no header row)",
            ));
        }
        Ok(Reader {
            file,
            csv,
            header,
            record: csv::StringRecord::new(),
        })
    }

    pub fn header(&self) -> &[String] {
        &self.header
    }

    /// The position of a column, if the table has it.
    pub fn optional(&self, name: &str) -> Option<usize> {
        self.header.iter().position(|h| h == name)
    }

    /// The position of a column the table must have.
    pub fn column(&self, name: &str) -> Result<usize, ReadError> {
        self.optional(name).ok_or_else(|| {
            ReadError::invalid(self.file, Some(1), format!("there is no column '{name}'"))
        })
    }

    /// The positions of columns the table must have, in the order given.
    pub fn columns<const N: usize>(&self, names: [&str; N]) -> Result<[usize; N], ReadError> {
        let mut out = [0; N];
        for (slot, name) in out.iter_mut().zip(names) {
            *slot = self.column(name)?;
        }
        Ok(out)
    }

    /// The next row, or None after the last one.
    pub fn next_row(&mut self) -> Result<Option<Row<'_>>, ReadError> {
        let more = self
            .csv
            .read_record(&mut self.record)
            .map_err(|e| csv_error(self.file, e))?;
        if !more {
            if self.csv.get_ref().last.is_some_and(|b| b != b'\n') {
                return Err(ReadError::invalid(
                    self.file,
                    Some(self.csv.position().line()),
                    "the last row does not end with a line end: the file looks cut short",
                ));
            }
            return Ok(None);
        }
        Ok(Some(Row {
            file: self.file,
            line: self.record.position().map_or(0, csv::Position::line),
            header: &self.header,
            record: &self.record,
        }))
    }
}

/// One row of a stored table, with the line it starts on.
pub struct Row<'a> {
    file: &'static str,
    line: u64,
    header: &'a [String],
    record: &'a csv::StringRecord,
}

impl<'a> Row<'a> {
    /// A problem with this row.
    pub fn invalid(&self, message: impl Into<String>) -> ReadError {
        ReadError::invalid(self.file, Some(self.line), message)
    }

    fn name(&self, col: usize) -> &str {
        self.header.get(col).map_or("", String::as_str)
    }

    /// The text of a field (as it was before [`neutral`] wrote it).
    pub fn text(&self, col: usize) -> &'a str {
        unneutral(self.record.get(col).unwrap_or(""))
    }

    /// A number, or None when the field is empty (an undefined value).
    pub fn number(&self, col: usize) -> Result<Option<f64>, ReadError> {
        let text = self.text(col);
        if text.is_empty() {
            return Ok(None);
        }
        match text.parse::<f64>() {
            Ok(v) if v.is_finite() => Ok(Some(v)),
            _ => Err(self.invalid(format!("{} is '{text}', not a number", self.name(col)))),
        }
    }

    /// A whole number that must be there.
    pub fn count(&self, col: usize) -> Result<usize, ReadError> {
        let text = self.text(col);
        text.parse::<usize>().map_err(|_| {
            self.invalid(format!(
                "{} is '{text}', not a whole number",
                self.name(col)
            ))
        })
    }

    /// A whole number, or None when the field is empty.
    pub fn optional_count(&self, col: usize) -> Result<Option<usize>, ReadError> {
        if self.text(col).is_empty() {
            return Ok(None);
        }
        self.count(col).map(Some)
    }

    /// The index of a field's id in `ids` (a target, candidate or scheme of
    /// the experiment).
    pub fn id(&self, col: usize, ids: &Ids) -> Result<usize, ReadError> {
        let text = self.text(col);
        ids.of(text).ok_or_else(|| {
            self.invalid(format!(
                "{} '{text}' is not a {} of this experiment",
                self.name(col),
                ids.kind
            ))
        })
    }

    /// An id that may be empty (None).
    pub fn optional_id(&self, col: usize, ids: &Ids) -> Result<Option<usize>, ReadError> {
        if self.text(col).is_empty() {
            return Ok(None);
        }
        self.id(col, ids).map(Some)
    }

    /// A horizon of the experiment.
    /// A horizon of the outlook: 1..max(horizons), listed or not.
    pub fn outlook_horizon(&self, col: usize, horizons: &[usize]) -> Result<usize, ReadError> {
        let h = self.count(col)?;
        let max = horizons.iter().copied().max().unwrap_or(0);
        if (1..=max).contains(&h) {
            Ok(h)
        } else {
            Err(self.invalid(format!(
                "{} {h} is not a horizon of this experiment's outlook (1 to {max})",
                self.name(col)
            )))
        }
    }

    pub fn horizon(&self, col: usize, horizons: &[usize]) -> Result<usize, ReadError> {
        let h = self.count(col)?;
        if horizons.contains(&h) {
            Ok(h)
        } else {
            Err(self.invalid(format!(
                "{} {h} is not a horizon of this experiment",
                self.name(col)
            )))
        }
    }
}

/// Ids in experiment order, looked up by name.
pub struct Ids<'a> {
    kind: &'static str,
    index: HashMap<&'a str, usize>,
}

impl<'a> Ids<'a> {
    /// `kind` names what the ids are ("target"), for messages.
    pub fn new(kind: &'static str, list: &'a [String]) -> Ids<'a> {
        Ids {
            kind,
            index: list
                .iter()
                .enumerate()
                .map(|(i, s)| (s.as_str(), i))
                .collect(),
        }
    }

    pub fn of(&self, name: &str) -> Option<usize> {
        self.index.get(name).copied()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_round_trip() {
        // Property by construction: the text parses back to the same f64.
        for v in [
            0.1,
            1.0 / 3.0,
            -2.5e-9,
            1e300,
            123456789.125,
            0.0,
            -0.0,
            5e-324,
        ] {
            let s = num(v);
            assert_eq!(s.parse::<f64>().unwrap().to_bits(), v.to_bits(), "{s}");
        }
        assert_eq!(num(1.0), "1");
        assert_eq!(num(f64::NAN), "");
    }

    #[test]
    fn counts_and_fields_are_written_as_the_csv_crate_writes_them() {
        // Decimal digits of a count (by definition) and the csv crate's
        // "necessary" quoting (a field with a comma, quote or newline).
        for (v, text) in [(0, "0"), (7, "7"), (10, "10"), (40213, "40213")] {
            let mut out = Vec::new();
            push_usize(&mut out, v);
            assert_eq!(out, text.as_bytes());
        }
        let mut w = writer();
        w.write_record(["plain", "a,b", "say \"hi\"", "two\nlines"])
            .unwrap();
        let by_crate = finish(w);
        let mut by_hand = Vec::new();
        for (i, s) in ["plain", "a,b", "say \"hi\"", "two\nlines"]
            .iter()
            .enumerate()
        {
            if i > 0 {
                by_hand.push(b',');
            }
            push_field(&mut by_hand, s);
        }
        by_hand.push(b'\n');
        assert_eq!(by_hand, by_crate);
    }

    /// Every row of a table through the reader: its texts, or the error.
    fn rows(bytes: &[u8]) -> Result<Vec<Vec<String>>, String> {
        let mut r = Reader::new("t.csv", bytes).map_err(|e| e.to_string())?;
        let mut out = Vec::new();
        while let Some(row) = r.next_row().map_err(|e| e.to_string())? {
            out.push((0..2).map(|c| row.text(c).to_string()).collect());
        }
        Ok(out)
    }

    #[test]
    fn a_damaged_table_is_an_error_naming_the_file_and_line() {
        assert_eq!(rows(b"a,b\n1,2\n").unwrap(), vec![vec!["1", "2"]]);
        assert_eq!(rows(b"a,b\n").unwrap(), Vec::<Vec<String>>::new());
        // Ragged: a row longer or shorter than the header.
        assert_eq!(
            rows(b"a,b\n1,2\n3,4,5\n").unwrap_err(),
            "t.csv, line 3: the row has 3 fields where the header has 2"
        );
        assert_eq!(
            rows(b"a,b\n1,2\n3\n").unwrap_err(),
            "t.csv, line 3: the row has 1 fields where the header has 2"
        );
        // Cut short inside the last row, even where its fields still count right.
        let err = rows(b"a,b\n1,2\n3,4").unwrap_err();
        assert!(
            err.starts_with("t.csv, line 3: the last row does not end"),
            "{err}"
        );
        assert_eq!(
            rows(b"").unwrap_err(),
            "t.csv: the file is empty (no header row)"
        );
        assert!(rows(b"a,b\n1,\xff\n").unwrap_err().contains("line 2"));
    }

    #[test]
    fn fields_are_checked_as_they_are_read() {
        let list = vec!["x".to_string(), "y".to_string()];
        let ids = Ids::new("target", &list);
        let bytes: &[u8] = b"target,value,n,h\ny,0.5,3,2\nz,abc,-1,9\n";
        let mut r = Reader::new("t.csv", bytes).unwrap();
        let row = r.next_row().unwrap().unwrap();
        assert_eq!(row.id(0, &ids).unwrap(), 1);
        assert_eq!(row.number(1).unwrap(), Some(0.5));
        assert_eq!(row.count(2).unwrap(), 3);
        assert_eq!(row.horizon(3, &[1, 2]).unwrap(), 2);
        let row = r.next_row().unwrap().unwrap();
        let message = |e: ReadError| e.to_string();
        assert_eq!(
            message(row.id(0, &ids).unwrap_err()),
            "t.csv, line 3: target 'z' is not a target of this experiment"
        );
        assert_eq!(
            message(row.number(1).unwrap_err()),
            "t.csv, line 3: value is 'abc', not a number"
        );
        assert_eq!(
            message(row.count(2).unwrap_err()),
            "t.csv, line 3: n is '-1', not a whole number"
        );
        assert_eq!(
            message(row.horizon(3, &[1, 2]).unwrap_err()),
            "t.csv, line 3: h 9 is not a horizon of this experiment"
        );
        assert!(r.column("missing").is_err());
    }
}
