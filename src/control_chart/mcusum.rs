//! Crosier's multivariate cumulative sum (MCUSUM) chart.
//!
//! Crosier (1988) accumulates the centred rows in a vector `S_i` and
//! shrinks it towards zero by a reference value `k` at every step, in the
//! generalized (Mahalanobis) norm `‖v‖_Σ = √(vᵀ Σ⁻¹ v)`:
//!
//! ```text
//! C_i = ‖S_{i−1} + x_i − μ‖_Σ,
//! S_i = 0                                   if C_i ≤ k,
//! S_i = (S_{i−1} + x_i − μ) (1 − k/C_i)     otherwise,        S_0 = 0,
//! Y_i = ‖S_i‖_Σ = max(0, C_i − k),
//! ```
//!
//! and signals when `Y_i > h`. The reference value `k` is commonly half
//! the size `δ` of the shift to be detected quickly (the default, 0.5,
//! aims at `δ = 1`; common practice). Since `S_i` is `S_{i−1} + x_i − μ`
//! scaled by a number, `Y_i = C_i − k` exactly when `C_i > k`: per row,
//! one product with the triangular whitening factor `L⁻¹` of `Σ = L Lᵀ`;
//! `Σ⁻¹` is never formed.
//! Unlike the MEWMA distances, `C_i` depends on the previous step's
//! shrinking, so the rows are processed one after another.
//!
//! For one variable the scheme is Crosier's (1986) two-sided univariate
//! CUSUM: with `s = S/σ`, `s_i = sign(v)·max(0, |v| − k)`,
//! `v = s_{i−1} + (x_i − μ)/σ`, signal when `|s_i| > h`.
//!
//! **Limits.** `h` is set for an in-control average run length by
//! simulation ([`run_length`](super::run_length)); the run-length
//! distribution depends only on `p`, `k`, `h` and `δ = √(shiftᵀ Σ⁻¹
//! shift)`, not on the direction of the shift (Crosier 1988).
//!
//! **Cautions.** As for the MEWMA chart: limits assume independent,
//! multivariate normal in-control rows with known `μ` and `Σ`; estimated
//! parameters and autocorrelation change the false-alarm behaviour. A
//! signal is evidence for a closer look, not a verdict; decisions belong to
//! local procedures and qualified people.
//!
//! # Example
//! ```
//! use mvdist::control_chart::{InControlEstimate, McusumChart, McusumOptions};
//! use mvdist::Scatter;
//! use ndarray::Array2;
//!
//! let estimate = InControlEstimate::new(vec![0.0, 0.0], Scatter::diagonal(&[1.0, 4.0])?)?;
//! let chart = McusumChart::new(estimate, &McusumOptions::default(), 5.5)?;
//! // Invented rows: the second variable moves by one standard deviation (2).
//! let rows = Array2::from_shape_fn((40, 2), |(i, j)| {
//!     let shift = if j == 1 { 2.0 } else { 0.0 };
//!     shift + 0.3 * (((i * 5 + j) % 4) as f64 - 1.5)
//! });
//! let points = chart.monitor(rows.view())?;
//! let first = points.iter().find(|p| p.signal).ok_or("the shift should be signalled")?;
//! assert!(first.index < 20);
//! let why = first.diagnosis.as_ref().ok_or("signals carry a diagnosis")?;
//! assert_eq!(why.contributions.top_variable(), 1);
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```
//!
//! # References
//! - R. B. Crosier (1988). Multivariate generalizations of cumulative sum
//!   quality-control schemes. *Technometrics* 30, 291–303.
//! - R. B. Crosier (1986). A new two-sided cumulative sum quality control
//!   scheme. *Technometrics* 28, 187–194.

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

/// The parameters of an MCUSUM chart other than its limit. The setter
/// cannot fail and states its default; the value is checked where it is
/// used.
///
/// # Example
/// ```
/// use mvdist::control_chart::McusumOptions;
/// assert_eq!(McusumOptions::default().reference_value(), 0.5);
/// assert_eq!(McusumOptions::default().with_reference_value(0.75).reference_value(), 0.75);
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct McusumOptions {
    reference_value: f64,
}

impl Default for McusumOptions {
    fn default() -> Self {
        McusumOptions {
            reference_value: 0.5,
        }
    }
}

impl McusumOptions {
    /// The reference value `k ≥ 0`, in units of the generalized norm
    /// (default 0.5: half of a shift `δ = 1`).
    pub fn with_reference_value(mut self, k: f64) -> Self {
        self.reference_value = k;
        self
    }

    /// The reference value `k`.
    pub fn reference_value(&self) -> f64 {
        self.reference_value
    }

    /// Checks that `k` is finite and not negative.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] otherwise.
    pub fn validate(&self) -> Result<()> {
        let k = self.reference_value;
        if !(k.is_finite() && k >= 0.0) {
            return Err(Error::invalid(
                "reference value",
                format!("k = {k} is not a finite number ≥ 0"),
            ));
        }
        Ok(())
    }
}

/// One MCUSUM step: `S ← S + x − μ`, `C = √norm2(S)`, then the shrinking;
/// returns `Y_i`, or `None` if `C` is not finite.
#[inline(always)]
pub(crate) fn cusum_update(
    s: &mut [f64],
    x: &[f64],
    mu: &[f64],
    k: f64,
    norm2: impl FnOnce(&[f64]) -> f64,
) -> Option<f64> {
    for ((sj, &xj), &mj) in s.iter_mut().zip(x).zip(mu) {
        *sj += xj - mj;
    }
    let c = norm2(s).sqrt();
    if !c.is_finite() {
        return None;
    }
    if c <= k {
        s.fill(0.0);
        Some(0.0)
    } else {
        let shrink = 1.0 - k / c;
        for sj in s.iter_mut() {
            *sj *= shrink;
        }
        Some(c - k)
    }
}

/// An MCUSUM chart: in-control estimate, reference value `k` and limit
/// `h`.
///
/// See the [module documentation](self) for the definitions and cautions.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "McusumData", into = "McusumData")]
pub struct McusumChart {
    estimate: InControlEstimate,
    options: McusumOptions,
    limit: f64,
    order: ContributionOrder,
}

/// The serialized form, checked by [`McusumChart::new`].
#[derive(Serialize, Deserialize)]
struct McusumData {
    estimate: InControlEstimate,
    options: McusumOptions,
    limit: f64,
    contribution_order: ContributionOrder,
}

impl TryFrom<McusumData> for McusumChart {
    type Error = Error;
    fn try_from(d: McusumData) -> Result<Self> {
        if let ContributionOrder::Given(perm) = &d.contribution_order {
            check_permutation(perm, d.estimate.dim())?;
        }
        Ok(McusumChart::new(d.estimate, &d.options, d.limit)?
            .with_contribution_order(d.contribution_order))
    }
}

impl From<McusumChart> for McusumData {
    fn from(c: McusumChart) -> Self {
        McusumData {
            estimate: c.estimate,
            options: c.options,
            limit: c.limit,
            contribution_order: c.order,
        }
    }
}

impl McusumChart {
    /// A chart with limit `h` (signal when `Y_i > h`).
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] for a negative or non-finite `k` or a
    /// limit that is not finite and positive.
    pub fn new(estimate: InControlEstimate, options: &McusumOptions, limit: f64) -> Result<Self> {
        options.validate()?;
        check_limit(limit)?;
        Ok(McusumChart {
            estimate,
            options: *options,
            limit,
            order: ContributionOrder::LargestFirst,
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
    pub fn options(&self) -> &McusumOptions {
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
        ChartScheme::Mcusum(self.options)
    }

    /// The order of the terms reported with signals.
    pub fn contribution_order(&self) -> &ContributionOrder {
        &self.order
    }

    /// The zero state `S_0 = 0`.
    pub fn initial_state(&self) -> ChartState {
        ChartState::zero(self.dim())
    }

    /// Charts `rows` from the zero state: one point per row (statistic,
    /// limit, signal), and for each signal its `S_i` and per-variable terms
    /// (which add up to `Y_i²`).
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
        self.run(state, rows, &mut statistics, |index, s| {
            let terms = contributions(scatter, s, &self.order)
                .map_err(|_| Error::Overflow { row: index })?;
            diagnoses.push((
                index,
                ShiftDiagnosis {
                    vector: s.to_vec(),
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

    /// The statistics `Y_i` of `rows` only, continuing from `state` (which
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
        self.run(state, rows, out, |_, _| Ok(()))
    }

    fn run(
        &self,
        state: &mut ChartState,
        rows: ArrayView2<'_, f64>,
        out: &mut [f64],
        mut visit: impl FnMut(usize, &[f64]) -> Result<()>,
    ) -> Result<()> {
        let p = self.dim();
        check_input(rows, p, state, out.len())?;
        let mu = self.estimate.location();
        let factor = self.estimate.scatter().whitening_factor();
        let k = self.options.reference_value;
        let mut s = state.vector().to_vec();
        let mut row_copy = vec![0.0; p];
        let contiguous = rows.as_slice();
        for (i, o) in out.iter_mut().enumerate() {
            let x: &[f64] = match contiguous {
                Some(data) => &data[i * p..(i + 1) * p],
                None => {
                    for (c, &v) in row_copy.iter_mut().zip(rows.row(i).iter()) {
                        *c = v;
                    }
                    &row_copy
                }
            };
            let y = cusum_update(&mut s, x, mu, k, |v| {
                kernel::squared_norm_centred(factor, v)
            })
            .ok_or(Error::Overflow { row: i })?;
            *o = y;
            if y > self.limit {
                visit(i, &s)?;
            }
        }
        *state.vector_mut() = s;
        state.advance(rows.nrows());
        Ok(())
    }
}
