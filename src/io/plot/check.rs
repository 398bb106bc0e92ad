//! Input checks shared by the figure functions.

use std::ops::Range;

use crate::io::export::ExportError;

pub(super) fn check_finite(what: &str, v: &[f64]) -> Result<(), ExportError> {
    crate::io::export::ensure_finite(what, v)
}

pub(super) fn check_nonempty<T>(what: &str, v: &[T]) -> Result<(), ExportError> {
    if v.is_empty() {
        Err(ExportError::Empty { what: what.into() })
    } else {
        Ok(())
    }
}

pub(super) fn check_len(what: &str, got: usize, want: usize) -> Result<(), ExportError> {
    if got == want {
        Ok(())
    } else {
        Err(ExportError::Shape {
            what: format!("{what} has {got} values, expected {want}"),
        })
    }
}

pub(super) fn check_latitudes(what: &str, v: &[f64]) -> Result<(), ExportError> {
    check_finite(what, v)?;
    if v.iter().any(|x| x.abs() > 90.0) {
        return Err(ExportError::Shape {
            what: format!("{what} has a latitude outside -90..90 degrees"),
        });
    }
    Ok(())
}

pub(super) fn check_polyline(what: &str, pts: &[(f64, f64)]) -> Result<(), ExportError> {
    if pts.iter().any(|(a, b)| !a.is_finite() || !b.is_finite()) {
        return Err(ExportError::NonFinite { what: what.into() });
    }
    Ok(())
}

/// Check a grid axis (finite, ≥ 2 points, strictly monotone) and return cell edges.
pub(super) fn cell_edges(what: &str, v: &[f64]) -> Result<Vec<f64>, ExportError> {
    check_finite(what, v)?;
    if v.len() < 2 {
        return Err(ExportError::Shape {
            what: format!("{what} needs at least 2 grid points, got {}", v.len()),
        });
    }
    let inc = v[1] > v[0];
    if !v
        .windows(2)
        .all(|w| if inc { w[1] > w[0] } else { w[1] < w[0] })
    {
        return Err(ExportError::Shape {
            what: format!("{what} must be strictly increasing or strictly decreasing"),
        });
    }
    let n = v.len();
    let mut e = Vec::with_capacity(n + 1);
    e.push(v[0] - 0.5 * (v[1] - v[0]));
    for w in v.windows(2) {
        e.push(0.5 * (w[0] + w[1]));
    }
    e.push(v[n - 1] + 0.5 * (v[n - 1] - v[n - 2]));
    Ok(e)
}

pub(super) fn min_max(it: impl IntoIterator<Item = f64>) -> Option<(f64, f64)> {
    it.into_iter().fold(None, |acc, v| match acc {
        None => Some((v, v)),
        Some((lo, hi)) => Some((lo.min(v), hi.max(v))),
    })
}

/// Range spanning the values with a small margin; degenerate spans widened.
pub(super) fn padded(lo: f64, hi: f64, frac: f64) -> Range<f64> {
    if hi > lo {
        let p = (hi - lo) * frac;
        (lo - p)..(hi + p)
    } else {
        let w = if lo == 0.0 { 1.0 } else { lo.abs() * 0.05 };
        (lo - w)..(hi + w)
    }
}
