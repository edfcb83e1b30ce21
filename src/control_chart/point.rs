//! Charted points and the record of Phase I rounds.

use super::SignalDiagnosis;
use serde::{Deserialize, Serialize};

/// How a charted point relates to the in-control estimate.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum PointStatus {
    /// A Phase I point kept in the final estimate (judged by the Phase I
    /// limit).
    InEstimate,
    /// A Phase I point removed from the estimate (judged by the Phase II
    /// limit, since the final estimate no longer contains it).
    Removed {
        /// The round that removed it (0: screened out by the start model).
        round: usize,
        /// Its T² (or screening distance) when it was removed.
        t_squared_at_removal: f64,
    },
    /// A Phase II point.
    Monitored,
}

/// One point on a T² chart.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ChartPoint {
    /// 0-based row (individuals) or subgroup of its input.
    pub index: usize,
    /// The point's T² against the final estimate.
    pub t_squared: f64,
    /// The upper control limit that applies to it.
    pub upper_limit: f64,
    /// Probability that an in-control point's T² exceeds this one.
    pub p_value: f64,
    /// `t_squared > upper_limit`.
    pub signal: bool,
    /// Phase I (kept or removed) or Phase II.
    pub status: PointStatus,
    /// For signals: the decomposition and contributions.
    pub diagnosis: Option<SignalDiagnosis>,
}

/// One estimate-and-check round of Phase I.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct PhaseOneRound {
    /// 1-based round number.
    pub round: usize,
    /// Points in the estimate this round.
    pub in_estimate: usize,
    /// The Phase I limit this round.
    pub upper_limit: f64,
    /// Points (0-based) above the limit this round.
    pub signals: Vec<usize>,
}
