//! Input checks shared by the figure functions.

use crate::io::export::ExportError;

/// Every value finite, else [`ExportError::NonFinite`] naming `what`.
pub(super) fn check_finite(what: &str, v: &[f64]) -> Result<(), ExportError> {
    crate::io::export::ensure_finite(what, v)
}

/// At least one element, else [`ExportError::Empty`].
pub(super) fn check_nonempty<T>(what: &str, v: &[T]) -> Result<(), ExportError> {
    if v.is_empty() {
        Err(ExportError::Empty { what: what.into() })
    } else {
        Ok(())
    }
}

/// Exactly `want` values, else [`ExportError::Shape`].
pub(super) fn check_len(what: &str, got: usize, want: usize) -> Result<(), ExportError> {
    if got == want {
        Ok(())
    } else {
        Err(ExportError::Shape {
            what: format!("{what} has {got} values, expected {want}"),
        })
    }
}

/// Finite latitudes within ±90 degrees.
pub(super) fn check_latitudes(what: &str, v: &[f64]) -> Result<(), ExportError> {
    check_finite(what, v)?;
    if v.iter().any(|x| x.abs() > 90.0) {
        return Err(ExportError::Shape {
            what: format!("{what} has a latitude outside -90..90 degrees"),
        });
    }
    Ok(())
}

/// Finite polyline points.
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

/// Smallest and largest value; `None` when there are none.
pub(super) fn min_max(it: impl IntoIterator<Item = f64>) -> Option<(f64, f64)> {
    it.into_iter().fold(None, |acc, v| match acc {
        None => Some((v, v)),
        Some((lo, hi)) => Some((lo.min(v), hi.max(v))),
    })
}

/// The range spanned by cell edges, low to high.
pub(super) fn edge_range(e: &[f64]) -> (f64, f64) {
    let (a, b) = (e[0], e[e.len() - 1]);
    (a.min(b), a.max(b))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cell_edges_lie_halfway() {
        assert_eq!(
            cell_edges("x", &[0.0, 1.0, 3.0]).unwrap(),
            vec![-0.5, 0.5, 2.0, 4.0]
        );
        assert_eq!(cell_edges("x", &[2.0, 1.0]).unwrap(), vec![2.5, 1.5, 0.5]);
        assert!(cell_edges("x", &[1.0]).is_err());
        assert!(cell_edges("x", &[0.0, 1.0, 1.0]).is_err());
        assert!(matches!(
            cell_edges("x", &[0.0, f64::NAN]),
            Err(ExportError::NonFinite { .. })
        ));
    }
}
