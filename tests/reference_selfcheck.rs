//! Self-checks of the closed-form reference solutions in
//! `tests/common/reference.rs`. Every check names its source. Nothing here
//! depends on the `icefold` crate.

mod common;
use common::reference::*;

// ---------------------------------------------------------------------------
// Small utilities (test-local)
// ---------------------------------------------------------------------------

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(1e-300)
}

/// Golden-section minimisation on [lo, hi] (common practice, no source).
fn golden_min(f: impl Fn(f64) -> f64, mut lo: f64, mut hi: f64, tol: f64) -> f64 {
    let r = 0.5 * (5f64.sqrt() - 1.0);
    let mut c = hi - r * (hi - lo);
    let mut d = lo + r * (hi - lo);
    let (mut fc, mut fd) = (f(c), f(d));
    while hi - lo > tol {
        if fc < fd {
            hi = d;
            d = c;
            fd = fc;
            c = hi - r * (hi - lo);
            fc = f(c);
        } else {
            lo = c;
            c = d;
            fc = fd;
            d = lo + r * (hi - lo);
            fd = f(d);
        }
    }
    0.5 * (lo + hi)
}

fn bisect_root(f: impl Fn(f64) -> f64, mut lo: f64, mut hi: f64, tol: f64) -> f64 {
    let flo = f(lo);
    assert!(flo * f(hi) < 0.0, "no sign change on [{lo}, {hi}]");
    while hi - lo > tol {
        let m = 0.5 * (lo + hi);
        if (f(m) < 0.0) == (flo < 0.0) {
            lo = m;
        } else {
            hi = m;
        }
    }
    0.5 * (lo + hi)
}

/// Independent second-order finite-volume solver of the diffusive model
/// (common practice, no source): N cells on [0, 1], zero flux at x = 0
/// (symmetry) and at x = 1 (where 1 - x^2 = 0), source integrated exactly
/// per cell (3-point Gauss-Legendre on each side of x_s; integrand is a
/// polynomial of degree <= 4), tridiagonal solve. Returns cell centres and T.
fn fv_solve(p: &DiffusiveParams, q: f64, a_olr: f64, xs: f64, n: usize) -> (Vec<f64>, Vec<f64>) {
    let h = 1.0 / n as f64;
    let gl = [
        (-(0.6f64).sqrt(), 5.0 / 9.0),
        (0.0, 8.0 / 9.0),
        ((0.6f64).sqrt(), 5.0 / 9.0),
    ];
    let integrate = |lo: f64, hi: f64, open: bool| -> f64 {
        let (m, r) = (0.5 * (lo + hi), 0.5 * (hi - lo));
        gl.iter()
            .map(|&(t, w)| {
                let x = m + r * t;
                let a = if open { p.a0 + p.a2 * p2(x) } else { p.b0 };
                w * r * q * (1.0 + p.s2 * p2(x)) * a
            })
            .sum()
    };
    let mut lower = vec![0.0; n];
    let mut diag = vec![0.0; n];
    let mut upper = vec![0.0; n];
    let mut rhs = vec![0.0; n];
    let xc: Vec<f64> = (0..n).map(|i| (i as f64 + 0.5) * h).collect();
    for i in 0..n {
        let (xl, xr) = (i as f64 * h, (i + 1) as f64 * h);
        let kl = if i == 0 {
            0.0
        } else {
            p.d * (1.0 - xl * xl) / (h * h)
        };
        let kr = if i == n - 1 {
            0.0
        } else {
            p.d * (1.0 - xr * xr) / (h * h)
        };
        lower[i] = kl;
        upper[i] = kr;
        diag[i] = -(kl + kr) - p.b;
        let src = if xr <= xs {
            integrate(xl, xr, true)
        } else if xl >= xs {
            integrate(xl, xr, false)
        } else {
            integrate(xl, xs, true) + integrate(xs, xr, false)
        };
        rhs[i] = a_olr - src / h;
    }
    // Thomas algorithm
    for i in 1..n {
        let w = lower[i] / diag[i - 1];
        diag[i] -= w * upper[i - 1];
        rhs[i] -= w * rhs[i - 1];
    }
    let mut t = vec![0.0; n];
    t[n - 1] = rhs[n - 1] / diag[n - 1];
    for i in (0..n - 1).rev() {
        t[i] = (rhs[i] - upper[i] * t[i + 1]) / diag[i];
    }
    (xc, t)
}

fn interp(xc: &[f64], t: &[f64], x: f64) -> f64 {
    let h = xc[1] - xc[0];
    let j = (((x - xc[0]) / h).floor() as usize).min(xc.len() - 2);
    let w = (x - xc[j]) / h;
    (1.0 - w) * t[j] + w * t[j + 1]
}

const NFV: usize = 20_000;

/// Q(x_s) from the finite-volume solver: T is affine in Q at fixed x_s,
/// T = Q U + V, so Q = (T_s - V(x_s)) / U(x_s).
fn fv_q_of_xs(p: &DiffusiveParams, xs: f64) -> f64 {
    let (xc, u) = fv_solve(p, 1.0, 0.0, xs, NFV);
    let (_, v) = fv_solve(p, 0.0, p.a, xs, NFV);
    (p.t_s - interp(&xc, &v, xs)) / interp(&xc, &u, xs)
}

/// Finite-difference residual of D((1-x^2)T')' - A - BT + Q S a at x.
fn ode_residual(p: &DiffusiveParams, q: f64, xs: f64, x: f64, h: f64) -> f64 {
    let t = |y: f64| north_temperature(p, q, xs, y);
    let (xm, xp) = (x - 0.5 * h, x + 0.5 * h);
    let flux_p = (1.0 - xp * xp) * (t(x + h) - t(x)) / h;
    let flux_m = (1.0 - xm * xm) * (t(x) - t(x - h)) / h;
    let a = if x < xs { p.a0 + p.a2 * p2(x) } else { p.b0 };
    p.d * (flux_p - flux_m) / h - p.a - p.b * t(x) + q * (1.0 + p.s2 * p2(x)) * a
}

// ---------------------------------------------------------------------------
// Legendre helpers
// ---------------------------------------------------------------------------

/// Source: standard product identity P2^2 = 1/5 + (2/7)P2 + (18/35)P4 and
/// P_n(1) = 1, P4(0) = 3/8 (from memory; e.g. Abramowitz & Stegun 1964 ch. 22).
#[test]
fn legendre_polynomials() {
    for i in 0..=20 {
        let x = i as f64 / 20.0;
        let lhs = p2(x) * p2(x);
        let rhs = 0.2 + 2.0 / 7.0 * p2(x) + 18.0 / 35.0 * p4(x);
        assert!((lhs - rhs).abs() < 1e-15, "x={x}");
    }
    assert!((p2(1.0) - 1.0).abs() < 1e-15 && (p4(1.0) - 1.0).abs() < 1e-15);
    assert!((p4(0.0) - 0.375).abs() < 1e-15 && (p2(0.0) + 0.5).abs() < 1e-15);
}

/// Integer degrees as special cases of the same series/ODE code:
/// nu = 1 (beta = -2): P_1 = x; nu = 2 (beta = -6): P_2. The even solution
/// for nu = 1 with y(0) = 1 is -Q_1(x) = 1 - (x/2) ln((1+x)/(1-x))
/// (Legendre function of the second kind; Abramowitz & Stegun 1964 ch. 8,
/// from memory). Tests the Taylor continuation right up to x -> 1.
#[test]
fn homogeneous_solutions_integer_degree() {
    for &x in &[0.0, 0.2, 0.5, 0.9, 0.99, 1.0] {
        let (v, dv) = conical_p(-2.0, x);
        assert!(
            (v - x).abs() < 1e-14 && (dv - 1.0).abs() < 1e-14,
            "P1 x={x}"
        );
        let (v, dv) = conical_p(-6.0, x);
        assert!(
            (v - p2(x)).abs() < 1e-14 && (dv - 3.0 * x).abs() < 1e-13,
            "P2 x={x}"
        );
    }
    for &x in &[0.0f64, 0.3, 0.7, 0.95, 0.999, 0.999999, 1.0 - 1e-10, -0.8] {
        let xa: f64 = x.abs();
        let atanh = 0.5 * ((1.0 + xa) / (1.0 - xa)).ln();
        let exact = 1.0 - xa * atanh;
        let dexact = (-atanh - xa / ((1.0 - xa) * (1.0 + xa))) * if x < 0.0 { -1.0 } else { 1.0 };
        let (v, dv) = legendre_even(-2.0, x);
        assert!(
            rel(v, exact) < 1e-12 || (v - exact).abs() < 1e-13,
            "ye x={x}: {v} vs {exact}"
        );
        assert!(
            rel(dv, dexact) < 1e-12 || (dv - dexact).abs() < 1e-13,
            "ye' x={x}: {dv} vs {dexact}"
        );
    }
}

/// The even solution equals [P_nu(x) + P_nu(-x)] / (2 P_nu(0)), where both
/// P_nu values come from the hypergeometric series (North 1975 uses
/// P_nu(x) + P_nu(-x) for the equatorial region). Two independent
/// algorithms for the same function.
#[test]
fn even_solution_matches_hypergeometric_combination() {
    let beta = 2.09 / 0.649;
    let p0 = conical_p(beta, 0.0).0;
    for &x in &[0.05, 0.2, 0.4, 0.55] {
        let (a, da) = conical_p(beta, x);
        let (b, db) = conical_p(beta, -x);
        let (ye, dye) = legendre_even(beta, x);
        assert!(rel(ye, (a + b) / (2.0 * p0)) < 1e-13, "x={x}");
        assert!(rel(dye, (da - db) / (2.0 * p0)) < 1e-12, "x={x}");
    }
}

/// Both homogeneous solutions satisfy (1-x^2)y'' - 2xy' - beta y = 0
/// (North 1975): centred finite differences of the returned derivative.
#[test]
fn homogeneous_solutions_satisfy_ode() {
    let beta = 2.09 / 0.649;
    for &x in &[0.1f64, 0.5, 0.9, 0.99, 0.9999] {
        // step scaled with the distance to the singular point x = 1:
        // truncation ~ (h/(1-x))^2 ~ 1e-8, roundoff ~ eps (1-x)/h ~ 1e-12
        let h = 1e-4 * (1.0 - x);
        for (name, f) in [
            (
                "P_nu",
                &(|y: f64| conical_p(beta, y)) as &dyn Fn(f64) -> (f64, f64),
            ),
            ("y_e", &(|y: f64| legendre_even(beta, y))),
        ] {
            let d2 = (f(x + h).1 - f(x - h).1) / (2.0 * h);
            let (y, dy) = f(x);
            let r = (1.0 - x * x) * d2 - 2.0 * x * dy - beta * y;
            let scale = (2.0 * x * dy).abs() + (beta * y).abs();
            assert!(r.abs() < 1e-6 * scale, "{name} x={x} r={r} scale={scale}");
        }
    }
    // regularity / boundary values: P_nu(1) = 1, y_e'(0) = 0
    assert_eq!(conical_p(beta, 1.0).0, 1.0);
    assert_eq!(legendre_even(beta, 0.0).1, 0.0);
}

// ---------------------------------------------------------------------------
// Diffusive model
// ---------------------------------------------------------------------------

/// Consistency (brief; common practice): if ice and open co-albedo are
/// equal everywhere (a2 = 0, b0 = a0) the ice edge is irrelevant and the
/// solution is the ice-free one, (Q a0 - A)/B + Q a0 s2 P2/(B+6D) (North 1975).
#[test]
fn equal_coalbedo_gives_ice_free_solution() {
    let mut p = DiffusiveParams::north_1981();
    p.a2 = 0.0;
    p.b0 = p.a0;
    let q = 334.4;
    for &xs in &[0.2, 0.6, 0.95] {
        for &x in &[0.0, 0.1, 0.5, 0.8, 0.97, 1.0] {
            let t = north_temperature(&p, q, xs, x);
            let t_hand = (q * p.a0 - p.a) / p.b + q * p.a0 * p.s2 * p2(x) / (p.b + 6.0 * p.d);
            assert!(
                (t - north_ice_free(&p, q, x)).abs() < 1e-12,
                "xs={xs} x={x}"
            );
            assert!((t - t_hand).abs() < 1e-12, "xs={xs} x={x}");
        }
    }
}

/// The ice-free particular solution (including the P4 term from a2 != 0)
/// satisfies the ODE with open co-albedo everywhere (North 1975; residual by
/// finite differences, common practice).
#[test]
fn ice_free_solution_satisfies_ode() {
    let p = DiffusiveParams::north_1981();
    let q = 334.4;
    // residual of the exact solution: truncation O(h^2 |T''''|) ~ 1e-7 plus
    // roundoff ~ 4 eps D |T| / h^2 ~ 2e-6; a wrong coefficient gives O(1).
    let h = 1e-4;
    for &x in &[0.05, 0.3, 0.6, 0.9, 0.99] {
        let t = |y: f64| north_ice_free(&p, q, y);
        let (xm, xp) = (x - 0.5 * h, x + 0.5 * h);
        let lap =
            ((1.0 - xp * xp) * (t(x + h) - t(x)) - (1.0 - xm * xm) * (t(x) - t(x - h))) / (h * h);
        let r = p.d * lap - p.a - p.b * t(x) + q * (1.0 + p.s2 * p2(x)) * (p.a0 + p.a2 * p2(x));
        assert!(r.abs() < 2e-5, "x={x} r={r}");
    }
}

/// Closed-form profile solves the boundary-value problem of North (1975):
/// ODE residual in each region, T and T' continuous at x_s, T(x_s) = T_s,
/// T'(0) = 0. Residual tolerance: with h = 1e-4 the second differences
/// have truncation error O(h^2) ~ 1e-6 and roundoff ~ 4 eps D |T|/h^2 ~ 2e-6
/// W m^-2 (common practice); wrong coefficients give O(1) residuals.
#[test]
fn closed_form_satisfies_bvp() {
    let p = DiffusiveParams::north_1981();
    for &xs in &[0.3, 0.7, 0.95] {
        let q = north_q_of_xs(&p, xs);
        let h = 1e-4;
        for &x in &[0.02, 0.5 * xs, xs - 0.01, xs + 0.5 * (1.0 - xs), 0.995] {
            if (x - xs).abs() < 2.0 * h {
                continue;
            }
            let r = ode_residual(&p, q, xs, x, h);
            assert!(r.abs() < 2e-5, "xs={xs} x={x} residual={r}");
        }
        let above = f64::from_bits(xs.to_bits() + 1);
        let t_lo = north_temperature(&p, q, xs, xs);
        let t_hi = north_temperature(&p, q, xs, above);
        assert!((t_lo - p.t_s).abs() < 1e-10, "T(xs)={t_lo}");
        assert!((t_hi - p.t_s).abs() < 1e-10, "T(xs+)={t_hi}");
        let d_lo = north_temperature_dx(&p, q, xs, xs);
        let d_hi = north_temperature_dx(&p, q, xs, above);
        assert!(
            (d_lo - d_hi).abs() < 1e-9 * d_lo.abs().max(1.0),
            "T' jump {d_lo} {d_hi}"
        );
        assert!(north_temperature_dx(&p, q, xs, 0.0).abs() < 1e-14);
    }
}

/// Analytic limits of Q(x_s) derived from the closed form (this file's
/// derivation, checked by hand): x_s -> 0 means T(0) = T_s for an
/// ice-covered planet, Q = (T_s + A/B) / U_i(0); x_s -> 1 means T(1) = T_s
/// for the ice-free planet, Q = (T_s + A/B) / U_o(1).
#[test]
fn q_of_xs_limits() {
    let p = DiffusiveParams::north_1981();
    let r = p.t_s + p.a / p.b;
    let ui0 = p.b0 / p.b + p.b0 * p.s2 * p2(0.0) / (p.b + 6.0 * p.d);
    let q0 = north_q_of_xs(&p, 1e-7);
    assert!(rel(q0, r / ui0) < 1e-6, "{q0} vs {}", r / ui0);
    // ice-free pole: north_ice_free(Q, 1) = T_s
    let q1 = r / (north_ice_free(&p, 1.0, 1.0) + p.a / p.b);
    let q_near1 = north_q_of_xs(&p, 1.0 - 1e-12);
    // corrections are O(1/g_e) = O((1 - x_s) ln(1/(1 - x_s))) since
    // y_e ~ -ln(1 - x)/const near x = 1
    assert!(rel(q_near1, q1) < 1e-8, "{q_near1} vs {q1}");
}

/// Analytic dQ/dx_s against centred differences (common practice).
#[test]
fn dq_dxs_matches_finite_difference() {
    let p = DiffusiveParams::north_1981();
    for &xs in &[0.1f64, 0.4, 0.6, 0.9, 0.98, 0.999] {
        let h = 1e-6 * (1.0 - xs).min(0.1) / 0.1;
        let fd = (north_q_of_xs(&p, xs + h) - north_q_of_xs(&p, xs - h)) / (2.0 * h);
        let an = north_dq_dxs(&p, xs);
        assert!(
            (fd - an).abs() < 1e-5 * an.abs().max(1.0),
            "xs={xs}: fd {fd} an {an}"
        );
    }
}

/// Independent numerical check (common practice, no source): a 20000-cell
/// second-order finite-volume solution of the same BVP gives the same
/// Q(x_s), the same profile, and the same ice edge at fixed Q.
#[test]
fn closed_form_matches_finite_volume() {
    let p = DiffusiveParams::north_1981();
    for &xs in &[0.2, 0.5, 0.8, 0.95, 0.98] {
        let qa = north_q_of_xs(&p, xs);
        let qn = fv_q_of_xs(&p, xs);
        assert!(rel(qn, qa) < 1e-6, "xs={xs}: closed {qa} fv {qn}");
    }
    // profile at given Q and x_s
    let (xs, q) = (0.8, 330.0);
    let (xc, t) = fv_solve(&p, q, p.a, xs, NFV);
    for i in (0..NFV).step_by(97) {
        let ta = north_temperature(&p, q, xs, xc[i]);
        assert!(
            (t[i] - ta).abs() < 1e-5,
            "x={} fv {} closed {}",
            xc[i],
            t[i],
            ta
        );
    }
    // ice edge at fixed Q = 315 on the stable branch (Q increasing in x_s
    // between the two folds; bracket [0.6, 0.95] chosen on that branch).
    let q = 315.0;
    let xs_fv = bisect_root(
        |x| {
            let (xc, t) = fv_solve(&p, q, p.a, x, NFV);
            interp(&xc, &t, x) - p.t_s
        },
        0.6,
        0.95,
        1e-9,
    );
    let xs_cf = bisect_root(|x| north_q_of_xs(&p, x) - q, 0.6, 0.95, 1e-12);
    assert!((xs_fv - xs_cf).abs() < 1e-6, "fv {xs_fv} closed {xs_cf}");
}

/// Snowball fold: the closed-form fold (bisection on analytic dQ/dx_s)
/// agrees with golden-section minimisation of the finite-volume Q(x_s)
/// (independent). Qualitative expectation (Budyko 1969; North 1975, from
/// memory): the fold is an interior minimum at mid latitudes,
/// 0.5 < x_s < 0.95, with Q_fold below the Q of the ~72 deg edge.
#[test]
fn north_fold_classic() {
    let p = DiffusiveParams::north_1981();
    let (xf, qf) = north_fold(&p);
    assert!(xf > 0.5 && xf < 0.95, "fold x_s = {xf}");
    assert!(north_dq_dxs(&p, xf).abs() < 1e-6);
    for &dx in &[-0.05, -0.01, 0.01, 0.05] {
        assert!(north_q_of_xs(&p, xf + dx) > qf);
    }
    let q95 = north_q_of_xs(&p, 0.95);
    assert!(qf < q95 && qf / q95 > 0.85, "Q_fold/Q(0.95) = {}", qf / q95);
    let xf_fv = golden_min(|x| fv_q_of_xs(&p, x), 0.3, 0.9, 1e-6);
    let qf_fv = fv_q_of_xs(&p, xf_fv);
    assert!(rel(qf_fv, qf) < 1e-6, "fv fold Q {qf_fv} closed {qf}");
    assert!((xf_fv - xf).abs() < 1e-3, "fv fold x {xf_fv} closed {xf}");
}

/// Small-ice-cap fold (North 1984, J. Atmos. Sci. 41, 3390, from memory:
/// in the diffusive model with a sharp edge, caps smaller than a size set
/// by the diffusive length are unstable, i.e. Q(x_s) has a local maximum
/// near the pole). Checked against the finite-volume Q(x_s) (independent).
#[test]
fn north_small_cap_fold_classic() {
    let p = DiffusiveParams::north_1981();
    let (xm, qm) = north_small_cap_fold(&p).expect("small-cap fold expected");
    let (xf, _) = north_fold(&p);
    assert!(xm > 0.9 && xm < 1.0 && xm > xf, "x_s = {xm}");
    // Q decreases from the local max towards the pole, down to the ice-free value
    assert!(north_q_of_xs(&p, 0.5 * (xm + 1.0)) < qm);
    // With a2 = -0.202 the cap at the fold is tiny (x_s ~ 0.9997, 88.5 deg),
    // so the 20000-cell check resolves it only to ~1e-5.
    let xm_fv = golden_min(|x| -fv_q_of_xs(&p, x), 0.99, 0.99999, 1e-7);
    let qm_fv = fv_q_of_xs(&p, xm_fv);
    assert!(rel(qm_fv, qm) < 2e-5, "fv {qm_fv} closed {qm}");
    assert!((xm_fv - xm).abs() < 1e-4, "fv {xm_fv} closed {xm}");
}

/// North, Cahalan & Coakley (1981), parameters from memory: with
/// A = 203.3, B = 2.09, D = 0.649, s2 = -0.482, a0 = 0.681, a2 = -0.202,
/// b0 = 0.38, T_s = -10, the present ice edge x_s ~ 0.95 (72 deg) goes with
/// Q = 334.4 (within 1%).
#[test]
fn north_1981_present_edge_claim() {
    let p = DiffusiveParams::north_1981();
    let q = north_q_of_xs(&p, 0.95);
    assert!(rel(q, 334.4) < 0.01, "Q(0.95) = {q}");
}

// ---------------------------------------------------------------------------
// Relaxation (Budyko) model
// ---------------------------------------------------------------------------

/// T(x_s) = T_s at Q = Q(x_s), as the mean of the two one-sided values
/// (edge convention of Budyko 1969 / Tung 2007).
#[test]
fn budyko_edge_condition() {
    let p = RelaxationParams::tung_2007();
    for &xs in &[0.1, 0.5, 0.9, 0.99] {
        let q = budyko_q_of_xs(&p, xs);
        let lo = budyko_temperature(&p, q, xs, xs - 1e-12);
        let hi = budyko_temperature(&p, q, xs, xs + 1e-12);
        assert!((0.5 * (lo + hi) - p.t_s).abs() < 1e-9, "xs={xs}");
        assert!((budyko_temperature(&p, q, xs, xs) - p.t_s).abs() < 1e-9);
        assert!(hi < lo, "ice side must be colder");
    }
}

/// Global energy balance (Budyko 1969): the hemispheric mean of absorbed
/// minus emitted vanishes, and the transport term gamma(Tbar - T) has zero
/// mean. Integrals by 3-point Gauss-Legendre on [0, x_s] and [x_s, 1]
/// (integrand is a degree-2 polynomial on each piece, so exact).
#[test]
fn budyko_energy_balance() {
    let p = RelaxationParams::tung_2007();
    let gl = [
        (-(0.6f64).sqrt(), 5.0 / 9.0),
        (0.0, 8.0 / 9.0),
        ((0.6f64).sqrt(), 5.0 / 9.0),
    ];
    for &(q, xs) in &[(343.0, 0.95), (330.0, 0.4), (343.0, 0.7)] {
        let tbar = budyko_global_mean(&p, q, xs);
        let mut net = 0.0;
        let mut tmean = 0.0;
        for (lo, hi, alpha) in [(0.0, xs, p.alpha_open), (xs, 1.0, p.alpha_ice)] {
            let (m, r) = (0.5 * (lo + hi), 0.5 * (hi - lo));
            for &(t, w) in &gl {
                let x = m + r * t;
                let temp = budyko_temperature(&p, q, xs, x);
                net += w * r * (q * insolation_shape(p.s2, x) * (1.0 - alpha) - p.a - p.b * temp);
                tmean += w * r * temp;
            }
        }
        assert!(net.abs() < 1e-10, "net = {net}");
        assert!(
            (tmean - tbar).abs() < 1e-10,
            "mean T {tmean} vs Tbar {tbar}"
        );
    }
}

/// Present climate with Tung (2007) parameters (Q = 343): the ice edge
/// lies poleward of 60 deg and the global mean is "roughly 15 C" (brief;
/// observed ~15 C, common knowledge).
#[test]
fn budyko_present_climate() {
    let p = RelaxationParams::tung_2007();
    let (xf, _) = budyko_fold(&p);
    let xs = bisect_root(|x| budyko_q_of_xs(&p, x) - 343.0, xf, 1.0 - 1e-12, 1e-13);
    assert!(xs > 0.866, "x_s = {xs}");
    let tbar = budyko_global_mean(&p, 343.0, xs);
    assert!(tbar > 10.0 && tbar < 20.0, "Tbar = {tbar}");
}

/// Budyko fold: closed-form quadratic root vs golden-section minimisation
/// of budyko_q_of_xs (independent of the derivative algebra). Qualitative
/// (Budyko 1969, from memory): the fold is at mid latitudes and lies a few
/// percent below the present Q.
#[test]
fn budyko_fold_checks() {
    let p = RelaxationParams::tung_2007();
    let (xf, qf) = budyko_fold(&p);
    let xg = golden_min(|x| budyko_q_of_xs(&p, x), 0.0, 1.0, 1e-9);
    assert!((xf - xg).abs() < 1e-6, "closed {xf} golden {xg}");
    assert!(rel(qf, budyko_q_of_xs(&p, xg)) < 1e-12);
    assert!(xf > 0.3 && xf < 0.9, "fold x_s = {xf}");
    assert!(
        qf < 343.0 && qf / 343.0 > 0.85,
        "Q_fold/343 = {}",
        qf / 343.0
    );
    // the fold is the global minimum (check against the ends and a grid)
    for i in 0..=100 {
        let x = i as f64 / 100.0;
        assert!(budyko_q_of_xs(&p, x) >= qf * (1.0 - 1e-14));
    }
}
