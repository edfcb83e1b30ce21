//! The crate's single error type.
//!
//! Every fallible function in mvdist returns [`Result<T>`](Result), whose
//! error is [`Error`]. Each variant carries the position (row and column,
//! both 0-based) and the reason, so that a caller can report the problem in
//! its own terms, for example with the column's name. [`Error::kind`] gives
//! a fieldless [`ErrorKind`] that wrappers for other languages can map to
//! their own error types and that stays stable across releases.
//!
//! Errors name a variable by its column: the 0-based position of the
//! variable in the data the caller passed.

use std::fmt;

mod exact_fit;
pub use exact_fit::Hyperplane;

/// A specialized `Result` for mvdist.
pub type Result<T> = std::result::Result<T, Error>;

/// Everything that can go wrong in mvdist.
///
/// Rows and columns are 0-based indices into the data the caller passed.
/// Columns are the variables; rows are observations. Messages say what
/// is wrong and what to do next; [`kind`](Self::kind) is the stable part
/// to branch on.
///
/// # Example
///
/// ```
/// use mvdist::{DistanceModel, Error};
/// use ndarray::array;
///
/// // The second column is constant: its variance is zero.
/// let rows = array![[1.0, 5.0], [2.0, 5.0], [4.0, 5.0], [3.0, 5.0]];
/// let outcome = DistanceModel::fit(rows.view());
/// assert!(matches!(outcome, Err(Error::ZeroVariance { column: 1 })), "{outcome:?}");
/// ```
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum Error {
    /// The input has no rows or no columns.
    Empty {
        /// What was empty, in words (for example "rows" or "columns").
        what: &'static str,
    },
    /// A value is NaN or infinite.
    NonFinite {
        /// Row of the offending value.
        row: usize,
        /// Column of the offending value.
        column: usize,
        /// The value itself.
        value: f64,
    },
    /// A dimension does not match what the operation needs.
    ShapeMismatch {
        /// Which dimension, in words.
        what: &'static str,
        /// The size the operation needs.
        expected: usize,
        /// The size that was passed.
        found: usize,
    },
    /// Too few rows for the number of columns.
    TooFewRows {
        /// Rows available.
        rows: usize,
        /// Rows needed at least.
        needed: usize,
        /// Number of columns.
        columns: usize,
    },
    /// A column has zero (or non-positive) variance.
    ZeroVariance {
        /// The constant column.
        column: usize,
    },
    /// A column's robust scale is zero: at least about half of its values
    /// are tied, so a robust fit that standardizes each variable by a
    /// high-breakdown scale (the Qn of
    /// [`crate::robust::minimum_regularized_covariance_determinant`]) cannot
    /// use it.
    ZeroRobustScale {
        /// The column.
        column: usize,
    },
    /// A column is (numerically) a linear combination of earlier ones: its
    /// variance left after regressing it on the earlier columns is a
    /// negligible fraction of its own variance.
    Collinear {
        /// The dependent column.
        column: usize,
        /// Fraction of the column's variance not explained by the earlier
        /// columns (0 for an exact linear combination).
        residual_fraction: f64,
    },
    /// A scatter matrix is not positive definite and the failure is not a
    /// near-exact linear dependence (for example a negative variance, or an
    /// indefinite matrix supplied by the caller).
    NotPositiveDefinite {
        /// The column at which the Cholesky factorization failed.
        column: usize,
    },
    /// A matrix that must be symmetric is not.
    NotSymmetric {
        /// Row of the largest asymmetry.
        row: usize,
        /// Column of the largest asymmetry.
        column: usize,
        /// Absolute difference between the two mirrored entries.
        difference: f64,
    },
    /// A computation overflowed: the row's values are finite but so large
    /// that its distance is not representable.
    Overflow {
        /// The row whose result overflowed.
        row: usize,
    },
    /// A parameter is out of its allowed range.
    InvalidParameter {
        /// The parameter's name.
        name: &'static str,
        /// What is wrong and what is allowed.
        reason: String,
    },
    /// A file could not be read or written.
    Io {
        /// The file.
        path: String,
        /// The operating system's kind of failure (not found, permission
        /// denied, …), kept for callers that branch on it.
        kind: std::io::ErrorKind,
        /// The operating system's message.
        reason: String,
    },
    /// An exact fit: at least `h` rows (the minimum covariance determinant
    /// subset size) lie on one hyperplane, so the robust scatter is
    /// singular. The hyperplane and the rows on it are reported; the usual
    /// remedy is to drop one of the columns involved (the largest
    /// coefficients) or to check why the rows are tied.
    ExactFit {
        /// The hyperplane `aᵀx = b` and the rows on it.
        hyperplane: Hyperplane,
    },
    /// A quantile or cutoff exists but is not representable as an `f64`
    /// (beyond the largest finite number, or closer to the edge of the
    /// support than the smallest normal number).
    NotRepresentable {
        /// What could not be represented, with the parameters.
        reason: String,
    },
    /// A saved model or accumulator is malformed.
    Format {
        /// What is wrong with it.
        reason: String,
    },
    /// Labelled rows fall into fewer than two groups: there is nothing to
    /// classify between.
    TooFewGroups {
        /// Number of distinct labels found.
        found: usize,
    },
    /// A group has too few rows for what the method estimates from it.
    SmallGroup {
        /// The group (0-based, in order of first appearance of its label).
        group: usize,
        /// Rows in the group.
        rows: usize,
        /// Rows needed at least.
        needed: usize,
    },
    /// A row's label is not one of the groups the classifier was fitted on.
    UnknownGroup {
        /// The row with the unknown label.
        row: usize,
    },
    /// A problem with one group's rows (for example, a column constant
    /// within the group makes its own scatter singular).
    InGroup {
        /// The group (0-based, in order of first appearance of its label).
        group: usize,
        /// What went wrong within the group.
        cause: Box<Error>,
    },
}

/// The kind of an [`Error`], without its details: one variant per variant
/// of `Error`, for code (and bindings) that branch on the kind of failure.
/// New kinds may be added; existing ones keep their names.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[non_exhaustive]
pub enum ErrorKind {
    /// [`Error::Empty`].
    Empty,
    /// [`Error::NonFinite`].
    NonFinite,
    /// [`Error::ShapeMismatch`].
    ShapeMismatch,
    /// [`Error::TooFewRows`].
    TooFewRows,
    /// [`Error::ZeroVariance`].
    ZeroVariance,
    /// [`Error::ZeroRobustScale`].
    ZeroRobustScale,
    /// [`Error::Collinear`].
    Collinear,
    /// [`Error::NotPositiveDefinite`].
    NotPositiveDefinite,
    /// [`Error::NotSymmetric`].
    NotSymmetric,
    /// [`Error::Overflow`].
    Overflow,
    /// [`Error::InvalidParameter`].
    InvalidParameter,
    /// [`Error::Io`].
    Io,
    /// [`Error::ExactFit`].
    ExactFit,
    /// [`Error::NotRepresentable`].
    NotRepresentable,
    /// [`Error::Format`].
    Format,
    /// [`Error::TooFewGroups`].
    TooFewGroups,
    /// [`Error::SmallGroup`].
    SmallGroup,
    /// [`Error::UnknownGroup`].
    UnknownGroup,
    /// [`Error::InGroup`].
    InGroup,
}

impl ErrorKind {
    /// A stable snake_case name (`"non_finite"`, `"too_few_rows"`, …) for
    /// logs and for error codes in other languages.
    pub fn name(self) -> &'static str {
        match self {
            ErrorKind::Empty => "empty",
            ErrorKind::NonFinite => "non_finite",
            ErrorKind::ShapeMismatch => "shape_mismatch",
            ErrorKind::TooFewRows => "too_few_rows",
            ErrorKind::ZeroVariance => "zero_variance",
            ErrorKind::ZeroRobustScale => "zero_robust_scale",
            ErrorKind::Collinear => "collinear",
            ErrorKind::NotPositiveDefinite => "not_positive_definite",
            ErrorKind::NotSymmetric => "not_symmetric",
            ErrorKind::Overflow => "overflow",
            ErrorKind::InvalidParameter => "invalid_parameter",
            ErrorKind::Io => "io",
            ErrorKind::ExactFit => "exact_fit",
            ErrorKind::NotRepresentable => "not_representable",
            ErrorKind::Format => "format",
            ErrorKind::TooFewGroups => "too_few_groups",
            ErrorKind::SmallGroup => "small_group",
            ErrorKind::UnknownGroup => "unknown_group",
            ErrorKind::InGroup => "in_group",
        }
    }
}

impl Error {
    /// The kind of this error, without its details.
    ///
    /// # Example
    /// ```
    /// use mvdist::{DistanceModel, ErrorKind};
    /// use ndarray::array;
    ///
    /// let rows = array![[1.0, f64::NAN], [2.0, 3.0], [4.0, 1.0]];
    /// let error = DistanceModel::fit(rows.view()).unwrap_err();
    /// assert_eq!(error.kind(), ErrorKind::NonFinite);
    /// assert_eq!(error.kind().name(), "non_finite");
    /// ```
    pub fn kind(&self) -> ErrorKind {
        match self {
            Error::Empty { .. } => ErrorKind::Empty,
            Error::NonFinite { .. } => ErrorKind::NonFinite,
            Error::ShapeMismatch { .. } => ErrorKind::ShapeMismatch,
            Error::TooFewRows { .. } => ErrorKind::TooFewRows,
            Error::ZeroVariance { .. } => ErrorKind::ZeroVariance,
            Error::ZeroRobustScale { .. } => ErrorKind::ZeroRobustScale,
            Error::Collinear { .. } => ErrorKind::Collinear,
            Error::NotPositiveDefinite { .. } => ErrorKind::NotPositiveDefinite,
            Error::NotSymmetric { .. } => ErrorKind::NotSymmetric,
            Error::Overflow { .. } => ErrorKind::Overflow,
            Error::InvalidParameter { .. } => ErrorKind::InvalidParameter,
            Error::Io { .. } => ErrorKind::Io,
            Error::ExactFit { .. } => ErrorKind::ExactFit,
            Error::NotRepresentable { .. } => ErrorKind::NotRepresentable,
            Error::Format { .. } => ErrorKind::Format,
            Error::TooFewGroups { .. } => ErrorKind::TooFewGroups,
            Error::SmallGroup { .. } => ErrorKind::SmallGroup,
            Error::UnknownGroup { .. } => ErrorKind::UnknownGroup,
            Error::InGroup { .. } => ErrorKind::InGroup,
        }
    }

    /// The error of a file operation on `path`.
    pub(crate) fn io(path: &std::path::Path, error: &std::io::Error) -> Self {
        Error::Io {
            path: path.display().to_string(),
            kind: error.kind(),
            reason: error.to_string(),
        }
    }

    pub(crate) fn in_group(group: usize) -> impl Fn(Error) -> Error {
        move |error| Error::InGroup {
            group,
            cause: Box::new(error),
        }
    }

    pub(crate) fn invalid(name: &'static str, reason: impl Into<String>) -> Self {
        Error::InvalidParameter {
            name,
            reason: reason.into(),
        }
    }
}

impl fmt::Display for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Error::Empty { what } => write!(f, "the input has no {what}; pass at least one"),
            Error::NonFinite { row, column, value } => write!(
                f,
                "non-finite value {value} at row {row}, column {column}; remove or impute it before fitting or scoring"
            ),
            Error::ShapeMismatch {
                what,
                expected,
                found,
            } => write!(f, "{what}: expected {expected}, found {found}"),
            Error::TooFewRows {
                rows,
                needed,
                columns,
            } => write!(
                f,
                "{rows} rows are too few for {columns} columns: at least {needed} are needed; add rows, drop columns or use a shrinkage estimator"
            ),
            Error::ZeroVariance { column } => write!(
                f,
                "column {column} has zero variance (it is constant); drop the column"
            ),
            Error::ZeroRobustScale { column } => write!(
                f,
                "column {column} has a robust scale (Qn) of zero: at least about half of its values are tied; drop the column or record it with more resolution"
            ),
            Error::Collinear {
                column,
                residual_fraction,
            } => write!(
                f,
                "column {column} is a linear combination of the columns before it (unexplained variance fraction {residual_fraction:.3e}); drop it or use a shrinkage estimator"
            ),
            Error::NotPositiveDefinite { column } => write!(
                f,
                "the scatter matrix is not positive definite (the factorization fails at column {column}); check that it is a covariance matrix"
            ),
            Error::NotSymmetric {
                row,
                column,
                difference,
            } => write!(
                f,
                "the matrix is not symmetric: entries ({row}, {column}) and ({column}, {row}) differ by {difference:.3e}"
            ),
            Error::Overflow { row } => write!(
                f,
                "row {row} is so far from the centre that its squared distance overflows; check its units"
            ),
            Error::InvalidParameter { name, reason } => write!(f, "invalid {name}: {reason}"),
            Error::ExactFit { hyperplane } => write!(
                f,
                "exact fit: {} rows lie on the hyperplane {} (at least {} are needed for a robust fit); the robust scatter is singular — drop a column involved or check the tied rows",
                hyperplane.rows().len(),
                hyperplane,
                hyperplane.subset_size()
            ),
            Error::Format { reason } => write!(f, "malformed model data: {reason}"),
            Error::NotRepresentable { reason } => write!(
                f,
                "{reason} is not representable as a 64-bit float; choose an alpha less close to 0 or 1, or compare p-values instead of cutoffs"
            ),
            Error::Io { path, reason, .. } => write!(
                f,
                "{path}: {reason}; check that the path exists and is readable (or writable)"
            ),
            Error::TooFewGroups { found } => write!(
                f,
                "the labels name {found} group(s); classification needs at least two"
            ),
            Error::SmallGroup { group, rows, needed } => write!(
                f,
                "group {group} has {rows} row(s), at least {needed} are needed; add rows to it, merge it with another group, or use the linear rule (one pooled scatter)"
            ),
            Error::UnknownGroup { row } => write!(
                f,
                "row {row} has a label that is not one of the fitted groups"
            ),
            Error::InGroup { group, cause } => write!(f, "in group {group}: {cause}"),
        }
    }
}

impl std::error::Error for Error {
    /// The error within the group for [`Error::InGroup`]; `None` otherwise.
    fn source(&self) -> Option<&(dyn std::error::Error + 'static)> {
        match self {
            Error::InGroup { cause, .. } => Some(cause.as_ref()),
            _ => None,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::error::Error as _;

    #[test]
    fn nested_causes_are_sources_and_kinds_are_stable() {
        let inner = Error::ZeroVariance { column: 2 };
        let outer = Error::in_group(1)(inner.clone());
        assert_eq!(outer.kind(), ErrorKind::InGroup);
        assert_eq!(outer.kind().name(), "in_group");
        let source = outer.source().and_then(|s| s.downcast_ref::<Error>());
        assert_eq!(source, Some(&inner));
        assert!(inner.source().is_none());
        assert_eq!(inner.kind().name(), "zero_variance");
        assert!(outer.to_string().contains("in group 1: column 2"));
    }
}
