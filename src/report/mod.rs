//! report: the CSV tables (`tables.rs`), the manifest (`manifest.rs`), and
//! the HTML and Markdown reports. The reports are built from the results
//! folder's stored tables alone — never from in-memory state — so `run`,
//! `merge` and `render` write the same bytes: [`Folder`] parses the tables,
//! [`report_data`] turns them into one report-data value, and the minijinja
//! templates in `templates/` lay it out (`render.rs`). Charts are inline SVG
//! built in `charts.rs`.

pub(crate) mod charts;
pub(crate) mod render;

use crate::results::tables;

use charts::{
    Chart, Dot, LegendItem, LegendKey, Line, Look, Rule, Span, Whisker, XAxis, BENCHMARK, FAINT,
    LEADERS, OUTTURN,
};
use serde_json::{json, Value};
use std::collections::{BTreeMap, HashMap};

pub const CAUTION: &str = "Backtest accuracy describes how these models would have done on past data. It does not promise the same accuracy in the future: relationships shift, data are revised, and the best model of the past can fail next period. Treat the rankings as evidence, not as a guarantee.";

/// The significance level of the report's plain-language readings of
/// p-values (the tables show the p-values themselves).
pub const LEVEL: f64 = 0.05;
/// Targets shown with every chart; later targets get tables only.
pub const CHART_TARGETS: usize = 8;
/// Targets whose sections after the verdict are shown in detail; beyond
/// them the report keeps the verdict and points at the tables.
pub const DETAIL_TARGETS: usize = 25;
/// Ranking rows shown before the rest go behind a disclosure.
const RANKING_ROWS: usize = 40;
/// Observed periods drawn before the outlook.
const OUTLOOK_HISTORY: usize = 36;

/// A number for people: four significant digits, no exponent for ordinary
/// magnitudes; "–" when undefined.
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
fn ratio(v: Option<f64>) -> String {
    match v {
        Some(v) if v.is_finite() => format!("{v:.3}"),
        _ => "–".into(),
    }
}

/// A p-value for people.
fn pval(p: Option<f64>) -> String {
    match p {
        Some(p) if p.is_finite() && p < 0.001 => "<0.001".into(),
        Some(p) if p.is_finite() => format!("{p:.3}"),
        _ => "–".into(),
    }
}

/// "p = 0.123" or "p < 0.001".
fn p_is(p: Option<f64>) -> String {
    match p {
        Some(p) if p.is_finite() && p < 0.001 => "p < 0.001".into(),
        _ => format!("p = {}", pval(p)),
    }
}

/// A statistic with two decimals.
fn stat(v: Option<f64>) -> String {
    match v {
        Some(v) if v.is_finite() => format!("{v:.2}").replace('-', "−"),
        _ => "–".into(),
    }
}

/// An interval for people: "−0.85 to 20.55", or "–" when undefined.
fn interval_text(lo: Option<f64>, hi: Option<f64>) -> String {
    match (lo, hi) {
        (Some(_), Some(_)) => format!("{} to {}", show(lo), show(hi)),
        _ => "–".into(),
    }
}

/// An anchor-safe slug.
fn slug(s: &str) -> String {
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

fn parse_num(s: &str) -> Option<f64> {
    if s.is_empty() {
        return None;
    }
    s.parse::<f64>().ok().filter(|v| v.is_finite())
}

// ---------------------------------------------------------------------------
// The folder's tables, parsed.

struct Csv {
    header: Vec<String>,
    rows: Vec<csv::StringRecord>,
}

impl Csv {
    fn parse(name: &str, bytes: &[u8]) -> Result<Csv, String> {
        let mut reader = csv::ReaderBuilder::new()
            .has_headers(true)
            .flexible(false)
            .from_reader(bytes);
        let header: Vec<String> = reader
            .headers()
            .map_err(|e| format!("{name}: {e}"))?
            .iter()
            .map(String::from)
            .collect();
        let mut rows = Vec::new();
        for rec in reader.records() {
            rows.push(rec.map_err(|e| format!("{name}: {e}"))?);
        }
        Ok(Csv { header, rows })
    }
    fn col(&self, name: &str) -> Option<usize> {
        self.header.iter().position(|h| h == name)
    }
    fn need(&self, file: &str, name: &str) -> Result<usize, String> {
        self.col(name)
            .ok_or_else(|| format!("{file} has no column '{name}'"))
    }
}

fn field(rec: &csv::StringRecord, i: Option<usize>) -> &str {
    i.and_then(|i| rec.get(i)).unwrap_or("")
}

/// The grid of the experiment: ids in experiment order.
#[derive(Clone)]
pub struct Grid {
    pub targets: Vec<String>,
    pub candidates: Vec<String>,
    pub schemes: Vec<String>,
    pub horizons: Vec<usize>,
    pub benchmark: usize,
}

struct ScoreRow {
    target: usize,
    candidate: usize,
    scheme: usize,
    /// None: the pooled `all` horizon.
    horizon: Option<usize>,
    /// None: the whole evaluation sample.
    period_set: Option<String>,
    n: usize,
    metrics: Vec<Option<f64>>,
    is_rmse: Option<f64>,
    gap: Option<f64>,
    rank: usize,
    parameters: Option<usize>,
    is_r2: Option<f64>,
}

struct TestRow {
    target: usize,
    scheme: usize,
    horizon: usize,
    test: String,
    candidate: Option<usize>,
    versus: Option<usize>,
    statistic: Option<f64>,
    p_value: Option<f64>,
    in_set: Option<bool>,
    critical_value: Option<f64>,
}

struct ForecastRow {
    period: String,
    origin: String,
    forecast: Option<f64>,
    actual: Option<f64>,
    error: Option<f64>,
}

struct OutlookRow {
    target: usize,
    candidate: usize,
    horizon: usize,
    period: String,
    forecast: Option<f64>,
    /// (level in percent, lower, upper) per interval level.
    intervals: Vec<(String, Option<f64>, Option<f64>)>,
}

struct StabilityRow {
    period: String,
    rolling_rmse: Option<f64>,
    fluctuation: Option<f64>,
}

struct Series {
    name: String,
    role: String,
    transform: String,
    periods: Vec<String>,
    raw: Vec<Option<f64>>,
    values: Vec<Option<f64>>,
}

#[derive(Clone)]
struct DiagnosticRow {
    subject: String,
    kind: String,
    test: String,
    lags: String,
    statistic: Option<f64>,
    p_value: Option<f64>,
    critical_5: Option<f64>,
}

/// What the report says about the experiment's settings, from its checked
/// declaration (never from the YAML text).
#[derive(Default, Clone)]
struct Settings {
    title: Option<String>,
    notes: Option<String>,
    frequency: String,
    transform: String,
    rank_by: Option<String>,
    multi_step: String,
    alpha: Option<f64>,
    /// (column, transform, release lag, known ahead)
    predictors: Vec<(String, String, String, bool)>,
    /// (name, first, last) as written
    periods: Vec<(String, String, String)>,
}

impl Settings {
    fn of(d: &crate::spec::Declaration) -> Settings {
        Settings {
            title: Some(d.title.clone()),
            notes: d.notes.clone(),
            frequency: d.frequency.name().to_string(),
            transform: d.transform.name().to_string(),
            rank_by: Some(d.rank_by.name().to_string()),
            multi_step: match d.multi_step {
                crate::spec::MultiStep::Direct => "direct",
                crate::spec::MultiStep::Iterated => "iterated",
            }
            .to_string(),
            alpha: d.tests.confidence_set.as_ref().map(|c| c.alpha),
            predictors: d
                .predictors
                .iter()
                .map(|p| {
                    (
                        p.column.clone(),
                        p.transform.name().to_string(),
                        p.release_lag.to_string(),
                        p.known_ahead,
                    )
                })
                .collect(),
            periods: d
                .periods
                .iter()
                .map(|p| (p.name.clone(), p.from.clone(), p.to.clone()))
                .collect(),
        }
    }
}

/// Every table of a results folder, parsed; rows keep the files' order.
pub struct Folder {
    pub grid: Grid,
    metric_names: Vec<String>,
    scores: Vec<ScoreRow>,
    tests: Vec<TestRow>,
    /// (target, candidate, scheme, horizon) → that cell's forecasts in origin order.
    forecasts: HashMap<(usize, usize, usize, usize), Vec<ForecastRow>>,
    forecast_count: usize,
    outlook: Vec<OutlookRow>,
    stability: HashMap<(usize, usize, usize, usize), Vec<StabilityRow>>,
    series: Vec<Series>,
    diagnostics: Vec<DiagnosticRow>,
    settings: Settings,
    experiment_text: String,
    table_hashes: Vec<(String, String, usize)>,
}

fn index_of(list: &[String]) -> HashMap<&str, usize> {
    list.iter()
        .enumerate()
        .map(|(i, s)| (s.as_str(), i))
        .collect()
}

fn str_list(v: Option<&Value>) -> Vec<String> {
    v.and_then(Value::as_array)
        .map(|a| {
            a.iter()
                .filter_map(|x| x.as_str().map(String::from))
                .collect()
        })
        .unwrap_or_default()
}

impl Folder {
    /// Parse the tables of a results folder. `scores.csv` is required; every
    /// other table adds its section when present.
    pub fn parse(
        files: &BTreeMap<String, Vec<u8>>,
        manifest: &Value,
        declared: &crate::spec::Declaration,
    ) -> Result<Folder, String> {
        let scores_bytes = files
            .get("scores.csv")
            .ok_or("the results folder has no scores.csv")?;
        let scores_csv = Csv::parse("scores.csv", scores_bytes)?;
        let grid = Grid::read(&scores_csv, manifest)?;
        let tables: Tables = files
            .iter()
            .map(|(k, v)| (k.as_str(), v.as_slice()))
            .collect();
        let rows = Rows::parse_with(scores_csv, &tables, &grid)?;
        let experiment_text = files
            .get("experiment.yaml")
            .map(|b| String::from_utf8_lossy(b).to_string())
            .unwrap_or_default();
        Ok(Folder::assemble(
            grid,
            rows,
            declared,
            experiment_text,
            files,
            manifest,
        ))
    }
}

impl Grid {
    /// The grid of an experiment, as its manifest records it.
    pub fn of(exp: &crate::spec::Experiment) -> Grid {
        Grid {
            targets: exp.targets.iter().map(|t| t.name.clone()).collect(),
            candidates: exp.candidates.iter().map(|c| c.id.clone()).collect(),
            schemes: exp.schemes.iter().map(|s| s.id.clone()).collect(),
            horizons: exp.horizons.clone(),
            benchmark: exp.benchmark,
        }
    }

    /// The grid from the manifest, else from the scores in order of appearance.
    fn read(scores_csv: &Csv, manifest: &Value) -> Result<Grid, String> {
        let col = |c: &Csv, f: &str, n: &str| c.need(f, n);
        let st = col(scores_csv, "scores.csv", "target")?;
        let sc = col(scores_csv, "scores.csv", "candidate")?;
        let ss = col(scores_csv, "scores.csv", "scheme")?;
        let sh = col(scores_csv, "scores.csv", "horizon")?;

        // The grid: from the manifest, else in order of appearance.
        let g = manifest.get("grid");
        let mut targets = str_list(g.and_then(|g| g.get("targets")));
        let mut candidates = str_list(g.and_then(|g| g.get("candidates")));
        let mut schemes = str_list(g.and_then(|g| g.get("schemes")));
        let mut horizons: Vec<usize> = g
            .and_then(|g| g.get("horizons"))
            .and_then(Value::as_array)
            .map(|a| {
                a.iter()
                    .filter_map(|h| h.as_u64().map(|h| h as usize))
                    .collect()
            })
            .unwrap_or_default();
        let from_manifest = !targets.is_empty() && !candidates.is_empty() && !schemes.is_empty();
        if !from_manifest {
            for r in &scores_csv.rows {
                for (list, i) in [
                    (&mut targets, st),
                    (&mut candidates, sc),
                    (&mut schemes, ss),
                ] {
                    let v = field(r, Some(i));
                    if !list.iter().any(|x| x == v) {
                        list.push(v.to_string());
                    }
                }
                if let Ok(h) = field(r, Some(sh)).parse::<usize>() {
                    if !horizons.contains(&h) {
                        horizons.push(h);
                    }
                }
            }
            horizons.sort_unstable();
        }
        if horizons.is_empty() {
            for r in &scores_csv.rows {
                if let Ok(h) = field(r, Some(sh)).parse::<usize>() {
                    if !horizons.contains(&h) {
                        horizons.push(h);
                    }
                }
            }
            horizons.sort_unstable();
        }
        let bench_name = g
            .and_then(|g| g.get("benchmark"))
            .and_then(Value::as_str)
            .map(String::from);
        let benchmark = bench_name
            .and_then(|b| candidates.iter().position(|c| *c == b))
            .or_else(|| candidates.iter().position(|c| c == "naive"))
            .unwrap_or(0);
        Ok(Grid {
            targets,
            candidates,
            schemes,
            horizons,
            benchmark,
        })
    }
}

fn parse_diagnostics(bytes: &[u8]) -> Result<Vec<DiagnosticRow>, String> {
    let d = Csv::parse("diagnostics.csv", bytes)?;
    let cols: Vec<Option<usize>> = tables::DIAGNOSTICS_COLUMNS
        .iter()
        .map(|n| d.col(n))
        .collect();
    Ok(d.rows
        .iter()
        .map(|r| DiagnosticRow {
            subject: field(r, cols[0]).to_string(),
            kind: field(r, cols[1]).to_string(),
            test: field(r, cols[2]).to_string(),
            lags: field(r, cols[3]).to_string(),
            statistic: parse_num(field(r, cols[4])),
            p_value: parse_num(field(r, cols[5])),
            critical_5: parse_num(field(r, cols[6])),
        })
        .collect())
}

/// Tables by file name.
pub type Tables<'a> = BTreeMap<&'a str, &'a [u8]>;

/// The rows of a folder's tables (or of one target's slice of them),
/// parsed against a known grid; rows keep the files' order.
pub struct Rows {
    metric_names: Vec<String>,
    scores: Vec<ScoreRow>,
    tests: Vec<TestRow>,
    forecasts: HashMap<(usize, usize, usize, usize), Vec<ForecastRow>>,
    outlook: Vec<OutlookRow>,
    stability: HashMap<(usize, usize, usize, usize), Vec<StabilityRow>>,
    series: Vec<Series>,
    diagnostics: Vec<DiagnosticRow>,
}

impl Rows {
    /// Parse the tables in `files` (`scores.csv` required) against `grid`.
    pub fn parse(files: &Tables, grid: &Grid) -> Result<Rows, String> {
        let scores_bytes = files
            .get("scores.csv")
            .ok_or("the results folder has no scores.csv")?;
        let scores_csv = Csv::parse("scores.csv", scores_bytes)?;
        Rows::parse_with(scores_csv, files, grid)
    }

    fn parse_with(scores_csv: Csv, files: &Tables, grid: &Grid) -> Result<Rows, String> {
        let col = |c: &Csv, f: &str, n: &str| c.need(f, n);
        let st = col(&scores_csv, "scores.csv", "target")?;
        let sc = col(&scores_csv, "scores.csv", "candidate")?;
        let ss = col(&scores_csv, "scores.csv", "scheme")?;
        let sh = col(&scores_csv, "scores.csv", "horizon")?;
        let sp = col(&scores_csv, "scores.csv", "period_set")?;
        let sn = col(&scores_csv, "scores.csv", "n")?;
        let s_is = col(&scores_csv, "scores.csv", "is_rmse")?;
        let metric_names: Vec<String> = scores_csv.header[sn + 1..s_is].to_vec();
        let ti = index_of(&grid.targets);
        let ci = index_of(&grid.candidates);
        let si = index_of(&grid.schemes);
        // (target, candidate, scheme, horizon) of a per-forecast row whose
        // first four named columns hold those ids.
        let key = |r: &csv::StringRecord,
                   cols: &[Option<usize>]|
         -> Option<(usize, usize, usize, usize)> {
            Some((
                *ti.get(field(r, cols[0]))?,
                *ci.get(field(r, cols[1]))?,
                *si.get(field(r, cols[2]))?,
                field(r, cols[3]).parse::<usize>().ok()?,
            ))
        };

        let (s_gap, s_rank, s_par, s_r2) = (
            scores_csv.col("gap"),
            scores_csv.col("rank"),
            scores_csv.col("parameters"),
            scores_csv.col("is_r2"),
        );
        let mut scores = Vec::new();
        for r in &scores_csv.rows {
            let (Some(&t), Some(&c), Some(&s)) = (
                ti.get(field(r, Some(st))),
                ci.get(field(r, Some(sc))),
                si.get(field(r, Some(ss))),
            ) else {
                continue;
            };
            let horizon = match field(r, Some(sh)) {
                "all" => None,
                h => match h.parse::<usize>() {
                    Ok(h) => Some(h),
                    Err(_) => continue,
                },
            };
            let period_set = match field(r, Some(sp)) {
                "all" | "" => None,
                p => Some(p.to_string()),
            };
            scores.push(ScoreRow {
                target: t,
                candidate: c,
                scheme: s,
                horizon,
                period_set,
                n: field(r, Some(sn)).parse().unwrap_or(0),
                metrics: (sn + 1..s_is)
                    .map(|i| parse_num(field(r, Some(i))))
                    .collect(),
                is_rmse: parse_num(field(r, Some(s_is))),
                gap: parse_num(field(r, s_gap)),
                rank: field(r, s_rank).parse().unwrap_or(usize::MAX),
                parameters: field(r, s_par).parse().ok(),
                is_r2: parse_num(field(r, s_r2)),
            });
        }

        let mut tests = Vec::new();
        if let Some(bytes) = files.get("tests.csv") {
            let t = Csv::parse("tests.csv", bytes)?;
            let cols: Vec<Option<usize>> = tables::TESTS_COLUMNS.iter().map(|n| t.col(n)).collect();
            for r in &t.rows {
                let (Some(&target), Some(&scheme), Ok(horizon)) = (
                    ti.get(field(r, cols[0])),
                    si.get(field(r, cols[1])),
                    field(r, cols[2]).parse::<usize>(),
                ) else {
                    continue;
                };
                tests.push(TestRow {
                    target,
                    scheme,
                    horizon,
                    test: field(r, cols[3]).to_string(),
                    candidate: ci.get(field(r, cols[4])).copied(),
                    versus: ci.get(field(r, cols[5])).copied(),
                    statistic: parse_num(field(r, cols[6])),
                    p_value: parse_num(field(r, cols[7])),
                    in_set: match field(r, cols[8]) {
                        "true" => Some(true),
                        "false" => Some(false),
                        _ => None,
                    },
                    critical_value: parse_num(field(r, cols[9])),
                });
            }
        }

        let mut forecasts: HashMap<(usize, usize, usize, usize), Vec<ForecastRow>> = HashMap::new();
        if let Some(bytes) = files.get("forecasts.csv") {
            let f = Csv::parse("forecasts.csv", bytes)?;
            let cols: Vec<Option<usize>> =
                tables::FORECAST_COLUMNS.iter().map(|n| f.col(n)).collect();
            for r in &f.rows {
                let Some(k) = key(r, &cols) else {
                    continue;
                };
                forecasts.entry(k).or_default().push(ForecastRow {
                    origin: field(r, cols[4]).to_string(),
                    period: field(r, cols[5]).to_string(),
                    forecast: parse_num(field(r, cols[6])),
                    actual: parse_num(field(r, cols[7])),
                    error: parse_num(field(r, cols[8])),
                });
            }
        }

        let mut outlook = Vec::new();
        if let Some(bytes) = files.get("outlook.csv") {
            let o = Csv::parse("outlook.csv", bytes)?;
            let cols: Vec<Option<usize>> = ["target", "candidate", "horizon", "period", "forecast"]
                .iter()
                .map(|n| o.col(n))
                .collect();
            let levels: Vec<(String, usize, usize)> = o
                .header
                .iter()
                .enumerate()
                .filter_map(|(i, h)| {
                    let level = h.strip_prefix("lower_")?;
                    let upper = o.col(&format!("upper_{level}"))?;
                    Some((level.to_string(), i, upper))
                })
                .collect();
            for r in &o.rows {
                let (Some(&t), Some(&c), Ok(h)) = (
                    ti.get(field(r, cols[0])),
                    ci.get(field(r, cols[1])),
                    field(r, cols[2]).parse::<usize>(),
                ) else {
                    continue;
                };
                outlook.push(OutlookRow {
                    target: t,
                    candidate: c,
                    horizon: h,
                    period: field(r, cols[3]).to_string(),
                    forecast: parse_num(field(r, cols[4])),
                    intervals: levels
                        .iter()
                        .map(|(l, lo, hi)| {
                            (
                                l.clone(),
                                parse_num(field(r, Some(*lo))),
                                parse_num(field(r, Some(*hi))),
                            )
                        })
                        .collect(),
                });
            }
        }

        let mut stability: HashMap<(usize, usize, usize, usize), Vec<StabilityRow>> =
            HashMap::new();
        if let Some(bytes) = files.get("stability.csv") {
            let s = Csv::parse("stability.csv", bytes)?;
            let cols: Vec<Option<usize>> = [
                "target",
                "candidate",
                "scheme",
                "horizon",
                "period",
                "rolling_rmse",
                "fluctuation",
            ]
            .iter()
            .map(|n| s.col(n))
            .collect();
            for r in &s.rows {
                let Some(k) = key(r, &cols) else {
                    continue;
                };
                stability.entry(k).or_default().push(StabilityRow {
                    period: field(r, cols[4]).to_string(),
                    rolling_rmse: parse_num(field(r, cols[5])),
                    fluctuation: parse_num(field(r, cols[6])),
                });
            }
        }

        let mut series: Vec<Series> = Vec::new();
        if let Some(bytes) = files.get("series.csv") {
            let s = Csv::parse("series.csv", bytes)?;
            let cols: Vec<Option<usize>> =
                ["series", "role", "transform", "period", "raw", "value"]
                    .iter()
                    .map(|n| s.col(n))
                    .collect();
            for r in &s.rows {
                let name = field(r, cols[0]);
                let role = field(r, cols[1]);
                let pos = match series.iter().position(|x| x.name == name && x.role == role) {
                    Some(p) => p,
                    None => {
                        series.push(Series {
                            name: name.to_string(),
                            role: role.to_string(),
                            transform: field(r, cols[2]).to_string(),
                            periods: Vec::new(),
                            raw: Vec::new(),
                            values: Vec::new(),
                        });
                        series.len() - 1
                    }
                };
                let x = &mut series[pos];
                x.periods.push(field(r, cols[3]).to_string());
                x.raw.push(parse_num(field(r, cols[4])));
                x.values.push(parse_num(field(r, cols[5])));
            }
        }

        let diagnostics = match files.get("diagnostics.csv") {
            Some(bytes) => parse_diagnostics(bytes)?,
            None => Vec::new(),
        };

        Ok(Rows {
            metric_names,
            scores,
            tests,
            forecasts,
            outlook,
            stability,
            series,
            diagnostics,
        })
    }

    /// Add the rows of the next slice (a later target's): the same as
    /// parsing the two slices' tables joined.
    pub fn append(&mut self, next: Rows) {
        if self.metric_names.is_empty() {
            self.metric_names = next.metric_names;
        }
        self.scores.extend(next.scores);
        self.tests.extend(next.tests);
        for (k, v) in next.forecasts {
            self.forecasts.entry(k).or_default().extend(v);
        }
        self.outlook.extend(next.outlook);
        for (k, v) in next.stability {
            self.stability.entry(k).or_default().extend(v);
        }
        for x in next.series {
            match self
                .series
                .iter_mut()
                .find(|s| s.name == x.name && s.role == x.role)
            {
                Some(s) => {
                    s.periods.extend(x.periods);
                    s.raw.extend(x.raw);
                    s.values.extend(x.values);
                }
                None => self.series.push(x),
            }
        }
        self.diagnostics.extend(next.diagnostics);
    }
}

impl Folder {
    /// A folder from its grid, the rows of its tables and the stored
    /// experiment file. Table hashes come from the manifest's `outputs`
    /// (else from `files`).
    pub fn assemble(
        grid: Grid,
        rows: Rows,
        declared: &crate::spec::Declaration,
        experiment_text: String,
        files: &BTreeMap<String, Vec<u8>>,
        manifest: &Value,
    ) -> Folder {
        let settings = Settings::of(declared);
        // Table hashes come from the manifest (the report may be given only
        // the rows it draws of the large tables); by file name.
        let mut table_hashes: Vec<(String, String, usize)> = match manifest["outputs"].as_array() {
            Some(list) => list
                .iter()
                .filter_map(|o| {
                    let name = o["file"].as_str()?;
                    (!name.starts_with("report.") && name != "manifest.json").then(|| {
                        (
                            name.to_string(),
                            o["sha256"].as_str().unwrap_or("").to_string(),
                            o["bytes"].as_u64().unwrap_or(0) as usize,
                        )
                    })
                })
                .collect(),
            None => files
                .iter()
                .filter(|(name, _)| {
                    !name.starts_with("report.") && name.as_str() != "manifest.json"
                })
                .map(|(name, bytes)| (name.clone(), crate::digest::sha256_hex(bytes), bytes.len()))
                .collect(),
        };
        table_hashes.sort();
        Folder::from_rows(grid, rows, settings, experiment_text, table_hashes)
    }

    fn from_rows(
        grid: Grid,
        rows: Rows,
        settings: Settings,
        experiment_text: String,
        table_hashes: Vec<(String, String, usize)>,
    ) -> Folder {
        let Rows {
            metric_names,
            scores,
            tests,
            forecasts,
            outlook,
            stability,
            series,
            diagnostics,
        } = rows;
        // Every forecast is scored once per horizon on the whole sample.
        let forecast_count = scores
            .iter()
            .filter(|r| r.horizon.is_some() && r.period_set.is_none())
            .map(|r| r.n)
            .sum();
        Folder {
            grid,
            metric_names,
            scores,
            tests,
            forecasts,
            forecast_count,
            outlook,
            stability,
            series,
            diagnostics,
            settings,
            experiment_text,
            table_hashes,
        }
    }

    fn into_rows(self) -> Rows {
        Rows {
            metric_names: self.metric_names,
            scores: self.scores,
            tests: self.tests,
            forecasts: self.forecasts,
            outlook: self.outlook,
            stability: self.stability,
            series: self.series,
            diagnostics: self.diagnostics,
        }
    }
}

/// What every target's report part needs besides the target's own rows.
pub struct PartContext {
    grid: Grid,
    settings: Settings,
    /// The predictors' unit-root rows, which only the first target's slice
    /// of diagnostics.csv holds: made when a part first needs them (by a
    /// worker, not before the workers start).
    predictor_rows: std::sync::OnceLock<Result<Vec<DiagnosticRow>, String>>,
    predictor_diagnostics: Box<dyn Fn() -> Vec<u8> + Send + Sync>,
}

impl PartContext {
    /// `predictor_diagnostics` makes the predictors' part of diagnostics.csv
    /// (with its header), as the first target's slice holds it.
    pub fn new(
        grid: Grid,
        declared: &crate::spec::Declaration,
        predictor_diagnostics: Box<dyn Fn() -> Vec<u8> + Send + Sync>,
    ) -> PartContext {
        PartContext {
            grid,
            settings: Settings::of(declared),
            predictor_rows: std::sync::OnceLock::new(),
            predictor_diagnostics,
        }
    }

    fn predictor_rows(&self) -> Result<&[DiagnosticRow], String> {
        self.predictor_rows
            .get_or_init(|| parse_diagnostics(&(self.predictor_diagnostics)()))
            .as_deref()
            .map_err(Clone::clone)
    }

    pub fn grid(&self) -> &Grid {
        &self.grid
    }

    /// The report part of target `t` from that target's rows, which are
    /// handed back for the whole folder.
    pub fn part(&self, t: usize, mut rows: Rows, draw: bool) -> Result<(TargetPart, Rows), String> {
        // The folder as the report sees it for target t: its rows, and the
        // predictors' rows ahead of them as in the whole table.
        let predictors = if t == 0 {
            &[][..]
        } else {
            self.predictor_rows()?
        };
        let borrowed = predictors.len();
        if borrowed > 0 {
            let own = std::mem::take(&mut rows.diagnostics);
            rows.diagnostics = predictors.to_vec();
            rows.diagnostics.extend(own);
        }
        let folder = Folder::from_rows(
            self.grid.clone(),
            rows,
            self.settings.clone(),
            String::new(),
            Vec::new(),
        );
        let part = folder.target_part(t, draw);
        let mut rows = folder.into_rows();
        rows.diagnostics.drain(..borrowed);
        Ok((part, rows))
    }
}

// ---------------------------------------------------------------------------
// Lookups.

type ScoreKey = (usize, usize, usize, Option<usize>, Option<String>);
type TestKey<'a> = (usize, usize, usize, &'a str, Option<usize>, Option<usize>);

struct Index<'a> {
    f: &'a Folder,
    scores: HashMap<ScoreKey, usize>,
    tests: HashMap<TestKey<'a>, usize>,
    rmse: Option<usize>,
    rank_by: Option<usize>,
    /// (target, scheme, horizon) → whole-sample score rows by rank.
    groups: HashMap<(usize, usize, Option<usize>), Vec<usize>>,
    /// (target, scheme, horizon) → period-set names in table order.
    sets: HashMap<(usize, usize, usize), Vec<String>>,
    /// (target, scheme, horizon) → test rows in table order.
    test_groups: HashMap<(usize, usize, usize), Vec<usize>>,
    /// (target, candidate, scheme) → Ljung–Box row.
    ljung_box: HashMap<(usize, usize, usize), usize>,
}

impl<'a> Index<'a> {
    fn new(f: &'a Folder) -> Index<'a> {
        let scores = f
            .scores
            .iter()
            .enumerate()
            .map(|(i, r)| {
                (
                    (
                        r.target,
                        r.candidate,
                        r.scheme,
                        r.horizon,
                        r.period_set.clone(),
                    ),
                    i,
                )
            })
            .collect();
        let tests = f
            .tests
            .iter()
            .enumerate()
            .map(|(i, r)| {
                (
                    (
                        r.target,
                        r.scheme,
                        r.horizon,
                        r.test.as_str(),
                        r.candidate,
                        r.versus,
                    ),
                    i,
                )
            })
            .collect();
        let rmse = f.metric_names.iter().position(|m| m == "rmse");
        let rank_by = match &f.settings.rank_by {
            Some(m) => f.metric_names.iter().position(|x| x == m),
            None => rmse.or_else(|| {
                f.metric_names
                    .iter()
                    .position(|m| !m.contains('_') || m == "r2_oos")
            }),
        };
        let mut groups: HashMap<(usize, usize, Option<usize>), Vec<usize>> = HashMap::new();
        let mut sets: HashMap<(usize, usize, usize), Vec<String>> = HashMap::new();
        for (i, r) in f.scores.iter().enumerate() {
            match (&r.period_set, r.horizon) {
                (None, _) => groups
                    .entry((r.target, r.scheme, r.horizon))
                    .or_default()
                    .push(i),
                (Some(p), Some(h)) => {
                    let list = sets.entry((r.target, r.scheme, h)).or_default();
                    if !list.contains(p) {
                        list.push(p.clone());
                    }
                }
                _ => {}
            }
        }
        for rows in groups.values_mut() {
            rows.sort_by_key(|&i| (f.scores[i].rank, f.scores[i].candidate));
        }
        let mut test_groups: HashMap<(usize, usize, usize), Vec<usize>> = HashMap::new();
        for (i, r) in f.tests.iter().enumerate() {
            test_groups
                .entry((r.target, r.scheme, r.horizon))
                .or_default()
                .push(i);
        }
        // Ljung–Box subjects are cell ids `target/candidate/scheme`; only
        // the targets this folder holds rows of (one, for a target's part).
        let mut cell_ids: HashMap<String, (usize, usize, usize)> = HashMap::new();
        if f.diagnostics.iter().any(|d| d.test == "ljung_box") {
            let mut held = vec![false; f.grid.targets.len()];
            for r in &f.scores {
                if let Some(h) = held.get_mut(r.target) {
                    *h = true;
                }
            }
            for (t, target) in f.grid.targets.iter().enumerate() {
                if !held[t] {
                    continue;
                }
                for (c, cand) in f.grid.candidates.iter().enumerate() {
                    for (sc, scheme) in f.grid.schemes.iter().enumerate() {
                        cell_ids.insert(format!("{target}/{cand}/{scheme}"), (t, c, sc));
                    }
                }
            }
        }
        let ljung_box = f
            .diagnostics
            .iter()
            .enumerate()
            .filter(|(_, d)| d.test == "ljung_box")
            .filter_map(|(i, d)| cell_ids.get(&d.subject).map(|k| (*k, i)))
            .collect();
        Index {
            f,
            scores,
            tests,
            rmse,
            rank_by,
            groups,
            sets,
            test_groups,
            ljung_box,
        }
    }
    fn score(
        &self,
        t: usize,
        c: usize,
        s: usize,
        h: Option<usize>,
        ps: Option<&str>,
    ) -> Option<&'a ScoreRow> {
        self.scores
            .get(&(t, c, s, h, ps.map(String::from)))
            .map(|&i| &self.f.scores[i])
    }
    fn rmse_of(&self, r: &ScoreRow) -> Option<f64> {
        self.rmse.and_then(|i| r.metrics[i])
    }
    fn relative(&self, r: &ScoreRow) -> Option<f64> {
        let b = self.score(
            r.target,
            self.f.grid.benchmark,
            r.scheme,
            r.horizon,
            r.period_set.as_deref(),
        )?;
        match (self.rmse_of(r), self.rmse_of(b)) {
            (Some(a), Some(b)) if b > 0.0 => Some(a / b),
            _ => None,
        }
    }
    fn test(
        &self,
        t: usize,
        s: usize,
        h: usize,
        test: &str,
        c: Option<usize>,
        v: Option<usize>,
    ) -> Option<&'a TestRow> {
        self.tests
            .get(&(t, s, h, test, c, v))
            .map(|&i| &self.f.tests[i])
    }
    /// Rows of one ranking group (whole sample), by rank.
    fn group(&self, t: usize, s: usize, h: Option<usize>) -> Vec<&'a ScoreRow> {
        self.groups
            .get(&(t, s, h))
            .map(|rows| rows.iter().map(|&i| &self.f.scores[i]).collect())
            .unwrap_or_default()
    }
    /// Test rows of one target, scheme and horizon.
    fn tests_of(&self, t: usize, s: usize, h: usize) -> Vec<&'a TestRow> {
        self.test_groups
            .get(&(t, s, h))
            .map(|rows| rows.iter().map(|&i| &self.f.tests[i]).collect())
            .unwrap_or_default()
    }
    /// Whether a target has pairwise tests / a snooping test anywhere.
    fn target_has(&self, t: usize, names: &[&str]) -> bool {
        (0..self.f.grid.schemes.len()).any(|s| {
            self.f.grid.horizons.iter().any(|&h| {
                self.tests_of(t, s, h)
                    .iter()
                    .any(|r| names.contains(&r.test.as_str()))
            })
        })
    }
    /// The leading candidates of a group other than the benchmark.
    fn leaders(&self, t: usize, s: usize, h: Option<usize>, k: usize) -> Vec<usize> {
        self.group(t, s, h)
            .iter()
            .map(|r| r.candidate)
            .filter(|&c| c != self.f.grid.benchmark)
            .take(k)
            .collect()
    }
    fn significant_better(&self, r: Option<&TestRow>) -> bool {
        matches!(r, Some(TestRow { statistic: Some(s), p_value: Some(p), .. }) if *s > 0.0 && *p < LEVEL)
    }
    fn significant_worse(&self, r: Option<&TestRow>) -> bool {
        matches!(r, Some(TestRow { statistic: Some(s), p_value: Some(p), .. }) if *s < 0.0 && *p < LEVEL)
    }
}

/// The y-axis wording of a series after its transform.
fn units(name: &str, transform: &str) -> String {
    match transform {
        "log" => format!("ln {name}"),
        "diff" => format!("{name}: change on previous period"),
        "log_diff" => format!("{name}: log change on previous period"),
        "pct_change" => format!("{name}: proportional change on previous period"),
        "seasonal_diff" => format!("{name}: change on a year earlier"),
        _ => name.to_string(),
    }
}

fn transform_words(transform: &str) -> &'static str {
    match transform {
        "log" => "natural logarithm",
        "diff" => "change on the previous period",
        "log_diff" => "change in the logarithm on the previous period",
        "pct_change" => "proportional change on the previous period (not ×100)",
        "seasonal_diff" => "change on the same season a year earlier",
        _ => "used as it is",
    }
}

/// The family part of a candidate id, for grouping in scatters.
fn family_of(id: &str) -> &str {
    id.split('(').next().unwrap_or(id)
}

fn horizon_text(h: Option<usize>) -> String {
    h.map(|h| h.to_string()).unwrap_or_else(|| "all".into())
}

fn chart_value(
    svg: String,
    caption: String,
    columns: Vec<String>,
    rows: Vec<Vec<String>>,
) -> Value {
    json!({"svg": svg, "caption": caption, "columns": columns, "rows": rows})
}

// ---------------------------------------------------------------------------
// The report-data value.

/// Build the report-data value both templates render, from a folder's
/// tables and the manifest's deterministic part (no `outputs`, no `run`).
/// `draw`: whether charts are wanted (only the HTML report shows them).
/// One target's part of the report data, already in template values: its
/// entry in the list of targets, its detailed sections (first
/// DETAIL_TARGETS targets) and its verdict rows. A run builds it on the
/// worker that scored the target, from that target's rows alone.
pub struct TargetPart {
    entry: minijinja::Value,
    full: Option<minijinja::Value>,
    rows: Vec<minijinja::Value>,
    statuses: Vec<String>,
}

impl Folder {
    /// The report part of target `t`. The folder must hold every row of
    /// that target (other targets' rows may be absent), and the predictors'
    /// unit-root rows.
    pub fn target_part(&self, t: usize, draw: bool) -> TargetPart {
        target_part(&Index::new(self), t, draw)
    }
}

fn target_part(ix: &Index, t: usize, draw: bool) -> TargetPart {
    let f = ix.f;
    let g = &f.grid;
    let target = &g.targets[t];
    let many = g.targets.len() > 3;
    let charts = draw && t < CHART_TARGETS;
    let verdict = verdict_for(ix, t);
    let rows: Vec<Value> = verdict["rows"]
        .as_array()
        .into_iter()
        .flatten()
        .map(|v| {
            let mut v = v.clone();
            v["target"] = json!(target);
            v
        })
        .collect();
    let series = f
        .series
        .iter()
        .find(|s| s.role == "target" && s.name == *target);
    let panels_open = g.schemes.len() * g.horizons.len() <= 8 && !many;
    let mut entry = json!({
        "name": target,
        "anchor": format!("t-{}", slug(target)),
        "index": t + 1,
        "charts": charts,
        "open": !many || t == 0,
        "panels_open": panels_open,
    });
    entry["verdict"] = verdict;
    // Every target gets its verdict; the sections after it go into
    // detail for the first DETAIL_TARGETS only (the tables hold the rest).
    let full = (t < DETAIL_TARGETS).then(|| {
        let mut full = entry.clone();
        full["outlook"] = outlook_for(ix, t, series, charts);
        full["rankings"] = rankings_for(ix, t);
        full["overfitting"] = overfitting_for(ix, t, charts);
        full["tests"] = tests_for(ix, t);
        full["over_time"] = over_time_for(ix, t, series, charts);
        full["data"] = data_for(ix, t, series, charts);
        full
    });
    entry["detail"] = json!(t < DETAIL_TARGETS);
    TargetPart {
        entry: minijinja::Value::from_serialize(&entry),
        full: full.as_ref().map(minijinja::Value::from_serialize),
        statuses: rows
            .iter()
            .map(|v| v["status"].as_str().unwrap_or("").to_string())
            .collect(),
        rows: rows.iter().map(minijinja::Value::from_serialize).collect(),
    }
}

/// The data the report templates read, as template values. `parts` are the
/// targets' parts when already built (see [`Folder::target_part`]); else
/// they are built here, in parallel.
pub fn report_data(
    f: &Folder,
    manifest: &Value,
    draw: bool,
    parts: Option<Vec<TargetPart>>,
) -> minijinja::Value {
    let ix = Index::new(f);
    let g = &f.grid;
    let bench = g.benchmark;
    let bench_id = g.candidates.get(bench).cloned().unwrap_or_default();
    let rank_by = ix
        .rank_by
        .map(|i| f.metric_names[i].clone())
        .unwrap_or_else(|| "rmse".into());
    let many = g.targets.len() > 3;
    let experiment_name = manifest
        .pointer("/experiment/name")
        .and_then(Value::as_str)
        .unwrap_or("")
        .to_string();
    let title = f
        .settings
        .title
        .clone()
        .unwrap_or_else(|| experiment_name.clone());

    // Targets are independent: build them in parallel, assemble in order.
    use rayon::prelude::*;
    let parts = parts.unwrap_or_else(|| {
        (0..g.targets.len())
            .into_par_iter()
            .map(|t| target_part(&ix, t, draw))
            .collect()
    });
    let mut targets = Vec::with_capacity(parts.len());
    let mut detailed = Vec::new();
    let mut verdict_rows = Vec::new();
    let mut statuses = Vec::new();
    for part in parts {
        targets.push(part.entry);
        detailed.extend(part.full);
        verdict_rows.extend(part.rows);
        statuses.extend(part.statuses);
    }

    // Across targets: how many settings fall in each reading.
    let tally = |key: &str| statuses.iter().filter(|s| *s == key).count();
    let overall = format!(
        "Over {} targets × {} scheme × horizon settings ({} in all): {} hold after the search, {} are significant alone, {} are ahead but not significant, {} leave {} unbeaten{}.",
        g.targets.len(),
        g.schemes.len() * g.horizons.len(),
        statuses.len(),
        tally("holds"),
        tally("alone"),
        tally("ahead"),
        tally("unbeaten"),
        bench_id,
        match tally("untested") {
            0 => String::new(),
            n => format!(", {n} are ahead but untested"),
        }
    );
    // Run record.
    let cells: Vec<&Value> = manifest
        .pointer("/grid/cells")
        .and_then(Value::as_array)
        .map(|a| a.iter().collect())
        .unwrap_or_default();
    let failures: Vec<Value> = cells
        .iter()
        .filter(|c| c.get("status").and_then(Value::as_str) == Some("failed"))
        .map(|c| json!({"id": c.get("id"), "failure": c.get("failure").and_then(Value::as_str).unwrap_or("")}))
        .collect();
    let fallbacks: Vec<Value> = cells
        .iter()
        .filter(|c| c.get("fallbacks").is_some())
        .map(|c| json!({"id": c.get("id"), "fallbacks": c.get("fallbacks")}))
        .collect();
    let known_ahead: Vec<String> = f
        .settings
        .predictors
        .iter()
        .filter(|p| p.3)
        .map(|p| p.0.clone())
        .collect();
    let frequency = f.settings.frequency.clone();
    let data = json!({
        "title": title,
        "experiment": experiment_name,
        "notes": f.settings.notes,
        "caution": CAUTION,
        "level": "5%",
        "benchmark": bench_id,
        "rank_by": rank_by,
        "rank_by_is_rmse": rank_by == "rmse",
        "metrics": f.metric_names,
        "alpha": f.settings.alpha.map(|a| format!("{}%", a * 100.0)),
        "facts": {
            "targets": g.targets.len(),
            "candidates": g.candidates.len(),
            "schemes": g.schemes,
            "horizons": g.horizons,
            "forecasts": f.forecast_count,
            "cells": cells.len(),
            "failed": failures.len(),
            "frequency": frequency,
            "transform": f.settings.transform,
            "transform_words": transform_words(&f.settings.transform),
            "multi_step": f.settings.multi_step,
        },
        "many_targets": many,
        "overall": overall,
        "has_pairwise": f.tests.iter().any(|r| r.test == "diebold_mariano" || r.test == "clark_west"),
        "has_snooping": f.tests.iter().any(|r| r.test == "snooping"),
        "chart_targets": CHART_TARGETS,
        "known_ahead": known_ahead,
        "detail_targets": DETAIL_TARGETS.min(g.targets.len()),
        "omitted_detail": g.targets.len().saturating_sub(DETAIL_TARGETS),
        "predictors": f.settings.predictors.iter().map(|(c, t, l, k)| json!({
            "column": c, "transform": t, "transform_words": transform_words(t), "release_lag": l, "known_ahead": k,
        })).collect::<Vec<_>>(),
        "period_sets": f.settings.periods.iter().map(|(n, a, b)| json!({"name": n, "from": a, "to": b})).collect::<Vec<_>>(),
        "record": {
            "tool": manifest.pointer("/tool/name").and_then(Value::as_str).unwrap_or("outturn"),
            "version": manifest.pointer("/tool/version").and_then(Value::as_str).unwrap_or(""),
            "profile": manifest.pointer("/tool/profile").and_then(Value::as_str).unwrap_or(""),
            "seed": manifest.get("seed"),
            "experiment": manifest.get("experiment"),
            "data": manifest.get("data"),
            "templates": manifest.get("templates"),
            "tables": f.table_hashes.iter().map(|(n, h, b)| json!({"file": n, "sha256": h, "bytes": b})).collect::<Vec<_>>(),
            "cells": cells.len(),
            "failures": failures,
            "fallbacks": fallbacks,
            "experiment_text": f.experiment_text,
        },
    });
    // To template values: the targets' parts are converted already.
    let Value::Object(map) = data else {
        unreachable!("the report data is an object")
    };
    let mut values: BTreeMap<String, minijinja::Value> = map
        .into_iter()
        .map(|(k, v)| (k, minijinja::Value::from_serialize(&v)))
        .collect();
    values.insert("verdict_rows".into(), minijinja::Value::from(verdict_rows));
    values.insert("targets".into(), minijinja::Value::from(targets));
    values.insert("detailed_targets".into(), minijinja::Value::from(detailed));
    values.into_iter().collect()
}

/// Status of one scheme × horizon: (key, symbol, label).
fn status(
    best_is_bench: bool,
    relative: Option<f64>,
    significant: bool,
    tested: bool,
    snooping: Option<Option<f64>>,
) -> (&'static str, &'static str, &'static str) {
    let survives = matches!(snooping, Some(Some(p)) if p < LEVEL);
    if best_is_bench || relative.is_some_and(|r| r >= 1.0) {
        ("unbeaten", "✗", "benchmark unbeaten")
    } else if survives {
        ("holds", "✓✓", "holds after the search")
    } else if significant && snooping.is_some() {
        ("alone", "✓", "significant alone, not after the search")
    } else if significant {
        ("alone", "✓", "significant (search not tested)")
    } else if tested || snooping.is_some() {
        ("ahead", "~", "ahead, not significant")
    } else {
        ("untested", "·", "ahead, not tested")
    }
}

fn verdict_for(ix: &Index, t: usize) -> Value {
    let f = ix.f;
    let g = &f.grid;
    let bench = g.benchmark;
    let bench_id = &g.candidates[bench];
    let n_cand = g.candidates.len();
    let mut rows = Vec::new();
    let mut sentences = Vec::new();
    let mut counts: BTreeMap<&str, usize> = BTreeMap::new();
    let mut leaders: Vec<(usize, usize)> = Vec::new();
    let mut schemes = Vec::new();
    for (s, scheme) in g.schemes.iter().enumerate() {
        let mut cells = Vec::new();
        for &h in &g.horizons {
            let group = ix.group(t, s, Some(h));
            let Some(best) = group.first() else {
                cells.push(json!(null));
                continue;
            };
            let b = best.candidate;
            let id = &g.candidates[b];
            let rel = ix.relative(best);
            let dm = ix.test(t, s, h, "diebold_mariano", Some(b), Some(bench));
            let cw = ix.test(t, s, h, "clark_west", Some(b), Some(bench));
            let snoop = ix
                .tests_of(t, s, h)
                .into_iter()
                .find(|r| r.test == "snooping");
            let significant = ix.significant_better(dm) || ix.significant_better(cw);
            let (key, symbol, label) = status(
                b == bench,
                rel,
                significant,
                dm.is_some() || cw.is_some(),
                snoop.map(|r| r.p_value),
            );
            *counts.entry(key).or_default() += 1;
            match leaders.iter_mut().find(|(c, _)| *c == b) {
                Some((_, n)) => *n += 1,
                None => leaders.push((b, 1)),
            }
            let mut text = String::new();
            if b == bench {
                text.push_str(&format!(
                    "The benchmark {bench_id} itself comes first: none of the other {} candidates has a lower {}.",
                    n_cand.saturating_sub(1),
                    f.metric_names.get(ix.rank_by.unwrap_or(0)).map(String::as_str).unwrap_or("error")
                ));
            } else {
                match rel {
                    Some(r) if r < 1.0 => text.push_str(&format!(
                        "{id} comes first, with an RMSE {:.1}% below {bench_id}'s (relative RMSE {r:.3}).",
                        (1.0 - r) * 100.0
                    )),
                    Some(r) => text.push_str(&format!(
                        "{id} comes first by {}, but its RMSE is {:.1}% above {bench_id}'s (relative RMSE {r:.3}).",
                        f.metric_names.get(ix.rank_by.unwrap_or(0)).map(String::as_str).unwrap_or("the ranking metric"),
                        (r - 1.0) * 100.0
                    )),
                    None => text.push_str(&format!("{id} comes first.")),
                }
                let reading = |name: &str, r: Option<&TestRow>| -> Option<String> {
                    let r = r?;
                    Some(match (r.statistic, r.p_value) {
                        (Some(st), Some(p)) if st > 0.0 && p < LEVEL => {
                            format!("{name} finds the gain significant ({})", p_is(Some(p)))
                        }
                        (Some(st), Some(p)) if st < 0.0 && p < LEVEL => {
                            format!("{name} finds it significantly worse ({})", p_is(Some(p)))
                        }
                        (Some(_), Some(p)) => format!(
                            "{name} cannot tell it apart from {bench_id} ({})",
                            p_is(Some(p))
                        ),
                        _ => format!(
                            "{name} could not be computed (no variation in the loss differences)"
                        ),
                    })
                };
                let parts: Vec<String> = [
                    reading("Diebold–Mariano", dm),
                    reading("Clark–West (which allows for the nesting)", cw),
                ]
                .into_iter()
                .flatten()
                .collect();
                if !parts.is_empty() {
                    text.push(' ');
                    text.push_str(&parts.join("; "));
                    text.push('.');
                }
                if let Some(sn) = snoop {
                    match sn.p_value {
                        Some(p) if p < LEVEL => text.push_str(&format!(
                            " The edge holds after the search over {n_cand} candidates: the snooping test rejects that none beats {bench_id} ({}).",
                            p_is(Some(p))
                        )),
                        Some(p) => text.push_str(&format!(
                            " Once the search over {n_cand} candidates is allowed for, the snooping test cannot rule out luck ({}).",
                            p_is(Some(p))
                        )),
                        None => text.push_str(" The snooping test could not be computed."),
                    }
                }
            }
            let cell = json!({
                "scheme": scheme,
                "horizon": h,
                "best": id,
                "best_is_benchmark": b == bench,
                "relative": ratio(rel),
                "change": rel.map(|r| format!("{:+.1}%", (r - 1.0) * 100.0).replace('-', "−")).unwrap_or_else(|| "–".into()),
                "status": key,
                "symbol": symbol,
                "label": label,
                "dm_p": pval(dm.and_then(|r| r.p_value)),
                "cw_p": pval(cw.and_then(|r| r.p_value)),
                "snooping_p": pval(snoop.and_then(|r| r.p_value)),
                "sentence": text,
            });
            sentences.push(json!({"scheme": scheme, "horizon": h, "text": cell["sentence"]}));
            rows.push(cell.clone());
            cells.push(cell);
        }
        schemes.push(json!({"scheme": scheme, "cells": cells}));
    }
    let total: usize = counts.values().sum();
    let sig = counts.get("holds").copied().unwrap_or(0) + counts.get("alone").copied().unwrap_or(0);
    let holds = counts.get("holds").copied().unwrap_or(0);
    let unbeaten = counts.get("unbeaten").copied().unwrap_or(0);
    let tested = ix.target_has(t, &["diebold_mariano", "clark_west"]);
    let snooped = ix.target_has(t, &["snooping"]);
    let settings = if total == 1 {
        "the one scheme × horizon setting".to_string()
    } else {
        format!("{total} scheme × horizon settings")
    };
    let mut headline = if unbeaten == total {
        format!("{bench_id} is not beaten in any of the {settings}.")
    } else if tested {
        format!(
            "Across the {settings}, a candidate beats {bench_id} significantly in {sig}{}; {bench_id} is unbeaten in {unbeaten}.",
            if snooped {
                format!(", and the edge holds after allowing for the search in {holds}")
            } else {
                String::new()
            }
        )
    } else {
        format!(
            "Across the {settings}, a candidate has a lower error than {bench_id} in {}; no pairwise tests were run.",
            total - unbeaten
        )
    };
    leaders.sort_by_key(|(c, n)| (std::cmp::Reverse(*n), *c));
    if let Some((c, n)) = leaders.first() {
        if total > 1 {
            headline.push_str(&format!(
                " Most often first: {} ({n} of {total}).",
                g.candidates[*c]
            ));
        }
    }
    json!({
        "headline": headline,
        "horizons": g.horizons,
        "schemes": schemes,
        "rows": rows,
        "sentences": sentences,
    })
}

/// Markers of one ranking cell: (text, list of meanings).
fn marks(ix: &Index, t: usize, s: usize, h: usize, c: usize) -> String {
    let bench = ix.f.grid.benchmark;
    let mut m = String::new();
    if c == bench {
        return m;
    }
    let dm = ix.test(t, s, h, "diebold_mariano", Some(c), Some(bench));
    if ix.significant_better(dm) {
        m.push('▲');
    } else if ix.significant_worse(dm) {
        m.push('▼');
    }
    if ix.significant_better(ix.test(t, s, h, "clark_west", Some(c), Some(bench))) {
        m.push('†');
    }
    m
}

fn rankings_for(ix: &Index, t: usize) -> Value {
    let f = ix.f;
    let g = &f.grid;
    let bench = g.benchmark;
    let mut columns: Vec<Option<usize>> = g.horizons.iter().map(|&h| Some(h)).collect();
    if g.horizons.len() > 1 {
        columns.push(None);
    }
    let order_by = *columns.last().unwrap_or(&None);
    let show_metric = ix.rank_by != ix.rmse;
    let mut out = Vec::new();
    for (s, scheme) in g.schemes.iter().enumerate() {
        let order = ix.group(t, s, order_by);
        if order.is_empty() {
            continue;
        }
        // Best per column: rank 1 in that column.
        let rows: Vec<Value> = order
            .iter()
            .map(|r| {
                let c = r.candidate;
                let cells: Vec<Value> = columns
                    .iter()
                    .map(|&h| {
                        let Some(row) = ix.score(t, c, s, h, None) else {
                            return json!({"rel": "–", "metric": "–", "marks": "", "best": false, "mcs": false, "rank": ""});
                        };
                        let mcs = h
                            .and_then(|h| ix.test(t, s, h, "confidence_set", Some(c), None))
                            .and_then(|r| r.in_set)
                            .unwrap_or(false);
                        let rel = ix.relative(row);
                        json!({
                            "rel": ratio(rel),
                            "gain": rel.is_some_and(|r| r < 1.0),
                            "metric": show(ix.rank_by.and_then(|i| row.metrics[i])),
                            "marks": h.map(|h| marks(ix, t, s, h, c)).unwrap_or_default(),
                            "mcs": mcs,
                            "best": row.rank == 1,
                            "rank": row.rank,
                        })
                    })
                    .collect();
                json!({
                    "rank": r.rank,
                    "candidate": g.candidates[c],
                    "is_benchmark": c == bench,
                    "parameters": r.parameters,
                    "cells": cells,
                })
            })
            .collect();
        let (shown, hidden) = rows.split_at(rows.len().min(RANKING_ROWS));
        // Full metric tables per horizon.
        let detail: Vec<Value> = columns
            .iter()
            .map(|&h| {
                let group = ix.group(t, s, h);
                json!({
                    "horizon": horizon_text(h),
                    "n": group.first().map(|r| r.n).unwrap_or(0),
                    "rows": group.iter().map(|r| json!({
                        "rank": r.rank,
                        "candidate": g.candidates[r.candidate],
                        "is_benchmark": r.candidate == bench,
                        "n": r.n,
                        "metrics": r.metrics.iter().map(|v| show(*v)).collect::<Vec<_>>(),
                        "relative": ratio(ix.relative(r)),
                        "is_rmse": show(r.is_rmse),
                        "gap": show(r.gap),
                    })).collect::<Vec<_>>(),
                })
            })
            .collect();
        let counts: Vec<Value> = columns
            .iter()
            .map(|&h| json!(ix.group(t, s, h).first().map(|r| r.n).unwrap_or(0)))
            .collect();
        out.push(json!({
            "scheme": scheme,
            "anchor": format!("rank-{}-{}", slug(&g.targets[t]), slug(scheme)),
            "columns": columns.iter().map(|h| horizon_text(*h)).collect::<Vec<_>>(),
            "counts": counts,
            "order_by": horizon_text(order_by),
            "show_metric": show_metric,
            "rows": shown,
            "hidden": hidden,
            "detail": detail,
        }));
    }
    json!(out)
}

fn overfitting_for(ix: &Index, t: usize, charts: bool) -> Value {
    let f = ix.f;
    let g = &f.grid;
    let mut panels = Vec::new();
    // Families in candidate order, for consistent colours across panels.
    let mut families: Vec<&str> = Vec::new();
    for c in &g.candidates {
        let fam = family_of(c);
        if !families.contains(&fam) {
            families.push(fam);
        }
    }
    for (s, scheme) in g.schemes.iter().enumerate() {
        for &h in &g.horizons {
            let group = ix.group(t, s, Some(h));
            if group.is_empty() {
                continue;
            }
            let leaders = ix.leaders(t, s, Some(h), 3);
            // Candidates with both errors, with their ranks among those.
            let both: Vec<&ScoreRow> = group
                .iter()
                .copied()
                .filter(|r| r.is_rmse.is_some() && ix.rmse_of(r).is_some())
                .collect();
            let n_both = both.len();
            let mut by_in: Vec<&ScoreRow> = both.clone();
            by_in.sort_by(|a, b| {
                a.is_rmse
                    .unwrap_or(f64::INFINITY)
                    .total_cmp(&b.is_rmse.unwrap_or(f64::INFINITY))
                    .then(a.candidate.cmp(&b.candidate))
            });
            let mut by_out: Vec<&ScoreRow> = both.clone();
            by_out.sort_by(|a, b| {
                ix.rmse_of(a)
                    .unwrap_or(f64::INFINITY)
                    .total_cmp(&ix.rmse_of(b).unwrap_or(f64::INFINITY))
                    .then(a.candidate.cmp(&b.candidate))
            });
            let rank_in = |c: usize| by_in.iter().position(|r| r.candidate == c).map(|p| p + 1);
            let rank_out = |c: usize| by_out.iter().position(|r| r.candidate == c).map(|p| p + 1);
            let mut flags = Vec::new();
            let mut flagged = Vec::new();
            for r in &both {
                let (Some(ri), Some(ro)) = (rank_in(r.candidate), rank_out(r.candidate)) else {
                    continue;
                };
                if n_both >= 4 && 3 * ri <= n_both.div_ceil(3) * 3 && 2 * ro > n_both {
                    flagged.push((ri, r.candidate, r.gap));
                }
            }
            flagged.sort_by_key(|f| f.0);
            for (ri, c, gap) in &flagged {
                flags.push(json!({
                    "candidate": g.candidates[*c],
                    "text": format!(
                        "in-sample rank {ri}, out-of-sample rank {} of {n_both}; forecast error {} times its in-sample error",
                        rank_out(*c).unwrap_or(0),
                        gap.map(|v| format!("{v:.2}")).unwrap_or_else(|| "–".into())
                    ),
                }));
            }
            let flags_intro = match flagged.len() {
                0 => None,
                1 => Some("One candidate fits better than most in sample (top third) but forecasts worse than most (bottom half): its in-sample gain did not carry over.".to_string()),
                k => Some(format!("{k} candidates fit better than most in sample (top third) but forecast worse than most (bottom half): their in-sample gain did not carry over.")),
            };
            // Label the leaders and the three flagged candidates with the largest gaps.
            let mut by_gap: Vec<&(usize, usize, Option<f64>)> = flagged.iter().collect();
            by_gap.sort_by(|a, b| {
                b.2.unwrap_or(0.0)
                    .total_cmp(&a.2.unwrap_or(0.0))
                    .then(a.1.cmp(&b.1))
            });
            let labelled: Vec<usize> = by_gap.iter().take(3).map(|f| f.1).collect();
            let flagged: Vec<usize> = flagged.iter().map(|f| f.1).collect();
            let rho = ix
                .test(t, s, h, "rank_correlation", None, None)
                .and_then(|r| r.statistic);
            let rho_text = rho.map(|r| {
                let reading = if r >= 0.7 {
                    "the in-sample order largely carries over"
                } else if r >= 0.3 {
                    "the in-sample order carries over only in part"
                } else if r > -0.3 {
                    "in-sample fit says little about out-of-sample accuracy here"
                } else {
                    "the closer the in-sample fit, the worse the forecasts"
                };
                format!(
                    "Rank correlation of in-sample and out-of-sample RMSE: {}; {reading}.",
                    stat(Some(r))
                )
            });
            let no_in_sample: Vec<String> = group
                .iter()
                .filter(|r| r.is_rmse.is_none())
                .map(|r| g.candidates[r.candidate].clone())
                .collect();
            let table: Vec<Value> = by_out
                .iter()
                .map(|r| {
                    json!({
                        "candidate": g.candidates[r.candidate],
                        "parameters": r.parameters,
                        "is_rmse": show(r.is_rmse),
                        "oos_rmse": show(ix.rmse_of(r)),
                        "gap": show(r.gap),
                        "is_r2": show(r.is_r2),
                        "rank_in": rank_in(r.candidate),
                        "rank_out": rank_out(r.candidate),
                        "flag": flagged.contains(&r.candidate),
                    })
                })
                .collect();
            let id = format!("t{t}-s{s}-h{h}");
            let (scatter, complexity) = if charts && !both.is_empty() {
                (
                    Some(scatter_chart(
                        ix, &id, &both, &leaders, &labelled, &families,
                    )),
                    Some(complexity_chart(ix, &id, &group)),
                )
            } else {
                (None, None)
            };
            panels.push(json!({
                "scheme": scheme,
                "horizon": h,
                "scatter": scatter,
                "complexity": complexity,
                "rows": table,
                "flags": flags,
                "flags_intro": flags_intro,
                "rank_correlation": rho_text,
                "without_in_sample": no_in_sample,
            }));
        }
    }
    json!(panels)
}

fn scatter_chart(
    ix: &Index,
    id: &str,
    both: &[&ScoreRow],
    leaders: &[usize],
    flagged: &[usize],
    families: &[&str],
) -> Value {
    let g = &ix.f.grid;
    let mut ch = Chart::new(
        &format!("{id}-scatter"),
        "In-sample against out-of-sample RMSE per candidate",
        XAxis::Numeric { integer: false },
    );
    ch.diagonal = true;
    ch.width = 430.0;
    ch.plot_height = 250.0;
    ch.x_title = "in-sample RMSE".into();
    ch.y_title = "out-of-sample RMSE".into();
    let mut used: Vec<usize> = Vec::new();
    let mut rows = Vec::new();
    for r in both {
        let id = &g.candidates[r.candidate];
        let fam = families
            .iter()
            .position(|f| *f == family_of(id))
            .unwrap_or(0);
        if !used.contains(&fam) {
            used.push(fam);
        }
        let (x, y) = (r.is_rmse.unwrap_or(0.0), ix.rmse_of(r).unwrap_or(0.0));
        let label =
            (leaders.contains(&r.candidate) || flagged.contains(&r.candidate)).then(|| id.clone());
        ch.dots.push(Dot {
            x,
            y,
            look: charts::group_look(fam),
            hollow: !leaders.contains(&r.candidate),
            label,
            tip: format!(
                "{id}: in-sample {}, out-of-sample {}",
                show(Some(x)),
                show(Some(y))
            ),
        });
        rows.push(vec![id.clone(), show(Some(x)), show(Some(y)), show(r.gap)]);
    }
    used.sort_unstable();
    for fam in used {
        ch.legend.push(LegendItem {
            name: families[fam].to_string(),
            key: LegendKey::Dot(charts::group_look(fam), true),
        });
    }
    chart_value(
        charts::svg(&ch),
        "Each mark is a candidate; filled marks are the three leaders. Above the dashed 45° line a candidate forecasts worse than it fits; the further above, the less its fit carried over.".into(),
        vec!["candidate".into(), "in-sample RMSE".into(), "out-of-sample RMSE".into(), "gap".into()],
        rows,
    )
}

fn complexity_chart(ix: &Index, id: &str, group: &[&ScoreRow]) -> Value {
    let g = &ix.f.grid;
    let mut by_params: BTreeMap<usize, (Option<f64>, Option<f64>, String, String)> =
        BTreeMap::new();
    let mut ch = Chart::new(
        &format!("{id}-complexity"),
        "Error against number of parameters",
        XAxis::Numeric { integer: true },
    );
    ch.width = 430.0;
    ch.plot_height = 250.0;
    ch.x_title = "parameters estimated".into();
    ch.y_title = "RMSE".into();
    for r in group {
        let Some(p) = r.parameters else { continue };
        let oos = ix.rmse_of(r);
        let entry = by_params
            .entry(p)
            .or_insert((None, None, String::new(), String::new()));
        if let Some(o) = oos {
            ch.dots.push(Dot {
                x: p as f64,
                y: o,
                look: Look {
                    colour: "#9aa3ae",
                    dash: "",
                    width: 1.0,
                    marker: charts::Marker::Circle,
                },
                hollow: true,
                label: None,
                tip: format!(
                    "{}: {} parameters, out-of-sample RMSE {}",
                    g.candidates[r.candidate],
                    p,
                    show(Some(o))
                ),
            });
            if entry.0.is_none_or(|b| o < b) {
                entry.0 = Some(o);
                entry.2 = g.candidates[r.candidate].clone();
            }
        }
        if let Some(i) = r.is_rmse {
            if entry.1.is_none_or(|b| i < b) {
                entry.1 = Some(i);
                entry.3 = g.candidates[r.candidate].clone();
            }
        }
    }
    let out_pts: Vec<(f64, f64)> = by_params
        .iter()
        .filter_map(|(p, e)| e.0.map(|v| (*p as f64, v)))
        .collect();
    let in_pts: Vec<(f64, f64)> = by_params
        .iter()
        .filter_map(|(p, e)| e.1.map(|v| (*p as f64, v)))
        .collect();
    ch.lines.push(Line {
        name: "out of sample (lowest at each size)".into(),
        look: LEADERS[0],
        points: out_pts,
        legend: true,
        marker_every: 1,
    });
    ch.lines.push(Line {
        name: "in sample (lowest at each size)".into(),
        look: LEADERS[1],
        points: in_pts,
        legend: true,
        marker_every: 1,
    });
    ch.legend.push(LegendItem {
        name: "each candidate, out of sample".into(),
        key: LegendKey::Dot(
            Look {
                colour: "#9aa3ae",
                dash: "",
                width: 1.0,
                marker: charts::Marker::Circle,
            },
            true,
        ),
    });
    let rows = by_params
        .iter()
        .map(|(p, e)| {
            vec![
                p.to_string(),
                show(e.0),
                e.2.clone(),
                show(e.1),
                e.3.clone(),
            ]
        })
        .collect();
    chart_value(
        charts::svg(&ch),
        "In-sample error can only fall as models grow; out-of-sample error turns up once extra parameters fit noise. The distance between the curves is the price of estimation.".into(),
        vec![
            "parameters".into(),
            "lowest out-of-sample RMSE".into(),
            "candidate".into(),
            "lowest in-sample RMSE".into(),
            "candidate".into(),
        ],
        rows,
    )
}

fn tests_for(ix: &Index, t: usize) -> Value {
    let f = ix.f;
    let g = &f.grid;
    let bench = g.benchmark;
    let mut out = Vec::new();
    for (s, scheme) in g.schemes.iter().enumerate() {
        for &h in &g.horizons {
            let rows_here: Vec<&TestRow> = ix.tests_of(t, s, h);
            if rows_here.is_empty() {
                continue;
            }
            let has = |name: &str| rows_here.iter().any(|r| r.test == name);
            let (has_dm, has_cw, has_mcs, has_fl) = (
                has("diebold_mariano"),
                has("clark_west"),
                has("confidence_set"),
                has("fluctuation"),
            );
            let group = ix.group(t, s, Some(h));
            let mut better = 0;
            let mut worse = 0;
            let mut in_set = 0;
            let mut unstable = 0;
            let rows: Vec<Value> = group
                .iter()
                .map(|r| {
                    let c = r.candidate;
                    let dm = ix.test(t, s, h, "diebold_mariano", Some(c), Some(bench));
                    let cw = ix.test(t, s, h, "clark_west", Some(c), Some(bench));
                    let mcs = ix.test(t, s, h, "confidence_set", Some(c), None);
                    let fl = ix.test(t, s, h, "fluctuation", Some(c), Some(bench));
                    if ix.significant_better(dm) {
                        better += 1;
                    }
                    if ix.significant_worse(dm) {
                        worse += 1;
                    }
                    if mcs.and_then(|m| m.in_set) == Some(true) {
                        in_set += 1;
                    }
                    let fl_crosses = matches!(fl, Some(TestRow { statistic: Some(v), critical_value: Some(cv), .. }) if v > cv);
                    if fl_crosses {
                        unstable += 1;
                    }
                    json!({
                        "rank": r.rank,
                        "candidate": g.candidates[c],
                        "is_benchmark": c == bench,
                        "dm_stat": stat(dm.and_then(|r| r.statistic)),
                        "dm_p": pval(dm.and_then(|r| r.p_value)),
                        "dm_mark": if ix.significant_better(dm) { "▲" } else if ix.significant_worse(dm) { "▼" } else { "" },
                        "cw_stat": stat(cw.and_then(|r| r.statistic)),
                        "cw_p": pval(cw.and_then(|r| r.p_value)),
                        "cw_mark": if ix.significant_better(cw) { "†" } else { "" },
                        "mcs_p": pval(mcs.and_then(|r| r.p_value)),
                        "in_set": mcs.and_then(|r| r.in_set),
                        "fl_stat": stat(fl.and_then(|r| r.statistic)),
                        "fl_cv": stat(fl.and_then(|r| r.critical_value)),
                        "fl_crosses": fl_crosses,
                    })
                })
                .collect();
            let snoop = rows_here.iter().find(|r| r.test == "snooping");
            let snooping = snoop.map(|r| {
                let best = r
                    .candidate
                    .map(|c| g.candidates[c].clone())
                    .unwrap_or_else(|| "–".into());
                match r.p_value {
                    Some(p) if p < LEVEL => format!(
                        "Snooping test (best of the grid: {best}): statistic {}, {} — some candidate beats {} even after the search.",
                        stat(r.statistic), p_is(Some(p)), g.candidates[bench]
                    ),
                    Some(p) => format!(
                        "Snooping test (best of the grid: {best}): statistic {}, {} — after the search, no candidate is shown to beat {}.",
                        stat(r.statistic), p_is(Some(p)), g.candidates[bench]
                    ),
                    None => format!("Snooping test (best of the grid: {best}): not computable."),
                }
            });
            let others = group.iter().filter(|r| r.candidate != bench).count();
            let mut summary = Vec::new();
            if has_dm {
                summary.push(format!(
                    "Diebold–Mariano at 5%: {better} of {others} candidates significantly better than {}, {worse} significantly worse.",
                    g.candidates[bench]
                ));
            }
            if has_cw {
                let cw_better = group
                    .iter()
                    .filter(|r| {
                        ix.significant_better(ix.test(
                            t,
                            s,
                            h,
                            "clark_west",
                            Some(r.candidate),
                            Some(bench),
                        ))
                    })
                    .count();
                let cw_n = rows_here
                    .iter()
                    .filter(|r| r.test == "clark_west" && r.versus == Some(bench))
                    .count();
                summary.push(format!(
                    "Clark–West at 5%: {cw_better} of the {cw_n} candidates that nest {} improve on it.",
                    g.candidates[bench]
                ));
            }
            if has_mcs {
                summary.push(format!(
                    "Model confidence set{}: {in_set} of {} candidates cannot be told apart from the best.",
                    f.settings
                        .alpha
                        .map(|a| format!(" at {}%", a * 100.0))
                        .unwrap_or_default(),
                    group.len()
                ));
            }
            if has_fl {
                summary.push(format!(
                    "Fluctuation test at 5%: the local accuracy difference against {} leaves its band for {unstable} candidates.",
                    g.candidates[bench]
                ));
            }
            out.push(json!({
                "scheme": scheme,
                "horizon": h,
                "summary": summary,
                "snooping": snooping,
                "has_dm": has_dm,
                "has_cw": has_cw,
                "has_mcs": has_mcs,
                "has_fluctuation": has_fl,
                "rows": rows,
            }));
        }
    }
    json!(out)
}

/// Index of each period label of a target, and the labels.
fn period_axis(series: Option<&Series>) -> (Vec<String>, HashMap<String, usize>) {
    let labels: Vec<String> = series.map(|s| s.periods.clone()).unwrap_or_default();
    let pos = labels
        .iter()
        .enumerate()
        .map(|(i, l)| (l.clone(), i))
        .collect();
    (labels, pos)
}

/// The outturns of a chart's rows as a line, with the start of the chart's
/// number table (period and outturn columns).
fn outturn_line<'a>(
    rows: impl IntoIterator<Item = &'a ForecastRow> + Clone,
    look: Look,
    marker_every: usize,
) -> (Line, Vec<String>, Vec<Vec<String>>) {
    let line = Line {
        name: "outturn".into(),
        look,
        points: rows
            .clone()
            .into_iter()
            .enumerate()
            .map(|(i, r)| (i as f64, r.actual.unwrap_or(f64::NAN)))
            .collect(),
        legend: true,
        marker_every,
    };
    let columns = vec!["period".to_string(), "outturn".to_string()];
    let table = rows
        .into_iter()
        .map(|r| vec![r.period.clone(), show(r.actual)])
        .collect();
    (line, columns, table)
}

fn over_time_for(ix: &Index, t: usize, series: Option<&Series>, charts: bool) -> Value {
    let f = ix.f;
    let g = &f.grid;
    let bench = g.benchmark;
    let target = &g.targets[t];
    let transform = series
        .map(|s| s.transform.clone())
        .unwrap_or_else(|| f.settings.transform.clone());
    let unit = units(target, &transform);
    let mut out = Vec::new();
    for (s, scheme) in g.schemes.iter().enumerate() {
        // A single-origin holdout has one forecast per horizon: one path
        // across the horizons says more than a chart per horizon.
        let per_horizon = g
            .horizons
            .iter()
            .filter_map(|&h| f.forecasts.get(&(t, bench, s, h)).map(Vec::len))
            .max()
            .unwrap_or(0);
        if per_horizon > 0 && per_horizon < 3 {
            out.push(holdout_panel(ix, t, s, &unit, charts));
            continue;
        }
        for &h in &g.horizons {
            let Some(bench_rows) = f.forecasts.get(&(t, bench, s, h)) else {
                continue;
            };
            let leaders = ix.leaders(t, s, Some(h), 3);
            let labels: Vec<String> = bench_rows.iter().map(|r| r.period.clone()).collect();
            let pos: HashMap<&str, usize> = labels
                .iter()
                .enumerate()
                .map(|(i, l)| (l.as_str(), i))
                .collect();
            let id = format!("t{t}-s{s}-h{h}");
            let mut panel = json!({
                "scheme": scheme,
                "horizon": h,
                "leaders": leaders.iter().map(|&c| g.candidates[c].clone()).collect::<Vec<_>>(),
                "first": labels.first(),
                "last": labels.last(),
                "n": labels.len(),
            });
            let shown: Vec<(usize, Look)> = leaders
                .iter()
                .enumerate()
                .map(|(i, &c)| (c, LEADERS[i]))
                .chain(std::iter::once((bench, BENCHMARK)))
                .collect();
            if charts {
                // Forecasts against outturns.
                let mut ch = Chart::new(
                    &format!("{id}-forecasts"),
                    &format!("Forecasts against outturns, {scheme}, horizon {h}"),
                    XAxis::Periods(labels.clone()),
                );
                ch.x_title = "target period (the period forecast)".into();
                ch.y_title = unit.clone();
                let every = (labels.len() / 12).max(1);
                let (line, mut columns, mut table) = outturn_line(bench_rows, OUTTURN, 0);
                ch.lines.push(line);
                for &(c, look) in &shown {
                    let mut pts = vec![(0.0, f64::NAN); labels.len()];
                    let mut col = vec!["–".to_string(); labels.len()];
                    for r in f.forecasts.get(&(t, c, s, h)).into_iter().flatten() {
                        if let Some(&i) = pos.get(r.period.as_str()) {
                            pts[i] = (i as f64, r.forecast.unwrap_or(f64::NAN));
                            col[i] = show(r.forecast);
                        }
                    }
                    for (i, p) in pts.iter_mut().enumerate() {
                        p.0 = i as f64;
                    }
                    let name = if c == bench {
                        format!("{} (benchmark)", g.candidates[c])
                    } else {
                        g.candidates[c].clone()
                    };
                    ch.lines.push(Line {
                        name: name.clone(),
                        look,
                        points: pts,
                        legend: true,
                        marker_every: every,
                    });
                    columns.push(name);
                    for (row, v) in table.iter_mut().zip(col) {
                        row.push(v);
                    }
                }
                panel["forecasts"] = chart_value(
                    charts::svg(&ch),
                    format!("Each forecast is drawn at the period it forecasts, made {h} period(s) earlier. The leaders by RMSE at this horizon and the benchmark; every forecast is in forecasts.csv."),
                    columns,
                    table,
                );

                // Cumulative squared-error difference against the benchmark.
                let bench_err: Vec<Option<f64>> = bench_rows.iter().map(|r| r.error).collect();
                let mut ch = Chart::new(
                    &format!("{id}-cumulative"),
                    &format!(
                        "Cumulative squared-error gain over the benchmark, {scheme}, horizon {h}"
                    ),
                    XAxis::Periods(labels.clone()),
                );
                ch.x_title = "target period".into();
                ch.y_title = format!("Σ (e²{} − e²candidate)", g.candidates[bench]);
                ch.include_zero = true;
                ch.fit_to_legend = true;
                ch.plot_height = 200.0;
                let mut columns = vec!["period".to_string()];
                let mut table: Vec<Vec<String>> = labels.iter().map(|l| vec![l.clone()]).collect();
                let mut leader_lines = Vec::new();
                for c in 0..g.candidates.len() {
                    if c == bench {
                        continue;
                    }
                    let Some(rows) = f.forecasts.get(&(t, c, s, h)) else {
                        continue;
                    };
                    let mut path = vec![(0.0, f64::NAN); labels.len()];
                    let mut sum = 0.0;
                    let mut by_pos = vec![None; labels.len()];
                    for r in rows {
                        if let Some(&i) = pos.get(r.period.as_str()) {
                            by_pos[i] = r.error;
                        }
                    }
                    for i in 0..labels.len() {
                        if let (Some(eb), Some(ec)) = (bench_err[i], by_pos[i]) {
                            sum += eb * eb - ec * ec;
                            path[i] = (i as f64, sum);
                        } else {
                            path[i] = (i as f64, f64::NAN);
                        }
                    }
                    match leaders.iter().position(|&l| l == c) {
                        Some(k) => {
                            columns.push(g.candidates[c].clone());
                            for (row, p) in table.iter_mut().zip(&path) {
                                row.push(show(p.1.is_finite().then_some(p.1)));
                            }
                            leader_lines.push((
                                k,
                                Line {
                                    name: g.candidates[c].clone(),
                                    look: LEADERS[k],
                                    points: path,
                                    legend: true,
                                    marker_every: every,
                                },
                            ));
                        }
                        None => ch.lines.push(Line {
                            name: g.candidates[c].clone(),
                            look: FAINT,
                            points: path,
                            legend: false,
                            marker_every: 0,
                        }),
                    }
                }
                leader_lines.sort_by_key(|(k, _)| *k);
                ch.lines.extend(leader_lines.into_iter().map(|(_, l)| l));
                ch.legend.push(LegendItem {
                    name: "every other candidate".into(),
                    key: LegendKey::Line(FAINT),
                });
                ch.rules.push(Rule {
                    y: 0.0,
                    label: format!("level with {}", g.candidates[bench]),
                    dash: "",
                });
                panel["cumulative"] = chart_value(
                    charts::svg(&ch),
                    format!("A rising line means the candidate is gaining on {} in those periods, a falling one that it is losing ground; the end point is the total difference in squared errors. Grey lines are the other candidates, cut off where they leave the leaders' range.", g.candidates[bench]),
                    columns,
                    table,
                );

                // Rolling RMSE and the fluctuation path from stability.csv.
                let mut roll = Chart::new(
                    &format!("{id}-rolling"),
                    &format!("Rolling RMSE, {scheme}, horizon {h}"),
                    XAxis::Periods(labels.clone()),
                );
                roll.x_title = "end of the rolling window (target period)".into();
                roll.y_title = "rolling RMSE".into();
                roll.include_zero = true;
                roll.width = 430.0;
                roll.plot_height = 190.0;
                let mut fl = Chart::new(
                    &format!("{id}-fluctuation"),
                    &format!("Fluctuation statistic against the benchmark, {scheme}, horizon {h}"),
                    XAxis::Periods(labels.clone()),
                );
                fl.x_title = "end of the rolling window (target period)".into();
                fl.y_title = format!("local gain over {}", g.candidates[bench]);
                fl.width = 430.0;
                fl.plot_height = 190.0;
                let mut roll_cols = vec!["period".to_string()];
                let mut roll_rows: Vec<Vec<String>> =
                    labels.iter().map(|l| vec![l.clone()]).collect();
                let mut fl_cols = vec!["period".to_string()];
                let mut fl_rows: Vec<Vec<String>> =
                    labels.iter().map(|l| vec![l.clone()]).collect();
                let mut any_roll = false;
                let mut any_fl = false;
                for &(c, look) in &shown {
                    let Some(rows) = f.stability.get(&(t, c, s, h)) else {
                        continue;
                    };
                    let mut rp = vec![(0.0, f64::NAN); labels.len()];
                    let mut fp = vec![(0.0, f64::NAN); labels.len()];
                    for (i, p) in rp.iter_mut().enumerate() {
                        p.0 = i as f64;
                    }
                    for (i, p) in fp.iter_mut().enumerate() {
                        p.0 = i as f64;
                    }
                    for r in rows {
                        if let Some(&i) = pos.get(r.period.as_str()) {
                            rp[i].1 = r.rolling_rmse.unwrap_or(f64::NAN);
                            fp[i].1 = r.fluctuation.unwrap_or(f64::NAN);
                        }
                    }
                    let name = if c == bench {
                        format!("{} (benchmark)", g.candidates[c])
                    } else {
                        g.candidates[c].clone()
                    };
                    if rp.iter().any(|p| p.1.is_finite()) {
                        any_roll = true;
                        roll_cols.push(name.clone());
                        for (row, p) in roll_rows.iter_mut().zip(&rp) {
                            row.push(show(p.1.is_finite().then_some(p.1)));
                        }
                        roll.lines.push(Line {
                            name: name.clone(),
                            look,
                            points: rp,
                            legend: true,
                            marker_every: every,
                        });
                    }
                    if c != bench && fp.iter().any(|p| p.1.is_finite()) {
                        any_fl = true;
                        fl_cols.push(name.clone());
                        for (row, p) in fl_rows.iter_mut().zip(&fp) {
                            row.push(show(p.1.is_finite().then_some(p.1)));
                        }
                        fl.lines.push(Line {
                            name,
                            look,
                            points: fp,
                            legend: true,
                            marker_every: every,
                        });
                    }
                }
                let keep = |rows: Vec<Vec<String>>| -> Vec<Vec<String>> {
                    rows.into_iter()
                        .filter(|r| r.iter().skip(1).any(|v| v != "–"))
                        .collect()
                };
                if any_roll {
                    panel["rolling"] = chart_value(
                        charts::svg(&roll),
                        "RMSE over a moving window of forecasts, drawn at the window's last period: where each model was accurate and where it struggled.".into(),
                        roll_cols,
                        keep(roll_rows),
                    );
                }
                if any_fl {
                    let cv = leaders.iter().find_map(|&c| {
                        ix.test(t, s, h, "fluctuation", Some(c), Some(bench))
                            .and_then(|r| r.critical_value)
                    });
                    if let Some(cv) = cv {
                        fl.rules.push(Rule {
                            y: cv,
                            label: "5% band".into(),
                            dash: "5 4",
                        });
                        fl.rules.push(Rule {
                            y: -cv,
                            label: "5% band".into(),
                            dash: "5 4",
                        });
                    }
                    fl.include_zero = true;
                    panel["fluctuation"] = chart_value(
                        charts::svg(&fl),
                        format!("The standardised local difference in squared errors (positive: the candidate is ahead of {}). Crossing a dashed band means the relative accuracy is not stable over time at 5%.", g.candidates[bench]),
                        fl_cols,
                        keep(fl_rows),
                    );
                }
            }
            // Sub-period scores.
            let sets: Vec<String> = ix.sets.get(&(t, s, h)).cloned().unwrap_or_default();
            if !sets.is_empty() {
                let rows: Vec<Value> = ix
                    .group(t, s, Some(h))
                    .iter()
                    .map(|r| {
                        let c = r.candidate;
                        json!({
                            "candidate": g.candidates[c],
                            "is_benchmark": c == bench,
                            "leader": leaders.contains(&c),
                            "cells": sets.iter().map(|p| {
                                let row = ix.score(t, c, s, Some(h), Some(p));
                                json!({
                                    "rel": ratio(row.and_then(|r| ix.relative(r))),
                                    "rank": row.map(|r| r.rank),
                                    "n": row.map(|r| r.n),
                                    "best": row.is_some_and(|r| r.rank == 1),
                                })
                            }).collect::<Vec<_>>(),
                        })
                    })
                    .collect();
                let spans: Vec<Value> = sets
                    .iter()
                    .map(|p| {
                        let range = f.settings.periods.iter().find(|x| x.0 == *p);
                        json!({
                            "name": p,
                            "from": range.map(|r| r.1.clone()),
                            "to": range.map(|r| r.2.clone()),
                        })
                    })
                    .collect();
                panel["periods"] = json!({"sets": spans, "rows": rows});
            }
            out.push(panel);
        }
    }
    json!(out)
}

/// The forecast path of a holdout (few origins): every horizon's forecast
/// from the first origin, against the outturns, for the leaders of the
/// pooled ranking and the benchmark.
fn holdout_panel(ix: &Index, t: usize, s: usize, unit: &str, charts: bool) -> Value {
    let f = ix.f;
    let g = &f.grid;
    let bench = g.benchmark;
    let scheme = &g.schemes[s];
    let pooled = if g.horizons.len() > 1 {
        None
    } else {
        g.horizons.first().copied()
    };
    let leaders = ix.leaders(t, s, pooled, 3);
    // The first origin's forecasts, by horizon.
    let first = |c: usize| -> Vec<&ForecastRow> {
        g.horizons
            .iter()
            .filter_map(|&h| f.forecasts.get(&(t, c, s, h)).and_then(|r| r.first()))
            .collect()
    };
    let bench_rows = first(bench);
    let labels: Vec<String> = bench_rows.iter().map(|r| r.period.clone()).collect();
    let origin = bench_rows.first().map(|r| r.origin.clone());
    let mut panel = json!({
        "scheme": scheme,
        "horizon": "all",
        "holdout": true,
        "leaders": leaders.iter().map(|&c| g.candidates[c].clone()).collect::<Vec<_>>(),
        "first": labels.first(),
        "last": labels.last(),
        "n": labels.len(),
        "origin": origin,
    });
    if charts && !labels.is_empty() {
        let mut ch = Chart::new(
            &format!("t{t}-s{s}-holdout"),
            &format!("Holdout forecasts against outturns, {scheme}"),
            XAxis::Periods(labels.clone()),
        );
        ch.x_title = "target period".into();
        ch.y_title = unit.to_string();
        let look = Look {
            marker: charts::Marker::Diamond,
            ..OUTTURN
        };
        let (line, mut columns, mut table) = outturn_line(bench_rows.iter().copied(), look, 1);
        ch.lines.push(line);
        let shown: Vec<(usize, Look)> = leaders
            .iter()
            .enumerate()
            .map(|(i, &c)| (c, LEADERS[i]))
            .chain(std::iter::once((bench, BENCHMARK)))
            .collect();
        for (c, look) in shown {
            let rows = first(c);
            let mut pts: Vec<(f64, f64)> =
                (0..labels.len()).map(|i| (i as f64, f64::NAN)).collect();
            let mut col = vec!["–".to_string(); labels.len()];
            for r in rows {
                if let Some(i) = labels.iter().position(|l| *l == r.period) {
                    pts[i].1 = r.forecast.unwrap_or(f64::NAN);
                    col[i] = show(r.forecast);
                }
            }
            let name = if c == bench {
                format!("{} (benchmark)", g.candidates[c])
            } else {
                g.candidates[c].clone()
            };
            ch.lines.push(Line {
                name: name.clone(),
                look,
                points: pts,
                legend: true,
                marker_every: 1,
            });
            columns.push(name);
            for (row, v) in table.iter_mut().zip(col) {
                row.push(v);
            }
        }
        panel["forecasts"] = chart_value(
            charts::svg(&ch),
            format!(
                "Forecasts for horizons {} made at {}, against what happened: the leaders of the pooled ranking and the benchmark.",
                g.horizons.iter().map(|h| h.to_string()).collect::<Vec<_>>().join(", "),
                panel["origin"].as_str().unwrap_or("the first origin")
            ),
            columns,
            table,
        );
    }
    panel
}

fn outlook_for(ix: &Index, t: usize, series: Option<&Series>, charts: bool) -> Value {
    let f = ix.f;
    let g = &f.grid;
    let bench = g.benchmark;
    let rows: Vec<&OutlookRow> = f.outlook.iter().filter(|r| r.target == t).collect();
    if rows.is_empty() {
        return json!(null);
    }
    let pooled = if g.horizons.len() > 1 {
        None
    } else {
        g.horizons.first().copied()
    };
    let mut leaders = ix.leaders(t, 0, pooled, 3);
    leaders.push(bench);
    let ranked_by = format!(
        "{} scheme, {}",
        g.schemes.first().cloned().unwrap_or_default(),
        if pooled.is_none() {
            "all horizons pooled".to_string()
        } else {
            format!("horizon {}", horizon_text(pooled))
        }
    );
    let mut table = Vec::new();
    for &c in &leaders {
        for r in rows.iter().filter(|r| r.candidate == c) {
            table.push(json!({
                "candidate": g.candidates[c],
                "is_benchmark": c == bench,
                "horizon": r.horizon,
                "period": r.period,
                "forecast": show(r.forecast),
                "intervals": r.intervals.iter().map(|(l, lo, hi)| json!({"level": l, "lower": show(*lo), "upper": show(*hi), "text": interval_text(*lo, *hi)})).collect::<Vec<_>>(),
            }));
        }
    }
    let levels: Vec<String> = rows
        .first()
        .map(|r| r.intervals.iter().map(|i| i.0.clone()).collect())
        .unwrap_or_default();
    let origin_note = series
        .and_then(|s| s.periods.last().cloned())
        .unwrap_or_default();
    let chart = if charts {
        series.map(|s| {
            let n = s.periods.len();
            let max_h = rows.iter().map(|r| r.horizon).max().unwrap_or(1);
            let start = n.saturating_sub((4 * max_h).clamp(12, OUTLOOK_HISTORY));
            let mut labels: Vec<String> = s.periods[start..].to_vec();
            labels.extend(std::iter::repeat_n(String::new(), max_h));
            for r in &rows {
                let i = n - start - 1 + r.horizon;
                if i < labels.len() {
                    labels[i] = r.period.clone();
                }
            }
            let last_x = (n - start - 1) as f64;
            let last_y = s.values.last().copied().flatten();
            let mut ch = Chart::new(
                &format!("t{t}-outlook"),
                &format!("Outlook for {} beyond the data", g.targets[t]),
                XAxis::Periods(labels),
            );
            ch.x_title = "period".into();
            ch.y_title = units(&s.name, &s.transform);
            ch.spans.push(Span {
                x0: last_x + 0.5,
                x1: last_x + max_h as f64 + 0.5,
                fill: charts::FILL_FUTURE,
                label: "beyond the data".into(),
            });
            ch.lines.push(Line {
                name: "observed".into(),
                look: OUTTURN,
                points: s.values[start..]
                    .iter()
                    .enumerate()
                    .map(|(i, v)| (i as f64, v.unwrap_or(f64::NAN)))
                    .collect(),
                legend: true,
                marker_every: 0,
            });
            let k = leaders.len() as f64;
            let widest = levels.len().saturating_sub(1);
            for (j, &c) in leaders.iter().enumerate() {
                let look = if c == bench { BENCHMARK } else { LEADERS[j.min(2)] };
                let dodge = (j as f64 - (k - 1.0) / 2.0) * 0.16;
                let mut pts = vec![(last_x, last_y.unwrap_or(f64::NAN))];
                for r in rows.iter().filter(|r| r.candidate == c) {
                    let x = last_x + r.horizon as f64 + dodge;
                    pts.push((x, r.forecast.unwrap_or(f64::NAN)));
                    if let Some((_, Some(lo), Some(hi))) = r.intervals.get(widest) {
                        ch.whiskers.push(Whisker {
                            x,
                            lo: *lo,
                            hi: *hi,
                            colour: look.colour,
                            width: 1.2,
                        });
                    }
                    if widest > 0 {
                        if let Some((_, Some(lo), Some(hi))) = r.intervals.first() {
                            ch.whiskers.push(Whisker {
                                x,
                                lo: *lo,
                                hi: *hi,
                                colour: look.colour,
                                width: 3.2,
                            });
                        }
                    }
                }
                ch.lines.push(Line {
                    name: if c == bench {
                        format!("{} (benchmark)", g.candidates[c])
                    } else {
                        g.candidates[c].clone()
                    },
                    look,
                    points: pts,
                    legend: true,
                    marker_every: 1,
                });
            }
            let mut columns = vec!["candidate".to_string(), "horizon".into(), "period".into(), "forecast".into()];
            for l in &levels {
                columns.push(format!("{l}% interval"));
            }
            let table_rows = table
                .iter()
                .map(|r| {
                    let mut v = vec![
                        r["candidate"].as_str().unwrap_or("").to_string(),
                        r["horizon"].to_string(),
                        r["period"].as_str().unwrap_or("").to_string(),
                        r["forecast"].as_str().unwrap_or("").to_string(),
                    ];
                    for i in r["intervals"].as_array().into_iter().flatten() {
                        v.push(i["text"].as_str().unwrap_or("").to_string());
                    }
                    v
                })
                .collect();
            let interval_words = match levels.len() {
                0 => String::new(),
                1 => format!(" Bars show the {}% interval.", levels[0]),
                _ => format!(
                    " Thick bars show the {}% interval, thin bars the {}% interval.",
                    levels[0],
                    levels[widest]
                ),
            };
            chart_value(
                charts::svg(&ch),
                format!("The last {} observed periods and the forecasts made at {origin_note}, estimated on all the data.{interval_words} Marks at the same horizon are set slightly apart so the bars do not overlap.", n - start),
                columns,
                table_rows,
            )
        })
    } else {
        None
    };
    json!({
        "origin": origin_note,
        "ranked_by": ranked_by,
        "levels": levels,
        "rows": table,
        "chart": chart,
    })
}

fn data_for(ix: &Index, t: usize, series: Option<&Series>, charts: bool) -> Value {
    let f = ix.f;
    let g = &f.grid;
    let target = &g.targets[t];
    let (labels, pos) = period_axis(series);
    // First origin per scheme: the earliest origin in forecasts.csv.
    let mut spans = Vec::new();
    for (s, scheme) in g.schemes.iter().enumerate() {
        let mut first: Option<usize> = None;
        for c in 0..g.candidates.len() {
            for &h in &g.horizons {
                if let Some(rows) = f.forecasts.get(&(t, c, s, h)) {
                    if let Some(r) = rows.first() {
                        if let Some(&i) = pos.get(&r.origin) {
                            first = Some(first.map_or(i, |x: usize| x.min(i)));
                        }
                    }
                }
            }
            if first.is_some() {
                break;
            }
        }
        let Some(origin) = first else { continue };
        let window: Option<usize> = scheme
            .strip_prefix("rolling(")
            .and_then(|x| x.strip_suffix(')'))
            .and_then(|x| x.parse().ok());
        let est_start = window.map_or(0, |w| (origin + 1).saturating_sub(w));
        let kind = if scheme.starts_with("fixed") {
            "estimated once on the first span"
        } else if window.is_some() {
            "re-estimated at each origin on the latest window"
        } else {
            "re-estimated at each origin on all data so far"
        };
        spans.push((s, scheme.clone(), est_start, origin, kind));
    }
    let span_rows: Vec<Value> = spans
        .iter()
        .map(|(_, scheme, a, o, kind)| {
            json!({
                "scheme": scheme,
                "estimation_from": labels.get(*a),
                "first_origin": labels.get(*o),
                "evaluation_from": labels.get(o + 1),
                "evaluation_to": labels.last(),
                "how": kind,
            })
        })
        .collect();
    let chart = if charts {
        series.map(|s| {
            let mut ch = Chart::new(
                &format!("t{t}-series"),
                &format!("{} as forecast, with estimation and evaluation spans", s.name),
                XAxis::Periods(labels.clone()),
            );
            ch.x_title = "period".into();
            ch.y_title = units(&s.name, &s.transform);
            ch.plot_height = 200.0;
            ch.lines.push(Line {
                name: units(&s.name, &s.transform),
                look: OUTTURN,
                points: s
                    .values
                    .iter()
                    .enumerate()
                    .map(|(i, v)| (i as f64, v.unwrap_or(f64::NAN)))
                    .collect(),
                legend: false,
                marker_every: 0,
            });
            if let Some((_, _, _, o, _)) = spans.first() {
                ch.spans.push(Span {
                    x0: *o as f64 + 0.5,
                    x1: labels.len() as f64 - 0.5,
                    fill: charts::FILL_EVALUATION_LIGHT,
                    label: format!("evaluation ({})", spans[0].1),
                });
            }
            for (_, scheme, a, o, _) in &spans {
                ch.lanes.push(charts::Lane {
                    label: scheme.clone(),
                    segments: vec![
                        (
                            *a as f64 - 0.5,
                            *o as f64 + 0.5,
                            charts::FILL_ESTIMATION,
                            format!(
                                "{scheme}: first estimation {} to {}",
                                labels.get(*a).cloned().unwrap_or_default(),
                                labels.get(*o).cloned().unwrap_or_default()
                            ),
                        ),
                        (
                            *o as f64 + 0.5,
                            labels.len() as f64 - 0.5,
                            charts::FILL_EVALUATION,
                            format!(
                                "{scheme}: forecasts evaluated from {}",
                                labels.get(o + 1).cloned().unwrap_or_default()
                            ),
                        ),
                    ],
                });
            }
            ch.legend.push(LegendItem {
                name: "first estimation span".into(),
                key: LegendKey::Swatch(charts::FILL_ESTIMATION),
            });
            ch.legend.push(LegendItem {
                name: "evaluation span".into(),
                key: LegendKey::Swatch(charts::FILL_EVALUATION),
            });
            let rows = s
                .periods
                .iter()
                .zip(s.raw.iter().zip(&s.values))
                .map(|(p, (r, v))| vec![p.clone(), show(*r), show(*v)])
                .collect();
            chart_value(
                charts::svg(&ch),
                format!(
                    "The target after its transform ({}), which is what every model forecasts. The lanes below show, per scheme, the first estimation span and the evaluation span.",
                    transform_words(&s.transform)
                ),
                vec!["period".into(), "as published".into(), "as forecast".into()],
                rows,
            )
        })
    } else {
        None
    };
    let raw_chart = if charts {
        series
            .filter(|s| s.transform != "none" && s.raw.iter().any(Option::is_some))
            .map(|s| {
                let mut ch = Chart::new(
                    &format!("t{t}-raw"),
                    &format!("{} as published", s.name),
                    XAxis::Periods(labels.clone()),
                );
                ch.x_title = "period".into();
                ch.y_title = format!("{} (as published)", s.name);
                ch.plot_height = 160.0;
                ch.lines.push(Line {
                    name: s.name.clone(),
                    look: Look {
                        colour: "#5b6575",
                        ..OUTTURN
                    },
                    points: s
                        .raw
                        .iter()
                        .enumerate()
                        .map(|(i, v)| (i as f64, v.unwrap_or(f64::NAN)))
                        .collect(),
                    legend: false,
                    marker_every: 0,
                });
                chart_value(
                    charts::svg(&ch),
                    "The same series before its transform.".into(),
                    Vec::new(),
                    Vec::new(),
                )
            })
    } else {
        None
    };
    // Unit-root tests of this target and of the predictors.
    let adf: Vec<Value> = f
        .diagnostics
        .iter()
        .filter(|d| d.test == "adf" && (d.subject == *target || d.kind == "predictor"))
        .map(|d| {
            let reading = match d.p_value {
                Some(p) if p < LEVEL => "a unit root is rejected at 5%: looks stationary",
                Some(_) => "a unit root cannot be rejected at 5%: consider differencing",
                None => "not computable",
            };
            json!({
                "series": d.subject,
                "role": d.kind,
                "lags": d.lags,
                "statistic": stat(d.statistic),
                "critical_5": stat(d.critical_5),
                "p": pval(d.p_value),
                "reading": reading,
            })
        })
        .collect();
    // Ljung–Box per cell: candidates × schemes.
    let mut lb: BTreeMap<(usize, usize), (Option<f64>, String)> = BTreeMap::new();
    for c in 0..g.candidates.len() {
        for sc in 0..g.schemes.len() {
            if let Some(&i) = ix.ljung_box.get(&(t, c, sc)) {
                let d = &f.diagnostics[i];
                lb.insert((c, sc), (d.p_value, d.lags.clone()));
            }
        }
    }
    let lb_total = lb.len();
    let lb_flagged = lb
        .values()
        .filter(|(p, _)| p.is_some_and(|p| p < LEVEL))
        .count();
    let lb_rows: Vec<Value> = (0..g.candidates.len())
        .filter(|c| (0..g.schemes.len()).any(|s| lb.contains_key(&(*c, s))))
        .map(|c| {
            json!({
                "candidate": g.candidates[c],
                "cells": (0..g.schemes.len()).map(|s| {
                    let e = lb.get(&(c, s));
                    json!({
                        "p": pval(e.and_then(|x| x.0)),
                        "lags": e.map(|x| x.1.clone()),
                        "flag": e.and_then(|x| x.0).is_some_and(|p| p < LEVEL),
                    })
                }).collect::<Vec<_>>(),
            })
        })
        .collect();
    json!({
        "periods": labels.len(),
        "first": labels.first(),
        "last": labels.last(),
        "transform": series.map(|s| s.transform.clone()),
        "transform_words": series.map(|s| transform_words(&s.transform)),
        "spans": span_rows,
        "chart": chart,
        "raw_chart": raw_chart,
        "adf": adf,
        "ljung_box": {
            "total": lb_total,
            "flagged": lb_flagged,
            "schemes": g.schemes,
            "rows": lb_rows,
        },
    })
}
