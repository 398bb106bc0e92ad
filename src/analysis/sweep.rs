//! Regime maps: continuation in one parameter for every value of another,
//! in parallel, reduced to compact slices that can be computed in shards
//! and merged, then rendered the same way whatever the threads or shards.

use crate::analysis::branches::{Hysteresis, TraceOptions, poleward_edge_deg, trace_all};
use crate::analysis::periodic::{SeasonalTraceOptions, trace_seasonal};
use crate::model::climate::State;
use crate::model::seasonal::SeasonalModel;
use crate::model::{Model, Param};
use serde::{Deserialize, Serialize};

/// What a map computes (everything that determines its result).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct MapSpec {
    /// Key of the parameter that varies across slices.
    pub across: String,
    /// First across value.
    pub across_from: f64,
    /// Last across value.
    pub across_to: f64,
    /// Number of slices (>= 2), evenly spaced, ends included.
    pub count: usize,
    /// Key traced by continuation within a slice.
    pub vary: String,
    /// Lower end of the traced range.
    pub vary_from: f64,
    /// Upper end.
    pub vary_to: f64,
    /// Cells of the regular summary grid along the traced axis.
    pub cells: usize,
    /// Also continue each boundary's fold in two parameters.
    #[serde(default)]
    pub fold_curves: bool,
    /// Further slice parameters after the first (`--across` given more
    /// than once): the slices are the Cartesian product of every across
    /// grid, the first key varying slowest. Empty for a map over one key
    /// (and then not written, so such a spec reads and writes as before).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub more: Vec<AcrossAxis>,
}

/// A further slice parameter of a map over more than one across key.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct AcrossAxis {
    /// Key of the parameter.
    pub key: String,
    /// First value.
    pub from: f64,
    /// Last value.
    pub to: f64,
    /// Number of values (>= 2), evenly spaced, ends included.
    pub count: usize,
}

impl AcrossAxis {
    /// Value i of the axis: from + (to - from) i / (count - 1).
    pub fn value(&self, i: usize) -> f64 {
        self.from + (self.to - self.from) * i as f64 / (self.count - 1) as f64
    }
}

impl MapSpec {
    /// Number of slices: the product of the counts of every across key
    /// (`count` for a map over one key).
    pub fn slices(&self) -> usize {
        self.more.iter().fold(self.count, |n, a| n * a.count)
    }

    /// Number of slices per value of the first across key: the product of
    /// the counts of the further keys (1 for a map over one key).
    pub fn inner(&self) -> usize {
        self.more.iter().map(|a| a.count).product()
    }

    /// The first across key's value at slice j of the flattened product
    /// (first key slowest): i = j / [`MapSpec::inner`], from + (to - from)
    /// i / (count - 1); for one key, slice j's value.
    pub fn across_value(&self, j: usize) -> f64 {
        let i = j / self.inner();
        self.across_from + (self.across_to - self.across_from) * i as f64 / (self.count - 1) as f64
    }

    /// The values of the further across keys at slice j ([`MapSpec::more`]
    /// order, the last key fastest); empty for one key.
    pub fn more_values(&self, j: usize) -> Vec<f64> {
        let mut rest = j % self.inner();
        let mut out = vec![0.0; self.more.len()];
        for (k, a) in self.more.iter().enumerate().rev() {
            out[k] = a.value(rest % a.count);
            rest /= a.count;
        }
        out
    }

    /// The further across parameters and their values at slice j (keys
    /// that are not parameters, which a validated spec never has, are
    /// skipped).
    pub fn more_params(&self, j: usize) -> Vec<(Param, f64)> {
        self.more
            .iter()
            .zip(self.more_values(j))
            .filter_map(|(a, v)| Param::from_key(&a.key).map(|p| (p, v)))
            .collect()
    }

    /// Centre value of summary cell c along the traced axis.
    pub fn cell_value(&self, c: usize) -> f64 {
        self.vary_from + (self.vary_to - self.vary_from) * (c as f64 + 0.5) / self.cells as f64
    }

    /// The command that reproduces this map (without output, threads or
    /// shard options): the same in every shard and in a single run.
    pub fn command(&self) -> String {
        let extra = if self.fold_curves {
            " --fold-curves"
        } else {
            " --no-fold-curves"
        };
        let more: String = self
            .more
            .iter()
            .map(|a| format!(" --across {}={}:{}:{}", a.key, a.from, a.to, a.count))
            .collect();
        format!(
            "icefold map --across {}={}:{}:{}{more} --vary {} --from {} --to {} --cells {}{extra}",
            self.across,
            self.across_from,
            self.across_to,
            self.count,
            self.vary,
            self.vary_from,
            self.vary_to,
            self.cells
        )
    }
}

/// One traced point of a slice.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct MapPoint {
    /// Branch id within the slice.
    pub branch: usize,
    /// Traced-parameter value.
    pub value: f64,
    /// Climate state label.
    pub state: String,
    /// Unstable modes (0 = stable).
    pub unstable_modes: usize,
    /// Global mean temperature, °C.
    pub global_mean_c: f64,
    /// Ice area fraction.
    pub ice_area_fraction: f64,
    /// Northern ice edges, deg.
    pub ice_edges_deg: Vec<f64>,
    /// The residual the point reached: max |F|, W m-2 (annual-mean
    /// model), or max |u - Φ(u)|, K (seasonal models; [`MapModel::residual`]).
    pub residual: f64,
    /// Habitable fraction of the surface
    /// ([`crate::model::climate::Diagnostics::habitable_fraction`]).
    pub habitable_fraction: f64,
}

/// One fold of a slice.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct MapFold {
    /// Branch id within the slice.
    pub branch: usize,
    /// Traced-parameter value of the fold.
    pub value: f64,
    /// Most poleward northern ice edge at the fold, deg.
    pub ice_edge_deg: f64,
    /// Global mean at the fold, °C.
    pub global_mean_c: f64,
    /// The stable state that ends at the fold.
    pub from_state: String,
    /// Where the climate goes ("none" if unknown).
    pub to_state: String,
}

/// One stable climate of a summary cell: the values of the traced point
/// nearest the cell centre on a stable branch segment spanning it.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct CellClimate {
    /// Its state as a single bit of the regime mask ([`state_bit`]).
    pub state: u32,
    /// Global mean temperature, °C.
    pub global_mean_c: f64,
    /// The northern hemisphere's most poleward ice edge, deg ([`crate::model::climate::ice_edges_deg`]).
    pub ice_edge_north_deg: f64,
    /// The southern hemisphere's most poleward ice edge, deg ([`crate::model::climate::ice_edges_deg`]).
    pub ice_edge_south_deg: f64,
    /// Habitable fraction of the surface
    /// ([`crate::model::climate::Diagnostics::habitable_fraction`]).
    pub habitable_fraction: f64,
}

/// The compact result of one slice.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Slice {
    /// Slice index j.
    pub index: usize,
    /// Across value (of the first across key).
    pub across: f64,
    /// Values of the further across keys ([`MapSpec::more`]); empty, and
    /// not written, for a map over one key.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub more: Vec<f64>,
    /// Traced points.
    pub points: Vec<MapPoint>,
    /// Folds.
    pub folds: Vec<MapFold>,
    /// Per summary cell: bitmask of the stable states present
    /// (see [`state_bit`]).
    pub regime: Vec<u32>,
    /// Per summary cell: number of coexisting stable climates.
    pub stable_count: Vec<u32>,
    /// Per summary cell: its stable climates, warmest first (as many as
    /// `stable_count`).
    pub climates: Vec<Vec<CellClimate>>,
    /// Notes (branches that ended early, seeds not continued).
    pub notes: Vec<String>,
}

/// The states in bit order of the regime mask.
pub const STATES: [State; 5] = [
    State::IceFree,
    State::PolarCaps,
    State::EquatorialBelt,
    State::Snowball,
    State::Other,
];

/// Bit of a state in the regime mask: ice-free 1, polar-caps 2,
/// equatorial-belt 4, snowball 8, other 16.
pub fn state_bit(s: State) -> u32 {
    1 << STATES.iter().position(|x| *x == s).unwrap_or(4)
}

/// Human label of a regime mask, e.g. "polar-caps + snowball"; "none" for 0.
pub fn regime_label(mask: u32) -> String {
    let names: Vec<&str> = STATES
        .iter()
        .filter(|s| mask & state_bit(**s) != 0)
        .map(|s| s.label())
        .collect();
    if names.is_empty() {
        "no stable climate".into()
    } else {
        names.join(" + ")
    }
}

/// Reduces a traced slice to its compact form.
pub fn reduce(spec: &MapSpec, index: usize, across: f64, h: &Hysteresis) -> Slice {
    let mut points = Vec::new();
    let mut folds = Vec::new();
    let mut notes = h.failures.clone();
    let mut regime = vec![0u32; spec.cells];
    let mut stable_count = vec![0u32; spec.cells];
    let mut climates: Vec<Vec<CellClimate>> = vec![Vec::new(); spec.cells];
    for b in &h.branches {
        for q in &b.points {
            let d = &q.diagnostics;
            points.push(MapPoint {
                branch: b.id,
                value: q.p,
                state: d.state.label().into(),
                unstable_modes: q.unstable_modes,
                global_mean_c: d.global_mean_c,
                ice_area_fraction: d.ice_area_fraction,
                ice_edges_deg: d.ice_edges_deg.clone(),
                residual: q.residual,
                habitable_fraction: d.habitable_fraction,
            });
        }
        for f in &b.folds {
            folds.push(MapFold {
                branch: b.id,
                value: f.point.p,
                ice_edge_deg: poleward_edge_deg(&f.point.diagnostics),
                global_mean_c: f.point.diagnostics.global_mean_c,
                from_state: f.from_state.label().into(),
                to_state: f
                    .jump_to
                    .as_ref()
                    .map_or("none", |j| j.diagnostics.state.label())
                    .into(),
            });
        }
        for e in &b.ends {
            if let crate::numerics::continuation::EndReason::StepTooSmall { .. } = e {
                notes.push(format!("branch {} ended early: {e}", b.id));
            }
        }
        // summary cells: a stable segment between consecutive points covers
        // the cells whose centre lies between them
        for w in b.points.windows(2) {
            let (q1, q2) = (&w[0], &w[1]);
            if q1.unstable_modes != 0 || q2.unstable_modes != 0 {
                continue;
            }
            let (lo, hi) = (q1.p.min(q2.p), q1.p.max(q2.p));
            for c in 0..spec.cells {
                let v = spec.cell_value(c);
                // half-open on the right so a shared point counts once
                if v >= lo && v < hi {
                    let q = if (v - q1.p).abs() <= (v - q2.p).abs() {
                        q1
                    } else {
                        q2
                    };
                    regime[c] |= state_bit(q.diagnostics.state);
                    stable_count[c] += 1;
                    climates[c].push(CellClimate {
                        state: state_bit(q.diagnostics.state),
                        global_mean_c: q.diagnostics.global_mean_c,
                        ice_edge_north_deg: q.diagnostics.ice_edge_north_deg,
                        ice_edge_south_deg: q.diagnostics.ice_edge_south_deg,
                        habitable_fraction: q.diagnostics.habitable_fraction,
                    });
                }
            }
        }
    }
    for cell in &mut climates {
        cell.sort_by(|a, b| b.global_mean_c.total_cmp(&a.global_mean_c));
    }
    if h.branches.is_empty() && notes.is_empty() {
        notes.push(format!(
            "no branch traced: no seed reached an equilibrium in {}..{}",
            spec.vary_from, spec.vary_to
        ));
    }
    Slice {
        index,
        across,
        more: spec.more_values(index),
        points,
        folds,
        regime,
        stable_count,
        climates,
        notes,
    }
}

/// Computes slice j of the map.
#[allow(clippy::too_many_arguments)]
pub fn compute_slice(
    model: &Model,
    spec: &MapSpec,
    across: Param,
    vary: Param,
    j: usize,
    warm: f64,
    cold: f64,
    tol: f64,
) -> Slice {
    let mut m = model.clone();
    let a = spec.across_value(j);
    m.set_param(across, a);
    for (p, v) in spec.more_params(j) {
        m.set_param(p, v);
    }
    // a map needs the regimes and each fold's target, not the transition
    // times or the sensitivities: jumps are the branch-list targets
    let opts = TraceOptions {
        tolerance: tol,
        integrate_jumps: false,
        sensitivities: false,
        ..TraceOptions::default()
    };
    let h = trace_all(
        &m,
        vary,
        spec.vary_from,
        spec.vary_to,
        warm,
        cold,
        &opts,
        &mut |_| {},
    );
    reduce(spec, j, a, &h)
}

/// The model a map traces in each slice: the scenario's own model, never
/// a substitute (an annual-mean map is not drawn for a seasonal scenario).
#[derive(Clone, Debug)]
// one value per map, cloned once per slice: the size of the seasonal
// variant does not matter
#[allow(clippy::large_enum_variant)]
pub enum MapModel {
    /// The annual-mean model F(T; p) = 0: equilibria by [`trace_all`],
    /// stable where no eigenvalue of C⁻¹ J is positive.
    Annual(Model),
    /// The seasonal model (with or without sea ice): periodic climates
    /// u = Φ(u) of the annual map by
    /// [`crate::analysis::periodic::trace_seasonal`], stable where no
    /// Floquet multiplier (eigenvalue of the monodromy matrix M = ∂Φ/∂u)
    /// lies outside the unit circle.
    Seasonal(SeasonalModel),
}

impl MapModel {
    /// Name of the model, as written in `summary.json`, `map.nc` and shard
    /// files: "annual-mean", "seasonal" or "seasonal with sea ice".
    pub fn name(&self) -> &'static str {
        match self {
            MapModel::Annual(_) => "annual-mean",
            MapModel::Seasonal(sm) if sm.has_sea_ice() => "seasonal with sea ice",
            MapModel::Seasonal(_) => "seasonal",
        }
    }

    /// Implicit time steps per year of a seasonal model (None: annual-mean).
    pub fn steps_per_year(&self) -> Option<usize> {
        match self {
            MapModel::Annual(_) => None,
            MapModel::Seasonal(sm) => Some(sm.steps_per_year()),
        }
    }

    /// The annual-mean model of the planet (for a seasonal model, under the
    /// annual-mean insolation): the parameters it has, and the model the
    /// annual-only parts of a map (fold curves) use.
    pub fn annual(&self) -> Model {
        match self {
            MapModel::Annual(m) => m.clone(),
            MapModel::Seasonal(sm) => sm.annual_model(),
        }
    }

    /// How stability is decided, in words (for `summary.json` and `map.nc`).
    pub fn stability(&self) -> &'static str {
        match self {
            MapModel::Annual(_) => {
                "stable equilibrium: no positive eigenvalue of the Jacobian of the energy balance (per unit heat capacity)"
            }
            MapModel::Seasonal(_) => {
                "stable periodic climate: no Floquet multiplier (eigenvalue of the monodromy matrix of the annual map) outside the unit circle"
            }
        }
    }

    /// The residual of a traced point: (unit, what it measures).
    pub fn residual(&self) -> (&'static str, &'static str) {
        match self {
            MapModel::Annual(_) => (
                "W m-2",
                "max |F| over the cells: the energy imbalance of the worst cell",
            ),
            MapModel::Seasonal(_) => (
                "K",
                "max |u - Phi(u)| over the bands: the change of the state over one year",
            ),
        }
    }

    /// The corrector tolerance the slices are traced to: `annual_tol`
    /// (`solver.tolerance`, W m-2) for the annual-mean model, the seasonal
    /// trace's own tolerance on max |u - Φ(u)| (K,
    /// [`SeasonalTraceOptions::default`], as `trace` uses) otherwise.
    pub fn tolerance(&self, annual_tol: f64) -> f64 {
        match self {
            MapModel::Annual(_) => annual_tol,
            MapModel::Seasonal(_) => SeasonalTraceOptions::default().tolerance,
        }
    }

    /// Computes slice j of the map with this model ([`compute_slice`] or
    /// [`compute_seasonal_slice`]); `tol` is `solver.tolerance` (used by the
    /// annual-mean model only, see [`MapModel::tolerance`]).
    #[allow(clippy::too_many_arguments)]
    pub fn slice(
        &self,
        spec: &MapSpec,
        across: Param,
        vary: Param,
        j: usize,
        warm: f64,
        cold: f64,
        tol: f64,
    ) -> Slice {
        match self {
            MapModel::Annual(m) => compute_slice(m, spec, across, vary, j, warm, cold, tol),
            MapModel::Seasonal(sm) => compute_seasonal_slice(
                sm,
                spec,
                across,
                vary,
                j,
                warm,
                cold,
                &SeasonalTraceOptions::default(),
            ),
        }
    }
}

/// Computes slice j of a seasonal map: the seasonal model with the across
/// parameter set to its value, every branch of periodic climates traced in
/// the vary parameter over exactly [vary_from, vary_to] by
/// [`crate::analysis::periodic::trace_seasonal`] (no extension of the
/// range: every slice covers the same cells), states below absolute zero
/// removed, each fold's stable climate and branch-list jump resolved
/// ([`crate::analysis::branches::resolve_jumps`], as `trace` does for a
/// seasonal trace), then reduced exactly as an annual-mean slice
/// ([`reduce`]). Points report the annual-mean profile of their cycle,
/// stability from the Floquet multipliers, and max |u - Φ(u)| (K) as the
/// residual. Nothing inside runs in parallel except faer's dense solves
/// under faer's global parallelism, which `map` sets to sequential
/// (`faer::set_global_parallelism(faer::Par::Seq)`).
#[allow(clippy::too_many_arguments)]
pub fn compute_seasonal_slice(
    sm: &SeasonalModel,
    spec: &MapSpec,
    across: Param,
    vary: Param,
    j: usize,
    warm: f64,
    cold: f64,
    opts: &SeasonalTraceOptions,
) -> Slice {
    let mut sm = sm.clone();
    let a = spec.across_value(j);
    sm.set_param(across, a);
    for (p, v) in spec.more_params(j) {
        sm.set_param(p, v);
    }
    let mut h = trace_seasonal(
        &sm,
        vary,
        spec.vary_from,
        spec.vary_to,
        warm,
        cold,
        opts,
        &mut |_| {},
    );
    crate::analysis::branches::drop_unphysical(sm.model(), &mut h);
    crate::analysis::branches::resolve_jumps(
        &mut h.branches,
        (spec.vary_to - spec.vary_from).abs(),
    );
    reduce(spec, j, a, &h)
}

/// The label of the boundary a fold lies on: `from -> to` for a fold that
/// ends a stable climate, `unstable-branch fold` for a turning point
/// between unstable states (it bounds no stable climate).
pub fn transition_label(f: &MapFold) -> String {
    if f.to_state == "none" {
        "unstable-branch fold".into()
    } else {
        format!("{} -> {}", f.from_state, f.to_state)
    }
}

/// Whether a boundary separates regimes (drawn on the map figure).
pub fn is_transition(label: &str) -> bool {
    match label.split_once(" -> ") {
        Some((a, b)) => a != b,
        None => false,
    }
}

/// A boundary curve in the (across, vary) plane.
#[derive(Clone, Debug, PartialEq)]
pub struct Boundary {
    /// Transition label, e.g. "polar-caps -> snowball".
    pub transition: String,
    /// How it was obtained ("slices": folds of neighbouring slices joined).
    pub method: &'static str,
    /// Points (across, vary).
    pub points: Vec<(f64, f64)>,
}

/// Joins the folds of consecutive slices into curves: within each slice the
/// folds of one transition are ordered by value, and the k-th fold of a
/// transition joins the k-th of the same transition in the next slice. A
/// curve breaks where a slice has no such fold.
pub fn join_boundaries<'a>(slices: impl IntoIterator<Item = &'a Slice>) -> Vec<Boundary> {
    let mut done: Vec<Boundary> = Vec::new();
    let mut open: Vec<(String, usize, Boundary)> = Vec::new();
    for s in slices {
        let mut by: std::collections::BTreeMap<String, Vec<f64>> =
            std::collections::BTreeMap::new();
        for f in &s.folds {
            by.entry(transition_label(f)).or_default().push(f.value);
        }
        for v in by.values_mut() {
            v.sort_by(f64::total_cmp);
        }
        let mut next: Vec<(String, usize, Boundary)> = Vec::new();
        for (label, vals) in &by {
            for (k, v) in vals.iter().enumerate() {
                let pos = open.iter().position(|(l, kk, _)| l == label && *kk == k);
                let mut b = match pos {
                    Some(i) => open.remove(i).2,
                    None => Boundary {
                        transition: label.clone(),
                        method: "slices",
                        points: Vec::new(),
                    },
                };
                b.points.push((s.across, *v));
                next.push((label.clone(), k, b));
            }
        }
        done.extend(open.drain(..).map(|(_, _, b)| b));
        open = next;
    }
    done.extend(open.into_iter().map(|(_, _, b)| b));
    done.sort_by(|a, b| {
        a.transition
            .cmp(&b.transition)
            .then(a.points[0].0.total_cmp(&b.points[0].0))
            .then(a.points[0].1.total_cmp(&b.points[0].1))
    });
    done
}

/// Continues, in two parameters, the fold at the start of every slice-joined
/// transition boundary, skipping boundaries that an earlier continued curve
/// already passes through. Returns curves with method "fold-continuation".
///
/// With the step albedo the slices' folds are those of the edge model
/// (ice edges as unknowns, [`crate::analysis::edgetrace`]), and so is their
/// curve ([`crate::analysis::edgefold`]): smooth, through the slice folds,
/// ending at a cusp or a topology change. A fold the edge model has no
/// smooth fold for (a corner, where an ice region appears or vanishes at a
/// pole or the equator) gets no curve: its boundary stays the slices'.
/// Other albedos continue the fold of the band model
/// ([`crate::analysis::foldcurve`]).
#[allow(clippy::too_many_arguments)]
pub fn continue_boundaries(
    model: &Model,
    spec: &MapSpec,
    across: Param,
    vary: Param,
    bounds: &[Boundary],
    warm: f64,
    cold: f64,
    tol: f64,
) -> Vec<Boundary> {
    let mut out: Vec<Boundary> = Vec::new();
    let width = (spec.vary_to - spec.vary_from).abs();
    for b in bounds
        .iter()
        .filter(|b| b.method == "slices" && is_transition(&b.transition) && b.points.len() >= 2)
    {
        let (a0, p0) = b.points[0];
        let covered = out.iter().any(|c| {
            c.transition == b.transition
                && c.points
                    .iter()
                    .any(|(a, p)| (a - a0).abs() < 1e-9 && (p - p0).abs() < 1e-6 * width)
                || c.points.windows(2).any(|w| {
                    let ((a1, p1), (a2, p2)) = (w[0], w[1]);
                    let (lo, hi) = (a1.min(a2), a1.max(a2));
                    a0 >= lo && a0 <= hi && hi > lo && {
                        let pi = p1 + (p2 - p1) * (a0 - a1) / (a2 - a1);
                        (pi - p0).abs() < 1e-4 * width
                    }
                })
        });
        if covered {
            continue;
        }
        let mut m = model.clone();
        m.set_param(across, a0);
        let h = trace_all(
            &m,
            vary,
            spec.vary_from,
            spec.vary_to,
            warm,
            cold,
            // as the slices are traced: the folds, not their jumps or
            // sensitivities
            &TraceOptions {
                tolerance: tol,
                integrate_jumps: false,
                sensitivities: false,
                ..TraceOptions::default()
            },
            &mut |_| {},
        );
        let Some(f) = h
            .branches
            .iter()
            .flat_map(|br| br.folds.iter())
            .find(|f| (f.point.p - p0).abs() <= 1e-9 * p0.abs().max(1.0))
        else {
            continue;
        };
        let (a_range, p_range) = (
            (spec.across_from, spec.across_to),
            (spec.vary_from, spec.vary_to),
        );
        let edges = crate::analysis::edgefold::trace_edge_fold_curve(
            &m,
            vary,
            across,
            &f.point.temperature,
            f.point.p,
            a_range,
            p_range,
            tol,
        );
        use crate::analysis::edgefold::EdgeFoldError;
        let pts = match edges {
            Ok((pts, _)) => pts,
            Err(EdgeFoldError::NoFold) => continue,
            Err(EdgeFoldError::NotCovered(_)) => crate::analysis::foldcurve::trace_fold_curve(
                &m,
                vary,
                across,
                &f.point.temperature,
                f.point.p,
                a_range,
                p_range,
                tol,
            ),
        };
        if pts.len() >= 2 {
            out.push(Boundary {
                transition: b.transition.clone(),
                method: "fold-continuation",
                points: pts,
            });
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::periodic::polar_ice_edges;
    use crate::io::scenario::Scenario;

    fn model(sets: &[&str]) -> Model {
        let sets: Vec<String> = sets.iter().map(|s| s.to_string()).collect();
        Scenario::load(None, &sets).unwrap().model()
    }

    /// Profile `thr + f(x)` on the band centres x = sin(latitude).
    fn profile(m: &Model, f: impl Fn(f64) -> f64) -> Vec<f64> {
        let thr = m.planet.albedo.threshold;
        m.grid.centres.iter().map(|x| thr + f(*x)).collect()
    }

    /// Ice-free, snowball, polar caps (ice poleward of about 30 deg: the
    /// profile crosses the threshold at x = 0.5) and an equatorial belt
    /// (ice within about 30 deg), on the full and on the symmetric grid.
    #[test]
    fn ice_edges_of_the_four_states() {
        use crate::model::climate::ice_edges_deg as outer_ice_edges;
        for m in [model(&[]), model(&["grid.symmetric=true"])] {
            let band = 180.0 / m.grid.len() as f64 + 1.0;
            let free = profile(&m, |_| 20.0);
            assert_eq!(outer_ice_edges(&m, &free), (90.0, -90.0));
            let ball = profile(&m, |_| -50.0);
            assert_eq!(outer_ice_edges(&m, &ball), (0.0, 0.0));
            let caps = profile(&m, |x| 5.0 - 20.0 * x * x);
            let (n, s) = outer_ice_edges(&m, &caps);
            assert!((n - 30.0).abs() < band && (s + n).abs() < 1e-9, "{n} {s}");
            if !m.grid.symmetric {
                // polar caps: the same as the polar ice edges
                assert_eq!((n, s), polar_ice_edges(&m, &caps));
            }
            let belt = profile(&m, |x| -5.0 + 20.0 * x * x);
            let (n, s) = outer_ice_edges(&m, &belt);
            assert!((n - 30.0).abs() < band && (s + n).abs() < 1e-9, "{n} {s}");
        }
    }
}
