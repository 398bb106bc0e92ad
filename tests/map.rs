//! Regime maps: determinism across threads and shards, slices equal to
//! independent traces, the expected regimes, and bad input.
mod common;
use common::{icefold, temp_dir};
use icefold::analysis::branches::{TraceOptions, trace_all};
use icefold::analysis::sweep::{MapSpec, compute_slice};
use icefold::io::scenario::Scenario;
use icefold::model::Param;
use std::path::Path;

const SCEN: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/scenarios/kdwarf-ocean.toml");
const FILES: [&str; 7] = [
    "map.csv",
    "boundaries.csv",
    "map.nc",
    "map.svg",
    "map.png",
    "summary.json",
    "scenario.toml",
];

fn run_map(dir: &Path, extra: &[&str]) {
    let mut a = vec![
        "map",
        SCEN,
        "--across",
        "orbit.obliquity=0:90:7",
        "--cells",
        "40",
        "--quiet",
        "--out",
        dir.to_str().unwrap(),
    ];
    a.extend(extra);
    let (code, _, stderr) = icefold(&a);
    assert_eq!(code, 0, "{stderr}");
}

/// Determinism (our requirement): 1 thread equals 2 threads, and shards
/// merged equal a single run, byte for byte.
#[test]
fn threads_and_shards_give_identical_bytes() {
    let (d1, d2, s, m) = (
        temp_dir("t1"),
        temp_dir("t2"),
        temp_dir("shards"),
        temp_dir("merged"),
    );
    run_map(&d1, &["--threads", "1"]);
    run_map(&d2, &["--threads", "2"]);
    // the ice-free state at a given flux is unique in a linear model, so no
    // fold can lead from it to another ice-free state (common practice, no
    // source): a corner fold's jump looks past the corner, not at it
    let b = std::fs::read_to_string(d1.join("boundaries.csv")).unwrap();
    assert!(!b.contains("ice-free -> ice-free"), "{b}");
    // fold curves are on by default for annual-mean maps, so the bytes
    // compared below include them
    assert!(b.contains(",fold-continuation,"), "{b}");
    run_map(&s, &["--shard", "0/3"]);
    run_map(&s, &["--shard", "2/3"]);
    // an incomplete merge is refused and writes nothing
    let (code, _, stderr) = icefold(&["merge", s.to_str().unwrap(), "--out", m.to_str().unwrap()]);
    assert_eq!(code, 2, "{stderr}");
    assert!(stderr.contains("missing"), "{stderr}");
    assert!(!m.exists());
    run_map(&s, &["--shard", "1/3"]);
    let (code, _, stderr) = icefold(&["merge", s.to_str().unwrap(), "--out", m.to_str().unwrap()]);
    assert_eq!(code, 0, "{stderr}");
    for f in FILES {
        let a = std::fs::read(d1.join(f)).unwrap();
        assert_eq!(a, std::fs::read(d2.join(f)).unwrap(), "{f}: 1 vs 2 threads");
        assert_eq!(
            a,
            std::fs::read(m.join(f)).unwrap(),
            "{f}: single run vs merged shards"
        );
    }
    // the map's contents: polar caps at low obliquity, equatorial ice belts at
    // high obliquity (qualitative result of obliquity studies, e.g. Rose,
    // Cronin & Bitz 2017, ApJ 846, 28)
    let csv = std::fs::read_to_string(d1.join("map.csv")).unwrap();
    assert!(csv.starts_with("orbit.obliquity,branch,orbit.flux,state,stable,unstable_modes,global_mean_temperature_c,ice_area_fraction,ice_edges_deg,residual_wm2,habitable_fraction\n"));
    let rows: Vec<Vec<&str>> = csv
        .lines()
        .skip(1)
        .map(|l| l.split(',').collect())
        .collect();
    assert!(
        rows.iter().any(|r| r[0].parse::<f64>().unwrap() <= 30.0
            && r[3] == "polar-caps"
            && r[4] == "true")
    );
    assert!(
        rows.iter()
            .any(|r| r[0].parse::<f64>().unwrap() >= 75.0 && r[3] == "equatorial-belt")
    );
    check_map_nc(&d1.join("map.nc"), &rows);
}

/// map.nc, read back with netcdf3's reader: a CF-1.8 CDF-2 file whose
/// per-cell counts agree with its per-climate variables (filled past the
/// count), whose states make up the regime mask, and whose climates are
/// stable points of map.csv (same global mean, same state; for polar caps
/// the cap edge is map.csv's last northern edge, mirrored in the south
/// unless only one hemisphere has a cap).
fn check_map_nc(path: &Path, csv: &[Vec<&str>]) {
    use icefold::io::netcdf::{FILL_F64, FILL_I32};
    let bytes = std::fs::read(path).unwrap();
    assert_eq!(&bytes[..4], b"CDF\x02");
    let mut r = netcdf3::FileReader::open(path).unwrap();
    let ds = r.data_set();
    let text = |v: &str, a: &str| ds.get_var_attr_as_string(v, a).unwrap_or_default();
    assert_eq!(
        ds.get_global_attr_as_string("Conventions").unwrap(),
        "CF-1.8"
    );
    assert_eq!(ds.dim_size("orbit_obliquity"), Some(7));
    assert_eq!(ds.dim_size("orbit_flux"), Some(40));
    assert_eq!(ds.dim_size("nv"), Some(2));
    let nclim = ds.dim_size("climate").unwrap();
    assert_eq!(text("orbit_obliquity", "axis"), "X");
    assert_eq!(text("orbit_flux", "axis"), "Y");
    assert_eq!(text("orbit_flux", "bounds"), "orbit_flux_bnds");
    let cell3 = ["orbit_flux", "orbit_obliquity", "climate"];
    for v in [
        "state",
        "global_mean_temperature",
        "ice_edge_north_deg",
        "ice_edge_south_deg",
        "habitable_fraction",
    ] {
        assert_eq!(ds.get_var(v).unwrap().dim_names(), cell3, "{v}");
    }
    for v in ds.get_var_names() {
        assert!(!text(&v, "long_name").is_empty(), "{v} has no long_name");
        assert!(!text(&v, "units").is_empty(), "{v} has no units");
    }
    let t = "global_mean_temperature";
    assert_eq!(text(t, "standard_name"), "surface_temperature");
    assert_eq!(text(t, "units"), "degC");
    assert_eq!(ds.get_var_attr_f64(t, "_FillValue"), Some(&[FILL_F64][..]));
    assert_eq!(text("ice_edge_north_deg", "units"), "degrees_north");
    assert_eq!(text("habitable_fraction", "units"), "1");
    assert_eq!(
        ds.get_var_attr_f64("habitable_fraction", "_FillValue"),
        Some(&[FILL_F64][..])
    );
    assert_eq!(
        text("state", "flag_meanings"),
        "ice_free polar_caps equatorial_belt snowball other"
    );
    assert_eq!(
        ds.get_var_attr_i32("state", "flag_values"),
        Some(&[1, 2, 4, 8, 16][..])
    );
    let obliquity = r.read_var_f64("orbit_obliquity").unwrap();
    let flux = r.read_var_f64("orbit_flux").unwrap();
    let bnds = r.read_var_f64("orbit_flux_bnds").unwrap();
    let count = r.read_var_i32("stable_climates").unwrap();
    let regime = r.read_var_i32("regime").unwrap();
    let state = r.read_var_i32("state").unwrap();
    let mean = r.read_var_f64(t).unwrap();
    let north = r.read_var_f64("ice_edge_north_deg").unwrap();
    let south = r.read_var_f64("ice_edge_south_deg").unwrap();
    let habitable = r.read_var_f64("habitable_fraction").unwrap();
    assert_eq!(nclim, *count.iter().max().unwrap() as usize);
    for (j, f) in flux.iter().enumerate() {
        assert!(bnds[2 * j] < *f && *f < bnds[2 * j + 1]);
    }
    let label = |bit: i32| match bit {
        1 => "ice-free",
        2 => "polar-caps",
        4 => "equatorial-belt",
        8 => "snowball",
        _ => "other",
    };
    let mut caps = 0;
    for j in 0..flux.len() {
        for (i, a) in obliquity.iter().enumerate() {
            let cell = j * obliquity.len() + i;
            let n = count[cell] as usize;
            let mut mask = 0;
            for k in 0..nclim {
                let at = cell * nclim + k;
                if k >= n {
                    assert_eq!(state[at], FILL_I32);
                    assert_eq!(
                        (mean[at], north[at], south[at], habitable[at]),
                        (FILL_F64, FILL_F64, FILL_F64, FILL_F64)
                    );
                    continue;
                }
                assert!(k == 0 || mean[at] <= mean[at - 1], "warmest first");
                mask |= state[at];
                let row = csv
                    .iter()
                    .find(|r| {
                        r[0].parse::<f64>().unwrap() == *a
                            && r[6].parse::<f64>().unwrap() == mean[at]
                    })
                    .unwrap_or_else(|| panic!("cell ({j}, {i}) climate {k}: not in map.csv"));
                assert_eq!(row[3], label(state[at]));
                // the climate's habitable fraction is its map.csv point's, in
                // [0, 1] (an area fraction; common practice, no source)
                assert_eq!(row[10].parse::<f64>().unwrap(), habitable[at]);
                assert!((0.0..=1.0).contains(&habitable[at]));
                assert_eq!(row[4], "true");
                if state[at] == 2 {
                    // no northern edge: the cap is in the south only
                    let last: f64 = row[8]
                        .split(';')
                        .next_back()
                        .filter(|x| !x.is_empty())
                        .map_or(90.0, |x| x.parse().unwrap());
                    assert_eq!(north[at], last);
                    // symmetric caps mirror the northern edge; the full grid
                    // also has stable states with a cap in one hemisphere only
                    // (the other ice-free, south edge -90)
                    assert!(
                        (south[at] + last).abs() < 1e-6 || south[at] == -90.0 || last == 90.0,
                        "{} vs {last}",
                        south[at]
                    );
                    caps += 1;
                }
            }
            assert_eq!(mask, regime[cell], "cell ({j}, {i})");
        }
    }
    assert!(caps > 0);
}

/// A slice of the map equals an independent trace at that obliquity: the
/// same folds to 1e-9 relative (our requirement).
#[test]
fn slice_equals_independent_trace() {
    let sc = Scenario::load(Some(Path::new(SCEN)), &[]).unwrap();
    let model = sc.model();
    let spec = MapSpec {
        across: "orbit.obliquity".into(),
        across_from: 0.0,
        across_to: 60.0,
        count: 3,
        vary: "orbit.flux".into(),
        vary_from: 980.0,
        vary_to: 1400.0,
        cells: 20,
        fold_curves: false,
        more: Vec::new(),
    };
    let slice = compute_slice(
        &model,
        &spec,
        Param::Obliquity,
        Param::Flux,
        1,
        30.0,
        -60.0,
        1e-10,
    );
    let mut m = Scenario::load(Some(Path::new(SCEN)), &["orbit.obliquity=30".into()])
        .unwrap()
        .model();
    m.set_param(Param::Flux, m.param(Param::Flux));
    let h = trace_all(
        &m,
        Param::Flux,
        980.0,
        1400.0,
        30.0,
        -60.0,
        &TraceOptions::default(),
        &mut |_| {},
    );
    let mut a: Vec<f64> = slice.folds.iter().map(|f| f.value).collect();
    let mut b: Vec<f64> = h
        .branches
        .iter()
        .flat_map(|br| br.folds.iter().map(|f| f.point.p))
        .collect();
    a.sort_by(f64::total_cmp);
    b.sort_by(f64::total_cmp);
    assert!(!a.is_empty());
    assert_eq!(a.len(), b.len());
    for (x, y) in a.iter().zip(&b) {
        assert!((x - y).abs() <= 1e-9 * y.abs(), "{x} vs {y}");
    }
}

#[test]
fn bad_map_input_exits_2_and_writes_nothing() {
    let d = temp_dir("bad");
    let other = temp_dir("other-scenario");
    run_map(&other, &["--shard", "0/2", "--set", "orbit.flux=1200"]);
    let first = temp_dir("first");
    run_map(&first, &["--shard", "1/2"]);
    let cases: Vec<Vec<&str>> = vec![
        vec!["map", "--across", "orbit.obliquity=0:90:1"],
        vec!["map", "--across", "orbit.obliquity=0:ninety:5"],
        vec!["map", "--across", "orbit.obliquity=90:0:5"],
        vec!["map", "--across", "orbit.obliquity"],
        vec!["map", "--across", "orbit.flux=1000:1300:5"],
        vec!["map", "--shard", "3/3"],
        vec!["map", "--shard", "x"],
        vec!["map", "--cells", "1"],
        vec!["merge", other.to_str().unwrap(), first.to_str().unwrap()],
        vec!["merge"],
    ];
    for args in cases {
        let mut a = args.clone();
        a.extend(["--quiet", "--out", d.to_str().unwrap()]);
        let (code, _, stderr) = icefold(&a);
        assert_eq!(code, 2, "{args:?}: {stderr}");
        assert_eq!(stderr.trim().lines().count(), 1, "{args:?}: {stderr}");
        assert!(!d.exists(), "{args:?} wrote output");
    }
}

/// Fold curves are the default of annual-mean maps (our requirement, issue
/// 14): `--no-fold-curves` leaves only the slice-joined boundaries and
/// writes `--no-fold-curves` into the reproducing command, `--fold-curves`
/// is still accepted and gives the default's outputs, and both at once are
/// refused with exit 2 and nothing written.
#[test]
fn fold_curves_are_the_default() {
    let (on, off, explicit, both) = (
        temp_dir("fc-on"),
        temp_dir("fc-off"),
        temp_dir("fc-explicit"),
        temp_dir("fc-both"),
    );
    run_map(&on, &[]);
    run_map(&off, &["--no-fold-curves"]);
    run_map(&explicit, &["--fold-curves"]);
    let read = |d: &Path, f: &str| std::fs::read_to_string(d.join(f)).unwrap();
    assert!(read(&on, "boundaries.csv").contains(",fold-continuation,"));
    let b = read(&off, "boundaries.csv");
    assert!(
        !b.contains("fold-continuation") && b.contains(",slices,"),
        "{b}"
    );
    assert!(read(&off, "summary.json").contains("--no-fold-curves"));
    // (summary.json records the command line as typed)
    for f in FILES.iter().filter(|f| **f != "summary.json") {
        let bytes = |d: &Path| std::fs::read(d.join(f)).unwrap();
        assert_eq!(bytes(&on), bytes(&explicit), "{f}");
    }
    let (code, _, stderr) = icefold(&[
        "map",
        SCEN,
        "--fold-curves",
        "--no-fold-curves",
        "--quiet",
        "--out",
        both.to_str().unwrap(),
    ]);
    assert_eq!(code, 2, "{stderr}");
    assert_eq!(stderr.trim().lines().count(), 1, "{stderr}");
    assert!(!both.exists());
}

/// A fold continued in two parameters passes through the folds that
/// independent traces locate at the same obliquities (our requirement; an
/// independent computation: each slice's fold by pseudo-arclength
/// continuation and its own refinement, the curve's by the secant on the
/// edge family, common practice, no source). Both are folds of the model
/// with the ice edges as unknowns, so they agree to the solver tolerance:
/// checked to 1e-10 relative, at five obliquities over 0 to 45 deg.
#[test]
fn fold_curve_passes_through_slice_folds() {
    use icefold::analysis::edgefold::trace_edge_fold_curve;
    let mut m = Scenario::load(None, &[]).unwrap().model();
    m.set_param(Param::Obliquity, 18.0);
    let (lo, hi) = (1070.0, 1540.0);
    let traced = |m: &icefold::model::Model| {
        trace_all(
            m,
            Param::Flux,
            lo,
            hi,
            30.0,
            -60.0,
            &TraceOptions::default(),
            &mut |_| {},
        )
    };
    let h = traced(&m);
    let f = h
        .branches
        .iter()
        .flat_map(|b| b.folds.iter())
        .find(|f| f.point.p < 1250.0 && f.jump_to.is_some())
        .expect("snowball fold");
    let (curve, _) = trace_edge_fold_curve(
        &m,
        Param::Flux,
        Param::Obliquity,
        &f.point.temperature,
        f.point.p,
        (0.0, 90.0),
        (lo, hi),
        1e-10,
    )
    .expect("a smooth fold");
    // the whole range from obliquity 0 up to the cusp near 50 deg (where
    // this fold meets the large-cap fold and both vanish)
    assert!(
        curve[0].0 == 0.0 && curve.last().unwrap().0 > 45.0,
        "{curve:?}"
    );
    let mut checked = 0;
    for &(a, p) in curve.iter().filter(|(a, _)| *a <= 45.0).step_by(5) {
        let mut m2 = m.clone();
        m2.set_param(Param::Obliquity, a);
        let nearest = traced(&m2)
            .branches
            .iter()
            .flat_map(|b| b.folds.iter().map(|f| f.point.p))
            .min_by(|x, y| (x - p).abs().total_cmp(&(y - p).abs()))
            .unwrap();
        assert!(
            (nearest - p).abs() < 1e-10 * p,
            "obliquity {a}: curve {p} slice {nearest}"
        );
        checked += 1;
    }
    assert!(checked >= 5, "{checked}");
}

/// In `boundaries.csv` every point of a fold-continuation curve at one of
/// the map's slice values lies on the slice-joined boundary of the same
/// transition, to 1e-9 relative (the same fold found twice, by the slice's
/// trace and by the curve; common practice, no source).
#[test]
fn continued_boundaries_meet_the_slices() {
    let d = temp_dir("fc-meet");
    let (code, _, stderr) = icefold(&[
        "map",
        "--across",
        "orbit.obliquity=0:60:13",
        "--cells",
        "40",
        "--figures",
        "none",
        "--quiet",
        "--out",
        d.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    let text = std::fs::read_to_string(d.join("boundaries.csv")).unwrap();
    let rows: Vec<Vec<&str>> = text
        .lines()
        .skip(1)
        .map(|l| l.split(',').collect())
        .collect();
    let num = |s: &str| s.parse::<f64>().unwrap();
    let mut met = 0;
    for r in rows.iter().filter(|r| r[1] == "fold-continuation") {
        let (a, p) = (num(r[3]), num(r[4]));
        let on_slice: Vec<f64> = rows
            .iter()
            .filter(|s| s[1] == "slices" && s[2] == r[2] && (num(s[3]) - a).abs() < 1e-12)
            .map(|s| num(s[4]))
            .collect();
        if on_slice.is_empty() {
            continue;
        }
        let gap = on_slice
            .iter()
            .map(|q| (q - p).abs())
            .fold(f64::INFINITY, f64::min);
        assert!(gap < 1e-9 * p, "{} at {a}: {p}, slices {on_slice:?}", r[2]);
        met += 1;
    }
    // both continued transitions of the default scenario meet several slices
    assert!(met >= 4, "{met}\n{text}");
    // summary.json says where each boundary begins and ends: the snowball
    // fold's curve from the across bound 0 to inside the range, where it
    // meets the large-cap fold (a cusp near 50.6 deg)
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(d.join("summary.json")).unwrap()).unwrap();
    let curve = summary["boundaries"]
        .as_array()
        .unwrap()
        .iter()
        .find(|b| b["method"] == "fold-continuation" && b["transition"] == "polar-caps -> snowball")
        .expect("the snowball fold's curve");
    assert_eq!(
        curve["ends"],
        serde_json::json!(["across bound", "inside"]),
        "{curve}"
    );
    assert_eq!(curve["first"][0], 0.0, "{curve}");
    let end = curve["last"][0].as_f64().unwrap();
    assert!(end > 45.0 && end < 55.0, "{curve}");
}

/// A slice that fails is reported as failed, never as "no stable climate"
/// (README, impossible results). With B = 1 W m-2 K-1, A = 600 and 1000
/// W m-2 put every equilibrium of the flux range below absolute zero
/// (T = (Q(1 - α) - A)/B, Budyko 1969 for the law), A = 200 does not: the
/// map flags slices 1 and 2 in map.nc and summary.json; a map whose every
/// slice fails exits 1 and writes nothing.
#[test]
fn failed_slices_are_reported_not_mapped_as_empty() {
    use icefold::io::netcdf::FILL_I32;
    let dir = temp_dir("failed-slices");
    let args = |across: &str, out: &Path| {
        vec![
            "map".to_string(),
            "--across".into(),
            across.into(),
            "--set".into(),
            "radiation.b=1".into(),
            "--cells".into(),
            "20".into(),
            "--quiet".into(),
            "--out".into(),
            out.to_str().unwrap().into(),
        ]
    };
    let out = dir.join("some");
    let a = args("radiation.a=200:1000:3", &out);
    let (code, stdout, err) = icefold(&a.iter().map(String::as_str).collect::<Vec<_>>());
    assert_eq!(code, 0, "{err}");
    assert!(stdout.contains("2 of 3 slices failed"), "{stdout}");
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap();
    let failed: Vec<u64> = summary["failed_slices"]
        .as_array()
        .unwrap()
        .iter()
        .map(|s| s["slice"].as_u64().unwrap())
        .collect();
    assert_eq!(failed, vec![1, 2]);
    let mut r = netcdf3::FileReader::open(out.join("map.nc")).unwrap();
    let flags = r.read_var_i32("slice_failed").unwrap();
    assert_eq!(flags, vec![0, 1, 1]);
    let regime = r.read_var_i32("regime").unwrap();
    for (k, v) in regime.iter().enumerate() {
        // [flux][slice]: slices 1 and 2 are missing, slice 0 is not
        assert_eq!(*v == FILL_I32, k % 3 != 0, "cell {k}: {v}");
    }
    let none = dir.join("none");
    let a = args("radiation.a=900:1000:2", &none);
    let (code, _, err) = icefold(&a.iter().map(String::as_str).collect::<Vec<_>>());
    assert_eq!(code, 1, "{err}");
    assert!(err.contains("every slice of the map failed"), "{err}");
    assert!(!none.exists());
    let _ = std::fs::remove_dir_all(&dir);
}

/// `merge` checks every field of a shard (README, merge): a hand-edited
/// shard is refused with the field named, exit 2 (common practice, no
/// source).
#[test]
fn merge_rejects_hand_edited_shards() {
    let dir = temp_dir("edited-shards");
    let shards = dir.join("shards");
    for k in 0..2 {
        let (code, _, err) = icefold(&[
            "map",
            "--across",
            "orbit.obliquity=0:90:4",
            "--cells",
            "20",
            "--shard",
            &format!("{k}/2"),
            "--quiet",
            "--out",
            shards.to_str().unwrap(),
        ]);
        assert_eq!(code, 0, "{err}");
    }
    let merged = dir.join("map");
    let merge = || {
        icefold(&[
            "merge",
            shards.to_str().unwrap(),
            "--out",
            merged.to_str().unwrap(),
            "--quiet",
        ])
    };
    let (code, _, err) = merge();
    assert_eq!(code, 0, "{err}");
    let file = shards.join("shard-1-of-2.json");
    let original: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&file).unwrap()).unwrap();
    type Edit = fn(&mut serde_json::Value);
    let edits: [(&str, Edit); 10] = [
        ("slices[0].regime[3]", |v| {
            v["slices"][0]["regime"][3] = 64.into()
        }),
        ("slices[0].across", |v| {
            v["slices"][0]["across"] = 31.0.into()
        }),
        ("slices[0].index", |v| v["slices"][0]["index"] = 2.into()),
        ("scenario", |v| v["scenario"]["orbit.flux"] = 1000.0.into()),
        ("spec.cells", |v| v["spec"]["cells"] = 1.into()),
        ("spec.across", |v| v["spec"]["count"] = 10_000_000.into()),
        ("slices[0].points[0]", |v| {
            v["slices"][0]["points"][0]["global_mean_c"] = (-300.0).into()
        }),
        ("slices[0].points[1]", |v| {
            v["slices"][0]["points"][1]["residual"] = (-1.0).into()
        }),
        ("slices[0].points[2].habitable_fraction", |v| {
            v["slices"][0]["points"][2]["habitable_fraction"] = 1.5.into()
        }),
        ("slices[0].climates[5][0].habitable_fraction", |v| {
            v["slices"][0]["climates"][5][0]["habitable_fraction"] = 1.5.into()
        }),
    ];
    for (field, edit) in edits {
        let mut v = original.clone();
        edit(&mut v);
        std::fs::write(&file, serde_json::to_string(&v).unwrap()).unwrap();
        let (code, _, err) = merge();
        assert_eq!(code, 2, "{field}: {err}");
        assert!(err.contains(&format!("field `{field}`")), "{field}: {err}");
        assert_eq!(err.trim().lines().count(), 1, "{err}");
    }
    let _ = std::fs::remove_dir_all(&dir);
}
