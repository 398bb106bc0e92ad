//! The sea-ice model of Wagner & Eisenman (2015, J. Climate 28, 3998):
//! its step derivative against finite differences (common practice, no
//! source), the ice thickness of a steady conduction balance solved by
//! hand (WE15 section 2b: k (T_m - T_0)/h balances the surface flux, and
//! in a steady state the ice neither grows nor melts, so the conduction
//! carries F_b), and the energy budget of a periodic climate (the
//! enthalpy returns after one year, so the annual global mean of the net
//! top-of-atmosphere flux plus F_b vanishes: conservation of energy).

mod common;

use icefold::analysis::periodic::{ShootingOptions, cycle, periodic_from, shoot};
use icefold::io::scenario::Scenario;
use icefold::model::seasonal::SeasonalModel;

const SEA_ICE: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/scenarios/sea-ice.toml");

fn sea_ice(sets: &[&str]) -> SeasonalModel {
    let sets: Vec<String> = sets.iter().map(|s| s.to_string()).collect();
    let sc = Scenario::load(Some(std::path::Path::new(SEA_ICE)), &sets).unwrap();
    sc.seasonal_model().unwrap()
}

fn max_abs(v: &[f64]) -> f64 {
    v.iter().fold(0.0f64, |m, x| m.max(x.abs()))
}

/// The sea-ice model with `sets`, the profile T = a - b x² (°C, x the
/// sine of latitude at the band centres) and its state.
fn profile_state(sets: &[&str], a: f64, b: f64) -> (SeasonalModel, Vec<f64>, Vec<f64>) {
    let sm = sea_ice(sets);
    let t0: Vec<f64> = sm
        .model()
        .grid
        .centres
        .iter()
        .map(|x| a - b * x * x)
        .collect();
    let u0 = sm.state_from_temperature(&t0);
    (sm, t0, u0)
}

/// 16 bands, 24 steps: a state with an ice cap poleward of about 60 deg
/// and open water elsewhere, Φ of it and the dense monodromy matrix there.
fn ice_cap_year() -> (SeasonalModel, Vec<f64>, Vec<f64>, Vec<f64>) {
    let (mut sm, _, u0) =
        profile_state(&["grid.bands=16", "seasons.steps_per_year=24"], 25.0, 40.0);
    let n = sm.len();
    let mut phi = u0.clone();
    let mut m = vec![0.0; n * n];
    sm.year_with_jacobian(&mut phi, &mut m, None).unwrap();
    (sm, u0, phi, m)
}

/// The monodromy matrix of the exact step derivative equals central
/// differences of the annual map (common practice, no source).
#[test]
fn monodromy_matches_finite_differences() {
    let (mut sm, u0, _phi, m) = ice_cap_year();
    let n = sm.len();
    let mut worst: f64 = 0.0;
    for j in 0..n {
        let h = 1e-4 * (1.0 + u0[j].abs());
        let mut a = u0.clone();
        let mut b = u0.clone();
        a[j] += h;
        b[j] -= h;
        sm.year(&mut a).unwrap();
        sm.year(&mut b).unwrap();
        for i in 0..n {
            let fd = (a[i] - b[i]) / (2.0 * h);
            let d = (fd - m[i * n + j]).abs() / (1e-3 + fd.abs());
            worst = worst.max(d);
        }
    }
    assert!(worst < 1e-4, "relative deviation {worst:e}");
}

/// The exact parameter sensitivity ∂Φ/∂p of the annual map equals a
/// central difference in p (common practice, no source).
#[test]
fn parameter_sensitivity_matches_finite_differences() {
    use icefold::model::Param;
    let (mut sm, _, u0) =
        profile_state(&["grid.bands=16", "seasons.steps_per_year=24"], 25.0, 40.0);
    let n = sm.len();
    for p in [
        Param::Forcing,
        Param::OlrA,
        Param::OlrB,
        Param::Flux,
        Param::Diffusivity,
    ] {
        let mut phi = u0.clone();
        let mut m = vec![0.0; n * n];
        let mut s = vec![0.0; n];
        sm.year_with_jacobian(&mut phi, &mut m, Some((p, &mut s)))
            .unwrap();
        let v0 = sm.param(p);
        let h = 1e-5 * v0.abs().max(1.0);
        let (mut a, mut b) = (u0.clone(), u0.clone());
        sm.set_param(p, v0 + h);
        sm.year(&mut a).unwrap();
        sm.set_param(p, v0 - h);
        sm.year(&mut b).unwrap();
        sm.set_param(p, v0);
        for i in 0..n {
            let fd = (a[i] - b[i]) / (2.0 * h);
            assert!(
                (fd - s[i]).abs() < 1e-5 * (1.0 + fd.abs()),
                "{}: band {i}: {} vs {fd}",
                p.key(),
                s[i]
            );
        }
    }
}

/// Without transport and seasons, an ice-covered band is in steady state
/// when T_0 = ((1 - α_i) S̄ - A + F + F_b)/B (the OLR A + B T balances the
/// absorbed flux, F and the heat conducted up, which in a steady state is
/// F_b) and h = k (T_m - T_0)/F_b. S̄ is the band mean of S0 - S2 x²:
/// S0 - S2 (x_b³ - x_a³)/(3 (x_b - x_a)). Solved by hand from the model
/// equations of WE15 section 2b.
#[test]
fn steady_ice_thickness_balances_conduction() {
    let (a, b, f, fb, k, lf) = (193.0, 2.1, -25.0, 4.0, 2.0, 9.5);
    let mut sm = sea_ice(&[
        "transport.diffusivity=0",
        "insolation.s1=0",
        "radiation.forcing=-25",
        "grid.bands=20",
        "seasons.steps_per_year=12",
    ]);
    let n = sm.len();
    let u0 = sm.state_from_temperature(&vec![-20.0; n]);
    let p = shoot(&mut sm, &u0, &ShootingOptions::default()).unwrap();
    let grid = sm.model().grid.clone();
    let (s0, s2) = (1360.0 / 4.0 + 240.0 / 3.0, 240.0);
    let mut checked = 0;
    for i in 0..n {
        let (xa, xb) = (grid.faces[i], grid.faces[i + 1]);
        let sbar = s0 - s2 * (xb.powi(3) - xa.powi(3)) / (3.0 * (xb - xa));
        let t0 = ((1.0 - 0.6) * sbar - a + f + fb) / b;
        assert!(t0 < 0.0, "band {i} would not freeze: {t0}");
        let h = k * (0.0 - t0) / fb;
        let got = -p.start[i] / lf;
        assert!((got - h).abs() < 1e-8 * h, "band {i}: h {got} vs {h} m");
        checked += 1;
    }
    assert_eq!(checked, n);
    // and the surface temperature the model reports is T_0, all year
    let c = cycle(&mut sm, &p.start).unwrap();
    for i in 0..n {
        let (xa, xb) = (grid.faces[i], grid.faces[i + 1]);
        let sbar = s0 - s2 * (xb.powi(3) - xa.powi(3)) / (3.0 * (xb - xa));
        let t0 = ((1.0 - 0.6) * sbar - a + f + fb) / b;
        for st in &c.states {
            assert!((st[i] - t0).abs() < 1e-8, "band {i}: T {} vs {t0}", st[i]);
        }
        assert!((c.ice_thickness[0][i] - k * (0.0 - t0) / fb).abs() < 1e-8);
    }
    assert!(c.ice_area_fraction.iter().all(|f| (*f - 1.0).abs() < 1e-12));
}

/// A periodic climate of the full model (Table 1, seasons, transport, an
/// ice edge that moves through the year) closes its energy budget: the
/// annual global mean of the net top-of-atmosphere flux plus F_b is zero
/// to 1e-8 W m-2, and the enthalpy returns after one year to the
/// shooting tolerance (conservation of energy; common practice).
#[test]
fn periodic_climate_closes_its_energy_budget() {
    let mut sm = sea_ice(&["grid.bands=30", "seasons.steps_per_year=36"]);
    let grid = sm.model().grid.clone();
    let t0: Vec<f64> = grid.centres.iter().map(|x| 28.0 - 45.0 * x * x).collect();
    let start = icefold::model::climate::Start {
        label: "guess".into(),
        temperature: t0,
    };
    let p = periodic_from(&mut sm, &start, &ShootingOptions::default()).unwrap();
    assert!(p.residual < 1e-10);
    // some ice and some open water at the start of the year
    assert!(p.start.iter().any(|e| *e < 0.0) && p.start.iter().any(|e| *e > 0.0));
    let c = cycle(&mut sm, &p.start).unwrap();
    let budget = c.toa_annual_mean + 4.0;
    assert!(budget.abs() < 1e-8, "annual TOA + F_b = {budget:e} W m-2");
    let mut e = p.start.clone();
    sm.year(&mut e).unwrap();
    let drift: Vec<f64> = e.iter().zip(&p.start).map(|(a, b)| a - b).collect();
    assert!(max_abs(&drift) < 1e-9, "{}", max_abs(&drift));
}

/// The largest difference of ice edge (deg) between two stable climates
/// that are not snowballs and coexist at one forcing, over forcings above
/// `above` (stable segments interpolated linearly in the forcing, sampled
/// every 0.01 W m-2).
fn coexisting_edge_gap(h: &icefold::analysis::branches::Hysteresis, above: f64) -> f64 {
    use icefold::analysis::branches::poleward_edge_deg;
    use icefold::model::climate::State;
    let mut segs = Vec::new();
    for b in &h.branches {
        for w in b.points.windows(2) {
            let ok = |q: &icefold::analysis::branches::TracedPoint| {
                q.unstable_modes == 0 && q.diagnostics.state != State::Snowball
            };
            if ok(&w[0]) && ok(&w[1]) && w[0].p != w[1].p {
                segs.push((
                    w[0].p,
                    w[1].p,
                    poleward_edge_deg(&w[0].diagnostics),
                    poleward_edge_deg(&w[1].diagnostics),
                ));
            }
        }
    }
    let (lo, hi) = h.range;
    let mut worst: f64 = 0.0;
    let mut f = above.max(lo);
    while f <= hi {
        let edges: Vec<f64> = segs
            .iter()
            .filter(|(a, b, _, _)| a.min(*b) <= f && f <= a.max(*b))
            .map(|(a, b, ea, eb)| ea + (f - a) / (b - a) * (eb - ea))
            .collect();
        if let (Some(mx), Some(mn)) = (
            edges.iter().copied().reduce(f64::max),
            edges.iter().copied().reduce(f64::min),
        ) {
            worst = worst.max(mx - mn);
        }
        f += 0.01;
    }
    worst
}

/// Wagner & Eisenman (2015): with their Table 1 parameters the annual-mean
/// diffusive model has the small-ice-cap instability (a small stable cap
/// coexists with an ice-free planet, here edges 26 deg apart), while the
/// seasonal model with sea-ice thermodynamics has none: above its
/// snowball transition (2 W m-2 of margin) no two stable climates with
/// different ice edges coexist (within 3 deg: the coarse grid's kinks make
/// small wiggles), so the ice edge moves without jumps as F varies until
/// the snowball transition (their section 3 and Fig. 4, qualitatively).
#[test]
fn sea_ice_removes_the_small_ice_cap_instability() {
    use icefold::analysis::branches::{TraceOptions, trace_all};
    use icefold::analysis::periodic::{SeasonalTraceOptions, trace_seasonal};
    use icefold::model::Param;
    let sets = |extra: &[&str]| -> Vec<String> { extra.iter().map(|s| s.to_string()).collect() };
    let path = std::path::Path::new(SEA_ICE);
    // (a) the annual-mean model of the same planet (symmetric grid)
    let a = Scenario::load(
        Some(path),
        &sets(&[
            "seasons.enabled=false",
            "seaice.enabled=false",
            "grid.symmetric=true",
            "grid.bands=30",
        ]),
    )
    .unwrap();
    let opts = TraceOptions {
        integrate_jumps: false,
        sensitivities: false,
        ..TraceOptions::default()
    };
    let ha = trace_all(
        &a.model(),
        Param::Forcing,
        -30.0,
        15.0,
        30.0,
        -60.0,
        &opts,
        &mut |_| {},
    );
    let snow_a = ha
        .branches
        .iter()
        .flat_map(|b| b.folds.iter())
        .map(|f| f.point.p)
        .fold(f64::INFINITY, f64::min);
    let gap_a = coexisting_edge_gap(&ha, snow_a + 2.0);
    assert!(
        gap_a > 15.0,
        "(a) has the small-ice-cap instability: gap {gap_a}"
    );
    // (c) seasonal with sea ice
    let c = Scenario::load(
        Some(path),
        &sets(&["grid.bands=24", "seasons.steps_per_year=24"]),
    )
    .unwrap();
    let sm = c.seasonal_model().unwrap();
    let hc = trace_seasonal(
        &sm,
        Param::Forcing,
        -25.0,
        10.0,
        30.0,
        -60.0,
        &SeasonalTraceOptions::default(),
        &mut |_| {},
    );
    let snow_c = hc
        .branches
        .iter()
        .flat_map(|b| b.folds.iter())
        .map(|f| f.point.p)
        .fold(f64::INFINITY, f64::min);
    assert!(
        snow_c > -25.0 && snow_c < 0.0,
        "snowball transition at {snow_c}"
    );
    let gap_c = coexisting_edge_gap(&hc, snow_c + 2.0);
    assert!(gap_c < 3.0, "(c) coexisting stable edges {gap_c} deg apart");
    // and (c) does have partial ice cover over that range: stable caps
    let caps = hc
        .branches
        .iter()
        .flat_map(|b| b.points.iter())
        .filter(|q| {
            q.unstable_modes == 0
                && q.diagnostics.ice_area_fraction > 0.05
                && q.diagnostics.ice_area_fraction < 0.9
        })
        .count();
    assert!(caps > 10, "{caps} stable partly ice-covered climates");
}

/// `trace --hierarchy` writes the three models side by side: every model
/// in the table, the figure, and per model the folds that its own trace
/// finds (the annual-mean one against an independent library trace).
#[test]
fn hierarchy_traces_three_models_side_by_side() {
    let dir = common::temp_dir("hierarchy");
    let out = dir.join("h");
    let (code, stdout, err) = common::icefold(&[
        "trace",
        SEA_ICE,
        "--hierarchy",
        "--set",
        "grid.bands=16",
        "--set",
        "seasons.steps_per_year=24",
        "--vary",
        "radiation.forcing",
        "--from",
        "-25",
        "--to",
        "10",
        "--quiet",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    for f in [
        "hierarchy.csv",
        "hierarchy_folds.csv",
        "summary.json",
        "hierarchy.svg",
        "hierarchy.png",
        "scenario.toml",
    ] {
        assert!(out.join(f).exists(), "{f}");
    }
    let table = std::fs::read_to_string(out.join("hierarchy.csv")).unwrap();
    // every point carries its habitable fraction, an area fraction in [0, 1]
    let header: Vec<&str> = table.lines().next().unwrap().split(',').collect();
    let col = header
        .iter()
        .position(|h| *h == "habitable_fraction")
        .expect("a habitable_fraction column");
    let fractions: Vec<f64> = table
        .lines()
        .skip(1)
        .map(|l| l.split(',').nth(col).unwrap().parse().unwrap())
        .collect();
    assert!(fractions.iter().all(|f| (0.0..=1.0).contains(f)));
    assert!(fractions.iter().any(|f| *f > 0.0) && fractions.iter().any(|f| *f < 1.0));
    for m in ["annual-mean", "seasonal", "seasonal-sea-ice"] {
        assert!(
            table.lines().any(|l| l.starts_with(&format!("{m},"))),
            "{m}"
        );
        assert!(stdout.contains(m), "{stdout}");
    }
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap();
    let folds_a: Vec<f64> = summary["models"][0]["folds"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["value"].as_f64().unwrap())
        .collect();
    // the same annual-mean trace through the library: the planet with the
    // sea-ice model's ocean heat flux (4 W m-2) as forcing, traced at
    // F + 4 and reported at F
    use icefold::analysis::branches::{TraceOptions, trace_all};
    let sets: Vec<String> = [
        "grid.bands=16",
        "seasons.steps_per_year=24",
        "seasons.enabled=false",
        "seaice.enabled=false",
        "radiation.forcing=4",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    let sc = Scenario::load(Some(std::path::Path::new(SEA_ICE)), &sets).unwrap();
    let h = trace_all(
        &sc.model(),
        icefold::model::Param::Forcing,
        -21.0,
        14.0,
        30.0,
        -60.0,
        &TraceOptions::default(),
        &mut |_| {},
    );
    let mut lib: Vec<f64> = h
        .branches
        .iter()
        .flat_map(|b| b.folds.iter().map(|f| f.point.p - 4.0))
        .collect();
    lib.sort_by(f64::total_cmp);
    assert_eq!(folds_a.len(), lib.len(), "{folds_a:?} vs {lib:?}");
    for (x, y) in folds_a.iter().zip(&lib) {
        assert!((x - y).abs() < 1e-12, "{x} vs {y}");
    }
    let _ = std::fs::remove_dir_all(&dir);
}

/// Where there is no ice, the sea-ice model is the seasonal model: the
/// same planet warm enough to stay ice-free all year gives the same
/// periodic climate with and without sea-ice thermodynamics (E = c_w T
/// over open water, WE15 section 2b), computed by two separate codes
/// (the enthalpy step of src/model/seaice.rs and the temperature step of
/// src/model/seasonal.rs), to the shooting tolerance.
#[test]
fn without_ice_the_sea_ice_model_is_the_seasonal_model() {
    use icefold::model::climate::Start;
    let warm = [
        "grid.bands=20",
        "seasons.steps_per_year=24",
        "radiation.forcing=25",
    ];
    let mut c = sea_ice(&warm);
    // the seasonal model has no heat flux from below: F_b = 4 W m-2 enters
    // it as forcing
    let with_off = [
        "grid.bands=20",
        "seasons.steps_per_year=24",
        "radiation.forcing=29",
        "seaice.enabled=false",
    ];
    let mut b = sea_ice(&with_off);
    assert!(c.has_sea_ice() && !b.has_sea_ice());
    let start = Start {
        label: "warm".into(),
        temperature: vec![30.0; c.len()],
    };
    let opts = ShootingOptions::default();
    let pc = periodic_from(&mut c, &start, &opts).unwrap();
    let pb = periodic_from(&mut b, &start, &opts).unwrap();
    let cc = cycle(&mut c, &pc.start).unwrap();
    let cb = cycle(&mut b, &pb.start).unwrap();
    assert!(
        cc.ice_area_fraction.iter().all(|f| *f == 0.0),
        "ice-free all year"
    );
    let mut worst: f64 = 0.0;
    for (sc, sb) in cc.states.iter().zip(&cb.states) {
        for (x, y) in sc.iter().zip(sb) {
            worst = worst.max((x - y).abs());
        }
    }
    assert!(worst < 1e-9, "surface temperatures differ by {worst:e} K");
    // the states themselves: E = c_w T
    let cw = c.model().planet.heat_capacity[0];
    for (e, t) in pc.start.iter().zip(&pb.start) {
        assert!((e - cw * t).abs() < 1e-8 * cw);
    }
}

/// Commands of the annual-mean model never drop the sea ice silently:
/// `solve`, and `trace` without seasons, refuse a sea-ice scenario (exit 2,
/// one line, nothing written).
#[test]
fn annual_commands_refuse_sea_ice() {
    let dir = common::temp_dir("sea-ice-refusals");
    for args in [
        vec!["solve", SEA_ICE],
        vec!["trace", SEA_ICE, "--set", "seasons.enabled=false"],
    ] {
        let out = dir.join(args[0]);
        let mut a = args.clone();
        a.extend(["--quiet", "--out", out.to_str().unwrap()]);
        let (code, _, err) = common::icefold(&a);
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(err.contains("seaice.enabled"), "{err}");
        assert_eq!(err.trim().lines().count(), 1);
        assert!(!out.exists());
    }
    let _ = std::fs::remove_dir_all(&dir);
}

/// The `periodic` profile figure's albedo of a sea-ice climate is the ice
/// the model has (issue 11): ice where the surface enthalpy E < 0 (Wagner
/// & Eisenman 2015, section 2b). Per band and sample, where both
/// neighbours share the band's sign of E the sub-grid step takes the whole
/// band (ice or open water), else the edge lies inside it and its albedo
/// lies between the two; so the year-mean albedo of a band with n_i
/// all-ice and n_e edge samples out of N lies between f α_ice +
/// (1 - f) α_open at f = n_i/N and at f = (n_i + n_e)/N (equal with no
/// edge samples). α_ice, α_open of each band come from a separate path
/// (the annual-mean model's band fluxes of an all-frozen and an all-open
/// profile), the counts from the signs of E (common practice, no source:
/// a time mean of a piecewise quantity). The old figure showed the albedo
/// of the annual-mean surface temperature, which lies outside those
/// bounds in a band with seasonal ice (the polar band here: the winter
/// ice surface is far below freezing, so the annual mean is "ice" though
/// the band is open water part of the year): the last assertion fails on
/// it.
#[test]
fn periodic_profile_albedo_is_the_ice_of_the_enthalpy() {
    let mut sm = sea_ice(&["grid.bands=30", "seasons.steps_per_year=36"]);
    let grid = sm.model().grid.clone();
    let n = grid.centres.len();
    let t0: Vec<f64> = grid.centres.iter().map(|x| 28.0 - 45.0 * x * x).collect();
    let start = icefold::model::climate::Start {
        label: "guess".into(),
        temperature: t0,
    };
    let p = periodic_from(&mut sm, &start, &ShootingOptions::default()).unwrap();
    let c = cycle(&mut sm, &p.start).unwrap();
    let am = sm.annual_model();
    let got = icefold::analysis::cycle::annual_albedo(&am, &c);
    let band_albedo = |t: f64| -> Vec<f64> {
        let fl = am.band_fluxes(&vec![t; n]);
        fl.insolation
            .iter()
            .zip(&fl.absorbed)
            .map(|(s, a)| 1.0 - a / s)
            .collect()
    };
    let (ice, open) = (band_albedo(-50.0), band_albedo(50.0));
    let old = {
        let fl = am.band_fluxes(&c.annual_mean);
        fl.insolation
            .iter()
            .zip(&fl.absorbed)
            .map(|(s, a)| 1.0 - a / s)
            .collect::<Vec<f64>>()
    };
    let steps = c.ice_profiles.len() as f64;
    let (mut compared, mut seasonal, mut differs) = (0, 0, 0);
    for i in 0..n {
        let (lo, hi) = (i.saturating_sub(1), (i + 1).min(n - 1));
        // per sample: ice (E < 0) over the whole band where the neighbours
        // share its sign, open likewise, else the edge lies in the band
        // and its albedo lies between the two
        let (mut iced, mut edged) = (0.0, 0.0);
        for q in &c.ice_profiles {
            let s = q[i] < 0.0;
            if (q[lo] < 0.0) != s || (q[hi] < 0.0) != s {
                edged += 1.0;
            } else if s {
                iced += 1.0;
            }
        }
        let at = |f: f64| f * ice[i] + (1.0 - f) * open[i];
        let (a, b) = (at(iced / steps), at((iced + edged) / steps));
        let (a, b) = (a.min(b), a.max(b));
        assert!(
            got[i] >= a - 1e-12 && got[i] <= b + 1e-12,
            "band {i}: albedo {} outside [{a}, {b}] ({iced} samples ice, {edged} with the edge inside)",
            got[i]
        );
        compared += 1;
        if iced + edged > 0.0 && iced < steps {
            seasonal += 1;
            if old[i] < a - 0.02 || old[i] > b + 0.02 {
                differs += 1;
            }
        }
    }
    assert_eq!(compared, n);
    assert!(seasonal > 0, "no band with seasonal ice to compare");
    // (the old behaviour: the albedo of the annual-mean temperature)
    assert!(
        differs > 0,
        "the albedo of the annual-mean temperature equals the ice's in every seasonal band"
    );
}

/// A shooting that fails says so with its residual in the unit of the
/// state: W yr m-2 of enthalpy with sea ice, K without (the README's
/// bad-input and failure rules; common practice, no source).
#[test]
fn failed_shooting_states_the_residual_in_the_state_unit() {
    let opts = ShootingOptions {
        max_iterations: 1,
        ..ShootingOptions::default()
    };
    let mut sm = sea_ice(&["grid.bands=16", "seasons.steps_per_year=24"]);
    let n = sm.len();
    let u0 = sm.state_from_temperature(&vec![-30.0; n]);
    let e = shoot(&mut sm, &u0, &opts).expect_err("one iteration from a uniform -30 C");
    let msg = e.to_string();
    assert!(msg.contains(" W yr m-2 after "), "{msg}");
    let mut plain = sea_ice(&[
        "grid.bands=16",
        "seasons.steps_per_year=24",
        "seaice.enabled=false",
    ]);
    let t0: Vec<f64> = (0..n).map(|i| 30.0 - 2.0 * i as f64).collect();
    let e = shoot(&mut plain, &t0, &opts).expect_err("one iteration from a made-up profile");
    let msg = e.to_string();
    assert!(msg.contains(" K after "), "{msg}");
}

/// Without ice thermodynamics (`seaice.thermodynamics = false`: no latent
/// heat, no insulation, T = T_m + E/c_w under the ice too) the sea-ice
/// model solves the equations of the seasonal model with its albedo step at
/// T_m, also where there is ice: the limit in which Wagner & Eisenman
/// (2015) remove sea-ice thermodynamics. The two codes (the enthalpy step
/// of src/model/seaice.rs and the temperature step of
/// src/model/seasonal.rs) discretise the albedo differently in time (the
/// sea-ice step takes it from the start of the step, the seasonal step
/// solves it implicitly), so on a planet with polar ice all year (WE15
/// Table 1, F = 0) their periodic climates differ by O(Δt): checked at 24,
/// 96 and 384 steps per year to converge to each other at first order
/// (each fourfold refinement divides the difference by 3 to 5; measured
/// 0.87, 0.22, 0.056 K) with no ice thickness; with the thermodynamics the
/// same planet is another climate (the ice insulates its surface from the
/// mixed layer; common practice, no source).
#[test]
fn without_ice_thermodynamics_the_sea_ice_model_is_the_seasonal_model() {
    use icefold::model::climate::Start;
    let opts = ShootingOptions::default();
    let mut gaps = Vec::new();
    for steps in [24, 96, 384] {
        let st = format!("seasons.steps_per_year={steps}");
        let with = |extra: &[&str]| {
            let mut v: Vec<&str> = vec!["grid.bands=20", &st];
            v.extend_from_slice(extra);
            sea_ice(&v)
        };
        let mut c = with(&["seaice.thermodynamics=false"]);
        let mut b = with(&["seaice.enabled=false", "radiation.forcing=4"]);
        assert_eq!(b.model().planet.albedo.threshold, 0.0, "T_m = threshold");
        let start = Start {
            label: "warm".into(),
            temperature: vec![10.0; c.len()],
        };
        let pc = periodic_from(&mut c, &start, &opts).unwrap();
        let pb = periodic_from(&mut b, &start, &opts).unwrap();
        let cc = cycle(&mut c, &pc.start).unwrap();
        let cb = cycle(&mut b, &pb.start).unwrap();
        assert!(
            cc.ice_area_fraction.iter().all(|f| *f > 0.01),
            "ice all year: {:?}",
            cc.ice_area_fraction
        );
        assert!(c.ice_thickness(&pc.start).iter().all(|h| *h == 0.0));
        let mut worst: f64 = 0.0;
        for (sc, sb) in cc.states.iter().zip(&cb.states) {
            for (x, y) in sc.iter().zip(sb) {
                worst = worst.max((x - y).abs());
            }
        }
        gaps.push(worst);
        if steps == 24 {
            // with the thermodynamics: a different climate
            let mut full = with(&[]);
            let pf = periodic_from(&mut full, &start, &opts).unwrap();
            let cf = cycle(&mut full, &pf.start).unwrap();
            let apart = cf.states[0]
                .iter()
                .zip(&cb.states[0])
                .fold(0.0f64, |m, (x, y)| m.max((x - y).abs()));
            assert!(apart > 2.0 * worst, "{apart} vs {worst}");
        }
    }
    for w in gaps.windows(2) {
        let r = w[0] / w[1];
        assert!(
            (3.0..=5.0).contains(&r),
            "first order in the step: {gaps:?}"
        );
    }
    assert!(gaps[2] < 0.1, "{gaps:?}");
}

/// The recorded tangent year gives M v without forming M: its products
/// with the unit vectors equal the columns of the dense monodromy matrix
/// (itself checked against central differences above), and a product
/// with a general vector equals M v (linearity; common practice, no
/// source).
#[test]
fn tangent_products_equal_the_monodromy_columns() {
    let (mut sm, u0, phi, m) = ice_cap_year();
    let n = sm.len();
    let mut tape = icefold::model::seaice::YearTape::new(&sm);
    let mut taped = u0.clone();
    sm.year_taped(&mut taped, &mut tape).unwrap();
    assert_eq!(taped, phi, "the taped year is the same year");
    let scale = max_abs(&m);
    let mut out = vec![0.0; n];
    for j in 0..n {
        let mut e = vec![0.0; n];
        e[j] = 1.0;
        tape.apply(&e, &mut out);
        for i in 0..n {
            let d = (out[i] - m[i * n + j]).abs();
            assert!(
                d <= 1e-13 * scale,
                "M[{i},{j}]: {} vs {}",
                out[i],
                m[i * n + j]
            );
        }
    }
    let v: Vec<f64> = (0..n).map(|i| (0.7 * i as f64).cos()).collect();
    tape.apply(&v, &mut out);
    for i in 0..n {
        let mv: f64 = (0..n).map(|j| m[i * n + j] * v[j]).sum();
        assert!((out[i] - mv).abs() <= 1e-12 * scale, "(M v)[{i}]");
    }
}

/// Newton-Krylov shooting of the sea-ice model reaches the climate that
/// plain time stepping reaches (an independent method: spin-up until the
/// year-over-year change is below 1e-11 W yr m-2), and its Floquet
/// multipliers (Ritz values of Arnoldi on the tangent year) are the
/// leading eigenvalues of the dense monodromy matrix at that climate, as
/// faer's dense eigenvalue solver finds them (a general-purpose reference
/// library).
#[test]
fn newton_krylov_shooting_agrees_with_spin_up_and_dense_multipliers() {
    let (mut sm, t0, u0) =
        profile_state(&["grid.bands=24", "seasons.steps_per_year=36"], 28.0, 35.0);
    let n = sm.len();
    let start = icefold::model::climate::Start {
        label: "warm".into(),
        temperature: t0,
    };
    let p =
        periodic_from(&mut sm, &start, &ShootingOptions::default()).expect("a periodic climate");
    assert!(p.residual < 1e-10);
    let mut spun = u0.clone();
    icefold::analysis::periodic::spin_up(&mut sm, &mut spun, 1e-11, 100_000).unwrap();
    let d = spun
        .iter()
        .zip(&p.start)
        .fold(0.0f64, |m, (a, b)| m.max((a - b).abs()));
    assert!(d < 1e-8, "shooting vs spin-up: {d:e} W yr m-2");
    let mut m = vec![0.0; n * n];
    let mut e = p.start.clone();
    sm.year_with_jacobian(&mut e, &mut m, None).unwrap();
    let dense = icefold::analysis::periodic::floquet_multipliers(&m, n).unwrap();
    assert!(p.multipliers.len() >= 5);
    for k in 0..5 {
        let (a, b) = (p.multipliers[k], dense[k]);
        let (ma, mb) = (a.0.hypot(a.1), b.0.hypot(b.1));
        assert!(
            (ma - mb).abs() < 1e-8,
            "|mu_{k}|: {ma} (Arnoldi) vs {mb} (dense)"
        );
    }
    assert_eq!(p.unstable_modes, 0);
    assert!(dense[0].0.hypot(dense[0].1) < 1.0);
}
