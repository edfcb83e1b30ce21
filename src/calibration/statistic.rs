//! [`TestStatistic`]: a computed statistic together with its null law.

use super::Reference;
use serde::{Deserialize, Serialize};

/// A test statistic and the [`Reference`] law it follows under the null
/// hypothesis; the p-value is the law's upper tail at the statistic.
///
/// # Example
/// ```
/// use mvdist::calibration::{Reference, TestStatistic};
/// let t = TestStatistic::new(5.991464547107979, Reference::chi_square_statistic(2.0)?);
/// assert!((t.p_value() - 0.05).abs() < 1e-15);
/// # Ok::<(), mvdist::Error>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct TestStatistic {
    value: f64,
    reference: Reference,
}

impl TestStatistic {
    /// The statistic `value` referred to `reference`.
    pub fn new(value: f64, reference: Reference) -> Self {
        TestStatistic { value, reference }
    }

    /// The statistic.
    pub fn value(&self) -> f64 {
        self.value
    }

    /// Its law under the null hypothesis.
    pub fn reference(&self) -> Reference {
        self.reference
    }

    /// `P(X > value)` under the null law.
    pub fn p_value(&self) -> f64 {
        self.reference.p_value(self.value)
    }
}
