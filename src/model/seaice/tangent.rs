//! The tangent map of one sea-ice year, recorded once and replayed: the
//! Jacobian-vector products M v of the annual map Φ that Newton-Krylov
//! shooting needs, without forming the n x n monodromy matrix.
//!
//! Each backward-Euler step n -> n+1 of [`super`] is linearised exactly at
//! its solution (module docs of [`super`]): for a tangent b = δEⁿ,
//!
//! g = G_E b, x = -R_T⁻¹ (diag ρ b - diag c g), δEⁿ⁺¹ = b + Δt (G_T x + g),
//!
//! with G_E = ∂(a S)/∂Eⁿ (tridiagonal, the moving sub-grid edge), ρ and c
//! of the band regimes, G_T = ∂G/∂T (tridiagonal) and R_T = I - diag(c) G_T
//! (its pivoted factors kept). M v is the product of the N step maps
//! applied to v: O(n) per step, O(N n) per product, against O(N n²) for
//! the dense monodromy. The arithmetic is that of
//! [`SeasonalModel::year_with_jacobian`]'s column update, in the same
//! order, so M v equals the dense M times v column for column.

use super::{SeasonalError, SeasonalModel, ge_entries};
use crate::numerics::linalg::Tridiagonal;

/// One step's linearisation.
#[derive(Clone, Debug)]
struct StepLinear {
    /// G_E: sub-, main and super-diagonal (1/c_w of the column folded in).
    ge: [Vec<f64>; 3],
    rho: Vec<f64>,
    c: Vec<f64>,
    /// G_T (entries only).
    gt: Tridiagonal,
    /// R_T with its factors.
    rt: Tridiagonal,
}

impl StepLinear {
    fn new(n: usize) -> StepLinear {
        StepLinear {
            ge: [vec![0.0; n], vec![0.0; n], vec![0.0; n]],
            rho: vec![0.0; n],
            c: vec![0.0; n],
            gt: Tridiagonal::new(n),
            rt: Tridiagonal::new(n),
        }
    }
}

/// The linearisation of the last year integrated by
/// [`SeasonalModel::year_taped`], step by step; [`YearTape::apply`] gives
/// M v. Allocated once for a model's size (bands x steps per year).
#[derive(Clone, Debug)]
pub struct YearTape {
    n: usize,
    dt: f64,
    steps: Vec<StepLinear>,
    recorded: bool,
    ges: Vec<f64>,
    x: Vec<f64>,
}

impl YearTape {
    /// An empty tape for `sm` (its bands and steps per year).
    pub fn new(sm: &SeasonalModel) -> YearTape {
        let n = sm.len();
        YearTape {
            n,
            dt: sm.dt(),
            steps: (0..sm.steps_per_year())
                .map(|_| StepLinear::new(n))
                .collect(),
            recorded: false,
            ges: vec![0.0; n],
            x: vec![0.0; n],
        }
    }

    /// Dimension n of the state.
    pub fn len(&self) -> usize {
        self.n
    }

    /// True for a model of no bands.
    pub fn is_empty(&self) -> bool {
        self.n == 0
    }

    /// out = M v, M = ∂Φ/∂E at the start of the recorded year (module
    /// docs). Allocates nothing. Panics if no year was recorded.
    pub fn apply(&mut self, v: &[f64], out: &mut [f64]) {
        assert!(self.recorded, "YearTape::apply before a recorded year");
        let n = self.n;
        let dt = self.dt;
        out[..n].copy_from_slice(&v[..n]);
        let (ges, x) = (&mut self.ges, &mut self.x);
        for s in &self.steps {
            let [lo, di, up] = &s.ge;
            for i in 0..n {
                let mut g = di[i] * out[i];
                if i > 0 {
                    g += lo[i] * out[i - 1];
                }
                if i + 1 < n {
                    g += up[i] * out[i + 1];
                }
                ges[i] = g;
                x[i] = -(s.rho[i] * out[i] - s.c[i] * g);
            }
            s.rt.solve(x);
            let gt = &s.gt;
            for i in 0..n {
                let mut w = gt.diag[i] * x[i] + ges[i];
                if i > 0 {
                    w += gt.lower[i] * x[i - 1];
                }
                if i + 1 < n {
                    w += gt.upper[i] * x[i + 1];
                }
                out[i] += dt * w;
            }
        }
    }
}

impl SeasonalModel {
    /// The annual map Φ of the sea-ice model on `e` (as
    /// [`SeasonalModel::year`]), recording each step's linearisation in
    /// `tape` for [`YearTape::apply`]. Allocates nothing when the tape was
    /// made for this model's size.
    pub fn year_taped(&mut self, e: &mut [f64], tape: &mut YearTape) -> Result<(), SeasonalError> {
        if self.sea_ice.is_none() {
            return Err(SeasonalError::Invalid(
                "the recorded tangent year is that of the sea-ice model".into(),
            ));
        }
        if tape.n != self.len() || tape.steps.len() != self.steps_per_year() {
            *tape = YearTape::new(self);
        }
        tape.dt = self.dt();
        tape.recorded = false;
        for k in 0..self.steps_per_year() {
            self.step_sea_ice(k, e)?;
            let w = self.sea_ice.as_ref().expect("sea ice");
            let cap = &self.model().planet.heat_capacity;
            let s = &mut tape.steps[k];
            for i in 0..self.len() {
                let (lo, di, up) = ge_entries(&w.jac_a, cap, i);
                s.ge[0][i] = lo;
                s.ge[1][i] = di;
                s.ge[2][i] = up;
            }
            s.rho.copy_from_slice(&w.rho);
            s.c.copy_from_slice(&w.c);
            s.gt.copy_entries_from(&w.jac_g);
            s.rt.copy_factored_from(&w.rt);
        }
        tape.recorded = true;
        Ok(())
    }
}
