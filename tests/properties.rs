//! Property tests (proptest) over random valid scenarios: no panic, no NaN,
//! no state below absolute zero reported as a climate, ice fractions in
//! [0, 1], and every reported equilibrium balancing its energy within the
//! residual its output states. The expectations are facts of the trade
//! (an equilibrium has F = 0 within the solver's tolerance; temperatures
//! lie above absolute zero; fractions lie in [0, 1]); common practice, no
//! source.
mod common;

use icefold::analysis::branches::{TraceOptions, trace_all};
use icefold::io::scenario::Scenario;
use icefold::model::Param;
use icefold::model::climate::{ABSOLUTE_ZERO_C, find_equilibria, standard_starts};
use icefold::numerics::newton::NewtonOptions;
use proptest::prelude::*;

/// A random valid scenario through the same `--set` path as the command
/// line (every value inside its documented range).
fn scenario() -> impl Strategy<Value = Vec<String>> {
    (
        (1000.0f64..1800.0, 0.0f64..90.0, 0.0f64..0.06),
        (150.0f64..260.0, 1.0f64..3.0, 0.1f64..1.5),
        (0.25f64..0.35, 0.55f64..0.7, -15.0f64..0.0),
        (
            prop::sample::select(vec![12usize, 24, 45, 90]),
            any::<bool>(),
            any::<bool>(),
        ),
        prop::sample::select(vec!["orbital", "legendre"]),
    )
        .prop_map(
            |((q, obl, e), (a, b, d), (open, ice, ts), (n, sym, lat), law)| {
                vec![
                    format!("orbit.flux={q}"),
                    format!("orbit.obliquity={obl}"),
                    format!("orbit.eccentricity={e}"),
                    format!("radiation.a={a}"),
                    format!("radiation.b={b}"),
                    format!("transport.diffusivity={d}"),
                    format!("albedo.open={open}"),
                    format!("albedo.ice={ice}"),
                    format!("albedo.threshold={ts}"),
                    format!("grid.bands={n}"),
                    format!("grid.symmetric={sym}"),
                    format!("grid.spacing=\"{}\"", if lat { "latitude" } else { "sine" }),
                    format!("insolation.kind=\"{law}\""),
                ]
            },
        )
}

proptest! {
    // a fixed seed: CI runs the same 128 scenarios every time (a new seed
    // explores others; see DEVELOPERS.md)
    #![proptest_config(ProptestConfig { cases: 128, rng_seed: proptest::test_runner::RngSeed::Fixed(20261203), ..ProptestConfig::default() })]

    #[test]
    fn equilibria_are_physical_and_balanced(sets in scenario()) {
        let sc = match Scenario::parse(icefold::io::scenario::DEFAULT_SCENARIO, "default", &sets) {
            Ok(s) => s,
            // a joint constraint of the schema (e.g. the Legendre albedo
            // term) may refuse a combination: that is a one-line error,
            // not a panic
            Err(e) => { prop_assert!(!e.to_string().is_empty()); return Ok(()); }
        };
        let model = sc.model();
        let opts = NewtonOptions { tolerance: sc.num("solver.tolerance"), ..NewtonOptions::default() };
        let search = find_equilibria(&model, &standard_starts(model.len(), 30.0, -60.0), &opts);
        for e in &search.equilibria {
            prop_assert!(e.temperature.iter().all(|t| t.is_finite() && *t >= ABSOLUTE_ZERO_C), "{:?}", e.temperature);
            let d = &e.diagnostics;
            prop_assert!((0.0..=1.0).contains(&d.ice_area_fraction), "ice fraction {}", d.ice_area_fraction);
            prop_assert!(d.global_mean_c.is_finite() && d.planetary_albedo.is_finite());
            // the stated residual is the real one, and it is small
            let mut f = vec![0.0; model.len()];
            model.evaluate(&e.temperature, &mut f, None);
            let res = f.iter().fold(0.0f64, |m, x| m.max(x.abs()));
            prop_assert!((res - e.residual).abs() <= 1e-12 * (1.0 + res), "{res} vs {}", e.residual);
            prop_assert!(res < 1e-6, "residual {res}");
            prop_assert!(d.energy_imbalance.abs() < 1e-6, "imbalance {}", d.energy_imbalance);
        }
    }

    /// The habitable fraction is an area fraction, in [0, 1], the
    /// area-weighted sum of the bands' shares, and it cannot shrink when
    /// the range widens (the definition; common practice, no source).
    #[test]
    fn habitable_fractions_are_area_fractions(sets in scenario(), lo in -60.0f64..60.0, width in 0.5f64..150.0) {
        let mut sets = sets;
        sets.push(format!("habitability.min_c={lo}"));
        sets.push(format!("habitability.max_c={}", lo + width));
        let Ok(sc) = Scenario::parse(icefold::io::scenario::DEFAULT_SCENARIO, "default", &sets) else {
            return Ok(());
        };
        let model = sc.model();
        let search = find_equilibria(&model, &standard_starts(model.len(), 30.0, -60.0), &NewtonOptions::default());
        let mut wider = model.clone();
        wider.planet.habitable.min_c -= 5.0;
        wider.planet.habitable.max_c += 5.0;
        let mut share = vec![0.0; model.len()];
        for e in &search.equilibria {
            let h = e.diagnostics.habitable_fraction;
            prop_assert!((0.0..=1.0).contains(&h), "{h}");
            model.habitable_band_fractions(&e.temperature, &mut share);
            let sum: f64 = model.grid.weights.iter().zip(&share).map(|(w, v)| w * v).sum();
            prop_assert!((sum - h).abs() < 1e-12, "{sum} vs {h}");
            prop_assert!(wider.habitable_fraction(&e.temperature) >= h - 1e-15);
        }
    }

    #[test]
    fn traced_branches_are_physical(sets in scenario()) {
        let Ok(sc) = Scenario::parse(icefold::io::scenario::DEFAULT_SCENARIO, "default", &sets) else {
            return Ok(());
        };
        let model = sc.model();
        let q = model.param(Param::Flux);
        let opts = TraceOptions { integrate_jumps: false, sensitivities: false, ..TraceOptions::default() };
        let h = trace_all(&model, Param::Flux, 0.9 * q, 1.1 * q, 30.0, -60.0, &opts, &mut |_| {});
        for b in &h.branches {
            for p in &b.points {
                prop_assert!(p.p.is_finite() && p.residual.is_finite());
                prop_assert!(p.temperature.iter().all(|t| t.is_finite() && *t >= ABSOLUTE_ZERO_C));
                prop_assert!((0.0..=1.0).contains(&p.diagnostics.ice_area_fraction));
                // the corrector's tolerance, or its rounding floor where a
                // region shrinks towards a topology change (proptest found
                // 2.9e-6 W m-2 at 24 bands within 0.01 W m-2 of such an end;
                // the floor grows as the cells of the region shrink)
                prop_assert!(p.residual < 1e-4, "residual {}", p.residual);
            }
            for f in &b.folds {
                prop_assert!(f.point.p.is_finite());
                prop_assert!(f.point.temperature.iter().all(|t| *t >= ABSOLUTE_ZERO_C));
            }
        }
        for (lo, hi) in &h.bistable {
            prop_assert!(lo.is_finite() && hi.is_finite() && lo <= hi);
        }
    }
}

/// Random sea-ice planets (Wagner & Eisenman 2015 model, every value in
/// its documented range): conductivity, latent heat, ocean heat flux,
/// forcing, diffusivity, mixed layer.
fn sea_ice_scenario() -> impl Strategy<Value = Vec<String>> {
    (
        (0.5f64..5.0, 3.0f64..20.0, 0.0f64..10.0),
        (-20.0f64..20.0, 0.2f64..1.2, 20.0f64..150.0),
    )
        .prop_map(|((k, lf, fb), (f, d, h))| {
            vec![
                format!("seaice.conductivity={k}"),
                format!("seaice.latent_heat={lf}"),
                format!("seaice.ocean_heat_flux={fb}"),
                format!("radiation.forcing={f}"),
                format!("transport.diffusivity={d}"),
                format!("seasons.mixed_layer_depth={h}"),
                "grid.bands=16".into(),
                "seasons.steps_per_year=24".into(),
            ]
        })
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 64, rng_seed: proptest::test_runner::RngSeed::Fixed(20261203), ..ProptestConfig::default() })]

    /// Every periodic sea-ice climate found is physical (surface
    /// temperatures finite, above absolute zero and never above the
    /// freezing point over ice; thicknesses finite and non-negative; ice
    /// fractions in [0, 1]) and closes its energy budget: the annual
    /// global mean of the net top-of-atmosphere flux plus F_b is zero
    /// (conservation of energy over a periodic cycle; common practice).
    #[test]
    fn sea_ice_climates_are_physical_and_balanced(sets in sea_ice_scenario()) {
        use icefold::analysis::periodic::{ShootingOptions, cycle, find_periodic};
        let path = concat!(env!("CARGO_MANIFEST_DIR"), "/scenarios/sea-ice.toml");
        let sc = Scenario::load(Some(std::path::Path::new(path)), &sets).unwrap();
        let mut sm = sc.seasonal_model().unwrap();
        let n = sm.len();
        let starts = standard_starts(n, 30.0, -60.0);
        let search = find_periodic(&mut sm, &starts, &ShootingOptions { spin_up_years: 150, ..ShootingOptions::default() });
        let fb = sc.num("seaice.ocean_heat_flux");
        // every planet has at least one periodic climate (a warm or a
        // snowball one) that the starts reach
        prop_assert!(!search.climates.is_empty(), "{:?}", search.failures);
        for p in &search.climates {
            prop_assert!(p.residual < 1e-9);
            let c = cycle(&mut sm, &p.start).unwrap();
            for (k, st) in c.states.iter().enumerate() {
                for i in 0..n {
                    prop_assert!(st[i].is_finite() && st[i] >= ABSOLUTE_ZERO_C);
                    let h = c.ice_thickness[k][i];
                    prop_assert!(h.is_finite() && h >= 0.0);
                    if h > 0.0 {
                        prop_assert!(st[i] <= 1e-9, "ice surface at {} C", st[i]);
                    }
                }
                prop_assert!((0.0..=1.0).contains(&c.ice_area_fraction[k]));
            }
            let budget = c.toa_annual_mean + fb;
            prop_assert!(budget.abs() < 1e-8, "TOA + F_b = {budget:e}");
        }
    }
}
