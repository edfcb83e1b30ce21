//! How a Phase I chart is set up: false-alarm rate, removal of signals,
//! starting estimate, diagnosis depth.

use super::FalseAlarmRate;
use crate::calibration::RowOrigin;
use crate::model::DistanceModel;
use serde::{Deserialize, Serialize};

/// What Phase I does with points that plot above the limit.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum SignalRemoval {
    /// Keep every point in the estimate; signals are only reported.
    #[default]
    Keep,
    /// Remove the signalling points, re-estimate and recompute the limit
    /// (with the smaller `m`), and repeat until no point in the estimate
    /// signals or `max_rounds` removal rounds have been made.
    RefitUntilClean {
        /// The most removal rounds.
        max_rounds: usize,
    },
}

/// Where Phase I starts.
///
/// The classical start estimates the mean and covariance from every row;
/// gross outliers inflate that covariance and can hide themselves and each
/// other (masking). A robust start screens the rows first with a model the
/// caller supplies (for example a high-breakdown estimate fitted elsewhere,
/// or a model from an earlier clean period): rows whose squared distance
/// under that model has a p-value at or below the chart's false-alarm rate
/// (reference chosen by `origin`) are left out of the first estimate and
/// reported as removed in round 0.
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
#[allow(clippy::large_enum_variant)]
pub enum PhaseOneStart {
    /// Estimate from every row.
    #[default]
    AllRows,
    /// Screen rows with a supplied model first (individual observations
    /// only).
    ScreenWith {
        /// The screening model.
        model: DistanceModel,
        /// How its distances are referred: [`RowOrigin::KnownParameters`]
        /// (χ²) for a consistent robust estimate, [`RowOrigin::New`] (F)
        /// for a classical model fitted on other rows.
        origin: RowOrigin,
    },
}

/// Settings of a Phase I chart.
///
/// # Example
/// ```
/// use mvdist::control_chart::{FalseAlarmRate, PhaseOneSettings, SignalRemoval};
///
/// let settings = PhaseOneSettings {
///     false_alarm: FalseAlarmRate::from_average_run_length(200.0)?,
///     removal: SignalRemoval::RefitUntilClean { max_rounds: 5 },
///     ..PhaseOneSettings::default()
/// };
/// assert_eq!(settings.diagnosis_depth, 1);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct PhaseOneSettings {
    /// False-alarm rate per point (Phase I and the Phase II limit derived
    /// from it).
    pub false_alarm: FalseAlarmRate,
    /// What to do with Phase I signals.
    pub removal: SignalRemoval,
    /// The starting estimate.
    pub start: PhaseOneStart,
    /// Most conditioning variables in the decomposition of a signal: 0 for
    /// unconditional terms only, 1 adds every `T²_{j·i}`, … (default 1).
    pub diagnosis_depth: usize,
}

impl Default for PhaseOneSettings {
    fn default() -> Self {
        PhaseOneSettings {
            false_alarm: FalseAlarmRate::default(),
            removal: SignalRemoval::Keep,
            start: PhaseOneStart::AllRows,
            diagnosis_depth: 1,
        }
    }
}
