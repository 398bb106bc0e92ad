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
//! the edge: a fixed two thirds of the cells cover [0, x_s] and the rest
//! [x_s, 1] (in x or in latitude, as the scenario's spacing, smoothly graded
//! so that cells beside the edge have equal widths), and the edge is a face.
//! For fixed x_s the finite-volume balance (conservative, as in
//! [`crate::model::Model`]) is linear: T = Q u + v with two tridiagonal
//! solves, and the edge condition T(x_s) = T_s, with T at the face
//! interpolated between the two centres beside it, is one linear equation
//! for Q. The cell count of each region is fixed, so Q(x_s)
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
use crate::numerics::quad::end_value;
use crate::physics::albedo::AlbedoKind;
use crate::physics::insolation::{Insolation, InsolationTable};
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
    /// Flux S0 at the fold, W m-2.
    pub flux: f64,
    /// The edge, x_s = sin(latitude).
    pub edge_x: f64,
    /// `true` for a corner: the end of the ice-free branch (a cap or belt
    /// appears) or of the snowball branch (the equator thaws).
    pub corner: bool,
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
    table: std::sync::Arc<InsolationTable>,
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
            return Err(SkeletonError::Unsupported(
                "linear OLR (radiation.kind = \"linear\")",
            ));
        };
        let Transport::Diffusive { diffusivity } = pl.transport else {
            return Err(SkeletonError::Unsupported(
                "diffusive transport (transport.kind = \"diffusive\")",
            ));
        };
        if !matches!(pl.albedo.kind, AlbedoKind::Step) {
            return Err(SkeletonError::Unsupported(
                "the step albedo (albedo.kind = \"step\")",
            ));
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
            table: InsolationTable::shared(&ins, crate::physics::insolation::TABLE_NODES),
            faces: vec![0.0; n + 1],
            centres: vec![0.0; n],
            coalb: vec![0.0; n],
            jac: Tridiagonal::new(n),
            u: vec![0.0; n],
            v: vec![0.0; n],
        })
    }

    /// Cells on the equatorward side of the edge: two thirds of them (a
    /// count fixed along every branch, so the family stays smooth).
    fn split(&self) -> usize {
        (2 * self.n / 3).clamp(2, self.n - 2)
    }

    /// The spacing's coordinate of x (x itself, or the latitude) and back.
    fn coord(&self, x: f64) -> f64 {
        match self.spacing {
            Spacing::Sine => x,
            Spacing::Latitude => x.clamp(0.0, 1.0).asin(),
        }
    }

    fn uncoord(&self, s: f64) -> f64 {
        match self.spacing {
            Spacing::Sine => s,
            Spacing::Latitude => s.sin(),
        }
    }

    /// Faces with the edge at face `m`: cells 0..m cover [0, x], cells
    /// m..n cover [x, 1], in the spacing's coordinate s. The map from cell
    /// index to s is quadratic on each side and its slope is continuous at
    /// the edge (the longer region's cells shrink linearly towards the
    /// edge to the width of the shorter region's), so the grid is smoothly
    /// graded and the finite volumes stay second order for every edge,
    /// with the same cell counts everywhere on the branch.
    fn lay_edge(&mut self, m: usize, x: f64) {
        let n = self.n;
        let (se, send) = (self.coord(x), self.coord(1.0));
        let (wa, wb) = (se / m as f64, (send - se) / (n - m) as f64);
        let r = wa / wb;
        let (alpha, beta) = if r >= 1.0 {
            (2.0 - 1.0 / r, 1.0)
        } else {
            (1.0, r)
        };
        for k in 0..=n {
            let s = if k <= m {
                let t = k as f64 / m as f64;
                se * (alpha * t + (1.0 - alpha) * t * t)
            } else {
                let t = (k - m) as f64 / (n - m) as f64;
                se + (send - se) * (beta * t + (1.0 - beta) * t * t)
            };
            self.faces[k] = self.uncoord(s);
        }
        self.faces[m] = x;
        self.faces[n] = 1.0;
    }

    /// Faces of the plain grid (no edge): equal steps in the coordinate.
    fn lay_plain(&mut self) {
        let n = self.n;
        let send = self.coord(1.0);
        for k in 0..=n {
            self.faces[k] = self.uncoord(send * k as f64 / n as f64);
        }
        self.faces[n] = 1.0;
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

    /// Assembles K = B - div(D (1 - x²) d/dx) on the current cells
    /// (finite volumes, no flux through the equator or the pole), factors
    /// it and solves K u = (S/S0)(1 - α) and K v = -A: the equilibrium at
    /// flux S0 is T = S0 u + v.
    fn solve(&mut self) -> Option<()> {
        let n = self.n;
        let j = &mut self.jac;
        j.clear();
        for k in 0..n {
            j.diag[k] = self.b;
        }
        for f in 1..n {
            let xf = self.faces[f];
            let k = self.d * (1.0 - xf * xf) / (self.centres[f] - self.centres[f - 1]);
            let (wl, wr) = (
                self.faces[f] - self.faces[f - 1],
                self.faces[f + 1] - self.faces[f],
            );
            j.diag[f - 1] += k / wl;
            j.diag[f] += k / wr;
            j.upper[f - 1] -= k / wl;
            j.lower[f] -= k / wr;
        }
        self.jac.factor().ok()?;
        for k in 0..n {
            self.u[k] = self.coalb[k];
            self.v[k] = -self.a;
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
        let half = self.split();
        self.lay_edge(half, x);
        match topology {
            Topology::PolarCap => self.cells(|k| k >= half),
            Topology::EquatorialBelt => self.cells(|k| k < half),
            _ => return None,
        }
        self.solve()?;
        // T at the edge face, interpolated linearly between the two centres
        // beside it (T and its flux are continuous there): T_e = Q u_e + v_e
        let m = half;
        let (cl, cr) = (self.centres[m - 1], self.centres[m]);
        let wl = (cr - x) / (cr - cl);
        let ue = wl * self.u[m - 1] + (1.0 - wl) * self.u[m];
        let ve = wl * self.v[m - 1] + (1.0 - wl) * self.v[m];
        if ue == 0.0 || !ue.is_finite() {
            return None;
        }
        let q = (self.threshold - ve) / ue;
        let flux = q;
        let gm = self.mean(|k| q * self.u[k] + self.v[k]);
        (flux.is_finite() && flux > 0.0).then_some(EdgeState {
            flux,
            global_mean_c: gm,
        })
    }

    /// The one-edge state at `x` with its cell temperatures: (flux,
    /// [(cell centre x, T °C)]). The family solves only T(x_s) = T_s; a
    /// state is an equilibrium of the step-albedo model only where every
    /// ice cell is below T_s and every open cell above (the caller checks).
    pub fn edge_profile(&mut self, topology: Topology, x: f64) -> Option<(f64, Vec<(f64, f64)>)> {
        let q = self.edge_state(topology, x)?.flux;
        let t = (0..self.n)
            .map(|k| (self.centres[k], q * self.u[k] + self.v[k]))
            .collect();
        Some((q, t))
    }

    /// The threshold temperature T_s, °C.
    pub fn threshold(&self) -> f64 {
        self.threshold
    }

    /// The corner of a no-edge branch: the flux at which the ice-free
    /// state's pole temperature (`IceFree`) or the snowball's equator
    /// temperature (`Snowball`) equals T_s, with the end temperature
    /// reconstructed by the quadratic through the three outermost cell
    /// averages.
    pub fn corner_flux(&mut self, topology: Topology) -> Option<f64> {
        let n = self.n;
        self.lay_plain();
        let ice = matches!(topology, Topology::Snowball);
        self.cells(|_| ice);
        self.solve()?;
        let (idx, at): ([usize; 3], f64) = match topology {
            Topology::IceFree => ([n - 1, n - 2, n - 3], 1.0),
            Topology::Snowball => ([0, 1, 2], 0.0),
            _ => return None,
        };
        let eu = self.end_value(&self.u, idx, at);
        let ev = self.end_value(&self.v, idx, at);
        let q = (self.threshold - ev) / eu;
        (q.is_finite() && q > 0.0).then_some(q)
    }

    /// [`end_value`] on the current cells.
    fn end_value(&self, t: &[f64], idx: [usize; 3], at: f64) -> f64 {
        end_value(&self.faces, t, idx, at)
    }

    /// dQ/dx_s (as d flux / d x_s) by a central difference of the family.
    pub fn slope(&mut self, topology: Topology, x: f64) -> Option<f64> {
        let h = 1e-5 * x.min(1.0 - x).max(1e-12);
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
        for topology in [Topology::PolarCap, Topology::EquatorialBelt] {
            // Chebyshev-spaced edges: dense near the equator and the pole,
            // where small caps and belts turn
            // Within one plain cell (1/n) of the snowball corner (where the
            // open region vanishes: a cap's edge at the equator, a belt's at
            // the pole) the limit of the edge family and the snowball, which
            // is solved on the plain grid, differ by their discretisation
            // errors, and that difference would show as a turning point: the
            // corner is reported from the snowball branch instead.
            let cell = 1.0 / self.n as f64;
            let (lo, hi) = match topology {
                Topology::PolarCap => (cell, 1.0),
                _ => (0.0, 1.0 - cell),
            };
            let xs: Vec<f64> = (1..samples)
                .map(|k| 0.5 * (1.0 - (std::f64::consts::PI * k as f64 / samples as f64).cos()))
                .map(|t| lo + (hi - lo) * t)
                .collect();
            let slopes: Vec<Option<f64>> = xs.iter().map(|&x| self.slope(topology, x)).collect();
            for k in 1..xs.len() {
                let (Some(s0), Some(s1)) = (slopes[k - 1], slopes[k]) else {
                    continue;
                };
                if s0 == 0.0 || s0.signum() == s1.signum() {
                    continue;
                }
                if let Some(x) = self.refine(topology, xs[k - 1], xs[k], s0)
                    && let Some(st) = self.edge_state(topology, x)
                {
                    out.push(SkeletonFold {
                        topology,
                        flux: st.flux,
                        edge_x: x,
                        corner: false,
                    });
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
