//! The annual-mean step-albedo model with its ice edges as unknowns.
//!
//! With the step albedo (Budyko 1969) the surface is a sequence of regions of
//! one type, open or ice, separated by ice edges e_1 < … < e_k where the
//! temperature crosses the threshold T_s. Here each edge is an unknown. The
//! domain [x0, 1] (x0 = 0 on a symmetric grid, -1 on a full one) is covered
//! by one computational grid of n cells, mapped piecewise onto the regions:
//! region r always holds the same c_r cells and the edges sit on fixed
//! faces, so the faces move with the edges and no cell ever changes type.
//! The map from cell index ξ to the spacing's coordinate s (x, or the
//! latitude) is a monotone C¹ cubic Hermite spline through the knots
//! (ξ_r, s(e_r)), with the slope at an edge the harmonic mean of the mean
//! cell widths of the two regions beside it, so the grid is smoothly graded
//! and depends smoothly on the edges.
//!
//! Unknowns u = (T_1 … T_n, e_1 … e_k); equations
//!
//! ```text
//! F_i = Q ā_i - OLR(T_i) + (∇·F)_i = 0                      (each cell)
//! g_j = T(e_j) - T_s = 0                                      (each edge)
//! ```
//!
//! where ā_i is the cell mean of s(x)(1 - α(x)) with the albedo of the cell's
//! region (open: α = open + open_p2 P2(x), North et al. 1981; ice: α_ice),
//! the transport is the finite-volume diffusion D d/dx[(1 - x²) dT/dx]
//! (North 1975), the same diffusion of the moist static energy h(T)
//! ([`crate::physics::humidity`]; Hwang & Frierson 2010), or the relaxation
//! γ (T̄ - T) (Budyko 1969), and T(e_j) is the
//! temperature at the edge face: linear interpolation between the two cell
//! centres beside it for diffusion (T and its flux are continuous there), the
//! mean of both one-sided limits for relaxation (the published convention of
//! Budyko's model, where T jumps at the edge; each side extrapolated
//! linearly from its two nearest cells). Inside one topology the residual is
//! smooth in u and in every parameter: no kinks, and edges and folds
//! converge at second order with the cell count.
//!
//! Each cell balance is weighted by its width relative to a plain band,
//! w_i n / (1 - x0) (its share of the energy budget): on the plain grid the
//! weights are 1, and the balances of the tiny cells of a vanishing region
//! are not swamped by rounding. The weights make the temperature block
//! symmetric and change neither the solutions nor the stability.
//!
//! Jacobian: the temperature block is tridiagonal (plus a rank-one term for
//! relaxation), bordered by one dense column per edge (∂F/∂e_j, by central
//! differences of the residual: every face moves with an edge) and one
//! sparse row per edge (∂g_j/∂T). It is solved by block elimination in
//! O(n k): Y = A⁻¹C, S = D - R Y (k × k), then x = A⁻¹b - Y S⁻¹(b_e - R A⁻¹b).
//!
//! Stability. The edges carry no heat capacity: linearised, C λ δT =
//! A δT + C' δe, 0 = R δT + D' δe in physical coordinates (δT at fixed x),
//! where D' = diag(dT/dx at each edge). The temperature block A is negative
//! definite (OLR grows with T, diffusion and relaxation dissipate), and each
//! edge adds a symmetric positive rank-one term (the albedo jump at the edge,
//! -C' = R^T K D' with K > 0), so the number of unstable modes is the number
//! of negative eigenvalues of S D'^{-1}, where S is the Schur complement
//! above (invariant under the change from mapped to physical coordinates).
//! For one edge: unstable iff S / T'(e) < 0; in the linear diffusive model
//! this is the slope-stability theorem (Cahalan & North 1979, J. Atmos. Sci.
//! 36, 1178), which the tests check. Moist diffusion makes A = S H' with S
//! symmetric negative definite and H' = diag(h'(T_i)) > 0, so A is similar
//! to a negative definite matrix and the same count applies in the
//! variables δh = H' δT (the edge rows then carry 1/h' of the two cells
//! beside the edge, which differ by O(cell width): the count is exact
//! except within that distance of a fold); `tests/moist_transport.rs`
//! checks that stability changes only at folds on a moist trace.

use crate::model::Model;

pub use crate::model::topology::{Surface, Topology};

mod bands;
mod jacobian;
use crate::numerics::grid::Spacing;
use crate::numerics::linalg::{Singular, Tridiagonal, invert_small, negative_eigenvalues};
use crate::numerics::quad::{end_value, hermite_basis};
use crate::physics::albedo::AlbedoKind;
use crate::physics::insolation::{Insolation, InsolationLaw, InsolationTable};
use crate::physics::radiation::Olr;
use crate::physics::transport::Transport;
use std::sync::Arc;

/// A knot of the mapped grid: a domain end, an edge, or the equator of a
/// full grid inside a region that spans it.
#[derive(Clone, Copy, Debug, PartialEq)]
enum Knot {
    Low,
    High,
    Equator,
    Edge(usize),
}

/// Why the edge formulation does not apply.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum EdgeError {
    /// The model is not the annual-mean step-albedo model.
    #[error("the ice edge as an unknown needs {0}")]
    Unsupported(&'static str),
}

/// A layout of the mapped grid that cannot be built (edges out of order or
/// outside the domain).
const INVALID: f64 = 1e30;

/// The step-albedo model with ice edges as unknowns, on one topology.
#[derive(Clone)]
pub struct EdgeModel {
    /// The model whose planet holds every parameter.
    pub model: Model,
    topology: Topology,
    /// Cells of each segment: a region, or half of one where a region spans
    /// the equator of a full grid (split there by a fixed knot).
    counts: Vec<usize>,
    /// Region of each segment.
    seg_region: Vec<usize>,
    /// Face index of each knot (0, the edges and the equator, n).
    knots: Vec<usize>,
    /// The cubic Hermite basis at each face of each segment (segment s's
    /// faces from index knots[s] + s), fixed by the counts.
    basis: Vec<[f64; 4]>,
    /// What each knot is.
    knot_kind: Vec<Knot>,
    /// Face index of each edge.
    edge_face: Vec<usize>,
    n: usize,
    x0: f64,
    table: Arc<InsolationTable>,
    table_key: (f64, f64, InsolationLaw),
    faces: Vec<f64>,
    centres: Vec<f64>,
    widths: Vec<f64>,
    /// Per face f in 1..n: 1 / (c_f - c_{f-1}) and the conductance geometry
    /// (1 - x_f²) / (c_f - c_{f-1}) of the diffusive flux (entry 0 unused).
    inv_dc: Vec<f64>,
    cond: Vec<f64>,
    /// Cell means of s (1 - α) and of s, per unit flux.
    coalb: Vec<f64>,
    ins: Vec<f64>,
    /// (I, J) of the insolation table at each face, and (I', J') = (s, s P2).
    face_int: Vec<(f64, f64)>,
    face_slope: Vec<(f64, f64)>,
    /// ∂x_f/∂e_j of each face and ∂c_i/∂e_j of each centre for one edge j.
    dface: Vec<f64>,
    dcentre: Vec<f64>,
    /// The edges the geometry (faces, widths, centres, face integrals) was
    /// last laid out for, and whether that layout is current.
    laid: Vec<f64>,
    laid_ok: bool,
    valid: bool,
    // Jacobian pieces
    jac: Tridiagonal,
    /// ∂(F, g)/∂e_j, column j at [j (n + k) ..].
    cols: Vec<f64>,
    /// ∂g_j/∂T: the (cell, weight) pairs of edge j's interpolation
    /// ([`EdgeModel::edge_value`]; at most four cells, unused weights 0).
    rows: Vec<[(usize, f64); 4]>,
    /// A⁻¹ C (temperature part of each column), column j at [j n ..].
    y: Vec<f64>,
    /// Schur complement S = D - R A⁻¹ C and its inverse, k × k row-major.
    schur: Vec<f64>,
    schur_inv: Vec<f64>,
    fa: Vec<f64>,
    edges: Vec<f64>,
    ones: Vec<f64>,
    /// n / (1 - x0): the cell balances are weighted by w_i n / (1 - x0).
    per_width: f64,
    floor: f64,
}

/// Cells of the mapped grid per band of the scenario: the edge model keeps
/// a third of a hemisphere's cells in a cap however small, so it solves on
/// twice the scenario's resolution and reports on its bands. The folds of
/// North's classic model then converge at second order from 90 bands on
/// (`tests/edge_reference.rs`: relative errors 8e-7 to 1.5e-5 at 90 bands,
/// each falling by 4.0 per doubling).
pub const REFINE: usize = 2;

impl EdgeModel {
    /// The edge formulation of `model` on `topology`, with [`REFINE`] cells
    /// per band of the model. Needs the step albedo and positive diffusive or
    /// relaxation transport, and at least three cells per region.
    pub fn new(model: &Model, topology: Topology) -> Result<EdgeModel, EdgeError> {
        let table = unit_table(model);
        let pl = &model.planet;
        if !matches!(pl.albedo.kind, AlbedoKind::Step) {
            return Err(EdgeError::Unsupported(
                "the step albedo (albedo.kind = \"step\")",
            ));
        }
        match pl.transport {
            Transport::Diffusive { diffusivity } | Transport::Moist { diffusivity, .. }
                if diffusivity > 0.0 => {}
            Transport::Relaxation { rate } if rate > 0.0 => {}
            _ => return Err(EdgeError::Unsupported("positive heat transport")),
        }
        let n = REFINE * model.len();
        let r = topology.regions.len();
        if r > 3 {
            return Err(EdgeError::Unsupported("at most two ice edges"));
        }
        if r == 0 || n < 3 * r {
            return Err(EdgeError::Unsupported("at least three bands per region"));
        }
        let x0 = model.grid.faces[0];
        // regions ending at a pole get weight 1, the others 2 (4 where they
        // span the equator of a full grid): a polar cap holds a third of its
        // hemisphere's cells, the equatorward region two thirds
        let w: Vec<usize> = (0..r)
            .map(|i| {
                let touches_pole = i + 1 == r || (i == 0 && x0 < 0.0);
                let spans_equator = x0 < 0.0 && i > 0 && i + 1 < r;
                if touches_pole {
                    1
                } else if spans_equator {
                    4
                } else {
                    2
                }
            })
            .collect();
        let total: usize = w.iter().sum();
        let mut counts: Vec<usize> = w.iter().map(|wi| (n * wi / total).max(3)).collect();
        let sum: usize = counts.iter().sum();
        let big = (0..r).max_by_key(|&i| counts[i]).unwrap_or(0);
        counts[big] = (counts[big] + n).saturating_sub(sum);
        if counts.iter().sum::<usize>() != n || counts.iter().any(|&c| c < 3) {
            return Err(EdgeError::Unsupported("at least three bands per region"));
        }
        // segments: a region spanning the equator of a full grid is split
        // there, half its cells on each side
        let mut seg_counts = Vec::new();
        let mut seg_region = Vec::new();
        let mut knot_kind = vec![Knot::Low];
        for (i, &c) in counts.iter().enumerate() {
            let spans_equator = x0 < 0.0 && i > 0 && i + 1 < r;
            if spans_equator {
                seg_counts.extend([c / 2, c - c / 2]);
                seg_region.extend([i, i]);
                knot_kind.push(Knot::Equator);
            } else {
                seg_counts.push(c);
                seg_region.push(i);
            }
            knot_kind.push(if i + 1 < r { Knot::Edge(i) } else { Knot::High });
        }
        if seg_counts.iter().any(|&c| c < 3) {
            return Err(EdgeError::Unsupported("at least three bands per region"));
        }
        let mut knots = vec![0];
        for c in &seg_counts {
            knots.push(knots.last().copied().unwrap_or(0) + c);
        }
        let edge_face: Vec<usize> = knot_kind
            .iter()
            .zip(&knots)
            .filter(|(k, _)| matches!(k, Knot::Edge(_)))
            .map(|(_, f)| *f)
            .collect();
        // the Hermite basis at each face of each segment, t = i / count
        // (segment s's count + 1 faces from basis[knots[s] + s])
        let basis: Vec<[f64; 4]> = seg_counts
            .iter()
            .flat_map(|&c| (0..=c).map(move |i| hermite_basis(i as f64 / c as f64)))
            .collect();
        let counts = seg_counts;
        let k = r - 1;
        let mut jac = Tridiagonal::new(n);
        if let Transport::Relaxation { .. } = pl.transport {
            jac.rank_one = Some((vec![0.0; n], vec![0.0; n]));
        }
        Ok(EdgeModel {
            model: model.clone(),
            topology,
            counts,
            seg_region,
            knots,
            basis,
            knot_kind,
            edge_face,
            n,
            x0,
            table,
            table_key: insolation_key(model),
            faces: vec![0.0; n + 1],
            centres: vec![0.0; n],
            widths: vec![0.0; n],
            inv_dc: vec![0.0; n],
            cond: vec![0.0; n],
            coalb: vec![0.0; n],
            ins: vec![0.0; n],
            face_int: vec![(0.0, 0.0); n + 1],
            face_slope: vec![(0.0, 0.0); n + 1],
            dface: vec![0.0; n + 1],
            dcentre: vec![0.0; n],
            laid: vec![f64::NAN; k],
            laid_ok: false,
            valid: false,
            jac,
            cols: vec![0.0; (n + k) * k],
            rows: vec![[(0, 0.0); 4]; k],
            y: vec![0.0; n * k],
            schur: vec![0.0; k * k],
            schur_inv: vec![0.0; k * k],
            fa: vec![0.0; n + k],
            edges: vec![0.0; k],
            ones: vec![1.0; n],
            per_width: n as f64 / (1.0 - x0),
            floor: 0.0,
        })
    }

    /// The topology.
    pub fn topology(&self) -> &Topology {
        &self.topology
    }

    /// Number of cells n.
    pub fn cells(&self) -> usize {
        self.n
    }

    /// Number of unknowns n + k.
    pub fn dim(&self) -> usize {
        self.n + self.topology.edges()
    }

    /// Number of edges k.
    pub fn edge_count(&self) -> usize {
        self.topology.edges()
    }

    /// The low end of the domain (0 or -1).
    pub fn low_end(&self) -> f64 {
        self.x0
    }

    /// The insolation table (per unit flux).
    pub fn table(&self) -> &InsolationTable {
        &self.table
    }

    /// Takes the insolation table of the current orbit if an orbital
    /// parameter changed ([`InsolationTable::shared`]: a central difference
    /// that restores the parameter finds its table again).
    pub fn refresh(&mut self) {
        let key = insolation_key(&self.model);
        if key != self.table_key {
            self.table = unit_table(&self.model);
            self.table_key = key;
            self.laid_ok = false;
        }
    }

    fn coord(&self, x: f64) -> f64 {
        match self.model.grid.spacing {
            Spacing::Sine => x,
            Spacing::Latitude => x.clamp(-1.0, 1.0).asin(),
        }
    }

    fn uncoord(&self, s: f64) -> f64 {
        match self.model.grid.spacing {
            Spacing::Sine => s,
            Spacing::Latitude => s.sin(),
        }
    }

    /// Lays the mapped grid for `edges` (ascending, inside the domain);
    /// marks the layout invalid otherwise.
    fn layout(&mut self, edges: &[f64]) {
        if self.laid_ok && self.valid && self.laid.as_slice() == edges {
            // same geometry: only the albedo may have changed
            self.fill_coalbedo();
            return;
        }
        self.laid_ok = false;
        let segs = self.counts.len();
        let mut ks = [0.0; 6];
        for (i, v) in ks.iter_mut().enumerate().take(segs + 1) {
            *v = match self.knot_kind[i] {
                Knot::Low => self.coord(self.x0),
                Knot::High => self.coord(1.0),
                Knot::Equator => 0.0,
                Knot::Edge(j) => self.coord(edges[j]),
            };
        }
        let knot_s = |i: usize| ks[i];
        self.valid = true;
        let mut prev = knot_s(0);
        for i in 1..=segs {
            let s = knot_s(i);
            if s.partial_cmp(&prev) != Some(std::cmp::Ordering::Greater) || !s.is_finite() {
                self.valid = false;
                return;
            }
            prev = s;
        }
        for seg in 0..segs {
            let (sa, sb) = (knot_s(seg), knot_s(seg + 1));
            let c = self.counts[seg] as f64;
            let h = (sb - sa) / c;
            let slope_at = |i: usize| -> f64 {
                // harmonic mean of the mean widths beside knot i
                if i == 0 || i == segs {
                    return h;
                }
                let hl = (knot_s(i) - knot_s(i - 1)) / self.counts[i - 1] as f64;
                let hr = (knot_s(i + 1) - knot_s(i)) / self.counts[i] as f64;
                2.0 * hl * hr / (hl + hr)
            };
            let (ma, mb) = (slope_at(seg) * c, slope_at(seg + 1) * c);
            let base = self.knots[seg];
            let cnt = self.counts[seg];
            let hs = &self.basis[base + seg..=base + seg + cnt];
            let sine = self.model.grid.spacing == Spacing::Sine;
            for (x, h) in self.faces[base..=base + cnt].iter_mut().zip(hs) {
                let s = h[0] * sa + h[1] * ma + h[2] * sb + h[3] * mb;
                *x = if sine { s } else { s.sin() };
            }
            self.faces[base] = match self.knot_kind[seg] {
                Knot::Low => self.x0,
                Knot::Edge(j) => edges[j],
                _ => self.uncoord(sa),
            };
        }
        self.faces[self.n] = 1.0;
        for ((f, d), x) in self
            .face_int
            .iter_mut()
            .zip(&mut self.face_slope)
            .zip(&self.faces)
        {
            let (i, j, di, dj) = self.table.integrals_and_slopes(*x);
            *f = (i, j);
            *d = (di, dj);
        }
        for i in 0..self.n {
            let (lo, hi) = (self.faces[i], self.faces[i + 1]);
            let w = hi - lo;
            if w.is_nan() || w <= 0.0 {
                self.valid = false;
                return;
            }
            self.widths[i] = w;
            self.centres[i] = match self.model.grid.spacing {
                Spacing::Sine => 0.5 * (lo + hi),
                Spacing::Latitude => (0.5 * (lo.asin() + hi.asin())).sin(),
            };
            self.ins[i] = (self.face_int[i + 1].0 - self.face_int[i].0) / w;
        }
        for face in 1..self.n {
            let x = self.faces[face];
            let r = 1.0 / (self.centres[face] - self.centres[face - 1]);
            self.inv_dc[face] = r;
            self.cond[face] = (1.0 - x * x) * r;
        }
        self.fill_coalbedo();
        self.laid.copy_from_slice(edges);
        self.laid_ok = true;
    }

    /// Cell means of s (1 - α) from the face integrals:
    /// ice (1 - α_ice) ΔI / w; open ((1 - α_0) ΔI - α_2 ΔJ) / w.
    fn fill_coalbedo(&mut self) {
        let al = self.model.planet.albedo;
        for seg in 0..self.counts.len() {
            let ice = self.topology.regions[self.seg_region[seg]] == Surface::Ice;
            for i in self.knots[seg]..self.knots[seg + 1] {
                let (s0, p0) = self.face_int[i];
                let (s1, p1) = self.face_int[i + 1];
                let w = self.widths[i];
                self.coalb[i] = if ice {
                    (1.0 - al.ice) * (s1 - s0) / w
                } else {
                    ((1.0 - al.open) * (s1 - s0) - al.open_p2 * (p1 - p0)) / w
                };
            }
        }
    }

    fn olr(&self) -> Olr {
        Olr {
            law: self.model.planet.olr,
            forcing: self.model.forcing(),
        }
    }

    /// The temperature at edge j's face and its weights on the cells:
    /// (value, [(cell, weight); 4]) with unused slots of weight 0.
    fn edge_value(&self, j: usize, t: &[f64]) -> (f64, [(usize, f64); 4]) {
        let m = self.edge_face[j];
        let x = self.faces[m];
        let c = &self.centres;
        match self.model.planet.transport {
            Transport::Relaxation { .. } => {
                // mean of the one-sided limits, each extrapolated linearly
                let al = (x - c[m - 1]) / (c[m - 1] - c[m - 2]);
                let ar = (x - c[m]) / (c[m + 1] - c[m]);
                let w = [
                    (m - 2, -0.5 * al),
                    (m - 1, 0.5 * (1.0 + al)),
                    (m, 0.5 * (1.0 - ar)),
                    (m + 1, 0.5 * ar),
                ];
                (w.iter().map(|(i, a)| a * t[*i]).sum(), w)
            }
            Transport::Diffusive { .. } | Transport::Moist { .. } => {
                let th = (c[m] - x) / (c[m] - c[m - 1]);
                let w = [(m - 1, th), (m, 1.0 - th), (m, 0.0), (m, 0.0)];
                (th * t[m - 1] + (1.0 - th) * t[m], w)
            }
        }
    }

    /// Residual (F, g) at u = (T, e) into `f` (n + k entries), on the
    /// current layout.
    fn residual_on_layout(&self, u: &[f64], f: &mut [f64]) {
        let n = self.n;
        let k = self.edge_count();
        if !self.valid {
            f.fill(INVALID);
            return;
        }
        let t = &u[..n];
        let q = self.model.planet.orbit.flux;
        let olr = self.olr();
        // F_i = (w_i (Q s̄_i (1 - α) - OLR(T_i)) + G_{i+1/2} - G_{i-1/2}) / w̄
        // with the diffusive flux G_f = D (1 - x_f²) (T_f - T_{f-1}) / (c_f - c_{f-1})
        // (moist: h(T_f) - h(T_{f-1}))
        // (relaxation: the cell term gains rate (T̄ - T_i), no face fluxes)
        let pw = self.per_width;
        let (rate, tbar) = match self.model.planet.transport {
            Transport::Relaxation { rate } => (rate, self.mean(t)),
            Transport::Diffusive { .. } | Transport::Moist { .. } => (0.0, 0.0),
        };
        for i in 0..n {
            let cell = q * self.coalb[i] - olr.value_and_slope(t[i]).0;
            let cell = if rate != 0.0 {
                cell + rate * (tbar - t[i])
            } else {
                cell
            };
            f[i] = cell * (self.widths[i] * pw);
        }
        let law = self.model.planet.transport;
        if let Some(diffusivity) = law.diffusivity() {
            // the moist law diffuses h(T) instead of T (h = T for the dry one)
            let dp = diffusivity * pw;
            let mut below = law.energy_and_slope(t[0]).0;
            for face in 1..n {
                let above = law.energy_and_slope(t[face]).0;
                let g = dp * self.cond[face] * (above - below);
                f[face - 1] += g;
                f[face] -= g;
                below = above;
            }
        }
        let ts = self.model.planet.albedo.threshold;
        for j in 0..k {
            f[n + j] = self.edge_value(j, t).0 - ts;
        }
    }

    fn mean(&self, v: &[f64]) -> f64 {
        let span = 1.0 - self.x0;
        self.widths.iter().zip(v).map(|(w, v)| w * v).sum::<f64>() / span
    }

    /// Residual (F, g) at u into `f`. Allocates nothing.
    pub fn residual(&mut self, u: &[f64], f: &mut [f64]) {
        let n = self.n;
        let mut e = std::mem::take(&mut self.edges);
        e.copy_from_slice(&u[n..]);
        self.layout(&e);
        self.edges = e;
        self.residual_on_layout(u, f);
    }

    /// The rounding level of max |(F, g)| at the last factored state (8 ulps
    /// of the largest sum of magnitudes of a weighted balance's terms).
    pub fn residual_floor(&self) -> f64 {
        self.floor
    }

    /// How far u is inside its topology: positive while every region is
    /// wider than 1e-6 of the domain and every cell, and the
    /// temperature reconstructed at both domain ends, lies on its region's
    /// side of T_s; zero where a region vanishes or a new one appears.
    /// Continuous in u, in units of K (region widths scaled by 100 K per
    /// unit x).
    pub fn margin(&mut self, u: &[f64]) -> f64 {
        let n = self.n;
        let k = self.edge_count();
        let span = 1.0 - self.x0;
        let delta = 1e-6 * span;
        let mut m = f64::INFINITY;
        for w in self.knot_kind.windows(2) {
            m = m.min(100.0 * (self.knot_x(w[1], u) - self.knot_x(w[0], u) - delta));
        }
        let mut e = std::mem::take(&mut self.edges);
        e.copy_from_slice(&u[n..]);
        self.layout(&e);
        self.edges = e;
        if !self.valid {
            return m.min(-1.0);
        }
        let ts = self.model.planet.albedo.threshold;
        let side = |s: Surface| if s == Surface::Open { 1.0 } else { -1.0 };
        for seg in 0..self.counts.len() {
            let sg = side(self.topology.regions[self.seg_region[seg]]);
            for i in self.knots[seg]..self.knots[seg + 1] {
                m = m.min(sg * (u[i] - ts));
            }
        }
        let t = &u[..n];
        let lo = self.end_value(t, [0, 1, 2], self.x0);
        let hi = self.end_value(t, [n - 1, n - 2, n - 3], 1.0);
        m = m.min(side(self.topology.regions[0]) * (lo - ts));
        m.min(side(self.topology.regions[k]) * (hi - ts))
    }

    /// [`end_value`] on the current cells.
    fn end_value(&self, t: &[f64], idx: [usize; 3], at: f64) -> f64 {
        end_value(&self.faces, t, idx, at)
    }

    /// ∂(F, g)/∂q at u where it is known in closed form: where the residual
    /// is affine in q (flux, radiation.a, radiation.b, radiation.forcing,
    /// CO2 through its forcing 5.35 ln(C/C0) (Myhre et al. 1998),
    /// albedo.threshold), and the eccentricity of the orbital law, which
    /// scales the annual-mean insolation by (1 - e²)^(-1/2) and nothing else
    /// (Kepler's second law, see [`Insolation::annual_mean`]), so
    /// ∂F/∂e = S0 e / (1 - e²) ∂F/∂S0; `false` for every other parameter.
    pub fn d_linear(&mut self, q: crate::model::Param, u: &[f64], out: &mut [f64]) -> bool {
        use crate::model::Param;
        let n = self.n;
        let mut e = std::mem::take(&mut self.edges);
        e.copy_from_slice(&u[n..]);
        self.layout(&e);
        self.edges = e;
        let linear = matches!(
            self.model.planet.olr,
            crate::physics::radiation::OlrLaw::Linear { .. }
        );
        out[n..].fill(0.0);
        let o = self.model.planet.orbit;
        let orbital = matches!(self.model.planet.insolation, InsolationLaw::Orbital);
        let de = crate::physics::insolation::eccentricity_flux_factor(o.flux, o.eccentricity);
        for i in 0..n {
            let w = self.widths[i] * self.per_width;
            out[i] = match q {
                Param::Flux => self.coalb[i] * w,
                Param::Eccentricity if orbital => de * self.coalb[i] * w,
                Param::OlrA if linear => -w,
                Param::OlrB if linear => -u[i] * w,
                Param::Co2 => 5.35 / self.model.planet.co2_ppm * w,
                Param::Forcing => w,
                Param::Threshold => 0.0,
                _ => return false,
            };
        }
        if q == Param::Threshold {
            out[n..].fill(-1.0);
        }
        true
    }

    /// x of a knot at state u.
    fn knot_x(&self, kind: Knot, u: &[f64]) -> f64 {
        match kind {
            Knot::Low => self.x0,
            Knot::High => 1.0,
            Knot::Equator => 0.0,
            Knot::Edge(j) => u[self.n + j],
        }
    }

    /// The ascending ice intervals [a, b] in x of state u.
    fn ice_intervals(&self, u: &[f64]) -> Vec<(f64, f64)> {
        let n = self.n;
        let k = self.edge_count();
        (0..=k)
            .filter(|&reg| self.topology.regions[reg] == Surface::Ice)
            .map(|reg| {
                let a = if reg == 0 { self.x0 } else { u[n + reg - 1] };
                let b = if reg == k { 1.0 } else { u[n + reg] };
                (a, b)
            })
            .collect()
    }
}

/// What the annual-mean insolation table depends on (not the flux, which
/// scales it, nor the perihelion, which the annual mean does not see).
/// The shared insolation table of `model`'s orbit per unit flux.
fn unit_table(model: &Model) -> Arc<InsolationTable> {
    let mut unit = model.planet.orbit;
    unit.flux = 1.0;
    InsolationTable::shared(
        &Insolation::new(unit, model.planet.insolation),
        crate::physics::insolation::TABLE_NODES,
    )
}

fn insolation_key(model: &Model) -> (f64, f64, InsolationLaw) {
    let o = model.planet.orbit;
    (o.obliquity, o.eccentricity, model.planet.insolation)
}
