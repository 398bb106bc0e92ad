//! Shooting for periodic climates: Newton on G(u) = u - Φ(u), with the
//! linear solve of each Newton step chosen by the model.
//!
//! - **Dense** (the seasonal model without sea ice): the year is
//!   integrated with its monodromy matrix M = ∂Φ/∂u
//!   ([`SeasonalModel::year_with_jacobian`]), (I - M) δ = -G by LU, and
//!   the Floquet multipliers are all eigenvalues of M.
//! - **Newton-Krylov** (the sea-ice model, whose dense monodromy costs
//!   about three years per Newton step): the year records its tangent map
//!   ([`SeasonalModel::year_taped`]), and (I - M) δ = -G is solved by GMRES
//!   ([`crate::numerics::krylov`]) with products M v from the record, to a
//!   relative residual η = min(10⁻³, max|G|) (an inexact Newton method,
//!   Dembo, Eisenstat & Steihaug 1982, SIAM J. Numer. Anal. 19, 400: η -> 0
//!   as G -> 0 keeps the convergence quadratic). M of a damped periodic
//!   climate has a quickly decaying spectrum, so GMRES needs few products
//!   (each O(n) per time step). The Floquet multipliers are the Ritz values
//!   of [`RITZ_STEPS`] Arnoldi steps on M at the periodic state: its leading
//!   multipliers, which decide stability (any |μ| > 1 is among them).
//!   Its Newton step is limited band by band, to a box |δ_i| <= r, instead
//!   of scaling the whole step (r starts at `band_step` K of enthalpy, c_w
//!   per K; it doubles after a full step that the box cut, and shrinks to
//!   the step taken after a shortened one, down to a tenth of the start:
//!   a trust region in the max norm): far from the periodic climate, a
//!   band of ice that melts at T_m all year has a multiplier near one (its
//!   thickness changes nothing in the year but itself), I - M is nearly
//!   singular there and the Newton step huge in those few bands alone;
//!   scaling the whole step down to them would throw away the other
//!   bands' step.

use super::periodic::{Periodic, ShootingOptions, count_unstable, floquet_multipliers};
use crate::model::seaice::YearTape;
use crate::model::seasonal::{SeasonalError, SeasonalModel};
use crate::numerics::krylov::Krylov;
use crate::numerics::newton::max_abs;

/// Arnoldi steps for the leading Floquet multipliers of the sea-ice model
/// (at most the number of bands).
pub const RITZ_STEPS: usize = 20;

/// The linearisation carried with each shooting year.
enum Linear {
    Dense {
        m: Vec<f64>,
    },
    Krylov {
        tape: Box<YearTape>,
        kr: Krylov,
        products: usize,
    },
}

impl Linear {
    fn for_model(sm: &SeasonalModel) -> Linear {
        let n = sm.len();
        if sm.has_sea_ice() {
            Linear::Krylov {
                tape: Box::new(YearTape::new(sm)),
                kr: Krylov::new(n, n.min(60)),
                products: 0,
            }
        } else {
            Linear::Dense {
                m: vec![0.0; n * n],
            }
        }
    }

    /// Products with the tangent year so far.
    fn products(&self) -> usize {
        match self {
            Linear::Dense { .. } => 0,
            Linear::Krylov { products, .. } => *products,
        }
    }

    /// Φ(u) in place, with the linearisation at u.
    fn year(&mut self, sm: &mut SeasonalModel, u: &mut [f64]) -> Result<(), SeasonalError> {
        match self {
            Linear::Dense { m } => sm.year_with_jacobian(u, m, None),
            Linear::Krylov { tape, .. } => sm.year_taped(u, tape),
        }
    }

    /// δ with (I - M) δ = -g; false if the solve failed.
    fn newton_direction(&mut self, g: &[f64], delta: &mut [f64]) -> bool {
        let n = g.len();
        match self {
            Linear::Dense { m } => {
                use faer::prelude::Solve;
                let a = faer::Mat::<f64>::from_fn(n, n, |r, c| {
                    f64::from(u8::from(r == c)) - m[r * n + c]
                });
                let lu = a.partial_piv_lu();
                let mut rhs = faer::Mat::<f64>::from_fn(n, 1, |i, _| -g[i]);
                lu.solve_in_place(rhs.as_mut());
                for (i, d) in delta.iter_mut().enumerate() {
                    *d = rhs[(i, 0)];
                }
            }
            Linear::Krylov { tape, kr, products } => {
                // (I - M)(-δ) = g: no negated copy of g
                let eta = max_abs(g).min(1e-3);
                let mut op = |v: &[f64], out: &mut [f64]| {
                    tape.apply(v, out);
                    for (o, x) in out.iter_mut().zip(v) {
                        *o = x - *o;
                    }
                };
                let rep = kr.gmres(&mut op, g, delta, eta);
                *products += rep.iterations;
                if !rep.relative_residual.is_finite() {
                    return false;
                }
                for d in delta.iter_mut() {
                    *d = -*d;
                }
            }
        }
        delta.iter().all(|d| d.is_finite())
    }

    /// Floquet multipliers at the last linearisation, largest modulus
    /// first (module docs).
    fn multipliers(&mut self, n: usize) -> Option<Vec<(f64, f64)>> {
        match self {
            Linear::Dense { m } => floquet_multipliers(m, n),
            Linear::Krylov { tape, kr, products } => {
                // a start with every component (a fixed pseudo-random
                // vector: the multipliers do not depend on it)
                let mut x: u64 = 0x9E37_79B9_7F4A_7C15;
                let start: Vec<f64> = (0..n)
                    .map(|_| {
                        x ^= x << 13;
                        x ^= x >> 7;
                        x ^= x << 17;
                        (x >> 11) as f64 / (1u64 << 53) as f64 - 0.5
                    })
                    .collect();
                let mut op = |v: &[f64], out: &mut [f64]| tape.apply(v, out);
                let (h, j, _) = kr.arnoldi(&mut op, &start, RITZ_STEPS.min(n));
                *products += j;
                if j == 0 {
                    return None;
                }
                floquet_multipliers(&h, j)
            }
        }
    }
}

/// Newton on G(u) = u - Φ(u) from `u0`: solve (I - M) δ = -G (module
/// docs: dense LU, or GMRES for the sea-ice model), cap max |δ| at
/// `max_step` (with sea ice: each |δ_i| within the box of the module
/// docs), backtrack (halving, at most 12 times) until ||G||₂
/// decreases. Returns the fixed point with its multipliers; fails with the
/// residual reached. Never returns a state that is not periodic to
/// `tolerance`.
pub fn shoot(
    sm: &mut SeasonalModel,
    u0: &[f64],
    opts: &ShootingOptions,
) -> Result<Periodic, SeasonalError> {
    let n = sm.len();
    let mut lin = Linear::for_model(sm);
    let mut u = u0.to_vec();
    let mut phi = vec![0.0; n];
    let mut g = vec![0.0; n];
    let mut delta = vec![0.0; n];
    let mut trial = vec![0.0; n];
    let mut res = f64::INFINITY;
    // Φ and its linearisation at u; each accepted trial below is
    // integrated with its linearisation right away, so no year is
    // integrated twice.
    phi.copy_from_slice(&u);
    lin.year(sm, &mut phi)?;
    let mut years = 1;
    let mut history: Vec<f64> = Vec::with_capacity(opts.max_iterations + 1);
    let (mut made, mut why) = (0, "");
    let mut radius = opts.band_step * sm.state_per_kelvin();
    let min_radius = 0.1 * radius;
    for iter in 0..=opts.max_iterations {
        made = iter;
        for i in 0..n {
            g[i] = u[i] - phi[i];
        }
        res = max_abs(&g);
        if res < opts.tolerance {
            let multipliers = lin.multipliers(n).ok_or_else(|| {
                SeasonalError::Invalid("the eigenvalue solve of the monodromy matrix failed".into())
            })?;
            return Ok(Periodic {
                start: u,
                residual: res,
                iterations: iter,
                spun_up_years: 0,
                shooting_years: years,
                tangent_products: lin.products(),
                unstable_modes: count_unstable(&multipliers),
                multipliers,
                label: String::new(),
            });
        }
        if iter == opts.max_iterations || !res.is_finite() {
            break;
        }
        // a stall: six iterations that did not halve the residual (Newton
        // is far from a fixed point of a kinked map; the caller spins up)
        history.push(res);
        if iter >= 6 && res > 0.5 * history[iter - 6] {
            why = " (stalled: six Newton iterations did not halve the residual)";
            break;
        }
        if !lin.newton_direction(&g, &mut delta) {
            break;
        }
        let mut lambda = 1.0;
        let mut clipped = false;
        if let Linear::Krylov { .. } = lin {
            // band by band, within the box radius (module docs)
            for d in delta.iter_mut() {
                clipped |= d.abs() > radius;
                *d = d.clamp(-radius, radius);
            }
        } else {
            // the whole step scaled to max |δ| <= max_step
            let big = max_abs(&delta);
            let cap = opts.max_step * sm.state_per_kelvin();
            if big > cap {
                lambda = cap / big;
            }
        }
        let g0: f64 = g.iter().map(|x| x * x).sum();
        let mut accepted = false;
        for attempt in 0..12 {
            for i in 0..n {
                trial[i] = u[i] + lambda * delta[i];
            }
            phi.copy_from_slice(&trial);
            // the full step is usually accepted: integrate it with its
            // linearisation; shorter trials first without
            years += 1;
            let ok = if attempt == 0 {
                lin.year(sm, &mut phi).is_ok()
            } else {
                sm.year(&mut phi).is_ok()
            };
            if ok {
                let g1: f64 = trial.iter().zip(&phi).map(|(a, b)| (a - b) * (a - b)).sum();
                if g1.is_finite()
                    && (g1 <= (1.0 - 1e-4 * lambda) * g0 || g1.sqrt() < opts.tolerance)
                {
                    if attempt > 0 {
                        phi.copy_from_slice(&trial);
                        lin.year(sm, &mut phi)?;
                        years += 1;
                    }
                    accepted = true;
                    // the box grows after a full clipped step, shrinks to
                    // the step taken after a shortened one
                    if attempt == 0 && clipped {
                        radius *= 2.0;
                    } else if attempt > 0 {
                        radius = (radius * lambda).max(min_radius);
                    }
                    break;
                }
            }
            lambda *= 0.5;
        }
        if !accepted {
            why = " (stalled: no step along the Newton direction reduced the residual)";
            break;
        }
        u.copy_from_slice(&trial);
    }
    Err(SeasonalError::NotPeriodic {
        residual: res,
        unit: sm.state_unit(),
        iterations: made,
        note: why.into(),
    })
}
