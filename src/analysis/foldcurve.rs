//! Folds continued in two parameters: the curve where a saddle-node lives
//! in the (across, vary) plane, traced with the second parameter free.
//!
//! Minimally extended system (Govaerts 2000, Numerical Methods for
//! Bifurcations of Dynamical Equilibria, SIAM): with bordering vectors b, c
//! (approximate left and right null vectors of J), solve
//!
//! ```text
//! [ J   b ] [v]   [0]          [ Jᵀ  c ] [w]   [0]
//! [ cᵀ  0 ] [g] = [1],         [ bᵀ  0 ] [h] = [1],
//! ```
//!
//! so that g(u, p, a) = 0 exactly where J is singular. The curve
//! H(u, p; a) = [F(u, p, a); g(u, p, a)] = 0 is traced by the same
//! pseudo-arclength [`crate::numerics::continuation::Tracer`] with the across
//! parameter a free. ∂g/∂z = -wᵀ (∂J/∂z) v with w from the transposed
//! system (Govaerts 2000). After every accepted point the bordering vectors
//! are reset to the current null vectors (b = w, c = v).
//!
//! Two solvers ([`FoldSolver`]):
//!
//! - [`FoldSolver::Banded`] (the default), O(n) per Newton step: both
//!   bordered systems and the Newton matrix [J σF_p; g_uᵀ g_p] are bordered
//!   tridiagonal systems, factored by Gaussian elimination on the bordered
//!   matrix with the tridiagonal pivoting and the last row of J pivoted
//!   against the border rows
//!   ([`crate::numerics::linalg::bordered::BorderedTridiagonal`]), which
//!   stays stable where J is singular, as it is on the curve; the transposed
//!   system reuses the same factors. The gradient g_u is that of
//!   -φ(u) = -wᵀ J(u) v (v, w held), and by the symmetry of second
//!   derivatives ∂φ/∂u = (∂/∂ε) J(u + εv)ᵀ w at ε = 0: one central
//!   difference in the direction v (two Jacobian evaluations and two
//!   transposed tridiagonal products) instead of n. g_p likewise, by a
//!   central difference of wᵀ J v in p.
//! - [`FoldSolver::Dense`], the reference: dense LU (faer) of the
//!   (n + 1)-square systems and g_u by n central differences, one per band:
//!   O(n³) per Newton step.

use crate::model::{Model, Param};
use crate::numerics::continuation::{Problem, Settings, Tracer};
use crate::numerics::linalg::bordered::BorderedTridiagonal;
use crate::numerics::linalg::{Singular, Tridiagonal};
use faer::prelude::Solve;
use std::cell::Cell;

/// How the fold system's linear algebra is done.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum FoldSolver {
    /// Bordered tridiagonal elimination, O(n) per Newton step.
    #[default]
    Banded,
    /// Dense LU and n differences for g_u, O(n³) per Newton step: the
    /// reference the banded solver is checked against.
    Dense,
}

/// Work counters of a [`FoldCurveProblem`]: how much each Newton step
/// costs, counted rather than timed.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct FoldWork {
    /// Factorisations of the Newton matrix (one per Newton step).
    pub factors: u64,
    /// Model Jacobian evaluations (each O(n)).
    pub jacobians: u64,
    /// Rows processed by the bordered tridiagonal factors and solves (n + k
    /// per call; zero for the dense solver).
    pub bordered_rows: u64,
}

/// The extended fold system as a continuation problem in the across
/// parameter. State X = (u, s) with p = p0 + σ s.
pub struct FoldCurveProblem {
    model: Model,
    vary: Param,
    across: Param,
    p0: f64,
    sigma: f64,
    solver: FoldSolver,
    b: Vec<f64>,
    c: Vec<f64>,
    jac: Tridiagonal,
    f: Vec<f64>,
    lu: Option<faer::linalg::solvers::PartialPivLu<f64>>,
    a: faer::Mat<f64>,
    // banded solver: J's bordered systems, the Newton matrix, scratch
    border: BorderedTridiagonal,
    newton: BorderedTridiagonal,
    newton_off: usize,
    jac_h: Tridiagonal,
    /// J of the last Newton factorisation, for `jac_mul` (self.jac is
    /// overwritten by the residuals of `d_param`).
    jac_n: Tridiagonal,
    v: Vec<f64>,
    w: Vec<f64>,
    fp: Vec<f64>,
    gu: Vec<f64>,
    gp: f64,
    up: Vec<f64>,
    s1: Vec<f64>,
    s2: Vec<f64>,
    plus: Vec<f64>,
    minus: Vec<f64>,
    dminus: Vec<f64>,
    jacobians: Cell<u64>,
    factors: u64,
    /// The model again, for the differences in the across parameter.
    model_h: Model,
    /// H, X and a of the last factorisation.
    last_h: Vec<f64>,
    last_x: Vec<f64>,
    last_a: f64,
    last_valid: bool,
}

fn unit(v: &mut [f64]) {
    let n = v.iter().map(|x| x * x).sum::<f64>().sqrt();
    if n > 0.0 && n.is_finite() {
        v.iter_mut().for_each(|x| *x /= n);
    }
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
        solver: FoldSolver,
    ) -> FoldCurveProblem {
        let n = model.len();
        let jac = model.new_jacobian();
        let jac_h = model.new_jacobian();
        let dense = solver == FoldSolver::Dense;
        let model_h = model.clone();
        let mut fc = FoldCurveProblem {
            model,
            vary,
            across,
            p0: p,
            sigma,
            solver,
            b: vec![1.0 / (n as f64).sqrt(); n],
            c: vec![1.0 / (n as f64).sqrt(); n],
            jac,
            f: vec![0.0; n],
            lu: None,
            a: faer::Mat::zeros(if dense { n + 1 } else { 0 }, if dense { n + 1 } else { 0 }),
            border: BorderedTridiagonal::new(n),
            newton: BorderedTridiagonal::new(n),
            newton_off: 0,
            jac_n: jac_h.clone(),
            jac_h,
            v: vec![0.0; n],
            w: vec![0.0; n],
            fp: vec![0.0; n],
            gu: vec![0.0; n],
            gp: 0.0,
            up: vec![0.0; n],
            s1: vec![0.0; n],
            s2: vec![0.0; n],
            plus: vec![0.0; n],
            minus: vec![0.0; n],
            dminus: vec![0.0; n + 1],
            jacobians: Cell::new(0),
            factors: 0,
            model_h,
            last_h: vec![0.0; n + 1],
            last_x: vec![0.0; n + 1],
            last_a: f64::NAN,
            last_valid: false,
        };
        // null vectors by one step of inverse iteration from the fold
        fc.model.set_param(vary, p);
        let mut f = std::mem::take(&mut fc.f);
        if fc.eval(u, p, &mut f).is_some() {
            fc.refresh_borders();
        }
        fc.f = f;
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

    /// The work done so far.
    pub fn work(&self) -> FoldWork {
        FoldWork {
            factors: self.factors,
            jacobians: self.jacobians.get(),
            bordered_rows: self.border.work() + self.newton.work(),
        }
    }

    /// b = w, c = v (normalised) from the last evaluation (g changes with
    /// them, so H of the last factorisation no longer serves `d_param`).
    fn refresh_borders(&mut self) {
        self.last_valid = false;
        self.c.copy_from_slice(&self.v);
        self.b.copy_from_slice(&self.w);
        unit(&mut self.c);
        unit(&mut self.b);
    }

    /// F(u) and J(u) (into `jac`) at vary value p, counted.
    fn evaluate(&mut self, u: &[f64], p: f64, f: &mut [f64], scratch_jac: bool) {
        self.model.set_param(self.vary, p);
        let jac = if scratch_jac {
            &mut self.jac_h
        } else {
            &mut self.jac
        };
        self.model.evaluate(u, f, Some(jac));
        self.jacobians.set(self.jacobians.get() + 1);
    }

    /// (v, w, g) of the bordered systems at the current Jacobian, dense.
    fn null_vectors_dense(&self) -> Option<(Vec<f64>, Vec<f64>, f64)> {
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

    /// v, w (into self.v, self.w) and g of the bordered systems at the
    /// current Jacobian, by one bordered tridiagonal factorisation.
    fn null_vectors_banded(&mut self) -> Option<f64> {
        let off = self.border.load(&self.jac, 1);
        self.border.col_mut(off).copy_from_slice(&self.b);
        self.border.row_mut(off).copy_from_slice(&self.c);
        self.border.factor().ok()?;
        let mut y = [0.0; 3];
        y[off] = 1.0;
        self.v.fill(0.0);
        self.border.solve(&mut self.v, &mut y);
        let g = y[off];
        let mut y = [0.0; 3];
        y[off] = 1.0;
        self.w.fill(0.0);
        self.border.solve_transpose(&mut self.w, &mut y);
        (self.v.iter().chain(&self.w).all(|x| x.is_finite()) && g.is_finite()).then_some(g)
    }

    /// F and g at (u, p) for the current across value; J left in self.jac,
    /// v and w in self.v and self.w.
    fn eval(&mut self, u: &[f64], p: f64, f: &mut [f64]) -> Option<f64> {
        self.evaluate(u, p, f, false);
        match self.solver {
            FoldSolver::Banded => self.null_vectors_banded(),
            FoldSolver::Dense => {
                let (v, w, g) = self.null_vectors_dense()?;
                self.v.copy_from_slice(&v);
                self.w.copy_from_slice(&w);
                Some(g)
            }
        }
    }

    /// wᵀ J(u, p) v for the current across value (scratch Jacobian).
    fn wjv(&mut self, u: &[f64], p: f64) -> f64 {
        let mut f = std::mem::take(&mut self.s1);
        self.evaluate(u, p, &mut f, true);
        self.s1 = f;
        self.jac_h.mul(&self.v, &mut self.s2);
        self.w.iter().zip(&self.s2).map(|(a, b)| a * b).sum()
    }

    /// g_u by n central differences of wᵀ J v, one per band (dense path).
    fn gradient_by_bands(&mut self, u: &[f64], p: f64) {
        let n = u.len();
        self.up.copy_from_slice(u);
        for k in 0..n {
            let h = 1e-6 * u[k].abs().max(1.0);
            self.up[k] = u[k] + h;
            let up = std::mem::take(&mut self.up);
            let plus = self.wjv(&up, p);
            let mut up = up;
            up[k] = u[k] - h;
            let minus = self.wjv(&up, p);
            up[k] = u[k];
            self.up = up;
            self.gu[k] = -(plus - minus) / (2.0 * h);
        }
    }

    /// g_u = -(∂/∂ε) J(u + εv)ᵀ w at ε = 0 by one central difference
    /// (banded path; see the module doc).
    fn gradient_along_v(&mut self, u: &[f64], p: f64) {
        let vmax = self.v.iter().fold(0.0f64, |m, x| m.max(x.abs()));
        let umax = u.iter().fold(1.0f64, |m, x| m.max(x.abs()));
        let h = 1e-6 * umax / vmax.max(1e-300);
        let mut up = std::mem::take(&mut self.up);
        let mut f = std::mem::take(&mut self.s1);
        for (sign, out) in [(1.0, 0), (-1.0, 1)] {
            for i in 0..u.len() {
                up[i] = u[i] + sign * h * self.v[i];
            }
            self.evaluate(&up, p, &mut f, true);
            let y = if out == 0 {
                &mut self.plus
            } else {
                &mut self.minus
            };
            self.jac_h.mul_transpose(&self.w, y);
        }
        self.up = up;
        self.s1 = f;
        for ((g, a), b) in self.gu.iter_mut().zip(&self.plus).zip(&self.minus) {
            *g = -(a - b) / (2.0 * h);
        }
    }

    fn factor_dense(&mut self, n: usize) -> Result<(), Singular> {
        let sigma = self.sigma;
        let jac = &self.jac;
        let (fp, gu, gp) = (&self.fp, &self.gu, self.gp);
        self.a = faer::Mat::from_fn(n + 1, n + 1, |r, c| match (r < n, c < n) {
            (true, true) => jac.entry(r, c),
            (true, false) => fp[r] * sigma,
            (false, true) => gu[c],
            (false, false) => gp,
        });
        self.lu = Some(self.a.partial_piv_lu());
        Ok(())
    }

    fn factor_banded(&mut self) -> Result<(), Singular> {
        self.jac_n.clone_from(&self.jac);
        let off = self.newton.load(&self.jac, 1);
        self.newton_off = off;
        let sigma = self.sigma;
        for (b, fp) in self.newton.col_mut(off).iter_mut().zip(&self.fp) {
            *b = fp * sigma;
        }
        self.newton.row_mut(off).copy_from_slice(&self.gu);
        self.newton.set_corner(off, off, self.gp);
        self.newton.factor()
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
        let g = self.eval(&x[..n], p, &mut out[..n]).unwrap_or(f64::NAN);
        out[n] = g;
    }
    fn factor(&mut self, x: &[f64], out: &mut [f64]) -> Result<(), Singular> {
        let n = x.len() - 1;
        let u = &x[..n];
        let p = self.vary_value(x);
        self.factors += 1;
        self.lu = None;
        self.last_valid = false;
        let g = self.eval(u, p, &mut out[..n]).ok_or(Singular { row: n })?;
        out[n] = g;
        self.last_h.copy_from_slice(out);
        self.last_x.copy_from_slice(x);
        self.last_a = self.model.param(self.across);
        self.last_valid = true;
        self.model
            .d_residual_d_param(self.vary, u, &mut self.fp, &mut self.s1);
        // ∂g/∂u = -wᵀ (∂J/∂u) v, ∂g/∂s = -σ wᵀ (∂J/∂p) v
        match self.solver {
            FoldSolver::Banded => self.gradient_along_v(u, p),
            FoldSolver::Dense => self.gradient_by_bands(u, p),
        }
        let hp = 1e-6 * p.abs().max(1.0);
        self.gp = -(self.wjv(u, p + hp) - self.wjv(u, p - hp)) / (2.0 * hp) * self.sigma;
        self.model.set_param(self.vary, p);
        if !self.gp.is_finite() || self.gu.iter().any(|x| !x.is_finite()) {
            return Err(Singular { row: n });
        }
        match self.solver {
            FoldSolver::Banded => self.factor_banded(),
            FoldSolver::Dense => self.factor_dense(n),
        }
    }
    fn solve(&self, b: &mut [f64]) {
        let n = b.len() - 1;
        match self.solver {
            FoldSolver::Banded => {
                let mut y = [0.0; 3];
                y[self.newton_off] = b[n];
                let (x, last) = b.split_at_mut(n);
                self.newton.solve(x, &mut y);
                last[0] = y[self.newton_off];
            }
            FoldSolver::Dense => {
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
        }
    }
    fn jac_mul(&self, v: &[f64], y: &mut [f64]) {
        let n = v.len() - 1;
        if self.solver == FoldSolver::Dense {
            for (r, y) in y.iter_mut().enumerate() {
                *y = (0..v.len()).map(|c| self.a[(r, c)] * v[c]).sum();
            }
            return;
        }
        self.jac_n.mul(&v[..n], &mut y[..n]);
        let s = self.sigma * v[n];
        for (y, fp) in y[..n].iter_mut().zip(&self.fp) {
            *y += fp * s;
        }
        y[n] = self.gu.iter().zip(&v[..n]).map(|(a, b)| a * b).sum::<f64>() + self.gp * v[n];
    }
    fn d_param(&mut self, x: &[f64], out: &mut [f64]) {
        // ∂H/∂a by differences in a on a second copy of the model, so that
        // the model at a is not rebuilt (a change of an insolation
        // parameter rebuilds the insolation table): one-sided from H of the
        // last factorisation where that was at (x, a), as the tracer asks
        // right after factoring; central otherwise
        let n = x.len() - 1;
        let a0 = self.model.param(self.across);
        let h = 1e-6 * a0.abs().max(1.0);
        let cached = self.last_valid && self.last_a == a0 && self.last_x[..] == x[..];
        std::mem::swap(&mut self.model, &mut self.model_h);
        self.model.set_param(self.across, a0 + h);
        self.residual(x, out);
        if cached {
            for i in 0..=n {
                out[i] = (out[i] - self.last_h[i]) / h;
            }
        } else {
            let mut minus = std::mem::take(&mut self.dminus);
            self.model.set_param(self.across, a0 - h);
            self.residual(x, &mut minus);
            for i in 0..=n {
                out[i] = (out[i] - minus[i]) / (2.0 * h);
            }
            self.dminus = minus;
        }
        std::mem::swap(&mut self.model, &mut self.model_h);
    }
    fn unstable_modes(&mut self, x: &[f64]) -> usize {
        // called once per accepted point: refresh the bordering vectors
        let n = x.len() - 1;
        let p = self.vary_value(x);
        let mut f = std::mem::take(&mut self.f);
        if self.eval(&x[..n], p, &mut f).is_some() {
            self.refresh_borders();
        }
        self.f = f;
        0
    }
    fn label(&mut self, x: &[f64]) -> u64 {
        self.model.ice_topology(&x[..x.len() - 1])
    }
}

/// One point of a fold curve.
#[derive(Clone, Debug)]
pub struct FoldCurvePoint {
    /// Across value a.
    pub across: f64,
    /// Vary value p.
    pub vary: f64,
    /// The state X = (u, s) of the extended system (p = p0 + σ s).
    pub state: Vec<f64>,
}

/// Traces the fold at (u, p) of `model` (across parameter at `a0`) over
/// across values [a_lo, a_hi]; returns the curve as (across, vary) points in
/// order, kept where the vary value stays within [p_lo, p_hi]. The banded
/// O(n) solver; [`trace_fold_curve_with`] chooses.
#[allow(clippy::too_many_arguments)]
pub fn trace_fold_curve(
    model: &Model,
    vary: Param,
    across: Param,
    u: &[f64],
    p: f64,
    across_range: (f64, f64),
    vary_range: (f64, f64),
    tolerance: f64,
) -> Vec<(f64, f64)> {
    trace_fold_curve_with(
        model,
        vary,
        across,
        u,
        p,
        across_range,
        vary_range,
        tolerance,
        FoldSolver::Banded,
    )
    .0
    .into_iter()
    .map(|q| (q.across, q.vary))
    .collect()
}

/// [`trace_fold_curve`] with the solver chosen; also returns each point's
/// extended state and the work done.
#[allow(clippy::too_many_arguments)]
pub fn trace_fold_curve_with(
    model: &Model,
    vary: Param,
    across: Param,
    u: &[f64],
    p: f64,
    (a_lo, a_hi): (f64, f64),
    (p_lo, p_hi): (f64, f64),
    tolerance: f64,
    solver: FoldSolver,
) -> (Vec<FoldCurvePoint>, FoldWork) {
    let a0 = model.param(across);
    let sigma = fold_sigma(p_lo, p_hi);
    let mut prob = FoldCurveProblem::new(model.clone(), vary, across, u, p, sigma, solver);
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
            Err(_) => return (Vec::new(), prob.work()),
        }
    };
    let curve = pts
        .into_iter()
        .map(|(x, a)| FoldCurvePoint {
            across: a,
            vary: prob.vary_value(&x),
            state: x,
        })
        .filter(|q| q.vary >= p_lo && q.vary <= p_hi)
        .collect();
    (curve, prob.work())
}

/// The scale σ of the vary parameter in the extended state for a vary
/// range [p_lo, p_hi] (p = p0 + σ s).
pub fn fold_sigma(p_lo: f64, p_hi: f64) -> f64 {
    (p_hi - p_lo).abs() / 50.0
}
