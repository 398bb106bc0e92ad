//! Meridional heat transport as a finite-volume divergence on the bands.
//!
//! Diffusive (North 1975, J. Atmos. Sci. 32, 2033):
//! ∇·F = D d/dx[(1 - x²) dT/dx], discretised as
//! (1/Δx_i)[k_{i+1/2}(T_{i+1} - T_i) - k_{i-1/2}(T_i - T_{i-1})],
//! k = D (1 - x_f²)/(x_{i+1} - x_i), zero at the poles and, for a symmetric
//! hemisphere, at the equator; the area-weighted sum telescopes to zero.
//! Relaxation (Budyko 1969, Tellus 21, 611): ∇·F = γ (T̄ - T).
//! Moist diffusive (the diffusion of moist static energy, as in Hwang &
//! Frierson 2010, Geophys. Res. Lett. 37, L24807):
//! ∇·F = D d/dx[(1 - x²) dh/dx], h = T + (L_v r / c_p) q_s(T)
//! ([`crate::physics::humidity`]), discretised as the dry law with h in
//! place of T: (1/Δx_i)[D k_{i+1/2}(h_{i+1} - h_i) - D k_{i-1/2}(h_i - h_{i-1})].
//! Its Jacobian is tridiagonal too, column j multiplied by h'(T_j); it
//! telescopes to zero in the area-weighted sum like the dry law.

use crate::numerics::grid::Grid;
use crate::numerics::linalg::Tridiagonal;
pub use crate::physics::humidity::MoistAir;

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
    /// D d/dx[(1 - x²) dh/dx], h = T + (L_v r / c_p) q_s(T) the moist
    /// static energy per unit c_p in K, with diffusivity D in W m-2 K-1
    /// (Hwang & Frierson 2010). With r = 0 it is the diffusive law.
    Moist {
        /// D, W m-2 K-1.
        diffusivity: f64,
        /// The relative humidity r and surface pressure p that set h.
        air: MoistAir,
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
    /// with `conductance` k from [`conductances`]; moist: the same with
    /// h(T_j) in place of T_j, Jacobian entries times h'(T_j) of the column's
    /// band; relaxation: γ (T̄ - T),
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
                diffuse(grid, conductance, diffusivity, t, f, jac, |x| (x, 1.0))
            }
            Transport::Moist { diffusivity, air } => {
                diffuse(grid, conductance, diffusivity, t, f, jac, |x| {
                    air.energy_and_slope(x)
                })
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

    /// The diffusivity D of the diffusive and the moist law (`None` for
    /// relaxation).
    pub fn diffusivity(&self) -> Option<f64> {
        match *self {
            Transport::Diffusive { diffusivity } | Transport::Moist { diffusivity, .. } => {
                Some(diffusivity)
            }
            Transport::Relaxation { .. } => None,
        }
    }

    /// The same law with diffusivity (or rate) 1: ∇·F is linear in D (and
    /// γ), so this law's divergence is ∂(∇·F)/∂D.
    pub fn unit(&self) -> Transport {
        match *self {
            Transport::Diffusive { .. } => Transport::Diffusive { diffusivity: 1.0 },
            Transport::Moist { air, .. } => Transport::Moist {
                diffusivity: 1.0,
                air,
            },
            Transport::Relaxation { .. } => Transport::Relaxation { rate: 1.0 },
        }
    }

    /// The transported quantity and its slope at T: (T, 1) for the
    /// diffusive and relaxation laws, (h(T), h'(T)) for the moist one.
    pub fn energy_and_slope(&self, t: f64) -> (f64, f64) {
        match *self {
            Transport::Moist { air, .. } => air.energy_and_slope(t),
            _ => (t, 1.0),
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

/// (1/Δx_i)[D k_{i+1/2}(h_{i+1} - h_i) - D k_{i-1/2}(h_i - h_{i-1})] added
/// to `f`, with (h_j, h'_j) = `energy(T_j)`, and its Jacobian: row i gets
/// D k/Δx_i times h'_{i±1} off the diagonal and -(D k_{i-1/2} + D k_{i+1/2})/Δx_i
/// times h'_i on it. h is evaluated once per band (a rolling window);
/// allocates nothing. With h = T and h' = 1 this is the dry law's
/// arithmetic exactly.
fn diffuse(
    grid: &Grid,
    conductance: &[f64],
    diffusivity: f64,
    t: &[f64],
    f: &mut [f64],
    mut jac: Option<&mut Tridiagonal>,
    energy: impl Fn(f64) -> (f64, f64),
) {
    let n = grid.len();
    if n == 0 {
        return;
    }
    let mut prev = (0.0, 0.0);
    let mut cur = energy(t[0]);
    for i in 0..n {
        let next = if i + 1 < n {
            energy(t[i + 1])
        } else {
            (0.0, 0.0)
        };
        let dx = grid.width(i);
        let kl = diffusivity * conductance[i] / dx;
        let kr = diffusivity * conductance[i + 1] / dx;
        let mut div = 0.0;
        if i > 0 {
            div -= kl * (cur.0 - prev.0);
        }
        if i + 1 < n {
            div += kr * (next.0 - cur.0);
        }
        f[i] += div;
        if let Some(j) = jac.as_deref_mut() {
            j.diag[i] -= (kl + kr) * cur.1;
            if i > 0 {
                j.lower[i] += kl * prev.1;
            }
            if i + 1 < n {
                j.upper[i] += kr * next.1;
            }
        }
        prev = cur;
        cur = next;
    }
}
