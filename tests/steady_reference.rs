//! The steady model against published closed forms and facts of the trade.
mod common;

use common::reference::{
    DiffusiveParams, RelaxationParams, budyko_global_mean, budyko_temperature, north_fold,
    north_q_of_xs, north_small_cap_fold,
};
use common::{bisect, classic};
use icefold::model::Model;
use icefold::model::climate::{
    Start, State, diagnose, equilibrium_from, find_equilibria, standard_starts,
};
use icefold::numerics::newton::{NewtonOptions, Workspace, newton};

fn solve_from(model: &Model, t0: f64) -> Vec<f64> {
    let mut t = vec![t0; model.len()];
    let mut ws = Workspace::new(model);
    newton(model, &mut t, &NewtonOptions::default(), &mut ws).expect("Newton converges");
    t
}

/// Ice-free diffusive model with Legendre insolation (North 1975, J. Atmos.
/// Sci. 32, 2033): T(x) = (Q a - A)/B + Q a s2 P2(x)/(B + 6D), with constant
/// co-albedo a. Finite volumes on equal-area bands reproduce the band
/// averages of this quadratic exactly, so at 90 bands the match is far
/// inside 1e-4 K.
#[test]
fn ice_free_matches_north_1975() {
    let (q, a, b, d, s2, coalb) = (334.4, 203.3, 2.09, 0.649, -0.482, 0.681);
    let m = classic(&["albedo.open_p2=0", "albedo.threshold=-150", "grid.bands=90"]);
    let t = solve_from(&m, 20.0);
    let g = &m.grid;
    let mut worst = 0.0f64;
    for i in 0..g.len() {
        let (lo, hi) = (g.faces[i], g.faces[i + 1]);
        // band average of P2 = [(x^3 - x)/2] / Δx
        let p2_avg = ((hi * hi * hi - hi) - (lo * lo * lo - lo)) / (2.0 * (hi - lo));
        let exact = (q * coalb - a) / b + q * coalb * s2 * p2_avg / (b + 6.0 * d);
        worst = worst.max((t[i] - exact).abs());
    }
    assert!(worst < 1e-4, "max error {worst} K");
}

/// Second-order convergence: on latitude-spaced bands the scheme is no
/// longer exact; the error of the centre values against the North (1975)
/// solution must fall by ~4 when the bands double (common practice: the
/// scheme is second order).
#[test]
fn ice_free_converges_at_second_order() {
    let (q, a, b, d, s2, coalb) = (334.4, 203.3, 2.09, 0.649, -0.482, 0.681);
    let err = |bands: usize| {
        let m = classic(&[
            "albedo.open_p2=0",
            "albedo.threshold=-150",
            "grid.spacing=\"latitude\"",
            &format!("grid.bands={bands}"),
        ]);
        let t = solve_from(&m, 20.0);
        m.grid
            .centres
            .iter()
            .zip(&t)
            .map(|(x, ti)| {
                let p2 = 1.5 * x * x - 0.5;
                (ti - ((q * coalb - a) / b + q * coalb * s2 * p2 / (b + 6.0 * d))).abs()
            })
            .fold(0.0, f64::max)
    };
    let (e1, e2, e3) = (err(45), err(90), err(180));
    let (o1, o2) = ((e1 / e2).log2(), (e2 / e3).log2());
    assert!(
        o1 > 1.8 && o1 < 2.3 && o2 > 1.8 && o2 < 2.3,
        "orders {o1} {o2} (errors {e1} {e2} {e3})"
    );
}

fn north_edge_deg(q: f64) -> f64 {
    let p = DiffusiveParams::north_1981();
    let (xf, _) = north_fold(&p);
    let (xm, _) = north_small_cap_fold(&p).expect("small-cap fold");
    bisect(|x| north_q_of_xs(&p, x) - q, xf, xm, 1e-14)
        .asin()
        .to_degrees()
}

/// North (1975) step-albedo solution with the North, Cahalan & Coakley
/// (1981) parameters: the ice edge from the closed-form Q(x_s) (Legendre
/// functions of complex degree, tests/common/reference.rs) is matched within
/// 0.1 deg latitude at 90 bands, and the error shrinks with more bands.
#[test]
fn step_albedo_edge_matches_north_1975() {
    let exact = north_edge_deg(334.4);
    let mut errors = Vec::new();
    for bands in [90, 360] {
        let m = classic(&[&format!("grid.bands={bands}")]);
        let t = solve_from(&m, 30.0);
        let d = diagnose(&m, &t);
        assert_eq!(d.state, State::PolarCaps);
        assert_eq!(d.ice_edges_deg.len(), 1);
        errors.push((d.ice_edges_deg[0] - exact).abs());
    }
    assert!(
        errors[0] < 0.1,
        "edge error {} deg at 90 bands (exact {exact})",
        errors[0]
    );
    assert!(errors[1] < errors[0], "no convergence: {errors:?}");
    // at a colder flux too, on the same (stable) branch
    let m = classic(&["orbit.flux=1280"]);
    let t = solve_from(&m, 30.0);
    let got = diagnose(&m, &t).ice_edges_deg[0];
    let exact = north_edge_deg(320.0);
    assert!((got - exact).abs() < 0.1, "{got} vs {exact}");
}

/// Symmetric-hemisphere grid gives the same climate as the full grid
/// (the annual-mean Legendre problem is symmetric; common practice).
#[test]
fn symmetric_grid_matches_full_grid() {
    let full = classic(&["grid.bands=180"]);
    let half = classic(&["grid.bands=90", "grid.symmetric=true"]);
    let (tf, th) = (solve_from(&full, 30.0), solve_from(&half, 30.0));
    let (df, dh) = (diagnose(&full, &tf), diagnose(&half, &th));
    assert!((df.ice_edges_deg[0] - dh.ice_edges_deg[0]).abs() < 1e-9);
    assert!((df.global_mean_c - dh.global_mean_c).abs() < 1e-9);
}

/// Conservation (common practice, no source): area-weighted transport sums
/// to zero to 1e-12 relative; at equilibrium global absorbed equals emitted
/// to 1e-8 W m-2.
#[test]
fn transport_conserves_energy() {
    for sets in [
        vec!["grid.spacing=\"latitude\""],
        vec!["transport.kind=\"relaxation\""],
        vec![],
    ] {
        let m = classic(&sets);
        let t: Vec<f64> = m
            .grid
            .centres
            .iter()
            .map(|x| 25.0 - 40.0 * x * x + 3.0 * (7.0 * x).sin())
            .collect();
        let fl = m.band_fluxes(&t);
        let total: f64 = m
            .grid
            .weights
            .iter()
            .zip(&fl.transport)
            .map(|(w, f)| w * f)
            .sum();
        let scale: f64 = m
            .grid
            .weights
            .iter()
            .zip(&fl.transport)
            .map(|(w, f)| w * f.abs())
            .sum();
        assert!(total.abs() < 1e-12 * scale, "{sets:?}: {total} vs {scale}");
        let start = Start {
            label: "warm".into(),
            temperature: vec![30.0; m.len()],
        };
        let d = equilibrium_from(&m, &start, &NewtonOptions::default())
            .unwrap()
            .diagnostics;
        assert!(
            d.energy_imbalance.abs() < 1e-8,
            "{sets:?}: imbalance {}",
            d.energy_imbalance
        );
    }
}

/// Grey-body limit (fact of the trade): no albedo, no transport,
/// emissivity 1 and uniform S0/4 give T = (S0/(4σ))^(1/4) = 278.3 K for
/// S0 = 1361 W m-2.
#[test]
fn grey_body_limit() {
    let m = classic(&[
        "orbit.flux=1361",
        "insolation.p2=0",
        "radiation.kind=\"greybody\"",
        "radiation.emissivity=1",
        "albedo.open=0",
        "albedo.open_p2=0",
        "albedo.ice=0",
        "transport.diffusivity=0",
    ]);
    let t = solve_from(&m, 0.0);
    let expected = (1361.0 / (4.0 * 5.670_374_419e-8f64)).powf(0.25) - 273.15;
    for ti in &t {
        assert!((ti - expected).abs() < 1e-9, "{ti} vs {expected}");
    }
    assert!((expected + 273.15 - 278.3).abs() < 0.05);
}

/// Warm and cold starts find the coexisting present-day and snowball
/// climates, both stable (Budyko 1969; North 1975: the step-albedo model
/// is bistable at present-day flux).
#[test]
fn warm_and_cold_starts_find_two_stable_climates() {
    let m = classic(&[]);
    let r = find_equilibria(
        &m,
        &standard_starts(m.len(), 30.0, -60.0),
        &NewtonOptions::default(),
    );
    let states: Vec<State> = r.equilibria.iter().map(|e| e.diagnostics.state).collect();
    assert_eq!(states, vec![State::PolarCaps, State::Snowball]);
    assert!(
        r.equilibria
            .iter()
            .all(|e| e.unstable_modes == 0 && e.residual < 1e-9)
    );
}

/// Budyko (1969) relaxation model with step albedo, Tung (2007) parameter
/// set (Q = 343, A = 202, B = 1.9, gamma = 1.6 B, albedo 0.32/0.62,
/// s2 = -0.482, T_s = -10 C). Closed form (tests/common/reference.rs):
/// T(x) = (Q S(x)(1 - alpha(x)) - A + gamma Tbar)/(B + gamma) and
/// Tbar = (Q abar(x_s) - A)/B, with the published convention that T_s is
/// the mean of the temperatures on the two sides of the edge (theta =
/// (T+ - T_s)/J = 1/2, J the jump). icefold spreads the edge over a ramp
/// of a few bands (README model notes). Checked: every band outside the
/// ramp follows the closed-form profile for the model's global mean to
/// 1e-9 K; the edge satisfies the convention (theta within 0.02 of 1/2);
/// the global mean matches the closed form for the model's edge within
/// 0.05 K (the ramp's smearing).
#[test]
fn relaxation_model_matches_budyko_1969() {
    let p = RelaxationParams::tung_2007();
    let q = 343.0;
    let bands = 180;
    let sets = [
        "insolation.p2=-0.482",
        "orbit.flux=1372",
        "radiation.a=202",
        "radiation.b=1.9",
        "transport.kind=\"relaxation\"",
        "transport.relaxation=3.04",
        "albedo.open=0.32",
        "albedo.open_p2=0",
        "albedo.ice=0.62",
        "grid.bands=180",
        "grid.symmetric=true",
    ];
    let m = classic(&sets);
    let xs0 = bisect(
        |x| common::reference::budyko_q_of_xs(&p, x) - q,
        0.7,
        0.999,
        1e-13,
    );
    let t0: Vec<f64> = m
        .grid
        .centres
        .iter()
        .map(|&x| budyko_temperature(&p, q, xs0, x))
        .collect();
    let e = equilibrium_from(
        &m,
        &Start {
            label: "closed form".into(),
            temperature: t0,
        },
        &NewtonOptions::default(),
    )
    .expect("equilibrium near the closed form");
    let d = &e.diagnostics;
    assert_eq!(d.state, State::PolarCaps);
    let xr = d.ice_edges_deg[0].to_radians().sin();
    let tbar = d.global_mean_c;
    let (b, g) = (1.9, 3.04);
    let fl = m.band_fluxes(&e.temperature);
    let mut outside = 0;
    for i in 0..bands {
        let (lo, hi) = (m.grid.faces[i], m.grid.faces[i + 1]);
        let gauss = [
            (-0.6f64.sqrt(), 5.0 / 9.0),
            (0.0, 8.0 / 9.0),
            (0.6f64.sqrt(), 5.0 / 9.0),
        ];
        let s_avg: f64 = gauss
            .iter()
            .map(|(s, w)| {
                0.5 * w
                    * (1.0 - 0.482 * (1.5 * (0.5 * (lo + hi) + 0.5 * (hi - lo) * s).powi(2) - 0.5))
            })
            .sum();
        let coalb = 1.0 - (fl.absorbed[i] / fl.insolation[i]);
        let full = (coalb - 0.32).abs() < 1e-12 || (coalb - 0.62).abs() < 1e-12;
        if full {
            let a = if (coalb - 0.32).abs() < 1e-12 {
                0.68
            } else {
                0.38
            };
            let exact = (q * s_avg * a - 202.0 + g * tbar) / (b + g);
            assert!(
                (e.temperature[i] - exact).abs() < 1e-9,
                "band {i}: {} vs {exact}",
                e.temperature[i]
            );
            outside += 1;
        }
    }
    assert!(
        outside > bands - 20,
        "only {outside} bands outside the ramp"
    );
    let s = 1.0 - 0.482 * (1.5 * xr * xr - 0.5);
    let t_plus = (q * s * 0.68 - 202.0 + g * tbar) / (b + g);
    let jump = q * s * 0.30 / (b + g);
    let theta = (t_plus - (-10.0)) / jump;
    assert!((theta - 0.5).abs() < 0.02, "theta = {theta}");
    let tbar_cf = budyko_global_mean(&p, q, xr);
    assert!(
        (tbar - tbar_cf).abs() < 0.05,
        "global mean {tbar} vs closed form {tbar_cf}"
    );
}
