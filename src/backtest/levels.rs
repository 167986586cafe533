//! Forecasts in the data file's units (`scoring.units: original`): every
//! forecast a cell makes — backtest, outlook, and the look-ahead audit's
//! recomputation — goes through [`Scale::forecast`], which asks the model
//! for the transformed forecasts at every horizon 1..h (a cumulated level
//! needs them all) and turns them into levels with `models::level`.
//!
//! A level's variance comes from the covariance of the model's transformed
//! forecast errors where the model has one (`Model::error_covariance`);
//! otherwise it is known only where the level adds a single forecast to
//! known values (every horizon for `none` and `log`, h = 1 for `diff`,
//! `log_diff` and `pct_change`, h ≤ m for `seasonal_diff`). A row's
//! variance is the level's where the level is Gaussian (`none`, `diff`,
//! `seasonal_diff`, `pct_change` at h = 1, y_T²·var ẑ); a logged level
//! (`log`, `log_diff`) is log-normal and its row carries the variance of
//! the log level, which `score::Shape` reads (quantiles through exp).

use crate::models::level::{self, Centre};
use crate::models::{Model, Problem, Step};
use crate::spec::{BackTransform, Experiment, TargetData, Transform, Units};

/// How a cell's forecasts reach its rows: as the model makes them, or in
/// the data's units.
pub(crate) struct Scale<'a> {
    levels: Option<Levels<'a>>,
}

struct Levels<'a> {
    transform: Transform,
    season: usize,
    centre: Centre,
    target: &'a TargetData,
}

impl<'a> Scale<'a> {
    /// The scale of candidate `candidate`'s forecasts on `target`.
    pub(crate) fn of(exp: &Experiment, target: &'a TargetData, candidate: usize) -> Scale<'a> {
        let levels = (exp.units == Units::Original).then(|| Levels {
            transform: exp.transform_of(candidate),
            season: exp.season_length().unwrap_or(1),
            centre: match exp.back_transform {
                BackTransform::Median => Centre::Median,
                BackTransform::Mean => Centre::Mean,
            },
            target,
        });
        Scale { levels }
    }

    /// The forecasts from `origin` at `horizons` (ascending), in the
    /// scale's units.
    pub(crate) fn forecast<M: Model>(
        &self,
        model: &M,
        fit: &mut M::Fit,
        origin: usize,
        horizons: &[usize],
    ) -> Vec<Result<Step, Problem>> {
        let (Some(l), Some(&max_h)) = (&self.levels, horizons.last()) else {
            return model.forecast(fit, origin, horizons);
        };
        let all: Vec<usize> = (1..=max_h).collect();
        let steps = model.forecast(fit, origin, &all);
        let cov = match level::span(l.transform, l.season) {
            Some(s) if max_h > s => model.error_covariance(fit, origin, max_h),
            _ => None,
        };
        let levels = l.convert(origin, &steps, cov.as_deref());
        horizons.iter().map(|&h| levels[h - 1].clone()).collect()
    }
}

/// The target as candidate `c`'s model sees it: under its own transform,
/// that transform's series in place of the experiment's (the positions,
/// predictors and first origins are common to all candidates).
pub(crate) fn seen_by<'t>(
    exp: &Experiment,
    target: &'t TargetData,
    c: usize,
) -> std::borrow::Cow<'t, TargetData> {
    match exp.candidates[c].transform {
        Some(t) if t != exp.transform => {
            let mut own = target.clone();
            own.y = target.series(Some(t)).to_vec();
            std::borrow::Cow::Owned(own)
        }
        _ => std::borrow::Cow::Borrowed(target),
    }
}

impl Levels<'_> {
    /// Steps 1..=H in the data's units from the transformed steps 1..=H;
    /// a step whose transformed forecasts up to it are not all there fails
    /// with the first failure.
    fn convert(
        &self,
        origin: usize,
        steps: &[Result<Step, Problem>],
        cov: Option<&[f64]>,
    ) -> Vec<Result<Step, Problem>> {
        let t = self.transform;
        let z: Vec<f64> = steps
            .iter()
            .map_while(|s| s.as_ref().ok().map(|s| s.forecast))
            .collect();
        // The cumulation reads the last `span` levels, the last one at least.
        let span = level::span(t, self.season).unwrap_or(1);
        let known = self.target.levels_through(origin, span);
        let u = level::integrate(t, &known, self.season, &z).unwrap_or_default();
        let from_cov =
            cov.map(|c| level::level_variances_from_covariance(t, self.season, c, steps.len()));
        let last = known.last().copied().unwrap_or(f64::NAN);
        steps
            .iter()
            .enumerate()
            .map(|(i, step)| {
                let h = i + 1;
                if i >= u.len() {
                    let first = steps.iter().find_map(|s| s.as_ref().err()).cloned();
                    return Err(first.unwrap_or(Problem {
                        horizon: h,
                        message: "no level before the origin to cumulate from".into(),
                    }));
                }
                let step = step.as_ref().map_err(Clone::clone)?;
                let single = level::span(t, self.season).is_none_or(|s| h <= s);
                let v = from_cov
                    .as_ref()
                    .and_then(|v| v[i])
                    .or(if single { step.variance } else { None });
                let forecast = level::point(t, u[i], v, self.centre).ok_or_else(|| Problem {
                    horizon: h,
                    message: format!(
                        "back_transform: mean needs the variance of the forecast's log level, which this model does not give at horizon {h} under transform {}",
                        t.name()
                    ),
                })?;
                // Gaussian levels carry their variance; a logged level
                // carries its log's (the rows are log-normal, see
                // score::Shape); pct_change beyond one step has none.
                let variance = match t {
                    Transform::PctChange if h == 1 => v.map(|v| v * last * last),
                    Transform::PctChange => None,
                    _ => v,
                };
                // In-sample errors are in the transformed units: comparable
                // with the levels' only when nothing was transformed.
                let same = t == Transform::None;
                Ok(Step {
                    forecast,
                    variance,
                    is_mse: step.is_mse.filter(|_| same),
                    is_var: step.is_var.filter(|_| same),
                    order: step.order,
                })
            })
            .collect()
    }
}
