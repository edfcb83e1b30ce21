//! Held-out reference rows: distribution-free p-values, and a check of the
//! parametric ones.
//!
//! Every law of [`crate::calibration::Reference`] assumes multivariate
//! normal rows. Reference data are often skewed or heavy-tailed, and then
//! the F or χ² cutoffs flag more (or fewer) ordinary rows than their level
//! says. Holding out part of the reference rows helps twice:
//!
//! 1. **Distribution-free p-values.** [`fit_holding_out`] fits any
//!    estimator on one part and keeps the other part's squared distances
//!    in the model ([`crate::calibration::EmpiricalReference`]); then
//!    [`crate::DistanceModel::score_held_out`] gives split conformal
//!    p-values, valid in finite samples for exchangeable rows of any
//!    distribution.
//! 2. **A check of the parametric cutoffs.** [`CalibrationCheck`] counts
//!    how many held-out reference rows exceed the model's F cutoff at
//!    several levels, with a binomial interval and a plain reading, and
//!    draws a Q–Q chart of the held-out squared distances against the F
//!    law.
//!
//! Holding out rows costs precision in the fit: with `n` rows and a
//! fraction `f` held out, the location and scatter come from `(1 − f)·n`
//! rows. A fifth to a third is usual (common practice); the smallest
//! p-value is `1/(m + 1)` with `m = f·n` calibration rows, so levels like
//! 0.001 need about a thousand held-out rows.
//!
//! **Caution.** The empirical p-values assume that the scored rows are
//! exchangeable with the held-out ones (same population, same process
//! state); the check says how the parametric law fares on *these* data,
//! not in general. Flags are evidence, not verdicts; local procedures and
//! qualified people decide.
//!
//! # Example
//! ```
//! use mvdist::calibration::EmpiricalPValue;
//! use mvdist::held_out::{fit_holding_out, CalibrationCheck, HoldOutOptions};
//! use mvdist::DistanceModel;
//! use ndarray::Array2;
//!
//! // Skewed invented data: squares of a fixed sequence.
//! let rows = Array2::from_shape_fn((400, 3), |(i, j)| {
//!     let u = ((i * 37 + j * 11) % 101) as f64 / 101.0;
//!     u * u * (1.0 + j as f64) + (i % 7) as f64 * 0.1
//! });
//! let options = HoldOutOptions::default().with_fraction(0.25).with_seed(7);
//! let model = fit_holding_out(rows.view(), &options, |fit| DistanceModel::fit(fit))?;
//! assert_eq!(model.calibration().map(|c| c.len()), Some(100));
//! let scores = model.score_held_out(rows.view(), EmpiricalPValue::Marginal)?;
//! assert_eq!(scores.p_values().len(), 400);
//! let check = CalibrationCheck::of_model(&model)?;
//! for level in check.levels() {
//!     println!("{}", level.reading);
//! }
//! # Ok::<(), mvdist::Error>(())
//! ```

mod check;
mod svg;

pub use check::{CalibrationCheck, CalibrationVerdict, LevelCheck, DEFAULT_LEVELS};

use crate::data::Rows;
use crate::error::{Error, Result};
use crate::model::DistanceModel;
use crate::robust::random::SplitMix64;
use ndarray::{Array2, ArrayView2, Axis};

/// Options of [`fit_holding_out`]. Setters cannot fail; the values are
/// checked once, by `fit_holding_out`.
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub struct HoldOutOptions {
    fraction: f64,
    seed: u64,
}

impl Default for HoldOutOptions {
    /// A quarter of the rows held out, seed 0.
    fn default() -> Self {
        HoldOutOptions {
            fraction: 0.25,
            seed: 0,
        }
    }
}

impl HoldOutOptions {
    /// The fraction of rows held out for calibration (default 0.25; must
    /// be in (0, 1), and leave at least one row on each side).
    pub fn with_fraction(mut self, fraction: f64) -> Self {
        self.fraction = fraction;
        self
    }

    /// The seed of the random split (default 0): the same seed and rows
    /// give the same split.
    pub fn with_seed(mut self, seed: u64) -> Self {
        self.seed = seed;
        self
    }

    /// The fraction held out.
    pub fn fraction(&self) -> f64 {
        self.fraction
    }

    /// The seed.
    pub fn seed(&self) -> u64 {
        self.seed
    }

    /// The number of rows held out of `n`, checked.
    fn held_out_count(&self, n: usize) -> Result<usize> {
        if !(self.fraction > 0.0 && self.fraction < 1.0) {
            return Err(Error::invalid(
                "held-out fraction",
                format!(
                    "{} is not in (0, 1); a fifth to a third of the rows is usual",
                    self.fraction
                ),
            ));
        }
        let m = (self.fraction * n as f64).round() as usize;
        if m == 0 || m >= n {
            return Err(Error::invalid(
                "held-out fraction",
                format!(
                    "holding out {} of {n} rows leaves {} to fit and {m} to calibrate; \
                     both need at least one row",
                    self.fraction,
                    n - m.min(n)
                ),
            ));
        }
        Ok(m)
    }
}

/// The row indices of a seeded random split: `(fit, held_out)`, each in
/// increasing order.
///
/// # Errors
/// As [`fit_holding_out`] for the options.
pub fn split_rows(n: usize, options: &HoldOutOptions) -> Result<(Vec<usize>, Vec<usize>)> {
    let m = options.held_out_count(n)?;
    let mut rng = SplitMix64::stream(options.seed, 0x686f_6c64, n as u64);
    let mut held = rng.distinct(m, n);
    held.sort_unstable();
    let mut is_held = vec![false; n];
    for &i in &held {
        is_held[i] = true;
    }
    let fit = (0..n).filter(|&i| !is_held[i]).collect();
    Ok((fit, held))
}

/// Fits a model with `fit` on a random part of `rows` and attaches the
/// squared distances of the other part as its calibration rows
/// ([`DistanceModel::with_calibration_rows`]). Any estimator works: pass
/// the fit as a closure (`|r| DistanceModel::fit_mcd(r, &options)`). The
/// model's sample size is the number of rows fitted, so its F reference
/// applies to the held-out rows as new rows.
///
/// # Errors
/// [`Error::Empty`]; [`Error::InvalidParameter`] for a fraction outside
/// (0, 1) or one that leaves no row on a side; the errors of `fit` on the
/// fitting part and of scoring the held-out part (non-finite values and
/// overflows name their row in `rows`).
pub fn fit_holding_out<'a>(
    rows: impl Into<Rows<'a>>,
    options: &HoldOutOptions,
    fit: impl FnOnce(ArrayView2<'_, f64>) -> Result<DistanceModel>,
) -> Result<DistanceModel> {
    rows.into().with_f64(|rows| {
        if rows.nrows() == 0 {
            return Err(Error::Empty { what: "rows" });
        }
        let (fit_rows, held) = split_rows(rows.nrows(), options)?;
        let fitting: Array2<f64> = rows.select(Axis(0), &fit_rows);
        let calibration: Array2<f64> = rows.select(Axis(0), &held);
        let model = fit(fitting.view()).map_err(|e| in_rows(e, &fit_rows))?;
        model
            .with_calibration_rows(calibration.view())
            .map_err(|e| in_rows(e, &held))
    })
}

/// An error that names a row of a part, renamed to the row of the whole.
fn in_rows(e: Error, part: &[usize]) -> Error {
    match e {
        Error::NonFinite { row, column, value } if row < part.len() => Error::NonFinite {
            row: part[row],
            column,
            value,
        },
        Error::Overflow { row } if row < part.len() => Error::Overflow { row: part[row] },
        Error::ExactFit { mut hyperplane } => {
            for r in hyperplane.rows.iter_mut() {
                if let Some(&whole) = part.get(*r) {
                    *r = whole;
                }
            }
            Error::ExactFit { hyperplane }
        }
        Error::TooFewRows {
            rows,
            needed,
            columns,
        } => Error::invalid(
            "held-out fraction",
            format!(
                "the {rows} rows left after holding some out are too few for {columns} \
                 columns (at least {needed} are needed); hold out a smaller fraction"
            ),
        ),
        other => other,
    }
}
