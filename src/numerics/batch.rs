//! Tridiagonal LU (plus a rank-one term) applied to many right-hand sides.

/// Pivoted LU of a tridiagonal matrix (plus rank-one term) applied to many
/// right-hand sides at once: `b` is n x w row-major, so every elimination
/// step is a loop over the w columns (the LAPACK gttrf/gttrs scheme, as in
/// [`crate::numerics::linalg::Tridiagonal`], with Sherman-Morrison for u vᵀ).
#[derive(Clone, Debug, Default)]
pub struct BatchLu {
    n: usize,
    w: usize,
    /// The n x w right-hand sides (row-major), overwritten by the solutions.
    pub b: Vec<f64>,
    d: Vec<f64>,
    dl: Vec<f64>,
    du: Vec<f64>,
    du2: Vec<f64>,
    swap: Vec<bool>,
    z: Vec<f64>,
    row: Vec<f64>,
    rank_one: bool,
    v: Vec<f64>,
    vz: f64,
}

impl BatchLu {
    /// Shapes the workspace for n unknowns and w right-hand sides
    /// (reallocates only when the shape changes).
    pub fn resize(&mut self, n: usize, w: usize) {
        if self.n != n || self.w != w {
            *self = BatchLu {
                n,
                w,
                b: vec![0.0; n * w],
                d: vec![0.0; n],
                dl: vec![0.0; n],
                du: vec![0.0; n],
                du2: vec![0.0; n],
                swap: vec![false; n],
                z: vec![0.0; n],
                row: vec![0.0; w],
                rank_one: false,
                v: vec![0.0; n],
                vz: 0.0,
            };
        }
    }

    /// Factors `a` (its tridiagonal part with partial pivoting); Err(row)
    /// on a zero pivot.
    pub fn factor(&mut self, a: &crate::numerics::linalg::Tridiagonal) -> Result<(), usize> {
        let n = self.n;
        for i in 0..n {
            self.d[i] = a.diag[i];
            self.dl[i] = if i + 1 < n { a.lower[i + 1] } else { 0.0 };
            self.du[i] = if i + 1 < n { a.upper[i] } else { 0.0 };
            self.du2[i] = 0.0;
            self.swap[i] = false;
        }
        for i in 0..n.saturating_sub(1) {
            if self.d[i].abs() >= self.dl[i].abs() {
                if self.d[i] == 0.0 {
                    return Err(i);
                }
                let f = self.dl[i] / self.d[i];
                self.dl[i] = f;
                self.d[i + 1] -= f * self.du[i];
            } else {
                let f = self.d[i] / self.dl[i];
                self.d[i] = self.dl[i];
                self.dl[i] = f;
                let temp = self.du[i];
                self.du[i] = self.d[i + 1];
                self.d[i + 1] = temp - f * self.d[i + 1];
                if i + 2 < n {
                    self.du2[i] = self.du[i + 1];
                    self.du[i + 1] *= -f;
                }
                self.swap[i] = true;
            }
        }
        if n > 0 && (self.d[n - 1] == 0.0 || !self.d[n - 1].is_finite()) {
            return Err(n - 1);
        }
        self.rank_one = false;
        if let Some((u, v)) = &a.rank_one {
            let mut z = std::mem::take(&mut self.z);
            z.copy_from_slice(u);
            self.solve_one(&mut z);
            self.vz = v.iter().zip(&z).map(|(a, b)| a * b).sum();
            self.z = z;
            self.v.copy_from_slice(v);
            if (1.0 + self.vz).abs() < 1e-14 {
                return Err(n);
            }
            self.rank_one = true;
        }
        Ok(())
    }

    /// Solves the tridiagonal part for one right-hand side `b` in place
    /// (the rank-one correction is applied by [`BatchLu::solve`]).
    fn solve_one(&self, b: &mut [f64]) {
        let n = self.n;
        for i in 0..n.saturating_sub(1) {
            if self.swap[i] {
                let temp = b[i];
                b[i] = b[i + 1];
                b[i + 1] = temp - self.dl[i] * b[i];
            } else {
                b[i + 1] -= self.dl[i] * b[i];
            }
        }
        b[n - 1] /= self.d[n - 1];
        if n > 1 {
            b[n - 2] = (b[n - 2] - self.du[n - 2] * b[n - 1]) / self.d[n - 2];
        }
        for i in (0..n.saturating_sub(2)).rev() {
            b[i] = (b[i] - self.du[i] * b[i + 1] - self.du2[i] * b[i + 2]) / self.d[i];
        }
    }

    /// Solves A X = B in place for all w columns of `b`.
    pub fn solve(&mut self) {
        let (n, w) = (self.n, self.w);
        let b = &mut self.b;
        for i in 0..n.saturating_sub(1) {
            let f = self.dl[i];
            let (top, rest) = b.split_at_mut((i + 1) * w);
            let ri = &mut top[i * w..];
            let rn = &mut rest[..w];
            if self.swap[i] {
                for c in 0..w {
                    let temp = ri[c];
                    ri[c] = rn[c];
                    rn[c] = temp - f * rn[c];
                }
            } else {
                for c in 0..w {
                    rn[c] -= f * ri[c];
                }
            }
        }
        for i in (0..n).rev() {
            let inv = 1.0 / self.d[i];
            let (head, tail) = b.split_at_mut((i + 1) * w);
            let ri = &mut head[i * w..];
            let (u1, u2) = (self.du[i], self.du2[i]);
            if i + 2 < n {
                let (r1, r2) = tail.split_at(w);
                let r2 = &r2[..w];
                for c in 0..w {
                    ri[c] = (ri[c] - u1 * r1[c] - u2 * r2[c]) * inv;
                }
            } else if i + 1 < n {
                let r1 = &tail[..w];
                for c in 0..w {
                    ri[c] = (ri[c] - u1 * r1[c]) * inv;
                }
            } else {
                for x in ri.iter_mut() {
                    *x *= inv;
                }
            }
        }
        if self.rank_one {
            // x = y - z (vᵀy)/(1 + vᵀz), column by column (vᵀy as a row)
            self.row.fill(0.0);
            for i in 0..n {
                let vi = self.v[i];
                for (s, y) in self.row.iter_mut().zip(&b[i * w..(i + 1) * w]) {
                    *s += vi * y;
                }
            }
            let scale = 1.0 / (1.0 + self.vz);
            for i in 0..n {
                let zi = self.z[i] * scale;
                for (y, s) in b[i * w..(i + 1) * w].iter_mut().zip(&self.row) {
                    *y -= zi * s;
                }
            }
        }
    }
}
