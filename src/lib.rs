//! icefold: every equilibrium climate of a zonal-mean energy-balance planet.
//!
//! The model, on latitude bands in x = sin(latitude) with T in °C:
//!
//! ```text
//! C dT/dt = S(x, t) (1 - α(T, x)) - OLR(T) + ∇·F(T)
//! ```
//!
//! with insolation from the orbit (Berger 1978) or its Legendre truncation
//! (North 1975), a step (Budyko 1969, sub-grid ice edge) or smooth albedo,
//! linear (Budyko 1969) or grey-body longwave emission with CO2 forcing
//! (Myhre et al. 1998), and diffusive (North 1975) or relaxation (Budyko
//! 1969) heat transport.
//!
//! Architecture, in layers whose dependencies point one way (down the list):
//!
//! - [`numerics`]: quadrature, the band grid, tridiagonal solvers, Newton,
//!   pseudo-arclength continuation; nothing here knows about physics.
//! - [`physics`]: the published laws (orbit, insolation, albedo, radiation,
//!   transport), small and pure.
//! - [`model`]: the laws assembled into the annual-mean residual F(T; p) and
//!   its tridiagonal Jacobian ([`Model`]), the seasonal model, diagnostics.
//! - [`analysis`]: every branch and fold ([`trace_all`]), regime maps
//!   ([`analysis::sweep`]), fold curves, periodic climates ([`find_periodic`]),
//!   the weathering thermostat and its limit cycles
//!   ([`analysis::thermostat`]).
//! - [`io`]: the scenario schema ([`Scenario`]), tables, NetCDF, figures;
//!   output modules only read results.
//! - [`cli`]: one file per command over a shared context.
//!
//! ```
//! use icefold::Scenario;
//! use icefold::model::climate::{State, find_equilibria, standard_starts};
//!
//! // The built-in present-day scenario is bistable: a climate with polar
//! // caps and a snowball (Budyko 1969; North 1975).
//! let model = Scenario::load(None, &[]).unwrap().model();
//! let found = find_equilibria(&model, &standard_starts(model.len(), 30.0, -60.0), &Default::default());
//! let states: Vec<State> = found.equilibria.iter().map(|e| e.diagnostics.state).collect();
//! assert_eq!(states, [State::PolarCaps, State::Snowball]);
//! // the present-day ice edge sits near 72 deg (North et al. 1981)
//! let edge = found.equilibria[0].diagnostics.ice_edges_deg[0];
//! assert!((edge - 71.5).abs() < 1.0, "{edge}");
//! ```
#![warn(missing_docs)]

pub mod analysis;
pub mod cli;
pub mod io;
pub mod model;
pub mod numerics;
pub mod physics;

pub use analysis::branches::{Hysteresis, TraceOptions, trace_all};
pub use analysis::periodic::find_periodic;
pub use io::scenario::{Scenario, ScenarioError};
pub use model::Model;
