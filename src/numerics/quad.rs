//! Gauss-Legendre quadrature nodes and weights.
//!
//! The n-point rule integrates polynomials of degree 2n - 1 exactly:
//! ∫_{-1}^{1} f(s) ds ≈ Σ_k w_k f(s_k), with s_k the roots of P_n.

/// Nodes and weights of the `n`-point Gauss-Legendre rule on [-1, 1].
///
/// Nodes are the roots of the Legendre polynomial P_n, found by Newton's
/// method from the Chebyshev-like guess cos(π (k + 3/4) / (n + 1/2));
/// weights are w_k = 2 / ((1 - s_k²) P_n'(s_k)²) (common practice, no source).
pub fn gauss_legendre(n: usize) -> (Vec<f64>, Vec<f64>) {
    let mut nodes = vec![0.0; n];
    let mut weights = vec![0.0; n];
    for k in 0..n {
        let mut s = (std::f64::consts::PI * (k as f64 + 0.75) / (n as f64 + 0.5)).cos();
        let mut dp = 1.0;
        for _ in 0..100 {
            let (p, d) = legendre_and_derivative(n, s);
            dp = d;
            let step = p / d;
            s -= step;
            if step.abs() < 1e-16 {
                break;
            }
        }
        let (_, d) = legendre_and_derivative(n, s);
        if d.is_finite() {
            dp = d;
        }
        nodes[k] = s;
        weights[k] = 2.0 / ((1.0 - s * s) * dp * dp);
    }
    (nodes, weights)
}

/// P_n(s) and P_n'(s) by the three-term recurrence
/// (k + 1) P_{k+1} = (2k + 1) s P_k - k P_{k-1}.
fn legendre_and_derivative(n: usize, s: f64) -> (f64, f64) {
    let (mut p0, mut p1) = (1.0, s);
    if n == 0 {
        return (1.0, 0.0);
    }
    for k in 1..n {
        let k = k as f64;
        let p2 = ((2.0 * k + 1.0) * s * p1 - k * p0) / (k + 1.0);
        p0 = p1;
        p1 = p2;
    }
    let d = n as f64 * (s * p1 - p0) / (s * s - 1.0);
    (p1, d)
}

/// Second Legendre polynomial P2(x) = (3x² - 1)/2.
pub fn p2(x: f64) -> f64 {
    1.5 * x * x - 0.5
}

/// The cubic Hermite basis on [0, 1], [h00, h10, h01, h11]:
/// p(t) = h00 y0 + h10 m0 + h01 y1 + h11 m1 with end values y and end
/// slopes m (per unit t); h00 = 2t³ - 3t² + 1, h10 = t³ - 2t² + t,
/// h01 = -2t³ + 3t², h11 = t³ - t².
pub fn hermite_basis(t: f64) -> [f64; 4] {
    let (t2, t3) = (t * t, t * t * t);
    [
        2.0 * t3 - 3.0 * t2 + 1.0,
        t3 - 2.0 * t2 + t,
        -2.0 * t3 + 3.0 * t2,
        t3 - t2,
    ]
}

/// d/dt of [`hermite_basis`]: [6t² - 6t, 3t² - 4t + 1, -6t² + 6t, 3t² - 2t].
pub fn hermite_basis_slope(t: f64) -> [f64; 4] {
    let t2 = t * t;
    [
        6.0 * t2 - 6.0 * t,
        3.0 * t2 - 4.0 * t + 1.0,
        -6.0 * t2 + 6.0 * t,
        3.0 * t2 - 2.0 * t,
    ]
}

/// Value at `at` of the quadratic whose averages over the cells `idx`
/// (faces `faces`) are `t[idx]`: the averages of 1, y, y² over a cell are
/// solved for, y = x - at, by Cramer's rule (exact for quadratics). Used to
/// reconstruct the temperature at a pole or the equator from the cell means.
pub fn end_value(faces: &[f64], t: &[f64], idx: [usize; 3], at: f64) -> f64 {
    let mut m = [[0.0; 3]; 3];
    let mut r = [0.0; 3];
    for (row, &i) in idx.iter().enumerate() {
        let (a, b) = (faces[i] - at, faces[i + 1] - at);
        let w = b - a;
        m[row] = [
            1.0,
            (b * b - a * a) / (2.0 * w),
            (b * b * b - a * a * a) / (3.0 * w),
        ];
        r[row] = t[i];
    }
    let det = |m: &[[f64; 3]; 3]| {
        m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1])
            - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0])
            + m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0])
    };
    let mut m0 = m;
    for row in 0..3 {
        m0[row][0] = r[row];
    }
    det(&m0) / det(&m)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn integrates_polynomials_exactly() {
        // ∫_{-1}^{1} s^k ds = 2/(k+1) for even k, 0 for odd k (calculus).
        for n in [3, 8, 24] {
            let (s, w) = gauss_legendre(n);
            for k in 0..(2 * n) {
                let exact = if k % 2 == 0 {
                    2.0 / (k as f64 + 1.0)
                } else {
                    0.0
                };
                let got: f64 = s.iter().zip(&w).map(|(s, w)| w * s.powi(k as i32)).sum();
                assert!((got - exact).abs() < 1e-13, "n={n} k={k} got={got}");
            }
        }
    }
}
