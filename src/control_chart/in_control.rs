//! The in-control location and scatter that the charts for small shifts
//! measure against.

use super::ControlChart;
use crate::data::check_row_finite;
use crate::error::{Error, Result};
use crate::model::DistanceModel;
use crate::scatter::Scatter;
use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};

/// The in-control mean `μ` and covariance `Σ` of the charted vectors, as
/// taken from a Phase I estimate.
///
/// The charts ([`MewmaChart`](super::MewmaChart),
/// [`McusumChart`](super::McusumChart)) centre each charted vector on `μ`
/// and measure through `Σ`. Their limits and run lengths
/// ([`run_length`](super::run_length)) treat `μ` and `Σ` as the true
/// in-control values. When they are estimated, the actual in-control run
/// length is itself random and, for short Phase I samples, often much
/// shorter than designed; a Phase I sample of several hundred in-control
/// rows is common advice before relying on a designed limit.
///
/// # Example
/// ```
/// use mvdist::control_chart::InControlEstimate;
/// use ndarray::array;
///
/// let history = array![[10.1, 4.9], [9.8, 5.2], [10.3, 5.1], [9.9, 4.8], [10.0, 5.0]];
/// let estimate = InControlEstimate::from_rows(history.view())?;
/// assert_eq!(estimate.dim(), 2);
/// assert!((estimate.location()[0] - 10.02).abs() < 1e-12);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "EstimateData")]
pub struct InControlEstimate {
    location: Vec<f64>,
    scatter: Scatter,
}

/// The serialized form, checked by [`InControlEstimate::new`].
#[derive(Deserialize)]
struct EstimateData {
    location: Vec<f64>,
    scatter: Scatter,
}

impl TryFrom<EstimateData> for InControlEstimate {
    type Error = Error;
    fn try_from(d: EstimateData) -> Result<Self> {
        InControlEstimate::new(d.location, d.scatter)
    }
}

impl InControlEstimate {
    /// A location and a validated scatter.
    ///
    /// # Errors
    /// [`Error::ShapeMismatch`] if the location's length differs from the
    /// scatter's dimension; [`Error::NonFinite`] (row 0, naming the column)
    /// for a non-finite location.
    pub fn new(location: Vec<f64>, scatter: Scatter) -> Result<Self> {
        if location.len() != scatter.dim() {
            return Err(Error::ShapeMismatch {
                what: "location length",
                expected: scatter.dim(),
                found: location.len(),
            });
        }
        check_row_finite(&location, 0)?;
        Ok(InControlEstimate { location, scatter })
    }

    /// The sample mean and unbiased (`n − 1`) covariance of in-control
    /// rows (as [`DistanceModel::fit`]).
    ///
    /// # Errors
    /// As [`DistanceModel::fit`]: [`Error::Empty`], [`Error::NonFinite`]
    /// naming the row and column, [`Error::TooFewRows`] unless `n > p`,
    /// [`Error::ZeroVariance`] or [`Error::Collinear`] naming the column.
    pub fn from_rows(rows: ArrayView2<'_, f64>) -> Result<Self> {
        Ok(Self::from_model(&DistanceModel::fit(rows)?))
    }

    /// The location and scatter of a fitted model (classical, robust or
    /// shrunk).
    pub fn from_model(model: &DistanceModel) -> Self {
        InControlEstimate {
            location: model.location().to_vec(),
            scatter: model.scatter().clone(),
        }
    }

    /// The final Phase I estimate of a T² chart: its location and the
    /// scatter of a charted point ([`ControlChart::point_scatter`]). For an
    /// individuals chart the charted vectors are rows; for a subgroup chart
    /// they are subgroup means (`S_p / n`), so pass subgroup means to the
    /// small-shift chart.
    pub fn from_chart(chart: &ControlChart) -> Self {
        InControlEstimate {
            location: chart.location().to_vec(),
            scatter: chart.point_scatter().clone(),
        }
    }

    /// Number of variables `p`.
    pub fn dim(&self) -> usize {
        self.location.len()
    }

    /// The in-control mean `μ`.
    pub fn location(&self) -> &[f64] {
        &self.location
    }

    /// The in-control covariance `Σ` of a charted vector.
    pub fn scatter(&self) -> &Scatter {
        &self.scatter
    }
}
