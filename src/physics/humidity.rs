//! Saturation humidity and the moist static energy that moist diffusive
//! transport carries.
//!
//! Saturation vapour pressure over liquid water, Bolton (1980, Mon. Wea.
//! Rev. 108, 1046, eq. 10), T in °C:
//!
//! e_s(T) = 6.112 hPa · exp(17.67 T / (T + 243.5)),
//!
//! stated by Bolton to be accurate to 0.1% between -30 and 35 °C.
//! Saturation specific humidity at surface pressure p (hPa):
//!
//! q_s = ε e_s / (p - (1 - ε) e_s), ε = R_d / R_v = 0.622.
//!
//! Moist static energy per unit c_p, in K (°C-equivalent):
//!
//! h(T) = T + (L_v r / c_p) q_s(T),
//!
//! with relative humidity r, L_v = 2.5e6 J kg-1 (latent heat of
//! vaporisation near 0 °C) and c_p = 1004 J kg-1 K-1 (dry air), the
//! standard values (from memory). Diffusing h in this form is common
//! practice for moist energy-balance models (Hwang & Frierson 2010,
//! Geophys. Res. Lett. 37, L24807, with r = 0.8, from memory). Its slope is h'(T) = 1 + (L_v r / c_p) dq_s/dT
//! with dq_s/dT = ε p e_s' / (p - (1 - ε) e_s)², e_s' = e_s · 17.67 ·
//! 243.5 / (T + 243.5)².
//!
//! Guards (no NaN for any finite T): below T = -243.5 °C, where Bolton's
//! exponent changes sign, e_s is taken as 0 (it and all its derivatives
//! tend to 0 there, so the law stays smooth); e_s is capped at p (then
//! q_s = 1, air of pure vapour), with slope 0 beyond, which a climate with
//! liquid water (T below the boiling point at p) never reaches.

/// ε = R_d / R_v, the ratio of the molar masses of water and dry air
/// (0.622; Bolton 1980 and common practice).
pub const EPSILON: f64 = 0.622;

/// Latent heat of vaporisation L_v, J kg-1 (2.5e6, its value near 0 °C;
/// standard, from memory).
pub const LATENT_HEAT_VAPORISATION: f64 = 2.5e6;

/// Specific heat of dry air at constant pressure c_p, J kg-1 K-1 (1004;
/// standard, from memory).
pub const SPECIFIC_HEAT_AIR: f64 = 1004.0;

/// e_s at 0 °C in Bolton's fit, hPa.
const E0_HPA: f64 = 6.112;
/// Bolton's coefficients a (1) and b (°C).
const BOLTON_A: f64 = 17.67;
const BOLTON_B: f64 = 243.5;

/// Saturation vapour pressure over liquid water e_s(T) (hPa) and its slope
/// de_s/dT (hPa K-1) at T in °C, Bolton (1980, eq. 10):
/// e_s = 6.112 exp(17.67 T / (T + 243.5)); 0 at and below T = -243.5 °C.
///
/// ```
/// use icefold::physics::humidity::saturation_vapour_pressure;
/// let (e, _) = saturation_vapour_pressure(0.0);
/// assert_eq!(e, 6.112);
/// ```
pub fn saturation_vapour_pressure(t_c: f64) -> (f64, f64) {
    let s = t_c + BOLTON_B;
    if s.is_nan() || s <= 0.0 {
        return (0.0, 0.0);
    }
    let e = E0_HPA * (BOLTON_A * t_c / s).exp();
    (e, e * BOLTON_A * BOLTON_B / (s * s))
}

/// The humidity of the air that moist transport carries: relative humidity
/// r and surface pressure p. Gives q_s(T) and h(T) (see the module notes).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct MoistAir {
    /// Relative humidity r, in [0, 1].
    pub relative_humidity: f64,
    /// Surface pressure p, hPa.
    pub pressure_hpa: f64,
}

impl MoistAir {
    /// Saturation specific humidity q_s = ε e_s / (p - (1 - ε) e_s) (kg/kg)
    /// and its slope dq_s/dT = ε p e_s' / (p - (1 - ε) e_s)² (K-1), e_s from
    /// [`saturation_vapour_pressure`] capped at p.
    pub fn saturation_humidity(&self, t_c: f64) -> (f64, f64) {
        let p = self.pressure_hpa;
        let (mut e, mut de) = saturation_vapour_pressure(t_c);
        if e >= p {
            (e, de) = (p, 0.0);
        }
        let den = p - (1.0 - EPSILON) * e;
        (EPSILON * e / den, EPSILON * p * de / (den * den))
    }

    /// Moist static energy h(T) = T + (L_v r / c_p) q_s(T) (K, °C-equivalent)
    /// and its slope h'(T) = 1 + (L_v r / c_p) dq_s/dT. With r = 0, h = T and
    /// h' = 1 exactly.
    pub fn energy_and_slope(&self, t_c: f64) -> (f64, f64) {
        let g = LATENT_HEAT_VAPORISATION * self.relative_humidity / SPECIFIC_HEAT_AIR;
        let (q, dq) = self.saturation_humidity(t_c);
        (t_c + g * q, 1.0 + g * dq)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The slopes match central differences (common practice, no source).
    #[test]
    fn slopes_match_differences() {
        let air = MoistAir {
            relative_humidity: 0.8,
            pressure_hpa: 1013.25,
        };
        for t in [-60.0, -20.0, 0.0, 15.0, 35.0, 60.0] {
            let h = 1e-5;
            let fd_e = (saturation_vapour_pressure(t + h).0 - saturation_vapour_pressure(t - h).0)
                / (2.0 * h);
            let de = saturation_vapour_pressure(t).1;
            assert!((fd_e - de).abs() <= 1e-7 * de.abs().max(1e-12), "{t}");
            let fd_h = (air.energy_and_slope(t + h).0 - air.energy_and_slope(t - h).0) / (2.0 * h);
            let dh = air.energy_and_slope(t).1;
            assert!((fd_h - dh).abs() <= 1e-7 * dh, "{t}: {fd_h} vs {dh}");
        }
    }

    /// No NaN or infinity anywhere, also past the guards (common practice,
    /// no source).
    #[test]
    fn finite_everywhere() {
        let air = MoistAir {
            relative_humidity: 1.0,
            pressure_hpa: 100.0,
        };
        for t in [-1e6, -300.0, -243.5, -243.4, 0.0, 80.0, 200.0, 1e6] {
            let (h, dh) = air.energy_and_slope(t);
            assert!(
                h.is_finite() && dh.is_finite() && dh >= 1.0,
                "{t}: {h} {dh}"
            );
        }
    }
}
