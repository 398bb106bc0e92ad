//! Periodic climates of the seasonal model.
//!
//! **Periodic climates** are fixed points u = Φ(u) of the annual map, found
//! by Newton (shooting) on G(u) = u - Φ(u), (I - M) δ = -G; their Floquet
//! multipliers are the eigenvalues μ of M, unstable when |μ| > 1.

pub use super::cycle::{Cycle, cycle, cycle_diagnostics, polar_ice_edges};
pub use super::shooting::shoot;
use crate::analysis::branches::{Fold, Hysteresis, TracedBranch, TracedPoint};
use crate::model::climate::{Start, diagnose};
use crate::model::seasonal::*;
use crate::model::{Model, Param};
use crate::numerics::continuation::{Branch, Problem, Settings, Tracer};
use crate::numerics::linalg::Singular;
use faer::prelude::Solve;

/// Below this order the Floquet multipliers come from the unblocked
/// double-shift QR iteration (Francis 1961; LAPACK's dlahqr) on the
/// Hessenberg form, without faer's blocked multishift sweeps and aggressive
/// early deflation (Braman, Byers & Mathias 2002), which pay off only for
/// larger matrices: about twice as fast at 90 bands, and the same
/// eigenvalues to rounding.
const UNBLOCKED_SCHUR_BELOW: usize = 128;

/// Eigenvalues (Floquet multipliers) of the row-major n x n matrix `m`,
/// as (re, im) pairs sorted by decreasing modulus: the real Schur form of
/// the Hessenberg reduction (dense, faer's `evd_real` without eigenvectors;
/// unblocked below 128 bands).
pub fn floquet_multipliers(m: &[f64], n: usize) -> Option<Vec<(f64, f64)>> {
    use faer::dyn_stack::{MemBuffer, MemStack};
    use faer::linalg::evd::{ComputeEigenvectors, EvdParams, SchurParams, evd_real, evd_scratch};
    let a = faer::Mat::<f64>::from_fn(n, n, |r, c| m[r * n + c]);
    let auto = faer::Auto::<f64>::auto();
    let mut params: EvdParams = auto;
    if n < UNBLOCKED_SCHUR_BELOW {
        params.schur = SchurParams {
            blocking_threshold: UNBLOCKED_SCHUR_BELOW,
            ..faer::Auto::<f64>::auto()
        };
    }
    let par = faer::get_global_parallelism();
    let no = ComputeEigenvectors::No;
    let mut buf = MemBuffer::new(evd_scratch::<f64>(n, no, no, par, params.into()));
    let mut re = faer::diag::Diag::<f64>::zeros(n);
    let mut im = faer::diag::Diag::<f64>::zeros(n);
    evd_real(
        a.as_ref(),
        re.as_mut(),
        im.as_mut(),
        None,
        None,
        par,
        MemStack::new(&mut buf),
        params.into(),
    )
    .ok()?;
    let mut out: Vec<(f64, f64)> = (0..n).map(|i| (re[i], im[i])).collect();
    out.sort_by(|a, b| b.0.hypot(b.1).total_cmp(&a.0.hypot(a.1)));
    Some(out)
}

/// Number of multipliers with |μ| > 1 (unstable modes of a periodic climate).
pub fn count_unstable(multipliers: &[(f64, f64)]) -> usize {
    multipliers
        .iter()
        .filter(|(re, im)| re.hypot(*im) > 1.0)
        .count()
}

/// Shooting options.
#[derive(Clone, Copy, Debug)]
pub struct ShootingOptions {
    /// Converged when max |u - Φ(u)| is below this, K.
    pub tolerance: f64,
    /// Newton iteration limit.
    pub max_iterations: usize,
    /// Largest change of u per Newton iteration, K (damping).
    pub max_step: f64,
    /// Fallback: years of spin-up before trying Newton again.
    pub spin_up_years: usize,
    /// With sea ice: largest change of any one band per Newton iteration,
    /// K (times c_w in enthalpy; [`crate::analysis::shooting`]).
    pub band_step: f64,
}

impl Default for ShootingOptions {
    fn default() -> Self {
        ShootingOptions {
            tolerance: 1e-10,
            max_iterations: 40,
            max_step: 20.0,
            spin_up_years: 300,
            band_step: 5.0,
        }
    }
}

/// A periodic climate: the state at the northern spring equinox, u = Φ(u).
#[derive(Clone, Debug)]
pub struct Periodic {
    /// Temperature per band at year fraction 0, °C.
    pub start: Vec<f64>,
    /// max |u - Φ(u)| at the returned state, K.
    pub residual: f64,
    /// Newton iterations of the shooting.
    pub iterations: usize,
    /// Years of spin-up needed before Newton converged (0 if none).
    pub spun_up_years: usize,
    /// Years integrated by the shooting that converged (with or without
    /// their linearisation; not the spin-up, nor shootings that failed).
    pub shooting_years: usize,
    /// Products M v with the recorded tangent year (GMRES and Arnoldi;
    /// 0 for the dense solve).
    pub tangent_products: usize,
    /// Floquet multipliers (re, im), largest modulus first.
    pub multipliers: Vec<(f64, f64)>,
    /// Multipliers with |μ| > 1.
    pub unstable_modes: usize,
    /// Label of the start that led here.
    pub label: String,
}

/// Integrates whole years from `t` until the largest year-over-year change
/// max |Φ(u) - u| is below `tol` K; returns the years taken, or fails after
/// `max_years` with the change reached.
pub fn spin_up(
    sm: &mut SeasonalModel,
    t: &mut [f64],
    tol: f64,
    max_years: usize,
) -> Result<usize, SeasonalError> {
    let n = sm.len();
    let mut before = vec![0.0; n];
    let mut change = f64::INFINITY;
    for year in 1..=max_years {
        before.copy_from_slice(t);
        sm.year(t)?;
        change = t
            .iter()
            .zip(&before)
            .fold(0.0f64, |m, (a, b)| m.max((a - b).abs()));
        if change < tol {
            return Ok(year);
        }
    }
    Err(SeasonalError::NotPeriodic {
        residual: change,
        unit: sm.state_unit(),
        iterations: 0,
        note: format!(" (spin-up of {max_years} years)"),
    })
}

/// The periodic climate reached from `start`: shooting first; if Newton
/// fails, time stepping in growing chunks (10, 20, 40, 80, then the rest
/// of `spin_up_years`), shooting again after each (the result records the
/// years stepped). Fails with the residual when none works.
pub fn periodic_from(
    sm: &mut SeasonalModel,
    start: &Start,
    opts: &ShootingOptions,
) -> Result<Periodic, SeasonalError> {
    // the start is a temperature profile; with sea ice the state is E
    let u0 = sm.state_from_temperature(&start.temperature);
    let first = match shoot(sm, &u0, opts) {
        Ok(mut p) => {
            p.label.clone_from(&start.label);
            return Ok(p);
        }
        Err(e) => e,
    };
    let mut t = u0;
    let mut years = 0;
    let mut last = first.clone();
    let mut chunk = 10;
    while years < opts.spin_up_years {
        let k = chunk.min(opts.spin_up_years - years);
        years += spin_up(sm, &mut t, 1e-4, k).unwrap_or(k);
        chunk *= 2;
        match shoot(sm, &t, opts) {
            Ok(mut p) => {
                p.spun_up_years = years;
                p.label.clone_from(&start.label);
                return Ok(p);
            }
            Err(e @ SeasonalError::NotPeriodic { .. }) => last = e,
            Err(e) => return Err(e),
        }
    }
    match last {
        SeasonalError::NotPeriodic {
            residual,
            unit,
            iterations,
            ..
        } => Err(SeasonalError::NotPeriodic {
            residual,
            unit,
            iterations,
            note: format!(
                " (shooting from the start failed: {first}; also after {years} years of spin-up)"
            ),
        }),
        e => Err(e),
    }
}

/// Periodic climates from several starts.
#[derive(Clone, Debug)]
pub struct PeriodicSearch {
    /// Distinct periodic climates (max difference above 1e-6 K), warmest
    /// annual mean first.
    pub climates: Vec<Periodic>,
    /// Starts that failed, with the reason.
    pub failures: Vec<(String, SeasonalError)>,
}

/// The surface temperature at the start of the year of periodic state `u`:
/// `u` itself, or with sea ice that after one year from `u` (allocates).
pub fn start_surface(sm: &mut SeasonalModel, u: &[f64]) -> Vec<f64> {
    if !sm.has_sea_ice() {
        return u.to_vec();
    }
    let mut t = u.to_vec();
    match sm.year(&mut t) {
        Ok(()) => sm.surface_temperature(&t).to_vec(),
        Err(_) => vec![f64::NAN; u.len()],
    }
}

/// Shoots from every start and keeps the distinct periodic climates.
pub fn find_periodic(
    sm: &mut SeasonalModel,
    starts: &[Start],
    opts: &ShootingOptions,
) -> PeriodicSearch {
    let mut climates: Vec<Periodic> = Vec::new();
    let mut failures = Vec::new();
    for s in starts {
        let found = periodic_from(sm, s, opts).and_then(|p| {
            let surface = start_surface(sm, &p.start);
            match crate::model::climate::below_absolute_zero(sm.model(), &surface) {
                Some((temperature_c, latitude_deg)) => Err(SeasonalError::Unphysical {
                    temperature_c,
                    latitude_deg,
                }),
                None => Ok(p),
            }
        });
        match found {
            Ok(p) => {
                let dup = climates.iter().any(|o| {
                    o.start
                        .iter()
                        .zip(&p.start)
                        .all(|(a, b)| (a - b).abs() < 1e-6)
                });
                if !dup {
                    climates.push(p);
                }
            }
            Err(e) => failures.push((s.label.clone(), e)),
        }
    }
    let g = sm.model().grid.clone();
    climates.sort_by(|a, b| g.mean(&b.start).total_cmp(&g.mean(&a.start)));
    PeriodicSearch { climates, failures }
}

/// The seasonal model as a continuation problem: u is the state at the
/// northern spring equinox, the residual G(u) = u - Φ(u) (K), its Jacobian
/// I - M (dense LU), ∂G/∂p = -∂Φ/∂p (exact sensitivity, or a central
/// difference of Φ for obliquity, eccentricity and p2), stability from the
/// Floquet multipliers, and the label the ice topology of the annual-mean
/// profile. The monodromy matrix of the last factored point is reused for
/// its parameter derivative and multipliers.
pub struct SeasonalProblem {
    /// The seasonal model (its parameter is changed in place).
    pub sm: SeasonalModel,
    /// The varied parameter.
    pub param: Param,
    m: Vec<f64>,
    sens: Vec<f64>,
    phi: Vec<f64>,
    key: Option<(Vec<f64>, f64)>,
    lu: Option<faer::linalg::solvers::PartialPivLu<f64>>,
    annual: Vec<f64>,
    /// Labels already computed: (u, p, label), the latest last (a few).
    labels: Vec<(Vec<f64>, f64, u64)>,
    /// Annual maps computed (for the benchmark's bookkeeping).
    pub years_integrated: usize,
}

impl SeasonalProblem {
    /// Wraps `sm`, varying `param`.
    pub fn new(sm: SeasonalModel, param: Param) -> SeasonalProblem {
        let n = sm.len();
        SeasonalProblem {
            sm,
            param,
            m: vec![0.0; n * n],
            sens: vec![0.0; n],
            phi: vec![0.0; n],
            key: None,
            lu: None,
            annual: vec![0.0; n],
            labels: Vec::new(),
            years_integrated: 0,
        }
    }

    fn is_cached(&self, u: &[f64]) -> bool {
        let p = self.sm.param(self.param);
        matches!(&self.key, Some((ku, kp)) if *kp == p && ku.as_slice() == u)
    }

    /// Φ(u), M and (when exact) ∂Φ/∂p at u, cached.
    fn linearise(&mut self, u: &[f64]) -> Result<(), SeasonalError> {
        if self.is_cached(u) {
            return Ok(());
        }
        self.key = None;
        self.phi.copy_from_slice(u);
        // a central difference of Φ where the exact sensitivity does not
        // reach: parameters that move the insolation tables, and the
        // sea-ice model
        let by_difference = moves_insolation(self.param)
            || (self.sm.has_sea_ice() && !crate::model::seaice::sea_ice_exact(self.param));
        let sens = if by_difference {
            None
        } else {
            Some((self.param, self.sens.as_mut_slice()))
        };
        self.sm
            .year_with_jacobian(&mut self.phi, &mut self.m, sens)?;
        self.years_integrated += 1;
        if by_difference {
            let p0 = self.sm.param(self.param);
            let h = 1e-6 * p0.abs().max(1.0);
            let mut a = u.to_vec();
            let mut b = u.to_vec();
            self.sm.set_param(self.param, p0 + h);
            let ra = self.sm.year(&mut a);
            self.sm.set_param(self.param, p0 - h);
            let rb = self.sm.year(&mut b);
            self.sm.set_param(self.param, p0);
            ra?;
            rb?;
            self.years_integrated += 2;
            for i in 0..u.len() {
                self.sens[i] = (a[i] - b[i]) / (2.0 * h);
            }
        }
        self.key = Some((u.to_vec(), self.sm.param(self.param)));
        // the year just integrated gives the label as well
        let label = self.sm.model().ice_topology(self.sm.year_mean());
        self.remember_label(u, label);
        Ok(())
    }

    fn remember_label(&mut self, u: &[f64], label: u64) {
        const KEPT: usize = 4;
        if self.labels.len() == KEPT {
            self.labels.remove(0);
        }
        self.labels
            .push((u.to_vec(), self.sm.param(self.param), label));
    }
}

impl Problem for SeasonalProblem {
    fn dim(&self) -> usize {
        self.sm.len()
    }
    fn set_param(&mut self, p: f64) {
        if self.sm.param(self.param) != p {
            self.sm.set_param(self.param, p);
        }
    }
    /// G(u) = u - Φ(u). A state not yet linearised is integrated with its
    /// monodromy (as `factor` does): the continuation asks for
    /// the residual alone only at a corrected point, whose tangent (and
    /// Floquet multipliers) need the monodromy next, so the year is not
    /// integrated twice. Φ is the same either way (the same steps).
    fn residual(&mut self, u: &[f64], f: &mut [f64]) {
        if self.linearise(u).is_err() {
            f.fill(f64::NAN);
            return;
        }
        for i in 0..u.len() {
            f[i] = u[i] - self.phi[i];
        }
    }
    fn factor(&mut self, u: &[f64], f: &mut [f64]) -> Result<(), Singular> {
        let n = u.len();
        if self.linearise(u).is_err() {
            f.fill(f64::NAN);
            return Err(Singular { row: 0 });
        }
        for i in 0..n {
            f[i] = u[i] - self.phi[i];
        }
        let m = &self.m;
        let a = faer::Mat::<f64>::from_fn(n, n, |r, c| f64::from(u8::from(r == c)) - m[r * n + c]);
        self.lu = Some(a.partial_piv_lu());
        Ok(())
    }
    fn solve(&self, b: &mut [f64]) {
        let n = b.len();
        let Some(lu) = &self.lu else {
            b.fill(f64::NAN);
            return;
        };
        let mut rhs = faer::Mat::<f64>::from_fn(n, 1, |i, _| b[i]);
        lu.solve_in_place(rhs.as_mut());
        for i in 0..n {
            b[i] = rhs[(i, 0)];
        }
    }
    fn jac_mul(&self, v: &[f64], y: &mut [f64]) {
        let n = v.len();
        for i in 0..n {
            let row = &self.m[i * n..(i + 1) * n];
            y[i] = v[i] - row.iter().zip(v).map(|(a, b)| a * b).sum::<f64>();
        }
    }
    fn d_param(&mut self, u: &[f64], out: &mut [f64]) {
        if self.linearise(u).is_err() {
            out.fill(f64::NAN);
            return;
        }
        for i in 0..u.len() {
            out[i] = -self.sens[i];
        }
    }
    fn unstable_modes(&mut self, u: &[f64]) -> usize {
        if self.linearise(u).is_err() {
            return usize::MAX;
        }
        floquet_multipliers(&self.m, u.len()).map_or(usize::MAX, |mu| count_unstable(&mu))
    }
    fn label(&mut self, u: &[f64]) -> u64 {
        let p = self.sm.param(self.param);
        if let Some((_, _, l)) = self
            .labels
            .iter()
            .rev()
            .find(|(ku, kp, _)| *kp == p && ku.as_slice() == u)
        {
            return *l;
        }
        let n = u.len();
        let steps = self.sm.steps_per_year() as f64;
        let mut t = u.to_vec();
        self.annual.fill(0.0);
        let annual = &mut self.annual;
        let ok = self
            .sm
            .year_with(&mut t, &mut |_, _, s| {
                for i in 0..n {
                    annual[i] += s[i] / steps;
                }
            })
            .is_ok();
        self.years_integrated += 1;
        let label = if ok {
            self.sm.model().ice_topology(&self.annual)
        } else {
            u64::MAX
        };
        self.remember_label(u, label);
        label
    }
}

/// Seasonal continuation options.
#[derive(Clone, Copy, Debug)]
pub struct SeasonalTraceOptions {
    /// Seed parameter values (evenly spaced, ends included).
    pub seed_values: usize,
    /// Corrector tolerance on max |u - Φ(u)|, K.
    pub tolerance: f64,
    /// Shooting options for the seeds.
    pub shooting: ShootingOptions,
}

impl Default for SeasonalTraceOptions {
    fn default() -> Self {
        SeasonalTraceOptions {
            seed_values: 5,
            tolerance: 1e-9,
            shooting: ShootingOptions::default(),
        }
    }
}

fn near_branch(b: &Branch, u: &[f64], p: f64, width: f64) -> bool {
    b.points.windows(2).any(|w| {
        let (a, c) = (&w[0], &w[1]);
        let (lo, hi) = (a.p.min(c.p), a.p.max(c.p));
        if p < lo - 1e-9 * width || p > hi + 1e-9 * width {
            return false;
        }
        let f = if c.p != a.p {
            (p - a.p) / (c.p - a.p)
        } else {
            0.0
        };
        u.iter()
            .zip(a.u.iter().zip(&c.u))
            .all(|(x, (ua, uc))| (x - (ua + f * (uc - ua))).abs() < 0.5)
    }) || b.points.iter().any(|q| {
        (q.p - p).abs() < 1e-9 * width && q.u.iter().zip(u).all(|(a, b)| (a - b).abs() < 1e-6)
    })
}

/// A branch point as reported: its annual-mean profile and the diagnostics
/// of that profile under the annual-mean insolation, except the habitable
/// fraction, which is the year mean of the instantaneous one
/// ([`Cycle::habitable_year_mean`]).
fn seasonal_point(
    sm: &mut SeasonalModel,
    annual_model: &mut Model,
    param: Param,
    p: f64,
    u: &[f64],
    unstable: usize,
    residual: f64,
) -> TracedPoint {
    sm.set_param(param, p);
    annual_model.set_param(param, p);
    let (temperature, diagnostics) = match crate::analysis::cycle::cycle_summary(sm, u) {
        Ok((annual_mean, ice_mean, habitable_year_mean)) => {
            let mut d =
                crate::analysis::cycle::summary_diagnostics(annual_model, &annual_mean, &ice_mean);
            // a periodic climate's habitable fraction is the year mean of
            // the instantaneous one, not that of its annual-mean profile
            d.habitable_fraction = habitable_year_mean;
            (annual_mean, d)
        }
        Err(_) => (u.to_vec(), diagnose(annual_model, u)),
    };
    TracedPoint {
        p,
        temperature,
        diagnostics,
        unstable_modes: unstable,
        residual,
    }
}

/// Every branch of periodic climates of `sm` in `param` over [lo, hi], by
/// the generic [`Tracer`] through the annual map: seeds by shooting from
/// warm and cold starts at `seed_values` parameter values, each distinct
/// one continued. Points report the annual-mean profile (diagnosed under the
/// annual-mean insolation; the habitable fraction is the year mean of the
/// instantaneous one), the number of Floquet multipliers outside the
/// unit circle, and max |u - Φ(u)| (K) as the residual. Folds carry no jump
/// (`jump_to` is `None`); bistable windows are where two stable segments
/// overlap.
#[allow(clippy::too_many_arguments)]
pub fn trace_seasonal(
    sm: &SeasonalModel,
    param: Param,
    lo: f64,
    hi: f64,
    warm: f64,
    cold: f64,
    opts: &SeasonalTraceOptions,
    progress: &mut dyn FnMut(&str),
) -> Hysteresis {
    let n = sm.len();
    let mut failures = Vec::new();
    let mut seeds: Vec<(f64, Vec<f64>)> = Vec::new();
    let k = opts.seed_values.max(2);
    let mut work = sm.clone();
    for j in 0..k {
        let p = lo + (hi - lo) * j as f64 / (k - 1) as f64;
        work.set_param(param, p);
        let starts = crate::model::climate::standard_starts(n, warm, cold);
        let search = find_periodic(&mut work, &starts, &opts.shooting);
        for (label, e) in search.failures {
            failures.push(format!("seed `{label}` at {} = {p}: {e}", param.key()));
        }
        for c in search.climates {
            seeds.push((p, c.start));
        }
        progress(&format!("seasonal seeds at {} = {p:.6}", param.key()));
    }
    let settings = Settings {
        tolerance: opts.tolerance,
        ..Settings::for_range(lo, hi)
    };
    let mut problem = SeasonalProblem::new(sm.clone(), param);
    let mut raw: Vec<Branch> = Vec::new();
    for (p, u) in &seeds {
        if raw.iter().any(|b| near_branch(b, u, *p, (hi - lo).abs())) {
            continue;
        }
        let mut tracer = Tracer::new(&mut problem, settings);
        match tracer.trace(u, *p) {
            Ok(b) => {
                progress(&format!(
                    "seasonal branch {}: {} points, {} folds",
                    raw.len() + 1,
                    b.points.len(),
                    b.folds.len()
                ));
                raw.push(b);
            }
            Err(_) => failures.push(format!(
                "seed at {} = {p}: singular annual-map Jacobian, not continued",
                param.key()
            )),
        }
    }
    let mut work = sm.clone();
    let mut annual = sm.annual_model();
    let mut branches = Vec::new();
    for (id, b) in raw.into_iter().enumerate() {
        let points: Vec<TracedPoint> = b
            .points
            .iter()
            .map(|q| {
                seasonal_point(
                    &mut work,
                    &mut annual,
                    param,
                    q.p,
                    &q.u,
                    q.unstable_modes,
                    q.residual,
                )
            })
            .collect();
        let folds = b
            .folds
            .iter()
            .map(|f| Fold {
                point: seasonal_point(
                    &mut work,
                    &mut annual,
                    param,
                    f.point.p,
                    &f.point.u,
                    f.point.unstable_modes,
                    f.point.residual,
                ),
                after: f.after,
                // filled in below from the stable neighbour (lead's edit:
                // Fold gained `from_state`)
                from_state: crate::model::climate::State::Other,
                jump_to: None,
                sensitivities: Vec::new(),
                sensitivity_error: Some(
                    "fold sensitivities are not computed for periodic (seasonal) climates".into(),
                ),
                jump_years: None,
                jump_note: None,
            })
            .collect();
        branches.push(TracedBranch {
            id: id + 1,
            points,
            folds,
            ends: b.ends.clone(),
        });
    }
    let bistable = crate::analysis::branches::bistable_windows(&branches, lo, hi);
    Hysteresis {
        param,
        range: (lo, hi),
        branches,
        bistable,
        failures,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A = H B H with H = I - 2 v vᵀ/(vᵀv) (orthogonal and its own inverse)
    /// and B block diagonal: real eigenvalues on its diagonal and 2 x 2
    /// blocks [[a, b], [-b, a]] with the pairs a ± ib. Returns A
    /// (row-major) and the spectrum of B.
    fn similar_to_known(n: usize) -> (Vec<f64>, Vec<(f64, f64)>) {
        let mut b = vec![0.0; n * n];
        let mut known = Vec::new();
        let mut i = 0;
        while i < n {
            let r = 1.3 * (-(i as f64) / 9.0).exp();
            if i % 7 == 3 && i + 1 < n {
                let (re, im) = (0.6 * r, 0.8 * r);
                b[i * n + i] = re;
                b[i * n + i + 1] = im;
                b[(i + 1) * n + i] = -im;
                b[(i + 1) * n + i + 1] = re;
                known.push((re, im));
                known.push((re, -im));
                i += 2;
            } else {
                let sign = if i % 5 == 2 { -1.0 } else { 1.0 };
                b[i * n + i] = sign * r;
                known.push((sign * r, 0.0));
                i += 1;
            }
        }
        let v: Vec<f64> = (0..n).map(|k| 1.0 + ((k * 37) % 11) as f64 / 7.0).collect();
        let vv: f64 = v.iter().map(|x| x * x).sum();
        let h = |r: usize, c: usize| f64::from(u8::from(r == c)) - 2.0 * v[r] * v[c] / vv;
        let mut hb = vec![0.0; n * n];
        for r in 0..n {
            for c in 0..n {
                hb[r * n + c] = (0..n).map(|k| h(r, k) * b[k * n + c]).sum();
            }
        }
        let mut a = vec![0.0; n * n];
        for r in 0..n {
            for c in 0..n {
                a[r * n + c] = (0..n).map(|k| hb[r * n + k] * h(k, c)).sum();
            }
        }
        known.sort_by(|x, y| y.0.hypot(y.1).total_cmp(&x.0.hypot(x.1)));
        (a, known)
    }

    /// The multipliers of a matrix similar to a known block-diagonal one are
    /// its known spectrum, on both sides of the unblocked/blocked switch,
    /// and agree with faer's default eigenvalue solver (blocked multishift
    /// QR, an independent path) on the same matrix. Common practice, no
    /// source.
    #[test]
    fn floquet_multipliers_match_a_known_spectrum_and_the_default_solver() {
        for n in [90, 131] {
            let (a, known) = similar_to_known(n);
            let mu = floquet_multipliers(&a, n).unwrap();
            assert_eq!(mu.len(), n);
            // complex pairs may come in either order: compare moduli and
            // match each known value to the nearest multiplier
            for (k, z) in known.iter().enumerate() {
                let near = mu
                    .iter()
                    .map(|m| (m.0 - z.0).hypot(m.1 - z.1))
                    .fold(f64::INFINITY, f64::min);
                assert!(near < 1e-12, "n = {n}: known {z:?} missed by {near:e}");
                let (m, z) = (mu[k].0.hypot(mu[k].1), z.0.hypot(z.1));
                assert!((m - z).abs() < 1e-12, "n = {n}: modulus {k}: {m} vs {z}");
            }
            let mat = faer::Mat::<f64>::from_fn(n, n, |r, c| a[r * n + c]);
            let mut other: Vec<(f64, f64)> = mat
                .eigenvalues()
                .unwrap()
                .iter()
                .map(|z| (z.re, z.im))
                .collect();
            other.sort_by(|x, y| y.0.hypot(y.1).total_cmp(&x.0.hypot(x.1)));
            for (x, y) in mu.iter().zip(&other) {
                let d = (x.0.hypot(x.1) - y.0.hypot(y.1)).abs();
                assert!(d < 1e-12, "n = {n}: {x:?} vs {y:?}");
            }
            // three moduli above 1 (1.3, 1.16 and 1.04): the count of unstable modes
            assert_eq!(
                count_unstable(&mu),
                known.iter().filter(|z| z.0.hypot(z.1) > 1.0).count()
            );
        }
    }
}
