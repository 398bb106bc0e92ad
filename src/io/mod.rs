//! Input and output: bounded reading of input files ([`input`]), the scenario schema and its validation ([`scenario`],
//! [`schema`]), tables and staged output sets ([`export`]), publishing an
//! output directory in one step ([`publish`]), CF NetCDF ([`netcdf`]) and
//! figures ([`plot`]). Output modules only read results.

pub mod export;
pub mod input;
pub mod netcdf;
pub mod plot;
pub mod publish;
pub mod scenario;
pub mod schema;
