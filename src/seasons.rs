//! The seasonal model: periodic climates of
//!
//! C dT/dt = S(x, t)(1 - α(T, x)) - OLR(T) + ∇·F(T)
//!
//! on the full pole-to-pole grid, with the daily-mean insolation of the orbit
//! at every time step (so eccentricity and perihelion make the hemispheres
//! differ) and the albedo law applied to the instantaneous temperature.
//! C = f_land C_land + (1 - f_land) ρ c_p h per band ([`crate::model::Planet::heat_capacity`]).
//!
//! **Insolation tables.** Step k of N covers the year fraction
//! [k/N, (k+1)/N] (t = 0 at the northern spring equinox). Its insolation is
//! the *step average* of the daily mean S(x, t)/S0 (Berger 1978) over that
//! interval, by 4-point Gauss-Legendre in time, at the model's sampling
//! points ([`Model::insolation_sample_points`]). Step averages make the mean
//! of the N tables the annual mean up to the time quadrature (no midpoint
//! aliasing), so a very deep mixed layer recovers the annual-mean model.
//!
//! **Time stepping.** Backward (fully implicit) Euler,
//! C (Tⁿ⁺¹ - Tⁿ)/Δt = F_k(Tⁿ⁺¹), F_k the residual with the insolation of
//! step k, solved by Newton: each iteration is one tridiagonal solve with
//! (C/Δt - J), the first one being exactly the linearly implicit Euler step
//! of [`crate::solve::implicit_step`]; one or two more drive the equations to
//! rounding. Because the step equations are solved exactly, the derivative
//! of one step is exact:
//!
//! ∂Tⁿ⁺¹/∂Tⁿ = (C/Δt - J(Tⁿ⁺¹))⁻¹ C/Δt,
//! ∂Tⁿ⁺¹/∂p = (C/Δt - J(Tⁿ⁺¹))⁻¹ (C/Δt ∂Tⁿ/∂p + ∂F_k/∂p),
//!
//! and the derivative of the annual map Φ (the monodromy matrix) is their
//! product over the year, M = Π_k (C/Δt - J_k)⁻¹ C/Δt (dense n x n, O(n²)
//! per step).
//!
//! **Periodic climates** are fixed points u = Φ(u) of the annual map, found
//! by Newton (shooting) on G(u) = u - Φ(u), (I - M) δ = -G; their Floquet
//! multipliers are the eigenvalues μ of M, unstable when |μ| > 1.

use crate::branches::{Fold, Hysteresis, TracedBranch, TracedPoint};
use crate::climate::{Start, diagnose};
use crate::continuation::{Branch, Problem, Settings, Tracer};
use crate::insolation::{InsolationLaw, daily_mean};
use crate::linalg::Singular;
use crate::model::{Model, Param};
use crate::solve::Workspace;
use faer::prelude::Solve;

/// Days in the model year (for day-of-year labels only; the time unit is
/// the year). Day 0 is the northern spring equinox, as in `icefold sun`.
pub const DAYS_PER_YEAR: f64 = 365.0;

/// 4-point Gauss-Legendre nodes and weights on [-1, 1].
const GAUSS4: [(f64, f64); 4] = [
    (-0.861_136_311_594_052_6, 0.347_854_845_137_453_85),
    (-0.339_981_043_584_856_3, 0.652_145_154_862_546_1),
    (0.339_981_043_584_856_3, 0.652_145_154_862_546_1),
    (0.861_136_311_594_052_6, 0.347_854_845_137_453_85),
];

/// Why a seasonal computation failed.
#[derive(Debug, Clone, thiserror::Error, PartialEq)]
pub enum SeasonalError {
    /// The model or an option is not acceptable (bad input).
    #[error("{0}")]
    Invalid(String),
    /// A time step's implicit equations were not solved.
    #[error(
        "time step {step} of the year did not converge (implicit equations solved only to {residual:e} K)"
    )]
    StepFailed {
        /// Step index within the year.
        step: usize,
        /// max |Tⁿ⁺¹ - Tⁿ - Δt F/C| reached, K.
        residual: f64,
    },
    /// A time step's matrix C/Δt - J was singular.
    #[error("the matrix of time step {step} is singular (row {row})")]
    Singular {
        /// Step index.
        step: usize,
        /// Row of the zero pivot.
        row: usize,
    },
    /// Temperatures left the finite numbers.
    #[error("the temperature became NaN or infinite at time step {step}")]
    NonFinite {
        /// Step index.
        step: usize,
    },
    /// Shooting (and the spin-up fallback) did not reach a periodic climate.
    #[error(
        "no periodic climate reached: max |u - Φ(u)| = {residual:e} K after {iterations} Newton iterations{note}"
    )]
    NotPeriodic {
        /// Periodicity residual reached, K.
        residual: f64,
        /// Newton iterations made.
        iterations: usize,
        /// What else was tried.
        note: String,
    },
}

/// Step-averaged daily-mean insolation per unit flux, S/S0, for `steps`
/// steps of the year at the model's sampling points: entry
/// `k * halves + h` holds the three values of half-band h in step k,
///
/// table_k(x) = N ∫_{k/N}^{(k+1)/N} S(x, t)/S0 dt,
///
/// S the daily mean of Berger (1978) ([`daily_mean`]) at the orbit position
/// of year fraction t (Kepler's equation, [`crate::orbit::Orbit::position`]),
/// the integral by 4-point Gauss-Legendre per step. The Legendre law has no
/// seasons: every table is its annual mean.
pub fn insolation_tables(model: &Model, steps: usize) -> Vec<[f64; 3]> {
    let pts = model.insolation_sample_points();
    let halves = pts.len();
    let mut out = vec![[0.0; 3]; steps * halves];
    let planet = &model.planet;
    match planet.insolation {
        InsolationLaw::Legendre { .. } => {
            let mut unit = planet.orbit;
            unit.flux = 1.0;
            let ins = crate::insolation::Insolation::new(unit, planet.insolation);
            for k in 0..steps {
                for (h, p) in pts.iter().enumerate() {
                    out[k * halves + h] = p.map(|x| ins.annual_mean(x));
                }
            }
        }
        InsolationLaw::Orbital => {
            let orbit = planet.orbit;
            for k in 0..steps {
                for (s, w) in GAUSS4 {
                    let t = (k as f64 + 0.5 * (1.0 + s)) / steps as f64;
                    let pos = orbit.position(t);
                    for (h, p) in pts.iter().enumerate() {
                        let row = &mut out[k * halves + h];
                        for j in 0..3 {
                            row[j] += 0.5
                                * w
                                * daily_mean(1.0, p[j], pos.declination, pos.distance_factor);
                        }
                    }
                }
            }
        }
    }
    out
}

/// A planet on a grid with its seasonal forcing, ready to step in time.
/// Owns its workspaces: stepping allocates nothing.
#[derive(Clone, Debug)]
pub struct SeasonalModel {
    model: Model,
    steps: usize,
    halves: usize,
    tables: Vec<[f64; 3]>,
    ws: Workspace,
    prev: Vec<f64>,
    dfdp: Vec<f64>,
    scratch: Vec<f64>,
    batch: Batch,
    /// Newton on each implicit step stops when
    /// max |Tⁿ⁺¹ - Tⁿ - Δt F(Tⁿ⁺¹)/C| is below this, K (default 1e-13).
    pub step_tolerance: f64,
    /// Newton iteration limit per step (default 30).
    pub max_step_iterations: usize,
}

/// Whether changing `p` changes the insolation tables.
fn moves_insolation(p: Param) -> bool {
    matches!(
        p,
        Param::Obliquity | Param::Eccentricity | Param::InsolationP2
    )
}

impl SeasonalModel {
    /// Wraps `model` with `steps_per_year` implicit steps per year.
    /// Rejects a symmetric (one-hemisphere) grid, fewer than 2 steps, and
    /// heat capacities that are not finite and positive.
    pub fn new(model: Model, steps_per_year: usize) -> Result<SeasonalModel, SeasonalError> {
        if model.grid.symmetric {
            return Err(SeasonalError::Invalid(
                "the seasonal model needs the full pole-to-pole grid (grid.symmetric = false): the two hemispheres have different seasons".into(),
            ));
        }
        if steps_per_year < 2 {
            return Err(SeasonalError::Invalid(format!(
                "steps per year = {steps_per_year}: need at least 2"
            )));
        }
        if let Some(c) = model
            .planet
            .heat_capacity
            .iter()
            .find(|c| !(c.is_finite() && **c > 0.0))
        {
            return Err(SeasonalError::Invalid(format!(
                "heat capacity {c} W yr m-2 K-1: must be finite and positive (check seasons.mixed_layer_depth, seasons.land_fraction, seasons.land_heat_capacity)"
            )));
        }
        let n = model.len();
        let tables = insolation_tables(&model, steps_per_year);
        let halves = 2 * n;
        let ws = Workspace::new(&model);
        Ok(SeasonalModel {
            model,
            steps: steps_per_year,
            halves,
            tables,
            ws,
            prev: vec![0.0; n],
            dfdp: vec![0.0; n],
            scratch: vec![0.0; n],
            batch: Batch::default(),
            step_tolerance: 1e-13,
            max_step_iterations: 30,
        })
    }

    /// The seasonal model of a scenario (`seasons.steps_per_year`); the
    /// scenario's schema has already checked depth, land fraction and steps.
    pub fn from_scenario(sc: &crate::scenario::Scenario) -> Result<SeasonalModel, SeasonalError> {
        let steps = sc.int("seasons.steps_per_year");
        if steps < 2 {
            return Err(SeasonalError::Invalid(format!(
                "`seasons.steps_per_year` = {steps}: need at least 2"
            )));
        }
        SeasonalModel::new(sc.model(), steps as usize)
    }

    /// The underlying model (its insolation is that of the last step taken).
    pub fn model(&self) -> &Model {
        &self.model
    }

    /// A copy of the model with the annual-mean insolation restored (the
    /// annual-mean model of the same planet, for diagnostics).
    pub fn annual_model(&self) -> Model {
        let mut m = self.model.clone();
        m.restore_annual_insolation();
        m
    }

    /// Number of bands.
    pub fn len(&self) -> usize {
        self.model.len()
    }

    /// True for a model without bands (never for a validated one).
    pub fn is_empty(&self) -> bool {
        self.model.is_empty()
    }

    /// Steps per year N.
    pub fn steps_per_year(&self) -> usize {
        self.steps
    }

    /// Time step Δt = 1/N, years.
    pub fn dt(&self) -> f64 {
        1.0 / self.steps as f64
    }

    /// The unit insolation table of step k (per half-band, 3 samples).
    pub fn table(&self, k: usize) -> &[[f64; 3]] {
        &self.tables[k * self.halves..(k + 1) * self.halves]
    }

    /// Current value of a parameter.
    pub fn param(&self, p: Param) -> f64 {
        self.model.param(p)
    }

    /// Sets a parameter; obliquity, eccentricity and p2 rebuild the
    /// insolation tables (O(N bands)).
    pub fn set_param(&mut self, p: Param, v: f64) {
        self.model.set_param(p, v);
        if moves_insolation(p) {
            self.tables = insolation_tables(&self.model, self.steps);
        }
    }

    /// Feeds the insolation of step k to the model.
    pub fn use_step_insolation(&mut self, k: usize) {
        let k = k % self.steps;
        let range = k * self.halves..(k + 1) * self.halves;
        self.model.set_unit_insolation(&self.tables[range]);
    }

    /// One backward-Euler step k (year fraction k/N to (k+1)/N) of
    /// C (Tⁿ⁺¹ - Tⁿ)/Δt = F_k(Tⁿ⁺¹), `t` holding Tⁿ on entry and Tⁿ⁺¹ on
    /// exit. Newton: (J - C/Δt) δ = R, R = C (T - Tⁿ)/Δt - F_k(T), T += δ,
    /// until max |R Δt/C| < `step_tolerance`. With `factor_at_end` the
    /// workspace Jacobian is left holding the LU factors of J - C/Δt at
    /// Tⁿ⁺¹ (for the derivative). Returns the Newton iterations. Allocates
    /// nothing.
    pub fn step(
        &mut self,
        k: usize,
        t: &mut [f64],
        factor_at_end: bool,
    ) -> Result<usize, SeasonalError> {
        let n = self.len();
        let dt = self.dt();
        self.use_step_insolation(k);
        self.prev.copy_from_slice(t);
        let mut last_step = f64::INFINITY;
        let mut err = f64::INFINITY;
        for it in 0..=self.max_step_iterations {
            self.model
                .evaluate(t, &mut self.ws.f, Some(&mut self.ws.jac));
            let cap = &self.model.planet.heat_capacity;
            err = 0.0f64;
            for i in 0..n {
                let r = cap[i] * (t[i] - self.prev[i]) / dt - self.ws.f[i];
                self.ws.dx[i] = r;
                let e = (r * dt / cap[i]).abs();
                err = if e.is_nan() { f64::NAN } else { err.max(e) };
                self.ws.jac.diag[i] -= cap[i] / dt;
            }
            if !err.is_finite() {
                return Err(SeasonalError::NonFinite { step: k });
            }
            let scale = 1.0 + t.iter().fold(0.0f64, |m, x| m.max(x.abs()));
            // converged, or the last correction was at rounding level
            let done = err < self.step_tolerance
                || (last_step < 1e-14 * scale && err < 1e3 * self.step_tolerance);
            if done || it == self.max_step_iterations {
                if !done {
                    return Err(SeasonalError::StepFailed {
                        step: k,
                        residual: err,
                    });
                }
                if factor_at_end {
                    self.ws.jac.factor().map_err(|s| SeasonalError::Singular {
                        step: k,
                        row: s.row,
                    })?;
                }
                return Ok(it);
            }
            self.ws.jac.factor().map_err(|s| SeasonalError::Singular {
                step: k,
                row: s.row,
            })?;
            self.ws.jac.solve(&mut self.ws.dx);
            last_step = 0.0;
            for i in 0..n {
                t[i] += self.ws.dx[i];
                last_step = last_step.max(self.ws.dx[i].abs());
            }
            if !last_step.is_finite() {
                return Err(SeasonalError::NonFinite { step: k });
            }
        }
        Err(SeasonalError::StepFailed {
            step: k,
            residual: err,
        })
    }

    /// The annual map Φ: integrates `t` over one year (N steps from the
    /// northern spring equinox). Allocates nothing.
    pub fn year(&mut self, t: &mut [f64]) -> Result<(), SeasonalError> {
        for k in 0..self.steps {
            self.step(k, t, false)?;
        }
        Ok(())
    }

    /// One year, calling `on_step(k, T)` after every step k with the state
    /// at year fraction (k+1)/N (the model then holds step k's insolation).
    pub fn year_with(
        &mut self,
        t: &mut [f64],
        on_step: &mut dyn FnMut(usize, &Model, &[f64]),
    ) -> Result<(), SeasonalError> {
        for k in 0..self.steps {
            self.step(k, t, false)?;
            on_step(k, &self.model, t);
        }
        Ok(())
    }

    /// One year with the exact derivative of the annual map:
    /// `monodromy` (n x n, row-major: entry (i, j) at `i n + j`) becomes
    /// M = ∂Φ/∂u = Π_k (C/Δt - J_k)⁻¹ C/Δt, and with `sensitivity` = (p, s),
    /// s becomes ∂Φ/∂p by s ← (C/Δt - J_k)⁻¹ (C/Δt s + ∂F_k/∂p) from s = 0.
    /// ∂F/∂p comes from [`Model::d_residual_d_param`]; parameters that move
    /// the insolation tables (obliquity, eccentricity, p2) are refused
    /// (use a central difference of Φ). The n (+1) columns are carried
    /// together through one pivoted tridiagonal factorisation per step
    /// (row-major, so the inner loops run over columns). Allocates nothing
    /// after the first call.
    pub fn year_with_jacobian(
        &mut self,
        t: &mut [f64],
        monodromy: &mut [f64],
        mut sensitivity: Option<(Param, &mut [f64])>,
    ) -> Result<(), SeasonalError> {
        let n = self.len();
        let w = n + 1;
        let dt = self.dt();
        if let Some((p, _)) = sensitivity.as_ref()
            && moves_insolation(*p)
        {
            return Err(SeasonalError::Invalid(format!(
                "the exact parameter sensitivity does not cover {} (it moves the insolation tables)",
                p.key()
            )));
        }
        self.batch.resize(n, w);
        let b = &mut self.batch.b;
        b.fill(0.0);
        for i in 0..n {
            b[i * w + i] = 1.0;
        }
        for k in 0..self.steps {
            self.step(k, t, false)?;
            // self.ws.jac holds J - C/Δt at Tⁿ⁺¹ (not factored)
            if let Some((p, _)) = sensitivity.as_ref() {
                self.model
                    .d_residual_d_param(*p, t, &mut self.dfdp, &mut self.scratch);
            } else {
                self.dfdp.fill(0.0);
            }
            let cap = &self.model.planet.heat_capacity;
            let b = &mut self.batch.b;
            for i in 0..n {
                let s = -cap[i] / dt;
                let row = &mut b[i * w..(i + 1) * w];
                for x in row.iter_mut() {
                    *x *= s;
                }
                row[n] -= self.dfdp[i];
            }
            self.batch
                .factor(&self.ws.jac)
                .map_err(|row| SeasonalError::Singular { step: k, row })?;
            self.batch.solve();
        }
        let b = &self.batch.b;
        for i in 0..n {
            monodromy[i * n..(i + 1) * n].copy_from_slice(&b[i * w..i * w + n]);
        }
        if let Some((_, s)) = sensitivity.as_mut() {
            for i in 0..n {
                s[i] = b[i * w + n];
            }
        }
        Ok(())
    }

    /// Global mean of the net top-of-atmosphere flux S(1 - α) - OLR of
    /// profile `t` under the insolation of step k, W m-2 (allocates).
    pub fn toa_net(&mut self, k: usize, t: &[f64]) -> f64 {
        self.use_step_insolation(k);
        let fl = self.model.band_fluxes(t);
        let net: Vec<f64> = fl
            .absorbed
            .iter()
            .zip(&fl.olr)
            .map(|(a, o)| a - o)
            .collect();
        self.model.grid.mean(&net)
    }
}

/// Pivoted LU of a tridiagonal matrix (plus rank-one term) applied to many
/// right-hand sides at once: `b` is n x w row-major, so every elimination
/// step is a loop over the w columns (the LAPACK gttrf/gttrs scheme, as in
/// [`crate::linalg::Tridiagonal`], with Sherman-Morrison for u vᵀ).
#[derive(Clone, Debug, Default)]
struct Batch {
    n: usize,
    w: usize,
    b: Vec<f64>,
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

impl Batch {
    fn resize(&mut self, n: usize, w: usize) {
        if self.n != n || self.w != w {
            *self = Batch {
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
    fn factor(&mut self, a: &crate::linalg::Tridiagonal) -> Result<(), usize> {
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
    fn solve(&mut self) {
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

fn max_abs(v: &[f64]) -> f64 {
    v.iter().fold(
        0.0f64,
        |m, x| if x.is_nan() { f64::NAN } else { m.max(x.abs()) },
    )
}

/// Eigenvalues (Floquet multipliers) of the row-major n x n matrix `m`,
/// as (re, im) pairs sorted by decreasing modulus (dense, faer).
pub fn floquet_multipliers(m: &[f64], n: usize) -> Option<Vec<(f64, f64)>> {
    let a = faer::Mat::<f64>::from_fn(n, n, |r, c| m[r * n + c]);
    let ev = a.eigenvalues().ok()?;
    let mut out: Vec<(f64, f64)> = ev.iter().map(|z| (z.re, z.im)).collect();
    out.sort_by(|a, b| b.0.hypot(b.1).total_cmp(&a.0.hypot(a.1)));
    Some(out)
}

/// Number of multipliers with |μ| > 1 (unstable modes of a periodic climate).
pub fn count_unstable(multipliers: &[(f64, f64)]) -> usize {
    multipliers
        .iter()
        .filter(|(re, im)| re.hypot(*im) > 1.0)
        .count()
}

/// Shooting options.
#[derive(Clone, Copy, Debug)]
pub struct ShootingOptions {
    /// Converged when max |u - Φ(u)| is below this, K.
    pub tolerance: f64,
    /// Newton iteration limit.
    pub max_iterations: usize,
    /// Largest change of u per Newton iteration, K (damping).
    pub max_step: f64,
    /// Fallback: years of spin-up before trying Newton again.
    pub spin_up_years: usize,
}

impl Default for ShootingOptions {
    fn default() -> Self {
        ShootingOptions {
            tolerance: 1e-10,
            max_iterations: 40,
            max_step: 20.0,
            spin_up_years: 300,
        }
    }
}

/// A periodic climate: the state at the northern spring equinox, u = Φ(u).
#[derive(Clone, Debug)]
pub struct Periodic {
    /// Temperature per band at year fraction 0, °C.
    pub start: Vec<f64>,
    /// max |u - Φ(u)| at the returned state, K.
    pub residual: f64,
    /// Newton iterations of the shooting.
    pub iterations: usize,
    /// Years of spin-up needed before Newton converged (0 if none).
    pub spun_up_years: usize,
    /// Floquet multipliers (re, im), largest modulus first.
    pub multipliers: Vec<(f64, f64)>,
    /// Multipliers with |μ| > 1.
    pub unstable_modes: usize,
    /// Label of the start that led here.
    pub label: String,
}

/// Newton on G(u) = u - Φ(u) from `u0`: solve (I - M) δ = -G (dense LU,
/// faer), cap max |δ| at `max_step`, backtrack (halving, at most 12 times)
/// until ||G||₂ decreases. Returns the fixed point with its multipliers;
/// fails with the residual reached. Never returns a state that is not
/// periodic to `tolerance`.
pub fn shoot(
    sm: &mut SeasonalModel,
    u0: &[f64],
    opts: &ShootingOptions,
) -> Result<Periodic, SeasonalError> {
    let n = sm.len();
    let mut u = u0.to_vec();
    let mut phi = vec![0.0; n];
    let mut m = vec![0.0; n * n];
    let mut g = vec![0.0; n];
    let mut trial = vec![0.0; n];
    let mut res = f64::INFINITY;
    // Φ and M at u; each accepted trial below is integrated with its
    // Jacobian right away, so no year is integrated twice.
    phi.copy_from_slice(&u);
    sm.year_with_jacobian(&mut phi, &mut m, None)?;
    for iter in 0..=opts.max_iterations {
        for i in 0..n {
            g[i] = u[i] - phi[i];
        }
        res = max_abs(&g);
        if res < opts.tolerance {
            let multipliers = floquet_multipliers(&m, n).ok_or_else(|| {
                SeasonalError::Invalid("the eigenvalue solve of the monodromy matrix failed".into())
            })?;
            return Ok(Periodic {
                start: u,
                residual: res,
                iterations: iter,
                spun_up_years: 0,
                unstable_modes: count_unstable(&multipliers),
                multipliers,
                label: String::new(),
            });
        }
        if iter == opts.max_iterations || !res.is_finite() {
            break;
        }
        let a = faer::Mat::<f64>::from_fn(n, n, |r, c| f64::from(u8::from(r == c)) - m[r * n + c]);
        let lu = a.partial_piv_lu();
        let mut rhs = faer::Mat::<f64>::from_fn(n, 1, |i, _| -g[i]);
        lu.solve_in_place(rhs.as_mut());
        let delta: Vec<f64> = (0..n).map(|i| rhs[(i, 0)]).collect();
        let big = max_abs(&delta);
        if !big.is_finite() {
            break;
        }
        let mut lambda = if big > opts.max_step {
            opts.max_step / big
        } else {
            1.0
        };
        let g0: f64 = g.iter().map(|x| x * x).sum();
        let mut accepted = false;
        for attempt in 0..12 {
            for i in 0..n {
                trial[i] = u[i] + lambda * delta[i];
            }
            phi.copy_from_slice(&trial);
            // the full step is usually accepted: integrate it with its
            // Jacobian; shorter trials first without
            let ok = if attempt == 0 {
                sm.year_with_jacobian(&mut phi, &mut m, None).is_ok()
            } else {
                sm.year(&mut phi).is_ok()
            };
            if ok {
                let g1: f64 = trial.iter().zip(&phi).map(|(a, b)| (a - b) * (a - b)).sum();
                if g1.is_finite()
                    && (g1 <= (1.0 - 1e-4 * lambda) * g0 || g1.sqrt() < opts.tolerance)
                {
                    if attempt > 0 {
                        phi.copy_from_slice(&trial);
                        sm.year_with_jacobian(&mut phi, &mut m, None)?;
                    }
                    accepted = true;
                    break;
                }
            }
            lambda *= 0.5;
        }
        if !accepted {
            break;
        }
        u.copy_from_slice(&trial);
    }
    Err(SeasonalError::NotPeriodic {
        residual: res,
        iterations: opts.max_iterations,
        note: String::new(),
    })
}

/// Integrates whole years from `t` until the largest year-over-year change
/// max |Φ(u) - u| is below `tol` K; returns the years taken, or fails after
/// `max_years` with the change reached.
pub fn spin_up(
    sm: &mut SeasonalModel,
    t: &mut [f64],
    tol: f64,
    max_years: usize,
) -> Result<usize, SeasonalError> {
    let n = sm.len();
    let mut before = vec![0.0; n];
    let mut change = f64::INFINITY;
    for year in 1..=max_years {
        before.copy_from_slice(t);
        sm.year(t)?;
        change = t
            .iter()
            .zip(&before)
            .fold(0.0f64, |m, (a, b)| m.max((a - b).abs()));
        if change < tol {
            return Ok(year);
        }
    }
    Err(SeasonalError::NotPeriodic {
        residual: change,
        iterations: 0,
        note: format!(" (spin-up of {max_years} years)"),
    })
}

/// The periodic climate reached from `start`: shooting first; only if
/// Newton fails, `spin_up_years` of time stepping and shooting again (the
/// result records the years). Fails with the residual when neither works.
pub fn periodic_from(
    sm: &mut SeasonalModel,
    start: &Start,
    opts: &ShootingOptions,
) -> Result<Periodic, SeasonalError> {
    match shoot(sm, &start.temperature, opts) {
        Ok(mut p) => {
            p.label.clone_from(&start.label);
            Ok(p)
        }
        Err(first) => {
            let mut t = start.temperature.clone();
            let years = opts.spin_up_years;
            let _ = spin_up(sm, &mut t, 1e-4, years);
            match shoot(sm, &t, opts) {
                Ok(mut p) => {
                    p.spun_up_years = years;
                    p.label.clone_from(&start.label);
                    Ok(p)
                }
                Err(SeasonalError::NotPeriodic {
                    residual,
                    iterations,
                    ..
                }) => Err(SeasonalError::NotPeriodic {
                    residual,
                    iterations,
                    note: format!(
                        " (shooting from the start failed: {first}; also after {years} years of spin-up)"
                    ),
                }),
                Err(e) => Err(e),
            }
        }
    }
}

/// Periodic climates from several starts.
#[derive(Clone, Debug)]
pub struct PeriodicSearch {
    /// Distinct periodic climates (max difference above 1e-6 K), warmest
    /// annual mean first.
    pub climates: Vec<Periodic>,
    /// Starts that failed, with the reason.
    pub failures: Vec<(String, SeasonalError)>,
}

/// Shoots from every start and keeps the distinct periodic climates.
pub fn find_periodic(
    sm: &mut SeasonalModel,
    starts: &[Start],
    opts: &ShootingOptions,
) -> PeriodicSearch {
    let mut climates: Vec<Periodic> = Vec::new();
    let mut failures = Vec::new();
    for s in starts {
        match periodic_from(sm, s, opts) {
            Ok(p) => {
                let dup = climates.iter().any(|o| {
                    o.start
                        .iter()
                        .zip(&p.start)
                        .all(|(a, b)| (a - b).abs() < 1e-6)
                });
                if !dup {
                    climates.push(p);
                }
            }
            Err(e) => failures.push((s.label.clone(), e)),
        }
    }
    let g = sm.model().grid.clone();
    climates.sort_by(|a, b| g.mean(&b.start).total_cmp(&g.mean(&a.start)));
    PeriodicSearch { climates, failures }
}

/// Latitudes (deg) of the edges of the polar ice: `north` is the
/// southernmost latitude of the ice connected to the North Pole (90 when the
/// pole is ice-free, -90 for a snowball), `south` the northernmost latitude
/// of the ice connected to the South Pole (-90 when ice-free, 90 for a
/// snowball).
pub fn polar_ice_edges(model: &Model, t: &[f64]) -> (f64, f64) {
    let iv = model.ice_intervals(t);
    let tiny = 1e-12;
    let north = match iv.last() {
        Some(&(a, b)) if b >= 1.0 - tiny => a.clamp(-1.0, 1.0).asin().to_degrees(),
        _ => 90.0,
    };
    let south = match iv.first() {
        Some(&(a, b)) if a <= -1.0 + tiny => b.clamp(-1.0, 1.0).asin().to_degrees(),
        _ => -90.0,
    };
    (north, south)
}

/// One periodic climate sampled through the year.
#[derive(Clone, Debug)]
pub struct Cycle {
    /// Year fraction of each sample, k/N, k = 0..N-1.
    pub times: Vec<f64>,
    /// Temperature per band at each sample (sample 0 is the start state,
    /// sample k ≥ 1 the state after step k-1), °C.
    pub states: Vec<Vec<f64>>,
    /// Global mean temperature per sample, °C.
    pub global_mean_c: Vec<f64>,
    /// Ice area fraction per sample.
    pub ice_area_fraction: Vec<f64>,
    /// Northern and southern polar ice edges per sample, deg ([`polar_ice_edges`]).
    pub ice_edges_deg: Vec<(f64, f64)>,
    /// Global net top-of-atmosphere flux per sample with the insolation of
    /// the step that ends there, W m-2.
    pub toa_net: Vec<f64>,
    /// Annual-mean temperature per band (mean of the samples), °C.
    pub annual_mean: Vec<f64>,
    /// Annual mean of the global net top-of-atmosphere flux, W m-2
    /// (zero for an exactly periodic backward-Euler cycle: Σ_k C (Tᵏ⁺¹ - Tᵏ) = 0).
    pub toa_annual_mean: f64,
    /// Largest minus smallest temperature over the year per band, K.
    pub amplitude: Vec<f64>,
}

impl Cycle {
    /// (day of year, fraction) of the smallest and of the largest ice area.
    pub fn ice_extremes(&self) -> ((f64, f64), (f64, f64)) {
        let mut lo = (0.0, f64::INFINITY);
        let mut hi = (0.0, f64::NEG_INFINITY);
        for (k, &f) in self.ice_area_fraction.iter().enumerate() {
            let day = self.times[k] * DAYS_PER_YEAR;
            if f < lo.1 {
                lo = (day, f);
            }
            if f > hi.1 {
                hi = (day, f);
            }
        }
        (lo, hi)
    }
}

/// Integrates one year from `u` and records the cycle (allocates; for
/// output). For a periodic `u` the year closes on itself.
pub fn cycle(sm: &mut SeasonalModel, u: &[f64]) -> Result<Cycle, SeasonalError> {
    let n = sm.len();
    let steps = sm.steps_per_year();
    let mut t = u.to_vec();
    let mut after: Vec<Vec<f64>> = Vec::with_capacity(steps);
    let mut toa = vec![0.0; steps];
    for k in 0..steps {
        sm.step(k, &mut t, false)?;
        toa[(k + 1) % steps] = sm.toa_net(k, &t);
        after.push(t.clone());
    }
    // sample 0 is u itself (≡ the state after the last step for a periodic u)
    let mut states = Vec::with_capacity(steps);
    states.push(u.to_vec());
    states.extend(after.into_iter().take(steps - 1));
    let model = sm.model().clone();
    let g = &model.grid;
    let mut annual = vec![0.0; n];
    let mut tmin = vec![f64::INFINITY; n];
    let mut tmax = vec![f64::NEG_INFINITY; n];
    for s in &states {
        for i in 0..n {
            annual[i] += s[i] / steps as f64;
            tmin[i] = tmin[i].min(s[i]);
            tmax[i] = tmax[i].max(s[i]);
        }
    }
    Ok(Cycle {
        times: (0..steps).map(|k| k as f64 / steps as f64).collect(),
        global_mean_c: states.iter().map(|s| g.mean(s)).collect(),
        ice_area_fraction: states.iter().map(|s| model.ice_area_fraction(s)).collect(),
        ice_edges_deg: states.iter().map(|s| polar_ice_edges(&model, s)).collect(),
        toa_annual_mean: toa.iter().sum::<f64>() / steps as f64,
        toa_net: toa,
        annual_mean: annual,
        amplitude: tmax.iter().zip(&tmin).map(|(a, b)| a - b).collect(),
        states,
    })
}

/// The seasonal model as a continuation problem: u is the state at the
/// northern spring equinox, the residual G(u) = u - Φ(u) (K), its Jacobian
/// I - M (dense LU), ∂G/∂p = -∂Φ/∂p (exact sensitivity, or a central
/// difference of Φ for obliquity, eccentricity and p2), stability from the
/// Floquet multipliers, and the label the ice topology of the annual-mean
/// profile. The monodromy matrix of the last factored point is reused for
/// its parameter derivative and multipliers.
pub struct SeasonalProblem {
    /// The seasonal model (its parameter is changed in place).
    pub sm: SeasonalModel,
    /// The varied parameter.
    pub param: Param,
    m: Vec<f64>,
    sens: Vec<f64>,
    phi: Vec<f64>,
    key: Option<(Vec<f64>, f64)>,
    lu: Option<faer::linalg::solvers::PartialPivLu<f64>>,
    annual: Vec<f64>,
    /// Annual maps computed (for the benchmark's bookkeeping).
    pub years_integrated: usize,
}

impl SeasonalProblem {
    /// Wraps `sm`, varying `param`.
    pub fn new(sm: SeasonalModel, param: Param) -> SeasonalProblem {
        let n = sm.len();
        SeasonalProblem {
            sm,
            param,
            m: vec![0.0; n * n],
            sens: vec![0.0; n],
            phi: vec![0.0; n],
            key: None,
            lu: None,
            annual: vec![0.0; n],
            years_integrated: 0,
        }
    }

    fn is_cached(&self, u: &[f64]) -> bool {
        let p = self.sm.param(self.param);
        matches!(&self.key, Some((ku, kp)) if *kp == p && ku.as_slice() == u)
    }

    /// Φ(u), M and (when exact) ∂Φ/∂p at u, cached.
    fn linearise(&mut self, u: &[f64]) -> Result<(), SeasonalError> {
        if self.is_cached(u) {
            return Ok(());
        }
        self.key = None;
        self.phi.copy_from_slice(u);
        let sens = if moves_insolation(self.param) {
            None
        } else {
            Some((self.param, self.sens.as_mut_slice()))
        };
        self.sm
            .year_with_jacobian(&mut self.phi, &mut self.m, sens)?;
        self.years_integrated += 1;
        if moves_insolation(self.param) {
            let p0 = self.sm.param(self.param);
            let h = 1e-6 * p0.abs().max(1.0);
            let mut a = u.to_vec();
            let mut b = u.to_vec();
            self.sm.set_param(self.param, p0 + h);
            let ra = self.sm.year(&mut a);
            self.sm.set_param(self.param, p0 - h);
            let rb = self.sm.year(&mut b);
            self.sm.set_param(self.param, p0);
            ra?;
            rb?;
            self.years_integrated += 2;
            for i in 0..u.len() {
                self.sens[i] = (a[i] - b[i]) / (2.0 * h);
            }
        }
        self.key = Some((u.to_vec(), self.sm.param(self.param)));
        Ok(())
    }
}

impl Problem for SeasonalProblem {
    fn dim(&self) -> usize {
        self.sm.len()
    }
    fn set_param(&mut self, p: f64) {
        if self.sm.param(self.param) != p {
            self.sm.set_param(self.param, p);
        }
    }
    fn residual(&mut self, u: &[f64], f: &mut [f64]) {
        if self.is_cached(u) {
            for i in 0..u.len() {
                f[i] = u[i] - self.phi[i];
            }
            return;
        }
        let mut t = u.to_vec();
        self.years_integrated += 1;
        match self.sm.year(&mut t) {
            Ok(()) => {
                for i in 0..u.len() {
                    f[i] = u[i] - t[i];
                }
            }
            Err(_) => f.fill(f64::NAN),
        }
    }
    fn factor(&mut self, u: &[f64], f: &mut [f64]) -> Result<(), Singular> {
        let n = u.len();
        if self.linearise(u).is_err() {
            f.fill(f64::NAN);
            return Err(Singular { row: 0 });
        }
        for i in 0..n {
            f[i] = u[i] - self.phi[i];
        }
        let m = &self.m;
        let a = faer::Mat::<f64>::from_fn(n, n, |r, c| f64::from(u8::from(r == c)) - m[r * n + c]);
        self.lu = Some(a.partial_piv_lu());
        Ok(())
    }
    fn solve(&self, b: &mut [f64]) {
        let n = b.len();
        let Some(lu) = &self.lu else {
            b.fill(f64::NAN);
            return;
        };
        let mut rhs = faer::Mat::<f64>::from_fn(n, 1, |i, _| b[i]);
        lu.solve_in_place(rhs.as_mut());
        for i in 0..n {
            b[i] = rhs[(i, 0)];
        }
    }
    fn jac_mul(&self, v: &[f64], y: &mut [f64]) {
        let n = v.len();
        for i in 0..n {
            let row = &self.m[i * n..(i + 1) * n];
            y[i] = v[i] - row.iter().zip(v).map(|(a, b)| a * b).sum::<f64>();
        }
    }
    fn d_param(&mut self, u: &[f64], out: &mut [f64]) {
        if self.linearise(u).is_err() {
            out.fill(f64::NAN);
            return;
        }
        for i in 0..u.len() {
            out[i] = -self.sens[i];
        }
    }
    fn unstable_modes(&mut self, u: &[f64]) -> usize {
        if self.linearise(u).is_err() {
            return usize::MAX;
        }
        floquet_multipliers(&self.m, u.len()).map_or(usize::MAX, |mu| count_unstable(&mu))
    }
    fn label(&mut self, u: &[f64]) -> u64 {
        let n = u.len();
        let steps = self.sm.steps_per_year() as f64;
        let mut t = u.to_vec();
        self.annual.fill(0.0);
        let annual = &mut self.annual;
        let ok = self
            .sm
            .year_with(&mut t, &mut |_, _, s| {
                for i in 0..n {
                    annual[i] += s[i] / steps;
                }
            })
            .is_ok();
        self.years_integrated += 1;
        if ok {
            self.sm.model().ice_topology(&self.annual)
        } else {
            u64::MAX
        }
    }
}

/// Seasonal continuation options.
#[derive(Clone, Copy, Debug)]
pub struct SeasonalTraceOptions {
    /// Seed parameter values (evenly spaced, ends included).
    pub seed_values: usize,
    /// Corrector tolerance on max |u - Φ(u)|, K.
    pub tolerance: f64,
    /// Shooting options for the seeds.
    pub shooting: ShootingOptions,
}

impl Default for SeasonalTraceOptions {
    fn default() -> Self {
        SeasonalTraceOptions {
            seed_values: 5,
            tolerance: 1e-9,
            shooting: ShootingOptions::default(),
        }
    }
}

fn near_branch(b: &Branch, u: &[f64], p: f64, width: f64) -> bool {
    b.points.windows(2).any(|w| {
        let (a, c) = (&w[0], &w[1]);
        let (lo, hi) = (a.p.min(c.p), a.p.max(c.p));
        if p < lo - 1e-9 * width || p > hi + 1e-9 * width {
            return false;
        }
        let f = if c.p != a.p {
            (p - a.p) / (c.p - a.p)
        } else {
            0.0
        };
        u.iter()
            .zip(a.u.iter().zip(&c.u))
            .all(|(x, (ua, uc))| (x - (ua + f * (uc - ua))).abs() < 0.5)
    }) || b.points.iter().any(|q| {
        (q.p - p).abs() < 1e-9 * width && q.u.iter().zip(u).all(|(a, b)| (a - b).abs() < 1e-6)
    })
}

/// A branch point as reported: its annual-mean profile and the diagnostics
/// of that profile under the annual-mean insolation.
fn seasonal_point(
    sm: &mut SeasonalModel,
    annual_model: &mut Model,
    param: Param,
    p: f64,
    u: &[f64],
    unstable: usize,
    residual: f64,
) -> TracedPoint {
    sm.set_param(param, p);
    annual_model.set_param(param, p);
    let temperature = match cycle(sm, u) {
        Ok(c) => c.annual_mean,
        Err(_) => u.to_vec(),
    };
    let diagnostics = diagnose(annual_model, &temperature);
    TracedPoint {
        p,
        temperature,
        diagnostics,
        unstable_modes: unstable,
        residual,
    }
}

/// Every branch of periodic climates of `sm` in `param` over [lo, hi], by
/// the generic [`Tracer`] through the annual map: seeds by shooting from
/// warm and cold starts at `seed_values` parameter values, each distinct
/// one continued. Points report the annual-mean profile (diagnosed under the
/// annual-mean insolation), the number of Floquet multipliers outside the
/// unit circle, and max |u - Φ(u)| (K) as the residual. Folds carry no jump
/// (`jump_to` is `None`); bistable windows are where two stable segments
/// overlap.
#[allow(clippy::too_many_arguments)]
pub fn trace_seasonal(
    sm: &SeasonalModel,
    param: Param,
    lo: f64,
    hi: f64,
    warm: f64,
    cold: f64,
    opts: &SeasonalTraceOptions,
    progress: &mut dyn FnMut(&str),
) -> Hysteresis {
    let n = sm.len();
    let mut failures = Vec::new();
    let mut seeds: Vec<(f64, Vec<f64>)> = Vec::new();
    let k = opts.seed_values.max(2);
    let mut work = sm.clone();
    for j in 0..k {
        let p = lo + (hi - lo) * j as f64 / (k - 1) as f64;
        work.set_param(param, p);
        let starts = crate::climate::standard_starts(n, warm, cold);
        let search = find_periodic(&mut work, &starts, &opts.shooting);
        for (label, e) in search.failures {
            failures.push(format!("seed `{label}` at {} = {p}: {e}", param.key()));
        }
        for c in search.climates {
            seeds.push((p, c.start));
        }
        progress(&format!("seasonal seeds at {} = {p:.6}", param.key()));
    }
    let settings = Settings {
        tolerance: opts.tolerance,
        ..Settings::for_range(lo, hi)
    };
    let mut problem = SeasonalProblem::new(sm.clone(), param);
    let mut raw: Vec<Branch> = Vec::new();
    for (p, u) in &seeds {
        if raw.iter().any(|b| near_branch(b, u, *p, (hi - lo).abs())) {
            continue;
        }
        let mut tracer = Tracer::new(&mut problem, settings);
        match tracer.trace(u, *p) {
            Ok(b) => {
                progress(&format!(
                    "seasonal branch {}: {} points, {} folds",
                    raw.len() + 1,
                    b.points.len(),
                    b.folds.len()
                ));
                raw.push(b);
            }
            Err(_) => failures.push(format!(
                "seed at {} = {p}: singular annual-map Jacobian, not continued",
                param.key()
            )),
        }
    }
    let mut work = sm.clone();
    let mut annual = sm.annual_model();
    let mut branches = Vec::new();
    for (id, b) in raw.into_iter().enumerate() {
        let points: Vec<TracedPoint> = b
            .points
            .iter()
            .map(|q| {
                seasonal_point(
                    &mut work,
                    &mut annual,
                    param,
                    q.p,
                    &q.u,
                    q.unstable_modes,
                    q.residual,
                )
            })
            .collect();
        let folds = b
            .folds
            .iter()
            .map(|f| Fold {
                point: seasonal_point(
                    &mut work,
                    &mut annual,
                    param,
                    f.point.p,
                    &f.point.u,
                    f.point.unstable_modes,
                    f.point.residual,
                ),
                after: f.after,
                // filled in below from the stable neighbour (lead's edit:
                // Fold gained `from_state`)
                from_state: crate::climate::State::Other,
                jump_to: None,
            })
            .collect();
        branches.push(TracedBranch {
            id: id + 1,
            points,
            folds,
            ends: b.ends.clone(),
        });
    }
    let bistable = crate::branches::bistable_windows(&branches, lo, hi);
    Hysteresis {
        param,
        range: (lo, hi),
        branches,
        bistable,
        failures,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::scenario::Scenario;

    #[test]
    fn rejects_symmetric_grid_and_bad_capacity() {
        let sc = Scenario::load(None, &["grid.symmetric=true".into()]).unwrap();
        assert!(matches!(
            SeasonalModel::from_scenario(&sc),
            Err(SeasonalError::Invalid(_))
        ));
        let mut m = Scenario::load(None, &[]).unwrap().model();
        m.planet.heat_capacity[3] = 0.0;
        assert!(SeasonalModel::new(m.clone(), 12).is_err());
        m.planet.heat_capacity[3] = f64::NAN;
        assert!(SeasonalModel::new(m, 12).is_err());
    }
}
