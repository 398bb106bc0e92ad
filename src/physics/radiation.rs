//! Outgoing longwave radiation.
//!
//! Linear law OLR = A + B T - ΔF (Budyko 1969, T in °C) or grey body
//! OLR = ε σ (T + 273.15)⁴ - ΔF, with the CO2 forcing
//! ΔF = 5.35 ln(C/C0) W m-2 (Myhre et al. 1998, Geophys. Res. Lett. 25, 2715).

/// Stefan-Boltzmann constant σ, W m-2 K-4 (CODATA 2018, exact in SI).
pub const STEFAN_BOLTZMANN: f64 = 5.670_374_419e-8;
/// 0 °C in kelvin.
pub const KELVIN: f64 = 273.15;

/// Which longwave law.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum OlrLaw {
    /// OLR = A + B T (T in °C).
    Linear {
        /// A, W m-2 (OLR at 0 °C).
        a: f64,
        /// B, W m-2 K-1.
        b: f64,
    },
    /// OLR = ε σ T⁴ (T in K).
    Greybody {
        /// Emissivity ε, 0 < ε <= 1.
        emissivity: f64,
    },
}

/// Outgoing longwave radiation with greenhouse forcing.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Olr {
    /// The law.
    pub law: OlrLaw,
    /// Greenhouse forcing ΔF, W m-2, subtracted from the OLR.
    pub forcing: f64,
}

/// CO2 radiative forcing ΔF = 5.35 ln(C/C0) W m-2 (Myhre et al. 1998).
pub fn co2_forcing(co2_ppm: f64, co2_ref_ppm: f64) -> f64 {
    5.35 * (co2_ppm / co2_ref_ppm).ln()
}

impl Olr {
    /// OLR(T) and dOLR/dT at temperature `t` (°C).
    #[inline]
    pub fn value_and_slope(&self, t: f64) -> (f64, f64) {
        match self.law {
            OlrLaw::Linear { a, b } => (a + b * t - self.forcing, b),
            OlrLaw::Greybody { emissivity } => {
                let k = t + KELVIN;
                let s = emissivity * STEFAN_BOLTZMANN;
                (s * k * k * k * k - self.forcing, 4.0 * s * k * k * k)
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Doubling CO2 gives 3.7 W m-2 (Myhre et al. 1998).
    #[test]
    fn doubling_forcing() {
        assert!((co2_forcing(560.0, 280.0) - 3.708).abs() < 1e-3);
    }
}
