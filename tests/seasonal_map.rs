//! Seasonal regime maps (issue 11, part 3): `map` of a seasonal scenario
//! maps periodic climates, a slice equals an independent seasonal trace,
//! results do not depend on threads or shards, the files name the model,
//! and what the seasonal model cannot take is refused.
//!
//! Small grids (16 bands, 24 steps per year, three or four slices, a
//! narrow flux range) keep every test here within a few seconds to about
//! 15 s in release builds.
mod common;
use common::{icefold, temp_dir};
use icefold::analysis::periodic::{SeasonalTraceOptions, trace_seasonal};
use icefold::analysis::sweep::{MapModel, MapSpec, compute_seasonal_slice};
use icefold::io::scenario::Scenario;
use icefold::model::Param;
use std::path::Path;

const SEA_ICE: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/scenarios/sea-ice.toml");
const SMALL: [&str; 4] = [
    "--set",
    "grid.bands=16",
    "--set",
    "seasons.steps_per_year=24",
];
const FILES: [&str; 7] = [
    "map.csv",
    "boundaries.csv",
    "map.nc",
    "map.svg",
    "map.png",
    "summary.json",
    "scenario.toml",
];

/// The sea-ice map of these tests: three slices in the forcing F (0, 1,
/// 2 W m-2), each traced in flux over 1220..1300 W m-2 (the snowball folds
/// of the 16-band model lie in 1235..1280).
fn spec() -> MapSpec {
    MapSpec {
        across: "radiation.forcing".into(),
        across_from: 0.0,
        across_to: 2.0,
        count: 3,
        vary: "orbit.flux".into(),
        vary_from: 1220.0,
        vary_to: 1300.0,
        cells: 20,
        fold_curves: false,
        more: Vec::new(),
    }
}

fn sea_ice_scenario(extra: &[&str]) -> Scenario {
    let mut sets = vec![
        "grid.bands=16".to_string(),
        "seasons.steps_per_year=24".to_string(),
    ];
    sets.extend(extra.iter().map(|s| s.to_string()));
    Scenario::load(Some(Path::new(SEA_ICE)), &sets).unwrap()
}

/// The folds of a trace, sorted.
fn fold_values(h: &icefold::analysis::branches::Hysteresis) -> Vec<f64> {
    let mut v: Vec<f64> = h
        .branches
        .iter()
        .flat_map(|b| b.folds.iter().map(|f| f.point.p))
        .collect();
    v.sort_by(f64::total_cmp);
    v
}

/// An independent seasonal trace at F = 1 W m-2: the scenario read with
/// the forcing set in the text (not by `set_param`), traced directly.
fn independent_trace() -> icefold::analysis::branches::Hysteresis {
    let sm = sea_ice_scenario(&["radiation.forcing=1"])
        .seasonal_model()
        .unwrap();
    let s = spec();
    trace_seasonal(
        &sm,
        Param::Flux,
        s.vary_from,
        s.vary_to,
        30.0,
        -60.0,
        &SeasonalTraceOptions::default(),
        &mut |_| {},
    )
}

fn assert_same_folds(a: &[f64], b: &[f64], what: &str) {
    assert!(!b.is_empty(), "{what}: the trace has no fold");
    assert_eq!(a.len(), b.len(), "{what}: {a:?} vs {b:?}");
    for (x, y) in a.iter().zip(b) {
        assert!((x - y).abs() <= 1e-8 * y.abs(), "{what}: {x} vs {y}");
    }
}

/// A slice of a seasonal map equals an independent seasonal trace with
/// the same model and range: the same folds to 1e-8 relative (the issue's
/// check), the same points with the same Floquet stability. Along each
/// branch, stability changes only across a fold (at a saddle-node of the
/// annual map one Floquet multiplier crosses +1; standard bifurcation
/// theory, from memory), and the map shows the bistability of the snowball
/// with a partly ice-covered climate that Wagner & Eisenman (2015, J.
/// Climate 28, 3998) keep in their seasonal model with sea ice (from
/// memory), with only the snowball at the lowest flux.
#[test]
fn seasonal_slice_equals_independent_seasonal_trace() {
    let sc = sea_ice_scenario(&[]);
    let sm = sc.seasonal_model().unwrap();
    let s = spec();
    let slice = compute_seasonal_slice(
        &sm,
        &s,
        Param::Forcing,
        Param::Flux,
        1,
        sc.num("solver.warm_start"),
        sc.num("solver.cold_start"),
        &SeasonalTraceOptions::default(),
    );
    assert_eq!(slice.across, 1.0);
    let h = independent_trace();
    let mut a: Vec<f64> = slice.folds.iter().map(|f| f.value).collect();
    a.sort_by(f64::total_cmp);
    assert_same_folds(&a, &fold_values(&h), "slice vs trace");
    let pts: Vec<_> = h.branches.iter().flat_map(|b| b.points.iter()).collect();
    assert_eq!(slice.points.len(), pts.len());
    for (p, q) in slice.points.iter().zip(&pts) {
        assert!((p.value - q.p).abs() <= 1e-8 * q.p.abs());
        assert_eq!(p.unstable_modes, q.unstable_modes, "at {}", q.p);
    }
    assert!(slice.points.iter().any(|p| p.unstable_modes > 0));
    // (a fold located between points i and i + 1 has `after` = i; its
    // parameter lies beyond both, where the branch turns)
    let mut changes = 0;
    for b in &h.branches {
        for (i, w) in b.points.windows(2).enumerate() {
            if (w[0].unstable_modes == 0) != (w[1].unstable_modes == 0) {
                changes += 1;
                assert!(
                    b.folds.iter().any(|f| f.after == i),
                    "branch {}: stability changes between {} and {} without a fold",
                    b.id,
                    w[0].p,
                    w[1].p
                );
            }
        }
    }
    assert!(changes > 0);
    let (caps, snowball) = (2, 8);
    assert!(
        slice.regime.contains(&(caps | snowball)),
        "{:?}",
        slice.regime
    );
    assert_eq!(slice.regime[0], snowball);
    // the map model of the scenario is the seasonal one with sea ice
    let mm = MapModel::Seasonal(sm);
    assert_eq!(mm.name(), "seasonal with sea ice");
    assert_eq!(mm.steps_per_year(), Some(24));
}

fn map_args<'a>(out: &'a Path, extra: &[&'a str]) -> Vec<&'a str> {
    let mut a = vec![
        "map",
        SEA_ICE,
        "--across",
        "radiation.forcing=0:2:3",
        "--vary",
        "orbit.flux",
        "--from",
        "1220",
        "--to",
        "1300",
        "--cells",
        "20",
        "--quiet",
        "--out",
        out.to_str().unwrap(),
    ];
    a.extend(SMALL);
    a.extend(extra);
    a
}

fn run(args: &[&str]) -> String {
    let (code, stdout, stderr) = icefold(args);
    assert_eq!(code, 0, "{args:?}: {stderr}");
    stdout
}

/// Determinism (our requirement): a seasonal map with sea ice on 1 thread
/// equals the map on 2 threads and the merge of its shards, byte for byte.
/// The files name the model: summary.json (`model`, `steps_per_year`), a
/// global attribute of map.nc, the stdout report; the residual is max
/// |u - Φ(u)| in K. The whole map's folds at F = 1 are those of an
/// independent trace (to 1e-8).
#[test]
fn seasonal_map_is_identical_across_threads_and_shards_and_names_its_model() {
    let (d1, d2, s, m) = (
        temp_dir("smap-t1"),
        temp_dir("smap-t2"),
        temp_dir("smap-shards"),
        temp_dir("smap-merged"),
    );
    let stdout = run(&map_args(&d1, &["--threads", "1"]));
    assert!(
        stdout.contains("model: seasonal with sea ice (24 steps per year"),
        "{stdout}"
    );
    run(&map_args(&d2, &["--threads", "2"]));
    run(&map_args(&s, &["--shard", "0/2"]));
    run(&map_args(&s, &["--shard", "1/2"]));
    let shard: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(s.join("shard-1-of-2.json")).unwrap())
            .unwrap();
    assert_eq!(shard["model"], "seasonal with sea ice");
    let out = run(&[
        "merge",
        s.to_str().unwrap(),
        "--out",
        m.to_str().unwrap(),
        "--quiet",
    ]);
    assert!(out.contains("model: seasonal with sea ice"), "{out}");
    for f in FILES {
        let a = std::fs::read(d1.join(f)).unwrap();
        assert_eq!(a, std::fs::read(d2.join(f)).unwrap(), "{f}: 1 vs 2 threads");
        assert_eq!(a, std::fs::read(m.join(f)).unwrap(), "{f}: whole vs merged");
    }
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(d1.join("summary.json")).unwrap()).unwrap();
    assert_eq!(summary["model"], "seasonal with sea ice");
    assert_eq!(summary["steps_per_year"], 24);
    assert!(summary["stability"].as_str().unwrap().contains("Floquet"));
    assert_eq!(summary["residual"]["unit"], "K");
    let csv = std::fs::read_to_string(d1.join("map.csv")).unwrap();
    assert!(csv.lines().next().unwrap().contains(",residual_k,"));
    let mut r = netcdf3::FileReader::open(d1.join("map.nc")).unwrap();
    let ds = r.data_set();
    assert_eq!(
        ds.get_global_attr_as_string("model").unwrap(),
        "seasonal with sea ice"
    );
    assert_eq!(ds.get_global_attr_i32("steps_per_year"), Some(&[24][..]));
    assert_eq!(
        ds.get_var_attr_as_string("slice_max_residual", "units")
            .unwrap(),
        "K"
    );
    let worst = r.read_var_f64("slice_max_residual").unwrap();
    assert!(
        worst.iter().all(|w| w.is_finite() && *w >= 0.0),
        "{worst:?}"
    );
    // the whole map's folds at F = 1: every fold of a slice is on one
    // boundary curve
    let b = std::fs::read_to_string(d1.join("boundaries.csv")).unwrap();
    let mut folds: Vec<f64> = b
        .lines()
        .skip(1)
        .map(|l| l.split(',').collect::<Vec<_>>())
        .filter(|r| r[3].parse::<f64>().unwrap() == 1.0)
        .map(|r| r[4].parse().unwrap())
        .collect();
    folds.sort_by(f64::total_cmp);
    assert_same_folds(&folds, &fold_values(&independent_trace()), "map vs trace");
    for d in [d1, d2, s, m] {
        let _ = std::fs::remove_dir_all(d);
    }
}

/// A shard of a seasonal map merged with a shard of the annual-mean map of
/// the same planet and command is refused with the field `model` named,
/// exit 2, nothing written; the annual-mean map names its model too
/// (common practice, no source: never mix results of two models).
#[test]
fn seasonal_and_annual_shards_do_not_merge() {
    let dir = temp_dir("smap-mixed");
    let (seasonal, annual, merged) = (dir.join("s"), dir.join("a"), dir.join("m"));
    let args = |out: &Path, season: &str, k: &str| {
        let mut v: Vec<String> = [
            "map",
            "--across",
            "orbit.obliquity=0:90:3",
            "--vary",
            "orbit.flux",
            "--from",
            "1100",
            "--to",
            "1500",
            "--cells",
            "10",
            "--shard",
            k,
            "--quiet",
            "--out",
        ]
        .iter()
        .map(|s| s.to_string())
        .collect();
        v.push(out.to_str().unwrap().into());
        v.extend(SMALL.iter().map(|s| s.to_string()));
        v.extend(["--set".into(), format!("seasons.enabled={season}")]);
        v
    };
    let call = |v: Vec<String>| icefold(&v.iter().map(String::as_str).collect::<Vec<_>>());
    let (code, out, err) = call(args(&seasonal, "true", "0/2"));
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("(seasonal model)"), "{out}");
    let (code, out, err) = call(args(&annual, "false", "1/2"));
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("(annual-mean model)"), "{out}");
    let shard: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(annual.join("shard-1-of-2.json")).unwrap())
            .unwrap();
    assert_eq!(shard["model"], "annual-mean");
    let (code, _, err) = icefold(&[
        "merge",
        seasonal.to_str().unwrap(),
        annual.to_str().unwrap(),
        "--out",
        merged.to_str().unwrap(),
        "--quiet",
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("field `model`"), "{err}");
    assert_eq!(err.trim().lines().count(), 1, "{err}");
    assert!(!merged.exists());
    // a shard whose model was edited is refused by its own check
    let file = seasonal.join("shard-0-of-2.json");
    let mut v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&file).unwrap()).unwrap();
    v["model"] = "annual-mean".into();
    std::fs::write(&file, serde_json::to_string(&v).unwrap()).unwrap();
    let (code, _, err) = icefold(&[
        "merge",
        seasonal.to_str().unwrap(),
        "--out",
        merged.to_str().unwrap(),
        "--quiet",
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("field `model`"), "{err}");
    assert!(!merged.exists());
    let _ = std::fs::remove_dir_all(&dir);
}

/// What the seasonal models cannot take is a one-line usage error naming
/// the key, exit 2, nothing written (README, bad input; common practice,
/// no source): a key the model ignores (the albedo threshold with sea ice,
/// where ice is negative enthalpy; obliquity and eccentricity with
/// insolation that does not follow the orbit), fold curves (annual-mean
/// only), sea ice without seasons, and a scenario the seasonal model
/// refuses (the symmetric half grid).
#[test]
fn what_the_seasonal_model_cannot_take_is_refused() {
    let d = temp_dir("smap-bad");
    let across = "--across";
    let forcing = "radiation.forcing=0:2:3";
    let cases: Vec<(Vec<&str>, &str)> = vec![
        (vec![], "--across (default) orbit.obliquity"),
        (
            vec!["--across", "albedo.threshold=-5:5:3"],
            "albedo.threshold",
        ),
        (
            vec![
                across,
                forcing,
                "--vary",
                "albedo.threshold",
                "--from",
                "-5",
                "--to",
                "5",
            ],
            "albedo.threshold",
        ),
        (
            vec!["--across", "orbit.obliquity=0:90:3"],
            "orbit.obliquity",
        ),
        (
            vec!["--across", "orbit.eccentricity=0:0.1:3"],
            "orbit.eccentricity",
        ),
        (vec![across, forcing, "--fold-curves"], "--fold-curves"),
        (
            vec![across, forcing, "--set", "seasons.enabled=false"],
            "seaice.enabled",
        ),
        (
            vec![across, forcing, "--set", "grid.symmetric=true"],
            "grid.symmetric",
        ),
    ];
    for (extra, key) in cases {
        let mut a = vec!["map", SEA_ICE, "--quiet", "--out", d.to_str().unwrap()];
        a.extend(SMALL);
        a.extend(&extra);
        let (code, _, err) = icefold(&a);
        assert_eq!(code, 2, "{extra:?}: {err}");
        assert!(err.contains(key), "{extra:?}: {err}");
        assert_eq!(err.trim().lines().count(), 1, "{extra:?}: {err}");
        assert!(!d.exists(), "{extra:?} wrote output");
    }
}
