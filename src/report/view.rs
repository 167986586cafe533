//! The typed view the report is built from: a results folder's rows (read
//! by `results`), its grid, what the checked declaration says about the
//! settings, and [`Index`], the lookups every section shares (a score row,
//! a test row, a ranking group, the leaders, the relative RMSE).

use crate::results::scores::Row as ScoreRow;
use crate::results::tests::Row as TestRow;
use crate::results::{Grid, Rows};
use std::collections::HashMap;

/// What the report says about the experiment's settings, from its checked
/// declaration (never from the YAML text).
#[derive(Default, Clone)]
pub struct Settings {
    pub title: String,
    pub notes: Option<String>,
    pub frequency: String,
    pub transform: String,
    /// The metric the ranks follow.
    pub rank_by: String,
    pub multi_step: String,
    /// The model confidence set's level, when that test is asked for.
    pub alpha: Option<f64>,
    pub predictors: Vec<PredictorSetting>,
    /// (name, first, last) of each period set, as written.
    pub periods: Vec<(String, String, String)>,
    /// report.targets.
    pub report_targets: usize,
    /// Under a vintage layout, what each origin sees and which release is the outturn.
    pub vintages: Option<String>,
    /// `scoring.units: original`: forecasts and scores in the data file's units.
    pub original_units: bool,
    /// Under `units: original`, the words that follow the transform's.
    pub units_words: Option<String>,
}

/// Under `units: original`: that every forecast is turned back into the
/// data file's units, with which centre, and the candidates' own
/// transforms.
fn units_words(d: &crate::spec::Declaration) -> Option<String> {
    use crate::spec::{BackTransform, Transform, Units};
    if d.units != Units::Original {
        return None;
    }
    let own: Vec<String> = d
        .candidates
        .iter()
        .filter_map(|c| c.transform.map(|t| format!("{} {}", c.id, t.name())))
        .collect();
    let logged = std::iter::once(d.transform)
        .chain(d.candidates.iter().filter_map(|c| c.transform))
        .any(|t| matches!(t, Transform::Log | Transform::LogDiff));
    let centre = match (logged, d.back_transform) {
        (false, _) => String::new(),
        (true, BackTransform::Median) => " (a log level by its median, exp of the forecast)".into(),
        (true, BackTransform::Mean) => {
            " (a log level by its mean, with the log-normal correction)".into()
        }
    };
    let own = match own.len() {
        0 => String::new(),
        _ => format!(
            "; candidates with a transform of their own: {}",
            own.join(", ")
        ),
    };
    Some(format!(
        "; every forecast is then turned back into the data file's own units{centre}, in which forecasts, intervals, errors, scores and the outlook are given{own}"
    ))
}

#[derive(Clone)]
pub struct PredictorSetting {
    pub column: String,
    pub transform: String,
    pub release_lag: String,
    pub known_ahead: bool,
}

impl Settings {
    pub fn of(d: &crate::spec::Declaration) -> Settings {
        Settings {
            title: d.title.clone(),
            notes: d.notes.clone(),
            frequency: d.frequency.name().to_string(),
            transform: d.transform.name().to_string(),
            rank_by: d.rank_by.name().to_string(),
            report_targets: d.report_targets,
            original_units: d.units == crate::spec::Units::Original,
            units_words: units_words(d),
            vintages: d.vintages.as_ref().map(|v| {
                format!(
                    "Real-time data (layout {}): at each origin every candidate sees only the vintage published in that period, and the outturn scored is {}.",
                    v.layout.name(),
                    v.actual.describe()
                )
            }),
            multi_step: match d.multi_step {
                crate::spec::MultiStep::Direct => "direct",
                crate::spec::MultiStep::Iterated => "iterated",
            }
            .to_string(),
            alpha: d.tests.confidence_set.as_ref().map(|c| c.alpha),
            predictors: d
                .predictors
                .iter()
                .map(|p| PredictorSetting {
                    column: p.column.clone(),
                    transform: p.transform.name().to_string(),
                    release_lag: p.release_lag.to_string(),
                    known_ahead: p.known_ahead,
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

/// The run record's inputs that are not rows: the stored experiment file
/// and the tables' hashes (file, SHA-256, bytes) by file name.
#[derive(Default)]
pub struct Record {
    pub experiment_text: String,
    pub table_hashes: Vec<(String, String, usize)>,
}

/// A results folder as the report sees it.
pub struct Folder {
    pub grid: Grid,
    pub rows: Rows,
    /// Every forecast is scored once per horizon on the whole sample.
    pub forecast_count: usize,
    pub settings: Settings,
    pub record: Record,
}

impl Folder {
    /// A folder from its grid, its rows, the stored experiment file as
    /// checked and as text, and the manifest's deterministic part (for the
    /// tables' hashes).
    pub fn assemble(
        grid: Grid,
        rows: Rows,
        declared: &crate::spec::Declaration,
        experiment_text: String,
        manifest: &serde_json::Value,
    ) -> Folder {
        let record = Record {
            experiment_text,
            table_hashes: super::record::table_hashes(manifest),
        };
        Folder::new(grid, rows, Settings::of(declared), record)
    }

    pub fn new(grid: Grid, rows: Rows, settings: Settings, record: Record) -> Folder {
        let forecast_count =
            crate::results::rows::forecasts_counted(&rows.scores) + rows.forecasts_let_go;
        Folder {
            grid,
            rows,
            forecast_count,
            settings,
            record,
        }
    }
}

type ScoreKey = (usize, usize, usize, Option<usize>, Option<String>);
type TestKey<'a> = (usize, usize, usize, &'a str, Option<usize>, Option<usize>);

/// Lookups over a folder's rows.
pub struct Index<'a> {
    pub f: &'a Folder,
    scores: HashMap<ScoreKey, usize>,
    tests: HashMap<TestKey<'a>, usize>,
    /// The RMSE column among the metrics.
    pub rmse: Option<usize>,
    /// The ranking metric's column among the metrics.
    pub rank_by: Option<usize>,
    /// (target, scheme, horizon) → whole-sample score rows by rank.
    groups: HashMap<(usize, usize, Option<usize>), Vec<usize>>,
    /// (target, scheme, horizon) → period-set names in table order.
    pub sets: HashMap<(usize, usize, usize), Vec<String>>,
    /// (target, scheme, horizon) → test rows in table order.
    test_groups: HashMap<(usize, usize, usize), Vec<usize>>,
    /// (target, candidate, scheme) → Ljung–Box row.
    pub ljung_box: HashMap<(usize, usize, usize), usize>,
}

impl<'a> Index<'a> {
    pub fn new(f: &'a Folder) -> Index<'a> {
        let rows = &f.rows;
        let scores = rows
            .scores
            .iter()
            .enumerate()
            .map(|(i, r)| {
                let key = (r.target, r.candidate, r.scheme, r.horizon);
                ((key.0, key.1, key.2, key.3, r.period_set.clone()), i)
            })
            .collect();
        let tests = rows
            .tests
            .iter()
            .enumerate()
            .map(|(i, r)| {
                let key = (r.target, r.scheme, r.horizon, r.test.as_str());
                ((key.0, key.1, key.2, key.3, r.candidate, r.versus), i)
            })
            .collect();
        let rmse = rows.metric_names.iter().position(|m| m == "rmse");
        let rank_by = rows
            .metric_names
            .iter()
            .position(|x| *x == f.settings.rank_by);
        let (groups, sets) = ranking_groups(rows);
        let mut test_groups: HashMap<(usize, usize, usize), Vec<usize>> = HashMap::new();
        for (i, r) in rows.tests.iter().enumerate() {
            test_groups
                .entry((r.target, r.scheme, r.horizon))
                .or_default()
                .push(i);
        }
        Index {
            f,
            scores,
            tests,
            rmse,
            rank_by,
            groups,
            sets,
            test_groups,
            ljung_box: ljung_box_rows(f),
        }
    }

    pub fn score(
        &self,
        t: usize,
        c: usize,
        s: usize,
        h: Option<usize>,
        ps: Option<&str>,
    ) -> Option<&'a ScoreRow> {
        self.scores
            .get(&(t, c, s, h, ps.map(String::from)))
            .map(|&i| &self.f.rows.scores[i])
    }

    pub fn rmse_of(&self, r: &ScoreRow) -> Option<f64> {
        self.rmse.and_then(|i| r.metrics[i])
    }

    /// The ranking metric's value of a row.
    pub fn ranked_value(&self, r: &ScoreRow) -> Option<f64> {
        self.rank_by.and_then(|i| r.metrics[i])
    }

    /// The ranking metric's name in running text ("RMSE").
    pub fn ranked_words(&self) -> String {
        super::format::metric_words(self.ranked_name())
    }

    /// The ranking metric's column name ("rmse" when it is not among the
    /// metrics).
    pub fn ranked_name(&self) -> &str {
        self.rank_by
            .map(|i| self.f.rows.metric_names[i].as_str())
            .unwrap_or("rmse")
    }

    /// RMSE relative to the benchmark's on the same forecasts (same target,
    /// scheme, horizon and period set); None when either is undefined or
    /// the benchmark's is not positive.
    pub fn relative(&self, r: &ScoreRow) -> Option<f64> {
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

    pub fn test(
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
            .map(|&i| &self.f.rows.tests[i])
    }

    /// Rows of one ranking group (whole sample), by rank.
    pub fn group(&self, t: usize, s: usize, h: Option<usize>) -> Vec<&'a ScoreRow> {
        self.groups
            .get(&(t, s, h))
            .map(|rows| rows.iter().map(|&i| &self.f.rows.scores[i]).collect())
            .unwrap_or_default()
    }

    /// Test rows of one target, scheme and horizon.
    pub fn tests_of(&self, t: usize, s: usize, h: usize) -> Vec<&'a TestRow> {
        self.test_groups
            .get(&(t, s, h))
            .map(|rows| rows.iter().map(|&i| &self.f.rows.tests[i]).collect())
            .unwrap_or_default()
    }

    /// Whether a target has a test of one of these names anywhere.
    pub fn target_has(&self, t: usize, names: &[&str]) -> bool {
        (0..self.f.grid.schemes.len()).any(|s| {
            self.f.grid.horizons.iter().any(|&h| {
                self.tests_of(t, s, h)
                    .iter()
                    .any(|r| names.contains(&r.test.as_str()))
            })
        })
    }

    /// The first `k` candidates of a group by rank, the benchmark left out.
    pub fn leaders(&self, t: usize, s: usize, h: Option<usize>, k: usize) -> Vec<usize> {
        self.group(t, s, h)
            .iter()
            .map(|r| r.candidate)
            .filter(|&c| c != self.f.grid.benchmark)
            .take(k)
            .collect()
    }
}

type Groups = HashMap<(usize, usize, Option<usize>), Vec<usize>>;
type Sets = HashMap<(usize, usize, usize), Vec<String>>;

/// Whole-sample score rows by (target, scheme, horizon), by rank then
/// candidate; and the period-set names of each in table order.
fn ranking_groups(rows: &Rows) -> (Groups, Sets) {
    let mut groups = Groups::new();
    let mut sets = Sets::new();
    for (i, r) in rows.scores.iter().enumerate() {
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
    for list in groups.values_mut() {
        list.sort_by_key(|&i| (rows.scores[i].rank, rows.scores[i].candidate));
    }
    (groups, sets)
}

/// The Ljung–Box row of each (target, candidate, scheme). Their subjects
/// are cell ids `target/candidate/scheme`; only the targets this folder
/// holds score rows of are looked for (one, for a target's part).
fn ljung_box_rows(f: &Folder) -> HashMap<(usize, usize, usize), usize> {
    let diagnostics = &f.rows.diagnostics;
    let mut cell_ids: HashMap<String, (usize, usize, usize)> = HashMap::new();
    if diagnostics.iter().any(|d| d.test == "ljung_box") {
        let mut held = vec![false; f.grid.targets.len()];
        for r in &f.rows.scores {
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
    diagnostics
        .iter()
        .enumerate()
        .filter(|(_, d)| d.test == "ljung_box")
        .filter_map(|(i, d)| cell_ids.get(&d.subject).map(|k| (*k, i)))
        .collect()
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use crate::results::Tables;

    /// A folder of one target `y`, three candidates (the benchmark `naive`
    /// first), one scheme and horizons 1 and 3, from hand-written tables.
    /// The numbers are chosen to make the definitions easy to follow by
    /// hand; they are not the output of any model.
    pub fn folder(rank_by: &str) -> Folder {
        let scores = "target,candidate,scheme,horizon,period_set,n,rmse,mae,is_rmse,gap,rank,parameters,is_r2\n\
            y,naive,fixed,1,all,10,2,1.5,,,3,0,\n\
            y,ar(1),fixed,1,all,10,1.5,1.25,1,1.5,1,2,0.5\n\
            y,ar(2),fixed,1,all,10,1.5,1.75,1.25,1.2,1,3,0.6\n\
            y,naive,fixed,3,all,10,0,1,,,1,0,\n\
            y,ar(1),fixed,3,all,10,4,2,1,4,2,2,\n\
            y,ar(2),fixed,3,all,10,5,3,1,5,3,3,\n";
        let tests =
            "target,scheme,horizon,test,candidate,versus,statistic,p_value,in_set,critical_value\n\
            y,fixed,1,diebold_mariano,ar(1),naive,2.5,0.01,,\n\
            y,fixed,1,diebold_mariano,ar(2),naive,-2.5,0.04,,\n\
            y,fixed,1,clark_west,ar(1),naive,1.5,0.2,,\n";
        let grid = Grid {
            targets: vec!["y".into()],
            candidates: vec!["naive".into(), "ar(1)".into(), "ar(2)".into()],
            schemes: vec!["fixed".into()],
            horizons: vec![1, 3],
            benchmark: 0,
        };
        let tables: Tables = [
            ("scores.csv", scores.as_bytes()),
            ("tests.csv", tests.as_bytes()),
        ]
        .into_iter()
        .collect();
        let rows = Rows::read(&tables, &grid).unwrap();
        let settings = Settings {
            rank_by: rank_by.into(),
            ..Settings::default()
        };
        Folder::new(grid, rows, settings, Record::default())
    }

    #[test]
    fn relative_rmse_is_the_ratio_to_the_benchmarks_on_the_same_forecasts() {
        // By definition: RMSE / the benchmark's RMSE at the same target,
        // scheme, horizon and period set: 1.5 / 2 = 0.75; undefined when
        // the benchmark's RMSE is 0 (horizon 3).
        let f = folder("rmse");
        let ix = Index::new(&f);
        let ar1 = ix.score(0, 1, 0, Some(1), None).unwrap();
        assert_eq!(ix.relative(ar1), Some(0.75));
        let naive = ix.score(0, 0, 0, Some(1), None).unwrap();
        assert_eq!(ix.relative(naive), Some(1.0));
        assert_eq!(ix.relative(ix.score(0, 1, 0, Some(3), None).unwrap()), None);
        assert_eq!(forecast_count(&f), 60);
    }

    fn forecast_count(f: &Folder) -> usize {
        // Six whole-sample rows of one horizon each, n = 10 forecasts each.
        f.forecast_count
    }

    #[test]
    fn groups_follow_rank_then_grid_order_and_leaders_leave_out_the_benchmark() {
        // By definition: rank 1 first; equal ranks in the grid's candidate
        // order; the benchmark is never a leader.
        let f = folder("rmse");
        let ix = Index::new(&f);
        let order: Vec<usize> = ix
            .group(0, 0, Some(1))
            .iter()
            .map(|r| r.candidate)
            .collect();
        assert_eq!(order, [1, 2, 0]);
        assert_eq!(ix.leaders(0, 0, Some(3), 3), [1, 2]);
        assert_eq!(ix.leaders(0, 0, Some(1), 1), [1]);
        assert!(ix.group(0, 0, None).is_empty());
    }

    #[test]
    fn the_ranking_metric_is_the_declared_one() {
        let f = folder("mae");
        let ix = Index::new(&f);
        assert_eq!((ix.rmse, ix.rank_by), (Some(0), Some(1)));
        let ar2 = ix.score(0, 2, 0, Some(1), None).unwrap();
        assert_eq!(ix.ranked_value(ar2), Some(1.75));
        assert_eq!(ix.ranked_words(), "MAE");
        assert_eq!(Index::new(&folder("rmse")).ranked_words(), "RMSE");
    }
}
