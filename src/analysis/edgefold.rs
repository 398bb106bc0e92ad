//! Fold curves of the step-albedo model with its ice edges as unknowns
//! ([`crate::model::edges`]): where a saddle-node of the traced parameter p
//! lives as a second parameter a (the across key) varies.
//!
//! On one ice topology the residual is smooth, so its folds are smooth
//! turning points and their curve in (a, p) has no corners. Hold one edge
//! e (the last one; on a mirror topology the other follows by symmetry)
//! and the equilibria form a family (T(e), p(e)) parametrised by e
//! ([`EdgeProblem::solve_at_edge`]). With x_p = J⁻¹ F_p (J the Jacobian in
//! the state, F_p the residual's derivative in p) the family's tangent is
//! (δu, δp) ∝ (-x_p, 1), so
//!
//! ```text
//! dp/de = -1 / (x_p)_e =: -ψ(e),
//! ```
//!
//! and a fold of the branch in p is a simple root of ψ (J singular with a
//! null vector that moves the held edge makes (x_p)_e pass through
//! infinity, ψ through zero, smoothly). A symmetry-breaking point of a
//! mirror family does not: its null vector is odd, F_p even, and x_p stays
//! finite. At fixed a the fold is found by the secant method on ψ(e); each
//! evaluation is a Newton solve of the family at one e, O(n) per step
//! (tridiagonal plus k edge borders), predicted along the tangent
//! δu = x_p ψ δe, δp = -ψ δe. The curve is then followed in a by natural
//! parameter continuation in steps of at most 1/40 of the across range:
//! the next fold is predicted by linear extrapolation of the last two, the
//! step grows by 1.5 after a success and is quartered where the secant
//! fails or the fold leaves its topology ([`EdgeModel::margin`]), and the
//! curve ends where a step below 1e-4 of the across range still fails (a
//! cusp, where two folds meet and vanish, a topology change, or a curve
//! turning back in a), so it ends within a few 1e-4 of the range of such a
//! point. Setting a rebuilds the insolation table once per across value
//! tried; the secant runs at fixed a.

use super::edgetrace::{EDGE_UNITS, EdgeProblem, log_scale};
use crate::model::edges::{EdgeModel, Topology};
use crate::model::{Model, Param};
use crate::numerics::continuation::Problem;

/// A fold of one topology at fixed a: the continuation state v (edges
/// scaled by [`EDGE_UNITS`]) and the continuation coordinate of p.
#[derive(Clone, Debug)]
struct EdgeFold {
    v: Vec<f64>,
    p: f64,
}

/// ψ(e) = 1 / (J⁻¹F_p)_e and the family direction x_p ψ at the solved state
/// (v, p); `None` where J cannot be factored.
fn psi(pr: &mut EdgeProblem, v: &[f64], j: usize, f: &mut [f64], dir: &mut [f64]) -> Option<f64> {
    pr.factor(v, f).ok()?;
    pr.d_param(v, dir);
    pr.solve(dir);
    let xe = dir[j];
    if !xe.is_finite() || xe == 0.0 {
        return None;
    }
    let psi = 1.0 / xe;
    dir.iter_mut().for_each(|d| *d *= psi);
    psi.is_finite().then_some(psi)
}

/// The fold of `pr`'s family nearest the state (v, p) at the present a:
/// secant on ψ in the held edge `j` (the first step by the slope dψ/de
/// `slope` of the previous fold where there is one, else a step of 1e-4 of
/// the domain), steps limited to 0.05 of the domain, to |Δe| below 1e-9 of
/// the domain (the secant converges superlinearly, so the last step bounds
/// the error of e, and p(e) is stationary there: p errs by O(Δe²)). Each
/// state is predicted along the family's tangent and solved by Newton to
/// `tol`. `None` where ψ has no root nearby (beyond a cusp, where two folds
/// have met and vanished: |ψ| stops falling) or a solve fails. Returns the
/// fold and dψ/de there.
fn locate(
    pr: &mut EdgeProblem,
    v: &[f64],
    p: f64,
    j: usize,
    tol: f64,
    slope: Option<f64>,
) -> Option<(EdgeFold, f64)> {
    let d = v.len();
    let (mut f, mut dir) = (vec![0.0; d], vec![0.0; d]);
    let (mut v, mut p) = (v.to_vec(), p);
    pr.solve_at_edge(&mut v, &mut p, j, tol)?;
    let mut s = psi(pr, &v, j, &mut f, &mut dir)?;
    let e0 = v[j];
    let small = 1e-9 * EDGE_UNITS;
    let reach = 0.05 * EDGE_UNITS;
    let mut prev: Option<(f64, f64)> = None;
    let mut best = s.abs();
    let mut stalled = 0;
    let mut slope = slope.filter(|g| g.is_finite() && *g != 0.0);
    for _ in 0..30 {
        let e = v[j];
        let next = match (prev, slope) {
            (Some((ep, sp)), _) if sp != s => e - s * (e - ep) / (s - sp),
            (None, Some(g)) => e - s / g,
            _ => e + 1e-4 * EDGE_UNITS,
        };
        let next = next.clamp(e - reach, e + reach);
        if (next - e0).abs() > 4.0 * reach || !next.is_finite() {
            return None;
        }
        let de = next - e;
        let sp = s;
        let (v_ok, p_ok) = (v.clone(), p);
        // predicted along the family: δv = x_p ψ δe, δp = -ψ δe
        for (a, b) in v.iter_mut().zip(&dir) {
            *a += b * de;
        }
        v[j] = next;
        p -= s * de;
        let solved = pr
            .solve_at_edge(&mut v, &mut p, j, tol)
            .and_then(|_| psi(pr, &v, j, &mut f, &mut dir));
        let Some(s_new) = solved else {
            // a step far below the family's resolution that Newton cannot
            // resolve further (the residual at its rounding floor): the
            // last solved state is the fold to O(Δe)
            if de.abs() < 1e-6 * EDGE_UNITS && pr.margin(&v_ok) > 0.0 {
                return Some((EdgeFold { v: v_ok, p: p_ok }, slope.unwrap_or(f64::NAN)));
            }
            return None;
        };
        s = s_new;
        slope = Some((s - sp) / de);
        prev = Some((e, sp));
        if de.abs() < small || s == 0.0 {
            let g = slope.unwrap_or(f64::NAN);
            return (pr.margin(&v) > 0.0).then_some((EdgeFold { v, p }, g));
        }
        // no root: |ψ| has not halved in three secant steps
        if s.abs() < 0.5 * best {
            best = s.abs();
            stalled = 0;
        } else {
            stalled += 1;
            if stalled >= 3 {
                return None;
            }
        }
    }
    None
}

/// Why an edge fold curve could not start.
#[derive(Clone, Debug, PartialEq)]
pub enum EdgeFoldError {
    /// The scenario is not one the edge formulation covers (not the step
    /// albedo, or more than two edges).
    NotCovered(String),
    /// No smooth fold of the edge model near the given one (e.g. a corner,
    /// where an ice region appears or vanishes at a pole or the equator).
    NoFold,
}

impl std::fmt::Display for EdgeFoldError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            EdgeFoldError::NotCovered(why) => write!(f, "not covered by the edge model: {why}"),
            EdgeFoldError::NoFold => write!(f, "no smooth fold of the edge model there"),
        }
    }
}

/// Work counters of an edge fold curve.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct EdgeFoldWork {
    /// Folds located (one per across value tried).
    pub located: u64,
    /// Across values at which no fold was accepted (the step was halved).
    pub rejected: u64,
}

/// Traces, in the across parameter over [a_lo, a_hi], the fold of `model`
/// (across parameter at its present value a0) at vary value `p` with band
/// temperatures `bands` (a fold as a trace reports it). Returns the curve
/// as (across, vary) points in order of the across value, kept where the
/// vary value lies in [p_lo, p_hi], and the work done.
#[allow(clippy::too_many_arguments)]
pub fn trace_edge_fold_curve(
    model: &Model,
    vary: Param,
    across: Param,
    bands: &[f64],
    p: f64,
    (a_lo, a_hi): (f64, f64),
    (p_lo, p_hi): (f64, f64),
    tolerance: f64,
) -> Result<(Vec<(f64, f64)>, EdgeFoldWork), EdgeFoldError> {
    if model.planet.albedo.kind != crate::physics::albedo::AlbedoKind::Step {
        return Err(EdgeFoldError::NotCovered("not the step albedo".into()));
    }
    let mut m = model.clone();
    m.set_param(vary, p);
    let (topo, edges) = Topology::of_intervals(&m.ice_intervals(bands), m.grid.faces[0]);
    let k = topo.edges();
    if k == 0 {
        // a state without edges: a corner where a region appears, not a
        // smooth fold of the edge model
        return Err(EdgeFoldError::NoFold);
    }
    if k > 2 {
        return Err(EdgeFoldError::NotCovered(format!(
            "a fold with {k} ice edges"
        )));
    }
    let em = EdgeModel::new(&m, topo).map_err(|e| EdgeFoldError::NotCovered(format!("{e:?}")))?;
    let mut pr = EdgeProblem::new(em, vary, log_scale(vary, p_lo.min(p_hi)));
    let n = pr.em.cells();
    let mut u = vec![0.0; n + k];
    if !pr.em.guess(&model.grid, bands, &edges, &mut u) {
        return Err(EdgeFoldError::NoFold);
    }
    let v = pr.scaled(&u);
    let c0 = pr.coordinate(p);
    pr.set_param(c0);
    let j = n + k - 1;
    let mut work = EdgeFoldWork::default();
    let (start, slope0) =
        locate(&mut pr, &v, c0, j, tolerance, None).ok_or(EdgeFoldError::NoFold)?;
    // the fold asked for, not a neighbour the secant ran to
    if (pr.value(start.p) - p).abs() > 1e-6 * p.abs().max(1.0) {
        return Err(EdgeFoldError::NoFold);
    }
    work.located += 1;
    let a0 = model.param(across);
    let span = (a_hi - a_lo).abs();
    let (wlo, whi) = (pr.coordinate(p_lo.min(p_hi)), pr.coordinate(p_lo.max(p_hi)));
    let width = whi - wlo;
    let mut halves: [Vec<(f64, EdgeFold)>; 2] = [Vec::new(), Vec::new()];
    for (side, sign) in [(0usize, -1.0f64), (1, 1.0)] {
        let bound = if sign > 0.0 {
            a_hi.max(a_lo)
        } else {
            a_lo.min(a_hi)
        };
        let mut last: Vec<(f64, EdgeFold)> = vec![(a0, start.clone())];
        let mut slope = slope0;
        let mut h = span / 40.0;
        let h_max = span / 40.0;
        let h_min = 1e-4 * span.max(1e-300);
        loop {
            let (a1, f1) = last.last().expect("a start");
            let (a1, e1, p1) = (*a1, f1.v[j], f1.p);
            if (bound - a1) * sign <= 0.0 {
                break;
            }
            let a = if (bound - a1) * sign <= h {
                bound
            } else {
                a1 + sign * h
            };
            // linear extrapolation of the last two folds
            let (mut v, mut pc) = (f1.v.clone(), p1);
            if last.len() >= 2 {
                let (a2, f2) = &last[last.len() - 2];
                let r = (a - a1) / (a1 - a2);
                for (x, c) in v.iter_mut().zip(&f2.v) {
                    *x += r * (*x - c);
                }
                pc = p1 + r * (p1 - f2.p);
            }
            pr.em.model.set_param(across, a);
            pr.em.refresh();
            work.located += 1;
            let found = locate(&mut pr, &v, pc, j, tolerance, Some(slope)).filter(|(g, _)| {
                // the same fold: the held edge and p move continuously
                (g.v[j] - e1).abs() <= 0.1 * EDGE_UNITS
                    && (g.p - p1).abs() <= 0.1 * width.abs().max(1e-300)
            });
            match found {
                Some((g, gs)) => {
                    // well outside the vary range: the curve has left the map
                    let left = g.p < wlo - width || g.p > whi + width;
                    last.push((a, g));
                    if gs.is_finite() && gs != 0.0 {
                        slope = gs;
                    }
                    h = (h * 1.5).min(h_max);
                    if left {
                        break;
                    }
                }
                None => {
                    work.rejected += 1;
                    h *= 0.25;
                    if h < h_min {
                        break;
                    }
                }
            }
        }
        halves[side] = last;
    }
    let [mut low, high] = halves;
    low.reverse();
    low.pop(); // the start, which `high` begins with
    let curve = low
        .into_iter()
        .chain(high)
        .map(|(a, f)| (a, pr.value(f.p)))
        .filter(|(_, q)| *q >= p_lo.min(p_hi) && *q <= p_lo.max(p_hi))
        .collect();
    Ok((curve, work))
}
