//! The forecast-comparison tests of `scoring.tests` (SPEC §4) per target ×
//! scheme × horizon — Diebold-Mariano against the benchmark, Clark-West for
//! nested pairs, the model confidence set and the data-snooping test over
//! the whole grid — plus the in-sample/out-of-sample rank correlation.
//! Tests are never run on the pooled `all` horizon. Bootstrap draws are
//! seeded from `seed` and the group's name, never from thread scheduling.

use super::bootstrap::{model_confidence_set, superior_predictive_ability};
use super::calibration::{berkowitz, christoffersen};
use super::efficiency::mincer_zarnowitz;
use super::pairwise::{clark_west, diebold_mariano, encompassing, spearman, TestResult};
use super::{group_errors, in_sample_comparable, in_sample_rmse, rmse, Errors};
use crate::digest::sha256_hex;
use crate::spec::{Candidate, Experiment, Family, Trend};
use std::borrow::Cow;

#[derive(Debug, Clone, PartialEq)]
pub struct TestRow {
    pub target: usize,
    pub scheme: usize,
    pub horizon: usize,
    /// The test's name; calibration rows carry their interval level
    /// (`calibration_uc_80`).
    pub test: Cow<'static, str>,
    pub candidate: Option<usize>,
    pub versus: Option<usize>,
    pub statistic: Option<f64>,
    pub p_value: Option<f64>,
    /// Model confidence set membership at `alpha`.
    pub in_set: Option<bool>,
    /// 5 % critical value where the test has one instead of a p-value (fluctuation).
    pub critical_value: Option<f64>,
    /// The snooping test's lower and upper p-values (Hansen 2005); its
    /// consistent p-value is `p_value`.
    pub p_lower: Option<f64>,
    pub p_upper: Option<f64>,
}

/// Whether `small` is nested in `big` (SPEC §4's rule for clark_west):
/// naive in ar and ardl with p ≥ 1; mean in ar and ardl with an intercept;
/// ar(p) in ar(p′) and ardl(p′,q) for p ≤ p′ with the same or a richer
/// trend; ardl(p,q) in ardl(p′,q′) for p ≤ p′, q ≤ q′ with the same
/// predictors (and the same or a richer trend). Candidates with `select`
/// are nested in nothing.
pub fn nested(small: &Candidate, big: &Candidate) -> bool {
    if small.id == big.id {
        return false;
    }
    let (big_p, big_trend) = match &big.family {
        Family::Ar { lags, trend } => (*lags, *trend),
        Family::Ardl { lags, trend, .. } => (*lags, *trend),
        _ => return false,
    };
    match &small.family {
        Family::Naive => big_p >= 1,
        Family::Mean => big_trend != Trend::None,
        Family::Ar { lags, trend } => *lags <= big_p && *trend <= big_trend,
        Family::Ardl {
            lags,
            predictor_lags,
            predictors,
            trend,
        } => match &big.family {
            Family::Ardl {
                predictor_lags: big_q,
                predictors: big_preds,
                ..
            } => {
                *lags <= big_p
                    && predictor_lags <= big_q
                    && predictors == big_preds
                    && *trend <= big_trend
            }
            _ => false,
        },
        _ => false,
    }
}

/// A stable seed for one bootstrap: the experiment's seed mixed with the
/// group's name, so draws do not depend on order or threads.
fn group_seed(exp: &Experiment, key: &str) -> u64 {
    let hex = sha256_hex(key.as_bytes());
    let h = u64::from_str_radix(&hex[..16], 16).unwrap_or(0);
    exp.seed ^ h
}

fn squared(e: &Errors) -> Vec<f64> {
    (0..e.len()).map(|i| e.error(i).powi(2)).collect()
}

fn errors_of(e: &Errors) -> Vec<f64> {
    (0..e.len()).map(|i| e.error(i)).collect()
}

/// One target × scheme × horizon: the candidates' errors there.
struct Group<'a> {
    exp: &'a Experiment,
    target: usize,
    scheme: usize,
    horizon: usize,
    /// "target/scheme/horizon", which seeds the group's bootstraps.
    name: String,
    errs: Vec<Errors>,
}

impl Group<'_> {
    fn row(
        &self,
        test: impl Into<Cow<'static, str>>,
        candidate: Option<usize>,
        versus: Option<usize>,
        r: Option<TestResult>,
    ) -> TestRow {
        TestRow {
            target: self.target,
            scheme: self.scheme,
            horizon: self.horizon,
            test: test.into(),
            candidate,
            versus,
            statistic: r.map(|r| r.statistic),
            p_value: r.map(|r| r.p_value),
            in_set: None,
            critical_value: None,
            p_lower: None,
            p_upper: None,
        }
    }

    /// Diebold-Mariano of every candidate against the benchmark.
    fn diebold_mariano(&self, rows: &mut Vec<TestRow>) {
        let bench = self.exp.benchmark;
        let ev = errors_of(&self.errs[bench]);
        for c in (0..self.errs.len()).filter(|&c| c != bench) {
            let r = diebold_mariano(&errors_of(&self.errs[c]), &ev, self.horizon);
            rows.push(self.row("diebold_mariano", Some(c), Some(bench), r));
        }
    }

    /// `diebold_mariano: pairs`: every pair that leaves the benchmark out
    /// (its pairs are the rows of [`Self::diebold_mariano`]), the earlier
    /// candidate of the file as `candidate`. Swapping a pair negates d_t,
    /// so the statistic changes sign and the p-value stays: each entry of
    /// the matrix is the single-pair test of SPEC §4 by construction.
    fn diebold_mariano_pairs(&self, rows: &mut Vec<TestRow>) {
        let bench = self.exp.benchmark;
        let n_c = self.errs.len();
        for c in (0..n_c).filter(|&c| c != bench) {
            let ec = errors_of(&self.errs[c]);
            for v in (c + 1..n_c).filter(|&v| v != bench) {
                let r = diebold_mariano(&ec, &errors_of(&self.errs[v]), self.horizon);
                rows.push(self.row("diebold_mariano", Some(c), Some(v), r));
            }
        }
    }

    /// Harvey, Leybourne & Newbold (1998): does `versus` encompass each
    /// other candidate?
    fn encompassing(&self, versus: usize, rows: &mut Vec<TestRow>) {
        let ev = errors_of(&self.errs[versus]);
        for c in (0..self.errs.len()).filter(|&c| c != versus) {
            let r = encompassing(&errors_of(&self.errs[c]), &ev, self.horizon);
            rows.push(self.row("encompassing", Some(c), Some(versus), r));
        }
    }

    /// Mincer–Zarnowitz per candidate: the joint Wald test (`efficiency`),
    /// then the intercept and the slope with their own p-values (a = 0,
    /// b = 1) as `efficiency_intercept` and `efficiency_slope`, whose
    /// statistic is the estimate.
    fn efficiency(&self, rows: &mut Vec<TestRow>) {
        for (c, e) in self.errs.iter().enumerate() {
            let r = mincer_zarnowitz(&e.actual, &e.forecast, self.horizon);
            let result = |statistic: f64, p_value: f64| TestResult { statistic, p_value };
            rows.push(self.row(
                "efficiency",
                Some(c),
                None,
                r.map(|r| result(r.wald, r.p_wald)),
            ));
            rows.push(self.row(
                "efficiency_intercept",
                Some(c),
                None,
                r.map(|r| result(r.intercept, r.p_intercept)),
            ));
            rows.push(self.row(
                "efficiency_slope",
                Some(c),
                None,
                r.map(|r| result(r.slope, r.p_slope)),
            ));
        }
    }

    /// Calibration of the candidates with a forecast variance for every
    /// forecast: Christoffersen's three tests per interval level
    /// (`calibration_uc_<c>`, `calibration_ind_<c>`, `calibration_cc_<c>`),
    /// then Berkowitz's test of the transformed PITs (`calibration_pit`).
    fn calibration(&self, rows: &mut Vec<TestRow>) {
        for (c, e) in self.errs.iter().enumerate() {
            // Model intervals: every forecast has a variance, or the
            // candidate has none; past errors: the forecasts from the first
            // with enough known errors on.
            if e.is_empty() || (!e.past() && e.sds().is_none()) {
                continue;
            }
            for level in &self.exp.intervals {
                let misses: Vec<bool> = (0..e.len())
                    .filter_map(|i| {
                        let (lo, hi) = e.bounds(i, level.level)?;
                        Some(!(lo..=hi).contains(&e.actual[i]))
                    })
                    .collect();
                let r = christoffersen(&misses, level.level);
                for (name, t) in [
                    ("uc", r.map(|r| r.unconditional)),
                    ("ind", r.map(|r| r.independence)),
                    ("cc", r.map(|r| r.conditional)),
                ] {
                    let test = format!("calibration_{name}_{}", level.percent);
                    rows.push(self.row(test, Some(c), None, t));
                }
            }
            if let Some(sds) = e.sds().filter(|_| !e.past()) {
                let z: Option<Vec<f64>> = (0..e.len())
                    .map(|i| (sds[i] > 0.0).then(|| e.standardised(i, sds[i])))
                    .collect();
                let r = z.and_then(|z| berkowitz(&z));
                rows.push(self.row("calibration_pit", Some(c), None, r));
            }
        }
    }

    /// Clark-West of every nested pair with the benchmark as the small
    /// model (or of every nested pair under `all_pairs`).
    fn clark_west(&self, rows: &mut Vec<TestRow>) {
        let exp = self.exp;
        let n_c = self.errs.len();
        for big in 0..n_c {
            for small in 0..n_c {
                let with_bench = small == exp.benchmark;
                if !(with_bench || exp.tests.clark_west_all_pairs) {
                    continue;
                }
                if !nested(&exp.candidates[small], &exp.candidates[big]) {
                    continue;
                }
                let r = clark_west(
                    &errors_of(&self.errs[big]),
                    &errors_of(&self.errs[small]),
                    &self.errs[big].forecast,
                    &self.errs[small].forecast,
                    self.horizon,
                );
                rows.push(self.row("clark_west", Some(big), Some(small), r));
            }
        }
    }

    /// The candidates with a full set of forecasts, which the bootstrap
    /// tests use (a failed likelihood cell has none).
    fn complete(&self) -> Vec<usize> {
        let full = self.errs.iter().map(Errors::len).max().unwrap_or(0);
        (0..self.errs.len())
            .filter(|&c| self.errs[c].len() == full && full > 0)
            .collect()
    }

    fn confidence_set(&self, alpha: f64, resamples: usize, rows: &mut Vec<TestRow>) {
        let complete = self.complete();
        let losses: Vec<Vec<f64>> = complete.iter().map(|&c| squared(&self.errs[c])).collect();
        let seed = group_seed(self.exp, &format!("{}/confidence_set", self.name));
        let result = model_confidence_set(&losses, alpha, resamples, seed);
        for c in 0..self.errs.len() {
            let k = complete.iter().position(|&x| x == c);
            rows.push(TestRow {
                p_value: result.as_ref().zip(k).map(|(r, k)| r.p_values[k]),
                in_set: result.as_ref().zip(k).map(|(r, k)| r.included[k]),
                ..self.row("confidence_set", Some(c), None, None)
            });
        }
    }

    /// Hansen (2005): does some candidate of the searched grid beat the
    /// benchmark? The row names the candidate with the largest studentised
    /// gain (the one the statistic is), never the leader by the ranking
    /// metric; its p-value is the consistent one, with the lower and upper
    /// ones beside it.
    fn snooping(&self, resamples: usize) -> TestRow {
        let exp = self.exp;
        let bench = exp.benchmark;
        let others: Vec<usize> = self
            .complete()
            .into_iter()
            .filter(|&c| c != bench)
            .collect();
        let losses: Vec<Vec<f64>> = others.iter().map(|&c| squared(&self.errs[c])).collect();
        let seed = group_seed(exp, &format!("{}/snooping", self.name));
        let result = superior_predictive_ability(
            &squared(&self.errs[bench]),
            &losses,
            resamples,
            seed,
            None,
        );
        TestRow {
            statistic: result.as_ref().map(|r| r.statistic),
            p_value: result.as_ref().map(|r| r.p_consistent),
            p_lower: result.as_ref().map(|r| r.p_lower),
            p_upper: result.as_ref().map(|r| r.p_upper),
            ..self.row(
                "snooping",
                result.as_ref().map(|r| others[r.driver]),
                Some(bench),
                None,
            )
        }
    }

    /// Overfitting: Spearman correlation of in-sample and out-of-sample
    /// rankings, when at least three candidates have both and their
    /// in-sample errors are of this horizon (like with like).
    fn rank_correlation(&self) -> Option<TestRow> {
        let pairs: Vec<(f64, f64)> = self
            .errs
            .iter()
            .enumerate()
            .filter(|(c, _)| in_sample_comparable(self.exp, *c, Some(self.horizon)))
            .filter_map(|(_, e)| Some((in_sample_rmse(e)?, rmse(e)?)))
            .collect();
        if pairs.len() < 3 {
            return None;
        }
        let a: Vec<f64> = pairs.iter().map(|p| p.0).collect();
        let b: Vec<f64> = pairs.iter().map(|p| p.1).collect();
        Some(TestRow {
            statistic: spearman(&a, &b),
            ..self.row("rank_correlation", None, None, None)
        })
    }
}

pub fn run(exp: &Experiment, errors: &[Vec<Errors>]) -> Vec<TestRow> {
    let mut rows = Vec::new();
    let n_c = exp.candidates.len();
    for (t, target) in exp.targets.iter().enumerate() {
        for (s, scheme) in exp.schemes.iter().enumerate() {
            for (hi, &h) in exp.horizons.iter().enumerate() {
                let group = Group {
                    exp,
                    target: t,
                    scheme: s,
                    horizon: h,
                    name: format!("{}/{}/{}", target.name, scheme.id, h),
                    errs: (0..n_c)
                        .map(|c| group_errors(exp, errors, t, c, s, Some(hi), None))
                        .collect(),
                };
                if exp.tests.diebold_mariano {
                    group.diebold_mariano(&mut rows);
                }
                if exp.tests.diebold_mariano_pairs {
                    group.diebold_mariano_pairs(&mut rows);
                }
                if exp.tests.clark_west {
                    group.clark_west(&mut rows);
                }
                if let Some(cs) = &exp.tests.confidence_set {
                    group.confidence_set(cs.alpha, cs.resamples, &mut rows);
                }
                if let Some(sn) = &exp.tests.snooping {
                    rows.push(group.snooping(sn.resamples));
                }
                rows.extend(group.rank_correlation());
                if let Some(versus) = exp.tests.encompassing {
                    group.encompassing(versus, &mut rows);
                }
                if exp.tests.efficiency {
                    group.efficiency(&mut rows);
                }
                if exp.tests.calibration {
                    group.calibration(&mut rows);
                }
            }
        }
    }
    rows
}

#[cfg(test)]
mod tests {
    use super::*;

    fn cand(id: &str, family: Family) -> Candidate {
        Candidate {
            id: id.into(),
            family,
            line: 1,
            transform: None,
        }
    }

    #[test]
    fn nesting_follows_the_spec_rule() {
        // Cases read off SPEC §4's nesting rule.
        let naive = cand("naive", Family::Naive);
        let mean = cand("mean", Family::Mean);
        let ar1 = cand(
            "ar(1)",
            Family::Ar {
                lags: 1,
                trend: Trend::Constant,
            },
        );
        let ar2 = cand(
            "ar(2)",
            Family::Ar {
                lags: 2,
                trend: Trend::Constant,
            },
        );
        let ar2n = cand(
            "ar(2,none)",
            Family::Ar {
                lags: 2,
                trend: Trend::None,
            },
        );
        let ardl21 = cand(
            "ardl(2,1)",
            Family::Ardl {
                lags: 2,
                predictor_lags: 1,
                predictors: vec![0],
                trend: Trend::Constant,
            },
        );
        let ardl01 = cand(
            "ardl(0,1)",
            Family::Ardl {
                lags: 0,
                predictor_lags: 1,
                predictors: vec![0],
                trend: Trend::Constant,
            },
        );
        let ardl22 = cand(
            "ardl(2,2)",
            Family::Ardl {
                lags: 2,
                predictor_lags: 2,
                predictors: vec![0],
                trend: Trend::Constant,
            },
        );
        let other = cand(
            "ardl_x(2,2)",
            Family::Ardl {
                lags: 2,
                predictor_lags: 2,
                predictors: vec![1],
                trend: Trend::Constant,
            },
        );
        let sel = cand(
            "ar(bic,8)",
            Family::ArSelect {
                criterion: crate::spec::Criterion::Bic,
                max_lags: 8,
                trend: Trend::Constant,
            },
        );
        assert!(nested(&naive, &ar1) && nested(&naive, &ardl21));
        assert!(!nested(&naive, &ardl01));
        assert!(nested(&mean, &ar1) && !nested(&mean, &ar2n));
        assert!(nested(&ar1, &ar2) && !nested(&ar2, &ar1));
        assert!(nested(&ar2n, &ar2) && !nested(&ar2, &ar2n));
        assert!(nested(&ar2, &ardl21) && nested(&ardl21, &ardl22));
        assert!(!nested(&ardl21, &other));
        assert!(!nested(&ar1, &sel) && !nested(&naive, &sel));
    }
}
