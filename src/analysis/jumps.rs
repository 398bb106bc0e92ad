//! The jump a climate takes at a fold, found by integrating the
//! time-dependent annual-mean model
//!
//! ```text
//! C dT/dt = F(T; p)
//! ```
//!
//! from the fold state nudged along the vanishing mode, with the parameter
//! just past the fold, until it settles on an equilibrium.
//!
//! At a saddle-node fold (p_f, T_f) the Jacobian J = ∂F/∂T has a one-
//! dimensional kernel spanned by φ (the vanishing mode; the state part of
//! the branch tangent there). Near the fold the branch is
//! T(s) ≈ T_f + s φ, p(s) ≈ p_f + c s², stable for s on one side and a
//! saddle on the other, and the flow along φ follows the normal form
//! ds/dt = a (p - p_f) + b s². Past the fold (a (p - p_f) of the sign of b)
//! ds/dt never vanishes, so the state drifts from the side where the stable
//! branch was through the fold's ghost and leaves; where it lands is the
//! jump target. The nudge T₀ = T_f + δ d, d = -sign(⟨φ, T_s - T_f⟩) φ/|φ|∞
//! (T_s the stable neighbour on the branch) starts the state on the far side
//! of the ghost, so it leaves quickly instead of lingering in the
//! bottleneck.

use crate::analysis::branches::{TracedBranch, TracedPoint, poleward_edge_deg};
use crate::model::climate::diagnose;
use crate::model::{Model, Param};
use crate::numerics::linalg::Tridiagonal;
use crate::numerics::newton::max_abs;
use crate::numerics::newton::{
    NewtonOptions, Workspace, implicit_step, implicit_step_from, newton, unstable_modes,
};

/// Settings of the jump integration.
#[derive(Clone, Copy, Debug)]
pub struct JumpOptions {
    /// How far past the fold the parameter is set, as a fraction of the
    /// traced range ([`past_fold`]: p = p_f + lost_side · offset · width, or
    /// the same step in ln p on a log-scale parameter). 1e-4 by default:
    /// far beyond the fold's own error (the fold is refined to ~1e-9 of the
    /// parameter) so the parameter is surely past it, yet so close that the
    /// target differs from the state reached exactly at the fold by only
    /// dT/dp · 1e-4 · width (hundredths of a kelvin or less).
    pub offset: f64,
    /// Largest temperature change of the nudge δ, K (max norm): big
    /// enough to leave the fold's neighbourhood (where ds/dt ≈ b s² is slow),
    /// small beside the temperature scale of a jump.
    pub nudge_k: f64,
    /// The integration stops when max |F| < this, W m-2. It must lie far
    /// below |a (p - p_f)|, the smallest |F| in the fold's ghost
    /// (~1e-3 W m-2 at offset 1e-4), so that the ghost is never taken for an
    /// equilibrium.
    pub settle_tolerance: f64,
    /// Newton tolerance of the final polish, W m-2.
    pub polish_tolerance: f64,
    /// Local error allowed per step, K (step doubling, max norm).
    pub step_error: f64,
    /// First step, years.
    pub first_step_yr: f64,
    /// Largest step, years.
    pub max_step_yr: f64,
    /// Limit on the integrated time, years.
    pub max_years: f64,
    /// Limit on the number of steps tried (accepted or rejected).
    pub max_steps: usize,
}

impl Default for JumpOptions {
    fn default() -> Self {
        JumpOptions {
            offset: 1e-4,
            nudge_k: 0.1,
            settle_tolerance: 1e-8,
            polish_tolerance: 1e-10,
            step_error: 1e-3,
            first_step_yr: 1e-3,
            max_step_yr: 50.0,
            max_years: 1e6,
            max_steps: 200_000,
        }
    }
}

/// Where the integration from a fold ended.
#[derive(Clone, Debug)]
pub struct JumpOutcome {
    /// The polished, stable equilibrium at the parameter just past the fold.
    pub point: TracedPoint,
    /// Transition time, years: from the first time the state has gone 1% of
    /// the way (max_i |T_i(t) - T*_i| ≤ 0.99 max_i |T_i(0) - T*_i|, T* the
    /// target) to the first time it has gone 99% of the way (≤ 0.01 of that
    /// distance). Measured this way it hardly depends on the nudge, which
    /// only sets how long the state lingers next to the fold before 1%.
    pub years: f64,
    /// Time integrated until max |F| fell below the settle tolerance, years.
    pub integrated_years: f64,
    /// Accepted steps.
    pub steps: usize,
}

/// Vectors of one integration, allocated once and reused by every step.
struct Integrator {
    ws: Workspace,
    /// F and J at the current state, shared by the growth check, the full
    /// step and the first half step.
    jac: Tridiagonal,
    f: Vec<f64>,
    /// J - C/(2 dt) for the growth check.
    shifted: Tridiagonal,
    full: Vec<f64>,
    half: Vec<f64>,
    /// The accepted states of the last run (n per step) and their times,
    /// kept so that the transition can be timed against the target found
    /// at the end without integrating again; at most `KEEP_VALUES` numbers.
    path: Vec<f64>,
    path_times: Vec<f64>,
    path_complete: bool,
}

/// Numbers (states times bands) a run keeps for timing, 32 MiB: beyond it
/// the timing run integrates again (the same steps, bit for bit), so memory
/// stays bounded on any grid.
const KEEP_VALUES: usize = 4 << 20;

/// Progress of one integration.
struct Run {
    time: f64,
    steps: usize,
    /// Times the state first went 1% and 99% of the way to a given target.
    crossings: [Option<f64>; 2],
}

/// Times at which the state first goes 1% and 99% of the way to a target
/// T* from a start d₀ = max |T(0) - T*| away (see [`JumpOutcome::years`]).
struct Timer<'a> {
    target: &'a [f64],
    d0: f64,
    d_prev: f64,
}

impl<'a> Timer<'a> {
    fn new(target: &'a [f64], d0: f64, start: &[f64]) -> Timer<'a> {
        Timer {
            target,
            d0,
            d_prev: max_diff(start, target),
        }
    }

    /// An accepted step from time t0 of length dt ending at `t`: the
    /// crossings, interpolated linearly within the step.
    fn step(&mut self, t0: f64, dt: f64, t: &[f64], crossings: &mut [Option<f64>; 2]) {
        let d = max_diff(t, self.target);
        for (k, frac) in [0.99, 0.01].into_iter().enumerate() {
            let level = frac * self.d0;
            if crossings[k].is_none() && d <= level {
                let r = if self.d_prev > d {
                    ((self.d_prev - level) / (self.d_prev - d)).clamp(0.0, 1.0)
                } else {
                    1.0
                };
                crossings[k] = Some(t0 + r * dt);
            }
        }
        self.d_prev = d;
    }
}

fn max_diff(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).fold(0.0f64, |m, (x, y)| {
        if (x - y).is_nan() {
            f64::NAN
        } else {
            m.max((x - y).abs())
        }
    })
}

impl Integrator {
    fn new(model: &Model) -> Integrator {
        let n = model.len();
        Integrator {
            ws: Workspace::new(model),
            jac: model.new_jacobian(),
            f: vec![0.0; n],
            shifted: model.new_jacobian(),
            full: vec![0.0; n],
            half: vec![0.0; n],
            path: Vec::new(),
            path_times: Vec::new(),
            path_complete: false,
        }
    }

    /// Whether C⁻¹J(t) has an eigenvalue above 1/(2 dt): then a linearly
    /// implicit step of dt would damp (and could converge onto) a growing
    /// mode, so dt must shrink. Counted in O(n) by Sturm sequences on
    /// J - C/(2 dt); `false` when the count is not available in O(n).
    /// J is the one of the current state, in `self.jac`.
    fn too_long_for_growth(&mut self, model: &Model, dt: f64) -> bool {
        self.shifted.copy_entries_from(&self.jac);
        let cap = &model.planet.heat_capacity;
        for (d, c) in self.shifted.diag.iter_mut().zip(cap) {
            *d -= c / (2.0 * dt);
        }
        self.shifted
            .count_positive_eigenvalues(cap)
            .is_some_and(|k| k > 0)
    }

    /// Integrates C dT/dt = F(T) from `t` (overwritten) with linearly
    /// implicit Euler steps ([`implicit_step`]) under step-doubling error
    /// control: a step of dt is compared with two of dt/2, the two half
    /// steps are kept when they differ by at most `step_error`, and dt is
    /// scaled by 0.9 (step_error/err)^(1/2) within [1/4, 2] (the local error
    /// of a first-order step is O(dt²)), capped at `max_step_yr` and by the
    /// growth condition of [`Integrator::too_long_for_growth`]. Stops when
    /// max |F| < `settle_tolerance`. With `target` = (T*, d₀) it records the
    /// times max |T - T*| first falls to 0.99 d₀ and 0.01 d₀ (interpolated
    /// linearly within the step). Deterministic: the same input gives the
    /// same steps bit for bit.
    fn run(
        &mut self,
        model: &Model,
        t: &mut [f64],
        opts: &JumpOptions,
        target: Option<(&[f64], f64)>,
    ) -> Result<Run, String> {
        let mut run = Run {
            time: 0.0,
            steps: 0,
            crossings: [None, None],
        };
        let mut dt = opts.first_step_yr;
        let dt_min = 1e-9;
        let mut tried = 0usize;
        let mut timer = target.map(|(tt, d0)| Timer::new(tt, d0, t));
        // a run without a target keeps its path for [`Integrator::time_path`]
        self.path.clear();
        self.path_times.clear();
        self.path_complete = target.is_none();
        loop {
            model.evaluate(t, &mut self.f, Some(&mut self.jac));
            let res = max_abs(&self.f);
            if !res.is_finite() {
                return Err(format!(
                    "the integration left the finite numbers after {:.6} years",
                    run.time
                ));
            }
            // settled: below the tolerance, or below the rounding floor of
            // F where that is larger (many bands)
            let settle = opts
                .settle_tolerance
                .max(crate::numerics::newton::rounding_floor(&self.jac, t));
            if res < settle {
                return Ok(run);
            }
            if tried >= opts.max_steps || run.time >= opts.max_years {
                return Err(format!(
                    "no equilibrium after {:.6} years ({} steps): max |F| = {res:e} W m-2",
                    run.time, run.steps
                ));
            }
            tried += 1;
            while dt > dt_min && self.too_long_for_growth(model, dt) {
                dt *= 0.5;
            }
            self.full.copy_from_slice(t);
            self.half.copy_from_slice(t);
            let cap = &model.planet.heat_capacity;
            let ok = implicit_step_from(&self.f, &self.jac, cap, &mut self.full, dt, &mut self.ws)
                .is_ok()
                && implicit_step_from(
                    &self.f,
                    &self.jac,
                    cap,
                    &mut self.half,
                    0.5 * dt,
                    &mut self.ws,
                )
                .is_ok()
                && implicit_step(model, &mut self.half, 0.5 * dt, &mut self.ws).is_ok();
            let err = if ok {
                max_diff(&self.full, &self.half)
            } else {
                f64::INFINITY
            };
            if err.is_finite() && (err <= opts.step_error || dt <= dt_min) {
                t.copy_from_slice(&self.half);
                let t0 = run.time;
                run.time += dt;
                run.steps += 1;
                if let Some(timer) = timer.as_mut() {
                    timer.step(t0, dt, t, &mut run.crossings);
                }
                if self.path_complete {
                    if self.path.len() + t.len() <= KEEP_VALUES {
                        self.path.extend_from_slice(t);
                        self.path_times.push(dt);
                    } else {
                        self.path_complete = false;
                    }
                }
            } else if dt <= dt_min {
                return Err(format!(
                    "the implicit step failed at the smallest step after {:.6} years",
                    run.time
                ));
            }
            let scale = if err.is_finite() {
                (0.9 * (opts.step_error / err.max(1e-300)).sqrt()).clamp(0.25, 2.0)
            } else {
                0.25
            };
            dt = (dt * scale).clamp(dt_min, opts.max_step_yr);
        }
    }

    /// The crossings of [`Integrator::run`] with `target` = (T*, d₀) from
    /// `start`, read off the path the last run (without a target, from
    /// `start`) kept: the same steps, so the same times bit for bit. `None`
    /// when the path was too long to keep.
    fn time_path(&self, start: &[f64], target: &[f64], d0: f64) -> Option<[Option<f64>; 2]> {
        if !self.path_complete {
            return None;
        }
        let n = start.len();
        let mut timer = Timer::new(target, d0, start);
        let (mut time, mut crossings) = (0.0, [None, None]);
        for (k, &dt) in self.path_times.iter().enumerate() {
            let t0 = time;
            time += dt;
            timer.step(t0, dt, &self.path[k * n..(k + 1) * n], &mut crossings);
        }
        Some(crossings)
    }
}

/// The vanishing mode φ of the fold state `t` (J φ = 0, |φ|∞ = 1, largest
/// entry positive): the eigenvector of C⁻¹J with the eigenvalue nearest 0,
/// by inverse iteration (J - σC) x_{k+1} = C x_k with σ = 0 (or a tiny
/// shift when J is exactly singular), at most 20 iterations until the
/// direction changes by less than 1e-12.
pub fn vanishing_mode(model: &Model, t: &[f64]) -> Result<Vec<f64>, String> {
    let n = model.len();
    if t.len() != n || t.iter().any(|x| !x.is_finite()) {
        return Err("the fold state is not a finite profile of the model's bands".into());
    }
    let mut jac = model.new_jacobian();
    let mut f = vec![0.0; n];
    let cap = &model.planet.heat_capacity;
    let mut shift = 0.0;
    for _ in 0..2 {
        model.evaluate(t, &mut f, Some(&mut jac));
        let scale = jac
            .diag
            .iter()
            .zip(cap)
            .fold(0.0f64, |m, (d, c)| m.max((d / c).abs()));
        for (d, c) in jac.diag.iter_mut().zip(cap) {
            *d -= shift * c;
        }
        if jac.factor().is_ok() {
            break;
        }
        shift = 1e-10 * scale.max(1e-300);
    }
    let mut x = vec![1.0; n];
    let mut prev = vec![0.0; n];
    for _ in 0..20 {
        prev.copy_from_slice(&x);
        for (xi, c) in x.iter_mut().zip(cap) {
            *xi *= c;
        }
        jac.solve(&mut x);
        let big = x
            .iter()
            .copied()
            .fold(0.0f64, |m, v| if v.abs() > m.abs() { v } else { m });
        if !big.is_finite() || big == 0.0 {
            return Err("inverse iteration for the vanishing mode failed".into());
        }
        for xi in x.iter_mut() {
            *xi /= big;
        }
        if max_diff(&x, &prev) < 1e-12 {
            break;
        }
    }
    Ok(x)
}

/// The nudge direction d = -sign(⟨φ, T_s - T_f⟩) φ / |φ|∞: along the
/// vanishing mode φ, pointing from the stable neighbour `stable` (on the
/// branch, on the side the stable segment lies) through the fold `fold_t`,
/// i.e. away from the stable segment that the fold ends.
pub fn nudge_direction(fold_t: &[f64], null: &[f64], stable: &[f64]) -> Result<Vec<f64>, String> {
    let s: f64 = null
        .iter()
        .zip(stable.iter().zip(fold_t))
        .map(|(v, (a, b))| v * (a - b))
        .sum();
    let big = max_abs(null);
    if !s.is_finite() || s == 0.0 || !big.is_finite() || big == 0.0 {
        return Err("the stable neighbour gives no side along the vanishing mode".into());
    }
    let sign = -s.signum() / big;
    Ok(null.iter().map(|v| sign * v).collect())
}

/// The parameter just past a fold at `fold_p` on its `lost_side` (+1 or -1),
/// `offset` of the traced `range` away: p = p_f ± offset · |hi - lo|, or,
/// for a parameter traced on a log scale (CO2, diffusivity:
/// [`crate::analysis::edgetrace::log_scale`]), p = p_f · exp(± offset ·
/// |ln(hi/lo)|), so that a fold near the low end of a range spanning decades
/// is never stepped past zero.
pub fn past_fold(param: Param, fold_p: f64, lost_side: f64, offset: f64, range: (f64, f64)) -> f64 {
    let (lo, hi) = (range.0.min(range.1), range.0.max(range.1));
    let side = lost_side.signum();
    if crate::analysis::edgetrace::log_scale(param, lo) && fold_p > 0.0 {
        fold_p * (side * offset * (hi / lo).ln()).exp()
    } else {
        fold_p + side * offset * (hi - lo)
    }
}

/// Integrates C dT/dt = F(T; p) at p just past the fold ([`past_fold`]) from T₀ = `fold_t` + nudge_k · `direction` (`direction` with
/// |·|∞ = 1, normally [`nudge_direction`]) until max |F| < settle
/// tolerance, then polishes by Newton. The result must be a stable
/// equilibrium (no eigenvalue of C⁻¹J with positive real part) that Newton
/// moved by less than 0.01 K; otherwise, or when the step or time limit is
/// reached, an error says where it stopped. `lost_side` is +1 or -1: the
/// side of the fold where the stable segment no longer exists.
#[allow(clippy::too_many_arguments)]
pub fn jump_from_fold(
    model: &Model,
    param: Param,
    fold_p: f64,
    fold_t: &[f64],
    direction: &[f64],
    lost_side: f64,
    range: (f64, f64),
    opts: &JumpOptions,
) -> Result<JumpOutcome, String> {
    let n = model.len();
    if fold_t.len() != n || direction.len() != n {
        return Err("the fold state or direction does not match the model's bands".into());
    }
    let p = past_fold(param, fold_p, lost_side, opts.offset, range);
    if !p.is_finite() || fold_t.iter().chain(direction).any(|x| !x.is_finite()) {
        return Err("the fold state, direction or parameter is not finite".into());
    }
    let (vlo, vhi) = param.range();
    if p < vlo || p > vhi {
        return Err(format!(
            "{} = {p} past the fold is outside its valid range {vlo} to {vhi}",
            param.key()
        ));
    }
    let mut m = model.clone();
    m.set_param(param, p);
    let start: Vec<f64> = fold_t
        .iter()
        .zip(direction)
        .map(|(t, d)| t + opts.nudge_k * d)
        .collect();
    let mut integ = Integrator::new(&m);
    // pass 1: to the equilibrium
    let mut t = start.clone();
    let run = integ
        .run(&m, &mut t, opts, None)
        .map_err(|e| format!("jump from the fold at {} = {fold_p}: {e}", param.key()))?;
    let settled = t.clone();
    let nopts = NewtonOptions {
        tolerance: opts.polish_tolerance,
        ..NewtonOptions::default()
    };
    newton(&m, &mut t, &nopts, &mut integ.ws).map_err(|e| {
        format!(
            "jump from the fold at {} = {fold_p}: the settled state did not polish: {e}",
            param.key()
        )
    })?;
    let moved = max_diff(&t, &settled);
    if moved >= 0.01 {
        return Err(format!(
            "jump from the fold at {} = {fold_p}: Newton moved the settled state by {moved:.3e} K",
            param.key()
        ));
    }
    let unstable = unstable_modes(&m, &t, &mut integ.ws);
    m.evaluate(&t, &mut integ.f, None);
    let residual = max_abs(&integ.f);
    if unstable != 0 {
        return Err(format!(
            "jump from the fold at {} = {fold_p}: settled after {:.3} years on an equilibrium with {unstable} unstable mode(s)",
            param.key(),
            run.time
        ));
    }
    // pass 2: the same steps, kept by pass 1 (or integrated again when too
    // many to keep), timed against the transition towards T*
    let d0 = max_diff(&start, &t);
    let crossings = match integ.time_path(&start, &t, d0) {
        Some(c) => c,
        None => {
            let mut again = start;
            integ.run(&m, &mut again, opts, Some((&t, d0)))?.crossings
        }
    };
    let years = match crossings {
        [Some(a), Some(b)] => b - a,
        _ => {
            return Err(format!(
                "jump from the fold at {} = {fold_p}: the transition could not be timed",
                param.key()
            ));
        }
    };
    let diagnostics = diagnose(&m, &t);
    Ok(JumpOutcome {
        point: TracedPoint {
            p,
            temperature: t,
            diagnostics,
            unstable_modes: unstable,
            residual,
        },
        years,
        integrated_years: run.time,
        steps: run.steps,
    })
}

/// The largest band difference, K, between `t` at parameter `p` and the
/// nearest stable traced state at `p`: on each branch, between consecutive
/// entries of the sequence of points with its folds inserted, both stable
/// (a fold next to a stable point counts as its end), the temperatures are
/// interpolated linearly in p. `None` when no stable segment spans `p`.
pub fn distance_to_stable_branches(branches: &[TracedBranch], p: f64, t: &[f64]) -> Option<f64> {
    let mut best: Option<f64> = None;
    for b in branches {
        // the branch's points with its folds inserted after their index;
        // the flag: Some(stable) for a point, None for a fold
        let mut seq: Vec<(&TracedPoint, Option<bool>)> =
            Vec::with_capacity(b.points.len() + b.folds.len());
        for (k, q) in b.points.iter().enumerate() {
            seq.push((q, Some(q.unstable_modes == 0)));
            for f in b.folds.iter().filter(|f| f.after == k) {
                seq.push((&f.point, None));
            }
        }
        for w in seq.windows(2) {
            let ((q1, s1), (q2, s2)) = (w[0], w[1]);
            // two stable points, or a stable point and a fold
            let stable_pair = match (s1, s2) {
                (Some(a), Some(z)) => a && z,
                (Some(a), None) | (None, Some(a)) => a,
                (None, None) => false,
            };
            if !stable_pair {
                continue;
            }
            let (lo, hi) = (q1.p.min(q2.p), q1.p.max(q2.p));
            if p < lo || p > hi || q1.temperature.len() != t.len() {
                continue;
            }
            let r = if hi > lo {
                (p - q1.p) / (q2.p - q1.p)
            } else {
                0.0
            };
            let d = t
                .iter()
                .zip(q1.temperature.iter().zip(&q2.temperature))
                .fold(0.0f64, |m, (x, (a, z))| {
                    m.max((x - (a + r * (z - a))).abs())
                });
            if d.is_finite() {
                best = Some(best.map_or(d, |m: f64| m.min(d)));
            }
        }
    }
    best
}

/// Largest band difference, K, allowed between an integrated jump target
/// and the nearest stable traced state for it to count as on a traced
/// branch (linear interpolation between traced points errs by far less).
pub const ON_BRANCH_K: f64 = 0.5;

/// For every fold that ends a stable segment (a stable point within three
/// points of it on the branch, as in
/// [`crate::analysis::branches::resolve_jumps`]), replaces the branch-list
/// guess `jump_to` by the integrated jump ([`jump_from_fold`], nudge by
/// [`nudge_direction`] from [`vanishing_mode`], `lost_side` the side away
/// from the stable neighbour) and sets `jump_years`. The guess stays only
/// as a cross-check: `jump_note` says when the integrated target lies more
/// than [`ON_BRANCH_K`] from every traced stable branch (a missed branch),
/// or, when the integration fails, why, and that `jump_to` is then the
/// branch-list guess.
pub fn integrate_jumps(
    model: &Model,
    param: Param,
    branches: &mut [TracedBranch],
    range: (f64, f64),
    opts: &JumpOptions,
) {
    let snapshot: Vec<TracedBranch> = branches.to_vec();
    let mut m = model.clone();
    for b in branches.iter_mut() {
        for f in b.folds.iter_mut() {
            let fold_p = f.point.p;
            let near =
                crate::analysis::branches::stable_near(&b.points, f.after, |q| q.p != fold_p);
            let Some(nb) = near else {
                continue;
            };
            let lost_side = if nb.p > f.point.p { -1.0 } else { 1.0 };
            m.set_param(param, f.point.p);
            // at a corner (an ice region appears at a pole or the
            // equator) the Jacobian is regular and there is no vanishing
            // mode: the nudge follows the branch through the corner instead
            // (from the stable neighbour to the fold)
            let chord = || -> Result<Vec<f64>, String> {
                let d: Vec<f64> = f
                    .point
                    .temperature
                    .iter()
                    .zip(&nb.temperature)
                    .map(|(a, b)| a - b)
                    .collect();
                let big = max_abs(&d);
                if big > 0.0 && big.is_finite() {
                    Ok(d.iter().map(|x| x / big).collect())
                } else {
                    Err("the fold and its stable neighbour coincide".into())
                }
            };
            let outcome = vanishing_mode(&m, &f.point.temperature)
                .and_then(|null| nudge_direction(&f.point.temperature, &null, &nb.temperature))
                .or_else(|_| chord())
                .and_then(|dir| {
                    jump_from_fold(
                        model,
                        param,
                        f.point.p,
                        &f.point.temperature,
                        &dir,
                        lost_side,
                        range,
                        opts,
                    )
                });
            match outcome {
                Ok(j) => {
                    let guess = f.jump_to.as_ref().map(|g| g.diagnostics.state);
                    let to = &j.point;
                    let dist = distance_to_stable_branches(&snapshot, to.p, &to.temperature);
                    f.jump_note = match dist {
                        Some(d) if d <= ON_BRANCH_K => None,
                        _ => Some(format!(
                            "the integrated jump target ({}, global mean {:.3} C, ice edge {:.3} deg) {} at {} = {}: a branch was missed (the branch-list guess was {})",
                            to.diagnostics.state.label(),
                            to.diagnostics.global_mean_c,
                            poleward_edge_deg(&to.diagnostics),
                            dist.map_or(
                                "lies on no traced stable branch".to_string(),
                                |d| format!("lies {d:.3} K from the nearest traced stable state")
                            ),
                            param.key(),
                            to.p,
                            guess.map_or("none", |s| s.label()),
                        )),
                    };
                    f.jump_years = Some(j.years);
                    f.jump_to = Some(j.point);
                }
                Err(e) => {
                    f.jump_years = None;
                    f.jump_note = Some(format!(
                        "jump integration failed ({e}); jump_to is the branch-list guess ({})",
                        f.jump_to
                            .as_ref()
                            .map_or("none", |g| g.diagnostics.state.label())
                    ));
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::vanishing_mode;
    use crate::analysis::branches::AnnualProblem;
    use crate::io::scenario::{DEFAULT_NAME, DEFAULT_SCENARIO, Scenario};
    use crate::model::Param;
    use crate::model::climate::{Start, equilibrium_from};
    use crate::numerics::continuation::{Settings, Tracer};
    use crate::numerics::newton::NewtonOptions;

    /// At a fold the state part of the branch tangent spans the kernel of J
    /// (common practice, no source): the inverse-iteration mode is parallel
    /// to the continuation tangent to 1e-6.
    #[test]
    fn vanishing_mode_is_the_fold_tangent() {
        let mut m = Scenario::parse(DEFAULT_SCENARIO, DEFAULT_NAME, &[])
            .unwrap()
            .model();
        m.set_param(Param::Flux, 1300.0);
        let start = Start {
            label: "warm".into(),
            temperature: vec![20.0; m.len()],
        };
        let e = equilibrium_from(&m, &start, &NewtonOptions::default()).unwrap();
        let mut problem = AnnualProblem::new(m.clone(), Param::Flux);
        let mut tracer = Tracer::new(&mut problem, Settings::for_range(1100.0, 1500.0));
        let b = tracer.trace(&e.temperature, 1300.0).unwrap();
        let f = b
            .folds
            .iter()
            .find(|f| (f.point.p - 1179.64).abs() < 0.1)
            .expect("large-cap fold");
        m.set_param(Param::Flux, f.point.p);
        let v = vanishing_mode(&m, &f.point.u).unwrap();
        let dot: f64 = v.iter().zip(&f.point.tu).map(|(a, b)| a * b).sum();
        let nv = v.iter().map(|a| a * a).sum::<f64>().sqrt();
        let nt = f.point.tu.iter().map(|a| a * a).sum::<f64>().sqrt();
        let cos = (dot / (nv * nt)).abs();
        assert!(1.0 - cos < 1e-6, "cos = {cos}");
    }

    /// The transition timed from the path a run kept equals, bit for bit,
    /// the timing run that integrates again (the fallback past
    /// `KEEP_VALUES`): the same steps (common practice, no source).
    #[test]
    fn kept_path_times_as_integrating_again() {
        use super::{Integrator, JumpOptions, max_diff};
        let mut m = Scenario::parse(DEFAULT_SCENARIO, DEFAULT_NAME, &[])
            .unwrap()
            .model();
        m.set_param(Param::Flux, 1300.0);
        let opts = JumpOptions::default();
        let start = vec![-5.0; m.len()];
        let mut integ = Integrator::new(&m);
        let mut t = start.clone();
        let first = integ.run(&m, &mut t, &opts, None).unwrap();
        assert!(first.steps > 10, "{} steps", first.steps);
        assert!(integ.path_complete);
        let d0 = max_diff(&start, &t);
        let kept = integ.time_path(&start, &t, d0).unwrap();
        let mut again = start.clone();
        let timed = integ.run(&m, &mut again, &opts, Some((&t, d0))).unwrap();
        assert_eq!(timed.steps, first.steps);
        assert_eq!(kept, timed.crossings);
        assert!(kept[0].is_some() && kept[1].is_some());
        // a run with a target keeps no path
        assert!(!integ.path_complete && integ.time_path(&start, &t, d0).is_none());
    }
}
