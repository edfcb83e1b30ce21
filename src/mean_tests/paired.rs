//! Hotelling's paired-sample T² test.

use super::comparison::{MeanComparison, MeanTestKind};
use super::one_sample::one_sample_of_kind;
use super::same_columns;
use crate::error::{Error, Result};
use ndarray::ArrayView2;

/// Tests whether paired measurements have equal means: row `i` of `first`
/// and row `i` of `second` are two measurements of the same unit (before
/// and after, two instruments, two labs).
///
/// This is the one-sample T² test ([`one_sample`](super::one_sample)) of
/// the differences `first − second` against zero: with `n` pairs,
/// `(n−p)/(p(n−1)) · T² ~ F(p, n−p)`. The estimate is the mean difference.
///
/// # Errors
/// [`Error::ShapeMismatch`] unless both have the same rows and columns;
/// otherwise those of [`one_sample`](super::one_sample) on the differences
/// (a constant difference is [`Error::ZeroVariance`]). A non-finite value is
/// reported in its own sample as [`Error::InGroup`].
///
/// # Example
/// ```
/// use mvdist::mean_tests::paired;
/// use ndarray::array;
///
/// let before = array![[10.0, 5.0], [11.0, 6.0], [9.5, 5.5], [10.5, 4.5], [10.2, 5.2]];
/// let after = array![[10.9, 5.1], [11.8, 6.4], [10.1, 5.4], [11.6, 4.9], [11.0, 5.0]];
/// let test = paired(before.view(), after.view())?;
/// assert!(test.estimate()[0] < 0.0);
/// assert!(test.p_value() < 0.05);
/// # Ok::<(), mvdist::Error>(())
/// ```
pub fn paired(first: ArrayView2<'_, f64>, second: ArrayView2<'_, f64>) -> Result<MeanComparison> {
    same_columns(first, second)?;
    if first.nrows() != second.nrows() {
        return Err(Error::ShapeMismatch {
            what: "number of rows of the second sample (one per pair)",
            expected: first.nrows(),
            found: second.nrows(),
        });
    }
    for (g, x) in [first, second].into_iter().enumerate() {
        crate::data::check_finite(x).map_err(Error::in_group(g))?;
    }
    let differences = &first - &second;
    let p = first.ncols();
    one_sample_of_kind(differences.view(), &vec![0.0; p], MeanTestKind::Paired)
}
