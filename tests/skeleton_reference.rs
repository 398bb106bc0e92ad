//! The edge-parametrised skeleton of the linear step-albedo model against
//! North's (1975, J. Atmos. Sci. 32, 2033) closed form in Legendre functions
//! of complex degree (`tests/common/reference.rs`), with the parameters of
//! North, Cahalan & Coakley (1981, Rev. Geophys. 19, 91; from memory).
mod common;

use common::reference::{
    DiffusiveParams, north_fold, north_ice_free, north_q_of_xs, north_small_cap_fold,
};
use icefold::analysis::skeleton::{EdgeFamilies, SkeletonFold, Topology};

const P: fn() -> DiffusiveParams = DiffusiveParams::north_1981;

/// Closed-form corners: the ice-free state's pole temperature, and the
/// snowball's equator temperature, equal T_s. Both states are pure
/// Legendre-mode solutions (North 1975): ice-free T = Q U_o(x) - A/B;
/// snowball T = Q b0 [1/B + s2 P2(x)/(B + 6D)] - A/B with P2(0) = -1/2.
fn closed_corners(p: &DiffusiveParams) -> (f64, f64) {
    let r = p.t_s + p.a / p.b;
    let uo1 = north_ice_free(p, 1.0, 1.0) + p.a / p.b;
    let ui0 = p.b0 / p.b - 0.5 * p.b0 * p.s2 / (p.b + 6.0 * p.d);
    (r / uo1, r / ui0) // Q at ice-free onset, Q at snowball melt
}

fn families(bands: usize, spacing: &str) -> EdgeFamilies {
    let m = common::classic(&[
        "grid.symmetric=true",
        &format!("grid.bands={bands}"),
        &format!("grid.spacing=\"{spacing}\""),
    ]);
    EdgeFamilies::new(&m, bands).unwrap()
}

fn cap_folds(f: &mut EdgeFamilies) -> Vec<SkeletonFold> {
    f.folds(400)
        .into_iter()
        .filter(|x| x.topology == Topology::PolarCap || x.corner)
        .collect()
}

/// Relative errors of (large-cap fold, small-cap fold, ice-free onset,
/// snowball melt) against the closed form, in Q = S0/4.
fn errors(bands: usize, spacing: &str) -> [f64; 4] {
    let p = P();
    let (_, q_large) = north_fold(&p);
    let (_, q_small) = north_small_cap_fold(&p).expect("these parameters have a small-cap fold");
    let (q_free, q_melt) = closed_corners(&p);
    let mut f = families(bands, spacing);
    let folds = cap_folds(&mut f);
    let interior: Vec<&SkeletonFold> = folds.iter().filter(|x| !x.corner).collect();
    assert_eq!(interior.len(), 2, "{bands} {spacing}: {folds:?}");
    let large = interior
        .iter()
        .min_by(|a, b| a.flux.total_cmp(&b.flux))
        .unwrap();
    let small = interior
        .iter()
        .max_by(|a, b| a.flux.total_cmp(&b.flux))
        .unwrap();
    let corner = |t: Topology| {
        folds
            .iter()
            .find(|x| x.corner && x.topology == t)
            .unwrap()
            .flux
    };
    let rel = |got: f64, want: f64| (got / 4.0 - want).abs() / want;
    [
        rel(large.flux, q_large),
        rel(small.flux, q_small),
        rel(corner(Topology::IceFree), q_free),
        rel(corner(Topology::Snowball), q_melt),
    ]
}

#[test]
fn family_follows_the_closed_form() {
    // Q(x_s) at edges from the tropics to near the pole, 90 cells
    let p = P();
    for spacing in ["sine", "latitude"] {
        let mut f = families(90, spacing);
        for xs in [0.1, 0.3, 0.5, 0.7, 0.9, 0.95, 0.99] {
            let got = f.edge_state(Topology::PolarCap, xs).unwrap().flux / 4.0;
            let want = north_q_of_xs(&p, xs);
            assert!(
                (got - want).abs() / want < 1e-4,
                "{spacing} x_s {xs}: {got} vs {want}"
            );
        }
    }
}

#[test]
fn four_folds_within_1e4_at_90_bands_on_both_spacings() {
    for spacing in ["sine", "latitude"] {
        let e = errors(90, spacing);
        eprintln!("{spacing} 90 bands: relative errors {e:?}");
        for (name, err) in ["large cap", "small cap", "ice-free onset", "snowball melt"]
            .iter()
            .zip(e)
        {
            assert!(err < 1e-4, "{spacing}: {name} relative error {err:e}");
        }
    }
}

#[test]
fn folds_converge_at_second_order() {
    for spacing in ["sine", "latitude"] {
        let e90 = errors(90, spacing);
        let e720 = errors(720, spacing);
        for k in 0..4 {
            // observed order between 90 and 720 bands (a factor 8 in h)
            let order = (e90[k] / e720[k]).ln() / 8f64.ln();
            eprintln!(
                "{spacing} fold {k}: {:e} -> {:e}, order {order:.2}",
                e90[k], e720[k]
            );
            // the snowball is a pure quadratic in x with Legendre insolation,
            // which finite volumes solve exactly: its melt is exact to rounding
            assert!(
                order >= 1.8 || e720[k] < 1e-11,
                "{spacing} fold {k}: order {order}"
            );
        }
    }
}

#[test]
fn no_spurious_turning_points_at_any_resolution() {
    // exactly the published folds: one large-cap and one small-cap fold
    // (North 1984, J. Atmos. Sci. 41, 3390) plus the two corners
    for bands in [90, 180, 360, 720] {
        let mut f = families(bands, "sine");
        let folds = cap_folds(&mut f);
        assert_eq!(
            folds.iter().filter(|x| !x.corner).count(),
            2,
            "{bands}: {folds:?}"
        );
        assert_eq!(
            folds.iter().filter(|x| x.corner).count(),
            2,
            "{bands}: {folds:?}"
        );
    }
}

#[test]
fn stability_by_slope_changes_only_at_folds() {
    // Cahalan & North (1979): caps with dQ/dx_s > 0 are stable; the present
    // climate (x_s = 0.95 at Q = 334.4) is stable, the large-ice-cap
    // branch below the fold unstable
    let mut f = families(90, "sine");
    assert_eq!(f.stable(Topology::PolarCap, 0.95), Some(true));
    assert_eq!(f.stable(Topology::PolarCap, 0.2), Some(false));
    let state = f.edge_state(Topology::PolarCap, 0.95).unwrap();
    assert!((state.flux / 4.0 - 334.4).abs() < 0.5, "{state:?}");
}
