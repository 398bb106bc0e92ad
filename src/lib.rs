//! icefold: every equilibrium climate of a zonal-mean energy-balance planet.
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
