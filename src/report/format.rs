//! Text for people: numbers, p-values, statistics and intervals as the
//! report prints them ("–" wherever a value is undefined, "−" for minus),
//! anchors, and the words for transforms and horizons.

/// A number for people: four significant digits, no exponent for ordinary
/// magnitudes (1e-4 up to 1e9); "–" when undefined.
pub fn show(v: Option<f64>) -> String {
    match v {
        None => "–".into(),
        Some(v) if !v.is_finite() => "–".into(),
        Some(0.0) => "0".into(),
        Some(v) => {
            let a = v.abs();
            let s = if !(1e-4..1e9).contains(&a) {
                format!("{v:.3e}")
            } else {
                let digits = (3 - a.log10().floor() as i32).max(0) as usize;
                format!("{v:.digits$}")
            };
            s.replace('-', "−")
        }
    }
}

/// A ratio with three decimals ("0.968").
pub fn ratio(v: Option<f64>) -> String {
    match v {
        Some(v) if v.is_finite() => format!("{v:.3}"),
        _ => "–".into(),
    }
}

/// A p-value for people: three decimals, "<0.001" below that.
pub fn pval(p: Option<f64>) -> String {
    match p {
        Some(p) if p.is_finite() && p < 0.001 => "<0.001".into(),
        // Near the 5% level three decimals would round across it (0.0498
        // as "0.050" beside "rejects"): four there.
        Some(p) if p.is_finite() && (0.0495..=0.0505).contains(&p) => format!("{p:.4}"),
        Some(p) if p.is_finite() => format!("{p:.3}"),
        _ => "–".into(),
    }
}

/// "p = 0.123" or "p < 0.001".
pub fn p_is(p: Option<f64>) -> String {
    match p {
        Some(p) if p.is_finite() && p < 0.001 => "p < 0.001".into(),
        _ => format!("p = {}", pval(p)),
    }
}

/// A statistic with two decimals.
pub fn stat(v: Option<f64>) -> String {
    match v {
        Some(v) if v.is_finite() => format!("{v:.2}").replace('-', "−"),
        _ => "–".into(),
    }
}

/// An interval for people: "−0.85 to 20.55", or "–" when undefined.
pub fn interval_text(lo: Option<f64>, hi: Option<f64>) -> String {
    match (lo, hi) {
        (Some(_), Some(_)) => format!("{} to {}", show(lo), show(hi)),
        _ => "–".into(),
    }
}

/// An anchor-safe slug: lowercase ASCII letters and digits, single dashes.
pub fn slug(s: &str) -> String {
    let mut out: String = s
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() {
                c.to_ascii_lowercase()
            } else {
                '-'
            }
        })
        .collect();
    while out.contains("--") {
        out = out.replace("--", "-");
    }
    out.trim_matches('-').to_string()
}

/// A horizon, or "all" for the pooled one.
pub fn horizon_text(h: Option<usize>) -> String {
    h.map(|h| h.to_string()).unwrap_or_else(|| "all".into())
}

/// The y-axis wording of a series after its transform.
pub fn units(name: &str, transform: &str) -> String {
    match transform {
        "log" => format!("ln {name}"),
        "diff" => format!("{name}: change on previous period"),
        "log_diff" => format!("{name}: log change on previous period"),
        "pct_change" => format!("{name}: proportional change on previous period"),
        "seasonal_diff" => format!("{name}: change on a year earlier"),
        _ => name.to_string(),
    }
}

/// What a transform does, in words.
pub fn transform_words(transform: &str) -> &'static str {
    match transform {
        "log" => "natural logarithm",
        "diff" => "change on the previous period",
        "log_diff" => "change in the logarithm on the previous period",
        "pct_change" => "proportional change on the previous period (not ×100)",
        "seasonal_diff" => "change on the same season a year earlier",
        _ => "used as it is",
    }
}

/// A metric column's name in running text: the abbreviation the trade
/// writes for the error measures, words for the others.
pub fn metric_words(name: &str) -> String {
    match name {
        "rmse" | "mae" | "mape" | "mase" | "crps" => name.to_ascii_uppercase(),
        "smape" => "sMAPE".into(),
        "bias" => "absolute bias".into(),
        "r2_oos" => "out-of-sample R²".into(),
        other => other.to_string(),
    }
}

/// Which way a ranking metric is better, for running text: "lower" for
/// the losses, "higher" for out-of-sample R², "smaller" for bias (ranked
/// by its absolute value, "absolute bias" in [`metric_words`]).
pub fn better_way(name: &str) -> &'static str {
    match name {
        "r2_oos" => "higher",
        "bias" => "smaller",
        _ => "lower",
    }
}

/// "the lowest RMSE", "the highest out-of-sample R²", "the smallest
/// absolute bias": what ranks first.
pub fn best_words(name: &str) -> String {
    let best = match better_way(name) {
        "higher" => "highest",
        "smaller" => "smallest",
        _ => "lowest",
    };
    format!("the {best} {}", metric_words(name))
}

/// The family part of a candidate id, for grouping in scatters.
pub fn family_of(id: &str) -> &str {
    id.split('(').next().unwrap_or(id)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_keep_four_significant_digits() {
        // By the definition above: 4 significant digits in fixed notation
        // from 1e-4 to 1e9, three decimals of mantissa in exponent form
        // outside, a typographic minus. Inputs are exact binary fractions,
        // so no rounding tie depends on the representation.
        assert_eq!(show(Some(1234.75)), "1235");
        assert_eq!(show(Some(-2.5)), "−2.500");
        assert_eq!(show(Some(0.0625)), "0.06250");
        assert_eq!(show(Some(12.0)), "12.00");
        assert_eq!(show(Some(0.0)), "0");
        assert_eq!(show(Some(2.0e9)), "2.000e9");
        assert_eq!(show(Some(-0.0000152587890625)), "−1.526e−5");
        assert_eq!(show(None), "–");
        assert_eq!(show(Some(f64::INFINITY)), "–");
    }

    #[test]
    fn p_values_ratios_and_statistics() {
        // By the definitions above (three decimals for p-values and ratios,
        // two for statistics; "<0.001" below a thousandth).
        assert_eq!(pval(Some(0.25)), "0.250");
        assert_eq!(pval(Some(0.0009765625)), "<0.001");
        assert_eq!(pval(None), "–");
        assert_eq!(p_is(Some(0.0009765625)), "p < 0.001");
        assert_eq!(p_is(Some(0.5)), "p = 0.500");
        assert_eq!(p_is(None), "p = –");
        // Four decimals where three would round across the 5% level.
        assert_eq!(p_is(Some(0.0498)), "p = 0.0498");
        assert_eq!(p_is(Some(0.0504)), "p = 0.0504");
        assert_eq!(p_is(Some(0.0506)), "p = 0.051");
        assert_eq!(ratio(Some(0.96875)), "0.969");
        assert_eq!(ratio(Some(f64::NAN)), "–");
        assert_eq!(stat(Some(-1.5)), "−1.50");
        assert_eq!(stat(Some(2.0)), "2.00");
        assert_eq!(interval_text(Some(-0.75), Some(20.5)), "−0.7500 to 20.50");
        assert_eq!(interval_text(Some(1.0), None), "–");
    }

    #[test]
    fn words_for_ids_horizons_and_transforms() {
        assert_eq!(slug("Demand (ML), north"), "demand-ml-north");
        assert_eq!(slug("--a__b--"), "a-b");
        assert_eq!(horizon_text(None), "all");
        assert_eq!(horizon_text(Some(3)), "3");
        assert_eq!(family_of("arima(1,0,1)"), "arima");
        assert_eq!(family_of("trim"), "trim");
        assert_eq!(units("y", "log"), "ln y");
        assert_eq!(units("y", "none"), "y");
        assert_eq!(transform_words("none"), "used as it is");
    }

    #[test]
    fn metrics_in_running_text() {
        // The usual abbreviations of the error measures (common practice).
        assert_eq!(metric_words("rmse"), "RMSE");
        assert_eq!(metric_words("mae"), "MAE");
        assert_eq!(metric_words("smape"), "sMAPE");
        assert_eq!(metric_words("r2_oos"), "out-of-sample R²");
        // Rank 1 is the lowest loss, the highest R², the smallest |bias|.
        assert_eq!(best_words("rmse"), "the lowest RMSE");
        assert_eq!(best_words("r2_oos"), "the highest out-of-sample R²");
        assert_eq!(best_words("bias"), "the smallest absolute bias");
        assert_eq!(better_way("mae"), "lower");
    }
}
