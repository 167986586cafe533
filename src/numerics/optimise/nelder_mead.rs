//! Nelder & Mead (1965)'s simplex search on the unit box [0, 1]^d: every
//! trial point is projected onto the box, with the usual coefficients
//! (reflection 1, expansion 2, contraction ½, shrink ½).

/// The best vertex when the search stopped.
#[derive(Debug, Clone)]
pub(crate) struct Simplex {
    pub x: Vec<f64>,
    pub f: f64,
    /// Whether the simplex met its tolerances (rather than the budget).
    pub converged: bool,
}

fn clamp_to_box(v: &mut [f64]) {
    for x in v.iter_mut() {
        *x = x.clamp(0.0, 1.0);
    }
}

/// x0 (projected) and one vertex `step` away along each axis, inwards
/// where outwards would leave the box.
fn initial_simplex(x0: &[f64], step: f64) -> Vec<Vec<f64>> {
    let mut x = x0.to_vec();
    clamp_to_box(&mut x);
    let mut pts = Vec::with_capacity(x.len() + 1);
    pts.push(x.clone());
    for i in 0..x.len() {
        let mut p = x.clone();
        p[i] = if p[i] + step <= 1.0 {
            p[i] + step
        } else {
            p[i] - step
        };
        pts.push(p);
    }
    pts
}

/// Order the vertices best first (ties by their previous position).
fn sort_simplex(pts: &mut Vec<Vec<f64>>, fs: &mut Vec<f64>) {
    let mut order: Vec<usize> = (0..fs.len()).collect();
    order.sort_by(|&a, &b| fs[a].total_cmp(&fs[b]).then(a.cmp(&b)));
    *pts = order.iter().map(|&i| pts[i].clone()).collect();
    *fs = order.iter().map(|&i| fs[i]).collect();
}

/// Converged: the best value is finite and the values agree to 1e-11 with
/// the vertices within 1e-5 of the best, or the vertices within 1e-9.
fn small(pts: &[Vec<f64>], fs: &[f64]) -> bool {
    let d = fs.len() - 1;
    let fspread = fs[d] - fs[0];
    let xspread = pts
        .iter()
        .skip(1)
        .flat_map(|p| p.iter().zip(pts[0].iter()).map(|(a, b)| (a - b).abs()))
        .fold(0.0, f64::max);
    fs[0].is_finite() && ((fspread <= 1e-11 && xspread <= 1e-5) || xspread <= 1e-9)
}

/// Minimise `f` from `x0` with an initial simplex of size `step`, for at
/// most about `max_evals` evaluations.
pub(crate) fn nelder_mead(
    f: &mut impl FnMut(&[f64]) -> f64,
    x0: &[f64],
    step: f64,
    max_evals: usize,
) -> Simplex {
    let d = x0.len();
    let mut pts = initial_simplex(x0, step);
    let mut fs: Vec<f64> = pts.iter().map(|p| f(p)).collect();
    if d == 0 {
        return Simplex {
            x: pts.swap_remove(0),
            f: fs[0],
            converged: fs[0].is_finite(),
        };
    }
    let mut used = d + 1;
    let mut converged = false;
    while used < max_evals {
        sort_simplex(&mut pts, &mut fs);
        if small(&pts, &fs) {
            converged = true;
            break;
        }
        used += step_simplex(f, &mut pts, &mut fs);
    }
    let mut bi = 0;
    for i in 1..fs.len() {
        if fs[i] < fs[bi] {
            bi = i;
        }
    }
    Simplex {
        x: pts[bi].clone(),
        f: fs[bi],
        converged,
    }
}

/// One move of a sorted simplex: reflect the worst vertex through the
/// centroid of the others, then expand, accept, contract (outside or
/// inside) or shrink towards the best. Returns the evaluations spent.
fn step_simplex(f: &mut impl FnMut(&[f64]) -> f64, pts: &mut [Vec<f64>], fs: &mut [f64]) -> usize {
    let d = fs.len() - 1;
    let mut c = vec![0.0; d];
    for p in &pts[..d] {
        for (ci, pi) in c.iter_mut().zip(p.iter()) {
            *ci += pi / d as f64;
        }
    }
    let worst = pts[d].clone();
    let along = |t: f64| -> Vec<f64> {
        let mut v: Vec<f64> = c
            .iter()
            .zip(worst.iter())
            .map(|(ci, wi)| ci + t * (ci - wi))
            .collect();
        clamp_to_box(&mut v);
        v
    };
    let xr = along(1.0);
    let fr = f(&xr);
    if fr < fs[0] {
        let xe = along(2.0);
        let fe = f(&xe);
        if fe < fr {
            pts[d] = xe;
            fs[d] = fe;
        } else {
            pts[d] = xr;
            fs[d] = fr;
        }
        return 2;
    }
    if fr < fs[d - 1] {
        pts[d] = xr;
        fs[d] = fr;
        return 1;
    }
    let xc = if fr < fs[d] { along(0.5) } else { along(-0.5) };
    let fc = f(&xc);
    if fc < fs[d].min(fr) {
        pts[d] = xc;
        fs[d] = fc;
        return 2;
    }
    for i in 1..=d {
        let p: Vec<f64> = pts[i]
            .iter()
            .zip(pts[0].iter())
            .map(|(a, b)| b + 0.5 * (a - b))
            .collect();
        fs[i] = f(&p);
        pts[i] = p;
    }
    2 + d
}

#[cfg(test)]
mod tests {
    use super::*;

    /// By construction: a quadratic with its minimum inside the box at
    /// (0.3, 0.7), and one whose minimum (1.5, 0.2) lies outside, so that
    /// the box minimum is on the edge at (1, 0.2). A projected simplex can
    /// collapse onto the edge short of that point (here at the corner
    /// (1, 0)); restarts from the best vertex, as the smoothing estimation
    /// makes them, move on along the edge.
    #[test]
    fn finds_interior_and_edge_minima() {
        let mut inside = |u: &[f64]| (u[0] - 0.3).powi(2) + 2.0 * (u[1] - 0.7).powi(2);
        let s = nelder_mead(&mut inside, &[0.5, 0.5], 0.1, 2000);
        assert!(s.converged);
        assert!(
            (s.x[0] - 0.3).abs() < 1e-4 && (s.x[1] - 0.7).abs() < 1e-4,
            "{s:?}"
        );
        let mut edge = |u: &[f64]| (u[0] - 1.5).powi(2) + (u[1] - 0.2).powi(2);
        let mut s = nelder_mead(&mut edge, &[0.5, 0.5], 0.1, 2000);
        for _ in 0..4 {
            let start = s.x.clone();
            s = nelder_mead(&mut edge, &start, 0.05, 2000);
        }
        assert!(
            (s.x[0] - 1.0).abs() < 1e-6 && (s.x[1] - 0.2).abs() < 1e-4,
            "{s:?}"
        );
        // every point evaluated lies in the box
        let mut outside = false;
        let mut watch = |u: &[f64]| {
            outside |= u.iter().any(|v| !(0.0..=1.0).contains(v));
            (u[0] - 2.0).powi(2)
        };
        let _ = nelder_mead(&mut watch, &[0.9], 0.5, 200);
        assert!(!outside);
    }
}
