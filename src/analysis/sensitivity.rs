//! How far each fold (tipping point) moves per unit change of every other
//! continuous scenario parameter, from one linear solve at the fold.
//!
//! A fold (u*, λ*) of F(u, λ; q) = 0 in the continued parameter λ is a
//! regular solution of the extended system
//!
//! ```text
//! G(u, v, λ; q) = ( F(u, λ; q),  J(u, λ; q) v,  ℓᵀv - 1 ) = 0,   J = ∂F/∂u,
//! ```
//!
//! whenever J has a one-dimensional kernel and w·F_λ ≠ 0, where w spans
//! the kernel of Jᵀ (the left null vector). So by the implicit-function
//! theorem the fold persists as (u*(q), λ*(q)) for q near its value, and
//! differentiating F(u*(q), λ*(q); q) = 0 in q, J u*' + F_λ λ*' + F_q = 0,
//! then multiplying on the left by w (wᵀJ = 0) gives
//!
//! ```text
//! dλ*/dq = -(w · F_q) / (w · F_λ)
//! ```
//!
//! (Keller 1977; standard fold-continuation theory, e.g. Govaerts 2000).
//! The units are those of λ per unit of q.
//!
//! Where w·F_λ ≈ 0 the point is not a fold but a branch point (two
//! branches cross): the extended system is singular there and the formula
//! has no meaning, so [`fold_sensitivities`] refuses with the numbers.
//! Where J is not singular at all (a corner fold, where the branch turns
//! at a kink of a piecewise smooth residual), it refuses too: the corner
//! moves with the kink, not by this formula.
//!
//! The step albedo's sub-grid ice edge makes the annual-mean residual only
//! piecewise smooth: at a fold between two kinks the formula holds exactly
//! for the smooth piece the fold lies on; how far that piece extends limits
//! how far the linear prediction holds.

use crate::analysis::branches::AnnualProblem;
use crate::model::{Model, Param};
use crate::numerics::continuation::Problem;

/// A continuation problem whose residual also depends on other continuous
/// parameters q, so that its folds have sensitivities dλ*/dq.
pub trait Sensitive: Problem {
    /// The continuous scenario parameters this problem has, other than the
    /// continued one, in a fixed order.
    fn params(&self) -> Vec<Param>;
    /// ∂F/∂q at u (the continued parameter as last set), into `out`. Must
    /// leave the problem's parameters exactly as they were.
    fn d_other(&mut self, q: Param, u: &[f64], out: &mut [f64]);
}

/// The parameters of [`Param::ALL`] that `model` has, without `continued`:
/// the parameters a fold of a trace in `continued` has a sensitivity to.
pub fn other_params(model: &Model, continued: Param) -> Vec<Param> {
    Param::ALL
        .iter()
        .copied()
        .filter(|&q| q != continued && model.has_param(q))
        .collect()
}

impl Sensitive for AnnualProblem {
    fn params(&self) -> Vec<Param> {
        other_params(&self.model, self.param)
    }
    /// ∂F/∂q by [`Model::d_residual_d_param`] on a clone of the model, so
    /// the problem's own model is untouched bit for bit (the clone costs
    /// O(bands); this runs once per parameter and fold, not per Newton step).
    fn d_other(&mut self, q: Param, u: &[f64], out: &mut [f64]) {
        let mut m = self.model.clone();
        let mut scratch = vec![0.0; m.len()];
        m.d_residual_d_param(q, u, out, &mut scratch);
    }
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

fn norm(a: &[f64]) -> f64 {
    dot(a, a).sqrt()
}

/// Relative size |w·F_λ| / (|w| |F_λ|) below which a point counts as a
/// branch point rather than a fold (at the folds of the step-albedo model
/// it is 0.89 to 0.98 on the folds of tests/fold_sensitivity.rs).
pub const BRANCH_POINT_COSINE: f64 = 1e-8;

/// Ratio σ_min / (|J 1|/|1|) above which J is taken as regular (a corner
/// fold, not a smooth one); σ_min is estimated by inverse iteration. At
/// the smooth folds of the step-albedo model this ratio is 1e-14 to 1e-13,
/// at its corner folds 5e-5 to 5e-2 (measured at 90 to 360 bands).
pub const REGULAR_RATIO: f64 = 1e-7;

/// dλ*/dq at the fold (u, p) of `problem` (continued parameter λ, value
/// p) for every q in [`Sensitive::params`]:
///
/// dλ*/dq = -(w · ∂F/∂q) / (w · ∂F/∂λ),  wᵀ J(u, p) = 0,
///
/// with the left null vector w from three steps of inverse iteration on Jᵀ
/// (w₀ = 1, w_{k+1} = J⁻ᵀ w_k / |J⁻ᵀ w_k|). The smallest singular value of
/// J is estimated by inverse iteration on J as well (σ ≈ |J v|/|v|), so a
/// point where J is clearly regular is refused.
///
/// Errors (with the numbers): J cannot be factored or the problem has no
/// transposed solve; J is not singular at (u, p) (σ_min / |J| above
/// [`REGULAR_RATIO`]: a corner fold); w·F_λ ≈ 0 relative to |w| |F_λ|
/// (below [`BRANCH_POINT_COSINE`]: a branch point, not a fold); a
/// non-finite result. Allocates O(n) once per call.
pub fn fold_sensitivities<P: Sensitive>(
    problem: &mut P,
    u: &[f64],
    p: f64,
) -> Result<Vec<(Param, f64)>, String> {
    let n = problem.dim();
    if u.len() != n || n == 0 {
        return Err(format!("state has {} entries, problem {n}", u.len()));
    }
    if !p.is_finite() || u.iter().any(|x| !x.is_finite()) {
        return Err("fold state or parameter is not finite".into());
    }
    problem.set_param(p);
    let mut f = vec![0.0; n];
    problem
        .factor(u, &mut f)
        .map_err(|e| format!("the Jacobian at the fold has a zero pivot (row {})", e.row))?;
    // Jacobian scale: |J 1| / |1|
    let ones = vec![1.0; n];
    let mut y = vec![0.0; n];
    problem.jac_mul(&ones, &mut y);
    let j_scale = norm(&y) / norm(&ones);
    // right null vector, for the size of σ_min: |J v| with v = J⁻¹…J⁻¹ 1
    let mut v = ones.clone();
    for _ in 0..3 {
        problem.solve(&mut v);
        let s = norm(&v);
        if !s.is_finite() || s == 0.0 {
            return Err(format!("inverse iteration on J broke down (|v| = {s:e})"));
        }
        v.iter_mut().for_each(|x| *x /= s);
    }
    problem.jac_mul(&v, &mut y);
    let sigma = norm(&y);
    // written so that a NaN σ is refused too
    if sigma.is_nan() || sigma > REGULAR_RATIO * j_scale {
        return Err(format!(
            "the Jacobian is not singular here (smallest singular value about {sigma:e} against a scale of {j_scale:e}): a corner fold at a kink of the residual, where dλ/dq = -(w·F_q)/(w·F_λ) does not apply"
        ));
    }
    // left null vector
    let mut w = ones;
    for _ in 0..3 {
        if !problem.solve_transpose(&mut w) {
            return Err("this problem cannot solve with the transposed Jacobian".into());
        }
        let s = norm(&w);
        if !s.is_finite() || s == 0.0 {
            return Err(format!("inverse iteration on Jᵀ broke down (|w| = {s:e})"));
        }
        w.iter_mut().for_each(|x| *x /= s);
    }
    let mut fl = vec![0.0; n];
    problem.d_param(u, &mut fl);
    let wfl = dot(&w, &fl);
    let cos = wfl.abs() / norm(&fl);
    if cos.is_nan() || cos < BRANCH_POINT_COSINE {
        return Err(format!(
            "w·F_λ = {wfl:e} with |F_λ| = {:e} (|w| = 1): a branch point, not a fold; no sensitivity",
            norm(&fl)
        ));
    }
    let mut fq = vec![0.0; n];
    let mut out = Vec::new();
    for q in problem.params() {
        problem.d_other(q, u, &mut fq);
        // + 0.0 writes an exact zero (a parameter F does not depend on) as 0, not -0
        let d = -dot(&w, &fq) / wfl + 0.0;
        if !d.is_finite() {
            return Err(format!("d/d{} is not finite", q.key()));
        }
        out.push((q, d));
    }
    Ok(out)
}
