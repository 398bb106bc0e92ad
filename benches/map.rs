//! Regime-map figures (not timed tests): `cargo bench --bench map`.
//! 91 obliquity slices at 90 bands over the default flux range: wall time on
//! all threads and on one, and a brute-force grid of spin-ups (91 x 200
//! cells, each time-stepped from a warm and a cold start) in the same run.
use icefold::analysis::sweep::{MapSpec, Slice, compute_slice};
use icefold::io::scenario::Scenario;
use icefold::model::Param;
use icefold::numerics::newton::{Workspace, spin_up};
use rayon::prelude::*;
use std::time::Instant;

fn main() {
    let sc = Scenario::load(None, &[]).unwrap();
    let model = sc.model();
    let flux = model.param(Param::Flux);
    let spec = MapSpec {
        across: "orbit.obliquity".into(),
        across_from: 0.0,
        across_to: 90.0,
        count: 91,
        vary: "orbit.flux".into(),
        vary_from: 0.8 * flux,
        vary_to: 1.15 * flux,
        cells: 200,
        fold_curves: false,
    };
    let run = |threads: usize| -> (f64, Vec<Slice>) {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap();
        let t0 = Instant::now();
        let slices: Vec<Slice> = pool.install(|| {
            (0..spec.count)
                .into_par_iter()
                .map(|j| {
                    compute_slice(
                        &model,
                        &spec,
                        Param::Obliquity,
                        Param::Flux,
                        j,
                        30.0,
                        -60.0,
                        1e-10,
                    )
                })
                .collect()
        });
        (t0.elapsed().as_secs_f64(), slices)
    };
    let threads = rayon::current_num_threads();
    let (t_all, s_all) = run(threads);
    let (t_one, s_one) = run(1);
    assert_eq!(s_all, s_one, "results depend on the number of threads");
    let points: usize = s_all.iter().map(|s| s.points.len()).sum();
    println!(
        "map/slices=91/bands=90: {t_all:.2} s on {threads} threads, {t_one:.2} s on 1 thread, speed-up {:.2}x ({points} traced points)",
        t_one / t_all
    );

    // brute force: every cell from a warm and a cold start, implicit steps
    // of half a year (75 m mixed layer) until the change is below 1e-4 K/yr
    let t0 = Instant::now();
    let cells: Vec<u32> = (0..spec.count)
        .into_par_iter()
        .flat_map_iter(|j| {
            let mut m = model.clone();
            m.set_param(Param::Obliquity, spec.across_value(j));
            let mut ws = Workspace::new(&m);
            (0..spec.cells)
                .map(|c| {
                    m.set_param(Param::Flux, spec.cell_value(c));
                    let mut found = 0u32;
                    for start in [30.0, -60.0] {
                        let mut t = vec![start; m.len()];
                        if spin_up(&m, &mut t, 0.5, 1e-4, 100_000, &mut ws).is_ok() {
                            found += 1;
                        }
                    }
                    found
                })
                .collect::<Vec<_>>()
        })
        .collect();
    let t_brute = t0.elapsed().as_secs_f64();
    println!(
        "brute force 91 x 200 cells x 2 starts: {t_brute:.1} s on {threads} threads ({} spin-ups converged of {}); map is {:.0}x faster and also finds unstable states and exact folds",
        cells.iter().sum::<u32>(),
        2 * cells.len(),
        t_brute / t_all
    );
}
