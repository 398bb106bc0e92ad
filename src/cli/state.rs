//! State files of the seasonal model: `state.csv` with its side file
//! `state.json` (written by `run`, read by `run --from`).

use super::context::CliError;
use crate::io::scenario::Scenario;
use crate::model::Model;
use crate::model::climate::Start;
use crate::model::seasonal::SeasonalModel;
use std::path::Path;

/// Format tag of state side files.
const STATE_FORMAT: &str = "icefold-state-1";

/// The side file (`state.json`) that names the scenario and grid of a state.
pub fn state_meta(sc: &Scenario, sm: &SeasonalModel) -> serde_json::Value {
    let g = &sm.model().grid;
    serde_json::json!({
        "format": STATE_FORMAT,
        "tool": format!("icefold {}", super::context::VERSION),
        "scenario": sc.name(),
        "bands": g.len(),
        "spacing": g.spacing.to_string(),
        "symmetric": g.symmetric,
        "steps_per_year": sm.steps_per_year(),
        "year_fraction": 0.0,
        "sea_ice": sm.has_sea_ice(),
    })
}

/// The side file of a state table: `state.json` beside `state.csv` (the
/// same stem with `.json`).
fn side_file(path: &Path) -> std::path::PathBuf {
    path.with_extension("json")
}

/// Reads a state written by `run` (the table and its side file) and checks
/// that it belongs to this scenario (same name) and grid (bands, spacing,
/// symmetry and the band latitudes to 1e-6 deg), the same steps per year
/// and a state at the start of a year. Any mismatch or malformed
/// content is a usage error (exit 2).
pub fn read_state(
    path: &Path,
    sc: &Scenario,
    model: &Model,
    steps_per_year: usize,
) -> Result<Start, CliError> {
    read_state_column(path, sc, model, steps_per_year, false)
}

/// [`read_state`] of a model with or without sea ice: with `sea_ice` the
/// state is the `enthalpy_w_yr_m2` column (W yr m-2, -1e6 to 1e6) of a
/// state written by a sea-ice run, returned in `temperature`'s place.
pub fn read_state_column(
    path: &Path,
    sc: &Scenario,
    model: &Model,
    steps_per_year: usize,
    sea_ice: bool,
) -> Result<Start, CliError> {
    let bad = |why: String| CliError::Usage(format!("--from {}: {why}", path.display()));
    let meta_path = side_file(path);
    let meta_text = crate::io::input::read_text(&meta_path, crate::io::input::TABLE_MAX_BYTES).map_err(|e| {
        bad(format!(
            "cannot read its side file {} ({e}); a state is the state.csv and state.json written by `icefold run`",
            meta_path.display()
        ))
    })?;
    let meta: serde_json::Value = serde_json::from_str(&meta_text)
        .map_err(|e| bad(format!("{}: not JSON ({e})", meta_path.display())))?;
    if meta["format"] != STATE_FORMAT {
        return Err(bad(format!(
            "{}: not an icefold state side file (format is not `{STATE_FORMAT}`)",
            meta_path.display()
        )));
    }
    let g = &model.grid;
    let expect = [
        ("scenario", serde_json::Value::from(sc.name())),
        ("bands", g.len().into()),
        ("spacing", g.spacing.to_string().into()),
        ("symmetric", g.symmetric.into()),
        ("steps_per_year", steps_per_year.into()),
        ("year_fraction", 0.0.into()),
    ];
    let written_with_ice = meta
        .get("sea_ice")
        .and_then(|v| v.as_bool())
        .unwrap_or(false);
    if written_with_ice != sea_ice {
        return Err(bad(format!(
            "written {} sea ice, but this run has seaice.enabled = {sea_ice}",
            if written_with_ice { "with" } else { "without" }
        )));
    }
    for (k, want) in &expect {
        match meta.get(*k) {
            Some(got) if got == want => {}
            Some(got) => {
                return Err(bad(format!(
                    "written for {k} = {got}, but this run has {k} = {want}"
                )));
            }
            None => return Err(bad(format!("the side file names no {k}"))),
        }
    }
    let text = crate::io::input::read_text(path, crate::io::input::TABLE_MAX_BYTES).map_err(bad)?;
    let lines = text.lines();
    let mut rows = lines.filter(|l| !l.trim().is_empty() && !l.starts_with('#'));
    let cols: Vec<&str> = rows
        .next()
        .ok_or_else(|| bad("no table".into()))?
        .split(',')
        .map(str::trim)
        .collect();
    let il = cols
        .iter()
        .position(|c| *c == "latitude_deg")
        .ok_or_else(|| bad("no `latitude_deg` column".into()))?;
    let (column, lo, hi, unit) = if sea_ice {
        ("enthalpy_w_yr_m2", -1e6, 1e6, "W yr m-2")
    } else {
        ("temperature_c", -273.15, 1000.0, "C")
    };
    let it = cols
        .iter()
        .position(|c| *c == column)
        .ok_or_else(|| bad(format!("no `{column}` column")))?;
    let lat = g.latitudes_deg();
    let mut temperature = Vec::with_capacity(g.len());
    for (k, line) in rows.enumerate() {
        let cells: Vec<&str> = line.split(',').collect();
        let num = |i: usize| -> Option<f64> {
            cells
                .get(i)
                .and_then(|c| c.trim().parse::<f64>().ok())
                .filter(|v| v.is_finite())
        };
        let (Some(la), Some(t)) = (num(il), num(it)) else {
            return Err(bad(format!("row {} is not two finite numbers", k + 1)));
        };
        if k >= lat.len() || (la - lat[k]).abs() > 1e-6 {
            return Err(bad(format!(
                "row {}: latitude {la} does not match the grid's band {} ({})",
                k + 1,
                k + 1,
                lat.get(k).map_or("none".to_string(), |v| format!("{v}"))
            )));
        }
        if !(lo..=hi).contains(&t) {
            return Err(bad(format!(
                "row {}: {column} {t} {unit} is out of range ({lo} to {hi})",
                k + 1
            )));
        }
        temperature.push(t);
    }
    if temperature.len() != lat.len() {
        return Err(bad(format!(
            "{} rows, but the grid has {} bands",
            temperature.len(),
            lat.len()
        )));
    }
    Ok(Start {
        label: path.display().to_string(),
        temperature,
    })
}
