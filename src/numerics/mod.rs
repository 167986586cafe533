//! numerics: the arithmetic every stage shares, written once. Least squares
//! (a QR factor grown row by row, with its Householder counterpart for a
//! whole design), autocovariances and long-run variances, distribution
//! functions, information criteria and the optimisers. Nothing here knows
//! about experiments; nothing here imports from the rest of the crate.

pub(crate) mod acov;
pub(crate) mod dist;
pub(crate) mod hessian;
pub(crate) mod ic;
pub(crate) mod lsq;
pub(crate) mod optimise;
pub(crate) mod stationarity;

/// xᵀy over eight running sums (combined pairwise at the end), so the
/// products are added in parallel rather than waiting on one sum: the
/// Householder factorisation of a tall design spends most of its time here.
pub(crate) fn dot(x: &[f64], y: &[f64]) -> f64 {
    let mut acc = [0.0; 8];
    let (xc, yc) = (x.chunks_exact(8), y.chunks_exact(8));
    let (xr, yr) = (xc.remainder(), yc.remainder());
    for (a, b) in xc.zip(yc) {
        for i in 0..8 {
            acc[i] += a[i] * b[i];
        }
    }
    let mut tail = 0.0;
    for (a, b) in xr.iter().zip(yr) {
        tail += a * b;
    }
    let quads = [
        acc[0] + acc[4],
        acc[1] + acc[5],
        acc[2] + acc[6],
        acc[3] + acc[7],
    ];
    ((quads[0] + quads[2]) + (quads[1] + quads[3])) + tail
}
