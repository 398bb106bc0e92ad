//! Speed figures (not timed tests): `cargo bench --bench speed`.
//! Prints steady-solve times against bands, Newton versus implicit time
//! stepping to the same equilibrium, trace times against bands, and trace
//! versus the flux ramp a researcher would otherwise write.
use icefold::analysis::branches::{TraceOptions, trace_all};
use icefold::io::scenario::Scenario;
use icefold::model::{Model, Param};
use icefold::numerics::newton::{NewtonOptions, Workspace, implicit_step, newton};
use std::time::Instant;

fn model(bands: usize) -> Model {
    Scenario::load(None, &[format!("grid.bands={bands}")])
        .unwrap()
        .model()
}

fn time<T>(reps: usize, mut f: impl FnMut() -> T) -> (f64, T) {
    let t0 = Instant::now();
    let mut out = f();
    for _ in 1..reps {
        out = f();
    }
    (t0.elapsed().as_secs_f64() / reps as f64, out)
}

fn main() {
    println!("== steady solve (Newton from a warm start, default scenario)");
    let mut base = None;
    for bands in [90, 360, 1440] {
        let m = model(bands);
        let mut ws = Workspace::new(&m);
        let (secs, iters) = time(20, || {
            let mut t = vec![30.0; m.len()];
            newton(&m, &mut t, &NewtonOptions::default(), &mut ws).unwrap()
        });
        let b = *base.get_or_insert(secs);
        println!(
            "solve/bands={bands}: {:.3} ms, {iters} Newton iterations, {:.1}x the 90-band time",
            secs * 1e3,
            secs / b
        );
    }

    println!(
        "\n== Newton versus implicit time stepping to the same equilibrium (1e-6 K), 90 bands"
    );
    let m = model(90);
    let mut ws = Workspace::new(&m);
    let mut t_eq = vec![30.0; 90];
    newton(&m, &mut t_eq, &NewtonOptions::default(), &mut ws).unwrap();
    let (newton_secs, _) = time(20, || {
        let mut t = vec![30.0; 90];
        newton(&m, &mut t, &NewtonOptions::default(), &mut ws).unwrap()
    });
    let dt = 1.0 / 12.0;
    let (step_secs, steps) = time(1, || {
        let mut t = vec![30.0; 90];
        let mut k = 0;
        while t.iter().zip(&t_eq).any(|(a, b)| (a - b).abs() > 1e-6) && k < 1_000_000 {
            implicit_step(&m, &mut t, dt, &mut ws).unwrap();
            k += 1;
        }
        k
    });
    println!(
        "newton: {:.3} ms; implicit stepping (1-month steps, C = {:.2} W yr m-2 K-1): {steps} steps, {:.1} ms; ratio {:.0}x",
        newton_secs * 1e3,
        m.planet.heat_capacity[0],
        step_secs * 1e3,
        step_secs / newton_secs
    );

    println!("\n== trace of the whole hysteresis loop in orbit.flux (default range)");
    let mut base = None;
    let mut trace90 = (0.0, 0.0);
    for bands in [90, 360, 1440] {
        let m = model(bands);
        let (lo, hi) = (0.8 * 1337.6, 1.15 * 1337.6);
        let (secs, h) = time(3, || {
            trace_all(
                &m,
                Param::Flux,
                lo,
                hi,
                30.0,
                -60.0,
                &TraceOptions::default(),
                &mut |_| {},
            )
        });
        let folds: Vec<f64> = h
            .branches
            .iter()
            .flat_map(|b| b.folds.iter().map(|f| f.point.p))
            .collect();
        let b = *base.get_or_insert(secs);
        println!(
            "trace/bands={bands}: {:.1} ms ({:.1}x the 90-band time), folds at {folds:?}",
            secs * 1e3,
            secs / b
        );
        if bands == 90 {
            trace90 = (secs, folds.iter().copied().fold(f64::INFINITY, f64::min));
        }
    }

    println!(
        "\n== the ramp: flux down then up in 0.5 W m-2 steps, each time-stepped to 1e-4 K per year (90 bands)"
    );
    let mut m = model(90);
    let (lo, hi) = (0.8 * 1337.6, 1.15 * 1337.6);
    let t0 = Instant::now();
    let mut t = vec![30.0; 90];
    let mut p = hi;
    let mut ws = Workspace::new(&m);
    let mut total_steps = 0usize;
    let mut jump_at = f64::NAN;
    let mut was_ice = false;
    let dt = 0.25;
    let mut settle = |m: &Model, t: &mut Vec<f64>, ws: &mut Workspace| {
        for _ in 0..200_000 {
            implicit_step(m, t, dt, ws).unwrap();
            total_steps += 1;
            if ws.dx.iter().fold(0.0f64, |a, x| a.max(x.abs())) / dt < 1e-4 {
                break;
            }
        }
    };
    while p >= lo {
        m.set_param(Param::Flux, p);
        settle(&m, &mut t, &mut ws);
        let snow = t.iter().all(|x| *x < -10.0);
        if snow && !was_ice {
            jump_at = p;
        }
        was_ice = snow;
        p -= 0.5;
    }
    while p <= hi {
        m.set_param(Param::Flux, p);
        settle(&m, &mut t, &mut ws);
        p += 0.5;
    }
    let ramp_secs = t0.elapsed().as_secs_f64();
    println!(
        "ramp: {:.1} s, {total_steps} implicit steps (3-month steps, mixed layer {:.2} W yr m-2 K-1); snowball first seen at {jump_at} (fold located only to 0.5 W m-2)",
        ramp_secs, m.planet.heat_capacity[0]
    );
    println!(
        "trace: {:.1} ms with the snowball fold at {:.9} (to ~1e-9 W m-2); ramp/trace time ratio {:.0}x; precision ratio ~{:.0e}",
        trace90.0 * 1e3,
        trace90.1,
        ramp_secs / trace90.0,
        0.5 / 1e-9
    );
}
