//! Habitability diagnostics: the habitable fraction of a profile against
//! closed forms, the limiting planets, the bounds, the seasonal identities
//! and limits, and the command-line outputs.
mod common;
use common::{icefold, temp_dir};
use icefold::analysis::branches::{TraceOptions, trace_all};
use icefold::analysis::periodic::{ShootingOptions, cycle, shoot};
use icefold::io::scenario::Scenario;
use icefold::model::climate::diagnose;
use icefold::model::{Model, Param};
use icefold::numerics::newton::{NewtonOptions, Workspace, newton};

fn model(sets: &[&str]) -> Model {
    let sets: Vec<String> = sets.iter().map(|s| s.to_string()).collect();
    Scenario::load(None, &sets).unwrap().model()
}

/// The profile f(x) sampled at the band centres.
fn sampled(m: &Model, f: impl Fn(f64) -> f64) -> Vec<f64> {
    m.grid.centres.iter().map(|&x| f(x)).collect()
}

/// A profile linear in x = sin(latitude) is its own piecewise-linear
/// interpolant, so the habitable fraction is exactly the measure of the x
/// where 0 <= T <= 100 over the domain length, solved by hand: for
/// T = 40 + 80 x, x in [-1/2, 3/4], 1.25 / 2 = 0.625 pole to pole (area is
/// uniform in sin(latitude): Archimedes' hat-box theorem, a fact of
/// spherical geometry; from memory). On a hemisphere, x in [0, 3/4]: 0.75.
#[test]
fn linear_profile_is_exact_at_every_resolution() {
    for spacing in ["sine", "latitude"] {
        for bands in [4, 7, 90, 91] {
            let sp = format!("grid.spacing=\"{spacing}\"");
            let b = format!("grid.bands={bands}");
            let m = model(&[&sp, &b]);
            let h = m.habitable_fraction(&sampled(&m, |x| 40.0 + 80.0 * x));
            assert!((h - 0.625).abs() < 1e-13, "{spacing} {bands}: {h}");
            let m = model(&[&sp, &b, "grid.symmetric=true"]);
            let h = m.habitable_fraction(&sampled(&m, |x| 40.0 + 80.0 * x));
            assert!((h - 0.75).abs() < 1e-13, "{spacing} {bands} symmetric: {h}");
        }
    }
}

/// North's (1975) ice-free solution for the Legendre insolation has the
/// form T(x) = T0 + T2 P2(x), P2 = (3x² - 1)/2. For T0 = 120, T2 = -180
/// (hot tropics above 100 C, a frozen pole; invented numbers) the range
/// 0 <= T <= 100 is 1/9 <= P2 <= 2/3, i.e. sqrt(11/27) <= x <= sqrt(7/9),
/// solved by hand, so H = sqrt(7/9) - sqrt(11/27) on a hemisphere (area
/// uniform in x). The interpolant between band centres of spacing h misses
/// the profile by at most |T''| h²/8 and moves each crossing x_c by at most
/// that over |T'(x_c)| = |T''| x_c, so |H_n - H| <= Σ_c h²/(8 x_c) to
/// leading order (interpolation error bound, common practice, no source):
/// checked at every resolution, with the fitted order of convergence near 2
/// (the error oscillates with where the crossings fall within a band).
#[test]
fn quadratic_profile_converges_at_second_order() {
    let exact = (7.0f64 / 9.0).sqrt() - (11.0f64 / 27.0).sqrt();
    let crossings = [(7.0f64 / 9.0).sqrt(), (11.0f64 / 27.0).sqrt()];
    let p2 = |x: f64| 1.5 * x * x - 0.5;
    let mut logs = Vec::new();
    for bands in [10, 20, 40, 80, 160, 320, 640] {
        let b = format!("grid.bands={bands}");
        let m = model(&[&b, "grid.symmetric=true", "grid.spacing=\"sine\""]);
        let h = m.habitable_fraction(&sampled(&m, |x| 120.0 - 180.0 * p2(x)));
        let dx = 1.0 / bands as f64;
        let bound: f64 = crossings.iter().map(|xc| dx * dx / (8.0 * xc)).sum();
        let err = (h - exact).abs();
        assert!(err <= bound, "{bands} bands: error {err:e} above {bound:e}");
        assert!(err > 0.0, "{bands} bands: an interpolant is not exact");
        logs.push(((bands as f64).ln(), err.ln()));
        // the full grid (pole to pole, mirrored profile) gives the same
        // fraction: each hemisphere holds half of the area
        let b2 = format!("grid.bands={}", 2 * bands + 1);
        let full = model(&[&b2, "grid.spacing=\"sine\""]);
        let hf = full.habitable_fraction(&sampled(&full, |x| 120.0 - 180.0 * p2(x)));
        assert!((hf - exact).abs() <= 2.0 * bound, "{bands}: full {hf}");
    }
    // least-squares slope of ln(error) against ln(bands)
    let k = logs.len() as f64;
    let (mx, my) = (
        logs.iter().map(|p| p.0).sum::<f64>() / k,
        logs.iter().map(|p| p.1).sum::<f64>() / k,
    );
    let slope = logs.iter().map(|p| (p.0 - mx) * (p.1 - my)).sum::<f64>()
        / logs.iter().map(|p| (p.0 - mx).powi(2)).sum::<f64>();
    assert!((-2.5..=-1.7).contains(&slope), "order {}", -slope);
}

/// The band fractions add up to the planet's (area is additive; common
/// practice, no source), and each lies in [0, 1].
#[test]
fn band_fractions_sum_to_the_planet() {
    let m = model(&["grid.spacing=\"latitude\""]);
    let t = sampled(&m, |x| 120.0 - 180.0 * (1.5 * x * x - 0.5) + 7.0 * x);
    let mut h = vec![0.0; m.len()];
    m.habitable_band_fractions(&t, &mut h);
    assert!(h.iter().all(|v| (0.0..=1.0).contains(v)));
    assert!(
        h.iter().any(|v| *v > 0.0 && *v < 1.0),
        "some band is crossed"
    );
    let sum: f64 = m.grid.weights.iter().zip(&h).map(|(w, v)| w * v).sum();
    assert!((sum - m.habitable_fraction(&t)).abs() < 1e-14);
}

/// The limiting planets (the definition; common practice, no source): a
/// planet hotter than 100 C everywhere and a snowball have none of their
/// surface habitable, a temperate ice-free planet all of it. The premises
/// are checked on the equilibria themselves.
#[test]
fn limiting_planets() {
    let opts = NewtonOptions::default();
    let solve = |sets: &[&str], start: f64| {
        let m = model(sets);
        let mut ws = Workspace::new(&m);
        let mut t = vec![start; m.len()];
        newton(&m, &mut t, &opts, &mut ws).unwrap();
        let d = diagnose(&m, &t);
        (t, d)
    };
    // hot: four times the flux
    let (t, d) = solve(&["orbit.flux=5444"], 30.0);
    assert!(t.iter().all(|x| *x > 100.0), "{t:?}");
    assert_eq!(d.habitable_fraction, 0.0);
    // snowball from the cold start
    let (t, d) = solve(&[], -60.0);
    assert!(t.iter().all(|x| *x < 0.0));
    assert_eq!(d.state.label(), "snowball");
    assert_eq!(d.habitable_fraction, 0.0);
    // temperate and ice-free: strong transport evens the profile out
    let (t, d) = solve(&["orbit.flux=1500", "transport.diffusivity=50"], 30.0);
    assert!(t.iter().all(|x| (0.0..=100.0).contains(x)), "{t:?}");
    assert_eq!(d.state.label(), "ice-free");
    assert_eq!(d.habitable_fraction, 1.0);
}

/// Widening the range can only add area and narrowing it only remove
/// area (the definition; common practice, no source): the present-day
/// climate gains habitable area with min_c = -20 and loses it with
/// max_c = 20, through `--set`.
#[test]
fn bounds_move_the_fraction_the_expected_way() {
    let warm = |sets: &[&str]| {
        let m = model(sets);
        let mut ws = Workspace::new(&m);
        let mut t = vec![30.0; m.len()];
        newton(&m, &mut t, &NewtonOptions::default(), &mut ws).unwrap();
        diagnose(&m, &t).habitable_fraction
    };
    let base = warm(&[]);
    let colder = warm(&["habitability.min_c=-20"]);
    let narrower = warm(&["habitability.max_c=20"]);
    assert!(base > 0.5 && base < 1.0, "{base}");
    assert!(colder > base + 0.01, "{colder} vs {base}");
    assert!(narrower < base - 0.01, "{narrower} vs {base}");
}

/// The fraction moves continuously with the climate, not a band at a
/// time: for the quadratic profile above, warming it uniformly by T0 moves
/// each crossing by dx_c/dT0 = -1/(T2 P2'(x_c)) = 1/(540 x_c), so
/// dH/dT0 = (1/540)(1/x_0C - 1/x_100C) in closed form (by hand); a
/// 0.01 K difference quotient at 640 bands matches it to 1%.
#[test]
fn fraction_moves_continuously_with_the_profile() {
    let (x0, x100) = ((7.0f64 / 9.0).sqrt(), (11.0f64 / 27.0).sqrt());
    let exact = (1.0 / x0 - 1.0 / x100) / 540.0;
    let m = model(&[
        "grid.bands=640",
        "grid.symmetric=true",
        "grid.spacing=\"sine\"",
    ]);
    let h = |t0: f64| m.habitable_fraction(&sampled(&m, |x| t0 - 180.0 * (1.5 * x * x - 0.5)));
    let d = (h(120.005) - h(119.995)) / 0.01;
    assert!((d / exact - 1.0).abs() < 0.01, "{d:e} vs {exact:e}");
}

/// The points traced with the ice edges as unknowns state the habitable
/// fraction of the very profile they report on the scenario's bands (our
/// requirement: a reader can recompute it from the reported temperatures).
#[test]
fn traced_points_report_the_fraction_of_their_profile() {
    let m = model(&[]);
    let s0 = m.planet.orbit.flux;
    let h = trace_all(
        &m,
        Param::Flux,
        0.8 * s0,
        1.15 * s0,
        30.0,
        -60.0,
        &TraceOptions::default(),
        &mut |_| {},
    );
    let mut points = 0;
    for b in &h.branches {
        for q in b.points.iter().chain(b.folds.iter().map(|f| &f.point)) {
            let d = &q.diagnostics;
            assert!((0.0..=1.0).contains(&d.habitable_fraction));
            let mut at = m.clone();
            at.set_param(Param::Flux, q.p);
            assert_eq!(d.habitable_fraction, at.habitable_fraction(&q.temperature));
            points += 1;
        }
    }
    assert!(points > 20);
    assert!(h.branches.iter().any(|b| {
        b.points
            .iter()
            .any(|q| q.diagnostics.habitable_fraction > 0.5)
    }));
}

/// Seasonal climates. The year-mean habitable fraction equals the
/// area-weighted sum of each band's fraction of the year (area and time
/// averages commute; common practice, no source); a band that is wholly
/// in or out of the range at every sample is habitable for the fraction
/// of samples in which it lies in the range (the temporal habitability of
/// Spiegel, Menou & Scharf 2008, ApJ 681, 1609); and as the mixed layer
/// deepens the seasonal range shrinks towards 0 (amplitude ~ 1/C) and the
/// year-mean fraction tends to that of the annual-mean model's equilibrium
/// (the annual mean of the daily insolation is the annual-mean insolation,
/// Berger 1978; the limit itself is common practice, no source).
#[test]
fn seasonal_identities_and_the_deep_mixed_layer_limit() {
    let mut ranges = Vec::new();
    let mut gaps = Vec::new();
    for depth in [50.0, 500.0, 5000.0] {
        let d = format!("seasons.mixed_layer_depth={depth}");
        let sets = vec![d, "seasons.steps_per_year=72".to_string()];
        let sc = Scenario::load(None, &sets).unwrap();
        let mut sm = sc.seasonal_model().unwrap();
        let am = sm.annual_model();
        let mut ws = Workspace::new(&am);
        let mut eq = vec![30.0; am.len()];
        newton(&am, &mut eq, &NewtonOptions::default(), &mut ws).unwrap();
        let p = shoot(&mut sm, &eq, &ShootingOptions::default()).unwrap();
        let c = cycle(&mut sm, &p.start).unwrap();
        let w = &am.grid.weights;
        let weighted: f64 = w
            .iter()
            .zip(&c.habitable_year_fraction)
            .map(|(a, b)| a * b)
            .sum();
        assert!(
            (weighted - c.habitable_year_mean).abs() < 1e-12,
            "{depth} m"
        );
        let mean: f64 =
            c.habitable_fraction.iter().sum::<f64>() / c.habitable_fraction.len() as f64;
        assert!((mean - c.habitable_year_mean).abs() < 1e-15);
        // bands never crossed by the range: the fraction of samples
        let mut share = vec![0.0; am.len()];
        let mut crossed = vec![false; am.len()];
        for s in &c.states {
            am.habitable_band_fractions(s, &mut share);
            for (i, v) in share.iter().enumerate() {
                crossed[i] |= *v > 0.0 && *v < 1.0;
            }
        }
        for i in (0..am.len()).filter(|&i| !crossed[i]) {
            let inside = c
                .states
                .iter()
                .filter(|s| (0.0..=100.0).contains(&s[i]))
                .count() as f64;
            let expected = inside / c.states.len() as f64;
            assert!(
                (c.habitable_year_fraction[i] - expected).abs() < 1e-12,
                "band {i}"
            );
        }
        ranges.push(c.amplitude.iter().fold(0.0f64, |m, a| m.max(*a)));
        gaps.push((c.habitable_year_mean - am.habitable_fraction(&eq)).abs());
    }
    assert!(
        ranges[1] < ranges[0] / 5.0 && ranges[2] < ranges[1] / 5.0,
        "{ranges:?}"
    );
    assert!(ranges[2] < 0.1, "{ranges:?}");
    assert!(gaps[2] < 1e-4 && gaps[2] < gaps[0], "{gaps:?}");
}

/// Bad bounds (min >= max) exit 2 with one line naming both fields and
/// writing nothing (our rule for bad input).
#[test]
fn bad_bounds_exit_2_naming_both_fields() {
    let dir = temp_dir("hab-bad");
    for sets in [
        ["habitability.min_c=40", "habitability.max_c=40"],
        ["habitability.min_c=60", "habitability.max_c=10"],
    ] {
        let (code, _, err) = icefold(&[
            "solve",
            "--set",
            sets[0],
            "--set",
            sets[1],
            "--out",
            dir.to_str().unwrap(),
        ]);
        assert_eq!(code, 2, "{err}");
        assert_eq!(err.trim().lines().count(), 1, "{err}");
        assert!(
            err.contains("habitability.min_c") && err.contains("habitability.max_c"),
            "{err}"
        );
        assert!(!dir.exists());
    }
    let (code, _, err) = icefold(&["check", "--set", "habitability.max_c=600"]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("habitability.max_c") && err.contains("-150 to 500"),
        "{err}"
    );
}

fn column(csv: &str, name: &str) -> Vec<f64> {
    let mut lines = csv.lines();
    let head: Vec<&str> = lines.next().unwrap().split(',').collect();
    let j = head
        .iter()
        .position(|h| *h == name)
        .unwrap_or_else(|| panic!("no column {name}"));
    lines
        .map(|l| l.split(',').nth(j).unwrap().parse().unwrap())
        .collect()
}

/// End to end: `solve`, `trace` and `periodic` write the new columns and
/// fields, each in [0, 1] (the definition; common practice, no source);
/// the solve summary equals the area-weighted band fractions of
/// profile.csv, and the periodic summary's year mean those of
/// annual_mean.csv (additivity of area).
#[test]
fn commands_write_the_habitability_columns() {
    let dir = temp_dir("hab-cli");
    let out = |c: &str| dir.join(c).to_str().unwrap().to_string();
    let (code, _, err) = icefold(&["solve", "--quiet", "--out", &out("solve")]);
    assert_eq!(code, 0, "{err}");
    let profile = std::fs::read_to_string(dir.join("solve/profile.csv")).unwrap();
    let bands = column(&profile, "habitable_fraction");
    let eq = column(&profile, "equilibrium");
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("solve/summary.json")).unwrap())
            .unwrap();
    let m = model(&[]);
    let n = m.len();
    for (k, e) in summary["equilibria"].as_array().unwrap().iter().enumerate() {
        let h = e["habitable_fraction"].as_f64().unwrap();
        assert!((0.0..=1.0).contains(&h));
        assert!(eq[k * n..(k + 1) * n].iter().all(|v| *v == (k + 1) as f64));
        let sum: f64 = m
            .grid
            .weights
            .iter()
            .zip(&bands[k * n..(k + 1) * n])
            .map(|(w, v)| w * v)
            .sum();
        assert!((sum - h).abs() < 1e-12, "{sum} vs {h}");
    }
    let (code, _, err) = icefold(&["trace", "--quiet", "--out", &out("trace")]);
    assert_eq!(code, 0, "{err}");
    for f in ["branches.csv", "folds.csv"] {
        let text = std::fs::read_to_string(dir.join("trace").join(f)).unwrap();
        let h = column(&text, "habitable_fraction");
        assert!(
            !h.is_empty() && h.iter().all(|v| (0.0..=1.0).contains(v)),
            "{f}"
        );
        if f == "branches.csv" {
            assert!(h.iter().any(|v| *v > 0.5) && h.contains(&0.0), "{f}");
        }
    }
    let (code, _, err) = icefold(&[
        "periodic",
        "--set",
        "seasons.steps_per_year=24",
        "--set",
        "grid.bands=30",
        "--quiet",
        "--out",
        &out("periodic"),
    ]);
    assert_eq!(code, 0, "{err}");
    let p = dir.join("periodic");
    let annual = std::fs::read_to_string(p.join("annual_mean.csv")).unwrap();
    let year = column(&annual, "habitable_year_fraction");
    let range = column(&annual, "seasonal_amplitude_k");
    assert!(year.iter().all(|v| (0.0..=1.0).contains(v)));
    assert!(range.iter().all(|v| *v >= 0.0) && range.iter().any(|v| *v > 0.1));
    let daily = column(
        &std::fs::read_to_string(p.join("ice_edges.csv")).unwrap(),
        "habitable_fraction",
    );
    assert!(daily.iter().all(|v| (0.0..=1.0).contains(v)));
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(p.join("summary.json")).unwrap()).unwrap();
    let m = model(&["grid.bands=30"]);
    let n = m.len();
    for (k, c) in summary["periodic_climates"]
        .as_array()
        .unwrap()
        .iter()
        .enumerate()
    {
        let h = c["year_mean_habitable_fraction"].as_f64().unwrap();
        let sum: f64 = m
            .grid
            .weights
            .iter()
            .zip(&year[k * n..(k + 1) * n])
            .map(|(w, v)| w * v)
            .sum();
        assert!((sum - h).abs() < 1e-12, "{sum} vs {h}");
        let days = &daily[k * 24..(k + 1) * 24];
        assert!((days.iter().sum::<f64>() / 24.0 - h).abs() < 1e-12);
    }
    let _ = std::fs::remove_dir_all(&dir);
}
