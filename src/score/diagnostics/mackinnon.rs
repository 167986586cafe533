//! MacKinnon (1994)'s approximate p-values and MacKinnon (2010)'s
//! finite-sample critical values of the Dickey–Fuller τ statistic. The
//! coefficient tables are MacKinnon's as transcribed in statsmodels 0.14.4
//! (`statsmodels/tsa/adfvalues.py`), literals unchanged (the scaling
//! factors statsmodels applies at run time are applied here too).

use crate::numerics::dist::normal_cdf;

/// Evaluates a polynomial with coefficients from the highest power down,
/// by Horner's rule in the same order as `numpy.polyval`.
fn polyval_desc(coef_desc: &[f64], x: f64) -> f64 {
    let mut y = 0.0;
    for &c in coef_desc {
        y = y * x + c;
    }
    y
}

/// MacKinnon (1994) approximate p-value of a Dickey–Fuller τ statistic with
/// a constant (left tail), for `n_series` = 1 … 6 integrated series (1 for
/// the ADF test; more for Engle–Granger cointegration residuals).
///
/// p = Φ(γ₀ + γ₁τ + γ₂τ² [+ γ₃τ³]) with the "small p" coefficients for
/// τ ≤ τ*, the "large p" coefficients above, 0 below τ_min and 1 above τ_max
/// — MacKinnon (1994) tables as transcribed in statsmodels 0.14.4
/// (`mackinnonp`, which uses these tables for all N).
///
/// `None` for `n_series` outside 1 … 6 or a NaN statistic.
pub(super) fn mackinnon_p(stat: f64, n_series: usize) -> Option<f64> {
    if stat.is_nan() || !(1..=6).contains(&n_series) {
        return None;
    }
    if stat == f64::INFINITY {
        return Some(1.0);
    }
    if stat == f64::NEG_INFINITY {
        return Some(0.0);
    }
    let i = n_series - 1;
    let (star, min, max, small, large) = (
        &TAU_STAR_C,
        &TAU_MIN_C,
        &TAU_MAX_C,
        &TAU_C_SMALLP,
        &TAU_C_LARGEP,
    );
    if stat > max[i] {
        return Some(1.0);
    }
    if stat < min[i] {
        return Some(0.0);
    }
    let z = if stat <= star[i] {
        let c = small[i];
        // statsmodels scales the small-p table by [1, 1, 1e-2]
        let c = [c[0], c[1], c[2] * 1e-2];
        polyval_desc(&[c[2], c[1], c[0]], stat)
    } else {
        let c = large[i];
        // statsmodels scales the large-p table by [1, 1e-1, 1e-1, 1e-2]
        let c = [c[0], c[1] * 1e-1, c[2] * 1e-1, c[3] * 1e-2];
        polyval_desc(&[c[3], c[2], c[1], c[0]], stat)
    };
    let p = normal_cdf(z);
    p.is_finite().then_some(p)
}

/// MacKinnon (2010) critical values of the Dickey–Fuller τ statistic with a
/// constant at 1 %, 5 % and 10 %, for `n_series` = 1 … 12 integrated
/// series and sample size `nobs`
/// (`None` = asymptotic): c = β_∞ + β₁/T + β₂/T² + β₃/T³ — MacKinnon (2010)
/// tables as transcribed in statsmodels 0.14.4 (`mackinnoncrit`).
///
/// `None` for an unsupported `n_series` or a `nobs` that is not positive
/// and finite.
pub(super) fn mackinnon_crit(n_series: usize, nobs: Option<f64>) -> Option<[f64; 3]> {
    if n_series == 0 {
        return None;
    }
    let i = n_series - 1;
    let table: &[[f64; 4]; 3] = TAU_C_2010.get(i)?;
    match nobs {
        None => Some([table[0][0], table[1][0], table[2][0]]),
        Some(t) => {
            if !(t.is_finite() && t > 0.0) {
                return None;
            }
            let x = 1.0 / t;
            let mut out = [0.0; 3];
            for (o, c) in out.iter_mut().zip(table.iter()) {
                *o = polyval_desc(&[c[3], c[2], c[1], c[0]], x);
            }
            Some(out)
        }
    }
}

// MacKinnon's tables for the regression with a constant, as transcribed in
// statsmodels 0.14.4. Index: N − 1.

const TAU_STAR_C: [f64; 6] = [-1.61, -2.62, -3.13, -3.47, -3.78, -3.93];
const TAU_MIN_C: [f64; 6] = [-18.83, -18.86, -23.48, -28.07, -25.96, -23.27];
const TAU_MAX_C: [f64; 6] = [2.74, 0.92, 0.55, 0.61, 0.79, 1.0];
const TAU_C_SMALLP: [[f64; 3]; 6] = [
    [2.1659, 1.4412, 3.8269],
    [2.92, 1.5012, 3.9796],
    [3.4699, 1.4856, 3.164],
    [3.9673, 1.4777, 2.6315],
    [4.5509, 1.5338, 2.9545],
    [5.1399, 1.6036, 3.4445],
];
const TAU_C_LARGEP: [[f64; 4]; 6] = [
    [1.7339, 9.3202, -1.2745, -1.0368],
    [2.1945, 6.4695, -2.9198, -4.2377],
    [2.5893, 4.5168, -3.6529, -5.0074],
    [3.0387, 4.5452, -3.3666, -4.1921],
    [3.5049, 5.2098, -2.9158, -3.3468],
    [3.9489, 5.8933, -2.5359, -2.721],
];
const TAU_C_2010: [[[f64; 4]; 3]; 12] = [
    [
        [-3.43035, -6.5393, -16.786, -79.433],
        [-2.86154, -2.8903, -4.234, -40.040],
        [-2.56677, -1.5384, -2.809, 0.0],
    ],
    [
        [-3.89644, -10.9519, -33.527, 0.0],
        [-3.33613, -6.1101, -6.823, 0.0],
        [-3.04445, -4.2412, -2.720, 0.0],
    ],
    [
        [-4.29374, -14.4354, -33.195, 47.433],
        [-3.74066, -8.5632, -10.852, 27.982],
        [-3.45218, -6.2143, -3.718, 0.0],
    ],
    [
        [-4.64332, -18.1031, -37.972, 0.0],
        [-4.09600, -11.2349, -11.175, 0.0],
        [-3.81020, -8.3931, -4.137, 0.0],
    ],
    [
        [-4.95756, -21.8883, -45.142, 0.0],
        [-4.41519, -14.0405, -12.575, 0.0],
        [-4.13157, -10.7417, -3.784, 0.0],
    ],
    [
        [-5.24568, -25.6688, -57.737, 88.639],
        [-4.70693, -16.9178, -17.492, 60.007],
        [-4.42501, -13.1875, -5.104, 27.877],
    ],
    [
        [-5.51233, -29.5760, -69.398, 164.295],
        [-4.97684, -19.9021, -22.045, 110.761],
        [-4.69648, -15.7315, -5.104, 27.877],
    ],
    [
        [-5.76202, -33.5258, -82.189, 256.289],
        [-5.22924, -23.0023, -24.646, 144.479],
        [-4.95007, -18.3959, -7.344, 94.872],
    ],
    [
        [-5.99742, -37.6572, -87.365, 248.316],
        [-5.46697, -26.2057, -26.627, 176.382],
        [-5.18897, -21.1377, -9.484, 172.704],
    ],
    [
        [-6.22103, -41.7154, -102.680, 389.33],
        [-5.69244, -29.4521, -30.994, 251.016],
        [-5.41533, -24.0006, -7.514, 163.049],
    ],
    [
        [-6.43377, -46.0084, -106.809, 352.752],
        [-5.90714, -32.8336, -30.275, 249.994],
        [-5.63086, -26.9693, -4.083, 151.427],
    ],
    [
        [-6.63790, -50.2095, -124.156, 579.622],
        [-6.11279, -36.2681, -32.505, 314.802],
        [-5.83724, -29.9864, -2.686, 184.116],
    ],
];
