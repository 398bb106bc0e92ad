//! Branches traced with the ice edges as unknowns against North's (1975,
//! J. Atmos. Sci. 32, 2033) closed form (`tests/common/reference.rs`), with
//! the parameters of North, Cahalan & Coakley (1981, Rev. Geophys. 19, 91;
//! from memory): the four folds of the classic model, their convergence,
//! and no spurious turning points.
mod common;

use common::reference::{DiffusiveParams, north_fold, north_ice_free, north_small_cap_fold};
use icefold::analysis::branches::{Hysteresis, TraceOptions, trace_all};
use icefold::model::Param;

/// Closed-form corners (North 1975): the ice-free state's pole and the
/// snowball's equator reach T_s.
fn closed_corners(p: &DiffusiveParams) -> (f64, f64) {
    let r = p.t_s + p.a / p.b;
    let uo1 = north_ice_free(p, 1.0, 1.0) + p.a / p.b;
    let ui0 = p.b0 / p.b - 0.5 * p.b0 * p.s2 / (p.b + 6.0 * p.d);
    (r / uo1, r / ui0)
}

fn trace(bands: usize, spacing: &str, symmetric: bool) -> Hysteresis {
    let m = common::classic(&[
        &format!("grid.symmetric={symmetric}"),
        &format!("grid.bands={bands}"),
        &format!("grid.spacing=\"{spacing}\""),
    ]);
    trace_all(
        &m,
        Param::Flux,
        1100.0,
        1900.0,
        30.0,
        -40.0,
        &TraceOptions::default(),
        &mut |_| {},
    )
}

/// Fold fluxes in ascending order.
fn folds(h: &Hysteresis) -> Vec<f64> {
    let mut f: Vec<f64> = h
        .branches
        .iter()
        .flat_map(|b| b.folds.iter().map(|f| f.point.p))
        .collect();
    f.sort_by(f64::total_cmp);
    f
}

/// Relative errors (large cap, ice-free onset, small cap, snowball melt)
/// in Q = S0/4.
fn errors(bands: usize, spacing: &str, symmetric: bool) -> [f64; 4] {
    let p = DiffusiveParams::north_1981();
    let (_, q_large) = north_fold(&p);
    let (_, q_small) = north_small_cap_fold(&p).expect("a small-cap fold");
    let (q_free, q_melt) = closed_corners(&p);
    let h = trace(bands, spacing, symmetric);
    let f = folds(&h);
    assert_eq!(f.len(), 4, "{bands} {spacing} {symmetric}: folds {f:?}");
    let rel = |got: f64, want: f64| (got / 4.0 - want).abs() / want;
    [
        rel(f[0], q_large),
        rel(f[1], q_free),
        rel(f[2], q_small),
        rel(f[3], q_melt),
    ]
}

#[test]
fn four_folds_within_1e4_at_90_bands() {
    for (spacing, symmetric) in [("sine", true), ("latitude", true), ("sine", false)] {
        let e = errors(90, spacing, symmetric);
        eprintln!("{spacing} symmetric={symmetric} 90 bands: relative errors {e:?}");
        for (name, err) in ["large cap", "ice-free onset", "small cap", "snowball melt"]
            .iter()
            .zip(e)
        {
            assert!(
                err < 1e-4,
                "{spacing} {symmetric}: {name} relative error {err:e}"
            );
        }
    }
}

#[test]
fn folds_converge_at_second_order_with_no_spurious_turning_points() {
    // `errors` asserts exactly the published folds at every resolution: one
    // large-cap and one small-cap fold (North 1984, J. Atmos. Sci. 41, 3390)
    // plus the two corners
    for spacing in ["sine", "latitude"] {
        let e: Vec<[f64; 4]> = [90, 180, 360, 720]
            .iter()
            .map(|&b| errors(b, spacing, true))
            .collect();
        for k in 0..4 {
            // observed order between 90 and 720 bands (a factor 8 in h)
            let order = (e[0][k] / e[3][k]).ln() / 8f64.ln();
            eprintln!(
                "{spacing} fold {k}: {:e} {:e} {:e} {:e}, order {order:.2}",
                e[0][k], e[1][k], e[2][k], e[3][k]
            );
            // the snowball is a pure quadratic in x with Legendre insolation,
            // which finite volumes solve exactly: its melt is exact to
            // rounding on the sine grid
            assert!(
                order >= 1.8 || e[3][k] < 1e-11,
                "{spacing} fold {k}: order {order}"
            );
        }
    }
}

/// Large grids (README, grids): the stiff transport terms put the rounding
/// floor of F above the default tolerance from about 3,500 bands, and the
/// stopping tests scale with it, so a grid of 5,000 bands traces the four
/// folds of North's (1975) closed form, closer than at 90 bands
/// (second-order convergence; observed errors up to 4.8e-9, asserted
/// below 1e-8).
#[test]
fn four_folds_at_5000_bands() {
    let e = errors(5000, "sine", true);
    eprintln!("5000 bands: relative errors {e:?}");
    for err in e {
        assert!(err < 1e-8, "{e:?}");
    }
}

/// The largest documented grid, 20,000 bands (about 10 s; observed errors
/// up to 3.0e-10, asserted below 1e-9).
#[test]
fn four_folds_at_20000_bands() {
    let e = errors(20000, "sine", true);
    eprintln!("20000 bands: relative errors {e:?}");
    for err in e {
        assert!(err < 1e-9, "{e:?}");
    }
}
