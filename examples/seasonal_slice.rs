//! One slice of the seasonal map of `benches/seasonal_map.rs`, timed, for
//! profiling (`perf record`, `valgrind --tool=callgrind`) and for
//! comparing the outputs of two builds:
//! `cargo run --release --example seasonal_slice -- [OBLIQUITY [BANDS
//! [STEPS]]]` (defaults 30 deg, 90 bands, 72 steps per year) prints the
//! wall and CPU time of the slice, its traced points and folds; with
//! `ICEFOLD_SLICE_POINTS=1` every point and fold in full (`{:?}`, floats
//! at their shortest round-trip form, so `cmp` of two outputs compares
//! them bit for bit).
use icefold::analysis::sweep::{MapModel, MapSpec};
use icefold::io::scenario::Scenario;
use icefold::model::Param;

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let arg = |i: usize, d: f64| args.get(i).and_then(|s| s.parse().ok()).unwrap_or(d);
    let (obliquity, bands, steps) = (arg(0, 30.0), arg(1, 90.0), arg(2, 72.0));
    // as `map` runs: faer's dense solves sequential inside the slice
    faer::set_global_parallelism(faer::Par::Seq);
    let sc = Scenario::load(
        None,
        &[
            "seasons.enabled=true".into(),
            format!("seasons.steps_per_year={steps}"),
            format!("grid.bands={bands}"),
        ],
    )
    .expect("scenario");
    let sm = sc.seasonal_model().expect("seasonal model");
    let flux = sm.param(Param::Flux);
    let model = MapModel::Seasonal(sm);
    // the benchmark's map, reduced to the one slice at `obliquity`
    let spec = MapSpec {
        across: "orbit.obliquity".into(),
        across_from: obliquity,
        across_to: obliquity + 1.0,
        count: 2,
        vary: "orbit.flux".into(),
        vary_from: 0.8 * flux,
        vary_to: 1.15 * flux,
        cells: 200,
        fold_curves: false,
        more: Vec::new(),
    };
    let (t, cpu0) = (std::time::Instant::now(), cpu_seconds());
    let s = model.slice(&spec, Param::Obliquity, Param::Flux, 0, 30.0, -60.0, 1e-10);
    let (secs, cpu) = (t.elapsed().as_secs_f64(), cpu_seconds() - cpu0);
    println!(
        "obliquity {obliquity} deg, {bands} bands, {steps} steps: {secs:.3} s ({cpu:.2} s CPU), {} points, {} folds",
        s.points.len(),
        s.folds.len()
    );
    if std::env::var_os("ICEFOLD_SLICE_POINTS").is_some() {
        for q in &s.points {
            println!("  point {q:?}");
        }
        for f in &s.folds {
            println!("  fold {f:?}");
        }
    }
    for n in &s.notes {
        println!("  note: {n}");
    }
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
