//! Folds continued in two parameters: the curve where a saddle-node lives
//! in the (across, vary) plane, traced with the second parameter free.
//!
//! Minimally extended system (Govaerts 2000, Numerical Methods for
//! Bifurcations of Dynamical Equilibria, SIAM): with bordering vectors b, c
//! (approximate left and right null vectors of J), solve
//!
//! ```text
//! [ J   b ] [v]   [0]
//! [ cᵀ  0 ] [g] = [1]
//! ```
//!
//! so that g(u, p, a) = 0 exactly where J is singular. The curve
//! H(u, p; a) = [F(u, p, a); g(u, p, a)] = 0 is traced by the same
//! pseudo-arclength [`crate::numerics::continuation::Tracer`] with the across
//! parameter a free. ∂g/∂z = -wᵀ (∂J/∂z) v with w from the transposed
//! system; ∂J/∂z by central differences. The bordered and extended systems
//! are solved densely (faer LU): O(n³) per Newton step, fine for the tens to
//! hundreds of bands a map uses. After every accepted point the bordering
//! vectors are reset to the current null vectors (b = w, c = v).

use crate::model::{Model, Param};
use crate::numerics::continuation::{Problem, Settings, Tracer};
use crate::numerics::linalg::{Singular, Tridiagonal};
use faer::prelude::Solve;

/// The extended fold system as a continuation problem in the across
/// parameter. State X = (u, s) with p = p0 + σ s.
pub struct FoldCurveProblem {
    model: Model,
    vary: Param,
    across: Param,
    p0: f64,
    sigma: f64,
    b: Vec<f64>,
    c: Vec<f64>,
    jac: Tridiagonal,
    f: Vec<f64>,
    lu: Option<faer::linalg::solvers::PartialPivLu<f64>>,
    a: faer::Mat<f64>,
}

fn unit(mut v: Vec<f64>) -> Vec<f64> {
    let n = v.iter().map(|x| x * x).sum::<f64>().sqrt();
    if n > 0.0 && n.is_finite() {
        v.iter_mut().for_each(|x| *x /= n);
    }
    v
}

impl FoldCurveProblem {
    /// Builds the problem at a fold (u, p) of `model` (with the across
    /// parameter already set). `sigma` scales p in the state.
    pub fn new(
        model: Model,
        vary: Param,
        across: Param,
        u: &[f64],
        p: f64,
        sigma: f64,
    ) -> FoldCurveProblem {
        let n = model.len();
        let jac = model.new_jacobian();
        let mut fc = FoldCurveProblem {
            model,
            vary,
            across,
            p0: p,
            sigma,
            b: vec![1.0 / (n as f64).sqrt(); n],
            c: vec![1.0 / (n as f64).sqrt(); n],
            jac,
            f: vec![0.0; n],
            lu: None,
            a: faer::Mat::zeros(n + 1, n + 1),
        };
        // null vectors by one step of inverse iteration from the fold
        fc.model.set_param(vary, p);
        fc.model.evaluate(u, &mut fc.f, Some(&mut fc.jac));
        if let Some((v, w, _)) = fc.null_vectors() {
            fc.c = unit(v);
            fc.b = unit(w);
        }
        fc
    }

    /// The starting state X = (u, 0).
    pub fn state(&self, u: &[f64]) -> Vec<f64> {
        let mut x = u.to_vec();
        x.push(0.0);
        x
    }

    /// The vary value of state X.
    pub fn vary_value(&self, x: &[f64]) -> f64 {
        self.p0 + self.sigma * x[x.len() - 1]
    }

    /// (v, w, g) of the bordered systems at the current Jacobian.
    fn null_vectors(&self) -> Option<(Vec<f64>, Vec<f64>, f64)> {
        let n = self.model.len();
        let m = faer::Mat::<f64>::from_fn(n + 1, n + 1, |r, c| match (r < n, c < n) {
            (true, true) => self.jac.entry(r, c),
            (true, false) => self.b[r],
            (false, true) => self.c[c],
            (false, false) => 0.0,
        });
        let lu = m.partial_piv_lu();
        let mut rhs = faer::Mat::<f64>::zeros(n + 1, 1);
        rhs[(n, 0)] = 1.0;
        lu.solve_in_place(rhs.as_mut());
        let v: Vec<f64> = (0..n).map(|i| rhs[(i, 0)]).collect();
        let g = rhs[(n, 0)];
        let mt = m.transpose().to_owned();
        let lut = mt.partial_piv_lu();
        let mut rhs = faer::Mat::<f64>::zeros(n + 1, 1);
        rhs[(n, 0)] = 1.0;
        lut.solve_in_place(rhs.as_mut());
        let w: Vec<f64> = (0..n).map(|i| rhs[(i, 0)]).collect();
        if v.iter().chain(&w).all(|x| x.is_finite()) && g.is_finite() {
            Some((v, w, g))
        } else {
            None
        }
    }

    /// F and g at (u, p) for the current across value; J left in self.jac.
    fn eval(&mut self, u: &[f64], p: f64, f: &mut [f64]) -> Option<(Vec<f64>, Vec<f64>, f64)> {
        self.model.set_param(self.vary, p);
        self.model.evaluate(u, f, Some(&mut self.jac));
        self.null_vectors()
    }

    /// wᵀ J(u, p) v for the current across value.
    fn wjv(&mut self, u: &[f64], p: f64, v: &[f64], w: &[f64]) -> f64 {
        self.model.set_param(self.vary, p);
        let n = u.len();
        let mut f = vec![0.0; n];
        self.model.evaluate(u, &mut f, Some(&mut self.jac));
        let mut jv = vec![0.0; n];
        self.jac.mul(v, &mut jv);
        w.iter().zip(&jv).map(|(a, b)| a * b).sum()
    }
}

impl Problem for FoldCurveProblem {
    fn dim(&self) -> usize {
        self.model.len() + 1
    }
    fn set_param(&mut self, a: f64) {
        if self.model.param(self.across) != a {
            self.model.set_param(self.across, a);
        }
    }
    fn residual(&mut self, x: &[f64], out: &mut [f64]) {
        let n = x.len() - 1;
        let p = self.vary_value(x);
        let mut f = vec![0.0; n];
        let g = self.eval(&x[..n], p, &mut f).map_or(f64::NAN, |r| r.2);
        out[..n].copy_from_slice(&f);
        out[n] = g;
    }
    fn factor(&mut self, x: &[f64], out: &mut [f64]) -> Result<(), Singular> {
        let n = x.len() - 1;
        let u = &x[..n];
        let p = self.vary_value(x);
        let mut f = vec![0.0; n];
        let (v, w, g) = self.eval(u, p, &mut f).ok_or(Singular { row: n })?;
        out[..n].copy_from_slice(&f);
        out[n] = g;
        let jac = self.jac.clone();
        let mut fp = vec![0.0; n];
        let mut scratch = vec![0.0; n];
        self.model
            .d_residual_d_param(self.vary, u, &mut fp, &mut scratch);
        // ∂g/∂u_k = -wᵀ (∂J/∂u_k) v, ∂g/∂s = -σ wᵀ (∂J/∂p) v
        let mut gu = vec![0.0; n];
        let mut up = u.to_vec();
        for k in 0..n {
            let h = 1e-6 * u[k].abs().max(1.0);
            up[k] = u[k] + h;
            let plus = self.wjv(&up, p, &v, &w);
            up[k] = u[k] - h;
            let minus = self.wjv(&up, p, &v, &w);
            up[k] = u[k];
            gu[k] = -(plus - minus) / (2.0 * h);
        }
        let hp = 1e-6 * p.abs().max(1.0);
        let gp =
            -(self.wjv(u, p + hp, &v, &w) - self.wjv(u, p - hp, &v, &w)) / (2.0 * hp) * self.sigma;
        self.model.set_param(self.vary, p);
        let sigma = self.sigma;
        self.a = faer::Mat::from_fn(n + 1, n + 1, |r, c| match (r < n, c < n) {
            (true, true) => jac.entry(r, c),
            (true, false) => fp[r] * sigma,
            (false, true) => gu[c],
            (false, false) => gp,
        });
        self.jac = jac;
        if !gp.is_finite() || gu.iter().any(|x| !x.is_finite()) {
            return Err(Singular { row: n });
        }
        self.lu = Some(self.a.partial_piv_lu());
        Ok(())
    }
    fn solve(&self, b: &mut [f64]) {
        let Some(lu) = &self.lu else {
            b.fill(f64::NAN);
            return;
        };
        let mut rhs = faer::Mat::<f64>::from_fn(b.len(), 1, |i, _| b[i]);
        lu.solve_in_place(rhs.as_mut());
        for (i, x) in b.iter_mut().enumerate() {
            *x = rhs[(i, 0)];
        }
    }
    fn jac_mul(&self, v: &[f64], y: &mut [f64]) {
        for (r, y) in y.iter_mut().enumerate() {
            *y = (0..v.len()).map(|c| self.a[(r, c)] * v[c]).sum();
        }
    }
    fn d_param(&mut self, x: &[f64], out: &mut [f64]) {
        let n = x.len() - 1;
        let a0 = self.model.param(self.across);
        let h = 1e-6 * a0.abs().max(1.0);
        let (mut fp, mut fm) = (vec![0.0; n + 1], vec![0.0; n + 1]);
        self.model.set_param(self.across, a0 + h);
        self.residual(x, &mut fp);
        self.model.set_param(self.across, a0 - h);
        self.residual(x, &mut fm);
        self.model.set_param(self.across, a0);
        for i in 0..=n {
            out[i] = (fp[i] - fm[i]) / (2.0 * h);
        }
    }
    fn unstable_modes(&mut self, x: &[f64]) -> usize {
        // called once per accepted point: refresh the bordering vectors
        let n = x.len() - 1;
        let p = self.vary_value(x);
        let mut f = vec![0.0; n];
        if let Some((v, w, _)) = self.eval(&x[..n], p, &mut f) {
            self.c = unit(v);
            self.b = unit(w);
        }
        0
    }
    fn label(&mut self, x: &[f64]) -> u64 {
        self.model.ice_topology(&x[..x.len() - 1])
    }
}

/// Traces the fold at (u, p) of `model` (across parameter at `a0`) over
/// across values [a_lo, a_hi]; returns the curve as (across, vary) points in
/// order, kept where the vary value stays within [p_lo, p_hi].
#[allow(clippy::too_many_arguments)]
pub fn trace_fold_curve(
    model: &Model,
    vary: Param,
    across: Param,
    u: &[f64],
    p: f64,
    (a_lo, a_hi): (f64, f64),
    (p_lo, p_hi): (f64, f64),
    tolerance: f64,
) -> Vec<(f64, f64)> {
    let a0 = model.param(across);
    let sigma = (p_hi - p_lo).abs() / 50.0;
    let mut prob = FoldCurveProblem::new(model.clone(), vary, across, u, p, sigma);
    let x0 = prob.state(u);
    let settings = Settings {
        tolerance,
        max_points: 2000,
        ..Settings::for_range(a_lo, a_hi)
    };
    let pts = {
        let mut tracer = Tracer::new(&mut prob, settings);
        match tracer.trace_curve(&x0, a0) {
            Ok(b) => b,
            Err(_) => return Vec::new(),
        }
    };
    pts.into_iter()
        .map(|(x, a)| (a, prob.vary_value(&x)))
        .filter(|(_, v)| *v >= p_lo && *v <= p_hi)
        .collect()
}
