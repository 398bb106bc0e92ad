//! The idealised seasonal insolation of Wagner & Eisenman (2015, J.
//! Climate 28, 3998, eq. 3 and Table 1): S(x, t) = S0 - S1 x cos(ω t') -
//! S2 x², clipped at zero, checked against its own closed forms and
//! against brute-force quadrature (common practice, no source), and, with
//! S1 = 0, against the Legendre law it then is (S0 - S2 x² is a P2 law:
//! x² = (2 P2 + 1)/3, North 1975).

use icefold::analysis::branches::{TraceOptions, trace_all};
use icefold::io::scenario::Scenario;
use icefold::model::Param;
use icefold::model::seasonal::insolation_tables;
use icefold::physics::insolation::{
    Insolation, InsolationLaw, clipped_sine_integral, clipped_sine_mean,
};
use icefold::physics::orbit::Orbit;
use std::f64::consts::PI;

/// Wagner & Eisenman (2015), Table 1: S0 = 420, S1 = 338, S2 = 240 W m-2;
/// our S0 = flux/4 + S2/3, so flux = 4 (420 - 80) = 1360 W m-2.
fn table1() -> Insolation {
    let q = 1360.0 / 4.0;
    Insolation::new(
        Orbit {
            flux: 1360.0,
            obliquity: 0.0,
            eccentricity: 0.0,
            perihelion: 0.0,
        },
        InsolationLaw::Idealised {
            s1: 338.0 / q,
            s2: 240.0 / q,
        },
    )
}

/// Brute force: the midpoint rule with a million points (common practice).
fn brute(f: impl Fn(f64) -> f64, a: f64, b: f64) -> f64 {
    let m = 1_000_000;
    let h = (b - a) / m as f64;
    (0..m).map(|k| f(a + (k as f64 + 0.5) * h)).sum::<f64>() * h
}

#[test]
fn clipped_sine_integrals_match_quadrature() {
    for (a, c) in [
        (1.0, 0.5),
        (0.3, 1.0),
        (-0.4, 1.0),
        (-2.0, 1.0),
        (0.2, -0.9),
        (0.0, 1.0),
    ] {
        let mean = clipped_sine_mean(a, c);
        let q = brute(|t: f64| (a + c * t.sin()).max(0.0), 0.0, 2.0 * PI) / (2.0 * PI);
        assert!((mean - q).abs() < 1e-9, "mean a={a} c={c}: {mean} vs {q}");
        for (t1, t2) in [(0.0, 0.7), (1.0, 4.0), (-3.0, 0.5), (5.5, 12.0)] {
            let i = clipped_sine_integral(a, c, t1, t2);
            let q = brute(|t: f64| (a + c * t.sin()).max(0.0), t1, t2);
            assert!((i - q).abs() < 1e-8, "a={a} c={c} [{t1},{t2}]: {i} vs {q}");
        }
    }
}

#[test]
fn table1_law_has_its_published_values() {
    let ins = table1();
    // equator: S0 all year (x = 0); Wagner & Eisenman (2015), Table 1
    assert!((ins.annual_mean(0.0) - 420.0).abs() < 1e-12);
    assert!((ins.daily(0.0, 0.3) - 420.0).abs() < 1e-12);
    // the northern summer solstice (t = 1/4 after our spring equinox) at
    // x = 0.5: S0 + S1/2 - S2/4
    let s = ins.daily(0.5, 0.25);
    assert!((s - (420.0 + 169.0 - 60.0)).abs() < 1e-9, "{s}");
    // the winter pole: 420 - 338 - 240 < 0, clipped to zero
    assert_eq!(ins.daily(1.0, 0.75), 0.0);
    assert_eq!(ins.daily(-1.0, 0.25), 0.0);
    // where no clipping occurs, the annual mean is S0 - S2 x²
    for x in [0.1, 0.3, 0.4] {
        let a = ins.annual_mean(x);
        assert!((a - (420.0 - 240.0 * x * x)).abs() < 1e-9, "x = {x}: {a}");
    }
    // near the pole the clipping raises the annual mean above S0 - S2 x²,
    // which it equals by brute force over the year
    let x = 0.95;
    let q = brute(|t| ins.daily(x, t), 0.0, 1.0);
    assert!((ins.annual_mean(x) - q).abs() < 1e-8);
    assert!(ins.annual_mean(x) > 420.0 - 240.0 * x * x + 1.0);
}

#[test]
fn seasonal_tables_average_to_the_annual_mean() {
    let sc = Scenario::load(
        None,
        &[
            "insolation.kind=\"idealised\"".into(),
            "orbit.flux=1360".into(),
            "grid.bands=36".into(),
            "grid.symmetric=false".into(),
        ],
    )
    .unwrap();
    let model = sc.model();
    let pts = model.insolation_sample_points();
    let steps = 24;
    let tables = insolation_tables(&model, steps);
    let ins = table1();
    for (h, p) in pts.iter().enumerate() {
        for j in 0..3 {
            let mean: f64 = (0..steps)
                .map(|k| tables[k * pts.len() + h][j])
                .sum::<f64>()
                / steps as f64;
            let want = ins.annual_mean(p[j]) / 1360.0;
            assert!(
                (mean - want).abs() < 1e-13,
                "x = {}: {mean} vs {want}",
                p[j]
            );
            // and each step's value is the average over its step
            let k = 5;
            let q = brute(
                |t| ins.daily(p[j], t),
                k as f64 / steps as f64,
                (k + 1) as f64 / steps as f64,
            ) * steps as f64
                / 1360.0;
            assert!((tables[k * pts.len() + h][j] - q).abs() < 1e-9);
        }
    }
}

/// With S1 = 0 the idealised law is the Legendre law with
/// p2 = -(2 S2/3)/(flux/4) (x² = (2 P2 + 1)/3): the same folds (North
/// 1975's P2 form; algebra, common practice).
#[test]
fn without_seasons_it_is_the_legendre_law() {
    let flux: f64 = 1360.0;
    let s2: f64 = 240.0;
    let p2 = -(2.0 * s2 / 3.0) / (flux / 4.0);
    let trace = |sets: Vec<String>| {
        let sc = Scenario::load(None, &sets).unwrap();
        let m = sc.model();
        let opts = TraceOptions {
            integrate_jumps: false,
            sensitivities: false,
            ..TraceOptions::default()
        };
        let h = trace_all(
            &m,
            Param::Flux,
            1000.0,
            2200.0,
            30.0,
            -60.0,
            &opts,
            &mut |_| {},
        );
        let mut f: Vec<f64> = h
            .branches
            .iter()
            .flat_map(|b| b.folds.iter().map(|f| f.point.p))
            .collect();
        f.sort_by(f64::total_cmp);
        f
    };
    let common = |kind: &str| {
        vec![
            format!("insolation.kind=\"{kind}\""),
            format!("orbit.flux={flux}"),
            "grid.bands=90".into(),
        ]
    };
    let mut a = common("idealised");
    a.extend(["insolation.s1=0".to_string(), format!("insolation.s2={s2}")]);
    let mut b = common("legendre");
    b.push(format!("insolation.p2={p2}"));
    let (fa, fb) = (trace(a), trace(b));
    assert!(fa.len() >= 2, "{fa:?}");
    assert_eq!(fa.len(), fb.len(), "{fa:?} vs {fb:?}");
    for (x, y) in fa.iter().zip(&fb) {
        assert!((x - y).abs() < 1e-8 * x, "{x} vs {y}");
    }
}

#[test]
fn a_negative_annual_mean_is_refused() {
    let err = Scenario::load(
        None,
        &[
            "insolation.kind=\"idealised\"".into(),
            "insolation.s2=600".into(),
        ],
    )
    .unwrap_err()
    .to_string();
    assert!(
        err.contains("insolation.s2") && err.contains("non-negative"),
        "{err}"
    );
}
