//! Silicate weathering, the slow sink of the carbonate-silicate cycle.
//!
//! The CO2 budget of Walker, Hays & Kasting (1981, J. Geophys. Res. 86,
//! 9776; WHK81) with outgassing V and weathering W:
//!
//! ```text
//! dP/dt = k (V - W),   W = W0 (P/P0)^β exp((T_w - T0)/T_e) (1 - f_ice)
//! ```
//!
//! with P the CO2 partial pressure (carried in ppm, as
//! `radiation.co2_ppm`), T_w the mean temperature of the ice-free surface
//! and f_ice the ice area fraction: weathering acts only on open surface,
//! so W = 0 in a snowball (the form of Menou 2015, EPSL 429, 20, and Abbot
//! 2016, ApJ 827, 117, with the ice factor of the open surface). V and W
//! are in bar Gyr-1 (the unit of Menou 2015); k converts them to ppm per
//! year with 1 ppm = 1e-6 bar (CO2 counted as a partial pressure over a
//! 1 bar atmosphere, no ocean reservoir): k = 1e6 ppm bar-1 / 1e9 yr Gyr-1
//! = 1e-3 ppm yr-1 per bar Gyr-1.

/// k: ppm per year for a budget of 1 bar Gyr-1 (1 ppm = 1e-6 bar).
pub const PPM_PER_YEAR_PER_BAR_GYR: f64 = 1e6 / 1e9;

/// The weathering law W(T_w, f_ice, P) of WHK81 on the open surface.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Weathering {
    /// W0: weathering of the reference climate (T0, P0, no ice), bar Gyr-1.
    pub present_rate: f64,
    /// β: exponent of the CO2 dependence.
    pub co2_exponent: f64,
    /// T_e: e-folding temperature of the temperature dependence, K.
    pub efold_k: f64,
    /// T0: reference temperature, °C.
    pub reference_c: f64,
    /// P0: reference CO2, ppm.
    pub reference_ppm: f64,
}

impl Weathering {
    /// W = W0 (P/P0)^β exp((T_w - T0)/T_e) (1 - f_ice), bar Gyr-1, for the
    /// open-surface mean temperature `open_mean_c` (°C), the open (ice-free)
    /// area fraction `open_fraction` = 1 - f_ice and CO2 `co2_ppm`. Zero
    /// when no surface is open (a snowball), whatever `open_mean_c`.
    #[inline]
    pub fn rate(&self, open_mean_c: f64, open_fraction: f64, co2_ppm: f64) -> f64 {
        if open_fraction <= 0.0 {
            return 0.0;
        }
        self.present_rate
            * (co2_ppm / self.reference_ppm).powf(self.co2_exponent)
            * ((open_mean_c - self.reference_c) / self.efold_k).exp()
            * open_fraction.min(1.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn law() -> Weathering {
        Weathering {
            present_rate: 7.0,
            co2_exponent: 0.5,
            efold_k: 13.7,
            reference_c: 15.0,
            reference_ppm: 280.0,
        }
    }

    // The reference climate weathers at W0 by construction (WHK81: the
    // law is normalised to the present-day rate).
    #[test]
    fn reference_climate_weathers_at_w0() {
        assert_eq!(law().rate(15.0, 1.0, 280.0), 7.0);
    }

    // WHK81: W grows by e for every T_e of warming, and as P^β; no open
    // surface, no weathering (common practice, no source).
    #[test]
    fn scalings() {
        let w = law();
        let r = w.rate(15.0 + 13.7, 1.0, 280.0) / w.rate(15.0, 1.0, 280.0);
        assert!((r - std::f64::consts::E).abs() < 1e-12);
        let r = w.rate(15.0, 1.0, 4.0 * 280.0) / w.rate(15.0, 1.0, 280.0);
        assert!((r - 2.0).abs() < 1e-12);
        assert_eq!(w.rate(40.0, 0.0, 1e5), 0.0);
        assert!((w.rate(15.0, 0.25, 280.0) - 1.75).abs() < 1e-12);
    }
}
