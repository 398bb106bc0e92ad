//! Top-of-atmosphere insolation: daily means from the orbit (Berger 1978) and
//! annual means by quadrature, or the Legendre form of North (1975).

use crate::numerics::quad::{gauss_legendre, p2};
use crate::physics::orbit::Orbit;
use std::f64::consts::{FRAC_PI_2, PI};
use std::sync::{Arc, Mutex};

/// Daily-mean insolation at x = sin(latitude) for solar declination δ and
/// distance factor (a/r)² (Berger 1978, J. Atmos. Sci. 35, 2362):
///
/// S = (S0/π) (a/r)² [h0 sin φ sin δ + cos φ cos δ sin h0],
/// cos h0 = -tan φ tan δ, h0 clipped to [0, π]
/// (h0 = π in polar day, h0 = 0 in polar night).
pub fn daily_mean(flux: f64, x: f64, declination: f64, distance_factor: f64) -> f64 {
    flux / PI * distance_factor * day_integrand(x, declination)
}

/// h0 sin φ sin δ + cos φ cos δ sin h0 (dimensionless, 0 to π).
fn day_integrand(x: f64, declination: f64) -> f64 {
    let sin_phi = x.clamp(-1.0, 1.0);
    let cos_phi = (1.0 - sin_phi * sin_phi).max(0.0).sqrt();
    let (sin_d, cos_d) = declination.sin_cos();
    day_terms(sin_phi, cos_phi, sin_d, cos_d)
}

/// [`day_integrand`] from the sines and cosines of latitude and declination;
/// sin h0 = sqrt(1 - cos² h0) with cos h0 clipped to [-1, 1].
#[inline]
fn day_terms(sin_phi: f64, cos_phi: f64, sin_d: f64, cos_d: f64) -> f64 {
    let num = sin_phi * sin_d;
    let den = cos_phi * cos_d;
    let (h0, sin_h0) = if den <= 0.0 {
        (if num > 0.0 { PI } else { 0.0 }, 0.0)
    } else {
        let c = (-num / den).clamp(-1.0, 1.0);
        (c.acos(), (1.0 - c * c).sqrt())
    };
    (h0 * num + den * sin_h0).max(0.0)
}

/// One node of the year quadrature on the piece λ in [a, b]: the
/// Gauss-Legendre node s in [-1, 1] with weight wt, mapped by
/// λ = a + (b - a)(3u² - 2u³), u = (s + 1)/2, to (sin δ, cos δ,
/// weight × dλ/du / 2) with sin δ = sin ε sin λ, |δ| <= π/2.
fn year_node(s: f64, wt: f64, a: f64, b: f64, sin_obl: f64) -> (f64, f64, f64) {
    let s = 0.5 * (s + 1.0);
    let lam = a + (b - a) * s * s * (3.0 - 2.0 * s);
    let dlam = (b - a) * 6.0 * s * (1.0 - s);
    let sin_d = sin_obl * lam.sin();
    let cos_d = (1.0 - sin_d * sin_d).max(0.0).sqrt();
    (sin_d, cos_d, 0.5 * wt * dlam)
}

/// How the annual-mean insolation is obtained.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum InsolationLaw {
    /// Exact annual mean of the Berger daily means over the orbit.
    Orbital,
    /// The Legendre truncation S = (S0/4)(1 + p2 P2(x)) (North 1975).
    Legendre {
        /// Coefficient of P2(x); about -0.48 for present-day Earth.
        p2: f64,
    },
    /// The idealised seasonal law of Wagner & Eisenman (2015, eq. 3),
    /// S(x, t) = S0 - S1 x cos(ω t') - S2 x², written with our year origin
    /// (t = 0 at the northern spring equinox, a quarter year after their
    /// t' = 0 at the northern winter solstice) as
    ///
    /// S(x, t) = max(0, S0 + S1 x sin 2πt - S2 x²),
    ///
    /// clipped at zero where the formula would go negative (the winter pole
    /// for their Table 1 values: 420 - 338 - 240 = -158 W m-2; sunlight is
    /// never negative). Stored per unit S̄ = flux/4 as `s1` = S1/S̄ and
    /// `s2` = S2/S̄ with S0/S̄ = 1 + s2/3, so that the global annual mean of
    /// the unclipped formula is flux/4 and the whole law scales with
    /// `orbit.flux` (a brighter star scales S0, S1 and S2 alike).
    Idealised {
        /// S1 / (flux/4).
        s1: f64,
        /// S2 / (flux/4).
        s2: f64,
    },
}

/// ∫_{θ1}^{θ2} max(0, a + c sin θ) dθ, exactly: the integrand
/// a + c sin θ (antiderivative a θ - c cos θ) on the pieces between its
/// roots where it is positive.
pub fn clipped_sine_integral(a: f64, c: f64, th1: f64, th2: f64) -> f64 {
    let prim = |t: f64| a * t - c * t.cos();
    if c == 0.0 || a >= c.abs() {
        return if a > 0.0 || c != 0.0 {
            prim(th2) - prim(th1)
        } else {
            0.0
        };
    }
    if a <= -c.abs() {
        return 0.0;
    }
    // roots of a + c sin θ in [θ1, θ2]
    let r = (-a / c).asin();
    let two_pi = 2.0 * PI;
    let mut cuts = vec![th1, th2];
    let k0 = ((th1 - PI) / two_pi).floor() as i64 - 1;
    let k1 = ((th2 + PI) / two_pi).ceil() as i64 + 1;
    for k in k0..=k1 {
        for root in [r, PI - r] {
            let t = root + two_pi * k as f64;
            if t > th1 && t < th2 {
                cuts.push(t);
            }
        }
    }
    cuts.sort_by(f64::total_cmp);
    cuts.windows(2)
        .filter(|w| a + c * (0.5 * (w[0] + w[1])).sin() > 0.0)
        .map(|w| prim(w[1]) - prim(w[0]))
        .sum()
}

/// Annual mean of max(0, a + c sin θ) over a full cycle:
/// a when |c| <= a, 0 when a <= -|c|, otherwise
/// [a (π - 2θ0) + 2|c| cos θ0] / (2π) with θ0 = asin(-a/|c|).
pub fn clipped_sine_mean(a: f64, c: f64) -> f64 {
    let c = c.abs();
    if a >= c {
        a
    } else if a <= -c {
        0.0
    } else {
        let th0 = (-a / c).asin();
        (a * (PI - 2.0 * th0) + 2.0 * c * th0.cos()) / (2.0 * PI)
    }
}

/// S0 ∂ ln S̄ / ∂e of the orbital annual mean for flux S0 and
/// eccentricity e: S̄ ∝ (1 - e²)^(-1/2) and depends on e in no other way
/// ([`Insolation::annual_mean`], Kepler's second law), so ∂S̄/∂e =
/// S̄ e / (1 - e²) and ∂F/∂e = S0 e / (1 - e²) ∂F/∂S0 for any F in which
/// the insolation enters as S0 times a per-unit-flux profile.
pub fn eccentricity_flux_factor(flux: f64, e: f64) -> f64 {
    flux * e / (1.0 - e * e)
}

/// Annual-mean insolation as a function of latitude.
#[derive(Clone, Debug)]
pub struct Insolation {
    /// The orbit (flux, obliquity, eccentricity, perihelion).
    pub orbit: Orbit,
    /// Orbital or Legendre.
    pub law: InsolationLaw,
    /// The YEAR_POINTS Gauss-Legendre rule on [-1, 1], computed once per
    /// process.
    nodes: &'static [f64],
    weights: &'static [f64],
    /// The year quadrature where no polar day or night breaks it (one piece
    /// λ in [-π/2, π/2]), precomputed for `day_obliquity`: (sin δ, cos δ,
    /// weight × dλ/ds) per node.
    day: Vec<(f64, f64, f64)>,
    day_obliquity: f64,
}

/// Gauss points per smooth piece of the year integral.
const YEAR_POINTS: usize = 40;

impl Insolation {
    /// Annual-mean insolation for `orbit` under `law`.
    pub fn new(orbit: Orbit, law: InsolationLaw) -> Insolation {
        static RULE: std::sync::OnceLock<(Vec<f64>, Vec<f64>)> = std::sync::OnceLock::new();
        let (nodes, weights) = RULE.get_or_init(|| gauss_legendre(YEAR_POINTS));
        let (nodes, weights) = (nodes.as_slice(), weights.as_slice());
        let sin_obl = orbit.obliquity.sin();
        let day = nodes
            .iter()
            .zip(weights)
            .map(|(&s, &wt)| year_node(s, wt, -FRAC_PI_2, FRAC_PI_2, sin_obl))
            .collect();
        Insolation {
            orbit,
            law,
            nodes,
            weights,
            day,
            day_obliquity: orbit.obliquity,
        }
    }

    /// Annual-mean insolation at x = sin(latitude), W m-2.
    ///
    /// Orbital: by Kepler's second law dt/P = r² dλ / (2π a² sqrt(1 - e²)),
    /// so the (a/r)² of the daily mean cancels and
    ///
    /// S̄(φ) = S0 / (2π² sqrt(1 - e²)) ∫_0^{2π} [h0 sin φ sin δ + cos φ cos δ sin h0] dλ,
    ///
    /// independent of the perihelion and the same in both hemispheres (it is
    /// evaluated at |x|, so exactly the same).
    /// The integrand depends on λ only through sin λ, so the integral is twice
    /// the one over -π/2..π/2; it is split where polar day or night begins
    /// (|sin δ| = cos φ, i.e. |sin λ| = cos φ / sin ε), and each piece is
    /// mapped by λ = a + (b - a)(3s² - 2s³) before Gauss-Legendre, which
    /// smooths the (λ - λ_k)^{3/2} behaviour at the break points.
    pub fn annual_mean(&self, x: f64) -> f64 {
        let o = &self.orbit;
        match self.law {
            InsolationLaw::Legendre { p2: c } => o.flux / 4.0 * (1.0 + c * p2(x)),
            InsolationLaw::Idealised { s1, s2 } => {
                o.flux / 4.0 * clipped_sine_mean(1.0 + s2 / 3.0 - s2 * x * x, s1 * x)
            }
            InsolationLaw::Orbital => {
                // the same in both hemispheres: evaluated at |x|, so that it
                // is exactly the same
                let x = x.abs();
                let sin_eps = o.obliquity.sin().abs();
                let cos_phi = (1.0 - x * x).max(0.0).sqrt();
                let mut breaks = [-FRAC_PI_2, 0.0, 0.0, FRAC_PI_2];
                let mut nb = 2;
                if sin_eps > 1e-12 && cos_phi < sin_eps {
                    let l = (cos_phi / sin_eps).asin();
                    breaks = [-FRAC_PI_2, -l, l, FRAC_PI_2];
                    nb = 4;
                }
                let sin_phi = x.clamp(-1.0, 1.0);
                let mut total = 0.0;
                let sin_obl = o.obliquity.sin();
                // one piece at the precomputed obliquity: the stored nodes
                let pts: &[f64] = if nb == 2 && o.obliquity == self.day_obliquity {
                    for &(sin_d, cos_d, w) in &self.day {
                        total += w * day_terms(sin_phi, cos_phi, sin_d, cos_d);
                    }
                    &[]
                } else if nb == 4 {
                    &breaks
                } else {
                    &[-FRAC_PI_2, FRAC_PI_2]
                };
                for w in pts.windows(2) {
                    let (a, b) = (w[0], w[1]);
                    if b <= a {
                        continue;
                    }
                    let mut piece = 0.0;
                    for (&s, &wt) in self.nodes.iter().zip(self.weights) {
                        let (sin_d, cos_d, w) = year_node(s, wt, a, b, sin_obl);
                        piece += w * day_terms(sin_phi, cos_phi, sin_d, cos_d);
                    }
                    total += piece;
                }
                let e = o.eccentricity;
                o.flux * 2.0 * total / (2.0 * PI * PI * (1.0 - e * e).sqrt())
            }
        }
    }

    /// Daily-mean insolation at x and year fraction t (0 = northern spring
    /// equinox). The Legendre law has no seasons and returns its annual mean.
    pub fn daily(&self, x: f64, t: f64) -> f64 {
        match self.law {
            InsolationLaw::Legendre { .. } => self.annual_mean(x),
            InsolationLaw::Idealised { s1, s2 } => {
                let a = 1.0 + s2 / 3.0 - s2 * x * x;
                self.orbit.flux / 4.0 * (a + s1 * x * (2.0 * PI * t).sin()).max(0.0)
            }
            InsolationLaw::Orbital => {
                let p = self.orbit.position(t);
                daily_mean(self.orbit.flux, x, p.declination, p.distance_factor)
            }
        }
    }
}

/// Tables of the integrals of an annual-mean insolation on one hemisphere,
/// for cell averages on grids whose faces move (the ice edge as an
/// unknown): I(x) = ∫_0^x s dx and J(x) = ∫_0^x s P2 dx, interpolated by
/// cubic Hermite polynomials with the exact derivatives s and s P2 (error
/// O(h⁴) for a smooth s). Negative x use the symmetry of the annual mean:
/// I(-x) = -I(x).
#[derive(Clone, Debug)]
pub struct InsolationTable {
    /// Per interval [x_j, x_j+1], x_j = j/m, the Hermite cubics of I and J
    /// in t = m x - j as monomial coefficients (I: 0..4, J: 4..8), from the
    /// node values ∫_0^x_j s, ∫_0^x_j s P2 and the slopes s(x_j), s P2(x_j)
    /// (s = S/S0).
    coef: Vec<[f64; 8]>,
}

/// What an insolation table depends on: flux, obliquity, eccentricity, law
/// (tag and its coefficients) as bits, and the node count.
type TableKey = (u64, u64, u64, u8, u64, u64, usize);

/// The x in (0, 1) where the idealised law (per unit flux/4, coefficients
/// `s1`, `s2`) starts to be clipped at zero during the year:
/// s1 x = 1 + s2/3 - s2 x²; 2 (beyond the pole) when it never is.
pub fn idealised_clip_start(s1: f64, s2: f64) -> f64 {
    let s0 = 1.0 + s2 / 3.0;
    let x = if s2.abs() < 1e-300 {
        if s1 > 0.0 { s0 / s1 } else { 2.0 }
    } else {
        (-s1 + (s1 * s1 + 4.0 * s2 * s0).max(0.0).sqrt()) / (2.0 * s2)
    };
    if x > 0.0 && x < 1.0 { x } else { 2.0 }
}

/// Tables built recently in this process, most recent first.
static TABLES: Mutex<Vec<(TableKey, Arc<InsolationTable>)>> = Mutex::new(Vec::new());

/// Nodes of the tables the edge model and the edge families use: cubic
/// Hermite error O(h⁴) with h = 1/512, below 1e-11 of S̄ where S̄ is smooth.
/// Near zero obliquity S̄ behaves like sqrt(1 - x²) at the pole and the
/// last interval errs by up to 4.5e-6 of the global mean at zero obliquity
/// (against the closed form; below 1e-9 of S0 at 10 deg and more, against
/// quadrature: the tests below).
pub const TABLE_NODES: usize = 512;

/// How many tables the process keeps (a trace with central differences in
/// obliquity touches three; a map worker one per slice).
const KEPT_TABLES: usize = 16;

impl InsolationTable {
    /// Tables of `ins` (per unit flux) at `nodes` + 1 equally spaced x in
    /// [0, 1]. Each interval is integrated by Simpson's rule (error
    /// h⁵ s⁽⁴⁾/2880 per interval, far below the Hermite error) on the node
    /// values and one midpoint, split at the polar circle x = cos ε where S̄
    /// loses smoothness, so the tables are smooth in the obliquity too
    /// (central differences in ε).
    pub fn new(ins: &Insolation, nodes: usize) -> InsolationTable {
        let m = nodes.max(16);
        let polar = match ins.law {
            InsolationLaw::Orbital => ins.orbit.obliquity.cos().abs(),
            InsolationLaw::Legendre { .. } => 2.0,
            // where the clipping of the idealised law begins: |S1 x| = S0 - S2 x²
            InsolationLaw::Idealised { s1, s2 } => idealised_clip_start(s1, s2),
        };
        // Simpson on [a, b] with the end values known: (∫ s, ∫ s P2)
        let simpson = |a: f64, b: f64, sa: f64, sb: f64| {
            let c = 0.5 * (a + b);
            let sc = ins.annual_mean(c);
            let k = (b - a) / 6.0;
            (
                k * (sa + 4.0 * sc + sb),
                k * (sa * p2(a) + 4.0 * sc * p2(c) + sb * p2(b)),
            )
        };
        let h = 1.0 / m as f64;
        let mut coef = Vec::with_capacity(m);
        let (mut i0, mut j0) = (0.0, 0.0);
        let mut s0 = ins.annual_mean(0.0);
        for j in 1..=m {
            let (a, x) = ((j - 1) as f64 / m as f64, j as f64 / m as f64);
            let s1 = ins.annual_mean(x);
            let (is, isp) = if a < polar && polar < x {
                let sp = ins.annual_mean(polar);
                let (p, q) = (simpson(a, polar, s0, sp), simpson(polar, x, sp, s1));
                (p.0 + q.0, p.1 + q.1)
            } else {
                simpson(a, x, s0, s1)
            };
            let (i1, j1) = (i0 + is, j0 + isp);
            let (d0, d1) = (h * s0 * p2(a), h * s1 * p2(x));
            let (b0, b1) = (h * s0, h * s1);
            coef.push([
                i0,
                b0,
                3.0 * (i1 - i0) - 2.0 * b0 - b1,
                2.0 * (i0 - i1) + b0 + b1,
                j0,
                d0,
                3.0 * (j1 - j0) - 2.0 * d0 - d1,
                2.0 * (j0 - j1) + d0 + d1,
            ]);
            (i0, j0, s0) = (i1, j1, s1);
        }
        InsolationTable { coef }
    }

    /// [`InsolationTable::new`], shared: a table of the same insolation and
    /// node count built earlier in this process is reused (the result is
    /// the same table bit for bit, whichever thread built it).
    pub fn shared(ins: &Insolation, nodes: usize) -> Arc<InsolationTable> {
        let (tag, c, d) = match ins.law {
            InsolationLaw::Orbital => (0, 0.0, 0.0),
            InsolationLaw::Legendre { p2 } => (1, p2, 0.0),
            InsolationLaw::Idealised { s1, s2 } => (2, s1, s2),
        };
        let key = (
            ins.orbit.flux.to_bits(),
            ins.orbit.obliquity.to_bits(),
            ins.orbit.eccentricity.to_bits(),
            tag,
            c.to_bits(),
            d.to_bits(),
            nodes,
        );
        if let Ok(mut kept) = TABLES.lock()
            && let Some(i) = kept.iter().position(|(k, _)| *k == key)
        {
            let hit = kept.remove(i);
            let table = hit.1.clone();
            kept.insert(0, hit);
            return table;
        }
        let table = Arc::new(InsolationTable::new(ins, nodes));
        if let Ok(mut kept) = TABLES.lock() {
            kept.insert(0, (key, table.clone()));
            kept.truncate(KEPT_TABLES);
        }
        table
    }

    /// (∫_0^x s, ∫_0^x s P2) by cubic Hermite interpolation of the tables.
    pub fn integrals(&self, x: f64) -> (f64, f64) {
        let (i, j, _, _) = self.integrals_and_slopes(x);
        (i, j)
    }

    /// The interpolated (I, J) at x and their derivatives (I', J') (the
    /// derivatives of the Hermite interpolants, so that they are exactly
    /// consistent with [`InsolationTable::integrals`]).
    pub fn integrals_and_slopes(&self, x: f64) -> (f64, f64, f64, f64) {
        let m = self.coef.len() as f64;
        let sign = if x < 0.0 { -1.0 } else { 1.0 };
        let u = (x.abs().min(1.0) * m).min(m - 1e-9);
        // u >= 0: truncation is the floor (and needs no libm call)
        let j = (u as usize).min(self.coef.len() - 1);
        let t = u - j as f64;
        let c = &self.coef[j];
        // Horner in t; d/dx = m d/dt; the sign of x cancels in the
        // derivative (I odd)
        let i = ((c[3] * t + c[2]) * t + c[1]) * t + c[0];
        let jj = ((c[7] * t + c[6]) * t + c[5]) * t + c[4];
        let di = ((3.0 * c[3] * t + 2.0 * c[2]) * t + c[1]) * m;
        let dj = ((3.0 * c[7] * t + 2.0 * c[6]) * t + c[5]) * m;
        (sign * i, sign * jj, di, dj)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn earth(obliquity_deg: f64, e: f64) -> Insolation {
        let orbit = Orbit {
            flux: 1361.0,
            obliquity: obliquity_deg.to_radians(),
            eccentricity: e,
            perihelion: 283f64.to_radians(),
        };
        Insolation::new(orbit, InsolationLaw::Orbital)
    }

    /// Pole: polar day for half the year, S̄ = S0 sin ε / π for a circular
    /// orbit (follows from Berger 1978 with h0 = π; common practice).
    #[test]
    fn pole_annual_mean_is_closed_form() {
        for eps in [5.0, 23.44, 60.0, 90.0] {
            let s = earth(eps, 0.0).annual_mean(1.0);
            let exact = 1361.0 * f64::to_radians(eps).sin() / PI;
            assert!((s - exact).abs() < 1e-9 * exact, "eps={eps} {s} vs {exact}");
        }
    }

    /// Zero obliquity, circular orbit: S̄ = (S0/π) cos φ (Berger 1978 with δ = 0).
    #[test]
    fn zero_obliquity_is_cosine() {
        let ins = earth(0.0, 0.0);
        for x in [0.0f64, 0.3, 0.9, 0.999] {
            let exact = 1361.0 / PI * (1.0 - x * x).sqrt();
            assert!((ins.annual_mean(x) - exact).abs() < 1e-10);
        }
    }

    /// Global annual mean S0 / (4 sqrt(1 - e²)) for any orbit (Kepler's
    /// second law; common practice, no source).
    #[test]
    fn global_mean_matches_kepler() {
        let (xs, ws) = gauss_legendre(400);
        for (eps, e) in [(23.44, 0.0167), (45.0, 0.3), (80.0, 0.6), (10.0, 0.9)] {
            let ins = earth(eps, e);
            // ∫_{-1}^{1} S̄ dx / 2, split at the polar circles where S̄ has
            // limited smoothness.
            let xc = f64::to_radians(90.0 - eps).sin();
            let mut pts = vec![0.0, 1.0];
            if xc > 0.0 && xc < 1.0 {
                pts.insert(1, xc);
            }
            let mut mean = 0.0;
            for w in pts.windows(2) {
                for (s, wt) in xs.iter().zip(&ws) {
                    let x = w[0] + (w[1] - w[0]) * 0.5 * (s + 1.0);
                    mean += 0.5 * wt * (w[1] - w[0]) * ins.annual_mean(x);
                }
            }
            let exact = 1361.0 / (4.0 * (1.0 - e * e).sqrt());
            assert!(
                (mean - exact).abs() < 1e-7 * exact,
                "eps={eps} e={e}: {mean} vs {exact}"
            );
        }
    }

    /// The table's integrals against Gauss-Legendre quadrature of S̄ split
    /// at the polar circle (400 points per piece), and its slopes against
    /// S̄ itself (common practice, no source).
    #[test]
    fn table_integrals_match_quadrature() {
        let (xs, ws) = gauss_legendre(400);
        for eps in [10.0, 23.44, 60.0, 90.0] {
            let ins = earth(eps, 0.0167);
            let table = InsolationTable::new(&ins, TABLE_NODES);
            let s0 = ins.orbit.flux;
            let xc = f64::to_radians(90.0 - eps).sin();
            for x in [0.05, 0.3, 0.61, 0.8, 0.9, 0.97, 0.999] {
                let mut pts = vec![0.0, x];
                if xc > 0.0 && xc < x {
                    pts.insert(1, xc);
                }
                let (mut i, mut j) = (0.0, 0.0);
                for w in pts.windows(2) {
                    for (z, wt) in xs.iter().zip(&ws) {
                        let y = w[0] + (w[1] - w[0]) * 0.5 * (z + 1.0);
                        let s = ins.annual_mean(y) / s0;
                        i += 0.5 * wt * (w[1] - w[0]) * s;
                        j += 0.5 * wt * (w[1] - w[0]) * s * p2(y);
                    }
                }
                let raw = table.integrals_and_slopes(x);
                let (ti, tj, di, dj) = (raw.0 / s0, raw.1 / s0, raw.2 / s0, raw.3 / s0);
                assert!((ti - i).abs() < 1e-9, "eps={eps} x={x}: I {ti} vs {i}");
                assert!((tj - j).abs() < 1e-9, "eps={eps} x={x}: J {tj} vs {j}");
                let s = ins.annual_mean(x) / s0;
                assert!((di - s).abs() < 1e-7, "eps={eps} x={x}: I' {di} vs {s}");
                assert!((dj - s * p2(x)).abs() < 1e-7, "eps={eps} x={x}: J'");
                let (ni, nj, _, _) = table.integrals_and_slopes(-x);
                assert!(ni == -raw.0 && nj == -raw.1, "odd in x");
            }
        }
    }

    /// Zero obliquity: I(x) = (x sqrt(1 - x²) + asin x) / (2π sqrt(1 - e²))
    /// per unit flux (Berger 1978 with δ = 0, integrated in closed form;
    /// common practice). The pole, where S̄ ~ sqrt(1 - x²), is the table's
    /// worst interval.
    #[test]
    fn zero_obliquity_table_is_closed_form() {
        let e: f64 = 0.0167;
        let ins = earth(0.0, e);
        let table = InsolationTable::new(&ins, TABLE_NODES);
        let mut worst: f64 = 0.0;
        for k in 0..=2000 {
            let x = k as f64 / 2000.0;
            let exact =
                1361.0 * (x * (1.0 - x * x).sqrt() + x.asin()) / (2.0 * PI * (1.0 - e * e).sqrt());
            worst = worst.max((table.integrals(x).0 - exact).abs() / (1361.0 / 4.0));
        }
        eprintln!("zero obliquity: worst table error {worst:.3e} of the integral");
        assert!(worst < 5e-6, "{worst}");
    }
}
