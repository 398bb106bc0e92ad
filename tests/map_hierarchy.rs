//! `map --hierarchy` (issue 11): the same map in the three models of the
//! hierarchy. Each model's part equals a plain `map` of that model's
//! scenario built the same way (the `--set` lines of `trace --hierarchy`),
//! bit for bit; 1 and 2 threads write the same bytes; the annual-mean
//! model has the small-ice-cap multistability window and the seasonal
//! model with sea ice has none (Wagner & Eisenman 2015); options that
//! make no sense with it are refused.
//!
//! Small grids (16 bands, 24 steps per year, three slices, 40 cells) keep
//! the whole file at about 20 s in release builds on 2 cores.
mod common;
use common::{icefold, temp_dir};
use std::path::Path;

const SEA_ICE: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/scenarios/sea-ice.toml");

/// The map of these tests: three slices in the diffusivity D, traced in
/// the stellar flux over 1220..1420 W m-2 (the snowball folds of the
/// 16-band models lie in 1235..1290, the small ice cap of the annual-mean
/// model ends at 1340..1420).
const MAP: [&str; 14] = [
    "map",
    SEA_ICE,
    "--set",
    "grid.bands=16",
    "--set",
    "seasons.steps_per_year=24",
    "--across",
    "transport.diffusivity=0.5:0.7:3",
    "--vary",
    "orbit.flux",
    "--from",
    "1220",
    "--to",
    "1420",
];

/// The models as `trace --hierarchy` names them, with the `--set` lines
/// that make each model's scenario: F_b = 4 W m-2 of the sea-ice scenario
/// (WE15 Table 1) as forcing in (a) and (b), as `trace --hierarchy` adds it.
const MODELS: [(&str, [&str; 3]); 3] = [
    (
        "annual-mean",
        [
            "seasons.enabled=false",
            "seaice.enabled=false",
            "radiation.forcing=4",
        ],
    ),
    (
        "seasonal",
        [
            "seasons.enabled=true",
            "seaice.enabled=false",
            "radiation.forcing=4",
        ],
    ),
    (
        "seasonal-sea-ice",
        [
            "seasons.enabled=true",
            "seaice.enabled=true",
            "radiation.forcing=0",
        ],
    ),
];

fn run(out: &Path, extra: &[&str]) {
    let mut a: Vec<&str> = MAP.to_vec();
    a.extend(["--cells", "40", "--quiet", "--out", out.to_str().unwrap()]);
    a.extend(extra);
    let (code, _, err) = icefold(&a);
    assert_eq!(code, 0, "{a:?}: {err}");
}

fn read(p: &Path) -> String {
    std::fs::read_to_string(p).unwrap()
}

/// The rows of a CSV after its header whose first field is `model`, that
/// field removed.
fn rows_of(csv: &str, model: &str) -> Vec<String> {
    csv.lines()
        .skip(1)
        .filter_map(|l| l.strip_prefix(&format!("{model},")).map(String::from))
        .collect()
}

fn body(csv: &str) -> Vec<String> {
    csv.lines().skip(1).map(String::from).collect()
}

fn i32s(r: &mut netcdf3::FileReader, v: &str) -> Vec<i32> {
    r.read_var_i32(v).unwrap()
}

fn f64s(r: &mut netcdf3::FileReader, v: &str) -> Vec<f64> {
    r.read_var_f64(v).unwrap()
}

/// The one run of the hierarchy map the checks share (2 threads), its
/// run with 1 thread, and the plain map of each model (2 threads).
#[test]
fn hierarchy_map_equals_plain_maps_and_ignores_threads() {
    let root = temp_dir("maphier");
    let (h2, h1) = (root.join("h2"), root.join("h1"));
    run(&h2, &["--hierarchy", "--threads", "2"]);
    run(&h1, &["--hierarchy", "--threads", "1"]);
    // 1 and 2 threads: the same bytes in every file (common practice, no
    // source: results must not depend on the worker count)
    let files = [
        "map.csv",
        "boundaries.csv",
        "map.nc",
        "map_hierarchy.svg",
        "map_hierarchy.png",
        "summary.json",
        "scenario.toml",
    ];
    for f in files {
        let (a, b) = (std::fs::read(h2.join(f)), std::fs::read(h1.join(f)));
        assert!(a.is_ok(), "{f} missing");
        assert!(
            a.unwrap() == b.unwrap(),
            "{f} differs between 1 and 2 threads"
        );
    }
    let csv = read(&h2.join("map.csv"));
    let bounds = read(&h2.join("boundaries.csv"));
    let summary: serde_json::Value = serde_json::from_str(&read(&h2.join("summary.json"))).unwrap();
    assert!(
        summary["command"]
            .as_str()
            .unwrap()
            .ends_with(" --hierarchy")
    );
    let mut nc = netcdf3::FileReader::open(h2.join("map.nc")).unwrap();
    let (nclim, masks) = {
        let ds = nc.data_set();
        assert_eq!(ds.dim_size("model"), Some(3));
        assert_eq!(
            ds.get_var_attr_as_string("model", "flag_meanings").unwrap(),
            "annual_mean seasonal seasonal_sea_ice"
        );
        // CF: every variable has a long_name and units (CF-1.8 sections
        // 3.1 and 3.2)
        for v in ds.get_var_names() {
            for a in ["long_name", "units"] {
                assert!(ds.get_var_attr_as_string(&v, a).is_some(), "{v} has no {a}");
            }
        }
        (
            ds.dim_size("climate").unwrap(),
            ds.get_var_attr_i32("regime", "flag_masks")
                .unwrap()
                .to_vec(),
        )
    };
    let (ny, nx) = (40, 3);
    for (k, (name, sets)) in MODELS.iter().enumerate() {
        // the plain map of the model's scenario (an independent computation
        // path only in the sense of its own run: the same code by design)
        let plain = root.join(name);
        let mut extra: Vec<&str> = vec!["--threads", "2"];
        for s in sets {
            extra.extend(["--set", s]);
        }
        run(&plain, &extra);
        let pcsv = read(&plain.join("map.csv"));
        // the hierarchy's map.csv has both residual columns (W m-2 for
        // the annual-mean model, K for the seasonal ones), the other one
        // empty: without it, the plain map's row
        let (unit, other) = if k == 0 {
            ("residual_wm2", "residual_k")
        } else {
            ("residual_k", "residual_wm2")
        };
        let header: Vec<&str> = csv.lines().next().unwrap().split(',').skip(1).collect();
        let drop = header.iter().position(|c| *c == other).unwrap();
        let kept: Vec<&str> = header
            .iter()
            .enumerate()
            .filter(|(i, _)| *i != drop)
            .map(|(_, c)| *c)
            .collect();
        assert_eq!(kept.join(","), pcsv.lines().next().unwrap());
        assert!(kept.contains(&unit));
        let rows: Vec<String> = rows_of(&csv, name)
            .iter()
            .map(|r| {
                let f: Vec<&str> = r.split(',').collect();
                assert_eq!(f.len(), header.len(), "{r}");
                assert_eq!(f[drop], "", "{name}: {other} filled");
                f.iter()
                    .enumerate()
                    .filter(|(i, _)| *i != drop)
                    .map(|(_, c)| *c)
                    .collect::<Vec<_>>()
                    .join(",")
            })
            .collect();
        assert_eq!(rows, body(&pcsv), "{name}: map.csv rows");
        assert!(!body(&pcsv).is_empty());
        let pb = read(&plain.join("boundaries.csv"));
        assert_eq!(rows_of(&bounds, name), body(&pb), "{name}: boundaries");
        let ps: serde_json::Value =
            serde_json::from_str(&read(&plain.join("summary.json"))).unwrap();
        assert_eq!(summary["models"][k]["model"], *name);
        assert_eq!(summary["models"][k]["map"], ps, "{name}: summary");
        // map.nc: the model's slab of every variable equals the plain map's
        let mut p = netcdf3::FileReader::open(plain.join("map.nc")).unwrap();
        let pclim = p.data_set().dim_size("climate").unwrap();
        for v in ["regime", "stable_climates"] {
            let (h, q) = (i32s(&mut nc, v), i32s(&mut p, v));
            assert_eq!(&h[k * ny * nx..(k + 1) * ny * nx], &q[..], "{name}: {v}");
        }
        let (h, q) = (i32s(&mut nc, "slice_failed"), i32s(&mut p, "slice_failed"));
        assert_eq!(&h[k * nx..(k + 1) * nx], &q[..], "{name}: slice_failed");
        let token = name.replace('-', "_");
        let h = f64s(&mut nc, &format!("slice_max_residual_{token}"));
        let q = f64s(&mut p, "slice_max_residual");
        assert_eq!(
            h.iter().map(|x| x.to_bits()).collect::<Vec<_>>(),
            q.iter().map(|x| x.to_bits()).collect::<Vec<_>>(),
            "{name}: slice_max_residual"
        );
        // per climate: the plain map's climates first, fill past them
        let fill_i = icefold::io::netcdf::FILL_I32;
        let fill_f = icefold::io::netcdf::FILL_F64;
        let (h, q) = (i32s(&mut nc, "state"), i32s(&mut p, "state"));
        for c in 0..ny * nx {
            for j in 0..nclim {
                let want = if j < pclim { q[c * pclim + j] } else { fill_i };
                assert_eq!(h[(k * ny * nx + c) * nclim + j], want, "{name}: state");
            }
        }
        for v in [
            "global_mean_temperature",
            "ice_edge_north_deg",
            "ice_edge_south_deg",
            "habitable_fraction",
        ] {
            let (h, q) = (f64s(&mut nc, v), f64s(&mut p, v));
            for c in 0..ny * nx {
                for j in 0..nclim {
                    let want = if j < pclim { q[c * pclim + j] } else { fill_f };
                    assert_eq!(
                        h[(k * ny * nx + c) * nclim + j].to_bits(),
                        want.to_bits(),
                        "{name}: {v}"
                    );
                }
            }
        }
    }
    // Wagner & Eisenman (2015, J. Climate 28, 3998): with their Table 1
    // parameters the annual-mean diffusive model has the small-ice-cap
    // instability, a window where a small polar cap and an ice-free
    // planet are both stable; the seasonal model with sea-ice
    // thermodynamics has none (its ice edge retreats without a jump).
    // In the map: cells whose regime holds both ice-free and polar-caps
    // climates in model (a), and in none of model (c).
    let both = 1 | 2; // ice_free and polar_caps bits (flag_masks of regime)
    assert_eq!(&masks[..2], &[1, 2], "state bits: ice_free, polar_caps");
    let regime = i32s(&mut nc, "regime");
    let window = |k: usize| {
        regime[k * ny * nx..(k + 1) * ny * nx]
            .iter()
            .filter(|r| **r >= 0 && (**r & both) == both)
            .count()
    };
    assert!(
        window(0) >= 3,
        "(a): {} cells with a small cap and no ice",
        window(0)
    );
    assert_eq!(window(2), 0, "(c) has the small-ice-cap window");
    // and (c) does have stable partial ice caps (the cap exists, only
    // its bistability with the ice-free planet is gone)
    assert!(
        regime[2 * ny * nx..]
            .iter()
            .any(|r| *r >= 0 && (*r & 2) == 2),
        "(c) has no stable polar caps"
    );
    let _ = std::fs::remove_dir_all(&root);
}

/// What makes no sense with `--hierarchy` is refused with exit 2, one
/// line naming the option, and nothing written (our requirement, issue
/// 11).
#[test]
fn hierarchy_map_refuses_what_makes_no_sense() {
    let d = temp_dir("maphier-bad");
    let cases: Vec<(Vec<&str>, &str)> = vec![
        (vec!["--shard", "0/2"], "--shard"),
        (vec!["--fold-curves"], "--fold-curves"),
        (
            vec!["--vary", "radiation.forcing", "--from", "-5", "--to", "5"],
            "radiation.forcing",
        ),
        (
            vec!["--across", "radiation.forcing=-2:2:3"],
            "radiation.forcing",
        ),
        // the sea-ice model has no albedo threshold (ice where E < 0)
        (
            vec!["--across", "albedo.threshold=-5:0:3"],
            "seasonal-sea-ice",
        ),
    ];
    for (extra, named) in cases {
        let mut a: Vec<&str> = vec!["map", SEA_ICE, "--hierarchy"];
        a.extend([
            "--set",
            "grid.bands=16",
            "--set",
            "seasons.steps_per_year=24",
        ]);
        if !extra.contains(&"--across") {
            a.extend(["--across", "transport.diffusivity=0.5:0.7:3"]);
        }
        a.extend(&extra);
        a.extend(["--quiet", "--out", d.to_str().unwrap()]);
        let (code, _, stderr) = icefold(&a);
        assert_eq!(code, 2, "{extra:?}: {stderr}");
        assert_eq!(stderr.trim().lines().count(), 1, "{extra:?}: {stderr}");
        assert!(stderr.contains(named), "{extra:?}: {stderr}");
        assert!(!d.exists(), "{extra:?} wrote output");
    }
}
