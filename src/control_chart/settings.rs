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

/// Options of a Phase I chart. Setters cannot fail and state their
/// default; the chart checks the values once, when it is built.
///
/// # Example
/// ```
/// use mvdist::control_chart::{FalseAlarmRate, PhaseOneOptions, SignalRemoval};
///
/// let options = PhaseOneOptions::default()
///     .with_false_alarm(FalseAlarmRate::from_average_run_length(200.0)?)
///     .with_removal(SignalRemoval::RefitUntilClean { max_rounds: 5 });
/// assert_eq!(options.diagnosis_depth(), 1);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[non_exhaustive]
pub struct PhaseOneOptions {
    false_alarm: FalseAlarmRate,
    removal: SignalRemoval,
    start: PhaseOneStart,
    diagnosis_depth: usize,
}

impl Default for PhaseOneOptions {
    fn default() -> Self {
        PhaseOneOptions {
            false_alarm: FalseAlarmRate::default(),
            removal: SignalRemoval::Keep,
            start: PhaseOneStart::AllRows,
            diagnosis_depth: 1,
        }
    }
}

impl PhaseOneOptions {
    /// The false-alarm rate per point, for Phase I and the Phase II limit
    /// derived from it (default: [`FalseAlarmRate::default`]).
    pub fn with_false_alarm(mut self, rate: FalseAlarmRate) -> Self {
        self.false_alarm = rate;
        self
    }

    /// What to do with Phase I signals (default: [`SignalRemoval::Keep`]).
    pub fn with_removal(mut self, removal: SignalRemoval) -> Self {
        self.removal = removal;
        self
    }

    /// The starting estimate (default: [`PhaseOneStart::AllRows`]).
    pub fn with_start(mut self, start: PhaseOneStart) -> Self {
        self.start = start;
        self
    }

    /// Most conditioning variables in the decomposition of a signal: 0 for
    /// unconditional terms only, 1 adds every `T²_{j·i}`, … (default 1;
    /// depths beyond `p − 1` mean `p − 1`).
    pub fn with_diagnosis_depth(mut self, depth: usize) -> Self {
        self.diagnosis_depth = depth;
        self
    }

    /// The false-alarm rate per point.
    pub fn false_alarm(&self) -> FalseAlarmRate {
        self.false_alarm
    }

    /// What Phase I does with signals.
    pub fn removal(&self) -> SignalRemoval {
        self.removal
    }

    /// The starting estimate.
    pub fn start(&self) -> &PhaseOneStart {
        &self.start
    }

    /// The diagnosis depth.
    pub fn diagnosis_depth(&self) -> usize {
        self.diagnosis_depth
    }
}
