//! Meridional heat transport as a finite-volume divergence on the bands.
//!
//! Diffusive (North 1975, J. Atmos. Sci. 32, 2033):
//! ∇·F = D d/dx[(1 - x²) dT/dx], discretised as
//! (1/Δx_i)[k_{i+1/2}(T_{i+1} - T_i) - k_{i-1/2}(T_i - T_{i-1})],
//! k = D (1 - x_f²)/(x_{i+1} - x_i), zero at the poles and, for a symmetric
//! hemisphere, at the equator; the area-weighted sum telescopes to zero.
//! Relaxation (Budyko 1969, Tellus 21, 611): ∇·F = γ (T̄ - T).

use crate::numerics::grid::Grid;
use crate::numerics::linalg::Tridiagonal;

/// Meridional heat transport law.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Transport {
    /// D d/dx[(1 - x²) dT/dx] with diffusivity D in W m-2 K-1 (North 1975).
    Diffusive {
        /// D, W m-2 K-1.
        diffusivity: f64,
    },
    /// γ (T̄ - T) with rate γ in W m-2 K-1 (Budyko 1969).
    Relaxation {
        /// γ, W m-2 K-1.
        rate: f64,
    },
}

/// Face conductances (1 - x_f²)/(x_i - x_{i-1}) of the diffusive law at the
/// n + 1 faces of `grid`: zero at the boundary faces (no flux through a pole
/// or, for a symmetric hemisphere, the equator).
pub fn conductances(grid: &Grid) -> Vec<f64> {
    let n = grid.len();
    let mut k = vec![0.0; n + 1];
    for f in 1..n {
        let xf = grid.faces[f];
        k[f] = (1.0 - xf * xf) / (grid.centres[f] - grid.centres[f - 1]);
    }
    k
}

impl Transport {
    /// Adds ∇·F(T) to `f` (and its Jacobian to `jac`, which must have the
    /// shape of [`Transport::new_jacobian`]). Diffusive:
    /// (1/Δx_i)[D k_{i+1/2}(T_{i+1} - T_i) - D k_{i-1/2}(T_i - T_{i-1})]
    /// with `conductance` k from [`conductances`]; relaxation: γ (T̄ - T),
    /// T̄ = Σ w_j T_j, whose Jacobian adds the rank-one term γ 1 wᵀ.
    /// Allocates nothing once `jac` has its rank-one buffers.
    pub fn add_divergence(
        &self,
        grid: &Grid,
        conductance: &[f64],
        t: &[f64],
        f: &mut [f64],
        jac: Option<&mut Tridiagonal>,
    ) {
        let n = grid.len();
        match *self {
            Transport::Diffusive { diffusivity } => {
                let mut jac = jac;
                for i in 0..n {
                    let dx = grid.width(i);
                    let kl = diffusivity * conductance[i] / dx;
                    let kr = diffusivity * conductance[i + 1] / dx;
                    let mut div = 0.0;
                    if i > 0 {
                        div -= kl * (t[i] - t[i - 1]);
                    }
                    if i + 1 < n {
                        div += kr * (t[i + 1] - t[i]);
                    }
                    f[i] += div;
                    if let Some(j) = jac.as_deref_mut() {
                        j.diag[i] -= kl + kr;
                        if i > 0 {
                            j.lower[i] += kl;
                        }
                        if i + 1 < n {
                            j.upper[i] += kr;
                        }
                    }
                }
            }
            Transport::Relaxation { rate } => {
                let tbar = grid.mean(t);
                for i in 0..n {
                    f[i] += rate * (tbar - t[i]);
                }
                if let Some(j) = jac {
                    for i in 0..n {
                        j.diag[i] -= rate;
                    }
                    match &mut j.rank_one {
                        Some((u, v)) => {
                            u.fill(rate);
                            v.copy_from_slice(&grid.weights);
                        }
                        None => j.rank_one = Some((vec![rate; n], grid.weights.clone())),
                    }
                }
            }
        }
    }

    /// A Jacobian of the right shape for this law on `n` bands (with the
    /// rank-one buffers of relaxation transport).
    pub fn new_jacobian(&self, n: usize) -> Tridiagonal {
        let mut j = Tridiagonal::new(n);
        if let Transport::Relaxation { .. } = self {
            j.rank_one = Some((vec![0.0; n], vec![0.0; n]));
        }
        j
    }
}
