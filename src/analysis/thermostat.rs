//! The carbonate-silicate thermostat on the traced fast climate: slow
//! equilibria and the snowball limit cycle.
//!
//! The planet is a fast-slow system (Walker, Hays & Kasting 1981; Menou
//! 2015, EPSL 429, 20; Abbot 2016, ApJ 827, 117):
//!
//! ```text
//! C dT/dt = F(T; P)                 (decades: the energy-balance model)
//! dP/dt   = k (V - W(T, P))         (1e5-1e7 years: the CO2 budget)
//! ```
//!
//! with W the weathering law of [`crate::physics::weathering`]. Because the
//! fast climate relaxes in decades, on the slow time scale it sits on a
//! stable branch T*(P) of F(T; P) = 0 (it is slaved), and the slow flow
//! runs along the branches of a trace in CO2 ([`crate::trace_all`] in
//! [`Param::Co2`], which continues in ln CO2):
//!
//! - **Slow equilibria** are the points of a branch where W = V. They are
//!   located between the traced points where W - V changes sign and
//!   refined by a bracketed root find (Illinois regula falsi) in ln P,
//!   each trial an exact fast solve (Newton on the annual-mean residual at
//!   that CO2, from the branch interpolated there). Each is fast-stable
//!   when the branch is (no unstable mode) and slow-stable where
//!   d(V - W)/dP < 0 along the branch, dW/dP = dW/ds / dP/ds including the
//!   response of the fast climate (the slope between the two traced points
//!   that bracket it).
//! - **The limit cycle.** If no slow equilibrium lies on a stable fast
//!   branch, CO2 moves along the stable branches at dP/dt = k (V - W),
//!   jumping at the fold that ends each (to the nearest stable climate in
//!   the direction of the jump, as [`crate::analysis::branches`] does). In
//!   the cycle of Menou (2015) and Abbot (2016) CO2 rises in the snowball
//!   (W = 0) from the warm branch's low-CO2 fold P_w to the snowball's
//!   fold P_s, the planet deglaciates, and CO2 falls along the warm branch
//!   back to P_w. Its period is the sum over the legs of
//!   ∫ dP / (k (V - W)), by the trapezoid rule in ln P along the traced
//!   points (P / (k (V - W)) d ln P) and the fold that ends the leg; the
//!   integrand stays finite at the folds because V - W ≠ 0 there.

use crate::analysis::branches::{Hysteresis, TracedBranch, TracedPoint};
use crate::model::climate::{State, diagnose};
use crate::model::{Model, Param};
use crate::numerics::continuation::EndReason;
use crate::numerics::newton::{NewtonOptions, Workspace, newton, unstable_modes};
use crate::physics::weathering::{PPM_PER_YEAR_PER_BAR_GYR, Weathering};

/// W of the fast state `t` (°C per band) at CO2 `co2_ppm`, bar Gyr-1:
/// [`Weathering::rate`] of the open surface of `t`
/// ([`Model::open_surface`]). Allocates nothing.
pub fn weathering_of(model: &Model, law: &Weathering, t: &[f64], co2_ppm: f64) -> f64 {
    let (open, mean) = model.open_surface(t);
    law.rate(mean, open, co2_ppm)
}

/// One state of a traced branch as the slow flow sees it.
#[derive(Clone, Debug)]
struct Node {
    p: f64,
    w: f64,
    global_mean_c: f64,
    ice: f64,
    ice_edge_deg: f64,
    state: State,
    unstable: usize,
    temperature: Vec<f64>,
}

/// How a stable segment ends at its low or high CO2 end.
#[derive(Clone, Debug, PartialEq)]
enum Cap {
    /// At a fold (the stable climate ends): the planet jumps.
    Fold,
    /// At the end of the traced range.
    Range,
    /// The branch ended there for another reason (stated).
    Lost(String),
}

/// A maximal run of fast-stable states with CO2 monotone, ascending in CO2.
#[derive(Clone, Debug)]
struct Segment {
    branch: usize,
    nodes: Vec<Node>,
    low: Cap,
    high: Cap,
}

impl Segment {
    fn contains(&self, p: f64) -> bool {
        p >= self.nodes[0].p && p <= self.nodes[self.nodes.len() - 1].p
    }

    /// Index k with nodes[k].p <= p <= nodes[k + 1].p and the weight r of
    /// k + 1 in ln P.
    fn locate(&self, p: f64) -> (usize, f64) {
        let n = self.nodes.len();
        if n == 1 {
            return (0, 0.0);
        }
        let mut k = 0;
        while k + 2 < n && self.nodes[k + 1].p < p {
            k += 1;
        }
        let (a, b) = (self.nodes[k].p.ln(), self.nodes[k + 1].p.ln());
        let r = if b > a {
            ((p.ln() - a) / (b - a)).clamp(0.0, 1.0)
        } else {
            0.0
        };
        (k, r)
    }

    /// The state at CO2 p, interpolated linearly in ln P.
    fn at(&self, p: f64) -> CyclePoint {
        let (k, r) = self.locate(p);
        let a = &self.nodes[k];
        let b = self.nodes.get(k + 1).unwrap_or(a);
        let lerp = |x: f64, y: f64| x + r * (y - x);
        CyclePoint {
            time_yr: 0.0,
            co2_ppm: p,
            global_mean_c: lerp(a.global_mean_c, b.global_mean_c),
            ice_area_fraction: lerp(a.ice, b.ice).clamp(0.0, 1.0),
            weathering: lerp(a.w, b.w).max(0.0),
            state: if r < 0.5 { a.state } else { b.state },
        }
    }
}

/// A slow equilibrium W = V on a traced branch.
#[derive(Clone, Debug)]
pub struct SlowEquilibrium {
    /// The branch it lies on (1-based, as in the trace).
    pub branch: usize,
    /// CO2, ppm.
    pub co2_ppm: f64,
    /// Global-mean temperature, °C.
    pub global_mean_c: f64,
    /// Ice area fraction.
    pub ice_area_fraction: f64,
    /// The fast climate's state.
    pub state: State,
    /// Unstable modes of the fast climate (0: fast-stable).
    pub unstable_modes: usize,
    /// Whether the fast climate is stable.
    pub fast_stable: bool,
    /// dW/dP along the branch (fast response included), bar Gyr-1 ppm-1.
    pub dw_dp: f64,
    /// Slow stability: d(V - W)/dP < 0, i.e. dW/dP > 0.
    pub slow_stable: bool,
    /// Whether the exact fast solve refined it (otherwise it is the
    /// interpolation between the traced points).
    pub refined: bool,
    /// The fast climate, °C per band.
    pub temperature: Vec<f64>,
}

/// One traced state as the slow flow sees it (a fold counts as unstable).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CurvePoint {
    /// CO2, ppm.
    pub co2_ppm: f64,
    /// Global-mean temperature, °C.
    pub global_mean_c: f64,
    /// Weathering W, bar Gyr-1.
    pub weathering: f64,
    /// The northern hemisphere's most poleward ice edge, deg.
    pub ice_edge_deg: f64,
    /// Fast-stable (no unstable mode; folds are not).
    pub stable: bool,
    /// State of the fast climate.
    pub state: State,
}

/// One sample of the limit cycle.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CyclePoint {
    /// Time since the start of the cycle, years.
    pub time_yr: f64,
    /// CO2, ppm.
    pub co2_ppm: f64,
    /// Global-mean temperature, °C.
    pub global_mean_c: f64,
    /// Ice area fraction.
    pub ice_area_fraction: f64,
    /// Weathering, bar Gyr-1.
    pub weathering: f64,
    /// State of the fast climate.
    pub state: State,
}

/// The slaved limit cycle.
#[derive(Clone, Debug)]
pub struct LimitCycle {
    /// Period, years.
    pub period_yr: f64,
    /// Time spent in a snowball per cycle, years.
    pub snowball_yr: f64,
    /// Lowest and highest CO2 of the cycle, ppm (the folds it jumps at).
    pub co2_range_ppm: (f64, f64),
    /// Lowest and highest global-mean temperature, °C.
    pub temperature_range_c: (f64, f64),
    /// The cycle, from its first jump (two samples at the same time at
    /// each jump: before and after).
    pub points: Vec<CyclePoint>,
    /// The CO2 of every jump and the states it joins, in cycle order.
    pub jumps: Vec<(f64, State, State)>,
}

/// What the slow flow does for one outgassing rate.
#[derive(Clone, Debug)]
pub enum Outcome {
    /// It settles at a slow equilibrium on a stable fast branch (the
    /// indices into [`SlowAnalysis::equilibria`] of the stable ones).
    Settles(Vec<usize>),
    /// No slow equilibrium is stable: the limit cycle.
    Cycles(LimitCycle),
    /// CO2 runs out of the traced range along a stable branch, at the end
    /// given (ppm): widen the range.
    LeavesRange(f64),
}

/// The slow analysis for one outgassing rate.
#[derive(Clone, Debug)]
pub struct SlowAnalysis {
    /// V, bar Gyr-1.
    pub outgassing: f64,
    /// Every slow equilibrium on every traced branch, by branch and CO2.
    pub equilibria: Vec<SlowEquilibrium>,
    /// What the planet does.
    pub outcome: Outcome,
    /// Exact fast solves (Newton at one CO2) used to refine equilibria.
    pub fast_solves: usize,
}

/// Why the slow analysis failed.
#[derive(Debug, Clone, thiserror::Error, PartialEq)]
pub enum ThermostatError {
    /// The trace is not in CO2.
    #[error("the trace varies {0}, not radiation.co2_ppm")]
    NotCo2(String),
    /// No stable climate was traced.
    #[error("no stable climate was traced in the CO2 range")]
    NoStable,
    /// The walk along the stable branches could not go on.
    #[error("the slow flow cannot be followed at CO2 = {co2_ppm} ppm: {reason}")]
    Lost {
        /// Where.
        co2_ppm: f64,
        /// Why.
        reason: String,
    },
}

/// The traced fast climate with W evaluated at every state: built once,
/// then asked for any outgassing rate.
#[derive(Clone, Debug)]
pub struct Thermostat {
    law: Weathering,
    /// Every branch as nodes (points with the folds inserted), in branch
    /// order, with its id.
    branches: Vec<(usize, Vec<Node>)>,
    segments: Vec<Segment>,
    model: Model,
    newton: NewtonOptions,
    /// Traced states (each a converged fast equilibrium).
    pub traced_states: usize,
}

/// W of a traced state: its ice fraction from the trace's own diagnostics
/// (exact for the ice edges as unknowns, so that a snowball and the corner
/// where it melts weather at exactly 0), its open-surface temperature from
/// the band profile ([`Model::open_surface`]; the warmest band where the
/// profile shows no open band although the trace has open surface).
fn traced_weathering(model: &Model, law: &Weathering, t: &[f64], p: f64, ice: f64) -> f64 {
    let (open, mean) = model.open_surface(t);
    let mean = if open > 0.0 {
        mean
    } else {
        t.iter().copied().fold(f64::NEG_INFINITY, f64::max)
    };
    law.rate(mean, 1.0 - ice.clamp(0.0, 1.0), p)
}

fn node(model: &Model, law: &Weathering, q: &TracedPoint, unstable: usize) -> Node {
    let d = &q.diagnostics;
    Node {
        p: q.p,
        w: traced_weathering(model, law, &q.temperature, q.p, d.ice_area_fraction),
        global_mean_c: d.global_mean_c,
        ice: d.ice_area_fraction,
        ice_edge_deg: d.ice_edge_north_deg,
        state: d.state,
        unstable,
        temperature: q.temperature.clone(),
    }
}

fn branch_nodes(model: &Model, law: &Weathering, b: &TracedBranch) -> Vec<Node> {
    let mut out = Vec::with_capacity(b.points.len() + b.folds.len());
    for (i, q) in b.points.iter().enumerate() {
        out.push(node(model, law, q, q.unstable_modes));
        for f in b.folds.iter().filter(|f| f.after == i) {
            // a fold sits between points i and i + 1; marked so that it
            // bounds the stable runs on either side
            out.push(node(model, law, &f.point, usize::MAX));
        }
    }
    out
}

/// The stable segments of one branch (nodes with `unstable == usize::MAX`
/// are folds: they end the runs beside them and are shared by both).
fn segments_of(id: usize, nodes: &[Node], ends: &[EndReason; 2]) -> Vec<Segment> {
    let m = nodes.len();
    let stable = |k: usize| nodes[k].unstable == 0;
    let mut out = Vec::new();
    let mut k = 0;
    while k < m {
        if !stable(k) {
            k += 1;
            continue;
        }
        let start = k;
        let mut e = k;
        // extend while stable and CO2 keeps its direction
        while e + 1 < m && stable(e + 1) {
            let dir = |a: usize, b: usize| (nodes[b].p - nodes[a].p).signum();
            if e > start && dir(e, e + 1) != dir(start, start + 1) {
                break;
            }
            e += 1;
        }
        let cap = |at: usize, outward: isize| -> (Cap, Option<Node>) {
            let nb = at as isize + outward;
            if nb < 0 || nb as usize >= m {
                let r = &ends[usize::from(outward > 0)];
                return match r {
                    EndReason::Bound(_) => (Cap::Range, None),
                    other => (Cap::Lost(other.to_string()), None),
                };
            }
            let nb = nb as usize;
            let fold = (nodes[nb].unstable == usize::MAX).then(|| nodes[nb].clone());
            (Cap::Fold, fold)
        };
        let (first, before) = cap(start, -1);
        let (last, after) = cap(e, 1);
        let mut run: Vec<Node> = before.into_iter().collect();
        run.extend(nodes[start..=e].iter().cloned());
        run.extend(after);
        let (mut low, mut high) = (first, last);
        if run.len() > 1 && run[0].p > run[run.len() - 1].p {
            run.reverse();
            std::mem::swap(&mut low, &mut high);
        }
        out.push(Segment {
            branch: id,
            nodes: run,
            low,
            high,
        });
        k = e + 1;
    }
    out
}

impl Thermostat {
    /// Evaluates W along every branch of `h` (a trace of `model` in CO2).
    pub fn new(
        model: &Model,
        h: &Hysteresis,
        law: Weathering,
        newton: NewtonOptions,
    ) -> Result<Thermostat, ThermostatError> {
        if h.param != Param::Co2 {
            return Err(ThermostatError::NotCo2(h.param.key().into()));
        }
        let mut branches = Vec::new();
        let mut segments = Vec::new();
        let mut traced = 0;
        for b in &h.branches {
            let nodes = branch_nodes(model, &law, b);
            traced += b.points.len() + b.folds.len();
            segments.extend(segments_of(b.id, &nodes, &b.ends));
            branches.push((b.id, nodes));
        }
        if segments.is_empty() {
            return Err(ThermostatError::NoStable);
        }
        Ok(Thermostat {
            law,
            branches,
            segments,
            model: model.clone(),
            newton,
            traced_states: traced,
        })
    }

    /// The weathering law.
    pub fn law(&self) -> &Weathering {
        &self.law
    }

    /// Every branch as (id, its states, folds included), for figures of the
    /// nullcline and for checks.
    pub fn branch_curves(&self) -> Vec<(usize, Vec<CurvePoint>)> {
        self.branches
            .iter()
            .map(|(id, nodes)| {
                let pts = nodes
                    .iter()
                    .map(|n| CurvePoint {
                        co2_ppm: n.p,
                        global_mean_c: n.global_mean_c,
                        weathering: n.w,
                        ice_edge_deg: n.ice_edge_deg,
                        stable: n.unstable == 0,
                        state: n.state,
                    })
                    .collect();
                (*id, pts)
            })
            .collect()
    }

    /// The slow equilibria and what the planet does for outgassing V
    /// (bar Gyr-1, > 0).
    pub fn analyse(&self, v: f64) -> Result<SlowAnalysis, ThermostatError> {
        let mut fast_solves = 0;
        let mut equilibria = Vec::new();
        for (id, nodes) in &self.branches {
            for k in 0..nodes.len().saturating_sub(1) {
                let (a, b) = (&nodes[k], &nodes[k + 1]);
                let (fa, fb) = (a.w - v, b.w - v);
                if !(fa * fb < 0.0 || (fb == 0.0 && fa != 0.0)) {
                    continue;
                }
                equilibria.push(self.refine(*id, a, b, v, &mut fast_solves));
            }
        }
        let stable: Vec<usize> = equilibria
            .iter()
            .enumerate()
            .filter(|(_, e)| e.fast_stable && e.slow_stable)
            .map(|(i, _)| i)
            .collect();
        let outcome = if !stable.is_empty() {
            Outcome::Settles(stable)
        } else {
            self.walk(v)?
        };
        Ok(SlowAnalysis {
            outgassing: v,
            equilibria,
            outcome,
            fast_solves,
        })
    }

    /// W = V between nodes a and b: Illinois regula falsi in ln P, each
    /// trial an exact fast solve started from the branch interpolated there.
    fn refine(&self, id: usize, a: &Node, b: &Node, v: f64, solves: &mut usize) -> SlowEquilibrium {
        let dw_dp = (b.w - a.w) / (b.p - a.p);
        let (la, lb) = (a.p.ln(), b.p.ln());
        let lerp_t = |s: f64| -> Vec<f64> {
            a.temperature
                .iter()
                .zip(&b.temperature)
                .map(|(x, y)| x + s * (y - x))
                .collect()
        };
        let spread = a
            .temperature
            .iter()
            .zip(&b.temperature)
            .fold(0.0f64, |m, (x, y)| m.max((x - y).abs()));
        let mut m = self.model.clone();
        let mut ws = Workspace::new(&m);
        let mut solve = |s: f64, solves: &mut usize| -> Option<(f64, Vec<f64>)> {
            let p = (la + s * (lb - la)).exp();
            m.set_param(Param::Co2, p);
            let start = lerp_t(s);
            let mut t = start.clone();
            *solves += 1;
            newton(&m, &mut t, &self.newton, &mut ws).ok()?;
            let dist = t
                .iter()
                .zip(&start)
                .fold(0.0f64, |d, (x, y)| d.max((x - y).abs()));
            // the solve must stay on this branch
            (dist <= (0.5 * spread).max(1.0)).then(|| (weathering_of(&m, &self.law, &t, p) - v, t))
        };
        // Illinois on s in [0, 1] with the traced values at the ends
        let (mut s0, mut f0, mut s1, mut f1) = (0.0, a.w - v, 1.0, b.w - v);
        let mut best: Option<(f64, Vec<f64>)> = None;
        let mut side = 0;
        for _ in 0..60 {
            let s = if f1 != f0 {
                (s0 - f0 * (s1 - s0) / (f1 - f0)).clamp(0.0, 1.0)
            } else {
                0.5 * (s0 + s1)
            };
            let Some((f, t)) = solve(s, solves) else {
                best = None;
                break;
            };
            let done = f.abs() <= 1e-12 * v || (s1 - s0).abs() < 1e-13;
            best = Some((s, t));
            if done {
                break;
            }
            if f * f1 < 0.0 {
                (s0, f0) = (s1, f1);
                (s1, f1) = (s, f);
                side = 0;
            } else {
                (s1, f1) = (s, f);
                side += 1;
                if side >= 2 {
                    f0 *= 0.5;
                }
            }
        }
        let (s, t, refined) = match best {
            Some((s, t)) => (s, t, true),
            None => {
                // interpolation between the traced points
                let s = if b.w != a.w {
                    ((v - a.w) / (b.w - a.w)).clamp(0.0, 1.0)
                } else {
                    0.5
                };
                (s, lerp_t(s), false)
            }
        };
        let p = (la + s * (lb - la)).exp();
        m.set_param(Param::Co2, p);
        let d = diagnose(&m, &t);
        let unstable = if refined {
            unstable_modes(&m, &t, &mut ws)
        } else {
            // the traced points' count (a fold node counts as its neighbour)
            [a.unstable, b.unstable]
                .into_iter()
                .filter(|u| *u != usize::MAX)
                .max()
                .unwrap_or(0)
        };
        SlowEquilibrium {
            branch: id,
            co2_ppm: p,
            global_mean_c: d.global_mean_c,
            ice_area_fraction: d.ice_area_fraction,
            state: d.state,
            unstable_modes: unstable,
            fast_stable: unstable == 0,
            dw_dp,
            slow_stable: dw_dp > 0.0,
            refined,
            temperature: t,
        }
    }

    /// Follows the slow flow along the stable segments, jumping at their
    /// folds, until a jump repeats (the limit cycle) or CO2 leaves the range.
    fn walk(&self, v: f64) -> Result<Outcome, ThermostatError> {
        let k = PPM_PER_YEAR_PER_BAR_GYR;
        // start in the snowball when there is one (W = 0 < V: CO2 rises)
        let start = self
            .segments
            .iter()
            .position(|s| s.nodes.iter().all(|n| n.state == State::Snowball))
            .unwrap_or(0);
        let mut seg = start;
        let mut p = self.segments[seg].nodes[0].p;
        let mut time = 0.0;
        let mut path: Vec<CyclePoint> = Vec::new();
        let mut entries: Vec<(usize, f64, usize)> = Vec::new();
        let mut jumps: Vec<(f64, State, State)> = Vec::new();
        for _ in 0..32 {
            let sg = &self.segments[seg];
            let here = sg.at(p);
            let rising = v - here.weathering > 0.0;
            // walk to the segment's end in the direction of the flow
            let (kk, _) = sg.locate(p);
            let order: Vec<usize> = if rising {
                (kk + 1..sg.nodes.len()).collect()
            } else {
                (0..=kk).rev().collect()
            };
            let mut prev = here;
            prev.time_yr = time;
            path.push(prev);
            for j in order {
                let n = &sg.nodes[j];
                if (rising && n.p <= prev.co2_ppm) || (!rising && n.p >= prev.co2_ppm) {
                    continue;
                }
                let (ga, gb) = (v - prev.weathering, v - n.w);
                if ga * gb <= 0.0 {
                    return Err(ThermostatError::Lost {
                        co2_ppm: n.p,
                        reason: "the flow meets W = V on a stable branch that no equilibrium was found on".into(),
                    });
                }
                time += leg_years(prev.co2_ppm, n.p, 1.0 / (k * ga), 1.0 / (k * gb));
                prev = CyclePoint {
                    time_yr: time,
                    co2_ppm: n.p,
                    global_mean_c: n.global_mean_c,
                    ice_area_fraction: n.ice.clamp(0.0, 1.0),
                    weathering: n.w.max(0.0),
                    state: n.state,
                };
                path.push(prev);
            }
            let cap = if rising { &sg.high } else { &sg.low };
            match cap {
                Cap::Range => return Ok(Outcome::LeavesRange(prev.co2_ppm)),
                Cap::Lost(why) => {
                    return Err(ThermostatError::Lost {
                        co2_ppm: prev.co2_ppm,
                        reason: format!("branch {} ended: {why}", sg.branch),
                    });
                }
                Cap::Fold => {}
            }
            // the jump: the nearest stable climate beyond the fold in the
            // direction the climate moves (cooling as CO2 falls)
            let pf = prev.co2_ppm;
            let tf = prev.global_mean_c;
            let target = self
                .segments
                .iter()
                .enumerate()
                .filter(|(i, s)| *i != seg && s.contains(pf))
                .map(|(i, s)| (i, s.at(pf)))
                .filter(|(_, c)| {
                    if rising {
                        c.global_mean_c > tf
                    } else {
                        c.global_mean_c < tf
                    }
                })
                .min_by(|x, y| {
                    let d = |c: &CyclePoint| (c.global_mean_c - tf).abs();
                    d(&x.1).total_cmp(&d(&y.1))
                });
            let Some((next, landing)) = target else {
                return Err(ThermostatError::Lost {
                    co2_ppm: pf,
                    reason: "no stable climate was traced beyond the fold".into(),
                });
            };
            jumps.push((pf, prev.state, landing.state));
            let at = path.len();
            if let Some(&(_, _, from)) = entries
                .iter()
                .find(|(s, q, _)| *s == next && (q.ln() - pf.ln()).abs() < 1e-9)
            {
                // the jump repeats: the cycle is the path since its first time
                let t0 = path[from].time_yr;
                let njump = entries.iter().position(|e| e.2 == from).unwrap_or(0);
                let mut points: Vec<CyclePoint> = path[from..].to_vec();
                for q in &mut points {
                    q.time_yr -= t0;
                }
                let mut last = landing;
                last.time_yr = time - t0;
                points.push(last);
                return Ok(Outcome::Cycles(summarise(
                    points,
                    jumps[njump + 1..].to_vec(),
                )));
            }
            entries.push((next, pf, at));
            seg = next;
            p = pf;
        }
        Err(ThermostatError::Lost {
            co2_ppm: p,
            reason: "the flow made 32 jumps without repeating one".into(),
        })
    }
}

/// ∫ dP h(P) from pa to pb with h = 1/(k (V - W)) linear in ln P between
/// its end values ha, hb (years): with x = ln P, L = xb - xa,
/// ∫ e^x h dx = ha (e^xb - e^xa) + (hb - ha)(e^xb (L - 1) + e^xa)/L,
/// exact where W is constant (the snowball, W = 0); the trapezoid rule in P
/// for steps below 1e-6 in ln P, where that form cancels.
pub fn leg_years(pa: f64, pb: f64, ha: f64, hb: f64) -> f64 {
    let l = pb.ln() - pa.ln();
    if l.abs() < 1e-6 {
        return 0.5 * (pb - pa) * (ha + hb);
    }
    ha * (pb - pa) + (hb - ha) * (pb * (l - 1.0) + pa) / l
}

fn summarise(points: Vec<CyclePoint>, jumps: Vec<(f64, State, State)>) -> LimitCycle {
    let period_yr = points.last().map_or(0.0, |q| q.time_yr);
    let snowball_yr = points
        .windows(2)
        .filter(|w| w[0].state == State::Snowball && w[1].state == State::Snowball)
        .map(|w| w[1].time_yr - w[0].time_yr)
        .sum();
    let range = |f: &dyn Fn(&CyclePoint) -> f64| {
        points
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), q| {
                (a.min(f(q)), b.max(f(q)))
            })
    };
    LimitCycle {
        period_yr,
        snowball_yr,
        co2_range_ppm: range(&|q| q.co2_ppm),
        temperature_range_c: range(&|q| q.global_mean_c),
        points,
        jumps,
    }
}
