//! Models: the physics laws assembled into residuals on the grid.
//!
//! - [`annual`]: the annual-mean residual F(T; p) and its tridiagonal Jacobian.
//! - [`subgrid`]: the sub-grid ice edge of the step albedo.
//! - [`climate`]: diagnostics of a state, state classes, equilibria from starts.
//! - [`habitability`]: the habitable fraction of the surface.
//! - [`seasonal`]: the seasonal model, stepped implicitly through the year.

pub mod annual;
pub mod climate;
pub mod edges;
pub mod habitability;
pub mod seaice;
pub mod seasonal;
pub mod subgrid;
pub mod topology;

pub use crate::physics::transport::Transport;
pub use annual::{BandFluxes, Model, Param, Planet, RELAXATION_RAMP_BANDS};
