//! BFGS (Nocedal & Wright, *Numerical Optimization*, 2nd ed. 2006, ch. 6)
//! with central-difference gradients, Armijo backtracking, a cap on the
//! step length and step expansion on flat stretches, for smooth
//! unconstrained objectives of a few dimensions.

/// A minimum found (or the point a run was cut short at).
#[derive(Debug, Clone)]
pub(crate) struct Optimum {
    pub x: Vec<f64>,
    pub fx: f64,
    pub iterations: usize,
    /// False only for a run cut short at `max_iter` when not `strict`.
    pub converged: bool,
}

/// Why a run failed.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum BfgsError {
    /// The objective is not finite at the start.
    NonFiniteStart,
    /// The iteration limit was reached with a large gradient (`strict`).
    NonConvergence { iterations: usize, gradient: f64 },
}

/// Convergence: max-norm of the gradient below this.
const GTOL: f64 = 1e-7;
/// Largest step, in the objective's own coordinates.
const MAX_STEP: f64 = 2.0;

/// `x > 0`, false for NaN.
fn positive(x: f64) -> bool {
    x > 0.0
}

/// Central differences with a step of 1e-5 relative (one-sided where one
/// side is not finite, 0 where neither is).
fn num_grad(f: &mut impl FnMut(&[f64]) -> f64, x: &[f64], fx: f64, g: &mut [f64]) {
    let mut xp = x.to_vec();
    for i in 0..x.len() {
        let h = 1e-5 * x[i].abs().max(1.0);
        xp[i] = x[i] + h;
        let fp = f(&xp);
        xp[i] = x[i] - h;
        let fm = f(&xp);
        xp[i] = x[i];
        g[i] = if fp.is_finite() && fm.is_finite() {
            (fp - fm) / (2.0 * h)
        } else if fp.is_finite() {
            (fp - fx) / h
        } else if fm.is_finite() {
            (fx - fm) / h
        } else {
            0.0
        };
    }
}

fn identity(h: &mut [f64], n: usize) {
    h.iter_mut().for_each(|v| *v = 0.0);
    for i in 0..n {
        h[i * n + i] = 1.0;
    }
}

/// The search direction −H g, or −g (with H reset) when −H g is not a
/// descent direction, capped at [`MAX_STEP`]: (direction, slope gᵀd,
/// uncapped length).
fn direction(hinv: &mut [f64], g: &[f64], fresh: &mut bool) -> (Vec<f64>, f64, f64) {
    let n = g.len();
    let mut d: Vec<f64> = (0..n)
        .map(|i| -(0..n).map(|j| hinv[i * n + j] * g[j]).sum::<f64>())
        .collect();
    let mut slope: f64 = d.iter().zip(g).map(|(a, b)| a * b).sum();
    if !positive(-slope) {
        identity(hinv, n);
        *fresh = true;
        d = g.iter().map(|v| -v).collect();
        slope = -g.iter().map(|v| v * v).sum::<f64>();
    }
    let dn = d.iter().map(|v| v * v).sum::<f64>().sqrt();
    if dn > MAX_STEP {
        let s = MAX_STEP / dn;
        d.iter_mut().for_each(|v| *v *= s);
        slope *= s;
    }
    (d, slope, dn)
}

/// Armijo backtracking along `d` (t = 1, ½, ¼, … for 50 tries, sufficient
/// decrease 1e-4); when the full step is accepted, doubling while f keeps
/// falling and the step stays within the cap (on flat stretches, e.g. near
/// a boundary that a bounded reparametrisation flattens, a unit step can be
/// tiny). The point is left in `xnew`; its value, or `None` when no step
/// decreases f enough.
fn line_search(
    f: &mut impl FnMut(&[f64]) -> f64,
    x: &[f64],
    fx: f64,
    (d, slope, dn): (&[f64], f64, f64),
    xnew: &mut [f64],
) -> Option<f64> {
    let n = x.len();
    let mut t = 1.0;
    let mut fnew = f64::INFINITY;
    let mut found = false;
    for _ in 0..50 {
        for i in 0..n {
            xnew[i] = x[i] + t * d[i];
        }
        fnew = f(xnew);
        if fnew.is_finite() && fnew <= fx + 1e-4 * t * slope {
            found = true;
            break;
        }
        t *= 0.5;
    }
    if !found {
        return None;
    }
    if t == 1.0 {
        let mut xtry = vec![0.0; n];
        let mut tt = 2.0;
        while tt * dn.min(MAX_STEP) <= MAX_STEP + 1e-12 {
            for i in 0..n {
                xtry[i] = x[i] + tt * d[i];
            }
            let ftry = f(&xtry);
            if !(ftry.is_finite() && ftry < fnew) {
                break;
            }
            fnew = ftry;
            xnew.copy_from_slice(&xtry);
            tt *= 2.0;
            if tt > 1e6 {
                break;
            }
        }
    }
    Some(fnew)
}

/// The BFGS update of the inverse Hessian from step `s` and gradient change
/// `yv` (Nocedal & Wright §6.1), scaling a fresh identity first by
/// sᵀy/yᵀy (their eq. 6.20); back to the identity when sᵀy shows no
/// positive curvature. Returns whether the inverse Hessian is now a fresh
/// identity.
fn update_inverse_hessian(hinv: &mut [f64], s: &[f64], yv: &[f64], fresh: bool) -> bool {
    let n = s.len();
    let sy: f64 = s.iter().zip(yv).map(|(a, b)| a * b).sum();
    if sy <= 1e-16 || sy.is_nan() {
        identity(hinv, n);
        return true;
    }
    if fresh {
        let yy: f64 = yv.iter().map(|v| v * v).sum();
        let sc = sy / yy;
        hinv.iter_mut().for_each(|v| *v *= sc);
    }
    let rho = 1.0 / sy;
    let hy: Vec<f64> = (0..n)
        .map(|i| (0..n).map(|j| hinv[i * n + j] * yv[j]).sum())
        .collect();
    let yhy: f64 = yv.iter().zip(&hy).map(|(a, b)| a * b).sum();
    for i in 0..n {
        for j in 0..n {
            hinv[i * n + j] +=
                -rho * (hy[i] * s[j] + s[i] * hy[j]) + (rho * rho * yhy + rho) * s[i] * s[j];
        }
    }
    false
}

/// Minimise `f` (which returns +∞ where undefined) from `x0` for at most
/// `max_iter` iterations. Stops at a small gradient, when no step along
/// the gradient decreases f (a numerical optimum), or after three steps in
/// a row that change neither f (1e-15 relative) nor x (1e-9). Hitting the
/// limit is an error only when `strict` and the gradient is not small
/// (1e-4, a flat ridge); otherwise the point reached is returned with
/// `converged` false, for the caller to continue.
pub(crate) fn bfgs(
    mut f: impl FnMut(&[f64]) -> f64,
    x0: &[f64],
    max_iter: usize,
    strict: bool,
) -> Result<Optimum, BfgsError> {
    let n = x0.len();
    let mut x = x0.to_vec();
    let mut fx = f(&x);
    if !fx.is_finite() {
        return Err(BfgsError::NonFiniteStart);
    }
    let done = |x: Vec<f64>, fx: f64, iterations: usize, converged: bool| Optimum {
        x,
        fx,
        iterations,
        converged,
    };
    if n == 0 {
        return Ok(done(x, fx, 0, true));
    }
    let mut g = vec![0.0; n];
    num_grad(&mut f, &x, fx, &mut g);
    let mut hinv = vec![0.0; n * n];
    identity(&mut hinv, n);
    let mut fresh = true; // hinv is the identity
    let mut gnew = vec![0.0; n];
    let mut xnew = vec![0.0; n];
    let mut small_steps = 0;
    for iter in 1..=max_iter {
        let gnorm = g.iter().fold(0.0f64, |a, v| a.max(v.abs()));
        if gnorm < GTOL {
            return Ok(done(x, fx, iter - 1, true));
        }
        let (d, slope, dn) = direction(&mut hinv, &g, &mut fresh);
        let Some(fnew) = line_search(&mut f, &x, fx, (&d, slope, dn), &mut xnew) else {
            if !fresh {
                identity(&mut hinv, n);
                fresh = true;
                continue;
            }
            // No descent along the gradient: a numerical optimum.
            return Ok(done(x, fx, iter, true));
        };
        num_grad(&mut f, &xnew, fnew, &mut gnew);
        let s: Vec<f64> = (0..n).map(|i| xnew[i] - x[i]).collect();
        let yv: Vec<f64> = (0..n).map(|i| gnew[i] - g[i]).collect();
        let fchange = fx - fnew;
        x.copy_from_slice(&xnew);
        g.copy_from_slice(&gnew);
        let fold = fx;
        fx = fnew;
        fresh = update_inverse_hessian(&mut hinv, &s, &yv, fresh);
        let smax = s.iter().fold(0.0f64, |a, v| a.max(v.abs()));
        if fchange.abs() <= 1e-15 * (1.0 + fold.abs()) && smax < 1e-9 {
            small_steps += 1;
            if small_steps >= 3 {
                return Ok(done(x, fx, iter, true));
            }
        } else {
            small_steps = 0;
        }
    }
    let gnorm = g.iter().fold(0.0f64, |a, v| a.max(v.abs()));
    if !strict {
        // a screening run cut short: to be continued by the caller
        return Ok(done(x, fx, max_iter, false));
    }
    if gnorm < 1e-4 {
        // a full run that ends with a small gradient (flat ridge): accepted
        return Ok(done(x, fx, max_iter, true));
    }
    Err(BfgsError::NonConvergence {
        iterations: max_iter,
        gradient: gnorm,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Rosenbrock (1960)'s function has its minimum 0 at (1, 1), a property
    /// of its definition; the standard start (−1.2, 1).
    #[test]
    fn finds_the_rosenbrock_minimum() {
        let rosenbrock = |x: &[f64]| (1.0 - x[0]).powi(2) + 100.0 * (x[1] - x[0] * x[0]).powi(2);
        let o = bfgs(rosenbrock, &[-1.2, 1.0], 400, true).expect("converges");
        assert!(o.converged);
        assert!(
            (o.x[0] - 1.0).abs() < 1e-4 && (o.x[1] - 1.0).abs() < 1e-4,
            "{o:?}"
        );
        assert!(o.fx < 1e-8);
        assert_eq!(
            bfgs(|_: &[f64]| f64::INFINITY, &[0.0], 10, true).unwrap_err(),
            BfgsError::NonFiniteStart
        );
        let flat = bfgs(|_: &[f64]| 1.0, &[], 10, true).expect("nothing to do");
        assert_eq!((flat.iterations, flat.fx), (0, 1.0));
    }
}
