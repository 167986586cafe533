//! Lag polynomials of the seasonal model: the multiplicative AR and MA
//! parts expanded, φ(L)Φ(L^m) and θ(L)Θ(L^m) (SPEC §7.2), and the weights
//! that integrate differenced forecast errors back to the level.

/// φ(L)Φ(L^m) = 1 − Σ c_k L^k for φ(L) = 1 − Σφ_i L^i, Φ(L^m) = 1 − ΣΦ_j L^{mj}:
/// returns c_1..c_{p+mP}, c_k = φ_k + Φ_{k/m} − Σ_{i + mj = k} φ_i Φ_j.
pub(super) fn multiply_ar(phi: &[f64], sphi: &[f64], m: usize) -> Vec<f64> {
    let a: Vec<f64> = std::iter::once(1.0).chain(phi.iter().map(|v| -v)).collect();
    let b = seasonal_poly(sphi, m, -1.0);
    product(&a, &b)[1..].iter().map(|v| -v).collect()
}

/// θ(L)Θ(L^m) = 1 + Σ e_k L^k: returns e_1..e_{q+mQ}.
pub(super) fn multiply_ma(theta: &[f64], stheta: &[f64], m: usize) -> Vec<f64> {
    let a: Vec<f64> = std::iter::once(1.0).chain(theta.iter().copied()).collect();
    let b = seasonal_poly(stheta, m, 1.0);
    product(&a, &b)[1..].to_vec()
}

/// 1 + sign·Σ c_j L^{mj} as a full coefficient list.
fn seasonal_poly(c: &[f64], m: usize, sign: f64) -> Vec<f64> {
    let mut out = vec![0.0; c.len() * m + 1];
    out[0] = 1.0;
    for (j, v) in c.iter().enumerate() {
        out[(j + 1) * m] = sign * v;
    }
    out
}

fn product(a: &[f64], b: &[f64]) -> Vec<f64> {
    let mut out = vec![0.0; a.len() + b.len() - 1];
    for (i, x) in a.iter().enumerate() {
        if *x == 0.0 {
            continue;
        }
        for (j, y) in b.iter().enumerate() {
            out[i + j] += x * y;
        }
    }
    out
}

/// The coefficients of 1/δ(L) for δ(L) = (1 − L)^d (1 − L^m)^D, first
/// `count` of them: the level's h-step forecast error is
/// Σ_{k=0}^{h−1} ψ*_k e_w(h − k), e_w the differenced series' errors.
/// ψ*_0 = 1, ψ*_j = −Σ_{i=1}^{min(j, deg δ)} δ_i ψ*_{j−i}.
pub(crate) fn integration_weights(d: usize, m: usize, seasonal_d: usize, count: usize) -> Vec<f64> {
    let mut delta = vec![1.0];
    for _ in 0..d {
        delta = product(&delta, &[1.0, -1.0]);
    }
    for _ in 0..seasonal_d {
        let mut s = vec![0.0; m + 1];
        s[0] = 1.0;
        s[m] = -1.0;
        delta = product(&delta, &s);
    }
    let mut psi = vec![0.0; count];
    for j in 0..count {
        let mut v = if j == 0 { 1.0 } else { 0.0 };
        for i in 1..delta.len().min(j + 1) {
            v -= delta[i] * psi[j - i];
        }
        psi[j] = v;
    }
    psi
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_airline_polynomial_has_its_cross_term() {
        // (1 + θL)(1 + ΘL^12) = 1 + θL + ΘL^12 + θΘL^13: expanding by hand
        // (property by construction of the product).
        let e = multiply_ma(&[-0.4], &[-0.6], 12);
        assert_eq!(e.len(), 13);
        assert_eq!(e[0], -0.4);
        assert!(e[1..11].iter().all(|v| *v == 0.0));
        assert_eq!(e[11], -0.6);
        assert!((e[12] - 0.24).abs() < 1e-15);
        // (1 − 0.5L)(1 − 0.3L^4) = 1 − 0.5L − 0.3L^4 + 0.15L^5 → c = (0.5, 0, 0, 0.3, −0.15)
        let c = multiply_ar(&[0.5], &[0.3], 4);
        assert_eq!(c.len(), 5);
        assert!((c[0] - 0.5).abs() < 1e-15 && (c[3] - 0.3).abs() < 1e-15);
        assert!((c[4] + 0.15).abs() < 1e-15);
    }

    #[test]
    fn integration_weights_count_the_paths_back_to_the_level() {
        // 1/(1 − L) = 1 + L + L² + …; 1/((1 − L)(1 − L^4)): ψ*_j = ⌊j/4⌋ + 1
        // (the number of ways to write j = a + 4b; property by construction).
        assert_eq!(integration_weights(1, 1, 0, 4), vec![1.0; 4]);
        let psi = integration_weights(1, 4, 1, 12);
        for (j, v) in psi.iter().enumerate() {
            assert_eq!(*v, (j / 4 + 1) as f64, "j = {j}");
        }
        // (1 − L)^2: ψ*_j = j + 1
        let psi = integration_weights(2, 1, 0, 5);
        assert_eq!(psi, vec![1.0, 2.0, 3.0, 4.0, 5.0]);
    }
}
