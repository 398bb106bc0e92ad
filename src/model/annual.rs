//! The annual-mean energy-balance model: residual F(T; p) and its Jacobian.
//!
//! On bands in x = sin(latitude), with T in °C:
//!
//! C dT/dt = F(T) = S(x)(1 - α(T, x)) - OLR(T) + ∇·F(T),
//!
//! band-averaged over each band (finite volumes). The pieces are
//! [`crate::physics::insolation`], [`crate::physics::albedo`], [`crate::physics::radiation`] and the
//! transport below.
//!
//! The absorbed flux with the step albedo's sub-grid ice edge is in
//! [`super::subgrid`]; the transport divergence in
//! [`crate::physics::transport`].

use super::habitability::HabitableRange;
use super::subgrid::HalfBand;
pub use super::subgrid::RELAXATION_RAMP_BANDS;
use crate::numerics::grid::Grid;
use crate::numerics::linalg::Tridiagonal;
use crate::physics::albedo::{Albedo, AlbedoKind};
use crate::physics::insolation::{Insolation, InsolationLaw};
use crate::physics::orbit::Orbit;
use crate::physics::radiation::{Olr, OlrLaw, co2_forcing};
use crate::physics::transport::{Transport, conductances};

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
    /// Radiative forcing F added to the absorbed flux, W m-2
    /// (`radiation.forcing`; Wagner & Eisenman 2015, eq. 1).
    pub forcing_wm2: f64,
    /// Reference CO2 concentration for zero forcing, ppm.
    pub co2_ref_ppm: f64,
    /// Heat transport.
    pub transport: Transport,
    /// Heat capacity per band area, W yr m-2 K-1 (time in years).
    pub heat_capacity: Vec<f64>,
    /// The temperatures at which the surface counts as habitable (a
    /// diagnostic: no residual depends on it).
    pub habitable: HabitableRange,
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
    /// `radiation.forcing`, W m-2.
    Forcing,
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
    pub const ALL: [Param; 14] = [
        Param::Flux,
        Param::Obliquity,
        Param::Eccentricity,
        Param::InsolationP2,
        Param::Co2,
        Param::Forcing,
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
            Param::Forcing => "radiation.forcing",
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
            Param::Flux | Param::OlrA | Param::Forcing => "W m-2",
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
            Param::Forcing => (-1e3, 1e3),
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
    pub(super) half: Vec<HalfBand>,
    /// (1 - x_f²)/(x_{i} - x_{i-1}) at interior faces, 0 at boundary faces.
    pub(super) conductance: Vec<f64>,
    pub(super) forcing: f64,
}

impl Model {
    /// Builds the model; the planet's heat capacity must have one entry per band
    /// (or one entry, used for every band).
    pub fn new(grid: Grid, mut planet: Planet) -> Model {
        let n = grid.len();
        if planet.heat_capacity.len() != n {
            let c = planet.heat_capacity.first().copied().unwrap_or(1.0);
            planet.heat_capacity = vec![c; n];
        }
        let conductance = conductances(&grid);
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

    /// Total radiative forcing, W m-2, subtracted from the OLR (the same as
    /// adding it to the absorbed flux): the greenhouse forcing
    /// 5.35 ln(C/C0) of CO2 (Myhre et al. 1998) plus `radiation.forcing`.
    pub fn forcing(&self) -> f64 {
        self.forcing
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
        for k in 0..self.half.len() {
            let (a, b) = self.segment(k);
            let (xa, xb) = (self.grid.centres[a], self.grid.centres[b]);
            let h = &mut self.half[k];
            (h.a, h.b) = (a, b);
            let i = k / 2;
            (h.lo, h.hi) = if k % 2 == 0 {
                (self.grid.faces[i], self.grid.centres[i])
            } else {
                (self.grid.centres[i], self.grid.faces[i + 1])
            };
            h.between = h.lo >= xa.min(xb) && h.hi <= xa.max(xb);
        }
        // the northern half-bands first, then the southern ones, each copied
        // from its mirror image where the grid is exactly symmetric (the
        // orbital mean is even in x to the last bit, the others by formula);
        // a half-band starts where the previous one ends: its value there is
        // the one already computed
        let m = self.half.len();
        let even = matches!(self.planet.insolation, InsolationLaw::Orbital);
        for range in [m / 2..m, 0..m / 2] {
            let mut shared_end = None;
            for k in range {
                let (lo, hi) = (self.half[k].lo, self.half[k].hi);
                let mirror = m - 1 - k;
                let twin = &self.half[mirror];
                if even && k < m / 2 && mirror >= m / 2 && twin.lo == -hi && twin.hi == -lo {
                    let t = twin.s;
                    self.half[k].s = [t[2], t[1], t[0]];
                    shared_end = Some(t[0]);
                    continue;
                }
                let s_lo = shared_end.unwrap_or_else(|| ins.annual_mean(lo));
                let s_hi = ins.annual_mean(hi);
                self.half[k].s = [s_lo, ins.annual_mean(0.5 * (lo + hi)), s_hi];
                shared_end = Some(s_hi);
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

    /// The half-band integrals (∫ S/S0 (1 - α_open), ∫ S/S0 (1 - α_ice),
    /// ∫ S/S0, over each half-band) of the insolation now held.
    pub(crate) fn half_integrals(&self) -> impl Iterator<Item = [f64; 3]> + '_ {
        self.half.iter().map(|h| [h.open, h.ice, h.insolation])
    }

    /// [`Model::set_unit_insolation`] with the half-band integrals already
    /// known (from [`Model::half_integrals`] under the same samples and
    /// albedo): the same state, without the quadrature.
    pub(crate) fn set_unit_insolation_with(
        &mut self,
        samples: &[[f64; 3]],
        integrals: &[[f64; 3]],
    ) {
        for ((h, s), i) in self.half.iter_mut().zip(samples).zip(integrals) {
            h.s = *s;
            [h.open, h.ice, h.insolation] = *i;
        }
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
        self.forcing =
            co2_forcing(self.planet.co2_ppm, self.planet.co2_ref_ppm) + self.planet.forcing_wm2;
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
        self.planet
            .transport
            .add_divergence(&self.grid, &self.conductance, t, f, jac);
    }

    /// Adds the transport divergence ∇·F(T) to `f` (no Jacobian).
    fn add_transport(&self, t: &[f64], f: &mut [f64]) {
        self.planet
            .transport
            .add_divergence(&self.grid, &self.conductance, t, f, None);
    }

    /// A Jacobian workspace of the right shape for this model.
    pub fn new_jacobian(&self) -> Tridiagonal {
        self.planet.transport.new_jacobian(self.len())
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
                InsolationLaw::Orbital | InsolationLaw::Idealised { .. } => f64::NAN,
            },
            Param::Co2 => pl.co2_ppm,
            Param::Forcing => pl.forcing_wm2,
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
            Param::Diffusivity => pl.transport.diffusivity().unwrap_or(f64::NAN),
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
            Param::Forcing => {
                pl.forcing_wm2 = v;
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
                if let Transport::Diffusive { diffusivity } | Transport::Moist { diffusivity, .. } =
                    &mut pl.transport
                {
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
    /// A, B, D of the dry and the moist law, γ; not for the relaxation edge ramp, which depends on flux,
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
                Param::Flux
                    | Param::Eccentricity
                    | Param::OlrB
                    | Param::Emissivity
                    | Param::Relaxation
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
            // ∂F/∂e = S0 (∂ ln S̄/∂e) ∂F/∂S0: the orbital annual mean
            // depends on e only through its scale
            Param::Eccentricity if matches!(self.planet.insolation, InsolationLaw::Orbital) => {
                let o = self.planet.orbit;
                let de =
                    crate::physics::insolation::eccentricity_flux_factor(o.flux, o.eccentricity);
                for i in 0..n {
                    out[i] = de * self.absorbed_band(i, t, None);
                }
            }
            Param::Co2 => out.fill(5.35 / self.planet.co2_ppm),
            Param::Forcing => out.fill(1.0),
            Param::OlrA => out.fill(-1.0),
            Param::OlrB => {
                for i in 0..n {
                    out[i] = -t[i];
                }
            }
            Param::Diffusivity | Param::Relaxation => {
                let saved = self.planet.transport;
                // ∇·F is linear in D (dry and moist) and in γ
                self.planet.transport = saved.unit();
                out.fill(0.0);
                self.add_transport(t, out);
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
        self.add_transport(t, &mut out.transport);
        out
    }
}

impl crate::numerics::newton::Steady for Model {
    fn len(&self) -> usize {
        self.grid.len()
    }
    fn evaluate(&self, t: &[f64], f: &mut [f64], jac: Option<&mut Tridiagonal>) {
        Model::evaluate(self, t, f, jac)
    }
    fn new_jacobian(&self) -> Tridiagonal {
        Model::new_jacobian(self)
    }
    fn heat_capacity(&self) -> &[f64] {
        &self.planet.heat_capacity
    }
}

#[cfg(test)]
mod tests {
    use crate::io::scenario::{DEFAULT_NAME, DEFAULT_SCENARIO, Scenario};
    use crate::model::Param;

    /// The insolation samples of every half-band, the southern ones copied
    /// from their mirror images, equal the annual mean evaluated at each
    /// sample point, to the last bit, at several obliquities and grids; the
    /// orbital annual mean is even in x exactly (the same in both
    /// hemispheres: common practice, no source).
    #[test]
    fn mirrored_insolation_samples_equal_direct_evaluation() {
        for (bands, spacing) in [(90, "sine"), (37, "sine"), (40, "latitude")] {
            let sets = [
                format!("grid.bands={bands}"),
                format!("grid.spacing=\"{spacing}\""),
            ];
            let mut m = Scenario::parse(DEFAULT_SCENARIO, DEFAULT_NAME, &sets)
                .unwrap()
                .model();
            for obliquity in [0.0, 23.44, 60.0, 90.0] {
                m.set_param(Param::Obliquity, obliquity);
                let mut unit = m.planet.orbit;
                unit.flux = 1.0;
                let ins = crate::physics::insolation::Insolation::new(unit, m.planet.insolation);
                for h in &m.half {
                    let want = [
                        ins.annual_mean(h.lo),
                        ins.annual_mean(0.5 * (h.lo + h.hi)),
                        ins.annual_mean(h.hi),
                    ];
                    assert_eq!(h.s, want, "{bands} {spacing} bands at {obliquity} deg");
                    assert_eq!(ins.annual_mean(h.lo), ins.annual_mean(-h.lo));
                }
            }
        }
    }
}
