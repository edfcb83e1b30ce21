//! The multivariate exponentially weighted moving average (MEWMA) chart.
//!
//! A Shewhart T² chart judges each row on its own and is slow to notice a
//! small sustained shift of the mean. The MEWMA chart of Lowry, Woodall,
//! Champ and Rigdon (1992) accumulates evidence by smoothing the centred
//! rows:
//!
//! ```text
//! Z_i  = λ (x_i − μ) + (1 − λ) Z_{i−1},   Z_0 = 0,   0 < λ ≤ 1,
//! T²_i = Z_iᵀ Σ_{Z_i}⁻¹ Z_i,
//! Σ_{Z_i} = c_i Σ,   c_i = λ/(2 − λ) · [1 − (1 − λ)^{2i}]   (exact),
//!                    c_i = λ/(2 − λ)                        (asymptotic),
//! ```
//!
//! and signals when `T²_i > h`. Smaller `λ` remembers longer and detects
//! smaller shifts (`λ` between 0.05 and 0.25 is common practice); `λ = 1`
//! gives `Z_i = x_i − μ` and the Shewhart T² chart with known parameters.
//!
//! Because `Σ_{Z_i}` is a scalar multiple of `Σ`, `T²_i = d²(Z_i)/c_i`
//! with `d²` the squared generalized distance under `Σ`: per row, one
//! product with the triangular whitening factor `L⁻¹` of the Cholesky
//! factorization `Σ = L Lᵀ` (as for every distance in the crate);
//! `Σ⁻¹` is never formed. The recursion is sequential in time; the distances of each block of `Z_i`
//! are then computed together with the batch distance kernel.
//!
//! **Covariance form.** [`EwmaCovariance::Exact`] is the default: it is
//! the actual covariance of `Z_i`, so every `T²_i` has the same in-control
//! scale from the first row on (with the asymptotic form the first
//! statistics are understated, since early `Z_i` vary less than
//! `λ/(2−λ)·Σ`), and a shift present at start-up is noticed sooner. The
//! limit designed by [`run_length::limit_for_average_run_length`] is for
//! whichever form the options choose. Published tables of `h`, such as
//! Prabhu and Runger (1997), are for the asymptotic form: a limit taken
//! from them needs [`EwmaCovariance::Asymptotic`] (with the exact form the
//! same `h` gives a somewhat shorter in-control run length).
//!
//! **Limits.** `h` is set for an in-control average run length (ARL), by
//! simulation ([`run_length`]); by invariance the run-length distribution
//! depends only on `p`, `λ`, `h` and the size of the shift
//! `δ = √(shiftᵀ Σ⁻¹ shift)`, not on its direction.
//!
//! **Cautions.** The limits assume independent, multivariate normal
//! in-control rows with `μ` and `Σ` known; estimated parameters
//! ([`InControlEstimate`]) make the actual in-control run length random
//! and often shorter. Autocorrelated data need more care (the smoothing
//! does not remove dependence; false alarms come much more often). A
//! signal is evidence for a closer look at the process, not a verdict; the
//! decision belongs to local procedures and qualified people.
//!
//! # Example
//! ```
//! use mvdist::control_chart::{InControlEstimate, MewmaChart, MewmaOptions};
//! use mvdist::Scatter;
//! use ndarray::{array, Array2};
//!
//! let estimate = InControlEstimate::new(vec![0.0, 0.0], Scatter::diagonal(&[1.0, 1.0])?)?;
//! // h = 8.64 is the published limit for p = 2, λ = 0.1 (asymptotic
//! // covariance) with an in-control ARL of about 200 (Prabhu and Runger 1997).
//! let options = MewmaOptions::default()
//!     .with_smoothing(0.1)
//!     .with_covariance(mvdist::control_chart::EwmaCovariance::Asymptotic);
//! let chart = MewmaChart::new(estimate, &options, 8.64)?;
//! // A sustained shift of one standard deviation in the first variable.
//! // Invented rows for the demonstration: the shift plus a small pattern.
//! let rows = Array2::from_shape_fn((60, 2), |(i, j)| {
//!     let shift = if j == 0 { 1.0 } else { 0.0 };
//!     shift + 0.15 * (((i * 7 + j * 3) % 5) as f64 - 2.0)
//! });
//! let points = chart.monitor(rows.view())?;
//! let first = points.iter().find(|p| p.signal).ok_or("the shift should be signalled")?;
//! assert!(first.index < 20);
//! let why = first.diagnosis.as_ref().ok_or("signals carry a diagnosis")?;
//! assert_eq!(why.contributions.top_variable(), 0);
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```
//!
//! # References
//! - C. A. Lowry, W. H. Woodall, C. W. Champ and S. E. Rigdon (1992). A
//!   multivariate exponentially weighted moving average control chart.
//!   *Technometrics* 34, 46–53.
//! - S. S. Prabhu and G. C. Runger (1997). Designing a multivariate EWMA
//!   control chart. *J. Quality Technology* 29, 8–15.
//!
//! [`run_length`]: super::run_length
//! [`run_length::limit_for_average_run_length`]: super::run_length::limit_for_average_run_length

use super::shift_run::{
    check_input, check_limit, check_row_length, points_from, ChartScheme, ChartState,
    ShiftDiagnosis, ShiftPoint,
};
use super::InControlEstimate;
use crate::data::matrix_view;
use crate::error::{Error, Result};
use crate::explain::{check_permutation, contributions, ContributionOrder};
use crate::kernels::distance as kernel;
use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};

/// Rows whose `Z_i` are formed before their distances are computed
/// together (a multiple of the kernel's task size).
const BLOCK_ROWS: usize = 8192;

/// Which covariance of `Z_i` standardizes the MEWMA statistic.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum EwmaCovariance {
    /// `Σ_{Z_i} = λ/(2−λ) · [1 − (1−λ)^{2i}] · Σ`, the covariance of `Z_i`
    /// from the zero state (the default; see the [module
    /// documentation](self) for why).
    #[default]
    Exact,
    /// `Σ_Z = λ/(2−λ) · Σ`, the limit for large `i` (the form of the
    /// published tables of limits).
    Asymptotic,
}

/// The parameters of a MEWMA chart other than its limit. Setters cannot
/// fail and state their default; the values are checked once, where they
/// are used.
///
/// # Example
/// ```
/// use mvdist::control_chart::{EwmaCovariance, MewmaOptions};
///
/// let options = MewmaOptions::default().with_smoothing(0.2);
/// assert_eq!(options.covariance(), EwmaCovariance::Exact);
/// // c_1 = λ/(2−λ)·(1 − (1−λ)²) = λ² for the first row.
/// assert!((options.variance_factor(1)? - 0.04).abs() < 1e-15);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct MewmaOptions {
    smoothing: f64,
    covariance: EwmaCovariance,
}

impl Default for MewmaOptions {
    fn default() -> Self {
        MewmaOptions {
            smoothing: 0.1,
            covariance: EwmaCovariance::Exact,
        }
    }
}

impl MewmaOptions {
    /// The smoothing constant `λ`, in `(0, 1]` (default 0.1).
    pub fn with_smoothing(mut self, lambda: f64) -> Self {
        self.smoothing = lambda;
        self
    }

    /// The covariance of `Z_i` used (default [`EwmaCovariance::Exact`]).
    pub fn with_covariance(mut self, covariance: EwmaCovariance) -> Self {
        self.covariance = covariance;
        self
    }

    /// The smoothing constant `λ`.
    pub fn smoothing(&self) -> f64 {
        self.smoothing
    }

    /// The covariance form.
    pub fn covariance(&self) -> EwmaCovariance {
        self.covariance
    }

    /// Checks `0 < λ ≤ 1`.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] otherwise.
    pub fn validate(&self) -> Result<()> {
        let l = self.smoothing;
        if !(l > 0.0 && l <= 1.0) {
            return Err(Error::invalid(
                "smoothing",
                format!("λ = {l} is not in (0, 1]"),
            ));
        }
        Ok(())
    }

    /// The factor `c_i` with `Σ_{Z_i} = c_i Σ` at row `i ≥ 1` (see
    /// [`EwmaCovariance`]).
    ///
    /// # Errors
    /// As [`validate`](Self::validate); [`Error::InvalidParameter`] for
    /// `step = 0` (`Z_0 = 0` has no covariance).
    pub fn variance_factor(&self, step: u64) -> Result<f64> {
        if step == 0 {
            return Err(Error::invalid(
                "step",
                "rows are counted from 1; Z_0 = 0 has no covariance",
            ));
        }
        Ok(EwmaScale::new(self)?.at(step))
    }
}

/// The recursion's constants and the factor `c_i`, computed the same way
/// by the chart and by the run-length simulation.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct EwmaScale {
    pub(crate) lambda: f64,
    pub(crate) one_minus: f64,
    asymptotic: f64,
    exact: bool,
    /// The first step from which `c_i` equals the asymptotic factor in
    /// floating point.
    steady_from: u64,
}

impl EwmaScale {
    pub(crate) fn new(options: &MewmaOptions) -> Result<Self> {
        options.validate()?;
        let lambda = options.smoothing;
        let asymptotic = lambda / (2.0 - lambda);
        let exact = options.covariance == EwmaCovariance::Exact;
        let mut scale = EwmaScale {
            lambda,
            one_minus: 1.0 - lambda,
            asymptotic,
            exact,
            steady_from: 1,
        };
        if exact {
            // Smallest step whose raw factor rounds to the asymptotic one.
            let mut hi: u64 = 1;
            while scale.raw(hi) != asymptotic && hi < (1 << 62) {
                hi *= 2;
            }
            if scale.raw(hi) != asymptotic {
                scale.steady_from = u64::MAX;
            } else {
                let mut lo = hi / 2;
                while hi - lo > 1 {
                    let mid = lo + (hi - lo) / 2;
                    if scale.raw(mid) == asymptotic {
                        hi = mid;
                    } else {
                        lo = mid;
                    }
                }
                scale.steady_from = if scale.raw(1) == asymptotic { 1 } else { hi };
            }
        }
        Ok(scale)
    }

    /// `λ/(2−λ) · [1 − (1−λ)^{2i}]`, with the power as `exp(2i·ln(1−λ))`.
    fn raw(&self, step: u64) -> f64 {
        let decay = (2.0 * step as f64 * (-self.lambda).ln_1p()).exp();
        self.asymptotic * (1.0 - decay)
    }

    /// `c_i` for step `i ≥ 1`.
    #[inline]
    pub(crate) fn at(&self, step: u64) -> f64 {
        if !self.exact || step >= self.steady_from {
            self.asymptotic
        } else {
            self.raw(step)
        }
    }
}

/// `Z ← λ (x − μ) + (1 − λ) Z`.
#[inline(always)]
pub(crate) fn ewma_update(z: &mut [f64], x: &[f64], mu: &[f64], scale: &EwmaScale) {
    for ((zj, &xj), &mj) in z.iter_mut().zip(x).zip(mu) {
        *zj = scale.lambda * (xj - mj) + scale.one_minus * *zj;
    }
}

/// A MEWMA chart: in-control estimate, options and limit `h`.
///
/// See the [module documentation](self) for the definitions and cautions.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "MewmaData", into = "MewmaData")]
pub struct MewmaChart {
    estimate: InControlEstimate,
    options: MewmaOptions,
    limit: f64,
    order: ContributionOrder,
    scale: EwmaScale,
}

/// The serialized form, checked by [`MewmaChart::new`].
#[derive(Serialize, Deserialize)]
struct MewmaData {
    estimate: InControlEstimate,
    options: MewmaOptions,
    limit: f64,
    contribution_order: ContributionOrder,
}

impl TryFrom<MewmaData> for MewmaChart {
    type Error = Error;
    fn try_from(d: MewmaData) -> Result<Self> {
        if let ContributionOrder::Given(perm) = &d.contribution_order {
            check_permutation(perm, d.estimate.dim())?;
        }
        Ok(MewmaChart::new(d.estimate, &d.options, d.limit)?
            .with_contribution_order(d.contribution_order))
    }
}

impl From<MewmaChart> for MewmaData {
    fn from(c: MewmaChart) -> Self {
        MewmaData {
            estimate: c.estimate,
            options: c.options,
            limit: c.limit,
            contribution_order: c.order,
        }
    }
}

impl MewmaChart {
    /// A chart with limit `h` (signal when `T²_i > h`).
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] for `λ` outside `(0, 1]` or a limit that
    /// is not finite and positive.
    pub fn new(estimate: InControlEstimate, options: &MewmaOptions, limit: f64) -> Result<Self> {
        let scale = EwmaScale::new(options)?;
        check_limit(limit)?;
        Ok(MewmaChart {
            estimate,
            options: *options,
            limit,
            order: ContributionOrder::LargestFirst,
            scale,
        })
    }

    /// The order of the per-variable terms reported with each signal
    /// (default [`ContributionOrder::LargestFirst`]; a given order must be
    /// a permutation of the variables, checked when monitoring).
    pub fn with_contribution_order(mut self, order: ContributionOrder) -> Self {
        self.order = order;
        self
    }

    /// The in-control estimate.
    pub fn estimate(&self) -> &InControlEstimate {
        &self.estimate
    }

    /// The options.
    pub fn options(&self) -> &MewmaOptions {
        &self.options
    }

    /// The limit `h`.
    pub fn limit(&self) -> f64 {
        self.limit
    }

    /// Number of variables `p`.
    pub fn dim(&self) -> usize {
        self.estimate.dim()
    }

    /// The scheme (for [`run_length`](super::run_length)).
    pub fn scheme(&self) -> ChartScheme {
        ChartScheme::Mewma(self.options)
    }

    /// The order of the terms reported with signals.
    pub fn contribution_order(&self) -> &ContributionOrder {
        &self.order
    }

    /// The zero state `Z_0 = 0`.
    pub fn initial_state(&self) -> ChartState {
        ChartState::zero(self.dim())
    }

    /// Charts `rows` from the zero state: one point per row (statistic,
    /// limit, signal), and for each signal its `Z_i` and per-variable terms.
    ///
    /// # Errors
    /// As [`monitor_from`](Self::monitor_from).
    pub fn monitor(&self, rows: ArrayView2<'_, f64>) -> Result<Vec<ShiftPoint>> {
        self.monitor_from(&mut self.initial_state(), rows)
    }

    /// Charts `rows` continuing from `state`, which is advanced past them
    /// (and left unchanged on error). Monitoring in pieces with the state
    /// carried over gives the same points as one call on all rows (with
    /// `index` counted within each piece and `step` since the zero state).
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] for a different number of columns or a
    /// state of another dimension; [`Error::Empty`]; [`Error::NonFinite`]
    /// naming the row and column; [`Error::Overflow`] naming the row;
    /// [`Error::InvalidParameter`] for a contribution order that is not a
    /// permutation or a state with a non-finite entry.
    pub fn monitor_from(
        &self,
        state: &mut ChartState,
        rows: ArrayView2<'_, f64>,
    ) -> Result<Vec<ShiftPoint>> {
        if let ContributionOrder::Given(perm) = &self.order {
            check_permutation(perm, self.dim())?;
        }
        let mut statistics = vec![0.0; rows.nrows()];
        let mut diagnoses = Vec::new();
        let steps_before = state.steps();
        let scatter = self.estimate.scatter();
        let mut scaled = vec![0.0; self.dim()];
        self.run(state, rows, &mut statistics, |index, z, factor| {
            let root = factor.sqrt();
            for (s, &v) in scaled.iter_mut().zip(z) {
                *s = v / root;
            }
            let terms = contributions(scatter, &scaled, &self.order)
                .map_err(|_| Error::Overflow { row: index })?;
            diagnoses.push((
                index,
                ShiftDiagnosis {
                    vector: z.to_vec(),
                    contributions: terms,
                },
            ));
            Ok(())
        })?;
        Ok(points_from(statistics, diagnoses, self.limit, steps_before))
    }

    /// Charts one row continuing from `state` (advanced past it, and left
    /// unchanged on error): the online form of
    /// [`monitor_from`](Self::monitor_from). The point's `index` is 0.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] for a row of another length; otherwise as
    /// [`monitor_from`](Self::monitor_from).
    pub fn update(&self, state: &mut ChartState, row: &[f64]) -> Result<ShiftPoint> {
        check_row_length(row, self.dim())?;
        self.monitor_from(state, matrix_view(row, 1, row.len()))?
            .pop()
            .ok_or(Error::Empty { what: "rows" })
    }

    /// The statistics `T²_i` of `rows` only, continuing from `state` (which
    /// is advanced, and left unchanged on error), into `out` (one value per
    /// row): the fast path, without signal records.
    ///
    /// # Errors
    /// As [`monitor_from`](Self::monitor_from); [`Error::ShapeMismatch`]
    /// if `out` does not have one value per row.
    pub fn statistics_into(
        &self,
        state: &mut ChartState,
        rows: ArrayView2<'_, f64>,
        out: &mut [f64],
    ) -> Result<()> {
        self.run(state, rows, out, |_, _, _| Ok(()))
    }

    /// The recursion, block by block: `Z_i` of a block formed in order,
    /// their distances together, then `visit(row, Z_i, c_i)` for every
    /// signalling row.
    fn run(
        &self,
        state: &mut ChartState,
        rows: ArrayView2<'_, f64>,
        out: &mut [f64],
        mut visit: impl FnMut(usize, &[f64], f64) -> Result<()>,
    ) -> Result<()> {
        let p = self.dim();
        check_input(rows, p, state, out.len())?;
        let n = rows.nrows();
        let mu = self.estimate.location();
        let factor = self.estimate.scatter().whitening_factor();
        let zeros = vec![0.0; p];
        let scale = &self.scale;
        let mut z = state.vector().to_vec();
        let mut step = state.steps();
        let mut buf = vec![0.0; BLOCK_ROWS.min(n) * p];
        let mut row_copy = vec![0.0; p];
        let contiguous = rows.as_slice();
        let mut start = 0;
        while start < n {
            let m = BLOCK_ROWS.min(n - start);
            for (r, zb) in buf[..m * p].chunks_exact_mut(p).enumerate() {
                let x: &[f64] = match contiguous {
                    Some(data) => &data[(start + r) * p..(start + r + 1) * p],
                    None => {
                        for (c, &v) in row_copy.iter_mut().zip(rows.row(start + r).iter()) {
                            *c = v;
                        }
                        &row_copy
                    }
                };
                ewma_update(&mut z, x, mu, scale);
                zb.copy_from_slice(&z);
            }
            let block = &mut out[start..start + m];
            kernel::batch_squared_distances(
                factor,
                &zeros,
                matrix_view(&buf[..m * p], m, p),
                block,
            )
            .map_err(|e| match e {
                Error::NonFinite { row, .. } | Error::Overflow { row } => {
                    Error::Overflow { row: start + row }
                }
                other => other,
            })?;
            for (r, v) in block.iter_mut().enumerate() {
                let c = scale.at(step + 1 + r as u64);
                *v /= c;
                if !v.is_finite() {
                    return Err(Error::Overflow { row: start + r });
                }
                if *v > self.limit {
                    visit(start + r, &buf[r * p..(r + 1) * p], c)?;
                }
            }
            step += m as u64;
            start += m;
        }
        *state.vector_mut() = z;
        state.advance(n);
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_factor_follows_the_published_formula_and_switches_only_when_equal() {
        // Lowry et al. (1992): c_i = λ/(2−λ)·[1 − (1−λ)^{2i}], evaluated
        // here with powi; the switch to the asymptotic factor happens only
        // where the two agree in floating point.
        for lambda in [0.01, 0.05, 0.1, 0.3, 0.9, 1.0] {
            let o = MewmaOptions::default().with_smoothing(lambda);
            let scale = EwmaScale::new(&o).unwrap_or_else(|e| panic!("{e}"));
            let a = lambda / (2.0 - lambda);
            for i in 1..5000u64 {
                let direct = a * (1.0 - (1.0 - lambda).powi(2 * i as i32));
                let got = scale.at(i);
                assert!((got - direct).abs() <= 1e-13 * a, "λ={lambda} i={i}");
            }
            assert!(scale.steady_from < u64::MAX);
            assert_eq!(scale.at(scale.steady_from), a);
            if scale.steady_from > 1 {
                assert_ne!(scale.raw(scale.steady_from - 1), a);
            }
            let asymptotic = EwmaScale::new(&o.with_covariance(EwmaCovariance::Asymptotic))
                .unwrap_or_else(|e| panic!("{e}"));
            assert_eq!(asymptotic.at(1), a);
        }
    }
}
