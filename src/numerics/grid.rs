//! Latitude bands on x = sin(latitude).
//!
//! Band i spans the faces x_{i-1/2} < x < x_{i+1/2}; its area is a fraction
//! w_i = (x_{i+1/2} - x_{i-1/2}) / L of the domain (L = 2 pole to pole,
//! L = 1 for a symmetric hemisphere), because the area of a zone on a sphere
//! is proportional to the difference of the sines of its bounding latitudes.

use std::fmt;

/// How the band faces are spaced.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Spacing {
    /// Equal steps in x = sin(latitude): every band has the same area.
    Sine,
    /// Equal steps in latitude: finer near the poles in area terms.
    Latitude,
}

impl fmt::Display for Spacing {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            Spacing::Sine => "sine",
            Spacing::Latitude => "latitude",
        })
    }
}

/// The latitude bands of a model.
#[derive(Clone, Debug)]
pub struct Grid {
    /// Face positions x_{i-1/2}, ascending, `bands + 1` of them.
    pub faces: Vec<f64>,
    /// Band centres x_i (midpoint in x for sine spacing, sine of the
    /// mid-latitude for latitude spacing).
    pub centres: Vec<f64>,
    /// Area fraction of each band; they sum to one.
    pub weights: Vec<f64>,
    /// Only the northern hemisphere is modelled, mirrored about the equator.
    pub symmetric: bool,
    /// Face spacing.
    pub spacing: Spacing,
}

impl Grid {
    /// Builds `bands` bands from the South Pole (x = -1) to the North Pole,
    /// or from the equator to the North Pole when `symmetric`.
    /// Callers validate `bands >= 4`.
    pub fn new(bands: usize, spacing: Spacing, symmetric: bool) -> Grid {
        let n = bands.max(2);
        let (lo, hi) = if symmetric {
            (0.0, std::f64::consts::FRAC_PI_2)
        } else {
            (-std::f64::consts::FRAC_PI_2, std::f64::consts::FRAC_PI_2)
        };
        let mut faces = Vec::with_capacity(n + 1);
        let mut centres = Vec::with_capacity(n);
        match spacing {
            Spacing::Sine => {
                let (a, b) = (lo.sin(), hi.sin());
                for k in 0..=n {
                    faces.push(a + (b - a) * k as f64 / n as f64);
                }
                for k in 0..n {
                    centres.push(0.5 * (faces[k] + faces[k + 1]));
                }
            }
            Spacing::Latitude => {
                for k in 0..=n {
                    faces.push((lo + (hi - lo) * k as f64 / n as f64).sin());
                }
                for k in 0..n {
                    centres.push((lo + (hi - lo) * (k as f64 + 0.5) / n as f64).sin());
                }
            }
        }
        // Exact end points (sin(±π/2) is ±1 to rounding, but make it exact).
        faces[n] = 1.0;
        faces[0] = if symmetric { 0.0 } else { -1.0 };
        let span = faces[n] - faces[0];
        let weights = faces.windows(2).map(|f| (f[1] - f[0]) / span).collect();
        Grid {
            faces,
            centres,
            weights,
            symmetric,
            spacing,
        }
    }

    /// Number of bands.
    pub fn len(&self) -> usize {
        self.centres.len()
    }

    /// True when there are no bands (never for a validated grid).
    pub fn is_empty(&self) -> bool {
        self.centres.is_empty()
    }

    /// Width of band i in x.
    pub fn width(&self, i: usize) -> f64 {
        self.faces[i + 1] - self.faces[i]
    }

    /// Latitude of each band centre in degrees.
    pub fn latitudes_deg(&self) -> Vec<f64> {
        self.centres.iter().map(|x| x.asin().to_degrees()).collect()
    }

    /// Area-weighted mean Σ w_i v_i.
    pub fn mean(&self, v: &[f64]) -> f64 {
        self.weights.iter().zip(v).map(|(w, v)| w * v).sum()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn weights_sum_to_one_and_centres_inside() {
        for sp in [Spacing::Sine, Spacing::Latitude] {
            for sym in [false, true] {
                let g = Grid::new(37, sp, sym);
                let s: f64 = g.weights.iter().sum();
                assert!((s - 1.0).abs() < 1e-14);
                for i in 0..g.len() {
                    assert!(g.faces[i] < g.centres[i] && g.centres[i] < g.faces[i + 1]);
                }
            }
        }
    }
}
