//! O(n) linear algebra for tridiagonal systems: LU with partial pivoting
//! (the classic gttrf/gttrs scheme), rank-one updates by Sherman-Morrison,
//! and eigenvalue counts by Sturm sequences; bordered tridiagonal systems
//! in [`bordered`].

pub mod bordered;

/// A tridiagonal matrix, optionally plus a rank-one term u vᵀ, and its
/// pivoted LU factors. All storage is allocated once by [`Tridiagonal::new`];
/// factor and solve allocate nothing.
#[derive(Clone, Debug)]
pub struct Tridiagonal {
    /// Sub-diagonal: `lower[i]` = A(i, i-1) (`lower[0]` unused).
    pub lower: Vec<f64>,
    /// Diagonal.
    pub diag: Vec<f64>,
    /// Super-diagonal: `upper[i]` = A(i, i+1) (`upper[n-1]` unused).
    pub upper: Vec<f64>,
    /// Optional rank-one term: A += u vᵀ.
    pub rank_one: Option<(Vec<f64>, Vec<f64>)>,
    // factors
    dl: Vec<f64>,
    d: Vec<f64>,
    /// 1 / d: the solves multiply (a division per row would bound them).
    inv_d: Vec<f64>,
    du: Vec<f64>,
    du2: Vec<f64>,
    swap: Vec<bool>,
    z: Vec<f64>,
    factored: bool,
}

/// The matrix could not be factored: a zero pivot at `row`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Singular {
    /// Row of the zero pivot.
    pub row: usize,
}

impl Tridiagonal {
    /// An n x n zero matrix with room for its factors.
    pub fn new(n: usize) -> Tridiagonal {
        Tridiagonal {
            lower: vec![0.0; n],
            diag: vec![0.0; n],
            upper: vec![0.0; n],
            rank_one: None,
            dl: vec![0.0; n],
            d: vec![0.0; n],
            inv_d: vec![0.0; n],
            du: vec![0.0; n],
            du2: vec![0.0; n],
            swap: vec![false; n],
            z: vec![0.0; n],
            factored: false,
        }
    }

    /// Copies the entries of `other` (same size), rank-one term included,
    /// without allocating when the sizes already match; the factors are
    /// left stale (call [`Tridiagonal::factor`]).
    pub fn copy_entries_from(&mut self, other: &Tridiagonal) {
        self.lower.copy_from_slice(&other.lower);
        self.diag.copy_from_slice(&other.diag);
        self.upper.copy_from_slice(&other.upper);
        match (&mut self.rank_one, &other.rank_one) {
            (Some((u, v)), Some((ou, ov))) => {
                u.copy_from_slice(ou);
                v.copy_from_slice(ov);
            }
            (mine, theirs) => mine.clone_from(theirs),
        }
        self.factored = false;
    }

    /// Copies `other` (same size) with its factors, so that [`Tridiagonal::solve`]
    /// on the copy gives bit-identical results; allocates nothing when the
    /// sizes already match and neither has a rank-one term.
    pub fn copy_factored_from(&mut self, other: &Tridiagonal) {
        self.copy_entries_from(other);
        self.dl.copy_from_slice(&other.dl);
        self.d.copy_from_slice(&other.d);
        self.inv_d.copy_from_slice(&other.inv_d);
        self.du.copy_from_slice(&other.du);
        self.du2.copy_from_slice(&other.du2);
        self.swap.copy_from_slice(&other.swap);
        self.z.copy_from_slice(&other.z);
        self.factored = other.factored;
    }

    /// Dimension.
    pub fn len(&self) -> usize {
        self.diag.len()
    }

    /// True for a 0 x 0 matrix.
    pub fn is_empty(&self) -> bool {
        self.diag.is_empty()
    }

    /// Entry A(r, c), including the rank-one term.
    pub fn entry(&self, r: usize, c: usize) -> f64 {
        let mut v = 0.0;
        if r == c {
            v += self.diag[r];
        } else if c + 1 == r {
            v += self.lower[r];
        } else if r + 1 == c {
            v += self.upper[r];
        }
        if let Some((u, w)) = &self.rank_one {
            v += u[r] * w[c];
        }
        v
    }

    /// Sets every entry (and the rank-one term, if any) to zero.
    pub fn clear(&mut self) {
        self.lower.fill(0.0);
        self.diag.fill(0.0);
        self.upper.fill(0.0);
        if let Some((u, v)) = &mut self.rank_one {
            u.fill(0.0);
            v.fill(0.0);
        }
        self.factored = false;
    }

    /// y = A x.
    pub fn mul(&self, x: &[f64], y: &mut [f64]) {
        let n = self.len();
        for i in 0..n {
            let mut s = self.diag[i] * x[i];
            if i > 0 {
                s += self.lower[i] * x[i - 1];
            }
            if i + 1 < n {
                s += self.upper[i] * x[i + 1];
            }
            y[i] = s;
        }
        if let Some((u, v)) = &self.rank_one {
            let vx: f64 = v.iter().zip(x).map(|(a, b)| a * b).sum();
            for (y, u) in y.iter_mut().zip(u) {
                *y += u * vx;
            }
        }
    }

    /// y = Aᵀ x (with a rank-one term, Aᵀ = Tᵀ + v uᵀ).
    pub fn mul_transpose(&self, x: &[f64], y: &mut [f64]) {
        let n = self.len();
        for i in 0..n {
            let mut s = self.diag[i] * x[i];
            if i > 0 {
                s += self.upper[i - 1] * x[i - 1];
            }
            if i + 1 < n {
                s += self.lower[i + 1] * x[i + 1];
            }
            y[i] = s;
        }
        if let Some((u, v)) = &self.rank_one {
            let ux: f64 = u.iter().zip(x).map(|(a, b)| a * b).sum();
            for (y, v) in y.iter_mut().zip(v) {
                *y += v * ux;
            }
        }
    }

    /// LU factorisation with partial pivoting of the tridiagonal part
    /// (row interchanges create a second super-diagonal), then, if a
    /// rank-one term is present, z = T⁻¹ u for Sherman-Morrison.
    pub fn factor(&mut self) -> Result<(), Singular> {
        let n = self.len();
        self.factored = n == 0;
        if n == 0 {
            return Ok(());
        }
        self.eliminate()?;
        if self.d[n - 1] == 0.0 || !self.d[n - 1].is_finite() {
            return Err(Singular { row: n - 1 });
        }
        for (r, d) in self.inv_d.iter_mut().zip(&self.d) {
            *r = 1.0 / d;
        }
        self.factored = true;
        if let Some((u, _)) = &self.rank_one {
            self.z.copy_from_slice(u);
            let mut z = std::mem::take(&mut self.z);
            self.solve_tridiagonal(&mut z);
            self.z = z;
            let (_, v) = self.rank_one.as_ref().expect("checked above");
            let vz: f64 = v.iter().zip(&self.z).map(|(a, b)| a * b).sum();
            if (1.0 + vz).abs() < 1e-14 {
                self.factored = false;
                return Err(Singular { row: n });
            }
        }
        Ok(())
    }

    /// The n - 1 elimination steps of [`Tridiagonal::factor`] (partial
    /// pivoting between rows i and i + 1), leaving U's last pivot d[n-1]
    /// unchecked and `inv_d` unset: the bordered solver
    /// ([`bordered::BorderedTridiagonal`]) pivots that last row against its
    /// border rows instead. n >= 1.
    fn eliminate(&mut self) -> Result<(), Singular> {
        let n = self.len();
        // slices of length n: the loops below run without bounds checks
        let d = &mut self.d[..n];
        let dl = &mut self.dl[..n];
        let du = &mut self.du[..n];
        let du2 = &mut self.du2[..n];
        let swap = &mut self.swap[..n];
        d.copy_from_slice(&self.diag[..n]);
        dl[..n - 1].copy_from_slice(&self.lower[1..n]);
        dl[n - 1] = 0.0;
        du[..n - 1].copy_from_slice(&self.upper[..n - 1]);
        du[n - 1] = 0.0;
        du2.fill(0.0);
        swap.fill(false);
        for i in 0..n - 1 {
            if d[i].abs() >= dl[i].abs() {
                if d[i] == 0.0 {
                    return Err(Singular { row: i });
                }
                let f = dl[i] / d[i];
                dl[i] = f;
                d[i + 1] -= f * du[i];
            } else {
                let f = d[i] / dl[i];
                d[i] = dl[i];
                dl[i] = f;
                let temp = du[i];
                du[i] = d[i + 1];
                d[i + 1] = temp - f * d[i + 1];
                if i + 2 < n {
                    du2[i] = du[i + 1];
                    du[i + 1] *= -f;
                }
                swap[i] = true;
            }
        }
        Ok(())
    }

    /// L⁻¹ P b: the forward substitution of the row interchanges and unit
    /// lower factor (the first half of a solve).
    #[inline]
    fn forward(&self, b: &mut [f64]) {
        let n = self.len();
        let b = &mut b[..n];
        let (dl, swap) = (&self.dl[..n], &self.swap[..n]);
        for i in 0..n - 1 {
            if swap[i] {
                let temp = b[i];
                b[i] = b[i + 1];
                b[i + 1] = temp - dl[i] * b[i];
            } else {
                b[i + 1] -= dl[i] * b[i];
            }
        }
    }

    /// Pᵀ L⁻ᵀ b: the back substitution with Lᵀ undoing the interchanges in
    /// reverse order (the second half of a transposed solve).
    #[inline]
    fn backward_transpose(&self, b: &mut [f64]) {
        let n = self.len();
        for i in (0..n - 1).rev() {
            if self.swap[i] {
                let temp = b[i + 1];
                b[i + 1] = b[i] - self.dl[i] * temp;
                b[i] = temp;
            } else {
                b[i] -= self.dl[i] * b[i + 1];
            }
        }
    }

    fn solve_tridiagonal(&self, b: &mut [f64]) {
        let n = self.len();
        if n == 0 {
            return;
        }
        self.forward(b);
        let b = &mut b[..n];
        let (du, du2, inv_d) = (&self.du[..n], &self.du2[..n], &self.inv_d[..n]);
        b[n - 1] *= inv_d[n - 1];
        if n > 1 {
            b[n - 2] = (b[n - 2] - du[n - 2] * b[n - 1]) * inv_d[n - 2];
        }
        for i in (0..n.saturating_sub(2)).rev() {
            b[i] = (b[i] - du[i] * b[i + 1] - du2[i] * b[i + 2]) * inv_d[i];
        }
    }

    /// Two tridiagonal solves at once: the substitutions of `a` and `b`
    /// interleaved, so that their two serial dependency chains overlap; each
    /// result is bit for bit the one of [`Tridiagonal::solve_tridiagonal`].
    fn solve_tridiagonal_pair(&self, a: &mut [f64], b: &mut [f64]) {
        let n = self.len();
        if n == 0 {
            return;
        }
        let (a, b) = (&mut a[..n], &mut b[..n]);
        let (dl, du, du2) = (&self.dl[..n], &self.du[..n], &self.du2[..n]);
        let (inv_d, swap) = (&self.inv_d[..n], &self.swap[..n]);
        for i in 0..n - 1 {
            if swap[i] {
                let (ta, tb) = (a[i], b[i]);
                a[i] = a[i + 1];
                b[i] = b[i + 1];
                a[i + 1] = ta - dl[i] * a[i];
                b[i + 1] = tb - dl[i] * b[i];
            } else {
                a[i + 1] -= dl[i] * a[i];
                b[i + 1] -= dl[i] * b[i];
            }
        }
        a[n - 1] *= inv_d[n - 1];
        b[n - 1] *= inv_d[n - 1];
        if n > 1 {
            a[n - 2] = (a[n - 2] - du[n - 2] * a[n - 1]) * inv_d[n - 2];
            b[n - 2] = (b[n - 2] - du[n - 2] * b[n - 1]) * inv_d[n - 2];
        }
        for i in (0..n.saturating_sub(2)).rev() {
            a[i] = (a[i] - du[i] * a[i + 1] - du2[i] * a[i + 2]) * inv_d[i];
            b[i] = (b[i] - du[i] * b[i + 1] - du2[i] * b[i + 2]) * inv_d[i];
        }
    }

    /// [`Tridiagonal::solve`] for two right-hand sides at once (the same
    /// results bit for bit, in less time: the substitutions overlap).
    pub fn solve_pair(&self, a: &mut [f64], b: &mut [f64]) {
        debug_assert!(self.factored, "solve before factor");
        self.solve_tridiagonal_pair(a, b);
        if let Some((_, v)) = &self.rank_one {
            let vz: f64 = v.iter().zip(&self.z).map(|(a, b)| a * b).sum();
            for x in [a, b] {
                let vy: f64 = v.iter().zip(x.iter()).map(|(a, b)| a * b).sum();
                let c = vy / (1.0 + vz);
                for (x, z) in x.iter_mut().zip(&self.z) {
                    *x -= c * z;
                }
            }
        }
    }

    /// Solves A x = b in place (b becomes x). Call [`Tridiagonal::factor`] first.
    /// With a rank-one term: x = y - z (vᵀy)/(1 + vᵀz), y = T⁻¹b, z = T⁻¹u
    /// (Sherman-Morrison).
    pub fn solve(&self, b: &mut [f64]) {
        debug_assert!(self.factored, "solve before factor");
        self.solve_tridiagonal(b);
        if let Some((_, v)) = &self.rank_one {
            let vy: f64 = v.iter().zip(b.iter()).map(|(a, b)| a * b).sum();
            let vz: f64 = v.iter().zip(&self.z).map(|(a, b)| a * b).sum();
            let c = vy / (1.0 + vz);
            for (b, z) in b.iter_mut().zip(&self.z) {
                *b -= c * z;
            }
        }
    }

    /// Solves Aᵀ x = b in place (b becomes x) with the factors of
    /// [`Tridiagonal::factor`]. With T = P L U (L unit lower bidiagonal, U
    /// upper with two super-diagonals, P the row interchanges), Tᵀ = Uᵀ Lᵀ Pᵀ:
    /// forward substitution with Uᵀ, then back substitution with Lᵀ undoing
    /// the interchanges in reverse order (the transposed branch of the
    /// classic gttrs scheme). With a rank-one term, Aᵀ = Tᵀ + v uᵀ and, since
    /// uᵀx = zᵀ(b - v uᵀx) with z = T⁻¹u already stored,
    /// x = T⁻ᵀ(b - c v), c = (zᵀ b)/(1 + vᵀ z) (Sherman-Morrison, one
    /// transposed solve). Allocates nothing.
    pub fn solve_transpose(&self, b: &mut [f64]) {
        debug_assert!(self.factored, "solve_transpose before factor");
        if let Some((_, v)) = &self.rank_one {
            let zb: f64 = self.z.iter().zip(b.iter()).map(|(a, b)| a * b).sum();
            let vz: f64 = v.iter().zip(&self.z).map(|(a, b)| a * b).sum();
            let c = zb / (1.0 + vz);
            for (b, v) in b.iter_mut().zip(v) {
                *b -= c * v;
            }
        }
        self.solve_tridiagonal_transpose(b);
    }

    fn solve_tridiagonal_transpose(&self, b: &mut [f64]) {
        let n = self.len();
        if n == 0 {
            return;
        }
        // Uᵀ y = b: U(i, i) = d[i], U(i, i+1) = du[i], U(i, i+2) = du2[i]
        b[0] *= self.inv_d[0];
        if n > 1 {
            b[1] = (b[1] - self.du[0] * b[0]) * self.inv_d[1];
        }
        for i in 2..n {
            b[i] = (b[i] - self.du[i - 1] * b[i - 1] - self.du2[i - 2] * b[i - 2]) * self.inv_d[i];
        }
        // Lᵀ Pᵀ x = y, interchanges undone from the last one back
        self.backward_transpose(b);
    }

    /// Number of eigenvalues with positive real part of D⁻¹ A, where D is a
    /// positive diagonal (heat capacities), when it can be had in O(n): a
    /// tridiagonal matrix whose off-diagonal products A(i, i+1) A(i+1, i) are
    /// all >= 0 is similar to a symmetric one with off-diagonals
    /// sqrt(product), so its eigenvalues are real and a Sturm sequence at 0
    /// counts them (Sylvester's law of inertia). Returns `None` when the
    /// matrix has a rank-one term or a negative product.
    pub fn count_positive_eigenvalues(&self, capacity: &[f64]) -> Option<usize> {
        if let Some((u, v)) = &self.rank_one {
            return self.count_positive_diagonal_plus_rank_one(u, v);
        }
        let n = self.len();
        let mut count = 0;
        let mut q_prev = 1.0;
        for i in 0..n {
            let di = self.diag[i] / capacity[i];
            let e2 = if i > 0 {
                let p = self.lower[i] * self.upper[i - 1] / (capacity[i] * capacity[i - 1]);
                if p < 0.0 {
                    return None;
                }
                p
            } else {
                0.0
            };
            // LDLᵀ of the symmetrised matrix: q_i = d_i - e_{i-1}² / q_{i-1}.
            let mut q = di - e2 / q_prev;
            if q == 0.0 {
                q = -f64::EPSILON * (di.abs() + e2.sqrt() + 1e-300);
            }
            if q > 0.0 {
                count += 1;
            }
            q_prev = q;
        }
        Some(count)
    }
}

impl Tridiagonal {
    /// Positive eigenvalues of D⁻¹(diag(d) + γ 1 wᵀ) with w > 0 (relaxation
    /// transport): W A = diag(w d) + γ w wᵀ is symmetric, so the spectrum is
    /// real and, by Sylvester's law and the Schur complement of the bordered
    /// matrix [[diag(w d), z], [zᵀ, -1]] (z = √γ w),
    /// n₊ = #{d_i > 0} + [ -1 - γ Σ w_i/d_i > 0 ]. O(n). The capacities D
    /// do not change the inertia (D⁻¹A is self-adjoint in the W D product).
    /// `None` unless the off-diagonals vanish, u is constant and w > 0.
    fn count_positive_diagonal_plus_rank_one(&self, u: &[f64], w: &[f64]) -> Option<usize> {
        let n = self.len();
        let gamma = *u.first()?;
        if u.iter().any(|x| *x != gamma) || w.iter().any(|x| *x <= 0.0) || gamma < 0.0 {
            return None;
        }
        if (1..n).any(|i| self.lower[i] != 0.0 || self.upper[i - 1] != 0.0) {
            return None;
        }
        let mut count = 0;
        let mut sum = 0.0;
        for i in 0..n {
            let mut d = self.diag[i];
            if d == 0.0 {
                d = -f64::EPSILON;
            }
            if d > 0.0 {
                count += 1;
            }
            sum += w[i] / d;
        }
        if -1.0 - gamma * sum > 0.0 {
            count += 1;
        }
        Some(count)
    }
}

/// Inverse of a k × k matrix (k ≤ 4) by Gauss-Jordan with partial pivoting.
pub fn invert_small(a: &[f64], inv: &mut [f64], k: usize) -> Result<(), Singular> {
    let mut m = [0.0; 16];
    let mut r = [0.0; 16];
    for i in 0..k {
        for j in 0..k {
            m[i * k + j] = a[i * k + j];
            r[i * k + j] = if i == j { 1.0 } else { 0.0 };
        }
    }
    let scale = a.iter().fold(0.0f64, |s, x| s.max(x.abs())).max(1e-300);
    for col in 0..k {
        let p = (col..k)
            .max_by(|&x, &y| m[x * k + col].abs().total_cmp(&m[y * k + col].abs()))
            .unwrap_or(col);
        let pivot = m[p * k + col].abs();
        if pivot.is_nan() || pivot <= 1e-14 * scale {
            return Err(Singular { row: col });
        }
        for j in 0..k {
            m.swap(col * k + j, p * k + j);
            r.swap(col * k + j, p * k + j);
        }
        let d = m[col * k + col];
        for j in 0..k {
            m[col * k + j] /= d;
            r[col * k + j] /= d;
        }
        for i in 0..k {
            if i != col {
                let f = m[i * k + col];
                for j in 0..k {
                    m[i * k + j] -= f * m[col * k + j];
                    r[i * k + j] -= f * r[col * k + j];
                }
            }
        }
    }
    inv[..k * k].copy_from_slice(&r[..k * k]);
    Ok(())
}

/// Number of eigenvalues with negative real part of a k × k matrix, k ≤ 2.
pub fn negative_eigenvalues(e: &[f64], k: usize) -> usize {
    match k {
        1 => usize::from(e[0] < 0.0),
        _ => {
            let (tr, det) = (e[0] + e[3], e[0] * e[3] - e[1] * e[2]);
            if det < 0.0 {
                1
            } else if tr < 0.0 {
                2
            } else {
                0
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sample(n: usize, pivot_trouble: bool) -> Tridiagonal {
        let mut a = Tridiagonal::new(n);
        for i in 0..n {
            a.diag[i] = if pivot_trouble && i % 3 == 0 {
                1e-3
            } else {
                2.0 + i as f64 * 0.1
            };
            if i > 0 {
                a.lower[i] = 1.5 - 0.05 * i as f64;
            }
            if i + 1 < n {
                a.upper[i] = -0.7 + 0.03 * i as f64;
            }
        }
        a
    }

    #[test]
    fn solves_with_pivoting_and_rank_one() {
        for (trouble, r1) in [(false, false), (true, false), (true, true)] {
            let n = 17;
            let mut a = sample(n, trouble);
            if r1 {
                a.rank_one = Some((vec![0.3; n], (0..n).map(|i| 1.0 / (i + 1) as f64).collect()));
            }
            let x: Vec<f64> = (0..n).map(|i| (i as f64 * 0.7).sin()).collect();
            let mut b = vec![0.0; n];
            a.mul(&x, &mut b);
            a.factor().unwrap();
            a.solve(&mut b);
            for (p, q) in b.iter().zip(&x) {
                assert!((p - q).abs() < 1e-12, "{p} vs {q}");
            }
        }
    }

    #[test]
    fn transpose_solve_matches_dense() {
        // against faer's dense LU of Aᵀ (general-purpose library), with and
        // without pivoting trouble and a rank-one term
        use faer::prelude::Solve;
        for (trouble, r1) in [(false, false), (true, false), (false, true), (true, true)] {
            let n = 17;
            let mut a = sample(n, trouble);
            if r1 {
                a.rank_one = Some((
                    (0..n).map(|i| 0.3 + 0.02 * i as f64).collect(),
                    (0..n).map(|i| 1.0 / (i + 1) as f64).collect(),
                ));
            }
            a.factor().unwrap();
            let b: Vec<f64> = (0..n).map(|i| (i as f64 * 0.37).cos() + 0.1).collect();
            let dense = faer::Mat::<f64>::from_fn(n, n, |r, c| a.entry(c, r));
            let mut rhs = faer::Mat::<f64>::from_fn(n, 1, |i, _| b[i]);
            dense.partial_piv_lu().solve_in_place(rhs.as_mut());
            let mut x = b.clone();
            a.solve_transpose(&mut x);
            let scale = (0..n).map(|i| rhs[(i, 0)].abs()).fold(0.0, f64::max);
            for i in 0..n {
                assert!(
                    (x[i] - rhs[(i, 0)]).abs() < 1e-12 * scale,
                    "case ({trouble}, {r1}) row {i}: {} vs {}",
                    x[i],
                    rhs[(i, 0)]
                );
            }
            // and the plain solve of the transpose differs (not symmetric)
            let mut y = b.clone();
            a.solve(&mut y);
            assert!(y.iter().zip(&x).any(|(p, q)| (p - q).abs() > 1e-6));
        }
    }

    #[test]
    fn sturm_count_matches_known_spectrum() {
        // The second-difference matrix tridiag(1, -2, 1) + s I has eigenvalues
        // s - 2 + 2 cos(kπ/(n+1)), k = 1..n (common practice, no source);
        // the shifts avoid an exactly zero eigenvalue (s = 3 gives one at k = 14).
        let n = 20;
        for s in [-1.0, 0.5, 1.3, 2.9] {
            let mut a = Tridiagonal::new(n);
            for i in 0..n {
                a.diag[i] = -2.0 + s;
                if i > 0 {
                    a.lower[i] = 1.0;
                    a.upper[i - 1] = 1.0;
                }
            }
            let expected = (1..=n)
                .filter(|k| {
                    s - 2.0 + 2.0 * (*k as f64 * std::f64::consts::PI / (n as f64 + 1.0)).cos()
                        > 0.0
                })
                .count();
            assert_eq!(a.count_positive_eigenvalues(&vec![1.0; n]), Some(expected));
        }
    }

    #[test]
    fn diagonal_plus_rank_one_count_matches_dense() {
        // against a dense eigen-solve (faer), for several sign patterns
        let n = 12;
        for k in 0..6 {
            let mut a = Tridiagonal::new(n);
            let w: Vec<f64> = (0..n).map(|i| (1.0 + i as f64 * 0.3) / 20.0).collect();
            for i in 0..n {
                a.diag[i] = -3.0 + (i as f64 * 0.7 + k as f64).sin() * (1.0 + k as f64);
            }
            let gamma = 0.5 + k as f64;
            a.rank_one = Some((vec![gamma; n], w.clone()));
            let dense = faer::Mat::<f64>::from_fn(
                n,
                n,
                |r, c| if r == c { a.diag[r] } else { 0.0 } + gamma * w[c],
            );
            let expected = dense
                .eigenvalues()
                .unwrap()
                .iter()
                .filter(|z| z.re > 0.0)
                .count();
            assert_eq!(
                a.count_positive_eigenvalues(&vec![1.0; n]),
                Some(expected),
                "case {k}"
            );
        }
    }
}
