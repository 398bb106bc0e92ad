//! `icefold thermostat --across KEY=FROM:TO:COUNT`: where a planet settles
//! and where it cycles, over a second parameter and the outgassing rate.
//!
//! Each across value is one independent slice: the fast climate traced in
//! CO2 at that value and the slow analysis of every outgassing rate, exactly
//! as a single `thermostat` run with `--set KEY=VALUE` does it. Slices run
//! in parallel and are collected in order, so the outputs do not depend on
//! the number of threads.

use super::context::{Args, CliError, out_dir, provenance, written_list};
use super::progress::Progress;
use super::thermostat::{RUN_COLUMNS, run_row, settled, slow_runs};
use crate::analysis::thermostat::{Outcome, SlowAnalysis};
use crate::io::export::{Cell, OutputSet, Table};
use crate::io::plot;
use crate::io::scenario::{Scenario, fmt_num};
use crate::model::Param;
use crate::model::climate::State;
use rayon::prelude::*;
use serde_json::json;

/// The share of the time a planet spends in the snowball: 1 when it
/// settles in one, 0 when it settles in any other climate, the cycle's
/// snowball time over its period when it cycles; `None` when CO2 leaves the
/// traced range (nothing can be said).
pub fn snowball_share(a: &SlowAnalysis) -> Option<f64> {
    match &a.outcome {
        Outcome::Cycles(c) => Some(c.snowball_yr / c.period_yr),
        Outcome::LeavesRange(_) => None,
        Outcome::Settles(_) => {
            settled(a).map(|e| if e.state == State::Snowball { 1.0 } else { 0.0 })
        }
    }
}

/// Runs the thermostat map.
pub(super) fn cmd_thermostat_map(
    args: &Args,
    sc: &Scenario,
    across: &str,
    values: &[f64],
    co2: (f64, f64),
) -> Result<String, CliError> {
    let model = sc.model();
    let (param, from, to, count) = super::map::parse_across(across, &model)?;
    if param == Param::Co2 {
        return Err(CliError::Usage(format!(
            "--across `{across}`: radiation.co2_ppm is the fast climate's traced parameter in thermostat; choose another key (e.g. orbit.flux)"
        )));
    }
    let threads = super::map::parse_count("--threads", &args.threads, 0, 1, 1024)?;
    let grid: Vec<f64> = (0..count)
        .map(|k| from + (to - from) * k as f64 / (count - 1) as f64)
        .collect();
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .map_err(|e| CliError::Failed(format!("cannot start worker threads: {e}")))?;
    let bar = Progress::bar("thermostat map", count as u64, "slices", args.quiet);
    let slices: Vec<Result<Vec<SlowAnalysis>, CliError>> = pool.install(|| {
        grid.par_iter()
            .map(|&a| {
                if super::context::cancelled(args) {
                    return Err(CliError::Failed("interrupted".into()));
                }
                let mut m = model.clone();
                m.set_param(param, a);
                let r = slow_runs(&m, sc, values, co2, &mut |_| {})
                    .map(|(_, _, runs)| runs)
                    .map_err(|e| match e {
                        CliError::Failed(why) => {
                            CliError::Failed(format!("{} = {a}: {why}", param.key()))
                        }
                        other => other,
                    });
                bar.inc();
                r
            })
            .collect()
    });
    bar.finish();
    let slices: Vec<Vec<SlowAnalysis>> = slices.into_iter().collect::<Result<_, _>>()?;

    let mut columns = vec![param.key()];
    columns.extend(RUN_COLUMNS);
    let mut table = Table::new(&columns);
    let mut per_slice = Vec::with_capacity(count);
    // per slice: how many rates settle, cycle, leave the range; the rates
    // that cycle (for summary.json and the report)
    let mut tallies: Vec<([usize; 3], Vec<f64>)> = Vec::with_capacity(count);
    let mut share = Vec::with_capacity(count * values.len());
    for (a, runs) in grid.iter().zip(&slices) {
        let mut counts = [0usize; 3];
        let mut cycling = Vec::new();
        for r in runs {
            let mut row = vec![Cell::Num(*a)];
            row.extend(run_row(r));
            table.push_row(row);
            match r.outcome {
                Outcome::Settles(_) => counts[0] += 1,
                Outcome::Cycles(_) => {
                    counts[1] += 1;
                    cycling.push(r.outgassing);
                }
                Outcome::LeavesRange(_) => counts[2] += 1,
            }
        }
        per_slice.push(json!({
            param.key(): a,
            "settles": counts[0],
            "cycles": counts[1],
            "leaves_range": counts[2],
            "cycling_outgassing_bar_per_gyr": &cycling,
        }));
        tallies.push((counts, cycling));
    }
    // the figure's field: rows are outgassing rates, columns across values
    let mut drawable = true;
    for k in 0..values.len() {
        for runs in &slices {
            match snowball_share(&runs[k]) {
                Some(s) => share.push(s),
                None => drawable = false,
            }
        }
    }
    let mut out = OutputSet::new();
    let dir = out_dir(args);
    let mut notes = Vec::new();
    if args.figures.any() && values.len() >= 2 && drawable {
        plot::field_figure(
            args.figures,
            &format!(
                "Where the thermostat settles and where it cycles: {}",
                sc.name()
            ),
            &crate::io::schema::axis_label(param.key()),
            "Outgassing V (bar Gyr-1)",
            "Share of the time in snowball",
            &grid,
            values,
            &share,
            &[],
            "",
        )?
        .add_to(&mut out, &dir, "thermostat_map");
    } else if args.figures.any() {
        notes.push(if values.len() < 2 {
            "no figure: one outgassing rate (give FROM:TO:COUNT)".to_string()
        } else {
            "no figure: CO2 leaves the traced range in some cells (widen --co2)".to_string()
        });
    }
    let mut summary = provenance(sc, args);
    summary.insert("co2_trace_ppm".into(), json!([co2.0, co2.1]));
    summary.insert(
        "across".into(),
        json!({"key": param.key(), "from": from, "to": to, "count": count}),
    );
    summary.insert("outgassing_bar_per_gyr".into(), json!(values));
    summary.insert("slices".into(), per_slice.into());
    summary.insert("notes".into(), json!(notes));
    out.add_table(dir.join("thermostat_map.csv"), &table)?;
    out.add_json(dir.join("summary.json"), &summary);
    out.add_text(dir.join("scenario.toml"), &sc.to_toml());
    let written = super::context::publish(out, &dir, args)?;

    let mut s = format!(
        "{}: thermostat over {} = {}..{} ({count} slices) and {} outgassing rates, fast climate traced in radiation.co2_ppm over [{}, {}] ppm\n",
        sc.name(),
        param.key(),
        fmt_num(from),
        fmt_num(to),
        values.len(),
        co2.0,
        co2.1
    );
    for (a, (counts, cyc)) in grid.iter().zip(&tallies) {
        let (rates, leaves) = (values.len(), counts[2]);
        s += &format!(
            "  {} = {:<12} {}{}\n",
            param.key(),
            fmt_num(*a),
            match (cyc.first(), cyc.last()) {
                (Some(lo), Some(hi)) => format!(
                    "cycles at {} of {rates} rates (V {} to {} bar Gyr-1)",
                    cyc.len(),
                    fmt_num(*lo),
                    fmt_num(*hi)
                ),
                _ => format!("settles at {} of {rates} rates", rates - leaves),
            },
            if leaves > 0 {
                format!("; CO2 leaves the range at {leaves}")
            } else {
                String::new()
            }
        );
    }
    for n in &notes {
        s += &format!("  note: {n}\n");
    }
    Ok(s + &written_list(&written))
}
