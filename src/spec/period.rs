//! Period labels (SPEC §2): parsing every accepted form into an ordinal that
//! steps by a fixed amount per period, so gaps and disorder are easy to find,
//! and writing labels for periods beyond the data in the file's own style.

use std::fmt;

#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Frequency {
    Annual,
    Quarterly,
    Monthly,
    Weekly,
    Daily,
    Index,
}

impl Frequency {
    pub const NAMES: [&'static str; 6] =
        ["annual", "quarterly", "monthly", "weekly", "daily", "index"];

    pub fn parse(s: &str) -> Option<Frequency> {
        Some(match s {
            "annual" => Frequency::Annual,
            "quarterly" => Frequency::Quarterly,
            "monthly" => Frequency::Monthly,
            "weekly" => Frequency::Weekly,
            "daily" => Frequency::Daily,
            "index" => Frequency::Index,
            _ => return None,
        })
    }

    pub fn name(self) -> &'static str {
        match self {
            Frequency::Annual => "annual",
            Frequency::Quarterly => "quarterly",
            Frequency::Monthly => "monthly",
            Frequency::Weekly => "weekly",
            Frequency::Daily => "daily",
            Frequency::Index => "index",
        }
    }

    /// Season length m (SPEC §4): 4 quarterly, 12 monthly, 52 weekly, 7 daily;
    /// none for annual and index data.
    pub fn season_length(self) -> Option<usize> {
        match self {
            Frequency::Quarterly => Some(4),
            Frequency::Monthly => Some(12),
            Frequency::Weekly => Some(52),
            Frequency::Daily => Some(7),
            Frequency::Annual | Frequency::Index => None,
        }
    }

    /// Ordinal distance between consecutive periods.
    pub fn step(self) -> i64 {
        match self {
            Frequency::Weekly => 7,
            _ => 1,
        }
    }

    /// "a" or "an", for messages.
    pub fn article(self) -> &'static str {
        match self {
            Frequency::Annual | Frequency::Index => "an",
            _ => "a",
        }
    }

    /// The frequency whose label form fits every one of `labels` (empty
    /// labels skipped), for a hint when the declared one does not. Weekly is
    /// told from daily by a 7-day step.
    pub fn guess(labels: &[&str]) -> Option<Frequency> {
        let labels: Vec<&str> = labels
            .iter()
            .copied()
            .filter(|l| !l.trim().is_empty())
            .collect();
        if labels.is_empty() {
            return None;
        }
        for freq in [
            Frequency::Annual,
            Frequency::Quarterly,
            Frequency::Monthly,
            Frequency::Daily,
            Frequency::Index,
        ] {
            let parsed: Option<Vec<i64>> = labels
                .iter()
                .map(|l| parse_label(freq, l).ok().map(|(o, _)| o))
                .collect();
            let Some(ordinals) = parsed else { continue };
            if freq == Frequency::Daily
                && ordinals.len() > 1
                && ordinals.windows(2).all(|w| w[1] - w[0] == 7)
            {
                return Some(Frequency::Weekly);
            }
            return Some(freq);
        }
        None
    }

    pub fn example(self) -> &'static str {
        match self {
            Frequency::Annual => "2004",
            Frequency::Quarterly => "2004Q1 or 2004-Q1",
            Frequency::Monthly => "2004-01",
            Frequency::Weekly | Frequency::Daily => "2004-01-05",
            Frequency::Index => "an integer such as 17",
        }
    }
}

/// How a label was written, so generated labels look like the file's own.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LabelStyle {
    Plain,
    QuarterDash,
}

#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PeriodError(pub String);

impl fmt::Display for PeriodError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.0)
    }
}

fn digits(s: &str) -> Option<i64> {
    if s.is_empty() || s.len() > 9 || !s.bytes().all(|b| b.is_ascii_digit()) {
        return None;
    }
    s.parse().ok()
}

fn year(s: &str) -> Option<i64> {
    if s.len() == 4 {
        digits(s)
    } else {
        None
    }
}

/// Days since 1970-01-01 of a proleptic Gregorian date (H. Hinnant's
/// `days_from_civil` algorithm).
pub fn days_from_civil(y: i64, m: i64, d: i64) -> i64 {
    let y = if m <= 2 { y - 1 } else { y };
    let era = y.div_euclid(400);
    let yoe = y - era * 400;
    let mp = (m + 9) % 12;
    let doy = (153 * mp + 2) / 5 + d - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    era * 146097 + doe - 719468
}

/// Inverse of [`days_from_civil`].
pub fn civil_from_days(z: i64) -> (i64, i64, i64) {
    let z = z + 719468;
    let era = z.div_euclid(146097);
    let doe = z - era * 146097;
    let yoe = (doe - doe / 1460 + doe / 36524 - doe / 146096) / 365;
    let y = yoe + era * 400;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    (if m <= 2 { y + 1 } else { y }, m, d)
}

fn days_in_month(y: i64, m: i64) -> i64 {
    match m {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        _ => {
            if (y % 4 == 0 && y % 100 != 0) || y % 400 == 0 {
                29
            } else {
                28
            }
        }
    }
}

/// Parse a label of the given frequency into its ordinal.
pub fn parse_label(freq: Frequency, label: &str) -> Result<(i64, LabelStyle), PeriodError> {
    let s = label.trim();
    let bad = |why: &str| {
        Err(PeriodError(format!(
            "'{}' is not {} {} period label{why} (expected {})",
            super::decode::clip(label),
            freq.article(),
            freq.name(),
            freq.example()
        )))
    };
    match freq {
        Frequency::Annual => match year(s) {
            Some(y) => Ok((y, LabelStyle::Plain)),
            None => bad(""),
        },
        Frequency::Quarterly => {
            let (ys, qs, style) = if let Some((a, b)) = s.split_once("-Q") {
                (a, b, LabelStyle::QuarterDash)
            } else if let Some((a, b)) = s.split_once('Q') {
                (a, b, LabelStyle::Plain)
            } else {
                return bad("");
            };
            match (year(ys), digits(qs)) {
                (Some(y), Some(q)) if (1..=4).contains(&q) && qs.len() == 1 => {
                    Ok((y * 4 + q - 1, style))
                }
                (Some(_), Some(_)) => bad(": the quarter must be 1 to 4"),
                _ => bad(""),
            }
        }
        Frequency::Monthly => {
            let Some((ys, ms)) = s.split_once('-') else {
                return bad("");
            };
            match (year(ys), digits(ms)) {
                (Some(y), Some(m)) if ms.len() == 2 && (1..=12).contains(&m) => {
                    Ok((y * 12 + m - 1, LabelStyle::Plain))
                }
                (Some(_), Some(_)) if ms.len() == 2 => bad(": the month must be 01 to 12"),
                _ => bad(""),
            }
        }
        Frequency::Weekly | Frequency::Daily => {
            let parts: Vec<&str> = s.split('-').collect();
            if parts.len() != 3 || parts[1].len() != 2 || parts[2].len() != 2 {
                return bad("");
            }
            match (year(parts[0]), digits(parts[1]), digits(parts[2])) {
                (Some(y), Some(m), Some(d))
                    if (1..=12).contains(&m) && d >= 1 && d <= days_in_month(y, m) =>
                {
                    Ok((days_from_civil(y, m, d), LabelStyle::Plain))
                }
                (Some(_), Some(_), Some(_)) => bad(": no such date"),
                _ => bad(""),
            }
        }
        Frequency::Index => {
            let (neg, body) = match s.strip_prefix('-') {
                Some(rest) => (true, rest),
                None => (false, s),
            };
            match digits(body) {
                Some(v) => Ok((if neg { -v } else { v }, LabelStyle::Plain)),
                None if body.len() > 9 && body.bytes().all(|b| b.is_ascii_digit()) => {
                    Err(PeriodError(format!(
                        "'{}' is too large for an index label (at most 9 digits)",
                        super::decode::clip(label)
                    )))
                }
                None => bad(""),
            }
        }
    }
}

/// Write the label of an ordinal in the given style.
pub fn format_label(freq: Frequency, ordinal: i64, style: LabelStyle) -> String {
    match freq {
        Frequency::Annual | Frequency::Index => ordinal.to_string(),
        Frequency::Quarterly => {
            let (y, q) = (ordinal.div_euclid(4), ordinal.rem_euclid(4) + 1);
            match style {
                LabelStyle::QuarterDash => format!("{y:04}-Q{q}"),
                LabelStyle::Plain => format!("{y:04}Q{q}"),
            }
        }
        Frequency::Monthly => format!(
            "{:04}-{:02}",
            ordinal.div_euclid(12),
            ordinal.rem_euclid(12) + 1
        ),
        Frequency::Weekly | Frequency::Daily => {
            let (y, m, d) = civil_from_days(ordinal);
            format!("{y:04}-{m:02}-{d:02}")
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_label_form_of_the_spec() {
        // Label forms listed in SPEC §2.
        assert_eq!(parse_label(Frequency::Annual, "2004").unwrap().0, 2004);
        let (a, _) = parse_label(Frequency::Quarterly, "2004Q1").unwrap();
        let (b, style) = parse_label(Frequency::Quarterly, "2004-Q1").unwrap();
        assert_eq!(a, b);
        assert_eq!(style, LabelStyle::QuarterDash);
        assert_eq!(format_label(Frequency::Quarterly, a + 3, style), "2004-Q4");
        assert_eq!(
            format_label(Frequency::Quarterly, a + 4, LabelStyle::Plain),
            "2005Q1"
        );
        let (m, _) = parse_label(Frequency::Monthly, "2004-12").unwrap();
        assert_eq!(
            format_label(Frequency::Monthly, m + 1, LabelStyle::Plain),
            "2005-01"
        );
        assert_eq!(parse_label(Frequency::Index, "17").unwrap().0, 17);
    }

    #[test]
    fn bad_labels_are_refused() {
        assert!(parse_label(Frequency::Quarterly, "1977Q5").is_err());
        assert!(parse_label(Frequency::Monthly, "2004-13").is_err());
        assert!(parse_label(Frequency::Daily, "2003-02-29").is_err());
        assert!(parse_label(Frequency::Annual, "04").is_err());
        let e = parse_label(Frequency::Annual, "1990Q1").unwrap_err();
        assert!(e.0.contains("is not an annual period label"), "{e}");
    }

    #[test]
    fn guesses_the_frequency_of_labels() {
        assert_eq!(
            Frequency::guess(&["1990Q1", "1990Q2"]),
            Some(Frequency::Quarterly)
        );
        assert_eq!(Frequency::guess(&["1990", "1991"]), Some(Frequency::Annual));
        assert_eq!(
            Frequency::guess(&["1990-01", "1990-02"]),
            Some(Frequency::Monthly)
        );
        assert_eq!(
            Frequency::guess(&["2004-01-05", "2004-01-12"]),
            Some(Frequency::Weekly)
        );
        assert_eq!(
            Frequency::guess(&["2004-01-05", "2004-01-06"]),
            Some(Frequency::Daily)
        );
        assert_eq!(Frequency::guess(&["1", "2", "3"]), Some(Frequency::Index));
        assert_eq!(Frequency::guess(&["Jan 90", "Feb 90"]), None);
    }

    #[test]
    fn civil_dates_round_trip() {
        // 1970-01-01 is day 0 and 2000-03-01 is day 11017 (Unix epoch days, common practice).
        assert_eq!(days_from_civil(1970, 1, 1), 0);
        assert_eq!(days_from_civil(2000, 3, 1), 11017);
        for z in [-1000, 0, 11016, 11017, 20000, 60000] {
            let (y, m, d) = civil_from_days(z);
            assert_eq!(days_from_civil(y, m, d), z);
        }
        let (d, _) = parse_label(Frequency::Weekly, "2004-01-05").unwrap();
        assert_eq!(
            format_label(Frequency::Weekly, d + 7, LabelStyle::Plain),
            "2004-01-12"
        );
    }

    #[test]
    fn leap_days_are_valid_dates() {
        // 2004 is a leap year, 1900 is not (Gregorian rule, common practice).
        assert!(parse_label(Frequency::Daily, "2004-02-29").is_ok());
        assert!(parse_label(Frequency::Daily, "1900-02-29").is_err());
        assert!(parse_label(Frequency::Daily, "2000-02-29").is_ok());
    }
}
