//! The O(n) fold-curve solver against the dense reference, its work per
//! Newton step, and its curve against folds located independently by
//! one-parameter traces.

use icefold::analysis::branches::{TraceOptions, trace_subgrid};
use icefold::analysis::foldcurve::{
    FoldCurveProblem, FoldSolver, fold_sigma, trace_fold_curve_with,
};
use icefold::io::scenario::Scenario;
use icefold::model::{Model, Param};
use icefold::numerics::continuation::Problem;
use std::path::Path;

const FLUX: (f64, f64) = (1070.0, 1540.0);

fn model(file: Option<&str>, sets: &[&str]) -> Model {
    let sets: Vec<String> = sets.iter().map(|s| s.to_string()).collect();
    let path = file.map(|f| Path::new(env!("CARGO_MANIFEST_DIR")).join(f));
    Scenario::load(path.as_deref(), &sets).unwrap().model()
}

fn opts() -> TraceOptions {
    TraceOptions {
        integrate_jumps: false,
        sensitivities: false,
        ..TraceOptions::default()
    }
}

/// The folds (state, flux) of a one-parameter trace in flux of `m` on the
/// same discretisation as the fold system (the band temperatures as
/// unknowns, the ice a sub-grid fraction of a band).
fn slice_folds(m: &Model) -> Vec<(Vec<f64>, f64)> {
    let h = trace_subgrid(
        m,
        Param::Flux,
        FLUX.0,
        FLUX.1,
        30.0,
        -60.0,
        &opts(),
        &mut |_| {},
    );
    h.branches
        .iter()
        .flat_map(|b| b.folds.iter())
        .map(|f| (f.point.temperature.clone(), f.point.p))
        .collect()
}

/// Newton on H = [F; g] = 0 at a fixed across value from the state x, with
/// the given solver, until the step stops shrinking; returns the vary
/// value.
fn polish(m: &Model, fold: &(Vec<f64>, f64), a: f64, x0: &[f64], solver: FoldSolver) -> f64 {
    let sigma = fold_sigma(FLUX.0, FLUX.1);
    let mut prob = FoldCurveProblem::new(
        m.clone(),
        Param::Flux,
        Param::Obliquity,
        &fold.0,
        fold.1,
        sigma,
        solver,
    );
    // the bordering vectors of the point itself
    prob.set_param(a);
    prob.unstable_modes(x0);
    let mut x = x0.to_vec();
    let mut f = vec![0.0; x.len()];
    for it in 0..8 {
        prob.factor(&x, &mut f).unwrap();
        let res = f.iter().fold(0.0f64, |m, d| m.max(d.abs()));
        prob.solve(&mut f);
        x.iter_mut().zip(&f).for_each(|(x, d)| *x -= d);
        let step = f.iter().fold(0.0f64, |m, d| m.max(d.abs()));
        assert!(res.is_finite(), "obliquity {a}, iteration {it}");
        if step < 1e-13 {
            break;
        }
    }
    prob.vary_value(&x)
}

/// max |H| of the fold system of `m` at obliquity a, state u, flux p.
fn fold_residual(m: &Model, a: f64, u: &[f64], p: f64) -> f64 {
    let mut prob = FoldCurveProblem::new(
        m.clone(),
        Param::Flux,
        Param::Obliquity,
        u,
        p,
        fold_sigma(FLUX.0, FLUX.1),
        FoldSolver::Banded,
    );
    prob.set_param(a);
    let x = prob.state(u);
    prob.unstable_modes(&x);
    let mut h = vec![0.0; x.len()];
    prob.residual(&x, &mut h);
    h.iter().fold(0.0f64, |m, d| m.max(d.abs()))
}

/// The snowball fold (the lowest-flux fold) at obliquity `a`.
fn snowball_fold(m: &Model, a: f64) -> (Vec<f64>, f64) {
    let mut m = m.clone();
    m.set_param(Param::Obliquity, a);
    slice_folds(&m)
        .into_iter()
        .min_by(|x, y| x.1.total_cmp(&y.1))
        .expect("a fold")
}

/// The banded curve equals the dense one: at every across value of the
/// banded curve, the dense solver's Newton at that across value from the
/// banded point lands on the same vary value to 1e-10 (the two solve the
/// same equations, the dense one by LU of the full matrix and n
/// differences for g_u: an independent path; our requirement, issue 14).
/// Both curves are traced and span the same across range, to 0.01 degrees:
/// where a curve ends at a kink of the sub-grid ice edge, the end is
/// located to within the tracer's step, not to the solver's rounding.
fn banded_equals_dense(file: Option<&str>, sets: &[&str]) {
    let mut all = vec!["grid.bands=90"];
    all.extend(sets);
    let mut m = model(file, &all);
    let a0 = 23.0;
    m.set_param(Param::Obliquity, a0);
    let fold = snowball_fold(&m, a0);
    let range = (a0 - 4.0, a0 + 4.0);
    let trace = |solver| {
        trace_fold_curve_with(
            &m,
            Param::Flux,
            Param::Obliquity,
            &fold.0,
            fold.1,
            range,
            FLUX,
            1e-10,
            solver,
        )
        .0
    };
    let (banded, dense) = (trace(FoldSolver::Banded), trace(FoldSolver::Dense));
    eprintln!(
        "{file:?} {sets:?}: {} banded, {} dense points; fold at {:?}",
        banded.len(),
        dense.len(),
        fold.1
    );
    assert!(banded.len() >= 5, "{file:?}: {} points", banded.len());
    let mut worst: f64 = 0.0;
    let mut skipped = 0;
    for q in &banded {
        // the start, a fold of the one-parameter trace, is not corrected
        // onto H = 0: where the trace's fold is a corner of the sub-grid
        // edge (J regular, g != 0) it is no root of H
        let n = q.state.len() - 1;
        if fold_residual(&m, q.across, &q.state[..n], q.vary) > 1e-8 {
            assert_eq!((q.across, q.vary), (a0, fold.1), "{file:?}: off the curve");
            skipped += 1;
            continue;
        }
        let p = polish(&m, &fold, q.across, &q.state, FoldSolver::Dense);
        worst = worst.max((p - q.vary).abs());
        if (p - q.vary).abs() > 1e-10 {
            eprintln!("across {} banded {} dense {p}", q.across, q.vary);
        }
    }
    eprintln!(
        "{file:?}: {} banded points, max |Δ vary| against dense = {worst:e}",
        banded.len()
    );
    assert!(worst < 1e-10, "{file:?}: max |Δ vary| {worst:e}");
    assert!(skipped <= 1);
    let span = |c: &[icefold::analysis::foldcurve::FoldCurvePoint]| {
        c.iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), q| {
                (lo.min(q.across), hi.max(q.across))
            })
    };
    let (sb, sd) = (span(&banded), span(&dense));
    assert!(
        (sb.0 - sd.0).abs() < 0.01 && (sb.1 - sd.1).abs() < 0.01,
        "{file:?}: across spans {sb:?} vs {sd:?}"
    );
}

#[test]
fn banded_equals_dense_on_the_default_scenario() {
    banded_equals_dense(None, &[]);
}

/// Relaxation transport: J is diagonal plus rank one, and the banded
/// solver carries the rank-one term as one more border. With the smooth
/// albedo: with the step albedo neither solver continues the fold at
/// obliquity 23 beyond its first point (both stop there).
#[test]
fn banded_equals_dense_with_relaxation_transport() {
    banded_equals_dense(
        None,
        &["transport.kind=\"relaxation\"", "albedo.kind=\"smooth\""],
    );
}

#[test]
fn banded_equals_dense_on_the_moist_scenario() {
    banded_equals_dense(Some("scenarios/moist.toml"), &[]);
}

/// The fold curve passes through the fold that a one-parameter trace
/// locates at another obliquity (g = 0 exactly at a saddle-node, Govaerts
/// 2000; the trace refines its folds where the tangent's parameter part
/// vanishes, an independent condition): the vary value of the curve at
/// that obliquity equals the trace's fold to 1e-8, unless the trace's fold
/// is a corner of the sub-grid ice edge (a turn at a kink, where J is
/// regular: |H| > 1e-6 there), which the extended system does not see.
/// On the moist scenario (whose obliquity moves the fold; the default
/// scenario's curve from its obliquity-23 fold, a corner of the sub-grid
/// edge, settles on roots of H that the slices' traces do not report as
/// folds: 0.04 to 0.14 W m-2 away, the same with the dense solver, left for
/// a later look).
fn curve_passes_through_independent_folds(file: Option<&str>) {
    let mut m = model(file, &["grid.bands=90"]);
    let a0 = 23.0;
    m.set_param(Param::Obliquity, a0);
    let fold = snowball_fold(&m, a0);
    let (curve, _) = trace_fold_curve_with(
        &m,
        Param::Flux,
        Param::Obliquity,
        &fold.0,
        fold.1,
        (a0 - 4.0, a0 + 4.0),
        FLUX,
        1e-10,
        FoldSolver::Banded,
    );
    let mut checked = 0;
    for q in curve
        .iter()
        .filter(|q| (q.across - a0).abs() > 0.5)
        .step_by(3)
    {
        let a = q.across;
        let p = polish(&m, &fold, a, &q.state, FoldSolver::Banded);
        let mut ma = m.clone();
        ma.set_param(Param::Obliquity, a);
        let (u, independent) = slice_folds(&ma)
            .into_iter()
            .min_by(|x, y| (x.1 - p).abs().total_cmp(&(y.1 - p).abs()))
            .unwrap();
        eprintln!("obliquity {a}: curve {p}, trace {independent}");
        if (p - independent).abs() >= 1e-8 {
            // then the trace's fold must be a corner of the sub-grid edge,
            // where J is regular and g != 0, not a saddle-node
            let g = fold_residual(&m, a, &u, independent);
            assert!(
                g > 1e-6,
                "obliquity {a}: curve {p} trace {independent}, |H| {g:e}"
            );
            continue;
        }
        checked += 1;
    }
    assert!(checked >= 2, "{checked} folds checked");
}

#[test]
fn curve_passes_through_independent_folds_moist() {
    curve_passes_through_independent_folds(Some("scenarios/moist.toml"));
}

/// The work per Newton step grows linearly with the bands: the banded
/// solver's bordered-tridiagonal rows plus n per Jacobian evaluation,
/// divided by n and by the number of Newton steps, stays within a factor
/// 1.5 from 45 to 360 bands, while the dense reference's Jacobian
/// evaluations per step grow with n (its n differences for g_u: the
/// counter can tell the two apart). Common practice, no source.
#[test]
fn work_per_newton_step_is_linear() {
    let mut ratios = Vec::new();
    for n in [45usize, 90, 180, 360] {
        let mut m = model(None, &[&format!("grid.bands={n}")]);
        m.set_param(Param::Obliquity, 23.0);
        let fold = snowball_fold(&m, 23.0);
        let (curve, work) = trace_fold_curve_with(
            &m,
            Param::Flux,
            Param::Obliquity,
            &fold.0,
            fold.1,
            (22.0, 24.0),
            FLUX,
            1e-10,
            FoldSolver::Banded,
        );
        assert!(curve.len() >= 3 && work.factors > 0, "{n}: {work:?}");
        let per_step = (work.bordered_rows + n as u64 * work.jacobians) as f64
            / (n as f64 * work.factors as f64);
        eprintln!("{n} bands: {work:?}, work / (n x steps) = {per_step:.2}");
        ratios.push(per_step);
    }
    let (lo, hi) = ratios
        .iter()
        .fold((f64::INFINITY, 0.0f64), |(a, b), r| (a.min(*r), b.max(*r)));
    assert!(hi / lo < 1.5, "work / (n x steps): {ratios:?}");
    let mut dense = Vec::new();
    for n in [45usize, 90] {
        let mut m = model(None, &[&format!("grid.bands={n}")]);
        m.set_param(Param::Obliquity, 23.0);
        let fold = snowball_fold(&m, 23.0);
        let (_, work) = trace_fold_curve_with(
            &m,
            Param::Flux,
            Param::Obliquity,
            &fold.0,
            fold.1,
            (22.5, 23.5),
            FLUX,
            1e-10,
            FoldSolver::Dense,
        );
        dense.push(work.jacobians as f64 / work.factors as f64);
    }
    assert!(dense[1] > 1.8 * dense[0], "dense: {dense:?}");
}
