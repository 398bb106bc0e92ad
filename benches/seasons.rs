//! Speed figures of the seasonal model (criterion, not timed tests):
//! `cargo bench --bench seasons`. Groups: the periodic climate by shooting
//! against spin-up to 1e-6 K year over year (75 m and 200 m mixed layers,
//! from a warm start and from the annual-mean equilibrium); one model year
//! with and without the annual-map Jacobian; the seasonal trace over the
//! default flux range at 72 and 360 steps per year. A summary after
//! criterion's report prints shooting against spin-up as ratios of times
//! measured in this run, with the iterations, years and multipliers seen.
//!
//! The periodic and trace groups use criterion's minimum of 10 samples
//! (a spin-up takes a fraction of a second, a trace seconds).
mod common;

use common::Summary;
use criterion::{BenchmarkId, Criterion};
use icefold::analysis::periodic::{
    Periodic, SeasonalTraceOptions, ShootingOptions, periodic_from, shoot, spin_up, trace_seasonal,
};
use icefold::io::scenario::Scenario;
use icefold::model::Param;
use icefold::model::seasonal::SeasonalModel;
use icefold::numerics::newton::{NewtonOptions, Workspace, newton};

fn seasonal(sets: &[String]) -> SeasonalModel {
    Scenario::load(None, sets)
        .unwrap()
        .seasonal_model()
        .unwrap()
}

fn periodic(c: &mut Criterion, s: &Summary) {
    let mut g = c.benchmark_group("periodic");
    g.sample_size(10);
    let mut seen = Vec::new();
    for (depth, sets) in [
        ("depth=75m", vec![]),
        (
            "depth=200m",
            vec!["seasons.mixed_layer_depth=200".to_string()],
        ),
    ] {
        let mut sm = seasonal(&sets);
        let n = sm.len();
        let am = sm.annual_model();
        let mut ws = Workspace::new(&am);
        let mut eq = vec![30.0; n];
        newton(&am, &mut eq, &NewtonOptions::default(), &mut ws).unwrap();
        for (start_id, start) in [("start=warm", vec![30.0; n]), ("start=annual_eq", eq)] {
            let mut shot: Option<Periodic> = None;
            let id = |f: &str| BenchmarkId::new(format!("{f}/{depth}"), start_id);
            g.bench_function(id("shooting"), |b| {
                b.iter(|| shot = Some(shoot(&mut sm, &start, &ShootingOptions::default()).unwrap()))
            });
            let mut spun: Option<(usize, Vec<f64>)> = None;
            g.bench_function(id("spin_up"), |b| {
                b.iter(|| {
                    let mut u = start.clone();
                    let years = spin_up(&mut sm, &mut u, 1e-6, 1_000_000).unwrap();
                    spun = Some((years, u));
                })
            });
            seen.push((depth, start_id, shot, spun));
        }
    }
    g.finish();
    for (depth, start_id, shot, spun) in seen {
        s.ratio(
            &format!("shooting vs spin-up to 1e-6 K per year, {depth}, {start_id}"),
            &["periodic", &format!("shooting/{depth}"), start_id],
            &["periodic", &format!("spin_up/{depth}"), start_id],
        );
        if let Some(p) = &shot {
            let mu = p.multipliers[0].0.hypot(p.multipliers[0].1);
            s.note(format!(
                "  shooting: {} Newton iterations, max |u - Phi(u)| = {:.1e} K, largest Floquet multiplier {mu:.4}",
                p.iterations, p.residual
            ));
        }
        if let Some((years, u)) = &spun {
            let dist = match &shot {
                Some(p) => format!(
                    ", then {:.1e} K from the periodic state",
                    u.iter()
                        .zip(&p.start)
                        .fold(0.0f64, |m, (a, b)| m.max((a - b).abs()))
                ),
                None => String::new(),
            };
            s.note(format!("  spin-up: {years} years{dist}"));
        }
    }
}

fn year(c: &mut Criterion, s: &Summary) {
    let mut sm = seasonal(&[]);
    let n = sm.len();
    let mut g = c.benchmark_group("year");
    let mut t = vec![10.0; n];
    g.bench_function(BenchmarkId::new("plain", "bands=90"), |b| {
        b.iter(|| sm.year(&mut t).unwrap())
    });
    let mut m = vec![0.0; n * n];
    g.bench_function(BenchmarkId::new("with_jacobian", "bands=90"), |b| {
        b.iter(|| sm.year_with_jacobian(&mut t, &mut m, None).unwrap())
    });
    g.finish();
    s.scaling(
        "one year (90 bands)",
        &["year", "plain", "bands=90"],
        &["year", "plain", "bands=90"],
    );
    s.scaling(
        &format!("one year with the exact {n}x{n} annual-map Jacobian"),
        &["year", "with_jacobian", "bands=90"],
        &["year", "plain", "bands=90"],
    );
}

fn trace(c: &mut Criterion, s: &Summary) {
    let mut g = c.benchmark_group("seasonal_trace");
    g.sample_size(10);
    let mut seen = Vec::new();
    for steps in [72usize, 360] {
        let sm = seasonal(&[format!("seasons.steps_per_year={steps}")]);
        let flux = sm.param(Param::Flux);
        let mut out = None;
        g.bench_function(format!("steps={steps}"), |b| {
            b.iter(|| {
                let h = trace_seasonal(
                    &sm,
                    Param::Flux,
                    0.8 * flux,
                    1.15 * flux,
                    30.0,
                    -60.0,
                    &SeasonalTraceOptions::default(),
                    &mut |_| {},
                );
                let points: usize = h.branches.iter().map(|b| b.points.len()).sum();
                let folds: Vec<String> = h
                    .branches
                    .iter()
                    .flat_map(|b| b.folds.iter())
                    .map(|f| format!("{:.3}", f.point.p))
                    .collect();
                out = Some((h.branches.len(), points, folds));
            })
        });
        seen.push((steps, out));
    }
    g.finish();
    for (steps, out) in seen {
        let id = format!("steps={steps}");
        let what = match out {
            Some((branches, points, folds)) => format!(
                " ({branches} branches, {points} points, folds at S0 = [{}] W m-2)",
                folds.join(", ")
            ),
            None => String::new(),
        };
        s.scaling(
            &format!("seasonal_trace/{id}{what}"),
            &["seasonal_trace", &id],
            &["seasonal_trace", "steps=72"],
        );
    }
}

/// The sea-ice model (`scenarios/sea-ice.toml`, 60 bands, 72 steps per
/// year): the periodic climate by shooting from the annual-mean
/// equilibrium of the same planet (as `trace --hierarchy` makes it: the
/// ocean heat flux F_b that the sea-ice model takes from below is a
/// forcing of the annual-mean model), against spin-up from there until the
/// year-over-year change is below the shooting tolerance (1e-10 W yr m-2),
/// i.e. the same tolerance.
fn sea_ice(c: &mut Criterion, s: &Summary) {
    let path = std::path::Path::new(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/scenarios/sea-ice.toml"
    ));
    let sc = Scenario::load(Some(path), &[]).unwrap();
    let mut sm = sc.seasonal_model().unwrap();
    let n = sm.len();
    let fb = sc.num("seaice.ocean_heat_flux") + sc.num("radiation.forcing");
    let am = Scenario::load(Some(path), &[format!("radiation.forcing={fb}")])
        .unwrap()
        .model();
    let starts = icefold::model::climate::standard_starts(n, 30.0, -60.0);
    let search = icefold::model::climate::find_equilibria(&am, &starts, &NewtonOptions::default());
    let warm = search
        .equilibria
        .first()
        .expect("an annual-mean equilibrium");
    let from = icefold::model::climate::Start {
        label: "annual-mean equilibrium".into(),
        temperature: warm.temperature.clone(),
    };
    let start = sm.state_from_temperature(&warm.temperature);
    let opts = ShootingOptions::default();
    let mut g = c.benchmark_group("sea_ice_periodic");
    g.sample_size(10);
    let mut shot: Option<Periodic> = None;
    // shooting as `periodic` does it: Newton, and after short spin-ups
    // when Newton fails from far away (their years are counted)
    g.bench_function("shooting", |b| {
        b.iter(|| shot = Some(periodic_from(&mut sm, &from, &opts).unwrap()))
    });
    let mut years = 0;
    g.bench_function("spin_up", |b| {
        b.iter(|| {
            let mut u = start.clone();
            years = spin_up(&mut sm, &mut u, opts.tolerance, 1_000_000).unwrap();
        })
    });
    g.finish();
    s.ratio(
        "sea ice: shooting vs spin-up to 1e-10 W yr m-2 per year",
        &["sea_ice_periodic", "shooting"],
        &["sea_ice_periodic", "spin_up"],
    );
    if let Some(p) = &shot {
        s.note(format!(
            "  shooting: {} Newton iterations after {} years of spin-up ({} years and {} tangent products M v in the Newton-Krylov shooting), residual {:.1e} W yr m-2, {} unstable modes; spin-up alone: {years} years",
            p.iterations, p.spun_up_years, p.shooting_years, p.tangent_products, p.residual, p.unstable_modes
        ));
    }
}

fn main() {
    let s = Summary::new("seasons");
    let mut c = Criterion::default().without_plots().configure_from_args();
    sea_ice(&mut c, &s);
    periodic(&mut c, &s);
    year(&mut c, &s);
    trace(&mut c, &s);
    c.final_summary();
    s.print();
}
