//! The planet's orbit: Kepler's equation, solar longitude, declination and
//! Sun-planet distance over the year.
//!
//! Conventions (ours): the year fraction t runs from 0 to 1 and starts at the
//! northern spring equinox (solar longitude λ = 0). The longitude of
//! perihelion ϖ is the solar longitude at which the planet passes perihelion,
//! measured in the direction of motion from the northern spring equinox
//! (present-day Earth: about 283°, early January).

use std::f64::consts::{PI, TAU};

/// Orbital elements that shape insolation.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Orbit {
    /// Stellar flux at the semi-major axis S0, W m-2.
    pub flux: f64,
    /// Obliquity ε, radians (0 to π).
    pub obliquity: f64,
    /// Eccentricity e, 0 <= e < 1.
    pub eccentricity: f64,
    /// Longitude of perihelion ϖ, radians (solar longitude at perihelion).
    pub perihelion: f64,
}

/// Where the planet is at one instant of the year.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Position {
    /// Solar longitude λ, radians (0 at the northern spring equinox).
    pub longitude: f64,
    /// Solar declination δ, radians: sin δ = sin ε sin λ.
    pub declination: f64,
    /// Squared inverse distance (a/r)², so the flux is S0 (a/r)².
    pub distance_factor: f64,
}

/// Solves Kepler's equation E - e sin E = M for the eccentric anomaly E by
/// Newton's method (common practice, no source); converges for 0 <= e < 1.
pub fn eccentric_anomaly(mean_anomaly: f64, e: f64) -> f64 {
    let m = mean_anomaly.rem_euclid(TAU);
    let mut big_e = if e < 0.8 { m } else { PI };
    for _ in 0..60 {
        let f = big_e - e * big_e.sin() - m;
        let step = f / (1.0 - e * big_e.cos());
        big_e -= step;
        if step.abs() < 1e-15 {
            break;
        }
    }
    big_e
}

impl Orbit {
    /// Mean anomaly at the northern spring equinox (λ = 0, true anomaly -ϖ).
    /// tan(E/2) = sqrt((1-e)/(1+e)) tan(ν/2); M = E - e sin E.
    fn mean_anomaly_at_equinox(&self) -> f64 {
        let e = self.eccentricity;
        let nu = -self.perihelion;
        let big_e = 2.0 * (((1.0 - e) / (1.0 + e)).sqrt() * (nu / 2.0).tan()).atan();
        // atan keeps E/2 in (-π/2, π/2); the half-angle of ν may lie outside,
        // so shift E by the number of whole turns ν made.
        let turns = ((nu / 2.0 + PI / 2.0) / PI).floor();
        let big_e = big_e + TAU * turns;
        big_e - e * big_e.sin()
    }

    /// Position at year fraction t (0 = northern spring equinox).
    pub fn position(&self, t: f64) -> Position {
        let e = self.eccentricity;
        let m = self.mean_anomaly_at_equinox() + TAU * t;
        let big_e = eccentric_anomaly(m, e);
        // true anomaly from the eccentric anomaly
        let nu = 2.0 * (((1.0 + e) / (1.0 - e)).sqrt() * (big_e / 2.0).tan()).atan();
        let r = 1.0 - e * big_e.cos();
        self.at_longitude_with_distance(nu + self.perihelion, 1.0 / (r * r))
    }

    /// Position at solar longitude λ (radians): r/a = (1 - e²)/(1 + e cos(λ - ϖ)).
    pub fn at_longitude(&self, longitude: f64) -> Position {
        let e = self.eccentricity;
        let r = (1.0 - e * e) / (1.0 + e * (longitude - self.perihelion).cos());
        self.at_longitude_with_distance(longitude, 1.0 / (r * r))
    }

    fn at_longitude_with_distance(&self, longitude: f64, distance_factor: f64) -> Position {
        let declination = (self.obliquity.sin() * longitude.sin()).asin();
        Position {
            longitude: longitude.rem_euclid(TAU),
            declination,
            distance_factor,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn kepler_residual_is_tiny() {
        for e in [0.0, 0.0167, 0.3, 0.7, 0.9] {
            for k in 0..50 {
                let m = k as f64 * 0.13;
                let big_e = eccentric_anomaly(m, e);
                let f = big_e - e * big_e.sin() - m.rem_euclid(TAU);
                assert!(f.abs() < 1e-12, "e={e} M={m} f={f}");
            }
        }
    }

    #[test]
    fn year_starts_at_equinox_and_perihelion_is_closest() {
        let o = Orbit {
            flux: 1361.0,
            obliquity: 0.41,
            eccentricity: 0.2,
            perihelion: 4.9,
        };
        let p = o.position(0.0);
        assert!(p.longitude.sin().abs() < 1e-12 && p.longitude.cos() > 0.0);
        // Kepler's second law: the position by time and by longitude agree.
        for k in 0..20 {
            let p = o.position(k as f64 / 20.0);
            let q = o.at_longitude(p.longitude);
            assert!((p.distance_factor - q.distance_factor).abs() < 1e-10);
        }
        let at_peri = o.at_longitude(o.perihelion);
        assert!((at_peri.distance_factor - 1.0 / (0.8f64 * 0.8)).abs() < 1e-12);
    }
}
