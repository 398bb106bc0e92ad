//! Seasonal regime-map figures (criterion, not timed tests):
//! `cargo bench --bench seasonal_map`. The target size is 91 obliquity
//! slices at 90 bands and 72 steps per year; one such map takes minutes
//! here, more than criterion's ten samples allow, so the groups time an
//! evenly spread subset of SLICES slices of the same map (obliquity 0 to
//! 90 degrees, the default flux range, the scenario's own seasonal model)
//! on 1 and 2 threads. The summary prints the speed-up, and the time of
//! the full 91-slice map projected from the 2-thread time per slice
//! (marked as a projection: the slices differ in cost).
mod common;

use common::{Summary, secs};
use criterion::Criterion;
use icefold::analysis::sweep::{MapModel, MapSpec, Slice};
use icefold::io::scenario::Scenario;
use icefold::model::Param;
use rayon::prelude::*;

/// Slices timed per run (obliquity 0, 30, 60, 90 degrees).
const SLICES: usize = 4;

fn slices(model: &MapModel, spec: &MapSpec) -> Vec<Slice> {
    (0..spec.count)
        .into_par_iter()
        .map(|j| model.slice(spec, Param::Obliquity, Param::Flux, j, 30.0, -60.0, 1e-10))
        .collect()
}

fn main() {
    let s = Summary::new("seasonal_map");
    let mut c = Criterion::default().without_plots().configure_from_args();
    // as `map` runs: faer's dense solves sequential inside each slice
    faer::set_global_parallelism(faer::Par::Seq);
    let sc = Scenario::load(
        None,
        &[
            "seasons.enabled=true".into(),
            "seasons.steps_per_year=72".into(),
            "grid.bands=90".into(),
        ],
    )
    .unwrap();
    let sm = sc.seasonal_model().unwrap();
    let flux = sm.param(Param::Flux);
    let model = MapModel::Seasonal(sm);
    let spec = MapSpec {
        across: "orbit.obliquity".into(),
        across_from: 0.0,
        across_to: 90.0,
        count: SLICES,
        vary: "orbit.flux".into(),
        vary_from: 0.8 * flux,
        vary_to: 1.15 * flux,
        cells: 200,
        fold_curves: false,
        more: Vec::new(),
    };
    let pool = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
    };
    let mut results: Vec<Option<Vec<Slice>>> = vec![None, None];
    let mut g = c.benchmark_group("seasonal_map");
    g.sample_size(10);
    for threads in [1, 2] {
        let p = pool(threads);
        let out = &mut results[threads - 1];
        g.bench_function(format!("threads={threads}"), |b| {
            b.iter(|| *out = Some(p.install(|| slices(&model, &spec))))
        });
    }
    g.finish();
    c.final_summary();
    if let [Some(one), Some(two)] = &results[..] {
        assert_eq!(one, two, "results depend on the number of threads");
        let points: usize = two.iter().map(|s| s.points.len()).sum();
        s.note(format!(
            "{SLICES} obliquity slices (0 to 90 deg) x 200 flux cells at 90 bands, 72 steps per year: {points} traced points, identical on 1 and 2 threads"
        ));
    }
    s.ratio(
        "seasonal map on 2 threads vs 1 thread (target: >= 1.8x)",
        &["seasonal_map", "threads=2"],
        &["seasonal_map", "threads=1"],
    );
    if let Some(t) = s.time(&["seasonal_map", "threads=2"]) {
        s.note(format!(
            "projected 91-slice seasonal map on 2 threads: {} (91/{SLICES} x the time above; target: under 60 s)",
            secs(t * 91.0 / SLICES as f64)
        ));
    }
    s.print();
}
