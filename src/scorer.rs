//! [`Scorer`]: a model prepared for one row origin and one level, for
//! services that flag rows one by one or in batches.

use crate::calibration::{check_probability, Reference, RowOrigin};
use crate::data::Rows;
use crate::error::Result;
use crate::model::{check_output, p_values_into, DistanceModel, RowScore};

/// A [`DistanceModel`] prepared for scoring: the row origin and the level
/// `alpha` are fixed once, and the cutoff `c` with `P(D² > c) = alpha`
/// is computed once, so a flag is the comparison `d² > c` with no
/// p-value evaluated. P-values are computed only where asked for.
///
/// The scorer owns its model (a clone is a few vectors), so it is `Send +
/// Sync`, cheap to share behind an `Arc`, and lives as long as the service
/// needs it.
///
/// **Caution.** The cutoff assumes that the reference law fits the data
/// (for the classical references: multivariate normal rows); a flag is
/// evidence that a row is unusual under the model, not a verdict, and what
/// follows from it is for local procedures and qualified people to decide.
/// `alpha` is a per-row rate: among many clean rows about `alpha` of them
/// are flagged; use [`crate::Scores::flags`] with an adjustment when a
/// batch is judged as a whole.
///
/// # Example
/// ```
/// use mvdist::{DistanceModel, RowOrigin, Scorer};
/// use ndarray::array;
///
/// let reference = array![
///     [10.1, 4.9], [9.8, 5.2], [10.3, 5.1], [9.9, 4.8], [10.0, 5.0],
///     [10.2, 5.3], [9.7, 4.9], [10.1, 5.0], [9.9, 5.1], [10.0, 4.7],
/// ];
/// let model = DistanceModel::fit(reference.view())?;
/// let scorer = Scorer::new(model, RowOrigin::New, 0.01)?;
/// assert!(!scorer.flag_row(&[10.0, 5.0])?);
/// assert!(scorer.flag_row(&[11.5, 3.9])?);
///
/// // A batch into caller-owned buffers; p-values only if a buffer is given.
/// let batch = array![[10.0, 5.0], [11.5, 3.9]];
/// let (mut d2, mut flags) = ([0.0; 2], [false; 2]);
/// let flagged = scorer.score_into(batch.view(), &mut d2, None, &mut flags)?;
/// assert_eq!((flagged, flags), (1, [false, true]));
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct Scorer {
    model: DistanceModel,
    origin: RowOrigin,
    alpha: f64,
    reference: Reference,
    cutoff: f64,
}

impl Scorer {
    /// Prepares `model` for rows of `origin` flagged at level `alpha`.
    ///
    /// # Errors
    /// [`Error::InvalidParameter`](crate::Error::InvalidParameter) unless `0 < alpha < 1`; those of
    /// [`DistanceModel::reference`] and [`Reference::cutoff`].
    pub fn new(model: DistanceModel, origin: RowOrigin, alpha: f64) -> Result<Self> {
        check_probability(alpha)?;
        let reference = model.reference(origin)?;
        let cutoff = reference.cutoff(alpha)?;
        Ok(Scorer {
            model,
            origin,
            alpha,
            reference,
            cutoff,
        })
    }

    /// The model.
    pub fn model(&self) -> &DistanceModel {
        &self.model
    }

    /// The row origin the reference was chosen for.
    pub fn origin(&self) -> RowOrigin {
        self.origin
    }

    /// The level.
    pub fn alpha(&self) -> f64 {
        self.alpha
    }

    /// The reference law of the squared distances.
    pub fn reference(&self) -> Reference {
        self.reference
    }

    /// The squared distance above which rows are flagged.
    pub fn cutoff(&self) -> f64 {
        self.cutoff
    }

    /// Whether one row is flagged (`d² > cutoff`). Allocates nothing for
    /// `p ≤ 64`.
    ///
    /// # Errors
    /// As [`DistanceModel::squared_distance`].
    pub fn flag_row(&self, x: &[f64]) -> Result<bool> {
        Ok(self.model.squared_distance(x)? > self.cutoff)
    }

    /// As [`flag_row`](Self::flag_row) for single-precision input.
    ///
    /// # Errors
    /// As [`DistanceModel::squared_distance_f32`].
    pub fn flag_row_f32(&self, x: &[f32]) -> Result<bool> {
        Ok(self.model.squared_distance_f32(x)? > self.cutoff)
    }

    /// Squared distance, p-value and flag of one row. Allocates nothing for
    /// `p ≤ 64`.
    ///
    /// # Errors
    /// As [`DistanceModel::squared_distance`].
    pub fn score_row(&self, x: &[f64]) -> Result<RowScore> {
        let d2 = self.model.squared_distance(x)?;
        Ok(self.row_score(d2))
    }

    /// As [`score_row`](Self::score_row) for single-precision input.
    ///
    /// # Errors
    /// As [`DistanceModel::squared_distance_f32`].
    pub fn score_row_f32(&self, x: &[f32]) -> Result<RowScore> {
        let d2 = self.model.squared_distance_f32(x)?;
        Ok(self.row_score(d2))
    }

    fn row_score(&self, d2: f64) -> RowScore {
        RowScore {
            squared_distance: d2,
            p_value: self.reference.p_value(d2),
            flagged: d2 > self.cutoff,
        }
    }

    /// Scores a batch into caller-owned buffers (one value per row each):
    /// squared distances, p-values when `p_values` is given (otherwise none
    /// are computed), and flags. Returns the number of flagged rows.
    ///
    /// # Errors
    /// As [`DistanceModel::squared_distances_into`];
    /// [`Error::ShapeMismatch`](crate::Error::ShapeMismatch) if a buffer has the wrong length.
    pub fn score_into<'a>(
        &self,
        rows: impl Into<Rows<'a>>,
        squared_distances: &mut [f64],
        p_values: Option<&mut [f64]>,
        flags: &mut [bool],
    ) -> Result<usize> {
        let rows = rows.into();
        check_output(flags.len(), rows.nrows())?;
        if let Some(p) = &p_values {
            check_output(p.len(), rows.nrows())?;
        }
        self.model.squared_distances_into(rows, squared_distances)?;
        let mut flagged = 0;
        for (f, &d) in flags.iter_mut().zip(squared_distances.iter()) {
            *f = d > self.cutoff;
            flagged += usize::from(*f);
        }
        if let Some(p) = p_values {
            p_values_into(&self.reference, squared_distances, p);
        }
        Ok(flagged)
    }
}
