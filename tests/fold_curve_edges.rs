//! Fold curves of the model with its ice edges as unknowns
//! (`icefold::analysis::edgefold`): through the folds that independent
//! one-parameter traces locate, in several parameters and transport laws,
//! and refused where there is no smooth fold to continue.

use icefold::analysis::branches::{Hysteresis, TraceOptions, trace_all};
use icefold::analysis::edgefold::{EdgeFoldError, trace_edge_fold_curve};
use icefold::io::scenario::Scenario;
use icefold::model::{Model, Param};

const FLUX: (f64, f64) = (1070.0, 1540.0);

fn model(sets: &[&str]) -> Model {
    let sets: Vec<String> = sets.iter().map(|s| s.to_string()).collect();
    Scenario::load(None, &sets).unwrap().model()
}

fn traced(m: &Model, sensitivities: bool) -> Hysteresis {
    let opts = TraceOptions {
        integrate_jumps: false,
        sensitivities,
        ..TraceOptions::default()
    };
    trace_all(
        m,
        Param::Flux,
        FLUX.0,
        FLUX.1,
        30.0,
        -60.0,
        &opts,
        &mut |_| {},
    )
}

/// The lowest-flux fold of a trace (the snowball fold): band temperatures
/// and flux.
fn snowball_fold(m: &Model) -> (Vec<f64>, f64) {
    traced(m, false)
        .branches
        .iter()
        .flat_map(|b| b.folds.iter())
        .map(|f| (f.point.temperature.clone(), f.point.p))
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .expect("a snowball fold")
}

/// Continues the snowball fold of `m` in `across` over `range` and checks
/// every `every`-th point against the nearest fold of an independent trace
/// at that across value (pseudo-arclength continuation with its own fold
/// refinement; the same fold found by a different computation, common
/// practice, no source), to 1e-10 relative. Returns the curve.
fn check_curve(m: &Model, across: Param, range: (f64, f64), every: usize) -> Vec<(f64, f64)> {
    let (u, p) = snowball_fold(m);
    let (curve, work) =
        trace_edge_fold_curve(m, Param::Flux, across, &u, p, range, FLUX, 1e-10).expect("a curve");
    assert!(curve.len() >= 5, "{curve:?}");
    assert!(work.located as usize >= curve.len());
    let mut checked = 0;
    for &(a, q) in curve.iter().step_by(every) {
        let mut m2 = m.clone();
        m2.set_param(across, a);
        let nearest = traced(&m2, false)
            .branches
            .iter()
            .flat_map(|b| b.folds.iter().map(|f| f.point.p))
            .min_by(|x, y| (x - q).abs().total_cmp(&(y - q).abs()))
            .expect("folds");
        assert!(
            (nearest - q).abs() < 1e-10 * q,
            "{} = {a}: curve {q}, slice {nearest}",
            across.key()
        );
        checked += 1;
    }
    assert!(checked >= 3);
    curve
}

/// CO2 over 140 to 560 ppm (a log-forcing parameter, 5.35 ln(C/C0), Myhre
/// et al. 1998): the snowball fold moves to lower flux as CO2 rises (more
/// greenhouse forcing, the same absorbed flux suffices; common practice,
/// no source) over the whole range.
#[test]
fn co2_curve_meets_the_slices() {
    let m = model(&["grid.bands=45"]);
    let curve = check_curve(&m, Param::Co2, (140.0, 560.0), 8);
    assert_eq!(curve[0].0, 140.0);
    assert_eq!(curve.last().unwrap().0, 560.0);
    assert!(curve.windows(2).all(|w| w[1].1 < w[0].1), "{curve:?}");
}

/// Obliquity with moist static energy transport (Hwang & Frierson 2010)
/// and with Budyko's relaxation transport (Budyko 1969), each against its
/// own slices.
#[test]
fn obliquity_curves_of_other_transports_meet_the_slices() {
    for sets in [
        &[
            "grid.bands=45",
            "transport.kind=\"moist\"",
            "transport.relative_humidity=0.8",
        ][..],
        &[
            "grid.bands=45",
            "transport.kind=\"relaxation\"",
            "transport.relaxation=3.04",
        ][..],
    ] {
        let mut m = model(sets);
        m.set_param(Param::Obliquity, 23.0);
        check_curve(&m, Param::Obliquity, (10.0, 40.0), 4);
    }
}

/// A corner (an ice region appearing at the pole, where the branch turns
/// without a smooth fold) has nothing to continue, and the smooth albedo is
/// not the edge model's: both refused, not continued as something else.
#[test]
fn corners_and_other_albedos_are_refused() {
    let m = model(&["grid.bands=45"]);
    let h = traced(&m, true);
    let corner = h
        .branches
        .iter()
        .flat_map(|b| b.folds.iter())
        .find(|f| {
            f.sensitivity_error
                .as_deref()
                .is_some_and(|e| e.contains("corner"))
        })
        .expect("a corner fold in the default scenario");
    let r = trace_edge_fold_curve(
        &m,
        Param::Flux,
        Param::Obliquity,
        &corner.point.temperature,
        corner.point.p,
        (0.0, 90.0),
        FLUX,
        1e-10,
    );
    assert_eq!(r.err(), Some(EdgeFoldError::NoFold));
    let smooth = model(&["grid.bands=45", "albedo.kind=\"smooth\""]);
    let (u, p) = (vec![0.0; 45], 1300.0);
    let r = trace_edge_fold_curve(
        &smooth,
        Param::Flux,
        Param::Obliquity,
        &u,
        p,
        (0.0, 90.0),
        FLUX,
        1e-10,
    );
    assert!(matches!(r, Err(EdgeFoldError::NotCovered(_))), "{r:?}");
}
