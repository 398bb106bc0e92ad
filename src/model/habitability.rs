//! The habitable fraction of the surface: the share of the planet's area
//! where the surface temperature lies in a habitable range (liquid water,
//! 0 to 100 °C by default, as in Spiegel, Menou & Scharf 2008, ApJ 681,
//! 1609).
//!
//! The profile is taken piecewise linear in x = sin(latitude) between band
//! centres, with the outer half-bands extrapolated, exactly as the sub-grid
//! ice edge takes it ([`crate::model::subgrid`]), so the fraction moves
//! continuously with the climate instead of jumping a whole band at a time.
//! Because the area of a zone of the sphere is proportional to the
//! difference of the sines of its bounding latitudes, area is uniform in x,
//! and the habitable fraction of profile T(x) on the domain [x0, 1]
//! (x0 = -1 pole to pole, 0 for a symmetric hemisphere) is
//!
//! ```text
//! H = (1/(1 - x0)) ∫_{x0}^{1} 1[T_min <= T(x) <= T_max] dx .
//! ```
//!
//! On a half-band [a, b] where T runs linearly from T_a to T_b, the
//! habitable part is where θ = (T - T_a)/(T_b - T_a) ∈ [0, 1] lies between
//! θ_min = (T_min - T_a)/(T_b - T_a) and θ_max = (T_max - T_a)/(T_b - T_a),
//! of length (b - a) |clamp(θ_max, 0, 1) - clamp(θ_min, 0, 1)| (the whole
//! half-band or nothing when T_a = T_b). The fraction of band i is the sum
//! over its two half-bands divided by its width, so H = Σ_i w_i h_i with
//! the band area weights w_i.

use super::annual::Model;

/// The temperatures at which a surface counts as habitable, °C:
/// `min_c <= T <= max_c` (the scenario keys `habitability.min_c` and
/// `habitability.max_c`, validated `min_c < max_c`).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct HabitableRange {
    /// Lowest habitable temperature, °C.
    pub min_c: f64,
    /// Highest habitable temperature, °C.
    pub max_c: f64,
}

impl Default for HabitableRange {
    /// Liquid water at one bar: 0 to 100 °C (Spiegel, Menou & Scharf 2008).
    fn default() -> Self {
        HabitableRange {
            min_c: 0.0,
            max_c: 100.0,
        }
    }
}

impl HabitableRange {
    /// The share of a linear piece of profile, from `ta` at one end to `tb`
    /// at the other, where `min_c <= T <= max_c`:
    /// |clamp(θ_max, 0, 1) - clamp(θ_min, 0, 1)| with
    /// θ = (T - ta)/(tb - ta); 1 or 0 for a flat piece. In [0, 1] for
    /// finite ends.
    #[inline]
    pub fn linear_share(&self, ta: f64, tb: f64) -> f64 {
        let dt = tb - ta;
        if dt == 0.0 {
            return if ta >= self.min_c && ta <= self.max_c {
                1.0
            } else {
                0.0
            };
        }
        let lo = ((self.min_c - ta) / dt).clamp(0.0, 1.0);
        let hi = ((self.max_c - ta) / dt).clamp(0.0, 1.0);
        (hi - lo).abs().min(1.0)
    }
}

impl Model {
    /// Habitable share and length in x of half-band k under the
    /// piecewise-linear profile of `t` (the segment rule of the sub-grid
    /// ice edge).
    #[inline]
    fn habitable_share(&self, k: usize, t: &[f64]) -> (f64, f64) {
        let (a, b) = self.segment(k);
        let (xa, xb) = (self.grid.centres[a], self.grid.centres[b]);
        let h = &self.half[k];
        let slope = (t[b] - t[a]) / (xb - xa);
        let t_lo = t[a] + slope * (h.lo - xa);
        let t_hi = t[a] + slope * (h.hi - xa);
        (self.planet.habitable.linear_share(t_lo, t_hi), h.hi - h.lo)
    }

    /// Habitable fraction H of the planet's surface for profile `t` (°C per
    /// band) and the planet's [`HabitableRange`]: the measure of
    /// {x : T_min <= T(x) <= T_max} over the domain length 1 - x0, with T(x)
    /// piecewise linear between band centres (module docs). In [0, 1];
    /// exactly 0 when no half-band is habitable and exactly 1 when every
    /// one is wholly habitable; allocates nothing.
    pub fn habitable_fraction(&self, t: &[f64]) -> f64 {
        let span = self.grid.faces[self.len()] - self.grid.faces[0];
        let (mut total, mut whole) = (0.0, true);
        for k in 0..self.half.len() {
            let (share, len) = self.habitable_share(k, t);
            total += share * len;
            whole &= share == 1.0;
        }
        if whole {
            1.0
        } else {
            (total / span).clamp(0.0, 1.0)
        }
    }

    /// The habitable fraction h_i of each band's area for profile `t`,
    /// written into `out` (one per band): the habitable length of its two
    /// half-bands over its width (exactly 0 or 1 when both halves are wholly
    /// out of or in the range). Σ_i w_i h_i is [`Model::habitable_fraction`]
    /// to rounding.
    pub fn habitable_band_fractions(&self, t: &[f64], out: &mut [f64]) {
        for (i, o) in out.iter_mut().enumerate().take(self.len()) {
            let (s0, l0) = self.habitable_share(2 * i, t);
            let (s1, l1) = self.habitable_share(2 * i + 1, t);
            *o = if s0 == 1.0 && s1 == 1.0 {
                1.0
            } else {
                ((s0 * l0 + s1 * l1) / self.grid.width(i)).clamp(0.0, 1.0)
            };
        }
    }
}

#[cfg(test)]
mod tests {
    use super::HabitableRange;

    // The share of a linear piece is the length of the sub-interval where
    // it lies in range, solved by hand (common practice, no source).
    #[test]
    fn linear_share_of_a_piece() {
        let r = HabitableRange::default();
        // -50 .. 150: habitable from θ = 0.25 to 0.75
        assert!((r.linear_share(-50.0, 150.0) - 0.5).abs() < 1e-15);
        assert!((r.linear_share(150.0, -50.0) - 0.5).abs() < 1e-15);
        // 10 .. 20: all habitable; 120 .. 130 and -20 .. -10: none
        assert_eq!(r.linear_share(10.0, 20.0), 1.0);
        assert_eq!(r.linear_share(120.0, 130.0), 0.0);
        assert_eq!(r.linear_share(-20.0, -10.0), 0.0);
        // -10 .. 30: from θ = 0.25
        assert!((r.linear_share(-10.0, 30.0) - 0.75).abs() < 1e-15);
        // flat pieces
        assert_eq!(r.linear_share(5.0, 5.0), 1.0);
        assert_eq!(r.linear_share(-5.0, -5.0), 0.0);
    }
}
