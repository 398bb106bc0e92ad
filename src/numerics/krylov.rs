//! Krylov methods for linear maps known only through their products A v:
//! the Arnoldi process and GMRES (Saad & Schultz 1986, SIAM J. Sci. Stat.
//! Comput. 7, 856), as Newton-Krylov shooting needs them.
//!
//! **Arnoldi.** From v₁ = b/‖b‖, A V_k = V_{k+1} H̄_k with V orthonormal and
//! H̄_k the (k+1) x k upper Hessenberg matrix of the Gram-Schmidt
//! coefficients (classical Gram-Schmidt applied twice per vector, which
//! keeps V orthogonal to rounding; Giraud, Langou & Rozložník 2005,
//! Comput. Math. Appl. 50, 1069). The eigenvalues of the square H_k are
//! the Ritz values of A: for a map whose spectrum decays quickly (the
//! monodromy matrix of a damped periodic climate) its dominant
//! eigenvalues after a few steps.
//!
//! **GMRES.** x_k = V_k y minimises ‖b - A x‖₂ over the Krylov space:
//! y minimises ‖β e₁ - H̄_k y‖₂, solved by Givens rotations as H̄ grows, so
//! the residual norm |g_{k+1}| is known at every step without forming x.
//!
//! The workspace is allocated once ([`Krylov::new`]); the sums run in a
//! fixed order, so results do not depend on threads.

/// Arnoldi / GMRES workspace for dimension n and at most m basis vectors.
#[derive(Clone, Debug)]
pub struct Krylov {
    n: usize,
    m: usize,
    /// Basis, (m + 1) x n row-major: v[j n .. (j + 1) n] is v_{j+1}.
    v: Vec<f64>,
    /// H̄, (m + 1) x m row-major.
    h: Vec<f64>,
    cs: Vec<f64>,
    sn: Vec<f64>,
    g: Vec<f64>,
    y: Vec<f64>,
    w: Vec<f64>,
    /// Columns of H̄ built by the last process.
    built: usize,
}

/// What a GMRES solve reached.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct GmresReport {
    /// Products with A.
    pub iterations: usize,
    /// ‖b - A x‖₂ / ‖b‖₂ at the returned x (0 for b = 0).
    pub relative_residual: f64,
}

impl Krylov {
    /// A workspace for n-vectors and Krylov spaces of dimension up to m
    /// (m is clamped to 1..=n).
    pub fn new(n: usize, m: usize) -> Krylov {
        let m = m.clamp(1, n.max(1));
        Krylov {
            n,
            m,
            v: vec![0.0; (m + 1) * n],
            h: vec![0.0; (m + 1) * m],
            cs: vec![0.0; m],
            sn: vec![0.0; m],
            g: vec![0.0; m + 1],
            y: vec![0.0; m],
            w: vec![0.0; n],
            built: 0,
        }
    }

    /// Largest Krylov dimension.
    pub fn max_dimension(&self) -> usize {
        self.m
    }

    /// Starts the basis at b/‖b‖₂; returns ‖b‖₂ (0: nothing started).
    fn start(&mut self, b: &[f64]) -> f64 {
        let n = self.n;
        self.built = 0;
        self.h.fill(0.0);
        let beta = norm(&b[..n]);
        if beta > 0.0 && beta.is_finite() {
            for (v, x) in self.v[..n].iter_mut().zip(b) {
                *v = x / beta;
            }
        }
        beta
    }

    /// Arnoldi step j (0-based): w = A v_{j+1}, orthogonalised against
    /// v_1..v_{j+1} (two passes), stored as v_{j+2}; column j of H̄.
    /// Returns h_{j+2,j+1} = ‖w‖ (0 or not finite: breakdown; 0 also when
    /// ‖w‖ is below 1e-12 ‖A v_{j+1}‖, a remainder of rounding).
    fn extend(&mut self, j: usize, apply: &mut dyn FnMut(&[f64], &mut [f64])) -> f64 {
        let (n, m) = (self.n, self.m);
        apply(&self.v[j * n..(j + 1) * n], &mut self.w);
        let before = norm(&self.w);
        for _pass in 0..2 {
            for i in 0..=j {
                let vi = &self.v[i * n..(i + 1) * n];
                let c: f64 = vi.iter().zip(&self.w).map(|(a, b)| a * b).sum();
                self.h[i * m + j] += c;
                for (w, a) in self.w.iter_mut().zip(vi) {
                    *w -= c * a;
                }
            }
        }
        // what is left at rounding level of A v is no new direction
        let mut hn = norm(&self.w);
        if hn <= 1e-12 * before {
            hn = 0.0;
        }
        self.h[(j + 1) * m + j] = hn;
        if hn > 0.0 && hn.is_finite() {
            let next = &mut self.v[(j + 1) * n..(j + 2) * n];
            for (v, w) in next.iter_mut().zip(&self.w) {
                *v = w / hn;
            }
        }
        self.built = j + 1;
        hn
    }

    /// GMRES from x = 0: x ≈ A⁻¹ b, stopping when ‖b - A x‖₂ <= `rtol` ‖b‖₂,
    /// at breakdown (x exact) or after m products (the best x of the
    /// space, with its residual reported). `apply(v, out)` writes A v.
    pub fn gmres(
        &mut self,
        apply: &mut dyn FnMut(&[f64], &mut [f64]),
        b: &[f64],
        x: &mut [f64],
        rtol: f64,
    ) -> GmresReport {
        let (n, m) = (self.n, self.m);
        x[..n].fill(0.0);
        let beta = self.start(b);
        if beta == 0.0 || !beta.is_finite() {
            return GmresReport {
                iterations: 0,
                relative_residual: if beta == 0.0 { 0.0 } else { f64::NAN },
            };
        }
        self.g.fill(0.0);
        self.g[0] = beta;
        let mut k = 0;
        let mut res = beta;
        while k < m {
            let hn = self.extend(k, apply);
            // earlier rotations on the new column, then its own
            for i in 0..k {
                let (a, b) = (self.h[i * m + k], self.h[(i + 1) * m + k]);
                self.h[i * m + k] = self.cs[i] * a + self.sn[i] * b;
                self.h[(i + 1) * m + k] = -self.sn[i] * a + self.cs[i] * b;
            }
            let (a, b) = (self.h[k * m + k], self.h[(k + 1) * m + k]);
            let r = a.hypot(b);
            let (c, s) = if r == 0.0 { (1.0, 0.0) } else { (a / r, b / r) };
            self.cs[k] = c;
            self.sn[k] = s;
            self.h[k * m + k] = r;
            self.h[(k + 1) * m + k] = 0.0;
            self.g[k + 1] = -s * self.g[k];
            self.g[k] *= c;
            res = self.g[k + 1].abs();
            k += 1;
            if res <= rtol * beta || !(hn > 0.0 && hn.is_finite()) {
                break;
            }
        }
        // back substitution R y = g, then x = V y
        for i in (0..k).rev() {
            let mut s = self.g[i];
            for j in i + 1..k {
                s -= self.h[i * m + j] * self.y[j];
            }
            let d = self.h[i * m + i];
            self.y[i] = if d != 0.0 { s / d } else { 0.0 };
        }
        for j in 0..k {
            let vj = &self.v[j * n..(j + 1) * n];
            let yj = self.y[j];
            for (x, v) in x.iter_mut().zip(vj) {
                *x += yj * v;
            }
        }
        // GMRES has rotated H̄ in place: it no longer holds the Arnoldi
        // coefficients
        self.built = 0;
        GmresReport {
            iterations: k,
            relative_residual: res / beta,
        }
    }

    /// The Arnoldi process from `start` for up to `k` steps (at most m);
    /// returns the square Hessenberg H_j (j x j row-major, j the steps
    /// made: fewer at breakdown, where the space is invariant and the Ritz
    /// values exact) and ‖h_{j+1,j}‖, the coupling to the rest of the
    /// space. Allocates the returned matrix.
    pub fn arnoldi(
        &mut self,
        apply: &mut dyn FnMut(&[f64], &mut [f64]),
        start: &[f64],
        k: usize,
    ) -> (Vec<f64>, usize, f64) {
        let m = self.m;
        let k = k.min(m);
        if self.start(start) == 0.0 {
            return (Vec::new(), 0, 0.0);
        }
        let mut last = 0.0;
        for j in 0..k {
            last = self.extend(j, apply);
            if !(last > 0.0 && last.is_finite()) {
                break;
            }
        }
        let j = self.built;
        let mut hj = vec![0.0; j * j];
        for r in 0..j {
            for c in 0..j {
                hj[r * j + c] = self.h[r * m + c];
            }
        }
        (hj, j, last)
    }
}

/// ‖v‖₂ (in index order).
fn norm(v: &[f64]) -> f64 {
    v.iter().map(|x| x * x).sum::<f64>().sqrt()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A nonsymmetric tridiagonal test matrix with a known solution:
    /// GMRES must reproduce x to rounding once m = n (common practice, no
    /// source: GMRES is exact in at most n steps in exact arithmetic).
    #[test]
    fn gmres_solves_a_nonsymmetric_system_exactly_in_n_steps() {
        let n = 12;
        let a = |v: &[f64], out: &mut [f64]| {
            for i in 0..n {
                let mut s = 4.0 * v[i];
                if i > 0 {
                    s -= 1.3 * v[i - 1];
                }
                if i + 1 < n {
                    s += 0.7 * v[i + 1];
                }
                out[i] = s;
            }
        };
        let truth: Vec<f64> = (0..n).map(|i| (i as f64 * 0.37).sin() + 0.1).collect();
        let mut b = vec![0.0; n];
        a(&truth, &mut b);
        let mut kr = Krylov::new(n, n);
        let mut x = vec![0.0; n];
        let mut op = a;
        let rep = kr.gmres(&mut op, &b, &mut x, 1e-14);
        assert!(rep.relative_residual <= 1e-13, "{rep:?}");
        for (u, t) in x.iter().zip(&truth) {
            assert!((u - t).abs() < 1e-12, "{u} vs {t}");
        }
    }

    /// Arnoldi's Hessenberg matrix of a diagonal map has the map's
    /// eigenvalues once the space is invariant (common practice, no
    /// source): a start with components on 4 eigenvectors breaks down
    /// after 4 steps with H's eigenvalues exactly those 4 (checked through
    /// the trace and determinant of H, which equal the eigenvalues' sum
    /// and product).
    #[test]
    fn arnoldi_breaks_down_on_an_invariant_space_with_its_eigenvalues() {
        let n = 10;
        let lam = [0.9, 0.5, 0.25, 0.125];
        let op = |v: &[f64], out: &mut [f64]| {
            for i in 0..n {
                out[i] = if i < 4 { lam[i] * v[i] } else { 0.01 * v[i] };
            }
        };
        let start: Vec<f64> = (0..n)
            .map(|i| if i < 4 { 1.0 + i as f64 } else { 0.0 })
            .collect();
        let mut kr = Krylov::new(n, 8);
        let mut op = op;
        let (h, j, last) = kr.arnoldi(&mut op, &start, 8);
        assert_eq!(j, 4);
        assert!(last.abs() < 1e-12);
        let trace: f64 = (0..j).map(|i| h[i * j + i]).sum();
        assert!((trace - lam.iter().sum::<f64>()).abs() < 1e-13);
        // characteristic polynomial at 0: det H by Gaussian elimination
        let mut a = h.clone();
        let mut det = 1.0;
        for c in 0..j {
            det *= a[c * j + c];
            for r in c + 1..j {
                let f = a[r * j + c] / a[c * j + c];
                for q in c..j {
                    a[r * j + q] -= f * a[c * j + q];
                }
            }
        }
        assert!((det - lam.iter().product::<f64>()).abs() < 1e-14);
    }
}
