//! Speed figures of the seasonal model (not timed tests):
//! `cargo bench --bench seasons`. Prints the time to the periodic climate
//! by shooting against spin-up to 1e-6 K year over year, and the time of a
//! seasonal trace over the default flux range.
use icefold::analysis::periodic::{
    SeasonalTraceOptions, ShootingOptions, shoot, spin_up, trace_seasonal,
};
use icefold::io::scenario::Scenario;
use icefold::model::Param;
use icefold::model::seasonal::SeasonalModel;
use icefold::numerics::newton::{NewtonOptions, Workspace, newton};
use std::time::Instant;

fn seasonal(sets: &[String]) -> SeasonalModel {
    Scenario::load(None, sets)
        .unwrap()
        .seasonal_model()
        .unwrap()
}

fn compare(label: &str, sets: &[String]) {
    let mut sm = seasonal(sets);
    let n = sm.len();
    let am = sm.annual_model();
    let mut ws = Workspace::new(&am);
    let mut eq = vec![30.0; n];
    newton(&am, &mut eq, &NewtonOptions::default(), &mut ws).unwrap();
    for (start_label, start) in [
        ("warm start (30 C)", vec![30.0; n]),
        ("annual-mean equilibrium", eq),
    ] {
        let t0 = Instant::now();
        let p = shoot(&mut sm, &start, &ShootingOptions::default()).unwrap();
        let shoot_s = t0.elapsed().as_secs_f64();
        let mut u = start.clone();
        let t0 = Instant::now();
        let years = spin_up(&mut sm, &mut u, 1e-6, 1_000_000).unwrap();
        let spin_s = t0.elapsed().as_secs_f64();
        let dist = u
            .iter()
            .zip(&p.start)
            .fold(0.0f64, |m, (a, b)| m.max((a - b).abs()));
        let mu = p.multipliers[0].0.hypot(p.multipliers[0].1);
        println!(
            "{label}, from the {start_label}: shooting {:.1} ms ({} Newton iterations, max |u - Phi(u)| = {:.1e} K), spin-up {:.1} ms ({years} years, then {:.1e} K from the periodic state); shooting {:.1}x faster; largest Floquet multiplier {mu:.4}",
            shoot_s * 1e3,
            p.iterations,
            p.residual,
            spin_s * 1e3,
            dist,
            spin_s / shoot_s
        );
    }
}

fn main() {
    println!(
        "== periodic climate: shooting versus spin-up to 1e-6 K year over year (90 bands, 360 steps per year)"
    );
    compare("75 m mixed layer", &[]);
    compare(
        "200 m mixed layer",
        &["seasons.mixed_layer_depth=200".to_string()],
    );
    let mut sm = seasonal(&[]);
    let n = sm.len();
    let mut t = vec![10.0; n];
    let t0 = Instant::now();
    for _ in 0..20 {
        sm.year(&mut t).unwrap();
    }
    let year = t0.elapsed().as_secs_f64() / 20.0;
    let mut m = vec![0.0; n * n];
    let t0 = Instant::now();
    for _ in 0..5 {
        sm.year_with_jacobian(&mut t, &mut m, None).unwrap();
    }
    let jyear = t0.elapsed().as_secs_f64() / 5.0;
    println!(
        "one year: {:.2} ms; one year with the exact {n}x{n} annual-map Jacobian: {:.2} ms",
        year * 1e3,
        jyear * 1e3
    );

    println!("\n== seasonal trace of the default scenario in orbit.flux (0.8 to 1.15 of S0)");
    for steps in [72usize, 360] {
        let sm = seasonal(&[format!("seasons.steps_per_year={steps}")]);
        let flux = sm.param(Param::Flux);
        let t0 = Instant::now();
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
        let secs = t0.elapsed().as_secs_f64();
        let points: usize = h.branches.iter().map(|b| b.points.len()).sum();
        let folds: Vec<String> = h
            .branches
            .iter()
            .flat_map(|b| b.folds.iter())
            .map(|f| format!("{:.3}", f.point.p))
            .collect();
        println!(
            "trace/steps={steps}: {:.2} s, {} branches, {points} points, folds at S0 = [{}] W m-2",
            secs,
            h.branches.len(),
            folds.join(", ")
        );
    }
}
