//! Reference distributions for squared distances: p-values and cutoffs.
//!
//! A squared distance alone does not say how unusual a row is; its
//! distribution under the model does. If the rows are multivariate normal,
//! three exact results cover the cases that occur in practice
//! (`n` rows fitted, `p` variables, classical mean and covariance with the
//! `n − 1` divisor):
//!
//! | situation | statistic | distribution |
//! |---|---|---|
//! | location and scatter known | `d²` | χ²(p) |
//! | the row was one of the `n` fitting rows | `n·d² / (n−1)²` | Beta(p/2, (n−p−1)/2) |
//! | the row is new, independent of the fit | `n(n−p)·d² / (p(n+1)(n−1))` | F(p, n−p) |
//!
//! The Beta result is due to Gnanadesikan and Kettenring (1972); the F
//! result is the Phase II limit of the T² chart for individual observations
//! (Tracy, Young and Mason 1992; NIST/SEMATECH e-Handbook of Statistical
//! Methods, §6.5.4.3). The χ² result is the large-sample limit of both and is
//! too liberal for small `n`: using it for new rows with `n = 30, p = 6`
//! flags far more rows than the nominal rate.
//!
//! **Caution.** Every p-value and cutoff here assumes that the reference rows
//! are a sample from one multivariate normal population and that the scored
//! rows come from it too. A flag is evidence that a row is unusual, not a
//! verdict that it is defective; the decision to release or reject belongs
//! to your local quality procedure and to qualified people.
//!
//! Tail probabilities are computed from the upper tail directly, so p-values
//! down to about 1e-300 keep their relative precision.
//!
//! # Example
//!
//! ```
//! use mvdist::calibration::Reference;
//!
//! // A model fitted on 50 rows of 3 variables, scoring a new row.
//! let reference = Reference::new_row(50, 3)?;
//! let cutoff = reference.cutoff(0.01)?;
//! assert!((reference.p_value(cutoff) - 0.01).abs() < 1e-12);
//! // Rows beyond the cutoff have p-values below 0.01.
//! assert!(reference.p_value(cutoff * 1.5) < 0.01);
//! # Ok::<(), mvdist::Error>(())
//! ```

mod adjust;
mod empirical;
pub(crate) mod hardin_rocke;
mod reference;
mod statistic;

pub(crate) use crate::distributions::check_probability;
pub use adjust::{adjusted_p_values, Adjustment};
pub use empirical::{EmpiricalPValue, EmpiricalReference};
pub use reference::{Law, Reference, ReferenceKind};
pub use statistic::TestStatistic;

use serde::{Deserialize, Serialize};

/// Where a scored row (or a charted point) comes from, relative to the
/// sample its location and scatter were estimated from.
///
/// This choice selects the [`Reference`] law of its squared distance; see
/// the [module documentation](self). On a T² chart
/// ([`crate::control_chart`]) Phase I points are `InSample` and Phase II
/// points `New`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum RowOrigin {
    /// The row is new: it was not used in the estimate (F reference;
    /// Phase II on a chart).
    #[serde(alias = "new")]
    New,
    /// The row was one of the rows of the estimate (Beta reference;
    /// Phase I on a chart).
    #[serde(alias = "in_sample", alias = "in_estimate")]
    InSample,
    /// Treat the estimated location and scatter as the true parameters
    /// (χ² reference); appropriate only when the estimating sample is very
    /// large.
    #[serde(alias = "known_parameters")]
    KnownParameters,
}

/// Where the p-values of a batch of scores come from.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
#[non_exhaustive]
pub enum PValueBasis {
    /// A reference law (which assumes multivariate normal rows).
    Law(Reference),
    /// The model's held-out calibration rows ([`EmpiricalReference`]):
    /// distribution-free.
    HeldOut {
        /// The number of calibration rows `m`.
        rows: usize,
        /// Which empirical p-value.
        kind: EmpiricalPValue,
    },
}

impl PValueBasis {
    /// The reference law, for p-values from a law.
    pub fn reference(&self) -> Option<Reference> {
        match self {
            PValueBasis::Law(r) => Some(*r),
            PValueBasis::HeldOut { .. } => None,
        }
    }
}
