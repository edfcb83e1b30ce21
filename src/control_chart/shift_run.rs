//! What the charts for small shifts share: the chart's recursion state,
//! the charted points, and the description of a scheme without its limit.

use super::mcusum::McusumOptions;
use super::mewma::MewmaOptions;
use crate::data::{check_columns, check_finite, check_row_finite};
use crate::error::{Error, Result};
use crate::explain::Contributions;
use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};

/// A chart scheme without its limit: which recursion, with which
/// parameters. Used to design limits and compute run lengths
/// ([`run_length`](super::run_length)) and recorded on every
/// chart.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum ChartScheme {
    /// Multivariate EWMA (Lowry, Woodall, Champ and Rigdon 1992).
    Mewma(MewmaOptions),
    /// Crosier's (1988) multivariate CUSUM.
    Mcusum(McusumOptions),
}

impl ChartScheme {
    /// Checks the scheme's parameters.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] for a smoothing constant outside
    /// `(0, 1]` or a negative or non-finite reference value.
    pub fn validate(&self) -> Result<()> {
        match self {
            ChartScheme::Mewma(o) => o.validate(),
            ChartScheme::Mcusum(o) => o.validate(),
        }
    }
}

/// The vector a chart carries from one row to the next, and how many rows
/// it has seen: `Z_i` for the MEWMA, `S_i` for the MCUSUM, both in the
/// data's units (centred on `μ`).
///
/// A chart starts from [`ChartState::zero`] (`Z_0 = 0`, `S_0 = 0`: the
/// zero state that run lengths refer to). Monitoring in pieces with the
/// state carried over gives the same statistics as one call on all rows.
///
/// For the MEWMA, `Z_i` is an exponentially weighted average of the
/// centred rows: it estimates the (smoothed) current shift of the mean, and
/// its direction says which variables moved.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ChartState {
    vector: Vec<f64>,
    steps: u64,
}

impl ChartState {
    /// The zero state for `dim` variables: no rows seen, vector 0.
    pub fn zero(dim: usize) -> Self {
        ChartState {
            vector: vec![0.0; dim],
            steps: 0,
        }
    }

    /// The carried vector (`Z_i` or `S_i`).
    pub fn vector(&self) -> &[f64] {
        &self.vector
    }

    /// Rows seen so far, `i`.
    pub fn steps(&self) -> u64 {
        self.steps
    }

    pub(crate) fn vector_mut(&mut self) -> &mut Vec<f64> {
        &mut self.vector
    }

    pub(crate) fn advance(&mut self, rows: usize) {
        self.steps = self.steps.saturating_add(rows as u64);
    }

    /// Checks the state against a chart of `dim` variables.
    pub(crate) fn check(&self, dim: usize) -> Result<()> {
        if self.vector.len() != dim {
            return Err(Error::ShapeMismatch {
                what: "chart state length (number of columns)",
                expected: dim,
                found: self.vector.len(),
            });
        }
        check_row_finite(&self.vector, 0).map_err(|e| match e {
            Error::NonFinite { column, value, .. } => Error::invalid(
                "chart state",
                format!("entry {column} of the carried vector is {value}"),
            ),
            other => other,
        })
    }
}

/// What drives a signal on a small-shift chart: the carried vector and
/// its per-variable terms.
///
/// A signal is evidence for a closer look at the process, not a verdict:
/// what follows belongs to local procedures and qualified people.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ShiftDiagnosis {
    /// The carried vector at that row (`Z_i` or `S_i`, data units,
    /// centred on `μ`).
    pub vector: Vec<f64>,
    /// Per-variable terms of the carried vector (the sequential terms of
    /// [`crate::explain`]): for the MEWMA they add up to `T²_i` (the terms
    /// of `Z_i` under `Σ_{Z_i}`), for the MCUSUM to `Y_i²` (the terms of
    /// `S_i` under `Σ`).
    pub contributions: Contributions,
}

/// One row on a small-shift chart.
///
/// The recursion is not reset after a signal: every row above the limit is
/// a signal, and the first one is where a run length ends.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ShiftPoint {
    /// 0-based row of the monitored input.
    pub index: usize,
    /// 1-based count of rows since the zero state (`i` in `Z_i`, `S_i`).
    pub step: u64,
    /// The chart's statistic at that row (`T²_i` or `Y_i`).
    pub statistic: f64,
    /// The control limit `h`.
    pub limit: f64,
    /// `statistic > limit`.
    pub signal: bool,
    /// For signals: the carried vector and its per-variable terms.
    pub diagnosis: Option<ShiftDiagnosis>,
}

/// The index of the first signalling point, if any.
///
/// # Example
/// ```
/// use mvdist::control_chart::{first_signal, ShiftPoint};
/// let quiet = ShiftPoint { index: 0, step: 1, statistic: 1.0, limit: 8.0, signal: false, diagnosis: None };
/// assert_eq!(first_signal(&[quiet]), None);
/// ```
pub fn first_signal(points: &[ShiftPoint]) -> Option<usize> {
    points.iter().find(|p| p.signal).map(|p| p.index)
}

/// Builds the points of a monitored stretch from its statistics and the
/// diagnoses of its signalling rows (in row order).
pub(crate) fn points_from(
    statistics: Vec<f64>,
    diagnoses: Vec<(usize, ShiftDiagnosis)>,
    limit: f64,
    steps_before: u64,
) -> Vec<ShiftPoint> {
    let mut diagnoses = diagnoses.into_iter().peekable();
    statistics
        .into_iter()
        .enumerate()
        .map(|(index, statistic)| {
            let diagnosis = match diagnoses.peek() {
                Some((i, _)) if *i == index => diagnoses.next().map(|(_, d)| d),
                _ => None,
            };
            ShiftPoint {
                index,
                step: steps_before.saturating_add(index as u64 + 1),
                statistic,
                limit,
                signal: statistic > limit,
                diagnosis,
            }
        })
        .collect()
}

/// Checks one row's length for `update`.
pub(crate) fn check_row_length(row: &[f64], dim: usize) -> Result<()> {
    if row.len() != dim {
        return Err(Error::ShapeMismatch {
            what: "row length (number of columns)",
            expected: dim,
            found: row.len(),
        });
    }
    Ok(())
}

/// Checks a limit `h`: finite and positive.
pub(crate) fn check_limit(limit: f64) -> Result<()> {
    if !(limit.is_finite() && limit > 0.0) {
        return Err(Error::invalid(
            "limit",
            format!("{limit} is not a finite number greater than 0"),
        ));
    }
    Ok(())
}

/// Checks rows, state and output buffer for monitoring.
pub(crate) fn check_input(
    rows: ArrayView2<'_, f64>,
    dim: usize,
    state: &ChartState,
    out_len: usize,
) -> Result<()> {
    check_columns(rows, dim)?;
    if rows.nrows() == 0 {
        return Err(Error::Empty { what: "rows" });
    }
    if out_len != rows.nrows() {
        return Err(Error::ShapeMismatch {
            what: "output length (number of rows)",
            expected: rows.nrows(),
            found: out_len,
        });
    }
    state.check(dim)?;
    check_finite(rows)
}
