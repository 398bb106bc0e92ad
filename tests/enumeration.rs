//! Traced branches against the enumeration of every equilibrium of the
//! linear step-albedo model (North 1975, J. Atmos. Sci. 32, 2033: at a fixed
//! ice edge the model is linear, so each one-edge family is a closed-form
//! flux Q(x_s) over the edge; stability by the slope-stability theorem,
//! Cahalan & North 1979, J. Atmos. Sci. 36, 1178). For random parameter
//! sets on symmetric grids (where every state is a cap, a belt, ice-free or
//! a snowball, and the families on the hemisphere enumerate them all), at
//! probe fluxes away from folds the traced states equal the enumerated ones
//! in count and stability, and every traced cap or belt point lies on its
//! enumerated family. The states at a point do not depend on which
//! parameter was traced to reach it (flux, CO2, diffusivity).
//!
//! The enumeration (`EdgeFamilies`) solves on fixed cells with the edge
//! inside one cell face; the traced model maps its grid onto the regions:
//! two discretisations of one equation, and traced edges are interpolated
//! between points, so an edge is checked by the flux the family gives
//! there (within 2e-4 of the probe).
use icefold::analysis::branches::{Hysteresis, TraceOptions, trace_all};
use icefold::analysis::skeleton::{EdgeFamilies, Topology};
use icefold::io::scenario::Scenario;
use icefold::model::climate::State;
use icefold::model::edges::REFINE;
use icefold::model::{Model, Param};

/// A small deterministic generator (64-bit LCG, Knuth's MMIX constants;
/// common practice, no source) for reproducible parameter sets.
struct Lcg(u64);
impl Lcg {
    fn uniform(&mut self, lo: f64, hi: f64) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        lo + (hi - lo) * ((self.0 >> 11) as f64 / (1u64 << 53) as f64)
    }
}

/// A random linear-OLR, diffusive, step-albedo planet on a symmetric grid
/// (ranges around North, Cahalan & Coakley 1981, from memory), Legendre or
/// exact insolation.
fn random_model(r: &mut Lcg, i: usize) -> (Model, Vec<String>) {
    let b = r.uniform(1.8, 2.3);
    let mut sets = vec![
        "grid.symmetric=true".to_string(),
        format!("grid.bands={}", if i.is_multiple_of(2) { 30 } else { 45 }),
        format!("radiation.a={}", r.uniform(198.0, 210.0)),
        format!("radiation.b={b}"),
        format!("transport.diffusivity={}", b * r.uniform(0.2, 0.45)),
        format!("albedo.open={}", r.uniform(0.29, 0.35)),
        format!("albedo.open_p2={}", r.uniform(0.15, 0.24)),
        format!("albedo.ice={}", r.uniform(0.56, 0.66)),
        format!("albedo.threshold={}", r.uniform(-12.0, -8.0)),
    ];
    if i % 4 < 2 {
        sets.push("insolation.kind=\"legendre\"".into());
        sets.push(format!("insolation.p2={}", r.uniform(-0.5, -0.44)));
    } else {
        sets.push(format!("orbit.obliquity={}", r.uniform(15.0, 35.0)));
    }
    let m = Scenario::load(None, &sets)
        .unwrap_or_else(|e| panic!("{sets:?}: {e}"))
        .model();
    (m, sets)
}

/// (stable, ice edge deg) of every state at flux `s` from the enumeration.
fn enumerated(f: &mut EdgeFamilies, s: f64) -> Vec<(bool, f64, Topology)> {
    let mut out = Vec::new();
    if f.corner_flux(Topology::IceFree).is_some_and(|c| s > c) {
        out.push((true, 90.0, Topology::IceFree));
    }
    if f.corner_flux(Topology::Snowball).is_some_and(|c| s < c) {
        out.push((true, 0.0, Topology::Snowball));
    }
    for topo in [Topology::PolarCap, Topology::EquatorialBelt] {
        let m = 4000;
        let xs: Vec<f64> = (1..m)
            .map(|k| 0.5 * (1.0 - (std::f64::consts::PI * k as f64 / m as f64).cos()))
            .collect();
        let q: Vec<Option<f64>> = xs
            .iter()
            .map(|&x| f.edge_state(topo, x).map(|e| e.flux))
            .collect();
        for k in 1..xs.len() {
            let (Some(a), Some(b)) = (q[k - 1], q[k]) else {
                continue;
            };
            if (a - s) * (b - s) < 0.0 {
                // bisection on Q(x) - s (Q continuous between the samples)
                let (mut xa, mut xb, mut fa) = (xs[k - 1], xs[k], a - s);
                while xb - xa > 1e-12 {
                    let xm = 0.5 * (xa + xb);
                    let fm = f.edge_state(topo, xm).map_or(f64::NAN, |e| e.flux) - s;
                    if fm * fa > 0.0 {
                        (xa, fa) = (xm, fm);
                    } else {
                        xb = xm;
                    }
                }
                let x = 0.5 * (xa + xb);
                // an equilibrium only where every cell is on its side of T_s
                let (_, cells) = f.edge_profile(topo, x).expect("a profile at a root");
                let ts = f.threshold();
                let consistent = cells.iter().all(|&(c, t)| {
                    let ice = match topo {
                        Topology::PolarCap => c > x,
                        _ => c < x,
                    };
                    if ice { t <= ts } else { t >= ts }
                });
                if !consistent {
                    continue;
                }
                let stable = f.stable(topo, x).expect("slope at a root");
                out.push((stable, x.asin().to_degrees(), topo));
            }
        }
    }
    out.sort_by(|a, b| a.1.total_cmp(&b.1));
    out
}

/// (stable, ice edge deg) of every traced state at `s`: crossings of p = s
/// between consecutive points of each branch.
fn traced(h: &Hysteresis, s: f64) -> Vec<(bool, f64)> {
    let mut out = Vec::new();
    for b in &h.branches {
        for w in b.points.windows(2) {
            let (p, q) = (&w[0], &w[1]);
            if (p.p - s) * (q.p - s) < 0.0 {
                assert_eq!(
                    p.unstable_modes, q.unstable_modes,
                    "a stability change between points at {s}"
                );
                let r = (s - p.p) / (q.p - p.p);
                let e0 = p.diagnostics.ice_edge_north_deg;
                let e1 = q.diagnostics.ice_edge_north_deg;
                out.push((p.unstable_modes == 0, e0 + r * (e1 - e0)));
            }
        }
    }
    out.sort_by(|a, b| a.1.total_cmp(&b.1));
    out
}

fn folds(h: &Hysteresis) -> Vec<f64> {
    h.branches
        .iter()
        .flat_map(|b| b.folds.iter().map(|f| f.point.p))
        .collect()
}

/// How far (relative, in flux) a traced cap or belt point may lie from the
/// enumerated family at its edge: two second-order discretisations with
/// twice 30 or 45 cells per hemisphere, which differ most where a region vanishes
/// (the traced one then keeps only the other regions' cells); a few times
/// their largest difference over these sets, 1.1e-4 (common practice, no
/// source).
const POINT_TOLERANCE: f64 = 3e-4;

#[test]
fn traced_states_equal_the_enumerated_ones() {
    let mut r = Lcg(20261202);
    let (mut probes_checked, mut points_checked, mut paths_checked) = (0, 0, 0);
    let mut worst = 0.0f64;
    for i in 0..20 {
        let (m, sets) = random_model(&mut r, i);
        let mut fam = EdgeFamilies::new(&m, REFINE * m.len()).unwrap();
        let sk = fam.folds(400);
        let lo = sk.iter().map(|f| f.flux).fold(f64::INFINITY, f64::min) * 0.97;
        let hi = sk.iter().map(|f| f.flux).fold(0.0f64, f64::max) * 1.03;
        let opts = TraceOptions {
            integrate_jumps: false,
            sensitivities: false,
            ..TraceOptions::default()
        };
        let h = trace_all(&m, Param::Flux, lo, hi, 30.0, -40.0, &opts, &mut |_| {});
        let mut first_probe = None;
        let mut near: Vec<f64> = folds(&h);
        near.extend(sk.iter().map(|f| f.flux));
        for k in 1..12 {
            // off the seed values (ninths of the range), where points sit
            let s = lo + (hi - lo) * (k as f64 + 0.37) / 12.0;
            if near.iter().any(|f| (f - s).abs() < 0.5) {
                continue;
            }
            let want = enumerated(&mut fam, s);
            let got = traced(&h, s);
            assert_eq!(
                got.len(),
                want.len(),
                "set {i} {sets:?} at S0 = {s}: traced {got:?}, enumerated {want:?}"
            );
            for (g, w) in got.iter().zip(&want) {
                assert_eq!(
                    g.0, w.0,
                    "set {i} {sets:?} at {s}: stability {got:?} vs {want:?}"
                );
                // edges: sorted alike; each checked at the traced points
                // below (a chord between points is no place to check one)
                if matches!(w.2, Topology::IceFree | Topology::Snowball) {
                    assert_eq!(g.1, w.1, "set {i} {sets:?} at {s}: {got:?} vs {want:?}");
                }
            }
            probes_checked += 1;
            if first_probe.is_none() {
                first_probe = Some((s, want));
            }
        }
        // the same point reached by tracing another parameter: the states
        // there do not depend on the path (CO2 and diffusivity, continued in
        // their logarithm)
        if i < 8
            && let Some((s, want)) = first_probe
        {
            let mut at = m.clone();
            at.set_param(Param::Flux, s);
            // (obliquity passes too, but each of its steps rebuilds the
            // insolation table: a trace in it takes most of a minute)
            for (q, a, b) in [(Param::Co2, 0.6, 2.2), (Param::Diffusivity, 0.7, 1.6)] {
                let v = at.param(q);
                let h2 = trace_all(&at, q, a * v, b * v, 30.0, -40.0, &opts, &mut |_| {});
                let got = traced(&h2, v);
                let stab = |x: &[(bool, f64)]| x.iter().map(|e| e.0).collect::<Vec<_>>();
                let want_stab: Vec<bool> = want.iter().map(|e| e.0).collect();
                assert_eq!(
                    stab(&got),
                    want_stab,
                    "set {i} {sets:?}: at S0 = {s} traced in {} {got:?} vs enumerated {want:?}",
                    q.key()
                );
                paths_checked += 1;
            }
        }
        // every traced cap or belt point: the enumerated family at its edge
        // gives its flux, to the two discretisations' difference
        for b in &h.branches {
            for q in &b.points {
                let topo = match q.diagnostics.state {
                    State::PolarCaps => Topology::PolarCap,
                    State::EquatorialBelt => Topology::EquatorialBelt,
                    _ => continue,
                };
                let x = q.diagnostics.ice_edge_north_deg.to_radians().sin();
                let want = fam.edge_state(topo, x).map(|e| e.flux);
                if let Some(w) = want {
                    worst = worst.max((w - q.p).abs() / q.p);
                }
                assert!(
                    want.is_some_and(|w| (w - q.p).abs() < POINT_TOLERANCE * q.p),
                    "set {i} {sets:?}: traced {} at S0 = {} edge {} deg, family gives {want:?}",
                    topo.label(),
                    q.p,
                    q.diagnostics.ice_edge_north_deg
                );
                points_checked += 1;
            }
        }
    }
    eprintln!("largest relative flux difference of a traced point from its family: {worst:e}");
    assert!(
        probes_checked >= 100,
        "only {probes_checked} probes away from folds"
    );
    assert!(
        points_checked >= 500,
        "only {points_checked} traced cap or belt points"
    );
    assert_eq!(paths_checked, 8 * 2, "traces in other parameters");
}
