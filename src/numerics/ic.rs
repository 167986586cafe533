//! Information criteria and the selection by them, written once. The
//! penalty per parameter (AIC 2, Akaike 1974; BIC ln n, Schwarz 1978; HQIC
//! 2 ln ln n, Hannan & Quinn 1979) belongs to the experiment's criterion
//! names and comes in as a number.

/// A criterion of a Gaussian regression with σ² concentrated out, up to the
/// constant n·(ln 2π + 1) that does not change a comparison on one sample:
/// n·ln(SSR/n) + penalty·k.
pub(crate) fn concentrated_gaussian(ssr: f64, rows: usize, k: usize, penalty: f64) -> f64 {
    let n = rows as f64;
    n * (ssr / n).ln() + penalty * k as f64
}

/// A criterion of a log-likelihood ℓ with k parameters: −2ℓ + penalty·k
/// (AIC, BIC or HQIC by the penalty).
pub(crate) fn from_loglik(loglik: f64, k: usize, penalty: f64) -> f64 {
    -2.0 * loglik + penalty * k as f64
}

/// AICc (Hurvich & Tsai 1989) of a log-likelihood ℓ with k parameters on n
/// observations: −2ℓ + 2k + 2k(k + 1)/(n − k − 1); infinite when n ≤ k + 1.
pub(crate) fn aicc(loglik: f64, k: usize, n: usize) -> f64 {
    if n <= k + 1 {
        return f64::INFINITY;
    }
    let k = k as f64;
    -2.0 * loglik + 2.0 * k + 2.0 * k * (k + 1.0) / (n as f64 - k - 1.0)
}

/// AIC of a Gaussian linear regression as statsmodels computes it (its
/// `OLS(...).fit().aic`): llf = −(n/2)·ln(2π) − (n/2)·ln(SSR/n) − n/2,
/// AIC = −2·llf + 2k.
pub(crate) fn gaussian_regression_aic(ssr: f64, rows: usize, k: usize) -> f64 {
    let nobs = rows as f64;
    let nobs2 = nobs / 2.0;
    let llf = -nobs2 * (2.0 * std::f64::consts::PI).ln() - nobs2 * (ssr / nobs).ln() - nobs2;
    -2.0 * llf + 2.0 * k as f64
}

/// The smallest of the values offered and its index; ties go to the first
/// offered (the smaller order, when orders are offered in ascending order).
/// A value is taken when nothing is held yet or when it is strictly below
/// the one held, so callers that must skip non-finite values filter them.
#[derive(Debug, Clone, Copy, Default)]
pub(crate) struct Smallest {
    best: Option<(f64, usize)>,
}

impl Smallest {
    pub(crate) fn offer(&mut self, value: f64, index: usize) {
        if self.best.is_none_or(|(b, _)| value < b) {
            self.best = Some((value, index));
        }
    }

    /// (value, index) of the smallest, if anything was offered.
    pub(crate) fn get(self) -> Option<(f64, usize)> {
        self.best
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// By construction: ties keep the first; a NaN offered first is kept
    /// (nothing compares below it), as the callers' loops always did.
    #[test]
    fn smallest_keeps_the_first_of_ties() {
        let mut s = Smallest::default();
        for (i, v) in [3.0, 1.0, 2.0, 1.0].into_iter().enumerate() {
            s.offer(v, i);
        }
        assert_eq!(s.get(), Some((1.0, 1)));
        assert_eq!(Smallest::default().get(), None);
        let mut nan = Smallest::default();
        nan.offer(f64::NAN, 0);
        nan.offer(1.0, 1);
        assert_eq!(nan.get().map(|(_, i)| i), Some(0));
    }

    /// By the definitions, with ℓ = −10, k = 2 and n = 7.
    #[test]
    fn criteria_from_a_log_likelihood() {
        assert_eq!(from_loglik(-10.0, 2, 2.0), 24.0);
        let bic = from_loglik(-10.0, 2, 7f64.ln());
        assert!((bic - (20.0 + 2.0 * 7f64.ln())).abs() < 1e-12);
        // The concentrated and the full Gaussian AIC differ by n(ln 2π + 1).
        let (ssr, rows, k) = (12.5, 40, 3);
        let full = gaussian_regression_aic(ssr, rows, k);
        let conc = concentrated_gaussian(ssr, rows, k, 2.0);
        let constant = rows as f64 * ((2.0 * std::f64::consts::PI).ln() + 1.0);
        assert!((full - conc - constant).abs() < 1e-10);
    }
}
