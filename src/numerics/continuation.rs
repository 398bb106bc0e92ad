//! Pseudo-arclength continuation (Keller 1977) over any [`Problem`], with
//! fold location and stability along the branch.
//!
//! A branch is a curve (u(s), p(s)) of solutions of F(u, p) = 0 traced by
//! arclength s in the weighted norm ||(du, dp)||² = Σ du_i²/(n T²) + dp²/P².
//! Each step predicts along the unit tangent t = (t_u, t_p) and corrects with
//! Newton on the bordered system
//!
//! ```text
//! [ J       F_p    ] [du]   [ -F ]
//! [ W t_uᵀ  W_p t_p ] [dp] = [ -N ],   N = <t, (u, p) - predicted>_W,
//! ```
//!
//! solved by block elimination over the problem's own O(n) solver
//! (a = J⁻¹F, b = J⁻¹F_p) with one step of iterative refinement, which
//! keeps it accurate near folds where J is nearly singular.
//!
//! **Folds** are where t_p changes sign. Each is refined by the secant method
//! on the scalar fold condition t_p(s) = 0 along the branch, every trial point
//! being a fully corrected solution (max |F| below the tolerance), so the
//! fold is an equilibrium with a vanishing parameter component of the tangent,
//! i.e. a zero of the extended system {F = 0, J v = 0} with v = t_u.

use crate::numerics::linalg::Singular;
use crate::numerics::newton::max_abs;

/// What continuation needs from a problem: residual, an O(n) factor-solve
/// of its Jacobian, the parameter derivative, and stability.
pub trait Problem {
    /// State dimension n.
    fn dim(&self) -> usize;
    /// Sets the continuation parameter.
    fn set_param(&mut self, p: f64);
    /// F(u) at the current parameter.
    fn residual(&mut self, u: &[f64], f: &mut [f64]);
    /// Factors J(u) at the current parameter, keeping the factors; also
    /// writes F(u) into `f`.
    fn factor(&mut self, u: &[f64], f: &mut [f64]) -> Result<(), Singular>;
    /// Solves J x = b in place with the last factors.
    fn solve(&self, b: &mut [f64]);
    /// Solves J x = a and J y = b in place with the last factors (the same
    /// results as two calls of [`Problem::solve`]; a problem may overlap
    /// the two).
    fn solve_pair(&self, a: &mut [f64], b: &mut [f64]) {
        self.solve(a);
        self.solve(b);
    }
    /// Solves Jᵀ x = b in place with the last factors; false where the
    /// problem cannot (b is then left unspecified).
    fn solve_transpose(&self, _b: &mut [f64]) -> bool {
        false
    }
    /// y = J v with the last factored Jacobian.
    fn jac_mul(&self, v: &[f64], y: &mut [f64]);
    /// ∂F/∂p at u.
    fn d_param(&mut self, u: &[f64], out: &mut [f64]);
    /// Number of unstable modes at u (0 = stable).
    fn unstable_modes(&mut self, u: &[f64]) -> usize;
    /// A discrete label of the state (e.g. the ice topology). Where it
    /// changes between two points the residual may have a kink, so the step
    /// is shrunk until the change is pinned within a tiny arclength and no
    /// short segment between two nearby turning points is stepped over.
    fn label(&mut self, _u: &[f64]) -> u64 {
        0
    }
    /// How far u is inside the region where the problem is defined
    /// (positive inside, zero on its boundary): for an ice topology, where a
    /// region vanishes or a new one appears. Where a traced point's margin
    /// turns negative the branch ends at an [`EndReason::Event`], located
    /// on the curve where the margin vanishes. Continuous in u.
    fn margin(&mut self, _u: &[f64]) -> f64 {
        f64::INFINITY
    }
    /// The rounding level of max |F| at the last factored state: the
    /// corrector accepts a residual below max(tolerance, this), since no
    /// state represented in double precision does better.
    fn residual_floor(&self) -> f64 {
        0.0
    }
}

/// Continuation settings.
#[derive(Clone, Copy, Debug)]
pub struct Settings {
    /// Parameter bounds [lo, hi].
    pub lo: f64,
    /// Upper bound.
    pub hi: f64,
    /// Temperature scale T of the arclength norm, K.
    pub state_scale: f64,
    /// Parameter scale P of the arclength norm.
    pub param_scale: f64,
    /// First, smallest and largest arclength step.
    pub ds0: f64,
    /// Smallest step before the branch is abandoned.
    pub ds_min: f64,
    /// Largest step.
    pub ds_max: f64,
    /// Corrector tolerance on max |F|.
    pub tolerance: f64,
    /// Point limit per direction.
    pub max_points: usize,
}

impl Settings {
    /// Defaults for a range [lo, hi].
    pub fn for_range(lo: f64, hi: f64) -> Settings {
        let w = (hi - lo).abs().max(1e-12);
        Settings {
            lo,
            hi,
            state_scale: 10.0,
            param_scale: w / 10.0,
            ds0: 0.05,
            ds_min: 1e-7,
            ds_max: 0.4,
            tolerance: 1e-10,
            max_points: 4000,
        }
    }
}

/// One point on a branch.
#[derive(Clone, Debug)]
pub struct Point {
    /// Parameter value.
    pub p: f64,
    /// State.
    pub u: Vec<f64>,
    /// Unit tangent, state part (weighted norm).
    pub tu: Vec<f64>,
    /// Unit tangent, parameter part.
    pub tp: f64,
    /// Max |F| at the point.
    pub residual: f64,
    /// Unstable modes.
    pub unstable_modes: usize,
}

/// A located fold.
#[derive(Clone, Debug)]
pub struct FoldPoint {
    /// The fold itself (tp ≈ 0).
    pub point: Point,
    /// Index of the branch point after which the fold lies.
    pub after: usize,
}

/// Why a branch direction ended.
#[derive(Clone, Debug, PartialEq)]
pub enum EndReason {
    /// Reached a parameter bound.
    Bound(f64),
    /// Corrector failed at the minimum step.
    StepTooSmall {
        /// Parameter where it failed.
        p: f64,
        /// Residual reached.
        residual: f64,
    },
    /// Point limit reached.
    PointLimit,
    /// The problem's margin vanished: the branch leaves the region where
    /// the problem is defined (e.g. an ice topology changes) at p.
    Event(f64),
    /// The branch came back onto points it had already traced (a closed
    /// loop of equilibria).
    Loop(f64),
    /// Beyond p the states fall below absolute zero (not climates; the
    /// branch is cut there).
    Unphysical(f64),
}

impl std::fmt::Display for EndReason {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            EndReason::Bound(p) => write!(f, "reached the bound {p}"),
            EndReason::StepTooSmall { p, residual } => {
                write!(
                    f,
                    "corrector failed at the minimum step near p = {p} (max |F| = {residual:e})"
                )
            }
            EndReason::PointLimit => write!(f, "point limit reached"),
            EndReason::Event(p) => write!(f, "the ice topology changes at p = {p}"),
            EndReason::Loop(p) => write!(f, "closed loop: came back to p = {p}"),
            EndReason::Unphysical(p) => write!(
                f,
                "cut at p = {p}: beyond it the states fall below absolute zero"
            ),
        }
    }
}

/// A traced branch, ordered by arclength.
#[derive(Clone, Debug)]
pub struct Branch {
    /// Points in order.
    pub points: Vec<Point>,
    /// Folds, in order along the branch.
    pub folds: Vec<FoldPoint>,
    /// How each end finished (start end, finish end).
    pub ends: [EndReason; 2],
}

/// Workspace: vectors allocated once per branch.
struct Ws {
    /// (u, p) of the factors the problem holds, so a tangent right after a
    /// converged correction reuses them.
    last_u: Vec<f64>,
    last_p: f64,
    last_valid: bool,
    f: Vec<f64>,
    fp: Vec<f64>,
    a: Vec<f64>,
    b: Vec<f64>,
    r: Vec<f64>,
    tmp: Vec<f64>,
}

impl Ws {
    fn new(n: usize) -> Ws {
        Ws {
            last_u: vec![0.0; n],
            last_p: f64::NAN,
            last_valid: false,
            f: vec![0.0; n],
            fp: vec![0.0; n],
            a: vec![0.0; n],
            b: vec![0.0; n],
            r: vec![0.0; n],
            tmp: vec![0.0; n],
        }
    }
}

/// The tracer: a problem plus settings.
pub struct Tracer<'a, P: Problem> {
    /// The problem.
    pub problem: &'a mut P,
    /// Settings.
    pub settings: Settings,
    wu: f64,
    wp: f64,
    ws: Ws,
}

impl<'a, P: Problem> Tracer<'a, P> {
    /// A tracer over `problem`.
    pub fn new(problem: &'a mut P, settings: Settings) -> Self {
        let n = problem.dim();
        let wu = 1.0 / (n as f64 * settings.state_scale * settings.state_scale);
        let wp = 1.0 / (settings.param_scale * settings.param_scale);
        Tracer {
            problem,
            settings,
            wu,
            wp,
            ws: Ws::new(n),
        }
    }

    /// Solves the bordered system [J F_p; cᵀ d] [x; y] = [r; s] where
    /// c = wu t_u, d = wp t_p, after `factor` and `d_param` have filled the
    /// factors and ws.fp. r is taken from ws.r, x written to ws.a.
    fn bordered(&mut self, tu: &[f64], tp: f64, s: f64) -> Result<f64, Singular> {
        self.bordered_passes(tu, tp, s, 2)
    }

    /// [`Tracer::bordered`] with `passes` solves of the block elimination:
    /// 2 adds one step of iterative refinement against the full bordered
    /// system (the tangent), 1 is a plain block elimination (a Newton
    /// correction, whose own iteration removes the rounding).
    fn bordered_passes(
        &mut self,
        tu: &[f64],
        tp: f64,
        s: f64,
        passes: usize,
    ) -> Result<f64, Singular> {
        let n = tu.len();
        let (wu, wp) = (self.wu, self.wp);
        let mut y_total = 0.0;
        // x accumulates in ws.a; residual-correction loop (2 passes)
        let ws = &mut self.ws;
        ws.a.fill(0.0);
        let mut rhs_s = s;
        ws.tmp.copy_from_slice(&ws.r);
        for pass in 0..passes {
            // b = J⁻¹ F_p (once: the same in both passes), z = J⁻¹ r
            if pass == 0 {
                ws.b.copy_from_slice(&ws.fp);
                self.problem.solve_pair(&mut ws.b, &mut ws.tmp);
            } else {
                self.problem.solve(&mut ws.tmp);
            }
            let c_z: f64 = (0..n).map(|i| wu * tu[i] * ws.tmp[i]).sum();
            let c_b: f64 = (0..n).map(|i| wu * tu[i] * ws.b[i]).sum();
            let denom = wp * tp - c_b;
            if denom == 0.0 || !denom.is_finite() {
                return Err(Singular { row: n });
            }
            let y = (rhs_s - c_z) / denom;
            for i in 0..n {
                ws.a[i] += ws.tmp[i] - y * ws.b[i];
            }
            y_total += y;
            if pass + 1 == passes {
                break;
            }
            // residual of the full system: r - J x - F_p y, s - cᵀx - d y
            self.problem.jac_mul(&ws.a, &mut ws.tmp);
            for i in 0..n {
                ws.tmp[i] = ws.r[i] - ws.tmp[i] - ws.fp[i] * y_total;
            }
            rhs_s = s - (0..n).map(|i| wu * tu[i] * ws.a[i]).sum::<f64>() - wp * tp * y_total;
        }
        Ok(y_total)
    }

    /// The corrector tolerance: the requested one, or the problem's rounding
    /// floor where that is higher.
    fn tolerance(&self) -> f64 {
        self.settings.tolerance.max(self.problem.residual_floor())
    }

    /// Factors J at (u, p) unless the problem already holds those factors.
    fn factor_at(&mut self, u: &[f64], p: f64) -> Result<(), Singular> {
        if self.ws.last_valid && self.ws.last_p == p && self.ws.last_u == u {
            return Ok(());
        }
        self.problem.set_param(p);
        self.ws.last_valid = false;
        self.problem.factor(u, &mut self.ws.f)?;
        self.ws.last_u.copy_from_slice(u);
        self.ws.last_p = p;
        self.ws.last_valid = true;
        Ok(())
    }

    /// Unit tangent at a solution (u, p), oriented along (tu0, tp0).
    fn tangent(
        &mut self,
        u: &[f64],
        p: f64,
        tu0: &[f64],
        tp0: f64,
    ) -> Result<(Vec<f64>, f64), Singular> {
        self.factor_at(u, p)?;
        self.problem.set_param(p);
        self.problem.d_param(u, &mut self.ws.fp);
        self.ws.r.fill(0.0);
        let y = self.bordered(tu0, tp0, 1.0)?;
        let mut tu = self.ws.a.clone();
        let mut tp = y;
        let norm = (self.wu * tu.iter().map(|x| x * x).sum::<f64>() + self.wp * tp * tp).sqrt();
        for x in tu.iter_mut() {
            *x /= norm;
        }
        tp /= norm;
        Ok((tu, tp))
    }

    /// Corrects a predicted point onto the curve, holding the arclength
    /// constraint <t, (u, p) - (u_pred, p_pred)>_W = 0. Returns the number of
    /// iterations and the final residual.
    fn correct(
        &mut self,
        u: &mut [f64],
        p: &mut f64,
        tu: &[f64],
        tp: f64,
    ) -> Result<(usize, f64), f64> {
        let n = u.len();
        let (u_pred, p_pred) = (u.to_vec(), *p);
        let mut res = f64::INFINITY;
        for it in 0..10 {
            self.ws.last_valid = false;
            if self.factor_at(u, *p).is_err() {
                return Err(res);
            }
            res = max_abs(&self.ws.f);
            let nres: f64 = (0..n)
                .map(|i| self.wu * tu[i] * (u[i] - u_pred[i]))
                .sum::<f64>()
                + self.wp * tp * (*p - p_pred);
            if !res.is_finite() {
                return Err(res);
            }
            if res < self.tolerance() && it > 0 {
                return Ok((it, res));
            }
            self.problem.d_param(u, &mut self.ws.fp);
            for i in 0..n {
                self.ws.r[i] = -self.ws.f[i];
            }
            let dp = self.bordered_passes(tu, tp, -nres, 1).map_err(|_| res)?;
            let step = max_abs(&self.ws.a);
            if !step.is_finite() || step > 20.0 * self.settings.state_scale {
                return Err(res);
            }
            for i in 0..n {
                u[i] += self.ws.a[i];
            }
            *p += dp;
            if step < 1e-12 * (1.0 + max_abs(u)) && res < 100.0 * self.tolerance() {
                self.problem.set_param(*p);
                self.problem.residual(u, &mut self.ws.f);
                return Ok((it + 1, max_abs(&self.ws.f)));
            }
        }
        Err(res)
    }

    fn make_point(&mut self, u: Vec<f64>, p: f64, tu: Vec<f64>, tp: f64, residual: f64) -> Point {
        self.problem.set_param(p);
        let unstable_modes = self.problem.unstable_modes(&u);
        Point {
            p,
            u,
            tu,
            tp,
            residual,
            unstable_modes,
        }
    }

    /// Solves F(u, p) = 0 at fixed p by Newton from u (for landing on a bound).
    fn newton_at(&mut self, u: &mut [f64], p: f64) -> Option<f64> {
        self.problem.set_param(p);
        for _ in 0..30 {
            self.ws.last_valid = false;
            if self.problem.factor(u, &mut self.ws.f).is_err() {
                return None;
            }
            let res = max_abs(&self.ws.f);
            if res < self.tolerance() {
                return Some(res);
            }
            self.ws.a.copy_from_slice(&self.ws.f);
            self.problem.solve(&mut self.ws.a);
            let step = max_abs(&self.ws.a);
            if !step.is_finite() || step > 20.0 * self.settings.state_scale {
                return None;
            }
            for i in 0..u.len() {
                u[i] -= self.ws.a[i];
            }
            if step < 1e-12 * (1.0 + max_abs(u)) && res < 100.0 * self.tolerance() {
                return Some(res);
            }
        }
        None
    }

    /// Traces from a solution (u0, p0) in one direction (`sign` = ±1 along
    /// increasing p at the start). Returns the points after the start and
    /// why it ended.
    fn trace_direction(&mut self, start: &Point, sign: f64) -> (Vec<Point>, EndReason) {
        let s = self.settings;
        let mut pts: Vec<Point> = Vec::new();
        let mut cur = start.clone();
        if sign < 0.0 {
            cur.tu.iter_mut().for_each(|x| *x = -*x);
            cur.tp = -cur.tp;
        }
        let mut ds = s.ds0;
        let mut seen: std::collections::HashMap<u64, usize> = std::collections::HashMap::new();
        loop {
            if pts.len() >= s.max_points {
                return (pts, EndReason::PointLimit);
            }
            let mut u: Vec<f64> = cur.u.iter().zip(&cur.tu).map(|(u, t)| u + ds * t).collect();
            let mut p = cur.p + ds * cur.tp;
            // Beyond a bound: land exactly on it.
            if p > s.hi || p < s.lo {
                let bound = if p > s.hi { s.hi } else { s.lo };
                // already on the bound (a start there): no second copy of it
                if cur.p == bound {
                    return (pts, EndReason::Bound(bound));
                }
                let frac = (bound - cur.p) / (p - cur.p);
                let mut ub: Vec<f64> = cur
                    .u
                    .iter()
                    .zip(&u)
                    .map(|(a, b)| a + frac * (b - a))
                    .collect();
                if let Some(res) = self.newton_at(&mut ub, bound) {
                    let (tu, tp) = match self.tangent(&ub, bound, &cur.tu, cur.tp) {
                        Ok(t) => t,
                        Err(_) => (cur.tu.clone(), cur.tp),
                    };
                    let pt = self.make_point(ub, bound, tu, tp, res);
                    pts.push(pt);
                    return (pts, EndReason::Bound(bound));
                }
                if ds > s.ds_min {
                    ds *= 0.5;
                    continue;
                }
                return (pts, EndReason::Bound(bound));
            }
            match self.correct(&mut u, &mut p, &cur.tu, cur.tp) {
                Ok((iters, res)) if p >= s.lo - 1e-12 && p <= s.hi + 1e-12 => {
                    let Ok((tu, tp)) = self.tangent(&u, p, &cur.tu, cur.tp) else {
                        ds *= 0.5;
                        if ds < s.ds_min {
                            return (pts, EndReason::StepTooSmall { p, residual: res });
                        }
                        continue;
                    };
                    // Reject steps that turn the tangent too sharply.
                    let dot = self.wu * tu.iter().zip(&cur.tu).map(|(a, b)| a * b).sum::<f64>()
                        + self.wp * tp * cur.tp;
                    if dot < 0.9 && ds > s.ds_min * 4.0 {
                        ds *= 0.5;
                        continue;
                    }
                    if ds > 1e-4 && self.problem.label(&u) != self.problem.label(&cur.u) {
                        ds *= 0.25;
                        continue;
                    }
                    if self.problem.margin(&u) < 0.0 {
                        if let Some(ev) = self.locate_event(&cur, ds) {
                            let p_ev = ev.p;
                            pts.push(ev);
                            return (pts, EndReason::Event(p_ev));
                        }
                        if ds > s.ds_min {
                            ds *= 0.5;
                            continue;
                        }
                        return (pts, EndReason::Event(cur.p));
                    }
                    // a closed loop repeats its points bit for bit
                    if let Some(&k) = seen.get(&p.to_bits()) {
                        let q: &Point = &pts[k];
                        if q.u.iter().zip(&u).all(|(a, b)| (a - b).abs() < 1e-9) {
                            return (pts, EndReason::Loop(p));
                        }
                    }
                    seen.insert(p.to_bits(), pts.len());
                    let pt = self.make_point(u, p, tu, tp, res);
                    cur = pt.clone();
                    pts.push(pt);
                    if iters <= 3 {
                        ds = (ds * 1.5).min(s.ds_max);
                    } else if iters > 5 {
                        ds *= 0.7;
                    }
                }
                Ok(_) => {
                    ds *= 0.5;
                    if ds < s.ds_min {
                        return (pts, EndReason::Bound(if p > s.hi { s.hi } else { s.lo }));
                    }
                }
                Err(res) => {
                    // A kink of the residual (e.g. an ice cap appearing at
                    // the pole) can turn the branch sharply: cross it
                    // explicitly before giving up.
                    if ds < 1e-3
                        && let Some(next) = self.cross_corner(&cur, ds.max(1e-5))
                    {
                        cur = next.clone();
                        pts.push(next);
                        ds = 1e-3;
                        continue;
                    }
                    ds *= 0.5;
                    if ds < s.ds_min {
                        return (
                            pts,
                            EndReason::StepTooSmall {
                                p: cur.p,
                                residual: res,
                            },
                        );
                    }
                }
            }
        }
    }

    /// The point between `cur` (margin >= 0) and the corrected point at
    /// arclength `ds` ahead (margin < 0) where the margin vanishes: the
    /// Illinois variant of regula falsi on the margin of corrected points,
    /// to |margin| < 1e-10 or an arclength bracket of 1e-13.
    fn locate_event(&mut self, cur: &Point, ds: f64) -> Option<Point> {
        let point_at = |tr: &mut Self, sigma: f64| -> Option<(Vec<f64>, f64, f64, f64)> {
            let mut u: Vec<f64> = cur
                .u
                .iter()
                .zip(&cur.tu)
                .map(|(u, t)| u + sigma * t)
                .collect();
            let mut p = cur.p + sigma * cur.tp;
            let (_, res) = tr.correct(&mut u, &mut p, &cur.tu, cur.tp).ok()?;
            let m = tr.problem.margin(&u);
            Some((u, p, m, res))
        };
        let (mut a, mut fa) = (0.0, self.problem.margin(&cur.u));
        let (mut b, mut fb) = (ds, point_at(self, ds)?.2);
        if !(fa >= 0.0 && fb < 0.0) {
            return None;
        }
        let mut best = None;
        let mut side = 0;
        for _ in 0..80 {
            let c = if fa.is_finite() && fb.is_finite() && fa != fb {
                (a * fb - b * fa) / (fb - fa)
            } else {
                0.5 * (a + b)
            };
            let c = if c > a && c < b { c } else { 0.5 * (a + b) };
            let (u, p, fc, res) = point_at(self, c)?;
            // keep the last point inside (margin >= 0) as the event
            if fc >= 0.0 {
                best = Some((u, p, res));
                a = c;
                fa = fc;
                if side == 1 {
                    fb *= 0.5;
                }
                side = 1;
            } else {
                b = c;
                fb = fc;
                if side == -1 {
                    fa *= 0.5;
                }
                side = -1;
            }
            if fc.abs() < 1e-10 || b - a < 1e-13 * ds.max(1.0) {
                break;
            }
        }
        let (u, p, res) = best?;
        let (tu, tp) = self.tangent(&u, p, &cur.tu, cur.tp).ok()?;
        Some(self.make_point(u, p, tu, tp, res))
    }

    /// Crosses a kink of the residual ahead of `cur`: locates where the
    /// discrete label changes along the predictor, takes the tangent from
    /// the Jacobian on the far side, and corrects a first point there, in
    /// whichever orientation leads onto the far side. Returns that point.
    fn cross_corner(&mut self, cur: &Point, ds: f64) -> Option<Point> {
        let n = cur.u.len();
        let at = |s: f64| -> (Vec<f64>, f64) {
            (
                cur.u.iter().zip(&cur.tu).map(|(u, t)| u + s * t).collect(),
                cur.p + s * cur.tp,
            )
        };
        let label0 = self.problem.label(&cur.u);
        // find a label change along the predictor within 64 ds
        let mut hi = ds;
        let mut found = false;
        for _ in 0..7 {
            let (u, _) = at(hi);
            if self.problem.label(&u) != label0 {
                found = true;
                break;
            }
            hi *= 2.0;
        }
        if !found {
            return None;
        }
        let mut lo = 0.0;
        for _ in 0..40 {
            let mid = 0.5 * (lo + hi);
            let (u, _) = at(mid);
            if self.problem.label(&u) == label0 {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        let (u_far, p_far) = at(hi + 1e-9);
        let label_far = self.problem.label(&u_far);
        let (t2u, t2p) = self.tangent(&u_far, p_far, &cur.tu, cur.tp).ok()?;
        for orient in [1.0, -1.0] {
            let tu: Vec<f64> = t2u.iter().map(|x| orient * x).collect();
            let tp = orient * t2p;
            let mut h = 1e-5;
            while h <= 1e-2 {
                let mut u: Vec<f64> = u_far.iter().zip(&tu).map(|(a, t)| a + h * t).collect();
                let mut p = p_far + h * tp;
                if p >= self.settings.lo
                    && p <= self.settings.hi
                    && let Ok((_, res)) = self.correct(&mut u, &mut p, &tu, tp)
                {
                    let moved = (0..n).map(|i| (u[i] - cur.u[i]).abs()).fold(0.0, f64::max);
                    if self.problem.label(&u) == label_far && moved > 0.0 {
                        let (ntu, ntp) = self.tangent(&u, p, &tu, tp).ok()?;
                        return Some(self.make_point(u, p, ntu, ntp, res));
                    }
                }
                h *= 4.0;
            }
        }
        None
    }

    /// Refines the fold between branch points a and b (t_p changes sign):
    /// regula falsi on t_p(σ) = 0, σ the arclength from a, every trial point
    /// predicted from a and fully corrected. Where the turn happens at a
    /// kink (the trial fails or lands on another discrete label), the
    /// bracket shrinks onto the kink instead, and the fold reported is the
    /// converged point closest to it on a's side: a corner fold.
    fn refine_fold(&mut self, a: &Point, b: &Point) -> Option<Point> {
        let n = a.u.len();
        let dist = (self.wu * (0..n).map(|i| (b.u[i] - a.u[i]).powi(2)).sum::<f64>()
            + self.wp * (b.p - a.p).powi(2))
        .sqrt();
        let label_a = self.problem.label(&a.u);
        let (mut lo, mut hi) = (0.0, dist);
        let (mut f_lo, mut f_hi) = (a.tp, b.tp);
        let mut best: Option<Point> = None;
        let mut side = 0i32;
        for _ in 0..100 {
            let mut s = if f_hi.is_finite() && f_lo != f_hi {
                lo + f_lo * (hi - lo) / (f_lo - f_hi)
            } else {
                0.5 * (lo + hi)
            };
            if s <= lo || s >= hi || !s.is_finite() {
                s = 0.5 * (lo + hi);
            }
            let mut u: Vec<f64> = a.u.iter().zip(&a.tu).map(|(u, t)| u + s * t).collect();
            let mut p = a.p + s * a.tp;
            let trial = match self.correct(&mut u, &mut p, &a.tu, a.tp) {
                Ok((_, res)) if self.problem.label(&u) == label_a => {
                    self.tangent(&u, p, &a.tu, a.tp).ok().map(|(tu, tp)| Point {
                        p,
                        u,
                        tu,
                        tp,
                        residual: res,
                        unstable_modes: 0,
                    })
                }
                _ => None,
            };
            match trial {
                None => {
                    hi = s;
                    f_hi = f64::NAN;
                }
                Some(pt) => {
                    let tp = pt.tp;
                    if (tp > 0.0) == (f_lo > 0.0) {
                        lo = s;
                        // Illinois modification keeps regula falsi superlinear
                        if side == -1 && f_hi.is_finite() {
                            f_hi *= 0.5;
                        }
                        f_lo = tp;
                        side = -1;
                    } else {
                        hi = s;
                        if side == 1 {
                            f_lo *= 0.5;
                        }
                        f_hi = tp;
                        side = 1;
                    }
                    let better = best
                        .as_ref()
                        .is_none_or(|q| tp.abs() <= q.tp.abs() || !f_hi.is_finite());
                    if better {
                        best = Some(pt);
                    }
                    // p near a fold is quadratic in arclength: |t_p| < 1e-10
                    // puts the fold value within ~1e-20 relative of the extremum
                    if tp.abs() < 1e-10 {
                        break;
                    }
                }
            }
            if hi - lo < 1e-14 * dist.max(1e-300) {
                break;
            }
        }
        let pt = best?;
        Some(self.make_point(pt.u, pt.p, pt.tu, pt.tp, pt.residual))
    }

    /// Traces the whole branch through the solution (u0, p0) in both
    /// directions and locates its folds.
    pub fn trace(&mut self, u0: &[f64], p0: f64) -> Result<Branch, Singular> {
        let (points, ends) = self.trace_points(u0, p0)?;
        let mut folds = Vec::new();
        for k in 0..points.len().saturating_sub(1) {
            let (a, b) = (&points[k], &points[k + 1]);
            if a.tp == 0.0 || (a.tp > 0.0) != (b.tp > 0.0) {
                let (a, b) = (a.clone(), b.clone());
                if let Some(f) = self.refine_fold(&a, &b) {
                    folds.push(FoldPoint { point: f, after: k });
                }
            }
        }
        Ok(Branch {
            points,
            folds,
            ends,
        })
    }

    /// Traces the curve through (u0, p0) in both directions without
    /// locating folds; returns the (state, parameter) points in order.
    pub fn trace_curve(&mut self, u0: &[f64], p0: f64) -> Result<Vec<(Vec<f64>, f64)>, Singular> {
        let (points, _) = self.trace_points(u0, p0)?;
        Ok(points.into_iter().map(|q| (q.u, q.p)).collect())
    }

    fn trace_points(
        &mut self,
        u0: &[f64],
        p0: f64,
    ) -> Result<(Vec<Point>, [EndReason; 2]), Singular> {
        let n = u0.len();
        // initial tangent: orient towards increasing p
        let e_u = vec![0.0; n];
        let (tu, tp) = self.tangent(u0, p0, &e_u, 1.0)?;
        let (tu, tp) = if tp < 0.0 {
            (tu.iter().map(|x| -x).collect(), -tp)
        } else {
            (tu, tp)
        };
        self.problem.set_param(p0);
        self.problem.residual(u0, &mut self.ws.f);
        let res0 = max_abs(&self.ws.f);
        let start = self.make_point(u0.to_vec(), p0, tu, tp, res0);
        let (fwd, end_fwd) = self.trace_direction(&start, 1.0);
        let (bwd, end_bwd) = self.trace_direction(&start, -1.0);
        let mut points: Vec<Point> = bwd.into_iter().rev().collect();
        // backward tangents point the other way; re-orient to the branch direction
        for p in points.iter_mut() {
            p.tu.iter_mut().for_each(|x| *x = -*x);
            p.tp = -p.tp;
        }
        points.push(start);
        points.extend(fwd);
        Ok((points, [end_bwd, end_fwd]))
    }
}
