//! Regime-map figures (criterion, not timed tests): `cargo bench --bench map`.
//! 91 obliquity slices at 90 bands over the default flux range on 1 and 2
//! threads (on 2 also as the `map` command drives them, handed on in
//! slice order; and on 1 thread with the sub-grid ice fraction, the formulation
//! before the ice edges became unknowns), and a brute-force grid of spin-ups (91 x 200 cells, each
//! time-stepped from a warm and a cold start) on 2 threads. A summary after
//! criterion's report prints the speed-up and the map against brute force
//! as ratios of times measured in this run.
//!
//! Every group here uses criterion's minimum of 10 samples: a map takes
//! about a second and the brute-force grid over half a minute per run, so
//! the brute-force group alone takes several minutes.
mod common;

use common::{Summary, default_map_spec, map_slice, map_slices};
use criterion::Criterion;
use icefold::analysis::branches::{TraceOptions, trace_subgrid};
use icefold::analysis::sweep::{MapSpec, Slice, reduce};
use icefold::io::scenario::Scenario;
use icefold::model::{Model, Param};
use icefold::numerics::newton::{Workspace, spin_up};
use rayon::prelude::*;

/// The map as the `map` command drives it: `threads` workers, slices handed
/// on in slice order with at most 4 per thread finished ahead
/// ([`icefold::analysis::ordered::run_ordered`]).
fn slices_ordered(model: &Model, spec: &MapSpec, threads: usize) -> Vec<Slice> {
    let idx: Vec<usize> = (0..spec.count).collect();
    let mut out = Vec::with_capacity(spec.count);
    icefold::analysis::ordered::run_ordered(
        &idx,
        threads,
        4 * threads,
        |&j| Some(map_slice(model, spec, j)),
        |s| {
            out.push(s);
            Ok::<(), ()>(())
        },
    )
    .unwrap();
    out
}

/// The same map with each slice traced by the sub-grid ice fraction (the
/// formulation before the ice edges became unknowns), on the same options
/// as `compute_slice`: the comparison the edge formulation must not lose.
fn slices_subgrid(model: &Model, spec: &MapSpec) -> Vec<Slice> {
    let opts = TraceOptions {
        tolerance: 1e-10,
        integrate_jumps: false,
        sensitivities: false,
        ..TraceOptions::default()
    };
    (0..spec.count)
        .into_par_iter()
        .map(|j| {
            let mut m = model.clone();
            let a = spec.across_value(j);
            m.set_param(Param::Obliquity, a);
            let h = trace_subgrid(
                &m,
                Param::Flux,
                spec.vary_from,
                spec.vary_to,
                30.0,
                -60.0,
                &opts,
                &mut |_| {},
            );
            reduce(spec, j, a, &h)
        })
        .collect()
}

/// Every cell from a warm and a cold start, implicit steps of half a year
/// (75 m mixed layer) until the change is below 1e-4 K/yr; returns the
/// number of spin-ups that converged.
fn brute_force(model: &Model, spec: &MapSpec) -> u32 {
    (0..spec.count)
        .into_par_iter()
        .map(|j| {
            let mut m = model.clone();
            m.set_param(Param::Obliquity, spec.across_value(j));
            let mut ws = Workspace::new(&m);
            let mut found = 0u32;
            for c in 0..spec.cells {
                m.set_param(Param::Flux, spec.cell_value(c));
                for start in [30.0, -60.0] {
                    let mut t = vec![start; m.len()];
                    if spin_up(&m, &mut t, 0.5, 1e-4, 100_000, &mut ws).is_ok() {
                        found += 1;
                    }
                }
            }
            found
        })
        .sum()
}

fn main() {
    let s = Summary::new("map");
    let mut c = Criterion::default().without_plots().configure_from_args();
    let model = Scenario::load(None, &[]).unwrap().model();
    let spec = default_map_spec(&model);
    let pool = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
    };

    let mut results: Vec<Option<Vec<Slice>>> = vec![None, None];
    let mut g = c.benchmark_group("map");
    g.sample_size(10);
    for threads in [1, 2] {
        let p = pool(threads);
        let out = &mut results[threads - 1];
        g.bench_function(format!("threads={threads}"), |b| {
            b.iter(|| *out = Some(p.install(|| map_slices(&model, &spec))))
        });
    }
    let mut ordered = None;
    g.bench_function("ordered-threads=2", |b| {
        b.iter(|| ordered = Some(slices_ordered(&model, &spec, 2)))
    });
    let p = pool(1);
    g.bench_function("subgrid-threads=1", |b| {
        b.iter(|| p.install(|| slices_subgrid(&model, &spec)))
    });
    g.finish();

    let mut converged = None;
    let mut g = c.benchmark_group("brute_force");
    g.sample_size(10);
    let p = pool(2);
    g.bench_function("threads=2", |b| {
        b.iter(|| converged = Some(p.install(|| brute_force(&model, &spec))))
    });
    g.finish();

    c.final_summary();
    if let [Some(one), Some(two)] = &results[..] {
        assert_eq!(one, two, "results depend on the number of threads");
        let points: usize = two.iter().map(|s| s.points.len()).sum();
        s.note(format!(
            "map of 91 obliquity slices x 200 flux cells at 90 bands: {points} traced points, identical on 1 and 2 threads"
        ));
    }
    if let (Some(Some(one)), Some(o)) = (results.first(), &ordered) {
        assert_eq!(one, o, "the ordered driver's slices differ");
    }
    s.ratio(
        "map on 2 threads vs 1 thread",
        &["map", "threads=2"],
        &["map", "threads=1"],
    );
    s.ratio(
        "map on 2 threads as `map` drives it (slices handed on in order) vs 1 thread",
        &["map", "ordered-threads=2"],
        &["map", "threads=1"],
    );
    s.ratio(
        "map (ice edges as unknowns) vs the sub-grid ice fraction, both on 1 thread",
        &["map", "threads=1"],
        &["map", "subgrid-threads=1"],
    );
    s.ratio(
        "map vs brute-force spin-up grid (both on 2 threads)",
        &["map", "threads=2"],
        &["brute_force", "threads=2"],
    );
    if let Some(k) = converged {
        s.note(format!(
            "  brute force: {k} of {} spin-ups converged (91 x 200 cells x 2 starts); it finds neither unstable states nor exact folds",
            2 * spec.count * spec.cells
        ));
    }
    s.print();
}
