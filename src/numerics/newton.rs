//! Steady states by Newton's method, transients by linearly implicit time
//! stepping, stability by eigenvalue counts, and the diagnostics of a climate.

use crate::numerics::linalg::Tridiagonal;

/// A steady problem C dT/dt = F(T) with a tridiagonal (plus rank-one)
/// Jacobian: what Newton, implicit stepping and the stability count need.
pub trait Steady {
    /// Number of unknowns.
    fn len(&self) -> usize;
    /// True when there are no unknowns.
    fn is_empty(&self) -> bool {
        self.len() == 0
    }
    /// F(T) into `f`, and ∂F/∂T into `jac` when given. Allocates nothing.
    fn evaluate(&self, t: &[f64], f: &mut [f64], jac: Option<&mut Tridiagonal>);
    /// A Jacobian of the right shape.
    fn new_jacobian(&self) -> Tridiagonal;
    /// Heat capacity C per unknown (time derivatives, stability).
    fn heat_capacity(&self) -> &[f64];
}

/// Why a solve failed.
#[derive(Debug, Clone, thiserror::Error, PartialEq)]
pub enum SolveError {
    /// Newton stalled.
    #[error(
        "Newton stalled after {iterations} iterations: max |F| = {residual:.6e} W m-2 stopped decreasing above the tolerance; try another start"
    )]
    NewtonStalled {
        /// Iterations made.
        iterations: usize,
        /// Max-norm residual reached, W m-2.
        residual: f64,
    },
    /// The Jacobian was singular (a fold or a degenerate profile).
    #[error(
        "the Jacobian is singular at row {row} (the state sits on a fold or the profile is degenerate)"
    )]
    Singular {
        /// Row of the zero pivot.
        row: usize,
    },
    /// The solution lies below absolute zero somewhere: not a climate.
    #[error(
        "the equilibrium reached lies below absolute zero ({temperature_c:.6} C at latitude {latitude_deg:.4} deg): not a climate (the linear OLR law A + B T is far outside its validity)"
    )]
    Unphysical {
        /// Coldest temperature, °C.
        temperature_c: f64,
        /// Its latitude, deg.
        latitude_deg: f64,
    },
    /// A non-finite value appeared.
    #[error("the solution left the finite numbers (temperature or flux became NaN or infinite)")]
    NonFinite,
}

/// Newton options.
#[derive(Clone, Copy, Debug)]
pub struct NewtonOptions {
    /// Converged when max |F_i| < tolerance, W m-2.
    pub tolerance: f64,
    /// Iteration limit.
    pub max_iterations: usize,
    /// Largest temperature change per iteration, K (damping).
    pub max_step: f64,
    /// Step halvings tried by the line search before the step is taken
    /// anyway.
    pub max_backtracks: usize,
    /// Give up when the best residual has not halved for this many
    /// iterations.
    pub stall_window: usize,
}

impl Default for NewtonOptions {
    fn default() -> Self {
        NewtonOptions {
            tolerance: 1e-10,
            max_iterations: 200,
            max_step: 40.0,
            max_backtracks: 30,
            stall_window: 20,
        }
    }
}

/// Workspace for Newton and time stepping, allocated once per model size.
#[derive(Clone, Debug)]
pub struct Workspace {
    /// Jacobian and its factors.
    pub jac: Tridiagonal,
    /// Residual.
    pub f: Vec<f64>,
    /// Step.
    pub dx: Vec<f64>,
    /// Trial state.
    pub trial: Vec<f64>,
    /// Trial residual.
    pub f_trial: Vec<f64>,
}

impl Workspace {
    /// A workspace for `model`.
    pub fn new<M: Steady + ?Sized>(model: &M) -> Workspace {
        let n = model.len();
        Workspace {
            jac: model.new_jacobian(),
            f: vec![0.0; n],
            dx: vec![0.0; n],
            trial: vec![0.0; n],
            f_trial: vec![0.0; n],
        }
    }
}

/// max_i |v_i| (the residual norm of every solver), NaN for a NaN entry
/// anywhere (`f64::max` drops a NaN operand, so a NaN must end the scan, or
/// a finite entry after it would hide it and a NaN state could pass as
/// converged).
pub fn max_abs(v: &[f64]) -> f64 {
    let mut m = 0.0f64;
    for x in v {
        if x.is_nan() {
            return f64::NAN;
        }
        m = m.max(x.abs());
    }
    m
}

fn norm2(v: &[f64]) -> f64 {
    v.iter().map(|x| x * x).sum::<f64>()
}

/// The rounding floor of max |F| at `t`: with every temperature known
/// only to its last bit, F is uncertain by about Σ_j |J_ij| ε |T_j|; this
/// returns 8 ε max_i Σ_j |J_ij| (|T_j| + 1) (common practice, no source).
/// At 90 bands it is near 1e-12 W m-2, far below the default tolerance;
/// at 20,000 bands it reaches about 1e-6 W m-2 (the transport coefficients
/// grow with the square of the bands).
pub fn rounding_floor(jac: &Tridiagonal, t: &[f64]) -> f64 {
    let n = t.len();
    let mut m = 0.0f64;
    for i in 0..n {
        let mut r = jac.diag[i].abs() * (t[i].abs() + 1.0);
        if i > 0 {
            r += jac.lower[i].abs() * (t[i - 1].abs() + 1.0);
        }
        if i + 1 < n {
            r += jac.upper[i].abs() * (t[i + 1].abs() + 1.0);
        }
        m = m.max(r);
    }
    8.0 * f64::EPSILON * m
}

/// Newton's method on F(T) = 0 from `t` (overwritten with the solution):
/// solve J δ = -F (O(n), tridiagonal LU), cap |δ| at `max_step`, then
/// backtrack (halving, at most 30 times) until ||F||₂ decreases.
/// Returns the number of iterations. Allocates nothing.
pub fn newton<M: Steady + ?Sized>(
    model: &M,
    t: &mut [f64],
    opts: &NewtonOptions,
    ws: &mut Workspace,
) -> Result<usize, SolveError> {
    let n = model.len();
    model.evaluate(t, &mut ws.f, Some(&mut ws.jac));
    let mut res = max_abs(&ws.f);
    // the tolerance, or the rounding floor of F where that is larger (many
    // bands: the stiff transport terms make |F| uncomputable below it)
    let mut tol = opts.tolerance.max(rounding_floor(&ws.jac, t));
    // stall detection: the best residual must halve every `stall_window` iterations
    let (mut best, mut best_iter) = (res, 0usize);
    for iter in 0..opts.max_iterations {
        if res < 0.5 * best {
            best = res;
            best_iter = iter;
        } else if iter >= best_iter + opts.stall_window && res >= tol {
            return Err(SolveError::NewtonStalled {
                iterations: iter,
                residual: res,
            });
        }
        if !res.is_finite() {
            return Err(SolveError::NonFinite);
        }
        if res < tol {
            return Ok(iter);
        }
        ws.jac
            .factor()
            .map_err(|s| SolveError::Singular { row: s.row })?;
        for i in 0..n {
            ws.dx[i] = -ws.f[i];
        }
        ws.jac.solve(&mut ws.dx);
        let big = max_abs(&ws.dx);
        if !big.is_finite() {
            return Err(SolveError::NonFinite);
        }
        // At many bands the flux terms reach 1e5 W m-2 and rounding keeps
        // |F| just above a strict tolerance: accept when the Newton
        // correction itself is at rounding level (1e-11 K) and |F| is
        // within 100 times the tolerance.
        if big < 1e-11 * (1.0 + max_abs(t)) && res < 100.0 * opts.tolerance {
            return Ok(iter);
        }
        let mut lambda = if big > opts.max_step {
            opts.max_step / big
        } else {
            1.0
        };
        let f0 = norm2(&ws.f);
        let mut accepted = false;
        for _ in 0..opts.max_backtracks {
            for i in 0..n {
                ws.trial[i] = t[i] + lambda * ws.dx[i];
            }
            model.evaluate(&ws.trial, &mut ws.f_trial, None);
            let f1 = norm2(&ws.f_trial);
            if f1.is_finite() && (f1 <= (1.0 - 1e-4 * lambda) * f0 || f1 < 1e-30) {
                accepted = true;
                break;
            }
            lambda *= 0.5;
        }
        if !accepted {
            // Take the smallest step anyway: the residual is only piecewise
            // smooth, and a tiny step across a kink lets Newton go on.
            if max_abs(&ws.f_trial) > 10.0 * res {
                return Err(SolveError::NewtonStalled {
                    iterations: iter,
                    residual: res,
                });
            }
        }
        t.copy_from_slice(&ws.trial);
        model.evaluate(t, &mut ws.f, Some(&mut ws.jac));
        res = max_abs(&ws.f);
        tol = opts.tolerance.max(rounding_floor(&ws.jac, t));
    }
    if res < tol {
        return Ok(opts.max_iterations);
    }
    Err(SolveError::NewtonStalled {
        iterations: opts.max_iterations,
        residual: res,
    })
}

/// One linearly implicit (Rosenbrock-Euler) step of C dT/dt = F(T):
/// (C/Δt - J) δ = F(Tⁿ), Tⁿ⁺¹ = Tⁿ + δ, with Δt in years. One tridiagonal
/// solve per step; unconditionally stable for the linear part.
pub fn implicit_step<M: Steady + ?Sized>(
    model: &M,
    t: &mut [f64],
    dt: f64,
    ws: &mut Workspace,
) -> Result<(), SolveError> {
    model.evaluate(t, &mut ws.f, Some(&mut ws.jac));
    shifted_step(model.heat_capacity(), t, dt, ws)
}

/// The step of [`implicit_step`] from F(Tⁿ) and J(Tⁿ) already evaluated
/// (`f`, `jac`; left untouched): several steps from one state (a step and
/// its two halves) then share one evaluation. Same arithmetic, so the same
/// result bit for bit.
pub fn implicit_step_from(
    f: &[f64],
    jac: &Tridiagonal,
    heat_capacity: &[f64],
    t: &mut [f64],
    dt: f64,
    ws: &mut Workspace,
) -> Result<(), SolveError> {
    ws.f.copy_from_slice(f);
    ws.jac.copy_entries_from(jac);
    shifted_step(heat_capacity, t, dt, ws)
}

/// δ from (C/Δt - J) δ = F with F and J in `ws`, then T += δ.
fn shifted_step(
    heat_capacity: &[f64],
    t: &mut [f64],
    dt: f64,
    ws: &mut Workspace,
) -> Result<(), SolveError> {
    for (i, c) in heat_capacity.iter().enumerate() {
        ws.jac.diag[i] -= c / dt;
    }
    ws.jac
        .factor()
        .map_err(|s| SolveError::Singular { row: s.row })?;
    for i in 0..t.len() {
        ws.dx[i] = -ws.f[i];
    }
    ws.jac.solve(&mut ws.dx);
    for (ti, d) in t.iter_mut().zip(&ws.dx) {
        *ti += d;
    }
    if t.iter().any(|x| !x.is_finite()) {
        return Err(SolveError::NonFinite);
    }
    Ok(())
}

/// Time-steps to equilibrium: stops when the largest change over one step
/// of `dt` years, scaled to one year, is below `tol_per_year` (K per year).
/// Returns the number of steps, or an error after `max_steps`.
pub fn spin_up<M: Steady + ?Sized>(
    model: &M,
    t: &mut [f64],
    dt: f64,
    tol_per_year: f64,
    max_steps: usize,
    ws: &mut Workspace,
) -> Result<usize, SolveError> {
    for step in 1..=max_steps {
        implicit_step(model, t, dt, ws)?;
        if max_abs(&ws.dx) / dt < tol_per_year {
            return Ok(step);
        }
    }
    Err(SolveError::NewtonStalled {
        iterations: max_steps,
        residual: max_abs(&ws.f),
    })
}

/// Number of unstable modes of the equilibrium `t`: eigenvalues of
/// C⁻¹ J with positive real part. O(n) by a Sturm count when J is
/// tridiagonal with non-negative off-diagonal products (always the case for
/// diffusive transport); otherwise a dense eigenvalue solve (faer).
pub fn unstable_modes<M: Steady + ?Sized>(model: &M, t: &[f64], ws: &mut Workspace) -> usize {
    model.evaluate(t, &mut ws.f, Some(&mut ws.jac));
    let cap = model.heat_capacity();
    if let Some(c) = ws.jac.count_positive_eigenvalues(cap) {
        return c;
    }
    dense_unstable_modes(&ws.jac, cap)
}

/// Dense fallback: eigenvalues of C⁻¹ J by faer, count Re λ > 0.
pub fn dense_unstable_modes(j: &Tridiagonal, cap: &[f64]) -> usize {
    let n = j.len();
    let m = faer::Mat::<f64>::from_fn(n, n, |r, c| j.entry(r, c) / cap[r]);
    match m.eigenvalues() {
        Ok(ev) => ev.iter().filter(|z| z.re > 0.0).count(),
        Err(_) => usize::MAX,
    }
}

#[cfg(test)]
mod tests {
    /// A NaN anywhere makes the norm NaN, wherever it sits (common
    /// practice, no source).
    #[test]
    fn max_abs_keeps_a_nan_wherever_it_sits() {
        assert_eq!(super::max_abs(&[-3.0, 2.0]), 3.0);
        assert_eq!(super::max_abs(&[]), 0.0);
        for v in [
            [f64::NAN, 1.0, 2.0],
            [1.0, f64::NAN, 2.0],
            [1.0, 2.0, f64::NAN],
        ] {
            assert!(super::max_abs(&v).is_nan(), "{v:?}");
        }
    }
}
