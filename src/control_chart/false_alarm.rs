//! The false-alarm rate of a control chart, or its in-control average run
//! length.

use crate::calibration::check_probability;
use crate::error::{Error, Result};
use serde::{Deserialize, Serialize};

/// The probability `α` that an in-control point plots above the upper
/// control limit.
///
/// For independent points the number of points until the first false
/// alarm is geometric, so the in-control average run length is
/// `ARL = 1/α`; [`from_average_run_length`](Self::from_average_run_length)
/// sets `α = 1/ARL`. The default, `α = 0.0027` (ARL ≈ 370), is the rate of
/// a three-sigma limit on one normal variable (common practice).
///
/// # Example
/// ```
/// use mvdist::control_chart::FalseAlarmRate;
///
/// let rate = FalseAlarmRate::from_average_run_length(500.0)?;
/// assert_eq!(rate.alpha(), 0.002);
/// assert_eq!(FalseAlarmRate::per_point(0.01)?.average_run_length(), 100.0);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(try_from = "FalseAlarmData")]
pub struct FalseAlarmRate {
    alpha: f64,
}

/// The serialized form, validated by [`FalseAlarmRate::per_point`].
#[derive(Deserialize)]
struct FalseAlarmData {
    alpha: f64,
}

impl TryFrom<FalseAlarmData> for FalseAlarmRate {
    type Error = Error;
    fn try_from(d: FalseAlarmData) -> Result<Self> {
        Self::per_point(d.alpha)
    }
}

impl Default for FalseAlarmRate {
    fn default() -> Self {
        FalseAlarmRate { alpha: 0.0027 }
    }
}

impl FalseAlarmRate {
    /// A chosen false-alarm probability per point.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `0 < alpha < 1`.
    pub fn per_point(alpha: f64) -> Result<Self> {
        check_probability(alpha)?;
        Ok(FalseAlarmRate { alpha })
    }

    /// The rate giving an in-control average run length `arl` for
    /// independent points: `α = 1/ARL`.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] unless `arl` is finite and greater than 1.
    pub fn from_average_run_length(arl: f64) -> Result<Self> {
        if !(arl.is_finite() && arl > 1.0) {
            return Err(Error::invalid(
                "average run length",
                format!("{arl} is not a finite number greater than 1"),
            ));
        }
        Self::per_point(1.0 / arl)
    }

    /// The false-alarm probability per point `α`.
    pub fn alpha(&self) -> f64 {
        self.alpha
    }

    /// The in-control average run length `1/α` (independent points).
    pub fn average_run_length(&self) -> f64 {
        1.0 / self.alpha
    }
}
