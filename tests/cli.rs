//! End-to-end command-line tests in a temporary directory.
mod common;
use common::{icefold, temp_dir};

#[test]
fn solve_writes_every_output() {
    let d = temp_dir("solve");
    let (code, stdout, stderr) = icefold(&["solve", "--out", d.to_str().unwrap()]);
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stdout.contains("polar-caps") && stdout.contains("snowball"),
        "{stdout}"
    );
    let csv = std::fs::read_to_string(d.join("profile.csv")).unwrap();
    assert!(csv.starts_with(
        "equilibrium,latitude_deg,sin_latitude,temperature_c,albedo,insolation_wm2,absorbed_wm2,olr_wm2,transport_wm2,habitable_fraction\n"
    ));
    assert_eq!(csv.lines().count(), 1 + 2 * 90);
    assert!(!csv.contains("NaN"));
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(d.join("summary.json")).unwrap()).unwrap();
    let eq = summary["equilibria"].as_array().unwrap();
    assert_eq!(eq[0]["state"], "polar-caps");
    for key in [
        "global_mean_temperature_c",
        "ice_area_fraction",
        "ice_edges_deg",
        "planetary_albedo",
        "unstable_modes",
        "energy_imbalance_wm2",
        "newton_iterations",
    ] {
        assert!(eq[0].get(key).is_some(), "missing {key}");
    }
    for f in ["profiles.svg", "profiles.png", "scenario.toml"] {
        assert!(d.join(f).exists(), "{f}");
    }
    // a profile from this run is a valid extra start
    let d2 = temp_dir("solve2");
    let (code, _, stderr) = icefold(&[
        "solve",
        "--start",
        d.join("profile.csv").to_str().unwrap(),
        "--out",
        d2.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{stderr}");
}

#[test]
fn sun_writes_tables() {
    let d = temp_dir("sun");
    let (code, _, stderr) = icefold(&["sun", "--out", d.to_str().unwrap()]);
    assert_eq!(code, 0, "{stderr}");
    let csv = std::fs::read_to_string(d.join("insolation.csv")).unwrap();
    assert!(csv.starts_with("latitude_deg,day_of_year,insolation_wm2\n"));
    let annual = std::fs::read_to_string(d.join("annual_insolation.csv")).unwrap();
    assert_eq!(annual.lines().count(), 91);
}

#[test]
fn bad_input_exits_2_and_writes_nothing() {
    let d = temp_dir("bad");
    let bad = d.with_extension("toml");
    std::fs::write(&bad, "[orbit]\nflux = \n").unwrap();
    let cases: Vec<(Vec<&str>, &str)> = vec![
        (vec!["solve", "missing.toml"], "cannot read scenario"),
        (vec!["solve", bad.to_str().unwrap()], ":2:"),
        (
            vec!["solve", "--set", "orbit.obliqity=3"],
            "did you mean `orbit.obliquity`",
        ),
        (vec!["solve", "--set", "orbit.flux=-5"], "orbit.flux"),
        (vec!["solve", "--set", "orbit.obliquity=190"], "0 to 180"),
        (vec!["solve", "--set", "albedo.ice=1.5"], "albedo.ice"),
        (vec!["solve", "--set", "grid.bands=2"], "grid.bands"),
        (vec!["solve", "--set", "grid.bands=100000000"], "grid.bands"),
        (vec!["solve", "--set", "radiation.b=inf"], "radiation.b"),
        (vec!["solve", "--bogus"], "unexpected argument '--bogus'"),
        (vec!["launch"], "unrecognized subcommand 'launch'"),
        (vec!["trcae"], "similar subcommand exists: 'trace'"),
        (
            vec!["trace", "--cells", "3"],
            "unexpected argument '--cells'",
        ),
        (
            vec!["solve", "--start", "a", "--start", "b"],
            "cannot be used multiple times",
        ),
        (vec!["trace", "--vary", "orbit.colour"], "possible values"),
        (vec!["run"], "--years"),
    ];
    for (args, expect) in cases {
        let mut a = args.clone();
        a.extend(["--out", d.to_str().unwrap()]);
        let (code, _, stderr) = icefold(&a);
        assert_eq!(code, 2, "{args:?}: {stderr}");
        assert!(stderr.contains(expect), "{args:?}: {stderr}");
        assert_eq!(stderr.trim().lines().count(), 1, "one-line error: {stderr}");
        assert!(!d.exists(), "{args:?} wrote output");
    }
}

#[test]
fn check_prints_resolved_scenario() {
    let (code, stdout, _) = icefold(&["check", "--set", "orbit.flux=1300"]);
    assert_eq!(code, 0);
    assert!(stdout.contains("flux = 1300.0"));
}

/// The flux of the edge-family corner fold of topology `label` in a trace
/// summary.
fn ef_corner(summary: &serde_json::Value, label: &str) -> f64 {
    summary["edge_family"]["folds"]
        .as_array()
        .expect("edge_family folds")
        .iter()
        .find(|f| f["topology"] == label && f["corner"] == true)
        .and_then(|f| f["orbit.flux"].as_f64())
        .expect("corner fold")
}

#[test]
fn trace_writes_outputs_and_rejects_bad_ranges() {
    let d = temp_dir("trace");
    let (code, stdout, stderr) = icefold(&["trace", "--quiet", "--out", d.to_str().unwrap()]);
    assert_eq!(code, 0, "{stderr}");
    assert!(stdout.contains("polar-caps -> snowball"), "{stdout}");
    let b = std::fs::read_to_string(d.join("branches.csv")).unwrap();
    assert!(b.starts_with("branch,orbit.flux,global_mean_temperature_c,ice_area_fraction,ice_edge_north_deg,state,stable,unstable_modes,residual,habitable_fraction\n"));
    let f = std::fs::read_to_string(d.join("folds.csv")).unwrap();
    assert!(f.starts_with("branch,orbit.flux,global_mean_temperature_c,ice_area_fraction,ice_edge_north_deg,from_state,to_state,jump_time_yr,residual,habitable_fraction,d_orbit_obliquity,d_orbit_eccentricity,d_radiation_co2_ppm,d_radiation_forcing,d_radiation_a,d_radiation_b,d_transport_diffusivity,d_albedo_ice,d_albedo_open,d_albedo_threshold\n"), "{f}");
    for x in ["summary.json", "hysteresis.svg", "hysteresis.png"] {
        assert!(d.join(x).exists());
    }
    // the edge-family large-cap fold and the traced one are two
    // discretisations of the same model: they agree to a fraction of a
    // W m-2 (common practice, no source)
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(d.join("summary.json")).unwrap()).unwrap();
    // the integrated jump carries its transition time and no note here
    let fold0 = &summary["folds"][0];
    assert!(
        fold0["jump_years"].as_f64().is_some_and(|y| y > 0.0),
        "{fold0}"
    );
    assert!(fold0["jump_note"].is_null(), "{fold0}");
    let ef = summary["edge_family"]["folds"]
        .as_array()
        .expect("edge_family folds");
    let large = ef
        .iter()
        .filter(|f| f["topology"] == "polar-caps" && f["corner"] == false)
        .map(|f| f["orbit.flux"].as_f64().unwrap())
        .fold(f64::INFINITY, f64::min);
    let traced = summary["folds"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["value"].as_f64().unwrap())
        .fold(f64::INFINITY, f64::min);
    assert!(
        (large - traced).abs() < 0.5,
        "edge family {large} vs traced {traced}"
    );
    assert!(stdout.contains("edge-family folds"), "{stdout}");
    // every fold has its sensitivities or says why not (no NaN anywhere)
    for fold in summary["folds"].as_array().unwrap() {
        match &fold["sensitivities"] {
            serde_json::Value::Null => {
                assert!(
                    fold["sensitivities_error"]
                        .as_str()
                        .is_some_and(|e| !e.is_empty())
                )
            }
            serde_json::Value::Object(m) => {
                assert!(m.values().all(|v| v.as_f64().is_some_and(f64::is_finite)));
                assert!(fold["sensitivities_error"].is_null());
            }
            other => panic!("sensitivities: {other}"),
        }
    }
    assert_eq!(
        summary["sensitivity_units"]["orbit.obliquity"],
        "W m-2 / degree"
    );
    // the default range (0.8 to 1.15 of the flux) ends while the snowball
    // is still stable: it grows until the snowball melts, and the window
    // closes at the snowball's corner fold, which the edge-parametrised
    // families place at the same flux to the two discretisations'
    // difference (common practice, no source)
    assert!(
        stdout.contains("range extended from [1070.08, 1538.24]"),
        "{stdout}"
    );
    assert_eq!(summary["range_extended"], true);
    assert_eq!(summary["requested_range"][1], 1538.24);
    let w = &summary["bistable_windows"][0];
    assert_eq!(w["open_at_to"], false, "{w}");
    let melt = ef_corner(&summary, "snowball");
    let to = w["to"].as_f64().unwrap();
    assert!(
        (to - melt).abs() < 1e-3 * melt,
        "window ends at {to}, snowball melts at {melt}"
    );
    assert!(summary["range"][1].as_f64().unwrap() > to);
    // a range the user gives is kept, and the open window said plainly
    let d2 = temp_dir("trace-fixed");
    let (code, stdout, stderr) = icefold(&[
        "trace",
        "--quiet",
        "--to",
        "1538.24",
        "--out",
        d2.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stdout.contains("open: still bistable at --to 1538.24"),
        "{stdout}"
    );
    let s2: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(d2.join("summary.json")).unwrap()).unwrap();
    assert_eq!(s2["range_extended"], false);
    assert_eq!(s2["bistable_windows"][0]["open_at_to"], true);
    let svg = std::fs::read_to_string(d2.join("hysteresis.svg")).unwrap();
    assert!(svg.contains("bistable window open at orbit.flux = 1538.24"));
    let bad = temp_dir("trace-bad");
    for args in [
        vec!["trace", "--vary", "orbit.colour"],
        vec!["trace", "--vary", "grid.bands"],
        vec!["trace", "--from", "1300", "--to", "1200"],
        vec!["trace", "--from", "1300", "--to", "1300"],
        vec!["trace", "--from", "abc"],
        vec![
            "trace",
            "--vary",
            "orbit.obliquity",
            "--from",
            "0",
            "--to",
            "200",
        ],
    ] {
        let mut a = args.clone();
        a.extend(["--out", bad.to_str().unwrap()]);
        let (code, _, stderr) = icefold(&a);
        assert_eq!(code, 2, "{args:?}: {stderr}");
        assert!(!bad.exists());
    }
}

#[test]
fn every_command_has_help_and_the_tool_a_version() {
    // clap's help and version go to stdout with exit 0 (common practice, no source)
    for cmd in [
        "trace",
        "map",
        "merge",
        "solve",
        "periodic",
        "run",
        "sun",
        "thermostat",
        "check",
        "figures",
        "completions",
    ] {
        let (code, stdout, stderr) = icefold(&[cmd, "--help"]);
        assert_eq!(code, 0, "{cmd}: {stderr}");
        assert!(
            stdout.contains(&format!("Usage: icefold {cmd}")),
            "{cmd}: {stdout}"
        );
    }
    let (code, stdout, _) = icefold(&["--version"]);
    assert_eq!(code, 0);
    assert_eq!(
        stdout.trim(),
        format!("icefold {}", env!("CARGO_PKG_VERSION"))
    );
    let (code, stdout, _) = icefold(&["map", "--help"]);
    assert_eq!(code, 0);
    for opt in [
        "--across",
        "--vary",
        "--cells",
        "--threads",
        "--shard",
        "--fold-curves",
        "--hierarchy",
        "--set",
        "--out",
        "--quiet",
    ] {
        assert!(stdout.contains(opt), "map --help lacks {opt}");
    }
}

#[test]
fn completions_for_each_shell() {
    for (shell, marker) in [
        ("bash", "complete -F"),
        ("zsh", "#compdef icefold"),
        ("fish", "complete -c icefold"),
    ] {
        let (code, stdout, stderr) = icefold(&["completions", shell]);
        assert_eq!(code, 0, "{shell}: {stderr}");
        assert!(
            stdout.contains(marker),
            "{shell}: {}",
            &stdout[..stdout.len().min(200)]
        );
        assert!(
            stdout.contains("periodic") && stdout.contains("fold-curves"),
            "{shell}"
        );
    }
    let (code, _, stderr) = icefold(&["completions", "tcsh"]);
    assert_eq!(code, 2, "{stderr}");
}

/// The classic scenario's large-cap fold is smooth: folds.csv and
/// summary.json carry the same sensitivities, the continued parameter has
/// none, and the CO2 one obeys the structure of the linear model
/// (dS/dC = -(5.35/C) dS/dA: CO2 only shifts A; from the structure of the
/// linear model, Myhre et al. 1998 forcing).
#[test]
fn trace_writes_fold_sensitivities() {
    let d = temp_dir("trace-sens");
    let scenario = concat!(env!("CARGO_MANIFEST_DIR"), "/scenarios/classic.toml");
    let (code, _, stderr) = icefold(&[
        "trace",
        scenario,
        "--from",
        "1100",
        "--to",
        "1300",
        "--quiet",
        "--out",
        d.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    let csv = std::fs::read_to_string(d.join("folds.csv")).unwrap();
    let mut lines = csv.lines();
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    let row: Vec<&str> = lines.next().expect("one fold").split(',').collect();
    assert!(!header.contains(&"d_orbit_flux"), "{header:?}");
    let cell = |name: &str| -> f64 {
        let k = header.iter().position(|h| *h == name).unwrap();
        row[k].parse().unwrap()
    };
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(d.join("summary.json")).unwrap()).unwrap();
    let s = &summary["folds"][0]["sensitivities"];
    assert!(s.get("orbit.flux").is_none());
    for key in [
        "radiation.a",
        "radiation.co2_ppm",
        "albedo.ice",
        "transport.diffusivity",
    ] {
        let col = format!("d_{}", key.replace('.', "_"));
        assert_eq!(cell(&col), s[key].as_f64().unwrap(), "{key}");
    }
    let (da, dc) = (cell("d_radiation_a"), cell("d_radiation_co2_ppm"));
    assert!(
        (dc + 5.35 / 280.0 * da).abs() < 1e-9 * dc.abs(),
        "{dc} vs {da}"
    );
    // a radiative forcing F enters the balance as -A does (Wagner &
    // Eisenman 2015, eq. 1, with L = A + B T): the fold moves as much per
    // W m-2 of F as per -1 W m-2 of A
    let df = cell("d_radiation_forcing");
    assert!((df + da).abs() < 1e-9 * da.abs(), "{df} vs {da}");
}

/// Every branch once, every row once: the default trace lists each traced
/// point a single time (a branch started on a range bound used to repeat
/// its first point), and its hysteresis loop is one branch with the four
/// folds of the classic picture (large cap, ice-free corner, small cap,
/// plus the snowball melt when the range reaches it; North 1975 and 1984).
#[test]
fn trace_rows_and_branches_are_not_repeated() {
    let d = temp_dir("trace-once");
    let (code, _, stderr) = icefold(&[
        "trace",
        "--from",
        "1100",
        "--to",
        "1900",
        "--quiet",
        "--out",
        d.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    let csv = std::fs::read_to_string(d.join("branches.csv")).unwrap();
    let rows: Vec<&str> = csv.lines().collect();
    let unique: std::collections::HashSet<&&str> = rows.iter().collect();
    assert_eq!(rows.len(), unique.len(), "repeated rows");
    let folds = std::fs::read_to_string(d.join("folds.csv")).unwrap();
    assert_eq!(folds.lines().count(), 1 + 4, "{folds}");
    let branches: std::collections::HashSet<&str> = folds
        .lines()
        .skip(1)
        .map(|l| l.split(',').next().unwrap())
        .collect();
    assert_eq!(branches.len(), 1, "{folds}");
}

#[test]
fn a_closed_stdout_is_not_a_crash() {
    // `icefold check | head -0`: the reader is gone before the text is
    // written; the run succeeded and must say so without a panic
    use std::process::{Command, Stdio};
    let mut child = Command::new(env!("CARGO_BIN_EXE_icefold"))
        .args(["check"])
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("run icefold");
    drop(child.stdout.take());
    let out = child.wait_with_output().expect("wait");
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(0), "{stderr}");
    assert!(!stderr.contains("panicked"), "{stderr}");
}

/// Inputs are read with bounded resources (README, bounded inputs): a
/// device that never ends, an oversized file, a FIFO nobody writes to and
/// over-long or control-character text are one-line errors with exit 2
/// (common practice, no source).
#[test]
fn inputs_are_bounded() {
    let dir = temp_dir("bounded");
    std::fs::create_dir_all(&dir).unwrap();
    let big = dir.join("big.toml");
    std::fs::write(&big, "#".repeat(2 << 20)).unwrap();
    let fifo = dir.join("fifo");
    let made = std::process::Command::new("mkfifo")
        .arg(&fifo)
        .status()
        .is_ok_and(|s| s.success());
    let long_name = format!("name={}", "x".repeat(101));
    let mut cases: Vec<(Vec<&str>, &str)> = vec![
        (vec!["check", "/dev/zero"], "more than the 1 MiB"),
        (vec!["check", big.to_str().unwrap()], "more than the 1 MiB"),
        (vec!["check", dir.to_str().unwrap()], "is a directory"),
        (vec!["check", "--set", &long_name], "at most 100 characters"),
        (
            vec!["check", "--set", "description=a\u{7}b"],
            "control characters",
        ),
    ];
    if made {
        cases.push((vec!["check", fifo.to_str().unwrap()], "no data within 10 s"));
    } else {
        eprintln!("mkfifo unavailable: FIFO case skipped");
    }
    for (args, want) in cases {
        let (code, _, err) = icefold(&args);
        assert_eq!(code, 2, "{args:?}: {err}");
        assert_eq!(err.trim().lines().count(), 1, "{args:?}: {err}");
        assert!(err.contains(want), "{args:?}: {err}");
    }
    // exactly at the name limit is fine
    let ok_name = format!("name={}", "x".repeat(100));
    let (code, _, err) = icefold(&["check", "--set", &ok_name]);
    assert_eq!(code, 0, "{err}");
    let _ = std::fs::remove_dir_all(&dir);
}

/// States below absolute zero are not climates (README, impossible
/// results): with A = 1000 W m-2 and B = 1 W m-2 K-1 the linear OLR law
/// balances the absorbed sunlight only below 0 K (T = (Q(1 - α) - A)/B;
/// Budyko 1969 for the law). `solve` and `periodic` refuse (exit 1,
/// nothing written); `trace` cuts the branches there and says so.
#[test]
fn states_below_absolute_zero_are_not_reported() {
    let dir = temp_dir("abszero");
    let sets = ["--set", "radiation.a=1000", "--set", "radiation.b=1"];
    for cmd in ["solve", "periodic"] {
        let out = dir.join(cmd);
        let mut args = vec![cmd, "--out", out.to_str().unwrap(), "--quiet"];
        args.extend(sets);
        let (code, _, err) = icefold(&args);
        assert_eq!(code, 1, "{cmd}: {err}");
        assert!(err.contains("below absolute zero"), "{cmd}: {err}");
        assert!(!out.exists(), "{cmd} wrote {}", out.display());
    }
    let out = dir.join("trace");
    let mut args = vec!["trace", "--out", out.to_str().unwrap(), "--quiet"];
    args.extend(sets);
    let (code, _, err) = icefold(&args);
    assert_eq!(code, 0, "{err}");
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap();
    let notes = summary["failures"].to_string();
    assert!(notes.contains("below absolute zero"), "{notes}");
    let branches = std::fs::read_to_string(out.join("branches.csv")).unwrap();
    let header: Vec<&str> = branches.lines().next().unwrap().split(',').collect();
    let col = header
        .iter()
        .position(|h| *h == "global_mean_temperature_c")
        .unwrap();
    for l in branches.lines().skip(1) {
        let t: f64 = l.split(',').nth(col).unwrap().parse().unwrap();
        assert!(t >= -273.15, "{l}");
    }
    let _ = std::fs::remove_dir_all(&dir);
}

/// The largest documented grid solves (README, large grids): 20,000 bands
/// from the warm and cold starts, both equilibria found.
#[test]
fn twenty_thousand_bands_solve() {
    let dir = temp_dir("bands20000");
    let (code, out, err) = icefold(&[
        "solve",
        "--set",
        "grid.bands=20000",
        "--out",
        dir.to_str().unwrap(),
        "--quiet",
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("2 equilibria"), "{out}");
    let _ = std::fs::remove_dir_all(&dir);
}

/// Messages that help (README, bad input): numbers at most 6 significant
/// digits, suggestions only for near misses (common practice, no source).
#[test]
fn messages_are_short_and_suggest_only_near_misses() {
    let (code, _, err) = icefold(&["check", "--set", "orbit.obliquity=180.123456789"]);
    assert_eq!(code, 2);
    assert!(err.contains("= 180.123 is out of range"), "{err}");
    let (_, _, err) = icefold(&["check", "--set", "orbit.flux=1e9"]);
    assert!(err.contains("= 1e9 is out of range"), "{err}");
    let (_, _, err) = icefold(&["check", "--set", "zzz.qqq=3"]);
    assert!(!err.contains("did you mean"), "{err}");
    let (_, _, err) = icefold(&["check", "--set", "orbit.diffusivity=3"]);
    assert!(
        err.contains("did you mean `transport.diffusivity`"),
        "{err}"
    );
    let (_, _, err) = icefold(&["check", "--set", "radiation.aa=3"]);
    assert!(err.contains("did you mean `radiation.a`"), "{err}");
}

/// `check` refuses or names what `run` would refuse (README, documented
/// ranges): a one-hemisphere grid is valid for the annual-mean commands,
/// and `check` says that `run` and `periodic` would refuse it.
#[test]
fn check_names_what_the_seasonal_commands_refuse() {
    let (code, out, err) = icefold(&["check", "--set", "grid.symmetric=true"]);
    assert_eq!(code, 0, "{err}");
    assert!(
        out.lines().next().unwrap().contains("would refuse it"),
        "{out}"
    );
    let (code, _, err) = icefold(&[
        "run",
        "--years",
        "1",
        "--set",
        "grid.symmetric=true",
        "--out",
        temp_dir("symrun").to_str().unwrap(),
    ]);
    assert_eq!(code, 2, "{err}");
}

/// Every traced point states the residual it reached (issue: a residual
/// above the requested tolerance is flagged, with the reason). A planet
/// whose snowball branch ends in an equatorial sliver of open water (the
/// open region 6e-5 deg wide at its end, where the cells are thin and the
/// rounding floor of max |F| high): `summary.json` `residual` counts the
/// points of `branches.csv` and `folds.csv` above `solver.tolerance`, its
/// maximum is the largest in the files, and stdout names it. An
/// equilibrium has F = 0 within the residual it states; common practice,
/// no source.
#[test]
fn residuals_above_the_tolerance_are_flagged() {
    let dir = temp_dir("residual");
    let out = dir.join("t");
    let sets = [
        "orbit.flux=1739.5279780019455",
        "orbit.obliquity=27.83761233792796",
        "orbit.eccentricity=0",
        "radiation.a=222.85525695170716",
        "radiation.b=1.797198791634942",
        "transport.diffusivity=0.36607429816724624",
        "albedo.open=0.2943068084057302",
        "albedo.ice=0.6074595116682497",
        "albedo.threshold=-10.43621923362193",
        "grid.spacing=\"latitude\"",
    ];
    let mut args = vec!["trace", "--out", out.to_str().unwrap()];
    for s in &sets {
        args.extend(["--set", s]);
    }
    let (code, stdout, err) = icefold(&args);
    assert_eq!(code, 0, "{err}");
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap();
    let r = &summary["residual"];
    assert_eq!(r["unit"], "W m-2");
    let tol = r["tolerance"].as_f64().unwrap();
    assert_eq!(tol, 1e-10);
    let mut values = Vec::new();
    for file in ["branches.csv", "folds.csv"] {
        let text = std::fs::read_to_string(out.join(file)).unwrap();
        let header: Vec<&str> = text.lines().next().unwrap().split(',').collect();
        let col = header.iter().position(|h| *h == "residual").unwrap();
        for l in text.lines().skip(1) {
            let v: f64 = l.split(',').nth(col).unwrap().parse().unwrap();
            assert!(v.is_finite() && v >= 0.0, "{l}");
            values.push(v);
        }
    }
    let above = values.iter().filter(|v| **v > tol).count();
    let worst = values.iter().copied().fold(0.0, f64::max);
    assert_eq!(r["points"].as_u64().unwrap() as usize, values.len());
    assert_eq!(
        r["points_above_tolerance"].as_u64().unwrap() as usize,
        above
    );
    assert!(above > 0, "the sliver end stops above 1e-10 W m-2");
    assert_eq!(r["max"].as_f64().unwrap(), worst);
    assert!(worst > 1e-7 && worst < 1e-3, "{worst}");
    assert!(r["note"].as_str().unwrap().contains("rounding floor"));
    let line = stdout
        .lines()
        .find(|l| l.contains("residual:"))
        .expect("flag line");
    assert!(
        line.contains(&format!("{above} of {}", values.len())),
        "{line}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

/// `--figures` writes exactly the asked formats, the same bytes as the
/// default run, and the tables do not depend on it; an unknown choice is
/// refused with exit 2 naming the allowed ones (common practice, no source).
#[test]
fn figures_writes_only_the_asked_formats() {
    let run = |which: Option<&str>, name: &str| {
        let d = temp_dir(name);
        let mut args = vec!["trace", "--quiet", "--out", d.to_str().unwrap()];
        if let Some(w) = which {
            args.extend(["--figures", w]);
        }
        let (code, _, stderr) = icefold(&args);
        assert_eq!(code, 0, "{stderr}");
        d
    };
    let all = run(None, "fig-all");
    let read = |d: &std::path::Path, f: &str| std::fs::read(d.join(f)).ok();
    for (which, svg, png) in [
        ("none", false, false),
        ("svg", true, false),
        ("png", false, true),
        ("all", true, true),
    ] {
        let d = run(Some(which), &format!("fig-{which}"));
        for (file, wanted) in [("hysteresis.svg", svg), ("hysteresis.png", png)] {
            match read(&d, file) {
                Some(bytes) => {
                    assert!(wanted, "--figures {which} wrote {file}");
                    assert_eq!(Some(bytes), read(&all, file), "{file} of --figures {which}");
                }
                None => assert!(!wanted, "--figures {which} did not write {file}"),
            }
        }
        for table in ["branches.csv", "folds.csv"] {
            assert_eq!(
                read(&d, table),
                read(&all, table),
                "{table} with --figures {which}"
            );
        }
    }
    let d = temp_dir("fig-bad");
    let (code, _, stderr) = icefold(&["solve", "--figures", "gif", "--out", d.to_str().unwrap()]);
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("--figures") && stderr.contains("none, svg, png, all"),
        "{stderr}"
    );
    assert!(!d.exists());
}
