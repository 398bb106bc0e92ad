//! The jump at a fold, integrated from the nudged fold state, against
//! independent long implicit integrations that ramp the parameter past the
//! fold from the stable state before it.
mod common;

use icefold::analysis::branches::{Fold, Hysteresis, TraceOptions, TracedBranch, trace_all};
use icefold::analysis::jumps::{
    JumpOptions, JumpOutcome, jump_from_fold, nudge_direction, vanishing_mode,
};
use icefold::io::scenario::{DEFAULT_NAME, DEFAULT_SCENARIO, Scenario};
use icefold::model::climate::State;
use icefold::model::{Model, Param};
use icefold::numerics::linalg::Tridiagonal;
use icefold::numerics::newton::{NewtonOptions, Steady, Workspace, newton};

const LO: f64 = 1100.0;
const HI: f64 = 1900.0;
const WIDTH: f64 = HI - LO;

fn default_model() -> Model {
    Scenario::parse(DEFAULT_SCENARIO, DEFAULT_NAME, &[])
        .unwrap()
        .model()
}

fn trace(m: &Model) -> Hysteresis {
    trace_all(
        m,
        Param::Flux,
        LO,
        HI,
        30.0,
        -60.0,
        &TraceOptions::default(),
        &mut |_| {},
    )
}

/// The fold whose stable neighbour is in `from` and the stable neighbour.
fn fold_from(h: &Hysteresis, from: State) -> (&TracedBranch, &Fold) {
    h.branches
        .iter()
        .flat_map(|b| b.folds.iter().map(move |f| (b, f)))
        .filter(|(_, f)| f.from_state == from)
        // out of polar caps: the large-cap (snowball-entry) fold, the lowest;
        // out of the snowball: its melt, the highest
        .min_by(|a, b| {
            let (pa, pb) = (a.1.point.p, b.1.point.p);
            if from == State::Snowball {
                pb.total_cmp(&pa)
            } else {
                pa.total_cmp(&pb)
            }
        })
        .unwrap_or_else(|| panic!("no fold out of {from:?}"))
}

/// The nearest stable point to the fold on its branch, within three points.
fn stable_neighbour(b: &TracedBranch, f: &Fold) -> (f64, Vec<f64>) {
    let k = f.after;
    let q = (0..=3)
        .flat_map(|d| [k.checked_sub(d), Some(k + 1 + d)])
        .flatten()
        .filter_map(|j| b.points.get(j))
        .find(|q| q.unstable_modes == 0 && q.p != f.point.p)
        .unwrap();
    (q.p, q.temperature.clone())
}

fn polish(m: &Model, t: &mut [f64]) {
    let mut ws = Workspace::new(m);
    newton(m, t, &NewtonOptions::default(), &mut ws).unwrap();
}

/// One fully implicit (backward) Euler step of C dT/dt = F(T) as a steady
/// problem for Newton: G(T) = F(T) - C (T - Tⁿ)/Δt = 0, ∂G/∂T = J - C/Δt.
/// Unlike the linearly implicit steps of the jump integration, every step
/// is solved to convergence, so a kink of F (the sub-grid ice edge) cannot
/// trap it in a two-step cycle.
struct BackwardEuler<'a> {
    model: &'a Model,
    prev: Vec<f64>,
    dt: f64,
}

impl Steady for BackwardEuler<'_> {
    fn len(&self) -> usize {
        self.model.len()
    }
    fn evaluate(&self, t: &[f64], f: &mut [f64], mut jac: Option<&mut Tridiagonal>) {
        self.model.evaluate(t, f, jac.as_deref_mut());
        let cap = &self.model.planet.heat_capacity;
        for i in 0..t.len() {
            f[i] -= cap[i] * (t[i] - self.prev[i]) / self.dt;
        }
        if let Some(j) = jac {
            for (d, c) in j.diag.iter_mut().zip(cap) {
                *d -= c / self.dt;
            }
        }
    }
    fn new_jacobian(&self) -> Tridiagonal {
        self.model.new_jacobian()
    }
    fn heat_capacity(&self) -> &[f64] {
        &self.model.planet.heat_capacity
    }
}

/// One backward-Euler step of `dt` years; where Newton does not converge
/// (the step would cross a kink of F), two steps of dt/2 instead, down to
/// 1e-7 years.
fn backward_euler_step(m: &Model, t: &mut [f64], dt: f64, ws: &mut Workspace) {
    let step = BackwardEuler {
        model: m,
        prev: t.to_vec(),
        dt,
    };
    if newton(&step, t, &NewtonOptions::default(), ws).is_err() {
        assert!(dt > 1e-7, "backward Euler failed at the smallest step");
        t.copy_from_slice(&step.prev);
        backward_euler_step(m, t, 0.5 * dt, ws);
        backward_euler_step(m, t, 0.5 * dt, ws);
    }
}

/// The independent reference: from the stable state (p_s, T_s) before the
/// fold, ramp the parameter linearly to `p_end` over 100 years in fixed
/// 0.05-year backward-Euler steps, then hold it and step 0.5 years at a
/// time for up to 8000 years until the change is below 1e-10 K per year,
/// and polish by Newton.
fn ramp_and_hold(m: &Model, p_s: f64, t_s: &[f64], p_end: f64) -> Vec<f64> {
    let mut m = m.clone();
    let mut ws = Workspace::new(&m);
    let mut t = t_s.to_vec();
    let steps = 2000;
    for k in 1..=steps {
        m.set_param(Param::Flux, p_s + (p_end - p_s) * k as f64 / steps as f64);
        backward_euler_step(&m, &mut t, 0.05, &mut ws);
    }
    m.set_param(Param::Flux, p_end);
    let mut settled = false;
    for _ in 0..16_000 {
        let before = t.clone();
        backward_euler_step(&m, &mut t, 0.5, &mut ws);
        if max_diff(&before, &t) / 0.5 < 1e-10 {
            settled = true;
            break;
        }
    }
    assert!(
        settled,
        "the reference integration did not settle in 8000 years"
    );
    polish(&m, &mut t);
    t
}

fn jump(m: &Model, b: &TracedBranch, f: &Fold, opts: &JumpOptions) -> JumpOutcome {
    let (p_s, t_s) = stable_neighbour(b, f);
    let mut mf = m.clone();
    mf.set_param(Param::Flux, f.point.p);
    let null = vanishing_mode(&mf, &f.point.temperature).unwrap();
    let dir = nudge_direction(&f.point.temperature, &null, &t_s).unwrap();
    let lost = if p_s > f.point.p { -1.0 } else { 1.0 };
    jump_from_fold(
        m,
        Param::Flux,
        f.point.p,
        &f.point.temperature,
        &dir,
        lost,
        (LO, HI),
        opts,
    )
    .unwrap()
}

fn max_diff(a: &[f64], b: &[f64]) -> f64 {
    a.iter()
        .zip(b)
        .map(|(x, y)| (x - y).abs())
        .fold(0.0, f64::max)
}

/// Both targets are Newton-polished to max |F| < 1e-10 W m-2 at a stable
/// equilibrium whose slowest decay rate is of order B/C (B = 2.09 W m-2
/// K-1), so each is within ~1e-10 K of the exact one; 1e-6 K leaves room
/// for conditioning, while two different equilibria differ by kelvins.
const SAME_K: f64 = 1e-6;

/// At the large-cap fold the planet falls into the snowball; at the
/// snowball-melt fold it lands on a warm state. Both targets equal, band by
/// band, the end of an independent ramp-and-hold integration to 1e-3 of
/// the range past the fold (the fold is a saddle-node; past it the only
/// attractor nearby in that direction is the target: common practice, no
/// source).
fn check_scenario(m: &Model) {
    let h = trace(m);
    let opts = JumpOptions {
        offset: 1e-3,
        ..JumpOptions::default()
    };
    for (from, want_warm) in [(State::PolarCaps, false), (State::Snowball, true)] {
        let (b, f) = fold_from(&h, from);
        let j = jump(m, b, f, &opts);
        let state = j.point.diagnostics.state;
        if want_warm {
            assert!(
                matches!(state, State::IceFree | State::PolarCaps),
                "melt lands on {state:?}"
            );
        } else {
            assert_eq!(state, State::Snowball);
        }
        assert_eq!(j.point.unstable_modes, 0);
        let (p_s, t_s) = stable_neighbour(b, f);
        let reference = ramp_and_hold(m, p_s, &t_s, j.point.p);
        let d = max_diff(&reference, &j.point.temperature);
        eprintln!(
            "{from:?} fold at {:.6}: jump to {state:?} (global mean {:.3} C) in {:.1} years; reference differs by {d:.2e} K",
            f.point.p, j.point.diagnostics.global_mean_c, j.years
        );
        assert!(d < SAME_K, "{from:?}: {d} K from the long integration");
        // what trace_all reports is the same integration at offset 1e-4
        let traced = f.jump_to.as_ref().unwrap();
        assert_eq!(traced.diagnostics.state, state);
        assert!((traced.p - f.point.p).abs() < 1.01e-4 * WIDTH);
        assert!(f.jump_note.is_none(), "{:?}", f.jump_note);
        assert!(f.jump_years.is_some_and(|y| y > 0.0));
    }
}

#[test]
fn default_scenario_jumps_match_long_integrations() {
    check_scenario(&default_model());
}

#[test]
fn classic_scenario_jumps_match_long_integrations() {
    check_scenario(&common::classic(&[]));
}

/// Nudged the other way (towards the stable segment) at a parameter on the
/// side where it still exists, the state returns to the stable equilibrium
/// next to the fold, found by Newton from the traced stable neighbour
/// (below a saddle-node the node attracts the side of the mode facing it:
/// common practice, no source).
#[test]
fn nudge_towards_the_stable_side_returns_to_it() {
    let m = default_model();
    let h = trace(&m);
    // the snowball melt is a corner (the equator reaches T_s; with the ice
    // edges as unknowns it is an exact topology change, not a saddle-node):
    // its basin boundary passes through the corner itself, so only the
    // smooth large-cap fold has a side to return to
    {
        let from = State::PolarCaps;
        let (b, f) = fold_from(&h, from);
        let (p_s, t_s) = stable_neighbour(b, f);
        let mut mf = m.clone();
        mf.set_param(Param::Flux, f.point.p);
        let null = vanishing_mode(&mf, &f.point.temperature).unwrap();
        let away = nudge_direction(&f.point.temperature, &null, &t_s).unwrap();
        let towards: Vec<f64> = away.iter().map(|v| -v).collect();
        let existing = if p_s > f.point.p { 1.0 } else { -1.0 };
        let opts = JumpOptions {
            offset: 1e-3,
            ..JumpOptions::default()
        };
        let back = jump_from_fold(
            &m,
            Param::Flux,
            f.point.p,
            &f.point.temperature,
            &towards,
            existing,
            (LO, HI),
            &opts,
        )
        .unwrap();
        assert_eq!(back.point.diagnostics.state, from);
        let mut ms = m.clone();
        ms.set_param(Param::Flux, back.point.p);
        let mut expect = t_s.clone();
        polish(&ms, &mut expect);
        let d = max_diff(&expect, &back.point.temperature);
        assert!(d < SAME_K, "{from:?}: {d} K from the stable branch");
        // and the correct direction on the lost side leaves that climate
        let gone = jump(&m, b, f, &opts);
        assert_ne!(gone.point.diagnostics.state, from);
    }
}

/// The same input gives the same jump, bit for bit (the integration has no
/// hidden state).
#[test]
fn jumps_are_deterministic() {
    let m = common::classic(&[]);
    let h = trace(&m);
    let (b, f) = fold_from(&h, State::PolarCaps);
    let opts = JumpOptions::default();
    let a = jump(&m, b, f, &opts);
    let c = jump(&m, b, f, &opts);
    assert_eq!(a.point.temperature, c.point.temperature);
    assert_eq!(a.years.to_bits(), c.years.to_bits());
    assert_eq!(a.steps, c.steps);
}

/// A CO2 trace from 1 ppm (log scale): the large-cap fold near 3 ppm is
/// stepped past by a factor exp(±1e-4 ln(1e5)), not by 1e-4 of the range in
/// ppm (which would ask for a negative CO2), so its jump is integrated and
/// lands in the snowball, the only attractor below the fold (common
/// practice, no source); the step is the multiplicative one.
#[test]
fn co2_jump_near_the_low_end_of_a_log_range_is_integrated() {
    use icefold::analysis::jumps::past_fold;
    let m = default_model();
    let (lo, hi) = (1.0, 1e5);
    let h = trace_all(
        &m,
        Param::Co2,
        lo,
        hi,
        30.0,
        -60.0,
        &TraceOptions {
            sensitivities: false,
            ..TraceOptions::default()
        },
        &mut |_| {},
    );
    let f = h
        .branches
        .iter()
        .flat_map(|b| b.folds.iter())
        .filter(|f| f.point.p < 100.0)
        .min_by(|a, b| a.point.p.total_cmp(&b.point.p))
        .expect("a fold below 100 ppm");
    assert!(f.jump_note.is_none(), "{:?}", f.jump_note);
    let to = f.jump_to.as_ref().expect("an integrated jump");
    assert_eq!(to.diagnostics.state, State::Snowball);
    let expected = past_fold(Param::Co2, f.point.p, -1.0, 1e-4, (lo, hi));
    assert!(expected > 0.0 && expected < f.point.p);
    assert!(
        (to.p - expected).abs() < 1e-12 * expected,
        "{} vs {expected}",
        to.p
    );
    // a flux (linear) step is unchanged: p_f ± offset · width
    assert_eq!(
        past_fold(Param::Flux, 1300.0, 1.0, 1e-4, (1000.0, 1500.0)),
        1300.0 + 1e-4 * 500.0
    );
}
