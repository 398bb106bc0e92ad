//! Equilibrium climates: find them from several starts, keep the distinct
//! ones, and describe each (global mean, ice, state, stability).

use crate::model::Model;
use crate::numerics::newton::{
    NewtonOptions, SolveError, Workspace, newton, spin_up, unstable_modes,
};

/// The kind of climate, from where the ice lies.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum State {
    /// No ice anywhere.
    IceFree,
    /// Ice only around the pole(s), open equator.
    PolarCaps,
    /// Ice only in a belt around the equator, open poles.
    EquatorialBelt,
    /// Ice everywhere.
    Snowball,
    /// Anything else (e.g. ice at both poles and equator).
    Other,
}

impl State {
    /// The label used in every output.
    pub fn label(self) -> &'static str {
        match self {
            State::IceFree => "ice-free",
            State::PolarCaps => "polar-caps",
            State::EquatorialBelt => "equatorial-belt",
            State::Snowball => "snowball",
            State::Other => "other",
        }
    }
}

/// Diagnostics of one temperature profile.
#[derive(Clone, Debug, PartialEq)]
pub struct Diagnostics {
    /// Area-weighted global mean temperature, °C.
    pub global_mean_c: f64,
    /// Ice-covered fraction of the surface.
    pub ice_area_fraction: f64,
    /// Northern-hemisphere latitudes (deg) where the surface turns between
    /// ice and open, ascending.
    pub ice_edges_deg: Vec<f64>,
    /// The northern hemisphere's most poleward ice edge, deg (see
    /// [`hemisphere_ice_edges`]): 90 with no ice in the hemisphere, 0 when
    /// all of it is ice.
    pub ice_edge_north_deg: f64,
    /// The southern hemisphere's most poleward ice edge, deg: -90 with no
    /// ice in the hemisphere, 0 when all of it is ice (on a symmetric grid,
    /// the mirror of the northern one).
    pub ice_edge_south_deg: f64,
    /// Planetary albedo 1 - (global absorbed)/(global insolation).
    pub planetary_albedo: f64,
    /// Kind of climate.
    pub state: State,
    /// Global mean of the net flux F, W m-2 (zero at equilibrium).
    pub energy_imbalance: f64,
    /// Habitable fraction of the surface, [`Model::habitable_fraction`] of
    /// the profile: the area where the planet's habitable range holds it,
    /// with the profile piecewise linear between band centres.
    pub habitable_fraction: f64,
}

/// Absolute zero, °C.
pub const ABSOLUTE_ZERO_C: f64 = -273.15;

/// The coldest band of `t` (°C, latitude deg) when it lies below absolute
/// zero or is not finite: such a profile is not a climate. `None` when
/// every band is physical.
pub fn below_absolute_zero(model: &Model, t: &[f64]) -> Option<(f64, f64)> {
    let (i, &tmin) = t.iter().enumerate().min_by(|a, b| a.1.total_cmp(b.1))?;
    if tmin >= ABSOLUTE_ZERO_C && t.iter().all(|x| x.is_finite()) {
        return None;
    }
    let lat = model
        .grid
        .centres
        .get(i)
        .map_or(f64::NAN, |x| x.asin().to_degrees());
    Some((tmin, lat))
}

/// Describes profile `t`.
pub fn diagnose(model: &Model, t: &[f64]) -> Diagnostics {
    let g = &model.grid;
    let fl = model.band_fluxes(t);
    let intervals = model.ice_intervals(t);
    let (x0, x1) = (g.faces[0], g.faces[g.len()]);
    let (edges, state) = classify_ice(&intervals, x0, x1, g.symmetric);
    let (north, south) = hemisphere_ice_edges(&intervals, g.symmetric);
    let ins = g.mean(&fl.insolation);
    let abs = g.mean(&fl.absorbed);
    let net: Vec<f64> = (0..g.len())
        .map(|i| fl.absorbed[i] - fl.olr[i] + fl.transport[i])
        .collect();
    Diagnostics {
        global_mean_c: g.mean(t),
        ice_area_fraction: model.ice_area_fraction(t),
        ice_edges_deg: edges,
        ice_edge_north_deg: north,
        ice_edge_south_deg: south,
        planetary_albedo: if ins > 0.0 { 1.0 - abs / ins } else { 0.0 },
        state,
        energy_imbalance: g.mean(&net),
        habitable_fraction: model.habitable_fraction(t),
    }
}

/// The ice edges (northern-hemisphere latitudes, deg, ascending) and the
/// kind of climate of merged, ascending ice intervals in x on the domain
/// [x0, x1] (x0 = 0 for a symmetric grid, mirrored at the equator).
pub fn classify_ice(
    intervals: &[(f64, f64)],
    x0: f64,
    x1: f64,
    symmetric: bool,
) -> (Vec<f64>, State) {
    let span = x1 - x0;
    let tiny = 1e-12;
    let covered: f64 = intervals.iter().map(|(a, b)| b - a).sum();
    let mut edges: Vec<f64> = Vec::new();
    for &(a, b) in intervals {
        for e in [a, b] {
            if e > x0 + tiny && e < x1 - tiny && e >= 0.0 {
                edges.push(e.asin().to_degrees());
            }
        }
    }
    // For a symmetric grid the equator is a mirror, not an edge.
    if symmetric {
        edges.retain(|e| *e > 1e-9);
    }
    edges.sort_by(f64::total_cmp);
    let state = if covered <= tiny * span {
        State::IceFree
    } else if covered >= (1.0 - tiny) * span {
        State::Snowball
    } else {
        let touches_pole_n = intervals.last().is_some_and(|iv| iv.1 >= x1 - tiny);
        let touches_pole_s = intervals.first().is_some_and(|iv| iv.0 <= x0 + tiny);
        let has_equator = intervals.iter().any(|&(a, b)| a <= 0.0 && b >= 0.0);
        let caps_only = intervals
            .iter()
            .all(|&(a, b)| b >= x1 - tiny || a <= x0 + tiny);
        if symmetric {
            if intervals.len() == 1 && touches_pole_n && !has_equator {
                State::PolarCaps
            } else if intervals.len() == 1 && has_equator && !touches_pole_n {
                State::EquatorialBelt
            } else {
                State::Other
            }
        } else if caps_only && !has_equator && (touches_pole_n || touches_pole_s) {
            State::PolarCaps
        } else if intervals.len() == 1 && has_equator && !touches_pole_n && !touches_pole_s {
            State::EquatorialBelt
        } else {
            State::Other
        }
    };
    (edges, state)
}

/// The most poleward ice edge of each hemisphere, deg, from the merged,
/// ascending ice intervals in x = sin(latitude): (north, south). The
/// northern one is the largest latitude in (0, 90) where the surface turns
/// between ice and open; 90 when the hemisphere has no ice and 0 when all
/// of it is ice. So a polar cap gives its edge, an equatorial belt its
/// poleward edge, a cap plus a belt the cap's edge, a snowball 0 and an
/// ice-free planet 90. The southern one mirrors it (-90 ice-free, 0 all
/// ice). On a symmetric grid (one hemisphere, x in [0, 1]) south = -north.
pub fn hemisphere_ice_edges(intervals: &[(f64, f64)], symmetric: bool) -> (f64, f64) {
    let tiny = 1e-12;
    let edge = |sign: f64| -> f64 {
        // the hemisphere as y = sign * x in [0, 1]; its intervals mapped there
        let mut covered = 0.0;
        let mut best: Option<f64> = None;
        for &(a, b) in intervals {
            let (lo, hi) = if sign > 0.0 { (a, b) } else { (-b, -a) };
            let (lo, hi) = (lo.max(0.0), hi.min(1.0));
            if hi <= lo {
                continue;
            }
            covered += hi - lo;
            for e in [lo, hi] {
                if e > tiny && e < 1.0 - tiny {
                    best = Some(best.map_or(e, |m: f64| m.max(e)));
                }
            }
        }
        let y = match best {
            Some(e) => e,
            None if covered > 0.5 => 0.0,
            None => 1.0,
        };
        sign * y.asin().to_degrees()
    };
    let north = edge(1.0);
    if symmetric {
        (north, -north)
    } else {
        (north, edge(-1.0))
    }
}

/// The most poleward ice edge of each hemisphere of profile `t`, deg,
/// (north, south), by the conventions of [`hemisphere_ice_edges`].
pub fn ice_edges_deg(model: &Model, t: &[f64]) -> (f64, f64) {
    hemisphere_ice_edges(&model.ice_intervals(t), model.grid.symmetric)
}

/// One equilibrium climate.
#[derive(Clone, Debug)]
pub struct Equilibrium {
    /// Temperature per band, °C.
    pub temperature: Vec<f64>,
    /// Which start led here (`warm`, `cold`, or a file name).
    pub start: String,
    /// Newton iterations used.
    pub newton_iterations: usize,
    /// Max |F| at the solution, W m-2.
    pub residual: f64,
    /// Number of unstable modes (0 = stable).
    pub unstable_modes: usize,
    /// Whether spin-up was needed before Newton converged.
    pub spun_up: bool,
    /// Diagnostics.
    pub diagnostics: Diagnostics,
}

/// A start for the equilibrium search.
#[derive(Clone, Debug)]
pub struct Start {
    /// Label.
    pub label: String,
    /// Temperature per band, °C.
    pub temperature: Vec<f64>,
}

/// Solves from one start: Newton, and if it fails, 200 years of implicit
/// time stepping (1-month steps) and Newton again.
pub fn equilibrium_from(
    model: &Model,
    start: &Start,
    opts: &NewtonOptions,
) -> Result<Equilibrium, SolveError> {
    let mut ws = Workspace::new(model);
    let mut t = start.temperature.clone();
    let mut spun_up = false;
    let iters = match newton(model, &mut t, opts, &mut ws) {
        Ok(k) => k,
        Err(_) => {
            spun_up = true;
            t.clone_from(&start.temperature);
            let _ = spin_up(model, &mut t, 1.0 / 12.0, 1e-3, 2400, &mut ws);
            newton(model, &mut t, opts, &mut ws)?
        }
    };
    if let Some((temperature_c, latitude_deg)) = below_absolute_zero(model, &t) {
        return Err(SolveError::Unphysical {
            temperature_c,
            latitude_deg,
        });
    }
    let mut f = vec![0.0; model.len()];
    model.evaluate(&t, &mut f, None);
    let residual = crate::numerics::newton::max_abs(&f);
    let unstable = unstable_modes(model, &t, &mut ws);
    let diagnostics = diagnose(model, &t);
    Ok(Equilibrium {
        temperature: t,
        start: start.label.clone(),
        newton_iterations: iters,
        residual,
        unstable_modes: unstable,
        spun_up,
        diagnostics,
    })
}

/// The standard starts: warm (uniform `warm` °C, ice-free) and cold
/// (uniform `cold` °C, snowball).
pub fn standard_starts(n: usize, warm: f64, cold: f64) -> Vec<Start> {
    vec![
        Start {
            label: "warm".into(),
            temperature: vec![warm; n],
        },
        Start {
            label: "cold".into(),
            temperature: vec![cold; n],
        },
    ]
}

/// Outcome of a search over several starts.
#[derive(Clone, Debug)]
pub struct Search {
    /// Distinct equilibria, warmest first.
    pub equilibria: Vec<Equilibrium>,
    /// Starts that failed, with the reason.
    pub failures: Vec<(String, SolveError)>,
}

/// Solves from every start and keeps the distinct equilibria (two are the
/// same when their temperatures differ by less than 1e-6 K everywhere).
pub fn find_equilibria(model: &Model, starts: &[Start], opts: &NewtonOptions) -> Search {
    let mut equilibria: Vec<Equilibrium> = Vec::new();
    let mut failures = Vec::new();
    for s in starts {
        match equilibrium_from(model, s, opts) {
            Ok(e) => {
                let dup = equilibria.iter().any(|o| {
                    o.temperature
                        .iter()
                        .zip(&e.temperature)
                        .all(|(a, b)| (a - b).abs() < 1e-6)
                });
                if !dup {
                    equilibria.push(e);
                }
            }
            Err(err) => failures.push((s.label.clone(), err)),
        }
    }
    equilibria.sort_by(|a, b| {
        b.diagnostics
            .global_mean_c
            .total_cmp(&a.diagnostics.global_mean_c)
    });
    Search {
        equilibria,
        failures,
    }
}

#[cfg(test)]
mod edge_tests {
    use super::hemisphere_ice_edges;

    // The conventions documented in the README (common practice, no source):
    // latitude of an edge at x is asin(x).
    #[test]
    fn hemisphere_edges_follow_the_conventions() {
        let deg = |x: f64| x.asin().to_degrees();
        // ice-free and snowball
        assert_eq!(hemisphere_ice_edges(&[], false), (90.0, -90.0));
        assert_eq!(hemisphere_ice_edges(&[(-1.0, 1.0)], false), (0.0, 0.0));
        // caps
        let (n, s) = hemisphere_ice_edges(&[(-1.0, -0.9), (0.95, 1.0)], false);
        assert!((n - deg(0.95)).abs() < 1e-12 && (s + deg(0.9)).abs() < 1e-12);
        // an equatorial belt: its poleward edges
        let (n, s) = hemisphere_ice_edges(&[(-0.3, 0.2)], false);
        assert!((n - deg(0.2)).abs() < 1e-12 && (s + deg(0.3)).abs() < 1e-12);
        // cap plus belt: the cap's edge
        let (n, _) = hemisphere_ice_edges(&[(-0.2, 0.2), (0.9, 1.0)], false);
        assert!((n - deg(0.9)).abs() < 1e-12);
        // one hemisphere ice-free, the other fully covered
        let (n, s) = hemisphere_ice_edges(&[(-1.0, 0.0)], false);
        assert_eq!((n, s), (90.0, 0.0));
        // symmetric grid: the south mirrors the north
        let (n, s) = hemisphere_ice_edges(&[(0.8, 1.0)], true);
        assert!((n - deg(0.8)).abs() < 1e-12 && s == -n);
    }
}
