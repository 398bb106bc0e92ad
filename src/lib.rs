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
//! Architecture: physics laws ([`insolation`], [`albedo`], [`radiation`])
//! are small and pure; [`model::Model`] assembles them into the residual
//! F(T; p) and its tridiagonal Jacobian; [`solve`] and [`continuation`]
//! know nothing about physics; [`branches`], [`sweep`], [`foldcurve`] and
//! [`seasons`] build the researcher's questions on top; [`scenario`] reads
//! TOML; [`export`], [`netcdf`] and [`plot`] only read results.
//!
//! ```
//! use icefold::climate::{State, find_equilibria, standard_starts};
//! use icefold::scenario::Scenario;
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

pub mod albedo;
pub mod branches;
pub mod cli;
pub mod cli_map;
pub mod cli_seasons;
pub mod cli_trace;
pub mod climate;
pub mod continuation;
pub mod export;
pub mod foldcurve;
pub mod grid;
pub mod insolation;
pub mod linalg;
pub mod model;
pub mod netcdf;
pub mod orbit;
pub mod plot;
pub mod quad;
pub mod radiation;
pub mod scenario;
pub mod seasons;
pub mod solve;
pub mod sweep;
