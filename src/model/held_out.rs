//! A model's held-out calibration rows: distribution-free p-values.

use super::{check_output, DistanceModel, Scores};
use crate::calibration::{EmpiricalPValue, EmpiricalReference, PValueBasis};
use crate::data::Rows;
use crate::error::{Error, Result};
use rayon::prelude::*;

impl DistanceModel {
    /// The model with the given calibration rows' squared distances
    /// attached (replacing any it had). The values must be squared
    /// distances under *this* model of rows not used to fit it; prefer
    /// [`with_calibration_rows`](Self::with_calibration_rows), which
    /// computes them.
    pub fn with_calibration(mut self, calibration: EmpiricalReference) -> Self {
        self.calibration = Some(calibration);
        self
    }

    /// The model with calibration rows attached: `rows` are reference rows
    /// from the same population that were **not** used in the fit (see
    /// [`crate::calibration::EmpiricalReference`] and [`crate::held_out`]
    /// for a fit that splits the rows itself).
    ///
    /// # Errors
    /// As [`squared_distances`](Self::squared_distances); [`Error::Empty`]
    /// for no rows.
    ///
    /// # Example
    /// ```
    /// use mvdist::{calibration::EmpiricalPValue, DistanceModel};
    /// use ndarray::Array2;
    /// let rows = Array2::from_shape_fn((60, 2), |(i, j)| ((i * 7 + j * 3) % 11) as f64 + (i % 5) as f64 * j as f64);
    /// let (fit, held) = rows.view().split_at(ndarray::Axis(0), 40);
    /// let model = DistanceModel::fit(fit)?.with_calibration_rows(held)?;
    /// assert_eq!(model.calibration().map(|c| c.len()), Some(20));
    /// let scores = model.score_held_out(rows.view(), EmpiricalPValue::Marginal)?;
    /// assert!(scores.p_values().iter().all(|&p| p >= 1.0 / 21.0));
    /// # Ok::<(), mvdist::Error>(())
    /// ```
    pub fn with_calibration_rows<'a>(self, rows: impl Into<Rows<'a>>) -> Result<Self> {
        let d2 = self.squared_distances(rows)?;
        let calibration = EmpiricalReference::from_squared_distances(d2)?;
        Ok(self.with_calibration(calibration))
    }

    /// The model without its calibration rows.
    pub fn without_calibration(mut self) -> Self {
        self.calibration = None;
        self
    }

    /// The calibration rows' squared distances, if the model carries them.
    pub fn calibration(&self) -> Option<&EmpiricalReference> {
        self.calibration.as_ref()
    }

    fn calibration_or_error(&self) -> Result<&EmpiricalReference> {
        self.calibration.as_ref().ok_or_else(|| {
            Error::invalid(
                "p-value basis",
                "the model carries no held-out calibration rows; fit it with \
                 mvdist::held_out::fit_holding_out or attach rows with \
                 DistanceModel::with_calibration_rows",
            )
        })
    }

    /// Squared distances and distribution-free p-values from the model's
    /// calibration rows (see [`crate::calibration::EmpiricalReference`]):
    /// valid for new rows exchangeable with the calibration rows, whatever
    /// their distribution. Costs one lookup per row in an exact bucket index
    /// over the sorted calibration values, in the same task as the
    /// distances.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] if the model has no calibration rows or
    /// for an invalid `kind`; as [`squared_distances`](Self::squared_distances).
    pub fn score_held_out<'a>(
        &self,
        rows: impl Into<Rows<'a>>,
        kind: EmpiricalPValue,
    ) -> Result<Scores> {
        let rows = rows.into();
        let mut squared_distances = vec![0.0; rows.nrows()];
        let mut p_values = vec![0.0; rows.nrows()];
        let basis = self.score_held_out_into(rows, kind, &mut squared_distances, &mut p_values)?;
        Ok(Scores {
            squared_distances,
            p_values,
            basis,
        })
    }

    /// As [`score_held_out`](Self::score_held_out), into caller-owned
    /// buffers (one value per row each); returns the basis used.
    ///
    /// # Errors
    /// As [`score_held_out`](Self::score_held_out); [`Error::ShapeMismatch`]
    /// if a buffer has the wrong length.
    pub fn score_held_out_into<'a>(
        &self,
        rows: impl Into<Rows<'a>>,
        kind: EmpiricalPValue,
        squared_distances: &mut [f64],
        p_values: &mut [f64],
    ) -> Result<PValueBasis> {
        let calibration = self.calibration_or_error()?;
        kind.check()?;
        let rows = rows.into();
        check_output(p_values.len(), rows.nrows())?;
        let each = |d: &[f64], p: &mut [f64]| {
            for (pv, &dv) in p.iter_mut().zip(d) {
                *pv = calibration.p_value_of(dv, kind);
            }
        };
        match rows {
            // One pass: each task looks up its block's p-values while the
            // distances are in cache.
            Rows::F64(x) if x.ncols() == self.dim() => {
                check_output(squared_distances.len(), x.nrows())?;
                crate::kernels::distance::batch_squared_distances_then(
                    self.scatter.whitening_factor(),
                    &self.location,
                    x,
                    squared_distances,
                    p_values,
                    each,
                )?;
            }
            rows => {
                self.squared_distances_into(rows, squared_distances)?;
                p_values
                    .par_chunks_mut(4096)
                    .zip(squared_distances.par_chunks(4096))
                    .for_each(|(p, d)| each(d, p));
            }
        }
        Ok(PValueBasis::HeldOut {
            rows: calibration.len(),
            kind,
        })
    }

    /// The squared distance beyond which held-out p-values are at most
    /// `alpha` (flags are `d² > cutoff`).
    ///
    /// # Errors
    /// [`Error::InvalidParameter`] if the model has no calibration rows, or
    /// as [`EmpiricalReference::cutoff`] (including a level below the
    /// smallest attainable p-value `1/(m + 1)`).
    pub fn held_out_cutoff(&self, alpha: f64, kind: EmpiricalPValue) -> Result<f64> {
        self.calibration_or_error()?.cutoff(alpha, kind)
    }
}
