//! Axes: data range, linear or logarithmic scale, tick positions and tick
//! text, and the label of a scenario parameter from the schema.
//!
//! Charts are drawn in axis coordinates: the value itself on a linear axis,
//! its decimal logarithm on a log axis ([`Axis::c`]); ticks are chosen here,
//! not by the plotting library, so that log axes get readable 1-2-5 ticks.

use std::ops::Range;

use crate::io::schema::axis_label;

/// Ratio of the largest to the smallest value above which a positive
/// parameter is drawn on a log axis.
const LOG_RATIO: f64 = 20.0;

/// Keys whose effect is logarithmic in the value (CO2 forcing is
/// 5.35 ln(co2/co2_ref)), drawn on a log axis whenever they are positive.
const LOG_KEYS: [&str; 2] = ["radiation.co2_ppm", "radiation.co2_ref_ppm"];

/// One axis of a chart.
#[derive(Clone, Debug, PartialEq)]
pub(super) struct Axis {
    /// Lower end of the shown range (a value, not a coordinate).
    pub(super) lo: f64,
    /// Upper end of the shown range.
    pub(super) hi: f64,
    /// Logarithmic scale (then lo > 0).
    pub(super) log: bool,
    /// Axis title with its unit.
    pub(super) label: String,
}

impl Axis {
    /// A linear axis over exactly [lo, hi] (widened when empty).
    pub(super) fn linear(lo: f64, hi: f64, label: impl Into<String>) -> Axis {
        let (lo, hi) = widen(lo, hi);
        Axis {
            lo,
            hi,
            log: false,
            label: label.into(),
        }
    }

    /// A linear axis spanning the data with a margin of `frac` of the span.
    pub(super) fn padded(lo: f64, hi: f64, frac: f64, label: impl Into<String>) -> Axis {
        let (lo, hi) = widen(lo, hi);
        let p = (hi - lo) * frac;
        Axis::linear(lo - p, hi + p, label)
    }

    /// The axis of a scenario parameter whose data span [lo, hi]: its label
    /// and unit from the schema, a log scale where [`wants_log`] says so,
    /// and a margin of `frac` of the span (in log space on a log axis).
    pub(super) fn param(key: &str, lo: f64, hi: f64, frac: f64) -> Axis {
        Axis::scaled(axis_label(key), lo, hi, frac, wants_log(key, lo, hi))
    }

    /// An axis over [lo, hi] with a margin of `frac` of the span, on a log
    /// scale if `log` and lo > 0 (else linear).
    pub(super) fn scaled(label: String, lo: f64, hi: f64, frac: f64, log: bool) -> Axis {
        if !(log && lo > 0.0) {
            return Axis::padded(lo, hi, frac, label);
        }
        let (a, b) = (lo.log10(), hi.log10());
        let (a, b) = if b > a { (a, b) } else { (a - 0.02, b + 0.02) };
        let p = (b - a) * frac;
        Axis {
            lo: 10f64.powf(a - p),
            hi: 10f64.powf(b + p),
            log: true,
            label,
        }
    }

    /// Axis coordinate of a value (its log10 on a log axis; values <= 0 on a
    /// log axis go to the lower end).
    pub(super) fn c(&self, v: f64) -> f64 {
        if self.log {
            if v > 0.0 { v.log10() } else { self.lo.log10() }
        } else {
            v
        }
    }

    /// The shown range in axis coordinates.
    pub(super) fn range(&self) -> Range<f64> {
        self.c(self.lo)..self.c(self.hi)
    }

    /// Major ticks as (axis coordinate, text).
    pub(super) fn ticks(&self) -> Vec<(f64, String)> {
        if self.log {
            log_ticks(self.lo, self.hi)
                .0
                .into_iter()
                .map(|v| (v.log10(), tick_text(v, v)))
                .collect()
        } else {
            let step = if self.label.ends_with("(deg)") {
                angle_step(self.hi - self.lo, 6)
            } else {
                nice_step(self.hi - self.lo, 6)
            };
            linear_ticks(self.lo, self.hi, step)
                .into_iter()
                .map(|v| (v, tick_text(v, step)))
                .collect()
        }
    }

    /// Minor ticks (axis coordinates) for light grid lines.
    pub(super) fn minor(&self) -> Vec<f64> {
        if self.log {
            log_ticks(self.lo, self.hi)
                .1
                .into_iter()
                .map(f64::log10)
                .collect()
        } else {
            Vec::new()
        }
    }
}

/// Whether a parameter whose values span [lo, hi] gets a log axis: only
/// positive ranges; CO2 always (its forcing is logarithmic), any other
/// parameter when hi/lo exceeds 20 (a span of more than ~1.3 decades).
pub(super) fn wants_log(key: &str, lo: f64, hi: f64) -> bool {
    if !(lo > 0.0 && hi.is_finite() && hi >= lo) {
        return false;
    }
    LOG_KEYS.contains(&key) || hi / lo > LOG_RATIO
}

fn widen(lo: f64, hi: f64) -> (f64, f64) {
    if hi > lo {
        (lo, hi)
    } else {
        let w = if lo == 0.0 { 1.0 } else { lo.abs() * 0.05 };
        (lo - w, hi + w)
    }
}

/// A step of 1, 2, 2.5 or 5 times a power of ten giving about `target`
/// intervals over `span` (common practice, no source).
pub(super) fn nice_step(span: f64, target: usize) -> f64 {
    let raw = (span / target.max(1) as f64).abs();
    if !(raw.is_finite() && raw > 0.0) {
        return 1.0;
    }
    let mag = 10f64.powf(raw.log10().floor());
    let m = raw / mag;
    let f = if m <= 1.0 {
        1.0
    } else if m <= 2.0 {
        2.0
    } else if m <= 2.5 {
        2.5
    } else if m <= 5.0 {
        5.0
    } else {
        10.0
    };
    f * mag
}

/// A step for an axis in degrees: 15, 30, 45 or 90 where about `target`
/// intervals need at least 10 degrees, else as [`nice_step`].
pub(super) fn angle_step(span: f64, target: usize) -> f64 {
    let raw = (span / target.max(1) as f64).abs();
    if raw <= 10.0 {
        return nice_step(span, target);
    }
    [15.0, 30.0, 45.0, 90.0]
        .into_iter()
        .find(|s| *s >= raw)
        .unwrap_or_else(|| nice_step(span, target))
}

/// Multiples of `step` inside [lo, hi] (ends included within rounding).
fn linear_ticks(lo: f64, hi: f64, step: f64) -> Vec<f64> {
    let eps = step * 1e-9;
    let first = ((lo - eps) / step).ceil() as i64;
    let last = ((hi + eps) / step).floor() as i64;
    if last < first || last - first > 1000 {
        return Vec::new();
    }
    (first..=last)
        .map(|k| {
            let v = k as f64 * step;
            if v.abs() < eps { 0.0 } else { v }
        })
        .collect()
}

/// Major and minor tick values of a log axis over [lo, hi] (lo > 0): whole
/// decades when they give at least 3 ticks (every second or third decade
/// over very wide ranges), else 1-2-5, else 1-2-3-5 per decade; over less
/// than about a factor of 3, evenly spaced values as on a linear axis.
/// Minor ticks fill the remaining digits 1-9 of each decade.
pub(super) fn log_ticks(lo: f64, hi: f64) -> (Vec<f64>, Vec<f64>) {
    let in_range = |v: f64| v >= lo * (1.0 - 1e-9) && v <= hi * (1.0 + 1e-9);
    let (d0, d1) = (lo.log10().floor() as i32, hi.log10().ceil() as i32);
    let of = |digits: &[f64]| -> Vec<f64> {
        (d0..=d1)
            .flat_map(|d| digits.iter().map(move |m| m * 10f64.powi(d)))
            .filter(|v| in_range(*v))
            .collect()
    };
    for digits in [&[1.0][..], &[1.0, 2.0, 5.0], &[1.0, 2.0, 3.0, 5.0]] {
        let mut major = of(digits);
        if major.len() >= 3 {
            let thin = major.len().div_ceil(8);
            if thin > 1 {
                major = major.into_iter().step_by(thin).collect();
            }
            let minor = of(&[1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0])
                .into_iter()
                .filter(|v| !major.iter().any(|m| (m - v).abs() <= 1e-9 * v))
                .collect();
            return (major, minor);
        }
    }
    let step = nice_step(hi - lo, 5);
    let major = linear_ticks(lo, hi, step)
        .into_iter()
        .filter(|v| *v > 0.0)
        .collect();
    (major, Vec::new())
}

/// Tick text: as many decimals as the step needs, no trailing zeros;
/// scientific (e.g. "2e5", "1e-4") for very large or small magnitudes.
pub(super) fn tick_text(v: f64, step: f64) -> String {
    if v == 0.0 {
        return "0".into();
    }
    let a = v.abs();
    if !(1e-3..1e6).contains(&a) {
        let mut e = a.log10().floor() as i32;
        if a / 10f64.powi(e) >= 9.995 {
            e += 1;
        }
        let m = v / 10f64.powi(e);
        let ms = trim(format!("{m:.2}"));
        return format!("{ms}e{e}");
    }
    let decimals = if step > 0.0 && step.is_finite() {
        let d = -(step.abs().log10().floor()) as i32;
        (d.max(0) + 1).min(8) as usize
    } else {
        6
    };
    let s = trim(format!("{v:.decimals$}"));
    if s == "-0" { "0".into() } else { s }
}

fn trim(s: String) -> String {
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nice_steps_are_1_2_2p5_5() {
        // Expected values worked by hand (common practice, no source).
        assert_eq!(nice_step(90.0, 6), 20.0);
        assert_eq!(nice_step(470.0, 6), 100.0);
        assert_eq!(nice_step(1.0, 6), 0.2);
        assert_eq!(nice_step(14.0, 6), 2.5);
        assert_eq!(
            linear_ticks(-0.1, 90.0, 20.0),
            vec![0.0, 20.0, 40.0, 60.0, 80.0]
        );
        // Degrees: 0-90 in 15s, a full latitude range in 30s.
        assert_eq!(angle_step(90.0, 6), 15.0);
        assert_eq!(angle_step(180.0, 6), 30.0);
        assert_eq!(angle_step(20.0, 6), 5.0);
        let lat = Axis::linear(-90.0, 90.0, "Latitude (deg)");
        let t: Vec<String> = lat.ticks().into_iter().map(|t| t.1).collect();
        assert_eq!(t, ["-90", "-60", "-30", "0", "30", "60", "90"]);
    }

    #[test]
    fn log_ticks_read_as_1_2_5() {
        // CO2 from 100 to 2000 ppm: 1-2-5 ticks (worked by hand).
        let (major, minor) = log_ticks(100.0, 2000.0);
        assert_eq!(major, vec![100.0, 200.0, 500.0, 1000.0, 2000.0]);
        assert!(minor.contains(&300.0) && !minor.contains(&200.0));
        // Six decades: whole decades only.
        let (major, _) = log_ticks(1e-2, 1e4);
        assert_eq!(major.len(), 7);
        assert!((major[0] - 0.01).abs() < 1e-15 && (major[6] - 1e4).abs() < 1e-9);
        // A narrow range falls back to evenly spaced values.
        let (major, minor) = log_ticks(270.0, 290.0);
        assert!(major.len() >= 3 && minor.is_empty());
        assert!(major.windows(2).all(|w| w[1] > w[0]));
    }

    #[test]
    fn log_axis_only_for_wide_positive_ranges_and_co2() {
        assert!(wants_log("radiation.co2_ppm", 100.0, 2000.0));
        assert!(wants_log("radiation.co2_ppm", 270.0, 290.0));
        assert!(!wants_log("orbit.flux", 1100.0, 1550.0));
        assert!(wants_log("transport.diffusivity", 0.01, 10.0));
        assert!(!wants_log("transport.diffusivity", 0.0, 10.0));
        assert!(!wants_log("radiation.a", -10.0, 10.0));
        let a = Axis::param("radiation.co2_ppm", 100.0, 2000.0, 0.0);
        assert!(a.log);
        assert_eq!(a.label, "CO2 (ppm)");
        assert!((a.c(1000.0) - 3.0).abs() < 1e-12);
        let ticks: Vec<String> = a.ticks().into_iter().map(|t| t.1).collect();
        assert_eq!(ticks, ["100", "200", "500", "1000", "2000"]);
        let f = Axis::param("orbit.flux", 1100.0, 1550.0, 0.0);
        assert!(!f.log);
        assert_eq!(f.label, "Stellar flux S0 (W m-2)");
    }

    #[test]
    fn tick_text_is_short() {
        assert_eq!(tick_text(30.0, 10.0), "30");
        assert_eq!(tick_text(-0.25, 0.05), "-0.25");
        assert_eq!(tick_text(0.30000000000000004, 0.1), "0.3");
        assert_eq!(tick_text(1362.5, 2.5), "1362.5");
        assert_eq!(tick_text(2e6, 1e6), "2e6");
        assert_eq!(tick_text(2e5, 1e5), "200000");
        assert_eq!(tick_text(1e-4, 1e-4), "1e-4");
        assert_eq!(tick_text(3e-5, 1e-5), "3e-5");
    }
}
