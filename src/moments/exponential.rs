//! Exponentially weighted moments for drifting streams.

use super::{accumulator::MomentAccumulator, Divisor};
use crate::error::{Error, Result};
use crate::scatter::Scatter;
use ndarray::{Array2, ArrayView2};
use serde::{Deserialize, Serialize};

/// Mean and covariance of a stream in which older rows count less: each new
/// row multiplies the weight of all earlier rows by the forgetting factor
/// `λ` (0 < λ ≤ 1), so a row seen `k` rows ago has weight `λᵏ`.
///
/// The effective number of rows, Kish's `W²/Σw²`, tends to `(1+λ)/(1−λ)`;
/// `λ = 0.99` remembers roughly the last 200 rows. With
/// [`Divisor::Unbiased`] the covariance uses the reliability-weight
/// denominator `W − Σw²/W`. `λ = 1` gives the ordinary running moments.
///
/// # Example
/// ```
/// use mvdist::moments::{Divisor, ExponentialMoments};
///
/// let mut m = ExponentialMoments::new(2, 0.9)?;
/// for k in 0..500 {
///     let t = k as f64;
///     m.push(&[t.sin(), t.cos()])?;
/// }
/// assert!((m.effective_sample_size() - 19.0).abs() < 1e-6);
/// let cov = m.covariance(Divisor::Unbiased)?;
/// assert!(cov[(0, 0)] > 0.0);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "ExponentialData")]
pub struct ExponentialMoments {
    forgetting: f64,
    state: MomentAccumulator,
}

/// The serialized form; the forgetting factor is checked as in
/// [`ExponentialMoments::new`] (the accumulator checks itself).
#[derive(Deserialize)]
struct ExponentialData {
    forgetting: f64,
    state: MomentAccumulator,
}

impl TryFrom<ExponentialData> for ExponentialMoments {
    type Error = Error;
    fn try_from(d: ExponentialData) -> Result<Self> {
        let mut checked = ExponentialMoments::new(d.state.dim(), d.forgetting)?;
        checked.state = d.state;
        Ok(checked)
    }
}

impl ExponentialMoments {
    /// A stream of rows with `dim` variables and forgetting factor `λ`.
    ///
    /// # Errors
    /// [`Error::Empty`] if `dim` is 0; [`Error::InvalidParameter`] unless
    /// `0 < λ ≤ 1`.
    pub fn new(dim: usize, forgetting: f64) -> Result<Self> {
        if !(forgetting > 0.0 && forgetting <= 1.0) {
            return Err(Error::invalid(
                "forgetting factor",
                format!("{forgetting} is not in (0, 1]"),
            ));
        }
        Ok(ExponentialMoments {
            forgetting,
            state: MomentAccumulator::new(dim)?,
        })
    }

    /// The forgetting factor `λ`.
    pub fn forgetting(&self) -> f64 {
        self.forgetting
    }

    /// Adds one row, discounting all earlier rows by `λ`.
    ///
    /// # Errors
    /// As [`MomentAccumulator::push`]; the state is unchanged on error.
    pub fn push(&mut self, row: &[f64]) -> Result<()> {
        crate::data::check_row(row, self.state.dim, self.state.count as usize)?;
        let l = self.forgetting;
        self.state.weight_sum *= l;
        self.state.weight_sq_sum *= l * l;
        for m in self.state.comoment.iter_mut() {
            *m *= l;
        }
        self.state.push_unchecked(row, 1.0);
        Ok(())
    }

    /// Adds the rows of `rows` in order.
    ///
    /// # Errors
    /// As [`push`](Self::push); rows before the offending one stay added.
    pub fn push_rows(&mut self, rows: ArrayView2<'_, f64>) -> Result<()> {
        crate::data::check_columns(rows, self.state.dim)?;
        for row in rows.outer_iter() {
            let r: Vec<f64>;
            let slice = match row.as_slice() {
                Some(s) => s,
                None => {
                    r = row.to_vec();
                    &r
                }
            };
            self.push(slice)?;
        }
        Ok(())
    }

    /// Rows seen so far.
    pub fn count(&self) -> u64 {
        self.state.count
    }

    /// Kish's effective number of rows `W²/Σw²`.
    pub fn effective_sample_size(&self) -> f64 {
        self.state.effective_sample_size()
    }

    /// The weighted mean.
    pub fn mean(&self) -> &[f64] {
        self.state.mean()
    }

    /// The weighted covariance.
    ///
    /// # Errors
    /// As [`MomentAccumulator::covariance`].
    pub fn covariance(&self, divisor: Divisor) -> Result<Array2<f64>> {
        self.state.covariance(divisor)
    }

    /// The weighted covariance as a validated [`Scatter`].
    ///
    /// # Errors
    /// As [`MomentAccumulator::scatter`].
    pub fn scatter(&self, divisor: Divisor) -> Result<Scatter> {
        self.state.scatter(divisor)
    }
}
