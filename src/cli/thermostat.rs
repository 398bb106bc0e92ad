//! `icefold thermostat`: the carbonate-silicate thermostat over a range of
//! outgassing rates, from one trace of the fast climate in CO2.

use super::context::{Args, CliError, load, newton_options, out_dir, provenance, written_list};
use super::progress::Progress;
use crate::analysis::branches::{Hysteresis, TraceOptions, trace_all};
use crate::analysis::thermostat::{LimitCycle, Outcome, SlowAnalysis, Thermostat};
use crate::io::export::{Cell, OutputSet, Table};
use crate::io::plot::{self, BranchCurve, ThermostatPlot};
use crate::io::scenario::fmt_num;
use crate::model::Param;
use serde_json::json;

/// Default CO2 range of the trace, ppm.
pub const DEFAULT_CO2: (f64, f64) = (1.0, 1e6);

/// Largest number of outgassing rates.
const MAX_COUNT: usize = 10_000;

fn usage(s: String) -> CliError {
    CliError::Usage(s)
}

/// An outgassing rate, bar Gyr-1, checked against the range of
/// `weathering.outgassing` (> 0 and <= 1e6).
fn outgassing_value(flag: &str, text: &str, field: &str) -> Result<f64, CliError> {
    let v: f64 = text
        .trim()
        .parse()
        .ok()
        .filter(|x: &f64| x.is_finite())
        .ok_or_else(|| usage(format!("{flag} `{text}`: {field} is not a finite number")))?;
    if !(v > 0.0 && v <= 1e6) {
        return Err(usage(format!(
            "{flag} `{text}`: {field} = {} is out of range: allowed > 0 and <= 1000000 bar Gyr-1 (outgassing V)",
            fmt_num(v)
        )));
    }
    Ok(v)
}

/// `--outgassing V`, `FROM:TO:COUNT` (evenly spaced, ends included) or
/// `FROM:TO:COUNT:log` (V_k = FROM (TO/FROM)^(k/(COUNT-1)): evenly spaced in
/// ln V, for rates spanning decades), each rounded to 12 significant digits
/// as `trace` rounds its range ends.
pub fn parse_outgassing(text: &str) -> Result<Vec<f64>, CliError> {
    let flag = "--outgassing";
    let parts: Vec<&str> = text.split(':').collect();
    match parts.len() {
        1 => Ok(vec![outgassing_value(flag, text, "V")?]),
        3 | 4 => {
            let from = outgassing_value(flag, parts[0], "FROM")?;
            let to = outgassing_value(flag, parts[1], "TO")?;
            let count: usize = parts[2]
                .trim()
                .parse()
                .map_err(|_| usage(format!("{flag} `{text}`: COUNT is not a whole number")))?;
            if !(2..=MAX_COUNT).contains(&count) {
                return Err(usage(format!(
                    "{flag} `{text}`: COUNT = {count} is out of range: allowed 2 to {MAX_COUNT}"
                )));
            }
            if from >= to {
                return Err(usage(format!(
                    "{flag} `{text}`: the range is empty or inverted (need FROM < TO)"
                )));
            }
            let log = match parts.get(3).map(|s| s.trim()) {
                None | Some("lin") => false,
                Some("log") => true,
                Some(other) => {
                    return Err(usage(format!(
                        "{flag} `{text}`: spacing `{other}` is not one of lin, log"
                    )));
                }
            };
            let r = |k: usize| k as f64 / (count - 1) as f64;
            Ok((0..count)
                .map(|k| {
                    super::trace::decimal(if log {
                        from * (to / from).powf(r(k))
                    } else {
                        from + (to - from) * r(k)
                    })
                })
                .collect())
        }
        _ => Err(usage(format!(
            "{flag} `{text}`: expected V, FROM:TO:COUNT or FROM:TO:COUNT:log in bar Gyr-1, e.g. 0.1:7:12"
        ))),
    }
}

/// `--co2 FROM:TO`, ppm, within the range of `radiation.co2_ppm`.
pub fn parse_co2(text: &str) -> Result<(f64, f64), CliError> {
    let bad = |why: String| {
        usage(format!(
            "--co2 `{text}`: {why} (expected FROM:TO in ppm, e.g. 1:1000000)"
        ))
    };
    let (a, b) = text.split_once(':').ok_or_else(|| bad("no `:`".into()))?;
    let num = |s: &str| s.trim().parse::<f64>().ok().filter(|x| x.is_finite());
    let from = num(a).ok_or_else(|| bad("FROM is not a finite number".into()))?;
    let to = num(b).ok_or_else(|| bad("TO is not a finite number".into()))?;
    let (lo, hi) = Param::Co2.range();
    if from < lo || to > hi {
        return Err(bad(format!(
            "radiation.co2_ppm must stay within {lo} to {hi} ppm"
        )));
    }
    if from >= to {
        return Err(bad("the range is empty or inverted (need FROM < TO)".into()));
    }
    Ok((from, to))
}

fn outcome_label(o: &Outcome) -> &'static str {
    match o {
        Outcome::Settles(_) => "settles",
        Outcome::Cycles(_) => "cycles",
        Outcome::LeavesRange(_) => "leaves-range",
    }
}

fn cycle_json(c: &LimitCycle) -> serde_json::Value {
    json!({
        "period_yr": c.period_yr,
        "snowball_yr": c.snowball_yr,
        "co2_min_ppm": c.co2_range_ppm.0,
        "co2_max_ppm": c.co2_range_ppm.1,
        "temperature_min_c": c.temperature_range_c.0,
        "temperature_max_c": c.temperature_range_c.1,
        "jumps": c.jumps.iter().map(|(p, a, b)| json!({
            "co2_ppm": p, "from_state": a.label(), "to_state": b.label()
        })).collect::<Vec<_>>(),
    })
}

fn run_json(a: &SlowAnalysis) -> serde_json::Value {
    let eqs: Vec<serde_json::Value> = a
        .equilibria
        .iter()
        .map(|e| {
            json!({
                "branch": e.branch,
                "co2_ppm": e.co2_ppm,
                "global_mean_temperature_c": e.global_mean_c,
                "ice_area_fraction": e.ice_area_fraction,
                "state": e.state.label(),
                "unstable_modes": e.unstable_modes,
                "fast_stable": e.fast_stable,
                "dw_dp_bar_per_gyr_per_ppm": e.dw_dp,
                "slow_stable": e.slow_stable,
                "refined": e.refined,
            })
        })
        .collect();
    let mut m = serde_json::Map::new();
    m.insert("outgassing_bar_per_gyr".into(), a.outgassing.into());
    m.insert("outcome".into(), outcome_label(&a.outcome).into());
    m.insert("equilibria".into(), eqs.into());
    m.insert("fast_solves".into(), a.fast_solves.into());
    match &a.outcome {
        Outcome::Cycles(c) => {
            m.insert("cycle".into(), cycle_json(c));
        }
        Outcome::LeavesRange(p) => {
            m.insert("leaves_range_at_co2_ppm".into(), (*p).into());
        }
        Outcome::Settles(_) => {}
    }
    serde_json::Value::Object(m)
}

/// The warmest stable slow equilibrium of a settling run.
pub(super) fn settled(a: &SlowAnalysis) -> Option<&crate::analysis::thermostat::SlowEquilibrium> {
    let Outcome::Settles(idx) = &a.outcome else {
        return None;
    };
    idx.iter()
        .map(|&i| &a.equilibria[i])
        .max_by(|x, y| x.global_mean_c.total_cmp(&y.global_mean_c))
}

/// The columns of `thermostat.csv`, one row per outgassing rate
/// ([`run_row`]).
pub(super) const RUN_COLUMNS: [&str; 15] = [
    "outgassing_bar_per_gyr",
    "outcome",
    "co2_ppm",
    "global_mean_temperature_c",
    "ice_area_fraction",
    "state",
    "fast_stable",
    "slow_stable",
    "slow_equilibria",
    "period_yr",
    "snowball_yr",
    "co2_min_ppm",
    "co2_max_ppm",
    "temperature_min_c",
    "temperature_max_c",
];

/// One row of [`RUN_COLUMNS`]: the settled climate (the warmest stable slow
/// equilibrium) or the cycle, empty cells where a column does not apply.
pub(super) fn run_row(a: &SlowAnalysis) -> Vec<Cell> {
    let empty = || Cell::Text(String::new());
    let mut row = vec![Cell::Num(a.outgassing), outcome_label(&a.outcome).into()];
    match settled(a) {
        Some(e) => row.extend([
            Cell::Num(e.co2_ppm),
            Cell::Num(e.global_mean_c),
            Cell::Num(e.ice_area_fraction),
            e.state.label().into(),
            e.fast_stable.into(),
            e.slow_stable.into(),
        ]),
        None => row.extend((0..6).map(|_| empty())),
    }
    row.push(a.equilibria.len().into());
    match &a.outcome {
        Outcome::Cycles(c) => row.extend([
            Cell::Num(c.period_yr),
            Cell::Num(c.snowball_yr),
            Cell::Num(c.co2_range_ppm.0),
            Cell::Num(c.co2_range_ppm.1),
            Cell::Num(c.temperature_range_c.0),
            Cell::Num(c.temperature_range_c.1),
        ]),
        _ => row.extend((0..6).map(|_| empty())),
    }
    row
}

/// The fast climate of `model` traced in CO2 over `co2` (ppm), its
/// thermostat, and the slow analysis of each outgassing rate in `values`;
/// `progress` gets a line on each step.
pub(super) fn slow_runs(
    model: &crate::model::Model,
    sc: &crate::io::scenario::Scenario,
    values: &[f64],
    (lo, hi): (f64, f64),
    progress: &mut dyn FnMut(&str),
) -> Result<(Hysteresis, Thermostat, Vec<SlowAnalysis>), CliError> {
    let opts = TraceOptions {
        tolerance: sc.num("solver.tolerance"),
        integrate_jumps: false,
        sensitivities: false,
        ..TraceOptions::default()
    };
    let (warm, cold) = (sc.num("solver.warm_start"), sc.num("solver.cold_start"));
    let h = trace_all(model, Param::Co2, lo, hi, warm, cold, &opts, &mut |m| {
        progress(&format!("trace in CO2: {m}"))
    });
    let th = Thermostat::new(model, &h, sc.weathering(), newton_options(sc))
        .map_err(|e| CliError::Failed(format!("thermostat: {e}")))?;
    let mut runs = Vec::with_capacity(values.len());
    for (k, &v) in values.iter().enumerate() {
        progress(&format!(
            "outgassing {k}/{}: V = {v} bar Gyr-1",
            values.len()
        ));
        let a = th.analyse(v).map_err(|e| {
            CliError::Failed(format!("thermostat at outgassing V = {v} bar Gyr-1: {e}"))
        })?;
        runs.push(a);
    }
    Ok((h, th, runs))
}

/// Runs `thermostat`.
pub fn cmd_thermostat(args: &Args) -> Result<String, CliError> {
    let sc = load(args)?;
    if sc.flag("seasons.enabled") || sc.flag("seaice.enabled") {
        return Err(usage(
            "`seasons.enabled` / `seaice.enabled` = true: thermostat slaves the annual-mean model to the CO2 budget; set both to false".into(),
        ));
    }
    let values = match &args.outgassing {
        Some(t) => parse_outgassing(t)?,
        None => vec![sc.num("weathering.outgassing")],
    };
    let (lo, hi) = match &args.co2 {
        Some(t) => parse_co2(t)?,
        None => DEFAULT_CO2,
    };
    let cycle_at = args
        .cycle_at
        .as_deref()
        .map(|t| outgassing_value("--cycle-at", t, "V"))
        .transpose()?;
    if let Some(across) = args.across.first() {
        if cycle_at.is_some() {
            return Err(usage(
                "--cycle-at: one cycle is written by a single thermostat; drop it with --across (every cycle's period and ranges are in thermostat_map.csv)".into(),
            ));
        }
        return super::thermomap::cmd_thermostat_map(args, &sc, across, &values, (lo, hi));
    }
    let model = sc.model();
    let bar = Progress::spinner("thermostat", args.quiet);
    let (h, th, runs) = slow_runs(&model, &sc, &values, (lo, hi), &mut |m| bar.message(m))?;
    // the cycle written out: --cycle-at, else the first cycling V
    let cycle_run = match cycle_at {
        Some(v) => {
            let a = th.analyse(v).map_err(|e| {
                CliError::Failed(format!("thermostat at --cycle-at {v} bar Gyr-1: {e}"))
            })?;
            if !matches!(a.outcome, Outcome::Cycles(_)) {
                return Err(CliError::Failed(format!(
                    "--cycle-at {v}: the planet does not cycle at this outgassing (it {})",
                    outcome_label(&a.outcome)
                )));
            }
            Some(a)
        }
        None => runs
            .iter()
            .find(|a| matches!(a.outcome, Outcome::Cycles(_)))
            .cloned(),
    };
    bar.finish();

    let mut table = Table::new(&RUN_COLUMNS);
    for a in &runs {
        table.push_row(run_row(a));
    }
    let mut cycle_table = Table::new(&[
        "time_yr",
        "co2_ppm",
        "global_mean_temperature_c",
        "ice_area_fraction",
        "weathering_bar_per_gyr",
        "state",
    ]);
    if let Some(Outcome::Cycles(c)) = cycle_run.as_ref().map(|a| &a.outcome) {
        for q in &c.points {
            cycle_table.push_row(vec![
                Cell::Num(q.time_yr),
                Cell::Num(q.co2_ppm),
                Cell::Num(q.global_mean_c),
                Cell::Num(q.ice_area_fraction),
                Cell::Num(q.weathering),
                q.state.label().into(),
            ]);
        }
    }

    // the figure: every branch, the nullclines of the first and last V and
    // of the cycle drawn, the stable slow equilibria of those V
    let mut fig = ThermostatPlot::default();
    for (id, pts) in th.branch_curves() {
        fig.branches.push(BranchCurve {
            id,
            param: pts.iter().map(|q| q.co2_ppm).collect(),
            ice_edge_deg: pts.iter().map(|q| q.ice_edge_deg).collect(),
            global_mean_c: pts.iter().map(|q| q.global_mean_c).collect(),
            stable: pts.iter().map(|q| q.stable).collect(),
            state: pts.iter().map(|q| q.state.label().to_string()).collect(),
        });
        fig.weathering
            .push(pts.iter().map(|q| q.weathering).collect());
    }
    let mut shown: Vec<&SlowAnalysis> = Vec::new();
    for a in [runs.first(), runs.last(), cycle_run.as_ref()]
        .into_iter()
        .flatten()
    {
        if !shown.iter().any(|s| s.outgassing == a.outgassing) {
            shown.push(a);
        }
    }
    for a in &shown {
        fig.outgassing.push(a.outgassing);
        for e in &a.equilibria {
            fig.equilibria.push((
                e.co2_ppm,
                e.global_mean_c,
                a.outgassing,
                e.fast_stable && e.slow_stable,
            ));
        }
    }
    if let Some(Outcome::Cycles(c)) = cycle_run.as_ref().map(|a| &a.outcome) {
        fig.cycle = c
            .points
            .iter()
            .map(|q| (q.co2_ppm, q.global_mean_c, q.weathering))
            .collect();
    }
    let figure = if !args.figures.any() {
        None
    } else {
        Some(plot::thermostat_figure(
            args.figures,
            &format!("Carbonate-silicate thermostat: {}", sc.name()),
            &fig,
        )?)
    };

    let mut summary = provenance(&sc, args);
    summary.insert("co2_trace_ppm".into(), json!([lo, hi]));
    summary.insert("traced_states".into(), th.traced_states.into());
    summary.insert("trace_failures".into(), h.failures.clone().into());
    summary.insert("runs".into(), runs.iter().map(run_json).collect());
    summary.insert(
        "cycle_csv".into(),
        match &cycle_run {
            Some(a) => json!({"outgassing_bar_per_gyr": a.outgassing}),
            None => serde_json::Value::Null,
        },
    );
    let dir = out_dir(args);
    let mut out = OutputSet::new();
    out.add_table(dir.join("thermostat.csv"), &table)?;
    out.add_table(dir.join("cycle.csv"), &cycle_table)?;
    out.add_json(dir.join("summary.json"), &summary);
    if let Some(figure) = figure {
        figure.add_to(&mut out, &dir, "thermostat");
    }
    out.add_text(dir.join("scenario.toml"), &sc.to_toml());
    let written = super::context::publish(out, &dir, args)?;

    let mut s = format!(
        "{}: fast climate traced in radiation.co2_ppm over [{lo}, {hi}] ppm ({} branches, {} states)\n",
        sc.name(),
        h.branches.len(),
        th.traced_states
    );
    s += "  V bar/Gyr   outcome       CO2 ppm        global mean C  period yr       snowball yr     CO2 range ppm                  T range C            fast solves\n";
    for a in &runs {
        let (co2, gm) = settled(a).map_or(("-".to_string(), "-".to_string()), |e| {
            (
                format!("{:.6}", e.co2_ppm),
                format!("{:.4}", e.global_mean_c),
            )
        });
        let (period, snow, pr, tr) = match &a.outcome {
            Outcome::Cycles(c) => (
                format!("{:.6e}", c.period_yr),
                format!("{:.6e}", c.snowball_yr),
                format!("{:.6} to {:.6}", c.co2_range_ppm.0, c.co2_range_ppm.1),
                format!(
                    "{:.3} to {:.3}",
                    c.temperature_range_c.0, c.temperature_range_c.1
                ),
            ),
            Outcome::LeavesRange(p) => (
                "-".into(),
                "-".into(),
                format!("leaves at {p:.6}"),
                "-".into(),
            ),
            Outcome::Settles(_) => ("-".into(), "-".into(), "-".into(), "-".into()),
        };
        s += &format!(
            "  {:<11} {:<13} {:<14} {:<14} {:<15} {:<15} {:<30} {:<20} {}\n",
            fmt_num(a.outgassing),
            outcome_label(&a.outcome),
            co2,
            gm,
            period,
            snow,
            pr,
            tr,
            a.fast_solves
        );
    }
    if cycle_run.is_none() {
        s += "  no outgassing rate cycles: cycle.csv holds the header only\n";
    }
    s += &written_list(&written);
    Ok(s)
}
