//! `outturn kinds`: every model family, metric and test, one line each with
//! its source.

pub fn text() -> String {
    let families: &[(&str, &str)] = &[
        ("naive", "the last observed value (random walk)"),
        ("mean", "the mean of the estimation sample"),
        ("drift", "the last value plus h times the average change over the estimation sample"),
        ("seasonal_naive", "the value one season earlier (m = 4, 12, 52, 7)"),
        ("ar", "autoregression of order p by least squares; direct or iterated multi-step; select: aic|bic|hqic"),
        ("ardl", "autoregressive distributed lag: p own lags and q lags of each predictor, release lags respected"),
        ("arima", "ARIMA(p,d,q)(P,D,Q)m by exact Gaussian likelihood via the Kalman filter, with known-ahead regressors and dummies (Harvey 1989; Durbin & Koopman 2012)"),
        ("smoothing", "exponential smoothing, error additive|multiplicative, trend none|additive|damped, season none|additive|multiplicative; select: aicc (Hyndman et al. 2008)"),
        ("theta", "simple exponential smoothing with half the trend line's slope as drift; deseasonalise: none|multiplicative (Assimakopoulos & Nikolopoulos 2000; Hyndman & Billah 2003)"),
        ("combination", "mean, inverse-MSE-weighted or trimmed mean of member forecasts (Bates & Granger 1969)"),
    ];
    let metrics: &[(&str, &str)] = &[
        ("rmse", "root mean squared error"),
        ("mae", "mean absolute error"),
        ("bias", "mean error (actual − forecast)"),
        ("mape", "mean absolute percentage error; empty when an actual is 0"),
        ("smape", "symmetric MAPE, 200·|e|/(|actual|+|forecast|)"),
        ("mase", "MAE scaled by the in-sample seasonal-naive MAE (Hyndman & Koehler 2006)"),
        ("r2_oos", "out-of-sample R² against the benchmark (Campbell & Thompson 2008)"),
        ("coverage", "share of outturns inside the Gaussian interval, per level"),
        ("interval_score", "width plus penalties for misses, per level (Gneiting & Raftery 2007)"),
        ("crps", "continuous ranked probability score of the Gaussian forecast (Gneiting & Raftery 2007)"),
        ("quantile_score", "mean pinball loss over the quantile columns (Koenker & Bassett 1978; Gneiting & Raftery 2007)"),
        ("log_score", "negative log density of the Gaussian forecast at the outturn; lower is better (Gneiting & Raftery 2007)"),
    ];
    let tests: &[(&str, &str)] = &[
        ("diebold_mariano", "equal squared-error accuracy against the benchmark (pairs: every pair), HLN small-sample correction (Diebold & Mariano 1995; Harvey, Leybourne & Newbold 1997)"),
        ("clark_west", "equal accuracy of nested models, adjusted for estimation noise (Clark & West 2007)"),
        ("confidence_set", "the set of candidates not significantly worse than the best (Hansen, Lunde & Nason 2011)"),
        ("snooping", "does the best of the whole grid beat the benchmark once the search is counted (Hansen 2005, SPA)"),
        ("calibration", "interval misses: unconditional, independence and conditional coverage LR tests per level (Christoffersen 1998); the Gaussian PIT (Berkowitz 2001)"),
        ("efficiency", "regression of outturns on forecasts, Newey-West errors, Wald test of intercept 0 and slope 1 (Mincer & Zarnowitz 1969; Newey & West 1987)"),
        ("encompassing", "does the benchmark (or a named rival) already hold what a candidate's forecast knows (Harvey, Leybourne & Newbold 1998)"),
    ];
    // Run on every experiment: they are not keys of scoring.tests.
    let always: &[(&str, &str)] = &[
        ("fluctuation", "equal accuracy at every point in time, rolling window (Giacomini & Rossi 2010); tests.csv and stability.csv"),
        ("rank_correlation", "Spearman correlation of in-sample and out-of-sample rankings (overfitting diagnostic); tests.csv"),
        ("ljung_box", "autocorrelation left in a model's in-sample residuals (Ljung & Box 1978); diagnostics.csv"),
        ("adf", "augmented Dickey-Fuller unit-root test, AIC lag length, MacKinnon p-values (Said & Dickey 1984; MacKinnon 1994, 2010); diagnostics.csv"),
    ];
    // The parameter names each family writes to parameters.csv.
    let parameters: &[(&str, &str)] = &[
        ("naive", "sigma2"),
        ("mean", "constant, sigma2"),
        ("drift", "drift, sigma2"),
        ("seasonal_naive", "sigma2"),
        ("ar", "constant, trend, ar1..arp (ar1 the latest value), sigma2; per horizon when direct"),
        ("ardl", "as ar, then <predictor>_1..q per predictor (_1 its latest usable value)"),
        ("arima", "ar1.., ma1.., sar1.., sma1.., constant (d + D = 0) or drift, <regressor> per predictor or dummy, sigma2, loglik, aic, aicc, bic"),
        ("smoothing", "alpha, beta, gamma, phi (as the form has them), level_0, slope_0, season_0_1..m, sigma2, loglik, aic, aicc, bic"),
        ("theta", "alpha, drift (half the line's slope), sigma2"),
        ("combination", "none: its weights follow from the members' past errors; the members' parameters are written"),
    ];
    let mut out = String::new();
    for (title, rows) in [
        ("model families", families),
        ("metrics", metrics),
        ("tests (keys of scoring.tests)", tests),
        ("always run (not keys of scoring.tests)", always),
        ("parameters.csv names (docs/results-folder.md)", parameters),
    ] {
        out.push_str(title);
        out.push('\n');
        for (name, what) in rows {
            out.push_str(&format!("  {name:<17} {what}\n"));
        }
        if title == "tests (keys of scoring.tests)" {
            out.push_str("  (docs/experiment-file.md lists their settings)\n");
        }
        out.push('\n');
    }
    out
}
