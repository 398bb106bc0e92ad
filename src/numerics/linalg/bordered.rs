//! Bordered tridiagonal systems in O(n): a tridiagonal T bordered by k ≤ 3
//! dense columns B, rows Cᵀ and a k × k corner D,
//!
//! ```text
//! M = [ T   B ]
//!     [ Cᵀ  D ],
//! ```
//!
//! factored by Gaussian elimination on M itself with the pivoting of
//! [`Tridiagonal::factor`] (rows i and i + 1 compete for the pivot of
//! column i) over the first n - 1 columns, the border rows eliminated by the
//! pivot rows as they go, and the last row of T with the border rows as a
//! dense (k + 1) × (k + 1) block inverted with partial pivoting
//! ([`super::invert_small`]).
//!
//! Why this is stable where block elimination is not: at a fold T is
//! singular and block elimination (x = T⁻¹f - T⁻¹B y) cancels two huge,
//! nearly parallel vectors (Govaerts 2000, ch. 3). Here T is never
//! inverted. With partial pivoting every pivot of the first n - 1 columns
//! is at least the sub-diagonal entry |T(i+1, i)| in modulus, so for a
//! tridiagonal with a non-vanishing sub-diagonal (diffusion couples every
//! pair of neighbours) the elimination multipliers of the border rows stay
//! bounded and a near singularity of T can only show in U's last pivot,
//! which is pivoted against the border rows in the final block, where M's
//! own nonsingularity keeps it well conditioned. (For a diagonal T, as in
//! relaxation transport with its rank-one term moved into the border, the
//! pivots are T's diagonal entries and must stay away from zero.) This is
//! Gaussian elimination with a restricted pivot order, common practice, no
//! source. Factor and solves allocate nothing.

use super::{Singular, Tridiagonal, invert_small};
use std::cell::Cell;

/// Largest border width k.
pub const MAX_BORDER: usize = 3;

/// The bordered matrix M = [T B; Cᵀ D] and its factors; all storage is
/// allocated by [`BorderedTridiagonal::new`].
#[derive(Clone, Debug)]
pub struct BorderedTridiagonal {
    /// The tridiagonal block T (its `rank_one` term must be `None`: put a
    /// rank-one term into the border with [`BorderedTridiagonal::load`]).
    pub t: Tridiagonal,
    k: usize,
    cols: Vec<f64>,
    rows: Vec<f64>,
    corner: [f64; MAX_BORDER * MAX_BORDER],
    /// L⁻¹ P B: the border columns after the row operations of T.
    bcol: Vec<f64>,
    /// The multipliers that eliminate the border rows, k × n.
    mult: Vec<f64>,
    /// Inverse of the final (k + 1) × (k + 1) block.
    finv: [f64; 16],
    tmp: Vec<f64>,
    work: Cell<u64>,
}

impl BorderedTridiagonal {
    /// An n × n zero T with no border (room for [`MAX_BORDER`]).
    pub fn new(n: usize) -> BorderedTridiagonal {
        BorderedTridiagonal {
            t: Tridiagonal::new(n),
            k: 0,
            cols: vec![0.0; MAX_BORDER * n],
            rows: vec![0.0; MAX_BORDER * n],
            corner: [0.0; MAX_BORDER * MAX_BORDER],
            bcol: vec![0.0; MAX_BORDER * n],
            mult: vec![0.0; MAX_BORDER * n],
            finv: [0.0; 16],
            tmp: vec![0.0; n],
            work: Cell::new(0),
        }
    }

    /// n, the dimension of T.
    pub fn len(&self) -> usize {
        self.t.len()
    }

    /// True for a 0 × 0 T.
    pub fn is_empty(&self) -> bool {
        self.t.is_empty()
    }

    /// Border width k.
    pub fn width(&self) -> usize {
        self.k
    }

    /// Sets T to the tridiagonal part of `jac` and the border width to
    /// `extra` plus one if `jac` has a rank-one term u vᵀ, which becomes the
    /// first border: J x = T x + u η with η = vᵀx, i.e. column u, row vᵀ and
    /// corner -1 (the row's right-hand side is 0). The other borders are
    /// zeroed. Returns the index of the first of the `extra` borders.
    pub fn load(&mut self, jac: &Tridiagonal, extra: usize) -> usize {
        let n = self.len();
        self.t.lower.copy_from_slice(&jac.lower);
        self.t.diag.copy_from_slice(&jac.diag);
        self.t.upper.copy_from_slice(&jac.upper);
        let off = usize::from(jac.rank_one.is_some());
        self.k = off + extra;
        assert!(self.k <= MAX_BORDER, "border wider than {MAX_BORDER}");
        self.cols[..self.k * n].fill(0.0);
        self.rows[..self.k * n].fill(0.0);
        self.corner.fill(0.0);
        if let Some((u, v)) = &jac.rank_one {
            self.cols[..n].copy_from_slice(u);
            self.rows[..n].copy_from_slice(v);
            self.set_corner(0, 0, -1.0);
        }
        off
    }

    /// Border column j (B's column), length n.
    pub fn col_mut(&mut self, j: usize) -> &mut [f64] {
        let n = self.len();
        &mut self.cols[j * n..(j + 1) * n]
    }

    /// Border row j (C's column), length n.
    pub fn row_mut(&mut self, j: usize) -> &mut [f64] {
        let n = self.len();
        &mut self.rows[j * n..(j + 1) * n]
    }

    /// D(r, c) = value.
    pub fn set_corner(&mut self, r: usize, c: usize, value: f64) {
        self.corner[r * MAX_BORDER + c] = value;
    }

    /// Rows processed by factor and solves since the start (n + k per
    /// call): a count of the work done, proportional to the operations.
    pub fn work(&self) -> u64 {
        self.work.get()
    }

    /// Factors M (see the module doc). Errors where a pivot of the first
    /// n - 1 columns vanishes or the final block is singular. n >= 1.
    pub fn factor(&mut self) -> Result<(), Singular> {
        let (n, k) = (self.len(), self.k);
        if n == 0 {
            return Err(Singular { row: 0 });
        }
        debug_assert!(self.t.rank_one.is_none());
        self.t.factored = false;
        self.t.eliminate()?;
        for i in 0..n - 1 {
            self.t.inv_d[i] = 1.0 / self.t.d[i];
        }
        self.t.inv_d[n - 1] = f64::NAN;
        let m = k + 1;
        let mut block = [0.0; 16];
        block[0] = self.t.d[n - 1];
        for j in 0..k {
            let col = &mut self.bcol[j * n..(j + 1) * n];
            col.copy_from_slice(&self.cols[j * n..(j + 1) * n]);
            self.t.forward(col);
            block[1 + j] = col[n - 1];
        }
        let t = &self.t;
        let (du, du2, inv_d) = (&t.du[..n], &t.du2[..n], &t.inv_d[..n]);
        for r in 0..k {
            let tmp = &mut self.tmp[..n];
            tmp.copy_from_slice(&self.rows[r * n..(r + 1) * n]);
            let mut dr = [0.0; MAX_BORDER];
            dr[..k].copy_from_slice(&self.corner[r * MAX_BORDER..r * MAX_BORDER + k]);
            let mult = &mut self.mult[r * n..(r + 1) * n];
            for i in 0..n - 1 {
                let f = tmp[i] * inv_d[i];
                mult[i] = f;
                tmp[i + 1] -= f * du[i];
                if i + 2 < n {
                    tmp[i + 2] -= f * du2[i];
                }
                for (j, d) in dr[..k].iter_mut().enumerate() {
                    *d -= f * self.bcol[j * n + i];
                }
            }
            block[(1 + r) * m] = tmp[n - 1];
            block[(1 + r) * m + 1..(1 + r) * m + 1 + k].copy_from_slice(&dr[..k]);
        }
        self.work.set(self.work.get() + (n + k) as u64);
        if block[..m * m].iter().any(|x| !x.is_finite()) {
            return Err(Singular { row: n });
        }
        invert_small(&block, &mut self.finv, m).map_err(|e| Singular { row: n - 1 + e.row })
    }

    /// Solves M [x; y] = [f; g] in place (x: f of length n, y: g of length
    /// k). Call [`BorderedTridiagonal::factor`] first.
    pub fn solve(&self, x: &mut [f64], y: &mut [f64]) {
        let (n, k) = (self.len(), self.k);
        let m = k + 1;
        let t = &self.t;
        t.forward(x);
        let x = &mut x[..n];
        let mut z = [0.0; 4];
        z[0] = x[n - 1];
        for r in 0..k {
            let mult = &self.mult[r * n..(r + 1) * n - 1];
            z[1 + r] = y[r]
                - mult
                    .iter()
                    .zip(&x[..n - 1])
                    .map(|(a, b)| a * b)
                    .sum::<f64>();
        }
        let mut s = [0.0; 4];
        for (a, s) in s[..m].iter_mut().enumerate() {
            *s = (0..m).map(|b| self.finv[a * m + b] * z[b]).sum();
        }
        x[n - 1] = s[0];
        y[..k].copy_from_slice(&s[1..m]);
        let (du, du2, inv_d) = (&t.du[..n], &t.du2[..n], &t.inv_d[..n]);
        for i in (0..n - 1).rev() {
            let mut v = x[i] - du[i] * x[i + 1];
            if i + 2 < n {
                v -= du2[i] * x[i + 2];
            }
            for (j, y) in y[..k].iter().enumerate() {
                v -= self.bcol[j * n + i] * y;
            }
            x[i] = v * inv_d[i];
        }
        self.work.set(self.work.get() + (n + k) as u64);
    }

    /// Solves Mᵀ [x; y] = [f; g] in place with the same factors. With
    /// M = Λ R (Λ the row operations, R = [U₁₁ R₁₂; 0 F], F the final
    /// block): Rᵀ q = [f; g] by forward substitution with U₁₁ᵀ and Fᵀ, then
    /// [x; y] = Λ⁻ᵀ q, the border multipliers and T's interchanges
    /// transposed in reverse order.
    pub fn solve_transpose(&self, x: &mut [f64], y: &mut [f64]) {
        let (n, k) = (self.len(), self.k);
        let m = k + 1;
        let t = &self.t;
        let (du, du2, inv_d) = (&t.du[..n], &t.du2[..n], &t.inv_d[..n]);
        {
            let x = &mut x[..n];
            for i in 0..n - 1 {
                let mut v = x[i];
                if i >= 1 {
                    v -= du[i - 1] * x[i - 1];
                }
                if i >= 2 {
                    v -= du2[i - 2] * x[i - 2];
                }
                x[i] = v * inv_d[i];
            }
            let mut h = [0.0; 4];
            h[0] = x[n - 1];
            if n >= 2 {
                h[0] -= du[n - 2] * x[n - 2];
            }
            if n >= 3 {
                h[0] -= du2[n - 3] * x[n - 3];
            }
            for j in 0..k {
                let col = &self.bcol[j * n..(j + 1) * n - 1];
                h[1 + j] = y[j] - col.iter().zip(&x[..n - 1]).map(|(a, b)| a * b).sum::<f64>();
            }
            let mut q = [0.0; 4];
            for (a, q) in q[..m].iter_mut().enumerate() {
                *q = (0..m).map(|b| self.finv[b * m + a] * h[b]).sum();
            }
            x[n - 1] = q[0];
            y[..k].copy_from_slice(&q[1..m]);
            for r in 0..k {
                let mult = &self.mult[r * n..(r + 1) * n - 1];
                for (x, f) in x[..n - 1].iter_mut().zip(mult) {
                    *x -= f * y[r];
                }
            }
        }
        t.backward_transpose(x);
        self.work.set(self.work.get() + (n + k) as u64);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use faer::prelude::Solve;

    /// A singular tridiagonal (the second difference with Neumann ends has
    /// the constant null vector) bordered by k columns and rows.
    fn sample(n: usize, k: usize, rank_one: bool) -> (BorderedTridiagonal, faer::Mat<f64>) {
        let mut jac = Tridiagonal::new(n);
        for i in 0..n {
            let (l, r) = (
                if i > 0 { 1.0 + 0.1 * i as f64 } else { 0.0 },
                if i + 1 < n {
                    1.0 + 0.1 * (i + 1) as f64
                } else {
                    0.0
                },
            );
            jac.diag[i] = -(l + r);
            if i > 0 {
                jac.lower[i] = l;
            }
            if i + 1 < n {
                jac.upper[i] = r;
            }
        }
        if rank_one {
            jac.rank_one = Some((
                (0..n).map(|i| 0.2 + 0.01 * i as f64).collect(),
                (0..n).map(|i| 1.0 / (i + 2) as f64).collect(),
            ));
        }
        let mut m = BorderedTridiagonal::new(n);
        let off = m.load(&jac, k);
        for j in 0..k {
            for i in 0..n {
                m.col_mut(off + j)[i] = ((i + 3 * j) as f64 * 0.31).sin() + 0.5;
                m.row_mut(off + j)[i] = ((i * (j + 1)) as f64 * 0.17).cos();
            }
            m.set_corner(off + j, off + j, 0.1 * j as f64);
        }
        let kk = m.width();
        let dense = faer::Mat::<f64>::from_fn(n + kk, n + kk, |r, c| match (r < n, c < n) {
            (true, true) => {
                let mut v = 0.0;
                if r == c {
                    v = m.t.diag[r];
                } else if c + 1 == r {
                    v = m.t.lower[r];
                } else if r + 1 == c {
                    v = m.t.upper[r];
                }
                v
            }
            (true, false) => m.cols[(c - n) * n + r],
            (false, true) => m.rows[(r - n) * n + c],
            (false, false) => m.corner[(r - n) * MAX_BORDER + c - n],
        });
        (m, dense)
    }

    /// Against faer's dense LU of M and of Mᵀ (a general-purpose library),
    /// with T exactly singular, borders of width 1 to 3, with and without a
    /// rank-one term moved into the border.
    #[test]
    fn solves_match_dense_with_singular_block() {
        for (n, k, r1) in [(12, 1, false), (13, 2, false), (9, 1, true), (17, 2, true)] {
            let (mut m, dense) = sample(n, k, r1);
            m.factor().unwrap();
            let kk = m.width();
            let rhs: Vec<f64> = (0..n + kk).map(|i| (i as f64 * 0.7).sin() + 0.2).collect();
            for transpose in [false, true] {
                let mut want = faer::Mat::<f64>::from_fn(n + kk, 1, |i, _| rhs[i]);
                if transpose {
                    dense.transpose().to_owned().partial_piv_lu()
                } else {
                    dense.partial_piv_lu()
                }
                .solve_in_place(want.as_mut());
                let (mut x, mut y) = (rhs[..n].to_vec(), rhs[n..].to_vec());
                if transpose {
                    m.solve_transpose(&mut x, &mut y);
                } else {
                    m.solve(&mut x, &mut y);
                }
                let got: Vec<f64> = x.iter().chain(&y).copied().collect();
                let scale = (0..n + kk).map(|i| want[(i, 0)].abs()).fold(1.0, f64::max);
                for i in 0..n + kk {
                    assert!(
                        (got[i] - want[(i, 0)]).abs() < 1e-11 * scale,
                        "n {n} k {k} r1 {r1} transpose {transpose} row {i}: {} vs {}",
                        got[i],
                        want[(i, 0)]
                    );
                }
            }
        }
    }
}
