//! `icefold run` (time integration of the seasonal model) and
//! `icefold periodic` (periodic climates by shooting) on the command line.
//!
//! State files are a plain table `state.csv` (`latitude_deg`,
//! `sin_latitude`, `temperature_c`; it loads with any CSV reader) and beside
//! it `state.json`, which names the scenario and the grid
//! (`{"format": "icefold-state-1", "scenario": NAME, "bands": N, "spacing":
//! "sine", "symmetric": false, "steps_per_year": K, "year_fraction": 0}`);
//! `--from FILE` reads both and refuses a state written for another
//! scenario name or grid (exit 2).

use super::context::{Args, CliError, load, out_dir, provenance, read_start, written_list};
use crate::analysis::periodic::{
    Cycle, Periodic, ShootingOptions, cycle, cycle_diagnostics, find_periodic, polar_ice_edges,
};
use crate::io::export::{Cell, OutputSet, Table};
use crate::io::netcdf::NcFile;
use crate::io::plot;
use crate::io::scenario::Scenario;
use crate::model::Model;
use crate::model::climate::{diagnose, standard_starts};
use crate::model::seasonal::{DAYS_PER_YEAR, SeasonalError};
use std::path::Path;

pub use super::state::{read_state, read_state_column, state_meta};

/// Most years `run` integrates in one call.
pub const MAX_YEARS: usize = 100_000;
/// Most time steps `run` integrates in one call (years x steps per year).
pub const MAX_TOTAL_STEPS: usize = 20_000_000;

fn seasonal_error(e: SeasonalError) -> CliError {
    match e {
        SeasonalError::Invalid(m) => CliError::Usage(m),
        other => CliError::Failed(format!("{other}; nothing written")),
    }
}

/// `icefold run [SCENARIO] --years N [--from warm|cold|FILE]`: integrates
/// the seasonal model for `years` whole years from the start and writes
/// `timeseries.csv` (every step: `time_years`, `day_of_year`,
/// `global_mean_temperature_c`, `ice_area_fraction`, `ice_edge_north_deg`,
/// `ice_edge_south_deg`), `state.csv` (the final state) with its side file
/// `state.json`, `summary.json` and `scenario.toml`. Default start: warm.
pub fn cmd_run(args: &Args, years: usize, from: Option<&str>) -> Result<String, CliError> {
    let sc = load(args)?;
    let mut sm = sc.seasonal_model().map_err(seasonal_error)?;
    if years == 0 || years > MAX_YEARS {
        return Err(CliError::Usage(format!(
            "--years {years}: allowed 1 to {MAX_YEARS}"
        )));
    }
    let steps = sm.steps_per_year();
    if years.saturating_mul(steps) > MAX_TOTAL_STEPS {
        return Err(CliError::Usage(format!(
            "--years {years} with {steps} steps per year is more than {MAX_TOTAL_STEPS} steps; use fewer years or chain runs with --from"
        )));
    }
    let n = sm.len();
    let ice = sm.has_sea_ice();
    let start = match from.unwrap_or("warm") {
        "warm" => standard_starts(n, sc.num("solver.warm_start"), 0.0).remove(0),
        "cold" => standard_starts(n, 0.0, sc.num("solver.cold_start")).remove(1),
        file => read_state_column(Path::new(file), &sc, sm.model(), steps, ice)?,
    };
    // the model state: temperatures, or with sea ice the enthalpy (a file
    // holds it already)
    let mut t = if ice && from.is_some_and(|f| f != "warm" && f != "cold") {
        start.temperature.clone()
    } else {
        sm.state_from_temperature(&start.temperature)
    };
    let mut surface = sm.surface_temperature(&t).to_vec();
    let mut table = Table::new(&[
        "time_years",
        "day_of_year",
        "global_mean_temperature_c",
        "ice_area_fraction",
        "ice_edge_north_deg",
        "ice_edge_south_deg",
    ]);
    let mut failure = None;
    let mut last_change = f64::NAN;
    // a long run shows its progress (Ctrl-C stops it; nothing is written)
    let bar = super::progress::Progress::bar("run", years as u64, "years", args.quiet);
    for y in 0..years {
        let before = t.clone();
        let mut rows = Vec::with_capacity(steps);
        let mut cold: Option<(f64, f64, f64)> = None;
        let mut res = Ok(());
        for k in 0..steps {
            if let Err(e) = sm.step(k, &mut t, false) {
                res = Err(e);
                break;
            }
            surface.copy_from_slice(sm.surface_temperature(&t));
            let ice_field = sm.ice_profile(&t);
            let model = sm.model();
            let (north, south) = polar_ice_edges(model, &ice_field);
            let frac = (k + 1) as f64 / steps as f64;
            if cold.is_none()
                && let Some((tc, lat)) = crate::model::climate::below_absolute_zero(model, &surface)
            {
                cold = Some((y as f64 + frac, tc, lat));
            }
            rows.push(vec![
                Cell::Num(y as f64 + frac),
                Cell::Num(frac * DAYS_PER_YEAR),
                Cell::Num(model.grid.mean(&surface)),
                Cell::Num(model.ice_area_fraction(&ice_field)),
                Cell::Num(north),
                Cell::Num(south),
            ]);
        }
        if let Err(e) = res {
            failure = Some(format!("in year {}: {e}", y + 1));
            break;
        }
        if let Some((when, tc, lat)) = cold {
            failure = Some(format!(
                "at year {when:.4}: the temperature fell below absolute zero ({tc:.6} C at latitude {lat:.4} deg), which no climate can; the linear OLR law A + B T is far outside its validity"
            ));
            break;
        }
        for r in rows {
            table.push_row(r);
        }
        last_change = t
            .iter()
            .zip(&before)
            .fold(0.0f64, |m, (a, b)| m.max((a - b).abs()));
        bar.inc();
    }
    bar.finish();
    if let Some(why) = failure {
        return Err(CliError::Failed(format!(
            "the time integration failed {why}; nothing written"
        )));
    }
    let ice_field = sm.ice_profile(&t);
    let thickness = sm.ice_thickness(&t);
    let model = sm.model();
    let mut columns = vec!["latitude_deg", "sin_latitude", "temperature_c"];
    if ice {
        columns.extend(["enthalpy_w_yr_m2", "ice_thickness_m"]);
    }
    let mut st = Table::new(&columns);
    for (i, lat) in model.grid.latitudes_deg().iter().enumerate() {
        let mut row = vec![
            Cell::Num(*lat),
            Cell::Num(model.grid.centres[i]),
            Cell::Num(surface[i]),
        ];
        if ice {
            row.extend([Cell::Num(t[i]), Cell::Num(thickness[i])]);
        }
        st.push_row(row);
    }
    let annual_model = sm.annual_model();
    let mut d = diagnose(&annual_model, &ice_field);
    d.global_mean_c = model.grid.mean(&surface);
    d.habitable_fraction = model.habitable_fraction(&surface);
    let (north, south) = polar_ice_edges(model, &ice_field);
    let change_unit = if ice { "W yr m-2" } else { "K" };
    let mut summary = provenance(&sc, args);
    summary.insert("start".into(), start.label.clone().into());
    summary.insert("years".into(), years.into());
    summary.insert("steps_per_year".into(), steps.into());
    summary.insert(
        "final_state".into(),
        serde_json::json!({
            "year_fraction": 0.0,
            "global_mean_temperature_c": d.global_mean_c,
            "ice_area_fraction": d.ice_area_fraction,
            "habitable_fraction": d.habitable_fraction,
            "ice_edge_north_deg": north,
            "ice_edge_south_deg": south,
            "last_year_max_change": last_change,
            "last_year_max_change_unit": change_unit,
        }),
    );
    let dir = out_dir(args);
    let mut out = OutputSet::new();
    out.add_table(dir.join("timeseries.csv"), &table)?;
    out.add_table(dir.join("state.csv"), &st)?;
    out.add_json(dir.join("state.json"), &state_meta(&sc, &sm));
    out.add_json(dir.join("summary.json"), &summary);
    out.add_text(dir.join("scenario.toml"), &sc.to_toml());
    let written = super::context::publish(out, &dir, args)?;
    let mut s = format!(
        "{}: {years} years from {} ({steps} steps per year): global mean {:.3} C, ice fraction {:.4}, last year's largest change {:.3e} {change_unit}\n",
        sc.name(),
        start.label,
        d.global_mean_c,
        d.ice_area_fraction,
        last_change
    );
    s += &written_list(&written);
    Ok(s)
}

/// Latitude-time polylines of the polar ice edges (broken where the pole
/// is ice-free or the ice covers everything).
fn edge_lines(c: &Cycle) -> Vec<Vec<(f64, f64)>> {
    let mut lines = Vec::new();
    for which in 0..2 {
        let mut cur: Vec<(f64, f64)> = Vec::new();
        for (k, e) in c.ice_edges_deg.iter().enumerate() {
            let v = if which == 0 { e.0 } else { e.1 };
            let day = c.times[k] * DAYS_PER_YEAR;
            if v > -90.0 && v < 90.0 {
                cur.push((day, v));
            } else if !cur.is_empty() {
                lines.push(std::mem::take(&mut cur));
            }
        }
        if !cur.is_empty() {
            lines.push(cur);
        }
    }
    lines.retain(|l| l.len() >= 2);
    lines
}

fn climate_json(
    k: usize,
    p: &Periodic,
    c: &Cycle,
    d: &crate::model::climate::Diagnostics,
) -> serde_json::Value {
    let ((dmin, fmin), (dmax, fmax)) = c.ice_extremes();
    let top: Vec<serde_json::Value> = p
        .multipliers
        .iter()
        .take(5)
        .map(|(re, im)| serde_json::json!({"re": re, "im": im, "modulus": re.hypot(*im)}))
        .collect();
    serde_json::json!({
        "equilibrium": k,
        "start": p.label,
        "annual_global_mean_temperature_c": d.global_mean_c,
        "annual_mean_ice_area_fraction": d.ice_area_fraction,
        "year_mean_habitable_fraction": c.habitable_year_mean,
        "annual_mean_profile_habitable_fraction": d.habitable_fraction,
        "habitable_fraction_range": {
            "min": c.habitable_fraction.iter().copied().fold(1.0f64, f64::min),
            "max": c.habitable_fraction.iter().copied().fold(0.0f64, f64::max),
        },
        "annual_mean_state": d.state.label(),
        "stable": p.unstable_modes == 0,
        "unstable_modes": p.unstable_modes,
        "largest_floquet_multipliers": top,
        "periodicity_residual_k": p.residual,
        "newton_iterations": p.iterations,
        "spun_up_years_first": p.spun_up_years,
        "toa_net_annual_mean_wm2": c.toa_annual_mean,
        "ice_extent": {
            "min": {"day_of_year": dmin, "ice_area_fraction": fmin},
            "max": {"day_of_year": dmax, "ice_area_fraction": fmax},
        },
        "ice_edges": edge_extremes_json(c),
        "seasonal_amplitude_max_k": c.amplitude.iter().fold(0.0f64, |m, a| m.max(*a)),
    })
}

/// The extremes of both ice edges over the year, with their days.
fn edge_extremes_json(c: &Cycle) -> serde_json::Value {
    let side = |north: bool| {
        let ((d0, e0), (d1, e1)) = c.edge_extremes(north);
        serde_json::json!({
            "most_equatorward": {"day_of_year": d0, "latitude_deg": e0},
            "most_poleward": {"day_of_year": d1, "latitude_deg": e1},
        })
    };
    serde_json::json!({"north": side(true), "south": side(false)})
}

/// The CF-1.8 NetCDF content of `seasonal_cycle.nc`: the periodic
/// climates over (`time`, `latitude`), `time` decodable as dates (the
/// idealised model year starts at the northern spring equinox, given the
/// nominal date 2000-03-20), latitude with its band bounds and area weights.
/// `fields` holds temperature and ice (equilibrium, time, latitude) and the
/// annual-mean temperature (equilibrium, latitude), row-major.
fn periodic_netcdf(
    sc: &Scenario,
    args: &Args,
    model: &Model,
    days: &[f64],
    climates: &[Periodic],
    cycles: &[Cycle],
    fields: (Vec<f64>, Vec<i32>, Vec<f64>),
) -> Result<NcFile, CliError> {
    let (temperature, ice, annual_mean) = fields;
    let g = &model.grid;
    let steps = days.len();
    let mut nc = NcFile::new();
    nc.add_dim("equilibrium", cycles.len())?;
    nc.add_dim("time", steps)?;
    nc.add_dim("latitude", g.len())?;
    nc.add_dim("nv", 2)?;
    let v = nc.add_var_f64("time", &["time"], days.to_vec())?;
    nc.var_attrs_text(
        v,
        &[
            ("standard_name", "time"),
            ("long_name", "time of the model year"),
            ("units", "days since 2000-03-20 00:00:00"),
            ("calendar", "proleptic_gregorian"),
            ("axis", "T"),
            (
                "comment",
                "The model year is idealised: 365 days, day 0 at the northern spring equinox. The reference date 2000-03-20 is nominal, chosen only so that time decodes as dates; read time as days since the equinox.",
            ),
        ],
    );
    let v = nc.add_var_f64("latitude", &["latitude"], g.latitudes_deg())?;
    nc.var_attrs_text(
        v,
        &[
            ("standard_name", "latitude"),
            ("long_name", "latitude of the band centre"),
            ("units", "degrees_north"),
            ("axis", "Y"),
            ("bounds", "latitude_bnds"),
        ],
    );
    let deg = |x: f64| x.clamp(-1.0, 1.0).asin().to_degrees();
    let bnds: Vec<f64> = (0..g.len())
        .flat_map(|i| [deg(g.faces[i]), deg(g.faces[i + 1])])
        .collect();
    let v = nc.add_var_f64("latitude_bnds", &["latitude", "nv"], bnds)?;
    nc.var_attrs_text(
        v,
        &[
            ("long_name", "latitudes of the band edges"),
            ("units", "degrees_north"),
        ],
    );
    let v = nc.add_var_f64("band_area_fraction", &["latitude"], g.weights.clone())?;
    nc.var_attrs_text(
        v,
        &[
            (
                "long_name",
                "area weight of the band: its fraction of the planet's surface (the weights sum to 1)",
            ),
            ("units", "1"),
        ],
    );
    let v = nc.add_var_i32(
        "equilibrium",
        &["equilibrium"],
        (1..=cycles.len() as i32).collect(),
    )?;
    nc.var_attrs_text(
        v,
        &[
            ("long_name", "periodic climate number (warmest first)"),
            ("units", "1"),
        ],
    );
    let v = nc.add_var_f64(
        "temperature",
        &["equilibrium", "time", "latitude"],
        temperature,
    )?;
    nc.var_attrs_text(
        v,
        &[
            ("standard_name", "surface_temperature"),
            ("long_name", "zonal-mean surface temperature"),
            ("units", "degC"),
        ],
    );
    let v = nc.add_var_i32("ice", &["equilibrium", "time", "latitude"], ice)?;
    nc.var_attrs_text(
        v,
        &[
            (
                "long_name",
                "ice-covered band centre (temperature below albedo.threshold)",
            ),
            ("units", "1"),
        ],
    );
    nc.var_attr_i32(v, "flag_values", &[0, 1]);
    nc.var_attr_text(v, "flag_meanings", "open ice");
    let v = nc.add_var_f64(
        "annual_mean_temperature",
        &["equilibrium", "latitude"],
        annual_mean,
    )?;
    nc.var_attrs_text(
        v,
        &[
            ("standard_name", "surface_temperature"),
            ("long_name", "annual-mean zonal-mean surface temperature"),
            ("units", "degC"),
            ("cell_methods", "time: mean"),
        ],
    );
    let per_time = |f: &dyn Fn(&Cycle) -> &[f64]| -> Vec<f64> {
        cycles.iter().flat_map(|c| f(c).iter().copied()).collect()
    };
    let v = nc.add_var_f64(
        "global_mean_temperature",
        &["equilibrium", "time"],
        per_time(&|c| &c.global_mean_c),
    )?;
    nc.var_attrs_text(
        v,
        &[
            ("standard_name", "surface_temperature"),
            (
                "long_name",
                "global (area-weighted) mean surface temperature",
            ),
            ("units", "degC"),
            ("cell_methods", "area: mean"),
        ],
    );
    let v = nc.add_var_f64(
        "ice_area_fraction",
        &["equilibrium", "time"],
        per_time(&|c| &c.ice_area_fraction),
    )?;
    nc.var_attrs_text(
        v,
        &[
            ("long_name", "ice-covered fraction of the planet's surface"),
            ("units", "1"),
        ],
    );
    let v = nc.add_var_f64(
        "habitable_fraction",
        &["equilibrium", "time"],
        per_time(&|c| &c.habitable_fraction),
    )?;
    nc.var_attrs_text(
        v,
        &[
            (
                "long_name",
                "habitable fraction of the planet's surface (habitability.min_c <= T <= habitability.max_c)",
            ),
            ("units", "1"),
        ],
    );
    let v = nc.add_var_f64(
        "habitable_year_fraction",
        &["equilibrium", "latitude"],
        per_time(&|c| &c.habitable_year_fraction),
    )?;
    nc.var_attrs_text(
        v,
        &[
            (
                "long_name",
                "fraction of the year the band is habitable, over its area (Spiegel, Menou & Scharf 2008)",
            ),
            ("units", "1"),
            ("cell_methods", "time: mean"),
        ],
    );
    let v = nc.add_var_f64(
        "seasonal_temperature_range",
        &["equilibrium", "latitude"],
        per_time(&|c| &c.amplitude),
    )?;
    nc.var_attrs_text(
        v,
        &[
            (
                "long_name",
                "largest minus smallest surface temperature over the year",
            ),
            ("units", "K"),
            ("cell_methods", "time: range"),
        ],
    );
    for (var, north, text) in [
        (
            "ice_edge_north_deg",
            true,
            "most poleward ice edge of the northern hemisphere (90 with no ice there, 0 when all of the hemisphere is ice)",
        ),
        (
            "ice_edge_south_deg",
            false,
            "most poleward ice edge of the southern hemisphere (-90 with no ice there, 0 when all of the hemisphere is ice)",
        ),
    ] {
        let data: Vec<f64> = cycles
            .iter()
            .flat_map(|c| {
                c.ice_edges_deg
                    .iter()
                    .map(move |e| if north { e.0 } else { e.1 })
            })
            .collect();
        let v = nc.add_var_f64(var, &["equilibrium", "time"], data)?;
        nc.var_attrs_text(v, &[("long_name", text), ("units", "degrees_north")]);
    }
    let v = nc.add_var_i32(
        "unstable_modes",
        &["equilibrium"],
        climates
            .iter()
            .map(|p| p.unstable_modes.min(i32::MAX as usize) as i32)
            .collect(),
    )?;
    nc.var_attrs_text(
        v,
        &[
            (
                "long_name",
                "Floquet multipliers with modulus above one (0 = stable)",
            ),
            ("units", "1"),
        ],
    );
    nc.global_attr_text("Conventions", "CF-1.8");
    nc.global_attr_text("title", &format!("Periodic climates of {}", sc.name()));
    nc.global_attr_text("scenario", sc.name());
    nc.global_attr_text("scenario_source", &sc.source);
    nc.global_attr_text("source", &format!("icefold {}", crate::cli::VERSION));
    nc.global_attr_text("history", &args.line);
    nc.global_attr_i32("steps_per_year", &[steps.min(i32::MAX as usize) as i32]);
    nc.global_attr_text(
        "comment",
        "Periodic (seasonally repeating) climates of a zonal-mean energy-balance model, found by shooting; sample k of the year is the state at day 365 k / steps_per_year after the northern spring equinox.",
    );
    Ok(nc)
}

/// `icefold periodic [SCENARIO] [--start FILE]`: the periodic climates of
/// the seasonal model by shooting from warm and cold starts (and a profile
/// or state file), each with its Floquet stability. Writes
/// `seasonal_cycle.csv` (`equilibrium`, `latitude_deg`, `day_of_year`,
/// `temperature_c`, `ice`), `seasonal_cycle.nc` (CF NetCDF, with the
/// habitable fraction per day and per band the fraction of the year it is
/// habitable and the seasonal temperature range),
/// `seasonal_cycle_K.svg/.png` (latitude-time temperature with the ice
/// edges), `ice_edges.csv` (`equilibrium`, `day_of_year`,
/// `global_mean_temperature_c`, `ice_area_fraction`, `ice_edge_north_deg`,
/// `ice_edge_south_deg`, `habitable_fraction`), `annual_mean.csv`
/// (`seasonal_amplitude_k` the seasonal temperature range,
/// `habitable_year_fraction` the fraction of the year the band is
/// habitable) and `profiles.svg/.png` (annual-mean profiles),
/// `summary.json` (with the minimum and maximum ice extent and the
/// extremes of each ice edge, with their days, and the year-mean habitable
/// fraction)
/// and `scenario.toml`.
pub fn cmd_periodic(args: &Args) -> Result<String, CliError> {
    let sc = load(args)?;
    let mut sm = sc.seasonal_model().map_err(seasonal_error)?;
    let n = sm.len();
    let mut starts = standard_starts(n, sc.num("solver.warm_start"), sc.num("solver.cold_start"));
    if let Some(p) = &args.start {
        starts.push(read_start(p, sm.model())?);
    }
    let search = find_periodic(&mut sm, &starts, &ShootingOptions::default());
    super::context::report_starts(
        args.quiet,
        &search.failures,
        search.climates.len(),
        "a",
        "periodic climate",
    )?;
    let mut cycles = Vec::new();
    for p in &search.climates {
        cycles.push(cycle(&mut sm, &p.start).map_err(seasonal_error)?);
    }
    let annual_model = sm.annual_model();
    let steps = sm.steps_per_year();
    let lat = annual_model.grid.latitudes_deg();
    let days: Vec<f64> = (0..steps)
        .map(|k| k as f64 / steps as f64 * DAYS_PER_YEAR)
        .collect();
    let threshold = annual_model.planet.albedo.threshold;
    let dir = out_dir(args);
    let mut out = OutputSet::new();
    let mut long = Table::new(&[
        "equilibrium",
        "latitude_deg",
        "day_of_year",
        "temperature_c",
        "ice",
    ]);
    let mut annual = Table::new(&[
        "equilibrium",
        "latitude_deg",
        "temperature_c",
        "seasonal_amplitude_k",
        "habitable_year_fraction",
    ]);
    let mut edges = Table::new(&[
        "equilibrium",
        "day_of_year",
        "global_mean_temperature_c",
        "ice_area_fraction",
        "ice_edge_north_deg",
        "ice_edge_south_deg",
        "habitable_fraction",
    ]);
    let neq = cycles.len();
    let mut nc_t = Vec::with_capacity(neq * steps * n);
    let mut nc_ice = Vec::with_capacity(neq * steps * n);
    let mut nc_mean = Vec::with_capacity(neq * n);
    let mut curves = Vec::new();
    let mut climates_json = Vec::new();
    for (e, (p, c)) in search.climates.iter().zip(&cycles).enumerate() {
        for i in 0..n {
            for k in 0..steps {
                let t = c.states[k][i];
                long.push_row(vec![
                    Cell::Int(e as i64 + 1),
                    Cell::Num(lat[i]),
                    Cell::Num(days[k]),
                    Cell::Num(t),
                    Cell::Bool(c.ice_profiles[k][i] < threshold),
                ]);
            }
            annual.push_row(vec![
                Cell::Int(e as i64 + 1),
                Cell::Num(lat[i]),
                Cell::Num(c.annual_mean[i]),
                Cell::Num(c.amplitude[i]),
                Cell::Num(c.habitable_year_fraction[i]),
            ]);
        }
        for k in 0..steps {
            let (north, south) = c.ice_edges_deg[k];
            edges.push_row(vec![
                Cell::Int(e as i64 + 1),
                Cell::Num(days[k]),
                Cell::Num(c.global_mean_c[k]),
                Cell::Num(c.ice_area_fraction[k]),
                Cell::Num(north),
                Cell::Num(south),
                Cell::Num(c.habitable_fraction[k]),
            ]);
        }
        for k in 0..steps {
            for i in 0..n {
                nc_t.push(c.states[k][i]);
                nc_ice.push(i32::from(c.ice_profiles[k][i] < threshold));
            }
        }
        nc_mean.extend_from_slice(&c.annual_mean);
        // latitude x day field: values[j * days + k] at (day k, latitude j)
        let mut field = vec![0.0; n * steps];
        for k in 0..steps {
            for j in 0..n {
                field[j * steps + k] = c.states[k][j];
            }
        }
        let d = cycle_diagnostics(&annual_model, c);
        if args.figures.any() {
            let fig = plot::field_figure(
                args.figures,
                &format!(
                    "Periodic climate {} ({}): {}",
                    e + 1,
                    d.state.label().replace('-', " "),
                    sc.name()
                ),
                plot::labels::DAY_OF_YEAR,
                plot::labels::LATITUDE,
                plot::labels::TEMPERATURE,
                &days,
                &lat,
                &field,
                &edge_lines(c),
                "ice edge",
            )?;
            fig.add_to(&mut out, &dir, &format!("seasonal_cycle_{}", e + 1));
        }
        // the albedo the model applies through the year (with sea ice:
        // of the enthalpy), not that of the annual-mean temperature
        let albedo = crate::analysis::cycle::annual_albedo(&annual_model, c);
        curves.push(plot::ProfileCurve {
            label: format!("{}", e + 1),
            state: d.state.label().into(),
            latitude_deg: lat.clone(),
            temperature_c: c.annual_mean.clone(),
            albedo,
            ice_edges_deg: d.ice_edges_deg.clone(),
            stable: p.unstable_modes == 0,
        });
        climates_json.push(climate_json(e + 1, p, c, &d));
    }
    let nc = periodic_netcdf(
        &sc,
        args,
        &annual_model,
        &days,
        &search.climates,
        &cycles,
        (nc_t, nc_ice, nc_mean),
    )?;
    let mut summary = provenance(&sc, args);
    summary.insert("steps_per_year".into(), steps.into());
    summary.insert("periodic_climates".into(), climates_json.into());
    summary.insert(
        "failed_starts".into(),
        search
            .failures
            .iter()
            .map(|(l, e)| serde_json::json!({"start": l, "reason": e.to_string()}))
            .collect(),
    );
    out.add_table(dir.join("seasonal_cycle.csv"), &long)?;
    out.add_netcdf(dir.join("seasonal_cycle.nc"), nc)?;
    out.add_table(dir.join("annual_mean.csv"), &annual)?;
    out.add_table(dir.join("ice_edges.csv"), &edges)?;
    if args.figures.any() {
        let fig = plot::profile_figure(
            args.figures,
            &format!(
                "Annual-mean profiles of the periodic climates: {}",
                sc.name()
            ),
            &curves,
        )?;
        fig.add_to(&mut out, &dir, "profiles");
    }
    out.add_json(dir.join("summary.json"), &summary);
    out.add_text(dir.join("scenario.toml"), &sc.to_toml());
    let written = super::context::publish(out, &dir, args)?;
    let mut s = format!(
        "{}: {} periodic climates ({steps} steps per year)\n",
        sc.name(),
        neq
    );
    s += if sm.has_sea_ice() {
        "  #  annual state      mean C   ice min (day)     ice max (day)     habitable  stable  |mu|max  residual W yr m-2\n"
    } else {
        "  #  annual state      mean C   ice min (day)     ice max (day)     habitable  stable  |mu|max  residual K\n"
    };
    for (e, (p, c)) in search.climates.iter().zip(&cycles).enumerate() {
        let d = cycle_diagnostics(&annual_model, c);
        let ((dmin, fmin), (dmax, fmax)) = c.ice_extremes();
        let mu = p.multipliers.first().map_or(0.0, |(r, i)| r.hypot(*i));
        s += &format!(
            "  {:<2} {:<16} {:>7.3}   {:.4} ({:>5.1})   {:.4} ({:>5.1})   {:>9.4}  {:<6}  {:.4}   {:.1e}\n",
            e + 1,
            d.state.label(),
            d.global_mean_c,
            fmin,
            dmin,
            fmax,
            dmax,
            c.habitable_year_mean,
            if p.unstable_modes == 0 { "yes" } else { "no" },
            mu,
            p.residual
        );
    }
    s += &written_list(&written);
    Ok(s)
}
