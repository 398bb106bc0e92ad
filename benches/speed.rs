//! Speed figures (criterion, not timed tests): `cargo bench --bench speed`.
//! Groups: the per-point kernel `Model::evaluate` with and without its
//! Jacobian, with dry and with moist transport; steady solves against bands; Newton against implicit time
//! stepping to the same equilibrium; traces of the hysteresis loop against
//! bands, and at 90 bands against the sub-grid ice fraction (the
//! formulation before the edges became unknowns); the flux ramp a
//! researcher would otherwise write. A summary after
//! criterion's report prints the comparisons as ratios of times measured in
//! this run, and the Newton iterations and fold locations observed.
//!
//! The trace group uses 20 samples and the flux ramp (about half a second a
//! run) criterion's minimum of 10.
mod common;

use common::Summary;
use criterion::{BenchmarkId, Criterion};
use icefold::analysis::branches::{TraceOptions, trace_all, trace_subgrid};
use icefold::io::scenario::Scenario;
use icefold::model::{Model, Param};
use icefold::numerics::newton::{NewtonOptions, Workspace, implicit_step, newton};
use std::hint::black_box;

const BANDS: [usize; 3] = [90, 360, 1440];

fn model(bands: usize) -> Model {
    Scenario::load(None, &[format!("grid.bands={bands}")])
        .unwrap()
        .model()
}

/// The warm equilibrium (ice edge inside the domain) by Newton from 30 °C.
fn warm_equilibrium(m: &Model) -> Vec<f64> {
    let mut ws = Workspace::new(m);
    let mut t = vec![30.0; m.len()];
    newton(m, &mut t, &NewtonOptions::default(), &mut ws).unwrap();
    t
}

fn kernels(c: &mut Criterion, s: &Summary) {
    let mut g = c.benchmark_group("evaluate");
    for bands in [90, 360] {
        let m = model(bands);
        let t = warm_equilibrium(&m);
        let mut f = vec![0.0; m.len()];
        let mut jac = m.new_jacobian();
        let b = format!("bands={bands}");
        g.bench_function(BenchmarkId::new("residual", &b), |bch| {
            bch.iter(|| m.evaluate(black_box(&t), &mut f, None))
        });
        g.bench_function(BenchmarkId::new("jacobian", &b), |bch| {
            bch.iter(|| m.evaluate(black_box(&t), &mut f, Some(&mut jac)))
        });
        // the same planet with moist transport (one exp per band more)
        let moist = Scenario::load(
            None,
            &[
                format!("grid.bands={bands}"),
                "transport.kind=\"moist\"".into(),
            ],
        )
        .unwrap()
        .model();
        g.bench_function(BenchmarkId::new("residual-moist", &b), |bch| {
            bch.iter(|| moist.evaluate(black_box(&t), &mut f, None))
        });
        g.bench_function(BenchmarkId::new("jacobian-moist", &b), |bch| {
            bch.iter(|| moist.evaluate(black_box(&t), &mut f, Some(&mut jac)))
        });
    }
    g.finish();
    for bands in [90, 360] {
        let b = format!("bands={bands}");
        s.scaling(
            &format!("evaluate with Jacobian, {bands} bands"),
            &["evaluate", "jacobian", &b],
            &["evaluate", "residual", &b],
        );
    }
    for bands in [90, 360] {
        let b = format!("bands={bands}");
        s.scaling(
            &format!("moist against dry residual, {bands} bands"),
            &["evaluate", "residual-moist", &b],
            &["evaluate", "residual", &b],
        );
    }
    s.scaling(
        "evaluate residual, 360 bands",
        &["evaluate", "residual", "bands=360"],
        &["evaluate", "residual", "bands=90"],
    );
}

fn solve(c: &mut Criterion, s: &Summary) {
    let mut iterations = Vec::new();
    let mut g = c.benchmark_group("solve");
    for bands in BANDS {
        let m = model(bands);
        let mut ws = Workspace::new(&m);
        let mut iters = None;
        g.bench_function(format!("bands={bands}"), |b| {
            b.iter(|| {
                let mut t = vec![30.0; m.len()];
                iters = Some(newton(&m, &mut t, &NewtonOptions::default(), &mut ws).unwrap());
                t
            })
        });
        iterations.push((bands, iters));
    }
    g.finish();
    for (bands, iters) in iterations {
        let id = format!("bands={bands}");
        let iters = iters.map_or("?".into(), |k| k.to_string());
        s.scaling(
            &format!("solve/{id} (Newton from 30 C, {iters} iterations)"),
            &["solve", &id],
            &["solve", "bands=90"],
        );
    }
}

fn newton_vs_stepping(c: &mut Criterion, s: &Summary) {
    let m = model(90);
    let t_eq = warm_equilibrium(&m);
    let mut ws = Workspace::new(&m);
    let dt = 1.0 / 12.0;
    let mut steps = 0;
    let mut g = c.benchmark_group("equilibrium");
    g.bench_function(BenchmarkId::new("newton", "bands=90"), |b| {
        b.iter(|| {
            let mut t = vec![30.0; 90];
            newton(&m, &mut t, &NewtonOptions::default(), &mut ws).unwrap();
            t
        })
    });
    g.bench_function(BenchmarkId::new("implicit_steps", "bands=90"), |b| {
        b.iter(|| {
            let mut t = vec![30.0; 90];
            let mut k = 0;
            while t.iter().zip(&t_eq).any(|(a, b)| (a - b).abs() > 1e-6) && k < 1_000_000 {
                implicit_step(&m, &mut t, dt, &mut ws).unwrap();
                k += 1;
            }
            steps = k;
            t
        })
    });
    g.finish();
    let steps = if steps == 0 {
        "?".into()
    } else {
        steps.to_string()
    };
    s.ratio(
        &format!(
            "Newton vs implicit stepping to the same equilibrium within 1e-6 K (90 bands; {steps} one-month steps, C = {:.2} W yr m-2 K-1)",
            m.planet.heat_capacity[0]
        ),
        &["equilibrium", "newton", "bands=90"],
        &["equilibrium", "implicit_steps", "bands=90"],
    );
}

const LO: f64 = 0.8 * 1337.6;
const HI: f64 = 1.15 * 1337.6;

/// Returns the lowest fold in flux of the 90-band trace, if it ran.
fn trace(c: &mut Criterion, s: &Summary) -> Option<f64> {
    let mut folds = Vec::new();
    let mut g = c.benchmark_group("trace");
    g.sample_size(20);
    for bands in BANDS {
        let m = model(bands);
        let mut found = Vec::new();
        g.bench_function(format!("bands={bands}"), |b| {
            b.iter(|| {
                let h = trace_all(
                    &m,
                    Param::Flux,
                    LO,
                    HI,
                    30.0,
                    -60.0,
                    &TraceOptions::default(),
                    &mut |_| {},
                );
                found = h
                    .branches
                    .iter()
                    .flat_map(|b| b.folds.iter().map(|f| f.point.p))
                    .collect();
            })
        });
        folds.push((bands, found));
    }
    // the comparison: the same trace with the ice as a sub-grid fraction of
    // a band (the formulation before the edges became unknowns)
    let m = model(90);
    g.bench_function("bands=90/sub-grid", |b| {
        b.iter(|| {
            black_box(trace_subgrid(
                &m,
                Param::Flux,
                LO,
                HI,
                30.0,
                -60.0,
                &TraceOptions::default(),
                &mut |_| {},
            ))
        })
    });
    g.finish();
    s.ratio(
        "trace at 90 bands: ice edges as unknowns vs sub-grid ice fraction",
        &["trace", "bands=90"],
        &["trace", "bands=90/sub-grid"],
    );
    let mut lowest = None;
    for (bands, found) in folds {
        let id = format!("bands={bands}");
        let at: Vec<String> = found.iter().map(|p| format!("{p:.6}")).collect();
        s.scaling(
            &format!("trace/{id} (folds at [{}] W m-2)", at.join(", ")),
            &["trace", &id],
            &["trace", "bands=90"],
        );
        if bands == 90 {
            lowest = found.iter().copied().reduce(f64::min);
        }
    }
    lowest
}

/// Flux down then up in 0.5 W m-2 steps, each time-stepped (3-month steps)
/// until the change is below 1e-4 K per year; returns the implicit steps
/// taken and the first flux at which the planet was a snowball.
fn ramp(m: &mut Model, ws: &mut Workspace) -> (usize, f64) {
    let dt = 0.25;
    let mut t = vec![30.0; m.len()];
    let mut p = HI;
    let mut total_steps = 0usize;
    let mut jump_at = f64::NAN;
    let mut was_ice = false;
    let mut settle = |m: &Model, t: &mut Vec<f64>, ws: &mut Workspace| {
        for _ in 0..200_000 {
            implicit_step(m, t, dt, ws).unwrap();
            total_steps += 1;
            if ws.dx.iter().fold(0.0f64, |a, x| a.max(x.abs())) / dt < 1e-4 {
                break;
            }
        }
    };
    while p >= LO {
        m.set_param(Param::Flux, p);
        settle(m, &mut t, ws);
        let snow = t.iter().all(|x| *x < -10.0);
        if snow && !was_ice {
            jump_at = p;
        }
        was_ice = snow;
        p -= 0.5;
    }
    while p <= HI {
        m.set_param(Param::Flux, p);
        settle(m, &mut t, ws);
        p += 0.5;
    }
    (total_steps, jump_at)
}

fn flux_ramp(c: &mut Criterion, s: &Summary, fold: Option<f64>) {
    let mut m = model(90);
    let mut ws = Workspace::new(&m);
    let mut out = None;
    let mut g = c.benchmark_group("flux_ramp");
    g.sample_size(10);
    g.bench_function("bands=90", |b| b.iter(|| out = Some(ramp(&mut m, &mut ws))));
    g.finish();
    s.ratio(
        "trace vs flux ramp (90 bands)",
        &["trace", "bands=90"],
        &["flux_ramp", "bands=90"],
    );
    let Some((steps, jump_at)) = out else { return };
    let against = match fold {
        Some(f) => {
            // untimed: how far the fold moves with a 100 times tighter corrector
            let tight = TraceOptions {
                tolerance: 1e-12,
                ..TraceOptions::default()
            };
            let h = trace_all(
                &model(90),
                Param::Flux,
                LO,
                HI,
                30.0,
                -60.0,
                &tight,
                &mut |_| {},
            );
            let f2 = h
                .branches
                .iter()
                .flat_map(|b| b.folds.iter().map(|f| f.point.p))
                .reduce(f64::min)
                .unwrap_or(f64::NAN);
            format!(
                ", {:.3} W m-2 from the traced fold at {f:.9} (unchanged to {:.1e} W m-2 when the corrector tolerance goes from 1e-10 to 1e-12)",
                (jump_at - f).abs(),
                (f2 - f).abs()
            )
        }
        None => String::new(),
    };
    s.note(format!(
        "  flux ramp: {steps} implicit steps (3 months, C = {:.2} W yr m-2 K-1), snowball first seen at {jump_at:.2} W m-2 (0.5 W m-2 steps){against}",
        m.planet.heat_capacity[0],
    ));
}

fn main() {
    let s = Summary::new("speed");
    let mut c = Criterion::default().without_plots().configure_from_args();
    kernels(&mut c, &s);
    solve(&mut c, &s);
    newton_vs_stepping(&mut c, &s);
    let fold = trace(&mut c, &s);
    flux_ramp(&mut c, &s, fold);
    c.final_summary();
    s.print();
}
