//! Minimising a function of one variable on an interval: a grid of points
//! finds the basin of the smallest value, and Brent's method (Brent 1973,
//! *Algorithms for Minimization without Derivatives*, ch. 5: golden-section
//! steps with parabolic interpolation) refines it. The ends of the interval
//! are candidates too, so an optimum on the edge is found exactly.

/// The point of [lo, hi] where `f` is smallest, to within `tol`, after a
/// grid of `grid` + 1 points.
pub(crate) fn brent_minimise(
    f: impl Fn(f64) -> f64,
    lo: f64,
    hi: f64,
    tol: f64,
    grid: usize,
) -> f64 {
    let grid = grid.max(2);
    let step = (hi - lo) / grid as f64;
    let points: Vec<(f64, f64)> = (0..=grid)
        .map(|i| {
            let x = if i == grid { hi } else { lo + step * i as f64 };
            (x, f(x))
        })
        .collect();
    let best = points
        .iter()
        .enumerate()
        .filter(|(_, (_, v))| !v.is_nan())
        .min_by(|a, b| a.1 .1.total_cmp(&b.1 .1))
        .map_or(0, |(i, _)| i);
    let a = points[best.saturating_sub(1)].0;
    let b = points[(best + 1).min(grid)].0;
    let (x, fx) = brent(&f, a, b, tol);
    if fx < points[best].1 {
        x
    } else {
        points[best].0
    }
}

/// Brent's method on [a, b]: the point found and its value.
fn brent(f: &impl Fn(f64) -> f64, mut a: f64, mut b: f64, tol: f64) -> (f64, f64) {
    const GOLDEN: f64 = 0.381_966_011_250_105_1; // (3 − √5)/2
    let mut x = a + GOLDEN * (b - a);
    let (mut w, mut v) = (x, x);
    let mut fx = f(x);
    let (mut fw, mut fv) = (fx, fx);
    let (mut d, mut e) = (0.0_f64, 0.0_f64);
    for _ in 0..200 {
        let m = 0.5 * (a + b);
        let tol1 = tol + 1e-12 * x.abs();
        let tol2 = 2.0 * tol1;
        if (x - m).abs() <= tol2 - 0.5 * (b - a) {
            break;
        }
        let mut golden = true;
        if e.abs() > tol1 {
            // A parabola through x, w and v.
            let r = (x - w) * (fx - fv);
            let q0 = (x - v) * (fx - fw);
            let mut p = (x - v) * q0 - (x - w) * r;
            let mut q = 2.0 * (q0 - r);
            if q > 0.0 {
                p = -p;
            }
            q = q.abs();
            if p.abs() < (0.5 * q * e).abs() && p > q * (a - x) && p < q * (b - x) {
                e = d;
                d = p / q;
                let u = x + d;
                if u - a < tol2 || b - u < tol2 {
                    d = if x < m { tol1 } else { -tol1 };
                }
                golden = false;
            }
        }
        if golden {
            e = if x < m { b - x } else { a - x };
            d = GOLDEN * e;
        }
        let u = if d.abs() >= tol1 {
            x + d
        } else if d > 0.0 {
            x + tol1
        } else {
            x - tol1
        };
        let fu = f(u);
        if fu <= fx {
            if u < x {
                b = x;
            } else {
                a = x;
            }
            (v, fv, w, fw, x, fx) = (w, fw, x, fx, u, fu);
        } else {
            if u < x {
                a = u;
            } else {
                b = u;
            }
            if fu <= fw || w == x {
                (v, fv, w, fw) = (w, fw, u, fu);
            } else if fu <= fv || v == x || v == w {
                (v, fv) = (u, fu);
            }
        }
    }
    (x, fx)
}

#[cfg(test)]
mod tests {
    use super::*;

    // Minimisers known in closed form (by construction).
    #[test]
    fn finds_interior_and_edge_minima() {
        let x = brent_minimise(|x| (x - 0.3).powi(2), 0.0, 1.0, 1e-10, 20);
        assert!((x - 0.3).abs() < 1e-8, "{x}");
        let x = brent_minimise(f64::cos, 0.0, 2.0 * std::f64::consts::PI, 1e-12, 20);
        assert!((x - std::f64::consts::PI).abs() < 1e-7, "{x}");
        // Decreasing on the whole interval: the upper edge.
        assert_eq!(brent_minimise(|x| -x, 0.0, 1.0, 1e-10, 20), 1.0);
        // Increasing: the lower edge.
        assert_eq!(brent_minimise(|x| x, 0.0, 1.0, 1e-10, 20), 0.0);
        // Two basins: the grid picks the deeper (x = 0.8), not the first.
        let two =
            |x: f64| -(-(x - 0.2).powi(2) / 0.002).exp() - 2.0 * (-(x - 0.8).powi(2) / 0.002).exp();
        let x = brent_minimise(two, 0.0, 1.0, 1e-10, 40);
        assert!((x - 0.8).abs() < 1e-6, "{x}");
    }
}
