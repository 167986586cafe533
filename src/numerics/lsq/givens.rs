//! Least squares grown row by row. Rows are folded into an upper-triangular
//! factor R by Givens rotations (an orthogonal QR built row by row), so an
//! expanding estimation window costs O(k²) per new row instead of a fresh
//! factorisation, and the normal equations are never formed. The residual
//! sum of squares is accumulated from the part of each row's dependent value
//! that the rotations leave over, which is exact in exact arithmetic and
//! numerically stable (Golub & Van Loan, "Matrix Computations", §5.1.8 and
//! §6.5 on updating QR factorisations).
//!
//! Rank deficiency is read off R's diagonal: column j is treated as lying in
//! the span of the earlier columns when |R_jj| ≤ RANK_TOLERANCE · ‖x_j‖, i.e.
//! when the sine of the angle between x_j and that span is below the
//! tolerance. The test is invariant to column scaling.

use std::fmt;

/// Relative tolerance of the rank test on R's diagonal (see module docs).
pub const RANK_TOLERANCE: f64 = 1e-9;

#[derive(Debug, Clone, PartialEq)]
pub enum LinalgError {
    /// Fewer rows than coefficients + 1.
    TooFewRows { rows: usize, coefficients: usize },
    /// Column `column` (0-based) is (nearly) a combination of earlier ones.
    RankDeficient { column: usize },
    /// A non-finite value entered the design.
    NonFinite,
}

impl fmt::Display for LinalgError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            LinalgError::TooFewRows { rows, coefficients } => write!(
                f,
                "{rows} estimation rows for {coefficients} coefficients; least squares needs at least {} (coefficients + 1)",
                coefficients + 1
            ),
            LinalgError::RankDeficient { column } => write!(
                f,
                "the design is singular or nearly so: regressor {} (counting the trend terms, then the target's lags, then each predictor's lags) is a linear combination of the earlier ones to within the relative tolerance {RANK_TOLERANCE:e} — a series that does not vary, or predictors that move together, cause this",
                column + 1
            ),
            LinalgError::NonFinite => write!(f, "a regressor or dependent value is not finite"),
        }
    }
}

impl std::error::Error for LinalgError {}

/// A least-squares problem accumulated row by row.
#[derive(Debug, Clone)]
pub struct LeastSquares {
    k: usize,
    /// Upper-triangular factor, row-major k × k.
    r: Vec<f64>,
    /// Qᵀy restricted to the first k components.
    qty: Vec<f64>,
    ssr: f64,
    rows: usize,
    /// Σ x_j² per column, for the scale-free rank test.
    col_sq: Vec<f64>,
    /// Running mean and sum of squared deviations of y (Welford 1962).
    y_mean: f64,
    y_m2: f64,
    scratch: Vec<f64>,
    finite: bool,
}

/// Coefficients and residual facts of a least-squares solution.
#[derive(Debug, Clone, PartialEq)]
pub struct Solution {
    pub coef: Vec<f64>,
    pub ssr: f64,
    pub rows: usize,
    /// Σ(y − ȳ)² of the dependent values.
    pub sst: f64,
}

impl Solution {
    /// SSR / rows: the in-sample mean squared error without degrees-of-freedom correction.
    pub fn mse(&self) -> f64 {
        self.ssr / self.rows as f64
    }
    /// SSR / (rows − k): the residual variance used for intervals.
    pub fn sigma2(&self) -> f64 {
        self.ssr / (self.rows - self.coef.len()) as f64
    }
}

impl LeastSquares {
    pub fn new(k: usize) -> Self {
        LeastSquares {
            k,
            r: vec![0.0; k * k],
            qty: vec![0.0; k],
            ssr: 0.0,
            rows: 0,
            col_sq: vec![0.0; k],
            y_mean: 0.0,
            y_m2: 0.0,
            scratch: vec![0.0; k],
            finite: true,
        }
    }

    pub fn rows(&self) -> usize {
        self.rows
    }

    pub fn coefficients(&self) -> usize {
        self.k
    }

    pub fn clear(&mut self) {
        self.r.iter_mut().for_each(|v| *v = 0.0);
        self.qty.iter_mut().for_each(|v| *v = 0.0);
        self.col_sq.iter_mut().for_each(|v| *v = 0.0);
        self.ssr = 0.0;
        self.rows = 0;
        self.y_mean = 0.0;
        self.y_m2 = 0.0;
        self.finite = true;
    }

    /// Fold one row (x, y) into the factorisation.
    #[allow(clippy::needless_range_loop)]
    pub fn add_row(&mut self, x: &[f64], y: f64) {
        debug_assert_eq!(x.len(), self.k);
        let k = self.k;
        if !y.is_finite() || x.iter().any(|v| !v.is_finite()) {
            self.finite = false;
        }
        self.scratch.copy_from_slice(x);
        let mut yr = y;
        for i in 0..k {
            let b = self.scratch[i];
            if b == 0.0 {
                continue;
            }
            let a = self.r[i * k + i];
            // sqrt(a² + b²) directly; hypot (slow in libm) only where the squares overflow.
            let sq = a * a + b * b;
            let rho = if sq.is_finite() && sq > f64::MIN_POSITIVE {
                sq.sqrt()
            } else {
                a.hypot(b)
            };
            let (c, s) = (a / rho, b / rho);
            let row = &mut self.r[i * k..(i + 1) * k];
            row[i] = rho;
            self.scratch[i] = 0.0;
            for j in (i + 1)..k {
                let rij = row[j];
                let xj = self.scratch[j];
                row[j] = c * rij + s * xj;
                self.scratch[j] = c * xj - s * rij;
            }
            let q = self.qty[i];
            self.qty[i] = c * q + s * yr;
            yr = c * yr - s * q;
        }
        self.ssr += yr * yr;
        for (acc, v) in self.col_sq.iter_mut().zip(x) {
            *acc += v * v;
        }
        self.rows += 1;
        let delta = y - self.y_mean;
        self.y_mean += delta / self.rows as f64;
        self.y_m2 += delta * (y - self.y_mean);
    }

    /// Check the row count and rank, without solving.
    pub fn check(&self) -> Result<(), LinalgError> {
        if !self.finite {
            return Err(LinalgError::NonFinite);
        }
        if self.rows < self.k + 1 {
            return Err(LinalgError::TooFewRows {
                rows: self.rows,
                coefficients: self.k,
            });
        }
        for j in 0..self.k {
            let diag = self.r[j * self.k + j].abs();
            if diag <= RANK_TOLERANCE * self.col_sq[j].sqrt() || self.col_sq[j] == 0.0 {
                return Err(LinalgError::RankDeficient { column: j });
            }
        }
        Ok(())
    }

    /// Solve R b = Qᵀy by back substitution into `coef` (no allocation).
    #[allow(clippy::needless_range_loop)]
    pub fn solve_into(&self, coef: &mut Vec<f64>) -> Result<(), LinalgError> {
        self.check()?;
        let k = self.k;
        coef.clear();
        coef.resize(k, 0.0);
        for i in (0..k).rev() {
            let mut acc = self.qty[i];
            for j in (i + 1)..k {
                acc -= self.r[i * k + j] * coef[j];
            }
            coef[i] = acc / self.r[i * k + i];
        }
        Ok(())
    }

    pub fn solve(&self) -> Result<Solution, LinalgError> {
        let mut coef = Vec::with_capacity(self.k);
        self.solve_into(&mut coef)?;
        Ok(Solution {
            coef,
            ssr: self.ssr,
            rows: self.rows,
            sst: self.y_m2,
        })
    }

    pub fn ssr(&self) -> f64 {
        self.ssr
    }

    /// The diagonal of (X′X)⁻¹ = R⁻¹R⁻ᵀ: the squared row norms of R⁻¹,
    /// for the classical standard errors s·√((X′X)⁻¹)_jj. R⁻¹ is upper
    /// triangular and found column by column by back substitution.
    #[allow(clippy::needless_range_loop)]
    pub fn xtx_inv_diag(&self) -> Vec<f64> {
        let k = self.k;
        let mut inv = vec![0.0; k * k];
        for c in 0..k {
            for i in (0..=c).rev() {
                let mut acc = if i == c { 1.0 } else { 0.0 };
                for j in (i + 1)..=c {
                    acc -= self.r[i * k + j] * inv[j * k + c];
                }
                inv[i * k + c] = acc / self.r[i * k + i];
            }
        }
        (0..k)
            .map(|i| (i..k).map(|c| inv[i * k + c] * inv[i * k + c]).sum())
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn exact_line_is_recovered() {
        // y = 2 + 3x exactly: a property that holds by construction.
        let mut ls = LeastSquares::new(2);
        for x in [0.0, 1.0, 2.0, 5.0] {
            ls.add_row(&[1.0, x], 2.0 + 3.0 * x);
        }
        let s = ls.solve().unwrap();
        assert!((s.coef[0] - 2.0).abs() < 1e-12 && (s.coef[1] - 3.0).abs() < 1e-12);
        assert!(s.ssr < 1e-20);
    }

    #[test]
    fn collinear_columns_are_refused() {
        let mut ls = LeastSquares::new(3);
        for x in [0.0, 1.0, 2.0, 5.0, 7.0] {
            ls.add_row(&[1.0, x, 2.0 * x], x * x);
        }
        assert_eq!(ls.check(), Err(LinalgError::RankDeficient { column: 2 }));
        let mut constant = LeastSquares::new(2);
        for _ in 0..5 {
            constant.add_row(&[1.0, 4.0], 1.0);
        }
        assert_eq!(
            constant.check(),
            Err(LinalgError::RankDeficient { column: 1 })
        );
    }

    #[test]
    fn too_few_rows_are_refused() {
        let mut ls = LeastSquares::new(2);
        ls.add_row(&[1.0, 1.0], 1.0);
        ls.add_row(&[1.0, 2.0], 3.0);
        assert_eq!(
            ls.check(),
            Err(LinalgError::TooFewRows {
                rows: 2,
                coefficients: 2
            })
        );
    }
}
