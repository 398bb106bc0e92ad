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
//! of [`crate::numerics::newton::implicit_step`]; one or two more drive the equations to
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
//! Periodic climates of this model (shooting, Floquet stability,
//! continuation) are in [`crate::analysis::periodic`].

use crate::model::{Model, Param};
use crate::numerics::batch::BatchLu;
use crate::numerics::newton::Workspace;
use crate::physics::insolation::{InsolationLaw, daily_mean};

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
    /// The state lies below absolute zero somewhere: not a climate.
    #[error(
        "the periodic state reached lies below absolute zero ({temperature_c:.6} C at latitude {latitude_deg:.4} deg at the start of the year): not a climate (the linear OLR law A + B T is far outside its validity)"
    )]
    Unphysical {
        /// Coldest temperature, °C.
        temperature_c: f64,
        /// Its latitude, deg.
        latitude_deg: f64,
    },
    /// Temperatures left the finite numbers.
    #[error("the temperature became NaN or infinite at time step {step}")]
    NonFinite {
        /// Step index.
        step: usize,
    },
    /// Shooting (and the spin-up fallback) did not reach a periodic climate.
    #[error(
        "no periodic climate reached: max |u - Φ(u)| = {residual:e} {unit} after {iterations} Newton iterations{note}"
    )]
    NotPeriodic {
        /// Periodicity residual reached, in `unit`.
        residual: f64,
        /// The state's unit: K, or W yr m-2 for the sea-ice model's
        /// enthalpy.
        unit: &'static str,
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
/// of year fraction t (Kepler's equation, [`crate::physics::orbit::Orbit::position`]),
/// the integral by 4-point Gauss-Legendre per step. The Legendre law has no
/// seasons: every table is its annual mean. The idealised law of Wagner &
/// Eisenman (2015) is averaged exactly
/// ([`crate::physics::insolation::clipped_sine_integral`]).
pub fn insolation_tables(model: &Model, steps: usize) -> Vec<[f64; 3]> {
    let pts = model.insolation_sample_points();
    let halves = pts.len();
    let mut out = vec![[0.0; 3]; steps * halves];
    let planet = &model.planet;
    match planet.insolation {
        InsolationLaw::Legendre { .. } => {
            let mut unit = planet.orbit;
            unit.flux = 1.0;
            let ins = crate::physics::insolation::Insolation::new(unit, planet.insolation);
            for k in 0..steps {
                for (h, p) in pts.iter().enumerate() {
                    out[k * halves + h] = p.map(|x| ins.annual_mean(x));
                }
            }
        }
        InsolationLaw::Idealised { s1, s2 } => {
            // exact step averages of (1/4) max(0, a + c sin 2πt)
            let d = 2.0 * std::f64::consts::PI / steps as f64;
            for k in 0..steps {
                let (t1, t2) = (k as f64 * d, (k + 1) as f64 * d);
                for (h, p) in pts.iter().enumerate() {
                    out[k * halves + h] = p.map(|x| {
                        let a = 1.0 + s2 / 3.0 - s2 * x * x;
                        0.25 * crate::physics::insolation::clipped_sine_integral(a, s1 * x, t1, t2)
                            / d
                    });
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
    /// -C/Δt per band, the row scaling of a monodromy step.
    step_scale: Vec<f64>,
    /// C/Δt per band (the heat capacity and the step never change), for
    /// the diagonal of a step's matrix J - C/Δt.
    cap_over_dt: Vec<f64>,
    batch: BatchLu,
    /// Per step and half-band, the albedo integrals of the step's
    /// insolation ([`Model::half_integrals`]), so a step does not redo the
    /// quadrature.
    integrals: Vec<[f64; 3]>,
    /// The year mean of the state over the steps of the last
    /// [`SeasonalModel::year_with_jacobian`] (each step's end state / N).
    pub(crate) year_mean: Vec<f64>,
    /// Newton on each implicit step stops when
    /// max |Tⁿ⁺¹ - Tⁿ - Δt F(Tⁿ⁺¹)/C| is below this, K (default 1e-13).
    pub step_tolerance: f64,
    /// Newton iteration limit per step (default 30).
    pub max_step_iterations: usize,
    /// Sea-ice thermodynamics ([`crate::model::seaice`]): with it the
    /// state is the surface enthalpy E, W yr m-2.
    pub(crate) sea_ice: Option<crate::model::seaice::SeaIceWork>,
}

/// The largest of four partial maxima (NaNs ignored, as by `f64::max`).
#[inline]
fn max4(part: [f64; 4]) -> f64 {
    part[0].max(part[1]).max(part[2].max(part[3]))
}

/// max_i |v_i| by four interleaved partial maxima, NaNs ignored as by
/// `f64::max`: the value of the sequential maximum in any order.
#[inline]
fn max_abs4(v: &[f64]) -> f64 {
    let mut part = [0.0f64; 4];
    for (i, x) in v.iter().enumerate() {
        part[i & 3] = part[i & 3].max(x.abs());
    }
    max4(part)
}

/// Whether changing `p` changes the insolation tables.
pub(crate) fn moves_insolation(p: Param) -> bool {
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
        // Δt as SeasonalModel::dt computes it
        let dt = 1.0 / steps_per_year as f64;
        let cap_over_dt = model.planet.heat_capacity.iter().map(|c| c / dt).collect();
        let mut sm = SeasonalModel {
            model,
            steps: steps_per_year,
            halves,
            tables,
            ws,
            prev: vec![0.0; n],
            dfdp: vec![0.0; n],
            scratch: vec![0.0; n],
            step_scale: vec![0.0; n],
            cap_over_dt,
            batch: BatchLu::default(),
            integrals: Vec::new(),
            year_mean: vec![0.0; n],
            step_tolerance: 1e-13,
            max_step_iterations: 30,
            sea_ice: None,
        };
        sm.rebuild_integrals();
        Ok(sm)
    }

    /// Recomputes the per-step albedo integrals (after the tables or the
    /// albedo changed); leaves the model holding the last step's insolation.
    fn rebuild_integrals(&mut self) {
        self.integrals.clear();
        for k in 0..self.steps {
            let range = k * self.halves..(k + 1) * self.halves;
            self.model.set_unit_insolation(&self.tables[range]);
            self.integrals.extend(self.model.half_integrals());
        }
    }

    /// [`SeasonalModel::new`] with the sea-ice thermodynamics of Wagner &
    /// Eisenman (2015) ([`crate::model::seaice`]): the state becomes the
    /// surface enthalpy E (W yr m-2) and the surface is ice where E < 0
    /// (the albedo threshold is not used). Needs diffusive (dry or moist) transport.
    pub fn with_sea_ice(
        mut model: Model,
        steps_per_year: usize,
        ice: crate::model::seaice::SeaIce,
    ) -> Result<SeasonalModel, SeasonalError> {
        model.planet.albedo.threshold = 0.0;
        let n = model.len();
        let mut sm = SeasonalModel::new(model, steps_per_year)?;
        sm.check_sea_ice(&ice)?;
        sm.sea_ice = Some(crate::model::seaice::SeaIceWork::new(ice, n));
        Ok(sm)
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
        if moves_insolation(p) || matches!(p, Param::IceAlbedo | Param::OpenAlbedo) {
            self.rebuild_integrals();
        }
    }

    /// Feeds the insolation of step k to the model.
    pub fn use_step_insolation(&mut self, k: usize) {
        let k = k % self.steps;
        let range = k * self.halves..(k + 1) * self.halves;
        self.model
            .set_unit_insolation_with(&self.tables[range.clone()], &self.integrals[range]);
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
        if self.sea_ice.is_some() {
            return self.step_sea_ice(k, t);
        }
        let n = self.len();
        let dt = self.dt();
        self.use_step_insolation(k);
        self.prev.copy_from_slice(t);
        let mut last_step = f64::INFINITY;
        let mut err = f64::INFINITY;
        for it in 0..=self.max_step_iterations {
            self.model
                .evaluate(t, &mut self.ws.f, Some(&mut self.ws.jac));
            let cap = &self.model.planet.heat_capacity[..n];
            let (f, dx) = (&self.ws.f[..n], &mut self.ws.dx[..n]);
            let (diag, prev) = (&mut self.ws.jac.diag[..n], &self.prev[..n]);
            let cap_over_dt = &self.cap_over_dt[..n];
            // the maxima in four interleaved partial maxima (the same
            // value in any order, without one long chain of dependent
            // comparisons); a NaN anywhere makes err NaN
            let (mut part, mut nan) = ([0.0f64; 4], false);
            for i in 0..n {
                let r = cap[i] * (t[i] - prev[i]) / dt - f[i];
                dx[i] = r;
                let e = (r * dt / cap[i]).abs();
                nan |= e.is_nan();
                part[i & 3] = part[i & 3].max(e);
                diag[i] -= cap_over_dt[i];
            }
            err = if nan { f64::NAN } else { max4(part) };
            if !err.is_finite() {
                return Err(SeasonalError::NonFinite { step: k });
            }
            let scale = 1.0 + max_abs4(t);
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
            for (x, d) in t.iter_mut().zip(&self.ws.dx) {
                *x += d;
            }
            last_step = max_abs4(&self.ws.dx);
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
        if self.sea_ice.is_some() {
            return self.year_with_jacobian_sea_ice(t, monodromy, sensitivity);
        }
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
        self.year_mean.fill(0.0);
        for (s, c) in self
            .step_scale
            .iter_mut()
            .zip(&self.model.planet.heat_capacity)
        {
            *s = -c / dt;
        }
        let steps = self.steps as f64;
        for k in 0..self.steps {
            self.step(k, t, false)?;
            for (m, x) in self.year_mean.iter_mut().zip(t.iter()) {
                *m += x / steps;
            }
            // self.ws.jac holds J - C/Δt at Tⁿ⁺¹ (not factored)
            if let Some((p, _)) = sensitivity.as_ref() {
                self.model
                    .d_residual_d_param(*p, t, &mut self.dfdp, &mut self.scratch);
            } else {
                self.dfdp.fill(0.0);
            }
            // B ← (J - C/Δt)⁻¹ (-(C/Δt) B - ∂F/∂p e_wᵀ), the scaling done
            // row by row inside the solve
            self.batch
                .factor(&self.ws.jac)
                .map_err(|row| SeasonalError::Singular { step: k, row })?;
            self.batch.solve_scaled(&self.step_scale, &self.dfdp);
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

    /// The year mean of the state over the steps of the last
    /// [`SeasonalModel::year_with_jacobian`]: Σ_k u_k / N, u_k the state
    /// at the end of step k (accumulated in step order, so it equals the
    /// same sum taken with [`SeasonalModel::year_with`]).
    pub fn year_mean(&self) -> &[f64] {
        &self.year_mean
    }

    /// Global mean of the net top-of-atmosphere flux S(1 - α) - OLR of
    /// profile `t` under the insolation of step k, W m-2 (allocates).
    pub fn toa_net(&mut self, k: usize, t: &[f64]) -> f64 {
        if let Some(w) = &self.sea_ice {
            // the flux of the step just taken (albedo of its start state,
            // longwave of its end state)
            return w.last_toa;
        }
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::scenario::Scenario;

    #[test]
    fn rejects_symmetric_grid_and_bad_capacity() {
        let sc = Scenario::load(None, &["grid.symmetric=true".into()]).unwrap();
        assert!(matches!(
            sc.seasonal_model(),
            Err(SeasonalError::Invalid(_))
        ));
        let mut m = Scenario::load(None, &[]).unwrap().model();
        m.planet.heat_capacity[3] = 0.0;
        assert!(SeasonalModel::new(m.clone(), 12).is_err());
        m.planet.heat_capacity[3] = f64::NAN;
        assert!(SeasonalModel::new(m, 12).is_err());
    }

    /// The cached per-step albedo integrals are the quadrature redone at
    /// the step (bit for bit, also after an albedo or obliquity change),
    /// and the year mean kept by the Jacobian year is the one summed
    /// step by step by `year_with` (the continuation's ice labels rely on
    /// both). Common practice, no source.
    #[test]
    fn cached_step_integrals_and_year_mean_match_a_fresh_evaluation() {
        let sc = Scenario::load(
            None,
            &[
                "seasons.enabled=true".into(),
                "grid.bands=24".into(),
                "seasons.steps_per_year=12".into(),
            ],
        )
        .unwrap();
        let mut sm = sc.seasonal_model().unwrap();
        for (p, v) in [
            (None, 0.0),
            (Some(Param::IceAlbedo), 0.55),
            (Some(Param::Obliquity), 40.0),
        ] {
            if let Some(p) = p {
                sm.set_param(p, v);
            }
            for k in 0..sm.steps_per_year() {
                sm.use_step_insolation(k);
                let cached: Vec<[f64; 3]> = sm.model.half_integrals().collect();
                let mut fresh = sm.model.clone();
                fresh.set_unit_insolation(sm.table(k));
                let redone: Vec<[f64; 3]> = fresh.half_integrals().collect();
                assert_eq!(cached, redone, "step {k} after {p:?}");
            }
        }
        let n = sm.len();
        let mut a = vec![5.0; n];
        let mut b = a.clone();
        let mut m = vec![0.0; n * n];
        sm.year_with_jacobian(&mut a, &mut m, None).unwrap();
        let steps = sm.steps_per_year() as f64;
        let mut mean = vec![0.0; n];
        sm.year_with(&mut b, &mut |_, _, s| {
            for i in 0..n {
                mean[i] += s[i] / steps;
            }
        })
        .unwrap();
        assert_eq!(a, b);
        assert_eq!(sm.year_mean(), mean.as_slice());
        // not a constant: the mean differs from the end state
        assert!(mean.iter().zip(&a).any(|(x, y)| (x - y).abs() > 1e-3));
    }
}
