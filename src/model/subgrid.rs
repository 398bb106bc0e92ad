//! The sub-grid ice edge of the step albedo in the annual-mean model.
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

use super::annual::Model;
use crate::numerics::linalg::Tridiagonal;
use crate::physics::albedo::AlbedoKind;
use crate::physics::radiation::Olr;
use crate::physics::transport::Transport;

/// Per half-band tables: band i has halves 2i (left) and 2i + 1 (right).
#[derive(Clone, Copy, Debug, Default)]
pub(crate) struct HalfBand {
    pub(super) lo: f64,
    pub(super) hi: f64,
    /// Insolation per unit flux S/S0 at lo, middle and hi.
    pub(super) s: [f64; 3],
    /// ∫ (S/S0)(1 - α_open) dx over the half-band.
    pub(super) open: f64,
    /// ∫ (S/S0)(1 - α_ice) dx.
    pub(super) ice: f64,
    /// ∫ S/S0 dx.
    pub(super) insolation: f64,
    /// The band pair of [`Model::segment`] for this half-band.
    pub(super) a: usize,
    pub(super) b: usize,
    /// Whether the half-band lies between the two centres (interpolated,
    /// not extrapolated).
    pub(super) between: bool,
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
    pub(super) fn integrate_with(&self, k: usize, u: f64, v: f64, w: impl Fn(f64) -> f64) -> f64 {
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
    pub(super) fn integral(&self, k: usize, u: f64, v: f64, ice: bool) -> f64 {
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
    pub(super) fn segment(&self, k: usize) -> (usize, usize) {
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
        let h = &self.half[k];
        let (a, b) = (h.a, h.b);
        let (ta, tb) = (t[a], t[b]);
        let ts = self.planet.albedo.threshold;
        // a half-band between its two centres, with both clear of T_s:
        // the answer of the interpolation below, without its divisions
        if h.between {
            if ta.min(tb) > ts + 1e-9 {
                return HalfIce::Open;
            }
            if ta.max(tb) < ts - 1e-9 {
                return HalfIce::Ice;
            }
        }
        let (xa, xb) = (self.grid.centres[a], self.grid.centres[b]);
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
            Transport::Diffusive { .. } | Transport::Moist { .. } => 0.0,
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
    pub(super) fn absorbed_band(
        &self,
        i: usize,
        t: &[f64],
        mut jac: Option<&mut Tridiagonal>,
    ) -> f64 {
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

    /// The open (ice-free) surface of profile `t`: its area fraction
    /// 1 - f_ice and its area-weighted mean temperature (°C),
    /// T_w = Σ w_i (1 - f_i) T_i / Σ w_i (1 - f_i), with f_i the ice share
    /// of band i by the same rule as [`Model::ice_area_fraction`] (the
    /// sub-grid edge, the relaxation ramp or the smooth law) and T_i the
    /// band's temperature. A snowball gives (0, 0): with no open surface
    /// the mean is undefined and returned as 0 °C. Allocates nothing.
    pub fn open_surface(&self, t: &[f64]) -> (f64, f64) {
        let (mut area, mut sum) = (0.0, 0.0);
        for (i, (&w, &ti)) in self.grid.weights.iter().zip(t).enumerate() {
            let ice = match self.planet.albedo.kind {
                AlbedoKind::Step
                    if matches!(self.planet.transport, Transport::Relaxation { .. }) =>
                {
                    self.relaxation_ice_fraction(i, ti).0
                }
                AlbedoKind::Step => {
                    let mut len = 0.0;
                    for k in [2 * i, 2 * i + 1] {
                        let h = self.half[k];
                        len += match self.half_ice(k, t) {
                            HalfIce::Open => 0.0,
                            HalfIce::Ice => h.hi - h.lo,
                            HalfIce::Edge { x, ice_above, .. } => {
                                if ice_above {
                                    h.hi - x
                                } else {
                                    x - h.lo
                                }
                            }
                        };
                    }
                    len / self.grid.width(i)
                }
                AlbedoKind::Smooth { .. } => self.planet.albedo.ice_weight(ti).0,
            };
            let open = w * (1.0 - ice.clamp(0.0, 1.0));
            area += open;
            sum += open * ti;
        }
        if area > 0.0 {
            (area.min(1.0), sum / area)
        } else {
            (0.0, 0.0)
        }
    }

    /// Ice area fraction of the planet: the covered length in x over the
    /// domain length (step law), or Σ w_i f(T_i) (smooth law).
    pub fn ice_area_fraction(&self, t: &[f64]) -> f64 {
        // a sum of area fractions: outside [0, 1] only by round-off
        let f = match self.planet.albedo.kind {
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
        };
        // (+ 0.0: an empty sum is -0.0, which would print as "-0")
        f.clamp(0.0, 1.0) + 0.0
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
