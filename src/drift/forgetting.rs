//! Exponential forgetting with an incrementally updated Cholesky factor.

use super::factor::TrackedFactor;
use super::{check_drift_format, DEFAULT_REFACTOR_EVERY, DRIFT_FORMAT_VERSION, FORMAT_NAME};
use crate::calibration::{Reference, RowOrigin};
use crate::data::check_row;
use crate::error::{Error, Result};
use crate::estimate::FitMethod;
use crate::model::{DistanceModel, RowScore};
use crate::scatter::Scatter;
use serde::{Deserialize, Serialize};

/// Location and scatter under exponential forgetting, updated row by row in
/// `O(p²)`; see the [module documentation](super).
///
/// The covariance is `M / D` with the reliability-weight denominator
/// `D = W − Σw²/W` (`W = Σ w`, weights `λᵏ`); the effective number of rows
/// is `W²/Σw²`, tending to `(1+λ)/(1−λ)`.
///
/// Serializable, versioned (`format`, `format_version`): the saved state is
/// the forgetting factor, the weights, the mean and the co-moment matrix;
/// loading checks them and refactorizes, so scoring resumes where it
/// stopped.
#[derive(Clone, Debug, Serialize, Deserialize)]
#[serde(try_from = "ForgettingData", into = "ForgettingData")]
pub struct ForgettingModel {
    p: usize,
    forgetting: f64,
    count: u64,
    weight_sum: f64,
    weight_sq_sum: f64,
    mean: Vec<f64>,
    /// Row-major co-moment matrix, kept for refactorization.
    comoment: Vec<f64>,
    factor: TrackedFactor,
    factor_ready: bool,
    since_refactor: u64,
    refactor_every: u64,
    delta: Vec<f64>,
}

impl ForgettingModel {
    /// A model of `dim` variables with forgetting factor `λ` in `(0, 1]`.
    ///
    /// # Errors
    /// [`Error::Empty`] for `dim = 0`; [`Error::InvalidParameter`] for `λ`
    /// outside `(0, 1]`.
    pub fn new(dim: usize, forgetting: f64) -> Result<Self> {
        if dim == 0 {
            return Err(Error::Empty { what: "columns" });
        }
        if !(forgetting > 0.0 && forgetting <= 1.0) {
            return Err(Error::invalid(
                "forgetting factor",
                format!("{forgetting} is not in (0, 1]"),
            ));
        }
        let comoment = super::zeroed(dim.checked_mul(dim), "number of columns")?;
        Ok(ForgettingModel {
            p: dim,
            forgetting,
            count: 0,
            weight_sum: 0.0,
            weight_sq_sum: 0.0,
            mean: vec![0.0; dim],
            comoment,
            factor: TrackedFactor::zeros(dim),
            factor_ready: false,
            since_refactor: 0,
            refactor_every: DEFAULT_REFACTOR_EVERY,
            delta: vec![0.0; dim],
        })
    }

    /// Sets how many updates may pass between refactorizations (at least 1;
    /// `u64::MAX` never refactorizes once the factor exists).
    pub fn with_refactor_every(mut self, rows: u64) -> Self {
        self.refactor_every = rows.max(1);
        self
    }

    /// Number of variables.
    pub fn dim(&self) -> usize {
        self.p
    }

    /// Rows seen.
    pub fn count(&self) -> u64 {
        self.count
    }

    /// Effective number of rows `W²/Σw²`.
    pub fn effective_sample_size(&self) -> f64 {
        if self.weight_sq_sum > 0.0 {
            self.weight_sum * self.weight_sum / self.weight_sq_sum
        } else {
            0.0
        }
    }

    /// The current location.
    pub fn location(&self) -> &[f64] {
        &self.mean
    }

    /// Whether the scatter is available (enough non-degenerate rows seen).
    pub fn is_ready(&self) -> bool {
        self.factor_ready
    }

    fn denominator(&self) -> f64 {
        self.weight_sum - self.weight_sq_sum / self.weight_sum
    }

    /// Adds a row, discounting earlier rows by `λ`.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] or [`Error::NonFinite`]; the model is
    /// unchanged on error.
    pub fn update(&mut self, x: &[f64]) -> Result<()> {
        let p = self.p;
        check_row(x, p, self.count as usize)?;
        let l = self.forgetting;
        let w_old = l * self.weight_sum;
        let w_new = w_old + 1.0;
        let c = w_old / w_new;
        for j in 0..p {
            self.delta[j] = x[j] - self.mean[j];
            self.mean[j] += self.delta[j] / w_new;
        }
        // The upper triangle, mirrored: the matrix stays exactly symmetric.
        for i in 0..p {
            for j in i..p {
                let v = l * self.comoment[i * p + j] + c * self.delta[i] * self.delta[j];
                self.comoment[i * p + j] = v;
                self.comoment[j * p + i] = v;
            }
        }
        self.weight_sum = w_new;
        self.weight_sq_sum = l * l * self.weight_sq_sum + 1.0;
        self.count = self.count.saturating_add(1);
        self.since_refactor = self.since_refactor.saturating_add(1);
        if self.factor_ready {
            let ok =
                self.factor.scale_and_update(l, &self.delta, c).is_ok() && self.factor.is_valid();
            if !ok || self.since_refactor >= self.refactor_every {
                self.refactor();
            }
        } else if self.count > p as u64
            && (self.since_refactor >= p as u64 || self.count == p as u64 + 1)
        {
            self.refactor();
        }
        Ok(())
    }

    fn refactor(&mut self) {
        self.since_refactor = 0;
        self.factor_ready = self.factor.refactor(&self.comoment).is_ok() && self.factor.is_valid();
    }

    fn ready(&self) -> Result<()> {
        if self.factor_ready {
            Ok(())
        } else {
            Err(Error::TooFewRows {
                rows: self.count as usize,
                needed: self.p + 1,
                columns: self.p,
            })
        }
    }

    /// Squared distance of `x` to the current location under the current
    /// scatter, in `O(p²)`; no allocation for `p ≤ 64`.
    ///
    /// # Errors
    /// [`Error::TooFewRows`] before the scatter is available; shape and
    /// finiteness errors as for [`DistanceModel::squared_distance`].
    pub fn squared_distance(&self, x: &[f64]) -> Result<f64> {
        self.ready()?;
        self.factor
            .squared_distance(x, &self.mean, self.denominator())
    }

    /// The reference for new rows: F with `n` the effective number of rows
    /// (rounded down), an approximation since forgetting weights are
    /// unequal.
    ///
    /// # Errors
    /// [`Error::TooFewRows`] while the effective number of rows is at most `p`.
    pub fn reference(&self) -> Result<Reference> {
        Reference::for_origin(
            RowOrigin::New,
            self.effective_sample_size().floor() as usize,
            self.p,
        )
    }

    /// Scores a row: squared distance, p-value and flag at `alpha`.
    ///
    /// # Errors
    /// As [`squared_distance`](Self::squared_distance) and
    /// [`reference`](Self::reference); `alpha` outside (0, 1).
    pub fn score_row(&self, x: &[f64], alpha: f64) -> Result<RowScore> {
        crate::calibration::check_probability(alpha)?;
        let d2 = self.squared_distance(x)?;
        let p_value = self.reference()?.p_value(d2);
        Ok(RowScore {
            squared_distance: d2,
            p_value,
            flagged: p_value <= alpha,
        })
    }

    /// The current lower Cholesky factor of the covariance, row-major
    /// (`Σ = L Lᵀ`).
    ///
    /// # Errors
    /// [`Error::TooFewRows`] before the scatter is available.
    pub fn covariance_factor(&self) -> Result<Vec<f64>> {
        self.ready()?;
        let s = self.denominator().sqrt();
        Ok(self.factor.row_major().into_iter().map(|v| v / s).collect())
    }

    /// The current covariance matrix, row-major.
    ///
    /// # Errors
    /// [`Error::TooFewRows`] before the scatter is available.
    pub fn covariance(&self) -> Result<Vec<f64>> {
        self.ready()?;
        let d = self.denominator();
        Ok(self.comoment.iter().map(|m| m / d).collect())
    }

    /// A frozen [`DistanceModel`] of the current state (for saving or for
    /// batch scoring), with sample size the effective number of rows.
    ///
    /// # Errors
    /// [`Error::TooFewRows`] before the scatter is available; the errors of
    /// [`Scatter::from_row_major`].
    pub fn snapshot(&self) -> Result<DistanceModel> {
        let scatter = Scatter::from_row_major(&self.covariance()?, self.p)?;
        DistanceModel::from_parts(
            self.mean.clone(),
            scatter,
            (self.effective_sample_size().floor() as usize).max(1),
            FitMethod::ExponentiallyWeighted {
                forgetting: self.forgetting,
            },
        )
    }
}

/// The serialized form of [`ForgettingModel`].
#[derive(Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct ForgettingData {
    format: Option<String>,
    format_version: Option<u32>,
    kind: String,
    dim: usize,
    forgetting: f64,
    refactor_every: u64,
    count: u64,
    weight_sum: f64,
    weight_sq_sum: f64,
    mean: Vec<f64>,
    comoment: Vec<f64>,
}

const KIND: &str = "exponential_forgetting";

impl From<ForgettingModel> for ForgettingData {
    fn from(m: ForgettingModel) -> Self {
        ForgettingData {
            format: Some(FORMAT_NAME.into()),
            format_version: Some(DRIFT_FORMAT_VERSION),
            kind: KIND.into(),
            dim: m.p,
            forgetting: m.forgetting,
            refactor_every: m.refactor_every,
            count: m.count,
            weight_sum: m.weight_sum,
            weight_sq_sum: m.weight_sq_sum,
            mean: m.mean,
            comoment: m.comoment,
        }
    }
}

impl TryFrom<ForgettingData> for ForgettingModel {
    type Error = Error;
    fn try_from(d: ForgettingData) -> Result<Self> {
        check_drift_format(d.format.as_deref(), d.format_version)?;
        let bad = |reason: String| Err(Error::Format { reason });
        if d.kind != KIND {
            return bad(format!("drift model kind \"{}\" is not \"{KIND}\"", d.kind));
        }
        let p = d.dim;
        if d.mean.len() != p || d.comoment.len() != p.saturating_mul(p) {
            return bad(format!(
                "{} mean values and {} co-moments for {p} columns",
                d.mean.len(),
                d.comoment.len()
            ));
        }
        let mut m = ForgettingModel::new(d.dim, d.forgetting)
            .map_err(|e| Error::Format {
                reason: e.to_string(),
            })?
            .with_refactor_every(d.refactor_every);
        let finite = |v: &f64| v.is_finite();
        if !(d.mean.iter().all(finite) && d.comoment.iter().all(finite)) {
            return bad("a mean or co-moment value is not finite".into());
        }
        if !(d.weight_sum.is_finite()
            && d.weight_sq_sum.is_finite()
            && d.weight_sum >= 0.0
            && d.weight_sq_sum >= 0.0
            && (d.count == 0) == (d.weight_sum == 0.0))
        {
            return bad(format!(
                "weights {} and {} do not fit {} rows",
                d.weight_sum, d.weight_sq_sum, d.count
            ));
        }
        // The weights follow from λ and the row count: W = Σ λᵏ and
        // Σw² = Σ λ²ᵏ over the rows seen (k = 0 … count − 1).
        let geometric = |r: f64| {
            if r == 1.0 {
                d.count as f64
            } else {
                (1.0 - r.powf(d.count as f64)) / (1.0 - r)
            }
        };
        let (w, w2) = (
            geometric(d.forgetting),
            geometric(d.forgetting * d.forgetting),
        );
        let close = |a: f64, b: f64| (a - b).abs() <= 1e-9 * b.abs().max(1.0);
        if !(close(d.weight_sum, w) && close(d.weight_sq_sum, w2)) {
            return bad(format!(
                "weights {} and {} do not follow from λ = {} and {} rows ({w} and {w2})",
                d.weight_sum, d.weight_sq_sum, d.forgetting, d.count
            ));
        }
        if d.count == 0 && !(d.mean.iter().chain(&d.comoment).all(|&v| v == 0.0)) {
            return bad("a model that has seen no rows has a non-zero mean or co-moment".into());
        }
        for i in 0..p {
            for j in 0..i {
                let (a, b) = (d.comoment[i * p + j], d.comoment[j * p + i]);
                if a != b {
                    return bad(format!(
                        "the co-moment matrix is not symmetric at ({i}, {j})"
                    ));
                }
            }
        }
        m.count = d.count;
        m.weight_sum = d.weight_sum;
        m.weight_sq_sum = d.weight_sq_sum;
        m.mean = d.mean;
        m.comoment = d.comoment;
        if m.count > p as u64 {
            m.refactor();
        }
        Ok(m)
    }
}
