//! models: one file per family. Each family turns a cell's target data and
//! scheme into forecast rows; shared least squares lives in `crate::linalg`.

pub mod arima;
pub mod combination;
pub mod linear;
pub mod simple;
pub mod smoothing;
pub mod statespace;

/// One forecast of a backtest.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ForecastRow {
    pub horizon: usize,
    /// Origin position T.
    pub origin: usize,
    pub forecast: f64,
    /// In-sample MSE of the estimation that produced it (SPEC §4), if any.
    pub is_mse: Option<f64>,
    /// Σ(y − ȳ)²/rows of the dependent values of that estimation, so that
    /// 1 − is_mse/is_var is its centred in-sample R².
    pub is_var: Option<f64>,
    /// Forecast variance σ̂_h² for Gaussian intervals, if the family has one.
    pub variance: Option<f64>,
    /// The order chosen inside the training window, for candidates with `select`.
    pub order: Option<Order>,
}

/// The order chosen by a candidate with `select`, written like its id's
/// brackets: `3` for ar(3), `2,1` for ardl(2,1), `1,1,0` for arima(1,1,0).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Order {
    Ar(usize),
    Ardl(usize, usize),
    Arima(usize, usize, usize),
}

impl std::fmt::Display for Order {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Order::Ar(p) => write!(f, "{p}"),
            Order::Ardl(p, q) => write!(f, "{p},{q}"),
            Order::Arima(p, d, q) => write!(f, "{p},{d},{q}"),
        }
    }
}

/// One forecast beyond the data, from origin N.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OutlookRow {
    pub horizon: usize,
    /// None when an input it needs is not in the data (a known-ahead predictor's future value).
    pub forecast: Option<f64>,
    pub variance: Option<f64>,
}

/// Why a cell could not be estimated at some origin.
#[derive(Debug, Clone, PartialEq)]
pub struct EstimationProblem {
    pub horizon: usize,
    pub origin: usize,
    pub message: String,
}

/// Where a cell's estimation sample ends at each origin and how it is cut.
#[derive(Debug, Clone, Copy)]
pub struct Schedule<'a> {
    pub scheme: &'a crate::spec::Scheme,
    pub first_origin: usize,
    pub n: usize,
}

impl Schedule<'_> {
    pub fn origins(&self, horizon: usize) -> std::ops::RangeInclusive<usize> {
        crate::plan::origins(self.scheme, self.first_origin, self.n, horizon)
    }
    pub fn estimation_end(&self, origin: usize) -> usize {
        crate::plan::estimation_end(self.scheme, self.first_origin, origin)
    }
    pub fn window(&self) -> Option<usize> {
        match self.scheme.kind {
            crate::spec::SchemeKind::Rolling => self.scheme.window,
            _ => None,
        }
    }
}
