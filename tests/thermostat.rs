//! The carbonate-silicate thermostat on the invented demo planet
//! `scenarios/outer-edge.toml`: slow equilibria, the limit cycle, and the
//! independent backward-Euler integration of the fast-slow system (each
//! check names its source).

mod common;
use common::{icefold, temp_dir};
use icefold::Scenario;
use icefold::analysis::branches::{Hysteresis, TraceOptions, trace_all};
use icefold::analysis::coupled::{Coupled, CoupledOptions, CoupledState};
use icefold::analysis::thermostat::{LimitCycle, Outcome, Thermostat};
use icefold::model::Param;
use icefold::model::climate::State;
use icefold::numerics::newton::{NewtonOptions, Workspace, newton};
use icefold::physics::weathering::PPM_PER_YEAR_PER_BAR_GYR;
use std::path::Path;

fn demo(sets: &[&str]) -> Scenario {
    let sets: Vec<String> = sets.iter().map(|s| s.to_string()).collect();
    Scenario::load(Some(Path::new("scenarios/outer-edge.toml")), &sets).unwrap()
}

fn trace(sc: &Scenario) -> Hysteresis {
    let opts = TraceOptions {
        integrate_jumps: false,
        sensitivities: false,
        ..Default::default()
    };
    trace_all(
        &sc.model(),
        Param::Co2,
        1.0,
        1e6,
        30.0,
        -60.0,
        &opts,
        &mut |_| {},
    )
}

fn thermostat(sc: &Scenario, h: &Hysteresis) -> Thermostat {
    Thermostat::new(&sc.model(), h, sc.weathering(), NewtonOptions::default()).unwrap()
}

fn cycle(th: &Thermostat, v: f64) -> LimitCycle {
    match th.analyse(v).unwrap().outcome {
        Outcome::Cycles(c) => c,
        other => panic!("V = {v}: no cycle but {other:?}"),
    }
}

/// The glaciation times (open -> snowball) of a coupled integration of
/// `years` from `state`, and the lowest and highest CO2 reached.
fn integrate(
    sc: &Scenario,
    v: f64,
    state: &mut CoupledState,
    years: f64,
    dt: f64,
) -> (Vec<f64>, f64, f64) {
    let model = sc.model();
    let opts = CoupledOptions {
        step_yr: dt,
        ..Default::default()
    };
    let mut c = Coupled::new(&model, sc.weathering(), v, opts);
    let mut glaciations = Vec::new();
    let (mut lo, mut hi) = (f64::INFINITY, 0.0f64);
    let snowball = |m: &icefold::Model, t: &[f64]| m.open_surface(t).0 == 0.0;
    let mut was = snowball(&model, &state.temperature);
    let end = state.time_yr + years;
    while state.time_yr < end {
        c.step(state).unwrap();
        let now = snowball(c.model(), &state.temperature);
        if now && !was {
            glaciations.push(state.time_yr);
        }
        was = now;
        lo = lo.min(state.co2_ppm);
        hi = hi.max(state.co2_ppm);
    }
    (glaciations, lo, hi)
}

// A slow fixed point found on the traced branch is a fixed point of the
// whole fast-slow system, and a stable one attracts: a long integration
// started 30% away in CO2 ends on it (common practice, no source; the
// thermostat of Walker, Hays & Kasting 1981).
#[test]
fn slow_fixed_point_equals_long_integration() {
    let sc = demo(&[]);
    let h = trace(&sc);
    let th = thermostat(&sc, &h);
    let a = th.analyse(2.0).unwrap();
    let Outcome::Settles(ref stable) = a.outcome else {
        panic!("V = 2 should settle: {:?}", a.outcome);
    };
    assert_eq!(stable.len(), 1);
    let eq = &a.equilibria[stable[0]];
    assert!(eq.refined && eq.state == State::PolarCaps, "{eq:?}");
    let mut state = CoupledState {
        time_yr: 0.0,
        temperature: eq.temperature.clone(),
        co2_ppm: 1.3 * eq.co2_ppm,
    };
    // relaxation time 1/(k dW/dP) is about 3e5 years here
    let tau = 1.0 / (PPM_PER_YEAR_PER_BAR_GYR * eq.dw_dp);
    integrate(&sc, 2.0, &mut state, 40.0 * tau, 1e4);
    let mut m = sc.model();
    m.set_param(Param::Co2, state.co2_ppm);
    let gm = m.grid.mean(&state.temperature);
    println!(
        "fixed point {} ppm {} C; integration {} ppm {} C",
        eq.co2_ppm, eq.global_mean_c, state.co2_ppm, gm
    );
    assert!(
        (state.co2_ppm / eq.co2_ppm - 1.0).abs() < 1e-6,
        "{}",
        state.co2_ppm
    );
    assert!((gm - eq.global_mean_c).abs() < 1e-5, "{gm}");
}

// Menou (2015): the period of the snowball cycle scales as 1/V at small
// outgassing. In the snowball W = 0 and CO2 rises at k V from the warm
// fold P_w to the melting fold P_s, so the snowball leg lasts
// (P_s - P_w)/(k V) exactly (Abbot 2016 derives this limit), while the warm
// leg tends to a V-independent time as V -> 0: period x V tends to
// (P_s - P_w)/k, with a correction of order V.
#[test]
fn period_scales_as_one_over_outgassing() {
    let sc = demo(&[]);
    let h = trace(&sc);
    let th = thermostat(&sc, &h);
    let (a, b) = (cycle(&th, 0.1), cycle(&th, 0.05));
    let (pa, pb) = (a.period_yr * 0.1, b.period_yr * 0.05);
    let limit = (a.co2_range_ppm.1 - a.co2_range_ppm.0) / PPM_PER_YEAR_PER_BAR_GYR;
    println!("period x V: {pa:e} at V = 0.1, {pb:e} at 0.05; limit {limit:e}");
    assert!((pa / pb - 1.0).abs() < 0.02, "{pa} {pb}");
    assert!((pb / limit - 1.0).abs() < 0.01, "{pb} {limit}");
    // the snowball leg is exactly the closed form
    let snow = b.snowball_yr * 0.05;
    assert!((snow / limit - 1.0).abs() < 1e-9, "{snow} {limit}");
}

// Menou (2015), Abbot (2016): the cycle jumps at the folds of the fast
// hysteresis in CO2, so its CO2 range is the fold pair; checked against
// the existence of the fast climates by Newton on the annual-mean model
// just inside and outside each fold. Newton uses the sub-grid ice edge, the
// tracer the edges as unknowns; their folds differ by the discretisation
// (0.2% in CO2 at the melting fold here), so the margin is 0.5%.
#[test]
fn cycle_spans_the_folds_of_the_fast_hysteresis() {
    let sc = demo(&[]);
    let h = trace(&sc);
    let th = thermostat(&sc, &h);
    let c = cycle(&th, 0.5);
    let (pw, ps) = c.co2_range_ppm;
    let folds: Vec<f64> = h
        .branches
        .iter()
        .flat_map(|b| b.folds.iter().map(|f| f.point.p))
        .collect();
    assert!(folds.contains(&pw) && folds.contains(&ps), "{folds:?}");
    println!("cycle CO2 {pw} to {ps} ppm; T {:?}", c.temperature_range_c);
    let mut m = sc.model();
    let mut ws = Workspace::new(&m);
    let opts = NewtonOptions::default();
    let settle = |m: &mut icefold::Model, ws: &mut Workspace, p: f64, start: &[f64]| {
        m.set_param(Param::Co2, p);
        let mut t = start.to_vec();
        newton(m, &mut t, &opts, ws)
            .ok()
            .map(|_| m.open_surface(&t).0)
    };
    let cold = vec![-60.0; m.len()];
    // the snowball exists below P_s and not above it
    assert_eq!(settle(&mut m, &mut ws, ps * (1.0 - 5e-3), &cold), Some(0.0));
    assert!(settle(&mut m, &mut ws, ps * (1.0 + 5e-3), &cold).is_none_or(|o| o > 0.0));
    // the warm climate at P_w (from the cycle's warm leg just above it)
    // exists above P_w and falls into the snowball below it
    let warm = h
        .branches
        .iter()
        .flat_map(|b| b.points.iter())
        .filter(|q| q.unstable_modes == 0 && q.p > pw && q.diagnostics.state == State::PolarCaps)
        .min_by(|a, b| a.p.total_cmp(&b.p))
        .unwrap()
        .temperature
        .clone();
    assert!(settle(&mut m, &mut ws, pw * (1.0 + 5e-3), &warm).is_some_and(|o| o > 0.0));
    assert!(settle(&mut m, &mut ws, pw * (1.0 - 5e-3), &warm).is_none_or(|o| o == 0.0));
}

// The integrator of the full system reproduces the slaved cycle: its period
// to a few percent and its CO2 range to one step of CO2 and the 0.5%
// between the two ice-edge discretisations (Menou 2015 found the cycles by
// such time integration). W0 and V are scaled by 100 to give a period of
// about 2e6 years (the slow flow only speeds up: the cycle's geometry is
// unchanged), so that 1000-year steps are cheap.
#[test]
fn integration_reproduces_the_cycle() {
    let sc = demo(&["weathering.present_rate=700"]);
    let h = trace(&sc);
    let th = thermostat(&sc, &h);
    let v = 25.0;
    let c = cycle(&th, v);
    let (pw, ps) = c.co2_range_ppm;
    // start in the snowball at P_w
    let model = sc.model();
    let mut m = model.clone();
    m.set_param(Param::Co2, pw);
    let mut t = vec![-60.0; m.len()];
    newton(
        &m,
        &mut t,
        &NewtonOptions::default(),
        &mut Workspace::new(&m),
    )
    .unwrap();
    let mut state = CoupledState {
        time_yr: 0.0,
        temperature: t,
        co2_ppm: pw,
    };
    let dt = 1000.0;
    let (gl, lo, hi) = integrate(&sc, v, &mut state, 3.3 * c.period_yr, dt);
    assert!(gl.len() >= 3, "{gl:?}");
    let period = gl[gl.len() - 1] - gl[gl.len() - 2];
    println!(
        "slaved period {:e} yr, integrated {period:e} yr; CO2 {lo}..{hi} against {pw}..{ps}",
        c.period_yr
    );
    assert!((period / c.period_yr - 1.0).abs() < 0.03);
    // one step of CO2: k V dt in the snowball, k (W - V) dt at the warm fold
    let k = PPM_PER_YEAR_PER_BAR_GYR;
    let w_fold = c
        .points
        .iter()
        .find(|q| q.co2_ppm == pw)
        .unwrap()
        .weathering;
    let (up, down) = (dt * k * v, dt * k * (w_fold - v));
    assert!(
        hi <= ps * (1.0 + 5e-3) && hi >= ps * (1.0 - 5e-3) - up,
        "{hi} {ps}"
    );
    assert!(
        lo >= pw * (1.0 - 5e-3) && lo <= pw * (1.0 + 5e-3) + down,
        "{lo} {pw} {down}"
    );
}

// Walker, Hays & Kasting (1981): weathering grows with temperature and with
// CO2; with the ice factor it vanishes in a snowball. Along the traced
// branches: W = 0 on every snowball state and W > 0 on every open one, and
// W rises with CO2 along every stable open stretch (warmer and more CO2).
#[test]
fn weathering_vanishes_in_snowball_and_grows_with_t_and_p() {
    let sc = demo(&[]);
    let h = trace(&sc);
    let th = thermostat(&sc, &h);
    let mut snow = 0;
    for (_, pts) in th.branch_curves() {
        for w in pts.windows(2) {
            let (a, b) = (w[0], w[1]);
            if a.state == State::Snowball {
                assert_eq!(a.weathering, 0.0);
                snow += 1;
            } else {
                assert!(a.weathering > 0.0, "{a:?}");
            }
            let warm = |q: &icefold::analysis::thermostat::CurvePoint| {
                q.stable && q.state == State::PolarCaps
            };
            if warm(&a) && warm(&b) && a.co2_ppm != b.co2_ppm {
                let slope = (b.weathering - a.weathering) * (b.co2_ppm - a.co2_ppm);
                assert!(slope > 0.0, "{a:?} {b:?}");
            }
        }
    }
    assert!(snow > 5);
    let law = sc.weathering();
    assert!(law.rate(20.0, 0.5, 280.0) > law.rate(10.0, 0.5, 280.0));
    assert!(law.rate(10.0, 0.5, 560.0) > law.rate(10.0, 0.5, 280.0));
    assert_eq!(law.rate(10.0, 0.0, 560.0), 0.0);
}

// The command publishes every output at once, one row per outgassing
// rate, with no NaN (common practice, no source).
#[test]
fn command_writes_every_output() {
    let d = temp_dir("thermostat");
    let (code, stdout, stderr) = icefold(&[
        "thermostat",
        "scenarios/outer-edge.toml",
        "--outgassing",
        "0.1:7:4",
        "--out",
        d.to_str().unwrap(),
        "--quiet",
    ]);
    assert_eq!(code, 0, "{stderr}");
    assert!(stderr.is_empty(), "{stderr}");
    assert!(
        stdout.contains("cycles") && stdout.contains("settles"),
        "{stdout}"
    );
    let csv = std::fs::read_to_string(d.join("thermostat.csv")).unwrap();
    assert!(
        csv.starts_with("outgassing_bar_per_gyr,outcome,co2_ppm,"),
        "{csv}"
    );
    assert_eq!(csv.lines().count(), 1 + 4);
    let cycle = std::fs::read_to_string(d.join("cycle.csv")).unwrap();
    assert!(cycle.starts_with("time_yr,co2_ppm,global_mean_temperature_c,"));
    assert!(cycle.lines().count() > 10);
    for f in [&csv, &cycle] {
        assert!(!f.to_lowercase().contains("nan") && !f.contains("inf"));
    }
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(d.join("summary.json")).unwrap()).unwrap();
    let runs = summary["runs"].as_array().unwrap();
    assert_eq!(runs[0]["outcome"], "cycles");
    assert!(runs[0]["cycle"]["period_yr"].as_f64().unwrap() > 1e8);
    assert_eq!(runs[3]["outcome"], "settles");
    assert_eq!(summary["cycle_csv"]["outgassing_bar_per_gyr"], 0.1);
    for f in ["thermostat.svg", "thermostat.png", "scenario.toml"] {
        assert!(d.join(f).exists(), "{f}");
    }
}

// Bad input exits 2 with one line naming the field, its value and the
// allowed range, and writes nothing (common practice, no source).
#[test]
fn bad_input_exits_2_naming_the_field() {
    let d = temp_dir("thermostat-bad");
    let out = d.join("set");
    let cases: [(&[&str], &[&str]); 6] = [
        (
            &["--outgassing", "-1:2:3"],
            &["--outgassing", "FROM = -1", "> 0"],
        ),
        (
            &["--outgassing", "0.1:10:3:geometric"],
            &["--outgassing", "geometric", "lin, log"],
        ),
        (&["--outgassing", "0"], &["--outgassing", "V = 0", "> 0"]),
        (
            &["--set", "weathering.outgassing=-2"],
            &["weathering.outgassing", "-2", "> 0"],
        ),
        (
            &["--set", "weathering.co2_exponent=3"],
            &["weathering.co2_exponent", "3", "0 to 2"],
        ),
        (
            &["--co2", "0:100"],
            &["--co2", "radiation.co2_ppm", "0.001"],
        ),
    ];
    for (extra, words) in cases {
        let mut argv = vec![
            "thermostat",
            "scenarios/outer-edge.toml",
            "--out",
            out.to_str().unwrap(),
        ];
        argv.extend_from_slice(extra);
        let (code, _, stderr) = icefold(&argv);
        assert_eq!(code, 2, "{extra:?}: {stderr}");
        assert_eq!(stderr.trim().lines().count(), 1, "{stderr}");
        for w in words {
            assert!(stderr.contains(w), "{extra:?}: `{w}` not in {stderr}");
        }
        assert!(!out.exists());
    }
    // a computation that fails exits 1 and writes nothing: this planet
    // settles at the present outgassing, so it has no cycle to write
    let (code, _, stderr) = icefold(&[
        "thermostat",
        "scenarios/outer-edge.toml",
        "--cycle-at",
        "7",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, 1, "{stderr}");
    assert!(stderr.contains("does not cycle"), "{stderr}");
    assert!(!out.exists());
}

// `FROM:TO:COUNT:log` spaces the rates evenly in ln V, ends included:
// V_k = FROM (TO/FROM)^(k/(COUNT-1)) (a geometric sequence: common
// practice, no source); `lin` is the default spacing.
#[test]
fn log_spaced_outgassing() {
    use icefold::cli::thermostat::parse_outgassing;
    let v = parse_outgassing("0.01:100:5:log").unwrap();
    assert_eq!(v.len(), 5);
    for (k, x) in v.iter().enumerate() {
        let want = 0.01 * 10f64.powi(k as i32);
        assert!((x - want).abs() <= 1e-12 * want, "{k}: {x} vs {want}");
    }
    assert_eq!(
        parse_outgassing("1:7:4:lin").unwrap(),
        parse_outgassing("1:7:4").unwrap()
    );
    assert_eq!(parse_outgassing("1:7:4").unwrap(), vec![1.0, 3.0, 5.0, 7.0]);
}

// `thermostat --across`: every slice is the single thermostat at that value
// (`--set KEY=VALUE`), row for row, and the map does not depend on the
// number of threads (common practice, no source).
#[test]
fn thermostat_map_slices_equal_single_runs() {
    let rates = "0.1:100:7:log";
    let run = |name: &str, extra: &[&str]| {
        let d = temp_dir(name);
        let mut argv = vec![
            "thermostat",
            "scenarios/outer-edge.toml",
            "--outgassing",
            rates,
            "--quiet",
            "--out",
            d.to_str().unwrap(),
        ];
        argv.extend(extra);
        let (code, stdout, stderr) = icefold(&argv);
        assert_eq!(code, 0, "{stderr}");
        (d, stdout)
    };
    let across = "orbit.flux=1050:1250:5";
    let (two, report) = run("thermomap-2", &["--across", across, "--threads", "2"]);
    let (one, _) = run("thermomap-1", &["--across", across, "--threads", "1"]);
    let map = std::fs::read_to_string(two.join("thermostat_map.csv")).unwrap();
    assert_eq!(
        map,
        std::fs::read_to_string(one.join("thermostat_map.csv")).unwrap()
    );
    assert!(report.contains("cycles at"), "{report}");
    let mut rows = map.lines();
    let header = rows.next().unwrap();
    assert!(header.starts_with("orbit.flux,outgassing_bar_per_gyr,outcome,"));
    let rows: Vec<&str> = rows.collect();
    assert_eq!(rows.len(), 5 * 7);
    let mut cycling = 0;
    for (k, flux) in ["1050", "1100", "1150", "1200", "1250"].iter().enumerate() {
        let (single, _) = run(
            &format!("thermomap-single-{k}"),
            &["--set", &format!("orbit.flux={flux}")],
        );
        let csv = std::fs::read_to_string(single.join("thermostat.csv")).unwrap();
        let want: Vec<&str> = csv.lines().skip(1).collect();
        let got: Vec<&str> = rows[7 * k..7 * (k + 1)]
            .iter()
            .map(|r| r.split_once(',').unwrap())
            .inspect(|(f, _)| assert_eq!(f, flux))
            .map(|(_, rest)| rest)
            .collect();
        assert_eq!(got, want, "slice {flux}");
        cycling += want.iter().filter(|r| r.contains(",cycles,")).count();
    }
    assert!(cycling > 0, "the window must hold some limit cycles");
    // refused: the fast climate's own parameter, and --cycle-at with --across
    for (extra, word) in [
        (
            vec!["--across", "radiation.co2_ppm=1:10:3"],
            "radiation.co2_ppm",
        ),
        (vec!["--across", across, "--cycle-at", "0.1"], "--cycle-at"),
    ] {
        let d = temp_dir("thermomap-bad");
        let mut argv = vec![
            "thermostat",
            "scenarios/outer-edge.toml",
            "--out",
            d.to_str().unwrap(),
        ];
        argv.extend(extra);
        let (code, _, stderr) = icefold(&argv);
        assert_eq!(code, 2, "{stderr}");
        assert!(stderr.contains(word), "{stderr}");
        assert!(!d.exists());
    }
}
