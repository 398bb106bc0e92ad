//! Numerics that know nothing about physics: quadrature, the finite-volume
//! grid, tridiagonal (and rank-one-bordered) solvers, Newton's method and
//! pseudo-arclength continuation over a generic [`continuation::Problem`].

pub mod batch;
pub mod continuation;
pub mod grid;
pub mod krylov;
pub mod linalg;
pub mod newton;
pub mod quad;
