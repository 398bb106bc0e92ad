//! Surface albedo laws.
//!
//! Open surface: α_open(x) = open + open_p2 P2(x) (North et al. 1981, Rev.
//! Geophys. 19, 91: a latitude-dependent open-surface albedo). Ice: α_ice.
//! The step law (Budyko 1969, Tellus 21, 611) switches at the threshold
//! temperature T_s; the band holding the ice edge is split at the sub-grid
//! edge position (see [`crate::model`]). The smooth law blends with the ice
//! weight f(T) = [1 - tanh((T - T_s)/w)] / 2.

use crate::numerics::quad::p2;

/// Which albedo law.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum AlbedoKind {
    /// Ice below the threshold temperature, open surface above; the edge is
    /// located inside its band.
    Step,
    /// Smooth tanh ramp of half-width `width` (K) around the threshold.
    Smooth {
        /// Ramp width w, K (> 0).
        width: f64,
    },
}

/// Albedo law parameters.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Albedo {
    /// Step or smooth.
    pub kind: AlbedoKind,
    /// Open-surface albedo at P2(x) = 0.
    pub open: f64,
    /// Coefficient of P2(x) in the open-surface albedo.
    pub open_p2: f64,
    /// Ice albedo.
    pub ice: f64,
    /// Threshold temperature T_s, °C.
    pub threshold: f64,
}

impl Albedo {
    /// Open-surface albedo α_open(x) = open + open_p2 P2(x).
    pub fn open_at(&self, x: f64) -> f64 {
        self.open + self.open_p2 * p2(x)
    }

    /// Smooth law's ice weight f(T) = [1 - tanh((T - T_s)/w)]/2 and df/dT.
    /// For the step law this is the indicator of T < T_s (derivative 0);
    /// the model handles the step law's sub-grid edge itself.
    pub fn ice_weight(&self, t: f64) -> (f64, f64) {
        match self.kind {
            AlbedoKind::Smooth { width } => {
                let th = ((t - self.threshold) / width).tanh();
                (0.5 * (1.0 - th), -0.5 * (1.0 - th * th) / width)
            }
            AlbedoKind::Step => (if t < self.threshold { 1.0 } else { 0.0 }, 0.0),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn smooth_weight_derivative_matches_difference() {
        let a = Albedo {
            kind: AlbedoKind::Smooth { width: 3.0 },
            open: 0.3,
            open_p2: 0.0,
            ice: 0.6,
            threshold: -10.0,
        };
        for t in [-20.0, -11.0, -10.0, -8.5, 0.0] {
            let h = 1e-6;
            let fd = (a.ice_weight(t + h).0 - a.ice_weight(t - h).0) / (2.0 * h);
            assert!((fd - a.ice_weight(t).1).abs() < 1e-8);
        }
    }
}
