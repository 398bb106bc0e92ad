//! Fold sensitivities dλ*/dq = -(w·F_q)/(w·F_λ) (src/analysis/sensitivity.rs)
//! against folds re-traced at perturbed parameters, against North's (1975)
//! closed form, and against the structure of the linear model.
mod common;

use common::reference::{DiffusiveParams, north_fold};
use icefold::analysis::branches::{AnnualProblem, Fold, TraceOptions, trace_all};
use icefold::analysis::sensitivity::{Sensitive, other_params};
use icefold::io::scenario::{DEFAULT_SCENARIO, Scenario};
use icefold::model::{Model, Param};

fn default_model(sets: &[&str]) -> Model {
    let sets: Vec<String> = sets.iter().map(|s| s.to_string()).collect();
    Scenario::parse(DEFAULT_SCENARIO, "default", &sets)
        .unwrap()
        .model()
}

fn flux_folds(m: &Model, lo: f64, hi: f64) -> Vec<Fold> {
    let h = trace_all(
        m,
        Param::Flux,
        lo,
        hi,
        30.0,
        -60.0,
        &TraceOptions::default(),
        &mut |_| {},
    );
    h.branches.into_iter().flat_map(|b| b.folds).collect()
}

/// The large-ice-cap fold (edge below 60 deg) of a flux trace over
/// [1100, 1300] W m-2: the one fold of that range.
fn large_cap_fold(m: &Model) -> Fold {
    let f: Vec<Fold> = flux_folds(m, 1100.0, 1300.0)
        .into_iter()
        .filter(|f| f.point.diagnostics.ice_edge_north_deg < 60.0)
        .collect();
    assert_eq!(
        f.len(),
        1,
        "{:?}",
        f.iter().map(|f| f.point.p).collect::<Vec<_>>()
    );
    f.into_iter().next().unwrap()
}

fn sens(f: &Fold, q: Param) -> f64 {
    assert!(
        f.sensitivity_error.is_none(),
        "fold at {}: {:?}",
        f.point.p,
        f.sensitivity_error
    );
    f.sensitivities
        .iter()
        .find(|(p, _)| *p == q)
        .unwrap_or_else(|| panic!("no d/d{} in {:?}", q.key(), f.sensitivities))
        .1
}

/// The fold value re-traced with q = v over λ* ± 20 W m-2: the smooth fold
/// (one whose sensitivities were computed, i.e. not a corner) nearest λ*.
fn retraced_fold(m: &Model, q: Param, v: f64, p_star: f64) -> f64 {
    let mut m = m.clone();
    m.set_param(q, v);
    let f = flux_folds(&m, p_star - 20.0, p_star + 20.0)
        .iter()
        .filter(|f| f.sensitivity_error.is_none())
        .map(|f| f.point.p)
        .min_by(|a, b| (a - p_star).abs().total_cmp(&(b - p_star).abs()));
    f.unwrap_or_else(|| panic!("no smooth fold near {p_star} with {} = {v}", q.key()))
}

/// Central difference of the re-traced fold, (λ*(q + h) - λ*(q - h))/(2h).
fn retraced_slope(m: &Model, q: Param, h: f64, p_star: f64) -> f64 {
    let v = m.param(q);
    (retraced_fold(m, q, v + h, p_star) - retraced_fold(m, q, v - h, p_star)) / (2.0 * h)
}

/// Steps small enough that the perturbed fold stays on the same smooth
/// piece of the sub-grid residual (it moves by 0.01 to 0.03 W m-2): with
/// steps four times larger some re-traced folds of the 90-band default
/// scenario already land on a neighbouring piece (30% to 75% off).
fn step(q: Param) -> f64 {
    match q {
        Param::Co2 => 0.125,
        Param::OlrA => 2.5e-3,
        Param::OlrB => 2.5e-5,
        Param::Diffusivity => 2.5e-4,
        Param::IceAlbedo | Param::OpenAlbedo | Param::InsolationP2 => 2.5e-5,
        Param::Obliquity => 2.5e-3,
        Param::Threshold => 1.25e-3,
        _ => 1e-4,
    }
}

/// Compares each sensitivity with the re-traced central difference and
/// returns the relative differences. Tolerance: the implicit-function
/// theorem makes the two agree to O(h²) while the fold stays on one smooth
/// piece; what is left is the fold location error of each re-trace, about
/// 1e-9 W m-2 (corrector tolerance 1e-10 W m-2), so |fd - d| <= 1e-5 |d| +
/// 1e-8 W m-2 / h (ten times that location error).
fn check_against_retrace(name: &str, m: &Model, f: &Fold, params: &[Param]) -> Vec<f64> {
    let mut rel = Vec::new();
    for &q in params {
        let d = sens(f, q);
        let h = step(q);
        let fd = retraced_slope(m, q, h, f.point.p);
        let err = (fd - d).abs();
        eprintln!(
            "{name}: fold {:.9}  d/d{:<22} formula {d:>15.9}  re-traced {fd:>15.9}  relative difference {:.1e}",
            f.point.p,
            q.key(),
            err / d.abs()
        );
        assert!(
            err <= 1e-5 * d.abs() + 1e-8 / h,
            "{name}: d/d{} = {d} from the null vector, {fd} re-traced",
            q.key()
        );
        rel.push(err / d.abs());
    }
    rel
}

/// Classic Legendre scenario, 90 bands: the large-cap fold (1179.22 W m-2)
/// is a smooth fold and its sensitivities equal the central differences of
/// re-traced folds (implicit-function theorem at a regular point of the
/// extended system; common practice, no source). Measured: 2e-11 to 3e-7.
#[test]
fn classic_fold_sensitivities_match_retraced_folds() {
    let m = common::classic(&[]);
    let f = large_cap_fold(&m);
    check_against_retrace(
        "classic",
        &m,
        &f,
        &[
            Param::Co2,
            Param::OlrA,
            Param::OlrB,
            Param::Diffusivity,
            Param::IceAlbedo,
            Param::Threshold,
            Param::InsolationP2,
        ],
    );
}

/// Default (orbital) scenario: at its own 90 bands the large-cap fold is a
/// corner fold (see `corner_folds_are_refused`), so the check runs at 120
/// and 180 bands, where the fold is smooth; obliquity enters through the
/// exact annual-mean insolation (implicit-function theorem; common
/// practice, no source). Measured: 1e-12 to 4e-5 (the largest for the
/// small d/dD at 180 bands, 0.029 W m-2 per W m-2 K-1, where the absolute
/// difference is 1e-6).
#[test]
fn default_fold_sensitivities_match_retraced_folds() {
    for bands in ["grid.bands=120", "grid.bands=180"] {
        let m = default_model(&[bands]);
        let f = large_cap_fold(&m);
        check_against_retrace(
            bands,
            &m,
            &f,
            &[
                Param::Obliquity,
                Param::Co2,
                Param::IceAlbedo,
                Param::Diffusivity,
                Param::Threshold,
            ],
        );
    }
}

/// An eccentric orbit (e = 0.3, 120 bands): d/de enters through the
/// closed-form factor (1 - e²)^(-1/2) of the annual mean (Kepler's second
/// law; the annual mean is otherwise independent of e, see
/// `Insolation::annual_mean`), checked against folds re-traced at e ± h
/// (implicit-function theorem; common practice, no source). At the default
/// e = 0 both are zero, so the check needs an eccentric orbit.
#[test]
fn eccentricity_sensitivity_matches_retraced_folds() {
    let m = default_model(&["grid.bands=120", "orbit.eccentricity=0.3"]);
    let f = large_cap_fold(&m);
    let rel = check_against_retrace("e = 0.3", &m, &f, &[Param::Eccentricity, Param::Obliquity]);
    // dλ*/de = -λ* e / (1 - e²) for a fold that sees e only through the
    // insolation scale (λ* (1 - e²)^(-1/2) is fixed)
    let d = sens(&f, Param::Eccentricity);
    let want = -f.point.p * 0.3 / (1.0 - 0.09);
    assert!((d - want).abs() < 1e-9 * want.abs(), "{d} against {want}");
    assert!(rel[0] < 1e-5, "{rel:?}");
}

/// North's (1975) closed form: the snowball (large-cap) fold is the minimum
/// of Q(x_s; A, B, D, a0, b0, T_s, s2) (tests/common/reference.rs, North,
/// Cahalan & Coakley 1981 parameters), so its sensitivities are central
/// differences of that minimum in each parameter, with S0 = 4Q,
/// albedo.ice = 1 - b0, albedo.open = 1 - a0.
///
/// A and T_s only shift the balance (see the next test), so d/dA and d/dT_s
/// are as accurate as the fold itself: 2.4e-6 relative at 90 bands, 7.8e-7
/// at 360. Parameters that reshape the profile (B, D, the albedos, p2) are
/// limited by the sub-grid edge: the formula gives the slope of the smooth
/// piece the discrete fold lies on (re-traced folds confirm it to 1e-6,
/// above), and those slopes scatter about the continuum slope as the edge
/// crosses half-bands. Measured relative differences at 90 / 360 bands:
/// B 2.7e-3 / 2.0e-3, albedo.ice 1.5e-3 / 1.3e-3, albedo.open 6.1e-4 /
/// 5.2e-4, p2 2.7e-3 / 2.3e-3, D 1.1e-1 / 8.2e-2 (1440 bands: 1e-2; the fold
/// hardly depends on D here, dS/dD = 5.3 W m-2 per W m-2 K-1). So the
/// check is on elasticities, |Δ(dS/dq)| q / S < 1e-3 (a 1% change of any
/// parameter moves the fold as the closed form says to within 1e-5 of its
/// value; measured at most 6e-4), and 1e-5 relative for A and T_s.
#[test]
fn classic_sensitivities_match_north_closed_form() {
    let base = DiffusiveParams::north_1981();
    type Set = fn(&mut DiffusiveParams, f64);
    let cases: [(Param, f64, Set); 7] = [
        (Param::OlrA, 1.0, |p, h| p.a += h),
        (Param::OlrB, 1.0, |p, h| p.b += h),
        (Param::Diffusivity, 1.0, |p, h| p.d += h),
        (Param::IceAlbedo, -1.0, |p, h| p.b0 += h),
        (Param::OpenAlbedo, -1.0, |p, h| p.a0 += h),
        (Param::Threshold, 1.0, |p, h| p.t_s += h),
        (Param::InsolationP2, 1.0, |p, h| p.s2 += h),
    ];
    for bands in ["grid.bands=90", "grid.bands=360"] {
        let m = common::classic(&[bands]);
        let f = large_cap_fold(&m);
        for (q, sign, set) in cases {
            let h = 1e-4;
            let (mut up, mut dn) = (base, base);
            set(&mut up, h);
            set(&mut dn, -h);
            let closed = sign * 4.0 * (north_fold(&up).1 - north_fold(&dn).1) / (2.0 * h);
            let d = sens(&f, q);
            let rel = (d - closed).abs() / closed.abs();
            let elasticity = (d - closed).abs() * m.param(q).abs() / f.point.p;
            eprintln!(
                "{bands}: d/d{:<22} icefold {d:>15.9}  North closed form {closed:>15.9}  relative difference {rel:.1e}  elasticity difference {elasticity:.1e}",
                q.key()
            );
            assert!(elasticity < 1e-3, "{bands} d/d{}: {d} vs {closed}", q.key());
            if matches!(q, Param::OlrA | Param::Threshold) {
                assert!(rel < 1e-5, "{bands} d/d{}: {d} vs {closed}", q.key());
            }
        }
    }
}

/// From the structure of the linear model (North 1975: the edge condition
/// and the balance involve A and T_s only through A + B T_s, and the CO2
/// forcing only as a shift of A): with T' = T - T_s the residual is
/// G(T') - (A + B T_s - 5.35 ln(C/C0)), so a fold in flux obeys
/// dS/dT_s = B dS/dA and dS/dC = -(5.35/C) dS/dA exactly. F_T_s is a
/// central difference of the moving sub-grid edge, F_A is -1: the first
/// identity holds only if w is a true left null vector (w·J1 = 0).
#[test]
fn threshold_and_olr_a_enter_only_through_a_plus_b_ts() {
    for bands in ["grid.bands=90", "grid.bands=360"] {
        let m = common::classic(&[bands]);
        let f = large_cap_fold(&m);
        let (da, dts, dc) = (
            sens(&f, Param::OlrA),
            sens(&f, Param::Threshold),
            sens(&f, Param::Co2),
        );
        let b = m.param(Param::OlrB);
        let c = m.param(Param::Co2);
        eprintln!("{bands}: dS/dT_s = {dts}, B dS/dA = {}", b * da);
        assert!(
            (dts - b * da).abs() < 1e-6 * dts.abs(),
            "{dts} vs {}",
            b * da
        );
        assert!((dc + 5.35 / c * da).abs() < 1e-9 * dc.abs(), "{dc} vs {da}");
    }
}

/// The continued parameter has no sensitivity: a trace in flux lists every
/// other parameter the model has, flux not among them; a problem continued
/// in CO2 lists flux instead.
#[test]
fn continued_parameter_is_not_listed() {
    let m = common::classic(&[]);
    let f = large_cap_fold(&m);
    let listed: Vec<Param> = f.sensitivities.iter().map(|s| s.0).collect();
    assert!(!listed.contains(&Param::Flux));
    assert_eq!(listed, other_params(&m, Param::Flux));
    // the classic model has linear OLR and diffusive transport
    assert!(listed.contains(&Param::OlrA) && !listed.contains(&Param::Emissivity));
    assert!(!listed.contains(&Param::Relaxation));
    let p = AnnualProblem::new(m, Param::Co2);
    let q = p.params();
    assert!(q.contains(&Param::Flux) && !q.contains(&Param::Co2));
}

/// Along the fold curve in the (flux, CO2) plane, dS*/dC and dC*/dS are
/// reciprocal (inverse-function theorem; common practice, no source): the
/// fold of a trace in CO2 at the flux of the flux-trace fold sits at the
/// scenario's 280 ppm, and its d/d(orbit.flux) is 1/(dS*/dC).
#[test]
fn flux_and_co2_sensitivities_are_reciprocal() {
    let m = common::classic(&[]);
    let f = large_cap_fold(&m);
    let ds_dc = sens(&f, Param::Co2);
    let mut mc = m.clone();
    mc.set_param(Param::Flux, f.point.p);
    let h = trace_all(
        &mc,
        Param::Co2,
        200.0,
        400.0,
        30.0,
        -60.0,
        &TraceOptions::default(),
        &mut |_| {},
    );
    let g = h
        .branches
        .iter()
        .flat_map(|b| b.folds.iter())
        .filter(|g| g.sensitivity_error.is_none())
        .min_by(|a, b| {
            (a.point.p - 280.0)
                .abs()
                .total_cmp(&(b.point.p - 280.0).abs())
        })
        .expect("a smooth fold in CO2");
    assert!(
        (g.point.p - 280.0).abs() < 1e-5,
        "CO2 fold at {}",
        g.point.p
    );
    let dc_ds = sens(g, Param::Flux);
    eprintln!(
        "dS/dC = {ds_dc}, dC/dS = {dc_ds}, product {}",
        ds_dc * dc_ds
    );
    assert!((ds_dc * dc_ds - 1.0).abs() < 1e-6, "{ds_dc} x {dc_ds}");
}

/// With the ice edges as unknowns the large-cap fold of the default
/// scenario is a smooth fold (it was a corner of the sub-grid residual),
/// so it has sensitivities; the corners where an ice region appears at a
/// pole have none, and say why.
#[test]
fn corner_folds_are_refused() {
    let m = default_model(&[]);
    let f = large_cap_fold(&m);
    assert!(
        !f.sensitivities.is_empty() && f.sensitivity_error.is_none(),
        "{:?}",
        f.sensitivity_error
    );
    let h = trace_all(
        &m,
        Param::Flux,
        1300.0,
        1450.0,
        30.0,
        -60.0,
        &TraceOptions::default(),
        &mut |_| {},
    );
    let corner = h
        .branches
        .iter()
        .flat_map(|b| b.folds.iter())
        .find(|f| f.point.diagnostics.state == icefold::model::climate::State::IceFree)
        .expect("the ice-free corner");
    let e = corner.sensitivity_error.clone().unwrap_or_default();
    assert!(
        corner.sensitivities.is_empty() && e.contains("corner"),
        "{e}"
    );
    let m = common::classic(&[]);
    let f = large_cap_fold(&m);
    assert!(f.sensitivity_error.is_none());
}
