//! The incremental least squares (Givens rotations folding one row at a time
//! into R) against a from-scratch Householder QR (nalgebra) at every origin
//! of the benchmark's grid: ar(1..8) and the ardl pairs of the speed
//! benchmark on a 400-observation series with a leading indicator, expanding
//! from origin 100, horizons 1 and 4. The check is a property of the
//! algorithms (both solve the same least-squares problem), so the series is
//! generated here; no expected number comes from it. Tolerance as required:
//! 1e-10 × max(1, |coefficient|).

use super::givens::LeastSquares;
use nalgebra::{DMatrix, DVector};

fn series(n: usize) -> (Vec<f64>, Vec<f64>) {
    let mut state = 99u64;
    let mut shock = || {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        let u = ((state >> 11) as f64 + 0.5) / (1u64 << 53) as f64;
        let v = ((state.rotate_left(17) >> 11) as f64 + 0.5) / (1u64 << 53) as f64;
        (-2.0 * u.ln()).sqrt() * (2.0 * std::f64::consts::PI * v).cos()
    };
    let mut x = vec![0.0; n];
    let mut y = vec![0.0; n];
    for t in 1..n {
        x[t] = 0.6 * x[t - 1] + shock();
        y[t] = 0.5 + 0.55 * y[t - 1] + 0.3 * x[t - 1] + shock();
    }
    (y, x)
}

/// Regressors at origin s (1-based): 1, y_s..y_{s−p+1}, x_s..x_{s−q+1}.
fn row(y: &[f64], x: &[f64], p: usize, q: usize, s: usize) -> Option<Vec<f64>> {
    if s < p.max(q) || s == 0 {
        return None;
    }
    let mut r = vec![1.0];
    r.extend((0..p).map(|j| y[s - 1 - j]));
    r.extend((0..q).map(|j| x[s - 1 - j]));
    Some(r)
}

#[test]
fn incremental_matches_from_scratch_qr_at_every_origin() {
    let n = 400;
    let (y, x) = series(n);
    let mut grid: Vec<(usize, usize)> = (1..=8).map(|p| (p, 0)).collect();
    grid.extend([(1, 1), (2, 1), (4, 1), (2, 2), (2, 4), (4, 2), (4, 4)]);
    let mut checked = 0;
    let mut worst: f64 = 0.0;
    for &(p, q) in &grid {
        for h in [1usize, 4] {
            let k = 1 + p + q;
            let mut ls = LeastSquares::new(k);
            let mut rows: Vec<Vec<f64>> = Vec::new();
            let mut deps: Vec<f64> = Vec::new();
            let mut next_s = 1;
            for origin in 100..=(n - h) {
                // Expanding: every row with s + h ≤ E = origin.
                while next_s + h <= origin {
                    if let Some(r) = row(&y, &x, p, q, next_s) {
                        ls.add_row(&r, y[next_s + h - 1]);
                        rows.push(r);
                        deps.push(y[next_s + h - 1]);
                    }
                    next_s += 1;
                }
                let ours = ls.solve().expect("full rank");
                let a = DMatrix::from_fn(rows.len(), k, |i, j| rows[i][j]);
                let b = DVector::from_column_slice(&deps);
                let qr = a.qr();
                let qtb = qr.q().transpose() * b;
                let reference = qr.r().solve_upper_triangular(&qtb).expect("invertible R");
                for j in 0..k {
                    let scale = reference[j].abs().max(1.0);
                    let err = (ours.coef[j] - reference[j]).abs() / scale;
                    worst = worst.max(err);
                    assert!(
                        err <= 1e-10,
                        "ardl({p},{q}) h={h} origin {origin} coef {j}: {} vs {}",
                        ours.coef[j],
                        reference[j]
                    );
                }
                checked += 1;
            }
        }
    }
    // 15 candidates × (300 + 297) origins.
    assert_eq!(checked, 15 * (300 + 297));
    assert!(worst < 1e-10);
}
