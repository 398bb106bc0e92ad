//! The fast-slow system integrated in time, independently of the tracer:
//! backward Euler on
//!
//! ```text
//! C dT/dt = F(T; P),   dP/dt = k (V - W(T, P))
//! ```
//!
//! with steps of thousands of years. Each step solves both equations at
//! the new time level, (T, P)ⁿ⁺¹:
//!
//! ```text
//! G(T) = F(T; P) - C (T - Tⁿ)/Δt = 0                (fast, implicit)
//! g(P) = P - Pⁿ - Δt k (V - W(T(P), P)) = 0         (slow, implicit)
//! ```
//!
//! The fast part is solved implicitly at each trial P by the existing
//! Newton with the tridiagonal Jacobian (C/Δt on its diagonal); the slow
//! equation is a scalar root of g in ln P, bracketed and found by Illinois
//! regula falsi (a Schur-complement elimination of T). The steps never
//! resolve the fast time scale: with Δt of order 1e3-1e4 years, C/Δt is
//! about 1e-3 W m-2 K-1 against a radiative damping of about 2, so the fast
//! climate lands on its equilibrium every step. Where the continued root
//! does not exist (CO2 has passed a fold) the step is solved again from
//! the opposite climate (uniform cold start from an open planet, warm start
//! from a snowball): the implicit step then jumps, as the planet does.
//! The jump between two branches of the system with several roots is the
//! one step's choice of root; it is exact up to O(Δt) in the time of the
//! jump.

use crate::model::climate::below_absolute_zero;
use crate::model::{Model, Param};
use crate::numerics::linalg::Tridiagonal;
use crate::numerics::newton::{NewtonOptions, Steady, Workspace, newton};
use crate::physics::weathering::{PPM_PER_YEAR_PER_BAR_GYR, Weathering};

use super::thermostat::weathering_of;

/// Options of the coupled integration.
#[derive(Clone, Copy, Debug)]
pub struct CoupledOptions {
    /// Step, years.
    pub step_yr: f64,
    /// Newton options of the fast solves.
    pub newton: NewtonOptions,
    /// Uniform temperature of the warm start, °C.
    pub warm_c: f64,
    /// Uniform temperature of the cold start, °C.
    pub cold_c: f64,
}

impl Default for CoupledOptions {
    fn default() -> Self {
        CoupledOptions {
            step_yr: 2000.0,
            newton: NewtonOptions::default(),
            warm_c: 30.0,
            cold_c: -60.0,
        }
    }
}

/// Why a step failed.
#[derive(Debug, Clone, thiserror::Error, PartialEq)]
pub enum CoupledError {
    /// Neither the continued climate nor the opposite one gives a root.
    #[error(
        "backward Euler step from CO2 = {co2_ppm} ppm at t = {time_yr} yr found no root of the CO2 budget"
    )]
    NoRoot {
        /// CO2 at the start of the step, ppm.
        co2_ppm: f64,
        /// Time, years.
        time_yr: f64,
    },
    /// The state left the physical range.
    #[error("the state at t = {time_yr} yr lies below absolute zero: not a climate")]
    Unphysical {
        /// Time, years.
        time_yr: f64,
    },
}

/// The state of the coupled system.
#[derive(Clone, Debug)]
pub struct CoupledState {
    /// Time, years.
    pub time_yr: f64,
    /// Temperature per band, °C.
    pub temperature: Vec<f64>,
    /// CO2, ppm.
    pub co2_ppm: f64,
}

/// G(T) = F(T) - C (T - Tⁿ)/Δt as a steady problem for Newton.
struct Implicit<'a> {
    model: &'a Model,
    old: &'a [f64],
    c_dt: f64,
}

impl Steady for Implicit<'_> {
    fn len(&self) -> usize {
        self.model.len()
    }
    fn evaluate(&self, t: &[f64], f: &mut [f64], mut jac: Option<&mut Tridiagonal>) {
        self.model.evaluate(t, f, jac.as_deref_mut());
        let cap = &self.model.planet.heat_capacity;
        for i in 0..t.len() {
            f[i] -= cap[i] * self.c_dt * (t[i] - self.old[i]);
        }
        if let Some(j) = jac {
            for i in 0..t.len() {
                j.diag[i] -= cap[i] * self.c_dt;
            }
        }
    }
    fn new_jacobian(&self) -> Tridiagonal {
        self.model.new_jacobian()
    }
    fn heat_capacity(&self) -> &[f64] {
        &self.model.planet.heat_capacity
    }
}

/// The backward-Euler integrator: a workspace allocated once, reused by
/// every step.
pub struct Coupled {
    model: Model,
    law: Weathering,
    outgassing: f64,
    opts: CoupledOptions,
    ws: Workspace,
    old: Vec<f64>,
    trial: Vec<f64>,
    best: Vec<f64>,
    start: Vec<f64>,
    /// Fast (Newton) solves made so far.
    pub fast_solves: usize,
}

impl Coupled {
    /// An integrator of `model` with weathering `law` and outgassing V
    /// (bar Gyr-1).
    pub fn new(model: &Model, law: Weathering, outgassing: f64, opts: CoupledOptions) -> Coupled {
        let n = model.len();
        Coupled {
            ws: Workspace::new(model),
            model: model.clone(),
            law,
            outgassing,
            opts,
            old: vec![0.0; n],
            trial: vec![0.0; n],
            best: vec![0.0; n],
            start: vec![0.0; n],
            fast_solves: 0,
        }
    }

    /// The fast climate at CO2 e^x from `self.start` into `self.trial`, and
    /// g there; `None` when Newton fails.
    fn g(&mut self, x: f64, p_old: f64) -> Option<f64> {
        let p = x.exp();
        self.model.set_param(Param::Co2, p);
        self.trial.copy_from_slice(&self.start);
        self.fast_solves += 1;
        let imp = Implicit {
            model: &self.model,
            old: &self.old,
            c_dt: 1.0 / self.opts.step_yr,
        };
        newton(&imp, &mut self.trial, &self.opts.newton, &mut self.ws).ok()?;
        let w = weathering_of(&self.model, &self.law, &self.trial, p);
        Some(p - p_old - self.opts.step_yr * PPM_PER_YEAR_PER_BAR_GYR * (self.outgassing - w))
    }

    /// Solves one step with the fast climate continued from `self.start`;
    /// the new temperature in `self.best`, returns the new CO2.
    fn attempt(&mut self, p_old: f64) -> Option<f64> {
        let (lo, hi) = Param::Co2.range();
        let (xlo, xhi) = (lo.ln(), hi.ln());
        let x0 = p_old.ln();
        let g0 = self.g(x0, p_old)?;
        self.best.copy_from_slice(&self.trial);
        if g0 == 0.0 {
            return Some(p_old);
        }
        // bracket: from the explicit guess outward in ln P
        let dir = if g0 < 0.0 { 1.0 } else { -1.0 };
        let guess = p_old - g0;
        let mut d = if guess > 0.0 {
            (guess.ln() - x0).abs().max(1e-9)
        } else {
            1.0
        };
        let (mut xa, mut fa) = (x0, g0);
        let (mut xb, mut fb);
        loop {
            xb = (x0 + dir * d).clamp(xlo, xhi);
            fb = self.g(xb, p_old)?;
            if fb * fa <= 0.0 {
                break;
            }
            if xb == xlo || xb == xhi {
                return None;
            }
            (xa, fa) = (xb, fb);
            d *= 2.0;
        }
        // Illinois regula falsi
        let mut side = 0;
        let mut x = xb;
        let mut f = fb;
        self.best.copy_from_slice(&self.trial);
        for _ in 0..100 {
            if f.abs() <= 1e-12 * p_old.max(1.0) || (xb - xa).abs() < 1e-15 {
                break;
            }
            x = if fb != fa {
                xb - fb * (xb - xa) / (fb - fa)
            } else {
                0.5 * (xa + xb)
            };
            f = self.g(x, p_old)?;
            self.best.copy_from_slice(&self.trial);
            if f * fb < 0.0 {
                (xa, fa) = (xb, fb);
                side = 0;
            } else {
                side += 1;
                if side >= 2 {
                    fa *= 0.5;
                }
            }
            (xb, fb) = (x, f);
        }
        // a root, not the jump of g at a fold
        (f.abs() <= 1e-8 * p_old.max(1.0)).then(|| x.exp())
    }

    /// One backward-Euler step of `state`. Allocates nothing.
    pub fn step(&mut self, state: &mut CoupledState) -> Result<(), CoupledError> {
        self.old.copy_from_slice(&state.temperature);
        self.start.copy_from_slice(&state.temperature);
        let mut p = self.attempt(state.co2_ppm);
        if p.is_none() {
            // the continued climate is gone: the opposite one
            let (open, _) = self.model.open_surface(&state.temperature);
            let t0 = if open > 0.0 {
                self.opts.cold_c
            } else {
                self.opts.warm_c
            };
            self.start.fill(t0);
            p = self.attempt(state.co2_ppm);
        }
        let Some(p) = p else {
            return Err(CoupledError::NoRoot {
                co2_ppm: state.co2_ppm,
                time_yr: state.time_yr,
            });
        };
        state.temperature.copy_from_slice(&self.best);
        state.co2_ppm = p;
        state.time_yr += self.opts.step_yr;
        if below_absolute_zero(&self.model, &state.temperature).is_some() {
            return Err(CoupledError::Unphysical {
                time_yr: state.time_yr,
            });
        }
        Ok(())
    }

    /// The model at the CO2 of the last trial (for diagnostics of a state
    /// just stepped).
    pub fn model(&self) -> &Model {
        &self.model
    }

    /// W of `state`, bar Gyr-1.
    pub fn weathering(&mut self, state: &CoupledState) -> f64 {
        self.model.set_param(Param::Co2, state.co2_ppm);
        weathering_of(&self.model, &self.law, &state.temperature, state.co2_ppm)
    }
}
