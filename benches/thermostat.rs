//! The carbonate-silicate thermostat: `cargo bench --bench thermostat`.
//! One limit cycle of the invented demo planet `scenarios/outer-edge.toml`
//! at 90 bands, with W0 = 700 bar Gyr-1 and V = 40 bar Gyr-1 (the demo's
//! V/W0 scaled by 100, so that the period is of order 1e6 years):
//! - `thermostat/slaved`: the trace of the fast climate in CO2 (1 to 1e6
//!   ppm), W along every branch and the slaved cycle (period by
//!   quadrature); target under one second;
//! - `thermostat/integrated`: one period of the backward-Euler integration
//!   of the full fast-slow system with 1000-year steps, from the snowball
//!   at the warm fold.
//!
//! The summary prints both times, their ratio, the periods and the number
//! of fast solves each used.
mod common;

use common::Summary;
use criterion::Criterion;
use icefold::analysis::branches::{TraceOptions, trace_all};
use icefold::analysis::coupled::{Coupled, CoupledOptions, CoupledState};
use icefold::analysis::thermostat::{LimitCycle, Outcome, Thermostat};
use icefold::io::scenario::Scenario;
use icefold::model::{Model, Param};
use icefold::numerics::newton::{NewtonOptions, Workspace, newton};
use std::path::Path;

const V: f64 = 40.0;

fn slaved(sc: &Scenario, model: &Model) -> (LimitCycle, usize) {
    let opts = TraceOptions {
        integrate_jumps: false,
        sensitivities: false,
        ..Default::default()
    };
    let h = trace_all(model, Param::Co2, 1.0, 1e6, 30.0, -60.0, &opts, &mut |_| {});
    let th = Thermostat::new(model, &h, sc.weathering(), NewtonOptions::default()).unwrap();
    let a = th.analyse(V).unwrap();
    let Outcome::Cycles(c) = a.outcome else {
        panic!("no cycle at V = {V}: {:?}", a.outcome);
    };
    (c, th.traced_states + a.fast_solves)
}

/// One period from the snowball at `pw`: (period, fast solves).
fn integrated(sc: &Scenario, model: &Model, pw: f64, period: f64) -> (f64, usize) {
    let mut m = model.clone();
    m.set_param(Param::Co2, pw);
    let mut t = vec![-60.0; m.len()];
    newton(
        &m,
        &mut t,
        &NewtonOptions::default(),
        &mut Workspace::new(&m),
    )
    .unwrap();
    let mut st = CoupledState {
        time_yr: 0.0,
        temperature: t,
        co2_ppm: pw,
    };
    let opts = CoupledOptions {
        step_yr: 1000.0,
        ..Default::default()
    };
    let mut c = Coupled::new(model, sc.weathering(), V, opts);
    // from this glaciation to the next
    let mut was_open = false;
    while st.time_yr < 1.5 * period {
        c.step(&mut st).unwrap();
        let open = c.model().open_surface(&st.temperature).0 > 0.0;
        if was_open && !open {
            return (st.time_yr, c.fast_solves);
        }
        was_open = open;
    }
    panic!("no glaciation within 1.5 periods");
}

fn main() {
    let s = Summary::new("thermostat");
    let mut c = Criterion::default().without_plots().configure_from_args();
    let sc = Scenario::load(
        Some(Path::new("scenarios/outer-edge.toml")),
        &["weathering.present_rate=700".into(), "grid.bands=90".into()],
    )
    .unwrap();
    let model = sc.model();
    let (cycle, solves) = slaved(&sc, &model);
    let (pw, ps) = cycle.co2_range_ppm;
    let (period, isolves) = integrated(&sc, &model, pw, cycle.period_yr);
    let mut g = c.benchmark_group("thermostat");
    g.sample_size(10);
    g.bench_function("slaved", |b| b.iter(|| slaved(&sc, &model)));
    g.bench_function("integrated", |b| {
        b.iter(|| integrated(&sc, &model, pw, cycle.period_yr))
    });
    g.finish();
    c.final_summary();
    s.note(format!(
        "slaved cycle at 90 bands, V = {V} bar Gyr-1: period {:.6e} yr ({:.4e} yr in snowball), CO2 {pw:.4} to {ps:.4} ppm; {solves} fast solves (traced states and refinements)",
        cycle.period_yr, cycle.snowball_yr
    ));
    s.note(format!(
        "backward-Euler integration, 1000-year steps: period {period:.6e} yr ({:+.3}% against the slaved cycle); {isolves} fast solves",
        100.0 * (period / cycle.period_yr - 1.0)
    ));
    if let Some(t) = s.time(&["thermostat", "slaved"]) {
        s.note(format!(
            "slaved cycle: {} (target: under 1 s)",
            common::secs(t)
        ));
    }
    s.ratio(
        "slaved cycle vs integrated period",
        &["thermostat", "slaved"],
        &["thermostat", "integrated"],
    );
    s.print();
}
