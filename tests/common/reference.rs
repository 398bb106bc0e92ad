//! Independent closed-form reference solutions for zonal-mean energy-balance
//! models (EBMs), written from the published literature, for comparison with
//! the numerical model in `src/`. Pure `std` Rust; this file must never use
//! the `icefold` crate.
//!
//! Notation: `x = sin(latitude)`, one hemisphere `0 <= x <= 1`, symmetric
//! about the equator; temperatures in degrees Celsius; fluxes in W m^-2.
//!
//! # 1. Diffusive model (North 1975, J. Atmos. Sci. 32, 2033;
//! North, Cahalan & Coakley 1981, Rev. Geophys. 19, 91)
//!
//! Steady state:
//!
//! ```text
//!   D d/dx[(1 - x^2) dT/dx] - (A + B T) + Q S(x) a(x, x_s) = 0,
//!   S(x) = 1 + s2 P2(x),
//!   a(x, x_s) = a0 + a2 P2(x)   for x < x_s   (open surface, co-albedo)
//!             = b0              for x > x_s   (ice),
//!   T(x_s) = T_s,  dT/dx(0) = 0,  T regular at x = 1,
//!   T and dT/dx continuous at x_s.
//! ```
//!
//! Solution in each region = particular + c * homogeneous:
//!
//! * particular: the forcing `F = Q S a - A` is a polynomial in P0, P2, P4
//!   (using `P2^2 = 1/5 + (2/7) P2 + (18/35) P4`); because
//!   `d/dx[(1-x^2) P_n'] = -n(n+1) P_n`, each Legendre component is
//!   `F_n / (B + n(n+1) D)`.
//! * homogeneous: `(1-x^2) y'' - 2 x y' - (B/D) y = 0`, i.e. the Legendre
//!   equation with `nu(nu+1) = -B/D`, `nu = -1/2 + i sqrt(B/D - 1/4)`
//!   (conical function; real for real x).
//!   - polar region: `y_p(x) = P_nu(x) = 2F1(-nu, nu+1; 1; (1-x)/2)`, regular
//!     at x = 1. The series coefficients are real because
//!     `(k - nu)(k + nu + 1) = k^2 + k + B/D`, so this is done in f64.
//!   - equatorial region: the even solution `y_e`, normalised `y_e(0) = 1`,
//!     `y_e'(0) = 0`. It equals `[P_nu(x) + P_nu(-x)] / (2 P_nu(0))`; the
//!     normalisation is absorbed in the free constant. It is evaluated by
//!     analytic continuation of Taylor series of the ODE (each re-expansion
//!     point x0 >= 0 uses step h <= (1 - x0)/2, half the radius of
//!     convergence), so it is accurate to ~1e-15 for any x < 1, including
//!     x close to 1 where the hypergeometric series for P_nu(-x) converges
//!     only logarithmically.
//!
//! # 2. Relaxation model (Budyko 1969, Tellus 21, 611; Tung 2007, "Topics in
//! Mathematical Modeling", Princeton Univ. Press, chapter on Budyko's model)
//!
//! ```text
//!   Q S(x) (1 - alpha(x)) - (A + B T) + gamma (Tbar - T) = 0,
//!   alpha = alpha_open for x < x_s, alpha_ice for x > x_s.
//! ```
//! Integrating over the hemisphere (area weight dx) the transport term
//! vanishes, so `Tbar = (Q abar(x_s) - A)/B` with
//! `abar(x_s) = int_0^1 S (1 - alpha) dx
//!            = (1-alpha_open) sigma(x_s) + (1-alpha_ice) (1 - sigma(x_s))`,
//! `sigma(x) = int_0^x S dx' = x + s2 (x^3 - x)/2`.
//! `T(x) = (Q S(x)(1 - alpha(x)) - A + gamma Tbar) / (B + gamma)`.
//! T jumps at x_s. Ice-edge convention (Tung 2007; Budyko 1969): `T_s` is met
//! by the average of the two one-sided temperatures, i.e. the albedo at the
//! edge is `(alpha_open + alpha_ice)/2`.

#![allow(dead_code)]

// ---------------------------------------------------------------------------
// Legendre polynomials
// ---------------------------------------------------------------------------

/// Legendre polynomial `P2(x) = (3x^2 - 1)/2`.
pub fn p2(x: f64) -> f64 {
    0.5 * (3.0 * x * x - 1.0)
}

/// Legendre polynomial `P4(x) = (35x^4 - 30x^2 + 3)/8`.
pub fn p4(x: f64) -> f64 {
    let x2 = x * x;
    (35.0 * x2 * x2 - 30.0 * x2 + 3.0) / 8.0
}

fn dp2(x: f64) -> f64 {
    3.0 * x
}
fn d2p2(_x: f64) -> f64 {
    3.0
}
fn dp4(x: f64) -> f64 {
    (35.0 * x * x * x - 15.0 * x) / 2.0
}
fn d2p4(x: f64) -> f64 {
    (105.0 * x * x - 15.0) / 2.0
}

// ---------------------------------------------------------------------------
// Homogeneous solutions: (1 - x^2) y'' - 2 x y' - beta y = 0, beta = B/D > 0
// ---------------------------------------------------------------------------

/// Conical Legendre function `P_nu(x)` with `nu(nu+1) = -beta`, and its
/// x-derivative, from the hypergeometric series
/// `P_nu(x) = 2F1(-nu, nu+1; 1; z) = sum_k c_k z^k`, `z = (1 - x)/2`,
/// `c_{k+1} = c_k (k^2 + k + beta) / (k+1)^2`, `c_0 = 1` (all real).
/// `dP_nu/dx = -(1/2) dF/dz`.
///
/// Converges geometrically with ratio z; intended for `z <= 0.5` (x >= 0),
/// accepted up to z < 0.9 (slower) for cross-checks.
pub fn conical_p(beta: f64, x: f64) -> (f64, f64) {
    let z = 0.5 * (1.0 - x);
    assert!(
        (0.0..0.9).contains(&z),
        "conical_p: z = (1-x)/2 = {z} outside [0, 0.9)"
    );
    let mut c = 1.0_f64; // c_k
    let mut zk = 1.0_f64; // z^k
    let mut f = 0.0_f64;
    let mut fz = 0.0_f64; // dF/dz
    let mut k = 0.0_f64;
    for _ in 0..100_000 {
        let c_next = c * (k * k + k + beta) / ((k + 1.0) * (k + 1.0));
        let tf = c * zk;
        let tfz = (k + 1.0) * c_next * zk;
        f += tf;
        fz += tfz;
        // For beta > 0 the terms are positive and the tail is bounded by
        // ~term * z/(1-z) once the coefficient ratio is ~1. (abs() so that
        // beta < 0, e.g. integer degrees used in tests, also terminates.)
        let tail = 1e-17 * (1.0 - z);
        if k >= 2.0 && tf.abs() <= tail * f.abs().max(1.0) && tfz.abs() <= tail * fz.abs().max(1.0)
        {
            return (f, -0.5 * fz);
        }
        c = c_next;
        zk *= z;
        k += 1.0;
    }
    panic!("conical_p: series did not converge (beta = {beta}, x = {x})");
}

/// One Taylor re-expansion step of the Legendre-type ODE
/// `(1 - x^2) y'' - 2 x y' - beta y = 0` from `x0` (values y0, dy0) to
/// `x0 + h`. With `y = sum c_n t^n`, `t = x - x0`:
/// `(1 - x0^2)(n+2)(n+1) c_{n+2} = 2 x0 (n+1)^2 c_{n+1} + (n(n+1) + beta) c_n`.
/// Requires `|h| <= (1 - |x0|)/2` for fast convergence.
fn taylor_step(beta: f64, x0: f64, y0: f64, dy0: f64, h: f64) -> (f64, f64) {
    if h == 0.0 {
        return (y0, dy0);
    }
    let w = (1.0 - x0) * (1.0 + x0);
    // scaled coefficients d_n = c_n h^n
    let mut dm = y0; // d_n
    let mut dn = dy0 * h; // d_{n+1}
    let mut y = dm + dn;
    let mut yh = dn; // sum n d_n  (y' = yh / h)
    for n in 0..10_000 {
        let nf = n as f64;
        let dnext = (2.0 * x0 * (nf + 1.0) * (nf + 1.0) * dn * h
            + (nf * (nf + 1.0) + beta) * dm * h * h)
            / (w * (nf + 2.0) * (nf + 1.0));
        y += dnext;
        yh += (nf + 2.0) * dnext;
        let scale = y.abs() + yh.abs();
        if n >= 4
            && dnext.abs() * (nf + 3.0) <= 1e-18 * scale
            && dn.abs() * (nf + 2.0) <= 1e-18 * scale
        {
            return (y, yh / h);
        }
        dm = dn;
        dn = dnext;
    }
    panic!("taylor_step: no convergence (x0 = {x0}, h = {h})");
}

/// Even solution `y_e` of `(1 - x^2) y'' - 2 x y' - beta y = 0` with
/// `y_e(0) = 1`, `y_e'(0) = 0`; returns `(y_e(x), y_e'(x))` for `|x| < 1`.
/// Equals `[P_nu(x) + P_nu(-x)] / (2 P_nu(0))`. Computed by Taylor-series
/// analytic continuation from x = 0 (each step half the convergence radius).
pub fn legendre_even(beta: f64, x: f64) -> (f64, f64) {
    assert!(x.abs() < 1.0, "legendre_even: |x| must be < 1, got {x}");
    let xa = x.abs();
    let (mut xc, mut y, mut dy) = (0.0_f64, 1.0_f64, 0.0_f64);
    while xc < xa {
        let h = (xa - xc).min(0.5 * (1.0 - xc));
        let (y1, dy1) = taylor_step(beta, xc, y, dy, h);
        y = y1;
        dy = dy1;
        xc = if h == xa - xc { xa } else { xc + h };
    }
    if x < 0.0 { (y, -dy) } else { (y, dy) }
}

/// Second derivative of a solution of the homogeneous ODE, from the ODE:
/// `y'' = (2 x y' + beta y) / (1 - x^2)`.
fn homog_second(beta: f64, x: f64, y: f64, dy: f64) -> f64 {
    (2.0 * x * dy + beta * y) / ((1.0 - x) * (1.0 + x))
}

// ---------------------------------------------------------------------------
// Diffusive (North) model
// ---------------------------------------------------------------------------

/// Parameters of the diffusive model (see module docs). `a`, `b`: OLR
/// `A + B T` (W m^-2, W m^-2 K^-1); `d`: diffusion D (W m^-2 K^-1);
/// `s2`: insolation shape; `a0`, `a2`: open co-albedo `a0 + a2 P2`;
/// `b0`: ice co-albedo; `t_s`: ice-edge temperature (deg C).
#[derive(Clone, Copy, Debug)]
pub struct DiffusiveParams {
    pub a: f64,
    pub b: f64,
    pub d: f64,
    pub s2: f64,
    pub a0: f64,
    pub a2: f64,
    pub b0: f64,
    pub t_s: f64,
}

impl DiffusiveParams {
    /// The "present-day annual mean" parameters of North, Cahalan & Coakley
    /// (1981), from memory: A = 203.3, B = 2.09, D = 0.649 (D/B = 0.31),
    /// s2 = -0.482, open co-albedo a0 = 0.681, a2 = -0.202, ice co-albedo
    /// b0 = 0.38, T_s = -10 °C, with Q = 334.4. (An earlier recollection,
    /// a0 = 0.697, a2 = -0.0779, gave Q(0.95) 3.6% low; the set here puts the
    /// edge at x_s = 0.95 for Q = 334.4, as the paper reports.)
    pub fn north_1981() -> Self {
        DiffusiveParams {
            a: 203.3,
            b: 2.09,
            d: 0.649,
            s2: -0.482,
            a0: 0.681,
            a2: -0.202,
            b0: 0.38,
            t_s: -10.0,
        }
    }

    fn beta(&self) -> f64 {
        self.b / self.d
    }
}

/// Particular solution per unit Q in the open region and the ice region,
/// with first and second x-derivatives: the full particular solution is
/// `Q * U(x) - A/B`.
///
/// Open: `Q S a - A = Q[F0 + F2 P2 + F4 P4] - A` with
/// `F0 = a0 + s2 a2/5`, `F2 = a2 + s2 a0 + (2/7) s2 a2`, `F4 = (18/35) s2 a2`;
/// `U_o = F0/B + F2/(B + 6D) P2 + F4/(B + 20D) P4`.
/// Ice: `U_i = b0/B + b0 s2/(B + 6D) P2`.
fn u_open(p: &DiffusiveParams, x: f64) -> [f64; 3] {
    let f0 = p.a0 + p.s2 * p.a2 / 5.0;
    let f2 = p.a2 + p.s2 * p.a0 + 2.0 / 7.0 * p.s2 * p.a2;
    let f4 = 18.0 / 35.0 * p.s2 * p.a2;
    let c0 = f0 / p.b;
    let c2 = f2 / (p.b + 6.0 * p.d);
    let c4 = f4 / (p.b + 20.0 * p.d);
    [
        c0 + c2 * p2(x) + c4 * p4(x),
        c2 * dp2(x) + c4 * dp4(x),
        c2 * d2p2(x) + c4 * d2p4(x),
    ]
}

fn u_ice(p: &DiffusiveParams, x: f64) -> [f64; 3] {
    let c0 = p.b0 / p.b;
    let c2 = p.b0 * p.s2 / (p.b + 6.0 * p.d);
    [c0 + c2 * p2(x), c2 * dp2(x), c2 * d2p2(x)]
}

/// Ice-free (open co-albedo everywhere) temperature: the pure polynomial
/// particular solution `T = Q U_o(x) - A/B`. For a2 = 0 this is
/// `(Q a0 - A)/B + Q a0 s2 P2(x)/(B + 6D)` (North 1975).
pub fn north_ice_free(p: &DiffusiveParams, q: f64, x: f64) -> f64 {
    q * u_open(p, x)[0] - p.a / p.b
}

/// Log-derivatives g = y'/y of the polar and equatorial homogeneous
/// solutions at x, plus their derivatives g' = y''/y - g^2.
fn log_derivs(p: &DiffusiveParams, x: f64) -> (f64, f64, f64, f64) {
    let beta = p.beta();
    let (yp, dyp) = conical_p(beta, x);
    let (ye, dye) = legendre_even(beta, x);
    let gp = dyp / yp;
    let ge = dye / ye;
    let gp1 = homog_second(beta, x, yp, dyp) / yp - gp * gp;
    let ge1 = homog_second(beta, x, ye, dye) / ye - ge * ge;
    (gp, ge, gp1, ge1)
}

/// Solar parameter Q (= S0/4, W m^-2) for which the steady ice edge sits at
/// `xs` (0 < xs < 1). With `R = T_s + A/B`, `g_p = y_p'/y_p`,
/// `g_e = y_e'/y_e` at xs, eliminating c_p, c_e from continuity of T, T'
/// and `T(x_s) = T_s`:
/// ```text
///   Q = R (g_p - g_e) / (U_o' - U_i' - U_o g_e + U_i g_p).
/// ```
/// Limits: xs -> 0 gives `R / U_i(0)`; xs -> 1 gives `R / U_o(1)`.
pub fn north_q_of_xs(p: &DiffusiveParams, xs: f64) -> f64 {
    assert!(xs > 0.0 && xs < 1.0, "north_q_of_xs: need 0 < xs < 1");
    let r = p.t_s + p.a / p.b;
    let uo = u_open(p, xs);
    let ui = u_ice(p, xs);
    let (gp, ge, _, _) = log_derivs(p, xs);
    r * (gp - ge) / (uo[1] - ui[1] - uo[0] * ge + ui[0] * gp)
}

/// Analytic derivative dQ/dx_s of [`north_q_of_xs`] (quotient rule, with
/// `g' = y''/y - g^2` and `y''` from the homogeneous ODE).
pub fn north_dq_dxs(p: &DiffusiveParams, xs: f64) -> f64 {
    assert!(xs > 0.0 && xs < 1.0);
    let r = p.t_s + p.a / p.b;
    let uo = u_open(p, xs);
    let ui = u_ice(p, xs);
    let (gp, ge, gp1, ge1) = log_derivs(p, xs);
    let n = gp - ge;
    let n1 = gp1 - ge1;
    let den = uo[1] - ui[1] - uo[0] * ge + ui[0] * gp;
    let den1 = uo[2] - ui[2] - uo[1] * ge - uo[0] * ge1 + ui[1] * gp + ui[0] * gp1;
    r * (n1 * den - n * den1) / (den * den)
}

/// Closed-form steady temperature T(x) of the linear problem with the
/// co-albedo fixed by ice edge `xs` and solar parameter `q`:
/// `T = q U_o - A/B + c_e y_e` (x <= xs), `T = q U_i - A/B + c_p y_p` (x > xs),
/// with c_e, c_p from continuity of T and T' at xs:
/// ```text
///   c_e y_e - c_p y_p  = q (U_i - U_o),
///   c_e y_e' - c_p y_p' = q (U_i' - U_o').
/// ```
/// `T(xs) = T_s` holds iff `q = north_q_of_xs(p, xs)`.
pub fn north_temperature(p: &DiffusiveParams, q: f64, xs: f64, x: f64) -> f64 {
    let (ce, cp) = north_coeffs(p, q, xs);
    let x = x.abs();
    if x <= xs {
        q * u_open(p, x)[0] - p.a / p.b + ce * legendre_even(p.beta(), x).0
    } else {
        q * u_ice(p, x)[0] - p.a / p.b + cp * conical_p(p.beta(), x).0
    }
}

/// dT/dx of [`north_temperature`] (one-sided formulas; continuous at xs).
pub fn north_temperature_dx(p: &DiffusiveParams, q: f64, xs: f64, x: f64) -> f64 {
    let (ce, cp) = north_coeffs(p, q, xs);
    let (xa, sgn) = if x < 0.0 { (-x, -1.0) } else { (x, 1.0) };
    sgn * if xa <= xs {
        q * u_open(p, xa)[1] + ce * legendre_even(p.beta(), xa).1
    } else {
        q * u_ice(p, xa)[1] + cp * conical_p(p.beta(), xa).1
    }
}

/// (c_e, c_p): coefficients of the equatorial (y_e, normalised y_e(0)=1)
/// and polar (y_p = P_nu) homogeneous solutions.
pub fn north_coeffs(p: &DiffusiveParams, q: f64, xs: f64) -> (f64, f64) {
    assert!(xs > 0.0 && xs < 1.0);
    let beta = p.beta();
    let (yp, dyp) = conical_p(beta, xs);
    let (ye, dye) = legendre_even(beta, xs);
    let uo = u_open(p, xs);
    let ui = u_ice(p, xs);
    let r1 = q * (ui[0] - uo[0]);
    let r2 = q * (ui[1] - uo[1]);
    let det = -ye * dyp + yp * dye;
    let ce = (-r1 * dyp + yp * r2) / det;
    let cp = (ye * r2 - dye * r1) / det;
    (ce, cp)
}

/// Bisection for a sign change of `f` on [lo, hi]; returns the midpoint once
/// the bracket is below `tol` (or cannot shrink further in f64).
fn bisect(f: impl Fn(f64) -> f64, mut lo: f64, mut hi: f64, tol: f64) -> f64 {
    let mut flo = f(lo);
    let fhi = f(hi);
    assert!(flo * fhi <= 0.0, "bisect: no sign change on [{lo}, {hi}]");
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if hi - lo <= tol || mid <= lo || mid >= hi {
            break;
        }
        let fm = f(mid);
        if fm == 0.0 {
            return mid;
        }
        if (fm < 0.0) == (flo < 0.0) {
            lo = mid;
            flo = fm;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

/// Scan grid for x_s: uniform in [0.001, 0.99] then refined towards the pole
/// as 1 - 10^-k.
fn xs_scan_grid() -> Vec<f64> {
    let mut g: Vec<f64> = (0..=990)
        .map(|i| 0.001 + (0.99 - 0.001) * i as f64 / 990.0)
        .collect();
    let mut e = 2.0_f64;
    while e <= 8.0 {
        e += 0.02;
        g.push(1.0 - 10f64.powf(-e));
    }
    g
}

/// Snowball (large-ice-cap) fold: the global minimum of Q(x_s) over
/// 0 < x_s < 1, returned as (x_s, Q). Located on a scan grid, then refined
/// by bisection on the analytic dQ/dx_s to ~1e-13 in x_s.
pub fn north_fold(p: &DiffusiveParams) -> (f64, f64) {
    let g = xs_scan_grid();
    let qs: Vec<f64> = g.iter().map(|&x| north_q_of_xs(p, x)).collect();
    let (imin, _) =
        qs.iter().enumerate().fold(
            (0, f64::INFINITY),
            |acc, (i, &q)| if q < acc.1 { (i, q) } else { acc },
        );
    assert!(
        imin > 0 && imin + 1 < g.len(),
        "north_fold: minimum at the scan boundary"
    );
    let xs = bisect(|x| north_dq_dxs(p, x), g[imin - 1], g[imin + 1], 1e-13);
    (xs, north_q_of_xs(p, xs))
}

/// Small-ice-cap fold (North 1984, J. Atmos. Sci. 41, 3390): an interior
/// local maximum of Q(x_s) poleward of the snowball fold, if any, returned as
/// (x_s, Q) (the most poleward one). `None` if Q(x_s) increases
/// monotonically from the fold to the pole.
pub fn north_small_cap_fold(p: &DiffusiveParams) -> Option<(f64, f64)> {
    let (xf, _) = north_fold(p);
    let g: Vec<f64> = xs_scan_grid().into_iter().filter(|&x| x > xf).collect();
    let d: Vec<f64> = g.iter().map(|&x| north_dq_dxs(p, x)).collect();
    let mut found = None;
    for i in 0..g.len().saturating_sub(1) {
        if d[i] > 0.0 && d[i + 1] <= 0.0 {
            let xs = bisect(|x| north_dq_dxs(p, x), g[i], g[i + 1], 1e-13);
            found = Some((xs, north_q_of_xs(p, xs)));
        }
    }
    found
}

// ---------------------------------------------------------------------------
// Relaxation (Budyko) model
// ---------------------------------------------------------------------------

/// Parameters of the relaxation model. Albedos (not co-albedos) here.
#[derive(Clone, Copy, Debug)]
pub struct RelaxationParams {
    pub a: f64,
    pub b: f64,
    pub gamma: f64,
    pub s2: f64,
    pub alpha_open: f64,
    pub alpha_ice: f64,
    pub t_s: f64,
}

impl RelaxationParams {
    /// Tung (2007) textbook set (use with Q = 343): A = 202, B = 1.9,
    /// gamma = 1.6 B, alpha 0.32 / 0.62, s2 = -0.482, T_s = -10.
    pub fn tung_2007() -> Self {
        RelaxationParams {
            a: 202.0,
            b: 1.9,
            gamma: 1.6 * 1.9,
            s2: -0.482,
            alpha_open: 0.32,
            alpha_ice: 0.62,
            t_s: -10.0,
        }
    }
}

/// `S(x) = 1 + s2 P2(x)`.
pub fn insolation_shape(s2: f64, x: f64) -> f64 {
    1.0 + s2 * p2(x)
}

/// `sigma(x) = int_0^x S dx' = x + s2 (x^3 - x)/2` (sigma(1) = 1).
fn sigma(s2: f64, x: f64) -> f64 {
    x + 0.5 * s2 * (x * x * x - x)
}

/// Hemispheric mean co-albedo weighted by insolation,
/// `abar(x_s) = (1-alpha_open) sigma(x_s) + (1-alpha_ice)(1 - sigma(x_s))`.
pub fn budyko_abar(p: &RelaxationParams, xs: f64) -> f64 {
    let s = sigma(p.s2, xs);
    (1.0 - p.alpha_open) * s + (1.0 - p.alpha_ice) * (1.0 - s)
}

/// Global (hemispheric) mean temperature `Tbar = (Q abar(x_s) - A)/B`.
pub fn budyko_global_mean(p: &RelaxationParams, q: f64, xs: f64) -> f64 {
    (q * budyko_abar(p, xs) - p.a) / p.b
}

/// Q for which the ice edge sits at xs (edge co-albedo
/// `a_m = 1 - (alpha_open + alpha_ice)/2`):
/// ```text
///   Q = (B + gamma)(T_s + A/B) / (S(x_s) a_m + (gamma/B) abar(x_s)).
/// ```
pub fn budyko_q_of_xs(p: &RelaxationParams, xs: f64) -> f64 {
    (p.b + p.gamma) * (p.t_s + p.a / p.b) / budyko_denominator(p, xs)
}

fn budyko_denominator(p: &RelaxationParams, xs: f64) -> f64 {
    let am = 1.0 - 0.5 * (p.alpha_open + p.alpha_ice);
    insolation_shape(p.s2, xs) * am + p.gamma / p.b * budyko_abar(p, xs)
}

/// `T(x) = (Q S(x)(1 - alpha(x)) - A + gamma Tbar)/(B + gamma)` with
/// alpha = alpha_open for |x| < xs, alpha_ice for |x| > xs, and the mean
/// albedo exactly at |x| = xs (so T(xs) is the mean of the one-sided values).
pub fn budyko_temperature(p: &RelaxationParams, q: f64, xs: f64, x: f64) -> f64 {
    let x = x.abs();
    let alpha = if x < xs {
        p.alpha_open
    } else if x > xs {
        p.alpha_ice
    } else {
        0.5 * (p.alpha_open + p.alpha_ice)
    };
    let tbar = budyko_global_mean(p, q, xs);
    (q * insolation_shape(p.s2, x) * (1.0 - alpha) - p.a + p.gamma * tbar) / (p.b + p.gamma)
}

/// Snowball fold of the relaxation model: minimum of Q(x_s) on [0, 1],
/// i.e. the maximum of the denominator
/// `G(x) = a_m S(x) + k' [(a_o - a_i) sigma(x) + a_i]`, `k' = gamma/B`.
/// `G'(x) = 3 a_m s2 x + k (1 - s2/2 + (3/2) s2 x^2)`, `k = k'(a_o - a_i)`,
/// a quadratic solved in closed form; the root with `G'' < 0` inside (0,1)
/// is the fold. Falls back to the better endpoint if there is none.
pub fn budyko_fold(p: &RelaxationParams) -> (f64, f64) {
    let am = 1.0 - 0.5 * (p.alpha_open + p.alpha_ice);
    let k = p.gamma / p.b * ((1.0 - p.alpha_open) - (1.0 - p.alpha_ice));
    // G'(x) = qa x^2 + qb x + qc
    let qa = 1.5 * k * p.s2;
    let qb = 3.0 * am * p.s2;
    let qc = k * (1.0 - 0.5 * p.s2);
    let mut cands = vec![0.0, 1.0];
    if qa.abs() > 1e-300 {
        let disc = qb * qb - 4.0 * qa * qc;
        if disc >= 0.0 {
            let sq = disc.sqrt();
            // numerically stable quadratic roots
            let t = -0.5 * (qb + qb.signum() * sq);
            for r in [t / qa, if t != 0.0 { qc / t } else { f64::NAN }] {
                if r > 0.0 && r < 1.0 && 2.0 * qa * r + qb < 0.0 {
                    cands.push(r);
                }
            }
        }
    } else if qb != 0.0 {
        let r = -qc / qb;
        if r > 0.0 && r < 1.0 && qb < 0.0 {
            cands.push(r);
        }
    }
    cands
        .into_iter()
        .map(|x| (x, budyko_q_of_xs(p, x)))
        .fold(
            (f64::NAN, f64::INFINITY),
            |a, b| if b.1 < a.1 { b } else { a },
        )
}
