//! Fold-curve figures (criterion, not timed tests): `cargo bench --bench
//! fold_curve`. The snowball fold of the default scenario at obliquity 23
//! continued over obliquity 0 to 90 by the edge model (ice edges as
//! unknowns, the curves `map` draws for the step albedo) at 90 and 360
//! bands, and, beside it, the fold of the band model with the sub-grid edge (and, beside it, over CO2 140 to 560
//! ppm, a parameter that is cheap to set: a change of obliquity rebuilds
//! the insolation table) in the default map's flux range, by the
//! banded O(n) solver at 90 and 360 bands and by the dense reference at 90
//! bands (at 360 bands the dense solver is timed once, outside criterion,
//! only if the 90-band time scaled by 4³ is under a minute); and the
//! default map (91 obliquity slices x 200 flux cells at 90 bands, 2
//! threads) with and without fold curves. The summary prints the ratios.
mod common;

use common::{Summary, default_map_spec, map_slices, secs};
use criterion::Criterion;
use icefold::analysis::branches::{TraceOptions, trace_all, trace_subgrid};
use icefold::analysis::edgefold::trace_edge_fold_curve;
use icefold::analysis::foldcurve::{FoldSolver, trace_fold_curve_with};
use icefold::analysis::sweep::{MapSpec, continue_boundaries, join_boundaries};
use icefold::io::scenario::Scenario;
use icefold::model::{Model, Param};

/// The default scenario on `bands` bands at obliquity 23, its snowball
/// fold (state, flux) and the flux range of the default map: the fold of
/// the edge model (as `trace` and `map` find it) with `edges`, else of the
/// band model with the sub-grid edge.
fn fold_at(bands: usize, edges: bool) -> (Model, Vec<f64>, f64, (f64, f64)) {
    let mut m = Scenario::load(None, &[format!("grid.bands={bands}")])
        .unwrap()
        .model();
    m.set_param(Param::Obliquity, 23.0);
    let flux = m.param(Param::Flux);
    let range = (0.8 * flux, 1.15 * flux);
    let opts = TraceOptions {
        integrate_jumps: false,
        sensitivities: false,
        ..TraceOptions::default()
    };
    let trace = if edges { trace_all } else { trace_subgrid };
    let h = trace(
        &m,
        Param::Flux,
        range.0,
        range.1,
        30.0,
        -60.0,
        &opts,
        &mut |_| {},
    );
    let (u, p) = h
        .branches
        .iter()
        .flat_map(|b| b.folds.iter())
        .map(|f| (f.point.temperature.clone(), f.point.p))
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .expect("a snowball fold");
    (m, u, p, range)
}

fn across_range(across: Param) -> (f64, f64) {
    if across == Param::Obliquity {
        (0.0, 90.0)
    } else {
        (140.0, 560.0)
    }
}

/// The edge model's fold curve; returns its point count and across span.
fn edge_curve(fold: &(Model, Vec<f64>, f64, (f64, f64)), across: Param) -> (usize, f64, f64) {
    let (m, u, p, range) = fold;
    let (c, _) = trace_edge_fold_curve(
        m,
        Param::Flux,
        across,
        u,
        *p,
        across_range(across),
        *range,
        1e-10,
    )
    .expect("a smooth fold");
    (c.len(), c[0].0, c[c.len() - 1].0)
}

fn curve(fold: &(Model, Vec<f64>, f64, (f64, f64)), across: Param, solver: FoldSolver) -> usize {
    let (m, u, p, range) = fold;
    let across_range = across_range(across);
    trace_fold_curve_with(
        m,
        Param::Flux,
        across,
        u,
        *p,
        across_range,
        *range,
        1e-10,
        solver,
    )
    .0
    .len()
}

/// The default map's slices (as `icefold map` computes them) and, with
/// `fold_curves`, the boundaries continued in both parameters.
fn map(model: &Model, spec: &MapSpec, fold_curves: bool) -> usize {
    let slices = map_slices(model, spec);
    let bounds = join_boundaries(&slices);
    let mut n = bounds.len();
    if fold_curves {
        n += continue_boundaries(
            model,
            spec,
            Param::Obliquity,
            Param::Flux,
            &bounds,
            30.0,
            -60.0,
            1e-10,
        )
        .len();
    }
    n
}

fn main() {
    let s = Summary::new("fold_curve");
    let mut c = Criterion::default().without_plots().configure_from_args();
    let f90 = fold_at(90, false);
    let f360 = fold_at(360, false);
    let (e90, e360) = (fold_at(90, true), fold_at(360, true));
    let mut points = [0usize; 6];
    let mut edge_points = [(0usize, 0.0, 0.0); 4];
    for (group, across, k) in [
        ("fold_curve", Param::Obliquity, 0),
        ("fold_curve_co2", Param::Co2, 3),
    ] {
        let mut g = c.benchmark_group(group);
        g.sample_size(10);
        let e = k / 3 * 2;
        g.bench_function("edges-360", |b| {
            b.iter(|| edge_points[e] = edge_curve(&e360, across))
        });
        g.bench_function("edges-90", |b| {
            b.iter(|| edge_points[e + 1] = edge_curve(&e90, across))
        });
        g.bench_function("banded-360", |b| {
            b.iter(|| points[k] = curve(&f360, across, FoldSolver::Banded))
        });
        g.bench_function("banded-90", |b| {
            b.iter(|| points[k + 1] = curve(&f90, across, FoldSolver::Banded))
        });
        g.bench_function("dense-90", |b| {
            b.iter(|| points[k + 2] = curve(&f90, across, FoldSolver::Dense))
        });
        g.finish();
    }

    let model = Scenario::load(None, &[]).unwrap().model();
    let spec = default_map_spec(&model);
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(2)
        .build()
        .unwrap();
    let mut curves = [0usize; 2];
    let mut g = c.benchmark_group("map");
    g.sample_size(10);
    for (k, on) in [(0, false), (1, true)] {
        let id = if on { "fold-curves" } else { "no-fold-curves" };
        g.bench_function(id, |b| {
            b.iter(|| curves[k] = pool.install(|| map(&model, &spec, on)))
        });
    }
    g.finish();
    c.final_summary();

    for (e, what) in [(0, "obliquity 0 to 90"), (2, "CO2 140 to 560 ppm")] {
        for (i, bands) in [(e, 360), (e + 1, 90)] {
            let (n, a, b) = edge_points[i];
            s.note(format!(
                "edge-model fold curve ({what}), {bands} bands: {n} points over {a} to {b}"
            ));
        }
    }
    s.note(format!(
        "band-model fold curve (snowball fold, obliquity 0 to 90): {} points at 360 bands, {} at 90 bands (banded), {} at 90 bands (dense)",
        points[0], points[1], points[2]
    ));
    s.note(format!(
        "fold curve in CO2 (140 to 560 ppm): {} points at 360 bands, {} at 90 bands (banded), {} at 90 bands (dense)",
        points[3], points[4], points[5]
    ));
    for (group, what) in [("fold_curve", "obliquity"), ("fold_curve_co2", "CO2")] {
        s.ratio(
            &format!("fold curve in {what}, 360 bands: edge model vs band model (banded)"),
            &[group, "edges-360"],
            &[group, "banded-360"],
        );
        s.scaling(
            &format!("fold curve in {what}, edge model, 360 bands"),
            &[group, "edges-360"],
            &[group, "edges-90"],
        );
        s.ratio(
            &format!("fold curve in {what}: banded at 360 bands vs dense at 90 bands"),
            &[group, "banded-360"],
            &[group, "dense-90"],
        );
        s.ratio(
            &format!("fold curve in {what} at 90 bands: banded vs dense"),
            &[group, "banded-90"],
            &[group, "dense-90"],
        );
        s.scaling(
            &format!("fold curve in {what}, banded, 360 bands"),
            &[group, "banded-360"],
            &[group, "banded-90"],
        );
    }
    if let Some(t90) = s.time(&["fold_curve", "dense-90"]) {
        let estimate = t90 * 64.0;
        if estimate < 60.0 {
            let t = std::time::Instant::now();
            let n = curve(&f360, Param::Obliquity, FoldSolver::Dense);
            s.note(format!(
                "fold curve, dense, 360 bands, timed once: {} ({n} points)",
                secs(t.elapsed().as_secs_f64())
            ));
        } else {
            s.note(format!(
                "fold curve, dense, 360 bands: not run (the 90-band time x 4^3 = {}, over a minute)",
                secs(estimate)
            ));
        }
    }
    s.note(format!(
        "default map (91 x 200, 90 bands, 2 threads): {} boundaries without fold curves, {} with",
        curves[0], curves[1]
    ));
    s.ratio(
        "default map: without fold curves vs with",
        &["map", "no-fold-curves"],
        &["map", "fold-curves"],
    );
    s.print();
}
