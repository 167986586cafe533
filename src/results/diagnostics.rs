//! diagnostics.csv: unit-root tests (ADF) of each target and predictor as
//! used, and Ljung-Box tests of each cell's residuals (subject
//! `target/candidate/scheme`). The predictors' rows come first, in the
//! first target's slice.

use super::text::{finish, opt, write_row, writer, ReadError, Reader};

pub const FILE: &str = "diagnostics.csv";

/// The columns, in order.
pub const COLUMNS: [&str; 7] = [
    "subject",
    "kind",
    "test",
    "lags",
    "statistic",
    "p_value",
    "critical_5",
];

/// The table of `rows`, in their order.
pub fn write(rows: &[crate::score::stability::DiagnosticRow]) -> Vec<u8> {
    let mut w = writer();
    let _ = w.write_record(COLUMNS);
    for r in rows {
        write_row(
            &mut w,
            [
                r.subject.clone(),
                r.kind.to_string(),
                r.test.to_string(),
                r.lags.map(|l| l.to_string()).unwrap_or_default(),
                opt(r.statistic),
                opt(r.p_value),
                opt(r.critical_5),
            ],
        );
    }
    finish(w)
}

/// One diagnostic as read back. `lags` stays text: the report shows it.
#[derive(Debug, Clone, PartialEq)]
pub struct Row {
    pub subject: String,
    /// `target`, `predictor` or `residuals`.
    pub kind: String,
    pub test: String,
    pub lags: String,
    pub statistic: Option<f64>,
    pub p_value: Option<f64>,
    pub critical_5: Option<f64>,
}

/// Read the table.
pub fn read(bytes: &[u8]) -> Result<Vec<Row>, ReadError> {
    let mut reader = Reader::new(FILE, bytes)?;
    let [subject, kind, test, lags, statistic, p_value, critical_5] = reader.columns(COLUMNS)?;
    let mut rows = Vec::new();
    while let Some(row) = reader.next_row()? {
        row.optional_count(lags)?;
        rows.push(Row {
            subject: row.text(subject).to_string(),
            kind: row.text(kind).to_string(),
            test: row.text(test).to_string(),
            lags: row.text(lags).to_string(),
            statistic: row.number(statistic)?,
            p_value: row.number(p_value)?,
            critical_5: row.number(critical_5)?,
        });
    }
    Ok(rows)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rows_read_back_and_edits_are_errors() {
        let header = COLUMNS.join(",");
        let text = format!("{header}\nx,predictor,adf,2,-3.5,0.01,-2.9\ny/naive/fixed,residuals,ljung_box,12,8,0.7,\n");
        let rows = read(text.as_bytes()).unwrap();
        assert_eq!(rows[0].lags, "2");
        assert_eq!(rows[0].critical_5, Some(-2.9));
        assert_eq!(rows[1].critical_5, None);
        let edited = format!("{header}\nx,predictor,adf,two,-3.5,0.01,-2.9\n");
        let err = read(edited.as_bytes()).unwrap_err().to_string();
        assert_eq!(
            err,
            "diagnostics.csv, line 2: lags is 'two', not a whole number"
        );
    }
}
