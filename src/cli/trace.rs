//! `icefold trace`: every branch of equilibria in one parameter.
use super::context::{Args, CliError, load, out_dir, provenance, written_list};
use super::progress::Progress;
use crate::analysis::branches::{
    Fold, Hysteresis, TraceOptions, TracedPoint, poleward_edge_deg, trace_all,
};
use crate::analysis::sensitivity::other_params;
use crate::io::export::{Cell, OutputSet, Table};
use crate::io::plot::{self, BranchCurve, FoldMark};
use crate::model::Param;

/// Parses and checks `--vary`, `--from`, `--to` against the model.
pub fn parse_range(
    args: &Args,
    model: &crate::model::Model,
) -> Result<(Param, f64, f64), CliError> {
    let key = args.vary.clone().unwrap_or_else(|| "orbit.flux".into());
    let keys: Vec<&str> = Param::ALL.iter().map(|p| p.key()).collect();
    let param = Param::from_key(&key).ok_or_else(|| {
        CliError::Usage(format!(
            "--vary `{key}` is not a parameter that can be varied; one of: {}",
            keys.join(", ")
        ))
    })?;
    if !model.has_param(param) {
        return Err(CliError::Usage(format!(
            "--vary `{key}` does not apply to this scenario (e.g. radiation.a needs radiation.kind = \"linear\")"
        )));
    }
    let current = model.param(param);
    let (vlo, vhi) = param.range();
    let num = |flag: &str, v: &Option<String>, default: f64| -> Result<f64, CliError> {
        match v {
            None => Ok(default),
            Some(s) => match s.trim().parse::<f64>() {
                Ok(x) if x.is_finite() => Ok(x),
                _ => Err(CliError::Usage(format!(
                    "{flag} `{s}` is not a finite number"
                ))),
            },
        }
    };
    let (dlo, dhi) = if param == Param::Flux {
        (decimal(0.8 * current), decimal(1.15 * current))
    } else {
        let w = 0.2 * current.abs().max(1.0);
        (
            decimal((current - w).max(vlo)),
            decimal((current + w).min(vhi)),
        )
    };
    let from = num("--from", &args.from, dlo)?;
    let to = num("--to", &args.to, dhi)?;
    if from >= to {
        return Err(CliError::Usage(format!(
            "--from {from} --to {to}: the range is empty or inverted (need from < to)"
        )));
    }
    if from < vlo || to > vhi {
        return Err(CliError::Usage(format!(
            "--from {from} --to {to}: {key} must stay within {vlo} to {vhi}"
        )));
    }
    Ok((param, from, to))
}

/// `x` rounded to 12 significant digits, so that a computed range end is
/// the decimal a user would write (0.8 x 1361 = 1088.8, not
/// 1088.8000000000002).
pub fn decimal(x: f64) -> f64 {
    if x == 0.0 || !x.is_finite() {
        return x;
    }
    format!("{x:.11e}").parse().unwrap_or(x)
}

/// The folds of the edge-parametrised families of the linear step-albedo
/// model ([`crate::analysis::skeleton`]) for a trace in flux, as JSON; or
/// why they do not apply.
fn edge_family(
    sc: &crate::io::scenario::Scenario,
    model: &crate::model::Model,
    param: Param,
) -> serde_json::Value {
    use crate::analysis::skeleton::EdgeFamilies;
    if param != Param::Flux || sc.flag("seasons.enabled") {
        return serde_json::json!({"applies": false, "reason": "only for annual-mean traces in orbit.flux"});
    }
    let cells = if model.grid.symmetric {
        model.len()
    } else {
        model.len() / 2
    };
    match EdgeFamilies::new(model, cells) {
        Err(e) => serde_json::json!({"applies": false, "reason": e.to_string()}),
        Ok(mut f) => {
            let folds: Vec<serde_json::Value> = f
                .folds(400)
                .iter()
                .map(|x| {
                    serde_json::json!({
                        "topology": x.topology.label(),
                        "orbit.flux": x.flux,
                        "ice_edge_north_deg": x.edge_x.clamp(0.0, 1.0).asin().to_degrees(),
                        "corner": x.corner,
                    })
                })
                .collect();
            serde_json::json!({
                "applies": true,
                "method": "ice edge as the parameter of each one-edge topology on a grid whose faces move with the edge (North's method on a grid); hemispherically symmetric states with at most one edge per hemisphere",
                "cells_per_hemisphere": cells,
                "folds": folds,
            })
        }
    }
}

/// Whether a bistable window [a, b] is cut by the traced range [from, to]
/// at its lower and its upper end (its end is the range's end, to 1e-9 of
/// the range): the hysteresis there is not closed inside the range.
fn window_open_ends(a: f64, b: f64, from: f64, to: f64) -> (bool, bool) {
    let tol = 1e-9 * (to - from).abs().max(f64::MIN_POSITIVE);
    ((a - from).abs() <= tol, (b - to).abs() <= tol)
}

/// `x` rounded away from the range (up for `dir` > 0, down otherwise) to a
/// multiple of the power of ten nearest a hundredth of the width `w`, so
/// that an extended range ends at a number a user would write.
fn round_out(x: f64, w: f64, dir: f64) -> f64 {
    let step = 10f64.powf((w.abs() / 100.0).log10().floor());
    if !(step.is_finite() && step > 0.0) {
        return x;
    }
    if dir > 0.0 {
        (x / step).ceil() * step
    } else {
        (x / step).floor() * step
    }
}

/// How many times `trace` widens a default range whose bistable window is
/// still open at an end (by its width, or a factor 2 for keys continued in
/// their logarithm).
const MAX_EXTENSIONS: usize = 6;

/// Runs `trace`.
pub fn cmd_trace(args: &Args) -> Result<String, CliError> {
    if args.hierarchy {
        return super::hierarchy::cmd_hierarchy(args);
    }
    let sc = load(args)?;
    let model = sc.model();
    let (param, from, to) = parse_range(args, &model)?;
    let quiet = args.quiet;
    let bar = Progress::spinner("trace", quiet);
    let mut progress = |msg: &str| bar.message(msg);
    let opts = TraceOptions {
        tolerance: sc.num("solver.tolerance"),
        ..TraceOptions::default()
    };
    let (warm, cold) = (sc.num("solver.warm_start"), sc.num("solver.cold_start"));
    let seasonal = sc.flag("seasons.enabled");
    if !seasonal && sc.flag("seaice.enabled") {
        return Err(CliError::Usage(
            "`seaice.enabled` = true needs `seasons.enabled` = true for trace (sea ice lives in the seasonal model; the annual-mean model has none)".into(),
        ));
    }
    let seasonal_opts = crate::analysis::periodic::SeasonalTraceOptions::default();
    let run = |from: f64,
               to: f64,
               progress: &mut dyn FnMut(&str)|
     -> Result<Hysteresis, CliError> {
        if seasonal {
            // periodic climates through the annual map (same outputs)
            let sm = sc
                .seasonal_model()
                .map_err(|e| CliError::Usage(format!("seasonal model: {e}")))?;
            let sopts = seasonal_opts;
            let mut h = crate::analysis::periodic::trace_seasonal(
                &sm, param, from, to, warm, cold, &sopts, progress,
            );
            // (the states at the start of each year)
            crate::analysis::branches::drop_unphysical(sm.model(), &mut h);
            crate::analysis::branches::resolve_jumps(&mut h.branches, (to - from).abs());
            for f in h.branches.iter_mut().flat_map(|b| b.folds.iter_mut()) {
                if f.jump_to.is_some() {
                    f.jump_note = Some(
                        "seasonal trace: jump_to is the branch-list guess (nearest stable climate beyond the fold in the direction the state was moving), not integrated in time".into(),
                    );
                }
            }
            Ok(h)
        } else {
            Ok(trace_all(
                &model, param, from, to, warm, cold, &opts, progress,
            ))
        }
    };
    let requested = (from, to);
    let (mut from, mut to) = (from, to);
    let skeleton = edge_family(&sc, &model, param);
    // where the edge-parametrised families apply, their folds say at once
    // how far a default range must reach (a tenth of the range beyond the
    // outermost fold); the loop below still checks the traced windows
    if let Some(folds) = skeleton["folds"].as_array() {
        let (vlo, vhi) = param.range();
        let ps: Vec<f64> = folds
            .iter()
            .filter_map(|f| f["orbit.flux"].as_f64())
            .collect();
        let w = to - from;
        if let Some(top) = ps.iter().copied().reduce(f64::max)
            && args.to.is_none()
            && top >= to
        {
            to = decimal(round_out(top + 0.1 * w, w, 1.0).min(vhi));
        }
        if let Some(bottom) = ps.iter().copied().reduce(f64::min)
            && args.from.is_none()
            && bottom <= from
        {
            from = decimal(round_out(bottom - 0.1 * w, w, -1.0).max(vlo));
        }
    }
    let mut h = run(from, to, &mut progress)?;
    // a range the user did not give grows until every bistable window
    // closes inside it (the snowball melts, the warm branch loses its ice),
    // within the key's allowed range; annual-mean models only (a seasonal
    // trace is too costly to repeat)
    if !seasonal {
        let (vlo, vhi) = param.range();
        let log = crate::analysis::edgetrace::log_scale(param, from);
        for _ in 0..MAX_EXTENSIONS {
            let (mut lo_open, mut hi_open) = (false, false);
            for &(a, b) in &h.bistable {
                let (l, u) = window_open_ends(a, b, from, to);
                lo_open |= l;
                hi_open |= u;
            }
            let w = to - from;
            let (mut nf, mut nt) = (from, to);
            if hi_open && args.to.is_none() {
                nt = decimal(if log { 2.0 * to } else { to + w }.min(vhi));
            }
            if lo_open && args.from.is_none() {
                nf = decimal(if log { 0.5 * from } else { from - w }.max(vlo));
            }
            if nf == from && nt == to {
                break;
            }
            (from, to) = (nf, nt);
            progress(&format!("range extended to [{from}, {to}]"));
            h = run(from, to, &mut progress)?;
        }
    }
    bar.finish();
    for b in &h.branches {
        for e in &b.ends {
            if matches!(
                e,
                crate::numerics::continuation::EndReason::StepTooSmall { .. }
            ) && !quiet
            {
                eprintln!("trace: branch {} ended early: {e}", b.id);
            }
        }
    }
    for f in &h.failures {
        if !quiet {
            eprintln!("trace: {f}");
        }
    }
    if h.branches.is_empty() {
        return Err(CliError::Failed(
            "no branch could be traced; nothing written".into(),
        ));
    }
    let (tolerance, unit, measure) = if seasonal && sc.flag("seaice.enabled") {
        (
            seasonal_opts.tolerance,
            "W yr m-2",
            "max |u - Phi(u)| over the bands: the change of the surface enthalpy over one year",
        )
    } else if seasonal {
        (
            seasonal_opts.tolerance,
            "K",
            "max |u - Phi(u)| over the bands: the change of the state over one year",
        )
    } else {
        (
            opts.tolerance,
            "W m-2",
            "max |F| over the cells: the energy imbalance of the worst cell",
        )
    };
    let (residual_summary, residual_line) = residual_report(&h, tolerance, unit, measure);
    let dir = out_dir(args);
    let mut out = OutputSet::new();
    let key = param.key();
    out.add_table(dir.join("branches.csv"), &branches_table(&h))?;
    out.add_table(dir.join("folds.csv"), &folds_table(&h, &model))?;
    let mut summary = provenance(&sc, args);
    summary.insert("vary".into(), key.into());
    summary.insert("range".into(), serde_json::json!([from, to]));
    summary.insert(
        "requested_range".into(),
        serde_json::json!([requested.0, requested.1]),
    );
    summary.insert("range_extended".into(), ((from, to) != requested).into());
    summary.insert("folds".into(), folds_json(&h, &model));
    summary.insert(
        "sensitivity_units".into(),
        other_params(&model, param)
            .iter()
            .map(|&q| (q.key().to_string(), sensitivity_unit(param, q).into()))
            .collect::<serde_json::Map<_, _>>()
            .into(),
    );
    summary.insert(
        "bistable_windows".into(),
        h.bistable
            .iter()
            .map(|&(a, b)| {
                let (lo, hi) = window_open_ends(a, b, from, to);
                serde_json::json!({
                    "from": a,
                    "to": b,
                    "open_at_from": lo,
                    "open_at_to": hi,
                })
            })
            .collect(),
    );
    summary.insert(
        "branches".into(),
        h.branches
            .iter()
            .map(|b| {
                serde_json::json!({
                    "branch": b.id,
                    "points": b.points.len(),
                    "ends": [b.ends[0].to_string(), b.ends[1].to_string()],
                })
            })
            .collect(),
    );
    summary.insert("residual".into(), residual_summary);
    summary.insert("edge_family".into(), skeleton.clone());
    summary.insert(
        "failures".into(),
        h.failures
            .iter()
            .map(|s| serde_json::Value::from(s.clone()))
            .collect(),
    );
    out.add_json(dir.join("summary.json"), &summary);
    let open: Vec<String> = h
        .bistable
        .iter()
        .flat_map(|&(a, b)| {
            let (l, u) = window_open_ends(a, b, from, to);
            [(l, a), (u, b)]
        })
        .filter(|x| x.0)
        .map(|x| format!("{}", decimal(x.1)))
        .collect();
    let title = if open.is_empty() {
        sc.name().to_string()
    } else {
        format!(
            "{} (bistable window open at {key} = {})",
            sc.name(),
            open.join(", ")
        )
    };
    if args.figures.any() {
        hysteresis_figure(args.figures, &h, &title)?.add_to(&mut out, &dir, "hysteresis");
    }
    out.add_text(dir.join("scenario.toml"), &sc.to_toml());
    let written = super::context::publish(out, &dir, args)?;
    let mut edge_text = String::new();
    if let Some(folds) = skeleton["folds"].as_array() {
        edge_text += "edge-family folds (ice edge as unknown; see summary.json edge_family):\n";
        for f in folds {
            edge_text += &format!(
                "  {:<16} {key} = {:.6}  ice edge {:.3} deg{}\n",
                f["topology"].as_str().unwrap_or(""),
                f["orbit.flux"].as_f64().unwrap_or(f64::NAN),
                f["ice_edge_north_deg"].as_f64().unwrap_or(f64::NAN),
                if f["corner"] == true { " (corner)" } else { "" }
            );
        }
    }
    let mut s = format!(
        "{}: {} branches in {key} over [{from}, {to}]\n",
        sc.name(),
        h.branches.len()
    );
    if (from, to) != requested {
        s += &format!(
            "  range extended from [{}, {}] until the hysteresis closes (give --from and --to to fix it)\n",
            requested.0, requested.1
        );
    }
    for b in &h.branches {
        for f in &b.folds {
            let d = &f.point.diagnostics;
            s += &format!(
                "  fold on branch {}: {key} = {:.9}  ice edge {:.3} deg  global mean {:.3} C  {} -> {}\n",
                b.id,
                f.point.p,
                poleward_edge_deg(d),
                d.global_mean_c,
                f.from_state.label(),
                f.jump_to
                    .as_ref()
                    .map_or("none", |j| j.diagnostics.state.label())
            );
            if let Some(y) = f.jump_years.filter(|y| y.is_finite()) {
                s += &format!("    transition takes {y:.1} years (1% to 99% of the way)\n");
            }
            if let Some(note) = &f.jump_note {
                s += &format!("    note: {note}\n");
            }
        }
    }
    for &(a, b) in &h.bistable {
        let (lo, hi) = window_open_ends(a, b, from, to);
        let note = match (lo, hi) {
            (false, false) => String::new(),
            (true, false) => format!(" (open: still bistable at --from {from}; widen the range)"),
            (false, true) => format!(" (open: still bistable at --to {to}; widen the range)"),
            (true, true) => " (open at both ends of the range; widen it)".to_string(),
        };
        s += &format!("  bistable: {key} from {a:.6} to {b:.6}{note}\n");
    }
    if let Some(line) = residual_line {
        s += &line;
    }
    s += &edge_text;
    s += &written_list(&written);
    Ok(s)
}

/// The residual every traced point and fold reached, against the
/// requested tolerance: `summary.json` `residual` and, when some points
/// stop above the tolerance, a line for stdout naming how many, the
/// largest and why. The corrector accepts max(tolerance, rounding floor)
/// (8 ε max_i Σ_j |J_ij| (|T_j| + 1), [`crate::numerics::newton::rounding_floor`]),
/// or 100 times that when Newton stalls there: no double-precision
/// iteration gets below it. The floor grows with the bands and where a
/// region of open water or ice shrinks to a sliver next to a change of
/// ice topology (its cells are thin, the transport terms stiff).
fn residual_report(
    h: &Hysteresis,
    tolerance: f64,
    unit: &str,
    measure: &str,
) -> (serde_json::Value, Option<String>) {
    let pts: Vec<&crate::analysis::branches::TracedPoint> = h
        .branches
        .iter()
        .flat_map(|b| b.points.iter().chain(b.folds.iter().map(|f| &f.point)))
        .collect();
    let above = pts.iter().filter(|q| q.residual > tolerance).count();
    let worst = pts.iter().map(|q| q.residual).fold(0.0, f64::max);
    let at = pts
        .iter()
        .find(|q| q.residual == worst)
        .map_or(f64::NAN, |q| q.p);
    let note = "points above the tolerance stopped where Newton reached the rounding floor of double precision, 8 eps max_i sum_j |J_ij| (|T_j| + 1), or within 100 times it where Newton stalled there (the floor grows with the bands and where a region shrinks to a sliver next to a change of ice topology); each point's residual is in branches.csv and folds.csv";
    let json = serde_json::json!({
        "measure": measure,
        "unit": unit,
        "tolerance": tolerance,
        "max": worst,
        "max_at": if at.is_finite() { Some(at) } else { None },
        "points": pts.len(),
        "points_above_tolerance": above,
        "note": if above > 0 { Some(note) } else { None },
    });
    let line = (above > 0).then(|| {
        format!(
            "  residual: {above} of {} points stop above the tolerance {tolerance:e} {unit} at the rounding floor (largest {worst:.3e} {unit} at {} = {}; column residual)\n",
            pts.len(),
            h.param.key(),
            decimal(at),
        )
    });
    (json, line)
}

/// The columns of `branches.csv` (and, after `model`, of `hierarchy.csv`),
/// `key` the traced parameter.
pub(super) fn branch_columns(key: &str) -> [&str; 10] {
    [
        "branch",
        key,
        "global_mean_temperature_c",
        "ice_area_fraction",
        "ice_edge_north_deg",
        "state",
        "stable",
        "unstable_modes",
        "residual",
        "habitable_fraction",
    ]
}

/// One traced point of branch `branch` as a row of [`branch_columns`].
pub(super) fn branch_row(branch: usize, q: &TracedPoint) -> Vec<Cell> {
    let d = &q.diagnostics;
    vec![
        Cell::Int(branch as i64),
        Cell::Num(q.p),
        Cell::Num(d.global_mean_c),
        Cell::Num(d.ice_area_fraction),
        Cell::Num(poleward_edge_deg(d)),
        Cell::Text(d.state.label().into()),
        Cell::Bool(q.unstable_modes == 0),
        Cell::modes(q.unstable_modes),
        Cell::Num(q.residual),
        Cell::Num(d.habitable_fraction),
    ]
}

fn branches_table(h: &Hysteresis) -> Table {
    let mut t = Table::new(&branch_columns(h.param.key()));
    for b in &h.branches {
        for q in &b.points {
            t.push_row(branch_row(b.id, q));
        }
    }
    t
}

/// The `folds.csv` column of the sensitivity to `q`: `d_` and the key with
/// dots replaced by underscores (`d_orbit_obliquity`).
pub fn sensitivity_column(q: Param) -> String {
    format!("d_{}", q.key().replace('.', "_"))
}

/// Unit of dλ/dq for a trace in λ: λ's unit per unit of q (UDUNITS style,
/// e.g. `W m-2 / degree`; just λ's unit when q is dimensionless).
pub fn sensitivity_unit(traced: Param, q: Param) -> String {
    let (num, den) = (traced.unit(), q.unit());
    match (num, den) {
        (n, d) if n == d => "1".into(),
        (n, "1") => n.into(),
        ("1", d) if d.contains(' ') => format!("1 / ({d})"),
        ("1", d) => format!("1 / {d}"),
        (n, d) if d.contains(' ') => format!("{n} / ({d})"),
        (n, d) => format!("{n} / {d}"),
    }
}

/// dλ/dq of a fold, if computed (always finite).
fn fold_sensitivity(f: &Fold, q: Param) -> Option<f64> {
    f.sensitivities
        .iter()
        .find(|s| s.0 == q)
        .map(|s| s.1)
        .filter(|v| v.is_finite())
}

fn folds_table(h: &Hysteresis, model: &crate::model::Model) -> Table {
    let key = h.param.key();
    let params = other_params(model, h.param);
    let names: Vec<String> = params.iter().map(|&q| sensitivity_column(q)).collect();
    let mut columns = vec![
        "branch",
        key,
        "global_mean_temperature_c",
        "ice_area_fraction",
        "ice_edge_north_deg",
        "from_state",
        "to_state",
        "jump_time_yr",
        "residual",
        "habitable_fraction",
    ];
    columns.extend(names.iter().map(String::as_str));
    let mut t = Table::new(&columns);
    for b in &h.branches {
        for f in &b.folds {
            let d = &f.point.diagnostics;
            let mut row = vec![
                Cell::Int(b.id as i64),
                Cell::Num(f.point.p),
                Cell::Num(d.global_mean_c),
                Cell::Num(d.ice_area_fraction),
                Cell::Num(poleward_edge_deg(d)),
                Cell::Text(f.from_state.label().into()),
                Cell::Text(
                    f.jump_to
                        .as_ref()
                        .map_or("none", |j| j.diagnostics.state.label())
                        .into(),
                ),
                f.jump_years
                    .filter(|y| y.is_finite())
                    .map_or(Cell::Text(String::new()), Cell::Num),
                Cell::Num(f.point.residual),
                Cell::Num(d.habitable_fraction),
            ];
            // an empty cell where the sensitivity was not computed
            row.extend(
                params
                    .iter()
                    .map(|&q| fold_sensitivity(f, q).map_or(Cell::Text(String::new()), Cell::Num)),
            );
            t.push_row(row);
        }
    }
    t
}

fn folds_json(h: &Hysteresis, model: &crate::model::Model) -> serde_json::Value {
    let params = other_params(model, h.param);
    let mut v = Vec::new();
    for b in &h.branches {
        for f in &b.folds {
            let d = &f.point.diagnostics;
            let sensitivities = if f.sensitivity_error.is_none() {
                let m: serde_json::Map<String, serde_json::Value> = params
                    .iter()
                    .map(|&q| (q.key().to_string(), fold_sensitivity(f, q).into()))
                    .collect();
                serde_json::Value::Object(m)
            } else {
                serde_json::Value::Null
            };
            v.push(serde_json::json!({
                "branch": b.id,
                "value": f.point.p,
                "global_mean_temperature_c": d.global_mean_c,
                "ice_area_fraction": d.ice_area_fraction,
                "ice_edge_north_deg": poleward_edge_deg(d),
                "residual": f.point.residual,
                "habitable_fraction": d.habitable_fraction,
                "from_state": f.from_state.label(),
                "to_state": f.jump_to.as_ref().map_or("none", |j| j.diagnostics.state.label()),
                "to_global_mean_temperature_c": f.jump_to.as_ref().map(|j| j.diagnostics.global_mean_c),
                "to_habitable_fraction": f.jump_to.as_ref().map(|j| j.diagnostics.habitable_fraction),
                "sensitivities": sensitivities,
                "sensitivities_error": f.sensitivity_error,
                "to_ice_edge_north_deg": f.jump_to.as_ref().map(|j| poleward_edge_deg(&j.diagnostics)),
                "to_value": f.jump_to.as_ref().map(|j| j.p),
                "jump_years": f.jump_years.filter(|y| y.is_finite()),
                "jump_note": f.jump_note,
            }));
        }
    }
    serde_json::Value::Array(v)
}

/// The branches of `h` as figure curves (parameter, most poleward northern
/// ice edge, global mean, stability, state per point).
pub(super) fn branch_curves(h: &Hysteresis) -> Vec<BranchCurve> {
    h.branches
        .iter()
        .map(|b| BranchCurve {
            id: b.id,
            param: b.points.iter().map(|q| q.p).collect(),
            ice_edge_deg: b
                .points
                .iter()
                .map(|q| poleward_edge_deg(&q.diagnostics))
                .collect(),
            global_mean_c: b
                .points
                .iter()
                .map(|q| q.diagnostics.global_mean_c)
                .collect(),
            stable: b.points.iter().map(|q| q.unstable_modes == 0).collect(),
            state: b
                .points
                .iter()
                .map(|q| q.diagnostics.state.label().to_string())
                .collect(),
        })
        .collect()
}

fn hysteresis_figure(
    formats: plot::Formats,
    h: &Hysteresis,
    name: &str,
) -> Result<plot::Figure, crate::io::export::ExportError> {
    let branches = branch_curves(h);
    let folds: Vec<FoldMark> = h
        .branches
        .iter()
        .flat_map(|b| b.folds.iter())
        .map(|f| FoldMark {
            param: f.point.p,
            ice_edge_deg: poleward_edge_deg(&f.point.diagnostics),
            global_mean_c: f.point.diagnostics.global_mean_c,
            jump_to_ice_edge_deg: f
                .jump_to
                .as_ref()
                .map(|j| poleward_edge_deg(&j.diagnostics)),
            jump_to_global_mean_c: f.jump_to.as_ref().map(|j| j.diagnostics.global_mean_c),
        })
        .collect();
    plot::hysteresis_figure(
        formats,
        &format!("Branches of equilibria: {name}"),
        h.param.key(),
        &branches,
        &folds,
    )
}

#[cfg(test)]
mod tests {
    use super::{decimal, window_open_ends};

    #[test]
    fn sensitivity_columns_and_units() {
        use super::{sensitivity_column, sensitivity_unit};
        use crate::model::Param;
        assert_eq!(sensitivity_column(Param::Obliquity), "d_orbit_obliquity");
        assert_eq!(sensitivity_column(Param::Co2), "d_radiation_co2_ppm");
        assert_eq!(
            sensitivity_unit(Param::Flux, Param::Obliquity),
            "W m-2 / degree"
        );
        assert_eq!(
            sensitivity_unit(Param::Flux, Param::Diffusivity),
            "W m-2 / (W m-2 K-1)"
        );
        assert_eq!(sensitivity_unit(Param::Flux, Param::IceAlbedo), "W m-2");
        assert_eq!(sensitivity_unit(Param::Flux, Param::OlrA), "1");
        assert_eq!(sensitivity_unit(Param::IceAlbedo, Param::Co2), "1 / ppm");
    }

    #[test]
    fn extended_ends_are_round() {
        assert_eq!(decimal(super::round_out(1822.959, 468.16, 1.0)), 1823.0);
        assert_eq!(decimal(super::round_out(1002.3, 468.16, -1.0)), 1002.0);
        assert_eq!(decimal(super::round_out(0.01234, 0.05, 1.0)), 0.0124);
    }

    #[test]
    fn windows_cut_by_the_range_are_open() {
        assert_eq!(
            window_open_ends(1179.6, 1538.24, 1070.08, 1538.24),
            (false, true)
        );
        assert_eq!(
            window_open_ends(1070.08, 1200.0, 1070.08, 1538.24),
            (true, false)
        );
        assert_eq!(
            window_open_ends(1179.6, 1400.0, 1070.08, 1538.24),
            (false, false)
        );
    }

    #[test]
    fn range_ends_are_the_decimals_a_user_writes() {
        // f64 products that miss the decimal (IEEE 754 arithmetic, common
        // practice, no source)
        assert_ne!(1.15 * 1361.0, 1565.15);
        assert_ne!(23.44 - 0.2 * 23.44, 18.752);
        assert_eq!(decimal(0.8 * 1361.0), 1088.8);
        assert_eq!(decimal(1.15 * 1361.0), 1565.15);
        assert_eq!(decimal(23.44 - 0.2 * 23.44), 18.752);
        assert_eq!(decimal(0.0), 0.0);
        assert_eq!(decimal(-12.000000000000002), -12.0);
    }
}
