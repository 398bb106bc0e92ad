//! Every equilibrium of the linear step-albedo model, parametrised by its
//! ice edge (North's method, done on a grid).
//!
//! For linear outgoing longwave radiation A + B T, diffusive transport and
//! the step albedo, the annual-mean balance on one hemisphere x in [0, 1]
//!
//! ```text
//! D d/dx[(1 - x²) dT/dx] - (A + B T) + Q s(x) (1 - α(x)) = 0,   T(x_s) = T_s
//! ```
//!
//! is linear in T and in the flux Q once the ice edge x_s is fixed, so each
//! ice topology is a one-parameter family Q(x_s) (North 1975, J. Atmos. Sci.
//! 32, 2033). Here the family is computed on a grid whose faces move with
//! the edge: n/2 cells cover [0, x_s] and n/2 cover [x_s, 1] (equal steps in
//! x or in latitude within each region, as the scenario's spacing), the edge
//! is a face where T = T_s, and the two regions are finite-volume problems
//! with that Dirichlet value, coupled by the continuity of the diffusive flux
//! through the edge. For fixed x_s, T = Q u + v with two tridiagonal solves,
//! and flux continuity, which is also the global energy balance, is one
//! linear equation for Q. The cell count of each region is fixed, so Q(x_s)
//! is smooth in x_s: its extrema are the folds (no kinks, no spurious turning
//! points), and they converge at second order with the number of cells.
//!
//! Topologies: ice-free and snowball (no edge; T = Q u + v on the plain
//! grid, valid while the pole, respectively the equator, is on the right side
//! of T_s), polar caps (open [0, x_s], ice [x_s, 1]) and an equatorial belt
//! (ice [0, x_s], open [x_s, 1]). The corners where a cap or belt appears or
//! the whole hemisphere freezes are the ends of the no-edge branches: the
//! flux at which the reconstructed pole (or equator) temperature of the
//! ice-free (snowball) state equals T_s. States with two edges per
//! hemisphere (a cap and a belt at once) are not enumerated. Stability of the
//! one-edge states follows the slope-stability theorem (Cahalan & North
//! 1979, J. Atmos. Sci. 36, 1178): a state is stable where its ice area
//! shrinks as Q grows (dQ/dx_s > 0 for caps, applied by the same argument to
//! belts, dQ/dx_s < 0); the no-edge states of this linear model are stable.

use crate::model::Model;
use crate::numerics::grid::Spacing;
use crate::numerics::linalg::Tridiagonal;
use crate::numerics::quad::gauss_legendre;
use crate::physics::albedo::AlbedoKind;
use crate::physics::insolation::Insolation;
use crate::physics::radiation::OlrLaw;
use crate::physics::transport::Transport;

/// Why the skeleton does not apply.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SkeletonError {
    /// The model is outside the linear step-albedo diffusive family.
    #[error("the edge-parametrised skeleton needs {0}")]
    Unsupported(&'static str),
}

/// Which region is ice on a hemisphere.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Topology {
    /// No ice.
    IceFree,
    /// Ice poleward of the edge.
    PolarCap,
    /// Ice equatorward of the edge.
    EquatorialBelt,
    /// Ice everywhere.
    Snowball,
}

impl Topology {
    /// The label used in outputs (as the state labels of
    /// [`crate::model::climate::State`]).
    pub fn label(self) -> &'static str {
        match self {
            Topology::IceFree => "ice-free",
            Topology::PolarCap => "polar-caps",
            Topology::EquatorialBelt => "equatorial-belt",
            Topology::Snowball => "snowball",
        }
    }
}

/// A turning point of Q along a family: a fold of the hysteresis.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SkeletonFold {
    /// The family it lies on.
    pub topology: Topology,
    /// Flux S0 at the fold, W m-2 (Q = S0/4 times the unit insolation).
    pub flux: f64,
    /// The edge, x_s = sin(latitude).
    pub edge_x: f64,
    /// `true` for a corner: the end of the ice-free branch (a cap or belt
    /// appears) or of the snowball branch (the equator thaws).
    pub corner: bool,
}

/// Tables of the integrals of the unit insolation, for cell averages.
struct InsolationTable {
    /// ∫_0^x s dx and ∫_0^x s P2 dx at x_j = j/m, s = S/S0.
    i_s: Vec<f64>,
    i_sp2: Vec<f64>,
    /// s(x_j) and s(x_j) P2(x_j): the derivatives, for Hermite interpolation.
    s: Vec<f64>,
    sp2: Vec<f64>,
}

const TABLE: usize = 4096;

fn p2(x: f64) -> f64 {
    0.5 * (3.0 * x * x - 1.0)
}

impl InsolationTable {
    fn new(ins: &Insolation) -> InsolationTable {
        let m = TABLE;
        let (gz, gw) = gauss_legendre(8);
        let mut t = InsolationTable {
            i_s: vec![0.0; m + 1],
            i_sp2: vec![0.0; m + 1],
            s: vec![0.0; m + 1],
            sp2: vec![0.0; m + 1],
        };
        for j in 0..=m {
            let x = j as f64 / m as f64;
            let s = ins.annual_mean(x);
            t.s[j] = s;
            t.sp2[j] = s * p2(x);
            if j > 0 {
                let (a, b) = ((j - 1) as f64 / m as f64, x);
                let (mut is, mut isp) = (0.0, 0.0);
                for (z, w) in gz.iter().zip(&gw) {
                    let xq = 0.5 * (a + b) + 0.5 * (b - a) * z;
                    let sq = ins.annual_mean(xq);
                    is += w * sq;
                    isp += w * sq * p2(xq);
                }
                t.i_s[j] = t.i_s[j - 1] + 0.5 * (b - a) * is;
                t.i_sp2[j] = t.i_sp2[j - 1] + 0.5 * (b - a) * isp;
            }
        }
        t
    }

    /// (∫_0^x s, ∫_0^x s P2) by cubic Hermite interpolation of the tables.
    fn integrals(&self, x: f64) -> (f64, f64) {
        let m = TABLE as f64;
        let u = (x.clamp(0.0, 1.0) * m).min(m - 1e-9);
        let j = u.floor() as usize;
        let t = u - j as f64;
        let h = 1.0 / m;
        let herm = |y0: f64, y1: f64, d0: f64, d1: f64| {
            let (t2, t3) = (t * t, t * t * t);
            (2.0 * t3 - 3.0 * t2 + 1.0) * y0
                + (t3 - 2.0 * t2 + t) * h * d0
                + (-2.0 * t3 + 3.0 * t2) * y1
                + (t3 - t2) * h * d1
        };
        (
            herm(self.i_s[j], self.i_s[j + 1], self.s[j], self.s[j + 1]),
            herm(self.i_sp2[j], self.i_sp2[j + 1], self.sp2[j], self.sp2[j + 1]),
        )
    }
}

/// The linear model's numbers and a workspace for the family Q(x_s).
pub struct EdgeFamilies {
    n: usize,
    spacing: Spacing,
    a: f64,
    b: f64,
    d: f64,
    open: f64,
    open_p2: f64,
    ice: f64,
    threshold: f64,
    table: InsolationTable,
    faces: Vec<f64>,
    centres: Vec<f64>,
    coalb: Vec<f64>,
    jac: Tridiagonal,
    u: Vec<f64>,
    v: Vec<f64>,
}

/// Result of one edge position: the flux and whether the state is valid.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct EdgeState {
    /// Flux S0, W m-2.
    pub flux: f64,
    /// Global (hemispheric) mean temperature, °C.
    pub global_mean_c: f64,
}

impl EdgeFamilies {
    /// The families of `model` with `cells` cells on a hemisphere. The model
    /// must have linear OLR, diffusive transport and the step albedo.
    pub fn new(model: &Model, cells: usize) -> Result<EdgeFamilies, SkeletonError> {
        let pl = &model.planet;
        let OlrLaw::Linear { a, b } = pl.olr else {
            return Err(SkeletonError::Unsupported("linear OLR (radiation.kind = \"linear\")"));
        };
        let Transport::Diffusive { diffusivity } = pl.transport else {
            return Err(SkeletonError::Unsupported(
                "diffusive transport (transport.kind = \"diffusive\")",
            ));
        };
        if !matches!(pl.albedo.kind, AlbedoKind::Step) {
            return Err(SkeletonError::Unsupported("the step albedo (albedo.kind = \"step\")"));
        }
        if diffusivity <= 0.0 {
            return Err(SkeletonError::Unsupported("a positive diffusivity"));
        }
        let n = cells.max(4) & !1;
        let mut unit = pl.orbit;
        unit.flux = 1.0;
        let ins = Insolation::new(unit, pl.insolation);
        Ok(EdgeFamilies {
            n,
            spacing: model.grid.spacing,
            a: a - model.forcing(),
            b,
            d: diffusivity,
            open: pl.albedo.open,
            open_p2: pl.albedo.open_p2,
            ice: pl.albedo.ice,
            threshold: pl.albedo.threshold,
            table: InsolationTable::new(&ins),
            faces: vec![0.0; n + 1],
            centres: vec![0.0; n],
            coalb: vec![0.0; n],
            jac: Tridiagonal::new(n),
            u: vec![0.0; n],
            v: vec![0.0; n],
        })
    }

    /// Faces of cells k0..k1 covering [x0, x1] with equal steps in the
    /// spacing's coordinate.
    fn lay(&mut self, k0: usize, k1: usize, x0: f64, x1: f64) {
        let m = (k1 - k0) as f64;
        for k in k0..=k1 {
            let t = (k - k0) as f64 / m;
            self.faces[k] = match self.spacing {
                Spacing::Sine => x0 + t * (x1 - x0),
                Spacing::Latitude => {
                    let (p0, p1) = (x0.clamp(0.0, 1.0).asin(), x1.clamp(0.0, 1.0).asin());
                    (p0 + t * (p1 - p0)).sin()
                }
            };
        }
        self.faces[k1] = x1;
    }

    /// Cell averages of (S/S0)(1 - α) and the cell centres, with ice on the
    /// cells where `ice(k)`.
    fn cells(&mut self, ice: impl Fn(usize) -> bool) {
        for k in 0..self.n {
            let (lo, hi) = (self.faces[k], self.faces[k + 1]);
            self.centres[k] = match self.spacing {
                Spacing::Sine => 0.5 * (lo + hi),
                Spacing::Latitude => (0.5 * (lo.asin() + hi.asin())).sin(),
            };
            let (s0, p0) = self.table.integrals(lo);
            let (s1, p1) = self.table.integrals(hi);
            let w = hi - lo;
            self.coalb[k] = if ice(k) {
                (1.0 - self.ice) * (s1 - s0) / w
            } else {
                ((1.0 - self.open) * (s1 - s0) - self.open_p2 * (p1 - p0)) / w
            };
        }
    }

    /// Assembles B T - div F on the current cells, with the face `edge`
    /// (if any) cut: each side sees T_s at the edge (its flux term moved to
    /// the right-hand side). Returns the two edge conductances (κ⁻, κ⁺).
    fn assemble(&mut self, edge: Option<usize>) -> (f64, f64) {
        let n = self.n;
        let j = &mut self.jac;
        j.clear();
        let mut kappa = (0.0, 0.0);
        for k in 0..n {
            j.diag[k] = self.b;
        }
        for f in 1..n {
            let xf = self.faces[f];
            let g = self.d * (1.0 - xf * xf);
            let (wl, wr) = (
                self.faces[f] - self.faces[f - 1],
                self.faces[f + 1] - self.faces[f],
            );
            if Some(f) == edge {
                let km = g / (xf - self.centres[f - 1]);
                let kp = g / (self.centres[f] - xf);
                j.diag[f - 1] += km / wl;
                j.diag[f] += kp / wr;
                kappa = (km, kp);
            } else {
                let k = g / (self.centres[f] - self.centres[f - 1]);
                j.diag[f - 1] += k / wl;
                j.diag[f] += k / wr;
                j.upper[f - 1] -= k / wl;
                j.lower[f] -= k / wr;
            }
        }
        kappa
    }

    /// Solves for u (response to unit Q: K u = coalbedo) and v (response to
    /// -A and the edge's T_s: K v = -A + Dirichlet terms).
    fn solve(&mut self, edge: Option<(usize, f64, f64)>) -> Option<()> {
        self.jac.factor().ok()?;
        for k in 0..self.n {
            self.u[k] = self.coalb[k];
            self.v[k] = -self.a;
        }
        if let Some((m, km, kp)) = edge {
            let (wl, wr) = (
                self.faces[m] - self.faces[m - 1],
                self.faces[m + 1] - self.faces[m],
            );
            self.v[m - 1] += km * self.threshold / wl;
            self.v[m] += kp * self.threshold / wr;
        }
        self.jac.solve(&mut self.u);
        self.jac.solve(&mut self.v);
        Some(())
    }

    fn mean(&self, t: impl Fn(usize) -> f64) -> f64 {
        (0..self.n)
            .map(|k| (self.faces[k + 1] - self.faces[k]) * t(k))
            .sum()
    }

    /// The one-edge state with its edge at `x` (0 < x < 1): the flux that
    /// makes it an equilibrium, or None where none exists (singular).
    pub fn edge_state(&mut self, topology: Topology, x: f64) -> Option<EdgeState> {
        let half = self.n / 2;
        self.lay(0, half, 0.0, x);
        self.lay(half, self.n, x, 1.0);
        match topology {
            Topology::PolarCap => self.cells(|k| k >= half),
            Topology::EquatorialBelt => self.cells(|k| k < half),
            _ => return None,
        }
        let (km, kp) = self.assemble(Some(half));
        self.solve(Some((half, km, kp)))?;
        // flux continuity: κ⁻ (T_s - T_{m-1}) = κ⁺ (T_m - T_s), T = Q u + v
        let m = half;
        let gu = -km * self.u[m - 1] - kp * self.u[m];
        let gv = (km + kp) * self.threshold - km * self.v[m - 1] - kp * self.v[m];
        if gu == 0.0 || !gu.is_finite() {
            return None;
        }
        let q = -gv / gu;
        let flux = 4.0 * q;
        let gm = self.mean(|k| q * self.u[k] + self.v[k]);
        (flux.is_finite() && flux > 0.0).then_some(EdgeState {
            flux,
            global_mean_c: gm,
        })
    }

    /// The corner of a no-edge branch: the flux at which the ice-free
    /// state's pole temperature (`IceFree`) or the snowball's equator
    /// temperature (`Snowball`) equals T_s, with the end temperature
    /// reconstructed by the quadratic through the three outermost cell
    /// averages.
    pub fn corner_flux(&mut self, topology: Topology) -> Option<f64> {
        let n = self.n;
        self.lay(0, n, 0.0, 1.0);
        let ice = matches!(topology, Topology::Snowball);
        self.cells(|_| ice);
        self.assemble(None);
        self.solve(None)?;
        let (idx, at): ([usize; 3], f64) = match topology {
            Topology::IceFree => ([n - 1, n - 2, n - 3], 1.0),
            Topology::Snowball => ([0, 1, 2], 0.0),
            _ => return None,
        };
        let eu = self.end_value(&self.u, idx, at);
        let ev = self.end_value(&self.v, idx, at);
        let q = (self.threshold - ev) / eu;
        (q.is_finite() && q > 0.0).then_some(4.0 * q)
    }

    /// Value at `at` of the quadratic whose averages over the cells `idx`
    /// are `t[idx]` (exact for quadratics: the averages of 1, y, y² over a
    /// cell are solved for, y = x - at).
    fn end_value(&self, t: &[f64], idx: [usize; 3], at: f64) -> f64 {
        let mut m = [[0.0; 3]; 3];
        let mut r = [0.0; 3];
        for (row, &k) in idx.iter().enumerate() {
            let (a, b) = (self.faces[k] - at, self.faces[k + 1] - at);
            let w = b - a;
            m[row] = [1.0, (b * b - a * a) / (2.0 * w), (b * b * b - a * a * a) / (3.0 * w)];
            r[row] = t[k];
        }
        // Cramer's rule for the constant coefficient
        let det = |m: &[[f64; 3]; 3]| {
            m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1])
                - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0])
                + m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0])
        };
        let mut m0 = m;
        for row in 0..3 {
            m0[row][0] = r[row];
        }
        det(&m0) / det(&m)
    }

    /// dQ/dx_s (as d flux / d x_s) by a central difference of the family.
    pub fn slope(&mut self, topology: Topology, x: f64) -> Option<f64> {
        let h = 1e-6 * x.min(1.0 - x).max(1e-9);
        let hi = self.edge_state(topology, x + h)?.flux;
        let lo = self.edge_state(topology, x - h)?.flux;
        Some((hi - lo) / (2.0 * h))
    }

    /// Whether the one-edge state at `x` is stable (slope-stability theorem).
    pub fn stable(&mut self, topology: Topology, x: f64) -> Option<bool> {
        let s = self.slope(topology, x)?;
        Some(match topology {
            Topology::PolarCap => s > 0.0,
            Topology::EquatorialBelt => s < 0.0,
            _ => true,
        })
    }

    /// Every fold of the one-edge families (extrema of the flux over the
    /// edge, sampled at `samples` edges and refined to 1e-12 in x_s) and
    /// the two corners, in ascending flux.
    pub fn folds(&mut self, samples: usize) -> Vec<SkeletonFold> {
        let mut out = Vec::new();
        let lo = 1e-4;
        let hi = 1.0 - 1e-4;
        for topology in [Topology::PolarCap, Topology::EquatorialBelt] {
            let xs: Vec<f64> = (0..=samples)
                .map(|k| lo + (hi - lo) * k as f64 / samples as f64)
                .collect();
            let slopes: Vec<Option<f64>> = xs.iter().map(|&x| self.slope(topology, x)).collect();
            for k in 1..xs.len() {
                let (Some(s0), Some(s1)) = (slopes[k - 1], slopes[k]) else {
                    continue;
                };
                if s0 == 0.0 || s0.signum() == s1.signum() {
                    continue;
                }
                if let Some(x) = self.refine(topology, xs[k - 1], xs[k], s0) {
                    if let Some(st) = self.edge_state(topology, x) {
                        out.push(SkeletonFold {
                            topology,
                            flux: st.flux,
                            edge_x: x,
                            corner: false,
                        });
                    }
                }
            }
        }
        for (topology, x) in [(Topology::IceFree, 1.0), (Topology::Snowball, 0.0)] {
            if let Some(flux) = self.corner_flux(topology) {
                out.push(SkeletonFold {
                    topology,
                    flux,
                    edge_x: x,
                    corner: true,
                });
            }
        }
        out.sort_by(|a, b| a.flux.total_cmp(&b.flux));
        out
    }

    /// Bisection on the sign of dQ/dx_s in [a, b] (slope `sa` at a).
    fn refine(&mut self, topology: Topology, mut a: f64, mut b: f64, sa: f64) -> Option<f64> {
        for _ in 0..60 {
            let m = 0.5 * (a + b);
            let sm = self.slope(topology, m)?;
            if sm.signum() == sa.signum() {
                a = m;
            } else {
                b = m;
            }
            if b - a < 1e-12 {
                break;
            }
        }
        Some(0.5 * (a + b))
    }
}
