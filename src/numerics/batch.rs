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
        self.dispatch(None);
    }

    /// Solves A X = diag(s) B - c e_wᵀ in place: each row i of `b` is first
    /// scaled by `scale[i]` and its last column lowered by `shift[i]`, as
    /// the forward elimination reaches it (the same operations as scaling
    /// first and calling [`BatchLu::solve`], so the same bits, without a
    /// separate pass over the n x w block). One step of the seasonal
    /// model's monodromy (n columns) and parameter sensitivity (the last):
    /// X = (J - C/Δt)⁻¹ (-(C/Δt) B - ∂F/∂p e_wᵀ).
    pub fn solve_scaled(&mut self, scale: &[f64], shift: &[f64]) {
        self.dispatch(Some((scale, shift)));
    }

    /// Runs [`BatchLu::kernel`] with the row operations built for AVX
    /// where the processor has it (4 doubles per instruction instead of
    /// SSE2's 2), else the portable ones. AVX without FMA rounds every
    /// product and sum as the portable code does (Rust never fuses a
    /// multiply and an add on its own), so both give the same bits.
    fn dispatch(&mut self, prep: Option<(&[f64], &[f64])>) {
        #[cfg(target_arch = "x86_64")]
        if std::arch::is_x86_feature_detected!("avx") {
            self.kernel::<true>(prep);
            return;
        }
        self.kernel::<false>(prep);
    }

    /// Forward elimination (with the optional row preparation of
    /// [`BatchLu::solve_scaled`]), back substitution and the rank-one
    /// correction over the w columns; `AVX` selects the AVX row operations
    /// (only when the processor has AVX: [`BatchLu::dispatch`]).
    fn kernel<const AVX: bool>(&mut self, prep: Option<(&[f64], &[f64])>) {
        let (n, w) = (self.n, self.w);
        let b = &mut self.b;
        macro_rules! op {
            ($f:ident($($a:expr),*)) => {{
                #[cfg(target_arch = "x86_64")]
                if AVX {
                    // SAFETY: AVX is true only where the processor has AVX
                    // (checked by `dispatch`), the target feature's only
                    // requirement.
                    unsafe { avx::$f($($a),*) }
                } else {
                    portable::$f($($a),*)
                }
                #[cfg(not(target_arch = "x86_64"))]
                portable::$f($($a),*)
            }};
        }
        if let (true, Some((scale, shift))) = (n > 0, prep) {
            op!(scale_shift(&mut b[..w], scale[0], shift[0]));
        }
        for i in 0..n.saturating_sub(1) {
            let f = self.dl[i];
            let (top, rest) = b.split_at_mut((i + 1) * w);
            let ri = &mut top[i * w..];
            let rn = &mut rest[..w];
            match (prep, self.swap[i]) {
                (Some((scale, shift)), true) => {
                    op!(scale_swap_eliminate(ri, rn, f, scale[i + 1], shift[i + 1]))
                }
                (Some((scale, shift)), false) => {
                    op!(scale_eliminate(rn, ri, f, scale[i + 1], shift[i + 1]))
                }
                (None, true) => op!(swap_eliminate(ri, rn, f)),
                (None, false) => op!(eliminate(rn, ri, f)),
            }
        }
        for i in (0..n).rev() {
            let inv = 1.0 / self.d[i];
            let (head, tail) = b.split_at_mut((i + 1) * w);
            let ri = &mut head[i * w..];
            let (u1, u2) = (self.du[i], self.du2[i]);
            if i + 2 < n {
                let (r1, r2) = tail.split_at(w);
                op!(back_two(ri, r1, &r2[..w], u1, u2, inv));
            } else if i + 1 < n {
                op!(back_one(ri, &tail[..w], u1, inv));
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

// The row operations of [`BatchLu::kernel`], as functions of separate,
// non-overlapping rows: not inlined, so that the compiler knows from the
// argument types that the rows do not overlap and vectorises the loops
// (written inline over sub-slices of one block they ran one element at a
// time behind a runtime overlap check). Built twice: portable, and with
// AVX for the AVX build of the kernel.
macro_rules! row_ops {
    ($($feature:meta)?) => {
        /// row ← s row, then its last entry lowered by c.
        $(#[$feature])?
        #[inline(never)]
        pub(super) fn scale_shift(row: &mut [f64], s: f64, c: f64) {
            for x in row.iter_mut() {
                *x *= s;
            }
            if let Some(last) = row.last_mut() {
                *last -= c;
            }
        }

        /// rn ← rn - f ri.
        $(#[$feature])?
        #[inline(never)]
        pub(super) fn eliminate(rn: &mut [f64], ri: &[f64], f: f64) {
            for (x, a) in rn.iter_mut().zip(ri) {
                *x -= f * a;
            }
        }

        /// rn ← (s rn - c e_w) - f ri: [`scale_shift`] and [`eliminate`]
        /// in one pass, each entry through the same operations.
        $(#[$feature])?
        #[inline(never)]
        pub(super) fn scale_eliminate(rn: &mut [f64], ri: &[f64], f: f64, s: f64, c: f64) {
            let Some(((xl, rn), (al, ri))) = rn.split_last_mut().zip(ri.split_last()) else {
                return;
            };
            for (x, a) in rn.iter_mut().zip(ri) {
                *x = *x * s - f * a;
            }
            *xl = (*xl * s - c) - f * al;
        }

        /// (ri, rn) ← (rn', ri - f rn') with rn' = s rn - c e_w:
        /// [`scale_shift`] and [`swap_eliminate`] in one pass.
        $(#[$feature])?
        #[inline(never)]
        pub(super) fn scale_swap_eliminate(ri: &mut [f64], rn: &mut [f64], f: f64, s: f64, c: f64) {
            let Some(((al, ri), (xl, rn))) = ri.split_last_mut().zip(rn.split_last_mut()) else {
                return;
            };
            for (a, x) in ri.iter_mut().zip(rn.iter_mut()) {
                let temp = *a;
                let y = *x * s;
                *a = y;
                *x = temp - f * y;
            }
            let temp = *al;
            let y = *xl * s - c;
            *al = y;
            *xl = temp - f * y;
        }

        /// (ri, rn) ← (rn, ri - f rn): the interchanged elimination step.
        $(#[$feature])?
        #[inline(never)]
        pub(super) fn swap_eliminate(ri: &mut [f64], rn: &mut [f64], f: f64) {
            for (a, x) in ri.iter_mut().zip(rn.iter_mut()) {
                let temp = *a;
                *a = *x;
                *x = temp - f * *x;
            }
        }

        /// ri ← (ri - u1 r1 - u2 r2) inv.
        $(#[$feature])?
        #[inline(never)]
        pub(super) fn back_two(ri: &mut [f64], r1: &[f64], r2: &[f64], u1: f64, u2: f64, inv: f64) {
            for ((x, a), b) in ri.iter_mut().zip(r1).zip(r2) {
                *x = (*x - u1 * a - u2 * b) * inv;
            }
        }

        /// ri ← (ri - u1 r1) inv.
        $(#[$feature])?
        #[inline(never)]
        pub(super) fn back_one(ri: &mut [f64], r1: &[f64], u1: f64, inv: f64) {
            for (x, a) in ri.iter_mut().zip(r1) {
                *x = (*x - u1 * a) * inv;
            }
        }
    };
}

/// The row operations, portable build.
mod portable {
    row_ops!();
}

/// The row operations built with AVX (called only where it is present).
#[cfg(target_arch = "x86_64")]
mod avx {
    row_ops!(target_feature(enable = "avx"));
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::numerics::linalg::Tridiagonal;

    /// A tridiagonal matrix whose small diagonal forces row interchanges,
    /// optionally with a rank-one term.
    fn matrix(n: usize, rank_one: bool) -> Tridiagonal {
        let mut a = Tridiagonal::new(n);
        for i in 0..n {
            a.diag[i] = if i % 3 == 1 {
                0.01
            } else {
                -4.0 - 0.1 * i as f64
            };
            a.lower[i] = 1.5 + 0.01 * i as f64;
            a.upper[i] = -0.7 + 0.02 * i as f64;
        }
        if rank_one {
            let u: Vec<f64> = (0..n).map(|i| 0.1 * (i as f64).sin()).collect();
            let v: Vec<f64> = (0..n).map(|i| 0.05 * (1.0 + (i % 4) as f64)).collect();
            a.rank_one = Some((u, v));
        }
        a
    }

    fn block(n: usize, w: usize) -> Vec<f64> {
        (0..n * w)
            .map(|k| ((k * 7919) % 101) as f64 / 13.0 - 3.0)
            .collect()
    }

    /// The block solve equals column-by-column solves of the scalar
    /// tridiagonal LU (an independent implementation of the same
    /// factorisation), with and without a rank-one term; the fused
    /// scaling gives the bits of scaling first; the AVX and portable row
    /// operations give the same bits. Common practice, no source.
    #[test]
    fn block_solves_match_column_solves_and_every_build_agrees() {
        let (n, w) = (37, 11);
        for rank_one in [false, true] {
            let mut a = matrix(n, rank_one);
            let mut lu = BatchLu::default();
            lu.resize(n, w);
            lu.factor(&a).unwrap();
            assert!(
                lu.swap.iter().any(|s| *s),
                "the test needs row interchanges"
            );
            let scale: Vec<f64> = (0..n).map(|i| -1.0 - 0.3 * i as f64).collect();
            let shift: Vec<f64> = (0..n).map(|i| 0.25 * i as f64 - 2.0).collect();
            let b0 = block(n, w);
            // scaled by hand, then the plain solve
            let mut by_hand = b0.clone();
            for i in 0..n {
                for c in 0..w {
                    by_hand[i * w + c] *= scale[i];
                }
                by_hand[i * w + w - 1] -= shift[i];
            }
            let rhs = by_hand.clone();
            lu.b.copy_from_slice(&by_hand);
            lu.solve();
            let plain = lu.b.clone();
            lu.b.copy_from_slice(&b0);
            lu.solve_scaled(&scale, &shift);
            assert_eq!(lu.b, plain, "fused scaling, rank one {rank_one}");
            for avx in [false, true] {
                #[cfg(target_arch = "x86_64")]
                if avx && !std::arch::is_x86_feature_detected!("avx") {
                    continue;
                }
                lu.b.copy_from_slice(&b0);
                if avx {
                    lu.kernel::<true>(Some((&scale, &shift)));
                } else {
                    lu.kernel::<false>(Some((&scale, &shift)));
                }
                assert_eq!(lu.b, plain, "avx {avx}, rank one {rank_one}");
            }
            a.factor().unwrap();
            for c in 0..w {
                let mut col: Vec<f64> = (0..n).map(|i| rhs[i * w + c]).collect();
                a.solve(&mut col);
                for i in 0..n {
                    let (x, y) = (plain[i * w + c], col[i]);
                    assert!(
                        (x - y).abs() <= 1e-12 * (1.0 + y.abs()),
                        "column {c} row {i}: {x} vs {y}"
                    );
                }
            }
        }
    }
}
