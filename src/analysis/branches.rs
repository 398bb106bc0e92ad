//! Every branch of equilibria of the annual-mean model in one parameter:
//! seeds from several starts and parameter values, continuation of each
//! distinct branch, folds with the jump they cause, and bistable windows.

use crate::analysis::sensitivity::fold_sensitivities;
use crate::model::climate::{Diagnostics, Start, State, diagnose, standard_starts};
use crate::model::{Model, Param};
use crate::numerics::continuation::{Branch, EndReason, Problem, Settings, Tracer};
use crate::numerics::linalg::{Singular, Tridiagonal};
use crate::numerics::newton::{NewtonOptions, Workspace, newton, unstable_modes};
use crate::physics::albedo::AlbedoKind;

/// The annual-mean model as a continuation problem in one parameter.
pub struct AnnualProblem {
    /// The model (its parameter is changed in place).
    pub model: Model,
    /// The varied parameter.
    pub param: Param,
    jac: Tridiagonal,
    scratch: Vec<f64>,
    ws: Workspace,
    /// (u, p) at which `jac` was last evaluated, for reuse by
    /// `unstable_modes`.
    jac_u: Vec<f64>,
    jac_p: f64,
    /// Rounding floor of max |F| at the last factored state.
    floor: f64,
}

impl AnnualProblem {
    /// Wraps `model`, varying `param`.
    pub fn new(model: Model, param: Param) -> AnnualProblem {
        let jac = model.new_jacobian();
        let ws = Workspace::new(&model);
        let scratch = vec![0.0; model.len()];
        let n = model.len();
        AnnualProblem {
            model,
            param,
            jac,
            scratch,
            ws,
            jac_u: vec![f64::NAN; n],
            jac_p: f64::NAN,
            floor: 0.0,
        }
    }
}

impl Problem for AnnualProblem {
    fn dim(&self) -> usize {
        self.model.len()
    }
    fn set_param(&mut self, p: f64) {
        if self.model.param(self.param) != p {
            self.model.set_param(self.param, p);
        }
    }
    fn residual(&mut self, u: &[f64], f: &mut [f64]) {
        self.model.evaluate(u, f, None);
    }
    fn factor(&mut self, u: &[f64], f: &mut [f64]) -> Result<(), Singular> {
        self.model.evaluate(u, f, Some(&mut self.jac));
        self.jac_u.copy_from_slice(u);
        self.jac_p = self.model.param(self.param);
        self.floor = crate::numerics::newton::rounding_floor(&self.jac, u);
        self.jac.factor()
    }
    fn residual_floor(&self) -> f64 {
        self.floor
    }
    fn solve(&self, b: &mut [f64]) {
        self.jac.solve(b);
    }
    fn solve_pair(&self, a: &mut [f64], b: &mut [f64]) {
        self.jac.solve_pair(a, b);
    }
    fn solve_transpose(&self, b: &mut [f64]) -> bool {
        self.jac.solve_transpose(b);
        true
    }
    fn jac_mul(&self, v: &[f64], y: &mut [f64]) {
        self.jac.mul(v, y);
    }
    fn d_param(&mut self, u: &[f64], out: &mut [f64]) {
        self.model
            .d_residual_d_param(self.param, u, out, &mut self.scratch);
    }
    fn unstable_modes(&mut self, u: &[f64]) -> usize {
        // the Jacobian of the last factorisation, if it was taken here
        if self.jac_p == self.model.param(self.param)
            && self.jac_u == u
            && let Some(c) = self
                .jac
                .count_positive_eigenvalues(&self.model.planet.heat_capacity)
        {
            return c;
        }
        unstable_modes(&self.model, u, &mut self.ws)
    }
    fn label(&mut self, u: &[f64]) -> u64 {
        // which half-bands hold an edge or ice changes only at kinks
        self.model.ice_topology(u)
    }
}

/// A traced point with its diagnostics.
#[derive(Clone, Debug)]
pub struct TracedPoint {
    /// Parameter value.
    pub p: f64,
    /// Temperatures, °C.
    pub temperature: Vec<f64>,
    /// Diagnostics.
    pub diagnostics: Diagnostics,
    /// Unstable modes.
    pub unstable_modes: usize,
    /// Max |F|, W m-2.
    pub residual: f64,
}

/// A located fold with the jump it causes.
#[derive(Clone, Debug)]
pub struct Fold {
    /// The fold point.
    pub point: TracedPoint,
    /// Index of the branch point after which it lies.
    pub after: usize,
    /// The stable climate that ends at the fold (the state of the stable
    /// neighbour on the branch; the fold's own state if neither is stable).
    pub from_state: State,
    /// The stable climate reached when the parameter passes the fold, if
    /// the fold bounds a stable segment. For annual-mean traces, the
    /// equilibrium reached by integrating the time-dependent model past the
    /// fold ([`crate::analysis::jumps::integrate_jumps`]).
    pub jump_to: Option<TracedPoint>,
    /// dλ*/dq = -(w·F_q)/(w·F_λ) of the fold for every other continuous
    /// parameter q of the model ([`crate::analysis::sensitivity`]), in the
    /// order of [`Param::ALL`]; empty when not computed.
    pub sensitivities: Vec<(Param, f64)>,
    /// Why `sensitivities` is empty, when it is.
    pub sensitivity_error: Option<String>,
    /// Transition time of the integrated jump, years
    /// ([`crate::analysis::jumps::JumpOutcome::years`]); `None` when not
    /// integrated.
    pub jump_years: Option<f64>,
    /// Set when the jump needs a reader's attention: the integrated target
    /// lies on no traced stable branch (a missed branch), the integration
    /// failed (then `jump_to` is the branch-list guess), or the target is a
    /// branch-list guess by design.
    pub jump_note: Option<String>,
}

/// One traced branch.
#[derive(Clone, Debug)]
pub struct TracedBranch {
    /// Branch id (1-based).
    pub id: usize,
    /// Points in arclength order.
    pub points: Vec<TracedPoint>,
    /// Folds.
    pub folds: Vec<Fold>,
    /// How the two ends finished.
    pub ends: [EndReason; 2],
}

/// All branches in a parameter range.
#[derive(Clone, Debug)]
pub struct Hysteresis {
    /// The varied parameter.
    pub param: Param,
    /// Range.
    pub range: (f64, f64),
    /// Branches.
    pub branches: Vec<TracedBranch>,
    /// Parameter intervals where two or more stable climates coexist.
    pub bistable: Vec<(f64, f64)>,
    /// Seeds that could not be continued, with the reason.
    pub failures: Vec<String>,
}

/// The northern hemisphere's most poleward ice edge, deg: 90 if ice-free,
/// 0 if snowball ([`crate::model::climate::hemisphere_ice_edges`]).
pub fn poleward_edge_deg(d: &Diagnostics) -> f64 {
    d.ice_edge_north_deg
}

fn traced(model: &Model, p: f64, u: Vec<f64>, unstable: usize, residual: f64) -> TracedPoint {
    let diagnostics = diagnose(model, &u);
    TracedPoint {
        p,
        temperature: u,
        diagnostics,
        unstable_modes: unstable,
        residual,
    }
}

/// Continuation options.
#[derive(Clone, Copy, Debug)]
pub struct TraceOptions {
    /// Seed parameter values (evenly spaced, ends included).
    pub seed_values: usize,
    /// Corrector tolerance, W m-2.
    pub tolerance: f64,
    /// Integrate the jump at every fold in time ([`crate::analysis::jumps`]);
    /// otherwise the jump is the branch-list guess ([`resolve_jumps`]).
    pub integrate_jumps: bool,
    /// Compute each fold's sensitivities ([`crate::analysis::sensitivity`]).
    pub sensitivities: bool,
}

impl Default for TraceOptions {
    fn default() -> Self {
        TraceOptions {
            seed_values: 9,
            tolerance: 1e-10,
            integrate_jumps: true,
            sensitivities: true,
        }
    }
}

/// Whether (u, p) lies on the traced branch: within 0.25 K (every band) and
/// 1e-3 of the range of its projection onto some chord between consecutive
/// points (projection in the arclength metric, so chords across folds,
/// where p hardly changes, work too).
pub(crate) fn on_branch(b: &Branch, u: &[f64], p: f64, scale: f64) -> bool {
    let n = u.len() as f64;
    let wp = 100.0 / (scale * scale);
    b.points.windows(2).any(|w| {
        let (a, c) = (&w[0], &w[1]);
        let mut num = wp * (p - a.p) * (c.p - a.p);
        let mut den = wp * (c.p - a.p) * (c.p - a.p);
        for ((x, ua), uc) in u.iter().zip(&a.u).zip(&c.u) {
            num += (x - ua) * (uc - ua) / n;
            den += (uc - ua) * (uc - ua) / n;
        }
        let t = if den > 0.0 {
            (num / den).clamp(0.0, 1.0)
        } else {
            0.0
        };
        (p - (a.p + t * (c.p - a.p))).abs() < 1e-3 * scale
            && u.iter()
                .zip(a.u.iter().zip(&c.u))
                .all(|(x, (ua, uc))| (x - (ua + t * (uc - ua))).abs() < 0.25)
    })
}

/// Traces every branch of `model` in `param` over [lo, hi].
/// `progress` is called with a short message as work proceeds.
#[allow(clippy::too_many_arguments)]
pub fn trace_all(
    model: &Model,
    param: Param,
    lo: f64,
    hi: f64,
    warm: f64,
    cold: f64,
    opts: &TraceOptions,
    progress: &mut dyn FnMut(&str),
) -> Hysteresis {
    // the step albedo: ice edges as unknowns, wherever the formulation
    // covers the model
    if matches!(model.planet.albedo.kind, AlbedoKind::Step)
        && let Ok(mut h) =
            super::edgetrace::trace_edges(model, param, lo, hi, warm, cold, opts, progress)
    {
        drop_unphysical(model, &mut h);
        return h;
    }
    let mut h = trace_subgrid(model, param, lo, hi, warm, cold, opts, progress);
    drop_unphysical(model, &mut h);
    h
}

/// Removes the states below absolute zero (or not finite) from every
/// branch: they are not climates. A branch is cut where its states cross
/// absolute zero (the cut end reads [`EndReason::Unphysical`]), folds and
/// jump targets among the removed states go with them, the branches are
/// renumbered and the bistable windows recomputed; each cut is named in
/// `failures`.
pub fn drop_unphysical(model: &Model, h: &mut Hysteresis) {
    use crate::model::climate::below_absolute_zero;
    let bad = |pt: &TracedPoint| below_absolute_zero(model, &pt.temperature).is_some();
    if !h.branches.iter().any(|b| b.points.iter().any(bad)) {
        return;
    }
    let key = h.param.key();
    let mut kept: Vec<TracedBranch> = Vec::new();
    for b in std::mem::take(&mut h.branches) {
        let m = b.points.len();
        let flags: Vec<bool> = b.points.iter().map(bad).collect();
        let removed = flags.iter().filter(|f| **f).count();
        if removed > 0 {
            let coldest = b
                .points
                .iter()
                .filter_map(|pt| below_absolute_zero(model, &pt.temperature).map(|c| (c, pt.p)))
                .min_by(|a, c| a.0.0.total_cmp(&c.0.0));
            if let Some(((t, lat), p)) = coldest {
                h.failures.push(format!(
                    "branch {}: {removed} of its {m} states lie below absolute zero (coldest {t:.6} C at latitude {lat:.4} deg, {key} = {p}): not climates, removed",
                    b.id
                ));
            }
        }
        let mut a = 0;
        while a < m {
            if flags[a] {
                a += 1;
                continue;
            }
            let mut e = a;
            while e < m && !flags[e] {
                e += 1;
            }
            if e - a >= 2 {
                let folds = b
                    .folds
                    .iter()
                    .filter(|f| f.after >= a && f.after + 1 < e && !bad(&f.point))
                    .cloned()
                    .map(|mut f| {
                        f.after -= a;
                        if f.jump_to.as_ref().is_some_and(bad) {
                            f.jump_to = None;
                            f.jump_note = Some(
                                "the jump target lies below absolute zero: not a climate".into(),
                            );
                        }
                        f
                    })
                    .collect();
                let ends = [
                    if a == 0 {
                        b.ends[0].clone()
                    } else {
                        EndReason::Unphysical(b.points[a].p)
                    },
                    if e == m {
                        b.ends[1].clone()
                    } else {
                        EndReason::Unphysical(b.points[e - 1].p)
                    },
                ];
                kept.push(TracedBranch {
                    id: 0,
                    points: b.points[a..e].to_vec(),
                    folds,
                    ends,
                });
            }
            a = e;
        }
    }
    for (i, b) in kept.iter_mut().enumerate() {
        b.id = i + 1;
    }
    h.bistable = bistable_windows(&kept, h.range.0, h.range.1);
    h.branches = kept;
}

/// Traces every branch of `model` in `param` over [lo, hi] on the
/// scenario's bands, the ice of a step albedo as a sub-grid fraction of a
/// band (the smooth albedo, the seasonal model, and the formulation the
/// step albedo had before its edges became unknowns: kept for models the
/// edge formulation does not cover and as the benchmarks' comparison).
#[allow(clippy::too_many_arguments)]
pub fn trace_subgrid(
    model: &Model,
    param: Param,
    lo: f64,
    hi: f64,
    warm: f64,
    cold: f64,
    opts: &TraceOptions,
    progress: &mut dyn FnMut(&str),
) -> Hysteresis {
    let mut failures = Vec::new();
    // 1. seeds: equilibria from warm and cold starts at several values
    let mut seeds: Vec<(f64, Vec<f64>)> = Vec::new();
    let k = opts.seed_values.max(2);
    // seeds are a heuristic: a start that does not converge quickly is
    // dropped rather than nursed
    let nopts = NewtonOptions {
        tolerance: opts.tolerance,
        max_iterations: 40,
        max_backtracks: 8,
        stall_window: 6,
        ..NewtonOptions::default()
    };
    for j in 0..k {
        let p = lo + (hi - lo) * j as f64 / (k - 1) as f64;
        let mut m = model.clone();
        m.set_param(param, p);
        let mut starts = standard_starts(m.len(), warm, cold);
        // two shaped starts that fall into ice-cap and ice-belt basins
        let mid = 0.5 * (warm + cold);
        starts.push(Start {
            label: "caps".into(),
            temperature: m
                .grid
                .centres
                .iter()
                .map(|x| warm - (warm - mid) * 2.0 * x * x)
                .collect(),
        });
        starts.push(Start {
            label: "belt".into(),
            temperature: m
                .grid
                .centres
                .iter()
                .map(|x| mid + (warm - mid) * 2.0 * x * x)
                .collect(),
        });
        // plain Newton: a start that does not converge is simply no seed
        let mut ws = Workspace::new(&m);
        for st in &starts {
            let mut t = st.temperature.clone();
            if newton(&m, &mut t, &nopts, &mut ws).is_ok()
                && !seeds
                    .iter()
                    .any(|(q, u)| *q == p && u.iter().zip(&t).all(|(a, b)| (a - b).abs() < 1e-6))
            {
                seeds.push((p, t));
            }
        }
        progress(&format!("seeds at {} = {p:.6}", param.key()));
    }
    // 2. trace each seed not yet on a traced branch
    let settings = Settings {
        tolerance: opts.tolerance,
        ..Settings::for_range(lo, hi)
    };
    let mut problem = AnnualProblem::new(model.clone(), param);
    let mut raw: Vec<Branch> = Vec::new();
    for (p, u) in &seeds {
        if raw.iter().any(|b| on_branch(b, u, *p, (hi - lo).abs())) {
            continue;
        }
        let mut tracer = Tracer::new(&mut problem, settings);
        match tracer.trace(u, *p) {
            Ok(b)
                if !raw.is_empty() && {
                    let on = b
                        .points
                        .iter()
                        .filter(|q| raw.iter().any(|r| on_branch(r, &q.u, q.p, (hi - lo).abs())))
                        .count();
                    on * 10 >= b.points.len() * 9
                } =>
            {
                // a retrace of a branch already found (seed missed by on_branch)
            }
            Ok(b) => {
                progress(&format!(
                    "branch {}: {} points, {} folds",
                    raw.len() + 1,
                    b.points.len(),
                    b.folds.len()
                ));
                raw.push(b);
            }
            Err(_) => failures.push(format!(
                "seed at {} = {p}: singular Jacobian, not continued",
                param.key()
            )),
        }
    }
    // 3. diagnostics, folds and jumps
    let mut m = model.clone();
    let mut branches = Vec::new();
    for (id, b) in raw.into_iter().enumerate() {
        let mut points = Vec::with_capacity(b.points.len());
        for q in &b.points {
            m.set_param(param, q.p);
            points.push(traced(&m, q.p, q.u.clone(), q.unstable_modes, q.residual));
        }
        let mut folds = Vec::new();
        for f in &b.folds {
            m.set_param(param, f.point.p);
            let fp = traced(
                &m,
                f.point.p,
                f.point.u.clone(),
                f.point.unstable_modes,
                f.point.residual,
            );
            let (sensitivities, sensitivity_error) =
                match fold_sensitivities(&mut problem, &f.point.u, f.point.p) {
                    Ok(s) => (s, None),
                    Err(e) => (Vec::new(), Some(e)),
                };
            folds.push(Fold {
                point: fp,
                after: f.after,
                from_state: State::Other,
                jump_to: None,
                sensitivities,
                sensitivity_error,
                jump_years: None,
                jump_note: None,
            });
        }
        branches.push(TracedBranch {
            id: id + 1,
            points,
            folds,
            ends: b.ends.clone(),
        });
    }
    resolve_jumps(&mut branches, (hi - lo).abs());
    let jump_opts = crate::analysis::jumps::JumpOptions {
        polish_tolerance: opts.tolerance,
        ..Default::default()
    };
    crate::analysis::jumps::integrate_jumps(model, param, &mut branches, (lo, hi), &jump_opts);
    let bistable = bistable_windows(&branches, lo, hi);
    Hysteresis {
        param,
        range: (lo, hi),
        branches,
        bistable,
        failures,
    }
}

/// For every fold: the stable climate that ends there (`from_state`: the
/// nearest stable point along the branch within three points) and where the
/// climate goes when the parameter moves just past it (`jump_to`). The jump
/// follows the trend of the vanishing stable segment: if its global mean
/// falls as the parameter moves towards the fold, the planet cools past it
/// and lands on the warmest stable climate colder than the fold; otherwise
/// on the coldest stable climate warmer than it. Candidates are the stable
/// segments of every traced branch at 1e-3 of the range beyond the fold,
/// interpolated linearly between their points.
pub fn resolve_jumps(branches: &mut [TracedBranch], width: f64) {
    let snapshot: Vec<TracedBranch> = branches.to_vec();
    for b in branches.iter_mut() {
        for f in b.folds.iter_mut() {
            // a corner fold is itself a stable point: the trend needs a
            // neighbour at another parameter value
            let pf = f.point.p;
            let near = stable_near(&b.points, f.after, |q| q.p != pf);
            f.from_state = near.map_or(f.point.diagnostics.state, |q| q.diagnostics.state);
            let Some(nb) = near else {
                continue;
            };
            let beyond = if nb.p > f.point.p { -1.0 } else { 1.0 };
            let pj = f.point.p + beyond * 1e-3 * width;
            let trend = (nb.diagnostics.global_mean_c - f.point.diagnostics.global_mean_c)
                / (nb.p - f.point.p);
            let cooling = trend * beyond < 0.0;
            let t_fold = f.point.diagnostics.global_mean_c;
            let mut best: Option<TracedPoint> = None;
            for other in &snapshot {
                for w in other.points.windows(2) {
                    let (q1, q2) = (&w[0], &w[1]);
                    if q1.unstable_modes != 0 || q2.unstable_modes != 0 {
                        continue;
                    }
                    let (lo, hi) = (q1.p.min(q2.p), q1.p.max(q2.p));
                    if pj < lo || pj > hi || hi == lo {
                        continue;
                    }
                    let r = (pj - q1.p) / (q2.p - q1.p);
                    let mut cand = if r < 0.5 { q1.clone() } else { q2.clone() };
                    cand.p = pj;
                    for (c, (a, z)) in cand
                        .temperature
                        .iter_mut()
                        .zip(q1.temperature.iter().zip(&q2.temperature))
                    {
                        *c = a + r * (z - a);
                    }
                    let g = |q: &TracedPoint| q.diagnostics.global_mean_c;
                    cand.diagnostics.global_mean_c = g(q1) + r * (g(q2) - g(q1));
                    let (e1, e2) = (
                        poleward_edge_deg(&q1.diagnostics),
                        poleward_edge_deg(&q2.diagnostics),
                    );
                    let e = e1 + r * (e2 - e1);
                    cand.diagnostics.ice_edges_deg =
                        if e > 0.0 && e < 90.0 { vec![e] } else { vec![] };
                    let t = cand.diagnostics.global_mean_c;
                    let ok = if cooling { t < t_fold } else { t > t_fold };
                    let better = best.as_ref().is_none_or(|bst| {
                        let tb = bst.diagnostics.global_mean_c;
                        if cooling { t > tb } else { t < tb }
                    });
                    if ok && better {
                        best = Some(cand);
                    }
                }
            }
            f.jump_to = best;
        }
    }
}

/// The nearest stable point of `points` to a fold after point `after`,
/// within three points on either side, that `accept` takes.
pub(crate) fn stable_near(
    points: &[TracedPoint],
    after: usize,
    accept: impl Fn(&TracedPoint) -> bool,
) -> Option<&TracedPoint> {
    (0..=3)
        .flat_map(|d| [after.checked_sub(d), Some(after + 1 + d)])
        .flatten()
        .filter_map(|j| points.get(j))
        .find(|q| q.unstable_modes == 0 && accept(q))
}

/// Parameter intervals covered by two or more stable segments (each
/// segment extended to the folds that bound it).
pub fn bistable_windows(branches: &[TracedBranch], lo: f64, hi: f64) -> Vec<(f64, f64)> {
    let mut intervals: Vec<(f64, f64)> = Vec::new();
    for b in branches {
        let mut k = 0;
        while k < b.points.len() {
            if b.points[k].unstable_modes != 0 {
                k += 1;
                continue;
            }
            let start = k;
            while k + 1 < b.points.len() && b.points[k + 1].unstable_modes == 0 {
                k += 1;
            }
            let seg = &b.points[start..=k];
            let mut a = seg.iter().map(|q| q.p).fold(f64::INFINITY, f64::min);
            let mut z = seg.iter().map(|q| q.p).fold(f64::NEG_INFINITY, f64::max);
            // extend to the folds that bound the segment
            for f in &b.folds {
                if f.after + 1 == start || f.after == k {
                    a = a.min(f.point.p);
                    z = z.max(f.point.p);
                }
            }
            intervals.push((a.max(lo), z.min(hi)));
            k += 1;
        }
    }
    let mut events: Vec<(f64, i32)> = intervals
        .iter()
        .flat_map(|&(a, z)| [(a, 1), (z, -1)])
        .collect();
    events.sort_by(|x, y| x.0.total_cmp(&y.0).then(y.1.cmp(&x.1)));
    let mut out: Vec<(f64, f64)> = Vec::new();
    let mut depth = 0;
    let mut open = 0.0;
    for (x, d) in events {
        let before = depth;
        depth += d;
        if before < 2 && depth >= 2 {
            open = x;
        } else if before >= 2 && depth < 2 && x > open {
            out.push((open, x));
        }
    }
    out
}
