//! Sea-ice thermodynamics in the seasonal model: the surface enthalpy
//! formulation of Wagner & Eisenman (2015, J. Climate 28, 3998, section
//! 2b, their Table 1 for the parameters).
//!
//! **State.** The surface enthalpy E per band (W yr m-2): open water of
//! temperature T = T_m + E/c_w where E >= 0, sea ice of thickness
//! h = -E/L_f where E < 0 (c_w the mixed layer's heat capacity per area,
//! `seasons.mixed_layer_depth`; L_f the latent heat of fusion per volume
//! of ice; T_m the freezing point).
//!
//! **Energy.** ∂E/∂t = a(E) S(x, t) - L(T) + ∇·(D ∇T) + F_b + F (with moist
//! transport ∇·(D ∇h(T)), h the moist static energy of
//! [`crate::physics::humidity`], at the surface temperature), with the
//! ocean heat flux F_b from below everywhere, the radiative forcing F
//! (`radiation.forcing`, inside the OLR law's forcing together with CO2),
//! L(T) the OLR law, and the coalbedo a of open water or ice where E >= 0
//! or E < 0 (applied as the sub-grid step of [`crate::model::subgrid`] on
//! the profile θ = E/c_w with threshold 0, so the absorbed flux moves
//! continuously as the edge E = 0 crosses a band).
//!
//! **Surface temperature.** Open water: T = T_m + E/c_w. Ice: T = T_0 if
//! T_0 < T_m, else T_m (a melting surface), with T_0 from the balance of
//! the heat conducted up through the ice with the surface energy flux,
//!
//! k (T_m - T_0)/h = -[a S - L(T_0) + ∇·(D ∇T) + F],
//!
//! which holds ∇·(D ∇T) at the surface temperatures themselves: the
//! equations of all bands are coupled. Wagner & Eisenman break that
//! coupling with a ghost layer of small heat capacity (their appendix);
//! icefold instead solves each implicit time step for all surface
//! temperatures at once, which needs no ghost layer:
//!
//! **Time step** (backward Euler, albedo from the state at the start of
//! the step). With G_i(T) = a_i(Eⁿ) S_i - L(T_i) + (∇·D∇T)_i (band means)
//! and Eᵢ(T) = Eⁿᵢ + Δt (G_i(T) + F_b), the step solves, per band,
//!
//! r_i(T) = T_i - T_m - max(E_i, 0)/c_w - min(0, G_i) max(0, -E_i)/(k L_f) = 0
//!
//! by Newton (tridiagonal: ∂r_i/∂T_j = δ_ij - c_i ∂G_i/∂T_j, whose transport
//! part is that of [`Transport::add_divergence`], times h'(T_j) for moist
//! transport; c_i = Δt/c_w
//! over open water, (h_i - Δt G_i/L_f)/k over freezing ice, 0 over melting
//! ice); then Eⁿ⁺¹ = E(T). The three regimes meet continuously: as E -> 0
//! from below h -> 0 and T -> T_m, as from above. Because the step is
//! solved exactly, its derivative is exact:
//!
//! ∂Eⁿ⁺¹/∂Eⁿ = I + Δt (G_T X + G_E), X = ∂T/∂Eⁿ = -R_T⁻¹ (diag ρ - diag c G_E),
//!
//! R_T = I - diag(c) G_T, ρ_i = ∂r_i/∂E_i (-1/c_w open, G_i/(k L_f)
//! freezing, 0 melting), G_E = ∂(a S)/∂Eⁿ (the moving sub-grid edge).
//! The monodromy matrix is the product over the year (O(n²) per step).
//!
//! **Energy budget.** Over a periodic cycle Σ_k (Eᵏ⁺¹ - Eᵏ) = 0 per band,
//! so the annual and global mean of the net top-of-atmosphere flux plus
//! F_b is zero (the transport sums to zero over the globe).

use super::Param;
use super::seasonal::{SeasonalError, SeasonalModel};
use crate::numerics::linalg::Tridiagonal;
use crate::physics::radiation::Olr;
use crate::physics::transport::Transport;

mod tangent;
pub use tangent::YearTape;

/// Largest surface-temperature change of one Newton iteration of the
/// sea-ice step with moist transport, K.
const MOIST_STEP_K: f64 = 10.0;

/// Sea-ice parameters (Wagner & Eisenman 2015, Table 1).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SeaIce {
    /// Thermal conductivity of ice k, W m-1 K-1 (2).
    pub conductivity: f64,
    /// Latent heat of fusion per volume of ice L_f, W yr m-3 (9.5).
    pub latent_heat: f64,
    /// Ocean heat flux into the mixed layer from below F_b, W m-2 (4).
    pub ocean_heat_flux: f64,
    /// Freezing (and melting) point T_m, °C (0).
    pub freezing_point: f64,
    /// Whether the ice has its thermodynamics (latent heat and insulation).
    /// Without them the surface temperature is T_m + E/c_w also where
    /// E < 0: ice is then only an albedo over a mixed layer that cools
    /// below freezing, the model is the seasonal model with the albedo
    /// step at T_m (the limit of Wagner & Eisenman 2015 without sea-ice
    /// thermodynamics), and the ice has no thickness.
    pub thermodynamics: bool,
}

/// Workspaces of the sea-ice step (allocated once).
#[derive(Clone, Debug)]
pub(crate) struct SeaIceWork {
    pub(crate) ice: SeaIce,
    /// Surface temperature after the last step, °C.
    pub(crate) surface: Vec<f64>,
    theta: Vec<f64>,
    absorbed: Vec<f64>,
    g: Vec<f64>,
    e: Vec<f64>,
    r: Vec<f64>,
    c: Vec<f64>,
    rho: Vec<f64>,
    dt_vec: Vec<f64>,
    /// ∂(a S)/∂θ of the band means (θ = E/c_w), tridiagonal.
    jac_a: Tridiagonal,
    /// ∂G/∂T: -L'(T) and the transport.
    jac_g: Tridiagonal,
    /// R_T = I - diag(c) G_T (factored after a step).
    rt: Tridiagonal,
    /// Scratch n x n for the monodromy update.
    y: Vec<f64>,
    x: Vec<f64>,
    gp: Vec<f64>,
    ges: Vec<f64>,
    sn: Vec<f64>,
    /// Global means of the last step: net top-of-atmosphere flux, W m-2.
    pub(crate) last_toa: f64,
}

impl SeaIceWork {
    pub(crate) fn new(ice: SeaIce, n: usize) -> SeaIceWork {
        SeaIceWork {
            ice,
            surface: vec![ice.freezing_point; n],
            theta: vec![0.0; n],
            absorbed: vec![0.0; n],
            g: vec![0.0; n],
            e: vec![0.0; n],
            r: vec![0.0; n],
            c: vec![0.0; n],
            rho: vec![0.0; n],
            dt_vec: vec![0.0; n],
            jac_a: Tridiagonal::new(n),
            jac_g: Tridiagonal::new(n),
            rt: Tridiagonal::new(n),
            y: Vec::new(),
            x: Vec::new(),
            gp: vec![0.0; n],
            ges: vec![0.0; n],
            sn: vec![0.0; n],
            last_toa: 0.0,
        }
    }
}

/// Which of the three surface regimes a band is in.
#[derive(Clone, Copy, Debug, PartialEq)]
enum Regime {
    Open,
    Freezing,
    Melting,
}

impl SeasonalModel {
    /// Checks the model can carry sea ice: diffusive (dry or moist) transport, a step or
    /// smooth albedo, an aquaplanet (no land).
    pub(crate) fn check_sea_ice(&self, ice: &SeaIce) -> Result<(), SeasonalError> {
        let m = self.model();
        if let Transport::Relaxation { .. } = m.planet.transport {
            return Err(SeasonalError::Invalid(
                "`transport.kind` = \"relaxation\": sea ice needs \"diffusive\" or \"moist\" (the surface balance holds the diffusive convergence)".into(),
            ));
        }
        let ok = |x: f64| x.is_finite() && x > 0.0;
        if !ok(ice.conductivity) || !ok(ice.latent_heat) || !ice.ocean_heat_flux.is_finite() {
            return Err(SeasonalError::Invalid(format!(
                "sea ice: conductivity {} and latent heat {} must be positive, the ocean heat flux {} finite",
                ice.conductivity, ice.latent_heat, ice.ocean_heat_flux
            )));
        }
        Ok(())
    }

    /// The unit of the state and of its periodicity residual: W yr m-2
    /// (the surface enthalpy E) with sea ice, K (temperature) without.
    pub fn state_unit(&self) -> &'static str {
        if self.has_sea_ice() { "W yr m-2" } else { "K" }
    }

    /// Whether the model carries sea-ice thermodynamics (then the state is
    /// the surface enthalpy E, W yr m-2, not temperature).
    pub fn has_sea_ice(&self) -> bool {
        self.sea_ice.is_some()
    }

    /// The sea-ice parameters, if any.
    pub fn sea_ice(&self) -> Option<SeaIce> {
        self.sea_ice.as_ref().map(|w| w.ice)
    }

    /// K of temperature per unit of the state: 1 without sea ice, the
    /// largest heat capacity c_w with it (E = c_w T); scales step limits
    /// given in K.
    pub fn state_per_kelvin(&self) -> f64 {
        match &self.sea_ice {
            None => 1.0,
            Some(_) => self
                .model()
                .planet
                .heat_capacity
                .iter()
                .fold(1.0f64, |m, c| m.max(*c)),
        }
    }

    /// The state of a temperature profile `t` (°C): `t` itself without sea
    /// ice; with it, E = c_w (T - T_m) (below the freezing point: ice of
    /// thickness c_w (T_m - T)/L_f).
    pub fn state_from_temperature(&self, t: &[f64]) -> Vec<f64> {
        match &self.sea_ice {
            None => t.to_vec(),
            Some(w) => t
                .iter()
                .zip(&self.model().planet.heat_capacity)
                .map(|(x, c)| c * (x - w.ice.freezing_point))
                .collect(),
        }
    }

    /// The surface temperature (°C) after the last step taken; without sea
    /// ice, `u` itself.
    pub fn surface_temperature<'a>(&'a self, u: &'a [f64]) -> &'a [f64] {
        match &self.sea_ice {
            None => u,
            Some(w) => &w.surface,
        }
    }

    /// Ice thickness h = max(0, -E)/L_f per band, m (zero without sea ice
    /// or without its thermodynamics, where ice is only an albedo).
    pub fn ice_thickness(&self, u: &[f64]) -> Vec<f64> {
        match &self.sea_ice {
            None => vec![0.0; u.len()],
            Some(w) if !w.ice.thermodynamics => vec![0.0; u.len()],
            Some(w) => u
                .iter()
                .map(|e| (-e).max(0.0) / w.ice.latent_heat)
                .collect(),
        }
    }

    /// The profile whose sign marks the ice for the model's diagnostics
    /// (ice area, edges, topology): E/c_w with threshold 0 with sea ice
    /// (the internal model's albedo threshold is 0), else T itself.
    pub fn ice_profile(&self, u: &[f64]) -> Vec<f64> {
        match &self.sea_ice {
            None => u.to_vec(),
            Some(_) => u
                .iter()
                .zip(&self.model().planet.heat_capacity)
                .map(|(e, c)| e / c)
                .collect(),
        }
    }

    /// One backward-Euler step k of the sea-ice model (module docs): `e`
    /// holds Eⁿ on entry and Eⁿ⁺¹ on exit; the surface temperatures are
    /// kept ([`SeasonalModel::surface_temperature`]). With `factor_at_end`
    /// the derivative terms at the solution are left in the workspace.
    /// Allocates nothing.
    pub(crate) fn step_sea_ice(&mut self, k: usize, e: &mut [f64]) -> Result<usize, SeasonalError> {
        let n = self.len();
        let dt = self.dt();
        self.use_step_insolation(k);
        let (tol, max_it) = (self.step_tolerance, self.max_step_iterations.max(60));
        let mut w = self.sea_ice.take().expect("sea ice");
        let result = (|| {
            let m = self.model();
            let flux = m.planet.orbit.flux;
            let cap = &m.planet.heat_capacity;
            let ice = w.ice;
            // absorbed flux from the albedo of Eⁿ (fixed during the step)
            w.jac_a.clear();
            for i in 0..n {
                w.theta[i] = e[i] / cap[i];
            }
            for i in 0..n {
                w.absorbed[i] = flux * m.absorbed_band(i, &w.theta, Some(&mut w.jac_a));
            }
            let olr = Olr {
                law: m.planet.olr,
                forcing: m.forcing(),
            };
            // initial guess: open water at its temperature, ice melting
            for i in 0..n {
                w.surface[i] = ice.freezing_point + e[i].max(0.0) / cap[i];
            }
            // (r = 0 is the dry law exactly, and is stepped as such)
            let moist = matches!(m.planet.transport, Transport::Moist { air, .. } if air.relative_humidity > 0.0);
            let mut err = f64::INFINITY;
            let mut last_step = f64::INFINITY;
            for it in 0..=max_it {
                // G(T), G_T
                w.jac_g.clear();
                for i in 0..n {
                    let (l, dl) = olr.value_and_slope(w.surface[i]);
                    w.g[i] = w.absorbed[i] - l;
                    w.jac_g.diag[i] = -dl;
                }
                m.planet.transport.add_divergence(
                    &m.grid,
                    &m.conductance,
                    &w.surface,
                    &mut w.g,
                    Some(&mut w.jac_g),
                );
                err = 0.0f64;
                for i in 0..n {
                    let (r, c, rho) = band_residual(&ice, cap[i], dt, e[i], w.surface[i], w.g[i]);
                    w.r[i] = r;
                    w.c[i] = c;
                    w.rho[i] = rho;
                    err = if r.is_nan() {
                        f64::NAN
                    } else {
                        err.max(r.abs())
                    };
                }
                if !err.is_finite() {
                    return Err(SeasonalError::NonFinite { step: k });
                }
                // R_T = I - diag(c) G_T
                for i in 0..n {
                    let c = w.c[i];
                    w.rt.diag[i] = 1.0 - c * w.jac_g.diag[i];
                    w.rt.lower[i] = -c * w.jac_g.lower[i];
                    w.rt.upper[i] = -c * w.jac_g.upper[i];
                }
                // converged, or the last correction was at rounding level
                // (thick ice scales r by G h / k)
                let scale = 1.0 + w.surface.iter().fold(0.0f64, |m, x| m.max(x.abs()));
                let done = err < tol || (last_step < 1e-13 * scale && err < 1e-7);
                if done || it == max_it {
                    if !done {
                        return Err(SeasonalError::StepFailed {
                            step: k,
                            residual: err,
                        });
                    }
                    w.rt.factor().map_err(|s| SeasonalError::Singular {
                        step: k,
                        row: s.row,
                    })?;
                    // Eⁿ⁺¹ and the step's budget
                    let mut toa = 0.0;
                    for i in 0..n {
                        let (l, _) = olr.value_and_slope(w.surface[i]);
                        toa += m.grid.weights[i] * (w.absorbed[i] - l);
                        w.e[i] = e[i] + dt * (w.g[i] + ice.ocean_heat_flux);
                    }
                    w.last_toa = toa;
                    e.copy_from_slice(&w.e);
                    return Ok(it);
                }
                w.rt.factor().map_err(|s| SeasonalError::Singular {
                    step: k,
                    row: s.row,
                })?;
                for i in 0..n {
                    w.dt_vec[i] = -w.r[i];
                }
                w.rt.solve(&mut w.dt_vec);
                // moist transport makes G exponential in T: Newton's first
                // steps from the melting-point guess can overshoot into
                // the hot range, so they are capped at MOIST_STEP_K (the
                // dry G is linear but for the OLR, and is left undamped)
                let big = w.dt_vec.iter().fold(0.0f64, |a, x| a.max(x.abs()));
                let damp = if moist && big > MOIST_STEP_K {
                    MOIST_STEP_K / big
                } else {
                    1.0
                };
                last_step = 0.0;
                for i in 0..n {
                    w.surface[i] += damp * w.dt_vec[i];
                    last_step = last_step.max((damp * w.dt_vec[i]).abs());
                }
            }
            Err(SeasonalError::StepFailed {
                step: k,
                residual: err,
            })
        })();
        self.sea_ice = Some(w);
        result
    }

    /// One year of the sea-ice model with the exact monodromy matrix
    /// M = ∂Φ/∂E (row-major n x n; module docs): per step
    /// Y = r_E B, X = -R_T⁻¹ Y, B += Δt (G_T X + G_E B). Allocates nothing
    /// after the first call.
    pub(crate) fn year_with_jacobian_sea_ice(
        &mut self,
        e: &mut [f64],
        monodromy: &mut [f64],
        mut sensitivity: Option<(Param, &mut [f64])>,
    ) -> Result<(), SeasonalError> {
        let n = self.len();
        let dt = self.dt();
        if let Some((p, s)) = sensitivity.as_mut() {
            if !sea_ice_exact(*p) {
                return Err(SeasonalError::Invalid(format!(
                    "the exact sensitivity of the sea-ice model does not cover {} (use a central difference of Φ)",
                    p.key()
                )));
            }
            s.fill(0.0);
        }
        monodromy.fill(0.0);
        for i in 0..n {
            monodromy[i * n + i] = 1.0;
        }
        self.year_mean.fill(0.0);
        let steps = self.steps_per_year() as f64;
        for k in 0..self.steps_per_year() {
            self.step_sea_ice(k, e)?;
            for (m, x) in self.year_mean.iter_mut().zip(e.iter()) {
                *m += x / steps;
            }
            let mut w = self.sea_ice.take().expect("sea ice");
            if let Some((p, s)) = sensitivity.as_mut() {
                // the extra column: x_s = -R_T⁻¹ (r_E s - c g_p),
                // s += Δt (G_T x_s + G_E s + g_p)
                let m = self.model();
                let cap = &m.planet.heat_capacity;
                for i in 0..n {
                    w.gp[i] = match p {
                        Param::Forcing => 1.0,
                        Param::OlrA => -1.0,
                        Param::OlrB => -w.surface[i],
                        Param::Co2 => 5.35 / m.planet.co2_ppm,
                        Param::Flux => w.absorbed[i] / m.planet.orbit.flux,
                        _ => 0.0,
                    };
                }
                if *p == Param::Diffusivity {
                    // the diffusive convergence (dry or moist) is linear in D
                    let unit = m.planet.transport.unit();
                    w.gp.fill(0.0);
                    unit.add_divergence(&m.grid, &m.conductance, &w.surface, &mut w.gp, None);
                }
                // G_E s (one column)
                ge_times(&w.jac_a, cap, s, &mut w.ges, n, 1);
                for i in 0..n {
                    w.dt_vec[i] = -(w.rho[i] * s[i] - w.c[i] * (w.ges[i] + w.gp[i]));
                }
                w.rt.solve(&mut w.dt_vec);
                for i in 0..n {
                    let mut v = w.jac_g.diag[i] * w.dt_vec[i] + w.ges[i] + w.gp[i];
                    if i > 0 {
                        v += w.jac_g.lower[i] * w.dt_vec[i - 1];
                    }
                    if i + 1 < n {
                        v += w.jac_g.upper[i] * w.dt_vec[i + 1];
                    }
                    w.sn[i] = s[i] + dt * v;
                }
                s.copy_from_slice(&w.sn);
            }
            let cap = &self.model().planet.heat_capacity;
            w.y.resize(n * n, 0.0);
            w.x.resize(n * n, 0.0);
            // G_E B into x (scratch), then Y = diag ρ B - diag c (G_E B)
            ge_times(&w.jac_a, cap, monodromy, &mut w.x, n, n);
            for i in 0..n {
                let (rho, c) = (w.rho[i], w.c[i]);
                for col in 0..n {
                    w.y[i * n + col] = rho * monodromy[i * n + col] - c * w.x[i * n + col];
                }
            }
            // Y += ... keep G_E B: it is needed again below; store it in y's
            // place after X is formed. X = -R_T⁻¹ Y column by column.
            for col in 0..n {
                for i in 0..n {
                    w.dt_vec[i] = -w.y[i * n + col];
                }
                w.rt.solve(&mut w.dt_vec);
                for i in 0..n {
                    w.y[i * n + col] = w.dt_vec[i];
                }
            }
            // now y = X and x = G_E B: B += Δt (G_T X + G_E B)
            for i in 0..n {
                let (gl, gd, gu) = (w.jac_g.lower[i], w.jac_g.diag[i], w.jac_g.upper[i]);
                for col in 0..n {
                    let mut v = gd * w.y[i * n + col] + w.x[i * n + col];
                    if i > 0 {
                        v += gl * w.y[(i - 1) * n + col];
                    }
                    if i + 1 < n {
                        v += gu * w.y[(i + 1) * n + col];
                    }
                    monodromy[i * n + col] += dt * v;
                }
            }
            self.sea_ice = Some(w);
        }
        Ok(())
    }
}

/// Whether the sea-ice model's annual map has an exact sensitivity in `p`
/// (the parameters entering G linearly, away from the albedo: F, A, B,
/// CO2, D, and the flux through the absorbed part).
pub fn sea_ice_exact(p: Param) -> bool {
    matches!(
        p,
        Param::Forcing | Param::OlrA | Param::OlrB | Param::Co2 | Param::Flux | Param::Diffusivity
    )
}

/// out = G_E B for the tridiagonal ∂(a S)/∂θ `ja` with θ = E/c_w (column j
/// scaled by 1/c_w(j)), B row-major n x `w` (the monodromy's n columns, or
/// the one column of a parameter sensitivity).
fn ge_times(ja: &Tridiagonal, cap: &[f64], b: &[f64], out: &mut [f64], n: usize, w: usize) {
    for i in 0..n {
        let (lo, di, up) = ge_entries(ja, cap, i);
        for col in 0..w {
            let mut v = di * b[i * w + col];
            if i > 0 {
                v += lo * b[(i - 1) * w + col];
            }
            if i + 1 < n {
                v += up * b[(i + 1) * w + col];
            }
            out[i * w + col] = v;
        }
    }
}

/// Row i of G_E = ∂(a S)/∂E: the entries (i, i-1), (i, i), (i, i+1) of
/// the tridiagonal ∂(a S)/∂θ `ja`, column j divided by c_w(j) (θ = E/c_w);
/// 0 outside the grid.
#[inline]
fn ge_entries(ja: &Tridiagonal, cap: &[f64], i: usize) -> (f64, f64, f64) {
    let n = cap.len();
    let lo = if i > 0 { ja.lower[i] / cap[i - 1] } else { 0.0 };
    let di = ja.diag[i] / cap[i];
    let up = if i + 1 < n {
        ja.upper[i] / cap[i + 1]
    } else {
        0.0
    };
    (lo, di, up)
}

/// r_i, c_i = -∂r_i/∂G_i (total, through E_i), ρ_i = ∂r_i/∂Eⁿ_i of one band
/// (module docs) at surface temperature `t` with G = `g`.
#[inline]
fn band_residual(ice: &SeaIce, cw: f64, dt: f64, e_old: f64, t: f64, g: f64) -> (f64, f64, f64) {
    let e = e_old + dt * (g + ice.ocean_heat_flux);
    let regime = if e >= 0.0 || !ice.thermodynamics {
        Regime::Open
    } else if g < 0.0 {
        Regime::Freezing
    } else {
        Regime::Melting
    };
    match regime {
        Regime::Open => (t - ice.freezing_point - e / cw, dt / cw, -1.0 / cw),
        Regime::Freezing => {
            let h = -e / ice.latent_heat;
            let kl = ice.conductivity * ice.latent_heat;
            (
                t - ice.freezing_point - g * h / ice.conductivity,
                (h - dt * g / ice.latent_heat) / ice.conductivity,
                g / kl,
            )
        }
        Regime::Melting => (t - ice.freezing_point, 0.0, 0.0),
    }
}
