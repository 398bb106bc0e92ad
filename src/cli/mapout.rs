//! The files of a map (`map.csv`, `boundaries.csv`, `map.nc`, the figure,
//! `summary.json`), built from slices handed on one at a time in slice
//! order ((`MapWriter::push`)): a slice's traced points become its
//! `map.csv` rows at once and are dropped; what stays per slice is what
//! the other files need (its cells' climates, folds and notes).
//! `map.nc` is written by `map_netcdf` in `super::mapnc`.
use super::context::{CliError, VERSION};
use super::mapnc::{NcPart, map_netcdf};
use crate::analysis::sweep::{Boundary, MapModel, MapSpec, Slice, join_boundaries, regime_label};
use crate::io::export::{Cell, OutputSet, Table};
use crate::io::netcdf::FILL_I32;
use crate::io::plot;
use crate::model::Param;
use std::collections::BTreeSet;
use std::path::Path;

/// The map.csv column of the residual, named with its unit.
pub(super) fn residual_column(mm: &MapModel) -> &'static str {
    match mm {
        MapModel::Annual(_) => "residual_wm2",
        MapModel::Seasonal(_) => "residual_k",
    }
}

/// A number of the scenario (its JSON form), or `default`.
pub(super) fn scenario_num(scenario: &serde_json::Value, key: &str, default: f64) -> f64 {
    scenario
        .get(key)
        .and_then(|v| v.as_f64())
        .unwrap_or(default)
}

/// What the stdout report and `summary.json` say about all slices,
/// counted as they are handed on.
#[derive(Debug, Default)]
pub(super) struct Tally {
    /// Slices handed on.
    pub(super) slices: usize,
    /// Regime masks present in slices that did not fail.
    pub(super) seen: BTreeSet<u32>,
    /// Slices with no branch traced.
    pub(super) failed: usize,
    /// Traced points.
    pub(super) points: usize,
    /// Traced points above the tolerance.
    pub(super) above: usize,
    /// Largest residual of a traced point.
    pub(super) worst: f64,
    /// Notes of all slices.
    pub(super) notes: usize,
}

/// A slice as the map keeps it once its rows are in `map.csv`: the slice
/// without its points, whether it failed and its largest residual.
pub(super) struct Kept {
    pub(super) slice: Slice,
    pub(super) failed: bool,
    /// Largest residual of its points (None: failed).
    pub(super) worst: Option<f64>,
}

/// Builds a map's files from its slices handed on in slice order.
pub(super) struct MapWriter<'a> {
    mm: &'a MapModel,
    spec: &'a MapSpec,
    /// The leading `model` column's value (`map --hierarchy`), if any.
    model: Option<&'a str>,
    /// The corrector tolerance of the residual ([`MapModel::tolerance`]).
    tol: f64,
    /// `map.csv` so far: the header and the rows of every slice handed on.
    csv: String,
    kept: Vec<Kept>,
    tally: Tally,
}

/// The `map.csv` columns: `model` with a model column, every across key,
/// then the rest (with a model column both residual columns,
/// `residual_wm2` and `residual_k`).
fn csv_columns<'a>(mm: &MapModel, spec: &'a MapSpec, model: bool) -> Vec<&'a str> {
    let mut c: Vec<&str> = if model { vec!["model"] } else { Vec::new() };
    c.push(spec.across.as_str());
    c.extend(spec.more.iter().map(|a| a.key.as_str()));
    c.extend([
        "branch",
        spec.vary.as_str(),
        "state",
        "stable",
        "unstable_modes",
        "global_mean_temperature_c",
        "ice_area_fraction",
        "ice_edges_deg",
    ]);
    // a hierarchy's rows hold models of both residual units: one column
    // per unit, empty where the row's model has the other
    if model {
        c.extend(["residual_wm2", "residual_k"]);
    } else {
        c.push(residual_column(mm));
    }
    c.push("habitable_fraction");
    c
}

/// `KEY = VALUE` of every across key of slice `s`, joined by ", ".
pub(super) fn slice_at(spec: &MapSpec, s: &Slice) -> String {
    let mut t = format!("{} = {}", spec.across, s.across);
    for (a, v) in spec.more.iter().zip(&s.more) {
        t += &format!(", {} = {v}", a.key);
    }
    t
}

impl<'a> MapWriter<'a> {
    /// A writer for the map of `spec`; `annual_tol` is `solver.tolerance`.
    pub(super) fn new(mm: &'a MapModel, spec: &'a MapSpec, annual_tol: f64) -> Self {
        let header = Table::new(&csv_columns(mm, spec, false))
            .to_csv()
            .unwrap_or_default();
        MapWriter {
            mm,
            spec,
            model: None,
            tol: mm.tolerance(annual_tol),
            csv: header,
            kept: Vec::new(),
            tally: Tally::default(),
        }
    }

    /// The same writer with a leading `model` column of value `name` in
    /// `map.csv` and `boundaries.csv` (`map --hierarchy`); before any slice.
    pub(super) fn with_model_column(mut self, name: &'a str) -> Self {
        self.model = Some(name);
        self.csv = Table::new(&csv_columns(self.mm, self.spec, true))
            .to_csv()
            .unwrap_or_default();
        self
    }

    /// Takes the next slice (slice index = the number handed on so far):
    /// appends its rows to `map.csv`, counts it, keeps it without its
    /// points. Errors: a slice out of order, or a row `map.csv` cannot hold
    /// (a non-finite number).
    pub(super) fn push(&mut self, mut s: Slice) -> Result<(), CliError> {
        if s.index != self.kept.len() {
            return Err(CliError::Failed(format!(
                "internal: slice {} handed on in place of slice {}",
                s.index,
                self.kept.len()
            )));
        }
        let mut t = Table::new(&csv_columns(self.mm, self.spec, self.model.is_some()));
        for q in &s.points {
            let edges: Vec<String> = q.ice_edges_deg.iter().map(|e| format!("{e}")).collect();
            let mut row: Vec<Cell> = self
                .model
                .map(|m| Cell::Text(m.into()))
                .into_iter()
                .collect();
            row.push(Cell::Num(s.across));
            row.extend(s.more.iter().map(|v| Cell::Num(*v)));
            row.extend([
                Cell::Int(q.branch as i64),
                Cell::Num(q.value),
                Cell::Text(q.state.clone()),
                Cell::Bool(q.unstable_modes == 0),
                Cell::modes(q.unstable_modes),
                Cell::Num(q.global_mean_c),
                Cell::Num(q.ice_area_fraction),
                Cell::Text(edges.join(";")),
            ]);
            if self.model.is_some() {
                let (r, none) = (Cell::Num(q.residual), Cell::Text(String::new()));
                row.extend(match self.mm {
                    MapModel::Annual(_) => [r, none],
                    MapModel::Seasonal(_) => [none, r],
                });
            } else {
                row.push(Cell::Num(q.residual));
            }
            row.push(Cell::Num(q.habitable_fraction));
            t.push_row(row);
        }
        let rows = t.to_csv()?;
        // the table's own header is the first line: the rows follow it
        let body = rows.split_once('\n').map_or("", |(_, b)| b);
        self.csv.push_str(body);
        let failed = s.points.is_empty();
        let tl = &mut self.tally;
        tl.slices += 1;
        tl.notes += s.notes.len();
        let worst = if failed {
            tl.failed += 1;
            None
        } else {
            tl.seen.extend(s.regime.iter().copied());
            tl.points += s.points.len();
            tl.above += s.points.iter().filter(|q| q.residual > self.tol).count();
            let w = s.points.iter().map(|q| q.residual).fold(0.0, f64::max);
            tl.worst = tl.worst.max(w);
            Some(w)
        };
        s.points = Vec::new();
        self.kept.push(Kept {
            slice: s,
            failed,
            worst,
        });
        Ok(())
    }

    /// The slice-joined boundaries and, with `fold_curves` (annual model),
    /// the fold curves of each combination of the further across keys (in
    /// slice order: r = j mod [`MapSpec::inner`]), each with the
    /// combination's index r. For one across key: one combination, as
    /// before.
    fn boundaries(&self, scenario: &serde_json::Value) -> Vec<(usize, Boundary)> {
        let spec = self.spec;
        let inner = spec.inner();
        let mut all = Vec::new();
        for r in 0..inner {
            let group = self.kept.iter().skip(r).step_by(inner).map(|k| &k.slice);
            let mut bounds = join_boundaries(group);
            if let (true, MapModel::Annual(model)) = (spec.fold_curves, self.mm) {
                let (ap, vp) = (
                    Param::from_key(&spec.across).expect("validated key"),
                    Param::from_key(&spec.vary).expect("validated key"),
                );
                let (warm, cold) = (
                    scenario_num(scenario, "solver.warm_start", 30.0),
                    scenario_num(scenario, "solver.cold_start", -60.0),
                );
                let tol = scenario_num(scenario, "solver.tolerance", 1e-10);
                let mut m = model.clone();
                for (p, v) in spec.more_params(r) {
                    m.set_param(p, v);
                }
                let extra = crate::analysis::sweep::continue_boundaries(
                    &m, spec, ap, vp, &bounds, warm, cold, tol,
                );
                bounds.extend(extra);
            }
            all.extend(bounds.into_iter().map(|b| (r, b)));
        }
        all
    }

    /// Renders the files of the complete map into `out` (staged, not
    /// written) and returns the tally for the report. Errors: every slice
    /// failed (nothing written), or a file that cannot be built.
    #[allow(clippy::too_many_arguments)]
    pub(super) fn finish(
        self,
        scenario: &serde_json::Value,
        scenario_toml: &str,
        name: &str,
        dir: &Path,
        out: &mut OutputSet,
        figures: plot::Formats,
    ) -> Result<Tally, CliError> {
        let (mm, spec) = (self.mm, self.spec);
        let (mut r, fig) = self.render(scenario, name, figures)?;
        // moved, not copied: map.csv is the largest file of a map
        out.add(dir.join("map.csv"), std::mem::take(&mut r.csv));
        out.add_table(dir.join("boundaries.csv"), &r.boundaries)?;
        // (map_netcdf takes each slice's cell climates as it copies them)
        let nc = map_netcdf(
            &mut [NcPart {
                mm,
                model: None,
                slices: &mut r.kept,
                regime: &r.regime,
                count: &r.count,
            }],
            spec,
            name,
            scenario_toml,
            &r.ys,
            &spec.command(),
        )?;
        out.add_netcdf(dir.join("map.nc"), nc)?;
        if let Some(fig) = fig {
            fig.add_to(out, dir, "map");
        }
        out.add_json(dir.join("summary.json"), &r.summary);
        out.add_text(dir.join("scenario.toml"), scenario_toml);
        Ok(r.tally)
    }

    /// The contents of the complete map's files, not staged: `map.csv`,
    /// `boundaries.csv` (both with the model column if the writer has one),
    /// what `map.nc` is made of, `summary.json` and, when `figures` asks
    /// for any, the regime figure. Errors: every slice failed, or a file
    /// that cannot be built.
    pub(super) fn render(
        mut self,
        scenario: &serde_json::Value,
        name: &str,
        figures: plot::Formats,
    ) -> Result<(Rendered, Option<plot::Figure>), CliError> {
        let (mm, spec) = (self.mm, self.spec);
        let (ak, vk) = (spec.across.as_str(), spec.vary.as_str());
        // a slice with no branch traced failed: it is not "no stable climate"
        let failed: Vec<usize> = (0..self.kept.len())
            .filter(|&j| self.kept[j].failed)
            .collect();
        if !self.kept.is_empty() && failed.len() == self.kept.len() {
            let s = &self.kept[failed[0]].slice;
            return Err(CliError::Failed(format!(
                "every slice of the map failed (no branch traced); slice {} ({}): {}; nothing written",
                s.index,
                slice_at(spec, s),
                if s.notes.is_empty() {
                    "no seed converged".to_string()
                } else {
                    s.notes.join("; ")
                }
            )));
        }
        let csv = std::mem::take(&mut self.csv).into_bytes();
        // boundaries.csv
        let bounds = self.boundaries(scenario);
        let mut cols = if self.model.is_some() {
            vec!["model"]
        } else {
            Vec::new()
        };
        cols.extend(["curve", "method", "transition", ak]);
        cols.extend(spec.more.iter().map(|a| a.key.as_str()));
        cols.push(vk);
        let mut bt = Table::new(&cols);
        for (k, (r, b)) in bounds.iter().enumerate() {
            let others = spec.more_values(*r);
            for (a, v) in &b.points {
                let mut row: Vec<Cell> = self
                    .model
                    .map(|m| Cell::Text(m.into()))
                    .into_iter()
                    .collect();
                row.extend([
                    Cell::Int(k as i64 + 1),
                    Cell::Text(b.method.into()),
                    Cell::Text(b.transition.clone()),
                    Cell::Num(*a),
                ]);
                row.extend(others.iter().map(|o| Cell::Num(*o)));
                row.push(Cell::Num(*v));
                bt.push_row(row);
            }
        }
        // gridded summary: cell c of slice j at c * slices + j (the vary
        // cell slowest, then the across keys in order, the last fastest)
        let p = self.kept.len();
        let ny = spec.cells;
        let mut regime = vec![0i32; p * ny];
        let mut count = vec![0i32; p * ny];
        for (i, k) in self.kept.iter().enumerate() {
            for j in 0..ny {
                regime[j * p + i] = if k.failed {
                    FILL_I32
                } else {
                    k.slice.regime[j] as i32
                };
                count[j * p + i] = if k.failed {
                    FILL_I32
                } else {
                    k.slice.stable_count[j] as i32
                };
            }
        }
        let ys: Vec<f64> = (0..ny).map(|c| spec.cell_value(c)).collect();
        // figure: the first across key against the traced one, at the
        // first value of every further key (all of the map for one key)
        // (failed slices are drawn as cells without a stable climate; the
        // title says how many)
        let inner = spec.inner();
        let drawn_slices: Vec<usize> = (0..spec.count).map(|i| i * inner).collect();
        let xs: Vec<f64> = drawn_slices
            .iter()
            .map(|&j| self.kept[j].slice.across)
            .collect();
        let nx = xs.len();
        let mut drawn = vec![0u32; nx * ny];
        for (i, &j) in drawn_slices.iter().enumerate() {
            for c in 0..ny {
                let r = regime[c * p + j];
                drawn[c * nx + i] = if r == FILL_I32 { 0 } else { r as u32 };
            }
        }
        let mut masks: Vec<u32> = regime
            .iter()
            .filter(|r| **r != FILL_I32)
            .map(|r| *r as u32)
            .collect();
        masks.sort_unstable();
        masks.dedup();
        let names: Vec<String> = masks.iter().map(|m| regime_label(*m)).collect();
        let mut fig = None;
        if figures.any() {
            let map = plot::RegimeMap {
                across_key: ak.to_string(),
                vary_key: vk.to_string(),
                across: xs,
                vary: ys.clone(),
                regime: drawn,
                boundaries: bounds
                    .iter()
                    .filter(|(r, b)| {
                        *r == 0
                            && b.points.len() >= 2
                            && crate::analysis::sweep::is_transition(&b.transition)
                    })
                    .map(|(_, b)| plot::BoundaryLine {
                        transition: b.transition.clone(),
                        method: plot::BoundaryMethod::from_name(b.method).unwrap_or_default(),
                        points: b.points.clone(),
                    })
                    .collect(),
            };
            let head = match mm {
                MapModel::Annual(_) => "Stable climates".to_string(),
                MapModel::Seasonal(_) => format!("Stable periodic climates ({} model)", mm.name()),
            };
            let at: String = spec
                .more
                .iter()
                .map(|a| format!(", {} = {}", a.key, a.from))
                .collect();
            let head = if at.is_empty() {
                head
            } else {
                format!("{head} at {}", &at[2..])
            };
            let drawn_failed = drawn_slices
                .iter()
                .filter(|&&j| self.kept[j].failed)
                .count();
            let title = if drawn_failed == 0 {
                format!("{head}: {name}")
            } else {
                format!(
                    "{head}: {name} ({} of {} slices failed, drawn empty)",
                    drawn_failed, nx
                )
            };
            fig = Some(plot::regime_figure(figures, &title, &map)?);
        }
        // summary
        let entry = |s: &Slice, key: &str, what: serde_json::Value| {
            let mut m = serde_json::Map::new();
            m.insert("slice".into(), s.index.into());
            m.insert(ak.into(), s.across.into());
            for (a, v) in spec.more.iter().zip(&s.more) {
                m.insert(a.key.clone(), (*v).into());
            }
            m.insert(key.into(), what);
            serde_json::Value::Object(m)
        };
        let notes: Vec<serde_json::Value> = self
            .kept
            .iter()
            .map(|k| &k.slice)
            .filter(|s| !s.notes.is_empty())
            .map(|s| entry(s, "notes", serde_json::json!(s.notes)))
            .collect();
        let (unit, measure) = mm.residual();
        let tl = &self.tally;
        let boundary_entry = |(r, b): &(usize, Boundary)| {
            let mut e = serde_json::json!({"transition": b.transition, "method": b.method, "points": b.points.len()});
            // where each end lies: on a bound of the across range, or
            // inside it (the boundary stops there)
            if let (Some(first), Some(last)) = (b.points.first(), b.points.last()) {
                let (lo, hi) = (
                    spec.across_from.min(spec.across_to),
                    spec.across_from.max(spec.across_to),
                );
                let end = |a: f64| {
                    if a <= lo || a >= hi {
                        "across bound"
                    } else {
                        "inside"
                    }
                };
                e["first"] = serde_json::json!([first.0, first.1]);
                e["last"] = serde_json::json!([last.0, last.1]);
                e["ends"] = serde_json::json!([end(first.0), end(last.0)]);
            }
            for (a, v) in spec.more.iter().zip(spec.more_values(*r)) {
                e[a.key.as_str()] = v.into();
            }
            e
        };
        let summary = serde_json::json!({
            "tool": format!("icefold {VERSION}"),
            "command": spec.command(),
            "model": mm.name(),
            "steps_per_year": mm.steps_per_year(),
            "stability": mm.stability(),
            "scenario": scenario,
            "spec": spec,
            "regimes": names,
            "boundaries": bounds.iter().map(boundary_entry).collect::<Vec<_>>(),
            "notes": notes,
            "residual": {
                "measure": measure,
                "unit": unit,
                "tolerance": self.tol,
                "max": tl.worst,
                "points": tl.points,
                "points_above_tolerance": tl.above,
            },
            "failed_slices": failed
                .iter()
                .map(|&j| &self.kept[j].slice)
                .map(|s| entry(s, "reasons", serde_json::json!(s.notes)))
                .collect::<Vec<_>>(),
        });
        Ok((
            Rendered {
                csv,
                boundaries: bt,
                bounds,
                kept: self.kept,
                regime,
                count,
                ys,
                summary,
                tally: self.tally,
            },
            fig,
        ))
    }
}

/// A complete map of one model, rendered but not staged
/// ([`MapWriter::render`]).
pub(super) struct Rendered {
    /// `map.csv`.
    pub(super) csv: Vec<u8>,
    /// `boundaries.csv`.
    pub(super) boundaries: Table,
    /// The boundaries, each with the index r of its combination of the
    /// further across keys.
    pub(super) bounds: Vec<(usize, Boundary)>,
    /// The slices without their points, in slice order.
    pub(super) kept: Vec<Kept>,
    /// Regime mask per cell (cell c of slice j at c * slices + j; fill
    /// for failed slices).
    pub(super) regime: Vec<i32>,
    /// Stable climates per cell, likewise.
    pub(super) count: Vec<i32>,
    /// Cell centres of the traced parameter.
    pub(super) ys: Vec<f64>,
    /// `summary.json`.
    pub(super) summary: serde_json::Value,
    /// What the report says.
    pub(super) tally: Tally,
}
