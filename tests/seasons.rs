//! Seasonal model checks: time stepping, periodic climates by shooting,
//! Floquet stability, continuation and the command-line pieces, each
//! against something outside the project (source beside each check).
mod common;
use common::temp_dir;
use icefold::analysis::branches::{TraceOptions, trace_all};
use icefold::analysis::periodic::*;
use icefold::cli::seasons::{cmd_periodic, cmd_run};
use icefold::cli::{Args, CliError};
use icefold::io::scenario::Scenario;
use icefold::model::Param;
use icefold::model::climate::standard_starts;
use icefold::model::seasonal::*;
use icefold::numerics::newton::{NewtonOptions, Workspace, newton};
use icefold::physics::insolation::Insolation;
use std::path::Path;

fn seasonal(sets: &[&str]) -> SeasonalModel {
    let sets: Vec<String> = sets.iter().map(|s| s.to_string()).collect();
    Scenario::load(None, &sets)
        .unwrap()
        .seasonal_model()
        .unwrap()
}

fn max_diff(a: &[f64], b: &[f64]) -> f64 {
    a.iter()
        .zip(b)
        .fold(0.0f64, |m, (x, y)| m.max((x - y).abs()))
}

/// The annual-mean equilibrium of the same planet from the warm start.
fn annual_equilibrium(sm: &SeasonalModel) -> Vec<f64> {
    let am = sm.annual_model();
    let mut ws = Workspace::new(&am);
    let mut t = vec![30.0; am.len()];
    newton(&am, &mut t, &NewtonOptions::default(), &mut ws).unwrap();
    t
}

/// Index of the band whose centre is nearest to `lat` degrees.
fn band_at(sm: &SeasonalModel, lat: f64) -> usize {
    let l = sm.model().grid.latitudes_deg();
    (0..l.len())
        .min_by(|&a, &b| (l[a] - lat).abs().total_cmp(&(l[b] - lat).abs()))
        .unwrap()
}

/// With a very deep mixed layer the seasonal cycle vanishes (amplitude ~ 1/C)
/// and the periodic climate's annual mean tends to the equilibrium of the
/// annual-mean model with the same physics, because the annual mean of the
/// daily insolation is the annual-mean insolation (Berger 1978; the limit
/// itself is common practice, no source). The error falls faster than 1/h.
#[test]
fn deep_mixed_layer_recovers_the_annual_mean_model() {
    let mut errors = Vec::new();
    for depth in [50.0, 500.0, 5000.0] {
        let mut sm = seasonal(&[&format!("seasons.mixed_layer_depth={depth}")]);
        let eq = annual_equilibrium(&sm);
        let p = shoot(&mut sm, &eq, &ShootingOptions::default()).unwrap();
        assert_eq!(p.unstable_modes, 0);
        let c = cycle(&mut sm, &p.start).unwrap();
        errors.push(max_diff(&c.annual_mean, &eq));
    }
    assert!(errors[2] < 1e-3, "{errors:?}");
    assert!(
        errors[1] < errors[0] / 10.0 && errors[2] < errors[1] / 10.0,
        "{errors:?}"
    );
}

/// Over one period the net top-of-atmosphere flux averages to zero (energy
/// conservation over a cycle; common practice, no source), and a long
/// spin-up reaches the same periodic climate as shooting.
#[test]
fn periodic_state_conserves_energy_and_matches_spin_up() {
    let mut sm = seasonal(&[]);
    let n = sm.len();
    let p = shoot(&mut sm, &vec![30.0; n], &ShootingOptions::default()).unwrap();
    assert!(p.residual < 1e-10);
    let c = cycle(&mut sm, &p.start).unwrap();
    assert!(c.toa_annual_mean.abs() < 1e-8, "{:e}", c.toa_annual_mean);
    // the cycle is not trivially balanced at every instant
    let swing = c.toa_net.iter().fold(0.0f64, |m, x| m.max(x.abs()));
    assert!(swing > 1.0, "{swing}");
    let mut u = vec![30.0; n];
    spin_up(&mut sm, &mut u, 1e-10, 5000).unwrap();
    assert!(
        max_diff(&u, &p.start) < 1e-6,
        "{:e}",
        max_diff(&u, &p.start)
    );
}

/// Per-step insolation tables. At the June solstice with present-day
/// obliquity the daily mean at the North Pole, S0 (a/r)² sin ε (polar day,
/// h0 = π), exceeds the equator's, S0 (a/r)² cos ε / π (h0 = π/2) (Berger
/// 1978, J. Atmos. Sci. 35, 2362). The mean of the step averages over the
/// year equals the annual mean computed by longitude quadrature (Kepler's
/// second law).
#[test]
fn insolation_tables_follow_the_orbit() {
    let sm = seasonal(&[]);
    let m = sm.model();
    let o = m.planet.orbit;
    let steps = sm.steps_per_year();
    let pts = m.insolation_sample_points();
    let h_pole = pts.len() - 1; // last half-band; its sample 2 is x = 1
    let h_eq = pts.iter().position(|p| p[0] == 0.0).unwrap(); // starts at x = 0
    // year fraction of the solstice (solar longitude 90 deg), by bisection
    let (mut a, mut b) = (0.1, 0.4);
    for _ in 0..60 {
        let mid = 0.5 * (a + b);
        if o.position(mid).longitude < std::f64::consts::FRAC_PI_2 {
            a = mid
        } else {
            b = mid
        }
    }
    let k = (a * steps as f64).floor() as usize;
    let r2 = o.position(a).distance_factor;
    let eps = o.obliquity;
    let pole = sm.table(k)[h_pole][2];
    let eq = sm.table(k)[h_eq][0];
    assert!((pole - r2 * eps.sin()).abs() < 1e-4 * pole, "{pole}");
    assert!(
        (eq - r2 * eps.cos() / std::f64::consts::PI).abs() < 1e-4 * eq,
        "{eq}"
    );
    assert!(pole > 1.3 * eq);
    // annual mean of the tables against the longitude quadrature
    let mut unit = o;
    unit.flux = 1.0;
    let ins = Insolation::new(unit, m.planet.insolation);
    for h in [0, h_eq, pts.len() / 3, h_pole] {
        for j in 0..3 {
            let mean: f64 = (0..steps).map(|k| sm.table(k)[h][j]).sum::<f64>() / steps as f64;
            let exact = ins.annual_mean(pts[h][j]);
            assert!(
                (mean - exact).abs() < 1e-6 * exact.max(1e-3),
                "{h} {j}: {mean} vs {exact}"
            );
        }
    }
}

/// The seasonal amplitude grows as the mixed layer shrinks (amplitude ~ 1/C
/// for a slab) and is larger at high latitudes than at the equator for
/// present-day obliquity (common practice, no source).
#[test]
fn seasonal_amplitude_grows_with_shallower_layers_and_latitude() {
    let mut last: Option<(f64, f64)> = None;
    for depth in [150.0, 50.0, 15.0] {
        let mut sm = seasonal(&[&format!("seasons.mixed_layer_depth={depth}")]);
        let eq = annual_equilibrium(&sm);
        let p = shoot(&mut sm, &eq, &ShootingOptions::default()).unwrap();
        let c = cycle(&mut sm, &p.start).unwrap();
        let (i_eq, i_hi) = (band_at(&sm, 0.5), band_at(&sm, 60.0));
        let (a_eq, a_hi) = (c.amplitude[i_eq], c.amplitude[i_hi]);
        assert!(a_hi > 3.0 * a_eq, "depth {depth}: {a_hi} vs {a_eq}");
        if let Some((l_eq, l_hi)) = last {
            assert!(a_eq > l_eq && a_hi > 1.5 * l_hi, "depth {depth}");
        }
        last = Some((a_eq, a_hi));
    }
}

/// The exact derivative of the annual map (product of the step
/// derivatives) against central differences of the map (common practice,
/// no source), for diffusive and relaxation transport (the rank-one path),
/// with the smooth albedo law so the map is differentiable everywhere; and
/// the flux sensitivity ∂Φ/∂S0 likewise.
#[test]
fn annual_map_jacobian_matches_finite_differences() {
    for transport in ["diffusive", "relaxation"] {
        let mut sm = seasonal(&[
            "grid.bands=24",
            "seasons.steps_per_year=48",
            "seasons.mixed_layer_depth=20",
            "albedo.kind=\"smooth\"",
            &format!("transport.kind=\"{transport}\""),
        ]);
        let n = sm.len();
        // a state with ice, an edge and a temperature gradient
        let u: Vec<f64> = sm
            .model()
            .grid
            .centres
            .iter()
            .map(|x| 20.0 - 45.0 * x * x + 3.0 * x)
            .collect();
        let mut m = vec![0.0; n * n];
        let mut s = vec![0.0; n];
        let mut phi = u.clone();
        sm.year_with_jacobian(&mut phi, &mut m, Some((Param::Flux, &mut s)))
            .unwrap();
        let mut plain = u.clone();
        sm.year(&mut plain).unwrap();
        assert!(max_diff(&plain, &phi) < 1e-12);
        let h = 1e-5;
        let mut worst = 0.0f64;
        for j in 0..n {
            let (mut a, mut b) = (u.clone(), u.clone());
            a[j] += h;
            b[j] -= h;
            sm.year(&mut a).unwrap();
            sm.year(&mut b).unwrap();
            for i in 0..n {
                worst = worst.max(((a[i] - b[i]) / (2.0 * h) - m[i * n + j]).abs());
            }
        }
        eprintln!("{transport}: worst {worst:e}");
        assert!(worst < 1e-7, "{transport}: {worst:e}");
        let s0 = sm.param(Param::Flux);
        let hp = 1e-4;
        let (mut a, mut b) = (u.clone(), u.clone());
        sm.set_param(Param::Flux, s0 + hp);
        sm.year(&mut a).unwrap();
        sm.set_param(Param::Flux, s0 - hp);
        sm.year(&mut b).unwrap();
        sm.set_param(Param::Flux, s0);
        for i in 0..n {
            let fd = (a[i] - b[i]) / (2.0 * hp);
            assert!(
                (fd - s[i]).abs() < 1e-7 * (1.0 + s[i].abs()),
                "{transport} {i}: {fd} vs {}",
                s[i]
            );
        }
    }
}

fn cap_folds(h: &icefold::analysis::branches::Hysteresis) -> Vec<(f64, f64)> {
    h.branches
        .iter()
        .flat_map(|b| b.folds.iter())
        .map(|f| {
            let e = f
                .point
                .diagnostics
                .ice_edges_deg
                .last()
                .copied()
                .unwrap_or(90.0);
            (f.point.p, e)
        })
        .collect()
}

/// The small-ice-cap instability, annual-mean against seasonal, for the
/// same planet (default scenario, 90 latitude-spaced bands so the polar band
/// is 2 deg wide). The annual-mean model has it: a pair of folds with the
/// edge within a few degrees of the pole (North 1984, J. Atmos. Sci. 41,
/// 3390), besides the large-ice-cap fold. Wagner & Eisenman (2015, J.
/// Climate) found it disappears once a seasonal cycle with sea-ice
/// thermodynamics is included; icefold's seasonal model (no sea-ice
/// thermodynamics, 75 m mixed layer) shows no small-cap fold either: its
/// annual-mean ice edge leaves the pole continuously and stably, and the
/// large-ice-cap fold survives. Independently of continuation, shooting
/// from the warm and from the cold side across the flux window of the
/// annual model's small-cap hysteresis reaches one and the same periodic
/// climate.
#[test]
fn small_ice_cap_instability_annual_versus_seasonal() {
    let sets = ["seasons.steps_per_year=72", "grid.spacing=\"latitude\""];
    let sm = seasonal(&sets);
    let am = sm.annual_model();
    let flux = am.planet.orbit.flux;
    let (lo, hi) = (0.8 * flux, 1.15 * flux);
    let annual = trace_all(
        &am,
        Param::Flux,
        lo,
        hi,
        30.0,
        -60.0,
        &TraceOptions::default(),
        &mut |_| {},
    );
    let af = cap_folds(&annual);
    let small: Vec<_> = af.iter().filter(|f| f.1 > 80.0).collect();
    let large: Vec<_> = af.iter().filter(|f| f.1 < 60.0).collect();
    assert_eq!(small.len(), 2, "annual folds {af:?}");
    assert_eq!(large.len(), 1, "annual folds {af:?}");
    let seasonal_h = trace_seasonal(
        &sm,
        Param::Flux,
        lo,
        hi,
        30.0,
        -60.0,
        &SeasonalTraceOptions::default(),
        &mut |_| {},
    );
    let sf = cap_folds(&seasonal_h);
    assert_eq!(sf.len(), 1, "seasonal folds {sf:?}");
    assert!(sf[0].1 < 60.0, "seasonal folds {sf:?}");
    // the large-cap fold moves by less than 1% of the flux
    assert!(
        (sf[0].0 - large[0].0).abs() < 0.01 * flux,
        "{sf:?} vs {large:?}"
    );
    // the stable cap branch: annual-mean ice area falls monotonically with flux
    let warm = seasonal_h
        .branches
        .iter()
        .find(|b| {
            b.points
                .iter()
                .any(|q| q.diagnostics.ice_area_fraction < 1e-9)
        })
        .expect("a branch reaching ice-free");
    let mut cap: Vec<(f64, f64)> = warm
        .points
        .iter()
        .filter(|q| q.unstable_modes == 0 && q.p > sf[0].0)
        .map(|q| (q.p, q.diagnostics.ice_area_fraction))
        .collect();
    cap.sort_by(|a, b| a.0.total_cmp(&b.0));
    assert!(cap.len() > 10);
    assert!(cap.windows(2).all(|w| w[1].1 <= w[0].1 + 1e-9), "{cap:?}");
    // seasonal points state the year-mean habitable fraction: an area
    // fraction close to, but not the same as, that of the annual-mean
    // profile (a seasonal range of a few K at 75 m moves the habitable
    // edges a little; common practice, no source)
    let mut gap = 0.0f64;
    for q in seasonal_h.branches.iter().flat_map(|b| &b.points) {
        let mut at = am.clone();
        at.set_param(Param::Flux, q.p);
        let h = q.diagnostics.habitable_fraction;
        assert!((0.0..=1.0).contains(&h), "{h}");
        let d = (h - at.habitable_fraction(&q.temperature)).abs();
        assert!(d < 0.02, "{d} at {}", q.p);
        gap = gap.max(d);
    }
    assert!(gap > 1e-6, "{gap}");
    // shooting across the annual small-cap window: one periodic climate
    let (s_lo, s_hi) = (small[0].0.min(small[1].0), small[0].0.max(small[1].0));
    let mut work = sm.clone();
    let n = work.len();
    for f in [s_lo - 2.0, 0.5 * (s_lo + s_hi), s_hi + 2.0] {
        work.set_param(Param::Flux, f);
        let mut capped = vec![10.0; n];
        for (i, x) in work.model().grid.centres.iter().enumerate() {
            capped[i] = 25.0 - 40.0 * x * x;
        }
        let starts = vec![
            icefold::model::climate::Start {
                label: "warm".into(),
                temperature: vec![30.0; n],
            },
            icefold::model::climate::Start {
                label: "cap".into(),
                temperature: capped,
            },
        ];
        let found = find_periodic(&mut work, &starts, &ShootingOptions::default());
        assert!(found.failures.is_empty());
        assert_eq!(found.climates.len(), 1, "at flux {f}");
    }
}

fn args(cmd: &str, dir: &Path, sets: &[&str]) -> Args {
    Args {
        command: cmd.into(),
        out: Some(dir.to_path_buf()),
        sets: sets.iter().map(|s| s.to_string()).collect(),
        quiet: true,
        line: format!("icefold {cmd} (test)"),
        ..Args::default()
    }
}

/// End to end: `run` writes its time series and a state that `--from`
/// accepts; `periodic` writes every output; NetCDF magic "CDF\x02" (the
/// 64-bit-offset format, NetCDF user guide, from memory).
#[test]
fn run_and_periodic_write_their_outputs() {
    let sets = ["grid.bands=24", "seasons.steps_per_year=36"];
    let d = temp_dir("run");
    let out = cmd_run(&args("run", &d, &sets), 3, Some("cold")).unwrap();
    assert!(out.contains("3 years"), "{out}");
    let ts = std::fs::read_to_string(d.join("timeseries.csv")).unwrap();
    assert!(ts.starts_with("time_years,day_of_year,global_mean_temperature_c,ice_area_fraction,ice_edge_north_deg,ice_edge_south_deg\n"));
    assert_eq!(ts.lines().count(), 1 + 3 * 36);
    assert!(!ts.contains("NaN"));
    let state = d.join("state.csv");
    // a plain table (a CSV reader's default settings load it) and a side file
    let text = std::fs::read_to_string(&state).unwrap();
    assert!(
        text.starts_with("latitude_deg,sin_latitude,temperature_c\n"),
        "{text}"
    );
    assert_eq!(text.lines().count(), 1 + 24);
    let meta: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(d.join("state.json")).unwrap()).unwrap();
    assert_eq!(meta["bands"], 24);
    let d2 = temp_dir("run2");
    cmd_run(&args("run", &d2, &sets), 1, Some(state.to_str().unwrap())).unwrap();
    // every header field of the state is checked: other steps per year, or
    // a hand-edited year fraction, are refused (exit 2) naming the field
    let d4 = temp_dir("run4");
    let other = ["grid.bands=24", "seasons.steps_per_year=72"];
    let e = cmd_run(&args("run", &d4, &other), 1, Some(state.to_str().unwrap())).unwrap_err();
    assert_eq!(e.exit_code(), 2);
    assert!(e.to_string().contains("steps_per_year"), "{e}");
    let mut edited = meta.clone();
    edited["year_fraction"] = 0.5.into();
    std::fs::write(d.join("state.json"), edited.to_string()).unwrap();
    let e = cmd_run(&args("run", &d4, &sets), 1, Some(state.to_str().unwrap())).unwrap_err();
    assert!(e.to_string().contains("year_fraction"), "{e}");
    std::fs::write(d.join("state.json"), meta.to_string()).unwrap();
    let d3 = temp_dir("periodic");
    let text = cmd_periodic(&args("periodic", &d3, &sets)).unwrap();
    assert!(text.contains("periodic climates"), "{text}");
    for f in [
        "seasonal_cycle.csv",
        "seasonal_cycle.nc",
        "seasonal_cycle_1.svg",
        "seasonal_cycle_1.png",
        "annual_mean.csv",
        "ice_edges.csv",
        "profiles.svg",
        "summary.json",
        "scenario.toml",
    ] {
        assert!(d3.join(f).exists(), "{f}");
    }
    let nc = std::fs::read(d3.join("seasonal_cycle.nc")).unwrap();
    assert_eq!(&nc[..4], b"CDF\x02");
    check_seasonal_nc(&d3.join("seasonal_cycle.nc"), 24, 36);
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(d3.join("summary.json")).unwrap()).unwrap();
    let c = &summary["periodic_climates"][0];
    assert!(c["ice_extent"]["max"]["day_of_year"].is_number());
    // edge extremes bracket every daily edge in ice_edges.csv
    let edges = std::fs::read_to_string(d3.join("ice_edges.csv")).unwrap();
    assert!(edges.starts_with("equilibrium,day_of_year,global_mean_temperature_c,ice_area_fraction,ice_edge_north_deg,ice_edge_south_deg,habitable_fraction\n"));
    assert_eq!(
        edges.lines().count(),
        1 + 36 * summary["periodic_climates"].as_array().unwrap().len()
    );
    let lo = c["ice_edges"]["north"]["most_equatorward"]["latitude_deg"]
        .as_f64()
        .unwrap();
    let hi = c["ice_edges"]["north"]["most_poleward"]["latitude_deg"]
        .as_f64()
        .unwrap();
    for row in edges.lines().skip(1).filter(|r| r.starts_with("1,")) {
        let north: f64 = row.split(',').nth(4).unwrap().parse().unwrap();
        assert!(
            (0.0..=90.0).contains(&north) && north >= lo && north <= hi,
            "{row}"
        );
    }
    assert!(c["periodicity_residual_k"].as_f64().unwrap() < 1e-9);
    let csv = std::fs::read_to_string(d3.join("seasonal_cycle.csv")).unwrap();
    assert!(csv.starts_with("equilibrium,latitude_deg,day_of_year,temperature_c,ice\n"));
    for dir in [d, d2, d3] {
        let _ = std::fs::remove_dir_all(dir);
    }
}

/// seasonal_cycle.nc read back with netcdf3's reader: CF time (a
/// reference date and calendar, decodable without cftime), latitude with
/// bounds and area weights, surface temperature agreeing with the CSV.
fn check_seasonal_nc(path: &Path, bands: usize, steps: usize) {
    let csv = std::fs::read_to_string(path.with_file_name("seasonal_cycle.csv")).unwrap();
    let mut r = netcdf3::FileReader::open(path).unwrap();
    let ds = r.data_set();
    let text = |v: &str, a: &str| ds.get_var_attr_as_string(v, a).unwrap_or_default();
    assert_eq!(
        ds.get_global_attr_as_string("Conventions").unwrap(),
        "CF-1.8"
    );
    assert_eq!(ds.dim_size("latitude"), Some(bands));
    assert_eq!(ds.dim_size("time"), Some(steps));
    assert_eq!(text("time", "units"), "days since 2000-03-20 00:00:00");
    assert_eq!(text("time", "calendar"), "proleptic_gregorian");
    assert_eq!(text("time", "axis"), "T");
    assert!(text("time", "comment").contains("equinox"));
    assert_eq!(text("latitude", "standard_name"), "latitude");
    assert_eq!(text("latitude", "units"), "degrees_north");
    assert_eq!(text("latitude", "axis"), "Y");
    assert_eq!(text("latitude", "bounds"), "latitude_bnds");
    assert_eq!(
        ds.get_var("latitude_bnds").unwrap().dim_names(),
        ["latitude", "nv"]
    );
    for v in [
        "temperature",
        "annual_mean_temperature",
        "global_mean_temperature",
    ] {
        assert_eq!(text(v, "standard_name"), "surface_temperature", "{v}");
        assert_eq!(text(v, "units"), "degC", "{v}");
    }
    for v in ds.get_var_names() {
        assert!(!text(&v, "long_name").is_empty(), "{v} has no long_name");
        assert!(!text(&v, "units").is_empty(), "{v} has no units");
    }
    let lat = r.read_var_f64("latitude").unwrap();
    let bnds = r.read_var_f64("latitude_bnds").unwrap();
    let w = r.read_var_f64("band_area_fraction").unwrap();
    let time = r.read_var_f64("time").unwrap();
    let t = r.read_var_f64("temperature").unwrap();
    assert_eq!((bnds[0], bnds[2 * bands - 1]), (-90.0, 90.0));
    for i in 0..bands {
        assert!(bnds[2 * i] < lat[i] && lat[i] < bnds[2 * i + 1]);
        // sine spacing: the weight is half the difference of the sines of the edges
        let exact = 0.5 * (bnds[2 * i + 1].to_radians().sin() - bnds[2 * i].to_radians().sin());
        assert!((w[i] - exact).abs() < 1e-12);
    }
    assert!((w.iter().sum::<f64>() - 1.0).abs() < 1e-12);
    assert_eq!(time[0], 0.0);
    assert!((time[1] - 365.0 / steps as f64).abs() < 1e-12);
    // first CSV rows: climate 1, southernmost band, every day in order
    for (k, line) in csv.lines().skip(1).take(steps).enumerate() {
        let cells: Vec<f64> = line
            .split(',')
            .take(4)
            .map(|c| c.parse().unwrap())
            .collect();
        assert_eq!(cells[1], lat[0]);
        assert_eq!(cells[2], time[k]);
        assert_eq!(cells[3], t[k * bands]);
    }
}

/// Bad input gives a usage error (exit 2) and writes nothing: a state file
/// for another grid or scenario, a symmetric grid, zero years, and
/// out-of-range seasonal keys (rejected by the scenario schema).
#[test]
fn bad_input_is_rejected_and_writes_nothing() {
    let d = temp_dir("bad-src");
    cmd_run(
        &args("run", &d, &["grid.bands=24", "seasons.steps_per_year=24"]),
        1,
        None,
    )
    .unwrap();
    let state = d.join("state.csv");
    let s = state.to_str().unwrap();
    let orphan_path = d.join("orphan.csv");
    std::fs::copy(&state, &orphan_path).unwrap();
    let orphan = orphan_path.to_str().unwrap().to_string();
    let cases: Vec<(Vec<&str>, usize, Option<&str>)> = vec![
        (
            vec!["grid.bands=30", "seasons.steps_per_year=24"],
            1,
            Some(s),
        ),
        (vec!["grid.bands=24", "name=\"other\""], 1, Some(s)),
        (
            vec!["grid.bands=24", "grid.spacing=\"latitude\""],
            1,
            Some(s),
        ),
        (vec!["grid.symmetric=true"], 1, None),
        (vec!["grid.bands=24"], 0, None),
        (vec!["seasons.mixed_layer_depth=0"], 1, None),
        (vec!["seasons.mixed_layer_depth=-5"], 1, None),
        (vec!["seasons.steps_per_year=0"], 1, None),
        (vec!["seasons.land_fraction=1.5"], 1, None),
        (vec!["grid.bands=24"], 1, Some("/nonexistent/state.csv")),
        // a table without its side file
        (vec!["grid.bands=24"], 1, Some(orphan.as_str())),
    ];
    for (sets, years, from) in cases {
        let out = temp_dir("bad");
        let e = cmd_run(&args("run", &out, &sets), years, from).unwrap_err();
        eprintln!("{sets:?}: {e}");
        assert_eq!(e.exit_code(), 2, "{sets:?}: {e}");
        assert!(!out.exists(), "{sets:?} wrote output");
    }
    // a state file whose second row was edited to a NaN temperature
    let text = std::fs::read_to_string(&state).unwrap();
    let mut lines: Vec<String> = text.lines().map(String::from).collect();
    lines[3] = lines[3].rsplit_once(',').unwrap().0.to_string() + ",NaN";
    let broken = d.join("broken.csv");
    std::fs::write(&broken, lines.join("\n")).unwrap();
    std::fs::copy(d.join("state.json"), d.join("broken.json")).unwrap();
    let out = temp_dir("bad-nan");
    let e = cmd_run(
        &args("run", &out, &["grid.bands=24", "seasons.steps_per_year=24"]),
        1,
        Some(broken.to_str().unwrap()),
    )
    .unwrap_err();
    assert!(matches!(e, CliError::Usage(_)), "{e}");
    assert!(!out.exists());
    let e = cmd_periodic(&args("periodic", &out, &["grid.symmetric=true"])).unwrap_err();
    assert_eq!(e.exit_code(), 2);
    assert!(!out.exists());
    let _ = std::fs::remove_dir_all(d);
}

/// Warm and cold starts of the default planet give two stable periodic
/// climates (the partly ice-covered one and the snowball), as the
/// annual-mean model has two stable equilibria there (North et al. 1981,
/// Rev. Geophys. 19, 91, for the annual-mean model).
#[test]
fn warm_and_cold_starts_give_two_stable_periodic_climates() {
    let mut sm = seasonal(&[]);
    let n = sm.len();
    let found = find_periodic(
        &mut sm,
        &standard_starts(n, 30.0, -60.0),
        &ShootingOptions::default(),
    );
    assert_eq!(found.climates.len(), 2);
    for c in &found.climates {
        assert_eq!(c.unstable_modes, 0);
        assert!(c.multipliers[0].0.hypot(c.multipliers[0].1) < 1.0);
    }
    let cold = cycle(&mut sm, &found.climates[1].start).unwrap();
    assert!(cold.ice_area_fraction.iter().all(|f| *f == 1.0));
    let warm = cycle(&mut sm, &found.climates[0].start).unwrap();
    let ((_, fmin), (_, fmax)) = warm.ice_extremes();
    assert!(fmin > 0.0 && fmax < 0.5 && fmax > fmin);
}
