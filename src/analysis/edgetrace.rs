//! Every branch of the step-albedo model with its ice edges as unknowns
//! ([`crate::model::edges`]): one smooth continuation problem per ice
//! topology, seeded from the branches parametrised by their edges, joined
//! where a topology changes.
//!
//! 1. **Seeds.** For every topology with one edge (and, on a full grid, the
//!    mirror-symmetric topologies with two), the edge is held at 40
//!    Chebyshev-spaced positions and the state and the parameter are solved
//!    for together: the branch parametrised by its edge (North's method, done
//!    numerically for any parameter and either longwave law). Every point
//!    whose parameter falls in the range is a seed. Equilibria of the
//!    sub-grid model from warm, cold and shaped starts at nine parameter
//!    values, re-solved in their own topology, and the ice-free and snowball
//!    states at those values add seeds for branches that are not graphs
//!    over the edge.
//! 2. **Branches.** Each seed not on a branch already traced in its topology
//!    is continued by pseudo-arclength in the parameter (in its logarithm
//!    for CO2 and diffusivity, which span decades), until the range ends or
//!    the topology changes (an edge reaches a pole, the equator of a
//!    symmetric grid or another edge, or a new ice region appears): that
//!    event is located on the curve by regula falsi on the topology margin.
//! 3. **Joins.** Pieces whose event ends meet (same parameter, same band
//!    profile) are one branch: an ice-free state whose pole reaches T_s
//!    continues as a cap growing from the pole. Where the parameter turns
//!    back at the junction it is a fold (a corner), located exactly on the
//!    side without the vanishing region.

use super::branches::{Fold, Hysteresis, TraceOptions, TracedBranch, TracedPoint, on_branch};
use super::sensitivity::{Sensitive, fold_sensitivities, other_params};
use crate::model::climate::{State, standard_starts};
use crate::model::edges::{EdgeError, EdgeModel, Surface, Topology};
use crate::model::{Model, Param};
use crate::numerics::continuation::{Branch, EndReason, Point, Problem, Settings, Tracer};
use crate::numerics::linalg::Singular;
use crate::numerics::newton::max_abs;
use crate::numerics::newton::{NewtonOptions, Workspace, newton};

/// Edges enter the continuation's state scaled by this factor (K per unit
/// x), so that the arclength norm sees an edge move of one 1/100 of the
/// domain like a temperature change of 1 K.
pub const EDGE_UNITS: f64 = 100.0;

/// The edge model of one topology as a continuation problem in one
/// parameter (or its logarithm).
pub struct EdgeProblem {
    /// The model on its topology.
    pub em: EdgeModel,
    /// The continued parameter.
    pub param: Param,
    /// Whether continuation runs in ln(param).
    pub log: bool,
    u: Vec<f64>,
    f1: Vec<f64>,
    f2: Vec<f64>,
    fact_v: Vec<f64>,
    fact_p: f64,
}

impl EdgeProblem {
    /// `em` continued in `param` (in ln(param) when `log`).
    pub fn new(em: EdgeModel, param: Param, log: bool) -> EdgeProblem {
        let d = em.dim();
        EdgeProblem {
            em,
            param,
            log,
            u: vec![0.0; d],
            f1: vec![0.0; d],
            f2: vec![0.0; d],
            fact_v: vec![f64::NAN; d],
            fact_p: f64::NAN,
        }
    }

    /// Whether, with the edges held fixed, the residual is affine in the
    /// state and the continuation coordinate together: linear OLR and a
    /// parameter entering as a source term (flux, radiation.a,
    /// radiation.forcing, the threshold, CO2 in ln C). Then the state at a given edge is unique.
    pub fn affine(&self) -> bool {
        let linear = matches!(
            self.em.model.planet.olr,
            crate::physics::radiation::OlrLaw::Linear { .. }
        );
        linear
            && match self.param {
                Param::Flux | Param::OlrA | Param::Forcing | Param::Threshold => true,
                Param::Co2 => self.log,
                _ => false,
            }
    }

    /// The parameter value of continuation coordinate p.
    pub fn value(&self, p: f64) -> f64 {
        if self.log { p.exp() } else { p }
    }

    /// The continuation coordinate of parameter value v.
    pub fn coordinate(&self, v: f64) -> f64 {
        if self.log { v.ln() } else { v }
    }

    fn unscale(&mut self, v: &[f64]) {
        let n = self.em.cells();
        self.u[..n].copy_from_slice(&v[..n]);
        for (a, b) in self.u[n..].iter_mut().zip(&v[n..]) {
            *a = b / EDGE_UNITS;
        }
    }

    /// The physical state (T, e) of continuation state v.
    pub fn physical(&self, v: &[f64]) -> Vec<f64> {
        let n = self.em.cells();
        let mut u = v.to_vec();
        for e in u[n..].iter_mut() {
            *e /= EDGE_UNITS;
        }
        u
    }

    /// The continuation state of the physical state u.
    pub fn scaled(&self, u: &[f64]) -> Vec<f64> {
        let n = self.em.cells();
        let mut v = u.to_vec();
        for e in v[n..].iter_mut() {
            *e *= EDGE_UNITS;
        }
        v
    }

    /// max |F| of residual `f` and whether it is below `tol` (or the
    /// rounding floor of the last factored state); `None` where it is not
    /// finite.
    fn converged(&self, f: &[f64], tol: f64) -> Option<(f64, bool)> {
        let res = max_abs(f);
        res.is_finite()
            .then(|| (res, res < tol.max(self.em.residual_floor())))
    }

    /// Newton at fixed parameter coordinate p from v, damped to 20 K (and
    /// 0.2 in an edge) per step. Returns the final max |F|. After a step
    /// only the residual is evaluated; the Jacobian is factored again only
    /// when another step is needed.
    pub fn newton(&mut self, v: &mut [f64], p: f64, tol: f64) -> Option<f64> {
        self.set_param(p);
        let d = v.len();
        let mut f = vec![0.0; d];
        for it in 0..40 {
            if it > 0 {
                self.residual(v, &mut f);
                if let (res, true) = self.converged(&f, tol)? {
                    return Some(res);
                }
            }
            self.factor(v, &mut f).ok()?;
            if let (res, true) = self.converged(&f, tol)? {
                return Some(res);
            }
            self.solve(&mut f);
            let big = f.iter().fold(0.0f64, |m, x| m.max(x.abs()));
            let lam = if big > 20.0 { 20.0 / big } else { 1.0 };
            for (a, b) in v.iter_mut().zip(&f) {
                *a -= lam * b;
            }
        }
        None
    }

    /// Newton on (v, p) with component `j` of v held fixed (an edge): the
    /// state parametrised by that edge. Returns the final max |F|.
    pub fn solve_at_edge(&mut self, v: &mut [f64], p: &mut f64, j: usize, tol: f64) -> Option<f64> {
        let d = v.len();
        let (mut f, mut fp) = (vec![0.0; d], vec![0.0; d]);
        for it in 0..40 {
            self.set_param(*p);
            if it > 0 {
                // the residual alone decides whether another step is needed
                self.residual(v, &mut f);
                if let (res, true) = self.converged(&f, tol)? {
                    return Some(res);
                }
            }
            self.factor(v, &mut f).ok()?;
            if let (res, true) = self.converged(&f, tol)? {
                return Some(res);
            }
            self.d_param(v, &mut fp);
            self.solve(&mut f);
            self.solve(&mut fp);
            if fp[j] == 0.0 || !fp[j].is_finite() {
                return None;
            }
            let mut dp = f[j] / fp[j];
            let big = (0..d)
                .map(|i| (f[i] - dp * fp[i]).abs())
                .fold(0.0f64, f64::max);
            // damped only where the step is wild (at fixed edges a linear
            // OLR makes the system linear in state and parameter)
            let lam = if big > 100.0 { 100.0 / big } else { 1.0 };
            dp *= lam;
            for i in 0..d {
                v[i] -= lam * f[i] - dp * fp[i];
            }
            *p -= dp;
            if !p.is_finite() {
                return None;
            }
        }
        None
    }
}

impl Problem for EdgeProblem {
    fn dim(&self) -> usize {
        self.em.dim()
    }
    fn set_param(&mut self, p: f64) {
        let v = self.value(p);
        if self.em.model.param(self.param) != v {
            self.em.model.set_param(self.param, v);
            self.em.refresh();
        }
    }
    fn residual(&mut self, v: &[f64], f: &mut [f64]) {
        self.unscale(v);
        let u = std::mem::take(&mut self.u);
        self.em.residual(&u, f);
        self.u = u;
    }
    fn factor(&mut self, v: &[f64], f: &mut [f64]) -> Result<(), Singular> {
        self.unscale(v);
        let u = std::mem::take(&mut self.u);
        let r = self.em.factor(&u, f);
        self.u = u;
        self.fact_v.copy_from_slice(v);
        self.fact_p = self.em.model.param(self.param);
        r
    }
    fn solve(&self, b: &mut [f64]) {
        let n = self.em.cells();
        self.em.solve(b);
        for x in b[n..].iter_mut() {
            *x *= EDGE_UNITS;
        }
    }
    fn solve_pair(&self, a: &mut [f64], b: &mut [f64]) {
        let n = self.em.cells();
        self.em.solve_pair(a, b);
        for x in a[n..].iter_mut().chain(b[n..].iter_mut()) {
            *x *= EDGE_UNITS;
        }
    }
    fn jac_mul(&self, v: &[f64], y: &mut [f64]) {
        self.em.jac_mul(v, y, 1.0 / EDGE_UNITS);
    }
    fn solve_transpose(&self, b: &mut [f64]) -> bool {
        // J_v = J_u diag(1, 1/U): J_vᵀ z = b is J_uᵀ z = diag(1, U) b
        let n = self.em.cells();
        for x in b[n..].iter_mut() {
            *x *= EDGE_UNITS;
        }
        self.em.solve_transpose(b);
        true
    }
    fn d_param(&mut self, v: &[f64], out: &mut [f64]) {
        self.unscale(v);
        let u = std::mem::take(&mut self.u);
        let v0 = self.em.model.param(self.param);
        if self.em.d_linear(self.param, &u, out) {
            // analytic; in ln λ: ∂F/∂ln λ = λ ∂F/∂λ
            if self.log {
                out.iter_mut().for_each(|x| *x *= v0);
            }
        } else {
            // central difference in the continuation coordinate, restoring
            // the parameter bit for bit
            let p0 = self.coordinate(v0);
            let h = 1e-6 * p0.abs().max(1e-2);
            let mut f1 = std::mem::take(&mut self.f1);
            let mut f2 = std::mem::take(&mut self.f2);
            self.set_param(p0 + h);
            self.em.residual(&u, &mut f1);
            self.set_param(p0 - h);
            self.em.residual(&u, &mut f2);
            self.em.model.set_param(self.param, v0);
            self.em.refresh();
            for i in 0..out.len() {
                out[i] = (f1[i] - f2[i]) / (2.0 * h);
            }
            self.f1 = f1;
            self.f2 = f2;
        }
        self.u = u;
    }
    fn unstable_modes(&mut self, v: &[f64]) -> usize {
        if !(self.fact_v == v && self.fact_p == self.em.model.param(self.param)) {
            let mut f = vec![0.0; v.len()];
            if self.factor(v, &mut f).is_err() {
                return 0;
            }
        }
        self.unscale(v);
        self.em.unstable_modes(&self.u)
    }
    fn residual_floor(&self) -> f64 {
        self.em.residual_floor()
    }
    fn margin(&mut self, v: &[f64]) -> f64 {
        self.unscale(v);
        let u = std::mem::take(&mut self.u);
        let m = self.em.margin(&u);
        self.u = u;
        m
    }
}

impl Sensitive for EdgeProblem {
    fn params(&self) -> Vec<Param> {
        other_params(&self.em.model, self.param)
    }
    /// ∂F/∂q: analytic where F is affine in q ([`EdgeModel::d_linear`]),
    /// else a central difference (step 1e-6 of the value, at least 1e-8),
    /// the parameter restored bit for bit.
    fn d_other(&mut self, q: Param, v: &[f64], out: &mut [f64]) {
        self.unscale(v);
        let u = std::mem::take(&mut self.u);
        if self.em.d_linear(q, &u, out) {
            self.u = u;
            return;
        }
        let q0 = self.em.model.param(q);
        let h = 1e-6 * q0.abs().max(1e-2);
        let mut f1 = std::mem::take(&mut self.f1);
        self.em.model.set_param(q, q0 + h);
        self.em.refresh();
        self.em.residual(&u, &mut f1);
        self.em.model.set_param(q, q0 - h);
        self.em.refresh();
        self.em.residual(&u, out);
        self.em.model.set_param(q, q0);
        self.em.refresh();
        for (o, a) in out.iter_mut().zip(&f1) {
            *o = (a - *o) / (2.0 * h);
        }
        self.f1 = f1;
        self.u = u;
    }
}

/// Whether continuation of `param` over [lo, hi] runs in its logarithm.
pub fn log_scale(param: Param, lo: f64) -> bool {
    matches!(param, Param::Co2 | Param::Diffusivity) && lo > 0.0
}

/// How near (K, or 1/100 of x for an edge) the chord of a traced branch must
/// come to a state for [`on_traced`] to try Newton from it.
const CHORD_NEAR: f64 = 3.0;

/// A seed: topology index, continuation coordinate, continuation state,
/// and whether it is a point of an edge-parametrised family.
type Seed = (usize, f64, Vec<f64>, bool);

/// Whether (v, p) is a point of raw branch `b`: for each chord of the
/// branch whose parameter range holds p, Newton at p from the chord's
/// interpolation lands within 1e-6 K of v; otherwise the chord test
/// [`on_branch`] (0.25 K, or 0.25/100 in an edge).
fn on_traced(pr: &mut EdgeProblem, b: &Branch, v: &[f64], p: f64, width: f64, tol: f64) -> bool {
    for w in b.points.windows(2) {
        let (a, c) = (&w[0], &w[1]);
        let (lo, hi) = (a.p.min(c.p), a.p.max(c.p));
        if p < lo || p > hi {
            continue;
        }
        let r = if hi > lo {
            (p - a.p) / (c.p - a.p)
        } else {
            0.5
        };
        let mut u: Vec<f64> = a.u.iter().zip(&c.u).map(|(x, y)| x + r * (y - x)).collect();
        // a chord further than CHORD_NEAR from v does not lead Newton to it
        // (and costs a solve): the branch there is elsewhere
        if u.iter().zip(v).any(|(x, y)| (x - y).abs() > CHORD_NEAR) {
            continue;
        }
        if pr.newton(&mut u, p, tol.max(1e-9)).is_some()
            && u.iter().zip(v).all(|(x, y)| (x - y).abs() < 1e-6)
        {
            return true;
        }
    }
    on_branch(b, v, p, width)
}

/// Whether raw branch `b` passes through point (v, p) of its topology where
/// the state is unique given the last edge (one edge, or a mirror-symmetric
/// family point), or given the parameter (no edge): some chord brackets
/// that coordinate, with the parameter and every component interpolated
/// there within 1e-2 of the range and 1 K (1/100 of x for an edge). Valid
/// where the residual is affine at fixed edges ([`EdgeProblem::affine`]):
/// the branch's point at that coordinate is then (v, p) itself, and the
/// loose tolerances only guard against a chord that spans a corner.
fn passes_through(b: &Branch, v: &[f64], p: f64, width: f64, edges: usize) -> bool {
    let j = v.len() - 1;
    let coord = |u: &[f64], q: f64| if edges == 0 { q } else { u[j] };
    let e = coord(v, p);
    b.points.windows(2).any(|w| {
        let (a, c) = (&w[0], &w[1]);
        let (ea, ec) = (coord(&a.u, a.p), coord(&c.u, c.p));
        let (lo, hi) = (ea.min(ec), ea.max(ec));
        if !(e >= lo && e <= hi) {
            return false;
        }
        let r = if hi > lo { (e - ea) / (ec - ea) } else { 0.5 };
        (a.p + r * (c.p - a.p) - p).abs() < 1e-2 * width.abs()
            && a.u
                .iter()
                .zip(&c.u)
                .zip(v)
                .all(|((x, y), z)| (x + r * (y - x) - z).abs() < 1.0)
    })
}

/// Traces every branch of the step-albedo `model` in `param` over
/// [lo, hi] with the ice edges as unknowns. `Err` when the model is not
/// one the edge formulation covers.
#[allow(clippy::too_many_arguments)]
pub fn trace_edges(
    model: &Model,
    param: Param,
    lo: f64,
    hi: f64,
    warm: f64,
    cold: f64,
    opts: &TraceOptions,
    progress: &mut dyn FnMut(&str),
) -> Result<Hysteresis, EdgeError> {
    let log = log_scale(param, lo);
    let symmetric = model.grid.symmetric;
    let topologies = Topology::all(2);
    let mut problems: Vec<EdgeProblem> = Vec::new();
    for t in &topologies {
        problems.push(EdgeProblem::new(
            EdgeModel::new(model, t.clone())?,
            param,
            log,
        ));
    }
    let (clo, chi) = (problems[0].coordinate(lo), problems[0].coordinate(hi));
    let width = chi - clo;
    let tol = opts.tolerance;
    let mut seeds: Vec<Seed> = Vec::new();
    let mut failures = Vec::new();
    let inside = |p: f64| p >= clo - 1e-12 * width.abs() && p <= chi + 1e-12 * width.abs();

    // (a) the branches parametrised by their edges
    for (ti, t) in topologies.iter().enumerate() {
        let k = t.edges();
        let mirror = !symmetric && k == 2 && t.regions[0] == t.regions[2];
        if !(k == 1 || mirror) {
            continue;
        }
        let pr = &mut problems[ti];
        let n = pr.em.cells();
        let x0 = pr.em.low_end();
        let samples = 40;
        let mut prev: Option<(Vec<f64>, f64)> = None;
        for s in 1..samples {
            let c = 0.5 * (1.0 - (std::f64::consts::PI * s as f64 / samples as f64).cos());
            let edges: Vec<f64> = if mirror {
                vec![-c, c]
            } else {
                vec![x0 + (1.0 - x0) * c]
            };
            let (mut v, mut p) = match &prev {
                Some((v, p)) => {
                    let mut v = v.clone();
                    for (j, e) in edges.iter().enumerate() {
                        v[n + j] = e * EDGE_UNITS;
                    }
                    (v, *p)
                }
                None => {
                    let mut u = vec![0.0; n + k];
                    edge_guess(&mut pr.em, &edges, &mut u);
                    (pr.scaled(&u), 0.5 * (clo + chi))
                }
            };
            // hold the last edge; on a mirror topology the other follows by
            // symmetry of the annual-mean forcing
            match pr.solve_at_edge(&mut v, &mut p, n + k - 1, tol) {
                Some(_) if pr.margin(&v) > 0.0 => {
                    if inside(p) {
                        seeds.push((ti, p, v.clone(), true));
                    }
                    prev = Some((v, p));
                }
                _ => prev = None,
            }
        }
    }
    progress("seeds from the edge-parametrised families");

    // (b) sub-grid equilibria at nine values, re-solved in their topology,
    // and the no-edge states from uniform starts
    let kvals = opts.seed_values.max(2);
    let nopts = NewtonOptions {
        tolerance: tol,
        max_iterations: 40,
        max_backtracks: 8,
        stall_window: 6,
        ..NewtonOptions::default()
    };
    for jv in 0..kvals {
        let p = clo + width * jv as f64 / (kvals - 1) as f64;
        let value = problems[0].value(p);
        let mut m = model.clone();
        m.set_param(param, value);
        let mut starts: Vec<Vec<f64>> = standard_starts(m.len(), warm, cold)
            .into_iter()
            .map(|s| s.temperature)
            .collect();
        let mid = 0.5 * (warm + cold);
        starts.push(
            m.grid
                .centres
                .iter()
                .map(|x| warm - (warm - mid) * 2.0 * x * x)
                .collect(),
        );
        starts.push(
            m.grid
                .centres
                .iter()
                .map(|x| mid + (warm - mid) * 2.0 * x * x)
                .collect(),
        );
        let mut ws = Workspace::new(&m);
        for st in starts {
            let mut t = st;
            if newton(&m, &mut t, &nopts, &mut ws).is_err() {
                continue;
            }
            let (topo, edges) = Topology::of_intervals(&m.ice_intervals(&t), m.grid.faces[0]);
            let Some(ti) = topologies.iter().position(|x| *x == topo) else {
                failures.push(format!(
                    "an equilibrium with ice topology {} at {} = {value} has more than two edges: not traced",
                    topo.name(),
                    param.key()
                ));
                continue;
            };
            let pr = &mut problems[ti];
            let mut u = vec![0.0; pr.em.dim()];
            if !pr.em.guess(&m.grid, &t, &edges, &mut u) {
                continue;
            }
            let mut v = pr.scaled(&u);
            if pr.newton(&mut v, p, tol).is_some() && pr.margin(&v) > 0.0 {
                seeds.push((ti, p, v, false));
            }
        }
        for (ti, t) in topologies.iter().enumerate() {
            if t.edges() != 0 {
                continue;
            }
            let pr = &mut problems[ti];
            let n = pr.em.cells();
            let level = if t.regions[0] == Surface::Open {
                warm
            } else {
                cold
            };
            let mut v = vec![level; n];
            if pr.newton(&mut v, p, tol).is_some() && pr.margin(&v) > 0.0 {
                seeds.push((ti, p, v, false));
            }
        }
        progress(&format!("seeds at {} = {value:.6}", param.key()));
    }

    // 2. trace each seed not on a branch of its topology
    let settings = Settings {
        tolerance: tol,
        ..Settings::for_range(clo, chi)
    };
    let mut raw: Vec<(usize, Branch)> = Vec::new();
    for (ti, p, v, family) in &seeds {
        // where the state is unique given the parameter (no edge) or the
        // edge (one edge, or a mirror family point), a traced branch of the
        // seed's topology through that coordinate holds the seed
        let edges = topologies[*ti].edges();
        let unique = problems[*ti].affine() && (edges <= 1 || *family);
        if raw.iter().any(|(tj, b)| {
            tj == ti
                && if unique {
                    passes_through(b, v, *p, width, edges)
                } else {
                    on_traced(&mut problems[*ti], b, v, *p, width, tol)
                }
        }) {
            continue;
        }
        let mut tracer = Tracer::new(&mut problems[*ti], settings);
        match tracer.trace(v, *p) {
            Ok(b)
                if {
                    // a retrace of a branch already found (the seed test missed it)
                    let pr = &mut problems[*ti];
                    let unique = pr.affine() && edges <= 1;
                    let on = b
                        .points
                        .iter()
                        .filter(|q| {
                            raw.iter().any(|(tj, r)| {
                                tj == ti
                                    && if unique {
                                        passes_through(r, &q.u, q.p, width, edges)
                                    } else {
                                        on_traced(pr, r, &q.u, q.p, width, tol)
                                    }
                            })
                        })
                        .count();
                    on * 10 >= b.points.len() * 9
                } => {}
            Ok(b) => {
                progress(&format!(
                    "branch {} ({}): {} points, {} folds",
                    raw.len() + 1,
                    topologies[*ti].name(),
                    b.points.len(),
                    b.folds.len()
                ));
                raw.push((*ti, b));
            }
            Err(_) => failures.push(format!(
                "seed in topology {} at {} = {}: singular Jacobian, not continued",
                topologies[*ti].name(),
                param.key(),
                problems[*ti].value(*p)
            )),
        }
    }

    // 3. physical points on the scenario's bands
    let mut pieces: Vec<Piece> = Vec::new();
    for (ti, b) in raw {
        let pr = &mut problems[ti];
        let conv = |pr: &mut EdgeProblem, q: &Point| -> TracedPoint {
            pr.set_param(q.p);
            let u = pr.physical(&q.u);
            let temperature = pr.em.to_bands(&u, &model.grid);
            TracedPoint {
                p: pr.value(q.p),
                diagnostics: pr.em.diagnostics(&u, &temperature),
                temperature,
                unstable_modes: q.unstable_modes,
                residual: q.residual,
            }
        };
        let points: Vec<TracedPoint> = b.points.iter().map(|q| conv(pr, q)).collect();
        let mut folds: Vec<Fold> = Vec::new();
        for f in &b.folds {
            let point = conv(pr, &f.point);
            // dλ/dq in the continuation coordinate; ×λ where it is ln λ
            let scale = if pr.log { point.p } else { 1.0 };
            let (sensitivities, sensitivity_error) = if !opts.sensitivities {
                (Vec::new(), Some("not computed (maps skip them)".into()))
            } else {
                match fold_sensitivities(pr, &f.point.u, f.point.p) {
                    Ok(s) => (s.into_iter().map(|(q, d)| (q, d * scale)).collect(), None),
                    Err(e) => (Vec::new(), Some(e)),
                }
            };
            folds.push(Fold {
                point,
                after: f.after,
                from_state: State::Other,
                jump_to: None,
                sensitivities,
                sensitivity_error,
                jump_years: None,
                jump_note: None,
            });
        }
        pieces.push(Piece {
            edges: topologies[ti].edges(),
            name: topologies[ti].name(),
            points,
            folds,
            ends: b.ends.clone(),
        });
    }
    let joined = join(pieces, (hi - lo).abs(), &mut failures);
    let mut branches: Vec<TracedBranch> = joined
        .into_iter()
        .enumerate()
        .map(|(i, p)| TracedBranch {
            id: i + 1,
            points: p.points,
            folds: p.folds,
            ends: p.ends,
        })
        .collect();
    super::branches::resolve_jumps(&mut branches, (hi - lo).abs());
    let jump_opts = super::jumps::JumpOptions {
        polish_tolerance: opts.tolerance,
        ..Default::default()
    };
    if opts.integrate_jumps {
        super::jumps::integrate_jumps(model, param, &mut branches, (lo, hi), &jump_opts);
    }
    let bistable = super::branches::bistable_windows(&branches, lo, hi);
    Ok(Hysteresis {
        param,
        range: (lo, hi),
        branches,
        bistable,
        failures,
    })
}

/// A first guess for `edges` in the model's topology: T_s plus 5 K plus
/// 30 K per unit distance from the nearest edge on open cells, minus that on
/// ice (the Newton of a linear model converges from anything).
fn edge_guess(em: &mut EdgeModel, edges: &[f64], u: &mut [f64]) {
    let grid = em.model.grid.clone();
    let ts = em.model.planet.albedo.threshold;
    let regions = em.topology().regions.clone();
    let bands: Vec<f64> = grid
        .centres
        .iter()
        .map(|&x| {
            let reg = edges.iter().filter(|&&e| e < x).count();
            let d = edges.iter().map(|e| (e - x).abs()).fold(1.0f64, f64::min);
            let sg = if regions[reg] == Surface::Open {
                1.0
            } else {
                -1.0
            };
            ts + sg * (5.0 + 30.0 * d)
        })
        .collect();
    em.guess(&grid, &bands, edges, u);
}

/// A traced piece of one topology, on the bands.
struct Piece {
    edges: usize,
    name: String,
    points: Vec<TracedPoint>,
    folds: Vec<Fold>,
    ends: [EndReason; 2],
}

impl Piece {
    fn reverse(&mut self) {
        let n = self.points.len();
        self.points.reverse();
        for f in self.folds.iter_mut() {
            f.after = n - 2 - f.after;
        }
        self.folds.reverse();
        self.ends.swap(0, 1);
    }
}

/// Joins pieces whose event ends meet: same parameter within 1e-3 of the
/// range and band profiles within 0.1 K. A junction where the parameter
/// turns back is a fold, placed at the end point of the piece with fewer
/// edges (where the vanishing region is absent, so the event is exact).
fn join(mut pieces: Vec<Piece>, width: f64, failures: &mut Vec<String>) -> Vec<Piece> {
    let close = |a: &TracedPoint, b: &TracedPoint| -> f64 {
        let dp = (a.p - b.p).abs() / width.max(1e-300);
        let dt = a
            .temperature
            .iter()
            .zip(&b.temperature)
            .fold(0.0f64, |m, (x, y)| m.max((x - y).abs()));
        if dp < 1e-3 && dt < 0.1 {
            dp * 100.0 + dt
        } else {
            f64::INFINITY
        }
    };
    loop {
        // the closest pair of event ends of different pieces
        let mut best: Option<(f64, usize, usize, usize, usize)> = None;
        for i in 0..pieces.len() {
            for ei in 0..2 {
                if !joinable(&pieces[i].ends[ei]) {
                    continue;
                }
                let pa = end_point(&pieces[i], ei);
                for j in 0..pieces.len() {
                    if j == i || pieces[j].name == pieces[i].name {
                        continue;
                    }
                    for ej in 0..2 {
                        if !joinable(&pieces[j].ends[ej]) {
                            continue;
                        }
                        let d = close(pa, end_point(&pieces[j], ej));
                        if d.is_finite() && best.is_none_or(|b| d < b.0) {
                            best = Some((d, i, ei, j, ej));
                        }
                    }
                }
            }
        }
        let Some((_, i, ei, j, ej)) = best else {
            break;
        };
        let (i, ei, j, ej) = if i < j {
            (i, ei, j, ej)
        } else {
            (j, ej, i, ei)
        };
        let mut b = pieces.remove(j);
        let mut a = pieces.remove(i);
        if ei == 0 {
            a.reverse();
        }
        if ej == 1 {
            b.reverse();
        }
        // a ends at the junction, b starts there
        let na = a.points.len();
        let before = a.points[na - 1].p - a.points[na.saturating_sub(2)].p;
        let after = b.points.get(1).map_or(0.0, |q| q.p) - b.points[0].p;
        let corner = if a.edges <= b.edges {
            a.points[na - 1].clone()
        } else {
            b.points[0].clone()
        };
        // drop b's first point (the duplicate junction) when a's is exact
        let skip = usize::from(a.edges <= b.edges && b.points.len() > 1);
        let mut points = a.points;
        if skip == 0 {
            points.pop();
        }
        let offset = points.len();
        let mut folds = a.folds;
        if before * after < 0.0 {
            folds.push(Fold {
                point: corner,
                after: offset - 1,
                from_state: State::Other,
                jump_to: None,
                sensitivities: Vec::new(),
                sensitivity_error: Some(
                    "a corner (an ice region appears or vanishes at a pole or the equator): its sensitivities are not computed yet".into(),
                ),
                jump_years: None,
                jump_note: None,
            });
        }
        points.extend(b.points.into_iter().skip(skip));
        for mut f in b.folds {
            f.after = (f.after + offset).saturating_sub(skip);
            folds.push(f);
        }
        pieces.push(Piece {
            edges: a.edges.max(b.edges),
            name: format!("{}+{}", a.name, b.name),
            points,
            folds,
            ends: [a.ends[0].clone(), b.ends[1].clone()],
        });
    }
    for pc in &pieces {
        for (e, end) in pc.ends.iter().enumerate() {
            if let EndReason::Event(_) = end {
                let q = end_point(pc, e);
                failures.push(format!(
                    "a branch ({}) ends at p = {} where its ice topology changes, and no branch of the new topology was found there",
                    pc.name, q.p
                ));
            }
        }
    }
    pieces
}

/// Ends that may meet another piece: a topology event, or a corrector that
/// gave up (at the rounding level of a vanishing region, just short of
/// the event).
fn joinable(e: &EndReason) -> bool {
    matches!(e, EndReason::Event(_) | EndReason::StepTooSmall { .. })
}

fn end_point(p: &Piece, e: usize) -> &TracedPoint {
    if e == 0 {
        &p.points[0]
    } else {
        &p.points[p.points.len() - 1]
    }
}
