//! The bordered Jacobian of the edge model: the tridiagonal temperature
//! block, analytic edge columns, the edge rows, block elimination through
//! the Schur complement, transposed solves and the stability count.

use super::*;

impl EdgeModel {
    /// ∂(F, g)/∂e_j at u on the current layout, by the chain rule through
    /// the faces: ∂x_f/∂e_j from the Hermite map of each segment (its knots
    /// and harmonic-mean knot slopes), then
    ///
    /// F_i = P [q (A(x_{i+1}) - A(x_i)) - w_i OLR(T_i) + G_{i+1} - G_i],
    /// G_f = D (1 - x_f²)(T_f - T_{f-1}) / (c_f - c_{f-1}),
    ///
    /// with A' = (1 - α) s from the insolation table (relaxation: the
    /// transport term R w_i (T̄ - T_i), T̄ = Σ w T / span), and the edge
    /// rows through the interpolation weights of [`EdgeModel::edge_value`].
    fn edge_column(&mut self, j: usize, u: &[f64], col: &mut [f64]) {
        let n = self.n;
        let k = self.edge_count();
        let segs = self.counts.len();
        let lat = self.model.grid.spacing == Spacing::Latitude;
        // knots in the computational coordinate and their derivatives
        let (mut ks, mut dks) = ([0.0; 6], [0.0; 6]);
        for i in 0..=segs {
            let x = self.knot_x(self.knot_kind[i], u);
            ks[i] = self.coord(x);
            if self.knot_kind[i] == Knot::Edge(j) {
                dks[i] = if lat {
                    1.0 / (1.0 - x * x).max(f64::MIN_POSITIVE).sqrt()
                } else {
                    1.0
                };
            }
        }
        let width = |i: usize| (ks[i + 1] - ks[i]) / self.counts[i] as f64;
        let dwidth = |i: usize| (dks[i + 1] - dks[i]) / self.counts[i] as f64;
        // knot slope (per computational cell) and its derivative
        let slope = |i: usize, seg: usize| -> (f64, f64) {
            if i == 0 || i == segs {
                return (width(seg), dwidth(seg));
            }
            let (hl, hr) = (width(i - 1), width(i));
            let (dl, dr) = (dwidth(i - 1), dwidth(i));
            let sum = hl + hr;
            (
                2.0 * hl * hr / sum,
                2.0 * (dl * hr + hl * dr) / sum - 2.0 * hl * hr * (dl + dr) / (sum * sum),
            )
        };
        for seg in 0..segs {
            let (dsa, dsb) = (dks[seg], dks[seg + 1]);
            let c = self.counts[seg] as f64;
            let (dma, dmb) = (slope(seg, seg).1 * c, slope(seg + 1, seg).1 * c);
            let base = self.knots[seg];
            let cnt = self.counts[seg];
            let hs = &self.basis[base + seg..=base + seg + cnt];
            let fs = &self.faces[base..=base + cnt];
            for ((d, h), x) in self.dface[base..=base + cnt].iter_mut().zip(hs).zip(fs) {
                let ds = h[0] * dsa + h[1] * dma + h[2] * dsb + h[3] * dmb;
                *d = if lat {
                    (1.0 - x * x).max(0.0).sqrt() * ds
                } else {
                    ds
                };
            }
            self.dface[base] = match self.knot_kind[seg] {
                Knot::Low => 0.0,
                Knot::Edge(jj) => {
                    if jj == j {
                        1.0
                    } else {
                        0.0
                    }
                }
                _ => {
                    let x = self.faces[base];
                    if lat {
                        (1.0 - x * x).max(0.0).sqrt() * dsa
                    } else {
                        dsa
                    }
                }
            };
        }
        self.dface[n] = 0.0;
        // centres
        let (faces, dface) = (&self.faces[..=n], &self.dface[..=n]);
        for ((dcen, x), d) in self.dcentre[..n]
            .iter_mut()
            .zip(faces.windows(2))
            .zip(dface.windows(2))
        {
            let (dlo, dhi) = (d[0], d[1]);
            *dcen = if lat {
                let (lo, hi) = (x[0], x[1]);
                let da = |x: f64, d: f64| {
                    if d == 0.0 {
                        0.0
                    } else {
                        d / (1.0 - x * x).sqrt()
                    }
                };
                let mid = 0.5 * (lo.asin() + hi.asin());
                mid.cos() * 0.5 * (da(lo, dlo) + da(hi, dhi))
            } else {
                0.5 * (dlo + dhi)
            };
        }
        // cell balances: q (A'(x_{i+1}) x'_{i+1} - A'(x_i) x'_i) - w'_i OLR(T_i),
        // A' = (1 - α) s on the cell's segment
        let t = &u[..n];
        let q = self.model.planet.orbit.flux;
        let al = self.model.planet.albedo;
        let olr = self.olr();
        for seg in 0..segs {
            let ice = self.topology.regions[self.seg_region[seg]] == Surface::Ice;
            let (lo, hi) = (self.knots[seg], self.knots[seg + 1]);
            let da = |(s, sp2): (f64, f64), d: f64| {
                let a = if ice {
                    (1.0 - al.ice) * s
                } else {
                    (1.0 - al.open) * s - al.open_p2 * sp2
                };
                a * d
            };
            let slopes = &self.face_slope[lo..=hi];
            let ds = &dface[lo..=hi];
            let mut left = da(slopes[0], ds[0]);
            for (((ci, ti), sl), d) in col[lo..hi]
                .iter_mut()
                .zip(&t[lo..hi])
                .zip(slopes.windows(2))
                .zip(ds.windows(2))
            {
                let right = da(sl[1], d[1]);
                *ci = q * (right - left) - (d[1] - d[0]) * olr.value_and_slope(*ti).0;
                left = right;
            }
        }
        match self.model.planet.transport {
            law @ (Transport::Diffusive { diffusivity } | Transport::Moist { diffusivity, .. }) => {
                // dG_f/de = D (T_f - T_{f-1}) (-2 x_f x_f' - (1 - x_f²) Δc' / Δc) / Δc
                // (moist: h(T_f) - h(T_{f-1}); the cell temperatures are fixed)
                let dcen = &self.dcentre[..n];
                let mut below = law.energy_and_slope(t[0]).0;
                for face in 1..n {
                    let above = law.energy_and_slope(t[face]).0;
                    let x = faces[face];
                    let ddc = dcen[face] - dcen[face - 1];
                    let dg = diffusivity
                        * (above - below)
                        * self.inv_dc[face]
                        * (-2.0 * x * dface[face] - self.cond[face] * ddc);
                    col[face - 1] += dg;
                    col[face] -= dg;
                    below = above;
                }
            }
            Transport::Relaxation { rate } => {
                let span = 1.0 - self.x0;
                let tbar = self.mean(t);
                let dtbar: f64 = (0..n)
                    .map(|i| (self.dface[i + 1] - self.dface[i]) * t[i])
                    .sum::<f64>()
                    / span;
                for i in 0..n {
                    let dw = self.dface[i + 1] - self.dface[i];
                    col[i] += rate * (dw * (tbar - t[i]) + self.widths[i] * dtbar);
                }
            }
        }
        for x in col[..n].iter_mut() {
            *x *= self.per_width;
        }
        // edge rows
        let c = &self.centres;
        let dc = &self.dcentre;
        for jj in 0..k {
            let m = self.edge_face[jj];
            let (x, dx) = (self.faces[m], self.dface[m]);
            // d/de of (a - b) / (c - d)
            let dq = |a: f64, b: f64, da: f64, db: f64, cc: f64, d: f64, dcc: f64, dd: f64| {
                ((da - db) * (cc - d) - (a - b) * (dcc - dd)) / ((cc - d) * (cc - d))
            };
            col[n + jj] = match self.model.planet.transport {
                Transport::Relaxation { .. } => {
                    let dal = dq(
                        x,
                        c[m - 1],
                        dx,
                        dc[m - 1],
                        c[m - 1],
                        c[m - 2],
                        dc[m - 1],
                        dc[m - 2],
                    );
                    let dar = dq(x, c[m], dx, dc[m], c[m + 1], c[m], dc[m + 1], dc[m]);
                    0.5 * dal * (t[m - 1] - t[m - 2]) + 0.5 * dar * (t[m + 1] - t[m])
                }
                Transport::Diffusive { .. } | Transport::Moist { .. } => {
                    let dth = dq(c[m], x, dc[m], dx, c[m], c[m - 1], dc[m], dc[m - 1]);
                    dth * (t[m - 1] - t[m])
                }
            };
        }
    }

    /// Evaluates the residual into `f` and factors the bordered Jacobian at
    /// u. Allocates nothing.
    pub fn factor(&mut self, u: &[f64], f: &mut [f64]) -> Result<(), Singular> {
        let n = self.n;
        let k = self.edge_count();
        let mut e = std::mem::take(&mut self.edges);
        e.copy_from_slice(&u[n..]);
        self.layout(&e);
        self.edges = e;
        self.residual_on_layout(u, f);
        if !self.valid {
            return Err(Singular { row: 0 });
        }
        // edge columns, analytic on this layout
        let mut col = std::mem::take(&mut self.fa);
        for j in 0..k {
            self.edge_column(j, u, &mut col);
            self.cols[j * (n + k)..(j + 1) * (n + k)].copy_from_slice(&col);
        }
        self.fa = col;
        // temperature block
        let t = &u[..n];
        let olr = self.olr();
        let j = &mut self.jac;
        let keep = j.rank_one.take();
        j.clear();
        j.rank_one = keep;
        // the weighted balances of residual_on_layout: the cell terms scaled
        // by w_i / w̄, the face fluxes by 1 / w̄
        let pw = self.per_width;
        let ws = &self.widths[..n];
        let rate = match self.model.planet.transport {
            Transport::Relaxation { rate } => {
                let span = 1.0 - self.x0;
                if let Some((uu, vv)) = j.rank_one.as_mut() {
                    for ((x, v), w) in uu.iter_mut().zip(vv.iter_mut()).zip(ws) {
                        *x = rate * (w * pw);
                        *v = w / span;
                    }
                }
                rate
            }
            Transport::Diffusive { .. } | Transport::Moist { .. } => 0.0,
        };
        for ((d, ti), w) in j.diag[..n].iter_mut().zip(t).zip(ws) {
            let cell = -olr.value_and_slope(*ti).1;
            let cell = if rate != 0.0 { cell - rate } else { cell };
            *d = cell * (w * pw);
        }
        let law = self.model.planet.transport;
        if let Some(diffusivity) = law.diffusivity() {
            // moist: each entry times h'(T) of its column's cell (1 when dry)
            let dp = diffusivity * pw;
            let (dg, lo, up) = (&mut j.diag[..n], &mut j.lower[..n], &mut j.upper[..n]);
            let mut below = law.energy_and_slope(t[0]).1;
            for (face, g) in self.cond[..n].iter().enumerate().skip(1) {
                let above = law.energy_and_slope(t[face]).1;
                let c = dp * g;
                dg[face - 1] -= c * below;
                up[face - 1] += c * above;
                dg[face] -= c * above;
                lo[face] += c * below;
                below = above;
            }
        }
        // rounding level of the weighted balances: 8 ulps of the largest
        // sum of the magnitudes of their terms
        let q = self.model.planet.orbit.flux;
        let (dg, lo, up) = (&j.diag[..n], &j.lower[..n], &j.upper[..n]);
        let cb = &self.coalb[..n];
        let mut floor = 0.0f64;
        for i in 0..n {
            let w = ws[i] * pw;
            let mut m = dg[i].abs() * t[i].abs() + w * (q * cb[i]).abs();
            m += w * olr.value_and_slope(t[i]).0.abs();
            if i > 0 {
                m += lo[i].abs() * t[i - 1].abs();
            }
            if i + 1 < n {
                m += up[i].abs() * t[i + 1].abs();
            }
            floor = floor.max(m);
        }
        self.floor = 8.0 * f64::EPSILON * floor;
        self.jac.factor()?;
        // rows, A⁻¹C and the Schur complement
        for jj in 0..k {
            self.rows[jj] = self.edge_value(jj, t).1;
        }
        for jj in 0..k {
            let (src, dst) = (&self.cols[jj * (n + k)..jj * (n + k) + n], jj * n);
            self.y[dst..dst + n].copy_from_slice(src);
            self.jac.solve(&mut self.y[dst..dst + n]);
        }
        for a in 0..k {
            for b in 0..k {
                let ry = self.row_dot(a, &self.y[b * n..(b + 1) * n]);
                self.schur[a * k + b] = self.cols[b * (n + k) + n + a] - ry;
            }
        }
        invert_small(&self.schur, &mut self.schur_inv, k)
    }

    /// Solves J x = b in place with the last factors.
    pub fn solve(&self, b: &mut [f64]) {
        let n = self.n;
        self.jac.solve(&mut b[..n]);
        self.finish_solve(b);
    }

    /// [`EdgeModel::solve`] for two right-hand sides at once (the same
    /// results bit for bit; the tridiagonal substitutions overlap).
    pub fn solve_pair(&self, a: &mut [f64], b: &mut [f64]) {
        let n = self.n;
        self.jac.solve_pair(&mut a[..n], &mut b[..n]);
        self.finish_solve(a);
        self.finish_solve(b);
    }

    /// The rest of the block elimination once A⁻¹ b_T is in b_T:
    /// x_e = S⁻¹(b_e - R A⁻¹ b_T), x_T = A⁻¹ b_T - Y x_e.
    fn finish_solve(&self, b: &mut [f64]) {
        let n = self.n;
        let k = self.edge_count();
        let (bt, be) = b.split_at_mut(n);
        let mut rhs = [0.0; 4];
        for a in 0..k {
            let rz = self.row_dot(a, bt);
            rhs[a] = be[a] - rz;
        }
        for a in 0..k {
            be[a] = (0..k).map(|c| self.schur_inv[a * k + c] * rhs[c]).sum();
        }
        for c in 0..k {
            let yc = be[c];
            for i in 0..n {
                bt[i] -= self.y[c * n + i] * yc;
            }
        }
    }

    /// Solves Jᵀ x = b in place with the last factors (block elimination
    /// on the transposed bordered system: x_e = S⁻ᵀ(b_e - Yᵀ b_T),
    /// x_T = A⁻ᵀ(b_T - Rᵀ x_e)).
    pub fn solve_transpose(&self, b: &mut [f64]) {
        let n = self.n;
        let k = self.edge_count();
        let (bt, be) = b.split_at_mut(n);
        let mut rhs = [0.0; 4];
        for c in 0..k {
            let yb: f64 = (0..n).map(|i| self.y[c * n + i] * bt[i]).sum();
            rhs[c] = be[c] - yb;
        }
        for a in 0..k {
            be[a] = (0..k).map(|c| self.schur_inv[c * k + a] * rhs[c]).sum();
        }
        for a in 0..k {
            for (i, w) in self.rows[a] {
                bt[i] -= w * be[a];
            }
        }
        self.jac.solve_transpose(bt);
    }

    /// y = J diag(1, s) v with the last factored Jacobian: the edge part of
    /// v is multiplied by `edge_scale` first (1 for physical edges).
    pub fn jac_mul(&self, v: &[f64], y: &mut [f64], edge_scale: f64) {
        let n = self.n;
        let k = self.edge_count();
        self.jac.mul(&v[..n], &mut y[..n]);
        for a in 0..k {
            y[n + a] = self.row_dot(a, v);
        }
        for c in 0..k {
            let col = &self.cols[c * (n + k)..(c + 1) * (n + k)];
            for i in 0..n + k {
                y[i] += col[i] * v[n + c] * edge_scale;
            }
        }
    }

    /// ∂g_a/∂T · v: the edge row a (four cells at most) against v.
    fn row_dot(&self, a: usize, v: &[f64]) -> f64 {
        self.rows[a].iter().map(|(i, w)| w * v[*i]).sum()
    }

    /// Number of unstable modes at the last factored state u (see the module
    /// notes): those of the temperature block plus the negative eigenvalues
    /// of S D'⁻¹, D' = diag(dT/dx at each edge).
    pub fn unstable_modes(&self, u: &[f64]) -> usize {
        let n = self.n;
        let k = self.edge_count();
        let base = self.jac.count_positive_eigenvalues(&self.ones).unwrap_or(0);
        if k == 0 {
            return base;
        }
        let t = &u[..n];
        let mut e = [0.0; 4];
        for j in 0..k {
            let g = self.edge_gradient(j, t);
            for c in 0..k {
                e[c * k + j] = self.schur[c * k + j] / g;
            }
        }
        base + negative_eigenvalues(&e[..k * k], k)
    }

    /// dT/dx at edge j (the mean of the one-sided slopes for relaxation).
    fn edge_gradient(&self, j: usize, t: &[f64]) -> f64 {
        let m = self.edge_face[j];
        let c = &self.centres;
        match self.model.planet.transport {
            Transport::Diffusive { .. } | Transport::Moist { .. } => {
                (t[m] - t[m - 1]) / (c[m] - c[m - 1])
            }
            Transport::Relaxation { .. } => {
                0.5 * ((t[m - 1] - t[m - 2]) / (c[m - 1] - c[m - 2])
                    + (t[m + 1] - t[m]) / (c[m + 1] - c[m]))
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::scenario::{DEFAULT_SCENARIO, Scenario};

    /// Central differences of the residual in edge j (every face moves),
    /// step 1e-4 of the room to the neighbouring knots.
    fn fd_column(em: &mut EdgeModel, j: usize, u: &[f64]) -> Vec<f64> {
        let n = em.cells();
        let d = em.dim();
        let kj = em
            .knot_kind
            .iter()
            .position(|k| *k == Knot::Edge(j))
            .unwrap();
        let at = |i: usize| em.knot_x(em.knot_kind[i], u);
        let room = (u[n + j] - at(kj - 1)).min(at(kj + 1) - u[n + j]);
        let h = (1e-4 * room).clamp(1e-13, 1e-6);
        let (mut up, mut dn) = (u.to_vec(), u.to_vec());
        up[n + j] += h;
        dn[n + j] -= h;
        let (mut fa, mut fb) = (vec![0.0; d], vec![0.0; d]);
        em.residual(&up, &mut fa);
        em.residual(&dn, &mut fb);
        fa.iter()
            .zip(&fb)
            .map(|(a, b)| (a - b) / (2.0 * h))
            .collect()
    }

    /// The analytic edge columns equal central differences of the residual
    /// (common practice, no source) on every topology with edges, both
    /// spacings, full and symmetric grids, diffusive, moist and relaxation
    /// transport, exact and Legendre insolation.
    #[test]
    fn edge_columns_match_differences() {
        let cases: [&[&str]; 8] = [
            &[],
            &["transport.kind=\"moist\""],
            &[
                "transport.kind=\"moist\"",
                "transport.relative_humidity=1",
                "grid.spacing=\"latitude\"",
            ],
            &["grid.spacing=\"latitude\""],
            &["grid.symmetric=true"],
            &["transport.kind=\"relaxation\"", "transport.relaxation=3.04"],
            &[
                "transport.kind=\"relaxation\"",
                "transport.relaxation=3.04",
                "grid.spacing=\"latitude\"",
            ],
            &["insolation.kind=\"legendre\"", "grid.bands=30"],
        ];
        let mut checked = 0;
        for sets in cases {
            let sets: Vec<String> = sets.iter().map(|s| s.to_string()).collect();
            let sc = Scenario::parse(DEFAULT_SCENARIO, "t", &sets).unwrap();
            let model = sc.model();
            let x0 = model.grid.faces[0];
            for topo in Topology::all(2) {
                let k = topo.edges();
                if k == 0 || (x0 >= 0.0 && topo.regions.len() > 3) {
                    continue;
                }
                let Ok(mut em) = EdgeModel::new(&model, topo.clone()) else {
                    continue;
                };
                // edges spread over the domain, a smooth temperature profile
                let edges: Vec<f64> = (0..k)
                    .map(|j| x0 + (1.0 - x0) * (j as f64 + 0.6) / (k as f64 + 0.4))
                    .collect();
                let n = em.cells();
                let mut u = vec![0.0; n + k];
                let bands: Vec<f64> = model
                    .grid
                    .centres
                    .iter()
                    .map(|x| 25.0 - 45.0 * x * x + 3.0 * x)
                    .collect();
                if !em.guess(&model.grid, &bands, &edges, &mut u) {
                    continue;
                }
                let mut f = vec![0.0; n + k];
                em.factor(&u, &mut f).unwrap();
                for j in 0..k {
                    let fd = fd_column(&mut em, j, &u);
                    let an = &em.cols[j * (n + k)..(j + 1) * (n + k)];
                    let scale = fd.iter().fold(0.0f64, |m, x| m.max(x.abs()));
                    for i in 0..n + k {
                        assert!(
                            (an[i] - fd[i]).abs() <= 1e-6 * scale,
                            "{sets:?} {} edge {j} row {i}: {} vs {}",
                            topo.name(),
                            an[i],
                            fd[i]
                        );
                        assert!(fd[i].is_finite());
                    }
                    checked += 1;
                }
            }
        }
        // 8 cases, each with 2 one-edge and 2 two-edge topologies
        assert_eq!(checked, 8 * 6, "edge columns compared");
    }
}
