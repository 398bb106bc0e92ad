//! The edge model against the scenario's fixed bands: first guesses from
//! band temperatures, states remapped onto the bands, and diagnostics with
//! the exact edges.

use super::EdgeModel;
use crate::model::climate::{Diagnostics, classify_ice, hemisphere_ice_edges};
use crate::numerics::grid::Grid;

impl EdgeModel {
    /// A first guess in this topology from band temperatures of `grid` and
    /// the edges `edges`: the bands interpolated linearly onto the mapped
    /// cell centres.
    pub fn guess(&mut self, grid: &Grid, bands: &[f64], edges: &[f64], u: &mut [f64]) -> bool {
        let n = self.n;
        self.layout(edges);
        if !self.valid {
            return false;
        }
        let c = &grid.centres;
        for i in 0..n {
            let x = self.centres[i];
            let j = c.partition_point(|&y| y < x).clamp(1, c.len() - 1);
            let a = ((x - c[j - 1]) / (c[j] - c[j - 1])).clamp(0.0, 1.0);
            u[i] = bands[j - 1] + a * (bands[j] - bands[j - 1]);
        }
        u[n..].copy_from_slice(edges);
        true
    }

    /// The state on the bands of `grid` (the scenario's), conservatively:
    /// each mapped cell's profile is linear (slope from its neighbours in
    /// the same region) with the cell's mean, integrated over each band.
    pub fn to_bands(&mut self, u: &[f64], grid: &Grid) -> Vec<f64> {
        let n = self.n;
        let mut e = std::mem::take(&mut self.edges);
        e.copy_from_slice(&u[n..]);
        self.layout(&e);
        self.edges = e;
        let t = &u[..n];
        let mut slope = vec![0.0; n];
        for seg in 0..self.counts.len() {
            let (a, b) = (self.knots[seg], self.knots[seg + 1]);
            for i in a..b {
                let (l, r) = (
                    if i > a { i - 1 } else { i },
                    if i + 1 < b { i + 1 } else { i },
                );
                if r > l {
                    slope[i] = (t[r] - t[l]) / (self.centres[r] - self.centres[l]);
                }
            }
        }
        let mut out = vec![0.0; grid.len()];
        let mut i = 0;
        for (band, o) in out.iter_mut().enumerate() {
            let (ba, bb) = (grid.faces[band], grid.faces[band + 1]);
            while i + 1 < n && self.faces[i + 1] <= ba {
                i += 1;
            }
            let mut acc = 0.0;
            let mut j = i;
            while j < n && self.faces[j] < bb {
                let (lo, hi) = (self.faces[j].max(ba), self.faces[j + 1].min(bb));
                if hi > lo {
                    // ∫ (T_j + slope (x - centroid)) dx, centroid of the cell in x
                    let xm = 0.5 * (self.faces[j] + self.faces[j + 1]);
                    let mid = 0.5 * (lo + hi);
                    acc += (hi - lo) * (t[j] + slope[j] * (mid - xm));
                }
                j += 1;
            }
            *o = acc / (bb - ba);
        }
        out
    }

    /// Diagnostics of u (exact edges, not from the bands), except the
    /// habitable fraction, which is that of `bands`: the profile the point
    /// reports on the scenario's bands ([`EdgeModel::to_bands`] of u), so
    /// that it can be recomputed from the reported temperatures.
    pub fn diagnostics(&mut self, u: &[f64], bands: &[f64]) -> Diagnostics {
        let n = self.n;
        let k = self.edge_count();
        let mut f = vec![0.0; n + k];
        self.residual(u, &mut f);
        let t = &u[..n];
        let span = 1.0 - self.x0;
        let symmetric = self.model.grid.symmetric;
        let intervals = self.ice_intervals(u);
        let (edges, state) = classify_ice(&intervals, self.x0, 1.0, symmetric);
        let (north, south) = hemisphere_ice_edges(&intervals, symmetric);
        let covered: f64 = intervals.iter().map(|(a, b)| b - a).sum();
        let q = self.model.planet.orbit.flux;
        let ins = self.mean(&self.ins) * q;
        let abs = self.mean(&self.coalb) * q;
        Diagnostics {
            global_mean_c: self.mean(t),
            ice_area_fraction: (covered / span).clamp(0.0, 1.0),
            ice_edges_deg: edges,
            ice_edge_north_deg: north,
            ice_edge_south_deg: south,
            planetary_albedo: if ins > 0.0 { 1.0 - abs / ins } else { 0.0 },
            state,
            energy_imbalance: f[..n].iter().sum::<f64>() / n as f64,
            habitable_fraction: self.model.habitable_fraction(bands),
        }
    }
}
