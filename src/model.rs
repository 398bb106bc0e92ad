//! The annual-mean energy-balance model: residual F(T; p) and its Jacobian.
//!
//! On bands in x = sin(latitude), with T in °C:
//!
//! C dT/dt = F(T) = S(x)(1 - α(T, x)) - OLR(T) + ∇·F(T),
//!
//! band-averaged over each band (finite volumes). The pieces are
//! [`crate::insolation`], [`crate::albedo`], [`crate::radiation`] and the
//! transport below.
//!
//! **Sub-grid ice edge.** With the step albedo, T is taken piecewise linear
//! between band centres (linearly extrapolated in the outer half-bands) and
//! the surface is ice where that profile is below the threshold T_s. Each
//! half-band absorbs ∫ S(x)(1 - α(x)) dx over its open and its ice part, so
//! the absorbed flux, and with it the residual, is continuous in T and the
//! ice edge moves continuously with the parameters. Within a half-band S is
//! represented by its quadratic interpolant through the ends and the middle
//! (exact for the Legendre law), so the absorbed integrand is a polynomial
//! of degree <= 4 integrated exactly by 3-point Gauss-Legendre. If the edge
//! sits at x_r = x_a + θ (x_b - x_a), θ = (T_s - T_a)/(T_b - T_a), then
//! ∂x_r/∂T_a = (x_b - x_a)(θ - 1)/(T_b - T_a), ∂x_r/∂T_b = -(x_b - x_a) θ/(T_b - T_a),
//! and the absorbed flux of the band changes by ±S(x_r)(α_ice - α_open(x_r)) ∂x_r/∂T:
//! the Jacobian stays tridiagonal.
//!
//! **Transport.** Diffusive (North 1975, J. Atmos. Sci. 32, 2033):
//! ∇·F = D d/dx[(1 - x²) dT/dx], discretised as
//! (1/Δx_i)[k_{i+1/2}(T_{i+1} - T_i) - k_{i-1/2}(T_i - T_{i-1})],
//! k = D (1 - x_f²)/(x_{i+1} - x_i), zero at the poles and, for a symmetric
//! hemisphere, at the equator; the area-weighted sum telescopes to zero.
//! Relaxation (Budyko 1969): ∇·F = γ (T̄ - T), T̄ = Σ w_j T_j, whose Jacobian
//! adds the rank-one term γ 1 wᵀ.

use crate::albedo::{Albedo, AlbedoKind};
use crate::grid::Grid;
use crate::insolation::{Insolation, InsolationLaw};
use crate::linalg::Tridiagonal;
use crate::orbit::Orbit;
use crate::radiation::{Olr, OlrLaw, co2_forcing};

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

/// The physical parameters of a planet, independent of the grid.
#[derive(Clone, Debug, PartialEq)]
pub struct Planet {
    /// Orbit: flux S0, obliquity, eccentricity, perihelion.
    pub orbit: Orbit,
    /// Orbital (exact annual mean) or Legendre insolation.
    pub insolation: InsolationLaw,
    /// Albedo law.
    pub albedo: Albedo,
    /// Longwave law (its `forcing` is derived from the CO2 fields).
    pub olr: OlrLaw,
    /// CO2 concentration, ppm.
    pub co2_ppm: f64,
    /// Reference CO2 concentration for zero forcing, ppm.
    pub co2_ref_ppm: f64,
    /// Heat transport.
    pub transport: Transport,
    /// Heat capacity per band area, W yr m-2 K-1 (time in years).
    pub heat_capacity: Vec<f64>,
}

/// A parameter that continuation and sweeps may vary.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Param {
    /// `orbit.flux`, W m-2.
    Flux,
    /// `orbit.obliquity`, degrees.
    Obliquity,
    /// `orbit.eccentricity`.
    Eccentricity,
    /// `insolation.p2`.
    InsolationP2,
    /// `radiation.co2_ppm`, ppm.
    Co2,
    /// `radiation.a`, W m-2.
    OlrA,
    /// `radiation.b`, W m-2 K-1.
    OlrB,
    /// `radiation.emissivity`.
    Emissivity,
    /// `transport.diffusivity`, W m-2 K-1.
    Diffusivity,
    /// `transport.relaxation`, W m-2 K-1.
    Relaxation,
    /// `albedo.ice`.
    IceAlbedo,
    /// `albedo.open`.
    OpenAlbedo,
    /// `albedo.threshold`, °C.
    Threshold,
}

impl Param {
    /// Every parameter, in documentation order.
    pub const ALL: [Param; 13] = [
        Param::Flux,
        Param::Obliquity,
        Param::Eccentricity,
        Param::InsolationP2,
        Param::Co2,
        Param::OlrA,
        Param::OlrB,
        Param::Emissivity,
        Param::Diffusivity,
        Param::Relaxation,
        Param::IceAlbedo,
        Param::OpenAlbedo,
        Param::Threshold,
    ];

    /// The scenario key, e.g. `orbit.flux`.
    pub fn key(self) -> &'static str {
        match self {
            Param::Flux => "orbit.flux",
            Param::Obliquity => "orbit.obliquity",
            Param::Eccentricity => "orbit.eccentricity",
            Param::InsolationP2 => "insolation.p2",
            Param::Co2 => "radiation.co2_ppm",
            Param::OlrA => "radiation.a",
            Param::OlrB => "radiation.b",
            Param::Emissivity => "radiation.emissivity",
            Param::Diffusivity => "transport.diffusivity",
            Param::Relaxation => "transport.relaxation",
            Param::IceAlbedo => "albedo.ice",
            Param::OpenAlbedo => "albedo.open",
            Param::Threshold => "albedo.threshold",
        }
    }

    /// Unit of the parameter ("1" when dimensionless, UDUNITS style).
    pub fn unit(self) -> &'static str {
        match self {
            Param::Flux | Param::OlrA => "W m-2",
            Param::Obliquity => "degree",
            Param::Co2 => "ppm",
            Param::OlrB | Param::Diffusivity | Param::Relaxation => "W m-2 K-1",
            Param::Threshold => "degC",
            _ => "1",
        }
    }

    /// Parses a scenario key.
    pub fn from_key(key: &str) -> Option<Param> {
        Param::ALL.iter().copied().find(|p| p.key() == key)
    }

    /// Closed range of physically valid values (inclusive ends may be
    /// excluded where noted by `open_low`).
    pub fn range(self) -> (f64, f64) {
        match self {
            Param::Flux => (1e-6, 1e5),
            Param::Obliquity => (0.0, 180.0),
            Param::Eccentricity => (0.0, 0.9),
            Param::InsolationP2 => (-1.0, 2.0),
            Param::Co2 => (1e-3, 1e6),
            Param::OlrA => (-1e4, 1e4),
            Param::OlrB => (1e-6, 1e3),
            Param::Emissivity => (1e-6, 1.0),
            Param::Diffusivity => (0.0, 1e3),
            Param::Relaxation => (0.0, 1e3),
            Param::IceAlbedo => (0.0, 1.0),
            Param::OpenAlbedo => (0.0, 1.0),
            Param::Threshold => (-150.0, 100.0),
        }
    }
}

/// Per half-band tables: band i has halves 2i (left) and 2i + 1 (right).
#[derive(Clone, Copy, Debug, Default)]
struct HalfBand {
    lo: f64,
    hi: f64,
    /// Insolation per unit flux S/S0 at lo, middle and hi.
    s: [f64; 3],
    /// ∫ (S/S0)(1 - α_open) dx over the half-band.
    open: f64,
    /// ∫ (S/S0)(1 - α_ice) dx.
    ice: f64,
    /// ∫ S/S0 dx.
    insolation: f64,
}

/// Where the ice is inside one half-band.
#[derive(Clone, Copy, Debug, PartialEq)]
enum HalfIce {
    Open,
    Ice,
    /// Edge at `x`; `ice_above` when the ice lies at larger x.
    Edge {
        x: f64,
        ice_above: bool,
        a: usize,
        b: usize,
        dx_dta: f64,
        dx_dtb: f64,
    },
}

/// Area-weighted band fluxes of one temperature profile, W m-2.
#[derive(Clone, Debug, Default)]
pub struct BandFluxes {
    /// Insolation S.
    pub insolation: Vec<f64>,
    /// Absorbed S (1 - α).
    pub absorbed: Vec<f64>,
    /// Outgoing longwave.
    pub olr: Vec<f64>,
    /// Transport convergence ∇·F.
    pub transport: Vec<f64>,
}

/// A planet on a grid, ready to evaluate.
#[derive(Clone, Debug)]
pub struct Model {
    /// The bands.
    pub grid: Grid,
    /// The physics.
    pub planet: Planet,
    half: Vec<HalfBand>,
    /// (1 - x_f²)/(x_{i} - x_{i-1}) at interior faces, 0 at boundary faces.
    conductance: Vec<f64>,
    forcing: f64,
}

/// Width of the relaxation-transport edge ramp in band widths: the ramp
/// factor of a band of width Δx is κ = 1 + RELAXATION_RAMP_BANDS Δx, so the
/// ramp spans a few bands whatever the resolution and the convention of a
/// sharp edge (T_s at the mean of the two sides) is approached as bands
/// grow.
pub const RELAXATION_RAMP_BANDS: f64 = 25.0;

const GAUSS3: [(f64, f64); 3] = [
    (-0.774_596_669_241_483_4, 5.0 / 9.0),
    (0.0, 8.0 / 9.0),
    (0.774_596_669_241_483_4, 5.0 / 9.0),
];

impl Model {
    /// Builds the model; the planet's heat capacity must have one entry per band
    /// (or one entry, used for every band).
    pub fn new(grid: Grid, mut planet: Planet) -> Model {
        let n = grid.len();
        if planet.heat_capacity.len() != n {
            let c = planet.heat_capacity.first().copied().unwrap_or(1.0);
            planet.heat_capacity = vec![c; n];
        }
        let mut conductance = vec![0.0; n + 1];
        for f in 1..n {
            let xf = grid.faces[f];
            conductance[f] = (1.0 - xf * xf) / (grid.centres[f] - grid.centres[f - 1]);
        }
        let mut m = Model {
            half: vec![HalfBand::default(); 2 * n],
            conductance,
            forcing: 0.0,
            grid,
            planet,
        };
        m.rebuild_insolation();
        m.rebuild_forcing();
        m
    }

    /// Number of bands.
    pub fn len(&self) -> usize {
        self.grid.len()
    }

    /// True for a model without bands (never for a validated one).
    pub fn is_empty(&self) -> bool {
        self.grid.is_empty()
    }

    /// The annual-mean insolation law of this planet.
    pub fn insolation(&self) -> Insolation {
        Insolation::new(self.planet.orbit, self.planet.insolation)
    }

    fn rebuild_insolation(&mut self) {
        let mut unit = self.planet.orbit;
        unit.flux = 1.0;
        let ins = Insolation::new(unit, self.planet.insolation);
        let g = &self.grid;
        for i in 0..g.len() {
            let halves = [(g.faces[i], g.centres[i]), (g.centres[i], g.faces[i + 1])];
            for (k, (lo, hi)) in halves.into_iter().enumerate() {
                let h = &mut self.half[2 * i + k];
                h.lo = lo;
                h.hi = hi;
                h.s = [
                    ins.annual_mean(lo),
                    ins.annual_mean(0.5 * (lo + hi)),
                    ins.annual_mean(hi),
                ];
            }
        }
        self.rebuild_albedo();
    }

    /// The x positions at which the model samples insolation: for each
    /// half-band k (band i has halves 2i and 2i + 1) its low end, middle and
    /// high end. Used to feed instantaneous (daily) insolation.
    pub fn insolation_sample_points(&self) -> Vec<[f64; 3]> {
        self.half
            .iter()
            .map(|h| [h.lo, 0.5 * (h.lo + h.hi), h.hi])
            .collect()
    }

    /// Replaces the insolation the model absorbs by `samples` (per unit flux
    /// S/S0, at [`Model::insolation_sample_points`]), e.g. the daily-mean
    /// insolation of one time step of the seasonal cycle, and rebuilds the
    /// band integrals. O(bands); allocates nothing. A later change of an
    /// insolation parameter (obliquity, eccentricity, p2) restores the
    /// annual mean.
    pub fn set_unit_insolation(&mut self, samples: &[[f64; 3]]) {
        for (h, s) in self.half.iter_mut().zip(samples) {
            h.s = *s;
        }
        self.rebuild_albedo();
    }

    /// Restores the annual-mean insolation of the planet's orbit.
    pub fn restore_annual_insolation(&mut self) {
        self.rebuild_insolation();
    }

    fn rebuild_albedo(&mut self) {
        for k in 0..self.half.len() {
            let (lo, hi) = (self.half[k].lo, self.half[k].hi);
            let open = self.integral(k, lo, hi, false);
            let ice = self.integral(k, lo, hi, true);
            let ins = self.integrate_with(k, lo, hi, |_| 1.0);
            let h = &mut self.half[k];
            h.open = open;
            h.ice = ice;
            h.insolation = ins;
        }
    }

    fn rebuild_forcing(&mut self) {
        self.forcing = co2_forcing(self.planet.co2_ppm, self.planet.co2_ref_ppm);
    }

    /// S/S0 at x inside half-band k (quadratic interpolant).
    #[inline]
    fn unit_insolation(&self, k: usize, x: f64) -> f64 {
        let h = &self.half[k];
        let m = 0.5 * (h.lo + h.hi);
        let (a, b, c) = (h.lo, m, h.hi);
        h.s[0] * (x - b) * (x - c) / ((a - b) * (a - c))
            + h.s[1] * (x - a) * (x - c) / ((b - a) * (b - c))
            + h.s[2] * (x - a) * (x - b) / ((c - a) * (c - b))
    }

    #[inline]
    fn coalbedo(&self, x: f64, ice: bool) -> f64 {
        if ice {
            1.0 - self.planet.albedo.ice
        } else {
            1.0 - self.planet.albedo.open_at(x)
        }
    }

    #[inline]
    fn integrate_with(&self, k: usize, u: f64, v: f64, w: impl Fn(f64) -> f64) -> f64 {
        let (c, r) = (0.5 * (u + v), 0.5 * (v - u));
        GAUSS3
            .iter()
            .map(|(s, wt)| {
                let x = c + r * s;
                wt * self.unit_insolation(k, x) * w(x)
            })
            .sum::<f64>()
            * r
    }

    /// ∫_u^v (S/S0)(1 - α) dx in half-band k, over ice or open surface.
    #[inline]
    fn integral(&self, k: usize, u: f64, v: f64, ice: bool) -> f64 {
        self.integrate_with(k, u, v, |x| self.coalbedo(x, ice))
    }

    /// The band pair whose linear profile covers half-band k.
    ///
    /// Interior half-bands interpolate between neighbouring centres; the
    /// outermost half-bands extrapolate the nearest segment. On a full grid
    /// with an even number of bands the equator is a face, and by symmetry
    /// the two centres beside it have equal temperatures: interpolating
    /// between them would make the whole segment freeze at once when an
    /// equatorial belt forms. So the two half-bands touching the equator
    /// extrapolate from their own side instead, giving a V (or Λ) at the
    /// equator and an ice belt that grows continuously.
    #[inline]
    fn segment(&self, k: usize) -> (usize, usize) {
        let n = self.len();
        let i = k / 2;
        if !self.grid.symmetric && n.is_multiple_of(2) && n >= 4 {
            let c = n / 2;
            if k == 2 * (c - 1) + 1 {
                return (c - 2, c - 1);
            }
            if k == 2 * c {
                return (c, c + 1);
            }
        }
        if k.is_multiple_of(2) {
            if i == 0 { (0, 1) } else { (i - 1, i) }
        } else if i + 1 == n {
            (n - 2, n - 1)
        } else {
            (i, i + 1)
        }
    }

    /// Ice cover of half-band k under the piecewise-linear profile of `t`.
    #[inline]
    fn half_ice(&self, k: usize, t: &[f64]) -> HalfIce {
        let (a, b) = self.segment(k);
        let (xa, xb) = (self.grid.centres[a], self.grid.centres[b]);
        let (ta, tb) = (t[a], t[b]);
        let ts = self.planet.albedo.threshold;
        let h = &self.half[k];
        let slope = (tb - ta) / (xb - xa);
        let t_lo = ta + slope * (h.lo - xa);
        let t_hi = ta + slope * (h.hi - xa);
        match (t_lo < ts, t_hi < ts) {
            (false, false) => HalfIce::Open,
            (true, true) => HalfIce::Ice,
            (lo_ice, _) => {
                let dt = tb - ta;
                let theta = (ts - ta) / dt;
                let x = (xa + theta * (xb - xa)).clamp(h.lo, h.hi);
                HalfIce::Edge {
                    x,
                    ice_above: !lo_ice,
                    a,
                    b,
                    dx_dta: (xb - xa) * (theta - 1.0) / dt,
                    dx_dtb: -(xb - xa) * theta / dt,
                }
            }
        }
    }

    /// Ice fraction f and df/dT of band i under the relaxation edge ramp:
    /// f = clamp(1/2 + (T_s - T)/(κ J), 0, 1), J = S0 (open - ice)/Δx/(B + γ)
    /// the local temperature jump, κ = 1 + RELAXATION_RAMP_BANDS Δx.
    fn relaxation_ice_fraction(&self, i: usize, ti: f64) -> (f64, f64) {
        let flux = self.planet.orbit.flux;
        let dx = self.grid.width(i);
        let (open, ice) = (
            self.half[2 * i].open + self.half[2 * i + 1].open,
            self.half[2 * i].ice + self.half[2 * i + 1].ice,
        );
        let gamma = match self.planet.transport {
            Transport::Relaxation { rate } => rate,
            Transport::Diffusive { .. } => 0.0,
        };
        let olr = Olr {
            law: self.planet.olr,
            forcing: self.forcing,
        };
        let b = olr.value_and_slope(self.planet.albedo.threshold).1;
        let jump = flux * (open - ice) / dx / (b + gamma);
        let kappa = 1.0 + RELAXATION_RAMP_BANDS * dx;
        let (f, df) = if jump > 0.0 {
            let r = 0.5 + (self.planet.albedo.threshold - ti) / (kappa * jump);
            if r <= 0.0 {
                (0.0, 0.0)
            } else if r >= 1.0 {
                (1.0, 0.0)
            } else {
                (r, -1.0 / (kappa * jump))
            }
        } else {
            (
                if ti < self.planet.albedo.threshold {
                    1.0
                } else {
                    0.0
                },
                0.0,
            )
        };
        (f, df)
    }

    /// Absorbed flux per unit S0 in band i and its derivative terms. Adds
    /// the Jacobian entries (times `flux / Δx`) to `jac` when given.
    #[inline]
    fn absorbed_band(&self, i: usize, t: &[f64], mut jac: Option<&mut Tridiagonal>) -> f64 {
        let flux = self.planet.orbit.flux;
        let dx = self.grid.width(i);
        match self.planet.albedo.kind {
            AlbedoKind::Smooth { .. } => {
                let (open, ice) = (
                    self.half[2 * i].open + self.half[2 * i + 1].open,
                    self.half[2 * i].ice + self.half[2 * i + 1].ice,
                );
                let (f, df) = self.planet.albedo.ice_weight(t[i]);
                if let Some(j) = jac {
                    j.diag[i] += flux * (ice - open) * df / dx;
                }
                (open * (1.0 - f) + ice * f) / dx
            }
            AlbedoKind::Step if matches!(self.planet.transport, Transport::Relaxation { .. }) => {
                // Relaxation transport makes T jump at the edge by
                // J = S Δα/(B + γ), and the edge is fixed only by a
                // convention: T_s at the mean of the two sides (Budyko 1969;
                // Tung 2007). Ice fraction of the band
                // f = clamp(1/2 + (T_s - T)/(κ J), 0, 1), κ = 1 + 25 Δx:
                // at equilibrium f = 1/2 exactly where T_s is the mean of the
                // open and ice temperatures, and the edge is spread over a
                // (κ - 1)-wide range of that mean, so each band has one
                // equilibrium and the edge moves continuously.
                let (open, ice) = (
                    self.half[2 * i].open + self.half[2 * i + 1].open,
                    self.half[2 * i].ice + self.half[2 * i + 1].ice,
                );
                let (f, df) = self.relaxation_ice_fraction(i, t[i]);
                if let Some(j) = jac {
                    j.diag[i] += flux * (ice - open) * df / dx;
                }
                (open * (1.0 - f) + ice * f) / dx
            }
            AlbedoKind::Step => {
                let mut total = 0.0;
                for k in [2 * i, 2 * i + 1] {
                    let h = &self.half[k];
                    match self.half_ice(k, t) {
                        HalfIce::Open => total += h.open,
                        HalfIce::Ice => total += h.ice,
                        HalfIce::Edge {
                            x,
                            ice_above,
                            a,
                            b,
                            dx_dta,
                            dx_dtb,
                        } => {
                            let (below, above) = (!ice_above, ice_above);
                            total +=
                                self.integral(k, h.lo, x, below) + self.integral(k, x, h.hi, above);
                            if let Some(j) = jac.as_deref_mut() {
                                let s = self.unit_insolation(k, x);
                                // d/dx_r of ∫_lo^x g_below + ∫_x^hi g_above
                                let g = s * (self.coalbedo(x, below) - self.coalbedo(x, above));
                                let scale = flux * g / dx;
                                add_entry(j, i, a, scale * dx_dta);
                                add_entry(j, i, b, scale * dx_dtb);
                            }
                        }
                    }
                }
                total / dx
            }
        }
    }

    /// Residual F(T) (W m-2) into `f`, and when `jac` is given its Jacobian
    /// ∂F/∂T (tridiagonal, plus a rank-one term for relaxation transport).
    /// Allocates nothing.
    pub fn evaluate(&self, t: &[f64], f: &mut [f64], mut jac: Option<&mut Tridiagonal>) {
        let n = self.len();
        let flux = self.planet.orbit.flux;
        if let Some(j) = jac.as_deref_mut() {
            j.clear();
        }
        let olr = Olr {
            law: self.planet.olr,
            forcing: self.forcing,
        };
        for i in 0..n {
            let absorbed = flux * self.absorbed_band(i, t, jac.as_deref_mut());
            let (l, dl) = olr.value_and_slope(t[i]);
            f[i] = absorbed - l;
            if let Some(j) = jac.as_deref_mut() {
                j.diag[i] -= dl;
            }
        }
        self.add_transport(t, f, jac);
    }

    fn add_transport(&self, t: &[f64], f: &mut [f64], jac: Option<&mut Tridiagonal>) {
        let n = self.len();
        match self.planet.transport {
            Transport::Diffusive { diffusivity } => {
                let mut jac = jac;
                for i in 0..n {
                    let dx = self.grid.width(i);
                    let kl = diffusivity * self.conductance[i] / dx;
                    let kr = diffusivity * self.conductance[i + 1] / dx;
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
                let tbar = self.grid.mean(t);
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
                            v.copy_from_slice(&self.grid.weights);
                        }
                        None => j.rank_one = Some((vec![rate; n], self.grid.weights.clone())),
                    }
                }
            }
        }
    }

    /// A Jacobian workspace of the right shape for this model.
    pub fn new_jacobian(&self) -> Tridiagonal {
        let n = self.len();
        let mut j = Tridiagonal::new(n);
        if let Transport::Relaxation { .. } = self.planet.transport {
            j.rank_one = Some((vec![0.0; n], vec![0.0; n]));
        }
        j
    }

    /// Current value of a parameter (obliquity in degrees).
    pub fn param(&self, p: Param) -> f64 {
        let pl = &self.planet;
        match p {
            Param::Flux => pl.orbit.flux,
            Param::Obliquity => pl.orbit.obliquity.to_degrees(),
            Param::Eccentricity => pl.orbit.eccentricity,
            Param::InsolationP2 => match pl.insolation {
                InsolationLaw::Legendre { p2 } => p2,
                InsolationLaw::Orbital => f64::NAN,
            },
            Param::Co2 => pl.co2_ppm,
            Param::OlrA => match pl.olr {
                OlrLaw::Linear { a, .. } => a,
                _ => f64::NAN,
            },
            Param::OlrB => match pl.olr {
                OlrLaw::Linear { b, .. } => b,
                _ => f64::NAN,
            },
            Param::Emissivity => match pl.olr {
                OlrLaw::Greybody { emissivity } => emissivity,
                _ => f64::NAN,
            },
            Param::Diffusivity => match pl.transport {
                Transport::Diffusive { diffusivity } => diffusivity,
                _ => f64::NAN,
            },
            Param::Relaxation => match pl.transport {
                Transport::Relaxation { rate } => rate,
                _ => f64::NAN,
            },
            Param::IceAlbedo => pl.albedo.ice,
            Param::OpenAlbedo => pl.albedo.open,
            Param::Threshold => pl.albedo.threshold,
        }
    }

    /// Whether this model has the parameter at all (e.g. `radiation.a` needs
    /// the linear longwave law).
    pub fn has_param(&self, p: Param) -> bool {
        !self.param(p).is_nan()
    }

    /// Sets a parameter and rebuilds what depends on it. Allocates nothing.
    /// The caller checks the value against [`Param::range`].
    pub fn set_param(&mut self, p: Param, v: f64) {
        let pl = &mut self.planet;
        match p {
            Param::Flux => {
                pl.orbit.flux = v;
                return;
            }
            Param::Obliquity => pl.orbit.obliquity = v.to_radians(),
            Param::Eccentricity => pl.orbit.eccentricity = v,
            Param::InsolationP2 => {
                if let InsolationLaw::Legendre { p2 } = &mut pl.insolation {
                    *p2 = v
                }
            }
            Param::Co2 => {
                pl.co2_ppm = v;
                self.rebuild_forcing();
                return;
            }
            Param::OlrA => {
                if let OlrLaw::Linear { a, .. } = &mut pl.olr {
                    *a = v
                }
                return;
            }
            Param::OlrB => {
                if let OlrLaw::Linear { b, .. } = &mut pl.olr {
                    *b = v
                }
                return;
            }
            Param::Emissivity => {
                if let OlrLaw::Greybody { emissivity } = &mut pl.olr {
                    *emissivity = v
                }
                return;
            }
            Param::Diffusivity => {
                if let Transport::Diffusive { diffusivity } = &mut pl.transport {
                    *diffusivity = v
                }
                return;
            }
            Param::Relaxation => {
                if let Transport::Relaxation { rate } = &mut pl.transport {
                    *rate = v
                }
                return;
            }
            Param::Threshold => {
                pl.albedo.threshold = v;
                return;
            }
            Param::IceAlbedo => {
                pl.albedo.ice = v;
                self.rebuild_albedo();
                return;
            }
            Param::OpenAlbedo => {
                pl.albedo.open = v;
                self.rebuild_albedo();
                return;
            }
        }
        self.rebuild_insolation();
    }

    /// ∂F/∂p at T into `out`. Analytic where F is linear in p (flux, CO2,
    /// A, B, D, γ; not for the relaxation edge ramp, which depends on flux,
    /// B and γ as well); otherwise a central difference with step 1e-6 of the
    /// parameter's scale, restoring the parameter bit for bit. `scratch`
    /// must have one entry per band.
    pub fn d_residual_d_param(
        &mut self,
        p: Param,
        t: &[f64],
        out: &mut [f64],
        scratch: &mut [f64],
    ) {
        // the relaxation edge ramp depends on flux, B, emissivity and γ too
        let ramp = self.planet.albedo.kind == AlbedoKind::Step
            && matches!(self.planet.transport, Transport::Relaxation { .. })
            && matches!(
                p,
                Param::Flux | Param::OlrB | Param::Emissivity | Param::Relaxation
            );
        if ramp {
            self.d_residual_fd(p, t, out, scratch);
        } else {
            self.d_residual_analytic(p, t, out, scratch);
        }
    }

    fn d_residual_analytic(&mut self, p: Param, t: &[f64], out: &mut [f64], scratch: &mut [f64]) {
        let n = self.len();
        match p {
            Param::Flux => {
                for i in 0..n {
                    out[i] = self.absorbed_band(i, t, None);
                }
            }
            Param::Co2 => out.fill(5.35 / self.planet.co2_ppm),
            Param::OlrA => out.fill(-1.0),
            Param::OlrB => {
                for i in 0..n {
                    out[i] = -t[i];
                }
            }
            Param::Diffusivity | Param::Relaxation => {
                let saved = self.planet.transport;
                self.planet.transport = match saved {
                    Transport::Diffusive { .. } => Transport::Diffusive { diffusivity: 1.0 },
                    Transport::Relaxation { .. } => Transport::Relaxation { rate: 1.0 },
                };
                out.fill(0.0);
                self.add_transport(t, out, None);
                self.planet.transport = saved;
            }
            _ => self.d_residual_fd(p, t, out, scratch),
        }
    }

    /// Central difference of F in a parameter, step 1e-6 of its scale,
    /// restoring the parameter bit for bit.
    fn d_residual_fd(&mut self, p: Param, t: &[f64], out: &mut [f64], scratch: &mut [f64]) {
        let v0 = self.param(p);
        let h = 1e-6 * v0.abs().max(1.0);
        self.set_param(p, v0 + h);
        self.evaluate(t, out, None);
        self.set_param(p, v0 - h);
        self.evaluate(t, scratch, None);
        self.set_param(p, v0);
        for (o, s) in out.iter_mut().zip(scratch.iter()) {
            *o = (*o - s) / (2.0 * h);
        }
    }

    /// Band fluxes of profile `t` (allocates; for diagnostics and output).
    pub fn band_fluxes(&self, t: &[f64]) -> BandFluxes {
        let n = self.len();
        let flux = self.planet.orbit.flux;
        let olr_law = Olr {
            law: self.planet.olr,
            forcing: self.forcing,
        };
        let mut out = BandFluxes {
            insolation: (0..n)
                .map(|i| {
                    flux * (self.half[2 * i].insolation + self.half[2 * i + 1].insolation)
                        / self.grid.width(i)
                })
                .collect(),
            absorbed: (0..n)
                .map(|i| flux * self.absorbed_band(i, t, None))
                .collect(),
            olr: t.iter().map(|&ti| olr_law.value_and_slope(ti).0).collect(),
            transport: vec![0.0; n],
        };
        self.add_transport(t, &mut out.transport, None);
        out
    }

    /// A label of the ice topology: the number of ice intervals and whether
    /// each end of the domain is ice-covered. Allocates nothing.
    pub fn ice_topology(&self, t: &[f64]) -> u64 {
        let mut intervals = 0u64;
        let mut prev_ice = false;
        let (mut first, mut last) = (false, false);
        for k in 0..self.half.len() {
            let (lo_ice, hi_ice) = match self.half_ice(k, t) {
                HalfIce::Open => (false, false),
                HalfIce::Ice => (true, true),
                HalfIce::Edge { ice_above, .. } => (!ice_above, ice_above),
            };
            if k == 0 {
                first = lo_ice;
            }
            // count rising edges of the ice indicator along x
            if lo_ice && !prev_ice {
                intervals += 1;
            }
            if hi_ice && !lo_ice {
                intervals += 1;
            }
            prev_ice = hi_ice;
            last = hi_ice;
        }
        intervals * 4 + u64::from(first) * 2 + u64::from(last)
    }

    /// Ice-covered intervals of x under profile `t`, merged, ascending.
    /// Step law: where the piecewise-linear profile is below T_s. Smooth
    /// law: the same rule (the ice edge is where T crosses T_s).
    pub fn ice_intervals(&self, t: &[f64]) -> Vec<(f64, f64)> {
        let mut out: Vec<(f64, f64)> = Vec::new();
        let mut push = |a: f64, b: f64| {
            if b <= a {
                return;
            }
            match out.last_mut() {
                Some(last) if (last.1 - a).abs() < 1e-15 => last.1 = b,
                _ => out.push((a, b)),
            }
        };
        for k in 0..self.half.len() {
            let h = self.half[k];
            match self.half_ice(k, t) {
                HalfIce::Open => {}
                HalfIce::Ice => push(h.lo, h.hi),
                HalfIce::Edge { x, ice_above, .. } => {
                    if ice_above {
                        push(x, h.hi)
                    } else {
                        push(h.lo, x)
                    }
                }
            }
        }
        out
    }

    /// Ice area fraction of the planet: the covered length in x over the
    /// domain length (step law), or Σ w_i f(T_i) (smooth law).
    pub fn ice_area_fraction(&self, t: &[f64]) -> f64 {
        match self.planet.albedo.kind {
            AlbedoKind::Step if matches!(self.planet.transport, Transport::Relaxation { .. }) => {
                self.grid
                    .weights
                    .iter()
                    .enumerate()
                    .map(|(i, w)| w * self.relaxation_ice_fraction(i, t[i]).0)
                    .sum()
            }
            AlbedoKind::Step => {
                let span = self.grid.faces[self.len()] - self.grid.faces[0];
                self.ice_intervals(t)
                    .iter()
                    .map(|(a, b)| b - a)
                    .sum::<f64>()
                    / span
            }
            AlbedoKind::Smooth { .. } => self
                .grid
                .weights
                .iter()
                .zip(t)
                .map(|(w, &ti)| w * self.planet.albedo.ice_weight(ti).0)
                .sum(),
        }
    }
}

#[inline]
fn add_entry(j: &mut Tridiagonal, row: usize, col: usize, v: f64) {
    if col == row {
        j.diag[row] += v;
    } else if col + 1 == row {
        j.lower[row] += v;
    } else if col == row + 1 {
        j.upper[row] += v;
    } else {
        debug_assert!(false, "entry outside the tridiagonal band");
    }
}
