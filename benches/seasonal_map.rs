//! Seasonal regime-map figures (criterion, not timed tests):
//! `cargo bench --bench seasonal_map`. The target size is 91 obliquity
//! slices at 90 bands and 72 steps per year; one such map takes minutes
//! here, more than criterion's ten samples allow, so the groups time an
//! evenly spread subset of SLICES slices of the same map (obliquity 0 to
//! 90 degrees, the default flux range, the scenario's own seasonal model)
//! on 1 and 2 threads. The summary prints the 1- and 2-thread times side
//! by side with the speed-up, the time of the full 91-slice map projected
//! from them (marked as a projection: the slices differ in cost), and how
//! busy the machine was: the load average at the start and the end, and
//! the CPU time each group got per second of wall time (about 2 for the
//! 2-thread group on two free cores; less when other work shares them,
//! and then the speed-up measures that share, not the scaling).
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
    // the default map's grid (obliquity 0 to 90, 200 cells over 0.8 to
    // 1.15 times the flux), reduced to SLICES slices
    let spec = MapSpec {
        count: SLICES,
        ..common::default_map_spec(sm.model())
    };
    let model = MapModel::Seasonal(sm);
    let pool = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
    };
    let load_start = load_average();
    let mut results: Vec<Option<Vec<Slice>>> = vec![None, None];
    let mut cores_used = [f64::NAN; 2];
    let mut g = c.benchmark_group("seasonal_map");
    g.sample_size(10);
    for threads in [1, 2] {
        let p = pool(threads);
        let out = &mut results[threads - 1];
        let (wall, cpu) = (std::time::Instant::now(), cpu_seconds());
        g.bench_function(format!("threads={threads}"), |b| {
            b.iter(|| *out = Some(p.install(|| slices(&model, &spec))))
        });
        cores_used[threads - 1] = (cpu_seconds() - cpu) / wall.elapsed().as_secs_f64();
    }
    g.finish();
    let load_end = load_average();
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
    let (one, two) = (
        s.time(&["seasonal_map", "threads=1"]),
        s.time(&["seasonal_map", "threads=2"]),
    );
    if let (Some(t1), Some(t2)) = (one, two) {
        s.note(format!(
            "{SLICES} slices: 1 thread {} ({} per slice) | 2 threads {} ({} per slice) | speed-up {:.2}x (target: >= 1.8x)",
            secs(t1),
            secs(t1 / SLICES as f64),
            secs(t2),
            secs(t2 / SLICES as f64),
            t1 / t2
        ));
        s.note(format!(
            "projected 91-slice seasonal map: 1 thread {}, 2 threads {} (91/{SLICES} x the times above; target on 2 threads: under 60 s)",
            secs(t1 * 91.0 / SLICES as f64),
            secs(t2 * 91.0 / SLICES as f64)
        ));
    } else {
        s.note("1- and 2-thread times: not both measured in this run");
    }
    s.note(format!(
        "machine: {} CPUs, load average (1 min) {} at the start, {} at the end; CPU time per wall second: {:.2} in the 1-thread group, {:.2} in the 2-thread group",
        std::thread::available_parallelism().map_or(0, |n| n.get()),
        load_start,
        load_end,
        cores_used[0],
        cores_used[1]
    ));
    s.print();
}

/// The 1-minute load average (Linux `/proc/loadavg`), or "unknown".
fn load_average() -> String {
    std::fs::read_to_string("/proc/loadavg")
        .ok()
        .and_then(|l| l.split_whitespace().next().map(str::to_owned))
        .unwrap_or_else(|| "unknown".into())
}

/// User plus system CPU time of this process so far, s (Linux
/// `/proc/self/stat`, fields 14 and 15 in ticks of 1/100 s; NaN elsewhere).
fn cpu_seconds() -> f64 {
    let Ok(stat) = std::fs::read_to_string("/proc/self/stat") else {
        return f64::NAN;
    };
    // the fields after the command name, which is in parentheses
    let rest = stat.rsplit_once(')').map_or("", |(_, r)| r);
    let f: Vec<&str> = rest.split_whitespace().collect();
    let tick = |i: usize| {
        f.get(i)
            .and_then(|s| s.parse::<f64>().ok())
            .unwrap_or(f64::NAN)
    };
    (tick(11) + tick(12)) / 100.0
}
