//! The fitted distance model: location, scatter, sample size and origin.

use crate::calibration::{
    adjusted_p_values, check_probability, Adjustment, EmpiricalReference, PValueBasis, Reference,
    RowOrigin,
};
use crate::data::{check_row, check_row_finite, Rows};
use crate::error::{Error, Result};
use crate::estimate::{Estimate, FitMethod, McdStage, OasFormula, ShrinkageTarget};
use crate::explain::{contributions, ContributionOrder, Contributions};
use crate::kernels::distance as kernel;
use crate::moments::{Divisor, MomentAccumulator};
use crate::robust::{McdFit, McdOptions, RegularizedMcdFit, RegularizedMcdOptions};
use crate::scatter::Scatter;
use crate::shrinkage::ShrinkageFit;
use crate::whitening::{Whitener, WhiteningKind};
use ndarray::ArrayView2;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

mod held_out;
mod observed;

pub use observed::{ObservedContributions, ObservedRowScore, ObservedScores};

/// A fitted model for squared generalized distances: a location `μ`, a
/// validated [`Scatter`] `Σ`, and the number `n` of rows it was fitted on.
///
/// The model knows `n` and `p`, so it can pick the right reference
/// distribution for a p-value: say whether scored rows are
/// [`RowOrigin::New`] (F reference) or [`RowOrigin::InSample`] (Beta
/// reference); see [`crate::calibration`].
///
/// Models are plain data: `Send + Sync`, cheap to share behind an `Arc`,
/// and serializable with serde (deserializing re-validates the scatter).
/// A service can score on many threads while another thread swaps in a
/// refitted model:
///
/// ```
/// use mvdist::{DistanceModel, RowOrigin};
/// use ndarray::array;
/// use std::sync::{Arc, RwLock};
///
/// let fit = |shift: f64| {
///     let rows = array![[1.0, 2.0], [2.0, 2.9], [3.0, 4.2], [4.0, 4.8], [5.0, 6.1]] + shift;
///     DistanceModel::fit(rows.view()).map(Arc::new)
/// };
/// let current = RwLock::new(fit(0.0)?);
/// std::thread::scope(|s| {
///     s.spawn(|| {
///         // Scorers clone the Arc (cheap) and release the lock at once
///         // (a lock poisoned by a panicking writer still holds a model).
///         let model = Arc::clone(&current.read().unwrap_or_else(|e| e.into_inner()));
///         let scored = model.score_row(&[3.0, 4.0], RowOrigin::New, 0.01);
///         assert!(scored.is_ok());
///     });
///     s.spawn(|| {
///         // Fit outside the lock; swap only a model that fitted.
///         if let Ok(next) = fit(0.5) {
///             *current.write().unwrap_or_else(|e| e.into_inner()) = next;
///         }
///     });
/// });
/// # Ok::<(), mvdist::Error>(())
/// ```
///
/// # Example
/// ```
/// use mvdist::{DistanceModel, RowOrigin};
/// use ndarray::array;
///
/// let reference = array![
///     [10.1, 4.9], [9.8, 5.2], [10.3, 5.1], [9.9, 4.8], [10.0, 5.0],
///     [10.2, 5.3], [9.7, 4.9], [10.1, 5.0], [9.9, 5.1], [10.0, 4.7],
/// ];
/// let model = DistanceModel::fit(reference.view())?;
/// let new_rows = array![[10.0, 5.0], [11.5, 3.9]];
/// let scores = model.score(new_rows.view(), RowOrigin::New)?;
/// assert!(scores.p_values()[0] > 0.5);
/// assert!(scores.p_values()[1] < 0.01);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "ModelData", into = "ModelData")]
pub struct DistanceModel {
    location: Vec<f64>,
    scatter: Scatter,
    sample_size: usize,
    estimator: FitMethod,
    calibration: Option<EmpiricalReference>,
}

#[derive(Serialize, Deserialize)]
struct ModelData {
    n: usize,
    location: Vec<f64>,
    scatter: Scatter,
    estimator: FitMethod,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    calibration: Option<EmpiricalReference>,
}

impl TryFrom<ModelData> for DistanceModel {
    type Error = Error;
    fn try_from(d: ModelData) -> Result<Self> {
        let model = DistanceModel::from_parts(d.location, d.scatter, d.n, d.estimator)?;
        Ok(match d.calibration {
            Some(c) => model.with_calibration(c),
            None => model,
        })
    }
}

impl From<DistanceModel> for ModelData {
    fn from(m: DistanceModel) -> Self {
        ModelData {
            n: m.sample_size,
            location: m.location,
            scatter: m.scatter,
            estimator: m.estimator,
            calibration: m.calibration,
        }
    }
}

/// Squared distances and p-values of a batch of rows.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "ScoresData")]
pub struct Scores {
    squared_distances: Vec<f64>,
    p_values: Vec<f64>,
    basis: PValueBasis,
}

/// The serialized form of [`Scores`], checked on the way in: one p-value
/// per squared distance.
#[derive(Deserialize)]
struct ScoresData {
    squared_distances: Vec<f64>,
    p_values: Vec<f64>,
    basis: PValueBasis,
}

impl TryFrom<ScoresData> for Scores {
    type Error = Error;
    fn try_from(d: ScoresData) -> Result<Self> {
        if d.squared_distances.len() != d.p_values.len() {
            return Err(Error::Format {
                reason: format!(
                    "{} squared distances but {} p-values",
                    d.squared_distances.len(),
                    d.p_values.len()
                ),
            });
        }
        Ok(Scores {
            squared_distances: d.squared_distances,
            p_values: d.p_values,
            basis: d.basis,
        })
    }
}

impl Scores {
    /// The squared distance of each row.
    pub fn squared_distances(&self) -> &[f64] {
        &self.squared_distances
    }

    /// The p-value of each row, from [`basis`](Self::basis).
    pub fn p_values(&self) -> &[f64] {
        &self.p_values
    }

    /// Where the p-values come from: a reference law or held-out rows.
    pub fn basis(&self) -> PValueBasis {
        self.basis
    }

    /// The reference law used, for p-values from a law (`None` for
    /// p-values from held-out rows).
    pub fn reference(&self) -> Option<Reference> {
        self.basis.reference()
    }

    /// p-values adjusted for multiple testing.
    ///
    /// # Errors
    /// As [`adjusted_p_values`].
    pub fn adjusted_p_values(&self, adjustment: Adjustment) -> Result<Vec<f64>> {
        adjusted_p_values(&self.p_values, adjustment)
    }

    /// Flags: `true` where the (adjusted) p-value is at most `alpha`.
    ///
    /// A flag is evidence that a row is unusual under the model, not a
    /// verdict; see the cautions in [`crate::calibration`].
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `0 < alpha < 1`.
    pub fn flags(&self, alpha: f64, adjustment: Adjustment) -> Result<Vec<bool>> {
        check_probability(alpha)?;
        Ok(self
            .adjusted_p_values(adjustment)?
            .into_iter()
            .map(|q| q <= alpha)
            .collect())
    }
}

/// The score of a single row.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct RowScore {
    /// Squared generalized distance.
    pub squared_distance: f64,
    /// Upper-tail p-value under the chosen reference.
    pub p_value: f64,
    /// Whether `p_value ≤ alpha`.
    pub flagged: bool,
}

impl DistanceModel {
    /// Fits the sample mean and the unbiased (`n − 1`) covariance.
    ///
    /// # Errors
    /// [`Error::Empty`]; [`Error::NonFinite`] naming the row and column;
    /// [`Error::TooFewRows`] unless `n > p`; [`Error::ZeroVariance`] or
    /// [`Error::Collinear`] naming the column.
    pub fn fit<'a>(rows: impl Into<Rows<'a>>) -> Result<Self> {
        Self::fit_with_divisor(rows, Divisor::Unbiased)
    }

    /// Fits the sample mean and covariance with the given divisor.
    ///
    /// # Errors
    /// As [`fit`](Self::fit).
    pub fn fit_with_divisor<'a>(rows: impl Into<Rows<'a>>, divisor: Divisor) -> Result<Self> {
        rows.into()
            .with_f64(|rows| Self::fit_classical(rows, divisor))
    }

    fn fit_classical(rows: ArrayView2<'_, f64>, divisor: Divisor) -> Result<Self> {
        if rows.ncols() == 0 {
            return Err(Error::Empty { what: "columns" });
        }
        if rows.nrows() == 0 {
            return Err(Error::Empty { what: "rows" });
        }
        let acc = MomentAccumulator::from_rows(rows)?;
        Self::from_accumulator(&acc, divisor)
    }

    /// Fits the weighted mean and covariance (weights read as reliability
    /// weights; see [`Divisor`]). The model's sample size is the number of
    /// rows with positive weight.
    ///
    /// # Errors
    /// As [`fit`](Self::fit), and those of
    /// [`MomentAccumulator::from_weighted_rows`].
    pub fn fit_weighted<'a>(
        rows: impl Into<Rows<'a>>,
        weights: &[f64],
        divisor: Divisor,
    ) -> Result<Self> {
        rows.into()
            .with_f64(|rows| Self::fit_weighted_f64(rows, weights, divisor))
    }

    fn fit_weighted_f64(
        rows: ArrayView2<'_, f64>,
        weights: &[f64],
        divisor: Divisor,
    ) -> Result<Self> {
        if rows.ncols() == 0 {
            return Err(Error::Empty { what: "columns" });
        }
        let acc = MomentAccumulator::from_weighted_rows(rows, weights)?;
        let positive = weights.iter().filter(|&&w| w > 0.0).count();
        let scatter = acc.scatter(divisor)?;
        Self::from_parts(
            acc.mean().to_vec(),
            scatter,
            positive,
            FitMethod::Weighted { divisor },
        )
    }

    /// Fits the sample mean and the Ledoit–Wolf shrinkage covariance; see
    /// [`crate::shrinkage`] for the formula and the cautions about p-values.
    ///
    /// # Errors
    /// As [`crate::shrinkage::ledoit_wolf`].
    ///
    /// # Example
    /// ```
    /// use mvdist::DistanceModel;
    /// use ndarray::array;
    /// // Fewer rows than variables: the classical fit fails, this one works.
    /// let rows = array![[1.0, 2.0, 0.5, 3.0], [2.0, 1.5, 1.0, 2.0], [0.5, 3.0, 2.0, 2.5]];
    /// assert!(DistanceModel::fit(rows.view()).is_err());
    /// let model = DistanceModel::fit_ledoit_wolf(rows.view())?;
    /// assert!(model.squared_distance(&[1.0, 2.0, 1.0, 2.5])? > 0.0);
    /// # Ok::<(), mvdist::Error>(())
    /// ```
    pub fn fit_ledoit_wolf<'a>(rows: impl Into<Rows<'a>>) -> Result<Self> {
        rows.into()
            .with_f64(|rows| crate::shrinkage::ledoit_wolf(rows)?.into_model())
    }

    /// Fits the sample mean and the OAS shrinkage covariance with the given
    /// formula; see [`crate::shrinkage`].
    ///
    /// # Errors
    /// As [`crate::shrinkage::oas`].
    ///
    /// # Example
    /// ```
    /// use mvdist::{shrinkage::OasFormula, DistanceModel, FitMethod};
    /// use ndarray::array;
    /// let rows = array![[1.0, 2.0], [2.0, 2.5], [4.0, 3.0], [3.0, 5.0], [0.0, 1.0]];
    /// let model = DistanceModel::fit_oas(rows.view(), OasFormula::Published)?;
    /// assert!(matches!(model.fit_method(), FitMethod::Oas { .. }));
    /// # Ok::<(), mvdist::Error>(())
    /// ```
    pub fn fit_oas<'a>(rows: impl Into<Rows<'a>>, formula: OasFormula) -> Result<Self> {
        rows.into()
            .with_f64(|rows| crate::shrinkage::oas(rows, formula)?.into_model())
    }

    /// Fits the sample mean and `(1 − ρ) S + ρ T` with a caller-chosen
    /// intensity and target; see [`crate::shrinkage::shrink`].
    ///
    /// # Errors
    /// As [`crate::shrinkage::shrink`].
    ///
    /// # Example
    /// ```
    /// use mvdist::{shrinkage::ShrinkageTarget, DistanceModel};
    /// use ndarray::array;
    /// let rows = array![[1.0, 2.0], [2.0, 3.5], [3.0, 5.0], [4.0, 5.5]];
    /// let model = DistanceModel::fit_shrunk(rows.view(), 0.2, ShrinkageTarget::ScaledIdentity)?;
    /// assert_eq!(model.dim(), 2);
    /// # Ok::<(), mvdist::Error>(())
    /// ```
    pub fn fit_shrunk<'a>(
        rows: impl Into<Rows<'a>>,
        intensity: f64,
        target: ShrinkageTarget,
    ) -> Result<Self> {
        rows.into()
            .with_f64(|rows| crate::shrinkage::shrink(rows, intensity, target)?.into_model())
    }

    /// Fits the one-step reweighted minimum covariance determinant estimate
    /// by FastMCD; see [`crate::robust`]. Its [`reference`](Self::reference)
    /// is χ²(p) for every row origin. For the raw estimate (Hardin–Rocke F
    /// reference) use [`crate::robust::McdFit::raw_model`].
    ///
    /// # Errors
    /// As [`crate::robust::minimum_covariance_determinant`], including
    /// [`Error::ExactFit`] when at least `h` rows lie on a hyperplane.
    ///
    /// # Example
    /// ```
    /// use mvdist::{robust::McdOptions, DistanceModel, RowOrigin};
    /// use ndarray::Array2;
    /// // 40 rows on a tilted ellipse and 6 gross outliers.
    /// let rows = Array2::from_shape_fn((46, 2), |(i, j)| {
    ///     let t = i as f64 * 0.7;
    ///     if i >= 40 { 30.0 + i as f64 } else if j == 0 { t.cos() * 2.0 } else { t.sin() + 0.5 * t.cos() }
    /// });
    /// let model = DistanceModel::fit_mcd(rows.view(), &McdOptions::default().with_seed(1))?;
    /// let cutoff = model.cutoff(0.025, RowOrigin::InSample)?;
    /// assert!(model.squared_distance(&[70.0, 70.0])? > cutoff);
    /// # Ok::<(), mvdist::Error>(())
    /// ```
    pub fn fit_mcd<'a>(rows: impl Into<Rows<'a>>, options: &McdOptions) -> Result<Self> {
        rows.into()
            .with_f64(|rows| crate::robust::minimum_covariance_determinant(rows, options)?.model())
    }

    /// Fits the minimum regularized covariance determinant estimate (for
    /// data with about as many or more variables than rows); see
    /// [`crate::robust::minimum_regularized_covariance_determinant`]. Its
    /// [`reference`](Self::reference) is χ²(p), an approximation.
    ///
    /// # Errors
    /// As [`crate::robust::minimum_regularized_covariance_determinant`].
    ///
    /// # Example
    /// ```
    /// use mvdist::{robust::RegularizedMcdOptions, DistanceModel, FitMethod};
    /// use ndarray::Array2;
    /// // 12 rows of 15 variables: the classical fit is impossible.
    /// let rows = Array2::from_shape_fn((12, 15), |(i, j)| ((i * 7 + j * 5) as f64 * 0.9).sin());
    /// assert!(DistanceModel::fit(rows.view()).is_err());
    /// let model = DistanceModel::fit_regularized_mcd(rows.view(), &RegularizedMcdOptions::default())?;
    /// assert!(matches!(model.fit_method(), FitMethod::RegularizedMcd { .. }));
    /// # Ok::<(), mvdist::Error>(())
    /// ```
    pub fn fit_regularized_mcd<'a>(
        rows: impl Into<Rows<'a>>,
        options: &RegularizedMcdOptions,
    ) -> Result<Self> {
        crate::robust::minimum_regularized_covariance_determinant(rows, options)?.model()
    }

    /// The model of the rows summarized by an accumulator.
    ///
    /// # Errors
    /// As [`MomentAccumulator::scatter`].
    pub fn from_accumulator(acc: &MomentAccumulator, divisor: Divisor) -> Result<Self> {
        if acc.count() == 0 {
            return Err(Error::Empty { what: "rows" });
        }
        let scatter = acc.scatter(divisor)?;
        Self::from_parts(
            acc.mean().to_vec(),
            scatter,
            acc.count() as usize,
            FitMethod::Classical { divisor },
        )
    }

    /// A model from a location and scatter estimated elsewhere, with the
    /// number of rows `sample_size` they were estimated from (used by the
    /// Beta and F references).
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] if the location's length differs from the
    /// scatter's dimension; [`Error::NonFinite`] for a non-finite location;
    /// [`Error::InvalidParameter`] if `sample_size` is 0, an MCD
    /// estimator's `wishart_dof` is not valid for [`Reference::reweighted_mcd`],
    /// or a regularized MCD's regularization is outside `[0, 1]` or its
    /// condition bound not above 1.
    pub fn from_parts(
        location: Vec<f64>,
        scatter: Scatter,
        sample_size: usize,
        estimator: FitMethod,
    ) -> Result<Self> {
        if location.len() != scatter.dim() {
            return Err(Error::ShapeMismatch {
                what: "location length",
                expected: scatter.dim(),
                found: location.len(),
            });
        }
        check_row_finite(&location, 0)?;
        if sample_size == 0 {
            return Err(Error::invalid("sample size", "must be at least 1"));
        }
        if let FitMethod::Mcd {
            wishart_dof: Some(m),
            ..
        } = estimator
        {
            Reference::reweighted_mcd(scatter.dim(), m)?;
        }
        if let FitMethod::RegularizedMcd {
            regularization,
            condition_bound,
            ..
        } = estimator
        {
            if !(0.0..=1.0).contains(&regularization) {
                return Err(Error::invalid(
                    "regularization",
                    format!("{regularization} is not in [0, 1]"),
                ));
            }
            if !(condition_bound > 1.0) {
                return Err(Error::invalid(
                    "condition bound",
                    format!("{condition_bound} is not above 1"),
                ));
            }
        }
        Ok(DistanceModel {
            location,
            scatter,
            sample_size,
            estimator,
            calibration: None,
        })
    }

    /// A model from an estimator's [`Estimate`].
    ///
    /// # Errors
    /// As [`from_parts`](Self::from_parts).
    pub fn from_estimate(estimate: Estimate) -> Result<Self> {
        let (location, scatter, sample_size, estimator) = estimate.into_parts();
        Self::from_parts(location, scatter, sample_size, estimator)
    }

    /// Number of variables `p`.
    pub fn dim(&self) -> usize {
        self.location.len()
    }

    /// Number of rows `n` the model was fitted on.
    pub fn sample_size(&self) -> usize {
        self.sample_size
    }

    /// The location `μ`.
    pub fn location(&self) -> &[f64] {
        &self.location
    }

    /// The scatter `Σ`.
    pub fn scatter(&self) -> &Scatter {
        &self.scatter
    }

    /// How the model was estimated.
    pub fn fit_method(&self) -> &FitMethod {
        &self.estimator
    }

    fn check_point(&self, x: &[f64]) -> Result<()> {
        check_row(x, self.dim(), 0)
    }

    /// Squared distance of one row to the location, `(x − μ)ᵀ Σ⁻¹ (x − μ)`.
    /// Allocates nothing for `p ≤ 64`.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] for a row of the wrong length;
    /// [`Error::NonFinite`] (row 0); [`Error::Overflow`].
    pub fn squared_distance(&self, x: &[f64]) -> Result<f64> {
        self.check_point(x)?;
        finite(kernel::squared_distance_row(
            self.scatter.whitening_factor(),
            &self.location,
            x,
            None,
        ))
    }

    /// As [`squared_distance`](Self::squared_distance), using `scratch` (at
    /// least `p` values) instead of allocating when `p > 64`.
    ///
    /// # Errors
    /// As [`squared_distance`](Self::squared_distance).
    pub fn squared_distance_with_scratch(&self, x: &[f64], scratch: &mut [f64]) -> Result<f64> {
        self.check_point(x)?;
        finite(kernel::squared_distance_row(
            self.scatter.whitening_factor(),
            &self.location,
            x,
            Some(scratch),
        ))
    }

    /// As [`squared_distance`](Self::squared_distance) for single-precision
    /// input (converted to `f64` before centring). Allocates nothing for
    /// `p ≤ 64`.
    ///
    /// # Errors
    /// As [`squared_distance`](Self::squared_distance).
    pub fn squared_distance_f32(&self, x: &[f32]) -> Result<f64> {
        let p = self.dim();
        if x.len() != p {
            return Err(Error::ShapeMismatch {
                what: "row length (number of columns)",
                expected: p,
                found: x.len(),
            });
        }
        let mut stack = [0.0f64; 64];
        let mut heap;
        let wide: &mut [f64] = if p <= 64 {
            &mut stack[..p]
        } else {
            heap = vec![0.0; p];
            &mut heap
        };
        for (w, &v) in wide.iter_mut().zip(x) {
            *w = f64::from(v);
        }
        self.squared_distance(wide)
    }

    /// As [`score_row`](Self::score_row) for single-precision input.
    ///
    /// # Errors
    /// As [`score_row`](Self::score_row).
    pub fn score_row_f32(&self, x: &[f32], origin: RowOrigin, alpha: f64) -> Result<RowScore> {
        check_probability(alpha)?;
        let reference = self.reference(origin)?;
        let d2 = self.squared_distance_f32(x)?;
        let p_value = reference.p_value(d2);
        Ok(RowScore {
            squared_distance: d2,
            p_value,
            flagged: p_value <= alpha,
        })
    }

    /// Squared distance computed with iterative refinement in extended
    /// precision: use it when the scatter is very ill-conditioned
    /// ([`Scatter::condition_number`] above about 1e8) and full accuracy
    /// matters.
    ///
    /// # Errors
    /// As [`squared_distance`](Self::squared_distance).
    pub fn squared_distance_refined(&self, x: &[f64]) -> Result<f64> {
        self.check_point(x)?;
        let c: Vec<f64> = x.iter().zip(&self.location).map(|(a, b)| a - b).collect();
        finite(self.scatter.squared_norm_refined(&c)?)
    }

    /// Squared distances of every row, in parallel for large inputs.
    ///
    /// `rows` is an ndarray view (any layout) or a row-major slice with a
    /// column count ([`Rows::from_slice`]), of `f64` or `f32` values.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`]; [`Error::NonFinite`] or [`Error::Overflow`]
    /// naming the first offending row.
    pub fn squared_distances<'a>(&self, rows: impl Into<Rows<'a>>) -> Result<Vec<f64>> {
        let rows = rows.into();
        let mut out = vec![0.0; rows.nrows()];
        self.squared_distances_into(rows, &mut out)?;
        Ok(out)
    }

    /// Squared distances written into a caller-owned buffer (one value per
    /// row); no allocation besides per-task scratch.
    ///
    /// # Errors
    /// As [`squared_distances`](Self::squared_distances);
    /// [`Error::ShapeMismatch`] if `out` has the wrong length.
    pub fn squared_distances_into<'a>(
        &self,
        rows: impl Into<Rows<'a>>,
        out: &mut [f64],
    ) -> Result<()> {
        let rows = rows.into();
        if rows.ncols() != self.dim() {
            return Err(Error::ShapeMismatch {
                what: "number of columns",
                expected: self.dim(),
                found: rows.ncols(),
            });
        }
        check_output(out.len(), rows.nrows())?;
        let factor = self.scatter.whitening_factor();
        match rows {
            Rows::F64(x) => kernel::batch_squared_distances(factor, &self.location, x, out),
            Rows::F32(x) => kernel::batch_squared_distances_f32(factor, &self.location, x, out),
        }
    }

    /// The reference distribution for rows of the given origin, chosen by
    /// the estimator:
    ///
    /// | estimator | `New`, `InSample` | `KnownParameters` |
    /// |---|---|---|
    /// | classical, weighted, supplied | F, Beta (exact under normality) | χ²(p) |
    /// | shrinkage (Ledoit–Wolf, OAS, fixed) | F, Beta (approximate; see [`crate::shrinkage`]) | χ²(p) |
    /// | MCD, reweighted, simulated `m` | scaled F ([`Reference::reweighted_mcd`]) | χ²(p) |
    /// | MCD, reweighted, no `m` (`n > 1000` or no simulation) | χ²(p) (common practice; Rousseeuw and Van Zomeren 1990) | χ²(p) |
    /// | MCD, raw | Hardin–Rocke F ([`Reference::raw_mcd`]) | χ²(p) |
    /// | regularized MCD (MRCD), raw or reweighted | χ²(p) (approximate; see below) | χ²(p) |
    ///
    /// The F and Beta laws are stated for the unbiased (`n − 1`) covariance;
    /// for a model whose scatter uses the divisor `n` (classical fits with
    /// [`Divisor::MaximumLikelihood`], and the shrinkage estimates, which
    /// start from that covariance) the reference rescales each squared
    /// distance by `(n − 1)/n` first ([`Reference::with_divisor`]). A
    /// weighted fit with the divisor `n` has no F or Beta reference.
    ///
    /// For the MRCD ([`crate::robust::minimum_regularized_covariance_determinant`])
    /// χ²(p) is the large-sample law of distances from the true parameters
    /// and nothing more: the regularization pulls the scatter toward the
    /// standardized identity, and with `p` near or above `n` the estimate
    /// is far from the truth in many directions, so the tail of its
    /// distances can be much lighter or heavier than χ²(p). Read its
    /// p-values as a ranking of rows; for calibrated p-values hold out
    /// rows ([`crate::held_out`]).
    ///
    /// # Errors
    /// [`Error::TooFewRows`] if the model's sample is too small for that
    /// reference (`n > p` for new rows, `n > p + 1` for in-sample rows);
    /// for a raw MCD model, the errors of [`Reference::raw_mcd`]; for a
    /// reweighted one, those of [`Reference::reweighted_mcd`];
    /// [`Error::InvalidParameter`] for new or in-sample rows of a weighted
    /// fit with the divisor `n`.
    pub fn reference(&self, origin: RowOrigin) -> Result<Reference> {
        self.reference_in(origin, self.dim())
    }

    /// The reference of [`reference`](Self::reference) for a squared
    /// distance on `dim` of the variables (the marginal of the model on
    /// them): used for rows with empty cells.
    pub(crate) fn reference_in(&self, origin: RowOrigin, dim: usize) -> Result<Reference> {
        match (&self.estimator, origin) {
            (_, RowOrigin::KnownParameters) => Reference::chi_square(dim),
            (
                FitMethod::Mcd {
                    stage: McdStage::Reweighted,
                    wishart_dof,
                    ..
                },
                _,
            ) => match *wishart_dof {
                Some(m) => Reference::reweighted_mcd(dim, m),
                None => Reference::chi_square(dim),
            },
            (FitMethod::RegularizedMcd { .. }, _) => Reference::chi_square(dim),
            (
                FitMethod::Mcd {
                    stage: McdStage::Raw,
                    subset_size,
                    ..
                },
                _,
            ) => Reference::raw_mcd(self.sample_size, dim, *subset_size),
            (
                FitMethod::Weighted {
                    divisor: Divisor::MaximumLikelihood,
                },
                _,
            ) => Err(Error::invalid(
                "row origin",
                "a weighted fit with the maximum-likelihood divisor has no F or Beta \
                 reference (its scale depends on the weights); refit with \
                 Divisor::Unbiased, or score with RowOrigin::KnownParameters",
            )),
            (estimator, _) => Ok(Reference::for_origin(origin, self.sample_size, dim)?
                .with_divisor(reference_divisor(estimator))),
        }
    }

    /// The squared distance beyond which rows of the given origin have
    /// p-values below `alpha`.
    ///
    /// # Errors
    /// As [`reference`](Self::reference) and [`Reference::cutoff`].
    pub fn cutoff(&self, alpha: f64, origin: RowOrigin) -> Result<f64> {
        self.reference(origin)?.cutoff(alpha)
    }

    /// Squared distances and p-values of every row.
    ///
    /// # Errors
    /// As [`squared_distances`](Self::squared_distances) and
    /// [`reference`](Self::reference).
    pub fn score<'a>(&self, rows: impl Into<Rows<'a>>, origin: RowOrigin) -> Result<Scores> {
        let rows = rows.into();
        let mut squared_distances = vec![0.0; rows.nrows()];
        let mut p_values = vec![0.0; rows.nrows()];
        let reference = self.score_into(rows, origin, &mut squared_distances, &mut p_values)?;
        Ok(Scores {
            squared_distances,
            p_values,
            basis: PValueBasis::Law(reference),
        })
    }

    /// As [`score`](Self::score), writing squared distances and p-values
    /// into caller-owned buffers (one value per row each); returns the
    /// reference used. For flags against a fixed level without p-values,
    /// prepare a [`Scorer`](crate::Scorer).
    ///
    /// # Errors
    /// As [`score`](Self::score); [`Error::ShapeMismatch`] if a buffer has
    /// the wrong length.
    pub fn score_into<'a>(
        &self,
        rows: impl Into<Rows<'a>>,
        origin: RowOrigin,
        squared_distances: &mut [f64],
        p_values: &mut [f64],
    ) -> Result<Reference> {
        let rows = rows.into();
        let reference = self.reference(origin)?;
        check_output(p_values.len(), rows.nrows())?;
        self.squared_distances_into(rows, squared_distances)?;
        p_values_into(&reference, squared_distances, p_values);
        Ok(reference)
    }

    /// Scores one row: squared distance, p-value, and whether
    /// `p_value ≤ alpha`. Allocates nothing for `p ≤ 64`.
    ///
    /// # Errors
    /// As [`squared_distance`](Self::squared_distance) and
    /// [`reference`](Self::reference); [`Error::InvalidParameter`] for an
    /// `alpha` outside (0, 1).
    pub fn score_row(&self, x: &[f64], origin: RowOrigin, alpha: f64) -> Result<RowScore> {
        check_probability(alpha)?;
        let reference = self.reference(origin)?;
        let d2 = self.squared_distance(x)?;
        let p_value = reference.p_value(d2);
        Ok(RowScore {
            squared_distance: d2,
            p_value,
            flagged: p_value <= alpha,
        })
    }

    /// Per-variable terms that add up to the squared distance of `x`; see
    /// [`crate::explain`] for how to read them.
    ///
    /// # Errors
    /// As [`squared_distance`](Self::squared_distance); an invalid
    /// [`ContributionOrder::Given`] permutation.
    pub fn explain(&self, x: &[f64], order: ContributionOrder) -> Result<Contributions> {
        self.check_point(x)?;
        let c: Vec<f64> = x.iter().zip(&self.location).map(|(a, b)| a - b).collect();
        contributions(&self.scatter, &c, &order)
    }

    /// The whitening map of the given kind for this model.
    ///
    /// # Errors
    /// As [`Whitener::new`].
    pub fn whitener(&self, kind: WhiteningKind) -> Result<Whitener> {
        Whitener::new(&self.location, &self.scatter, kind)
    }
}

/// An output buffer must hold one value per row.
pub(crate) fn check_output(len: usize, rows: usize) -> Result<()> {
    if len != rows {
        return Err(Error::ShapeMismatch {
            what: "output length (one value per row)",
            expected: rows,
            found: len,
        });
    }
    Ok(())
}

/// `p_values[i] = reference.p_value(d2[i])`, in parallel for long batches.
pub(crate) fn p_values_into(reference: &Reference, d2: &[f64], p_values: &mut [f64]) {
    if d2.len() < 4096 {
        for (p, &d) in p_values.iter_mut().zip(d2) {
            *p = reference.p_value(d);
        }
    } else {
        p_values
            .par_chunks_mut(1024)
            .zip(d2.par_chunks(1024))
            .for_each(|(p, d)| {
                for (pv, &dv) in p.iter_mut().zip(d) {
                    *pv = reference.p_value(dv);
                }
            });
    }
}

/// The divisor of the covariance behind a model's scatter, as the F and
/// Beta references need it: the shrinkage estimates start from the
/// maximum-likelihood covariance (and equal it at intensity 0).
fn reference_divisor(estimator: &FitMethod) -> Divisor {
    match estimator {
        FitMethod::Classical { divisor } | FitMethod::Weighted { divisor } => *divisor,
        FitMethod::LedoitWolf { .. }
        | FitMethod::Oas { .. }
        | FitMethod::Shrunk { .. }
        | FitMethod::ExpectationMaximization { .. } => Divisor::MaximumLikelihood,
        _ => Divisor::Unbiased,
    }
}

fn finite(d2: f64) -> Result<f64> {
    if d2.is_finite() {
        Ok(d2)
    } else {
        Err(Error::Overflow { row: 0 })
    }
}

// The estimators' convenience constructors of models live here, in the
// model layer, so that the estimators import nothing from it.

impl McdFit {
    /// The reweighted estimate as a [`DistanceModel`] (F reference with the
    /// simulated [`reweighted_wishart_dof`](McdFit::reweighted_wishart_dof),
    /// or χ² when there is none).
    ///
    /// # Errors
    /// As [`DistanceModel::from_parts`] (not expected).
    pub fn model(&self) -> Result<DistanceModel> {
        DistanceModel::from_estimate(self.estimate())
    }

    /// The raw estimate as a [`DistanceModel`] (Hardin–Rocke F reference).
    ///
    /// # Errors
    /// As [`DistanceModel::from_parts`] (not expected).
    pub fn raw_model(&self) -> Result<DistanceModel> {
        DistanceModel::from_estimate(self.raw_estimate())
    }
}

impl RegularizedMcdFit {
    /// The final estimate (reweighted if reweighting was on) as a
    /// [`DistanceModel`] (χ²(p) reference, approximate).
    ///
    /// # Errors
    /// As [`DistanceModel::from_parts`] (not expected).
    pub fn model(&self) -> Result<DistanceModel> {
        DistanceModel::from_estimate(self.estimate())
    }

    /// The raw estimate as a [`DistanceModel`].
    ///
    /// # Errors
    /// As [`DistanceModel::from_parts`] (not expected).
    pub fn raw_model(&self) -> Result<DistanceModel> {
        DistanceModel::from_estimate(self.raw_estimate())
    }
}

impl crate::incomplete::EmFit {
    /// A [`DistanceModel`] holding this estimate (F and Beta references of
    /// a classical maximum-likelihood fit on its `n` rows: approximate when
    /// cells were missing).
    ///
    /// # Errors
    /// As [`DistanceModel::from_parts`] (not expected).
    pub fn model(&self) -> Result<DistanceModel> {
        DistanceModel::from_estimate(self.estimate())
    }
}

impl DistanceModel {
    /// Fits the maximum-likelihood mean and covariance from rows whose
    /// empty cells are NaN, by the EM algorithm; see [`crate::incomplete`]
    /// (which also reports the iterations and the log-likelihood trace).
    /// The fit's iterations and convergence are in
    /// [`fit_method`](Self::fit_method).
    ///
    /// # Errors
    /// As [`crate::incomplete::expectation_maximization`].
    ///
    /// # Example
    /// ```
    /// use mvdist::{incomplete::EmOptions, DistanceModel, FitMethod};
    /// use ndarray::array;
    /// let nan = f64::NAN;
    /// let rows = array![[1.0, 2.1], [2.0, nan], [3.0, 4.2], [4.0, 4.8], [nan, 6.1], [2.5, 3.0]];
    /// let model = DistanceModel::fit_incomplete(rows.view(), &EmOptions::default())?;
    /// assert!(matches!(model.fit_method(), FitMethod::ExpectationMaximization { converged: true, .. }));
    /// # Ok::<(), mvdist::Error>(())
    /// ```
    pub fn fit_incomplete<'a>(
        rows: impl Into<Rows<'a>>,
        options: &crate::incomplete::EmOptions,
    ) -> Result<Self> {
        rows.into()
            .with_f64(|rows| crate::incomplete::expectation_maximization(rows, options)?.model())
    }
}

impl ShrinkageFit {
    /// A [`DistanceModel`] holding this estimate.
    ///
    /// # Errors
    /// As [`DistanceModel::from_parts`] (not expected for a fit made by
    /// [`crate::shrinkage`]).
    pub fn into_model(self) -> Result<DistanceModel> {
        DistanceModel::from_estimate(self.into_estimate())
    }
}
