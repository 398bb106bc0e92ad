//! icefold: every equilibrium climate of a zonal-mean energy-balance planet.
#![warn(missing_docs)]

pub mod export;
pub mod netcdf;
pub mod plot;
