//! Least squares of a whole design by Householder QR (Golub & Van Loan,
//! *Matrix Computations*, §5.1–5.2), for the problems that are solved at
//! once rather than grown row by row: the nested regressions of the ADF lag
//! search and the initial-state problems of exponential smoothing.
//!
//! Reflection j touches only columns j.. and the entries from its pivot row
//! on of every later column and of Qᵀy, so the R and Qᵀy of the first k
//! columns are those a QR of the first k columns alone computes, bit for
//! bit: one factorisation serves every leading subset of the columns.
//!
//! A column whose remaining norm is at most `dead` (an absolute threshold
//! the caller chooses) is left out: it takes no pivot row and its
//! coefficient is 0.

use crate::numerics::dot;

/// A Householder QR of the columns of a design, with Qᵀy.
#[derive(Debug, Clone)]
pub(crate) struct Householder {
    /// Column-major rows × cols: the Householder vectors below the pivot
    /// rows, R's strict upper part above them.
    a: Vec<f64>,
    rows: usize,
    /// Qᵀy.
    qty: Vec<f64>,
    /// R's diagonal (0 for a column left out).
    rdiag: Vec<f64>,
    /// The pivot row of each column, `None` for a column left out.
    pivot: Vec<Option<usize>>,
}

/// Coefficients and residual sum of squares of a fit.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Fit {
    pub beta: Vec<f64>,
    pub ssr: f64,
}

impl Householder {
    /// Factorise the column-major `rows × cols` matrix `a` and apply the
    /// reflections to `y`. `None` when a remaining column norm is not finite.
    pub(crate) fn new(
        mut a: Vec<f64>,
        rows: usize,
        cols: usize,
        mut qty: Vec<f64>,
        dead: f64,
    ) -> Option<Householder> {
        let mut rdiag = vec![0.0; cols];
        let mut pivot = vec![None; cols];
        let mut row = 0; // next pivot row
        for j in 0..cols {
            if row >= rows {
                continue;
            }
            let (left, right) = a.split_at_mut((j + 1) * rows);
            let col = &mut left[j * rows..];
            let norm = dot(&col[row..], &col[row..]).sqrt();
            if !norm.is_finite() {
                return None;
            }
            if norm <= dead {
                continue;
            }
            let alpha = if col[row] > 0.0 { -norm } else { norm };
            // v = x − alpha e_1, stored in place
            col[row] -= alpha;
            let v = &col[row..];
            let vtv = dot(v, v);
            if vtv > 0.0 {
                for later in right.chunks_exact_mut(rows) {
                    reflect(v, vtv, &mut later[row..]);
                }
                reflect(v, vtv, &mut qty[row..rows]);
            }
            rdiag[j] = alpha;
            pivot[j] = Some(row);
            row += 1;
        }
        Some(Householder {
            a,
            rows,
            qty,
            rdiag,
            pivot,
        })
    }

    /// The factorisation of `cols` (equal lengths, at least as many rows as
    /// columns) against `y`; a column is left out only when its remaining
    /// norm is exactly 0.
    pub(crate) fn of_columns(cols: &[Vec<f64>], y: &[f64]) -> Option<Householder> {
        let n = y.len();
        let k = cols.len();
        if k == 0 || n < k || cols.iter().any(|c| c.len() != n) {
            return None;
        }
        Householder::new(cols.concat(), n, k, y.to_vec(), 0.0)
    }

    /// R_ij above the diagonal (j > i): column j's entry in column i's pivot row.
    fn r_above(&self, i: usize, j: usize) -> f64 {
        match self.pivot[i] {
            Some(p) => self.a[j * self.rows + p],
            None => 0.0,
        }
    }

    /// Coefficients of the least-squares fit on the first `k` columns by back
    /// substitution R b = Qᵀy over the columns kept (Golub & Van Loan §5.3);
    /// the columns left out get 0.
    pub(crate) fn solve(&self, k: usize) -> Vec<f64> {
        let mut x = vec![0.0; k];
        for j in (0..k).rev() {
            let Some(p) = self.pivot[j] else { continue };
            let mut acc = self.qty[p];
            for (jj, xj) in x.iter().enumerate().skip(j + 1) {
                if self.pivot[jj].is_some() {
                    acc -= self.a[jj * self.rows + p] * xj;
                }
            }
            x[j] = acc / self.rdiag[j];
        }
        x
    }

    /// Least squares of `y` on the first `k` of `cols` (the columns and
    /// dependent values this was factorised from), with the SSR from the
    /// residuals. `None` when they are rank-deficient (|R_jj| ≤
    /// max|R_ii|·max(n, k)·ε, numpy's `matrix_rank` tolerance applied to R's
    /// diagonal) or a result is not finite.
    pub(crate) fn fit(&self, cols: &[Vec<f64>], y: &[f64], k: usize) -> Option<Fit> {
        let n = y.len();
        let rdiag = &self.rdiag[..k];
        let maxd = rdiag.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
        let tol = maxd * (n.max(k) as f64) * f64::EPSILON;
        if maxd <= 0.0 || rdiag.iter().any(|v| v.abs() <= tol) {
            return None;
        }
        let beta = self.solve(k);
        let mut ssr = 0.0;
        for (t, yt) in y.iter().enumerate() {
            let fitted: f64 = cols[..k].iter().zip(&beta).map(|(c, b)| c[t] * b).sum();
            let e = yt - fitted;
            ssr += e * e;
        }
        if !ssr.is_finite() || beta.iter().any(|b| !b.is_finite()) {
            return None;
        }
        Some(Fit { beta, ssr })
    }

    /// diag((XᵀX)⁻¹) of the regression on the first `k` columns (after a
    /// successful [`Householder::fit`], so all of them are kept): row sums of
    /// squares of R⁻¹, R⁻¹ column by column (R v = e_c by back substitution).
    pub(crate) fn xtx_inv_diag(&self, k: usize) -> Vec<f64> {
        let mut out = vec![0.0; k];
        for c in 0..k {
            let mut v = vec![0.0; k];
            for i in (0..=c).rev() {
                let mut s = if i == c { 1.0 } else { 0.0 };
                for (jj, vj) in v.iter().enumerate().take(c + 1).skip(i + 1) {
                    s -= self.r_above(i, jj) * vj;
                }
                v[i] = s / self.rdiag[i];
            }
            for (dst, vi) in out.iter_mut().zip(&v) {
                *dst += vi * vi;
            }
        }
        out
    }
}

/// c ← c − (2 vᵀc / vᵀv) v.
fn reflect(v: &[f64], vtv: f64, c: &mut [f64]) {
    let f = 2.0 * dot(v, c) / vtv;
    for (ci, vi) in c.iter_mut().zip(v) {
        *ci -= f * vi;
    }
}

/// min ‖A x − b‖ for a column-major `rows × cols` A: columns that are
/// (numerically) dependent on earlier ones — remaining norm ≤ 1e-12 times
/// the largest column norm — get x = 0. `None` for non-finite values.
pub(crate) fn least_squares(
    a: Vec<f64>,
    b: Vec<f64>,
    rows: usize,
    cols: usize,
) -> Option<Vec<f64>> {
    let mut maxnorm: f64 = 0.0;
    for j in 0..cols {
        let c = &a[j * rows..(j + 1) * rows];
        maxnorm = maxnorm.max(c.iter().map(|v| v * v).sum::<f64>().sqrt());
    }
    if !maxnorm.is_finite() {
        return None;
    }
    let dead = 1e-12 * maxnorm.max(f64::MIN_POSITIVE);
    let x = Householder::new(a, rows, cols, b, dead)?.solve(cols);
    x.iter().all(|v| v.is_finite()).then_some(x)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// By construction: y = 1 + 2x exactly is recovered with SSR 0, and a
    /// column equal to twice another is left out with coefficient 0.
    #[test]
    fn exact_fits_and_dependent_columns() {
        let x = [0.0, 1.0, 3.0, 4.0];
        let ones = vec![1.0; 4];
        let y: Vec<f64> = x.iter().map(|v| 1.0 + 2.0 * v).collect();
        let cols = vec![ones.clone(), x.to_vec()];
        let qr = Householder::of_columns(&cols, &y).expect("factor");
        let fit = qr.fit(&cols, &y, 2).expect("fit");
        assert!((fit.beta[0] - 1.0).abs() < 1e-14 && (fit.beta[1] - 2.0).abs() < 1e-14);
        assert!(fit.ssr < 1e-26);
        // The leading block alone: the mean of y.
        let mean = qr.fit(&cols, &y, 1).expect("fit");
        assert!((mean.beta[0] - y.iter().sum::<f64>() / 4.0).abs() < 1e-14);
        let doubled: Vec<f64> = x.iter().map(|v| 2.0 * v).collect();
        let a = [ones, x.to_vec(), doubled].concat();
        let b = least_squares(a, y.clone(), 4, 3).expect("solve");
        assert!((b[0] - 1.0).abs() < 1e-12 && (b[1] - 2.0).abs() < 1e-12);
        assert_eq!(b[2], 0.0);
        // rank-deficient designs are refused by `fit`
        let cols = vec![vec![1.0; 4], vec![1.0; 4]];
        let qr = Householder::of_columns(&cols, &y).expect("factor");
        assert!(qr.fit(&cols, &y, 2).is_none());
        assert!(Householder::of_columns(&[], &y).is_none());
        assert!(least_squares(vec![f64::INFINITY, 1.0], vec![1.0, 2.0], 2, 1).is_none());
    }
}
